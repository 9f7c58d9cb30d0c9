"""An output is never an input: every output path is checked against every input of the run.

Two paths name the same file when they resolve (symlinks followed) to the same path, or
when both exist and share a device and an inode (hard links, bind mounts). The check
runs before anything is written, and ``--force`` never overrides it: ``--force``
replaces an earlier *output*, never the data a run reads.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path

from bcgen.errors import OutputError


def same_file(a, b) -> bool:
    """Tell whether the paths ``a`` and ``b`` name one file (after symlinks; device and inode)."""
    a, b = Path(a), Path(b)
    try:
        if os.path.realpath(a) == os.path.realpath(b):
            return True
    except OSError:  # pragma: no cover - a symlink loop
        pass
    try:
        return os.path.samestat(os.stat(a), os.stat(b))
    except OSError:  # one of them does not exist (yet): only the resolved names could tell
        return False


def refuse_outputs_among_inputs(outputs: Iterable[tuple[str, object]],
                                inputs: Iterable[tuple[str, object]]) -> None:
    """Refuse a run whose output would be one of its inputs.

    Parameters
    ----------
    outputs, inputs : iterable of (label, path)
        Each path with the words naming it in a message (``"-o out.nc"``, ``"input
        model.nc"``, ``"orbit.table"``). Paths that are None are skipped.

    Raises
    ------
    OutputError
        Naming both paths; nothing has been written.
    """
    inputs = [(label, Path(p)) for label, p in inputs if p is not None]
    for out_label, out in outputs:
        if out is None:
            continue
        for in_label, path in inputs:
            if same_file(out, path):
                raise OutputError(
                    f"{out_label} is the same file as {in_label}: an output is never an input "
                    "(--force does not change that); write the output elsewhere")


def spec_inputs(spec) -> list[tuple[str, Path]]:
    """Every file an experiment spec makes a run read, each with the words naming it.

    The spec's own file, ``orbit.table``, ``grid.path``,
    ``transient.greenhouse_gas_table`` and the user's template files (read from the
    attributes of a :class:`bcgen.spec.ExperimentSpec`).
    """
    named = [("the spec", spec.path),
             ("orbit.table", spec.orbit.table),
             ("grid.path", spec.grid.path if spec.grid is not None else None),
             ("transient.greenhouse_gas_table",
              spec.transient.greenhouse_gas_table if spec.transient is not None else None)]
    named += [(f"{ref.key} {ref.label}", ref.path)
              for ref in (*spec.templates, *spec.attribute_templates) if ref.path is not None]
    return [(f"{label} {path}", Path(path)) for label, path in named if path is not None]


def check_file_names(directory, names: Iterable[str]) -> None:
    """Refuse file names longer than the file system holds (NAME_MAX bytes), before any write."""
    directory = Path(directory)
    probe = directory if directory.is_dir() else Path(".")
    try:
        name_max = os.pathconf(probe, "PC_NAME_MAX")
    except (OSError, ValueError, AttributeError):  # pragma: no cover - not POSIX
        name_max = 255
    for name in names:
        if len(os.fsencode(name)) > name_max:
            raise OutputError(f"file name {name[:40]}... has {len(os.fsencode(name))} bytes; "
                              f"the file system's limit is {name_max}: shorten the experiment "
                              "name or output.file_pattern")
