"""Fixtures shared by bcgen's tests. Keep this file small; add fixtures that several modules use."""

from __future__ import annotations

import pytest


@pytest.fixture
def cf_compliant():
    """The CF check (compliance-checker cf:1.11, offline): ``warnings = cf_compliant(path)``.

    It asserts that the file has no CF errors and returns the warnings; see
    ``tests/cf_checker.py`` for which checker levels count as errors.
    """
    from cf_checker import assert_cf_compliant

    return assert_cf_compliant


@pytest.fixture
def run_cli(capsys):
    """Run ``bcgen`` in-process: ``status, stdout, stderr = run_cli(["orbit", "6ka"])``.

    Usage errors (argparse exits, ``--help``, ``--version``) give their exit status too.
    """
    from bcgen.cli import main

    def run(args) -> tuple[int, str, str]:
        capsys.readouterr()  # drop anything printed before
        try:
            status = main([str(a) for a in args])
        except SystemExit as exc:
            status = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
        out, err = capsys.readouterr()
        return status, out, err

    return run


@pytest.fixture(scope="session")
def bcgen_script():
    """The installed ``bcgen`` console script (``pip install -e .``), as an argv prefix."""
    import shutil
    import sys
    from pathlib import Path

    beside = Path(sys.executable).with_name("bcgen")  # the script of this interpreter first
    path = str(beside) if beside.is_file() else shutil.which("bcgen")
    assert path, "the bcgen console script is not installed: run python -m pip install -e ."
    return [path]
