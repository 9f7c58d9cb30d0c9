"""Many orbits at once: vectorised results equal a loop over single orbits (issue 15).

Every function that takes an array of orbits must give, for each orbit, what it gives for
that orbit alone, to 1e-12 (the issue's tolerance). The work is done in blocks of orbits
and of quadrature pieces; the block sizes are made tiny here so that block edges fall
inside the arrays. The accuracy of the single-orbit values themselves is checked against
outside references in test_insolation_analytic.py and test_insolation_published.py.
"""

import numpy as np
import pytest

import bcgen.insolation.metrics as metrics_module
import bcgen.insolation.monthly as monthly_module
import bcgen.insolation.quadrature as quadrature_module
from bcgen.insolation import (
    CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    annual_mean_insolation_wm2,
    caloric_half_years,
    insolation_at_true_longitude_wm2,
    monthly_insolation,
    summer_energy_gj_m2,
)
from bcgen.orbit import solve
from bcgen.solar_calendar import Anchor, ModelCalendar
from bcgen.solar_calendar.months import fixed_angle_months, fixed_day_months

VECTOR_RTOL = 1e-12  # issue 15: vectorised = loop over single orbits
# Epochs spread over the last 800 kyr (Berger 1978), so eccentricity, obliquity and perihelion
# all vary; 130 ka and 127 ka give perihelia near the June solstice, 0 ka near January.
EPOCHS = np.array([0.0, -6000.0, -21000.0, -115000.0, -127000.0, -130000.0, -406000.0])
LATITUDES = np.array([-90.0, -70.0, -66.0, -30.0, 0.0, 45.0, 65.0, 67.0, 80.0, 90.0])
CALENDARS = [
    ModelCalendar("noleap"),
    ModelCalendar("360_day"),
    ModelCalendar("standard"),
    ModelCalendar("julian", Anchor("perihelion", 1, 3, 0, 0)),
]


@pytest.fixture
def tiny_blocks(monkeypatch):
    """Blocks of one or two orbits and a few quadrature pieces, so block edges are exercised."""
    monkeypatch.setattr(monthly_module, "VALUES_PER_BLOCK", 2 * 24 * LATITUDES.size)
    monkeypatch.setattr(monthly_module, "INTERVALS_PER_BLOCK", 37)
    monkeypatch.setattr(monthly_module, "QUADRATURE_VALUES_PER_BLOCK",
                        5 * monthly_module.SMOOTH_NODES * LATITUDES.size)
    monkeypatch.setattr(quadrature_module, "PIECES_PER_BLOCK", 53)


def _loop(function, orbits, *args, **kwargs):
    return np.stack([function(orbits[i], *args, **kwargs) for i in range(len(orbits))])


@pytest.mark.parametrize("calendar", CALENDARS, ids=lambda c: c.name)
def test_month_tables_for_many_orbits_equal_single_orbits(calendar):
    orbits = solve(EPOCHS)
    for method in (fixed_day_months, fixed_angle_months):
        many = method(orbits, calendar, year=4)
        one = [method(orbits[i], calendar, year=4) for i in range(len(orbits))]
        for name in ("start_day", "length_days", "start_true_longitude_deg"):
            np.testing.assert_allclose(
                getattr(many, name), np.stack([getattr(o, name) for o in one]),
                rtol=VECTOR_RTOL, atol=1e-12 * 366,
            )


@pytest.mark.parametrize("months", ["fixed_day", "fixed_angle"])
@pytest.mark.parametrize("calendar", CALENDARS, ids=lambda c: c.name)
def test_monthly_insolation_for_many_orbits_equals_single_orbits(months, calendar, tiny_blocks):
    orbits = solve(EPOCHS)
    many = monthly_insolation(orbits, calendar, LATITUDES, months=months, year=4)
    single = np.stack([
        monthly_insolation(orbits[i], calendar, LATITUDES, months=months, year=4).insolation_wm2
        for i in range(len(orbits))
    ])
    assert many.insolation_wm2.shape == (EPOCHS.size, LATITUDES.size, 12)
    np.testing.assert_allclose(many.insolation_wm2, single, rtol=VECTOR_RTOL, atol=1e-10)


def test_monthly_insolation_keeps_the_shape_of_an_orbit_array():
    # An orbit array of shape (2, 3) and latitudes of shape (2,) give (2, 3, 2, 12).
    orbits = solve(EPOCHS[:6].reshape(2, 3))
    got = monthly_insolation(orbits, "noleap", [65.0, -65.0], months="fixed_angle")
    assert got.insolation_wm2.shape == (2, 3, 2, 12)
    assert got.months.start_day.shape == (2, 3, 12)
    flat = monthly_insolation(solve(EPOCHS[:6]), "noleap", [65.0, -65.0], months="fixed_angle")
    np.testing.assert_array_equal(got.insolation_wm2.reshape(6, 2, 12), flat.insolation_wm2)


def test_true_longitude_and_annual_insolation_for_many_orbits_equal_single_orbits(tiny_blocks):
    orbits = solve(EPOCHS)
    lam = np.array([0.0, 90.0, 180.0, 270.0])
    np.testing.assert_allclose(
        insolation_at_true_longitude_wm2(orbits, LATITUDES[:, None], lam),
        _loop(insolation_at_true_longitude_wm2, orbits, LATITUDES[:, None], lam),
        rtol=VECTOR_RTOL, atol=1e-10,
    )
    np.testing.assert_allclose(
        annual_mean_insolation_wm2(orbits, LATITUDES),
        _loop(annual_mean_insolation_wm2, orbits, LATITUDES),
        rtol=VECTOR_RTOL,
    )


def test_caloric_half_years_and_summer_energy_for_many_orbits_equal_single_orbits(monkeypatch):
    # Blocks of one orbit (the row block holds latitudes x samples values).
    monkeypatch.setattr(monthly_module, "VALUES_PER_BLOCK", 400 * LATITUDES.size)
    orbits = solve(EPOCHS)
    many = caloric_half_years(orbits, LATITUDES, samples=400)
    single = [caloric_half_years(orbits[i], LATITUDES, samples=400) for i in range(len(orbits))]
    for name in ("summer_wm2", "winter_wm2", "threshold_wm2", "summer_energy_gj_m2"):
        np.testing.assert_allclose(
            getattr(many, name), np.stack([getattr(s, name) for s in single]),
            rtol=VECTOR_RTOL, atol=1e-10,
        )
    tau = np.array([0.0, 275.0, 400.0])
    np.testing.assert_allclose(
        summer_energy_gj_m2(orbits, 65.0, tau, samples=400),
        _loop(summer_energy_gj_m2, orbits, 65.0, tau, samples=400),
        rtol=VECTOR_RTOL,
    )


def test_caloric_threshold_splits_the_sampled_year_in_halves():
    # The threshold is found by a search over ranks; check its defining property on the
    # piecewise-linear interpolant directly, for many orbits and latitudes at once: the share
    # of time above it is one half (Milankovitch 1941's definition), unless more than half the
    # year is dark (threshold 0).
    orbits = solve(-np.linspace(0.0, 800000.0, 41))
    halves = caloric_half_years(orbits, LATITUDES, samples=730)
    # The same S0 as caloric_half_years's default (the package's CMIP6 piControl value).
    rows = metrics_module._sampled_rows(orbits, LATITUDES, CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
                                        730)
    for index, q, duration in rows:
        share = metrics_module._Segments(q, duration).share_above(
            halves.threshold_wm2.reshape(-1)[index])
        dark = halves.threshold_wm2.reshape(-1)[index] == 0.0
        np.testing.assert_allclose(share[~dark], 0.5, atol=1e-12)
        assert np.all(share[dark] <= 0.5)
