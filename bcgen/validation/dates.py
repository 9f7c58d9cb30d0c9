"""Model days in words: ``day 79.50 (21 March 12:00, noleap)``.

bcgen counts model time in fractional days after 1 January 00:00 of the model
year (day 0.0 = 1 January 00:00). Models usually count calendar days from 1
(day 1.0 = 1 January 00:00), so a bare day number reads one day off; every day
the validation report names is therefore also given as a date and time of the
model calendar.
"""

from __future__ import annotations

import datetime
import warnings

import cftime

from bcgen.solar_calendar.calendars import MONTH_NAMES, ModelCalendar

#: One sentence for reports: how day numbers are counted.
DAY_NUMBERS = ("day numbers count from 0 at 1 January 00:00 (day 79.50 is 21 March 12:00 in "
               "noleap, model day 80 when days are counted from 1)")


def _calendar(calendar) -> ModelCalendar:
    return calendar if isinstance(calendar, ModelCalendar) else ModelCalendar(calendar)


def date_of_day(day: float, calendar, year: int = 1) -> str:
    """``21 March 12:00``: the model-calendar date and time of a fractional day of ``year``.

    Days before 0 or after the year's end fall in the neighbouring years (the
    year is then named).
    """
    cal = _calendar(calendar)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", cftime.CFWarning)
        start = cftime.datetime(int(year), 1, 1, calendar=cal.name,
                                has_year_zero=cal.has_year_zero)
        when = start + datetime.timedelta(minutes=round(float(day) * 1440.0))
    text = f"{when.day} {MONTH_NAMES[when.month - 1]} {when.hour:02d}:{when.minute:02d}"
    return text if when.year == int(year) else f"{text} of year {when.year}"


def day_in_words(day: float, calendar, year: int = 1) -> str:
    """``day 79.50 (21 March 12:00, noleap)``."""
    cal = _calendar(calendar)
    return f"day {float(day):.2f} ({date_of_day(day, cal, year)}, {cal.name})"


def days_in_words(start: float, end: float, calendar, year: int = 1) -> str:
    """``days 181.00-212.00 (1 July 00:00 to 1 August 00:00, noleap)``; one day for instants."""
    if end - start <= 1e-9:
        return day_in_words(start, calendar, year)
    cal = _calendar(calendar)
    return (f"days {float(start):.2f}-{float(end):.2f} ({date_of_day(start, cal, year)} to "
            f"{date_of_day(end, cal, year)}, {cal.name})")
