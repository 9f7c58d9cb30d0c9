"""Published values the tests check against, each typed once beside its source.

Every number here comes from a document outside the project (a protocol paper, a handbook,
a standard) and is written with the digits the document prints; a test imports it from here
and names the source again beside its check. Where the exact digits were recalled rather
than read in the document, the comment says "from memory".
"""

from __future__ import annotations

from typing import NamedTuple


class ProtocolSlice(NamedTuple):
    """One PMIP4-CMIP6 time slice as its protocol prints it (values as text: their digits)."""

    epoch: str
    eccentricity: str
    obliquity_deg: str
    #: The protocols' "perihelion - 180" column: Berger's longitude of perihelion, measured
    #: from the moving March equinox (bcgen's perihelion_longitude).
    perihelion_minus_180_deg: str
    co2_ppm: str
    ch4_ppb: str
    n2o_ppb: str

    @property
    def orbit(self) -> tuple[float, float, float]:
        """(eccentricity, obliquity in degrees, perihelion - 180 in degrees) as numbers."""
        return (float(self.eccentricity), float(self.obliquity_deg),
                float(self.perihelion_minus_180_deg))

    @property
    def gases(self) -> dict[str, float]:
        """CO2 (ppm), CH4 and N2O (ppb) as numbers."""
        return {"co2": float(self.co2_ppm), "ch4": float(self.ch4_ppb),
                "n2o": float(self.n2o_ppb)}


# PMIP4-CMIP6 Tier-1 time slices. The protocol papers: Otto-Bliesner et al. (2017), "The
# PMIP4 contribution to CMIP6 - Part 2: Two interglacials", Geosci. Model Dev. 10, 3979-4003,
# doi:10.5194/gmd-10-3979-2017, Table 1 (piControl, midHolocene, lig127k), and Kageyama et al.
# (2017), "The PMIP4 contribution to CMIP6 - Part 4", Geosci. Model Dev. 10, 4035-4055,
# doi:10.5194/gmd-10-4035-2017 (lgm); the orbits are computed there with Berger (1978), and
# the March equinox is fixed at 21 March, 12:00.
# - piControl: the orbit's exact digits from memory (the PMIP3 last-millennium design page
#   gives the 1850 values 0.01676, 23.459, 100.327); the gases are the CMIP6 1850 global
#   means of Meinshausen et al. (2017, GMD 10, 2057-2116) rounded as the protocol prints them.
# - midHolocene and lgm orbits and lgm gases: the PMIP experiment-design pages (PMIP3 6 ka
#   page; PMIP4 lgm page citing Kageyama et al. 2017).
# - midHolocene gases and the lig127k row: Table 1 of Otto-Bliesner et al. (2017) as quoted by
#   public PMIP4 run configurations (a secondary copy).
PMIP4: dict[str, ProtocolSlice] = {
    "piControl": ProtocolSlice("1850CE", "0.016764", "23.459", "100.33", "284.3", "808.2",
                               "273.0"),
    "midHolocene": ProtocolSlice("6ka", "0.018682", "24.105", "0.87", "264.4", "597", "262"),
    "lig127k": ProtocolSlice("127ka", "0.039378", "24.040", "275.41", "275", "685", "255"),
    "lgm": ProtocolSlice("21ka", "0.018994", "22.949", "114.42", "190", "375", "200"),
}

# The CMIP6 pre-industrial total solar irradiance, W m-2: the mean of the CMIP6 solar forcing
# data set (Matthes et al. 2017, "Solar forcing for CMIP6 (v3.2)", GMD 10, 2247-2302,
# doi:10.5194/gmd-10-2247-2017) over 1850-01-01 to 1873-01-28, which PMIP4 keeps for every
# time slice.
CMIP6_PICONTROL_TSI_WM2 = 1360.747

# The PMIP2/PMIP3 "0 ka" orbit, the 1950 CE orbit of Berger (1978) (e, obliquity, perihelion
# - 180 in degrees), with the solar constant of PMIP1-PMIP3, 1365 W m-2 (PMIP3 design pages;
# Bonfils et al. 1998 use the same orbit and S0 in the check table below). That these are the
# 1950 CE (0 ka BP) values is from memory; Berger, Loutre & Yin (2010), QSR 29, 1968-1982,
# Table 1a use the same 0 ka orbit (a secondary source). As text (the printed digits) and
# as numbers.
PMIP_1950_ORBIT_DIGITS = ("0.016724", "23.446", "102.04")
PMIP_1950_ORBIT = tuple(float(v) for v in PMIP_1950_ORBIT_DIGITS)
PMIP_SOLAR_CONSTANT_WM2 = 1365.0

# The PMIP3 last-millennium design page (wiki.lsce.ipsl.fr/pmip3): "1850 values ecc =
# 0.01676, obl = 23.459°, peri-180° = 100.327°" (e, obliquity and perihelion - 180 in degrees,
# as text: the printed digits).
PMIP3_1850_ORBIT_DIGITS = ("0.01676", "23.459", "100.327")

# Meeus (1998), "Astronomical Algorithms", 2nd ed., Example 30.a (Kepler's equation): for
# e = 0.1 and mean anomaly M = 5 degrees the eccentric anomaly is E = 5.554589 degrees, and the
# true anomaly that follows from it is 6.139762 degrees.
MEEUS_30A = {"eccentricity": 0.1, "mean_anomaly_deg": 5.0, "eccentric_anomaly_deg": 5.554589,
             "true_anomaly_deg": 6.139762}

# Meeus (1998), "Astronomical Algorithms", 2nd ed., Example 25.a (the Sun on 1992 October
# 13.0 TD), from memory: mean anomaly M = 278.99397 degrees, e = 0.016711668, equation of the
# centre C = -1.89732 degrees, radius vector R = 0.99766 au, with R = a (1 - e^2) / (1 + e cos
# v) and a = 1.000001018 au.
MEEUS_25A = {"mean_anomaly_deg": 278.99397, "eccentricity": 0.016711668,
             "equation_of_centre_deg": -1.89732, "radius_au": 0.99766,
             "semi_major_axis_au": 1.000001018}

# Mean elements of the Earth-Moon barycentre at J2000, referred to the J2000 ecliptic and
# equinox: Simon, J. L., Bretagnon, P., Chapront, J., Chapront-Touzé, M., Francou, G. &
# Laskar, J. (1994), A&A 282, 663-683, section 5.8 / Table 5.8.1 (values from memory:
# a = 1.0000010178 au, e = 0.0167086342, ϖ = 102.93734808°, λ = 100.46645683°;
# rates per thousand Julian years: e -0.0004203654, ϖ +11612.3529″).
SIMON_A_AU = 1.0000010178
SIMON_E = 0.0167086342
SIMON_VARPI_DEG = 102.93734808
SIMON_LAMBDA_DEG = 100.46645683

# The mean tropical year at J2000, days (365 d 5 h 48 min 45 s; the Astronomical Almanac,
# from memory).
TROPICAL_YEAR_DAYS = 365.24219

# U.S. Naval Observatory, "Earth's Seasons and Apsides" for 2023, converted from Eastern time
# to UT: (month, day, hour, minute).
USNO_2023_UT = {
    "perihelion": (1, 4, 16, 17),
    "march_equinox": (3, 20, 21, 24),
    "june_solstice": (6, 21, 14, 58),
    "aphelion": (7, 6, 20, 6),
    "september_equinox": (9, 23, 6, 50),
    "december_solstice": (12, 22, 3, 27),
}

# Bonfils et al. (1998), "Documentation of the PMIP models", appendix "About insolation
# computations" (pmip1.lsce.ipsl.fr/docs/appendoc.html): monthly-mean TOA insolation, W m-2,
# "TODAY, 365 day year, 21.00 march vernal equinox". The conventions that reproduce every
# printed value to +-0.01 W m-2 (found by reproducing the table; see
# test_insolation_published.py): S0 = 1365 W m-2; the 1950 orbit (0.016724, 23.446, 102.04
# degrees); 365-day year; March equinox at 21 March 12:00; daily means at mid-day; monthly
# value = mean of the daily means of the calendar month.
PMIP1_TODAY_WM2 = {
    90: [0.00, 0.00, 16.69, 226.23, 428.89, 518.14, 478.16, 316.18, 78.00, 0.00, 0.00, 0.00],
    60: [40.79, 99.47, 199.95, 320.61, 423.31, 473.71, 449.70, 362.23, 246.58, 135.19, 57.36,
         26.96],
    0: [419.41, 433.45, 437.87, 424.80, 402.22, 387.51, 392.10, 411.28, 428.62, 431.65, 421.40,
        412.83],
    -60: [474.04, 370.62, 241.20, 124.69, 51.89, 24.98, 35.60, 88.41, 185.96, 313.84, 436.76,
          503.60],
    -90: [500.27, 313.10, 64.32, 0.00, 0.00, 0.00, 0.00, 0.00, 7.99, 206.29, 438.09, 550.37],
}

# The same conventions as an experiment spec (fixed 1950 orbit, S0 = 1365, noleap, equinox on
# 21 March 12:00, mid-day daily values).
PMIP1_SPEC_HEAD = """\
orbit:
  solution: fixed
  eccentricity: 0.016724
  obliquity_deg: 23.446
  perihelion_deg: 102.04
  perihelion_convention: perihelion_longitude
solar_constant_wm2: 1365
calendar: {name: noleap, anchor: march_equinox, date: "03-21 12:00"}
insolation: {daily_method: midday}
"""


# Volume of the world ocean today: Charette, M. A. and Smith, W. H. F. (2010), "The volume
# of Earth's ocean", Oceanography 23(2), 112-114, doi:10.5670/oceanog.2010.51:
# 1.332 x 10^9 km3.
OCEAN_VOLUME_M3 = 1.332e18
