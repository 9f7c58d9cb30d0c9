"""Read what a model produced: TOA insolation in NetCDF, or a table from its orbit routine.

NetCDF model output
    The variable is the one with CF standard name ``toa_incoming_shortwave_flux``
    (CMIP models call it ``rsdt``), or the one named with ``--var``; its units
    must be W m-2 or convertible to it (read by cf-units). Dimensions: time,
    latitude (1-D, found by standard name, units or axis) and optionally
    longitude; other dimensions must have length 1.
    Latitudes must be in degrees north (CF §4.1 units ``degrees_north`` or an
    alias; without units they are read as degrees north, with a note): other
    units, such as ``radians`` or the plain ``degrees`` of a rotated pole, and
    values beyond ±90 are refused. A
    latitude–longitude field is reduced to its zonal mean (NaN-aware: missing
    cells are left out of the mean), and the largest spread between longitudes
    is kept, since TOA insolation averaged over a day or a month does not depend
    on longitude. Any CF calendar with an annual cycle is read through cftime.

    Each value covers the interval given by the time bounds (CF §7.1), or, for a
    climatological axis, by the ``climatology`` bounds (CF §7.4). Without bounds,
    values whose ``cell_methods`` say ``time: point`` (CF §7.3) are instantaneous
    at their time stamps, at any spacing (hourly radiation output); otherwise
    daily and monthly spacing is recognised and each value is taken to cover the
    day or calendar month that contains its time stamp; a stamp exactly at 00:00
    is taken as the *start* of its day or month, with a warning, because models
    differ on this. Each interval is stored as fractional days after 1 January
    00:00 of the model year in which it starts (``start_day``, ``end_day``).
    Partial years, several years and missing values are all accepted.

Orbit table (CSV)
    What a model's orbit routine returns for a list of model times, one row per
    time, comma-separated, with a header line; lines starting with ``#`` are
    comments. Column names (units in the name):

    ==================================  ================================================
    column                              meaning
    ==================================  ================================================
    ``time_days``                       model time, fractional days after 1 January
                                        00:00 of the model year (required)
    ``year``                            model year (optional, default 1)
    ``declination_deg``                 the Sun's declination δ, degrees (or
                                        ``declination_rad``)
    ``distance_factor``                 (a/r)², the square of mean over actual
                                        Earth–Sun distance
    ``true_longitude_deg``              the Sun's true longitude λ, degrees from the
                                        March equinox (or ``true_longitude_rad``)
    ``insolation_wm2_lat<φ>_lon<λ>``    instantaneous TOA insolation at latitude φ and
                                        longitude λ (degrees), W m-2, mean solar time
                                        from longitude (any number of such columns)
    ==================================  ================================================

    At least one of declination and true longitude is needed; values are
    instantaneous (at ``time_days``). Empty cells are missing values. These are
    the columns of the per-timestep table that ``bcgen build`` writes, so a
    model's routine can print the same table and be checked against it.
"""

from __future__ import annotations

import csv
import difflib
import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import cftime
import numpy as np

from bcgen.cf import LATITUDE_UNITS
from bcgen.cf.cellmethods import parse as parse_cell_methods
from bcgen.cf.reader import (
    check_time_increases,
    coordinate_kind,
    is_cf_angle_units,
    missing_calendar_error,
    time_unit_days,
)
from bcgen.errors import BcgenError, BcgenWarning, InputFileError
from bcgen.solar_calendar.calendars import ModelCalendar, canonical_calendar
from bcgen.textfile import content_lines

Frequency = Literal["daily", "monthly", "sub-daily", "instant", "other"]

#: CF standard name of the variable the reader looks for.
STANDARD_NAME = "toa_incoming_shortwave_flux"

#: Columns of an orbit table and what each holds (see the module docstring).
TABLE_COLUMNS: dict[str, str] = {
    "time_days": "model time, fractional days after 1 January 00:00 of the model year",
    "year": "model year (whole number; default 1)",
    "declination_deg": "the Sun's declination, degrees",
    "declination_rad": "the Sun's declination, radians",
    "distance_factor": "(a/r)^2, mean over actual Earth-Sun distance, squared",
    "true_longitude_deg": "the Sun's true longitude from the March equinox, degrees",
    "true_longitude_rad": "the Sun's true longitude from the March equinox, radians",
}

_POINT_COLUMN = re.compile(r"^insolation_wm2_lat(-?\d+(?:\.\d*)?)_lon(-?\d+(?:\.\d*)?)$")


class AmbiguousTimeWarning(BcgenWarning):
    """Model output without time bounds whose time stamps could mean two intervals."""


class MissingUnitsWarning(BcgenWarning):
    """A model variable without a ``units`` attribute, read as W m-2."""


@dataclass(frozen=True, eq=False)
class ModelOutput:
    """Model insolation as a zonal mean, with the time interval each value covers.

    Attributes
    ----------
    source : str
        ``file:variable`` (or the table file), for messages and reports.
    calendar : str or None
        Canonical CF calendar name of the file, or None when the input has none
        (an orbit table: the spec's calendar is used).
    frequency : {"daily", "monthly", "sub-daily", "instant", "other"}
        What each value is.
    year : numpy.ndarray
        Model year of each value (int, shape (n,)).
    start_day, end_day : numpy.ndarray
        Interval of each value, fractional days after 1 January 00:00 of
        ``year`` (equal for instantaneous values).
    month : numpy.ndarray
        Calendar month (1-12) of the middle of each interval.
    latitude_deg : numpy.ndarray
        Latitudes, degrees north, shape (nlat,).
    insolation_wm2 : numpy.ndarray
        Zonal-mean insolation, W m-2, shape (n, nlat); NaN where missing.
    zonal_spread_wm2 : float or None
        Largest difference between longitudes at one time and latitude (lat-lon
        input only).
    geometry : dict
        For orbit tables: ``declination_deg``, ``distance_factor``,
        ``true_longitude_deg`` as given (arrays of shape (n,) or None).
    notes : tuple of str
        Things the reader assumed, for the report.
    daily_method : str or None
        The variable's ``daily_method`` attribute (bcgen writes it into its daily
        products: ``midday`` or ``day_average``), or None.
    """

    source: str
    calendar: str | None
    frequency: Frequency
    year: np.ndarray
    start_day: np.ndarray
    end_day: np.ndarray
    month: np.ndarray
    latitude_deg: np.ndarray
    insolation_wm2: np.ndarray
    zonal_spread_wm2: float | None = None
    geometry: dict = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    daily_method: str | None = None

    def __post_init__(self) -> None:
        n = self.year.shape[0]
        for name in ("start_day", "end_day", "month"):
            if getattr(self, name).shape != (n,):
                raise InputFileError(f"{self.source}: {name} has shape "
                                     f"{getattr(self, name).shape}; expected ({n},)")
        if self.insolation_wm2.shape != (n, self.latitude_deg.size):
            raise InputFileError(f"{self.source}: values of shape {self.insolation_wm2.shape} "
                                 f"do not match {n} times and {self.latitude_deg.size} latitudes")
        if n == 0 or not np.any(np.isfinite(self.insolation_wm2)):
            raise InputFileError(f"{self.source}: no valid values (all missing or empty)")

    @property
    def n_valid(self) -> int:
        """Number of values that are not missing."""
        return int(np.isfinite(self.insolation_wm2).sum())

    def describe(self) -> str:
        """One line: what was read."""
        kind = {"daily": "daily means", "monthly": "monthly means", "sub-daily":
                "sub-daily means", "instant": "instantaneous values", "other": "means"}
        years = np.unique(self.year)
        span = f"year {years[0]}" if years.size == 1 else f"years {years[0]}-{years[-1]}"
        cal = f", calendar {self.calendar}" if self.calendar else ""
        return (f"{self.source}: {kind[self.frequency]}, {self.year.size} times ({span}) x "
                f"{self.latitude_deg.size} latitudes{cal}")


# -----------------------------------------------------------------------------------------
# NetCDF
# -----------------------------------------------------------------------------------------
def read_model_output(path, var: str | None = None) -> ModelOutput:
    """Read TOA incoming shortwave from a model NetCDF file, as a zonal mean with intervals.

    Parameters
    ----------
    path : str or path-like
        NetCDF file.
    var : str, optional
        Variable name; default: the variable whose ``standard_name`` is
        ``toa_incoming_shortwave_flux``.

    Returns
    -------
    ModelOutput

    Raises
    ------
    InputFileError
        Missing or unreadable file, no such variable, wrong units, a curvilinear
        grid, a time axis without units or calendar that cftime can read.
    """
    import xarray as xr

    path = Path(path)
    if not path.is_file():
        raise InputFileError(f"{path}: no such file")
    try:
        ds = xr.open_dataset(path, decode_times=False, chunks={})
    except Exception as exc:  # noqa: BLE001 - any reader failure is a bad input file
        detail = f"{type(exc).__name__}: {_first_line(exc)}"
        if "did not find a match in any of xarray's" in detail:  # no known file signature
            detail = "not a NetCDF or HDF5 file"
        raise InputFileError(f"{path}: cannot read as NetCDF ({detail})") from None
    with ds:
        name = _find_variable(ds, path, var)
        da = ds[name]
        where = f"{path}:{name}"
        notes: list[str] = []
        to_wm2 = _wm2_factor(da, where)
        daily_method = da.attrs.get("daily_method")
        daily_method = str(daily_method).strip() if daily_method is not None else None
        time_dim, lat_dim, lon_dim = _find_dims(ds, da, where)
        lat = _latitudes_deg(ds[lat_dim], where, notes)
        extra = [d for d in da.dims if d not in (time_dim, lat_dim, lon_dim)]
        for dim in extra:
            if da.sizes[dim] != 1:
                raise InputFileError(
                    f"{where}: dimension {dim!r} has length {da.sizes[dim]}; expected only "
                    f"time, latitude and longitude (select one level first)")
        da = da.squeeze(extra, drop=True) if extra else da
        order = [time_dim, lat_dim] + ([lon_dim] if lon_dim else [])
        da = da.transpose(*order).astype(float)
        if to_wm2 != 1.0:  # declared units converted by cf-units
            da = da * to_wm2
        spread = None
        if lon_dim:
            import dask

            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN slices
                zonal, high, low = dask.compute(da.mean(lon_dim, skipna=True),
                                                da.max(lon_dim, skipna=True),
                                                da.min(lon_dim, skipna=True))
            values = np.asarray(zonal.values, dtype=float)
            diff = np.asarray(high.values - low.values, dtype=float)
            spread = float(np.nanmax(diff)) if np.any(np.isfinite(diff)) else None
            notes.append(f"zonal mean of {da.sizes[lon_dim]} longitudes")
        else:
            values = np.asarray(da.values, dtype=float)
        values[~np.isfinite(values)] = np.nan
        point = _time_is_point(da.attrs.get("cell_methods"), time_dim)
        calendar, year, start, end, month, frequency = _read_time(ds, time_dim, where, notes,
                                                                  point)
    order_idx = np.lexsort((start, year))
    lat_order = np.argsort(lat)
    return ModelOutput(
        source=where,
        calendar=calendar,
        frequency=frequency,
        year=year[order_idx],
        start_day=start[order_idx],
        end_day=end[order_idx],
        month=month[order_idx],
        latitude_deg=lat[lat_order],
        insolation_wm2=values[order_idx][:, lat_order],
        zonal_spread_wm2=spread,
        notes=tuple(notes),
        daily_method=daily_method,
    )


def read_model_outputs(paths, var: str | None = None) -> ModelOutput:
    """Read model output written as one file or as several (a run split by years).

    Each file is read by :func:`read_model_output` (the one CF reader,
    :mod:`bcgen.cf.reader`); the files are then joined along time as ``bcgen convert``
    joins its inputs: ordered by their first time, with the same variable, calendar,
    kind of values and latitudes, and each file starting where the one before it ends.

    Parameters
    ----------
    paths : str, path-like or sequence of them
        One NetCDF file, or the files of one run in any order.
    var : str, optional
        Variable name (default: found by standard name in each file).

    Raises
    ------
    InputFileError
        As :func:`read_model_output` for each file; naming the file that differs from
        the first (variable, calendar, kind of values, latitudes) or that leaves a gap
        or an overlap with the file before it.
    """
    if isinstance(paths, (str, bytes)) or not hasattr(paths, "__iter__"):
        paths = [paths]
    paths = [Path(p) for p in paths]
    if not paths:
        raise InputFileError("no model file given")
    parts = [read_model_output(p, var) for p in paths]
    if len(parts) == 1:
        return parts[0]
    names = [part.source[len(str(path)) + 1:] for path, part in zip(paths, parts, strict=True)]
    first, p0 = parts[0], paths[0]
    for path, part, name in zip(paths, parts, names, strict=True):
        for what, mine, theirs in (("variable", name, names[0]),
                                   ("calendar", part.calendar, first.calendar),
                                   ("values", part.frequency, first.frequency),
                                   ("daily_method", part.daily_method, first.daily_method)):
            if mine != theirs:
                raise InputFileError(f"{path}: {what} {mine} differs from {p0} ({theirs}); the "
                                     "files of one run must hold the same variable, calendar "
                                     "and kind of values")
        if part.latitude_deg.shape != first.latitude_deg.shape or not np.allclose(
                part.latitude_deg, first.latitude_deg, rtol=0.0, atol=1e-6):
            raise InputFileError(f"{path}: latitudes differ from those of {p0}; the files of "
                                 "one run must share a grid")
    order = sorted(range(len(parts)), key=lambda i: (parts[i].year[0], parts[i].start_day[0]))
    cal = ModelCalendar(first.calendar) if first.calendar else None
    for i, j in zip(order[:-1], order[1:], strict=True):
        _check_join(parts[i], paths[i], parts[j], paths[j], cal)
    ordered = [parts[i] for i in order]

    def joined(name: str) -> np.ndarray:
        return np.concatenate([getattr(part, name) for part in ordered])

    spreads = [part.zonal_spread_wm2 for part in ordered if part.zonal_spread_wm2 is not None]
    notes = tuple(dict.fromkeys(n for part in ordered for n in part.notes))
    return ModelOutput(
        source=f"{paths[order[0]]} ... {paths[order[-1]]}:{names[0]}",
        calendar=first.calendar, frequency=first.frequency, year=joined("year"),
        start_day=joined("start_day"), end_day=joined("end_day"), month=joined("month"),
        latitude_deg=first.latitude_deg, insolation_wm2=joined("insolation_wm2"),
        zonal_spread_wm2=max(spreads) if spreads else None,
        notes=(*notes, f"{len(parts)} files joined along time"),
        daily_method=first.daily_method)


#: Largest mismatch between the end of one file and the start of the next, days.
_JOIN_TOL_DAYS = 1e-5


def _check_join(a: ModelOutput, path_a, b: ModelOutput, path_b, cal) -> None:
    """Refuse a gap or an overlap between the last interval of ``a`` and the first of ``b``."""
    ya, end = int(a.year[-1]), float(np.max(a.end_day[a.year == a.year[-1]]))
    yb, start = int(b.year[0]), float(b.start_day[0])
    if cal is None:
        return
    between = sum(cal.year_length_days(y) for y in range(ya, yb)) if yb >= ya else -sum(
        cal.year_length_days(y) for y in range(yb, ya))
    step = start + between - end  # days from the end of a to the start of b
    instant = a.frequency == "instant"
    if (instant and step > 0.0) or (not instant and abs(step) <= _JOIN_TOL_DAYS):
        return
    what = "an overlap" if step < 0 else "a gap"
    raise InputFileError(f"{path_b}: starts at model year {yb}, day {start:g} but {path_a} ends "
                         f"at model year {ya}, day {end:g} ({what} between files); expected "
                         "consecutive files of one run")


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return text[0] if text else "no detail"


def _find_variable(ds, path: Path, var: str | None) -> str:
    names = list(ds.data_vars)
    if var is not None:
        if var not in ds.data_vars:
            hint = difflib.get_close_matches(var, names, n=1)
            raise InputFileError(
                f"{path}: no variable {var!r} (--var); variables: {', '.join(names) or 'none'}"
                + (f" (did you mean {hint[0]!r}?)" if hint else ""))
        return var
    found = [n for n in names if ds[n].attrs.get("standard_name") == STANDARD_NAME]
    if len(found) == 1:
        return found[0]
    if len(found) > 1:
        raise InputFileError(f"{path}: several variables have standard_name {STANDARD_NAME!r} "
                             f"({', '.join(found)}); choose one with --var")
    flux = [n for n in names if _is_wm2(ds[n].attrs.get("units"))]
    raise InputFileError(
        f"{path}: no variable with standard_name {STANDARD_NAME!r}; name the TOA incoming "
        f"shortwave variable with --var (variables in W m-2: {', '.join(flux) or 'none'})")


def _is_wm2(units) -> bool:
    """Whether ``units`` is a UDUNITS-2 unit convertible to W m-2 (read by cf-units)."""
    import cf_units

    if units is None:
        return False
    try:
        return cf_units.Unit(str(units)).is_convertible("W m-2")
    except ValueError:
        return False


def _wm2_factor(da, where: str) -> float:
    """Factor from the variable's declared ``units`` to W m-2; refuse missing or other units.

    The units are read by cf-units (UDUNITS-2): ``W m-2``, ``W/m2``, ``W m**-2`` and
    ``mW m-2`` all convert.
    """
    import cf_units

    units = da.attrs.get("units")
    text = "" if units is None else str(units).strip()
    if not text:
        raise InputFileError(f"{where}: no units attribute; expected units = \"W m-2\" (or a "
                             "unit convertible to it) on the TOA insolation")
    try:
        unit = cf_units.Unit(text)
    except ValueError:
        unit = None
    if unit is None or not unit.is_convertible("W m-2"):
        raise InputFileError(f"{where}: units {text!r} cannot be converted to W m-2; expected "
                             "the TOA insolation in W m-2 or a unit convertible to it")
    return float(unit.convert(1.0, "W m-2"))




def _latitudes_deg(coord, where: str, notes: list[str]) -> np.ndarray:
    """Latitudes of a coordinate, degrees north; refuses other units and values beyond ±90.

    CF §4.1 units of latitude: ``degrees_north`` and its aliases
    (:data:`bcgen.cf.LATITUDE_UNITS`). Plain ``degrees`` is the unit of rotated-pole
    ``grid_latitude`` (CF §4.1), and ``radians`` would be read 57 times too small.
    A coordinate without units is read as degrees north, with a note.
    """
    name = coord.name
    units = coord.attrs.get("units")
    if units is None:
        notes.append(f"latitude coordinate {name!r} has no units attribute; read as "
                     f"degrees_north")
    elif not is_cf_angle_units(units, "latitude"):
        raise InputFileError(f"{where}: latitude coordinate {name!r} has units {units!r}; "
                             f"expected degrees_north (CF §4.1: "
                             f"{', '.join(sorted(LATITUDE_UNITS))})")
    lat = np.asarray(coord.values, dtype=float)
    if lat.ndim != 1 or not np.all(np.isfinite(lat)):
        raise InputFileError(f"{where}: latitude coordinate {name!r} must be a 1-D axis "
                             f"without missing values")
    if np.any(np.abs(lat) > 90.0 + 1e-6):
        worst = float(lat[np.argmax(np.abs(lat))])
        raise InputFileError(f"{where}: latitude coordinate {name!r} has values outside "
                             f"[-90, 90] (e.g. {worst:g}); expected degrees north")
    return np.clip(lat, -90.0, 90.0)


def _find_dims(ds, da, where: str) -> tuple[str, str, str | None]:
    found: dict[str, str] = {}
    for dim in da.dims:
        kind = coordinate_kind(ds[dim]) if dim in ds.variables else None
        if kind and kind not in found:
            found[kind] = dim
    if "latitude" not in found:
        aux = [c for c in da.coords if coordinate_kind(ds[c]) == "latitude" and ds[c].ndim > 1]
        if aux:
            raise InputFileError(
                f"{where}: latitude {aux[0]!r} is 2-D (a curvilinear grid); give the zonal mean "
                f"or regrid to a regular latitude axis first")
        raise InputFileError(f"{where}: no latitude dimension (expected a 1-D coordinate with "
                             f"standard_name 'latitude' or units 'degrees_north')")
    if "time" not in found:
        raise InputFileError(f"{where}: no time dimension (expected a coordinate with units "
                             f"'<unit> since <date>' and a calendar)")
    return found["time"], found["latitude"], found.get("longitude")


def _time_is_point(cell_methods, dim: str) -> bool:
    """Whether ``cell_methods`` says the values are instantaneous (CF §7.3 ``time: point``).

    Parsed as ``bcgen convert`` parses it (:func:`bcgen.cf.cellmethods.parse`);
    entries naming the time dimension or ``time`` are the time entries.
    """
    return any(e.method == "point" for e in parse_cell_methods(str(cell_methods or ""))
               if dim in e.names or "time" in e.names)


def _read_time(ds, dim: str, where: str, notes: list[str], point: bool = False):
    """Calendar, year, start_day, end_day, month and frequency of each time step.

    ``point``: the values are instantaneous (``cell_methods`` ``time: point``), read
    as instants at their stamps when the axis has no bounds.
    """
    time = ds[dim]
    units = time.attrs.get("units")
    factor = time_unit_days(units, where)
    raw_calendar = time.attrs.get("calendar")
    if raw_calendar is None:  # CF's default ('standard') is rarely a model's: never guessed
        raise missing_calendar_error(where, dim)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", BcgenWarning)
            calendar = canonical_calendar(raw_calendar, f"{where}: time calendar")
    except BcgenError as exc:
        raise InputFileError(str(exc)) from None
    t = np.asarray(time.values, dtype=float)
    if t.ndim != 1 or not np.all(np.isfinite(t)):
        raise InputFileError(f"{where}: time values must be a 1-D axis without missing values")
    check_time_increases(t, where, dim)
    bounds_name = time.attrs.get("bounds") or time.attrs.get("climatology")
    climatology = "climatology" in time.attrs and bounds_name == time.attrs.get("climatology")
    bounds = None
    if bounds_name and bounds_name in ds.variables:
        b = ds[bounds_name]
        other = [d for d in b.dims if d != dim]
        b = b.transpose(dim, *other) if other else b
        bounds = np.asarray(b.values, dtype=float)
        if bounds.shape != (t.size, 2):
            raise InputFileError(f"{where}: time bounds {bounds_name!r} have shape "
                                 f"{bounds.shape}; expected ({t.size}, 2)")
    cal = ModelCalendar(calendar)

    def to_dates(values):
        try:
            return cftime.num2date(values, units, calendar=calendar)
        except Exception as exc:  # noqa: BLE001
            raise InputFileError(f"{where}: cannot read times with units {units!r} and calendar "
                                 f"{raw_calendar!r} ({_first_line(exc)})") from None

    jan1_cache: dict[int, float] = {}

    def day_of_year(values, dates):
        years = np.array([d.year for d in np.atleast_1d(dates)], dtype=int)
        for y in np.unique(years):
            if int(y) not in jan1_cache:
                jan1 = cftime.datetime(int(y), 1, 1, calendar=calendar)
                jan1_cache[int(y)] = float(cftime.date2num(jan1, units, calendar=calendar))
        base = np.array([jan1_cache[int(y)] for y in years])
        return years, (np.asarray(values, dtype=float) - base) * factor

    if bounds is not None:
        lo, hi = np.minimum(bounds[:, 0], bounds[:, 1]), np.maximum(bounds[:, 0], bounds[:, 1])
        year, start = day_of_year(lo, to_dates(lo))
        length = (hi - lo) * factor
        if climatology:
            # CF §7.4: (start of the first sub-interval, end of the last); fold into one year.
            _, end_in_own_year = day_of_year(hi, to_dates(hi))
            lengths = np.array([cal.year_length_days(int(y)) for y in year])
            length = np.mod(end_in_own_year - start, lengths)
            length = np.where(length <= 1e-9, lengths, length)
            notes.append("climatological time axis: each value folded into one model year")
        end = start + length
    elif point:
        year, start = day_of_year(t, to_dates(t))
        end = start.copy()
        notes.append("cell_methods time: point: each value taken as the instantaneous flux "
                     "at its time stamp")
    else:
        year, start, end = _infer_intervals(t, factor, to_dates, day_of_year, cal, where, notes)
    mid_dates = to_dates((start + end) / 2.0 / factor + _offsets(year, jan1_cache))
    month = np.array([d.month for d in np.atleast_1d(mid_dates)], dtype=int)
    frequency = _classify(end - start)
    return calendar, year, start, end, month, frequency


def _offsets(year: np.ndarray, jan1_cache: dict[int, float]) -> np.ndarray:
    return np.array([jan1_cache[int(y)] for y in year])


def _classify(length_days: np.ndarray) -> Frequency:
    typical = float(np.median(length_days))
    if typical <= 1e-9:
        return "instant"
    if abs(typical - 1.0) < 1e-6:
        return "daily"
    if typical < 1.0:
        return "sub-daily"
    if 27.5 <= typical <= 31.5:
        return "monthly"
    return "other"


def _infer_intervals(t, factor, to_dates, day_of_year, cal, where, notes):
    """Intervals of a time axis without bounds: the day or month containing each stamp."""
    step = float(np.median(np.diff(t))) * factor if t.size > 1 else np.nan
    dates = to_dates(t)
    year, doy = day_of_year(t, dates)
    at_midnight = np.allclose(doy, np.round(doy), atol=1e-6)
    if t.size > 1 and 0.9 <= step <= 1.1:
        start = np.floor(doy + 1e-9)
        end = start + 1.0
        what = "day"
    elif t.size > 1 and 27.0 <= step <= 32.0:
        starts = {int(y): cal.month_starts_days(int(y)) for y in np.unique(year)}
        months = np.array([d.month for d in np.atleast_1d(dates)], dtype=int)
        start = np.array([starts[int(y)][m - 1] for y, m in zip(year, months, strict=True)])
        end = np.array([starts[int(y)][m] for y, m in zip(year, months, strict=True)])
        at_midnight = at_midnight and np.allclose(doy, start, atol=1e-6)
        what = "calendar month"
    elif t.size == 1:
        raise InputFileError(f"{where}: one time step without bounds: cannot tell which "
                             "interval it stands for; add a CF bounds variable (CF §7.1)")
    else:
        raise InputFileError(
            f"{where}: the time axis has no bounds and its spacing ({step:g} days) is neither "
            f"daily nor monthly; add time bounds (CF §7.1) so each value's interval is known, "
            f"or cell_methods \"time: point\" (CF §7.3) if the values are instantaneous")
    if at_midnight:
        warnings.warn(
            f"{where}: time stamps at 00:00 without time bounds; each value is taken as the "
            f"mean over the {what} that starts at its stamp (add time bounds, CF §7.1, to "
            f"remove the ambiguity)", AmbiguousTimeWarning, stacklevel=4)
    notes.append(f"no time bounds: each value taken as the mean over its {what}")
    return year, start, end


# -----------------------------------------------------------------------------------------
# CSV orbit table
# -----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class OrbitTable:
    """The rows of an orbit table (see the module docstring for the columns).

    Angles are stored in degrees whatever unit the file used; a column absent
    from the file is None; empty cells are NaN. ``point_insolation_wm2`` maps
    (latitude_deg, longitude_deg) to the instantaneous insolation column.
    """

    source: str
    year: np.ndarray
    time_days: np.ndarray
    declination_deg: np.ndarray | None
    distance_factor: np.ndarray | None
    true_longitude_deg: np.ndarray | None
    point_insolation_wm2: dict = field(default_factory=dict)


def read_orbit_table(path) -> OrbitTable:
    """Read a CSV table of the Sun's position from a model's orbit routine.

    Raises
    ------
    InputFileError
        Missing file, unknown or duplicated columns (the message lists the valid
        ones and the closest match), no time or no geometry column, a cell that
        is not a number (with its line number).
    """
    path = Path(path)
    lines = content_lines(path, "orbit table")
    if not lines:
        raise InputFileError(f"{path}: empty table; expected a header line such as "
                             f"'time_days,declination_deg,distance_factor'")
    header_line, header = lines[0][0], [c.strip() for c in next(csv.reader([lines[0][1]]))]
    for name in header:
        if name not in TABLE_COLUMNS and not _POINT_COLUMN.match(name):
            hint = difflib.get_close_matches(name, TABLE_COLUMNS, n=1)
            raise InputFileError(
                f"{path}, line {header_line}: unknown column {name!r}; expected columns from "
                f"{', '.join(TABLE_COLUMNS)}, insolation_wm2_lat<LAT>_lon<LON>"
                + (f" (did you mean {hint[0]!r}?)" if hint else ""))
    if len(set(header)) != len(header):
        raise InputFileError(f"{path}, line {header_line}: a column name appears twice")
    for pair in (("declination_deg", "declination_rad"),
                 ("true_longitude_deg", "true_longitude_rad")):
        if set(pair) <= set(header):
            raise InputFileError(f"{path}, line {header_line}: give {pair[0]} or {pair[1]}, "
                                 f"not both")
    if "time_days" not in header:
        raise InputFileError(f"{path}, line {header_line}: no 'time_days' column (model time, "
                             f"fractional days after 1 January 00:00)")
    if not {"declination_deg", "declination_rad", "true_longitude_deg",
            "true_longitude_rad"} & set(header):
        raise InputFileError(f"{path}, line {header_line}: needs a declination_deg or "
                             f"true_longitude_deg column")
    columns: dict[str, list[float]] = {name: [] for name in header}
    for number, line in lines[1:]:
        cells = [c.strip() for c in next(csv.reader([line]))]
        if len(cells) != len(header):
            raise InputFileError(f"{path}, line {number}: {len(cells)} cells; expected "
                                 f"{len(header)} ({', '.join(header)})")
        for name, cell in zip(header, cells, strict=True):
            if cell == "" and name not in ("time_days", "year"):
                columns[name].append(np.nan)
                continue
            try:
                value = float(cell)
            except ValueError:
                raise InputFileError(f"{path}, line {number}: {cell!r} in column {name} is not "
                                     f"a number") from None
            if not np.isfinite(value) and name in ("time_days", "year"):
                raise InputFileError(f"{path}, line {number}: {name} must be finite")
            if name == "year" and value != int(value):
                raise InputFileError(f"{path}, line {number}: year {cell!r} is not a whole "
                                     f"number")
            columns[name].append(value)
    if not columns["time_days"]:
        raise InputFileError(f"{path}: the table has a header but no rows")
    arr = {k: np.asarray(v, dtype=float) for k, v in columns.items()}

    def degrees(stem: str):
        if f"{stem}_deg" in arr:
            return arr[f"{stem}_deg"]
        if f"{stem}_rad" in arr:
            return np.rad2deg(arr[f"{stem}_rad"])
        return None

    n = arr["time_days"].size
    return OrbitTable(
        source=str(path),
        year=arr["year"].astype(int) if "year" in arr else np.ones(n, dtype=int),
        time_days=arr["time_days"],
        declination_deg=degrees("declination"),
        distance_factor=arr.get("distance_factor"),
        true_longitude_deg=degrees("true_longitude"),
        point_insolation_wm2={
            (float(m[1]), float(m[2])): arr[name]
            for name in header if (m := _POINT_COLUMN.match(name))},
    )


def is_table_path(path) -> bool:
    """Whether a model file is read as an orbit table (by its suffix: .csv or .txt)."""
    return Path(path).suffix.lower() in (".csv", ".txt")


def month_of(calendar: ModelCalendar, year: np.ndarray, t_days: np.ndarray) -> np.ndarray:
    """Calendar month (1-12) that contains each model time (times outside the year are wrapped)."""
    out = np.empty(year.shape, dtype=int)
    for y in np.unique(year):
        sel = year == y
        starts = calendar.month_starts_days(int(y))
        t = np.mod(t_days[sel], starts[-1])
        out[sel] = np.clip(np.searchsorted(starts, t, side="right"), 1, 12)
    return out
