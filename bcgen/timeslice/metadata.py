"""What a file's own metadata says about it: frequency, variable_id, tracking_id, comment.

Every value here is read from the dataset being written (its time axis, its data
variables), never from the build as a whole, so no two files share an attribute that
describes only one of them. The vocabulary is that of the CMIP6 global attributes
(Taylor et al., "CMIP6 Global Attributes, DRS, Filenames, Directory Structure, and
CV's", 2018; from memory): ``frequency`` is one of ``fx`` (no time axis), ``day``,
``mon``, ``yr`` (``monC``/``yrC`` for a climatology), or ``1hrPt``, ``3hrPt``,
``6hrPt``, ``subhrPt`` for instants; ``tracking_id`` is ``hdl:21.14100/`` followed by a
new UUID for every file; ``variable_id`` names the file's one data variable, or is
``multiple`` when it holds several (as the CMIP6 solar-forcing files do; from memory).
"""

from __future__ import annotations

import uuid

import numpy as np
import xarray as xr

#: Handle prefix of CMIP6 tracking ids (CMIP6 global attributes; from memory).
TRACKING_ID_PREFIX = "hdl:21.14100/"

#: Comment of a climatological (repeating-year) time axis.
CLIMATOLOGY_COMMENT = (
    "This file holds one model year that repeats (a time slice): use its time steps "
    "cyclically, the first following the last. Time values are mid-interval times in a "
    "nominal year; the climatology bounds give each interval."
)
#: Comment of a time axis of instants (the per-timestep table).
INSTANTS_COMMENT = (
    "Time values are instants at the start of each model timestep (no intervals, no "
    "bounds), in a nominal model year; the values of every model year are the same."
)

#: Names of instantaneous frequencies by timestep in minutes (CMIP6 CV; from memory).
_POINT_FREQUENCIES = {60: "1hrPt", 180: "3hrPt", 360: "6hrPt"}


def time_kind(ds: xr.Dataset) -> str:
    """Return how a dataset's time axis is meant.

    One of ``none``, ``climatology``, ``intervals`` or ``instants`` (a time coordinate
    without bounds).
    """
    if "time" not in ds.dims:
        return "none"
    attrs = ds["time"].attrs
    if "climatology" in attrs:
        return "climatology"
    return "intervals" if "bounds" in attrs else "instants"


def _step_days(ds: xr.Dataset, kind: str) -> float:
    """Typical length of one time step, days (bounds when there are some, else spacing)."""
    attrs = ds["time"].attrs
    name = attrs.get("climatology") or attrs.get("bounds")
    if kind != "instants" and name in ds.variables:
        bounds = np.asarray(ds[name].values, dtype=float)
        return float(np.median(bounds[:, 1] - bounds[:, 0]))
    values = np.asarray(ds["time"].values, dtype=float)
    return float(np.median(np.diff(values))) if values.size > 1 else 0.0


def frequency(ds: xr.Dataset) -> str:
    """Return the CMIP frequency of a dataset, from its time axis (see the module notes)."""
    kind = time_kind(ds)
    if kind == "none":
        return "fx"
    step = _step_days(ds, kind)
    if kind == "instants":
        minutes = int(round(step * 1440.0))
        if minutes < 60:
            return "subhrPt"
        return _POINT_FREQUENCIES.get(minutes, f"{minutes}minPt")
    if step < 1.5:
        return "day"
    if step < 40.0:  # calendar months (28-31 days) and fixed-angle months (about 26-36)
        return "monC" if kind == "climatology" else "mon"
    if step < 400.0:
        return "yrC" if kind == "climatology" else "yr"
    return "dec"


def data_variable_names(ds: xr.Dataset) -> list[str]:
    """Return the data variables of a dataset, bounds and coordinates left out."""
    bounds = {v.attrs.get(key) for v in ds.variables.values()
              for key in ("bounds", "climatology")}
    return [str(name) for name in ds.data_vars if name not in bounds]


def variable_id(ds: xr.Dataset) -> str:
    """Return the file's one data variable, or ``multiple`` when it holds several."""
    names = data_variable_names(ds)
    return names[0] if len(names) == 1 else "multiple"


def new_tracking_id() -> str:
    """Return a fresh CMIP-style tracking id, ``hdl:21.14100/<UUID>`` (a new UUID each call)."""
    return TRACKING_ID_PREFIX + str(uuid.uuid4())


def time_comment(ds: xr.Dataset) -> str | None:
    """Return the comment that explains the dataset's time axis, if it needs one."""
    return {"climatology": CLIMATOLOGY_COMMENT, "instants": INSTANTS_COMMENT}.get(time_kind(ds))
