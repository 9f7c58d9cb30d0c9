r"""bcgen's reference for a model's output, and the same computation with a mistake applied.

:class:`ForwardModel` predicts, for the exact time intervals and latitudes of a
model's output, the zonal-mean TOA insolation that bcgen's engine gives
(:mod:`bcgen.solar_calendar.position` for the Sun's true longitude,
:func:`bcgen.insolation.daily_mean_insolation_wm2` for the flux), and the same
prediction under the assumptions of a mistaken orbit code:

* other orbital elements (e, ε, ϖ), for instance ϖ + 180°, the modern orbit or
  another epoch;
* a solar constant scaled by a ratio;
* the orbit anchored ``shift_days`` later in the calendar (an equinox on another
  day, or day numbers counted from another origin);
* an orbital year of another length than the calendar year (a 365-day orbit in
  a 360-day calendar, or the reverse).

The last two enter as a remapping of model time t to the time t' at which
bcgen's orbit (anchored at day a, year length L) is evaluated,

.. math::

    t' = a + (t - a - \Delta)\,\frac{L}{L'},

with Δ the anchor shift and L' the model's orbital year: the model's Sun is at
t where bcgen's is at t'. Both are exact for a uniformly advancing mean anomaly
(Kepler's second law), which is how every orbit code places the Sun.

Interval means
    A value covering [t₁, t₂) is the time mean of the zonal-mean insolation
    over it, built from the daily means of the days it overlaps, as the spec's
    ``insolation.daily_method`` says: ``midday`` evaluates each day at its
    middle (the PMIP1 convention) and weights it by the part of the day in the
    interval; ``day_average`` integrates over the interval with the engine's
    Gauss–Legendre nodes per day (the zonal mean of the instantaneous flux at a
    moment is the daily-mean formula at that moment, so this is the exact mean
    of the zonal-mean flux). Instantaneous values (orbit tables, zero-length
    intervals) are evaluated at their time.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from bcgen.errors import BcgenError
from bcgen.insolation import daily_mean_insolation_wm2
from bcgen.insolation.daily import DAY_AVERAGE_NODES, DailyMethod
from bcgen.orbit.elements import OrbitalElements
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.solar_calendar.position import SolarYear
from bcgen.validation.readers import ModelOutput

#: Calendars whose days map to the orbit in the same way every year.
_FIXED_LENGTH = ("noleap", "all_leap", "360_day")


@dataclass(frozen=True)
class Setup:
    """What the experiment requires, from the spec.

    Attributes
    ----------
    orbit : OrbitalElements
        Scalar orbital elements of the experiment.
    solar_constant_wm2 : float
        S0, W m-2.
    calendar : ModelCalendar
        Calendar (with its anchor) the spec names.
    daily_method : {"midday", "day_average"}
        How daily means are formed.
    epoch_label : str
        The epoch as the spec writes it (``6ka``), or ``""``.
    """

    orbit: OrbitalElements
    solar_constant_wm2: float
    calendar: ModelCalendar
    daily_method: DailyMethod = "midday"
    epoch_label: str = ""

    def __post_init__(self) -> None:
        if self.orbit.shape != ():
            raise BcgenError("the experiment's orbit must be one set of elements (a time "
                             "slice); validate one model year of a transient run at a time")
        if self.daily_method not in ("midday", "day_average"):
            raise BcgenError(f"unknown daily method {self.daily_method!r}; expected midday or "
                             f"day_average")

    def on_calendar(self, name: str | None) -> Setup:
        """Return the same setup on another calendar (the model file's), keeping the anchor."""
        if not name or name == self.calendar.name:
            return self
        return replace(self, calendar=ModelCalendar(name, self.calendar.anchor))


def orbit_with(orbit: OrbitalElements, *, eccentricity=None, obliquity_deg=None,
               perihelion_longitude_deg=None) -> OrbitalElements:
    """Copy scalar orbital elements, replacing some of them."""
    return OrbitalElements(
        float(orbit.eccentricity if eccentricity is None else eccentricity),
        float(orbit.obliquity_deg if obliquity_deg is None else obliquity_deg),
        float(orbit.perihelion_longitude_deg if perihelion_longitude_deg is None
              else perihelion_longitude_deg),
        None, "fixed")


class ForwardModel:
    """Predicted zonal-mean insolation on a model output's intervals and latitudes.

    Parameters
    ----------
    output : ModelOutput
        The model's values (only their intervals and latitudes are used).
    setup : Setup
        The experiment; its calendar should be the output's calendar
        (:meth:`Setup.on_calendar`).

    Notes
    -----
    Identical intervals (the same days of different years of a calendar without
    leap years) are computed once.
    """

    def __init__(self, output: ModelOutput, setup: Setup):
        self.output = output
        self.setup = setup
        self.latitude_deg = output.latitude_deg
        cal = setup.calendar
        years = output.year if cal.name not in _FIXED_LENGTH else np.ones_like(output.year)
        key = np.stack([years.astype(float), np.round(output.start_day, 6),
                        np.round(output.end_day, 6)], axis=1)
        unique, inverse = np.unique(key, axis=0, return_inverse=True)
        self._inverse = inverse.ravel()
        times, weights, rows = [], [], []
        if setup.daily_method == "day_average":
            x, w = np.polynomial.legendre.leggauss(DAY_AVERAGE_NODES)
            frac, wts = 0.5 * (x + 1.0), 0.5 * w
        for row, (_, lo, hi) in enumerate(unique):
            if hi - lo <= 1e-9:
                t, wt = np.array([lo]), np.array([1.0])
            else:
                first, last = np.floor(lo), np.ceil(hi)
                day = np.arange(first, last)
                a, b = np.maximum(day, lo), np.minimum(day + 1.0, hi)
                keep = b > a
                day, a, b = day[keep], a[keep], b[keep]
                if setup.daily_method == "midday":
                    t, wt = day + 0.5, (b - a)
                else:
                    t = (a[:, None] + (b - a)[:, None] * frac).ravel()
                    wt = ((b - a)[:, None] * wts).ravel()
                wt = wt / wt.sum()
            times.append(t)
            weights.append(wt)
            rows.append(np.full(t.size, row))
        self._t = np.concatenate(times)
        self._w = np.concatenate(weights)
        self._row = np.concatenate(rows)
        self._row_start = np.searchsorted(self._row, np.arange(unique.shape[0]))
        self._node_year = unique[self._row, 0].astype(int)
        self._years = np.unique(self._node_year)
        self.n_unique = unique.shape[0]

    def with_method(self, daily_method: DailyMethod) -> ForwardModel:
        """Return the same model with another daily method (a cheaper one for scans)."""
        return ForwardModel(self.output, replace(self.setup, daily_method=daily_method))

    def predict(
        self,
        orbit: OrbitalElements | None = None,
        solar_ratio: float = 1.0,
        shift_days: float = 0.0,
        orbit_year_days: float | None = None,
    ) -> np.ndarray:
        """Insolation (W m-2) of shape (n_times, n_latitudes) under the given assumptions.

        Parameters
        ----------
        orbit : OrbitalElements, optional
            Orbital elements the model used (default: the experiment's).
        solar_ratio : float
            Model's solar constant over the experiment's.
        shift_days : float
            How many days later than the spec's anchor the model anchors its
            orbit (negative: earlier).
        orbit_year_days : float, optional
            Length of the model's orbital year, if not the calendar's.
        """
        orbit = self.setup.orbit if orbit is None else orbit
        out = np.empty((self._t.size, self.latitude_deg.size))
        for year in self._years:
            sel = self._node_year == year
            solar_year = SolarYear(orbit, self.setup.calendar, year=int(year))
            t = self._t[sel]
            if orbit_year_days is not None or shift_days:
                anchor = solar_year.anchor_day
                scale = 1.0 if orbit_year_days is None else (
                    solar_year.orbital_year_length_days / orbit_year_days)
                t = anchor + (t - anchor - shift_days) * scale
            lam = solar_year.true_longitude_rad(t)
            out[sel] = daily_mean_insolation_wm2(self.latitude_deg[np.newaxis, :],
                                                 lam[:, np.newaxis], orbit,
                                                 self.setup.solar_constant_wm2)
        out *= self._w[:, np.newaxis]
        means = np.add.reduceat(out, self._row_start, axis=0)
        return solar_ratio * means[self._inverse]

    def geometry(self, t_days: np.ndarray, year: np.ndarray) -> dict[str, np.ndarray]:
        """Return the reference true longitude (deg), declination (deg), (a/r)² at model times."""
        lam = np.empty(t_days.shape)
        dec = np.empty(t_days.shape)
        rho = np.empty(t_days.shape)
        for y in np.unique(year):
            sel = year == y
            sy = SolarYear(self.setup.orbit, self.setup.calendar, year=int(y))
            lam[sel], dec[sel], rho[sel] = sy.solar_geometry(t_days[sel])
        return {"true_longitude_deg": np.rad2deg(lam), "declination_deg": np.rad2deg(dec),
                "distance_factor": rho}


def insolation_from_geometry(latitude_deg, declination_deg, distance_factor,
                             solar_constant_wm2: float) -> np.ndarray:
    r"""Daily-mean insolation from a declination and distance factor (W m-2).

    .. math::

        \bar Q = \frac{S_0}{\pi}\left(\frac{a}{r}\right)^2
            (H_0 \sin\varphi \sin\delta + \cos\varphi\cos\delta\sin H_0),
        \qquad \cos H_0 = -\tan\varphi\tan\delta

    (Berger 1978). Used to turn a model's orbit table into the insolation its
    radiation code receives; shape (n_times, n_latitudes).
    """
    phi = np.deg2rad(np.asarray(latitude_deg, dtype=float))[np.newaxis, :]
    dec = np.deg2rad(np.asarray(declination_deg, dtype=float))[:, np.newaxis]
    rho = np.asarray(distance_factor, dtype=float)[:, np.newaxis]
    x, y = np.sin(phi) * np.sin(dec), np.cos(phi) * np.cos(dec)
    with np.errstate(divide="ignore", invalid="ignore"):
        c = np.clip(-x / y, -1.0, 1.0)
    c = np.where(np.isnan(c) & np.isfinite(x) & np.isfinite(y), 1.0, c)
    h0 = np.arccos(c)
    q = np.maximum(h0 * x + y * np.sqrt(1.0 - c * c), 0.0)
    return solar_constant_wm2 / np.pi * rho * q
