"""Month definitions: fixed-day months and fixed-angle (celestial) months.

``fixed_day``
    The calendar's own months (31, 28, 31, … days in ``noleap``; 30 each in
    ``360_day``). Their arcs of true longitude change with the orbit: when
    perihelion moves, a fixed-day month covers a different part of the orbit.

``fixed_angle``
    Each month spans the same arc of true longitude λ as the fixed-day month of
    the same calendar in a *reference orbit* (default: the 1950 CE orbit of
    Berger 1978, ``bcgen.orbit.solve(0.0)``; the piControl 1850 CE orbit or any
    other may be given). The boundaries of month k are the times at which the
    Sun, on the epoch's orbit, reaches λ_ref(start of month k) and
    λ_ref(start of month k+1), taking the solution nearest the fixed-day
    boundary. They are fractional days and may be negative or beyond the year
    length when a month wraps the start of the year. This is the "celestial
    calendar" discussed by Kutzbach & Gallimore (1988, J. Geophys. Res. 93,
    803-821) and Joussaume & Braconnot (1997, J. Geophys. Res. 102, 1943-1956).

Which boundaries move
    In fixed-angle months every boundary can move, including 1 January: month
    1 starts when the Sun reaches the true longitude it had at 1 January 00:00
    in the reference orbit. With a March-equinox anchor the boundary at the
    anchor's λ does not move (λ = 0 at the anchor in every orbit), so months
    whose boundaries lie near the anchor move least.

Year length
    The 12 fixed-angle months of a year tile the time axis without gaps from
    one year to the next. In calendars without leap years (``noleap``,
    ``all_leap``, ``360_day``) their lengths sum to the calendar year exactly.
    In leap-year calendars an orbital year containing 29 February is 366 days
    long (see the leap-year rule in :mod:`bcgen.solar_calendar.calendars`), so
    the 12 fixed-angle months of one calendar year sum to its length only
    within about 0.15 day with a March-equinox anchor (0.14 day at most, for
    the anchor 03-21 12:00) and within about 0.6 day with a perihelion anchor:
    for example 365.52 days instead of 366 in ``julian`` year 4 at 127 ka,
    perihelion on 01-03 00:00, reference 1950 CE. (Largest values measured over
    the Berger 1978 orbits of 0 to 1000 ka in 1 kyr steps, model years 1 to 5,
    references 1950 CE and 1850 CE: 0.14 day for the March-equinox anchor at
    03-21 and 0.57 day for perihelion anchors on the first of any month, 01-03
    or 07-04.) Over consecutive years the sums add up exactly.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from bcgen.errors import BcgenError
from bcgen.orbit import solve
from bcgen.orbit.elements import OrbitalElements, check_orbit
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.solar_calendar.position import SolarYear

MonthMethod = Literal["fixed_day", "fixed_angle"]

#: Keys of one record of :meth:`MonthTable.to_records` (the JSON of ``bcgen months``).
RECORD_KEYS = (
    "month",
    "start_day",
    "length_days",
    "start_true_longitude_deg",
    "fixed_day_start_day",
    "fixed_day_length_days",
)


@dataclass(frozen=True, eq=False)
class MonthTable:
    """Month boundaries of one model year, for one orbit or many.

    Every array has the orbit's shape followed by a month axis of length 12.
    Days are fractional days after 1 January 00:00 of the model year.

    Attributes
    ----------
    start_day : numpy.ndarray
        Start of each month, days (may be negative for a month that wraps the
        start of the year).
    length_days : numpy.ndarray
        Length of each month, days.
    start_true_longitude_deg : numpy.ndarray
        True longitude of the Sun at the start of each month, degrees in [0, 360).
    fixed_day_start_day, fixed_day_length_days : numpy.ndarray
        The calendar's fixed-day months, for comparison.
    method : {"fixed_day", "fixed_angle"}
        Which definition the table holds.
    """

    start_day: np.ndarray
    length_days: np.ndarray
    start_true_longitude_deg: np.ndarray
    fixed_day_start_day: np.ndarray
    fixed_day_length_days: np.ndarray
    method: MonthMethod = "fixed_day"

    def __post_init__(self) -> None:
        if self.method not in MONTH_DEFINITIONS:
            raise BcgenError(
                f"unknown month definition {self.method!r}; expected one of "
                f"{', '.join(MONTH_DEFINITIONS)}"
            )
        names = (
            "start_day",
            "length_days",
            "start_true_longitude_deg",
            "fixed_day_start_day",
            "fixed_day_length_days",
        )
        arrays = np.broadcast_arrays(*(np.asarray(getattr(self, n), dtype=float) for n in names))
        if arrays[0].ndim == 0 or arrays[0].shape[-1] != 12:
            raise BcgenError(
                f"a month table needs 12 months on its last axis; got shape {arrays[0].shape}"
            )
        for name, array in zip(names, arrays, strict=True):
            object.__setattr__(self, name, array.copy())

    @property
    def end_day(self) -> np.ndarray:
        """End of each month (start of the next), days."""
        return self.start_day + self.length_days

    @property
    def bounds_days(self) -> np.ndarray:
        """The 13 boundaries of the year's months, days (last axis)."""
        return np.concatenate([self.start_day, self.end_day[..., -1:]], axis=-1)

    @property
    def shape(self) -> tuple[int, ...]:
        """Shape of the orbits the table was computed for (without the month axis)."""
        return self.start_day.shape[:-1]

    def to_records(self) -> list[dict[str, float | int]]:
        """Return the 12 months as dicts (the JSON of ``bcgen months``), for one orbit."""
        if self.shape:
            raise BcgenError(
                f"to_records needs a table for one orbit; this one has orbits of shape {self.shape}"
            )
        return [
            {
                "month": k + 1,
                "start_day": float(self.start_day[k]),
                "length_days": float(self.length_days[k]),
                "start_true_longitude_deg": float(self.start_true_longitude_deg[k]),
                "fixed_day_start_day": float(self.fixed_day_start_day[k]),
                "fixed_day_length_days": float(self.fixed_day_length_days[k]),
            }
            for k in range(12)
        ]


def _with_month_axis(orbit: OrbitalElements, name: str = "orbit") -> OrbitalElements:
    return check_orbit(orbit, name)[..., np.newaxis]


def _as_calendar(calendar: ModelCalendar | str) -> ModelCalendar:
    return calendar if isinstance(calendar, ModelCalendar) else ModelCalendar(calendar)


def fixed_day_months(
    orbit: OrbitalElements, calendar: ModelCalendar | str, year: int = 1
) -> MonthTable:
    """Compute the calendar's fixed-day months, with the Sun's true longitude at each start.

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements, scalar or any shape.
    calendar : ModelCalendar or str
        Model calendar with its anchor.
    year : int
        Model year (matters in leap-year calendars).
    """
    calendar = _as_calendar(calendar)
    starts = calendar.month_starts_days(year)
    solar = SolarYear(_with_month_axis(orbit), calendar, year)
    lam = np.rad2deg(solar.true_longitude_rad(starts[:12]))
    lengths = np.diff(starts)
    shape = lam.shape
    return MonthTable(
        start_day=np.broadcast_to(starts[:12], shape),
        length_days=np.broadcast_to(lengths, shape),
        start_true_longitude_deg=lam,
        fixed_day_start_day=np.broadcast_to(starts[:12], shape),
        fixed_day_length_days=np.broadcast_to(lengths, shape),
        method="fixed_day",
    )


def fixed_angle_months(
    orbit: OrbitalElements,
    calendar: ModelCalendar | str,
    reference: OrbitalElements | None = None,
    year: int = 1,
) -> MonthTable:
    r"""Compute months spanning the arcs of true longitude of a reference orbit's fixed-day months.

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements of the epoch(s), scalar or any shape.
    calendar : ModelCalendar or str
        Model calendar with its anchor (used for both orbits).
    reference : OrbitalElements, optional
        Reference orbit (default: 1950 CE, Berger 1978, i.e. ``bcgen.orbit.solve(0.0)``;
        the PMIP4 piControl choice is ``bcgen.orbit.solve(-100.0)``, 1850 CE).
    year : int
        Model year (matters in leap-year calendars).

    Notes
    -----
    With :math:`t_k` the fixed-day boundaries (k = 0…12) and
    :math:`\lambda^{ref}_k = \lambda_{ref}(t_k)`, the fixed-angle boundaries
    are the times :math:`t'_k` nearest :math:`t_k` with
    :math:`\lambda(t'_k) = \lambda^{ref}_k` on the epoch's orbit. Of the solutions
    one orbit apart, each boundary takes the one whose lag behind the reference orbit is
    within half an orbit of the mean lag over all longitudes; this rule does not depend on
    the year, so consecutive years tile, and it keeps the months in order even when they
    move by about half a year (possible only with a perihelion anchor and perihelia about
    180° apart, where the choice of side is arbitrary).
    """
    calendar = _as_calendar(calendar)
    if reference is None:
        reference = solve(0.0)
    bounds = calendar.month_starts_days(year)
    ref_year = SolarYear(_with_month_axis(reference, "reference"), calendar, year)
    solar = SolarYear(_with_month_axis(orbit), calendar, year)
    reference_lam = ref_year.true_longitude_rad(bounds)
    # Orbital phase of each boundary on the epoch's orbit = its phase on the reference orbit
    # + g(λ), where g is the (year-independent) phase lag between the orbits at longitude λ.
    # g is taken within half an orbit of its mean over all longitudes, so the boundaries are
    # in order and every year tiles with the next, even when the months move by half a year.
    times = solar.time_of_orbital_phase_days(
        ref_year.orbital_phase_rad(bounds) + _phase_lag(solar, ref_year, reference_lam)
    )
    lam_deg = np.broadcast_to(np.rad2deg(reference_lam), times.shape)[..., :12]
    fixed_lengths = np.diff(bounds)
    shape = lam_deg.shape
    return MonthTable(
        start_day=times[..., :12],
        length_days=np.diff(times, axis=-1),
        start_true_longitude_deg=lam_deg,
        fixed_day_start_day=np.broadcast_to(bounds[:12], shape),
        fixed_day_length_days=np.broadcast_to(fixed_lengths, shape),
        method="fixed_angle",
    )


def _phase_lag(solar: SolarYear, ref_year: SolarYear, lam_rad: np.ndarray) -> np.ndarray:
    """Epoch minus reference orbital phase at true longitudes, near their circular mean."""

    def lag(lam):
        return solar.orbital_phase_of_true_longitude_rad(
            lam
        ) - ref_year.orbital_phase_of_true_longitude_rad(lam)

    grid = np.linspace(0.0, 2.0 * np.pi, 72, endpoint=False)
    mean = np.angle(np.mean(np.exp(1j * lag(grid)), axis=-1, keepdims=True))
    return mean + (np.mod(lag(lam_rad) - mean + np.pi, 2.0 * np.pi) - np.pi)


#: Registry of month definitions (documented in the README; call with ``year=`` by keyword).
MONTH_DEFINITIONS = {
    "fixed_day": fixed_day_months,
    "fixed_angle": fixed_angle_months,
}

#: One-line description of each month definition, for docs and output headers.
MONTH_DEFINITION_DESCRIPTIONS: dict[str, str] = {
    "fixed_day": "the calendar's months of whole days",
    "fixed_angle": "months spanning the same arcs of true longitude as the fixed-day months "
    "of a reference orbit (default 1950 CE)",
}

__all__ = [
    "MONTH_DEFINITIONS",
    "MONTH_DEFINITION_DESCRIPTIONS",
    "RECORD_KEYS",
    "MonthTable",
    "MonthMethod",
    "fixed_angle_months",
    "fixed_day_months",
]
