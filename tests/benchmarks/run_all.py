"""Run every ``bench_*.py`` in this folder in turn and report which ones failed.

Run: ``python tests/benchmarks/run_all.py [NAME ...]`` (names filter the scripts,
e.g. ``orbit`` runs only ``bench_orbit.py``). Benchmarks print their own ratios;
they are not collected by pytest.
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

from measure import verdict

#: The whole suite must run in under 5 minutes on 2 cores (issue 7).
BUDGET_S = 300


def main(argv: list[str]) -> int:
    scripts = sorted(Path(__file__).resolve().parent.glob("bench_*.py"))
    if argv:
        scripts = [s for s in scripts if any(name in s.stem for name in argv)]
    failed = []
    begin = time.perf_counter()
    for script in scripts:
        print(f"=== {script.name}", flush=True)
        start = time.perf_counter()
        status = subprocess.run([sys.executable, str(script)], check=False).returncode
        print(
            f"=== {script.name}: exit {status}, {time.perf_counter() - start:.1f} s\n", flush=True
        )
        if status:
            failed.append(script.name)
    total = time.perf_counter() - begin
    print(
        f"{len(scripts) - len(failed)} of {len(scripts)} benchmarks ran in {total:.0f} s "
        f"(budget {BUDGET_S} s: {verdict(total <= BUDGET_S)})"
        + (f"; failed: {', '.join(failed)}" if failed else "")
    )
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
