"""Figures of what people look at: insolation, its anomaly, month lengths, the orbit in time.

``bcgen plot`` (and these functions) need matplotlib, an optional extra:
``pip install 'bcgen[plot]'``.

=======================  ===============================================================
module                   contents
=======================  ===============================================================
``sources``              the data of a figure from an epoch, a range, a spec or a built
                         NetCDF file (:func:`monthly_field`, :func:`month_lengths`,
                         :func:`orbit_series`)
``figures``              one function per figure, each returning a matplotlib Figure
``output``               :func:`save_figure`: PNG or PDF, atomic, no overwrite without force
=======================  ===============================================================

>>> from bcgen.plot import monthly_field, anomaly_figure, save_figure   # doctest: +SKIP
>>> fig = anomaly_figure(monthly_field("6ka"), monthly_field("0ka"))    # doctest: +SKIP
>>> save_figure(fig, "6ka-minus-0ka.png")                              # doctest: +SKIP
"""

from __future__ import annotations

from bcgen.plot.figures import (
    MissingExtraError,
    anomaly_figure,
    insolation_figure,
    month_lengths_figure,
    orbit_figure,
    require_matplotlib,
)
from bcgen.plot.output import FORMATS, check_dpi, check_output, figure_format, save_figure
from bcgen.plot.sources import (
    MonthLengths,
    MonthlyField,
    OrbitsThroughTime,
    SourceError,
    field_pair,
    month_lengths,
    monthly_field,
    orbit_series,
    source_kind,
)

__all__ = [
    "FORMATS",
    "MissingExtraError",
    "MonthLengths",
    "MonthlyField",
    "OrbitsThroughTime",
    "SourceError",
    "anomaly_figure",
    "check_dpi",
    "check_output",
    "field_pair",
    "figure_format",
    "insolation_figure",
    "month_lengths",
    "month_lengths_figure",
    "monthly_field",
    "orbit_figure",
    "orbit_series",
    "require_matplotlib",
    "save_figure",
    "source_kind",
]
