"""The geography products of a time slice: the CF file and the change report (text, JSON).

The spec's ``geography`` section is resolved here into the inputs of
:func:`bcgen.geography.make_geography` (files read with their units checked); the
products are written beside the others by :func:`bcgen.timeslice.build`.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from bcgen.errors import InputFileError


def resolve_inputs(geo_spec):
    """Read the inputs named by a :class:`bcgen.spec.geography.GeographySpec`.

    Returns
    -------
    inputs : bcgen.geography.GeographyInputs
    settings : bcgen.geography.MaskSettings
    salinity : (float, str) or None
        The present mean salinity and where it came from.
    """
    from bcgen.geography import GeographyInputs, LatLonField, MaskSettings, StraitRule, read_field
    from bcgen.geography.fields import read_length
    from bcgen.geography.salinity import mean_salinity_from_file

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
    inputs = GeographyInputs(present, epoch, zero, thickness, fraction, sea_level)
    rules = tuple(StraitRule(s.name, s.action, s.path_deg, s.box_deg, s.width_cells, s.depth_m)
                  for s in g.straits)
    settings = MaskSettings(g.connectivity, g.basins, g.min_depth_m, g.shallow_cells, rules)
    salinity = None
    if g.mean_salinity is not None:
        salinity = (g.mean_salinity, "given in the spec")
    elif g.salinity is not None:
        salinity = (mean_salinity_from_file(g.salinity.file, g.salinity.variable,
                                            key="geography.salinity"),
                    f"volume mean of {Path(g.salinity.file).name}:{g.salinity.variable}")
    return inputs, settings, salinity


def geography_outputs(ctx, output_class) -> list:
    """Return the geography file and its change report (text and JSON) for a build context."""
    from bcgen.geography import change_report, geography_dataset, make_geography, report_text
    from bcgen.grids import Grid

    inputs, settings, salinity = resolve_inputs(ctx.spec.geography)
    grid = ctx.grid
    # A model grid running north to south is computed south to north and written back
    # in the model's order.
    flip = grid.lat_deg.ndim == 1 and grid.lat_deg.size > 1 and grid.lat_deg[0] > grid.lat_deg[-1]
    if flip:
        grid = Grid(grid.lat_deg[::-1], grid.lat_bounds_deg[::-1], grid.lon_deg,
                    grid.lon_bounds_deg, kind=grid.kind, name=grid.name, dims=grid.dims)
    geo = make_geography(inputs, grid, settings)
    mean, source = salinity if salinity is not None else (None, "")
    report = change_report(geo, mean_salinity=mean, salinity_source=source)
    ds = geography_dataset(geo)
    if flip:
        ds = ds.isel({grid.dims[0]: slice(None, None, -1)})
    ds.attrs.update(ctx.attributes("paleogeography on the model grid"))
    ds.attrs["sea_level_change_m"] = float(inputs.sea_level_change_m)
    name = ctx.spec.file_name("geography")
    stem = Path(ctx.spec.file_name("geography_report"))
    return [
        output_class("geography", name, "relief, bathymetry, land and ice fractions, "
                     "land-sea mask and water bodies on the model grid", dataset=ds),
        output_class("geography", str(stem.with_suffix(".txt")),
                     "geography change report (text)", text=report_text(report)),
        output_class("geography", str(stem.with_suffix(".json")),
                     "geography change report (JSON)",
                     text=json.dumps(report, indent=1, allow_nan=False) + "\n"),
    ]
