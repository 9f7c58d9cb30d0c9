"""Backends that fail as a real disk or netCDF library does, for the fault-injection seam.

They go through bcgen's documented seam (:class:`bcgen.io.NetCDFBackend`, installed with
:class:`bcgen.io.set_backend`), not through bcgen's private names. A full disk leaves a
partly written file behind before the library reports it (as a real one does); the
library reports it as ENOSPC, as "Permission denied" (a file it could not create) or as
"NetCDF: HDF error" (a failed HDF5 write), netCDF-C's error codes (from memory).
"""

from __future__ import annotations

from pathlib import Path

from bcgen.io import NetCDFBackend
from bcgen.io.atomic import temporary_owner

PARTIAL = b"\x89HDF\r\n\x1a\n partly written"


class FailingBackend(NetCDFBackend):
    """Write the first ``after`` datasets (or slabs) for real, then raise ``error``.

    Parameters
    ----------
    error : BaseException
        What the library raises (an OSError, a RuntimeError, KeyboardInterrupt ...).
    after : int
        Writes that succeed first.
    slabs : bool
        Count and fail :meth:`write_slab` calls (transient series) instead of whole
        datasets.
    then : callable, optional
        Run after a successful dataset write, with the path written (a race: another
        process creates the target meanwhile).
    """

    def __init__(self, error: BaseException | None = None, *, after: int = 0,
                 slabs: bool = False, then=None) -> None:
        self.error, self.after, self.slabs, self.then = error, after, slabs, then
        self.calls = 0
        self.failed: list[str] = []

    def write_dataset(self, dataset, path, encoding):
        if self.slabs:
            return super().write_dataset(dataset, path, encoding)
        self.calls += 1
        if self.error is None or self.calls <= self.after:
            super().write_dataset(dataset, path, encoding)
            if self.then is not None:
                self.then(path)
            return None
        with open(path, "wb") as fh:
            fh.write(PARTIAL)
        self.failed.append(_target(path))
        raise self.error

    def write_slab(self, handle, name, start, values):
        if not self.slabs:
            return super().write_slab(handle, name, start, values)
        self.calls += 1
        if self.error is None or self.calls <= self.after:
            return super().write_slab(handle, name, start, values)
        super().write_slab(handle, name, start, values[:1])  # a partial write, then the failure
        self.failed.append(_target(handle.filepath()))
        raise self.error


class RecordingBackend(NetCDFBackend):
    """Write for real and record every slab written: ``(file name, variable, start, rows)``."""

    def __init__(self) -> None:
        self.slabs: list[tuple[str, str, int, int]] = []

    def write_slab(self, handle, name, start, values):
        self.slabs.append((_target(handle.filepath()), name, start, values.shape[0]))
        return super().write_slab(handle, name, start, values)


def _target(path) -> str:
    """Name of the file a temporary file (or a file) is written for."""
    name = Path(path).name
    owner = temporary_owner(name)
    return owner[0] if owner else name
