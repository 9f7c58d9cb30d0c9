"""Benchmark: a time-slice build of daily insolation on a 0.5° grid vs a bare netCDF4 write.

bcgen side: ``bcgen.build`` on a spec that asks for ``daily_insolation`` at
6 ka on a regular 0.5° grid (365 days x 360 x 720 points, float32, zlib level 4
with shuffle): the whole code path of the product (orbit, daily insolation on the
grid's latitudes, the grid, the CF dataset, the atomic write).

Baseline: the netCDF4 library writing an array of the same shape, values and
encoding (same dtype, zlib level, shuffle filter and chunk shape, from
``bcgen.io.netcdf.default_chunks``) in one call; the array is made before the clock
starts.

For comparison (not part of the ratio), the same field written the way
transient files are (``bcgen.io.series.SeriesFile``: spread over the grid and
appended in slabs of 16 MiB, never holding the whole field) is timed too.

Each measurement runs in a fresh Python process (so that the peak resident
memory of each is its own), after an untimed warm-up build in that process; the
two kinds alternate, round after round, so that load on the machine affects both
alike. Printed: the median time of each, their ratio (target at most 1.3) and
each side's peak resident memory.

Run: ``python tests/benchmarks/bench_build_write.py [--rounds 5]``.
"""

from __future__ import annotations

import argparse
import json
import statistics
import tempfile
import time
from pathlib import Path

from measure import peak_rss_mib, run_child, verdict

TARGET_RATIO = 1.3
SPEC = """\
experiment: {{name: {name}}}
epoch: 6ka
grid: {grid}
products: [daily_insolation]
"""
GRID = "{kind: regular, resolution_deg: 0.5}"


def child_build(folder: Path) -> dict:
    from bcgen import build
    from bcgen.spec import parse_spec_text

    warm = parse_spec_text(SPEC.format(name="warm", grid="{kind: zonal, resolution_deg: 10}"))
    build(warm, folder / "warm", force=True)
    spec = parse_spec_text(SPEC.format(name="b05", grid=GRID))
    start = time.perf_counter()
    result = build(spec, folder / "build", force=True)
    seconds = time.perf_counter() - start
    path = folder / "build" / result.files[0]["file"]
    return {"seconds": seconds, "rss_mib": peak_rss_mib(), "bytes": path.stat().st_size}


def child_bare(folder: Path) -> dict:
    import netCDF4
    import numpy as np

    from bcgen.grids import regular_grid
    from bcgen.insolation import daily_insolation
    from bcgen.io.netcdf import default_chunks
    from bcgen.orbit import solve

    # The same values as the build's, made before the clock starts.
    grid = regular_grid(0.5)
    lat = np.unique(grid.lat_deg)
    daily = daily_insolation(solve(-6000.0), "noleap", lat).insolation_wm2  # (nlat, 365)
    shape = (daily.shape[1], lat.size, grid.lon_deg.size)
    field = np.empty(shape, dtype=np.float32)
    field[...] = daily.T[:, :, None]
    dims = ("time", "lat", "lon")
    chunks = default_chunks(shape, dims, 4)
    path = folder / "bare.nc"
    start = time.perf_counter()
    with netCDF4.Dataset(path, "w", format="NETCDF4") as nc:
        for name, size in zip(dims, shape, strict=True):
            nc.createDimension(name, size)
        var = nc.createVariable(
            "insolation", "f4", dims, zlib=True, complevel=4, shuffle=True, chunksizes=chunks
        )
        var[:] = field
    seconds = time.perf_counter() - start
    return {"seconds": seconds, "rss_mib": peak_rss_mib(), "bytes": path.stat().st_size}


def child_stream(folder: Path) -> dict:
    import numpy as np

    from bcgen.grids import regular_grid
    from bcgen.insolation import daily_insolation
    from bcgen.io.series import SeriesFile
    from bcgen.orbit import solve
    from bcgen.transient.series import WRITE_BUDGET_BYTES, spread_to_grid

    grid = regular_grid(0.5)
    lat, index = np.unique(grid.lat_deg, return_inverse=True)
    daily_insolation(solve(-6000.0), "noleap", lat[:2])  # warm-up
    start = time.perf_counter()
    rows = daily_insolation(solve(-6000.0), "noleap", lat).insolation_wm2.T  # (365, nlat)
    slab = WRITE_BUDGET_BYTES // (4 * grid.size)
    with SeriesFile(folder / "stream.nc") as sf:
        for name, size in (("time", rows.shape[0]), ("lat", lat.size), ("lon", grid.lon_deg.size)):
            sf.define_dimension(name, size)
        sf.define_variable("insolation", "f4", ("time", "lat", "lon"), compress=True)
        for lo in range(0, rows.shape[0], slab):
            sf.append("insolation", spread_to_grid(rows[lo : lo + slab], index, grid))
        sf.close()
        sf.publish()
    seconds = time.perf_counter() - start
    return {
        "seconds": seconds,
        "rss_mib": peak_rss_mib(),
        "bytes": (folder / "stream.nc").stat().st_size,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=5, help="rounds of each (default 5)")
    parser.add_argument("--child", nargs=2, metavar=("KIND", "DIR"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        kind, folder = args.child
        result = {"build": child_build, "bare": child_bare, "stream": child_stream}[kind](
            Path(folder)
        )
        print(json.dumps(result))
        return

    runs: dict[str, list[dict]] = {"build": [], "bare": [], "stream": []}
    with tempfile.TemporaryDirectory(prefix="bcgen-bench-") as tmp:
        for r in range(args.rounds):
            order = ("build", "bare", "stream") if r % 2 == 0 else ("stream", "bare", "build")
            for kind in order:
                folder = Path(tmp) / f"{kind}{r}"
                folder.mkdir(parents=True)
                runs[kind].append(run_child(__file__, "--child", kind, folder))
    t_build = statistics.median(x["seconds"] for x in runs["build"])
    t_bare = statistics.median(x["seconds"] for x in runs["bare"])
    ratio = t_build / t_bare
    per_round = ", ".join(
        f"{b['seconds'] / w['seconds']:.2f}"
        for b, w in zip(runs["build"], runs["bare"], strict=True)
    )
    print(
        "daily insolation, time slice at 6 ka, regular 0.5 deg grid: 365 x 360 x 720 float32 "
        "(zlib 4 + shuffle), each run in a fresh process"
    )
    print(f"{'':<34}{'median s':>10}{'peak RSS MiB':>14}{'file MiB':>10}")
    for kind, label in (
        ("build", "bcgen build (daily_insolation)"),
        ("bare", "bare netCDF4 write, same array"),
        ("stream", "compare: streamed in 16 MiB slabs"),
    ):
        t = statistics.median(x["seconds"] for x in runs[kind])
        rss = max(x["rss_mib"] for x in runs[kind])
        size = runs[kind][0]["bytes"] / 2**20
        print(f"{label:<34}{t:>10.2f}{rss:>14.0f}{size:>10.2f}")
    print(
        f"ratio build / bare = {ratio:.2f} (rounds: {per_round}; target <= {TARGET_RATIO:g}: "
        f"{verdict(ratio <= TARGET_RATIO)})"
    )
    t_stream = statistics.median(x["seconds"] for x in runs["stream"])
    print(f"for comparison, streamed (compute included) / bare = {t_stream / t_bare:.2f}")


if __name__ == "__main__":
    main()
