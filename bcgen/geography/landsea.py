"""The land–sea mask of one state (present or paleo) on the model grid, with strait rules.

:func:`land_sea` takes the cell-mean relief above sea level and returns the cleaned
ocean (:mod:`bcgen.geography.cleanup`), its depths, the water-body labels and what each
strait rule changed. Strait rules act first: ``open`` cells become water at least the
rule's depth deep and are protected from the cleanup; ``close`` cells become land.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bcgen.geography.cleanup import CleanupLog, clean_ocean
from bcgen.geography.mask import LAND_LABEL, WORLD_OCEAN_LABEL, ocean_and_basins
from bcgen.geography.straits import StraitRule, rule_cells


@dataclass(frozen=True)
class MaskSettings:
    """How the mask is made (each default is stated in the spec reference).

    Attributes
    ----------
    connectivity : {"edge", "corner"}
        Flood-fill rule; ``edge`` by default, since an ocean model needs cells joined
        by faces for flow (common practice).
    basins : {"lake", "land"}
        Basins below sea level not connected to the world ocean.
    min_depth_m : float
        Shallowest ocean cell, m (default 10 m; common practice for ocean models).
    shallow : {"deepen", "land"}
        What becomes of shallower ocean cells.
    straits : tuple of StraitRule
    """

    connectivity: str = "edge"
    basins: str = "lake"
    min_depth_m: float = 10.0
    shallow: str = "deepen"
    straits: tuple[StraitRule, ...] = ()


@dataclass
class StraitEffect:
    """What one strait rule changed in one state."""

    name: str
    action: str
    cells: list = field(default_factory=list)  # (lat, lon) of cells the rule switched
    ocean_cells_gained: int = 0   # open: ocean cells that are ocean only thanks to the rule
    ocean_cells_lost: int = 0     # close: ocean cells cut off or filled by the rule
    ocean_area_change_m2: float = 0.0

    def as_dict(self) -> dict:
        """Return the effect as a JSON-ready dictionary."""
        return {"name": self.name, "action": self.action, "cells_switched": len(self.cells),
                "cells_lat_lon_deg": [[round(a, 3), round(b, 3)] for a, b in self.cells],
                "ocean_cells_gained": self.ocean_cells_gained,
                "ocean_cells_lost": self.ocean_cells_lost,
                "ocean_area_change_km2": round(self.ocean_area_change_m2 / 1e6, 1)}


@dataclass
class WaterBody:
    """A body of water below sea level that is not part of the world ocean."""

    label: int
    cells: int
    area_m2: float
    lat_deg: float
    lon_deg: float
    max_depth_m: float

    def as_dict(self) -> dict:
        """Return the body as a JSON-ready dictionary."""
        return {"label": self.label, "cells": self.cells, "area_km2": round(self.area_m2 / 1e6, 1),
                "centre_lat_deg": round(self.lat_deg, 2), "centre_lon_deg": round(self.lon_deg, 2),
                "max_depth_m": round(self.max_depth_m, 1)}


@dataclass
class LandSea:
    """The mask of one state on the model grid."""

    ocean: np.ndarray
    depth_m: np.ndarray
    bodies: np.ndarray           # 0 land, 1 world ocean, 2.. lakes (policy "lake")
    isolated: list               # water bodies cut off before any strait rule
    straits: list                # StraitEffect per rule
    log: CleanupLog


def _centres(edges):
    return 0.5 * (edges[:-1] + edges[1:])


def land_sea(relief_m: np.ndarray, area_m2: np.ndarray, lat_edges: np.ndarray,
             lon_edges: np.ndarray, settings: MaskSettings | None = None, *,
             force_land: np.ndarray | None = None,
             force_ocean: np.ndarray | None = None) -> LandSea:
    """Ocean mask, depths and water bodies from the cell-mean relief above sea level.

    Parameters
    ----------
    relief_m : numpy.ndarray
        (nlat, nlon) mean height above the (new) sea level, m; negative under water.
    area_m2 : numpy.ndarray
        Cell areas.
    lat_edges, lon_edges : numpy.ndarray
        Cell edges in degrees (for strait rules and the report).
    settings : MaskSettings
    force_land, force_ocean : numpy.ndarray of bool, optional
        Cells whose land/sea decision is set before the strait rules and the cleanup
        (a reconstruction's own land mask, :mod:`bcgen.geography.pipeline`); a forced
        ocean cell standing above sea level starts at depth 0 and meets the minimum-depth
        rule like any shallow cell.
    """
    settings = settings or MaskSettings()
    lat_c, lon_c = _centres(lat_edges), _centres(lon_edges)
    water = relief_m < 0
    if force_ocean is not None:
        water |= force_ocean
    if force_land is not None:
        water &= ~force_land
    depth = np.where(water, np.maximum(-relief_m, 0.0), 0.0)
    _, raw_bodies = ocean_and_basins(water, area_m2, settings.connectivity)
    isolated = _bodies(raw_bodies, area_m2, depth, lat_c, lon_c)

    rule_masks = [(r, rule_cells(r, lat_edges, lon_edges)) for r in settings.straits]

    def run(skip=None):
        w, d = water.copy(), depth.copy()
        keep = np.zeros(water.shape, bool)
        for rule, cells in rule_masks:
            if rule is skip:
                continue
            if rule.action == "open":
                w |= cells
                d[cells] = np.maximum(d[cells], rule.depth_m)
                keep |= cells
            else:
                w &= ~cells
                keep &= ~cells
        return clean_ocean(w, d, area_m2, connectivity=settings.connectivity,
                           min_depth_m=settings.min_depth_m, shallow=settings.shallow,
                           keep_ocean=keep)

    ocean, depth_out, log = run()
    effects = []
    for rule, cells in rule_masks:
        without, _, _ = run(skip=rule)
        switched = cells & (~water if rule.action == "open" else water)
        gained = ocean & ~without
        lost = without & ~ocean
        effects.append(StraitEffect(
            rule.name, rule.action,
            [(float(lat_c[i]), float(lon_c[j]))
             for i, j in zip(*np.nonzero(switched), strict=True)],
            int(gained.sum()), int(lost.sum()),
            float(area_m2[gained].sum() - area_m2[lost].sum())))
    bodies = np.where(ocean, WORLD_OCEAN_LABEL, LAND_LABEL).astype(np.int32)
    if settings.basins == "lake":
        lakes = (raw_bodies > WORLD_OCEAN_LABEL) & ~ocean
        if lakes.any():
            _, renumber = np.unique(raw_bodies[lakes], return_inverse=True)
            bodies[lakes] = renumber.ravel() + WORLD_OCEAN_LABEL + 1
    depth_out = np.where(ocean, depth_out, np.nan)
    return LandSea(ocean, depth_out, bodies, isolated, effects, log)


def _bodies(labels, area, depth, lat_c, lon_c) -> list:
    out = []
    for label in range(WORLD_OCEAN_LABEL + 1, int(labels.max()) + 1):
        cells = labels == label
        a = area[cells]
        i, j = np.nonzero(cells)
        # Mean position on the circle for longitude (a body may straddle the seam).
        ang = np.deg2rad(lon_c[j])
        lon = np.rad2deg(np.arctan2(np.sum(a * np.sin(ang)), np.sum(a * np.cos(ang)))) % 360.0
        out.append(WaterBody(label, int(cells.sum()), float(a.sum()),
                             float(np.sum(a * lat_c[i]) / a.sum()), float(lon),
                             float(depth[cells].max())))
    return out
