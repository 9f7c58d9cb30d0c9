"""The one CF reader: time axes, latitude and longitude, time units of files bcgen reads.

Model output (``bcgen convert``, ``bcgen validate``), grid files and files bcgen built
(``bcgen plot``) are read by the same rules:

- a coordinate is the latitude (longitude, time) by its ``standard_name``, its units
  (CF 1.11 §4.1: ``degrees_north`` and its spellings, case aside; §4.4: ``<unit> since
  <date>``), its ``axis`` attribute (``Y``, ``X``, ``T``) or, last, its name (``lat``,
  ``latitude``; ``lon``, ``longitude``), in that order (:func:`coordinate_kind`,
  :func:`find_coordinates`); units of latitude and longitude by :func:`is_cf_angle_units`;
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


#: The CF rules by which a coordinate is recognised, strongest first (CF 1.11 §4).
COORDINATE_RULES = ("standard_name", "units", "axis", "name")

_AXES = {"time": "T", "latitude": "Y", "longitude": "X"}
_NAMES = {"time": (), "latitude": ("lat", "latitude"), "longitude": ("lon", "longitude")}


def _rule_hits(var, name: str | None) -> dict[str, tuple[bool, bool, bool, bool]]:
    attrs = var.attrs
    std = attrs.get("standard_name")
    units = str(attrs.get("units", "")).strip().lower()
    axis = str(attrs.get("axis", "")).upper()
    name = str(var.name if name is None else name).lower()
    units_match = {"time": " since " in units, "latitude": units in _LAT_UNITS,
                   "longitude": units in _LON_UNITS}
    return {kind: (std == kind, units_match[kind], axis == _AXES[kind], name in _NAMES[kind])
            for kind in _AXES}


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
    for kind, hits in _rule_hits(var, name).items():
        if any(hits):
            return kind
    return None


def coordinate_rule(var, kind: CoordinateKind, name: str | None = None) -> int | None:
    """Index in :data:`COORDINATE_RULES` of the strongest rule making ``var`` the ``kind``.

    None when the variable is not that coordinate (:func:`coordinate_kind` differs).
    """
    if coordinate_kind(var, name) != kind:
        return None
    return _rule_hits(var, name)[kind].index(True)


def find_coordinates(ds, kind: CoordinateKind, dims=None, *, strongest: bool = False
                     ) -> list[str]:
    """Names of the variables of ``ds`` that are ``kind``, by the strongest CF rule first.

    Bounds variables (named by another variable's ``bounds`` or ``climatology``
    attribute) are not coordinates (CF 1.11 §7.1).

    Parameters
    ----------
    ds : xarray.Dataset
    kind : {"time", "latitude", "longitude"}
    dims : iterable of str, optional
        Keep only the variables on a subset of these dimensions.
    strongest : bool
        Keep only those found by the strongest rule any of them meets (a variable with
        ``standard_name = "latitude"`` hides one that only has latitude units).
    """
    bounds = {bounds_variable(v) for v in ds.variables.values()} - {None}
    ranked = []
    for n, v in ds.variables.items():
        if str(n) in bounds or (dims is not None and not set(v.dims) <= set(dims)):
            continue
        rule = coordinate_rule(v, kind, str(n))
        if rule is not None:
            ranked.append((rule, str(n)))
    ranked.sort(key=lambda item: item[0])  # stable: the file's order within a rule
    if strongest and ranked:
        ranked = [item for item in ranked if item[0] == ranked[0][0]]
    return [n for _, n in ranked]


def is_cf_angle_units(units, kind: CoordinateKind) -> bool:
    """Tell whether ``units`` is one of CF's spellings of degrees north (east), case aside.

    CF 1.11 §4.1 (``degrees_north``, ``degree_N`` ...) and §4.2 (``degrees_east`` ...).

    >>> is_cf_angle_units("Degrees_North", "latitude"), is_cf_angle_units("degrees", "latitude")
    (True, False)
    """
    text = str(units or "").strip().lower()
    return text in (_LAT_UNITS if kind == "latitude" else _LON_UNITS)


def missing_calendar_error(where, name: str) -> InputFileError:
    """Return the error for a time coordinate without a ``calendar`` attribute.

    CF 1.11 §4.4.1 makes ``standard`` the default, but that is rarely a model's calendar:
    bcgen never guesses it, on any route (convert, validate).
    """
    return InputFileError(f"{where}: time coordinate '{name}' has no calendar attribute; "
                          "expected the model's CF calendar (e.g. calendar = \"noleap\")")


def check_time_increases(values, where, name: str) -> None:
    """Refuse an empty time axis or one whose values do not strictly increase.

    CF 1.11 §4.4 does not require it, but a model's output series and climatologies
    always increase; repeated or reversed times mean a file joined or edited wrongly.
    """
    values = np.asarray(values)
    if values.size == 0:
        raise InputFileError(f"{where}: the time axis '{name}' is empty")
    if values.size > 1 and not all(b > a for a, b in zip(values[:-1], values[1:], strict=True)):
        raise InputFileError(f"{where}: time values of '{name}' do not increase")


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
