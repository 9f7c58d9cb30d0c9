"""The orbit, gas, calendar and insolation sections of a spec, as validated dataclasses.

Every rule about one section lives in its ``__post_init__`` and raises a
:class:`~bcgen.spec.common.FieldError` naming the key path (``calendar.date``);
the YAML loader adds the file, line and column of that key. Rules that tie
sections together live in :class:`bcgen.spec.experiment.ExperimentSpec`.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

from bcgen.arguments import outside_earth_obliquity
from bcgen.epochs import parse_epoch
from bcgen.errors import BcgenError, DeprecatedCalendarNameWarning
from bcgen.orbit import PERIHELION_CONVENTIONS, SOLUTIONS, OrbitalElements
from bcgen.orbit import solve as solve_orbit
from bcgen.solar_calendar.calendars import (
    ANCHOR_FORMAT,
    DEPRECATED_CALENDAR_NAMES,
    REFUSED_CALENDARS,
    Anchor,
    ModelCalendar,
    date_exists,
    deprecated_calendar_message,
    split_anchor_text,
    year_length_days,
)
from bcgen.spec import schema as S
from bcgen.spec.common import FieldError, check_choice, check_epoch, check_number, existing_file

#: Earth's range of eccentricity over the last few million years, with a margin (Laskar
#: et al. 2004 give below about 0.07; from memory). Values outside need
#: ``orbit.idealized: true`` (the obliquity's range: :mod:`bcgen.arguments`).
EARTH_ECCENTRICITY_MAX = 0.08


# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ExperimentInfo:
    """``experiment:`` the experiment's name (used in file names) and description."""

    name: str
    description: str = ""

    def __post_init__(self) -> None:
        from bcgen.arguments import experiment_name

        try:
            experiment_name(self.name)
        except BcgenError as exc:
            raise FieldError("experiment.name", str(exc).split(": ", 1)[1]) from None


@dataclass(frozen=True)
class ExpectedValue:
    """A published value and the number of decimals it was written with."""

    value: float
    decimals: int

    @property
    def tolerance(self) -> float:
        """Half a unit in the last written digit (``0.87`` → 0.005)."""
        return 0.5 * 10.0 ** (-self.decimals)

    def agrees(self, computed: float, period: float | None = None) -> bool:
        """Tell whether ``computed`` rounds to the published digits (angles wrap by ``period``)."""
        diff = float(computed) - self.value
        if period is not None:
            diff = (diff + period / 2) % period - period / 2
        return abs(diff) <= self.tolerance * (1 + 1e-9) + 1e-12


@dataclass(frozen=True)
class OrbitCheck:
    """One published value compared with the computed one."""

    name: str
    expected: float
    computed: float
    tolerance: float
    agrees: bool
    convention: str | None = None


@dataclass(frozen=True)
class ExpectedOrbit:
    """``orbit.expected:`` published orbital values and their source."""

    source: str
    eccentricity: ExpectedValue | None = None
    obliquity_deg: ExpectedValue | None = None
    perihelion_deg: ExpectedValue | None = None
    perihelion_convention: str | None = None

    def __post_init__(self) -> None:
        p = "orbit.expected"
        if not isinstance(self.source, str) or not self.source.strip():
            raise FieldError(f"{p}.source", "name where the expected values are published")
        if self.eccentricity is self.obliquity_deg is self.perihelion_deg is None:
            raise FieldError(p, "give at least one of eccentricity, obliquity_deg, perihelion_deg")
        if (self.perihelion_deg is None) != (self.perihelion_convention is None):
            missing = (
                "perihelion_convention" if self.perihelion_convention is None else "perihelion_deg"
            )
            raise FieldError(
                f"{p}.{missing}",
                "perihelion_deg and perihelion_convention go "
                f"together; add {missing} ({', '.join(PERIHELION_CONVENTIONS)})",
            )
        if self.perihelion_convention is not None:
            check_choice(
                f"{p}.perihelion_convention",
                self.perihelion_convention,
                PERIHELION_CONVENTIONS,
                "perihelion convention",
            )

    def compare(self, elements: OrbitalElements) -> tuple[OrbitCheck, ...]:
        """Compare computed elements (one epoch) with the published values."""
        checks = []
        if self.eccentricity is not None:
            value = float(elements.eccentricity)
            checks.append(
                OrbitCheck(
                    "eccentricity",
                    self.eccentricity.value,
                    value,
                    self.eccentricity.tolerance,
                    self.eccentricity.agrees(value),
                )
            )
        if self.obliquity_deg is not None:
            value = float(elements.obliquity_deg)
            checks.append(
                OrbitCheck(
                    "obliquity_deg",
                    self.obliquity_deg.value,
                    value,
                    self.obliquity_deg.tolerance,
                    self.obliquity_deg.agrees(value),
                )
            )
        if self.perihelion_deg is not None:
            value = float(elements.perihelion(self.perihelion_convention, "deg"))
            checks.append(
                OrbitCheck(
                    "perihelion_deg",
                    self.perihelion_deg.value,
                    value,
                    self.perihelion_deg.tolerance,
                    self.perihelion_deg.agrees(value, 360.0),
                    self.perihelion_convention,
                )
            )
        return tuple(checks)


@dataclass(frozen=True)
class OrbitSpec:
    """``orbit:`` the solution that gives the orbital elements, and published checks."""

    solution: str = S.DEFAULT_SOLUTION
    table: Path | None = None
    eccentricity: float | None = None
    obliquity_deg: float | None = None
    perihelion_deg: float | None = None
    perihelion_convention: str | None = None
    idealized: bool = False
    expected: ExpectedOrbit | None = None

    def __post_init__(self) -> None:
        check_choice("orbit.solution", self.solution, SOLUTIONS, "orbital solution")
        fixed_keys = ("eccentricity", "obliquity_deg", "perihelion_deg", "perihelion_convention")
        if self.solution == "fixed":
            for key in fixed_keys:
                if getattr(self, key) is None:
                    raise FieldError(
                        f"orbit.{key}",
                        "required with solution 'fixed' (give "
                        "eccentricity, obliquity_deg, perihelion_deg and "
                        "perihelion_convention)",
                    )
            check_choice(
                "orbit.perihelion_convention",
                self.perihelion_convention,
                PERIHELION_CONVENTIONS,
                "perihelion convention",
            )
            check_number("orbit.eccentricity", self.eccentricity, 0, 1, hi_open=True)
            check_number("orbit.obliquity_deg", self.obliquity_deg, 0, 90)
            check_number("orbit.perihelion_deg", self.perihelion_deg, 0, 360, hi_open=True)
            if not self.idealized:
                self._check_earth_range()
        else:
            for key in fixed_keys:
                if getattr(self, key) is not None:
                    raise FieldError(
                        f"orbit.{key}",
                        f"explicit values go with solution "
                        f"'fixed', not {self.solution!r}; remove {key} or write "
                        "solution: fixed",
                    )
        if self.solution == "table":
            if self.table is None:
                raise FieldError(
                    "orbit.table", "solution 'table' needs the path of the table in orbit.table"
                )
            object.__setattr__(
                self, "table", existing_file("orbit.table", self.table, "orbit table")
            )
            try:
                from bcgen.orbit import table as table_module

                table_module.load(self.table)
            except BcgenError as exc:
                raise FieldError("orbit.table", str(exc)) from None
        elif self.table is not None:
            raise FieldError(
                "orbit.table", f"a table goes with solution 'table', not {self.solution!r}"
            )

    def _check_earth_range(self) -> None:
        words = outside_earth_obliquity(self.obliquity_deg)
        if words:
            raise FieldError(
                "orbit.obliquity_deg",
                f"{words}; set 'idealized: true' in orbit for a deliberately non-Earth orbit",
            )
        if self.eccentricity > EARTH_ECCENTRICITY_MAX:
            raise FieldError(
                "orbit.eccentricity",
                f"{self.eccentricity:g} is outside Earth's "
                "range (below about 0.07 in the last few million years); set "
                "'idealized: true' in orbit for a deliberately non-Earth orbit",
            )

    @property
    def reference(self) -> str:
        """The published reference of the solution."""
        return SOLUTIONS[self.solution].REFERENCE

    def resolve(self, years_from_1950) -> OrbitalElements:
        """Orbital elements at epochs (years from 1950 CE) from this solution."""
        if self.solution == "fixed":
            return solve_orbit(
                years_from_1950,
                "fixed",
                eccentricity=self.eccentricity,
                obliquity_deg=self.obliquity_deg,
                perihelion_deg=self.perihelion_deg,
                perihelion_convention=self.perihelion_convention,
                idealized=self.idealized,
            )
        if self.solution == "table":
            return solve_orbit(years_from_1950, "table", path=self.table)
        return solve_orbit(years_from_1950, self.solution)


@dataclass(frozen=True)
class GasSpec:
    """One greenhouse gas: its name, value and units."""

    name: str
    value: float
    units: str

    def __post_init__(self) -> None:
        p = f"greenhouse_gases.{self.name}"
        check_choice("greenhouse_gases", self.name, S.GASES, "gas")
        check_choice(f"{p}.units", self.units, S.GAS_UNITS, "units")
        check_number(f"{p}.value", self.value, 0)
        if self.mole_fraction >= 1:
            raise FieldError(
                f"{p}.value",
                f"{self.value:g} with units {self.units!r} is a mole "
                f"fraction of {self.mole_fraction:g}, which cannot exceed 1",
            )

    @property
    def mole_fraction(self) -> float:
        """The value as a mole fraction (mol mol-1)."""
        return float(self.value) * S.GAS_UNITS[self.units]

    @property
    def standard_name(self) -> str:
        """The CF standard name of the gas."""
        return S.GASES[self.name]


@dataclass(frozen=True)
class CalendarSpec:
    """``calendar:`` the CF calendar and the date at which the anchor event happens.

    ``date`` None means the default for the anchor: 21 March 12:00 for the March
    equinox (the PMIP protocols); the perihelion needs a date.
    """

    name: str = S.DEFAULT_CALENDAR
    anchor: str = S.DEFAULT_ANCHOR
    date: str | None = None
    model_year: int | None = None

    def __post_init__(self) -> None:
        if self.name in DEPRECATED_CALENDAR_NAMES:  # the loader warns first, with file and line
            warnings.warn(deprecated_calendar_message(self.name, "calendar.name"),
                          DeprecatedCalendarNameWarning, stacklevel=3)
            object.__setattr__(self, "name", DEPRECATED_CALENDAR_NAMES[self.name])
        if self.name in REFUSED_CALENDARS:
            raise FieldError(
                "calendar.name",
                f"{REFUSED_CALENDARS[self.name]}; expected one of {', '.join(S.CALENDAR_NAMES)}",
            )
        check_choice("calendar.name", self.name, S.CALENDAR_NAMES, "calendar")
        check_choice("calendar.anchor", self.anchor, S.ANCHORS, "anchor")
        if self.date is None:
            if self.anchor == "perihelion":
                raise FieldError(
                    "calendar.date",
                    "required with anchor 'perihelion': the "
                    "model date and time of the perihelion passage, as "
                    f"{ANCHOR_FORMAT} (e.g. '01-03 00:00')",
                )
            object.__setattr__(self, "date", S.DEFAULT_ANCHOR_DATE)
        fields = (
            split_anchor_text(self.date, require_time=True) if isinstance(self.date, str) else None
        )
        if fields is None:
            raise FieldError(
                "calendar.date",
                f"{self.date!r} is not a date and time; expected "
                f"{ANCHOR_FORMAT} such as '03-21 12:00' (quoted)",
            )
        month, day, hour, minute = fields
        if not (0 <= hour <= 23 and 0 <= minute <= 59):
            raise FieldError(
                "calendar.date",
                f"{self.date!r} has no such time of day; expected HH:MM from 00:00 to 23:59",
            )
        if not 1 <= month <= 12:
            raise FieldError(
                "calendar.date", f"{self.date!r} has no month {month}; expected 01 to 12"
            )
        # Year 1 is a common year and year 4 a leap year in every calendar that has leap years.
        exists = [date_exists(self.name, year, month, day) for year in (1, 4)]
        if not any(exists):
            longest = max(d for d in range(28, 32) if date_exists(self.name, 4, month, d))
            raise FieldError(
                "calendar.date",
                f"{self.date[:5]} does not exist in the "
                f"{self.name} calendar (month {month:02d} has {longest} days "
                "there)",
            )
        if not all(exists):
            raise FieldError(
                "calendar.date",
                f"{self.date[:5]} exists only in leap years of the "
                f"{self.name} calendar; the anchor date must exist in every year",
            )
        if self.model_year is not None:
            if (
                isinstance(self.model_year, bool)
                or not isinstance(self.model_year, int)
                or self.model_year < 1
            ):
                raise FieldError(
                    "calendar.model_year",
                    f"expected a whole number from 1, got {self.model_year!r}",
                )

    @property
    def month(self) -> int:
        """Month of the anchor date (1-12)."""
        return split_anchor_text(self.date)[0]

    @property
    def day(self) -> int:
        """Day of month of the anchor date."""
        return split_anchor_text(self.date)[1]

    @property
    def hour(self) -> int:
        """Hour of the anchor date."""
        return split_anchor_text(self.date)[2]

    @property
    def minute(self) -> int:
        """Minute of the anchor date."""
        return split_anchor_text(self.date)[3]

    def model_calendar(self) -> ModelCalendar:
        """Return the calendar with its anchor (a ``ModelCalendar``)."""
        return ModelCalendar(self.name, Anchor(self.anchor, *split_anchor_text(self.date)))

    def days_in_year(self, year: int) -> int:
        """Length of a model year of this calendar, days."""
        return year_length_days(self.name, year)

    def anchor_day(self, year: int) -> float:
        """Return the anchor's time in fractional days after 1 January 00:00 of ``year``.

        For the default (21 March 12:00 in a 365-day year) this is 79.5.
        """
        return self.model_calendar().anchor_day(year)


@dataclass(frozen=True)
class InsolationSpec:
    """``insolation:`` the daily-mean method and the reference orbit of fixed-angle months."""

    daily_method: str = S.DEFAULT_DAILY_METHOD
    reference_epoch: str = S.DEFAULT_REFERENCE_EPOCH

    def __post_init__(self) -> None:
        check_choice("insolation.daily_method", self.daily_method, tuple(S.DAILY_METHODS),
                     "daily method")
        check_epoch("insolation.reference_epoch", self.reference_epoch)

    @property
    def reference_years_from_1950(self) -> float:
        """The reference epoch in years relative to 1950 CE."""
        return parse_epoch(self.reference_epoch)

    def resolve_reference_orbit(self) -> OrbitalElements:
        """Compute the reference orbit: Berger (1978) at the reference epoch."""
        return solve_orbit(self.reference_years_from_1950, "berger1978")
