"""Check a transient run's insolation model year by model year, and name transient mistakes.

A transient model must give model year ``first_model_year + k`` the orbit of the epoch
``start_epoch + k × acceleration`` years (:class:`bcgen.spec.TransientSpec`). The model's
output (any frequency :func:`~bcgen.validation.readers.read_model_output` reads) is
compared with the reference of each model year's own orbit
(:class:`~bcgen.validation.reference.ForwardModel`, one per model year), and, when it
does not agree, with the same reference under each transient mistake:

=========================  ===============================================================
code                       the model gives model year y the orbit of ...
=========================  ===============================================================
``acceleration_wrong``     the epoch ``start + k × A'`` with another acceleration A'
                           (fitted over whole numbers; A' = 1: acceleration not applied)
``orbit_one_year_late``    model year y − 1 (the orbit advances one model year late)
``orbit_one_year_early``   model year y + 1
``orbit_frozen_at_start``  the first model year, for every model year
``run_direction_reversed`` the epoch ``start − k × A``: epochs run the other way in time
=========================  ===============================================================

Verdict. The run is ``consistent`` when every value is within the tolerance of its own
year's reference (default 1 W m-2, as :func:`bcgen.validation.validate`). Otherwise the
mistakes are ranked by the RMS of the model minus their prediction; one whose RMS is at
most half the reference's and within the tolerance explains the run and is named first.
When none does, the catalogue of time-slice mistakes
(:func:`bcgen.validation.validate_output`) is run on the model year with the largest
error, against that year's orbit, and its findings are reported.

Mistakes that the insolation cannot tell apart over a run are named in a fixed order:
the orbit frozen at the start before an acceleration of 1 (over a short accelerated run
the orbit barely moves in either case).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field, replace

import numpy as np

from bcgen.errors import BcgenError
from bcgen.validation.readers import ModelOutput
from bcgen.validation.reference import ForwardModel, Setup

#: Transient mistakes and what each means (see the module docstring).
TRANSIENT_CODES = {
    "acceleration_wrong": "the orbit advances by another number of years per model year",
    "orbit_one_year_late": "each model year has the orbit of the model year before it",
    "orbit_one_year_early": "each model year has the orbit of the model year after it",
    "orbit_frozen_at_start": "every model year has the orbit of the first model year",
    "run_direction_reversed": "the epochs run the other way in time from the start epoch",
}
#: Order of preference between mistakes whose fits are equally good (smaller first).
_PRIORITY = {code: i for i, code in enumerate(
    ("orbit_frozen_at_start", "orbit_one_year_late", "orbit_one_year_early",
     "run_direction_reversed", "acceleration_wrong"))}
#: An explanation must leave at most this share of the reference's RMS misfit.
EXPLAINS_RMS_SHARE = 0.5
#: Fits within this share of each other's RMS are equally good (then _PRIORITY decides).
TIE_SHARE = 0.01
#: Accelerations tried for ``acceleration_wrong``: whole numbers of years per model year.
ACCELERATION_CANDIDATES = (1, 2, 3, 4, 5, 10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000,
                           2500, 5000, 10000)


class TransientValidationError(BcgenError, ValueError):
    """Model output that the transient check cannot handle (years outside the run)."""


@dataclass(frozen=True)
class TransientFinding:
    """One transient mistake and how well it fits.

    Attributes
    ----------
    code : str
        A key of :data:`TRANSIENT_CODES`.
    description : str
        One sentence, with the fitted acceleration where there is one.
    rms_after_wm2, max_abs_after_wm2 : float
        RMS and largest absolute value of the model minus the mistake's prediction.
    explains : bool
        Whether it accounts for the differences (module docstring).
    fitted_acceleration : int or None
        For ``acceleration_wrong``, the acceleration that fits best.
    """

    code: str
    description: str
    rms_after_wm2: float
    max_abs_after_wm2: float
    explains: bool = False
    fitted_acceleration: int | None = None

    def to_dict(self) -> dict:
        """Return the finding as JSON-ready data."""
        return {"code": self.code, "description": self.description,
                "rms_after_wm2": self.rms_after_wm2, "max_abs_after_wm2": self.max_abs_after_wm2,
                "explains": self.explains, "fitted_acceleration": self.fitted_acceleration}


@dataclass(frozen=True)
class TransientValidationResult:
    """What the transient check found.

    Attributes
    ----------
    verdict : {"consistent", "inconsistent"}
    tolerance_wm2 : float
    rms_error_wm2, max_abs_error_wm2 : float
        Model minus the reference of each model year's own orbit.
    worst_model_year : int
        The model year with the largest absolute error.
    findings : tuple of TransientFinding
        Every transient mistake, best fit first (empty when consistent).
    catalogue : ValidationResult or None
        When no transient mistake explains the run: the time-slice check of the worst
        model year against its own orbit.
    model_years : tuple of int
        First and last model year of the output.
    """

    verdict: str
    tolerance_wm2: float
    rms_error_wm2: float
    max_abs_error_wm2: float
    worst_model_year: int
    findings: tuple[TransientFinding, ...]
    catalogue: object | None
    model_years: tuple[int, int]
    source: str = ""
    notes: tuple[str, ...] = field(default_factory=tuple)

    def to_dict(self) -> dict:
        """Return the result as JSON-ready data (what ``--format json`` prints)."""
        catalogue = None
        if self.catalogue is not None:
            catalogue = {"model_year": self.worst_model_year, "verdict": self.catalogue.verdict,
                         "findings": [f.to_dict() for f in self.catalogue.findings]}
        return {"kind": "transient", "source": self.source, "verdict": self.verdict,
                "tolerance_wm2": self.tolerance_wm2, "rms_error_wm2": self.rms_error_wm2,
                "max_abs_error_wm2": self.max_abs_error_wm2,
                "worst_model_year": self.worst_model_year,
                "model_years": list(self.model_years),
                "findings": [f.to_dict() for f in self.findings],
                "catalogue_of_worst_year": catalogue, "notes": list(self.notes)}

    def summary_line(self) -> str:
        """One line for the exit message of an inconsistent run."""
        explained = [f for f in self.findings if f.explains]
        if explained:
            why = f"most likely {explained[0].code}"
        elif self.catalogue is not None and self.catalogue.findings:
            why = (f"no transient mistake explains it; model year {self.worst_model_year}: "
                   f"{self.catalogue.findings[0].code}")
        else:
            why = "no transient mistake explains it"
        return (f"{self.source}: inconsistent with the transient run: max abs error "
                f"{self.max_abs_error_wm2:.2f} W m-2 in model year {self.worst_model_year}; "
                f"{why}")

    def to_text(self) -> str:
        """Return the report of ``bcgen validate`` for a transient run."""
        first, last = self.model_years
        lines = [f"{self.source}: model years {first}-{last}, each against its own orbit",
                 f"verdict: {self.verdict} (tolerance {self.tolerance_wm2:g} W m-2; RMS error "
                 f"{self.rms_error_wm2:.3f} W m-2, max abs error {self.max_abs_error_wm2:.3f} "
                 f"W m-2 in model year {self.worst_model_year})"]
        if self.verdict == "inconsistent":
            explained = [f for f in self.findings if f.explains]
            if explained:
                lines.append(f"diagnosis: {explained[0].code}: {explained[0].description}")
            else:
                lines.append("diagnosis: no transient mistake explains the differences")
                if self.catalogue is not None and self.catalogue.findings:
                    f = self.catalogue.findings[0]
                    lines.append(f"model year {self.worst_model_year} against its own orbit: "
                                 f"{f.code}: {f.description}")
            lines.append("transient mistakes, best fit first (RMS after, W m-2):")
            lines += [f"  {f.code:<24} {f.rms_after_wm2:9.3f}  {f.description}"
                      for f in self.findings]
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)


def _subset(output: ModelOutput, rows: np.ndarray) -> ModelOutput:
    return replace(output, year=output.year[rows], start_day=output.start_day[rows],
                   end_day=output.end_day[rows], month=output.month[rows],
                   insolation_wm2=output.insolation_wm2[rows], geometry={})


class _TransientModel:
    """Predictions for a model output, each model year with an orbit chosen by epoch."""

    def __init__(self, output: ModelOutput, experiment, daily_method: str):
        spec = experiment.spec
        tr = spec.transient
        self.output, self.experiment, self.tr = output, experiment, tr
        self.years = np.unique(output.year)
        outside = self.years[(self.years < tr.first_model_year)
                             | (self.years > tr.last_model_year)]
        if outside.size:
            where = f"the transient run of {spec.path}" if spec.path else "the transient run"
            raise TransientValidationError(
                f"{output.source}: model year {int(outside[0])} is not covered by {where} "
                f"(model years {tr.first_model_year}-{tr.last_model_year})")
        self.start = tr.start_years_from_1950
        self.direction = 1.0 if tr.end_years_from_1950 > self.start else -1.0
        calendar = experiment.calendar
        if output.calendar and output.calendar != calendar.name:
            from bcgen.solar_calendar.calendars import ModelCalendar

            calendar = ModelCalendar(output.calendar, calendar.anchor)
        self.rows = [np.flatnonzero(output.year == y) for y in self.years]
        orbits = self.orbits(self.epochs(self.tr.acceleration))
        self.setups = [Setup(orbit=orbits[i], solar_constant_wm2=experiment.solar_constant_wm2,
                             calendar=calendar, daily_method=daily_method,
                             epoch_label=f"model year {int(y)}")
                       for i, y in enumerate(self.years)]
        self.models = [ForwardModel(_subset(output, rows), setup)
                       for rows, setup in zip(self.rows, self.setups, strict=True)]

    def epochs(self, acceleration: float, shift: int = 0, sign: float = 1.0) -> np.ndarray:
        """Epochs of the model years under a mapping (years from 1950 CE)."""
        k = self.years + shift - self.tr.first_model_year
        return self.start + sign * self.direction * acceleration * k

    def orbits(self, epochs: np.ndarray):
        return self.experiment.orbit_at(epochs)

    def predict(self, epochs: np.ndarray) -> np.ndarray:
        orbits = self.orbits(epochs)
        out = np.empty_like(self.output.insolation_wm2)
        for i, (rows, model) in enumerate(zip(self.rows, self.models, strict=True)):
            out[rows] = model.predict(orbit=orbits[i])
        return out


def _misfit(model: np.ndarray, predicted: np.ndarray) -> tuple[float, float]:
    d = model - predicted
    d = d[np.isfinite(d)]
    return float(np.sqrt(np.mean(d * d))), float(np.max(np.abs(d)))


def validate_transient_output(output: ModelOutput, spec, *, tolerance_wm2: float = 1.0,
                              daily_method: str = "day_average") -> TransientValidationResult:
    """Check model output of a transient run against each model year's orbit.

    Parameters
    ----------
    output : ModelOutput
        From :func:`bcgen.validation.read_model_output`; its years are model years.
    spec : ExperimentSpec, path or Experiment
        The transient experiment.
    tolerance_wm2 : float
        Largest acceptable difference, W m-2.
    daily_method : {"midday", "day_average"}
        How the reference forms time means (see :func:`bcgen.validation.setup_from_spec`).

    Returns
    -------
    TransientValidationResult
    """
    from bcgen.experiment import Experiment
    from bcgen.spec import ExperimentSpec, load_spec

    experiment = spec if isinstance(spec, Experiment) else Experiment(
        spec if isinstance(spec, ExperimentSpec) else load_spec(spec))
    if experiment.spec.transient is None:
        raise TransientValidationError("validate_transient_output needs a transient spec")
    tm = _TransientModel(output, experiment, daily_method)
    acc = tm.tr.acceleration
    values = output.insolation_wm2
    reference = tm.predict(tm.epochs(acc))
    rms, max_abs = _misfit(values, reference)
    error = np.abs(values - reference)
    per_year = np.array([np.nanmax(error[rows]) for rows in tm.rows])
    worst_year = int(tm.years[int(np.argmax(per_year))])
    first_last = (int(tm.years[0]), int(tm.years[-1]))
    if max_abs <= tolerance_wm2:
        return TransientValidationResult("consistent", tolerance_wm2, rms, max_abs, worst_year,
                                         (), None, first_last, output.source)
    fits = []
    for code, epochs in (("orbit_one_year_late", tm.epochs(acc, shift=-1)),
                         ("orbit_one_year_early", tm.epochs(acc, shift=1)),
                         ("orbit_frozen_at_start", np.full(tm.years.size, tm.start)),
                         ("run_direction_reversed", tm.epochs(acc, sign=-1.0))):
        fits.append((code, *_misfit(values, tm.predict(epochs)), None))
    best_acc = None
    for a in ACCELERATION_CANDIDATES:
        if a == acc:
            continue
        r, m = _misfit(values, tm.predict(tm.epochs(a)))
        if best_acc is None or r < best_acc[1]:
            best_acc = ("acceleration_wrong", r, m, a)
    fits.append(best_acc)
    best_rms = min(f[1] for f in fits)
    tied = sorted((f for f in fits if f[1] <= best_rms * (1 + TIE_SHARE)),
                  key=lambda f: _PRIORITY[f[0]])
    fits = tied + sorted((f for f in fits if f not in tied), key=lambda f: f[1])
    findings = []
    for code, r, m, a in fits:
        explains = r <= EXPLAINS_RMS_SHARE * rms and m <= tolerance_wm2
        text = TRANSIENT_CODES[code]
        if a is not None:
            text = (f"the orbit advances by {a} years per model year, not {acc} "
                    f"(acceleration {'not applied' if a == 1 else 'applied wrongly'})")
        findings.append(TransientFinding(code, text, r, m, bool(explains), a))
    catalogue = None
    if not any(f.explains for f in findings):
        from bcgen.validation import validate_output

        i = int(np.argmax(per_year))
        catalogue = validate_output(_subset(output, tm.rows[i]), tm.setups[i],
                                    tolerance_wm2=tolerance_wm2)
    return TransientValidationResult("inconsistent", tolerance_wm2, rms, max_abs, worst_year,
                                     tuple(findings), catalogue, first_last, output.source)


def validate_transient(model_file, spec, *, var: str | None = None, tolerance_wm2: float = 1.0,
                       daily_method: str = "day_average") -> TransientValidationResult:
    """Read a transient run's insolation and check it (:func:`validate_transient_output`).

    ``model_file`` is one NetCDF file or the files of the run as the model wrote them
    (split by years), joined by :func:`bcgen.validation.readers.read_model_outputs`.
    """
    from bcgen.errors import InputFileError
    from bcgen.validation.readers import is_table_path, read_model_outputs

    files = [model_file] if isinstance(model_file, (str, bytes, os.PathLike)) else model_file
    for path in files:
        if is_table_path(path):
            raise InputFileError(f"{path}: a transient run is checked from its NetCDF "
                                 "insolation output, not from an orbit table")
    output = read_model_outputs(files, var)
    return validate_transient_output(output, spec, tolerance_wm2=tolerance_wm2,
                                     daily_method=daily_method)


__all__ = [
    "TRANSIENT_CODES",
    "TransientFinding",
    "TransientValidationError",
    "TransientValidationResult",
    "validate_transient",
    "validate_transient_output",
]
