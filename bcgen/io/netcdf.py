"""NetCDF-4 files from xarray Datasets: chunked, compressed, atomic and interruptible.

:func:`write_netcdf` writes through the backend in force (:mod:`bcgen.io.backend`)
to a hidden temporary file in the target folder and renames it into place only when
it is complete, so an interrupted or failed write leaves neither a partial file nor a
temporary one; an existing file is replaced only with ``force=True`` (``--force``).
"""

from __future__ import annotations

import threading
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Literal

import numpy as np

from bcgen.errors import OutputError
from bcgen.io.atomic import create_temporary, move_into_place, remove_quietly
from bcgen.io.backend import NetCDFBackend, current_backend
from bcgen.io.diagnose import CHUNK_TARGET_BYTES, write_failure
from bcgen.io.signals import held_signals

ChunkLayout = Literal["records", "series"]

#: Default compression of floating-point variables (zlib level 4 with the shuffle filter).
COMPRESSION = {"zlib": True, "complevel": 4, "shuffle": True}


def default_chunks(
    shape: Sequence[int],
    dims: Sequence[str],
    itemsize: int,
    *,
    layout: ChunkLayout = "records",
    time_dim: str = "time",
    target_bytes: int = CHUNK_TARGET_BYTES,
) -> tuple[int, ...] | None:
    """Chunk shape of a data variable with a time dimension (about ``target_bytes`` each).

    ``layout="records"`` (the default): each chunk holds whole time steps, as
    many as fit in ``target_bytes`` (at least one; a step larger than that is
    cut into slabs of its first spatial dimension). This suits the file's main
    reader, a model that reads one time step (or two, to interpolate) at a time.

    ``layout="series"``: each chunk holds the whole time series of a slab of
    consecutive rows of the first spatial dimension (cut along time only when
    one row's series exceeds ``target_bytes``); this suits reading the series
    of one place.

    Measured for daily insolation on a 0.5° grid (365 x 360 x 720 float32,
    zlib 4 + shuffle): both layouts write in the same time and give the same
    size (1.3 MB), and the netCDF library's default chunks give 3.0 MB and a
    slower write; reading one time step takes 0.005 s with records and 0.47 s
    with series, reading one point's series 0.46 s and 0.007 s.

    Returns None (the library's default) for a variable without ``time_dim``.
    """
    if time_dim not in dims or len(shape) < 2:
        return None
    if layout not in ("records", "series"):
        raise OutputError(f"unknown chunk layout {layout!r}; expected 'records' or 'series'")
    chunks = [int(n) for n in shape]
    t = list(dims).index(time_dim)
    spatial = [i for i in range(len(shape)) if i != t]
    slab = spatial[0]
    row_bytes = itemsize * int(np.prod([shape[i] for i in spatial[1:]], dtype=np.int64))
    if layout == "records":
        record_bytes = max(1, row_bytes * shape[slab])
        if record_bytes <= target_bytes:
            chunks[t] = target_bytes // record_bytes
        else:
            chunks[t] = 1
            chunks[slab] = target_bytes // max(1, row_bytes)
    else:
        series_row = max(1, row_bytes * shape[t])
        if series_row <= target_bytes:
            chunks[slab] = target_bytes // series_row
        else:
            chunks[slab] = 1
            chunks[t] = target_bytes // max(1, row_bytes)
    return tuple(max(1, min(c, int(n))) for c, n in zip(chunks, shape, strict=True))


def default_encoding(
    dataset,
    encoding: Mapping[str, Mapping] | None = None,
    *,
    chunking: ChunkLayout = "records",
) -> dict[str, dict]:
    """NetCDF encoding bcgen writes with, merged with the caller's (which wins).

    - Coordinates and bounds/climatology variables: no ``_FillValue`` (CF §7.1:
      bounds hold no missing values; coordinates must not).
    - Floating-point data variables with at least one dimension: zlib level 4
      with shuffle (:data:`COMPRESSION`), chunks from :func:`default_chunks`.
    - Anything else: the library's defaults.
    """
    enc: dict[str, dict] = {}
    linked = {
        str(v.attrs[key])
        for v in dataset.variables.values()
        for key in ("bounds", "climatology")
        if key in v.attrs
    }
    for name, var in dataset.variables.items():
        e: dict = {}
        if name in dataset.coords or name in linked:
            if np.issubdtype(var.dtype, np.floating) or np.issubdtype(var.dtype, np.integer):
                e["_FillValue"] = None
        elif np.issubdtype(var.dtype, np.floating) and var.ndim >= 1:
            e.update(COMPRESSION)
            chunks = default_chunks(var.shape, var.dims, var.dtype.itemsize, layout=chunking)
            if chunks is not None:
                e["chunksizes"] = chunks
        e.update((encoding or {}).get(name, {}))
        if e:
            enc[str(name)] = e
    unknown = set(encoding or {}) - set(map(str, dataset.variables))
    if unknown:
        raise OutputError(f"encoding given for unknown variables: {', '.join(sorted(unknown))}")
    return enc


def write_netcdf(
    dataset,
    path,
    *,
    force: bool = False,
    encoding: Mapping[str, Mapping] | None = None,
    chunking: ChunkLayout = "records",
    backend: NetCDFBackend | None = None,
) -> Path:
    """Write an xarray Dataset to a NetCDF-4 file, atomically.

    The file is written to a hidden temporary file in the target folder and
    renamed into place (``os.replace``, or a hard link when not forcing) only
    once complete. On any failure, including an interrupt (Ctrl-C), the
    temporary file is removed and no output is left.

    Parameters
    ----------
    dataset : xarray.Dataset
        The data, with CF attributes (see :mod:`bcgen.cf`, :func:`bcgen.cf.provenance_attrs`).
    path : str or os.PathLike
        The output file.
    force : bool
        Replace an existing file.
    encoding : mapping, optional
        Per-variable NetCDF encoding that overrides :func:`default_encoding`.
    chunking : {"records", "series"}
        Chunk layout of data variables with a time axis (:func:`default_chunks`).
    backend : NetCDFBackend, optional
        What writes the bytes (default: :func:`bcgen.io.current_backend`).

    Returns
    -------
    pathlib.Path
        The path written.

    Raises
    ------
    OutputError
        The file exists (without ``force``), the folder is missing or not
        writable, the disk is full, or the library failed to write.
    KeyboardInterrupt
        Re-raised after the temporary file is removed.
    """
    path = Path(path)
    folder = path.parent
    if not folder.is_dir():
        raise OutputError(f"cannot write {path}: folder {folder} does not exist")
    if path.is_dir():
        raise OutputError(f"cannot write {path}: it is a folder")
    if path.exists() and not force:
        raise OutputError(f"{path} already exists; use --force to overwrite it")
    enc = default_encoding(dataset, encoding, chunking=chunking)
    from bcgen.io.staging import sweep_stale_temporaries

    sweep_stale_temporaries(folder, [path.name])  # those of a killed earlier write, if any
    tmp: Path | None = None
    try:
        tmp = create_temporary(path)
        _write_in_thread(backend or current_backend(), dataset, tmp, enc)
        move_into_place(tmp, path, force)
        tmp = None
    except OutputError:
        raise
    except (OSError, RuntimeError) as exc:  # netCDF4 reports library failures as RuntimeError
        raise OutputError(write_failure(path, exc)) from None  # before the file is removed
    finally:
        if tmp is not None:
            remove_quietly(tmp)
    return path


class _WriteAborted(Exception):
    """Raised inside a dask block when the write was interrupted."""


def _abortable(dataset, abort: threading.Event):
    """Return the dataset with every dask-backed variable checking ``abort`` per block."""
    from dask.base import is_dask_collection

    def guard(block, abort=abort):
        if abort.is_set():
            raise _WriteAborted
        return block

    out = dataset.copy()
    for name, var in dataset.variables.items():
        if is_dask_collection(var.data):
            out[name] = var.copy(data=var.data.map_blocks(guard, dtype=var.dtype))
    return out


def _write_in_thread(backend: NetCDFBackend, dataset, tmp: Path, encoding: dict) -> None:
    """Write ``dataset`` to ``tmp`` in a worker thread, so that Ctrl-C stays clean.

    An interrupt is delivered to the main thread only. Were the write done there, an
    interrupt could land while the netCDF library's lock is held, and closing the file
    afterwards would wait for that lock for ever. Here the main thread only waits: on an
    interrupt it asks the write to stop at the next dask block, waits until the file is
    closed (so no thread reopens the temporary file after it is removed) and re-raises.
    """
    from concurrent.futures import ThreadPoolExecutor

    import dask

    abort = threading.Event()
    failure: list[BaseException] = []
    guarded = _abortable(dataset, abort)

    def work() -> None:
        pool = ThreadPoolExecutor(max_workers=dask.system.CPU_COUNT)
        try:
            with dask.config.set(scheduler="threads", pool=pool):
                backend.write_dataset(guarded, tmp, encoding)
        except BaseException as exc:  # noqa: BLE001 - handed to the main thread
            failure.append(exc)
        finally:
            pool.shutdown(wait=True, cancel_futures=True)

    thread = threading.Thread(target=work, name="bcgen-netcdf-write", daemon=True)
    try:
        # Starting a thread waits for it to run, and an interrupt can land in that wait: held
        # until the thread is known to have started, it then lands in the loop below. (Had
        # it escaped from start(), the write would go on in the background while the file
        # was deleted and the interpreter shut down under it: a crash after the clean message.)
        with held_signals():
            thread.start()
        while thread.is_alive():
            thread.join(0.05)
    except KeyboardInterrupt:
        abort.set()
        if thread.ident is not None:
            _join_through_interrupts(thread)
        raise
    if failure:
        raise failure[0]


def _join_through_interrupts(thread: threading.Thread) -> None:
    """Wait for ``thread`` to end, even through further interrupts (a second Ctrl-C).

    The temporary file is deleted only after the library has closed it: deleting it,
    or letting the interpreter shut down, while the worker is still inside the library
    is what crashes a process (SIGSEGV) after its clean message.
    """
    while thread.is_alive():
        try:
            thread.join(0.05)
        except KeyboardInterrupt:
            continue
