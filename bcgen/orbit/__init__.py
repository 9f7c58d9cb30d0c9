"""Orbital elements of the Earth for any epoch, from a registry of named solutions.

=============  ==============================================================
solution       what it is
=============  ==============================================================
``berger1978`` Berger (1978) trigonometric series (the PMIP protocols' choice)
``table``      a user-supplied table, interpolated (see :mod:`bcgen.orbit.table`)
``fixed``      explicit values with a stated perihelion convention
``nbody``      bcgen's own integration of the planets from the JPL DE421 state
               with the precession equations (see :mod:`bcgen.orbit.nbody`)
=============  ==============================================================
"""

from __future__ import annotations

import inspect

from bcgen.errors import OrbitError
from bcgen.orbit import berger1978, fixed, nbody, table
from bcgen.orbit.elements import (
    PERIHELION_CONVENTIONS,
    OrbitalElements,
    check_orbit,
    convert_perihelion,
    wrap_angle,
)

#: Registry of orbital solutions: name → module with ``solve``, ``NAME`` and ``REFERENCE``.
SOLUTIONS = {module.NAME: module for module in (berger1978, table, fixed, nbody)}


def solve(years_from_1950, solution: str = "berger1978", **options) -> OrbitalElements:
    """Orbital elements at the given epochs from a named solution.

    Parameters
    ----------
    years_from_1950 : float or array_like
        Epochs in years relative to 1950 CE (see :func:`bcgen.epochs.parse_epoch`).
    solution : str
        A name from :data:`SOLUTIONS`.
    **options
        Passed to the solution (``path`` for ``table``; the values and their
        ``perihelion_convention`` for ``fixed``; ``dynamical_ellipticity`` and
        ``tidal_dissipation`` for ``nbody``).

    Returns
    -------
    OrbitalElements
        Elements with the shape of ``years_from_1950``.

    Raises
    ------
    OrbitError
        For an unknown solution or an option the solution does not take.
    """
    from bcgen import arguments

    if not arguments.one_of(solution, SOLUTIONS):
        raise OrbitError(f"unknown orbital solution {arguments.shown(solution)}; expected one "
                         f"of {', '.join(SOLUTIONS)}")
    module = SOLUTIONS[solution]
    accepted = [name for name in inspect.signature(module.solve).parameters][1:]
    unknown = sorted(set(options) - set(accepted))
    if unknown:
        raise OrbitError(
            f"orbital solution {solution!r} does not take {', '.join(unknown)}; "
            f"it takes {', '.join(accepted) or 'no options'}"
        )
    if years_from_1950 is not None:
        arguments.epochs_years(years_from_1950, error=OrbitError)
    elif solution != fixed.NAME:
        raise OrbitError(f"years_from_1950: the {solution} solution needs epochs (years from "
                         "1950 CE as numbers); got None")  # numbers; finite; within 1e9 years
    return module.solve(years_from_1950, **options)


__all__ = [
    "PERIHELION_CONVENTIONS",
    "SOLUTIONS",
    "OrbitalElements",
    "check_orbit",
    "convert_perihelion",
    "solve",
    "wrap_angle",
]
