"""CF knowledge as plain data: attributes of every variable bcgen writes.

This module holds tables only (plus two tiny lookup helpers); the logic that uses
them lives in :mod:`bcgen.grids` and :mod:`bcgen.cf.time_axes`, the reader of CF files in
:mod:`bcgen.cf.reader`.

Sources
-------
- CF Conventions 1.11 (5 December 2023, cfconventions.org): §3.3 standard
  names, §4.1–4.2 latitude/longitude units, §4.4 time and calendars, §7.1
  bounds, §7.3 cell_methods, §7.4 climatological statistics.
- CF standard-name table version 93 (the one bundled with compliance-checker
  6.1): ``toa_incoming_shortwave_flux``, ``solar_irradiance``,
  ``mole_fraction_of_carbon_dioxide_in_air`` (also methane, nitrous oxide),
  ``latitude``, ``longitude``, ``time``. The table has no name for orbital
  eccentricity, obliquity, longitude of perihelion, solar declination, the
  Sun's true longitude or (a/r)²; those variables get a ``long_name``, units
  and a ``convention`` attribute that states the definition in words.
- UDUNITS-2: ``1e-6`` and ``1e-9`` are valid dimensionless units, convertible to
  the canonical ``1`` of the mole-fraction standard names (ppm and ppb).

Each entry of :data:`VARIABLES` maps a suggested variable name to its
attributes. ``cell_methods`` is not stored with the time part, because it
depends on the time axis (see :data:`TIME_CELL_METHODS`); entries carry
``time_method`` instead, which :func:`variable_attrs` expands.
"""

from __future__ import annotations

from types import MappingProxyType
from typing import Literal

from bcgen.orbit.elements import PERIHELION_CONVENTIONS

TimeKind = Literal["mean", "point", "climatology"]

# Calendar names, aliases and year lengths: bcgen.solar_calendar.calendars (the one authority).

#: Units of a time axis: days since 1 January 00:00 of a reference year (CF §4.4).
TIME_UNITS_TEMPLATE = "days since {year:04d}-01-01 00:00:00"

#: Time part of cell_methods for each kind of time axis (CF §7.3, §7.4).
TIME_CELL_METHODS: MappingProxyType = MappingProxyType(
    {
        "mean": "time: mean",
        "point": "time: point",
        "climatology": "time: mean within years time: mean over years",
        "climatology_point": "time: point within years time: mean over years",
    }
)

#: Name of the vertex dimension of 1-D bounds (common practice in CMIP files).
BOUNDS_DIM = "bnds"
#: Name of the vertex dimension of 2-D (curvilinear) cell corners (CF §7.1).
VERTICES_DIM = "nv4"

#: Coordinate variables (CF §4.1, §4.2, §4.4).
COORDINATES: MappingProxyType = MappingProxyType(
    {
        "lat": MappingProxyType(
            {
                "standard_name": "latitude",
                "long_name": "latitude",
                "units": "degrees_north",
                "axis": "Y",
            }
        ),
        "lon": MappingProxyType(
            {
                "standard_name": "longitude",
                "long_name": "longitude",
                "units": "degrees_east",
                "axis": "X",
            }
        ),
        "time": MappingProxyType({"standard_name": "time", "long_name": "time", "axis": "T"}),
    }
)

#: Units strings that mark a latitude or longitude (CF §4.1, §4.2). Rotated-pole
#: coordinates use plain "degrees" and are not geographic latitude/longitude.
LATITUDE_UNITS: frozenset[str] = frozenset(
    {"degrees_north", "degree_north", "degree_N", "degrees_N", "degreeN", "degreesN"}
)
LONGITUDE_UNITS: frozenset[str] = frozenset(
    {"degrees_east", "degree_east", "degree_E", "degrees_E", "degreeE", "degreesE"}
)

#: Attributes of the precession index (no CF standard name exists).
PRECESSION_INDEX_ATTRS: MappingProxyType = MappingProxyType({
    "long_name": "climatic precession parameter e sin(perihelion_longitude)",
    "units": "1",
    "convention": "eccentricity times the sine of the heliocentric longitude of perihelion "
    "from the moving March equinox (Berger 1978)",
})

_ORBIT_COMMENT = "no CF standard name exists for this quantity"

#: Data variables bcgen writes, keyed by the variable name bcgen suggests.
VARIABLES: MappingProxyType = MappingProxyType(
    {
        # --- radiation -------------------------------------------------------------------
        "insolation": MappingProxyType(
            {
                "standard_name": "toa_incoming_shortwave_flux",
                "long_name": "incoming shortwave flux at the top of the atmosphere (insolation)",
                "units": "W m-2",
                "time_method": "mean",
            }
        ),
        "insolation_instantaneous": MappingProxyType(
            {
                "standard_name": "toa_incoming_shortwave_flux",
                "long_name": "instantaneous incoming shortwave flux at the top of the atmosphere",
                "units": "W m-2",
                "time_method": "point",
            }
        ),
        "solar_irradiance": MappingProxyType(
            {
                "standard_name": "solar_irradiance",
                "long_name": "total solar irradiance at the mean Earth-Sun distance "
                "(solar constant)",
                "units": "W m-2",
                "time_method": "mean",
            }
        ),
        # --- greenhouse gases (units 1e-6 = ppm, 1e-9 = ppb; UDUNITS-2) -------------------
        "co2": MappingProxyType(
            {
                "standard_name": "mole_fraction_of_carbon_dioxide_in_air",
                "long_name": "carbon dioxide mole fraction in dry air (ppm)",
                "units": "1e-6",
                "time_method": "mean",
            }
        ),
        "ch4": MappingProxyType(
            {
                "standard_name": "mole_fraction_of_methane_in_air",
                "long_name": "methane mole fraction in dry air (ppb)",
                "units": "1e-9",
                "time_method": "mean",
            }
        ),
        "n2o": MappingProxyType(
            {
                "standard_name": "mole_fraction_of_nitrous_oxide_in_air",
                "long_name": "nitrous oxide mole fraction in dry air (ppb)",
                "units": "1e-9",
                "time_method": "mean",
            }
        ),
        # --- orbit (no standard names; see the module docstring) -------------------------
        "eccentricity": MappingProxyType(
            {
                "long_name": "eccentricity of the Earth's orbit",
                "units": "1",
                "convention": "numerical eccentricity e of the heliocentric orbit, 0 <= e < 1",
                "comment": _ORBIT_COMMENT,
            }
        ),
        "obliquity": MappingProxyType(
            {
                "long_name": "obliquity of the ecliptic (tilt of the Earth's axis)",
                "units": "degree",
                "convention": "angle between the equator and the ecliptic of date",
                "comment": _ORBIT_COMMENT,
            }
        ),
        "perihelion_longitude": MappingProxyType(
            {
                "long_name": "longitude of perihelion",
                "units": "degree",
                "convention": PERIHELION_CONVENTIONS["perihelion_longitude"],
                "comment": _ORBIT_COMMENT,
            }
        ),
        "sun_longitude_at_perihelion": MappingProxyType(
            {
                "long_name": "true longitude of the Sun at perihelion",
                "units": "degree",
                "convention": PERIHELION_CONVENTIONS["sun_longitude_at_perihelion"],
                "comment": _ORBIT_COMMENT,
            }
        ),
        "true_longitude": MappingProxyType(
            {
                "long_name": "true longitude of the Sun",
                "units": "degree",
                "convention": "geocentric ecliptic longitude of the Sun measured from the "
                "March equinox of date: 0 at the March equinox, 90 at the June solstice, "
                "180 at the September equinox, 270 at the December solstice",
                "comment": _ORBIT_COMMENT,
                "time_method": "point",
            }
        ),
        "declination": MappingProxyType(
            {
                "long_name": "declination of the Sun",
                "units": "degree",
                "convention": "angle of the Sun north (positive) or south (negative) of the "
                "celestial equator; sin(declination) = sin(obliquity) sin(true longitude)",
                "comment": _ORBIT_COMMENT,
                "time_method": "point",
            }
        ),
        "distance_factor": MappingProxyType(
            {
                "long_name": "square of the ratio of the mean to the actual Earth-Sun "
                "distance, (a/r)^2",
                "units": "1",
                "convention": "a is the semi-major axis of the Earth's orbit and r the "
                "Earth-Sun distance; the irradiance reaching the Earth is the solar "
                "constant times (a/r)^2",
                "comment": _ORBIT_COMMENT,
                "time_method": "point",
            }
        ),
    }
)


def variable_attrs(
    name: str,
    *,
    time_kind: TimeKind | None = None,
    **overrides: str,
) -> dict[str, str]:
    """Return the CF attributes of a variable from :data:`VARIABLES`.

    Parameters
    ----------
    name : str
        A key of :data:`VARIABLES`.
    time_kind : {"mean", "point", "climatology"} or None
        The kind of time axis the variable lies on; None if it has no time axis.
        A variable whose table entry is a time mean gets the ``cell_methods``
        of that axis from :data:`TIME_CELL_METHODS`; an instantaneous one
        (``time_method`` "point") gets ``time: point``, or ``time: point within
        years time: mean over years`` on a climatological axis (CF §7.4 allows
        only the within/over form there).
    **overrides : str
        Attributes that replace or extend the table's.

    Returns
    -------
    dict
        Attributes ready for an xarray variable.

    Notes
    -----
    A field on a latitude-only grid gets no ``lon: mean`` entry: daily insolation
    does not depend on longitude, and the compliance-checker's §7.4 check
    accepts nothing but the time entries on a climatological axis.
    """
    try:
        entry = dict(VARIABLES[name])
    except KeyError:
        raise KeyError(
            f"no CF attributes for variable {name!r}; known: {', '.join(VARIABLES)}"
        ) from None
    method = entry.pop("time_method", None)
    if time_kind is not None and method is not None:
        if time_kind not in TIME_CELL_METHODS:
            raise KeyError(
                f"unknown time axis kind {time_kind!r}; expected one of "
                f"{', '.join(TIME_CELL_METHODS)}"
            )
        if method == "point":
            kind = "climatology_point" if time_kind == "climatology" else "point"
        else:
            kind = time_kind
        entry["cell_methods"] = TIME_CELL_METHODS[kind]
    entry.update(overrides)
    return entry


def coordinate_attrs(name: str, *, auxiliary: bool = False) -> dict[str, str]:
    """Return the attributes of the coordinate ``lat``, ``lon`` or ``time``.

    ``auxiliary=True`` drops ``axis``, for 2-D latitude/longitude of a
    curvilinear grid (auxiliary coordinate variables, CF §5.2).
    """
    attrs = dict(COORDINATES[name])
    if auxiliary:
        attrs.pop("axis", None)
    return attrs


# --- paleogeography (bcgen.geography) -----------------------------------------------------
# Standard names (table v93): surface_altitude, sea_floor_depth_below_geoid,
# land_area_fraction, land_ice_area_fraction, land_ice_thickness, cell_area,
# sea_binary_mask. The water-body labels and the mask changes are flag variables (CF §3.5)
# without a standard name.
_GEO_MEASURE = "area: cell_area"

#: Variables of the geography file, keyed by their name in the file.
GEOGRAPHY_VARIABLES: MappingProxyType = MappingProxyType({
    "orog": {"standard_name": "surface_altitude", "units": "m",
             "long_name": "surface altitude above the experiment's sea level",
             "cell_methods": "area: mean", "cell_measures": _GEO_MEASURE,
             "comment": "0 on ocean cells; the area mean of the relief elsewhere"},
    "depth": {"standard_name": "sea_floor_depth_below_geoid", "units": "m",
              "long_name": "ocean depth below the experiment's sea level",
              "cell_methods": "area: mean where sea", "cell_measures": _GEO_MEASURE},
    "sftlf": {"standard_name": "land_area_fraction", "units": "1",
              "long_name": "land area fraction (lakes count as land)",
              "cell_methods": "area: mean", "cell_measures": _GEO_MEASURE},
    "sftgif": {"standard_name": "land_ice_area_fraction", "units": "1",
               "long_name": "land ice area fraction",
               "cell_methods": "area: mean", "cell_measures": _GEO_MEASURE},
    "lithk": {"standard_name": "land_ice_thickness", "units": "m",
              "long_name": "land ice thickness, mean over the whole cell",
              "cell_methods": "area: mean", "cell_measures": _GEO_MEASURE,
              "comment": "zero where there is no ice, so that lithk * cell_area is the "
                         "ice volume"},
    "cell_area": {"standard_name": "cell_area", "units": "m2",
                  "long_name": "area of the grid cell", "cell_methods": "area: sum"},
    "sea_mask": {"standard_name": "sea_binary_mask", "units": "1",
                 "long_name": "ocean cells of the experiment (1 ocean, 0 land)",
                 "cell_measures": _GEO_MEASURE},
    "water_body": {"long_name": "water body label: 0 land, 1 world ocean, 2 and more "
                                "basins below sea level not connected to it (lakes)",
                   "cell_measures": _GEO_MEASURE},
    "mask_change": {"long_name": "change of the ocean mask from the present-day reference",
                    "flag_values": (0, 1, 2),
                    "flag_meanings": "unchanged ocean_to_land land_to_ocean",
                    "cell_measures": _GEO_MEASURE},
})
