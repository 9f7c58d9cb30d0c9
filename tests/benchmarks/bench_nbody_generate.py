"""Benchmark: generating the nbody table, time per simulated Myr and memory over the span.

Integrates two spans back from 1950 CE (default 60 and 150 kyr, chunks of 50 kyr as the
real run) with the package's own generator and prints the wall-clock and CPU time per
simulated Myr, the extrapolation to the bundled 0-5 Myr table (target: under 30 minutes
on 2 cores), and the peak traced memory of both spans: equal peaks mean constant memory
(the generator keeps one chunk of samples; the table grows by 52 bytes a row).

Run: ``python tests/benchmarks/bench_nbody_generate.py [--short-kyr A] [--long-kyr B]``.
"""

from __future__ import annotations

import argparse
import tempfile
import time
import tracemalloc
from pathlib import Path

from measure import verdict

from bcgen.orbit import nbody_generate
from bcgen.orbit import nbody_integrate as integrate

TARGET_MINUTES_FOR_5_MYR = 30.0


def run(span_kyr: float, folder: Path) -> tuple[float, float, float]:
    """(wall seconds, CPU seconds, peak traced MiB) of one generation.

    Timed without tracing (tracemalloc slows the sampling loop), then traced in a second run.
    """
    wall, cpu = time.perf_counter(), time.process_time()
    nbody_generate.generate(span_kyr * 1e3, folder / f"span{span_kyr:g}.npz")
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    tracemalloc.start()
    nbody_generate.generate(span_kyr * 1e3, folder / f"traced{span_kyr:g}.npz")
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    return wall, cpu, peak


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--short-kyr", type=float, default=60.0)
    parser.add_argument("--long-kyr", type=float, default=150.0)
    args = parser.parse_args()
    integrate.de421_state()  # load the ephemeris (cached) before measuring
    with tempfile.TemporaryDirectory() as folder:
        results = {span: run(span, Path(folder)) for span in (args.short_kyr, args.long_kyr)}
    for span, (wall, cpu, peak) in results.items():
        print(f"  {span:6.0f} kyr: {wall:7.1f} s wall, {cpu:7.1f} s CPU, "
              f"{1e3 * wall / span:6.0f} s wall and {1e3 * cpu / span:6.0f} s CPU per Myr, "
              f"peak traced memory {peak:6.1f} MiB")
    wall, cpu, _ = results[args.long_kyr]
    per_myr_cpu = 1e3 * cpu / args.long_kyr
    minutes = 5 * per_myr_cpu / 60
    peaks = [peak for _, _, peak in results.values()]
    print(f"0-5 Myr extrapolated from the CPU time: {minutes:.0f} min on one core "
          f"(wall time on a loaded machine: {5e3 * wall / args.long_kyr / 60:.0f} min); "
          f"target < {TARGET_MINUTES_FOR_5_MYR:.0f} min: "
          f"{verdict(minutes < TARGET_MINUTES_FOR_5_MYR)}")
    print(f"peak memory, {args.long_kyr:g} kyr / {args.short_kyr:g} kyr: "
          f"{peaks[1] / peaks[0]:.2f} (constant memory: about 1)")


if __name__ == "__main__":
    main()
