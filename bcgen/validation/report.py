"""The report of ``bcgen validate``: JSON-ready data and plain text.

JSON keys (top level)
---------------------
=============================  =====================================================
key                            what it holds
=============================  =====================================================
``verdict``                    ``consistent`` or ``inconsistent``
``max_abs_error_wm2``          largest absolute error, model minus reference
``rms_error_wm2``              RMS error
``mean_error_wm2``             mean error (bias)
``tolerance_wm2``              T of the verdict rule
``noise_wm2``                  noise level σ used (estimated unless given)
``noise_estimated``            whether σ was estimated
``noise_limit_wm2``            the largest σ not noisier than the tolerance
``allowed_max_abs_error_wm2``  T + √(2 ln N) σₐ, σₐ = min(σ, T)
``allowed_rms_error_wm2``      T + σₐ
``accept_file_calendar``       whether a file calendar other than the spec's
                               was accepted
``reasons``                    why the output is inconsistent (empty list if consistent)
``findings``                   explanations, best first, each with ``code``,
                               ``description``, ``fitted_value``,
                               ``misfit_before_wm2``, ``misfit_after_wm2`` and
                               ``expected_value``, ``unit``,
                               ``largest_effect_wm2``, ``free_parameters``,
                               ``delta_bic``, ``significant``, ``explains``
                               (false for a partial fit, null for
                               ``calendar_differs``),
                               ``max_abs_misfit_after_wm2``, ``details``
``worst_places``               the largest errors, one per month and latitude
``errors_by_month_and_band``   ``month``, ``band``, ``n_values``,
                               ``max_abs_error_wm2``, ``rms_error_wm2``,
                               ``relative_error`` (null where the reference is
                               below 1 W m-2)
``model``                      what was read
``reference``                  the orbit, solar constant, calendar, anchor and
                               daily method of the reference
``daily_mean_convention``      the daily-mean convention the output was judged
                               in: ``method`` (``midday``, ``day_average`` or
                               ``timestep_mean``), ``timestep_minutes``,
                               ``source`` (``option``, ``file attribute``,
                               ``spec``, ``fitted`` or ``instantaneous``),
                               ``description``, ``misfit_by_candidate_wm2``,
                               ``distinguishable``, ``with_finding``
``day_numbers``                how day numbers are counted (from 0 at 1 January
                               00:00; every day named is also given as a date)
``table_errors``               for an orbit table, errors of each column given
``notes``                      assumptions worth knowing
=============================  =====================================================

Numbers that are not finite are written as null.
"""

from __future__ import annotations

import json
import math

import numpy as np

from bcgen import __version__
from bcgen.solar_calendar.calendars import MONTH_NAMES
from bcgen.validation.dates import DAY_NUMBERS

_ORDER = ("verdict", "max_abs_error_wm2", "rms_error_wm2", "findings")


def _clean(value):
    """JSON-safe copy: numpy scalars to Python, non-finite floats to None."""
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if isinstance(value, (np.bool_, bool)):
        return bool(value)
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return value if math.isfinite(value) else None
    if isinstance(value, np.ndarray):
        return _clean(value.tolist())
    return value


def to_dict(result) -> dict:
    """Return the report as JSON-ready data (keys in the module docstring)."""
    comp, out, setup = result.comparison, result.output, result.setup
    orbit = setup.orbit
    years = np.unique(out.year)
    data = {
        "verdict": result.verdict,
        "max_abs_error_wm2": comp.max_abs_error_wm2,
        "rms_error_wm2": comp.rms_error_wm2,
        "findings": [f.to_dict() for f in result.findings],
        "mean_error_wm2": comp.mean_error_wm2,
        "tolerance_wm2": result.tolerance_wm2,
        "noise_wm2": result.noise_wm2,
        "noise_estimated": result.noise_estimated,
        "noise_limit_wm2": result.noise_limit_wm2,
        "allowed_max_abs_error_wm2": result.allowed_max_abs_error_wm2,
        "allowed_rms_error_wm2": result.allowed_rms_error_wm2,
        "accept_file_calendar": result.accept_file_calendar,
        "reasons": list(result.reasons),
        "worst_places": [p.to_dict() for p in comp.worst],
        "errors_by_month_and_band": [c.to_dict() for c in comp.cells],
        "model": {
            "source": out.source,
            "frequency": out.frequency,
            "calendar": out.calendar,
            "first_year": int(years[0]),
            "last_year": int(years[-1]),
            "n_times": int(out.year.size),
            "n_latitudes": int(out.latitude_deg.size),
            "n_values": comp.n_values,
            "n_missing": comp.n_missing,
            "zonal_spread_wm2": out.zonal_spread_wm2,
        },
        "reference": {
            "epoch": setup.epoch_label or None,
            "eccentricity": float(orbit.eccentricity),
            "obliquity_deg": float(orbit.obliquity_deg),
            "perihelion_longitude_deg": float(orbit.perihelion_longitude_deg),
            "perihelion_convention": "perihelion_longitude",
            "orbital_solution": orbit.solution,
            "solar_constant_wm2": setup.solar_constant_wm2,
            "calendar": setup.calendar.name,
            "anchor": setup.calendar.anchor.kind,
            "anchor_date": setup.calendar.anchor.label,
            "anchor_day": float(setup.calendar.anchor_day(int(years[0]))),
            "daily_method": setup.daily_method,
        },
        "daily_mean_convention": (result.convention.to_dict()
                                  if result.convention is not None else None),
        "day_numbers": DAY_NUMBERS,
        "table_errors": result.table_errors,
        "notes": list(result.notes),
        "bcgen_version": __version__,
    }
    return _clean(data)


def to_json(result) -> str:
    """Return the report as a JSON text."""
    return json.dumps(to_dict(result), indent=2, ensure_ascii=False)


def _value(finding) -> str:
    v = finding.fitted_value
    if isinstance(v, dict):
        return ", ".join(f"{k}={val:g}" for k, val in v.items())
    if isinstance(v, float):
        return f"{v:g}" if finding.unit in ("1", "") else f"{v:g} {finding.unit}"
    return "" if v is None else str(v)


def to_text(result) -> str:
    """Return the report as plain text for a terminal (about 40 lines)."""
    comp, out, setup = result.comparison, result.output, result.setup
    orbit = setup.orbit
    lines = [
        f"model:     {out.describe()}",
        f"reference: {setup.epoch_label + ' ' if setup.epoch_label else ''}orbit e="
        f"{float(orbit.eccentricity):.6f}, obliquity {float(orbit.obliquity_deg):.3f} deg, "
        f"perihelion longitude {float(orbit.perihelion_longitude_deg):.2f} deg "
        f"({orbit.solution}); S0 {setup.solar_constant_wm2:g} W m-2; {setup.calendar.describe()}",
        "daily-mean convention: " + (result.convention.describe() if result.convention
                                     is not None else setup.daily_method),
        f"days:      {DAY_NUMBERS}",
    ]
    lines += [f"note:      {n}" for n in result.notes]
    lines.append("")
    lines.append(
        f"verdict: {result.verdict.upper()}  max abs error {comp.max_abs_error_wm2:.3f} W m-2 "
        f"(allowed {result.allowed_max_abs_error_wm2:.3f} = tolerance {result.tolerance_wm2:g} + "
        f"noise allowance), rms {comp.rms_error_wm2:.3f} (allowed "
        f"{result.allowed_rms_error_wm2:.3f}), mean {comp.mean_error_wm2:+.3f} W m-2; "
        f"{comp.n_values} values" + (f", {comp.n_missing} missing" if comp.n_missing else ""))
    lines.append(
        f"noise: sigma {result.noise_wm2:.3f} W m-2 "
        f"({'estimated' if result.noise_estimated else 'given'}; at most "
        f"{result.noise_limit_wm2:.3f} allowed, counted up to the tolerance in the allowances)")
    lines += [f"  because {r}" for r in result.reasons]
    if result.table_errors:
        lines.append("orbit table errors: " + "; ".join(
            f"{k} max {v['max_abs_error']:.4g}, rms {v['rms_error']:.4g}"
            for k, v in result.table_errors.items()))
    if out.zonal_spread_wm2 is not None:
        lines.append(f"largest spread between longitudes: {out.zonal_spread_wm2:.3f} W m-2")
    if comp.worst:
        lines.append("")
        lines.append("worst places:")
        lines += [f"  {p.describe()}" for p in comp.worst]
    months = sorted({c.month for c in comp.cells})
    if months:
        lines.append("")
        lines.append("max abs error (W m-2) per month and latitude band:")
        width = max(len(b) for b in comp.band_labels)
        lines.append("  " + f"{'band':>{width}}" + "".join(f"{MONTH_NAMES[m - 1][:3]:>7}"
                                                             for m in months))
        table = {(c.band, c.month): c.max_abs_error_wm2 for c in comp.cells}
        for band in reversed(comp.band_labels):
            if not any((band, m) in table for m in months):
                continue
            cells = "".join(f"{table[(band, m)]:7.2f}" if (band, m) in table else f"{'-':>7}"
                            for m in months)
            lines.append("  " + f"{band:>{width}}" + cells)
    lines.append("")
    if result.findings:
        lines.append("diagnosis (explanations first, best first; then partial fits):")
        for i, f in enumerate(result.findings, 1):
            value = _value(f)
            mark = " [partial fit: does not explain the differences]" if (
                f.explains is False and f.code != "unexplained") else ""
            lines.append(f"  {i}. {f.code}" + (f" = {value}" if value else "")
                         + f": misfit {f.misfit_before_wm2:.3f} -> {f.misfit_after_wm2:.3f} W m-2"
                         + mark)
            lines.append(f"     {f.description}")
    else:
        lines.append("diagnosis: no catalogued mistake fits significantly better than the "
                     "reference")
    return "\n".join(lines)


def summary_line(result) -> str:
    """One line for the exit message of an inconsistent verdict."""
    comp = result.comparison
    where = comp.worst[0].where if comp.worst else "?"
    text = (f"{result.output.source} is inconsistent with the spec: max abs error "
            f"{comp.max_abs_error_wm2:.2f} W m-2 ({where}; allowed "
            f"{result.allowed_max_abs_error_wm2:.2f})")
    if result.noise_wm2 > result.noise_limit_wm2:
        text += (f"; noisier than the tolerance (noise {result.noise_wm2:.2f} W m-2, tolerance "
                 f"{result.tolerance_wm2:g})")
    first = result.findings[0] if result.findings else None
    if first is not None and first.code not in ("unexplained", "calendar_differs"):
        value = _value(first)
        text += (f"; most likely {first.code}" + (f" ({value})" if value and not isinstance(
            first.fitted_value, dict) else "") + f", misfit {first.misfit_before_wm2:.2f} -> "
                 f"{first.misfit_after_wm2:.2f} W m-2")
    elif first is not None and first.code == "calendar_differs":
        text += (f"; the file's calendar {first.fitted_value} is not the spec's "
                 f"{first.expected_value}")
    else:
        text += "; no catalogued mistake explains it"
    if any(f.code == "calendar_differs" for f in result.findings[1:]):
        text += "; the file's calendar is not the spec's"
    return text
