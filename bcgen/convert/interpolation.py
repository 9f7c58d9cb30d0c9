r"""Mean-preserving interpolation of interval means of unequal length, integrated exactly.

Monthly means of a model are means over months of 28 to 31 days (30 in a 360_day
calendar). To average them over other intervals (fixed-angle months with fractional-day
bounds), they are first turned into a function of time whose mean over every original
month is the original mean, and that function is integrated analytically over each
target interval (no sampling on a daily grid).

Methods
-------
``killworth1996``
    Killworth, P. D. (1996), Time interpolation of forcing fields in ocean models,
    J. Phys. Oceanogr. 26, 136-143, doi:10.1175/1520-0485(1996)026<0136:TIOFFI>2.0.CO;2.
    Ordinary linear interpolation between *adjusted* mid-interval values
    :math:`a_i` placed at the interval centres :math:`c_i`, the adjusted values being
    the solution of the (cyclic) tridiagonal system that makes the mean of the
    piecewise-linear function over every interval equal to its mean :math:`m_i`.
    For unequal lengths :math:`L_i` the weights follow from integrating the linear
    pieces over each half interval: the value at the edge :math:`e_i` between
    intervals :math:`i-1` and :math:`i` is
    :math:`\ell_i = (1-\lambda_i) a_{i-1} + \lambda_i a_i` with
    :math:`\lambda_i = L_{i-1}/(L_{i-1}+L_i)`, and the mean over interval :math:`i` is

    .. math::

        \tfrac14 \ell_i + \tfrac12 a_i + \tfrac14 \ell_{i+1}
        = \alpha_i a_{i-1} + (1-\alpha_i-\gamma_i) a_i + \gamma_i a_{i+1} = m_i,
        \qquad
        \alpha_i = \frac{L_i}{4(L_{i-1}+L_i)},\;
        \gamma_i = \frac{L_i}{4(L_i+L_{i+1})}.

    For equal lengths this is Killworth's 1/8, 3/4, 1/8. The system is strictly
    diagonally dominant (:math:`\alpha_i, \gamma_i < 1/4`), so it always has one
    solution; it is solved by the Thomas algorithm (cyclic: Sherman-Morrison).

``epstein1991``
    Epstein, E. S. (1991), On obtaining daily climatological values from monthly
    means, J. Climate 4, 365-368: a harmonic series with as many coefficients as
    intervals (for 12 months: mean, 5 cosine-sine pairs and the cosine of the 6th
    harmonic) whose means over the intervals equal the data. Epstein's closed
    formula assumes equal months; here the coefficients solve the 12 × 12 system of
    exact interval means of each harmonic over the actual (unequal) months, which
    reduces to Epstein's formula for equal months. Climatologies (cyclic) only.
    Missing data: every coefficient depends on every month, so one missing month
    makes the whole year of that point missing (all twelve converted months are
    NaN there); ``killworth1996`` keeps the months it can compute.

End rules
---------
Cyclic (climatology): interval ``N-1`` is followed by interval ``0`` one period later.
Series: over the outer half of the first and last interval of a series (and of the
intervals next to a missing one) the line through the two nearest adjusted values is
extended (linear extrapolation), so the function is one straight line over each end
interval. Its mean is then its centre value: the end rows of the system read
:math:`a_0 = m_0` and :math:`a_{N-1} = m_{N-1}`, and every interval mean is still
reproduced exactly. An interval with no valid neighbour is constant. Missing intervals
(NaN) stay missing; each run of valid intervals is interpolated on its own.

Known limitation: like any linear mean-preserving scheme, both methods can
undershoot below zero next to a month of zero (a dry month of precipitation); the
converted monthly means keep the original annual mean but may show small negative
values there.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from bcgen.convert.aggregate import (
    DEFAULT_MIN_VALID_FRACTION,
    IntervalWeights,
    finish_mean,
    overlap_weights,
)
from bcgen.convert.kernels import RowWeights, SharedThomas, bad_columns, joined, workspace

Method = Literal["killworth1996", "epstein1991"]

#: Mean-preserving methods: name -> (what it is, published source).
METHODS: dict[str, tuple[str, str]] = {
    "killworth1996": (
        "linear interpolation between adjusted mid-interval values (Killworth 1996), "
        "generalised to unequal interval lengths, integrated exactly",
        "Killworth, P. D. (1996), Time interpolation of forcing fields in ocean models, "
        "J. Phys. Oceanogr. 26, 136-143, doi:10.1175/1520-0485(1996)026<0136:TIOFFI>2.0.CO;2",
    ),
    "epstein1991": (
        "harmonic series with as many terms as intervals reproducing every interval mean "
        "(Epstein 1991), generalised to unequal month lengths, integrated exactly; "
        "climatologies only; one missing month makes that point's whole year missing",
        "Epstein, E. S. (1991), On obtaining daily climatological values from monthly means, "
        "J. Climate 4, 365-368",
    ),
}

#: How the first and last intervals of a series are treated (recorded in output metadata).
END_RULES: dict[str, str] = {
    "cyclic": "cyclic: the last interval is followed by the first one period later",
    "extrapolate": (
        "series: Killworth (1996) line through the two nearest adjusted mid-month values "
        "extended over the outer half of the first and last months (and of months next to "
        "missing ones); new months reaching beyond the data are means over their covered part, "
        "and their time bounds are that part"
    ),
}


# --- tridiagonal solvers ------------------------------------------------------------------
def solve_tridiagonal(lower, diag, upper, rhs, *, out=None) -> np.ndarray:
    """Solve a tridiagonal system by the Thomas algorithm, vectorised over trailing axes.

    Row ``i`` reads ``lower[i] x[i-1] + diag[i] x[i] + upper[i] x[i+1] = rhs[i]``
    (``lower[0]`` and ``upper[-1]`` are ignored). The coefficients have shape ``(n,)``
    (shared by every column) or broadcast against ``rhs`` of shape ``(n, ...)``.
    ``out`` may be ``rhs`` itself (solved in place).
    """
    rhs = np.asarray(rhs, dtype=np.float64)
    n = rhs.shape[0]
    lower, diag, upper = (np.asarray(c, dtype=np.float64) for c in (lower, diag, upper))
    if lower.ndim == 1:  # shared coefficients: the kernels' factorised Thomas algorithm
        cols = rhs.reshape(n, -1)
        x = np.empty(cols.shape) if out is None else out.reshape(n, -1)
        return SharedThomas.build(lower, diag, upper).solve(cols, x).reshape(rhs.shape)
    cp = np.empty(np.broadcast_shapes(lower.shape, diag.shape, upper.shape))
    x = np.empty(np.broadcast_shapes(rhs.shape, cp.shape)) if out is None else out
    inv = 1.0 / diag[0]
    cp[0] = upper[0] * inv
    np.multiply(rhs[0], inv, out=x[0])
    tmp = np.empty_like(x[0])
    for i in range(1, n):
        inv = 1.0 / (diag[i] - lower[i] * cp[i - 1])
        cp[i] = upper[i] * inv
        np.multiply(x[i - 1], lower[i], out=tmp)
        np.subtract(rhs[i], tmp, out=x[i])
        x[i] *= inv
    for i in range(n - 2, -1, -1):
        np.multiply(cp[i], x[i + 1], out=tmp)
        x[i] -= tmp
    return x


def solve_cyclic_tridiagonal(lower, diag, upper, rhs, *, out=None) -> np.ndarray:
    """Solve a cyclic tridiagonal system (Sherman-Morrison), vectorised over trailing axes.

    As :func:`solve_tridiagonal`, with ``lower[0]`` coupling row 0 to ``x[n-1]`` and
    ``upper[-1]`` coupling row ``n-1`` to ``x[0]``. ``out`` may be ``rhs`` (in place).
    """
    rhs = np.asarray(rhs, dtype=np.float64)
    n = rhs.shape[0]
    extra = (1,) * (rhs.ndim - 1)
    lower, diag, upper = (np.asarray(c, dtype=np.float64) for c in (lower, diag, upper))
    if lower.ndim == 1:
        lower, diag, upper = (c.reshape((n,) + extra) for c in (lower, diag, upper))
    if n == 1:
        return rhs / (diag[0] + lower[0] + upper[0])
    if n == 2:  # both couplings join the same two unknowns
        d = np.broadcast_to(diag, np.broadcast_shapes(diag.shape, lower.shape))
        a01 = upper[0] + lower[0]
        a10 = lower[1] + upper[1]
        det = d[0] * d[1] - a01 * a10
        return np.stack([(rhs[0] * d[1] - a01 * rhs[1]) / det,
                         (d[0] * rhs[1] - a10 * rhs[0]) / det])
    corner_lo, corner_up = lower[0], upper[-1]
    gamma = -diag[0]
    diag2 = np.array(np.broadcast_to(diag, np.broadcast_shapes(diag.shape, corner_lo.shape,
                                                               corner_up.shape)))
    diag2[0] = diag2[0] - gamma
    diag2[-1] = diag2[-1] - corner_lo * corner_up / gamma
    y = solve_tridiagonal(lower, diag2, upper, rhs, out=out)
    u = np.zeros(diag2.shape)
    u[0] = gamma
    u[-1] = corner_up
    z = solve_tridiagonal(lower, diag2, upper, u)
    factor = (y[0] + corner_lo / gamma * y[-1]) / (1.0 + z[0] + corner_lo / gamma * z[-1])
    for i in range(n):
        y[i] -= z[i] * factor
    return y


# --- Killworth (1996) -----------------------------------------------------------------------
def _edge_fractions(lengths: np.ndarray) -> np.ndarray:
    """λ_i = L_{i-1}/(L_{i-1}+L_i): position of edge e_i between centres c_{i-1} and c_i.

    λ_0 uses the last interval (the cyclic neighbour of the first).
    """
    prev = np.roll(lengths, 1)
    return prev / (prev + lengths)


def _edge_coefficients(lengths, cyclic: bool, valid=None):
    """Edge values as combinations of the adjusted values of neighbours (see End rules).

    Returns ``(left, right)``, each a triple of coefficients on
    ``(a[i-1], a[i], a[i+1])``: ``left[i] = pl a[i-1] + pc a[i] + pn a[i+1]`` is the
    value at the start of interval i, ``right[i]`` at its end. Shapes ``(n,)`` or, with
    ``valid`` of shape ``(n, p)``, ``(n, p)``.
    """
    L = np.asarray(lengths, dtype=float)
    n = L.size
    lam = _edge_fractions(L)  # at the start of interval i
    lam_next = np.roll(lam, -1)  # at its end
    v = np.ones((n, 1), dtype=bool) if valid is None else np.asarray(valid, dtype=bool)
    extra = (1,) * (v.ndim - 1)
    lam, lam_next = lam.reshape((n,) + extra), lam_next.reshape((n,) + extra)
    prev = v & np.roll(v, 1, axis=0)
    nxt = v & np.roll(v, -1, axis=0)
    if not cyclic:
        prev[0] = False
        nxt[-1] = False
    if n == 1:
        prev[:] = nxt[:] = False
    zero = np.zeros(np.broadcast_shapes(v.shape, lam.shape))
    pl = np.where(prev, 1.0 - lam, 0.0) + zero
    pc = np.where(prev, lam, np.where(nxt, 1.0 + lam_next, 1.0)) + zero
    pn = np.where(prev, 0.0, np.where(nxt, -lam_next, 0.0)) + zero
    ql = np.where(nxt, 0.0, np.where(prev, lam - 1.0, 0.0)) + zero
    qc = np.where(nxt, 1.0 - lam_next, np.where(prev, 2.0 - lam, 1.0)) + zero
    qn = np.where(nxt, lam_next, 0.0) + zero
    if valid is None:
        pl, pc, pn, ql, qc, qn = (c[:, 0] for c in (pl, pc, pn, ql, qc, qn))
    return (pl, pc, pn), (ql, qc, qn)


def killworth1996_system(lengths_days, *, cyclic: bool, valid=None):
    r"""Coefficients ``(lower, diag, upper)`` of Killworth's system for unequal intervals.

    Row i states that the mean over interval i of the piecewise-linear function,
    :math:`\ell_i/4 + a_i/2 + r_i/4` with the edge values of :func:`_edge_coefficients`,
    equals :math:`m_i`.

    Parameters
    ----------
    lengths_days : array_like, shape (n,)
        Interval lengths :math:`L_i`.
    cyclic : bool
        Join the last interval to the first (climatology); otherwise extrapolate at the
        ends (see End rules).
    valid : array_like of bool, shape (n, ...), optional
        Valid intervals per column; missing intervals decouple (rows become ``x = 0``).

    Returns
    -------
    tuple of numpy.ndarray
        ``lower[i]`` (α_i), ``diag[i]``, ``upper[i]`` (γ_i); see the module docstring.
    """
    (pl, pc, pn), (ql, qc, qn) = _edge_coefficients(lengths_days, cyclic, valid)
    lower = (pl + ql) / 4.0
    upper = (pn + qn) / 4.0
    diag = (pc + qc) / 4.0 + 0.5
    if valid is not None:
        v = np.asarray(valid, dtype=bool)
        lower, upper = np.where(v, lower, 0.0), np.where(v, upper, 0.0)
        diag = np.where(v, diag, 1.0)
    return lower, diag, upper


@dataclass(frozen=True)
class PiecewiseLinear:
    """A function linear on each half interval, given by its values at edges and centres.

    On interval ``i`` (``edges[i]`` to ``edges[i+1]``, centre ``c_i``) it runs linearly
    from ``left[i]`` at the start to ``centre[i]`` at ``c_i`` and on to ``right[i]`` at
    the end. Value arrays have time first, shape ``(n, ...)``; NaN marks a missing
    interval.
    """

    edges_days: np.ndarray
    left: np.ndarray
    centre: np.ndarray
    right: np.ndarray

    def interval_means(self) -> np.ndarray:
        """Exact mean over each interval: ``left/4 + centre/2 + right/4``."""
        return 0.25 * self.left + 0.5 * self.centre + 0.25 * self.right

    def evaluate(self, t_days) -> np.ndarray:
        """Values at times ``t_days`` inside the edges (shape ``(len(t),) + extra``)."""
        e = self.edges_days
        t = np.asarray(t_days, dtype=float)
        i = np.clip(np.searchsorted(e, t, side="right") - 1, 0, e.size - 2)
        c = 0.5 * (e[i] + e[i + 1])
        first = t < c
        s = np.where(first, (t - e[i]) / (c - e[i]), (t - c) / (e[i + 1] - c))
        extra = (1,) * (self.centre.ndim - 1)
        s = s.reshape((-1,) + extra)
        v0 = np.where(first.reshape(s.shape), self.left[i], self.centre[i])
        v1 = np.where(first.reshape(s.shape), self.centre[i], self.right[i])
        return v0 + s * (v1 - v0)


def killworth1996_adjusted(means, lengths_days, *, cyclic: bool) -> np.ndarray:
    """Killworth (1996) adjusted mid-interval values :math:`a_i` (time first).

    Parameters
    ----------
    means : array_like, shape (n, ...)
        Interval means; NaN = missing interval (it stays NaN; the runs on either side
        are series of their own, see the module docstring).
    lengths_days : array_like, shape (n,)
        Interval lengths (unequal allowed).
    cyclic : bool
        Climatology (periodic) or series.
    """
    m = np.asarray(means, dtype=np.float64)
    L = np.asarray(lengths_days, dtype=float)
    if m.shape[0] != L.size or np.any(L <= 0):
        raise ValueError("need one mean per interval and positive lengths")
    shape = m.shape
    flat = m.reshape(shape[0], -1)
    valid = np.isfinite(flat)
    full = valid.all(axis=0)
    solver = solve_cyclic_tridiagonal if cyclic else solve_tridiagonal
    lo, di, up = killworth1996_system(L, cyclic=cyclic)
    if full.all():
        return solver(lo, di, up, flat).reshape(shape)
    a = np.full(flat.shape, np.nan)
    if full.any():
        a[:, full] = solver(lo, di, up, flat[:, full])
    some = valid.any(axis=0) & ~full
    if some.any():
        v = valid[:, some]
        lo, di, up = killworth1996_system(L, cyclic=cyclic, valid=v)
        sol = solver(lo, di, up, np.where(v, flat[:, some], 0.0))
        a[:, some] = np.where(v, sol, np.nan)
    return a.reshape(shape)


def piecewise_linear(adjusted, edges_days, *, cyclic: bool) -> PiecewiseLinear:
    """Build the piecewise-linear function through adjusted mid-interval values.

    Between the centres of two valid neighbours it is the straight line between their
    adjusted values; over the outer half of an interval at the end of a run of valid
    intervals that line is extended (see End rules).
    """
    a = np.asarray(adjusted, dtype=np.float64)
    e = np.asarray(edges_days, dtype=float)
    shape = a.shape
    flat = a.reshape(shape[0], -1)
    ok = np.isfinite(flat)
    (pl, pc, pn), (ql, qc, qn) = _edge_coefficients(np.diff(e), cyclic, ok)
    a0 = np.where(ok, flat, 0.0)
    prev, nxt = np.roll(a0, 1, axis=0), np.roll(a0, -1, axis=0)
    left = np.where(ok, pl * prev + pc * a0 + pn * nxt, np.nan)
    right = np.where(ok, ql * prev + qc * a0 + qn * nxt, np.nan)
    return PiecewiseLinear(e, left.reshape(shape), a, right.reshape(shape))


def killworth1996(means, edges_days, *, cyclic: bool) -> PiecewiseLinear:
    """Killworth (1996) piecewise-linear function reproducing interval means exactly.

    Parameters
    ----------
    means : array_like, shape (n, ...)
        Interval means, time first; NaN = missing interval.
    edges_days : array_like, shape (n + 1,)
        Interval edges in days (unequal lengths allowed).
    cyclic : bool
        Climatology (periodic) or series (ends extrapolated; see module docstring).

    Returns
    -------
    PiecewiseLinear
        Its :meth:`~PiecewiseLinear.interval_means` equal ``means`` to rounding.
    """
    e = np.asarray(edges_days, dtype=float)
    a = killworth1996_adjusted(means, np.diff(e), cyclic=cyclic)
    return piecewise_linear(a, e, cyclic=cyclic)


# --- Epstein (1991) -------------------------------------------------------------------------
def _harmonic_means(t0, t1, period: float, n_terms: int) -> np.ndarray:
    """Exact means of the harmonic basis over [t0, t1]: shape (len(t0), n_terms)."""
    t0 = np.asarray(t0, dtype=float)[:, None]
    t1 = np.asarray(t1, dtype=float)[:, None]
    out = np.empty((t0.shape[0], n_terms))
    out[:, 0] = 1.0
    for col in range(1, n_terms):
        k = (col + 1) // 2
        w = 2.0 * np.pi * k / period
        if col % 2:  # cosine
            out[:, col] = ((np.sin(w * t1) - np.sin(w * t0)) / (w * (t1 - t0)))[:, 0]
        else:  # sine
            out[:, col] = ((np.cos(w * t0) - np.cos(w * t1)) / (w * (t1 - t0)))[:, 0]
    return out


def epstein1991_coefficients(means, edges_days) -> np.ndarray:
    """Harmonic coefficients ``[a0, a1, b1, a2, b2, ...]`` reproducing the interval means.

    The basis is ``1, cos(2πkt/P), sin(2πkt/P)`` (k = 1, 2, ...) with ``P`` the span of the
    edges, truncated to as many terms as intervals (for 12: ``b6`` is dropped, as in
    Epstein 1991). ``means`` has time first.
    """
    e = np.asarray(edges_days, dtype=float)
    n = e.size - 1
    basis = _harmonic_means(e[:-1], e[1:], e[-1] - e[0], n)
    m = np.asarray(means, dtype=np.float64)
    return np.linalg.solve(basis, m.reshape(n, -1)).reshape(m.shape)


def epstein1991_matrix(edges_days, target_start_days, target_end_days) -> np.ndarray:
    """Matrix from interval means to target-interval means (cyclic), shape (n_target, n).

    Time is counted from the centre of the first interval, as in Epstein (1991), whose
    months are centred on whole numbers: with an even number of equal intervals and the
    origin on an edge, the means of the last cosine over every interval would all be 0
    (a singular system).
    """
    e = np.asarray(edges_days, dtype=float)
    n = e.size - 1
    period = e[-1] - e[0]
    origin = 0.5 * (e[0] + e[1])
    source = _harmonic_means(e[:-1] - origin, e[1:] - origin, period, n)
    target = _harmonic_means(np.asarray(target_start_days, dtype=float) - origin,
                             np.asarray(target_end_days, dtype=float) - origin, period, n)
    return target @ np.linalg.inv(source)


# --- plans: precomputed conversions applied to blocks of data -------------------------------
def _combine_entries(rows, cols, vals, n_rows: int, n_cols: int):
    """Sum duplicate (row, col) entries and pad to ELL rows: (index, weight)."""
    keep = vals != 0
    rows, cols, vals = rows[keep], cols[keep], vals[keep]
    key = rows * n_cols + cols
    uniq, inverse = np.unique(key, return_inverse=True)
    summed = np.bincount(inverse, weights=vals, minlength=uniq.size)
    urow, ucol = uniq // n_cols, uniq % n_cols
    counts = np.bincount(urow, minlength=n_rows)
    band = max(int(counts.max()) if counts.size else 0, 1)
    index = np.zeros((n_rows, band), dtype=np.intp)
    weight = np.zeros((n_rows, band))
    start = np.concatenate([[0], np.cumsum(counts)[:-1]])
    slot = np.arange(urow.size) - start[urow]
    index[urow, slot] = ucol
    weight[urow, slot] = summed
    return index, weight


@dataclass(frozen=True)
class LinearPlan:
    """Precomputed exact integration of a :class:`PiecewiseLinear` over target intervals."""

    edges_days: np.ndarray
    cyclic: bool
    half: IntervalWeights  # overlaps with the 2n half intervals
    cover_index: np.ndarray  # (n_target, band): source interval of each overlap
    full_index: np.ndarray  # combined weights on adjusted values when no data are missing
    full_weight: np.ndarray
    full_cover_days: np.ndarray
    w_left: np.ndarray  # weights onto left / centre / right values of interval cover_index
    w_centre: np.ndarray
    w_right: np.ndarray

    @classmethod
    def build(cls, edges_days, target_start_days, target_end_days, *, cyclic: bool):
        """Plan the integration for given source edges and target intervals."""
        e = np.asarray(edges_days, dtype=float)
        n = e.size - 1
        centres = 0.5 * (e[:-1] + e[1:])
        half_edges = np.empty(2 * n + 1)
        half_edges[0::2] = e
        half_edges[1::2] = centres
        half = overlap_weights(half_edges, target_start_days, target_end_days,
                               period_days=(e[-1] - e[0]) if cyclic else None)
        k = half.index
        month = k // 2
        second = (k % 2) == 1
        w, f = half.weight_days, half.fraction
        # weights onto (left, centre, right) of interval `month`
        w_left = np.where(second, 0.0, w * (1.0 - f))
        w_centre = np.where(second, w * (1.0 - f), w * f)
        w_right = np.where(second, w * f, 0.0)
        # combined weights on adjusted values, every interval valid
        (pl, pc, pn), (ql, qc, qn) = _edge_coefficients(np.diff(e), cyclic)
        rows = np.broadcast_to(np.arange(k.shape[0])[:, None], k.shape)
        before, after = (month - 1) % n, (month + 1) % n
        parts = [
            (month, w_centre),
            (before, w_left * pl[month]), (month, w_left * pc[month]),
            (after, w_left * pn[month]),
            (before, w_right * ql[month]), (month, w_right * qc[month]),
            (after, w_right * qn[month]),
        ]
        r = np.concatenate([rows.ravel()] * len(parts))
        c = np.concatenate([p[0].ravel() for p in parts])
        v = np.concatenate([p[1].ravel() for p in parts])
        index, weight = _combine_entries(r, c, v, k.shape[0], n)
        cover = np.zeros(k.shape[0])
        for b in range(k.shape[1]):  # fixed summation order (see finish_rows)
            cover += w[:, b]
        return cls(e, cyclic, half, month, index, weight, cover, w_left, w_centre, w_right)

    def integrate(self, adjusted: np.ndarray, min_valid_fraction: float) -> np.ndarray:
        """Means over the target intervals of the function through ``adjusted`` values.

        ``adjusted`` are Killworth's mid-interval values (time first, NaN = missing).
        Columns without missing intervals use the combined weights on the adjusted
        values; columns with some missing intervals use the left/centre/right values
        of :func:`piecewise_linear` and the valid cover; columns all missing stay
        missing. Each column takes the same arithmetic whatever block it comes in
        (dask and numpy results agree bit for bit).
        """
        shape = adjusted.shape
        n_target = self.half.n_target
        a = adjusted.reshape(shape[0], -1)
        valid = np.isfinite(a)
        full = valid.all(axis=0)
        lengths = self.half.target_length_days
        if full.all():
            return self._integrate_full(a, min_valid_fraction).reshape((n_target,) + shape[1:])
        out = np.full((n_target, a.shape[1]), np.nan)
        if full.any():
            out[:, full] = self._integrate_full(a[:, full], min_valid_fraction)
        some = valid.any(axis=0) & ~full
        if some.any():
            fn = piecewise_linear(a[:, some], self.edges_days, cyclic=self.cyclic)
            v = valid[:, some]
            left = np.where(v, fn.left, 0.0)
            centre = np.where(v, fn.centre, 0.0)
            right = np.where(v, fn.right, 0.0)
            total = np.zeros((n_target, left.shape[1]))
            cover = np.zeros_like(total)
            for b in range(self.cover_index.shape[1]):
                i = self.cover_index[:, b]
                total += (self.w_left[:, b, None] * left[i] + self.w_centre[:, b, None] * centre[i]
                          + self.w_right[:, b, None] * right[i])
                cover += self.half.weight_days[:, b, None] * v[i]
            out[:, some] = finish_mean(total, cover, lengths, min_valid_fraction)
        return out.reshape((n_target,) + shape[1:])

    def _integrate_full(self, a: np.ndarray, min_valid_fraction: float) -> np.ndarray:
        out = np.zeros((self.half.n_target, a.shape[1]))
        tmp = np.empty_like(out)
        for b in range(self.full_index.shape[1]):
            np.take(a, self.full_index[:, b], axis=0, out=tmp)
            tmp *= self.full_weight[:, b, None]
            out += tmp
        return finish_mean(out, self.full_cover_days[:, None], self.half.target_length_days,
                           min_valid_fraction)


@dataclass(frozen=True)
class MeanPreservingPlan:
    """Interval means -> means over target intervals, for one source and target geometry.

    Build once with :meth:`build`, then call on blocks of data with time first.
    """

    method: str
    edges_days: np.ndarray
    cyclic: bool
    min_valid_fraction: float
    linear: LinearPlan | None = None
    matrix: np.ndarray | None = None
    thomas: SharedThomas | None = None  # fast block path (kernels)
    rows: RowWeights | None = None

    @classmethod
    def build(cls, edges_days, target_start_days, target_end_days, *, method: str,
              cyclic: bool, min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION):
        """Plan a conversion; see :func:`mean_preserving_means` for the parameters."""
        if method not in METHODS:
            raise ValueError(f"unknown method {method!r}; expected one of {', '.join(METHODS)}")
        e = np.asarray(edges_days, dtype=float)
        if method == "epstein1991":
            if not cyclic:
                raise ValueError("epstein1991 applies to climatologies (cyclic) only")
            mat = epstein1991_matrix(e, target_start_days, target_end_days)
            return cls(method, e, cyclic, min_valid_fraction, matrix=mat)
        linear = LinearPlan.build(e, target_start_days, target_end_days, cyclic=cyclic)
        thomas = rows = None
        if not cyclic or e.size > 3:
            thomas = SharedThomas.build(*killworth1996_system(np.diff(e), cyclic=cyclic),
                                        cyclic=cyclic)
            rows = RowWeights.build(linear.full_index, linear.full_weight,
                                    linear.full_cover_days, linear.half.target_length_days,
                                    min_valid_fraction)
        return cls(method, e, cyclic, min_valid_fraction, linear=linear, thomas=thomas,
                   rows=rows)

    def __call__(self, values) -> np.ndarray:
        """Convert interval means (time first, any trailing shape) to target means."""
        x = np.asarray(values, dtype=np.float64)
        if self.matrix is not None:
            flat = x.reshape(x.shape[0], -1)
            out = self.matrix @ np.where(np.isfinite(flat), flat, 0.0)
            out[:, ~np.isfinite(flat).all(axis=0)] = np.nan  # any missing month: missing
            return out.reshape((self.matrix.shape[0],) + x.shape[1:])
        a = killworth1996_adjusted(x, np.diff(self.edges_days), cyclic=self.cyclic)
        return self.linear.integrate(a, self.min_valid_fraction)

    def block(self, pieces, dtype=np.float64) -> np.ndarray:
        """Convert a block (n, p) of any float type; returns a new (n_target, p) array.

        ``pieces`` is the block, or a sequence of its pieces along time (read in turn,
        see :mod:`bcgen.convert.kernels`). The fast path of :mod:`bcgen.convert.kernels`
        serves columns without missing values; other columns go through :meth:`__call__`.
        """
        pieces = [pieces] if isinstance(pieces, np.ndarray) else list(pieces)
        shape = (sum(piece.shape[0] for piece in pieces), pieces[0].shape[1])
        if self.thomas is None:  # Epstein, or a cycle of one or two intervals
            x = joined(pieces)
            bad = bad_columns(x)
            xf = np.asarray(x, dtype=np.float64)
            out = self.matrix @ xf if self.matrix is not None else self(xf)
            out = out.astype(dtype)
        else:
            a = self.thomas.solve(pieces, workspace("x", shape))
            bad = ~np.isfinite(a[0])  # a non-finite value spreads through the whole column
            bad = bad if bad.any() else None
            out = self.rows.apply(a, np.empty((self.rows.index.shape[0], shape[1]), dtype))
        if bad is not None:
            column = np.concatenate([piece[:, bad] for piece in pieces], axis=0)
            out[:, bad] = self(np.asarray(column, dtype=np.float64))
        return out


def mean_preserving_means(
    values,
    source_edges_days,
    target_start_days,
    target_end_days,
    *,
    method: Method = "killworth1996",
    cyclic: bool = False,
    axis: int = 0,
    min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION,
) -> np.ndarray:
    """Means over target intervals of the mean-preserving interpolant of interval means.

    Parameters
    ----------
    values : array_like
        Interval means with time along ``axis`` (NaN = missing).
    source_edges_days : array_like, shape (n + 1,)
        Edges of the source intervals (e.g. calendar months) in fractional days.
    target_start_days, target_end_days : array_like
        Target intervals (e.g. fixed-angle months) in fractional days.
    method : {"killworth1996", "epstein1991"}
        See :data:`METHODS`.
    cyclic : bool
        Climatology (one period, wrapped) or series (ends extrapolated, see
        :data:`END_RULES`).
    axis : int
        Time axis of ``values`` and of the result.
    min_valid_fraction : float
        Least covered fraction of a target interval (see :mod:`bcgen.convert.aggregate`).
    """
    plan = MeanPreservingPlan.build(source_edges_days, target_start_days, target_end_days,
                                    method=method, cyclic=cyclic,
                                    min_valid_fraction=min_valid_fraction)
    x = np.moveaxis(np.asarray(values, dtype=np.float64), axis, 0)
    return np.moveaxis(plan(x), 0, axis)
