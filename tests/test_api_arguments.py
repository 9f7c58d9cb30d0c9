"""One validation layer: the Python API refuses what the command line refuses, in its words.

Each case calls a public function with a bad argument and expects a
:class:`bcgen.errors.BcgenError` subclass (never a plain ValueError, TypeError or
OverflowError) whose message names the argument; where the command line has the same
rule, the two messages differ only in the argument's name (``--solar-constant`` versus
``solar_constant_wm2``). ``format_epoch`` is checked to give only text that
``parse_epoch`` reads back (the epoch grammar documented in :mod:`bcgen.epochs`).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
import xarray as xr
from hypothesis import given, settings
from hypothesis import strategies as st
from published_tables import PMIP4, PMIP_SOLAR_CONSTANT_WM2

import bcgen
from bcgen.errors import BcgenError

ORBIT = bcgen.solve(-6000.0)  # Berger (1978) orbit of 6 ka
# A 6 ka orbit for the fixed solution: the PMIP4 midHolocene e and ϖ (Otto-Bliesner et al.
# 2017, Table 1; tests/published_tables.py). The refusals checked here do not depend on them.
MH = PMIP4["midHolocene"]
MH_E, MH_VARPI_DEG = float(MH.eccentricity), float(MH.perihelion_minus_180_deg)


CASES = [
    ("solve-epoch-text", lambda: bcgen.solve("6ka"),
     r"^years_from_1950: expected years from 1950 CE as numbers, got the string '6ka'"),
    ("solve-epoch-nan", lambda: bcgen.solve(float("nan")),
     r"^years_from_1950: epochs must be finite numbers of years from 1950 CE; got nan$"),
    ("solve-epoch-inf", lambda: bcgen.solve([0.0, math.inf]),
     r"^years_from_1950: epochs must be finite .*; got inf$"),
    ("solve-epoch-huge", lambda: bcgen.solve(1e300),
     r"^years_from_1950: epochs must lie within 1,000,000,000 years of 1950 CE"),
    ("elements-text", lambda: bcgen.OrbitalElements("0.0167", 23.44, 102.0),
     r"^eccentricity: expected numbers, got the string '0\.0167'$"),
    ("elements-shapes", lambda: bcgen.OrbitalElements([0.01, 0.02], [23.0, 24.0, 25.0], 0.0),
     r"^orbital elements and epochs have incompatible shapes"),
    ("daily-latitude-text", lambda: bcgen.daily_insolation(ORBIT, "noleap", "65"),
     r"^latitude_deg: expected latitudes in degrees north, got the string '65'$"),
    ("daily-solar-constant-overflow",
     lambda: bcgen.daily_insolation(ORBIT, "noleap", 65.0, solar_constant_wm2=1e308),
     r"^solar_constant_wm2: expected a positive number of W m-2 no larger than 5000"),
    ("monthly-solar-constant-inf",
     lambda: bcgen.monthly_insolation(ORBIT, "noleap", [65.0], solar_constant_wm2=math.inf),
     r"^solar_constant_wm2: expected a positive number of W m-2; got inf$"),
    ("daily-solar-constants-several",
     lambda: bcgen.daily_insolation(ORBIT, "noleap", [10.0, 20.0],
                                    solar_constant_wm2=np.array([1360.0, 1361.0, 1362.0])),
     r"^solar_constant_wm2: expected one positive number of W m-2 \(this function takes one "
     r"solar constant\), got an array of shape \(3,\)$"),
    ("annual-latitude-text", lambda: bcgen.annual_mean_insolation_wm2(ORBIT, "x"),
     r"^latitude_deg: expected latitudes in degrees north, got the string 'x'$"),
    ("instantaneous-shapes",
     lambda: bcgen.instantaneous_insolation(ORBIT, "noleap", np.arange(3.0), np.zeros(2),
                                            np.zeros(4)),
     r"^arguments of shapes that do not broadcast together: t_days \(3,\), latitude_deg "
     r"\(2,\), longitude_deg \(4,\)"),
    ("instantaneous-time-inf",
     lambda: bcgen.instantaneous_insolation(ORBIT, "noleap", math.inf, 10.0, 0.0),
     r"^t_days: expected finite model times in days, got inf$"),
    ("fixed-obliquity-radians",
     lambda: bcgen.solve(None, "fixed", eccentricity=MH_E, obliquity_deg=0.4207,
                         perihelion_deg=MH_VARPI_DEG,
                         perihelion_convention="perihelion_longitude"),
     r"^obliquity 0\.4207 degrees looks like radians \(24\.10 degrees\)"),
    ("format-epoch-text", lambda: bcgen.format_epoch("6ka"),
     r"^an epoch in years from 1950 CE must be a number; got '6ka'"),
    ("format-epoch-inf", lambda: bcgen.format_epoch(math.inf),
     r"^an epoch must be a finite number of years within 1,000,000,000 of 1950 CE; got inf$"),
    ("format-epoch-nan", lambda: bcgen.format_epoch(math.nan),
     r"^an epoch must be a finite number of years .*; got nan$"),
]


@pytest.mark.parametrize(("case", "call", "pattern"), CASES, ids=[c[0] for c in CASES])
def test_the_api_refuses_with_a_bcgen_error(case, call, pattern):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with pytest.raises(BcgenError, match=pattern):
            call()


def test_min_valid_fraction_above_one_is_refused_by_the_api(tmp_path):
    # The command line refuses --min-valid-fraction 2 with the same words (the corpus).
    edges = np.array([0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334, 365.0])
    ds = xr.Dataset(
        {"tas": (("time",), np.full(12, 280.0)),
         "time_bnds": (("time", "bnds"), np.stack([edges[:-1], edges[1:]], axis=1))},
        coords={"time": ("time", 0.5 * (edges[:-1] + edges[1:]),
                         {"units": "days since 0001-01-01", "calendar": "noleap",
                          "bounds": "time_bnds"})})
    ds = xr.decode_cf(ds, decode_times=xr.coders.CFDatetimeCoder(use_cftime=True))
    with pytest.raises(BcgenError, match=r"^min_valid_fraction: expected a fraction in "
                       r"\(0, 1\]; got 2$"):
        bcgen.to_fixed_angle_months(ds, ORBIT, min_valid_fraction=2)


def test_cli_and_api_say_the_same(run_cli):
    status, _, err = run_cli(["insolation", "6ka", "--lat", "65", "--solar-constant", "1e308"])
    with pytest.raises(BcgenError) as info:
        bcgen.daily_insolation(ORBIT, "noleap", 65.0, solar_constant_wm2=1e308)
    assert status == 2
    assert err.strip().replace("--solar-constant", "solar_constant_wm2") == \
        f"bcgen: error: {info.value}"


@settings(max_examples=300, deadline=None)
@given(st.floats(-1e9, 1e9, allow_nan=False), st.sampled_from(["auto", "ka", "bp", "ce"]))
def test_format_epoch_reads_back(years, style):
    # Exact for every epoch and style (issue 12): the text carries the epoch's shortest
    # decimal, scaled and shifted in exact decimal arithmetic on both sides.
    assert bcgen.parse_epoch(bcgen.format_epoch(years, style)) == years


@pytest.mark.parametrize("years", [0.1, 1e-7, 10.5, 5e-324, -5e-324, -6000.1, -0.1])
def test_format_epoch_reads_back_where_a_ce_year_cannot_hold_the_value(years):
    # 1950 + 0.1 is not a double that is 0.1 away from 1950: the decimal CE year must be
    # read as a decimal, not as a double, to give back 0.1 (IEEE 754 rounding).
    for style in ("auto", "ka", "bp", "ce"):
        assert bcgen.parse_epoch(bcgen.format_epoch(years, style)) == years


@pytest.mark.parametrize("s0", ["800", "1600"])
def test_cli_spec_and_api_warn_alike_of_an_implausible_solar_constant(run_cli, s0):
    # 900-1500 W m-2: the plausible range of bcgen.arguments.PLAUSIBLE_RANGES (common
    # practice); outside it every route warns once, in the same words.
    status, _, err = run_cli(["insolation", "6ka", "--lat", "65", "--solar-constant", s0])
    with pytest.warns(bcgen.errors.ImplausibleValueWarning) as record:
        bcgen.monthly_insolation(ORBIT, "noleap", [65.0], solar_constant_wm2=float(s0))
    api = {str(w.message) for w in record}
    assert status == 0
    lines = [line for line in err.splitlines() if "outside 900-1500" in line]
    assert len(lines) == 1, err
    assert len(api) == 1
    text = api.pop()
    assert text == f"solar_constant_wm2: {s0} W m-2 is outside 900-1500 W m-2, the range " \
        "expected for the Earth; check the value and its units"
    assert lines[0].endswith(text.replace("solar_constant_wm2", "--solar-constant"))


def test_a_build_warns_once_of_a_spec_s_implausible_solar_constant(run_cli, tmp_path):
    # The spec reader and every insolation function the build reaches see the same value;
    # the user is told once (the range is common practice, as above).
    spec = tmp_path / "s.yaml"
    spec.write_text("experiment: {name: s}\nepoch: 6ka\nsolar_constant_wm2: 800\n"
                    "grid: {kind: zonal, resolution_deg: 30}\n"
                    "products: [daily_insolation, monthly_insolation_fixed_angle]\n",
                    encoding="utf-8")
    status, _, err = run_cli(["build", str(spec), "-o", str(tmp_path / "out")])
    assert status == 0
    assert [line for line in err.splitlines() if "outside 900-1500" in line] == [
        "bcgen: warning: solar_constant_wm2: 800 W m-2 is outside 900-1500 W m-2, the range "
        "expected for the Earth; check the value and its units"]


def test_a_plausible_solar_constant_does_not_warn():
    with warnings.catch_warnings():
        warnings.simplefilter("error", bcgen.errors.ImplausibleValueWarning)
        # the PMIP1-PMIP3 solar constant (PMIP3 design pages; tests/published_tables.py)
        bcgen.monthly_insolation(ORBIT, "noleap", [65.0],
                                 solar_constant_wm2=PMIP_SOLAR_CONSTANT_WM2)


FIXED_OPTIONS = ["--eccentricity", MH.eccentricity, "--perihelion-deg", MH.perihelion_minus_180_deg,
                 "--perihelion-convention", "perihelion_longitude"]


@pytest.mark.parametrize("obliquity", [0.0, 12.0, 30.0])
def test_cli_and_api_refuse_a_non_earth_obliquity_alike(run_cli, obliquity):
    # Earth's obliquity stays within about 22-24.5 degrees over the last few million years
    # (Laskar et al. 2004, from memory); 21-25.5 is the spec's range with its margin.
    status, _, err = run_cli(["orbit", "6ka", "--solution", "fixed", "--obliquity-deg",
                              obliquity, *FIXED_OPTIONS])
    with pytest.raises(BcgenError) as info:
        bcgen.solve(None, "fixed", eccentricity=MH_E, obliquity_deg=obliquity,
                    perihelion_deg=MH_VARPI_DEG, perihelion_convention="perihelion_longitude")
    api = str(info.value)
    assert api == (f"obliquity {obliquity:g} degrees is outside Earth's range (about 22-24.5 "
                   "degrees in the last few million years); pass idealized=True for a "
                   "deliberately non-Earth orbit")
    assert status == 2
    assert err.strip() == "bcgen: error: --obliquity-deg: " + api.replace(
        "pass idealized=True", "add --idealized")


def test_idealized_lets_a_non_earth_obliquity_through_on_both_routes(run_cli):
    status, out, err = run_cli(["orbit", "6ka", "--solution", "fixed", "--obliquity-deg", "30",
                                "--idealized", "--format", "json", *FIXED_OPTIONS])
    assert status == 0, err
    assert "30" in out
    orbit = bcgen.solve(None, "fixed", eccentricity=MH_E, obliquity_deg=30.0,
                        perihelion_deg=MH_VARPI_DEG, perihelion_convention="perihelion_longitude",
                        idealized=True)
    assert float(orbit.obliquity_deg) == 30.0


def test_idealized_goes_with_the_fixed_solution_only(run_cli):
    status, _, err = run_cli(["orbit", "6ka", "--idealized"])
    assert status == 2
    assert "--idealized: only used with --solution fixed" in err
