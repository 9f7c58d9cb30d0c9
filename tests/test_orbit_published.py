"""Published values and outside references for the Berger (1978) orbital solution.

Every check names its source. Protocol values are compared by rounding bcgen's value
to the number of digits the source prints.
"""

import warnings

import erfa
import numpy as np
import pytest
from published_tables import PMIP3_1850_ORBIT_DIGITS, PMIP4, PMIP_1950_ORBIT_DIGITS

import bcgen
from bcgen.errors import OrbitError, OutsideValidityWarning
from bcgen.orbit import berger1978

# Tolerances (named, so that their reasons stay visible).
OBLIQUITY_VS_VONDRAK2011_DEG = 0.05  # Berger 1978 vs the 2011 long-term precession model
OBLIQUITY_VS_IAU2006_DEG = 0.01
PRECESSION_RATE_VS_IAU2006_ARCSEC_PER_YEAR = 0.05
SUN_AT_PERIHELION_VS_DE421_DEG = 0.3  # mean of 20 perihelia; planetary perturbations ~0.1°


def decimals(published: str) -> int:
    return len(published.partition(".")[2])


def assert_published(value: float, published: str) -> None:
    """Value rounded to the digits of the published number equals that number."""
    assert round(float(value), decimals(published)) == float(published), (value, published)


# PMIP4-CMIP6 Tier-1 orbits (e, obliquity in degrees, "perihelion - 180" in degrees):
# Otto-Bliesner et al. (2017) Table 1 and Kageyama et al. (2017), typed with the confidence of
# each row in tests/published_tables.py.
PMIP4_ORBITS = [
    pytest.param(s.epoch, s.eccentricity, s.obliquity_deg, s.perihelion_minus_180_deg, id=name)
    for name, s in PMIP4.items()
]


@pytest.mark.parametrize(("epoch", "ecc", "obl", "peri"), PMIP4_ORBITS)
def test_pmip4_protocol_orbits(epoch, ecc, obl, peri):
    orbit = bcgen.solve(bcgen.parse_epoch(epoch))
    assert_published(orbit.eccentricity, ecc)
    assert_published(orbit.obliquity_deg, obl)
    # The protocol column "perihelion - 180" is bcgen's perihelion_longitude (ϖ).
    assert_published(orbit.perihelion_longitude_deg, peri)


def test_pmip3_last_millennium_1850_orbit():
    # PMIP3 last-millennium design page (wiki.lsce.ipsl.fr/pmip3): "1850 values
    # ecc = 0.01676, obl = 23.459°, peri-180° = 100.327°" [confirmed]
    # (tests/published_tables.py).
    ecc, obl, peri = PMIP3_1850_ORBIT_DIGITS
    orbit = bcgen.solve(bcgen.parse_epoch("1850CE"))
    assert_published(orbit.eccentricity, ecc)
    assert_published(orbit.obliquity_deg, obl)
    assert_published(orbit.perihelion_longitude_deg, peri)


def test_pmip3_preindustrial_1950_orbit():
    # PMIP2/PMIP3 pre-industrial control design pages (wiki.lsce.ipsl.fr/pmip3):
    # e = 0.016724, obliquity 23.446°, perihelion - 180 = 102.04° [confirmed]; that these
    # are the 1950 CE (0 ka BP) values is from memory; Berger, Loutre & Yin (2010),
    # QSR 29, 1968-1982, Table 1a uses the same 0 ka orbit [secondary]
    # (tests/published_tables.py).
    ecc, obl, peri = PMIP_1950_ORBIT_DIGITS
    orbit = bcgen.solve(bcgen.parse_epoch("1950CE"))
    assert_published(orbit.eccentricity, ecc)
    assert_published(orbit.obliquity_deg, obl)
    assert_published(orbit.perihelion_longitude_deg, peri)


def _vondrak2011_obliquity_deg(julian_epoch: float) -> float:
    """Angle between the ecliptic pole and the equator pole of Vondrák, Capitaine &
    Wallace (2011), A&A 534, A22, doi:10.1051/0004-6361/201117274, as implemented in
    ERFA (pyerfa ltpecl, ltpequ)."""
    ecliptic_pole = erfa.ltpecl(julian_epoch)
    equator_pole = erfa.ltpequ(julian_epoch)
    return float(
        np.degrees(
            np.arctan2(
                np.linalg.norm(np.cross(ecliptic_pole, equator_pole)),
                np.dot(ecliptic_pole, equator_pole),
            )
        )
    )


@pytest.mark.parametrize("years_bp", [0, 6000, 21000, 127000])
def test_obliquity_against_vondrak_capitaine_wallace_2011(years_bp):
    # ltpecl/ltpequ take Julian epochs; 1950 CE is Julian epoch ~1950.0.
    reference = _vondrak2011_obliquity_deg(1950.0 - years_bp)
    orbit = bcgen.solve(-float(years_bp))
    assert abs(orbit.obliquity_deg - reference) < OBLIQUITY_VS_VONDRAK2011_DEG


def test_obliquity_against_iau2006_at_j2000():
    # IAU 2006 mean obliquity (Hilton et al. 2006, Celest. Mech. 94, 351; ERFA obl06)
    # at J2000.0 = JD 2451545.0 TT, i.e. 50 years after 1950 CE.
    reference = np.degrees(erfa.obl06(2451545.0, 0.0))
    assert abs(bcgen.solve(50.0).obliquity_deg - reference) < OBLIQUITY_VS_IAU2006_DEG


def test_general_precession_rate_near_50_3_arcsec_per_year():
    # Common practice: general precession in longitude ~50.3″/yr, a period near 26,000
    # years. Reference rate: IAU 2006 precession p_A (Capitaine et al. 2003, A&A 412,
    # 567; ERFA p06e, element 12) differentiated at 1950 CE.
    half_step = 50.0  # years
    psi = berger1978.general_precession_deg(np.array([-half_step, half_step]))
    rate_arcsec = (psi[1] - psi[0]) / (2 * half_step) * 3600.0
    jd_1950 = sum(erfa.epj2jd(1950.0))
    p_a = [erfa.p06e(jd_1950 + s * half_step * 365.25, 0.0)[12] for s in (-1, 1)]
    iau_rate_arcsec = np.degrees(p_a[1] - p_a[0]) * 3600.0 / (2 * half_step)
    assert abs(rate_arcsec - iau_rate_arcsec) < PRECESSION_RATE_VS_IAU2006_ARCSEC_PER_YEAR
    assert 50.1 < rate_arcsec < 50.5
    assert 25_000 < 360 * 3600 / rate_arcsec < 27_000


def test_perihelion_advances_about_31_degrees_in_1800_years():
    # Common practice: ϖ advances about 31° in 1,800 years relative to the equinox, so a
    # perihelion pinned to the calendar would drift about a month.
    orbit = bcgen.solve(np.array([-1800.0, 0.0]))
    advance = np.diff(orbit.perihelion_longitude_deg)[0]
    assert advance == pytest.approx(31.0, abs=1.0)


@pytest.fixture(scope="module")
def last_million_years():
    return bcgen.solve(np.arange(-1_000_000.0, 1.0, 100.0))


def test_climatic_precession_mean_period(last_million_years):
    # Common practice: the perihelion returns to the same date after about 21,000 years
    # on average (Berger 1978: peaks of e sin ϖ near 19 and 23 kyr). Mean period from the
    # zero crossings of e sin ϖ over the last 1 Myr.
    index = last_million_years.precession_index
    crossings = np.count_nonzero(np.signbit(index[1:]) != np.signbit(index[:-1]))
    mean_period = 2 * 1_000_000 / crossings
    assert 19_000 < mean_period < 24_000


def test_eccentricity_spectral_peaks(last_million_years):
    # Common practice: eccentricity varies with periods near 100 kyr and 400 kyr. The
    # three largest peaks of the (Hann-windowed, zero-padded) periodogram of e over the
    # last 1 Myr lie between 90 and 130 kyr or near 400 kyr.
    e = last_million_years.eccentricity
    e = (e - e.mean()) * np.hanning(e.size)
    n_fft = 2**20
    power = np.abs(np.fft.rfft(e, n_fft)) ** 2
    period_kyr = 1.0 / np.fft.rfftfreq(n_fft, d=100.0)[1:] / 1000.0
    power = power[1:]
    peaks = np.flatnonzero((power[1:-1] > power[:-2]) & (power[1:-1] > power[2:])) + 1
    largest = period_kyr[peaks[np.argsort(power[peaks])[::-1][:3]]]
    for period in largest:
        assert 90 <= period <= 130 or 350 <= period <= 450, largest
    assert any(90 <= period <= 130 for period in largest)


def test_sun_longitude_at_perihelion_against_de421():
    # JPL DE421 (Folkner, Williams & Boggs 2009, IPN Progress Report 42-178), through the
    # de421 package: the geocentric longitude of the Sun at each perihelion of the
    # Earth-Moon barycentre 2000-2019, in the mean ecliptic and equinox of date (ERFA
    # ecm06, IAU 2006), averaged. This pins the convention ϖ + 180° (about 283° today).
    import de421
    from jplephem import Ephemeris

    ephemeris = Ephemeris(de421)
    longitudes, years = [], []
    for year in range(2000, 2020):
        jd0 = sum(erfa.cal2jd(year, 1, 1))
        jd = jd0 + np.arange(-10.0, 20.0, 0.05)
        helio = ephemeris.position("earthmoon", jd) - ephemeris.position("sun", jd)
        i = np.argmin(np.linalg.norm(helio, axis=0))
        sun = erfa.ecm06(jd[i], 0.0) @ -helio[:, i]
        longitudes.append(np.degrees(np.arctan2(sun[1], sun[0])) % 360.0)
        years.append(year + (jd[i] - jd0) / 365.25)
    orbit = bcgen.solve(np.array(years) - 1950.0)
    difference = np.mean(np.array(longitudes) - orbit.sun_longitude_at_perihelion_deg)
    assert abs(difference) < SUN_AT_PERIHELION_VS_DE421_DEG


def test_warning_outside_one_million_years():
    # Berger (1978) is commonly used within about ±1 Myr (common practice).
    with pytest.warns(OutsideValidityWarning, match="2000ka"):
        bcgen.solve(-2_000_000.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        bcgen.solve(np.array([-1_000_000.0, 0.0, 1_000_000.0]))


def test_epochs_must_be_finite():
    with pytest.raises(OrbitError, match="epochs must be finite"):
        bcgen.solve(np.array([-6000.0, np.nan]))


def test_shape_follows_the_epochs():
    years = np.array([[-6000.0, -21000.0], [-127000.0, -100.0]])
    orbit = bcgen.solve(years)
    assert orbit.shape == (2, 2)
    assert orbit.eccentricity[1, 0] == bcgen.solve(-127000.0).eccentricity
    assert bcgen.solve(-6000.0).shape == ()


def test_coefficient_readme_calls_its_sources_copies():
    # The provenance note of the coefficient tables describes where the numbers came from in
    # plain words: two public machine-readable copies and a partial copy of the journal tables.
    from importlib.resources import files

    text = " ".join(files("bcgen.data").joinpath("berger1978", "README.md").read_text().split())
    assert "two public machine-readable copies of the Berger (1978) coefficients" in text
    assert "a partial copy of the tables taken directly from the journal paper" in text
    assert "A third, partial copy (first 24 obliquity terms" in text
    assert "All 432 numbers (47 + 19 + 78 terms, three numbers each) agree exactly" in text
