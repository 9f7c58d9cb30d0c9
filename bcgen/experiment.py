"""An experiment spec resolved once: the object every command works from.

A spec (:mod:`bcgen.spec`) is text checked against a schema; it knows nothing of
numbers. :class:`Experiment` turns it, once, into the objects the products need:

- the orbit of the time slice (or, per epoch, of a transient run) and the
  reference orbit of fixed-angle months (:mod:`bcgen.orbit`);
- the model calendar with its anchor, and the anchor in words
  (:mod:`bcgen.solar_calendar.calendars`);
- the grid (:mod:`bcgen.grids`), the solar constant and the greenhouse gases;
- the paleogeography inputs and rules (:mod:`bcgen.geography.setup`);
- the provenance every file carries (creation time, command, spec hash).

The time-slice build (:mod:`bcgen.timeslice`), the transient build
(:mod:`bcgen.transient`), ``bcgen plot`` and ``bcgen convert`` take these facts
from here and never from the spec again; a product-specific context extends
:class:`Experiment` with what only it needs. :class:`BuildResult` is what a
build of either kind returns.

>>> from bcgen.spec import parse_spec_text
>>> exp = Experiment(parse_spec_text("{experiment: {name: x}, epoch: 6ka, products: [orbit]}"))
>>> exp.calendar.name, round(float(exp.orbit.obliquity_deg), 3)
('noleap', 24.105)
>>> exp.anchor_in_words
'March equinox at 03-21 12:00 of the noleap model calendar, every model year'
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime, timezone
from functools import cached_property
from pathlib import Path

import numpy as np

from bcgen.cf.provenance import provenance_attrs
from bcgen.grids import Grid, gaussian_grid, grid_from_file, regular_grid, zonal_grid
from bcgen.orbit import SOLUTIONS, OrbitalElements
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.spec import ExperimentSpec

__all__ = ["BuildResult", "Experiment", "manifest_name", "resolve_grid"]


def resolve_grid(grid_spec) -> Grid | None:
    """Return the grid a spec's ``grid:`` section describes (None for no section).

    Parameters
    ----------
    grid_spec : bcgen.spec.grid.GridSpec or None
        The validated section.
    """
    g = grid_spec
    if g is None:
        return None
    if g.kind == "gaussian":
        return gaussian_grid(g.nlat, g.nlon)
    if g.kind == "file":
        return grid_from_file(g.path, lat_name=g.lat_name, lon_name=g.lon_name)
    lat_step = g.lat_resolution_deg or g.resolution_deg
    if g.kind == "zonal":
        if g.latitudes_deg is not None:
            return zonal_grid(lat_deg=g.latitudes_deg)
        return zonal_grid(resolution_deg=lat_step)
    lon_step = g.lon_resolution_deg or g.resolution_deg
    if g.latitudes_deg is None and g.longitudes_deg is None:
        return regular_grid((lat_step, lon_step))
    lat = g.latitudes_deg
    if lat is None:
        lat = regular_grid((lat_step, 360)).lat_deg
    lon = g.longitudes_deg
    if lon is None:
        lon = regular_grid((180, lon_step)).lon_deg
    return regular_grid(lat_deg=lat, lon_deg=lon)


def _now() -> datetime:
    return datetime.now(timezone.utc).replace(microsecond=0)


@dataclass(eq=False)
class Experiment:
    """A validated spec resolved into orbit, calendar, grid, forcing values and provenance.

    Parameters
    ----------
    spec : ExperimentSpec
        A validated spec (:func:`bcgen.spec.load_spec`).
    command : str, optional
        The command line, recorded in each file's ``history``.
    created : datetime
        One creation time for every file of a build (default: now, UTC, whole seconds).

    Notes
    -----
    Every resolved value is computed on first use and kept, so that each input file
    (grid file, orbit table) is read once.
    """

    spec: ExperimentSpec
    command: str | None = None
    created: datetime = field(default_factory=_now)

    # --- calendar ------------------------------------------------------------------------
    @cached_property
    def calendar(self) -> ModelCalendar:
        """Model calendar with its anchor."""
        return self.spec.calendar.model_calendar()

    @property
    def anchor_in_words(self) -> str:
        """The calendar anchor in words, as files and manifests state it."""
        return self.calendar.anchor_in_words()

    @property
    def year(self) -> int:
        """The model year a time slice is dated in (the first model year of a transient run)."""
        return self.spec.first_model_year

    # --- orbit ---------------------------------------------------------------------------
    @cached_property
    def orbit(self) -> OrbitalElements:
        """Orbital elements of the time slice (one set per model year for a transient run)."""
        return self.spec.resolve_orbit()

    @cached_property
    def reference_orbit(self) -> OrbitalElements:
        """Reference orbit of fixed-angle months."""
        return self.spec.resolve_reference_orbit()

    @property
    def solution(self) -> str:
        """Name of the orbital solution (a key of :data:`bcgen.orbit.SOLUTIONS`)."""
        return self.spec.orbit.solution

    @property
    def solution_reference(self) -> str:
        """The published source of the orbital solution."""
        return SOLUTIONS[self.solution].REFERENCE

    @cached_property
    def orbit_table(self) -> OrbitalElements | None:
        """The orbit table of solution ``table``, read once (None for other solutions)."""
        if self.solution != "table":
            return None
        from bcgen.orbit import table

        return table.load(self.spec.orbit.table)

    def orbit_at(self, years_from_1950) -> OrbitalElements:
        """Orbital elements at epochs (years from 1950 CE), by the spec's solution."""
        if self.orbit_table is not None:
            from bcgen.orbit import table

            return table.interpolate(self.orbit_table, years_from_1950)
        return self.spec.orbit.resolve(years_from_1950)

    # --- grid and forcing values -----------------------------------------------------------
    @cached_property
    def grid(self) -> Grid | None:
        """The grid of the insolation products (None when the spec has none)."""
        return resolve_grid(self.spec.grid)

    @cached_property
    def unique_latitudes_deg(self) -> tuple[np.ndarray, np.ndarray]:
        """Distinct latitudes of the grid and the index of each grid point into them."""
        return self.grid.unique_latitudes_deg()

    @cached_property
    def geography(self):
        """Paleogeography inputs and rules, read once (None without a geography section).

        Returns
        -------
        bcgen.geography.setup.GeographySetup or None
        """
        if self.spec.geography is None:
            return None
        from bcgen.geography.setup import resolve_geography

        return resolve_geography(self.spec.geography)

    @property
    def solar_constant_wm2(self) -> float:
        """Total solar irradiance at 1 au, W m-2 (scaled to the epoch if the spec asks)."""
        return float(self.spec.solar_constant_wm2)

    @property
    def solar_constant_scaled(self) -> bool:
        """Whether the solar constant follows the epoch (``solar_constant_scaling`` not none)."""
        return self.spec.solar_constant_scaling != "none"

    def solar_constant_at(self, years_from_1950) -> np.ndarray:
        """Solar constant at epochs, W m-2: the spec's, scaled to each epoch if it asks.

        For a time slice at its epoch this is :attr:`solar_constant_wm2`; a transient
        run gives each model year the value of its own epoch.
        """
        t = np.asarray(years_from_1950, dtype=float)
        if not self.solar_constant_scaled:
            return np.full(t.shape, self.solar_constant_wm2)
        from bcgen.solar_evolution import gough_solar_constant_wm2

        return np.asarray(gough_solar_constant_wm2(self.spec.solar_constant_given_wm2, t))

    @property
    def solar_constant_record(self) -> dict[str, object]:
        """The solar constant, how it was obtained and its source (for manifests)."""
        record: dict[str, object] = {"value_wm2": self.solar_constant_wm2,
                                     "scaling": self.spec.solar_constant_scaling}
        if self.spec.solar_constant_given_wm2 is not None:
            from bcgen.solar_evolution import REFERENCE

            record.update({"given_wm2": self.spec.solar_constant_given_wm2,
                           "reference": REFERENCE})
        return record

    @cached_property
    def orbit_spread(self) -> dict | None:
        """Differences of the other orbital solutions from the chosen one at a time slice.

        Each with its meaning in W m-2 (see :func:`bcgen.spread.spread_record`); None for
        a transient run.
        """
        if self.spec.epoch is None:
            return None
        from bcgen.spread import spread_record

        return spread_record(self.orbit, self.spec.years_from_1950,
                             solar_constant_wm2=self.solar_constant_wm2)

    @property
    def greenhouse_gases(self) -> tuple:
        """The spec's greenhouse gases (name, mole fraction, units)."""
        return tuple(self.spec.greenhouse_gases)

    @property
    def daily_method(self) -> str:
        """How daily means are formed (``midday`` or ``day_average``)."""
        return self.spec.insolation.daily_method

    # --- provenance ------------------------------------------------------------------------
    def provenance(self, title: str, *, time_slice: bool, comment: str | None = None
                   ) -> dict[str, object]:
        """Return the provenance attributes of one file (CF ``history``, ``source`` ...).

        The spec's ``attributes`` ``institution``, ``comment`` (unless ``comment`` is given)
        and ``references`` go to their CF places; its other attributes are added as given.
        """
        extra = dict(self.spec.attributes)
        institution = extra.pop("institution", None)
        spec_comment = extra.pop("comment", None)
        comment = spec_comment if comment is None else comment
        references = [r for r in (extra.pop("references", None),) if r]
        return provenance_attrs(
            self.spec.text or "",
            self.solution_reference,
            title=title,
            institution=institution,
            solution=self.solution,
            references=references,
            comment=comment,
            time_slice=time_slice,
            command=self.command,
            created=self.created,
            extra=extra,
        )

    @property
    def manifest_name(self) -> str:
        """File name of the build's manifest."""
        return manifest_name(self.spec)


def manifest_name(spec: ExperimentSpec) -> str:
    """File name of the manifest of a build of ``spec``."""
    return f"{spec.experiment.name}_manifest.json"


@dataclass
class BuildResult:
    """What a build wrote and what it checked."""

    directory: Path
    files: list[dict] = field(default_factory=list)
    manifest: Path | None = None
    context: Experiment | None = None
    orbit_checks: tuple = ()

    @property
    def agrees_with_expected(self) -> bool:
        """False if any published expected value disagrees with the computed orbit."""
        return all(check.agrees for check in self.orbit_checks)
