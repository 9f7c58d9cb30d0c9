"""A multi-file conversion writes its set of files all or nothing, one run per folder.

``bcgen convert FILES... -o DIR --spec transient.yaml`` writes one file per input into
DIR. Like a build (issue 12, class 3), the set is staged and moved in at once: a failure
on any file leaves DIR as it was (no new file, the old set untouched) and names the
file; a second run into DIR while one writes is refused with "another bcgen run (pid N,
started ...) is writing DIR"; ``--force`` replaces the set at once. Every case asserts
the exit status, the one-line message and that the inputs and the output folder are
byte-for-byte as they were. Also here: the CLI's limit on the number of input files.
"""

from __future__ import annotations

import errno
import os
import re
import signal
import subprocess
import time
from pathlib import Path

import pytest
from io_faults import FailingBackend
from test_bad_inputs import snapshot
from test_convert_transient import SPEC_TEXT, _write_split, model_output, spec

from bcgen.io import set_backend

LOCKED = (r"another bcgen run \(pid {pid}, started \d{{4}}-\d\d-\d\d \d\d:\d\d:\d\d UTC\) "
          r"is writing ")


@pytest.fixture(scope="module")
def run_files(tmp_path_factory) -> Path:
    """A transient run's output in three files (23 model years, 8 per file) and its spec."""
    s = spec()
    orbits = s.orbit.resolve(s.transient.epochs_of_model_years(s.transient.model_years()))
    folder = tmp_path_factory.mktemp("run")
    _write_split(model_output(orbits, s.transient.n_model_years), folder / "model", 8)
    (folder / "run.yaml").write_text(SPEC_TEXT)
    return folder


def _inputs(folder: Path) -> list[str]:
    return sorted(str(p) for p in (folder / "model").glob("*.nc"))


def _read(path: Path) -> str:
    try:
        return path.read_text()
    except OSError:
        return ""


def _one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


def test_a_failure_midway_leaves_no_output_and_names_the_file(run_files, tmp_path, run_cli):
    before = snapshot(run_files)
    out = tmp_path / "fixed_angle"
    failing = FailingBackend(OSError(errno.ENOSPC, "No space left on device"), after=1)
    with set_backend(failing):
        status, _, err = run_cli(["convert", *_inputs(run_files), "-o", out,
                                  "--spec", run_files / "run.yaml"])
    assert status == 2
    assert _one_line(err) == (f"bcgen: error: cannot write {out / 'tas_0009-0016.nc'}: no space "
                              "left on the device (disk full)")
    assert not out.exists()  # the folder the run created is gone with the staged files
    assert snapshot(run_files) == before


def test_a_forced_run_that_fails_keeps_the_old_set(run_files, tmp_path, run_cli):
    out = tmp_path / "fixed_angle"
    status, _, err = run_cli(["convert", *_inputs(run_files), "-o", out,
                              "--spec", run_files / "run.yaml"])
    assert status == 0, err
    (out / "notes.txt").write_text("the user's own file\n")
    before, inputs = snapshot(out), snapshot(run_files)
    with set_backend(FailingBackend(RuntimeError("NetCDF: HDF error"), after=2)):
        status, _, err = run_cli(["convert", *_inputs(run_files), "-o", out,
                                  "--spec", run_files / "run.yaml", "--force"])
    assert status == 2
    assert _one_line(err).startswith(f"bcgen: error: cannot write {out / 'tas_0017-0023.nc'}: ")
    assert snapshot(out) == before and snapshot(run_files) == inputs


def test_force_replaces_the_whole_set(run_files, tmp_path, run_cli):
    out = tmp_path / "fixed_angle"
    out.mkdir()
    for p in _inputs(run_files):
        (out / Path(p).name).write_text("an earlier conversion\n")
    (out / "notes.txt").write_text("the user's own file\n")
    inputs = snapshot(run_files)
    status, _, err = run_cli(["convert", *_inputs(run_files), "-o", out,
                              "--spec", run_files / "run.yaml"])
    assert status == 2  # without --force: refused, nothing touched
    assert _one_line(err) == (f"bcgen: error: {out / 'tas_0001-0008.nc'} and 2 more already "
                              "exist(s); use --force to overwrite")
    assert all((out / Path(p).name).read_text() == "an earlier conversion\n"
               for p in _inputs(run_files))
    status, _, err = run_cli(["convert", *_inputs(run_files), "-o", out,
                              "--spec", run_files / "run.yaml", "--force"])
    assert status == 0, err
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted([Path(p).name for p in _inputs(run_files)] + ["notes.txt"])
    for p in _inputs(run_files):  # each is a NetCDF-4 file now: the HDF5 signature, the
        # first 8 bytes of every HDF5 file (HDF5 file format specification, from memory)
        assert (out / Path(p).name).read_bytes()[:8] == b"\x89HDF\r\n\x1a\n"
    assert snapshot(run_files) == inputs


def test_a_second_conversion_into_the_folder_is_refused(run_files, tmp_path, bcgen_script):
    """Two real processes: the first is paused (SIGSTOP) while it holds the folder."""
    out = tmp_path / "fixed_angle"
    argv = bcgen_script + ["convert", *_inputs(run_files), "-o", str(out),
                           "--spec", str(run_files / "run.yaml")]
    first = subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and '"pid"' not in _read(out / ".bcgen.lock"):
            assert first.poll() is None, first.communicate()  # (the pid is written just
            time.sleep(0.002)  # after the lock is taken: pause the holder only then)
        first.send_signal(signal.SIGSTOP)
        before, inputs = snapshot(out), snapshot(run_files)
        second = subprocess.run(argv, capture_output=True, text=True, timeout=120)
        assert second.returncode == 2
        line = _one_line(second.stderr)
        assert re.fullmatch(
            "bcgen: error: " + LOCKED.format(pid=first.pid) + re.escape(
                f"{out}; wait for it to finish or write elsewhere"), line), line
        assert snapshot(out) == before and snapshot(run_files) == inputs
    finally:
        first.send_signal(signal.SIGCONT)
    _, err = first.communicate(timeout=120)
    assert first.returncode == 0, err
    assert sorted(p.name for p in out.iterdir()) == sorted(Path(p).name
                                                          for p in _inputs(run_files))


def test_two_inputs_of_one_name_are_refused(run_files, tmp_path, run_cli):
    other = tmp_path / "other"
    other.mkdir()
    first = _inputs(run_files)[0]
    os.link(first, other / Path(first).name)
    out = tmp_path / "fixed_angle"
    before = snapshot(run_files)
    status, _, err = run_cli(["convert", *_inputs(run_files), str(other / Path(first).name),
                              "-o", out, "--spec", run_files / "run.yaml"])
    assert status == 2
    assert "tas_0001-0008.nc" in _one_line(err)
    assert not out.exists() and snapshot(run_files) == before


def test_a_file_on_another_grid_is_refused_naming_it(run_files, tmp_path, run_cli):
    # The files of one run share the grid: a file whose points differ is named, no output.
    import xarray as xr

    inputs = _inputs(run_files)
    moved = tmp_path / Path(inputs[1]).name
    with xr.open_dataset(inputs[1], decode_times=False) as ds:
        ds.assign_coords(site=ds["site"] + 10).to_netcdf(moved)
    out = tmp_path / "fixed_angle"
    before = snapshot(run_files)
    status, _, err = run_cli(["convert", inputs[0], str(moved), inputs[2], "-o", out,
                              "--spec", run_files / "run.yaml"])
    assert status == 2
    assert _one_line(err).endswith(f"{moved}: coordinate 'site' differs from {inputs[0]}'s; "
                                   "the files of one conversion must share the grid")
    assert not out.exists() and snapshot(run_files) == before


def test_more_input_files_than_the_limit_are_refused_on_the_command_line(tmp_path,
                                                                         bcgen_script):
    """100,001 names (none exists: the count is checked before any is looked at).

    Short names keep the command line at about 0.6 MB, within Linux's ARG_MAX (2 MB here,
    ``getconf ARG_MAX``; each argument under its 128 KiB MAX_ARG_STRLEN, from memory).
    """
    from bcgen.sizes import MAX_INPUT_FILES

    before = snapshot(tmp_path)
    names = [f"{i:x}" for i in range(MAX_INPUT_FILES + 1)]
    done = subprocess.run(bcgen_script + ["convert", *names, "-o", "out.nc", "--epoch", "6ka"],
                          cwd=tmp_path, capture_output=True, text=True, timeout=120)
    assert done.returncode == 2
    assert _one_line(done.stderr) == ("bcgen: error: 100,001 input files; one conversion joins "
                                      "at most 100,000 (convert them in several runs)")
    assert snapshot(tmp_path) == before
