"""Run the IOOS compliance-checker's CF suite in-process, offline, and judge the result.

Usage in a test::

    from cf_checker import assert_cf_compliant

    warnings = assert_cf_compliant(path)      # raises AssertionError on any error

Which results count as errors
-----------------------------
The checker's CF suites sort every failed check into three priority levels and
label them (``_cc_display_headers`` of the CF checker) 3 = "Errors" (HIGH:
CF "must" requirements), 2 = "Warnings" (MEDIUM: CF "should"
recommendations) and 1 = "Info" (LOW). bcgen counts as a failure:

- every failed check of level 3 (HIGH, "Errors"), and
- every check that raised an exception inside the checker (it did not run,
  so compliance is unproven).

Levels 2 and 1 are returned as warnings, one string per message, in the form
``"<level>: <check name>: <message>"``, so that each test can list them (and the
issue notes give a reason for each one left). Note that the checker's own
command line with ``--criteria normal`` fails on level 2 as well; bcgen follows
the CF document, where a "should" is not an error.

Offline
-------
The checker is pinned to the CF standard-name table it bundles (the
``standard_name_vocabulary`` attribute would otherwise make it download another
version), and any HTTP request it attempts while checking raises instead of
touching the network.
"""

from __future__ import annotations

import contextlib
import os
import warnings as _warnings
from unittest import mock

#: The newest CF suite of compliance-checker 6.1 (CF 1.12 and 1.13 have no suite).
CF_SUITE = "cf:1.11"

#: Priority levels that count as errors (see the module docstring).
FAILING_LEVELS = frozenset({3})

LEVEL_NAMES = {3: "error", 2: "warning", 1: "info"}


class NetworkBlocked(RuntimeError):
    """Raised when the checker tries to reach the network during a test."""


def _no_network(*args, **kwargs):
    raise NetworkBlocked("compliance check attempted network access; tests run offline")


@contextlib.contextmanager
def _offline():
    import urllib.request

    import requests
    from compliance_checker.cf import cf_base, util

    with contextlib.ExitStack() as stack:
        stack.enter_context(mock.patch.object(requests.Session, "request", _no_network))
        stack.enter_context(mock.patch.object(urllib.request, "urlopen", _no_network))
        stack.enter_context(mock.patch.object(util, "download_cf_standard_name_table", _no_network))
        # Always use the bundled standard-name table.
        stack.enter_context(
            mock.patch.object(
                cf_base.CFBaseCheck, "_find_cf_standard_name_table", lambda self, ds: False
            )
        )
        yield


def run_cf_check(path, suite: str = CF_SUITE) -> tuple[list[tuple[int, str, str]], dict]:
    """Run one CF suite on a local file; return (failed results, checker exceptions).

    Each failed result is ``(level, check name, message)``; a failed check
    without messages gives one entry with an empty message.
    """
    from compliance_checker.runner import CheckSuite

    path = os.fspath(path)
    if not os.path.isfile(path):
        raise FileNotFoundError(path)
    with _offline(), _warnings.catch_warnings():
        _warnings.simplefilter("ignore")  # the checker's own deprecation notices
        CheckSuite.load_all_available_checkers()
        suite_runner = CheckSuite()
        ds = suite_runner.load_dataset(os.path.abspath(path))
        try:
            results = suite_runner.run_all(ds, [suite], include_checks=None, skip_checks=[])
        finally:
            ds.close()
    if suite not in results:
        raise RuntimeError(f"compliance-checker has no suite {suite!r}")
    groups, exceptions = results[suite]
    failed: list[tuple[int, str, str]] = []

    def visit(result, prefix=""):
        name = f"{prefix}{result.name}"
        value = result.value
        if isinstance(value, tuple):
            bad = value[0] < value[1]
        else:
            bad = value is False
        if bad and (result.msgs or not result.children):
            msgs = [m for m in result.msgs if m] or [""]
            failed.extend((result.weight, name, m) for m in msgs)
        for child in result.children:
            visit(child, f"{name}: ")

    for group in groups:
        visit(group)
    return failed, exceptions


def assert_cf_compliant(path, suite: str = CF_SUITE) -> list[str]:
    """Assert that a file has no CF errors; return its warnings as strings.

    Raises
    ------
    AssertionError
        Listing every level-3 failure and every checker exception.
    """
    failed, exceptions = run_cf_check(path, suite)
    errors = [f"{LEVEL_NAMES[w]}: {n}: {m}" for w, n, m in failed if w in FAILING_LEVELS]
    errors += [f"checker exception in {name}: {exc[0]!r}" for name, exc in exceptions.items()]
    assert not errors, f"{path} fails {suite}:\n" + "\n".join(errors)
    return sorted(
        {f"{LEVEL_NAMES.get(w, w)}: {n}: {m}" for w, n, m in failed if w not in FAILING_LEVELS}
    )
