"""``bcgen validate`` with default options on outputs of an independent model-side orbit routine.

The outputs come from ``model_side_orbit.py`` (a typical model routine written
from the published formulas, not from bcgen's engine), correct and with each
catalogued mistake, daily and monthly, on noleap and 360_day axes, in each
daily-mean convention; and from bcgen's own daily product for every bundled
protocol config on a grid with the pole rows. Expected values are the truth of
each construction or published protocol values (named beside each check).
"""

from __future__ import annotations

import dataclasses
import datetime
import re
from pathlib import Path

import numpy as np
import pytest
from model_side_orbit import ModelOrbit, berger1978_elements
from published_tables import (
    CMIP6_PICONTROL_TSI_WM2,
    PMIP4,
    PMIP_SOLAR_CONSTANT_WM2,
    TROPICAL_YEAR_DAYS,
)
from validate_synthetic import write_netcdf

import bcgen
from bcgen.solar_calendar.calendars import ModelCalendar
from bcgen.spec import load_spec
from bcgen.spec.grid import GridSpec
from bcgen.validation import validate

#: PMIP4 lig127k (Otto-Bliesner et al. 2017, GMD 10, 3979-4003, Table 1; also in
#: configs/protocols/lig127k.yaml; typed in tests/published_tables.py).
LIG127K = PMIP4["lig127k"]
#: Its perihelion - 180 is 275.41 deg, so a model that used the value 180 deg off has 95.41.
LIG127K_OPPOSITE_DEG = round(float(LIG127K.perihelion_minus_180_deg) - 180.0, 2)
#: 127 ka in years from 1950 CE.
EPOCH_YEARS = -127000.0
#: 13 latitudes from pole to pole (15 degrees apart) keep the tests fast.
LATS_POLES = np.linspace(-90.0, 90.0, 13)
#: Cell centres without pole rows, and a 32-row Gaussian grid (latitudes of the
#: Gauss-Legendre nodes, common practice in spectral models).
LATS_NO_POLES = np.arange(-85.0, 86.0, 10.0)
LATS_GAUSSIAN = np.rad2deg(np.arcsin(np.polynomial.legendre.leggauss(32)[0]))
#: The March equinox on 21 March 12:00, counted from 1: day 80.5 in a 365-day calendar,
#: 81.5 in a 360-day one (two 30-day months before March).
EQUINOX_DAY = {"noleap": 80.5, "360_day": 81.5}
YEAR_DAYS = {"noleap": 365.0, "360_day": 360.0}

SPEC = """\
experiment:
  name: model_side_check
epoch: 127ka
orbit:
  solution: berger1978
solar_constant_wm2: {s0}
calendar:
  name: {calendar}
  anchor: march_equinox
  date: "03-21 12:00"
products: [orbit]
"""

#: Each mistake: (what the model is given, first finding expected).
MISTAKES = ("perihelion_opposite", "equinox_day_shift", "solar_constant_ratio",
            "year_length_mismatch", "day_origin_off_by_one", "orbit_not_applied",
            "orbital_elements_differ", "sun_at_day_start", "calendar_differs")


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("model_side")


def spec_path(folder: Path, calendar: str) -> Path:
    path = folder / f"spec_{calendar}.yaml"
    if not path.exists():
        path.write_text(SPEC.format(calendar=calendar, s0=CMIP6_PICONTROL_TSI_WM2),
                        encoding="utf-8")
    return path


def model_routine(mistake: str | None, calendar: str) -> ModelOrbit:
    """The routine as a model on ``calendar`` runs it, with ``mistake``."""
    model = ModelOrbit.for_epoch(EPOCH_YEARS, year_days=YEAR_DAYS[calendar],
                                 equinox_day=EQUINOX_DAY[calendar])
    if mistake == "perihelion_opposite":
        return model.with_(perihelion_deg=(model.perihelion_deg + 180.0) % 360.0)
    if mistake == "equinox_day_shift":  # the equinox two days late (23 March)
        return model.with_(equinox_day=model.equinox_day + 2.0)
    if mistake == "solar_constant_ratio":
        return model.with_(solar_constant_wm2=PMIP_SOLAR_CONSTANT_WM2)
    if mistake == "year_length_mismatch":  # the other calendar's orbital year
        other = "noleap" if calendar == "360_day" else "360_day"
        return model.with_(year_days=YEAR_DAYS[other], equinox_day=EQUINOX_DAY[other])
    if mistake == "day_origin_off_by_one":  # days counted from 0 passed to a routine from 1
        return model.with_(day_number_offset=-1.0)
    if mistake == "orbit_not_applied":
        return ModelOrbit.for_epoch(-100.0, year_days=model.year_days,
                                    equinox_day=model.equinox_day)  # 1850 CE
    if mistake == "orbital_elements_differ":
        return ModelOrbit.for_epoch(-21000.0, year_days=model.year_days,
                                    equinox_day=model.equinox_day)  # 21 ka
    return model


def model_file(folder: Path, mistake: str | None, *, calendar: str = "noleap",
               frequency: str = "daily", convention: str = "midday", lats=LATS_POLES,
               steps_per_day: int = 24, n_lon: int = 0) -> Path:
    """Write what the model would output (zonal means, or a lat-lon field)."""
    if mistake == "sun_at_day_start":
        convention = "start_of_day"
    n_days = int(YEAR_DAYS[calendar])
    model = model_routine(mistake, calendar)
    if n_lon:  # instantaneous flux on a lat-lon grid at each time step, averaged per day
        lon = np.arange(n_lon) * 360.0 / n_lon
        daily = np.zeros((n_days, lats.size, n_lon))
        for k in range(steps_per_day):
            daily += model.instantaneous_wm2(np.arange(1, n_days + 1) + (k + 0.5) / steps_per_day,
                                             lats, lon)
        daily /= steps_per_day
    else:
        daily = model.daily_means_wm2(n_days, lats, convention, steps_per_day)
    if frequency == "daily":
        start = np.arange(n_days, dtype=float)
        end, values = start + 1.0, daily
    else:
        bounds = ModelCalendar(calendar).month_starts_days(1)
        start, end = bounds[:-1], bounds[1:]
        values = np.stack([daily[int(a):int(b)].mean(axis=0) for a, b in zip(start, end,
                                                                              strict=True)])
    name = f"{mistake}_{calendar}_{frequency}_{convention}{steps_per_day}_{lats.size}_{n_lon}.nc"
    return write_netcdf(folder / name, values, start, end, np.ones(start.size, int), lats,
                        calendar)


def test_model_side_elements_are_berger1978():
    # The routine's elements reproduce the PMIP4 lig127k table to its digits (Otto-Bliesner
    # et al. 2017, Table 1: e 0.039378, obliquity 24.040, perihelion - 180 = 275.41).
    e, obliquity, varpi = berger1978_elements(EPOCH_YEARS)
    published_e, published_obliquity, published_varpi = LIG127K.orbit
    assert e == pytest.approx(published_e, abs=1e-6)
    assert obliquity == pytest.approx(published_obliquity, abs=1e-3)
    assert varpi == pytest.approx(published_varpi, abs=0.01)


# --- correct outputs: consistent with default options, the convention reported ---------------
@pytest.mark.parametrize("convention, steps, lats, calendar, expected", [
    ("midday", 1, LATS_POLES, "noleap", "midday"),
    ("midday", 1, LATS_POLES, "360_day", "midday"),
    ("midday", 1, LATS_NO_POLES, "noleap", None),
    ("exact", 1, LATS_POLES, "noleap", "day_average"),
    ("exact", 1, LATS_GAUSSIAN, "360_day", "day_average"),
    ("timestep_mean", 24, LATS_POLES, "noleap", "day_average"),
    ("timestep_mean", 8, LATS_NO_POLES, "noleap", "day_average"),
], ids=["midday-poles", "midday-360", "midday-nopoles", "exact-poles", "exact-gauss-360",
        "1h-steps-poles", "3h-steps-nopoles"])
def test_correct_daily_outputs_are_consistent(folder, convention, steps, lats, calendar,
                                              expected):
    path = model_file(folder, None, calendar=calendar, convention=convention, lats=lats,
                      steps_per_day=steps)
    result = validate(path, spec_path(folder, calendar))
    assert result.verdict == "consistent", result.reasons
    assert result.findings == ()
    assert result.convention.source == "fitted"
    if expected is None:  # without the pole rows midday and day average differ < 0.1 W m-2
        assert result.convention.distinguishable is False
    else:
        assert result.convention.method == expected
        if expected == "midday":
            assert result.convention.distinguishable is True


def test_correct_latlon_timestep_output_is_consistent(folder):
    # instantaneous cos Z on 48 longitudes every 3 hours, a model's own radiation steps
    path = model_file(folder, None, n_lon=48, steps_per_day=8)
    result = validate(path, spec_path(folder, "noleap"))
    assert result.verdict == "consistent", result.reasons
    assert result.findings == ()
    assert result.convention.method == "day_average"


@pytest.mark.parametrize("calendar", ["noleap", "360_day"])
def test_correct_monthly_outputs_are_consistent(folder, calendar):
    path = model_file(folder, None, calendar=calendar, frequency="monthly")
    result = validate(path, spec_path(folder, calendar))
    assert result.verdict == "consistent", result.reasons
    assert result.convention.distinguishable is False  # monthly means cannot tell


# --- each catalogued mistake: inconsistent, the right finding first ---------------------------
def _check_first(result, mistake, calendar):
    assert result.verdict == "inconsistent"
    first = result.findings[0]
    assert first.code == mistake, [(f.code, f.explains) for f in result.findings]
    for f in result.findings:  # a partial fit is never shown as an epoch's elements
        if f.code == "orbital_elements_differ" and not f.explains:
            assert f.details["closest_berger1978_epoch"]["matches"] is False
            assert "Berger (1978) elements of" not in f.description
    if mistake == "calendar_differs":
        return
    assert first.explains is True
    value = first.fitted_value
    if mistake == "perihelion_opposite":
        assert value == pytest.approx(LIG127K_OPPOSITE_DEG, abs=0.02)
    elif mistake == "equinox_day_shift":
        assert value == pytest.approx(2.0, abs=0.05)  # the construction: 23 March
    elif mistake == "solar_constant_ratio":
        # the construction: PMIP's 1365 for the spec's CMIP6 1360.747 W m-2
        assert value == pytest.approx(PMIP_SOLAR_CONSTANT_WM2 / CMIP6_PICONTROL_TSI_WM2,
                                      abs=2e-4)
    elif mistake == "year_length_mismatch":
        assert value == (365.0 if calendar == "360_day" else 360.0)
    elif mistake == "day_origin_off_by_one":
        # days counted from 0 passed to a routine that counts from 1: its Sun lags a day
        assert value == 1.0
        assert "cannot be told apart" in first.description
    elif mistake == "orbit_not_applied":
        assert value == "1850CE"
    elif mistake == "orbital_elements_differ":
        closest = first.details["closest_berger1978_epoch"]
        assert closest["epoch"] == "21ka" and closest["matches"] is True
    elif mistake == "sun_at_day_start":
        assert value == "00:00"


CASES = [(m, "daily", "midday", "noleap") for m in MISTAKES]
CASES += [(m, "daily", "exact", "360_day") for m in MISTAKES if m != "calendar_differs"]
CASES += [(m, "daily", "timestep_mean", "noleap") for m in MISTAKES
          if m not in ("calendar_differs", "sun_at_day_start")]
CASES += [(m, "monthly", "midday", "360_day") for m in MISTAKES if m != "calendar_differs"]
CASES += [(m, "monthly", "exact", "noleap") for m in MISTAKES]


@pytest.mark.parametrize("mistake, frequency, convention, calendar", CASES,
                         ids=["-".join(c) for c in CASES])
def test_each_mistake_is_found_first(folder, mistake, frequency, convention, calendar):
    file_calendar = calendar
    if mistake == "calendar_differs":  # a correct 360-day model checked against a noleap spec
        file_calendar, calendar = "360_day", "noleap"
    path = model_file(folder, mistake, calendar=file_calendar, frequency=frequency,
                      convention=convention, steps_per_day=8)
    result = validate(path, spec_path(folder, calendar))
    _check_first(result, mistake, file_calendar)
    if frequency == "daily" and mistake != "calendar_differs":
        expected = "midday" if convention in ("midday", "start_of_day") or (
            mistake == "sun_at_day_start") else "day_average"
        assert result.convention.method == expected


def test_latlon_timestep_perihelion_opposite_is_named_as_such(folder):
    # instantaneous cos Z on 48 longitudes every 3 hours, averaged per day: the zonal mean
    # carries a smooth sampling error of about 0.2 W m-2 RMS, which the three fitted elements
    # absorb a little better (by under 0.001 W m-2); the mistake made is still named first
    path = model_file(folder, "perihelion_opposite", n_lon=48, steps_per_day=8)
    result = validate(path, spec_path(folder, "noleap"))
    _check_first(result, "perihelion_opposite", "noleap")


def test_sign_flipped_output_is_not_a_negative_solar_constant(folder):
    path = model_file(folder, None)
    flipped = folder / "flipped.nc"
    import xarray as xr

    with xr.open_dataset(path) as ds:
        ds = ds.load()
    ds["rsdt"] = -ds["rsdt"]
    ds.to_netcdf(flipped)
    result = validate(flipped, spec_path(folder, "noleap"))
    assert result.verdict == "inconsistent"
    assert result.findings[0].code == "unexplained"
    assert all(f.code != "solar_constant_ratio" for f in result.findings)


# --- bcgen's own daily product against its own spec, with the pole rows -------------------
PROTOCOLS = sorted((Path(__file__).parents[1] / "configs" / "protocols").glob("*.yaml"))


@pytest.mark.parametrize("config", PROTOCOLS, ids=[p.stem for p in PROTOCOLS])
def test_bcgen_daily_product_validates_against_its_spec(tmp_path, config):
    spec = load_spec(config)
    spec = dataclasses.replace(
        spec, products=("daily_insolation",),
        grid=GridSpec(kind="zonal", latitudes_deg=tuple(np.linspace(-90.0, 90.0, 19))))
    build = bcgen.build(spec, tmp_path)
    daily = next(p for p in build.directory.iterdir() if "daily_insolation" in p.name)
    result = validate(daily, spec)
    assert result.verdict == "consistent", result.reasons
    assert result.max_abs_error_wm2 < 0.01
    assert result.convention.source == "file attribute"
    assert result.convention.method == spec.insolation.daily_method


def test_convention_and_dates_in_the_reports(folder, run_cli):
    import json

    spec = spec_path(folder, "noleap")
    path = model_file(folder, None)  # a correct midday model
    status, out, _ = run_cli(["validate", path, "--spec", spec])
    assert status == 0
    assert "daily-mean convention: midday (fitted" in out
    status, out, _ = run_cli(["validate", path, "--spec", spec, "--format", "json"])
    convention = json.loads(out)["daily_mean_convention"]
    assert convention["method"] == "midday" and convention["source"] == "fitted"
    assert convention["distinguishable"] is True
    # forced: the exact day average makes the pole rows of a midday file too far off
    status, out, err = run_cli(["validate", path, "--spec", spec, "--daily-method",
                                "day_average"])
    assert status == 1 and "daily-mean convention: day_average (option)" in out
    # the equinox two days late, named as days and as dates of the model calendar
    # (21 March 12:00 is day 79.50 counted from 0 in a 365-day calendar: common practice)
    late = model_file(folder, "equinox_day_shift")
    status, out, err = run_cli(["validate", late, "--spec", spec])
    assert status == 1
    assert "instead of day 79.50 (21 March 12:00, noleap)" in out
    # the closing line names the worst place with its dates whole
    assert re.search(r"bcgen: check failed: .*\(year 1, days? [\d.-]+ \(\d+ \w+ \d\d:\d\d", err)
    assert "(23 March " in out


# --- instantaneous fluxes without time bounds (cell_methods "time: point") ------------------
@pytest.mark.parametrize("mistake", [None, "equinox_day_shift"])
def test_hourly_instantaneous_latlon_without_bounds(folder, mistake):
    # hourly instantaneous cos Z on 48 longitudes through March and April, as a model's
    # radiation output: no time bounds, cell_methods "time: point" (CF 1.11 §7.3)
    model = model_routine(mistake, "noleap")
    lon = np.arange(48) * 7.5
    t = np.arange(59.0, 120.0, 1.0 / 24.0)  # days after 1 January 00:00
    values = model.instantaneous_wm2(t + 1.0, LATS_POLES, lon)  # the routine counts from 1
    path = write_netcdf(folder / f"hourly_point_{mistake}.nc", values, t, t,
                        np.ones(t.size, int), LATS_POLES, "noleap", bounds=False,
                        attrs={"cell_methods": "area: mean time: point"})
    result = validate(path, spec_path(folder, "noleap"))
    assert result.output.frequency == "instant"
    if mistake is None:
        assert result.verdict == "consistent", result.reasons
        return
    _check_first(result, mistake, "noleap")


# --- an orbit running freely through several years, never anchored again ---------------------
def free_running_file(folder: Path, calendar: str, years: range, frequency: str) -> Path:
    """The routine fed continuous day numbers over ``years``: its orbital year is the tropical
    year and its March equinox is on 21 March 12:00 of the first year only (real dates)."""
    import cftime

    first = cftime.datetime(years[0], 1, 1, calendar=calendar)
    n_days = int((cftime.datetime(years[-1] + 1, 1, 1, calendar=calendar) - first).days)
    equinox = (cftime.datetime(years[0], 3, 21, 12, calendar=calendar) - first).days + 1.5
    model = ModelOrbit.for_epoch(EPOCH_YEARS, year_days=TROPICAL_YEAR_DAYS,
                                 equinox_day=equinox)
    daily = model.daily_means_wm2(n_days, LATS_POLES, "midday")
    dates = [first + datetime.timedelta(days=d) for d in range(n_days)]
    year_of = np.array([d.year for d in dates])
    start = np.array([float(d.dayofyr - 1) for d in dates])
    if frequency == "monthly":
        month = np.array([d.month for d in dates])
        keys = sorted(set(zip(year_of, month, strict=True)))
        daily = np.stack([daily[(year_of == y) & (month == m)].mean(axis=0) for y, m in keys])
        bounds = {y: ModelCalendar(calendar).month_starts_days(y) for y in years}
        start = np.array([bounds[y][m - 1] for y, m in keys])
        end = np.array([bounds[y][m] for y, m in keys])
        year_of = np.array([y for y, _ in keys])
    else:
        end = start + 1.0
    name = f"free_{calendar}_{frequency}_{years[0]}-{years[-1]}.nc"
    return write_netcdf(folder / name, daily, start, end, year_of, LATS_POLES, calendar)


@pytest.mark.parametrize("calendar, years, frequency", [
    ("proleptic_gregorian", range(2001, 2005), "daily"),
    ("noleap", range(1, 4), "monthly"),
])
def test_equinox_drifting_with_a_free_running_orbit_is_named(folder, calendar, years,
                                                              frequency):
    # real dates: the equinox 0.2422 day later each year of 365 days and a day earlier at a
    # leap day (the mean tropical year, the Astronomical Almanac: TROPICAL_YEAR_DAYS)
    path = free_running_file(folder, calendar, years, frequency)
    result = validate(path, spec_path(folder, calendar))
    assert result.verdict == "inconsistent"
    first = result.findings[0]
    assert first.code == "equinox_drift", [(f.code, f.explains) for f in result.findings]
    assert first.explains is True
    assert first.fitted_value == pytest.approx(TROPICAL_YEAR_DAYS, abs=1e-6)
    # the construction: the equinox on 21 March 12:00 of the first year
    assert first.details["anchor_shift_days_first_year"] == pytest.approx(0.0, abs=0.02)
    assert first.details["equinox_dates"][str(years[0])] == "21 March 12:00"
