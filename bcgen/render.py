"""Render text templates (model-input snippets, metadata sets) with computed values.

A template is plain text with placeholders ``{{ name }}`` or, with a Python
format specification, ``{{ name:.6f }}``. Every placeholder must be one of
:data:`PLACEHOLDERS` (or a key of the experiment's global attributes, written
``{{ attributes.institution }}``); an unknown one is an error naming the
template file and line, so a typo never reaches a model's input deck.

The bundled templates (``templates/`` in the source tree) carry no model's own
variable names: users write their model's template themselves, starting from
``generic_namelist.nml.in``.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from importlib import resources
from pathlib import Path

from bcgen.errors import InputFileError

#: Placeholders available in every template, and what each holds.
PLACEHOLDERS: dict[str, str] = {
    "experiment": "experiment name from the spec",
    "description": "experiment description from the spec",
    "epoch": "epoch as written in the spec",
    "years_bp": "epoch in years before 1950 CE",
    "solution": "orbital solution name",
    "solution_reference": "citation of the orbital solution",
    "eccentricity": "eccentricity (dimensionless)",
    "obliquity_deg": "obliquity, degrees",
    "obliquity_rad": "obliquity, radians",
    "perihelion_longitude_deg": "ϖ, heliocentric longitude of perihelion from the moving "
    "March equinox, degrees (PMIP 'perihelion - 180')",
    "perihelion_longitude_rad": "ϖ in radians",
    "sun_longitude_at_perihelion_deg": "geocentric longitude of the Sun at perihelion, ϖ + 180°",
    "sun_longitude_at_perihelion_rad": "ϖ + 180° in radians",
    "precession_index": "e·sin ϖ",
    "solar_constant_wm2": "solar constant at 1 au, W m-2",
    "co2_ppm": "CO2 mole fraction, ppm (1e-6)",
    "ch4_ppb": "CH4 mole fraction, ppb (1e-9)",
    "n2o_ppb": "N2O mole fraction, ppb (1e-9)",
    "calendar": "CF calendar name",
    "anchor_kind": "what the calendar anchors: march_equinox or perihelion",
    "anchor_month": "month of the anchor date (1-12)",
    "anchor_day": "day of month of the anchor date",
    "anchor_hour": "hour of the anchor time",
    "anchor_minute": "minute of the anchor time",
    "anchor_day_of_year": "fractional days from 1 January 00:00 to the anchor",
    "year_length_days": "length of the model year in days",
    "bcgen_version": "bcgen version",
    "creation_date": "creation time, ISO 8601 UTC",
    "output_file": "name of the file being written: the rendered template's own file, or for "
    "a metadata template the NetCDF file it describes",
}

#: Placeholders of metadata templates only: each file's own values.
FILE_PLACEHOLDERS: dict[str, str] = {
    "title": "the file's own title",
    "frequency": "the file's CMIP frequency from its time axis: fx, day, monC, mon, yr, "
    "1hrPt, ...",
    "variable_id": "the file's data variable, or 'multiple' when it holds several",
    "tracking_id": "a new hdl:21.14100/<UUID> for every file",
    "dataset_category": "input4MIPs category: GHGConcentrations for gases, else solar",
}

_PLACEHOLDER_RE = re.compile(r"\{\{\s*([A-Za-z_][A-Za-z0-9_.]*)\s*(?::([^}]*?))?\s*\}\}")

#: Bundled templates: name -> file name in the bundled templates folder.
BUNDLED = {
    "namelist": "generic_namelist.nml.in",
    "env": "experiment_env.sh.in",
    "summary_json": "summary.json.in",
    "cmip_attributes": "cmip_forcing_attributes.json.in",
}


def rendered_file_name(experiment: str, template_path) -> str:
    """Return the name of the file a template is rendered into.

    ``<experiment>_<template file name without .in>``: ``experiment_env.sh.in`` of
    experiment ``lig127k-T63`` is written as ``lig127k-T63_experiment_env.sh``. This is
    the one place that names rendered templates; a template names its own file with
    ``{{ output_file }}``.
    """
    name = Path(template_path).name
    return f"{experiment}_{name[:-3] if name.endswith('.in') else name}"


def bundled_template_path(name: str) -> Path:
    """Path of a bundled template by its short name (see :data:`BUNDLED`)."""
    if name not in BUNDLED:
        raise InputFileError(
            f"unknown bundled template {name!r}; expected one of {', '.join(BUNDLED)} "
            "or a path to a template file"
        )
    return Path(str(resources.files("bcgen.templates") / BUNDLED[name]))


class Unavailable:
    """A placeholder value that the experiment does not define, with the reason why."""

    def __init__(self, reason: str) -> None:
        self.reason = reason


def render_text(text: str, values: Mapping[str, object], source: str = "<template>") -> str:
    """Replace every placeholder in ``text``; an unknown placeholder is an error.

    Parameters
    ----------
    text : str
        Template text.
    values : mapping
        Placeholder values; ``attributes`` may map to a nested mapping of global
        attributes reachable as ``{{ attributes.NAME }}``. A value that is an
        :class:`Unavailable` is an error when a template uses it.
    source : str
        Name used in error messages (usually the template's path).
    """
    _refuse_missing_attributes(text, values, source)
    out_lines = []
    for lineno, line in enumerate(text.splitlines(keepends=True), start=1):

        def substitute(match: re.Match, lineno: int = lineno) -> str:
            name, fmt = match[1], (match[2] or "").strip()
            value = _lookup(values, name)
            where = f"{source}:{lineno}: {{{{ {name} }}}}"
            if value is _MISSING:
                if name.startswith("attributes.") and "." not in name[len("attributes."):]:
                    key = name[len("attributes."):]
                    raise InputFileError(f"{where} has no value: add '{key}' under "
                                         "'attributes:' in the experiment spec")
                known = ", ".join(sorted(k for k in values if k != "attributes"))
                raise InputFileError(f"{where} is not a known placeholder; known "
                                     f"placeholders: {known}, attributes.<name>")
            if isinstance(value, Unavailable):
                raise InputFileError(f"{where} has no value: {value.reason}")
            try:
                return format(value, fmt) if fmt else _plain(value)
            except (TypeError, ValueError):
                raise InputFileError(
                    f"{source}:{lineno}: format {fmt!r} does not apply to {name} = {value!r}"
                ) from None

        if "{{" in _PLACEHOLDER_RE.sub("", line):
            raise InputFileError(f"{source}:{lineno}: a placeholder is not closed or not "
                                 "well formed; write {{ name }} or {{ name:.6f }}")
        out_lines.append(_PLACEHOLDER_RE.sub(substitute, line))
    return "".join(out_lines)


def _refuse_missing_attributes(text: str, values: Mapping[str, object], source: str) -> None:
    """Name every ``{{ attributes.NAME }}`` the spec does not set, all in one message."""
    missing: dict[str, int] = {}
    for lineno, line in enumerate(text.splitlines(), start=1):
        for match in _PLACEHOLDER_RE.finditer(line):
            name = match[1]
            key = name[len("attributes."):]
            if (name.startswith("attributes.") and "." not in key
                    and _lookup(values, name) is _MISSING):
                missing.setdefault(key, lineno)
    if missing:
        where = ", ".join(f"{key} (line {line})" for key, line in missing.items())
        keys = ", ".join(missing)
        raise InputFileError(f"{source}: {len(missing)} attribute(s) have no value: {where}; "
                             f"add {keys} under 'attributes:' in the experiment spec")


def render_file(path, values: Mapping[str, object]) -> str:
    """Read a template file and render it (see :func:`render_text`)."""
    from bcgen.sizes import check_template_size

    path = Path(path)
    try:
        check_template_size(path)
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read template ({exc.strerror})") from None
    return render_text(text, values, source=str(path))


_MISSING = object()


def _lookup(values: Mapping[str, object], dotted: str):
    node: object = values
    for part in dotted.split("."):
        if not isinstance(node, Mapping) or part not in node:
            return _MISSING
        node = node[part]
    return node


def _plain(value: object) -> str:
    if isinstance(value, float):
        return repr(value)
    return str(value)
