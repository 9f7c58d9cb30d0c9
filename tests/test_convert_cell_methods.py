"""What the conversion does with each time statistic a variable's cell_methods names.

Sources: CF Conventions 1.11 §7.3 (cell_methods: ``time: mean``, ``sum``, ``maximum``,
``minimum``, ``point``, ``median``) and §7.4 (``within days`` / ``over days``, ``within
years`` / ``over years``); the CMIP6 monthly ``tasmax`` carries ``area: mean time:
maximum within days time: mean over days`` (CMIP6 Amon MIP table, from memory).
Expected values are analytic: the integral of a piecewise-constant function (daily
input) is piecewise linear, and a mean-preserving linear interpolation reproduces a
linear function exactly (Killworth 1996, J. Phys. Oceanogr. 26, 136-143: the adjusted
mid-month values of a linear function are its values at the month centres).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from test_convert_api import ORBIT_6KA, bounds_days, make_dataset, month_edges

from bcgen.convert.api import ConversionError, to_fixed_angle_months
from bcgen.orbit import solve

ORBIT_127KA = solve(-127000.0)
CMIP_TASMAX = "area: mean time: maximum within days time: mean over days"


def with_values(ds, values, cell_methods, units="K"):
    """``ds`` with tas(time, lat, lon) = values(time) × 1 everywhere, and its cell_methods."""
    data = np.broadcast_to(np.asarray(values, float)[:, None, None], ds["tas"].shape).copy()
    out = ds.copy()
    out["tas"] = (ds["tas"].dims, data, {"units": units, "cell_methods": cell_methods})
    return out


def integral_of_steps(edges, values, a, b):
    """Exact integral over [a, b] of the function equal to values[i] on [edges[i], edges[i+1]]."""
    cum = np.concatenate([[0.0], np.cumsum(values * np.diff(edges))])
    return np.interp(b, edges, cum) - np.interp(a, edges, cum)


# --- means of daily extremes: converted, cell_methods kept -----------------------------------
def test_monthly_mean_of_daily_maxima_is_converted_and_keeps_its_cell_methods():
    ds, _ = make_dataset(month_edges("noleap", 1, 2))
    plain = to_fixed_angle_months(ds, ORBIT_6KA)
    ds["tas"].attrs["cell_methods"] = CMIP_TASMAX
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a mean over days: nothing to warn about
        out = to_fixed_angle_months(ds, ORBIT_6KA)
    assert out["tas"].attrs["cell_methods"] == CMIP_TASMAX
    np.testing.assert_array_equal(out["tas"].values, plain["tas"].values)


def test_daily_maxima_are_averaged_into_a_mean_over_days():
    edges = np.arange(0.0, 731.0)
    ds, _ = make_dataset(edges)
    daily_max = 290.0 + 5.0 * np.sin(edges[:-1] / 17.0)
    ds = with_values(ds, daily_max, "area: mean time: maximum")
    out = to_fixed_angle_months(ds, ORBIT_127KA)
    # CF §7.4: the mean over each month of the daily maxima
    assert out["tas"].attrs["cell_methods"] == CMIP_TASMAX
    b = bounds_days(out)
    a0, a1 = np.clip(b[:, 0], 0, 730), np.clip(b[:, 1], 0, 730)  # covered part (documented)
    expected = integral_of_steps(edges, daily_max, a0, a1) / (a1 - a0)
    np.testing.assert_allclose(out["tas"].values[:, 1, 2], expected, rtol=0, atol=1e-9)


def test_sub_daily_maxima_are_refused():
    edges = np.arange(0.0, 365.25, 0.25)  # 6-hourly maxima: no CF name for their monthly mean
    ds, _ = make_dataset(edges)
    ds["tas"].attrs["cell_methods"] = "time: maximum"
    with pytest.raises(ConversionError, match=r"variable 'tas' has cell_methods "
                       r"'time: maximum': each value is a maximum, not a mean or a sum"):
        to_fixed_angle_months(ds, ORBIT_6KA)


# --- statistics that re-averaging would falsify: refused --------------------------------------
@pytest.mark.parametrize("cell_methods, what", [
    ("time: maximum", "a maximum"),
    ("area: mean time: minimum", "a minimum"),
    ("time: point", r"an instantaneous value \(time: point\)"),
    ("time: median", "a median"),
    ("area: time: maximum", "a maximum"),
    ("time: maximum within years time: mean over years", "a maximum"),
])
def test_monthly_statistics_other_than_means_and_sums_are_refused(cell_methods, what):
    ds, _ = make_dataset(month_edges("noleap", 1, 2))
    ds["tas"].attrs["cell_methods"] = cell_methods
    with pytest.raises(ConversionError, match=rf"^input: variable 'tas' has cell_methods "
                       rf"'{cell_methods}': each value is {what}, not a mean or a sum, so it "
                       r"cannot be re-averaged over other months; leave the variable out"):
        to_fixed_angle_months(ds, ORBIT_6KA)


def test_a_climatology_that_is_not_a_mean_over_years_is_refused():
    ds, _ = make_dataset(month_edges("noleap", 1, 1), climatology=True)
    ds["tas"].attrs["cell_methods"] = "time: mean within years time: maximum over years"
    with pytest.raises(ConversionError, match="the statistic across years is a maximum"):
        to_fixed_angle_months(ds, ORBIT_6KA)


# --- sums: totals over the new months ----------------------------------------------------------
RATE = (2.0, 1e-3)  # rate(t) = 2 + 0.001 t per day (an accumulated amount's rate)


def total(a, b):
    """Exact integral of RATE over [a, b] (analytic)."""
    return RATE[0] * (b - a) + RATE[1] * (b * b - a * a) / 2


@pytest.mark.parametrize("orbit", [ORBIT_6KA, ORBIT_127KA])
def test_monthly_sums_become_sums_over_the_new_months(orbit):
    edges = month_edges("noleap", 1, 3)
    ds, _ = make_dataset(edges)
    ds = with_values(ds, total(edges[:-1], edges[1:]), "area: mean time: sum", units="kg m-2")
    out = to_fixed_angle_months(ds, orbit)
    assert out["tas"].attrs["cell_methods"] == "area: mean time: sum"
    assert out["tas"].attrs["units"] == "kg m-2"
    b = bounds_days(out)
    inside = (b[:, 0] >= 0) & (b[:, 1] <= edges[-1])
    assert inside.sum() >= 34
    np.testing.assert_allclose(out["tas"].values[inside, 0, 0],
                               total(b[inside, 0], b[inside, 1]), rtol=1e-12)


def test_daily_sums_are_summed_exactly_over_the_new_months():
    edges = np.arange(0.0, 731.0)
    rng = np.random.default_rng(7)
    daily = rng.gamma(0.5, 4.0, edges.size - 1)  # daily precipitation amounts, kg m-2
    ds, _ = make_dataset(edges)
    ds = with_values(ds, daily, "time: sum", units="kg m-2")
    out = to_fixed_angle_months(ds, ORBIT_127KA)
    b = bounds_days(out)
    inside = (b[:, 0] >= 0) & (b[:, 1] <= 730)
    expected = integral_of_steps(edges, daily, b[inside, 0], b[inside, 1])
    np.testing.assert_allclose(out["tas"].values[inside, 2, 3], expected, rtol=1e-12)
    assert out["tas"].attrs["cell_methods"] == "time: sum"


def test_a_sum_climatology_keeps_the_annual_total():
    edges = month_edges("noleap", 1, 1)
    ds, _ = make_dataset(edges, climatology=True)
    monthly = total(edges[:-1], edges[1:]) * (1 + 0.3 * np.cos(np.arange(12)))
    ds = with_values(ds, monthly, "time: sum within years time: mean over years",
                     units="kg m-2")
    out = to_fixed_angle_months(ds, ORBIT_127KA)
    # The new months tile one cyclic year, so their totals add up to the year's total
    # (mean preservation of the interpolation, Killworth 1996).
    assert float(out["tas"].values[:, 0, 0].sum()) == pytest.approx(monthly.sum(), rel=1e-12)
    assert not np.allclose(out["tas"].values[:, 0, 0], monthly, rtol=1e-3)
