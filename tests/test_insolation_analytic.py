"""Insolation against analytic results (bcgen.insolation).

Each check names the result it relies on. Several compare two independent
routes through the code: the time route (daily values on a model calendar,
Kepler's equation solved at each instant) and the longitude route (Kepler's
second law, integral over true longitude).
"""

import numpy as np
import pytest
from published_tables import CMIP6_PICONTROL_TSI_WM2, PMIP4

from bcgen.insolation import (
    annual_mean_insolation_wm2,
    band_mean_insolation_wm2,
    caloric_half_years,
    daily_insolation,
    daily_mean_insolation_wm2,
    insolation_at_true_longitude_wm2,
    insolation_energy_between_true_longitudes_j_m2,
    instantaneous_insolation,
    monthly_insolation,
    summer_energy_gj_m2,
)
from bcgen.orbit import solve
from bcgen.solar_calendar import ModelCalendar, SolarYear

# Named tolerances.
EXACT_REL = 1e-9  # two exact formulas that differ only by rounding and 1e-12 quadrature
QUADRATURE_REL = 1e-7  # quadrature over latitude or time with a few hundred nodes
SAMPLED_REL = 2e-5  # time integrals on the 3-hourly grid of bcgen.insolation.metrics

S0 = CMIP6_PICONTROL_TSI_WM2  # Matthes et al. 2017, CMIP6 piControl


def fixed(e, obliquity_deg, varpi_deg):
    return solve(None, "fixed", eccentricity=e, obliquity_deg=obliquity_deg,
                 perihelion_deg=varpi_deg, perihelion_convention="perihelion_longitude",
                 idealized=True)  # the extreme orbit's 30 degrees is outside Earth's range


# PMIP4 Tier-1 orbits (Otto-Bliesner et al. 2017; Kageyama et al. 2017) and an extreme one.
ORBITS = {name: s.orbit for name, s in PMIP4.items()} | {"extreme": (0.1, 30.0, 45.0)}


GAUSS_200 = np.polynomial.legendre.leggauss(200)


def _global_mean_over_latitude(values_of_lat, kink_sin_lat):
    """Area mean over the sphere: Gauss-Legendre in x = sin(latitude), in pieces split at the
    latitudes where the integrand has a kink (x = ±kink_sin_lat), so that each piece is smooth."""
    x, w = GAUSS_200
    edges = [-1.0, -kink_sin_lat, kink_sin_lat, 1.0]
    total = 0.0
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        xs = 0.5 * (a + b) + 0.5 * (b - a) * x
        total = total + 0.5 * (b - a) * np.sum(values_of_lat(np.rad2deg(np.arcsin(xs))) * w,
                                                axis=-1)
    return total / 2.0


# --- Berger 1978: global annual mean = S0 / (4 sqrt(1 - e^2)) ------------------------
@pytest.mark.parametrize("name", list(ORBITS))
def test_global_annual_mean_longitude_route(name):
    # Analytic: <Q> = S0 / (4 sqrt(1 - e^2)) (Berger 1978): the time
    # mean of (a/r)^2 over an orbit is (1 - e^2)^(-1/2) and a sphere intercepts 1/4 of S0.
    e, eps, varpi = ORBITS[name]
    orbit = fixed(e, eps, varpi)
    # The annual mean has weak singularities at the polar circles, sin(lat) = ±cos(eps).
    got = _global_mean_over_latitude(lambda lat: annual_mean_insolation_wm2(orbit, lat, S0),
                                     np.cos(np.deg2rad(eps)))
    assert got == pytest.approx(S0 / (4 * np.sqrt(1 - e * e)), rel=QUADRATURE_REL)


def test_global_annual_mean_time_route():
    # Same analytic result (Berger 1978), reached through daily values: day averages of a 365-day
    # model year, averaged over days and over the sphere (band mean of the whole globe).
    e, eps, varpi = ORBITS["lig127k"]
    orbit = fixed(e, eps, varpi)
    solar = SolarYear(orbit, ModelCalendar("noleap"))
    x, w = np.polynomial.legendre.leggauss(16)
    t = (np.arange(365)[:, None] + 0.5 * (x + 1)).ravel()  # 16-point Gauss rule in every day
    lam = solar.true_longitude_rad(t)
    globe = band_mean_insolation_wm2([[-90.0, 90.0]], lam, orbit, S0)[0]
    got = np.sum(globe.reshape(365, 16) * w) / 2 / 365
    assert got == pytest.approx(S0 / (4 * np.sqrt(1 - e * e)), rel=QUADRATURE_REL)


def test_global_daily_mean_is_a_quarter_of_the_flux():
    # Geometry of a sphere (common practice): a sphere of radius R intercepts pi R^2 S and has
    # area 4 pi R^2, so the global daily mean is S0 (a/r)^2 / 4 at every true longitude.
    e, eps, varpi = ORBITS["extreme"]
    orbit = fixed(e, eps, varpi)
    lam = np.deg2rad(np.arange(0.0, 360.0, 7.5))
    rho2 = ((1 - e * np.cos(lam - np.deg2rad(varpi))) / (1 - e * e)) ** 2  # ellipse equation
    by_band = band_mean_insolation_wm2([[-90.0, 90.0]], lam, orbit, S0)[0]
    np.testing.assert_allclose(by_band, S0 * rho2 / 4, rtol=EXACT_REL)
    # The same through the point formula integrated over latitude, split at the edges of polar
    # night, sin(lat) = ±cos(delta).
    for k in range(lam.size):
        cos_dec = np.sqrt(1 - (np.sin(np.deg2rad(eps)) * np.sin(lam[k])) ** 2)
        by_points = _global_mean_over_latitude(
            lambda lat, k=k: daily_mean_insolation_wm2(lat, lam[k], orbit, S0), cos_dec)
        assert by_points == pytest.approx(S0 * rho2[k] / 4, rel=QUADRATURE_REL)


# --- polar annual mean = S0 sin(eps) / (pi sqrt(1 - e^2)) ---------------
@pytest.mark.parametrize("name", list(ORBITS))
@pytest.mark.parametrize("pole", [90.0, -90.0])
def test_polar_annual_mean(name, pole):
    # Analytic (Berger, Loutre & Yin 2010): at a pole the daily mean
    # is S0 (a/r)^2 sin(delta) in polar day, so the annual mean is S0 sin(eps)/(pi sqrt(1-e^2)).
    e, eps, varpi = ORBITS[name]
    orbit = fixed(e, eps, varpi)
    expected = S0 * np.sin(np.deg2rad(eps)) / (np.pi * np.sqrt(1 - e * e))
    assert annual_mean_insolation_wm2(orbit, pole, S0) == pytest.approx(expected, rel=EXACT_REL)


def test_polar_annual_mean_from_months_and_days():
    # The polar result again, through the calendar: fixed-angle months weighted by their
    # lengths, and the day averages of a 365-day model year, must both give the analytic
    # polar annual mean.
    e, eps, varpi = ORBITS["midHolocene"]
    orbit = fixed(e, eps, varpi)
    expected = S0 * np.sin(np.deg2rad(eps)) / (np.pi * np.sqrt(1 - e * e))
    months = monthly_insolation(orbit, "noleap", [90.0], S0, months="fixed_angle")
    lengths = months.months.length_days
    assert np.sum(months.insolation_wm2[0] * lengths) / lengths.sum() == pytest.approx(
        expected, rel=EXACT_REL)
    daily = daily_insolation(orbit, "noleap", [90.0], S0, method="day_average")
    assert daily.insolation_wm2[0].mean() == pytest.approx(expected, rel=1e-8)


# --- Kepler's second law: energy between fixed true longitudes does not depend on varpi -------
@pytest.mark.parametrize("lat", [90.0, 65.0, 0.0, -40.0, -80.0])
def test_energy_between_true_longitudes_independent_of_perihelion(lat):
    # Kepler's second law (Huybers 2006; Berger, Loutre & Yin 2010):
    # the energy received between two true longitudes depends on e only through sqrt(1 - e^2).
    varpis = np.arange(0.0, 360.0, 30.0)
    orbit = fixed(0.05 * np.ones_like(varpis), 23.5, varpis)
    energy = insolation_energy_between_true_longitudes_j_m2(orbit, lat, 20.0, 170.0, S0, 365.0)
    np.testing.assert_allclose(energy, energy[0], rtol=EXACT_REL)


def test_energy_between_true_longitudes_time_route():
    # The same law reached without it: integrate the daily-mean formula in *time* between the
    # instants the Sun reaches the two longitudes (Kepler's equation at every instant) for
    # perihelia 120 degrees apart; all must agree with each other and with the longitude route.
    lam1, lam2, lat = np.deg2rad(30.0), np.deg2rad(150.0), 65.0
    calendar = ModelCalendar("noleap")
    x, w = np.polynomial.legendre.leggauss(400)
    results = []
    for varpi in (0.0, 120.0, 240.0):
        orbit = fixed(0.06, 23.5, varpi)
        solar = SolarYear(orbit, calendar)
        t1 = solar.time_of_true_longitude_days(lam1)
        t2 = solar.time_of_true_longitude_days(lam2, near_days=t1 + 120.0)
        t = 0.5 * (t1 + t2) + 0.5 * (t2 - t1) * x
        q = daily_mean_insolation_wm2(lat, solar.true_longitude_rad(t), orbit, S0)
        results.append(0.5 * (t2 - t1) * np.sum(q * w) * 86400.0)  # J m-2
        by_longitude = insolation_energy_between_true_longitudes_j_m2(
            orbit, lat, 30.0, 150.0, S0, year_length_days=365.0)
        assert results[-1] == pytest.approx(by_longitude, rel=QUADRATURE_REL)
    np.testing.assert_allclose(results, results[0], rtol=QUADRATURE_REL)


def test_annual_mean_is_symmetric_between_hemispheres():
    # Consequence of Kepler's second law (Kepler's second law; Huybers 2006): over a year each
    # hemisphere's summer arc is as long in energy as the other's, so <Q>(phi) = <Q>(-phi)
    # for any orbit (common practice; e.g. Berger, Loutre & Yin 2010).
    orbit = fixed(0.06, 24.0, 70.0)
    lat = np.array([10.0, 35.0, 60.0, 66.0, 72.0, 85.0])
    np.testing.assert_allclose(annual_mean_insolation_wm2(orbit, lat, S0),
                               annual_mean_insolation_wm2(orbit, -lat, S0), rtol=EXACT_REL)


# --- daily and instantaneous values -------------------------------------------------------------
def test_solstice_at_the_pole():
    # At the North Pole on the June solstice the Sun circles at elevation eps all day
    # (spherical astronomy, common practice): Q = S0 (a/r)^2 sin(eps).
    e, eps, varpi = ORBITS["lig127k"]
    orbit = fixed(e, eps, varpi)
    rho = (1 - e * np.cos(np.deg2rad(90.0 - varpi))) / (1 - e * e)
    got = insolation_at_true_longitude_wm2(orbit, 90.0, 90.0, S0)
    assert got == pytest.approx(S0 * rho**2 * np.sin(np.deg2rad(eps)), rel=EXACT_REL)


def test_equator_at_equinox_without_eccentricity():
    # With e = 0 at an equinox the equator has 12 h of daylight and cos Z = cos h:
    # Q = S0 / pi (mean of max(cos h, 0) over a day; common practice).
    orbit = fixed(0.0, 23.44, 0.0)
    assert float(daily_mean_insolation_wm2(0.0, 0.0, orbit, S0)) == pytest.approx(
        S0 / np.pi, rel=EXACT_REL)


def test_instantaneous_averages_to_the_daily_mean():
    # The daily-mean formula is the mean of the instantaneous flux over the hour angle
    # (Berger 1978): averaging instantaneous values over all longitudes at one instant is an
    # average over the hour angle at the same declination and distance.
    orbit = fixed(0.04, 24.0, 275.0)
    calendar = ModelCalendar("noleap")
    t = 150.3
    lon = (np.arange(7200) + 0.5) * 360.0 / 7200
    lat = np.array([-70.0, -20.0, 0.0, 45.0, 80.0])
    inst = instantaneous_insolation(orbit, calendar, t, lat[:, None], lon, S0)
    lam = SolarYear(orbit, calendar).true_longitude_rad(t)
    np.testing.assert_allclose(inst.mean(axis=1), daily_mean_insolation_wm2(lat, lam, orbit, S0),
                               rtol=1e-6, atol=1e-6)


def test_instantaneous_subsolar_point_at_local_noon():
    # Mean solar time from longitude: at t = n + 0.5 the Sun culminates on the Greenwich
    # meridian, and at the latitude of the declination it is overhead: S = S0 (a/r)^2.
    orbit = fixed(0.02, 23.44, 100.0)
    calendar = ModelCalendar("noleap")
    solar = SolarYear(orbit, calendar)
    t = 171.5
    lam, dec, rho2 = solar.solar_geometry(t)
    got = instantaneous_insolation(orbit, calendar, t, np.rad2deg(dec), 0.0, S0)
    assert float(got) == pytest.approx(S0 * rho2, rel=1e-12)
    # 90 degrees east it is 18:00 local mean solar time: the Sun is on the horizon.
    dusk = instantaneous_insolation(orbit, calendar, t, 0.0, 90.0, S0)
    assert float(dusk) == pytest.approx(0.0, abs=1e-9 * S0)
    # Local noon at 90 degrees west is six hours later in model time.
    _, dec_later, rho2_later = solar.solar_geometry(t + 0.25)
    later = instantaneous_insolation(orbit, calendar, t + 0.25, np.rad2deg(dec_later), -90.0, S0)
    assert float(later) == pytest.approx(S0 * rho2_later, rel=1e-12)


def test_day_average_equals_integral_over_the_day():
    # day_average holds the time mean of the daily-mean formula over [n, n + 1): compare with a
    # brute-force midpoint rule of 20000 instants per day, on days with a polar-night edge.
    orbit = fixed(0.03, 23.44, 300.0)
    calendar = ModelCalendar("noleap")
    days = np.array([70, 79, 80, 100, 265, 266])
    lat = np.array([90.0, 89.0, 80.0, 66.0, -70.0])
    got = daily_insolation(orbit, calendar, lat, S0, days=days, method="day_average")
    n = 20000
    t = days[:, None] + (np.arange(n) + 0.5) / n
    lam = SolarYear(orbit, calendar).true_longitude_rad(t)
    brute = daily_mean_insolation_wm2(lat[:, None, None], lam, orbit, S0).mean(axis=-1)
    np.testing.assert_allclose(got.insolation_wm2, brute, rtol=0, atol=2e-6)


def test_midday_is_the_value_at_noon():
    orbit = fixed(0.03, 23.44, 300.0)
    calendar = ModelCalendar("360_day")
    got = daily_insolation(orbit, calendar, [45.0, -45.0], S0, method="midday")
    lam = SolarYear(orbit, calendar).true_longitude_rad(np.arange(360) + 0.5)
    np.testing.assert_allclose(got.insolation_wm2,
                               daily_mean_insolation_wm2(np.array([[45.0], [-45.0]]), lam, orbit,
                                                         S0), rtol=1e-14)
    assert got.insolation_wm2.shape == (2, 360) and got.method == "midday"


# --- seasonal metrics -------------------------------------------------------------------------
def test_caloric_half_years_circular_orbit_at_the_pole():
    # With e = 0 the polar day lasts exactly half a year and Q = S0 sin(eps) sin(lambda) in it:
    # the caloric summer mean is 2 S0 sin(eps) / pi and the winter gets nothing (analytic;
    # caloric half-years: Milankovitch 1941).
    orbit = fixed(0.0, 23.44, 0.0)
    halves = caloric_half_years(orbit, 90.0, S0)
    assert float(halves.summer_wm2) == pytest.approx(2 * S0 * np.sin(np.deg2rad(23.44)) / np.pi,
                                                     rel=SAMPLED_REL)
    # The sampled integral smooths the sunrise kink over one 3-hour step: O(h^2) of the summer.
    assert float(halves.winter_wm2) == pytest.approx(0.0, abs=SAMPLED_REL * halves.summer_wm2)


@pytest.mark.parametrize("lat", [90.0, 65.0, 30.0, 0.0, -50.0])
def test_caloric_half_years_split_the_annual_energy(lat):
    # The two halves hold the whole year: (summer + winter) / 2 = annual mean, where the annual
    # mean comes from the independent longitude route (exact integral over true longitude).
    # metrics.py defines winter as 2 x total - summer, so this checks bcgen's sampled total,
    # not the split between the halves: test_caloric_half_years_match_a_brute_force_sort does.
    orbit = fixed(*ORBITS["lig127k"])
    halves = caloric_half_years(orbit, lat, S0)
    annual = annual_mean_insolation_wm2(orbit, lat, S0)
    assert 0.5 * (halves.summer_wm2 + halves.winter_wm2) == pytest.approx(annual, rel=SAMPLED_REL)
    assert halves.summer_wm2 >= halves.threshold_wm2 - 1e-9 >= halves.winter_wm2 - 2e-9
    # Half of the days of a 365-day year must lie above the threshold (within two days) --
    # unless the polar night is longer than half a year (the North Pole at 127 ka, with
    # perihelion near the June solstice), where the threshold is 0 and the summer half-year
    # holds all days of sunshine and some of the night.
    daily = daily_insolation(orbit, "noleap", lat, S0).insolation_wm2
    sunny = np.sum(daily > halves.threshold_wm2)
    if halves.threshold_wm2 > 1e-9:
        assert abs(sunny - 182.5) <= 2
    else:
        assert sunny < 182.5 and np.sum(daily > 0) == sunny


def _brute_force_half_year_means(e, obliquity_deg, varpi_deg, lat_deg, n=100_000):
    """Caloric summer and winter means by brute force, sharing no code with bcgen.

    n instants equally spaced in time over one orbit (uniform in mean anomaly), Kepler's
    equation solved by Newton's method, the daily-mean insolation of Berger (1978, eq. 1-3)
    Q = (S0 / pi) (a/r)^2 (H0 sin(phi) sin(delta) + cos(phi) cos(delta) sin(H0)) with
    cos(H0) = -tan(phi) tan(delta), sin(delta) = sin(eps) sin(lambda), lambda = v + varpi + 180
    deg and a/r = (1 + e cos v) / (1 - e^2). The caloric summer half-year is the half of the
    year's time with the highest daily insolation (Milankovitch 1941): sort the instants and
    average the top half; the winter is the bottom half.
    """
    mean_anomaly = 2.0 * np.pi * np.arange(n) / n
    ecc_anomaly = mean_anomaly.copy()
    for _ in range(50):
        ecc_anomaly -= ((ecc_anomaly - e * np.sin(ecc_anomaly) - mean_anomaly)
                        / (1.0 - e * np.cos(ecc_anomaly)))
    true_anomaly = 2.0 * np.arctan2(np.sqrt(1.0 + e) * np.sin(ecc_anomaly / 2.0),
                                    np.sqrt(1.0 - e) * np.cos(ecc_anomaly / 2.0))
    lam = true_anomaly + np.deg2rad(varpi_deg) + np.pi
    sin_dec = np.sin(np.deg2rad(obliquity_deg)) * np.sin(lam)
    cos_dec = np.sqrt(1.0 - sin_dec**2)
    a_over_r_sq = ((1.0 + e * np.cos(true_anomaly)) / (1.0 - e * e)) ** 2
    phi = np.deg2rad(lat_deg)
    with np.errstate(divide="ignore"):
        cos_h0 = -np.tan(phi) * sin_dec / cos_dec if abs(lat_deg) < 90 else np.where(
            np.sign(lat_deg) * sin_dec > 0, -1.0, 1.0)
    h0 = np.arccos(np.clip(cos_h0, -1.0, 1.0))
    q = np.sort(S0 / np.pi * a_over_r_sq * (h0 * np.sin(phi) * sin_dec
                                             + np.cos(phi) * cos_dec * np.sin(h0)))
    return q[n // 2:].mean(), q[: n // 2].mean()


@pytest.mark.parametrize("name", ["lig127k", "midHolocene", "extreme"])
@pytest.mark.parametrize("lat", [90.0, 65.0, 30.0, 0.0, -50.0, -90.0])
def test_caloric_half_years_match_a_brute_force_sort(name, lat):
    # Independent of the identity summer + winter = 2 x annual (which holds by construction):
    # the means of the top and bottom halves of the sorted instants of one orbit. The brute
    # force is converged to 1e-7 W m-2 at n = 1e5 (it moves by less between 1e5 and 4e5);
    # bcgen's 3-hourly sampling leaves about 2e-4 W m-2.
    e, obliquity_deg, varpi_deg = ORBITS[name]
    halves = caloric_half_years(fixed(e, obliquity_deg, varpi_deg), lat, S0)
    summer, winter = _brute_force_half_year_means(e, obliquity_deg, varpi_deg, lat)
    tolerance_wm2 = 1e-3
    assert float(halves.summer_wm2) == pytest.approx(summer, abs=tolerance_wm2)
    assert float(halves.winter_wm2) == pytest.approx(winter, abs=tolerance_wm2)
    # The check can fail: a summer mean 1 % off is more than 1000 times the tolerance away.
    assert abs(1.01 * float(halves.summer_wm2) - summer) > 1000 * tolerance_wm2


def test_summer_energy_threshold_zero_is_the_annual_energy():
    # With tau = 0 every day counts: J = annual mean x year length (Huybers 2006's definition).
    orbit = fixed(*ORBITS["midHolocene"])
    lat = np.array([90.0, 65.0, 0.0, -65.0])
    got = summer_energy_gj_m2(orbit, lat, 0.0, S0, year_length_days=365.0)
    annual = annual_mean_insolation_wm2(orbit, lat, S0)
    np.testing.assert_allclose(got, annual * 365.0 * 86400.0 / 1e9, rtol=SAMPLED_REL)


def test_summer_energy_matches_huybers_daily_sum():
    # Huybers (2006, Science 313, 508): J = sum over days of W_i * 86400 s where W_i >= 275 W m-2.
    # The continuous integral differs from the one-per-day sum only by where the threshold falls
    # inside a day: at most half a day at each of the two crossings, 2 x 0.5 d x ~300 W m-2
    # x 86400 s = 0.026 GJ m-2.
    orbit = fixed(*ORBITS["lig127k"])
    daily = daily_insolation(orbit, "noleap", 65.0, 1365.0).insolation_wm2
    huybers = np.sum(np.where(daily >= 275.0, daily, 0.0)) * 86400.0 / 1e9
    got = summer_energy_gj_m2(orbit, 65.0, 275.0, 1365.0, year_length_days=365.0)
    assert float(got) == pytest.approx(huybers, abs=0.026)


def test_band_mean_of_a_narrow_band_is_the_point_value():
    # The area mean over a band shrinks to the value at its centre (definition of a mean).
    orbit = fixed(*ORBITS["piControl"])
    lam = np.deg2rad([45.0, 100.0])
    got = band_mean_insolation_wm2([[64.999, 65.001]], lam, orbit, S0)[0]
    np.testing.assert_allclose(got, daily_mean_insolation_wm2(65.0, lam, orbit, S0), rtol=1e-8)


def test_band_mean_matches_brute_force_across_the_polar_circle():
    # A band that contains the edge of polar night, against a midpoint rule of 200000 points
    # weighted by cos(latitude) (definition of the area mean).
    orbit = fixed(*ORBITS["piControl"])
    lam = np.deg2rad(300.0)  # northern winter: the polar-night edge near 70 N
    lo, hi = 60.0, 80.0
    phi = lo + (hi - lo) * (np.arange(200000) + 0.5) / 200000
    q = daily_mean_insolation_wm2(phi, lam, orbit, S0)
    brute = np.sum(q * np.cos(np.deg2rad(phi))) / np.sum(np.cos(np.deg2rad(phi)))
    got = band_mean_insolation_wm2([[lo, hi]], lam, orbit, S0)[0]
    assert float(got) == pytest.approx(brute, rel=1e-7)
