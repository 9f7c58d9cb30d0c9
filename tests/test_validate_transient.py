"""Validating a transient run model year by model year (issue 15).

Synthetic transient model output: monthly means over the calendar months of zonal TOA
insolation, each model year computed with the orbit that a planted mistake gives it
(``bcgen.monthly_insolation`` with day averages: the exact time mean over each month, as a
model's monthly mean of its time steps is). The correct output follows the spec's mapping
of model years to epochs (``bcgen.spec.TransientSpec``: model year first + k has the epoch
start + k x acceleration). Each planted mistake must be named first; the correct run must be
consistent. The orbits are Berger (1978) (checked against published tables elsewhere).
"""

from __future__ import annotations

import numpy as np
import pytest

from bcgen.insolation import monthly_insolation
from bcgen.orbit import solve
from bcgen.solar_calendar import ModelCalendar
from bcgen.spec import parse_spec_text
from bcgen.validation.readers import ModelOutput
from bcgen.validation.transient import TransientValidationError, validate_transient_output

# 127 ka to 115 ka at 1000 years per model year: model years 1 ... 13.
SPEC = """
experiment: {name: transient-check}
transient: {start_epoch: 127ka, end_epoch: 115ka, acceleration: 1000}
calendar: {name: noleap}
products: [orbit]
"""
LATITUDES = np.array([-70.0, -30.0, 10.0, 50.0, 80.0])
#: The synthetic monthly means and the reference are both day averages, made by two routes
#: (bcgen.insolation's, which also splits polar-edge days, and the validation's forward
#: model): they agree to a few 1e-6 W m-2.
SAME_WM2 = 1e-4
FIRST, N_YEARS, ACCELERATION, START = 1, 13, 1000, -127000.0


def model_output(epochs: np.ndarray, years: np.ndarray | None = None) -> ModelOutput:
    """Monthly means of each model year on the orbit of the epoch given for it."""
    years = np.arange(FIRST, FIRST + N_YEARS) if years is None else years
    calendar = ModelCalendar("noleap")
    values = monthly_insolation(solve(epochs), calendar, LATITUDES, months="fixed_day",
                                daily_method="day_average").insolation_wm2  # (n, lat, 12)
    starts = calendar.month_starts_days(1)
    return ModelOutput(
        source="synthetic.nc:rsdt", calendar="noleap", frequency="monthly",
        year=np.repeat(years, 12), start_day=np.tile(starts[:12], years.size),
        end_day=np.tile(starts[1:], years.size), month=np.tile(np.arange(1, 13), years.size),
        latitude_deg=LATITUDES,
        insolation_wm2=values.transpose(0, 2, 1).reshape(-1, LATITUDES.size),
    )


def epochs(acceleration=ACCELERATION, shift=0, sign=1.0):
    k = np.arange(N_YEARS) + shift
    return START + sign * acceleration * k  # towards the present: epochs increase


def test_a_correct_transient_run_is_consistent():
    result = validate_transient_output(model_output(epochs()), parse_spec_text(SPEC))
    assert result.verdict == "consistent"
    assert result.max_abs_error_wm2 < SAME_WM2
    assert result.findings == ()


@pytest.mark.parametrize("code, planted", [
    ("orbit_one_year_late", epochs(shift=-1)),
    ("orbit_one_year_early", epochs(shift=1)),
    ("orbit_frozen_at_start", np.full(N_YEARS, START)),
    ("run_direction_reversed", epochs(sign=-1.0)),
    ("acceleration_wrong", epochs(acceleration=500)),
    ("acceleration_wrong", epochs(acceleration=2000)),
])
def test_each_planted_transient_mistake_is_named_first(code, planted):
    result = validate_transient_output(model_output(planted), parse_spec_text(SPEC))
    assert result.verdict == "inconsistent"
    assert result.findings[0].code == code
    assert result.findings[0].explains
    assert result.findings[0].max_abs_after_wm2 < SAME_WM2
    # The other mistakes do not explain it -- except that a frozen orbit and an acceleration
    # of 1 (not applied) move the orbit by only 12 years over this run: the insolation
    # cannot tell them apart, and the frozen orbit is named first by rule.
    others = [f for f in result.findings[1:] if f.explains]
    twins = [f for f in others if f.code == "acceleration_wrong" and f.fitted_acceleration == 1]
    assert others == (twins if code == "orbit_frozen_at_start" else [])
    assert code in result.to_text().splitlines()[2]


def test_the_fitted_acceleration_is_reported():
    result = validate_transient_output(model_output(epochs(acceleration=500)),
                                       parse_spec_text(SPEC))
    assert result.findings[0].fitted_acceleration == 500
    assert "500 years per model year, not 1000" in result.findings[0].description


def test_a_mistake_outside_the_transient_catalogue_falls_back_to_the_time_slice_one():
    # Every year's perihelion 180 degrees off: no transient mistake explains it; the
    # time-slice catalogue names it for the worst model year.
    from bcgen.orbit import OrbitalElements

    orbits = solve(epochs())
    wrong = OrbitalElements(orbits.eccentricity, orbits.obliquity_deg,
                            orbits.perihelion_longitude_deg + 180.0)
    calendar = ModelCalendar("noleap")
    values = monthly_insolation(wrong, calendar, LATITUDES, months="fixed_day",
                                daily_method="day_average").insolation_wm2
    good = model_output(epochs())
    output = ModelOutput(**{**good.__dict__, "insolation_wm2":
                            values.transpose(0, 2, 1).reshape(-1, LATITUDES.size)})
    result = validate_transient_output(output, parse_spec_text(SPEC))
    assert result.verdict == "inconsistent"
    assert not any(f.explains for f in result.findings)
    assert result.catalogue is not None
    assert result.catalogue.findings[0].code == "perihelion_opposite"


def test_a_model_year_outside_the_run_is_an_error_naming_it():
    output = model_output(epochs(), years=np.arange(2, 2 + N_YEARS))  # years 2 ... 14
    with pytest.raises(TransientValidationError, match="model year 14 is not covered"):
        validate_transient_output(output, parse_spec_text(SPEC))


def _write_netcdf(output: ModelOutput, path) -> None:
    """The synthetic output as a model would write it: CF monthly means, noleap calendar."""
    import cftime
    import xarray as xr

    days = 365.0 * (output.year - 1)
    lower, upper = days + output.start_day, days + output.end_day

    def dates(d):
        return cftime.num2date(d, "days since 0001-01-01", calendar="noleap")

    ds = xr.Dataset(
        {"rsdt": (("time", "lat"), output.insolation_wm2,
                  {"standard_name": "toa_incoming_shortwave_flux", "units": "W m-2",
                   "cell_methods": "time: mean"}),
         "time_bnds": (("time", "bnds"), np.stack([dates(lower), dates(upper)], axis=1))},
        coords={"time": ("time", dates(0.5 * (lower + upper)), {"bounds": "time_bnds"}),
                "lat": ("lat", LATITUDES, {"units": "degrees_north",
                                           "standard_name": "latitude"})},
    )
    enc = {"units": "days since 0001-01-01", "calendar": "noleap"}
    ds.to_netcdf(path, encoding={"time": enc, "time_bnds": enc})


def test_cli_validates_a_transient_run_and_names_the_mistake(tmp_path, run_cli):
    (tmp_path / "run.yaml").write_text(SPEC)
    _write_netcdf(model_output(epochs()), tmp_path / "good.nc")
    _write_netcdf(model_output(epochs(shift=-1)), tmp_path / "late.nc")
    status, out, err = run_cli(["validate", str(tmp_path / "good.nc"), "--spec",
                                str(tmp_path / "run.yaml")])
    assert status == 0, err
    assert "verdict: consistent" in out
    status, out, err = run_cli(["validate", str(tmp_path / "late.nc"), "--spec",
                                str(tmp_path / "run.yaml")])
    assert status == 1
    assert "diagnosis: orbit_one_year_late" in out
    assert "most likely orbit_one_year_late" in err and len(err.strip().splitlines()) == 1


def _split(output: ModelOutput, years: list[int]) -> list[ModelOutput]:
    """The output cut into consecutive parts that start at the given model years."""
    edges = [*years, int(output.year.max()) + 1]
    parts = []
    for lo, hi in zip(edges[:-1], edges[1:], strict=True):
        rows = (output.year >= lo) & (output.year < hi)
        parts.append(ModelOutput(**{**output.__dict__, **{
            k: getattr(output, k)[rows]
            for k in ("year", "start_day", "end_day", "month", "insolation_wm2")}}))
    return parts


def test_the_python_api_routes_a_transient_spec_as_the_command_does(tmp_path, run_cli):
    import json

    import bcgen
    from bcgen.validation.transient import TransientValidationResult

    (tmp_path / "run.yaml").write_text(SPEC)
    _write_netcdf(model_output(epochs(shift=1)), tmp_path / "early.nc")
    result = bcgen.validate(tmp_path / "early.nc", tmp_path / "run.yaml")
    assert isinstance(result, TransientValidationResult)
    assert result.verdict == "inconsistent"
    assert result.findings[0].code == "orbit_one_year_early"
    status, out, err = run_cli(["validate", str(tmp_path / "early.nc"), "--spec",
                                str(tmp_path / "run.yaml"), "--format", "json"])
    assert status == 1
    assert json.loads(out) == json.loads(json.dumps(result.to_dict()))
    assert result.summary_line() in err
    # an orbit table is refused by both routes, in the same words
    table = tmp_path / "orbit.csv"
    table.write_text("time_days,declination_deg\n0.5,-23\n")
    with pytest.raises(Exception, match="checked from its NetCDF insolation output") as caught:
        bcgen.validate(table, tmp_path / "run.yaml")
    status, out, err = run_cli(["validate", str(table), "--spec", str(tmp_path / "run.yaml")])
    assert status == 2 and str(caught.value) in err


def test_a_run_split_into_several_files_is_read_as_one(tmp_path, run_cli):
    import bcgen

    (tmp_path / "run.yaml").write_text(SPEC)
    late = model_output(epochs(shift=-1))
    paths = []
    for i, part in enumerate(_split(late, [1, 5, 9])):
        paths.append(tmp_path / f"rsdt_{i}.nc")
        _write_netcdf(part, paths[-1])
    whole = validate_transient_output(late, parse_spec_text(SPEC))
    for given in (paths, paths[::-1]):  # any order: the files are ordered by their first time
        result = bcgen.validate(given, tmp_path / "run.yaml")
        assert result.model_years == (1, N_YEARS)
        assert result.findings[0].code == "orbit_one_year_late"
        assert result.max_abs_error_wm2 == pytest.approx(whole.max_abs_error_wm2, rel=1e-9)
    status, out, err = run_cli(["validate", *map(str, paths), "--spec",
                                str(tmp_path / "run.yaml")])
    assert status == 1 and "diagnosis: orbit_one_year_late" in out
    # a missing middle file (a gap) and a file given twice (an overlap) are named
    from bcgen.errors import InputFileError

    with pytest.raises(InputFileError, match=r"rsdt_2.nc: starts at model year 9, day 0 but "
                                             r".*rsdt_0.nc ends at model year 4, day 365 "
                                             r"\(a gap between files\)"):
        bcgen.validate([paths[0], paths[2]], tmp_path / "run.yaml")
    _write_netcdf(_split(late, [1, 4])[1], tmp_path / "again.nc")  # years 4 ... 13
    with pytest.raises(InputFileError, match=r"an overlap between files"):
        bcgen.validate([paths[0], tmp_path / "again.nc"], tmp_path / "run.yaml")
