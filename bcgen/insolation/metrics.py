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

Time integrals use ``samples`` instants per orbit, equally spaced in eccentric
anomaly E (so their times t = L (E − e sin E) / 2π follow from Kepler's equation
without solving it, and the true anomaly from cos v = (cos E − e)/(1 − e cos E),
sin v = √(1 − e²) sin E/(1 − e cos E)), and treat the insolation as piecewise
linear in time between them, so sums above a threshold are exact to second
order in the sample spacing (a few 1e-6 relative with the default 2920
samples, about every 3 hours). Orbits and latitudes are handled a block at a
time, so memory stays bounded for any number of orbits.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bcgen import arguments
from bcgen.insolation.daily import (
    CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    InsolationError,
    check_latitude_deg,
    check_one_solar_constant,
    check_solar_constant,
    daily_factor,
    distance_factor,
    expand_orbit,
    sin_declination,
)
from bcgen.insolation.monthly import (
    SECONDS_PER_DAY,
    TROPICAL_YEAR_DAYS,
    flatten_orbit,
    orbit_blocks,
)
from bcgen.insolation.quadrature import integrate_between_kinks
from bcgen.orbit.elements import OrbitalElements, check_orbit

#: Default number of instants per orbit for the time integrals (every 3 hours).
SAMPLES_PER_YEAR = 2920
#: Huybers (2006)'s default threshold for summer energy, W m-2.
HUYBERS_THRESHOLD_WM2 = 275.0


#: Most instants per orbit (one every 30 s): the integrals are exact to second order in
#: the spacing long before, and each instant costs memory per latitude.
MAX_SAMPLES = 1_000_000
#: Longest year accepted for the energies, days (about 27 Earth years; any planet a
#: climate model is run for has a shorter one).
MAX_YEAR_LENGTH_DAYS = 10_000.0


def check_samples(samples) -> int:
    """Return the number of instants per orbit: a whole number from 16 to :data:`MAX_SAMPLES`."""
    return arguments.whole_number(samples, "samples", InsolationError, low=16, high=MAX_SAMPLES)


def check_year_length_days(year_length_days) -> float:
    """Return a year length in days: a number in (0, :data:`MAX_YEAR_LENGTH_DAYS`]."""
    return arguments.bounded_number(year_length_days, "year_length_days", InsolationError,
                                    low=0.0, high=MAX_YEAR_LENGTH_DAYS, low_open=True,
                                    what="a year length in days")


def _insolation_over_orbit(
    orbit: OrbitalElements, latitude_deg, solar_constant_wm2, samples: int
) -> tuple[np.ndarray, np.ndarray]:
    """Daily-mean insolation at ``samples`` instants over one orbit, and the time between them.

    Returns ``(q, duration)``: q of shape ``orbit.shape + latitude.shape + (samples,)``
    (instant k at eccentric anomaly E_k = 2π(k + ½)/samples), and the share of the
    year from instant k to instant k + 1 (cyclic), shape ``orbit.shape + (1,) * lat.ndim
    + (samples,)``, from Kepler's equation M = E − e sin E.
    """
    lat = np.deg2rad(check_latitude_deg(latitude_deg))
    s0 = check_solar_constant(solar_constant_wm2)
    ecc_anomaly = 2.0 * np.pi * (np.arange(int(samples) + 1) + 0.5) / samples
    cos_ecc, sin_ecc = np.cos(ecc_anomaly[:-1]), np.sin(ecc_anomaly[:-1])
    per = expand_orbit(orbit, 1)
    e = per.eccentricity
    inverse_r = 1.0 / (1.0 - e * cos_ecc)  # a / r
    # λ = v + ϖ + π, so sin λ = −(sin v cos ϖ + cos v sin ϖ), with r/a · cos v = cos E − e
    # and r/a · sin v = √(1 − e²) sin E: sin δ = (a/r)(α sin E + β cos E + γ) per orbit.
    varpi, sin_eps = per.perihelion_longitude_rad, np.sin(per.obliquity_rad)
    alpha = -sin_eps * np.sqrt(1.0 - e * e) * np.cos(varpi)
    beta = -sin_eps * np.sin(varpi)
    sin_dec = alpha * sin_ecc + beta * cos_ecc
    sin_dec -= beta * e
    sin_dec *= inverse_r
    cos_dec = np.sqrt(1.0 - sin_dec * sin_dec)
    # Time from instant k to k + 1 (Kepler's equation, M = E − e sin E), a share of the year.
    step = np.diff(np.sin(ecc_anomaly))
    duration = (2.0 * np.pi / samples - e * step) / (2.0 * np.pi)
    insert = (Ellipsis,) + (np.newaxis,) * lat.ndim + (slice(None),)
    lat = lat[..., np.newaxis]
    q = daily_factor(np.sin(lat), np.cos(lat), sin_dec[insert], cos_dec[insert])
    inverse_r *= inverse_r
    inverse_r *= s0 / np.pi
    q *= inverse_r[insert]
    return q, duration[insert]


def _sampled_rows(orbit: OrbitalElements, latitude_deg, solar_constant_wm2, samples: int):
    """Yield (index, q, duration) for blocks of (orbit, latitude) rows, q of shape (rows, samples).

    ``index`` is a slice of the flattened ``orbit.shape + latitude.shape``.
    """
    lat = check_latitude_deg(latitude_deg).ravel()
    flat = flatten_orbit(orbit)
    if lat.size == 0:
        return
    for block in orbit_blocks(flat.shape[0], lat.size * int(samples)):
        q, duration = _insolation_over_orbit(flat[block], lat, solar_constant_wm2, samples)
        rows = q.shape[0] * q.shape[1]
        index = slice(block.start * lat.size, block.start * lat.size + rows)
        yield index, q.reshape(rows, -1), np.broadcast_to(duration, q.shape).reshape(rows, -1)


#: Half-width, in ranks of the sorted samples, of the first bracket of the caloric threshold.
#: The share of time above the sample of rank j is close to 1 − j / n (the samples are nearly
#: equally spaced in time); 128 of 2920 leaves room for uneven spacing up to e ≈ 0.2.
RANK_WINDOW = 128


class _Segments:
    """The piecewise-linear interpolant of periodic samples: segment k joins samples k, k + 1."""

    def __init__(self, values: np.ndarray, duration: np.ndarray):
        nxt = np.roll(values, -1, axis=-1)
        self.values, self.duration = values, duration
        self.low, self.high = np.minimum(values, nxt), np.maximum(values, nxt)
        # 1 / span, finite for flat segments so that (high − T) / span is never 0 × ∞.
        self.inverse_span = 1.0 / np.maximum(self.high - self.low, np.finfo(float).tiny)

    def total(self) -> np.ndarray:
        """Time mean of the values (trapezoid rule in time)."""
        return 0.5 * np.einsum("rn,rn->r", self.low + self.high, self.duration)

    def share_above(self, threshold: np.ndarray) -> np.ndarray:
        """Share of the time with value > threshold (one threshold per row)."""
        x = self.high - threshold[:, np.newaxis]
        with np.errstate(over="ignore"):
            x *= self.inverse_span
        np.minimum(x, 1.0, out=x)
        np.maximum(x, 0.0, out=x)
        return np.einsum("rn,rn->r", x, self.duration)

    def mean_excess(self, threshold: np.ndarray) -> np.ndarray:
        r"""Time mean of max(value − threshold, 0), exact for the piecewise-linear interpolant.

        Over a segment from a to b (values minus the threshold) the mean of max(x, 0) is
        :math:`(b_+^2 - a_+^2) / (2 (b - a))`, and a₊ for a flat segment.
        """
        t = threshold[:, np.newaxis]
        a = np.maximum(self.low - t, 0.0)
        b = np.maximum(self.high - t, 0.0)
        flat = self.high == self.low
        area = 0.5 * (b - a) * (b + a) * self.inverse_span
        area[flat] = a[flat]
        return np.einsum("rn,rn->r", area, self.duration)

    def threshold_of_share(self, share: float) -> np.ndarray:
        """Return the value exceeded during ``share`` of the time (the lowest if several).

        The share above a threshold T is piecewise linear in T between consecutive sample
        values, so it is found exactly: a search over the sorted samples brackets T
        between two neighbours (interpolating in rank, with a bisection step whenever
        interpolation stalls), then one linear interpolation gives T.
        """
        rows, n = self.values.shape
        ranked = np.sort(self.values, axis=-1)
        every = np.arange(rows)

        def share_at(j):
            return self.share_above(ranked[every, j])

        # Start from ranks near share × n (within ±RANK_WINDOW), widened where that misses.
        middle = int(round((1.0 - share) * (n - 1)))
        lo = np.full(rows, max(0, middle - RANK_WINDOW))
        hi = np.full(rows, min(n - 1, middle + RANK_WINDOW))
        f_lo, f_hi = share_at(lo), share_at(hi)
        if np.any(f_lo < share):
            lo = np.where(f_lo < share, 0, lo)
            f_lo = share_at(lo)
        if np.any(f_hi >= share):
            hi = np.where(f_hi >= share, n - 1, hi)
            f_hi = share_at(hi)
        # More than 1 − share of the time at the minimum (a long polar night): T is the minimum.
        done_low = f_lo < share
        bisect = False
        while True:
            open_ = (hi - lo > 1) & ~done_low
            if not open_.any():
                break
            width = np.max(hi - lo, where=open_, initial=0)
            if bisect:
                mid = (lo + hi) // 2
            else:
                with np.errstate(divide="ignore", invalid="ignore"):
                    guess = lo + (f_lo - share) / (f_lo - f_hi) * (hi - lo)
                mid = np.clip(np.nan_to_num(guess, nan=0.0).astype(int), lo + 1, hi - 1)
            mid = np.where(open_, mid, lo)
            f_mid = share_at(mid)
            up = open_ & (f_mid >= share)
            down = open_ & ~up
            lo, f_lo = np.where(up, mid, lo), np.where(up, f_mid, f_lo)
            hi, f_hi = np.where(down, mid, hi), np.where(down, f_mid, f_hi)
            # Bisect next when interpolation left the widest bracket more than half as wide.
            bisect = not bisect and 2 * np.max(hi - lo, where=open_, initial=0) > width
        t_lo, t_hi = ranked[every, lo], ranked[every, hi]
        with np.errstate(divide="ignore", invalid="ignore"):
            step = (f_lo - share) / (f_lo - f_hi)
        threshold = t_lo + np.nan_to_num(step, nan=0.0) * (t_hi - t_lo)
        return np.where(done_low, ranked[:, 0], threshold)


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
    check_orbit(orbit)
    lat = check_latitude_deg(latitude_deg)
    check_one_solar_constant(solar_constant_wm2)
    year_length_days = check_year_length_days(year_length_days)
    samples = check_samples(samples)
    n_rows = int(np.prod(orbit.shape)) * lat.size
    threshold, summer, total = np.empty(n_rows), np.empty(n_rows), np.empty(n_rows)
    for index, q, duration in _sampled_rows(orbit, lat, solar_constant_wm2, samples):
        segments = _Segments(q, duration)
        threshold[index] = segments.threshold_of_share(0.5)
        summer[index] = 2.0 * segments.mean_excess(threshold[index]) + threshold[index]
        total[index] = segments.total()
    shape = orbit.shape + lat.shape
    threshold, summer, total = (v.reshape(shape) for v in (threshold, summer, total))
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
    check_orbit(orbit)
    lat = check_latitude_deg(latitude_deg)
    tau = arguments.finite_array(threshold_wm2, "threshold_wm2", what="thresholds in W m-2")
    big = tau[np.abs(tau) > arguments.MAX_SOLAR_CONSTANT_WM2]
    if big.size:
        raise InsolationError(f"threshold_wm2: expected thresholds in W m-2 within "
                              f"±{arguments.MAX_SOLAR_CONSTANT_WM2:g}, got {big.ravel()[0]:g}")
    check_one_solar_constant(solar_constant_wm2)
    year_length_days = check_year_length_days(year_length_days)
    samples = check_samples(samples)
    shape = arguments.broadcast_shapes([("latitude_deg", lat), ("threshold_wm2", tau)])
    tau_rows = np.broadcast_to(tau, orbit.shape + shape).reshape(-1)
    mean_wm2 = np.empty(tau_rows.size)
    for index, q, duration in _sampled_rows(orbit, np.broadcast_to(lat, shape), solar_constant_wm2,
                                            samples):
        segments = _Segments(q, duration)
        t = tau_rows[index]
        # time mean of Q·1{Q > τ}
        mean_wm2[index] = segments.mean_excess(t) + t * segments.share_above(t)
    return mean_wm2.reshape(orbit.shape + shape) * year_length_days * SECONDS_PER_DAY / 1e9


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

    def weighted(phi: np.ndarray, sd: np.ndarray, cd: np.ndarray) -> np.ndarray:
        return daily_factor(np.sin(phi), np.cos(phi), sd, cd) * np.cos(phi)

    integral = integrate_between_kinks(weighted, lower, upper, kinks, params=(sin_dec, cos_dec))
    return (s0 / np.pi) * rho2 * integral / (np.sin(upper) - np.sin(lower))
