"""Paleogeography on the model grid: relief anomaly, conservative regridding, land–sea mask.

One module per step, data flowing down the list:

==========================  ==================================================================
:mod:`.fields`              read a relief, ice or fraction field from NetCDF, units checked
:mod:`.regrid`              conservative regridding (separable sparse latitude/longitude form)
:mod:`.pipeline`            the anomaly method and the chain for one time slice
:mod:`.mask`                water bodies and the world ocean (flood fill across the seam)
:mod:`.cleanup`             one-cell inlets, isolated cells, minimum depth, to a fixed point
:mod:`.straits`             strait rules: carve a passage open or close it
:mod:`.landsea`             the mask of one state with its strait rules
:mod:`.fractions`           land and land-ice fractions consistent with the binary mask
:mod:`.salinity`            global-mean salinity and the change implied by the ocean volume
:mod:`.report`              the change report (JSON-ready data and text)
:mod:`.products`            the CF dataset of the products
==========================  ==================================================================

>>> from bcgen.geography import GeographyInputs, make_geography, read_field
>>> relief = read_field("etopo5.cdf", "ROSE")                   # doctest: +SKIP
>>> geo = make_geography(GeographyInputs(relief, sea_level_change_m=-120.0),
...                      regular_grid(1.0))                     # doctest: +SKIP
"""

from bcgen.geography.fields import LatLonField, read_field
from bcgen.geography.landsea import MaskSettings
from bcgen.geography.pipeline import Geography, GeographyInputs, make_geography
from bcgen.geography.products import geography_dataset
from bcgen.geography.regrid import ConservativeRegridder
from bcgen.geography.report import change_report, report_text
from bcgen.geography.straits import StraitRule

__all__ = [
    "ConservativeRegridder",
    "Geography",
    "GeographyInputs",
    "LatLonField",
    "MaskSettings",
    "StraitRule",
    "change_report",
    "geography_dataset",
    "make_geography",
    "read_field",
    "report_text",
]
