"""Synthetic model outputs with deliberate mistakes, for the tests of ``bcgen validate``.

Each output is made by bcgen's own engine (:func:`bcgen.insolation.daily_insolation`)
with the mistake applied to the engine's *inputs*, the way a model's orbit code
would get it wrong, and is written as CF NetCDF (or an orbit table as CSV):

=========================  ==============================================================
mistake                    what is changed in the engine's inputs
=========================  ==============================================================
perihelion_opposite        ϖ + 180° in the orbital elements
equinox_day_shift          the March-equinox anchor on 23 March 12:00 instead of 21 March
solar_constant_ratio       S0 × 0.99
year_length_mismatch       the orbit computed on the other calendar's year (360 days in a
                           365-day output, 365 days in a 360-day output), anchored on
                           21 March 12:00 of that calendar
day_origin_off_by_one      the engine asked for day n + 1 where the output holds day n
orbit_not_applied          the 1850 CE orbit (Berger 1978) instead of the spec's epoch
orbital_elements_differ    the 21 ka orbit (Berger 1978) instead of the spec's 6 ka
=========================  ==============================================================

This module is imported by the test files; it holds no tests itself.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import cftime
import numpy as np
import xarray as xr
from published_tables import CMIP6_PICONTROL_TSI_WM2

from bcgen.epochs import parse_epoch
from bcgen.insolation import daily_insolation
from bcgen.orbit import OrbitalElements, solve
from bcgen.solar_calendar.calendars import Anchor, ModelCalendar, parse_anchor
from bcgen.solar_calendar.position import SolarYear

#: 19 latitudes, 10 degrees apart (keeps the tests fast).
LATS_19 = np.linspace(-90.0, 90.0, 19)
#: S0 of the synthetic specs: the CMIP6 piControl value (Matthes et al. 2017;
#: tests/published_tables.py).
S0_WM2 = CMIP6_PICONTROL_TSI_WM2
#: Truth of each mistake, as the diagnosis reports it (fitted value expected).
TRUTH = {
    "perihelion_opposite": None,       # computed from the spec's orbit
    "equinox_day_shift": 2.0,          # days later
    "solar_constant_ratio": 0.99,
    "day_origin_off_by_one": -1.0,     # the model's Sun one day early
    "orbit_not_applied": "1850CE",
}
MISTAKES = ("perihelion_opposite", "equinox_day_shift", "solar_constant_ratio",
            "year_length_mismatch", "day_origin_off_by_one", "orbit_not_applied",
            "orbital_elements_differ")


def write_spec(folder: Path, *, epoch: str = "6ka", calendar: str = "noleap",
               solar_constant_wm2: float = S0_WM2, daily_method: str = "day_average",
               anchor_date: str = "03-21 12:00", name: str = "spec.yaml") -> Path:
    """Write a small time-slice experiment spec and return its path."""
    path = Path(folder) / name
    path.write_text(
        "experiment:\n  name: validate_test\n"
        f"epoch: {epoch}\n"
        "orbit:\n  solution: berger1978\n"
        f"solar_constant_wm2: {solar_constant_wm2}\n"
        f"calendar:\n  name: {calendar}\n  anchor: march_equinox\n  date: \"{anchor_date}\"\n"
        f"insolation:\n  daily_method: {daily_method}\n"
        "products: [orbit]\n",
        encoding="utf-8")
    return path


@dataclass(frozen=True)
class Inputs:
    """What the model's orbit code was given (the engine's inputs)."""

    orbit: OrbitalElements
    solar_constant_wm2: float
    orbit_calendar: ModelCalendar
    day_offset: int


def model_inputs(mistake: str | None, *, epoch: str = "6ka", calendar: str = "noleap",
                 anchor_date: str = "03-21 12:00") -> Inputs:
    """The engine inputs of a model that makes ``mistake`` (None: a correct model)."""
    orbit = solve(parse_epoch(epoch))
    s0, day_offset = S0_WM2, 0
    anchor = parse_anchor(anchor_date)
    orbit_calendar = ModelCalendar(calendar, anchor)
    if mistake == "perihelion_opposite":
        orbit = OrbitalElements(orbit.eccentricity, orbit.obliquity_deg,
                                orbit.perihelion_longitude_deg + 180.0)
    elif mistake == "equinox_day_shift":
        orbit_calendar = ModelCalendar(calendar, Anchor("march_equinox", anchor.month,
                                                        anchor.day + 2, anchor.hour,
                                                        anchor.minute))
    elif mistake == "solar_constant_ratio":
        s0 = S0_WM2 * 0.99
    elif mistake == "year_length_mismatch":
        other = "noleap" if calendar == "360_day" else "360_day"
        orbit_calendar = ModelCalendar(other, anchor)
    elif mistake == "day_origin_off_by_one":
        day_offset = 1
    elif mistake == "orbit_not_applied":
        orbit = solve(parse_epoch("1850CE"))
    elif mistake == "orbital_elements_differ":
        orbit = solve(parse_epoch("21ka"))
    elif mistake is not None:
        raise ValueError(f"unknown mistake {mistake!r}")
    return Inputs(orbit, s0, orbit_calendar, day_offset)


def daily_values(inputs: Inputs, calendar: str, lats=LATS_19, year: int = 1,
                 method: str = "day_average") -> np.ndarray:
    """Daily means (n_days, n_lat) of one model year of the output calendar."""
    n_days = int(round(ModelCalendar(calendar).year_length_days(year)))
    days = np.arange(n_days) + inputs.day_offset
    d = daily_insolation(inputs.orbit, inputs.orbit_calendar, np.asarray(lats, dtype=float),
                         inputs.solar_constant_wm2, year=year, days=days, method=method)
    return np.asarray(d.insolation_wm2, dtype=float).T


def monthly_from_daily(daily: np.ndarray, calendar: str, year: int = 1) -> np.ndarray:
    """Fixed-day monthly means (12, n_lat): the mean of the daily means of each month."""
    b = ModelCalendar(calendar).month_starts_days(year).astype(int)
    return np.stack([daily[b[k]:b[k + 1]].mean(axis=0) for k in range(12)])


def synthetic_output(
    folder: Path,
    mistake: str | None = None,
    *,
    epoch: str = "6ka",
    calendar: str = "noleap",
    frequency: str = "monthly",
    lats=LATS_19,
    n_lon: int = 0,
    noise_wm2: float = 0.0,
    keep=None,
    missing_fraction: float = 0.0,
    seed: int = 0,
    method: str = "day_average",
    years: tuple[int, ...] = (1,),
    name: str = "model.nc",
    var: str = "rsdt",
    standard_name: bool = True,
    bounds: bool = True,
) -> Path:
    """Write a model output file made with ``mistake`` and return its path.

    Parameters
    ----------
    frequency : {"monthly", "daily"}
    n_lon : int
        0 for a zonal-mean file; otherwise a latitude-longitude field with this
        many longitudes, the zonal mean plus ±0.5 W m-2 alternating between
        longitudes (which averages out in the zonal mean).
    noise_wm2 : float
        Standard deviation of Gaussian noise added to every value.
    keep : slice or index array, optional
        Time steps to keep within each year (a partial year).
    missing_fraction : float
        Fraction of values replaced by the fill value.
    """
    rng = np.random.default_rng(seed)
    lats = np.asarray(lats, dtype=float)
    inputs = model_inputs(mistake, epoch=epoch, calendar=calendar)
    cal = ModelCalendar(calendar)
    blocks, starts, ends, year_of = [], [], [], []
    for year in years:
        daily = daily_values(inputs, calendar, lats, year, method)
        if frequency == "monthly":
            values = monthly_from_daily(daily, calendar, year)
            b = cal.month_starts_days(year)
            lo, hi = b[:-1], b[1:]
        elif frequency == "daily":
            values = daily
            lo = np.arange(values.shape[0], dtype=float)
            hi = lo + 1.0
        else:
            raise ValueError(frequency)
        sel = np.arange(values.shape[0]) if keep is None else np.arange(values.shape[0])[keep]
        blocks.append(values[sel])
        starts.append(lo[sel])
        ends.append(hi[sel])
        year_of.append(np.full(sel.size, year))
    values = np.concatenate(blocks)
    start, end, year_of = np.concatenate(starts), np.concatenate(ends), np.concatenate(year_of)
    if n_lon:
        wiggle = 0.5 * np.where(np.arange(n_lon) % 2 == 0, 1.0, -1.0)
        values = values[:, :, None] + wiggle
    if noise_wm2:
        values = values + noise_wm2 * rng.standard_normal(values.shape)
    if missing_fraction:
        values = np.where(rng.random(values.shape) < missing_fraction, np.nan, values)
    return write_netcdf(Path(folder) / name, values, start, end, year_of, lats, calendar,
                        var=var, standard_name=standard_name, bounds=bounds)


def write_netcdf(path: Path, values, start, end, year_of, lats, calendar: str, *,
                 var: str = "rsdt", standard_name: bool = True, bounds: bool = True,
                 attrs: dict | None = None) -> Path:
    """Write model output as CF NetCDF: values (n_times, n_lat[, n_lon]) over [start, end).

    ``start`` and ``end`` are days after 1 January 00:00 of each value's model year
    ``year_of``; a third axis of ``values`` is longitude (evenly spaced from 0).
    """
    n_lon = values.shape[2] if values.ndim == 3 else 0
    lats = np.asarray(lats, dtype=float)
    units = "days since 0001-01-01 00:00:00"
    jan1 = np.array([cftime.date2num(cftime.datetime(int(y), 1, 1, calendar=calendar), units,
                                     calendar=calendar) for y in year_of])
    t_bounds = np.stack([jan1 + start, jan1 + end], axis=1)
    dims = ("time", "lat") + (("lon",) if n_lon else ())
    attrs = {"units": "W m-2", "long_name": "TOA incident shortwave radiation",
             "cell_methods": "time: mean", **(attrs or {})}
    if standard_name:
        attrs["standard_name"] = "toa_incoming_shortwave_flux"
    time_attrs = {"units": units, "calendar": calendar, "standard_name": "time", "axis": "T"}
    if bounds:
        time_attrs["bounds"] = "time_bnds"
    coords = {
        "time": ("time", t_bounds.mean(axis=1), time_attrs),
        "lat": ("lat", lats, {"units": "degrees_north", "standard_name": "latitude"}),
    }
    if n_lon:
        coords["lon"] = ("lon", np.arange(n_lon) * 360.0 / n_lon,
                         {"units": "degrees_east", "standard_name": "longitude"})
    data_vars = {var: (dims, values.astype("float32"), attrs)}
    if bounds:
        data_vars["time_bnds"] = (("time", "nv"), t_bounds)
    ds = xr.Dataset(data_vars, coords=coords, attrs={"Conventions": "CF-1.11"})
    encoding = {var: {"_FillValue": np.float32(1.0e20)}, "time": {"_FillValue": None},
                "lat": {"_FillValue": None}}
    if bounds:
        encoding["time_bnds"] = {"_FillValue": None}
    ds.to_netcdf(path, encoding=encoding)
    return path


def orbit_table(folder: Path, mistake: str | None = None, *, epoch: str = "6ka",
                calendar: str = "noleap", step_days: float = 1.0, columns=(
                    "declination_deg", "distance_factor", "true_longitude_deg"),
                name: str = "orbit.csv") -> Path:
    """Write the table a model's orbit routine would print, made with ``mistake``."""
    inputs = model_inputs(mistake, epoch=epoch, calendar=calendar)
    n = ModelCalendar(calendar).year_length_days(1)
    t = np.arange(0.0, n, step_days)
    lam, dec, rho = SolarYear(inputs.orbit, inputs.orbit_calendar).solar_geometry(
        t + inputs.day_offset)
    if mistake == "solar_constant_ratio":
        rho = rho * 0.99  # a table has no S0: the nearest thing is a scaled distance factor
    data = {"declination_deg": np.rad2deg(dec), "distance_factor": rho,
            "true_longitude_deg": np.rad2deg(lam)}
    lines = ["# synthetic orbit table for the bcgen validate tests",
             ",".join(("time_days",) + tuple(columns))]
    for i in range(t.size):
        lines.append(",".join([f"{t[i]:.6f}"] + [f"{data[c][i]:.10f}" for c in columns]))
    path = Path(folder) / name
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path
