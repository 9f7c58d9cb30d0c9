"""Benchmark: a transient build of fixed-angle monthly insolation vs the same with fixed-day months.

The issue's case (issue 15) is 130,000 model years x 12 months x 180 latitudes (zonal 1 deg,
from 130 ka, files of 1,000 model years): fixed-angle monthly insolation must take at most
1.5 times the same run with fixed-day months, with a peak memory under 1 GiB.

Each build runs in a fresh process (its peak resident memory is its own); fixed-day and
fixed-angle builds alternate, round after round, so load on the machine affects both alike.
By default each build covers 1 % of the run (1,300 model years); the work per model year is
the same for every year, so the printed ratio is that of the whole run, and the time of the
whole run is extrapolated from it (the printout says so). ``--years 130000`` runs the full
case (about 10 minutes per build on 2 cores).

Run: ``python tests/benchmarks/bench_transient_fixed_angle.py [--years 1300] [--rounds 2]``.
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import tempfile
import time
from pathlib import Path

from measure import peak_rss_mib, run_child, verdict

FULL_YEARS = 130_000
TARGET_RATIO = 1.5
TARGET_MIB = 1024.0
SPEC = """\
experiment: {{name: long}}
transient: {{start_epoch: 130ka, end_epoch: {end} BP, years_per_file: 1000}}
grid: {{kind: zonal, resolution_deg: 1}}
products: [monthly_insolation_{months}]
"""


def child(months: str, n_years: int, folder: Path) -> dict:
    from bcgen.spec import parse_spec_text
    from bcgen.transient import build_transient

    spec = parse_spec_text(SPEC.format(end=130_000 - n_years + 1, months=months))
    assert spec.transient.n_model_years == n_years
    start = time.perf_counter()
    build_transient(spec, folder)
    return {"seconds": time.perf_counter() - start, "rss_mib": peak_rss_mib()}


def run(months: str, n_years: int, folder: Path) -> dict:
    result = run_child(__file__, "--child", months, n_years, folder)
    shutil.rmtree(folder, ignore_errors=True)
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--years", type=int, default=1300,
                        help=f"model years per build (default 1300; {FULL_YEARS} is the full case)")
    parser.add_argument("--rounds", type=int, default=2, help="rounds (default 2)")
    parser.add_argument("--child", nargs=3, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        print(json.dumps(child(args.child[0], int(args.child[1]), Path(args.child[2]))))
        return
    results: dict[str, list[dict]] = {"fixed_day": [], "fixed_angle": []}
    with tempfile.TemporaryDirectory(prefix="bcgen-bench-") as tmp:
        for r in range(args.rounds):
            order = ("fixed_day", "fixed_angle") if r % 2 == 0 else ("fixed_angle", "fixed_day")
            for months in order:
                results[months].append(run(months, args.years, Path(tmp) / f"{months}{r}"))
    median = {m: statistics.median(x["seconds"] for x in rows) for m, rows in results.items()}
    peak = {m: max(x["rss_mib"] for x in rows) for m, rows in results.items()}
    ratio = median["fixed_angle"] / median["fixed_day"]
    scale = FULL_YEARS / args.years
    print(f"transient monthly insolation, zonal 1 deg (180 latitudes), {args.years:,} model "
          f"years from 130 ka, files of 1,000 model years; median of {args.rounds} builds each")
    if args.years < FULL_YEARS:
        print(f"MEASURED ON {args.years:,} model years; the full {FULL_YEARS:,} years are "
              f"EXTRAPOLATED linearly (x{scale:g}); the ratio is the same for the whole run")
    print(f"  {'months':<14}{'seconds':>10}{'full run, min':>15}{'peak RSS MiB':>14}")
    for months in ("fixed_day", "fixed_angle"):
        print(f"  {months:<14}{median[months]:>10.1f}{median[months] * scale / 60:>15.1f}"
              f"{peak[months]:>14.0f}")
    rounds = ", ".join(f"{a['seconds'] / d['seconds']:.2f}" for a, d in
                       zip(results["fixed_angle"], results["fixed_day"], strict=True))
    print(f"  ratio fixed-angle / fixed-day = {ratio:.2f} (per round: {rounds}; target <= "
          f"{TARGET_RATIO:g}: {verdict(ratio <= TARGET_RATIO)})")
    print(f"  peak memory of the fixed-angle build {peak['fixed_angle']:.0f} MiB (target < "
          f"{TARGET_MIB:g} MiB: {verdict(peak['fixed_angle'] < TARGET_MIB)})")


if __name__ == "__main__":
    main()
