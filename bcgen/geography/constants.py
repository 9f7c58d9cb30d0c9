"""Physical constants of the geography products, each with its source.

Kept in one place so that the change report and the products agree.
"""

#: Mean radius of the Earth, m: the arithmetic mean radius R1 of the Geodetic Reference
#: System 1980 (Moritz 2000, "Geodetic Reference System 1980", Journal of Geodesy 74,
#: 128-133, doi:10.1007/s001900050278): 6 371 008.7714 m.
EARTH_RADIUS_M = 6_371_008.7714

#: Density of glacier ice, kg m-3, used for sea-level equivalents (common practice:
#: 917 kg m-3 is the usual value for pure ice near 0 degC; from memory).
ICE_DENSITY_KG_M3 = 917.0

#: Density of sea water used to turn an ice mass into a sea-level equivalent, kg m-3
#: (common practice: about 1028 kg m-3 for mean sea water; from memory).
SEAWATER_DENSITY_KG_M3 = 1028.0
