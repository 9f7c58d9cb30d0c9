"""The whole experiment spec: :class:`ExperimentSpec` and the rules that tie sections together.

A spec describes either a time slice (``epoch``) or a transient run
(``transient``), never both. Cross-section rules checked here:

- the products allowed for the kind of run, and what each product needs
  (a grid for insolation, gases for ``greenhouse_gases``, a
  ``timestep_table`` or ``templates`` section for those products);
- a ``timestep_table`` or ``templates`` section without its product;
- ``orbit.expected`` and ``calendar.model_year`` only in a time slice;
- the epoch(s) inside an orbit table's range;
- days of the timestep table inside the calendar's year;
- a transient file pattern that separates the files of a run.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from types import MappingProxyType

import numpy as np

from bcgen.arguments import PLAUSIBLE_RANGES, gas_mole_fraction, warn_if_implausible
from bcgen.epochs import format_epoch, parse_epoch
from bcgen.errors import BcgenError
from bcgen.orbit import OrbitalElements
from bcgen.solar_calendar.calendars import NO_YEAR_ZERO_CALENDARS
from bcgen.spec import schema as S
from bcgen.spec.common import FieldError, check_choice, check_epoch, check_number
from bcgen.spec.geography import GeographySpec
from bcgen.spec.grid import GridSpec
from bcgen.spec.model import CalendarSpec, ExperimentInfo, GasSpec, InsolationSpec, OrbitSpec
from bcgen.spec.output import OutputSpec, TemplateRef, TimestepTableSpec, check_file_pattern
from bcgen.spec.transient import TransientSpec


@dataclass(frozen=True)
class ExperimentSpec:
    """A validated experiment spec (see ``configs/demo.yaml`` for the documented format).

    Attributes
    ----------
    experiment : ExperimentInfo
        Name and description.
    products : tuple of str
        What to produce, from :data:`bcgen.spec.schema.PRODUCTS`.
    epoch : str or None
        The epoch of a time slice as written (``"6ka"``); None for a transient run.
    transient : TransientSpec or None
        The transient run; None for a time slice.
    orbit, calendar, insolation, output : section dataclasses
        With their defaults when the spec leaves them out.
    solar_constant_wm2 : float
        Total solar irradiance at 1 au, W m-2, at the epoch: the value given, or with
        ``solar_constant_scaling: gough1981`` that value scaled to the epoch (a
        transient run: its start epoch) by :func:`bcgen.solar_evolution.gough_solar_constant_wm2`.
    solar_constant_scaling : str
        ``none`` or ``gough1981`` (:data:`bcgen.spec.schema.SOLAR_CONSTANT_SCALINGS`).
    solar_constant_given_wm2 : float or None
        The value the spec gave (today's Sun) when it was scaled; set on creation.
    greenhouse_gases : tuple of GasSpec
        In the order of the spec.
    grid, timestep_table : section dataclasses or None
    geography : GeographySpec or None
        Paleogeography inputs and rules; a time slice with one writes the geography
        products (:mod:`bcgen.geography`) besides those listed in ``products``.
    templates : tuple of TemplateRef
        Text templates rendered by the ``templates`` product.
    attribute_templates : tuple of TemplateRef
        Metadata templates: each renders to a JSON object of global attributes.
    attributes : Mapping[str, str]
        Extra global attributes.
    path : pathlib.Path or None
        The spec file, if read from one.
    text : str or None
        The spec's full text as read (for provenance).
    """

    experiment: ExperimentInfo
    products: tuple[str, ...]
    epoch: str | None = None
    transient: TransientSpec | None = None
    orbit: OrbitSpec = field(default_factory=OrbitSpec)
    solar_constant_wm2: float = S.DEFAULT_SOLAR_CONSTANT_WM2
    solar_constant_scaling: str = "none"
    solar_constant_given_wm2: float | None = None
    greenhouse_gases: tuple[GasSpec, ...] = ()
    calendar: CalendarSpec = field(default_factory=CalendarSpec)
    grid: GridSpec | None = None
    geography: GeographySpec | None = None
    insolation: InsolationSpec = field(default_factory=InsolationSpec)
    timestep_table: TimestepTableSpec | None = None
    templates: tuple[TemplateRef, ...] = ()
    attribute_templates: tuple[TemplateRef, ...] = ()
    output: OutputSpec = field(default_factory=OutputSpec)
    attributes: Mapping[str, str] = field(default_factory=dict)
    path: Path | None = None
    text: str | None = field(default=None, repr=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "products", tuple(self.products))
        object.__setattr__(self, "greenhouse_gases", tuple(self.greenhouse_gases))
        object.__setattr__(self, "templates", tuple(self.templates))
        object.__setattr__(self, "attribute_templates", tuple(self.attribute_templates))
        if self.attribute_templates and self.transient is not None:
            raise FieldError("attribute_templates", "metadata templates apply to time-slice "
                             "builds; a transient run writes bcgen's own attributes and those "
                             "under 'attributes'")
        self._check_kind_of_run()
        check_number(
            "solar_constant_wm2",
            self.solar_constant_wm2,
            0,
            5000,
            lo_open=True,
            what="an irradiance in W m-2",
        )
        warn_if_implausible("solar_constant_wm2", self.solar_constant_wm2, "W m-2")
        self._scale_solar_constant()
        for gas in self.greenhouse_gases:
            if gas.name in PLAUSIBLE_RANGES:
                factor, unit = {"co2": (1e6, "ppm")}.get(gas.name, (1e9, "ppb"))
                try:  # far outside: an error (the rule of every route); outside: a warning
                    gas_mole_fraction(gas.name, gas.mole_fraction,
                                      f"greenhouse_gases.{gas.name}", gas.units)
                except BcgenError as exc:
                    raise FieldError(f"greenhouse_gases.{gas.name}",
                                     str(exc).split(": ", 1)[1]) from None
                warn_if_implausible(f"greenhouse_gases.{gas.name}", gas.mole_fraction * factor,
                                     unit, gas.name)
        self._check_gases()
        self._check_products()
        self._check_geography()
        self._check_output()
        self._check_attributes()
        self._check_orbit_coverage()
        if self.timestep_table is not None and self.timestep_table.days is not None:
            length = self.calendar.days_in_year(self.first_model_year)
            for i, day in enumerate(self.timestep_table.days):
                if day > length:
                    raise FieldError(
                        f"timestep_table.days[{i}]",
                        f"day {day} is past the end "
                        f"of the {self.calendar.name} year ({length} days)",
                    )

    def _scale_solar_constant(self) -> None:
        check_choice("solar_constant_scaling", self.solar_constant_scaling,
                     S.SOLAR_CONSTANT_SCALINGS, "solar constant scaling")
        if self.solar_constant_scaling == "none":
            return
        from bcgen.solar_evolution import gough_solar_constant_wm2

        given = self.solar_constant_given_wm2
        if given is None:  # (a copy made with dataclasses.replace keeps the given value)
            given = self.solar_constant_wm2
        epoch = (parse_epoch(self.epoch) if self.epoch is not None
                 else self.transient.start_years_from_1950)
        try:
            scaled = gough_solar_constant_wm2(given, epoch)
        except BcgenError as exc:
            raise FieldError("solar_constant_scaling", str(exc)) from None
        object.__setattr__(self, "solar_constant_given_wm2", float(given))
        object.__setattr__(self, "solar_constant_wm2", float(scaled))

    # --- checks ------------------------------------------------------------------------------
    def _check_kind_of_run(self) -> None:
        if self.epoch is not None and self.transient is not None:
            raise FieldError(
                "transient",
                "a spec has either 'epoch' (a time slice) or "
                "'transient' (a transient run), not both",
            )
        if self.epoch is None and self.transient is None:
            raise FieldError(
                "",
                "the spec needs either 'epoch' (a time slice, e.g. "
                "epoch: 6ka) or a 'transient' section",
            )
        if self.epoch is not None:
            if not isinstance(self.epoch, str):
                raise FieldError(
                    "epoch",
                    f"expected an epoch such as '6ka' or '1850CE', got "
                    f"{self.epoch!r} (a bare number is ambiguous)",
                )
            check_epoch("epoch", self.epoch)
            if self.calendar.model_year is None:
                # Year 2 in calendars without a year 0 (CF §4.4.1), so that a fixed-angle
                # month that starts before 1 January can still be dated.
                default = 2 if self.calendar.name in NO_YEAR_ZERO_CALENDARS else 1
                object.__setattr__(self, "calendar", replace(self.calendar, model_year=default))
        else:
            if self.calendar.model_year is not None:
                raise FieldError(
                    "calendar.model_year",
                    "a transient run starts at "
                    "transient.first_model_year; remove calendar.model_year",
                )
            if self.orbit.expected is not None:
                raise FieldError(
                    "orbit.expected",
                    "published values are checked for a time "
                    "slice; a transient run spans many epochs",
                )

    def _check_gases(self) -> None:
        names = [gas.name for gas in self.greenhouse_gases]
        for i, name in enumerate(names):
            if name in names[:i]:
                raise FieldError(f"greenhouse_gases.{name}", "the gas is given twice")

    def _check_geography(self) -> None:
        if self.geography is None:
            return
        if self.transient is not None:
            raise FieldError("geography", "the geography is built for a time slice ('epoch'); "
                             "a transient run cannot have one yet")
        if self.grid is None or self.grid.kind == "zonal":
            raise FieldError("geography", "the geography needs a latitude-longitude grid; add "
                             "e.g. grid: {kind: regular, resolution_deg: 2.0}")

    def _check_products(self) -> None:
        allowed = S.TRANSIENT_PRODUCTS if self.transient is not None else S.PRODUCTS
        if not self.products:
            raise FieldError("products", f"give at least one of {', '.join(allowed)}")
        for i, product in enumerate(self.products):
            path = f"products[{i}]"
            check_choice(path, product, S.PRODUCTS, "product")
            if product in self.products[:i]:
                raise FieldError(path, f"{product!r} is listed twice")
            if product not in allowed:
                raise FieldError(
                    path,
                    f"{product!r} is a time-slice product; a transient run "
                    f"can produce {', '.join(S.TRANSIENT_PRODUCTS)}",
                )
            if product in S.GRIDDED_PRODUCTS and self.grid is None:
                raise FieldError(
                    path,
                    f"{product!r} needs a grid; add a 'grid' section, e.g. "
                    "grid: {kind: zonal, resolution_deg: 1.0}",
                )
            if (
                product == "greenhouse_gases"
                and not self.greenhouse_gases
                and not (self.transient is not None and self.transient.greenhouse_gas_table)
            ):
                where = " or transient.greenhouse_gas_table" if self.transient is not None else ""
                raise FieldError(
                    path,
                    f"'greenhouse_gases' needs gas values: add a 'greenhouse_gases' section{where}",
                )
            for section in ("timestep_table", "templates"):
                if product == section and not getattr(self, section):
                    raise FieldError(path, f"{product!r} needs a '{section}' section")
        if (
            self.transient is not None
            and self.transient.greenhouse_gas_table is not None
            and self.greenhouse_gases
        ):
            raise FieldError(
                "greenhouse_gases",
                "give the gases either as constant values "
                "here or as transient.greenhouse_gas_table, not both",
            )
        for section in ("timestep_table", "templates"):
            if getattr(self, section) and section not in self.products:
                raise FieldError(
                    section,
                    f"given, but '{section}' is not in products; add it "
                    "to products or remove this section",
                )

    def _check_output(self) -> None:
        if self.output.file_pattern is None:
            pattern = (
                S.DEFAULT_TRANSIENT_FILE_PATTERN
                if self.transient is not None
                else S.DEFAULT_FILE_PATTERN
            )
            object.__setattr__(self, "output", replace(self.output, file_pattern=pattern))
        fields = check_file_pattern(self.output.file_pattern)
        if (
            self.transient is not None
            and "first_year" not in fields
            and len(self.transient.file_ranges()) > 1
        ):
            raise FieldError(
                "output.file_pattern",
                f"{self.output.file_pattern!r} has no "
                "{first_year}: the files of a transient run would share one name",
            )

    def _check_attributes(self) -> None:
        attrs = dict(self.attributes)
        for name, value in attrs.items():
            path = f"attributes.{name}"
            if not isinstance(name, str) or not re.fullmatch(r"[A-Za-z][A-Za-z0-9_]*", name):
                raise FieldError(
                    path, "an attribute name is letters, digits and '_', starting with a letter"
                )
            if name in S.RESERVED_ATTRIBUTES:
                raise FieldError(path, f"{name!r} is written by bcgen itself; remove it")
            if not isinstance(value, str):
                raise FieldError(path, f"expected a string, got {value!r}")
        object.__setattr__(self, "attributes", MappingProxyType(attrs))

    def _check_orbit_coverage(self) -> None:
        if self.orbit.solution != "table":
            return
        if self.transient is not None:
            keys = ("transient.start_epoch", "transient.end_epoch")
            epochs = (self.transient.start_years_from_1950, self.transient.end_years_from_1950)
        else:
            keys, epochs = ("epoch",), (parse_epoch(self.epoch),)
        for key, epoch in zip(keys, epochs, strict=True):
            try:
                self.orbit.resolve(epoch)
            except BcgenError as exc:
                raise FieldError(key, str(exc)) from None

    # --- derived -----------------------------------------------------------------------------
    @property
    def is_transient(self) -> bool:
        """True for a transient run, False for a time slice."""
        return self.transient is not None

    @property
    def years_from_1950(self) -> float | None:
        """The time slice's epoch in years relative to 1950 CE (None for a transient run)."""
        return None if self.epoch is None else parse_epoch(self.epoch)

    @property
    def first_model_year(self) -> int:
        """The first (for a time slice, the only) model year."""
        if self.transient is not None:
            return self.transient.first_model_year
        return self.calendar.model_year or (
            2 if self.calendar.name in NO_YEAR_ZERO_CALENDARS else 1)

    @property
    def sha256(self) -> str | None:
        """SHA-256 of the spec text, for provenance."""
        return None if self.text is None else hashlib.sha256(self.text.encode()).hexdigest()

    def gas(self, name: str) -> GasSpec | None:
        """Return the gas of that name, or None."""
        return next((g for g in self.greenhouse_gases if g.name == name), None)

    def resolve_orbit(self) -> OrbitalElements:
        """Compute the orbital elements of the epoch, or of every model year of a transient run.

        Returns
        -------
        OrbitalElements
            Scalar elements for a time slice; one element set per model year
            (in model-year order) for a transient run.
        """
        if self.transient is not None:
            years = self.transient.epochs_of_model_years(self.transient.model_years())
            return self.orbit.resolve(years)
        return self.orbit.resolve(self.years_from_1950)

    def resolve_reference_orbit(self) -> OrbitalElements:
        """Compute the reference orbit of fixed-angle months (Berger 1978, reference epoch)."""
        return self.insolation.resolve_reference_orbit()

    def file_name(
        self, product: str, first_year: int | None = None, last_year: int | None = None
    ) -> str:
        """Return the output file name of a product (and model years, for transient files)."""
        first = self.first_model_year if first_year is None else first_year
        last = first if last_year is None else last_year
        return self.output.file_name(
            experiment=self.experiment.name,
            product=product,
            epoch=(
                format_epoch(self.years_from_1950)
                if self.transient is None
                else self.transient.label
            ),
            calendar=self.calendar.name,
            grid=self.grid.label if self.grid else "nogrid",
            first_year=first,
            last_year=last,
        )

    def model_year_epochs(self) -> np.ndarray:
        """Epoch (years from 1950 CE) of each model year: one value for a time slice."""
        if self.transient is not None:
            return self.transient.epochs_of_model_years(self.transient.model_years())
        return np.array([self.years_from_1950])
