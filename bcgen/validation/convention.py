"""Which daily-mean convention a model's output follows: stated, or fitted.

A model forms a daily mean in one of three legitimate ways
(:data:`bcgen.validation.reference.DAILY_CONVENTIONS`): the daily-mean formula at the
middle of the day (``midday``), the exact mean over the day (``day_average``),
or the mean over its time steps (``timestep_mean``, which tends to the exact
mean: with steps of 3 hours or less it differs from it by less than
0.002 W m-2 at 127 ka, the most eccentric PMIP orbit, so such files are found
to be ``day_average``). Midday and day-average daily means differ by up to
about 1.2 W m-2 at the poles on the days a pole enters or leaves polar night;
monthly means hardly tell them apart (0.04 W m-2).

The convention is taken, in this order, from

1. ``--daily-method`` (``source: option``);
2. the ``daily_method`` attribute of the model variable, which bcgen writes
   into its own daily products (``source: file attribute``);
3. the spec's ``insolation.daily_method`` when the spec states it
   (``source: spec``);
4. otherwise the data (``source: fitted``): each candidate of
   :data:`CANDIDATES` predicts the output; the one with the smallest misfit is
   kept, unless it is not significantly better (ΔBIC > −10, as for findings,
   misfits below 0.01 W m-2 counting as 0.01) than a candidate earlier in
   :data:`CANDIDATES`, which is then kept (``distinguishable: false``). When a
   catalogued mistake explains the output better than the reference, the
   candidates are compared with that mistake applied (the mistake is then
   diagnosed again under the convention found). The Sun evaluated at 00:00
   (``sun_at_day_start``) is the formula taken once a day: its convention is
   ``midday``.

Orbit tables hold instantaneous values, which have no daily-mean convention
(``source: instantaneous``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: Candidates of a fitted convention, in order of preference: (method, steps per day).
CANDIDATES: tuple[tuple[str, int | None], ...] = (
    ("day_average", None), ("midday", None), ("timestep_mean", 8), ("timestep_mean", 6),
    ("timestep_mean", 4), ("timestep_mean", 3), ("timestep_mean", 2))
#: Misfits below this (W m-2) are numerical precision (as in the diagnosis).
FLOOR_WM2 = 0.01
#: ΔBIC below which one candidate fits significantly better than another.
SIGNIFICANT_DELTA_BIC = -10.0

SOURCES = ("option", "file attribute", "spec", "fitted", "instantaneous")


def label(method: str, timestep_days: float | None) -> str:
    """``midday``, ``day_average`` or ``timestep_mean (180-minute steps)``."""
    if method == "timestep_mean" and timestep_days:
        return f"timestep_mean ({timestep_days * 1440.0:g}-minute steps)"
    return method


@dataclass(frozen=True)
class Convention:
    """The daily-mean convention of the reference, and how it was found.

    Attributes
    ----------
    method : str
        ``midday``, ``day_average`` or ``timestep_mean``.
    timestep_days : float or None
        Time step of ``timestep_mean``.
    source : str
        One of :data:`SOURCES`.
    misfit_by_candidate_wm2 : dict
        RMS misfit of the prediction under each candidate (label → W m-2), with
        the best explanation applied when one was (``with_finding``).
    distinguishable : bool or None
        Whether the output tells the kept candidate from the others (fitted only).
    with_finding : str or None
        The finding applied when the candidates were compared.
    note : str
        Anything worth saying (a stated convention the data contradict).
    """

    method: str
    timestep_days: float | None = None
    source: str = "fitted"
    misfit_by_candidate_wm2: dict = field(default_factory=dict)
    distinguishable: bool | None = None
    with_finding: str | None = None
    note: str = ""

    @property
    def label(self) -> str:
        """The method, with the step of a time-step mean."""
        return label(self.method, self.timestep_days)

    def describe(self) -> str:
        """One line for the text report."""
        if self.source == "instantaneous":
            return "none (instantaneous values)"
        text = f"{self.label} ({self.source}"
        if self.source == "fitted" and self.misfit_by_candidate_wm2:
            others = sorted((v, k) for k, v in self.misfit_by_candidate_wm2.items()
                            if k != self.label)
            if others:
                text += (f"; misfit {self.misfit_by_candidate_wm2[self.label]:.3f} W m-2, next "
                         f"best {others[0][1]} {others[0][0]:.3f}")
            if self.with_finding == "sun_at_day_start":
                text += "; implied by sun_at_day_start: the formula taken once a day"
            elif self.with_finding:
                text += f", with {self.with_finding} applied"
            if self.distinguishable is False:
                text += "; the output cannot tell these conventions apart"
        text += ")"
        if self.method == "day_average" and self.source == "fitted":
            text += (" - the exact mean over each day, which a mean over model time steps of "
                     "3 hours or less matches")
        return text + (f"; {self.note}" if self.note else "")

    def to_dict(self) -> dict:
        """JSON-ready (the report's ``daily_mean_convention``)."""
        return {"method": self.method,
                "timestep_minutes": None if self.timestep_days is None
                else self.timestep_days * 1440.0,
                "source": self.source, "description": self.describe(),
                "misfit_by_candidate_wm2": dict(self.misfit_by_candidate_wm2),
                "distinguishable": self.distinguishable, "with_finding": self.with_finding}


def pick(rss_by: dict, n: int) -> tuple[str, bool]:
    """Return the candidate kept, from residual sums of squares (label → RSS).

    Returns the label and whether it is significantly better than every other
    candidate.
    """
    floor = n * FLOOR_WM2**2
    labels = list(rss_by)
    best = min(labels, key=lambda k: rss_by[k])

    def better(a: str, b: str) -> bool:
        """Whether a fits significantly better than b."""
        return n * np.log(max(rss_by[a], floor) / max(rss_by[b], floor)) <= SIGNIFICANT_DELTA_BIC

    for k in labels:  # preference order
        if k == best or not better(best, k):
            chosen = k
            break
    distinguishable = all(better(chosen, k) for k in labels if k != chosen)
    return chosen, distinguishable
