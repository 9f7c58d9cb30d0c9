"""Tests of bcgen.grids: Gaussian latitudes against published tables, bounds, areas, files."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr
from numpy.polynomial import legendre

from bcgen.errors import GridError, InputFileError
from bcgen.grids import Grid, gaussian_grid, grid_from_file, regular_grid, zonal_grid

# --- Gaussian latitudes: published tables -------------------------------------------------
# Abramowitz & Stegun (1964), Handbook of Mathematical Functions, Table 25.4 "Abscissas and
# weight factors for Gaussian integration", positive abscissas x_i (= sin(latitude) of a
# Gaussian grid) and weights w_i, printed to 15 digits. Digits from memory (the table could
# not be opened here); n = 2, 3, 4, 5 are cross-checked against closed forms below.
AS_TABLE_25_4 = {
    2: ([0.577350269189626], [1.000000000000000]),
    3: ([0.000000000000000, 0.774596669241483], [0.888888888888889, 0.555555555555556]),
    4: ([0.339981043584856, 0.861136311594053], [0.652145154862546, 0.347854845137454]),
    5: (
        [0.000000000000000, 0.538469310105683, 0.906179845938664],
        [0.568888888888889, 0.478628670499366, 0.236926885056189],
    ),
    6: (
        [0.238619186083197, 0.661209386466265, 0.932469514203152],
        [0.467913934572691, 0.360761573048139, 0.171324492379170],
    ),
}


def _positive_nodes_and_weights(n):
    g = zonal_grid(nlat=n, spacing="gaussian")
    x = np.sin(np.deg2rad(g.lat_deg))
    w = 2.0 * g.cell_area_weights()  # cell areas as fractions of the sphere, times 2
    keep = x > -1e-12
    return x[keep], w[keep]


@pytest.mark.parametrize("n", sorted(AS_TABLE_25_4))
def test_gaussian_nodes_and_weights_match_abramowitz_stegun_table_25_4(n):
    x_pub, w_pub = AS_TABLE_25_4[n]
    x, w = _positive_nodes_and_weights(n)
    # Table printed to 15 decimals: agree to 1e-14 (last-digit rounding).
    np.testing.assert_allclose(x, x_pub, rtol=0, atol=1e-14)
    np.testing.assert_allclose(w, w_pub, rtol=0, atol=1e-14)


def test_gaussian_nodes_match_closed_forms():
    # Closed forms of the Gauss–Legendre nodes (roots of P_n): analytic results.
    closed = {
        2: [np.sqrt(1 / 3)],
        3: [0.0, np.sqrt(3 / 5)],
        4: [np.sqrt(3 / 7 - 2 / 7 * np.sqrt(6 / 5)), np.sqrt(3 / 7 + 2 / 7 * np.sqrt(6 / 5))],
        5: [0.0, np.sqrt(5 - 2 * np.sqrt(10 / 7)) / 3, np.sqrt(5 + 2 * np.sqrt(10 / 7)) / 3],
    }
    for n, nodes in closed.items():
        x, _ = _positive_nodes_and_weights(n)
        np.testing.assert_allclose(x, nodes, rtol=0, atol=1e-15)
    # Weights of n = 3: 8/9 and 5/9 (analytic).
    _, w = _positive_nodes_and_weights(3)
    np.testing.assert_allclose(w, [8 / 9, 5 / 9], rtol=0, atol=1e-15)


def test_t42_gaussian_latitudes_match_the_published_list():
    # The 64 Gaussian latitudes of the T42 grid as printed in NCAR community model grid
    # documentation (northernmost four, 4 decimals) — from memory.
    g = gaussian_grid(64)
    assert g.shape == (64, 128)
    np.testing.assert_allclose(g.lat_deg[::-1][:4], [87.8638, 85.0965, 82.3129, 79.5256], atol=1e-4)


@pytest.mark.parametrize("n", [1, 2, 7, 32, 64, 96, 160, 320])
def test_gaussian_nodes_are_legendre_roots_and_weights_follow_the_formula(n):
    g = zonal_grid(nlat=n, spacing="gaussian")
    x = np.sin(np.deg2rad(g.lat_deg))
    pn = np.zeros(n + 1)
    pn[-1] = 1.0
    dpn = legendre.legval(x, legendre.legder(pn))
    # Nodes are the roots of P_n (A&S 25.4.29): the Newton correction P_n/P_n' is at
    # rounding level.
    assert np.max(np.abs(legendre.legval(x, pn) / dpn)) < 1e-14
    # Weights w_i = 2 / ((1 - x_i^2) P_n'(x_i)^2) (A&S 25.4.29), from the cell areas.
    w_formula = 2.0 / ((1.0 - x**2) * dpn**2)
    # rtol 1e-9: evaluating P_n' as a degree-n Legendre series near x = ±1 loses digits
    # (by ~2e-10 for n = 320, measured against numpy's leggauss weights).
    np.testing.assert_allclose(2.0 * g.cell_area_weights(), w_formula, rtol=1e-9)
    # Against numpy's Gauss–Legendre weights the cell areas agree to rounding.
    np.testing.assert_allclose(2.0 * g.cell_area_weights(), legendre.leggauss(n)[1], rtol=2e-12)


@pytest.mark.parametrize("n", [2, 3, 32, 64, 321])
def test_gaussian_grid_weights_sum_to_two_and_are_symmetric(n):
    g = gaussian_grid(n)
    w = 2.0 * g.cell_area_weights().sum(axis=1)
    assert w.sum() == pytest.approx(2.0, abs=1e-13)  # the weights integrate 1 over [-1, 1]
    np.testing.assert_array_equal(g.lat_deg, -g.lat_deg[::-1])  # symmetric about the equator
    np.testing.assert_array_equal(g.lat_bounds_deg, -g.lat_bounds_deg[::-1, ::-1])
    np.testing.assert_allclose(w, w[::-1], rtol=1e-12)
    assert g.lat_bounds_deg[0, 0] == -90.0 and g.lat_bounds_deg[-1, 1] == 90.0
    # Each node lies inside its cell (Chebyshev–Markov–Stieltjes separation theorem,
    # Szegő, Orthogonal Polynomials, §3.41 — from memory).
    assert np.all(g.lat_bounds_deg[:, 0] < g.lat_deg)
    assert np.all(g.lat_deg < g.lat_bounds_deg[:, 1])
    # Shared edges are identical numbers (CF §7.1).
    np.testing.assert_array_equal(g.lat_bounds_deg[1:, 0], g.lat_bounds_deg[:-1, 1])
    assert g.lon_deg[0] == 0.0 and g.lon_deg.size == 2 * n


# --- regular grids --------------------------------------------------------------------------
def test_half_degree_grid_centres_bounds_and_areas():
    g = regular_grid(0.5)
    assert g.shape == (360, 720) and g.dims == ("lat", "lon")
    assert g.lat_deg[0] == -89.75 and g.lat_deg[-1] == 89.75
    assert g.lon_deg[0] == 0.25 and g.lon_deg[-1] == 359.75
    assert g.lat_bounds_deg[0, 0] == -90.0 and g.lat_bounds_deg[-1, 1] == 90.0
    assert g.lon_bounds_deg[0, 0] == 0.0 and g.lon_bounds_deg[-1, 1] == 360.0
    np.testing.assert_array_equal(g.lat_bounds_deg[1:, 0], g.lat_bounds_deg[:-1, 1])
    w = g.cell_area_weights()
    assert w.shape == g.shape
    assert w.sum() == pytest.approx(1.0, abs=1e-12)
    # Area between the equator and 30 N is (sin 30° - sin 0°)/2 = 1/4 of the sphere (analytic).
    band = (g.lat_deg > 0) & (g.lat_deg < 30)
    assert w[band].sum() == pytest.approx(0.25, abs=1e-12)


def test_resolution_pair_and_counts():
    g = regular_grid((2.0, 2.5))
    assert g.shape == (90, 144)
    h = regular_grid(nlat=90, nlon=144)
    np.testing.assert_allclose(h.lat_deg, g.lat_deg, atol=1e-12)
    np.testing.assert_allclose(h.lon_bounds_deg, g.lon_bounds_deg, atol=1e-12)
    mixed = regular_grid(lat_deg=[-45.0, 45.0], nlon=4)
    assert mixed.shape == (2, 4)


def test_bounds_from_explicit_centres_are_midpoints_clipped_and_periodic():
    g = regular_grid(lat_deg=[-80.0, -40.0, 0.0, 40.0, 85.0], lon_deg=[10.0, 130.0, 250.0])
    np.testing.assert_allclose(
        g.lat_bounds_deg, [[-90, -60], [-60, -20], [-20, 20], [20, 62.5], [62.5, 90]]
    )
    # A global longitude axis is periodic: the first cell starts half-way from the last.
    np.testing.assert_allclose(g.lon_bounds_deg, [[-50, 70], [70, 190], [190, 310]])
    # A regional axis is extrapolated by half a cell.
    r = regular_grid(lat_deg=[10.0, 20.0], lon_deg=[100.0, 110.0, 120.0])
    np.testing.assert_allclose(r.lon_bounds_deg, [[95, 105], [105, 115], [115, 125]])
    np.testing.assert_allclose(r.lat_bounds_deg, [[5, 15], [15, 25]])


def test_north_to_south_latitudes_are_accepted():
    g = regular_grid(lat_deg=[60.0, 0.0, -60.0], nlon=1)
    np.testing.assert_allclose(g.lat_bounds_deg, [[90, 30], [30, -30], [-30, -90]])
    assert g.cell_area_weights().sum() == pytest.approx(1.0)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"resolution_deg": 0.7}, r"resolution_deg 0.7 does not divide 180 degrees of latitude"),
        ({"resolution_deg": -1}, r"resolution_deg must be a positive number of degrees; got -1"),
        ({}, r"latitude: give exactly one of resolution_deg, lat_deg or nlat$"),
        (
            {"resolution_deg": 1, "nlat": 3},
            r"give exactly one of resolution_deg, lat_deg or nlat \(got resolution_deg, nlat\)",
        ),
        ({"lat_deg": [0.0, 95.0], "nlon": 4}, r"^latitude 95 is beyond ±90 degrees$"),
        ({"lat_deg": [0.0, 10.0, 5.0], "nlon": 4}, r"latitude centres must be strictly monotonic"),
        ({"lat_deg": [0.0, np.nan], "nlon": 4}, r"latitude values must be finite numbers"),
        ({"nlat": 2.5, "nlon": 4}, r"nlat must be a positive integer; got 2.5"),
        ({"nlat": 0, "nlon": 4}, r"nlat must be a positive integer; got 0"),
        ({"nlat": 4, "lon_deg": [10.0, 5.0]}, r"longitude centres must increase strictly"),
        (
            {"resolution_deg": (1.0, 2.0, 3.0)},
            r"resolution_deg must be one number or \(dlat, dlon\)",
        ),
    ],
)
def test_regular_grid_errors(kwargs, message):
    with pytest.raises(GridError, match=message) as info:
        regular_grid(**kwargs)
    assert "\n" not in str(info.value)


def test_grid_validation_in_post_init():
    with pytest.raises(GridError, match=r"latitude bounds 91 is beyond ±90 degrees"):
        Grid(np.array([0.0]), np.array([[-90.0, 91.0]]))
    with pytest.raises(GridError, match=r"latitude bounds have shape \(1, 3\); expected \(1, 2\)"):
        Grid(np.array([0.0]), np.array([[-90.0, 0.0, 90.0]]))
    with pytest.raises(GridError, match=r"each latitude must lie within its cell bounds"):
        Grid(np.array([0.0, 50.0]), np.array([[-90.0, -10.0], [-10.0, 90.0]]))
    with pytest.raises(GridError, match=r"longitudes must increase strictly"):
        Grid(
            np.array([0.0]),
            np.array([[-90.0, 90.0]]),
            np.array([10.0, 0.0]),
            np.array([[5.0, 15.0], [-5.0, 5.0]]),
        )


def test_zonal_grids():
    z = zonal_grid(2.0)
    assert z.is_zonal and z.shape == (90,) and z.dims == ("lat",)
    assert z.cell_area_weights().sum() == pytest.approx(1.0, abs=1e-12)
    ds = z.to_dataset()
    assert set(ds.coords) == {"lat"} and "lat_bnds" in ds
    with pytest.raises(GridError, match="a Gaussian zonal grid is given by nlat only"):
        zonal_grid(2.0, spacing="gaussian")


def test_to_dataset_carries_cf_attributes():
    ds = regular_grid(10).to_dataset()
    assert ds.lat.attrs == {
        "standard_name": "latitude",
        "long_name": "latitude",
        "units": "degrees_north",
        "axis": "Y",
        "bounds": "lat_bnds",
    }
    assert ds.lon.attrs["units"] == "degrees_east" and ds.lon.attrs["bounds"] == "lon_bnds"
    assert ds.lat_bnds.dims == ("lat", "bnds")


# --- curvilinear cell areas ------------------------------------------------------------------
def _as_curvilinear(g: Grid) -> Grid:
    lat2, lon2 = np.meshgrid(g.lat_deg, g.lon_deg, indexing="ij")
    la0, la1 = g.lat_bounds_deg[:, 0][:, None], g.lat_bounds_deg[:, 1][:, None]
    lo0, lo1 = g.lon_bounds_deg[:, 0][None, :], g.lon_bounds_deg[:, 1][None, :]
    shape = lat2.shape
    lat_c = np.stack([np.broadcast_to(v, shape) for v in (la0, la0, la1, la1)], axis=-1)
    lon_c = np.stack([np.broadcast_to(v, shape) for v in (lo0, lo1, lo1, lo0)], axis=-1)
    return Grid(lat2, lat_c, lon2, lon_c, kind="curvilinear", name="test", dims=("j", "i"))


def test_curvilinear_areas_equal_the_exact_areas_of_latitude_longitude_cells():
    g = regular_grid((3.0, 4.0))
    c = _as_curvilinear(g)
    assert c.is_curvilinear and c.shape == g.shape
    np.testing.assert_allclose(c.cell_area_weights(), g.cell_area_weights(), rtol=1e-12)
    nob = Grid(c.lat_deg, None, c.lon_deg, None, kind="curvilinear", name="nob")
    with pytest.raises(GridError, match="grid 'nob' has no cell bounds"):
        nob.cell_area_weights()


# --- grids read from files -------------------------------------------------------------------
def _write(ds: xr.Dataset, path) -> str:
    ds.to_netcdf(path)
    return str(path)


def test_grid_from_file_by_standard_name_with_file_bounds(tmp_path):
    lat = np.array([-60.0, 0.0, 60.0])
    lat_b = np.array([[-90.0, -20.0], [-20.0, 20.0], [20.0, 90.0]])  # not midpoints
    ds = xr.Dataset(
        {"t": (("y", "x"), np.zeros((3, 4))), "yb": (("y", "v"), lat_b)},
        coords={
            "y": (
                "y",
                lat,
                {"standard_name": "latitude", "units": "degrees_north", "bounds": "yb"},
            ),
            "x": ("x", [0.0, 90.0, 180.0, 270.0],
                  {"standard_name": "longitude", "units": "degrees_east"}),
        },
    )
    g = grid_from_file(_write(ds, tmp_path / "m.nc"))
    assert g.kind == "file" and g.dims == ("y", "x") and g.shape == (3, 4)
    np.testing.assert_array_equal(g.lat_bounds_deg, lat_b)
    np.testing.assert_allclose(g.lon_bounds_deg[0], [-45.0, 45.0])  # computed, periodic
    assert g.cell_area_weights().sum() == pytest.approx(1.0)


@pytest.mark.parametrize("lat_units", ["degrees_north", "degree_N", "degreesN", "degreeN"])
def test_grid_from_file_by_units_aliases(tmp_path, lat_units):
    # CF §4.1 lists these units strings for latitude; §4.2 the matching ones for longitude.
    ds = xr.Dataset(
        coords={
            "nav_lat": ("nav_lat", [-45.0, 45.0], {"units": lat_units}),
            "nav_lon": ("nav_lon", [0.0, 180.0], {"units": "degrees_E"}),
        }
    )
    g = grid_from_file(_write(ds, tmp_path / "u.nc"))
    assert g.dims == ("nav_lat", "nav_lon")


def test_grid_from_file_finds_axes_by_the_cf_reader_rules(tmp_path):
    # CF 1.11 §4.1-4.2: the units strings of latitude and longitude, whatever their case
    # (UDUNITS names are case-insensitive), then the axis attribute (§4: Y, X), then the
    # name; the same rules as bcgen.cf.reader for model and built files.
    ds = xr.Dataset(coords={"nav_lat": ("nav_lat", [-45.0, 45.0], {"units": "Degrees_North"}),
                            "nav_lon": ("nav_lon", [0.0, 180.0], {"units": "DEGREES_EAST"})})
    g = grid_from_file(_write(ds, tmp_path / "case.nc"))
    assert g.dims == ("nav_lat", "nav_lon") and g.lat_deg.tolist() == [-45.0, 45.0]
    ds = xr.Dataset(coords={"j": ("j", [-45.0, 45.0], {"axis": "Y", "units": "degrees"}),
                            "lon": ("lon", [0.0, 180.0], {"units": "degrees"})})
    assert grid_from_file(_write(ds, tmp_path / "axis.nc")).dims == ("j", "lon")


def test_grid_from_file_standard_name_wins_over_units_and_bounds_are_no_axes(tmp_path):
    # CF 1.11 §7.1: a bounds variable is not a coordinate, even with latitude units; a
    # variable with standard_name latitude is taken before one that only has its units.
    c = _as_curvilinear(regular_grid(30))
    ds = xr.Dataset(
        {"lat_c": (("j", "i", "nv"), c.lat_bounds_deg, {"units": "degrees_north"}),
         "lon_c": (("j", "i", "nv"), c.lon_bounds_deg, {"units": "degrees_east"}),
         "edge": (("j", "i"), c.lat_deg, {"units": "degrees_north"})},
        coords={"nav_lat": (("j", "i"), c.lat_deg, {"standard_name": "latitude",
                                                    "units": "degrees_north", "bounds": "lat_c"}),
                "nav_lon": (("j", "i"), c.lon_deg, {"units": "degrees_east",
                                                    "bounds": "lon_c"})},
    )
    g = grid_from_file(_write(ds, tmp_path / "c.nc"))
    assert g.is_curvilinear and g.lat_bounds_deg is not None and g.lon_bounds_deg is not None


def test_grid_from_file_ignores_rotated_pole_degrees_and_reads_zonal(tmp_path):
    ds = xr.Dataset(
        coords={
            "rlat": ("rlat", [0.0, 1.0], {"standard_name": "grid_latitude", "units": "degrees"}),
            "lat": ("lat", [-30.0, 30.0], {"units": "degrees_north"}),
        }
    )
    g = grid_from_file(_write(ds, tmp_path / "z.nc"))
    assert g.is_zonal and g.dims == ("lat",)


def test_grid_from_file_curvilinear_with_corners(tmp_path):
    c = _as_curvilinear(regular_grid(30))
    ds = xr.Dataset(
        {
            "lat_c": (("j", "i", "nv"), c.lat_bounds_deg),
            "lon_c": (("j", "i", "nv"), c.lon_bounds_deg),
            "sst": (("j", "i"), np.zeros(c.shape), {"coordinates": "nav_lat nav_lon"}),
        },
        coords={
            "nav_lat": (
                ("j", "i"),
                c.lat_deg,
                {"standard_name": "latitude", "units": "degrees_north", "bounds": "lat_c"},
            ),
            "nav_lon": (
                ("j", "i"),
                c.lon_deg,
                {"standard_name": "longitude", "units": "degrees_east", "bounds": "lon_c"},
            ),
        },
    )
    g = grid_from_file(_write(ds, tmp_path / "c.nc"))
    assert g.is_curvilinear and g.dims == ("j", "i")
    np.testing.assert_allclose(
        g.cell_area_weights(), regular_grid(30).cell_area_weights(), rtol=1e-12
    )


def test_grid_from_file_errors(tmp_path):
    with pytest.raises(InputFileError, match=r"grid file .*missing.nc does not exist"):
        grid_from_file(tmp_path / "missing.nc")
    (tmp_path / "junk.nc").write_bytes(b"not a netcdf file")
    with pytest.raises(InputFileError, match=r"junk.nc is not a readable NetCDF file"):
        grid_from_file(tmp_path / "junk.nc")
    nolat = _write(xr.Dataset({"a": ("x", [1.0, 2.0])}), tmp_path / "nolat.nc")
    with pytest.raises(
        GridError,
        match=r"nolat.nc: no latitude variable \(expected standard_name 'latitude' or units "
        r"'degrees_north'\); name it with lat_name",
    ):
        grid_from_file(nolat)
    two = xr.Dataset(
        {
            "lat2": (("b",), [1.0], {"units": "degrees_north"}),
            "lat3": (("c",), [2.0], {"units": "degrees_north"}),
        }
    )
    path = _write(two, tmp_path / "two.nc")
    with pytest.raises(
        GridError,
        match=r"several latitude variables \(lat2, lat3\); choose one "
        r"with lat_name",
    ):
        grid_from_file(path)
    assert grid_from_file(path, lat_name="lat3").lat_deg.tolist() == [2.0]
    with pytest.raises(GridError, match=r"no variable 'nope' \(lat_name\)"):
        grid_from_file(path, lat_name="nope")
    # With one coordinate variable among the candidates, the coordinate is taken.
    both = two.assign_coords(lat=("lat", [5.0], {"units": "degrees_north"}))
    assert grid_from_file(_write(both, tmp_path / "both.nc")).lat_deg.tolist() == [5.0]
    bad = xr.Dataset(coords={"lat": ("lat", [0.0, 95.0], {"units": "degrees_north"})})
    with pytest.raises(GridError, match=r"^grid file .*bad.nc: latitude 95 is beyond ±90"):
        grid_from_file(_write(bad, tmp_path / "bad.nc"))
