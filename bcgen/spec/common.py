"""Shared pieces of the spec sections: the error that names a key, and value checks."""

from __future__ import annotations

import difflib
import math
from pathlib import Path

import numpy as np

from bcgen.epochs import parse_epoch
from bcgen.errors import BcgenError, SpecError
from bcgen.spec import schema as S


class FieldError(SpecError):
    """An invalid value of one key; ``key_path`` says which (``calendar.date``)."""

    def __init__(self, key_path: str, detail: str):
        self.key_path = key_path
        self.detail = detail
        super().__init__(f"{key_path}: {detail}" if key_path else detail)


def closest(word: str, choices, noun: str) -> str:
    """Say ``expected one of a, b, c (did you mean 'b'?)`` for a word not in ``choices``."""
    choices = list(choices)
    text = f"expected one of {', '.join(choices)}"
    match = difflib.get_close_matches(str(word), choices, n=1, cutoff=0.6)
    if not match:
        lowered = {c.lower(): c for c in choices}
        match = [lowered[str(word).lower()]] if str(word).lower() in lowered else []
    return text + (f" (did you mean {match[0]!r}?)" if match else "")


def check_choice(path: str, value, choices, noun: str) -> None:
    """Raise a FieldError at ``path`` unless ``value`` is one of ``choices``."""
    if value not in choices:
        raise FieldError(path, f"unknown {noun} {value!r}; {closest(value, choices, noun)}")


def check_epoch(path: str, text) -> float:
    """Parse an epoch string, raising a FieldError at ``path`` if it cannot be read."""
    try:
        return parse_epoch(text)
    except BcgenError as exc:
        raise FieldError(path, str(exc)) from None


def existing_file(path: str, value, what: str) -> Path:
    """Return ``value`` as a Path, raising a FieldError at ``path`` unless it is a file."""
    file = Path(value)
    if not file.is_file():
        problem = "is a folder, not a file" if file.is_dir() else "not found"
        raise FieldError(path, f"{what} {file.absolute()} {problem}")
    return file


def check_number(
    path: str, value, lo=None, hi=None, lo_open=False, hi_open=False, what: str = "a number"
) -> float:
    """Return ``value`` as a finite float within the bounds, or raise a FieldError at ``path``."""
    if isinstance(value, bool) or not isinstance(value, (int, float, np.number)):
        raise FieldError(path, f"expected {what}, got {value!r}")
    value = float(value)
    bad = not math.isfinite(value)
    bad |= lo is not None and (value < lo or (lo_open and value == lo))
    bad |= hi is not None and (value > hi or (hi_open and value == hi))
    if bad:
        interval = S.Key(
            "number",
            "",
            minimum=lo,
            maximum=hi,
            exclusive_minimum=lo_open,
            exclusive_maximum=hi_open,
        ).range_text()
        raise FieldError(path, f"expected {what} in {interval}, got {value:g}")
    return value
