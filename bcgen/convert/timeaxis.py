"""Reading the time axis of model output: calendar, interval edges, monthly or daily, cycle.

Rules (documented for users in :mod:`bcgen.convert`)
----------------------------------------------------
- The time axis is the one coordinate holding dates (decoded CF time). Its calendar is
  the CF ``calendar`` of the file; a file without one is refused when it is opened
  (:mod:`bcgen.convert.io`), since CF's default (``standard``, CF §4.4.1) is rarely a
  model's calendar. Dates held in memory as numpy datetimes are ``standard``.
- Intervals come from the CF bounds variable (``bounds`` attribute) when there is one.
  Without bounds, each time stamp stands for the calendar month that contains it
  (monthly data: one stamp per month, consecutive months) or, for daily and
  sub-daily data with constant spacing ``d`` (a whole fraction of a day), for the
  interval ``[k d, (k+1) d)`` of the day that contains it.
- Monthly input must be fixed-day months: every interval starts at 00:00 on the 1st
  and ends at the start of the next month. Daily input: equal intervals of one day or
  a whole fraction of a day. Intervals must be contiguous (no gaps, no overlaps).
- The input is a climatology (cyclic) when its time variable has a CF ``climatology``
  attribute (CF §7.4), or when it holds exactly one calendar year (1 January to
  1 January) of means; otherwise it is a series.
- Climatology bounds (CF §7.4) run from the start of each interval in the first year
  to its end in the last year. The intervals of the repeating year are read from them:
  each start as it is, each end moved back by whole years to the first end after the
  start. Numeric climatology bounds without ``units`` take the time variable's units
  and calendar (CF §7.4: they may be left out and are then those of the time
  variable). The climatology's years are the year that holds most of the repeating
  year and that year plus the number of years moved back.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass
from typing import Literal

import cftime
import numpy as np

from bcgen.cf.reader import check_time_increases, find_time_dim
from bcgen.errors import InputFileError
from bcgen.solar_calendar.calendars import (
    DEPRECATED_CALENDAR_NAMES,
    ModelCalendar,
    canonical_calendar,
)

#: What the time steps of a model file are (kinds of written axes: :data:`bcgen.cf.TimeKind`).
StepKind = Literal["monthly", "daily", "any_months"]

_TOL_DAYS = 1e-5  # about one second: rounding of decoded times


@dataclass(frozen=True)
class TimeAxis:
    """What the conversion needs to know about an input time axis.

    Attributes
    ----------
    dim : str
        Name of the time dimension.
    calendar : ModelCalendar
        Calendar of the file (with the default anchor; the caller may replace it).
    origin_year : int
        Days are counted from 1 January 00:00 of this year.
    edges_days : numpy.ndarray
        The ``n + 1`` edges of the contiguous intervals, days since the origin.
    kind : {"monthly", "daily", "any_months"}
        Fixed-day monthly means, daily or sub-daily means, or month-like intervals of
        any length (the inverse conversion reads fixed-angle months).
    cyclic : bool
        Climatology (one repeating year) or series.
    bounds_name : str or None
        Name of the input bounds (or climatology bounds) variable.
    climatology : tuple of int or None
        First and last year of a CF climatology (from its climatology bounds).
    calendar_name : str or None
        The calendar name as the file writes it (``365_day`` stays ``365_day``;
        ``calendar.name`` is the canonical one); outputs repeat it.
    """

    dim: str
    calendar: ModelCalendar
    origin_year: int
    edges_days: np.ndarray
    kind: StepKind
    cyclic: bool
    bounds_name: str | None
    climatology: tuple[int, int] | None
    calendar_name: str | None = None

    @property
    def period_days(self) -> float | None:
        """Length of the repeating year (cyclic input) or None."""
        return float(self.edges_days[-1] - self.edges_days[0]) if self.cyclic else None

    def date(self, days: float):
        """Return the cftime date ``days`` after the origin."""
        return to_date(self.calendar, self.origin_year, days)

    def year_offset_days(self, year: int) -> float:
        """Days from the origin to 1 January 00:00 of ``year``."""
        return _days(np.array([_new_year(self.calendar, year)]),
                     _new_year(self.calendar, self.origin_year))[0]


def _new_year(cal: ModelCalendar, year: int):
    return cftime.datetime(int(year), 1, 1, calendar=cal.name, has_year_zero=cal.has_year_zero)


def to_date(cal: ModelCalendar, origin_year: int, days: float):
    """Date ``days`` after 1 January of ``origin_year`` (microsecond resolution)."""
    return _new_year(cal, origin_year) + _dt.timedelta(microseconds=round(float(days) * 86400e6))


def _days(dates: np.ndarray, origin) -> np.ndarray:
    flat = np.ravel(dates)
    micro = np.array([(d - origin) // _dt.timedelta(microseconds=1) for d in flat], dtype=float)
    return (micro / 86400e6).reshape(np.shape(dates))


def _as_cftime(values: np.ndarray, calendar: str) -> np.ndarray:
    if np.issubdtype(values.dtype, np.datetime64):
        sec = values.astype("datetime64[us]").astype(np.int64) / 1e6
        out = cftime.num2date(sec, "seconds since 1970-01-01", calendar=calendar,
                              only_use_cftime_datetimes=True)
        return np.asarray(out, dtype=object)
    return np.asarray(values, dtype=object)


def read_time_axis(ds, source: str = "input", *, cyclic: bool | None = None,
                   expect: Literal["fixed_day", "any_months"] = "fixed_day") -> TimeAxis:
    """Describe the time axis of ``ds`` (decoded with cftime); errors name ``source``.

    Parameters
    ----------
    ds : xarray.Dataset
        Input with decoded times.
    source : str
        File name(s) for messages.
    cyclic : bool, optional
        Force a climatology (True) or a series (False); default: detect (module docstring).
    expect : {"fixed_day", "any_months"}
        ``fixed_day``: calendar months or daily/sub-daily means; ``any_months``: any
        contiguous bounded intervals of 20 to 40 days (fixed-angle months; the first and last
        may be shorter, cut to the span of the series they were converted from).
    """
    dim = find_time_dim(ds, source)
    tvar = ds[dim]
    cal_name = tvar.encoding.get("calendar") or tvar.attrs.get("calendar")
    values = tvar.values
    if cal_name is None:
        cal_name = values[0].calendar if values.dtype == object else "standard"
    calendars = {d.calendar for d in values} if values.dtype == object else {cal_name}
    if len(calendars) > 1:
        raise InputFileError(f"{source}: mixed calendars {', '.join(sorted(calendars))} in "
                             f"'{dim}'; convert one calendar at a time")
    try:
        cal = ModelCalendar(canonical_calendar(cal_name, f"{source}: {dim}:calendar"))
    except Exception as exc:  # CalendarError is a BcgenError already naming the source
        raise InputFileError(str(exc)) from None
    dates = _as_cftime(values, cal.name)
    check_time_increases(dates, source, dim)
    clim_name = tvar.attrs.get("climatology") or tvar.encoding.get("climatology")
    bounds_name = tvar.attrs.get("bounds") or tvar.encoding.get("bounds")
    climatology = None
    bounds = None
    years_back = 0
    if clim_name is not None and clim_name in ds.variables:
        bounds_name = clim_name
        cb = _decoded_bounds(ds, clim_name, tvar, cal, dates.size, source)
        bounds, years_back = _one_year_of(cb, cal, clim_name, source)
    elif bounds_name is not None and bounds_name in ds.variables:
        bounds = _decoded_bounds(ds, bounds_name, tvar, cal, dates.size, source)
    else:
        bounds_name = None
    if bounds is not None and clim_name is not None:
        # The year that holds the middle of the repeating year (a first month that starts
        # in late December belongs to the next year's cycle).
        span = bounds[-1, 1] - bounds[0, 0]
        origin_year = int((bounds[0, 0] + span / 2).year)
        climatology = (origin_year, origin_year + years_back)
    else:
        first = bounds[0, 0] if bounds is not None else dates[0]
        origin_year = int((first + _dt.timedelta(minutes=1)).year)
    origin = _new_year(cal, origin_year)
    if bounds is not None:
        b = _days(bounds, origin)
        if b.ndim != 2 or b.shape != (dates.size, 2):
            raise InputFileError(f"{source}: bounds variable '{bounds_name}' must have shape "
                                 f"({dates.size}, 2); got {b.shape}")
        gap = np.abs(b[1:, 0] - b[:-1, 1]) > _TOL_DAYS
        if gap.any():
            k = int(np.argmax(gap))
            raise InputFileError(
                f"{source}: time intervals are not contiguous between {bounds[k, 1]} and "
                f"{bounds[k + 1, 0]} (gap or overlap); expected consecutive means")
        edges = np.concatenate([b[:, 0], b[-1:, 1]])
        if np.any(np.diff(edges) <= 0):
            raise InputFileError(f"{source}: a time interval in '{bounds_name}' ends before "
                                 "it starts")
        kind = _classify(bounds, edges, expect, source)
    else:
        if expect == "any_months":
            raise InputFileError(f"{source}: fixed-angle months need time bounds "
                                 f"('{dim}:bounds'); none found")
        edges, kind = _edges_without_bounds(dates, origin, cal, source)
    if cyclic is None:
        span_one_year = (
            kind != "any_months"
            and abs(edges[0]) < _TOL_DAYS
            and abs(edges[-1] - cal.year_length_days(origin_year)) < _TOL_DAYS
        ) or (kind == "any_months" and abs(edges[-1] - edges[0]
                                           - cal.year_length_days(origin_year)) < 0.5)
        cyclic = climatology is not None or span_one_year
    if cyclic and kind != "any_months" and (
        abs(edges[0]) > _TOL_DAYS
        or abs(edges[-1] - cal.year_length_days(origin_year)) > _TOL_DAYS
    ):
        raise InputFileError(f"{source}: a climatology must hold one whole year of means "
                             f"(1 January to 1 January); '{dim}' spans {dates[0]} to {dates[-1]}")
    return TimeAxis(dim, cal, origin_year, edges, kind, bool(cyclic), bounds_name, climatology,
                    _written_calendar_name(cal_name, cal.name))


def _written_calendar_name(written: str, canonical: str) -> str:
    """Return the calendar name outputs repeat: as written, but never a deprecated alias."""
    name = str(written).strip()
    if name.lower() in DEPRECATED_CALENDAR_NAMES:  # CF 1.9 deprecated "gregorian"
        return canonical
    return name


def _decoded_bounds(ds, name: str, tvar, cal: ModelCalendar, n: int, source: str) -> np.ndarray:
    """Bounds (or climatology bounds) as cftime dates, shape (n, 2).

    Numeric values without units of their own are decoded with the time variable's
    units and calendar (CF §7.1 and §7.4: bounds inherit them).
    """
    values = np.asarray(ds[name].values)
    if values.ndim != 2 or values.shape != (n, 2):
        raise InputFileError(f"{source}: bounds variable '{name}' must have shape ({n}, 2); "
                             f"got {values.shape}")
    if values.dtype != object and not np.issubdtype(values.dtype, np.datetime64):
        units = ds[name].attrs.get("units") or tvar.encoding.get("units")
        if not units:
            raise InputFileError(f"{source}: cannot read '{name}': neither it nor the time "
                                 "variable has units 'days since ...'")
        try:
            values = cftime.num2date(values, units, calendar=cal.name,
                                     only_use_cftime_datetimes=True,
                                     has_year_zero=cal.has_year_zero)
        except (ValueError, TypeError) as exc:
            raise InputFileError(f"{source}: cannot read '{name}' as dates with units "
                                 f"{units!r} ({' '.join(str(exc).split())})") from None
    return _as_cftime(np.asarray(values), cal.name)


def _one_year_of(cb: np.ndarray, cal: ModelCalendar, name: str, source: str):
    """Return the intervals of the repeating year of CF climatology bounds, and the years.

    Each interval's start is kept; its end is moved back by whole calendar years to
    the first time after the start that falls on the same date (CF §7.4). Returns
    the (n, 2) dates and the number of years moved back (last year − first year).
    """
    out = cb.copy()
    moved = set()
    for i, (start, end) in enumerate(cb):
        if not end > start:
            raise InputFileError(f"{source}: climatology bounds row {i} of '{name}' "
                                 f"({start} to {end}) ends before it starts")
        first_end = _same_moment_in(end, start.year, cal)
        if first_end is not None and not first_end > start:
            next_year = start.year + 1 if (start.year != -1 or cal.has_year_zero) else 1
            first_end = _same_moment_in(end, next_year, cal)
        if first_end is None:
            raise InputFileError(f"{source}: climatology bounds row {i} of '{name}' ends on "
                                 f"{end}, a date that does not exist in every year")
        out[i, 1] = first_end
        moved.add(_years_between(end, first_end, cal))
    if len(moved) != 1:
        raise InputFileError(f"{source}: the climatology bounds '{name}' span different "
                             "numbers of years; expected every interval over the same years")
    return out, moved.pop()


def _same_moment_in(date, year: int, cal: ModelCalendar):
    """``date`` moved to ``year`` (None when that day does not exist, e.g. 29 February)."""
    try:
        return cftime.datetime(int(year), date.month, date.day, date.hour, date.minute,
                               date.second, date.microsecond, calendar=cal.name,
                               has_year_zero=cal.has_year_zero)
    except ValueError:
        return None


def _years_between(later, earlier, cal: ModelCalendar) -> int:
    years = later.year - earlier.year
    if not cal.has_year_zero and earlier.year < 0 < later.year:
        years -= 1
    return years


def _classify(bounds, edges, expect, source) -> StepKind:
    lengths = np.diff(edges)
    if expect == "any_months":
        # The first and last month of a converted series may be cut to the data's span.
        inner = lengths[1:-1]
        if np.all((inner > 20) & (inner < 40)) and np.all((lengths > 0) & (lengths < 40)):
            return "any_months"
        raise InputFileError(f"{source}: time intervals of {lengths.min():g} to "
                             f"{lengths.max():g} days are not months")
    starts = bounds[:, 0]
    ends = bounds[:, 1]
    month_start = all(d.day == 1 and d.hour == 0 and d.minute == 0 and d.second == 0
                      for d in np.concatenate([starts, ends[-1:]]))
    consecutive = all((b.year * 12 + b.month) - (a.year * 12 + a.month) == 1
                      for a, b in zip(starts, ends, strict=True))
    if month_start and consecutive:
        return "monthly"
    if _is_daily_step(lengths):
        return "daily"
    raise InputFileError(
        f"{source}: time intervals of {lengths.min():g} to {lengths.max():g} days are neither "
        "calendar months (1st 00:00 to 1st 00:00) nor days or equal parts of a day")


def _is_daily_step(lengths: np.ndarray) -> bool:
    step = float(lengths.mean())
    if step > 1.0 + _TOL_DAYS or np.any(np.abs(lengths - step) > _TOL_DAYS):
        return False
    per_day = 1.0 / step
    return abs(per_day - round(per_day)) < 1e-6 * per_day


def _edges_without_bounds(dates, origin, cal, source):
    t = _days(dates, origin)
    months = np.array([d.year * 12 + d.month for d in dates])
    if dates.size > 1 and np.all(np.diff(months) == 1):
        edges = [_month_start(cal, d.year, d.month) for d in dates]
        last = dates[-1]
        nxt_year, nxt_month = (last.year + (last.month == 12), last.month % 12 + 1)
        if nxt_year == 0 and not cal.has_year_zero:
            nxt_year = 1
        edges.append(_month_start(cal, nxt_year, nxt_month))
        return _days(np.array(edges, dtype=object), origin), "monthly"
    if dates.size > 1:
        step = np.diff(t)
        if _is_daily_step(step):
            d = float(np.round(1.0 / step.mean()))
            d = 1.0 / d
            start = np.floor(t[0] / d + _TOL_DAYS) * d
            return start + d * np.arange(dates.size + 1), "daily"
        raise InputFileError(
            f"{source}: time steps of {step.min():g} to {step.max():g} days without bounds are "
            "neither one per calendar month nor daily or equal parts of a day")
    raise InputFileError(f"{source}: one time step without bounds: cannot tell which interval "
                         "it stands for; add a CF bounds variable")


def _month_start(cal: ModelCalendar, year: int, month: int):
    return cftime.datetime(int(year), int(month), 1, calendar=cal.name,
                           has_year_zero=cal.has_year_zero)
