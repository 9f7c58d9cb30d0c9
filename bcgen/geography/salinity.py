r"""Global-mean ocean salinity from a gridded climatology, and the change implied by volume.

When the ocean's volume changes and its salt does not, the mean salinity scales
inversely with the volume (conservation of salt mass, common practice):

.. math:: \bar S_{paleo} = \bar S_0 \, V_0 / V_{paleo}.
"""

from __future__ import annotations

import os

import numpy as np

from bcgen.errors import InputFileError


def implied_salinity_change(mean_salinity: float, volume_before_m3: float,
                            volume_after_m3: float) -> float:
    """Change of the global-mean salinity when the ocean volume changes with its salt kept."""
    return mean_salinity * (volume_before_m3 / volume_after_m3 - 1.0)


def mean_salinity_from_file(path, variable: str, key: str = "") -> float:
    """Volume-weighted mean of a 3-D (depth, lat, lon) salinity climatology.

    Layer thicknesses come from the depth axis' CF ``bounds`` or its ``edges``
    attribute (as in the Levitus 1982 climatology), else from midpoints between
    levels; cell areas from the latitude bounds (cos-latitude weighting of equal
    longitude steps). Missing values (land, below the sea floor) are left out.
    """
    import xarray as xr

    path = os.fspath(path)
    where = f"{key}: " if key else ""
    if not os.path.isfile(path):
        raise InputFileError(f"{where}salinity file {path} does not exist")
    with xr.open_dataset(path, decode_times=False) as ds:
        if variable not in ds.data_vars:
            raise InputFileError(f"{where}{path} has no variable {variable!r}")
        da = ds[variable].squeeze(drop=True)
        if da.ndim != 3:
            raise InputFileError(
                f"{where}{path}: {variable!r} must have three dimensions (depth, lat, lon)")
        zdim, ydim, _ = da.dims
        z = ds[zdim]
        edges_name = z.attrs.get("edges") or z.attrs.get("bounds")
        zv = np.asarray(z.values, dtype=float)
        if edges_name and edges_name in ds.variables:
            e = np.asarray(ds[edges_name].values, dtype=float)
            thick = np.diff(e) if e.ndim == 1 else e[:, 1] - e[:, 0]
        else:
            mid = 0.5 * (zv[1:] + zv[:-1])
            e = np.concatenate([[max(0.0, zv[0] - (mid[0] - zv[0]))], mid,
                                [zv[-1] + (zv[-1] - mid[-1])]])
            thick = np.diff(e)
        lat = np.deg2rad(np.asarray(ds[ydim].values, dtype=float))
        s = np.asarray(da.values, dtype=float)
    w = np.abs(thick)[:, None, None] * np.cos(lat)[None, :, None] * np.ones(s.shape)
    ok = np.isfinite(s)
    return float(np.sum(s[ok] * w[ok]) / np.sum(w[ok]))
