"""Benchmark: a 6th-order loop over 10^4 sample periods, against a straightforward per-period script.

Run: ``OMP_NUM_THREADS=1 python tests/benchmarks/bench_sweep.py`` (prints numbers; not a unit test).

The loop: plant 1/((s + 1)(0.3 s + 1)(0.05 s + 1)(0.01 s + 1)), sensor 1/(0.002 s + 1), PI controller
2 (0.5 s + 1)/(0.5 s) by Tustin, no computation delay: closed-loop order 6, slowest time constant
1 s. Periods are log-spaced so that T / (slowest time constant) runs from 1e-9 to 1.

The baseline is what one writes first: per period, scipy.signal.cont2discrete (zero-order hold for the
path, bilinear for the controller), the characteristic polynomial den_c den_p + num_c num_p with
numpy.polymul / numpy.polyadd, numpy.roots, and "stable when every |root| < 1".

Reported: wall time of ``sweep_periods`` (the whole library call: batched verdicts, boundary search,
exact confirmation) and of the batched verdicts alone; the baseline's time per period (measured on a
subset, extrapolated); agreement of verdicts where the baseline is numerically valid; the sampling
ratio below which the baseline's verdicts go wrong, and the exact per-period verdict there.
"""

from __future__ import annotations

import time

import numpy as np
import scipy.signal

from sampled.casefile import parse_case
from sampled.loop import digital_loop, judge_digital
from sampled.sweep import sweep_periods
from sampled.sweep_batch import closed_loop_eigen, loop_groups

CASE = """
title = "benchmark: sixth-order loop"
[plant]
transfer = "1/((s + 1)*(0.3*s + 1)*(0.05*s + 1)*(0.01*s + 1))"
[sensor]
transfer = "1/(0.002*s + 1)"
[controller]
transfer = "2*(0.5*s + 1)/(0.5*s)"
method = "tustin"
[timing]
period = "10 ms"
"""

SLOWEST_TIME_CONSTANT_S = 1.0
POINTS = 10_000
BASELINE_SUBSET = 400


def baseline_verdict(num_p: np.ndarray, den_p: np.ndarray, num_c: np.ndarray, den_c: np.ndarray, t: float) -> str:
    """The straightforward per-period route: cont2discrete, polynomial algebra, numpy.roots."""
    nd_p, dd_p, _ = scipy.signal.cont2discrete((num_p, den_p), t, method="zoh")
    nd_c, dd_c, _ = scipy.signal.cont2discrete((num_c, den_c), t, method="bilinear")
    nd_p, nd_c = np.atleast_1d(np.squeeze(nd_p)), np.atleast_1d(np.squeeze(nd_c))
    char = np.polyadd(np.polymul(dd_c, dd_p), np.polymul(nd_c, nd_p))
    roots = np.roots(char)
    return "stable" if np.all(np.abs(roots) < 1.0) else "unstable"


def main() -> None:
    spec = parse_case(CASE, "bench")
    periods = SLOWEST_TIME_CONSTANT_S * np.geomspace(1e-9, 1.0, POINTS)

    loop_groups(spec, periods[:10])  # warm-up (imports, first calls)
    t0 = time.perf_counter()
    ev = closed_loop_eigen(loop_groups(spec, periods), POINTS)
    t_batch = time.perf_counter() - t0
    t0 = time.perf_counter()
    res = sweep_periods(spec, periods, with_margins=False)
    t_sweep = time.perf_counter() - t0
    ours = np.array(res.verdicts)
    order = loop_groups(spec, periods[:1])[0].closed_loop().shape[1]

    # Baseline on transfer coefficients (float), per period.
    num_p = np.polymul([1.0], [1.0])
    den_p = np.polymul(np.polymul([1.0, 1.0], [0.3, 1.0]), np.polymul([0.05, 1.0], [0.01, 1.0]))
    den_p = np.polymul(den_p, [0.002, 1.0])
    num_c, den_c = np.array([1.0, 2.0]), np.array([0.5, 0.0])  # 2 (0.5 s + 1)/(0.5 s)
    idx = np.unique(np.round(np.linspace(0, POINTS - 1, BASELINE_SUBSET)).astype(int))
    t0 = time.perf_counter()
    base = {int(i): baseline_verdict(num_p, den_p, num_c, den_c, float(periods[i])) for i in idx}
    t_base_per = (time.perf_counter() - t0) / idx.size
    ratio = periods / SLOWEST_TIME_CONSTANT_S

    wrong = [int(i) for i in idx if base[int(i)] != ours[i]]
    worst_ratio = max((ratio[i] for i in wrong), default=None)
    valid = [int(i) for i in idx if worst_ratio is None or ratio[i] > worst_ratio]
    agree_valid = all(base[i] == ours[i] for i in valid)

    print(f"closed-loop order: {order}; periods: {POINTS} (T/tau from 1e-9 to 1)")
    print(f"batched verdicts alone (assembly + eigenvalues): {t_batch:.3f} s  ({t_batch / POINTS * 1e6:.1f} us/period)")
    print(f"sweep_periods (verdicts, {len(res.boundaries)} boundary located, exact confirmation, continuous design): "
          f"{t_sweep:.3f} s  ({t_sweep / POINTS * 1e6:.1f} us/period)")
    print(f"baseline per period (cont2discrete + polymul + roots, {idx.size} periods): {t_base_per * 1e6:.1f} us/period "
          f"-> {t_base_per * POINTS:.2f} s for {POINTS}")
    print(f"speed-up per period: {t_base_per * POINTS / t_sweep:.1f}x (whole sweep call), "
          f"{t_base_per * POINTS / t_batch:.1f}x (batched verdicts)")
    print(f"boundaries: {[(b.kind, b.becomes, f'{b.period_s:.12g} s') for b in res.boundaries]}")
    print(f"baseline verdicts wrong at {len(wrong)} of {idx.size} sampled periods; largest wrong T/tau = "
          f"{worst_ratio if worst_ratio is None else f'{worst_ratio:.3g}'}")
    print(f"verdicts identical where the baseline is valid (T/tau above that): {agree_valid} ({len(valid)} periods)")
    print(f"our smallest 1 - |z| over the stable range: {np.min(ev.distance[ours == 'stable']):.3g}")
    for r in (1e-9, 1e-7, 1e-5, 1e-3):
        i = int(np.argmin(np.abs(ratio - r)))
        exact = judge_digital(digital_loop(spec, float(periods[i])), with_margins=False).verdict
        print(f"  T/tau = {ratio[i]:.3g}: ours {ours[i]}, exact per-period count {exact}, baseline "
              f"{baseline_verdict(num_p, den_p, num_c, den_c, float(periods[i]))}")


if __name__ == "__main__":
    main()
