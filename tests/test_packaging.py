"""The package is complete: every subpackage is installed, the bundled data and templates ship."""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import pytest

import bcgen
from bcgen.render import BUNDLED, bundled_template_path

ROOT = Path(__file__).resolve().parent.parent


def _listed_packages() -> set[str]:
    text = (ROOT / "pyproject.toml").read_text()
    block = re.search(r"^packages = \[(.*?)\]", text, re.S | re.M).group(1)
    return set(re.findall(r'"([\w.]+)"', block))


def test_every_subpackage_is_listed_in_pyproject():
    found = {"bcgen"} | {
        "bcgen." + ".".join(p.parent.relative_to(ROOT / "bcgen").parts)
        for p in (ROOT / "bcgen").rglob("__init__.py")
        if p.parent != ROOT / "bcgen" and "__pycache__" not in p.parts
    }
    assert found | {"bcgen.templates"} == _listed_packages()


def test_bundled_templates_and_tables_are_installed():
    for name in BUNDLED:
        assert bundled_template_path(name).is_file(), name
    data = Path(bcgen.__file__).parent / "data" / "berger1978"
    for table in ("obliquity.csv", "eccentricity.csv", "precession.csv", "README.md"):
        assert (data / table).is_file()


def test_top_level_of_the_repository_is_fixed():
    # The project's design fixes the top level (DEVELOPERS.md); dotfiles and .ci/ aside.
    allowed = {"README.md", "DEVELOPERS.md", "pyproject.toml", "bcgen", "configs", "templates",
               "tests"}
    if not (ROOT / ".git").exists():
        pytest.skip("not a git checkout: the tracked files cannot be listed")
    files = subprocess.run(["git", "ls-files"], cwd=ROOT, capture_output=True, text=True,
                           check=True).stdout.split()
    tracked = {f.split("/")[0] for f in files if not f.startswith(".")}
    extra = tracked - allowed
    assert not extra, f"unexpected top-level entries: {sorted(extra)}"
