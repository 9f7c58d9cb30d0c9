"""A set of files replaced all at once, and the sweep of what killed runs left behind.

:func:`replace_all` moves a complete set of staged files into an output folder so that
the folder holds either the whole old set or the whole new set: the old files are
first moved aside into the staging folder, then the new ones moved in; any failure
moves the new ones out and the old ones back, and names the file that failed. The old
set is deleted only after the new set, manifest included, is in place. SIGINT and
SIGTERM are held while the files are moved (:func:`bcgen.io.signals.held_signals`).

A run killed outright (SIGKILL, a node failure) can leave temporary files
(:func:`bcgen.io.atomic.temporary_name`) and a staging folder. Both carry the process
id of their writer; :func:`sweep_stale_temporaries` deletes only those whose writer
is no longer running, so a run never deletes a file another live run is writing.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import uuid
from collections.abc import Callable, Iterable, Iterator, Sequence
from pathlib import Path

from bcgen.errors import OutputError
from bcgen.io.atomic import prepare_output_folder, temporary_owner
from bcgen.io.lock import FolderLock
from bcgen.io.signals import held_signals

#: Prefix of the hidden staging folders of builds (``.bcgen-build-<pid>.<hex>``).
STAGE_PREFIX = ".bcgen-build-"
_STAGE = re.compile(rf"{re.escape(STAGE_PREFIX)}(?P<pid>[0-9]+)\.[0-9a-f]{{12}}")


def make_stage(directory: Path) -> Path:
    """Create a hidden staging folder in ``directory``, named with this process id."""
    stage = Path(directory) / f"{STAGE_PREFIX}{os.getpid()}.{uuid.uuid4().hex[:12]}"
    stage.mkdir()
    return stage


def process_is_running(pid: int) -> bool:
    """Tell whether a process ``pid`` exists on this machine (signal 0, POSIX ``kill``)."""
    if pid == os.getpid():
        return True
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # it exists, owned by someone else
        return True
    except OSError:  # pragma: no cover - cannot tell: assume it runs (never delete its files)
        return True
    return True


def sweep_stale_temporaries(directory: Path, names: Iterable[str]) -> list[Path]:
    """Delete temporaries and staging folders in ``directory`` whose writer is gone.

    Only temporaries of the files ``names`` (this run's own files) and bcgen's staging
    folders are looked at, and only those whose owner process is no longer running
    are deleted; returns what was deleted.
    """
    wanted = set(names)
    removed = []
    for entry in os.scandir(directory):
        if not entry.name.startswith("."):
            continue
        if entry.is_dir(follow_symlinks=False):
            m = _STAGE.fullmatch(entry.name)
            if m and not process_is_running(int(m["pid"])):
                shutil.rmtree(entry.path, ignore_errors=True)
                removed.append(Path(entry.path))
            continue
        owner = temporary_owner(entry.name)
        if owner is None or owner[0] not in wanted or process_is_running(owner[1]):
            continue
        if not entry.is_file(follow_symlinks=False):
            continue
        try:
            os.unlink(entry.path)
        except FileNotFoundError:
            continue
        except OSError as exc:
            raise OutputError(f"cannot delete the stale temporary file {entry.path}: "
                              f"{exc.strerror or exc}") from None
        removed.append(Path(entry.path))
    return removed


def replace_all(stage: Path, directory: Path, names: Sequence[str], *,
                remove: Sequence[str] = ()) -> None:
    """Move the files ``names`` from ``stage`` into ``directory``, all or nothing.

    Parameters
    ----------
    stage : pathlib.Path
        A staging folder on the same file system (inside ``directory``) holding every
        file of ``names``, complete. The old files are moved aside into
        ``stage/.old/`` and deleted with the staging folder by the caller.
    directory : pathlib.Path
        The output folder.
    names : sequence of str
        The new set, in the order it is moved in: put the manifest last.
    remove : sequence of str
        Files of the old set that the new set does not have (an older manifest's
        files): moved aside with the others, so the folder ends with the new set only.

    Raises
    ------
    OutputError
        A file that could not be moved, named; the folder is back to the old set.
    """
    aside = stage / ".old"
    aside.mkdir(exist_ok=True)
    moved_aside: list[str] = []
    moved_in: list[str] = []
    with held_signals():
        try:
            for name in [*names, *(r for r in remove if r not in names)]:
                target = directory / name
                if target.is_dir() and not target.is_symlink():
                    raise OutputError(f"cannot write {target}: it is a folder")
                if os.path.lexists(target):
                    _move(target, aside / name)
                    moved_aside.append(name)
            for name in names:
                _move(stage / name, directory / name)
                moved_in.append(name)
        except OutputError as exc:
            problems = _roll_back(stage, directory, aside, moved_in, moved_aside)
            raise OutputError(str(exc) + (f"; {problems}" if problems else
                                          "; the folder is as it was")) from None


def _move(source: Path, target: Path) -> None:
    try:
        os.rename(source, target)
    except OSError as exc:
        what = target if target.parent.name != ".old" else source
        raise OutputError(f"cannot replace {what}: {exc.strerror or exc}") from None


def _roll_back(stage, directory, aside, moved_in, moved_aside) -> str:
    failed = []
    for name in reversed(moved_in):
        try:
            os.rename(directory / name, stage / name)
        except OSError:
            failed.append(name)
    for name in reversed(moved_aside):
        try:
            os.rename(aside / name, directory / name)
        except OSError:
            failed.append(name)
    if failed:  # keep what could not go back where the user will find it, never deleted
        kept = directory / f".bcgen-old-{os.getpid()}.{uuid.uuid4().hex[:12]}"
        try:
            os.rename(aside, kept)
        except OSError:
            kept = aside
        return f"could not restore {', '.join(failed)}: the old files are in {kept}"
    return ""


@contextlib.contextmanager
def output_set(directory, names: Sequence[str], *, force: bool,
               previous: Callable[[], Sequence[str]] = list) -> Iterator[Path]:
    """Write a set of files into ``directory`` all or nothing, as its one writer.

    Creates the folder if needed and takes its lock (:class:`bcgen.io.lock.FolderLock`);
    refuses, unless ``force``, when a file of ``names`` is there already; sweeps what
    killed runs left; yields a staging folder to write every file of ``names`` into,
    and when the block ends without an error moves the set in at once
    (:func:`replace_all`, ``names`` in order: put a manifest last). Whatever happens,
    the staging folder and the lock go, and a folder this call created is removed
    again if it is left empty. Errors name the file where it was going.

    Parameters
    ----------
    previous : callable, optional
        Called under the lock with ``force``: files of an earlier set that the new one
        replaces without writing them again (moved aside with the others).
    """
    directory = Path(directory)
    created = not directory.exists()
    stage = lock = None
    try:
        prepare_output_folder(directory)
        with held_signals():  # no stop between taking the lock and knowing we hold it
            lock = FolderLock(directory).acquire()
        remove = list(previous()) if force else []
        existing = [n for n in names if os.path.lexists(directory / n)]
        if existing and not force:
            more = f" and {len(existing) - 1} more" if len(existing) > 1 else ""
            raise OutputError(f"{directory / existing[0]}{more} already exist(s); use --force "
                              "to overwrite")
        sweep_stale_temporaries(directory, names)
        stage = make_stage(directory)
        yield stage
        replace_all(stage, directory, names, remove=remove)
    except OutputError as exc:  # name the file where it was going, not the staging folder
        message = str(exc) if stage is None else str(exc).replace(str(stage), str(directory))
        raise OutputError(message) from None
    except OSError as exc:
        raise OutputError(f"cannot write in {directory}: {exc.strerror or exc}") from None
    finally:
        with held_signals():  # a second interrupt waits until the clean-up is done
            if stage is not None:
                shutil.rmtree(stage, ignore_errors=True)
            if lock is not None:
                lock.release()
            if created and directory.is_dir() and not any(directory.iterdir()):
                directory.rmdir()
