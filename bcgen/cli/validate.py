"""``bcgen validate``: check a model's own insolation (or orbit table) against an experiment spec.

Exit status 0 when the output is consistent with the spec, 1 when it is not
(the report is printed first, then one line ``bcgen: error: ...`` naming the
largest error and the most likely mistake), 2 on bad input.
"""

from __future__ import annotations

import argparse
import math

from bcgen.errors import CheckFailed
from bcgen.validation.compare import DEFAULT_TOLERANCE_WM2

EPILOG = """\
examples:
  bcgen validate rsdt_Amon_mymodel_midHolocene.nc --spec configs/protocols/midHolocene.yaml
  bcgen validate rsdt_day.nc --spec my6ka.yaml --var rsdt --format json
  bcgen validate orbit_table.csv --spec my6ka.yaml --tolerance-wm2 0.5
  bcgen validate rsdt_Amon_deglaciation_*.nc --spec deglaciation.yaml   # transient run

MODEL_FILE is NetCDF output holding TOA incoming shortwave (found by standard_name
toa_incoming_shortwave_flux, or named with --var), daily or monthly means, zonal
means or latitude-longitude fields, on any CF calendar; or a CSV table (.csv/.txt)
from the model's orbit routine with columns time_days and declination_deg,
distance_factor and/or true_longitude_deg. Several NetCDF files of one run (split by
years) are joined along time. With a transient spec each model year is checked
against its own orbit and transient mistakes are named.

The verdict is 'consistent' when the largest error is within the tolerance plus a
noise allowance and the RMS error within the tolerance plus the noise level (the noise,
estimated from the residual, counts only up to the tolerance), the output is not
noisier than the tolerance, no catalogued mistake larger than the tolerance fits
significantly better than the reference, and the file's calendar is the spec's (or
accepted with --accept-file-calendar). Findings name the mistakes that explain the
differences, each with its fitted value and the misfit before and after; when none
does, the first finding is 'unexplained' and partial fits follow.
"""


def _non_negative(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of W m-2, got {text!r}") from None
    if not math.isfinite(value) or value < 0:
        raise argparse.ArgumentTypeError(f"expected a number >= 0, got {text!r}")
    return value


def _positive_minutes(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of minutes, got {text!r}") from None
    if not math.isfinite(value) or not 0 < value <= 1440 or abs(
            1440 / value - round(1440 / value)) > 1e-6:
        raise argparse.ArgumentTypeError(f"expected minutes that divide the day (60, 180, ...), "
                                         f"got {text!r}")
    return value


def register(subparsers) -> argparse.ArgumentParser:
    """Add the ``validate`` subcommand."""
    parser = subparsers.add_parser(
        "validate",
        help="check a model's own insolation against a spec and name what is wrong",
        description="Compare a model's TOA insolation (or its orbit table) with bcgen's "
                    "reference for an experiment spec, diagnose common mistakes and give a "
                    "verdict (exit 0 consistent, 1 inconsistent, 2 bad input).",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("model_file", nargs="+", metavar="MODEL_FILE",
                        help="model NetCDF output (one file, or the files of one run split by "
                             "years), or a CSV orbit table (.csv or .txt)")
    parser.add_argument("--spec", required=True, metavar="SPEC",
                        help="the experiment spec (YAML) the model should follow")
    parser.add_argument("--var", metavar="NAME",
                        help="NetCDF variable (default: the one with standard_name "
                             "toa_incoming_shortwave_flux)")
    parser.add_argument("--format", choices=("text", "json"), default="text",
                        help="text report (default) or JSON")
    parser.add_argument("--tolerance-wm2", type=_non_negative, default=DEFAULT_TOLERANCE_WM2,
                        metavar="X", help=f"tolerance on the largest error, W m-2 (default "
                                          f"{DEFAULT_TOLERANCE_WM2:g}); a noise allowance is "
                                          f"added")
    parser.add_argument("--noise-wm2", type=_non_negative, default=None, metavar="SIGMA",
                        help="noise level of the model output, W m-2 (default: estimated from "
                             "the residual; 0 turns the noise allowance off)")
    parser.add_argument("--daily-method", choices=("midday", "day_average", "timestep_mean"),
                        default=None,
                        help="force the daily-mean convention of the output: midday (the "
                             "daily-mean formula at 12:00 of each day), day_average (the exact "
                             "mean over the day) or timestep_mean (the mean over the model's "
                             "time steps; give --timestep-minutes). Default: the file's "
                             "daily_method attribute, else the spec's insolation.daily_method "
                             "when it states one, else the convention that fits the output")
    parser.add_argument("--timestep-minutes", type=_positive_minutes, default=None,
                        metavar="MINUTES",
                        help="the model's time step, for --daily-method timestep_mean")
    parser.add_argument("--accept-file-calendar", action="store_true",
                        help="accept a model file on another calendar than the spec's (360_day "
                             "output for a noleap experiment ...): its insolation is then "
                             "checked on the file's calendar with the spec's anchor; without "
                             "this option such a file is inconsistent (calendar_differs)")
    return parser


def run(args: argparse.Namespace) -> int:
    """Run ``bcgen validate``; raise CheckFailed (exit 1) when inconsistent.

    A transient spec is checked model year by model year (:func:`bcgen.validation.validate`
    routes it and returns a TransientValidationResult).
    """
    import json

    from bcgen.validation import validate
    from bcgen.validation.report import summary_line, to_json, to_text
    from bcgen.validation.transient import TransientValidationResult

    files = args.model_file[0] if len(args.model_file) == 1 else args.model_file
    result = validate(files, args.spec, var=args.var,
                      tolerance_wm2=args.tolerance_wm2, noise_wm2=args.noise_wm2,
                      daily_method=args.daily_method, timestep_minutes=args.timestep_minutes,
                      accept_file_calendar=args.accept_file_calendar)
    if isinstance(result, TransientValidationResult):
        print(json.dumps(result.to_dict(), indent=2) if args.format == "json"
              else result.to_text())
        if result.verdict != "consistent":
            raise CheckFailed(result.summary_line())
        return 0
    print(to_json(result) if args.format == "json" else to_text(result))
    if result.verdict != "consistent":
        raise CheckFailed(summary_line(result))
    return 0
