"""Transient runs: model-year mapping, agreement with time slices, gases, streaming, re-runs.

Sources of the expected values:
- the model-year mapping is the one documented in ``bcgen.spec.TransientSpec``
  and ``configs/demo.yaml`` (model year first + k has the epoch start + k x acceleration);
  the expected epochs below are worked out by hand from it;
- time-slice products come from ``bcgen.build`` on an equivalent time-slice
  spec (the main job's code path), which the transient series must reproduce;
- dates on the model calendar are converted by cftime (a reference library),
  not by bcgen;
- gas values are hand-computed in the comments next to each check;
- CF compliance by the IOOS compliance-checker (``tests/cf_checker.py``).
"""

from __future__ import annotations

import gc
import json
import os
import re
import signal
import subprocess
import sys
import time
import tracemalloc
import weakref
from pathlib import Path

import cftime
import netCDF4
import numpy as np
import pytest
from io_faults import FailingBackend, RecordingBackend

import bcgen.transient.pipeline as pipeline
import bcgen.transient.series as series_module
from bcgen import build
from bcgen.cli import main
from bcgen.errors import InputFileError, OutputError
from bcgen.io import SeriesFile, set_backend, sha256_of
from bcgen.orbit import solve
from bcgen.spec import load_spec
from bcgen.transient import build_transient
from bcgen.transient.gases import load_gas_table
from bcgen.transient.progress import Progress, format_duration

REPO = Path(__file__).resolve().parents[1]

#: float32 storage: values agree to a few units in the last place of a float32.
FLOAT32_RTOL = 1e-6


def write_spec(folder: Path, name: str, text: str):
    path = folder / f"{name}.yaml"
    path.write_text(text)
    return load_spec(path)


def read(path: Path, name: str) -> np.ndarray:
    with netCDF4.Dataset(path) as ds:
        ds.set_auto_mask(False)
        return np.asarray(ds[name][:])


def days_since(year: int, month: int, day: int, units: str, calendar: str) -> float:
    """Model date → days since the units' reference, computed by cftime (not bcgen)."""
    return float(
        cftime.date2num(
            cftime.datetime(year, month, day, calendar=calendar), units, calendar=calendar
        )
    )


def nc_files(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.suffix == ".nc")


def leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".tmp"))


# --- the model-year mapping --------------------------------------------------------------------
def test_acceleration_maps_model_years_to_epochs(tmp_path):
    spec = write_spec(
        tmp_path,
        "accel",
        """
experiment: {name: accel}
transient: {start_epoch: 130ka, end_epoch: 115ka, first_model_year: 850, acceleration: 10,
            years_per_file: 1000}
products: [orbit]
""",
    )
    result = build_transient(spec, tmp_path / "out")
    # 130 ka to 115 ka is 15,000 years; at 10 years per model year that is 1500 steps, so
    # 1501 model years: 850 ... 2350, in files 850-1849 and 1850-2350.
    assert [f["file"] for f in result.files] == [
        "accel_orbit_850-1849.nc",
        "accel_orbit_1850-2350.nc",
    ]
    first, second = (tmp_path / "out" / f["file"] for f in result.files)
    bp = np.concatenate([read(first, "epoch_years_bp"), read(second, "epoch_years_bp")])
    assert bp.size == 1501
    # By hand: model year 850 + k has 130,000 - 10 k years BP.
    assert bp[0] == 130_000  # model year 850
    assert bp[1] == 129_990  # model year 851
    assert bp[100] == 129_000  # model year 950
    assert bp[1000] == 120_000  # model year 1850, first of the second file
    assert bp[-1] == 115_000  # model year 2350
    # The orbit of each model year is the orbit of its epoch (Berger 1978 via bcgen.orbit).
    ecc = np.concatenate([read(first, "eccentricity"), read(second, "eccentricity")])
    epochs = -np.array([130_000.0, 129_000, 120_000, 115_000])
    np.testing.assert_allclose(ecc[[0, 100, 1000, -1]], solve(epochs).eccentricity, rtol=1e-12)
    # Time axis: days since 0850-01-01 on the noleap calendar; model year 950 starts on
    # 0950-01-01 (cftime: 100 years x 365 days = 36500 days).
    with netCDF4.Dataset(first) as ds:
        units, cal = ds["time"].units, ds["time"].calendar
        bounds = ds["time_bnds"][:]
    assert units == "days since 0850-01-01 00:00:00" and cal == "noleap"
    assert bounds[100, 0] == days_since(950, 1, 1, units, cal) == 36500.0
    assert bounds[100, 1] == days_since(951, 1, 1, units, cal)


def test_run_towards_the_past_reverses_the_mapping(tmp_path):
    spec = write_spec(
        tmp_path,
        "back",
        """
experiment: {name: back}
transient: {start_epoch: 6ka, end_epoch: 9ka, acceleration: 500}
products: [orbit]
""",
    )
    build_transient(spec, tmp_path)
    # By hand: 6 ka to 9 ka at 500 years per model year: model year 1 + k has 6000 + 500 k BP.
    assert read(tmp_path / "back_orbit_1-7.nc", "epoch_years_bp").tolist() == [
        6000,
        6500,
        7000,
        7500,
        8000,
        8500,
        9000,
    ]


# --- the same values as time slices --------------------------------------------------------------
GASES_CSV = """\
# invented values for a test
age_ka_bp,co2_ppm,ch4_ppb,n2o_ppb
0,280,700,270
6,264.4,597,262
127,275,685,255
130,280,700,260
"""


@pytest.mark.parametrize(
    "calendar, grid, method",
    [
        ("proleptic_gregorian", "{kind: regular, resolution_deg: 30}", "midday"),
        ("noleap", "{kind: zonal, resolution_deg: 15}", "day_average"),
    ],
)
def test_series_at_6ka_and_127ka_equals_time_slices(tmp_path, calendar, grid, method):
    (tmp_path / "gases.csv").write_text(GASES_CSV)
    # 127 ka to 6 ka at 1000 years per model year: 122 model years, 3 ... 124; model year
    # 3 has 127 ka and model year 124 has 6 ka. Year 124 is a leap year in the
    # proleptic Gregorian calendar (divisible by 4), so it has 366 days.
    common = f"""
calendar: {{name: {calendar}}}
grid: {grid}
insolation: {{daily_method: {method}}}
"""
    spec = write_spec(
        tmp_path,
        "series",
        f"""
experiment: {{name: series}}
transient: {{start_epoch: 127ka, end_epoch: 6ka, first_model_year: 3, acceleration: 1000,
            years_per_file: 60, greenhouse_gas_table: gases.csv}}
products: [orbit, greenhouse_gases, daily_insolation, monthly_insolation_fixed_day]
{common}""",
    )
    out = tmp_path / "transient"
    build_transient(spec, out)
    cases = [
        ("127ka", 3, "3-62", {"co2": 275, "ch4": 685, "n2o": 255}),
        ("6ka", 124, "123-124", {"co2": 264.4, "ch4": 597, "n2o": 262}),
    ]
    for epoch, year, span, gases in cases:
        gas_text = ", ".join(
            f"{k}: {{value: {v}, units: {'ppm' if k == 'co2' else 'ppb'}}}"
            for k, v in gases.items()
        )
        slice_spec = write_spec(
            tmp_path,
            f"slice{year}",
            f"""
experiment: {{name: slice}}
epoch: {epoch}
products: [orbit, greenhouse_gases, daily_insolation, monthly_insolation_fixed_day]
greenhouse_gases: {{{gas_text}}}
{common.replace(f"name: {calendar}}}", f"name: {calendar}, model_year: {year}}}")}""",
        )
        folder = tmp_path / f"slice{year}"
        build(slice_spec, folder)
        for product in ("daily_insolation", "monthly_insolation_fixed_day"):
            series_file = out / f"series_{product}_{span}.nc"
            with netCDF4.Dataset(series_file) as ds:
                units, cal = ds["time"].units, ds["time"].calendar
                bounds = ds["time_bnds"][:]
                start = days_since(year, 1, 1, units, cal)
                end = days_since(year + 1, 1, 1, units, cal)
                rows = (bounds[:, 0] >= start) & (bounds[:, 1] <= end)
                values = ds["insolation"][rows, ...]
            reference = read(folder / f"slice_{product}.nc", "insolation")
            assert values.shape == reference.shape
            np.testing.assert_allclose(values, reference, rtol=FLOAT32_RTOL, atol=1e-4)
            # The steps of the model year have the time slice's bounds, shifted to the year.
            slice_bounds = read(folder / f"slice_{product}.nc", "climatology_bnds")
            np.testing.assert_allclose(bounds[rows] - start, slice_bounds, atol=1e-9)
        if calendar == "proleptic_gregorian" and year == 124:
            assert read(folder / "slice_daily_insolation.nc", "insolation").shape[0] == 366
        k = year - (3 if span == "3-62" else 123)
        for name in (
            "eccentricity",
            "obliquity",
            "perihelion_longitude",
            "sun_longitude_at_perihelion",
            "precession_index",
        ):
            np.testing.assert_allclose(
                read(out / f"series_orbit_{span}.nc", name)[k],
                read(folder / "slice_orbit.nc", name),
                rtol=1e-12,
                atol=1e-15,
            )
        for gas in gases:
            np.testing.assert_allclose(
                read(out / f"series_greenhouse_gases_{span}.nc", gas)[k],
                read(folder / "slice_greenhouse_gases.nc", gas),
                rtol=1e-12,
            )


# --- greenhouse gases --------------------------------------------------------------------------
HAND_TABLE = """\
# invented test table; n2o is given in ppt to test the unit conversion
age_ka_bp,co2_ppm,ch4_ppb,n2o_ppt
10,250,650,265000
0,280,700,270000
5,260,600,260000
"""


def test_gas_interpolation_against_hand_computed_values(tmp_path):
    path = tmp_path / "ghg.csv"
    path.write_text(HAND_TABLE)
    table = load_gas_table(path)
    epochs = -1000.0 * np.array([6.0, 2.5, 7.5, 8.0, 0.0, 10.0])
    linear = table.interpolate(epochs, "linear")
    # 6 ka lies between the rows 5 ka (260 ppm) and 10 ka (250 ppm), a fifth of the way:
    #   260 + (6 - 5) / (10 - 5) * (250 - 260) = 258 ppm; CH4 600 + 0.2 * 50 = 610 ppb.
    # 2.5 ka, half-way between 0 ka (280) and 5 ka (260): 270 ppm; CH4 (700 + 600) / 2 = 650.
    # 7.5 ka: (260 + 250) / 2 = 255 ppm; 8 ka: 260 + 0.6 * (-10) = 254 ppm.
    # Rows keep their own values: 0 ka 280, 10 ka 250.
    np.testing.assert_allclose(linear["co2"], [258, 270, 255, 254, 280, 250], rtol=1e-12)
    np.testing.assert_allclose(linear["ch4"], [610, 650, 625, 630, 700, 650], rtol=1e-12)
    # N2O is in ppt in the table and written in ppb (1e-9): 265000 ppt = 265 ppb; at 6 ka
    #   (260000 + 0.2 * 5000) ppt = 261000 ppt = 261 ppb.
    np.testing.assert_allclose(linear["n2o"], [261, 265, 262.5, 263, 270, 265], rtol=1e-12)
    nearest = table.interpolate(epochs, "nearest")
    # 6 ka → row 5 ka; 2.5 ka is half-way between 0 and 5 ka → the older row, 5 ka;
    # 7.5 ka half-way between 5 and 10 ka → 10 ka; 8 ka → 10 ka.
    np.testing.assert_allclose(nearest["co2"], [260, 260, 250, 250, 280, 250])
    np.testing.assert_allclose(nearest["n2o"], [260, 260, 265, 265, 270, 265])


def test_gas_series_in_a_build_and_its_metadata(tmp_path):
    (tmp_path / "ghg.csv").write_text(HAND_TABLE)
    spec = write_spec(
        tmp_path,
        "g",
        """
experiment: {name: g}
transient: {start_epoch: 10ka, end_epoch: 0ka, acceleration: 500,
            greenhouse_gas_table: ghg.csv, greenhouse_gas_interpolation: linear}
products: [greenhouse_gases]
""",
    )
    build_transient(spec, tmp_path / "out")
    path = tmp_path / "out" / "g_greenhouse_gases_1-21.nc"
    co2 = read(path, "co2")
    # Model year 1 + k has 10,000 - 500 k years BP; model year 9 (k = 8) has 6 ka → 258 ppm
    # (hand computation above); model year 16 (k = 15) has 2.5 ka → 270 ppm.
    assert co2[8] == pytest.approx(258.0, rel=1e-12)
    assert co2[15] == pytest.approx(270.0, rel=1e-12)
    with netCDF4.Dataset(path) as ds:
        assert ds["co2"].units == "1e-6"
        assert ds["co2"].standard_name == "mole_fraction_of_carbon_dioxide_in_air"
        assert ds["n2o"].units == "1e-9"
        assert ds["co2"].interpolation_method == "linear"
        assert ds.greenhouse_gas_interpolation == "linear"
        assert "linear interpolation in time" in ds.greenhouse_gas_interpolation_method
        assert ds.greenhouse_gas_table == "ghg.csv"


def test_constant_gases_make_a_constant_series(tmp_path):
    spec = write_spec(
        tmp_path,
        "c",
        """
experiment: {name: c}
transient: {start_epoch: 10ka, end_epoch: 9ka, acceleration: 100}
greenhouse_gases: {co2: {value: 250, units: ppm}, ch4: {value: 0.5, units: ppm}}
products: [greenhouse_gases]
""",
    )
    build_transient(spec, tmp_path)
    np.testing.assert_allclose(read(tmp_path / "c_greenhouse_gases_1-11.nc", "co2"), 250.0)
    # 0.5 ppm of methane is written in ppb: 500.
    np.testing.assert_allclose(read(tmp_path / "c_greenhouse_gases_1-11.nc", "ch4"), 500.0)


@pytest.mark.parametrize(
    "table, message",
    [
        (
            "age_ka_bp,co2_ppm\n0,280\n10,250\n",
            r"ghg\.csv: age 12ka \(model year 1\) is outside the greenhouse-gas table, "
            r"which covers 10ka to 0ka",
        ),
        ("age_ka_bp,co2\n0,280\n20,250\n", r"ghg\.csv:1: column 'co2' is not a gas with its units"),
        (
            "age_ka_bp,co2_ppm\n0,280\n20,250\n0,260\n",
            r"ghg\.csv:4: the age of this row repeats that of line 2",
        ),
        ("kyr,co2_ppm\n0,280\n20,250\n", r"ghg\.csv:1: expected exactly one time column"),
        ("age_ka_bp,co2_ppm\n0,280\n20,x\n", r"ghg\.csv:3: expected numbers"),
    ],
)
def test_bad_gas_tables_are_refused_before_writing(tmp_path, table, message):
    (tmp_path / "ghg.csv").write_text(table)
    spec = write_spec(
        tmp_path,
        "bad",
        """
experiment: {name: bad}
transient: {start_epoch: 12ka, end_epoch: 0ka, acceleration: 1000,
            greenhouse_gas_table: ghg.csv}
products: [orbit, greenhouse_gases]
""",
    )
    with pytest.raises(InputFileError, match=message):
        build_transient(spec, tmp_path / "out")
    assert not (tmp_path / "out").exists()  # the folder it created is gone again


# --- streaming: chunks are written and released ------------------------------------------------
def _long_spec(folder: Path, n_years: int):
    # 0 ka towards the past, one model year per year of orbit, one file for the whole run.
    return write_spec(
        folder,
        f"long{n_years}",
        f"""
experiment: {{name: long{n_years}}}
transient: {{start_epoch: 0ka, end_epoch: {n_years - 1} BP, years_per_file: {n_years}}}
grid: {{kind: zonal, resolution_deg: 10}}
products: [daily_insolation]
""",
    )


def test_long_series_is_written_in_released_chunks(tmp_path, monkeypatch):
    # 5 model years per chunk: per_year = 18 latitudes x 366 days x 8 bytes x 4 temporaries.
    per_year = 18 * 366 * 8 * series_module._TEMPORARIES
    monkeypatch.setattr(series_module, "COMPUTE_BUDGET_BYTES", 5 * per_year)
    monkeypatch.setattr(series_module, "WRITE_BUDGET_BYTES", 18 * 4 * 400)  # 400 days per slab
    written, computed = [], []
    state = {"live_blocks": 0, "live_rows": 0}
    real_append = SeriesFile.append
    recording = RecordingBackend()
    real_compute = series_module.InsolationSeries.compute

    def counting_append(self, name, values):
        if name == "insolation":  # arrays are freed by reference counting, no gc needed
            state["live_blocks"] = max(state["live_blocks"], sum(r() is not None for r in written))
            written.append(weakref.ref(values))
        return real_append(self, name, values)

    def counting_compute(self, years):
        state["live_rows"] = max(state["live_rows"], sum(r() is not None for r in computed))
        out = real_compute(self, years)
        computed.append(weakref.ref(out["insolation"]))
        return out

    monkeypatch.setattr(SeriesFile, "append", counting_append)
    monkeypatch.setattr(series_module.InsolationSeries, "compute", counting_compute)

    # Warm-up: the first build imports modules and fills caches, which tracemalloc would count.
    build_transient(_long_spec(tmp_path, 10), tmp_path / "warm-up")
    peaks = {}
    for n_years in (200, 800):
        written.clear()
        computed.clear()
        recording.slabs.clear()
        spec = _long_spec(tmp_path, n_years)
        tracemalloc.start()
        with set_backend(recording):
            build_transient(spec, tmp_path / f"out{n_years}")
        peaks[n_years] = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        stored = [(start, rows) for _, name, start, rows in recording.slabs
                  if name == "insolation"]
        # 5 model years per chunk → n/5 computations; each chunk's 5 x 365 days are written in
        # slabs of at most 400 days → 5 slabs per chunk.
        assert len(computed) == n_years // 5
        assert len(written) == 5 * (n_years // 5)
        # The file receives its values in whole storage chunks, one after the other, each
        # written as soon as it is complete (only the last one may be shorter).
        rows = [n for _, n in stored]
        assert len(rows) > 1 and len(set(rows[:-1])) == 1 and rows[-1] <= rows[0]
        assert [start for start, _ in stored] == [i * rows[0] for i in range(len(rows))]
        gc.collect()
        assert all(r() is None for r in written + computed)
        path = tmp_path / f"out{n_years}" / f"long{n_years}_daily_insolation_1-{n_years}.nc"
        assert read(path, "insolation").shape == (365 * n_years, 18)
    # When a slab is written, no earlier slab is alive; when a chunk is computed, at most the
    # chunks waiting in the queue and the one being written are (bcgen.transient.pipeline).
    assert state["live_blocks"] == 0
    assert state["live_rows"] <= pipeline.QUEUE_SIZE + 1
    # Peak traced memory does not grow with the number of model years (four times as many
    # years, the same peak within 25 %), and stays well below the data of the whole run
    # (800 x 365 x 18 float32 = 21 MB).
    assert peaks[800] < 1.25 * peaks[200] + 2**18
    assert peaks[800] < 365 * 18 * 4 * 800 / 2


# --- interruption and re-runs ------------------------------------------------------------------
def _resumable_spec(folder: Path, name: str = "resume"):
    return write_spec(
        folder,
        name,
        f"""
experiment: {{name: {name}}}
transient: {{start_epoch: 10ka, end_epoch: 9ka, acceleration: 10, years_per_file: 20}}
grid: {{kind: zonal, resolution_deg: 10}}
products: [orbit, monthly_insolation_fixed_day]
""",
    )


def _check_complete_and_recorded(folder: Path, manifest: Path) -> dict:
    records = {r["file"]: r for r in json.loads(manifest.read_text())["files"]}
    for name in nc_files(folder):
        assert name in records, f"{name} is on disk but not in the manifest"
        assert sha256_of(folder / name) == records[name]["sha256"]
        with netCDF4.Dataset(folder / name) as ds:  # a complete, readable file
            assert len(ds.dimensions["time"]) == records[name]["time_steps"]
            assert np.all(np.isfinite(ds["time"][:]))
    return records


def test_interrupted_build_leaves_no_partial_file_and_resumes(tmp_path, monkeypatch):
    spec = _resumable_spec(tmp_path)
    out = tmp_path / "out"
    # Part-way through the run (101 model years, 12 files), the 26th slab write is interrupted.
    with set_backend(FailingBackend(KeyboardInterrupt(), after=25, slabs=True)), \
            pytest.raises(KeyboardInterrupt):
        build_transient(spec, out)
    assert leftovers(out) == []
    done = nc_files(out)
    assert 0 < len(done) < 12
    before = _check_complete_and_recorded(out, out / "resume_manifest.json")
    stamps = {name: (out / name).stat().st_mtime_ns for name in done}

    result = build_transient(spec, out)
    assert sorted(f["file"] for f in result.skipped) == done
    assert len(result.written) == 12 - len(done)
    assert {name: (out / name).stat().st_mtime_ns for name in done} == stamps
    after = _check_complete_and_recorded(out, out / "resume_manifest.json")
    assert len(after) == 12 and all(after[n]["sha256"] == before[n]["sha256"] for n in done)
    # The resumed run holds the same data as an uninterrupted one.
    fresh = tmp_path / "fresh"
    build_transient(_resumable_spec(tmp_path), fresh)
    for name in nc_files(fresh):
        variable = "insolation" if "insolation" in name else "eccentricity"
        np.testing.assert_array_equal(read(out / name, variable), read(fresh / name, variable))


def test_rerun_skips_identical_files_and_refuses_changed_ones(tmp_path):
    spec = _resumable_spec(tmp_path)
    out = tmp_path / "out"
    build_transient(spec, out)
    again = build_transient(spec, out)
    assert len(again.skipped) == 12 and not again.written
    # A file changed on disk is not skipped: refused without force, naming it.
    victim = out / "resume_orbit_21-40.nc"
    data = bytearray(victim.read_bytes())
    data[-1] ^= 0xFF
    victim.write_bytes(bytes(data))
    with pytest.raises(
        OutputError,
        match=r"resume_orbit_21-40\.nc already exists and differs "
        r"from the file recorded .*SHA-256 mismatch.*--force",
    ):
        build_transient(spec, out)
    # --force rebuilds every file, the changed one and the 11 identical ones alike.
    rebuilt = build_transient(spec, out, force=True)
    assert len(rebuilt.written) == 12 and not rebuilt.skipped
    # A deleted file is simply built again.
    (out / "resume_orbit_41-60.nc").unlink()
    assert [f["file"] for f in build_transient(spec, out).written] == ["resume_orbit_41-60.nc"]
    # Another description is in every file's attributes: every file is out of date, and a
    # re-run (without --force) rebuilds the run's own files, untouched since written.
    text = (
        (tmp_path / "resume.yaml")
        .read_text()
        .replace("name: resume}", "name: resume, description: x}")
    )
    changed = write_spec(tmp_path, "resume", text)
    assert len(build_transient(changed, out).written) == 12


def test_an_error_while_computing_leaves_no_partial_file(tmp_path, monkeypatch):
    spec = _resumable_spec(tmp_path)
    real_compute = series_module.InsolationSeries.compute
    calls = {"n": 0}

    def failing_compute(self, years):
        calls["n"] += 1
        if calls["n"] == 3:
            raise ValueError("simulated failure in the compute thread")
        return real_compute(self, years)

    monkeypatch.setattr(series_module.InsolationSeries, "compute", failing_compute)
    with pytest.raises(ValueError, match="simulated failure"):
        build_transient(spec, tmp_path / "out")
    assert leftovers(tmp_path / "out") == []
    # Model years 1-20 and 21-40 (orbit and insolation) were complete before the failure.
    assert nc_files(tmp_path / "out") == [
        "resume_monthly_insolation_fixed_day_1-20.nc",
        "resume_monthly_insolation_fixed_day_21-40.nc",
        "resume_orbit_1-20.nc",
        "resume_orbit_21-40.nc",
        "resume_orbit_41-60.nc",
    ]
    _check_complete_and_recorded(tmp_path / "out", tmp_path / "out" / "resume_manifest.json")


def test_file_not_in_the_manifest_is_refused(tmp_path):
    spec = _resumable_spec(tmp_path)
    out = tmp_path / "out"
    out.mkdir()
    (out / "resume_orbit_1-20.nc").write_bytes(b"someone else's file")
    with pytest.raises(
        OutputError,
        match=r"resume_orbit_1-20\.nc already exists and is not "
        r"recorded in resume_manifest\.json",
    ):
        build_transient(spec, out)
    assert nc_files(out) == ["resume_orbit_1-20.nc"]


SIGNAL_SPEC = """
experiment: {name: sig}
transient: {start_epoch: 0ka, end_epoch: 199 BP, years_per_file: 10}
grid: {kind: zonal, resolution_deg: 1}
products: [daily_insolation]
"""


def _signal_a_real_build(tmp_path: Path, signum: int):
    """Start ``bcgen build`` on SIGNAL_SPEC (20 files) and send ``signum`` as its first file lands.

    The build runs at a lower priority (nice 10) than this test, so that on a loaded
    machine the test still sees the first file and signals at once, while most of the
    run is still to do (the run takes seconds; the signal follows within milliseconds).
    """
    spec_path = tmp_path / "sig.yaml"
    spec_path.write_text(SIGNAL_SPEC)
    out = tmp_path / "out"
    first = out / "sig_daily_insolation_1-10.nc"  # the first file of the plan
    command = [sys.executable, "-m", "bcgen", "build", str(spec_path), "-o", str(out)]
    env = {**os.environ, "PYTHONPATH": str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    proc = subprocess.Popen(
        command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env, cwd=tmp_path
    )
    try:
        os.setpriority(os.PRIO_PROCESS, proc.pid, 10)
    except OSError:  # the process may already have ended; the check below says so
        pass
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and proc.poll() is None and not first.exists():
        time.sleep(0.002)
    proc.send_signal(signum)
    assert first.exists(), "the first file never appeared"
    _, err = proc.communicate(timeout=120)
    assert len(nc_files(out)) < 20, "the build ended before it could be interrupted"
    return proc.returncode, err.decode(), out, command, env


def _rerun_completes(out: Path, command, env, cwd: Path) -> None:
    done = nc_files(out)
    rerun = subprocess.run(command, capture_output=True, env=env, cwd=cwd, timeout=120)
    assert rerun.returncode == 0, rerun.stderr.decode()
    assert f"{20 - len(done)} files written, {len(done)} already complete" in rerun.stdout.decode()
    assert len(_check_complete_and_recorded(out, out / "sig_manifest.json")) == 20
    assert leftovers(out) == []


def test_sigint_to_a_real_build_leaves_valid_files_and_the_rerun_completes(tmp_path):
    status, err, out, command, env = _signal_a_real_build(tmp_path, signal.SIGINT)
    assert status == 130, err
    assert "interrupted" in err
    assert leftovers(out) == []
    done = nc_files(out)
    assert 0 < len(done) < 20
    _check_complete_and_recorded(out, out / "sig_manifest.json")
    _rerun_completes(out, command, env, tmp_path)


def test_sigterm_to_a_real_build_is_handled_like_an_interrupt(tmp_path):
    # SIGTERM is what batch schedulers send at a job's time limit; 143 = 128 + 15 is the
    # shell's status of a process ended by signal 15 (POSIX shell convention).
    status, err, out, command, env = _signal_a_real_build(tmp_path, signal.SIGTERM)
    assert status == 143, err
    assert err.splitlines() == ["bcgen: terminated; no partial output was left"]
    assert leftovers(out) == []
    done = nc_files(out)
    assert 0 < len(done) < 20
    _check_complete_and_recorded(out, out / "sig_manifest.json")
    _rerun_completes(out, command, env, tmp_path)


def test_rerun_removes_stale_temporaries_of_its_own_files_only(tmp_path):
    spec = _resumable_spec(tmp_path)
    out = tmp_path / "out"
    out.mkdir()
    # What a killed run leaves (SIGKILL: no clean-up): hidden temporaries of its own files
    # and of its manifest ...
    # (their names carry the pid of their writer, which has ended) ...
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True).stdout.strip()
    stale = [f".resume_orbit_1-20.nc.{dead}.0123456789ab.tmp",
             f".resume_monthly_insolation_fixed_day_81-100.nc.{dead}.fedcba987654.tmp",
             f".resume_manifest.json.{dead}.0123456789ab.tmp"]
    # ... and files that are not its own, or whose writer still runs, which must stay.
    alive = os.getppid()
    foreign = [f".other_orbit_1-20.nc.{dead}.0123456789ab.tmp", ".resume_orbit_1-20.nc.mine.tmp",
               f"resume_orbit_1-20.nc.{dead}.0123456789ab.tmp",
               f".resume_orbit_1-2.nc.{dead}.0123456789ab.tmp",
               f".resume_orbit_1-20.nc.{alive}.0123456789ab.tmp", "notes.tmp"]
    for name in stale + foreign:
        (out / name).write_bytes(b"\x89HDF\r\n\x1a\n partly written")
    result = build_transient(spec, out)
    assert len(result.written) == 12
    assert leftovers(out) == sorted(foreign)
    assert len(_check_complete_and_recorded(out, out / "resume_manifest.json")) == 12


# --- a full disk ------------------------------------------------------------------------------
def _free_blocks(monkeypatch, n: int) -> None:
    """os.statvfs reports ``n`` free blocks (f_bavail; a full disk has none)."""
    real = os.statvfs

    def statvfs(path):
        st = real(path)
        return os.statvfs_result((st.f_bsize, st.f_frsize, st.f_blocks, n, n, st.f_files,
                                  st.f_ffree, st.f_favail, st.f_flag, st.f_namemax))

    monkeypatch.setattr(os, "statvfs", statvfs)


@pytest.mark.parametrize(
    ("free", "reason"),
    [(0, r"no space left on the device \(disk full\)"), (10**6, r"NetCDF: HDF error")],
    ids=["full", "not-full"],
)
def test_failed_write_names_the_file_and_leaves_no_partial_file(tmp_path, monkeypatch, free,
                                                                 reason):
    # netCDF4 reports a failed HDF5 write as RuntimeError "NetCDF: HDF error" (from memory);
    # whether the disk is full is asked of the file system (statvfs f_bavail, POSIX).
    spec = _resumable_spec(tmp_path)
    out = tmp_path / "out"
    # The 26th slab write fails, part-way through the run (12 files).
    failing = FailingBackend(RuntimeError("NetCDF: HDF error"), after=25, slabs=True)
    _free_blocks(monkeypatch, free)
    with set_backend(failing), pytest.raises(OutputError) as info:
        build_transient(spec, out)
    failed = failing.failed
    assert re.fullmatch(rf"cannot write .*{re.escape(failed[0])}: {reason}", str(info.value))
    assert "\n" not in str(info.value)
    assert leftovers(out) == []
    done = nc_files(out)
    assert 0 < len(done) < 12 and failed[0] not in done
    _check_complete_and_recorded(out, out / "resume_manifest.json")
    monkeypatch.undo()
    assert len(build_transient(spec, out).written) == 12 - len(done)
    assert len(_check_complete_and_recorded(out, out / "resume_manifest.json")) == 12


class _FailingDataset:
    """A netCDF4.Dataset whose ``method`` fails as the library does when the disk fills up."""

    def __init__(self, ds, method: str) -> None:
        self._real, self._method = ds, method

    def __getattr__(self, name):
        attr = getattr(self._real, name)
        if name != self._method:
            return attr

        def fail(*args, **kwargs):
            if name == "close":  # the file is closed, but its last buffers were not written
                attr()
            raise RuntimeError("NetCDF: HDF error")

        return fail


@pytest.mark.parametrize("method", ["sync", "close"])
def test_series_file_reports_a_failed_flush_as_one_line(tmp_path, monkeypatch, method):
    _free_blocks(monkeypatch, 0)
    sf = SeriesFile(tmp_path / "x.nc")
    sf.define_dimension("time", 10)
    sf.define_dimension("lat", 3)
    sf.define_variable("v", "f4", ("time", "lat"), compress=True)
    real = sf._ds
    sf._ds = _FailingDataset(real, method)
    try:
        with pytest.raises(
            OutputError, match=r"^cannot write .*x\.nc: no space left on the device \(disk full\)$"
        ):
            with sf:
                sf.append("v", np.ones((10, 3), "f4"))  # one whole storage chunk: written, synced
                sf.close()
    finally:
        if real.isopen():
            real.close()
    assert list(tmp_path.iterdir()) == []


# --- the files: CF compliance, manifest, command line ------------------------------------------
def test_every_file_of_the_transient_demo_is_cf_compliant(tmp_path, cf_compliant):
    spec = load_spec(REPO / "configs" / "transient_demo.yaml")
    result = build_transient(spec, tmp_path)
    assert len(result.files) == 16
    for record in result.files:
        assert cf_compliant(tmp_path / record["file"]) == []


def test_leap_calendar_gridded_files_are_cf_compliant(tmp_path, cf_compliant):
    spec = write_spec(
        tmp_path,
        "leap",
        """
experiment: {name: leap}
transient: {start_epoch: 21ka, end_epoch: 20ka, acceleration: 250, first_model_year: 1999}
calendar: {name: standard}
grid: {kind: gaussian, nlat: 8}
products: [orbit, daily_insolation, monthly_insolation_fixed_day]
""",
    )
    build_transient(spec, tmp_path)
    for name in nc_files(tmp_path):
        assert cf_compliant(tmp_path / name) == []
    # Model years 1999-2003: 2000 is a leap year of the standard calendar → 366 days.
    time_bnds = read(tmp_path / "leap_daily_insolation_1999-2003.nc", "time_bnds")
    assert time_bnds.shape == (365 * 4 + 366, 2)
    units = "days since 1999-01-01 00:00:00"
    assert time_bnds[-1, 1] == days_since(2004, 1, 1, units, "standard")
    assert read(tmp_path / "leap_daily_insolation_1999-2003.nc", "insolation").shape == (
        365 * 4 + 366,
        8,
        16,
    )


def test_manifest_describes_every_file(tmp_path):
    spec = load_spec(REPO / "configs" / "transient_demo.yaml")
    build_transient(spec, tmp_path)
    manifest = json.loads((tmp_path / "transient-demo-holocene_manifest.json").read_text())
    assert manifest["kind"] == "transient"
    assert manifest["spec_sha256"] == spec.sha256
    assert manifest["transient"]["n_model_years"] == 301
    by_name = {r["file"]: r for r in manifest["files"]}
    assert sorted(by_name) == nc_files(tmp_path)
    record = by_name["transient-demo-holocene_daily_insolation_101-200.nc"]
    # Model years 101-200 have 9000 - 10 x 100 = 8000 BP to 9000 - 10 x 199 = 7010 BP.
    assert (record["first_model_year"], record["last_model_year"]) == (101, 200)
    assert (record["first_epoch"], record["last_epoch"]) == ("8ka", "7010 BP")
    assert record["time_steps"] == 100 * 365
    assert record["sha256"] == sha256_of(tmp_path / record["file"])
    assert len(record["parameters"]["settings_sha256"]) == 64
    # Each product's files depend on their own inputs only: the gas table makes the gas
    # files, not the insolation files.
    assert "transient.greenhouse_gas_table" not in record["parameters"]["inputs_sha256"]
    gases = by_name["transient-demo-holocene_greenhouse_gases_101-200.nc"]
    assert "transient.greenhouse_gas_table" in gases["parameters"]["inputs_sha256"]


def test_cli_summary_of_a_transient_build(tmp_path, capsys):
    args = ["build", str(REPO / "configs" / "transient_demo.yaml"), "-o", str(tmp_path)]
    assert main(args) == 0
    text = capsys.readouterr()
    assert "model years 1-301: epochs 9ka to 6ka" in text.out
    assert "16 files written, 0 already complete" in text.out
    assert text.err == ""  # no progress bar when stderr is not a terminal
    assert main(args) == 0
    assert "0 files written, 16 already complete and identical (skipped)" in capsys.readouterr().out


def test_summary_says_year_and_years(tmp_path, capsys):
    # One year of orbit per model year and one model year per file: singular nouns.
    write_spec(tmp_path, "one", """
experiment: {name: one}
transient: {start_epoch: 0ka, end_epoch: 2 BP, years_per_file: 1}
grid: {kind: zonal, resolution_deg: 30}
products: [orbit]
""")
    assert main(["build", str(tmp_path / "one.yaml"), "-o", str(tmp_path / "out")]) == 0
    text = capsys.readouterr().out
    assert "epochs 0ka to 2 BP, 1 year of orbit per model year, 1 model year per file;" in text
    write_spec(tmp_path, "ten", """
experiment: {name: ten}
transient: {start_epoch: 0ka, end_epoch: 90 BP, acceleration: 10, years_per_file: 5}
grid: {kind: zonal, resolution_deg: 30}
products: [orbit]
""")
    assert main(["build", str(tmp_path / "ten.yaml"), "-o", str(tmp_path / "out10")]) == 0
    assert ("10 years of orbit per model year, 5 model years per file;"
            in capsys.readouterr().out)


# --- the progress bar --------------------------------------------------------------------------
class FakeTerminal:
    def __init__(self, tty: bool):
        self.tty, self.text = tty, ""

    def isatty(self) -> bool:
        return self.tty

    def write(self, text: str) -> None:
        self.text += text

    def flush(self) -> None:
        pass


def test_progress_bar_shows_rate_and_time_left_only_on_a_terminal():
    now = [0.0]
    terminal = FakeTerminal(tty=True)
    bar = Progress(1000, "model years", stream=terminal, clock=lambda: now[0])
    now[0] = 10.0
    bar.advance(250)  # 250 years in 10 s: 25 per second, 750 left → 30 s
    assert "25%" in terminal.text and "250/1,000" in terminal.text
    assert "25/s" in terminal.text and "0:30 left" in terminal.text
    bar.close()
    assert terminal.text.endswith("\n")
    silent = FakeTerminal(tty=False)
    quiet = Progress(1000, stream=silent)
    quiet.advance(500)
    quiet.close()
    assert silent.text == ""
    assert format_duration(3725) == "1:02:05" and format_duration(float("nan")) == "--:--"


def test_build_draws_the_bar_when_asked(tmp_path, capsys):
    build_transient(_resumable_spec(tmp_path), tmp_path / "out", progress=True)
    err = capsys.readouterr().err
    # 101 model years with two products (two files per range of years): the bar counts
    # each model year once (transient spec above: 10 ka to 9 ka at acceleration 10).
    assert "resume: model years [" in err and "101/101" in err and " left" in err
