"""The README's Python API: every example runs, every public name is documented with its real
signature, every orbital solution is listed, and ``import bcgen`` stays light.

The README is the user's document; these tests keep it true to the code (a documentation
test, common practice). The example's own checks compare with the PMIP4 midHolocene values
(Otto-Bliesner et al. 2017, GMD 10, 3979-4003, Table 1).
"""

from __future__ import annotations

import importlib
import inspect
import re
import subprocess
import sys
from pathlib import Path

import pytest
from published_tables import PMIP4

import bcgen
import bcgen.orbit

REPO = Path(__file__).resolve().parents[1]
README = (REPO / "README.md").read_text(encoding="utf-8")


def section(title: str) -> str:
    """The text of the README section ``## title`` (up to the next ``## `` heading)."""
    match = re.search(rf"^## {re.escape(title)}\n(.*?)(?=^## )", README, re.MULTILINE | re.DOTALL)
    assert match, f"README has no section '## {title}'"
    return match[1]


PYTHON_BLOCKS = re.findall(r"^```python\n(.*?)^```", README, re.MULTILINE | re.DOTALL)
API = section("API reference")


def table_rows(text: str) -> list[list[str]]:
    """Cells of the Markdown table rows in ``text`` (header and rule excluded)."""
    rows = [line for line in text.splitlines() if line.startswith("| ")]
    return [[cell.strip() for cell in row.strip("|").split(" | ")] for row in rows[2:]]


def test_the_readme_has_a_python_example():
    assert PYTHON_BLOCKS, "no ```python block in README.md"
    assert any("bcgen." in block for block in PYTHON_BLOCKS)


@pytest.mark.parametrize("index", range(len(PYTHON_BLOCKS)))
def test_every_python_block_runs(index, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)  # anything the example writes stays in a temporary folder
    code = compile(PYTHON_BLOCKS[index], f"README.md python block {index + 1}", "exec")
    exec(code, {"__name__": "__readme__"})
    out = capsys.readouterr().out
    assert out, "the example prints its results"
    assert list(tmp_path.iterdir()) == []  # it cleans up after itself


def test_the_end_to_end_example_prints_the_published_orbit(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    block = next(b for b in PYTHON_BLOCKS if "to_fixed_angle_months" in b)
    exec(compile(block, "README.md", "exec"), {"__name__": "__readme__"})
    out = capsys.readouterr().out
    # PMIP4 midHolocene: e 0.018682, obliquity 24.105, perihelion - 180 = 0.87
    # (Otto-Bliesner et al. 2017, Table 1; tests/published_tables.py); the Sun's longitude at
    # perihelion is 180 more.
    mh = PMIP4["midHolocene"]
    sun = f"{float(mh.perihelion_minus_180_deg) + 180:.2f}"
    assert (f"e = {mh.eccentricity}, obliquity = {mh.obliquity_deg} deg, perihelion longitude = "
            f"{mh.perihelion_minus_180_deg} deg") in out
    assert f"Sun's longitude at perihelion: {sun} deg" in out
    for step in ("parse_epoch", "solve", "fixed_angle_months", "monthly_insolation",
                 "parse_spec_text", "build", "to_fixed_angle_months"):
        assert f"bcgen.{step}(" in block, step
    # Annual means of fixed-angle months are weighted by month length (the months are
    # unequal; common practice for means over unequal intervals), and the example shows it.
    assert ".weighted(" in block
    annual, plain = map(float, re.search(r"annual mean ([\d.]+) K, plain mean of the months "
                                         r"([\d.]+) K", out).groups())
    assert abs(annual - plain) > 0.05


def test_every_public_name_is_in_the_api_reference():
    documented = set(re.findall(r"`([A-Za-z_][A-Za-z0-9_]*)(?:\(|`)", API))
    missing = sorted(set(bcgen.__all__) - documented)
    assert not missing, f"public names missing from the README's API reference: {missing}"


def test_documented_signatures_match_the_code():
    # Each `name(params)` in the API table: the same parameter names, in order, as the code.
    checked = 0
    for cells in table_rows(API):
        for name, params in re.findall(r"`([A-Za-z_]\w*)\((.*?)\)`", cells[0]):
            obj = getattr(bcgen, name)
            code = [p.name if p.kind not in (p.VAR_KEYWORD, p.VAR_POSITIONAL)
                    else "**" + p.name if p.kind == p.VAR_KEYWORD else "*" + p.name
                    for p in inspect.signature(obj).parameters.values()]
            written = [re.sub(r"=.*", "", p).strip() for p in _split_params(params)]
            written = [p for p in written if p and p != "*"]
            assert written == code, f"README signature of {name}: {written} != {code}"
            checked += 1
    assert checked >= 20


def _split_params(text: str) -> list[str]:
    """Split a parameter list on top-level commas (not those inside brackets)."""
    parts, depth, current = [], 0, ""
    for char in text:
        depth += char in "([{"
        depth -= char in ")]}"
        if char == "," and depth == 0:
            parts.append(current)
            current = ""
        else:
            current += char
    return parts + [current]


def test_every_orbital_solution_is_in_the_solutions_table():
    listed = {cells[0].strip("`") for cells in table_rows(section("Orbital solutions"))}
    assert set(bcgen.orbit.SOLUTIONS) <= listed
    assert listed <= set(bcgen.orbit.SOLUTIONS), "the README lists a solution the code lacks"


def test_public_names_resolve_and_build_and_validate_are_callable():
    for name in bcgen.__all__:
        assert getattr(bcgen, name) is not None, name
    assert set(bcgen.__all__) <= set(dir(bcgen))
    importlib.import_module("bcgen.timeslice")  # their subpackages, imported: still callable
    importlib.import_module("bcgen.validation")
    assert callable(bcgen.build) and callable(bcgen.validate)
    assert inspect.isfunction(bcgen.build) and inspect.isfunction(bcgen.validate)
    assert list(inspect.signature(bcgen.build).parameters)[:2] == ["spec", "output_dir"]
    assert list(inspect.signature(bcgen.validate).parameters)[:2] == ["model_file", "spec"]
    with pytest.raises(AttributeError, match="no attribute 'not_a_name'"):
        bcgen.not_a_name  # noqa: B018


def test_import_bcgen_is_light():
    # A fresh interpreter: importing bcgen loads none of the heavy libraries; the first use
    # of a name loads what it needs.
    heavy = ["xarray", "dask", "netCDF4", "cftime", "yaml", "matplotlib", "scipy", "pandas"]
    code = (
        "import sys, bcgen\n"
        f"heavy = {heavy!r}\n"
        "print(sorted(m for m in heavy if m in sys.modules))\n"
        "bcgen.parse_epoch('6ka')\n"
        "print('numpy' in sys.modules)\n"
    )
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                            cwd=REPO, timeout=60)
    assert result.returncode == 0, result.stderr
    assert result.stdout.splitlines() == ["[]", "True"]
