"""Geography checks on real present-day relief: ETOPO5 (NOAA NGDC 1988, 5-minute relief).

ETOPO5 comes with the Debian package ``ferret-datasets``; ``.ci/run`` installs it, so in
CI (environment variable ``CI`` set) a missing file fails instead of skipping.

The facts checked are of the trade (common practice): land covers about 29 % of the
Earth; the Caspian lies below sea level (its surface near -28 m) but is no ocean; at
the last glacial maximum lowstand of about -120 m the Bering Strait is closed, the
Persian Gulf, the southern North Sea, the English Channel and Bass Strait are dry, the
Black Sea is cut off, and the Strait of Gibraltar (sill near -280 m) stays open.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
from published_tables import OCEAN_VOLUME_M3

from bcgen.geography.fields import read_field
from bcgen.geography.landsea import MaskSettings, land_sea
from bcgen.geography.mask import ocean_and_basins
from bcgen.geography.pipeline import GeographyInputs, make_geography
from bcgen.geography.report import change_report, report_text
from bcgen.geography.salinity import mean_salinity_from_file
from bcgen.geography.straits import StraitRule
from bcgen.grids import regular_grid

DATA = Path("/usr/share/ferret-vis/data")
ETOPO5 = DATA / "etopo5.cdf"
LEVITUS = DATA / "levitus_climatology.cdf"

#: Sea-level change of the last glacial maximum used by the checks (common practice).
LGM_SEA_LEVEL_M = -120.0
#: A region is "dry" when less than this share of its present-day sea area is still
#: world ocean (a few deep holes may stay wet; common practice).
DRY_SHARE = 0.02
#: Gibraltar, opened through the 1-degree grid by a strait rule (path across the strait).
GIBRALTAR = StraitRule("Gibraltar", "open", path_deg=((36.0, -8.0), (36.0, -3.0)),
                       depth_m=280.0)


def _require(path: Path) -> None:
    if path.is_file():
        return
    if os.environ.get("CI"):
        pytest.fail(f"{path} is missing in CI: .ci/run must apt-get install ferret-datasets")
    pytest.skip(f"{path} not found: install the Debian package ferret-datasets "
                "(README, section 'Paleogeography')")


@pytest.fixture(scope="module")
def etopo5():
    _require(ETOPO5)
    return read_field(ETOPO5, "ROSE")


@pytest.fixture(scope="module")
def fine_oceans(etopo5):
    """World ocean on the 5-minute grid at present sea level and at -120 m."""
    z, area = etopo5.values, etopo5.cell_area_sr
    return (ocean_and_basins(z < 0, area)[0],
            ocean_and_basins(z < LGM_SEA_LEVEL_M, area)[0])


@pytest.fixture(scope="module")
def one_degree(etopo5):
    """The -120 m geography on a 1-degree grid, Gibraltar kept open by a strait rule."""
    return make_geography(GeographyInputs(etopo5, sea_level_change_m=LGM_SEA_LEVEL_M),
                          regular_grid(1.0), MaskSettings(straits=(GIBRALTAR,)))


def _box(field, lat0, lat1, lon0, lon1):
    lat, lon = field.grid.lat_deg, field.grid.lon_deg
    rows = (lat >= lat0) & (lat <= lat1)
    cols = ((lon - lon0) % 360.0) <= ((lon1 - lon0) % 360.0)
    return np.ix_(rows, cols)


def _at(grid, lat, lon):
    return (int(np.argmin(np.abs(grid.lat_deg - lat))),
            int(np.argmin(np.abs((grid.lon_deg - lon + 180.0) % 360.0 - 180.0))))


def test_present_day_land_fraction_is_about_29_percent(etopo5, fine_oceans, one_degree):
    # Land covers about 29 % of the Earth's surface (common practice). Land here is
    # everything that is not the world ocean (lakes and the Caspian count as land).
    area = etopo5.cell_area_sr
    land = 1.0 - float(np.sum(fine_oceans[0] * area) / area.sum())
    assert land == pytest.approx(0.29, abs=0.01)
    # Conservation: the 1-degree area fraction integrates to the 5-minute one (1e-6).
    r = change_report(one_degree)
    assert r["land_fraction"]["present_fine"] == pytest.approx(land, abs=1e-6)


def test_regridding_conserves_relief_and_land_area(etopo5, one_degree):
    # Conservative regridding keeps area integrals (Jones 1999): relief and land area
    # on the 1-degree grid equal those of the 5-minute field to 1e-6.
    z, a_fine = etopo5.values.astype(np.float64), etopo5.cell_area_sr
    a = one_degree.area_m2 / one_degree.area_m2.sum()
    fine_mean = float(np.sum(z * a_fine) / a_fine.sum())
    assert float(np.sum(one_degree.relief_present_m * a)) == pytest.approx(fine_mean, rel=1e-6)
    paleo_fine = float(np.sum(~(z < LGM_SEA_LEVEL_M) * a_fine) / a_fine.sum())
    paleo_grid = float(np.sum(one_degree.land_fraction_paleo_fine * a))
    # The fine land at -120 m also counts cut-off basins as land, so it is at least the
    # raw share of cells above -120 m; both sides are computed the same way here:
    ocean = ocean_and_basins(z < LGM_SEA_LEVEL_M, a_fine)[0]
    assert paleo_grid == pytest.approx(1 - float(np.sum(ocean * a_fine) / a_fine.sum()),
                                       abs=1e-6)
    assert paleo_grid >= paleo_fine - 1e-6


def test_caspian_is_not_ocean(etopo5, fine_oceans, one_degree):
    # The Caspian lies below sea level but is no ocean (common practice).
    i, j = _at(etopo5.grid, 42.0, 50.5)
    assert etopo5.values[i, j] < 0 and not fine_oceans[0][i, j]
    i, j = _at(one_degree.grid, 42.0, 50.5)
    assert one_degree.relief_present_m[i, j] < 0 and not one_degree.present.ocean[i, j]
    assert one_degree.present.bodies[i, j] >= 2  # kept as a lake (the default policy)


@pytest.mark.parametrize("name, box", [
    ("Persian Gulf", (24.5, 29.5, 48.5, 54.5)),
    ("southern North Sea", (51.0, 55.0, 1.0, 7.0)),
    ("English Channel", (49.3, 50.8, -3.5, 1.5)),
    ("Bass Strait", (-40.5, -38.8, 144.5, 148.0)),
    ("Bering Strait", (65.3, 66.3, -172.0, -164.0)),
])
def test_lgm_shelves_and_straits_run_dry(etopo5, fine_oceans, name, box):
    # At -120 m these shelf seas are dry land (common practice; Bering: the land bridge
    # to Alaska; Bass Strait: Tasmania joins Australia).
    s = _box(etopo5, *box)
    a = np.broadcast_to(etopo5.cell_area_sr, etopo5.values.shape)[s]
    sea_today = fine_oceans[0][s]
    assert sea_today.sum() > 100, f"{name}: the box must hold today's sea"
    still = np.sum(a * (fine_oceans[1][s] & sea_today)) / np.sum(a * sea_today)
    assert still < DRY_SHARE, name


def test_lgm_black_sea_cut_off_and_gibraltar_open_at_5_minutes(etopo5, fine_oceans):
    i, j = _at(etopo5.grid, 43.0, 34.0)          # central Black Sea
    assert etopo5.values[i, j] < LGM_SEA_LEVEL_M and not fine_oceans[1][i, j]
    i, j = _at(etopo5.grid, 35.0, 18.0)          # Ionian Sea
    assert fine_oceans[1][i, j]                  # connected through Gibraltar


def test_one_degree_average_cuts_off_the_mediterranean_and_a_strait_rule_reopens_it(
        etopo5, one_degree):
    geo = one_degree
    med = _at(geo.grid, 35.5, 18.5)
    lat_e = np.append(geo.grid.lat_bounds_deg[:, 0], 90.0)
    lon_e = np.append(geo.grid.lon_bounds_deg[:, 0], 360.0)
    plain = land_sea(geo.relief_present_m, geo.area_m2, lat_e, lon_e)
    assert not plain.ocean[med]                  # plain 1-degree averaging, today
    report = change_report(geo)
    # The report says so: a body of at least 2 million km2 in the Mediterranean
    # (about 2.5 million km2, from memory) cut off today before the strait rules.
    cut = [b for b in report["water_bodies_cut_off"]["present"]
           if 30 < b["centre_lat_deg"] < 46 and (b["centre_lon_deg"] < 40
                                                 or b["centre_lon_deg"] > 354)]
    assert cut and max(b["area_km2"] for b in cut) > 2.0e6
    assert geo.present.ocean[med] and geo.paleo.ocean[med]
    for state in ("present", "paleo"):
        rule = report["strait_rules"][state][0]
        assert rule["name"] == "Gibraltar" and rule["ocean_area_change_km2"] > 2.0e6
    assert "Gibraltar (open, paleo)" in report_text(report)


def test_lgm_report_on_one_degree(etopo5, one_degree):
    geo = one_degree
    salinity = mean_salinity_from_file(LEVITUS, "SALT") if LEVITUS.is_file() else 34.7
    report = change_report(geo, mean_salinity=salinity, salinity_source="Levitus 1982")
    # Every ocean cell of the result is edge-connected to the world ocean, and the
    # cleanup reached a fixed point.
    from bcgen.geography.mask import label_water

    assert label_water(geo.paleo.ocean, "edge")[1] == 1
    assert report["cleanup"]["paleo"]["passes_to_fixed_point"] >= 1
    # Bering closed on the model grid: no ocean cell in the strait's latitude band.
    i, j = _at(geo.grid, 65.5, -168.5)
    assert not geo.paleo.ocean[i, j - 2:j + 3].any()
    # Today's ocean holds about 1.33e18 m3 (Charette & Smith 2010, "The volume of
    # Earth's ocean", Oceanography 23(2), 112-114: 1.332e9 km3); the 1-degree model ocean,
    # without the seas it cuts off, within 2 %.
    o = report["ocean"]
    assert o["volume_present_m3"] == pytest.approx(OCEAN_VOLUME_M3, rel=0.02)
    # 120 m over about 3.6e14 m2 of ocean is about 3.3 % of the volume (common practice);
    # seas cut off at the lowstand add to the loss.
    assert -0.045 < o["volume_change_fraction"] < -0.025
    # Mean ocean salinity today is about 34.7 (from memory); the Levitus 1982 mean
    # must agree, and the implied LGM rise is about 1 (common practice: 3 % less water).
    assert salinity == pytest.approx(34.7, abs=0.1)
    assert 0.8 < report["salinity"]["implied_change"] < 1.3
    assert report["cells"]["ocean_to_land"] > 0 and report["cells"]["land_to_ocean"] == 0


def test_build_over_etopo5_writes_every_product(etopo5, tmp_path, run_cli, cf_compliant):
    _require(LEVITUS)
    spec = tmp_path / "lgm_geo.yaml"
    spec.write_text(f"""\
experiment: {{name: lgm_geo}}
epoch: 21ka
grid: {{kind: regular, resolution_deg: 2.0}}
products: [orbit]
geography:
  present: {{file: {ETOPO5}, variable: ROSE}}
  sea_level_change_m: -120
  salinity: {{file: {LEVITUS}, variable: SALT}}
  straits:
    - name: Gibraltar
      action: open
      path: [{{lat_deg: 36.0, lon_deg: -8.0}}, {{lat_deg: 36.0, lon_deg: -3.0}}]
      depth_m: 280
""")
    status, out, err = run_cli(["build", spec, "-o", tmp_path / "out"])
    assert status == 0, err
    names = {p.name for p in (tmp_path / "out").iterdir()}
    assert {"lgm_geo_geography.nc", "lgm_geo_geography_report.txt",
            "lgm_geo_geography_report.json"} <= names
    cf_compliant(tmp_path / "out" / "lgm_geo_geography.nc")
    report = json.loads((tmp_path / "out" / "lgm_geo_geography_report.json").read_text())
    assert report["salinity"]["source"].startswith("volume mean of levitus_climatology.cdf")
