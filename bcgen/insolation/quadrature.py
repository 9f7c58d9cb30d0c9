r"""Gauss-Legendre quadrature for integrands with known kinks (polar-night edges).

The daily-mean insolation is smooth in true longitude and in latitude except
where a latitude enters or leaves polar night or polar day (|φ| = 90° − |δ|).
There the bracket q of the daily-mean formula behaves like ``|x − x_c|^{3/2}``
on one side and is identically 0 (or analytic) on the other, which slows plain
Gauss-Legendre quadrature to an algebraic rate. :func:`integrate_between_kinks`
therefore splits the interval at the kinks and maps each piece with the
sigmoidal change of variable

.. math:: x = a + (b - a)\,(3s^2 - 2s^3), \qquad dx = 6(b - a)\,s(1 - s)\,ds,

which makes the integrand behave like ``s^4`` near both ends of every piece,
so that Gauss-Legendre in ``s`` converges fast again (a standard device of
numerical integration for endpoint singularities, common practice).
"""

from __future__ import annotations

from collections.abc import Callable
from functools import lru_cache

import numpy as np

#: Gauss-Legendre nodes per piece between kinks. Against adaptive quadrature the
#: λ-integrals agreed to 4e-13 relative at latitudes from pole to pole, including
#: just either side of the polar circles; the tests check the results to 1e-9
#: through analytic identities.
NODES_PER_PIECE = 24


@lru_cache(maxsize=8)
def mapped_gauss_legendre(nodes: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes g(s) in [0, 1] and weights w·g'(s) of the mapped Gauss-Legendre rule."""
    x, w = np.polynomial.legendre.leggauss(nodes)
    s = 0.5 * (x + 1.0)
    return s * s * (3.0 - 2.0 * s), 0.5 * w * 6.0 * s * (1.0 - s)


def integrate_between_kinks(
    integrand: Callable[[np.ndarray], np.ndarray],
    lower,
    upper,
    kinks,
    nodes: int = NODES_PER_PIECE,
) -> np.ndarray:
    """∫ integrand(x) dx from ``lower`` to ``upper``, split at the given kink positions.

    Parameters
    ----------
    integrand : callable
        Maps an array of abscissae of shape ``S + (pieces, nodes)`` to the
        integrand values with the same (broadcast) shape; ``S`` is the broadcast
        shape of the other arguments.
    lower, upper : array_like
        Integration bounds, broadcast together (``upper >= lower``).
    kinks : array_like
        Candidate kink positions, shape ``S + (k,)``; NaN or values outside
        [lower, upper] are ignored.
    nodes : int
        Gauss-Legendre nodes per piece.

    Returns
    -------
    numpy.ndarray
        The integral, shape ``S``.
    """
    lower = np.asarray(lower, dtype=float)[..., np.newaxis]
    upper = np.asarray(upper, dtype=float)[..., np.newaxis]
    kinks = np.asarray(kinks, dtype=float)
    kinks = np.where(np.isnan(kinks), lower, kinks)
    inner = np.clip(kinks, lower, upper)
    shape = np.broadcast_shapes(lower.shape[:-1], upper.shape[:-1], inner.shape[:-1])
    edges = np.concatenate(
        [
            np.broadcast_to(lower, shape + (1,)),
            np.sort(np.broadcast_to(inner, shape + inner.shape[-1:]), axis=-1),
            np.broadcast_to(upper, shape + (1,)),
        ],
        axis=-1,
    )
    a, width = edges[..., :-1], np.diff(edges, axis=-1)
    g, wg = mapped_gauss_legendre(nodes)
    x = a[..., np.newaxis] + width[..., np.newaxis] * g
    values = integrand(x)
    return np.einsum("...pn,n,...p->...", values, wg, width)
