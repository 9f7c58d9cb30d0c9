"""One output folder, one writer: two real bcgen processes at once, and runs killed outright.

- Two ``bcgen build --force`` of one experiment at two epochs into one folder at the same
  time: each either finishes or is refused at once with "another bcgen run (pid N,
  started ...) is writing DIR"; the folder then holds one whole set, every file of the
  same epoch, matching its manifest (never files of two runs, never a stale checksum).
- A build killed with SIGKILL leaves its staging folder behind; the next run into the
  folder sweeps it once its owner is gone, and a temporary of a live process is left
  alone.
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import netCDF4
import pytest

LOCKED = r"another bcgen run (pid "

SPEC = ("experiment: {{name: same}}\nepoch: {epoch}\ngrid: {{kind: regular, resolution_deg: 2}}\n"
        "products: [orbit, daily_insolation, monthly_insolation_fixed_day]\n")


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _check_one_whole_set(out: Path) -> str:
    manifest = json.loads((out / "same_manifest.json").read_text())
    files = {f["file"]: f["sha256"] for f in manifest["files"]}
    assert {p.name for p in out.iterdir()} == set(files) | {"same_manifest.json"}
    for name, sha in files.items():
        assert _sha(out / name) == sha, name
    epochs = set()
    for name in files:
        if name.endswith(".nc"):
            with netCDF4.Dataset(out / name) as nc:
                epochs.add(nc.getncattr("bcgen_spec").split("epoch: ")[1].split("\n")[0])
    assert epochs == {manifest["epoch"]}, "files of two different runs in one folder"
    return manifest["epoch"]


@pytest.mark.parametrize("round_", range(2))
def test_two_forced_builds_into_one_folder_at_once(round_, tmp_path, bcgen_script):
    for epoch in ("6ka", "21ka"):
        (tmp_path / f"{epoch}.yaml").write_text(SPEC.format(epoch=epoch))
    first = subprocess.run(bcgen_script + ["build", "6ka.yaml", "-o", "out"], cwd=tmp_path,
                           capture_output=True, text=True, timeout=120)
    assert first.returncode == 0, first.stderr
    procs = [subprocess.Popen(bcgen_script + ["build", f"{e}.yaml", "-o", "out", "--force"],
                              cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                              text=True) for e in (("21ka", "6ka") if round_ else ("6ka", "21ka"))]
    results = [(p.wait(timeout=180), p.stderr.read()) for p in procs]
    for p in procs:
        p.stdout.close()
        p.stderr.close()
    for status, err in results:
        assert status in (0, 2), err
        if status == 2:
            assert err.startswith("bcgen: error: " + LOCKED) and "is writing out;" in err, err
    assert any(status == 0 for status, _ in results)
    _check_one_whole_set(tmp_path / "out")


def test_a_killed_build_is_swept_by_the_next_run(tmp_path, bcgen_script):
    (tmp_path / "a.yaml").write_text(SPEC.format(epoch="6ka"))
    out = tmp_path / "out"
    out.mkdir()
    # A temporary of a process that still runs (this test's parent) is never touched.
    live = out / f".same_orbit.nc.{os.getppid()}.0123456789ab.tmp"
    live.write_bytes(b"being written by someone else\n")
    proc = subprocess.Popen(bcgen_script + ["build", "a.yaml", "-o", "out"], cwd=tmp_path,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 60
    while proc.poll() is None and time.monotonic() < deadline:
        if list(out.glob(".bcgen-build-*/same_orbit.nc")):
            break
        time.sleep(0.002)
    proc.send_signal(signal.SIGKILL)
    proc.wait(timeout=60)
    assert proc.returncode == -signal.SIGKILL
    left = [p.name for p in out.iterdir()]
    assert any(n.startswith(".bcgen-build-") for n in left), left  # what SIGKILL leaves
    rerun = subprocess.run(bcgen_script + ["build", "a.yaml", "-o", "out"], cwd=tmp_path,
                           capture_output=True, text=True, timeout=120)
    assert rerun.returncode == 0, rerun.stderr
    names = {p.name for p in out.iterdir()}
    assert not [n for n in names if n.startswith(".bcgen")], names  # swept: owner gone
    assert live.name in names  # kept: its owner runs
    live.unlink()
    _check_one_whole_set(out)


def test_the_lock_names_its_holder_and_goes_with_it(tmp_path):
    # The lock file goes when its holder ends, even when killed (the kernel drops a flock).
    out = tmp_path / "out"
    out.mkdir()
    holder = subprocess.Popen(
        [sys.executable, "-c", "import sys, time; from bcgen.io.lock import FolderLock; "
         "FolderLock(sys.argv[1]).acquire(); print('held', flush=True); time.sleep(60)",
         str(out)], stdout=subprocess.PIPE, text=True)
    assert holder.stdout.readline().strip() == "held"
    from bcgen.errors import OutputError
    from bcgen.io.lock import FolderLock

    with pytest.raises(OutputError, match=rf"^another bcgen run \(pid {holder.pid}, started "):
        FolderLock(out).acquire()
    holder.kill()
    holder.wait()
    holder.stdout.close()
    with FolderLock(out):  # free again
        pass
    assert list(out.iterdir()) == []


@pytest.mark.parametrize("force", [False, True])
def test_two_plots_into_one_path_at_once(force, tmp_path, bcgen_script):
    """A figure is one file renamed into place whole: no lock is needed, and none is taken.

    Without --force one run writes and the other is refused ("already exists", never a
    clobbered file); with --force both finish and the file is one whole figure.
    """
    pytest.importorskip("matplotlib")
    procs = [subprocess.Popen(bcgen_script + ["plot", "orbit", f"{e}ka..{e + 10}ka/1ka", "-o",
                                              "fig.png"] + (["--force"] if force else []),
                              cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                              text=True) for e in (0, 100)]
    results = [(p.wait(timeout=120), p.communicate()[1]) for p in procs]
    statuses = sorted(status for status, _ in results)
    if force:
        assert statuses == [0, 0], results
    else:
        assert statuses == [0, 2], results
        err = next(err for status, err in results if status == 2)
        assert err.strip() == "bcgen: error: fig.png already exists; use --force to overwrite it"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["fig.png"]  # no temporary, no lock
    # The PNG signature, the first 8 bytes of every PNG file (RFC 2083, section 3.1).
    assert (tmp_path / "fig.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
