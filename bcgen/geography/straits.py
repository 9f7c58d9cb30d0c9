"""Strait rules: carve a named passage open, or close it, on the model grid.

A rule names a strait (a name of the user's choosing), where it lies (a path of
latitude–longitude points, or a box), a width in cells and, to keep a strait open, a
depth. A path is drawn cell by cell with edge steps only (so that an edge-connected
ocean can flow along it), then widened to the rule's width (a square of that many
cells around each path cell). Every rule reports the cells it changed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.ndimage as ndi

from bcgen.geography.options import STRAIT_ACTIONS as ACTIONS


@dataclass(frozen=True)
class StraitRule:
    """One strait rule.

    Attributes
    ----------
    name : str
        The user's name for it (used in the report).
    action : {"open", "close"}
        Keep it open (carve ocean cells at least ``depth_m`` deep) or close it (land).
    path_deg : tuple of (lat, lon) pairs, optional
        Points along the strait, degrees north and east.
    box_deg : (lat_min, lat_max, lon_min, lon_max), optional
        Cells whose centres lie in the box.
    width_cells : int
        Width of the passage in cells (a path is widened by ``width_cells - 1``).
    depth_m : float
        Depth below sea level of the carved cells, m (``open`` only).
    """

    name: str
    action: str
    path_deg: tuple | None = None
    box_deg: tuple | None = None
    width_cells: int = 1
    depth_m: float = 0.0

    def __post_init__(self) -> None:
        if self.action not in ACTIONS:
            raise ValueError(f"strait {self.name!r}: action must be one of {ACTIONS}")
        if (self.path_deg is None) == (self.box_deg is None):
            raise ValueError(f"strait {self.name!r}: give either a path or a box")
        if self.path_deg is not None and len(self.path_deg) < 2:
            raise ValueError(f"strait {self.name!r}: a path needs at least two points")
        if self.width_cells < 1:
            raise ValueError(f"strait {self.name!r}: width must be at least one cell")


def _cell_index(edges: np.ndarray, x: float, periodic: bool) -> int:
    if periodic:
        x = edges[0] + (x - edges[0]) % 360.0
    return int(np.clip(np.searchsorted(edges, x, side="right") - 1, 0, edges.size - 2))


def rule_cells(rule: StraitRule, lat_edges: np.ndarray, lon_edges: np.ndarray) -> np.ndarray:
    """Boolean (nlat, nlon) mask of the cells a rule covers on a grid given by its edges."""
    nlat, nlon = lat_edges.size - 1, lon_edges.size - 1
    cells = np.zeros((nlat, nlon), dtype=bool)
    if rule.box_deg is not None:
        lat0, lat1, lon0, lon1 = rule.box_deg
        lat_c = 0.5 * (lat_edges[:-1] + lat_edges[1:])
        lon_c = 0.5 * (lon_edges[:-1] + lon_edges[1:])
        in_lat = (lat_c >= lat0) & (lat_c <= lat1)
        rel = (lon_c - lon0) % 360.0
        in_lon = rel <= (lon1 - lon0) % 360.0
        cells[np.ix_(in_lat, in_lon)] = True
        if not cells.any():  # a box smaller than a cell: the cell holding its centre
            cells[_cell_index(lat_edges, 0.5 * (lat0 + lat1), False),
                  _cell_index(lon_edges, lon0 + 0.5 * ((lon1 - lon0) % 360.0), True)] = True
    else:
        step_deg = 0.25 * min(np.min(np.diff(lat_edges)), np.min(np.diff(lon_edges)))
        previous = None
        for (la0, lo0), (la1, lo1) in zip(rule.path_deg[:-1], rule.path_deg[1:], strict=True):
            dlon = (lo1 - lo0 + 180.0) % 360.0 - 180.0  # the short way round
            n = max(2, int(np.ceil(max(abs(la1 - la0), abs(dlon)) / step_deg)) + 1)
            for t in np.linspace(0.0, 1.0, n):
                i = _cell_index(lat_edges, la0 + t * (la1 - la0), False)
                j = _cell_index(lon_edges, lo0 + t * dlon, True)
                if previous is not None and previous[0] != i and previous[1] != j:
                    cells[previous[0], j] = True  # an edge step, never a diagonal one
                cells[i, j] = True
                previous = (i, j)
        if rule.width_cells > 1:
            w = rule.width_cells  # a w x w square around each path cell: width w
            padded = np.concatenate([cells[:, -w:], cells, cells[:, :w]], axis=1)
            padded = ndi.binary_dilation(padded, structure=np.ones((w, w), dtype=bool))
            cells = padded[:, w:w + nlon]
    return cells
