"""CF attributes of the geography products, as data (CF 1.11; standard-name table v93).

Standard names used: ``surface_altitude``, ``sea_floor_depth_below_geoid``,
``land_area_fraction``, ``land_ice_area_fraction``, ``land_ice_thickness``,
``cell_area``, ``sea_binary_mask``. The water-body labels and the mask changes are
flag variables (CF §3.5) without a standard name.
"""

from types import MappingProxyType

_MEASURE = "area: cell_area"

GEOGRAPHY_VARIABLES = MappingProxyType({
    "orog": {"standard_name": "surface_altitude", "units": "m",
             "long_name": "surface altitude above the experiment's sea level",
             "cell_methods": "area: mean", "cell_measures": _MEASURE,
             "comment": "0 on ocean cells; the area mean of the relief elsewhere"},
    "depth": {"standard_name": "sea_floor_depth_below_geoid", "units": "m",
              "long_name": "ocean depth below the experiment's sea level",
              "cell_methods": "area: mean where sea", "cell_measures": _MEASURE},
    "sftlf": {"standard_name": "land_area_fraction", "units": "1",
              "long_name": "land area fraction (lakes count as land)",
              "cell_methods": "area: mean", "cell_measures": _MEASURE},
    "sftgif": {"standard_name": "land_ice_area_fraction", "units": "1",
               "long_name": "land ice area fraction",
               "cell_methods": "area: mean", "cell_measures": _MEASURE},
    "lithk": {"standard_name": "land_ice_thickness", "units": "m",
              "long_name": "land ice thickness, mean over the whole cell",
              "cell_methods": "area: mean", "cell_measures": _MEASURE,
              "comment": "zero where there is no ice, so that lithk * cell_area is the "
                         "ice volume"},
    "cell_area": {"standard_name": "cell_area", "units": "m2",
                  "long_name": "area of the grid cell", "cell_methods": "area: sum"},
    "sea_mask": {"standard_name": "sea_binary_mask", "units": "1",
                 "long_name": "ocean cells of the experiment (1 ocean, 0 land)",
                 "cell_measures": _MEASURE},
    "water_body": {"long_name": "water body label: 0 land, 1 world ocean, 2 and more "
                                "basins below sea level not connected to it (lakes)",
                   "cell_measures": _MEASURE},
    "mask_change": {"long_name": "change of the ocean mask from the present-day reference",
                    "flag_values": (0, 1, 2),
                    "flag_meanings": "unchanged ocean_to_land land_to_ocean",
                    "cell_measures": _MEASURE},
})
