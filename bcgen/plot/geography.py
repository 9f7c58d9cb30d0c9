"""The geography figure: the boundary conditions as the model will see them, and what changed.

Three panels on the model grid, drawn cell by cell (no smoothing, so that every
cell is visible as the model has it):

1. surface altitude on land and ocean depth at sea, with the coastline of the
   ocean mask;
2. the changes of the mask from the present-day reference (ocean that became land,
   land that became ocean) and the lakes (basins below sea level cut off from the
   world ocean), over the unchanged land and ocean in two greys;
3. the land-ice area fraction (when the file has one), else the land area fraction.

The source is a geography file written by ``bcgen build`` (variables ``orog``,
``depth``, ``sea_mask``, ``mask_change``, ``water_body``, ``sftlf``, ``sftgif``).
"""

from __future__ import annotations

import numpy as np

from bcgen.errors import InputFileError

#: Colours of the change panel: unchanged land, unchanged ocean, ocean to land,
#: land to ocean, lakes (distinct in lightness too, so they read in grey).
CHANGE_COLOURS = ("#d9d9d9", "#f7f7f7", "#8c510a", "#01665e", "#5ab4ac")
CHANGE_NAMES = ("land", "ocean", "ocean to land", "land to ocean", "lake")
_NEEDED = ("orog", "depth", "sea_mask", "mask_change", "water_body", "sftlf")


def read_geography_file(path) -> dict:
    """Read the variables of a geography file into plain arrays (with cell edges)."""
    import xarray as xr

    try:
        ds = xr.open_dataset(path)
    except Exception as exc:  # noqa: BLE001 - several backends
        raise InputFileError(f"{path} is not a readable NetCDF file ({exc})") from None
    with ds:
        missing = [v for v in _NEEDED if v not in ds]
        if missing:
            raise InputFileError(f"{path} is not a geography file written by 'bcgen build' "
                                 f"(missing {', '.join(missing)})")
        out = {v: np.asarray(ds[v].values) for v in (*_NEEDED, "sftgif") if v in ds}
        out["lat_edges"] = _edges(ds, "lat")
        out["lon_edges"] = _edges(ds, "lon")
        out["title"] = str(ds.attrs.get("experiment", path))
        out["sea_level_change_m"] = float(ds.attrs.get("sea_level_change_m", 0.0))
    return out


def _edges(ds, name):
    b = np.asarray(ds[ds[name].attrs["bounds"]].values)
    return np.append(b[:, 0], b[-1, 1])


def geography_figure(g: dict):
    """Draw the three panels of the module docstring; return the figure."""
    from matplotlib.colors import BoundaryNorm, ListedColormap

    from bcgen.plot.figures import FIELD_CMAP, require_matplotlib

    Figure = require_matplotlib()
    lat_e, lon_e = g["lat_edges"], g["lon_edges"]
    ocean = g["sea_mask"] > 0
    fig = Figure(figsize=(9.0, 10.5), layout="constrained")
    axes = fig.subplots(3, 1)

    relief = np.where(ocean, -np.nan_to_num(g["depth"]), g["orog"])
    lim = float(np.nanmax(np.abs(relief))) or 1.0
    mesh = axes[0].pcolormesh(lon_e, lat_e, relief, cmap="BrBG_r", vmin=-lim, vmax=lim)
    fig.colorbar(mesh, ax=axes[0], label="surface altitude / minus ocean depth (m)")
    axes[0].set_title(f"{g['title']}: relief as the model sees it "
                      f"(sea level {g['sea_level_change_m']:+g} m)", fontsize=10)

    change = np.where(g["mask_change"] == 1, 2, np.where(g["mask_change"] == 2, 3,
                      np.where(ocean, 1, 0)))
    change = np.where((g["water_body"] >= 2) & (g["mask_change"] == 0), 4, change)
    cmap = ListedColormap(CHANGE_COLOURS)
    mesh = axes[1].pcolormesh(lon_e, lat_e, change, cmap=cmap,
                              norm=BoundaryNorm(np.arange(-0.5, 5.5), cmap.N))
    bar = fig.colorbar(mesh, ax=axes[1], ticks=np.arange(5))
    bar.ax.set_yticklabels([f"{n} ({int(np.sum(change == k))} cells)"
                            for k, n in enumerate(CHANGE_NAMES)], fontsize=8)
    axes[1].set_title("ocean mask: changes from the present-day reference", fontsize=10)

    if "sftgif" in g:
        field, label = g["sftgif"], "land-ice area fraction"
    else:
        field, label = g["sftlf"], "land area fraction"
    mesh = axes[2].pcolormesh(lon_e, lat_e, field, cmap=FIELD_CMAP, vmin=0, vmax=1)
    fig.colorbar(mesh, ax=axes[2], label=label)
    axes[2].set_title(label, fontsize=10)

    lat_c = 0.5 * (lat_e[:-1] + lat_e[1:])
    lon_c = 0.5 * (lon_e[:-1] + lon_e[1:])
    for ax in axes:
        ax.contour(lon_c, lat_c, ocean.astype(float), levels=[0.5], colors="k",
                   linewidths=0.6)
        ax.set_xlim(lon_e[0], lon_e[-1])
        ax.set_ylim(-90, 90)
        ax.set_yticks(np.arange(-90, 91, 30))
        ax.set_ylabel("latitude (deg N)")
        ax.set_aspect("equal")
    axes[2].set_xlabel("longitude (deg E)")
    return fig
