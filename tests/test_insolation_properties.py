"""Invariants of insolation under random orbits, latitudes and calendars (hypothesis)."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from published_tables import CMIP6_PICONTROL_TSI_WM2

from bcgen.errors import BcgenError
from bcgen.insolation import (
    InsolationError,
    annual_mean_insolation_wm2,
    daily_insolation,
    daily_mean_insolation_wm2,
    insolation_energy_between_true_longitudes_j_m2,
    instantaneous_insolation,
    monthly_insolation,
)
from bcgen.orbit import solve
from bcgen.solar_calendar import Anchor, ModelCalendar, SolarYear

S0 = CMIP6_PICONTROL_TSI_WM2
EXACT_REL = 1e-9

eccentricities = st.floats(0.0, 0.1)  # the tested range for paleo orbits
obliquities = st.floats(0.0, 45.0)
perihelia = st.floats(0.0, 359.999)
latitudes = st.floats(-90.0, 90.0)
calendars = st.sampled_from(["noleap", "360_day", "all_leap", "proleptic_gregorian", "julian"])


def fixed(e, eps, varpi):
    return solve(None, "fixed", eccentricity=e, obliquity_deg=eps, perihelion_deg=varpi,
                 perihelion_convention="perihelion_longitude", idealized=True)  # any obliquity


@settings(max_examples=60, deadline=None)
@given(eccentricities, obliquities, perihelia, st.lists(latitudes, min_size=1, max_size=6),
       calendars, st.sampled_from(["midday", "day_average"]))
def test_daily_insolation_never_negative_and_zero_in_polar_night(e, eps, varpi, lats, calendar,
                                                                 method):
    # Definition of the daily mean (common practice): a flux through a surface facing the Sun
    # is never negative, and is zero when the Sun stays below the horizon all day, i.e. when
    # the latitude lies in the winter hemisphere beyond 90 deg - |declination|.
    orbit = fixed(e, eps, varpi)
    lat = np.array(lats)
    daily = daily_insolation(orbit, calendar, lat, S0, method=method, days=np.arange(0, 360, 7))
    assert np.all(daily.insolation_wm2 >= 0.0)
    # Polar night at midday: judged from the declination at t = n + 0.5.
    if method == "midday":
        solar = SolarYear(orbit, calendar)
        _, dec, _ = solar.solar_geometry(daily.day + 0.5)
        dec_deg = np.rad2deg(dec)
        night = (lat[:, None] * dec_deg[None, :] < 0) & (
            np.abs(lat[:, None]) > 90.0 - np.abs(dec_deg[None, :]) + 1e-9)
        assert np.all(daily.insolation_wm2[night] == 0.0)
        # ... and positive wherever the Sun rises.
        day = np.abs(lat[:, None]) < 90.0 - np.abs(dec_deg[None, :]) - 1e-6
        assert np.all(daily.insolation_wm2[day] > 0.0)


@settings(max_examples=60, deadline=None)
@given(eccentricities, obliquities, perihelia, latitudes, latitudes, latitudes)
def test_instantaneous_never_negative(e, eps, varpi, t_frac, lat, lon):
    orbit = fixed(e, eps, varpi)
    t = 365.0 * (t_frac + 90.0) / 180.0
    value = instantaneous_insolation(orbit, "noleap", t, lat, 2 * lon, S0)
    assert value >= 0.0
    # and bounded by the flux at the nearest possible distance, perihelion (a/r = 1/(1 - e)).
    assert value <= S0 / (1 - e) ** 2 * (1 + 1e-12)


@settings(max_examples=25, deadline=None)
@given(eccentricities, st.floats(5.0, 40.0), perihelia, calendars,
       st.sampled_from([(3, 21, 12, 0), (3, 20, 0, 0), (1, 3, 6, 0)]),
       st.sampled_from(["march_equinox", "perihelion"]))
def test_fixed_angle_months_equal_fixed_day_months_for_the_reference_orbit(
        e, eps, varpi, name, when, kind):
    # Definition of fixed-angle months (issue 3; Joussaume & Braconnot 1997): with the epoch's
    # own orbit as the reference, every month spans its own calendar days, so its boundaries
    # are the fixed-day ones and its exact time mean is the day-average mean of its days.
    orbit = fixed(e, eps, varpi)
    calendar = ModelCalendar(name, Anchor(kind, *when))
    year = 2000 if name in ("proleptic_gregorian", "julian") else 1  # 2000: a leap year
    lat = [90.0, 70.0, 45.0, 0.0, -66.0, -90.0]
    angle = monthly_insolation(orbit, calendar, lat, S0, months="fixed_angle", reference=orbit,
                               year=year)
    day = monthly_insolation(orbit, calendar, lat, S0, months="fixed_day", year=year,
                             daily_method="day_average")
    np.testing.assert_allclose(angle.months.start_day, day.months.start_day, atol=1e-8)
    # Day averages are exact to ~1e-6 W m-2 except on a day where the orbital-year length
    # changes (leap-year rule), integrated across the change to ~1e-6 W m-2 too.
    np.testing.assert_allclose(angle.insolation_wm2, day.insolation_wm2, rtol=0, atol=1e-5)


@settings(max_examples=40, deadline=None)
@given(eccentricities, obliquities, perihelia, perihelia, latitudes,
       st.floats(0.0, 359.0), st.floats(0.5, 359.0))
def test_energy_over_fixed_longitudes_independent_of_perihelion(e, eps, varpi1, varpi2, lat,
                                                                 start, span):
    # Kepler's second law (Huybers 2006; Berger, Loutre & Yin 2010).
    orbits = fixed(np.array([e, e]), eps, np.array([varpi1, varpi2]))
    energy = insolation_energy_between_true_longitudes_j_m2(orbits, lat, start, start + span, S0)
    assert energy[0] == pytest.approx(energy[1], rel=EXACT_REL, abs=1e-6)


@settings(max_examples=40, deadline=None)
@given(obliquities, latitudes, st.floats(0.0, 360.0))
def test_circular_orbit_hemispheres_mirror_half_a_year_apart(eps, lat, lam_deg):
    # Symmetry of the geometry (common practice): with e = 0 the southern latitude at
    # lambda + 180 deg sees the northern one's Sun at lambda (declination changes sign).
    orbit = fixed(0.0, eps, 0.0)
    lam = np.deg2rad(lam_deg)
    north = daily_mean_insolation_wm2(lat, lam, orbit, S0)
    south = daily_mean_insolation_wm2(-lat, lam + np.pi, orbit, S0)
    assert north == pytest.approx(south, rel=1e-12, abs=1e-9)


@settings(max_examples=30, deadline=None)
@given(eccentricities, obliquities, perihelia, latitudes)
def test_annual_mean_equals_mean_of_fixed_angle_months(e, eps, varpi, lat):
    # The 12 fixed-angle months tile the orbital year (noleap: exactly 365 days), so their
    # length-weighted mean is the annual mean (definition of a mean).
    orbit = fixed(e, eps, varpi)
    months = monthly_insolation(orbit, "noleap", lat, S0, months="fixed_angle")
    lengths = months.months.length_days
    assert np.sum(months.insolation_wm2 * lengths) / lengths.sum() == pytest.approx(
        float(annual_mean_insolation_wm2(orbit, lat, S0)), rel=1e-9, abs=1e-9)


# --- messages of the errors (tested in one place) ---------------------------------------------
def test_errors_name_what_is_wrong():
    orbit = fixed(0.0167, 23.44, 102.0)
    with pytest.raises(InsolationError, match=r"latitude_deg: latitudes must be in \[-90, 90\]"):
        daily_mean_insolation_wm2(91.0, 0.0, orbit)
    with pytest.raises(InsolationError,
                       match="solar_constant_wm2: expected a positive number of W m-2"):
        daily_mean_insolation_wm2(0.0, 0.0, orbit, -1.0)
    with pytest.raises(InsolationError, match="method: unknown daily method 'noon'"):
        daily_insolation(orbit, "noleap", 0.0, method="noon")
    with pytest.raises(InsolationError, match="months: unknown month definition 'fixed-day'"):
        monthly_insolation(orbit, "noleap", 0.0, months="fixed-day")
    with pytest.raises(InsolationError, match="days: expected a 1-D sequence of whole day"):
        daily_insolation(orbit, "noleap", 0.0, days=[0.5])
    assert issubclass(InsolationError, BcgenError)
