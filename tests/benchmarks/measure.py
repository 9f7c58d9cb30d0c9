"""What the benchmark scripts share: memory, timing, fresh processes, verdicts, inputs.

Not a benchmark itself (``run_all.py`` runs ``bench_*.py`` only). A script in this folder
imports it by name (``from measure import peak_rss_mib``): Python puts the script's own
folder first on ``sys.path``.

- :func:`peak_rss_mib`: peak resident memory of this process;
- :func:`traced_peak_mib`: peak memory Python allocates during one call (tracemalloc);
- :func:`seconds` and :func:`best_of`: wall time of a call, and the best of rounds in
  which the contenders alternate (so that a change of machine load hits all alike);
- :func:`run_child`: a script run again in a fresh process, its last line read as JSON;
- :func:`run_code`: Python code run in a fresh process that prints its work seconds,
  CPU seconds and peak memory;
- :func:`write_monthly_series`: a synthetic CF file of monthly means, as a model writes
  them (the input of the conversion benchmarks);
- :func:`verdict`: ``met`` or ``NOT met``.
"""

from __future__ import annotations

import json
import resource
import subprocess
import sys
import time
import tracemalloc
from collections.abc import Callable, Mapping
from pathlib import Path

import numpy as np


def peak_rss_mib() -> float:
    """Peak resident memory of this process, MiB.

    Linux's ``VmHWM`` (reset when the process starts a new program); ``ru_maxrss``
    elsewhere, which on Linux would also count the parent's memory before the fork.
    """
    try:
        with open("/proc/self/status") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def traced_peak_mib(call: Callable, *args) -> float:
    """Peak memory (MiB) that Python's allocators hand out while ``call(*args)`` runs."""
    tracemalloc.start()
    try:
        call(*args)
        return tracemalloc.get_traced_memory()[1] / 2**20
    finally:
        tracemalloc.stop()


def seconds(call: Callable, *args) -> float:
    """Wall time of ``call(*args)``, seconds."""
    start = time.perf_counter()
    call(*args)
    return time.perf_counter() - start


def best_of(calls: Mapping[str, Callable], rounds: int) -> dict[str, float]:
    """Best wall time of each call over ``rounds`` rounds in which the calls alternate."""
    best = dict.fromkeys(calls, np.inf)
    for _ in range(rounds):
        for name, call in calls.items():
            best[name] = min(best[name], seconds(call))
    return best


def verdict(ok: bool) -> str:
    """``met`` or ``NOT met``."""
    return "met" if ok else "NOT met"


def run_child(script: str | Path, *args) -> dict:
    """Run ``python SCRIPT ARGS`` in a fresh process; return its last output line as JSON.

    A failing child stops the benchmark with its error output.
    """
    out = subprocess.run(
        [sys.executable, str(script), *map(str, args)], capture_output=True, text=True
    )
    if out.returncode:
        sys.exit(f"{Path(script).name} {' '.join(map(str, args))} failed:\n{out.stderr}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def run_code(code: str, *args) -> tuple[float, float, float, float]:
    """Run ``python -c CODE ARGS`` in a fresh process.

    The code prints, last, its work seconds (after its imports), CPU seconds and peak
    resident memory in bytes. Returns those with the whole process's wall seconds:
    ``(work_s, whole_s, cpu_s, peak_bytes)``.
    """
    start = time.perf_counter()
    out = subprocess.run(
        [sys.executable, "-c", code, *map(str, args)], check=True, capture_output=True, text=True
    )
    whole = time.perf_counter() - start
    work, cpu, peak = out.stdout.split()[-3:]
    return float(work), whole, float(cpu), float(peak)


#: Month lengths of the noleap calendar, days (CF 1.11 §4.4.1).
NOLEAP_MONTH_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=float)


def write_monthly_series(
    path: Path,
    years: int,
    *,
    first: int = 0,
    nlat: int = 180,
    nlon: int = 360,
    title: str = "bcgen benchmark input",
) -> None:
    """Write model years ``first + 1 ... first + years`` of invented monthly means.

    A temperature-like field (``tas``, K, float32, contiguous) with a seasonal cycle and
    noise (seeded by ``first``), on a regular grid, noleap calendar, time bounds; written
    one year at a time (bounded memory).
    """
    import netCDF4

    starts = np.concatenate([[0.0], np.cumsum(NOLEAP_MONTH_DAYS)])
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
        nc.Conventions, nc.title = "CF-1.11", title
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
