"""Seasonal insolation metrics used by modellers and proxy scientists.

All metrics here are calendar-free: they follow the Sun along the orbit in
time measured from perihelion, so they do not depend on how a model calendar
is anchored.

* :func:`caloric_half_years`: Milankovitch's caloric summer and winter
  half-years at a latitude, the two halves of the year such that every day of
  the summer half receives more insolation than any day of the winter half
  (Milankovitch 1941, *Kanon der Erdbestrahlung*; Berger 1978).
* :func:`summer_energy_gj_m2`: the energy received on days whose insolation
  reaches a threshold (Huybers 2006, Science 313, 508-511,
  doi:10.1126/science.1125249; threshold 275 W m-2 by default).
* :func:`band_mean_insolation_wm2`: daily-mean insolation averaged over
  latitude bands by area (cell means for a model grid).

Time integrals use a uniform grid of ``samples`` instants per orbit (uniform in
mean anomaly, found with Kepler's equation) and treat the insolation as
piecewise linear between them, so sums above a threshold are exact to second
order in the sample spacing (a few 1e-6 relative with the default 2920 samples,
i.e. every 3 hours).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bcgen.insolation.daily import (
    CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    InsolationError,
    check_latitude_deg,
    check_solar_constant,
    daily_factor,
    distance_factor,
    expand_orbit,
    sin_declination,
)
from bcgen.insolation.monthly import SECONDS_PER_DAY, TROPICAL_YEAR_DAYS
from bcgen.insolation.quadrature import integrate_between_kinks
from bcgen.orbit.elements import OrbitalElements
from bcgen.solar_calendar.kepler import mean_to_true

#: Default number of instants per orbit for the time integrals (every 3 hours).
SAMPLES_PER_YEAR = 2920
#: Huybers (2006)'s default threshold for summer energy, W m-2.
HUYBERS_THRESHOLD_WM2 = 275.0


def _insolation_over_orbit(
    orbit: OrbitalElements, latitude_deg, solar_constant_wm2, samples: int
) -> np.ndarray:
    """Daily-mean insolation at ``samples`` instants equally spaced in time over one orbit.

    Shape ``orbit.shape + latitude.shape + (samples,)``; instant k is at mean
    anomaly 2π(k + ½)/samples.
    """
    if int(samples) != samples or samples < 16:
        raise InsolationError(f"samples: expected a whole number of at least 16; got {samples}")
    lat = np.deg2rad(check_latitude_deg(latitude_deg))
    s0 = check_solar_constant(solar_constant_wm2)
    mean_anomaly = 2.0 * np.pi * (np.arange(samples) + 0.5) / samples
    per = expand_orbit(orbit, 1)
    lam = mean_to_true(mean_anomaly, per.eccentricity) + per.perihelion_longitude_rad + np.pi
    sin_dec = sin_declination(lam, per.obliquity_rad)
    cos_dec = np.sqrt(1.0 - sin_dec * sin_dec)
    rho2 = distance_factor(lam, per.eccentricity, per.perihelion_longitude_rad)
    insert = (Ellipsis,) + (np.newaxis,) * lat.ndim + (slice(None),)
    lat = lat[..., np.newaxis]
    q = daily_factor(np.sin(lat), np.cos(lat), sin_dec[insert], cos_dec[insert])
    return (s0 / np.pi) * q * rho2[insert]


def _above(values: np.ndarray, threshold) -> tuple[np.ndarray, np.ndarray]:
    """Return the share of time above ``threshold`` and the mean excess of a periodic series.

    Returns ``(fraction, excess)``: the share of time with value > threshold,
    and the time mean of max(value − threshold, 0), both exact for the linear
    interpolant of the samples (closed around the period).
    """
    threshold = np.asarray(threshold)[..., np.newaxis]
    a = values - threshold
    b = np.roll(a, -1, axis=-1)
    hi, lo = np.maximum(a, b), np.minimum(a, b)
    span = hi - lo
    with np.errstate(divide="ignore", invalid="ignore"):
        part = np.where(lo >= 0, 1.0, np.where(hi <= 0, 0.0, hi / span))
    # Area above 0 of the segment: trapezoid if wholly above, triangle if it crosses.
    area = np.where(lo >= 0, 0.5 * (a + b), 0.5 * np.maximum(hi, 0.0) * part)
    return part.mean(axis=-1), area.mean(axis=-1)


@dataclass(frozen=True)
class CaloricHalfYears:
    """Milankovitch's caloric half-years at a latitude.

    Attributes
    ----------
    summer_wm2, winter_wm2 : numpy.ndarray
        Mean insolation over the caloric summer and winter half-years, W m-2.
    threshold_wm2 : numpy.ndarray
        The daily insolation that separates them (every summer instant has at
        least this much, every winter instant at most this much), W m-2.
    summer_energy_gj_m2, winter_energy_gj_m2 : numpy.ndarray
        Energies received over each half-year, GJ m-2.
    """

    summer_wm2: np.ndarray
    winter_wm2: np.ndarray
    threshold_wm2: np.ndarray
    summer_energy_gj_m2: np.ndarray
    winter_energy_gj_m2: np.ndarray


def caloric_half_years(
    orbit: OrbitalElements,
    latitude_deg,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    year_length_days: float = TROPICAL_YEAR_DAYS,
    samples: int = SAMPLES_PER_YEAR,
) -> CaloricHalfYears:
    r"""Caloric summer and winter half-year insolation at each latitude.

    The caloric summer half-year is the half of the year (182.62 days) in which
    every day receives more insolation than any day of the other half
    (Milankovitch 1941; Berger 1978): it is the set {t : Q(t) > Q*} whose
    length is half the year. Q* is found by bisection on the piecewise-linear
    daily-insolation curve, and

    .. math::

        E_{summer} = \int \max(Q - Q^*, 0)\,dt + Q^* \frac{L}{2}.

    At tropical latitudes the summer half-year can consist of two separate
    periods (two insolation maxima); the definition still holds.

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements (leading axes of the results).
    latitude_deg : float or array_like
        Latitudes, degrees north.
    solar_constant_wm2 : float
        S0, W m-2.
    year_length_days : float
        Year length for the energies (default the tropical year); the means in
        W m-2 do not depend on it.
    samples : int
        Instants per orbit of the time integral.

    Returns
    -------
    CaloricHalfYears
        Arrays of shape ``orbit.shape + latitude_deg.shape``.
    """
    q = _insolation_over_orbit(orbit, latitude_deg, solar_constant_wm2, samples)
    low, high = q.min(axis=-1), q.max(axis=-1)
    for _ in range(60):  # bisection: (high − low) shrinks to ~1e-15 of the range
        mid = 0.5 * (low + high)
        fraction, _ = _above(q, mid)
        above = fraction > 0.5
        low, high = np.where(above, mid, low), np.where(above, high, mid)
    threshold = 0.5 * (low + high)
    _, excess = _above(q, threshold)
    total = q.mean(axis=-1)
    summer = 2.0 * excess + threshold
    # When more than half the year is dark the threshold is 0 and summer holds all the energy.
    summer = np.minimum(summer, 2.0 * total)
    winter = 2.0 * total - summer
    half_year_s = 0.5 * year_length_days * SECONDS_PER_DAY
    return CaloricHalfYears(summer, winter, threshold, summer * half_year_s / 1e9,
                            winter * half_year_s / 1e9)


def summer_energy_gj_m2(
    orbit: OrbitalElements,
    latitude_deg=65.0,
    threshold_wm2=HUYBERS_THRESHOLD_WM2,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    year_length_days: float = TROPICAL_YEAR_DAYS,
    samples: int = SAMPLES_PER_YEAR,
) -> np.ndarray:
    r"""Summer energy: insolation integrated over the time it is at least a threshold (GJ m-2).

    Huybers (2006) defines :math:`J = \sum_i \beta_i W_i \times 86400` s over
    the days i of the year, with W_i the daily-mean insolation and β_i = 1 when
    W_i ≥ τ (τ = 275 W m-2), else 0. This is the same integral in continuous
    time (the daily sum is its one-sample-per-day version and differs from it
    by the placement of the days, typically well under 1 %).

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements (leading axes of the result).
    latitude_deg : float or array_like
        Latitudes, degrees north (default 65° N).
    threshold_wm2 : float or array_like
        τ, W m-2 (default 275, Huybers 2006); broadcast against the latitudes.
    solar_constant_wm2 : float
        S0, W m-2.
    year_length_days : float
        Length of the year in days of 86400 s (default the tropical year).
    samples : int
        Instants per orbit of the time integral.

    Returns
    -------
    numpy.ndarray
        GJ m-2, shape ``orbit.shape + broadcast(latitude, threshold).shape``.
    """
    lat = check_latitude_deg(latitude_deg)
    tau = np.asarray(threshold_wm2, dtype=float)
    shape = np.broadcast_shapes(lat.shape, tau.shape)
    q = _insolation_over_orbit(orbit, np.broadcast_to(lat, shape), solar_constant_wm2, samples)
    fraction, excess = _above(q, tau)
    mean_wm2 = excess + tau * fraction  # time mean of Q·1{Q > τ}
    return mean_wm2 * year_length_days * SECONDS_PER_DAY / 1e9


def band_mean_insolation_wm2(
    latitude_bounds_deg,
    true_longitude_rad,
    orbit: OrbitalElements,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
) -> np.ndarray:
    r"""Daily-mean insolation averaged by area over latitude bands (W m-2).

    .. math::

        \bar Q_{band} = \frac{\int_{\varphi_1}^{\varphi_2} \bar Q(\varphi) \cos\varphi\,
            d\varphi}{\sin\varphi_2 - \sin\varphi_1}

    integrated by Gauss-Legendre quadrature split at the polar-night edges
    |φ| = 90° − |δ| (:mod:`bcgen.insolation.quadrature`), so a band that
    contains a polar circle of the day is averaged accurately. The global
    band [−90°, 90°] gives (S0/4)(a/r)² exactly (checked in the tests).

    Parameters
    ----------
    latitude_bounds_deg : array_like, shape (n, 2)
        Lower and upper latitude of each band (CF bounds layout), degrees north.
    true_longitude_rad : float or array_like
        True longitude λ of the Sun, radians (shape T).
    orbit : OrbitalElements
        Orbital elements.
    solar_constant_wm2 : float
        S0, W m-2.

    Returns
    -------
    numpy.ndarray
        W m-2, shape ``orbit.shape + (n,) + T``.
    """
    bounds = check_latitude_deg(latitude_bounds_deg, "latitude_bounds_deg")
    if bounds.ndim != 2 or bounds.shape[1] != 2 or np.any(bounds[:, 1] <= bounds[:, 0]):
        raise InsolationError(
            "latitude_bounds_deg: expected an (n, 2) array of [lower, upper] latitudes with "
            "upper > lower"
        )
    s0 = check_solar_constant(solar_constant_wm2)
    lam = np.asarray(true_longitude_rad, dtype=float)
    sub = expand_orbit(orbit, 1 + lam.ndim)
    sin_dec = sin_declination(lam, sub.obliquity_rad)  # orbit + (1,) + T
    cos_dec = np.sqrt(1.0 - sin_dec * sin_dec)
    rho2 = distance_factor(lam, sub.eccentricity, sub.perihelion_longitude_rad)
    rad = np.deg2rad(bounds).reshape((-1,) + (1,) * lam.ndim + (2,))
    lower, upper = rad[..., 0], rad[..., 1]
    edge = 0.5 * np.pi - np.abs(np.arcsin(sin_dec))
    kinks = np.stack(np.broadcast_arrays(edge, -edge), axis=-1)
    sd, cd = sin_dec[..., np.newaxis, np.newaxis], cos_dec[..., np.newaxis, np.newaxis]

    def weighted(phi: np.ndarray) -> np.ndarray:
        return daily_factor(np.sin(phi), np.cos(phi), sd, cd) * np.cos(phi)

    integral = integrate_between_kinks(weighted, lower, upper, kinks)
    return (s0 / np.pi) * rho2 * integral / (np.sin(upper) - np.sin(lower))
