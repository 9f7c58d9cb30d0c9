"""The change report: what the paleo geography changed on the model grid, as data and text.

:func:`change_report` returns a JSON-ready dictionary; :func:`report_text` renders it
for people. Every figure is computed on the model grid, as the model will see it
(after the mask rules), except the ``fine`` fractions, which come from the input field.
"""

from __future__ import annotations

import numpy as np
import scipy.ndimage as ndi

from bcgen.geography.constants import ICE_DENSITY_KG_M3, SEAWATER_DENSITY_KG_M3
from bcgen.geography.fractions import LAND_THRESHOLD
from bcgen.geography.pipeline import Geography
from bcgen.geography.salinity import implied_salinity_change


def _weighted(x, area) -> float:
    return float(np.sum(x * area) / np.sum(area))


def _groups(changed: np.ndarray, geo: Geography) -> list[dict]:
    """List the connected groups of present-day ocean that are no longer ocean, with their fate."""
    labels, n = ndi.label(changed)
    lat_c, lon_c = geo.grid.lat_deg, geo.grid.lon_deg
    area = geo.area_m2
    out = []
    for k in range(1, n + 1):
        cells = labels == k
        i, j = np.nonzero(cells)
        a = area[cells]
        dry = int(np.sum(geo.relief_paleo_m[cells] >= 0))
        cut_off = int(np.sum(cells & (geo.relief_paleo_m < 0) & (geo.paleo.bodies > 1)))
        fate = "dry" if dry == cells.sum() else (
            f"cut off from the world ocean, kept as a lake ({cut_off} cells)"
            if cut_off and geo.settings.basins == "lake"
            else "cut off from the world ocean, made land" if cut_off
            else "filled by the cleanup (inlet or shallow)")
        if dry and dry < cells.sum():
            fate = f"{dry} cells dry, rest " + fate
        ang = np.deg2rad(lon_c[j])
        lon = float(np.rad2deg(np.arctan2(np.sum(a * np.sin(ang)), np.sum(a * np.cos(ang))))
                    % 360.0)
        out.append({"cells": int(cells.sum()), "area_km2": round(float(a.sum()) / 1e6, 1),
                    "centre_lat_deg": round(float(np.sum(a * lat_c[i]) / a.sum()), 2),
                    "centre_lon_deg": round(lon, 2),
                    "present_max_depth_m": round(float(np.nanmax(geo.present.depth_m[cells])), 1),
                    "fate": fate})
    out.sort(key=lambda g: -g["area_km2"])
    return out


def change_report(geo: Geography, *, mean_salinity: float | None = None,
                  salinity_source: str = "") -> dict:
    """All figures of the change report as a JSON-ready dictionary.

    Parameters
    ----------
    geo : Geography
    mean_salinity : float, optional
        Present global-mean salinity (given, or from
        :func:`bcgen.geography.salinity.mean_salinity_from_file`).
    salinity_source : str
        Where ``mean_salinity`` came from, for the report.
    """
    a = geo.area_m2
    p0, p1 = geo.present, geo.paleo
    area0, area1 = float(a[p0.ocean].sum()), float(a[p1.ocean].sum())
    vol0 = float(np.nansum(np.where(p0.ocean, p0.depth_m, 0.0) * a))
    vol1 = float(np.nansum(np.where(p1.ocean, p1.depth_m, 0.0) * a))
    to_land = p0.ocean & ~p1.ocean
    to_ocean = ~p0.ocean & p1.ocean
    dsl = geo.inputs.sea_level_change_m
    report = {
        "grid": geo.grid.name,
        "inputs": {k: getattr(geo.inputs, k).source for k in
                   ("present", "reconstruction_epoch", "reconstruction_present",
                    "ice_thickness", "ice_fraction", "land_mask_epoch", "land_mask_present")
                   if getattr(geo.inputs, k) is not None},
        "sea_level_change_m": dsl,
        "rules": {"connectivity": geo.settings.connectivity,
                  "basins_below_sea_level": geo.settings.basins,
                  "min_depth_m": geo.settings.min_depth_m,
                  "shallow_cells": geo.settings.shallow,
                  "binary_mask": f"land where land_area_fraction >= {LAND_THRESHOLD}; the "
                                 "fraction is set to the mask's value where they disagree"},
        "cells": {"ocean_to_land": int(to_land.sum()), "land_to_ocean": int(to_ocean.sum()),
                  "ocean_to_land_area_km2": round(float(a[to_land].sum()) / 1e6, 1),
                  "land_to_ocean_area_km2": round(float(a[to_ocean].sum()) / 1e6, 1)},
        "reconstruction_land_mask": None if geo.inputs.land_mask_epoch is None else {
            "policy": "the reconstruction's change in land fraction (epoch minus 0 ka) added "
                      "to the model's present land fraction decides where its mask changes"
                      if geo.inputs.land_mask_present is not None else
                      "the reconstruction's land fraction at the epoch decides every cell",
            "cells_made_land": geo.mask_cells_made_land,
            "cells_made_ocean": geo.mask_cells_made_ocean},
        "seas_lost": _groups(to_land, geo),
        "water_bodies_cut_off": {
            "present": [b.as_dict() for b in p0.isolated],
            "paleo": [b.as_dict() for b in p1.isolated]},
        "strait_rules": {"present": [e.as_dict() for e in p0.straits],
                         "paleo": [e.as_dict() for e in p1.straits]},
        "cleanup": {"present": p0.log.as_dict(), "paleo": p1.log.as_dict()},
        "land_fraction": {
            "present_fine": _weighted(geo.land_fraction_present_fine, a),
            "present": _weighted(geo.fractions_present.land, a),
            "paleo_fine": _weighted(geo.land_fraction_paleo_fine, a),
            "paleo": _weighted(geo.fractions.land, a),
            "cells_set_to_land": geo.fractions.cells_set_to_land,
            "cells_set_to_ocean": geo.fractions.cells_set_to_ocean},
        "ocean": {"area_present_m2": area0, "area_paleo_m2": area1,
                  "volume_present_m3": vol0, "volume_paleo_m3": vol1,
                  "volume_change_fraction": vol1 / vol0 - 1.0 if vol0 else None},
    }
    if mean_salinity is not None and vol1 > 0:
        report["salinity"] = {
            "present_mean": mean_salinity, "source": salinity_source,
            "implied_change": implied_salinity_change(mean_salinity, vol0, vol1),
            "rule": "salt conserved: S_paleo = S_present * V_present / V_paleo"}
    if geo.ice_thickness_m is not None or geo.fractions.land_ice is not None:
        ice = {"area_m2": float(np.sum((geo.fractions.land_ice if geo.fractions.land_ice
                                        is not None else 0.0) * a)),
               "area_removed_off_land_m2": geo.fractions.ice_area_removed_m2}
        if geo.ice_thickness_m is not None:
            sle = (geo.ice_volume_m3 * ICE_DENSITY_KG_M3 / SEAWATER_DENSITY_KG_M3 / area0
                   if area0 else float("nan"))
            ice.update({"volume_source_m3": geo.ice_volume_source_m3,
                        "volume_m3": geo.ice_volume_m3,
                        "sea_level_equivalent_m": sle,
                        "sea_level_equivalent_rule":
                            f"V * {ICE_DENSITY_KG_M3:g} / {SEAWATER_DENSITY_KG_M3:g} / "
                            "present ocean area",
                        "sea_level_change_used_m": dsl})
        report["land_ice"] = ice
    return report


def _lat(x):
    return f"{abs(x):.1f}{'N' if x >= 0 else 'S'}"


def _lon(x):
    x = (x + 180.0) % 360.0 - 180.0
    return f"{abs(x):.1f}{'E' if x >= 0 else 'W'}"


#: Rows of each list shown in the text report (the JSON report has them all).
TEXT_ROWS = 12


def _rest(items: list, what: str) -> list[str]:
    if len(items) <= TEXT_ROWS:
        return []
    rest = items[TEXT_ROWS:]
    return [f"  ... and {len(rest)} smaller {what} ({sum(i['cells'] for i in rest)} cells, "
            f"{sum(i['area_km2'] for i in rest):,.0f} km2; all listed in the JSON report)"]


def report_text(r: dict) -> str:
    """Render the change report for people (one section per topic)."""
    lines = [f"Geography change report ({r['grid']})",
             f"inputs: {', '.join(f'{k}={v}' for k, v in r['inputs'].items())}",
             f"sea-level change used: {r['sea_level_change_m']:+g} m",
             "rules: " + "; ".join(f"{k}={v}" for k, v in r["rules"].items()), ""]
    c = r["cells"]
    lines += [f"cells ocean -> land: {c['ocean_to_land']} ({c['ocean_to_land_area_km2']:,.0f} km2)",
              f"cells land -> ocean: {c['land_to_ocean']} ({c['land_to_ocean_area_km2']:,.0f} km2)",
              ""]
    m = r.get("reconstruction_land_mask")
    if m:
        lines += [f"reconstruction land mask ({m['policy']}; before the cleanup): "
                  f"{m['cells_made_land']} cells made land, {m['cells_made_ocean']} made ocean",
                  ""]
    lines += ["seas lost (present-day ocean that is no longer ocean), largest first:"]
    if not r["seas_lost"]:
        lines.append("  none")
    for g in r["seas_lost"][:TEXT_ROWS]:
        lines.append(f"  {g['cells']:4d} cells {g['area_km2']:>11,.0f} km2 at "
                     f"{_lat(g['centre_lat_deg'])} {_lon(g['centre_lon_deg'])} "
                     f"(present depth up to {g['present_max_depth_m']:.0f} m): {g['fate']}")
    lines += _rest(r["seas_lost"], "groups")
    for state in ("present", "paleo"):
        lines.append("")
        lines.append(f"water bodies below sea level cut off from the world ocean ({state}, "
                     f"before strait rules; policy: {r['rules']['basins_below_sea_level']}):")
        bodies = r["water_bodies_cut_off"][state]
        if not bodies:
            lines.append("  none")
        for b in bodies[:TEXT_ROWS]:
            lines.append(f"  {b['cells']:4d} cells {b['area_km2']:>11,.0f} km2 at "
                         f"{_lat(b['centre_lat_deg'])} {_lon(b['centre_lon_deg'])}, "
                         f"up to {b['max_depth_m']:.0f} m deep")
        lines += _rest(bodies, "bodies")
    lines += ["", "strait rules:"]
    if not r["strait_rules"]["paleo"]:
        lines.append("  none")
    for e0, e1 in zip(r["strait_rules"]["present"], r["strait_rules"]["paleo"], strict=True):
        for state, e in (("present", e0), ("paleo", e1)):
            lines.append(f"  {e['name']} ({e['action']}, {state}): switched "
                         f"{e['cells_switched']} cells, ocean cells gained "
                         f"{e['ocean_cells_gained']}, lost {e['ocean_cells_lost']} "
                         f"({e['ocean_area_change_km2']:+,.0f} km2)")
    cl = r["cleanup"]["paleo"]
    lines += ["", "cleanup (paleo): " + ", ".join(f"{k.replace('_', ' ')} {v}"
                                                  for k, v in cl.items())]
    lf = r["land_fraction"]
    lines += ["", f"global land fraction: present {lf['present']:.4f} (fine field "
              f"{lf['present_fine']:.4f}), paleo {lf['paleo']:.4f} (fine field "
              f"{lf['paleo_fine']:.4f}); cells set to the mask's value: "
              f"{lf['cells_set_to_land']} to land, {lf['cells_set_to_ocean']} to ocean"]
    o = r["ocean"]
    lines += [f"ocean area: present {o['area_present_m2'] / 1e12:.2f} million km2, paleo "
              f"{o['area_paleo_m2'] / 1e12:.2f} million km2",
              f"ocean volume: present {o['volume_present_m3'] / 1e18:.4f}e18 m3, paleo "
              f"{o['volume_paleo_m3'] / 1e18:.4f}e18 m3 "
              f"({100 * (o['volume_change_fraction'] or 0):+.2f} %)"]
    if "salinity" in r:
        s = r["salinity"]
        lines.append(f"implied global-mean salinity change: {s['implied_change']:+.3f} "
                     f"(present mean {s['present_mean']:.3f}, {s['source']}; {s['rule']})")
    if "land_ice" in r:
        ice = r["land_ice"]
        lines.append(f"land ice: area {ice['area_m2'] / 1e12:.3f} million km2"
                     + (f", removed off land {ice['area_removed_off_land_m2'] / 1e6:,.0f} km2"))
        if "volume_m3" in ice:
            lines.append(f"ice volume {ice['volume_m3'] / 1e15:.4f} million km3 (input "
                         f"{ice['volume_source_m3'] / 1e15:.4f}); sea-level equivalent "
                         f"{ice['sea_level_equivalent_m']:.2f} m "
                         f"({ice['sea_level_equivalent_rule']}) vs sea-level change used "
                         f"{ice['sea_level_change_used_m']:+g} m")
    return "\n".join(lines) + "\n"
