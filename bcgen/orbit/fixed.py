"""Explicit orbital elements, for protocols that prescribe numbers.

The perihelion convention must be stated with the value; it is never guessed,
because a perihelion 180° off is the commonest silent error in paleo setups.
"""

from __future__ import annotations

import numpy as np

from bcgen.orbit.elements import PERIHELION_CONVENTIONS, OrbitalElements, convert_perihelion
from bcgen.errors import OrbitError

NAME = "fixed"
REFERENCE = "explicit values given by the user"


def solve(
    years_from_1950=None,
    *,
    eccentricity: float,
    obliquity_deg: float,
    perihelion_deg: float,
    perihelion_convention: str,
) -> OrbitalElements:
    """Orbital elements from explicit values, broadcast to the epochs if any are given.

    Parameters
    ----------
    years_from_1950 : array_like, optional
        Epochs the values stand for (they are the same for every epoch).
    eccentricity : float
        Eccentricity, in [0, 1).
    obliquity_deg : float
        Obliquity in degrees.
    perihelion_deg : float
        Longitude of perihelion in degrees, in ``perihelion_convention``.
    perihelion_convention : str
        One of :data:`~bcgen.orbit.elements.PERIHELION_CONVENTIONS` (required).
    """
    if perihelion_convention not in PERIHELION_CONVENTIONS:
        raise OrbitError(
            f"the perihelion convention must be stated as one of "
            f"{', '.join(PERIHELION_CONVENTIONS)}; got {perihelion_convention!r}"
        )
    varpi = convert_perihelion(perihelion_deg, perihelion_convention, "perihelion_longitude")
    if years_from_1950 is None:
        return OrbitalElements(eccentricity, obliquity_deg, varpi, None, NAME)
    t = np.asarray(years_from_1950, dtype=float)
    ones = np.ones_like(t)
    return OrbitalElements(eccentricity * ones, obliquity_deg * ones, varpi * ones, t, NAME)
