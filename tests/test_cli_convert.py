"""The ``bcgen convert`` command: files in, CF-compliant file out, one-line errors.

External references: the CF Conventions through the IOOS compliance-checker
(tests/cf_checker.py); ``bcgen months`` for the month boundaries (the definition the
conversion must follow); analytic means of a smooth synthetic cycle for the values.
"""

from __future__ import annotations

import json
import warnings

import cftime
import netCDF4
import numpy as np
import pytest
import xarray as xr
from cf_checker import assert_cf_compliant
from published_tables import PMIP4

from bcgen.cli import main
from bcgen.solar_calendar.calendars import ModelCalendar

DECODE = xr.coders.CFDatetimeCoder(use_cftime=True)


def cycle_mean(a, b, period=365.0):
    """Exact mean of 280 + 10 cos(2πt/P + 0.7) over [a, b] (analytic)."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    w = 2 * np.pi / period
    return 280.0 + 10.0 * (np.sin(w * b + 0.7) - np.sin(w * a + 0.7)) / (w * (b - a))


def write_series(path, edges, *, calendar="noleap", first_year=1, origin_year=1,
                 bounds=True, extra_attrs=None, dtype="f4"):
    """A CF file of interval means with a (time, lat, lon) variable, written with netCDF4."""
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("time", len(edges) - 1)
        nc.createDimension("lat", 2)
        nc.createDimension("lon", 3)
        nc.createDimension("bnds", 2)
        units = f"days since {origin_year:04d}-01-01 00:00:00"
        shift = (cftime.datetime(first_year, 1, 1, calendar=calendar)
                 - cftime.datetime(origin_year, 1, 1, calendar=calendar)).days
        t = nc.createVariable("time", "f8", ("time",))
        t.units, t.calendar, t.standard_name, t.axis = units, calendar, "time", "T"
        t[:] = shift + 0.5 * (edges[:-1] + edges[1:])
        if bounds:
            t.bounds = "time_bnds"
            tb = nc.createVariable("time_bnds", "f8", ("time", "bnds"))
            tb[:, 0], tb[:, 1] = shift + edges[:-1], shift + edges[1:]
        for name, values, u, sn in (("lat", [-30.0, 30.0], "degrees_north", "latitude"),
                                    ("lon", [0.0, 120.0, 240.0], "degrees_east", "longitude")):
            v = nc.createVariable(name, "f8", (name,))
            v.units, v.standard_name = u, sn
            v[:] = values
        v = nc.createVariable("tas", dtype, ("time", "lat", "lon"), fill_value=1e20)
        v.units, v.standard_name, v.cell_methods = "K", "air_temperature", "time: mean"
        v.units_metadata = "temperature: on_scale"
        period = 360.0 if calendar == "360_day" else 365.0
        v[:] = np.repeat(cycle_mean(edges[:-1], edges[1:], period), 6).reshape(-1, 2, 3)
        nc.Conventions, nc.title = "CF-1.11", "synthetic model output"
        for key, value in (extra_attrs or {}).items():
            setattr(nc, key, value)


def month_edges(calendar="noleap", year=1, years=1):
    cal = ModelCalendar(calendar)
    out = [cal.month_starts_days(y)[:12] + 365 * (y - year) for y in range(year, year + years)]
    return np.append(np.concatenate(out), cal.year_length_days(year) * years)


@pytest.fixture
def two_files(tmp_path):
    edges = month_edges(years=2)
    a, b = tmp_path / "a.nc", tmp_path / "b.nc"
    write_series(a, edges[:13])
    write_series(b, edges[12:] - 365.0, first_year=2)
    return a, b


def run(args, capsys):
    status = main(args)
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def bounds_days(path):
    with xr.open_dataset(path, decode_times=False) as ds:
        return ds["time_bnds"].values, ds["time"].attrs["units"]


# --- the conversion ---------------------------------------------------------------------------
def test_multi_file_series_is_converted_and_cf_compliant(two_files, tmp_path, capsys):
    out = tmp_path / "out.nc"
    # files given out of order: they are sorted by time
    status, stdout, stderr = run(["convert", str(two_files[1]), str(two_files[0]), "-o", str(out),
                                  "--epoch", "6ka"], capsys)
    assert status == 0, stderr
    assert "wrote" in stdout and "24 fixed-angle months" in stdout
    assert stderr == ""  # no progress bar when stderr is not a terminal
    warnings_left = assert_cf_compliant(out)
    assert not [w for w in warnings_left if w.startswith("error")]
    with xr.open_dataset(out, decode_times=DECODE) as ds:
        assert ds["tas"].dtype == np.float32
        assert ds["tas"].attrs["cell_methods"] == "time: mean"
        assert ds.attrs["title"] == "synthetic model output"
        assert ds.attrs["month_conversion_method"] == "killworth1996"
        assert ds.attrs["orbit_years_from_1950"] == -6000.0
        assert ds["time"].encoding["calendar"] == "noleap"


def test_month_boundaries_agree_with_bcgen_months(two_files, tmp_path, capsys):
    out = tmp_path / "out.nc"
    assert main(["convert", str(two_files[0]), str(two_files[1]), "-o", str(out),
                 "--epoch", "6ka"]) == 0
    capsys.readouterr()
    status, stdout, _ = run(["months", "6ka", "--format", "json"], capsys)
    assert status == 0
    months = json.loads(stdout)
    start = np.array([m["start_day"] for m in months])
    length = np.array([m["length_days"] for m in months])
    bnds, units = bounds_days(out)
    assert units.startswith("days since 0001-01-01")
    ends = start + length
    for year in (0, 1):  # noleap: every model year has the same boundaries
        # (the first January, which starts before the data, is bounded by the data)
        np.testing.assert_allclose(bnds[12 * year:12 * year + 12, 0],
                                   np.maximum(start + 365 * year, 0), atol=1e-6)
        np.testing.assert_allclose(bnds[12 * year:12 * year + 12, 1], ends + 365 * year,
                                   atol=1e-6)


def test_values_follow_the_truth(tmp_path, capsys):
    src, out = tmp_path / "clim.nc", tmp_path / "out.nc"
    write_series(src, month_edges(), dtype="f8")
    assert main(["convert", str(src), "-o", str(out), "--epoch", "127ka"]) == 0
    bnds, _ = bounds_days(out)
    with xr.open_dataset(out) as ds:
        got = ds["tas"].values[:, 0, 0]
    truth = cycle_mean(bnds[:, 0], bnds[:, 1])
    # Tolerance: (shift of the month ends / month length) x the Killworth interpolant's
    # pointwise error for one harmonic of 10 K with h = 31 d (about 0.24 K; derivation in
    # tests/test_convert_api.py::interpolation_bound); shifts reach ~25 d at 127 ka.
    assert np.max(np.abs(got - truth)) < 0.24
    assert np.max(np.abs(got - truth)) < 0.2 * np.max(np.abs(truth - cycle_mean(
        month_edges()[:-1], month_edges()[1:])))


def test_explicit_elements_and_conventions_agree(tmp_path, capsys):
    src = tmp_path / "clim.nc"
    write_series(src, month_edges())
    a, b = tmp_path / "a.nc", tmp_path / "b.nc"
    # PMIP4 midHolocene orbit (Otto-Bliesner et al. 2017, Table 1; tests/published_tables.py)
    mh = PMIP4["midHolocene"]
    varpi = mh.perihelion_minus_180_deg
    sun = f"{float(varpi) + 180:.2f}"  # the Sun's longitude at perihelion, ϖ + 180°
    common = ["--eccentricity", mh.eccentricity, "--obliquity-deg", mh.obliquity_deg]
    assert main(["convert", str(src), "-o", str(a), *common, "--perihelion-deg", varpi,
                 "--perihelion-convention", "perihelion_longitude"]) == 0
    # the same orbit stated as the Sun's longitude at perihelion (ϖ + 180°)
    assert main(["convert", str(src), "-o", str(b), *common, "--perihelion-deg", sun,
                 "--perihelion-convention", "sun_longitude_at_perihelion"]) == 0
    with xr.open_dataset(a) as x, xr.open_dataset(b) as y:
        np.testing.assert_array_equal(x["tas"].values, y["tas"].values)
        assert x.attrs["orbit_perihelion_longitude_deg"] == pytest.approx(float(varpi))
        assert y.attrs["orbit_sun_longitude_at_perihelion_deg"] == pytest.approx(float(sun))


def test_spec_gives_orbit_anchor_and_reference(tmp_path, capsys):
    spec = tmp_path / "exp.yaml"
    spec.write_text("experiment: {name: t}\nepoch: 6ka\nproducts: [orbit]\n"
                    "calendar: {name: noleap, date: \"03-20 00:00\"}\n"
                    "insolation: {reference_epoch: 1850CE}\n")
    src, out = tmp_path / "clim.nc", tmp_path / "out.nc"
    write_series(src, month_edges())
    assert main(["convert", str(src), "-o", str(out), "--spec", str(spec)]) == 0
    with xr.open_dataset(out) as ds:
        assert ds.attrs["orbit_years_from_1950"] == -6000.0
        assert ds.attrs["reference_orbit_years_from_1950"] == -100.0
        assert "03-20 00:00" in ds.attrs["month_conversion_anchor"]
    wrong = tmp_path / "wrong.yaml"
    wrong.write_text("experiment: {name: t}\nepoch: 6ka\nproducts: [orbit]\n"
                     "calendar: {name: 360_day}\n")
    status, _, err = run(["convert", str(src), "-o", str(tmp_path / "x.nc"), "--spec",
                          str(wrong)], capsys)
    assert status == 2 and "calendar is 'noleap' but calendar '360_day'" in err


def test_daily_input_and_inverse_direction(tmp_path, capsys):
    src, fa, back = tmp_path / "day.nc", tmp_path / "fa.nc", tmp_path / "back.nc"
    write_series(src, np.arange(366.0))
    assert main(["convert", str(src), "-o", str(fa), "--epoch", "21ka"]) == 0
    with xr.open_dataset(fa) as ds:
        assert ds.attrs["month_conversion_source_time_axis"].startswith("daily")
    assert main(["convert", str(fa), "-o", str(back), "--to", "fixed-day"]) == 0
    bnds, _ = bounds_days(back)
    np.testing.assert_allclose(bnds, np.stack([month_edges()[:-1], month_edges()[1:]], 1),
                               atol=1e-6)
    assert_cf_compliant(back)


# --- CF climatologies (CF 1.11 §7.4) -------------------------------------------------------------
CLIM_YEARS = 30  # a 1980-2009 climatology: each interval from its start in 1980 to its end in 2009


def write_climatology(path, *, bounds_units=True, calendar="noleap"):
    """A CF climatology of monthly means of the analytic cycle over 1980-2009 (CF §7.4).

    The climatology bounds run from each month's start in 1980 to its end in 2009, as in
    the climatology examples of CF §7.4. With ``bounds_units=False`` they carry no units
    or calendar: CF §7.4 lets them be left out, and they are then the time variable's.
    """
    edges = month_edges()
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("time", 12)
        nc.createDimension("lat", 2)
        nc.createDimension("bnds", 2)
        t = nc.createVariable("time", "f8", ("time",))
        t.units, t.calendar = "days since 1980-01-01 00:00:00", calendar
        t.standard_name, t.axis, t.climatology = "time", "T", "climatology_bnds"
        t[:] = 0.5 * (edges[:-1] + edges[1:])
        cb = nc.createVariable("climatology_bnds", "f8", ("time", "bnds"))
        if bounds_units:
            cb.units, cb.calendar = t.units, calendar
        cb[:, 0] = edges[:-1]
        cb[:, 1] = edges[1:] + 365.0 * (CLIM_YEARS - 1)
        la = nc.createVariable("lat", "f8", ("lat",))
        la.units, la.standard_name = "degrees_north", "latitude"
        la[:] = [-30.0, 30.0]
        v = nc.createVariable("tas", "f8", ("time", "lat"))
        v.units, v.standard_name = "K", "air_temperature"
        v.cell_methods = "time: mean within years time: mean over years"
        v[:] = np.repeat(cycle_mean(edges[:-1], edges[1:]), 2).reshape(12, 2)
        nc.Conventions = "CF-1.11"


def climatology_bounds(path):
    """Raw climatology bounds (days since the units' date), their units and the calendar."""
    with netCDF4.Dataset(path) as nc:
        t = nc["time"]
        return np.asarray(nc[t.climatology][:]), t.units, t.calendar


def fixed_angle_starts(capsys, epoch):
    """Start days of the fixed-angle months, as ``bcgen months`` defines them."""
    status, stdout, _ = run(["months", epoch, "--format", "json"], capsys)
    assert status == 0
    return np.array([m["start_day"] for m in json.loads(stdout)])


def test_climatology_bounds_without_units_take_the_time_units(tmp_path, capsys):
    src, out = tmp_path / "clim.nc", tmp_path / "out.nc"
    write_climatology(src, bounds_units=False)
    status, _, err = run(["convert", str(src), "-o", str(out), "--epoch", "127ka",
                          "--method", "epstein1991"], capsys)
    assert status == 0, err
    bnds, units, calendar = climatology_bounds(out)
    assert (units, calendar) == ("days since 1980-01-01", "noleap")
    # Still a 1980-2009 climatology: each fixed-angle month from its start in 1980
    # (the definition of `bcgen months`) to its end in 2009.
    starts = fixed_angle_starts(capsys, "127ka")
    np.testing.assert_allclose(bnds[:, 0], starts, atol=1e-6)
    ends = np.append(starts[1:], starts[0] + 365.0)
    np.testing.assert_allclose(bnds[:, 1], ends + 365.0 * (CLIM_YEARS - 1), atol=1e-6)
    with xr.open_dataset(out, decode_times=DECODE) as ds:
        got = ds["tas"].values[:, 0]
        assert ds["time"].attrs["climatology"] == "climatology_bnds"
    # Epstein (1991): the 12 harmonic terms include the annual one, and the fit that
    # reproduces the 12 month means is unique, so an annual harmonic is reconstructed
    # exactly and the new means are its analytic means (to float64 round-off).
    np.testing.assert_allclose(got, cycle_mean(starts, ends), rtol=0, atol=1e-8)
    assert_cf_compliant(out)


@pytest.mark.parametrize("method", ["epstein1991", "killworth1996"])
def test_climatology_round_trip_through_fixed_angle_months(tmp_path, capsys, method):
    src, fa, back = tmp_path / "clim.nc", tmp_path / "fa.nc", tmp_path / "back.nc"
    write_climatology(src, calendar="365_day")
    assert main(["convert", str(src), "-o", str(fa), "--epoch", "127ka",
                 "--method", method]) == 0
    status, _, err = run(["convert", str(fa), "-o", str(back), "--to", "fixed-day",
                          "--method", method], capsys)
    assert status == 0, err
    # The climatology comes back over the same months and years, in the calendar named as
    # the input names it (365_day is CF's other name of noleap, CF §4.4.1).
    np.testing.assert_allclose(climatology_bounds(back)[0], climatology_bounds(src)[0],
                               atol=1e-6)
    assert climatology_bounds(fa)[2] == climatology_bounds(back)[2] == "365_day"
    with xr.open_dataset(src) as a, xr.open_dataset(back) as b:
        err_k = np.max(np.abs(b["tas"].values - a["tas"].values))
    if method == "epstein1991":
        # Exact for an annual harmonic both ways (see the test above): float64 round-off.
        assert err_k < 1e-8
    else:
        # Two conversions, each within the Killworth bound of test_values_follow_the_truth
        # (0.24 K for this 10 K harmonic at 127 ka, derived in
        # tests/test_convert_api.py::interpolation_bound).
        assert err_k < 2 * 0.24


def test_calendar_name_is_kept_as_written(tmp_path, capsys):
    for written, kept in (("365_day", "365_day"), ("noleap", "noleap"),
                          ("gregorian", "standard")):  # CF 1.9 deprecated "gregorian"
        src, out = tmp_path / f"{written}.nc", tmp_path / f"{written}_out.nc"
        write_series(src, month_edges(), calendar=written)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            assert main(["convert", str(src), "-o", str(out), "--epoch", "6ka"]) == 0
        with netCDF4.Dataset(out) as nc:
            assert nc["time"].calendar == kept


def test_scheduler_option_runs_on_a_cluster(two_files, tmp_path, capsys):
    distributed = pytest.importorskip("distributed")
    out_local, out_cluster = tmp_path / "local.nc", tmp_path / "cluster.nc"
    assert main(["convert", *map(str, two_files), "-o", str(out_local), "--epoch", "6ka"]) == 0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                      dashboard_address=None) as cluster:
            status = main(["convert", *map(str, two_files), "-o", str(out_cluster), "--epoch",
                           "6ka", "--scheduler", cluster.scheduler_address])
    assert status == 0
    with xr.open_dataset(out_local) as a, xr.open_dataset(out_cluster) as b:
        np.testing.assert_array_equal(a["tas"].values, b["tas"].values)


def test_progress_bar_on_a_terminal(two_files, tmp_path, capsys, monkeypatch):
    import sys

    import bcgen.cli.convert as cli_convert

    monkeypatch.setattr(cli_convert, "PROGRESS_MIN_SECONDS", 0.0)
    monkeypatch.setattr(sys.stderr, "isatty", lambda: True, raising=False)
    status, _, err = run(["convert", str(two_files[0]), "-o", str(tmp_path / "o.nc"),
                          "--epoch", "6ka"], capsys)
    assert status == 0
    assert "100%" in err and "Completed" in err


# --- refusals: one line, exit status 2 ----------------------------------------------------------
def one_line_error(status, err, *needles):
    assert status == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("bcgen: error: "), err
    for needle in needles:
        assert needle in lines[0], lines[0]


def test_existing_output_needs_force(two_files, tmp_path, capsys):
    out = tmp_path / "out.nc"
    out.write_text("keep me")
    status, _, err = run(["convert", str(two_files[0]), "-o", str(out), "--epoch", "6ka"],
                         capsys)
    one_line_error(status, err, "already exists", "--force")
    assert out.read_text() == "keep me"
    assert main(["convert", str(two_files[0]), "-o", str(out), "--epoch", "6ka",
                 "--force"]) == 0


def test_input_refusals(two_files, tmp_path, capsys):
    out = str(tmp_path / "out.nc")
    status, _, err = run(["convert", str(tmp_path / "nope.nc"), "-o", out, "--epoch", "6ka"],
                         capsys)
    one_line_error(status, err, "nope.nc", "no such file")

    other = tmp_path / "other_calendar.nc"
    write_series(other, month_edges("360_day"), calendar="360_day", first_year=3,
                 origin_year=3)
    status, _, err = run(["convert", str(two_files[0]), str(other), "-o", out, "--epoch", "6ka"],
                         capsys)
    one_line_error(status, err, "other_calendar.nc", "calendar 360_day")

    no_time = tmp_path / "no_time.nc"
    xr.Dataset({"x": ("y", [1.0, 2.0])}).to_netcdf(no_time)
    status, _, err = run(["convert", str(no_time), "-o", out, "--epoch", "6ka"], capsys)
    one_line_error(status, err, "no_time.nc", "no time axis")

    irregular = tmp_path / "irregular.nc"
    write_series(irregular, np.array([0.0, 5.0, 12.0, 20.0]), bounds=False)
    status, _, err = run(["convert", str(irregular), "-o", out, "--epoch", "6ka"], capsys)
    one_line_error(status, err, "irregular.nc", "neither one per calendar month nor daily")

    gap = tmp_path / "later.nc"
    write_series(gap, month_edges(), first_year=5)
    status, _, err = run(["convert", str(two_files[0]), str(gap), "-o", out, "--epoch", "6ka"],
                         capsys)
    one_line_error(status, err, "later.nc", "gap")


def test_orbit_option_refusals(two_files, tmp_path, capsys):
    out = str(tmp_path / "out.nc")
    src = str(two_files[0])
    status, _, err = run(["convert", src, "-o", out], capsys)
    one_line_error(status, err, "exactly one of --spec, --epoch")
    status, _, err = run(["convert", src, "-o", out, "--epoch", "6ka", "--eccentricity", "0.01"],
                         capsys)
    one_line_error(status, err, "got --epoch, explicit elements")
    status, _, err = run(["convert", src, "-o", out, "--eccentricity", "0.01"], capsys)
    one_line_error(status, err, "--obliquity-deg", "--perihelion-convention")
    status, _, err = run(["convert", src, "-o", out, "--epoch", "6000"], capsys)
    one_line_error(status, err, "6000")
    status, _, err = run(["convert", src, "-o", out, "--epoch", "6ka", "--equinox", "13-40"],
                         capsys)
    one_line_error(status, err, "--equinox")
    status, _, err = run(["convert", src, "-o", out, "--to", "fixed-day", "--epoch", "6ka"],
                         capsys)
    one_line_error(status, err, "give no orbit")
