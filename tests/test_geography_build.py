"""The geography section of a spec, the build's geography products and the geography figure.

Uses the bundled invented example ``configs/glacial_demo.yaml`` (its inputs ship in
``configs/glacial_example/``), so it runs without ETOPO5.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
from cli_checks import one_error_line

from bcgen.errors import SpecError
from bcgen.spec import load_spec, parse_spec_text

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
EXAMPLE = CONFIGS / "glacial_demo.yaml"
DOME = CONFIGS / "glacial_example" / "ice_dome.nc"


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    from bcgen import build

    out = tmp_path_factory.mktemp("glacial")
    build(load_spec(EXAMPLE), out)
    return out


def test_example_builds_every_geography_product(built, cf_compliant):
    files = {p.name for p in built.iterdir()}
    assert {"glacial_demo_geography.nc", "glacial_demo_geography_report.txt",
            "glacial_demo_geography_report.json", "glacial_demo_manifest.json"} <= files
    path = built / "glacial_demo_geography.nc"
    cf_compliant(path)
    manifest = json.loads((built / "glacial_demo_manifest.json").read_text())
    assert {f["file"] for f in manifest["files"]} >= {"glacial_demo_geography.nc"}
    with xr.open_dataset(path) as ds:
        ocean = ds.sea_mask.values == 1
        # Ice only on land, and the binary mask follows the stated 0.5 rule.
        assert np.all(ds.sftgif.values <= ds.sftlf.values + 1e-6)
        assert np.array_equal(ds.sftlf.values >= 0.5, ~ocean)
        assert np.all(np.isnan(ds.depth.values[~ocean])) and np.all(ds.depth.values[ocean] >= 10)
        assert np.all(ds.orog.values[ocean] == 0)


def test_example_report_conserves_the_ice_and_states_its_sea_level_equivalent(built):
    report = json.loads((built / "glacial_demo_geography_report.json").read_text())
    # Ice volume of the input computed here independently: thickness times the exact
    # area of each 2-degree cell, R^2 dlon (sin lat2 - sin lat1) (spherical geometry).
    from bcgen.geography.constants import EARTH_RADIUS_M

    with xr.open_dataset(DOME) as ds:
        h = ds.ice_thickness.values.astype(float)
        lat_b = np.deg2rad(ds.lat_bnds.values)
        dlon = np.deg2rad(2.0)
    area = EARTH_RADIUS_M**2 * dlon * (np.sin(lat_b[:, 1]) - np.sin(lat_b[:, 0]))
    volume = float(np.sum(h * area[:, None]))
    ice = report["land_ice"]
    assert ice["volume_m3"] == pytest.approx(volume, rel=1e-6)
    assert ice["sea_level_change_used_m"] == -110.0
    assert ice["sea_level_equivalent_m"] > 0
    text = (built / "glacial_demo_geography_report.txt").read_text()
    assert "sea-level equivalent" in text and "vs sea-level change used -110 m" in text
    # The Red Sea stayed connected through Bab-el-Mandeb at the lowstand (common
    # practice); on 4-degree cells only the example's strait rule keeps it so.
    rule = report["strait_rules"]["paleo"][0]
    assert rule["name"] == "Bab-el-Mandeb" and rule["ocean_cells_gained"] > rule["cells_switched"]
    with xr.open_dataset(built / "glacial_demo_geography.nc") as ds:
        assert ds.sea_mask.sel(lat=20.0, lon=38.0).item() == 1
    assert "implied_change" in report["salinity"]


def test_geography_figure_from_the_built_file(built, run_cli, tmp_path):
    png = tmp_path / "g.png"
    status, out, err = run_cli(["plot", "geography", built / "glacial_demo_geography.nc",
                                "-o", png])
    assert status == 0, err
    assert png.stat().st_size > 10_000
    status, _, err = run_cli(["plot", "geography", EXAMPLE, "-o", tmp_path / "x.png"])
    assert status == 2 and "not a readable NetCDF file" in one_error_line(err)


_SPEC = """\
experiment: {{name: g}}
epoch: 21ka
grid: {grid}
products: [orbit]
geography:
  present: {present}
{extra}"""
_PRESENT = "{file: glacial_example/relief_2deg.nc, variable: relief}"


def _parse(grid="{kind: regular, resolution_deg: 10.0}", present=_PRESENT, extra=""):
    return parse_spec_text(_SPEC.format(grid=grid, present=present, extra=extra), "g.yaml",
                           base_dir=CONFIGS)


@pytest.mark.parametrize("kwargs, message", [
    ({"grid": "{kind: zonal, resolution_deg: 10.0}"},
     r"geography: the geography needs a latitude-longitude grid"),
    ({"present": "{file: glacial_example/relief_2deg.nc, variable: relief, orography: o}"},
     r"geography.present: give either 'variable' \(the relief\) or both"),
    ({"present": "{file: glacial_example/nothing.nc, variable: relief}"},
     r"geography.present.file: relief file .*nothing.nc not found"),
    ({"extra": "  connectivity: diagonal\n"},
     r"geography.connectivity: unknown connectivity 'diagonal'; expected one of edge, corner"),
    ({"extra": "  straits:\n    - {name: a, action: open, depth_m: 50}\n"},
     r"geography.straits\[0\]: give either a 'path' of points or a 'box'"),
    ({"extra": "  straits:\n    - {name: a, action: open, depth_m: 5, box: {lat_min_deg: 0, "
               "lat_max_deg: 1, lon_min_deg: 0, lon_max_deg: 1}}\n"},
     r"geography.straits\[0\].depth_m: an open strait needs a depth of at least min_depth_m"),
])
def test_geography_section_refusals_name_the_key(kwargs, message):
    with pytest.raises(SpecError, match=message):
        _parse(**kwargs)


def test_orography_and_bathymetry_pair_is_read_as_relief(tmp_path):
    from bcgen.geography.setup import resolve_geography
    from bcgen.grids import regular_grid

    grid = regular_grid(10.0)
    ds = grid.to_dataset()
    land = np.where(np.abs(grid.lat_deg)[:, None] > 60, 1000.0, 0.0) * np.ones(grid.shape)
    ds["oro"] = (grid.dims, land, {"units": "m"})
    ds["bathy"] = (grid.dims, np.where(land > 0, 0.0, 4.0), {"units": "km"})
    ds.to_netcdf(tmp_path / "pair.nc")
    spec = parse_spec_text(_SPEC.format(grid="{kind: regular, resolution_deg: 20.0}",
                                        present="{file: pair.nc, orography: oro, "
                                                "bathymetry: bathy}", extra=""),
                           "g.yaml", base_dir=tmp_path)
    inputs = resolve_geography(spec.geography).inputs
    assert np.array_equal(inputs.present.values, np.where(land > 0, 1000.0, -4000.0))


def test_bad_geography_input_is_one_line_with_exit_2(tmp_path, run_cli):
    from bcgen.grids import regular_grid

    grid = regular_grid(10.0)
    ds = grid.to_dataset()
    ds["relief"] = (grid.dims, np.zeros(grid.shape), {"units": "degC"})
    ds.to_netcdf(tmp_path / "bad.nc")
    spec = tmp_path / "g.yaml"
    spec.write_text(_SPEC.format(grid="{kind: regular, resolution_deg: 20.0}",
                                 present="{file: bad.nc, variable: relief}", extra=""))
    status, _, err = run_cli(["build", spec, "-o", tmp_path / "out"])
    line = one_error_line(err)
    assert status == 2 and "geography.present" in line and "expected a length" in line
    assert not (tmp_path / "out").exists()  # nothing written


def test_sea_level_change_taken_from_the_reconstruction(tmp_path):
    from bcgen.geography.setup import resolve_geography
    from bcgen.grids import regular_grid

    grid = regular_grid(10.0)
    ds = grid.to_dataset()
    for name in ("now", "then"):
        ds[name] = (grid.dims, np.zeros(grid.shape), {"units": "m"})
    ds["dsl"] = ((), -0.12, {"units": "km"})
    ds.to_netcdf(tmp_path / "rec.nc")
    (tmp_path / "relief.nc").write_bytes((CONFIGS / "glacial_example" / "relief_2deg.nc")
                                         .read_bytes())
    rec = ("  reconstruction: {file: rec.nc, epoch_variable: then, present_variable: now, "
           "sea_level_variable: dsl}\n")
    spec = parse_spec_text(_SPEC.format(grid="{kind: regular, resolution_deg: 20.0}",
                                        present="{file: relief.nc, variable: relief}",
                                        extra=rec), "g.yaml", base_dir=tmp_path)
    inputs = resolve_geography(spec.geography).inputs
    assert inputs.sea_level_change_m == pytest.approx(-120.0)
    with pytest.raises(SpecError, match="give either this or geography.sea_level_change_m"):
        parse_spec_text(_SPEC.format(grid="{kind: regular, resolution_deg: 20.0}",
                                     present="{file: relief.nc, variable: relief}",
                                     extra=rec + "  sea_level_change_m: -100\n"),
                        "g.yaml", base_dir=tmp_path)


def test_model_grid_running_north_to_south(tmp_path, cf_compliant):
    from bcgen import build
    from bcgen.grids import regular_grid

    g = regular_grid(10.0)
    ds = g.to_dataset().isel(lat=slice(None, None, -1))
    ds.to_netcdf(tmp_path / "grid.nc")
    (tmp_path / "relief.nc").write_bytes((CONFIGS / "glacial_example" / "relief_2deg.nc")
                                         .read_bytes())
    spec = parse_spec_text(_SPEC.format(grid="{kind: file, path: grid.nc}",
                                        present="{file: relief.nc, variable: relief}",
                                        extra="  sea_level_change_m: -120\n"),
                           "g.yaml", base_dir=tmp_path)
    build(spec, tmp_path / "out")
    path = tmp_path / "out" / "g_geography.nc"
    cf_compliant(path)
    with xr.open_dataset(path) as out:
        assert out.lat.values[0] > out.lat.values[-1]
        # Rows run north to south: the southernmost (Antarctica) is land, the row at
        # 45-55 S is mostly ocean (common practice), and the file equals a south-to-north
        # build turned around.
        assert out.sea_mask.values[-1].sum() == 0 and out.sea_mask.values[-6].mean() > 0.8
    spec2 = parse_spec_text(_SPEC.format(grid="{kind: regular, resolution_deg: 10.0}",
                                         present="{file: relief.nc, variable: relief}",
                                         extra="  sea_level_change_m: -120\n"),
                            "g.yaml", base_dir=tmp_path)
    build(spec2, tmp_path / "out2")
    with xr.open_dataset(path) as a, xr.open_dataset(tmp_path / "out2" / "g_geography.nc") as b:
        for name in ("orog", "sea_mask", "sftlf", "water_body"):
            np.testing.assert_array_equal(a[name].values[::-1], b[name].values)
