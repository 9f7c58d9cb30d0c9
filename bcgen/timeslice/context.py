"""Everything a time-slice build needs, resolved once from the experiment spec."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timezone
from functools import cached_property
from pathlib import Path

import numpy as np

from bcgen import __version__
from bcgen.grids import Grid, gaussian_grid, grid_from_file, regular_grid, zonal_grid
from bcgen.insolation import annual_mean_insolation_wm2
from bcgen.orbit import SOLUTIONS, OrbitalElements
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.spec import ExperimentSpec
from bcgen.writer import provenance_attrs

#: input4MIPs dataset categories of the products (from memory): gases have their own, the
#: orbit, solar constant and insolation are solar forcing.
DATASET_CATEGORIES = {"greenhouse_gases": "GHGConcentrations"}

#: Gauss-Legendre nodes per latitude segment for the printed global annual mean.
_GLOBAL_MEAN_NODES = 48


def model_calendar(spec: ExperimentSpec) -> ModelCalendar:
    """Return the spec's calendar with its anchor as a :class:`ModelCalendar`."""
    return spec.calendar.model_calendar()


def make_grid(spec: ExperimentSpec) -> Grid | None:
    """Return the spec's grid (None when the spec has none)."""
    g = spec.grid
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


@dataclass(frozen=True)
class BuildContext:
    """The resolved inputs of a time-slice build (orbit, calendar, grid, provenance)."""

    spec: ExperimentSpec
    command: str | None = None

    @cached_property
    def orbit(self) -> OrbitalElements:
        """Orbital elements of the time slice (scalar)."""
        return self.spec.resolve_orbit()

    @cached_property
    def reference_orbit(self) -> OrbitalElements:
        """Reference orbit of fixed-angle months."""
        return self.spec.resolve_reference_orbit()

    @cached_property
    def calendar(self) -> ModelCalendar:
        """Model calendar with its anchor."""
        return model_calendar(self.spec)

    @cached_property
    def grid(self) -> Grid | None:
        """The grid of the insolation products."""
        return make_grid(self.spec)

    @property
    def year(self) -> int:
        """The model year the time-slice files are dated in."""
        return self.spec.first_model_year

    @cached_property
    def created(self) -> datetime:
        """One creation time for every file of the build."""
        return datetime.now(timezone.utc).replace(microsecond=0)

    @cached_property
    def unique_latitudes_deg(self) -> tuple[np.ndarray, np.ndarray]:
        """Distinct latitudes of the grid and the index of each grid point into them."""
        return self.grid.unique_latitudes_deg()

    @cached_property
    def global_annual_mean_wm2(self) -> float:
        """Area-weighted global and annual mean TOA insolation from the engine, W m-2.

        Gauss-Legendre quadrature in sin(latitude), split at the polar circles where
        the annual-mean profile has kinks (so the result is exact to ~1e-10 relative).
        """
        x, w = np.polynomial.legendre.leggauss(_GLOBAL_MEAN_NODES)
        edge = float(np.cos(np.deg2rad(self.orbit.obliquity_deg)))
        total = 0.0
        for lo, hi in ((-1.0, -edge), (-edge, edge), (edge, 1.0)):
            mu = 0.5 * (hi - lo) * x + 0.5 * (hi + lo)
            annual = annual_mean_insolation_wm2(self.orbit, np.rad2deg(np.arcsin(mu)),
                                                self.spec.solar_constant_wm2)
            total += 0.5 * (hi - lo) * float(np.sum(annual * w))
        return total / 2.0

    def attributes(self, title: str, ds=None, *, file_name: str | None = None,
                   product: str | None = None) -> dict[str, str]:
        """Return the global attributes of one file: provenance, templates, the spec's own.

        Parameters
        ----------
        title : str
            The file's own title (kept unless a metadata template sets one).
        ds : xarray.Dataset, optional
            The file's dataset: its time axis gives the ``comment`` on time and the
            ``frequency``, its data variables the ``variable_id``
            (:mod:`bcgen.timeslice.metadata`). Without it the file is taken as having
            no time axis.
        file_name, product : str, optional
            The file's name and product (``output_file`` and ``dataset_category`` of
            metadata templates).
        """
        from bcgen.timeslice import metadata

        spec = self.spec
        extra = dict(spec.attributes)
        institution = extra.pop("institution", None)
        comment = extra.pop("comment", None)
        references = [r for r in (extra.pop("references", None),) if r]
        solution = SOLUTIONS[self.orbit.solution]
        time_note = metadata.time_comment(ds) if ds is not None else None
        notes = "\n".join(n for n in (time_note, comment) if n) or None
        attrs = provenance_attrs(
            spec.text or "",
            solution.REFERENCE,
            title=title,
            institution=institution,
            solution=self.orbit.solution,
            references=references,
            comment=notes,
            time_slice=False,  # the time note above fits each file's own time axis
            command=self.command,
            created=self.created,
            extra=extra,
        )
        attrs["experiment"] = spec.experiment.name
        if spec.experiment.description:
            attrs["experiment_description"] = spec.experiment.description
        attrs["epoch"] = spec.epoch
        attrs["epoch_years_bp"] = float(-spec.years_from_1950)
        attrs["calendar_anchor"] = self.anchor_text
        if spec.sha256:
            attrs["bcgen_spec_sha256"] = spec.sha256
        attrs["bcgen_version"] = __version__
        # Metadata templates add to (and may replace) bcgen's attributes; the spec's own
        # attributes win over both.
        if spec.attribute_templates:
            import xarray as xr

            file_ds = ds if ds is not None else xr.Dataset()
            attrs.update(self.template_attributes({
                "output_file": file_name or "",
                "title": title,
                "frequency": metadata.frequency(file_ds),
                "variable_id": metadata.variable_id(file_ds),
                "tracking_id": metadata.new_tracking_id(),
                "dataset_category": DATASET_CATEGORIES.get(product, "solar"),
            }))
        if institution:
            attrs["institution"] = institution
        attrs.update(extra)
        return attrs

    def template_attributes(self, file_values: dict[str, str]) -> dict[str, str]:
        """Global attributes of one file from the spec's metadata templates.

        Each template (``attribute_templates``) renders to a JSON object of attribute
        names and values, with the build's placeholders and the file's own
        (``file_values``: output_file, title, frequency, variable_id, tracking_id,
        dataset_category); values are written as text (numbers as written in the JSON).
        """
        import json

        from bcgen.errors import InputFileError
        from bcgen.render import bundled_template_path, render_file

        values = {**self._template_values, **file_values}
        attrs: dict[str, str] = {}
        for ref in self.spec.attribute_templates:
            path = bundled_template_path(ref.name) if ref.name is not None else Path(ref.path)
            text = render_file(path, values)
            try:
                table = json.loads(text)
            except json.JSONDecodeError as exc:
                raise InputFileError(f"{path}:{exc.lineno}: a metadata template must render to "
                                     f"a JSON object of attributes ({exc.msg})") from None
            if not isinstance(table, dict):
                raise InputFileError(f"{path}: a metadata template must render to a JSON "
                                     "object of attributes, not a list or a value")
            attrs.update({str(k): v if isinstance(v, str) else json.dumps(v)
                          for k, v in table.items()})
        return attrs

    @cached_property
    def _template_values(self) -> dict:
        from bcgen.timeslice.values import template_values

        return template_values(self)

    @property
    def anchor_text(self) -> str:
        """The calendar anchor in words."""
        return self.calendar.anchor_in_words()
