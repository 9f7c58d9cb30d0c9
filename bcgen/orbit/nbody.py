r"""A modern orbital solution computed by bcgen: the planets integrated from DE421.

The planets from the Sun to Neptune are integrated from the JPL DE421 state at
J2000 with REBOUND and REBOUNDx (general relativity; the Earth–Moon barycentre
as one body with the Earth–Moon quadrupole; see
:mod:`bcgen.orbit.nbody_integrate`). The Earth's eccentricity and perihelion
come from the integrated orbit; the obliquity and the moving equinox come from
the precession equations of Laskar et al. (1993, 2004) driven by the integrated
orbital plane, with today's precession constant and, unless set, today's tidal
dissipation and dynamical ellipticity (:mod:`bcgen.orbit.precession`).

The package carries the solution as a table, 2050 CE to 5 Myr BP every 100
years (``bcgen/data/nbody/``), made by ``python -m bcgen.orbit.nbody_generate``
from the same code; reading it needs only numpy. Between rows e and ε are
interpolated linearly and ϖ through (e sin ϖ, e cos ϖ), as for a user's table.
Further back, the integration goes on from the table's last state on first use
(about 3 minutes of CPU per Myr, with ``pip install 'bcgen[nbody]'``) and
is kept in a cache on disk (``$BCGEN_CACHE_DIR``, default ``~/.cache/bcgen``).

After 2050 CE the planets are integrated forward from the same DE421 state at
J2000 through the same 100-year windows, and the spin axis from the mean pole of
J2000, on first use (5 kyr at a time, about a second of CPU each) and kept in
the same cache; the forward run's first row is the table's own 2050 CE row.

Validity: within 10 Myr of 1950 CE, past or future. Beyond 10 Myr an
:class:`~bcgen.errors.OutsideValidityWarning` is issued: the phase of the
precession depends there on the poorly known tidal history (Laskar et al.
2004, §10), and the orbit itself is chaotic, so that solutions diverge beyond
about 50 Myr (Laskar et al. 2011); epochs more than 50 Myr from 1950 CE are
refused.

References
----------
Laskar et al. (1993) and Laskar et al. (2004), the precession equations: see
:mod:`bcgen.orbit.precession`.
Laskar, J., Fienga, A., Gastineau, M. & Manche, H. (2011): La2010: a new
orbital solution for the long-term motion of the Earth. A&A 532, A89,
doi:10.1051/0004-6361/201116836.
"""

from __future__ import annotations

import hashlib
import os
import warnings
from dataclasses import dataclass
from functools import cache, cached_property
from importlib import resources
from pathlib import Path

import numpy as np

from bcgen.arguments import real_array
from bcgen.epochs import J2000_YEARS_FROM_1950, format_epoch
from bcgen.errors import LongComputationWarning, OrbitError, OutsideValidityWarning
from bcgen.orbit.elements import OrbitalElements

NAME = "nbody"
REFERENCE = (
    "bcgen's integration of the planets from the JPL DE421 state (REBOUND WHFast with "
    "REBOUNDx general relativity) with the precession equations of Laskar et al. (1993), "
    "A&A 270, 522 and Laskar et al. (2004), A&A 428, 261, doi:10.1051/0004-6361:20041335"
)
#: Stated validity: epochs within this many years of 1950 CE, past or future.
VALID_YEARS = 10e6
#: Epochs further than this from 1950 CE are refused (chaos; Laskar et al. 2011).
LIMIT_YEARS = 50e6
#: Rows of the forward integration done at once (5 kyr); fixed, so that the cached rows
#: are the same whatever epochs were asked for first.
FUTURE_CHUNK_ROWS = 50
TABLE_FILE = "nbody_table.npz"
#: CPU seconds one simulated Myr of integration takes, for the notice given before a long
#: one (measured by tests/benchmarks/bench_nbody_generate.py: 157-167 s on the project's
#: 2-core machine; an order of magnitude, not a promise).
CPU_SECONDS_PER_MYR = 160.0

_COLUMNS = ("eccentricity", "obliquity_deg", "e_sin_varpi", "e_cos_varpi")


@dataclass(frozen=True)
class Table:
    """Rows of the solution on a uniform grid of epochs (years from 1950 CE).

    ``columns`` maps each name of :data:`_COLUMNS` to a float64 array, one value per row;
    :meth:`lerp_parts` holds each column as its rows (but the last) and the change to the
    next row, so that a linear interpolation is one gather and one multiply-add.
    """

    first_epoch: float
    step_years: float
    columns: dict  # name -> 1-D float64 array (see _COLUMNS)

    @property
    def n_rows(self) -> int:
        """Number of rows."""
        return len(self.columns["eccentricity"])

    @property
    def last_epoch(self) -> float:
        """Epoch of the last (oldest) row."""
        return self.first_epoch + self.step_years * (self.n_rows - 1)

    @property
    def years_from_1950(self) -> np.ndarray:
        """Epoch of every row."""
        return self.first_epoch + self.step_years * np.arange(self.n_rows)

    @cached_property
    def lerp_parts(self) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        """Column name -> (rows but the last, change to the next row), float64."""
        return {name: (np.ascontiguousarray(v[:-1]), np.diff(v))
                for name, v in self.columns.items()}

    def check(self, where: str) -> Table:
        """Refuse rows that are not orbital elements (once, when the table is read).

        Values interpolated between checked rows stay within their range, so the
        elements evaluated from the table need no check of their own.
        """
        c = self.columns
        bad = [name for name in _COLUMNS if not np.all(np.isfinite(c[name]))]
        if self.n_rows < 2 or bad or not (np.isfinite(self.first_epoch)
                                          and np.isfinite(self.step_years)
                                          and self.step_years != 0):
            raise OrbitError(f"{where}: not a table of the nbody solution (fewer than 2 rows, "
                             "or values that are not finite numbers)")
        e, eps = c["eccentricity"], c["obliquity_deg"]
        if not (np.all((e >= 0) & (e < 0.5)) and np.all((eps >= 0) & (eps <= 90))):
            raise OrbitError(f"{where}: eccentricity outside [0, 0.5) or obliquity outside "
                             "[0, 90] degrees; remake the table with "
                             "python -m bcgen.orbit.nbody_generate")
        return self


def table_source() -> str:
    """Return the table in use: ``$BCGEN_NBODY_TABLE`` if set, else the bundled one.

    ``BCGEN_NBODY_TABLE`` names a table made by ``python -m
    bcgen.orbit.nbody_generate`` (a longer one, say); the tests use it too.
    """
    return os.environ.get("BCGEN_NBODY_TABLE") or ""


def raw_table() -> dict[str, np.ndarray]:
    """All arrays of the table in use (see :mod:`bcgen.orbit.nbody_generate`)."""
    return _raw(table_source())


@cache
def _raw(source: str) -> dict[str, np.ndarray]:
    path = Path(source) if source else resources.files("bcgen.data") / "nbody" / TABLE_FILE
    try:
        with path.open("rb") as fh, np.load(fh) as data:
            return {name: data[name] for name in data.files}
    except (OSError, ValueError, KeyError) as exc:
        raise OrbitError(f"{path}: cannot read the nbody table ({exc})") from None


@cache
def _table(source: str) -> Table:
    raw = _raw(source)
    table = Table(float(raw["first_epoch_years_from_1950"]), float(raw["step_years"]),
                  {name: np.ascontiguousarray(raw[name], dtype=float) for name in _COLUMNS})
    return table.check(source or TABLE_FILE)


def cache_dir() -> Path:
    """Folder of the on-the-fly integrations beyond the table."""
    root = os.environ.get("BCGEN_CACHE_DIR") or Path.home() / ".cache" / "bcgen"
    return Path(root)


#: Epochs evaluated at once by :func:`interpolate_rows`: its work arrays stay in the CPU cache.
BLOCK_EPOCHS = 1 << 14


def interpolate_rows(table: Table, years_from_1950) -> OrbitalElements:
    """Elements at the epochs, linear between rows (ϖ through its components).

    The epochs must be finite and lie within the table (:func:`solve` checks both);
    an epoch outside takes the nearest row pair's straight line. The work goes in
    blocks of :data:`BLOCK_EPOCHS` epochs with reused buffers, so that only the three
    outputs and the epochs' own copy are allocated at full size.
    """
    t = np.array(years_from_1950, dtype=float)  # a copy: the elements keep their epochs
    flat = t.reshape(-1)
    n = flat.size
    parts = table.lerp_parts
    outputs = {name: np.empty(n) for name in ("eccentricity", "obliquity_deg", "varpi")}
    size = max(1, min(n, BLOCK_EPOCHS))
    x, tmp, sine, cosine = (np.empty(size) for _ in range(4))
    row = np.empty(size, dtype=np.intp)
    scale, last_pair = 1.0 / table.step_years, table.n_rows - 2
    for lo in range(0, n, size):
        hi = min(lo + size, n)
        m = hi - lo
        xb, ib, tb = x[:m], row[:m], tmp[:m]
        np.subtract(flat[lo:hi], table.first_epoch, out=xb)
        xb *= scale  # fractional row, >= 0 inside the table
        np.copyto(ib, xb, casting="unsafe")  # truncation: the row before t
        np.clip(ib, 0, last_pair, out=ib)
        xb -= ib  # the weight of the next row
        for name, out in (("eccentricity", outputs["eccentricity"][lo:hi]),
                          ("obliquity_deg", outputs["obliquity_deg"][lo:hi]),
                          ("e_sin_varpi", sine[:m]), ("e_cos_varpi", cosine[:m])):
            base, change = parts[name]
            np.take(base, ib, out=out, mode="clip")  # ib is in range: no index check
            np.take(change, ib, out=tb, mode="clip")
            tb *= xb
            out += tb
        np.arctan2(sine[:m], cosine[:m], out=outputs["varpi"][lo:hi])
    varpi_deg = np.degrees(outputs["varpi"], out=outputs["varpi"])  # (-180, 180]
    np.add(varpi_deg, 360.0, out=varpi_deg, where=varpi_deg < 0.0)
    np.copyto(varpi_deg, 0.0, where=varpi_deg >= 360.0)  # -1e-14 + 360 rounds to 360
    return OrbitalElements.from_checked(
        *(a.reshape(t.shape) for a in (outputs["eccentricity"], outputs["obliquity_deg"],
                                       varpi_deg)), t, NAME)


def solve(years_from_1950, *, dynamical_ellipticity: float = 1.0,
          tidal_dissipation: float = 1.0) -> OrbitalElements:
    """Orbital elements of the ``nbody`` solution at the epochs.

    Parameters
    ----------
    years_from_1950 : float or array_like
        Epochs in years relative to 1950 CE (negative in the past), from
        50 Myr BP to 50 Myr after 1950 CE.
    dynamical_ellipticity : float
        The Earth's dynamical ellipticity as a multiple of today's (default 1).
    tidal_dissipation : float
        The tidal dissipation in the Earth–Moon system as a multiple of today's
        (default 1; 0 holds the Moon's distance and the length of day at
        today's values).

    Returns
    -------
    OrbitalElements
        e, ε and ϖ (from the moving March equinox) with the shape of the input.

    Raises
    ------
    OrbitError
        For epochs that are not finite numbers, more than 50 Myr from 1950 CE, or
        options out of range.

    Warns
    -----
    OutsideValidityWarning
        For epochs more than 10 Myr from 1950 CE (past or future).
    """
    t = np.asarray(years_from_1950)
    if t.dtype.kind not in "iuf":  # lists of numbers become floats; text, booleans refused
        t = real_array(years_from_1950, "years_from_1950", OrbitError,
                       "years from 1950 CE as numbers")
    for name, value in (("dynamical_ellipticity", dynamical_ellipticity),
                        ("tidal_dissipation", tidal_dissipation)):
        if not (np.isfinite(value) and 0.0 <= value <= 10.0 and
                (value > 0 or name == "tidal_dissipation")):
            raise OrbitError(f"{name} is a multiple of today's value, expected a number in "
                             f"(0, 10] (1 = today's); got {value!r}")
    source = table_source()
    table = _table(source)
    if t.size == 0:
        return OrbitalElements(t, t, t, t, NAME)
    newest, oldest = float(np.max(t)), float(np.min(t))  # NaN in t makes both NaN
    if not (np.isfinite(newest) and np.isfinite(oldest)):
        raise OrbitError("epochs must be finite numbers of years from 1950 CE; got NaN or inf")
    _check_validity(newest, oldest)
    n_past = _extension_rows(table, oldest) if oldest < table.last_epoch else 0
    n_future = _future_rows(table, newest)
    options = (float(dynamical_ellipticity), float(tidal_dissipation))
    if n_past or n_future or options != (1.0, 1.0):
        table = _evaluated(source, n_past, n_future, *options)
    return interpolate_rows(table, t)


def _check_validity(newest: float, oldest: float) -> None:
    """Refuse epochs beyond 50 Myr either way; warn beyond 10 Myr."""
    worst = oldest if -oldest >= newest else newest
    if abs(worst) > LIMIT_YEARS:
        raise OrbitError(
            f"epoch {format_epoch(worst)} is more than 50 Myr from 1950 CE, where the chaotic "
            "motion of the planets makes every orbital solution uncertain (Laskar et al. 2011)"
        )
    if abs(worst) > VALID_YEARS:
        warnings.warn(
            f"epoch {format_epoch(worst)} is more than 10 Myr from 1950 CE, beyond the stated "
            "validity of the nbody solution (the precession there depends on the unknown "
            "tidal history)",
            OutsideValidityWarning,
            stacklevel=3,
        )


@cache
def _evaluated(source: str, n_past: int, n_future: int, dynamical_ellipticity: float,
               tidal_dissipation: float) -> Table:
    """Extend the table by ``n_past`` rows beyond its end and ``n_future`` before its start."""
    table = _table(source)
    if (dynamical_ellipticity, tidal_dissipation) != (1.0, 1.0):
        table = _with_precession(source, table.n_rows + n_past, dynamical_ellipticity,
                                 tidal_dissipation)
    elif n_past:
        table = _extended(source, n_past)
    if not n_future:
        return table
    future = _future_columns(source, n_future, dynamical_ellipticity, tidal_dissipation)
    return Table(table.first_epoch - n_future * table.step_years, table.step_years,
                 {name: np.concatenate([future[name][:0:-1], table.columns[name]])
                  for name in _COLUMNS})


# --- beyond the table: integration on the fly, cached on disk ---------------------------


def needs_integration(years_from_1950) -> bool:
    """Whether :func:`solve` would integrate for these epochs (beyond the table and cache)."""
    t = np.asarray(years_from_1950, dtype=float)
    if t.size == 0:
        return False
    source = table_source()
    table = _table(source)
    oldest, newest = float(np.min(t)), float(np.max(t))
    if max(-oldest, newest) > LIMIT_YEARS:
        return False
    n_future = _future_rows(table, newest)
    if n_future and n_future >= _cached_rows(_future_path(source)):  # (cache from row 0)
        return True
    if oldest >= table.last_epoch:
        return False
    return _cached_rows(_extension_path(source)) < _extension_rows(table, oldest)


def _cached_rows(path: Path) -> int:
    if not path.exists():
        return 0
    with np.load(path) as saved:
        return len(saved["ecc_vector"])


def _extension_path(source: str) -> Path:
    raw = _raw(source)
    key = hashlib.sha256(raw["end_state"].tobytes() + raw["end_spin"].tobytes()).hexdigest()
    return cache_dir() / f"nbody_extension_{key[:16]}.npz"


def _extension_rows(table: Table, oldest_years_from_1950: float) -> int:
    behind = (table.last_epoch - oldest_years_from_1950) / -table.step_years
    return int(np.ceil(behind - 1e-9)) + 1


def _extended_vectors(source: str, n_rows: int) -> dict[str, np.ndarray]:
    """At least ``n_rows`` integrated rows after the table's last one (cached on disk)."""
    from bcgen.orbit import nbody_generate as gen
    from bcgen.orbit import nbody_integrate as integ

    raw = _raw(source)
    path = _extension_path(source)
    ext = {"ecc_vector": np.empty((0, 3), np.float32),
           "orbit_normal": np.empty((0, 3), np.float32),
           "next_state": raw["end_state"]}
    if path.exists():
        with np.load(path) as saved:
            ext = {name: saved[name] for name in saved.files}
    base = len(raw["eccentricity"])
    _say_how_long(n_rows - len(ext["ecc_vector"]), path, "beyond its bundled table")
    while len(ext["ecc_vector"]) < n_rows:
        lo = base + len(ext["ecc_vector"])
        epochs = gen.row_epochs(lo + gen.CHUNK_ROWS)[lo:]
        ext = _integrate_and_cache(path, ext, integ.State.from_array(ext["next_state"]),
                                   epochs)
    return ext


def _say_how_long(rows: int, path: Path, where: str) -> None:
    """Warn before an integration of more than about ten seconds, with its size and cache."""
    from bcgen.orbit import nbody_generate as gen

    myr = rows * abs(gen.STEP_YEARS) / 1e6
    seconds = myr * CPU_SECONDS_PER_MYR
    if seconds >= 10.0:
        took = f"{seconds / 60:.0f} min" if seconds >= 90 else f"{seconds:.0f} s"
        warnings.warn(f"integrating the nbody solution {where}: {myr:.2f} Myr of planetary "
                      f"motion, roughly {took} of CPU; the result is kept in {path.parent} "
                      "for later runs", LongComputationWarning, stacklevel=3)


def _integrate_and_cache(path: Path, saved: dict, state, epochs) -> dict[str, np.ndarray]:
    """Integrate rows on from ``state``, append them to ``saved`` and write it to ``path``."""
    from bcgen.orbit import nbody_generate as gen
    from bcgen.orbit import nbody_integrate as integ

    ecc, normal, end = integ.integrate_rows(state, epochs)
    saved = {"ecc_vector": np.concatenate([saved["ecc_vector"], ecc.astype(np.float32)]),
             "orbit_normal": np.concatenate([saved["orbit_normal"], normal.astype(np.float32)]),
             "next_state": end.as_array()}
    path.parent.mkdir(parents=True, exist_ok=True)
    gen.save_atomic(path, saved)
    return saved


@cache
def _extended(source: str, n_rows: int) -> Table:
    from bcgen.orbit import nbody_generate as gen
    from bcgen.orbit import precession

    raw = _raw(source)
    ext = _extended_vectors(source, n_rows)
    table = _table(source)
    last = table.last_epoch
    epochs = last + table.step_years * np.arange(n_rows + 1)
    normal = np.vstack([raw["orbit_normal"][-1:], ext["orbit_normal"][:n_rows]]).astype(float)
    ecc_vec = np.vstack([raw["ecc_vector"][-1:], ext["ecc_vector"][:n_rows]]).astype(float)
    spin = precession.spin_axis(epochs, normal, np.linalg.norm(ecc_vec, axis=-1), last,
                                raw["end_spin"], eccentricity_j2000=gen.eccentricity_j2000(raw))
    cols = gen.elements_columns(ecc_vec[1:], normal[1:], spin[1:])
    return Table(table.first_epoch, table.step_years,
                 {name: np.concatenate([table.columns[name], cols[name]]) for name in _COLUMNS})


@cache
def _with_precession(source: str, n_rows: int, dynamical_ellipticity: float,
                     tidal_dissipation: float) -> Table:
    """Solve the precession again for other options, over the table and its extension."""
    from bcgen.orbit import nbody_generate as gen

    raw = _raw(source)
    ecc_vec, normal = raw["ecc_vector"], raw["orbit_normal"]
    extra = n_rows - len(ecc_vec)
    if extra > 0:
        ext = _extended_vectors(source, extra)
        ecc_vec = np.vstack([ecc_vec, ext["ecc_vector"][:extra]])
        normal = np.vstack([normal, ext["orbit_normal"][:extra]])
    spin = gen.solve_spin(ecc_vec, normal, dynamical_ellipticity=dynamical_ellipticity,
                          tidal_dissipation=tidal_dissipation)
    table = _table(source)
    return Table(table.first_epoch, table.step_years,
                 gen.elements_columns(ecc_vec, normal, spin))


# --- after the table: forward from the DE421 state, cached on disk ----------------------


def _future_rows(table: Table, newest_years_from_1950: float) -> int:
    """Rows needed after the table's first one (2050 CE) to reach an epoch."""
    ahead = (newest_years_from_1950 - table.first_epoch) / -table.step_years
    return max(0, int(np.ceil(ahead - 1e-9)))


def _future_path(source: str) -> Path:
    raw = _raw(source)
    key = hashlib.sha256(b"forward" + raw["ecc_vector"][0].tobytes()
                         + raw["orbit_normal"][0].tobytes()).hexdigest()
    return cache_dir() / f"nbody_future_{key[:16]}.npz"


def future_vectors(source: str, n_rows: int) -> dict[str, np.ndarray]:
    """Rows 0 (2050 CE) to ``n_rows`` of the forward integration from J2000 (cached on disk).

    The planets go forward from the DE421 state at J2000 through the same 100-year
    windows as the table (row 0 is the table's own first row, integrated again), in
    chunks of :data:`FUTURE_CHUNK_ROWS` rows, each started from the synchronised end
    state of the one before; the rows so far and that state are kept in the cache.
    """
    from bcgen.orbit import nbody_generate as gen
    from bcgen.orbit import nbody_integrate as integ

    path = _future_path(source)
    saved = {"ecc_vector": np.empty((0, 3), np.float32),
             "orbit_normal": np.empty((0, 3), np.float32), "next_state": None}
    if path.exists():
        with np.load(path) as data:
            saved = {name: data[name] for name in data.files}
    step = -gen.STEP_YEARS
    _say_how_long(n_rows + 1 - len(saved["ecc_vector"]), path, "forward from 2050 CE")
    while len(saved["ecc_vector"]) < n_rows + 1:
        lo = len(saved["ecc_vector"])
        epochs = gen.FIRST_ROW_YEARS_FROM_1950 + step * np.arange(lo, lo + FUTURE_CHUNK_ROWS)
        state = (integ.de421_state() if saved["next_state"] is None
                 else integ.State.from_array(saved["next_state"]))
        saved = _integrate_and_cache(path, saved, state, epochs)
    return saved


def _future_columns(source: str, n_rows: int, dynamical_ellipticity: float = 1.0,
                    tidal_dissipation: float = 1.0) -> dict[str, np.ndarray]:
    """Element columns of rows 0 (2050 CE) to ``n_rows`` ahead, in time order.

    Row 0 comes from the table; the spin axis goes from the mean pole of J2000
    forward through the rows, as the table's went back (1950 CE, 2050 CE, ...).
    """
    from bcgen.orbit import nbody_generate as gen
    from bcgen.orbit import precession

    raw = _raw(source)
    ahead = future_vectors(source, n_rows)
    ecc_vec = np.vstack([raw["ecc_vector"][1::-1], ahead["ecc_vector"][1 : n_rows + 1]])
    normal = np.vstack([raw["orbit_normal"][1::-1], ahead["orbit_normal"][1 : n_rows + 1]])
    ecc_vec, normal = ecc_vec.astype(float), normal.astype(float)
    epochs = gen.FIRST_ROW_YEARS_FROM_1950 - gen.STEP_YEARS * np.arange(-1, n_rows + 1)
    spin = precession.spin_axis(epochs, normal, np.linalg.norm(ecc_vec, axis=-1),
                                J2000_YEARS_FROM_1950, precession.POLE_J2000,
                                dynamical_ellipticity=dynamical_ellipticity,
                                tidal_dissipation=tidal_dissipation,
                                eccentricity_j2000=gen.eccentricity_j2000(raw))
    return gen.elements_columns(ecc_vec[1:], normal[1:], spin[1:])
