"""Benchmark: a transient build of fixed-angle monthly insolation vs the same with fixed-day months.

The issue's case (issue 15) is 130,000 model years x 12 months x 180 latitudes (zonal 1 deg,
from 130 ka, files of 1,000 model years): fixed-angle monthly insolation must take at most
1.5 times the same run with fixed-day months, with a peak memory under 1 GiB.

Every build is a real ``build_transient`` in a process of its own (its peak resident memory
is its own; imports are done before the clock starts). The fixed-day and fixed-angle builds
of the same model years run *interleaved*: both processes are started, and the benchmark
lets one run alone for a turn of a few files while the other is stopped (SIGSTOP /
SIGCONT), then the other for the same files, and so on. So both see the same load, turn by
turn, and a shared machine moves both sides alike. The time of a build is the sum of its
turns; CPU time (user + system, all threads) is printed beside it, as it hardly changes
with load.

Default: spans of model years spread over the whole run (130 ka ... 0), each built in both
modes; the full run is EXTRAPOLATED from them (the printout says so, with the spread across
spans, which shows whether the cost per model year changes along the run). ``--years
130000`` builds the full case itself (one build per mode, interleaved by turns of
``--files-per-turn`` files; about 4 minutes of CPU per mode).

Run: ``python tests/benchmarks/bench_transient_fixed_angle.py [--spans 5] [--span-years 1000]``
or ``... --years 130000``.
"""

from __future__ import annotations

import argparse
import json
import os
import signal
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from measure import peak_rss_mib, verdict

FULL_YEARS = 130_000
START_BP = 130_000
YEARS_PER_FILE = 1_000
TARGET_RATIO = 1.5
TARGET_MIB = 1024.0
MODES = ("fixed_day", "fixed_angle")
SPEC = """\
experiment: {{name: long}}
transient: {{start_epoch: {start} BP, end_epoch: {end} BP, years_per_file: {per_file}}}
grid: {{kind: zonal, resolution_deg: 1}}
products: [monthly_insolation_{months}]
"""
_POLL_S = 0.01
_TICKS = os.sysconf("SC_CLK_TCK")


# --- the child: one build ---------------------------------------------------------------------
def child(months: str, start_bp: int, n_years: int, folder: Path) -> None:
    """Build, once the parent says go; print CPU seconds and peak RSS as JSON."""
    import dask.array  # noqa: F401 - imported by the writer; a full run pays it once
    import xarray  # noqa: F401

    from bcgen.spec import parse_spec_text
    from bcgen.transient import build_transient

    spec = parse_spec_text(SPEC.format(start=start_bp, end=start_bp - n_years + 1,
                                       per_file=YEARS_PER_FILE, months=months))
    assert spec.transient.n_model_years == n_years
    print("ready", flush=True)
    sys.stdin.readline()
    cpu = time.process_time()
    build_transient(spec, folder)
    print(json.dumps({"cpu_s": time.process_time() - cpu, "rss_mib": peak_rss_mib()}),
          flush=True)


def _set_parent_death_signal() -> None:  # a stopped child must not outlive the benchmark
    import ctypes

    ctypes.CDLL(None).prctl(1, signal.SIGKILL)  # PR_SET_PDEATHSIG


# --- the parent: interleaved builds -----------------------------------------------------------
class Build:
    """A child process building one mode; run turn by turn."""

    def __init__(self, months: str, start_bp: int, n_years: int, folder: Path) -> None:
        self.months, self.folder = months, folder
        self.proc = subprocess.Popen(
            [sys.executable, __file__, "--child", months, str(start_bp), str(n_years),
             str(folder)],
            stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
            preexec_fn=_set_parent_death_signal,
        )
        if self.proc.stdout.readline().strip() != "ready":
            self.fail()
        self.turns: list[tuple[float, float]] = []  # (wall s, CPU s) of each turn

    def fail(self) -> None:
        self.proc.kill()
        sys.exit(f"the {self.months} build failed:\n{self.proc.stderr.read()}")

    def cpu_s(self) -> float:
        with open(f"/proc/{self.proc.pid}/stat") as stat:
            fields = stat.read().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / _TICKS  # utime + stime, all threads

    def files_done(self) -> int:
        """Files complete (renamed into place; temporaries are hidden)."""
        if not self.folder.is_dir():
            return 0
        return sum(1 for e in os.scandir(self.folder) if e.name.endswith(".nc")
                   and not e.name.startswith("."))

    def start(self) -> None:
        self.proc.send_signal(signal.SIGSTOP)
        self.proc.stdin.write("go\n")
        self.proc.stdin.flush()

    def turn(self, files: int, load: list[float]) -> None:
        """Run alone until ``files`` files are complete (or the build ends), then stop."""
        cpu = self.cpu_s()
        begin = time.perf_counter()
        self.proc.send_signal(signal.SIGCONT)
        while self.files_done() < files and self.proc.poll() is None:
            time.sleep(_POLL_S)
            load.append(os.getloadavg()[0])
        wall = time.perf_counter() - begin
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGSTOP)
            self.turns.append((wall, self.cpu_s() - cpu))
        else:
            self.turns.append((wall, float("nan")))  # its CPU comes from the child's report

    def finish(self) -> dict:
        self.proc.send_signal(signal.SIGCONT)
        out, err = self.proc.communicate()
        if self.proc.returncode:
            sys.exit(f"the {self.months} build failed:\n{err}")
        result = json.loads(out.strip().splitlines()[-1])
        known = sum(c for _, c in self.turns[:-1])
        self.turns[-1] = (self.turns[-1][0], result["cpu_s"] - known)
        result["wall_s"] = sum(w for w, _ in self.turns)
        return result


def interleaved(start_bp: int, n_years: int, files_per_turn: int, first: str, tmp: Path,
                load: list[float]) -> dict[str, Build]:
    """Build ``n_years`` from ``start_bp`` in both modes, alternating turns of files."""
    order = (first, *(m for m in MODES if m != first))
    builds = {}
    try:
        for months in order:  # both start (and import) before either is timed
            builds[months] = Build(months, start_bp, n_years, tmp / f"{months}-{start_bp}")
        for build in builds.values():
            build.start()
        n_files = -(-n_years // YEARS_PER_FILE)
        for files in range(files_per_turn, n_files + files_per_turn, files_per_turn):
            for months in order:
                builds[months].turn(min(files, n_files), load)
        for build in builds.values():
            build.result = build.finish()
    finally:
        for build in builds.values():
            if build.proc.poll() is None:
                build.proc.send_signal(signal.SIGCONT)
                build.proc.kill()
                build.proc.wait()
    return builds


def spread(values: list[float]) -> str:
    if len(values) == 1:
        return f"{values[0]:.2f}"
    return (f"median {statistics.median(values):.2f}, range {min(values):.2f} .. "
            f"{max(values):.2f} over {len(values)}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--years", type=int, default=None,
                        help=f"build this many model years from 130 ka instead of sampled "
                             f"spans ({FULL_YEARS} is the full case)")
    parser.add_argument("--spans", type=int, default=5,
                        help="sampled spans spread over 130 ka ... 0 (default 5)")
    parser.add_argument("--span-years", type=int, default=YEARS_PER_FILE,
                        help=f"model years per span (default {YEARS_PER_FILE}, one file)")
    parser.add_argument("--files-per-turn", type=int, default=None,
                        help="files each build makes per turn (default: 10 for --years, "
                             "the whole span for sampled spans)")
    parser.add_argument("--child", nargs=4, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        months, start, n, folder = args.child
        child(months, int(start), int(n), Path(folder))
        return
    if args.years is not None:
        spans = [(START_BP, args.years)]
        per_turn = args.files_per_turn or 10
    else:
        room = (FULL_YEARS - args.span_years) // YEARS_PER_FILE
        offsets = sorted({round(j * room / max(1, args.spans - 1)) * YEARS_PER_FILE
                          for j in range(args.spans)})
        spans = [(START_BP - off, args.span_years) for off in offsets]
        per_turn = args.files_per_turn or -(-args.span_years // YEARS_PER_FILE)
    load: list[float] = []
    rows = []
    print(f"transient monthly insolation, zonal 1 deg (180 latitudes), files of "
          f"{YEARS_PER_FILE:,} model years; {os.cpu_count()} cores; load at start "
          f"{' '.join(f'{x:.2f}' for x in os.getloadavg())}", flush=True)
    with tempfile.TemporaryDirectory(prefix="bcgen-bench-") as tmp:
        for i, (start_bp, n_years) in enumerate(spans):
            span_load: list[float] = []
            builds = interleaved(start_bp, n_years, per_turn, MODES[i % 2], Path(tmp), span_load)
            load += span_load
            rows.append((start_bp, n_years, builds, span_load))
            fd, fa = builds["fixed_day"].result, builds["fixed_angle"].result
            print(f"  {start_bp / 1000:g} ka, {n_years:,} years: fixed-day {fd['wall_s']:.1f} s "
                  f"({fd['cpu_s']:.1f} s CPU), fixed-angle {fa['wall_s']:.1f} s "
                  f"({fa['cpu_s']:.1f} s CPU), ratio {fa['wall_s'] / fd['wall_s']:.2f} "
                  f"(CPU {fa['cpu_s'] / fd['cpu_s']:.2f}); mean load "
                  f"{statistics.fmean(span_load or [float('nan')]):.1f}", flush=True)
    report(args, rows, load)


def report(args, rows, load) -> None:
    years = sum(n for _, n, _, _ in rows)
    total = {m: {k: sum(b[m].result[k] for _, _, b, _ in rows) for k in ("wall_s", "cpu_s")}
             for m in MODES}
    peak = {m: max(b[m].result["rss_mib"] for _, _, b, _ in rows) for m in MODES}
    ratio = total["fixed_angle"]["wall_s"] / total["fixed_day"]["wall_s"]
    cpu_ratio = total["fixed_angle"]["cpu_s"] / total["fixed_day"]["cpu_s"]
    pairs = [(fa[0] / fd[0], fa[1] / fd[1]) for _, _, b, _ in rows
             for fd, fa in zip(b["fixed_day"].turns, b["fixed_angle"].turns, strict=True)
             if fd[0] > 0 and fd[1] > 0]
    scale = FULL_YEARS / years
    print()
    if years < FULL_YEARS:
        print(f"MEASURED on {len(rows)} spans of {rows[0][1]:,} model years ({years:,} years, "
              f"{100 / scale:.1f} % of the run) spread over 130 ka ... 0; the full "
              f"{FULL_YEARS:,}-year run is EXTRAPOLATED linearly (x{scale:g}), assuming the "
              f"same cost per model year along the run (compare the spans above)")
    else:
        print(f"MEASURED: the full run of {years:,} model years in each mode (no extrapolation)")
    print(f"  {'months':<14}{'seconds':>10}{'CPU s':>10}{'full run, min':>15}{'peak RSS MiB':>14}")
    for m in MODES:
        print(f"  {m:<14}{total[m]['wall_s']:>10.1f}{total[m]['cpu_s']:>10.1f}"
              f"{total[m]['wall_s'] * scale / 60:>15.1f}{peak[m]:>14.0f}")
    print(f"  ratio fixed-angle / fixed-day = {ratio:.2f} (target <= {TARGET_RATIO:g}: "
          f"{verdict(ratio <= TARGET_RATIO)}); CPU-time ratio {cpu_ratio:.2f}")
    print(f"  per pair of turns (same model years, run back to back): time "
          f"{spread([p[0] for p in pairs])}; CPU {spread([p[1] for p in pairs])}")
    print(f"  peak memory of the fixed-angle build {peak['fixed_angle']:.0f} MiB (target < "
          f"{TARGET_MIB:g} MiB: {verdict(peak['fixed_angle'] < TARGET_MIB)})")
    if load:
        print(f"  1-minute load average while the builds ran: mean {statistics.fmean(load):.1f}, "
              f"range {min(load):.1f} .. {max(load):.1f} ({os.cpu_count()} cores)")


if __name__ == "__main__":
    main()
