"""The fault-injection seam: every NetCDF byte bcgen writes goes through a backend.

A :class:`NetCDFBackend` does the three things that touch the netCDF library when
writing; the rest of :mod:`bcgen.io` (temporary files, renames, interrupts, messages)
stays the same whatever the backend. Tests subclass it to fail where a real disk or
library fails, and install it with :class:`set_backend` (as ``xarray.set_options``
sets an option: for a ``with`` block, or until set again).
"""

from __future__ import annotations

import contextvars
from pathlib import Path

import numpy as np


class NetCDFBackend:
    """Write NetCDF-4 files through xarray and the netCDF4 library (the default)."""

    def write_dataset(self, dataset, path: Path, encoding: dict) -> None:
        """Write a whole xarray Dataset to ``path`` (which exists, empty)."""
        dataset.to_netcdf(path, mode="w", format="NETCDF4", engine="netcdf4",
                          encoding=encoding)

    def create(self, path: Path):
        """Open a new NetCDF-4 file at ``path`` for writing; return its ``netCDF4.Dataset``."""
        import netCDF4

        handle = netCDF4.Dataset(path, "w", format="NETCDF4")
        handle.set_fill_off()
        return handle

    def write_slab(self, handle, name: str, start: int, values: np.ndarray) -> None:
        """Write ``values`` into variable ``name`` of ``handle`` from index ``start`` on."""
        handle.variables[name][start : start + values.shape[0], ...] = values


_DEFAULT = NetCDFBackend()
_BACKEND: contextvars.ContextVar[NetCDFBackend | None] = contextvars.ContextVar(
    "bcgen_netcdf_backend", default=None
)


def current_backend() -> NetCDFBackend:
    """Return the backend in force (the default :class:`NetCDFBackend` unless one was set)."""
    return _BACKEND.get() or _DEFAULT


class set_backend:  # noqa: N801 - used like a function, as xarray.set_options is
    """Install ``backend`` for every write: until the ``with`` block ends, or until set again.

    Parameters
    ----------
    backend : NetCDFBackend or None
        The backend; None restores the default.
    """

    def __init__(self, backend: NetCDFBackend | None) -> None:
        if backend is not None and not isinstance(backend, NetCDFBackend):
            raise TypeError("backend must be a bcgen.io.NetCDFBackend (or None)")
        self._token = _BACKEND.set(backend)

    def __enter__(self) -> NetCDFBackend:
        return current_backend()

    def __exit__(self, *exc) -> None:
        _BACKEND.reset(self._token)
