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

from __future__ import annotations

import importlib

#: Public names and the module that defines each (imported on first use, so that reading
#: a spec does not import scipy).
_PUBLIC = {
    "ConservativeRegridder": "regrid",
    "Geography": "pipeline",
    "GeographyInputs": "pipeline",
    "LatLonField": "fields",
    "MaskSettings": "landsea",
    "StraitRule": "straits",
    "change_report": "report",
    "geography_dataset": "products",
    "make_geography": "pipeline",
    "read_field": "fields",
    "report_text": "report",
}

__all__ = sorted(_PUBLIC)


def __getattr__(name: str):
    if name in _PUBLIC:
        return getattr(importlib.import_module(f"bcgen.geography.{_PUBLIC[name]}"), name)
    raise AttributeError(f"module 'bcgen.geography' has no attribute {name!r}")
