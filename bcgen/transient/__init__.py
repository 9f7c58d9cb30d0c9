"""Transient runs: orbit, insolation and greenhouse gases for every model year, streamed to files.

:func:`build_transient` writes each product of a transient spec as CF time
series on the model calendar, split into files of ``years_per_file`` model
years, plus a JSON manifest (:mod:`bcgen.transient.manifest`).

Model years and epochs
    Model year ``first_model_year + k`` has the orbit and greenhouse gases of
    the epoch ``start_epoch + k × acceleration`` years, towards ``end_epoch``
    (:class:`bcgen.spec.TransientSpec`). With acceleration 10 each model year
    advances the orbit by 10 years.

Streaming
    Each file is computed and written a chunk of model years at a time
    (:mod:`bcgen.transient.series`, :class:`bcgen.io.SeriesFile`), so the
    peak memory depends on the grid and the chunk size, not on the number of
    model years.

Interruption and re-runs
    A file is written under a temporary name and renamed into place when it
    is complete; Ctrl-C (or SIGTERM through the command line) deletes the
    temporary file, and the files completed before it stay valid and recorded
    in the manifest. A process killed outright (SIGKILL, a node failure) can
    leave a hidden temporary file ``.NAME.nc.<pid>.<hex>.tmp``: a re-run deletes those
    of its own files (and of its manifest) whose writing process is gone, before it
    writes anything (:func:`bcgen.io.staging.sweep_stale_temporaries`). A re-run
    resumes: it skips every file whose SHA-256 and parameters match its manifest
    record, builds the missing ones and rebuilds those of its own files (recorded in
    the manifest, unchanged since) whose settings or inputs changed -- only the
    products that depend on what changed (:data:`_DEPENDENCIES`). Other existing
    files are refused without ``force``; ``force`` rebuilds every file.

Failed writes
    A write the file system refuses (a full disk, a lost mount) raises
    :class:`~bcgen.errors.OutputError` naming the file ("no space left on the
    device" when the disk is full) and deletes its temporary file; the files
    completed before stay valid and recorded.
"""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from bcgen import __version__
from bcgen.cf.time_axes import time_axis
from bcgen.epochs import format_epoch
from bcgen.errors import OutputError, SpecError
from bcgen.experiment import BuildResult, manifest_name
from bcgen.io import SeriesFile, prepare_output_folder, sha256_of, write_failure
from bcgen.io.lock import FolderLock
from bcgen.io.paths import check_file_names, refuse_outputs_among_inputs, spec_inputs
from bcgen.io.signals import held_signals
from bcgen.io.staging import sweep_stale_temporaries
from bcgen.sizes import check_transient_step
from bcgen.spec import ExperimentSpec
from bcgen.transient.gases import GasTable, load_gas_table
from bcgen.transient.manifest import ManifestWriter, decide, read_manifest, records_by_file
from bcgen.transient.pipeline import ChunkProducer
from bcgen.transient.progress import Progress
from bcgen.transient.series import SERIES, RunContext, Series

__all__ = ["GasTable", "TransientBuildResult", "build_transient", "load_gas_table", "plan_files"]

#: Compute the next chunk in a worker thread while the main thread writes (see
#: :mod:`bcgen.transient.pipeline`); False computes and writes in turn in one thread.
THREADED = True


@dataclass
class TransientBuildResult(BuildResult):
    """What a transient build wrote (``files``: every file of the run, each with its status)."""

    transient: dict = field(default_factory=dict)

    @property
    def written(self) -> list[dict]:
        """Records of the files written by this run."""
        return [f for f in self.files if f.get("status") == "written"]

    @property
    def skipped(self) -> list[dict]:
        """Records of the files that were already complete and identical."""
        return [f for f in self.files if f.get("status") == "skipped"]


@dataclass(frozen=True)
class FileJob:
    """One file of the run: a product over a range of model years."""

    product: str
    first_year: int
    last_year: int
    file_name: str
    parameters: dict = field(compare=False)

    @property
    def n_years(self) -> int:
        """Model years in the file."""
        return self.last_year - self.first_year + 1


def plan_files(spec: ExperimentSpec) -> list[FileJob]:
    """Every file of a transient run, in the order they are built (by model years, then product)."""
    tr = spec.transient
    if tr is None:
        raise SpecError("plan_files needs a transient spec")
    inputs = _input_hashes(spec)
    settings = {product: _settings_sha256(spec, product) for product in spec.products}
    jobs = []
    for first, last in tr.file_ranges():
        e0, e1 = (float(e) for e in tr.epochs_of_model_years(np.array([first, last])))
        for product in spec.products:
            name = spec.file_name(product, first, last)
            parameters = {
                "settings_sha256": settings[product],
                "bcgen_version": __version__,
                "product": product,
                "file": name,
                "first_model_year": first,
                "last_model_year": last,
                "first_epoch_years_from_1950": e0,
                "last_epoch_years_from_1950": e1,
                "inputs_sha256": {key: inputs[key] for key in _depends_on(product)[1]
                                  if key in inputs},
            }
            jobs.append(FileJob(product, first, last, name, parameters))
    names = [j.file_name for j in jobs]
    if len(set(names)) != len(names):
        dupe = next(n for n in names if names.count(n) > 1)
        raise SpecError(
            f"output.file_pattern gives several files the name {dupe}; include "
            "{product} and {first_year} in the pattern"
        )
    return jobs


def build_transient(
    spec: ExperimentSpec,
    output_dir=None,
    *,
    force: bool = False,
    command: str | None = None,
    progress: bool | None = None,
) -> TransientBuildResult:
    """Build every file of a transient spec into ``output_dir``, skipping complete ones.

    Parameters
    ----------
    spec : ExperimentSpec
        A validated transient spec (``spec.transient`` set).
    output_dir : path, optional
        Folder for the files and the manifest (default: the spec's ``output.directory``).
    force : bool
        Rebuild every file, even those that are complete and up to date (without it
        the run resumes: see the module notes).
    command : str, optional
        The command line, recorded in each file's ``history``.
    progress : bool, optional
        Draw a progress bar on stderr; default: only when stderr is a terminal.

    Returns
    -------
    TransientBuildResult
        Each file of the run (``status`` "written" or "skipped"), the manifest
        path and a summary of the run in ``transient``.

    Raises
    ------
    OutputError
        An existing file that is not complete and identical (without ``force``),
        an unwritable folder; the message names the file.
    InputFileError
        A greenhouse-gas table that does not cover the run (naming file and age).
    """
    if spec.transient is None:
        raise SpecError("build_transient needs a spec with a 'transient' section")
    directory = Path(output_dir if output_dir is not None else spec.output.directory)
    check_transient_step(spec)
    created = not directory.exists()
    prepare_output_folder(directory)
    lock = FolderLock(directory)
    try:
        lock.acquire()
        return _build_locked(spec, directory, force, command, progress)
    finally:
        with held_signals():
            lock.release()
            if created and directory.is_dir() and not any(directory.iterdir()):
                directory.rmdir()


def _build_locked(spec, directory: Path, force: bool, command, progress):
    """:func:`build_transient` once the output folder's lock is held."""
    ctx = RunContext(spec, command=command)
    series = {p: SERIES[p](ctx) for p in spec.products if p in SERIES}
    unknown = [p for p in spec.products if p not in SERIES]
    if unknown:
        raise SpecError(
            f"product {unknown[0]!r} is not available in a transient run; expected "
            f"one of {', '.join(SERIES)}"
        )
    if "greenhouse_gases" in series:
        ctx.prepare(gases=True)  # read and check the table before anything is written
    jobs = plan_files(spec)
    manifest_path = directory / manifest_name(spec)
    check_file_names(directory, [j.file_name for j in jobs])
    refuse_outputs_among_inputs(
        [(str(directory / n), directory / n) for n in [j.file_name for j in jobs]
         + [manifest_path.name]], spec_inputs(spec))
    old = records_by_file(read_manifest(manifest_path, force=force))
    todo = {
        j.file_name: decide(
            directory / j.file_name,
            j.parameters,
            old.get(j.file_name),
            force=force,
            manifest_path=manifest_path,
        )
        for j in jobs
    }
    records = {j.file_name: old[j.file_name] for j in jobs if todo[j.file_name] == "skip"}
    records_of_run = _solar_and_spread(ctx)
    header = {**_manifest_header(ctx), **records_of_run}
    result = TransientBuildResult(
        directory, manifest=manifest_path, transient={**_summary(ctx, series), **records_of_run}
    )
    pending = [j for j in jobs if todo[j.file_name] == "build"]
    work, shares = _model_year_shares(pending)
    bar = Progress(work, f"{spec.experiment.name}: model years", enabled=progress)
    ctx.prepare(gases="greenhouse_gases" in series)  # inputs are read before the thread starts
    sweep_stale_temporaries(directory, [j.file_name for j in jobs] + [manifest_path.name])
    writer = _FileWriter(ctx, series, directory, manifest_path, header, records, bar, shares)
    try:
        with ChunkProducer(pending, series, threaded=THREADED) as producer:
            for message in producer:
                writer.handle(message)
                del message
    finally:
        with held_signals():  # a second interrupt waits until the clean-up is done
            writer.discard()
            writer.manifest.close()  # every completed file recorded, the journal folded in
            bar.close()
    result.files = [
        {**records[j.file_name], "status": "skipped" if todo[j.file_name] == "skip" else "written"}
        for j in jobs
    ]
    return result


def _model_year_shares(pending: list[FileJob]) -> tuple[int, dict[str, float]]:
    """Model years to build (each counted once) and each file's share of its years.

    The files of one range of model years (one per product) share its years, so
    the progress bar counts model years, not files times years.
    """
    by_range: dict[tuple[int, int], list[FileJob]] = {}
    for job in pending:
        by_range.setdefault((job.first_year, job.last_year), []).append(job)
    work = sum(last - first + 1 for first, last in by_range)
    shares = {j.file_name: 1.0 / len(group) for group in by_range.values() for j in group}
    return work, shares


class _FileWriter:
    """The main thread's side: writes the messages of :class:`ChunkProducer` into files.

    Each file is written through a temporary file (:class:`SeriesFile`); when it
    is complete its record goes into the manifest and then the file into place.
    """

    def __init__(
        self,
        ctx: RunContext,
        series: dict[str, Series],
        directory: Path,
        manifest_path: Path,
        header: dict,
        records: dict,
        bar: Progress,
        shares: dict[str, float] | None = None,
    ) -> None:
        self.ctx, self.series, self.directory = ctx, series, directory
        self.manifest_path, self.header, self.records, self.bar = (
            manifest_path,
            header,
            records,
            bar,
        )
        self.shares = shares or {}
        self.manifest = ManifestWriter(manifest_path, header, records)
        self.sf: SeriesFile | None = None
        self.step = 0

    def handle(self, message: tuple) -> None:
        """Act on one message: start a file, write a chunk, or finish the file.

        A failure of the file system or the netCDF library (``OSError``,
        ``RuntimeError``) becomes :class:`OutputError` naming the file, after its
        temporary file is deleted.
        """
        kind = message[0]
        try:
            if kind == "start":
                self.start(*message[1:])
            elif kind == "chunk":
                self.chunk(*message[1:])
            elif kind == "end":
                self.finish(message[1])
        except (OSError, RuntimeError) as exc:
            job = message[1] if kind in ("start", "end") else self.job
            text = write_failure(self.directory / job.file_name, exc)  # before the discard
            self.discard()
            raise OutputError(text) from None

    def start(self, job: FileJob, n_steps: int, first_bounds: np.ndarray) -> None:
        """Create the file and define its dimensions, coordinates and variables."""
        ctx, spec = self.ctx, self.ctx.spec
        series = self.series[job.product]
        self.sf = sf = SeriesFile(
            self.directory / job.file_name,
            compression_level=spec.output.compression_level,
            shuffle=spec.output.shuffle,
        )
        self.job, self.n_steps, self.step, self.variables = job, n_steps, 0, None
        sf.define_dimension("time", n_steps)
        sf.define_dimension("bnds", 2)
        # Units, calendar and the other attributes of the time axis from bcgen.cf.time_axes.
        axis = time_axis(first_bounds, ctx.calendar.name, ctx.reference_year)
        sf.define_variable("time", "f8", ("time",), dict(axis["time"].attrs))
        sf.define_variable("time_bnds", "f8", ("time", "bnds"))
        if series.gridded:
            _define_grid(sf, ctx)
        self.variables = series.define(sf)
        attrs = ctx.attributes(series.title, job.first_year, job.last_year)
        if series.gridded:
            # The cell bounds do not change in time: xarray reads the variables named in a
            # global "coordinates" attribute as coordinates, so that open_mfdataset keeps one
            # copy of them instead of repeating them along time (its default concatenates
            # every data variable).
            attrs["coordinates"] = " ".join(_grid_bounds(ctx))
        sf.set_attributes(attrs)

    def chunk(self, n_years: int, bounds: np.ndarray, values: dict) -> None:
        """Write the time steps and values of a chunk of model years."""
        sf, series = self.sf, self.series[self.job.product]
        # The time of a step is the middle of its bounds, as bcgen.cf.time_axis sets it.
        sf.write_chunk("time", self.step, bounds.mean(axis=1))
        sf.write_chunk("time_bnds", self.step, bounds)
        for name in list(values):
            series.write(sf, name, values.pop(name))
        self.step += bounds.shape[0]
        self.bar.advance(n_years * self.shares.get(self.job.file_name, 1.0))

    def finish(self, job: FileJob) -> None:
        """Close the file, record it in the manifest, then rename it into place."""
        sf = self.sf
        if self.step != self.n_steps:  # pragma: no cover - a bug, not a user error
            raise OutputError(f"{sf.path}: wrote {self.step} time steps, expected {self.n_steps}")
        sha = sf.close()
        e0 = job.parameters["first_epoch_years_from_1950"]
        e1 = job.parameters["last_epoch_years_from_1950"]
        record = {
            "file": job.file_name,
            "product": job.product,
            "description": self.series[job.product].description,
            "bytes": os.path.getsize(sf.tmp),
            "sha256": sha,
            "first_model_year": job.first_year,
            "last_model_year": job.last_year,
            "first_epoch": format_epoch(e0),
            "last_epoch": format_epoch(e1),
            "time_steps": self.n_steps,
            "variables": sorted(self.variables),
            "parameters": job.parameters,
        }
        # The record goes into the manifest before the file goes into place: an interruption
        # between the two leaves a record without its file, which a re-run builds again.
        self.manifest.add(record)
        sf.publish(force=True)
        self.records[job.file_name] = record
        self.sf = None

    def discard(self) -> None:
        """Delete the temporary file of an unfinished file, if any."""
        if self.sf is not None:
            self.sf.discard()
            self.sf = None


def _grid_bounds(ctx: RunContext) -> list[str]:
    """Names of the grid's cell-bounds variables (``lat_bnds``, ``lon_bnds``)."""
    grid_ds = ctx.grid.to_dataset()
    return [str(name) for name, var in grid_ds.variables.items() if "bnds" in var.dims]


def _define_grid(sf: SeriesFile, ctx: RunContext) -> None:
    grid_ds = ctx.grid.to_dataset()
    for dim, size in grid_ds.sizes.items():
        if dim != "bnds":
            sf.define_dimension(dim, size)
    for name, var in grid_ds.variables.items():
        sf.define_variable(name, var.dtype, var.dims, dict(var.attrs), data=var.values)


def _manifest_header(ctx: RunContext) -> dict:
    spec, tr = ctx.spec, ctx.transient
    table = tr.greenhouse_gas_table
    return {
        "experiment": spec.experiment.name,
        "bcgen_version": __version__,
        "spec_file": str(spec.path) if spec.path else None,
        "spec_sha256": spec.sha256,
        "created": ctx.created.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "transient": {
            "start_epoch": tr.start_epoch,
            "end_epoch": tr.end_epoch,
            "start_years_from_1950": tr.start_years_from_1950,
            "end_years_from_1950": tr.end_years_from_1950,
            "first_model_year": tr.first_model_year,
            "last_model_year": tr.last_model_year,
            "n_model_years": tr.n_model_years,
            "acceleration": tr.acceleration,
            "years_per_file": tr.years_per_file,
            "model_year_mapping": "model year first_model_year + k has the epoch "
            "start_epoch + k * acceleration years (towards end_epoch)",
            "greenhouse_gas_table": str(table.name) if table else None,
            "greenhouse_gas_interpolation": tr.greenhouse_gas_interpolation if table else None,
        },
        "orbit_solution": spec.orbit.solution,
        "solar_constant_wm2": spec.solar_constant_wm2,
        "calendar": {"name": ctx.calendar.name, "anchor": ctx.anchor_in_words},
        "time_units": f"days since {ctx.reference_year:04d}-01-01 00:00:00",
    }


def _solar_and_spread(ctx: RunContext) -> dict:
    """Record the solar constant through the run and the spread between orbital solutions.

    Both go into the manifest and the summary: the solar constant of the first and
    last model years with how it was obtained and its source, and the difference of
    the other orbital solutions from the chosen one (:func:`bcgen.spread.run_spread`).
    """
    from bcgen.spread import run_spread

    epochs = ctx.epochs(ctx.transient.model_years())
    s_first, s_last = (float(s) for s in ctx.solar_constant_at(epochs[[0, -1]]))
    solar = {**ctx.solar_constant_record, "value_wm2": s_first,
             "first_model_year_wm2": s_first, "last_model_year_wm2": s_last,
             "per_model_year": ("each model year has the solar constant of its own epoch "
                                "(variable solar_irradiance of the insolation files)"
                                if ctx.solar_constant_scaled else "constant")}
    spread = run_spread(ctx.orbit_at, epochs, solar_constant_at=ctx.solar_constant_at)
    return {"solar_constant": solar, "orbit_spread": spread}


def _summary(ctx: RunContext, series: dict[str, Series]) -> dict:
    tr = ctx.transient
    out = {
        "experiment": ctx.spec.experiment.name,
        "epoch": tr.label,
        "model_years": [tr.first_model_year, tr.last_model_year],
        "start_epoch": tr.start_epoch,
        "end_epoch": tr.end_epoch,
        "acceleration": tr.acceleration,
        "years_per_file": tr.years_per_file,
        "orbit_solution": ctx.spec.orbit.solution,
        "solar_constant_wm2": ctx.spec.solar_constant_wm2,
        "calendar": {"name": ctx.calendar.name, "anchor": ctx.anchor_in_words},
    }
    if "greenhouse_gases" in series:
        out["greenhouse_gases"] = series["greenhouse_gases"].method_text
    return out


#: What each product's files depend on: the spec sections (besides those every file
#: depends on, :data:`_SHARED_SECTIONS`) and the input files. A change elsewhere leaves the
#: product's files as they are (a new gas table rebuilds the gas files only).
_DEPENDENCIES: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "orbit": (("orbit",), ("orbit.table",)),
    "greenhouse_gases": (("greenhouse_gases", "transient.greenhouse_gas_table",
                          "transient.greenhouse_gas_interpolation"),
                         ("transient.greenhouse_gas_table",)),
    "month_table": (("orbit", "insolation"), ("orbit.table",)),
}
_INSOLATION = (("orbit", "solar_constant_wm2", "solar_constant_scaling", "grid", "insolation"),
               ("orbit.table", "grid.path"))
#: Spec sections every file depends on: what it is, its model years and time axis, how it
#: is written, its global attributes.
_SHARED_SECTIONS = ("experiment", "calendar", "output", "attributes", "transient.start_epoch",
                    "transient.end_epoch", "transient.first_model_year",
                    "transient.acceleration", "transient.years_per_file")


def _depends_on(product: str) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Spec sections and input files the files of ``product`` depend on."""
    sections, inputs = _DEPENDENCIES.get(product, _INSOLATION)
    return _SHARED_SECTIONS + sections, inputs


def _settings_sha256(spec: ExperimentSpec, product: str) -> str:
    """SHA-256 of the spec settings that ``product``'s files depend on (not the whole text).

    A comment or an unrelated setting changed in the spec leaves the file valid; the
    settings are compared by value (their ``repr``), so they do not depend on layout.
    """
    sections, _ = _depends_on(product)
    parts = []
    for dotted in sections:
        value = spec
        for name in dotted.split("."):
            value = getattr(value, name, None)
        parts.append(f"{dotted}={value!r}")
    return hashlib.sha256("\n".join(parts).encode()).hexdigest()


def _input_hashes(spec: ExperimentSpec) -> dict[str, str]:
    """SHA-256 of every input file the spec names (a changed input invalidates the files)."""
    paths = {
        "orbit.table": spec.orbit.table,
        "transient.greenhouse_gas_table": spec.transient.greenhouse_gas_table,
        "grid.path": spec.grid.path if spec.grid is not None and spec.grid.kind == "file" else None,
    }
    return {key: sha256_of(path) for key, path in paths.items() if path is not None}
