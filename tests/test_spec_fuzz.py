"""Fuzzing the spec loader: whatever the input, it returns a spec or raises SpecError.

Three kinds of input: arbitrary text, arbitrary YAML documents, and random
mutations of the valid specs in configs/ (textual and structural). Any other
exception (TypeError, KeyError, RecursionError, a YAML error ...) is a bug.
The property is the loader's contract (common practice for input parsers);
no published value is involved.
"""

from __future__ import annotations

import copy
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bcgen.errors import SpecError
from bcgen.spec import ExperimentSpec, parse_spec_text

# Random mutations often give values in an implausible unit; their warning is expected here
# (tests/test_spec.py checks it on its own).
pytestmark = pytest.mark.filterwarnings("ignore::bcgen.errors.ImplausibleValueWarning")

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
VALID_TEXTS = [p.read_text() for p in sorted(CONFIGS.rglob("*.yaml"))]
VALID_DATA = [yaml.safe_load(t) for t in VALID_TEXTS]

FUZZ = settings(
    max_examples=150,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)


def _load_or_spec_error(text: str) -> None:
    try:
        spec = parse_spec_text(text, "fuzz.yaml", base_dir=CONFIGS)
    except SpecError as exc:
        message = str(exc)
        assert message.startswith("fuzz.yaml"), message
        assert len(message.splitlines()) == 1, message
    else:
        assert isinstance(spec, ExperimentSpec)


# --- arbitrary text ------------------------------------------------------------------------
@FUZZ
@given(st.text(max_size=300))
def test_arbitrary_text(text):
    _load_or_spec_error(text)


YAML_PUNCTUATION = st.sampled_from(
    list(":-[]{},#&*!|>'\"%@`?\t\n ")
    + [
        "---",
        "...",
        "<<: *a",
        "&a",
        "!!str",
        "!!python/object",
        "\ufeff",
        "\x00",
        "\x85",
        "key: value\n",
    ]
)


@FUZZ
@given(st.lists(st.one_of(YAML_PUNCTUATION, st.text(max_size=5)), max_size=60))
def test_yaml_punctuation_soup(parts):
    _load_or_spec_error("".join(parts))


# --- arbitrary YAML documents --------------------------------------------------------------
SCALARS = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
    st.sampled_from(
        [
            "yes",
            "no",
            "on",
            "off",
            "6ka",
            "1850CE",
            "noleap",
            "02-30 12:00",
            "{experiment}_{product}.nc",
            "{bad}",
            "010",
            "1_000",
            "0x1F",
            "1:30",
            "2001-01-01",
            ".inf",
            "-.inf",
            ".nan",
            "~",
            "1e-6",
            "ppm",
            "zonal",
            "berger1978",
            "fixed",
            "table",
            "orbit",
            "templates",
            "namelist",
        ]
    ),
)
KEYS = st.one_of(
    st.sampled_from(
        [
            "experiment",
            "name",
            "epoch",
            "transient",
            "orbit",
            "solution",
            "calendar",
            "grid",
            "kind",
            "products",
            "output",
            "attributes",
            "greenhouse_gases",
            "co2",
            "value",
            "units",
            "expected",
            "date",
            "timestep_table",
            "points",
            "templates",
            "resolution_deg",
            "latitudes_deg",
            "start_epoch",
            "end_epoch",
            "acceleration",
        ]
    ),
    st.text(max_size=8),
)
DOCUMENTS = st.recursive(
    SCALARS,
    lambda children: st.one_of(
        st.lists(children, max_size=4), st.dictionaries(KEYS, children, max_size=5)
    ),
    max_leaves=25,
)


@FUZZ
@given(DOCUMENTS, st.booleans())
def test_arbitrary_yaml_documents(document, flow):
    _load_or_spec_error(yaml.safe_dump(document, default_flow_style=flow, allow_unicode=True))


# --- mutations of valid specs --------------------------------------------------------------
@FUZZ
@given(st.sampled_from(range(len(VALID_TEXTS))), st.data())
def test_textual_mutations_of_valid_specs(index, data):
    lines = VALID_TEXTS[index].splitlines(keepends=True)
    for _ in range(data.draw(st.integers(1, 3))):
        if not lines:
            break
        i = data.draw(st.integers(0, len(lines) - 1))
        action = data.draw(
            st.sampled_from(
                ["delete", "duplicate", "replace", "insert", "indent", "dedent", "truncate"]
            )
        )
        if action == "delete":
            del lines[i]
        elif action == "duplicate":
            lines.insert(i, lines[i])
        elif action == "indent":
            lines[i] = "  " + lines[i]
        elif action == "dedent":
            lines[i] = lines[i].lstrip()
        elif action == "truncate":
            cut = data.draw(st.integers(0, len(lines[i])))
            lines[i] = lines[i][:cut]
        else:
            line = lines[i]
            start = data.draw(st.integers(0, len(line)))
            stop = data.draw(st.integers(start, len(line)))
            junk = data.draw(st.one_of(YAML_PUNCTUATION, st.text(max_size=6), SCALARS.map(str)))
            lines[i] = line[:start] + junk + (line[stop:] if action == "replace" else line[start:])
    _load_or_spec_error("".join(lines))


def _paths(node, prefix=()):
    yield prefix
    if isinstance(node, dict):
        for key, value in node.items():
            yield from _paths(value, (*prefix, key))
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _paths(value, (*prefix, i))


@FUZZ
@given(st.sampled_from(range(len(VALID_DATA))), st.data())
def test_structural_mutations_of_valid_specs(index, data):
    document = copy.deepcopy(VALID_DATA[index])
    for _ in range(data.draw(st.integers(1, 3))):
        paths = [p for p in _paths(document) if p]
        if not paths:
            break
        path = data.draw(st.sampled_from(paths))
        parent = document
        for part in path[:-1]:
            parent = parent[part]
        action = data.draw(st.sampled_from(["set", "delete", "add_key", "wrap"]))
        if action == "set":
            parent[path[-1]] = data.draw(DOCUMENTS)
        elif action == "delete":
            del parent[path[-1]]
        elif action == "wrap":
            parent[path[-1]] = [parent[path[-1]]]
        elif isinstance(parent, dict):
            parent[data.draw(KEYS)] = data.draw(SCALARS)
    _load_or_spec_error(yaml.safe_dump(document, allow_unicode=True))


LINE_BREAKS = st.builds(
    lambda a, brk, b: a + brk + b,
    st.text(max_size=4),
    st.sampled_from(["\n", "\r", "\x85", "\u2028", "\u2029", "\x0b", "\x0c"]),
    st.text(max_size=4),
)


@FUZZ
@given(st.sampled_from(range(len(VALID_DATA))), st.data())
def test_values_and_keys_with_line_breaks_give_one_line_messages(index, data):
    document = copy.deepcopy(VALID_DATA[index])
    path = data.draw(st.sampled_from([p for p in _paths(document) if p]))
    parent = document
    for part in path[:-1]:
        parent = parent[part]
    if data.draw(st.booleans()) or not isinstance(parent, dict):
        parent[path[-1]] = data.draw(st.one_of(LINE_BREAKS, st.lists(LINE_BREAKS, max_size=2)))
    else:
        parent[data.draw(LINE_BREAKS)] = parent.pop(path[-1])
    _load_or_spec_error(yaml.safe_dump(document, allow_unicode=True))


def test_deep_nesting_and_alias_bombs_are_spec_errors():
    for text in (
        "[" * 5000 + "]" * 5000,
        "a: &a [*a]\nexperiment: *a",
        "x: &x [1, 2]\ny: &y [*x, *x, *x]\nz: &z [*y, *y, *y]\nproducts: *z\n",
    ):
        _load_or_spec_error(text)
