"""What a variable's ``cell_methods`` says about its time statistic, and what converting it means.

A month conversion re-averages interval values over other intervals. That is right for
means (CF ``time: mean``), and for sums once they are turned into rates and back
(``time: sum``: a month's total is its mean rate times its length). It is wrong for a
monthly maximum, minimum, instantaneous value (``time: point``) or any other statistic:
the maximum over a fixed-angle month cannot be made from the maxima of calendar months,
and an average of snapshots is not the value at any instant. Such variables are refused.

Daily extremes are the exception that CF names (§7.4, "within days ... over days"): the
mean over a fixed-angle month of daily maxima is ``time: maximum within days time: mean
over days``, exactly what a monthly ``tasmax`` of CMIP holds, so daily (one-day step)
``time: maximum`` or ``time: minimum`` input is averaged and labelled so.

The time statistic of a cell is read from the ``time`` entries of ``cell_methods``
(CF §7.3, §7.4): an entry ``within days`` describes what was done inside each day and
the following ``over days`` entry the statistic over the cell; ``over years`` is the
statistic across the years of a climatology (it must be a mean) and ``within years``
the statistic over the cell of each year. A variable without a time entry is taken as a
mean (common practice: model output without cell_methods holds means).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from bcgen.cf.cellmethods import parse

#: How a variable is converted: re-averaged as a mean, or as a sum (via its mean rate).
Treatment = Literal["mean", "sum"]

#: Daily statistics whose monthly mean CF names "<method> within days time: mean over days".
DAILY_EXTREMES = ("maximum", "minimum")

@dataclass(frozen=True)
class ConversionRule:
    """How to convert a variable: its treatment and the output's cell_methods."""

    treatment: Treatment
    cell_methods: str


class RefusedStatistic(ValueError):
    """A time statistic that re-averaging over other months would falsify (message: why)."""


def conversion_rule(cell_methods: str | None, dim: str, *, daily: bool) -> ConversionRule:
    """Return how to convert a variable with ``cell_methods`` along time dimension ``dim``.

    Parameters
    ----------
    cell_methods : str or None
        The variable's attribute as written.
    dim : str
        Name of the time dimension (entries naming it or ``time`` are time entries).
    daily : bool
        The input holds one value per day (one-day steps): daily extremes are averaged
        into "within days ... over days" means.

    Raises
    ------
    RefusedStatistic
        For a time statistic that is neither a mean nor a sum (nor a daily extreme of
        daily input); the message says what the statistic is and why.
    """
    if not cell_methods or not str(cell_methods).strip():
        return ConversionRule("mean", f"{dim}: mean")
    text = str(cell_methods)
    timed = [e for e in parse(text) if dim in e.names or "time" in e.names]
    if not timed:
        return ConversionRule("mean", f"{text} {dim}: mean")
    across_years = [e for e in timed if e.qualifiers.get("over") == "years"]
    for e in across_years:
        if e.method != "mean":
            raise RefusedStatistic(f"the statistic across years is a {e.method}, not a mean")
    cell = [e for e in timed if e not in across_years and e.qualifiers.get("within") != "days"]
    if len(cell) != 1:
        raise RefusedStatistic("its time entries do not name one statistic over each time "
                               "interval")
    method = cell[0].method
    if method in ("mean", "sum"):
        return ConversionRule(method, text)
    if daily and method in DAILY_EXTREMES and len(timed) == 1 and not cell[0].qualifiers:
        entry = cell[0]
        new = f"{dim}: {method} within days {dim}: mean over days"
        if len(entry.names) > 1:  # "area: time: maximum": area keeps its maximum
            others = ": ".join(n for n in entry.names if n not in (dim, "time"))
            new = f"{others}: {method} {new}"
        return ConversionRule("mean", text.replace(entry.text, new, 1))
    what = {"point": "an instantaneous value (time: point)"}.get(method, f"a {method}")
    raise RefusedStatistic(f"each value is {what}, not a mean or a sum")
