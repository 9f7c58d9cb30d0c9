"""The ``nbody`` solution as software: its table is reproducible, its options, limits, cache,
command line and registry entry behave. (Published checks: test_orbit_nbody_published.py.)
"""

import warnings

import numpy as np
import pytest
from published_tables import CMIP6_PICONTROL_TSI_WM2

import bcgen
from bcgen.errors import LongComputationWarning, OrbitError, OutsideValidityWarning
from bcgen.orbit import SOLUTIONS, nbody, nbody_generate, precession
from bcgen.orbit import nbody_integrate as integ


@pytest.fixture(autouse=True)
def private_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("BCGEN_CACHE_DIR", str(tmp_path / "cache"))


# --- the bundled table is made by the package's own command, deterministically ---------------
REGENERATED_ROWS = 40  # 4 kyr per chunk checked: a few seconds each
RECHUNKED_ATOL = 5e-6  # e-vector components when chunk boundaries differ (sample jitter)


@pytest.mark.parametrize("chunk", [0, 57])
def test_regenerating_a_span_reproduces_the_bundled_table(chunk):
    # Same code, same start state (stored per chunk) -> the same rows; the tolerance allows
    # for another CPU's rounding, far below the table's float32 storage of the vectors.
    raw = nbody.raw_table()
    ecc, normal, columns = nbody_generate.regenerate_chunk(raw, chunk, REGENERATED_ROWS)
    lo = int(raw["chunk_first_row"][chunk])
    rows = slice(lo, lo + REGENERATED_ROWS)
    np.testing.assert_allclose(ecc, raw["ecc_vector"][rows], atol=2e-7)
    np.testing.assert_allclose(normal, raw["orbit_normal"][rows], atol=2e-7)
    np.testing.assert_allclose(columns["eccentricity"], raw["eccentricity"][rows], atol=2e-7)
    np.testing.assert_allclose(columns["obliquity_deg"], raw["obliquity_deg"][rows], atol=1e-5)
    for name in ("e_sin_varpi", "e_cos_varpi"):
        np.testing.assert_allclose(columns[name], raw[name][rows], atol=2e-7)


def test_the_table_covers_2050_ce_to_5_myr_bp_every_100_years():
    table = nbody.raw_table()
    assert float(table["first_epoch_years_from_1950"]) == 100.0
    assert float(table["step_years"]) == -100.0
    assert len(table["eccentricity"]) == 50_002  # 2050 CE ... 5,000,000 BP
    assert float(table["time_step_days"]) == integ.TIME_STEP_DAYS


def test_precession_with_default_options_reproduces_the_stored_elements():
    # Solving the precession again from the stored vectors gives the stored elements: the
    # table's elements and the option path are one computation.
    raw = nbody.raw_table()
    n = 3000
    spin = nbody_generate.solve_spin(raw["ecc_vector"][:n], raw["orbit_normal"][:n])
    cols = nbody_generate.elements_columns(raw["ecc_vector"][:n], raw["orbit_normal"][:n], spin)
    for name, values in cols.items():
        np.testing.assert_allclose(values, raw[name][:n], rtol=0, atol=1e-12)


def test_generate_resumes_from_its_checkpoint(tmp_path, monkeypatch):
    monkeypatch.setattr(nbody_generate, "CHUNK_ROWS", 2)
    out = tmp_path / "t.npz"
    calls = []
    real = integ.integrate_rows

    def stop_after_two(state, rows):
        calls.append(len(rows))
        if len(calls) == 3:  # row 0, then the first chunk; the second chunk is interrupted
            raise KeyboardInterrupt
        return real(state, rows)

    monkeypatch.setattr(integ, "integrate_rows", stop_after_two)
    with pytest.raises(KeyboardInterrupt):
        nbody_generate.generate(400.0, out)
    assert not out.exists() and (tmp_path / "t.npz.partial.npz").exists()
    monkeypatch.setattr(integ, "integrate_rows", real)
    resumed = nbody_generate.generate(400.0, out)
    monkeypatch.setattr(integ, "integrate_rows", real)
    straight = nbody_generate.generate(400.0, tmp_path / "s.npz")
    for name in ("ecc_vector", "orbit_normal", "eccentricity", "obliquity_deg"):
        np.testing.assert_array_equal(resumed[name], straight[name])
    assert not (tmp_path / "t.npz.partial.npz").exists()
    # Other chunk boundaries move the samples by up to one step (8 days) against the
    # bundled run's: a few 1e-7 in the 100-year means.
    bundled = nbody.raw_table()
    np.testing.assert_allclose(straight["ecc_vector"], bundled["ecc_vector"][:6],
                               atol=RECHUNKED_ATOL)


# --- beyond the table: on the fly, cached on disk ----------------------------------------------
def truncated_table(tmp_path, n_rows=501):
    """The bundled table cut after its first chunk, as if the run had stopped at 49.9 ka."""
    raw = nbody.raw_table()
    cut = {name: raw[name] for name in ("first_epoch_years_from_1950", "step_years",
                                        "time_step_days", "samples_per_row", "software")}
    cut.update(ecc_vector=raw["ecc_vector"][:n_rows], orbit_normal=raw["orbit_normal"][:n_rows],
               chunk_first_row=raw["chunk_first_row"][:1], chunk_state=raw["chunk_state"][:1],
               end_state=raw["chunk_state"][1])  # chunk 1 starts where row 500 ends
    path = tmp_path / "cut.npz"
    nbody_generate.save_atomic(path, nbody_generate.with_elements(cut))
    return path


def test_epochs_beyond_the_table_are_integrated_and_cached(tmp_path, monkeypatch):
    monkeypatch.setattr(nbody_generate, "CHUNK_ROWS", 20)  # integrate 2 kyr, not 50
    monkeypatch.setenv("BCGEN_NBODY_TABLE", str(truncated_table(tmp_path)))
    t = np.array([-50_000.0, -50_150.0, -51_000.0])
    beyond = nbody.solve(t)
    monkeypatch.delenv("BCGEN_NBODY_TABLE")
    bundled = nbody.solve(t)
    # The continuation from the stored state gives the rows the straight run gave (up to
    # the sample jitter of other chunk boundaries).
    np.testing.assert_allclose(beyond.eccentricity, bundled.eccentricity, atol=RECHUNKED_ATOL)
    np.testing.assert_allclose(beyond.obliquity_deg, bundled.obliquity_deg, atol=1e-4)
    np.testing.assert_allclose(beyond.perihelion_longitude_deg,
                               bundled.perihelion_longitude_deg, atol=0.05)
    cached = list((tmp_path / "cache").glob("nbody_extension_*.npz"))
    assert len(cached) == 1
    # A second process finds the cache: no integration.
    monkeypatch.setenv("BCGEN_NBODY_TABLE", str(truncated_table(tmp_path)))
    nbody._extended.cache_clear()
    nbody._evaluated.cache_clear()

    def refuse(*args):
        raise AssertionError("integrated again despite the cache")

    monkeypatch.setattr(integ, "integrate_rows", refuse)
    again = nbody.solve(t)
    np.testing.assert_array_equal(again.eccentricity, beyond.eccentricity)


class _Stop(Exception):
    pass


@pytest.mark.parametrize(("epoch", "words"), [
    (-5.2e6, r"beyond its bundled table: 0\.20 Myr of planetary motion, roughly \d+ s of CPU"),
    (-9.0e6, r"beyond its bundled table: 4\.00 Myr of planetary motion, roughly \d+ min"),
    (3.0e6, r"forward from 2050 CE: 3\.00 Myr of planetary motion, roughly \d+ min"),
])
def test_a_long_integration_is_announced_before_it_starts(monkeypatch, tmp_path, epoch, words):
    # The user is told the size of the work and where it is kept before waiting for it.
    def stop(*args):
        raise _Stop

    monkeypatch.setattr(integ, "integrate_rows", stop)
    monkeypatch.setattr(integ, "de421_state", lambda: None)
    nbody._evaluated.cache_clear()
    nbody._extended.cache_clear()
    with pytest.warns(LongComputationWarning, match=words) as record, pytest.raises(_Stop):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", OutsideValidityWarning)
            nbody.solve(np.array([epoch]))
    assert str(tmp_path / "cache") in str(record[0].message)


def test_a_short_integration_is_not_announced(monkeypatch, tmp_path):
    monkeypatch.setattr(nbody_generate, "CHUNK_ROWS", 20)  # 2 kyr: seconds of work
    monkeypatch.setenv("BCGEN_NBODY_TABLE", str(truncated_table(tmp_path)))
    with warnings.catch_warnings():
        warnings.simplefilter("error", LongComputationWarning)
        nbody.solve(np.array([-50_500.0]))


# --- after 2050 CE: forward from the DE421 state, cached on disk ------------------------------
FUTURE_EPOCHS = np.arange(100.0, 5001.0, 50.0)  # 2050 CE to 6950 CE


def test_future_epochs_continue_the_table_at_2050_ce(monkeypatch):
    # Row 0 (2050 CE) integrated again on the way forward is the table's own row: the same
    # code from the same DE421 state (the tolerance allows for another CPU's rounding).
    raw = nbody.raw_table()
    ahead = nbody.future_vectors(nbody.table_source(), 49)
    np.testing.assert_allclose(ahead["ecc_vector"][0], raw["ecc_vector"][0], atol=2e-7)
    np.testing.assert_allclose(ahead["orbit_normal"][0], raw["orbit_normal"][0], atol=2e-7)
    columns = nbody._future_columns(nbody.table_source(), 49)
    for name, tol in (("eccentricity", 2e-7), ("obliquity_deg", 1e-6),
                      ("e_sin_varpi", 2e-7), ("e_cos_varpi", 2e-7)):
        assert columns[name][0] == pytest.approx(raw[name][0], abs=tol)
    # No kink at 2050 CE: the second differences of 100-year rows centred on 2050 and 2150 CE
    # (which mix table and forward rows) are no larger than those within the table over the
    # 2 kyr before (left by the 100-year means' residual short-period terms).
    t = np.arange(-2000.0, 201.0, 100.0)
    solved = nbody.solve(t)
    for series in (solved.eccentricity, solved.obliquity_deg, solved.precession_index):
        curvature = np.abs(np.diff(series, 2))  # centred on t[1:-1]
        assert np.max(curvature[-2:]) <= 1.5 * np.max(curvature[:-3])
    # A second process finds the cache: no integration.
    nbody._evaluated.cache_clear()

    def refuse(*args):
        raise AssertionError("integrated again despite the cache")

    monkeypatch.setattr(integ, "integrate_rows", refuse)
    again = nbody.solve(FUTURE_EPOCHS)
    assert again.shape == FUTURE_EPOCHS.shape
    assert not nbody.needs_integration(FUTURE_EPOCHS)
    nbody._evaluated.cache_clear()


def test_future_epochs_against_published_references():
    # Source: Vondrák, Capitaine & Wallace (2011), A&A 534, A22, the IAU long-term precession
    # model, through pyerfa ltpecl/ltpequ (obliquity = angle between the ecliptic and equator
    # poles); the near-present bound, 0.02°, over 5 kyr ahead.
    import erfa

    from bcgen.orbit import berger1978

    mine = nbody.solve(FUTURE_EPOCHS)
    ltp = np.array([np.degrees(np.arccos(erfa.ltpecl(y) @ erfa.ltpequ(y)))
                    for y in 1950.0 + FUTURE_EPOCHS])
    assert np.max(np.abs(mine.obliquity_deg - ltp)) < 0.02
    # Source: Berger (1978), J. Atmos. Sci. 35, 2362 (valid about ±1 Myr): the near-present
    # bounds of the past, e within 0.0005 and ϖ within 1°, hold ahead as well.
    ref = berger1978.solve(FUTURE_EPOCHS)
    assert np.max(np.abs(mine.eccentricity - ref.eccentricity)) < 0.0005
    dvarpi = (mine.perihelion_longitude_deg - ref.perihelion_longitude_deg + 180) % 360 - 180
    assert np.max(np.abs(dvarpi)) < 1.0
    nbody._evaluated.cache_clear()


# --- options, validity, errors ------------------------------------------------------------------
def test_options_change_the_precession_not_the_orbit():
    t = np.array([0.0, -500_000.0, -2_000_000.0])
    base = nbody.solve(t)
    weak = nbody.solve(t, dynamical_ellipticity=0.99)
    still = nbody.solve(t, tidal_dissipation=0.0)
    np.testing.assert_allclose(weak.eccentricity, base.eccentricity, atol=1e-12)
    assert abs(weak.obliquity_deg[0] - base.obliquity_deg[0]) < 1e-4  # both start from today
    # A 1 % weaker precession constant puts the precession phase off by ~1 % of 2 Myr of
    # precession (about 280°), so ϖ from the moving equinox must move there.
    dvarpi = (weak.perihelion_longitude_deg - base.perihelion_longitude_deg + 180) % 360 - 180
    assert abs(dvarpi[2]) > 10.0
    assert np.any(np.abs(still.obliquity_deg - base.obliquity_deg)[1:] > 1e-3)


def test_tidal_history_signs():
    # Going back in time the Moon is closer and the day shorter (Dickey et al. 1994).
    moon_ratio, omega_ratio = precession._tidal_history(np.array([-1e6]), 1.0)
    assert moon_ratio[0] > 1.0 and omega_ratio[0] < 1.0
    # About 2 ms per century of tidal lengthening of the day (common practice: 1.7-2.3).
    lod_change_ms_per_cy = (1.0 / omega_ratio[0] - 1.0) * 86164.1 * 1e3 / -1e4
    assert -2.5 < lod_change_ms_per_cy < -1.5


def test_limits_and_warnings():
    with pytest.raises(OrbitError, match="more than 50 Myr from 1950 CE"):
        nbody.solve(-60e6)
    with pytest.raises(OrbitError, match="more than 50 Myr from 1950 CE"):
        nbody.solve(60e6)
    with pytest.raises(OrbitError, match="years from 1950 CE as numbers"):
        nbody.solve("-6000")
    with pytest.raises(OrbitError, match="finite"):
        nbody.solve(np.nan)
    with pytest.raises(OrbitError, match="dynamical_ellipticity is a multiple of today's"):
        nbody.solve(0.0, dynamical_ellipticity=0.0)
    with pytest.raises(OrbitError, match="does not take path"):
        bcgen.solve(0.0, "nbody", path="x.csv")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        nbody.solve([-5e6, 100.0])  # the whole table: no warning


def test_beyond_the_stated_validity_warns(monkeypatch):
    # Beyond 10 Myr the integration would take minutes; a stand-in extension shows the warning.
    table = nbody._table(nbody.table_source())
    stand_in = nbody.Table(table.first_epoch, 3 * table.step_years, table.columns)  # 15 Myr
    monkeypatch.setattr(nbody, "_extended", lambda source, n: stand_in)
    nbody._evaluated.cache_clear()
    with pytest.warns(OutsideValidityWarning, match="more than 10 Myr from 1950 CE"):
        nbody.solve(-10.5e6)
    # The same ahead, with stand-in rows for the forward integration.
    monkeypatch.setattr(nbody, "_future_columns", lambda source, n, *options: {
        name: np.resize(table.columns[name], n + 1) for name in table.columns})
    with pytest.warns(OutsideValidityWarning, match="more than 10 Myr from 1950 CE"):
        nbody.solve(10.5e6)
    nbody._evaluated.cache_clear()


def test_registry_and_readme_entry():
    assert SOLUTIONS["nbody"] is nbody
    assert "DE421" in nbody.REFERENCE and "Laskar" in nbody.REFERENCE


def test_reading_the_table_needs_only_numpy():
    import subprocess
    import sys

    code = ("import sys; sys.modules['rebound'] = None; sys.modules['reboundx'] = None; "
            "sys.modules['jplephem'] = None; import bcgen; "
            "o = bcgen.solve(-127000.0, 'nbody'); print(float(o.eccentricity))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert 0.03 < float(out.stdout) < 0.05


# --- command line -------------------------------------------------------------------------------
def test_cli_nbody_and_compare(run_cli):
    status, out, _ = run_cli(["orbit", "127ka", "400ka", "1Ma", "--solution", "nbody"])
    assert status == 0 and "solution: nbody" in out and out.count("\n") == 9
    status, out, _ = run_cli(["orbit", "127ka", "--compare"])
    assert status == 0
    assert "127ka  berger1978" in out and "127ka  nbody" in out
    assert "nbody - berger1978" in out and "insolation: 65N" in out


def test_cli_compare_json_differences_are_the_differences(run_cli):
    import json

    status, out, _ = run_cli(["orbit", "6ka", "--compare", "--format", "json"])
    record = json.loads(out)[0]
    sol, diff = record["solutions"], record["differences"]["nbody - berger1978"]
    assert diff["eccentricity"] == pytest.approx(
        sol["nbody"]["eccentricity"] - sol["berger1978"]["eccentricity"], abs=1e-15)
    assert [q["latitude_deg"] for q in diff["insolation"]] == [65.0, 0.0, -65.0]


def test_cli_option_errors(run_cli):
    status, _, err = run_cli(["orbit", "6ka", "--tidal-dissipation", "0"])
    assert status == 2 and "only used with --solution nbody" in err
    status, _, err = run_cli(["orbit", "6ka", "--compare", "--format", "csv"])
    assert status == 2 and "--compare prints text or json" in err
    status, _, err = run_cli(["orbit", "60000000 BP", "--solution", "nbody"])
    assert status == 2 and "more than 50 Myr from 1950 CE" in err


# --- the spread between solutions in a build ---------------------------------------------------
BUILD_SPEC = """\
experiment:
  name: lig_spread
  description: invented scenario for the test
epoch: 127ka
orbit:
  solution: berger1978
products: [solar_constant]
"""


def test_a_berger_build_states_its_difference_from_the_modern_solution(tmp_path, run_cli):
    import json

    from bcgen.orbit import berger1978

    spec = tmp_path / "s.yaml"
    spec.write_text(BUILD_SPEC)
    status, out, _ = run_cli(["build", spec, "-o", tmp_path / "out"])
    assert status == 0
    assert "orbit spread nbody - berger1978" in out
    manifest = json.loads((tmp_path / "out" / "lig_spread_manifest.json").read_text())
    diff = manifest["orbit_spread"]["differences"]["nbody - berger1978"]
    t = -127_000.0
    assert diff["eccentricity"] == pytest.approx(
        float(nbody.solve(t).eccentricity - berger1978.solve(t).eccentricity), abs=1e-12)
    assert [q["latitude_deg"] for q in diff["insolation"]] == [65.0, 0.0, -65.0]
    assert all(q["max_abs_daily_wm2"] > 0 for q in diff["insolation"])


def test_insolation_spread_against_the_polar_annual_mean():
    # Analytic result: annual-mean insolation at a pole is S0 sin(ε) / (π √(1 − e²)),
    # independent of ϖ (Berger, Loutre & Yin 2010, from memory).
    from bcgen.orbit import OrbitalElements
    from bcgen.spread import insolation_spread

    a = OrbitalElements(0.04, 24.0, 275.0)
    b = OrbitalElements(0.01, 22.5, 10.0)
    s0 = CMIP6_PICONTROL_TSI_WM2  # any S0 will do; the CMIP6 piControl value
    spread = insolation_spread(a, b, latitudes_deg=(90.0,), solar_constant_wm2=s0,
                               n_longitudes=3600)
    expected = s0 / np.pi * (np.sin(np.radians(24.0)) / np.sqrt(1 - 0.04**2)
                             - np.sin(np.radians(22.5)) / np.sqrt(1 - 0.01**2))
    assert spread["annual_mean_wm2"][0] == pytest.approx(expected, abs=0.05)
