"""The table of bad specs and the exact one-line message each must give.

Each case is a small spec that differs from BASE by one mistake. The message
names the file, line and column (1-based, of the offending key or value), the
key path, what is wrong and what is expected. These messages are the
documented behaviour of the loader (issue 4, issue 8): a change to any of them
is a change to the user interface and must be made here on purpose.

Facts of the trade behind some cases: CF calendar names (CF Conventions 1.13,
section 4.4.3 and Table 4.1; the deprecated 'gregorian' is read as 'standard' with a
warning, see tests/test_calendars.py); 30 February
exists in 360_day and not in noleap (CF 1.13, Table 4.1); YAML 1.1 reads
yes/no/on/off as booleans and 012 as octal, YAML 1.2 core does not (YAML 1.2
spec, section 10.3 and the YAML 1.1 type repository); Earth's obliquity stays
within about 22-24.5 degrees and its eccentricity below about 0.07 over the last
few million years (Laskar et al. 2004, A&A 428, 261; from memory).
"""

from __future__ import annotations

import re

import pytest

from bcgen.errors import BcgenError, SpecError
from bcgen.spec import load_spec, parse_spec_text

BASE = """\
experiment:
  name: err-test
epoch: 6ka
greenhouse_gases:
  co2: {value: 264.4, units: ppm}
calendar:
  name: noleap
  date: "03-21 12:00"
grid:
  kind: zonal
  resolution_deg: 10
products: [orbit, greenhouse_gases, daily_insolation]
"""
LAST = "daily_insolation]"
ZONAL = "  kind: zonal\n  resolution_deg: 10"
DATE_LINE = '  date: "03-21 12:00"'
TIMESTEP = "timestep_table: {{timestep_minutes: {}, points: [{{lat_deg: 65, lon_deg: 0}}]{}}}\n"


def v(old: str, new: str) -> str:
    """BASE with one piece of text replaced."""
    assert old in BASE, old
    return BASE.replace(old, new, 1)


def a(extra: str) -> str:
    """BASE with lines appended."""
    return BASE + extra


def fixed(ecc="0.0167", obl="23.4", peri="102", conv="perihelion_longitude") -> str:
    """BASE with an orbit of explicit values (None leaves a value out)."""
    parts = [
        ("solution", "fixed"),
        ("eccentricity", ecc),
        ("obliquity_deg", obl),
        ("perihelion_deg", peri),
        ("perihelion_convention", conv),
    ]
    return a("orbit: {" + ", ".join(f"{k}: {x}" for k, x in parts if x is not None) + "}\n")


TRANSIENT = v("epoch: 6ka", "transient: {start_epoch: 130ka, end_epoch: 115ka}")

CASES = [
    (
        "yaml_unclosed_list",
        v(LAST, "daily_insolation"),
        "bad.yaml:13:1: YAML syntax error: expected ',' or ']', but got '<stream end>' (while "
        "parsing a flow sequence at line 12, column 11)",
    ),
    (
        "yaml_tab",
        v("  name: err-test", "\tname: err-test"),
        "bad.yaml:2:1: YAML syntax error: found character '\\t' that cannot start any token "
        "(indent with spaces, not tabs)",
    ),
    (
        "yaml_two_documents",
        a("---\nepoch: 5ka\n"),
        "bad.yaml:13:1: YAML syntax error: a spec is one YAML document; found a second one "
        "(remove the '---')",
    ),
    (
        "yaml_bad_indent",
        v("  date:", "    date:"),
        "bad.yaml:8:9: YAML syntax error: mapping values are not allowed here",
    ),
    (
        "yaml_unclosed_quote",
        v('"03-21 12:00"', '"03-21 12:00'),
        "bad.yaml:13:1: YAML syntax error: found unexpected end of stream (while scanning a "
        "quoted scalar at line 8, column 9)",
    ),
    (
        "yaml_nul_char",
        v("err-test", "err\x00test"),
        "bad.yaml:2:12: YAML syntax error: character U+0000 is not allowed in a YAML file",
    ),
    (
        "empty",
        "",
        "bad.yaml: the spec is empty; expected a mapping with at least 'experiment', "
        "'products' and 'epoch' or 'transient'",
    ),
    (
        "comments_only",
        "# nothing here\n",
        "bad.yaml: the spec is empty; expected a mapping with at least 'experiment', "
        "'products' and 'epoch' or 'transient'",
    ),
    (
        "top_level_list",
        "- experiment\n- epoch\n",
        "bad.yaml:1:1: a spec is a mapping of keys (experiment:, epoch:, products:, ...), got "
        "a list",
    ),
    (
        "merge_key",
        a("output: {<<: {directory: x}}\n"),
        "bad.yaml:13:10: output: merge keys ('<<') are not supported in a spec; write the keys out",
    ),
    (
        "duplicate_key",
        v("  date:", "  name: noleap\n  date:"),
        "bad.yaml:8:3: calendar.name: duplicate key (first given on line 7)",
    ),
    (
        "explicit_tag",
        v("epoch: 6ka", "epoch: !!python/object 6ka"),
        "bad.yaml:3:8: epoch: explicit YAML tag '!!python/object' is not supported in a spec; "
        "remove it",
    ),
    (
        "unknown_top_key",
        v("epoch: 6ka", "epoc: 6ka"),
        "bad.yaml:3:1: epoc: unknown key; expected one of experiment, epoch, transient, orbit, "
        "solar_constant_wm2, solar_constant_scaling, greenhouse_gases, calendar, grid, "
        "insolation, products, timestep_table, templates, attribute_templates, geography, "
        "output, attributes (did you mean 'epoch'?)",
    ),
    (
        "unknown_calendar_key",
        v("  date:", "  anchr: perihelion\n  date:"),
        "bad.yaml:8:3: calendar.anchr: unknown key; expected one of name, anchor, date, "
        "model_year (did you mean 'anchor'?)",
    ),
    (
        "unknown_key_for_grid_kind",
        v("  resolution_deg: 10", "  nlat: 48"),
        "bad.yaml:11:3: grid.nlat: unknown key for kind 'zonal' (it belongs to kind gaussian); "
        "expected one of kind, resolution_deg, latitudes_deg",
    ),
    (
        "unknown_gas",
        v("  co2:", "  c02:"),
        "bad.yaml:5:3: greenhouse_gases.c02: unknown gas; expected one of co2, ch4, n2o, "
        "cfc11, cfc12, cfc113, cfc114, cfc115, hcfc22, hcfc141b, hcfc142b, hfc23, hfc32, "
        "hfc125, hfc134a, hfc143a, hfc152a, hfc227ea, hfc245fa, sf6, nf3, cf4, pfc116, ccl4, "
        "ch3cl, ch3br, halon1211, halon1301, halon2402 (did you mean 'co2'?)",
    ),
    (
        "epoch_bare_number",
        v("epoch: 6ka", "epoch: 6000"),
        "bad.yaml:3:8: epoch: expected an epoch such as '6ka', '21000 BP' or '1850CE', got the "
        "number 6000 (a bare number is ambiguous: years BP? CE? a model year?)",
    ),
    (
        "epoch_quoted_bare_number",
        v("epoch: 6ka", 'epoch: "6000"'),
        "bad.yaml:3:8: epoch: cannot read epoch '6000': a bare number is ambiguous (years BP? "
        "CE? a model year?); accepted forms: '6ka' or '6 ka BP' (thousands of years before "
        "1950 CE), '3.2Ma' (millions of years BP), '21000 BP' (years before 1950 CE), '1850CE' "
        "or '1850 AD', '4050 BCE' or '4050 BC', and ranges 'START..END/STEP' such as "
        "'130ka..115ka/1ka'",
    ),
    (
        "epoch_unreadable",
        v("epoch: 6ka", "epoch: 6 parsecs"),
        "bad.yaml:3:8: epoch: cannot read epoch '6 parsecs': not an epoch; accepted forms: "
        "'6ka' or '6 ka BP' (thousands of years before 1950 CE), '3.2Ma' (millions of years "
        "BP), '21000 BP' (years before 1950 CE), '1850CE' or '1850 AD', '4050 BCE' or '4050 "
        "BC', and ranges 'START..END/STEP' such as '130ka..115ka/1ka'",
    ),
    (
        "number_quoted",
        a('solar_constant_wm2: "1360.747"\n'),
        "bad.yaml:13:21: solar_constant_wm2: expected a number, got the string '1360.747' "
        "(remove the quotes)",
    ),
    (
        "number_text",
        a("solar_constant_wm2: high\n"),
        "bad.yaml:13:21: solar_constant_wm2: expected a number, got the string 'high'",
    ),
    (
        "number_yaml11_grouping",
        v("value: 264.4", "value: 2_644"),
        "bad.yaml:5:16: greenhouse_gases.co2.value: '2_644' is read differently by YAML 1.1 "
        "and 1.2 readers (octal, hexadecimal, '_' or ':' forms); write a plain decimal number",
    ),
    (
        "integer_fraction",
        a("output: {compression_level: 4.5}\n"),
        "bad.yaml:13:29: output.compression_level: expected a whole number, got 4.5",
    ),
    (
        "integer_leading_zero",
        v("epoch: 6ka", "transient: {start_epoch: 130ka, end_epoch: 115ka, first_model_year: 012}"),
        "bad.yaml:3:69: transient.first_model_year: '012' is read differently by YAML 1.1 and "
        "1.2 readers (octal, hexadecimal, '_' or ':' forms); write a plain decimal number",
    ),
    (
        "boolean_yes",
        a("output: {shuffle: yes}\n"),
        "bad.yaml:13:19: output.shuffle: expected true or false, got 'yes' (YAML 1.1 readers "
        "take unquoted yes/no/on/off/y/n for booleans and YAML 1.2 readers for strings; write "
        "true or false)",
    ),
    (
        "boolean_string",
        a('output: {shuffle: "true"}\n'),
        "bad.yaml:13:19: output.shuffle: expected true or false, got the string 'true'",
    ),
    (
        "string_yaml11_no",
        a("attributes: {comment: no}\n"),
        "bad.yaml:13:23: attributes.comment: 'no' is ambiguous: YAML 1.1 readers take unquoted "
        'yes/no/on/off/y/n for booleans and YAML 1.2 readers for strings; write "no" (quoted)',
    ),
    (
        "string_number",
        v("name: err-test", "name: 1.0"),
        "bad.yaml:2:9: experiment.name: expected a string, got the number 1.0; quote it if you "
        "mean the text",
    ),
    (
        "string_null",
        a("attributes: {comment: }\n"),
        "bad.yaml:13:22: attributes.comment: expected a string, got nothing (null)",
    ),
    (
        "name_with_space",
        v("name: err-test", "name: my run"),
        "bad.yaml:2:9: experiment.name: 'my run' is not a usable name; expected letters, "
        "digits, '_', '.' and '-' only (it goes into file names)",
    ),
    (
        "list_expected",
        v("products: [orbit, greenhouse_gases, daily_insolation]", "products: orbit"),
        "bad.yaml:12:11: products: expected a list, got the string 'orbit' (write [orbit])",
    ),
    (
        "list_empty",
        v("products: [orbit, greenhouse_gases, daily_insolation]", "products: []"),
        "bad.yaml:12:11: products: expected at least one item, got an empty list",
    ),
    (
        "mapping_expected",
        v("experiment:\n  name: err-test", "experiment: err-test"),
        "bad.yaml:1:13: experiment: expected a mapping of keys, got the string 'err-test'",
    ),
    (
        "missing_experiment_name",
        v("  name: err-test", "  description: no name"),
        "bad.yaml:2:3: experiment: missing required key 'name' (short name used in file names "
        "and attributes: letters, digits, '_', '.', '-')",
    ),
    (
        "missing_products",
        v("products: [orbit, greenhouse_gases, daily_insolation]\n", ""),
        "bad.yaml:1:1: missing required key 'products' (what to produce: orbit, "
        "solar_constant, greenhouse_gases, daily_insolation, monthly_insolation_fixed_day, "
        "monthly_insolation_fixed_angle, month_table, timestep_table, templates)",
    ),
    (
        "missing_grid_kind",
        v("  kind: zonal\n", ""),
        "bad.yaml:10:3: grid: missing required key 'kind' (one of regular, gaussian, zonal, file)",
    ),
    (
        "eccentricity_above_one",
        fixed(ecc="1.2"),
        "bad.yaml:13:40: orbit.eccentricity: expected a number in [0, 1), got 1.2",
    ),
    (
        "eccentricity_not_earth",
        fixed(ecc="0.2"),
        "bad.yaml:13:40: orbit.eccentricity: 0.2 is outside Earth's range (below about 0.07 in "
        "the last few million years); set 'idealized: true' in orbit for a deliberately "
        "non-Earth orbit",
    ),
    (
        "obliquity_negative",
        fixed(obl="-3"),
        "bad.yaml:13:63: orbit.obliquity_deg: expected a number in [0, 90], got -3",
    ),
    (
        "obliquity_in_radians",
        fixed(obl="0.4091"),
        "bad.yaml:13:63: orbit.obliquity_deg: 0.4091 degrees is outside Earth's range (about "
        "22-24.5 degrees in the last few million years); 0.4091 looks like radians (23.44 "
        "degrees); set 'idealized: true' in orbit for a deliberately non-Earth orbit",
    ),
    (
        "perihelion_out_of_range",
        fixed(peri="360"),
        "bad.yaml:13:85: orbit.perihelion_deg: expected a number in [0, 360), got 360",
    ),
    (
        "perihelion_convention_unknown",
        fixed(conv="perihelion"),
        "bad.yaml:13:113: orbit.perihelion_convention: unknown perihelion convention "
        "'perihelion'; expected one of perihelion_longitude, sun_longitude_at_perihelion (did "
        "you mean 'perihelion_longitude'?)",
    ),
    (
        "latitude_beyond_90",
        v("  resolution_deg: 10", "  latitudes_deg: [-95, 0, 45]"),
        "bad.yaml:11:19: grid.latitudes_deg[0]: expected a number in [-90, 90], got -95",
    ),
    (
        "latitudes_not_monotonic",
        v("  resolution_deg: 10", "  latitudes_deg: [-45, 0, 0, 45]"),
        "bad.yaml:11:27: grid.latitudes_deg[2]: latitudes must be strictly increasing or "
        "strictly decreasing; 0 after 0",
    ),
    (
        "longitudes_not_increasing",
        v(ZONAL, "  kind: regular\n  latitudes_deg: [0]\n  longitudes_deg: [0, 90, 45]"),
        "bad.yaml:12:27: grid.longitudes_deg[2]: longitudes must be strictly increasing; 45 "
        "after 90",
    ),
    (
        "grid_step_not_dividing",
        v("resolution_deg: 10", "resolution_deg: 7"),
        "bad.yaml:11:19: grid.resolution_deg: 7 degrees does not divide 180 evenly; expected a "
        "step such as 0.5, 1, 1.25, 2, 2.5, 5 or 10",
    ),
    (
        "grid_two_latitude_sources",
        v(ZONAL, "  kind: regular\n  resolution_deg: 2\n  lat_resolution_deg: 1"),
        "bad.yaml:12:23: grid.lat_resolution_deg: conflicts with resolution_deg: give the "
        "latitudes one way only",
    ),
    (
        "grid_kind_unknown",
        v("kind: zonal", "kind: zonl"),
        "bad.yaml:10:9: grid.kind: unknown grid kind 'zonl'; expected one of regular, "
        "gaussian, zonal, file (did you mean 'zonal'?)",
    ),
    (
        "gaussian_odd",
        v(ZONAL, "  kind: gaussian\n  nlat: 47"),
        "bad.yaml:11:9: grid.nlat: expected an even whole number from 2, got 47",
    ),
    (
        "calendar_unknown",
        v("name: noleap", "name: noleep"),
        "bad.yaml:7:9: calendar.name: unknown calendar 'noleep'; expected one of noleap, "
        "365_day, 360_day, all_leap, 366_day, proleptic_gregorian, standard, julian (did you "
        "mean 'noleap'?)",
    ),
    (
        "calendar_date_missing_in_noleap",
        v('"03-21 12:00"', '"02-30 12:00"'),
        "bad.yaml:8:9: calendar.date: 02-30 does not exist in the noleap calendar (month 02 "
        "has 28 days there)",
    ),
    (
        "calendar_leap_day",
        v(
            'name: noleap\n  date: "03-21 12:00"',
            'name: proleptic_gregorian\n  date: "02-29 12:00"',
        ),
        "bad.yaml:8:9: calendar.date: 02-29 exists only in leap years of the "
        "proleptic_gregorian calendar; the anchor date must exist in every year",
    ),
    (
        "calendar_date_format",
        v('"03-21 12:00"', '"21 March"'),
        "bad.yaml:8:9: calendar.date: '21 March' is not a date and time; expected 'MM-DD "
        "HH:MM' such as '03-21 12:00' (quoted)",
    ),
    (
        "calendar_date_without_time",
        v('"03-21 12:00"', '"03-21"'),
        "bad.yaml:8:9: calendar.date: '03-21' is not a date and time; expected 'MM-DD HH:MM' "
        "such as '03-21 12:00' (quoted)",
    ),
    (
        "calendar_time_of_day",
        v('"03-21 12:00"', '"03-21 24:00"'),
        "bad.yaml:8:9: calendar.date: '03-21 24:00' has no such time of day; expected HH:MM "
        "from 00:00 to 23:59",
    ),
    (
        "perihelion_anchor_without_date",
        v('  date: "03-21 12:00"', "  anchor: perihelion"),
        "bad.yaml:7:3: calendar.date: required with anchor 'perihelion': the model date and "
        "time of the perihelion passage, as 'MM-DD HH:MM' (e.g. '01-03 00:00')",
    ),
    (
        "solar_constant_negative",
        a("solar_constant_wm2: -5\n"),
        "bad.yaml:13:21: solar_constant_wm2: expected a number in (0, 5000], got -5",
    ),
    (
        "gas_units_unknown",
        v("units: ppm", "units: ppmv"),
        "bad.yaml:5:30: greenhouse_gases.co2.units: unknown units 'ppmv'; expected one of ppm, "
        "ppb, ppt, 1e-6, 1e-9, 1e-12, 1 (did you mean 'ppm'?)",
    ),
    (
        "gas_negative",
        v("value: 264.4", "value: -1"),
        "bad.yaml:5:16: greenhouse_gases.co2.value: expected a number in [0, inf), got -1",
    ),
    (
        "gas_mole_fraction_above_one",
        v("value: 264.4, units: ppm", "value: 2, units: '1'"),
        "bad.yaml:5:16: greenhouse_gases.co2.value: 2 with units '1' is a mole fraction of 2, "
        "which cannot exceed 1",
    ),
    (
        "timestep_not_dividing_day",
        a(TIMESTEP.format(7, "")).replace(LAST, "daily_insolation, timestep_table]"),
        "bad.yaml:13:36: timestep_table.timestep_minutes: 7 minutes does not divide the day "
        "(1440 minutes) evenly; expected a divisor such as 10, 15, 20, 30 or 60",
    ),
    (
        "timestep_day_past_year",
        a(TIMESTEP.format(30, ", days: [1, 366]")).replace(
            LAST, "daily_insolation, timestep_table]"
        ),
        "bad.yaml:13:87: timestep_table.days[1]: day 366 is past the end of the noleap year "
        "(365 days)",
    ),
    (
        "epoch_and_transient",
        a("transient: {start_epoch: 130ka, end_epoch: 115ka}\n"),
        "bad.yaml:13:12: transient: a spec has either 'epoch' (a time slice) or 'transient' (a "
        "transient run), not both",
    ),
    (
        "neither_epoch_nor_transient",
        v("epoch: 6ka\n", ""),
        "bad.yaml:1:1: the spec needs either 'epoch' (a time slice, e.g. epoch: 6ka) or a "
        "'transient' section",
    ),
    (
        "fixed_value_with_berger",
        a("orbit: {solution: berger1978, eccentricity: 0.0187}\n"),
        "bad.yaml:13:45: orbit.eccentricity: explicit values go with solution 'fixed', not "
        "'berger1978'; remove eccentricity or write solution: fixed",
    ),
    (
        "table_without_path",
        a("orbit: {solution: table}\n"),
        "bad.yaml:13:8: orbit.table: solution 'table' needs the path of the table in orbit.table",
    ),
    (
        "fixed_without_convention",
        fixed(conv=None),
        "bad.yaml:13:8: orbit.perihelion_convention: required with solution 'fixed' (give "
        "eccentricity, obliquity_deg, perihelion_deg and perihelion_convention)",
    ),
    (
        "product_needs_grid",
        v("grid:\n  kind: zonal\n  resolution_deg: 10\n", ""),
        "bad.yaml:9:37: products[2]: 'daily_insolation' needs a grid; add a 'grid' section, "
        "e.g. grid: {kind: zonal, resolution_deg: 1.0}",
    ),
    (
        "product_unknown",
        v(LAST, "daily_insolaton]"),
        "bad.yaml:12:37: products[2]: unknown product 'daily_insolaton'; expected one of "
        "orbit, solar_constant, greenhouse_gases, daily_insolation, "
        "monthly_insolation_fixed_day, monthly_insolation_fixed_angle, month_table, "
        "timestep_table, templates (did you mean 'daily_insolation'?)",
    ),
    (
        "product_twice",
        v("[orbit, greenhouse_gases", "[orbit, orbit, greenhouse_gases"),
        "bad.yaml:12:19: products[1]: 'orbit' is listed twice",
    ),
    (
        "section_without_product",
        a(TIMESTEP.format(30, "")),
        "bad.yaml:13:17: timestep_table: given, but 'timestep_table' is not in products; add "
        "it to products or remove this section",
    ),
    (
        "product_without_section",
        v(LAST, "daily_insolation, templates]"),
        "bad.yaml:12:55: products[3]: 'templates' needs a 'templates' section",
    ),
    (
        "gases_product_without_gases",
        v("greenhouse_gases:\n  co2: {value: 264.4, units: ppm}\n", ""),
        "bad.yaml:10:19: products[1]: 'greenhouse_gases' needs gas values: add a "
        "'greenhouse_gases' section",
    ),
    (
        "transient_time_slice_product",
        TRANSIENT.replace(LAST, "timestep_table]"),
        "bad.yaml:12:37: products[2]: 'timestep_table' is a time-slice product; a transient run "
        "can produce orbit, greenhouse_gases, daily_insolation, monthly_insolation_fixed_day, "
        "monthly_insolation_fixed_angle, month_table",
    ),
    (
        "transient_with_model_year",
        TRANSIENT.replace(DATE_LINE, "  model_year: 5"),
        "bad.yaml:8:15: calendar.model_year: a transient run starts at "
        "transient.first_model_year; remove calendar.model_year",
    ),
    (
        # cftime fails with an OverflowError beyond a C long; bcgen bounds model years at 1e6.
        "model_year_too_large",
        v(DATE_LINE, DATE_LINE + "\n  model_year: 99999999999999999999"),
        "bad.yaml:9:15: calendar.model_year: expected a whole number in [1, 1e+06], got "
        "99999999999999999999",
    ),
    (
        "first_model_year_too_large",
        v("epoch: 6ka", "transient: {start_epoch: 130ka, end_epoch: 115ka, "
          "first_model_year: 1000001}"),
        "bad.yaml:3:69: transient.first_model_year: expected a whole number in [1, 1e+06], got "
        "1000001",
    ),
    (
        "epoch_bare_years",
        v("epoch: 6ka", "epoch: 1850 yr"),
        "bad.yaml:3:8: epoch: cannot read epoch '1850 yr': a number of years alone is a "
        "duration, as ambiguous as a bare number (write '1850 yr BP' for years before 1950 CE, "
        "or a CE year); accepted forms: '6ka' or '6 ka BP' (thousands of years before 1950 CE), "
        "'3.2Ma' (millions of years BP), '21000 BP' (years before 1950 CE), '1850CE' or "
        "'1850 AD', '4050 BCE' or '4050 BC', and ranges 'START..END/STEP' such as "
        "'130ka..115ka/1ka'",
    ),
    (
        "epoch_absurd",
        v("epoch: 6ka", "epoch: 1e306ka"),
        "bad.yaml:3:8: epoch: cannot read epoch '1e306ka': the epoch is more than 1,000,000,000 "
        "years from 1950 CE; accepted forms: '6ka' or '6 ka BP' (thousands of years before "
        "1950 CE), '3.2Ma' (millions of years BP), '21000 BP' (years before 1950 CE), '1850CE' "
        "or '1850 AD', '4050 BCE' or '4050 BC'",
    ),
    (
        "transient_expected",
        (TRANSIENT + "orbit: {expected: {source: x, eccentricity: 0.039}}\n"),
        "bad.yaml:13:19: orbit.expected: published values are checked for a time slice; a "
        "transient run spans many epochs",
    ),
    (
        "transient_acceleration",
        v("epoch: 6ka", "transient: {start_epoch: 130ka, end_epoch: 115ka, acceleration: 7}"),
        "bad.yaml:3:65: transient.acceleration: the run spans 15000 years, which is not a "
        "multiple of the acceleration 7 (each model year advances the orbit by that many years)",
    ),
    (
        "transient_same_epochs",
        v("epoch: 6ka", "transient: {start_epoch: 6ka, end_epoch: 6000 BP}"),
        "bad.yaml:3:42: transient.end_epoch: the run starts and ends at the same epoch; for "
        "one epoch write a time slice with 'epoch'",
    ),
    (
        "transient_pattern_without_year",
        (TRANSIENT + "output: {file_pattern: '{experiment}_{product}.nc'}\n"),
        "bad.yaml:13:24: output.file_pattern: '{experiment}_{product}.nc' has no {first_year}: "
        "the files of a transient run would share one name",
    ),
    (
        "expected_without_convention",
        a("orbit: {expected: {source: x, perihelion_deg: 0.87}}\n"),
        "bad.yaml:13:19: orbit.expected.perihelion_convention: perihelion_deg and "
        "perihelion_convention go together; add perihelion_convention (perihelion_longitude, "
        "sun_longitude_at_perihelion)",
    ),
    (
        "expected_without_source",
        a("orbit: {expected: {eccentricity: 0.018682}}\n"),
        "bad.yaml:13:19: orbit.expected: missing required key 'source' (where the values are "
        "published)",
    ),
    (
        "file_pattern_unknown_placeholder",
        a("output: {file_pattern: '{expt}_{product}.nc'}\n"),
        "bad.yaml:13:24: output.file_pattern: unknown placeholder '{expt}'; expected one of "
        "experiment, product, epoch, calendar, grid, first_year, last_year",
    ),
    (
        "file_pattern_without_product",
        a("output: {file_pattern: '{experiment}.nc'}\n"),
        "bad.yaml:13:24: output.file_pattern: '{experiment}.nc' has no {product}: every "
        "product would get the same file name",
    ),
    (
        "file_pattern_folder",
        a("output: {file_pattern: 'a/{experiment}_{product}.nc'}\n"),
        "bad.yaml:13:24: output.file_pattern: 'a/{experiment}_{product}.nc' is a file name and "
        "cannot contain a folder; set output.directory for the folder",
    ),
    (
        "file_pattern_suffix",
        a("output: {file_pattern: '{experiment}_{product}.txt'}\n"),
        "bad.yaml:13:24: output.file_pattern: '{experiment}_{product}.txt' must end with '.nc' "
        "(it names NetCDF files)",
    ),
    (
        "file_pattern_brace",
        a("output: {file_pattern: '{experiment_{product}.nc'}\n"),
        "bad.yaml:13:24: output.file_pattern: '{experiment_{product}.nc' is not a valid "
        "pattern (unexpected '{' in field name); write placeholders as {name} and a literal "
        "brace as {{ or }}",
    ),
    (
        "reserved_attribute",
        a("attributes: {Conventions: CF-1.11}\n"),
        "bad.yaml:13:27: attributes.Conventions: 'Conventions' is written by bcgen itself; "
        "remove it",
    ),
    (
        "attribute_name",
        a("attributes: {2nd-contact: someone}\n"),
        "bad.yaml:13:14: attributes.2nd-contact: '2nd-contact' is not a valid attribute name; "
        "expected letters, digits and '_', starting with a letter",
    ),
    (
        "template_unknown",
        a("templates: [namelst]\n").replace(LAST, "daily_insolation, templates]"),
        "bad.yaml:13:13: templates[0]: unknown bundled template 'namelst'; expected one of "
        "namelist, env, summary_json, cmip_attributes (did you mean 'namelist'?), or the path "
        "of your own template",
    ),
    (
        "daily_method_unknown",
        a("insolation: {daily_method: noon}\n"),
        "bad.yaml:13:28: insolation.daily_method: unknown daily method 'noon'; expected one of "
        "midday, day_average",
    ),
    (
        "reference_epoch_number",
        a("insolation: {reference_epoch: 1950}\n"),
        "bad.yaml:13:31: insolation.reference_epoch: expected an epoch such as '6ka', '21000 "
        "BP' or '1850CE', got the number 1950 (a bare number is ambiguous: years BP? CE? a "
        "model year?)",
    ),
]


def test_base_is_valid():
    spec = parse_spec_text(BASE, "bad.yaml")
    assert spec.epoch == "6ka"


def test_there_are_enough_cases():
    # issue 8 asks for a corpus of at least 40 bad inputs; this table is the spec part of it
    assert len(CASES) >= 40
    assert len({case[0] for case in CASES}) == len(CASES)


@pytest.mark.parametrize(
    ("text", "message"), [case[1:] for case in CASES], ids=[case[0] for case in CASES]
)
def test_bad_spec_gives_its_message(text, message):
    with pytest.raises(SpecError, match="^" + re.escape(message) + "$"):
        parse_spec_text(text, "bad.yaml")


@pytest.mark.parametrize("message", [case[2] for case in CASES], ids=[c[0] for c in CASES])
def test_messages_are_one_line_and_name_the_place(message):
    assert len(message.splitlines()) == 1
    assert re.match(r"^bad\.yaml(:\d+:\d+)?: ", message)


# --- cases that need files ---------------------------------------------------------------------
def _write(tmp_path, text, name="spec.yaml"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_missing_spec_file(tmp_path):
    path = tmp_path / "nope.yaml"
    with pytest.raises(SpecError, match="^" + re.escape(f"{path}: spec file not found") + "$"):
        load_spec(path)


def test_spec_path_is_a_folder(tmp_path):
    with pytest.raises(
        SpecError, match=re.escape(f"{tmp_path}: is a folder; expected a YAML spec file")
    ):
        load_spec(tmp_path)


def test_spec_not_utf8(tmp_path):
    path = tmp_path / "latin1.yaml"
    path.write_bytes(BASE.replace("err-test", "caf\xe9").encode("latin-1"))
    # "experiment:\n" is 12 bytes and "  name: caf" 11 more: the bad byte is number 23 (from 0)
    with pytest.raises(
        SpecError,
        match=re.escape(f"{path}:2: not UTF-8 text (byte 23 of the file); save the spec as UTF-8"),
    ):
        load_spec(path)


def test_missing_orbit_table_names_where_it_looked(tmp_path):
    path = _write(tmp_path, a("orbit: {solution: table, table: orbit.csv}\n"))
    expected = f"{path}:13:33: orbit.table: orbit table {tmp_path / 'orbit.csv'} not found"
    with pytest.raises(SpecError, match="^" + re.escape(expected) + "$"):
        load_spec(path)


def test_orbit_table_without_obliquity_column(tmp_path):
    (tmp_path / "orbit.csv").write_text(
        "age_ka_bp,eccentricity,perihelion_longitude_deg\n0,0.0167,102\n10,0.0194,295\n"
    )
    path = _write(tmp_path, a("orbit: {solution: table, table: orbit.csv}\n"))
    # the wording after the key path is the orbit-table module's own
    with pytest.raises(
        SpecError, match="^" + re.escape(f"{path}:13:33: orbit.table: ") + ".*obliquity"
    ):
        load_spec(path)


def test_epoch_outside_the_orbit_table(tmp_path):
    (tmp_path / "orbit.csv").write_text(
        "age_ka_bp,eccentricity,obliquity_deg,perihelion_longitude_deg\n"
        "0,0.0167,23.45,102\n5,0.0187,24.1,10\n"
    )
    path = _write(tmp_path, a("orbit: {solution: table, table: orbit.csv}\n"))
    # the wording after the key path is the orbit-table module's own
    with pytest.raises(SpecError, match="^" + re.escape(f"{path}:3:8: epoch: ") + ".*outside"):
        load_spec(path)


def test_missing_user_template(tmp_path):
    path = _write(
        tmp_path,
        a("templates: [my/model.nml.tmpl]\n").replace(LAST, "daily_insolation, templates]"),
    )
    missing = tmp_path / "my" / "model.nml.tmpl"
    expected = f"{path}:13:13: templates[0]: template {missing} not found"
    with pytest.raises(SpecError, match="^" + re.escape(expected) + "$"):
        load_spec(path)


def test_missing_grid_file(tmp_path):
    path = _write(tmp_path, v(ZONAL, "  kind: file\n  path: model_grid.nc"))
    missing = tmp_path / "model_grid.nc"
    expected = f"{path}:11:9: grid.path: grid file {missing} not found"
    with pytest.raises(SpecError, match="^" + re.escape(expected) + "$"):
        load_spec(path)


def test_missing_greenhouse_gas_table(tmp_path):
    text = TRANSIENT.replace("115ka}", "115ka, greenhouse_gas_table: ghg.csv}").replace(
        "greenhouse_gases:\n  co2: {value: 264.4, units: ppm}\n", ""
    )
    path = _write(tmp_path, text)
    missing = tmp_path / "ghg.csv"
    expected = (
        f"{path}:3:73: transient.greenhouse_gas_table: greenhouse-gas table {missing} not found"
    )
    with pytest.raises(SpecError, match="^" + re.escape(expected) + "$"):
        load_spec(path)


def test_spec_errors_are_bcgen_errors_with_exit_status_2():
    with pytest.raises(BcgenError) as info:
        parse_spec_text(v("epoch: 6ka", "epoch: 6000"), "bad.yaml")
    assert info.value.exit_status == 2
