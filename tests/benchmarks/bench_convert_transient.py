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
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

GIB = 1024**3
TARGET_RATIO = 2.5
SPEC = """\
experiment: {{name: bench}}
transient: {{start_epoch: 9ka, end_epoch: {end} BP, acceleration: 10}}
calendar: {{name: noleap}}
products: [orbit]
"""


def make_part(path: Path, first: int, years: int, nlat: int = 180, nlon: int = 360) -> None:
    """Write model years first+1 ... first+years of the synthetic series (bounded memory)."""
    import netCDF4

    month_len = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=float)
    starts = np.concatenate([[0.0], np.cumsum(month_len)])
    lat = np.linspace(-89.5, 89.5, nlat)
    lon = np.linspace(0.5, 359.5, nlon)
    amp = (10.0 * np.sin(np.deg2rad(lat)))[:, None] * np.ones(nlon)[None, :]
    base = (288.0 - 30.0 * np.sin(np.deg2rad(lat)) ** 2)[:, None] * np.ones(nlon)[None, :]
    rng = np.random.default_rng(first)
    with netCDF4.Dataset(path, "w") as nc:
        nc.createDimension("time", 12 * years)
        nc.createDimension("lat", nlat)
        nc.createDimension("lon", nlon)
        nc.createDimension("bnds", 2)
        t = nc.createVariable("time", "f8", ("time",))
        t.units, t.calendar, t.bounds = "days since 0001-01-01 00:00:00", "noleap", "time_bnds"
        t.standard_name, t.axis = "time", "T"
        tb = nc.createVariable("time_bnds", "f8", ("time", "bnds"))
        for name, values, units in (("lat", lat, "degrees_north"), ("lon", lon, "degrees_east")):
            v = nc.createVariable(name, "f8", (name,))
            v.units, v.standard_name = units, "latitude" if name == "lat" else "longitude"
            v[:] = values
        var = nc.createVariable("tas", "f4", ("time", "lat", "lon"), contiguous=True)
        var.units, var.standard_name, var.cell_methods = "K", "air_temperature", "time: mean"
        nc.Conventions, nc.title = "CF-1.11", "bcgen transient convert benchmark input"
        for y in range(years):
            k = slice(12 * y, 12 * y + 12)
            lo = starts[:-1] + 365.0 * (first + y)
            hi = starts[1:] + 365.0 * (first + y)
            tb[k, 0], tb[k, 1] = lo, hi
            t[k] = 0.5 * (lo + hi)
            phase = 2 * np.pi * (0.5 * (starts[:-1] + starts[1:]) - 15.0) / 365.0
            field = base[None] - amp[None] * np.cos(phase)[:, None, None]
            field += rng.normal(0.0, 0.5, size=field.shape)
            var[k] = field.astype(np.float32)


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


def _run(code: str, *args) -> tuple[float, float, float, float]:
    """Work seconds (after imports), whole-process seconds, CPU seconds, peak RSS (bytes)."""
    t0 = time.perf_counter()
    out = subprocess.run([sys.executable, "-c", code, *map(str, args)], check=True,
                         capture_output=True, text=True)
    whole = time.perf_counter() - t0
    seconds, cpu, peak = out.stdout.split()[-3:]
    return float(seconds), whole, float(cpu), float(peak)


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
            make_part(path, first, n)
            paths.append(path)
        size = sum(p.stat().st_size for p in paths)
        print(f"input: {len(paths)} files, {size / 1e6:.0f} MB written in "
              f"{time.perf_counter() - t0:.1f} s")
        spec = folder / "bench.yaml"
        spec.write_text(SPEC.format(end=9000 - 10 * (args.years - 1)))
        from bcgen.convert.io import open_inputs

        ds, _ = open_inputs(paths)  # the spatial chunks bcgen reads with, for both sides
        with ds:
            lat_chunk = ds["tas"].chunks[1][0]
        contenders = {
            "xarray": (BASELINE, folder / "clim.nc", lat_chunk, *paths),
            "bcgen": (CONVERT, folder / "converted", spec, *paths),
        }
        load_before = _load()
        runs: dict[str, list] = {"xarray": [], "bcgen": []}
        for i in range(args.repeat):  # A B, B A, A B ...: load changes hit both alike
            for key in (("xarray", "bcgen") if i % 2 == 0 else ("bcgen", "xarray")):
                runs[key].append(_run(*contenders[key]))
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
              f"(target <= {TARGET_RATIO:g}: {'met' if ratio[0] <= TARGET_RATIO else 'NOT met'}"
              f"); whole process (imports included): {ratio[1]:.2f}; CPU: {ratio[2]:.2f}")
        print(f"peak memory of bcgen: {peak['bcgen'] / GIB:.2f} GiB (target < 1: "
              f"{'met' if peak['bcgen'] < GIB else 'NOT met'})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
