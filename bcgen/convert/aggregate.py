r"""Exact averaging of interval means over other intervals, by overlap weights.

A series of interval means (daily, sub-daily, monthly, ...) is a piecewise-constant
function of time. Its mean over any target interval ``[T0, T1]`` (fractional days) is
exact when each source interval is weighted by the length of its overlap with the
target:

.. math::

    \bar x_j = \frac{\sum_i |[e_i, e_{i+1}] \cap [T_{0j}, T_{1j}]|\, x_i\, v_i}
                     {\sum_i |[e_i, e_{i+1}] \cap [T_{0j}, T_{1j}]|\, v_i},

where :math:`v_i` is 1 for a valid (finite) source value and 0 for a missing one.

Missing data (the rule a modeller can rely on)
    A target interval is the overlap-weighted mean of the valid part of its source.
    It is missing (NaN) when the valid part covers less than ``min_valid_fraction``
    of the target interval (default :data:`DEFAULT_MIN_VALID_FRACTION`, 0.75: a
    month with more than about a week without data is missing). A target whose
    source is all missing is always missing. Parts of a target interval outside
    the span of the source count as missing, so a fixed-angle month that reaches a
    few days beyond the first or last day of a series is the mean of its covered
    part (:func:`bcgen.convert.to_fixed_angle_months` then gives it the time bounds
    of that part). Masks (points missing at every time) stay missing.

The weights are stored as padded sparse rows (:class:`IntervalWeights`, "ELLPACK"
layout): target ``j`` takes ``weight[j, b] * x[index[j, b]]`` for every ``b``. Each
row holds only the few sources that overlap the target, so applying the weights is
``O(n_target × band)`` per point and works on numpy blocks inside dask.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Default least fraction of a target interval that must be covered by valid data.
DEFAULT_MIN_VALID_FRACTION = 0.75


@dataclass(frozen=True)
class IntervalWeights:
    """Overlap weights from source intervals to target intervals, as padded sparse rows.

    Attributes
    ----------
    index : numpy.ndarray of int, shape (n_target, band)
        Source interval index of each entry (padding entries point to 0 with weight 0).
    weight_days : numpy.ndarray of float, shape (n_target, band)
        Overlap length of the source interval with the target, in days.
    fraction : numpy.ndarray of float, shape (n_target, band)
        Position of the middle of the overlap inside its source interval, in [0, 1]
        (0 = start, 1 = end); used to integrate linear functions exactly.
    target_length_days : numpy.ndarray of float, shape (n_target,)
        Length of each target interval in days.
    n_source : int
        Number of source intervals.
    """

    index: np.ndarray
    weight_days: np.ndarray
    fraction: np.ndarray
    target_length_days: np.ndarray
    n_source: int

    def __post_init__(self) -> None:
        if self.index.shape != self.weight_days.shape or self.index.ndim != 2:
            raise ValueError("index and weight_days must be 2-D arrays of one shape")
        if self.index.size and (self.index.min() < 0 or self.index.max() >= self.n_source):
            raise ValueError("weight index out of range of the source intervals")

    @property
    def n_target(self) -> int:
        """Number of target intervals."""
        return self.index.shape[0]

    def dense(self) -> np.ndarray:
        """Return the weights as a dense ``(n_target, n_source)`` matrix in days (for tests)."""
        out = np.zeros((self.n_target, self.n_source))
        rows = np.broadcast_to(np.arange(self.n_target)[:, None], self.index.shape)
        np.add.at(out, (rows, self.index), self.weight_days)
        return out


def overlap_weights(
    source_edges_days,
    target_start_days,
    target_end_days,
    *,
    period_days: float | None = None,
) -> IntervalWeights:
    """Overlap lengths of contiguous source intervals with arbitrary target intervals.

    Parameters
    ----------
    source_edges_days : array_like, shape (n_source + 1,)
        Increasing edges of the contiguous source intervals, fractional days.
    target_start_days, target_end_days : array_like, shape (n_target,)
        Start and end of each target interval, fractional days on the same axis.
    period_days : float, optional
        If given, the source repeats with this period (a climatology): its edges must
        span exactly one period and target intervals anywhere on the time axis are
        wrapped onto it.

    Returns
    -------
    IntervalWeights
    """
    edges = np.asarray(source_edges_days, dtype=float)
    t0 = np.atleast_1d(np.asarray(target_start_days, dtype=float))
    t1 = np.atleast_1d(np.asarray(target_end_days, dtype=float))
    if edges.ndim != 1 or edges.size < 2 or np.any(np.diff(edges) <= 0):
        raise ValueError("source edges must be a strictly increasing 1-D array of >= 2 values")
    if t0.shape != t1.shape or np.any(t1 <= t0):
        raise ValueError("each target interval must end after it starts")
    n = edges.size - 1
    if period_days is not None:
        if not np.isclose(edges[-1] - edges[0], period_days, rtol=0, atol=1e-9 * period_days):
            raise ValueError("a periodic source must span exactly one period")
        if np.any(t1 - t0 > period_days * (1 + 1e-12)):
            raise ValueError("a target interval is longer than the period of the source")
        shift = np.floor((t0 - edges[0]) / period_days) * period_days
        t0, t1 = t0 - shift, t1 - shift
        ext = np.concatenate([edges[:-1], edges + period_days])
        source_of = np.concatenate([np.arange(n), np.arange(n)])
    else:
        ext = edges
        source_of = np.arange(n)
    m = ext.size - 1
    first = np.clip(np.searchsorted(ext, t0, side="right") - 1, 0, m - 1)
    last = np.clip(np.searchsorted(ext, t1, side="left") - 1, 0, m - 1)
    band = int(np.max(last - first)) + 1 if t0.size else 1
    k = first[:, None] + np.arange(band)[None, :]
    inside = k <= last[:, None]
    k = np.minimum(k, m - 1)
    s0, s1 = ext[k], ext[k + 1]
    u0 = np.maximum(s0, t0[:, None])
    u1 = np.minimum(s1, t1[:, None])
    w = np.where(inside, np.clip(u1 - u0, 0.0, None), 0.0)
    frac = np.where(w > 0, (0.5 * (u0 + u1) - s0) / (s1 - s0), 0.0)
    index = np.where(w > 0, source_of[k], 0)
    return IntervalWeights(index.astype(np.intp), w, np.clip(frac, 0.0, 1.0), t1 - t0, n)


def apply_weights(
    weights: IntervalWeights,
    values: np.ndarray,
    *,
    min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION,
) -> np.ndarray:
    """Average piecewise-constant interval means over the target intervals, NaN-aware.

    Parameters
    ----------
    weights : IntervalWeights
        From :func:`overlap_weights`.
    values : numpy.ndarray, shape (n_source, ...)
        Source interval means, time on the FIRST axis; NaN marks missing data.
    min_valid_fraction : float
        Least fraction of a target interval covered by valid data (see module docstring).

    Returns
    -------
    numpy.ndarray of float64, shape (n_target, ...)
    """
    x = np.asarray(values, dtype=np.float64)
    if x.shape[0] != weights.n_source:
        raise ValueError(f"values have {x.shape[0]} intervals, the weights {weights.n_source}")
    valid = np.isfinite(x)
    all_valid = bool(valid.all())
    x0 = x if all_valid else np.where(valid, x, 0.0)
    extra = (1,) * (x.ndim - 1)
    total = np.zeros((weights.n_target,) + x.shape[1:])
    cover = None if all_valid else np.zeros_like(total)
    for b in range(weights.index.shape[1]):
        w = weights.weight_days[:, b].reshape((-1,) + extra)
        idx = weights.index[:, b]
        total += w * x0[idx]
        if cover is not None:
            cover += w * valid[idx]
    if cover is None:  # same summation order as above, so results do not depend on blocks
        cover = np.zeros(weights.n_target)
        for b in range(weights.index.shape[1]):
            cover += weights.weight_days[:, b]
        cover = cover.reshape((-1,) + extra)
    return finish_mean(total, cover, weights.target_length_days, min_valid_fraction)


def finish_mean(total, cover_days, target_length_days, min_valid_fraction: float) -> np.ndarray:
    """Divide integrals by the valid cover; NaN where cover < ``min_valid_fraction`` × length.

    ``cover_days`` has the shape of ``total`` or one value per target (shape ``(n,)`` or
    ``(n, 1, ...)``); in the second case ``total`` (float64) is divided in place.
    """
    if not 0.0 < min_valid_fraction <= 1.0:
        raise ValueError(f"min_valid_fraction must be in (0, 1]; got {min_valid_fraction}")
    total = np.asarray(total, dtype=np.float64)
    length = np.asarray(target_length_days, dtype=float)
    cover = np.asarray(cover_days, dtype=float)
    if cover.size == length.size:  # one cover per target: rows
        cover = cover.reshape(-1)
        enough = cover >= min_valid_fraction * length * (1.0 - 1e-12)
        rows = (-1,) + (1,) * (total.ndim - 1)
        total /= np.where(enough, cover, 1.0).reshape(rows)
        total[~enough] = np.nan
        return total
    length = length.reshape((-1,) + (1,) * (total.ndim - 1))
    cover = np.broadcast_to(cover, total.shape)
    enough = cover >= min_valid_fraction * length * (1.0 - 1e-12)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(enough, total / np.where(cover > 0, cover, 1.0), np.nan)


def aggregate(
    values,
    source_edges_days,
    target_start_days,
    target_end_days,
    *,
    axis: int = 0,
    period_days: float | None = None,
    min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION,
) -> np.ndarray:
    """Exact overlap-weighted means of interval means over fractional-day target intervals.

    Parameters
    ----------
    values : array_like
        Interval means (e.g. daily means) with time along ``axis``; NaN = missing.
    source_edges_days : array_like, shape (n + 1,)
        Edges of the source intervals in fractional days.
    target_start_days, target_end_days : array_like
        Target intervals in fractional days on the same axis.
    axis : int
        Time axis of ``values``; the result has the targets along the same axis.
    period_days : float, optional
        Treat the source as one period of a repeating cycle (climatology).
    min_valid_fraction : float
        Rule for partly missing targets; see the module docstring.
    """
    w = overlap_weights(source_edges_days, target_start_days, target_end_days,
                        period_days=period_days)
    x = np.moveaxis(np.asarray(values, dtype=np.float64), axis, 0)
    out = apply_weights(w, x, min_valid_fraction=min_valid_fraction)
    return np.moveaxis(out, 0, axis)
