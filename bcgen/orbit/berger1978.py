r"""The Berger (1978) trigonometric series for e, ε and ϖ.

Berger, A. L. (1978): Long-term variations of daily insolation and Quaternary
climatic changes. J. Atmos. Sci. 35, 2362-2367,
doi:10.1175/1520-0469(1978)035<2362:LTVODI>2.0.CO;2 (Tables 1, 4 and 5; the
coefficient files and their provenance are in ``bcgen/data/berger1978/``).

With t in years relative to 1950 CE and each term's argument
``arg = rate·t + phase``:

.. math::

    \varepsilon = \varepsilon^* + \sum_i A_i \cos(\mathrm{arg}_i)

    e \sin\Pi = \sum_j M_j \sin(\mathrm{arg}_j), \quad
    e \cos\Pi = \sum_j M_j \cos(\mathrm{arg}_j)

    \psi = \bar\psi t + \zeta + \sum_k F_k \sin(\mathrm{arg}_k), \quad
    \varpi = \Pi + \psi

The solution is commonly taken to be usable within about ±1 Myr of the present;
outside that range an :class:`~bcgen.errors.OutsideValidityWarning` is issued.
"""

from __future__ import annotations

import warnings
from functools import cache
from importlib import resources

import numpy as np

from bcgen.epochs import format_epoch
from bcgen.errors import OrbitError, OutsideValidityWarning
from bcgen.orbit.elements import ARCSEC, OrbitalElements

NAME = "berger1978"
REFERENCE = (
    "Berger, A. L. (1978): Long-term variations of daily insolation and Quaternary climatic "
    "changes. J. Atmos. Sci. 35, 2362-2367, doi:10.1175/1520-0469(1978)035<2362:LTVODI>2.0.CO;2"
)
VALID_YEARS = 1_000_000.0

OBLIQUITY_CONSTANT_DEG = 23.320556  # ε*, Berger (1978)
PRECESSION_RATE_ARCSEC_PER_YEAR = 50.439273  # ψ̄, Berger (1978)
PRECESSION_CONSTANT_DEG = 3.392506  # ζ, Berger (1978)


@cache
def _table(name: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return (amplitude, rate_rad_per_year, phase_rad) of one packaged table."""
    path = resources.files("bcgen.data") / "berger1978" / f"{name}.csv"
    with path.open("r", encoding="ascii") as fh:
        data = np.loadtxt(fh, delimiter=",", skiprows=1, ndmin=2)
    amplitude, rate, phase = data[:, 1], data[:, 2] * ARCSEC, np.deg2rad(data[:, 3])
    return amplitude, rate, phase


def _series(t: np.ndarray, name: str, funcs: tuple, chunk: int = 8192) -> list[np.ndarray]:
    """Σ A·f(rate·t + phase) of one table for every t and each f in ``funcs``.

    Every term is evaluated directly (no angle-addition recurrences, which would
    accumulate rounding error), in chunks of epochs with two reused buffers so
    that memory stays bounded (about 10 MB) for any number of epochs.
    """
    amp, rate, phase = _table(name)
    flat = t.ravel()
    sums = [np.empty_like(flat) for _ in funcs]
    arg = np.empty((min(chunk, flat.size), rate.size))
    val = np.empty_like(arg)
    for lo in range(0, flat.size, chunk):
        part = flat[lo : lo + chunk]
        a, v = arg[: part.size], val[: part.size]
        np.multiply.outer(part, rate, out=a)
        a += phase
        for out, func in zip(sums, funcs, strict=True):
            func(a, out=v)
            np.matmul(v, amp, out=out[lo : lo + part.size])
    return [s.reshape(t.shape) for s in sums]


def general_precession_deg(years_from_1950) -> np.ndarray:
    r"""General precession in longitude ψ, degrees (Berger 1978, Table 5).

    .. math:: \psi = \bar\psi t + \zeta + \sum_k F_k \sin(\mathrm{arg}_k)
    """
    t = np.asarray(years_from_1950, dtype=float)
    (prec_sin,) = _series(t, "precession", (np.sin,))
    return (PRECESSION_RATE_ARCSEC_PER_YEAR * t + prec_sin) / 3600.0 + PRECESSION_CONSTANT_DEG


def solve(years_from_1950) -> OrbitalElements:
    """Orbital elements from the Berger (1978) series.

    Parameters
    ----------
    years_from_1950 : float or array_like
        Epochs in years relative to 1950 CE (negative in the past).

    Returns
    -------
    OrbitalElements
        e, ε (degrees) and ϖ (degrees, heliocentric from the moving March
        equinox), with the same shape as the input.

    Raises
    ------
    OrbitError
        For epochs that are not finite numbers.

    Warns
    -----
    OutsideValidityWarning
        For epochs more than 1 Myr from 1950 CE.
    """
    t = np.asarray(years_from_1950, dtype=float)
    if not np.all(np.isfinite(t)):
        raise OrbitError("epochs must be finite numbers of years from 1950 CE; got NaN or inf")
    if t.size and np.max(np.abs(t)) > VALID_YEARS:
        worst = float(t.flat[np.argmax(np.abs(t))])
        warnings.warn(
            f"epoch {format_epoch(worst)} is outside the range of about ±1 Myr around 1950 CE "
            "in which the Berger (1978) series is commonly used; results there are "
            "extrapolations",
            OutsideValidityWarning,
            stacklevel=2,
        )
    (obl_cos,) = _series(t, "obliquity", (np.cos,))
    ecc_cos, ecc_sin = _series(t, "eccentricity", (np.cos, np.sin))
    obliquity_deg = OBLIQUITY_CONSTANT_DEG + obl_cos / 3600.0
    eccentricity = np.hypot(ecc_sin, ecc_cos)
    fixed_perihelion_deg = np.rad2deg(np.arctan2(ecc_sin, ecc_cos))  # Π, fixed equinox
    varpi_deg = fixed_perihelion_deg + general_precession_deg(t)  # OrbitalElements wraps it
    return OrbitalElements(eccentricity, obliquity_deg, varpi_deg, t, NAME)
