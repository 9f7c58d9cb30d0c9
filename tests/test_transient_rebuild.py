"""Re-running a transient build: resume by default, --force rebuilds, and a change rebuilds
only the products that depend on it (counted from the command's summary and the files'
modification times)."""

from __future__ import annotations

import re
from pathlib import Path

SPEC = """\
experiment: {{name: rerun}}
transient:
  start_epoch: 10ka
  end_epoch: 9ka
  acceleration: 10
  years_per_file: 50
  greenhouse_gas_table: gases.csv
solar_constant_wm2: {s0}
grid: {{kind: zonal, resolution_deg: 30}}
products: [orbit, greenhouse_gases, monthly_insolation_fixed_day]
"""
# Invented values (a test table, not a record).
GASES = "age_ka_bp,co2_ppm,ch4_ppb,n2o_ppb\n11,{co2},650,260\n8,265,600,255\n"


def setup(folder: Path, s0="1360.747", co2="260"):
    (folder / "gases.csv").write_text(GASES.format(co2=co2))
    (folder / "rerun.yaml").write_text(SPEC.format(s0=s0))


def run(run_cli, folder: Path, *extra) -> tuple[int, int]:
    status, out, err = run_cli(["build", folder / "rerun.yaml", "-o", folder / "out", *extra])
    assert status == 0, err
    written, skipped = re.search(r"(\d+) files written, (\d+) already complete", out).groups()
    return int(written), int(skipped)


def stamps(folder: Path) -> dict[str, int]:
    return {p.name: p.stat().st_mtime_ns for p in (folder / "out").glob("*.nc")}


def changed_products(before: dict, after: dict) -> set[str]:
    return {re.sub(r"^rerun_(.*)_\d+-\d+\.nc$", r"\1", name)
            for name in after if before.get(name) != after[name]}


def test_force_rebuilds_and_resume_is_the_default(run_cli, tmp_path):
    setup(tmp_path)
    assert run(run_cli, tmp_path) == (9, 0)  # 101 model years: 3 files of each of 3 products
    assert run(run_cli, tmp_path) == (0, 9)  # resume: nothing to do
    assert run(run_cli, tmp_path, "--force") == (9, 0)  # --force means rebuild


def test_only_the_products_that_depend_on_a_change_are_rebuilt(run_cli, tmp_path):
    setup(tmp_path)
    run(run_cli, tmp_path)
    before = stamps(tmp_path)
    setup(tmp_path, co2="262")  # only the gas table changes
    assert run(run_cli, tmp_path) == (3, 6)
    after = stamps(tmp_path)
    assert changed_products(before, after) == {"greenhouse_gases"}
    setup(tmp_path, s0="1365", co2="262")  # only the solar constant changes
    assert run(run_cli, tmp_path) == (3, 6)
    assert changed_products(after, stamps(tmp_path)) == {"monthly_insolation_fixed_day"}
    # A comment in the spec changes no setting: nothing is rebuilt.
    path = tmp_path / "rerun.yaml"
    path.write_text("# a note\n" + path.read_text())
    assert run(run_cli, tmp_path) == (0, 9)
