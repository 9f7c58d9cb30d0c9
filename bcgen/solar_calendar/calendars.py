"""Model calendars (CF calendars through cftime) and the anchoring of the orbit in them.

This module is bcgen's one authority on calendars: their names and aliases
(:data:`CALENDAR_NAMES`, :func:`canonical_calendar`), year lengths
(:func:`year_length_days`), the anchor grammar (:func:`split_anchor_text`,
:func:`parse_anchor`) and the anchor in words (:meth:`ModelCalendar.anchor_in_words`,
:func:`anchor_from_words`). The spec, the command line, the writer and the readers
take these facts from here.

Calendars
    Every calendar of the CF Conventions (CF 1.13 §4.4.3, Table 4.1) that has
    an annual cycle: ``noleap`` (alias ``365_day``), ``all_leap`` (``366_day``),
    ``360_day``, ``proleptic_gregorian``, ``standard`` (mixed Julian/Gregorian)
    and ``julian``. The deprecated CF name ``gregorian`` is accepted as
    ``standard`` with a :class:`DeprecatedCalendarNameWarning`, wherever it is
    written (spec, command line, a file read or written). ``none``, ``utc`` and
    ``tai`` are refused: they cannot hold a repeating model year. Dates are turned
    into day numbers by cftime; year 0 exists in every calendar except
    ``julian`` and ``standard`` (CF 1.13 §4.4.3).

Model time
    Fractional days after 1 January 00:00 of the model year (``t_days``); the
    model year is a calendar year of the model calendar, numbered as in the
    calendar (``year=1`` by default), within ±:data:`MAX_MODEL_YEAR` (1 000 000).

Anchor
    The orbit is tied to the calendar by an :class:`Anchor`: the moment of the
    March equinox (true longitude λ = 0, the PMIP convention; default
    21 March 12:00, as all PMIP protocols fix it, see Otto-Bliesner et al.
    2017 and Kageyama et al. 2017) or, as some models do, the moment of
    perihelion (true anomaly v = 0). The anchor date must exist in every year
    of the calendar: 30 February is valid in ``360_day`` only, 29 February in
    ``360_day`` and ``all_leap`` only.

Leap-year rule
    The model year is one tropical year, and the orbit is anchored in *every*
    calendar year at the anchor date and time. The orbital year runs from one
    anchor to the next, and the mean anomaly advances uniformly by 2π over it.
    In calendars with leap years (``proleptic_gregorian``, ``standard``,
    ``julian``) the anchor-to-anchor interval that contains 29 February is 366
    days long and its mean motion is 2π/366 per day: the extra day stretches
    that orbital year, and the next anchor is again at the anchor date. In
    ``noleap``, ``all_leap`` and ``360_day`` every orbital year has the
    calendar's length (365, 366 or 360 days). A time t of calendar year Y
    before the anchor of Y lies in the orbital year [anchor(Y−1), anchor(Y)).
    The seasons therefore never drift through a leap-year calendar; the price
    is that an orbital year containing 29 February is 366 days long instead
    of 365.2422 days (real-world seasons computed in such a calendar can be
    up to about 0.75 day late before the next anchor).
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from typing import Literal, get_args

import cftime
import numpy as np

from bcgen.arguments import MAX_MODEL_YEAR, one_of, shown
from bcgen.errors import CalendarError, DeprecatedCalendarNameWarning

CalendarName = Literal["noleap", "all_leap", "360_day", "proleptic_gregorian", "standard", "julian"]
AnchorKind = Literal["march_equinox", "perihelion"]

#: Every accepted calendar name (CF 1.13 §4.4.3, Table 4.1) → the canonical name bcgen uses.
CALENDARS: dict[str, str] = {
    "noleap": "noleap",
    "365_day": "noleap",
    "all_leap": "all_leap",
    "366_day": "all_leap",
    "360_day": "360_day",
    "proleptic_gregorian": "proleptic_gregorian",
    "standard": "standard",
    "gregorian": "standard",
    "julian": "julian",
}

#: Deprecated CF names (CF 1.13 §4.4.3: "A deprecated alternative name for this calendar is
#: gregorian"), accepted with a warning.
DEPRECATED_CALENDAR_NAMES: dict[str, str] = {"gregorian": "standard"}

#: The calendar names a user may write, in the order messages list them (deprecated ones aside).
CALENDAR_NAMES: tuple[str, ...] = (
    "noleap",
    "365_day",
    "360_day",
    "all_leap",
    "366_day",
    "proleptic_gregorian",
    "standard",
    "julian",
)

#: CF calendar names that cannot hold a repeating model year, with the reason given to the user.
REFUSED_CALENDARS: dict[str, str] = {
    "none": "the CF calendar 'none' has no annual cycle",
    "utc": "the CF calendar 'utc' counts leap seconds of real dates, not model years",
    "tai": "the CF calendar 'tai' counts real atomic time, not model years",
}

#: Length of every year, days, of the calendars whose years all have one length (CF 1.13 §4.4.3).
FIXED_YEAR_DAYS: dict[str, int] = {
    "noleap": 365,
    "365_day": 365,
    "all_leap": 366,
    "366_day": 366,
    "360_day": 360,
}

#: Calendars without a year 0 (CF 1.13 §4.4.3: 1 BCE is year -1 in them).
NO_YEAR_ZERO_CALENDARS: tuple[str, ...] = ("standard", "julian")

#: How an anchor is written: month and day, then the time of day (optional on the command line).
ANCHOR_FORMAT = "'MM-DD HH:MM'"

#: What each canonical calendar is (documented in the README; CF 1.13 §4.4.3).
CALENDAR_DESCRIPTIONS: dict[str, str] = {
    "noleap": "365 days every year (alias 365_day)",
    "all_leap": "366 days every year (alias 366_day)",
    "360_day": "twelve 30-day months every year",
    "proleptic_gregorian": "Gregorian leap-year rule extended to all years (year 0 exists)",
    "standard": "Julian before 1582-10-05, Gregorian from 1582-10-15 (deprecated alias gregorian)",
    "julian": "a leap year every fourth year",
}

#: The anchor kinds and what each fixes at the anchor time.
ANCHOR_KINDS: dict[str, str] = {
    "march_equinox": "the March equinox (true longitude 0) is at the anchor date and time",
    "perihelion": "perihelion (true anomaly 0, true longitude ϖ + 180°) is at the anchor time",
}

_NO_YEAR_ZERO = NO_YEAR_ZERO_CALENDARS
#: English month names, January first (and their usual three-letter abbreviations).
MONTH_NAMES = (
    "January",
    "February",
    "March",
    "April",
    "May",
    "June",
    "July",
    "August",
    "September",
    "October",
    "November",
    "December",
)
MONTH_ABBREVIATIONS = tuple(name[:3] for name in MONTH_NAMES)



def canonical_calendar(name: str, source: str = "calendar") -> str:
    """Return the canonical CF name of a calendar name or alias.

    Parameters
    ----------
    name : str
        A name from :data:`CALENDARS` (case is ignored); the deprecated ``gregorian``
        is read as ``standard`` with a :class:`DeprecatedCalendarNameWarning`.
    source : str
        What to name in messages (an option or a spec key), e.g. ``"--calendar"``.

    Raises
    ------
    CalendarError
        For an unknown or refused name; the message lists the accepted names.

    Examples
    --------
    >>> canonical_calendar("365_day")
    'noleap'
    """
    key = str(name).strip().lower()
    if key not in CALENDARS:
        raise CalendarError(
            f"{source}: unknown calendar {shown(name)}; expected one of "
            f"{', '.join(CALENDAR_NAMES)}"
        )
    if key in DEPRECATED_CALENDAR_NAMES:
        warnings.warn(
            deprecated_calendar_message(key, source), DeprecatedCalendarNameWarning, stacklevel=3
        )
    return CALENDARS[key]


def cf_calendar_name(calendar: str, source: str = "calendar") -> str:
    """Return the CF calendar name to write for ``calendar``.

    The name as given (``365_day`` stays ``365_day``, case aside), except the deprecated
    ``gregorian``, which is written ``standard`` (with a :class:`DeprecatedCalendarNameWarning`,
    as everywhere).

    Raises
    ------
    CalendarError
        For a name that is not a CF calendar with an annual cycle (CF 1.13 §4.4.3).

    Examples
    --------
    >>> cf_calendar_name("365_day")
    '365_day'
    """
    key = str(calendar).strip().lower()
    if key in DEPRECATED_CALENDAR_NAMES:
        return canonical_calendar(key, source)
    if key not in CALENDARS:
        canonical_calendar(key, source)  # raises, listing the names
    return key


def deprecated_calendar_message(name: str, source: str = "calendar") -> str:
    """Return the warning given when a deprecated calendar name is read (one wording)."""
    key = str(name).strip().lower()
    return (f"{source}: calendar name {key!r} is deprecated in CF 1.13; read as "
            f"{DEPRECATED_CALENDAR_NAMES[key]!r}")


def date_exists(calendar: str, year: int, month: int, day: int) -> bool:
    """Tell whether a date exists in a calendar year (30 February exists in ``360_day`` only).

    Examples
    --------
    >>> date_exists("noleap", 1, 2, 29), date_exists("360_day", 1, 2, 30)
    (False, True)
    """
    try:
        cftime.datetime(year, month, day, calendar=CALENDARS.get(calendar, calendar))
    except ValueError:
        return False
    return True


def year_length_days(calendar: str, year: int) -> int:
    """Return the number of days in calendar year ``year`` (whole days, through cftime).

    Parameters
    ----------
    calendar : str
        A CF calendar name or alias (:data:`CALENDARS`).
    year : int
        The calendar year (no year 0 in ``standard`` and ``julian``).

    Examples
    --------
    >>> year_length_days("proleptic_gregorian", 1600), year_length_days("julian", 1700)
    (366, 366)
    >>> year_length_days("360_day", 7)
    360
    """
    key = str(calendar).strip().lower()
    name = CALENDARS.get(key, key)
    if name in FIXED_YEAR_DAYS:
        return FIXED_YEAR_DAYS[name]
    return int(round(ModelCalendar(canonical_calendar(name)).year_length_days(int(year))))


@dataclass(frozen=True)
class Anchor:
    """The date and time of the model year at which the orbit is fixed.

    Attributes
    ----------
    kind : {"march_equinox", "perihelion"}
        ``march_equinox``: true longitude λ = 0 at this time (PMIP);
        ``perihelion``: true anomaly v = 0 at this time.
    month, day, hour, minute : int
        Date and time of the anchor in every model year (default 21 March 12:00,
        the PMIP protocols' vernal equinox).
    """

    kind: AnchorKind = "march_equinox"
    month: int = 3
    day: int = 21
    hour: int = 12
    minute: int = 0

    def __post_init__(self) -> None:
        if not one_of(self.kind, get_args(AnchorKind)):
            raise CalendarError(
                f"unknown anchor kind {shown(self.kind)}; expected one of "
                f"{', '.join(ANCHOR_KINDS)}"
            )
        for field, low, high in (
            ("month", 1, 12),
            ("day", 1, 31),
            ("hour", 0, 23),
            ("minute", 0, 59),
        ):
            value = getattr(self, field)
            if (
                isinstance(value, bool)
                or not isinstance(value, (int, np.integer))
                or not (low <= value <= high)
            ):
                raise CalendarError(
                    f"anchor {field} must be a whole number from {low} to {high}; got "
                    f"{shown(value)}"
                )

    @property
    def label(self) -> str:
        """The anchor as ``MM-DD HH:MM``."""
        return f"{self.month:02d}-{self.day:02d} {self.hour:02d}:{self.minute:02d}"

    def describe(self) -> str:
        """One line for headers and metadata, e.g. ``March equinox at 03-21 12:00``."""
        what = "March equinox" if self.kind == "march_equinox" else "perihelion"
        return f"{what} at {self.label} ({MONTH_NAMES[self.month - 1]} {self.day})"


_ANCHOR_RE = re.compile(r"^\s*(\d{1,2})-(\d{1,2})(?:(?:\s+|T)(\d{1,2}):(\d{2}))?\s*$")


def split_anchor_text(text: str, require_time: bool = False) -> tuple[int, int, int, int] | None:
    """Read the anchor grammar: ``"MM-DD HH:MM"`` (or ``"MM-DD"``, 00:00, unless ``require_time``).

    Returns ``(month, day, hour, minute)``, not yet checked for range, or None when the
    text does not follow the grammar. Every user-facing reader requires the time of day
    (:func:`parse_anchor`, the spec): a date alone could mean 00:00 or the protocols'
    12:00.

    Examples
    --------
    >>> split_anchor_text("03-21 12:00"), split_anchor_text("01-03")
    ((3, 21, 12, 0), (1, 3, 0, 0))
    >>> split_anchor_text("01-03", require_time=True) is None
    True
    """
    match = _ANCHOR_RE.match(str(text))
    if not match or (require_time and match[3] is None):
        return None
    hour = int(match[3]) if match[3] is not None else 0
    minute = int(match[4]) if match[4] is not None else 0
    return int(match[1]), int(match[2]), hour, minute


def parse_anchor(text: str, kind: AnchorKind = "march_equinox", source: str = "anchor") -> Anchor:
    """Read an anchor written ``"MM-DD HH:MM"``; the time of day is required.

    A date alone is refused, naming the rule: ``"03-21"`` could mean 00:00 or 12:00
    (the PMIP protocols' equinox time, bcgen's default), half a day apart.

    Parameters
    ----------
    text : str
        For example ``"03-21 12:00"`` or ``"01-03 00:00"``.
    kind : {"march_equinox", "perihelion"}
        What happens at that time (see :class:`Anchor`).
    source : str
        What to name in messages, e.g. ``"--equinox"``.

    Raises
    ------
    CalendarError
        If the text is not of that form or a field is out of range.
    """
    fields = split_anchor_text(text, require_time=True)
    if fields is None:
        if split_anchor_text(text) is not None:
            raise CalendarError(
                f"{source}: {text!r} has no time of day; write {ANCHOR_FORMAT}, e.g. "
                f"'{str(text).strip()} 12:00' (the PMIP protocols' time) or "
                f"'{str(text).strip()} 00:00': the time is required"
            )
        raise CalendarError(
            f"{source}: cannot read {text!r}; expected {ANCHOR_FORMAT}, e.g. '03-21 12:00'"
        )
    month, day, hour, minute = fields
    try:
        return Anchor(kind, month, day, hour, minute)
    except CalendarError as exc:
        raise CalendarError(f"{source}: {text!r}: {exc}") from None


@dataclass(frozen=True)
class ModelCalendar:
    """A CF model calendar with the anchor that ties the orbit to it.

    Parameters
    ----------
    name : str
        A calendar name or alias from :data:`CALENDARS`; stored as its
        canonical name (``365_day`` → ``noleap``).
    anchor : Anchor
        Default: March equinox at 21 March 12:00 (PMIP protocols).

    Notes
    -----
    All day numbers are fractional days after 1 January 00:00 of the model
    year given to each method. See the module docstring for the leap-year rule.
    """

    name: str = "noleap"
    anchor: Anchor = Anchor()

    def __post_init__(self) -> None:
        object.__setattr__(self, "name", canonical_calendar(self.name))
        if not isinstance(self.anchor, Anchor):
            raise CalendarError(f"anchor must be an Anchor; got {type(self.anchor).__name__}")
        a = self.anchor
        # The anchor must exist in every year: try a common and a leap year of the calendar.
        for year in (2001, 2000):
            try:
                cftime.datetime(year, a.month, a.day, a.hour, a.minute, calendar=self.name)
            except ValueError:
                length = self._days_in_month(year, a.month)
                where = (
                    f"every year of calendar {self.name}"
                    if self.is_leap(2000)
                    else f"calendar {self.name}"
                )
                raise CalendarError(
                    f"anchor date {a.label} does not exist in {where} "
                    f"({MONTH_NAMES[a.month - 1]} has {length} days"
                    f"{' in common years' if self.is_leap(2000) else ''})"
                ) from None

    # --- year arithmetic ------------------------------------------------------------------
    @property
    def every_year_alike(self) -> bool:
        """Whether every year has the same length (``noleap``, ``all_leap``, ``360_day``).

        In such a calendar the days map to an anchored orbit in the same way every year.
        """
        return self.name in ("noleap", "all_leap", "360_day")

    @property
    def has_year_zero(self) -> bool:
        """Whether year 0 exists (all CF calendars except ``julian`` and ``standard``)."""
        return self.name not in _NO_YEAR_ZERO

    def shift_year(self, year: int, years: int) -> int:
        """Return the calendar year ``years`` after ``year`` (skipping a missing year 0)."""
        year = self._check_year(year)
        if self.has_year_zero:
            return year + years
        astro = year if year > 0 else year + 1  # astronomical numbering
        astro += years
        return astro if astro > 0 else astro - 1

    def _check_year(self, year) -> int:
        if (
            isinstance(year, bool)
            or not isinstance(year, (int, np.integer))
            or abs(int(year)) > MAX_MODEL_YEAR
        ):
            raise CalendarError(
                f"model year must be a whole number from {-MAX_MODEL_YEAR} to {MAX_MODEL_YEAR}; "
                f"got {shown(year)}"
            )
        if year == 0 and not self.has_year_zero:
            raise CalendarError(
                f"year 0 does not exist in calendar {self.name} (1 BCE is year -1); "
                f"give another model year"
            )
        return int(year)

    def _date(self, year: int, month: int, day: int = 1, hour: int = 0, minute: int = 0):
        try:
            with warnings.catch_warnings():
                # cftime warns about years before 1 CE in julian/standard; bcgen numbers them
                # as CF does (no year 0: 1 BCE is year -1), so the warning is noise here.
                warnings.simplefilter("ignore", cftime.CFWarning)
                return cftime.datetime(
                    year,
                    month,
                    day,
                    hour,
                    minute,
                    calendar=self.name,
                    has_year_zero=self.has_year_zero,
                )
        except ValueError:
            raise CalendarError(
                f"date {year:04d}-{month:02d}-{day:02d} {hour:02d}:{minute:02d} does not exist "
                f"in calendar {self.name}"
            ) from None

    def _days_in_month(self, year: int, month: int) -> int:
        return int(self._date(year, month).daysinmonth)

    def _days_since_new_year(self, year: int, date) -> float:
        delta = date - self._date(year, 1)
        return delta.days + (delta.seconds + delta.microseconds * 1e-6) / 86400.0

    # --- public day numbers ---------------------------------------------------------------
    def is_leap(self, year: int) -> bool:
        """Tell whether ``year`` is a leap year (never in 360_day; always in all_leap)."""
        year = self._check_year(year)
        if self.name == "360_day":
            return False
        return bool(cftime.is_leap_year(year, self.name, has_year_zero=self.has_year_zero))

    def year_length_days(self, year: int = 1) -> float:
        """Return the days in calendar year ``year`` (365, 366, 360; 355 for 1582 in standard)."""
        year = self._check_year(year)
        return self._days_since_new_year(year, self._date(self.shift_year(year, 1), 1))

    def month_starts_days(self, year: int = 1) -> np.ndarray:
        """Return the 13 month boundaries of ``year`` (1 Jan … 1 Dec, next 1 Jan), in days."""
        year = self._check_year(year)
        starts = [self._days_since_new_year(year, self._date(year, m)) for m in range(1, 13)]
        starts.append(self.year_length_days(year))
        return np.array(starts)

    def month_lengths_days(self, year: int = 1) -> np.ndarray:
        """Lengths of the 12 fixed-day months of ``year``, in days (they sum to the year)."""
        return np.diff(self.month_starts_days(year))

    def anchor_day(self, year: int = 1) -> float:
        """Time of the anchor in ``year``, in days after 1 January 00:00.

        79.5 for 21 March 12:00 in ``noleap``; 80.5 in a leap year or in ``360_day``.
        """
        return float(self.anchor_days(year, (0,))[0])

    def anchor_days(self, year: int = 1, year_offsets=(-1, 0, 1)) -> np.ndarray:
        """Anchor times of the years ``year + offset``, in days after 1 January 00:00 of ``year``.

        Consecutive differences are the orbital-year lengths (see the leap-year rule).
        """
        year = self._check_year(year)
        a = self.anchor
        out = []
        for offset in year_offsets:
            other = self.shift_year(year, int(offset))
            out.append(
                self._days_since_new_year(year, self._date(other, a.month, a.day, a.hour, a.minute))
            )
        return np.array(out)

    def orbital_year_length_days(self, year: int = 1) -> float:
        """Length of the orbital year from the anchor of ``year`` to the next anchor, in days."""
        first, second = self.anchor_days(year, (0, 1))
        return float(np.round(second - first))  # whole days: same time of day at both ends

    def describe(self) -> str:
        """One line for headers and metadata."""
        return f"calendar {self.name}, orbit anchored by the {self.anchor.describe()}"

    def anchor_in_words(self) -> str:
        """Put the anchor in words, as files and manifests state it (see :func:`anchor_from_words`).

        Examples
        --------
        >>> ModelCalendar("noleap").anchor_in_words()
        'March equinox at 03-21 12:00 of the noleap model calendar, every model year'
        """
        what = "March equinox" if self.anchor.kind == "march_equinox" else "perihelion"
        return f"{what} at {self.anchor.label} of the {self.name} model calendar, every model year"


_ANCHOR_WORDS_RE = re.compile(r"(March equinox|perihelion) at (\d\d-\d\d \d\d:\d\d)")


def anchor_from_words(text: str) -> Anchor | None:
    """Read the anchor back from :meth:`ModelCalendar.anchor_in_words` (None if absent).

    Examples
    --------
    >>> anchor_from_words("perihelion at 01-03 00:00 of the noleap model calendar")
    Anchor(kind='perihelion', month=1, day=3, hour=0, minute=0)
    """
    match = _ANCHOR_WORDS_RE.search(str(text))
    if not match:
        return None
    kind = "march_equinox" if match[1] == "March equinox" else "perihelion"
    return parse_anchor(match[2], kind)


__all__ = [
    "ANCHOR_FORMAT",
    "ANCHOR_KINDS",
    "CALENDARS",
    "CALENDAR_DESCRIPTIONS",
    "CALENDAR_NAMES",
    "DEPRECATED_CALENDAR_NAMES",
    "FIXED_YEAR_DAYS",
    "MAX_MODEL_YEAR",
    "NO_YEAR_ZERO_CALENDARS",
    "REFUSED_CALENDARS",
    "Anchor",
    "AnchorKind",
    "CalendarName",
    "DeprecatedCalendarNameWarning",
    "ModelCalendar",
    "anchor_from_words",
    "canonical_calendar",
    "cf_calendar_name",
    "date_exists",
    "deprecated_calendar_message",
    "parse_anchor",
    "split_anchor_text",
    "year_length_days",
]
