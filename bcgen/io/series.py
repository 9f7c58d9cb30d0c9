"""Chunked writing of one NetCDF-4 file of a time series, through a temporary file.

:class:`SeriesFile` writes straight through the netCDF4 library: the
dimensions, coordinates and attributes are defined first, then each data
variable is filled a slab of time steps at a time (:meth:`SeriesFile.write_chunk`),
so that no more than one slab of values is ever held in memory, whatever the
length of the series. The file is written under a hidden temporary name in the
target folder; :meth:`SeriesFile.publish` renames it into place. Leaving the
``with`` block any other way (an error, Ctrl-C) closes and deletes the
temporary file, so an interrupted run leaves no partial output.

A write that fails (a full disk, a lost file system) raises
:class:`~bcgen.errors.OutputError` naming the file, "no space left on the
device" when the disk is full (:func:`bcgen.io.write_failure`), after the
temporary file is deleted. The netCDF library reports such failures as
``RuntimeError`` ("NetCDF: HDF error") or ``OSError``, at the write itself, at a
flush or only when the file is closed.

Every call into the netCDF library goes through the backend in force
(:mod:`bcgen.io.backend`, the fault-injection seam) and holds SIGINT and SIGTERM
until it returns (:func:`bcgen.io.signals.held_signals`), so an interrupt never
tears the library's state down in the middle of a write.

The encoding follows :mod:`bcgen.io.netcdf`: coordinates and bounds are stored
uncompressed without a fill value (CF §7.1), floating-point data variables with
zlib and the shuffle filter at the spec's level, and chunks of whole time
steps from :func:`bcgen.io.default_chunks`.

Compressed variables with a time axis are best filled through
:meth:`SeriesFile.append`, which gathers values into whole storage chunks
(one chunk of memory per variable) and writes and flushes each as soon as it is
complete: the compression then happens while the run goes on, in step with the
computation of the next values, rather than all at once when the file closes.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterator, Mapping
from pathlib import Path

import numpy as np

from bcgen.errors import OutputError
from bcgen.io.atomic import remove_quietly, sha256_of, temporary_name
from bcgen.io.backend import NetCDFBackend, current_backend
from bcgen.io.diagnose import write_failure
from bcgen.io.netcdf import default_chunks
from bcgen.io.signals import held_signals


class SeriesFile:
    """A NetCDF-4 file written in chunks of time steps, atomically.

    Parameters
    ----------
    path : path-like
        The final file. Its folder must exist.
    compression_level : int
        zlib level 0-9 of floating-point data variables (0: none).
    shuffle : bool
        Use the HDF5 shuffle filter with compression.
    backend : NetCDFBackend, optional
        What writes the bytes (default: :func:`bcgen.io.current_backend`).

    Attributes
    ----------
    chunks_written : int
        Number of :meth:`write_chunk` calls so far.
    """

    def __init__(self, path, *, compression_level: int = 4, shuffle: bool = True,
                 backend: NetCDFBackend | None = None) -> None:
        self.backend = backend or current_backend()
        self.path = Path(path)
        if not self.path.parent.is_dir():
            raise OutputError(f"cannot write {self.path}: folder {self.path.parent} does not exist")
        self.compression_level = int(compression_level)
        self.shuffle = bool(shuffle)
        self.chunks_written = 0
        self._published = False
        self._chunk_rows: dict[str, int] = {}
        self._buffers: dict[str, list] = {}  # name -> [buffer or None, rows filled, next row]
        # Named before it is created, so that an interrupt at any moment finds it to delete.
        self.tmp = self.path.with_name(temporary_name(self.path.name))
        self._ds = None
        try:
            fd = os.open(self.tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
            os.close(fd)
            with held_signals():
                self._ds = self.backend.create(self.tmp)
        except (OSError, RuntimeError) as exc:
            message = write_failure(self.path, exc)  # before the file is removed
            self.discard()
            raise OutputError(message) from None
        except BaseException:  # an interrupt between creating and opening the file
            self.discard()
            raise

    @contextlib.contextmanager
    def _writing(self) -> Iterator[None]:
        """Hold signals during a library call; a failure becomes OutputError, the file deleted."""
        try:
            with held_signals():
                yield
        except (OSError, RuntimeError) as exc:
            message = write_failure(self.path, exc)  # while the partial file still fills the disk
            self.discard()
            raise OutputError(message) from None

    # --- definition ----------------------------------------------------------------------
    def set_attributes(self, attrs: Mapping[str, object]) -> None:
        """Set global attributes (None values are left out)."""
        with self._writing():
            self._ds.setncatts({k: _attr(v) for k, v in attrs.items() if v is not None})

    def define_dimension(self, name: str, size: int | None) -> None:
        """Create a dimension (``size`` None: unlimited)."""
        with self._writing():
            self._ds.createDimension(name, size)

    def define_variable(
        self,
        name: str,
        dtype,
        dims: tuple[str, ...],
        attrs: Mapping[str, object] | None = None,
        *,
        data=None,
        compress: bool = False,
        time_dim: str = "time",
    ) -> None:
        """Create a variable; write ``data`` at once if given (for coordinates and bounds).

        ``compress=True`` applies the file's zlib level and shuffle filter and
        chunks of whole time steps (:func:`bcgen.io.default_chunks`).
        """
        kwargs: dict = {"fill_value": False}
        if compress and self.compression_level > 0:
            kwargs.update(zlib=True, complevel=self.compression_level, shuffle=self.shuffle)
        shape = tuple(len(self._ds.dimensions[d]) for d in dims)
        if compress and dims:
            chunks = default_chunks(shape, dims, np.dtype(dtype).itemsize, time_dim=time_dim)
            if chunks is not None:
                kwargs["chunksizes"] = chunks
                if dims[0] == time_dim:
                    self._chunk_rows[name] = chunks[0]
        with self._writing():
            var = self._ds.createVariable(name, dtype, dims, **kwargs)
            if attrs:
                var.setncatts({k: _attr(v) for k, v in attrs.items() if v is not None})
            if data is not None:
                var[...] = np.asarray(data)

    # --- data ----------------------------------------------------------------------------
    def write_chunk(self, name: str, start: int, values: np.ndarray) -> None:
        """Write ``values`` into variable ``name`` from time step ``start`` on (first axis)."""
        values = np.asarray(values)
        with self._writing():
            self.backend.write_slab(self._ds, name, start, values)
        self.chunks_written += 1

    def append(self, name: str, values: np.ndarray) -> None:
        """Append time steps to a variable, writing it in whole storage chunks.

        Values are gathered into one chunk-sized buffer; each complete chunk is
        written (:meth:`write_chunk`) and flushed at once. A variable without
        chunks along time is written straight away. :meth:`close` writes the rest.
        """
        values = np.asarray(values)
        state = self._buffers.setdefault(name, [None, 0, 0])
        rows = self._chunk_rows.get(name)
        if rows is None:
            self.write_chunk(name, state[2], values)
            state[2] += values.shape[0]
            return
        i, n = 0, values.shape[0]
        while i < n:
            buffer, filled, start = state
            if filled == 0 and n - i >= rows:  # a whole chunk straight from the values
                whole = (n - i) // rows * rows
                self.write_chunk(name, start, values[i : i + whole])
                state[2] += whole
                i += whole
                self._sync()
                continue
            if buffer is None:
                buffer = state[0] = np.empty((rows,) + values.shape[1:], dtype=values.dtype)
            take = min(rows - filled, n - i)
            buffer[filled : filled + take] = values[i : i + take]
            state[1] = filled = filled + take
            i += take
            if filled == rows:
                self.write_chunk(name, start, buffer)
                state[1], state[2] = 0, start + rows
                self._sync()

    def _sync(self) -> None:
        """Hand what the library holds to the operating system (HDF5 writes it then)."""
        with self._writing():
            self._ds.sync()

    def _flush_buffers(self) -> None:
        for name, (buffer, filled, start) in self._buffers.items():
            if filled:
                self.write_chunk(name, start, buffer[:filled])
        self._buffers.clear()

    # --- finishing -----------------------------------------------------------------------
    def close(self) -> str:
        """Write what :meth:`append` still holds, close the temporary file; return its SHA-256."""
        if self._ds.isopen():
            self._flush_buffers()
            with self._writing():  # the library writes its caches when the file closes
                self._ds.close()
        with self._writing():
            return sha256_of(self.tmp)

    def publish(self, *, force: bool = True) -> Path:
        """Rename the closed temporary file into place (replacing a file only with ``force``)."""
        if self._ds.isopen():
            with self._writing():
                self._ds.close()
        if self.path.exists() and not force:
            raise OutputError(f"{self.path} already exists; use --force to overwrite it")
        with self._writing():
            os.replace(self.tmp, self.path)
        self._published = True
        return self.path

    def discard(self) -> None:
        """Close and delete the temporary file (nothing is left behind)."""
        try:
            with held_signals():
                if self._ds is not None and self._ds.isopen():
                    self._ds.close()
        except Exception:  # noqa: BLE001 - a half-written file may fail to close; delete it anyway
            pass
        remove_quietly(self.tmp)

    def __enter__(self) -> SeriesFile:
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if not self._published:
            self.discard()


def _attr(value):
    """Return an attribute value netCDF4 can store (bools as strings, numpy scalars as is)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    return value
