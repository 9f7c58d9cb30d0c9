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
