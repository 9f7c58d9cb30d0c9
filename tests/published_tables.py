"""Published check tables shared by several test modules (each value with its source).

Kept in one place so that a table is typed once; tests import from here.
"""

# Bonfils et al. (1998), "Documentation of the PMIP models", appendix "About insolation
# computations" (pmip1.lsce.ipsl.fr/docs/appendoc.html): monthly-mean TOA insolation, W m-2,
# "TODAY, 365 day year, 21.00 march vernal equinox" (published-values.md §4.7, [confirmed]).
# Conventions that reproduce it (§4.7): S0 = 1365 W m-2; the 1950 orbit (0.016724, 23.446°,
# 102.04°); 365-day year; March equinox at 21 March 12:00; daily means at mid-day; monthly
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
