"""Converting a transient run's output: each model year with its own orbit (issue 15).

The synthetic run has a known daily truth: at each of three sites a smooth seasonal cycle
that follows the Sun along the orbit, f = 280 K + A cos(λ(t) − φ_site), where λ(t) is the
Sun's true longitude at time t on the orbit of the model year that contains t (so the
phase of the cycle in calendar days moves with the orbit from year to year). The model's
monthly means over calendar months and the true means over fixed-angle months are both
integrated from f on a fine grid (midpoint rule, 48 instants per day), independently of
the conversion. The orbits come from the spec's mapping of model years to epochs
(``bcgen.spec.TransientSpec``); fixed-angle months are defined by
``bcgen.solar_calendar.months`` (checked against published tables elsewhere).

Tolerance, derived (not fitted). Killworth's (1996) reconstruction P is piecewise linear
through adjusted mid-month values and keeps every calendar month's mean. Its error e = P − f
is bounded by that of linear interpolation through the true mid-month values,
h² max|f''| / 8 (h = 31 days, the longest spacing of mid-months), plus the adjustment of
the node values, which solves a diagonally dominant tridiagonal system (diagonal 6/8,
off-diagonals 1/8 for equal months) whose inverse has norm at most 2 applied to month-mean
defects of at most h² max|f''| / 8: in all |e| ≤ (1/8 + 1/4) h² max|f''|. Because P keeps
the calendar month [a, b]'s mean, the mean over the fixed-angle month [a', b'] is off by
at most (|a' − a| + |b' − b|) max|e| / (b' − a'). For f, |f''| ≤ A (λ'² + |λ''|) with
λ' ≤ ω (1 + e)² / (1 − e²)^{3/2} and |λ''| ≤ 2 e ω² (1 + e)^4 / (1 − e²)^3 (Kepler's second
law, ω = 2π / 365 d), so max|f''| ≤ A ω² (1 + 6e) for e ≤ 0.05 (checked below). The first
and last model year are left out: the series' end rule extrapolates there.
"""

from __future__ import annotations

from pathlib import Path

import cftime
import numpy as np
import pytest
import xarray as xr

from bcgen.convert import to_fixed_angle_months, transient_orbits
from bcgen.convert.api import ConversionError
from bcgen.solar_calendar import ModelCalendar, SolarYear
from bcgen.solar_calendar.months import fixed_angle_months
from bcgen.spec import parse_spec_text

CALENDAR = ModelCalendar("noleap")
YEAR = 365.0
A_K = 10.0  # amplitude of the seasonal cycle
PHASES_DEG = np.array([0.0, 120.0, 240.0])  # true longitude of the warmest moment per site
# 127 ka to 116 ka at 500 years per model year: 23 model years, the perihelion moves by
# about 95 degrees, so month boundaries move by days from the first year to the last.
SPEC_TEXT = """
experiment: {name: synthetic}
transient: {start_epoch: 127ka, end_epoch: 116ka, acceleration: 500, first_model_year: 1,
            years_per_file: 8}
calendar: {name: noleap}
products: [orbit]
"""
PER_DAY = 48


def spec():
    return parse_spec_text(SPEC_TEXT)


def truth(t_days: np.ndarray, orbits, first_year: int = 1) -> np.ndarray:
    """f(t) at times in days since 1 January of the first model year; shape (t, site)."""
    k = np.floor(t_days / YEAR).astype(int)
    lam = np.empty(t_days.shape)
    for i in np.unique(k):
        sel = k == i
        j = int(np.clip(i, 0, len(orbits) - 1))  # before or after the run: its end orbits
        solar = SolarYear(orbits[j], CALENDAR, year=first_year + j)
        lam[sel] = solar.true_longitude_rad(t_days[sel] - YEAR * i)
    return 280.0 + A_K * np.cos(lam[:, None] - np.deg2rad(PHASES_DEG))


def interval_means(lower, upper, orbits) -> np.ndarray:
    """Means of f over intervals [lower, upper) (days), midpoint rule on a fine grid."""
    out = []
    for a, b in zip(lower, upper, strict=True):
        n = max(8, int(round((b - a) * PER_DAY)))
        t = a + (b - a) * (np.arange(n) + 0.5) / n
        out.append(truth(t, orbits).mean(axis=0))
    return np.array(out)


def model_output(orbits, n_years: int) -> xr.Dataset:
    """Monthly means over calendar months, CF time axis (noleap, days since 0001-01-01)."""
    starts = CALENDAR.month_starts_days(1)
    lower = (YEAR * np.arange(n_years)[:, None] + starts[None, :12]).ravel()
    upper = (YEAR * np.arange(n_years)[:, None] + starts[None, 1:]).ravel()
    values = interval_means(lower, upper, orbits)

    def dates(days):
        return cftime.num2date(days, "days since 0001-01-01", calendar="noleap")

    return xr.Dataset(
        {"tas": (("time", "site"), values, {"units": "K", "standard_name": "air_temperature",
                                            "cell_methods": "time: mean"}),
         "time_bnds": (("time", "bnds"), np.stack([dates(lower), dates(upper)], axis=1))},
        coords={"time": ("time", dates(0.5 * (lower + upper)), {"bounds": "time_bnds"}),
                "site": ("site", np.arange(3))},
    )


def days_of(values) -> np.ndarray:
    return np.asarray(cftime.date2num(values, "days since 0001-01-01", calendar="noleap"))


@pytest.fixture(scope="module")
def synthetic():
    s = spec()
    n = s.transient.n_model_years
    orbits = s.orbit.resolve(s.transient.epochs_of_model_years(s.transient.model_years()))
    return s, orbits, model_output(orbits, n)


def true_fixed_angle_bounds(orbits) -> np.ndarray:
    """(12 n, 2) fixed-angle months of every model year, each of its own orbit (days)."""
    table = fixed_angle_months(orbits, CALENDAR)  # noleap: every year alike, (n, 12)
    start = (YEAR * np.arange(len(orbits))[:, None] + table.start_day).ravel()
    end = np.append(start[1:], YEAR * (len(orbits) - 1) + table.end_day[-1, -1])
    return np.stack([start, end], axis=-1)


def check_against_truth(converted: xr.Dataset, orbits):
    """Per-month error against the truth over the true months, and the derived tolerance.

    Only the inner model years are checked (the end rule extrapolates in the outer ones).
    """
    truth_bounds = true_fixed_angle_bounds(orbits)
    inner_rows = slice(12, 12 * (len(orbits) - 1))
    lower, upper = truth_bounds[inner_rows, 0], truth_bounds[inner_rows, 1]
    expected = interval_means(lower, upper, orbits)
    years = converted["model_year"].values
    got = converted["tas"].values[(years > 1) & (years < len(orbits))]
    error = np.abs(got - expected)
    # Calendar month of the same name in the same model year.
    year0 = YEAR * np.repeat(np.arange(1, len(orbits) - 1), 12)
    starts = CALENDAR.month_starts_days(1)
    month = np.tile(np.arange(12), len(orbits) - 2)
    a, b = year0 + starts[month], year0 + starts[month + 1]
    e_max = float(orbits.eccentricity.max())
    assert e_max <= 0.05  # the bound on f'' below assumes it
    omega = 2.0 * np.pi / YEAR
    e_bound = (1.0 / 8.0 + 1.0 / 4.0) * 31.0**2 * A_K * omega**2 * (1.0 + 6.0 * e_max)
    tolerance = (np.abs(lower - a) + np.abs(upper - b)) / (upper - lower) * e_bound
    return error, tolerance[:, None]


def test_each_model_year_with_its_orbit_recovers_the_fixed_angle_truth(synthetic):
    s, orbits, ds = synthetic
    converted = to_fixed_angle_months(ds, transient_orbits(s))
    error, tolerance = check_against_truth(converted, orbits)
    assert np.all(error <= tolerance), float(np.max(error - tolerance))
    # The output's months are each model year's own (December ends at the next January).
    bounds = days_of(converted["time_bnds"].values.ravel()).reshape(-1, 2)
    years = converted["model_year"].values
    inner = (years > 1) & (years < len(orbits))
    np.testing.assert_allclose(bounds[inner], true_fixed_angle_bounds(orbits)[12:-12],
                               atol=1e-6)


def test_one_orbit_for_the_whole_run_fails_the_same_check(synthetic):
    # The mistake the transient conversion exists to avoid: the middle year's orbit for all.
    s, orbits, ds = synthetic
    middle = orbits[len(orbits) // 2]
    converted = to_fixed_angle_months(ds, middle)
    error, tolerance = check_against_truth(converted, orbits)
    assert np.mean(error > tolerance) > 0.2
    assert np.max(error - tolerance) > 0.3  # K


def test_an_array_of_orbits_is_the_same_as_the_spec_mapping(synthetic):
    s, orbits, ds = synthetic
    by_spec = to_fixed_angle_months(ds.isel(time=slice(0, 60)), transient_orbits(s))
    by_array = to_fixed_angle_months(ds.isel(time=slice(0, 60)), orbits[:5])
    np.testing.assert_array_equal(by_spec["tas"].values, by_array["tas"].values)
    with pytest.raises(Exception, match="orbits of shape \\(4,\\) for the 5 model years"):
        to_fixed_angle_months(ds.isel(time=slice(0, 60)), orbits[:4])


def test_a_model_year_outside_the_spec_is_an_error_naming_it(synthetic):
    s, orbits, ds = synthetic
    longer = model_output(orbits, 24)  # one model year more than the spec's 23
    with pytest.raises(ConversionError, match="model year 24 is not covered by the transient "
                                              "run .*model years 1-23"):
        to_fixed_angle_months(longer, transient_orbits(s))


def _write_split(ds: xr.Dataset, folder: Path, years_per_file: int) -> list[Path]:
    folder.mkdir()
    paths = []
    n_years = ds.sizes["time"] // 12
    for first in range(0, n_years, years_per_file):
        last = min(first + years_per_file, n_years)
        path = folder / f"tas_{first + 1:04d}-{last:04d}.nc"
        part = ds.isel(time=slice(12 * first, 12 * last))
        part.to_netcdf(path, encoding={"time": {"units": "days since 0001-01-01",
                                                "calendar": "noleap"},
                                       "time_bnds": {"units": "days since 0001-01-01",
                                                     "calendar": "noleap"}})
        paths.append(path)
    return paths


def test_cli_converts_each_file_of_a_transient_run_into_the_same_split(synthetic, tmp_path,
                                                                       run_cli):
    s, orbits, ds = synthetic
    (tmp_path / "run.yaml").write_text(SPEC_TEXT)
    paths = _write_split(ds, tmp_path / "model", 8)
    status, out, err = run_cli(["convert", *map(str, paths[::-1]), "-o",
                                str(tmp_path / "fixed_angle"), "--spec",
                                str(tmp_path / "run.yaml")])
    assert status == 0, err
    whole = to_fixed_angle_months(ds, transient_orbits(s))
    for path in paths:
        with xr.open_dataset(tmp_path / "fixed_angle" / path.name) as part:
            years = part["model_year"].values
            with xr.open_dataset(path) as source:
                assert set(years) == {d.year for d in source["time"].values}
            rows = np.isin(whole["model_year"].values, years)
            # Converted a file at a time with one model year of margin: as if all at once,
            # to (3 - 2√2)^12 ≈ 7e-10 of the month-to-month signal (10 K here): 2e-11 of 280 K.
            np.testing.assert_allclose(part["tas"].values, whole["tas"].values[rows],
                                       rtol=1e-10)
            assert part.attrs["month_conversion_input_file"] == path.name
    # The spec covers 23 model years: a 24th in the input is refused, naming it.
    (tmp_path / "short.yaml").write_text(SPEC_TEXT.replace("116ka", "116.5ka"))
    status, out, err = run_cli(["convert", *map(str, paths), "-o", str(tmp_path / "again"),
                                "--spec", str(tmp_path / "short.yaml")])
    assert status == 2
    assert "model year 23 is not covered by the transient run" in err
    assert len(err.strip().splitlines()) == 1


def test_each_output_file_records_the_orbits_of_its_own_model_years(synthetic, tmp_path,
                                                                    run_cli):
    # A file converted with a model year of margin on each side must still describe only
    # the model years it holds: its first and last year and their orbits.
    s, orbits, ds = synthetic
    (tmp_path / "run.yaml").write_text(SPEC_TEXT)
    paths = _write_split(ds, tmp_path / "model", 8)  # model years 1-8, 9-16, 17-23
    status, out, err = run_cli(["convert", *map(str, paths), "-o", str(tmp_path / "fa"),
                                "--spec", str(tmp_path / "run.yaml")])
    assert status == 0, err
    for path, (first, last) in zip(paths, [(1, 8), (9, 16), (17, 23)], strict=True):
        with xr.open_dataset(tmp_path / "fa" / path.name) as part:
            assert sorted(set(part["model_year"].values)) == list(range(first, last + 1))
            assert (f"({last - first + 1} model years, {first}-{last})"
                    in part.attrs["month_conversion_orbit"])
            for which, year in (("first", first), ("last", last)):
                # SPEC_TEXT: model year 1 is 127 ka (127,000 years before 1950), each
                # further model year 500 years later.
                epoch = -127000.0 + 500.0 * (year - 1)
                assert part.attrs[f"orbit_{which}_year_years_from_1950"] == epoch
                # That epoch's orbit (the fixture's, solved over all years at once: the
                # same to rounding).
                assert part.attrs[f"orbit_{which}_year_eccentricity"] == pytest.approx(
                    orbits.eccentricity[year - 1], rel=1e-12)
                assert part.attrs[f"orbit_{which}_year_perihelion_longitude_deg"] == (
                    pytest.approx(orbits.perihelion_longitude_deg[year - 1], rel=1e-12))


def test_each_output_file_keeps_its_own_input_files_attributes_and_time_units(synthetic,
                                                                              tmp_path,
                                                                              run_cli):
    # A model writes each file with its own history and may count time from each file's
    # first year: every output file repeats those of its own input file (so raw time
    # numbers of an input and its output compare directly), not the first file's.
    s, orbits, ds = synthetic
    (tmp_path / "run.yaml").write_text(SPEC_TEXT)
    (tmp_path / "model").mkdir()
    paths = []
    for k, (first, last) in enumerate([(1, 8), (9, 16), (17, 23)]):
        part = ds.isel(time=slice(12 * (first - 1), 12 * last))
        part.attrs = {"history": f"model run, file {k + 1} of 3"}
        units = f"days since {first:04d}-01-01"
        path = tmp_path / "model" / f"tas_{first:04d}-{last:04d}.nc"
        part.to_netcdf(path, encoding={v: {"units": units, "calendar": "noleap"}
                                       for v in ("time", "time_bnds")})
        paths.append(path)
    status, out, err = run_cli(["convert", *map(str, paths), "-o", str(tmp_path / "fa"),
                                "--spec", str(tmp_path / "run.yaml")])
    assert status == 0, err
    for k, path in enumerate(paths):
        with xr.open_dataset(tmp_path / "fa" / path.name, decode_times=False) as part:
            assert part.attrs["history"].startswith(f"model run, file {k + 1} of 3\n")
            with xr.open_dataset(path, decode_times=False) as source:
                assert part["time"].attrs["units"] == source["time"].attrs["units"]
                # Same origin: the first and last month move by days, not by years.
                moved = part["time_bnds"].values[[0, -1]] - source["time_bnds"].values[[0, -1]]
                assert np.all(np.abs(moved) < 31.0)
