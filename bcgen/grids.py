"""Horizontal grids: regular latitude–longitude, Gaussian, zonal, and from a model file.

A :class:`Grid` holds cell centres and cell bounds in degrees. Constructors:

==========================  =================================================================
:func:`regular_grid`        equal-angle cells from a resolution, cell counts, or given centres
:func:`gaussian_grid`       Gauss–Legendre latitudes (spectral models), equal longitudes
:func:`zonal_grid`          latitude only (zonal means, or insolation that does not depend on
                            longitude)
:func:`grid_from_file`      latitude/longitude read from a model file (1-D, or 2-D curvilinear)
==========================  =================================================================

Conventions
-----------
- Regular grids built from a resolution or cell counts have cell edges on
  multiples of the cell size: a 0.5° grid has latitudes −89.75 … 89.75 and
  longitudes 0.25 … 359.75 (common practice for global regular datasets).
- Gaussian grids run from south to north, longitudes from 0°E (common practice).
- Bounds computed from centres are midpoints between neighbours; the outer
  latitude bounds are extrapolated by half a cell and clipped at ±90°, and a
  longitude axis that covers the whole circle is periodic (CF §7.1: shared
  edges of neighbouring cells are identical numbers).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Literal

import numpy as np

from bcgen.cf import BOUNDS_DIM, VERTICES_DIM, coordinate_attrs
from bcgen.cf.reader import find_coordinates
from bcgen.errors import GridError, InputFileError

GridKind = Literal["regular", "gaussian", "zonal", "file", "curvilinear"]

_ANGLE_TOL_DEG = 1e-6


@dataclass(frozen=True)
class Grid:
    """A horizontal grid of cell centres and cell bounds, in degrees.

    Attributes
    ----------
    lat_deg : numpy.ndarray
        Latitudes of the cell centres: shape (nlat,), or (ny, nx) for a
        curvilinear grid.
    lat_bounds_deg : numpy.ndarray or None
        Latitude bounds: (nlat, 2), or (ny, nx, 4) corners for a curvilinear
        grid (None when a curvilinear file has none).
    lon_deg : numpy.ndarray or None
        Longitudes of the cell centres, (nlon,) or (ny, nx); None for a zonal grid.
    lon_bounds_deg : numpy.ndarray or None
        Longitude bounds, (nlon, 2) or (ny, nx, 4); None for a zonal grid.
    kind : {"regular", "gaussian", "zonal", "file", "curvilinear"}
        How the grid was made.
    name : str
        A short human-readable description, e.g. ``"regular 0.5 deg (360 x 720)"``.
    dims : tuple of str
        Dimension names used when the grid is written: ``("lat", "lon")``,
        ``("lat",)`` or the two dimensions of a curvilinear file.
    """

    lat_deg: np.ndarray
    lat_bounds_deg: np.ndarray | None
    lon_deg: np.ndarray | None = None
    lon_bounds_deg: np.ndarray | None = None
    kind: GridKind = "regular"
    name: str = ""
    dims: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        lat = _float_array(self.lat_deg, "latitude")
        lon = None if self.lon_deg is None else _float_array(self.lon_deg, "longitude")
        curvilinear = lat.ndim == 2
        if lat.ndim not in (1, 2) or lat.size == 0:
            raise GridError(f"grid {self.name!r}: latitudes must be a non-empty 1-D or 2-D array")
        if curvilinear and (lon is None or lon.shape != lat.shape):
            raise GridError(
                f"grid {self.name!r}: 2-D latitudes {lat.shape} need 2-D longitudes "
                "of the same shape"
            )
        if lon is not None and lon.ndim != lat.ndim:
            raise GridError(f"grid {self.name!r}: latitude and longitude must both be 1-D or 2-D")
        _check_latitudes(lat, f"grid {self.name!r}: latitude")
        nvert = 4 if curvilinear else 2
        lat_b = self._bounds(self.lat_bounds_deg, lat.shape, nvert, "latitude")
        lon_b = (
            None
            if lon is None
            else self._bounds(self.lon_bounds_deg, lon.shape, nvert, "longitude")
        )
        if lat_b is not None:
            _check_latitudes(lat_b, f"grid {self.name!r}: latitude bounds")
        if not curvilinear:
            if lat.size > 1 and not _strictly_monotonic(lat):
                raise GridError(f"grid {self.name!r}: latitudes must be strictly monotonic")
            if lat_b is not None and not _within(lat, lat_b):
                raise GridError(
                    f"grid {self.name!r}: each latitude must lie within its cell bounds"
                )
            if lon is not None and lon.size > 1 and not np.all(np.diff(lon) > 0):
                raise GridError(f"grid {self.name!r}: longitudes must increase strictly")
            if lon is not None and lon_b is not None and not _within(lon, lon_b):
                raise GridError(
                    f"grid {self.name!r}: each longitude must lie within its cell bounds"
                )
        if lon_b is None and lon is not None and self.lon_bounds_deg is not None:
            raise GridError(f"grid {self.name!r}: longitude bounds are malformed")
        dims = tuple(self.dims) or (
            ("y", "x") if curvilinear else ("lat",) if lon is None else ("lat", "lon")
        )
        if len(dims) != (2 if curvilinear or lon is not None else 1):
            raise GridError(f"grid {self.name!r}: dims {dims} do not match the grid's shape")
        object.__setattr__(self, "lat_deg", lat)
        object.__setattr__(self, "lon_deg", lon)
        object.__setattr__(self, "lat_bounds_deg", lat_b)
        object.__setattr__(self, "lon_bounds_deg", lon_b)
        object.__setattr__(self, "dims", dims)

    def _bounds(self, bounds, shape, nvert, what) -> np.ndarray | None:
        if bounds is None:
            return None
        b = _float_array(bounds, f"{what} bounds")
        if b.shape != (*shape, nvert):
            raise GridError(
                f"grid {self.name!r}: {what} bounds have shape {b.shape}; "
                f"expected {(*shape, nvert)}"
            )
        return b

    # --- shape --------------------------------------------------------------------------
    @property
    def is_zonal(self) -> bool:
        """True for a latitude-only grid."""
        return self.lon_deg is None

    @property
    def is_curvilinear(self) -> bool:
        """True for a grid with 2-D latitude and longitude arrays."""
        return self.lat_deg.ndim == 2

    @property
    def shape(self) -> tuple[int, ...]:
        """Shape of a field on this grid: (nlat,), (nlat, nlon) or (ny, nx)."""
        if self.is_curvilinear or self.lon_deg is None:
            return self.lat_deg.shape
        return (self.lat_deg.size, self.lon_deg.size)

    @property
    def size(self) -> int:
        """Number of cells."""
        return int(np.prod(self.shape))

    # --- areas --------------------------------------------------------------------------
    def unique_latitudes_deg(self) -> tuple[np.ndarray, np.ndarray]:
        """Return the distinct latitudes and, for each grid point, its index into them.

        Daily-mean insolation depends on latitude only, so it is computed once per
        distinct latitude and spread over the grid with the index.
        """
        lat = np.asarray(self.lat_deg, dtype=float)
        unique, inverse = np.unique(lat, return_inverse=True)
        return unique, inverse.reshape(lat.shape)

    def cell_area_weights(self) -> np.ndarray:
        r"""Cell areas as fractions of the whole sphere (they sum to 1 on a global grid).

        For cells bounded by parallels and meridians the area on the unit sphere is

        .. math:: A = (\lambda_2 - \lambda_1)(\sin\varphi_2 - \sin\varphi_1),

        divided by :math:`4\pi`. A zonal grid's bands are whole zones
        (:math:`\lambda_2 - \lambda_1 = 2\pi`). Curvilinear cells use their four
        corners with the polygon-area formula of Chamberlain & Duquette (2007,
        "Some algorithms for polygons on a sphere", JPL Publication 07-03),

        .. math:: A = -\tfrac12 \sum_i (\lambda_{i+1} - \lambda_{i-1}) \sin\varphi_i,

        which is exact for the same parallel/meridian cells.

        Returns
        -------
        numpy.ndarray
            Weights with the shape of a field on the grid.

        Raises
        ------
        GridError
            For a curvilinear grid without cell corners.
        """
        if self.lat_bounds_deg is None or (not self.is_zonal and self.lon_bounds_deg is None):
            raise GridError(
                f"grid {self.name!r} has no cell bounds; cell areas need latitude and "
                "longitude bounds (add CF bounds variables to the grid file)"
            )
        if self.is_curvilinear:
            lat = np.deg2rad(self.lat_bounds_deg)
            dlon = np.deg2rad(
                _wrap180(
                    np.roll(self.lon_bounds_deg, -1, axis=-1)
                    - np.roll(self.lon_bounds_deg, 1, axis=-1)
                )
            )
            area = np.abs(-0.5 * np.sum(dlon * np.sin(lat), axis=-1))
            return area / (4.0 * np.pi)
        sin_b = np.sin(np.deg2rad(self.lat_bounds_deg))
        band = np.abs(sin_b[:, 1] - sin_b[:, 0]) / 2.0
        if self.is_zonal:
            return band
        width = np.abs(np.diff(self.lon_bounds_deg, axis=1)[:, 0]) / 360.0
        return np.outer(band, width)

    # --- xarray -------------------------------------------------------------------------
    def to_dataset(self):
        """Coordinates and bounds of the grid as an :class:`xarray.Dataset`.

        Coordinates carry the CF attributes of :mod:`bcgen.cf`; bounds are data
        variables ``lat_bnds``/``lon_bnds`` (dimension ``bnds``, or ``nv4`` for
        curvilinear corners) named by the coordinates' ``bounds`` attribute.
        Merge the result with the fields, e.g. ``fields.merge(grid.to_dataset())``.
        """
        import xarray as xr

        ds = xr.Dataset()
        if self.is_curvilinear:
            for key, values, bounds in (
                ("lat", self.lat_deg, self.lat_bounds_deg),
                ("lon", self.lon_deg, self.lon_bounds_deg),
            ):
                attrs = coordinate_attrs(key, auxiliary=True)
                if bounds is not None:
                    attrs["bounds"] = f"{key}_bnds"
                    ds[f"{key}_bnds"] = ((*self.dims, VERTICES_DIM), bounds)
                ds = ds.assign_coords({key: (self.dims, values, attrs)})
            return ds
        axes = [("lat", self.lat_deg, self.lat_bounds_deg)]
        if not self.is_zonal:
            axes.append(("lon", self.lon_deg, self.lon_bounds_deg))
        for (key, values, bounds), dim in zip(axes, self.dims, strict=True):
            attrs = coordinate_attrs(key)
            if bounds is not None:
                attrs["bounds"] = f"{dim}_bnds"
                ds[f"{dim}_bnds"] = ((dim, BOUNDS_DIM), bounds)
            ds = ds.assign_coords({dim: (dim, values, attrs)})
        return ds


# --- constructors --------------------------------------------------------------------------
def regular_grid(
    resolution_deg: float | tuple[float, float] | None = None,
    *,
    lat_deg=None,
    lon_deg=None,
    nlat: int | None = None,
    nlon: int | None = None,
) -> Grid:
    """Make a regular latitude–longitude grid.

    Each axis is given by exactly one of: the resolution (``resolution_deg``,
    one number or ``(dlat, dlon)``), a cell count (``nlat``/``nlon``, equal
    cells over −90…90 and 0…360), or explicit centres (``lat_deg``/``lon_deg``).

    Parameters
    ----------
    resolution_deg : float or (float, float), optional
        Cell size in degrees; must divide 180 (latitude) and 360 (longitude).
    lat_deg, lon_deg : array_like, optional
        Cell centres in degrees; bounds are midpoints (see the module docstring).
    nlat, nlon : int, optional
        Numbers of equal cells.

    Returns
    -------
    Grid
    """
    dlat, dlon = _split_resolution(resolution_deg)
    lat_c, lat_b = _axis("latitude", dlat, lat_deg, nlat, 180.0, -90.0)
    lon_c, lon_b = _axis("longitude", dlon, lon_deg, nlon, 360.0, 0.0)
    if lat_deg is None and lon_deg is None and dlat is not None and dlat == dlon:
        name = f"regular {dlat:g} deg ({lat_c.size} x {lon_c.size})"
    else:
        name = f"regular ({lat_c.size} x {lon_c.size})"
    return Grid(lat_c, lat_b, lon_c, lon_b, kind="regular", name=name)


def gaussian_grid(nlat: int, nlon: int | None = None) -> Grid:
    r"""Make a Gaussian grid: Gauss–Legendre latitudes, equal longitude cells.

    The sines of the latitudes are the roots :math:`x_i` of the Legendre
    polynomial :math:`P_{n}` (Abramowitz & Stegun 1964, §25.4.29). Cell edges
    in latitude are placed so that each cell's area matches its Gaussian weight:

    .. math:: \sin\varphi_{i+1/2} = -1 + \sum_{j \le i} w_j ,

    so the edges run from −90° to 90° (the weights sum to 2) and each node lies
    inside its cell.

    Parameters
    ----------
    nlat : int
        Number of latitudes (even for the usual symmetric grids, e.g. 64 for T42).
    nlon : int, optional
        Number of longitudes, from 0°E; default ``2 * nlat``.
    """
    nlat = _positive_int(nlat, "nlat")
    nlon = 2 * nlat if nlon is None else _positive_int(nlon, "nlon")
    x, w = np.polynomial.legendre.leggauss(nlat)  # ascending: south to north
    edges = np.concatenate([[-1.0], -1.0 + np.cumsum(w)])
    # Exact symmetry about the equator, keeping the southern sums (short, accurate near
    # the pole) and mirroring them to the north.
    k = np.arange(nlat + 1)
    north = 2 * k > nlat
    edges[north] = -edges[nlat - k[north]]
    edges[2 * k == nlat] = 0.0
    lat_edges = np.rad2deg(np.arcsin(np.clip(edges, -1.0, 1.0)))
    lat = np.rad2deg(np.arcsin(x))
    lon_edges = np.arange(nlon + 1) * (360.0 / nlon) - 180.0 / nlon
    lon = np.arange(nlon) * (360.0 / nlon)
    return Grid(
        lat,
        _pairs(lat_edges),
        lon,
        _pairs(lon_edges),
        kind="gaussian",
        name=f"gaussian ({nlat} x {nlon})",
    )


def zonal_grid(
    resolution_deg: float | None = None,
    *,
    lat_deg=None,
    nlat: int | None = None,
    spacing: Literal["regular", "gaussian"] = "regular",
) -> Grid:
    """Make a latitude-only grid (zonal means; daily insolation, which is zonal by nature).

    Parameters
    ----------
    resolution_deg, lat_deg, nlat
        As for :func:`regular_grid` (exactly one of them); with
        ``spacing="gaussian"`` only ``nlat``.
    spacing : {"regular", "gaussian"}
        Equal-angle bands, or Gauss–Legendre latitudes.
    """
    if spacing == "gaussian":
        if nlat is None or resolution_deg is not None or lat_deg is not None:
            raise GridError("a Gaussian zonal grid is given by nlat only")
        g = gaussian_grid(nlat, 1)
        return Grid(g.lat_deg, g.lat_bounds_deg, kind="zonal", name=f"zonal gaussian ({nlat})")
    if spacing != "regular":
        raise GridError(f"unknown zonal grid spacing {spacing!r}; expected 'regular' or 'gaussian'")
    lat_c, lat_b = _axis("latitude", resolution_deg, lat_deg, nlat, 180.0, -90.0)
    return Grid(lat_c, lat_b, kind="zonal", name=f"zonal ({lat_c.size})")


def grid_from_file(path, lat_name: str | None = None, lon_name: str | None = None) -> Grid:
    """Read the grid of a model file (NetCDF).

    Latitude and longitude are found by the CF rules of bcgen's one reader
    (:func:`bcgen.cf.reader.find_coordinates`): ``standard_name`` (``latitude``,
    ``longitude``), else units (``degrees_north`` and the spellings of CF §4.1,
    ``degrees_east`` and those of §4.2, case aside), else ``axis`` (``Y``, ``X``), else
    the name (``lat``, ``latitude``; ``lon``, ``longitude``), unless named explicitly. They may be
    1-D (a rectilinear grid) or 2-D with the same dimensions (curvilinear). The
    file's bounds variables (CF ``bounds`` attribute) are used when present;
    otherwise 1-D bounds are computed as midpoints and 2-D grids have none. A
    file with a latitude and no longitude gives a zonal grid.

    Parameters
    ----------
    path : str or os.PathLike
        The model file.
    lat_name, lon_name : str, optional
        Variable names to use instead of searching.

    Raises
    ------
    InputFileError
        The file is missing or not readable as NetCDF.
    GridError
        No (or more than one) latitude or longitude, or unusable values.
    """
    import xarray as xr

    path = os.fspath(path)
    if not os.path.isfile(path):
        raise InputFileError(f"grid file {path} does not exist")
    try:
        ds = xr.open_dataset(path, engine="netcdf4", decode_times=False, decode_cf=False)
    except Exception as exc:  # netCDF4/h5netcdf/scipy raise a variety of types
        reason = " ".join(str(exc).split()) or type(exc).__name__
        raise InputFileError(f"grid file {path} is not a readable NetCDF file ({reason})") from None
    with ds:
        lat = _find_axis(ds, path, "latitude", lat_name, "lat_name")
        lon = _find_axis(ds, path, "longitude", lon_name, "lon_name", required=False)
        lat_v, lat_b = _axis_in_degrees(ds, path, lat, "latitude")
        if lon is None:
            if lat_v.ndim != 1:
                raise GridError(f"grid file {path}: 2-D latitude {lat!r} needs a longitude")
            return _checked(path, lambda: _from_1d_lat(lat_v, lat_b, (ds[lat].dims[0],)))
        lon_v, lon_b = _axis_in_degrees(ds, path, lon, "longitude")
        name = f"from file {os.path.basename(path)} ({lat}, {lon})"
        if lat_v.ndim == 1 and lon_v.ndim == 1:
            if ds[lat].dims == ds[lon].dims:
                raise GridError(
                    f"grid file {path}: {lat!r} and {lon!r} share dimension {ds[lat].dims[0]!r} "
                    "(an unstructured grid); expected separate latitude and longitude axes"
                )
            dims = (ds[lat].dims[0], ds[lon].dims[0])

            def make() -> Grid:
                lat_e = (
                    lat_b
                    if lat_b is not None
                    else _pairs(_edges_from_centres(lat_v, "latitude", periodic=False))
                )
                lon_e = (
                    lon_b
                    if lon_b is not None
                    else _pairs(_edges_from_centres(lon_v, "longitude", periodic=_is_global(lon_v)))
                )
                return Grid(lat_v, lat_e, lon_v, lon_e, kind="file", name=name, dims=dims)

            return _checked(path, make)
        if lat_v.ndim == 2 and ds[lat].dims == ds[lon].dims:
            if (lat_b is None) != (lon_b is None):
                lat_b = lon_b = None
            return _checked(
                path,
                lambda: Grid(
                    lat_v,
                    lat_b,
                    lon_v,
                    lon_b,
                    kind="curvilinear",
                    name=name,
                    dims=tuple(ds[lat].dims),
                ),
            )
        raise GridError(
            f"grid file {path}: latitude {lat!r} {ds[lat].dims} and longitude {lon!r} "
            f"{ds[lon].dims} must be both 1-D or both 2-D on the same dimensions"
        )


# --- helpers ---------------------------------------------------------------------------------
def _float_array(values, what: str) -> np.ndarray:
    try:
        arr = np.array(values, dtype=float)
    except (TypeError, ValueError):
        raise GridError(f"{what} values must be numbers") from None
    if not np.all(np.isfinite(arr)):
        raise GridError(f"{what} values must be finite numbers")
    return arr


def _check_latitudes(values: np.ndarray, what: str) -> None:
    if np.any(np.abs(values) > 90.0 + _ANGLE_TOL_DEG):
        worst = values.flat[np.argmax(np.abs(values))]
        raise GridError(f"{what} {worst:g} is beyond ±90 degrees")


def _strictly_monotonic(values: np.ndarray) -> bool:
    d = np.diff(values)
    return bool(np.all(d > 0) or np.all(d < 0))


def _within(centres: np.ndarray, bounds: np.ndarray) -> bool:
    lo = np.minimum(bounds[..., 0], bounds[..., 1]) - _ANGLE_TOL_DEG
    hi = np.maximum(bounds[..., 0], bounds[..., 1]) + _ANGLE_TOL_DEG
    return bool(np.all((centres >= lo) & (centres <= hi)))


def _wrap180(deg: np.ndarray) -> np.ndarray:
    return (deg + 180.0) % 360.0 - 180.0


def _pairs(edges: np.ndarray) -> np.ndarray:
    return np.stack([edges[:-1], edges[1:]], axis=-1)


def _positive_int(value, what: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise GridError(f"{what} must be a positive integer; got {value!r}")
    return int(value)


def _split_resolution(resolution_deg):
    if resolution_deg is None:
        return None, None
    if np.ndim(resolution_deg) == 0:
        return float(resolution_deg), float(resolution_deg)
    if np.shape(resolution_deg) != (2,):
        raise GridError(
            f"resolution_deg must be one number or (dlat, dlon); got {resolution_deg!r}"
        )
    return float(resolution_deg[0]), float(resolution_deg[1])


def _axis(what: str, step, centres, count, span: float, start: float):
    """Centres and (n, 2) bounds of one axis from exactly one of step, centres, count."""
    key = {"latitude": ("lat_deg", "nlat"), "longitude": ("lon_deg", "nlon")}[what]
    given = [
        name
        for name, v in (("resolution_deg", step), (key[0], centres), (key[1], count))
        if v is not None
    ]
    if len(given) != 1:
        raise GridError(
            f"{what}: give exactly one of resolution_deg, {key[0]} or {key[1]}"
            + (f" (got {', '.join(given)})" if given else "")
        )
    if centres is not None:
        c = _float_array(centres, what)
        if c.ndim != 1 or c.size == 0:
            raise GridError(f"{key[0]} must be a non-empty 1-D list of centres")
        if what == "latitude":
            _check_latitudes(c, "latitude")
        edges = _edges_from_centres(c, what, periodic=what == "longitude" and _is_global(c))
        return c, _pairs(edges)
    if count is not None:
        n = _positive_int(count, key[1])
    else:
        if not np.isfinite(step) or step <= 0:
            raise GridError(f"resolution_deg must be a positive number of degrees; got {step:g}")
        n = int(round(span / step))
        if n < 1 or abs(n * step - span) > 1e-9 * span:
            raise GridError(
                f"resolution_deg {step:g} does not divide {span:g} degrees of {what}; "
                f"use {key[1]} or explicit {key[0]}"
            )
    edges = start + np.arange(n + 1) * (span / n)
    edges[-1] = start + span
    return 0.5 * (edges[:-1] + edges[1:]), _pairs(edges)


def _is_global(lon: np.ndarray) -> bool:
    """Tell whether equally spaced longitudes close the circle (last + spacing = first + 360)."""
    if lon.size < 2:
        return False
    d = np.diff(lon)
    mean = (lon[-1] - lon[0]) / (lon.size - 1)
    return bool(
        np.all(np.abs(d - mean) <= 1e-6 * 360.0) and abs(lon.size * mean - 360.0) <= 1e-6 * 360.0
    )


def _edges_from_centres(c: np.ndarray, what: str, *, periodic: bool) -> np.ndarray:
    if c.size == 1:
        if what == "latitude":
            return np.array([-90.0, 90.0]) if c[0] == 0 else np.array([c[0] - 0.5, c[0] + 0.5])
        return np.array([c[0] - 180.0, c[0] + 180.0])
    if what == "longitude" and not np.all(np.diff(c) > 0):
        raise GridError("longitude centres must increase strictly (west to east)")
    if not _strictly_monotonic(c):
        raise GridError(f"{what} centres must be strictly monotonic")
    mid = 0.5 * (c[:-1] + c[1:])
    if periodic:
        first = 0.5 * (c[-1] - 360.0 + c[0])
        return np.concatenate([[first], mid, [first + 360.0]])
    first = c[0] - (mid[0] - c[0])
    last = c[-1] + (c[-1] - mid[-1])
    edges = np.concatenate([[first], mid, [last]])
    if what == "latitude":
        edges = np.clip(edges, -90.0, 90.0)
    return edges


def _from_1d_lat(lat, lat_b, dims) -> Grid:
    if lat_b is None:
        lat_b = _pairs(_edges_from_centres(lat, "latitude", periodic=False))
    return Grid(lat, lat_b, kind="zonal", name=f"zonal ({lat.size})", dims=dims)


def _checked(path: str, make_grid) -> Grid:
    """Build a grid, re-raising its validation error with the file's name."""
    try:
        return make_grid()
    except GridError as exc:
        detail = str(exc).split(": ", 1)[-1] if str(exc).startswith("grid ") else str(exc)
        raise GridError(f"grid file {path}: {detail}") from None


def _find_axis(ds, path, kind, explicit, option, required=True):
    """Return the one latitude (longitude) variable of a grid file, by bcgen's CF rules.

    :func:`bcgen.cf.reader.find_coordinates`: ``standard_name``, then units, ``axis``,
    name, case aside where CF allows; among several found by the same rule, the one
    coordinate variable (a 1-D variable named as its dimension) is taken.
    """
    if explicit is not None:
        if explicit not in ds.variables:
            raise GridError(f"grid file {path}: no variable {explicit!r} ({option})")
        return explicit
    names = find_coordinates(ds, kind, strongest=True)
    if len(names) > 1:
        coords = [n for n in names if ds[n].dims == (n,)]
        names = coords if len(coords) == 1 else names
    if len(names) > 1:
        raise GridError(
            f"grid file {path}: several {kind} variables ({', '.join(names)}); "
            f"choose one with {option}"
        )
    if not names:
        if not required:
            return None
        raise GridError(
            f"grid file {path}: no {kind} variable (expected standard_name "
            f"'{kind}' or units '{_UNITS[kind]}'); name it with {option}"
        )
    return names[0]


_UNITS = {"latitude": "degrees_north", "longitude": "degrees_east"}


def _axis_in_degrees(ds, path, name: str, kind: str):
    """Values and bounds of a latitude or longitude axis, in degrees from their CF units.

    The units are read from the file and converted (:func:`bcgen.units.angle_to_degrees`);
    bounds share their coordinate's units (CF 1.11 §7.1). An axis without values is refused.
    """
    from bcgen.units import angle_to_degrees

    where = f"grid file {path}: {kind} {name!r}"
    if ds[name].size == 0:
        raise GridError(f"{where} has no values (a dimension of length 0); expected at least "
                        "one latitude")
    units = ds[name].attrs.get("units")
    values = angle_to_degrees(ds[name].values, units, where=where, kind=kind, error=GridError)
    bounds = _file_bounds(ds, name)
    if bounds is not None:
        bounds = angle_to_degrees(bounds, units, where=f"{where} bounds", kind=kind,
                                  error=GridError)
    return values, bounds


def _file_bounds(ds, name: str) -> np.ndarray | None:
    bname = ds[name].attrs.get("bounds")
    if bname is None or bname not in ds.variables:
        return None
    b = ds[bname]
    # Put the vertex dimension last whatever order the file uses.
    vdims = [d for d in b.dims if d not in ds[name].dims]
    if len(vdims) != 1:
        return None
    return np.asarray(b.transpose(*ds[name].dims, vdims[0]).values, dtype=float)
