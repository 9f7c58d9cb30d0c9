"""One output folder, one writer: an advisory lock held for the whole run.

:class:`FolderLock` takes an exclusive ``flock`` (POSIX advisory lock) on a hidden file
``.bcgen.lock`` in the output folder and writes into it the process id and start time
of its holder. A second bcgen run into the same folder is refused at once with
"another bcgen run (pid N, started ...) is writing DIR". The lock file is deleted when
the run ends, so a finished run leaves the folder without it; the kernel drops the lock
of a killed process by itself, so a stale lock file never blocks a later run.
"""

from __future__ import annotations

import errno
import fcntl
import json
import os
import time
from datetime import datetime, timezone
from pathlib import Path

from bcgen.errors import OutputError
from bcgen.io.signals import held_signals

#: Name of the lock file in an output folder.
LOCK_NAME = ".bcgen.lock"


class FolderLockedError(OutputError):
    """Another bcgen run holds the lock of the output folder."""


class FolderLock:
    """An exclusive advisory lock on an output folder (a context manager).

    Parameters
    ----------
    directory : path-like
        The output folder; it must exist.
    """

    def __init__(self, directory) -> None:
        self.directory = Path(directory)
        self.path = self.directory / LOCK_NAME
        self._fd: int | None = None

    def acquire(self) -> FolderLock:
        """Take the lock, or raise :class:`FolderLockedError` naming its holder.

        SIGINT and SIGTERM wait until the lock file is written and held (a stop between
        creating the file and taking it would leave an empty lock file behind).
        """
        with held_signals():
            while True:
                try:
                    fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
                except OSError as exc:
                    raise OutputError(f"cannot lock output folder {self.directory}: "
                                      f"{exc.strerror or exc}") from None
                try:
                    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                except OSError as exc:
                    holder = _read_holder(fd)
                    os.close(fd)
                    if exc.errno in (errno.EAGAIN, errno.EACCES, errno.EWOULDBLOCK):
                        raise FolderLockedError(
                            f"another bcgen run ({holder}) is writing {self.directory}; wait "
                            "for it to finish or write elsewhere") from None
                    raise OutputError(f"cannot lock output folder {self.directory}: "
                                      f"{exc.strerror or exc}") from None
                # The holder before us may have deleted the file between our open and our lock:
                # the lock is good only if the name still points at the file we locked.
                try:
                    same = os.path.samestat(os.fstat(fd), os.stat(self.path))
                except FileNotFoundError:
                    same = False
                if same:
                    break
                os.close(fd)
            started = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M:%S UTC")
            os.ftruncate(fd, 0)
            os.write(fd, json.dumps({"pid": os.getpid(), "started": started}).encode())
            self._fd = fd
        return self

    def release(self) -> None:
        """Delete the lock file and drop the lock."""
        if self._fd is None:
            return
        try:
            os.unlink(self.path)
        except OSError:
            pass
        os.close(self._fd)
        self._fd = None

    def __enter__(self) -> FolderLock:
        return self.acquire()

    def __exit__(self, *exc) -> None:
        self.release()


def _read_holder(fd: int) -> str:
    for _ in range(20):  # the holder writes its details just after taking the lock
        try:
            data = json.loads(os.pread(fd, 4096, 0).decode() or "{}")
            return f"pid {int(data['pid'])}, started {data['started']}"
        except (OSError, ValueError, KeyError, TypeError):
            time.sleep(0.01)
    return "pid unknown, started at an unknown time"
