"""CF knowledge as data (:mod:`bcgen.cf.attributes`) and the one CF reader (:mod:`bcgen.cf.reader`).

Everything bcgen knows of the CF Conventions lives here: the attributes of every
variable it writes, and how a file written by anyone (a model's output, a grid file, a
file bcgen built) is read: the time axis with or without bounds, latitude and
longitude found by CF rules, and time units. Calendar names and year lengths are the
calendar authority's (:mod:`bcgen.solar_calendar.calendars`).
"""

from bcgen.cf.attributes import (
    BOUNDS_DIM,
    COORDINATES,
    LATITUDE_UNITS,
    LONGITUDE_UNITS,
    PRECESSION_INDEX_ATTRS,
    TIME_CELL_METHODS,
    TIME_UNITS_TEMPLATE,
    VARIABLES,
    VERTICES_DIM,
    TimeKind,
    coordinate_attrs,
    variable_attrs,
)
from bcgen.cf.reader import (
    TIME_UNIT_DAYS,
    bounds_variable,
    coordinate_kind,
    find_coordinates,
    find_time_dim,
    time_unit_days,
)

__all__ = [
    "BOUNDS_DIM",
    "COORDINATES",
    "LATITUDE_UNITS",
    "LONGITUDE_UNITS",
    "PRECESSION_INDEX_ATTRS",
    "TIME_CELL_METHODS",
    "TIME_UNITS_TEMPLATE",
    "TIME_UNIT_DAYS",
    "VARIABLES",
    "VERTICES_DIM",
    "TimeKind",
    "bounds_variable",
    "coordinate_attrs",
    "coordinate_kind",
    "find_coordinates",
    "find_time_dim",
    "time_unit_days",
    "variable_attrs",
]
