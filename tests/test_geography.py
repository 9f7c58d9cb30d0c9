"""Geography core on synthetic fields: regridding, masks, cleanup, straits, fractions, report.

Checks against analytic results (named beside each) and CF through the compliance
checker; the checks on real relief are in ``test_geography_etopo5.py``.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from bcgen.errors import InputFileError
from bcgen.geography.cleanup import clean_ocean, ocean_edge_neighbours
from bcgen.geography.fields import LatLonField, read_field
from bcgen.geography.fractions import LAND_THRESHOLD, consistent_fractions
from bcgen.geography.landsea import MaskSettings, land_sea
from bcgen.geography.mask import label_water, ocean_and_basins
from bcgen.geography.pipeline import GeographyInputs, make_geography
from bcgen.geography.products import encoding, geography_dataset
from bcgen.geography.regrid import ConservativeRegridder
from bcgen.geography.report import change_report, report_text
from bcgen.geography.salinity import implied_salinity_change
from bcgen.geography.straits import StraitRule, rule_cells
from bcgen.grids import gaussian_grid, regular_grid

#: Round-off tolerance of area integrals (float64 sums of ~1e5 terms).
ROUND_OFF = 1e-10


def _sphere_fraction(values, area):
    return float(np.sum(values * area) / np.sum(area))


@pytest.mark.parametrize("target", [regular_grid(3.0), regular_grid((2.0, 5.0)),
                                    gaussian_grid(32)], ids=["3deg", "2x5deg", "T21"])
def test_regridding_conserves_area_integrals(target):
    # Analytic property of first-order conservative remapping (Jones 1999, eq. 3):
    # the area integral of the target field equals that of the source field.
    src = regular_grid(0.5)
    x = np.random.default_rng(1).normal(size=src.shape)
    r = ConservativeRegridder.from_grids(src, target)
    y = r.mean(x)
    assert np.sum(y * r.dst_area_sr) == pytest.approx(np.sum(x * r.src_area_sr),
                                                      rel=ROUND_OFF, abs=ROUND_OFF)
    flags = x > 0.3
    f = r.fraction(flags)
    assert _sphere_fraction(f, r.dst_area_sr) == pytest.approx(
        _sphere_fraction(flags, r.src_area_sr), abs=1e-12)


def test_regridding_gives_exact_cell_means_of_sin_latitude():
    # Analytic: the area mean of sin(lat) over a cell between latitudes a and b is
    # (sin a + sin b) / 2 (its integral over d(sin lat) is linear). Source cells hold
    # their exact means and target edges fall on source edges, so the target means must
    # be exact too.
    src, dst = regular_grid(1.0), regular_grid((3.0, 5.0))
    s = np.sin(np.deg2rad(src.lat_bounds_deg))
    x = np.repeat(s.mean(axis=1)[:, None], src.shape[1], axis=1)
    y = ConservativeRegridder.from_grids(src, dst).mean(x)
    expected = np.sin(np.deg2rad(dst.lat_bounds_deg)).mean(axis=1)
    np.testing.assert_allclose(y, np.repeat(expected[:, None], dst.shape[1], 1), atol=1e-12)


def test_regridding_across_a_shifted_seam():
    # A source starting at 20.5 E (as ETOPO60 does) and a target starting at 0 E cover
    # the same circle: a field depending on longitude only keeps its integral.
    from bcgen.grids import Grid

    lon = 20.5 + np.arange(360.0)
    src = Grid(np.arange(-89.5, 90), None, lon, None)
    src = Grid(src.lat_deg, np.stack([src.lat_deg - .5, src.lat_deg + .5], 1), lon,
               np.stack([lon - .5, lon + .5], 1))
    x = np.broadcast_to(np.cos(np.deg2rad(lon)) + 2.0, src.shape)
    r = ConservativeRegridder.from_grids(src, regular_grid(4.0))
    assert np.sum(r.mean(x) * r.dst_area_sr) == pytest.approx(np.sum(x * r.src_area_sr),
                                                              rel=ROUND_OFF)


def _dome_field(grid, height_m, lat0_deg):
    """Polar ice cap h = H (sin(lat) - sin(lat0)) / (1 - sin(lat0)) north of lat0.

    Each cell holds its exact area mean (linear in sin(lat)), so the source volume is
    the analytic one: V = pi R^2 H (1 - sin lat0) (integral over d(sin lat) d(lon)).
    """
    s = np.sin(np.deg2rad(grid.lat_bounds_deg))
    s0 = np.sin(np.deg2rad(lat0_deg))
    lo, hi = np.maximum(s[:, 0], s0), np.maximum(s[:, 1], s0)
    # mean over the cell of max(0, sin - s0): integral of (u - s0) from lo to hi / width
    mean = ((hi - s0) ** 2 - (lo - s0) ** 2) / 2 / (s[:, 1] - s[:, 0])
    h = height_m * mean / (1 - s0)
    return np.repeat(h[:, None], grid.shape[1], axis=1)


def test_synthetic_ice_dome_volume_and_sea_level_equivalent():
    from bcgen.geography.constants import EARTH_RADIUS_M, ICE_DENSITY_KG_M3, SEAWATER_DENSITY_KG_M3

    fine = regular_grid(0.5)
    height, lat0 = 3000.0, 60.0
    analytic = np.pi * EARTH_RADIUS_M**2 * height * (1 - np.sin(np.deg2rad(lat0)))
    relief = np.where(np.abs(fine.lat_deg)[:, None] < 50, -4000.0, 500.0) * np.ones(fine.shape)
    relief[:, :240] = 100.0  # a continent from pole to pole
    present = LatLonField(fine, relief, "m", "synthetic")
    ice = LatLonField(fine, _dome_field(fine, height, lat0), "m", "dome")
    geo = make_geography(GeographyInputs(present, ice_thickness=ice), regular_grid(4.0))
    assert geo.ice_volume_source_m3 == pytest.approx(analytic, rel=1e-12)
    assert geo.ice_volume_m3 == pytest.approx(analytic, rel=1e-10)
    # Ice area is conserved too: the cap north of 60 N covers (1 - sin 60)/2 of the sphere
    # (spherical geometry), before any clipping to land.
    frac = ConservativeRegridder.from_grids(fine, regular_grid(4.0)).fraction(ice.values > 0)
    area = regular_grid(4.0).cell_area_weights()
    assert float(np.sum(frac * area)) == pytest.approx((1 - np.sin(np.deg2rad(lat0))) / 2,
                                                       abs=1e-6)
    r = change_report(geo)
    ocean_area = r["ocean"]["area_present_m2"]
    # Sea-level equivalent: ice mass spread over the ocean as sea water (common practice).
    assert r["land_ice"]["sea_level_equivalent_m"] == pytest.approx(
        analytic * ICE_DENSITY_KG_M3 / SEAWATER_DENSITY_KG_M3 / ocean_area, rel=1e-10)
    assert "sea-level equivalent" in report_text(r)


def test_label_water_joins_bodies_across_the_seam_and_respects_connectivity():
    water = np.zeros((6, 8), bool)
    water[2, 0] = water[2, 7] = True          # touch across the seam
    water[4, 2] = water[5, 3] = True          # touch at a corner only
    labels, n = label_water(water, "edge")
    assert labels[2, 0] == labels[2, 7] and labels[4, 2] != labels[5, 3] and n == 3
    labels, n = label_water(water, "corner")
    assert labels[4, 2] == labels[5, 3] and n == 2
    labels, _ = label_water(water, "edge", periodic=False)
    assert labels[2, 0] != labels[2, 7]


@pytest.mark.parametrize("connectivity", ["edge", "corner"])
def test_world_ocean_mask_is_the_largest_body_of_the_full_labelling(connectivity):
    # Two ways to the same set: the fast fine-grid path and the full labelling.
    from bcgen.geography.mask import world_ocean_mask

    grid = regular_grid(2.0)
    water = np.random.default_rng(3).random(grid.shape) < 0.55
    area = grid.cell_area_weights()
    expected, _ = ocean_and_basins(water, area, connectivity)
    assert expected.sum() > 100
    assert np.array_equal(world_ocean_mask(water, area[:, :1], connectivity), expected)


def _basin_world():
    """A 2-degree world: one big ocean, a one-cell inlet, an isolated cell, a closed sea."""
    grid = regular_grid(2.0)
    relief = np.full(grid.shape, 500.0)
    relief[10:80, 0:60] = -3000.0                   # the world ocean
    relief[40, 60:65] = -200.0                      # a one-cell-wide inlet, 5 cells long
    relief[20, 100] = -50.0                         # an isolated cell
    relief[50:60, 120:140] = -1000.0                # a sea not connected
    relief[70, 10] = -5.0                           # a shallow cell inside the ocean
    return grid, relief


def test_cleanup_reaches_a_fixed_point_with_an_edge_connected_ocean():
    grid, relief = _basin_world()
    area = grid.cell_area_weights()
    ocean, depth, log = clean_ocean(relief < 0, -relief, area, min_depth_m=10.0)
    # Common practice for ocean models: one-cell inlets and isolated cells are removed,
    # shallow cells deepened to the minimum depth.
    assert not ocean[40, 60:65].any() and not ocean[20, 100] and not ocean[55, 130]
    assert log.inlets == 5 and depth[70, 10] == 10.0
    again, depth2, log2 = clean_ocean(ocean, depth, area, min_depth_m=10.0)
    assert np.array_equal(again, ocean) and np.array_equal(depth2, depth)
    assert log2.inlets == log2.disconnected == log2.deepened == 0 and log2.passes == 1
    labels, n = label_water(ocean, "edge")
    assert n == 1
    assert np.all(ocean_edge_neighbours(ocean)[ocean] >= 2)


def test_shallow_cells_can_become_land_and_the_fixed_point_still_holds():
    grid, relief = _basin_world()
    area = grid.cell_area_weights()
    ocean, _, log = clean_ocean(relief < 0, -relief, area, min_depth_m=10.0, shallow="land")
    assert not ocean[70, 10] and log.shallow_to_land == 1
    again, _, log2 = clean_ocean(ocean, -relief, area, min_depth_m=10.0, shallow="land")
    assert np.array_equal(again, ocean) and log2.passes == 1


def test_strait_rule_reconnects_a_sea_and_reports_it():
    grid, relief = _basin_world()
    area = grid.cell_area_weights() * 5.1e14
    lat_e = np.append(grid.lat_bounds_deg[:, 0], 90.0)
    lon_e = np.append(grid.lon_bounds_deg[:, 0], 360.0)
    plain = land_sea(relief, area, lat_e, lon_e)
    assert not plain.ocean[55, 130]
    assert any(b.cells == 200 for b in plain.isolated)  # the closed sea is reported
    rule = StraitRule("channel", "open", path_deg=((21.0, 115.0), (11.0, 241.0)),
                      width_cells=2, depth_m=150.0)
    opened = land_sea(relief, area, lat_e, lon_e, MaskSettings(straits=(rule,)))
    assert opened.ocean[55, 130]
    effect = opened.straits[0]
    assert effect.ocean_cells_gained >= 200 and effect.cells
    assert np.nanmin(opened.depth_m[rule_cells(rule, lat_e, lon_e) & opened.ocean]) >= 150.0
    # A dam across the whole ocean at 101 E (2-degree column 50): the 70 dam cells and
    # the 9 x 70 cells east of it (cut off from the larger western part) are lost.
    closed = land_sea(relief, area, lat_e, lon_e, MaskSettings(
        straits=(StraitRule("dam", "close", box_deg=(-80.0, 80.0, 100.5, 101.5)),)))
    assert len(closed.straits[0].cells) == 70
    assert closed.straits[0].ocean_cells_lost == 70 + 9 * 70
    assert not closed.ocean[40, 51:60].any() and closed.ocean[40, 49]


def test_strait_path_has_edge_steps_and_the_requested_width():
    grid = regular_grid(1.0)
    lat_e = np.append(grid.lat_bounds_deg[:, 0], 90.0)
    lon_e = np.append(grid.lon_bounds_deg[:, 0], 360.0)
    cells = rule_cells(StraitRule("diag", "open", path_deg=((0.5, 358.5), (5.5, 3.5))),
                       lat_e, lon_e)
    labels, n = label_water(cells, "edge")
    assert n == 1 and cells[90, 358] and cells[95, 3]  # crosses the seam, edge-connected
    wide = rule_cells(StraitRule("w", "open", path_deg=((10.5, 20.5), (10.5, 30.5)),
                                 width_cells=3), lat_e, lon_e)
    assert wide[:, 25].sum() == 3


def test_fractions_agree_with_the_mask_and_ice_lies_on_land():
    land = np.array([[0.2, 0.7, 0.4, 0.9]])
    ocean = np.array([[True, True, False, False]])
    ice = np.array([[0.5, 0.5, 0.9, 0.3]])
    f = consistent_fractions(land, ocean, np.ones((1, 4)), ice)
    assert np.array_equal(f.land >= LAND_THRESHOLD, ~ocean)
    assert np.all(f.land_ice <= f.land)
    assert f.cells_set_to_land == 1 and f.cells_set_to_ocean == 1


def test_implied_salinity_change_conserves_salt():
    # Salt mass S * V is conserved: 3 % less water raises 35 by 35 * (1/0.97 - 1).
    assert implied_salinity_change(35.0, 1.0, 0.97) == pytest.approx(35.0 * 0.03 / 0.97)


def test_read_field_checks_and_converts_units(tmp_path):

    grid = regular_grid(10.0)
    ds = grid.to_dataset()
    ds["h"] = (grid.dims, np.full(grid.shape, 1.5), {"units": "km"})
    ds["t"] = (grid.dims, np.ones(grid.shape), {"units": "K"})
    ds["flat"] = (("station",), np.ones(3), {"units": "m"})
    path = tmp_path / "in.nc"
    ds.to_netcdf(path)
    f = read_field(path, "h", key="geography.present")
    assert f.units == "m" and np.all(f.values == 1500.0)
    with pytest.raises(InputFileError, match=r"geography.present: .*units 'K'; expected a length"):
        read_field(path, "t", key="geography.present")
    with pytest.raises(InputFileError, match=r"has no variable 'z'; it has flat, h, t"):
        read_field(path, "z")
    with pytest.raises(InputFileError, match=r"'flat' needs one 1-D latitude coordinate"):
        read_field(path, "flat")
    with pytest.raises(InputFileError, match="does not exist"):
        read_field(tmp_path / "nothing.nc", "h")


def test_geography_standard_names_are_in_the_bundled_table():
    # CF standard-name table v93 as bundled with compliance-checker 6.1.
    from compliance_checker.cf.util import StandardNameTable

    from bcgen.cf.attributes import GEOGRAPHY_VARIABLES

    table = StandardNameTable()
    names = {e["standard_name"] for e in GEOGRAPHY_VARIABLES.values() if "standard_name" in e}
    assert names == {"surface_altitude", "sea_floor_depth_below_geoid", "land_area_fraction",
                     "land_ice_area_fraction", "land_ice_thickness", "cell_area",
                     "sea_binary_mask"}
    for name in names:
        assert name in table, name


def test_products_are_cf_compliant_and_the_report_is_json(tmp_path, cf_compliant):
    grid, relief = _basin_world()
    present = LatLonField(grid, relief, "m", "synthetic")
    ice = LatLonField(grid, np.where(relief > 0, 1000.0, 0.0), "m", "ice")
    geo = make_geography(GeographyInputs(present, ice_thickness=ice, sea_level_change_m=-100.0),
                         regular_grid(4.0))
    ds = geography_dataset(geo, attrs={"history": "test"})
    path = tmp_path / "geo.nc"
    ds.to_netcdf(path, encoding=encoding(ds))
    cf_compliant(path)
    names = {ds[v].attrs.get("standard_name") for v in ds.data_vars}
    assert {"surface_altitude", "sea_floor_depth_below_geoid", "land_area_fraction",
            "land_ice_area_fraction", "cell_area", "sea_binary_mask"} <= names
    report = change_report(geo, mean_salinity=34.7, salinity_source="given")
    assert json.loads(json.dumps(report))["sea_level_change_m"] == -100.0
    # Lowering the sea level can only shrink the ocean (no land became ocean here).
    assert report["cells"]["land_to_ocean"] == 0
    assert report["ocean"]["volume_paleo_m3"] < report["ocean"]["volume_present_m3"]
    assert report["salinity"]["implied_change"] > 0
