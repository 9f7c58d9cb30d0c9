"""`bcgen insolation`: output formats, options and errors (run in-process, plus one subprocess)."""

import json
import subprocess
import sys

import numpy as np
import pytest
from cli_checks import one_error_line
from published_tables import (
    CMIP6_PICONTROL_TSI_WM2,
    PMIP3_1850_ORBIT_DIGITS,
    PMIP4,
    PMIP_SOLAR_CONSTANT_WM2,
)

from bcgen.cli import main


def run(capsys, *argv):
    try:
        status = main(["insolation", *argv])
    except SystemExit as exc:  # argparse's usage errors leave through SystemExit
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


def test_json_for_the_mid_holocene(capsys):
    status, out, err = run(capsys, "6ka", "--lat", "90", "65", "0", "-90", "--format", "json")
    assert status == 0 and err == ""
    record = json.loads(out)
    assert record["latitudes_deg"] == [90.0, 65.0, 0.0, -90.0]
    assert record["months"] == list(range(1, 13))
    values = np.array(record["insolation_wm2"])
    assert values.shape == (4, 12) and np.all(values >= 0)
    # CMIP6 piControl (Matthes et al. 2017)
    assert record["solar_constant_wm2"] == CMIP6_PICONTROL_TSI_WM2
    assert record["calendar"] == "noleap"
    assert record["anchor"] == {"kind": "march_equinox", "date": "03-21 12:00", "day": 79.5}
    assert record["month_definition"] == "fixed-day" and record["daily_method"] == "midday"
    orbit = record["orbit"]
    # midHolocene protocol orbit (PMIP3/PMIP4 design pages; Otto-Bliesner et al. 2017).
    assert round(orbit["eccentricity"], 6) == float(PMIP4["midHolocene"].eccentricity)
    assert round(orbit["obliquity_deg"], 3) == float(PMIP4["midHolocene"].obliquity_deg)
    assert round(orbit["perihelion_longitude_deg"], 2) == float(
        PMIP4["midHolocene"].perihelion_minus_180_deg)
    assert "perihelion - 180" in orbit["perihelion_longitude_convention"]
    assert orbit["sun_longitude_at_perihelion_deg"] == pytest.approx(
        orbit["perihelion_longitude_deg"] + 180.0)
    # Polar annual mean S0 sin(eps) / (pi sqrt(1 - e^2)) (Berger, Loutre & Yin 2010) from the
    # orbit the command reports, and the month-length-weighted mean of its own monthly values
    # (mean of daily means at midday, so only close to the exact value: 0.05 W m-2).
    e, eps = orbit["eccentricity"], np.deg2rad(orbit["obliquity_deg"])
    polar = CMIP6_PICONTROL_TSI_WM2 * np.sin(eps) / (np.pi * np.sqrt(1 - e * e))
    assert record["annual_mean_wm2"][0] == pytest.approx(polar, rel=1e-9)
    assert record["annual_mean_wm2"][3] == pytest.approx(polar, rel=1e-9)
    lengths = np.array(record["month_length_days"])
    assert np.sum(values[0] * lengths) / 365 == pytest.approx(polar, abs=0.05)


def test_text_table_for_people(capsys):
    status, out, err = run(capsys, "6ka", "--lat", "65", "-65")
    assert status == 0 and err == ""
    lines = out.splitlines()
    header = [line for line in lines if line.startswith("#")]
    assert any(f"solar constant: {CMIP6_PICONTROL_TSI_WM2} W m-2" in line for line in header)
    assert any("March equinox at 03-21 12:00" in line for line in header)
    assert any("middle of each model day" in line for line in header)
    table = [line for line in lines if not line.startswith("#")]
    assert table[0].split() == ["lat", "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug",
                                "Sep", "Oct", "Nov", "Dec", "annual"]
    assert [row.split()[0] for row in table[1:]] == ["65.00", "-65.00"]
    assert all(len(row.split()) == 14 for row in table[1:])


def test_fixed_angle_months_with_own_reference_match_day_averaged_fixed_day(capsys):
    # Definition of fixed-angle months (issue 3): with the epoch as its own reference they are
    # the calendar months, and exact time means equal means of exact day averages.
    _, out, _ = run(capsys, "127ka", "--lat", "80", "0", "--months", "fixed-angle",
                    "--reference", "127ka", "--format", "json")
    angle = json.loads(out)
    _, out, _ = run(capsys, "127ka", "--lat", "80", "0", "--daily-method", "day-average",
                    "--format", "json")
    day = json.loads(out)
    assert angle["month_definition"] == "fixed-angle" and angle["daily_method"] is None
    assert angle["reference_epoch"] == "127ka"
    np.testing.assert_allclose(angle["month_start_day"], day["month_start_day"], atol=1e-8)
    np.testing.assert_allclose(angle["insolation_wm2"], day["insolation_wm2"], atol=1e-5)


def test_fixed_angle_months_against_1850_reference(capsys):
    status, out, err = run(capsys, "127ka", "--lat", "65", "--months", "fixed-angle",
                           "--reference", "1850CE", "--format", "json")
    assert status == 0 and err == ""
    record = json.loads(out)
    assert record["reference_epoch"] == "1850CE"
    # piControl orbit (Otto-Bliesner et al. 2017; PMIP3 last-millennium page: 0.01676, 100.327).
    assert round(record["reference_orbit"]["eccentricity"], 5) == float(PMIP3_1850_ORBIT_DIGITS[0])
    lengths = np.array(record["month_length_days"])
    assert lengths.sum() == pytest.approx(365.0, abs=1e-9)  # noleap months tile the year
    # 127 ka: perihelion near the June solstice, so the boreal summer months are short
    # (Kepler's second law): June must be shorter than December.
    assert lengths[5] < lengths[11]


def test_solar_constant_scales_the_values(capsys):
    _, out, _ = run(capsys, "21ka", "--lat", "45", "--format", "json")
    base = np.array(json.loads(out)["insolation_wm2"])
    # PMIP's 1365 W m-2 against the default, the CMIP6 piControl 1360.747 (published_tables)
    s0 = f"{PMIP_SOLAR_CONSTANT_WM2:g}"
    _, out, _ = run(capsys, "21ka", "--lat", "45", "--solar-constant", s0, "--format", "json")
    scaled = np.array(json.loads(out)["insolation_wm2"])
    np.testing.assert_allclose(scaled, base * PMIP_SOLAR_CONSTANT_WM2 / CMIP6_PICONTROL_TSI_WM2,
                               rtol=1e-12)


def test_equinox_and_calendar_options(capsys):
    status, out, _ = run(capsys, "6ka", "--lat", "0", "--calendar", "360_day", "--equinox",
                         "03-30 00:00", "--format", "json")
    assert status == 0
    record = json.loads(out)
    assert record["calendar"] == "360_day"
    assert record["anchor"]["date"] == "03-30 00:00" and record["anchor"]["day"] == 89.0
    assert record["month_length_days"] == [30.0] * 12


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["6ka", "--lat", "95"], "--lat: latitudes must be in [-90, 90]"),
        (["6ka", "--lat", "10", "--reference", "1850CE"], "--reference applies to --months"),
        (["6ka", "--lat", "10", "--months", "fixed-angle", "--daily-method", "midday"],
         "--daily-method applies to --months fixed-day only"),
        (["6ka", "--lat", "10", "--solar-constant", "-5"], "--solar-constant: expected a positive"),
        (["6ka", "--lat", "10", "--calendar", "lunar"], "--calendar: unknown calendar 'lunar'"),
        (["6ka", "--lat", "10", "--equinox", "21 March"], "--equinox: cannot read '21 March'"),
        (["6000", "--lat", "10"], "a bare number is ambiguous"),
        # NaN is no latitude; the message names the option, not the API's argument.
        (["6ka", "--lat", "nan"], "bcgen: error: --lat: latitudes must be in [-90, 90] degrees "
                                  "north; got nan"),
        (["6ka", "--lat", "10", "nan"], "--lat: latitudes must be in [-90, 90]"),
        # A value that starts with a minus sign is a value, not an unknown option.
        (["6ka", "--lat", "-60,-30"], "--lat: expected latitudes in degrees north separated "
                                      "by spaces (e.g. --lat 65 0 -30), got '-60,-30'"),
        (["-6ka", "--lat", "10"], "cannot read epoch '-6ka': an age before present cannot be "
                                  "negative"),
        (["6ka..0ka/1ka", "--lat", "10"], "EPOCH: bcgen insolation takes one epoch"),
        (["6ka", "--lat", "10", "--year", "99999999999999999999"],
         "--year: model year must be a whole number from -1000000 to 1000000"),
        (["6ka", "--lat", "10", "--calendar", "standard", "--equinox", "10-10 00:00", "--year",
          "1582"], "--equinox: date 1582-10-10 00:00 does not exist in calendar standard"),
    ],
)
def test_errors_are_one_line(capsys, argv, message):
    status, out, err = run(capsys, *argv)
    assert status == 2 and out == ""
    assert message in one_error_line(err)


@pytest.mark.parametrize(("epoch", "years_bp"),
                         [("6 ka BP", 6000.0), ("4051 BCE", 6000.0), ("1850CE", 100.0)])
def test_json_keeps_the_epoch_as_given_like_bcgen_orbit(capsys, epoch, years_bp):
    # 6000 BP is 4051 BCE (historical reckoning has no year 0; common practice).
    status, out, _ = run(capsys, epoch, "--lat", "65", "--format", "json")
    assert status == 0
    record = json.loads(out)
    assert record["epoch"] == epoch
    assert record["years_bp"] == years_bp and record["years_from_1950"] == -years_bp
    main(["orbit", epoch, "--format", "json"])
    (orbit_record,) = json.loads(capsys.readouterr().out)
    assert orbit_record["epoch"] == record["epoch"]
    assert orbit_record["years_bp"] == record["years_bp"]


@pytest.mark.parametrize("solution", ["berger1978", "table", "fixed"])
def test_there_is_no_solution_option(capsys, solution):
    # The orbit is always berger1978 here: table and fixed need values this command lacks.
    with pytest.raises(SystemExit) as exc:
        main(["insolation", "6ka", "--lat", "10", "--solution", solution])
    assert exc.value.code == 2
    assert "unrecognized arguments: --solution" in one_error_line(capsys.readouterr().err)


def test_reference_orbit_is_berger1978(capsys):
    _, out, _ = run(capsys, "127ka", "--lat", "65", "--months", "fixed-angle", "--reference",
                    "1850CE", "--format", "json")
    record = json.loads(out)
    assert record["orbit"]["solution"] == record["reference_orbit"]["solution"] == "berger1978"
    # piControl orbit (Otto-Bliesner et al. 2017): e = 0.016764, perihelion - 180 = 100.33.
    assert round(record["reference_orbit"]["eccentricity"], 6) == float(
        PMIP4["piControl"].eccentricity)
    assert round(record["reference_orbit"]["perihelion_longitude_deg"], 2) == float(
        PMIP4["piControl"].perihelion_minus_180_deg)


def test_help_says_the_orbit_is_berger1978_and_has_no_solution_option(capsys):
    with pytest.raises(SystemExit):
        main(["insolation", "--help"])
    out = " ".join(capsys.readouterr().out.split())
    assert "--solution" in out  # named only to say there is none
    assert "always use the berger1978 solution" in out and "no --solution option" in out


def test_lat_is_required(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["insolation", "6ka"])
    assert exc.value.code == 2
    assert "--lat" in one_error_line(capsys.readouterr().err)


def test_help_cites_the_solar_constant_and_shows_an_example(capsys):
    with pytest.raises(SystemExit):
        main(["insolation", "--help"])
    out = capsys.readouterr().out
    assert str(CMIP6_PICONTROL_TSI_WM2) in out and "CMIP6 piControl" in out
    assert "Matthes et al. 2017" in out
    assert "bcgen insolation 6ka --lat 90 65 0 -90" in out


def test_installed_command_runs():
    done = subprocess.run([sys.executable, "-m", "bcgen", "insolation", "6ka", "--lat", "90",
                           "65", "0", "-90", "--format", "json"], capture_output=True, text=True,
                          check=False)
    assert done.returncode == 0, done.stderr
    assert len(json.loads(done.stdout)["insolation_wm2"]) == 4
