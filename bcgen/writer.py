"""CF-NetCDF content: time axes on a model calendar, and provenance attributes.

Time axes
---------
:func:`climatology_time_axis` builds the axis of a repeating time-slice year as
a climatological time (CF 1.11 §7.4): a ``climatology`` attribute names an
(n, 2) bounds variable, the time values are the middles of the intervals and
data variables on it carry ``cell_methods = "time: mean within years time: mean
over years"`` (see :func:`bcgen.cf.variable_attrs`). :func:`time_axis` builds
an ordinary time axis with ``bounds`` (transient series). Both use units
``days since YYYY-01-01 00:00:00`` and an explicit ``calendar`` attribute
(CF §4.4.1), and accept fractional-day bounds (fixed-angle months).

Writing files (atomic, chunked, with disk-full diagnosis) is the job of
:mod:`bcgen.io` (:func:`bcgen.io.write_netcdf`).

Why ``Conventions = "CF-1.11"``
-------------------------------
CF 1.13 (December 2025) is the newest release, but the newest CF suite of the
IOOS compliance-checker, which the test suite uses to verify every output, is
1.11. bcgen states the version its files are checked against. The files use
nothing added after 1.11, and later CF versions keep 1.11 files valid.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from datetime import datetime, timezone

import numpy as np

from bcgen.cf import BOUNDS_DIM, TIME_UNITS_TEMPLATE, coordinate_attrs
from bcgen.errors import CalendarError
from bcgen.solar_calendar.calendars import (
    FIXED_YEAR_DAYS,
    NO_YEAR_ZERO_CALENDARS,
    cf_calendar_name,
    year_length_days,
)

#: The CF version bcgen declares (the newest the compliance-checker can verify; see above).
CONVENTIONS = "CF-1.11"

CYCLIC_COMMENT = (
    "This file holds one model year that repeats (a time slice): use its time steps "
    "cyclically, the first following the last. Time values are mid-interval times in a "
    "nominal year; the climatology bounds give each interval."
)


# --- time axes (calendar names and year lengths: bcgen.solar_calendar.calendars) ------------
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
            raise CalendarError(_NO_YEAR_ZERO.format(cal=cal))
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


_NO_YEAR_ZERO = (
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
        raise CalendarError(_NO_YEAR_ZERO.format(cal=cal))
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


# --- provenance ----------------------------------------------------------------------------
def provenance_attrs(
    spec_text: str,
    solution_reference: str,
    *,
    title: str,
    institution: str | None = None,
    solution: str | None = None,
    references: Sequence[str] = (),
    comment: str | None = None,
    time_slice: bool = False,
    command: str | None = None,
    created: datetime | None = None,
    extra: Mapping[str, str] | None = None,
) -> dict[str, str]:
    """Global attributes that record what made a file (CF §2.6.2 and bcgen's own).

    Parameters
    ----------
    spec_text : str
        The full text of the experiment spec (stored as ``bcgen_spec``).
    solution_reference : str
        Reference of the orbital solution (first entry of ``references``).
    title : str
        A short description of the file's contents.
    institution, comment : str, optional
        CF attributes; ``comment`` is appended to the cyclic-year note.
    solution : str, optional
        Name of the orbital solution (``orbital_solution`` attribute).
    references : sequence of str
        Further references (protocols, data sources), one per line.
    time_slice : bool
        True for a repeating time-slice year: ``comment`` states the cyclic intent
        (CF has no attribute for it).
    command : str, optional
        The command that made the file, recorded in ``history``.
    created : datetime, optional
        Creation time; default now, or ``SOURCE_DATE_EPOCH`` when that
        environment variable is set (reproducible builds).
    extra : mapping, optional
        More attributes (from the spec or a metadata template); they win.

    Returns
    -------
    dict
        ``Conventions``, ``title``, ``institution``, ``source``, ``history``,
        ``creation_date``, ``references``, ``orbital_solution``, ``comment``,
        ``bcgen_spec`` (those given).
    """
    from bcgen import __version__

    stamp = _utc_stamp(created)
    refs = [r for r in (solution_reference, *references) if r]
    attrs: dict[str, str] = {"Conventions": CONVENTIONS, "title": title}
    if institution:
        attrs["institution"] = institution
    attrs["source"] = f"bcgen {__version__}"
    attrs["history"] = f"{stamp} created by bcgen {__version__}" + (
        f": {command}" if command else ""
    )
    attrs["creation_date"] = stamp
    if refs:
        attrs["references"] = "\n".join(refs)
    if solution:
        attrs["orbital_solution"] = solution
    notes = [CYCLIC_COMMENT] if time_slice else []
    if comment:
        notes.append(comment)
    if notes:
        attrs["comment"] = "\n".join(notes)
    attrs["bcgen_spec"] = spec_text
    if extra:
        attrs.update({str(k): v for k, v in extra.items()})
    return attrs


def _utc_stamp(created: datetime | None) -> str:
    if created is None:
        epoch = os.environ.get("SOURCE_DATE_EPOCH")
        if epoch is not None and epoch.strip().isdigit():
            created = datetime.fromtimestamp(int(epoch), tz=timezone.utc)
        else:
            created = datetime.now(timezone.utc)
    if created.tzinfo is None:
        created = created.replace(tzinfo=timezone.utc)
    return created.astimezone(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
