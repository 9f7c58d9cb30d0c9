"""Reading geography inputs: a 2-D latitude–longitude field from a NetCDF file, units checked.

Every input (present-day relief, the reconstruction at the epoch and at 0 ka, ice
thickness or ice fraction) is one variable of a NetCDF file, named in the spec. The
reader finds the variable's latitude and longitude by CF rules (bcgen's one CF reader,
:func:`bcgen.cf.reader.find_coordinates`), reads their cells with
:func:`bcgen.grids.grid_from_file`, checks its units against what the input means
(a length for relief and thickness, a fraction for ice cover) with cf-units, converts
to metres (or 1), turns latitudes to increasing order, and snaps a nearly even global
axis to exact steps: ETOPO5 as distributed stores its 5-minute steps rounded to
0.08333411 degrees, which would otherwise make its 4320 longitudes span 360.0033 degrees.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np

from bcgen.cf.reader import find_coordinates
from bcgen.errors import InputFileError
from bcgen.grids import Grid, grid_from_file

#: Units each kind of input must be convertible to (UDUNITS via cf-units).
INPUT_UNITS = {"length": "m", "fraction": "1"}

#: An axis whose steps differ from even by less than this fraction of a step is snapped.
_SNAP_FRACTION = 0.01
#: ... and whose accumulated drift from exact steps is below this fraction of a cell.
_DRIFT_CELLS = 0.1


@dataclass(frozen=True)
class LatLonField:
    """A field on a rectilinear latitude–longitude grid (latitudes increasing).

    Attributes
    ----------
    grid : bcgen.grids.Grid
        Cell centres and bounds.
    values : numpy.ndarray
        (nlat, nlon) values in ``units``; float32 or float64.
    units : str
        ``"m"`` or ``"1"``.
    source : str
        ``"file:variable"``, for messages and provenance.
    """

    grid: Grid
    values: np.ndarray
    units: str
    source: str

    @property
    def cell_area_sr(self) -> np.ndarray:
        """Cell areas in steradians, (nlat, nlon)."""
        return np.broadcast_to(self.row_area_sr, self.values.shape)

    @property
    def row_area_sr(self) -> np.ndarray:
        """Cell areas in steradians: (nlat, 1) with even longitude steps, else (nlat, nlon)."""
        lat = np.deg2rad(self.grid.lat_bounds_deg)
        lon = np.deg2rad(self.grid.lon_bounds_deg)
        widths = np.abs(lon[:, 1] - lon[:, 0])
        bands = np.abs(np.sin(lat[:, 1]) - np.sin(lat[:, 0]))[:, None]
        if np.allclose(widths, widths[0]):
            return bands * widths[0]
        return bands * widths[None, :]


def read_field(path, variable: str, *, kind: str = "length", key: str = "",
               missing_as: float | None = None) -> LatLonField:
    """Read one 2-D variable of a NetCDF file with its grid, units checked and converted.

    Parameters
    ----------
    path : str or os.PathLike
        The NetCDF file.
    variable : str
        The variable to read; it must have a latitude and a longitude dimension (other
        dimensions must have length 1).
    kind : {"length", "fraction"}
        What the variable holds: a length (converted to metres) or an area fraction
        (units ``1``, ``%`` or none).
    key : str
        Spec key that named the file, for messages.
    missing_as : float, optional
        Value for missing data; by default missing data is an error.

    Raises
    ------
    InputFileError
        The file or variable is missing, the units are wrong, or values are missing.
    """
    import cf_units
    import xarray as xr

    path = os.fspath(path)
    where = f"{key}: " if key else ""
    if not os.path.isfile(path):
        raise InputFileError(f"{where}input file {path} does not exist")
    try:
        ds = xr.open_dataset(path, decode_times=False, mask_and_scale=True)
    except Exception as exc:  # noqa: BLE001 - many backends, one message
        raise InputFileError(f"{where}{path} is not a readable NetCDF file ({exc})") from None
    with ds:
        if variable not in ds.data_vars:
            bounds = {v.attrs.get("bounds") for v in ds.variables.values()}
            names = sorted(str(n) for n in ds.data_vars if n not in bounds)
            raise InputFileError(
                f"{where}{path} has no variable {variable!r}; it has {', '.join(names)}"
            )
        da = ds[variable]
        # The variable's own latitude and longitude, by the CF rules of bcgen's one reader.
        axes = []
        for what in ("latitude", "longitude"):
            found = [n for n in find_coordinates(ds, what, dims=da.dims) if ds[n].ndim == 1]
            if len(found) != 1:
                raise InputFileError(
                    f"{where}{path}: variable {variable!r} needs one 1-D {what} coordinate "
                    f"among its dimensions {da.dims}; found {found or 'none'} (geography "
                    "inputs must be on a latitude-longitude grid)")
            axes.append(found[0])
        grid = grid_from_file(path, lat_name=axes[0], lon_name=axes[1])
        lat_dim, lon_dim = grid.dims
        extra = [d for d in da.dims if d not in (lat_dim, lon_dim)]
        if lat_dim not in da.dims or lon_dim not in da.dims or any(da.sizes[d] != 1 for d in extra):
            raise InputFileError(
                f"{where}{path}: variable {variable!r} has dimensions {da.dims}; expected "
                f"({lat_dim}, {lon_dim}) (other dimensions of length 1 are allowed)"
            )
        da = da.isel({d: 0 for d in extra}).transpose(lat_dim, lon_dim)
        units = str(da.attrs.get("units", "")).strip()
        values = np.asarray(da.values)
    want = INPUT_UNITS[kind]
    if kind == "fraction" and units in ("", "1", "-"):
        factor = 1.0
    else:
        try:
            factor = float(cf_units.Unit(units).convert(1.0, cf_units.Unit(want)))
        except Exception:  # noqa: BLE001 - cf-units raises ValueError or its own errors
            expected = "a length such as 'm'" if kind == "length" else "'1' or '%'"
            raise InputFileError(
                f"{where}{path}: variable {variable!r} has units {units!r}; expected {expected}"
            ) from None
    if not np.issubdtype(values.dtype, np.floating):
        values = values.astype(np.float64)
    if factor != 1.0:
        values = values * values.dtype.type(factor)
    bad = ~np.isfinite(values)
    if bad.any():
        if missing_as is None:
            raise InputFileError(
                f"{where}{path}: variable {variable!r} has {int(bad.sum())} missing values; "
                "fill them (a relief field must cover the globe)"
            )
        values = np.where(bad, values.dtype.type(missing_as), values)
    grid, values = _regular_order(grid, values)
    return LatLonField(grid, values, want, f"{os.path.basename(path)}:{variable}")


def _regular_order(grid: Grid, values: np.ndarray) -> tuple[Grid, np.ndarray]:
    """Latitudes increasing; nearly even global axes snapped to exact steps."""
    lat, latb = grid.lat_deg, grid.lat_bounds_deg
    if lat.size > 1 and lat[1] < lat[0]:
        lat, latb, values = lat[::-1], latb[::-1, ::-1], values[::-1]
    lon, lonb = grid.lon_deg, grid.lon_bounds_deg
    lat, latb = _snap(lat, latb, span=180.0, poles=True)
    lon, lonb = _snap(lon, lonb, span=360.0, poles=False)
    return Grid(lat, latb, lon, lonb, kind="file", name=grid.name, dims=grid.dims), values


def _snap(c: np.ndarray, b: np.ndarray, *, span: float, poles: bool):
    n = c.size
    if n < 3:
        return c, b
    step = np.diff(c)
    if np.ptp(step) > _SNAP_FRACTION * abs(step.mean()):
        return c, b
    # Latitude points on both poles (n points, n-1 steps) or cell centres (n steps).
    for count in ((n - 1, n) if poles else (n,)):
        exact = span / count
        if abs(step.mean() - exact) * n < _DRIFT_CELLS * exact:
            centres = c[0] + exact * np.arange(n)
            edges = np.concatenate([centres - exact / 2, centres[-1:] + exact / 2])
            if poles:
                centres = np.clip(centres, -90.0, 90.0)
                edges = np.clip(edges, -90.0, 90.0)
            return centres, np.stack([edges[:-1], edges[1:]], axis=1)
    return c, b


def read_land_mask(path, variable: str, *, key: str = "") -> LatLonField:
    """Read a reconstruction's land mask: a land area fraction (0 to 1) or a binary 0/1 mask.

    Raises
    ------
    InputFileError
        As :func:`read_field`, or a value lies outside 0 to 1 (one line naming the file
        and the variable).
    """
    field = read_field(path, variable, kind="fraction", key=key)
    v = field.values
    bad = (v < 0) | (v > 1)
    if bad.any():
        where = f"{key}: " if key else ""
        raise InputFileError(
            f"{where}{os.fspath(path)}: variable {variable!r} has {int(bad.sum())} values "
            f"outside 0 to 1 (from {float(v.min()):g} to {float(v.max()):g}); a land mask "
            "must be a land area fraction (0 to 1) or binary (0 sea, 1 land)")
    return field


def read_length(path, variable: str, *, key: str = "") -> float:
    """Read a single length (a variable with one value, e.g. a sea-level change) in metres."""
    import cf_units
    import xarray as xr

    path = os.fspath(path)
    where = f"{key}: " if key else ""
    with xr.open_dataset(path, decode_times=False) as ds:
        if variable not in ds.variables:
            raise InputFileError(f"{where}{path} has no variable {variable!r}")
        da = ds[variable]
        if da.size != 1:
            raise InputFileError(f"{where}{path}: {variable!r} must hold one value (a sea-level "
                                 f"change), it has {da.size}")
        units = str(da.attrs.get("units", "")).strip()
        value = float(np.asarray(da.values).ravel()[0])
    try:
        return float(cf_units.Unit(units).convert(value, cf_units.Unit("m")))
    except Exception:  # noqa: BLE001 - cf-units raises ValueError or its own errors
        raise InputFileError(f"{where}{path}: {variable!r} has units {units!r}; expected a "
                             "length such as 'm'") from None
