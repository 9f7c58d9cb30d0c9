"""The deep-time Sun: Gough (1981) scaling of the spec's solar constant.

Source: Gough, D. O. (1981), Solar Physics 74, 21-34, doi:10.1007/BF00151270:
S = S0 / (1 + 0.4 (1 - t/t_sun)), t_sun = 4.57 Gyr, so S/S0 = 4.57 / (4.57 + 0.4 age_Gyr).
The expected ratios below were worked by hand (long division), not by the code:
  50 Ma:  4.57 / 4.5900 = 0.99564270
  94 Ma:  4.57 / 4.6076 = 0.99183957
  252 Ma: 4.57 / 4.6708 = 0.97841911
"""

import numpy as np
import pytest
from published_tables import CMIP6_PICONTROL_TSI_WM2, PMIP_SOLAR_CONSTANT_WM2

from bcgen.errors import InsolationError
from bcgen.solar_evolution import REFERENCE, gough_solar_constant_wm2

HAND_WORKED_RATIO = {50e6: 0.99564270, 94e6: 0.99183957, 252e6: 0.97841911}
HAND_ROUNDING = 2e-8  # the hand values carry 8 decimals


@pytest.mark.parametrize("age_years", sorted(HAND_WORKED_RATIO))
@pytest.mark.parametrize("s0", [CMIP6_PICONTROL_TSI_WM2, PMIP_SOLAR_CONSTANT_WM2])
def test_gough_1981_against_hand_worked_values(age_years, s0):
    s = gough_solar_constant_wm2(s0, -age_years)
    assert s / s0 == pytest.approx(HAND_WORKED_RATIO[age_years], abs=HAND_ROUNDING)


def test_today_is_the_spec_value_and_the_past_is_fainter():
    s0 = CMIP6_PICONTROL_TSI_WM2
    assert gough_solar_constant_wm2(s0, 0.0) == s0
    ages = -np.array([0.0, 1e6, 50e6, 252e6, 1e9])
    s = gough_solar_constant_wm2(1361.0, ages)
    assert np.all(np.diff(s) < 0)
    # Gough (1981): the Sun at its birth (t = 0) had 1/1.4 of today's luminosity.
    assert gough_solar_constant_wm2(1.0, -4.57e9 + 1.0) == pytest.approx(1 / 1.4, rel=1e-9)
    assert "Gough" in REFERENCE and "Solar Physics 74" in REFERENCE


def test_refusals():
    with pytest.raises(InsolationError, match="after the Sun formed"):
        gough_solar_constant_wm2(1361.0, -5e9)
    with pytest.raises(InsolationError, match="positive number of W m-2"):
        gough_solar_constant_wm2(-1.0, -50e6)


FIXED_ORBIT = """\
orbit:
  solution: fixed
  eccentricity: 0.0167
  obliquity_deg: 23.44
  perihelion_deg: 102.0
  perihelion_convention: perihelion_longitude
solar_constant_wm2: 1361.0
"""
SPEC = """\
experiment:
  name: deep_sun
  description: invented deep-time scenario for the test
epoch: {epoch}
""" + FIXED_ORBIT + """{scaling}products: [solar_constant]
"""


@pytest.mark.parametrize("age_years", sorted(HAND_WORKED_RATIO))
def test_spec_option_scales_the_spec_s0_and_reports_its_source(tmp_path, run_cli, age_years):
    import json

    spec = tmp_path / "deep.yaml"
    spec.write_text(SPEC.format(epoch=f"{age_years / 1e6:g}Ma",
                                scaling="solar_constant_scaling: gough1981\n"))
    status, out, _ = run_cli(["build", spec, "-o", tmp_path / "out"])
    assert status == 0
    manifest = json.loads((tmp_path / "out" / "deep_sun_manifest.json").read_text())
    expected = 1361.0 * HAND_WORKED_RATIO[age_years]
    assert manifest["solar_constant_wm2"] == pytest.approx(expected, abs=1361.0 * HAND_ROUNDING)
    record = manifest["solar_constant"]
    assert record["scaling"] == "gough1981" and record["given_wm2"] == 1361.0
    assert "Gough" in record["reference"]
    assert "scaled from 1361.0 W m-2" in out and "Solar Physics 74" in out


def test_spec_without_the_option_keeps_s0(tmp_path, run_cli):
    import json

    spec = tmp_path / "deep.yaml"
    spec.write_text(SPEC.format(epoch="94Ma", scaling=""))
    assert run_cli(["build", spec, "-o", tmp_path / "out"])[0] == 0
    manifest = json.loads((tmp_path / "out" / "deep_sun_manifest.json").read_text())
    assert manifest["solar_constant_wm2"] == 1361.0
    assert manifest["solar_constant"] == {"value_wm2": 1361.0, "scaling": "none"}


def test_spec_option_refuses_unknown_scalings(tmp_path, run_cli):
    spec = tmp_path / "deep.yaml"
    spec.write_text(SPEC.format(epoch="94Ma", scaling="solar_constant_scaling: faint\n"))
    status, _, err = run_cli(["build", spec, "-o", tmp_path / "out"])
    assert status == 2 and "solar_constant_scaling" in err and "gough1981" in err


# --- a transient run: each model year has the Sun of its own epoch ------------------------------
TRANSIENT_SPEC = """\
experiment:
  name: deep_run
  description: invented deep-time scenario for the test
transient: {{start_epoch: 94Ma, end_epoch: 50Ma, first_model_year: 1, acceleration: 22000000,
            years_per_file: 10}}
calendar: {{name: noleap}}
grid: {{kind: zonal, resolution_deg: 30}}
""" + FIXED_ORBIT + """{scaling}products: [daily_insolation, monthly_insolation_fixed_day,
           monthly_insolation_fixed_angle]
"""
# Model years 1, 2, 3 have the epochs 94, 72 and 50 Ma (94 Ma + k × 22 Myr). By hand, as above:
#   72 Ma: 4.57 / 4.5988 = 0.99373750 (0.0288 / 4.5988 = 0.00626250)
TRANSIENT_RATIOS = (HAND_WORKED_RATIO[94e6], 0.99373750, HAND_WORKED_RATIO[50e6])


def test_transient_run_scales_each_model_year_with_its_own_epoch(tmp_path, run_cli):
    import json

    import netCDF4

    for name, scaling in (("plain", ""), ("faint", "solar_constant_scaling: gough1981\n")):
        (tmp_path / f"{name}.yaml").write_text(TRANSIENT_SPEC.format(scaling=scaling))
        status, out, _ = run_cli(["build", tmp_path / f"{name}.yaml", "-o", tmp_path / name])
        assert status == 0
    manifest = json.loads((tmp_path / "faint" / "deep_run_manifest.json").read_text())
    record = manifest["solar_constant"]
    assert record["scaling"] == "gough1981" and record["given_wm2"] == 1361.0
    assert "Solar Physics 74" in record["reference"]
    assert record["first_model_year_wm2"] == pytest.approx(1361.0 * TRANSIENT_RATIOS[0],
                                                           abs=1361.0 * HAND_ROUNDING)
    assert record["last_model_year_wm2"] == pytest.approx(1361.0 * TRANSIENT_RATIOS[-1],
                                                          abs=1361.0 * HAND_ROUNDING)
    assert "scaled from 1361.0 W m-2" in out and "Solar Physics 74" in out
    for product, steps in (("daily_insolation", 365), ("monthly_insolation_fixed_day", 12),
                           ("monthly_insolation_fixed_angle", 12)):
        file = f"deep_run_{product}_1-3.nc"
        with netCDF4.Dataset(tmp_path / "plain" / file) as plain, \
                netCDF4.Dataset(tmp_path / "faint" / file) as faint:
            assert "solar_irradiance" not in plain.variables
            s = faint["solar_irradiance"][:].reshape(3, steps)
            assert "Gough" in faint["solar_irradiance"].references
            q_plain = plain["insolation"][:].reshape(3, steps, -1)
            q_faint = faint["insolation"][:].reshape(3, steps, -1)
        for k, ratio in enumerate(TRANSIENT_RATIOS):
            np.testing.assert_allclose(s[k], 1361.0 * ratio, atol=1361.0 * HAND_ROUNDING)
            lit = q_plain[k] > 1.0  # float32 storage: compare where the Sun shines
            np.testing.assert_allclose(q_faint[k][lit] / q_plain[k][lit], ratio, rtol=1e-6)


SPREAD_SPEC = """\
experiment: {name: lig_run, description: invented scenario for the test}
transient: {start_epoch: 130ka, end_epoch: 115ka, first_model_year: 1, acceleration: 100,
            years_per_file: 200}
orbit: {solution: berger1978}
products: [orbit]
"""


def test_transient_run_reports_the_spread_between_solutions(tmp_path, run_cli):
    # "The spread is reported, never silently" (the issue): a Berger (1978) run states its
    # difference from the nbody solution at its first and last model years and its largest.
    import json

    from bcgen.orbit import berger1978, nbody

    (tmp_path / "run.yaml").write_text(SPREAD_SPEC)
    status, out, _ = run_cli(["build", tmp_path / "run.yaml", "-o", tmp_path / "out"])
    assert status == 0 and "orbit spread nbody - berger1978, largest over the run" in out
    spread = json.loads((tmp_path / "out" / "lig_run_manifest.json").read_text())["orbit_spread"]
    records = spread["at_epochs"]
    assert [r["epoch"] for r in records][::4] == ["130ka", "115ka"]
    sampled = []
    for r in records:
        t = r["years_from_1950"]
        diff = r["differences"]["nbody - berger1978"]
        expected = float(nbody.solve(t).eccentricity - berger1978.solve(t).eccentricity)
        assert diff["eccentricity"] == pytest.approx(expected, abs=1e-12)
        assert [q["latitude_deg"] for q in diff["insolation"]] == [65.0, 0.0, -65.0]
        sampled.append(abs(expected))
    largest = spread["largest_over_run"]["nbody - berger1978"]
    assert abs(largest["eccentricity"]["value"]) >= max(sampled)
    assert all(q["max_abs_daily_wm2"] > 0
               for q in largest["insolation_at_largest_precession_index_difference"])
