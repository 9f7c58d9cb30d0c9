"""The one CF reader: time axes, latitude and longitude, time units of files bcgen reads.

Model output (``bcgen convert``, ``bcgen validate``), grid files and files bcgen built
(``bcgen plot``) are read by the same rules:

- a coordinate is the latitude (longitude, time) by its ``standard_name``, its units
  (CF 1.11 §4.1: ``degrees_north`` and its spellings, case aside; §4.4: ``<unit> since
  <date>``), its ``axis`` attribute (``Y``, ``X``, ``T``) or, last, its name (``lat``,
  ``latitude``; ``lon``, ``longitude``), in that order (:func:`coordinate_kind`);
- a time axis may have bounds (``bounds``, CF §7.1) or climatology bounds
  (``climatology``, CF §7.4) or neither (:func:`bounds_variable`);
- time units are ``<unit> since <date>`` with the UDUNITS unit names of days, hours,
  minutes and seconds (:func:`time_unit_days`).

>>> time_unit_days("hours since 0001-01-01 00:00:00", "model.nc")
0.041666666666666664
"""

from __future__ import annotations

import re
from typing import Literal

import numpy as np

from bcgen.cf.attributes import LATITUDE_UNITS, LONGITUDE_UNITS
from bcgen.errors import InputFileError

CoordinateKind = Literal["time", "latitude", "longitude"]

#: Days in one unit of time, by the UDUNITS names and abbreviations a CF time unit may use
#: (CF 1.11 §4.4: "days", "hours", "minutes", "seconds" and their abbreviations).
TIME_UNIT_DAYS: dict[str, float] = {
    "days": 1.0, "day": 1.0, "d": 1.0,
    "hours": 1 / 24, "hour": 1 / 24, "hr": 1 / 24, "h": 1 / 24,
    "minutes": 1 / 1440, "minute": 1 / 1440, "min": 1 / 1440,
    "seconds": 1 / 86400, "second": 1 / 86400, "sec": 1 / 86400, "s": 1 / 86400,
}  # fmt: skip

_LAT_UNITS = frozenset(u.lower() for u in LATITUDE_UNITS)
_LON_UNITS = frozenset(u.lower() for u in LONGITUDE_UNITS)
_TIME_UNITS_RE = re.compile(r"^\s*(\w+)\s+since\s+", re.IGNORECASE)


def time_unit_days(units, where: str) -> float:
    """Return the days in one unit of a CF time unit ``<unit> since <date>``.

    Raises
    ------
    InputFileError
        Naming ``where``, when the units are not of that form.
    """
    match = _TIME_UNITS_RE.match(str(units or ""))
    if not match or match[1].lower() not in TIME_UNIT_DAYS:
        raise InputFileError(f"{where}: time units {units!r}; expected '<days|hours|minutes|"
                             f"seconds> since <date>'")
    return TIME_UNIT_DAYS[match[1].lower()]


def coordinate_kind(var, name: str | None = None) -> CoordinateKind | None:
    """Tell whether a variable is the time, the latitude or the longitude, by CF rules.

    Parameters
    ----------
    var : xarray.DataArray or netCDF4.Variable-like
        Anything with ``attrs`` (a mapping of its attributes).
    name : str, optional
        Its name (default ``var.name``).

    Examples
    --------
    >>> import xarray as xr
    >>> coordinate_kind(xr.DataArray([0.0], dims="y", attrs={"units": "Degrees_North"}))
    'latitude'
    """
    attrs = var.attrs
    std = attrs.get("standard_name")
    units = str(attrs.get("units", "")).strip().lower()
    axis = str(attrs.get("axis", "")).upper()
    name = str(var.name if name is None else name).lower()
    if std == "time" or axis == "T" or " since " in units:
        return "time"
    if std == "latitude" or units in _LAT_UNITS or axis == "Y" or name in ("lat", "latitude"):
        return "latitude"
    if std == "longitude" or units in _LON_UNITS or axis == "X" or name in ("lon", "longitude"):
        return "longitude"
    return None


def find_coordinates(ds, kind: CoordinateKind, dims=None) -> list[str]:
    """Names of the variables of ``ds`` that are ``kind`` (those on a subset of ``dims``)."""
    return [
        str(n) for n, v in ds.variables.items()
        if (dims is None or set(v.dims) <= set(dims)) and coordinate_kind(v, str(n)) == kind
    ]


def bounds_variable(var) -> str | None:
    """Name of a time axis's bounds: ``climatology`` (CF §7.4) or ``bounds`` (§7.1), or None."""
    return var.attrs.get("climatology") or var.attrs.get("bounds")


def find_time_dim(ds, source: str) -> str:
    """Name of the one time coordinate of ``ds`` (decoded dates), or an error naming ``source``."""
    import cftime

    found = []
    for name, var in ds.coords.items():
        if var.ndim != 1 or var.dims[0] != name:
            continue
        if np.issubdtype(var.dtype, np.datetime64) or (
            var.dtype == object and var.size and isinstance(var.values[0], cftime.datetime)
        ):
            found.append(str(name))
    if not found:
        raise InputFileError(f"{source}: no time axis (a coordinate with CF units "
                             "'days since ...' and a calendar); cannot convert")
    if len(found) > 1:
        preferred = [n for n in found if ds[n].attrs.get("axis") == "T"
                     or ds[n].attrs.get("standard_name") == "time"]
        if len(preferred) != 1:
            raise InputFileError(f"{source}: several time axes ({', '.join(found)}); "
                                 "expected one")
        found = preferred
    return found[0]
