r"""Insolation integrated over arcs of the orbit, monthly means and annual means.

Kepler's second law (equal areas in equal times) gives the time spent per
unit of true longitude,

.. math::

    dt = \frac{L}{2\pi} \left(\frac{r}{a}\right)^2 \frac{d\lambda}{\sqrt{1 - e^2}},

with L the length of the (anomalistic = model) year. The factor (r/a)² cancels
the (a/r)² of the flux, so the energy received between two true longitudes is

.. math::

    \int Q\,dt = \frac{L S_0}{2\pi^2 \sqrt{1 - e^2}}
        \int_{\lambda_1}^{\lambda_2} q(\varphi, \lambda)\,d\lambda,
    \qquad q = H_0 \sin\varphi\sin\delta + \cos\varphi\cos\delta\sin H_0,

which depends on the orbit only through ε and √(1 − e²), not through ϖ
(Huybers 2006, Science 313, 508-511, doi:10.1126/science.1125249; Berger,
Loutre & Yin 2010, Quat. Sci. Rev. 29, 1968-1982,
doi:10.1016/j.quascirev.2010.05.007). The λ-integral is done by Gauss-Legendre
quadrature split at the polar-night edges (:mod:`bcgen.insolation.quadrature`).

Monthly means:

* **fixed-day months** (``fixed_day``): the arithmetic mean of the daily means of the days of
  the calendar month (the PMIP1 convention; Bonfils et al. 1998);
* **fixed-angle months** (``fixed_angle``): the exact time mean over the fractional days the
  month spans, i.e. the energy over its arc of true longitude divided by its
  length in days.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from bcgen import arguments
from bcgen.insolation.daily import (
    CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    DAILY_METHODS,
    DailyMethod,
    InsolationError,
    as_calendar,
    check_latitude_deg,
    check_one_solar_constant,
    check_solar_constant,
    daily_factor,
    daily_insolation,
    expand_orbit,
    polar_edge_longitudes_rad,
)
from bcgen.insolation.quadrature import (
    integrate_between_kinks,
    mapped_gauss_legendre,
    pieces_between_kinks,
)
from bcgen.orbit.elements import OrbitalElements, check_orbit
from bcgen.solar_calendar.kepler import true_to_mean
from bcgen.solar_calendar.months import MonthTable, fixed_angle_months, fixed_day_months
from bcgen.solar_calendar.position import SolarYear

MonthDefinition = Literal["fixed_day", "fixed_angle"]

#: What a monthly mean holds under each month definition (the month definitions themselves
#: are :data:`bcgen.solar_calendar.months.MONTH_DEFINITIONS`).
MONTHLY_AVERAGING: dict[str, str] = {
    "fixed_day": "mean of the daily means of the calendar month's days",
    "fixed_angle": "exact time mean over the fractional days the month spans (energy over its "
                   "arc of true longitude, by Kepler's second law, divided by its length)",
}

#: Mean tropical year, days (365 d 5 h 48 min 45 s; the Astronomical Almanac's value, from
#: memory), the default year length for energies in J m-2.
TROPICAL_YEAR_DAYS = 365.24219
SECONDS_PER_DAY = 86400.0
#: Arcs of true longitude integrated at once (bounds the memory of the quadrature's pieces).
INTERVALS_PER_BLOCK = 2**15
#: Latitudes with cos φ ≥ sin ε + SMOOTH_MARGIN (no polar day or night, more than about 3°
#: equatorward of the polar circle) are integrated with SMOOTH_NODES nodes per piece between
#: solstices and equinoxes: against 48 nodes the λ-integrals of 30° arcs agreed to 4e-13
#: relative there (obliquities 22-24.5°), 5e-9 for 12 nodes without the margin.
SMOOTH_MARGIN = 0.05
SMOOTH_NODES = 12
#: Values per orbit block of :func:`monthly_insolation` and of the seasonal metrics (orbits x
#: latitudes x days or instants of a year): 2**17 values are 1 MiB per temporary array, so
#: a block's arrays stay in the processor's caches (8,001 orbits at one latitude ran 1.5
#: times faster than with blocks of 2**20 values on a loaded 2-core machine).
VALUES_PER_BLOCK = 2**17
#: Values per block of the shared-declination quadrature (pieces x nodes x latitudes).
QUADRATURE_VALUES_PER_BLOCK = 2**18


def _kinks_in_longitude(lat_rad, obliquity_rad, lower) -> np.ndarray:
    """Break points of q in λ from ``lower`` on: polar-night edges, solstices, equinoxes.

    The edges are where |φ| = 90° − |δ|, i.e. sin ε sin λ = ±cos φ; NaN where a
    latitude has none. Shape: broadcast shape + (16,), covering the two revolutions an arc of at
    most 2π from ``lower`` can touch.
    """
    edges = polar_edge_longitudes_rad(lat_rad, obliquity_rad)
    # The solstices and equinoxes are added because just equatorward of the polar circles q
    # is smooth but sharply curved at the solstices (polar day or night almost reached).
    quarters = np.broadcast_to(np.arange(4) * (0.5 * np.pi), edges.shape)
    base = np.concatenate([edges, quarters], axis=-1)
    turn = 2.0 * np.pi * np.floor(np.asarray(lower) / (2.0 * np.pi))[..., np.newaxis]
    return np.concatenate([base + turn + 2.0 * np.pi * j for j in range(2)], axis=-1)


def integrate_daily_factor(latitude_rad, start_rad, end_rad, obliquity_rad) -> np.ndarray:
    """∫ q(φ, λ) dλ from ``start_rad`` to ``end_rad`` (start ≤ end ≤ start + 2π).

    q is the bracket of the daily-mean formula (:func:`~bcgen.insolation.daily.daily_factor`).
    All arguments broadcast; the result has their broadcast shape. The intervals are
    integrated :data:`INTERVALS_PER_BLOCK` at a time along the first axis, so memory stays
    bounded for any number of orbits.
    """
    args = [np.asarray(v, dtype=float) for v in (latitude_rad, start_rad, end_rad, obliquity_rad)]
    shape = np.broadcast_shapes(*(a.shape for a in args))
    if not shape:
        return _integrate_daily_factor_block(*args)
    args = [a.reshape((1,) * (len(shape) - a.ndim) + a.shape) for a in args]
    out = np.empty(shape)
    step = max(1, INTERVALS_PER_BLOCK // max(1, int(np.prod(shape[1:]))))
    for i in range(0, shape[0], step):
        block = [a if a.shape[0] == 1 else a[i : i + step] for a in args]
        out[i : i + step] = _integrate_daily_factor_block(*block)
    return out


def _integrate_daily_factor_block(lat, lo, hi, eps) -> np.ndarray:
    lat, lo, hi, eps = np.broadcast_arrays(lat, lo, hi, eps)

    def q(lam, sin_lat, cos_lat, sin_eps):
        sin_dec = sin_eps * np.sin(lam)
        return daily_factor(sin_lat, cos_lat, sin_dec, np.sqrt(1.0 - sin_dec * sin_dec))

    kinks = _kinks_in_longitude(lat, eps, lo)
    return integrate_between_kinks(q, lo, hi, kinks, params=(np.sin(lat), np.cos(lat), np.sin(eps)),
                                   closed_form=_polar_day_or_night)


def _polar_day_or_night(start, width, sin_lat, cos_lat, sin_eps):
    """∫ q dλ over pieces wholly in polar night (0) or polar day (closed form).

    The polar-night edges are kinks, so a piece lies in one regime throughout; its
    midpoint tells which. In polar night H0 = 0 and q = 0; in polar day H0 = π and
    q = π sin φ sin δ = π sin φ sin ε sin λ, whose integral is
    π sin φ sin ε (cos λ1 − cos λ2). Other pieces are left to the quadrature.
    """
    sin_dec = sin_eps * np.sin(start + 0.5 * width)
    x = sin_lat * sin_dec
    y = cos_lat * np.sqrt(1.0 - sin_dec * sin_dec)
    night, day = x <= -y, x >= y  # cos H0 = -x / y at or beyond ±1
    integral = np.where(day, np.pi * sin_lat * sin_eps * (np.cos(start) - np.cos(start + width)),
                        0.0)
    return night | day, integral


def integrate_arcs_over_latitudes(latitude_rad, start_rad, end_rad, obliquity_rad) -> np.ndarray:
    """∫ q(φ, λ) dλ over N arcs of true longitude at each of L latitudes: shape (N, L).

    ``latitude_rad`` has shape (L,); ``start_rad``, ``end_rad`` and ``obliquity_rad``
    (N,). The same as :func:`integrate_daily_factor` on the outer product, faster:
    at latitudes at least :data:`SMOOTH_MARGIN` (in cos φ) away from having polar day
    or night for every arc, q is smooth in λ apart from the sharp bends near the
    solstices, so the arcs are split at the solstices and equinoxes only, the
    declination at each node is shared by all those latitudes, and
    :data:`SMOOTH_NODES` nodes per piece suffice. Other latitudes take the general
    route (polar-night edges as kinks, :data:`~bcgen.insolation.quadrature.NODES_PER_PIECE`
    nodes).
    """
    lat = np.asarray(latitude_rad, dtype=float)
    lo, hi, eps = (np.asarray(v, dtype=float) for v in (start_rad, end_rad, obliquity_rad))
    arcs = hi > lo  # empty arcs (the second piece of a month that does not cross the anchor)
    if not arcs.all():
        out = np.zeros((lo.size, lat.size))
        out[arcs] = integrate_arcs_over_latitudes(lat, lo[arcs], hi[arcs], eps[arcs])
        return out
    out = np.empty((lo.size, lat.size))
    sin_eps = np.sin(eps)
    smooth = np.cos(lat) >= sin_eps.max(initial=0.0) + SMOOTH_MARGIN
    if not smooth.all():
        out[:, ~smooth] = integrate_daily_factor(lat[~smooth], lo[:, np.newaxis],
                                                 hi[:, np.newaxis], eps[:, np.newaxis])
    if smooth.any():
        out[:, smooth] = _integrate_smooth_latitudes(lat[smooth], lo, hi, sin_eps)
    return out


def _integrate_smooth_latitudes(lat, lo, hi, sin_eps) -> np.ndarray:
    """Integrate by the fast route of :func:`integrate_arcs_over_latitudes` (no polar night)."""
    turn = 2.0 * np.pi * np.floor(lo / (2.0 * np.pi))[:, np.newaxis]
    quarters = turn + np.arange(8) * (0.5 * np.pi)  # two revolutions: an arc spans at most 2π
    row, start, width = pieces_between_kinks(lo, hi, quarters)
    g, wg = mapped_gauss_legendre(SMOOTH_NODES)
    sin_lat, cos_lat = np.sin(lat), np.cos(lat)
    out = np.zeros((lo.size, lat.size))
    step = max(1, QUADRATURE_VALUES_PER_BLOCK // (SMOOTH_NODES * lat.size))
    for i in range(0, row.size, step):
        rows = row[i : i + step]
        x = start[i : i + step, np.newaxis] + width[i : i + step, np.newaxis] * g
        sin_dec = sin_eps[rows, np.newaxis] * np.sin(x)
        cos_dec = np.sqrt(1.0 - sin_dec * sin_dec)
        q = daily_factor(sin_lat, cos_lat, sin_dec[..., np.newaxis], cos_dec[..., np.newaxis])
        pieces = np.einsum("pnl,n->pl", q, wg) * width[i : i + step, np.newaxis]
        first = np.flatnonzero(np.concatenate([[True], rows[1:] != rows[:-1]]))
        out[rows[first]] += np.add.reduceat(pieces, first, axis=0)
    return out


def _energy_scale(orbit: OrbitalElements, s0, year_length_days) -> np.ndarray:
    """L S0 / (2π² √(1 − e²)): W m-2 day per unit of ∫ q dλ."""
    e = orbit.eccentricity
    return year_length_days * s0 / (2.0 * np.pi**2 * np.sqrt(1.0 - e * e))


def insolation_energy_between_true_longitudes_j_m2(
    orbit: OrbitalElements,
    latitude_deg,
    start_true_longitude_deg,
    end_true_longitude_deg,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    year_length_days: float = TROPICAL_YEAR_DAYS,
) -> np.ndarray:
    r"""TOA energy received while the Sun moves between two true longitudes (J m-2).

    .. math::

        E = \frac{L S_0}{2\pi^2 \sqrt{1 - e^2}} \int_{\lambda_1}^{\lambda_2} q\,d\lambda
            \times 86400 \ \mathrm{s\,day^{-1}}

    Independent of the longitude of perihelion ϖ (Kepler's second law; Huybers
    2006; Berger, Loutre & Yin 2010). The arc runs eastward from the start to
    the end longitude (wrapping through 360° when end < start).

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements (leading axes of the result).
    latitude_deg, start_true_longitude_deg, end_true_longitude_deg : array_like
        Latitude (degrees north) and the arc of true longitude (degrees),
        broadcast together.
    solar_constant_wm2 : float
        S0, W m-2.
    year_length_days : float
        Length of the orbital year in days of 86400 s (default the mean
        tropical year, 365.24219 days).

    Returns
    -------
    numpy.ndarray
        J m-2, shape ``orbit.shape + broadcast(latitude, start, end).shape``.
    """
    lat = np.deg2rad(check_latitude_deg(latitude_deg))
    s0 = check_solar_constant(solar_constant_wm2)
    start = np.deg2rad(np.asarray(start_true_longitude_deg, dtype=float))
    end = np.deg2rad(np.asarray(end_true_longitude_deg, dtype=float))
    end = start + np.mod(end - start, 2.0 * np.pi)
    shape = np.broadcast_shapes(lat.shape, start.shape, end.shape)
    sub = expand_orbit(orbit, len(shape))
    integral = integrate_daily_factor(lat, start, end, sub.obliquity_rad)
    return _energy_scale(sub, s0, year_length_days) * integral * SECONDS_PER_DAY


def annual_mean_insolation_wm2(
    orbit: OrbitalElements,
    latitude_deg,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
) -> np.ndarray:
    r"""Exact annual-mean TOA insolation at each latitude (W m-2), calendar-free.

    .. math::

        \langle Q \rangle = \frac{S_0}{2\pi^2 \sqrt{1 - e^2}} \int_0^{2\pi} q\,d\lambda

    Its global mean is S0 / (4√(1 − e²)) and its value at either pole
    S0 sin ε / (π √(1 − e²)) (both checked in the test suite).

    Returns
    -------
    numpy.ndarray
        W m-2, shape ``orbit.shape + latitude_deg.shape``.
    """
    check_orbit(orbit)
    lat = np.deg2rad(check_latitude_deg(latitude_deg))
    s0 = check_solar_constant(solar_constant_wm2)
    sub = expand_orbit(orbit, lat.ndim)
    integral = integrate_daily_factor(lat, 0.0, 2.0 * np.pi, sub.obliquity_rad)
    return _energy_scale(sub, s0, 1.0) * integral


def mean_insolation_between_true_longitudes_wm2(
    orbit: OrbitalElements,
    latitude_deg,
    start_true_longitude_rad,
    end_true_longitude_rad,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
) -> np.ndarray:
    """Time-mean insolation while the Sun moves over an arc of true longitude (W m-2).

    The energy of :func:`insolation_energy_between_true_longitudes_j_m2` divided
    by the time the arc takes, from Kepler's equation,
    Δt = L (M(λ2) − M(λ1)) / 2π with M the mean anomaly; L cancels.

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements.
    latitude_deg : float or array_like
        Latitudes, degrees north.
    start_true_longitude_rad, end_true_longitude_rad : array_like
        The arcs, radians, of shape ``orbit.shape + T`` (for instance T = (12,)
        for months); end > start, at most one revolution apart.
    solar_constant_wm2 : float
        S0, W m-2.

    Returns
    -------
    numpy.ndarray
        W m-2, shape ``orbit.shape + latitude_deg.shape + T``.
    """
    lat = check_latitude_deg(latitude_deg)
    s0 = check_solar_constant(solar_constant_wm2)
    start, end = np.broadcast_arrays(np.asarray(start_true_longitude_rad, dtype=float),
                                     np.asarray(end_true_longitude_rad, dtype=float))
    integral, dm = _arc_integrals(orbit, lat, start, end)
    n_arc = start.ndim - len(orbit.shape)
    insert = (Ellipsis,) + (np.newaxis,) * lat.ndim + (slice(None),) * n_arc
    e = expand_orbit(orbit, lat.ndim + n_arc).eccentricity
    # ⟨Q⟩ = (L S0 / (2π² √(1−e²))) ∫q dλ / (L ΔM / 2π) = S0 ∫q dλ / (π √(1−e²) ΔM)
    return s0 * integral / (np.pi * np.sqrt(1.0 - e * e) * dm[insert])


def _arc_integrals(orbit: OrbitalElements, lat_deg: np.ndarray, start, end):
    """∫ q dλ over arcs of true longitude, and the mean anomaly the Sun sweeps over each.

    ``start`` and ``end`` (radians) have shape ``orbit.shape + T``; returns the
    integrals, shape ``orbit.shape + lat.shape + T``, and ΔM, shape
    ``orbit.shape + T`` (the arc takes ΔM L / 2π days in an orbital year of L days).
    """
    n_arc = start.ndim - len(orbit.shape)
    if n_arc < 0 or start.shape[: len(orbit.shape)] != orbit.shape:
        raise InsolationError(
            f"true-longitude arcs of shape {start.shape} do not start with the orbit's shape "
            f"{orbit.shape}"
        )
    arc = expand_orbit(orbit, n_arc)
    e, varpi = arc.eccentricity, arc.perihelion_longitude_rad
    # Mean anomalies keep their revolution, so ΔM is the time of the arc even across perihelion.
    dm = true_to_mean(end - varpi - np.pi, e) - true_to_mean(start - varpi - np.pi, e)
    n_orbit, n_lat = int(np.prod(orbit.shape)), lat_deg.size
    obliquity = np.broadcast_to(arc.obliquity_rad, start.shape)
    integral = integrate_arcs_over_latitudes(np.deg2rad(lat_deg).ravel(), start.ravel(),
                                             end.ravel(), obliquity.ravel())
    integral = integral.reshape(n_orbit, -1, n_lat).transpose(0, 2, 1)
    return integral.reshape(orbit.shape + lat_deg.shape + start.shape[len(orbit.shape):]), dm


@dataclass(frozen=True)
class MonthlyInsolation:
    """Monthly-mean insolation for one model year, with the month definition used.

    Attributes
    ----------
    insolation_wm2 : numpy.ndarray
        W m-2, shape ``orbit.shape + latitude_deg.shape + (12,)``.
    latitude_deg : numpy.ndarray
        Latitudes, degrees north.
    months : bcgen.solar_calendar.months.MonthTable
        The month boundaries (fractional days after 1 January 00:00 of the
        model year) and the Sun's true longitude at each start.
    definition : {"fixed_day", "fixed_angle"}
        Month definition.
    averaging : str
        What each monthly value holds, in words.
    solar_constant_wm2 : float
        S0, W m-2.
    """

    insolation_wm2: np.ndarray
    latitude_deg: np.ndarray
    months: MonthTable
    definition: MonthDefinition
    averaging: str
    solar_constant_wm2: float

    def __post_init__(self) -> None:
        check_month_definition(self.definition)
        if self.insolation_wm2.shape[-1:] != (12,):
            raise InsolationError(
                f"insolation_wm2 must end with 12 months; got shape {self.insolation_wm2.shape}"
            )


def check_month_definition(definition: str) -> str:
    """Refuse an unknown month definition, listing the known ones."""
    return arguments.choice(definition, "months", MONTHLY_AVERAGING, InsolationError,
                            "month definition")


def monthly_insolation(
    orbit: OrbitalElements,
    calendar,
    latitude_deg,
    solar_constant_wm2: float = CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    months: MonthDefinition = "fixed_day",
    reference: OrbitalElements | None = None,
    year: int = 1,
    daily_method: DailyMethod = "midday",
) -> MonthlyInsolation:
    """Monthly-mean TOA insolation over fixed-day or fixed-angle months (W m-2).

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements of the experiment (leading axes of the result).
    calendar : ModelCalendar or str
        Model calendar with its anchor.
    latitude_deg : float or array_like
        Latitudes, degrees north.
    solar_constant_wm2 : float
        S0, W m-2 (default: CMIP6 piControl 1360.747 W m-2).
    months : {"fixed_day", "fixed_angle"}
        ``"fixed_day"``: calendar months, value = mean of the daily means made
        with ``daily_method`` (the PMIP1 convention with ``"midday"``; Bonfils
        et al. 1998). ``"fixed_angle"``: months spanning the true-longitude arcs
        of the reference orbit's calendar months, value = exact time mean over
        the fractional days spanned (``daily_method`` does not apply).
    reference : OrbitalElements, optional
        Reference orbit of fixed-angle months (default that of
        :func:`bcgen.solar_calendar.months.fixed_angle_months`: 1950 CE).
    year : int
        Model year.
    daily_method : {"midday", "day_average"}
        Daily values averaged into fixed-day months.

    Returns
    -------
    MonthlyInsolation
        Values of shape ``orbit.shape + latitude_deg.shape + (12,)`` with the
        month table and a sentence saying what the values hold.

    Notes
    -----
    In calendars with leap years an orbital year that contains 29 February
    is 366 days long (see :mod:`bcgen.solar_calendar.calendars`); a
    fixed-angle month that contains the anchor is split there and each part
    weighted by the length of its own orbital year.
    """
    check_orbit(orbit)
    if reference is not None:
        check_orbit(reference, "reference")
    check_month_definition(months)
    arguments.choice(daily_method, "daily_method", DAILY_METHODS, InsolationError,
                     "daily method")
    calendar = as_calendar(calendar)
    lat = check_latitude_deg(latitude_deg)
    s0 = check_one_solar_constant(solar_constant_wm2)
    if months == "fixed_day":
        table = fixed_day_months(orbit, calendar, year=year)
        averaging = f"{MONTHLY_AVERAGING[months]}; daily values: {DAILY_METHODS[daily_method]}"
    else:
        table = fixed_angle_months(orbit, calendar, reference=reference, year=year)
        averaging = MONTHLY_AVERAGING[months]
    if months == "fixed_angle":
        values = time_mean_over_months_wm2(orbit, calendar, lat, table.start_day,
                                           table.end_day, s0, year=year)
        return MonthlyInsolation(values, lat, table, months, averaging, s0)
    flat = flatten_orbit(orbit)
    start = table.start_day.reshape(-1, 12)
    end = table.end_day.reshape(-1, 12)
    values = np.empty((flat.shape[0], lat.size, 12))
    for block in orbit_blocks(flat.shape[0], lat.size * 366):  # a year of daily values
        daily = daily_insolation(flat[block], calendar, lat.ravel(), s0, year=year,
                                 method=daily_method)
        values[block] = _mean_over_day_months(daily.insolation_wm2, start[block], end[block])
    values = values.reshape(orbit.shape + lat.shape + (12,))
    return MonthlyInsolation(values, lat, table, months, averaging, s0)


def time_mean_over_months_wm2(
    orbit: OrbitalElements,
    calendar,
    latitude_deg,
    start_day,
    end_day,
    solar_constant_wm2: float = CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    year: int = 1,
) -> np.ndarray:
    """Exact time-mean TOA insolation over 12 months of fractional days (W m-2).

    The energy over each month's arc of true longitude (Kepler's second law, see the
    module notes) divided by its length in days: what :func:`monthly_insolation` gives
    for fixed-angle months, for months computed beforehand (for instance once for the
    time bounds and the values of a transient chunk).

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements (leading axes of the result).
    calendar : ModelCalendar or str
        Model calendar with its anchor.
    latitude_deg : float or array_like
        Latitudes, degrees north.
    start_day, end_day : array_like
        Start and end of each month, days after 1 January 00:00 of ``year``, shape
        ``orbit.shape + (12,)`` (for instance ``MonthTable.start_day`` and ``end_day``);
        each month shorter than an orbital year.
    solar_constant_wm2 : float
        S0, W m-2.
    year : int
        Model year of the table.

    Returns
    -------
    numpy.ndarray
        W m-2, shape ``orbit.shape + latitude_deg.shape + (12,)``.
    """
    calendar = as_calendar(calendar)
    lat = check_latitude_deg(latitude_deg)
    s0 = check_one_solar_constant(solar_constant_wm2)
    flat = flatten_orbit(orbit)
    start = np.asarray(start_day, dtype=float)
    end = np.asarray(end_day, dtype=float)
    if start.shape != orbit.shape + (12,) or end.shape != start.shape:
        raise InsolationError(
            f"months of shape {start.shape} and {end.shape} do not match the orbit's shape "
            f"{orbit.shape} + (12,)"
        )
    start, end = start.reshape(-1, 12), end.reshape(-1, 12)
    values = np.empty((flat.shape[0], lat.size, 12))
    # 12 months of at most two arcs per orbit (the quadrature inside works in blocks of its own).
    for block in orbit_blocks(flat.shape[0], lat.size * 24):
        values[block] = _fixed_angle_means(flat[block], calendar, year, start[block],
                                           end[block], lat.ravel(), s0)
    return values.reshape(orbit.shape + lat.shape + (12,))


def flatten_orbit(orbit: OrbitalElements) -> OrbitalElements:
    """Return the orbit's elements on one axis (a scalar orbit becomes an orbit of length 1)."""
    t = orbit.years_from_1950
    return OrbitalElements(
        orbit.eccentricity.reshape(-1),
        orbit.obliquity_deg.reshape(-1),
        orbit.perihelion_longitude_deg.reshape(-1),
        None if t is None else t.reshape(-1),
        orbit.solution,
    )


def orbit_blocks(n_orbits: int, values_per_orbit: int, budget: int | None = None):
    """Slices of at most ``budget // values_per_orbit`` orbits (at least one) covering n_orbits.

    The work of many orbits is done a block at a time, so the temporary arrays stay
    within :data:`VALUES_PER_BLOCK` values whatever the number of orbits.
    """
    budget = VALUES_PER_BLOCK if budget is None else budget
    step = max(1, budget // max(1, values_per_orbit))
    return [slice(i, min(i + step, n_orbits)) for i in range(0, n_orbits, step)]


def _fixed_angle_means(orbit, calendar, year, t0, t1, lat, s0) -> np.ndarray:
    """Exact time means over months [t0, t1) (days), split at the anchor (leap-year rule).

    ``orbit`` is 1-D, ``t0`` and ``t1`` of shape ``orbit.shape + (12,)``, ``lat`` 1-D.
    Works for any months shorter than an orbital year.
    """
    solar = SolarYear(expand_orbit(orbit, 1), calendar, year=year)
    start = solar.true_longitude_rad(t0)
    end = start + np.mod(solar.true_longitude_rad(t1) - start, 2.0 * np.pi)
    anchors = calendar.anchor_days(year, (-2, -1, 0, 1, 2))
    lengths = np.diff(anchors)
    tolerance = 1e-9  # days; a month that starts at the anchor belongs to the orbital year it opens
    k = np.clip(np.searchsorted(anchors, t0 + tolerance, side="right") - 1, 0, lengths.size - 2)
    crossing = anchors[k + 1] < t1 - tolerance
    per = expand_orbit(orbit, 1)
    varpi = per.perihelion_longitude_rad
    anchor_lam = 0.0 if calendar.anchor.kind == "march_equinox" else varpi + np.pi
    split = np.where(crossing, start + np.mod(anchor_lam - start, 2.0 * np.pi), end)
    # Two pieces per month on a new axis: [start, split] in orbital year k, [split, end] in k + 1.
    lo = np.stack([start, split], axis=-1)
    hi = np.stack([split, end], axis=-1)
    weight = np.stack([lengths[k], lengths[k + 1]], axis=-1)  # orbital-year lengths, days
    integral, dm = _arc_integrals(orbit, lat, lo, hi)
    days = np.sum(weight * dm, axis=-1) / (2.0 * np.pi)  # month lengths from Kepler's equation
    insert = (Ellipsis,) + (np.newaxis,) * lat.ndim + (slice(None),) * 2
    energy = np.sum(weight[insert] * integral, axis=-1)  # / (S0 / (2π² √(1−e²))), W m-2 day
    e = expand_orbit(orbit, lat.ndim + 1).eccentricity
    return s0 * energy / (2.0 * np.pi**2 * np.sqrt(1.0 - e * e) * days[insert[:-1]])


def _mean_over_day_months(daily_wm2: np.ndarray, start_day, end_day) -> np.ndarray:
    """Mean of daily values over months of whole days [start, end); daily axis last."""
    start = np.asarray(start_day, dtype=float).reshape(-1, 12)[0]
    end = np.asarray(end_day, dtype=float).reshape(-1, 12)[0]
    if not (np.all(start == np.round(start)) and np.all(end == np.round(end))):
        raise InsolationError("fixed-day months must start and end on whole days")
    cumulative = np.concatenate(
        [np.zeros(daily_wm2.shape[:-1] + (1,)), np.cumsum(daily_wm2, axis=-1)], axis=-1
    )
    lo, hi = start.astype(int), end.astype(int)
    return (cumulative[..., hi] - cumulative[..., lo]) / (hi - lo)
