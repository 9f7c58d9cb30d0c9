"""Each built file's metadata describes that file: read back from every NetCDF file written.

Vocabulary: CMIP6 global attributes (Taylor et al. 2018, "CMIP6 Global Attributes, DRS,
Filenames, Directory Structure, and CV's"; from memory): frequency fx for no time axis,
day, monC for a monthly climatology, 1hrPt for hourly instants; tracking_id
"hdl:21.14100/" + a UUID, one per file; variable_id the file's data variable. CF 1.11
§7.4 for climatological time (checked by the compliance-checker on every file).
"""

from __future__ import annotations

import re
import uuid
from pathlib import Path

import netCDF4
import pytest

from bcgen import build
from bcgen.errors import InputFileError
from bcgen.spec import parse_spec_text

REPO = Path(__file__).resolve().parents[1]
TEMPLATE = REPO / "templates" / "cmip_forcing_attributes.json.in"

ATTRIBUTES = {
    "institution": "Example Institute (fictional)", "contact": "a@example.org",
    "further_info_url": "https://example.org", "institution_id": "EX",
    "license": "CC-BY-4.0", "license_id": "CC BY 4.0", "mip_era": "CMIP6",
    "nominal_resolution": "250 km", "source_id": "EX-1",
}


def spec_text(attributes: dict[str, str], pattern="{experiment}_{product}_{grid}.nc") -> str:
    attrs = ", ".join(f"{k}: '{v}'" for k, v in attributes.items())
    return f"""\
experiment: {{name: lig127k-T63}}
epoch: 127ka
greenhouse_gases:
  co2: {{value: 275, units: ppm}}
  ch4: {{value: 685, units: ppb}}
calendar: {{name: 360_day}}
grid: {{kind: gaussian, nlat: 8}}
products: [orbit, solar_constant, greenhouse_gases, daily_insolation,
           monthly_insolation_fixed_day, monthly_insolation_fixed_angle, timestep_table]
timestep_table: {{timestep_minutes: 60, points: [{{lat_deg: 65.0, lon_deg: 0.0}}], days: [80]}}
attribute_templates: [cmip_attributes]
output: {{file_pattern: "{pattern}"}}
attributes: {{{attrs}}}
"""


#: What each file is: (frequency, variable_id, dataset_category, own title starts with).
EXPECTED = {
    "orbit": ("fx", "multiple", "solar", "Orbital elements"),
    "solar_constant": ("fx", "solar_irradiance", "solar", "Solar constant"),
    "greenhouse_gases": ("fx", "multiple", "GHGConcentrations", "Greenhouse gases"),
    "daily_insolation": ("day", "insolation", "solar", "Daily TOA insolation"),
    "monthly_insolation_fixed_day": ("monC", "insolation", "solar", "Monthly TOA insolation"),
    "monthly_insolation_fixed_angle": ("monC", "insolation", "solar", "Monthly TOA insolation"),
    "timestep_table": ("1hrPt", "multiple", "solar", "Per-timestep reference values"),
}


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = tmp_path_factory.mktemp("metadata")
    result = build(parse_spec_text(spec_text(ATTRIBUTES)), folder)
    files = {}
    for record in result.files:
        if record["file"].endswith(".nc"):
            with netCDF4.Dataset(folder / record["file"]) as nc:
                files[record["file"]] = (record["product"],
                                         {k: nc.getncattr(k) for k in nc.ncattrs()})
    return folder, files


def test_every_file_carries_its_own_metadata(built):
    _, files = built
    assert {product for product, _ in files.values()} == set(EXPECTED)
    tracking = []
    for name, (product, attrs) in files.items():
        frequency, variable, category, title = EXPECTED[product]
        assert attrs["frequency"] == frequency, name
        assert attrs["variable_id"] == variable, name
        assert attrs["dataset_category"] == category, name
        assert attrs["title"].startswith(title), name  # the file's own title is kept
        match = re.fullmatch(r"hdl:21\.14100/([0-9a-f-]{36})", attrs["tracking_id"])
        assert match, attrs["tracking_id"]
        assert uuid.UUID(match[1]).version == 4
        tracking.append(attrs["tracking_id"])
        assert attrs["institution"] == ATTRIBUTES["institution"]
    assert len(set(tracking)) == len(tracking)  # one tracking id per file


def test_a_variable_id_names_a_variable_of_its_file(built):
    folder, files = built
    for name, (_, attrs) in files.items():
        if attrs["variable_id"] != "multiple":
            with netCDF4.Dataset(folder / name) as nc:
                assert attrs["variable_id"] in nc.variables


def test_comments_fit_each_file(built, cf_compliant):
    folder, files = built
    for name, (product, attrs) in files.items():
        comment = attrs.get("comment", "")
        with netCDF4.Dataset(folder / name) as nc:
            time = nc.variables.get("time")
            climatology = time is not None and "climatology" in time.ncattrs()
        # CF §7.4: only a climatological time axis has climatology bounds to explain.
        assert ("climatology bounds" in comment) == climatology, name
        if product == "timestep_table":
            # Its CSV header says instants at the START of each step; the NetCDF agrees.
            assert "instants at the start of each model timestep" in comment
            assert "mid-interval" not in comment
        if time is None:
            assert "time" not in comment.lower(), name
        cf_compliant(folder / name)


def test_grid_independent_files_carry_no_grid_in_their_names(built):
    _, files = built
    for name, (product, _) in files.items():
        gridded = product in ("daily_insolation", "monthly_insolation_fixed_day",
                              "monthly_insolation_fixed_angle")
        assert ("gaussian8" in name) == gridded, name
    assert "lig127k-T63_orbit.nc" in files and "lig127k-T63_timestep_table.nc" in files


def test_the_readme_lists_every_attribute_the_bundled_template_needs():
    needed = set(re.findall(r"\{\{\s*attributes\.(\w+)", TEMPLATE.read_text()))
    readme = (REPO / "README.md").read_text()
    paragraph = re.search(r"\*\*Metadata templates\.\*\*(.*?)\n\n", readme, re.DOTALL)[1]
    listed = set(re.findall(r"`(\w+)`", paragraph.split("needs", 1)[1].split("under")[0]))
    assert needed == listed


def test_missing_attributes_are_named_together_in_one_message():
    few = {k: v for k, v in ATTRIBUTES.items() if k not in ("institution", "contact", "mip_era")}
    with pytest.raises(InputFileError) as info:
        build(parse_spec_text(spec_text(few)), None)
    message = str(info.value)
    assert "\n" not in message
    for key in ("institution", "contact", "mip_era"):
        assert key in message
    assert "3 attribute(s) have no value" in message
