"""Read a spec's YAML nodes against :data:`~bcgen.spec.schema.SCHEMA` into an ExperimentSpec.

Two passes: the node tree is first checked key by key against the schema
(unknown keys, types, ranges, closed vocabularies), which gives plain Python
values; the section dataclasses are then built from them and check their own
rules. Either way an error is one line ``file:line:column: key.path: what is
wrong; what is expected``.
"""

from __future__ import annotations

import re
import warnings
from collections.abc import Mapping
from pathlib import Path

import yaml

from bcgen import arguments
from bcgen.epochs import parse_epoch
from bcgen.errors import BcgenError, DeprecatedCalendarNameWarning, SpecError
from bcgen.solar_calendar.calendars import (
    DEPRECATED_CALENDAR_NAMES,
    REFUSED_CALENDARS,
    deprecated_calendar_message,
)
from bcgen.spec import schema as S
from bcgen.spec.common import FieldError, closest
from bcgen.spec.experiment import ExperimentSpec
from bcgen.spec.geography import GeographySpec
from bcgen.spec.grid import GridSpec
from bcgen.spec.model import (
    CalendarSpec,
    ExpectedOrbit,
    ExpectedValue,
    ExperimentInfo,
    GasSpec,
    InsolationSpec,
    OrbitSpec,
)
from bcgen.spec.output import OutputSpec, PointSpec, TemplateRef, TimestepTableSpec
from bcgen.spec.transient import TransientSpec
from bcgen.spec.yaml_lines import (
    Scalar,
    compose,
    decimals_of,
    describe,
    error_at,
    join,
    locate,
    mapping_items,
    one_line,
    read_scalar,
)

_QUOTE_HINT = "quote it if you mean the text"
_YAML11_BOOL_HINT = (
    "YAML 1.1 readers take unquoted yes/no/on/off/y/n for booleans and YAML 1.2 readers for strings"
)


class _Reader:
    """Checks nodes against the schema; remembers the decimals of expected values."""

    def __init__(self, filename: str, base_dir: Path):
        self.filename = filename
        self.base_dir = base_dir
        self.decimals: dict[str, int] = {}

    def fail(self, node, path: str, message: str) -> SpecError:
        return error_at(self.filename, node, path, message)

    # --- dispatch ----------------------------------------------------------------------------
    def read(self, node: yaml.Node, key: S.Key, path: str):
        if key.type in ("mapping", "variants"):
            if not isinstance(node, yaml.MappingNode):
                raise self.fail(
                    node,
                    path,
                    f"expected a mapping of keys, got {describe(node, self._peek(node, path))}",
                )
            if key.type == "variants":
                return self.read_variants(node, key, path)
            return self.read_mapping(node, key, path)
        if key.type == "list":
            if not isinstance(node, yaml.SequenceNode):
                scalar = self._peek(node, path)
                simple = scalar and scalar.kind == "str" and re.fullmatch(r"[\w.-]+", scalar.text)
                hint = f" (write [{scalar.text}])" if simple else ""
                raise self.fail(node, path, f"expected a list, got {describe(node, scalar)}{hint}")
            if len(node.value) < key.min_items:
                raise self.fail(node, path, "expected at least one item, got an empty list")
            return [self.read(item, key.item, join(path, i)) for i, item in enumerate(node.value)]
        if not isinstance(node, yaml.ScalarNode):
            raise self.fail(node, path, f"expected {_WANTED[key.type]}, got {describe(node)}")
        return getattr(self, f"read_{key.type}")(
            node, read_scalar(node, self.filename, path), key, path
        )

    def _peek(self, node, path) -> Scalar | None:
        return read_scalar(node, self.filename, path) if isinstance(node, yaml.ScalarNode) else None

    # --- containers --------------------------------------------------------------------------
    def read_mapping(self, node: yaml.MappingNode, key: S.Key, path: str) -> dict:
        values = {}
        for name, key_node, value_node in mapping_items(node, self.filename, path):
            sub = join(path, name)
            if key.keys is not None:
                if name not in key.keys:
                    raise self.fail(key_node, sub, "unknown key; " + closest(name, key.keys, "key"))
                values[name] = self.read(value_node, key.keys[name], sub)
            elif key.key_choices:
                if name not in key.key_choices:
                    raise self.fail(
                        key_node,
                        sub,
                        f"unknown {key.noun}; " + closest(name, key.key_choices, key.noun),
                    )
                values[name] = self.read(value_node, key.item, sub)
            else:
                if not re.fullmatch(key.key_pattern, name):
                    raise self.fail(
                        key_node,
                        sub,
                        f"{name!r} is not a valid {key.noun} name; "
                        "expected letters, digits and '_', starting with a letter",
                    )
                values[name] = self.read(value_node, key.item, sub)
        if key.keys is not None:
            for name, sub_key in key.keys.items():
                if sub_key.required and name not in values:
                    raise self.fail(node, path, f"missing required key {name!r} ({sub_key.doc})")
        return values

    def read_variants(self, node: yaml.MappingNode, key: S.Key, path: str) -> dict:
        items = list(mapping_items(node, self.filename, path))
        kinds = tuple(key.variants)
        kind_item = next((item for item in items if item[0] == "kind"), None)
        if kind_item is None:
            raise self.fail(node, path, f"missing required key 'kind' (one of {', '.join(kinds)})")
        kind_key = S.Key("choice", "kind", choices=kinds, noun=f"{path} kind")
        kind = self.read(kind_item[2], kind_key, join(path, "kind"))
        variant = key.variants[kind]
        values = {"kind": kind}
        for name, key_node, value_node in items:
            if name == "kind":
                continue
            sub = join(path, name)
            if name not in variant:
                others = [k for k, v in key.variants.items() if name in v]
                used = f" (it belongs to kind {' or '.join(others)})" if others else ""
                raise self.fail(
                    key_node,
                    sub,
                    f"unknown key for kind {kind!r}{used}; "
                    + closest(name, ("kind", *variant), "key"),
                )
            values[name] = self.read(value_node, variant[name], sub)
        for name, sub_key in variant.items():
            if sub_key.required and name not in values:
                raise self.fail(node, path, f"missing required key {name!r} ({sub_key.doc})")
        return values

    # --- scalars -----------------------------------------------------------------------------
    def read_string(self, node, scalar: Scalar, key: S.Key, path: str) -> str:
        if scalar.kind == "str":
            return scalar.value
        if scalar.kind == "yaml11_bool":
            raise self.fail(
                node,
                path,
                f"{scalar.text!r} is ambiguous: {_YAML11_BOOL_HINT}; "
                f'write "{scalar.text}" (quoted)',
            )
        if scalar.kind == "yaml11_number":
            raise self.fail(
                node,
                path,
                f"{scalar.text!r} is read as a number by YAML 1.1 "
                f'readers; write "{scalar.text}" (quoted)',
            )
        raise self.fail(
            node,
            path,
            f"expected a string, got {describe(node, scalar)}; {_QUOTE_HINT}"
            if scalar.kind != "null"
            else f"expected a string, got {describe(node, scalar)}",
        )

    def read_name(self, node, scalar, key, path) -> str:
        text = self.read_string(node, scalar, key, path)
        if not re.fullmatch(key.pattern, text):
            raise self.fail(
                node,
                path,
                f"{text!r} is not a usable name; expected letters, "
                "digits, '_', '.' and '-' only (it goes into file names)",
            )
        return text

    def read_epoch(self, node, scalar, key, path) -> str:
        if scalar.kind in ("int", "float"):
            raise self.fail(
                node,
                path,
                f"expected an epoch such as '6ka', '21000 BP' or "
                f"'1850CE', got the number {scalar.text} (a bare number is "
                "ambiguous: years BP? CE? a model year?)",
            )
        text = self.read_string(node, scalar, key, path)
        try:
            parse_epoch(text)
        except BcgenError as exc:
            raise self.fail(node, path, str(exc)) from None
        return text

    def read_path(self, node, scalar, key, path) -> Path:
        text = self.read_string(node, scalar, key, path)
        if not text.strip():
            raise self.fail(node, path, "expected a file path, got an empty string")
        file = Path(text).expanduser()
        return file if file.is_absolute() else self.base_dir / file

    def read_choice(self, node, scalar, key, path) -> str:
        if scalar.kind != "null" and scalar.text in key.choices:
            return scalar.text
        if scalar.kind not in ("str", "yaml11_bool", "int", "float", "yaml11_number"):
            raise self.fail(
                node,
                path,
                f"expected one of {', '.join(key.choices)}, got {describe(node, scalar)}",
            )
        return self._unknown_choice(node, scalar.text, key, path)

    def _unknown_choice(self, node, text, key, path):
        if key.noun == "calendar" and text in DEPRECATED_CALENDAR_NAMES:
            where = str(self.fail(node, path, "")).rstrip(": ")
            message = deprecated_calendar_message(text, where)
            warnings.warn(message, DeprecatedCalendarNameWarning, stacklevel=2)
            return DEPRECATED_CALENDAR_NAMES[text]
        if key.noun == "calendar" and text in REFUSED_CALENDARS:
            raise self.fail(
                node, path, f"{REFUSED_CALENDARS[text]}; expected one of {', '.join(key.choices)}"
            )
        raise self.fail(
            node, path, f"unknown {key.noun} {text!r}; " + closest(text, key.choices, key.noun)
        )

    def read_boolean(self, node, scalar, key, path) -> bool:
        if scalar.kind == "bool":
            return scalar.value
        if scalar.kind == "yaml11_bool":
            raise self.fail(
                node,
                path,
                f"expected true or false, got {scalar.text!r} "
                f"({_YAML11_BOOL_HINT}; write true or false)",
            )
        raise self.fail(node, path, f"expected true or false, got {describe(node, scalar)}")

    def read_number(self, node, scalar, key, path, whole: bool = False) -> float | int:
        wanted = "a whole number" if whole else "a number"
        if scalar.kind == "yaml11_number":
            raise self.fail(
                node,
                path,
                f"{scalar.text!r} is read differently by YAML 1.1 and "
                "1.2 readers (octal, hexadecimal, '_' or ':' forms); write a plain "
                "decimal number",
            )
        if scalar.kind == "str" and _looks_numeric(scalar.text):
            raise self.fail(
                node, path, f"expected {wanted}, got the string {scalar.text!r} (remove the quotes)"
            )
        if scalar.kind not in ("int", "float"):
            raise self.fail(node, path, f"expected {wanted}, got {describe(node, scalar)}")
        value = scalar.value
        if whole and scalar.kind != "int":
            raise self.fail(node, path, f"expected a whole number, got {scalar.text}")
        interval = key.range_text()
        if value != value or value in (float("inf"), float("-inf")):
            raise self.fail(node, path, f"expected a finite number, got {scalar.text}")
        bad = key.minimum is not None and (
            value < key.minimum or (key.exclusive_minimum and value == key.minimum)
        )
        bad |= key.maximum is not None and (
            value > key.maximum or (key.exclusive_maximum and value == key.maximum)
        )
        if bad:
            raise self.fail(node, path, f"expected {wanted} in {interval}, got {scalar.text}")
        self.decimals[path] = decimals_of(scalar.text)
        return value

    def read_integer(self, node, scalar, key, path) -> int:
        return self.read_number(node, scalar, key, path, whole=True)


_WANTED = {
    "string": "a string",
    "name": "a name",
    "number": "a number",
    "integer": "a whole number",
    "boolean": "true or false",
    "epoch": "an epoch such as '6ka'",
    "choice": "a name",
    "path": "a file path",
}


def _looks_numeric(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _relocate(exc: FieldError, old: str, new: str) -> FieldError:
    path = new + exc.key_path[len(old) :] if exc.key_path.startswith(old) else exc.key_path
    return FieldError(path, exc.detail)


def _build(values: Mapping, reader: _Reader, path: Path | None, text: str) -> ExperimentSpec:
    """Build the dataclasses from the checked values (their own checks raise FieldError)."""
    orbit = dict(values.get("orbit", {}))
    expected = orbit.pop("expected", None)
    if expected is not None:
        for name in ("eccentricity", "obliquity_deg", "perihelion_deg"):
            if name in expected:
                expected[name] = ExpectedValue(
                    float(expected[name]), reader.decimals[f"orbit.expected.{name}"]
                )
        orbit["expected"] = ExpectedOrbit(**expected)
    if "eccentricity" in orbit or "obliquity_deg" in orbit or "perihelion_deg" in orbit:
        for name in ("eccentricity", "obliquity_deg", "perihelion_deg"):
            if name in orbit:
                orbit[name] = float(orbit[name])
    gases = tuple(
        GasSpec(name, float(gas["value"]), gas["units"])
        for name, gas in values.get("greenhouse_gases", {}).items()
    )
    grid = None
    if "grid" in values:
        grid = GridSpec(**values["grid"])
    timestep_table = None
    if "timestep_table" in values:
        table = dict(values["timestep_table"])
        points = []
        for i, point in enumerate(table["points"]):
            try:
                points.append(PointSpec(**point))
            except FieldError as exc:
                raise _relocate(
                    exc, "timestep_table.points", f"timestep_table.points[{i}]"
                ) from None
        table["points"] = tuple(points)
        if "days" in table:
            table["days"] = tuple(table["days"])
        timestep_table = TimestepTableSpec(**table)
    geography = GeographySpec.from_values(values["geography"]) if "geography" in values else None
    templates = _template_refs(values, "templates", reader.base_dir)
    attribute_templates = _template_refs(values, "attribute_templates", reader.base_dir)
    return ExperimentSpec(
        experiment=ExperimentInfo(**values["experiment"]),
        products=tuple(values["products"]),
        epoch=values.get("epoch"),
        transient=TransientSpec(**values["transient"]) if "transient" in values else None,
        orbit=OrbitSpec(**orbit),
        solar_constant_wm2=float(values.get("solar_constant_wm2", S.DEFAULT_SOLAR_CONSTANT_WM2)),
        solar_constant_scaling=values.get("solar_constant_scaling", "none"),
        greenhouse_gases=gases,
        calendar=CalendarSpec(**values.get("calendar", {})),
        grid=grid,
        geography=geography,
        insolation=InsolationSpec(**values.get("insolation", {})),
        timestep_table=timestep_table,
        templates=templates,
        attribute_templates=attribute_templates,
        output=OutputSpec(**values.get("output", {})),
        attributes=dict(values.get("attributes", {})),
        path=path,
        text=text,
    )


def parse_spec_text(
    text: str,
    filename: str = "<string>",
    *,
    base_dir: str | Path | None = None,
    path: Path | None = None,
) -> ExperimentSpec:
    """Parse and validate the text of a spec.

    Parameters
    ----------
    text : str
        The YAML text.
    filename : str
        The name used in error messages.
    base_dir : path-like, optional
        Folder that relative paths in the spec resolve against (default: the
        current working directory).
    path : pathlib.Path, optional
        The spec file, recorded in the result.

    Raises
    ------
    SpecError
        One line ``file:line:column: key.path: message`` for any problem.
    """
    filename = arguments.text(filename, "filename", SpecError, what="a file name for messages")
    base_dir = arguments.path(base_dir, "base_dir", SpecError, optional=True)
    path = arguments.path(path, "path", SpecError, optional=True)
    if not isinstance(text, str):
        raise error_at(
            filename, None, "", f"expected the text of a spec, got {type(text).__name__}"
        )
    root = compose(text, filename)
    if root is None:
        raise error_at(
            filename,
            None,
            "",
            "the spec is empty; expected a mapping with at least "
            "'experiment', 'products' and 'epoch' or 'transient'",
        )
    reader = _Reader(filename, Path(base_dir) if base_dir is not None else Path.cwd())
    top = S.Key("mapping", "the spec", keys=S.SCHEMA)
    if not isinstance(root, yaml.MappingNode):
        scalar = reader._peek(root, "")
        raise error_at(
            filename,
            root,
            "",
            "a spec is a mapping of keys (experiment:, epoch:, "
            f"products:, ...), got {describe(root, scalar)}",
        )
    values = reader.read_mapping(root, top, "")
    try:
        return _build(values, reader, path, text)
    except FieldError as exc:
        node = locate(root, exc.key_path)
        raise error_at(filename, node, exc.key_path, exc.detail) from None
    except BcgenError as exc:
        raise error_at(filename, root, "", str(exc)) from None


def load_spec(path: str | Path) -> ExperimentSpec:
    """Read and validate the experiment spec at ``path``.

    Relative paths inside the spec resolve against the spec file's folder.
    The returned spec keeps the path and the full text (for provenance).

    Raises
    ------
    SpecError
        For a missing or unreadable file, or an invalid spec (one line naming
        ``file:line:column`` and the key path).
    """
    file = arguments.path(path, "path", SpecError)
    name = one_line(str(file))
    try:
        raw = file.read_bytes()
    except FileNotFoundError:
        raise SpecError(f"{name}: spec file not found") from None
    except IsADirectoryError:
        raise SpecError(f"{name}: is a folder; expected a YAML spec file") from None
    except OSError as exc:
        raise SpecError(f"{name}: cannot read the spec ({exc.strerror})") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise SpecError(
            f"{name}:{line}: not UTF-8 text (byte {exc.start} of the file); save the spec as UTF-8"
        ) from None
    if text.startswith("\ufeff"):
        text = text[1:]
    return parse_spec_text(text, str(file), base_dir=file.resolve().parent, path=file)


def _template_refs(values: dict, key: str, base_dir: Path) -> tuple[TemplateRef, ...]:
    """Templates named in ``key``: bundled names, or paths relative to the spec's folder."""
    refs = []
    for i, item in enumerate(values.get(key, ())):
        try:
            if re.fullmatch(r"[A-Za-z0-9_-]+", item):
                refs.append(TemplateRef(name=item, key=key))
            else:
                file = Path(item).expanduser()
                refs.append(TemplateRef(path=file if file.is_absolute() else base_dir / file,
                                        key=key))
        except FieldError as exc:
            raise _relocate(exc, key, f"{key}[{i}]") from None
    return tuple(refs)
