"""The product and output sections of a spec: timestep table, templates, file naming."""

from __future__ import annotations

import re
import string
from dataclasses import dataclass
from pathlib import Path

from bcgen.spec import schema as S
from bcgen.spec.common import FieldError, check_number, closest, existing_file


@dataclass(frozen=True)
class PointSpec:
    """A point of the per-timestep table."""

    lat_deg: float
    lon_deg: float

    def __post_init__(self) -> None:
        check_number("timestep_table.points.lat_deg", self.lat_deg, -90, 90, what="a latitude")
        check_number("timestep_table.points.lon_deg", self.lon_deg, -180, 360, what="a longitude")


@dataclass(frozen=True)
class TimestepTableSpec:
    """``timestep_table:`` timestep, points and days of the per-timestep reference table."""

    timestep_minutes: float
    points: tuple[PointSpec, ...]
    days: tuple[int, ...] | None = None

    def __post_init__(self) -> None:
        p = "timestep_table"
        step = check_number(f"{p}.timestep_minutes", self.timestep_minutes, 0, 1440, lo_open=True)
        if step < 1.0 / 60.0:
            raise FieldError(
                f"{p}.timestep_minutes",
                f"{step:g} minutes is shorter than one second (model time steps are minutes "
                "long); expected a divisor of the day such as 10, 15, 20, 30 or 60",
            )
        per_day = 1440.0 / step
        if abs(per_day - round(per_day)) > 1e-9:
            raise FieldError(
                f"{p}.timestep_minutes",
                f"{step:g} minutes does not divide the "
                "day (1440 minutes) evenly; expected a divisor such as 10, 15, 20, "
                "30 or 60",
            )
        points = tuple(self.points)
        if not points:
            raise FieldError(f"{p}.points", "give at least one point {lat_deg: ..., lon_deg: ...}")
        object.__setattr__(self, "points", points)
        if self.days is not None:
            days = tuple(self.days)
            for i, day in enumerate(days):
                if isinstance(day, bool) or not isinstance(day, int) or not 1 <= day <= 366:
                    raise FieldError(
                        f"{p}.days[{i}]", f"expected a day of the year from 1 to 366, got {day!r}"
                    )
                if day in days[:i]:
                    raise FieldError(f"{p}.days[{i}]", f"day {day} is listed twice")
            object.__setattr__(self, "days", days)

    @property
    def steps_per_day(self) -> int:
        """Number of timesteps in a day."""
        return int(round(1440.0 / self.timestep_minutes))


@dataclass(frozen=True)
class TemplateRef:
    """A template: a bundled one by ``name``, or the user's own by ``path``.

    ``key`` is the spec key it was given under (``templates`` or ``attribute_templates``).
    """

    name: str | None = None
    path: Path | None = None
    key: str = "templates"

    def __post_init__(self) -> None:
        if (self.name is None) == (self.path is None):
            raise FieldError(self.key, "a template is either a bundled name or a path")
        if self.name is not None:
            if self.name not in S.BUNDLED_TEMPLATES:
                raise FieldError(
                    self.key,
                    f"unknown bundled template {self.name!r}; "
                    f"{closest(self.name, S.BUNDLED_TEMPLATES, 'template')}, "
                    "or the path of your own template",
                )
        else:
            object.__setattr__(self, "path", existing_file(self.key, self.path, "template"))
            from bcgen.errors import TooLargeError
            from bcgen.sizes import check_template_size

            try:
                check_template_size(self.path)
            except TooLargeError as exc:
                raise FieldError(self.key, str(exc)) from None

    @property
    def label(self) -> str:
        """The bundled name, or the file name of a user template."""
        return self.name if self.name is not None else Path(self.path).name


@dataclass(frozen=True)
class OutputSpec:
    """``output:`` folder, file-name pattern and compression.

    ``file_pattern`` None means the default for the kind of run (time slice or
    transient), filled in by :class:`~bcgen.spec.experiment.ExperimentSpec`.
    """

    directory: str = S.DEFAULT_DIRECTORY
    file_pattern: str | None = None
    compression_level: int = S.DEFAULT_COMPRESSION_LEVEL
    shuffle: bool = True

    def __post_init__(self) -> None:
        p = "output"
        if not isinstance(self.directory, str) or not self.directory.strip():
            raise FieldError(f"{p}.directory", "expected the name of a folder")
        if isinstance(self.compression_level, bool) or self.compression_level not in range(10):
            raise FieldError(
                f"{p}.compression_level",
                f"expected a whole number from 0 to 9, got {self.compression_level!r}",
            )
        if not isinstance(self.shuffle, bool):
            raise FieldError(f"{p}.shuffle", f"expected true or false, got {self.shuffle!r}")
        if self.file_pattern is not None:
            check_file_pattern(self.file_pattern)

    def file_name(self, **values) -> str:
        """Fill the file-name pattern with placeholder values (see ``FILE_PATTERN_FIELDS``).

        A product that does not depend on the grid (:data:`GRID_INDEPENDENT_PRODUCTS`) is
        named without ``{grid}`` and the separator before it: ``x_orbit.nc``, not
        ``x_orbit_zonal10deg.nc``.
        """
        pattern = self.file_pattern or S.DEFAULT_FILE_PATTERN
        if values.get("product") in GRID_INDEPENDENT_PRODUCTS:
            pattern = without_placeholder(pattern, "grid")
        return pattern.format(**values)


#: Products whose values do not depend on the grid: their file names leave ``{grid}`` out.
GRID_INDEPENDENT_PRODUCTS = frozenset(
    {"orbit", "solar_constant", "greenhouse_gases", "month_table", "timestep_table"})


def without_placeholder(pattern: str, name: str) -> str:
    """Remove ``{name}`` and one separator (``_``, ``-``, ``.``) from a file-name pattern.

    The separator before it goes, or the one after it when it opens the pattern.
    """
    field = re.escape("{" + name + "}")
    reduced = re.sub(rf"[_.-]{field}", "", pattern)
    return re.sub(rf"{field}[_.-]?", "", reduced)


_SAMPLE_FIELDS = {
    "experiment": "x",
    "product": "orbit",
    "epoch": "6ka",
    "calendar": "noleap",
    "grid": "zonal1deg",
    "first_year": 1,
    "last_year": 100,
}


def check_file_pattern(pattern: str) -> set[str]:
    """Check a file-name pattern; return the placeholders it uses."""
    path = "output.file_pattern"
    try:
        fields = {f for _, f, _, _ in string.Formatter().parse(pattern) if f is not None}
    except ValueError as exc:
        raise FieldError(
            path,
            f"{pattern!r} is not a valid pattern ({exc}); write "
            "placeholders as {name} and a literal brace as {{ or }}",
        ) from None
    for name in sorted(fields):
        if name not in S.FILE_PATTERN_FIELDS:
            raise FieldError(
                path,
                f"unknown placeholder {'{' + name + '}'!r}; "
                f"{closest(name, S.FILE_PATTERN_FIELDS, 'placeholder')}",
            )
    if "product" not in fields:
        raise FieldError(
            path, f"{pattern!r} has no {{product}}: every product would get the same file name"
        )
    try:
        sample = pattern.format(**_SAMPLE_FIELDS)
    except (ValueError, TypeError, IndexError, KeyError) as exc:
        raise FieldError(path, f"{pattern!r} cannot be filled in ({exc})") from None
    if "/" in sample or "\\" in sample or sample in (".", ".."):
        raise FieldError(
            path,
            f"{pattern!r} is a file name and cannot contain a folder; set "
            "output.directory for the folder",
        )
    if not sample.endswith(".nc"):
        raise FieldError(path, f"{pattern!r} must end with '.nc' (it names NetCDF files)")
    return fields
