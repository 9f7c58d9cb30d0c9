"""``bcgen convert``: model output from fixed-day months to fixed-angle months.

Reads one NetCDF file or a multi-file set of monthly (fixed-day) or daily means, and
writes the means over the fixed-angle months of the run's orbit (or, with
``--to fixed-day``, back from fixed-angle months to the calendar's months). See
:mod:`bcgen.convert` for the method and the rules.
"""

from __future__ import annotations

import argparse
import collections
import contextlib
import sys

from bcgen.cli.common import json_text
from bcgen.errors import BcgenError, CalendarError, OrbitError
from bcgen.orbit.elements import PERIHELION_CONVENTIONS

#: A progress bar appears (on a terminal only) for conversions longer than this.
PROGRESS_MIN_SECONDS = 1.0

EPILOG = """\
examples:
  bcgen convert tas_Amon_midHolocene_*.nc -o tas_fixed_angle.nc --epoch 6ka
  bcgen convert pr_day_lig127k.nc -o pr_fixed_angle.nc --spec configs/lig127k.yaml
  bcgen convert clim.nc -o clim_fa.nc --eccentricity 0.018682 --obliquity-deg 24.105 \\
      --perihelion-deg 0.87 --perihelion-convention perihelion_longitude
  bcgen convert big_*.nc -o out.nc --epoch 21ka --scheduler tcp://127.0.0.1:8786
  bcgen convert tas_Amon_deglaciation_*.nc -o fixed_angle/ --spec deglaciation.yaml
  bcgen convert clim.nc -o clim_fa.nc --epoch 6ka --format json   # report as JSON

Monthly means are interpolated by Killworth (1996) (or Epstein 1991 for climatologies)
and integrated exactly over the fractional-day fixed-angle months; daily means are
averaged exactly. The calendar comes from the input file; the reference orbit
defaults to 1950 CE and the March equinox to 21 March 12:00 (PMIP protocols).
"""


def register(subparsers) -> argparse.ArgumentParser:
    """Add the ``convert`` subcommand."""
    from bcgen.convert.aggregate import DEFAULT_MIN_VALID_FRACTION
    from bcgen.convert.interpolation import METHODS

    p = subparsers.add_parser(
        "convert",
        help="convert model output from fixed-day to fixed-angle months",
        description="Convert monthly or daily model output from fixed-day (calendar) months "
                    "to fixed-angle months of the run's orbit.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("inputs", nargs="+", metavar="INPUT", help="NetCDF file(s), one time series")
    p.add_argument("-o", "--output", required=True, metavar="OUTPUT",
                   help="NetCDF file to write (with a transient spec: a folder that receives "
                        "one file per input file, named like it)")
    orbit = p.add_argument_group("orbit of the run (one of)")
    orbit.add_argument("--spec", metavar="SPEC", help="experiment spec (YAML): orbit, calendar "
                       "anchor and reference orbit; a transient spec gives each model year "
                       "its own orbit")
    orbit.add_argument("--epoch", metavar="EPOCH", help="epoch such as 6ka or 127ka (Berger 1978)")
    orbit.add_argument("--eccentricity", type=float, metavar="E", help="explicit eccentricity")
    orbit.add_argument("--obliquity-deg", type=float, metavar="O", help="explicit obliquity, deg")
    orbit.add_argument("--perihelion-deg", type=float, metavar="P",
                       help="explicit longitude of perihelion, deg, in --perihelion-convention")
    orbit.add_argument("--perihelion-convention", choices=tuple(PERIHELION_CONVENTIONS),
                       metavar="NAME", help="convention of --perihelion-deg: "
                       + "; ".join(f"{k}: {v}" for k, v in PERIHELION_CONVENTIONS.items()))
    orbit.add_argument("--idealized", action="store_true",
                       help="with explicit elements, a deliberately non-Earth orbit: let an "
                       "obliquity outside Earth's range (21-25.5 degrees) through")
    p.add_argument("--reference", metavar="EPOCH",
                   help="epoch of the reference orbit (default: the spec's, else 1950CE)")
    p.add_argument("--equinox", metavar='"MM-DD HH:MM"',
                   help="date and time of the March equinox in the model calendar (default: "
                        "the spec's, else 03-21 12:00)")
    p.add_argument("--method", choices=tuple(METHODS), default="killworth1996",
                   help="interpolation of monthly means (default: killworth1996)")
    p.add_argument("--to", choices=("fixed-angle", "fixed-day"), default="fixed-angle",
                   help="target months (default: fixed-angle; fixed-day reads fixed-angle "
                        "months from the time bounds and needs no orbit)")
    p.add_argument("--cycle", choices=("auto", "climatology", "series"), default="auto",
                   help="treat the input as a repeating year or a series (default: auto)")
    p.add_argument("--min-valid-fraction", type=float, default=DEFAULT_MIN_VALID_FRACTION,
                   metavar="F", help="least covered fraction of a month with missing data "
                   f"(default: {DEFAULT_MIN_VALID_FRACTION:g})")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="address of a running dask.distributed scheduler to compute on")
    p.add_argument("--force", action="store_true", help="overwrite OUTPUT if it exists")
    p.add_argument("--format", choices=("text", "json"), default="text",
                   help="report the file written as a text line (default) or as JSON (file, "
                        "bytes, months, variables and the conversion's metadata)")
    return p


def _explicit(args) -> bool:
    return any(v is not None for v in (args.eccentricity, args.obliquity_deg,
                                       args.perihelion_deg, args.perihelion_convention))


def _orbit_and_calendar(args):
    """(orbit, reference, anchor, calendar name) from --spec, --epoch or explicit elements."""
    from bcgen.epochs import parse_epoch
    from bcgen.orbit import solve
    from bcgen.solar_calendar.calendars import parse_anchor

    given = [name for name, on in (("--spec", args.spec is not None),
                                   ("--epoch", args.epoch is not None),
                                   ("explicit elements", _explicit(args))) if on]
    if len(given) != 1:
        raise OrbitError("give the run's orbit by exactly one of --spec, --epoch or "
                         "--eccentricity/--obliquity-deg/--perihelion-deg/--perihelion-convention"
                         + (f" (got {', '.join(given)})" if given else ""))
    if args.idealized and not _explicit(args):
        raise OrbitError("--idealized goes with explicit elements (--eccentricity, "
                         "--obliquity-deg, ...), not with --spec or --epoch")
    reference = anchor = calendar = None
    if args.spec is not None:
        from bcgen.experiment import Experiment
        from bcgen.spec import load_spec

        experiment = Experiment(load_spec(args.spec))
        if experiment.spec.transient is not None:
            from bcgen.convert.api import transient_orbits

            orbit = transient_orbits(experiment)  # each model year's orbit
        else:
            orbit = experiment.orbit
        reference = experiment.reference_orbit
        anchor, calendar = experiment.calendar.anchor, experiment.calendar.name
    elif args.epoch is not None:
        orbit = solve(parse_epoch(args.epoch))
    else:
        missing = [opt for opt, v in (("--eccentricity", args.eccentricity),
                                      ("--obliquity-deg", args.obliquity_deg),
                                      ("--perihelion-deg", args.perihelion_deg),
                                      ("--perihelion-convention", args.perihelion_convention))
                   if v is None]
        if missing:
            raise OrbitError(f"explicit elements need {', '.join(missing)} as well")
        from bcgen.cli.orbit import name_fixed_option

        try:
            orbit = solve(None, "fixed", eccentricity=args.eccentricity,
                          obliquity_deg=args.obliquity_deg, perihelion_deg=args.perihelion_deg,
                          perihelion_convention=args.perihelion_convention,
                          idealized=args.idealized)
        except OrbitError as exc:
            raise OrbitError(name_fixed_option(str(exc))) from None
    if args.reference is not None:
        reference = solve(parse_epoch(args.reference))
    if args.equinox is not None:
        anchor = parse_anchor(args.equinox, "march_equinox", source="--equinox")
    return orbit, reference, anchor, calendar


@contextlib.contextmanager
def _scheduler(address: str | None):
    if address is None:
        yield None
        return
    try:
        from distributed import Client
    except ImportError:
        raise BcgenError("--scheduler needs the 'distributed' package "
                         "(pip install 'bcgen[distributed]')") from None
    try:
        client = Client(address, timeout="10s")
    except (OSError, TimeoutError) as exc:
        raise BcgenError(f"--scheduler: cannot reach a dask scheduler at {address} "
                         f"({' '.join(str(exc).split())})") from None
    try:
        yield client
    finally:
        client.close()


def _progress(enabled: bool):
    if not enabled:
        return contextlib.nullcontext()
    from dask.diagnostics import ProgressBar

    return ProgressBar(minimum=PROGRESS_MIN_SECONDS, out=sys.stderr)


def run(args) -> int:
    """Open, convert and write."""
    from bcgen.convert.api import to_fixed_angle_months, to_fixed_day_months
    from bcgen.convert.io import open_inputs, write_output
    from bcgen.io.paths import refuse_outputs_among_inputs
    from bcgen.sizes import check_input_count

    check_input_count(len(args.inputs))  # before any input is looked at
    refuse_outputs_among_inputs(
        [(f"-o {args.output}", args.output)],
        [(f"input {p}", p) for p in args.inputs]
        + ([(f"--spec {args.spec}", args.spec)] if args.spec else []))
    from bcgen.arguments import fraction

    fraction(args.min_valid_fraction, "--min-valid-fraction")
    cyclic = {"auto": None, "climatology": True, "series": False}[args.cycle]
    if args.to == "fixed-angle":
        orbit, reference, anchor, calendar = _orbit_and_calendar(args)
    elif args.spec or args.epoch or _explicit(args):
        raise OrbitError("--to fixed-day reads the months from the input's time bounds; "
                         "give no orbit")
    if args.to == "fixed-angle" and callable(orbit):
        return _run_transient(args, orbit, reference, anchor, calendar, cyclic)
    ds, label = open_inputs(args.inputs)
    with ds:
        if args.to == "fixed-angle":
            try:
                out = to_fixed_angle_months(ds, orbit, reference=reference, anchor=anchor,
                                            calendar=calendar, method=args.method,
                                            cyclic=cyclic,
                                            min_valid_fraction=args.min_valid_fraction,
                                            source=label)
            except CalendarError as exc:
                # An anchor that exists in no year of the file's calendar (02-30 in noleap)
                # is found only once the calendar is read: name the option that gave it.
                if args.equinox is None or not str(exc).startswith("anchor date"):
                    raise
                raise CalendarError(f"--equinox: {exc}") from None
        else:
            out = to_fixed_day_months(ds, method=args.method, cyclic=cyclic,
                                      min_valid_fraction=args.min_valid_fraction, source=label)
        with _scheduler(args.scheduler) as client:
            show = sys.stderr.isatty() and client is None and not args.quiet
            with _progress(show):
                path = write_output(out, args.output, force=args.force)
    dim = _time_dim(out)
    names = [str(k) for k, v in out.data_vars.items()
             if dim in v.dims and k != out[dim].attrs.get("bounds")
             and k != out[dim].attrs.get("climatology")]
    if args.format == "json":
        print(json_text(_report(args, path, out, dim, names)))
    elif not args.quiet:
        print(f"wrote {path}: {out.sizes[dim]} {args.to} months of {', '.join(names)} "
              f"({out.attrs.get('month_conversion_method')})")
    return 0


#: Model years read on each side of an input file's years when it is converted: each
#: month of the Killworth (1996) system, a_{i-1}/8 + 3 a_i/4 + a_{i+1}/8 = m_i, feels a
#: change of m at distance k months by a factor of about (3 - 2√2)^k ≈ 0.17^k, so 12
#: months leave the result as if the whole run had been converted at once, to about
#: 1e-9 of the month-to-month signal (far below float32 rounding).
MARGIN_YEARS = 1


def _run_transient(args, orbit, reference, anchor, calendar, cyclic) -> int:
    """Convert a transient run's files, each model year with its orbit; one output per input.

    ``-o`` names a folder; each input file gives the file of the same name there, with
    the fixed-angle months of the model years the input holds. The files are read as
    one series (so months that straddle two files are whole) and converted a file at a
    time, each with :data:`MARGIN_YEARS` model years of the neighbouring files.
    """
    from pathlib import Path

    import numpy as np

    from bcgen.convert.io import open_series
    from bcgen.errors import OutputError
    from bcgen.io.paths import refuse_outputs_among_inputs

    if cyclic:
        raise BcgenError("--spec: a transient run's output is a series; --cycle climatology "
                         "does not apply")
    folder = Path(args.output)
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"{folder}: with a transient spec, -o names a folder for one output "
                          "file per input file; this is a file")
    written = []
    with open_series(args.inputs) as series:  # checks each file and the joins between them
        dim = series.dim
        targets = [folder / path.name for path in series.paths]
        refuse_outputs_among_inputs([(str(t), t) for t in targets],
                                    [(f"input {p}", p) for p in series.paths]
                                    + [(f"--spec {args.spec}", args.spec)])
        years = np.array([d.year for d in series.times()])
        edges = np.concatenate([[0], np.cumsum(series.counts)])
        with _scheduler(args.scheduler) as client, _output_set(folder, targets,
                                                               args.force) as stage:
            _convert_each(args, series, years, edges, [stage / t.name for t in targets],
                          orbit, reference, anchor, calendar, client, written)
    written = [(folder / path.name, out) for path, out in written]
    names = [str(k) for k, v in written[0][1].data_vars.items()
             if dim in v.dims and k != written[0][1][dim].attrs.get("bounds")]
    if args.format == "json":
        print(json_text([_report(args, path, out, dim, names) for path, out in written]))
    elif not args.quiet:
        for path, out in written:
            print(f"wrote {path}: {out.sizes[dim]} {args.to} months of {', '.join(names)} "
                  f"({out.attrs.get('month_conversion_method')}, each model year's orbit)")
    return 0


@contextlib.contextmanager
def _output_set(folder, targets, force: bool):
    """Stage the files of a multi-file conversion and move them into ``folder`` all at once.

    The folder is locked for the run (:class:`bcgen.io.lock.FolderLock`: a second run
    into it is refused, naming this one); the files are written into a hidden staging
    folder inside it, and moved in as one set only when every one is complete
    (:func:`bcgen.io.staging.replace_all`, which moves the old files aside and back on
    any failure). Yields the staging folder. An error names the file where it was going.
    """
    from bcgen.errors import OutputError
    from bcgen.io.paths import check_file_names
    from bcgen.io.staging import output_set

    names = [t.name for t in targets]
    twice = sorted(n for n, count in collections.Counter(names).items() if count > 1)
    if twice:
        raise OutputError(f"two input files are named {twice[0]}: each gives the file of its "
                          f"name in {folder}; rename one")
    check_file_names(folder, names)
    with output_set(folder, names, force=force) as stage:
        yield stage


def _convert_each(args, series, years, edges, targets, orbit, reference, anchor, calendar,
                  client, written) -> None:
    """Convert and write the model years of each input file (see :func:`_run_transient`)."""
    import numpy as np

    from bcgen.convert.api import to_fixed_angle_months
    from bcgen.convert.io import write_output

    for i, target in enumerate(targets):
        y0, y1 = int(years[edges[i]]), int(years[edges[i + 1] - 1])
        window = np.flatnonzero((years >= y0 - MARGIN_YEARS) & (years <= y1 + MARGIN_YEARS))
        part = series.window(int(window[0]), int(window[-1]) + 1, own=i)
        out = to_fixed_angle_months(part, orbit, reference=reference, anchor=anchor,
                                    calendar=calendar, method=args.method, cyclic=False,
                                    min_valid_fraction=args.min_valid_fraction,
                                    source=series.label,
                                    model_years=(y0, y1))  # and their orbits recorded
        out.attrs["month_conversion_input_file"] = series.paths[i].name
        show = sys.stderr.isatty() and client is None and not args.quiet
        with _progress(show):
            written.append((write_output(out, target, force=args.force), out))


#: Global attributes of the output that the JSON report repeats.
_REPORTED_PREFIXES = ("month_conversion_", "orbit_", "reference_orbit_")


def _report(args, path, out, dim: str, names: list[str]) -> dict:
    """Return what ``--format json`` prints: the file written and the conversion's metadata."""
    def plain(value):
        return value.item() if hasattr(value, "item") else value

    return {
        "file": str(path),
        "bytes": path.stat().st_size,
        "inputs": [str(p) for p in args.inputs],
        "to": args.to,
        "months": int(out.sizes[dim]),
        "variables": names,
        "calendar": out[dim].encoding.get("calendar") or out[dim].attrs.get("calendar"),
        "metadata": {k: plain(v) for k, v in out.attrs.items()
                     if k.startswith(_REPORTED_PREFIXES)},
    }


def _time_dim(ds) -> str:
    from bcgen.cf.reader import find_time_dim

    return find_time_dim(ds, "output")
