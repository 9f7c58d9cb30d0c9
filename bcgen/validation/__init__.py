"""Check a model's own orbit and insolation code against bcgen, and name what is wrong.

``bcgen validate MODEL_FILE --spec SPEC`` reads what the model produced (TOA
incoming shortwave in NetCDF, or a CSV table from its orbit routine; see
:mod:`bcgen.validation.readers`), computes bcgen's reference for the same
intervals and latitudes from the experiment spec
(:mod:`bcgen.validation.reference`), reports the errors per month and latitude
band with the worst places (:mod:`bcgen.validation.compare`), fits a catalogue
of common mistakes (:mod:`bcgen.validation.diagnose`) and gives a verdict,
``consistent`` or ``inconsistent`` (rule in :mod:`bcgen.validation.compare`).

A NetCDF file on another calendar than the spec's is compared on its own
calendar with the spec's anchor, and is inconsistent (finding
``calendar_differs``) unless that calendar is accepted explicitly
(``accept_file_calendar=True``, ``--accept-file-calendar``): the model did not
run the experiment's year, and only the modeller can say that this is intended.
Calendars that lay out the file's years identically (``standard`` and
``proleptic_gregorian`` after 1582) do not differ.

>>> from bcgen.validation import validate
>>> result = validate("model_rsdt.nc", "configs/protocols/midHolocene.yaml")  # doctest: +SKIP
>>> result.verdict, result.findings[0].code                                   # doctest: +SKIP
('inconsistent', 'perihelion_opposite')
"""

from __future__ import annotations

import os
from dataclasses import dataclass, replace
from typing import Literal

import numpy as np

from bcgen import arguments
from bcgen.errors import BcgenError, InputFileError, SpecError
from bcgen.insolation.daily import daily_mean_from_geometry_wm2
from bcgen.insolation.daily import distance_factor as _distance_factor
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.validation import compare as _compare
from bcgen.validation.compare import DEFAULT_BAND_EDGES_DEG, DEFAULT_TOLERANCE_WM2, Comparison
from bcgen.validation.convention import CANDIDATES, Convention, label, pick
from bcgen.validation.diagnose import CODES, Diagnosis, Finding, say_indistinguishable
from bcgen.validation.readers import (
    TABLE_COLUMNS,
    ModelOutput,
    OrbitTable,
    is_table_path,
    month_of,
    read_model_output,
    read_model_outputs,
    read_orbit_table,
)
from bcgen.validation.reference import DAILY_CONVENTIONS, ForwardModel, Setup

Verdict = Literal["consistent", "inconsistent"]


class ValidateOptionError(BcgenError, ValueError):
    """An impossible option of ``bcgen validate`` (a negative tolerance or noise level)."""

#: The convention of a model's daily means preferred when its output cannot tell them apart
#: (see convention.py); what bcgen itself writes by default is the spec's
#: ``bcgen.spec.schema.DEFAULT_DAILY_METHOD``.
PREFERRED_MODEL_DAILY_METHOD = "day_average"

#: On a consistent output a finding is listed only if it leaves at most this fraction of the
#: RMS misfit.
CONSISTENT_FINDING_FRACTION = 0.5

#: Latitudes at which an orbit table is turned into insolation, degrees north.
TABLE_LATITUDES_DEG = np.arange(-90.0, 91.0, 10.0)


@dataclass(frozen=True)
class ValidationResult:
    """Everything ``bcgen validate`` found (see :mod:`bcgen.validation.report` for the output).

    Attributes
    ----------
    verdict : {"consistent", "inconsistent"}
    reasons : tuple of str
        Why the verdict is ``inconsistent`` (empty when consistent).
    tolerance_wm2, noise_wm2 : float
        T and the noise level σ used (estimated, or given).
    allowed_max_abs_error_wm2, allowed_rms_error_wm2 : float
        T + √(2 ln N) σₐ and T + σₐ, with σₐ = min(σ, T) (rules A and B of
        :mod:`bcgen.validation.compare`).
    comparison : Comparison
        Errors overall, per month and latitude band, worst places.
    findings : tuple of Finding
        Significant explanations, best first (``unexplained`` when inconsistent
        and none is significant).
    output : ModelOutput
        What was read.
    setup : Setup
        The experiment as the reference used it (on the file's calendar).
    table_errors : dict or None
        For an orbit table, the errors of each column given.
    notes : tuple of str
        Assumptions worth knowing.
    noise_limit_wm2 : float
        The largest σ that is not noisier than the tolerance (rule C).
    noise_estimated : bool
        Whether σ was estimated (not given).
    accept_file_calendar : bool
        Whether a file calendar other than the spec's was accepted (rule E).
    convention : Convention or None
        The daily-mean convention of the reference and how it was found
        (:mod:`bcgen.validation.convention`).
    """

    verdict: Verdict
    reasons: tuple[str, ...]
    tolerance_wm2: float
    noise_wm2: float
    allowed_max_abs_error_wm2: float
    comparison: Comparison
    findings: tuple[Finding, ...]
    output: ModelOutput
    setup: Setup
    table_errors: dict | None = None
    notes: tuple[str, ...] = ()
    allowed_rms_error_wm2: float = float("nan")
    noise_limit_wm2: float = float("nan")
    noise_estimated: bool = True
    accept_file_calendar: bool = False
    convention: Convention | None = None

    @property
    def max_abs_error_wm2(self) -> float:
        """Largest absolute error, W m-2."""
        return self.comparison.max_abs_error_wm2

    @property
    def rms_error_wm2(self) -> float:
        """RMS error, W m-2."""
        return self.comparison.rms_error_wm2


def setup_from_spec(spec, daily_method: str | None = None) -> Setup:
    """Return the experiment a model is checked against, from a spec (path or ExperimentSpec).

    The one place where validation reads a spec. ``daily_method`` sets the
    reference's convention; otherwise it is :data:`PREFERRED_MODEL_DAILY_METHOD` until
    :func:`validate_output` determines it. ``spec_daily_method`` keeps the
    spec's ``insolation.daily_method`` when the spec states it (a default is
    not a statement).
    """
    from bcgen.spec import ExperimentSpec, load_spec

    if not isinstance(spec, ExperimentSpec):
        spec = load_spec(spec)
    where = f"{spec.path}: " if spec.path is not None else ""
    if getattr(spec, "transient", None) is not None:
        raise SpecError(f"{where}transient: setup_from_spec describes one time slice; check a "
                        f"transient run with bcgen.validate (each model year against its own "
                        f"orbit) or give a spec with 'epoch'")
    from bcgen.experiment import Experiment

    experiment = Experiment(spec)  # orbit, S0 and calendar resolved as every command does
    return Setup(
        orbit=experiment.orbit,
        solar_constant_wm2=experiment.solar_constant_wm2,
        calendar=experiment.calendar,
        daily_method=daily_method or PREFERRED_MODEL_DAILY_METHOD,
        epoch_label=spec.epoch or "",
        spec_daily_method=_stated_daily_method(spec),
    )


def _stated_daily_method(spec) -> str | None:
    """Return the spec's ``insolation.daily_method`` if its text states it, else None."""
    import yaml

    try:
        data = yaml.safe_load(spec.text or "")
    except yaml.YAMLError:
        return None
    section = data.get("insolation") if isinstance(data, dict) else None
    if isinstance(section, dict) and "daily_method" in section:
        return spec.insolation.daily_method
    return None


def table_to_output(table: OrbitTable, setup: Setup) -> ModelOutput:
    """Turn an orbit table into the insolation it implies, a :class:`ModelOutput` of instants.

    Each row's declination and distance factor give the daily-mean insolation
    at :data:`TABLE_LATITUDES_DEG` with the spec's solar constant (what the
    model's radiation code would receive at that moment, as a zonal mean). A
    missing declination is derived from the true longitude and the spec's
    obliquity, a missing distance factor from the true longitude and the spec's
    e and ϖ.
    """
    orbit = setup.orbit
    lam = None if table.true_longitude_deg is None else np.deg2rad(table.true_longitude_deg)
    if table.declination_deg is not None:
        dec = table.declination_deg
    else:
        dec = np.rad2deg(np.arcsin(np.sin(orbit.obliquity_rad) * np.sin(lam)))
    if table.distance_factor is not None:
        rho = table.distance_factor
    elif lam is not None:
        rho = _distance_factor(lam, orbit.eccentricity, orbit.perihelion_longitude_rad)
    else:
        raise InputFileError(f"{table.source}: needs a distance_factor or a true_longitude_deg "
                             f"column to know the Earth-Sun distance")
    with np.errstate(invalid="ignore"):
        values = daily_mean_from_geometry_wm2(TABLE_LATITUDES_DEG[np.newaxis, :],
                                              np.deg2rad(dec)[:, np.newaxis],
                                              np.asarray(rho, dtype=float)[:, np.newaxis],
                                              setup.solar_constant_wm2)
    values[~(np.isfinite(dec) & np.isfinite(rho))] = np.nan
    given = [name for name in ("declination_deg", "distance_factor", "true_longitude_deg")
             if getattr(table, name) is not None]
    geometry = {name: getattr(table, name) for name in given}
    if table.point_insolation_wm2:
        geometry["point_insolation_wm2"] = table.point_insolation_wm2
    return ModelOutput(
        source=table.source,
        calendar=None,
        frequency="instant",
        year=table.year,
        start_day=table.time_days,
        end_day=table.time_days.copy(),
        month=month_of(setup.calendar, table.year, table.time_days),
        latitude_deg=TABLE_LATITUDES_DEG.copy(),
        insolation_wm2=values,
        geometry=geometry,
        notes=(f"orbit table ({', '.join(given)}) turned into daily-mean insolation at "
               f"{TABLE_LATITUDES_DEG.size} latitudes with the spec's solar constant",),
    )


def _table_errors(output: ModelOutput, model: ForwardModel) -> dict:
    """Errors of each column of an orbit table against the reference."""
    from bcgen.insolation import instantaneous_insolation

    ref = model.geometry(output.start_day, output.year)
    out = {}
    points = output.geometry.get("point_insolation_wm2", {})
    if points:
        setup, diffs = model.setup, []
        for (lat, lon), given in points.items():
            for y in np.unique(output.year):
                sel = output.year == y
                expected = instantaneous_insolation(setup.orbit, setup.calendar,
                                                    output.start_day[sel], lat, lon,
                                                    setup.solar_constant_wm2, year=int(y))
                diffs.append(given[sel] - expected)
        diff = np.concatenate(diffs)
        diff = diff[np.isfinite(diff)]
        if diff.size:
            out["point_insolation_wm2"] = {"max_abs_error": float(np.max(np.abs(diff))),
                                           "rms_error": float(np.sqrt(np.mean(diff * diff))),
                                           "unit": "W m-2", "points": len(points)}
    for name, given in output.geometry.items():
        if name == "point_insolation_wm2":
            continue
        diff = given - ref[name]
        if name == "true_longitude_deg":
            diff = np.mod(diff + 180.0, 360.0) - 180.0
        diff = diff[np.isfinite(diff)]
        if diff.size:
            out[name] = {"max_abs_error": float(np.max(np.abs(diff))),
                         "rms_error": float(np.sqrt(np.mean(diff * diff))),
                         "unit": "1" if name == "distance_factor" else "degree"}
    return out


def same_calendar_layout(file_calendar: str, spec_calendar: ModelCalendar, years) -> bool:
    """Whether a file's calendar lays out ``years`` as the spec's calendar does.

    Equal canonical names, or the same month starts and anchor times (of the
    year before, the year and the year after) in every year of the file:
    ``standard`` and ``proleptic_gregorian`` agree after 1582, ``standard``
    and ``julian`` before.
    """
    if file_calendar == spec_calendar.name:
        return True
    other = ModelCalendar(file_calendar, spec_calendar.anchor)
    try:
        return all(
            np.array_equal(other.month_starts_days(int(y)), spec_calendar.month_starts_days(int(y)))
            and np.allclose(other.anchor_days(int(y)), spec_calendar.anchor_days(int(y)),
                            atol=1e-9)
            for y in np.unique(years))
    except BcgenError:  # a year one of the two calendars does not have
        return False


def validate_output(
    output: ModelOutput,
    setup: Setup,
    tolerance_wm2: float = DEFAULT_TOLERANCE_WM2,
    noise_wm2: float | None = None,
    band_edges_deg=DEFAULT_BAND_EDGES_DEG,
    n_worst: int = 5,
    accept_file_calendar: bool = False,
    daily_method: str | None = None,
    timestep_minutes: float | None = None,
) -> ValidationResult:
    """Compare, diagnose and judge model output that has been read already.

    Parameters
    ----------
    output : ModelOutput
        From :func:`read_model_output` or :func:`table_to_output`.
    setup : Setup
        The experiment (from :func:`setup_from_spec`).
    tolerance_wm2 : float
        T of the verdict rule (default 1 W m-2).
    noise_wm2 : float, optional
        Noise level σ; default: estimated from the residuals (see
        :mod:`bcgen.validation.compare`).
    band_edges_deg : sequence of float
        Latitude band edges of the error table.
    n_worst : int
        Number of worst places reported.
    accept_file_calendar : bool
        Accept a file whose calendar is not the spec's (rule E of the verdict):
        the insolation alone decides. Otherwise such a file is inconsistent,
        with the finding ``calendar_differs``.
    daily_method : {"midday", "day_average", "timestep_mean"}, optional
        Force the daily-mean convention; by default it is read from the file's
        ``daily_method`` attribute, the spec, or fitted
        (:mod:`bcgen.validation.convention`).
    timestep_minutes : float, optional
        The model's time step for ``timestep_mean``.

    Notes
    -----
    Whatever the calendars, the reference is computed on the file's calendar
    with the spec's anchor (the file's days are the model's days).
    """
    if not np.isfinite(tolerance_wm2) or tolerance_wm2 < 0:
        raise ValidateOptionError(f"--tolerance-wm2: expected a number >= 0, got {tolerance_wm2}")
    if noise_wm2 is not None and (not np.isfinite(noise_wm2) or noise_wm2 < 0):
        raise ValidateOptionError(f"--noise-wm2: expected a number >= 0, got {noise_wm2}")
    tol = float(tolerance_wm2)
    notes = list(output.notes)
    calendar_differs = bool(output.calendar) and not same_calendar_layout(
        output.calendar, setup.calendar, output.year)
    if output.calendar and output.calendar != setup.calendar.name:
        how = ("differs from it" if calendar_differs
               else "lays out the file's years in the same way")
        notes.append(f"the file's calendar is {output.calendar} and the spec's "
                     f"{setup.calendar.name} ({how}); the reference uses the file's calendar "
                     f"with the spec's anchor ({setup.calendar.anchor.label})"
                     + ("; accepted with --accept-file-calendar"
                        if calendar_differs and accept_file_calendar else ""))
    spec_calendar = setup.calendar.name
    setup = setup.on_calendar(output.calendar)
    convention, diagnosis, found = _diagnose_under_convention(
        output, setup, daily_method, timestep_minutes)
    model = diagnosis.model
    setup = model.setup
    comparison = _compare.compare_with_reference(output, model.predict(), band_edges_deg,
                                                 n_worst, calendar=setup.calendar)
    significant = [f for f in found if f.significant]
    if noise_wm2 is None:
        # systematic errors that curve in time inflate the estimate: the least noisy residual
        sigma = min([comparison.noise_wm2] + [f.noise_after_wm2 for f in significant])
    else:
        sigma = float(noise_wm2)
    comparison = replace(comparison, noise_wm2=sigma)
    allowed = comparison.allowed_max_abs_error_wm2(tol)
    allowed_rms = comparison.allowed_rms_error_wm2(tol)
    noise_limit = comparison.noise_limit_wm2(tol, estimated=noise_wm2 is None)
    judged = [f.judged(tol, sigma, comparison.n_values) for f in significant]
    explaining = say_indistinguishable([f for f in judged if f.explains], setup.calendar)
    partial = [f for f in judged if not f.explains]

    reasons = []
    if comparison.max_abs_error_wm2 > allowed:
        where = comparison.worst[0].describe() if comparison.worst else ""
        reasons.append(f"max abs error {comparison.max_abs_error_wm2:.2f} W m-2 exceeds the "
                       f"allowed {allowed:.2f} W m-2 ({where})")
    if comparison.rms_error_wm2 > allowed_rms:
        reasons.append(f"RMS error {comparison.rms_error_wm2:.2f} W m-2 exceeds the allowed "
                       f"{allowed_rms:.2f} W m-2")
    if sigma > noise_limit:
        source = "given with --noise-wm2" if noise_wm2 is not None else (
            f"estimated from {comparison.noise_samples} second differences in time")
        reasons.append(f"the output is noisier than the tolerance: noise {sigma:.2f} W m-2 "
                       f"({source}) exceeds {noise_limit:.2f} W m-2, so errors of "
                       f"{tol:g} W m-2 cannot be told from the noise (noise or an error that "
                       f"changes from one value to the next)")
    big = [f for f in explaining if f.largest_effect_wm2 > tol]
    if big:
        reasons.append(f"{big[0].code} explains the differences and changes the insolation by "
                       f"up to {big[0].largest_effect_wm2:.2f} W m-2 (more than the tolerance "
                       f"{tol:g} W m-2)")
    elif not reasons and any(f.largest_effect_wm2 > tol for f in partial):
        f = next(f for f in partial if f.largest_effect_wm2 > tol)
        reasons.append(f"{f.code} fits significantly better than the reference and changes "
                       f"the insolation by up to {f.largest_effect_wm2:.2f} W m-2 (more than "
                       f"the tolerance {tol:g} W m-2)")
    table_errors = _table_errors(output, model) if output.geometry else None
    point = (table_errors or {}).get("point_insolation_wm2")
    if point and point["max_abs_error"] > allowed:
        reasons.append(f"instantaneous insolation at the table's points is off by up to "
                       f"{point['max_abs_error']:.2f} W m-2 (allowed {allowed:.2f} W m-2)")
    insolation_bad = bool(reasons)
    calendar_findings = []
    if calendar_differs and not accept_file_calendar:
        reasons.append(f"the file's calendar {output.calendar} is not the spec's "
                       f"{spec_calendar} (give --accept-file-calendar to check the "
                       f"insolation on the file's calendar)")
        calendar_findings = [diagnosis.calendar_differs(output.calendar, spec_calendar)]
    verdict: Verdict = "inconsistent" if reasons else "consistent"
    if explaining:
        head = explaining
    elif insolation_bad:
        head = [diagnosis.unexplained(partial[0] if partial else None)]
    else:
        head = []
    findings = head + calendar_findings + partial
    if verdict == "consistent":
        # a consistent output lists only explanations of most of its small misfit (a solar
        # constant 0.02 % off fitted to the sampling error of a lat-lon field is not one)
        findings = [f for f in findings
                    if f.misfit_after_wm2 <= CONSISTENT_FINDING_FRACTION * f.misfit_before_wm2]
    return ValidationResult(
        verdict=verdict, reasons=tuple(reasons), tolerance_wm2=tol, noise_wm2=sigma,
        allowed_max_abs_error_wm2=allowed, comparison=comparison, findings=tuple(findings),
        output=output, setup=setup, table_errors=table_errors, notes=tuple(notes),
        allowed_rms_error_wm2=allowed_rms, noise_limit_wm2=noise_limit,
        noise_estimated=noise_wm2 is None, accept_file_calendar=accept_file_calendar,
        convention=convention)

def _stated_convention(output: ModelOutput, setup: Setup, daily_method, timestep_minutes):
    """Return (method, step in days, source) when the convention is stated, else None."""
    step = None if timestep_minutes is None else float(timestep_minutes) / 1440.0
    if daily_method is not None:
        if daily_method not in DAILY_CONVENTIONS:
            raise ValidateOptionError(f"--daily-method: expected one of "
                                      f"{', '.join(DAILY_CONVENTIONS)}, got {daily_method!r}")
        if daily_method == "timestep_mean" and step is None:
            raise ValidateOptionError("--daily-method timestep_mean needs --timestep-minutes "
                                      "(the model's time step)")
        return daily_method, step, "option"
    if output.daily_method in ("midday", "day_average"):
        return output.daily_method, None, "file attribute"
    if setup.spec_daily_method in ("midday", "day_average"):
        return setup.spec_daily_method, None, "spec"
    return None


def _diagnose_under_convention(output: ModelOutput, setup: Setup, daily_method,
                               timestep_minutes) -> tuple[Convention, Diagnosis, list[Finding]]:
    """Determine the daily-mean convention and diagnose under it (:mod:`.convention`)."""
    if timestep_minutes is not None and not (np.isfinite(timestep_minutes)
                                             and 0 < timestep_minutes <= 1440):
        raise ValidateOptionError(f"--timestep-minutes: expected minutes in (0, 1440], got "
                                  f"{timestep_minutes}")
    y = output.insolation_wm2
    valid = np.isfinite(y)
    n = int(valid.sum())
    if output.frequency == "instant":
        diagnosis = Diagnosis(ForwardModel(output, setup), y)
        return Convention(setup.daily_method, None, "instantaneous"), diagnosis, diagnosis.run()
    stated = _stated_convention(output, setup, daily_method, timestep_minutes)
    candidates = {label(m, None if k is None else 1.0 / k): (m, None if k is None else 1.0 / k)
                  for m, k in CANDIDATES}
    if stated is not None:
        method, step, _ = stated
        candidates.setdefault(label(method, step), (method, step))
    models = {key: ForwardModel(output, setup.with_method(m, step))
              for key, (m, step) in candidates.items()}

    def rss_of(kwargs: dict) -> dict:
        out = {}
        for key, model in models.items():
            d = (y - model.predict(**kwargs))[valid]
            out[key] = float(np.einsum("i,i->", d, d))
        return out

    rss = rss_of({})
    if stated is not None:
        method, step, source = stated
        chosen = label(method, step)
        diagnosis = Diagnosis(models[chosen], y)
        found = diagnosis.run()
        note = ""
        best, _ = pick(rss, n)
        if best != chosen and rss[best] < 0.25 * rss[chosen]:
            note = (f"the output fits {best} better (misfit {np.sqrt(rss[best] / n):.3f} "
                    f"against {np.sqrt(rss[chosen] / n):.3f} W m-2); give --daily-method "
                    f"to check it under another convention")
        misfits = {k: float(np.sqrt(v / n)) for k, v in rss.items()}
        return Convention(method, step, source, misfits, None, None, note), diagnosis, found
    chosen, distinguishable = pick(rss, n)
    diagnosis = Diagnosis(models[chosen], y)
    found = diagnosis.run()
    with_finding = None
    top = found[0] if found and found[0].significant else None
    if top is not None:
        rss_top = rss_of(top.replay)
        again, distinguishable = pick(rss_top, n)
        rss, with_finding = rss_top, top.code
        if top.code == "sun_at_day_start":  # the formula once a day: the midday family
            again, distinguishable = "midday", None
        if again != chosen:
            chosen = again
            diagnosis = Diagnosis(models[chosen], y)
            found = diagnosis.run()
    method, step = candidates[chosen]
    misfits = {k: float(np.sqrt(v / n)) for k, v in rss.items()}
    return (Convention(method, step, "fitted", misfits, distinguishable, with_finding),
            diagnosis, found)


def validate(
    model_file,
    spec,
    *,
    var: str | None = None,
    tolerance_wm2: float = DEFAULT_TOLERANCE_WM2,
    noise_wm2: float | None = None,
    daily_method: str | None = None,
    band_edges_deg=DEFAULT_BAND_EDGES_DEG,
    n_worst: int = 5,
    accept_file_calendar: bool = False,
    timestep_minutes: float | None = None,
):
    """Check a model's output against an experiment spec (what ``bcgen validate`` does).

    A time-slice spec (``epoch``) checks the output against its one orbit and returns a
    :class:`ValidationResult`. A transient spec (``transient``) checks each model year
    against the orbit the spec gives it and names transient mistakes
    (:func:`bcgen.validation.transient.validate_transient_output`); it returns a
    :class:`~bcgen.validation.transient.TransientValidationResult`. Both have
    ``verdict``, ``findings`` and ``to_dict()``; the command line prints the same.

    Parameters
    ----------
    model_file : str, path-like or sequence of them
        NetCDF model output: one file, or the files of one run as the model wrote
        them (split by years; joined as :func:`~bcgen.validation.readers.read_model_outputs`
        does). A time slice may instead give a CSV orbit table (suffix ``.csv`` or
        ``.txt``).
    spec : str, path-like or ExperimentSpec
        The experiment spec (a time slice or a transient run).
    var : str, optional
        NetCDF variable name (default: found by standard name).
    tolerance_wm2 : float
        Tolerance T of the verdict, W m-2 (default 1).
    noise_wm2 : float, optional
        Noise level σ, W m-2 (default: estimated). Time slices only.
    daily_method : {"midday", "day_average", "timestep_mean"}, optional
        Force the daily-mean convention (default: from the file's attribute,
        the spec, or fitted; :mod:`bcgen.validation.convention`). A transient check
        takes ``midday`` or ``day_average`` (default ``day_average``).
    band_edges_deg, n_worst, accept_file_calendar, timestep_minutes
        See :func:`validate_output`. Time slices only.

    Returns
    -------
    ValidationResult or TransientValidationResult
    """
    from bcgen.spec import ExperimentSpec, load_spec

    tolerance_wm2, noise_wm2, n_worst, timestep_minutes = _check_options(
        var, tolerance_wm2, noise_wm2, daily_method, band_edges_deg, n_worst,
        accept_file_calendar, timestep_minutes)
    if not isinstance(spec, ExperimentSpec):
        spec = load_spec(arguments.path(spec, "spec", SpecError))
    if isinstance(model_file, (str, bytes, os.PathLike)):
        files = [arguments.path(model_file, "model_file", InputFileError)]
    elif isinstance(model_file, (list, tuple)) and model_file:
        files = [arguments.path(f, "model_file", InputFileError) for f in model_file]
    else:
        raise InputFileError(f"model_file: expected a path or a list of paths, got "
                             f"{arguments.shown(model_file)}")
    if spec.transient is not None:
        _refuse_time_slice_options(
            spec, noise_wm2=noise_wm2 is not None, accept_file_calendar=accept_file_calendar,
            timestep_minutes=timestep_minutes is not None, n_worst=n_worst != 5,
            band_edges_deg=tuple(band_edges_deg) != tuple(DEFAULT_BAND_EDGES_DEG))
        if daily_method not in (None, "midday", "day_average"):
            raise ValidateOptionError(
                f"{spec.path or 'spec'}: a transient run is checked with daily_method "
                f"(--daily-method) midday or day_average, not {daily_method!r}")
        from bcgen.validation.transient import validate_transient

        return validate_transient(files, spec, var=var, tolerance_wm2=tolerance_wm2,
                                  daily_method=daily_method or "day_average")
    setup = setup_from_spec(spec)
    if any(is_table_path(f) for f in files):
        if var is not None:
            raise InputFileError(f"{files[0]}: --var applies to NetCDF files, not to an orbit "
                                 f"table")
        if len(files) != 1:
            raise InputFileError(f"{files[1]}: an orbit table is checked on its own; give one "
                                 "table, or NetCDF files only")
        output = table_to_output(read_orbit_table(files[0]), setup)
    else:
        output = read_model_outputs(files, var)
    return validate_output(output, setup, tolerance_wm2, noise_wm2, band_edges_deg, n_worst,
                           accept_file_calendar, daily_method, timestep_minutes)


#: Most places reported in the error table.
MAX_WORST = 1000


def _check_options(var, tolerance_wm2, noise_wm2, daily_method, band_edges_deg, n_worst,
                   accept_file_calendar, timestep_minutes):
    """Check the options of :func:`validate` by their API names (the command checks its own).

    Returns the numbers as floats and ints: ``(tolerance_wm2, noise_wm2, n_worst,
    timestep_minutes)``.
    """
    error = ValidateOptionError
    arguments.text(var, "var", error, optional=True, what="a NetCDF variable name")
    tolerance_wm2 = arguments.bounded_number(tolerance_wm2, "tolerance_wm2", error, low=0.0,
                                             what="a number of W m-2 >= 0")
    if noise_wm2 is not None:
        noise_wm2 = arguments.bounded_number(noise_wm2, "noise_wm2", error, low=0.0,
                                             what="a number of W m-2 >= 0 or None")
    if daily_method is not None:
        arguments.choice(daily_method, "daily_method", DAILY_CONVENTIONS, error,
                         "daily-mean convention")
    edges = arguments.latitudes_deg(band_edges_deg, "band_edges_deg")
    if edges.ndim != 1 or edges.size < 2 or np.any(np.diff(edges) <= 0):
        raise error("band_edges_deg: expected at least two increasing latitudes, got "
                    f"{arguments.shown(band_edges_deg)}")
    n_worst = arguments.whole_number(n_worst, "n_worst", error, low=0, high=MAX_WORST,
                                     what="a number of places")
    arguments.flag(accept_file_calendar, "accept_file_calendar", error)
    if timestep_minutes is not None:
        step = arguments.bounded_number(timestep_minutes, "timestep_minutes", error, low=0.0,
                                        high=1440.0, low_open=True, what="minutes")
        if abs(1440 / step - round(1440 / step)) > 1e-6:
            raise error(f"timestep_minutes: expected minutes that divide the day (60, 180, "
                        f"...), got {step:g}")
        timestep_minutes = step
    return tolerance_wm2, noise_wm2, n_worst, timestep_minutes


#: Options of a time-slice check only: API name -> command-line option (None: API only).
_TIME_SLICE_OPTIONS = {
    "noise_wm2": "--noise-wm2", "accept_file_calendar": "--accept-file-calendar",
    "timestep_minutes": "--timestep-minutes", "n_worst": None, "band_edges_deg": None,
}


def _refuse_time_slice_options(spec, **given: bool) -> None:
    """Refuse an option that a transient check would ignore, named as both routes name it."""
    for name, on in given.items():
        if on:
            option = _TIME_SLICE_OPTIONS[name]
            shown = f"{name} ({option})" if option else name
            raise ValidateOptionError(
                f"{spec.path or 'spec'}: {shown} applies to a time-slice check; a transient "
                "run is checked model year by model year within the tolerance (leave it out)")


__all__ = [
    "CODES",
    "TABLE_COLUMNS",
    "Comparison",
    "Convention",
    "Finding",
    "ModelOutput",
    "Setup",
    "ValidateOptionError",
    "ValidationResult",
    "read_model_output",
    "read_model_outputs",
    "read_orbit_table",
    "same_calendar_layout",
    "setup_from_spec",
    "table_to_output",
    "validate",
    "validate_output",
]
