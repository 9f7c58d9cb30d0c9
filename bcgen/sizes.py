"""Sizes a user controls, estimated and bounded before any work starts.

Grid resolution, numbers of time steps and model years, the timestep table: work that
streams (transient runs, ``bcgen orbit`` over a range) keeps its memory bounded by
itself; what cannot stream (a time-slice build computes every product before it writes
any, so that nothing is written unless all succeeds) is estimated here from the spec
alone, before a grid is made, and refused with the estimate and the limit when it would
not fit (:class:`~bcgen.errors.TooLargeError`), rather than failing half-way with an
allocation error.
"""

from __future__ import annotations

import math
import os

from bcgen.errors import TooLargeError

#: Bytes each gridded value costs while a time-slice build holds it: a float64 result and
#: its float32 copy for writing, with temporaries (common practice; measured order).
BYTES_PER_VALUE = 24
#: Bytes of one row of the timestep table (text, about ten numbers).
BYTES_PER_TABLE_ROW = 160
#: Most cells one time step of a transient run may hold (a float64 step of 8 GB).
MAX_STEP_CELLS = 1_000_000_000
#: Largest template file read (a model namelist or attribute template is a few KiB).
MAX_TEMPLATE_BYTES = 2**20
#: Most model files one ``bcgen convert`` joins (a century of daily files is 36,525).
MAX_INPUT_FILES = 100_000


def check_template_size(path) -> None:
    """Refuse a template file larger than :data:`MAX_TEMPLATE_BYTES`, before reading it."""
    size = os.stat(path).st_size
    if size > MAX_TEMPLATE_BYTES:
        raise TooLargeError(f"{path}: template of {_human(size)}; templates are limited to "
                            f"{_human(MAX_TEMPLATE_BYTES)} (a model input file template is a "
                            "few KiB)")


def check_input_count(count: int) -> None:
    """Refuse more than :data:`MAX_INPUT_FILES` input files to convert, before opening any."""
    if count > MAX_INPUT_FILES:
        raise TooLargeError(f"{count:,} input files; one conversion joins at most "
                            f"{MAX_INPUT_FILES:,} (convert them in several runs)")


def memory_limit_bytes() -> int:
    """Memory a build may use: half of this machine's physical memory (at least 1 GiB)."""
    try:
        total = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (ValueError, OSError, AttributeError):  # pragma: no cover - not POSIX
        total = 8 * 2**30
    return max(2**30, total // 2)


def _human(n: float) -> str:
    try:
        n = float(n)
    except OverflowError:  # an int beyond any double
        n = math.inf
    if not n < 2**50 * 1e6:
        return "more than a million PiB"
    for unit in ("bytes", "KiB", "MiB", "GiB", "TiB", "PiB"):
        if n < 1024 or unit == "PiB":
            return f"{n:.0f} {unit}" if unit == "bytes" else f"{n:.1f} {unit}"
        n /= 1024
    return f"{n:.1f} PiB"  # pragma: no cover


def _about(n: float) -> str:
    """``about 1.2 GiB``, or ``more than a million PiB`` for a size beyond all reason."""
    text = _human(n)
    return text if text.startswith("more than") else f"about {text}"


def _count(n: float) -> str:
    """Write a count with thousands separators, or its order when it is beyond all reason."""
    try:
        small = float(n) < 1e15
    except OverflowError:
        small = False
    return f"{n:,.0f}" if small else "more than 10^15"


def grid_cells(grid) -> tuple[int, str]:
    """Cells of a spec's grid and a phrase naming what sets them (no grid is made)."""
    if grid is None:
        return 1, "no grid"
    kind = grid.kind
    if kind == "file":
        return 0, "grid.path"  # a file's grid is as large as the file's axes: read later
    if kind == "gaussian":
        nlat = int(grid.nlat)
        nlon = int(grid.nlon) if getattr(grid, "nlon", None) else 2 * nlat
        return nlat * nlon, f"grid.nlat {grid.nlat}"

    def count(values, step, span):
        if values is not None:
            return len(values)
        return max(1, math.ceil(span / float(step) - 1e-9)) if step else 1

    res = grid.resolution_deg
    nlat = count(grid.latitudes_deg, grid.lat_resolution_deg or res, 180.0)
    if kind == "zonal":
        return nlat, f"grid.resolution_deg {res:g}" if res else "grid.latitudes_deg"
    nlon = count(grid.longitudes_deg, grid.lon_resolution_deg or res, 360.0)
    key = (f"grid.resolution_deg {res:g}" if res else "grid.lat_resolution_deg/lon_resolution_deg"
           if grid.lat_resolution_deg else "grid.latitudes_deg")
    return nlat * nlon, key


#: Time steps of each gridded product of a time slice (a leap year at most).
_STEPS = {"daily_insolation": 366, "monthly_insolation_fixed_day": 12,
          "monthly_insolation_fixed_angle": 12}


def check_timeslice(spec, limit: int | None = None) -> None:
    """Refuse a time-slice spec whose products would not fit in memory, before any work."""
    limit = memory_limit_bytes() if limit is None else limit
    cells, key = grid_cells(spec.grid)
    need, parts = 0, []
    for product in spec.products:
        if product in _STEPS:
            n = _STEPS[product] * cells * BYTES_PER_VALUE
            need += n
            parts.append(f"{product} {_STEPS[product]} x {_count(cells)} cells")
    table = getattr(spec, "timestep_table", None)
    if table is not None and "timestep_table" in spec.products:
        rows = 1440.0 / float(table.timestep_minutes) * len(table.days or range(366)) \
            * len(table.points)
        n = rows * BYTES_PER_TABLE_ROW
        need += n
        if n > limit:
            raise TooLargeError(
                f"timestep_table.timestep_minutes {table.timestep_minutes:g}: the table would "
                f"have {_count(rows)} rows, {_about(n)}; the limit is {_human(limit)} (half "
                "this machine's memory): use a longer timestep, fewer days or fewer points")
    if need > limit:
        raise TooLargeError(
            f"{key}: the products need {_about(need)} of memory ({'; '.join(parts)}); "
            f"the limit is {_human(limit)} (half this machine's memory): use a coarser grid "
            "or fewer gridded products")


def check_transient_step(spec) -> None:
    """Refuse a transient spec whose single time step would not fit (streaming needs one)."""
    cells, key = grid_cells(spec.grid)
    if cells > MAX_STEP_CELLS:
        raise TooLargeError(
            f"{key}: one time step has {_count(cells)} cells, {_about(cells * 8)} as "
            f"float64; the limit is {MAX_STEP_CELLS:,} cells: use a coarser grid")
