"""Opening model output for conversion, and writing the result.

:func:`open_inputs` opens one file or a multi-file set with cftime dates, refusing
(one line naming the file) a missing or unreadable file, a file without a time axis or
without a calendar attribute on it (a model's calendar is never guessed), mixed
calendars, and time axes that are neither monthly nor daily or that leave gaps
between files. The data are dask-backed and chunked for conversion: space cut so that
the whole time axis of one chunk holds about :data:`CHUNK_BYTES` (as float64); along
time, one chunk per file (the conversion reads a chunk's pieces in turn, without
joining them into a new array).

:func:`open_series` checks the same and opens each file once, for a conversion a file
at a time (a transient run's output): :meth:`InputSeries.window` gives a span of the
series, with the same spatial chunks, reading from each file only the time steps of
that span.

:func:`write_output` writes through :func:`bcgen.io.write_netcdf` (atomic,
refuses to overwrite without ``force``), with the data variables' compression taken
from the input.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import cftime
import numpy as np
import xarray as xr

from bcgen.cf.reader import find_time_dim, missing_calendar_error
from bcgen.convert.timeaxis import read_time_axis
from bcgen.errors import BcgenError, InputFileError
from bcgen.sizes import check_input_count

#: Target size of one chunk of input (all times × a block of space), bytes.
CHUNK_BYTES = 48 * 1024 * 1024


def _decoder():
    return xr.coders.CFDatetimeCoder(use_cftime=True)


def _open_one(path: Path, chunks=None) -> xr.Dataset:
    try:
        ds = xr.open_dataset(path, decode_times=_decoder(), chunks=chunks)
    except (OSError, ValueError, RuntimeError) as exc:
        if "unable to decode time units" in str(exc):
            _refuse_time_encoding(path)
        raise InputFileError(f"{path}: cannot open as NetCDF ({_open_failure(exc)})") from None
    for name, var in ds.coords.items():  # a model's calendar is never guessed
        if (var.ndim == 1 and var.dims[0] == name and var.dtype == object and var.size
                and isinstance(var.values[0], cftime.datetime)
                and "calendar" not in var.encoding and "calendar" not in var.attrs):
            ds.close()
            raise missing_calendar_error(path, name)
    return ds


def _refuse_time_encoding(path: Path) -> None:
    """Name the time variable whose units or calendar cannot be decoded, and what is expected.

    Called when decoding the times failed (the file itself opens): a calendar that is not
    a CF calendar, or units that are not ``<days|hours|minutes|seconds> since <date>``
    (CF 1.11 §4.4.1; ``months since`` and ``years since`` are not fixed lengths of time).
    """
    from bcgen.cf.reader import time_unit_days
    from bcgen.solar_calendar.calendars import canonical_calendar

    try:
        raw = xr.open_dataset(path, decode_times=False)
    except (OSError, ValueError, RuntimeError):
        return
    with raw:
        for name, var in raw.variables.items():
            units = var.attrs.get("units")
            if not isinstance(units, str) or " since " not in units:
                continue
            if "calendar" in var.attrs:
                try:
                    canonical_calendar(str(var.attrs["calendar"]), f"{path}: {name}:calendar")
                except BcgenError as exc:
                    raise InputFileError(str(exc)) from None
            time_unit_days(units, f"{path}: {name}")
            try:
                cftime.num2date(np.asarray(var.values[:1], dtype=float), units,
                                calendar=str(var.attrs.get("calendar", "standard")))
            except (ValueError, TypeError, OverflowError) as exc:
                raise InputFileError(f"{path}: {name}: cannot read time units {units!r} "
                                     f"({' '.join(str(exc).split())}); expected '<days|hours|"
                                     "minutes|seconds> since <date>'") from None


def _open_failure(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    if "did not find a match in any of xarray's" in text:  # no known file signature
        return "not a NetCDF or HDF5 file"
    return text


def check_inputs(paths: Sequence[os.PathLike | str]) -> list[Path]:
    """Check each input file on its own and the joins between them; return the paths sorted.

    Files are ordered by their first time. Raises :class:`~bcgen.errors.InputFileError`
    naming the file for a missing file, no time axis, another calendar than the first
    file's, time steps that are neither monthly nor daily, or a gap/overlap between files.
    """
    if not paths:
        raise InputFileError("no input file given")
    check_input_count(len(paths))
    found = []
    for raw in paths:
        path = _existing(raw)
        with _open_one(path) as ds:
            found.append(_span(ds, path))
    return [item[4] for item in _in_order(found)]


def _existing(raw) -> Path:
    path = Path(raw)
    if not path.is_file():
        raise InputFileError(f"{path}: no such file")
    return path


def _span(ds: xr.Dataset, path: Path) -> tuple:
    """(start date, end date, calendar, kind, path) of one input file's time axis."""
    axis = read_time_axis(ds, str(path), cyclic=False)
    return (axis.date(axis.edges_days[0]), axis.date(axis.edges_days[-1]), axis.calendar.name,
            axis.kind, path)


def _in_order(found: list[tuple]) -> list[tuple]:
    """Check the files' spans (:func:`_span`) against each other; return them in time order."""
    first_cal, first_path = found[0][2], found[0][4]
    for _, _, cal, kind, path in found:
        if cal != first_cal:
            raise InputFileError(f"{path}: calendar {cal} differs from {first_path} ({first_cal}); "
                                 "the files of one conversion must share a calendar")
        if kind != found[0][3]:
            raise InputFileError(f"{path}: holds {kind} means but {first_path} {found[0][3]} "
                                 "means")
    found = sorted(found, key=lambda item: item[0])
    for (_, e0, _, _, p0), (s1, _, _, _, p1) in zip(found[:-1], found[1:], strict=True):
        if s1 != e0:
            what = "a gap" if s1 > e0 else "an overlap"
            raise InputFileError(f"{p1}: starts at {s1} but {p0} ends at {e0} ({what} between "
                                 "files); expected consecutive files")
    return found


def conversion_chunks(ds: xr.Dataset, time_dim: str, target_bytes: int = CHUNK_BYTES) -> dict:
    """Chunks for conversion: time whole, the first spatial dimension cut to ~``target_bytes``.

    The first non-time dimension of the largest variable is cut; the others stay whole
    (so a chunk is a slab of latitude rows, matching how NetCDF stores (time, lat, lon)).
    """
    variables = [v for v in ds.data_vars.values() if time_dim in v.dims and v.ndim > 1]
    if not variables:
        return {time_dim: -1}
    big = max(variables, key=lambda v: v.size * v.dtype.itemsize)
    others = [d for d in big.dims if d != time_dim]
    row = ds.sizes[time_dim] * 8 * int(np.prod([ds.sizes[d] for d in others[1:]], dtype=np.int64))
    rows = int(max(1, min(ds.sizes[others[0]], target_bytes // max(row, 1))))
    chunks = {time_dim: -1, others[0]: rows}
    chunks.update({d: -1 for d in others[1:]})
    return chunks


def open_inputs(paths: Sequence[os.PathLike | str], *, chunk_bytes: int = CHUNK_BYTES):
    """Open model output for conversion; returns ``(dataset, source_label)``.

    Parameters
    ----------
    paths : sequence of path
        One file or a multi-file set (ordered by time, joined along the time axis).
    chunk_bytes : int
        Target chunk size in bytes (float64 working copy of one chunk).
    """
    check_input_count(len(paths))
    if len(paths) == 1:  # errors about its time axis name it when it is read
        path = Path(paths[0])
        if not path.is_file():
            raise InputFileError(f"{path}: no such file")
        ds = _open_one(path)
        dim = find_time_dim(ds, str(path))
        _check_units(ds, dim, path)
        return ds.chunk(conversion_chunks(ds, dim, chunk_bytes)), str(path)
    ordered = check_inputs(paths)
    label = f"{ordered[0]} ... {ordered[-1]}"
    with xr.open_dataset(ordered[0], decode_times=False) as first:
        dim = find_time_dim(xr.decode_cf(first.isel({d: slice(0, 1) for d in first.dims})),
                            str(ordered[0]))
        n_time = 0
        names = _time_variables(first, dim)
        for path in ordered:
            with xr.open_dataset(path, decode_times=False) as other:
                n_time += other.sizes.get(dim, 0)
                _check_variables(other, dim, path, names, ordered[0])
        probe = first.isel({dim: slice(0, 1)}).isel({dim: np.zeros(n_time, dtype=int)})
        chunks = conversion_chunks(probe, dim, chunk_bytes)
    try:
        ds = xr.open_mfdataset(
            ordered, decode_times=_decoder(), combine="by_coords", data_vars="minimal",
            coords="minimal", compat="override",
            chunks={k: v for k, v in chunks.items() if k != dim},
        )
    except (OSError, ValueError) as exc:
        raise InputFileError(f"{label}: cannot join the files along time "
                             f"({' '.join(str(exc).split())})") from None
    return ds, label  # one time chunk per file: the conversion reads them in turn


def _check_variables(ds: xr.Dataset, dim: str, path, names: set[str], first) -> None:
    theirs = _time_variables(ds, dim)
    _check_units(ds, dim, path)
    if theirs != names:
        raise InputFileError(
            f"{path}: holds the variables {', '.join(sorted(theirs)) or 'none'} "
            f"but {first} holds {', '.join(sorted(names)) or 'none'}; the "
            "files of one conversion must hold the same variables")


@dataclass
class InputSeries:
    """The files of one time series, each opened once, for a conversion a file at a time.

    Made by :func:`open_series`. The files stay open, lazily read: their time axes,
    bounds and other small variables are in memory, the variables to convert are read
    only when a :meth:`window` of them is computed, and then only the time steps of
    that window (the steps a window takes from a neighbouring file are read alone, not
    that file's whole block).
    """

    paths: list[Path]  #: in time order
    datasets: list[xr.Dataset]  #: one per file, same order
    dim: str  #: the time dimension
    chunks: dict  #: spatial chunks of the variables to convert (time whole)
    label: str  #: the set's name in messages

    @property
    def counts(self) -> list[int]:
        """Time steps of each file."""
        return [ds.sizes[self.dim] for ds in self.datasets]

    def times(self) -> np.ndarray:
        """Return the decoded times of the whole series (cftime dates)."""
        return np.concatenate([ds[self.dim].values for ds in self.datasets])

    def window(self, start: int, stop: int, own: int) -> xr.Dataset:
        """Time steps ``start:stop`` of the series as one dask-backed dataset.

        One time chunk per file the window touches; the global attributes and the time
        encoding (units) are those of file ``own``, the file the window is read for.
        """
        edges = np.concatenate([[0], np.cumsum(self.counts)])
        pieces = []
        for j, ds in enumerate(self.datasets):
            lo, hi = max(start, edges[j]), min(stop, edges[j + 1])
            if lo >= hi:
                continue
            piece = ds.isel({self.dim: slice(int(lo - edges[j]), int(hi - edges[j]))})
            lazy = {n: piece.variables[n] for n in sorted(_time_variables(piece, self.dim))}
            # A fresh name for each piece (name=False): dask need not hash the file's
            # reader to name it, and no two pieces can share a name.
            pieces.append(piece.assign({n: v.chunk(
                {d: c for d, c in self.chunks.items() if d in v.dims and d != self.dim},
                name=False) for n, v in lazy.items()}))
        part = pieces[0] if len(pieces) == 1 else xr.concat(
            pieces, self.dim, data_vars="minimal", coords="minimal", compat="override",
            join="override", combine_attrs="override")
        part.attrs = dict(self.datasets[own].attrs)
        part[self.dim].encoding = dict(self.datasets[own][self.dim].encoding)
        return part

    def close(self) -> None:
        """Close every file."""
        for ds in self.datasets:
            ds.close()

    def __enter__(self) -> InputSeries:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def open_series(paths: Sequence[os.PathLike | str], *,
                chunk_bytes: int = CHUNK_BYTES) -> InputSeries:
    """Open the files of a time series once each, checked as :func:`open_inputs` checks them.

    Parameters
    ----------
    paths : sequence of path
        One file or a multi-file set (any order; put in time order).
    chunk_bytes : int
        Target chunk size in bytes (float64 working copy of one chunk of the whole series).
    """
    if not paths:
        raise InputFileError("no input file given")
    check_input_count(len(paths))
    opened: list[xr.Dataset] = []
    try:
        found = []
        for raw in paths:
            path = _existing(raw)
            ds = _open_one(path)
            opened.append(ds)
            _load_small(ds, find_time_dim(ds, str(path)))
            found.append(_span(ds, path))
        order = sorted(range(len(found)), key=lambda i: found[i][0])
        _in_order(found)
        datasets = [opened[i] for i in order]
        paths_in_order = [found[i][4] for i in order]
        first = datasets[0]
        dim = find_time_dim(first, str(paths_in_order[0]))
        names = _time_variables(first, dim)
        for ds, path in zip(datasets, paths_in_order, strict=True):
            _check_variables(ds, dim, path, names, paths_in_order[0])
            _check_grid(ds, first, dim, path, paths_in_order[0])
        n_time = sum(ds.sizes[dim] for ds in datasets)
        probe = first.isel({dim: slice(0, 1)}).isel({dim: np.zeros(n_time, dtype=int)})
        chunks = conversion_chunks(probe, dim, chunk_bytes)
    except BaseException:
        for ds in opened:
            ds.close()
        raise
    label = (str(paths_in_order[0]) if len(paths_in_order) == 1
             else f"{paths_in_order[0]} ... {paths_in_order[-1]}")
    return InputSeries(paths_in_order, datasets, dim, chunks, label)


def _check_grid(ds: xr.Dataset, first: xr.Dataset, dim: str, path, first_path) -> None:
    """Refuse a file whose coordinates without time differ from the first file's."""
    for name, coord in first.coords.items():
        if dim in coord.dims:
            continue
        other = ds.coords.get(name)
        if other is None or other.dims != coord.dims or not np.array_equal(
                np.asarray(other.values), np.asarray(coord.values)):
            raise InputFileError(f"{path}: coordinate '{name}' differs from {first_path}'s; "
                                 "the files of one conversion must share the grid")


def _load_small(ds: xr.Dataset, dim: str) -> None:
    """Read into memory every variable of ``ds`` but those to convert (time axis, bounds...)."""
    big = _time_variables(ds, dim)
    for name in ds.variables:
        if name not in big:
            ds[name].load()


def _check_units(ds: xr.Dataset, dim: str, path) -> None:
    """Refuse a variable to convert whose ``units`` is not a UDUNITS-2 unit (cf-units).

    The conversion is linear, so the units are kept as given; they must still be units.
    """
    import cf_units

    for name in sorted(_time_variables(ds, dim)):
        units = ds[name].attrs.get("units")
        if units is None:
            continue
        try:
            cf_units.Unit(str(units))
        except ValueError:
            raise InputFileError(f"{path}:{name}: units {str(units)!r} are not units that "
                                 "UDUNITS-2 knows; correct the attribute (the conversion "
                                 "keeps it as given)") from None


def _time_variables(ds: xr.Dataset, dim: str) -> set[str]:
    """Names of the data variables along ``dim``, bounds left out."""
    linked = {str(v.attrs[k]) for v in ds.variables.values() for k in ("bounds", "climatology")
              if k in v.attrs}
    return {str(n) for n, v in ds.data_vars.items() if dim in v.dims and n not in linked}


def output_encoding(ds: xr.Dataset) -> dict[str, dict]:
    """Per-variable NetCDF encoding of a converted dataset.

    Time units, calendars and fill values as set by the conversion; no fill value on
    coordinates and bounds (CF 2.5.1, 7.1). Data variables keep the input's zlib
    compression: compressed ones are stored in HDF5 chunks that match the conversion's
    blocks (whole time axis × a slab of space), uncompressed ones contiguously (the
    fastest layout to write and to read back).
    """
    enc: dict[str, dict] = {}
    time_dim = find_time_dim(ds, "output")
    linked = {str(v.attrs[k]) for v in ds.variables.values() for k in ("bounds", "climatology")
              if k in v.attrs}
    for name, var in ds.variables.items():
        e = {k: v for k, v in var.encoding.items()
             if k in ("units", "calendar", "dtype", "_FillValue", "zlib", "complevel", "shuffle")}
        if name in ds.coords or name in linked:
            e["_FillValue"] = None  # CF 2.5.1 / 7.1: no fill value on coordinates and bounds
        elif np.issubdtype(var.dtype, np.floating) and var.ndim >= 1:
            if not e.get("zlib"):
                e = {k: v for k, v in e.items() if k not in ("zlib", "complevel", "shuffle")}
                e.update(zlib=False, shuffle=False)
            if var.chunks is not None:
                e["chunksizes"] = _storage_chunks(var, time_dim)
        if e:
            enc[str(name)] = e
    return enc


def _storage_chunks(var, time_dim: str, time_steps: int = 120) -> tuple[int, ...]:
    """HDF5 chunks: the conversion's spatial blocks, cut every ``time_steps`` along time.

    Each block is then written as whole HDF5 chunks (no read-back), and a map of one
    time step or a series at one point reads only a few megabytes.
    """
    return tuple(min(int(max(c)), time_steps) if dim == time_dim else int(max(c))
                 for dim, c in zip(var.dims, var.chunks, strict=True))


def write_output(ds: xr.Dataset, path: os.PathLike | str, *, force: bool = False) -> Path:
    """Write the converted dataset atomically (see :func:`bcgen.io.write_netcdf`)."""
    from bcgen.io import write_netcdf

    return write_netcdf(ds, path, force=force, encoding=output_encoding(ds))
