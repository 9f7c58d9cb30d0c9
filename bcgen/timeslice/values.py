"""The values of template placeholders and gas amounts, computed once per build."""

from __future__ import annotations

import numpy as np

from bcgen import __version__
from bcgen.orbit import SOLUTIONS
from bcgen.render import Unavailable

#: Significant digits kept when a gas amount is converted between units: the spec's number
#: comes back as written (284.3 ppm, not 284.29999999999995), and no real precision is lost.
GAS_DIGITS = 12


def in_units(mole_fraction: float, factor: float) -> float:
    """Return a mole fraction times ``factor`` (1e6 for ppm), to :data:`GAS_DIGITS` digits."""
    return float(f"{mole_fraction * factor:.{GAS_DIGITS}g}")


def template_values(ctx) -> dict[str, object]:
    """Return the value of every placeholder of :data:`bcgen.render.PLACEHOLDERS`.

    ``ctx`` is a :class:`bcgen.timeslice.context.BuildContext`. A gas the spec does not set is
    :class:`~bcgen.render.Unavailable`, so a template that uses it is refused with the
    reason instead of being written with a value a model cannot read.
    """
    o, spec, cal = ctx.orbit, ctx.spec, ctx.calendar
    gases = {g.name: g.mole_fraction for g in spec.greenhouse_gases}
    anchor = cal.anchor
    attributes = dict(spec.attributes)

    def gas(name: str, factor: float):
        if name not in gases:
            return Unavailable(f"the spec sets no greenhouse_gases.{name}")
        return in_units(gases[name], factor)

    return {
        "experiment": spec.experiment.name,
        "description": spec.experiment.description,
        "epoch": spec.epoch,
        "years_bp": float(-spec.years_from_1950),
        "solution": o.solution,
        "solution_reference": SOLUTIONS[o.solution].REFERENCE,
        "eccentricity": float(o.eccentricity),
        "obliquity_deg": float(o.obliquity_deg),
        "obliquity_rad": float(o.obliquity_rad),
        "perihelion_longitude_deg": float(o.perihelion_longitude_deg),
        "perihelion_longitude_rad": float(o.perihelion_longitude_rad),
        "sun_longitude_at_perihelion_deg": float(o.sun_longitude_at_perihelion_deg),
        "sun_longitude_at_perihelion_rad": float(np.deg2rad(o.sun_longitude_at_perihelion_deg)),
        "precession_index": float(o.precession_index),
        "solar_constant_wm2": float(spec.solar_constant_wm2),
        "co2_ppm": gas("co2", 1e6),
        "ch4_ppb": gas("ch4", 1e9),
        "n2o_ppb": gas("n2o", 1e9),
        "calendar": cal.name,
        "anchor_kind": anchor.kind,
        "anchor_month": anchor.month,
        "anchor_day": anchor.day,
        "anchor_hour": anchor.hour,
        "anchor_minute": anchor.minute,
        "anchor_day_of_year": float(cal.anchor_day(ctx.year)),
        "year_length_days": float(cal.year_length_days(ctx.year)),
        "bcgen_version": __version__,
        "creation_date": ctx.created.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "attributes": attributes,
    }
