"""Atomic files: written under a hidden temporary name beside the target, renamed when complete.

A temporary file is named ``.NAME.<pid>.<hex>.tmp``: hidden, beside its target (so the
final rename stays on one file system), and carrying the process id of its writer, so
that a later run can tell a temporary whose writer is gone (killed with SIGKILL) from
one that is still being written (:func:`temporary_owner`,
:func:`bcgen.io.staging.sweep_stale_temporaries`).
"""

from __future__ import annotations

import hashlib
import os
import re
import time
import uuid
from pathlib import Path

from bcgen.errors import OutputError
from bcgen.io.diagnose import write_failure


def temporary_name(name: str) -> str:
    """Hidden name of a temporary file for the file ``name``, owned by this process."""
    return f".{name}.{os.getpid()}.{uuid.uuid4().hex[:12]}.tmp"


_TEMPORARY = re.compile(r"\.(?P<name>.+)\.(?P<pid>[0-9]+)\.[0-9a-f]{12}\.tmp")


def temporary_owner(candidate: str) -> tuple[str, int] | None:
    """``(target name, pid)`` of a temporary named by :func:`temporary_name`, else None."""
    m = _TEMPORARY.fullmatch(candidate)
    return (m["name"], int(m["pid"])) if m else None


def create_temporary(path) -> Path:
    """Create an empty hidden temporary file next to ``path`` (mode 0666 minus the umask)."""
    path = Path(path)
    tmp = path.with_name(temporary_name(path.name))
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        os.close(fd)
    except BaseException:  # an interrupt just after the file was made: do not leave it
        remove_quietly(tmp)
        raise
    return tmp


def move_into_place(tmp: Path, path: Path, force: bool) -> None:
    """Rename a complete temporary file into place; without ``force`` never clobber a file."""
    if force:
        os.replace(tmp, path)
        return
    try:
        os.link(tmp, path)  # fails if ``path`` appeared meanwhile: never clobber
    except FileExistsError:
        raise OutputError(f"{path} already exists; use --force to overwrite it") from None
    except OSError:  # a file system without hard links
        if path.exists():
            raise OutputError(f"{path} already exists; use --force to overwrite it") from None
        os.replace(tmp, path)
        return
    os.unlink(tmp)


def remove_quietly(path) -> None:
    """Delete a file if it is there (retrying briefly); never raise."""
    for _ in range(3):
        try:
            Path(path).unlink()
            return
        except FileNotFoundError:
            return
        except OSError:
            time.sleep(0.05)


def write_file_atomic(path, write, *, force: bool = False) -> Path:
    """Write ``path`` through a temporary file beside it; never a partial file.

    ``write(tmp)`` fills the temporary (a :class:`~pathlib.Path`), which is renamed into
    place when complete; on any failure, an interrupt included, no file is left behind and
    an existing ``path`` is untouched. Without ``force`` an existing file is never replaced.
    """
    path = Path(path)
    tmp = None
    try:
        tmp = create_temporary(path)
        write(tmp)
        move_into_place(tmp, path, force)
        tmp = None
    except OSError as exc:
        raise OutputError(write_failure(path, exc)) from None
    finally:
        if tmp is not None:
            remove_quietly(tmp)
    return path


def write_text_atomic(path, text: str, *, force: bool = False) -> Path:
    """Write a text file through a temporary file in the same folder; never a partial file."""
    path = Path(path)
    if path.exists() and not force:
        raise OutputError(f"{path} already exists; use --force to overwrite it")

    def write(tmp: Path) -> None:
        with open(tmp, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())

    return write_file_atomic(path, write, force=force)


def prepare_output_folder(directory) -> Path:
    """Create the output folder if needed and check that it is a writable folder."""
    directory = Path(directory)
    if directory.exists() and not directory.is_dir():
        raise OutputError(f"output folder {directory} is a file; give a folder with -o")
    try:
        directory.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot create output folder {directory}: {exc.strerror}") from None
    if not os.access(directory, os.W_OK | os.X_OK):
        raise OutputError(f"output folder {directory} is not writable")
    return directory


def sha256_of(path) -> str:
    """SHA-256 of a file's bytes."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()
