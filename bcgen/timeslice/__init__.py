"""The main job: an experiment spec in, every product it asks for out, with a manifest.

:func:`build_time_slice` resolves the spec once (:class:`~bcgen.timeslice.context.BuildContext`),
computes every product (:mod:`bcgen.timeslice.products`) before writing anything,
refuses to overwrite existing outputs without ``force`` before writing
anything, takes the output folder's lock (:class:`bcgen.io.lock.FolderLock`: one
writer per folder), writes every file and a JSON manifest (each file with its SHA-256
and what it holds) into a hidden staging folder inside the output folder, and
replaces the old set by the new one all at once (:func:`bcgen.io.staging.replace_all`),
so that a failure (disk full, a file that cannot be replaced) or an interrupt leaves
the output folder as it was, and the manifest always matches the folder. A transient
spec is built by :mod:`bcgen.transient`; :func:`bcgen.build` chooses between the two.
"""

from __future__ import annotations

import json
from pathlib import Path

from bcgen import (
    __version__,
    build,  # noqa: F401  (the public bcgen.build, for older imports)
)
from bcgen.experiment import BuildResult, manifest_name
from bcgen.io import sha256_of, write_netcdf, write_text_atomic
from bcgen.io.paths import check_file_names, refuse_outputs_among_inputs, spec_inputs
from bcgen.io.staging import output_set
from bcgen.sizes import check_timeslice
from bcgen.spec import ExperimentSpec
from bcgen.timeslice.context import BuildContext
from bcgen.timeslice.products import PRODUCT_MAKERS, Output, make_outputs

__all__ = ["PRODUCT_MAKERS", "BuildResult", "build_time_slice"]


def build_time_slice(spec: ExperimentSpec, output_dir=None, *, force: bool = False,
                     command: str | None = None) -> BuildResult:
    """Build every product of a time-slice spec into ``output_dir`` (default: ``output.directory``).

    The parameters and the result are those of :func:`bcgen.build`, which hands a time-slice
    spec here and a transient spec to :func:`bcgen.transient.build_transient`.
    """
    directory = Path(output_dir if output_dir is not None else spec.output.directory)
    check_timeslice(spec)  # what cannot fit in memory is refused before any work
    ctx = BuildContext(spec, command=command)
    outputs = make_outputs(ctx)
    manifest_path = directory / manifest_name(spec)
    names = [o.file_name for o in outputs] + [manifest_path.name]
    check_file_names(directory, names)
    refuse_outputs_among_inputs([(str(directory / n), directory / n) for n in names],
                                spec_inputs(spec))
    result = BuildResult(directory, context=ctx)
    if spec.orbit.expected is not None:
        result.orbit_checks = tuple(spec.orbit.expected.compare(ctx.orbit))
    encoding_options = {"compression_level": spec.output.compression_level,
                        "shuffle": spec.output.shuffle}
    # Every file is first written into a hidden staging folder and moved into place only
    # when all are complete, the old set moved aside and back on any failure
    # (bcgen.io.staging.replace_all): the folder holds the old set or the new one, whole.
    with output_set(directory, names, force=force,
                    previous=lambda: _previous_files(directory / manifest_path.name,
                                                     names)) as stage:
        for out in outputs:
            path = stage / out.file_name
            if out.dataset is not None:
                write_netcdf(out.dataset, path,
                             encoding=_encoding(out.dataset, **encoding_options))
            else:
                write_text_atomic(path, out.text)
            result.files.append(_file_record(path, out))
        _write_manifest(stage / manifest_path.name, ctx, result, False)
    result.manifest = manifest_path
    return result


def _previous_files(manifest: Path, names: list[str]) -> list[str]:
    """Files of the set an earlier build recorded in ``manifest`` that this one does not write.

    They are replaced with the rest (moved aside, then deleted), so that after a
    ``--force`` rebuild the folder holds the new set only and matches the new manifest.
    """
    try:
        data = json.loads(manifest.read_text(encoding="utf-8"))
        files = [f["file"] for f in data.get("files", []) if isinstance(f, dict)]
    except (OSError, ValueError, AttributeError, KeyError, TypeError):
        return []
    return [f for f in files if isinstance(f, str) and f not in names
            and Path(f).name == f and not f.startswith(".")]


def _encoding(dataset, compression_level: int, shuffle: bool) -> dict:
    enc = {}
    for name, var in dataset.data_vars.items():
        if var.dtype.kind == "f" and var.ndim > 0 and not name.endswith("_bnds"):
            enc[name] = {"zlib": compression_level > 0, "complevel": compression_level,
                         "shuffle": shuffle and compression_level > 0}
    return enc


def _file_record(path: Path, out: Output) -> dict:
    record = {"file": path.name, "product": out.product, "description": out.description,
              "bytes": path.stat().st_size, "sha256": sha256_of(path)}
    if out.dataset is not None:
        record["variables"] = sorted(str(v) for v in out.dataset.data_vars)
    return record


def _write_manifest(path: Path, ctx: BuildContext, result: BuildResult, force: bool) -> Path:
    o = ctx.orbit
    manifest = {
        "experiment": ctx.spec.experiment.name,
        "epoch": ctx.spec.epoch,
        "bcgen_version": __version__,
        "spec_file": str(ctx.spec.path) if ctx.spec.path else None,
        "spec_sha256": ctx.spec.sha256,
        "created": ctx.created.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "orbit": o.as_record(),
        "solar_constant_wm2": ctx.spec.solar_constant_wm2,
        "solar_constant": ctx.solar_constant_record,
        "orbit_spread": ctx.orbit_spread,
        "calendar": {"name": ctx.calendar.name, "anchor": ctx.anchor_in_words},
        "files": result.files,
    }
    if result.orbit_checks:
        manifest["expected_orbit_checks"] = [
            {"name": c.name, "expected": c.expected, "computed": c.computed,
             "tolerance": c.tolerance, "agrees": c.agrees} for c in result.orbit_checks]
    return write_text_atomic(path, json.dumps(manifest, indent=2) + "\n", force=force)
