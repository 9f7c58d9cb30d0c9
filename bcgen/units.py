"""Units read from the user's files, converted with a units library (cf-units, UDUNITS-2).

A quantity read from a file takes its units from the file: the CF ``units`` attribute
of a NetCDF variable, or the unit in a column's name. Declared units that convert to
the ones bcgen works in (radians to degrees, ppb to mole fraction) are converted by
cf-units, the UDUNITS-2 library CF itself refers to; a missing, unknown or
non-convertible unit is refused, and so is a value that is implausible in its declared
unit (a latitude axis within ±1.6 "degrees" is a radian axis mislabelled), naming the
value and the unit it probably is in.
"""

from __future__ import annotations

import numpy as np

from bcgen.cf.reader import is_cf_angle_units
from bcgen.errors import BcgenError


def _unit(text: str, where: str, error: type[BcgenError]):
    import cf_units

    try:
        return cf_units.Unit(text)
    except ValueError:
        raise error(f"{where}: units {text!r} are not units that UDUNITS-2 knows; expected "
                    "an angle such as degrees_north or radians") from None


def angle_to_degrees(values, units, *, where: str, kind: str,
                     error: type[BcgenError]) -> np.ndarray:
    """Convert a latitude or longitude axis read from a file to degrees.

    Parameters
    ----------
    values : array_like
        The values as stored.
    units : str or None
        Their ``units`` attribute.
    where : str
        What to name in messages (``grid file g.nc: variable 'lat'``).
    kind : {"latitude", "longitude"}
        The axis (sets the expected CF units and the plausibility rule).
    error : type
        The error class to raise.
    """
    expected = "degrees_north" if kind == "latitude" else "degrees_east"
    values = np.asarray(values, dtype=float)
    text = "" if units is None else str(units).strip()
    if not text:
        raise error(f"{where}: no units attribute; expected units = \"{expected}\" (CF 1.11 "
                    f"§4.1-4.2), or the angle unit the values are in, such as \"radians\"")
    if is_cf_angle_units(text, kind):
        degrees = values
        declared_degrees = True
    else:
        unit = _unit(text, where, error)
        if not unit.is_convertible("degrees"):
            raise error(f"{where}: units {text!r} are not an angle; expected {expected}")
        degrees = np.asarray(unit.convert(values, "degrees"), dtype=float)
        declared_degrees = unit == _unit("degrees", where, error)
    if kind == "latitude" and declared_degrees and values.size >= 3:
        span = float(np.nanmax(values) - np.nanmin(values))
        if np.nanmax(np.abs(values)) <= np.pi / 2 + 1e-6 and span >= 1.0:
            lo, hi = float(np.nanmin(values)), float(np.nanmax(values))
            raise error(f"{where}: latitudes from {lo:g} to {hi:g} with units {text!r} look "
                        f"like radians ({np.degrees(lo):.1f} to {np.degrees(hi):.1f} degrees); "
                        "if they are, set units = \"radians\"")
    return degrees


def convert(values, units: str, to: str, *, where: str, error: type[BcgenError]) -> np.ndarray:
    """Convert ``values`` from ``units`` to ``to`` with cf-units; refuse a non-convertible unit."""
    unit = _unit(units, where, error)
    if not unit.is_convertible(to):
        raise error(f"{where}: units {units!r} cannot be converted to {to!r}")
    return np.asarray(unit.convert(np.asarray(values, dtype=float), to), dtype=float)
