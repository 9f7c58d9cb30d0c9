"""A reconstruction's own land mask in the geography section (synthetic fields only)."""

from __future__ import annotations

import numpy as np
import pytest
from cli_checks import one_error_line

from bcgen.spec import parse_spec_text

_SPEC = """\
experiment: {{name: g}}
epoch: 21ka
grid: {{kind: regular, resolution_deg: 10.0}}
products: [orbit]
geography:
  present: {{file: relief.nc, variable: relief}}
  sea_level_change_m: -120
  reconstruction: {{file: rec.nc, epoch_variable: z1, present_variable: z0{masks}}}
"""
# A made-up island: 20 x 20 degrees of deep present-day ocean that the reconstruction's
# mask makes land at the epoch (invented demo geometry).
_ISLAND = (slice(0, 20), slice(100, 120))


def _write_inputs(tmp_path, mask_epoch, mask_present=None):
    from bcgen.grids import regular_grid

    fine = regular_grid(2.0)
    ds = fine.to_dataset()
    lat, lon = np.meshgrid(fine.lat_deg, fine.lon_deg, indexing="ij")
    relief = np.where((np.abs(lat) < 40) & (lon > 200) & (lon < 260), 500.0, -3000.0)
    ds["relief"] = (fine.dims, relief, {"units": "m"})
    ds.to_netcdf(tmp_path / "relief.nc")
    rec = regular_grid(5.0)
    ds = rec.to_dataset()
    for name in ("z0", "z1"):
        ds[name] = (rec.dims, np.zeros(rec.shape), {"units": "m"})
    ds["land1"] = (rec.dims, mask_epoch(rec), {"units": "1"})
    if mask_present is not None:
        ds["land0"] = (rec.dims, mask_present(rec), {"units": "1"})
    ds.to_netcdf(tmp_path / "rec.nc")


def _island(grid):
    lat, lon = np.meshgrid(grid.lat_deg, grid.lon_deg, indexing="ij")
    return ((lat > _ISLAND[0].start) & (lat < _ISLAND[0].stop) & (lon > _ISLAND[1].start)
            & (lon < _ISLAND[1].stop)).astype(float)


def _island_and_continent(grid):
    lat, lon = np.meshgrid(grid.lat_deg, grid.lon_deg, indexing="ij")
    continent = (np.abs(lat) < 40) & (lon > 200) & (lon < 260)
    return np.maximum(_island(grid), continent)


def _geography(tmp_path, masks):
    from bcgen.geography import change_report, make_geography, report_text
    from bcgen.geography.setup import resolve_geography
    from bcgen.grids import regular_grid

    spec = parse_spec_text(_SPEC.format(masks=masks), "g.yaml", base_dir=tmp_path)
    inputs = resolve_geography(spec.geography).inputs
    geo = make_geography(inputs, regular_grid(10.0))
    report = change_report(geo)
    return geo, report, report_text(report)


@pytest.mark.parametrize("with_present", [False, True])
def test_reconstruction_mask_adds_a_made_up_island(tmp_path, with_present):
    # With the 0 ka mask, only its change (the island) counts; alone, the epoch mask must
    # also hold the relief's continent, or the continent would be made ocean.
    if with_present:
        _write_inputs(tmp_path, _island_and_continent,
                      lambda g: _island_and_continent(g) - _island(g))
    else:
        _write_inputs(tmp_path, _island_and_continent)
    masks = ", epoch_land_variable: land1" + (", present_land_variable: land0"
                                               if with_present else "")
    geo, report, text = _geography(tmp_path, masks)
    island = _island(geo.grid) > 0
    assert island.sum() == 4  # 2 x 2 cells of 10 degrees
    # Deep ocean by the relief (-3000 m + 120 m), land by the reconstruction's mask.
    assert np.all(geo.relief_paleo_m[island] < -2000)
    assert not geo.paleo.ocean[island].any() and geo.paleo.ocean[~island].sum() > 0
    assert np.all(geo.fractions.land[island] >= 0.5)
    assert geo.present.ocean[island].all()  # the present state is untouched
    m = report["reconstruction_land_mask"]
    assert (m["cells_made_land"], m["cells_made_ocean"]) == (4, 0)
    assert "reconstruction land mask" in text and "4 cells made land" in text


def test_epoch_mask_alone_decides_where_it_disagrees_with_the_relief(tmp_path):
    # An all-sea epoch mask turns the relief's continent into ocean: every land cell of
    # the relief-based decision is switched and counted.
    _write_inputs(tmp_path, lambda g: np.zeros(g.shape))
    geo, report, _ = _geography(tmp_path, ", epoch_land_variable: land1")
    assert geo.paleo.ocean.all()
    assert report["reconstruction_land_mask"]["cells_made_ocean"] == int(
        (geo.relief_paleo_m >= 0).sum()) > 0


def test_without_the_mask_the_island_stays_ocean(tmp_path):
    _write_inputs(tmp_path, _island)
    geo, report, _ = _geography(tmp_path, "")
    assert geo.paleo.ocean[_island(geo.grid) > 0].all()
    assert report["reconstruction_land_mask"] is None


def test_regridded_mask_fraction_is_conserved():
    from bcgen.geography.regrid import ConservativeRegridder
    from bcgen.grids import regular_grid

    src, dst = regular_grid(3.0), regular_grid(10.0)  # cells overlap partly
    frac = np.random.default_rng(1).random(src.shape)

    def area(g):  # exact cell area on the unit sphere (spherical geometry)
        lat = np.deg2rad(g.lat_bounds_deg)
        lon = np.deg2rad(g.lon_bounds_deg)
        return (np.abs(np.sin(lat[:, 1]) - np.sin(lat[:, 0]))[:, None]
                * np.abs(lon[:, 1] - lon[:, 0])[None, :])

    out = ConservativeRegridder.from_grids(src, dst).mean(frac)
    a_src, a_dst = area(src), area(dst)
    assert np.sum(out * a_dst) / a_dst.sum() == pytest.approx(
        np.sum(frac * a_src) / a_src.sum(), abs=1e-6)
    assert out.min() >= 0 and out.max() <= 1


def test_bad_mask_value_is_one_line_with_exit_2(tmp_path, run_cli):
    _write_inputs(tmp_path, lambda g: 2.0 * _island(g))
    spec = tmp_path / "g.yaml"
    spec.write_text(_SPEC.format(masks=", epoch_land_variable: land1"))
    status, _, err = run_cli(["build", spec, "-o", tmp_path / "out"])
    line = one_error_line(err)
    assert status == 2 and "rec.nc" in line and "'land1'" in line and "0 to 1" in line
    assert not (tmp_path / "out").exists()
