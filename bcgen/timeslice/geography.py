"""The geography products of a time slice: the CF file and the change report (text, JSON).

The experiment resolves the spec's ``geography`` section once
(:attr:`bcgen.experiment.Experiment.geography`); the products are written beside the
others by the time-slice build.
"""

from __future__ import annotations

import json
from pathlib import Path


def geography_outputs(ctx, output_class) -> list:
    """Return the geography file and its change report (text and JSON) for a build context."""
    from bcgen.geography import change_report, geography_dataset, make_geography, report_text
    from bcgen.grids import Grid

    setup = ctx.geography
    inputs, settings = setup.inputs, setup.settings
    grid = ctx.grid
    # A model grid running north to south is computed south to north and written back
    # in the model's order.
    flip = grid.lat_deg.ndim == 1 and grid.lat_deg.size > 1 and grid.lat_deg[0] > grid.lat_deg[-1]
    if flip:
        grid = Grid(grid.lat_deg[::-1], grid.lat_bounds_deg[::-1], grid.lon_deg,
                    grid.lon_bounds_deg, kind=grid.kind, name=grid.name, dims=grid.dims)
    geo = make_geography(inputs, grid, settings)
    report = change_report(geo, mean_salinity=setup.mean_salinity,
                           salinity_source=setup.salinity_source)
    ds = geography_dataset(geo)
    if flip:
        ds = ds.isel({grid.dims[0]: slice(None, None, -1)})
    ds.attrs["title"] = "paleogeography on the model grid"  # the rest in make_outputs
    ds.attrs["geography_inputs"] = ", ".join(f"{k}: {v}" for k, v in report["inputs"].items())
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
