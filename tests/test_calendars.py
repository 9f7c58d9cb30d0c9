"""Model calendars and the anchor of the orbit (bcgen.solar_calendar.calendars)."""

import re
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from bcgen.errors import BcgenWarning, CalendarError
from bcgen.solar_calendar.calendars import (
    CALENDARS,
    Anchor,
    DeprecatedCalendarNameWarning,
    ModelCalendar,
    canonical_calendar,
    parse_anchor,
)

CANONICAL = ("noleap", "all_leap", "360_day", "proleptic_gregorian", "standard", "julian")


def test_every_cf_calendar_with_an_annual_cycle_is_accepted():
    # CF 1.13 §4.4.3 Table 4.1 (CF 1.13 §4.4.3): standard, proleptic_gregorian,
    # julian, noleap/365_day, all_leap/366_day, 360_day, and the deprecated name gregorian.
    # (utc and tai are time scales, none has no annual cycle: not model calendars here.)
    cf_names = {
        "standard",
        "gregorian",
        "proleptic_gregorian",
        "julian",
        "noleap",
        "365_day",
        "all_leap",
        "366_day",
        "360_day",
    }
    assert set(CALENDARS) == cf_names
    assert set(CALENDARS.values()) == set(CANONICAL)


@pytest.mark.parametrize(
    ("alias", "name"), [("365_day", "noleap"), ("366_day", "all_leap"), ("NoLeap", "noleap")]
)
def test_aliases_are_synonyms_without_warning(alias, name):
    # CF 1.13 §4.4.3: noleap and 365_day (all_leap and 366_day) are synonyms, neither deprecated.
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert ModelCalendar(alias).name == name


def test_gregorian_is_deprecated_alias_of_standard():
    # CF 1.13 §4.4.3: "A deprecated alternative name for this calendar is gregorian".
    with pytest.warns(DeprecatedCalendarNameWarning, match="'gregorian' is deprecated"):
        assert ModelCalendar("gregorian").name == "standard"
    assert issubclass(DeprecatedCalendarNameWarning, BcgenWarning)


def test_gregorian_is_read_alike_by_spec_command_line_and_writer(capsys):
    # CF 1.13 §4.4.3: "A deprecated alternative name for this calendar is gregorian". One
    # behaviour everywhere: read as standard, with the same DeprecatedCalendarNameWarning.
    from bcgen.cf import climatology_time_axis
    from bcgen.cli import main
    from bcgen.spec import parse_spec_text

    text = "experiment: {name: g}\nepoch: 6ka\ncalendar:\n  name: gregorian\nproducts: [orbit]\n"
    message = r"calendar name 'gregorian' is deprecated in CF 1.13; read as 'standard'"
    with pytest.warns(DeprecatedCalendarNameWarning, match=r"^g\.yaml:4:9: calendar\.name: "
                      + message):
        assert parse_spec_text(text, "g.yaml").calendar.name == "standard"
    with pytest.warns(DeprecatedCalendarNameWarning, match=message):
        axis = climatology_time_axis([[0, 31]], "gregorian", year=2)
    assert axis.time.attrs["calendar"] == "standard"
    assert main(["months", "6ka", "--calendar", "gregorian", "--format", "json"]) == 0
    out, err = capsys.readouterr()
    assert re.search("^bcgen: warning: --calendar: " + message, err)
    assert main(["months", "6ka", "--calendar", "standard", "--format", "json"]) == 0
    assert capsys.readouterr() == (out, "")  # the same months as for 'standard'


def test_unknown_calendar_lists_valid_names():
    with pytest.raises(
        CalendarError,
        match=r"--calendar: unknown calendar 'none'; expected one "
        r"of noleap, 365_day",
    ):
        canonical_calendar("none", source="--calendar")


@pytest.mark.parametrize(
    ("name", "year", "length"),
    [
        # Day counts by definition of each calendar (CF 1.13 §4.4.3, Table 4.1).
        ("noleap", 2000, 365),
        ("all_leap", 2001, 366),
        ("360_day", 2000, 360),
        ("proleptic_gregorian", 2000, 366),  # divisible by 400
        ("proleptic_gregorian", 1900, 365),  # Gregorian rule: centuries not leap unless /400
        ("julian", 1900, 366),  # Julian rule: every fourth year
        ("standard", 1900, 365),  # Gregorian after 1582
        ("standard", 1500, 366),  # Julian before 1582
        ("standard", 1582, 355),  # 1582-10-05 .. 1582-10-14 do not exist (CF Table 4.1)
        ("proleptic_gregorian", 0, 366),  # year 0 exists and is leap (CF 1.13 §4.4.3)
        ("julian", -1, 366),  # 1 BCE = astronomical year 0, leap in the Julian rule
    ],
)
def test_year_lengths(name, year, length):
    cal = ModelCalendar(name)
    assert cal.year_length_days(year) == length
    assert cal.month_lengths_days(year).sum() == length
    assert cal.is_leap(year) == (length == 366)


def test_month_lengths():
    # Common practice (the Gregorian month lengths; 360_day: twelve 30-day months, CF 1.13).
    np.testing.assert_array_equal(
        ModelCalendar("noleap").month_lengths_days(),
        [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31],
    )
    np.testing.assert_array_equal(
        ModelCalendar("proleptic_gregorian").month_lengths_days(2024),
        [31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31],
    )
    np.testing.assert_array_equal(ModelCalendar("360_day").month_lengths_days(), [30] * 12)
    starts = ModelCalendar("noleap").month_starts_days()
    assert starts[0] == 0 and starts[-1] == 365 and len(starts) == 13


def test_default_anchor_is_pmip_equinox():
    # PMIP protocols: vernal equinox at 21 March, 12:00 (Otto-Bliesner et al. 2017). In a
    # 365-day year that is 79.5 days after 1 January 00:00, the value that reproduces the
    # PMIP1 check table (Bonfils et al. 1998).
    cal = ModelCalendar("noleap")
    assert cal.anchor == Anchor("march_equinox", 3, 21, 12, 0)
    assert cal.anchor_day() == 79.5


@pytest.mark.parametrize(
    ("name", "year", "anchor", "day"),
    [
        ("360_day", 1, Anchor(), 80.5),  # 2 × 30 + 20.5 (CF 360_day definition)
        ("proleptic_gregorian", 2000, Anchor(), 80.5),  # 31 + 29 + 20.5
        ("proleptic_gregorian", 2001, Anchor(), 79.5),
        ("noleap", 1, Anchor("perihelion", 1, 3, 0, 0), 2.0),
        ("noleap", 1, Anchor("march_equinox", 3, 20, 21, 24), 78 + 21.4 / 24),
        ("360_day", 1, Anchor("march_equinox", 2, 30, 6, 0), 59.25),  # 30 Feb exists in 360_day
    ],
)
def test_anchor_day(name, year, anchor, day):
    assert ModelCalendar(name, anchor).anchor_day(year) == pytest.approx(day, abs=1e-9)


def test_anchor_dates_that_do_not_exist():
    # 30 February exists only in 360_day; 29 February not in every year of leap calendars.
    with pytest.raises(
        CalendarError,
        match=r"^anchor date 02-30 12:00 does not exist in "
        r"calendar noleap \(February has 28 days\)$",
    ):
        ModelCalendar("noleap", Anchor(month=2, day=30))
    with pytest.raises(CalendarError, match="does not exist in every year of calendar julian"):
        ModelCalendar("julian", Anchor(month=2, day=29))
    with pytest.raises(CalendarError, match="April has 30 days"):
        ModelCalendar("proleptic_gregorian", Anchor(month=4, day=31))
    assert ModelCalendar("all_leap", Anchor(month=2, day=29)).anchor_day() == 59.5


def test_anchor_fields_are_validated():
    with pytest.raises(CalendarError, match="unknown anchor kind 'solstice'"):
        Anchor("solstice")
    with pytest.raises(CalendarError, match="anchor hour must be a whole number from 0 to 23"):
        Anchor(hour=24)
    with pytest.raises(CalendarError, match="anchor month must be a whole number from 1 to 12"):
        Anchor(month=13)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("03-21 12:00", Anchor("march_equinox", 3, 21, 12, 0)),
        ("03-20 00:00", Anchor("march_equinox", 3, 20, 0, 0)),
        (" 3-20T21:24 ", Anchor("march_equinox", 3, 20, 21, 24)),
    ],
)
def test_parse_anchor(text, expected):
    assert parse_anchor(text) == expected


def test_parse_anchor_kind_and_errors():
    assert parse_anchor("01-03 00:00", "perihelion").kind == "perihelion"
    with pytest.raises(
        CalendarError,
        match=r"^--equinox: cannot read 'March 21'; expected "
        r"'MM-DD HH:MM', e.g. '03-21 12:00'",
    ):
        parse_anchor("March 21", source="--equinox")
    with pytest.raises(CalendarError, match=r"--equinox: '03-21 25:00': anchor hour"):
        parse_anchor("03-21 25:00", source="--equinox")


def test_year_zero():
    # CF 1.13 §4.4.3: year 0 exists in every calendar except julian and standard.
    assert ModelCalendar("proleptic_gregorian").shift_year(1, -1) == 0
    assert ModelCalendar("julian").shift_year(1, -1) == -1
    assert ModelCalendar("standard").shift_year(-1, 1) == 1
    with pytest.raises(CalendarError, match="year 0 does not exist in calendar julian"):
        ModelCalendar("julian").year_length_days(0)


@pytest.mark.parametrize("name", CANONICAL)
@pytest.mark.parametrize("year", [10**20, -(10**20), 2**31, 1_000_001, -1_000_001])
def test_model_years_beyond_a_million_are_refused_with_one_line(name, year):
    # cftime cannot count years beyond a C long (OverflowError, observed with cftime 1.6);
    # bcgen stops at +-1 000 000 with its own one-line error instead of a traceback.
    calendar = ModelCalendar(name)
    for method in (calendar.is_leap, calendar.year_length_days, calendar.month_starts_days,
                   calendar.anchor_day):
        with pytest.raises(CalendarError,
                           match=r"^model year must be a whole number from -1000000 to 1000000; "
                                 rf"got {year}$"):
            method(year)


@pytest.mark.parametrize("name", CANONICAL)
def test_model_years_up_to_a_million_work(name):
    # Year lengths of the CF calendars (CF 1.13 Table 4.1): 1 000 000 is divisible by 400, so
    # a leap year in julian and Gregorian; 360/365/366 in the fixed-length calendars.
    expected = {"noleap": 365, "all_leap": 366, "360_day": 360}.get(name, 366)
    calendar = ModelCalendar(name)
    assert calendar.year_length_days(1_000_000) == expected
    assert calendar.year_length_days(-1_000_000) in (360, 365, 366)


# --- leap-year rule ---------------------------------------------------------------------------
def test_orbital_year_containing_29_february_is_366_days():
    # The rule of this module (docstring): anchored every year, so the anchor-to-anchor
    # interval containing 29 February has 366 days; other intervals 365 days.
    cal = ModelCalendar("proleptic_gregorian")
    assert cal.orbital_year_length_days(2023) == 366  # 2023-03-21 → 2024-03-21 contains 2024-02-29
    assert cal.orbital_year_length_days(2024) == 365
    assert cal.orbital_year_length_days(1899) == 365  # 1900 is not a Gregorian leap year
    julian = ModelCalendar("julian")
    assert julian.orbital_year_length_days(1899) == 366  # 1900 is a Julian leap year
    # A perihelion anchor in January: the interval starting in a leap year contains its 29 Feb.
    jan = ModelCalendar("proleptic_gregorian", Anchor("perihelion", 1, 3, 0, 0))
    assert jan.orbital_year_length_days(2024) == 366
    assert jan.orbital_year_length_days(2023) == 365


@given(
    name=st.sampled_from(CANONICAL),
    year=st.integers(-3000, 3000).filter(lambda y: y != 0),
    month=st.integers(1, 12),
    day=st.integers(1, 28),
    hour=st.integers(0, 23),
)
@settings(max_examples=200, deadline=None)
def test_orbital_year_is_366_days_exactly_when_it_contains_29_february(
    name, year, month, day, hour
):
    # The leap-year rule (module docstring): each anchor-to-anchor interval is a whole number of
    # days, 366 exactly when it contains a 29 February, otherwise the calendar's common year.
    cal = ModelCalendar(name, Anchor("march_equinox", month, day, hour, 0))
    if name == "standard" and abs(year - 1582) < 3:
        return  # the 1582 reform shortens one year to 355 days; covered in test_year_lengths
    anchors = cal.anchor_days(year, (0, 1))
    length = anchors[1] - anchors[0]
    assert length == pytest.approx(round(length), abs=1e-9)
    if name in ("noleap", "all_leap", "360_day"):
        assert round(length) == {"noleap": 365, "all_leap": 366, "360_day": 360}[name]
    else:
        leap_year_of_that_february = year if month <= 2 else cal.shift_year(year, 1)
        assert round(length) == (366 if cal.is_leap(leap_year_of_that_february) else 365)
    # Over a whole Julian leap cycle the orbital years add up to 4 × 365.25 days.
    if name == "julian":
        four = cal.anchor_days(year, (0, 4))
        assert four[1] - four[0] == pytest.approx(1461, abs=1e-9)
