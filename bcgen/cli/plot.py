"""``bcgen plot``: figures of insolation, its anomaly, month lengths and the orbit in time."""

from __future__ import annotations

import argparse
import json
import re
from pathlib import Path

from bcgen.cli.common import MONTH_OPTIONS, latitude_value
from bcgen.errors import BcgenError

#: Figure kinds, with what each shows.
KINDS = {
    "insolation": "monthly-mean TOA insolation by latitude and month",
    "anomaly": "insolation minus that of a reference experiment (--reference)",
    "month-lengths": "fixed-day against fixed-angle month lengths",
    "orbit": "eccentricity, obliquity, precession index and summer-solstice insolation in time",
    "geography": "relief, ocean-mask changes and ice of a geography file from 'bcgen build'",
}

EPILOG = """\
kinds:
  insolation      monthly-mean TOA insolation by latitude and month (W m-2)
  anomaly         the same minus a reference experiment (--reference, required)
  month-lengths   fixed-day against fixed-angle month lengths (days)
  orbit           e, obliquity, e sin(perihelion) and summer-solstice insolation in time
  geography       a geography file from 'bcgen build': relief as the model sees it, the
                  ocean-mask changes from today, lakes, and the land-ice fraction

examples:
  bcgen plot insolation 6ka -o 6ka.png
  bcgen plot insolation 127ka --months fixed-angle -o 127ka-angle.pdf
  bcgen plot insolation 127ka --months fixed-angle --reference 1850CE -o 127ka-1850arcs.pdf
  bcgen plot anomaly 6ka --reference 0ka -o 6ka-minus-0ka.png
  bcgen plot anomaly configs/protocols/lig127k.yaml --reference configs/protocols/piControl.yaml
  bcgen build configs/demo.yaml -o demo-output
  bcgen plot anomaly demo-output/demo-late-perihelion_monthly_insolation_fixed_day_zonal10deg.nc \\
      --reference 1850CE
  bcgen plot month-lengths 127ka --reference 1850CE -o months-127ka.png
  bcgen plot orbit 800ka..0ka/1ka --lat 65 -65 -o orbit.pdf
  bcgen plot orbit 800ka..0ka/1ka --lat 65 --true-longitude-deg 120 -o orbit-120.pdf
  bcgen build configs/glacial_demo.yaml -o glacial
  bcgen plot geography glacial/glacial_demo_geography.nc -o glacial.png

SOURCE is an epoch (6ka, 1850CE), a range START..END/STEP (orbit), an
experiment spec (.yaml) or a monthly insolation file written by 'bcgen build'
(.nc). An epoch uses the Berger (1978) orbit, the noleap calendar with the
March equinox at 21 March 12:00 and S0 = 1360.747 W m-2 (CMIP6 piControl);
a spec or file carries its own. A reference epoch is computed with the
conventions of the source. Fixed-angle months span the arcs of true
longitude of the reference orbit's calendar months (default 1950CE).
Months run Jan..Dec left to right, latitudes south to north bottom to top,
ages from the past (left) to the present (right).

--reference is the experiment subtracted for 'anomaly', and the epoch of the
reference orbit of the fixed-angle months for 'month-lengths' and for
'insolation --months fixed-angle' of an epoch (as in 'bcgen months'; a spec or
file carries its own). --lat gives the latitudes of a computed field (default
every degree) or, for 'orbit', of the insolation panel (default 65): each
latitude at its own summer solstice (true longitude 90 in the north, 270 in the
south), or at --true-longitude-deg; the legend says which.
The format follows the suffix of -o (.png or .pdf); the default name is
KIND_SOURCE.png (anomaly: KIND_SOURCE_minus_REFERENCE.png) in the current
folder. An existing file is kept unless --force.
"""


def register(subparsers) -> argparse.ArgumentParser:
    """Add the ``plot`` subcommand."""
    parser = subparsers.add_parser(
        "plot",
        help="figures: insolation, anomaly, month lengths, orbit in time (needs bcgen[plot])",
        description="Draw a figure to PNG or PDF from an epoch, a range of epochs, an "
                    "experiment spec or a built file. Needs matplotlib: "
                    "pip install 'bcgen[plot]'.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("kind", metavar="KIND", choices=list(KINDS),
                        help=f"one of {', '.join(KINDS)}")
    parser.add_argument("source", metavar="SOURCE",
                        help="epoch (6ka), range (800ka..0ka/1ka), spec (.yaml) or built file "
                             "(.nc)")
    parser.add_argument("--reference", metavar="SOURCE",
                        help="anomaly: the experiment to subtract (epoch, spec or file); "
                             "month-lengths and fixed-angle insolation: epoch of the reference "
                             "orbit (default 1950CE)")
    parser.add_argument("--months", choices=list(MONTH_OPTIONS),
                        help="month definition of insolation and anomaly (default: fixed-day, "
                             "or the file's)")
    parser.add_argument("--lat", nargs="+", type=latitude_value, metavar="LAT",
                        help="latitudes in degrees north (south negative)")
    parser.add_argument("--true-longitude-deg", type=float, metavar="DEG",
                        help="orbit: the Sun's true longitude of the insolation panel, degrees "
                             "from the March equinox (default: each latitude's summer "
                             "solstice, 90 north, 270 south)")
    parser.add_argument("--calendar", metavar="NAME",
                        help="CF calendar of an epoch source (default: noleap)")
    parser.add_argument("-o", "--output", metavar="FILE",
                        help="output file, .png or .pdf (default: KIND_SOURCE.png)")
    parser.add_argument("--force", action="store_true", help="overwrite an existing file")
    parser.add_argument("--dpi", type=int, default=150, metavar="N",
                        help="resolution of a PNG, dots per inch (default: 150)")
    parser.add_argument("--format", choices=("text", "json"), default="text",
                        help="report the file written as text (default) or JSON")
    return parser


def default_output(args: argparse.Namespace) -> Path:
    """``KIND_SOURCE[_minus_REFERENCE][_MONTHS].png`` in the current folder."""
    parts = [args.kind, _slug(args.source)]
    if args.kind == "anomaly" and args.reference:
        parts += ["minus", _slug(args.reference)]
    if args.months:
        parts.append(args.months)
    return Path("_".join(parts) + ".png")


def _slug(source: str) -> str:
    """Reduce a source to characters safe in a file name (a file or spec by its stem)."""
    path = Path(source)
    stem = path.stem if path.suffix.lower() in (".yaml", ".yml", ".nc", ".nc4") else source
    slug = re.sub(r"[^A-Za-z0-9.+-]+", "_", stem.replace("..", "-to-").replace("/", "-by-"))
    return slug.strip("_") or "figure"


def _refuse(args: argparse.Namespace, option: str, kinds: tuple[str, ...]) -> None:
    value = getattr(args, option.lstrip("-").replace("-", "_"))
    if value is not None and args.kind not in kinds:
        raise BcgenError(f"{option} does not apply to 'bcgen plot {args.kind}'; it applies to "
                         f"{' and '.join(kinds)}")


def make_figure(args: argparse.Namespace):
    """Load the data of the requested figure and draw it; return (figure, description)."""
    from bcgen.plot import figures, sources

    _refuse(args, "--reference", ("anomaly", "month-lengths", "insolation"))
    _refuse(args, "--true-longitude-deg", ("orbit",))
    _refuse(args, "--months", ("insolation", "anomaly"))
    _refuse(args, "--lat", ("insolation", "anomaly", "orbit"))
    _refuse(args, "--calendar", ("insolation", "anomaly", "month-lengths"))
    if args.kind == "geography":
        for option in ("--reference", "--months", "--lat", "--calendar"):
            value = getattr(args, option.lstrip("-"))
            if value is not None:
                raise BcgenError(f"{option} does not apply to 'bcgen plot geography'")
        from bcgen.plot.geography import geography_figure, read_geography_file

        g = read_geography_file(args.source)
        return geography_figure(g), f"geography of {g['title']}"
    months = MONTH_OPTIONS[args.months] if args.months else None
    if args.lat is not None:
        bad = [v for v in args.lat if not -90.0 <= v <= 90.0]
        if bad:
            raise BcgenError(f"--lat: latitudes must be in [-90, 90] degrees north (south "
                             f"negative); got {bad[0]:g}")
        if args.kind != "orbit" and len(set(args.lat)) < 2:
            raise BcgenError("--lat: a field by latitude needs at least 2 latitudes, e.g. "
                             "--lat -90 -60 -30 0 30 60 90")
    if args.kind == "insolation":
        field = _insolation_field(args, months)
        return figures.insolation_figure(field), f"{field.label}, {field.month_text}"
    if args.kind == "anomaly":
        if args.reference is None:
            raise BcgenError("bcgen plot anomaly needs --reference SOURCE (the experiment to "
                             "subtract, e.g. --reference 0ka)")
        field, ref = sources.field_pair(args.source, args.reference, months, args.lat,
                                        args.calendar)
        return (figures.anomaly_figure(field, ref),
                f"{field.label} minus {ref.label}, {field.month_text}")
    if args.kind == "month-lengths":
        lengths = sources.month_lengths(args.source, args.reference, args.calendar)
        return figures.month_lengths_figure(lengths), \
            f"{lengths.label}, calendar {lengths.settings.calendar_text}"
    series = sources.orbit_series(args.source)
    lam = args.true_longitude_deg
    if lam is not None and not -360.0 <= lam <= 360.0:
        raise BcgenError(f"--true-longitude-deg: expected degrees from the March equinox "
                         f"(0 to 360), got {lam:g}")
    return figures.orbit_figure(series, args.lat or (65.0,), lam), series.label


def _insolation_field(args: argparse.Namespace, months):
    """Return the field of 'plot insolation' (``--reference`` sets fixed-angle arcs)."""
    from dataclasses import replace

    from bcgen.epochs import parse_epoch
    from bcgen.orbit import solve
    from bcgen.plot import sources

    if args.reference is None:
        return sources.monthly_field(args.source, months, args.lat, args.calendar)
    if months != "fixed_angle":
        raise BcgenError("--reference applies to 'bcgen plot insolation' with --months "
                         "fixed-angle (the epoch whose calendar months give the arcs)")
    kind = sources.source_kind(args.source)
    if kind != "epoch":
        where = ("insolation.reference_epoch in the spec" if kind == "spec"
                 else "the file's reference_orbit_epoch")
        raise BcgenError(f"--reference: {args.source} carries its own reference orbit "
                         f"({where}); --reference applies to an epoch source")
    try:
        parse_epoch(args.reference)
    except BcgenError:
        raise BcgenError(f"--reference: the reference orbit of fixed-angle months must be an "
                         f"epoch such as 1850CE, got {args.reference!r}") from None
    base = sources.monthly_field(args.source, months, args.lat, args.calendar)
    settings = replace(base.settings, reference_epoch=args.reference)
    orbit = solve(parse_epoch(args.source))
    return sources.compute_field(orbit, settings, months, base.latitude_deg, base.label)


def run(args: argparse.Namespace) -> int:
    """Draw the figure and write it; return the exit status."""
    from bcgen.plot import check_dpi, check_output, require_matplotlib, save_figure

    require_matplotlib()
    check_dpi(args.dpi)
    path = check_output(args.output or default_output(args), args.force)
    from bcgen.io.paths import refuse_outputs_among_inputs

    refuse_outputs_among_inputs([(f"-o {path}", path)],
                                [(f"{what} {s}", s) for what, s in (("SOURCE", args.source),
                                                                   ("--reference", args.reference))
                                 if s and Path(s).exists()])
    figure, description = make_figure(args)
    save_figure(figure, path, force=args.force, dpi=args.dpi)
    if args.format == "json":
        print(json.dumps({"file": str(path), "kind": args.kind, "source": args.source,
                          "reference": args.reference, "bytes": path.stat().st_size,
                          "description": description}, indent=2))
    elif args.quiet < 1:
        print(f"wrote {path} ({args.kind}: {description})")
    return 0
