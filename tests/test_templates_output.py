"""Rendered templates name the files that are written and carry the calendar.

The env file's usage line is run by a shell exactly as written (`. ./NAME`) from the output
folder, so a wrong name fails the way it would for a user; the namelist's calendar entries
are read back and compared with the spec.
"""

from __future__ import annotations

import re
import shutil
import subprocess

import pytest

from bcgen import build
from bcgen.spec import parse_spec_text

SPEC = """\
experiment: {name: lig127k-T63}
epoch: 127ka
greenhouse_gases:
  co2: {value: 275, units: ppm}
  ch4: {value: 685, units: ppb}
  n2o: {value: 255, units: ppb}
calendar: {name: 360_day, anchor: march_equinox, date: "03-21 12:00"}
grid: {kind: zonal, resolution_deg: 30}
products: [templates]
templates: [env, namelist, summary_json]
"""


@pytest.fixture(scope="module")
def rendered(tmp_path_factory):
    folder = tmp_path_factory.mktemp("templates")
    result = build(parse_spec_text(SPEC), folder)
    return folder, {f["file"]: (folder / f["file"]).read_text() for f in result.files}


def test_the_env_file_usage_line_names_the_file_written(rendered):
    folder, files = rendered
    env_name = next(name for name in files if name.endswith(".sh"))
    usage = re.search(r"^# Source this file from a run script: (\. \./\S+)$", files[env_name],
                      re.MULTILINE)
    assert usage, files[env_name]
    assert usage[1] == f". ./{env_name}"
    bash = shutil.which("bash")
    if bash is None:
        pytest.fail("bash is needed to run the usage line")  # common on every CI image
    shown = subprocess.run([bash, "-c", f"{usage[1]} && echo $BC_CALENDAR $BC_EXPERIMENT"],
                           cwd=folder, capture_output=True, text=True, check=False)
    assert shown.returncode == 0, shown.stderr
    assert shown.stdout.split() == ["360_day", "lig127k-T63"]


def test_the_namelist_has_the_calendar(rendered):
    _, files = rendered
    namelist = next(text for name, text in files.items() if name.endswith(".nml"))
    entries = dict(re.findall(r"^\s+(\w+)\s*=\s*(.+?)\s*$", namelist, re.MULTILINE))
    assert entries["calendar"] == "'360_day'"
    assert entries["year_length_days"] == "360"
    assert entries["anchor_kind"] == "'march_equinox'"
    assert (entries["anchor_month"], entries["anchor_day"], entries["anchor_hour"],
            entries["anchor_minute"]) == ("3", "21", "12", "0")
