r"""Kepler's equation and the conversions between mean, eccentric and true anomaly.

All functions take angles in radians and broadcast their arguments under numpy
rules; they keep the revolution count of their input (an anomaly of
``2π·k + x`` maps to ``2π·k + f(x)``), so differences of anomalies stay
meaningful across the perihelion.

Kepler's equation (Kepler 1609; e.g. Meeus 1998, *Astronomical Algorithms*,
2nd ed., ch. 30):

.. math::

    M = E - e \sin E

is solved for the eccentric anomaly E by Newton's method,

.. math::

    E_{k+1} = E_k - \frac{E_k - e \sin E_k - M}{1 - e \cos E_k},

from a third-order series starter for small e (error O(e⁴), so four steps
reach machine precision for e ≤ 0.1) and Danby's starter
``E₀ = M + 0.85 e sign(sin M)`` (Danby 1988, *Fundamentals of Celestial
Mechanics*, §6.6) for larger e, with M reduced to [-π, π). A fixed maximum
number of iterations with a convergence test keeps the loop bounded and
vectorised.

The true anomaly v follows from E with the half-angle-free form

.. math::

    v = E + 2 \arctan\frac{\beta \sin E}{1 - \beta \cos E}, \qquad
    \beta = \frac{e}{1 + \sqrt{1 - e^2}},

which is equivalent to ``tan(v/2) = √((1+e)/(1-e)) tan(E/2)`` but continuous in
E and accurate for small e (Broucke & Cefola 1973, Celest. Mech. 7, 388-389,
doi:10.1007/BF01227858); its inverse has the sign of β reversed.
"""

from __future__ import annotations

import numpy as np

from bcgen.errors import OrbitError

#: Convergence threshold on the Newton step, radians (the result is then exact to
#: rounding, since Newton's error after a step of size h is O(h²)).
NEWTON_STEP_TOLERANCE_RAD = 1e-13
#: Upper bound on Newton iterations; e ≤ 0.1 needs 4 and e = 0.99 at most about 10.
MAX_NEWTON_ITERATIONS = 50

_TWO_PI = 2.0 * np.pi


def _check_eccentricity(eccentricity) -> np.ndarray:
    e = np.asarray(eccentricity, dtype=float)
    if not np.all(np.isfinite(e)) or np.any(e < 0) or np.any(e >= 1):
        bad = np.ravel(e)[~((np.ravel(e) >= 0) & (np.ravel(e) < 1))][:3]
        raise OrbitError(
            f"eccentricity must be in [0, 1) for Kepler's equation (an elliptic orbit); "
            f"got {', '.join(f'{v:g}' for v in bad)}"
        )
    return e


def _beta(e: np.ndarray) -> np.ndarray:
    """β = e / (1 + √(1 − e²)) of the half-angle-free anomaly conversion."""
    return e / (1.0 + np.sqrt(1.0 - e * e))


def solve_kepler(mean_anomaly_rad, eccentricity) -> np.ndarray:
    r"""Solve Kepler's equation M = E − e sin E for the eccentric anomaly E.

    Parameters
    ----------
    mean_anomaly_rad : float or array_like
        Mean anomaly M, radians (any real value; the revolution count is kept).
    eccentricity : float or array_like
        Eccentricity e in [0, 1), broadcast against ``mean_anomaly_rad``.

    Returns
    -------
    numpy.ndarray
        Eccentric anomaly E, radians, in the same revolution as M
        (|E − M| ≤ e); converged to better than 1e-12 rad.

    Raises
    ------
    OrbitError
        If an eccentricity lies outside [0, 1).

    Notes
    -----
    Newton's method (see the module docstring) from a series starter for
    e ≤ 0.3,

    .. math::

        E_0 = M + e \sin M + e^2 \sin M \cos M
              + \tfrac{1}{2} e^3 \sin M (3 \cos^2 M - 1),

    and from Danby's starter for larger e.

    Examples
    --------
    Meeus (1998), Example 30.a: e = 0.1, M = 5° gives E = 5.554589°.

    >>> round(float(np.rad2deg(solve_kepler(np.deg2rad(5.0), 0.1))), 6)
    5.554589
    """
    e = _check_eccentricity(eccentricity)
    m_all = np.asarray(mean_anomaly_rad, dtype=float)
    m_all, e = np.broadcast_arrays(m_all, e)
    turns = np.floor((m_all + np.pi) / _TWO_PI)
    m = m_all - _TWO_PI * turns  # in [-π, π)
    sin_m, cos_m = np.sin(m), np.cos(m)
    series = m + e * sin_m * (1.0 + e * cos_m + 0.5 * e * e * (3.0 * cos_m * cos_m - 1.0))
    high = e > 0.3
    ecc_anomaly = np.where(high, m + 0.85 * e * np.sign(sin_m), series) if high.any() else series
    for _ in range(MAX_NEWTON_ITERATIONS):
        step = (ecc_anomaly - e * np.sin(ecc_anomaly) - m) / (1.0 - e * np.cos(ecc_anomaly))
        ecc_anomaly = ecc_anomaly - step
        if not np.any(np.abs(step) > NEWTON_STEP_TOLERANCE_RAD):
            break
    else:  # pragma: no cover - unreachable for 0 <= e < 1 (Danby 1988)
        raise ArithmeticError("Kepler's equation did not converge; please report this input")
    result = ecc_anomaly + _TWO_PI * turns
    return result if result.ndim else result[()]


def eccentric_to_true(eccentric_anomaly_rad, eccentricity) -> np.ndarray:
    r"""Return the true anomaly v from the eccentric anomaly E (same revolution).

    .. math::

        v = E + 2 \arctan\frac{\beta \sin E}{1 - \beta \cos E}, \quad
        \beta = \frac{e}{1 + \sqrt{1 - e^2}}
    """
    e = _check_eccentricity(eccentricity)
    big_e = np.asarray(eccentric_anomaly_rad, dtype=float)
    beta = _beta(e)
    return big_e + 2.0 * np.arctan(beta * np.sin(big_e) / (1.0 - beta * np.cos(big_e)))


def true_to_eccentric(true_anomaly_rad, eccentricity) -> np.ndarray:
    r"""Return the eccentric anomaly E from the true anomaly v (same revolution).

    .. math::

        E = v - 2 \arctan\frac{\beta \sin v}{1 + \beta \cos v}, \quad
        \beta = \frac{e}{1 + \sqrt{1 - e^2}}
    """
    e = _check_eccentricity(eccentricity)
    v = np.asarray(true_anomaly_rad, dtype=float)
    beta = _beta(e)
    return v - 2.0 * np.arctan(beta * np.sin(v) / (1.0 + beta * np.cos(v)))


def eccentric_to_mean(eccentric_anomaly_rad, eccentricity) -> np.ndarray:
    """Return the mean anomaly from the eccentric anomaly, M = E − e sin E (Kepler's equation)."""
    e = _check_eccentricity(eccentricity)
    big_e = np.asarray(eccentric_anomaly_rad, dtype=float)
    return big_e - e * np.sin(big_e)


def mean_to_true(mean_anomaly_rad, eccentricity) -> np.ndarray:
    """Return the true anomaly from the mean anomaly (Kepler's equation, then E → v)."""
    return eccentric_to_true(solve_kepler(mean_anomaly_rad, eccentricity), eccentricity)


def true_to_mean(true_anomaly_rad, eccentricity) -> np.ndarray:
    """Return the mean anomaly from the true anomaly (v → E, then M = E − e sin E)."""
    return eccentric_to_mean(true_to_eccentric(true_anomaly_rad, eccentricity), eccentricity)


__all__ = [
    "eccentric_to_mean",
    "eccentric_to_true",
    "mean_to_true",
    "solve_kepler",
    "true_to_eccentric",
    "true_to_mean",
]
