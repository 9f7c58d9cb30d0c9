"""Latitudes and latitude bands are named the same way in figures and in messages.

A modeller reading "65°N" on a figure's axis and "65N" (or "EQ") in a validation report is
left to guess that they are the same place. The words come from bcgen.labels everywhere
and are checked here where they are shown; days are given with their model-calendar
date (bcgen.validation.dates, checked in the validate tests).
"""

from __future__ import annotations

import re

import matplotlib
import pytest

matplotlib.use("Agg")  # no display in tests

from validate_synthetic import synthetic_output, write_spec  # noqa: E402

from bcgen.cli import main  # noqa: E402
from bcgen.labels import band_label, latitude_label  # noqa: E402
from bcgen.plot import insolation_figure, monthly_field  # noqa: E402

#: The words a figure uses: degree sign and hemisphere letter, the Equator by name.
LATITUDE_WORD = r"(?:\d+(?:\.\d+)?°[NS]|Equator)"


def test_the_words():
    assert [latitude_label(v) for v in (90, 65.5, 0, -30)] == ["90°N", "65.5°N", "Equator",
                                                              "30°S"]
    assert band_label(-90, -60) == "90°S to 60°S"


def test_figure_ticks_use_the_words():
    fig = insolation_figure(monthly_field("6ka"))
    ticks = [t.get_text() for t in fig.axes[0].get_yticklabels()]
    assert ticks == [latitude_label(v) for v in (-90, -60, -30, 0, 30, 60, 90)]


@pytest.fixture(scope="module")
def shifted(tmp_path_factory):
    folder = tmp_path_factory.mktemp("labels")
    return write_spec(folder), synthetic_output(folder, "equinox_day_shift", name="shift.nc")


def test_validate_names_places_and_days_as_the_figures_do(shifted, capsys):
    spec, model = shifted
    status = main(["validate", str(model), "--spec", str(spec)])
    out, err = capsys.readouterr()
    assert status == 1
    # The one-line verdict names the worst place in the same words.
    assert re.search(rf"max abs error [\d.]+ W m-2 \(\w+, latitude {LATITUDE_WORD} ", err), err
    worst = out.split("worst places:")[1].split("\n\n")[0].strip().splitlines()
    assert worst
    for line in worst:
        assert re.match(rf"^\s*\w+, latitude {LATITUDE_WORD} \(year \d+, days? ", line), line
    table = out.split("per month and latitude band:\n")[1].split("\n\n")[0].splitlines()
    bands = [row.split()[0:3] for row in table[1:]]  # after the header row
    assert bands and all(re.fullmatch(LATITUDE_WORD, b[0]) and b[1] == "to"
                         and re.fullmatch(LATITUDE_WORD, b[2]) for b in bands), bands
    # Nothing in the report names a latitude the old way (65N, EQ).
    assert not re.search(r"\b\d+[NS]\b|\bEQ\b", out)
