"""Tests of bcgen.validation: readers, comparison, diagnosis of deliberate mistakes, verdict.

Synthetic model outputs come from ``validate_synthetic.py``: bcgen's engine run
with each mistake applied to its *inputs*. Expected fitted values are the
truth of the construction (a shift of 2 days, S0 x 0.99, a 360-day year ...)
or published protocol values (named beside each check), never this code's
own output.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import xarray as xr
from published_tables import PMIP4
from validate_synthetic import (
    LATS_19,
    MISTAKES,
    S0_WM2,
    orbit_table,
    synthetic_output,
    write_spec,
)

from bcgen.errors import InputFileError, SpecError
from bcgen.insolation.daily import daily_mean_from_geometry_wm2
from bcgen.validation import (
    CODES,
    ModelOutput,
    ValidateOptionError,
    read_model_output,
    read_orbit_table,
    setup_from_spec,
    validate,
    validate_output,
)
from bcgen.validation import diagnose as diagnose_module
from bcgen.validation.compare import Comparison, estimate_noise_wm2, noise_estimate
from bcgen.validation.diagnose import golden_section, levenberg_marquardt
from bcgen.validation.readers import AmbiguousTimeWarning

# PMIP4/PMIP3 midHolocene "perihelion - 180" = 0.87 deg (Otto-Bliesner et al. 2017; PMIP3 6 ka
# design page): a model that used the value 180 deg off has 180.87.
MID_HOLOCENE_VARPI_DEG = PMIP4["midHolocene"].orbit[2]
# PMIP4 lgm orbit (Kageyama et al. 2017; PMIP4 lgm design page).
LGM_ORBIT = dict(zip(("eccentricity", "obliquity_deg", "perihelion_longitude_deg"),
                     PMIP4["lgm"].orbit, strict=True))


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("validate")


@pytest.fixture(scope="module")
def spec(folder):
    return write_spec(folder)


@pytest.fixture(scope="module")
def spec_360(folder):
    return write_spec(folder, calendar="360_day", name="spec360.yaml")


def _check_fitted(code, finding, noisy=False):
    """The fitted value of each mistake against its truth."""
    value = finding.fitted_value
    if code == "perihelion_opposite":
        # published 0.87 + 180, to the published digits (±0.005 deg); with 1 W m-2 of noise
        # on 228 monthly values of a 6 ka orbit (e = 0.0187) the fit is good to about 1 deg
        assert value == pytest.approx(180.0 + MID_HOLOCENE_VARPI_DEG, abs=1.0 if noisy else 0.005)
    elif code == "equinox_day_shift":
        assert value == pytest.approx(2.0, abs=0.25)  # the requirement
    elif code == "solar_constant_ratio":
        assert value == pytest.approx(0.99, abs=5e-4)
    elif code == "year_length_mismatch":
        assert value in (360.0, 365.0)
    elif code == "day_origin_off_by_one":
        assert value == -1.0  # the engine was asked for day n + 1: the Sun one day early
    elif code == "orbit_not_applied":
        assert value == "1850CE"
    elif code == "orbital_elements_differ":
        return value
    return value


# --- the catalogue, noise-free and with noise -----------------------------------------------
@pytest.mark.parametrize("mistake", MISTAKES)
def test_each_mistake_is_named_first_with_its_value(folder, spec, mistake):
    path = synthetic_output(folder, mistake, name=f"m_{mistake}.nc")
    result = validate(path, spec)
    assert result.verdict == "inconsistent"
    first = result.findings[0]
    assert first.code == mistake and first.explains is True
    assert first.misfit_after_wm2 < 0.05 < first.misfit_before_wm2
    value = _check_fitted(mistake, first)
    if mistake == "orbital_elements_differ":
        # PMIP4 lgm values to their published digits (Kageyama et al. 2017)
        assert value["eccentricity"] == pytest.approx(LGM_ORBIT["eccentricity"], abs=1e-6)
        assert value["obliquity_deg"] == pytest.approx(LGM_ORBIT["obliquity_deg"], abs=1e-3)
        assert value["perihelion_longitude_deg"] == pytest.approx(
            LGM_ORBIT["perihelion_longitude_deg"], abs=0.01)
        assert first.details["closest_berger1978_epoch"]["epoch"] == "21ka"


@pytest.mark.parametrize("mistake", MISTAKES)
def test_each_mistake_is_named_first_with_1wm2_noise(folder, spec, mistake):
    path = synthetic_output(folder, mistake, noise_wm2=1.0, seed=11, name=f"n_{mistake}.nc")
    result = validate(path, spec)
    assert result.verdict == "inconsistent"
    first = result.findings[0]
    assert first.code == mistake and first.explains is True
    assert first.misfit_after_wm2 == pytest.approx(1.0, abs=0.2)  # down to the noise
    # the noise is what the explanation leaves, not the curvature of the mistake
    assert result.noise_wm2 == pytest.approx(1.0, rel=0.3)
    assert not any("noisier" in r for r in result.reasons)
    value = _check_fitted(mistake, first, noisy=True)
    if mistake == "orbital_elements_differ":
        assert value["eccentricity"] == pytest.approx(LGM_ORBIT["eccentricity"], abs=2e-4)
        assert value["obliquity_deg"] == pytest.approx(LGM_ORBIT["obliquity_deg"], abs=0.02)
        assert value["perihelion_longitude_deg"] == pytest.approx(
            LGM_ORBIT["perihelion_longitude_deg"], abs=2.0)


@pytest.mark.parametrize("case", [
    dict(mistake="equinox_day_shift", frequency="daily", calendar="360_day", n_lon=6,
         noise_wm2=1.0, missing_fraction=0.05),
    dict(mistake="perihelion_opposite", frequency="daily", keep=slice(100, 250)),
    dict(mistake="solar_constant_ratio", frequency="monthly", n_lon=6, noise_wm2=1.0,
         missing_fraction=0.1, keep=slice(3, 9)),
    dict(mistake="year_length_mismatch", frequency="monthly", calendar="360_day",
         noise_wm2=1.0),
    dict(mistake="day_origin_off_by_one", frequency="daily", noise_wm2=1.0,
         keep=slice(0, 200)),
], ids=lambda c: f"{c['mistake']}-{c['frequency']}-{c.get('calendar', 'noleap')}")
def test_mistakes_in_daily_latlon_partial_and_missing_outputs(folder, spec, spec_360, case):
    case = dict(case)
    mistake = case.pop("mistake")
    path = synthetic_output(folder, mistake, seed=3, name=f"v_{mistake}.nc", **case)
    result = validate(path, spec_360 if case.get("calendar") == "360_day" else spec)
    assert result.verdict == "inconsistent"
    assert result.findings[0].code == mistake
    _check_fitted(mistake, result.findings[0])
    if mistake == "year_length_mismatch":
        assert result.findings[0].fitted_value == 365.0  # a 365-day orbit in a 360-day calendar


# --- correct outputs ------------------------------------------------------------------------
@pytest.mark.parametrize("case", [
    dict(frequency="monthly"),
    dict(frequency="monthly", calendar="360_day", noise_wm2=1.0),
    dict(frequency="daily", calendar="360_day", n_lon=8, noise_wm2=1.0),
    dict(frequency="daily", noise_wm2=1.0, missing_fraction=0.1, keep=slice(40, 300)),
    dict(frequency="monthly", n_lon=8, noise_wm2=1.0, missing_fraction=0.1, keep=slice(0, 7)),
    dict(frequency="daily", years=(1, 2), noise_wm2=1.0),
], ids=lambda c: "-".join(f"{k}={v}" for k, v in c.items()))
def test_correct_outputs_are_consistent(folder, spec, spec_360, case):
    path = synthetic_output(folder, None, seed=7, name="ok.nc", **case)
    result = validate(path, spec_360 if case.get("calendar") == "360_day" else spec)
    assert result.verdict == "consistent", result.reasons
    assert result.findings == ()
    if case.get("noise_wm2"):
        # independent noise in each cell is averaged by the zonal mean: sigma / sqrt(n_lon)
        assert result.noise_wm2 == pytest.approx(1.0 / np.sqrt(case.get("n_lon") or 1),
                                                 rel=0.35)
    else:
        assert result.max_abs_error_wm2 < 0.05


def test_leap_year_calendar_correct_and_shifted(folder):
    spec = write_spec(folder, calendar="proleptic_gregorian", name="spec_pg.yaml")
    ok = synthetic_output(folder, None, calendar="proleptic_gregorian", frequency="daily",
                          years=(1999, 2000), name="pg_ok.nc")
    assert validate(ok, spec).verdict == "consistent"
    bad = synthetic_output(folder, "equinox_day_shift", calendar="proleptic_gregorian",
                           frequency="daily", years=(1999, 2000), name="pg_bad.nc")
    result = validate(bad, spec)
    assert result.findings[0].code == "equinox_day_shift"
    assert result.findings[0].fitted_value == pytest.approx(2.0, abs=0.25)


def test_midday_model_needs_the_midday_reference(folder, spec):
    # Midday and day-average daily means differ by about 1.2 W m-2 at the poles on the equinox
    # day; with --daily-method midday a midday model is consistent to numerical precision.
    path = synthetic_output(folder, None, frequency="daily", method="midday", name="mid.nc")
    result = validate(path, spec, daily_method="midday")
    assert result.verdict == "consistent"
    assert result.max_abs_error_wm2 < 1e-3
    assert result.convention.source == "option"
    # this spec states daily_method: day_average, which then rules; the report says the
    # output fits midday better
    stated = validate(path, spec)
    assert stated.convention.source == "spec" and stated.convention.method == "day_average"
    assert stated.max_abs_error_wm2 > 0.5
    assert "fits midday better" in stated.convention.note
    # a spec that states midday rules too
    spec_midday = write_spec(folder, daily_method="midday", name="spec_midday.yaml")
    by_spec = validate(path, spec_midday)
    assert by_spec.verdict == "consistent"
    assert (by_spec.convention.source, by_spec.convention.method) == ("spec", "midday")


def test_tolerance_option_and_findings_below_tolerance(folder, spec):
    path = synthetic_output(folder, "solar_constant_ratio", name="s0.nc")
    result = validate(path, spec, tolerance_wm2=10.0)
    # the largest error is 1 % of the largest monthly insolation (about 550 W m-2)
    assert result.max_abs_error_wm2 == pytest.approx(5.5, abs=0.3)
    assert result.verdict == "consistent"
    assert result.findings[0].code == "solar_constant_ratio"  # reported, though tolerated


def test_error_table_and_worst_places(folder, spec):
    path = synthetic_output(folder, "solar_constant_ratio", name="s0.nc")
    result = validate(path, spec)
    comp = result.comparison
    # S0 x 0.99: every error is -1 % of the reference, so the relative error is 0.01 everywhere
    rel = [c.relative_error for c in comp.cells if c.relative_error is not None]
    assert np.allclose(rel, 0.01, atol=2e-4)
    assert comp.mean_error_wm2 < 0
    worst = comp.worst[0]
    assert worst.error_wm2 == pytest.approx(-0.01 * worst.reference_wm2, rel=1e-3)
    assert abs(worst.latitude_deg) == 90.0  # the largest monthly insolation is polar summer
    assert {c.band for c in comp.cells} == {"90°S to 60°S", "60°S to 30°S", "30°S to Equator",
                                           "Equator to 30°N", "30°N to 60°N", "60°N to 90°N"}


# --- orbit tables -------------------------------------------------------------------------
def test_orbit_table_correct_and_mistakes(folder, spec):
    ok = validate(orbit_table(folder, None, name="ok.csv"), spec)
    assert ok.verdict == "consistent"
    assert ok.table_errors["declination_deg"]["max_abs_error"] < 1e-6
    shifted = validate(orbit_table(folder, "equinox_day_shift", name="sh.csv"), spec)
    assert shifted.findings[0].code == "equinox_day_shift"
    assert shifted.findings[0].fitted_value == pytest.approx(2.0, abs=0.25)
    peri = validate(orbit_table(folder, "perihelion_opposite", name="pe.csv",
                                columns=("true_longitude_deg", "distance_factor")), spec)
    assert peri.findings[0].code == "perihelion_opposite"
    # true longitude alone: declination and distance follow from the spec's orbit
    only = validate(orbit_table(folder, None, name="lam.csv", columns=("true_longitude_deg",)),
                    spec)
    assert only.verdict == "consistent" and set(only.table_errors) == {"true_longitude_deg"}


def test_file_calendar_differing_from_the_spec_is_a_finding(folder, spec):
    # The issue lists a calendar mismatch (360 versus 365 days) among the mistakes to catch:
    # a 360_day run of a noleap experiment did not run the experiment's year.
    path = synthetic_output(folder, None, calendar="360_day", name="cal360.nc")
    result = validate(path, spec)  # the spec says noleap
    assert result.verdict == "inconsistent"
    first = result.findings[0]
    assert (first.code, first.fitted_value, first.expected_value) == (
        "calendar_differs", "360_day", "noleap")
    assert any("--accept-file-calendar" in r for r in result.reasons)
    # accepted explicitly: the insolation alone decides, checked on the file's calendar
    accepted = validate(path, spec, accept_file_calendar=True)
    assert accepted.verdict == "consistent", accepted.reasons
    assert accepted.findings == ()
    assert accepted.setup.calendar.name == "360_day"
    assert any("the file's calendar is 360_day and the spec's noleap" in n
               for n in accepted.notes)
    # ... and accepting the calendar does not excuse a wrong orbit
    bad = synthetic_output(folder, "perihelion_opposite", calendar="360_day", name="cal360p.nc")
    wrong = validate(bad, spec, accept_file_calendar=True)
    assert wrong.verdict == "inconsistent"
    assert wrong.findings[0].code == "perihelion_opposite"
    codes = [f.code for f in validate(bad, spec).findings]
    assert codes[0] == "perihelion_opposite" and "calendar_differs" in codes


def test_calendars_with_the_same_years_do_not_differ(folder):
    # CF 1.13 §4.4.3: standard is Gregorian from 1582-10-15, so in 1999-2000 it lays out the
    # year as proleptic_gregorian does.
    spec = write_spec(folder, calendar="proleptic_gregorian", name="spec_pg2.yaml")
    path = synthetic_output(folder, None, calendar="standard", frequency="daily",
                            years=(1999, 2000), name="std.nc")
    result = validate(path, spec)
    assert result.verdict == "consistent", result.reasons
    assert result.findings == ()


# --- noise, and differences outside the catalogue ---------------------------------------------
@pytest.mark.parametrize("frequency", ["monthly", "daily"])
@pytest.mark.parametrize("noise", [1.0, 5.0, 30.0])
def test_noise_counts_only_up_to_the_tolerance(folder, spec, frequency, noise):
    path = synthetic_output(folder, None, frequency=frequency, noise_wm2=noise, seed=7,
                            name=f"noise_{frequency}_{noise:g}.nc")
    result = validate(path, spec)
    n = result.comparison.n_values
    z = np.sqrt(2.0 * np.log(n))  # the rule's z for N values
    # the allowances never exceed T + z T and T + T (T = 1 W m-2)
    assert result.allowed_max_abs_error_wm2 <= 1.0 + z * 1.0 + 1e-9
    assert result.allowed_rms_error_wm2 <= 2.0 + 1e-9
    assert result.noise_wm2 == pytest.approx(noise, rel=0.2)  # the noise put in
    if noise == 1.0:
        assert result.verdict == "consistent", result.reasons
        assert result.findings == ()
    else:
        assert result.verdict == "inconsistent"
        assert any("noisier than the tolerance" in r for r in result.reasons)
        assert any(r.startswith("RMS error") for r in result.reasons)
        assert result.findings[0].code == "unexplained"


def test_noise_rule_false_alarm_rate():
    # Rule C calls white noise of sigma = T too noisy only when the estimate is more than three
    # standard errors above T: one-sided P(Z > 3) = 0.00135 (standard normal tables), so far
    # fewer than 1 % of 2000 simulated years of monthly means are flagged; at sigma = 3 T all.
    rng = np.random.default_rng(5)
    n_t = 12
    out = ModelOutput("x", "noleap", "monthly", np.ones(n_t, int), np.arange(n_t) * 30.0,
                      np.arange(n_t) * 30.0 + 30.0, np.arange(1, n_t + 1), LATS_19,
                      np.ones((n_t, 19)))
    limit = None
    flagged = {1.0: 0, 3.0: 0}
    for sigma in flagged:
        for _ in range(2000):
            sigma_hat, n = noise_estimate(out, sigma * rng.standard_normal((n_t, 19)))
            comparison = Comparison(0.0, 0.0, 0.0, n_t * 19, 0, (), (), sigma_hat, (),
                                    noise_samples=n)
            limit = comparison.noise_limit_wm2(1.0)
            flagged[sigma] += sigma_hat > limit
    assert flagged[1.0] / 2000 < 0.01
    assert flagged[3.0] == 2000
    assert 1.2 < limit < 1.4  # 190 second differences: about 30 % above T
    assert comparison.noise_limit_wm2(1.0, estimated=False) == 1.0  # a given sigma: T itself


def test_month_to_month_error_is_not_taken_for_noise(folder, spec):
    # A +-3 W m-2 error alternating from month to month over the northern hemisphere: its
    # second differences look like noise of 7 W m-2, which must not widen the allowance.
    path = synthetic_output(folder, None, name="alt_src.nc")
    with xr.open_dataset(path, decode_times=False) as ds:
        ds = ds.load()
    sign = np.where(np.arange(ds.sizes["time"]) % 2 == 0, 3.0, -3.0)
    ds["rsdt"].values = ds["rsdt"].values + np.where(ds["lat"].values >= 0, 1.0, 0.0) * sign[
        :, None]
    ds.to_netcdf(folder / "alt.nc")
    result = validate(folder / "alt.nc", spec)
    assert result.verdict == "inconsistent"
    assert result.findings[0].code == "unexplained"
    assert result.allowed_max_abs_error_wm2 < 3.0 + 1.5  # T + z min(sigma, T), z = 3.3


def test_error_outside_the_catalogue_is_unexplained(folder, spec):
    # Hemispheres swapped (a latitude axis reversed without its values): no mistake of the
    # catalogue moves the seasons by half a year, so nothing explains it.
    path = synthetic_output(folder, None, name="swap_src.nc")
    with xr.open_dataset(path, decode_times=False) as ds:
        ds = ds.load()
    ds["rsdt"].values = ds["rsdt"].values[:, ::-1]
    ds.to_netcdf(folder / "swap.nc")
    result = validate(folder / "swap.nc", spec)
    assert result.verdict == "inconsistent"
    first = result.findings[0]
    assert first.code == "unexplained" and first.explains is False
    assert all(f.explains is False for f in result.findings[1:])


def test_partial_fit_is_not_named_as_the_mistake(folder, spec):
    # Latitudes in radians read as degrees (what a reader that ignores units would pass on):
    # a solar-constant ratio lowers the misfit a little but explains nothing.
    good = read_model_output(synthetic_output(folder, None, name="rad_src.nc"))
    wrong = ModelOutput(good.source, good.calendar, good.frequency, good.year, good.start_day,
                        good.end_day, good.month, np.deg2rad(good.latitude_deg),
                        good.insolation_wm2)
    result = validate_output(wrong, setup_from_spec(spec))
    assert result.verdict == "inconsistent"
    assert result.findings[0].code == "unexplained"
    partial = {f.code: f for f in result.findings[1:]}
    assert "solar_constant_ratio" in partial
    ratio = partial["solar_constant_ratio"]
    assert ratio.explains is False and ratio.misfit_after_wm2 > 100.0
    assert "solar_constant_ratio" in result.findings[0].description  # named as partial


# --- readers --------------------------------------------------------------------------------
def test_zonal_mean_skips_missing_cells(folder):
    path = synthetic_output(folder, None, n_lon=4, name="ll.nc")
    with xr.open_dataset(path) as ds:
        data = ds["rsdt"].load()
    data[0, 5, 1] = np.nan
    data.to_dataset().assign(time_bnds=xr.open_dataset(path)["time_bnds"].load()).to_netcdf(
        folder / "ll_nan.nc")
    out = read_model_output(folder / "ll_nan.nc")
    # the mean of the three cells left (common practice: NaN-aware mean)
    expected = np.mean(np.delete(data.values[0, 5], 1))
    assert out.insolation_wm2[0, 5] == pytest.approx(expected, rel=1e-6)
    assert out.zonal_spread_wm2 == pytest.approx(1.0, abs=1e-3)  # the ±0.5 W m-2 wiggle


def test_reader_without_bounds_at_midnight_warns(folder):
    path = synthetic_output(folder, None, frequency="daily", bounds=False, name="nb.nc")
    with xr.open_dataset(path, decode_times=False) as ds:
        ds = ds.load()
    ds["time"] = ds["time"] - 0.5  # stamps at 00:00
    ds.to_netcdf(folder / "nb0.nc")
    with pytest.warns(AmbiguousTimeWarning, match="starts at its stamp"):
        out = read_model_output(folder / "nb0.nc")
    assert out.start_day[0] == 0.0 and out.end_day[0] == 1.0 and out.frequency == "daily"


def test_reader_climatological_axis(folder):
    path = synthetic_output(folder, None, name="clim.nc")
    with xr.open_dataset(path, decode_times=False) as ds:
        ds = ds.load()
    bnds = ds["time_bnds"].values.copy()
    bnds[:, 1] += 29 * 365.0  # CF §7.4: end of the last of 30 yearly sub-intervals
    ds["climatology_bnds"] = (("time", "nv"), bnds)
    ds = ds.drop_vars("time_bnds")
    ds["time"].attrs.pop("bounds")
    ds["time"].attrs["climatology"] = "climatology_bnds"
    ds.to_netcdf(folder / "clim2.nc")
    out = read_model_output(folder / "clim2.nc")
    # noleap month lengths (CF 1.13 §4.4.3): 31, 28, 31, ...
    assert np.allclose(out.end_day - out.start_day,
                       [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


def test_reader_errors_name_the_problem(folder):
    path = synthetic_output(folder, None, name="err.nc", standard_name=False)
    with pytest.raises(InputFileError, match=r"no variable with standard_name "
                                             r"'toa_incoming_shortwave_flux'.*--var.*rsdt"):
        read_model_output(path)
    with pytest.raises(InputFileError, match=r"no variable 'rsd' \(--var\).*did you mean 'rsdt'"):
        read_model_output(path, "rsd")
    with xr.open_dataset(path, decode_times=False) as ds:
        ds = ds.load()
    ds["rsdt"].attrs["units"] = "K"
    ds.to_netcdf(folder / "units.nc")
    with pytest.raises(InputFileError, match=r"rsdt: units 'K' cannot be converted to W m-2"):
        read_model_output(folder / "units.nc", "rsdt")
    with pytest.raises(InputFileError, match="no such file"):
        read_model_output(folder / "absent.nc")


def test_orbit_table_errors(folder):
    bad = folder / "bad.csv"
    bad.write_text("time_days,declinaton_deg\n0.5,-23\n", encoding="utf-8")
    with pytest.raises(InputFileError, match=r"unknown column 'declinaton_deg'.*did you mean "
                                             r"'declination_deg'"):
        read_orbit_table(bad)
    bad.write_text("# comment\ntime_days,declination_deg\n0.5,-23\n1.5,abc\n", encoding="utf-8")
    with pytest.raises(InputFileError, match=r"bad.csv, line 4: 'abc' in column "
                                             r"declination_deg is not a number"):
        read_orbit_table(bad)


def test_transient_spec_refuses_time_slice_options(folder):
    # A transient spec is routed to the model-year check (tests/test_validate_transient.py);
    # options that only a time-slice check uses are refused, not silently ignored.
    spec = folder / "transient.yaml"
    spec.write_text("experiment:\n  name: t\ntransient:\n  start_epoch: 10ka\n"
                    "  end_epoch: 9ka\nproducts: [orbit]\n", encoding="utf-8")
    path = synthetic_output(folder, None, name="tr.nc")
    with pytest.raises(ValidateOptionError, match=r"noise_wm2 \(--noise-wm2\) applies to a "
                                                  r"time-slice check"):
        validate(path, spec, noise_wm2=0.1)
    with pytest.raises(SpecError, match="setup_from_spec describes one time slice"):
        setup_from_spec(spec)  # the time-slice route itself still refuses it


# --- building blocks against analytic results -----------------------------------------------
def test_insolation_from_geometry_analytic():
    lat = np.array([0.0, 90.0, -90.0])[np.newaxis, :]
    q = daily_mean_from_geometry_wm2(lat, np.deg2rad([[0.0], [23.44]]), np.array([[1.0], [1.0]]),
                                     S0_WM2)
    # Equinox at the equator: S0/pi; polar day: S0 sin(dec); polar night: 0 (Berger 1978 Eq.
    # for the daily mean, with H0 = pi/2, pi and 0)
    assert q[0, 0] == pytest.approx(S0_WM2 / np.pi, rel=1e-12)
    assert q[1, 1] == pytest.approx(S0_WM2 * np.sin(np.deg2rad(23.44)), rel=1e-12)
    assert q[1, 2] == 0.0


def test_noise_estimate_recovers_white_noise():
    rng = np.random.default_rng(0)
    n = 365
    out = ModelOutput("x", "noleap", "daily", np.ones(n, int), np.arange(n, dtype=float),
                      np.arange(n) + 1.0, np.ones(n, int), LATS_19, np.ones((n, 19)))
    residual = 2.0 * rng.standard_normal((n, 19)) + np.linspace(0, 30, n)[:, None]
    # a linear trend has no second difference; the MAD of white noise is 0.6745 sigma
    assert estimate_noise_wm2(out, residual) == pytest.approx(2.0, rel=0.08)


def test_minimisers():
    x, _ = golden_section(lambda v: (v - 1.234) ** 2, -5.0, 5.0, tol=1e-6)
    assert x == pytest.approx(1.234, abs=1e-5)
    t = np.linspace(0, 4, 50)
    y = 3.0 * np.exp(-0.7 * t)  # exact data: least squares recovers the parameters
    p, rss = levenberg_marquardt(lambda q: y - q[0] * np.exp(-q[1] * t), np.array([1.0, 0.1]),
                                 np.array([1e-6, 1e-6]), np.array([0.0, 0.0]),
                                 np.array([10.0, 10.0]))
    assert p == pytest.approx([3.0, 0.7], abs=1e-5) and rss < 1e-12


def test_every_code_is_documented():
    doc = diagnose_module.__doc__
    for code in CODES:
        assert f"``{code}``" in doc
    for mistake in MISTAKES:
        assert mistake in CODES


def test_no_warning_for_a_clean_file(folder, spec):
    path = synthetic_output(folder, None, name="clean.nc")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        validate(path, spec)
