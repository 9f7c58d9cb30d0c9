"""Everyday habits of the ``bcgen`` command: help with examples, --version, -q/-v anywhere,
no colour when piped, JSON from every command that prints results, one-line usage errors.

These are conventions of command-line tools (common practice; the NO_COLOR convention is
no-color.org), checked on bcgen's own behaviour. Numbers in JSON are compared with the
Python API or with published values where one is named.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
from pathlib import Path

import netCDF4
import numpy as np
import pytest
from published_tables import PMIP4

import bcgen
from bcgen.cli import build_parser
from bcgen.errors import EpochError

REPO = Path(__file__).resolve().parents[1]
COMMANDS = build_parser().commands
SPEC = """\
experiment: {name: habits}
epoch: 6ka
grid: {kind: zonal, resolution_deg: 30}
products: [orbit, monthly_insolation_fixed_day]
"""
ANSI = re.compile(r"\x1b\[")


@pytest.fixture
def spec_file(tmp_path):
    path = tmp_path / "habits.yaml"
    path.write_text(SPEC)
    return path


def monthly_file(path: Path) -> Path:
    """A 12-month noleap climatology of tas(time, lat) with CF time bounds."""
    # noleap month lengths (CF 1.11 §4.4.1)
    edges = np.cumsum([0, 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31]).astype(float)
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("time", 12)
        nc.createDimension("lat", 2)
        nc.createDimension("bnds", 2)
        t = nc.createVariable("time", "f8", ("time",))
        t.units, t.calendar, t.bounds = "days since 0001-01-01 00:00:00", "noleap", "time_bnds"
        t[:] = 0.5 * (edges[:-1] + edges[1:])
        tb = nc.createVariable("time_bnds", "f8", ("time", "bnds"))
        tb[:, 0], tb[:, 1] = edges[:-1], edges[1:]
        la = nc.createVariable("lat", "f8", ("lat",))
        la.units, la[:] = "degrees_north", [-30.0, 30.0]
        v = nc.createVariable("tas", "f4", ("time", "lat"))
        v.units = "K"
        v[:] = np.repeat(280.0 + 10.0 * np.cos(np.arange(12) / 12 * 2 * np.pi), 2).reshape(12, 2)
    return path


# --- help and version ----------------------------------------------------------------------
def test_every_command_is_registered():
    # The README's Commands table lists these; a command that fails to import would vanish.
    assert set(COMMANDS) >= {"build", "orbit", "months", "insolation", "convert", "validate",
                             "plot"}


def test_every_listed_command_has_its_module():
    # bcgen/cli/__init__.py lists the subcommand modules; a listed name without a module
    # would be skipped silently (build_parser ignores a missing module).
    import bcgen.cli

    here = Path(bcgen.cli.__file__).parent
    missing = [name for name in bcgen.cli.COMMANDS if not (here / f"{name}.py").is_file()]
    assert missing == []
    assert COMMANDS == bcgen.cli.COMMANDS


@pytest.mark.parametrize("command", [None, *COMMANDS])
def test_help_shows_an_example_that_names_the_command(command, run_cli):
    argv = ["--help"] if command is None else [command, "--help"]
    status, out, err = run_cli(argv)
    assert (status, err) == (0, "")
    assert re.search(r"^examples?:", out, re.MULTILINE), out
    example = out[re.search(r"^examples?:", out, re.MULTILINE).end():]
    assert f"bcgen {command or ''}".strip() in example


def test_version(run_cli):
    status, out, err = run_cli(["--version"])
    assert (status, err) == (0, "")
    assert out == f"bcgen {bcgen.__version__}\n"
    # The version the package reports is the one it is installed as.
    declared = re.search(r'^version = "([^"]+)"', (REPO / "pyproject.toml").read_text(),
                         re.MULTILINE)[1]
    assert bcgen.__version__ == declared


# --- -q, -v and --debug before or after the command ------------------------------------------
@pytest.mark.parametrize("where", ["before", "after"])
def test_quiet_drops_the_summary_but_not_the_files(where, tmp_path, spec_file, run_cli):
    args = ["build", str(spec_file), "-o", str(tmp_path / "out")]
    argv = ["-q", *args] if where == "before" else [*args, "-q"]
    status, out, err = run_cli(argv)
    assert (status, out, err) == (0, "", "")
    assert (tmp_path / "out" / "habits_manifest.json").is_file()


def test_without_quiet_the_summary_is_printed(tmp_path, spec_file, run_cli):
    status, out, err = run_cli(["build", str(spec_file), "-o", str(tmp_path / "out")])
    assert (status, err) == (0, "")
    assert out.startswith("built habits (6ka) in ")


@pytest.mark.parametrize("argv", [["-v", "orbit", "6ka"], ["orbit", "6ka", "-v"],
                                  ["orbit", "--verbose", "6ka"]])
def test_verbose_adds_the_time_taken(argv, run_cli):
    status, out, err = run_cli(argv)
    assert status == 0 and out.startswith("# Earth's orbital elements")
    assert re.fullmatch(r"bcgen: orbit took \d+\.\d\d s\n", err)


def test_quiet_twice_also_drops_warnings(run_cli):
    # 5000 ka lies beyond the +-1 Myr in which Berger (1978) is commonly used: a warning.
    status, out, err = run_cli(["orbit", "5000ka"])
    assert status == 0 and err.startswith("bcgen: warning: epoch 5000ka is outside")
    for argv in (["-qq", "orbit", "5000ka"], ["-q", "orbit", "5000ka", "-q"],
                 ["orbit", "5000ka", "--quiet", "--quiet"]):
        status, out2, err = run_cli(argv)
        assert (status, err) == (0, "") and out2 == out


@pytest.mark.parametrize("argv", [["--debug", "orbit", "6000"], ["orbit", "6000", "--debug"]])
def test_debug_shows_the_exception_before_or_after_the_command(argv):
    from bcgen.cli import main

    with pytest.raises(EpochError, match="a bare number is ambiguous"):
        main(argv)


@pytest.mark.parametrize("command", COMMANDS)
def test_usage_errors_are_one_line(command, run_cli):
    status, out, err = run_cli([command, "--no-such-option"])
    assert status == 2 and out == ""
    assert err.count("\n") == 1
    assert err.startswith(f"bcgen: error: bcgen {command}: ")
    assert f"(see 'bcgen {command} --help')" in err


# --- no colour when piped ----------------------------------------------------------------------
def test_piped_output_has_no_terminal_escapes(tmp_path, spec_file, bcgen_script):
    # bcgen colours nothing; piped (not a terminal), nothing may carry ANSI escapes, whatever
    # the environment asks (FORCE_COLOR is honoured by some libraries).
    model = monthly_file(tmp_path / "model.nc")
    env_extra = {"FORCE_COLOR": "1", "CLICOLOR_FORCE": "1", "TERM": "xterm-256color"}
    runs = [
        ["orbit", "6ka", "21ka"],
        ["months", "127ka", "--reference", "1850CE"],
        ["insolation", "6ka", "--lat", "65", "0"],
        ["build", str(spec_file), "-o", str(tmp_path / "out")],
        ["convert", str(model), "-o", str(tmp_path / "fa.nc"), "--epoch", "6ka"],
        ["orbit", "6000"],  # an error
        ["orbit", "5000ka"],  # a warning
    ]
    env = {**os.environ, **env_extra}
    env.pop("NO_COLOR", None)
    for argv in runs:
        result = subprocess.run(bcgen_script + argv, capture_output=True, text=True, env=env,
                                cwd=tmp_path, timeout=120)
        assert not ANSI.search(result.stdout), argv
        assert not ANSI.search(result.stderr), argv
        assert "\r" not in result.stderr, argv  # no progress bar redrawn in place


# --- JSON from every command that prints results -----------------------------------------------
def test_orbit_json_matches_the_api(run_cli):
    status, out, _ = run_cli(["orbit", "6ka", "21ka", "--format", "json"])
    records = json.loads(out)
    elements = bcgen.solve(np.array([-6000.0, -21000.0]))
    assert [r["epoch"] for r in records] == ["6ka", "21ka"]
    np.testing.assert_allclose([r["eccentricity"] for r in records], elements.eccentricity)
    # PMIP4 midHolocene: e = 0.018682 (Otto-Bliesner et al. 2017, GMD 10, Table 1)
    assert round(records[0]["eccentricity"], 6) == float(PMIP4["midHolocene"].eccentricity)


def test_months_json(run_cli):
    status, out, _ = run_cli(["months", "6ka", "--format", "json"])
    months = json.loads(out)
    assert status == 0 and len(months) == 12
    # noleap: 365 days a year (CF 1.11 §4.4.1), tiled by the fixed-angle months
    assert sum(m["length_days"] for m in months) == pytest.approx(365.0, abs=1e-9)


def test_insolation_json(run_cli):
    status, out, _ = run_cli(["insolation", "6ka", "--lat", "65", "--format", "json"])
    record = json.loads(out)
    assert status == 0 and record["units"] == "W m-2"
    assert np.shape(record["insolation_wm2"]) == (1, 12)


def test_build_json_lists_the_files(tmp_path, spec_file, run_cli):
    status, out, _ = run_cli(["build", str(spec_file), "-o", str(tmp_path / "out"),
                              "--format", "json"])
    summary = json.loads(out)
    assert status == 0
    assert {f["file"] for f in summary["files"]} == {p.name for p in (tmp_path / "out").glob(
        "*.nc")}


def test_convert_json_reports_the_file_and_metadata(tmp_path, run_cli):
    model = monthly_file(tmp_path / "model.nc")
    target = tmp_path / "fa.nc"
    status, out, err = run_cli(["convert", str(model), "-o", str(target), "--epoch", "6ka",
                                "--format", "json"])
    assert (status, err) == (0, "")
    report = json.loads(out)
    assert report["file"] == str(target) and report["bytes"] == target.stat().st_size
    assert report["months"] == 12 and report["variables"] == ["tas"]
    assert report["calendar"] == "noleap" and report["to"] == "fixed-angle"
    with netCDF4.Dataset(target) as nc:
        for key, value in report["metadata"].items():
            stored = nc.getncattr(key)
            if isinstance(value, float):
                assert float(stored) == pytest.approx(value, rel=1e-15), key
            else:
                assert stored == value, key
    assert report["metadata"]["month_conversion_method"] == "killworth1996"
    # and -q does not silence JSON (it is the result)
    status, out, _ = run_cli(["-q", "convert", str(model), "-o", str(target), "--epoch", "6ka",
                              "--format", "json", "--force"])
    assert json.loads(out)["file"] == str(target)


def test_convert_text_line_and_quiet(tmp_path, run_cli):
    model = monthly_file(tmp_path / "model.nc")
    status, out, _ = run_cli(["convert", str(model), "-o", str(tmp_path / "a.nc"), "--epoch",
                              "6ka"])
    assert status == 0 and out.startswith(f"wrote {tmp_path / 'a.nc'}: 12 fixed-angle months")
    status, out, _ = run_cli(["convert", str(model), "-o", str(tmp_path / "b.nc"), "--epoch",
                              "6ka", "-q"])
    assert (status, out) == (0, "") and (tmp_path / "b.nc").is_file()


def test_validate_json(tmp_path, spec_file, run_cli):
    model = tmp_path / "rsdt.nc"
    monthly_file(model)
    with netCDF4.Dataset(model, "a") as nc:  # zero W m-2: a model that forgot the Sun
        v = nc.createVariable("rsdt", "f4", ("time", "lat"))
        v.units, v.standard_name = "W m-2", "toa_incoming_shortwave_flux"
        v[:] = np.zeros((12, 2), "f4")
    status, out, err = run_cli(["validate", str(model), "--spec", str(spec_file),
                                "--format", "json"])
    report = json.loads(out)
    assert status == 1 and report["verdict"] == "inconsistent"
    assert err.count("\n") == 1


def test_plot_json(tmp_path, run_cli):
    target = tmp_path / "months.png"
    status, out, err = run_cli(["plot", "month-lengths", "6ka", "-o", str(target),
                                "--format", "json"])
    assert (status, err) == (0, "")
    report = json.loads(out)
    assert report["file"] == str(target) and report["bytes"] == target.stat().st_size > 0
    assert target.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # the PNG signature (PNG spec)


@pytest.mark.parametrize("command", COMMANDS)
def test_every_command_that_prints_results_offers_json(command, run_cli):
    status, out, _ = run_cli([command, "--help"])
    assert re.search(r"--format \{[^}]*\bjson\b", out), f"bcgen {command} has no --format json"
