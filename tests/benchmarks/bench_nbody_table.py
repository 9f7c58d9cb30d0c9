"""Benchmark: the bundled nbody solution at 10^6 epochs vs bare numpy linear interpolation.

The baseline interpolates the same four table columns (e, obliquity, e sin ϖ, e cos ϖ) with
``np.interp`` and takes ϖ with ``np.arctan2``: what a user would write with the table in
hand. bcgen's ``solve`` does that, plus the validity checks and the validated
``OrbitalElements``. Runs alternate and the best of several is kept. Target: ratio <= 1.5.

Run: ``python tests/benchmarks/bench_nbody_table.py [--epochs N] [--repeat R] [--sorted]``
(random epochs by default; ``--sorted`` gives np.interp its best case).
"""

from __future__ import annotations

import argparse
import time
import tracemalloc

import numpy as np

from bcgen.orbit import nbody


def bare(t: np.ndarray, grid: np.ndarray, columns: dict) -> list[np.ndarray]:
    """Plain numpy: np.interp of each column on the ascending grid, then ϖ."""
    e, eps, es, ec = (np.interp(t, grid, columns[name]) for name in
                      ("eccentricity", "obliquity_deg", "e_sin_varpi", "e_cos_varpi"))
    return [e, eps, np.degrees(np.arctan2(es, ec))]


def seconds(func) -> float:
    start = time.perf_counter()
    func()
    return time.perf_counter() - start


def peak_mib(func) -> float:
    tracemalloc.start()
    func()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak / 2**20


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--epochs", type=int, default=10**6)
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--sorted", action="store_true",
                        help="epochs in order (np.interp's best case) instead of random")
    args = parser.parse_args()
    raw = nbody.raw_table()
    n = len(raw["eccentricity"])
    oldest = float(raw["first_epoch_years_from_1950"]) + float(raw["step_years"]) * (n - 1)
    rng = np.random.default_rng(0)
    order = "sorted" if args.sorted else "random"
    t = rng.uniform(oldest, 0.0, args.epochs)  # inside the table: no integration
    if args.sorted:
        t.sort()
    grid = (float(raw["first_epoch_years_from_1950"])
            + float(raw["step_years"]) * np.arange(n))[::-1].copy()
    columns = {name: np.ascontiguousarray(raw[name][::-1], dtype=float) for name in
               ("eccentricity", "obliquity_deg", "e_sin_varpi", "e_cos_varpi")}
    nbody.solve(t[:10])  # load the table outside the timing
    runs = {
        "bcgen nbody.solve": lambda: nbody.solve(t),
        "bare numpy np.interp": lambda: bare(t, grid, columns),
    }
    best = dict.fromkeys(runs, np.inf)
    for _ in range(args.repeat):
        for name, run in runs.items():
            best[name] = min(best[name], seconds(run))
    print(f"epochs: {args.epochs:,} ({order}, over the table, 0-{-oldest / 1e6:g} Myr BP); "
          f"table rows: {n:,}; "
          f"best of {args.repeat}")
    for name, run in runs.items():
        print(f"  {name:<22} {best[name]:8.3f} s   peak memory {peak_mib(run):7.1f} MiB")
    ratio = best["bcgen nbody.solve"] / best["bare numpy np.interp"]
    print(f"ratio solver / bare numpy: {ratio:.2f}; target <= 1.5: "
          f"{'met' if ratio <= 1.5 else 'NOT met'}")


if __name__ == "__main__":
    main()
