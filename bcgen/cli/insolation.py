"""``bcgen insolation``: monthly-mean TOA insolation for an epoch at given latitudes.

Prints, for each latitude, the 12 monthly means (W m-2) over fixed-day months
(mean of the daily means, the PMIP1 convention) or fixed-angle months (exact
time mean over the fractional days each month spans), with the exact annual
mean, and a header (or JSON keys) giving the orbit with its conventions, the
solar constant, the calendar and its anchor, the month definition and the
daily method used.
"""

from __future__ import annotations

import argparse
import textwrap
import warnings

from bcgen import arguments
from bcgen.cli.common import (
    EPOCH_SOLUTION,
    EPOCH_SOLUTION_HELP,
    MONTH_OPTIONS,
    add_calendar_options,
    calendar_from_args,
    check_model_year,
    describe_orbit,
    json_text,
    latitude_value,
    orbit_for_epoch,
)
from bcgen.errors import ImplausibleValueWarning
from bcgen.insolation import (
    CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
    InsolationError,
    annual_mean_insolation_wm2,
    monthly_insolation,
)
from bcgen.orbit import PERIHELION_CONVENTIONS, OrbitalElements
from bcgen.solar_calendar.calendars import MONTH_ABBREVIATIONS, ModelCalendar

#: Command-line spelling of the daily methods → the Python API's.
DAILY_OPTIONS = {"midday": "midday", "day-average": "day_average"}

EPILOG = f"""\
examples:
  bcgen insolation 6ka --lat 90 65 0 -90
  bcgen insolation 6ka --lat 90 65 0 -90 --format json
  bcgen insolation 127ka --lat 65 --months fixed-angle --reference 1850CE
  bcgen insolation 0ka --lat 60 --solar-constant 1365 --daily-method day-average

Monthly values are W m-2 at the top of the atmosphere. fixed-day: the mean of
the daily means of the calendar month's days, each evaluated at the middle of
the day (t = n + 0.5) unless --daily-method day-average. fixed-angle: each
month spans the arc of true longitude of the reference orbit's calendar month,
and its value is the exact time mean over the fractional days it spans. The
annual column is the exact annual mean. Latitudes south are negative.

{textwrap.fill(EPOCH_SOLUTION_HELP, 80)}
"""


def register(subparsers) -> argparse.ArgumentParser:
    """Add the ``insolation`` subcommand."""
    parser = subparsers.add_parser(
        "insolation",
        help="monthly-mean TOA insolation for an epoch at given latitudes",
        description="Monthly-mean top-of-atmosphere insolation (W m-2) for an epoch, over "
                    "fixed-day or fixed-angle months, at the given latitudes.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("epoch", metavar="EPOCH",
                        help="one epoch such as 6ka, '127 ka BP', 21000BP or 1850CE (not a "
                             "range)")
    parser.add_argument("--lat", nargs="+", type=latitude_value, required=True, metavar="LAT",
                        help="latitudes in degrees north (south negative), e.g. --lat 90 65 0 -90")
    parser.add_argument("--months", choices=list(MONTH_OPTIONS), default="fixed-day",
                        help="month definition (default: fixed-day)")
    parser.add_argument("--solar-constant", type=float, metavar="W",
                        default=CMIP6_PICONTROL_SOLAR_CONSTANT_WM2,
                        help=f"solar constant at 1 au, W m-2 (default: "
                             f"{CMIP6_PICONTROL_SOLAR_CONSTANT_WM2}, the CMIP6 piControl total "
                             f"solar irradiance used by PMIP4; Matthes et al. 2017, GMD 10, "
                             f"2247-2302)")
    add_calendar_options(parser)
    parser.add_argument("--reference", metavar="EPOCH",
                        help="with --months fixed-angle: epoch of the reference orbit whose "
                             "fixed-day months define the arcs (default: 1950CE; PMIP4 "
                             "piControl is 1850CE)")
    parser.add_argument("--daily-method", choices=list(DAILY_OPTIONS), metavar="METHOD",
                        help="with --months fixed-day: daily values at midday (default; the "
                             "PMIP1 convention) or day-average (averaged over each day)")
    parser.add_argument("--year", type=int, default=1, metavar="N",
                        help="model year, which matters in leap-year calendars (default: 1)")
    parser.add_argument("--format", choices=("text", "json"), default="text",
                        help="text table (default) or JSON")
    return parser


def _orbit_record(orbit: OrbitalElements, solution: str) -> dict:
    return {
        "solution": solution,
        "eccentricity": float(orbit.eccentricity),
        "obliquity_deg": float(orbit.obliquity_deg),
        "perihelion_longitude_deg": float(orbit.perihelion_longitude_deg),
        "perihelion_longitude_convention": PERIHELION_CONVENTIONS["perihelion_longitude"],
        "sun_longitude_at_perihelion_deg": float(orbit.sun_longitude_at_perihelion_deg),
        "sun_longitude_at_perihelion_convention": (
            PERIHELION_CONVENTIONS["sun_longitude_at_perihelion"]
        ),
    }


def compute(args) -> tuple[dict, OrbitalElements, ModelCalendar]:
    """Everything the command prints, as a JSON-ready dictionary, with the orbit and calendar."""
    months = MONTH_OPTIONS[args.months]
    if months == "fixed_day" and args.reference is not None:
        raise InsolationError("--reference applies to --months fixed-angle only")
    if months == "fixed_angle" and args.daily_method is not None:
        raise InsolationError(
            "--daily-method applies to --months fixed-day only (fixed-angle months are exact "
            "time means)"
        )
    # The API's checks, under the options' names (bcgen.arguments: one rule for both).
    arguments.solar_constant_wm2(args.solar_constant, "--solar-constant")
    latitudes = arguments.latitudes_deg(args.lat, "--lat")
    calendar = calendar_from_args(args)
    check_model_year(calendar, args)
    orbit = orbit_for_epoch(args.epoch, "EPOCH", "insolation")
    reference = None
    reference_text = None
    if months == "fixed_angle":
        reference_text = args.reference or "1950CE"
        reference = orbit_for_epoch(reference_text, "--reference", "insolation")
    daily_method = DAILY_OPTIONS[args.daily_method or "midday"]
    with warnings.catch_warnings():  # already said above under the option's name
        warnings.filterwarnings("ignore", r"solar_constant_wm2: ", ImplausibleValueWarning)
        result = monthly_insolation(orbit, calendar, latitudes, args.solar_constant,
                                    months=months, reference=reference, year=args.year,
                                    daily_method=daily_method)
        annual = annual_mean_insolation_wm2(orbit, latitudes, args.solar_constant)
    epoch = float(orbit.years_from_1950)
    record = {
        "epoch": args.epoch,  # as given, like bcgen orbit
        "years_bp": -epoch + 0.0,  # + 0.0: no -0.0
        "years_from_1950": epoch,
        "quantity": "toa_incoming_shortwave_flux",
        "units": "W m-2",
        "orbit": _orbit_record(orbit, EPOCH_SOLUTION),
        "solar_constant_wm2": float(args.solar_constant),
        "calendar": calendar.name,
        "year": args.year,
        "anchor": {
            "kind": calendar.anchor.kind,
            "date": calendar.anchor.label,
            "day": calendar.anchor_day(args.year),
        },
        "month_definition": args.months,
        "month_averaging": result.averaging,
        "daily_method": daily_method if months == "fixed_day" else None,
        "reference_epoch": reference_text,
        "reference_orbit": (
            None if reference is None else _orbit_record(reference, EPOCH_SOLUTION)
        ),
        "months": list(range(1, 13)),
        "month_start_day": [float(v) for v in result.months.start_day],
        "month_length_days": [float(v) for v in result.months.length_days],
        "latitudes_deg": [float(v) for v in latitudes],
        "insolation_wm2": [[float(v) for v in row] for row in result.insolation_wm2],
        "annual_mean_wm2": [float(v) for v in annual],
    }
    return record, orbit, calendar


def format_text(record: dict, orbit_line: str, calendar_line: str) -> str:
    """Format the monthly means as a latitude × month table with a header of conventions."""
    lines = [
        f"# monthly-mean TOA insolation (W m-2) for {record['epoch']}, "
        f"{record['month_definition']} months",
        f"# orbit ({record['orbit']['solution']}): {orbit_line}",
        f"# solar constant: {record['solar_constant_wm2']} W m-2",
        f"# {calendar_line}",
        f"# monthly value: {record['month_averaging']}",
    ]
    if record["reference_epoch"] is not None:
        lines.append(f"# arcs of true longitude from the fixed-day months of "
                     f"{record['reference_epoch']}")
    lines.append("# month start (days after 1 January 00:00): "
                 + " ".join(f"{v:.2f}" for v in record["month_start_day"]))
    lines.append(f"{'lat':>7}" + "".join(f"{m:>8}" for m in MONTH_ABBREVIATIONS) + f"{'annual':>9}")
    for lat, row, annual in zip(record["latitudes_deg"], record["insolation_wm2"],
                                record["annual_mean_wm2"], strict=True):
        lines.append(f"{lat:>7.2f}" + "".join(f"{v:>8.2f}" for v in row) + f"{annual:>9.2f}")
    return "\n".join(lines)


def run(args) -> int:
    """Compute and print the monthly means."""
    record, orbit, calendar = compute(args)
    if args.format == "json":
        print(json_text(record))
        return 0
    calendar_line = (f"{calendar.describe()}; model year {args.year} "
                     f"({calendar.year_length_days(args.year):g} days), anchor at day "
                     f"{calendar.anchor_day(args.year):g}")
    print(format_text(record, describe_orbit(orbit), calendar_line))
    return 0
