"""Epoch strings <-> years relative to 1950 CE (bcgen.epochs)."""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from bcgen.epochs import (
    MAX_EPOCH_YEARS,
    epoch_labels,
    format_epoch,
    parse_duration,
    parse_epoch,
    parse_epochs,
)
from bcgen.errors import BcgenError, EpochError


@pytest.mark.parametrize(
    ("text", "years_from_1950"),
    [
        # "BP" = before 1950 CE, the radiocarbon convention (Stuiver & Polach 1977,
        # Radiocarbon 19, 355-363; from memory); ka = thousands of years.
        ("6ka", -6000.0),
        ("6 ka BP", -6000.0),
        ("6 KA bp", -6000.0),
        ("127ka", -127000.0),
        ("127 kyr", -127000.0),
        ("0.5ka", -500.0),
        ("3.2Ma", -3_200_000.0),
        ("21000 BP", -21000.0),
        ("500 yr BP", -500.0),
        ("1850CE", -100.0),
        ("1850 CE", -100.0),
        ("1850 AD", -100.0),
        ("2000CE", 50.0),
        ("1CE", -1949.0),
    ],
)
def test_parse_epoch_accepted_forms(text, years_from_1950):
    assert parse_epoch(text) == years_from_1950


@pytest.mark.parametrize(
    ("text", "years_from_1950"),
    [
        # Historical reckoning has no year 0: 1 BCE is followed by 1 CE, so N BCE is
        # the astronomical year 1 - N (common practice; e.g. Meeus, Astronomical
        # Algorithms, ch. 7, from memory). 4050 BCE is therefore 5999 BP, not 6000.
        ("4050 BCE", -5999.0),
        ("4050 BC", -5999.0),
        ("4051 BCE", -6000.0),
        ("1 BCE", -1950.0),
        ("2 BCE", -1951.0),
    ],
)
def test_bce_years_have_no_year_zero(text, years_from_1950):
    assert parse_epoch(text) == years_from_1950


def test_one_epoch_written_three_ways_is_one_epoch():
    # 6000 years before 1950 CE is 4051 BCE (historical reckoning, no year 0).
    assert parse_epoch("6ka") == parse_epoch("6000 BP") == parse_epoch("4051 BCE")


def test_bare_number_is_refused_with_the_accepted_forms():
    with pytest.raises(EpochError, match=r"'6000'.*bare number is ambiguous") as info:
        parse_epoch("6000")
    message = str(info.value)
    assert "\n" not in message
    for form in ("6ka", "6 ka BP", "21000 BP", "1850CE", "4050 BCE", "130ka..115ka/1ka"):
        assert form in message
    assert isinstance(info.value, BcgenError)


@pytest.mark.parametrize(
    ("text", "why"),
    [
        (6000, "bare number is ambiguous"),
        ("", "not an epoch"),
        ("six ka", "not an epoch"),
        ("6 kilo", "not an epoch"),
        ("-6ka", "cannot be negative"),
        ("-50 BP", "cannot be negative"),
        ("0 CE", "no year 0"),
        ("0 BCE", "no year 0"),
        ("4050.5 BCE", "whole numbers"),
        ("1850 CE BP", "mixes two references"),
        ("1e999ka", "too large"),
    ],
)
def test_bad_epochs_are_refused(text, why):
    with pytest.raises(EpochError, match=why):
        parse_epoch(text)


@pytest.mark.parametrize("text", ["1850 yr", "6000 a", "6000 yr", "21000yr", "6000 A"])
def test_a_bare_number_of_years_is_refused_as_an_epoch(text):
    # A number of years alone is a duration: '1850 yr' may be read as 1850 CE or 1850 BP, as
    # ambiguous as a bare number (common practice: an age carries "BP" or "ka").
    with pytest.raises(EpochError, match="a number of years alone is a duration") as info:
        parse_epoch(text)
    message = str(info.value)
    assert "\n" not in message and "accepted forms:" in message
    for form in ("6ka", "21000 BP", "1850CE", "4050 BCE"):
        assert form in message


@pytest.mark.parametrize(("text", "years"), [("500 yr BP", -500.0), ("6000 a BP", -6000.0)])
def test_years_with_bp_stay_epochs_and_durations_stay_steps(text, years):
    assert parse_epoch(text) == years
    assert parse_duration("6000 a") == 6000.0
    np.testing.assert_array_equal(parse_epochs("1850CE..1870CE/10yr"), [-100.0, -90.0, -80.0])


@pytest.mark.parametrize(
    "text", ["1e306ka", "1e30ka", "2e9 BP", "1.5e6Ma", "10000000000 CE", "1e305Ma"]
)
def test_absurd_epochs_are_refused(text):
    # 1e306 ka overflows to infinity; anything beyond 1e9 years (a quarter of the age of the
    # Earth, 4.54 Gyr: Dalrymple 2001, from memory) is no epoch of a climate experiment.
    with pytest.raises(EpochError, match="more than 1,000,000,000 years from 1950 CE") as info:
        parse_epoch(text)
    assert "\n" not in str(info.value)


def test_the_epoch_bound_is_inclusive():
    assert parse_epoch("1e9 BP") == -MAX_EPOCH_YEARS == -1e9
    assert parse_epoch("1000Ma") == -1e9


def test_a_range_where_one_epoch_is_expected_says_so():
    with pytest.raises(EpochError, match="one epoch is expected here, not a range") as info:
        parse_epoch("6ka..0ka/1ka")
    assert "START..END" not in str(info.value)  # ranges are not among the forms offered


def test_an_infinite_step_is_refused():
    with pytest.raises(EpochError, match="the step is too large"):
        parse_duration("1e400yr")


def test_range_includes_both_ends():
    years = parse_epochs("130ka..115ka/1ka")
    np.testing.assert_array_equal(years, -np.arange(130_000, 114_000, -1000.0))
    assert parse_epochs("115ka..130ka/1ka")[-1] == -130000.0  # the other direction
    assert parse_epochs("1850CE..2000CE/10yr").size == 16


def test_range_stops_before_an_end_the_step_misses():
    np.testing.assert_array_equal(parse_epochs("10ka..0ka/3ka"), [-10000, -7000, -4000, -1000])


def test_single_epoch_through_parse_epochs():
    np.testing.assert_array_equal(parse_epochs("6ka"), [-6000.0])


@pytest.mark.parametrize(
    ("text", "why"),
    [
        ("130ka..115ka", "needs a step"),
        ("130ka..115ka/0ka", "must be positive"),
        ("130ka..115ka/1", "must be a duration"),
        ("130000..115ka/1ka", "bare number"),
    ],
)
def test_bad_ranges_are_refused(text, why):
    with pytest.raises(EpochError, match=why):
        parse_epochs(text)


def test_parse_duration():
    assert parse_duration("1ka") == 1000.0
    assert parse_duration("10yr") == 10.0
    assert parse_duration("0.5 kyr") == 500.0


def test_labels_keep_single_epochs_and_format_ranges_like_their_start():
    assert epoch_labels("6 ka BP") == ["6 ka BP"]
    assert epoch_labels("130ka..128ka/1ka") == ["130ka", "129ka", "128ka"]
    assert epoch_labels("21000 BP..20000 BP/500yr") == ["21000 BP", "20500 BP", "20000 BP"]
    assert epoch_labels("2 BCE..2CE/1yr") == ["2 BCE", "1 BCE", "1CE", "2CE"]


def test_format_epoch_examples():
    assert format_epoch(-6000) == "6ka"
    assert format_epoch(-100) == "1850CE"
    assert format_epoch(-5999, "ce") == "4050 BCE"
    assert format_epoch(-21000, "bp") == "21000 BP"
    assert format_epoch(0) == "0ka"
    assert format_epoch(50) == "2000CE"


@given(
    years=st.integers(min_value=-5_000_000, max_value=5_000),
    style=st.sampled_from(["auto", "ka", "bp", "ce"]),
)
def test_format_then_parse_returns_the_epoch(years, style):
    assert parse_epoch(format_epoch(years, style)) == years


@pytest.mark.parametrize(("text", "count"), [
    ("6ka..0ka/1e-5yr", "600,000,001"),
    ("6ka..0ka/1e-300yr", "more than 10\\^15"),
    ("6ka..0ka/1e-320yr", "more than 10\\^15"),  # 6000 / 1e-320 overflows to infinity
])
def test_a_range_of_too_many_epochs_is_refused_with_its_size(text, count):
    with pytest.raises(EpochError, match=rf"the range has {count} epochs; the limit is 50,000,000"):
        parse_epochs(text)
