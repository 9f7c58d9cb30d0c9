r"""Name what is wrong: fit a model's output against a catalogue of common mistakes.

Each explanation is a version of bcgen's reference computation with one
mistake applied to its inputs (:class:`bcgen.validation.reference.ForwardModel`);
its free parameters are fitted to the model's values by least squares, and the
explanations are ranked by how much they reduce the misfit (the RMS of model
minus prediction over every valid value).

Codes
-----
``perihelion_opposite``
    Longitude of perihelion off by about 180° (a value in the other convention,
    such as the Sun's longitude at perihelion). Fitted value: the ϖ the model
    used, degrees, fitted within 5° of the spec's ϖ + 180°. One free parameter.
``equinox_day_shift``
    Orbit anchored on another day: the equinox (or the anchor) falls Δ days
    later than the spec says (negative: earlier); 0.5 day often means midnight
    versus noon. Fitted value: Δ, days. One free parameter.
``solar_constant_ratio``
    Another solar constant. Fitted value: model S0 / expected S0, a positive
    ratio (a fit at a ratio of zero or below is physically meaningless and not
    reported). One free parameter.
``year_length_mismatch``
    The orbit runs on a year of another length than the calendar (360 versus
    365 days ...). Fitted value: the model's orbital year, days (chosen from
    360, 365, 366), with its anchor shift in ``details``. One free parameter.
``equinox_drift``
    The orbit runs freely on a year of L' days from the first year's anchor and
    is never anchored again, so the equinox drifts through the calendar: the
    tropical year in a ``noleap`` calendar (0.24 day later each year), real
    equinox dates in ``proleptic_gregorian`` (they move with the leap cycle), a
    365-day orbit in a leap-year calendar. Fitted value: L', days (chosen from
    :data:`FREE_YEAR_LENGTHS_DAYS`), with the first year's anchor shift and the
    equinox of each year in ``details``. One free parameter (the shift). In
    one model year it is told from ``year_length_mismatch`` only for years
    within half a day of the calendar's, which that one leaves out.
``day_origin_off_by_one``
    Day of the year counted from another origin: the model's Sun is exactly one
    day early (−1) or late (+1). Fitted value: ±1, days. No free parameter.
    An anchor date one day off gives the same output; when both explain it the
    description says so.
``sun_at_day_start``
    The Sun evaluated at 00:00 instead of 12:00 of each day (the daily-mean
    formula taken at the start of the day). No free parameter; fitted value
    ``"00:00"``. Under the midday convention an orbit anchored half a day late
    gives the same output; when both explain it the description says so.
``orbit_not_applied``
    The model ran the modern orbit. Fitted value: the epoch whose Berger (1978)
    orbit it matches (``1850CE``, ``1950CE`` or ``2000CE``). No free parameter.
``orbital_elements_differ``
    Orbital elements of another epoch or solution. Fitted value:
    {eccentricity, obliquity_deg, perihelion_longitude_deg} (bounded by
    physics: 0 ≤ e ≤ 0.2, 0° ≤ ε ≤ 60°), against the expected ones. Three free
    parameters. ``details["closest_berger1978_epoch"]`` gives the epoch within
    1 Myr whose Berger (1978) elements are closest, with ``matches`` true only
    when the fit explains the output *and* those elements are within the
    distance of about 1 W m-2 of insolation each (see
    :func:`closest_berger1978_epoch`); only then does the description name
    the epoch. A fit that does not explain the output (a calendar mistake fitted
    with orbital elements) can land near some epoch by chance; that is not a
    match.
``calendar_differs``
    The file's calendar is not the spec's (360_day output for a noleap
    experiment ...): the model did not run the experiment's year. Not fitted:
    fitted value the file's calendar, expected value the spec's; the misfits
    are those of the comparison, made on the file's calendar with the spec's
    anchor. Only a file with a calendar is checked (NetCDF), and two calendars
    that lay out the file's years identically (``standard`` and
    ``proleptic_gregorian`` after 1582) do not differ. Reported by
    :func:`bcgen.validation.validate_output`, unless the file's calendar is
    accepted with ``--accept-file-calendar``.
``unexplained``
    Reported first when the insolation is inconsistent and no catalogued
    mistake explains it (see "Explains" below); partial fits follow it.

Fitting
-------
* the solar-constant ratio is linear: r = Σ m·p / Σ p² (p the reference);
* shifts are found by a scan over ±60 days in steps of 1.5 days followed by
  golden-section minimisation (Kiefer 1953) to 10⁻⁴ day;
* scans and the starting fits use daily values at midday (one evaluation per
  day instead of eight), and every minimum is refined on the exact reference;
* e, ε and ϖ are fitted by Levenberg–Marquardt (Levenberg 1944; Marquardt 1963)
  on (e cos ϖ, e sin ϖ, ε), which has no singularity at e = 0 and no jump at
  ϖ = 360°, from several starting orbits, with a forward-difference Jacobian.

Ranking
-------
More free parameters always fit noise a little better, so the explanations are
ranked by the Bayesian information criterion (Schwarz 1978) relative to the
reference, ΔBIC = N ln(RSS_after / RSS_before) + k ln N (N values, k continuous
parameters); misfits below :data:`MISFIT_FLOOR_WM2` count as that floor
(numerical precision). An explanation is *significant* when ΔBIC ≤ −10
(“very strong” evidence on the scale of Kass & Raftery 1995, from memory).
Explains
--------
A significant explanation *explains* the differences (``explains: true``) when,
with the mistake put into the reference, the output would pass the error rules
(A) and (B) of :mod:`bcgen.validation.compare`: the misfit left is at most
T + σₐ in RMS and at most T + √(2 ln N) σₐ at its largest (T the tolerance,
σₐ = min(σ, T)). A significant explanation that leaves more is a *partial*
fit (``explains: false``): it removes part of a difference it does not
account for (a solar-constant ratio fitted to latitudes given in radians
lowers the misfit from 201 to 165 W m-2). Explanations come first, best
first; when there is none and the output is inconsistent the first finding
is ``unexplained``, and partial fits follow, best first, as secondary.

Some explanations are special cases of others: ``day_origin_off_by_one`` of
``equinox_day_shift`` (a shift of exactly ±1 day), ``perihelion_opposite`` and
``orbit_not_applied`` of ``orbital_elements_differ``. The special case is
ranked first unless the general one fits significantly better by the
likelihood-ratio test of nested least-squares models,
(RSS_special − RSS_general) / σ̂² > χ²₀.₉₉₉₉(Δk), σ̂² = RSS_general / (N − k),
with χ²₀.₉₉₉₉ = 15.14 for one parameter and 21.11 for three (standard tables,
from memory; a strict level, because the special case is the likelier mistake).
So a day-of-year origin off by one is not reported as an equinox 1.05 days late
because noise moved the fitted shift; the description says when two
explanations cannot be told apart from the output. The general explanation
must also lower the RMS misfit by more than :data:`MISFIT_FLOOR_WM2`: with tens
of thousands of values the test alone would take the general one's fit to a
smooth error far below any tolerance (the sampling error of a zonal mean of
instantaneous fluxes over 48 longitudes, about 0.2 W m-2) as significant, and
name ``orbital_elements_differ`` for a perihelion 180° off.

References
----------
Kiefer, J. (1953): Sequential minimax search for a maximum. Proc. Amer. Math.
Soc. 4, 502-506. doi:10.1090/S0002-9939-1953-0055639-3.
Levenberg, K. (1944): A method for the solution of certain non-linear problems
in least squares. Quart. Appl. Math. 2, 164-168. doi:10.1090/qam/10666.
Marquardt, D. W. (1963): An algorithm for least-squares estimation of nonlinear
parameters. J. SIAM 11, 431-441. doi:10.1137/0111030.
Schwarz, G. (1978): Estimating the dimension of a model. Ann. Statist. 6,
461-464. doi:10.1214/aos/1176344136.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace
from functools import cache

import numpy as np

from bcgen.epochs import format_epoch
from bcgen.insolation.monthly import TROPICAL_YEAR_DAYS
from bcgen.orbit import solve as solve_orbit
from bcgen.orbit.elements import OrbitalElements
from bcgen.validation.compare import max_abs_allowed_wm2, noise_estimate, rms_allowed_wm2
from bcgen.validation.convention import SIGNIFICANT_DELTA_BIC
from bcgen.validation.dates import date_of_day, day_in_words
from bcgen.validation.reference import ForwardModel, orbit_with

#: Differences below this (W m-2) are numerical precision, not a misfit.
MISFIT_FLOOR_WM2 = 0.01
#: Range and step of the scan for anchor shifts, days.
SHIFT_RANGE_DAYS = 60.0
SHIFT_STEP_DAYS = 1.5
#: Half-width of the search for the perihelion longitude the model used, degrees.
PERIHELION_RANGE_DEG = 5.0
#: Largest scaled distance (about 1 W m-2 of insolation per unit) at which fitted elements
#: match the Berger (1978) elements of an epoch (:func:`closest_berger1978_epoch`).
MATCH_DISTANCE = 3.0
#: Orbital-year lengths tried by ``year_length_mismatch``, days.
#: A length within half a day of the calendar's is left out (it acts like a shift).
YEAR_LENGTHS_DAYS = (360.0, 365.0, 366.0)
#: Years tried by ``equinox_drift`` for a freely running orbit, days: the mean tropical
#: year (bcgen.insolation.monthly.TROPICAL_YEAR_DAYS) and the calendar years.
FREE_YEAR_LENGTHS_DAYS = (TROPICAL_YEAR_DAYS, 365.0, 366.0, 360.0)
#: Half-range of the scan for the first year's anchor shift of ``equinox_drift``, days.
DRIFT_SHIFT_RANGE_DAYS = 6.0
#: Epochs (years from 1950 CE, with their labels) taken as "the modern orbit" by
#: ``orbit_not_applied``: PMIP4 piControl (1850 CE), the BP "present" (1950 CE), and 2000 CE.
MODERN_EPOCHS = {-100.0: "1850CE", 0.0: "1950CE", 50.0: "2000CE"}

#: 0.9999 quantiles of χ² with 1, 2 and 3 degrees of freedom (standard tables, from memory;
#: for 2 degrees of freedom the quantile is exactly −2 ln(1 − 0.9999)).
CHI2_9999 = {1: 15.137, 2: 18.421, 3: 21.108}
#: (special case, general explanation) pairs for the nested-model test.
NESTED = (("day_origin_off_by_one", "equinox_day_shift"),
          ("sun_at_day_start", "equinox_day_shift"),
          ("perihelion_opposite", "orbital_elements_differ"),
          ("orbit_not_applied", "orbital_elements_differ"))

#: Every code and what it means (a test checks that the module docstring lists each).
CODES: dict[str, str] = {
    "perihelion_opposite": "longitude of perihelion off by 180 degrees",
    "equinox_day_shift": "orbit anchored on another day (shift fitted, days)",
    "solar_constant_ratio": "another solar constant (ratio fitted)",
    "year_length_mismatch": "orbital year of another length than the calendar year",
    "equinox_drift": "orbit running freely on a year of its own, never anchored again "
                     "(the equinox drifts through the calendar)",
    "day_origin_off_by_one": "day of the year counted from another origin (one day off)",
    "sun_at_day_start": "the Sun evaluated at 00:00 instead of 12:00 of each day",
    "orbit_not_applied": "the modern orbit instead of the experiment's",
    "orbital_elements_differ": "orbital elements of another epoch or solution (e, obliquity, "
                               "perihelion fitted)",
    "calendar_differs": "the file's calendar is not the spec's (not fitted)",
    "unexplained": "inconsistent, and no catalogued mistake explains it",
}


@dataclass(frozen=True)
class Finding:
    """One explanation of the differences, with its fit.

    Attributes
    ----------
    code : str
        A key of :data:`CODES`.
    description : str
        One sentence with the fitted value in words.
    fitted_value : float, str, dict or None
        The fitted parameter (a number), the chosen alternative (a string) or
        several parameters (a dict).
    expected_value : float, str, dict or None
        What the spec requires, in the same form.
    unit : str
        Unit of the fitted value (``days``, ``degree``, ``1`` ...).
    misfit_before_wm2, misfit_after_wm2 : float
        RMS of model minus reference, and of model minus the explanation's prediction.
    largest_effect_wm2 : float
        Largest difference the mistake makes to the reference (how big it is).
    free_parameters : int
        Continuous parameters fitted.
    delta_bic : float
        Information criterion relative to the reference (lower is better).
    significant : bool
        ``delta_bic <= SIGNIFICANT_DELTA_BIC``.
    details : dict
        Extra fitted quantities.
    max_abs_misfit_after_wm2 : float
        Largest absolute difference between the model and the explanation's prediction.
    noise_after_wm2 : float
        Noise level σ of the residual left by the explanation
        (:func:`bcgen.validation.compare.noise_estimate`).
    explains : bool or None
        Whether the explanation accounts for the differences to within the
        tolerance (module docstring, "Explains"); None until judged.
    """

    code: str
    description: str
    fitted_value: float | str | dict | None
    expected_value: float | str | dict | None
    unit: str
    misfit_before_wm2: float
    misfit_after_wm2: float
    largest_effect_wm2: float
    free_parameters: int
    delta_bic: float
    significant: bool
    details: dict = field(default_factory=dict)
    max_abs_misfit_after_wm2: float = float("nan")
    noise_after_wm2: float = float("nan")
    explains: bool | None = None
    replay: dict = field(default_factory=dict, repr=False, compare=False)

    def judged(self, tolerance_wm2: float, noise_wm2: float, n_values: int) -> Finding:
        """Return a copy with ``explains`` set by the rule of the module docstring."""
        ok = (self.significant
              and self.misfit_after_wm2 <= rms_allowed_wm2(tolerance_wm2, noise_wm2)
              and self.max_abs_misfit_after_wm2 <= max_abs_allowed_wm2(
                  tolerance_wm2, noise_wm2, n_values))
        judged = replace(self, explains=bool(ok))
        closest = self.details.get("closest_berger1978_epoch")
        if closest is not None:
            matches = bool(ok and closest["distance"] < MATCH_DISTANCE)
            details = dict(self.details)
            details["closest_berger1978_epoch"] = {**closest, "matches": matches}
            text = self.description
            if matches:
                text += f"; these are the Berger (1978) elements of {closest['epoch']}"
            judged = replace(judged, details=details, description=text)
        return judged

    def to_dict(self) -> dict:
        """Return the finding as JSON-ready data (keys of the ``findings`` objects)."""
        return {
            "code": self.code,
            "description": self.description,
            "fitted_value": self.fitted_value,
            "expected_value": self.expected_value,
            "unit": self.unit,
            "misfit_before_wm2": self.misfit_before_wm2,
            "misfit_after_wm2": self.misfit_after_wm2,
            "largest_effect_wm2": self.largest_effect_wm2,
            "free_parameters": self.free_parameters,
            "delta_bic": self.delta_bic,
            "significant": self.significant,
            "explains": self.explains,
            "max_abs_misfit_after_wm2": self.max_abs_misfit_after_wm2,
            "details": self.details,
        }


# -----------------------------------------------------------------------------------------
# Minimisers (numpy only)
# -----------------------------------------------------------------------------------------
_INV_PHI = (np.sqrt(5.0) - 1.0) / 2.0


def _sumsq(v: np.ndarray) -> float:
    """Σ v², without BLAS: multithreaded BLAS on long vectors is slower on busy machines."""
    return float(np.einsum("i,i->", v, v))


def golden_section(f: Callable[[float], float], lo: float, hi: float,
                   tol: float = 1e-4) -> tuple[float, float]:
    """Minimise a unimodal function on [lo, hi] by golden-section search (Kiefer 1953).

    Returns
    -------
    (x, f(x)) at the best point found.
    """
    a, b = lo, hi
    c, d = b - _INV_PHI * (b - a), a + _INV_PHI * (b - a)
    fc, fd = f(c), f(d)
    while b - a > tol:
        if fc <= fd:
            b, d, fd = d, c, fc
            c = b - _INV_PHI * (b - a)
            fc = f(c)
        else:
            a, c, fc = c, d, fd
            d = a + _INV_PHI * (b - a)
            fd = f(d)
    return (c, fc) if fc <= fd else (d, fd)


def levenberg_marquardt(
    residual: Callable[[np.ndarray], np.ndarray],
    x0: np.ndarray,
    steps: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    max_iter: int = 40,
) -> tuple[np.ndarray, float]:
    """Least squares by Levenberg–Marquardt with a forward-difference Jacobian.

    Parameters are clipped to [lower, upper]. Returns the best parameters and
    their sum of squared residuals.
    """
    x = np.clip(np.asarray(x0, dtype=float), lower, upper)
    r = residual(x)
    rss = _sumsq(r)
    mu = 1e-3
    for _ in range(max_iter):
        jac = np.empty((r.size, x.size))
        for j in range(x.size):
            h = steps[j] if x[j] + steps[j] <= upper[j] else -steps[j]
            xh = x.copy()
            xh[j] += h
            jac[:, j] = (residual(xh) - r) / h
        jtj, jtr = np.einsum("ij,ik->jk", jac, jac), np.einsum("ij,i->j", jac, r)
        improved = False
        for _ in range(8):
            a = jtj + mu * np.diag(np.diag(jtj) + 1e-12)
            try:
                delta = -np.linalg.solve(a, jtr)
            except np.linalg.LinAlgError:
                mu *= 10.0
                continue
            x_new = np.clip(x + delta, lower, upper)
            r_new = residual(x_new)
            rss_new = _sumsq(r_new)
            if rss_new < rss:
                converged = rss - rss_new <= 1e-10 * rss + 1e-14 or np.all(
                    np.abs(x_new - x) <= 1e-3 * steps)
                x, r, rss = x_new, r_new, rss_new
                mu = max(mu / 10.0, 1e-9)
                improved = True
                break
            mu *= 10.0
        if not improved or converged:
            break
    return x, rss


# -----------------------------------------------------------------------------------------
# The diagnosis
# -----------------------------------------------------------------------------------------
class Diagnosis:
    """Fits every explanation of :data:`CODES` to one model output.

    Parameters
    ----------
    model : ForwardModel
        The reference computation on the output's intervals and latitudes.
    values_wm2 : numpy.ndarray
        The model's values, shape (n_times, n_latitudes), NaN where missing.
    """

    def __init__(self, model: ForwardModel, values_wm2: np.ndarray):
        self.model = model
        # Scans and starting fits use one node per day (midday), 8 times cheaper than the
        # day average; every minimum is then refined with the exact model.
        self.coarse = (model if model.setup.daily_method == "midday"
                       else model.with_method("midday"))
        self.valid = np.isfinite(values_wm2)
        self.y = values_wm2[self.valid]
        self.n = int(self.y.size)
        self.reference = model.predict()[self.valid]
        self.rss_before = self._rss(self.reference)
        self.misfit_before = float(np.sqrt(self.rss_before / self.n))
        setup = model.setup
        self.orbit = setup.orbit
        self.calendar = setup.calendar
        self.anchor_day = float(setup.calendar.anchor_day(1))
        self.calendar_year_days = float(setup.calendar.year_length_days(1))

    # --- helpers ----------------------------------------------------------------------------
    def _rss(self, prediction: np.ndarray) -> float:
        d = self.y - prediction
        return _sumsq(d)

    def predict(self, coarse: bool = False, **kwargs) -> np.ndarray:
        """Return the prediction at the valid values (see ForwardModel.predict)."""
        return (self.coarse if coarse else self.model).predict(**kwargs)[self.valid]

    def delta_bic(self, rss_after: float, k: int) -> float:
        """ΔBIC of an explanation with ``k`` continuous parameters (see module docstring)."""
        floor = self.n * MISFIT_FLOOR_WM2**2
        return float(self.n * np.log(max(rss_after, floor) / max(self.rss_before, floor))
                     + k * np.log(self.n))

    def _finding(self, code, description, fitted, expected, unit, prediction, k,
                 details=None, replay=None) -> Finding:
        rss = self._rss(prediction)
        score = self.delta_bic(rss, k)
        left = self.y - prediction
        residual = np.full(self.valid.shape, np.nan)
        residual[self.valid] = left
        return Finding(
            code=code,
            description=description,
            fitted_value=fitted,
            expected_value=expected,
            unit=unit,
            misfit_before_wm2=self.misfit_before,
            misfit_after_wm2=float(np.sqrt(rss / self.n)),
            largest_effect_wm2=float(np.max(np.abs(prediction - self.reference))),
            free_parameters=k,
            delta_bic=score,
            significant=score <= SIGNIFICANT_DELTA_BIC,
            details=details or {},
            max_abs_misfit_after_wm2=float(np.max(np.abs(left))),
            noise_after_wm2=noise_estimate(self.model.output, residual)[0],
            replay=replay or {},
        )

    def _shift_rss(self, coarse: bool = False, **kwargs) -> Callable[[float], float]:
        return lambda s: self._rss(self.predict(coarse, shift_days=s, **kwargs))

    def _fit_shift(self, half_range: float, **kwargs) -> tuple[float, float]:
        """Fit an anchor shift: coarse scan, then golden section on the exact model."""
        grid = np.arange(-half_range, half_range + 0.5 * SHIFT_STEP_DAYS, SHIFT_STEP_DAYS)
        coarse = self._shift_rss(True, **kwargs)
        best = float(grid[int(np.argmin([coarse(x) for x in grid]))])
        return golden_section(self._shift_rss(**kwargs), best - SHIFT_STEP_DAYS,
                              best + SHIFT_STEP_DAYS)

    # --- the catalogue ------------------------------------------------------------------------
    def perihelion_opposite(self) -> Finding:
        """Fit ``perihelion_opposite``: the experiment's orbit with ϖ near ϖ + 180°."""
        varpi = float(self.orbit.perihelion_longitude_deg)
        opposite = varpi + 180.0

        def rss(w: float, coarse: bool) -> float:
            orbit = orbit_with(self.orbit, perihelion_longitude_deg=w % 360.0)
            return self._rss(self.predict(coarse, orbit=orbit))

        w, _ = golden_section(lambda w: rss(w, True), opposite - PERIHELION_RANGE_DEG,
                              opposite + PERIHELION_RANGE_DEG, tol=0.01)
        if self.coarse is not self.model:
            w, _ = golden_section(lambda x: rss(x, False), w - 0.05, w + 0.05, tol=0.002)
        used = round(w % 360.0, 2)
        orbit = orbit_with(self.orbit, perihelion_longitude_deg=used)
        pred = self.predict(orbit=orbit)
        return self._finding(
            "perihelion_opposite",
            f"longitude of perihelion 180 degrees off: the output matches perihelion "
            f"longitude {used:.2f} deg instead of {varpi:.2f} deg (the spec's value + 180 is "
            f"{opposite % 360.0:.2f}; a value given in the other convention, such as the Sun's "
            f"longitude at perihelion)",
            used, round(varpi, 6), "degree", pred, 1, replay={"orbit": orbit})

    def equinox_day_shift(self) -> Finding:
        """Fit ``equinox_day_shift``: the anchor shift in days."""
        shift, _ = self._fit_shift(SHIFT_RANGE_DAYS)
        pred = self.predict(shift_days=shift)
        when = "later" if shift >= 0 else "earlier"
        what = "the March equinox" if self.calendar.anchor.kind == "march_equinox" else \
            "perihelion"
        return self._finding(
            "equinox_day_shift",
            f"orbit anchored {abs(shift):.2f} days {when} than the spec says: {what} on "
            f"{day_in_words(self.anchor_day + shift, self.calendar)} instead of "
            f"{day_in_words(self.anchor_day, self.calendar)}",
            round(shift, 4), 0.0, "days", pred, 1,
            {"anchor_day_fitted": round(self.anchor_day + shift, 4),
             "anchor_day_expected": self.anchor_day,
             "anchor_date_fitted": date_of_day(self.anchor_day + shift, self.calendar),
             "anchor_date_expected": date_of_day(self.anchor_day, self.calendar)},
            replay={"shift_days": shift})

    def solar_constant_ratio(self) -> Finding:
        """Fit ``solar_constant_ratio``: linear least squares for the ratio."""
        p = self.reference
        pp = _sumsq(p)
        ratio = float(np.einsum("i,i->", self.y, p) / pp) if pp > 0 else 1.0
        if not ratio > 0.0:  # a sign-flipped output is not another solar constant
            return None
        s0 = self.model.setup.solar_constant_wm2
        return self._finding(
            "solar_constant_ratio",
            f"another solar constant: model/expected = {ratio:.5f} (about "
            f"{ratio * s0:.2f} W m-2 instead of {s0:g})",
            round(ratio, 7), 1.0, "1", ratio * p, 1,
            {"solar_constant_wm2_fitted": round(ratio * s0, 4),
             "solar_constant_wm2_expected": s0}, replay={"solar_ratio": ratio})

    def year_length_mismatch(self) -> Finding:
        """Fit ``year_length_mismatch``: each other year length, with its anchor shift."""
        best = None
        for length in YEAR_LENGTHS_DAYS:
            if abs(length - self.calendar_year_days) < 0.5:
                continue
            shift, rss = self._fit_shift(SHIFT_RANGE_DAYS / 2, orbit_year_days=length)
            if best is None or rss < best[2]:
                best = (length, shift, rss)
        length, shift, _ = best
        pred = self.predict(shift_days=shift, orbit_year_days=length)
        return self._finding(
            "year_length_mismatch",
            f"the orbit runs on a {length:g}-day year in a {self.calendar_year_days:g}-day "
            f"calendar (anchor {shift:+.2f} days from the spec's)",
            length, self.calendar_year_days, "days", pred, 1,
            {"anchor_shift_days": round(shift, 4)},
            replay={"shift_days": shift, "orbit_year_days": length})

    def equinox_drift(self) -> Finding | None:
        """Fit ``equinox_drift``: each free year length, with the first year's anchor shift."""
        years = np.unique(self.model.output.year)
        step = 0.5
        grid = np.arange(-DRIFT_SHIFT_RANGE_DAYS, DRIFT_SHIFT_RANGE_DAYS + 0.5 * step, step)
        best = None  # the year length and shift of the coarse scans, then refined once
        for length in FREE_YEAR_LENGTHS_DAYS:
            if self.calendar.every_year_alike and abs(length - self.calendar_year_days) < 1e-9:
                continue  # the calendar's own year: the spec's orbit
            if years.size == 1 and abs(length - self.calendar_year_days) >= 0.5:
                continue  # one year: year_length_mismatch already tries it
            coarse = self._shift_rss(True, free_year_days=length)
            rss = [coarse(x) for x in grid]
            i = int(np.argmin(rss))
            if best is None or rss[i] < best[2]:
                best = (length, float(grid[i]), rss[i])
        if best is None:
            return None
        length, shift, _ = best
        shift, _ = golden_section(self._shift_rss(free_year_days=length), shift - step,
                                  shift + step)
        pred = self.predict(shift_days=shift, free_year_days=length)
        y0, y1 = int(years[0]), int(years[-1])
        equinoxes, drift = {}, shift
        for y in range(y0, y1 + 1):
            if y == 0 and not self.calendar.has_year_zero:
                continue
            anchor = float(self.calendar.anchor_day(y))
            if len(equinoxes) < 8 or y == y1:
                equinoxes[str(y)] = date_of_day(anchor + drift, self.calendar, year=y)
            drift += length - float(self.calendar.anchor_day(y + 1)
                                    + self.calendar.year_length_days(y) - anchor)
        what = ("the tropical year" if abs(length - TROPICAL_YEAR_DAYS) < 1e-6
                else f"a {length:g}-day year")
        first, last = equinoxes[str(y0)], equinoxes[str(y1)]
        return self._finding(
            "equinox_drift",
            f"the orbit runs freely on {what} ({length:g} days) and is not anchored again "
            f"each calendar year: the March equinox drifts from {first} in year {y0} to "
            f"{last} in year {y1} instead of staying on "
            f"{date_of_day(self.anchor_day, self.calendar)}",
            length, "anchored every year", "days", pred, 1,
            {"anchor_shift_days_first_year": round(shift, 4), "equinox_dates": equinoxes},
            replay={"shift_days": shift, "free_year_days": length})

    def day_origin_off_by_one(self) -> Finding:
        """Fit ``day_origin_off_by_one``: the better of shifts of -1 and +1 day."""
        options = [(s, self.predict(shift_days=s)) for s in (-1.0, 1.0)]
        shift, pred = min(options, key=lambda o: self._rss(o[1]))
        how = ("one day early (day numbers counted from 1 where the orbit code expects 0)"
               if shift < 0 else
               "one day late (day numbers counted from 0 where the orbit code expects 1)")
        return self._finding("day_origin_off_by_one",
                             f"day of the year off by one: the model's Sun runs {how}",
                             shift, 0.0, "days", pred, 0, replay={"shift_days": shift})

    def sun_at_day_start(self) -> Finding | None:
        """Fit ``sun_at_day_start``: the daily-mean formula at 00:00 of each day."""
        if self.model.output.frequency == "instant":
            return None
        pred = self.predict(method="start_of_day")
        return self._finding(
            "sun_at_day_start",
            "the Sun evaluated at 00:00 instead of 12:00 of each day: the output holds the "
            "daily-mean formula at the start of each day, not at its middle",
            "00:00", "12:00", "time of day", pred, 0, replay={"method": "start_of_day"})

    def orbit_not_applied(self) -> Finding | None:
        """Fit ``orbit_not_applied``: the best of the modern orbits (None if one is the spec's)."""
        best = None
        for years in MODERN_EPOCHS:
            modern = solve_orbit(years)
            if _same_orbit(modern, self.orbit):
                continue
            pred = self.predict(orbit=modern)
            rss = self._rss(pred)
            if best is None or rss < best[2]:
                best = (years, modern, rss, pred)
        if best is None:
            return None
        years, modern, _, pred = best
        label = MODERN_EPOCHS[years]
        return self._finding(
            "orbit_not_applied",
            f"the experiment's orbit was not applied: the output matches the {label} orbit "
            f"(e={float(modern.eccentricity):.6f}, obliquity {float(modern.obliquity_deg):.3f} "
            f"deg, perihelion longitude {float(modern.perihelion_longitude_deg):.2f} deg)",
            label, self.model.setup.epoch_label or "the spec's orbit", "epoch", pred, 0,
            {"orbit": _orbit_dict(modern)}, replay={"orbit": modern})

    def orbital_elements_differ(self) -> Finding:
        """Fit ``orbital_elements_differ``: e, ε and ϖ by Levenberg–Marquardt."""
        o = self.orbit

        def to_params(orbit: OrbitalElements) -> np.ndarray:
            e, w = float(orbit.eccentricity), float(orbit.perihelion_longitude_rad)
            return np.array([e * np.cos(w), e * np.sin(w), float(orbit.obliquity_deg)])

        def to_orbit(x: np.ndarray) -> OrbitalElements:
            e = float(np.hypot(x[0], x[1]))
            w = float(np.rad2deg(np.arctan2(x[1], x[0]))) % 360.0
            return OrbitalElements(min(e, 0.2), float(x[2]), w, None, "fixed")

        def residual(x, coarse=False):
            return self.y - self.predict(coarse, orbit=to_orbit(x))

        starts = [o, orbit_with(o, perihelion_longitude_deg=float(
            o.perihelion_longitude_deg) + 180.0), solve_orbit(0.0)]
        starts += [orbit_with(o, perihelion_longitude_deg=float(o.perihelion_longitude_deg) + d)
                   for d in (90.0, 270.0)]
        steps = np.array([1e-5, 1e-5, 1e-4])
        lower, upper = np.array([-0.2, -0.2, 0.0]), np.array([0.2, 0.2, 60.0])
        best_x, best_rss = None, np.inf
        for start in starts:
            x, rss = levenberg_marquardt(lambda p: residual(p, True), to_params(start), steps,
                                         lower, upper)
            if rss < best_rss:
                best_x, best_rss = x, rss
        if self.coarse is not self.model:
            best_x, _ = levenberg_marquardt(residual, best_x, steps, lower, upper)
        fitted = to_orbit(best_x)
        pred = self.predict(orbit=fitted)
        closest = closest_berger1978_epoch(fitted)
        fit_d, exp_d = _orbit_dict(fitted), _orbit_dict(o)
        text = (f"orbital elements differ: fitted e={fit_d['eccentricity']:.6f}, obliquity "
                f"{fit_d['obliquity_deg']:.3f} deg, perihelion longitude "
                f"{fit_d['perihelion_longitude_deg']:.2f} deg against e="
                f"{exp_d['eccentricity']:.6f}, {exp_d['obliquity_deg']:.3f} deg, "
                f"{exp_d['perihelion_longitude_deg']:.2f} deg")
        return self._finding("orbital_elements_differ", text, fit_d, exp_d, "mixed", pred, 3,
                             {"closest_berger1978_epoch": closest}, replay={"orbit": fitted})

    # --- all together ---------------------------------------------------------------------
    def run(self) -> list[Finding]:
        """Every explanation, best first (lowest ΔBIC; ties: fewer parameters first)."""
        found = [self.perihelion_opposite(), self.equinox_day_shift(),
                 self.solar_constant_ratio(), self.year_length_mismatch(),
                 self.equinox_drift(), self.day_origin_off_by_one(), self.sun_at_day_start(),
                 self.orbit_not_applied(),
                 self.orbital_elements_differ()]
        order = list(CODES)
        found = [f for f in found if f is not None]
        found = sorted(found, key=lambda f: (round(f.delta_bic, 6), f.free_parameters,
                                             order.index(f.code)))
        for special, general in NESTED:
            codes = [f.code for f in found]
            if special not in codes or general not in codes:
                continue
            i, j = codes.index(special), codes.index(general)
            if j < i and not self._general_needed(found[i], found[j]):
                found.insert(j, found.pop(i))
        return found

    def _general_needed(self, special: Finding, general: Finding) -> bool:
        """Whether the general explanation is needed (module docstring, "Ranking").

        It must fit significantly better (likelihood-ratio test) and lower the RMS
        misfit by more than :data:`MISFIT_FLOOR_WM2`.
        """
        floor = self.n * MISFIT_FLOOR_WM2**2
        rss_s = max(self.n * special.misfit_after_wm2**2, floor)
        rss_g = max(self.n * general.misfit_after_wm2**2, floor)
        dof = general.free_parameters - special.free_parameters
        sigma2 = rss_g / max(self.n - general.free_parameters, 1)
        gain_wm2 = special.misfit_after_wm2 - general.misfit_after_wm2
        return (rss_s - rss_g) / sigma2 > CHI2_9999[dof] and gain_wm2 > MISFIT_FLOOR_WM2

    def unexplained(self, partial: Finding | None = None) -> Finding:
        """Return the finding reported when nothing in the catalogue explains an inconsistency.

        ``partial`` is the best partial fit, named in the description.
        """
        text = "no catalogued mistake explains the differences"
        if partial is not None:
            text += (f" (the best partial fit, {partial.code}, leaves a misfit of "
                     f"{partial.misfit_after_wm2:.2f} of {partial.misfit_before_wm2:.2f} W m-2)")
        text += "; see the worst places and the errors per month and latitude band"
        return Finding("unexplained", text, None, None, "", self.misfit_before,
                       self.misfit_before, 0.0, 0, 0.0, False,
                       max_abs_misfit_after_wm2=float(np.max(np.abs(self.y - self.reference))),
                       noise_after_wm2=float("nan"), explains=False)

    def calendar_differs(self, file_calendar: str, spec_calendar: str) -> Finding:
        """Return the finding of a file whose calendar is not the spec's (nothing fitted)."""
        return Finding(
            "calendar_differs",
            f"the file is on the {file_calendar} calendar and the spec on {spec_calendar}: the "
            f"model did not run the experiment's year (compared on the file's calendar with "
            f"the spec's anchor; give --accept-file-calendar if the {file_calendar} calendar "
            f"is intended)",
            file_calendar, spec_calendar, "calendar", self.misfit_before, self.misfit_before,
            0.0, 0, 0.0, False,
            max_abs_misfit_after_wm2=float(np.max(np.abs(self.y - self.reference))),
            noise_after_wm2=float("nan"), explains=None)


def _same_orbit(a: OrbitalElements, b: OrbitalElements) -> bool:
    dw = abs((float(a.perihelion_longitude_deg) - float(b.perihelion_longitude_deg) + 180.0)
             % 360.0 - 180.0)
    return (abs(float(a.eccentricity) - float(b.eccentricity)) < 2e-5
            and abs(float(a.obliquity_deg) - float(b.obliquity_deg)) < 5e-3 and dw < 0.5)


def _orbit_dict(orbit: OrbitalElements) -> dict:
    return {"eccentricity": round(float(orbit.eccentricity), 7),
            "obliquity_deg": round(float(orbit.obliquity_deg), 5),
            "perihelion_longitude_deg": round(float(orbit.perihelion_longitude_deg), 4)}


@cache
def _berger_grid() -> tuple[np.ndarray, np.ndarray]:
    years = np.arange(-1_000_000.0, 50.0 + 1.0, 100.0)
    el = solve_orbit(years)
    w = el.perihelion_longitude_rad
    return years, np.stack([el.eccentricity * np.cos(w), el.eccentricity * np.sin(w),
                            el.obliquity_deg], axis=1)


def closest_berger1978_epoch(orbit: OrbitalElements) -> dict:
    """Find the epoch within 1 Myr whose Berger (1978) orbit is closest to the given elements.

    Distance: the element differences scaled by 0.001 for e·cos ϖ and e·sin ϖ and
    by 0.05° for ε (about 1 W m-2 of insolation each). ``matches`` here says only
    that the distance is below :data:`MATCH_DISTANCE`; a finding's ``matches``
    also requires that the fit explains the output (:meth:`Finding.judged`).
    Searched on a 100-year grid, refined to 1 year.
    """
    years, grid = _berger_grid()
    scale = np.array([1e-3, 1e-3, 0.05])
    w = float(orbit.perihelion_longitude_rad)
    target = np.array([float(orbit.eccentricity) * np.cos(w),
                       float(orbit.eccentricity) * np.sin(w), float(orbit.obliquity_deg)])
    dist = np.sqrt((((grid - target) / scale) ** 2).sum(axis=1))
    i = int(np.argmin(dist))
    fine = np.arange(years[max(i - 1, 0)], years[min(i + 1, years.size - 1)] + 1.0, 1.0)
    el = solve_orbit(fine)
    fw = el.perihelion_longitude_rad
    fg = np.stack([el.eccentricity * np.cos(fw), el.eccentricity * np.sin(fw),
                   el.obliquity_deg], axis=1)
    fd = np.sqrt((((fg - target) / scale) ** 2).sum(axis=1))
    j = int(np.argmin(fd))
    return {"epoch": format_epoch(float(fine[j])), "years_from_1950": float(fine[j]),
            "distance": round(float(fd[j]), 3), "matches": bool(fd[j] < MATCH_DISTANCE)}


def say_indistinguishable(explaining: list[Finding], calendar) -> list[Finding]:
    """Add one sentence to the first explanation when the output cannot tell it from the next.

    A day-of-year origin off by one and an anchor date one day off (the same
    shift of the Sun), and the Sun at 00:00 and an anchor half a day late under
    the midday convention, give the same output; when both of such a pair
    explain it, the first says so and names the other in
    ``details["indistinguishable_from"]``.
    """
    if len(explaining) < 2:
        return explaining
    first, shift = explaining[0], next(
        (f for f in explaining[1:] if f.code == "equinox_day_shift"), None)
    if shift is None:
        return explaining
    fitted = float(shift.fitted_value)
    if first.code == "day_origin_off_by_one" and abs(fitted - first.fitted_value) < 0.25:
        anchor = shift.details["anchor_day_expected"] + first.fitted_value
        sentence = (f"An anchor date one day off (the equinox on "
                    f"{day_in_words(anchor, calendar)}) gives the same output, so the two "
                    f"cannot be told apart from it.")
    elif first.code == "sun_at_day_start" and abs(fitted - 0.5) < 0.25:
        sentence = ("An orbit anchored half a day late gives the same output, so the two "
                    "cannot be told apart from it.")
    else:
        return explaining
    details = {**first.details, "indistinguishable_from": "equinox_day_shift"}
    return [replace(first, description=f"{first.description}. {sentence}", details=details)
            ] + explaining[1:]
