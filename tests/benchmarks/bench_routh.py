"""Benchmark: exact Routh array of degree-20 polynomials with double-precision coefficients.

Run on demand (not part of the test run):

    python tests/benchmarks/bench_routh.py [--repeat N]

Goal (issue 2): the exact array of a degree-20 polynomial with double coefficients in under 20 ms
(median). Every double enters as the exact binary fraction it holds, so the entries are rationals
with denominators up to 2^1074 and grow through the array; the cost is big-integer arithmetic.
Also timed, for information: the special cases (a zero first entry handled with eps, a row of
zeros) at the same degree.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from collections.abc import Callable

import numpy as np

from sampled.criteria.routh import routh_array

GOAL_MS = 20.0


def cases() -> dict[str, list[float]]:
    rng = np.random.default_rng(20)
    # Stable: 10 complex pairs with random damping and frequency (coefficients spread widely).
    pairs = rng.uniform(0.05, 2.0, 10) * np.exp(1j * rng.uniform(0.55 * np.pi, 0.95 * np.pi, 10))
    stable = np.real(np.poly(np.concatenate([pairs, pairs.conj()])))
    # Mixed signs: standard normal coefficients (roots on both sides).
    mixed = rng.standard_normal(21)
    mixed[0] = 1.0
    # Zero first entry in the s^19 row: the s^19 coefficient set to zero.
    eps_case = stable.copy()
    eps_case[1] = 0.0
    # Row of zeros: (s^2 + 1)(s^2 + 4)(s + 1)(s + 2)...(s + 16). The coefficients are integers below
    # 2^53, so the doubles hold them exactly and the imaginary roots survive.
    zero_row = np.polymul([1.0, 0.0, 1.0], [1.0, 0.0, 4.0])
    for k in range(1, 17):
        zero_row = np.polymul(zero_row, [1.0, float(k)])
    assert np.max(np.abs(zero_row)) < 2.0**53
    return {
        "degree 20, stable, double coefficients": list(stable),
        "degree 20, mixed signs, double coefficients": list(mixed),
        "degree 20, zero first entry (eps)": list(eps_case),
        "degree 20, row of zeros": list(zero_row),
    }


def median_ms(fn: Callable[[], object], repeat: int) -> float:
    fn()  # warm up
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1e3 * statistics.median(times)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=51)
    args = parser.parse_args(argv)
    ok = True
    for i, (name, coeffs) in enumerate(cases().items()):
        assert len(coeffs) == 21
        table = routh_array(coeffs)
        ms = median_ms(lambda c=coeffs: routh_array(c), args.repeat if i < 2 else max(5, args.repeat // 5))
        counts = f"left {table.left}, imaginary {table.imaginary}, right {table.right}"
        flag = ""
        if i == 0:
            flag = "  (goal < %.0f ms: %s)" % (GOAL_MS, "met" if ms < GOAL_MS else "NOT met")
            ok = ms < GOAL_MS
        print(f"{name:45s} median {ms:8.2f} ms   [{counts}]{flag}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
