r"""Daily-mean and instantaneous insolation at the top of the atmosphere.

The physics is written in terms of the Sun's true longitude λ (geocentric, 0 at
the March equinox, 90° at the June solstice); the model calendar enters only
through :class:`bcgen.solar_calendar.position.SolarYear`, which maps model time
to λ.

Formulas (Berger 1978; the daily mean is the standard result of integrating
the instantaneous flux over the hour angle; see Berger 1978):

.. math::

    \sin\delta = \sin\varepsilon \sin\lambda, \qquad
    \frac{a}{r} = \frac{1 - e\cos(\lambda - \varpi)}{1 - e^2}

    \bar Q = \frac{S_0}{\pi} \left(\frac{a}{r}\right)^2
        \left(H_0 \sin\varphi \sin\delta + \cos\varphi \cos\delta \sin H_0\right),
    \qquad \cos H_0 = -\tan\varphi \tan\delta \ \text{clipped to } [-1, 1]

where ϖ is the heliocentric longitude of perihelion from the March equinox
(bcgen's internal convention; the true anomaly is v = λ − ϖ − 180°), S0 the
solar constant at the mean distance a, φ the latitude and H0 the sunset hour
angle (0 in polar night, π in polar day).

References
----------
Berger, A. L. (1978): Long-term variations of daily insolation and Quaternary
climatic changes. J. Atmos. Sci. 35, 2362-2367,
doi:10.1175/1520-0469(1978)035<2362:LTVODI>2.0.CO;2
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from bcgen import arguments
from bcgen.errors import InsolationError
from bcgen.insolation.quadrature import mapped_gauss_legendre
from bcgen.orbit.elements import OrbitalElements, check_orbit
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.solar_calendar.position import SolarYear

#: Default solar constant: the CMIP6 piControl total solar irradiance, the mean of
#: 1850-01-01 to 1873-01-28 of the CMIP6 solar forcing v3.2 (Matthes et al. 2017,
#: GMD 10, 2247-2302, doi:10.5194/gmd-10-2247-2017), as the PMIP4 protocols use it.
CMIP6_PICONTROL_SOLAR_CONSTANT_WM2 = 1360.747

DailyMethod = Literal["midday", "day_average"]

#: What each daily method holds (shown in outputs next to the values).
DAILY_METHODS: dict[str, str] = {
    "midday": (
        "daily-mean formula evaluated at the middle of each model day (t = n + 0.5), with the "
        "declination and distance of that moment (the PMIP1 convention)"
    ),
    "day_average": (
        "daily-mean formula averaged over the model day [n, n + 1) by Gauss-Legendre quadrature "
        "in time, so that the change of declination and distance within the day is included "
        "(the exact day mean of the zonal-mean instantaneous insolation)"
    ),
}

#: Gauss-Legendre nodes per day for ``method="day_average"``. The integrand is
#: smooth except where a latitude enters or leaves polar night; such days are split
#: there. Error about 1e-6 W m-2 or less (tested against a brute-force time integral).
DAY_AVERAGE_NODES = 8



# --- validation ------------------------------------------------------------------------
def check_latitude_deg(latitude_deg, name: str = "latitude_deg") -> np.ndarray:
    """Return latitudes as a float array, refusing values outside [-90, 90] degrees."""
    return arguments.latitudes_deg(latitude_deg, name)


def check_solar_constant(solar_constant_wm2, name: str = "solar_constant_wm2") -> np.ndarray:
    """Return the solar constant as a float array (see :func:`bcgen.arguments.solar_constant_wm2`).

    Refuses non-finite and non-positive values and values above
    :data:`bcgen.arguments.MAX_SOLAR_CONSTANT_WM2`.
    """
    return arguments.solar_constant_wm2(solar_constant_wm2, name)


def check_one_solar_constant(solar_constant_wm2, name: str = "solar_constant_wm2") -> float:
    """Return one solar constant as a float, refusing an array of several (same rules)."""
    s0 = check_solar_constant(solar_constant_wm2, name)
    if s0.size != 1:
        raise InsolationError(f"{name}: expected one positive number of W m-2 (this function "
                              f"takes one solar constant), got an array of shape {s0.shape}")
    return float(s0.reshape(()))


def check_method(method: str) -> str:
    """Refuse an unknown daily method, listing the known ones."""
    return arguments.choice(method, "method", DAILY_METHODS, InsolationError, "daily method")


# --- the physics in terms of true longitude ---------------------------------------------
def sin_declination(true_longitude_rad, obliquity_rad) -> np.ndarray:
    """Return sin δ = sin ε sin λ (spherical astronomy; Berger 1978)."""
    return np.sin(obliquity_rad) * np.sin(true_longitude_rad)


def distance_factor(true_longitude_rad, eccentricity, perihelion_longitude_rad) -> np.ndarray:
    r"""(a/r)² from the ellipse equation, with v = λ − ϖ − π (so cos v = −cos(λ − ϖ)).

    .. math:: \left(\frac{a}{r}\right)^2 =
        \left(\frac{1 - e \cos(\lambda - \varpi)}{1 - e^2}\right)^2
    """
    e = np.asarray(eccentricity, dtype=float)
    ratio = (1.0 - e * np.cos(np.asarray(true_longitude_rad) - perihelion_longitude_rad)) / (
        1.0 - e * e
    )
    return ratio * ratio


def daily_factor(sin_lat, cos_lat, sin_dec, cos_dec) -> np.ndarray:
    """Return the bracket q = H0 sinφ sinδ + cosφ cosδ sin H0 of the daily-mean formula (≥ 0).

    Broadcasts its arguments. ``cos H0 = −(sinφ sinδ)/(cosφ cosδ)`` is clipped
    to [−1, 1], which gives H0 = 0 in polar night and H0 = π in polar day;
    sin H0 is taken as sqrt(1 − cos² H0). Rounding can make q a few ulp
    negative just outside polar night; it is clipped at 0.
    """
    x = np.multiply(sin_lat, sin_dec)
    y = np.multiply(cos_lat, cos_dec)
    c = np.empty(np.broadcast_shapes(np.shape(x), np.shape(y)))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        np.divide(x, y, out=c)
    np.negative(c, out=c)
    np.clip(c, -1.0, 1.0, out=c)
    # 0/0 only when cos φ cos δ and sin φ sin δ both vanish: the flux is 0 there whatever H0.
    c[np.isnan(c)] = 1.0
    h0 = np.arccos(c, out=np.empty_like(c))
    np.multiply(c, c, out=c)
    np.subtract(1.0, c, out=c)
    np.sqrt(c, out=c)  # sin H0
    np.multiply(c, y, out=c)
    np.multiply(h0, x, out=h0)
    np.add(h0, c, out=h0)
    np.maximum(h0, 0.0, out=h0)
    return h0


def daily_mean_insolation_wm2(
    latitude_deg,
    true_longitude_rad,
    orbit: OrbitalElements,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
) -> np.ndarray:
    r"""Daily-mean TOA insolation at a latitude and true longitude of the Sun (W m-2).

    .. math::

        \bar Q = \frac{S_0}{\pi} \left(\frac{a}{r}\right)^2
            (H_0 \sin\varphi \sin\delta + \cos\varphi \cos\delta \sin H_0)

    (Berger 1978). The declination and distance are those at λ; the result is
    the 24-hour mean of the instantaneous flux when δ and r are held fixed over
    the day, which is also the mean over all longitudes at the moment the Sun
    is at λ.

    Parameters
    ----------
    latitude_deg : float or array_like
        Latitude φ in degrees north, in [−90, 90].
    true_longitude_rad : float or array_like
        True longitude λ of the Sun in radians (0 at the March equinox).
    orbit : OrbitalElements
        Eccentricity, obliquity and ϖ (any shape).
    solar_constant_wm2 : float or array_like
        S0 at the mean Sun–Earth distance, W m-2 (default: CMIP6 piControl
        1360.747 W m-2).

    Returns
    -------
    numpy.ndarray
        Insolation in W m-2, the numpy broadcast of ``latitude_deg``,
        ``true_longitude_rad``, the orbit arrays and ``solar_constant_wm2``
        (arrange their shapes for the broadcast you want).
    """
    lat = np.deg2rad(check_latitude_deg(latitude_deg))
    s0 = check_solar_constant(solar_constant_wm2)
    lam = np.asarray(true_longitude_rad, dtype=float)
    sin_dec = sin_declination(lam, orbit.obliquity_rad)
    cos_dec = np.sqrt(1.0 - sin_dec * sin_dec)
    q = daily_factor(np.sin(lat), np.cos(lat), sin_dec, cos_dec)
    rho2 = distance_factor(lam, orbit.eccentricity, orbit.perihelion_longitude_rad)
    return (s0 / np.pi) * rho2 * q


def insolation_at_true_longitude_wm2(
    orbit: OrbitalElements,
    latitude_deg=65.0,
    true_longitude_deg=90.0,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
) -> np.ndarray:
    """Daily-mean insolation when the Sun is at a given true longitude (W m-2).

    The classic orbital-forcing index: by default the June solstice (λ = 90°)
    at 65° N (Milankovitch's latitude; Berger 1978). Calendar-free.

    Returns
    -------
    numpy.ndarray
        Shape ``orbit.shape + broadcast(latitude_deg, true_longitude_deg).shape``.
    """
    check_orbit(orbit)
    lat = check_latitude_deg(latitude_deg)
    lam = np.deg2rad(arguments.finite_array(true_longitude_deg, "true_longitude_deg",
                                            what="true longitudes in degrees"))
    s0 = check_solar_constant(solar_constant_wm2)
    shape = arguments.broadcast_shapes([("latitude_deg", lat), ("true_longitude_deg", lam)])
    if np.broadcast_shapes(s0.shape, orbit.shape + shape) != orbit.shape + shape:
        raise InsolationError(
            f"solar_constant_wm2: expected one positive number of W m-2 or an array of the "
            f"result's shape {orbit.shape + shape}, got an array of shape {s0.shape}")
    q = daily_mean_insolation_wm2(lat, lam, expand_orbit(orbit, len(shape)), s0)
    return np.broadcast_to(q, orbit.shape + shape).copy()


def expand_orbit(orbit: OrbitalElements, n_axes: int) -> OrbitalElements:
    """Return the orbit with ``n_axes`` trailing length-1 axes, to broadcast against others."""
    return orbit[(Ellipsis,) + (np.newaxis,) * n_axes]


# --- calendar-aware daily and instantaneous values -----------------------------------------
@dataclass(frozen=True)
class DailyInsolation:
    """Daily-mean insolation for the days of one model year, with the method that made it.

    Attributes
    ----------
    insolation_wm2 : numpy.ndarray
        W m-2, shape ``orbit.shape + latitude_deg.shape + (n_days,)``.
    day : numpy.ndarray
        Day numbers n (0 for 1 January): value k holds the model day [n, n + 1)
        in fractional days after 1 January 00:00.
    latitude_deg : numpy.ndarray
        Latitudes, degrees north.
    method : {"midday", "day_average"}
        How each day's value was made (see :data:`DAILY_METHODS`).
    solar_constant_wm2 : float
        S0 used, W m-2.
    calendar : str
        Name of the model calendar.
    year : int
        Model year.
    """

    insolation_wm2: np.ndarray
    day: np.ndarray
    latitude_deg: np.ndarray
    method: DailyMethod
    solar_constant_wm2: float
    calendar: str
    year: int

    def __post_init__(self) -> None:
        check_method(self.method)
        expected = self.latitude_deg.shape + self.day.shape
        if self.insolation_wm2.shape[self.insolation_wm2.ndim - len(expected):] != expected:
            raise InsolationError(
                f"insolation_wm2 has shape {self.insolation_wm2.shape}; expected "
                f"(..., {', '.join(map(str, expected))}) for the latitudes and days given"
            )

    @property
    def method_description(self) -> str:
        """One sentence saying what each daily value holds."""
        return DAILY_METHODS[self.method]


def as_calendar(calendar):
    """Return a :class:`~bcgen.solar_calendar.calendars.ModelCalendar` (or make one from a name)."""
    return calendar if isinstance(calendar, ModelCalendar) else ModelCalendar(calendar)


def days_of_year(calendar, year: int = 1) -> np.ndarray:
    """Day numbers 0 … n−1 of the whole days in a model year of the calendar."""
    return np.arange(int(round(float(as_calendar(calendar).year_length_days(year)))))


def daily_insolation(
    orbit: OrbitalElements,
    calendar,
    latitude_deg,
    solar_constant_wm2: float = CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    year: int = 1,
    days=None,
    method: DailyMethod = "midday",
) -> DailyInsolation:
    """Daily-mean TOA insolation for days of a model year (W m-2).

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements, one set per model year (any shape; leading axes of the
        result).
    calendar : ModelCalendar or str
        Model calendar with its equinox (or perihelion) anchor (a name gives the
        default anchor, March equinox at 21 March 12:00).
    latitude_deg : float or array_like
        Latitudes in degrees north.
    solar_constant_wm2 : float
        S0, W m-2 (default: CMIP6 piControl 1360.747 W m-2).
    year : int
        Model year (matters for calendars with leap years).
    days : array_like of int, optional
        Day numbers n (0 = 1 January) to evaluate; default all days of the year.
    method : {"midday", "day_average"}
        ``"midday"`` evaluates the daily-mean formula at t = n + 0.5 (the PMIP1
        convention); ``"day_average"`` averages it over [n, n + 1) with
        :data:`DAY_AVERAGE_NODES`-point Gauss-Legendre quadrature in time, so the
        change of declination and distance within the day is included.

    Returns
    -------
    DailyInsolation
        Values of shape ``orbit.shape + latitude_deg.shape + (n_days,)`` and
        the method label.
    """
    check_orbit(orbit)
    check_method(method)
    calendar = as_calendar(calendar)
    lat = check_latitude_deg(latitude_deg)
    s0 = check_one_solar_constant(solar_constant_wm2)
    day = days_of_year(calendar, year) if days is None else np.asarray(days)
    if day.ndim != 1 or not np.all(day == np.round(day)):
        raise InsolationError("days: expected a 1-D sequence of whole day numbers (0 = 1 January)")
    day = day.astype(int)
    if method == "day_average":
        # The exact mean over each day [n, n + 1): the interval mean, with its split of the
        # days in which a latitude enters or leaves polar night (one orbit at a time).
        flat = [OrbitalElements(e, eps, varpi) for e, eps, varpi in zip(
            orbit.eccentricity.reshape(-1), orbit.obliquity_deg.reshape(-1),
            orbit.perihelion_longitude_deg.reshape(-1), strict=True)]
        values = np.stack([
            interval_mean_insolation_wm2(SolarYear(one, calendar, year=year), one, lat.ravel(),
                                         day, day + 1.0, s0, method="day_average").T
            for one in flat
        ]) if flat else np.empty((0, lat.size, day.size))
    else:
        t = day + 0.5  # the middle of each day
        solar_year = SolarYear(expand_orbit(orbit, 1), calendar, year=year)
        lam = np.broadcast_to(solar_year.true_longitude_rad(t), orbit.shape + t.shape)
        values = _daily_from_longitude(lat.ravel(), lam, orbit, s0)  # orbit + (nlat, n_days)
    return DailyInsolation(
        values.reshape(orbit.shape + lat.shape + day.shape),
        day,
        lat,
        method,
        s0,
        calendar.name,
        year,
    )


def polar_edge_longitudes_rad(latitude_rad, obliquity_rad) -> np.ndarray:
    """Return the true longitudes at which a latitude enters or leaves polar day or night.

    They solve |φ| = 90° − |δ|, i.e. sin ε sin λ = ±cos φ: λ₁ = arcsin(cos φ / sin ε),
    π − λ₁, π + λ₁ and 2π − λ₁ (NaN where |cos φ| > sin ε: no polar day or night).
    Shape: broadcast shape + (4,).
    """
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        s = np.cos(latitude_rad) / np.sin(obliquity_rad)
    root = np.arcsin(np.where(s <= 1.0, s, np.nan))
    return np.stack([root, np.pi - root, np.pi + root, 2.0 * np.pi - root], axis=-1)


def _daily_from_longitude(
    lat_deg: np.ndarray, lam: np.ndarray, orbit: OrbitalElements, s0: float
) -> np.ndarray:
    """Daily means for 1-D latitudes and λ of shape ``orbit.shape + T``; result orbit + (nlat,) + T.

    The declination and distance are computed once per (orbit, time) and the
    latitude axis is added only for the bracket q, which keeps the work per
    output value to one arccos, one sqrt and a few multiplications.
    """
    n_tail = lam.ndim - len(orbit.shape)
    sub = expand_orbit(orbit, n_tail)
    sin_dec = sin_declination(lam, sub.obliquity_rad)
    cos_dec = np.sqrt(1.0 - sin_dec * sin_dec)
    scale = (s0 / np.pi) * distance_factor(lam, sub.eccentricity, sub.perihelion_longitude_rad)
    lat = np.deg2rad(lat_deg).reshape((-1,) + (1,) * n_tail)
    insert = (Ellipsis, np.newaxis) + (slice(None),) * n_tail
    q = daily_factor(np.sin(lat), np.cos(lat), sin_dec[insert], cos_dec[insert])
    q *= scale[insert]
    return q


def instantaneous_insolation(
    orbit: OrbitalElements,
    calendar,
    t_days,
    latitude_deg,
    longitude_deg,
    solar_constant_wm2: float = CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    year: int = 1,
) -> np.ndarray:
    r"""Instantaneous TOA insolation at a model time, latitude and longitude (W m-2).

    .. math::

        S = S_0 \left(\frac{a}{r}\right)^2 \max(0, \cos Z), \quad
        \cos Z = \sin\varphi \sin\delta + \cos\varphi \cos\delta \cos h

    Time of day is **mean solar time from longitude**: the hour angle is
    h = 2π(frac(t) − 0.5) + longitude, so the Sun culminates at 12:00 model
    time on the Greenwich meridian and at 12:00 − longitude/15° h elsewhere.
    The equation of time is not applied (model calendars have no real
    clock; the error is at most about 16 minutes of hour angle).

    Parameters
    ----------
    orbit : OrbitalElements
        Orbital elements (shape broadcast against the other arguments).
    calendar : ModelCalendar or str
        Model calendar with its anchor.
    t_days : array_like
        Model time, fractional days after 1 January 00:00 of the model year.
    latitude_deg, longitude_deg : array_like
        Position, degrees north and degrees east.
    solar_constant_wm2 : float
        S0, W m-2.
    year : int
        Model year.

    Returns
    -------
    numpy.ndarray
        W m-2, the numpy broadcast of ``t_days``, the position and the orbit.
    """
    check_orbit(orbit)
    lat_deg = check_latitude_deg(latitude_deg)
    lon_deg = arguments.finite_array(longitude_deg, "longitude_deg",
                                     what="longitudes in degrees east")
    s0 = check_solar_constant(solar_constant_wm2)
    t = arguments.finite_array(t_days, "t_days", what="model times in days")
    arguments.broadcast_shapes([("t_days", t), ("latitude_deg", lat_deg),
                                ("longitude_deg", lon_deg),
                                ("orbit", np.empty(np.shape(orbit.eccentricity)))])
    lat, lon = np.deg2rad(lat_deg), np.deg2rad(lon_deg)
    lam = SolarYear(orbit, calendar, year=year).true_longitude_rad(t)
    sin_dec = sin_declination(lam, orbit.obliquity_rad)
    cos_dec = np.sqrt(1.0 - sin_dec * sin_dec)
    hour_angle = 2.0 * np.pi * (t - np.floor(t) - 0.5) + lon
    cos_zenith = np.sin(lat) * sin_dec + np.cos(lat) * cos_dec * np.cos(hour_angle)
    rho2 = distance_factor(lam, orbit.eccentricity, orbit.perihelion_longitude_rad)
    return s0 * rho2 * np.maximum(cos_zenith, 0.0)


# --- means over any intervals of model time (model output of any daily-mean convention) -----
#: Ways a daily (or longer) mean can be formed from the daily-mean formula, for
#: :func:`interval_mean_insolation_wm2`: the two of :data:`DAILY_METHODS`, the mean of a
#: model's time steps, and the formula at 00:00 (which no model intends; validation uses it
#: to recognise that mistake).
INTERVAL_MEAN_METHODS: dict[str, str] = {
    **DAILY_METHODS,
    "timestep_mean": (
        "mean of the daily-mean formula at the middle of each model time step (steps of a "
        "fixed length from 00:00), the zonal mean of what a model's radiation steps receive; "
        "it tends to the day average as the step shrinks"
    ),
    "start_of_day": (
        "daily-mean formula evaluated at the start of each model day (t = n, 00:00) instead "
        "of its middle"
    ),
}


def _day_pieces(start: np.ndarray, end: np.ndarray):
    """Split intervals [start, end) at whole model days.

    Returns (interval index, piece start, piece end, day number, instantaneous) per piece;
    a zero-length interval is one instantaneous piece at its time.
    """
    instant = end - start <= 1e-9
    first = np.floor(start)
    count = np.where(instant, 1, np.maximum(np.ceil(end) - first, 1)).astype(int)
    owner = np.repeat(np.arange(start.size), count)
    within = np.arange(owner.size) - np.repeat(np.cumsum(count) - count, count)
    day = first[owner] + within
    a = np.maximum(day, start[owner])
    b = np.where(instant[owner], a, np.minimum(day + 1.0, end[owner]))
    keep = (b > a) | instant[owner]
    return owner[keep], a[keep], b[keep], day[keep], instant[owner][keep]


def _piece_nodes(a, b, day, instant, method: str, step_days: float | None):
    """Return times (n_pieces, k) and weights (summing to the piece length; 1 if instant)."""
    length = (b - a)[:, np.newaxis]
    if method == "midday":
        t, w = (day + 0.5)[:, np.newaxis], length
    elif method == "start_of_day":
        t, w = day[:, np.newaxis], length
    elif method == "day_average":
        x, wx = np.polynomial.legendre.leggauss(DAY_AVERAGE_NODES)
        t = a[:, np.newaxis] + length * (0.5 * (x + 1.0))
        w = length * (0.5 * wx)
    else:  # timestep_mean: steps [n + j dt, n + (j + 1) dt), each at its middle
        n_steps = int(round(1.0 / step_days))
        lo = day[:, np.newaxis] + step_days * np.arange(n_steps)
        t = lo + 0.5 * step_days
        w = np.clip(np.minimum(b[:, np.newaxis], lo + step_days)
                    - np.maximum(a[:, np.newaxis], lo), 0.0, None)
    t = np.where(instant[:, np.newaxis], a[:, np.newaxis], t)
    w = np.where(instant[:, np.newaxis], 1.0 / t.shape[1], w)
    return t, w


def interval_mean_insolation_wm2(
    position,
    orbit: OrbitalElements,
    latitude_deg,
    start_days,
    end_days,
    solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    method: str = "day_average",
    step_days: float | None = None,
) -> np.ndarray:
    r"""Zonal-mean TOA insolation averaged over intervals of model time (W m-2).

    Each interval [t₁, t₂) is cut at whole model days; each piece of a day
    contributes, weighted by its length, the daily mean of that day as
    ``method`` forms it (:data:`INTERVAL_MEAN_METHODS`):

    * ``midday``: the daily-mean formula at t = n + 0.5 (PMIP1 convention);
    * ``day_average``: the formula averaged over the piece with
      :data:`DAY_AVERAGE_NODES`-point Gauss-Legendre quadrature in time, the
      pieces in which a latitude enters or leaves polar night split there (as
      :func:`daily_insolation` does), so it is the exact time mean;
    * ``timestep_mean``: the formula at the middle of each time step of
      ``step_days`` (a whole number of steps per day, from 00:00), weighted by
      the part of the step inside the interval;
    * ``start_of_day``: the formula at t = n (00:00).

    Since the mean over all longitudes of the instantaneous flux at a moment is
    the daily-mean formula at that moment (Berger 1978), each of these is the
    zonal mean a model's daily or monthly output holds under that convention.
    A zero-length interval gives the formula at its time.

    Parameters
    ----------
    position : SolarYear or compatible
        Maps model time to the Sun's position: ``true_longitude_rad(t_days)`` and
        ``time_of_true_longitude_days(true_longitude_rad, near_days)`` (any object
        with these two methods, e.g. a time-shifted view of a :class:`SolarYear`).
    orbit : OrbitalElements
        One set of elements (scalar): obliquity, eccentricity and ϖ of the flux.
    latitude_deg : array_like
        Latitudes, degrees north (1-D).
    start_days, end_days : array_like
        Interval bounds, fractional days after 1 January 00:00 of the position's year.
    solar_constant_wm2 : float
        S0, W m-2.
    method : str
        A key of :data:`INTERVAL_MEAN_METHODS`.
    step_days : float, optional
        Time step of ``timestep_mean``, days (1 day divided by a whole number).

    Returns
    -------
    numpy.ndarray
        Shape (n_intervals, n_latitudes).
    """
    if method not in INTERVAL_MEAN_METHODS:
        raise InsolationError(f"method: unknown method {method!r}; expected one of "
                              f"{', '.join(INTERVAL_MEAN_METHODS)}")
    if method == "timestep_mean":
        steps = 1.0 / step_days if step_days else 0.0
        if not step_days or step_days <= 0 or abs(steps - round(steps)) > 1e-6 * steps:
            raise InsolationError(f"step_days: a time step must divide the day into a whole "
                                  f"number of steps (1/24 for hourly steps); got {step_days}")
    if orbit.shape != ():
        raise InsolationError("orbit: interval means take one set of orbital elements")
    lat = check_latitude_deg(latitude_deg).ravel()
    s0 = check_one_solar_constant(solar_constant_wm2)
    start = np.atleast_1d(np.asarray(start_days, dtype=float))
    end = np.atleast_1d(np.asarray(end_days, dtype=float))
    if start.shape != end.shape or start.ndim != 1 or np.any(~(end >= start)):
        raise InsolationError("start_days, end_days: expected 1-D interval bounds with "
                              "end >= start")
    owner, a, b, day, instant = _day_pieces(start, end)
    t, w = _piece_nodes(a, b, day, instant, method, step_days)
    lam = position.true_longitude_rad(t)
    values = daily_mean_insolation_wm2(lat[:, np.newaxis, np.newaxis], lam[np.newaxis], orbit,
                                       s0)
    pieces = np.einsum("lpk,pk->lp", values, w)  # (nlat, n_pieces)
    if method == "day_average":
        _split_pieces_at_polar_edges(pieces, position, orbit, lat, a, b, instant, s0)
    total = np.add.reduceat(w.sum(axis=1), np.searchsorted(owner, np.arange(start.size)))
    sums = np.add.reduceat(pieces, np.searchsorted(owner, np.arange(start.size)), axis=1)
    return (sums / total).T


def _split_pieces_at_polar_edges(pieces, position, orbit, lat_deg, a, b, instant, s0) -> None:
    """Redo, in place, the day-average pieces in which a latitude crosses a polar-night edge.

    The edge times come from the position's inverse (near points a third of a year
    apart, so that every crossing in the span is found); each such piece is
    integrated in two parts split at the edge with the mapped rule of
    :mod:`bcgen.insolation.quadrature`.
    """
    lat = np.deg2rad(lat_deg)
    edges = polar_edge_longitudes_rad(lat, orbit.obliquity_rad)  # (nlat, 4)
    rows, cols = np.nonzero(np.isfinite(edges))
    if rows.size == 0 or np.all(instant):
        return
    span = np.arange(float(a.min()) - 1.0, float(b.max()) + 122.0, 120.0)
    times = np.stack([position.time_of_true_longitude_days(edges[rows, cols], near_days=near)
                      for near in span], axis=-1)  # (n_edges, n_near)
    lat_of = np.repeat(rows[:, np.newaxis], span.size, axis=1).ravel()
    times = times.ravel()
    key = np.unique(np.stack([lat_of, np.round(times, 7)], axis=1), axis=0)
    lat_of, times = key[:, 0].astype(int), key[:, 1]
    hit_edge, hit_piece = np.nonzero((a[np.newaxis] < times[:, np.newaxis])
                                     & (times[:, np.newaxis] < b[np.newaxis])
                                     & ~instant[np.newaxis])
    if hit_edge.size == 0:
        return
    lo, hi, te = a[hit_piece], b[hit_piece], times[hit_edge]
    g, wg = mapped_gauss_legendre(DAY_AVERAGE_NODES)
    t = np.concatenate([lo[:, None] + (te - lo)[:, None] * g,
                        te[:, None] + (hi - te)[:, None] * g], axis=-1)
    w = np.concatenate([(te - lo)[:, None] * wg, (hi - te)[:, None] * wg], axis=-1)
    phi = lat_deg[lat_of[hit_edge]][:, np.newaxis]
    values = daily_mean_insolation_wm2(phi, position.true_longitude_rad(t), orbit, s0)
    pieces[lat_of[hit_edge], hit_piece] = np.sum(values * w, axis=-1)


def daily_mean_from_geometry_wm2(latitude_deg, declination_rad, distance_factor_,
                                 solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2
                                 ) -> np.ndarray:
    r"""Daily-mean insolation from a given declination and distance factor (W m-2).

    The formula of :func:`daily_mean_insolation_wm2` with δ and (a/r)² given
    directly (as a model's orbit routine prints them) instead of computed from
    the true longitude: :math:`\bar Q = (S_0/\pi)\,(a/r)^2\,q(\varphi, \delta)`
    (Berger 1978). Broadcasts its arguments.
    """
    lat = np.deg2rad(check_latitude_deg(latitude_deg))
    s0 = check_solar_constant(solar_constant_wm2)
    dec = np.asarray(declination_rad, dtype=float)
    q = daily_factor(np.sin(lat), np.cos(lat), np.sin(dec), np.cos(dec))
    return (s0 / np.pi) * np.asarray(distance_factor_, dtype=float) * q
