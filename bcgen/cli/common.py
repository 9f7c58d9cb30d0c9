"""Helpers shared by the subcommands: orbit and calendar from options, month names."""

from __future__ import annotations

import argparse

from bcgen.epochs import parse_epoch
from bcgen.errors import CalendarError, EpochError, OrbitError
from bcgen.orbit import SOLUTIONS, OrbitalElements, solve
from bcgen.solar_calendar.calendars import (
    CALENDARS,
    ModelCalendar,
    canonical_calendar,
    parse_anchor,
)

MONTH_NAMES = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")

#: Month definitions as command-line choices -> the API's names.
MONTH_OPTIONS = {"fixed-day": "fixed_day", "fixed-angle": "fixed_angle"}


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


def orbit_for_epoch(epoch_text: str, solution: str, option: str) -> OrbitalElements:
    """Orbit of an epoch given on the command line; errors name ``option``."""
    try:
        years = parse_epoch(epoch_text)
    except EpochError as exc:
        if not option.startswith("--"):
            raise
        raise EpochError(f"{option}: {exc}") from None
    if solution not in SOLUTIONS:
        raise OrbitError(
            f"--solution: unknown orbital solution {solution!r}; expected one of "
            f"{', '.join(SOLUTIONS)}"
        )
    try:
        return solve(years, solution)
    except TypeError:
        raise OrbitError(
            f"--solution {solution} needs values this command cannot take (a table file or "
            f"explicit elements); use it from an experiment spec, or use berger1978 for {option}"
        ) from None


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


def describe_orbit(orbit: OrbitalElements) -> str:
    """One line stating the elements and the perihelion convention."""
    return (
        f"eccentricity {float(orbit.eccentricity):.6f}, obliquity "
        f"{float(orbit.obliquity_deg):.4f} deg, perihelion longitude "
        f"{float(orbit.perihelion_longitude_deg):.4f} deg (heliocentric, from the moving March "
        f"equinox; the Sun's true longitude at perihelion is "
        f"{float(orbit.sun_longitude_at_perihelion_deg):.4f} deg)"
    )
