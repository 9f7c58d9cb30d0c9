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

from bcgen.errors import InsolationError
from bcgen.solar_evolution import REFERENCE, gough_solar_constant_wm2

HAND_WORKED_RATIO = {50e6: 0.99564270, 94e6: 0.99183957, 252e6: 0.97841911}
HAND_ROUNDING = 2e-8  # the hand values carry 8 decimals


@pytest.mark.parametrize("age_years", sorted(HAND_WORKED_RATIO))
@pytest.mark.parametrize("s0", [1360.747, 1365.0])
def test_gough_1981_against_hand_worked_values(age_years, s0):
    s = gough_solar_constant_wm2(s0, -age_years)
    assert s / s0 == pytest.approx(HAND_WORKED_RATIO[age_years], abs=HAND_ROUNDING)


def test_today_is_the_spec_value_and_the_past_is_fainter():
    assert gough_solar_constant_wm2(1360.747, 0.0) == 1360.747
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


SPEC = """\
experiment:
  name: deep_sun
  description: invented deep-time scenario for the test
epoch: {epoch}
orbit:
  solution: fixed
  eccentricity: 0.0167
  obliquity_deg: 23.44
  perihelion_deg: 102.0
  perihelion_convention: perihelion_longitude
solar_constant_wm2: 1361.0
{scaling}products: [solar_constant]
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
