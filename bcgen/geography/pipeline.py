r"""The geography of one time slice on the model grid: anomaly, regridding, mask, fractions.

:func:`make_geography` runs the whole chain for a present state (the model's present
relief at present sea level) and a paleo state (the anomaly method with the sea-level
change), both through the same mask rules, so that the change report compares like with
like.

The anomaly method (PMIP protocols: Kageyama et al. 2017, doi:10.5194/gmd-10-4035-2017,
section 2.2 for the last glacial maximum; Haywood et al. 2016,
doi:10.5194/cp-12-663-2016, for the mid-Pliocene):

.. math:: z_{paleo} = z_{model,0} + \mathcal{R}(z_{rec}(t) - z_{rec}(0)) - \Delta SL,

where :math:`\mathcal{R}` is conservative regridding onto the present relief's grid
and :math:`\Delta SL` the sea-level change (negative in a glacial), so that
:math:`z_{paleo}` is the height above the paleo sea level.

A reconstruction's own land mask (a land area fraction or a binary mask, at the epoch
and optionally at 0 ka) is used by one policy, applied on the model grid before the
strait rules and the connectivity cleanup. Its conservatively regridded fraction is

.. math:: f_{rec} = f_{model,0} + \mathcal{R}(m_{rec}(t)) - \mathcal{R}(m_{rec}(0)),

the model's present land fraction plus the reconstruction's change in land fraction
(the anomaly method applied to the mask). A cell is land by the reconstruction where
:math:`f_{rec} \ge 0.5`. With both masks, the reconstruction decides only in cells where
its land fraction changes (:math:`|\mathcal{R}(m_{rec}(t)) - \mathcal{R}(m_{rec}(0))| >
10^{-6}`) and the relief's decision disagrees; elsewhere the relief decides. With the
epoch mask alone, :math:`f_{rec} = \mathcal{R}(m_{rec}(t))` and the reconstruction decides
in every cell where the two disagree. The change report counts the cells so switched.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bcgen.errors import GridError
from bcgen.geography.constants import EARTH_RADIUS_M
from bcgen.geography.fields import LatLonField
from bcgen.geography.fractions import LAND_THRESHOLD, Fractions, consistent_fractions
from bcgen.geography.landsea import LandSea, MaskSettings, land_sea
from bcgen.geography.mask import world_ocean_mask
from bcgen.geography.regrid import ConservativeRegridder
from bcgen.grids import Grid


@dataclass(frozen=True)
class GeographyInputs:
    """The inputs of one time slice, read and unit-checked (:mod:`bcgen.geography.fields`).

    Attributes
    ----------
    present : LatLonField
        The model's present-day relief above present sea level, m.
    reconstruction_epoch, reconstruction_present : LatLonField, optional
        A reconstruction's surface (relief or surface elevation) at the epoch and at 0 ka.
    ice_thickness : LatLonField, optional
        Land-ice thickness at the epoch, m.
    ice_fraction : LatLonField, optional
        Land-ice area fraction at the epoch (used instead of ``ice_thickness > 0``).
    sea_level_change_m : float
        Sea level at the epoch minus today's, m (e.g. -120 for the last glacial maximum).
    land_mask_epoch, land_mask_present : LatLonField, optional
        The reconstruction's own land mask (fraction 0 to 1, or binary) at the epoch and
        at 0 ka; see the module docstring for how it is used.
    """

    present: LatLonField
    reconstruction_epoch: LatLonField | None = None
    reconstruction_present: LatLonField | None = None
    ice_thickness: LatLonField | None = None
    ice_fraction: LatLonField | None = None
    sea_level_change_m: float = 0.0
    land_mask_epoch: LatLonField | None = None
    land_mask_present: LatLonField | None = None


@dataclass
class Geography:
    """The geography of a time slice on the model grid, with its present-day reference."""

    grid: Grid
    area_m2: np.ndarray
    relief_present_m: np.ndarray     # cell mean, above present sea level
    relief_paleo_m: np.ndarray       # cell mean, above the paleo sea level
    present: LandSea
    paleo: LandSea
    land_fraction_present_fine: np.ndarray  # area fractions from the fine field
    land_fraction_paleo_fine: np.ndarray
    fractions_present: Fractions
    fractions: Fractions                    # the paleo fractions, consistent with the mask
    ice_thickness_m: np.ndarray | None
    ice_volume_source_m3: float
    ice_volume_m3: float
    inputs: GeographyInputs
    settings: MaskSettings
    mask_cells_made_land: int = 0    # by the reconstruction's land mask, before the cleanup
    mask_cells_made_ocean: int = 0

    @property
    def surface_altitude_m(self) -> np.ndarray:
        """Height of the surface above the paleo sea level; 0 on the ocean."""
        return np.where(self.paleo.ocean, 0.0, self.relief_paleo_m)


def paleo_relief_fine(inputs: GeographyInputs) -> np.ndarray:
    """Relief above the paleo sea level on the present relief's grid (anomaly method)."""
    z = inputs.present.values
    dsl = np.float32(inputs.sea_level_change_m)
    if inputs.reconstruction_epoch is None:
        return z - dsl
    epoch, zero = inputs.reconstruction_epoch, inputs.reconstruction_present
    if zero is None or epoch.values.shape != zero.values.shape or not (
            np.allclose(epoch.grid.lat_deg, zero.grid.lat_deg)
            and np.allclose(epoch.grid.lon_deg, zero.grid.lon_deg)):
        raise GridError("the reconstruction at the epoch and at 0 ka must share one grid")
    anomaly = epoch.values.astype(np.float64) - zero.values
    onto_present = ConservativeRegridder.from_grids(epoch.grid, inputs.present.grid)
    out = onto_present.mean(anomaly)
    out += z
    out -= float(dsl)
    return out


def reconstruction_mask_decision(inputs: GeographyInputs, grid: Grid,
                                 land_fraction_present: np.ndarray,
                                 relief_land: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Cells the reconstruction's land mask makes land and makes ocean (module docstring).

    Parameters
    ----------
    inputs : GeographyInputs
    grid : bcgen.grids.Grid
        The model grid.
    land_fraction_present : numpy.ndarray
        The model's present land area fraction on the model grid.
    relief_land : numpy.ndarray of bool
        The relief's land decision at the epoch (cell-mean relief at or above sea level).

    Returns
    -------
    force_land, force_ocean : numpy.ndarray of bool
        Both all False without a reconstruction mask.
    """
    none = np.zeros(relief_land.shape, bool)
    epoch = inputs.land_mask_epoch
    if epoch is None:
        return none, none.copy()
    f_epoch = ConservativeRegridder.from_grids(epoch.grid, grid).mean(epoch.values)
    zero = inputs.land_mask_present
    if zero is None:
        decides = np.ones(relief_land.shape, bool)
        f_rec = f_epoch
    else:
        change = f_epoch - ConservativeRegridder.from_grids(zero.grid, grid).mean(zero.values)
        decides = np.abs(change) > 1e-6
        f_rec = land_fraction_present + change
    rec_land = f_rec >= LAND_THRESHOLD
    return decides & rec_land & ~relief_land, decides & ~rec_land & relief_land


def make_geography(inputs: GeographyInputs, grid: Grid,
                   settings: MaskSettings | None = None) -> Geography:
    """Run the anomaly method, conservative regridding, the mask and the fractions.

    Parameters
    ----------
    inputs : GeographyInputs
    grid : bcgen.grids.Grid
        The model grid (rectilinear latitude–longitude with bounds).
    settings : MaskSettings

    Returns
    -------
    Geography
    """
    settings = settings or MaskSettings()
    if grid.lat_deg.ndim == 1 and grid.lat_deg.size > 1 and grid.lat_deg[0] > grid.lat_deg[-1]:
        raise GridError(f"grid {grid.name!r}: the geography products need latitudes running "
                        "south to north; this grid runs north to south")
    present = inputs.present
    to_model = ConservativeRegridder.from_grids(present.grid, grid)
    area = to_model.dst_area_sr * EARTH_RADIUS_M**2
    fine_area = present.row_area_sr
    lat_b, lon_b = np.sort(grid.lat_bounds_deg, axis=1), np.sort(grid.lon_bounds_deg, axis=1)
    lat_edges = np.append(lat_b[:, 0], lat_b[-1, 1])
    lon_edges = np.append(lon_b[:, 0], lon_b[-1, 1])

    relief0 = to_model.mean(present.values)
    ocean0_fine = world_ocean_mask(present.values < 0, fine_area, settings.connectivity)
    land0_fine = to_model.fraction(~ocean0_fine)
    del ocean0_fine

    paleo_fine = paleo_relief_fine(inputs)
    relief1 = to_model.mean(paleo_fine)
    ocean1_fine = world_ocean_mask(paleo_fine < 0, fine_area, settings.connectivity)
    del paleo_fine
    land1_fine = to_model.fraction(~ocean1_fine)
    del ocean1_fine

    force_land, force_ocean = reconstruction_mask_decision(inputs, grid, land0_fine,
                                                           relief1 >= 0)
    state0 = land_sea(relief0, area, lat_edges, lon_edges, settings)
    state1 = land_sea(relief1, area, lat_edges, lon_edges, settings,
                      force_land=force_land, force_ocean=force_ocean)

    ice_th, ice_frac, vol_src, vol = None, None, 0.0, 0.0
    if inputs.ice_thickness is not None:
        th = np.maximum(inputs.ice_thickness.values.astype(np.float64), 0.0)
        to_ice = ConservativeRegridder.from_grids(inputs.ice_thickness.grid, grid)
        ice_th = to_ice.mean(th)
        vol_src = float(np.sum(th * inputs.ice_thickness.cell_area_sr) * EARTH_RADIUS_M**2)
        vol = float(np.sum(ice_th * area))
        ice_frac = to_ice.fraction(th > 0)
    if inputs.ice_fraction is not None:
        f = inputs.ice_fraction
        ice_frac = np.clip(ConservativeRegridder.from_grids(f.grid, grid).mean(f.values), 0, 1)
    fr0 = consistent_fractions(land0_fine, state0.ocean, area)
    fr1 = consistent_fractions(land1_fine, state1.ocean, area, ice_frac)
    return Geography(grid, area, relief0, relief1, state0, state1, land0_fine, land1_fine,
                     fr0, fr1, ice_th, vol_src, vol, inputs, settings,
                     int(force_land.sum()), int(force_ocean.sum()))
