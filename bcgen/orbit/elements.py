"""The orbital elements of the Earth for one or many epochs, and their conventions.

bcgen keeps one internal convention for the perihelion and converts to the
others only at the edges, through :func:`convert_perihelion`.

Internal convention (``perihelion_longitude``)
    ϖ, the heliocentric longitude of perihelion measured from the moving
    March (vernal) equinox, in degrees in [0, 360). About 102.0° in 1950 CE.
    This is the number that the PMIP protocol tables print in their
    "perihelion − 180°" column, and the ϖ of Berger (1978).

Other conventions a model may use
    ``sun_longitude_at_perihelion``: the geocentric (apparent) longitude of
    the Sun at the moment of perihelion, ϖ + 180° (about 282° today).

Each of these can be given in degrees or radians; the unit is part of the
name of every field and option that carries an angle.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from bcgen.errors import OrbitError

PerihelionConvention = Literal["perihelion_longitude", "sun_longitude_at_perihelion"]
AngleUnit = Literal["deg", "rad"]

#: Perihelion conventions and what each means (documented in the README; a test checks that).
PERIHELION_CONVENTIONS: dict[str, str] = {
    "perihelion_longitude": (
        "heliocentric longitude of perihelion from the moving March equinox (ϖ; about 102° "
        "in 1950 CE; the 'perihelion - 180' column of PMIP protocol tables; Berger 1978)"
    ),
    "sun_longitude_at_perihelion": (
        "geocentric longitude of the Sun at perihelion, ϖ + 180° (about 282° in 1950 CE)"
    ),
}

_OFFSET_DEG = {"perihelion_longitude": 0.0, "sun_longitude_at_perihelion": 180.0}

#: One second of arc, in radians.
ARCSEC = np.pi / (180.0 * 3600.0)


def convert_perihelion(
    value,
    from_convention: str,
    to_convention: str,
    from_unit: str = "deg",
    to_unit: str = "deg",
):
    """Convert a longitude of perihelion between conventions and angle units.

    Parameters
    ----------
    value : float or array_like
        Longitude of perihelion in ``from_convention`` and ``from_unit``.
    from_convention, to_convention : {"perihelion_longitude", "sun_longitude_at_perihelion"}
        See :data:`PERIHELION_CONVENTIONS`.
    from_unit, to_unit : {"deg", "rad"}
        Angle units.

    Returns
    -------
    float or numpy.ndarray
        The same direction expressed in ``to_convention``, reduced to [0, 360°)
        or [0, 2π).

    Raises
    ------
    OrbitError
        For an unknown convention or unit, or a value that is not finite
        (checked before any arithmetic, so no numpy warning is printed).
    """
    from bcgen import arguments

    for name, conv in (("from_convention", from_convention), ("to_convention", to_convention)):
        if not arguments.one_of(conv, _OFFSET_DEG):
            raise OrbitError(
                f"{name}: unknown perihelion convention {arguments.shown(conv)}; expected one "
                f"of {', '.join(sorted(_OFFSET_DEG))}"
            )
    for name, unit in (("from_unit", from_unit), ("to_unit", to_unit)):
        if not arguments.one_of(unit, ("deg", "rad")):
            raise OrbitError(f"{name}: unknown angle unit {arguments.shown(unit)}; expected "
                             "'deg' or 'rad'")
    given = arguments.real_array(value, "value", OrbitError, "a longitude of perihelion")
    _check(given, np.isfinite(given), "longitude of perihelion must be finite")
    deg = given
    if from_unit == "rad":
        with np.errstate(over="ignore"):
            deg = np.rad2deg(given)
        _check(given, np.isfinite(deg), "longitude of perihelion is too large")
    deg = deg - _OFFSET_DEG[from_convention] + _OFFSET_DEG[to_convention]
    out = wrap_angle(np.deg2rad(deg), 2.0 * np.pi) if to_unit == "rad" else wrap_angle(deg)
    return out if np.ndim(out) else float(out)


def wrap_angle(angle, full_turn: float = 360.0) -> np.ndarray:
    """Reduce angles to [0, full_turn), also for tiny negative inputs.

    ``np.mod(-1e-17, 360.0)`` rounds to 360.0; this returns 0.0 instead. Angles already
    in range are returned as a copy without the (slow) floating-point modulo.
    """
    values = np.asarray(angle, dtype=float)
    if np.all((values >= 0.0) & (values < full_turn)):
        return values.copy()
    out = np.mod(values, full_turn)
    return np.where(out >= full_turn, 0.0, out)


@dataclass(frozen=True)
class OrbitalElements:
    """Eccentricity, obliquity and longitude of perihelion for one or many epochs.

    All array fields share one shape (scalar for one epoch). Validated on
    creation: 0 ≤ e < 1, 0 ≤ ε ≤ 90°; ϖ is reduced to [0, 360).

    Attributes
    ----------
    eccentricity : numpy.ndarray
        Orbital eccentricity e (dimensionless).
    obliquity_deg : numpy.ndarray
        Obliquity ε of the ecliptic, degrees.
    perihelion_longitude_deg : numpy.ndarray
        ϖ, heliocentric longitude of perihelion from the moving March equinox,
        degrees in [0, 360) (the internal convention, see module docstring).
    years_from_1950 : numpy.ndarray or None
        Epoch of each element set in years relative to 1950 CE (negative in the
        past), or None for explicit values not tied to an epoch.
    solution : str
        Name of the solution that produced the values (``berger1978``,
        ``table``, ``fixed``).
    """

    eccentricity: np.ndarray
    obliquity_deg: np.ndarray
    perihelion_longitude_deg: np.ndarray
    years_from_1950: np.ndarray | None = None
    solution: str = "fixed"

    def __post_init__(self) -> None:
        from bcgen import arguments

        arguments.text(self.solution, "solution", OrbitError, what="the name of a solution")
        e, eps, varpi = (
            arguments.real_array(getattr(self, name), name, OrbitError, "numbers")
            for name in ("eccentricity", "obliquity_deg", "perihelion_longitude_deg"))
        t = None if self.years_from_1950 is None else arguments.epochs_years(
            self.years_from_1950)
        shapes = [a.shape for a in (e, eps, varpi, t) if a is not None]
        try:
            shape = np.broadcast_shapes(*shapes)
        except ValueError:
            raise OrbitError(
                f"orbital elements and epochs have incompatible shapes {shapes}"
            ) from None
        _check(
            e,
            (e >= 0) & (e < 1),
            "eccentricity must be in [0, 1) (a paleo orbit stays below about 0.07)",
        )
        _check(
            eps,
            (eps >= 0) & (eps <= 90),
            "obliquity must be in [0, 90] degrees (Earth: about 22-24.5)",
        )
        _check(varpi, np.isfinite(varpi), "longitude of perihelion must be finite")
        fields = {
            "eccentricity": e,
            "obliquity_deg": eps,
            "perihelion_longitude_deg": wrap_angle(varpi),
            "years_from_1950": t,
        }
        for name, value in fields.items():
            if value is not None:
                value = np.broadcast_to(value, shape).copy()
                value.flags.writeable = False
                object.__setattr__(self, name, value)

    @classmethod
    def from_checked(cls, eccentricity: np.ndarray, obliquity_deg: np.ndarray,
                     perihelion_longitude_deg: np.ndarray, years_from_1950: np.ndarray,
                     solution: str) -> OrbitalElements:
        """Wrap arrays a solution of the package has just computed and checked, without copies.

        For solutions that evaluate many epochs at once (the ``nbody`` table): the caller
        guarantees what :meth:`__post_init__` would check -- float64 arrays of one shape,
        0 ≤ e < 1, 0 ≤ ε ≤ 90, ϖ in [0, 360), finite epochs -- and hands over arrays no
        one else holds; they are made read-only here, as the checked path makes them.
        """
        self = object.__new__(cls)
        for name, value in (("eccentricity", eccentricity), ("obliquity_deg", obliquity_deg),
                            ("perihelion_longitude_deg", perihelion_longitude_deg),
                            ("years_from_1950", years_from_1950)):
            value.flags.writeable = False
            object.__setattr__(self, name, value)
        object.__setattr__(self, "solution", solution)
        return self

    # --- derived quantities -------------------------------------------------------------
    @property
    def shape(self) -> tuple[int, ...]:
        """Shape shared by all element arrays."""
        return self.eccentricity.shape

    @property
    def obliquity_rad(self) -> np.ndarray:
        """Obliquity ε in radians."""
        return np.deg2rad(self.obliquity_deg)

    @property
    def perihelion_longitude_rad(self) -> np.ndarray:
        """ϖ in radians (internal convention)."""
        return np.deg2rad(self.perihelion_longitude_deg)

    @property
    def sun_longitude_at_perihelion_deg(self) -> np.ndarray:
        """Geocentric longitude of the Sun at perihelion, ϖ + 180°, in [0, 360)."""
        return wrap_angle(self.perihelion_longitude_deg + 180.0)

    @property
    def precession_index(self) -> np.ndarray:
        """Climatic precession parameter e·sin ϖ (Berger 1978)."""
        return self.eccentricity * np.sin(self.perihelion_longitude_rad)

    @property
    def years_bp(self) -> np.ndarray | None:
        """Years before 1950 CE (positive in the past), or None."""
        return None if self.years_from_1950 is None else -self.years_from_1950

    def __getitem__(self, index) -> OrbitalElements:
        """Select epochs, like indexing a numpy array."""
        return OrbitalElements(
            self.eccentricity[index],
            self.obliquity_deg[index],
            self.perihelion_longitude_deg[index],
            None if self.years_from_1950 is None else self.years_from_1950[index],
            self.solution,
        )

    def __len__(self) -> int:
        return len(self.eccentricity)

    def as_record(self) -> dict[str, float | str]:
        """Return the elements of one epoch as a JSON-ready dict, every convention named."""
        if self.shape:
            raise OrbitError(f"as_record needs the elements of one epoch; these have shape "
                             f"{self.shape}")
        return {
            "solution": self.solution,
            "eccentricity": float(self.eccentricity),
            "obliquity_deg": float(self.obliquity_deg),
            "perihelion_longitude_deg": float(self.perihelion_longitude_deg),
            "sun_longitude_at_perihelion_deg": float(self.sun_longitude_at_perihelion_deg),
            "precession_index": float(self.precession_index),
        }

    def perihelion(self, convention: str = "perihelion_longitude", unit: str = "deg"):
        """Longitude of perihelion in any named convention and unit (see module docstring)."""
        return convert_perihelion(
            self.perihelion_longitude_deg, "perihelion_longitude", convention, "deg", unit
        )


def check_orbit(value, name: str = "orbit") -> OrbitalElements:
    """Return ``value`` if it is :class:`OrbitalElements`; else refuse it, naming ``name``.

    Every public function that takes an orbit calls this first (the check lives here, not
    in :mod:`bcgen.arguments`, so that the argument checks do not import the orbit).
    """
    if not isinstance(value, OrbitalElements):
        raise OrbitError(f"{name} must be OrbitalElements (from bcgen.orbit.solve); got "
                         f"{type(value).__name__}")
    return value


def _check(values: np.ndarray, ok: np.ndarray, what: str) -> None:
    """Raise OrbitError naming up to three offending values unless all are ok."""
    bad = np.ravel(values)[~np.ravel(ok)]  # NaN compares False, so it counts as bad
    if bad.size:
        shown = ", ".join(f"{v:g}" for v in bad[:3]) + (" ..." if bad.size > 3 else "")
        raise OrbitError(f"{what}; got {shown}")
