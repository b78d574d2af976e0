"""Accuracy and speed of discretisation at fast sampling (run on demand, not a unit test).

    python tests/benchmarks/bench_discretize.py

Prints, for a 6th-order plant with slowest time constant 1 s and T from 1e-1 to 1e-9 s:
the worst relative error of the delta poles lambda = (z - 1)/T and of 1 - |z| against mpmath at
50 digits (closed forms: z = exp(pT) for zoh/matched, the bilinear image for tustin), next to the
same quantities computed the naive way (eig of Phi, then (z - 1)/T and 1 - abs(z)), and the time
per call.
"""

from __future__ import annotations

import time

import mpmath
import numpy as np

from sampled.discretize import discretize
from sampled.systems import ContinuousSystem

POLES = [-1.0, -4.0, [-2.0, 5.0], [-2.0, -5.0], [-30.0, 40.0], [-30.0, -40.0]]


def reference(method: str, t: float) -> tuple[list[complex], list[float]]:
    lams, dists = [], []
    with mpmath.workdps(50):
        tm = mpmath.mpf(t)
        for p in POLES:
            pc = mpmath.mpc(*(p if isinstance(p, list) else [p, 0.0]))
            if method == "tustin":
                z = (1 + pc * tm / 2) / (1 - pc * tm / 2)
                lams.append(complex((z - 1) / tm))
                dists.append(float(1 - abs(z)))
            else:
                lams.append(complex(mpmath.expm1(pc * tm) / tm))
                dists.append(float(-mpmath.expm1(pc.real * tm)))
    return lams, dists


def worst(got_lam: np.ndarray, got_dist: np.ndarray, lams: list[complex], dists: list[float]) -> tuple[float, float]:
    e_lam = e_dist = 0.0
    for lam, dist in zip(lams, dists):
        i = int(np.argmin(np.abs(got_lam - lam)))
        e_lam = max(e_lam, abs(got_lam[i] - lam) / abs(lam))
        e_dist = max(e_dist, abs(got_dist[i] - dist) / abs(dist))
    return e_lam, e_dist


def main() -> None:
    plant = ContinuousSystem.from_zeros_poles_gain([-3.0], POLES, 1000.0)
    print(f"{'method':8} {'T/tau':>7} {'lambda err':>11} {'1-|z| err':>11} {'naive lam':>11} {'naive 1-|z|':>11} {'ms/call':>8}")
    for method in ("zoh", "matched", "tustin"):
        for k in range(1, 10):
            t = 10.0**-k
            start = time.perf_counter()
            reps = 20
            for _ in range(reps):
                sys = discretize(plant, t, method)  # type: ignore[arg-type]
            elapsed = (time.perf_counter() - start) / reps * 1e3
            p = sys.poles()
            lams, dists = reference(method, t)
            e_lam, e_dist = worst(p.delta, p.unit_circle_distance, lams, dists)
            z_naive = np.linalg.eigvals(sys.phi)
            n_lam, n_dist = worst((z_naive - 1) / t, 1 - np.abs(z_naive), lams, dists)
            print(f"{method:8} {t:7.0e} {e_lam:11.2e} {e_dist:11.2e} {n_lam:11.2e} {n_dist:11.2e} {elapsed:8.3f}")


if __name__ == "__main__":
    main()
