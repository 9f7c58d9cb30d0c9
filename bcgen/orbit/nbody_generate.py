"""Generate the table of the ``nbody`` orbital solution (the bundled one, or a longer one).

Command (the one that made ``bcgen/data/nbody/nbody_table.npz``)::

    python -m bcgen.orbit.nbody_generate --span-kyr 5000 -o bcgen/data/nbody/nbody_table.npz

It integrates the planets from the DE421 state at J2000 (see
:mod:`bcgen.orbit.nbody_integrate`) one chunk of 50 kyr after another, each
chunk started afresh from the synchronised state at the end of the previous
one, so that the result is the same whether the run goes straight through or
is stopped and resumed: after every chunk the rows so far and the state are
written to ``<output>.partial.npz`` (atomically), and a new run with the same
arguments resumes from there. Memory stays constant (one chunk of samples).
At the end the precession equations (:mod:`bcgen.orbit.precession`) are solved
along the whole table and the file is written.

Rows are 100 years apart: row 0 is 2050 CE (+100 years from 1950), row 1 is
1950 CE, and so on into the past. Each row holds the 100-year mean of the
Earth–Moon barycentre's eccentricity vector and orbit normal (float32, J2000
ecliptic frame) and the elements of date derived from them (float64).
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

from bcgen.epochs import J2000_YEARS_FROM_1950
from bcgen.orbit import nbody_integrate as integ
from bcgen.orbit import precession

CHUNK_ROWS = 500
FIRST_ROW_YEARS_FROM_1950 = 100.0
STEP_YEARS = -integ.ROW_STEP_YEARS


def row_epochs(n_rows: int) -> np.ndarray:
    """Epochs (years from 1950 CE) of the first ``n_rows`` rows."""
    return FIRST_ROW_YEARS_FROM_1950 + STEP_YEARS * np.arange(n_rows)


def rows_for_span(span_years: float) -> int:
    """Count the rows from 2050 CE back to ``span_years`` before 1950 CE."""
    return int(np.ceil((FIRST_ROW_YEARS_FROM_1950 + span_years) / -STEP_YEARS - 1e-9)) + 1


def chunk_rows(n_rows: int) -> list[tuple[int, int]]:
    """(first, stop) row indices of each backward chunk (row 0 is integrated forwards)."""
    return [(lo, min(lo + CHUNK_ROWS, n_rows)) for lo in range(1, n_rows, CHUNK_ROWS)]


def elements_columns(ecc_vector, orbit_normal, spin) -> dict[str, np.ndarray]:
    """Compute the float64 element columns of the table from its vectors and the spin axis."""
    e, obliquity, varpi = precession.elements_of_date(ecc_vector, orbit_normal, spin)
    varpi_rad = np.deg2rad(varpi)
    return {
        "eccentricity": e,
        "obliquity_deg": obliquity,
        "e_sin_varpi": e * np.sin(varpi_rad),
        "e_cos_varpi": e * np.cos(varpi_rad),
    }


def solve_spin(ecc_vector, orbit_normal, **options) -> np.ndarray:
    """Integrate the spin axis to every row, from the mean pole of J2000."""
    t = row_epochs(len(orbit_normal))
    ecc = np.linalg.norm(np.asarray(ecc_vector, dtype=float), axis=-1)
    return precession.spin_axis(t, np.asarray(orbit_normal, dtype=float), ecc,
                                J2000_YEARS_FROM_1950, precession.POLE_J2000,
                                **options)


def save_atomic(path: Path, arrays: dict) -> None:
    """Write arrays to a compressed ``.npz`` through a temporary file renamed into place."""
    tmp = path.with_name(path.name + ".tmp.npz")
    np.savez_compressed(tmp, **arrays)
    os.replace(tmp, path)


def generate(span_years: float, output, *, log=None) -> dict[str, np.ndarray]:
    """Integrate from 2050 CE back ``span_years`` before 1950 CE and write the table.

    Parameters
    ----------
    span_years : float
        How far back, in years before 1950 CE (5e6 for the bundled table).
    output : path
        The ``.npz`` file to write; ``<output>.partial.npz`` holds the checkpoint.
    log : callable, optional
        Called with one line of progress after every chunk.

    Returns
    -------
    dict
        The arrays written.
    """
    output = Path(output)
    partial = output.with_name(output.name + ".partial.npz")
    n_rows = rows_for_span(span_years)
    chunks = chunk_rows(n_rows)
    start = integ.de421_state()
    if partial.exists():
        with np.load(partial) as saved:
            done = {name: saved[name] for name in saved.files}
        if int(done["n_rows"]) != n_rows:
            raise SystemExit(f"{partial}: a checkpoint for another span; remove it to start anew")
    else:
        first_e, first_n, _ = integ.integrate_rows(start, row_epochs(1))
        done = {
            "n_rows": np.array(n_rows),
            "ecc_vector": first_e.astype(np.float32),
            "orbit_normal": first_n.astype(np.float32),
            "chunk_state": np.empty((0, start.as_array().size)),
            "next_state": start.as_array(),
        }
    epochs = row_epochs(n_rows)
    t0 = time.perf_counter()
    for index in range(len(done["chunk_state"]), len(chunks)):
        lo, hi = chunks[index]
        state = integ.State.from_array(done["next_state"])
        ecc, normal, end = integ.integrate_rows(state, epochs[lo:hi])
        done["ecc_vector"] = np.concatenate([done["ecc_vector"], ecc.astype(np.float32)])
        done["orbit_normal"] = np.concatenate([done["orbit_normal"],
                                               normal.astype(np.float32)])
        done["chunk_state"] = np.concatenate([done["chunk_state"], state.as_array()[None]])
        done["next_state"] = end.as_array()
        save_atomic(partial, done)
        if log is not None:
            elapsed = time.perf_counter() - t0
            log(f"{-epochs[hi - 1] / 1e3:8.0f} ka  chunk {index + 1}/{len(chunks)}  "
                f"{elapsed:7.0f} s this run")
    table = with_elements({
        "first_epoch_years_from_1950": np.array(FIRST_ROW_YEARS_FROM_1950),
        "step_years": np.array(STEP_YEARS),
        "ecc_vector": done["ecc_vector"],
        "orbit_normal": done["orbit_normal"],
        "chunk_first_row": np.array([lo for lo, _ in chunks]),
        "chunk_state": done["chunk_state"],
        "end_state": done["next_state"],
        "time_step_days": np.array(integ.TIME_STEP_DAYS),
        "samples_per_row": np.array(integ.SAMPLES_PER_ROW),
        "software": np.array(_software()),
    })
    save_atomic(output, table)
    partial.unlink()
    return table


def with_elements(table: dict) -> dict:
    """Solve anew the spin-dependent arrays of a table (elements, chunk and end spins)."""
    spin = solve_spin(table["ecc_vector"], table["orbit_normal"])
    return {
        **table,
        **elements_columns(table["ecc_vector"], table["orbit_normal"], spin),
        "chunk_spin": spin[table["chunk_first_row"]],
        "end_spin": spin[-1],
    }


def _software() -> str:
    from importlib.metadata import version

    return ", ".join(f"{name} {version(name)}" for name in
                     ("rebound", "reboundx", "jplephem", "de421", "numpy"))


def regenerate_chunk(table, index: int, n_rows: int | None = None):
    """Integrate again the first ``n_rows`` rows of chunk ``index`` of a table.

    Returns the eccentricity vectors and orbit normals (float32, as stored) and
    the element columns, with the spin integrated from the chunk's stored spin.
    """
    lo = int(table["chunk_first_row"][index])
    hi = lo + (n_rows or CHUNK_ROWS)
    epochs = row_epochs(hi)[lo:hi]
    state = integ.State.from_array(table["chunk_state"][index])
    ecc, normal, _ = integ.integrate_rows(state, epochs)
    ecc32, normal32 = ecc.astype(np.float32), normal.astype(np.float32)
    e = np.linalg.norm(ecc32.astype(float), axis=-1)
    spin = precession.spin_axis(epochs, normal32.astype(float), e, epochs[0],
                                table["chunk_spin"][index],
                                eccentricity_j2000=eccentricity_j2000(table))
    return ecc32, normal32, elements_columns(ecc32, normal32, spin)


def eccentricity_j2000(table) -> float:
    """E at J2000 (halfway between rows 0 and 1), the calibration point of the precession."""
    e = np.linalg.norm(np.asarray(table["ecc_vector"][:2], dtype=float), axis=-1)
    return float(0.5 * (e[0] + e[1]))  # J2000 lies halfway between rows 0 and 1


def main(argv=None) -> int:
    """Command-line entry: ``python -m bcgen.orbit.nbody_generate``."""
    parser = argparse.ArgumentParser(
        prog="python -m bcgen.orbit.nbody_generate",
        description="Integrate the planets from the DE421 state and write the table of the "
        "nbody orbital solution (resumable: rerun the same command after a stop).",
    )
    parser.add_argument("--span-kyr", type=float, default=5000.0,
                        help="how far back before 1950 CE, in kyr (default: 5000)")
    parser.add_argument("-o", "--output", required=True, help="the .npz file to write")
    parser.add_argument("--elements-only", action="store_true",
                        help="keep the integrated vectors of the existing OUTPUT and solve only "
                        "the precession again (after a change to bcgen.orbit.precession)")
    args = parser.parse_args(argv)
    if args.elements_only:
        with np.load(args.output) as data:
            table = {name: data[name] for name in data.files}
        save_atomic(Path(args.output), with_elements(table))
        return 0
    generate(args.span_kyr * 1e3, args.output,
             log=lambda line: print(line, file=sys.stderr, flush=True))
    return 0


if __name__ == "__main__":
    sys.exit(main())
