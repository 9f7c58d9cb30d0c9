"""bcgen: boundary conditions for paleoclimate model experiments.

The public API is small and explicit (:data:`__all__`; the README's "API reference"
lists every name with its signature). ``import bcgen`` is light: the names are loaded
from their modules on first use (PEP 562), so xarray, dask, netCDF4 and YAML are
imported only by the functions that need them.

>>> import bcgen
>>> orbit = bcgen.solve(bcgen.parse_epoch("6ka"))
>>> round(float(orbit.eccentricity), 6)
0.018682

No subpackage shares its name with a public function: :func:`build` is defined here and
hands a spec to :mod:`bcgen.timeslice` or :mod:`bcgen.transient`; ``bcgen.validate`` is
the function of :mod:`bcgen.validation`.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

__version__ = "0.1.0"

from bcgen.errors import (  # noqa: E402  (the error classes are tiny and import nothing)
    BcgenError,
    BcgenWarning,
    CalendarError,
    CheckFailed,
    EpochError,
    GridError,
    InputFileError,
    LongComputationWarning,
    OrbitError,
    OutputError,
    OutsideValidityWarning,
    SpecError,
)

#: Public name → the module it is loaded from on first use.
_LAZY = {
    "parse_epoch": "bcgen.epochs",
    "parse_epochs": "bcgen.epochs",
    "format_epoch": "bcgen.epochs",
    "solve": "bcgen.orbit",
    "OrbitalElements": "bcgen.orbit",
    "convert_perihelion": "bcgen.orbit",
    "PERIHELION_CONVENTIONS": "bcgen.orbit",
    "SOLUTIONS": "bcgen.orbit",
    "ModelCalendar": "bcgen.solar_calendar.calendars",
    "Anchor": "bcgen.solar_calendar.calendars",
    "SolarYear": "bcgen.solar_calendar.position",
    "fixed_day_months": "bcgen.solar_calendar.months",
    "fixed_angle_months": "bcgen.solar_calendar.months",
    "daily_insolation": "bcgen.insolation",
    "monthly_insolation": "bcgen.insolation",
    "instantaneous_insolation": "bcgen.insolation",
    "annual_mean_insolation_wm2": "bcgen.insolation",
    "insolation_at_true_longitude_wm2": "bcgen.insolation",
    "caloric_half_years": "bcgen.insolation",
    "summer_energy_gj_m2": "bcgen.insolation",
    "load_spec": "bcgen.spec",
    "parse_spec_text": "bcgen.spec",
    "to_fixed_angle_months": "bcgen.convert",
    "to_fixed_day_months": "bcgen.convert",
    "validate": "bcgen.validation",
}

__all__ = [
    "Anchor",
    "BcgenError",
    "BcgenWarning",
    "CalendarError",
    "CheckFailed",
    "EpochError",
    "GridError",
    "InputFileError",
    "ModelCalendar",
    "OrbitError",
    "OrbitalElements",
    "OutputError",
    "OutsideValidityWarning",
    "LongComputationWarning",
    "PERIHELION_CONVENTIONS",
    "SOLUTIONS",
    "SolarYear",
    "SpecError",
    "__version__",
    "annual_mean_insolation_wm2",
    "build",
    "caloric_half_years",
    "convert_perihelion",
    "daily_insolation",
    "fixed_angle_months",
    "fixed_day_months",
    "format_epoch",
    "instantaneous_insolation",
    "insolation_at_true_longitude_wm2",
    "load_spec",
    "monthly_insolation",
    "parse_epoch",
    "parse_epochs",
    "parse_spec_text",
    "solve",
    "summer_energy_gj_m2",
    "to_fixed_angle_months",
    "to_fixed_day_months",
    "validate",
]


if TYPE_CHECKING:
    from bcgen.experiment import BuildResult
    from bcgen.spec import ExperimentSpec


def build(spec: ExperimentSpec, output_dir=None, *, force: bool = False,
          command: str | None = None) -> BuildResult:
    """Build every product of a spec into ``output_dir`` (default: the spec's ``output.directory``).

    A time slice is built by :func:`bcgen.timeslice.build_time_slice`, a transient run
    by :func:`bcgen.transient.build_transient`.

    Parameters
    ----------
    spec : ExperimentSpec
        A validated spec (:func:`bcgen.spec.load_spec`).
    output_dir : path, optional
        Folder for the outputs; created if missing.
    force : bool
        Replace existing outputs.
    command : str, optional
        The command line, recorded in each file's ``history``.

    Returns
    -------
    BuildResult
        The files written (name, bytes, sha256, product, description) and the
        comparison with the spec's expected orbit values, if any.
    """
    from bcgen import arguments
    from bcgen.spec import ExperimentSpec

    if not isinstance(spec, ExperimentSpec):
        raise SpecError(f"spec: expected an ExperimentSpec (from bcgen.load_spec), got "
                        f"{type(spec).__name__}")
    output_dir = arguments.path(output_dir, "output_dir", optional=True)
    force = arguments.flag(force, "force")
    command = arguments.text(command, "command", optional=True, what="the command line text")
    if spec.is_transient:
        from bcgen.transient import build_transient

        return build_transient(spec, output_dir, force=force, command=command)
    from bcgen.timeslice import build_time_slice

    return build_time_slice(spec, output_dir, force=force, command=command)


def __getattr__(name: str):
    """Load a public name from its module on first use (PEP 562)."""
    if name not in _LAZY:
        raise AttributeError(f"module 'bcgen' has no attribute {name!r}")
    value = getattr(importlib.import_module(_LAZY[name]), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))

