"""Orbital elements interpolated from a user-supplied table (CSV or NetCDF).

The table declares its own units and conventions through its column names, so
nothing is guessed:

===============================  =============================================
column (CSV header / variable)   meaning
===============================  =============================================
one time column:
``age_ka_bp``                    thousands of years before 1950 CE
``age_years_bp``                 years before 1950 CE
``year_ce``                      calendar year CE (astronomical numbering)
``years_from_1950``              years relative to 1950 CE, negative in the past
``eccentricity``                 eccentricity (dimensionless)
``obliquity_deg`` / ``_rad``     obliquity
one perihelion column:
``perihelion_longitude_deg``     ϖ, heliocentric from the moving March equinox
``sun_longitude_at_perihelion_deg``  ϖ + 180°
(either with ``_rad`` instead)
===============================  =============================================

Between rows, e and ε are interpolated linearly and the perihelion through its
components (e·sin ϖ, e·cos ϖ), so that it never jumps across 0/360°. An epoch
outside the table is an error.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from bcgen import arguments
from bcgen.epochs import format_epoch
from bcgen.errors import InputFileError, OrbitError
from bcgen.orbit.elements import OrbitalElements, convert_perihelion
from bcgen.textfile import content_lines

NAME = "table"
REFERENCE = "a table supplied by the user"

TIME_COLUMNS = {
    "age_ka_bp": lambda v: -1000.0 * v,
    "age_years_bp": lambda v: -v,
    "year_ce": lambda v: v - 1950.0,
    "years_from_1950": lambda v: v,
}
PERIHELION_COLUMNS = {
    f"{conv}_{unit}": (conv, unit)
    for conv in ("perihelion_longitude", "sun_longitude_at_perihelion")
    for unit in ("deg", "rad")
}
OBLIQUITY_COLUMNS = {"obliquity_deg": "deg", "obliquity_rad": "rad"}


def read_table(path) -> dict[str, np.ndarray]:
    """Read a CSV or NetCDF orbit table into columns (name → 1-D float array)."""
    path = Path(path)
    if not path.is_file():
        raise InputFileError(f"{path}: orbit table not found")
    if path.suffix.lower() in (".nc", ".nc4", ".cdf"):
        return _read_netcdf(path)
    return _read_csv(path)


def _read_csv(path: Path) -> dict[str, np.ndarray]:
    lines = content_lines(path, "orbit table")
    if len(lines) < 3:
        raise InputFileError(f"{path}: an orbit table needs a header line and at least two rows")
    header = [h.strip() for h in lines[0][1].split(",")]
    rows = []
    for n, line in lines[1:]:
        cells = line.split(",")
        if len(cells) != len(header):
            raise InputFileError(
                f"{path}:{n}: expected {len(header)} comma-separated values, found {len(cells)}"
            )
        try:
            rows.append([float(c) for c in cells])
        except ValueError:
            raise InputFileError(f"{path}:{n}: expected numbers, found {line.strip()!r}") from None
    data = np.array(rows)
    return {name: data[:, i] for i, name in enumerate(header)}


def _read_netcdf(path: Path) -> dict[str, np.ndarray]:
    import netCDF4

    try:
        with netCDF4.Dataset(path) as ds:
            return {
                name: np.ma.filled(var[:].astype(float), np.nan)
                for name, var in ds.variables.items()
                if var.ndim == 1 and var.dtype.kind in "iuf"
            }
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read as NetCDF ({exc})") from None


def _pick(columns: dict, choices: dict, what: str, path) -> str:
    found = [c for c in choices if c in columns]
    if len(found) != 1:
        raise InputFileError(
            f"{path}: expected exactly one {what} column named one of "
            f"{', '.join(choices)}; found {', '.join(found) or 'none'} among {', '.join(columns)}"
        )
    return found[0]


def load(path) -> OrbitalElements:
    """Read a table into :class:`OrbitalElements` sorted by epoch."""
    cols = read_table(path)
    tname = _pick(cols, TIME_COLUMNS, "time", path)
    oname = _pick(cols, OBLIQUITY_COLUMNS, "obliquity", path)
    pname = _pick(cols, PERIHELION_COLUMNS, "perihelion", path)
    if "eccentricity" not in cols:
        raise InputFileError(f"{path}: no 'eccentricity' column among {', '.join(cols)}")
    used = (tname, "eccentricity", oname, pname)
    if len({cols[name].size for name in used}) != 1 or cols[tname].size < 2:
        raise InputFileError(
            f"{path}: the columns {', '.join(used)} must have the same length, at least 2"
        )
    t = TIME_COLUMNS[tname](cols[tname])
    order = np.argsort(t)
    t = t[order]
    if np.any(np.diff(t) == 0) or not np.all(np.isfinite(t)):
        raise InputFileError(f"{path}: the {tname} column has repeated or missing epochs")
    obliquity = cols[oname][order]
    if OBLIQUITY_COLUMNS[oname] == "rad":
        obliquity = np.rad2deg(obliquity)
    try:  # the rule of every route: a "degree" that looks like radians is refused
        arguments.obliquity_deg(obliquity, f"column {oname}")
    except OrbitError as exc:
        raise InputFileError(f"{path}: {exc}") from None
    conv, unit = PERIHELION_COLUMNS[pname]
    try:
        varpi = convert_perihelion(cols[pname][order], conv, "perihelion_longitude", unit, "deg")
        return OrbitalElements(cols["eccentricity"][order], obliquity, varpi, t, NAME)
    except OrbitError as exc:
        raise InputFileError(f"{path}: {exc}") from None


def interpolate(table: OrbitalElements, years_from_1950) -> OrbitalElements:
    """Interpolate tabulated elements to epochs (see the module docstring for the method)."""
    t = np.asarray(years_from_1950, dtype=float)
    lo, hi = table.years_from_1950[0], table.years_from_1950[-1]
    outside = (t < lo) | (t > hi)
    if np.any(outside):
        bad = float(t[outside].flat[0])
        raise OrbitError(
            f"epoch {format_epoch(bad)} is outside the orbit table, which covers "
            f"{format_epoch(lo)} to {format_epoch(hi)}"
        )
    e = np.interp(t, table.years_from_1950, table.eccentricity)
    eps = np.interp(t, table.years_from_1950, table.obliquity_deg)
    varpi_tab = table.perihelion_longitude_rad
    esin = np.interp(t, table.years_from_1950, table.eccentricity * np.sin(varpi_tab))
    ecos = np.interp(t, table.years_from_1950, table.eccentricity * np.cos(varpi_tab))
    varpi = np.rad2deg(np.arctan2(esin, ecos))
    return OrbitalElements(e, eps, varpi, t, NAME)


def solve(years_from_1950, *, path=None) -> OrbitalElements:
    """Orbital elements at the epochs, interpolated from the table at ``path``.

    Parameters
    ----------
    years_from_1950 : float or array_like
        Epochs in years relative to 1950 CE, inside the table's range.
    path : str or os.PathLike
        A CSV or NetCDF table (see the module docstring for its columns).
    """
    if path is None:
        raise OrbitError("the table orbital solution needs the path of a CSV or NetCDF table")
    path = arguments.path(path, "path", OrbitError)
    try:
        return interpolate(load(path), years_from_1950)
    except OrbitError as exc:  # name the table whose range the epoch is outside
        raise OrbitError(f"{path}: {exc}") from None
