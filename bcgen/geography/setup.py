"""A spec's ``geography`` section resolved into the inputs of :func:`make_geography`.

Called once per experiment by :attr:`bcgen.experiment.Experiment.geography`; it reads
the files the section names (units checked) and turns its rules into
:class:`~bcgen.geography.landsea.MaskSettings`. It uses only the section's attributes
(no import of :mod:`bcgen.spec`).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from bcgen.errors import InputFileError
from bcgen.geography.fields import LatLonField, read_field, read_land_mask, read_length
from bcgen.geography.landsea import MaskSettings
from bcgen.geography.pipeline import GeographyInputs
from bcgen.geography.salinity import mean_salinity_from_file
from bcgen.geography.straits import StraitRule


@dataclass(frozen=True)
class GeographySetup:
    """Inputs, mask rules and the present mean salinity (with its source) of an experiment."""

    inputs: GeographyInputs
    settings: MaskSettings
    mean_salinity: float | None = None
    salinity_source: str = ""


def resolve_geography(geo_spec) -> GeographySetup:
    """Read the inputs named by a spec's ``geography`` section, units checked.

    Parameters
    ----------
    geo_spec : bcgen.spec.geography.GeographySpec
        The validated section (only its attributes are used).
    """
    g = geo_spec
    if g.present is not None:
        present = read_field(g.present.file, g.present.variable, key="geography.present")
    else:
        oro = read_field(g.orography.file, g.orography.variable, key="geography.present",
                         missing_as=0.0)
        bathy = read_field(g.bathymetry.file, g.bathymetry.variable, key="geography.present",
                           missing_as=0.0)
        # Relief = height on land minus depth at sea (each is 0 where the other applies).
        present = LatLonField(oro.grid, oro.values - np.abs(bathy.values), "m",
                              f"{oro.source} - {bathy.source}")
    epoch = zero = None
    if g.reconstruction_epoch is not None:
        epoch = read_field(g.reconstruction_epoch.file, g.reconstruction_epoch.variable,
                           key="geography.reconstruction")
        zero = read_field(g.reconstruction_present.file, g.reconstruction_present.variable,
                          key="geography.reconstruction")
        if epoch.values.shape != zero.values.shape:
            raise InputFileError(f"geography.reconstruction: {epoch.source} and {zero.source} "
                                 "must be on the same grid")
    masks = [None, None]
    for i, ref in enumerate((getattr(g, "land_mask_epoch", None),
                             getattr(g, "land_mask_present", None))):
        if ref is not None:
            masks[i] = read_land_mask(ref.file, ref.variable, key="geography.reconstruction")
    thickness = fraction = None
    if g.ice is not None:
        if g.ice_kind == "thickness":
            thickness = read_field(g.ice.file, g.ice.variable, key="geography.ice",
                                   missing_as=0.0)
        else:
            fraction = read_field(g.ice.file, g.ice.variable, kind="fraction",
                                  key="geography.ice", missing_as=0.0)
    sea_level = g.sea_level_change_m
    if g.sea_level is not None:
        sea_level = read_length(g.sea_level.file, g.sea_level.variable,
                                key="geography.reconstruction.sea_level_variable")
    inputs = GeographyInputs(present, epoch, zero, thickness, fraction, sea_level, *masks)
    rules = tuple(StraitRule(s.name, s.action, s.path_deg, s.box_deg, s.width_cells, s.depth_m)
                  for s in g.straits)
    settings = MaskSettings(g.connectivity, g.basins, g.min_depth_m, g.shallow_cells, rules)
    if g.mean_salinity is not None:
        return GeographySetup(inputs, settings, g.mean_salinity, "given in the spec")
    if g.salinity is not None:
        return GeographySetup(inputs, settings,
                              mean_salinity_from_file(g.salinity.file, g.salinity.variable,
                                                      key="geography.salinity"),
                              f"volume mean of {Path(g.salinity.file).name}:"
                              f"{g.salinity.variable}")
    return GeographySetup(inputs, settings)
