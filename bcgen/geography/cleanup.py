"""Cleaning an ocean mask until nothing changes: connectivity, one-cell inlets, minimum depth.

The rules, applied in turn and repeated until a pass changes nothing (a fixed point,
so that fixing one cell cannot leave another behind):

1. only the world ocean stays ocean (:func:`bcgen.geography.mask.ocean_and_basins`);
2. an ocean cell with at most one ocean neighbour across its edges (an isolated
   cell or the head of a one-cell inlet) becomes land: an ocean model cannot move
   water through it (common practice);
3. an ocean cell shallower than ``min_depth_m`` is deepened to it or made land
   (``shallow="deepen"`` or ``"land"``).

Cells listed in ``keep_ocean`` (carved by a strait rule) are never removed; cells in
``keep_land`` never become ocean.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bcgen.geography.mask import Connectivity, ocean_and_basins
from bcgen.geography.options import SHALLOW_POLICIES


@dataclass
class CleanupLog:
    """What the cleanup changed: cell counts per rule and the number of passes."""

    disconnected: int = 0
    inlets: int = 0
    deepened: int = 0
    shallow_to_land: int = 0
    passes: int = 0
    basins: list = field(default_factory=list)

    def as_dict(self) -> dict:
        """Return the counts as a JSON-ready dictionary."""
        return {"disconnected_cells_removed": self.disconnected,
                "inlet_or_isolated_cells_removed": self.inlets,
                "cells_deepened_to_min_depth": self.deepened,
                "shallow_cells_made_land": self.shallow_to_land,
                "passes_to_fixed_point": self.passes}


def ocean_edge_neighbours(ocean: np.ndarray, periodic: bool = True) -> np.ndarray:
    """Count the ocean cells across the four edges of each cell (longitude periodic)."""
    o = ocean.astype(np.int8)
    count = np.zeros(o.shape, dtype=np.int8)
    count[1:] += o[:-1]
    count[:-1] += o[1:]
    if periodic:
        count += np.roll(o, 1, axis=1) + np.roll(o, -1, axis=1)
    else:
        count[:, 1:] += o[:, :-1]
        count[:, :-1] += o[:, 1:]
    return count


def clean_ocean(water: np.ndarray, depth_m: np.ndarray, area: np.ndarray, *,
                connectivity: Connectivity = "edge", min_depth_m: float = 0.0,
                shallow: str = "deepen", keep_ocean: np.ndarray | None = None,
                max_passes: int = 10_000):
    """Clean a water mask into an ocean mask at a fixed point.

    Parameters
    ----------
    water : numpy.ndarray of bool
        Cells below sea level (and cells carved open by strait rules).
    depth_m : numpy.ndarray
        Depth below sea level, m (positive in the water).
    area : numpy.ndarray
        Cell areas (any unit), to find the largest body.
    connectivity : {"edge", "corner"}
        Rule of the flood fill.
    min_depth_m : float
        Shallowest ocean allowed.
    shallow : {"deepen", "land"}
        What becomes of ocean cells shallower than ``min_depth_m``.
    keep_ocean : numpy.ndarray of bool, optional
        Cells that stay ocean whatever the rules say (strait rules).

    Returns
    -------
    ocean : numpy.ndarray of bool
    depth_m : numpy.ndarray
        Depths with deepened cells changed.
    log : CleanupLog
    """
    if shallow not in SHALLOW_POLICIES:
        raise ValueError(f"shallow must be one of {SHALLOW_POLICIES}, not {shallow!r}")
    keep = np.zeros(water.shape, bool) if keep_ocean is None else keep_ocean
    ocean = water.copy()
    depth = np.array(depth_m, dtype=float, copy=True)
    log = CleanupLog()
    for _ in range(max_passes):
        log.passes += 1
        changed = False
        connected, _ = ocean_and_basins(ocean, area, connectivity)
        lost = ocean & ~connected
        if lost.any():
            log.disconnected += int(lost.sum())
            ocean = connected
            changed = True
        while True:  # inlets shrink one cell per sweep; sweep until none is left
            inlet = ocean & ~keep & (ocean_edge_neighbours(ocean) <= 1)
            if not inlet.any():
                break
            log.inlets += int(inlet.sum())
            ocean &= ~inlet
            changed = True
        shallow_cells = ocean & ~keep & (depth < min_depth_m)
        if shallow_cells.any():
            if shallow == "deepen":
                depth[shallow_cells] = min_depth_m
                log.deepened += int(shallow_cells.sum())
            else:
                ocean &= ~shallow_cells
                log.shallow_to_land += int(shallow_cells.sum())
                changed = True
        if not changed:
            return ocean, depth, log
    raise RuntimeError("the ocean cleanup did not reach a fixed point")  # pragma: no cover
