"""Epoch strings ↔ years relative to 1950 CE.

Internally an epoch is a number of years relative to 1950 CE, negative in the
past ("BP" means before 1950 CE, the radiocarbon convention). At the user
interface an epoch always carries its reference, because a bare ``6000`` could
mean 6000 BP, 6000 CE or a model year:

=================  =============================  ====================
form               example                        years from 1950 CE
=================  =============================  ====================
kilo-years BP      ``6ka``, ``6 ka BP``           -6000
mega-years BP      ``3.2Ma``                      -3 200 000
years BP           ``21000 BP``, ``500 yr BP``    -21000, -500
years CE / AD      ``1850CE``, ``1850.5 AD``      -100, -99.5
years BCE / BC     ``4050 BCE``                   -5999
=================  =============================  ====================

A number of years alone (``1850 yr``, ``6000 a``) is a duration, as ambiguous
as a bare number (1850 CE? 1850 BP?), and is refused as an epoch; with ``BP``
(``500 yr BP``) it is an age. Epochs beyond :data:`MAX_EPOCH_YEARS` (10⁹
years, about a quarter of the age of the Earth) from 1950 CE are refused.

CE years may be decimal years (``2000.5CE`` is the middle of 2000 CE); BCE years are
whole. CE/BCE years follow historical reckoning, which has no year 0: 1 BCE is
followed by 1 CE, so ``N BCE`` is the astronomical year ``1 - N`` and lies
``N + 1949`` years before 1950 CE (``4050 BCE`` = 5999 BP; 6000 BP is 4051 BCE).

A range for transient work is written ``START..END/STEP`` with START and END
epochs and STEP a duration, for example ``130ka..115ka/1ka`` or
``1850CE..2000CE/10yr``; both ends are included when the step divides the span.
"""

from __future__ import annotations

import re
from decimal import Context, Decimal
from typing import Literal

import numpy as np

from bcgen.errors import EpochError

#: The forms of one epoch, for messages and help texts.
EPOCH_FORMS = (
    "'6ka' or '6 ka BP' (thousands of years before 1950 CE), '3.2Ma' (millions of years BP), "
    "'21000 BP' (years before 1950 CE), '1850CE' or '1850 AD', '4050 BCE' or '4050 BC'"
)
#: The forms of one epoch and of a range of epochs.
ACCEPTED_FORMS = f"{EPOCH_FORMS}, and ranges 'START..END/STEP' such as '130ka..115ka/1ka'"

#: Largest distance of an epoch from 1950 CE, in years (about a quarter of the Earth's age).
MAX_EPOCH_YEARS = 1e9
#: J2000.0 (JD 2451545.0, 1 January 2000 12:00 TT) in years from 1950 CE: years from 1950 CE
#: are Julian epochs (years of 365.25 days, IAU) minus 1950.
J2000_YEARS_FROM_1950 = 50.0

_NUMBER = r"(?P<num>[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)"
_EPOCH_RE = re.compile(
    rf"^\s*{_NUMBER}\s*(?P<unit>ka|kyr|ma|myr|yr|a|bp|ce|ad|bce|bc)?\s*(?P<bp>bp)?\s*$",
    re.IGNORECASE,
)
_DURATION_SCALE = {"yr": 1.0, "a": 1.0, "ka": 1e3, "kyr": 1e3, "ma": 1e6, "myr": 1e6}
#: Decimal arithmetic wide enough to scale or shift any double exactly, so that an epoch's
#: number is rounded to binary once (``0.1ka`` is exactly -100 years, ``1950.1CE`` exactly
#: the double nearest 0.1).
_EXACT = Context(prec=1200, Emax=10_000, Emin=-10_000)


def _exact_years(number: str, scale: float = 1.0, shift: float = 0.0) -> float:
    """Compute ``number * scale + shift`` exactly in decimal and round it once to a double."""
    return float(_EXACT.add(_EXACT.multiply(Decimal(number), Decimal(scale)), Decimal(shift)))


def _fail(text: str, why: str, forms: str = ACCEPTED_FORMS) -> EpochError:
    return EpochError(f"cannot read epoch {text!r}: {why}; accepted forms: {forms}")


def parse_epoch(text: str) -> float:
    """Parse one epoch string into years relative to 1950 CE (negative in the past).

    Parameters
    ----------
    text : str
        An epoch such as ``"6ka"``, ``"127 ka BP"``, ``"21000 BP"``, ``"1850CE"``
        or ``"4050 BCE"`` (see the module docstring for all forms).

    Returns
    -------
    float
        Years relative to 1950 CE.

    Raises
    ------
    EpochError
        For a bare number or a bare number of years such as ``"1850 yr"``
        (ambiguous), an unknown unit, an empty string, a range, or an epoch
        more than :data:`MAX_EPOCH_YEARS` from 1950 CE.
    """
    if not isinstance(text, str):
        raise _fail(
            str(text), "an epoch must be a string with its reference (a bare number is ambiguous)"
        )
    if ".." in text:
        raise _fail(text, "one epoch is expected here, not a range", EPOCH_FORMS)
    match = _EPOCH_RE.match(text)
    if not match:
        raise _fail(text, "not an epoch")
    value = float(match["num"])
    if not np.isfinite(value):
        raise _fail(text, "the number is too large")
    unit = (match["unit"] or "").lower()
    trailing_bp = match["bp"] is not None
    if not unit:
        raise _fail(text, "a bare number is ambiguous (years BP? CE? a model year?)")
    if unit in ("bp", "ce", "ad", "bce", "bc") and trailing_bp:
        raise _fail(text, f"'{unit.upper()} BP' mixes two references")
    if unit in ("yr", "a") and not trailing_bp:
        raise _fail(
            text,
            f"a number of years alone is a duration, as ambiguous as a bare number "
            f"(write '{match['num']} {match['unit']} BP' for years before 1950 CE, or a CE year)",
        )
    if unit in _DURATION_SCALE or unit == "bp":
        if value < 0:
            raise _fail(text, "an age before present cannot be negative; write a CE year instead")
        years = -_exact_years(match["num"], _DURATION_SCALE.get(unit, 1.0)) + 0.0  # no -0.0
    elif unit in ("ce", "ad"):
        if value < 1:
            raise _fail(text, "CE years start at 1 (there is no year 0)")
        years = _exact_years(match["num"], shift=-1950.0)  # 2000.5CE: a fraction of a year
    elif value != int(value) or value < 1:
        raise _fail(text, "BCE years are whole numbers from 1 (there is no year 0)")
    else:
        # BCE / BC: historical N BCE is astronomical year 1 - N.
        years = (1.0 - value) - 1950.0
    if not abs(years) <= MAX_EPOCH_YEARS:  # also catches an overflow to infinity
        raise _fail(
            text, f"the epoch is more than {MAX_EPOCH_YEARS:,.0f} years from 1950 CE", EPOCH_FORMS
        )
    return years


def parse_duration(text: str) -> float:
    """Parse a positive duration such as ``1ka``, ``500yr`` or ``0.5 kyr`` into years."""
    m = re.match(rf"^\s*{_NUMBER}\s*(?P<unit>ka|kyr|ma|myr|yr|a)\s*$", text, re.IGNORECASE)
    if not m:
        raise _fail(text, "a step must be a duration such as '1ka', '500yr' or '10yr'")
    years = float(m["num"]) * _DURATION_SCALE[m["unit"].lower()]
    if not np.isfinite(years):
        raise _fail(text, "the step is too large")
    if years <= 0:
        raise _fail(text, "a step must be positive")
    return years


#: Most epochs a range may hold (a 40-million-year range by 1-year steps fits).
MAX_RANGE_EPOCHS = 50_000_000


def _range_parts(text: str) -> tuple[float, float, float, int]:
    """Start, end, step (years) and number of epochs of a range ``START..END/STEP``."""
    span, _, step_text = text.partition("/")
    if not step_text:
        raise _fail(text, "a range needs a step, as in '130ka..115ka/1ka'")
    start_text, _, end_text = span.partition("..")
    start, end, step = parse_epoch(start_text), parse_epoch(end_text), parse_duration(step_text)
    count = np.floor(abs(end - start) / step + 1e-9) + 1  # a float: may be huge, even inf
    if not count <= MAX_RANGE_EPOCHS:
        size = f"{count:,.0f}" if count < 1e15 else "more than 10^15"
        raise _fail(text, f"the range has {size} epochs; the limit is {MAX_RANGE_EPOCHS:,}")
    n = int(count)
    direction = 1.0 if end >= start else -1.0
    return start, end, direction * step, n


def count_epochs(text: str) -> int:
    """Count the epochs of an epoch or a range, without making them."""
    if not isinstance(text, str) or ".." not in text:
        parse_epoch(text)
        return 1
    return _range_parts(text)[3]


def parse_epochs(text: str) -> np.ndarray:
    """Parse an epoch or a range ``START..END/STEP`` into an array of years from 1950 CE.

    The range runs from START towards END by STEP in whichever direction END
    lies; END is included when the step divides the span exactly.
    """
    if not isinstance(text, str) or ".." not in text:
        return np.array([parse_epoch(text)])
    start, _, step, n = _range_parts(text)
    return start + step * np.arange(n)


def iter_epochs(text: str, chunk: int = 100_000):
    """Yield ``(years_from_1950, labels)`` of an epoch or a range, ``chunk`` epochs at a time.

    The same epochs and labels as :func:`parse_epochs` and :func:`epoch_labels`, in
    pieces, so that a range of tens of millions of epochs takes constant memory.
    """
    if not isinstance(text, str) or ".." not in text:
        yield np.array([parse_epoch(text)]), [text]
        return
    start, _, step, n = _range_parts(text)
    style = _range_style(text)
    for lo in range(0, n, chunk):
        years = start + step * np.arange(lo, min(lo + chunk, n))
        yield years, [format_epoch(t, style) for t in years]


EpochStyle = Literal["auto", "ka", "bp", "ce"]
_STYLES = ("auto", "ka", "bp", "ce")


def format_epoch(years_from_1950: float, style: EpochStyle = "auto") -> str:
    """Format years relative to 1950 CE the way people write them.

    Parameters
    ----------
    years_from_1950 : float
        Epoch in years relative to 1950 CE (negative in the past).
    style : {"auto", "ka", "bp", "ce"}
        ``"ka"`` gives ``6ka``, ``"bp"`` gives ``21000 BP`` and ``"ce"`` gives
        ``1850CE`` or ``4050 BCE`` (whole years only; otherwise ``"bp"``).
        ``"auto"`` picks ``ka`` for whole thousands of years in the past, ``ce``
        for other whole years from 1 CE on and ``bp`` for the rest. Epochs after
        1950 CE are always written as CE years.

    Returns
    -------
    str
        A string that :func:`parse_epoch` reads back to the same value (a decimal
        CE year such as ``2000.5CE`` for fractional years after 1950 CE).

    Raises
    ------
    EpochError
        For a value that is not a finite number of years within
        :data:`MAX_EPOCH_YEARS` of 1950 CE.
    """
    t = _epoch_number(years_from_1950)
    if not isinstance(style, str) or style not in _STYLES:
        raise EpochError(f"style: unknown epoch style {_one_line(style)}; expected one of "
                         f"{', '.join(_STYLES)}")
    whole = t == round(t)
    if style == "auto":
        style = "ka" if t <= 0 and t % 1000 == 0 else "ce" if whole and t > -1950 else "bp"
    if t > 0 or (style == "ce" and whole):
        if not whole:
            return _readable(t, Decimal(1), Decimal(1950), "CE")
        year = int(round(t)) + 1950  # astronomical numbering: year 0 is 1 BCE
        return f"{year}CE" if year >= 1 else f"{1 - year} BCE"
    if style == "ka":
        return _readable(t, Decimal(-1000), Decimal(0), "ka")
    return _readable(t, Decimal(-1), Decimal(0), " BP")


def _one_line(value) -> str:
    """Return a value's repr on one line, at most about 60 characters (as arguments.shown)."""
    text = " ".join(repr(value).split())
    return text if len(text) <= 60 else text[:57] + "..."


def _epoch_number(years_from_1950) -> float:
    if isinstance(years_from_1950, (str, bytes, bool)) or years_from_1950 is None:
        raise EpochError(f"an epoch in years from 1950 CE must be a number; got "
                         f"{_one_line(years_from_1950)} (parse text with parse_epoch)")
    try:
        t = float(years_from_1950)
    except (TypeError, ValueError):
        raise EpochError(f"an epoch in years from 1950 CE must be a number; got "
                         f"{_one_line(years_from_1950)}") from None
    if not abs(t) <= MAX_EPOCH_YEARS:
        raise EpochError(f"an epoch must be a finite number of years within "
                         f"{MAX_EPOCH_YEARS:,.0f} of 1950 CE; got {t:g}")
    return t + 0.0


def _readable(t: float, per_unit: Decimal, origin: Decimal, suffix: str) -> str:
    """Shortest text ``N<suffix>`` that :func:`parse_epoch` reads back to exactly ``t``.

    ``N = t / per_unit + origin`` (years per unit of the number, and the year the number
    counts from): 12 significant digits when they read back to ``t``, else ``t``'s own
    shortest decimal (``repr``) shifted and scaled exactly in decimal arithmetic.
    """
    exact = _EXACT.add(_EXACT.divide(Decimal(repr(t)), per_unit), origin)
    for number in (f"{float(exact):.12g}", format(exact.normalize(_EXACT), "f")):
        if parse_epoch(number + suffix) == t:
            return number + suffix
    raise AssertionError(f"no text reads back to the epoch {t!r}")  # exact arithmetic: unreachable


def epoch_labels(text: str) -> list[str]:
    """Labels for the epochs of :func:`parse_epochs`, one per epoch.

    One epoch keeps its text as given; the members of a range are formatted in
    the style of the range's start (``130ka..115ka/1ka`` gives ``130ka``,
    ``129ka``, ...).
    """
    years = parse_epochs(text)
    if ".." not in text:
        return [text]
    style = _range_style(text)
    return [format_epoch(t, style) for t in years]


def _range_style(text: str) -> EpochStyle:
    """Return the style of a range's labels: that of its start."""
    start = _EPOCH_RE.match(text.partition("..")[0])
    unit = (start["unit"] or "").lower() if start else ""
    return (
        "ka"
        if unit in ("ka", "kyr", "ma", "myr")
        else "ce"
        if unit in ("ce", "ad", "bce", "bc")
        else "bp"
    )
