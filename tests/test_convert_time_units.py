"""`bcgen convert` keeps the input's time units and calendar, in both directions.

A script that compares raw time numbers (the bounds of January of year 1 are [0, 31] in
"days since 0001-01-01") must find them unchanged after a round trip; the months move,
the units do not. The round trip itself is checked against the input's raw numbers.
"""

from __future__ import annotations

import cftime
import netCDF4
import numpy as np
import pytest

NOLEAP_EDGES = np.array([0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334, 365.0])


def write_monthly(path, units: str, calendar: str, years: int, first_edges=NOLEAP_EDGES,
                  shift_days: float = 0.0, year_days: float = 365.0, scale: float = 1.0):
    """Monthly means of a smooth cycle on the calendar's months, raw numbers in ``units``."""
    edges = np.concatenate([first_edges[:-1] + k * year_days for k in range(years)]
                           + [[years * year_days]])
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("time", edges.size - 1)
        nc.createDimension("bnds", 2)
        t = nc.createVariable("time", "f8", ("time",))
        t.units, t.calendar, t.standard_name, t.bounds = units, calendar, "time", "time_bnds"
        t[:] = scale * (shift_days + 0.5 * (edges[:-1] + edges[1:]))
        b = nc.createVariable("time_bnds", "f8", ("time", "bnds"))
        b[:, 0], b[:, 1] = scale * (shift_days + edges[:-1]), scale * (shift_days + edges[1:])
        v = nc.createVariable("tas", "f4", ("time",))
        v.units, v.standard_name, v.cell_methods = "K", "air_temperature", "time: mean"
        mid = 0.5 * (edges[:-1] + edges[1:])
        v[:] = 280.0 + 10.0 * np.cos(2 * np.pi * (mid - 200.0) / year_days)
    return edges


def same_units(a: str, b: str, calendar: str) -> bool:
    """Equal CF time units: the same unit and origin (a written "00:00:00" may be left out)."""
    return a.split()[0] == b.split()[0] and all(
        cftime.num2date(x, a, calendar) == cftime.num2date(x, b, calendar) for x in (0, 1))


def raw_time(path):
    with netCDF4.Dataset(path) as nc:
        t = nc["time"]
        bounds = nc[t.getncattr("bounds") if "bounds" in t.ncattrs() else t.climatology]
        return t.units, t.calendar, np.asarray(bounds[:], dtype=float)


CASES = [
    # (units, calendar, shift of the first January in the units' days, days per unit)
    ("days since 0001-01-01", "noleap", 0.0, 1.0),  # the case of the report: 0000 came out
    ("days since 1850-01-01 00:00:00", "365_day", 0.0, 1.0),
    ("hours since 0001-01-01 00:00:00", "noleap", 0.0, 24.0),
    ("days since 0000-01-01", "noleap", 365.0, 1.0),  # year 1 in units counted from year 0
]


@pytest.mark.parametrize(("units", "calendar", "shift", "scale"), CASES)
def test_time_units_are_kept_both_ways(run_cli, tmp_path, units, calendar, shift, scale):
    source = tmp_path / "in.nc"
    write_monthly(source, units, calendar, years=3, shift_days=shift, scale=scale)
    angle, back = tmp_path / "angle.nc", tmp_path / "back.nc"
    status, _, err = run_cli(["convert", source, "-o", angle, "--epoch", "127ka"])
    assert status == 0, err
    status, _, err = run_cli(["convert", angle, "-o", back, "--to", "fixed-day"])
    assert status == 0, err
    in_units, in_calendar, in_bounds = raw_time(source)
    for path in (angle, back):
        out_units, out_calendar, _ = raw_time(path)
        assert out_calendar == in_calendar, path.name
        assert same_units(out_units, in_units, in_calendar), (path.name, out_units, in_units)
    # Back on the calendar's months, the raw bounds are the input's, number for number.
    _, _, back_bounds = raw_time(back)
    np.testing.assert_allclose(back_bounds, in_bounds, rtol=0, atol=1e-6 * scale)


def test_a_climatology_keeps_its_units(run_cli, tmp_path):
    source = tmp_path / "clim.nc"
    write_monthly(source, "days since 0001-01-01", "360_day", years=1,
                  first_edges=np.arange(0, 361, 30.0), year_days=360.0)
    out = tmp_path / "clim_angle.nc"
    status, _, err = run_cli(["convert", source, "-o", out, "--epoch", "6ka"])
    assert status == 0, err
    units, calendar, _ = raw_time(out)
    assert calendar == "360_day" and same_units(units, "days since 0001-01-01", calendar)


def test_the_converted_file_says_its_annual_mean_is_length_weighted(run_cli, tmp_path):
    import xarray as xr

    source = tmp_path / "in.nc"
    write_monthly(source, "days since 0001-01-01", "noleap", years=1)
    angle, back = tmp_path / "angle.nc", tmp_path / "back.nc"
    assert run_cli(["convert", source, "-o", angle, "--epoch", "127ka"])[0] == 0
    assert run_cli(["convert", angle, "-o", back, "--to", "fixed-day"])[0] == 0

    def weighted_and_plain(path):
        with xr.open_dataset(path, decode_times=False) as ds:
            bounds = ds[ds.time.attrs.get("bounds") or ds.time.attrs["climatology"]].values
            length = bounds[:, 1] - bounds[:, 0]
            tas = ds["tas"].values.astype(float)
            return (float(np.sum(tas * length) / np.sum(length)), float(tas.mean()),
                    ds.attrs.get("comment", ""), length)

    annual_in, _, _, _ = weighted_and_plain(source)
    annual, plain, comment, length = weighted_and_plain(angle)
    assert "weighted by their lengths" in comment and "not the plain mean" in comment
    # 127 ka fixed-angle months run from about 27 to 35 days (README, 1850 CE arcs), and the
    # length-weighted mean is the conserved one, the plain mean is not.
    assert length.max() - length.min() > 5
    assert annual == pytest.approx(annual_in, abs=1e-4)
    assert abs(plain - annual) > 0.1
    assert "weighted by their lengths" not in weighted_and_plain(back)[2]
