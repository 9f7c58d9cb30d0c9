"""The manifest of a transient run: what each file holds, and whether a re-run may skip it.

The manifest (``<experiment>_manifest.json`` in the output folder, the name a
time-slice build uses too) describes the files on disk at every moment, at a cost
linear in the number of files (:class:`ManifestWriter`): the record of each completed
file is appended to a journal beside it (``.<experiment>_manifest.json.journal``, one
JSON line per file), and the manifest itself is rewritten, atomically, after the 1st,
2nd, 4th, 8th ... file and when the run ends (or is interrupted), when the journal is
removed. A run killed outright leaves manifest and journal, which the next run reads
together (:func:`read_manifest`). For each file it records:

- ``file``, ``product``, ``description``, ``bytes``, ``sha256``, ``variables``;
- ``first_model_year``, ``last_model_year``, the epochs of both
  (``first_epoch``/``last_epoch`` as text and ``*_years_from_1950``) and the
  number of time steps;
- ``parameters``: everything the file's contents depend on -- the SHA-256 of
  the spec settings its product depends on (``settings_sha256``), the bcgen
  version, the product, the model years and their epochs, and the SHA-256 of
  the input files it depends on (orbit table, greenhouse-gas table, grid file).

A re-run skips a file when it is present, its SHA-256 equals the recorded one and
its recorded parameters equal those of the new run; it rebuilds a file whose
SHA-256 equals the recorded one but whose parameters differ (the run's own file,
out of date). Any other existing file (not recorded, or changed since) is refused
without ``--force``, naming the file; ``--force`` rebuilds every file.

The record of a file is written *before* the file is renamed into place; an
interruption between the two leaves a record without its file, which a re-run
simply builds again.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterable
from pathlib import Path
from typing import Literal

from bcgen.errors import OutputError
from bcgen.io import remove_quietly, sha256_of, write_failure, write_text_atomic
from bcgen.io.signals import held_signals

#: Value of the manifest's ``kind`` key for a transient run.
KIND = "transient"

Decision = Literal["skip", "build"]


def journal_path(path: Path) -> Path:
    """Return the journal of the manifest ``path`` (records not yet in the manifest)."""
    return path.with_name(f".{path.name}.journal")


def _read_journal(path: Path) -> list[dict]:
    """Read the records of a journal; a last line cut short by a kill is left out."""
    journal = journal_path(path)
    if not journal.exists():
        return []
    records = []
    for line in journal.read_text(encoding="utf-8").splitlines():
        try:
            record = json.loads(line)
        except ValueError:
            continue
        if isinstance(record, dict):
            records.append(record)
    return records


def read_manifest(path: Path, *, force: bool) -> dict | None:
    """Read an existing manifest with its journal (None if there is neither).

    A manifest that cannot be read, or that belongs to a time-slice build, is
    an error without ``force`` and ignored with it.
    """
    journal = _read_journal(path) if path.parent.is_dir() else []
    if not path.exists():
        return {"kind": KIND, "files": journal} if journal else None
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        if not isinstance(data, dict) or not isinstance(data.get("files", []), list):
            raise ValueError("not a bcgen manifest")
        if journal:
            data["files"] = [*data.get("files", []), *journal]
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        if force:
            return None
        raise OutputError(
            f"{path}: cannot read the existing manifest ({exc}); use --force to "
            "rebuild and replace it"
        ) from None
    if data.get("kind") != KIND:
        if force:
            return None
        raise OutputError(
            f"{path} is the manifest of a time-slice build of the same experiment; "
            "use another output folder, or --force to replace it"
        )
    return data


def records_by_file(manifest: dict | None) -> dict[str, dict]:
    """Return the file records of a manifest, by file name."""
    if not manifest:
        return {}
    # A hand-edited record of the wrong shape is no record: its file is rebuilt (or refused).
    return {
        r["file"]: r
        for r in manifest.get("files", [])
        if isinstance(r, dict) and isinstance(r.get("file"), str)
        and isinstance(r.get("parameters"), dict) and isinstance(r.get("sha256"), str)
    }


def decide(
    path: Path, parameters: dict, old: dict | None, *, force: bool, manifest_path: Path
) -> Decision:
    """Whether to skip or build one file (or refuse, raising :class:`OutputError`).

    Parameters
    ----------
    path : pathlib.Path
        The file.
    parameters : dict
        Its parameters in this run.
    old : dict or None
        Its record in the existing manifest.
    force : bool
        Rebuild the file whatever its state.
    manifest_path : pathlib.Path
        The manifest (named in messages).
    """
    if not path.exists():
        return "build"
    if path.is_dir():
        raise OutputError(f"cannot write {path}: it is a folder")
    if force:
        return "build"
    if old is None:
        reason = f"is not recorded in {manifest_path.name}"
    elif old.get("sha256") != sha256_of(path):
        reason = f"differs from the file recorded in {manifest_path.name} (SHA-256 mismatch)"
    elif old.get("parameters") != parameters:
        # The run's own file, untouched since it was written, made from other settings or
        # inputs: it is out of date, and rebuilding it is what a re-run is for.
        return "build"
    else:
        return "skip"
    raise OutputError(f"{path} already exists and {reason}; use --force to rebuild it")


def write_manifest(path: Path, header: dict, records: Iterable[dict]) -> Path:
    """Write the manifest atomically (temporary file, then rename)."""
    manifest = dict(header)
    manifest["kind"] = KIND
    manifest["files"] = list(records)
    return write_text_atomic(path, json.dumps(manifest, indent=2) + "\n", force=True)


class ManifestWriter:
    """Keep a transient run's manifest in step with its files at a linear total cost.

    Parameters
    ----------
    path : pathlib.Path
        The manifest.
    header : dict
        Its keys other than ``files``.
    records : dict
        File name → record of the files already complete (kept, in this order).
    """

    def __init__(self, path: Path, header: dict, records: dict) -> None:
        self.path, self.header = path, header
        self.records = dict(records)
        self.journal = journal_path(path)
        self.added = 0
        self._next_rewrite = 1

    def add(self, record: dict) -> None:
        """Record a completed file: one line appended to the journal (and a rewrite at 2^k)."""
        self.records[record["file"]] = record
        self.added += 1
        if self.added >= self._next_rewrite:
            self._next_rewrite *= 2
            self.write()
            return
        line = json.dumps(record, separators=(",", ":")) + "\n"
        try:
            with open(self.journal, "a", encoding="utf-8") as fh:
                fh.write(line)
                fh.flush()
                os.fsync(fh.fileno())
        except OSError as exc:
            raise OutputError(write_failure(self.journal, exc)) from None

    def write(self) -> Path:
        """Rewrite the manifest with every record, then remove the journal."""
        with held_signals():
            write_manifest(self.path, self.header, self.records.values())
            remove_quietly(self.journal)
        return self.path

    def close(self) -> None:
        """Write the manifest if a file was recorded since the last rewrite."""
        if self.journal.exists() or (self.added and not self.path.exists()):
            self.write()
