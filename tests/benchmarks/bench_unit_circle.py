"""Benchmark of the unit-circle criteria (run on demand: ``python tests/benchmarks/bench_unit_circle.py``).

Goals (issue 4): exact Jury table and exact counts of a degree-20 polynomial under 30 ms;
vectorised float verdicts for 10^5 polynomials of degree 8 under 0.2 s.
"""

from __future__ import annotations

import time
from fractions import Fraction

import numpy as np

from sampled import poly
from sampled.criteria.jury import jury_table
from sampled.criteria.unit_circle import circle_counts, float_circle_verdicts, spectral_radii
from sampled.criteria.wplane import wplane_routh


def best_of(fn, repeat: int = 7) -> float:  # type: ignore[no-untyped-def]
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def degree20_cases() -> dict[str, poly.ExactPoly]:
    rng = np.random.default_rng(7)
    # stable: roots drawn inside the circle, coefficients as exact binary fractions of the doubles
    r = 0.95 * rng.uniform(0.1, 1.0, 10) * np.exp(1j * rng.uniform(0, np.pi, 10))
    stable = poly.from_float(np.real(np.poly(np.concatenate([r, np.conj(r)]))))
    # short decimal coefficients, typed by hand
    typed = poly.from_values(["1"] + [f"{x:.3f}" for x in rng.uniform(-1, 1, 20)])
    # singular: a repeated pair on the circle times a palindromic part
    on = poly.power((Fraction(1), Fraction(-1, 2), Fraction(1)), 2)
    rest = poly.from_values([1, 3, -2, 5, 1, 7, 2, 7, 1, 5, -2, 3, 1, 0, 2, 0, 1])
    singular = poly.mul(on, rest)
    return {"stable (float roots)": stable, "typed decimals": typed, "singular (on-circle pair^2)": singular}


def main() -> None:
    print("exact, degree 20 (best of 7) [ms]: jury table | circle counts | both | w-plane Routh")
    for name, p in degree20_cases().items():
        assert poly.degree(p) == 20
        tj = best_of(lambda: jury_table(p))
        tc = best_of(lambda: circle_counts(p))
        tb = best_of(lambda: (jury_table(p), circle_counts(p)))
        tw = best_of(lambda: wplane_routh(p))
        c = circle_counts(p)
        print(f"  {name:30s} {tj * 1e3:7.2f} | {tc * 1e3:7.2f} | {tb * 1e3:7.2f} | {tw * 1e3:7.2f}"
              f"   counts in/on/out = {c.inside}/{c.on}/{c.outside}")

    rng = np.random.default_rng(11)
    m = 100_000
    roots = rng.uniform(0.3, 1.1, (m, 4)) * np.exp(1j * rng.uniform(0, np.pi, (m, 4)))
    # real coefficients of degree 8 from conjugate pairs, built vectorised
    coeffs = np.ones((m, 1))
    for k in range(4):
        quad = np.stack([np.ones(m), -2 * roots[:, k].real, np.abs(roots[:, k]) ** 2], axis=1)
        coeffs = _batch_mul(coeffs, quad)
    assert coeffs.shape == (m, 9)
    t_sc = best_of(lambda: float_circle_verdicts(coeffs), repeat=5)
    t_eig = best_of(lambda: spectral_radii(coeffs), repeat=3)
    res = float_circle_verdicts(coeffs)
    radii = spectral_radii(coeffs)
    agree = np.mean(res.stable == (radii < 1))
    print(f"float, 1e5 polynomials of degree 8: Schur-Cohn {t_sc * 1e3:.1f} ms, "
          f"companion eigenvalues {t_eig * 1e3:.1f} ms; stable fraction {res.stable.mean():.3f}, "
          f"agreement {agree:.6f}, undecided {int(res.undecided.sum())}")


def _batch_mul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Row-wise polynomial product of two coefficient arrays."""
    out = np.zeros((a.shape[0], a.shape[1] + b.shape[1] - 1))
    for j in range(b.shape[1]):
        out[:, j : j + a.shape[1]] += a * b[:, j : j + 1]
    return out


if __name__ == "__main__":
    main()
