"""The package's layout: imports run one way, one definition per name, doctests that run.

Common practice (no published source): a package whose modules import each other in a
circle cannot be read or tested one layer at a time, and two definitions of one name drift
apart. The import graph is read from the source with :mod:`ast` (imports inside functions
count too), so a cycle hidden behind a deferred import is found as well.
"""

from __future__ import annotations

import ast
import doctest
import importlib
import inspect
import pkgutil
from pathlib import Path

import pytest

import bcgen

PACKAGE = Path(bcgen.__file__).resolve().parent


def _modules() -> dict[str, Path]:
    out = {}
    for path in PACKAGE.rglob("*.py"):
        parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = path
    return out


MODULES = _modules()


def _owner(name: str) -> str | None:
    """The bcgen module a dotted import name lands in (a name inside a module: that module)."""
    while name and name not in MODULES:
        name = name.rpartition(".")[0]
    return name or None


def _imports(module: str, path: Path) -> set[str]:
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.Import):
            targets = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                parts = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join(parts + ([base] if base else []))
            targets = [f"{base}.{a.name}" if f"{base}.{a.name}" in MODULES else base
                       for a in node.names]
        else:
            continue
        for target in targets:
            owner = _owner(target)
            # Importing a module imports its parent packages anyway: not an edge.
            if owner and owner != module and not module.startswith(owner + "."):
                found.add(owner)
    return found


GRAPH = {m: _imports(m, p) for m, p in MODULES.items()}


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one node (Tarjan's algorithm)."""
    index, low, stack, on_stack, out = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in graph.get(v, ()):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                out.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return out


def _subpackage(module: str) -> str:
    return ".".join(module.split(".")[:2])


def test_the_cycle_finder_finds_a_cycle():
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]
    assert _cycles({"a": {"b"}, "b": set()}) == []


def test_modules_import_each_other_in_no_cycle():
    assert _cycles(GRAPH) == []


def test_subpackages_import_each_other_in_no_cycle():
    # bcgen/__init__.py is the public entry: it may reach into any subpackage (lazily).
    graph: dict[str, set[str]] = {}
    for module, targets in GRAPH.items():
        for target in targets:
            a, b = _subpackage(module), _subpackage(target)
            if a != b and "bcgen" not in (a, b):
                graph.setdefault(a, set()).add(b)
    assert _cycles(graph) == []
    assert "bcgen.transient" not in graph.get("bcgen.timeslice", set())
    assert "bcgen.timeslice" not in graph.get("bcgen.transient", set())


def test_no_subpackage_shares_its_name_with_a_public_function():
    subpackages = {p.parent.name for p in PACKAGE.glob("*/__init__.py")}
    functions = {name for name in bcgen.__all__ if callable(getattr(bcgen, name))}
    assert not subpackages & functions


def _top_level_definitions() -> dict[str, list[str]]:
    found: dict[str, list[str]] = {}
    for module, path in MODULES.items():
        for node in ast.parse(path.read_text()).body:
            if isinstance(node, (ast.ClassDef, ast.FunctionDef)):
                names = [node.name]
            elif isinstance(node, ast.Assign):
                names = [t.id for t in node.targets if isinstance(t, ast.Name)]
            elif isinstance(node, ast.AnnAssign) and isinstance(node.target, ast.Name):
                names = [node.target.id]
            else:
                continue
            for name in names:
                found.setdefault(name, []).append(module)
    return found


def test_each_class_is_defined_once():
    definitions = _top_level_definitions()
    classes = {
        node.name
        for path in MODULES.values()
        for node in ast.parse(path.read_text()).body
        if isinstance(node, ast.ClassDef)
    }
    assert {name: definitions[name] for name in classes if len(definitions[name]) > 1} == {}


#: Closed vocabularies and tables that once had two homes with two meanings.
VOCABULARIES = {"TimeKind", "DAILY_METHODS", "PRODUCTS", "CALENDARS", "FIXED_YEAR_DAYS",
                "PRECESSION_INDEX_ATTRS", "DEFAULT_REFERENCE_EPOCH", "NO_YEAR_ZERO_CALENDARS"}


def test_the_vocabularies_named_above_are_each_defined_once():
    definitions = _top_level_definitions()
    assert {name: definitions[name] for name in VOCABULARIES
            if len(definitions.get(name, [])) > 1} == {}


#: Public names that several modules define on purpose: the interface each member of a
#: registry implements (an orbital solution: NAME, REFERENCE, VALID_YEARS, solve; a
#: subcommand: register, run, EPILOG, format_text) and a script's entry point.
INTERFACE_NAMES = {"NAME", "REFERENCE", "VALID_YEARS", "solve", "register", "run", "EPILOG",
                   "format_text", "main"}


def test_each_public_name_is_defined_once():
    definitions = _top_level_definitions()
    twice = {name: modules for name, modules in definitions.items()
             if len(modules) > 1 and not name.startswith("_") and name != "__all__"
             and name not in INTERFACE_NAMES}
    assert twice == {}


def test_the_definition_check_finds_a_second_home():
    # The check above is not vacuous: the scan sees a name of the package defined twice.
    definitions = _top_level_definitions()
    assert len(definitions["solve"]) > 1 and definitions["MONTH_NAMES"] == [
        "bcgen.solar_calendar.calendars"]


# --- doctests of the whole package ---------------------------------------------------------
DOCTEST_MODULES = ["bcgen"] + sorted(
    m.name for m in pkgutil.walk_packages(bcgen.__path__, "bcgen.")
    if m.name != "bcgen.__main__"  # running it is running the command line
)


@pytest.mark.parametrize("name", DOCTEST_MODULES)
def test_doctests(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE,
                             report=False)
    assert result.failed == 0, f"{result.failed} of {result.attempted} doctests fail in {name}"


def test_the_doctest_run_reaches_the_examples():
    # The run above is not empty: the public API's and the calendar authority's examples.
    finder = doctest.DocTestFinder()
    counted = sum(len(t.examples) for name in ("bcgen", "bcgen.solar_calendar.calendars",
                                                 "bcgen.experiment")
                  for t in finder.find(importlib.import_module(name)))
    assert counted >= 10
    assert inspect.isfunction(bcgen.build)
