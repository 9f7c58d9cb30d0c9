"""Perihelion conventions, OrbitalElements, and the table and fixed solutions."""

import dataclasses
import warnings

import netCDF4
import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from published_tables import PMIP4, PMIP_1950_ORBIT

import bcgen
from bcgen.errors import InputFileError, OrbitError
from bcgen.orbit import PERIHELION_CONVENTIONS, SOLUTIONS, OrbitalElements, convert_perihelion
from bcgen.orbit.elements import wrap_angle

ANGLE_TOLERANCE_DEG = 1e-9
# The PMIP 1950 orbit (PMIP3 design pages; tests/published_tables.py): e, obliquity, ϖ, and
# the Sun's longitude at perihelion ϖ + 180 (Berger 1978).
E_1950, OBLIQUITY_1950_DEG, VARPI_1950_DEG = PMIP_1950_ORBIT
SUN_1950_DEG = VARPI_1950_DEG + 180.0
# The PMIP4 piControl (1850 CE) orbit (Otto-Bliesner et al. 2017; tests/published_tables.py).
PI_E, PI_OBLIQUITY_DEG, PI_VARPI_DEG = PMIP4["piControl"].orbit


def angular_distance_deg(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


# --- conventions --------------------------------------------------------------------------
def test_sun_longitude_at_perihelion_is_varpi_plus_180():
    # Berger 1978: the Sun's geocentric longitude at perihelion is ϖ + 180°,
    # e.g. 102.04 + 180 = 282.04° (perihelion about 3 January) for the PMIP 1950 orbit.
    sun = convert_perihelion(VARPI_1950_DEG, "perihelion_longitude",
                             "sun_longitude_at_perihelion")
    assert sun == pytest.approx(SUN_1950_DEG, abs=1e-12)
    orbit = OrbitalElements(*PMIP_1950_ORBIT)
    assert orbit.sun_longitude_at_perihelion_deg == pytest.approx(SUN_1950_DEG, abs=1e-12)
    assert orbit.perihelion("sun_longitude_at_perihelion", "rad") == pytest.approx(
        np.deg2rad(SUN_1950_DEG), abs=1e-14
    )


def test_precession_index_is_e_sin_varpi():
    # Berger (1978): climatic precession e sin ϖ; analytic: ϖ = 90° gives e, 270° gives -e.
    orbit = OrbitalElements([0.02, 0.02, 0.03], 23.0, [90.0, 270.0, 0.0])
    np.testing.assert_allclose(orbit.precession_index, [0.02, -0.02, 0.0], atol=1e-15)


@given(
    value=st.floats(min_value=-1e4, max_value=1e4, allow_nan=False),
    conventions=st.tuples(
        st.sampled_from(list(PERIHELION_CONVENTIONS)), st.sampled_from(list(PERIHELION_CONVENTIONS))
    ),
    units=st.tuples(st.sampled_from(["deg", "rad"]), st.sampled_from(["deg", "rad"])),
)
def test_every_conversion_round_trips(value, conventions, units):
    there = convert_perihelion(value, conventions[0], conventions[1], "deg", units[1])
    back = convert_perihelion(there, conventions[1], conventions[0], units[1], "deg")
    assert angular_distance_deg(back, value) < ANGLE_TOLERANCE_DEG
    full_turn = 360.0 if units[1] == "deg" else 2 * np.pi
    assert 0.0 <= there < full_turn


def test_conversion_of_arrays_and_errors():
    out = convert_perihelion(
        np.array([0.0, 90.0, 270.0]), "sun_longitude_at_perihelion", "perihelion_longitude"
    )
    np.testing.assert_allclose(out, [180.0, 270.0, 90.0])
    with pytest.raises(OrbitError, match="unknown perihelion convention 'perihelion'"):
        convert_perihelion(1.0, "perihelion", "perihelion_longitude")
    with pytest.raises(OrbitError, match="unknown angle unit 'degrees'"):
        convert_perihelion(1.0, "perihelion_longitude", "perihelion_longitude", "degrees")


def test_wrap_angle_never_returns_a_full_turn():
    # np.mod(-1e-17, 360) rounds to 360.0 in IEEE arithmetic; the result must be < 360.
    assert wrap_angle(-1e-17) == 0.0
    assert wrap_angle(-1e-17, 2 * np.pi) == 0.0
    assert OrbitalElements(0.01, 23.0, -1e-17).perihelion_longitude_deg == 0.0
    assert wrap_angle(725.0) == 5.0


# --- OrbitalElements ----------------------------------------------------------------------
@pytest.mark.parametrize(
    ("e", "eps", "varpi", "message"),
    [
        (1.0, 23.0, 0.0, r"eccentricity must be in \[0, 1\).*got 1$"),
        ([0.01, -0.1], 23.0, 0.0, r"eccentricity.*got -0.1$"),
        (np.nan, 23.0, 0.0, "eccentricity.*got nan"),
        (0.01, 95.0, 0.0, r"obliquity must be in \[0, 90\] degrees.*got 95"),
        (0.01, 23.0, np.inf, "longitude of perihelion must be finite"),
        ([0.01, 0.02], [23.0, 23.0, 23.0], 0.0, "incompatible shapes"),
    ],
)
def test_impossible_elements_are_refused(e, eps, varpi, message):
    with pytest.raises(OrbitError, match=message):
        OrbitalElements(e, eps, varpi)


def test_elements_are_frozen_and_read_only():
    orbit = bcgen.solve(np.array([-6000.0, -21000.0]))
    with pytest.raises(dataclasses.FrozenInstanceError):
        orbit.eccentricity = np.zeros(2)
    with pytest.raises(ValueError, match="read-only"):
        orbit.eccentricity[0] = 0.5


def test_indexing_and_years_bp():
    orbit = bcgen.solve(np.array([-6000.0, -21000.0, -127000.0]))
    assert len(orbit) == 3
    assert orbit[1].years_bp == 21000.0
    assert orbit[1:].shape == (2,)


def test_registry_lists_the_three_solutions():
    assert set(SOLUTIONS) == {"berger1978", "table", "fixed", "nbody"}
    with pytest.raises(OrbitError, match="unknown orbital solution 'laskar'; expected one of"):
        bcgen.solve(0.0, "laskar")
    with pytest.raises(OrbitError, match="'berger1978' does not take path"):
        bcgen.solve(0.0, "berger1978", path="orbit.csv")


# --- fixed --------------------------------------------------------------------------------
def test_fixed_values_in_either_convention():
    # PMIP 1950 orbit (PMIP3 design pages): ϖ = 102.04°, i.e. 282.04° for the Sun.
    a = bcgen.solve(
        [-6000.0, 0.0],
        "fixed",
        eccentricity=E_1950,
        obliquity_deg=OBLIQUITY_1950_DEG,
        perihelion_deg=SUN_1950_DEG,
        perihelion_convention="sun_longitude_at_perihelion",
    )
    np.testing.assert_allclose(a.perihelion_longitude_deg, [VARPI_1950_DEG] * 2, atol=1e-12)
    assert a.solution == "fixed" and a.shape == (2,)
    b = bcgen.solve(
        None,
        "fixed",
        eccentricity=E_1950,
        obliquity_deg=OBLIQUITY_1950_DEG,
        perihelion_deg=VARPI_1950_DEG,
        perihelion_convention="perihelion_longitude",
    )
    assert b.years_from_1950 is None and b.perihelion_longitude_deg == pytest.approx(
        VARPI_1950_DEG)


def test_fixed_never_guesses_the_convention():
    with pytest.raises(OrbitError, match="missing perihelion_convention"):
        bcgen.solve(0.0, "fixed", eccentricity=0.0167, obliquity_deg=23.4, perihelion_deg=102.0)
    with pytest.raises(OrbitError, match="must be stated as one of perihelion_longitude"):
        bcgen.solve(
            0.0,
            "fixed",
            eccentricity=0.0167,
            obliquity_deg=23.4,
            perihelion_deg=102.0,
            perihelion_convention="pmip",
        )


@pytest.mark.parametrize("value", [np.inf, -np.inf, np.nan])
@pytest.mark.parametrize("convention", list(PERIHELION_CONVENTIONS))
def test_non_finite_perihelion_is_refused_before_any_arithmetic(value, convention):
    # One error, no numpy RuntimeWarning ("invalid value encountered in remainder") first:
    # warnings are turned into errors here, so a warning would fail the test.
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with pytest.raises(OrbitError, match=r"^longitude of perihelion must be finite; got"):
            convert_perihelion(value, convention, "perihelion_longitude")
        with pytest.raises(OrbitError, match=r"^longitude of perihelion must be finite; got"):
            bcgen.solve(0.0, "fixed", eccentricity=0.0167, obliquity_deg=23.4,
                        perihelion_deg=value, perihelion_convention=convention)
        with pytest.raises(OrbitError, match=r"^longitude of perihelion is too large; got 1e\+308"):
            convert_perihelion(1e308, convention, "perihelion_longitude", "rad", "deg")


def test_table_with_an_infinite_perihelion_names_the_file(tmp_path):
    path = write_csv(
        tmp_path / "orbit.csv",
        ["age_ka_bp", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
        [[1, 0.01, 23, 0], [2, 0.01, 23, "inf"]],
    )
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with pytest.raises(InputFileError,
                           match=r"orbit.csv: longitude of perihelion must be finite; got inf"):
            bcgen.solve(-1000.0, "table", path=path)


# --- table --------------------------------------------------------------------------------
def write_csv(path, header, rows):
    lines = ["# an orbit table", ",".join(header)] + [",".join(map(str, r)) for r in rows]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture
def wrap_table(tmp_path):
    """Perihelion crossing 0/360° between two rows, same eccentricity."""
    return write_csv(
        tmp_path / "orbit.csv",
        ["age_ka_bp", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
        [[10, 0.02, 23.0, 350.0], [9, 0.02, 24.0, 10.0], [8, 0.03, 24.0, 30.0]],
    )


def test_table_interpolation_across_the_wrap(wrap_table):
    orbit = bcgen.solve(np.array([-10000.0, -9500.0, -9000.0, -8500.0]), "table", path=wrap_table)
    # Analytic: halfway between (e, 350°) and (e, 10°) the components (e sin ϖ, e cos ϖ)
    # average to a vector pointing at 0°, never at 180° (which plain linear
    # interpolation of the angle would give).
    assert angular_distance_deg(orbit.perihelion_longitude_deg[1], 0.0) < 1e-9
    # Tabulated rows come back unchanged; e and ε are linear between rows.
    assert orbit.perihelion_longitude_deg[0] == pytest.approx(350.0)
    assert orbit.perihelion_longitude_deg[2] == pytest.approx(10.0)
    np.testing.assert_allclose(orbit.eccentricity, [0.02, 0.02, 0.02, 0.025])
    np.testing.assert_allclose(orbit.obliquity_deg, [23.0, 23.5, 24.0, 24.0])
    assert orbit.solution == "table"


def test_table_interpolation_moves_through_the_short_arc(wrap_table):
    years = np.linspace(-10000.0, -9000.0, 41)
    varpi = bcgen.solve(years, "table", path=wrap_table).perihelion_longitude_deg
    unwrapped = np.unwrap(np.deg2rad(varpi))
    assert np.all(np.diff(unwrapped) > 0)
    assert np.rad2deg(unwrapped[-1] - unwrapped[0]) == pytest.approx(20.0)


def test_table_in_other_units_and_conventions(tmp_path):
    csv_path = write_csv(
        tmp_path / "orbit.csv",
        ["year_ce", "eccentricity", "obliquity_rad", "sun_longitude_at_perihelion_deg"],
        [
            # PMIP4 piControl (1850) and the PMIP 1950 orbit (tests/published_tables.py),
            # perihelion as the Sun's longitude, ϖ + 180
            [1850, PI_E, np.deg2rad(PI_OBLIQUITY_DEG), PI_VARPI_DEG + 180.0],
            [1950, E_1950, np.deg2rad(OBLIQUITY_1950_DEG), SUN_1950_DEG],
        ],
    )
    orbit = bcgen.solve(0.0, "table", path=csv_path)
    assert orbit.perihelion_longitude_deg == pytest.approx(VARPI_1950_DEG)
    assert orbit.obliquity_deg == pytest.approx(OBLIQUITY_1950_DEG)


def test_netcdf_table_matches_csv_table(tmp_path, wrap_table):
    nc_path = tmp_path / "orbit.nc"
    with netCDF4.Dataset(nc_path, "w") as ds:
        ds.createDimension("time", 3)
        ds.createVariable("years_from_1950", "f8", ("time",))[:] = [-8000.0, -9000.0, -10000.0]
        ds.createVariable("eccentricity", "f8", ("time",))[:] = [0.03, 0.02, 0.02]
        ds.createVariable("obliquity_deg", "f8", ("time",))[:] = [24.0, 24.0, 23.0]
        ds.createVariable("perihelion_longitude_rad", "f8", ("time",))[:] = np.deg2rad(
            [30.0, 10.0, 350.0]
        )
        ds.createVariable("label", "S1", ("time",))  # non-numeric: ignored
    years = np.linspace(-10000.0, -8000.0, 9)
    from_nc = bcgen.solve(years, "table", path=nc_path)
    from_csv = bcgen.solve(years, "table", path=wrap_table)
    np.testing.assert_allclose(from_nc.eccentricity, from_csv.eccentricity)
    np.testing.assert_allclose(from_nc.obliquity_deg, from_csv.obliquity_deg)
    assert np.all(
        angular_distance_deg(from_nc.perihelion_longitude_deg, from_csv.perihelion_longitude_deg)
        < 1e-9
    )


def test_table_epoch_outside_is_an_error(wrap_table):
    with pytest.raises(
        OrbitError, match="epoch 11ka is outside the orbit table, which covers 10ka to 8ka"
    ):
        bcgen.solve(np.array([-9000.0, -11000.0]), "table", path=wrap_table)


@pytest.mark.parametrize(
    ("header", "rows", "message"),
    [
        (
            ["age_ka_bp", "obliquity_deg", "perihelion_longitude_deg"],
            [[1, 23, 0], [2, 23, 0]],
            "no 'eccentricity' column",
        ),
        (
            ["age_ka_bp", "year_ce", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
            [[1, 950, 0.01, 23, 0], [2, -50, 0.01, 23, 0]],
            "exactly one time column",
        ),
        (
            ["time", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
            [[1, 0.01, 23, 0], [2, 0.01, 23, 0]],
            "exactly one time column.*found none",
        ),
        (
            ["age_ka_bp", "eccentricity", "obliquity_deg", "perihelion_deg"],
            [[1, 0.01, 23, 0], [2, 0.01, 23, 0]],
            "exactly one perihelion column",
        ),
        (
            ["age_ka_bp", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
            [[1, 0.01, 23, 0], [1, 0.01, 23, 0]],
            "repeated or missing epochs",
        ),
        (
            ["age_ka_bp", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
            [[1, 0.01, 23, 0], [2, 1.5, 23, 0]],
            r"eccentricity must be in \[0, 1\)",
        ),
        (
            ["age_ka_bp", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
            [[1, 0.01, 23, 0], [2, "x", 23, 0]],
            r"orbit.csv:4: expected numbers",
        ),
        (
            ["age_ka_bp", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
            [[1, 0.01, 23, 0], [2, 0.01, 23]],
            r"orbit.csv:4: expected 4 comma-separated",
        ),
        (
            ["age_ka_bp", "eccentricity", "obliquity_deg", "perihelion_longitude_deg"],
            [[1, 0.01, 23, 0]],
            "at least two rows",
        ),
    ],
)
def test_unusable_tables_are_refused(tmp_path, header, rows, message):
    path = write_csv(tmp_path / "orbit.csv", header, rows)
    with pytest.raises(InputFileError, match=message):
        bcgen.solve(-1000.0, "table", path=path)


def test_missing_and_unreadable_tables(tmp_path):
    with pytest.raises(InputFileError, match="orbit table not found"):
        bcgen.solve(0.0, "table", path=tmp_path / "nothing.csv")
    garbage = tmp_path / "orbit.nc"
    garbage.write_bytes(b"not a netcdf file")
    with pytest.raises(InputFileError, match="cannot read as NetCDF"):
        bcgen.solve(0.0, "table", path=garbage)
    latin1 = tmp_path / "latin1.csv"
    latin1.write_bytes("age_ka_bp,eccentricit\xe9\n".encode("latin-1"))
    with pytest.raises(InputFileError, match="cannot read as a UTF-8 CSV"):
        bcgen.solve(0.0, "table", path=latin1)
    with pytest.raises(OrbitError, match="needs the path"):
        bcgen.solve(0.0, "table")
