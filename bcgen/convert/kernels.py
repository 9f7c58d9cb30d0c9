"""Block kernels: the conversion of one block of data (time × points), fast and bounded.

The work on a block is memory-bound, so the kernels go through the block row by row
(one time step = one row of all the block's points, a few kilobytes that stay in the
processor cache) and fuse the steps: the Thomas sweeps read the input rows directly
(casting to float64 on the way), and each output row is summed from its few source
rows with weights that already include the division by the month length, then cast
to the output type. Only one float64 array the size of the block is needed
(:func:`workspace`, reused from block to block on each thread, because a fresh large
array costs a page fault per 4 KiB page, slower on common machines than the
arithmetic itself).

A block may come as several pieces along time (one per input file of a multi-file
set): the Thomas sweep reads their rows in turn (:func:`time_rows`), so the pieces are
never joined into one new array (a copy of the whole block, on a path that is bound
by memory traffic).

Columns with missing (non-finite) values are recomputed with the general NaN-aware
code of :mod:`bcgen.convert.interpolation` or :mod:`bcgen.convert.aggregate`. Every
column goes the same way whatever block it comes in, so dask-backed and numpy-backed
inputs give the same bits.
"""

from __future__ import annotations

import itertools
import threading
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

import numpy as np

_LOCAL = threading.local()


def workspace(name: str, shape: tuple[int, ...]) -> np.ndarray:
    """Return a float64 scratch array of ``shape`` kept for the calling thread as ``name``."""
    cache = getattr(_LOCAL, "arrays", None)
    if cache is None:
        cache = _LOCAL.arrays = {}
    arr = cache.get(name)
    if arr is None or arr.shape != shape:
        cache.pop(name, None)  # free the old one before allocating
        arr = cache[name] = np.empty(shape)
    return arr


def time_rows(pieces: Sequence[np.ndarray]) -> Iterator[np.ndarray]:
    """Rows (time steps) of consecutive pieces ``(n_k, p)`` of one block, in order."""
    return itertools.chain.from_iterable(pieces)


def joined(pieces: Sequence[np.ndarray]) -> np.ndarray:
    """Return the pieces of a block as one array ``(n, p)`` (no copy for a single piece)."""
    return pieces[0] if len(pieces) == 1 else np.concatenate(pieces, axis=0)


def release_workspace() -> None:
    """Free the calling thread's scratch arrays."""
    _LOCAL.arrays = {}


@dataclass(frozen=True)
class RowWeights:
    """Target rows as weighted sums of source rows, already divided by the cover.

    Target ``j`` is ``sum_b weight[j, b] * x[index[j, b]]`` where ``ok[j]``, else NaN.
    Entries with zero weight are padding.
    """

    index: np.ndarray  # (n_target, band) int
    weight: np.ndarray  # (n_target, band)
    ok: np.ndarray  # (n_target,) bool
    entries: tuple = ()  # per target: ((source row, weight), ...) without padding

    @classmethod
    def build(cls, index, weight, cover_days, length_days, min_valid_fraction: float):
        """From padded rows of unnormalised weights and each target's cover and length."""
        cover = np.asarray(cover_days, dtype=float)
        ok = cover >= min_valid_fraction * np.asarray(length_days) * (1.0 - 1e-12)
        scaled = np.asarray(weight, dtype=float) / np.where(ok, cover, 1.0)[:, None]
        index = np.asarray(index, dtype=np.intp)
        entries = tuple(
            tuple((i, w) for i, w in zip(irow, wrow, strict=True) if w != 0.0) if good else ()
            for irow, wrow, good in zip(index.tolist(), scaled.tolist(), ok.tolist(), strict=True)
        )
        return cls(index, scaled, ok, entries)

    def apply(self, x: np.ndarray, out: np.ndarray) -> np.ndarray:
        """Fill ``out`` (n_target, p) of any float type from ``x`` (n_source, p)."""
        p = x.shape[1]
        acc = np.empty(p)
        tmp = np.empty(p)
        for j, row in enumerate(self.entries):
            if not row:
                out[j] = np.nan
                continue
            i, w = row[0]
            np.multiply(x[i], w, out=acc)
            for i, w in row[1:]:
                np.multiply(x[i], w, out=tmp)
                acc += tmp
            out[j] = acc
        return out


@dataclass(frozen=True)
class SharedThomas:
    """The Thomas algorithm for a tridiagonal system whose coefficients all columns share.

    Row ``i``: ``lower[i] x[i-1] + diag[i] x[i] + upper[i] x[i+1] = rhs[i]``. With
    ``corner_lower`` and ``corner_upper`` (cyclic systems) the first row also couples to
    the last unknown and the last row to the first (Sherman-Morrison).
    """

    inv: tuple[float, ...]
    factor: tuple[float, ...]
    back: tuple[float, ...]
    cyclic_z: np.ndarray | None = None  # Sherman-Morrison: A'^-1 u
    cyclic_c: float = 0.0  # corner_lower / gamma

    @classmethod
    def build(cls, lower, diag, upper, *, cyclic: bool = False) -> SharedThomas:
        """Factorise once (O(n))."""
        lower, diag, upper = (np.array(c, dtype=float) for c in (lower, diag, upper))
        n = diag.size
        z = None
        c = 0.0
        if cyclic and n > 2:
            gamma = -diag[0]
            c = lower[0] / gamma
            diag[0] -= gamma
            diag[-1] -= lower[0] * upper[-1] / gamma
        inv = np.empty(n)
        cp = np.empty(n)
        inv[0] = 1.0 / diag[0]
        cp[0] = upper[0] * inv[0]
        for i in range(1, n):
            inv[i] = 1.0 / (diag[i] - lower[i] * cp[i - 1])
            cp[i] = upper[i] * inv[i]
        plan = cls(tuple(inv), tuple(lower * inv), tuple(cp))
        if cyclic and n > 2:
            u = np.zeros((n, 1))
            u[0], u[-1] = gamma, upper[-1]
            z = plan.solve(u, np.empty((n, 1)))[:, 0]
            plan = cls(plan.inv, plan.factor, plan.back, z, c)
        return plan

    def solve(self, rhs, x: np.ndarray) -> np.ndarray:
        """Solve for every column into float64 ``x`` (n, p).

        ``rhs`` is an array (n, p) of any float type, or a sequence of such pieces
        along the first axis that together hold the n rows (read in turn, not joined).
        """
        n = x.shape[0]
        tmp = np.empty(x.shape[1:])
        rows = time_rows([rhs] if isinstance(rhs, np.ndarray) else rhs)
        np.multiply(next(rows), self.inv[0], out=x[0])
        for i, row in enumerate(rows, start=1):
            np.multiply(x[i - 1], self.factor[i], out=tmp)
            np.multiply(row, self.inv[i], out=x[i])
            x[i] -= tmp
        for i in range(n - 2, -1, -1):
            np.multiply(x[i + 1], self.back[i], out=tmp)
            x[i] -= tmp
        if self.cyclic_z is not None:
            z = self.cyclic_z
            f = (x[0] + self.cyclic_c * x[-1]) / (1.0 + z[0] + self.cyclic_c * z[-1])
            for i in range(n):
                np.multiply(f, z[i], out=tmp)
                x[i] -= tmp
        return x


def bad_columns(x) -> np.ndarray | None:
    """Columns of ``x`` (n, p) holding any non-finite value, or None if there are none.

    ``x`` may also be a sequence of pieces along the first axis (see :func:`time_rows`).
    """
    pieces = [x] if isinstance(x, np.ndarray) else x
    with np.errstate(invalid="ignore", over="ignore"):
        total = sum(piece.sum(axis=0, dtype=np.float64) for piece in pieces)
    bad = ~np.isfinite(total)
    return bad if bad.any() else None
