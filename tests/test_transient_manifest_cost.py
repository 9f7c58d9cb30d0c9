"""The transient manifest at scale: its cost grows linearly with the number of files.

Appending a record per file to a journal and rewriting the whole manifest only after
the 1st, 2nd, 4th, 8th ... file and at the end makes the total bytes written
O(n): each rewrite after file 2^k writes 2^k records and the sum of a geometric series
is less than twice its last term (analytic). The manifest and its journal always
describe the files on disk, even after a kill.
"""

from __future__ import annotations

import json

import bcgen.transient.manifest as manifest_module
from bcgen.spec import load_spec
from bcgen.transient import build_transient
from bcgen.transient.manifest import journal_path, read_manifest


def _spec(folder, n_files):
    path = folder / f"m{n_files}.yaml"
    path.write_text(f"experiment: {{name: m{n_files}}}\ntransient: {{start_epoch: 6ka, "
                    f"end_epoch: {6000 - (n_files - 1)} BP, years_per_file: 1}}\n"
                    "products: [orbit]\n")
    return load_spec(path)


def test_manifest_rewrites_grow_logarithmically(tmp_path, monkeypatch):
    written = []
    real = manifest_module.write_manifest

    def counting(path, header, records):
        records = list(records)
        written.append(len(records))
        return real(path, header, records)

    monkeypatch.setattr(manifest_module, "write_manifest", counting)
    totals = {}
    for n in (50, 200):
        written.clear()
        build_transient(_spec(tmp_path, n), tmp_path / f"out{n}")
        totals[n] = sum(written)
        manifest = json.loads((tmp_path / f"out{n}" / f"m{n}_manifest.json").read_text())
        assert len(manifest["files"]) == n
        assert not journal_path(tmp_path / f"out{n}" / f"m{n}_manifest.json").exists()
    # Records written in full rewrites: below 3n (1+2+4+...+2^k < 2^(k+1) <= 2n, plus the
    # final rewrite of n); a rewrite after every file would write n(n+1)/2.
    assert totals[50] < 3 * 50 and totals[200] < 3 * 200
    assert totals[200] / totals[50] < 5  # four times the files, about four times the cost


def test_journal_and_manifest_are_read_together(tmp_path):
    out = tmp_path / "out"
    build_transient(_spec(tmp_path, 3), out)
    path = out / "m3_manifest.json"
    data = json.loads(path.read_text())
    # What a killed run leaves: the manifest of its first files and the journal of the rest.
    last = data["files"].pop()
    path.write_text(json.dumps(data))
    journal_path(path).write_text(json.dumps(last) + "\n" + '{"file": "cut sh')
    merged = read_manifest(path, force=False)
    assert [f["file"] for f in merged["files"]] == [f["file"] for f in data["files"]] + \
        [last["file"]]
    result = build_transient(_spec(tmp_path, 3), out)  # resumes: everything is complete
    assert len(result.skipped) == 3
