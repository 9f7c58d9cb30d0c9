"""CF time axes on a model calendar: a repeating time-slice year, or a transient series.

:func:`climatology_time_axis` builds the axis of a repeating time-slice year as
a climatological time (CF 1.11 §7.4): a ``climatology`` attribute names an
(n, 2) bounds variable, the time values are the middles of the intervals and
data variables on it carry ``cell_methods = "time: mean within years time: mean
over years"`` (see :func:`bcgen.cf.variable_attrs`). :func:`time_axis` builds
an ordinary time axis with ``bounds`` (transient series). Both use units
``days since YYYY-01-01 00:00:00`` and an explicit ``calendar`` attribute
(CF §4.4.1), and accept fractional-day bounds (fixed-angle months). Calendar names
and year lengths are the calendar authority's (:mod:`bcgen.solar_calendar.calendars`).

>>> ds = time_axis([[0.0, 31.0], [31.0, 59.0]], "noleap")
>>> ds.time.values.tolist(), ds.time.attrs["units"], ds.time.attrs["bounds"]
([15.5, 45.0], 'days since 0001-01-01 00:00:00', 'time_bnds')
"""

from __future__ import annotations

import numpy as np

from bcgen.cf.attributes import BOUNDS_DIM, TIME_UNITS_TEMPLATE, coordinate_attrs
from bcgen.errors import CalendarError
from bcgen.solar_calendar.calendars import (
    FIXED_YEAR_DAYS,
    NO_YEAR_ZERO_CALENDARS,
    cf_calendar_name,
    year_length_days,
)


def climatology_time_axis(bounds_days, calendar: str, year: int = 1):
    """Build the climatological time axis of a repeating time-slice year (CF §7.4).

    Parameters
    ----------
    bounds_days : array_like, shape (n, 2)
        Start and end of each interval in days after 1 January 00:00 of the
        nominal ``year`` (fractional days allowed). An interval that crosses the
        start of the year may be given either unwrapped (a negative start, or
        an end after the year's length) or wrapped (end < start); a wrapped
        interval is unwrapped by moving its start back one year when it is the
        first interval and its end forward one year otherwise.
    calendar : str
        A CF calendar name (``noleap``, ``360_day``, ``proleptic_gregorian`` ...).
    year : int
        The nominal year of the climatology; the units are
        ``days since <year>-01-01 00:00:00``.

    Returns
    -------
    xarray.Dataset
        Coordinate ``time`` (mid-interval values) with ``climatology =
        "climatology_bnds"`` and data variable ``climatology_bnds`` (time, bnds).
        Data variables on this axis take ``cell_methods`` from
        ``bcgen.cf.variable_attrs(..., time_kind="climatology")``.
    """
    cal = cf_calendar_name(calendar)
    bounds = _bounds_array(bounds_days)
    wrapped = bounds[:, 1] < bounds[:, 0]
    if wrapped[0]:
        if cal in NO_YEAR_ZERO_CALENDARS and year == 1:
            raise CalendarError(_NO_YEAR_ZERO_MESSAGE.format(cal=cal))
        bounds[0, 0] -= year_length_days(cal, year - 1)
    if np.any(wrapped[1:]):
        bounds[1:, 1][wrapped[1:]] += year_length_days(cal, year)
    return _axis_dataset(bounds, cal, year, "climatology", "climatology_bnds")


def time_axis(bounds_days, calendar: str, reference_year: int = 1, *, values_days=None):
    """Build an ordinary time axis (a transient series) with bounds.

    Parameters
    ----------
    bounds_days : array_like, shape (n, 2), or None
        Start and end of each interval in days after 1 January 00:00 of
        ``reference_year``; each end must follow its start. None for a time axis
        of instants (``values_days`` then required; ``cell_methods`` ``time: point``).
    calendar : str
        A CF calendar name.
    reference_year : int
        Year of the units' reference date, ``days since <year>-01-01 00:00:00``.
    values_days : array_like, optional
        Time values; default the middle of each interval.

    Returns
    -------
    xarray.Dataset
        Coordinate ``time`` with ``bounds = "time_bnds"`` and data variable
        ``time_bnds`` (time, bnds); without bounds, ``time`` only.
    """
    cal = cf_calendar_name(calendar)
    bounds = None if bounds_days is None else _bounds_array(bounds_days)
    if bounds is not None and np.any(bounds[:, 1] <= bounds[:, 0]):
        i = int(np.argmax(bounds[:, 1] <= bounds[:, 0]))
        raise CalendarError(
            f"time bounds row {i} ({bounds[i, 0]:g}, {bounds[i, 1]:g}): the end must follow "
            "the start"
        )
    if bounds is None and values_days is None:
        raise CalendarError("a time axis needs bounds_days or values_days")
    return _axis_dataset(bounds, cal, reference_year, "bounds", "time_bnds", values_days)


_NO_YEAR_ZERO_MESSAGE = (
    "time before 0001-01-01 in the {cal} calendar (which has no year 0); "
    "use a later nominal year, e.g. year=2"
)


def _bounds_array(bounds_days) -> np.ndarray:
    b = np.array(bounds_days, dtype=float)
    if b.ndim != 2 or b.shape[1] != 2 or b.shape[0] == 0:
        raise CalendarError(f"time bounds must have shape (n, 2); got {b.shape}")
    if not np.all(np.isfinite(b)):
        raise CalendarError("time bounds must be finite numbers of days")
    return b


def _axis_dataset(bounds, cal, year, link, bounds_name, values_days=None):
    import xarray as xr

    if isinstance(year, bool) or not isinstance(year, (int, np.integer)):
        raise CalendarError(f"the reference year must be an integer; got {year!r}")
    values = (
        np.array(values_days, dtype=float).reshape(-1)
        if values_days is not None
        else bounds.mean(axis=1)
    )
    if bounds is not None and values.shape != (bounds.shape[0],):
        raise CalendarError(f"{values.size} time values for {bounds.shape[0]} time bounds")
    if values.size > 1 and not np.all(np.diff(values) > 0):
        i = int(np.argmax(np.diff(values) <= 0)) + 1
        raise CalendarError(f"time values must increase; value {i} ({values[i]:g}) does not")
    if bounds is not None and np.any((values < bounds[:, 0]) | (values > bounds[:, 1])):
        raise CalendarError("each time value must lie within its bounds")
    lowest = values.min() if bounds is None else bounds.min()
    if cal in NO_YEAR_ZERO_CALENDARS and year == 1 and lowest < 0:
        raise CalendarError(_NO_YEAR_ZERO_MESSAGE.format(cal=cal))
    attrs = coordinate_attrs("time")
    attrs["units"] = TIME_UNITS_TEMPLATE.format(year=int(year))
    attrs["calendar"] = cal
    if cal not in FIXED_YEAR_DAYS:  # standard, proleptic_gregorian, julian
        # A model calendar has no leap seconds (CF 1.11 §4.4: units_metadata recommended
        # for these calendars).
        attrs["units_metadata"] = "leap_seconds: none"
    ds = xr.Dataset()
    if bounds is not None:
        attrs[link] = bounds_name
        # CF §7.4 lets the climatology variable repeat units and calendar (they must
        # agree); xarray decodes it to dates only when they are present.
        battrs = {"units": attrs["units"], "calendar": cal} if link == "climatology" else {}
        ds[bounds_name] = (("time", BOUNDS_DIM), bounds, battrs)
    return ds.assign_coords(time=("time", values, attrs))


