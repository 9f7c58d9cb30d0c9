"""Greenhouse-gas tables of a transient run: reading, checking and interpolating to model years.

A table is a CSV file whose header names its own units, so nothing is guessed:

===============================  ===================================================
column                           meaning
===============================  ===================================================
one time column (as the orbit tables of :mod:`bcgen.orbit.table`):
``age_ka_bp``                    thousands of years before 1950 CE
``age_years_bp``                 years before 1950 CE
``year_ce``                      calendar year CE (astronomical numbering)
``years_from_1950``              years relative to 1950 CE, negative in the past
gas columns ``<gas>_<unit>``:
``co2_ppm``, ``ch4_ppb``,        a gas of :data:`bcgen.spec.schema.GASES` and its
``n2o_ppb``, ``sf6_ppt`` ...     units, ``ppm``, ``ppb`` or ``ppt`` (mole fractions
                                 in dry air, 1e-6, 1e-9, 1e-12)
===============================  ===================================================

Lines starting with ``#`` are comments (say where the numbers come from there).
Rows may come in any order; two rows of the same age are an error.

Interpolation to the epoch of each model year
---------------------------------------------
``linear``
    Linear in time between the two rows that bracket the epoch (a row's own
    value at its age).
``nearest``
    The value of the row nearest in time; an epoch exactly half-way between two
    rows takes the older row (further in the past).

An epoch outside the table's range is an error that names the file and the age:
the table is never extrapolated.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

import numpy as np

from bcgen.arguments import gas_mole_fraction
from bcgen.epochs import format_epoch
from bcgen.errors import BcgenError, InputFileError
from bcgen.orbit.table import TIME_COLUMNS
from bcgen.spec import schema as S
from bcgen.textfile import content_lines
from bcgen.units import convert

GasInterpolation = Literal["linear", "nearest"]

#: Units a gas column may carry (UDUNITS-2 names; converted by cf-units, bcgen.units).
COLUMN_UNITS = ("ppm", "ppb", "ppt")

#: Units written for each gas (the same rule as the time-slice product): CO2 in 1e-6,
#: CH4 and N2O in 1e-9, every other gas in 1e-12 (UDUNITS-2 dimensionless factors).
OUTPUT_UNITS = {"co2": "1e-6", "ch4": "1e-9", "n2o": "1e-9"}
DEFAULT_OUTPUT_UNITS = "1e-12"

#: What each interpolation method does, in words (written into the output metadata).
INTERPOLATION_METHODS: dict[str, str] = {
    "linear": "linear interpolation in time between the two rows of the greenhouse-gas table "
    "that bracket the epoch of each model year",
    "nearest": "the value of the row of the greenhouse-gas table nearest in time to the epoch "
    "of each model year (half-way between two rows: the older row)",
}

_GAS_COLUMN = re.compile(r"^(?P<gas>[a-z0-9]+)_(?P<unit>ppm|ppb|ppt)$")


@dataclass(frozen=True)
class GasTable:
    """A greenhouse-gas table read from a file, sorted by epoch.

    Attributes
    ----------
    path : pathlib.Path
        The file it was read from (named in every error).
    years_from_1950 : numpy.ndarray
        Epochs of the rows, years relative to 1950 CE, increasing.
    values : dict
        Gas name → values of the rows in the column's own units.
    units : dict
        Gas name → the column's units (``ppm``, ``ppb`` or ``ppt``).
    """

    path: Path
    years_from_1950: np.ndarray
    values: dict[str, np.ndarray]
    units: dict[str, str]

    @property
    def gases(self) -> tuple[str, ...]:
        """Gas names in the order of the file's columns."""
        return tuple(self.values)

    def coverage_text(self) -> str:
        """Describe the range of the table in words, e.g. ``130ka to 0ka``."""
        first, last = self.years_from_1950[0], self.years_from_1950[-1]
        return f"{format_epoch(first)} to {format_epoch(last)}"

    def check_covers(self, years_from_1950, model_years=None) -> None:
        """Raise :class:`~bcgen.errors.InputFileError` if any epoch lies outside the table.

        The message names the file, the first offending age (and its model year,
        when ``model_years`` is given) and the table's range.
        """
        t = np.asarray(years_from_1950, dtype=float).reshape(-1)
        lo, hi = self.years_from_1950[0], self.years_from_1950[-1]
        outside = (t < lo) | (t > hi)
        if np.any(outside):
            i = int(np.argmax(outside))
            year = (
                ""
                if model_years is None
                else (f" (model year {int(np.asarray(model_years).reshape(-1)[i])})")
            )
            raise InputFileError(
                f"{self.path}: age {format_epoch(t[i])}{year} is outside the greenhouse-gas "
                f"table, which covers {self.coverage_text()}; extend the table (it is never "
                "extrapolated)"
            )

    def interpolate(
        self, years_from_1950, method: GasInterpolation = "linear"
    ) -> dict[str, np.ndarray]:
        """Values of every gas at the epochs, in the units of :func:`output_units`.

        Parameters
        ----------
        years_from_1950 : array_like
            Epochs, years relative to 1950 CE, inside the table.
        method : {"linear", "nearest"}
            See the module docstring and :data:`INTERPOLATION_METHODS`.

        Returns
        -------
        dict
            Gas name → values with the shape of ``years_from_1950``, in
            ``output_units(gas)`` (1e-6 for CO2, 1e-9 for CH4 and N2O, ...).
        """
        if method not in INTERPOLATION_METHODS:
            raise InputFileError(
                f"{self.path}: unknown interpolation {method!r}; expected one of "
                f"{', '.join(INTERPOLATION_METHODS)}"
            )
        t = np.asarray(years_from_1950, dtype=float)
        self.check_covers(t)
        ages = self.years_from_1950
        if method == "nearest":
            upper = np.clip(np.searchsorted(ages, t, side="left"), 1, ages.size - 1)
            lower = upper - 1
            row = np.where(t - ages[lower] <= ages[upper] - t, lower, upper)
        out = {}
        for gas, column in self.values.items():
            picked = np.interp(t, ages, column) if method == "linear" else column[row]
            out[gas] = convert(picked, self.units[gas], output_units(gas),
                               where=f"{self.path}: {gas}_{self.units[gas]}",
                               error=InputFileError)
        return out


def output_units(gas: str) -> str:
    """Return the UDUNITS units of a gas's values (``1e-6`` for CO2, ``1e-9`` for CH4 and N2O)."""
    return OUTPUT_UNITS.get(gas, DEFAULT_OUTPUT_UNITS)


def load_gas_table(path) -> GasTable:
    """Read and check a greenhouse-gas table (see the module docstring for its format).

    Raises
    ------
    InputFileError
        One line naming the file (and line) and what is expected.
    """
    path = Path(path)
    lines = content_lines(path, "greenhouse-gas table")
    if len(lines) < 3:
        raise InputFileError(
            f"{path}: a greenhouse-gas table needs a header line and at least two rows"
        )
    header_line, header_text = lines[0]
    header = [h.strip() for h in header_text.split(",")]
    times = [h for h in header if h in TIME_COLUMNS]
    if len(times) != 1:
        raise InputFileError(
            f"{path}:{header_line}: expected exactly one time column named one of "
            f"{', '.join(TIME_COLUMNS)}; found {', '.join(times) or 'none'}"
        )
    gases: dict[str, tuple[int, str]] = {}
    for i, name in enumerate(header):
        if name == times[0]:
            continue
        match = _GAS_COLUMN.match(name)
        if not match or match["gas"] not in S.GASES:
            raise InputFileError(
                f"{path}:{header_line}: column {name!r} is not a gas with its units; expected "
                "<gas>_<unit> such as co2_ppm, ch4_ppb, n2o_ppb (gases: "
                f"{', '.join(S.GASES)}; units: {', '.join(COLUMN_UNITS)})"
            )
        if match["gas"] in gases:
            raise InputFileError(f"{path}:{header_line}: gas {match['gas']!r} has two columns")
        gases[match["gas"]] = (i, match["unit"])
    if not gases:
        raise InputFileError(f"{path}:{header_line}: no gas column (e.g. co2_ppm)")
    rows, numbers = [], []
    for n, line in lines[1:]:
        cells = [c.strip() for c in line.split(",")]
        if len(cells) != len(header):
            raise InputFileError(
                f"{path}:{n}: expected {len(header)} comma-separated values, found {len(cells)}"
            )
        try:
            values = [float(c) for c in cells]
        except ValueError:
            raise InputFileError(f"{path}:{n}: expected numbers, found {line.strip()!r}") from None
        if not all(np.isfinite(values)):
            raise InputFileError(f"{path}:{n}: missing or non-finite value in {line.strip()!r}")
        if any(values[i] < 0 for i, _ in gases.values()):
            raise InputFileError(f"{path}:{n}: a gas concentration cannot be negative")
        rows.append(n)
        numbers.append(values)
    data = np.array(numbers)
    t = TIME_COLUMNS[times[0]](data[:, header.index(times[0])])
    order = np.argsort(t, kind="stable")
    t_sorted = t[order]
    same = np.nonzero(np.diff(t_sorted) == 0)[0]
    if same.size:
        a, b = sorted((rows[order[same[0]]], rows[order[same[0] + 1]]))
        raise InputFileError(f"{path}:{b}: the age of this row repeats that of line {a}")
    values = {gas: data[order, i] for gas, (i, _) in gases.items()}
    units = {gas: unit for gas, (_, unit) in gases.items()}
    for gas, column in values.items():  # the spec's plausibility rule, for every route
        try:
            gas_mole_fraction(gas, convert(column, units[gas], "1", where=str(path),
                                           error=InputFileError),
                              f"column {gas}_{units[gas]}", units[gas])
        except BcgenError as exc:
            raise InputFileError(f"{path}: {exc}") from None
    return GasTable(path, t_sorted, values, units)
