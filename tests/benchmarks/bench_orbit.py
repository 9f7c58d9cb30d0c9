"""Benchmark: orbital elements for many epochs vs bare numpy evaluating as many terms.

The Berger (1978) solution sums, per epoch, 47 cosine terms (obliquity), 19 sine
and 19 cosine terms (eccentricity) and 78 sine terms (general precession). The
baseline evaluates the same numbers of sine/cosine terms with random coefficients
in plain numpy, ``f(np.multiply.outer(t, rate) + phase) @ amplitude``; a second,
stricter baseline does the same in chunks of epochs (the least work numpy can do).
Runs alternate and the best of several is kept. Target: solver / baseline <= 1.5.

Run: ``python tests/benchmarks/bench_orbit.py [--epochs N] [--repeat R]``.
"""

from __future__ import annotations

import argparse

import numpy as np
from measure import best_of, traced_peak_mib, verdict

import bcgen

TERMS = ((np.cos, 47), (np.sin, 19), (np.cos, 19), (np.sin, 78))
CHUNK = 8192


def make_coefficients(seed: int = 0) -> list[tuple]:
    rng = np.random.default_rng(seed)
    arcsec = np.pi / 648000.0
    return [
        (
            func,
            rng.uniform(0.0, 60.0, n) * arcsec,
            rng.uniform(0.0, 2 * np.pi, n),
            rng.normal(size=n),
        )
        for func, n in TERMS
    ]


def bare(t: np.ndarray, coefficients) -> list[np.ndarray]:
    """Plain numpy: every term of every series for every epoch at once."""
    return [
        func(np.multiply.outer(t, rate) + phase) @ amp for func, rate, phase, amp in coefficients
    ]


def bare_chunked(t: np.ndarray, coefficients) -> list[np.ndarray]:
    """The same sums in chunks of epochs."""
    sums = [np.empty_like(t) for _ in coefficients]
    for lo in range(0, t.size, CHUNK):
        part = t[lo : lo + CHUNK]
        for out, (func, rate, phase, amp) in zip(sums, coefficients, strict=True):
            out[lo : lo + CHUNK] = func(np.multiply.outer(part, rate) + phase) @ amp
    return sums


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--epochs", type=int, default=10**6)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    t = np.linspace(-1_000_000.0, 0.0, args.epochs)
    coefficients = make_coefficients()
    runs = {
        "bcgen.solve (berger1978)": lambda: bcgen.solve(t),
        "bare numpy, all at once": lambda: bare(t, coefficients),
        "bare numpy, chunked": lambda: bare_chunked(t, coefficients),
    }
    bcgen.solve(t[:10])  # load the coefficient tables outside the timing
    best = best_of(runs, args.repeat)
    terms = sum(n for _, n in TERMS)
    print(
        f"epochs: {args.epochs:,}; terms per epoch: {terms} "
        f"({' + '.join(f'{n} {f.__name__}' for f, n in TERMS)}); best of {args.repeat}"
    )
    solver = best["bcgen.solve (berger1978)"]
    for name, run in runs.items():
        print(
            f"  {name:<26} {best[name]:8.3f} s   peak memory {traced_peak_mib(run):8.1f} MiB   "
            f"solver/this {solver / best[name]:5.2f}"
        )
    ratio = solver / best["bare numpy, all at once"]
    strict = solver / best["bare numpy, chunked"]
    print(
        f"ratio solver / bare numpy: {ratio:.2f} (vs chunked bare numpy: {strict:.2f}); "
        f"target <= 1.5: {verdict(max(ratio, strict) <= 1.5)}"
    )


if __name__ == "__main__":
    main()
