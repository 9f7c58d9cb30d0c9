"""Fixed-angle products of transient runs: monthly insolation and the month table per model year.

Sources of the expected values:
- time-slice products from ``bcgen.timeslice.build`` on an equivalent time-slice spec (the
  main job's code path, checked against published tables elsewhere), which every model year
  of the transient series must reproduce;
- the tiling of consecutive years for one orbit is the property documented in
  ``bcgen.solar_calendar.months`` ("Year length"), tested there; here the seam between two
  model years must be exactly the change of the January boundary from one year's orbit to
  the next;
- dates on the model calendar are converted by cftime (a reference library), not by bcgen;
- CF compliance by the IOOS compliance-checker (``tests/cf_checker.py``).
"""

from __future__ import annotations

import csv

import cftime
import netCDF4
import numpy as np
import pytest
from test_transient import read, write_spec

from bcgen import build
from bcgen.orbit import solve
from bcgen.solar_calendar import Anchor, ModelCalendar
from bcgen.solar_calendar.months import fixed_angle_months
from bcgen.transient import build_transient

#: Float64 values (bounds, month tables): agreement to the issue's tolerance.
RTOL = 1e-9
#: Insolation is stored as float32 in both kinds of file: agreement to its rounding.
FLOAT32_RTOL = 1e-6
#: The time-slice month table is a CSV printed with 6 decimals.
CSV_ATOL = 5e-7


def days_since(year: int, units: str, calendar: str) -> float:
    """1 January of a model year in days since the units' reference (cftime, not bcgen)."""
    return float(cftime.date2num(cftime.datetime(year, 1, 1, calendar=calendar), units,
                                 calendar=calendar))


def test_fixed_angle_series_equals_time_slices(tmp_path, cf_compliant):
    # 127 ka to 120 ka at 1000 years per model year: model years 1999 ... 2006; 2000 and 2004
    # are leap years of the standard calendar. Reference orbit 1850 CE (PMIP4 piControl).
    common = """
grid: {kind: zonal, resolution_deg: 15}
insolation: {reference_epoch: 1850CE}
"""
    spec = write_spec(tmp_path, "fa", f"""
experiment: {{name: fa}}
transient: {{start_epoch: 127ka, end_epoch: 120ka, acceleration: 1000, first_model_year: 1999,
            years_per_file: 4}}
calendar: {{name: standard}}
products: [monthly_insolation_fixed_angle, month_table]
{common}""")
    out = tmp_path / "transient"
    build_transient(spec, out)
    for name in sorted(p.name for p in out.glob("*.nc")):
        assert cf_compliant(out / name) == []
    for epoch, year, span in (("127ka", 1999, "1999-2002"), ("126ka", 2000, "1999-2002"),
                              ("122ka", 2004, "2003-2006")):
        slice_spec = write_spec(tmp_path, f"slice{year}", f"""
experiment: {{name: slice}}
epoch: {epoch}
calendar: {{name: standard, model_year: {year}}}
products: [monthly_insolation_fixed_angle, month_table]
{common}""")
        folder = tmp_path / f"slice{year}"
        build(slice_spec, folder)
        series_file = out / f"fa_monthly_insolation_fixed_angle_{span}.nc"
        with netCDF4.Dataset(series_file) as ds:
            start = days_since(year, ds["time"].units, ds["time"].calendar)
        k = year - int(span[:4])
        rows = slice(12 * k, 12 * k + 12)
        slice_nc = folder / "slice_monthly_insolation_fixed_angle.nc"
        np.testing.assert_allclose(read(series_file, "time_bnds")[rows] - start,
                                   read(slice_nc, "climatology_bnds"), rtol=RTOL, atol=RTOL)
        np.testing.assert_allclose(read(series_file, "insolation")[rows],
                                   read(slice_nc, "insolation"), rtol=FLOAT32_RTOL, atol=1e-4)
        np.testing.assert_allclose(read(series_file, "month_start_true_longitude")[rows],
                                   read(slice_nc, "month_start_true_longitude"), rtol=RTOL)
        with open(folder / "slice_month_table.csv") as f:
            table = list(csv.DictReader(line for line in f if not line.startswith("#")))
        table_file = out / f"fa_month_table_{span}.nc"
        for column in table[0]:
            if column == "month":
                continue
            expected = np.array([float(row[column]) for row in table])
            np.testing.assert_allclose(read(table_file, column)[rows], expected, atol=CSV_ATOL)


CALENDARS = [
    ModelCalendar("noleap"),
    ModelCalendar("360_day"),
    ModelCalendar("all_leap"),
    ModelCalendar("proleptic_gregorian"),
    ModelCalendar("standard"),
    ModelCalendar("julian", Anchor("perihelion", 1, 3, 0, 0)),
]


@pytest.mark.parametrize("calendar", CALENDARS, ids=lambda c: f"{c.name}-{c.anchor.kind}")
def test_fixed_angle_months_tile_every_model_year(tmp_path, calendar):
    anchor = calendar.anchor
    anchor_text = (f"anchor: {anchor.kind}, date: '{anchor.month:02d}-{anchor.day:02d} "
                   f"{anchor.hour:02d}:{anchor.minute:02d}'")
    # 130 ka to 124 ka at 1000 years per model year: the orbit's perihelion moves by about
    # 15 degrees per model year, so the months of successive years differ visibly.
    spec = write_spec(tmp_path, "tile", f"""
experiment: {{name: tile}}
transient: {{start_epoch: 130ka, end_epoch: 124ka, acceleration: 1000, first_model_year: 1999,
            years_per_file: 10}}
calendar: {{name: {calendar.name}, {anchor_text}}}
products: [month_table, monthly_insolation_fixed_angle]
grid: {{kind: zonal, resolution_deg: 30}}
""")
    build_transient(spec, tmp_path)
    table = tmp_path / "tile_month_table_1999-2005.nc"
    start = read(table, "fixed_angle_start_day").reshape(-1, 12)
    length = read(table, "fixed_angle_length_days").reshape(-1, 12)
    assert list(read(table, "month")[:13]) == [*range(1, 13), 1]
    years = np.arange(1999, 2006)
    lengths = np.array([calendar.year_length_days(int(y)) for y in years])
    # Within a model year the months join without gap or overlap.
    np.testing.assert_allclose(start[:, 1:], start[:, :-1] + length[:, :-1], atol=1e-9)
    # The 12 months span the year: exactly in calendars without leap years, within the
    # documented 0.15 day (equinox anchor) or 0.6 day (perihelion anchor) otherwise
    # (bcgen.solar_calendar.months, "Year length").
    leap = calendar.name in ("proleptic_gregorian", "standard", "julian")
    tolerance = (0.6 if anchor.kind == "perihelion" else 0.15) if leap else 1e-9
    assert np.all(np.abs(length.sum(axis=1) - lengths) <= tolerance)
    # From one model year to the next the seam is exactly the change of next year's January
    # start between this year's orbit and next year's (one orbit alone tiles exactly).
    orbits = solve(-130000.0 + 1000.0 * (years - 1999))
    for i, y in enumerate(years[:-1]):
        end_this = start[i, -1] + length[i, -1] - lengths[i]  # in days of year y + 1
        with_this_orbit = fixed_angle_months(orbits[i], calendar, solve(0.0), year=int(y) + 1)
        np.testing.assert_allclose(end_this, with_this_orbit.start_day[0], atol=1e-9)
        assert start[i + 1, 0] == pytest.approx(
            fixed_angle_months(orbits[i + 1], calendar, solve(0.0), year=int(y) + 1).start_day[0],
            abs=1e-9)
    # The insolation file's time bounds are the month table's, on the run's time axis.
    series_file = tmp_path / "tile_monthly_insolation_fixed_angle_1999-2005.nc"
    with netCDF4.Dataset(series_file) as ds:
        units, cal = ds["time"].units, ds["time"].calendar
        bounds = ds["time_bnds"][:]
    offsets = np.array([days_since(int(y), units, cal) for y in years])[:, None]
    np.testing.assert_allclose(bounds[:, 0].reshape(7, 12), start + offsets, atol=1e-9)
    np.testing.assert_allclose(bounds[:, 1].reshape(7, 12), start + length + offsets, atol=1e-9)


def test_fixed_angle_series_resumes_and_skips_complete_files(tmp_path):
    spec = write_spec(tmp_path, "again", """
experiment: {name: again}
transient: {start_epoch: 21ka, end_epoch: 20ka, acceleration: 250, years_per_file: 2}
products: [monthly_insolation_fixed_angle, month_table]
grid: {kind: zonal, resolution_deg: 30}
""")
    first = build_transient(spec, tmp_path)
    assert [f["status"] for f in first.files] == ["written"] * 6
    (tmp_path / first.files[-1]["file"]).unlink()  # as if the run had stopped before it
    second = build_transient(spec, tmp_path)
    assert [f["status"] for f in second.files] == ["skipped"] * 5 + ["written"]
