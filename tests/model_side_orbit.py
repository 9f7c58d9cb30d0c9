r"""A typical model-side orbit routine, written apart from bcgen's engine, for the validate tests.

Climate models place the Sun with a short routine of their own. This module is
such a routine, written from the published formulas and nothing of
``bcgen.insolation`` or ``bcgen.solar_calendar`` (only the Berger 1978
coefficient tables and constants, which are data, are read from bcgen): the
tests check that ``bcgen validate`` judges its outputs right, as a model
developer's would be judged.

The routine
    1. Orbital elements e, ε, ϖ for an epoch from the Berger (1978) series.
    2. A 365-day orbital year (360 where a model says so) in which the Sun's
       mean longitude advances uniformly; the March equinox (true longitude 0)
       at day 80.5 counted from 1 (21 March 12:00 of a 365-day calendar; day
       1.0 is 1 January 00:00).
    3. The true longitude from the mean longitude through the equation of the
       centre to third order in e.
    4. sin δ = sin ε sin λ and (a/r)² from the true anomaly.
    5. The daily-mean formula at the middle of each day (or at other moments,
       for the other daily-mean conventions and for mistakes).

This module holds no tests itself.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from importlib import resources

import numpy as np
from published_tables import CMIP6_PICONTROL_TSI_WM2

# The published constants of the Berger (1978) series, typed once in bcgen's orbit module
# (data, not physics): ε* (deg), the precession rate ψ̄ (arcsec per year) and ζ (deg).
from bcgen.orbit.berger1978 import (
    OBLIQUITY_CONSTANT_DEG,
    PRECESSION_CONSTANT_DEG,
    PRECESSION_RATE_ARCSEC_PER_YEAR,
)

ARCSEC_RAD = np.pi / (180.0 * 3600.0)


def _berger_table(name: str) -> np.ndarray:
    """Rows (amplitude, rate arcsec/yr, phase deg) of a Berger (1978) table shipped with bcgen."""
    path = resources.files("bcgen.data") / "berger1978" / f"{name}.csv"
    with path.open("r", encoding="ascii") as fh:
        return np.loadtxt(fh, delimiter=",", skiprows=1, ndmin=2)[:, 1:]


def berger1978_elements(years_from_1950: float) -> tuple[float, float, float]:
    """Return (e, obliquity deg, ϖ deg) for an epoch (years from 1950 CE, negative in the past).

    Berger (1978), J. Atmos. Sci. 35, 2362-2367, the series of its Tables 1, 4, 5:
    ε = ε* + Σ A cos(f t + δ); e sin Π = Σ M sin(g t + β), e cos Π = Σ M cos(g t + β);
    ψ = ψ̄ t + ζ + Σ F sin(f' t + δ'); ϖ = Π + ψ (heliocentric, from the moving
    March equinox).
    """
    t = float(years_from_1950)
    obl = _berger_table("obliquity")
    arg = np.deg2rad(obl[:, 2]) + obl[:, 1] * ARCSEC_RAD * t
    obliquity_deg = OBLIQUITY_CONSTANT_DEG + np.sum(obl[:, 0] * np.cos(arg)) / 3600.0
    ecc = _berger_table("eccentricity")
    arg = np.deg2rad(ecc[:, 2]) + ecc[:, 1] * ARCSEC_RAD * t
    esin, ecos = np.sum(ecc[:, 0] * np.sin(arg)), np.sum(ecc[:, 0] * np.cos(arg))
    pre = _berger_table("precession")
    arg = np.deg2rad(pre[:, 2]) + pre[:, 1] * ARCSEC_RAD * t
    psi_deg = (PRECESSION_RATE_ARCSEC_PER_YEAR * t / 3600.0 + PRECESSION_CONSTANT_DEG
               + np.sum(pre[:, 0] * np.sin(arg)) / 3600.0)
    varpi_deg = (np.rad2deg(np.arctan2(esin, ecos)) + psi_deg) % 360.0
    return float(np.hypot(esin, ecos)), float(obliquity_deg), float(varpi_deg)


@dataclass(frozen=True)
class ModelOrbit:
    """The model's orbit routine and what it was given.

    Attributes
    ----------
    eccentricity, obliquity_deg, perihelion_deg : float
        The elements the model uses; ϖ heliocentric from the March equinox.
    year_days : float
        Length of the model's orbital year, days.
    equinox_day : float
        Time of the March equinox, days counted from 1 (1.0 = 1 January 00:00).
    solar_constant_wm2 : float
        S0 the model uses.
    day_number_offset : float
        Added to the day number the model passes to the routine (-1: it passes
        days counted from 0 to a routine that expects them from 1).
    """

    eccentricity: float
    obliquity_deg: float
    perihelion_deg: float
    year_days: float = 365.0
    equinox_day: float = 80.5
    solar_constant_wm2: float = CMIP6_PICONTROL_TSI_WM2  # Matthes et al. 2017
    day_number_offset: float = 0.0

    @classmethod
    def for_epoch(cls, years_from_1950: float, **kwargs) -> ModelOrbit:
        """The routine with the Berger (1978) elements of an epoch."""
        e, obl, varpi = berger1978_elements(years_from_1950)
        return cls(e, obl, varpi, **kwargs)

    def sun(self, day):
        """Return (true longitude rad, declination rad, (a/r)²) at days counted from 1."""
        e = self.eccentricity
        d = np.asarray(day, dtype=float) + self.day_number_offset
        # Longitude of perihelion seen from the Earth (the Sun's): ϖ + 180°.
        peri = np.deg2rad(self.perihelion_deg + 180.0)
        # Mean longitude at the March equinox (true longitude 0), Berger (1978), with
        # β = sqrt(1 - e²): λm0 = 2[(e/2 + e³/8)(1 + β) sin ϖ̃ - (e²/4)(1/2 + β) sin 2ϖ̃
        #                        + (e³/8)(1/3 + β) sin 3ϖ̃].
        beta = np.sqrt(1.0 - e * e)
        lam_m0 = 2.0 * ((0.5 * e + e**3 / 8.0) * (1.0 + beta) * np.sin(peri)
                        - 0.25 * e * e * (0.5 + beta) * np.sin(2.0 * peri)
                        + e**3 / 8.0 * (1.0 / 3.0 + beta) * np.sin(3.0 * peri))
        # The mean longitude advances uniformly through the orbital year (Kepler's second law).
        lam_m = lam_m0 + 2.0 * np.pi * (d - self.equinox_day) / self.year_days
        mean_anomaly = lam_m - peri
        # Equation of the centre to third order in e (classical series, e.g. Smart 1977,
        # Textbook on Spherical Astronomy, ch. V; from memory):
        # v = M + (2e - e³/4) sin M + (5/4) e² sin 2M + (13/12) e³ sin 3M.
        v = (mean_anomaly + (2.0 * e - 0.25 * e**3) * np.sin(mean_anomaly)
             + 1.25 * e * e * np.sin(2.0 * mean_anomaly)
             + 13.0 / 12.0 * e**3 * np.sin(3.0 * mean_anomaly))
        lam = np.mod(v + peri, 2.0 * np.pi)
        # Declination: sin δ = sin ε sin λ (spherical astronomy; Berger 1978).
        dec = np.arcsin(np.sin(np.deg2rad(self.obliquity_deg)) * np.sin(lam))
        # Distance: a/r = (1 + e cos v) / (1 - e²) (the conic equation of the ellipse).
        rho2 = ((1.0 + e * np.cos(v)) / (1.0 - e * e)) ** 2
        return lam, dec, rho2

    def daily_formula_wm2(self, day, lat_deg):
        """The daily-mean insolation formula at days (shape T) and latitudes: shape T + (nlat,).

        Q = (S0/π)(a/r)² (H0 sin φ sin δ + cos φ cos δ sin H0), cos H0 = −tan φ tan δ
        clipped to [−1, 1] (Berger 1978, eq. for the daily mean; H0 = 0 in polar night,
        π in polar day).
        """
        _, dec, rho2 = self.sun(day)
        phi = np.deg2rad(np.asarray(lat_deg, dtype=float))
        dec, rho2 = dec[..., np.newaxis], rho2[..., np.newaxis]
        sin_x = np.sin(phi) * np.sin(dec)
        cos_y = np.cos(phi) * np.cos(dec)
        with np.errstate(divide="ignore", invalid="ignore"):
            cos_h0 = np.clip(-sin_x / cos_y, -1.0, 1.0)
        h0 = np.arccos(cos_h0)
        q = np.maximum(h0 * sin_x + cos_y * np.sin(h0), 0.0)
        return self.solar_constant_wm2 / np.pi * rho2 * q

    def instantaneous_wm2(self, day, lat_deg, lon_deg):
        """Instantaneous flux S0 (a/r)² max(0, cos Z), shape T + (nlat, nlon).

        cos Z = sin φ sin δ + cos φ cos δ cos h, with the hour angle
        h = 2π (frac(day) − 1/2) + longitude (mean solar time, noon at 12:00 UT on the
        Greenwich meridian; common practice in model radiation codes).
        """
        d = np.asarray(day, dtype=float)
        _, dec, rho2 = self.sun(d)
        phi = np.deg2rad(np.asarray(lat_deg, dtype=float))[:, np.newaxis]
        lon = np.deg2rad(np.asarray(lon_deg, dtype=float))[np.newaxis, :]
        h = 2.0 * np.pi * (d - np.floor(d) - 0.5)[..., np.newaxis, np.newaxis] + lon
        dec = dec[..., np.newaxis, np.newaxis]
        cos_z = np.sin(phi) * np.sin(dec) + np.cos(phi) * np.cos(dec) * np.cos(h)
        return self.solar_constant_wm2 * rho2[..., np.newaxis, np.newaxis] * np.maximum(cos_z, 0)

    def daily_means_wm2(self, n_days: int, lat_deg, convention: str = "midday",
                        steps_per_day: int = 24) -> np.ndarray:
        """Daily means (n_days, nlat) of days 1 … n_days of the model's calendar.

        ``midday``: the formula at 12:00; ``start_of_day``: at 00:00 (a mistake);
        ``timestep_mean``: the mean of the formula at the middle of each of
        ``steps_per_day`` steps (a model's radiation steps); ``exact``: the same
        with 1-minute steps (the exact day average to better than 1e-4 W m-2).
        """
        day = np.arange(1, n_days + 1, dtype=float)
        if convention in ("midday", "start_of_day"):
            offset = 0.5 if convention == "midday" else 0.0
            return self.daily_formula_wm2(day + offset, lat_deg)
        steps = 1440 if convention == "exact" else steps_per_day
        out = np.zeros((n_days, np.size(lat_deg)))
        for k in range(steps):
            out += self.daily_formula_wm2(day + (k + 0.5) / steps, lat_deg)
        return out / steps

    def with_(self, **changes) -> ModelOrbit:
        """A copy with some inputs changed (a mistake)."""
        return replace(self, **changes)
