"""Monthly insolation against the PMIP1 published check table (bcgen.insolation)."""

import numpy as np
import pytest

from bcgen.insolation import monthly_insolation
from bcgen.orbit import solve
from bcgen.solar_calendar import Anchor, ModelCalendar, parse_anchor

# Named tolerance: the requirement, and twice the rounding of values printed with
# two decimals (the table itself is rounded to 0.005).
PMIP1_TOL_WM2 = 0.01

# Bonfils et al. (1998), "Documentation of the PMIP models", appendix "About insolation
# computations" (pmip1.lsce.ipsl.fr/docs/appendoc.html): monthly-mean TOA insolation, W m-2,
# "TODAY, 365 day year, 21.00 march vernal equinox" (published-values.md §4.7, [confirmed]).
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


def _pmip1_setup():
    # Conventions of the table (published-values.md §4.7): S0 = 1365 W m-2; the 1950 orbit
    # (0.016724, 23.446°, 102.04°) given as fixed values (PMIP2/3 "0 ka" row, §1.2); 365-day
    # year; March equinox at 21 March 12:00 (t = 79.5 d); daily means at mid-day; monthly value
    # = mean of the daily means of the calendar month.
    orbit = solve(None, "fixed", eccentricity=0.016724, obliquity_deg=23.446,
                  perihelion_deg=102.04, perihelion_convention="perihelion_longitude")
    calendar = ModelCalendar("noleap", Anchor("march_equinox", 3, 21, 12, 0))
    return orbit, calendar


def test_pmip1_today_table_every_printed_value():
    orbit, calendar = _pmip1_setup()
    latitudes = list(PMIP1_TODAY_WM2)
    result = monthly_insolation(orbit, calendar, latitudes, 1365.0, months="fixed_day",
                                daily_method="midday")
    expected = np.array([PMIP1_TODAY_WM2[lat] for lat in latitudes])
    assert result.insolation_wm2.shape == (5, 12)
    assert result.definition == "fixed_day"
    assert "middle of each model day" in result.averaging
    np.testing.assert_allclose(result.insolation_wm2, expected, rtol=0, atol=PMIP1_TOL_WM2)


@pytest.mark.parametrize("equinox", ["03-21 00:00", "03-22 00:00"])
def test_pmip1_table_pins_the_equinox_convention(equinox):
    # Bonfils et al. (1998) table as above; published-values.md §4.7 notes that moving the
    # equinox by half a day changes the polar values by 2-4 W m-2. A wrong anchor must fail
    # the check, otherwise the check above could not tell conventions apart.
    orbit, _ = _pmip1_setup()
    calendar = ModelCalendar("noleap", parse_anchor(equinox))
    result = monthly_insolation(orbit, calendar, [90, -90], 1365.0)
    expected = np.array([PMIP1_TODAY_WM2[90], PMIP1_TODAY_WM2[-90]])
    assert np.abs(result.insolation_wm2 - expected).max() > 1.0
