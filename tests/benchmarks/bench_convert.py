"""Benchmark of ``bcgen convert`` at archive scale (not collected by pytest).

100 model years of monthly means on a 1 degree global grid (float32, 1200 x 180 x 360,
about 311 MB, noleap calendar, time bounds) are written to a temporary NetCDF file.
Then, each in a fresh Python process, timed side by side in one run:

- baseline: xarray opens the file chunked in space and computes the monthly
  climatology (``groupby("time.month").mean()``), written to a small file;
- bcgen: ``bcgen convert FILE -o OUT --epoch 6ka`` (Killworth 1996 interpolation
  to the fixed-angle months of 6 ka, every model year, written to NetCDF).

Printed: wall time of each, their ratio (target at most 2) and each process's peak
resident memory (target under 1 GiB).

Run:  python tests/benchmarks/bench_convert.py [--years 100] [--keep DIR]
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


BASELINE = r"""
import resource, sys, time
import xarray as xr
t0 = time.perf_counter()
ds = xr.open_dataset(sys.argv[1], chunks={"lat": int(sys.argv[3])})
clim = ds["tas"].groupby("time.month").mean("time")
clim.to_dataset().to_netcdf(sys.argv[2])
r = resource.getrusage(resource.RUSAGE_SELF)
print(time.perf_counter() - t0, r.ru_utime + r.ru_stime, r.ru_maxrss * 1024)
"""

CONVERT = r"""
import resource, sys, time
from bcgen.cli import build_parser
args = build_parser().parse_args(["-q", "convert", sys.argv[1], "-o", sys.argv[2], "--epoch",
                                  "6ka", "--force"])  # imports every subcommand: not timed
t0 = time.perf_counter()
status = args._run(args)
assert status == 0, status
r = resource.getrusage(resource.RUSAGE_SELF)
print(time.perf_counter() - t0, r.ru_utime + r.ru_stime, r.ru_maxrss * 1024)
"""


def main(argv=None) -> int:
    """Run the benchmark and print the figures."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--years", type=int, default=100)
    parser.add_argument("--repeat", type=int, default=2, help="runs of each (best is kept)")
    parser.add_argument("--keep", metavar="DIR", help="folder for the files (default: temporary)")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(args.keep or tmp)
        folder.mkdir(parents=True, exist_ok=True)
        src = folder / "bench_input.nc"
        if not src.exists():
            t0 = time.perf_counter()
            write_monthly_series(src, args.years, title="bcgen convert benchmark input")
            print(f"input: {src.stat().st_size / 1e6:.0f} MB written in "
                  f"{time.perf_counter() - t0:.1f} s")
        import xarray as xr

        from bcgen.convert.io import conversion_chunks  # same spatial chunks for the baseline

        with xr.open_dataset(src) as ds:
            lat_chunk = conversion_chunks(ds, "time")["lat"]
        load = ", ".join(f"{x:.1f}" for x in os.getloadavg())
        runs: dict[str, list[tuple[float, float, float, float]]] = {"xarray": [], "bcgen": []}
        for _ in range(args.repeat):  # interleaved, so that both see the same machine load
            runs["xarray"].append(run_code(BASELINE, src, folder / "clim.nc", lat_chunk))
            runs["bcgen"].append(run_code(CONVERT, src, folder / "converted.nc"))
        best = {k: np.min(np.array(v), axis=0) for k, v in runs.items()}
        peak = {k: np.max(np.array(v)[:, 3]) for k, v in runs.items()}
        print(f"cores: {os.cpu_count()}; load average before: {load}; years: {args.years}; "
              f"spatial chunk: {lat_chunk} rows; best of {args.repeat}")
        print(f"{'':36}{'work s':>8}{'process s':>11}{'CPU s':>8}{'peak GiB':>10}")
        for key, label in (("xarray", "xarray read + monthly climatology"),
                           ("bcgen", "bcgen convert (fixed-angle, 6ka)")):
            w, whole, cpu, _ = best[key]
            print(f"{label:36}{w:8.2f}{whole:11.2f}{cpu:8.2f}{peak[key] / GIB:10.2f}")
        ratio = best["bcgen"] / best["xarray"]
        met_ratio = verdict(ratio[0] <= 2)
        met_memory = verdict(peak["bcgen"] < GIB)
        print(f"time ratio bcgen / xarray: {ratio[0]:.2f} work, {ratio[1]:.2f} whole process, "
              f"{ratio[2]:.2f} CPU (best of {args.repeat} each; target <= 2 on work: "
              f"{met_ratio}); peak memory {peak['bcgen'] / GIB:.2f} GiB (target < 1: "
              f"{met_memory})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
