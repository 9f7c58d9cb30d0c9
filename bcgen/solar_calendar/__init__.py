"""The solar calendar: where the Earth is on its orbit at each moment of a model calendar.

=====================  ==========================================================
module                 job
=====================  ==========================================================
:mod:`.kepler`         Kepler's equation; mean ↔ eccentric ↔ true anomaly
:mod:`.calendars`      CF model calendars (cftime), the anchor of the orbit, the
                       leap-year rule
:mod:`.position`       :class:`SolarYear`: model time ↔ true longitude,
                       declination, distance factor
:mod:`.months`         fixed-day and fixed-angle month boundaries
=====================  ==========================================================
"""

from __future__ import annotations

from bcgen.solar_calendar.calendars import (
    ANCHOR_KINDS,
    CALENDARS,
    Anchor,
    ModelCalendar,
    parse_anchor,
)
from bcgen.solar_calendar.kepler import (
    eccentric_to_mean,
    eccentric_to_true,
    mean_to_true,
    solve_kepler,
    true_to_eccentric,
    true_to_mean,
)
from bcgen.solar_calendar.months import (
    MONTH_DEFINITIONS,
    MonthTable,
    fixed_angle_months,
    fixed_day_months,
)
from bcgen.solar_calendar.position import SolarYear

__all__ = [
    "ANCHOR_KINDS",
    "CALENDARS",
    "MONTH_DEFINITIONS",
    "Anchor",
    "ModelCalendar",
    "MonthTable",
    "SolarYear",
    "eccentric_to_mean",
    "eccentric_to_true",
    "fixed_angle_months",
    "fixed_day_months",
    "mean_to_true",
    "parse_anchor",
    "solve_kepler",
    "true_to_eccentric",
    "true_to_mean",
]
