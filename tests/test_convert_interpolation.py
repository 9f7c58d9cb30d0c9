"""Mean-preserving interpolation and exact aggregation (bcgen.convert.interpolation/aggregate).

External references: Killworth (1996) J. Phys. Oceanogr. 26, 136-143 (equal-month weights
1/8, 3/4, 1/8, quoted in Killworth 1996); Epstein (1991) J. Climate
4, 365-368 (harmonic coefficients, formula quoted in the same note); numpy.linalg.solve as a
reference solver; analytic integrals of piecewise-linear functions and of harmonics.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from bcgen.convert.aggregate import aggregate, apply_weights, overlap_weights
from bcgen.convert.interpolation import (
    MeanPreservingPlan,
    epstein1991_coefficients,
    killworth1996,
    killworth1996_adjusted,
    killworth1996_system,
    mean_preserving_means,
    solve_cyclic_tridiagonal,
    solve_tridiagonal,
)

# Month lengths of the noleap calendar and of a leap year (CF 1.11 §4.4.1, common practice).
NOLEAP = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=float)
LEAP = NOLEAP + np.array([0, 1] + [0] * 10)
REL = 1e-6  # the requirement for mean preservation (relative)


def edges_of(lengths) -> np.ndarray:
    return np.concatenate([[0.0], np.cumsum(lengths)])


def dense(lower, diag, upper, cyclic):
    a = np.diag(diag) + np.diag(lower[1:], -1) + np.diag(upper[:-1], 1)
    if cyclic:
        a[0, -1] += lower[0]
        a[-1, 0] += upper[-1]
    return a


# --- the linear system ----------------------------------------------------------------------
def test_equal_months_give_killworth_weights():
    # Killworth (1996): for equal intervals the adjusted values satisfy
    # a_{i-1}/8 + 3 a_i/4 + a_{i+1}/8 = m_i (Killworth 1996).
    lower, diag, upper = killworth1996_system(np.full(12, 30.0), cyclic=True)
    np.testing.assert_allclose(lower, 1 / 8, rtol=0, atol=1e-15)
    np.testing.assert_allclose(diag, 3 / 4, rtol=0, atol=1e-15)
    np.testing.assert_allclose(upper, 1 / 8, rtol=0, atol=1e-15)


def test_unequal_weights_integrate_the_linear_pieces():
    # Analytic: the mean over interval i of the line through (c_{i-1}, 1) and (c_i, 0),
    # held at 0 beyond c_i, is the coefficient of a_{i-1}: L_i / (4 (L_{i-1} + L_i)).
    lengths = np.array([31.0, 28.0, 31.0])
    lower, _, upper = killworth1996_system(lengths, cyclic=False)
    assert lower[1] == pytest.approx(28.0 / (4 * (31 + 28)), abs=1e-15)
    assert upper[1] == pytest.approx(28.0 / (4 * (28 + 31)), abs=1e-15)
    # series ends: the line is extended over the outer half, so the end rows read a = m
    assert lower[0] == upper[0] == 0.0 and lower[-1] == upper[-1] == 0.0
    _, diag, _ = killworth1996_system(lengths, cyclic=False)
    assert diag[0] == diag[-1] == 1.0


@pytest.mark.parametrize("cyclic", [False, True])
@pytest.mark.parametrize("n", [1, 2, 3, 12, 40])
def test_solvers_match_numpy(cyclic, n):
    # Reference: numpy.linalg.solve on the dense matrix.
    rng = np.random.default_rng(n)
    lower, upper = rng.uniform(-0.3, 0.3, n), rng.uniform(-0.3, 0.3, n)
    diag = 1.0 + rng.uniform(0, 0.5, n)
    rhs = rng.normal(size=(n, 4))
    solver = solve_cyclic_tridiagonal if cyclic else solve_tridiagonal
    if n == 1 and not cyclic:
        expected = rhs / diag[0]
    else:
        expected = np.linalg.solve(dense(lower, diag, upper, cyclic), rhs)
    np.testing.assert_allclose(solver(lower, diag, upper, rhs), expected, rtol=1e-12, atol=1e-12)
    # per-column coefficients take the same path
    cols = [np.repeat(c[:, None], 4, axis=1) for c in (lower, diag, upper)]
    np.testing.assert_allclose(solver(*cols, rhs), expected, rtol=1e-12, atol=1e-12)


def test_cyclic_harmonic_eigenvalue():
    # Analytic: the cyclic (1/8, 3/4, 1/8) operator has eigenvalue 3/4 + cos(2πk/N)/4 on the
    # k-th harmonic, so the adjusted values of a pure harmonic are the means divided by it.
    n, k = 12, 3
    means = np.cos(2 * np.pi * k * np.arange(n) / n)
    adjusted = killworth1996_adjusted(means, np.full(n, 30.0), cyclic=True)
    np.testing.assert_allclose(adjusted, means / (0.75 + 0.25 * np.cos(2 * np.pi * k / n)),
                               atol=1e-13)


# --- mean preservation and exact integration ------------------------------------------------
@pytest.mark.parametrize("lengths", [NOLEAP, LEAP, np.full(12, 30.0)], ids=["noleap", "leap",
                                                                           "360_day"])
@pytest.mark.parametrize("cyclic", [True, False])
def test_means_reproduced(lengths, cyclic):
    # Definition of a mean-preserving interpolation (Killworth 1996).
    rng = np.random.default_rng(0)
    years = 1 if cyclic else 5
    e = edges_of(np.tile(lengths, years))
    means = 280 + 20 * rng.normal(size=(12 * years, 3, 2))
    fn = killworth1996(means, e, cyclic=cyclic)
    np.testing.assert_allclose(fn.interval_means(), means, rtol=1e-12)
    again = mean_preserving_means(means, e, e[:-1], e[1:], cyclic=cyclic)
    np.testing.assert_allclose(again, means, rtol=REL)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.integers(28, 31), min_size=2, max_size=30),
       st.integers(0, 2**32 - 1), st.booleans())
def test_means_reproduced_property(lengths, seed, cyclic):
    # Mean preservation for any month lengths of 28-31 days (the real-calendar range).
    e = edges_of(lengths)
    means = np.random.default_rng(seed).normal(size=(len(lengths), 3)) * 50
    out = mean_preserving_means(means, e, e[:-1], e[1:], cyclic=cyclic)
    np.testing.assert_allclose(out, means, rtol=REL, atol=REL * 50)


def test_function_is_continuous_and_linear_between_centres():
    # Killworth's scheme is ordinary linear interpolation between adjusted mid-month values:
    # the values at the edge e_i lie on the line between (c_{i-1}, a_{i-1}) and (c_i, a_i).
    rng = np.random.default_rng(1)
    e = edges_of(np.tile(NOLEAP, 2))
    fn = killworth1996(rng.normal(size=24), e, cyclic=False)
    c = 0.5 * (e[:-1] + e[1:])
    np.testing.assert_allclose(fn.right[:-1], fn.left[1:], atol=1e-13)
    slope = (fn.centre[1:] - fn.centre[:-1]) / (c[1:] - c[:-1])
    np.testing.assert_allclose(fn.left[1:], fn.centre[:-1] + slope * (e[1:-1] - c[:-1]),
                               atol=1e-12)
    # end rule: the first and last lines are extended to the series edges
    slope0 = (fn.centre[1] - fn.centre[0]) / (c[1] - c[0])
    assert fn.left[0] == pytest.approx(fn.centre[0] + slope0 * (e[0] - c[0]), abs=1e-12)
    slope1 = (fn.centre[-1] - fn.centre[-2]) / (c[-1] - c[-2])
    assert fn.right[-1] == pytest.approx(fn.centre[-1] + slope1 * (e[-1] - c[-1]), abs=1e-12)


@pytest.mark.parametrize("cyclic", [True, False])
def test_fractional_targets_integrated_exactly(cyclic):
    # Analytic integral of the piecewise-linear function (trapezoids between its knots),
    # independent of the plan's weights.
    rng = np.random.default_rng(2)
    e = edges_of(NOLEAP)
    means = rng.normal(size=12)
    fn = killworth1996(means, e, cyclic=cyclic)
    start = np.array([0.0, 3.25, 40.5, 100.123, 200.0, 334.7]) if cyclic else \
        np.array([0.0, 3.25, 40.5, 100.123, 200.0, 300.7])
    end = start + np.array([17.0, 31.5, 28.25, 33.3, 0.4, 30.3])
    got = mean_preserving_means(means, e, start, end, cyclic=cyclic, min_valid_fraction=1.0)
    c = 0.5 * (e[:-1] + e[1:])
    knots_t = np.sort(np.concatenate([e, c]))
    knots_v = np.empty(25)
    knots_v[0::2] = np.concatenate([fn.left, fn.right[-1:]])
    knots_v[1::2] = fn.centre

    def integral(a, b):
        if cyclic and b > e[-1]:
            return integral(a, e[-1]) + integral(0.0, b - e[-1])
        t = np.concatenate([[a], knots_t[(knots_t > a) & (knots_t < b)], [b]])
        v = np.interp(t, knots_t, knots_v)
        return np.sum(0.5 * (v[1:] + v[:-1]) * np.diff(t))

    expected = [integral(a, b) / (b - a) for a, b in zip(start, end, strict=True)]
    np.testing.assert_allclose(got, expected, rtol=1e-12, atol=1e-12)


def test_annual_mean_conserved_over_any_tiling():
    # Conservation: new months that tile the cycle exactly keep the annual integral.
    rng = np.random.default_rng(3)
    e = edges_of(NOLEAP)
    means = 10 + rng.normal(size=(12, 5))
    cuts = np.sort(rng.uniform(-10, 355, 11))
    start = np.concatenate([[cuts[0] - 20.0], cuts])
    end = np.append(start[1:], start[0] + 365.0)
    for method in ("killworth1996", "epstein1991"):
        out = mean_preserving_means(means, e, start, end, cyclic=True, method=method)
        annual_in = (NOLEAP[:, None] * means).sum(0) / 365
        annual_out = ((end - start)[:, None] * out).sum(0) / 365
        np.testing.assert_allclose(annual_out, annual_in, rtol=1e-12)


# --- Epstein (1991) -------------------------------------------------------------------------
def test_epstein_equal_months_match_the_published_formula():
    # Epstein (1991): a0 = ΣY/12; a_j, b_j = [(πj/12)/sin(πj/12)] Σ Y_T cos/sin(2πjT/12)/6,
    # a6 = (π/2) Σ Y_T cos(πT)/12, months centred at T = 1..12 (Killworth 1996).
    y = np.random.default_rng(4).normal(size=12)
    coeffs = epstein1991_coefficients(y, np.arange(13) + 0.5)
    T = np.arange(1, 13)
    j = np.arange(1, 6)[:, None]
    factor = (np.pi * j / 12) / np.sin(np.pi * j / 12)
    a = (factor * (y * np.cos(2 * np.pi * j * T / 12)).sum(1, keepdims=True) / 6)[:, 0]
    b = (factor * (y * np.sin(2 * np.pi * j * T / 12)).sum(1, keepdims=True) / 6)[:, 0]
    assert coeffs[0] == pytest.approx(y.mean(), abs=1e-13)
    np.testing.assert_allclose(coeffs[1:11:2], a, atol=1e-13)
    np.testing.assert_allclose(coeffs[2:11:2], b, atol=1e-13)
    assert coeffs[11] == pytest.approx(np.pi / 2 * (y * np.cos(np.pi * T)).sum() / 12, abs=1e-13)


def test_epstein_preserves_unequal_months_and_refuses_series():
    y = np.random.default_rng(5).normal(size=12)
    e = edges_of(NOLEAP)
    out = mean_preserving_means(y, e, e[:-1], e[1:], cyclic=True, method="epstein1991")
    np.testing.assert_allclose(out, y, rtol=REL, atol=1e-12)
    with pytest.raises(ValueError, match="cyclic"):
        MeanPreservingPlan.build(e, e[:-1], e[1:], method="epstein1991", cyclic=False)


# --- missing data ---------------------------------------------------------------------------
def test_missing_month_splits_the_series():
    rng = np.random.default_rng(6)
    e = edges_of(np.tile(NOLEAP, 2))
    means = rng.normal(size=(24, 3))
    means[5, 0] = np.nan  # one missing month
    means[:, 1] = np.nan  # a masked point
    fn = killworth1996(means, e, cyclic=False)
    assert np.isnan(fn.centre[:, 1]).all()
    assert np.isnan(fn.centre[5, 0]) and np.isfinite(np.delete(fn.centre[:, 0], 5)).all()
    np.testing.assert_allclose(fn.interval_means()[:, [0, 2]], means[:, [0, 2]], rtol=1e-12)
    # next to the gap the function is one straight line over the whole month (end rule),
    # so the adjusted value there is the month's mean
    assert fn.centre[4, 0] == pytest.approx(means[4, 0], abs=1e-13)
    assert fn.centre[6, 0] == pytest.approx(means[6, 0], abs=1e-13)
    assert fn.left[6, 0] + fn.right[6, 0] == pytest.approx(2 * means[6, 0], abs=1e-12)
    # each run is its own series: the run after the gap equals a separate conversion
    alone = killworth1996(means[6:, 0], e[6:], cyclic=False)
    np.testing.assert_allclose(fn.centre[6:, 0], alone.centre, atol=1e-13)


def test_cyclic_with_a_missing_month_wraps_the_run():
    rng = np.random.default_rng(7)
    e = edges_of(NOLEAP)
    means = rng.normal(size=12)
    means[6] = np.nan
    fn = killworth1996(means, e, cyclic=True)
    valid = np.isfinite(means)
    np.testing.assert_allclose(fn.interval_means()[valid], means[valid], rtol=1e-12)
    # December and January stay joined across the year boundary
    assert fn.right[11] == pytest.approx(fn.left[0], abs=1e-13)


def test_aggregate_piecewise_constant_by_hand():
    # Hand computation: values 1, 2, 3 on days [0,1), [1,2), [2,3);
    # mean over [0.5, 2.5] = (0.5*1 + 1*2 + 0.5*3) / 2 = 2.
    out = aggregate(np.array([1.0, 2.0, 3.0]), [0, 1, 2, 3], [0.5, 0.0], [2.5, 1.5],
                    min_valid_fraction=1.0)
    np.testing.assert_allclose(out, [2.0, (1 * 1 + 0.5 * 2) / 1.5])


def test_aggregate_missing_rules():
    days = np.arange(31.0)
    x = np.ones((30, 4))
    x[:5, 1] = np.nan  # 5 of 30 days missing: covered 5/6 >= 0.75 -> mean of the rest
    x[:10, 2] = np.nan  # 10 of 30 missing: 2/3 < 0.75 -> missing
    x[:, 3] = np.nan  # all missing -> missing
    x[5:, 1] = 2.0
    out = aggregate(x, days, [0.0], [30.0])
    np.testing.assert_allclose(out[0, :2], [1.0, 2.0])
    assert np.isnan(out[0, 2]) and np.isnan(out[0, 3])
    half = aggregate(x, days, [0.0], [30.0], min_valid_fraction=0.5)
    assert half[0, 2] == pytest.approx(1.0)


def test_aggregate_periodic_wraps_targets():
    # A climatology of 365 daily values: a target from day -2 to 3 takes the last two
    # days of the cycle and the first three (periodic extension, common practice).
    x = np.arange(365.0)
    out = aggregate(x, np.arange(366.0), [-2.0], [3.0], period_days=365.0)
    assert out[0] == pytest.approx((363 + 364 + 0 + 1 + 2) / 5)


def test_overlap_weights_rows_sum_to_cover():
    w = overlap_weights(np.arange(366.0), [10.25, -3.0], [40.75, 20.0])
    np.testing.assert_allclose(w.dense().sum(axis=1), [30.5, 20.0])  # -3..0 is outside
    np.testing.assert_allclose(apply_weights(w, np.ones(365), min_valid_fraction=0.5), [1, 1])
