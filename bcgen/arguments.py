"""One validation layer for the command line and the Python API.

Each function checks one kind of argument and returns it as bcgen uses it, or raises a
:class:`~bcgen.errors.BcgenError` subclass whose one-line message names the argument
(``--solar-constant`` on the command line, ``solar_constant_wm2`` in the API) and says
what is expected. The commands and the public functions call the same checker with
their own name for the argument, so a value is judged by the same rule whatever its
route in (the spec's keys take their limits from here too).

No checker lets through a value that would turn finite input into inf or NaN further
on: numbers must be finite and within stated limits, and text where a number is
expected is refused rather than converted.
"""

from __future__ import annotations

import numbers
import warnings
from collections.abc import Sequence

import numpy as np

from bcgen.epochs import MAX_EPOCH_YEARS
from bcgen.errors import (
    BcgenError,
    EpochError,
    ImplausibleValueWarning,
    InsolationError,
    OrbitError,
)

#: Largest solar constant accepted, W m-2 (the spec's limit; about 3.7 times today's 1361).
#: Up to it, every insolation bcgen computes stays a finite float64.
MAX_SOLAR_CONSTANT_WM2 = 5000.0


#: An obliquity given in degrees but above 0 and at most this is taken for radians (π/2
#: rounded up): no deliberate experiment tilts the Earth by less than 1.6 degrees without
#: saying so (``idealized: true`` in a spec).
RADIAN_LIKE_OBLIQUITY_MAX = 1.5708


def shown(value) -> str:
    """Return a value as a message shows it: on one line, at most about 60 characters."""
    if isinstance(value, np.ndarray) and value.size != 1:
        return f"an array of shape {value.shape}"
    text = " ".join(repr(value).split())
    return text if len(text) <= 60 else text[:57] + "..."


def _describe(value) -> str:
    if isinstance(value, str):
        return f"the string {shown(str(value))}"
    return shown(value)


def one_of(value, choices) -> bool:
    """Tell whether ``value`` is one of the text ``choices`` (False for any non-text value).

    A choice argument given an array, a dict or another unhashable value is refused with
    the same message as an unknown name, instead of failing inside ``value in choices``.
    """
    return isinstance(value, str) and value in choices


def choice(value, name: str, choices, error: type[BcgenError] = BcgenError,
           what: str = "value") -> str:
    """Return ``value`` if it is one of ``choices``; else refuse it, listing them.

    The message is ``"{name}: unknown {what} {value!r}; expected one of a, b"``.
    """
    if not one_of(value, choices):
        raise error(f"{name}: unknown {what} {shown(value)}; expected one of "
                    f"{', '.join(choices)}")
    return value


def flag(value, name: str, error: type[BcgenError] = BcgenError) -> bool:
    """Return a yes/no argument, refusing anything but True or False (numpy's too)."""
    if not isinstance(value, (bool, np.bool_)):
        raise error(f"{name}: expected True or False, got {_describe(value)}")
    return bool(value)


def whole_number(value, name: str, error: type[BcgenError] = BcgenError, *,
                 low: int, high: int, what: str = "a whole number") -> int:
    """Return a whole number in [low, high]; refuse text, booleans, fractions and arrays."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (numbers.Real, np.ndarray)):
        raise error(f"{name}: expected {what} from {low:,} to {high:,}, got {_describe(value)}")
    n = number(value, name, error, f"{what} from {low:,} to {high:,}")
    if n != round(n) or not low <= n <= high:
        raise error(f"{name}: expected {what} from {low:,} to {high:,}, got {n:g}")
    return int(n)


def bounded_number(value, name: str, error: type[BcgenError] = BcgenError, *,
                   low: float = -np.inf, high: float = np.inf, what: str = "a number",
                   low_open: bool = False) -> float:
    """Return one finite number in [low, high] (or (low, high] with ``low_open``)."""
    x = number(value, name, error, what)
    if x < low or x > high or (low_open and x == low):
        lo = "(" if low_open else "["
        raise error(f"{name}: expected {what} in {lo}{low:g}, {high:g}], got {x:g}")
    return x


def path(value, name: str, error: type[BcgenError] = BcgenError, *,
         optional: bool = False):
    """Return a file or folder path as a :class:`pathlib.Path`; refuse other values and ''.

    With ``optional``, None is returned as None.
    """
    import os
    from pathlib import Path

    if value is None and optional:
        return None
    if isinstance(value, bytes):
        value = os.fsdecode(value)
    if not isinstance(value, (str, os.PathLike)) or str(value) == "":
        raise error(f"{name}: expected a path{' or None' if optional else ''}, got "
                    f"{_describe(value)}")
    return Path(value)


def text(value, name: str, error: type[BcgenError] = BcgenError, *,
         optional: bool = False, what: str = "text") -> str | None:
    """Return a text argument; refuse other values (None too unless ``optional``)."""
    if value is None and optional:
        return None
    if not isinstance(value, str):
        raise error(f"{name}: expected {what}{' or None' if optional else ''}, got "
                    f"{_describe(value)}")
    return value


def epoch_text(value, name: str, error: type[BcgenError] = EpochError) -> None:
    """Refuse epoch text that :func:`bcgen.epochs.parse_epoch` cannot read, naming ``name``."""
    from bcgen.epochs import parse_epoch

    try:
        parse_epoch(value)
    except EpochError as exc:
        raise error(f"{name}: {exc}") from None


#: Largest model year (in absolute value) bcgen accepts: far beyond any experiment, and well
#: inside the years cftime can count (it fails with an OverflowError beyond 2**31 - 1).
MAX_MODEL_YEAR = 1_000_000


def conversion(ds, error: type[BcgenError], *, method: str, methods, cyclic,
               min_valid_fraction, source, model_years=None, **orbits) -> None:
    """Check the arguments every conversion takes (one call at the top of each).

    ``ds`` must be an xarray Dataset, ``method`` one of ``methods``, ``cyclic`` None or a
    bool, ``min_valid_fraction`` a fraction, ``source`` text, ``model_years`` None or a
    pair (first, last) of model years; each of ``orbits`` given as text must be an epoch.
    """
    import xarray as xr

    if not isinstance(ds, xr.Dataset):
        raise error(f"ds: expected an xarray.Dataset (for instance xarray.open_dataset(path)), "
                    f"got {type(ds).__name__}")
    choice(method, "method", methods, error, "method")
    if cyclic is not None:
        flag(cyclic, "cyclic", error)
    fraction(min_valid_fraction, "min_valid_fraction")
    text(source, "source", error, what="a name of the input for messages")
    if model_years is not None:
        if not isinstance(model_years, (tuple, list)) or len(model_years) != 2:
            raise error(f"model_years: expected (first, last) model years, got "
                        f"{shown(model_years)}")
        first, last = (whole_number(y, "model_years", error, low=-MAX_MODEL_YEAR,
                                    high=MAX_MODEL_YEAR, what="model years")
                       for y in model_years)
        if last < first:
            raise error(f"model_years: the last year {last} is before the first {first}")
    for name, value in orbits.items():
        if isinstance(value, str):
            epoch_text(value, name)


def non_empty(arr: np.ndarray, name: str, error: type[BcgenError] = BcgenError,
              what: str = "at least one value") -> np.ndarray:
    """Refuse an empty array (it has no value to compute with)."""
    if arr.size == 0:
        raise error(f"{name}: expected {what}, got an empty array")
    return arr


def real_array(value, name: str, error: type[BcgenError], what: str) -> np.ndarray:
    """Return ``value`` as a float array of real numbers (inf and NaN let through); refuse text."""
    if isinstance(value, (str, bytes)):
        raise error(f"{name}: expected {what}, got {_describe(value)}")
    try:
        arr = np.asarray(value)
    except (TypeError, ValueError):
        raise error(f"{name}: expected {what}, got {_describe(value)}") from None
    if arr.dtype.kind not in "iuf" or arr.dtype == bool:
        if arr.dtype == object:
            try:
                if all(isinstance(v, numbers.Real) and not isinstance(v, bool)
                       for v in arr.ravel()):
                    arr = arr.astype(float)
            except (TypeError, ValueError):
                pass
        if arr.dtype.kind not in "iuf":
            first = next((v for v in arr.ravel() if not isinstance(v, numbers.Real)
                          or isinstance(v, bool)), arr.ravel()[0] if arr.size else value)
            raise error(f"{name}: expected {what}, got {_describe(first)}")
    return arr.astype(float)


def numbers_array(value, name: str, error: type[BcgenError] = BcgenError,
                  what: str = "numbers") -> np.ndarray:
    """Return ``value`` as a float array; refuse text, booleans and non-finite numbers."""
    arr = real_array(value, name, error, what)
    if not np.all(np.isfinite(arr)):
        bad = arr[~np.isfinite(arr)].ravel()[0]
        raise error(f"{name}: expected finite {what}, got {bad:g}")
    return arr


def number(value, name: str, error: type[BcgenError] = BcgenError,
           what: str = "a number") -> float:
    """Return one finite number; refuse text, booleans, arrays of several values and inf/NaN."""
    arr = numbers_array(value, name, error, what)
    if arr.size != 1:
        raise error(f"{name}: expected {what}, got {arr.size} values")
    return float(arr.reshape(()))


def solar_constant_wm2(value, name: str = "solar_constant_wm2") -> np.ndarray:
    """Check a solar constant: positive, finite, at most :data:`MAX_SOLAR_CONSTANT_WM2` W m-2."""
    s0 = real_array(value, name, InsolationError, "a positive number of W m-2")
    non_empty(s0, name, InsolationError, "a positive number of W m-2")
    bad = s0[~np.isfinite(s0) | (s0 <= 0)]
    if bad.size:
        raise InsolationError(f"{name}: expected a positive number of W m-2; got "
                              f"{bad.ravel()[0]:g}")
    big = s0[s0 > MAX_SOLAR_CONSTANT_WM2]
    if big.size:
        raise InsolationError(
            f"{name}: expected a positive number of W m-2 no larger than "
            f"{MAX_SOLAR_CONSTANT_WM2:g} (today's is about 1361); got {big.ravel()[0]:g}")
    warn_if_implausible(name, s0, "W m-2", "solar_constant_wm2")
    return s0


def latitudes_deg(value, name: str = "latitude_deg") -> np.ndarray:
    """Check latitudes: finite numbers in [-90, 90] degrees north."""
    lat = real_array(value, name, InsolationError, "latitudes in degrees north")
    bad = lat[~(np.abs(lat) <= 90.0)]
    if bad.size:
        raise InsolationError(
            f"{name}: latitudes must be in [-90, 90] degrees north; got "
            + ", ".join(f"{v:g}" for v in bad.ravel()[:3]))
    return lat


def finite_array(value, name: str, error: type[BcgenError] = InsolationError,
                 what: str = "finite numbers") -> np.ndarray:
    """Check an array of finite numbers (times, longitudes)."""
    return numbers_array(value, name, error, what)


def epochs_years(value, name: str = "years_from_1950",
                 error: type[BcgenError] = EpochError) -> np.ndarray:
    """Check epochs given as numbers of years from 1950 CE (not text; finite; within 1e9)."""
    if isinstance(value, str):
        raise error(f"{name}: expected years from 1950 CE as numbers, got "
                    f"{_describe(value)}; read epoch text with bcgen.parse_epoch({value!r})")
    years = real_array(value, name, error, "years from 1950 CE as numbers")
    if not np.all(np.isfinite(years)):
        raise error(f"{name}: epochs must be finite numbers of years from 1950 CE; got "
                    f"{years[~np.isfinite(years)].ravel()[0]:g}")
    bad = years[np.abs(years) > MAX_EPOCH_YEARS]
    if bad.size:
        raise error(f"{name}: epochs must lie within {MAX_EPOCH_YEARS:,.0f} years of "
                    f"1950 CE; got {bad.ravel()[0]:g}")
    return years


def fraction(value, name: str) -> float:
    """Check a fraction in (0, 1]."""
    given = real_array(value, name, BcgenError, "a fraction in (0, 1]")
    f = float(given.reshape(())) if given.size == 1 else number(given, name, BcgenError,
                                                                "a fraction in (0, 1]")
    if not 0.0 < f <= 1.0:  # NaN included
        raise BcgenError(f"{name}: expected a fraction in (0, 1]; got {f:g}")
    return f


def broadcast_shapes(arrays: Sequence[tuple[str, np.ndarray]],
                     error: type[BcgenError] = InsolationError) -> tuple[int, ...]:
    """Refuse arguments whose shapes do not broadcast together, naming them and their shapes."""
    try:
        return np.broadcast_shapes(*(np.shape(a) for _, a in arrays))
    except ValueError:
        text = ", ".join(f"{n} {tuple(np.shape(a))}" for n, a in arrays)
        raise error(f"arguments of shapes that do not broadcast together: {text}; give "
                    "arrays of the same shape (or scalars)") from None


#: Earth's range of obliquity over the last few million years, with a margin (Laskar et
#: al. 2004 give about 22.0-24.5 degrees; from memory). Outside it a value needs
#: ``idealized`` (``orbit.idealized: true`` in a spec, ``--idealized``, ``idealized=True``).
EARTH_OBLIQUITY_RANGE_DEG = (21.0, 25.5)


def outside_earth_obliquity(value: float) -> str | None:
    """Return the words for an obliquity outside :data:`EARTH_OBLIQUITY_RANGE_DEG`, or None.

    Every route gives them, followed by its own way to say ``idealized``.
    """
    lo, hi = EARTH_OBLIQUITY_RANGE_DEG
    if lo <= value <= hi:
        return None
    hint = ""
    if 0.3 < value < 0.5:
        hint = f"; {value:g} looks like radians ({np.degrees(value):.2f} degrees)"
    return (f"{value:g} degrees is outside Earth's range (about 22-24.5 degrees in the last "
            f"few million years){hint}")


def obliquity_deg(value, name: str | None = None, *, idealized: bool = False,
                  earth: bool = False) -> np.ndarray:
    """Check an obliquity in degrees, refusing a value that looks like radians.

    An obliquity above 0 and at most :data:`RADIAN_LIKE_OBLIQUITY_MAX` is refused
    (unless ``idealized``) whatever its route (spec, table column, option, API),
    naming the value in degrees it would be if it were radians. With ``earth`` (explicit
    values: a spec's ``solution: fixed``, the options, the API), a value in [0, 90] outside
    :data:`EARTH_OBLIQUITY_RANGE_DEG` is refused too unless ``idealized``.
    """
    eps = numbers_array(value, name or "obliquity_deg", OrbitError, "an obliquity in degrees")
    if not idealized:
        like = eps[(eps > 0) & (eps <= RADIAN_LIKE_OBLIQUITY_MAX)]
        if like.size:
            v = float(like.ravel()[0])
            prefix = f"{name}: " if name else ""
            raise OrbitError(
                f"{prefix}obliquity {v:g} degrees looks like radians ({np.degrees(v):.2f} "
                "degrees); give degrees (or a column or option named _rad)")
        for v in eps[(eps >= 0) & (eps <= 90)].ravel() if earth else ():
            words = outside_earth_obliquity(float(v))
            if words:
                prefix = f"{name}: " if name else ""
                raise OrbitError(f"{prefix}obliquity {words}; pass idealized=True for a "
                                 "deliberately non-Earth orbit")
    return eps


#: Ranges outside which a value is probably in the wrong unit (a warning in a spec; a
#: hundredfold outside, an error on every route): S0 from a faint young Sun (about 70 % of
#: today's 1361 W m-2) to well above today's; gases over the Phanerozoic with a wide
#: margin, CO2 in ppm, CH4 and N2O in ppb. Common practice, values from memory.
PLAUSIBLE_RANGES = {
    "solar_constant_wm2": (900.0, 1500.0),
    "co2": (100.0, 10000.0),
    "ch4": (100.0, 20000.0),
    "n2o": (50.0, 2000.0),
}
#: Units of the plausible range of each gas.
_GAS_RANGE_UNITS = {"co2": ("ppm", 1e-6), "ch4": ("ppb", 1e-9), "n2o": ("ppb", 1e-9)}
#: Units a gas value is commonly (mis)given in, for naming the likely one.
_GAS_UNITS = {"mol mol-1": 1.0, "ppm": 1e-6, "ppb": 1e-9, "ppt": 1e-12}


def gas_mole_fraction(gas: str, mole_fraction, name: str, unit_text: str):
    """Refuse a gas value a hundredfold or more outside its plausible range, naming the likely unit.

    The range is :data:`PLAUSIBLE_RANGES` (a value outside it but within a factor 100
    only warns in a spec). ``mole_fraction`` is in mol mol-1; ``unit_text`` is the unit
    the value was given in (for the message).
    """
    if gas not in _GAS_RANGE_UNITS:
        return
    lo, hi = PLAUSIBLE_RANGES[gas]
    unit, factor = _GAS_RANGE_UNITS[gas]
    values = np.atleast_1d(np.asarray(mole_fraction, dtype=float)) / factor
    bad = values[(values < lo / 100) | (values > hi * 100)]
    if not bad.size:
        return
    v = float(bad[0])
    given = v * factor / _unit_factor(unit_text)
    likely = [u for u, f in _GAS_UNITS.items() if lo <= given * f / factor <= hi]
    hint = f"; it looks like a value in {likely[0]}" if likely else ""
    raise BcgenError(f"{name}: {given:g} {unit_text} is far outside {lo:g}-{hi:g} {unit}, "
                     f"the range for the Earth{hint}; check the value and its units")


def _unit_factor(unit_text: str) -> float:
    return _GAS_UNITS.get(unit_text, {"1e-6": 1e-6, "1e-9": 1e-9, "1e-12": 1e-12}.get(
        unit_text, 1.0))


#: Longest experiment name: it starts every file name, which the file system limits to 255
#: bytes (POSIX NAME_MAX on common file systems), and the products add up to about 60.
MAX_EXPERIMENT_NAME = 100


def experiment_name(name, key: str = "experiment.name") -> str:
    """Check an experiment name: safe as the start of a file name in any folder.

    Letters, digits, ``_``, ``.`` and ``-``; starting with a letter or digit (so never
    ``.``, ``..``, a hidden name or one that reads as an option); at most
    :data:`MAX_EXPERIMENT_NAME` characters.
    """
    import re

    if not isinstance(name, str) or not re.fullmatch(r"[A-Za-z0-9_.-]+", name):
        raise BcgenError(f"{key}: {name!r} is not a usable name; expected letters, digits, "
                         "'_', '.' and '-' only (it goes into file names)")
    if not name[0].isalnum():
        raise BcgenError(f"{key}: {name!r} is not a usable name; it must start with a letter "
                         "or digit (a name starting with '.', '-' or '_' makes hidden files, "
                         "reads as an option or names a folder)")
    if len(name) > MAX_EXPERIMENT_NAME:
        raise BcgenError(f"{key}: the name has {len(name)} characters; the limit is "
                         f"{MAX_EXPERIMENT_NAME} (it starts every file name)")
    return name


def warn_if_implausible(name: str, value, unit: str, range_key: str | None = None) -> None:
    """Warn (:class:`~bcgen.errors.ImplausibleValueWarning`) for a value outside its range.

    The range is :data:`PLAUSIBLE_RANGES` ``[range_key or name]``; the message names the
    argument, the first value outside and the range, so the spec, the options and the API
    give the same text for the same value. The warning is attributed to this function so
    that repeats of one message are shown once.
    """
    lo, hi = PLAUSIBLE_RANGES[range_key or name]
    values = np.atleast_1d(np.asarray(value, dtype=float))
    outside = values[(values < lo) | (values > hi)]
    if outside.size:
        warnings.warn(
            f"{name}: {float(outside[0]):g} {unit} is outside {lo:g}-{hi:g} {unit}, the range "
            "expected for the Earth; check the value and its units",
            ImplausibleValueWarning,
            stacklevel=1,
        )
