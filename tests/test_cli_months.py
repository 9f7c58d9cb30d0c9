"""The ``bcgen months`` command."""

import json
import subprocess
import sys

import numpy as np
import pytest
from published_tables import PMIP4

from bcgen.cli import main
from bcgen.orbit import solve
from bcgen.solar_calendar import Anchor, ModelCalendar, fixed_angle_months

KEYS = [
    "month",
    "start_day",
    "length_days",
    "start_true_longitude_deg",
    "fixed_day_start_day",
    "fixed_day_length_days",
]


def run_json(capsys, *argv):
    assert main(["months", *argv, "--format", "json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_json_records_of_issue_3(capsys):
    # The interface of issue 3: a list of 12 objects with exactly these keys.
    records = run_json(capsys, "127ka", "--reference", "1850CE")
    assert [r["month"] for r in records] == list(range(1, 13))
    assert all(list(r) == KEYS for r in records)
    assert sum(r["length_days"] for r in records) == pytest.approx(365.0, abs=1e-9)
    assert [r["fixed_day_length_days"] for r in records] == [
        31,
        28,
        31,
        30,
        31,
        30,
        31,
        31,
        30,
        31,
        30,
        31,
    ]
    # At 127 ka the year starts before 1 January in fixed-angle months (wrap, start < 0).
    assert records[0]["start_day"] < 0
    # Same numbers as the library call with the same choices.
    table = fixed_angle_months(solve(-127000.0), "noleap", reference=solve(-100.0))
    np.testing.assert_allclose(
        [r["start_day"] for r in records], table.start_day, rtol=0, atol=1e-12
    )


def test_epoch_equal_to_reference_gives_fixed_day_months(capsys):
    # Invariant: the reference orbit's own fixed-angle months are its fixed-day months.
    for argv in (
        ["1850CE", "--reference", "1850CE", "--calendar", "360_day"],
        ["6ka", "--reference", "6ka", "--perihelion-date", "01-03 00:00"],
    ):
        records = run_json(capsys, *argv)
        for r in records:
            assert r["start_day"] == pytest.approx(r["fixed_day_start_day"], abs=1e-8)
            assert r["length_days"] == pytest.approx(r["fixed_day_length_days"], abs=1e-8)


def test_options_reach_the_calculation(capsys):
    records = run_json(
        capsys,
        "6ka",
        "--calendar",
        "proleptic_gregorian",
        "--year",
        "2000",
        "--equinox",
        "03-20 00:00",
        "--reference",
        "1850CE",
    )
    calendar = ModelCalendar("proleptic_gregorian", Anchor("march_equinox", 3, 20, 0, 0))
    table = fixed_angle_months(solve(-6000.0), calendar, reference=solve(-100.0), year=2000)
    np.testing.assert_allclose([r["length_days"] for r in records], table.length_days, atol=1e-12)
    assert records[1]["fixed_day_length_days"] == 29  # 2000 is a leap year


def test_text_table_states_units_and_conventions(capsys):
    assert main(["months", "6ka"]) == 0
    out = capsys.readouterr().out
    assert "fractional days after 1 January 00:00 of the model year" in out
    assert "0 deg at the March equinox" in out
    assert "March equinox at 03-21 12:00" in out
    assert "(days)" in out and "(deg)" in out
    # PMIP midHolocene (Otto-Bliesner et al. 2017)
    assert f"eccentricity {PMIP4['midHolocene'].eccentricity}" in out
    rows = [line for line in out.splitlines() if line[:2].strip().isdigit()]
    assert len(rows) == 12


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["6000"], "cannot read epoch '6000': a bare number is ambiguous"),
        (["6ka", "--calendar", "lunar"], "--calendar: unknown calendar 'lunar'"),
        (
            ["6ka", "--equinox", "21 March"],
            "--equinox: cannot read '21 March'; expected 'MM-DD HH:MM'",
        ),
        (
            ["6ka", "--equinox", "02-30 12:00"],
            "--equinox: anchor date 02-30 12:00 does not exist in calendar noleap",
        ),
        (["6ka", "--calendar", "julian", "--year", "0"], "--year: year 0 does not exist"),
        # The orbit is always berger1978 here: --solution is not an option of bcgen months.
        (["6ka", "--solution", "table"], "unrecognized arguments: --solution table"),
        (
            ["6ka", "--year", "99999999999999999999"],
            "--year: model year must be a whole number from -1000000 to 1000000",
        ),
        (
            ["6ka..0ka/1ka"],
            "EPOCH: bcgen months takes one epoch, not the range '6ka..0ka/1ka'",
        ),
        (
            ["6ka", "--reference", "1ka..0ka/1ka"],
            "--reference: bcgen months takes one epoch, not the range '1ka..0ka/1ka'",
        ),
        # The standard calendar skips 1582-10-05 to 1582-10-14 (CF 1.13 section 4.4.3,
        # Table 4.1): an anchor on 10 October exists in other years but not in 1582.
        (
            ["6ka", "--calendar", "standard", "--equinox", "10-10 00:00", "--year", "1582"],
            "--equinox: date 1582-10-10 00:00 does not exist in calendar standard",
        ),
        (
            ["6ka", "--calendar", "standard", "--perihelion-date", "10-10 00:00", "--year",
             "1583"],
            "--perihelion-date: date 1582-10-10 00:00 does not exist in calendar standard",
        ),
        (["6ka", "--equinox", "03-21 12:00", "--perihelion-date", "01-03 00:00"],
         "not allowed with"),
        # A date alone could mean 00:00 or 12:00 (the default): the time is required.
        (["6ka", "--equinox", "03-21"], "--equinox: '03-21' has no time of day; write "
         "'MM-DD HH:MM', e.g. '03-21 12:00'"),
        (["6ka", "--perihelion-date", "01-03"], "--perihelion-date: '01-03' has no time of day"),
    ],
)
def test_errors_are_one_line_with_status_2(capsys, argv, message):
    try:
        status = main(["months", *argv])
    except SystemExit as exc:  # argparse usage errors exit from the parser
        status = exc.code
    assert status == 2
    err = capsys.readouterr().err
    assert err.startswith("bcgen: error: ") and err.count("\n") == 1
    assert message in err


def test_orbits_are_berger1978_and_help_says_so(capsys):
    assert main(["months", "127ka", "--reference", "1850CE"]) == 0
    out = capsys.readouterr().out
    assert f"# orbit (berger1978): eccentricity {PMIP4['lig127k'].eccentricity}" in out  # PMIP4
    assert (f"# reference orbit (berger1978): eccentricity "
            f"{PMIP4['piControl'].eccentricity}") in out  # PMIP4
    with pytest.raises(SystemExit):
        main(["months", "--help"])
    text = " ".join(capsys.readouterr().out.split())
    assert "always use the berger1978 solution" in text and "no --solution option" in text


def test_30_february_is_valid_in_360_day(capsys):
    records = run_json(capsys, "6ka", "--calendar", "360_day", "--equinox", "02-30 12:00")
    assert sum(r["length_days"] for r in records) == pytest.approx(360.0, abs=1e-9)


def test_deprecated_gregorian_warns(capsys):
    assert main(["months", "6ka", "--calendar", "gregorian", "--format", "json"]) == 0
    err = capsys.readouterr().err
    assert "bcgen: warning: --calendar: calendar name 'gregorian' is deprecated" in err


def test_help_has_an_example():
    result = subprocess.run(
        [sys.executable, "-m", "bcgen", "months", "--help"],
        capture_output=True,
        text=True,
        check=True,
    )
    assert "bcgen months 127ka --reference 1850CE --format json" in result.stdout
    assert "--perihelion-date" in result.stdout
