"""Helpers shared by the subcommands: orbit and calendar from options, month names."""

from __future__ import annotations

import argparse
import json
import math

from bcgen.epochs import EPOCH_FORMS, parse_epoch
from bcgen.errors import CalendarError, EpochError
from bcgen.orbit import OrbitalElements, solve
from bcgen.solar_calendar.calendars import (
    CALENDARS,
    ModelCalendar,
    canonical_calendar,
    parse_anchor,
)

#: Month definitions as command-line choices -> the API's names.
MONTH_OPTIONS = {"fixed-day": "fixed_day", "fixed-angle": "fixed_angle"}

#: The orbital solution of the commands that take one epoch and no orbit values (``months``,
#: ``insolation``): the only epoch-based solution that needs neither a table file nor explicit
#: elements. The reference orbit of fixed-angle months is computed with it too.
EPOCH_SOLUTION = "berger1978"

#: Sentence for the --help of those commands.
EPOCH_SOLUTION_HELP = (
    "Orbits: EPOCH and --reference always use the berger1978 solution (Berger 1978, the "
    "PMIP protocols' choice), the only solution that needs nothing but an epoch; there is "
    "no --solution option. For an orbit from a table or from explicit elements, write an "
    "experiment spec and use 'bcgen build'."
)


def latitude_value(text: str) -> float:
    """Read one ``--lat`` value (an argparse type): a number of degrees north."""
    try:
        return float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected latitudes in degrees north separated by spaces (e.g. --lat 65 0 -30), "
            f"got {text!r}") from None


def add_calendar_options(parser: argparse.ArgumentParser) -> None:
    """Add --calendar and the mutually exclusive --equinox / --perihelion-date."""
    parser.add_argument("--calendar", default="noleap", metavar="NAME",
                        help=f"CF calendar: {', '.join(CALENDARS)} (default: noleap)")
    anchor = parser.add_mutually_exclusive_group()
    anchor.add_argument("--equinox", metavar='"MM-DD HH:MM"',
                        help="date and time of the March equinox in every model year "
                             "(default: 03-21 12:00, as in the PMIP protocols)")
    anchor.add_argument("--perihelion-date", metavar='"MM-DD HH:MM"',
                        help="anchor the orbit by the date and time of perihelion instead")


def orbit_for_epoch(epoch_text: str, option: str, command: str) -> OrbitalElements:
    """Berger (1978) orbit of one epoch given on the command line.

    Parameters
    ----------
    epoch_text : str
        The epoch as typed (one epoch; a range is refused).
    option : str
        What to name in messages (``"EPOCH"``, ``"--reference"``).
    command : str
        The subcommand, named when a range is given (``"months"``).
    """
    if isinstance(epoch_text, str) and ".." in epoch_text:
        raise EpochError(
            f"{option}: bcgen {command} takes one epoch, not the range {epoch_text!r} (run it "
            f"once per epoch; 'bcgen orbit' takes ranges); one epoch is written {EPOCH_FORMS}"
        )
    try:
        years = parse_epoch(epoch_text)
    except EpochError as exc:
        if not option.startswith("--"):
            raise
        raise EpochError(f"{option}: {exc}") from None
    return solve(years, EPOCH_SOLUTION)


def calendar_from_args(args) -> ModelCalendar:
    """Return the calendar of --calendar, anchored by --equinox or --perihelion-date."""
    name = canonical_calendar(args.calendar, source="--calendar")
    if args.perihelion_date is not None:
        option = "--perihelion-date"
        anchor = parse_anchor(args.perihelion_date, "perihelion", source=option)
    elif args.equinox is not None:
        option = "--equinox"
        anchor = parse_anchor(args.equinox, "march_equinox", source=option)
    else:
        return ModelCalendar(name)
    try:
        return ModelCalendar(name, anchor)
    except CalendarError as exc:
        raise CalendarError(f"{option}: {exc}; give a date that exists in every year") from None


def check_model_year(calendar: ModelCalendar, args) -> None:
    """Check --year, and that the anchor date exists in the model year and the years beside it.

    A date can exist in most years and be missing in one (the days 1582-10-05 to
    1582-10-14 that the ``standard`` calendar skips); the error then names the option
    that gave the date.
    """
    try:
        calendar.is_leap(args.year)
    except CalendarError as exc:
        raise CalendarError(f"--year: {exc}") from None
    try:
        calendar.anchor_days(args.year)
    except CalendarError as exc:
        option = "--perihelion-date" if args.perihelion_date is not None else "--equinox"
        raise CalendarError(
            f"{option}: {exc}, and model year {args.year} needs the anchor in it and in the "
            f"years before and after; give another date or another --year"
        ) from None


def describe_orbit(orbit: OrbitalElements) -> str:
    """One line stating the elements and the perihelion convention."""
    return (
        f"eccentricity {float(orbit.eccentricity):.6f}, obliquity "
        f"{float(orbit.obliquity_deg):.4f} deg, perihelion longitude "
        f"{float(orbit.perihelion_longitude_deg):.4f} deg (heliocentric, from the moving March "
        f"equinox; the Sun's true longitude at perihelion is "
        f"{float(orbit.sun_longitude_at_perihelion_deg):.4f} deg)"
    )


def _finite_or_null(value):
    """Replace NaN and infinities by None (JSON null), recursively."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _finite_or_null(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite_or_null(v) for v in value]
    if hasattr(value, "item") and hasattr(value, "dtype"):  # a numpy scalar
        return _finite_or_null(value.item())
    return value


def json_text(obj) -> str:
    """Return ``obj`` as JSON text that any JSON reader accepts (RFC 8259).

    Python's ``json`` writes NaN and infinities as ``NaN``/``Infinity``, which are not
    JSON; a value that is missing (NaN) is written as ``null`` instead.
    """
    return json.dumps(_finite_or_null(obj), indent=2, allow_nan=False)
