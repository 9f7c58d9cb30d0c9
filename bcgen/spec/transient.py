"""The ``transient:`` section: a run through a range of epochs, and its model-year mapping."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from bcgen.epochs import format_epoch, parse_epoch
from bcgen.errors import SpecError
from bcgen.spec import schema as S
from bcgen.spec.common import FieldError, check_choice, check_epoch, existing_file


@dataclass(frozen=True)
class TransientSpec:
    """``transient:`` the epochs of a transient run and how model years map onto them.

    Model year ``first_model_year + k`` uses the orbit of the epoch
    ``start_epoch + k × acceleration`` years (towards ``end_epoch``), for
    ``k = 0 … n_model_years - 1``; the last model year has ``end_epoch``.
    """

    start_epoch: str
    end_epoch: str
    first_model_year: int = 1
    acceleration: int = 1
    years_per_file: int = S.DEFAULT_YEARS_PER_FILE
    greenhouse_gas_table: Path | None = None
    greenhouse_gas_interpolation: str = "linear"

    def __post_init__(self) -> None:
        p = "transient"
        start = check_epoch(f"{p}.start_epoch", self.start_epoch)
        end = check_epoch(f"{p}.end_epoch", self.end_epoch)
        for key in ("first_model_year", "acceleration", "years_per_file"):
            value = getattr(self, key)
            if isinstance(value, bool) or not isinstance(value, int) or value < 1:
                raise FieldError(f"{p}.{key}", f"expected a whole number from 1, got {value!r}")
        if start == end:
            raise FieldError(
                f"{p}.end_epoch",
                "the run starts and ends at the same epoch; "
                "for one epoch write a time slice with 'epoch'",
            )
        span = abs(end - start)
        if abs(span / self.acceleration - round(span / self.acceleration)) > 1e-9:
            raise FieldError(
                f"{p}.acceleration",
                f"the run spans {span:g} years, which is not "
                f"a multiple of the acceleration {self.acceleration} (each model "
                "year advances the orbit by that many years)",
            )
        check_choice(
            f"{p}.greenhouse_gas_interpolation",
            self.greenhouse_gas_interpolation,
            S.GAS_INTERPOLATIONS,
            "interpolation",
        )
        if self.greenhouse_gas_table is not None:
            object.__setattr__(
                self,
                "greenhouse_gas_table",
                existing_file(
                    f"{p}.greenhouse_gas_table", self.greenhouse_gas_table, "greenhouse-gas table"
                ),
            )

    @property
    def start_years_from_1950(self) -> float:
        """Epoch of the first model year, years relative to 1950 CE."""
        return parse_epoch(self.start_epoch)

    @property
    def end_years_from_1950(self) -> float:
        """Epoch of the last model year, years relative to 1950 CE."""
        return parse_epoch(self.end_epoch)

    @property
    def n_model_years(self) -> int:
        """Number of model years in the run (both end epochs included)."""
        span = abs(self.end_years_from_1950 - self.start_years_from_1950)
        return int(round(span / self.acceleration)) + 1

    @property
    def last_model_year(self) -> int:
        """The last model year of the run."""
        return self.first_model_year + self.n_model_years - 1

    def model_years(self) -> np.ndarray:
        """Every model year of the run."""
        return np.arange(self.first_model_year, self.last_model_year + 1)

    def epochs_of_model_years(self, model_years) -> np.ndarray:
        """Epochs (years relative to 1950 CE) of model years, by the mapping in the docstring."""
        years = np.asarray(model_years)
        if np.any((years < self.first_model_year) | (years > self.last_model_year)):
            raise SpecError(
                f"model years outside the run {self.first_model_year}-{self.last_model_year}"
            )
        start, end = self.start_years_from_1950, self.end_years_from_1950
        direction = 1.0 if end > start else -1.0
        return start + direction * self.acceleration * (years - self.first_model_year)

    def file_ranges(self) -> list[tuple[int, int]]:
        """(first, last) model year of each output file."""
        firsts = range(self.first_model_year, self.last_model_year + 1, self.years_per_file)
        return [(y, min(y + self.years_per_file - 1, self.last_model_year)) for y in firsts]

    @property
    def label(self) -> str:
        """``START-END`` for file names, e.g. ``130ka-115ka``."""
        return (
            f"{format_epoch(self.start_years_from_1950)}-{format_epoch(self.end_years_from_1950)}"
        )
