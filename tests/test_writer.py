"""Tests of bcgen.cf (time axes, provenance) and bcgen.io: round trips, CF checks, atomic writes."""

from __future__ import annotations

import errno
import os
import re
from datetime import datetime, timezone
from pathlib import Path

import cftime
import dask.array as da
import netCDF4
import numpy as np
import pytest
import xarray as xr
from io_faults import FailingBackend
from published_tables import CMIP6_PICONTROL_TSI_WM2, PMIP4

from bcgen import cf
from bcgen.cf import climatology_time_axis, provenance_attrs, time_axis
from bcgen.errors import CalendarError, DeprecatedCalendarNameWarning, OutputError
from bcgen.grids import gaussian_grid, regular_grid, zonal_grid
from bcgen.io import default_chunks, set_backend, write_netcdf
from bcgen.solar_calendar import calendars

CFTIME = xr.coders.CFDatetimeCoder(use_cftime=True)
SPEC = "# demo spec\nexperiment: demo\nepoch: 6ka  # ϖ in degrees\n"


def _daily_bounds(ndays):
    return np.stack([np.arange(ndays), np.arange(1, ndays + 1)], axis=1).astype(float)


def _insolation_dataset(grid, bounds, calendar, *, year=1, dtype="f4", time_slice=True):
    axis = climatology_time_axis(bounds, calendar, year=year)
    rng = np.random.default_rng(42)
    data = (rng.random((len(bounds), *grid.shape)) * 550).astype(dtype)
    ds = xr.Dataset(
        {
            "insolation": (
                ("time", *grid.dims),
                data,
                cf.variable_attrs("insolation", time_kind="climatology"),
            )
        }
    )
    ds = ds.merge(axis).merge(grid.to_dataset())
    ds.attrs = provenance_attrs(
        SPEC,
        "Berger, A. (1978), J. Atmos. Sci. 35, 2362-2367",
        title="test insolation",
        institution="bcgen test suite",
        solution="berger1978",
        time_slice=time_slice,
    )
    return ds


#: The PMIP4 midHolocene orbit and gases (Otto-Bliesner et al. 2017, Table 1) and the CMIP6
#: piControl TSI (Matthes et al. 2017), from tests/published_tables.py.
MH = PMIP4["midHolocene"]


def _orbit_scalars(ds):
    e, obliquity, varpi = MH.orbit
    for name, value in (
        ("eccentricity", e),
        ("obliquity", obliquity),
        ("perihelion_longitude", varpi),
        ("co2", MH.gases["co2"]),
        ("ch4", MH.gases["ch4"]),
        ("n2o", MH.gases["n2o"]),
        ("solar_irradiance", CMIP6_PICONTROL_TSI_WM2),
    ):
        ds[name] = ((), value, cf.variable_attrs(name))
    return ds


def _leftovers(folder):
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".tmp"))


# Fixed-angle months with fractional bounds; January starts before 1 January (crosses the
# start of the year) and the year is 365 days long. Invented numbers of plausible shape.
FIXED_ANGLE_BOUNDS = np.array(
    [
        [-1.6, 29.9],
        [29.9, 58.4],
        [58.4, 89.1],
        [89.1, 119.3],
        [119.3, 150.0],
        [150.0, 180.9],
        [180.9, 212.3],
        [212.3, 243.2],
        [243.2, 273.4],
        [273.4, 303.6],
        [303.6, 333.5],
        [333.5, 363.4],
    ]
)


# --- round trips ---------------------------------------------------------------------------
# Day numbers of 1 March in year 1, counted from 1 January (CF §4.4.1 calendar definitions):
# noleap 31 + 28 = 59; proleptic_gregorian year 1 is not a leap year, also 59; 360_day has
# 30-day months, so day 59 is 30 February and 1 March is day 60.
MARCH_FIRST = {"noleap": 59, "proleptic_gregorian": 59, "360_day": 60}
YEAR_DAYS = {"noleap": 365, "proleptic_gregorian": 365, "360_day": 360}


@pytest.mark.parametrize("calendar", ["noleap", "360_day", "proleptic_gregorian"])
def test_climatology_round_trip(tmp_path, calendar):
    grid = regular_grid(30)
    ds = _orbit_scalars(_insolation_dataset(grid, _daily_bounds(YEAR_DAYS[calendar]), calendar))
    path = write_netcdf(ds, tmp_path / "a.nc")
    with xr.open_dataset(path, decode_times=CFTIME) as back:
        np.testing.assert_array_equal(back.insolation.values, ds.insolation.values)
        assert back.insolation.dtype == np.float32
        for name in ("insolation", "eccentricity", "co2", "perihelion_longitude"):
            assert back[name].attrs == ds[name].attrs
        assert back.attrs == ds.attrs
        assert back.attrs["bcgen_spec"] == SPEC  # full text, newlines and non-ASCII kept
        assert back.time.encoding["calendar"] == calendar
        assert back.time.encoding["units"] == "days since 0001-01-01 00:00:00"
        assert back.time.attrs["climatology"] == "climatology_bnds"
        day = MARCH_FIRST[calendar]
        assert back.climatology_bnds.values[day, 0] == cftime.datetime(1, 3, 1, calendar=calendar)
        # Mid-interval time value: 1 March 12:00.
        assert back.time.values[day] == cftime.datetime(1, 3, 1, 12, calendar=calendar)
        last = back.climatology_bnds.values[-1, 1]
        assert last == cftime.datetime(2, 1, 1, calendar=calendar)
        np.testing.assert_array_equal(back.lat_bnds.values, grid.lat_bounds_deg)
        np.testing.assert_array_equal(back.lon_bnds.values, grid.lon_bounds_deg)
        assert back.eccentricity.item() == MH.orbit[0]


def test_fixed_angle_months_round_trip_with_fractional_bounds(tmp_path):
    ds = _insolation_dataset(zonal_grid(nlat=8, spacing="gaussian"), FIXED_ANGLE_BOUNDS, "noleap")
    path = write_netcdf(ds, tmp_path / "m.nc")
    with xr.open_dataset(path, decode_times=False) as raw:
        np.testing.assert_array_equal(raw.climatology_bnds.values, FIXED_ANGLE_BOUNDS)
        np.testing.assert_allclose(raw.time.values, FIXED_ANGLE_BOUNDS.mean(axis=1))
    with xr.open_dataset(path, decode_times=CFTIME) as back:
        # -1.6 days from 0001-01-01 00:00 is 0000-12-30 09:36 (noleap has a year 0, CF §4.4.1).
        assert back.climatology_bnds.values[0, 0] == cftime.datetime(
            0, 12, 30, 9, 36, calendar="noleap"
        )


def test_transient_time_axis_round_trip(tmp_path):
    # Three model years of fixed-day months in a 360_day calendar, reference year 1.
    edges = np.arange(37) * 30.0
    axis = time_axis(np.stack([edges[:-1], edges[1:]], axis=1), "360_day", 1)
    ds = xr.Dataset(
        {"co2": ("time", np.linspace(280, 290, 36), cf.variable_attrs("co2", time_kind="mean"))}
    ).merge(axis)
    ds.attrs = provenance_attrs(SPEC, "", title="transient")
    path = write_netcdf(ds, tmp_path / "t.nc")
    with xr.open_dataset(path, decode_times=CFTIME) as back:
        assert back.time.attrs["bounds"] == "time_bnds"
        assert back.co2.attrs["cell_methods"] == "time: mean"
        assert back.time_bnds.values[12, 0] == cftime.datetime(2, 1, 1, calendar="360_day")
        assert back.time.values[35] == cftime.datetime(3, 12, 16, calendar="360_day")
        np.testing.assert_array_equal(back.co2.values, ds.co2.values)


def test_decoded_dataset_can_be_written_again(tmp_path):
    ds = _insolation_dataset(zonal_grid(10.0), _daily_bounds(360), "360_day")
    first = write_netcdf(ds, tmp_path / "1.nc")
    with xr.open_dataset(first, decode_times=CFTIME) as back:
        second = write_netcdf(back.load(), tmp_path / "2.nc")
    with xr.open_dataset(second, decode_times=False) as raw:
        np.testing.assert_allclose(raw.time.values, np.arange(360) + 0.5)
        assert raw.time.attrs["calendar"] == "360_day"


# --- CF compliance ---------------------------------------------------------------------------
def test_daily_insolation_climatology_passes_cf_checker(tmp_path, cf_compliant):
    ds = _orbit_scalars(_insolation_dataset(regular_grid(10), _daily_bounds(365), "noleap"))
    warnings = cf_compliant(write_netcdf(ds, tmp_path / "daily.nc"))
    assert warnings == []


def test_fixed_angle_month_climatology_passes_cf_checker(tmp_path, cf_compliant):
    ds = _insolation_dataset(
        zonal_grid(nlat=32, spacing="gaussian"), FIXED_ANGLE_BOUNDS, "proleptic_gregorian"
    )
    ds["true_longitude"] = (
        "time",
        np.arange(12) * 30.0 + 15,
        cf.variable_attrs("true_longitude", time_kind="climatology"),
    )
    warnings = cf_compliant(write_netcdf(ds, tmp_path / "months.nc"))
    assert warnings == []


def test_gaussian_grid_360_day_and_transient_pass_cf_checker(tmp_path, cf_compliant):
    ds = _insolation_dataset(gaussian_grid(16), _daily_bounds(360), "360_day")
    assert cf_compliant(write_netcdf(ds, tmp_path / "g.nc")) == []
    axis = time_axis(np.array([[0.0, 365.0], [365.0, 730.0]]), "noleap", 1)
    tr = xr.Dataset(
        {
            name: ("time", [1.0, 2.0], cf.variable_attrs(name, time_kind="mean"))
            for name in ("co2", "ch4", "n2o", "solar_irradiance")
        }
    ).merge(axis)
    for name in ("eccentricity", "obliquity", "perihelion_longitude"):
        tr[name] = ("time", [0.01, 0.02], cf.variable_attrs(name))
    tr.attrs = provenance_attrs(SPEC, "Berger 1978", title="transient gases")
    assert cf_compliant(write_netcdf(tr, tmp_path / "tr.nc")) == []


def test_point_time_axis_passes_cf_checker(tmp_path, cf_compliant):
    axis = time_axis(None, "noleap", 1, values_days=np.arange(0, 2, 0.25))
    ds = xr.Dataset(
        {
            name: ("time", np.linspace(0, 1, 8), cf.variable_attrs(name, time_kind="point"))
            for name in (
                "true_longitude",
                "declination",
                "distance_factor",
                "insolation_instantaneous",
            )
        }
    ).merge(axis)
    ds.attrs = provenance_attrs(SPEC, "Berger 1978", title="per-timestep reference")
    assert ds.declination.attrs["cell_methods"] == "time: point"
    assert cf_compliant(write_netcdf(ds, tmp_path / "p.nc")) == []


def test_checker_catches_errors_and_stays_offline(tmp_path, cf_compliant):
    # A file with a CF error must fail: an unknown standard name is a level-3 failure.
    ds = xr.Dataset(
        {"x": ("lat", [1.0, 2.0], {"standard_name": "no_such_name", "units": "1"})},
        coords={"lat": ("lat", [0.0, 1.0], cf.coordinate_attrs("lat"))},
    )
    ds.attrs["Conventions"] = "CF-1.11"
    bad = write_netcdf(ds, tmp_path / "bad.nc")
    with pytest.raises(AssertionError, match="no_such_name"):
        cf_compliant(bad)
    # A vocabulary attribute naming another table version would make the checker download
    # it; the helper pins the bundled table and blocks the network, so no exception occurs.
    good = _insolation_dataset(zonal_grid(30.0), _daily_bounds(365), "noleap")
    good.attrs["standard_name_vocabulary"] = "CF Standard Name Table v80"
    assert cf_compliant(write_netcdf(good, tmp_path / "vocab.nc")) == []
    import requests
    from cf_checker import NetworkBlocked, _offline

    with _offline(), pytest.raises(NetworkBlocked):
        requests.get("https://example.invalid/", timeout=1)


def test_curvilinear_grid_file_passes_cf_checker(tmp_path, cf_compliant):
    g = regular_grid(45)
    lat2, lon2 = np.meshgrid(g.lat_deg, g.lon_deg, indexing="ij")
    from bcgen.grids import Grid

    c = Grid(lat2, None, lon2, None, kind="curvilinear", name="c", dims=("j", "i"))
    ds = c.to_dataset()
    ds["insolation"] = (
        ("time", "j", "i"),
        np.ones((1, *c.shape)),
        cf.variable_attrs("insolation", time_kind="climatology"),
    )
    ds = ds.merge(climatology_time_axis([[0.0, 1.0]], "noleap"))
    ds.attrs = provenance_attrs(SPEC, "", title="curvilinear")
    warnings = cf_compliant(write_netcdf(ds, tmp_path / "c.nc"))
    # The checker cannot tell that j and i (dimensions without coordinate variables, as
    # CF §5.2 allows for curvilinear grids) are the Y and X axes; a level-2 warning.
    assert len(warnings) == 1
    assert warnings[0].startswith(
        "warning: §2.4 Dimensions: insolation's spatio-temporal dimensions are not in the "
        "recommended order T, Z, Y, X"
    )


# --- time axes --------------------------------------------------------------------------------
def test_climatology_axis_attributes():
    axis = climatology_time_axis(_daily_bounds(3), "noleap")
    assert axis.time.attrs == {
        "standard_name": "time",
        "long_name": "time",
        "axis": "T",
        "units": "days since 0001-01-01 00:00:00",
        "calendar": "noleap",
        "climatology": "climatology_bnds",
    }
    np.testing.assert_array_equal(axis.time.values, [0.5, 1.5, 2.5])
    assert axis.climatology_bnds.dims == ("time", "bnds")
    assert cf.variable_attrs("insolation", time_kind="climatology")["cell_methods"] == (
        "time: mean within years time: mean over years"  # CF §7.4 form
    )
    assert climatology_time_axis([[0, 1]], "360_day", year=1850).time.attrs["units"] == (
        "days since 1850-01-01 00:00:00"
    )


def test_wrapped_intervals_are_unwrapped():
    wrapped = FIXED_ANGLE_BOUNDS.copy()
    wrapped[0, 0] += 365.0  # January given as (363.4, 29.9)
    axis = climatology_time_axis(wrapped, "noleap")
    np.testing.assert_allclose(axis.climatology_bnds.values, FIXED_ANGLE_BOUNDS)
    # Year 0 of the proleptic Gregorian calendar is a leap year (divisible by 400; ISO 8601
    # astronomical year numbering), so a January wrapped back from year 1 moves by 366 days.
    axis = climatology_time_axis(wrapped, "proleptic_gregorian")
    assert axis.climatology_bnds.values[0, 0] == pytest.approx(363.4 - 366.0)
    late = np.array([[0.0, 300.0], [300.0, 5.0]])  # last interval wraps forward
    axis = climatology_time_axis(late, "360_day")
    np.testing.assert_allclose(axis.climatology_bnds.values, [[0, 300], [300, 365]])


@pytest.mark.parametrize(
    ("call", "error", "message"),
    [
        (
            lambda: climatology_time_axis([[0, 1]], "lunar"),
            CalendarError,
            r"unknown calendar 'lunar'; expected one of noleap, 365_day, 360_day, all_leap, "
            r"366_day, proleptic_gregorian, standard, julian",
        ),
        (lambda: climatology_time_axis([[0, 1]], "none"), CalendarError, r"unknown calendar"),
        (
            lambda: climatology_time_axis([0, 1], "noleap"),
            CalendarError,
            r"time bounds must have shape \(n, 2\); got \(2,\)",
        ),
        (
            lambda: climatology_time_axis([[0, np.nan]], "noleap"),
            CalendarError,
            r"time bounds must be finite",
        ),
        (
            lambda: climatology_time_axis([[0, 10], [2, 4]], "noleap"),
            CalendarError,
            r"time values must increase; value 1 \(3\) does not",
        ),
        (
            lambda: climatology_time_axis([[-2, 30]], "standard"),
            CalendarError,
            r"time before 0001-01-01 in the standard calendar \(which has no year 0\); use a "
            r"later nominal year, e.g. year=2",
        ),
        (
            lambda: climatology_time_axis([[360, 10], [10, 40]], "standard"),
            CalendarError,
            r"time before 0001-01-01 in the standard calendar",
        ),
        (
            lambda: time_axis([[0, 30], [30, 30]], "noleap", 1),
            CalendarError,
            r"time bounds row 1 \(30, 30\): the end must follow the start",
        ),
        (
            lambda: time_axis(None, "noleap", 1),
            CalendarError,
            r"a time axis needs bounds_days or values_days",
        ),
        (
            lambda: time_axis([[0, 1]], "noleap", 1.5),
            CalendarError,
            r"the reference year must be an integer; got 1.5",
        ),
    ],
)
def test_time_axis_errors(call, error, message):
    with pytest.raises(error, match=message) as info:
        call()
    assert "\n" not in str(info.value)


def test_calendar_names():
    with pytest.warns(DeprecatedCalendarNameWarning):  # deprecated alias, CF §4.4.1
        assert calendars.cf_calendar_name("gregorian") == "standard"
    assert calendars.cf_calendar_name("365_day") == "365_day"
    axis = climatology_time_axis([[-2, 30]], "julian", year=2)
    assert axis.time.attrs["units"] == "days since 0002-01-01 00:00:00"
    # Year lengths: CF §4.4.1 (all_leap 366 days; 1600 is a Gregorian leap year).
    assert calendars.year_length_days("all_leap", 1) == 366
    assert calendars.year_length_days("proleptic_gregorian", 1600) == 366
    assert calendars.year_length_days("proleptic_gregorian", 1700) == 365
    assert calendars.year_length_days("julian", 1700) == 366


# --- provenance -------------------------------------------------------------------------------
def test_provenance_attributes():
    attrs = provenance_attrs(
        SPEC,
        "Berger (1978)",
        title="t",
        institution="Somewhere",
        solution="berger1978",
        references=["Otto-Bliesner et al. (2017)"],
        comment="extra note",
        time_slice=True,
        command="bcgen build demo.yaml",
        extra={"contact": "me@example.org"},
    )
    assert attrs["Conventions"] == "CF-1.11"
    assert attrs["source"].startswith("bcgen ")
    # ISO 8601 UTC, as the CMIP forcing-dataset conventions require for creation_date.
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", attrs["creation_date"])
    assert attrs["history"].startswith(attrs["creation_date"] + " created by bcgen ")
    assert attrs["history"].endswith(": bcgen build demo.yaml")
    assert attrs["references"] == "Berger (1978)\nOtto-Bliesner et al. (2017)"
    assert attrs["comment"].startswith("This file holds one model year that repeats")
    assert attrs["comment"].endswith("extra note")
    assert attrs["bcgen_spec"] == SPEC and attrs["contact"] == "me@example.org"
    assert attrs["orbital_solution"] == "berger1978" and attrs["institution"] == "Somewhere"
    assert "comment" not in provenance_attrs(SPEC, "", title="t")


def test_creation_time_is_fixed_or_taken_from_source_date_epoch(monkeypatch):
    when = datetime(2025, 1, 2, 3, 4, 5, tzinfo=timezone.utc)
    assert provenance_attrs("", "", title="t", created=when)["creation_date"] == (
        "2025-01-02T03:04:05Z"
    )
    # SOURCE_DATE_EPOCH (reproducible-builds.org specification): seconds since 1970 UTC;
    # 1700000000 is 2023-11-14T22:13:20Z.
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    assert provenance_attrs("", "", title="t")["creation_date"] == "2023-11-14T22:13:20Z"


# --- encoding ---------------------------------------------------------------------------------
def test_default_encoding_compression_chunks_and_no_fill_on_coordinates(tmp_path):
    ds = _insolation_dataset(regular_grid(10), _daily_bounds(365), "noleap")
    path = write_netcdf(ds, tmp_path / "e.nc")
    with netCDF4.Dataset(path) as nc:
        assert nc.data_model == "NETCDF4"
        v = nc["insolation"]
        f = v.filters()
        assert f["zlib"] and f["shuffle"] and f["complevel"] == 4
        # 18 x 36 float32 = 2592 bytes per step; 4 MiB holds more than 365 steps.
        assert v.chunking() == [365, 18, 36]
        for name in ("time", "lat", "lon", "climatology_bnds", "lat_bnds", "lon_bnds"):
            assert "_FillValue" not in nc[name].ncattrs(), name
    # Chunk shapes by hand: 360 x 720 float32 = 1,036,800 bytes per step; 4 MiB = 4,194,304
    # bytes holds 4 steps; a series row is 365 x 720 x 4 = 1,051,200 bytes, 3 rows per chunk.
    dims = ("time", "lat", "lon")
    assert default_chunks((365, 360, 720), dims, 4) == (4, 360, 720)
    assert default_chunks((365, 360, 720), dims, 4, layout="series") == (365, 3, 720)
    assert default_chunks((365, 1800, 3600), dims, 4) == (1, 291, 3600)
    assert default_chunks((12,), ("time",), 8) is None


def test_caller_encoding_wins_and_unknown_names_are_refused(tmp_path):
    ds = _insolation_dataset(zonal_grid(10.0), _daily_bounds(365), "noleap")
    path = write_netcdf(
        ds, tmp_path / "e.nc", encoding={"insolation": {"zlib": False, "chunksizes": (1, 18)}}
    )
    with netCDF4.Dataset(path) as nc:
        assert not nc["insolation"].filters()["zlib"]
        assert nc["insolation"].chunking() == [1, 18]
    with pytest.raises(OutputError, match="encoding given for unknown variables: nope"):
        write_netcdf(ds, tmp_path / "f.nc", encoding={"nope": {}})


def test_two_writes_give_identical_data_variables(tmp_path):
    ds = _orbit_scalars(_insolation_dataset(regular_grid(15), FIXED_ANGLE_BOUNDS, "noleap"))
    a = write_netcdf(ds, tmp_path / "a.nc")
    ds2 = ds.copy(deep=True)
    ds2.attrs = provenance_attrs(
        SPEC,
        "Berger 1978",
        title="test insolation",
        created=datetime(2000, 1, 1, tzinfo=timezone.utc),
    )
    b = write_netcdf(ds2, tmp_path / "b.nc")
    with xr.open_dataset(a, decode_times=False) as x, xr.open_dataset(b, decode_times=False) as y:
        assert set(x.variables) == set(y.variables)
        for name in x.variables:
            xr.testing.assert_identical(x[name].variable, y[name].variable)
            assert x[name].values.tobytes() == y[name].values.tobytes()


def test_dask_backed_dataset_is_written(tmp_path):
    ds = _insolation_dataset(regular_grid(30), _daily_bounds(365), "noleap")
    lazy = ds.assign(insolation=ds.insolation.chunk({"time": 100}))
    path = write_netcdf(lazy, tmp_path / "lazy.nc")
    with xr.open_dataset(path, decode_times=False) as back:
        np.testing.assert_array_equal(back.insolation.values, ds.insolation.values)


# --- atomic write and errors --------------------------------------------------------------------
@pytest.fixture
def small():
    return _insolation_dataset(zonal_grid(30.0), _daily_bounds(365), "noleap")


def test_existing_file_is_not_overwritten_without_force(tmp_path, small):
    target = tmp_path / "out.nc"
    target.write_bytes(b"previous")
    with pytest.raises(
        OutputError, match=r"^.*out.nc already exists; use --force to overwrite it$"
    ):
        write_netcdf(small, target)
    assert target.read_bytes() == b"previous"
    write_netcdf(small, target, force=True)
    with xr.open_dataset(target) as back:
        assert back.insolation.shape == (365, 6)
    assert _leftovers(tmp_path) == []


def test_file_appearing_during_the_write_is_not_clobbered(tmp_path, small, monkeypatch):
    target = tmp_path / "race.nc"
    someone_else_creates_target = FailingBackend(then=lambda tmp: target.write_bytes(b"theirs"))
    with pytest.raises(OutputError, match="race.nc already exists; use --force"):
        write_netcdf(small, target, backend=someone_else_creates_target)
    assert target.read_bytes() == b"theirs"
    assert _leftovers(tmp_path) == []


def test_missing_folder(tmp_path, small):
    with pytest.raises(
        OutputError, match=r"cannot write .*out.nc: folder .*nowhere does not exist"
    ):
        write_netcdf(small, tmp_path / "nowhere" / "out.nc")
    assert list(tmp_path.iterdir()) == []


def test_read_only_folder(tmp_path, small, monkeypatch):
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(0o555)
    backend = None
    if os.geteuid() == 0:
        # Root ignores directory permissions: writing into the folder would succeed. The
        # library then fails as it would for anyone else (and no file may be left).
        folder.chmod(0o755)
        backend = FailingBackend(PermissionError(errno.EACCES, "Permission denied"))
        monkeypatch.setattr(os, "statvfs", _free_blocks(10**6))
    try:
        with pytest.raises(
            OutputError,
            match=r"cannot write .*out.nc: permission denied \(is the folder "
            r"writable\?\)$",
        ):
            write_netcdf(small, folder / "out.nc", backend=backend)
        assert list(folder.iterdir()) == []
    finally:
        folder.chmod(0o755)


def _partial_then(exc):
    """A backend whose write leaves a partial file, then fails with ``exc``."""
    return set_backend(FailingBackend(exc))


def test_disk_full_leaves_no_file(tmp_path, small, monkeypatch):
    full = _partial_then(OSError(errno.ENOSPC, "No space left on device"))
    with full, pytest.raises(OutputError) as info:
        write_netcdf(small, tmp_path / "full.nc")
    assert str(info.value) == (
        f"cannot write {tmp_path / 'full.nc'}: no space left on the device (disk full)"
    )
    assert list(tmp_path.iterdir()) == []


def _free_blocks(n: int):
    """A stand-in for os.statvfs reporting ``n`` blocks free (the rest as the real one says)."""
    real = os.statvfs

    def fake(path):
        st = real(path)
        return os.statvfs_result((st.f_bsize, st.f_frsize, st.f_blocks, n, n, st.f_files,
                                  st.f_ffree, st.f_favail, st.f_flag, st.f_namemax))

    return fake


# A full disk does not always come back as ENOSPC: the netCDF library turns a file it could
# not create into EACCES ("Permission denied") and a failed HDF5 write into "NetCDF: HDF
# error" (netCDF-C's documented error codes, from memory). The writer then asks the file
# system how much space is left (statvfs f_bavail, POSIX).
@pytest.mark.parametrize(
    "failure",
    [
        PermissionError(errno.EACCES, "Permission denied"),
        RuntimeError("NetCDF: HDF error"),
        OSError(errno.EIO, "Input/output error"),
    ],
    ids=["eacces", "hdf-error", "eio"],
)
def test_full_disk_is_named_whatever_the_library_reports(tmp_path, small, monkeypatch, failure):
    monkeypatch.setattr(os, "statvfs", _free_blocks(0))
    with _partial_then(failure), pytest.raises(OutputError) as info:
        write_netcdf(small, tmp_path / "full.nc")
    assert str(info.value) == (
        f"cannot write {tmp_path / 'full.nc'}: no space left on the device (disk full)"
    )
    assert list(tmp_path.iterdir()) == []


def test_quota_and_a_writable_disk_are_told_apart(tmp_path, small, monkeypatch):
    # EDQUOT (POSIX): out of space for this user, whatever statvfs says.
    with _partial_then(OSError(errno.EDQUOT, "Disk quota exceeded")), pytest.raises(
            OutputError, match=r"q\.nc: no space left on the device \(disk quota exceeded\)$"):
        write_netcdf(small, tmp_path / "q.nc")
    # Plenty of space (1e6 free blocks): EACCES is a permission problem, not a full disk.
    monkeypatch.setattr(os, "statvfs", _free_blocks(10**6))
    with _partial_then(PermissionError(errno.EACCES, "Permission denied")), pytest.raises(
            OutputError, match=r"p\.nc: permission denied \(is the folder writable\?\)$"):
        write_netcdf(small, tmp_path / "p.nc")
    assert list(tmp_path.iterdir()) == []


def test_a_file_system_of_no_size_is_not_a_full_disk(tmp_path, small, monkeypatch):
    # statvfs of a pseudo file system (Linux /proc, /sys) gives 0 blocks in all, so 0 free:
    # that is not a full disk, and the message must not send the user to free space.
    real = os.statvfs

    def pseudo(path):
        st = real(path)
        return os.statvfs_result((st.f_bsize, st.f_frsize, 0, 0, 0, st.f_files, st.f_ffree,
                                  st.f_favail, st.f_flag, st.f_namemax))

    monkeypatch.setattr(os, "statvfs", pseudo)
    with _partial_then(PermissionError(errno.EACCES, "Permission denied")), pytest.raises(
            OutputError, match=r"ps\.nc: permission denied \(is the folder writable\?\)$"):
        write_netcdf(small, tmp_path / "ps.nc")


@pytest.mark.skipif(not Path("/proc/self").is_dir(), reason="needs Linux /proc")
def test_writing_into_proc_is_not_called_a_full_disk(small):
    # /proc exists but takes no new files (ENOENT on create; procfs, Linux man proc(5)).
    with pytest.raises(OutputError) as info:
        write_netcdf(small, Path("/proc/bcgen-test.nc"))
    assert str(info.value) == ("cannot write /proc/bcgen-test.nc: the folder /proc does not "
                               "take new files (a special file system?)")


def test_library_failure_is_one_line_and_leaves_no_file(tmp_path, small, monkeypatch):
    with _partial_then(RuntimeError("NetCDF: HDF error\n")), pytest.raises(
            OutputError, match=r"lib.nc: NetCDF: HDF error$") as info:
        write_netcdf(small, tmp_path / "lib.nc")
    assert "\n" not in str(info.value)
    assert list(tmp_path.iterdir()) == []


def test_interrupt_leaves_no_partial_file_and_keeps_the_old_one(tmp_path, small, monkeypatch):
    target = tmp_path / "old.nc"
    write_netcdf(small, target)
    before = target.read_bytes()
    with _partial_then(KeyboardInterrupt()), pytest.raises(KeyboardInterrupt):
        write_netcdf(small, target, force=True)
    assert target.read_bytes() == before
    assert _leftovers(tmp_path) == []


def test_interrupt_in_the_middle_of_a_real_write(tmp_path, small):
    # The third of four dask chunks raises KeyboardInterrupt while netCDF4 is writing.
    seen = []

    def block(x, block_info=None):
        if block_info is not None and block_info[0]["chunk-location"][0] == 2:
            seen.extend(p.stat().st_size for p in tmp_path.glob(".cut.nc.*.tmp"))
            raise KeyboardInterrupt
        return x

    data = da.from_array(small.insolation.values, chunks=(100, 6)).map_blocks(
        block, dtype=small.insolation.dtype
    )
    lazy = small.assign(insolation=(small.insolation.dims, data, small.insolation.attrs))
    with pytest.raises(KeyboardInterrupt):
        write_netcdf(lazy, tmp_path / "cut.nc", encoding={"insolation": {"chunksizes": (100, 6)}})
    assert len(seen) == 1 and seen[0] > 0  # the temporary file existed, partly written
    assert list(tmp_path.iterdir()) == []


def test_output_path_that_is_a_folder(tmp_path, small):
    (tmp_path / "d.nc").mkdir()
    with pytest.raises(OutputError, match=r"d.nc: it is a folder"):
        write_netcdf(small, tmp_path / "d.nc", force=True)


# --- CF tables ---------------------------------------------------------------------------
def test_cf_tables_use_names_of_the_bundled_standard_name_table():
    # CF standard-name table v93 as bundled with compliance-checker 6.1.
    from compliance_checker.cf.util import StandardNameTable

    table = StandardNameTable()
    names = {
        e["standard_name"]
        for e in (*cf.VARIABLES.values(), *cf.COORDINATES.values())
        if "standard_name" in e
    }
    assert names == {
        "toa_incoming_shortwave_flux",
        "solar_irradiance",
        "mole_fraction_of_carbon_dioxide_in_air",
        "mole_fraction_of_methane_in_air",
        "mole_fraction_of_nitrous_oxide_in_air",
        "latitude",
        "longitude",
        "time",
    }
    for name in names:
        assert name in table, name
    # No standard name exists for the orbital quantities (CF standard-name table v93): they
    # carry a long name and a convention instead.
    for key in (
        "eccentricity",
        "obliquity",
        "perihelion_longitude",
        "true_longitude",
        "declination",
        "distance_factor",
        "sun_longitude_at_perihelion",
    ):
        entry = cf.VARIABLES[key]
        assert "standard_name" not in entry and entry["long_name"] and entry["convention"]
    assert cf.VARIABLES["co2"]["units"] == "1e-6" and cf.VARIABLES["ch4"]["units"] == "1e-9"
    with pytest.raises(KeyError, match="no CF attributes for variable 'tsi'"):
        cf.variable_attrs("tsi")
