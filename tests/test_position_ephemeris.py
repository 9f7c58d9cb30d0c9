"""The Sun's position in a model calendar (bcgen.solar_calendar.position).

Analytic checks first, then the present-day seasons against the JPL DE421 ephemeris (through
skyfield, with DE421 read from the ``de421`` package: no download) and against the dates the
US Naval Observatory publishes for 2023.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from published_tables import TROPICAL_YEAR_DAYS, USNO_2023_UT  # Astronomical Almanac; USNO

from bcgen.errors import CalendarError, OrbitError
from bcgen.orbit import OrbitalElements, solve
from bcgen.solar_calendar import Anchor, ModelCalendar, SolarYear

TWO_PI = 2 * np.pi
deg = np.deg2rad


def wrap(x):
    """Angle difference reduced to (-π, π]."""
    return np.angle(np.exp(1j * np.asarray(x)))


def orbit(e, eps_deg, varpi_deg):
    return OrbitalElements(e, eps_deg, varpi_deg)


# --- analytic checks ------------------------------------------------------------------------
def test_equinox_anchor_puts_true_longitude_zero_at_anchor():
    # Definition of the March-equinox anchor (PMIP: λ = 0 on 21 March 12:00 = day 79.5).
    sy = SolarYear(solve(-6000.0), "noleap")
    assert sy.anchor_day == 79.5
    assert abs(wrap(sy.true_longitude_rad(79.5))) < 1e-13
    assert abs(wrap(sy.true_longitude_rad(79.5 + 365.0))) < 1e-12  # and in the next year


def test_perihelion_anchor_puts_true_anomaly_zero_at_anchor():
    # Definition of a perihelion anchor: v = 0, so λ = ϖ + 180° (Berger 1978).
    orb = orbit(0.0167, 23.44, 102.04)
    cal = ModelCalendar("noleap", Anchor("perihelion", 1, 3, 0, 0))
    sy = SolarYear(orb, cal)
    assert sy.true_anomaly_rad(2.0) == pytest.approx(0.0, abs=1e-13)
    assert abs(wrap(sy.true_longitude_rad(2.0) - deg(282.04))) < 1e-12
    assert sy.mean_anomaly_rad(2.0 + 365 / 4) == pytest.approx(np.pi / 2, abs=1e-12)


def test_circular_orbit_moves_uniformly():
    # Analytic: for e = 0 the true longitude advances by 2π/L per day from the anchor.
    sy = SolarYear(orbit(0.0, 23.44, 102.04), "360_day")
    t = np.linspace(-400, 800, 97)
    np.testing.assert_allclose(
        wrap(sy.true_longitude_rad(t) - TWO_PI * (t - 80.5) / 360), 0, atol=1e-12
    )


@pytest.mark.parametrize("epoch", [0.0, -6000.0, -115000.0, -127000.0])
def test_summer_half_year_is_longer_by_4e_sin_varpi_over_pi(epoch):
    # Kepler's second law expanded in e (M = v - 2e sin v + (3/4)e² sin 2v + O(e³), the
    # equation of the centre, e.g. Meeus ch. 30): the time from λ = 0 to λ = 180° exceeds
    # the other half year by (4 e L / π) sin ϖ, about 7.6 days today. The e² term cancels
    # between the halves (sin 2v has period π), so the remainder is O(e³ L): below e³ L.
    orb = solve(epoch)
    sy = SolarYear(orb, "noleap")
    t_autumn = sy.time_of_true_longitude_days(np.pi)
    summer = t_autumn - sy.anchor_day
    winter = 365 - summer
    e, varpi = float(orb.eccentricity), float(orb.perihelion_longitude_rad)
    first_order = 4 * e * 365 / np.pi * np.sin(varpi)
    assert abs((summer - winter) - first_order) < e**3 * 365


def test_declination_and_distance_extremes():
    # Analytic: sin δ = sin ε sin λ gives δ = ε at λ = 90°; (a/r)² = (1 ± e)^-2 at perihelion
    # and aphelion (conic equation r = a(1 - e²)/(1 + e cos v)).
    orb = orbit(0.05, 24.0, 10.0)
    sy = SolarYear(orb, "noleap")
    t_solstice = sy.time_of_true_longitude_days(np.pi / 2)
    assert sy.declination_rad(t_solstice) == pytest.approx(deg(24.0), abs=1e-12)
    t_peri = sy.time_of_true_longitude_days(deg(190.0))
    t_aph = sy.time_of_true_longitude_days(deg(10.0))
    assert sy.distance_factor(t_peri) == pytest.approx(1 / 0.95**2, rel=1e-12)
    assert sy.distance_factor(t_aph) == pytest.approx(1 / 1.05**2, rel=1e-12)


@pytest.mark.parametrize("e", [0.0, 0.0167, 0.0394, 0.07])
def test_time_mean_of_distance_factor(e):
    # Analytic (Berger 1978): the time average of (a/r)² over an orbit is
    # (1 - e²)^(-1/2). Uniform sampling of a periodic smooth function converges fast.
    sy = SolarYear(orbit(e, 23.44, 250.0), "noleap")
    t = np.arange(2000) * 365 / 2000
    assert sy.distance_factor(t).mean() == pytest.approx((1 - e * e) ** -0.5, rel=1e-12)


def test_broadcasting_epochs_by_days():
    orbits = solve(np.array([0.0, -6000.0, -21000.0, -127000.0]))
    days = np.arange(365) + 0.5
    sy = SolarYear(orbits[:, np.newaxis], "noleap")
    lam, dec, fac = sy.solar_geometry(days)
    assert lam.shape == dec.shape == fac.shape == (4, 365)
    for k in range(4):  # each row equals the scalar computation
        np.testing.assert_allclose(
            dec[k], SolarYear(orbits[k], "noleap").declination_rad(days), atol=1e-15
        )


def test_leap_calendar_stretches_the_orbital_year_with_29_february():
    # The leap-year rule: 2023-03-21 12:00 → 2024-03-21 12:00 is one orbit of 366 days with
    # mean motion 2π/366; the next anchor again has λ = 0.
    sy = SolarYear(solve(0.0), "proleptic_gregorian", year=2023)
    assert sy.anchor_day == 79.5 and sy.orbital_year_length_days == 366.0
    assert sy.year_length_days == 365.0
    m0 = sy.mean_anomaly_rad(79.5)
    assert abs(wrap(sy.mean_anomaly_rad(79.5 + 183.0) - m0 - np.pi)) < 1e-12
    assert abs(wrap(sy.true_longitude_rad(79.5 + 366.0))) < 1e-12
    # Before the anchor the previous orbital year (2022-03-21 → 2023-03-21) has 365 days.
    assert abs(wrap(sy.mean_anomaly_rad(79.5 - 365.0 / 2) - m0 + np.pi)) < 1e-12


@given(
    t=st.floats(-300.0, 700.0),
    epoch=st.sampled_from([0.0, -6000.0, -21000.0, -127000.0]),
    name=st.sampled_from(["noleap", "360_day", "proleptic_gregorian", "julian", "all_leap"]),
)
@settings(max_examples=300, deadline=None)
def test_time_longitude_round_trips(t, epoch, name):
    sy = SolarYear(solve(epoch), name, year=2000)
    lam = sy.true_longitude_rad(t)
    # With near_days the inverse returns the same time ...
    assert sy.time_of_true_longitude_days(lam, near_days=t) == pytest.approx(t, abs=1e-9)
    # ... and without it the time within [anchor, anchor + orbital year).
    t0 = sy.time_of_true_longitude_days(lam)
    assert sy.anchor_day <= t0 < sy.anchor_day + sy.orbital_year_length_days
    assert abs(wrap(sy.true_longitude_rad(t0) - lam)) < 1e-11


@given(lam=st.floats(-10.0, 10.0), e=st.floats(0.0, 0.1), varpi=st.floats(0.0, 360.0))
@settings(max_examples=200, deadline=None)
def test_longitude_time_round_trip(lam, e, varpi):
    sy = SolarYear(orbit(e, 23.0, varpi), "noleap")
    t = sy.time_of_true_longitude_days(lam)
    assert abs(wrap(sy.true_longitude_rad(t) - lam)) < 1e-11


def test_bad_arguments():
    with pytest.raises(OrbitError, match="orbit must be OrbitalElements"):
        SolarYear((0.0167, 23.4, 102.0), "noleap")
    with pytest.raises(CalendarError, match="unknown calendar"):
        SolarYear(solve(0.0), "lunar")


# --- present-day events: JPL DE421 (skyfield) and USNO 2023 ---------------------------------
# The model: the orbit of 2023 CE (Berger 1978, 73 years after 1950) in a proleptic_gregorian
# calendar, anchored at the real March equinox of 2023, 20 March 21:24 UT (USNO,
# USNO, Earth's Seasons 2023). Model time is read as UT (days after 2023-01-01 00:00 UT).
#
# Expected differences, and the tolerances they justify:
# * Leap-year stretch (the leap-year rule): the orbital year 2023-03-20 21:24 → 2024-03-20
#   21:24 contains 2024-02-29 and lasts 366 days in the model, whereas the tropical year is
#   365.24219 days (Astronomical Almanac, from memory). An event a fraction f of the way through it
#   happens f × (366 - 365.24219) days later in the model than in reality (up to 0.57 day
#   at the December solstice). Before the anchor the orbital year has 365 days instead.
# * Mean Keplerian orbit vs the real Earth: the Moon displaces the geocentre from the
#   Earth–Moon barycentre (EMB) by up to 4670 km, i.e. ~6″ in the Sun's longitude, and
#   Venus, Jupiter and Mars perturb the EMB by a few arcseconds each (from memory); the
#   Sun moves ~0.9856°/day, so 40″ of longitude is about 0.011 day. We allow
#   LONGITUDE_TOL_DEG = 0.02° in longitude and EVENT_TOL_DAYS = 0.05 day for the times of
#   the solstices and equinox once the stretch is removed.
# * Perihelion is a flat minimum of distance: the geocentre's monthly wobble about the EMB
#   (radial velocity ≤ 2π × 4670 km / 29.5 d = 6.7e-6 au/day) against the curvature
#   d²r/dt² = a e n² = 4.9e-6 au/day² moves the geocentre's perihelion by up to ~1.4 day
#   from the EMB's; the EMB's perihelion itself moves by a few tenths of a day with the
#   planets (Venus, Jupiter). Tolerances: 1.5 day against the Earth (geocentre, as USNO
#   publishes), 0.3 day against the EMB.
LONGITUDE_TOL_DEG = 0.02
EVENT_TOL_DAYS = 0.05
PERIHELION_EARTH_TOL_DAYS = 1.5
PERIHELION_EMB_TOL_DAYS = 0.3
USNO_MINUTE = 1.0 / 1440  # USNO times are given to the minute
# USNO, "Earth's Seasons and Apsides" 2023, in UT, as days after 2023-01-01 00:00 UT.
_DAYS_BEFORE_MONTH_2023 = (0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334)
USNO_2023 = {
    name: _DAYS_BEFORE_MONTH_2023[m - 1] + d - 1 + (hour + minute / 60) / 24
    for name, (m, d, hour, minute) in USNO_2023_UT.items() if name != "aphelion"
}
SEASON_LONGITUDES_DEG = {
    "june_solstice": 90.0,
    "september_equinox": 180.0,
    "december_solstice": 270.0,
}


class Ephemeris2023:
    """The Sun seen from the Earth in 2023 from JPL DE421 (skyfield + the de421 package)."""

    def __init__(self):
        import de421
        from jplephem.ephem import Ephemeris  # reader for the de421 package's arrays
        from skyfield.api import load
        from skyfield.constants import AU_KM
        from skyfield.framelib import ecliptic_frame
        from skyfield.vectorlib import VectorFunction

        eph = Ephemeris(de421)

        class Segment(VectorFunction):
            def __init__(self, center, target, fn):
                self.center, self.target, self._fn = center, target, fn

            def _at(self, t):
                p, v = self._fn(t.whole, t.tdb_fraction)
                return p / AU_KM, v / AU_KM, None, None

        def earth_from_emb(whole, fraction):
            p, v = eph.position_and_velocity("moon", whole, fraction)  # geocentric Moon
            return -p * eph.earth_share, -v * eph.earth_share

        self.emb = Segment(0, 3, lambda w, f: eph.position_and_velocity("earthmoon", w, f))
        self.earth = self.emb + Segment(3, 399, earth_from_emb)
        self.sun = Segment(0, 10, lambda w, f: eph.position_and_velocity("sun", w, f))
        self.ts = load.timescale(builtin=True)  # built-in leap-second and ΔT tables
        self.ecliptic = ecliptic_frame  # true ecliptic and equinox of date

    def _time(self, days):
        return self.ts.utc(2023, 1, 1 + np.asarray(days, dtype=float))

    def longitude_rad_and_distance_au(self, days):
        """Apparent ecliptic longitude of date of the Sun, and the Earth–Sun distance."""
        apparent = self.earth.at(self._time(days)).observe(self.sun).apparent(deflectors=())
        _, lon, dist = apparent.frame_latlon(self.ecliptic)
        return lon.radians, dist.au

    def emb_distance_au(self, days):
        t = self._time(days)
        return np.linalg.norm(self.emb.at(t).position.au - self.sun.at(t).position.au, axis=0)

    def time_of_longitude(self, target_deg, lo, hi):
        """Bisection for the time in [lo, hi] at which the longitude crosses target_deg."""
        lo, hi = float(lo), float(hi)
        for _ in range(45):  # 1 hour / 2^45: far below a second
            mid = 0.5 * (lo + hi)
            lam, _ = self.longitude_rad_and_distance_au(mid)
            if wrap(lam - deg(target_deg)) < 0:
                lo = mid
            else:
                hi = mid
        return 0.5 * (lo + hi)

    @staticmethod
    def time_of_minimum(fn, lo, hi):
        """Golden-section search for the minimum of fn on [lo, hi]."""
        g = (np.sqrt(5) - 1) / 2
        for _ in range(60):
            c, d = hi - g * (hi - lo), lo + g * (hi - lo)
            if fn(c) < fn(d):
                hi = d
            else:
                lo = c
        return 0.5 * (lo + hi)


@pytest.fixture(scope="module")
def ephemeris_events():
    eph = Ephemeris2023()
    grid = np.arange(-2.0, 367.0, 1.0 / 24)  # hourly grid over 2023
    lam, dist = eph.longitude_rad_and_distance_au(grid)
    events = {}
    for name, target in {"march_equinox": 0.0, **SEASON_LONGITUDES_DEG}.items():
        x = wrap(lam - deg(target))
        (k,) = np.nonzero((x[:-1] < 0) & (x[1:] >= 0))
        assert k.size == 1, name
        events[name] = eph.time_of_longitude(target, grid[k[0]], grid[k[0] + 1])
    k = int(np.argmin(dist[grid < 30]))
    events["perihelion"] = eph.time_of_minimum(
        lambda d: eph.longitude_rad_and_distance_au(d)[1], grid[k] - 1, grid[k] + 1
    )
    emb = eph.emb_distance_au(grid[grid < 30])
    k = int(np.argmin(emb))
    events["perihelion_emb"] = eph.time_of_minimum(eph.emb_distance_au, grid[k] - 1, grid[k] + 1)
    return eph, events


@pytest.fixture(scope="module")
def model_2023():
    # USNO 2023 March equinox, 20 Mar 21:24 UT, as the anchor of the model year 2023.
    calendar = ModelCalendar("proleptic_gregorian", Anchor("march_equinox", 3, 20, 21, 24))
    return SolarYear(solve(2023.0 - 1950.0), calendar, year=2023)


def _stretch_days(sy, t_model):
    """How much later than reality the model places an event (leap-year rule, see above)."""
    f = (t_model - sy.anchor_day) / sy.orbital_year_length_days
    return f * (sy.orbital_year_length_days - TROPICAL_YEAR_DAYS)


def test_ephemeris_harness_reproduces_usno_2023(ephemeris_events):
    # The DE421/skyfield event finder against USNO's published 2023 dates: same
    # definitions (apparent longitude of date; geocentric distance), so within USNO's rounding
    # to the minute plus ΔT-table differences (a minute).
    _, events = ephemeris_events
    for name, usno in USNO_2023.items():
        assert abs(events[name] - usno) < 2 * USNO_MINUTE, name


@pytest.mark.parametrize("name", list(SEASON_LONGITUDES_DEG))
def test_solstices_and_equinox_against_de421(ephemeris_events, model_2023, name):
    _, events = ephemeris_events
    sy = model_2023
    t_model = sy.time_of_true_longitude_days(deg(SEASON_LONGITUDES_DEG[name]))
    stretch = _stretch_days(sy, t_model)
    assert 0 < stretch < 366 - TROPICAL_YEAR_DAYS
    assert abs(t_model - events[name] - stretch) < EVENT_TOL_DAYS
    # And against USNO directly (USNO minute rounding added).
    assert abs(t_model - USNO_2023[name] - stretch) < EVENT_TOL_DAYS + USNO_MINUTE


def test_perihelion_against_de421_and_usno(ephemeris_events, model_2023):
    _, events = ephemeris_events
    sy = model_2023
    lam_peri = deg(float(sy.orbit.sun_longitude_at_perihelion_deg))
    t_model = sy.time_of_true_longitude_days(lam_peri, near_days=3.0)
    assert abs(wrap(sy.true_anomaly_rad(t_model))) < 1e-10
    # Before the 2023 anchor the orbital year has 365 days (no 29 Feb in 2023): the model
    # places perihelion (365.24219 - 365) × 76/365 ≈ 0.05 day late; within the tolerances.
    assert abs(t_model - events["perihelion_emb"]) < PERIHELION_EMB_TOL_DAYS
    assert abs(t_model - events["perihelion"]) < PERIHELION_EARTH_TOL_DAYS
    assert abs(t_model - USNO_2023["perihelion"]) < PERIHELION_EARTH_TOL_DAYS


def test_longitude_and_distance_through_2023_against_de421(ephemeris_events, model_2023):
    # At every 6 hours of 2023, compare the model with DE421 at the same orbital phase (real
    # time mapped into model time by the ratio of the model's orbital year to the tropical
    # year, which removes the leap-year stretch).
    eph, _ = ephemeris_events
    sy = model_2023
    days = np.arange(0.0, 365.0, 0.25)
    lam, dist = eph.longitude_rad_and_distance_au(days)
    a = sy.anchor_day
    length = np.where(days < a, 365.0, 366.0)  # model orbital years before/after the anchor
    t_model = a + (days - a) * length / TROPICAL_YEAR_DAYS
    lam_model, _, factor = sy.solar_geometry(t_model)
    assert np.abs(np.rad2deg(wrap(lam_model - lam))).max() < LONGITUDE_TOL_DEG
    # Distance: semi-major axis 1.000001018 au (Meeus, Astronomical Algorithms, ch. 25, from
    # memory); the geocentre's offset from the EMB is 3.1e-5 au, planetary terms of the same
    # order: allow 1.5e-4 au.
    r_model = 1.000001018 / np.sqrt(factor)
    assert np.abs(r_model - dist).max() < 1.5e-4
