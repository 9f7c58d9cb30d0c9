"""Top-of-atmosphere insolation: daily, instantaneous, monthly, annual, and seasonal metrics.

=====================  ===============================================================
module                 contents
=====================  ===============================================================
``daily``              the daily-mean formula in terms of the Sun's true longitude;
                       daily values for model days (midday or day average);
                       instantaneous values at a model time and place
``monthly``            energy over arcs of true longitude (Kepler's second law),
                       fixed-day and fixed-angle monthly means, annual means
``metrics``            caloric half-years, summer energy above a threshold,
                       means over latitude bands
``quadrature``         Gauss-Legendre quadrature split at the polar-night edges
=====================  ===============================================================

Units: W m-2 for fluxes, J m-2 or GJ m-2 for energies; degrees at the
interface, radians inside. Numpy only (no xarray): the writer turns the
results into CF datasets.
"""

from __future__ import annotations

from bcgen.insolation.daily import (
    CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    DAILY_METHODS,
    DailyInsolation,
    InsolationError,
    daily_insolation,
    daily_mean_insolation_wm2,
    insolation_at_true_longitude_wm2,
    instantaneous_insolation,
)
from bcgen.insolation.metrics import (
    CaloricHalfYears,
    band_mean_insolation_wm2,
    caloric_half_years,
    summer_energy_gj_m2,
)
from bcgen.insolation.monthly import (
    MONTHLY_AVERAGING,
    MonthlyInsolation,
    annual_mean_insolation_wm2,
    insolation_energy_between_true_longitudes_j_m2,
    mean_insolation_between_true_longitudes_wm2,
    monthly_insolation,
)

__all__ = [
    "CMIP6_PICONTROL_SOLAR_CONSTANT_WM2",
    "DAILY_METHODS",
    "MONTHLY_AVERAGING",
    "CaloricHalfYears",
    "DailyInsolation",
    "InsolationError",
    "MonthlyInsolation",
    "annual_mean_insolation_wm2",
    "band_mean_insolation_wm2",
    "caloric_half_years",
    "daily_insolation",
    "daily_mean_insolation_wm2",
    "insolation_at_true_longitude_wm2",
    "insolation_energy_between_true_longitudes_j_m2",
    "instantaneous_insolation",
    "mean_insolation_between_true_longitudes_wm2",
    "monthly_insolation",
    "summer_energy_gj_m2",
]
