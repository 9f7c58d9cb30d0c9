r"""The Earth's spin axis driven by the integrated orbital plane: obliquity and equinox of date.

Solves the precession equations of Laskar et al. (1993) in vector form. With
**s** the unit spin axis (the mean celestial pole) and **n** the unit normal of
the Earth–Moon barycentre's orbit, both in a fixed frame (the J2000 ecliptic), the torques of
the Sun and the Moon on the Earth's equatorial bulge, averaged over the
orbits, give

.. math::

    \frac{d\mathbf s}{dt} = -\alpha\,(\mathbf n\cdot\mathbf s)\,(\mathbf n\times\mathbf s),
    \qquad
    \alpha = \frac{3}{2}\,\frac{E_d}{\omega}\left[\frac{G M_\odot}{a^3(1-e^2)^{3/2}}
      + \frac{G m_M}{a_M^3 (1-e_M^2)^{3/2}}\left(1-\tfrac32\sin^2 i_M\right)\right]

(Laskar et al. 1993, eqs. 1-12, and Laskar et al. 2004, §5: their equations for
the general precession ψ and obliquity ε with the ecliptic's motion A, B, C are
this equation written in angles). ε = arccos(**n**·**s**); the March equinox
points along **s** × **n**. The precession constant α is fixed by today's
rate of lunisolar precession (5038.481507″ per Julian century, IAU 2006,
Capitaine et al. 2003) at today's obliquity (84381.406″); e enters through the
Sun's term, so α follows the integrated eccentricity.

Tidal dissipation moves the Moon away (3.82 cm/yr today, lunar laser ranging,
Dickey et al. 1994) and slows the Earth's spin in step, through the angular
momentum of the Earth–Moon pair. ``tidal_dissipation`` scales that rate
(1 = today's, 0 = none) and ``dynamical_ellipticity`` scales E_d (1 = today's);
Laskar et al. (2004) write them Td and f. The tidal change of ε itself is left out.

Why α is tied to ψ_A: at J2000 the orbit normal is the pole of the frame, so the
pole moves along the fixed ecliptic at α cos ε0, which is what the IAU's ψ_A
measures; the planetary part of the general precession p_A then comes from the
integrated ecliptic (5028.790″ per century from the bundled table, against
5028.796195″ of IAU 2006), and is not counted twice. The geodesic precession (1.92″
per century about the orbit normal, from memory) is inside the observed ψ_A and
so inside α cos ε0; that it does not scale with cos ε as the torques do changes the
rate by less than 0.02″ per century. IAU 2006 also lets E_d fall at today's rate
of J2 (about −3e-9 per century, Capitaine et al. 2003, from memory), adding about
−0.007″ per century² to ψ_A; here E_d stays at today's value (Laskar et al. 2004's
f = 1), so ψ_A's quadratic term is −1.0712″ per century² against the IAU's −1.0790,
and the equinox parts from that of the IAU long-term precession model (Vondrák et
al. 2011), whose rate grows into the past as that term asks, by 1.6° at 100 ka and 8°
at 200 ka (measured).

References
----------
Laskar, J., Joutel, F. & Boudin, F. (1993): Orbital, precessional, and
insolation quantities for the Earth from -20 Myr to +10 Myr. A&A 270, 522-533.
Laskar, J., Robutel, P., Joutel, F., Gastineau, M., Correia, A. C. M. &
Levrard, B. (2004): A long-term numerical solution for the insolation
quantities of the Earth. A&A 428, 261-285, doi:10.1051/0004-6361:20041335.
Capitaine, N., Wallace, P. T. & Chapront, J. (2003): Expressions for IAU 2000
precession quantities. A&A 412, 567-586, doi:10.1051/0004-6361:20031539.
Vondrák, J., Capitaine, N. & Wallace, P. (2011): New precession expressions,
valid for long time intervals. A&A 534, A22.
Dickey, J. O. et al. (1994): Lunar laser ranging: a continuing legacy of the
Apollo program. Science 265, 482-490, doi:10.1126/science.265.5171.482.
"""

from __future__ import annotations

import numpy as np

from bcgen.epochs import J2000_YEARS_FROM_1950
from bcgen.orbit.elements import ARCSEC

#: Rate of lunisolar precession ψ_A at J2000, IAU 2006 (Capitaine et al. 2003), rad/year.
LUNISOLAR_PRECESSION_RATE = 5038.481507 * ARCSEC / 100.0
#: Mean obliquity at J2000, IAU 2006 (Capitaine et al. 2003, ε0 = 84381.406″), rad.
OBLIQUITY_J2000 = 84381.406 * ARCSEC

# The Moon's orbit and the Earth's figure (from memory: standard values of the
# Astronomical Almanac and the IERS Conventions 2010).
MOON_DISTANCE_KM = 384399.0  # semi-major axis of the Moon's orbit
MOON_ECCENTRICITY = 0.0549
MOON_INCLINATION_RAD = np.deg2rad(5.145)  # to the ecliptic
EARTH_RADIUS_KM = 6378.137  # equatorial radius (GRS80/WGS84)
POLAR_MOMENT_FACTOR = 0.3307  # C / (M R²) of the Earth
EARTH_ROTATION_RAD_PER_S = 7.292115e-5  # IERS Conventions 2010
AU_KM = 149597870.7  # IAU 2012 Resolution B2
#: Tidal recession of the Moon today, km/year (3.82 ± 0.07 cm/yr, Dickey et al. 1994).
MOON_RECESSION_KM_PER_YEAR = 3.82e-5
# Earth/Moon mass ratio and GM of the Earth-Moon pair (DE421 EMRAT and GMB; km³/s²).
EARTH_MOON_MASS_RATIO = 81.3005690699153
GM_EARTH_MOON_KM3_S2 = 403503.2363

#: Rotation from the ICRF (mean equator and equinox J2000) to the J2000 ecliptic (IAU 2006).
ICRF_TO_ECLIPTIC_J2000 = np.array(
    [
        [1.0, 0.0, 0.0],
        [0.0, np.cos(OBLIQUITY_J2000), np.sin(OBLIQUITY_J2000)],
        [0.0, -np.sin(OBLIQUITY_J2000), np.cos(OBLIQUITY_J2000)],
    ]
)
#: The mean celestial pole at J2000 in the J2000 ecliptic frame (the ICRF pole; the frame
#: bias of 0.02″ is neglected).
POLE_J2000 = ICRF_TO_ECLIPTIC_J2000 @ np.array([0.0, 0.0, 1.0])


def lunar_to_solar_torque() -> float:
    """Ratio of the Moon's to the Sun's mean torque on the equatorial bulge today (≈ 2.2)."""
    gm_sun_km3_s2 = 132712440040.9446  # DE421 GMS
    gm_moon = GM_EARTH_MOON_KM3_S2 / (1.0 + EARTH_MOON_MASS_RATIO)
    return (
        gm_moon
        / gm_sun_km3_s2
        * (AU_KM / MOON_DISTANCE_KM) ** 3
        * (1.0 - 1.5 * np.sin(MOON_INCLINATION_RAD) ** 2)
        / (1.0 - MOON_ECCENTRICITY**2) ** 1.5
    )


def _tidal_history(t_years, tidal_dissipation: float):
    """Moon distance ratio a_M0/a_M and spin ratio ω0/ω at epochs (linear in time)."""
    da_km = tidal_dissipation * MOON_RECESSION_KM_PER_YEAR * (t_years - J2000_YEARS_FROM_1950)
    mu = 1.0 / EARTH_MOON_MASS_RATIO
    # d(Cω) = -d(m_red √(G M a_M)): angular momentum of the Earth-Moon pair is kept
    r_km = EARTH_RADIUS_KM
    dw_da = -(mu / (1.0 + mu)) / (POLAR_MOMENT_FACTOR * r_km**2) * 0.5 * np.sqrt(
        GM_EARTH_MOON_KM3_S2 / MOON_DISTANCE_KM
    )  # rad/s per km
    omega_ratio = EARTH_ROTATION_RAD_PER_S / (EARTH_ROTATION_RAD_PER_S + dw_da * da_km)
    return MOON_DISTANCE_KM / (MOON_DISTANCE_KM + da_km), omega_ratio


def precession_rate(t_years, eccentricity, *, dynamical_ellipticity: float = 1.0,
                    tidal_dissipation: float = 1.0, eccentricity_j2000: float) -> np.ndarray:
    """Compute the precession constant α (rad/year) at epochs (see the module docstring)."""
    lunar = lunar_to_solar_torque()

    def shape(t, e):
        moon_ratio, omega_ratio = _tidal_history(t, tidal_dissipation)
        return omega_ratio * ((1.0 - e**2) ** -1.5 + lunar * moon_ratio**3)

    today = shape(J2000_YEARS_FROM_1950, eccentricity_j2000)
    scale = LUNISOLAR_PRECESSION_RATE / (np.cos(OBLIQUITY_J2000) * today)
    return dynamical_ellipticity * scale * shape(np.asarray(t_years, float), eccentricity)


def _interp_rows(t, t_grid, values):
    """Linear interpolation on a uniform grid (ascending or descending)."""
    x = (t - t_grid[0]) / (t_grid[1] - t_grid[0])
    i = int(np.clip(np.floor(x), 0, len(t_grid) - 2))
    w = x - i
    return values[i] * (1.0 - w) + values[i + 1] * w


def _unit(v):
    v = np.asarray(v, dtype=float)
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


def _rate(n, alpha, s):
    """ds/dt = -α (n·s) (n × s), on plain floats (3-tuples) for speed."""
    k = -alpha * (n[0] * s[0] + n[1] * s[1] + n[2] * s[2])
    return (k * (n[1] * s[2] - n[2] * s[1]), k * (n[2] * s[0] - n[0] * s[2]),
            k * (n[0] * s[1] - n[1] * s[0]))


def _rk4(s, h, start, middle, end):
    """One classical Runge-Kutta step; ``start``/``middle``/``end`` are (n, α) pairs."""
    k1 = _rate(*start, s)
    k2 = _rate(*middle, tuple(s[i] + 0.5 * h * k1[i] for i in range(3)))
    k3 = _rate(*middle, tuple(s[i] + 0.5 * h * k2[i] for i in range(3)))
    k4 = _rate(*end, tuple(s[i] + h * k3[i] for i in range(3)))
    out = [s[i] + h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]) for i in range(3)]
    norm = (out[0] ** 2 + out[1] ** 2 + out[2] ** 2) ** 0.5
    return (out[0] / norm, out[1] / norm, out[2] / norm)


def spin_axis(t_grid, orbit_normal, eccentricity, t_start: float, spin_start, *,
              dynamical_ellipticity: float = 1.0, tidal_dissipation: float = 1.0,
              eccentricity_j2000: float | None = None) -> np.ndarray:
    """Integrate the spin axis along a uniform grid of epochs (classical Runge–Kutta).

    One step per grid interval; the orbit normal and e are taken at the grid
    epochs and, for the middle stages, as the means of the two ends. From
    ``t_start`` (which may lie between grid epochs) the first steps go to the
    neighbouring grid epochs, with the normal and e interpolated linearly.

    Parameters
    ----------
    t_grid : array_like
        Uniform epochs in years from 1950 CE (either order), shape (n,).
    orbit_normal : array_like
        Unit orbit normal at the epochs, shape (n, 3).
    eccentricity : array_like
        Eccentricity at the epochs, shape (n,).
    t_start : float
        Epoch of ``spin_start``, inside the grid (J2000 for the bundled table).
    spin_start : array_like
        Unit spin axis at ``t_start``, shape (3,).
    dynamical_ellipticity, tidal_dissipation : float
        Factors on today's values (see the module docstring).
    eccentricity_j2000 : float, optional
        e at J2000 for the calibration of α (default: interpolated from the grid,
        which must then contain J2000).

    Returns
    -------
    numpy.ndarray
        Unit spin axis at each epoch of the grid, shape (n, 3).
    """
    t_grid = np.asarray(t_grid, dtype=float)
    normal = _unit(orbit_normal)
    ecc = np.asarray(eccentricity, dtype=float)
    if eccentricity_j2000 is None:
        eccentricity_j2000 = float(_interp_rows(J2000_YEARS_FROM_1950, t_grid, ecc))
    options = {"dynamical_ellipticity": dynamical_ellipticity,
               "tidal_dissipation": tidal_dissipation,
               "eccentricity_j2000": eccentricity_j2000}
    alpha = precession_rate(t_grid, ecc, **options)
    mid_normal = _unit(0.5 * (normal[:-1] + normal[1:]))
    mid_alpha = precession_rate(0.5 * (t_grid[:-1] + t_grid[1:]), 0.5 * (ecc[:-1] + ecc[1:]),
                                **options)
    nodes = [(tuple(n), float(a)) for n, a in zip(normal.tolist(), alpha, strict=True)]
    mids = [(tuple(n), float(a)) for n, a in zip(mid_normal.tolist(), mid_alpha, strict=True)]

    def node_at(t):
        n = _unit(_interp_rows(t, t_grid, normal))
        a = float(precession_rate(t, _interp_rows(t, t_grid, ecc), **options))
        return (tuple(n.tolist()), a)

    out = np.empty((t_grid.size, 3))
    step = t_grid[1] - t_grid[0]
    x = (t_start - t_grid[0]) / step
    s0 = tuple(float(v) for v in np.asarray(spin_start, dtype=float))
    below, above = int(np.floor(x)), int(np.ceil(x))  # grid indices around t_start
    for first, direction in ((above, 1), (below, -1)):
        if not 0 <= first < t_grid.size:
            continue
        gap = t_grid[first] - t_start
        s = s0 if gap == 0 else _rk4(s0, gap, node_at(t_start), node_at(t_start + gap / 2),
                                     nodes[first])
        out[first] = s
        k = first
        while 0 <= k + direction < t_grid.size:
            m = min(k, k + direction)
            s = _rk4(s, direction * step, nodes[k], mids[m], nodes[k + direction])
            k += direction
            out[k] = s
    return out


def elements_of_date(ecc_vector, orbit_normal, spin) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Eccentricity, obliquity (deg) and ϖ from the moving equinox (deg) from the vectors.

    ϖ is the heliocentric longitude of the perihelion in the ecliptic of date,
    counted from the March equinox of date (**s** × **n**) in the direction of
    the Earth's motion, in [0, 360).
    """
    ecc = np.asarray(ecc_vector, dtype=float)
    n = np.asarray(orbit_normal, dtype=float)
    n = n / np.linalg.norm(n, axis=-1, keepdims=True)
    s = np.asarray(spin, dtype=float)
    obliquity = np.degrees(np.arccos(np.clip(np.sum(n * s, axis=-1), -1.0, 1.0)))
    equinox = np.cross(s, n)
    equinox /= np.linalg.norm(equinox, axis=-1, keepdims=True)
    along = np.sum(ecc * equinox, axis=-1)
    across = np.sum(ecc * np.cross(n, equinox), axis=-1)
    varpi = np.degrees(np.arctan2(across, along)) % 360.0
    return np.linalg.norm(ecc, axis=-1), obliquity, varpi
