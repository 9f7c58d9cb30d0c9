"""The xarray API of the month conversion (bcgen.convert.api).

Truth comes from analytic integrals of a smooth synthetic annual cycle (two harmonics),
not from the code: monthly and daily inputs are its exact means over calendar months and
days, and the expected fixed-angle means are its exact means over the fixed-angle months
of bcgen.solar_calendar.months (the definition the issue asks the output to follow).
"""

from __future__ import annotations

import warnings

import cftime
import numpy as np
import pytest
import xarray as xr

from bcgen.convert.api import (
    ConversionError,
    to_fixed_angle_months,
    to_fixed_day_months,
)
from bcgen.convert.interpolation import METHODS
from bcgen.errors import InputFileError
from bcgen.orbit import solve
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.solar_calendar.months import fixed_angle_months

AMPLITUDES = (10.0, 3.0)  # K, harmonics 1 and 2
PHASES = (0.7, 1.9)
BASE = 280.0


# --- synthetic truth --------------------------------------------------------------------------
def antiderivative(t, period):
    t = np.asarray(t, dtype=float)
    return BASE * t + sum(a * period / (2 * np.pi * k) * np.sin(2 * np.pi * k * t / period + p)
                          for k, (a, p) in enumerate(zip(AMPLITUDES, PHASES, strict=True), 1))


def exact_mean(a, b, period=365.0):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return (antiderivative(b, period) - antiderivative(a, period)) / (b - a)


def max_slope(period=365.0):
    return sum(a * 2 * np.pi * k / period for k, a in enumerate(AMPLITUDES, 1))


def interpolation_bound(shift_fraction, period=365.0, h_days=31.0):
    """Bound on the error of a converted monthly mean (see test_monthly_path_matches_truth).

    The Killworth interpolant of a harmonic of amplitude A through adjusted values
    a_i = g·f(c_i), g = sinc(ωh/2)/(3/4 + cos(ωh)/4) (Killworth's weights on equal
    intervals of length h), errs by at most A·max(|g−1|, |g·cos(ωh/2)−1|) (at the nodes
    and half way between them). Its error has zero mean over each original month, so a
    month whose two ends moved by δ0 and δ1 errs by at most (|δ0|+|δ1|)/L' times that.
    h = 31 days is the longest spacing of month centres.
    """
    total = 0.0
    for k, a in enumerate(AMPLITUDES, 1):
        w = 2 * np.pi * k / period
        g = np.sinc(w * h_days / 2 / np.pi) / (0.75 + 0.25 * np.cos(w * h_days))
        total += a * max(abs(g - 1), abs(g * np.cos(w * h_days / 2) - 1))
    return shift_fraction * total


def month_edges(calendar: str, first_year: int, years: int) -> np.ndarray:
    cal = ModelCalendar(calendar)
    origin = cftime.datetime(first_year, 1, 1, calendar=cal.name)
    out = []
    for y in range(first_year, first_year + years):
        offset = (cftime.datetime(y, 1, 1, calendar=cal.name) - origin).days
        out.append(offset + cal.month_starts_days(y)[:12])
    end = (cftime.datetime(first_year + years, 1, 1, calendar=cal.name) - origin).days
    return np.append(np.concatenate(out), end)


def dates(calendar, first_year, days):
    return cftime.num2date(np.asarray(days, float), f"days since {first_year:04d}-01-01",
                           calendar=calendar, only_use_cftime_datetimes=True)


def make_dataset(edges, calendar="noleap", first_year=1, *, period=365.0, nlat=3, nlon=4,
                 dtype=np.float64, climatology=False):
    """Interval means of the synthetic cycle (× a spatial pattern) with CF time bounds."""
    means = exact_mean(edges[:-1], edges[1:], period)
    pattern = 1.0 + 0.1 * np.arange(nlat * nlon).reshape(nlat, nlon)
    data = (means[:, None, None] * pattern).astype(dtype)
    mid = dates(calendar, first_year, 0.5 * (edges[:-1] + edges[1:]))
    bnds = np.stack([dates(calendar, first_year, edges[:-1]),
                     dates(calendar, first_year, edges[1:])], axis=1)
    link = "climatology" if climatology else "bounds"
    bname = "climatology_bnds" if climatology else "time_bnds"
    ds = xr.Dataset(
        {
            "tas": (("time", "lat", "lon"), data, {"units": "K", "standard_name":
                                                   "air_temperature",
                                                   "cell_methods": "area: mean time: mean"}),
            bname: (("time", "bnds"), bnds),
            "area": (("lat", "lon"), np.ones((nlat, nlon)),
                     {"units": "m2", "long_name": "cell area"}),
        },
        coords={"time": ("time", mid, {"standard_name": "time", "axis": "T", link: bname}),
                "lat": ("lat", np.linspace(-45, 45, nlat), {"units": "degrees_north",
                                                            "standard_name": "latitude"}),
                "lon": ("lon", np.linspace(0, 270, nlon), {"units": "degrees_east",
                                                           "standard_name": "longitude"})},
        attrs={"title": "synthetic", "institution": "tests"},
    )
    return ds, pattern


def target_edges(orbit, calendar, first_year, years, reference=None):
    cal = ModelCalendar(calendar)
    origin = cftime.datetime(first_year, 1, 1, calendar=cal.name)
    starts, ends = [], []
    for y in range(first_year, first_year + years):
        offset = (cftime.datetime(y, 1, 1, calendar=cal.name) - origin).days
        table = fixed_angle_months(orbit, cal, reference=reference, year=y)
        starts.append(offset + table.start_day)
        ends.append(offset + table.end_day)
    return np.concatenate(starts), np.concatenate(ends)


def bounds_days(out, first_year=1):
    b = out["time_bnds"].values
    origin = cftime.datetime(first_year, 1, 1, calendar=b[0, 0].calendar)
    return np.vectorize(lambda d: (d - origin).total_seconds() / 86400.0)(b)


ORBIT_6KA = solve(-6000.0)


# --- identity, truth, paths -----------------------------------------------------------------
def test_identity_when_orbit_is_the_reference():
    edges = month_edges("noleap", 1, 2)
    ds, _ = make_dataset(edges)
    out = to_fixed_angle_months(ds, solve(0.0), reference=solve(0.0))
    np.testing.assert_allclose(out["tas"].values, ds["tas"].values, rtol=1e-6)
    np.testing.assert_allclose(bounds_days(out), np.stack([edges[:-1], edges[1:]], 1),
                               atol=1e-6)


@pytest.mark.parametrize("epoch", [-6000.0, -127000.0])
def test_monthly_path_matches_truth(epoch):
    orbit = solve(epoch)
    years = 3
    edges = month_edges("noleap", 1, years)
    ds, pattern = make_dataset(edges)
    out = to_fixed_angle_months(ds, orbit)
    start, end = target_edges(orbit, "noleap", 1, years)
    # a month reaching beyond the data is bounded by the data (its covered part)
    np.testing.assert_allclose(bounds_days(out), np.clip(np.stack([start, end], 1), 0,
                                                         edges[-1]), atol=1e-5)
    inside = (start >= 0) & (end <= edges[-1])
    truth = exact_mean(start, end)[inside]
    got = out["tas"].values[inside, 0, 0]
    shift = np.abs(start - edges[:-1]) + np.abs(end - edges[1:])
    tol = interpolation_bound(np.max(shift / (end - start)))
    assert np.max(np.abs(got - truth)) < tol
    # the conversion is not a no-op: fixed-day means are further off than the tolerance
    assert np.max(np.abs(ds["tas"].values[inside, 0, 0] - truth)) > 3 * tol
    # the conversion is linear: the spatial pattern is kept
    np.testing.assert_allclose(out["tas"].values,
                               out["tas"].values[:, :1, :1] * pattern / pattern[0, 0], rtol=1e-12)


def test_daily_path_matches_truth_and_monthly_path():
    years = 2
    days = np.arange(365 * years + 1.0)
    daily, _ = make_dataset(days)
    monthly, _ = make_dataset(month_edges("noleap", 1, years))
    out_d = to_fixed_angle_months(daily, ORBIT_6KA)
    out_m = to_fixed_angle_months(monthly, ORBIT_6KA)
    assert out_d.attrs["month_conversion_source_time_axis"].startswith("daily")
    start, end = target_edges(ORBIT_6KA, "noleap", 1, years)
    inside = (start >= 0) & (end <= days[-1])
    truth = exact_mean(start, end)[inside]
    # Daily means averaged exactly: only the two partial days at the month ends differ from
    # the truth, by at most max|f'| x 1 day / month length.
    tol_daily = max_slope() * 1.0 / np.min(end - start)
    assert np.max(np.abs(out_d["tas"].values[inside, 0, 0] - truth)) < tol_daily
    shift = np.abs(start - month_edges("noleap", 1, years)[:-1]) + np.abs(
        end - month_edges("noleap", 1, years)[1:])
    tol_monthly = interpolation_bound(np.max(shift / (end - start)))
    diff = np.abs(out_d["tas"].values - out_m["tas"].values)[inside, 0, 0]
    assert np.max(diff) < tol_daily + tol_monthly


def test_sub_daily_input_is_aggregated_like_daily():
    steps = np.arange(365 * 4 + 1) / 4.0  # 6-hourly means of one year (a climatology)
    six, _ = make_dataset(steps, nlat=1, nlon=2)
    out = to_fixed_angle_months(six, ORBIT_6KA)
    start, end = target_edges(ORBIT_6KA, "noleap", 1, 1)
    truth = exact_mean(start, end)
    assert np.max(np.abs(out["tas"].values[:, 0, 0] - truth)) < max_slope() * 0.25 / 27


def test_climatology_conserves_the_annual_mean_and_stays_a_climatology():
    edges = month_edges("noleap", 1, 1)
    ds, _ = make_dataset(edges, climatology=True)
    for method in ("killworth1996", "epstein1991"):
        out = to_fixed_angle_months(ds, solve(-127000.0), method=method)
        length = np.diff(bounds_days(out.rename(climatology_bnds="time_bnds")), axis=1)[:, 0]
        assert length.sum() == pytest.approx(365.0, abs=1e-6)
        annual_in = (np.diff(edges)[:, None, None] * ds["tas"].values).sum(0) / 365
        annual_out = (length[:, None, None] * out["tas"].values).sum(0) / 365
        np.testing.assert_allclose(annual_out, annual_in, rtol=1e-6)
        assert out["time"].attrs["climatology"] == "climatology_bnds"
        assert "model_year" not in out.coords
        assert out.attrs["month_conversion_method"] == method
        assert "cyclic" in out.attrs["month_conversion_end_rule"]


def test_climatology_output_is_cf_compliant(tmp_path):
    from cf_checker import assert_cf_compliant

    from bcgen.convert.io import write_output

    ds, _ = make_dataset(month_edges("noleap", 1, 1), climatology=True)
    # a 30-year climatology (CF §7.4): bounds from the first year's month start to the
    # last year's month end
    ends = dates("noleap", 1, month_edges("noleap", 1, 1)[1:] + 29 * 365)
    ds["climatology_bnds"].values[:, 1] = ends
    ds["tas"].attrs["cell_methods"] = "time: mean within years time: mean over years"
    ds["tas"].attrs["units_metadata"] = "temperature: on_scale"
    ds.attrs["Conventions"] = "CF-1.11"
    out = to_fixed_angle_months(ds, solve(-127000.0))
    assert out["tas"].attrs["cell_methods"] == "time: mean within years time: mean over years"
    first, last = out["climatology_bnds"].values[0]
    assert (first.year, last.year) == (0, 30)  # January starts in late December
    path = write_output(out, tmp_path / "clim.nc")
    assert_cf_compliant(path)


def test_single_year_without_climatology_attribute_is_cyclic():
    ds, _ = make_dataset(month_edges("noleap", 1, 1))
    out = to_fixed_angle_months(ds, ORBIT_6KA)
    assert out.sizes["time"] == 12
    assert "cyclic" in out.attrs["month_conversion_end_rule"]
    series = to_fixed_angle_months(ds, ORBIT_6KA, cyclic=False)
    assert "extended" in series.attrs["month_conversion_end_rule"]


@pytest.mark.parametrize("calendar", ["360_day", "proleptic_gregorian"])
def test_other_calendars_follow_the_month_definition(calendar):
    years, first = 3, 1999  # 2000 is a leap year in proleptic_gregorian
    edges = month_edges(calendar, first, years)
    period = 360.0 if calendar == "360_day" else 365.2425
    ds, _ = make_dataset(edges, calendar, first, period=period)
    out = to_fixed_angle_months(ds, ORBIT_6KA)
    start, end = target_edges(ORBIT_6KA, calendar, first, years)
    # per-year anchors: the boundaries are those of bcgen months, year by year
    np.testing.assert_allclose(bounds_days(out, first)[:, 0], np.maximum(start, 0), atol=1e-5)
    inside = (start >= 0) & (end <= edges[-1])
    truth = exact_mean(start, end, period)[inside]
    shift = np.abs(start - edges[:-1]) + np.abs(end - edges[1:])
    tol = interpolation_bound(np.max(shift / (end - start)), period)
    assert np.max(np.abs(out["tas"].values[inside, 0, 0] - truth)) < tol
    assert out.attrs["month_conversion_calendar"] == ModelCalendar(calendar).name


def test_inverse_direction_round_trip():
    edges = month_edges("noleap", 1, 3)
    ds, _ = make_dataset(edges)
    there = to_fixed_angle_months(ds, ORBIT_6KA)
    back = to_fixed_day_months(there)
    assert back.sizes["time"] == 36
    np.testing.assert_allclose(bounds_days(back), np.stack([edges[:-1], edges[1:]], 1),
                               atol=1e-5)
    inner = slice(1, -1)  # the end months are averaged over their covered part
    shift = np.abs(bounds_days(there)[:, 0] - edges[:-1]).max() * 2
    tol = 2 * interpolation_bound(shift / 28.0)
    err = np.abs(back["tas"].values - ds["tas"].values)[inner]
    assert err.max() < tol
    assert back.attrs["month_conversion_months"].startswith("fixed-day")
    assert "source_month_conversion_method" in back.attrs


# --- metadata -------------------------------------------------------------------------------
def test_attributes_variables_and_metadata():
    ds, _ = make_dataset(month_edges("noleap", 1, 2))
    ds["tas"].attrs["cell_methods"] = "area: mean"
    out = to_fixed_angle_months(ds, ORBIT_6KA, anchor="03-20 00:00")
    assert out.attrs["title"] == "synthetic" and out.attrs["institution"] == "tests"
    assert out["tas"].attrs["units"] == "K"
    assert out["tas"].attrs["standard_name"] == "air_temperature"
    assert out["tas"].attrs["cell_methods"] == "area: mean time: mean"
    xr.testing.assert_identical(out["area"], ds["area"])  # no time axis: copied
    assert out["lat"].attrs == ds["lat"].attrs
    a = out.attrs
    assert a["month_conversion_method"] == "killworth1996"
    assert "Killworth" in a["month_conversion_method_reference"]
    assert "1996" in a["month_conversion_method_reference"]
    assert a["orbit_eccentricity"] == pytest.approx(float(ORBIT_6KA.eccentricity))
    assert a["orbit_perihelion_longitude_deg"] == pytest.approx(
        float(ORBIT_6KA.perihelion_longitude_deg))
    assert "March equinox" in a["orbit_perihelion_longitude_convention"]
    assert a["orbit_sun_longitude_at_perihelion_deg"] == pytest.approx(
        (float(ORBIT_6KA.perihelion_longitude_deg) + 180) % 360)
    assert a["reference_orbit_years_from_1950"] == 0.0
    assert "03-20 00:00" in a["month_conversion_anchor"]
    assert "extended" in a["month_conversion_end_rule"]
    assert a["history"].startswith("bcgen convert")
    assert out["time"].attrs["bounds"] == "time_bnds"
    assert list(out["month"].values[:12]) == list(range(1, 13))
    assert list(np.unique(out["model_year"].values)) == [1, 2]


# --- missing data, types, dask ----------------------------------------------------------------
def test_missing_values_and_masks():
    ds, _ = make_dataset(month_edges("noleap", 1, 3))
    tas = ds["tas"].values.copy()
    tas[:, 0, 0] = np.nan  # a masked point stays masked
    tas[14, 1, 1] = np.nan  # one missing month in year 2
    ds["tas"].values = tas
    out = to_fixed_angle_months(ds, ORBIT_6KA)["tas"].values
    assert np.isnan(out[:, 0, 0]).all()
    lost = np.isnan(out[:, 1, 1])
    assert 1 <= lost.sum() <= 2 and np.all(np.flatnonzero(lost) >= 13)  # months near the gap
    others = np.ones(out.shape[1:], dtype=bool)
    others[0, 0] = others[1, 1] = False
    assert np.isfinite(out[:, others]).all()
    # the months kept at that point are still close to the truth (runs converted alone)
    start, end = target_edges(ORBIT_6KA, "noleap", 1, 3)
    ok = ~lost & (start >= 0) & (end <= 365 * 3)
    pattern = 1.0 + 0.1 * 5  # point (1, 1) of make_dataset's pattern
    edges = month_edges("noleap", 1, 3)
    shift = np.abs(start - edges[:-1]) + np.abs(end - edges[1:])
    tol = pattern * interpolation_bound(np.max(shift / (end - start)))
    assert np.max(np.abs(out[ok, 1, 1] - pattern * exact_mean(start, end)[ok])) < tol


def test_epstein_loses_the_whole_year_of_a_point_with_one_missing_month():
    # Documented in bcgen.convert.interpolation: every Epstein (1991) coefficient depends on
    # all twelve means, so one missing month leaves nothing to fit at that point.
    ds, _ = make_dataset(month_edges("noleap", 1, 1), climatology=True)
    tas = ds["tas"].values.copy()
    tas[4, 1, 1] = np.nan
    ds["tas"].values = tas
    epstein = to_fixed_angle_months(ds, ORBIT_6KA, method="epstein1991")["tas"].values
    assert np.isnan(epstein[:, 1, 1]).all()
    others = np.ones(epstein.shape[1:], dtype=bool)
    others[1, 1] = False
    assert np.isfinite(epstein[:, others]).all()
    killworth = to_fixed_angle_months(ds, ORBIT_6KA)["tas"].values
    assert 10 <= np.isfinite(killworth[:, 1, 1]).sum() < 12  # only the months near the gap
    assert "whole year" in METHODS["epstein1991"][0]


def test_packed_and_integer_variables(tmp_path):
    ds, _ = make_dataset(month_edges("noleap", 1, 2))
    ds["count"] = (("time", "lat", "lon"), np.arange(24 * 12, dtype=np.int32).reshape(24, 3, 4))
    ds["tas"].attrs["valid_range"] = np.array([-30000, 30000], dtype=np.int16)
    path = tmp_path / "packed.nc"
    enc = {"tas": {"dtype": "int16", "scale_factor": 0.01, "add_offset": 280.0,
                   "_FillValue": np.int16(-32767)},
           "time": {"units": "days since 0001-01-01", "calendar": "noleap"},
           "time_bnds": {"units": "days since 0001-01-01", "calendar": "noleap"}}
    ds.to_netcdf(path, encoding=enc)
    with xr.open_dataset(path, decode_times=xr.coders.CFDatetimeCoder(use_cftime=True)) as f:
        decoded = f.load()
    out = to_fixed_angle_months(decoded, ORBIT_6KA)
    assert out["tas"].dtype == np.float32  # int16 packing: float32 is enough
    assert out["count"].dtype == np.float64  # 32-bit integers: float64
    assert "scale_factor" not in out["tas"].encoding and "add_offset" not in out["tas"].encoding
    # the values are the conversion of the unpacked values
    ref = to_fixed_angle_months(decoded.assign(tas=decoded["tas"].astype(np.float64)),
                                ORBIT_6KA)
    np.testing.assert_allclose(out["tas"].values, ref["tas"].values, rtol=1e-6)
    # monthly means are interpolated, which may overshoot: no valid range is claimed
    assert "valid_range" not in out["tas"].attrs


def test_dask_and_numpy_give_identical_results():
    ds, _ = make_dataset(month_edges("noleap", 1, 4), nlat=5, nlon=6, dtype=np.float32)
    tas = ds["tas"].values.copy()
    tas[:, 0, 0] = np.nan
    tas[7, 2, 2] = np.nan
    ds["tas"].values = tas
    eager = to_fixed_angle_months(ds, ORBIT_6KA)
    lazy = to_fixed_angle_months(ds.chunk({"lat": 2, "lon": 3}), ORBIT_6KA)
    assert lazy["tas"].chunks is not None
    np.testing.assert_array_equal(lazy["tas"].values, eager["tas"].values)
    # chunked along time too: each task reads the time pieces of its block in turn
    lazy_t = to_fixed_angle_months(ds.chunk({"time": 12, "lat": 1}), ORBIT_6KA)
    np.testing.assert_array_equal(lazy_t["tas"].values, eager["tas"].values)
    # pieces of unequal length, time not the first dimension
    moved = ds.transpose("lat", "time", "lon", ...)
    lazy_m = to_fixed_angle_months(moved.chunk({"time": (5, 30, 13), "lat": 2}), ORBIT_6KA)
    eager_m = to_fixed_angle_months(moved, ORBIT_6KA)
    np.testing.assert_array_equal(lazy_m["tas"].values, eager_m["tas"].values)
    np.testing.assert_array_equal(eager_m["tas"].transpose("time", "lat", "lon").values,
                                  eager["tas"].values)


def test_runs_on_a_distributed_cluster():
    distributed = pytest.importorskip("distributed")
    ds, _ = make_dataset(month_edges("noleap", 1, 2), nlat=4, nlon=4, dtype=np.float32)
    eager = to_fixed_angle_months(ds, ORBIT_6KA)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the cluster's own port and resource notices
        with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                      dashboard_address=None) as cluster, \
                distributed.Client(cluster) as client:
            lazy = to_fixed_angle_months(ds.chunk({"lat": 2}), ORBIT_6KA)
            result = client.compute(lazy["tas"]).result()
    np.testing.assert_array_equal(result.values, eager["tas"].values)


# --- refusals -------------------------------------------------------------------------------
def test_refusals():
    ds, _ = make_dataset(month_edges("noleap", 1, 2))
    with pytest.raises(ConversionError, match="is 'noleap' but calendar '360_day' was given"):
        to_fixed_angle_months(ds, ORBIT_6KA, calendar="360_day")
    with pytest.raises(ConversionError, match="climatologies"):
        to_fixed_angle_months(ds, ORBIT_6KA, method="epstein1991")
    with pytest.raises(InputFileError, match="no time axis"):
        to_fixed_angle_months(ds.drop_vars(["time", "time_bnds"]), ORBIT_6KA)
    gappy = ds.isel(time=[0, 1, 3, 4])
    with pytest.raises(InputFileError, match="not contiguous"):
        to_fixed_angle_months(gappy, ORBIT_6KA)
    pentads, _ = make_dataset(np.arange(0, 366, 5.0))
    with pytest.raises(InputFileError, match="neither calendar months"):
        to_fixed_angle_months(pentads, ORBIT_6KA)


# --- months at the ends of a series ------------------------------------------------------------
@pytest.mark.parametrize("epoch", [-6000.0, -127000.0])
def test_months_reaching_beyond_a_series_are_bounded_by_the_data(epoch):
    # At 6 ka and 127 ka the first fixed-angle January starts days before 1 January of
    # the first year: its value is the mean of the part the data cover, so its time
    # bounds must be that part (CF 1.11 §7.1: bounds delimit the cell the value stands
    # for). Analytic check: the integral of a piecewise-constant daily series over the
    # span of the output is the sum of value × bound length over its months.
    edges = np.arange(0.0, 731.0)
    ds, pattern = make_dataset(edges)
    out = to_fixed_angle_months(ds, solve(epoch))
    b = bounds_days(out)
    assert b[0, 0] == 0.0 and b[-1, 1] <= 730.0
    np.testing.assert_allclose(b[1:, 0], b[:-1, 1], rtol=0, atol=1e-6)  # still contiguous
    daily = exact_mean(edges[:-1], edges[1:])
    cum = np.concatenate([[0.0], np.cumsum(daily)])
    integral = np.interp(b[-1, 1], edges, cum) - np.interp(b[0, 0], edges, cum)
    lengths = b[:, 1] - b[:, 0]
    got = float(np.sum(out["tas"].values[:, 0, 0] / pattern[0, 0] * lengths))
    assert got == pytest.approx(integral, rel=1e-12)
    # and the file converts back: the shortened first month is a fixed-angle month too
    back = to_fixed_day_months(out)
    assert bounds_days(back)[0, 0] == 0.0


def test_interpolated_values_outside_the_valid_range_are_not_masked_by_readers(tmp_path):
    # Sea-ice concentration with a CF valid_range [0, 100] % (CF 1.11 §2.5.1: readers
    # treat values outside it as missing; netCDF4-python masks them by default) next to
    # ice-free months: a mean-preserving interpolation dips below 0 there (the known
    # limitation of linear mean-preserving schemes, Killworth 1996). No converted month
    # may vanish when the file is read back, and actual_range (stale) is not kept.
    netCDF4 = pytest.importorskip("netCDF4")
    ds, _ = make_dataset(month_edges("noleap", 1, 2))
    cycle = np.tile([100, 100, 100, 90, 40, 0, 0, 0, 0, 20, 80, 100.0], 2)
    ds["tas"] = (ds["tas"].dims, np.broadcast_to(cycle[:, None, None], ds["tas"].shape).copy(),
                 {"units": "%", "valid_range": np.array([0.0, 100.0]),
                  "actual_range": np.array([0.0, 100.0])})
    out = to_fixed_angle_months(ds, solve(-127000.0))
    assert float(out["tas"].min()) < 0.0  # the overshoot this test is about
    assert "actual_range" not in out["tas"].attrs
    path = tmp_path / "siconc_fa.nc"
    from bcgen.convert.io import write_output

    write_output(out, path)
    with netCDF4.Dataset(path) as nc:
        assert np.ma.count_masked(nc["tas"][:]) == 0


def test_daily_means_keep_their_valid_range():
    edges = np.arange(0.0, 366.0)
    ds, _ = make_dataset(edges)
    ds["tas"].attrs["valid_range"] = np.array([200.0, 350.0])
    out = to_fixed_angle_months(ds, ORBIT_6KA)
    # weighted means of values inside a range stay inside it (analytic)
    np.testing.assert_array_equal(out["tas"].attrs["valid_range"], [200.0, 350.0])
