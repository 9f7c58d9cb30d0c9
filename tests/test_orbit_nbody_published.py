"""Published values and outside references for the ``nbody`` orbital solution.

Every check names its source and its tolerance. The short-term checks integrate again from
the DE421 state (a few seconds); the near-present and long-term checks read the bundled
table, 2050 CE to 5 Myr BP.
"""

import warnings

import erfa
import numpy as np
import pytest
from published_tables import SIMON_A_AU, SIMON_E, SIMON_LAMBDA_DEG, SIMON_VARPI_DEG

import bcgen
from bcgen.orbit import berger1978, nbody, precession
from bcgen.orbit import nbody_integrate as integ

ARCSEC_PER_RAD = 180.0 * 3600.0 / np.pi

# Tolerances (named, so that their reasons stay visible).
DE421_ARCSEC = 2.0  # "a few arcseconds" over 1900-2050 (the bound; measured 0.4″)
# Osculating minus mean at J2000: the EMB's short-period terms. The largest are those of
# Venus and Jupiter, each of order the planet's mass ratio times a few (2.4e-6 x few,
# 9.5e-4 x (a/aJ)³ x few); in ϖ they are that divided by e. Bounds: 3e-5 in e, 0.1° in ϖ,
# 2e-5 au in a, 0.02° in the mean longitude.
OSCULATING_E = 3e-5
OSCULATING_VARPI_DEG = 0.1
OSCULATING_A_AU = 2e-5
OSCULATING_LAMBDA_DEG = 0.02
# 100-year means remove the short-period terms, so they sit closer to the mean elements.
MEAN_E = 5e-6
MEAN_VARPI_DEG = 0.02
# Near-present bounds against Berger (1978) and the IAU long-term precession model (LTP).
BERGER_E = 0.0005
BERGER_VARPI_DEG = 1.0
LTP_OBLIQUITY_10KA_DEG = 0.02
# Over 0-100 ka the bound asked for was 0.1°; 0.128° is seen (at 43 ka). The LTP is itself a
# fit, "accurate to a few arcseconds throughout the historical period, worsening to a few
# tenths of a degree at the end of the +/- 200,000 year time span" (ERFA's notes to
# eraLtpecl and eraLtpequ, pyerfa). Its equator and ecliptic are fitted apart, and its
# equator moves toward and away from its own ecliptic pole, which no torque about the
# orbit normal can do (see ltp_unforced_obliquity_deg): that motion alone changes its
# obliquity by up to 0.126° at 44 ka (0.36° at 142 ka), so a solution of the precession
# equations cannot come within 0.1° of it there. The 0.1° is checked against the
# rest of LTP's obliquity (LTP_FORCED_OBLIQUITY_100KA_DEG); the raw bound here is 0.15°.
# Driven along LTP's own ecliptic, with any precession constant within ±1 % and tides from
# none to 3x today's, the equations come no nearer than 0.109° (the test below).
LTP_OBLIQUITY_100KA_DEG = 0.15
# The bound (0.1° over 0-100 ka), on LTP's obliquity without its unforced part.
LTP_FORCED_OBLIQUITY_100KA_DEG = 0.1
BERGER_OBLIQUITY_200KA_DEG = 0.08
SPECTRAL_PERIOD_REL = 0.01


# --- short term: the integration against DE421 itself ----------------------------------------
@pytest.fixture(scope="module")
def j2000_state():
    return integ.de421_state()


def angular_error_arcsec(state):
    mine = state.xv[integ.EMB_INDEX, :3] - state.xv[0, :3]
    ref = integ.de421_heliocentric_emb(integ.J2000_JD_TDB + state.t_days)[0]
    cos = mine @ ref / np.linalg.norm(mine) / np.linalg.norm(ref)
    return np.arccos(min(cos, 1.0)) * ARCSEC_PER_RAD


@pytest.mark.parametrize(("direction", "years"), [(-1, 100), (1, 50)], ids=["1900", "2050"])
def test_emb_follows_de421_from_1900_to_2050(j2000_state, direction, years):
    # Source: JPL DE421 (Folkner et al. 2009) through jplephem and the de421 package: the
    # heliocentric EMB of the integration started from DE421's own J2000 state, every
    # ~30 days out to 1900 and to 2050, within a few arcseconds of the ephemeris.
    sim, _extras = integ.simulation(j2000_state)
    sim.dt = direction * integ.TIME_STEP_DAYS
    worst = 0.0
    for target in np.arange(1, years * 365.25, 30.6) * direction:
        sim.integrate(target, exact_finish_time=0)
        worst = max(worst, angular_error_arcsec(integ.read_state(sim, j2000_state)))
    assert abs(sim.t) > (years - 0.1) * 365.25
    assert worst < DE421_ARCSEC


# Mean elements of the Earth-Moon barycentre at J2000 (Simon et al. 1994, A&A 282, 663-683,
# Table 5.8.1), SIMON_A_AU ... SIMON_LAMBDA_DEG: typed in tests/published_tables.py.


def test_osculating_elements_at_j2000_against_simon_1994(j2000_state):
    osc = integ.osculating_elements(j2000_state)
    # The osculating elements differ from the mean ones by the short-period terms only.
    assert abs(osc["eccentricity"] - SIMON_E) < OSCULATING_E
    assert abs(osc["perihelion_longitude_deg"] - SIMON_VARPI_DEG) < OSCULATING_VARPI_DEG
    assert abs(osc["semi_major_axis_au"] - SIMON_A_AU) < OSCULATING_A_AU
    assert abs(osc["mean_longitude_deg"] - SIMON_LAMBDA_DEG) < OSCULATING_LAMBDA_DEG
    # The J2000 ecliptic is the EMB's orbital plane at J2000 to within arcseconds.
    assert osc["inclination_deg"] * 3600.0 < 1.0


def test_hundred_year_mean_at_j2000_is_closer_to_simon_1994(j2000_state):
    # Integrate the 100-year window centred on J2000 (half backward, half forward) and
    # average as the table does: the short-period terms cancel, leaving mean elements.
    half_back = integ.integrate_rows(j2000_state, [25.0])
    half_fwd = integ.integrate_rows(j2000_state, [75.0])
    ecc = 0.5 * (half_back[0][0] + half_fwd[0][0])
    e = np.linalg.norm(ecc)
    varpi = np.degrees(np.arctan2(ecc[1], ecc[0])) % 360.0
    osc = integ.osculating_elements(j2000_state)
    assert abs(e - SIMON_E) < MEAN_E
    assert abs(varpi - SIMON_VARPI_DEG) < MEAN_VARPI_DEG
    assert abs(e - SIMON_E) < abs(osc["eccentricity"] - SIMON_E)


def test_precession_constants_against_pyerfa():
    # Source: IAU 2006 precession (Capitaine et al. 2003) as implemented by ERFA (pyerfa
    # p06e): the rate of lunisolar precession ψ_A at J2000 and the obliquity ε0.
    dt = 0.01 * 36525.0
    psi = [erfa.p06e(2451545.0, d)[1] for d in (-dt, dt)]
    rate = (psi[1] - psi[0]) / (2 * dt / 365.25)  # rad per Julian year
    assert rate == pytest.approx(precession.LUNISOLAR_PRECESSION_RATE, rel=1e-8)
    assert erfa.p06e(2451545.0, 0.0)[0] == pytest.approx(precession.OBLIQUITY_J2000, rel=1e-9)


# --- near present: Berger (1978) and the IAU long-term precession model -------------------------
def table_epochs(years_bp_max):
    return -np.arange(0.0, years_bp_max + 1.0, 100.0)


def test_near_present_against_berger_1978():
    # Source: Berger (1978), J. Atmos. Sci. 35, 2362 (the bundled series, itself checked
    # against the PMIP4 protocol tables): e within 0.0005 and ϖ within 1° over 0-20 ka.
    t = table_epochs(20_000)
    mine, ref = nbody.solve(t), berger1978.solve(t)
    assert np.max(np.abs(mine.eccentricity - ref.eccentricity)) < BERGER_E
    dvarpi = (mine.perihelion_longitude_deg - ref.perihelion_longitude_deg + 180) % 360 - 180
    assert np.max(np.abs(dvarpi)) < BERGER_VARPI_DEG


@pytest.mark.parametrize(("years_bp", "tolerance"),
                         [(10_000, LTP_OBLIQUITY_10KA_DEG), (100_000, LTP_OBLIQUITY_100KA_DEG)])
def test_obliquity_against_iau_long_term_precession(years_bp, tolerance):
    # Source: Vondrák, Capitaine & Wallace (2011), A&A 534, A22, the IAU long-term
    # precession model, through pyerfa ltpecl/ltpequ (ecliptic and equator poles);
    # obliquity = angle between the poles.
    t = table_epochs(years_bp)[::5]
    epj = 1950.0 + t
    ltp = np.array([np.degrees(np.arccos(erfa.ltpecl(y) @ erfa.ltpequ(y))) for y in epj])
    mine = nbody.solve(t).obliquity_deg
    assert np.max(np.abs(mine - ltp)) < tolerance


def ltp_poles(years_from_1950):
    """LTP's ecliptic and equator poles at epochs, unit vectors in the J2000 ecliptic frame.

    Source: Vondrák, Capitaine & Wallace (2011), through pyerfa ltpecl/ltpequ (J2000 mean
    equator and equinox), turned to the J2000 ecliptic by the IAU 2006 obliquity ε0.
    """
    epj = 1950.0 + np.asarray(years_from_1950, dtype=float)
    to_ecliptic = precession.ICRF_TO_ECLIPTIC_J2000.T  # rows are vectors
    return erfa.ltpecl(epj) @ to_ecliptic, erfa.ltpequ(epj) @ to_ecliptic


def ltp_unforced_obliquity_deg(years_from_1950):
    r"""The part of LTP's obliquity change that its equator makes on its own, from J2000.

    A torque on the equatorial bulge averaged over the orbits about the orbit normal
    **n** turns the pole **s** along **n** × **s** only (Laskar et al. 1993, eqs. 1-12,
    the equation solved in :mod:`bcgen.orbit.precession`), so the obliquity
    ε = arccos(**n**·**s**) changes only as **n** moves. LTP's pole also moves along
    **n** (**n**·d**s**/dt ≠ 0): this returns

    .. math:: \int_{J2000}^{t} -\frac{\mathbf n\cdot d\mathbf s/dt}{\sin\varepsilon}\,dt

    in degrees (d**s**/dt by central differences over ±5 years, trapezoids on the given
    epochs, which must start at J2000 and be at most ~100 years apart).
    """
    t = np.asarray(years_from_1950, dtype=float)
    assert t[0] == precession.J2000_YEARS_FROM_1950
    n, s = ltp_poles(t)
    ds_dt = (ltp_poles(t + 5.0)[1] - ltp_poles(t - 5.0)[1]) / 10.0
    rate = -np.sum(n * ds_dt, axis=-1) / np.linalg.norm(np.cross(n, s), axis=-1)
    steps = 0.5 * (rate[1:] + rate[:-1]) * np.diff(t)
    return np.degrees(np.concatenate([[0.0], np.cumsum(steps)]))


def test_obliquity_against_the_forced_part_of_iau_long_term_precession():
    # Source: Vondrák, Capitaine & Wallace (2011), via pyerfa ltpecl/ltpequ, without the
    # part of its obliquity that its equator makes on its own (ltp_unforced_obliquity_deg);
    # what is left is the obliquity change the precession equations can make (solved
    # along LTP's own ecliptic, they stay within 0.04° of it over 0-100 ka). The issue's
    # 0.1° over 0-100 ka holds against it (0.055° seen; with the precession constant
    # 0.5 % low it is 0.166°, and the check fails).
    t = np.concatenate([[precession.J2000_YEARS_FROM_1950], table_epochs(100_000)])
    n, s = ltp_poles(t)
    forced = np.degrees(np.arccos(np.sum(n * s, axis=-1))) - ltp_unforced_obliquity_deg(t)
    mine = nbody.solve(t).obliquity_deg
    assert np.max(np.abs(mine - forced)) < LTP_FORCED_OBLIQUITY_100KA_DEG
    # The unforced part (0.126° at 44 ka with pyerfa 2.0.1) is why the raw check above has
    # 0.15°; should a later LTP drop it below 0.1°, restore that check's 0.1° bound.
    assert np.max(np.abs(ltp_unforced_obliquity_deg(t))) > LTP_FORCED_OBLIQUITY_100KA_DEG


def test_no_solution_of_the_precession_equations_comes_within_0_1_deg_of_iau_ltp():
    # Source: Vondrák, Capitaine & Wallace (2011), via pyerfa ltpecl/ltpequ. Why the raw
    # check above cannot have the 0.1°: drive the precession equations along LTP's
    # own ecliptic (so that the N-body orbit plays no part), from LTP's own J2000 pole, with
    # the precession constant anywhere within ±1 % of today's and the tidal dissipation
    # anywhere from none to three times today's. No pair brings the obliquity within 0.1° of
    # LTP's over 0-100 ka (the best seen is 0.109°, at +0.3 % and half today's tides); today's
    # values give 0.125° at 44 ka. Should a later LTP pass this, restore the 0.1° bound above.
    t = np.arange(precession.J2000_YEARS_FROM_1950, -100_000.5, -100.0)
    n, s_ltp = ltp_poles(t)
    ltp = np.degrees(np.arctan2(np.linalg.norm(np.cross(n, s_ltp), axis=-1),
                                np.sum(n * s_ltp, axis=-1)))
    eccentricity = np.full(t.size, 0.0167)  # enters α only through (1 - e²)^-3/2
    best = np.inf
    for constant in np.linspace(0.99, 1.01, 21):
        for tides in (0.0, 0.5, 1.0, 2.0, 3.0):
            spin = precession.spin_axis(t, n, eccentricity, t[0], s_ltp[0],
                                        dynamical_ellipticity=constant,
                                        tidal_dissipation=tides, eccentricity_j2000=0.0167)
            obliquity = np.degrees(np.arctan2(np.linalg.norm(np.cross(n, spin), axis=-1),
                                              np.sum(n * spin, axis=-1)))
            best = min(best, float(np.max(np.abs(obliquity - ltp))))
    assert LTP_FORCED_OBLIQUITY_100KA_DEG < best < LTP_OBLIQUITY_100KA_DEG


def test_obliquity_against_berger_1978_over_200_ka():
    # Source: Berger (1978), an independent solution (trigonometric series fitted to a
    # secular theory): the two obliquities stay within 0.08° over 0-200 ka.
    t = table_epochs(200_000)[::5]
    diff = nbody.solve(t).obliquity_deg - berger1978.solve(t).obliquity_deg
    assert np.max(np.abs(diff)) < BERGER_OBLIQUITY_200KA_DEG


def test_1950_row_against_iau_2006():
    # Source: IAU 2006 mean obliquity of date (pyerfa obl06) at 1950.0 and J2000: within 5″
    # (the 100-year mean orbital plane against the IAU ecliptic).
    mine = nbody.solve([0.0, 50.0])
    obl = np.degrees([erfa.obl06(2433282.5, 0.0), erfa.obl06(2451545.0, 0.0)])
    assert np.max(np.abs(mine.obliquity_deg - obl)) * 3600 < 5.0


# --- long term: the main spectral periods over 0-5 Myr on the bundled table ------------------
# Published periods (kyr): Berger & Loutre (1991), Quat. Sci. Rev. 10, 297-317, and Laskar
# et al. (2004), A&A 428, 261, Tables 3-6 (from memory, as quoted in the issue).
ECCENTRICITY_PERIODS_KYR = (405.0, 95.0, 99.0, 124.0, 131.0)
PRECESSION_PERIODS_KYR = (23.7, 22.4, 19.0, 18.9)
OBLIQUITY_PERIODS_KYR = (41.0,)


def frequency_analysis(t_kyr, signal, n_terms, lo, hi):
    """Frequencies (cycles/kyr) of the strongest quasi-periodic terms, strongest first.

    A frequency analysis in the manner of Laskar's NAFF: Hann-windowed Fourier transform
    (zero-padded FFT), the peak refined by maximising |<f, exp(iνt)>|, the term fitted by
    least squares together with the earlier ones and subtracted; repeated.
    """
    from scipy.optimize import minimize_scalar

    t = t_kyr - t_kyr.mean()
    dt = abs(t[1] - t[0])
    window = 0.5 * (1 + np.cos(2 * np.pi * t / (t[-1] - t[0])))
    centred = signal - signal.mean()
    resid = centred
    n_fft = 1 << 18
    freq = np.fft.rfftfreq(n_fft, dt)
    band = (freq >= lo) & (freq <= hi)
    found = []
    for _ in range(n_terms):
        weighted = resid * window
        power = np.abs(np.fft.rfft(weighted, n_fft))
        power[~band] = 0.0
        k = int(np.argmax(power))
        best = minimize_scalar(
            lambda nu, w=weighted: -abs(np.sum(w * np.exp(-2j * np.pi * nu * t))),
            bounds=(freq[k - 1], freq[k + 1]), method="bounded",
            options={"xatol": 1e-9})
        found.append(best.x)
        basis = np.column_stack([f(2 * np.pi * nu * t) for nu in found for f in (np.cos, np.sin)])
        coef, *_ = np.linalg.lstsq(basis * window[:, None], centred * window, rcond=None)
        resid = centred - basis @ coef
    return np.array(found)


@pytest.fixture(scope="module")
def five_myr():
    t = -np.arange(0.0, 5_000_000.0 + 1.0, 500.0)  # every 500 years
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        orbit = nbody.solve(t)
    return -t / 1000.0, orbit


def assert_periods_found(found_freq, published_kyr):
    # Each published period matches its own term (the best one-to-one pairing), within 1 %.
    from scipy.optimize import linear_sum_assignment

    periods = 1.0 / found_freq
    published = np.array(published_kyr)
    rel = np.abs(periods[None, :] - published[:, None]) / published[:, None]
    rows, cols = linear_sum_assignment(rel)
    assert len(rows) == len(published)
    assert np.all(rel[rows, cols] < SPECTRAL_PERIOD_REL), (published_kyr, sorted(periods))


def test_eccentricity_periods(five_myr):
    t, orbit = five_myr
    found = frequency_analysis(t, orbit.eccentricity, 7, 1 / 600.0, 1 / 80.0)
    assert_periods_found(found, ECCENTRICITY_PERIODS_KYR)


def test_climatic_precession_periods(five_myr):
    t, orbit = five_myr
    found = frequency_analysis(t, orbit.precession_index, 6, 1 / 30.0, 1 / 15.0)
    assert_periods_found(found, PRECESSION_PERIODS_KYR)


def test_obliquity_period(five_myr):
    t, orbit = five_myr
    found = frequency_analysis(t, orbit.obliquity_deg, 3, 1 / 60.0, 1 / 25.0)
    assert 1.0 / found[0] == pytest.approx(OBLIQUITY_PERIODS_KYR[0], rel=SPECTRAL_PERIOD_REL)


def test_solve_through_the_public_api():
    # The registry serves the solution wherever a solution is chosen.
    orbit = bcgen.solve(-127_000.0, "nbody")
    assert orbit.solution == "nbody"
    assert 0.035 < float(orbit.eccentricity) < 0.045  # Berger (1978): 0.0394 at 127 ka
