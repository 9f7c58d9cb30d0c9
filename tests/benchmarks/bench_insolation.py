"""Benchmark: daily insolation for 180 latitudes x 365 days x 10,000 model years.

Compares ``bcgen.insolation.daily_insolation`` (midday method, one orbit per
model year, 10,000 epochs of the Berger 1978 solution, noleap calendar) with a
bare numpy evaluation of the same number of transcendental calls:

* per output value (year, latitude, day): one ``arccos`` (the sunset hour angle
  H0) and one ``sin`` (sin H0) -- the two calls the daily-mean formula needs for
  every value;
* per (year, day): one ``sin`` and one ``cos`` (declination and distance).

The bare evaluation does no other arithmetic, no Kepler's equation and no
clipping, so it is a lower bound on any implementation of the formula. Both run
in the same chunks of model years, interleaved (bcgen chunk, bare chunk, ...),
so that load on the machine affects both alike; memory is bounded by the chunk.
Target (issue 3): bcgen at least a third of the bare speed, i.e. ratio <= 3.

Run: ``python tests/benchmarks/bench_insolation.py [--years N] [--chunk-years K]``.
With ``--years`` below 10,000 the times are measured on that subset and
extrapolated linearly to 10,000 years (the work per year is the same for every
year), and the printout says so.
"""

from __future__ import annotations

import argparse
import time
import tracemalloc

import numpy as np
from measure import peak_rss_mib, verdict

from bcgen.insolation import daily_insolation
from bcgen.orbit import solve
from bcgen.solar_calendar import ModelCalendar

FULL_YEARS = 10_000
N_LAT = 180
N_DAYS = 365
TARGET_RATIO = 3.0


def bare_numpy(x_values: np.ndarray, x_days: np.ndarray) -> float:
    """The transcendental calls alone, on arrays of the same sizes; returns a checksum."""
    h0 = np.arccos(x_values)
    s = np.sin(h0)
    d = np.sin(x_days) + np.cos(x_days)
    return float(s[0, 0, 0] + d[0, 0])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--years", type=int, default=FULL_YEARS,
                        help=f"model years to measure (default {FULL_YEARS}; fewer are "
                             f"extrapolated to {FULL_YEARS})")
    parser.add_argument("--chunk-years", type=int, default=25,
                        help="model years per chunk (default 25: 1.6 million values)")
    args = parser.parse_args()
    years, chunk = args.years, args.chunk_years

    calendar = ModelCalendar("noleap")
    latitudes = np.linspace(-89.5, 89.5, N_LAT)  # a 1-degree grid of cell centres
    t = time.perf_counter()
    orbits = solve(-10.0 * np.arange(years))  # one orbit per model year: 0 to 100 ka, every 10 yr
    t_orbit = time.perf_counter() - t

    rng = np.random.default_rng(0)
    x_values = rng.uniform(-1.0, 1.0, (chunk, N_LAT, N_DAYS))
    x_days = rng.uniform(0.0, 2 * np.pi, (chunk, N_DAYS))

    # Warm-up (first-call costs, caches) on one chunk of each, untimed.
    daily_insolation(orbits[:chunk], calendar, latitudes)
    bare_numpy(x_values, x_days)

    t_bcgen = t_bare = 0.0
    checksum = 0.0
    for lo in range(0, years, chunk):
        n = min(chunk, years - lo)
        t = time.perf_counter()
        values = daily_insolation(orbits[lo:lo + n], calendar, latitudes).insolation_wm2
        t_bcgen += time.perf_counter() - t
        checksum += float(values[0, 0, 0])
        t = time.perf_counter()
        checksum += bare_numpy(x_values[:n], x_days[:n])
        t_bare += time.perf_counter() - t

    # Peak memory of one chunk of each (separate, untimed pass under tracemalloc).
    tracemalloc.start()
    daily_insolation(orbits[:chunk], calendar, latitudes)
    peak_bcgen = tracemalloc.get_traced_memory()[1]
    tracemalloc.reset_peak()
    bare_numpy(x_values, x_days)
    peak_bare = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    rss_mib = peak_rss_mib()

    scale = FULL_YEARS / years
    values_total = FULL_YEARS * N_LAT * N_DAYS
    ratio = t_bcgen / t_bare
    print(f"daily insolation, {N_LAT} latitudes x {N_DAYS} days x {FULL_YEARS:,} model years "
          f"= {values_total:,} values (midday method, noleap, one Berger 1978 orbit per year)")
    if years < FULL_YEARS:
        print(f"MEASURED ON {years:,} model years and EXTRAPOLATED linearly x{scale:g} to "
              f"{FULL_YEARS:,} years")
    print(f"chunks of {chunk} model years ({chunk * N_LAT * N_DAYS:,} values each), "
          f"bcgen and bare numpy interleaved")
    print(f"{'':<28}{'seconds':>10}{'ns/value':>10}{'peak MiB/chunk':>16}")
    print(f"{'bcgen daily_insolation':<28}{t_bcgen * scale:>10.1f}"
          f"{1e9 * t_bcgen * scale / values_total:>10.2f}{peak_bcgen / 2**20:>16.1f}")
    print(f"{'bare numpy arccos+sin':<28}{t_bare * scale:>10.1f}"
          f"{1e9 * t_bare * scale / values_total:>10.2f}{peak_bare / 2**20:>16.1f}")
    print(f"ratio bcgen / bare = {ratio:.2f} (target <= {TARGET_RATIO:g}: "
          f"{verdict(ratio <= TARGET_RATIO)})")
    print(f"orbital elements for the {years:,} epochs (not in the timing): {t_orbit:.2f} s; "
          f"process peak RSS {rss_mib:.0f} MiB; checksum {checksum:.6g}")


if __name__ == "__main__":
    main()
