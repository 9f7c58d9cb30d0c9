"""SIGINT and SIGTERM at random moments of real runs: a clean exit, and a folder that is whole.

A property test over real processes of the installed ``bcgen`` script: each run is a
build (the suite's largest latitude-longitude writes, a 0.5 degree daily field), a
conversion or a transient run, interrupted after a random delay by SIGINT or SIGTERM
(sometimes twice, as an impatient user or a scheduler does). Whatever the moment:

- the exit status is 130 after SIGINT or 143 after SIGTERM (the shell's 128 + signal
  number, POSIX), or 0 when the run ended first, and never a crash (a negative status,
  SIGSEGV or SIGABRT);
- stderr is the one clean line, and no traceback;
- an interrupted build or conversion leaves the folder exactly as it was; a finished one
  leaves complete files that match the manifest; an interrupted transient run leaves
  only complete files, each recorded with its SHA-256, and no temporary file.

Moments are drawn from the start of bcgen's own code (its console script catches the
signals first thing; Python's start-up before it is not bcgen's), across imports and
reading, the write, and the closing of inputs and exit; multi-file conversions into a
folder are interrupted too. The processes run at a lower priority (nice 10) than the
test, so that on a loaded machine the signal still lands while they work. The random
delays come from fixed seeds (the case id), so a failure can be replayed.
"""

from __future__ import annotations

import hashlib
import json
import os
import random
import signal
import subprocess
import time
from pathlib import Path

import pytest
from test_bad_inputs import big_model_file, snapshot

MESSAGES = {130: "bcgen: interrupted; no partial output was left",
            143: "bcgen: terminated; no partial output was left"}

BIG_BUILD = ("experiment: {name: big}\nepoch: 6ka\ngrid: {kind: regular, resolution_deg: 0.5}\n"
             "products: [orbit, daily_insolation, monthly_insolation_fixed_day]\n")
TRANSIENT = ("experiment: {name: tr}\ntransient: {start_epoch: 10ka, end_epoch: 9ka, "
             "acceleration: 20, years_per_file: 10}\ngrid: {kind: regular, resolution_deg: 10}\n"
             "products: [orbit, daily_insolation]\n")


def _run_and_signal(argv, cwd: Path, rng: random.Random, bcgen_script, start_after=None,
                    most_seconds=1.5):
    """Start bcgen, wait a random moment (after ``start_after`` is true), signal it."""
    proc = subprocess.Popen(bcgen_script + argv, cwd=cwd, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    try:
        os.setpriority(os.PRIO_PROCESS, proc.pid, 10)
    except OSError:
        pass
    if start_after is not None:
        deadline = time.monotonic() + 60
        while proc.poll() is None and time.monotonic() < deadline and not start_after(proc):
            time.sleep(0.002)
    time.sleep(rng.uniform(0.0, most_seconds))
    signals = [rng.choice([signal.SIGINT, signal.SIGTERM])]
    if rng.random() < 0.3:
        signals.append(rng.choice([signal.SIGINT, signal.SIGTERM]))
    for sig in signals:
        if proc.poll() is None:
            proc.send_signal(sig)
            time.sleep(rng.uniform(0.0, 0.05))
    out, err = proc.communicate(timeout=120)
    return proc.returncode, out, err, signals


def _check_exit(status, err, signals):
    """Check the status and stderr; return True when the run was stopped (not finished).

    When two signals were sent, both may have arrived before the process ran its handler
    (a loaded machine): it then stops for one of them, with that one's status and line.
    """
    assert status >= 0, f"the process died of signal {-status}: {err}"
    assert "Traceback" not in err and "Exception ignored" not in err, err
    if status == 0:
        return False
    assert status in {128 + s for s in signals}, (status, err)
    assert err.splitlines() == [MESSAGES[status]]
    return True


def _handlers_installed(pid: int) -> bool:
    """Tell whether bcgen catches SIGTERM yet (bit 15 of SigCgt in /proc/PID/status, Linux).

    Before that the interpreter is still starting (Python's own start-up, which no program
    can make clean); bcgen catches SIGTERM from the first line of its console script.
    """
    try:
        status = Path(f"/proc/{pid}/status").read_text()
    except OSError:
        return True
    mask = int(next(line.split()[1] for line in status.splitlines()
                    if line.startswith("SigCgt:")), 16)
    return bool(mask & (1 << (signal.SIGTERM - 1)))


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize("seed", range(4))
def test_build_interrupted_at_random_moments(seed, tmp_path, bcgen_script):
    rng = random.Random(f"build-{seed}")
    (tmp_path / "big.yaml").write_text(BIG_BUILD)
    force = seed % 2 == 1  # half the runs replace an earlier set
    if force:
        (tmp_path / "out").mkdir()
        for name in ("big_orbit.nc", "big_daily_insolation.nc",
                     "big_monthly_insolation_fixed_day.nc", "big_manifest.json"):
            (tmp_path / "out" / name).write_text(f"an earlier {name}\n")
    before = snapshot(tmp_path)
    status, out, err, sent = _run_and_signal(
        ["build", "big.yaml", "-o", "out"] + (["--force"] if force else []), tmp_path, rng,
        bcgen_script, start_after=lambda proc: list(tmp_path.glob("out/.bcgen-build-*")))
    if _check_exit(status, err, sent):
        assert snapshot(tmp_path) == before
    else:
        manifest = json.loads((tmp_path / "out" / "big_manifest.json").read_text())
        files = {f["file"]: f["sha256"] for f in manifest["files"]}
        assert {p.name for p in (tmp_path / "out").iterdir()} == set(files) | {"big_manifest.json"}
        assert all(_sha(tmp_path / "out" / n) == h for n, h in files.items())


@pytest.mark.parametrize("seed", range(2))
def test_conversion_interrupted_at_random_moments(seed, tmp_path, bcgen_script):
    rng = random.Random(f"convert-{seed}")
    big_model_file(tmp_path / "big.nc", years=20)
    before = snapshot(tmp_path)
    status, out, err, sent = _run_and_signal(
        ["convert", "big.nc", "-o", "out.nc", "--epoch", "6ka"], tmp_path, rng, bcgen_script,
        start_after=lambda proc: list(tmp_path.glob(".out.nc.*.tmp")))
    if _check_exit(status, err, sent):
        assert snapshot(tmp_path) == before
    else:
        assert set(snapshot(tmp_path)) == set(before) | {"out.nc"}


@pytest.mark.parametrize(("seed", "moment"), [(0, "start"), (1, "start"), (2, "end"),
                                              (3, "end")])
def test_conversion_interrupted_while_starting_or_ending(seed, moment, tmp_path, bcgen_script):
    """The moments around the write: imports and reading, then closing the inputs and exit.

    "start": from the moment bcgen's handlers are in place (imports of numpy, xarray and
    the netCDF library, opening the input; a stop there once came out as numpy's
    ImportError); "end": from the moment the output is in place (the reader's files
    closed, the report, the interpreter's exit; once a traceback from a file manager's
    destructor).
    """
    rng = random.Random(f"convert-{moment}-{seed}")
    big_model_file(tmp_path / "big.nc", years=4)
    before = snapshot(tmp_path)
    if moment == "start":
        def start(proc):
            return _handlers_installed(proc.pid)
    else:
        def start(proc):
            return (tmp_path / "out.nc").exists()
    status, out, err, sent = _run_and_signal(
        ["convert", "big.nc", "-o", "out.nc", "--epoch", "6ka"], tmp_path, rng, bcgen_script,
        start_after=start,
        most_seconds=1.0 if moment == "start" else 0.15)
    if _check_exit(status, err, sent):
        assert snapshot(tmp_path) == before
    else:
        assert set(snapshot(tmp_path)) == set(before) | {"out.nc"}


@pytest.mark.parametrize("seed", range(2))
def test_multi_file_conversion_interrupted_at_random_moments(seed, tmp_path, bcgen_script):
    """A transient run's files converted into a folder: interrupted, the folder never appears."""
    from test_convert_transient import SPEC_TEXT, _write_split, model_output, spec

    rng = random.Random(f"convert-set-{seed}")
    s = spec()
    orbits = s.orbit.resolve(s.transient.epochs_of_model_years(s.transient.model_years()))
    paths = _write_split(model_output(orbits, s.transient.n_model_years), tmp_path / "model", 8)
    (tmp_path / "run.yaml").write_text(SPEC_TEXT)
    before = snapshot(tmp_path)
    status, out, err, sent = _run_and_signal(
        ["convert", *map(str, paths), "-o", "out", "--spec", "run.yaml"], tmp_path, rng,
        bcgen_script, start_after=lambda proc: _handlers_installed(proc.pid), most_seconds=3.0)
    if _check_exit(status, err, sent):
        assert snapshot(tmp_path) == before
    else:
        assert sorted(p.name for p in (tmp_path / "out").iterdir()) == [p.name for p in paths]


@pytest.mark.parametrize("seed", range(2))
def test_transient_interrupted_at_random_moments(seed, tmp_path, bcgen_script):
    rng = random.Random(f"transient-{seed}")
    (tmp_path / "tr.yaml").write_text(TRANSIENT)
    status, out, err, sent = _run_and_signal(
        ["build", "tr.yaml", "-o", "out"], tmp_path, rng, bcgen_script,
        start_after=lambda proc: list(tmp_path.glob("out/.*.tmp")))
    _check_exit(status, err, sent)
    out_dir = tmp_path / "out"
    names = {p.name for p in out_dir.iterdir()} if out_dir.exists() else set()
    assert not [n for n in names if n.endswith(".tmp") or n.startswith(".bcgen")], names
    done = {n for n in names if n.endswith(".nc")}
    if done:  # every complete file is recorded with its checksum
        manifest = json.loads((out_dir / "tr_manifest.json").read_text())
        recorded = {f["file"]: f["sha256"] for f in manifest["files"]}
        assert done <= set(recorded)
        assert all(_sha(out_dir / n) == recorded[n] for n in done)
    # The re-run completes the set and skips what was complete.
    rerun = subprocess.run(bcgen_script + ["build", "tr.yaml", "-o", "out"], cwd=tmp_path,
                           capture_output=True, text=True, timeout=120)
    assert rerun.returncode == 0, rerun.stderr
    assert len(list(out_dir.glob("*.nc"))) == 12  # 51 model years, 6 files x 2 products
