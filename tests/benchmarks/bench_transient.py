"""Benchmark: a transient build vs the bare write of the same arrays, and its memory over length.

Part 1, speed. ``bcgen.transient.build_transient`` for daily insolation on a
zonal 1° grid (180 latitudes), 600 model years (10 ka to 9401 BP), in six files of
100 model years: orbit of every model year, daily insolation, CF time axis with
bounds, the grid, the manifest. Baseline: the netCDF4 library writing the very
same arrays (read back from bcgen's files before the clock starts) into six files
with the same dimensions, dtype, zlib level, shuffle filter and chunk shape, one
call per variable. The two alternate, round after round, in one process after a
warm-up; printed: median times, their ratio (target at most 1.5), and the peak
traced memory of one build next to the size of the arrays the baseline holds.

Part 2, memory over the length of the run. The issue's case is 130,000 model
years x 12 months x 180 latitudes (monthly insolation on fixed-day months, 1.1 GB
of float32 values). The build is run, each in a fresh process, for fractions
of it (default 1 % and 3 %: 1,300 and 3,900 model years from 130 ka, files of 1,000
model years); each prints its peak resident memory, which does not grow with the
number of model years, and the time per model year, from which the time of the
whole run is extrapolated (the work per model year is the same for every year).
``--full`` runs the whole 130,000 years instead (several minutes).

Run: ``python tests/benchmarks/bench_transient.py [--rounds 3] [--fractions 0.01 0.03]``.
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import tempfile
import time
import tracemalloc
from pathlib import Path

from measure import peak_rss_mib, run_child, verdict

TARGET_RATIO = 1.5
FULL_YEARS = 130_000
SPEED_SPEC = """\
experiment: {name: speed}
transient: {start_epoch: 10ka, end_epoch: 9401 BP, years_per_file: 100}
grid: {kind: zonal, resolution_deg: 1}
products: [daily_insolation]
"""
LONG_SPEC = """\
experiment: {{name: long}}
transient: {{start_epoch: 130ka, end_epoch: {end} BP, years_per_file: 1000}}
grid: {{kind: zonal, resolution_deg: 1}}
products: [monthly_insolation_fixed_day]
"""


# --- part 1 ------------------------------------------------------------------------------------
def read_back(folder: Path) -> list[dict]:
    """Every variable of every file bcgen wrote, with its storage settings."""
    import netCDF4

    files = []
    for path in sorted(folder.glob("*.nc")):
        with netCDF4.Dataset(path) as nc:
            nc.set_auto_mask(False)
            variables = {}
            for name, var in nc.variables.items():
                filters = var.filters()
                chunks = var.chunking()
                variables[name] = {
                    "dims": var.dimensions,
                    "data": var[...],
                    "dtype": var.dtype,
                    "zlib": bool(filters["zlib"]),
                    "complevel": filters["complevel"],
                    "shuffle": bool(filters["shuffle"]),
                    "chunks": None if chunks == "contiguous" else chunks,
                }
            files.append(
                {"dims": {d: len(v) for d, v in nc.dimensions.items()}, "variables": variables}
            )
    return files


def bare_write(files: list[dict], folder: Path) -> None:
    import netCDF4

    for i, spec in enumerate(files):
        with netCDF4.Dataset(folder / f"bare{i}.nc", "w", format="NETCDF4") as nc:
            nc.set_fill_off()
            for dim, size in spec["dims"].items():
                nc.createDimension(dim, size)
            for name, v in spec["variables"].items():
                var = nc.createVariable(
                    name,
                    v["dtype"],
                    v["dims"],
                    zlib=v["zlib"],
                    complevel=v["complevel"],
                    shuffle=v["shuffle"],
                    chunksizes=v["chunks"],
                )
                var[...] = v["data"]


def speed(rounds: int) -> None:
    from bcgen.spec import parse_spec_text
    from bcgen.transient import build_transient

    spec = parse_spec_text(SPEED_SPEC)
    with tempfile.TemporaryDirectory(prefix="bcgen-bench-") as tmp:
        tmp = Path(tmp)
        warm = parse_spec_text(SPEED_SPEC.replace("9401 BP", "9951 BP"))
        build_transient(warm, tmp / "warm")  # imports, caches: untimed
        build_transient(spec, tmp / "first")
        files = read_back(tmp / "first")
        array_bytes = sum(v["data"].nbytes for f in files for v in f["variables"].values())
        t_build, t_bare = [], []
        for r in range(rounds):
            for kind in ("build", "bare") if r % 2 == 0 else ("bare", "build"):
                folder = tmp / f"{kind}{r}"
                folder.mkdir()
                start = time.perf_counter()
                if kind == "build":
                    build_transient(spec, folder)
                else:
                    bare_write(files, folder)
                (t_build if kind == "build" else t_bare).append(time.perf_counter() - start)
                shutil.rmtree(folder)
        tracemalloc.start()
        build_transient(spec, tmp / "traced")
        traced = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
    ratio = statistics.median(t_build) / statistics.median(t_bare)
    n = 600
    print(
        f"part 1: daily insolation, zonal 1 deg (180 latitudes), {n} model years x 365 days "
        f"in 6 files of 100 model years"
    )
    print(f"  bcgen build_transient      {statistics.median(t_build):6.2f} s (median of {rounds})")
    print(
        f"  bare netCDF4 write         {statistics.median(t_bare):6.2f} s (same arrays, "
        f"encoding and chunks)"
    )
    rounds_text = ", ".join(f"{b / w:.2f}" for b, w in zip(t_build, t_bare, strict=True))
    print(
        f"  ratio build / bare = {ratio:.2f}, median build time / median bare time (per-round "
        f"ratios: {rounds_text}; target <= "
        f"{TARGET_RATIO:g}: {verdict(ratio <= TARGET_RATIO)})"
    )
    print(
        f"  memory: peak traced during a build {traced / 2**20:.1f} MiB; the arrays the bare "
        f"write holds {array_bytes / 2**20:.1f} MiB"
    )


# --- part 2 ------------------------------------------------------------------------------------
def child_long(n_years: int, folder: Path) -> dict:
    from bcgen.spec import parse_spec_text
    from bcgen.transient import build_transient

    spec = parse_spec_text(LONG_SPEC.format(end=130_000 - n_years + 1))
    assert spec.transient.n_model_years == n_years
    start = time.perf_counter()
    result = build_transient(spec, folder)
    seconds = time.perf_counter() - start
    size = sum(f["bytes"] for f in result.files)
    return {"years": n_years, "seconds": seconds, "rss_mib": peak_rss_mib(), "bytes": size}


def long_runs(years: list[int]) -> None:
    rows = []
    with tempfile.TemporaryDirectory(prefix="bcgen-bench-") as tmp:
        for n in years:
            folder = Path(tmp) / f"long{n}"
            rows.append(run_child(__file__, "--child", n, folder))
            shutil.rmtree(folder, ignore_errors=True)
    values = FULL_YEARS * 12 * 180
    print(
        f"part 2: monthly insolation (fixed-day months), zonal 1 deg, from 130 ka; the full "
        f"case is {FULL_YEARS:,} model years x 12 x 180 = {values:,} values "
        f"({values * 4 / 2**30:.2f} GiB of float32)"
    )
    print(
        f"  {'model years':>12}{'share':>8}{'seconds':>10}{'s/1000 yr':>11}"
        f"{'peak RSS MiB':>14}{'files MiB':>11}"
    )
    for row in rows:
        print(
            f"  {row['years']:>12,}{row['years'] / FULL_YEARS:>8.1%}{row['seconds']:>10.1f}"
            f"{1000 * row['seconds'] / row['years']:>11.2f}{row['rss_mib']:>14.0f}"
            f"{row['bytes'] / 2**20:>11.1f}"
        )
    per_year = rows[-1]["seconds"] / rows[-1]["years"]
    growth = rows[-1]["rss_mib"] - rows[0]["rss_mib"]
    if rows[-1]["years"] < FULL_YEARS:
        print(
            f"  peak memory from {rows[0]['years']:,} to {rows[-1]['years']:,} model years: "
            f"{growth:+.0f} MiB; the full {FULL_YEARS:,} years would take about "
            f"{per_year * FULL_YEARS / 60:.0f} min (extrapolated) with the same peak memory"
        )
    print(f"  peak memory under 1 GiB: {verdict(max(r['rss_mib'] for r in rows) < 1024)}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=3, help="rounds of part 1 (default 3)")
    parser.add_argument(
        "--fractions",
        type=float,
        nargs="+",
        default=[0.01, 0.03],
        help="shares of the 130,000-year run for part 2 (default 0.01 0.03)",
    )
    parser.add_argument("--full", action="store_true", help="run all 130,000 years in part 2")
    parser.add_argument("--child", nargs=2, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        print(json.dumps(child_long(int(args.child[0]), Path(args.child[1]))))
        return
    speed(args.rounds)
    years = [FULL_YEARS] if args.full else [round(f * FULL_YEARS) for f in args.fractions]
    long_runs(years)


if __name__ == "__main__":
    main()
