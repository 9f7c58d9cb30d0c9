"""Model output from fixed-day months to fixed-angle months (and back).

A model's months are fixed blocks of days; with a paleo orbit those days cover other
arcs of the orbit than today, so monthly means must be moved to fixed-angle months
(:func:`bcgen.solar_calendar.months.fixed_angle_months`) before they are compared with a
control run or with proxy seasons.

=========================  =============================================================
module                     job
=========================  =============================================================
:mod:`.api`                :func:`to_fixed_angle_months`, :func:`to_fixed_day_months`
                           (xarray in and out, numpy- or dask-backed);
                           :func:`transient_orbits` (each model year's orbit)
:mod:`.interpolation`      mean-preserving interpolation of interval means of unequal
                           length, integrated exactly (Killworth 1996; Epstein 1991)
:mod:`.aggregate`          exact overlap-weighted means of daily (or any interval) means
                           over fractional-day intervals; the missing-data rule
:mod:`.kernels`            the fast per-block path used under dask
:mod:`.cellmethods`        what a variable's ``cell_methods`` allows: means re-averaged,
                           sums as totals, daily extremes averaged, others refused
:mod:`.timeaxis`           reading a CF time axis: calendar, intervals, monthly or daily,
                           climatology or series
:mod:`.io`                 opening multi-file sets, writing the result atomically
=========================  =============================================================

Which month boundaries move
    Every boundary of a fixed-angle month may move relative to the calendar month,
    1 January included; the boundary at the anchor (21 March 12:00 by default) stays.
    The months of the output carry fractional-day bounds (``time_bnds``).

Methods (``method=``)
    ``killworth1996`` (default): Killworth, P. D. (1996), J. Phys. Oceanogr. 26,
    136-143, doi:10.1175/1520-0485(1996)026<0136:TIOFFI>2.0.CO;2.
    ``epstein1991``: Epstein, E. S. (1991), J. Climate 4, 365-368 (climatologies).
    Daily and sub-daily input needs no interpolation.
"""

from __future__ import annotations

from bcgen.convert.aggregate import DEFAULT_MIN_VALID_FRACTION, aggregate
from bcgen.convert.api import to_fixed_angle_months, to_fixed_day_months, transient_orbits
from bcgen.convert.interpolation import END_RULES, METHODS, mean_preserving_means

__all__ = [
    "DEFAULT_MIN_VALID_FRACTION",
    "END_RULES",
    "METHODS",
    "aggregate",
    "mean_preserving_means",
    "to_fixed_angle_months",
    "to_fixed_day_months",
    "transient_orbits",
]
