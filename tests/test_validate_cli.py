"""`bcgen validate`: exit status, JSON keys, text report and one-line errors (in-process)."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
import xarray as xr
from cli_checks import one_error_line
from published_tables import PMIP4
from validate_synthetic import orbit_table, synthetic_output, write_spec

from bcgen.cli import main

# The keys the issue requires, at the top level and in each finding.
TOP_KEYS = {"verdict", "max_abs_error_wm2", "rms_error_wm2", "findings"}
FINDING_KEYS = {"code", "description", "fitted_value", "misfit_before_wm2", "misfit_after_wm2"}


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("validate_cli")
    return {
        "spec": write_spec(folder),
        "ok": synthetic_output(folder, None, noise_wm2=1.0, seed=2, name="ok.nc"),
        "peri": synthetic_output(folder, "perihelion_opposite", frequency="daily", n_lon=4,
                                 name="peri.nc"),
        "shift": synthetic_output(folder, "equinox_day_shift", name="shift.nc"),
        "table": orbit_table(folder, None, name="table.csv"),
        "noisy": synthetic_output(folder, None, noise_wm2=30.0, seed=2, name="noisy.nc"),
        "cal360": synthetic_output(folder, None, calendar="360_day", name="cal360.nc"),
        "radians": with_latitude(folder, "radians.nc", units="radians", to_radians=True),
        "plain_degrees": with_latitude(folder, "plain_degrees.nc", units="degrees"),
        "lat_180": with_latitude(folder, "lat_180.nc", shift_deg=90.0),
        "folder": folder,
    }


def with_latitude(folder, name, units="degrees_north", to_radians=False, shift_deg=0.0):
    """A correct output whose latitude coordinate has other units or values."""
    src = synthetic_output(folder, None, name=f"src_{name}")
    with xr.open_dataset(src, decode_times=False) as ds:
        ds = ds.load()
    lat = ds["lat"].values + shift_deg
    ds = ds.assign_coords(lat=("lat", np.deg2rad(lat) if to_radians else lat,
                               {"units": units, "standard_name": "latitude"}))
    ds.to_netcdf(folder / name)
    return folder / name


def run(capsys, *argv):
    try:
        status = main(["validate", *argv])
    except SystemExit as exc:  # argparse usage errors
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


def test_consistent_exits_0_with_text_report(capsys, files):
    status, out, err = run(capsys, str(files["ok"]), "--spec", str(files["spec"]))
    assert status == 0 and err == ""
    assert "verdict: CONSISTENT" in out
    assert "max abs error (W m-2) per month and latitude band" in out


def test_inconsistent_exits_1_with_json_and_one_line(capsys, files):
    status, out, err = run(capsys, str(files["peri"]), "--spec", str(files["spec"]),
                           "--format", "json")
    assert status == 1
    data = json.loads(out)
    assert TOP_KEYS <= set(data)
    assert data["verdict"] == "inconsistent"
    assert data["max_abs_error_wm2"] > 10 and data["rms_error_wm2"] > 1
    for finding in data["findings"]:
        assert FINDING_KEYS <= set(finding)
    first = data["findings"][0]
    assert first["code"] == "perihelion_opposite"
    # PMIP midHolocene perihelion - 180 = 0.87 (Otto-Bliesner et al. 2017): the model used 180.87
    # (tests/published_tables.py)
    varpi = float(PMIP4["midHolocene"].perihelion_minus_180_deg)
    assert first["fitted_value"] == pytest.approx(180.0 + varpi, abs=0.005)
    assert first["misfit_after_wm2"] < 0.05 < first["misfit_before_wm2"]
    assert data["model"]["zonal_spread_wm2"] == pytest.approx(1.0, abs=1e-3)
    line = one_error_line(err, "bcgen: check failed: ")
    assert "inconsistent with the spec" in line and "most likely perihelion_opposite" in line


def test_text_report_names_the_shift(capsys, files):
    status, out, err = run(capsys, str(files["shift"]), "--spec", str(files["spec"]))
    assert status == 1
    assert "1. equinox_day_shift = 2 days" in out
    assert "worst places:" in out
    assert "most likely equinox_day_shift (2 days)" in one_error_line(err, "bcgen: check failed: ")


def test_orbit_table_and_tolerance_option(capsys, files):
    status, out, _ = run(capsys, str(files["table"]), "--spec", str(files["spec"]),
                         "--format", "json", "--tolerance-wm2", "0.5")
    data = json.loads(out)
    assert status == 0 and data["verdict"] == "consistent"
    assert data["tolerance_wm2"] == 0.5
    assert set(data["table_errors"]) == {"declination_deg", "distance_factor",
                                         "true_longitude_deg"}


@pytest.mark.parametrize("argv, message", [
    (["{folder}/absent.nc", "--spec", "{spec}"], r"absent.nc: no such file"),
    (["{ok}", "--spec", "{folder}/absent.yaml"], r"absent.yaml: spec file not found"),
    (["{ok}", "--spec", "{spec}", "--var", "tas"], r"no variable 'tas' \(--var\)"),
    (["{table}", "--spec", "{spec}", "--var", "rsdt"], r"--var applies to NetCDF files"),
    (["{ok}", "--spec", "{spec}", "--tolerance-wm2", "-1"],
     r"argument --tolerance-wm2: expected a number >= 0, got '-1'"),
    (["{ok}"], r"the following arguments are required: --spec"),
    # CF §4.1: latitude in degrees_north (or an alias); radians would be read as degrees
    (["{radians}", "--spec", "{spec}"],
     r"radians.nc:rsdt: latitude coordinate 'lat' has units 'radians'; expected degrees_north"),
    # plain degrees is the unit of a rotated pole's grid_latitude (CF §4.1)
    (["{plain_degrees}", "--spec", "{spec}"],
     r"plain_degrees.nc:rsdt: latitude coordinate 'lat' has units 'degrees'; expected "
     r"degrees_north"),
    (["{lat_180}", "--spec", "{spec}"],
     r"lat_180.nc:rsdt: latitude coordinate 'lat' has values outside \[-90, 90\]"),
])
def test_bad_input_exits_2_with_one_line(capsys, files, argv, message):
    import re

    argv = [a.format(**files) for a in argv]
    status, out, err = run(capsys, *argv)
    assert status == 2
    assert re.search(message, one_error_line(err))


def test_help_has_examples(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["validate", "--help"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    assert "examples:" in out and "--tolerance-wm2" in out and "--daily-method" in out
    assert "--accept-file-calendar" in out


def test_entry_point_exit_status(files):
    proc = subprocess.run([sys.executable, "-m", "bcgen", "validate", str(files["shift"]),
                           "--spec", str(files["spec"]), "--format", "json"],
                          capture_output=True, text=True, check=False)
    assert proc.returncode == 1
    assert json.loads(proc.stdout)["findings"][0]["code"] == "equinox_day_shift"
    assert proc.stderr.count("\n") == 1


def test_build_timestep_table_round_trip(capsys, tmp_path):
    # The per-timestep table that `bcgen build` writes for model unit tests has the columns
    # `bcgen validate` reads; the table of a correct orbit routine is consistent.
    spec = tmp_path / "tt.yaml"
    spec.write_text("experiment:\n  name: tt\nepoch: 6ka\ncalendar: {name: noleap}\n"
                    "products: [timestep_table]\ntimestep_table:\n  timestep_minutes: 360\n"
                    "  points:\n    - {lat_deg: 65, lon_deg: 0}\n", encoding="utf-8")
    assert main(["build", str(spec), "-o", str(tmp_path / "out")]) == 0
    capsys.readouterr()
    table = next((tmp_path / "out").glob("*timestep_table*.csv"))
    status, out, err = run(capsys, str(table), "--spec", str(spec), "--format", "json")
    data = json.loads(out)
    assert status == 0 and data["verdict"] == "consistent", err
    # 6 decimals of time_days (0.04 s) and 8 of the angles bound the differences
    assert data["table_errors"]["declination_deg"]["max_abs_error"] < 1e-6
    assert data["table_errors"]["point_insolation_wm2"]["max_abs_error"] < 0.01


def test_noisy_output_is_inconsistent_and_unexplained(capsys, files):
    # 30 W m-2 of random noise on a correct output: far noisier than the 1 W m-2 tolerance
    status, out, err = run(capsys, str(files["noisy"]), "--spec", str(files["spec"]),
                           "--format", "json")
    data = json.loads(out)
    assert status == 1 and data["verdict"] == "inconsistent"
    assert data["allowed_rms_error_wm2"] <= 2.0 and data["noise_wm2"] > data["noise_limit_wm2"]
    first = data["findings"][0]
    assert first["code"] == "unexplained" and first["explains"] is False
    assert all(f["explains"] is False for f in data["findings"][1:])
    line = one_error_line(err, "bcgen: check failed: ")
    assert "noisier than the tolerance" in line and "no catalogued mistake explains it" in line


def test_explaining_finding_is_marked(capsys, files):
    status, out, _ = run(capsys, str(files["shift"]), "--spec", str(files["spec"]),
                         "--format", "json")
    first = json.loads(out)["findings"][0]
    assert status == 1 and first["code"] == "equinox_day_shift" and first["explains"] is True


def test_file_calendar_needs_accepting(capsys, files):
    status, out, err = run(capsys, str(files["cal360"]), "--spec", str(files["spec"]),
                           "--format", "json")
    data = json.loads(out)
    assert status == 1 and data["findings"][0]["code"] == "calendar_differs"
    assert data["findings"][0]["fitted_value"] == "360_day"
    assert "calendar 360_day is not the spec's noleap" in one_error_line(
        err, "bcgen: check failed: ")
    status, out, err = run(capsys, str(files["cal360"]), "--spec", str(files["spec"]),
                           "--accept-file-calendar")
    assert status == 0 and err == "" and "verdict: CONSISTENT" in out


@pytest.mark.parametrize(("order", "why"), [
    (np.arange(365)[::-1], "time values of 'time' do not increase"),  # reversed
    (np.r_[0:100, 50:365], "time values of 'time' do not increase"),  # days 50-99 twice
    (np.arange(1), "one time step without bounds: cannot tell which interval it stands for"),
])
def test_validate_and_convert_refuse_a_broken_time_axis_alike(run_cli, tmp_path, order, why):
    # Daily noleap means stamped at noon, no bounds (CF 1.11 §4.4): a series whose times
    # go back, repeat, or cannot be placed is refused in the same words by both commands.
    import datetime

    import cftime

    times = [cftime.DatetimeNoLeap(1, 1, 1, 12) + datetime.timedelta(days=int(d)) for d in order]
    ds = xr.Dataset(
        {"rsdt": (("time", "lat"), np.full((len(order), 3), 300.0),
                  {"units": "W m-2", "standard_name": "toa_incoming_shortwave_flux"})},
        coords={"time": ("time", times), "lat": ("lat", [-45.0, 0.0, 45.0],
                                                   {"units": "degrees_north"})})
    path = tmp_path / "broken.nc"
    ds.to_netcdf(path, encoding={"time": {"units": "days since 0001-01-01",
                                          "calendar": "noleap"}})
    spec = write_spec(tmp_path)
    for argv in (["validate", path, "--spec", spec],
                 ["convert", path, "-o", tmp_path / "out.nc", "--epoch", "6ka"]):
        status, _, err = run_cli(argv)
        assert status == 2 and why in one_error_line(err), err
    assert not (tmp_path / "out.nc").exists()
