"""The spread between orbital solutions at an epoch, and what it means in W m-2.

No orbital solution is exact: the Berger (1978) series is a 1978 fit, the
``nbody`` solution has its own model limits. The difference between them at an
epoch is a plain, honest measure of how well the orbit is known there.
:func:`compare_solutions` gives each solution's elements and the differences of every
other solution from the chosen one; :func:`insolation_spread` turns a
difference into daily-mean TOA insolation at a few latitudes, through the
calendar-free insolation at each true longitude of the Sun (Berger 1978).
"""

from __future__ import annotations

import warnings

import numpy as np

from bcgen.epochs import format_epoch
from bcgen.errors import OrbitError, OutsideValidityWarning
from bcgen.insolation.daily import (
    CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    daily_mean_insolation_wm2,
)
from bcgen.orbit import OrbitalElements, nbody, solve

#: Solutions compared by default: those that need no option of the user's.
COMPARED_SOLUTIONS = ("berger1978", "nbody")
#: Latitudes at which a difference is stated in W m-2 (Milankovitch's 65° N, the equator, 65° S).
SPREAD_LATITUDES_DEG = (65.0, 0.0, -65.0)


def element_difference(a: OrbitalElements, b: OrbitalElements) -> dict[str, np.ndarray]:
    """Subtract b from a: e, ε (deg), ϖ (deg, wrapped to (−180, 180]) and e·sin ϖ."""
    dvarpi = (a.perihelion_longitude_deg - b.perihelion_longitude_deg + 180.0) % 360.0 - 180.0
    return {
        "eccentricity": a.eccentricity - b.eccentricity,
        "obliquity_deg": a.obliquity_deg - b.obliquity_deg,
        "perihelion_longitude_deg": np.where(dvarpi == -180.0, 180.0, dvarpi),
        "precession_index": a.precession_index - b.precession_index,
    }


def insolation_spread(a: OrbitalElements, b: OrbitalElements,
                      latitudes_deg=SPREAD_LATITUDES_DEG,
                      solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
                      n_longitudes: int = 360) -> dict[str, np.ndarray]:
    """How far apart two orbits put the daily-mean insolation, at each latitude.

    Parameters
    ----------
    a, b : OrbitalElements
        Orbits of one epoch each (scalar elements).
    latitudes_deg : sequence of float
        Latitudes in degrees north.
    solar_constant_wm2 : float
        S0 used for both.
    n_longitudes : int
        True longitudes of the Sun sampled over the year.

    Returns
    -------
    dict
        ``max_abs_wm2``: the largest |Q_a − Q_b| over the year at each latitude;
        ``at_true_longitude_deg``: where in the year it is; ``annual_mean_wm2``:
        the difference of the annual means (Q weighted by time, dt ∝ r² dλ).
    """
    lat = np.asarray(latitudes_deg, dtype=float)[:, None]
    lam = np.linspace(0.0, 2.0 * np.pi, n_longitudes, endpoint=False)[None, :]
    qa = daily_mean_insolation_wm2(lat, lam, a, solar_constant_wm2)
    qb = daily_mean_insolation_wm2(lat, lam, b, solar_constant_wm2)
    diff = qa - qb
    worst = np.argmax(np.abs(diff), axis=1)

    def annual(q, orbit):  # time weight of each λ step: dt ∝ (r/a)² dλ (Kepler's 2nd law)
        r_over_a = 1.0 / (1.0 - orbit.eccentricity * np.cos(lam - orbit.perihelion_longitude_rad))
        weight = r_over_a**2  # up to a constant factor, which cancels
        return np.sum(q * weight, axis=1) / np.sum(weight, axis=1)

    return {
        "latitude_deg": lat[:, 0],
        "max_abs_wm2": np.abs(diff[np.arange(lat.shape[0]), worst]),
        "at_true_longitude_deg": np.degrees(lam[0, worst]),
        "annual_mean_wm2": annual(qa, a) - annual(qb, b),
    }


def compare_solutions(years_from_1950: float, chosen: str = "berger1978",
                      chosen_options: dict | None = None,
                      others: tuple[str, ...] = COMPARED_SOLUTIONS,
                      solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2) -> dict:
    """Elements of each solution at one epoch and the differences from the chosen one.

    Returns a JSON-ready dict: ``chosen``, ``solutions`` (name → elements),
    ``differences`` (one entry per other solution: ``"<other> - <chosen>"`` with
    the element differences and their insolation meaning at
    :data:`SPREAD_LATITUDES_DEG`), and ``not_compared`` (name → why, for a
    solution that cannot give this epoch).
    """
    orbit = solve(float(years_from_1950), chosen, **(chosen_options or {}))
    return spread_record(orbit, float(years_from_1950), others, solar_constant_wm2)


def spread_record(orbit: OrbitalElements, years_from_1950: float,
                  others: tuple[str, ...] = COMPARED_SOLUTIONS,
                  solar_constant_wm2=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2) -> dict:
    """Like :func:`compare_solutions`, for elements already computed by the chosen solution."""
    chosen = orbit.solution
    orbits: dict[str, OrbitalElements] = {chosen: orbit}
    not_compared: dict[str, str] = {}
    for name in others:
        if name == chosen:
            continue
        if name == "nbody" and nbody.needs_integration(years_from_1950):
            not_compared[name] = (
                "the epoch is outside the bundled nbody table (2050 CE to 5 Myr BP); "
                "integrate it once with 'bcgen orbit EPOCH --solution nbody' (cached) to "
                "include it"
            )
            continue
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", OutsideValidityWarning)
                orbits[name] = solve(years_from_1950, name)
        except OrbitError as exc:
            not_compared[name] = str(exc)
    differences = {}
    for name, other in orbits.items():
        if name == chosen:
            continue
        diff = element_difference(other, orbit)
        spread = insolation_spread(other, orbit, solar_constant_wm2=solar_constant_wm2)
        differences[f"{name} - {chosen}"] = {
            **{key: float(value) for key, value in diff.items()},
            "insolation": [
                {
                    "latitude_deg": float(spread["latitude_deg"][i]),
                    "max_abs_daily_wm2": float(spread["max_abs_wm2"][i]),
                    "at_true_longitude_deg": float(spread["at_true_longitude_deg"][i]),
                    "annual_mean_wm2": float(spread["annual_mean_wm2"][i]),
                }
                for i in range(len(spread["latitude_deg"]))
            ],
        }
    return {
        "chosen": chosen,
        "solutions": {name: o.as_record() for name, o in orbits.items()},
        "differences": differences,
        "not_compared": not_compared,
    }


#: Epochs of a transient run with a full spread record (start, quarters, end).
RUN_SAMPLED_EPOCHS = 5
#: Epochs of a transient run over which the largest element differences are sought.
RUN_SCANNED_EPOCHS = 2001


def run_spread(orbit_at, years_from_1950, *, solar_constant_at=None,
               others: tuple[str, ...] = COMPARED_SOLUTIONS) -> dict:
    """Measure the spread between solutions through a transient run, in W m-2 too.

    Parameters
    ----------
    orbit_at : callable
        Epochs (years from 1950 CE) -> the chosen solution's :class:`OrbitalElements`.
    years_from_1950 : array_like
        Epochs of the model years, in order.
    solar_constant_at : callable, optional
        Epoch -> S0 (W m-2) for the insolation differences (default: CMIP6 piControl).
    others : tuple of str
        Solutions compared with the chosen one.

    Returns
    -------
    dict
        ``at_epochs``: a :func:`spread_record` (with ``epoch``) at the epochs of
        :data:`RUN_SAMPLED_EPOCHS` model years evenly spread from the first to the
        last; ``largest_over_run``: for each other solution, the largest difference
        of each element over the epochs of every model year (of
        :data:`RUN_SCANNED_EPOCHS` evenly spread ones in a longer run), where it
        falls, and the insolation difference at the epoch of the largest difference in
        e·sin ϖ; ``not_compared``: solution -> why.
    """
    def s0(t):
        return CMIP6_PICONTROL_SOLAR_CONSTANT_WM2 if solar_constant_at is None else float(
            solar_constant_at(t))

    epochs = np.asarray(years_from_1950, dtype=float)

    def spaced(n):
        return epochs[np.unique(np.linspace(0, epochs.size - 1, n).round().astype(int))]

    sampled = spaced(RUN_SAMPLED_EPOCHS)
    at_epochs = [{"epoch": format_epoch(t), "years_from_1950": float(t),
                  **spread_record(orbit_at(float(t)), float(t), others, s0(t))}
                 for t in sampled]
    scanned = spaced(RUN_SCANNED_EPOCHS)
    chosen = orbit_at(scanned)
    largest: dict[str, dict] = {}
    not_compared = {name: why for record in at_epochs
                    for name, why in record["not_compared"].items()}
    for name in others:
        if name == chosen.solution or name in not_compared:
            continue
        if name == "nbody" and nbody.needs_integration(scanned):
            not_compared[name] = ("part of the run is outside the bundled nbody table; "
                                  "integrate it once with 'bcgen orbit EPOCH --solution nbody'")
            continue
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", OutsideValidityWarning)
                other = solve(scanned, name)
        except OrbitError as exc:
            not_compared[name] = str(exc)
            continue
        diff = element_difference(other, chosen)
        entry = {}
        for key, values in diff.items():
            i = int(np.argmax(np.abs(values)))
            entry[key] = {"value": float(values[i]), "epoch": format_epoch(scanned[i])}
        i = int(np.argmax(np.abs(diff["precession_index"])))
        spread = insolation_spread(other[i], chosen[i], solar_constant_wm2=s0(scanned[i]))
        entry["insolation_at_largest_precession_index_difference"] = [
            {"latitude_deg": float(lat), "max_abs_daily_wm2": float(q)}
            for lat, q in zip(spread["latitude_deg"], spread["max_abs_wm2"], strict=True)]
        largest[f"{name} - {chosen.solution}"] = entry
    return {"chosen": chosen.solution, "scanned_epochs": RUN_SCANNED_EPOCHS,
            "at_epochs": at_epochs, "largest_over_run": largest, "not_compared": not_compared}
