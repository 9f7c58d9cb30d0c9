r"""Errors of a model's insolation against bcgen's reference, and the verdict.

Errors are model minus reference, W m-2, over every value that is not missing:

* overall: the maximum absolute error, the RMS error and the mean error (bias);
* per calendar month and latitude band (default bands 30° wide, from 90°S):
  maximum absolute, RMS, and relative error (RMS error over RMS reference in the
  cell; none where the reference is below 1 W m-2, as in polar night);
* the worst places: the largest absolute errors, one per month and latitude.

Noise
    Model insolation can carry noise (the sampling of the diurnal cycle by the
    radiation time step, rounding). Its level σ is estimated from a residual
    alone by the scaled median absolute deviation of second differences in time,
    σ = 1.4826 · median|r_{i-1} − 2 r_i + r_{i+1}| / √6 (for white noise the
    second difference has variance 6σ²; the median makes the estimate robust
    to the few kinks of a real error, such as the edges of polar night). Only
    triples of consecutive, evenly spaced values of one model year are used,
    and at least 10 of them are needed; otherwise σ = 0. A systematic error
    that curves from one value to the next (a month-to-month pattern, the
    annual cycle of a wrong orbit in monthly means) also has second
    differences, so σ is estimated from the residual against the reference and
    from the residual left by each significant explanation of
    :mod:`bcgen.validation.diagnose`, and the smallest is used; ``--noise-wm2``
    gives σ instead. For white noise the estimate from n second differences has
    a relative standard error of about :data:`NOISE_RELATIVE_SE` /√n (1.17/√n
    for the median absolute deviation of independent Gaussian values, from
    memory, enlarged because neighbouring second differences share values;
    checked by simulation in the tests).

Verdict
    The noise enters the allowances only up to the tolerance T (default
    1 W m-2, ``--tolerance-wm2``): σₐ = min(σ, T), so noise can at most double
    the tolerance on the RMS error. ``consistent`` when all hold:

    (A) the maximum absolute error is at most T + z σₐ, with
        z = √(2 ln N) for N values (about the largest of N standard normal
        deviates, so pure noise rarely exceeds it);
    (B) the RMS error is at most T + σₐ;
    (C) the output is not noisier than the tolerance: σ ≤ T · (1 + 3 ·
        NOISE_RELATIVE_SE / √n) when σ is estimated from n second differences
        (more than T by over three standard errors of the estimate), σ ≤ T
        when given with ``--noise-wm2``. Beyond that, errors of the size of
        the tolerance cannot be told from the noise;
    (D) no catalogued mistake is *significant* (see
        :mod:`bcgen.validation.diagnose`) while changing the insolation by more
        than T somewhere: a mistake detected beneath the noise still counts
        when it is larger than the tolerance;
    (E) the file's calendar lays out the model years as the spec's calendar
        does, unless the file's calendar is accepted explicitly
        (``--accept-file-calendar``; :mod:`bcgen.validation`).

    Otherwise ``inconsistent``. A correct output with 1 W m-2 of random noise
    is consistent; 5 W m-2 of noise is not (at the default tolerance), and each
    mistake of the catalogue that changes the insolation by more than T is
    inconsistent.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bcgen.labels import band_label, latitude_label
from bcgen.solar_calendar.calendars import MONTH_NAMES
from bcgen.validation.dates import days_in_words
from bcgen.validation.readers import ModelOutput

#: Latitude band edges, degrees north (bands 30° wide).
DEFAULT_BAND_EDGES_DEG = (-90.0, -60.0, -30.0, 0.0, 30.0, 60.0, 90.0)
#: Default tolerance on the maximum absolute error, W m-2.
DEFAULT_TOLERANCE_WM2 = 1.0
#: Reference values below this (W m-2) give no relative error.
RELATIVE_FLOOR_WM2 = 1.0
#: Second differences needed to estimate the noise.
MIN_NOISE_SAMPLES = 10
#: Relative standard error of the noise estimate times √n, for n second differences of
#: white noise (module docstring).
NOISE_RELATIVE_SE = 1.4
#: Standard errors of the noise estimate by which σ may exceed T (verdict rule C).
NOISE_MARGIN_SE = 3.0


@dataclass(frozen=True)
class CellError:
    """Errors in one calendar month and latitude band."""

    month: int
    band: str
    n_values: int
    max_abs_error_wm2: float
    rms_error_wm2: float
    relative_error: float | None

    def to_dict(self) -> dict:
        """JSON-ready."""
        return {"month": self.month, "band": self.band, "n_values": self.n_values,
                "max_abs_error_wm2": self.max_abs_error_wm2,
                "rms_error_wm2": self.rms_error_wm2, "relative_error": self.relative_error}


@dataclass(frozen=True)
class Place:
    """One model value with a large error."""

    year: int
    month: int
    start_day: float
    end_day: float
    latitude_deg: float
    model_wm2: float
    reference_wm2: float
    calendar: object = None

    @property
    def error_wm2(self) -> float:
        """Model minus reference."""
        return self.model_wm2 - self.reference_wm2

    @property
    def when(self) -> str:
        """The interval in days and as model-calendar dates (:mod:`bcgen.validation.dates`)."""
        if self.calendar is None:
            return (f"day {self.start_day:.2f}" if self.end_day - self.start_day < 1e-9
                    else f"days {self.start_day:.2f}-{self.end_day:.2f}")
        return days_in_words(self.start_day, self.end_day, self.calendar, self.year)

    @property
    def where(self) -> str:
        """Month, latitude, year and the days in words."""
        return (f"{MONTH_NAMES[self.month - 1]}, latitude {latitude_label(self.latitude_deg)} "
                f"(year {self.year}, {self.when})")

    def describe(self) -> str:
        """One line: where, model, reference and error."""
        return (f"{self.where}: model {self.model_wm2:.2f}, reference "
                f"{self.reference_wm2:.2f} ({self.error_wm2:+.2f} W m-2)")

    def to_dict(self) -> dict:
        """JSON-ready."""
        return {"year": self.year, "month": self.month, "start_day": self.start_day,
                "end_day": self.end_day, "latitude_deg": self.latitude_deg,
                "model_wm2": self.model_wm2, "reference_wm2": self.reference_wm2,
                "error_wm2": self.error_wm2, "when": self.when, "where": self.describe()}


@dataclass(frozen=True)
class Comparison:
    """Model against reference: overall errors, errors per cell, worst places, noise."""

    max_abs_error_wm2: float
    rms_error_wm2: float
    mean_error_wm2: float
    n_values: int
    n_missing: int
    cells: tuple[CellError, ...]
    worst: tuple[Place, ...]
    noise_wm2: float
    band_labels: tuple[str, ...]
    noise_samples: int = 0

    def allowed_max_abs_error_wm2(self, tolerance_wm2: float, noise_wm2: float | None = None
                                  ) -> float:
        """T + √(2 ln N) min(σ, T) (rule A of the module docstring)."""
        return max_abs_allowed_wm2(tolerance_wm2, self.noise_wm2 if noise_wm2 is None
                                   else noise_wm2, self.n_values)

    def allowed_rms_error_wm2(self, tolerance_wm2: float, noise_wm2: float | None = None
                              ) -> float:
        """T + min(σ, T) (rule B of the module docstring)."""
        return rms_allowed_wm2(tolerance_wm2, self.noise_wm2 if noise_wm2 is None
                               else noise_wm2)

    def noise_limit_wm2(self, tolerance_wm2: float, estimated: bool = True) -> float:
        """Largest σ that is not noisier than the tolerance (rule C of the module docstring)."""
        if not estimated or self.noise_samples < MIN_NOISE_SAMPLES:
            return float(tolerance_wm2)
        return float(tolerance_wm2 * (1.0 + NOISE_MARGIN_SE * NOISE_RELATIVE_SE
                                      / np.sqrt(self.noise_samples)))


def noise_allowance_wm2(tolerance_wm2: float, noise_wm2: float) -> float:
    """σₐ = min(σ, T): the part of the noise the allowances admit (module docstring)."""
    return float(min(noise_wm2, tolerance_wm2))


def max_abs_allowed_wm2(tolerance_wm2: float, noise_wm2: float, n_values: int) -> float:
    """T + √(2 ln N) σₐ, the allowed maximum absolute error of N values (rule A)."""
    z = np.sqrt(2.0 * np.log(max(n_values, 2)))
    return float(tolerance_wm2 + z * noise_allowance_wm2(tolerance_wm2, noise_wm2))


def rms_allowed_wm2(tolerance_wm2: float, noise_wm2: float) -> float:
    """T + σₐ, the allowed RMS error (rule B)."""
    return float(tolerance_wm2 + noise_allowance_wm2(tolerance_wm2, noise_wm2))


def compare_with_reference(output: ModelOutput, reference_wm2: np.ndarray,
                           band_edges_deg=DEFAULT_BAND_EDGES_DEG, n_worst: int = 5,
                           calendar=None) -> Comparison:
    """Compare a model's values with the reference on the same intervals and latitudes.

    Parameters
    ----------
    output : ModelOutput
        The model's values.
    reference_wm2 : numpy.ndarray
        bcgen's reference, same shape as ``output.insolation_wm2``.
    band_edges_deg : sequence of float
        Edges of the latitude bands, increasing, from -90 to 90.
    n_worst : int
        How many worst places to keep.
    calendar : ModelCalendar or str, optional
        Calendar in which the worst places' days are put into words.
    """
    model = output.insolation_wm2
    error = model - reference_wm2
    valid = np.isfinite(error)
    n = int(valid.sum())
    abs_err = np.where(valid, np.abs(error), -np.inf)
    edges = np.asarray(band_edges_deg, dtype=float)
    lat = output.latitude_deg
    band_of = np.clip(np.searchsorted(edges, lat, side="right") - 1, 0, edges.size - 2)
    labels = tuple(band_label(lo, hi) for lo, hi in zip(edges[:-1], edges[1:], strict=True))
    cells = []
    for month in range(1, 13):
        rows = output.month == month
        if not rows.any():
            continue
        for b, label in enumerate(labels):
            cols = band_of == b
            sel = valid[np.ix_(rows, cols)]
            if not sel.any():
                continue
            e = error[np.ix_(rows, cols)][sel]
            ref = reference_wm2[np.ix_(rows, cols)][sel]
            rms_ref = float(np.sqrt(np.mean(ref * ref)))
            rms = float(np.sqrt(np.mean(e * e)))
            cells.append(CellError(month, label, int(e.size), float(np.max(np.abs(e))), rms,
                                   rms / rms_ref if rms_ref >= RELATIVE_FLOOR_WM2 else None))
    worst, seen = [], set()
    for flat in np.argsort(abs_err, axis=None)[::-1]:
        i, j = np.unravel_index(flat, error.shape)
        if not valid[i, j] or len(worst) >= n_worst:
            break
        key = (int(output.month[i]), float(lat[j]))
        if key in seen:
            continue
        seen.add(key)
        worst.append(Place(int(output.year[i]), int(output.month[i]),
                           float(output.start_day[i]), float(output.end_day[i]), float(lat[j]),
                           float(model[i, j]), float(reference_wm2[i, j]), calendar))
    e = error[valid]
    sigma, n_noise = noise_estimate(output, error)
    return Comparison(
        max_abs_error_wm2=float(np.max(np.abs(e))),
        rms_error_wm2=float(np.sqrt(np.mean(e * e))),
        mean_error_wm2=float(np.mean(e)),
        n_values=n,
        n_missing=int(error.size - n),
        cells=tuple(cells),
        worst=tuple(worst),
        noise_wm2=sigma,
        band_labels=labels,
        noise_samples=n_noise,
    )


def estimate_noise_wm2(output: ModelOutput, residual: np.ndarray) -> float:
    """Noise level σ of a residual from its second differences in time (module docstring)."""
    return noise_estimate(output, residual)[0]


def noise_estimate(output: ModelOutput, residual: np.ndarray) -> tuple[float, int]:
    """σ of a residual (shape of ``output.insolation_wm2``, NaN where missing) and n used.

    Returns (0, n) when fewer than :data:`MIN_NOISE_SAMPLES` second differences exist.
    """
    mid = 0.5 * (output.start_day + output.end_day)
    order = np.lexsort((mid, output.year))
    mid, year, r = mid[order], output.year[order], residual[order]
    if mid.size < 3:
        return 0.0, 0
    gap = np.diff(mid)
    typical = float(np.median(gap))
    if typical <= 0:
        return 0.0, 0
    g1, g2 = gap[:-1], gap[1:]
    even = (year[:-2] == year[2:]) & (np.abs(g1 - g2) <= 0.2 * np.maximum(g1, g2)) & (
        np.maximum(g1, g2) <= 2.0 * typical) & (np.minimum(g1, g2) > 0)
    d2 = (r[:-2] - 2.0 * r[1:-1] + r[2:])[even]
    d2 = d2[np.isfinite(d2)]
    if d2.size < MIN_NOISE_SAMPLES:
        return 0.0, int(d2.size)
    return float(1.4826 * np.median(np.abs(d2)) / np.sqrt(6.0)), int(d2.size)
