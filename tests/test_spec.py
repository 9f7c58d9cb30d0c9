"""The experiment spec: bundled configs, the documented format, and the loader's behaviour.

Published values come from the sources named beside each check; the error
messages have their own table in test_spec_errors.py.
"""

from __future__ import annotations

import hashlib
import re
import xml.etree.ElementTree as ET
from dataclasses import fields
from pathlib import Path

import numpy as np
import pytest
import yaml
from published_tables import (
    CMIP6_PICONTROL_TSI_WM2,
    PMIP4,
    PMIP_1950_ORBIT,
    PMIP_1950_ORBIT_DIGITS,
)

from bcgen.errors import SpecError
from bcgen.spec import (
    SCHEMA,
    CalendarSpec,
    ExpectedValue,
    ExperimentInfo,
    ExperimentSpec,
    FieldError,
    GasSpec,
    GridSpec,
    InsolationSpec,
    OrbitSpec,
    OutputSpec,
    TransientSpec,
    iter_keys,
    load_spec,
    parse_spec_text,
)
from bcgen.spec import schema as S
from bcgen.spec.yaml_lines import decimals_of, read_scalar

ROOT = Path(__file__).resolve().parent.parent
CONFIGS = ROOT / "configs"
DEMO = CONFIGS / "demo.yaml"
PROTOCOLS = sorted((CONFIGS / "protocols").glob("*.yaml"))

# PMIP4-CMIP6 Tier-1 values (orbit as printed, "perihelion - 180" column; gases): Otto-Bliesner
# et al. 2017 Table 1 and Kageyama et al. 2017, typed with their sources in
# tests/published_tables.py; TSI: Matthes et al. 2017, CMIP6 piControl.
PUBLISHED = {name: (s.epoch, s.orbit, s.gases) for name, s in PMIP4.items()}


# --- the bundled configs ---------------------------------------------------------------------
def test_every_protocol_is_bundled():
    assert sorted(p.stem for p in PROTOCOLS) == sorted(PUBLISHED)


@pytest.mark.parametrize("path", PROTOCOLS, ids=[p.stem for p in PROTOCOLS])
def test_protocol_config_carries_the_published_values(path):
    spec = load_spec(path)
    epoch, (ecc, obl, peri), gases = PUBLISHED[path.stem]
    assert spec.experiment.name == path.stem
    assert spec.epoch == epoch
    assert spec.orbit.solution == "berger1978"
    expected = spec.orbit.expected
    assert expected.perihelion_convention == "perihelion_longitude"
    assert (
        expected.eccentricity.value,
        expected.obliquity_deg.value,
        expected.perihelion_deg.value,
    ) == (ecc, obl, peri)
    assert {g.name: g.value for g in spec.greenhouse_gases if g.name in gases} == gases
    assert spec.gas("co2").units == "ppm" and spec.gas("ch4").units == "ppb"
    assert spec.solar_constant_wm2 == CMIP6_PICONTROL_TSI_WM2
    # PMIP: vernal equinox on 21 March at 12:00 (Otto-Bliesner et al. 2017)
    assert (spec.calendar.anchor, spec.calendar.date) == ("march_equinox", "03-21 12:00")


@pytest.mark.parametrize("path", PROTOCOLS, ids=[p.stem for p in PROTOCOLS])
def test_protocol_orbit_reproduces_the_published_digits(path):
    # Berger (1978) as implemented in bcgen against the protocol tables (sources above)
    spec = load_spec(path)
    checks = spec.orbit.expected.compare(spec.resolve_orbit())
    assert [c.name for c in checks] == ["eccentricity", "obliquity_deg", "perihelion_deg"]
    for check in checks:
        assert check.agrees, check


def test_lgm_sets_cfcs_to_zero():
    # PMIP4 lgm design page: "CFC 0" (confirmed)
    spec = load_spec(CONFIGS / "protocols" / "lgm.yaml")
    assert spec.gas("cfc11").value == 0 and spec.gas("cfc12").value == 0


def test_demo_loads_and_is_fast_to_build():
    spec = load_spec(DEMO)
    assert spec.grid.kind == "zonal" and spec.grid.resolution_deg == 10.0
    assert set(spec.products) == set(S.PRODUCTS)
    # Grid-independent products leave {grid} out of the demo's pattern; gridded ones keep it.
    assert spec.file_name("orbit") == "demo-late-perihelion_orbit.nc"
    assert (spec.file_name("daily_insolation")
            == "demo-late-perihelion_daily_insolation_zonal10deg.nc")
    assert [t.name for t in spec.templates] == ["summary_json", "namelist"]


def test_demo_documents_every_key():
    text = DEMO.read_text()
    for path, _ in iter_keys():
        leaf = path.split(".")[-1].replace("[]", "")
        if leaf.startswith("<"):
            continue
        assert re.search(rf"\b{re.escape(leaf)}\b\s*:", text), f"{path} not shown in demo.yaml"
    for vocabulary in (
        S.CALENDAR_NAMES,
        S.PRODUCTS,
        S.GRID_KINDS,
        S.ANCHORS,
        S.DAILY_METHODS,
        S.BUNDLED_TEMPLATES,
        tuple(S.GASES),
        tuple(S.GAS_UNITS),
        tuple(S.FILE_PATTERN_FIELDS),
        S.GAS_INTERPOLATIONS,
    ):
        for word in vocabulary:
            assert word in text, f"{word!r} not mentioned in demo.yaml"


def test_the_error_quoted_in_the_demo_is_what_the_loader_says():
    text = DEMO.read_text()
    quoted = re.search(r"#   (demo\.yaml:\d+:\d+: calendar\.name: .*) \.\.\.$", text, re.M)[1]
    broken = text.replace("  name: noleap", "  name: noleep", 1)
    with pytest.raises(SpecError) as info:
        parse_spec_text(broken, "demo.yaml", base_dir=CONFIGS)
    assert str(info.value).startswith(quoted)


def test_configs_readme_lists_every_config_and_key():
    readme = (CONFIGS / "README.md").read_text()
    for path in [DEMO, *PROTOCOLS]:
        assert str(path.relative_to(CONFIGS)) in readme
    for path, _ in iter_keys():
        assert f"`{path}`" in readme, f"{path} missing from configs/README.md"


@pytest.mark.parametrize("path", [DEMO, *PROTOCOLS], ids=lambda p: p.stem)
def test_configs_mean_the_same_to_a_plain_yaml_reader(path):
    # The strict reader must agree with PyYAML's own reading of every bundled value.
    spec = load_spec(path)
    plain = yaml.safe_load(path.read_text())
    assert spec.experiment.name == plain["experiment"]["name"]
    assert list(spec.products) == plain["products"]
    assert spec.epoch == plain["epoch"]


# --- schema and defaults -----------------------------------------------------------------------
def test_schema_defaults_are_the_dataclass_defaults():
    pairs = {
        "solar_constant_wm2": ExperimentSpec.__dataclass_fields__["solar_constant_wm2"].default,
        "calendar.name": CalendarSpec().name,
        "calendar.anchor": CalendarSpec().anchor,
        "calendar.date": CalendarSpec().date,
        "orbit.solution": OrbitSpec().solution,
        "orbit.idealized": OrbitSpec().idealized,
        "insolation.daily_method": InsolationSpec().daily_method,
        "insolation.reference_epoch": InsolationSpec().reference_epoch,
        "output.directory": OutputSpec().directory,
        "output.compression_level": OutputSpec().compression_level,
        "output.shuffle": OutputSpec().shuffle,
        "transient.years_per_file": TransientSpec("130ka", "115ka").years_per_file,
        "transient.first_model_year": TransientSpec("130ka", "115ka").first_model_year,
        "transient.acceleration": TransientSpec("130ka", "115ka").acceleration,
    }
    keys = dict(iter_keys())
    for path, value in pairs.items():
        assert keys[path].default == value, path


def test_schema_walk_covers_every_section():
    paths = [p for p, _ in iter_keys()]
    assert len(paths) == len(set(paths))
    assert {p.split(".")[0] for p in paths} == set(SCHEMA)


def test_gas_standard_names_are_in_the_cf_table():
    # CF standard-name table bundled with compliance-checker (version 93)
    import compliance_checker

    table = Path(compliance_checker.__file__).parent / "data" / "cf-standard-name-table.xml"
    names = {e.get("id") for e in ET.parse(table).getroot().iter("entry")}
    for gas, standard_name in S.GASES.items():
        assert standard_name in names, gas


def test_gas_units_and_mole_fractions():
    # UDUNITS-2: ppm = 1e-6, ppb = 1e-9 (UDUNITS-2); 1 ppt = 1e-12 (SI prefixes)
    assert GasSpec("co2", 264.4, "ppm").mole_fraction == pytest.approx(2.644e-4, rel=1e-15)
    assert GasSpec("ch4", 597, "ppb").mole_fraction == GasSpec("ch4", 597, "1e-9").mole_fraction
    assert GasSpec("cfc11", 250, "ppt").mole_fraction == pytest.approx(2.5e-10, rel=1e-15)
    assert GasSpec("co2", 264.4, "ppm").standard_name == "mole_fraction_of_carbon_dioxide_in_air"


# --- the calendar -----------------------------------------------------------------------------
def test_anchor_day_of_the_pmip_equinox():
    # 21 March 12:00 is 79.5 days after 1 January 00:00 in a 365-day year (31 + 28 + 20 + 0.5;
    # Otto-Bliesner et al. 2017; Bonfils et al. 1998); in a 360-day year of 30-day months,
    # 30 + 30 + 20 + 0.5.
    assert CalendarSpec("noleap").anchor_day(1) == 79.5
    assert CalendarSpec("360_day").anchor_day(1) == 80.5
    assert CalendarSpec("all_leap").anchor_day(1) == 80.5
    assert CalendarSpec("proleptic_gregorian").anchor_day(2000) == 80.5  # 2000 is a leap year


def test_30_february_is_valid_in_360_day():
    # CF 1.13 Table 4.1: in 360_day every month has 30 days
    spec = CalendarSpec("360_day", date="02-30 06:00")
    assert (spec.month, spec.day, spec.hour, spec.minute) == (2, 30, 6, 0)
    with pytest.raises(FieldError, match=r"^calendar\.date: 02-30 does not exist in the noleap"):
        CalendarSpec("noleap", date="02-30 06:00")


def test_year_lengths():
    # CF 1.13 Table 4.1
    assert CalendarSpec("noleap").days_in_year(1) == 365
    assert CalendarSpec("360_day").days_in_year(1) == 360
    assert CalendarSpec("all_leap").days_in_year(1) == 366
    assert CalendarSpec("julian").days_in_year(1900) == 366  # Julian rule: every 4th year
    assert CalendarSpec("proleptic_gregorian").days_in_year(1900) == 365


def test_perihelion_anchor_needs_its_date():
    spec = CalendarSpec(anchor="perihelion", date="01-03 00:00")
    assert spec.date == "01-03 00:00"
    with pytest.raises(FieldError, match=r"^calendar\.date: required with anchor 'perihelion'"):
        CalendarSpec(anchor="perihelion")


# --- the orbit ----------------------------------------------------------------------------------
def test_fixed_orbit_in_either_convention():
    # Berger 1978: the Sun's longitude at perihelion is varpi + 180 degrees
    # (the PMIP 1950 orbit, PMIP3 design pages; tests/published_tables.py)
    e, obliquity, varpi = PMIP_1950_ORBIT
    a = OrbitSpec(
        "fixed",
        eccentricity=e,
        obliquity_deg=obliquity,
        perihelion_deg=varpi,
        perihelion_convention="perihelion_longitude",
    ).resolve(None)
    b = OrbitSpec(
        "fixed",
        eccentricity=e,
        obliquity_deg=obliquity,
        perihelion_deg=varpi + 180.0,
        perihelion_convention="sun_longitude_at_perihelion",
    ).resolve(None)
    assert float(b.perihelion_longitude_deg) == pytest.approx(varpi, abs=1e-12)
    assert float(a.perihelion_longitude_deg) == pytest.approx(varpi, abs=1e-12)


def test_idealized_lifts_the_earth_range_check():
    spec = OrbitSpec(
        "fixed",
        eccentricity=0.0,
        obliquity_deg=0.0,
        perihelion_deg=0.0,
        perihelion_convention="perihelion_longitude",
        idealized=True,
    )
    assert float(spec.resolve(None).obliquity_deg) == 0.0
    with pytest.raises(FieldError, match=r"^orbit\.obliquity_deg: 0 degrees is outside Earth"):
        OrbitSpec(
            "fixed",
            eccentricity=0.0,
            obliquity_deg=0.0,
            perihelion_deg=0.0,
            perihelion_convention="perihelion_longitude",
        )


def test_reference_orbit_is_the_1950_orbit():
    # PMIP2/PMIP3 "0 ka" (1950) orbit 0.016724, 23.446, 102.04 (PMIP3 design pages; the
    # 1950 identification from memory; tests/published_tables.py), to the digits printed
    orbit = InsolationSpec().resolve_reference_orbit()
    e, obliquity, varpi = PMIP_1950_ORBIT
    assert ExpectedValue(e, 6).agrees(float(orbit.eccentricity))
    assert ExpectedValue(obliquity, 3).agrees(float(orbit.obliquity_deg))
    assert ExpectedValue(varpi, 2).agrees(float(orbit.perihelion_longitude_deg), 360.0)


def test_expected_values_keep_their_written_digits():
    assert [
        decimals_of(t) for t in ("0.018682", "24.040", "0.87", "190", "1e-3", "2.5e-3", "1.5E+2")
    ] == [6, 3, 2, 0, 3, 4, 0]
    assert ExpectedValue(0.87, 2).tolerance == pytest.approx(0.005)
    assert ExpectedValue(0.0, 3).agrees(359.9996, period=360.0)
    assert not ExpectedValue(0.0, 3).agrees(359.9994, period=360.0)
    assert not ExpectedValue(0.87, 2).agrees(0.8751)
    spec = load_spec(CONFIGS / "protocols" / "lig127k.yaml")
    assert spec.orbit.expected.obliquity_deg == ExpectedValue(24.04, 3)  # written "24.040"


def test_table_solution_resolves_relative_to_the_spec(tmp_path):
    folder = tmp_path / "specs"
    folder.mkdir()
    # values: the PMIP 0 ka and 6 ka orbits (PMIP3 design pages; tests/published_tables.py),
    # as a two-row table
    mh = PMIP4["midHolocene"]
    (folder / "orbit.csv").write_text(
        "age_ka_bp,eccentricity,obliquity_deg,perihelion_longitude_deg\n"
        f"0,{','.join(PMIP_1950_ORBIT_DIGITS)}\n"
        f"6,{mh.eccentricity},{mh.obliquity_deg},{mh.perihelion_minus_180_deg}\n"
    )
    text = (
        "experiment: {name: t}\nepoch: 6ka\norbit: {solution: table, table: orbit.csv}\n"
        "products: [orbit]\n"
    )
    (folder / "t.yaml").write_text(text)
    spec = load_spec(folder / "t.yaml")
    assert spec.orbit.table == folder / "orbit.csv"
    assert float(spec.resolve_orbit().obliquity_deg) == pytest.approx(float(mh.obliquity_deg),
                                                                      abs=1e-12)


# --- transient runs -----------------------------------------------------------------------------
def test_transient_mapping_from_model_years_to_epochs():
    # hand-computed: 130 ka to 115 ka at 10 years of orbit per model year is 15000/10 + 1 years
    run = TransientSpec("130ka", "115ka", first_model_year=1, acceleration=10, years_per_file=100)
    assert run.n_model_years == 1501 and run.last_model_year == 1501
    np.testing.assert_array_equal(
        run.epochs_of_model_years([1, 2, 1501]), [-130000.0, -129990.0, -115000.0]
    )
    ranges = run.file_ranges()
    assert len(ranges) == 16 and ranges[0] == (1, 100) and ranges[-1] == (1501, 1501)
    forward = TransientSpec(
        "21ka", "1850CE", first_model_year=1850, acceleration=1, years_per_file=1000
    )
    assert forward.n_model_years == 20901  # 21000 BP to 100 BP (1850 CE), both included
    assert forward.epochs_of_model_years([1850])[0] == -21000.0


def test_transient_spec_from_yaml():
    text = (
        "experiment: {name: lig-to-glacial}\n"
        "transient: {start_epoch: 130ka, end_epoch: 115ka, acceleration: 10,"
        " years_per_file: 500}\n"
        "grid: {kind: zonal, resolution_deg: 5}\n"
        "products: [orbit, monthly_insolation_fixed_day]\n"
    )
    spec = parse_spec_text(text)
    assert spec.is_transient and spec.epoch is None
    assert spec.output.file_pattern == S.DEFAULT_TRANSIENT_FILE_PATTERN
    assert spec.file_name("orbit", 1, 500) == "lig-to-glacial_orbit_1-500.nc"
    orbit = spec.resolve_orbit()
    assert orbit.shape == (1501,)
    np.testing.assert_array_equal(orbit.years_from_1950[[0, -1]], [-130000.0, -115000.0])


# --- the loader --------------------------------------------------------------------------------
MINIMAL = "experiment: {name: m}\nepoch: 6ka\nproducts: [orbit]\n"


def test_minimal_spec_takes_the_defaults():
    spec = parse_spec_text(MINIMAL)
    assert spec.solar_constant_wm2 == CMIP6_PICONTROL_TSI_WM2
    assert (spec.calendar.name, spec.calendar.date, spec.calendar.model_year) == (
        "noleap",
        "03-21 12:00",
        1,
    )
    assert spec.orbit.solution == "berger1978" and spec.grid is None
    assert spec.output.file_pattern == "{experiment}_{product}.nc"
    assert spec.file_name("orbit") == "m_orbit.nc"
    assert spec.text == MINIMAL and spec.path is None


def test_spec_keeps_its_text_and_path(tmp_path):
    path = tmp_path / "m.yaml"
    path.write_text(MINIMAL)
    spec = load_spec(path)
    assert spec.path == path and spec.text == MINIMAL
    assert spec.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


def test_quoted_text_and_unquoted_factors_are_accepted():
    text = MINIMAL + (
        "greenhouse_gases: {co2: {value: 2.8e-4, units: 1}, "
        "ch4: {value: 700, units: 1e-9}}\n"
        'attributes: {comment: "no", version: "1.0", source: !!str 12}\n'
    )
    spec = parse_spec_text(text)
    assert dict(spec.attributes) == {"comment": "no", "version": "1.0", "source": "12"}
    assert spec.gas("co2").units == "1" and spec.gas("ch4").units == "1e-9"


def test_anchors_and_aliases_are_allowed():
    text = (
        "experiment: {name: a}\nepoch: 6ka\nproducts: [orbit, greenhouse_gases]\n"
        "greenhouse_gases:\n  n2o: &ppb {value: 262, units: ppb}\n  ch4: *ppb\n"
    )
    spec = parse_spec_text(text)
    assert spec.gas("ch4").value == spec.gas("n2o").value == 262


def test_spec_is_frozen():
    spec = parse_spec_text(MINIMAL)
    with pytest.raises(AttributeError):
        spec.epoch = "21ka"
    with pytest.raises(TypeError):
        spec.attributes["x"] = "y"


def test_python_api_validates_too():
    info = ExperimentInfo("py-run")
    spec = ExperimentSpec(
        info, ("orbit", "daily_insolation"), epoch="21ka", grid=GridSpec("gaussian", nlat=48)
    )
    assert spec.grid.label == "gaussian48"
    with pytest.raises(FieldError, match=r"^products\[0\]: unknown product 'orbits'"):
        ExperimentSpec(info, ("orbits",), epoch="21ka")
    with pytest.raises(FieldError, match=r"^transient: a spec has either 'epoch'"):
        ExperimentSpec(info, ("orbit",), epoch="21ka", transient=TransientSpec("130ka", "115ka"))


# --- scalar typing ------------------------------------------------------------------------------
# YAML 1.2.2 core schema (section 10.3.2) and the YAML 1.1 type repository (bool, int, float):
# the plain scalars on which the two disagree are refused where they matter.
SCALARS = [
    ("null", "null"),
    ("~", "null"),
    ("", "null"),
    ("true", "bool"),
    ("False", "bool"),
    ("0", "int"),
    ("-19", "int"),
    ("0.", "float"),
    ("-0.0", "float"),
    (".5", "float"),
    ("+12e03", "float"),
    ("1e-6", "float"),
    (".inf", "float"),
    ("-.Inf", "float"),
    (".nan", "float"),
    ("yes", "yaml11_bool"),
    ("No", "yaml11_bool"),
    ("ON", "yaml11_bool"),
    ("off", "yaml11_bool"),
    ("y", "yaml11_bool"),
    ("012", "yaml11_number"),
    ("0x1F", "yaml11_number"),
    ("1_000", "yaml11_number"),
    ("1:30", "yaml11_number"),
    ("6ka", "str"),
    ("2001-01-01", "str"),
    ("noleap", "str"),
]


@pytest.mark.parametrize(("text", "kind"), SCALARS)
def test_plain_scalar_kinds(text, kind):
    node = yaml.compose(f"k: {text}", Loader=yaml.SafeLoader).value[0][1]
    assert read_scalar(node, "x", "k").kind == kind


def test_every_dataclass_field_is_in_the_schema():
    from bcgen.spec import TimestepTableSpec

    sections = {
        "orbit": OrbitSpec,
        "calendar": CalendarSpec,
        "insolation": InsolationSpec,
        "output": OutputSpec,
        "transient": TransientSpec,
        "experiment": ExperimentInfo,
        "timestep_table": TimestepTableSpec,
    }
    keys = {p for p, _ in iter_keys()}
    for section, cls in sections.items():
        for f in fields(cls):
            assert f"{section}.{f.name}" in keys, (section, f.name)
    for f in fields(GridSpec):
        assert f"grid.{f.name}" in keys


def test_bundled_template_names_are_the_shipped_ones():
    # the names the spec accepts are exactly the templates that bcgen ships and renders
    from bcgen.render import BUNDLED, bundled_template_path

    assert set(S.BUNDLED_TEMPLATES) == set(BUNDLED)
    for name in S.BUNDLED_TEMPLATES:
        assert bundled_template_path(name).is_file(), name


@pytest.mark.parametrize(
    ("line", "key"),
    [
        ("solar_constant_wm2: 1.361", "solar_constant_wm2"),  # kW m-2 instead of W m-2
        ("greenhouse_gases: {co2: {value: 50, units: ppm}}", "greenhouse_gases.co2"),  # low
        ("greenhouse_gases: {ch4: {value: 0.7, units: ppm}}", None),  # 700 ppb: plausible
    ],
)
def test_values_in_a_probably_wrong_unit_give_a_warning(line, key):
    # Common practice: S0 of the Earth ~1361 W m-2 (Matthes et al. 2017; a faint young Sun
    # ~70 % of it), CO2 of the Phanerozoic within ~100-10000 ppm (from memory).
    import warnings

    from bcgen.errors import ImplausibleValueWarning
    from bcgen.spec import parse_spec_text

    text = f"experiment: {{name: x}}\nepoch: 6ka\n{line}\nproducts: [orbit]\n"
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        parse_spec_text(text)
    found = [w for w in caught if issubclass(w.category, ImplausibleValueWarning)]
    if key is None:
        assert not found
    else:
        assert len(found) == 1 and str(found[0].message).startswith(f"{key}: ")
