r"""The Sun's position on the orbit at any model time, and back.

:class:`SolarYear` maps model time (fractional days after 1 January 00:00 of a
model year, see :mod:`bcgen.solar_calendar.calendars`) to the mean anomaly M,
the true anomaly v, the Sun's true longitude λ, its declination δ and the
distance factor (a/r)², for one orbit or many.

Conventions (see :mod:`bcgen.orbit.elements`)
    ϖ is the heliocentric longitude of perihelion from the moving March
    equinox; the Sun's geocentric true longitude is λ = v + ϖ + 180°
    (0 at the March equinox, 90° at the June solstice).

Time → position
    The orbit is anchored in every calendar year (leap-year rule in
    :mod:`bcgen.solar_calendar.calendars`). Between two anchors aₖ and aₖ₊₁ the
    mean anomaly advances uniformly (Kepler's second law),

    .. math::

        M(t) = M_0 + 2\pi \left(k + \frac{t - a_k}{a_{k+1} - a_k}\right),

    where k counts orbital years from the anchor of the model year and M₀ is
    the mean anomaly at every anchor: M₀ = 0 for a perihelion anchor, and
    M₀ = M(v = −ϖ − 180°) for a March-equinox anchor (λ = 0). Then E solves
    Kepler's equation, v follows from E, and λ = v + ϖ + π.

Broadcasting
    Orbital elements of any shape broadcast against ``t_days`` under numpy
    rules. For an (n_epochs, n_days) result from ``orbit`` of shape
    (n_epochs,) and ``t_days`` of shape (n_days,), give the orbit a trailing
    axis: ``SolarYear(orbit[:, np.newaxis], calendar).declination_rad(t_days)``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bcgen.errors import CalendarError
from bcgen.orbit.elements import OrbitalElements, check_orbit
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.solar_calendar.kepler import mean_to_true, true_to_mean

_TWO_PI = 2.0 * np.pi
#: Orbital years on each side of the model year whose anchors are computed exactly;
#: times further away continue with the mean motion of the outermost orbital year.
_YEARS_AROUND = 3


@dataclass(frozen=True, eq=False)
class SolarYear:
    """The Sun's position through one model year of a model calendar, for given orbits.

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements, scalar or of any shape (broadcast against times).
    calendar : ModelCalendar or str
        The model calendar and its anchor (a calendar name gives the default
        anchor, March equinox at 21 March 12:00).
    year : int
        The model year whose 1 January 00:00 is time 0 (default 1).

    Notes
    -----
    Times may lie outside [0, year length): they belong to the neighbouring
    orbital years under the same leap-year rule. All angles returned are in
    radians, reduced to [0, 2π).
    """

    orbit: OrbitalElements
    calendar: ModelCalendar | str
    year: int = 1
    _anchors: np.ndarray = field(init=False, repr=False, compare=False)
    _lengths: np.ndarray = field(init=False, repr=False, compare=False)
    _m0: np.ndarray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        check_orbit(self.orbit)
        calendar = self.calendar
        if not isinstance(calendar, ModelCalendar):
            if not isinstance(calendar, str):
                raise CalendarError(
                    f"calendar must be a ModelCalendar or a calendar name; got "
                    f"{type(calendar).__name__}"
                )
            calendar = ModelCalendar(calendar)
            object.__setattr__(self, "calendar", calendar)
        offsets = np.arange(-_YEARS_AROUND, _YEARS_AROUND + 2)
        anchors = calendar.anchor_days(self.year, offsets)
        object.__setattr__(self, "year", int(self.year))
        object.__setattr__(self, "_anchors", anchors)
        # Anchor to anchor is a whole number of days (same time of day at both ends).
        object.__setattr__(self, "_lengths", np.round(np.diff(anchors)))
        e = self.orbit.eccentricity
        if calendar.anchor.kind == "perihelion":
            m0 = np.zeros_like(e)
        else:  # March equinox: λ = 0, so v = -ϖ - π
            m0 = np.mod(true_to_mean(-self.orbit.perihelion_longitude_rad - np.pi, e), _TWO_PI)
        object.__setattr__(self, "_m0", m0)

    # --- calendar quantities --------------------------------------------------------------
    @property
    def anchor_day(self) -> float:
        """Time of the anchor in the model year, days after 1 January 00:00."""
        return float(self._anchors[_YEARS_AROUND])

    @property
    def year_length_days(self) -> float:
        """Length of the calendar year (365, 366 or 360 days)."""
        return self.calendar.year_length_days(self.year)

    @property
    def orbital_year_length_days(self) -> float:
        """Length of the orbital year from this year's anchor to the next, in days."""
        return float(self._lengths[_YEARS_AROUND])

    # --- phase of the orbit ---------------------------------------------------------------
    def orbital_phase_rad(self, t_days) -> np.ndarray:
        """Orbital phase M − M₀ at model times: 0 at this year's anchor, +2π per orbital year.

        Not reduced: it counts whole orbits from the anchor of the model year (negative
        before it). It depends on the calendar and anchor only, not on the orbit.
        """
        t = np.asarray(t_days, dtype=float)
        k = np.clip(np.searchsorted(self._anchors, t, side="right") - 1, 0, self._lengths.size - 1)
        return _TWO_PI * ((k - _YEARS_AROUND) + (t - self._anchors[k]) / self._lengths[k])

    def time_of_orbital_phase_days(self, phase_rad) -> np.ndarray:
        """Model time of an orbital phase (inverse of :meth:`orbital_phase_rad`), days."""
        cycles = np.asarray(phase_rad, dtype=float) / _TWO_PI
        k = np.clip(np.floor(cycles).astype(int) + _YEARS_AROUND, 0, self._lengths.size - 1)
        return self._anchors[k] + self._lengths[k] * (cycles - (k - _YEARS_AROUND))

    def orbital_phase_of_true_longitude_rad(self, true_longitude_rad) -> np.ndarray:
        """Orbital phase M − M₀ at which the Sun reaches a true longitude, radians in [0, 2π)."""
        v = (
            np.asarray(true_longitude_rad, dtype=float)
            - self.orbit.perihelion_longitude_rad
            - np.pi
        )
        phase = np.mod(true_to_mean(v, self.orbit.eccentricity) - self._m0, _TWO_PI)
        return np.where(phase >= _TWO_PI, 0.0, phase)

    def _mean_anomaly_unwrapped(self, t_days) -> np.ndarray:
        return self._m0 + self.orbital_phase_rad(t_days)

    # --- position at a time ---------------------------------------------------------------
    def mean_anomaly_rad(self, t_days) -> np.ndarray:
        """Mean anomaly M at model times, radians in [0, 2π)."""
        return np.mod(self._mean_anomaly_unwrapped(t_days), _TWO_PI)

    def true_anomaly_rad(self, t_days) -> np.ndarray:
        """Return the true anomaly v at model times (Kepler's equation), radians in [0, 2π)."""
        m = self._mean_anomaly_unwrapped(t_days)
        return np.mod(mean_to_true(m, self.orbit.eccentricity), _TWO_PI)

    def true_longitude_rad(self, t_days) -> np.ndarray:
        """Return the Sun's geocentric true longitude λ = v + ϖ + π, radians in [0, 2π)."""
        v = mean_to_true(self._mean_anomaly_unwrapped(t_days), self.orbit.eccentricity)
        return np.mod(v + self.orbit.perihelion_longitude_rad + np.pi, _TWO_PI)

    def declination_rad(self, t_days) -> np.ndarray:
        """Return the Sun's declination δ, radians, from sin δ = sin ε sin λ."""
        return self.solar_geometry(t_days)[1]

    def distance_factor(self, t_days) -> np.ndarray:
        """(a/r)², with a/r = (1 + e cos v) / (1 − e²) (conic equation of the ellipse)."""
        return self.solar_geometry(t_days)[2]

    def solar_geometry(self, t_days) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        r"""Return true longitude λ (rad), declination δ (rad) and (a/r)² from one Kepler solve.

        .. math::

            \sin\delta = \sin\varepsilon \sin\lambda, \qquad
            \left(\frac{a}{r}\right)^2 = \left(\frac{1 + e\cos v}{1 - e^2}\right)^2
        """
        e = self.orbit.eccentricity
        v = mean_to_true(self._mean_anomaly_unwrapped(t_days), e)
        lam = np.mod(v + self.orbit.perihelion_longitude_rad + np.pi, _TWO_PI)
        declination = np.arcsin(np.sin(self.orbit.obliquity_rad) * np.sin(lam))
        factor = ((1.0 + e * np.cos(v)) / (1.0 - e * e)) ** 2
        return lam, declination, factor

    # --- time of a position ---------------------------------------------------------------
    def time_of_true_longitude_days(self, true_longitude_rad, near_days=None) -> np.ndarray:
        """Return the model time at which the Sun reaches a true longitude (inverse of λ(t)).

        Parameters
        ----------
        true_longitude_rad : float or array_like
            True longitude λ, radians (any revolution), broadcast against the orbit.
        near_days : float or array_like, optional
            Without it, the time in [anchor_day, anchor_day + orbital year length)
            is returned; with it, the time closest to ``near_days`` (the solution
            whose orbital phase is within half an orbit of that of ``near_days``).

        Returns
        -------
        numpy.ndarray
            Days after 1 January 00:00 of the model year.
        """
        phase = self.orbital_phase_of_true_longitude_rad(true_longitude_rad)
        if near_days is not None:
            near = self.orbital_phase_rad(near_days)
            phase = near + (np.mod(phase - near + np.pi, _TWO_PI) - np.pi)
        return self.time_of_orbital_phase_days(phase)


__all__ = ["SolarYear"]
