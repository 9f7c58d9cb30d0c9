"""``bcgen months``: fixed-angle month boundaries of a model year for an epoch.

Prints, for each of the 12 months, the fixed-angle boundaries (fractional days
after 1 January 00:00 of the model year), the Sun's true longitude at the start
of the month and the calendar's fixed-day month for comparison.
"""

from __future__ import annotations

import argparse
import textwrap

from bcgen.cli.common import (
    EPOCH_SOLUTION,
    EPOCH_SOLUTION_HELP,
    add_calendar_options,
    calendar_from_args,
    check_model_year,
    describe_orbit,
    json_text,
    orbit_for_epoch,
)
from bcgen.solar_calendar.calendars import MONTH_ABBREVIATIONS
from bcgen.solar_calendar.months import MonthTable, fixed_angle_months

EPILOG = f"""\
examples:
  bcgen months 6ka
  bcgen months 127ka --reference 1850CE --format json
  bcgen months 21ka --calendar 360_day --equinox "03-21 00:00"
  bcgen months 6ka --perihelion-date "01-03 00:00"

Boundaries are fractional days after 1 January 00:00 of the model year; a month
that wraps the start of the year has a negative start or an end beyond the year.
The true longitude of the Sun is geocentric: 0 at the March equinox, 90 deg at
the June solstice. Each fixed-angle month spans the same arc of true longitude
as the calendar's fixed-day month in the reference orbit.

{textwrap.fill(EPOCH_SOLUTION_HELP, 80)}
"""


def register(subparsers) -> argparse.ArgumentParser:
    """Add the ``months`` subcommand."""
    parser = subparsers.add_parser(
        "months",
        help="fixed-angle month boundaries for an epoch",
        description="Fixed-angle month boundaries of a model year for an epoch, with the "
        "calendar's fixed-day months for comparison.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument(
        "epoch",
        metavar="EPOCH",
        help="one epoch such as 6ka, '127 ka BP', 21000BP or 1850CE (not a range)",
    )
    add_calendar_options(parser)
    parser.add_argument(
        "--reference",
        default="1950CE",
        metavar="EPOCH",
        help="epoch of the reference orbit whose fixed-day months define the "
        "arcs (default: 1950CE; PMIP4 piControl is 1850CE)",
    )
    parser.add_argument(
        "--year",
        type=int,
        default=1,
        metavar="N",
        help="model year, which matters in leap-year calendars (default: 1)",
    )
    parser.add_argument(
        "--format",
        choices=("text", "json"),
        default="text",
        help="text table (default) or JSON list of 12 month records",
    )
    return parser


def format_text(table: MonthTable, header: list[str]) -> str:
    """Format the month table as aligned text under a header of conventions."""
    lines = [f"# {line}" for line in header]
    lines.append(
        f"{'month':<6}{'start_day':>12}{'end_day':>12}{'length_days':>13}"
        f"{'start_true_longitude_deg':>26}{'fixed_day_start_day':>21}{'fixed_day_length_days':>23}"
    )
    lines.append(
        f"{'':<6}{'(days)':>12}{'(days)':>12}{'(days)':>13}{'(deg)':>26}{'(days)':>21}"
        f"{'(days)':>23}"
    )
    for k in range(12):
        lines.append(
            f"{k + 1:>2} {MONTH_ABBREVIATIONS[k]:<3}"
            f"{table.start_day[k]:>12.4f}{table.end_day[k]:>12.4f}"
            f"{table.length_days[k]:>13.4f}{table.start_true_longitude_deg[k]:>26.4f}"
            f"{table.fixed_day_start_day[k]:>21.4f}{table.fixed_day_length_days[k]:>23.4f}"
        )
    lines.append(
        f"{'sum':<6}{'':>24}{table.length_days.sum():>13.4f}{'':>26}{'':>21}"
        f"{table.fixed_day_length_days.sum():>23.4f}"
    )
    return "\n".join(lines)


def run(args) -> int:
    """Compute and print the month table."""
    calendar = calendar_from_args(args)
    check_model_year(calendar, args)
    orbit = orbit_for_epoch(args.epoch, "EPOCH", "months")
    reference = orbit_for_epoch(args.reference, "--reference", "months")
    table = fixed_angle_months(orbit, calendar, reference=reference, year=args.year)
    if args.format == "json":
        print(json_text(table.to_records()))
        return 0
    epoch = float(orbit.years_from_1950) if orbit.years_from_1950 is not None else 0.0
    ref_epoch = float(reference.years_from_1950) if reference.years_from_1950 is not None else 0.0
    header = [
        f"fixed-angle months for {args.epoch} ({epoch:+g} years from 1950 CE); arcs of true "
        f"longitude from the fixed-day months of the reference orbit {args.reference} "
        f"({ref_epoch:+g} years from 1950 CE)",
        f"orbit ({EPOCH_SOLUTION}): {describe_orbit(orbit)}",
        f"reference orbit ({EPOCH_SOLUTION}): {describe_orbit(reference)}",
        f"{calendar.describe()}; model year {args.year} "
        f"({calendar.year_length_days(args.year):g} days), anchor at day "
        f"{calendar.anchor_day(args.year):g}",
        "days: fractional days after 1 January 00:00 of the model year (a month that wraps "
        "the year starts below 0 or ends beyond the year length)",
        "true longitude: geocentric, 0 deg at the March equinox, 90 deg at the June solstice",
    ]
    print(format_text(table, header))
    return 0
