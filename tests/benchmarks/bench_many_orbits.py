"""Benchmark: monthly insolation and caloric half-years for many orbits at once (issue 15).

Part 1. ``monthly_insolation`` for 8,001 orbits (Berger 1978, 0 to 800 ka every 100 years)
x 12 months at 65 N, noleap calendar: fixed-angle months against the same call with
fixed-day months. Targets: fixed-angle under 2 s, its peak memory under 300 MiB, and the
ratio fixed-angle / fixed-day under 2.

Part 2. ``caloric_half_years`` for 801 orbits (0 to 800 ka every 1,000 years) at 65 N.
Target: under 0.2 s. Side by side, a bare numpy pass over the same number of values
(one arccos and one sin on each of the 801 x 2920 instants the function samples) shows
how loaded the machine is: the ratio to it is the machine-independent figure.

The calls alternate round after round in one process (after a warm-up), so load on the
machine affects all alike; medians are printed. Peak memory is the tracemalloc peak of one
call (numpy's arrays are traced) and the process's peak resident memory.

Run: ``python tests/benchmarks/bench_many_orbits.py [--rounds 5]``.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np
from measure import peak_rss_mib, traced_peak_mib, verdict

from bcgen.insolation import caloric_half_years, monthly_insolation
from bcgen.orbit import solve

MONTHLY_ORBITS = 8001
CALORIC_ORBITS = 801
TARGET_FIXED_ANGLE_S = 2.0
TARGET_FIXED_ANGLE_MIB = 300.0
TARGET_RATIO = 2.0
TARGET_CALORIC_S = 0.2
SAMPLES = 2920  # bcgen.insolation.metrics.SAMPLES_PER_YEAR


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=5, help="timed rounds (default 5)")
    args = parser.parse_args()

    many = solve(-np.linspace(0.0, 800000.0, MONTHLY_ORBITS))
    few = solve(-np.linspace(0.0, 800000.0, CALORIC_ORBITS))
    x = np.random.default_rng(0).uniform(-1.0, 1.0, (CALORIC_ORBITS, SAMPLES))

    def fixed_angle():
        return monthly_insolation(many, "noleap", [65.0], months="fixed_angle").insolation_wm2

    def fixed_day():
        return monthly_insolation(many, "noleap", [65.0], months="fixed_day").insolation_wm2

    def caloric():
        return caloric_half_years(few, [65.0]).summer_wm2

    def bare():
        return np.sin(np.arccos(x))

    calls = {"fixed_angle": fixed_angle, "fixed_day": fixed_day, "caloric": caloric, "bare": bare}
    for call in calls.values():  # warm-up
        call()
    times = {name: [] for name in calls}
    for _ in range(args.rounds):
        for name, call in calls.items():
            start = time.perf_counter()
            call()
            times[name].append(time.perf_counter() - start)
    median = {name: statistics.median(t) for name, t in times.items()}
    peak = {name: traced_peak_mib(calls[name]) for name in ("fixed_angle", "fixed_day", "caloric")}

    ratio = median["fixed_angle"] / median["fixed_day"]
    print(f"monthly insolation, {MONTHLY_ORBITS:,} orbits x 12 months at 65 N (noleap), "
          f"median of {args.rounds} rounds")
    print(f"{'':<24}{'seconds':>10}{'peak MiB':>10}")
    for name in ("fixed_angle", "fixed_day"):
        print(f"{name + ' months':<24}{median[name]:>10.3f}{peak[name]:>10.1f}")
    print(f"fixed-angle: {median['fixed_angle']:.3f} s (target < {TARGET_FIXED_ANGLE_S:g} s: "
          f"{verdict(median['fixed_angle'] < TARGET_FIXED_ANGLE_S)}), peak "
          f"{peak['fixed_angle']:.0f} MiB (target < {TARGET_FIXED_ANGLE_MIB:g} MiB: "
          f"{verdict(peak['fixed_angle'] < TARGET_FIXED_ANGLE_MIB)})")
    print(f"ratio fixed-angle / fixed-day = {ratio:.2f} (target < {TARGET_RATIO:g}: "
          f"{verdict(ratio < TARGET_RATIO)})")
    print()
    caloric_ratio = median["caloric"] / median["bare"]
    print(f"caloric half-years, {CALORIC_ORBITS} orbits at 65 N ({SAMPLES} instants per orbit), "
          f"median of {args.rounds} rounds")
    print(f"{'caloric_half_years':<24}{median['caloric']:>10.3f} s{peak['caloric']:>10.1f} MiB")
    print(f"{'bare numpy arccos+sin':<24}{median['bare']:>10.3f} s   (same number of values)")
    print(f"caloric: {median['caloric']:.3f} s (target < {TARGET_CALORIC_S:g} s: "
          f"{verdict(median['caloric'] < TARGET_CALORIC_S)}); ratio to the bare pass "
          f"{caloric_ratio:.1f}")
    print(f"process peak RSS {peak_rss_mib():.0f} MiB")


if __name__ == "__main__":
    main()
