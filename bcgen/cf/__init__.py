"""Everything bcgen knows of the CF Conventions, one module a job.

- :mod:`bcgen.cf.attributes`: the attributes of every variable bcgen writes (data only);
- :mod:`bcgen.cf.time_axes`: time axes on a model calendar (a repeating year, a series);
- :mod:`bcgen.cf.provenance`: the global attributes that record what made a file;
- :mod:`bcgen.cf.cellmethods`: ``cell_methods`` split into entries (what statistic over
  which dimension);
- :mod:`bcgen.cf.reader`: how a file written by anyone (a model's output, a grid file, a
  file bcgen built) is read: the time axis with or without bounds, latitude and
  longitude found by CF rules, and time units.

Calendar names and year lengths are the calendar authority's
(:mod:`bcgen.solar_calendar.calendars`); writing files is :mod:`bcgen.io`'s job.
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
from bcgen.cf.provenance import CONVENTIONS, CYCLIC_COMMENT, provenance_attrs
from bcgen.cf.reader import (
    TIME_UNIT_DAYS,
    bounds_variable,
    coordinate_kind,
    find_coordinates,
    find_time_dim,
    time_unit_days,
)
from bcgen.cf.time_axes import climatology_time_axis, time_axis

__all__ = [
    "BOUNDS_DIM",
    "CONVENTIONS",
    "COORDINATES",
    "CYCLIC_COMMENT",
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
    "climatology_time_axis",
    "coordinate_attrs",
    "coordinate_kind",
    "find_coordinates",
    "find_time_dim",
    "provenance_attrs",
    "time_axis",
    "time_unit_days",
    "variable_attrs",
]
