"""The geography of a time slice as a CF dataset, and the change report files' contents."""

from __future__ import annotations

import numpy as np

from bcgen.cf.attributes import GEOGRAPHY_VARIABLES
from bcgen.geography.pipeline import Geography


def geography_dataset(geo: Geography, *, attrs: dict | None = None):
    """Return the model-grid geography as an :class:`xarray.Dataset` with CF attributes.

    Variables: ``orog`` (surface_altitude), ``depth`` (sea_floor_depth_below_geoid),
    ``sftlf`` (land_area_fraction), ``sftgif`` (land_ice_area_fraction, when ice is
    given), ``lithk`` (land_ice_thickness, when a thickness is given), ``cell_area``,
    ``sea_mask`` (sea_binary_mask), ``water_body`` (labels) and ``mask_change``.
    """
    import xarray as xr

    dims = tuple(geo.grid.dims)
    ds = geo.grid.to_dataset()

    def put(name, values, dtype=np.float32, **extra):
        a = dict(GEOGRAPHY_VARIABLES[name])
        a.update(extra)
        ds[name] = xr.DataArray(np.asarray(values).astype(dtype), dims=dims, attrs=a)

    put("orog", geo.surface_altitude_m)
    put("depth", geo.paleo.depth_m)
    put("sftlf", geo.fractions.land)
    if geo.fractions.land_ice is not None:
        put("sftgif", geo.fractions.land_ice)
    if geo.ice_thickness_m is not None:
        put("lithk", geo.ice_thickness_m)
    put("cell_area", geo.area_m2, np.float64)
    put("sea_mask", geo.paleo.ocean, np.int8)
    labels = geo.paleo.bodies.astype(np.int32)
    n = int(labels.max())
    put("water_body", labels, np.int32, flag_values=np.arange(n + 1, dtype=np.int32),
        flag_meanings=" ".join(["land", "world_ocean"] + [f"lake_{k}" for k in range(2, n + 1)]))
    ds["water_body"].attrs["flag_values"] = np.arange(n + 1, dtype=np.int32)
    change = np.where(geo.present.ocean & ~geo.paleo.ocean, 1,
                      np.where(~geo.present.ocean & geo.paleo.ocean, 2, 0))
    put("mask_change", change, np.int8)
    ds["mask_change"].attrs["flag_values"] = np.array([0, 1, 2], dtype=np.int8)
    ds.attrs.update({"Conventions": "CF-1.11",
                     "title": "paleogeography on the model grid",
                     "sea_level_change_m": float(geo.inputs.sea_level_change_m)})
    ds.attrs.update(attrs or {})
    return ds


def encoding(ds) -> dict:
    """NetCDF encoding: compressed, and a fill value only on the depth (NaN on land)."""
    enc = {}
    for name in ds.data_vars:
        e = {"zlib": True, "complevel": 4}
        e["_FillValue"] = np.float32(1e20) if name == "depth" else None
        enc[name] = e
    for name in ds.coords:
        enc[name] = {"_FillValue": None}
    return enc
