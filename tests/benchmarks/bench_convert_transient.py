"""Benchmark of ``bcgen convert`` of a transient run's output (issue 15; not collected by pytest).

100 model years of monthly means on a 1 degree global grid (float32, 1200 x 180 x 360,
noleap calendar, time bounds), written as the model would: 4 files of 25 model years. The
transient spec maps model year 1 + k to 9 ka + 10 k years (acceleration 10). Then, each in
a fresh Python process, in rounds that alternate the two (A B B A ...), so that a change
of machine load hits both alike:

- xarray: open the 4 files (``open_mfdataset``, the same spatial chunks as bcgen reads
  them), the monthly climatology (``groupby("time.month").mean()``), written to a file;
- bcgen: ``bcgen convert FILES -o FOLDER --spec SPEC`` (each model year with its own
  orbit, Killworth 1996, one output file per input file).

Wall times compared (best of the rounds for each):

- work: from the end of the process's imports to the last output file closed. Both
  import the same libraries before the clock starts (xarray, dask.array, distributed,
  netCDF4; bcgen also its command's own modules), so the figure is the work alone.
  The target (at most 2.5) is checked on this ratio.
- whole process: launch of the fresh interpreter to its exit (imports included), what a
  user waits for on the command line.

Also printed: CPU seconds of each process, each process's peak resident memory (target
for bcgen under 1 GiB) and the machine's load average before and after.

Run:  python tests/benchmarks/bench_convert_transient.py [--years 100] [--files 4]
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from measure import run_code, verdict, write_monthly_series

GIB = 1024**3
TARGET_RATIO = 2.5
SPEC = """\
experiment: {{name: bench}}
transient: {{start_epoch: 9ka, end_epoch: {end} BP, acceleration: 10}}
calendar: {{name: noleap}}
products: [orbit]
"""


#: Libraries both sides load before their clock starts (dask's threads may use distributed).
PRELOAD = """
import resource, sys, time
import netCDF4, xarray as xr, dask.array
try:
    import distributed
except ImportError:
    pass
"""

BASELINE = PRELOAD + r"""
t0 = time.perf_counter()
ds = xr.open_mfdataset(sys.argv[3:], chunks={"lat": int(sys.argv[2])}, combine="by_coords")
clim = ds["tas"].groupby("time.month").mean("time")
clim.to_dataset().to_netcdf(sys.argv[1])
r = resource.getrusage(resource.RUSAGE_SELF)
print(time.perf_counter() - t0, r.ru_utime + r.ru_stime, r.ru_maxrss * 1024)
"""

CONVERT = PRELOAD + r"""
from bcgen.cli import build_parser
import bcgen.convert.api, bcgen.convert.io, bcgen.experiment, bcgen.spec  # the command's own
args = build_parser().parse_args(["-q", "convert", *sys.argv[3:], "-o", sys.argv[1], "--spec",
                                  sys.argv[2], "--force"])
t0 = time.perf_counter()
status = args._run(args)
assert status == 0, status
r = resource.getrusage(resource.RUSAGE_SELF)
print(time.perf_counter() - t0, r.ru_utime + r.ru_stime, r.ru_maxrss * 1024)
"""


def _load() -> str:
    return ", ".join(f"{x:.1f}" for x in os.getloadavg())


def main(argv=None) -> int:
    """Run the benchmark and print the figures."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--years", type=int, default=100)
    parser.add_argument("--files", type=int, default=4)
    parser.add_argument("--repeat", type=int, default=3, help="rounds (best of each is kept)")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        per = -(-args.years // args.files)
        paths = []
        t0 = time.perf_counter()
        for first in range(0, args.years, per):
            n = min(per, args.years - first)
            path = folder / f"tas_{first + 1:04d}-{first + n:04d}.nc"
            write_monthly_series(path, n, first=first,
                                 title="bcgen transient convert benchmark input")
            paths.append(path)
        size = sum(p.stat().st_size for p in paths)
        print(f"input: {len(paths)} files, {size / 1e6:.0f} MB written in "
              f"{time.perf_counter() - t0:.1f} s")
        spec = folder / "bench.yaml"
        spec.write_text(SPEC.format(end=9000 - 10 * (args.years - 1)))
        from bcgen.convert.io import open_series

        with open_series(paths) as series:  # the spatial chunks bcgen reads with, for both
            lat_chunk = series.chunks["lat"]
        contenders = {
            "xarray": (BASELINE, folder / "clim.nc", lat_chunk, *paths),
            "bcgen": (CONVERT, folder / "converted", spec, *paths),
        }
        load_before = _load()
        runs: dict[str, list] = {"xarray": [], "bcgen": []}
        for i in range(args.repeat):  # A B, B A, A B ...: load changes hit both alike
            for key in (("xarray", "bcgen") if i % 2 == 0 else ("bcgen", "xarray")):
                runs[key].append(run_code(*contenders[key]))
        best = {k: np.min(np.array(v), axis=0) for k, v in runs.items()}
        peak = {k: np.max(np.array(v)[:, 3]) for k, v in runs.items()}
        print(f"cores: {os.cpu_count()}; load average (1, 5, 15 min) before: {load_before}, "
              f"after: {_load()}; years: {args.years}; files: {len(paths)}; spatial chunk: "
              f"{lat_chunk} rows (both); best of {args.repeat} alternating rounds")
        print(f"{'':44}{'work s':>8}{'process s':>11}{'CPU s':>8}{'peak GiB':>10}")
        for key, label in (("xarray", "xarray read + monthly climatology"),
                           ("bcgen", "bcgen convert (transient, each year's orbit)")):
            w, whole, cpu, _ = best[key]
            print(f"{label:44}{w:8.2f}{whole:11.2f}{cpu:8.2f}{peak[key] / GIB:10.2f}")
        ratio = best["bcgen"] / best["xarray"]
        print(f"time ratio bcgen / xarray, work (after imports, both preloaded): {ratio[0]:.2f} "
              f"(target <= {TARGET_RATIO:g}: {verdict(ratio[0] <= TARGET_RATIO)}"
              f"); whole process (imports included): {ratio[1]:.2f}; CPU: {ratio[2]:.2f}")
        print(f"peak memory of bcgen: {peak['bcgen'] / GIB:.2f} GiB (target < 1: "
              f"{verdict(peak['bcgen'] < GIB)})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
