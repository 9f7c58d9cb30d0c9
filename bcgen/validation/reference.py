r"""bcgen's reference for a model's output, and the same computation with a mistake applied.

:class:`ForwardModel` predicts, for the exact time intervals and latitudes of a
model's output, the zonal-mean TOA insolation of bcgen's one insolation engine
(:func:`bcgen.insolation.daily.interval_mean_insolation_wm2`, with the Sun's
position from :class:`bcgen.solar_calendar.position.SolarYear`), and the same
prediction under the assumptions of a mistaken orbit code:

* other orbital elements (e, ε, ϖ), for instance ϖ + 180°, the modern orbit or
  another epoch;
* a solar constant scaled by a ratio;
* the orbit anchored ``shift_days`` later in the calendar (an equinox on another
  day, or day numbers counted from another origin);
* an orbital year of another length than the calendar year (a 365-day orbit in
  a 360-day calendar, or the reverse);
* the daily-mean formula taken at 00:00 of each day instead of its middle;
* an orbit that runs freely on a year of L' days from the first year's anchor
  and is never anchored again (:class:`FreeRunningSolarYear`).

Anchor shifts and year lengths enter as a remapping of model time t to the time
t' at which bcgen's orbit (anchored at day a, year length L) is evaluated,

.. math::

    t' = a + (t - a - \Delta)\,\frac{L}{L'},

with Δ the anchor shift and L' the model's orbital year: the model's Sun is at
t where bcgen's is at t'. Both are exact for a uniformly advancing mean anomaly
(Kepler's second law), which is how every orbit code places the Sun.

A free-running orbit places the model's Sun at the orbital phase
2π (T − E₀)/L' of continuous model time T, E₀ its first March equinox. In model
year y, with aᵧ the spec's anchor and Lₖ the spec's orbital year that starts at
the anchor of year k, the model's equinox falls

.. math::

    \Delta_y = \Delta_{y_0} + \sum_{k=y_0}^{y-1} (L' - L_k)

days after aᵧ (y₀ the first year of the output): 0.2422 day more each year for
the tropical year in a ``noleap`` calendar, a wobble with the leap cycle in
``proleptic_gregorian``. The phase is mapped through bcgen's orbital phase, so the
model's Sun at t is bcgen's Sun at the time of phase 2π (t − aᵧ − Δᵧ)/L', exactly
also before the anchor when the two orbital years around it differ in length.

Daily-mean conventions
    A value covering [t₁, t₂) is the time mean of the zonal-mean insolation
    over it, built from the daily means of the days it overlaps, in one of the
    legitimate conventions of :data:`DAILY_CONVENTIONS` (the engine's methods):
    ``midday`` (the formula at the middle of each day), ``day_average`` (the
    exact mean over the day) or ``timestep_mean`` (the mean over the model's
    time steps, which tends to the day average). Instantaneous values (orbit
    tables, zero-length intervals) are evaluated at their time.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from bcgen.errors import BcgenError
from bcgen.insolation.daily import INTERVAL_MEAN_METHODS, interval_mean_insolation_wm2
from bcgen.orbit.elements import OrbitalElements
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.solar_calendar.position import SolarYear
from bcgen.validation.readers import ModelOutput

#: The legitimate daily-mean conventions a model's output may follow (engine methods).
DAILY_CONVENTIONS: dict[str, str] = {name: INTERVAL_MEAN_METHODS[name]
                               for name in ("midday", "day_average", "timestep_mean")}


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
    daily_method : {"midday", "day_average", "timestep_mean"}
        The daily-mean convention of the reference (:data:`DAILY_CONVENTIONS`).
    epoch_label : str
        The epoch as the spec writes it (``6ka``), or ``""``.
    timestep_days : float or None
        Time step of ``timestep_mean``, days.
    spec_daily_method : str or None
        The spec's ``insolation.daily_method`` when the spec states it.
    """

    orbit: OrbitalElements
    solar_constant_wm2: float
    calendar: ModelCalendar
    daily_method: str = "day_average"
    epoch_label: str = ""
    timestep_days: float | None = None
    spec_daily_method: str | None = None

    def __post_init__(self) -> None:
        if self.orbit.shape != ():
            raise BcgenError("the experiment's orbit must be one set of elements (a time "
                             "slice); validate one model year of a transient run at a time")
        if self.daily_method not in DAILY_CONVENTIONS:
            raise BcgenError(f"unknown daily method {self.daily_method!r}; expected one of "
                             f"{', '.join(DAILY_CONVENTIONS)}")
        if self.daily_method == "timestep_mean" and not self.timestep_days:
            raise BcgenError("daily method timestep_mean needs the model's time step "
                             "(--timestep-minutes)")

    def on_calendar(self, name: str | None) -> Setup:
        """Return the same setup on another calendar (the model file's), keeping the anchor."""
        if not name or name == self.calendar.name:
            return self
        return replace(self, calendar=ModelCalendar(name, self.calendar.anchor))

    def with_method(self, daily_method: str, timestep_days: float | None = None) -> Setup:
        """Return the same setup with another daily-mean convention."""
        return replace(self, daily_method=daily_method,
                       timestep_days=timestep_days if daily_method == "timestep_mean" else None)


def orbit_with(orbit: OrbitalElements, *, eccentricity=None, obliquity_deg=None,
               perihelion_longitude_deg=None) -> OrbitalElements:
    """Copy scalar orbital elements, replacing some of them."""
    return OrbitalElements(
        float(orbit.eccentricity if eccentricity is None else eccentricity),
        float(orbit.obliquity_deg if obliquity_deg is None else obliquity_deg),
        float(orbit.perihelion_longitude_deg if perihelion_longitude_deg is None
              else perihelion_longitude_deg),
        None, "fixed")


@dataclass(frozen=True, eq=False)
class RemappedSolarYear:
    """The Sun of a :class:`SolarYear` seen through the time map t' = a + (t − a − Δ) s.

    ``a`` is the anchor day, Δ the anchor shift (days) and s = L / L' the ratio
    of the calendar's orbital year to the model's (module docstring). Offers the
    two methods the engine's interval means need.
    """

    solar_year: SolarYear
    shift_days: float = 0.0
    scale: float = 1.0

    def _forward(self, t):
        a = self.solar_year.anchor_day
        return a + (np.asarray(t, dtype=float) - a - self.shift_days) * self.scale

    def true_longitude_rad(self, t_days) -> np.ndarray:
        """Return the Sun's true longitude at model times, radians."""
        return self.solar_year.true_longitude_rad(self._forward(t_days))

    def time_of_true_longitude_days(self, true_longitude_rad, near_days=None) -> np.ndarray:
        """Model time at which the Sun reaches a true longitude (nearest ``near_days``)."""
        a = self.solar_year.anchor_day
        near = None if near_days is None else self._forward(near_days)
        t = self.solar_year.time_of_true_longitude_days(true_longitude_rad, near_days=near)
        return a + self.shift_days + (t - a) / self.scale


@dataclass(frozen=True, eq=False)
class FreeRunningSolarYear:
    """The Sun of a :class:`SolarYear` for an orbit running on a year of ``year_days``.

    The model's orbital phase is 2π (t − a − Δ)/L' with ``a`` the anchor day of
    the year, Δ = ``shift_days`` and L' = ``year_days`` (module docstring); the
    Sun is where bcgen's is at that orbital phase. Offers the two methods the
    engine's interval means need.
    """

    solar_year: SolarYear
    shift_days: float
    year_days: float

    def _phase(self, t):
        a = self.solar_year.anchor_day
        return 2.0 * np.pi * (np.asarray(t, dtype=float) - a - self.shift_days) / self.year_days

    def true_longitude_rad(self, t_days) -> np.ndarray:
        """Return the Sun's true longitude at model times, radians."""
        sy = self.solar_year
        return sy.true_longitude_rad(sy.time_of_orbital_phase_days(self._phase(t_days)))

    def time_of_true_longitude_days(self, true_longitude_rad, near_days=None) -> np.ndarray:
        """Model time at which the Sun reaches a true longitude (nearest ``near_days``)."""
        phase = self.solar_year.orbital_phase_of_true_longitude_rad(true_longitude_rad)
        if near_days is not None:
            near = self._phase(near_days)
            phase = near + (np.mod(phase - near + np.pi, 2.0 * np.pi) - np.pi)
        a = self.solar_year.anchor_day
        return a + self.shift_days + phase / (2.0 * np.pi) * self.year_days


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
        years = np.ones_like(output.year) if cal.every_year_alike else output.year
        key = np.stack([years.astype(float), np.round(output.start_day, 6),
                        np.round(output.end_day, 6)], axis=1)
        unique, inverse = np.unique(key, axis=0, return_inverse=True)
        self._inverse = inverse.ravel()
        self._unique = unique
        self._years = np.unique(unique[:, 0]).astype(int)
        self.n_unique = unique.shape[0]

    def with_method(self, daily_method: str, timestep_days: float | None = None
                    ) -> ForwardModel:
        """Return the same model with another daily-mean convention."""
        return ForwardModel(self.output, self.setup.with_method(daily_method, timestep_days))

    def predict(
        self,
        orbit: OrbitalElements | None = None,
        solar_ratio: float = 1.0,
        shift_days: float = 0.0,
        orbit_year_days: float | None = None,
        method: str | None = None,
        free_year_days: float | None = None,
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
        method : str, optional
            A method of the engine (:data:`bcgen.insolation.daily.INTERVAL_MEAN_METHODS`)
            instead of the setup's convention (``start_of_day`` for the Sun at 00:00).
        free_year_days : float, optional
            Length of the year on which the model's orbit runs freely from the
            first year's anchor (shifted by ``shift_days``), never anchored again
            (module docstring); ``orbit_year_days`` is then ignored.
        """
        orbit = self.setup.orbit if orbit is None else orbit
        method = self.setup.daily_method if method is None else method
        if free_year_days is not None:
            return solar_ratio * self._predict_free(orbit, shift_days, free_year_days, method)
        out = np.empty((self.n_unique, self.latitude_deg.size))
        for year in self._years:
            sel = self._unique[:, 0] == year
            solar_year = SolarYear(orbit, self.setup.calendar, year=int(year))
            scale = 1.0 if orbit_year_days is None else (
                solar_year.orbital_year_length_days / orbit_year_days)
            position = RemappedSolarYear(solar_year, shift_days, scale)
            out[sel] = interval_mean_insolation_wm2(
                position, orbit, self.latitude_deg, self._unique[sel, 1], self._unique[sel, 2],
                self.setup.solar_constant_wm2, method, self.setup.timestep_days)
        return solar_ratio * out[self._inverse]

    def _predict_free(self, orbit: OrbitalElements, shift_days: float, year_days: float,
                      method: str) -> np.ndarray:
        """Prediction for an orbit running freely on ``year_days`` (see :meth:`predict`)."""
        out = np.empty((self.output.year.size, self.latitude_deg.size))
        years = np.unique(self.output.year)
        drift = 0.0  # Δ_y − Δ_y0: L' − L_k summed over the years before y
        for year in range(int(years[0]), int(years[-1]) + 1):
            if year == 0 and not self.setup.calendar.has_year_zero:
                continue  # no year 0 in these calendars
            solar_year = SolarYear(orbit, self.setup.calendar, year=year)
            rows = np.flatnonzero(self.output.year == year)
            if rows.size:
                key = np.stack([np.round(self.output.start_day[rows], 6),
                                np.round(self.output.end_day[rows], 6)], axis=1)
                unique, inverse = np.unique(key, axis=0, return_inverse=True)
                position = FreeRunningSolarYear(solar_year, shift_days + drift, year_days)
                values = interval_mean_insolation_wm2(
                    position, orbit, self.latitude_deg, unique[:, 0], unique[:, 1],
                    self.setup.solar_constant_wm2, method, self.setup.timestep_days)
                out[rows] = values[inverse.ravel()]
            drift += year_days - solar_year.orbital_year_length_days
        return out

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
