"""`bcgen orbit`: output formats, options and errors (run in-process, plus one subprocess)."""

import csv
import io
import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from cli_checks import one_error_line
from published_tables import PMIP4

from bcgen.cli import main
from bcgen.errors import EpochError

#: The PMIP4 midHolocene orbit (Otto-Bliesner et al. 2017, Table 1; tests/published_tables.py)
#: as the digits printed, and its perihelion as the Sun's longitude, ϖ + 180 (Berger 1978).
MH = PMIP4["midHolocene"]
MH_SUN_AT_PERIHELION = f"{float(MH.perihelion_minus_180_deg) + 180:.2f}"

KEYS = [
    "epoch",
    "years_bp",
    "eccentricity",
    "obliquity_deg",
    "perihelion_longitude_deg",
    "sun_longitude_at_perihelion_deg",
    "precession_index",
    "solution",
]


def run(capsys, *argv):
    status = main(["orbit", *argv])
    out, err = capsys.readouterr()
    return status, out, err


def test_json_gives_the_pmip4_protocol_orbits(capsys):
    status, out, err = run(capsys, "1850CE", "6ka", "21ka", "127ka", "--format", "json")
    assert status == 0 and err == ""
    records = json.loads(out)
    assert [list(r) for r in records] == [KEYS] * 4
    assert [r["epoch"] for r in records] == ["1850CE", "6ka", "21ka", "127ka"]
    assert [r["years_bp"] for r in records] == [100, 6000, 21000, 127000]
    assert {r["solution"] for r in records} == {"berger1978"}
    # PMIP4-CMIP6 protocol orbits (Otto-Bliesner et al. 2017; Kageyama et al. 2017; the
    # confidence of each row in tests/published_tables.py).
    published = [PMIP4[name].orbit for name in ("piControl", "midHolocene", "lgm", "lig127k")]
    for record, (ecc, obl, peri) in zip(records, published, strict=True):
        assert round(record["eccentricity"], 6) == ecc
        assert round(record["obliquity_deg"], 3) == obl
        assert round(record["perihelion_longitude_deg"], 2) == peri
        # The Sun is seen from the Earth opposite the Earth seen from the Sun, so its
        # longitude at perihelion is ϖ + 180° (geometry; Berger 1978 measures ϖ heliocentrically).
        assert record["sun_longitude_at_perihelion_deg"] == pytest.approx(
            (record["perihelion_longitude_deg"] + 180.0) % 360.0
        )


def test_epoch_is_kept_as_given_and_ranges_are_formatted(capsys):
    status, out, _ = run(capsys, "6 ka BP", "130ka..128ka/1ka", "4050 BCE", "--format", "json")
    assert status == 0
    records = json.loads(out)
    assert [r["epoch"] for r in records] == ["6 ka BP", "130ka", "129ka", "128ka", "4050 BCE"]
    # Historical reckoning, no year 0: 4050 BCE is 5999 years before 1950 CE.
    assert [r["years_bp"] for r in records] == [6000, 130000, 129000, 128000, 5999]


def test_csv_has_the_same_columns_and_values_as_json(capsys):
    _, out_json, _ = run(capsys, "6ka", "21000 BP", "--format", "json")
    status, out_csv, _ = run(capsys, "6ka", "21000 BP", "--format", "csv")
    assert status == 0
    rows = list(csv.DictReader(io.StringIO(out_csv)))
    assert list(rows[0]) == KEYS
    for row, record in zip(rows, json.loads(out_json), strict=True):
        assert row["epoch"] == record["epoch"] and row["solution"] == record["solution"]
        for key in KEYS[1:-1]:
            assert float(row[key]) == record[key]


def test_text_states_units_and_conventions(capsys):
    status, out, _ = run(capsys, "1850CE", "6ka", "21ka")
    assert status == 0
    header = "\n".join(line for line in out.splitlines() if line.startswith("#"))
    for phrase in (
        "years before 1950 CE",
        "degrees",
        "moving March equinox",
        "perihelion - 180",
        "perihelion + 180",
        "e * sin",
    ):
        assert phrase in header
    rows = [
        line.split() for line in out.splitlines() if line.split()[0] in ("1850CE", "6ka", "21ka")
    ]
    assert [r[0] for r in rows] == ["1850CE", "6ka", "21ka"]
    # midHolocene (PMIP design page; Otto-Bliesner et al. 2017): e 0.018682, ε 24.105, ϖ 0.87.
    assert rows[1][2] == MH.eccentricity
    assert round(float(rows[1][3]), 3) == float(MH.obliquity_deg)
    assert round(float(rows[1][4]), 2) == float(MH.perihelion_minus_180_deg)


def test_help_shows_examples(capsys):
    with pytest.raises(SystemExit) as info:
        main(["orbit", "--help"])
    assert info.value.code == 0
    out = capsys.readouterr().out
    assert "examples:" in out
    assert "bcgen orbit 1850CE 6ka 21ka 127ka" in out
    assert "--perihelion-convention" in out


def test_fixed_solution_from_the_command_line(capsys):
    status, out, _ = run(
        capsys,
        "6ka",
        "--solution",
        "fixed",
        "--eccentricity",
        MH.eccentricity,
        "--obliquity-deg",
        MH.obliquity_deg,
        "--perihelion-deg",
        MH_SUN_AT_PERIHELION,
        "--perihelion-convention",
        "sun_longitude_at_perihelion",
        "--format",
        "json",
    )
    assert status == 0
    (record,) = json.loads(out)
    assert record["solution"] == "fixed"
    assert record["perihelion_longitude_deg"] == pytest.approx(float(MH.perihelion_minus_180_deg))
    assert record["sun_longitude_at_perihelion_deg"] == pytest.approx(float(MH_SUN_AT_PERIHELION))
    assert record["eccentricity"] == float(MH.eccentricity)


def test_fixed_solution_needs_the_convention(capsys):
    status, _, err = run(
        capsys,
        "6ka",
        "--solution",
        "fixed",
        "--eccentricity",
        MH.eccentricity,
        "--obliquity-deg",
        MH.obliquity_deg,
        "--perihelion-deg",
        MH.perihelion_minus_180_deg,
    )
    assert status == 2
    assert "missing --perihelion-convention" in one_error_line(err)


def test_fixed_values_need_the_fixed_solution(capsys):
    status, _, err = run(capsys, "6ka", "--eccentricity", MH.eccentricity)
    assert status == 2
    assert "--eccentricity: only used with --solution fixed" in one_error_line(err)


def test_table_solution_from_the_command_line(capsys, tmp_path):
    table = tmp_path / "orbit.csv"
    table.write_text(
        "age_ka_bp,eccentricity,obliquity_deg,perihelion_longitude_deg\n"
        "10,0.02,23.0,350.0\n9,0.02,24.0,10.0\n"
    )
    status, out, _ = run(
        capsys, "9.5ka", "--solution", "table", "--table", str(table), "--format", "json"
    )
    assert status == 0
    (record,) = json.loads(out)
    assert record["solution"] == "table"
    assert record["obliquity_deg"] == pytest.approx(23.5)
    assert min(record["perihelion_longitude_deg"], 360 - record["perihelion_longitude_deg"]) < 1e-9
    status, _, err = run(capsys, "11ka", "--solution", "table", "--table", str(table))
    assert status == 2
    assert "outside the orbit table" in one_error_line(err)


def test_table_options_must_match(capsys, tmp_path):
    status, _, err = run(capsys, "6ka", "--solution", "table")
    assert status == 2 and "needs --table FILE" in one_error_line(err)
    status, _, err = run(capsys, "6ka", "--table", str(tmp_path / "orbit.csv"))
    assert status == 2 and "--table: only used with --solution table" in one_error_line(err)


@pytest.mark.parametrize("epoch", ["6000", "6ka..5ka", "6 kilo", "0 CE"])
def test_bad_epoch_is_one_line_with_status_2(capsys, epoch):
    status, out, err = run(capsys, epoch)
    assert status == 2 and out == ""
    line = one_error_line(err)
    assert "accepted forms" in line and "1850CE" in line


@pytest.mark.parametrize(
    ("epoch", "why"),
    [
        ("1e30ka", "more than 1,000,000,000 years from 1950 CE"),
        ("1e306ka", "more than 1,000,000,000 years from 1950 CE"),
        ("1850 yr", "a number of years alone is a duration"),
        ("6000 a", "a number of years alone is a duration"),
    ],
)
def test_absurd_and_ambiguous_epochs_are_errors_not_results(capsys, epoch, why):
    status, out, err = run(capsys, epoch)
    assert status == 2 and out == ""
    assert why in one_error_line(err)


@pytest.mark.parametrize("value", ["inf", "-inf", "nan"])
def test_non_finite_fixed_perihelion_is_one_line(capsys, value):
    status, out, err = run(
        capsys, "6ka", "--solution", "fixed", "--eccentricity", MH.eccentricity,
        "--obliquity-deg", MH.obliquity_deg, f"--perihelion-deg={value}",
        "--perihelion-convention", "perihelion_longitude",
    )
    assert status == 2 and out == ""
    line = one_error_line(err)  # no numpy RuntimeWarning line before it
    assert line == (
        f"bcgen: error: --perihelion-deg: longitude of perihelion must be finite; got {value}"
    )


def test_debug_shows_the_traceback():
    with pytest.raises(EpochError):
        main(["--debug", "orbit", "6000"])


def test_unknown_format_is_a_usage_error(capsys):
    with pytest.raises(SystemExit) as info:
        main(["orbit", "6ka", "--format", "yaml"])
    assert info.value.code == 2
    one_error_line(capsys.readouterr().err)


def test_outside_validity_warning_is_one_line(capsys):
    status, out, err = run(capsys, "2Ma", "6ka")
    assert status == 0
    assert err.splitlines() == [err.strip()]
    assert err.startswith("bcgen: warning: epoch 2000ka is outside")
    assert len(out.splitlines()) > 2


def test_console_script_bad_epoch_exits_2_without_traceback():
    script = shutil.which("bcgen") or str(Path(sys.executable).with_name("bcgen"))
    result = subprocess.run(
        [script, "orbit", "6000"], capture_output=True, text=True, timeout=60, check=False
    )
    assert result.returncode == 2
    assert result.stdout == ""
    assert len(result.stderr.splitlines()) == 1
    assert result.stderr.startswith("bcgen: error: cannot read epoch '6000'")
    assert "Traceback" not in result.stderr
