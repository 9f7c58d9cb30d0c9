"""Re-create the two small input files of ``glacial_demo.yaml`` (run from the repository root).

- ``relief_2deg.nc``: present-day relief, ETOPO5 (NOAA National Geophysical Data
  Center, 1988, 5-minute global relief; from the Debian package ferret-datasets,
  /usr/share/ferret-vis/data/etopo5.cdf) averaged conservatively onto a 2-degree
  grid with bcgen's own regridder, rounded to whole metres (int16).
- ``ice_dome.nc``: an **invented** glacial reconstruction: one ice dome centred at
  62 N, 95 W, 20 degrees of arc in radius, 3000 m thick at its centre, with the
  profile h = H (1 - (r/R)^2)^(1/4) (an invented shape); its surface lies 0.7 h above the present-day surface (an invented
  allowance for the depressed bed), so the reconstruction's surface at the epoch is
  0.7 h and at 0 ka is 0 (both relative to the same reference; only their difference
  is used).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from bcgen.geography import ConservativeRegridder, read_field
from bcgen.grids import regular_grid

HERE = Path(__file__).resolve().parent
ETOPO5 = "/usr/share/ferret-vis/data/etopo5.cdf"


def relief() -> None:
    field = read_field(ETOPO5, "ROSE")
    grid = regular_grid(2.0)
    z = ConservativeRegridder.from_grids(field.grid, grid).mean(field.values)
    ds = grid.to_dataset()
    ds["relief"] = (grid.dims, np.round(z).astype(np.int16),
                    {"units": "m", "long_name": "present-day relief above sea level "
                     "(ETOPO5, NOAA NGDC 1988, averaged to 2 degrees)",
                     "standard_name": "height_above_mean_sea_level"})
    ds.attrs = {"Conventions": "CF-1.11", "source": "ETOPO5 (NOAA NGDC 1988) via Debian "
                "ferret-datasets, conservative mean to 2 degrees by bcgen"}
    ds.to_netcdf(HERE / "relief_2deg.nc", encoding={"relief": {"zlib": True, "complevel": 9}})


def dome() -> None:
    grid = regular_grid(2.0)
    lat = np.deg2rad(grid.lat_deg)[:, None]
    lon = np.deg2rad(grid.lon_deg)[None, :]
    lat0, lon0 = np.deg2rad(62.0), np.deg2rad(-95.0)
    cos_r = np.sin(lat) * np.sin(lat0) + np.cos(lat) * np.cos(lat0) * np.cos(lon - lon0)
    r = np.rad2deg(np.arccos(np.clip(cos_r, -1, 1))) / 20.0
    h = np.where(r < 1, 3000.0 * np.sqrt(np.sqrt(np.clip(1 - r**2, 0, 1))), 0.0)
    ds = grid.to_dataset()
    attrs = {"units": "m"}
    ds["ice_thickness"] = (grid.dims, h.astype(np.float32),
                           {**attrs, "standard_name": "land_ice_thickness"})
    ds["surface_epoch"] = (grid.dims, (0.7 * h).astype(np.float32),
                           {**attrs, "long_name": "reconstructed surface change, epoch"})
    ds["surface_0ka"] = (grid.dims, np.zeros(grid.shape, np.float32),
                         {**attrs, "long_name": "reconstructed surface change, 0 ka"})
    ds.attrs = {"Conventions": "CF-1.11", "source": "invented ice dome for the bcgen demo"}
    ds.to_netcdf(HERE / "ice_dome.nc",
                 encoding={v: {"zlib": True, "complevel": 9} for v in ds.data_vars})


if __name__ == "__main__":
    relief()
    dome()
