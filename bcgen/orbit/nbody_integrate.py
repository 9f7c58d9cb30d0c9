"""The planets from the Sun to Neptune integrated from the JPL DE421 state.

The N-body part of the ``nbody`` orbital solution (see :mod:`bcgen.orbit.nbody`).
It needs the optional packages ``rebound``, ``reboundx``, ``jplephem`` and
``de421`` (``pip install 'bcgen[nbody]'``); reading the bundled table does not.

Model
-----
- Bodies: the Sun, Mercury, Venus, the Earth–Moon barycentre (EMB), Mars,
  Jupiter, Saturn, Uranus and Neptune (each outer planet with its moons, as
  the DE421 system barycentres are), with the DE421 masses (``GMS``, ``GM1``
  ... ``GM8`` of the ephemeris' own constants) and the DE421 barycentric state
  at J2000.0 (JD 2451545.0 TDB) in the ICRF.
- The Moon: the Earth and the Moon move as one body at their barycentre, with
  their summed mass and, for the Moon's orbit averaged over its period and over
  the 18.6-year turn of its node, the quadrupole of the pair: a ring of the
  reduced mass at the Moon's distance, that is J2 = μ′(1 + 3/2 e_M²)(1 − 3/2
  sin² i_M)/2 with μ′ = m_E m_M/(m_E + m_M)² and radius a_M, about the pole of
  the J2000 ecliptic (REBOUNDx ``gravitational_harmonics``). Without it the
  point-mass EMB drifts 15″ from DE421 in 100 years (with the full relativistic
  equations), and its perihelion would turn slower by an estimated 0.08″/yr
  (about (3/2) J2 (a_M/a)² n, twice the relativistic advance); with it the drift
  is 0.4″ (see the tests). The Moon's large effect on the Earth's spin (two
  thirds of the lunisolar precession) is in :mod:`bcgen.orbit.precession`.
- General relativity: the post-Newtonian force of the Sun on each planet of
  Anderson et al. (1975) (REBOUNDx ``gr``), which gives both the relativistic
  advance of the perihelia and the mean motions of the ephemeris (the cheaper
  ``gr_potential`` advances the perihelia alike but puts the EMB 22″ off DE421
  after 100 years).
- Integrator: WHFast (Wisdom & Holman 1991; Rein & Tamayo 2015) in Jacobi
  coordinates with an 8-day step (1/11 of Mercury's period) and 17th-order
  symplectic correctors, kept unsynchronised between outputs so that a run is
  bit-for-bit the same however often it is sampled. Against a 2-day step the
  EMB's eccentricity vector differs by 3e-8 after 20 kyr.
- Frame: the J2000 ecliptic and equinox (IAU 2006 obliquity), into which the
  DE421 (ICRF) state is rotated; every vector of the table is in it.
- Outputs: for each table row at epoch T, the heliocentric osculating
  eccentricity vector and unit orbit normal of the EMB, each averaged over 40
  samples spread evenly over the 100 years centred on T. The average removes
  the short-period terms (periods of years to decades) and keeps the secular
  ones (a 100-year boxcar changes a 19-kyr term by 5e-5 of its amplitude).

Time is TDB; an epoch in years from 1950 CE is a Julian epoch minus 1950, so
J2000.0 is +50 years and 1 year is 365.25 days.

References
----------
Folkner, W. M., Williams, J. G. & Boggs, D. H. (2009): The planetary and lunar
ephemeris DE 421. IPN Progress Report 42-178.
Rein, H. & Tamayo, D. (2015): WHFast: a fast and unbiased implementation of a
symplectic Wisdom-Holman integrator for long-term gravitational simulations.
MNRAS 452, 376-388, doi:10.1093/mnras/stv1257.
Tamayo, D., Rein, H., Shi, P. & Hernandez, D. M. (2020): REBOUNDx: a library
for adding conservative and dissipative forces to otherwise symplectic N-body
integrations. MNRAS 491, 2885-2901, doi:10.1093/mnras/stz2870.
Anderson, J. D., Esposito, P. B., Martin, W., Thornton, C. L. & Muhleman,
D. O. (1975): Experimental test of general relativity using time-delay data
from Mariner 6 and Mariner 7. ApJ 200, 221-233, doi:10.1086/153780.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from functools import cache

import numpy as np

from bcgen.epochs import J2000_YEARS_FROM_1950
from bcgen.errors import OrbitError
from bcgen.orbit.precession import (
    ICRF_TO_ECLIPTIC_J2000,
    MOON_DISTANCE_KM,
    MOON_ECCENTRICITY,
    MOON_INCLINATION_RAD,
)

#: Bodies in the order of the integration (Jacobi order, outwards) and their DE421 names.
BODIES = ("sun", "mercury", "venus", "earthmoon", "mars", "jupiter", "saturn", "uranus",
          "neptune")
#: DE421 constant that holds each body's GM (au³ day⁻²).
GM_CONSTANTS = ("GMS", "GM1", "GM2", "GMB", "GM4", "GM5", "GM6", "GM7", "GM8")
EMB_INDEX = BODIES.index("earthmoon")

J2000_JD_TDB = 2451545.0
DAYS_PER_YEAR = 365.25  # Julian year, as in Julian epochs (IAU)
TIME_STEP_DAYS = 8.0
ROW_STEP_YEARS = 100.0
SAMPLES_PER_ROW = 40


@dataclass(frozen=True)
class State:
    """A synchronised N-body state: time, masses, barycentric positions and velocities.

    Attributes
    ----------
    t_days : float
        TDB days from J2000.0.
    masses : numpy.ndarray
        GM of each body of :data:`BODIES` divided by the Sun's GM, shape (9,).
    xv : numpy.ndarray
        Barycentric positions (au) and velocities (au/day) in the J2000
        ecliptic frame, shape (9, 6).
    gm_sun : float
        The Sun's GM in au³ day⁻².
    c_au_per_day : float
        The speed of light in au/day.
    """

    t_days: float
    masses: np.ndarray
    xv: np.ndarray
    gm_sun: float
    c_au_per_day: float

    def as_array(self) -> np.ndarray:
        """Pack into one float64 vector (for the table's chunk states)."""
        return np.concatenate([[self.t_days, self.gm_sun, self.c_au_per_day], self.masses,
                               self.xv.ravel()])

    @classmethod
    def from_array(cls, packed) -> State:
        """Unpack a vector made by :meth:`as_array`."""
        packed = np.asarray(packed, dtype=float)
        n = len(BODIES)
        return cls(float(packed[0]), packed[3 : 3 + n].copy(),
                   packed[3 + n :].reshape(n, 6).copy(), float(packed[1]), float(packed[2]))


def _require(module: str):
    import importlib

    try:
        return importlib.import_module(module)
    except ImportError:
        raise OrbitError(
            f"integrating the nbody orbital solution needs the package {module!r}; "
            "install it with: pip install 'bcgen[nbody]'"
        ) from None


def de421_state(jd_tdb: float = J2000_JD_TDB) -> State:
    """Return the DE421 barycentric state of :data:`BODIES` at a TDB Julian date (1900–2050).

    Masses and the astronomical unit are the ephemeris' own constants; the
    speed of light is its ``CLIGHT`` (km/s). Rotated to the J2000 ecliptic.
    """
    ephem = _ephemeris()
    au_km = float(ephem.AU)
    gm = np.array([float(getattr(ephem, name)) for name in GM_CONSTANTS])
    xv = np.empty((len(BODIES), 6))
    for i, body in enumerate(BODIES):
        pos, vel = ephem.position_and_velocity(body, jd_tdb)
        xv[i, :3] = ICRF_TO_ECLIPTIC_J2000 @ np.ravel(pos) / au_km
        xv[i, 3:] = ICRF_TO_ECLIPTIC_J2000 @ np.ravel(vel) / au_km
    c = float(ephem.CLIGHT) * 86400.0 / au_km
    return State((jd_tdb - J2000_JD_TDB), gm / gm[0], xv, float(gm[0]), c)


@cache
def _ephemeris():
    de421 = _require("de421")
    return _require("jplephem.ephem").Ephemeris(de421)


def earth_moon_j2() -> tuple[float, float]:
    """J2 and reference radius (au) of the Earth–Moon pair averaged over the Moon's orbit."""
    ephem = _ephemeris()
    ratio = float(ephem.EMRAT)
    reduced = ratio / (1.0 + ratio) ** 2
    j2 = (reduced * (1.0 + 1.5 * MOON_ECCENTRICITY**2)
          * (1.0 - 1.5 * np.sin(MOON_INCLINATION_RAD) ** 2) / 2.0)
    return j2, MOON_DISTANCE_KM / float(ephem.AU)


def de421_heliocentric_emb(jd_tdb) -> np.ndarray:
    """DE421 heliocentric position (au, J2000 ecliptic) of the EMB at TDB Julian dates, (n, 3)."""
    ephem = _ephemeris()
    jd = np.atleast_1d(np.asarray(jd_tdb, dtype=float))
    rel = ephem.position("earthmoon", jd) - ephem.position("sun", jd)
    return (ICRF_TO_ECLIPTIC_J2000 @ rel).T / float(ephem.AU)


def simulation(state: State):
    """Set up a REBOUND simulation of the state: WHFast, relativity, Earth–Moon quadrupole.

    Returns the simulation and its REBOUNDx extras (keep both alive together).
    """
    rebound = _require("rebound")
    reboundx = _require("reboundx")
    sim = rebound.Simulation()
    # REBOUNDx warns that a velocity-dependent force (the relativistic one) makes WHFast
    # lose its symplectic property; the error is of the order of that force (1e-8 of the
    # Sun's), checked against DE421 and a 2-day step (module docstring).
    warnings.filterwarnings("ignore", message="REBOUNDx: Passing a velocity-dependent",
                            category=RuntimeWarning)
    sim.G = state.gm_sun
    sim.t = state.t_days
    for m, (x, y, z, vx, vy, vz) in zip(state.masses, state.xv, strict=True):
        sim.add(m=float(m), x=x, y=y, z=z, vx=vx, vy=vy, vz=vz)
    sim.integrator = "whfast"
    sim.dt = TIME_STEP_DAYS
    sim.integrator.corrector = 17
    sim.integrator.safe_mode = 0
    sim.integrator.keep_unsynchronized = 1
    extras = reboundx.Extras(sim)
    gr = extras.load_force("gr")
    extras.add_force(gr)
    gr.params["c"] = state.c_au_per_day
    harmonics = extras.load_force("gravitational_harmonics")
    extras.add_force(harmonics)
    j2, radius = earth_moon_j2()
    sim.particles[EMB_INDEX].params["J2"] = j2
    sim.particles[EMB_INDEX].params["R_eq"] = radius
    return sim, extras  # the caller keeps REBOUNDx alive as long as the simulation


def read_state(sim, state: State) -> State:
    """Read the synchronised state of a running simulation (masses, constants: ``state``)."""
    sim.synchronize()
    n = sim.N
    xyz, vxyz = np.empty((n, 3)), np.empty((n, 3))
    sim.serialize_particle_data(xyz=xyz, vxvyvz=vxyz)
    return State(float(sim.t), state.masses, np.hstack([xyz, vxyz]), state.gm_sun,
                 state.c_au_per_day)


def sample_times_days(row_years_from_1950) -> np.ndarray:
    """Sample times (TDB days from J2000) of each row's 100-year window, shape (rows, 40)."""
    rows = np.asarray(row_years_from_1950, dtype=float)
    offsets = -0.5 * ROW_STEP_YEARS + (np.arange(SAMPLES_PER_ROW) + 0.5) * (
        ROW_STEP_YEARS / SAMPLES_PER_ROW
    )
    years = rows[:, None] + offsets[None, :]
    return (years - J2000_YEARS_FROM_1950) * DAYS_PER_YEAR


def integrate_rows(state: State, row_years_from_1950) -> tuple[np.ndarray, np.ndarray, State]:
    """Integrate from ``state`` through the windows of consecutive table rows.

    Parameters
    ----------
    state : State
        Start, at the near edge of the first row's window (J2000 or the end
        state of the previous chunk).
    row_years_from_1950 : array_like
        Row epochs in years from 1950 CE, consecutive and in the direction of
        integration (decreasing for the past).

    Returns
    -------
    ecc_vector, orbit_normal : numpy.ndarray
        Window means of the EMB's heliocentric eccentricity vector and unit
        orbit normal (J2000 ecliptic frame, shape (rows, 3)); the normal is renormalised.
    end : State
        The synchronised state at the far edge of the last window.
    """
    times = sample_times_days(row_years_from_1950)
    backward = times[-1, -1] < times[0, 0]
    order = times[:, ::-1] if backward else times
    sim, _extras = simulation(state)
    if backward:
        sim.dt = -TIME_STEP_DAYS
    n = sim.N
    xyz, vxyz = np.empty((n, 3)), np.empty((n, 3))
    samples = np.empty(order.shape + (2, 6))
    for r in range(order.shape[0]):
        for j in range(order.shape[1]):
            sim.integrate(order[r, j], exact_finish_time=0)
            sim.synchronize()
            sim.serialize_particle_data(xyz=xyz, vxvyvz=vxyz)
            samples[r, j, 0, :3], samples[r, j, 0, 3:] = xyz[0], vxyz[0]
            samples[r, j, 1, :3], samples[r, j, 1, 3:] = xyz[EMB_INDEX], vxyz[EMB_INDEX]
    edge = order[-1, -1] + (-0.5 if backward else 0.5) * ROW_STEP_YEARS / SAMPLES_PER_ROW * (
        DAYS_PER_YEAR
    )
    sim.integrate(edge, exact_finish_time=0)
    end = read_state(sim, state)
    mu = state.gm_sun * (1.0 + state.masses[EMB_INDEX])
    ecc, normal = heliocentric_vectors(samples[..., 1, :] - samples[..., 0, :], mu)
    mean_normal = normal.mean(axis=1)
    mean_normal /= np.linalg.norm(mean_normal, axis=-1, keepdims=True)
    return ecc.mean(axis=1), mean_normal, end


def heliocentric_vectors(rel_xv: np.ndarray, mu: float) -> tuple[np.ndarray, np.ndarray]:
    r"""Eccentricity vector and unit orbit normal from relative positions and velocities.

    .. math::

        \mathbf h = \mathbf r \times \mathbf v, \qquad
        \mathbf e = \frac{\mathbf v \times \mathbf h}{\mu} - \frac{\mathbf r}{r}

    (the Laplace–Runge–Lenz vector divided by μ; it points to the perihelion
    and its length is the eccentricity).
    """
    r, v = rel_xv[..., :3], rel_xv[..., 3:]
    h = np.cross(r, v)
    ecc = np.cross(v, h) / mu - r / np.linalg.norm(r, axis=-1, keepdims=True)
    return ecc, h / np.linalg.norm(h, axis=-1, keepdims=True)


def osculating_elements(state: State) -> dict[str, float]:
    """Heliocentric osculating elements of the EMB in the J2000 ecliptic frame (IAU 2006).

    Returns a, e, i, Ω, ϖ and the mean longitude λ (degrees; ϖ and λ from the
    J2000 equinox), for comparison with mean-element theories.
    """
    rel = state.xv[EMB_INDEX] - state.xv[0]
    mu = state.gm_sun * (1.0 + state.masses[EMB_INDEX])
    r, v = rel[:3], rel[3:]
    ecc, normal = heliocentric_vectors(np.concatenate([r, v]), mu)
    e = float(np.linalg.norm(ecc))
    a = 1.0 / (2.0 / np.linalg.norm(r) - v @ v / mu)
    inc = np.degrees(np.arccos(normal[2]))
    node = np.degrees(np.arctan2(normal[0], -normal[1]))
    varpi = np.degrees(np.arctan2(ecc[1], ecc[0]))
    # mean anomaly from the eccentric anomaly (Kepler's equation)
    cos_e_anom = (1.0 - np.linalg.norm(r) / a) / e
    sin_e_anom = (r @ v) / (e * np.sqrt(mu * a))
    e_anom = np.arctan2(sin_e_anom, cos_e_anom)
    mean_anom = np.degrees(e_anom - e * np.sin(e_anom))
    return {
        "semi_major_axis_au": float(a),
        "eccentricity": e,
        "inclination_deg": float(inc),
        "node_deg": float(node % 360.0),
        "perihelion_longitude_deg": float(varpi % 360.0),
        "mean_longitude_deg": float((varpi + mean_anom) % 360.0),
    }
