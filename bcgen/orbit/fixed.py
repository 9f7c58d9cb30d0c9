"""Explicit orbital elements, for protocols that prescribe numbers.

The perihelion convention must be stated with the value; it is never guessed,
because a perihelion 180° off is the commonest silent error in paleo setups.
"""

from __future__ import annotations

import numpy as np

from bcgen import arguments
from bcgen.errors import OrbitError
from bcgen.orbit.elements import PERIHELION_CONVENTIONS, OrbitalElements, convert_perihelion

NAME = "fixed"
REFERENCE = "explicit values given by the user"


def solve(
    years_from_1950=None,
    *,
    eccentricity: float | None = None,
    obliquity_deg: float | None = None,
    perihelion_deg: float | None = None,
    perihelion_convention: str | None = None,
    idealized: bool = False,
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
    idealized : bool
        A deliberately non-Earth orbit: an obliquity outside Earth's range, or one that
        looks like radians, is let through (:func:`bcgen.arguments.obliquity_deg`).

    Raises
    ------
    OrbitError
        If a value or the perihelion convention is missing or invalid (a
        non-finite perihelion is refused before any arithmetic on it).
    """
    given = {
        "eccentricity": eccentricity,
        "obliquity_deg": obliquity_deg,
        "perihelion_deg": perihelion_deg,
        "perihelion_convention": perihelion_convention,
    }
    missing = [name for name, value in given.items() if value is None]
    if missing:
        raise OrbitError(
            f"the fixed orbital solution needs {', '.join(given)}; missing {', '.join(missing)}"
        )
    if not arguments.one_of(perihelion_convention, PERIHELION_CONVENTIONS):
        raise OrbitError(
            f"the perihelion convention must be stated as one of "
            f"{', '.join(PERIHELION_CONVENTIONS)}; got {arguments.shown(perihelion_convention)}"
        )
    idealized = arguments.flag(idealized, "idealized", OrbitError)
    obliquity_deg = arguments.obliquity_deg(obliquity_deg, idealized=idealized, earth=True)
    perihelion_deg = arguments.real_array(perihelion_deg, "perihelion_deg", OrbitError,
                                          "a longitude of perihelion in degrees")
    varpi = convert_perihelion(perihelion_deg, perihelion_convention, "perihelion_longitude")
    t = None if years_from_1950 is None else np.asarray(years_from_1950, dtype=float)
    return OrbitalElements(eccentricity, obliquity_deg, varpi, t, NAME)
