"""``bcgen orbit``: the Earth's orbital elements for one or more epochs.

Prints e, ε, ϖ, ϖ + 180° and e·sin ϖ for each epoch, as a table for people
(units and conventions in the header), as JSON or as CSV for scripts.
"""

from __future__ import annotations

import argparse
import csv
import sys
import textwrap
import warnings

import numpy as np

from bcgen.cli.common import json_text
from bcgen.epochs import ACCEPTED_FORMS, count_epochs, epoch_labels, iter_epochs, parse_epochs
from bcgen.errors import LongComputationWarning, OrbitError
from bcgen.orbit import PERIHELION_CONVENTIONS, SOLUTIONS, OrbitalElements, solve

#: Output columns, in order: the JSON keys and the CSV header.
COLUMNS = (
    "epoch",
    "years_bp",
    "eccentricity",
    "obliquity_deg",
    "perihelion_longitude_deg",
    "sun_longitude_at_perihelion_deg",
    "precession_index",
    "solution",
)

#: Options that only the ``fixed`` solution takes: option → keyword of ``fixed.solve``.
FIXED_OPTIONS = {
    "--eccentricity": "eccentricity",
    "--obliquity-deg": "obliquity_deg",
    "--perihelion-deg": "perihelion_deg",
    "--perihelion-convention": "perihelion_convention",
}

EPILOG = f"""\
{textwrap.fill(f"epochs: {ACCEPTED_FORMS}. A bare number such as 6000 is refused.", 88)}

conventions:
  years_bp                         years before 1950 CE (negative after 1950)
  perihelion_longitude_deg         heliocentric longitude of perihelion from the moving
                                   March equinox (about 102 in 1950 CE); the number PMIP
                                   protocol tables print as "perihelion - 180"
  sun_longitude_at_perihelion_deg  geocentric longitude of the Sun at perihelion
                                   (perihelion_longitude_deg + 180, mod 360)
  precession_index                 e * sin(perihelion_longitude)

compare:
  --compare prints, for each epoch, the elements from every solution that needs no
  options of yours (berger1978, nbody) and from the chosen one, then each one's
  difference from the chosen one and what it means for daily-mean insolation: the
  largest difference over the year at 65N, 0 and 65S (W m-2, S0 = 1360.747).

examples:
  bcgen orbit 1850CE 6ka 21ka 127ka
  bcgen orbit 127ka 400ka 1Ma --solution nbody
  bcgen orbit 127ka 400ka 1Ma --compare
  bcgen orbit 130ka..115ka/1ka --format csv > orbit.csv
  bcgen orbit 6ka --solution table --table my_orbits.csv
  bcgen orbit 6ka --solution fixed --eccentricity 0.018682 --obliquity-deg 24.105 \\
      --perihelion-deg 0.87 --perihelion-convention perihelion_longitude
"""


def register(subparsers) -> argparse.ArgumentParser:
    """Add the ``orbit`` subcommand to the ``bcgen`` parser."""
    parser = subparsers.add_parser(
        "orbit",
        help="orbital elements (e, obliquity, perihelion) for epochs",
        description="Print the Earth's orbital elements for one or more epochs.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument(
        "epochs",
        nargs="+",
        metavar="EPOCH",
        help="an epoch such as 6ka, '21000 BP', 1850CE, '4050 BCE', or a range 130ka..115ka/1ka",
    )
    parser.add_argument(
        "--solution",
        choices=list(SOLUTIONS),
        default="berger1978",
        help="orbital solution (default: berger1978, the Berger 1978 series)",
    )
    parser.add_argument(
        "--table",
        metavar="FILE",
        help="CSV or NetCDF table of orbital elements, with --solution table",
    )
    parser.add_argument(
        "--format",
        choices=("text", "json", "csv"),
        default="text",
        help="output format (default: text)",
    )
    parser.add_argument(
        "--compare",
        action="store_true",
        help="print every solution's elements, their differences from the chosen one and "
        "their meaning in W m-2 (text or json)",
    )
    nbody = parser.add_argument_group("options of --solution nbody")
    nbody.add_argument("--dynamical-ellipticity", type=float, metavar="F",
                       help="the Earth's dynamical ellipticity as a multiple of today's "
                       "(default 1)")
    nbody.add_argument("--tidal-dissipation", type=float, metavar="F",
                       help="tidal dissipation of the Earth-Moon system as a multiple of "
                       "today's (default 1; 0 = none)")
    fixed = parser.add_argument_group("values for --solution fixed (all four required)")
    fixed.add_argument("--eccentricity", type=float, metavar="E")
    fixed.add_argument("--obliquity-deg", type=float, metavar="DEG")
    fixed.add_argument("--perihelion-deg", type=float, metavar="DEG")
    fixed.add_argument(
        "--perihelion-convention",
        choices=list(PERIHELION_CONVENTIONS),
        help="convention of --perihelion-deg (required; never guessed)",
    )
    fixed.add_argument("--idealized", action="store_true",
                       help="a deliberately non-Earth orbit: let an obliquity outside Earth's "
                       "range (21-25.5 degrees) through")
    return parser


#: Start of the messages of impossible explicit elements → the option that gave the value.
_FIXED_MESSAGES = {
    "eccentricity": "--eccentricity",
    "obliquity": "--obliquity-deg",
    "longitude of perihelion": "--perihelion-deg",
}


def name_fixed_option(message: str) -> str:
    """Prefix the message of an impossible explicit element with the option that gave it."""
    message = message.replace("pass idealized=True", "add --idealized")
    for start, option in _FIXED_MESSAGES.items():
        if message.startswith(start):
            return f"{option}: {message}"
    return message


def _solution_options(args: argparse.Namespace) -> dict:
    """Check that the options match the solution and return its keyword arguments."""
    fixed_given = {
        option: getattr(args, keyword)
        for option, keyword in FIXED_OPTIONS.items()
        if getattr(args, keyword) is not None
    }
    if args.solution == "fixed":
        missing = [option for option in FIXED_OPTIONS if option not in fixed_given]
        if missing:
            raise OrbitError(
                f"--solution fixed needs {', '.join(FIXED_OPTIONS)}; missing {', '.join(missing)}"
            )
        return {**{FIXED_OPTIONS[option]: value for option, value in fixed_given.items()},
                "idealized": args.idealized}
    if args.idealized:
        fixed_given["--idealized"] = True
    if fixed_given:
        raise OrbitError(
            f"{', '.join(fixed_given)}: only used with --solution fixed "
            f"(the solution is {args.solution})"
        )
    nbody_given = {
        option: value
        for option, value in (("--dynamical-ellipticity", args.dynamical_ellipticity),
                              ("--tidal-dissipation", args.tidal_dissipation))
        if value is not None
    }
    if nbody_given and args.solution != "nbody":
        raise OrbitError(
            f"{', '.join(nbody_given)}: only used with --solution nbody "
            f"(the solution is {args.solution})"
        )
    if args.solution == "nbody":
        return {option[2:].replace("-", "_"): value for option, value in nbody_given.items()}
    if args.solution == "table":
        if args.table is None:
            raise OrbitError("--solution table needs --table FILE (a CSV or NetCDF table)")
        return {"path": args.table}
    if args.table is not None:
        raise OrbitError(
            f"--table: only used with --solution table (the solution is {args.solution})"
        )
    return {}


def rows(labels: list[str], elements: OrbitalElements) -> list[dict]:
    """One dictionary per epoch with the keys of :data:`COLUMNS` (plain Python values)."""
    columns = {
        "years_bp": elements.years_bp,
        "eccentricity": elements.eccentricity,
        "obliquity_deg": elements.obliquity_deg,
        "perihelion_longitude_deg": elements.perihelion_longitude_deg,
        "sun_longitude_at_perihelion_deg": elements.sun_longitude_at_perihelion_deg,
        "precession_index": elements.precession_index,
    }
    lists = {
        name: (np.asarray(values, dtype=float) + 0.0).tolist() for name, values in columns.items()
    }
    return [
        {"epoch": label, **{name: lists[name][i] for name in lists}, "solution": elements.solution}
        for i, label in enumerate(labels)
    ]


def format_text(records: list[dict]) -> str:
    """Format the records as a table for people, with units and conventions in a header."""
    solution = records[0]["solution"] if records else ""
    lines = [
        f"# Earth's orbital elements, solution: {solution}",
        "# years BP: years before 1950 CE; angles in degrees",
        "# perihelion: heliocentric longitude of perihelion from the moving March equinox",
        "#   (PMIP tables: 'perihelion - 180'); Sun at perihelion = perihelion + 180",
        "# precession index: e * sin(perihelion)",
    ]
    width = max([len("epoch")] + [len(r["epoch"]) for r in records])
    lines.append(
        f"{'epoch':<{width}}  {'years BP':>10}  {'eccentricity':>12}  {'obliquity':>9}  "
        f"{'perihelion':>10}  {'Sun at perihelion':>17}  {'precession index':>16}"
    )
    for r in records:
        lines.append(
            f"{r['epoch']:<{width}}  {r['years_bp']:>10.10g}  {r['eccentricity']:>12.6f}  "
            f"{r['obliquity_deg']:>9.4f}  {r['perihelion_longitude_deg']:>10.4f}  "
            f"{r['sun_longitude_at_perihelion_deg']:>17.4f}  {r['precession_index']:>16.6f}"
        )
    return "\n".join(lines) + "\n"


def format_comparison(labels: list[str], comparisons: list[dict]) -> str:
    """Format :func:`bcgen.spread.compare_solutions` results as a table for people."""
    lines = [
        "# Earth's orbital elements from each solution, and each one's difference from the",
        "# chosen one (angles in degrees; perihelion: heliocentric, from the moving March",
        "# equinox). Insolation: largest difference over the year in daily-mean TOA",
        "# insolation (W m-2), and where in the year (true longitude of the Sun).",
    ]
    width = max([len("epoch")] + [len(label) for label in labels])
    name_width = 24
    lines.append(
        f"{'epoch':<{width}}  {'solution':<{name_width}}  {'eccentricity':>12}  "
        f"{'obliquity':>9}  {'perihelion':>10}  {'precession index':>16}"
    )
    for label, comp in zip(labels, comparisons, strict=True):
        for name, rec in comp["solutions"].items():
            lines.append(
                f"{label:<{width}}  {name:<{name_width}}  {rec['eccentricity']:>12.6f}  "
                f"{rec['obliquity_deg']:>9.4f}  {rec['perihelion_longitude_deg']:>10.4f}  "
                f"{rec['precession_index']:>16.6f}"
            )
        for name, diff in comp["differences"].items():
            lines.append(
                f"{label:<{width}}  {name:<{name_width}}  {diff['eccentricity']:>+12.6f}  "
                f"{diff['obliquity_deg']:>+9.4f}  {diff['perihelion_longitude_deg']:>+10.4f}  "
                f"{diff['precession_index']:>+16.6f}"
            )
            parts = [
                f"{_latitude(q['latitude_deg'])} {q['max_abs_daily_wm2']:.1f} "
                f"(at {q['at_true_longitude_deg']:.0f})"
                for q in diff["insolation"]
            ]
            lines.append(f"{'':<{width}}  {'':<{name_width}}  insolation: {', '.join(parts)}")
        for name, why in comp["not_compared"].items():
            lines.append(f"{label:<{width}}  {name:<{name_width}}  not compared: {why}")
    return "\n".join(lines) + "\n"


def _latitude(lat: float) -> str:
    return "0" if lat == 0 else f"{abs(lat):g}{'N' if lat > 0 else 'S'}"


def _run_compare(args, options, labels, years) -> int:
    from bcgen.spread import compare_solutions

    if args.format == "csv":
        raise OrbitError("--compare prints text or json; --format csv is not available with it")
    comparisons = [compare_solutions(t, args.solution, options) for t in np.concatenate(years)]
    if args.format == "json":
        records = [{"epoch": label, "years_bp": -float(t), **comp}
                   for label, t, comp in zip(labels, np.concatenate(years), comparisons,
                                             strict=True)]
        sys.stdout.write(json_text(records) + "\n")
    else:
        sys.stdout.write(format_comparison(labels, comparisons))
    return 0
#: Epochs computed and printed at a time: the memory stays that of one chunk however long
#: the range (``0ka..40000ka/1yr`` is 40 million epochs).
CHUNK_EPOCHS = 100_000


def run(args: argparse.Namespace) -> int:
    """Compute and print the orbital elements for ``args.epochs``, a chunk of epochs at a time."""
    options = _solution_options(args)
    if args.compare:
        labels: list[str] = []
        years: list[np.ndarray] = []
        for text in args.epochs:
            years.append(parse_epochs(text))
            labels.extend(epoch_labels(text))
        return _run_compare(args, options, labels, years)
    total = sum(count_epochs(text) for text in args.epochs)  # every epoch checked up front
    chunks = (chunk for text in args.epochs for chunk in iter_epochs(text, CHUNK_EPOCHS))
    if total <= CHUNK_EPOCHS:  # one piece: the layout of the text table fits every label
        labels, years = [], []
        for y, lab in chunks:
            years.append(y)
            labels.extend(lab)
        chunks = iter([(np.concatenate(years), labels)])
    out = sys.stdout
    first = True
    warned: set[type] = set()
    for years, labels in chunks:
        caught = []
        with warnings.catch_warnings():
            warnings.simplefilter("always")
            warnings.showwarning = _keep_for_later(caught)
            try:
                elements = solve(years, args.solution, **options)
            except OrbitError as exc:
                if args.solution != "fixed":
                    raise
                raise OrbitError(name_fixed_option(str(exc))) from None
        for message, category, filename, lineno in caught:  # one of each kind per range
            if category not in warned:
                warned.add(category)
                warnings.warn_explicit(message, category, filename, lineno)
        records = rows(labels, elements)
        if args.format == "json":
            body = json_text(records)[2:-2]  # the records without the list's brackets
            out.write(("[\n" if first else ",\n") + body)
        elif args.format == "csv":
            writer = csv.DictWriter(out, fieldnames=COLUMNS, lineterminator="\n")
            if first:
                writer.writeheader()
            writer.writerows(records)
        else:
            text = format_text(records)
            out.write(text if first else text.split("\n", 6)[6])  # the header once
        first = False
    if args.format == "json":
        out.write("\n]\n" if not first else "[]\n")
    return 0


def _keep_for_later(caught: list):
    """Return a ``showwarning`` that keeps warnings in ``caught``, those of long work aside.

    A warning that work will take minutes is shown at once, before the work, not after it.
    """
    show_now = warnings.showwarning

    def keep(message, category, filename, lineno, file=None, line=None) -> None:
        if issubclass(category, LongComputationWarning):
            show_now(message, category, filename, lineno, file, line)
        else:
            caught.append((message, category, filename, lineno))

    return keep
