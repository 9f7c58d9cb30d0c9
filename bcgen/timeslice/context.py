"""What a time-slice build adds to the resolved experiment: the global mean, file attributes."""

from __future__ import annotations

import json
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path

import numpy as np

from bcgen import __version__
from bcgen.experiment import Experiment
from bcgen.insolation import annual_mean_insolation_wm2
from bcgen.insolation.quadrature import integrate_between_kinks

#: input4MIPs dataset categories of the products (from memory): gases have their own, the
#: orbit, solar constant and insolation are solar forcing.
DATASET_CATEGORIES = {"greenhouse_gases": "GHGConcentrations"}


@dataclass(eq=False)
class BuildContext(Experiment):
    """The experiment of a time-slice build, with its global mean and file attributes.

    Everything resolved from the spec comes from :class:`~bcgen.experiment.Experiment`.
    """

    @cached_property
    def global_annual_mean_wm2(self) -> float:
        """Area-weighted global and annual mean TOA insolation from the engine, W m-2.

        The annual mean integrated over sin(latitude) by the engine's quadrature
        (:func:`bcgen.insolation.quadrature.integrate_between_kinks`), split at the polar
        circles where the annual-mean profile has kinks.
        """
        edge = float(np.cos(np.deg2rad(self.orbit.obliquity_deg)))

        def annual(mu):
            return annual_mean_insolation_wm2(self.orbit, np.rad2deg(np.arcsin(mu)),
                                              self.solar_constant_wm2)

        return float(integrate_between_kinks(annual, -1.0, 1.0, [-edge, edge])) / 2.0

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
        time_note = metadata.time_comment(ds) if ds is not None else None
        notes = "\n".join(n for n in (time_note, extra.get("comment")) if n) or None
        for key in ("comment", "references"):
            extra.pop(key, None)
        # time_slice=False: the time note above fits each file's own time axis
        attrs = self.provenance(title, time_slice=False, comment=notes)
        attrs["experiment"] = spec.experiment.name
        if spec.experiment.description:
            attrs["experiment_description"] = spec.experiment.description
        attrs["epoch"] = spec.epoch
        attrs["epoch_years_bp"] = float(-spec.years_from_1950)
        attrs["calendar_anchor"] = self.anchor_in_words
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
