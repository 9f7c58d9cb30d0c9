"""``bcgen build``: every product of an experiment spec, a manifest and a summary."""

from __future__ import annotations

import argparse
import shlex
import sys

from bcgen.cli.common import json_text
from bcgen.errors import CheckFailed

EXAMPLE = """\
examples:
  bcgen build configs/demo.yaml -o demo-output
  bcgen build configs/protocols/midHolocene.yaml -o out/midHolocene --force
  bcgen build configs/demo.yaml --format json      # the summary as JSON

The exit status is 0 when everything was written (and any published values in
orbit.expected agree with the computed orbit), 1 when a published value
disagrees beyond its written digits, 2 on bad input.
"""


def register(subparsers) -> argparse.ArgumentParser:
    """Add ``bcgen build`` to the command line."""
    parser = subparsers.add_parser(
        "build",
        help="build every product of an experiment spec",
        description="Write every product an experiment spec asks for (CF NetCDF, tables, "
        "rendered templates) and a manifest with the SHA-256 of each file.",
        epilog=EXAMPLE,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("spec", metavar="SPEC.yaml", help="experiment spec (YAML)")
    parser.add_argument("-o", "--output-dir", metavar="DIR",
                        help="output folder (default: the spec's output.directory)")
    parser.add_argument("--force", action="store_true",
                        help="overwrite existing outputs; a transient run rebuilds every file "
                             "(without it, it resumes and rebuilds only what is out of date)")
    parser.add_argument("--format", choices=("text", "json"), default="text",
                        help="summary format (default: text)")
    return parser


def run(args: argparse.Namespace) -> int:
    """Build, print the summary, return the exit status."""
    from bcgen import build
    from bcgen.spec import load_spec

    spec = load_spec(args.spec)
    command = "bcgen " + " ".join(shlex.quote(a) for a in sys.argv[1:]) if sys.argv else None
    result = build(spec, args.output_dir, force=args.force, command=command)
    summary = summarize(result)
    if args.format == "json":
        print(json_text(summary))
    elif args.quiet < 1:
        print(format_summary(summary))
    if not result.agrees_with_expected:
        bad = [c for c in result.orbit_checks if not c.agrees]
        names = ", ".join(f"{c.name} {c.computed:.6g} vs {c.expected:g}" for c in bad)
        raise CheckFailed(f"computed orbit disagrees with orbit.expected in {args.spec}: "
                          f"{names}")
    return 0


def summarize(result) -> dict:
    """Return the build summary as a JSON-ready dict."""
    ctx = result.context
    summary = {"directory": str(result.directory), "files": result.files,
               "manifest": str(result.manifest) if result.manifest else None}
    if ctx is None:
        summary.update(getattr(result, "transient", None) or {})  # a transient run
        return summary
    o, spec = ctx.orbit, ctx.spec
    summary.update({
        "experiment": spec.experiment.name,
        "epoch": spec.epoch,
        "orbit": o.as_record(),
        "solar_constant_wm2": spec.solar_constant_wm2,
        "solar_constant": ctx.solar_constant_record,
        "orbit_spread": ctx.orbit_spread,
        "greenhouse_gases": {g.name: {"value": g.value, "units": g.units}
                             for g in spec.greenhouse_gases},
        "calendar": {"name": ctx.calendar.name, "anchor": ctx.anchor_in_words},
        "global_annual_mean_insolation_wm2": ctx.global_annual_mean_wm2,
        "expected_orbit_checks": [
            {"name": c.name, "expected": c.expected, "computed": c.computed,
             "tolerance": c.tolerance, "agrees": c.agrees} for c in result.orbit_checks],
    })
    return summary


def _spread_lines(spread: dict | None) -> list[str]:
    """Format the spread between orbital solutions, one line per other solution."""
    lines = []
    for name, d in ((spread or {}).get("differences") or {}).items():
        wm2 = _wm2_text(d["insolation"])
        lines.append(f"  orbit spread {name}: e {d['eccentricity']:+.6f}, obliquity "
                     f"{d['obliquity_deg']:+.4f} deg, perihelion "
                     f"{d['perihelion_longitude_deg']:+.3f} deg; daily insolation differs by "
                     f"up to {wm2} deg latitude (W m-2)")
    return lines + _not_compared_lines(spread)


def _wm2_text(insolation: list[dict]) -> str:
    """``3.2 at +65, 2.7 at +0, ...``: the largest daily difference at each latitude."""
    return ", ".join(f"{q['max_abs_daily_wm2']:.1f} at {q['latitude_deg']:+g}" for q in insolation)


def _not_compared_lines(spread: dict | None) -> list[str]:
    """One line per solution left out of the spread, with why."""
    return [f"  orbit spread: {name} not compared ({why})"
            for name, why in ((spread or {}).get("not_compared") or {}).items()]


def _run_spread_lines(spread: dict | None) -> list[str]:
    """Format the largest spread between orbital solutions over a transient run."""
    lines = []
    for name, d in ((spread or {}).get("largest_over_run") or {}).items():
        where = d["precession_index"]["epoch"]
        wm2 = _wm2_text(d["insolation_at_largest_precession_index_difference"])
        lines.append(
            f"  orbit spread {name}, largest over the run: e {d['eccentricity']['value']:+.6f} "
            f"({d['eccentricity']['epoch']}), obliquity {d['obliquity_deg']['value']:+.4f} deg "
            f"({d['obliquity_deg']['epoch']}), perihelion "
            f"{d['perihelion_longitude_deg']['value']:+.3f} deg "
            f"({d['perihelion_longitude_deg']['epoch']}); at {where} daily insolation differs "
            f"by up to {wm2} deg latitude (W m-2)")
    return lines + _not_compared_lines(spread)


def _count(n, noun: str) -> str:
    """``1 year``, ``10 years``."""
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"


def _size(n: int) -> str:
    for unit in ("B", "KiB", "MiB", "GiB"):
        if n < 1024 or unit == "GiB":
            return f"{n:.0f} {unit}" if unit == "B" else f"{n:.1f} {unit}"
        n /= 1024
    return f"{n} B"


def format_summary(s: dict) -> str:
    """Return the build summary as text for people."""
    lines = [f"built {s.get('experiment', '')} ({s.get('epoch', '')}) in {s['directory']}"]
    if "orbit" in s:
        o = s["orbit"]
        lines += [
            f"  orbit ({o['solution']}): e = {o['eccentricity']:.6f}, obliquity = "
            f"{o['obliquity_deg']:.4f} deg, perihelion longitude = "
            f"{o['perihelion_longitude_deg']:.4f} deg (from the March equinox, heliocentric; "
            f"Sun's longitude at perihelion {o['sun_longitude_at_perihelion_deg']:.4f} deg)",
            f"  solar constant: {s['solar_constant_wm2']} W m-2; global annual-mean "
            f"insolation: {s['global_annual_mean_insolation_wm2']:.4f} W m-2",
            f"  calendar: {s['calendar']['name']}, {s['calendar']['anchor']}",
        ]
        scaling = s.get("solar_constant") or {}
        if scaling.get("given_wm2") is not None:
            lines.append(f"  solar constant scaled from {scaling['given_wm2']} W m-2 (today's "
                         f"Sun) to the epoch: {scaling['reference']}")
        lines += _spread_lines(s.get("orbit_spread"))
        if s["greenhouse_gases"]:
            gases = ", ".join(f"{k.upper()} {v['value']:g} {v['units']}"
                              for k, v in s["greenhouse_gases"].items())
            lines.append(f"  greenhouse gases: {gases}")
        for c in s.get("expected_orbit_checks", ()):
            verdict = "agrees" if c["agrees"] else "DISAGREES"
            lines.append(f"  check {c['name']}: computed {c['computed']:.6f}, published "
                         f"{c['expected']:g} (+-{c['tolerance']:g}): {verdict}")
    if "model_years" in s:  # a transient run
        first, last = s["model_years"]
        lines += [
            f"  model years {first}-{last}: epochs {s['start_epoch']} to {s['end_epoch']}, "
            f"{_count(s['acceleration'], 'year')} of orbit per model year, "
            f"{_count(s['years_per_file'], 'model year')} per file; orbit "
            f"{s['orbit_solution']}, solar constant {s['solar_constant_wm2']} W m-2",
            f"  calendar: {s['calendar']['name']}, {s['calendar']['anchor']}",
        ]
        solar = s.get("solar_constant") or {}
        if solar.get("given_wm2") is not None:
            lines.append(f"  solar constant scaled from {solar['given_wm2']} W m-2 (today's Sun) "
                         f"to each model year's epoch: {solar['first_model_year_wm2']:.4f} to "
                         f"{solar['last_model_year_wm2']:.4f} W m-2; {solar['reference']}")
        lines += _run_spread_lines(s.get("orbit_spread"))
        if s.get("greenhouse_gases"):
            lines.append(f"  greenhouse gases: {s['greenhouse_gases']}")
        skipped = sum(f.get("status") == "skipped" for f in s["files"])
        lines.append(f"  {len(s['files']) - skipped} files written, {skipped} already complete "
                     "and identical (skipped)")
    lines.append("  files:")
    if "model_years" in s and len(s["files"]) > 24:  # a long transient run: totals per product
        for product in dict.fromkeys(f["product"] for f in s["files"]):
            mine = [f for f in s["files"] if f["product"] == product]
            lines.append(f"    {product:<48} {_size(sum(f['bytes'] for f in mine)):>10}  "
                         f"{len(mine)} files, {mine[0]['file']} ... {mine[-1]['file']}")
    for f in s["files"] if "model_years" not in s or len(s["files"]) <= 24 else ():
        note = "  (skipped: complete)" if f.get("status") == "skipped" else ""
        lines.append(f"    {f['file']:<48} {_size(f['bytes']):>10}  {f['description']}{note}")
    if s.get("manifest"):
        lines.append(f"  manifest: {s['manifest']}")
    return "\n".join(lines)
