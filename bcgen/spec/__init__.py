"""The YAML experiment spec: format, loader and validation.

One spec file describes one experiment: a time slice (``epoch``) or a
transient run (``transient``), the orbit, solar constant, greenhouse gases,
calendar, grid, products, output naming and global attributes. The documented
example is ``configs/demo.yaml``; :data:`SCHEMA` lists every key.

>>> from bcgen.spec import load_spec
>>> spec = load_spec("configs/demo.yaml")            # doctest: +SKIP
>>> spec.resolve_orbit().obliquity_deg               # doctest: +SKIP

Every problem is a :class:`~bcgen.errors.SpecError` with one line
``file:line:column: key.path: what is wrong; what is expected``.
"""

from __future__ import annotations

from bcgen.spec.common import FieldError
from bcgen.spec.experiment import ExperimentSpec
from bcgen.spec.grid import GridSpec
from bcgen.spec.loader import load_spec, parse_spec_text
from bcgen.spec.model import (
    CalendarSpec,
    ExpectedOrbit,
    ExpectedValue,
    ExperimentInfo,
    GasSpec,
    InsolationSpec,
    OrbitCheck,
    OrbitSpec,
)
from bcgen.spec.output import OutputSpec, PointSpec, TemplateRef, TimestepTableSpec
from bcgen.spec.schema import SCHEMA, Key, iter_keys
from bcgen.spec.transient import TransientSpec

__all__ = [
    "SCHEMA",
    "CalendarSpec",
    "ExpectedOrbit",
    "ExpectedValue",
    "ExperimentInfo",
    "ExperimentSpec",
    "FieldError",
    "GasSpec",
    "GridSpec",
    "InsolationSpec",
    "Key",
    "OrbitCheck",
    "OrbitSpec",
    "OutputSpec",
    "PointSpec",
    "TemplateRef",
    "TimestepTableSpec",
    "TransientSpec",
    "iter_keys",
    "load_spec",
    "parse_spec_text",
]
