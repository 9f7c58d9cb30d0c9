"""Land and land-ice fractions that agree with each other and with the binary mask.

The stated rule: a cell is land in the binary mask exactly when its land area fraction
is at least :data:`LAND_THRESHOLD`. The mask comes first (it is what the ocean model
needs, after connectivity, cleanup and strait rules); where the area fraction from the
fine field disagrees with it, the fraction is set to the mask's value (1 on land, 0 on
ocean), and the number of such cells is reported. Land ice covers only land: the ice
fraction is at most the land fraction.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: A cell is land in the binary mask exactly when its land area fraction is >= this.
LAND_THRESHOLD = 0.5
#: Largest gap kept below the threshold on ocean cells (float32 resolves it near 0.5).
_MARGIN = 1e-6


@dataclass(frozen=True)
class Fractions:
    """Land and land-ice fractions consistent with the mask, and what was adjusted."""

    land: np.ndarray
    land_ice: np.ndarray | None
    cells_set_to_land: int
    cells_set_to_ocean: int
    ice_area_removed_m2: float


def consistent_fractions(land_fraction: np.ndarray, ocean: np.ndarray, area_m2: np.ndarray,
                         ice_fraction: np.ndarray | None = None) -> Fractions:
    """Make the land fraction agree with the ocean mask and the ice fraction with the land.

    Parameters
    ----------
    land_fraction : numpy.ndarray
        Area fraction of land from the fine field (0..1).
    ocean : numpy.ndarray of bool
        The cleaned ocean mask.
    area_m2 : numpy.ndarray
        Cell areas, for the ice area removed.
    ice_fraction : numpy.ndarray, optional
        Area fraction of land ice (0..1).
    """
    land = np.clip(np.asarray(land_fraction, dtype=float), 0.0, 1.0)
    to_land = ~ocean & (land < LAND_THRESHOLD)
    to_ocean = ocean & (land >= LAND_THRESHOLD)
    land = np.where(to_land, 1.0, np.where(to_ocean, 0.0, land))
    # Keep the rule after rounding to float32 in the file: an ocean cell's fraction just
    # below the threshold would otherwise round up to it.
    land = np.where(ocean, np.minimum(land, LAND_THRESHOLD - _MARGIN), land)
    ice = None
    removed = 0.0
    if ice_fraction is not None:
        given = np.clip(np.asarray(ice_fraction, dtype=float), 0.0, 1.0)
        ice = np.minimum(given, land)
        removed = float(np.sum((given - ice) * area_m2))
    return Fractions(land, ice, int(to_land.sum()), int(to_ocean.sum()), removed)
