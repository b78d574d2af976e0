"""Pathological sampling: periods at which the sampled plant loses controllability or observability.

Two modes ``p_i``, ``p_j`` of a continuous system land on the same point of the z plane when
``exp(p_i T) = exp(p_j T)``, that is when ``Re p_i = Re p_j`` and ``Im(p_i - p_j) T = 2 pi k`` for an
integer ``k != 0``. A single-input (single-output) sampled system with two modes on one z-plane
point has a one-dimensional input (output) direction for a two-dimensional eigenspace: it loses
controllability (observability) although the continuous system has neither loss. For a lightly
damped resonance ``p = -zeta w +- j w_d`` the first such period is ``T = pi / w_d``.

Detection is from the modes; the loss is CONFIRMED on the sampled system by the
Popov-Belevitch-Hautus (PBH) test in delta form, which stays meaningful at any period:

    controllable at z  <=>  rank [ (Phi - z I)/T , Gamma/T ] = n,
    observable   at z  <=>  rank [ (Phi - z I)/T ; C ] = n,

judged by the smallest singular value with each block normalised (numerically robust; a rank
computed from a controllability matrix ``[Gamma, Phi Gamma, ...]`` is not: its columns crowd
together as ``T -> 0``). As ``T -> 0`` the delta-form PBH matrices tend to the continuous
``[A - p I, B]`` and ``[A - p I; C]``; the sampled measure divided by the continuous one is the
fraction of the mode's controllability (observability) that survives sampling. The loss counts as
confirmed when that fraction is at rounding level (:data:`RANK_LOSS_TOLERANCE`).

References
----------
R. E. Kalman, Y. C. Ho and K. S. Narendra, "Controllability of linear dynamical systems",
Contributions to Differential Equations 1(2), 1963, pp. 189-213 (the sampling condition).
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., Prentice Hall, 1997,
section 2.5 (loss of controllability and observability through sampling; from memory).
M. L. J. Hautus, "Controllability and observability conditions of linear autonomous systems",
Indagationes Mathematicae 31, 1969, pp. 443-448 (the rank test).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sampled.phi import hold_integrals

#: Period within this relative distance of a pathological period: warning.
WARN_RELATIVE_DISTANCE = 0.05
#: Sampled over continuous PBH measure at or below which the rank loss counts as confirmed.
RANK_LOSS_TOLERANCE = 1e-8
#: Sampled moduli of the two modes must agree within this (|Re p_i - Re p_j| T_k) to collide.
MODULUS_TOLERANCE = 0.1
#: Imaginary parts closer than this (relative) count as equal: no pathological period.
IMAG_TOLERANCE = 1e-9


@dataclass(frozen=True)
class ModePair:
    """Two modes and the pathological periods ``T_k = 2 pi k / |Im(p_a - p_b)|``."""

    mode_a: complex
    mode_b: complex
    spacing_rad_s: float  # |Im(p_a - p_b)|

    def period_s(self, k: int) -> float:
        return 2.0 * math.pi * k / self.spacing_rad_s

    def nearest(self, period_s: float) -> tuple[int, float]:
        """``(k, T_k)`` with ``T_k`` nearest to ``period_s`` (``k >= 1``)."""
        k = max(1, round(period_s * self.spacing_rad_s / (2.0 * math.pi)))
        # compare the neighbours too: "nearest" in relative distance
        best = min((kk for kk in (k - 1, k, k + 1) if kk >= 1),
                   key=lambda kk: abs(period_s - self.period_s(kk)) / self.period_s(kk))
        return best, self.period_s(best)


def mode_pairs(modes: np.ndarray) -> list[ModePair]:
    """Pairs of modes that can collide under sampling (equal real parts within
    :data:`MODULUS_TOLERANCE` at the first pathological period, distinct imaginary parts).

    Conjugate duplicates are removed: ``(p_a, p_b)`` and ``(conj p_a, conj p_b)`` give the same
    periods; the representative has ``Im p_a + Im p_b >= 0``.
    """
    modes = np.asarray(modes, dtype=complex)
    seen: set[tuple[float, float, float, float]] = set()
    out: list[ModePair] = []
    for i in range(modes.size):
        for j in range(i + 1, modes.size):
            a, b = complex(modes[i]), complex(modes[j])
            scale = max(abs(a), abs(b), 1e-300)
            spacing = abs(a.imag - b.imag)
            if spacing <= IMAG_TOLERANCE * scale:
                continue
            if abs(a.real - b.real) * (2.0 * math.pi / spacing) > MODULUS_TOLERANCE:
                continue
            if a.imag + b.imag < 0:
                a, b = a.conjugate(), b.conjugate()
            if a.imag < b.imag:
                a, b = b, a
            key = (round(a.real, 12), round(a.imag, 12), round(b.real, 12), round(b.imag, 12))
            if key in seen:
                continue
            seen.add(key)
            out.append(ModePair(a, b, spacing))
    return out


@dataclass(frozen=True)
class RankTest:
    """PBH test at one mode: smallest over largest singular value, sampled and continuous."""

    controllability: float
    observability: float
    continuous_controllability: float
    continuous_observability: float

    @property
    def retained(self) -> float:
        """Smallest of sampled/continuous for controllability and observability: the fraction of
        the mode's controllability or observability that survives sampling (1: none lost)."""
        ratios = []
        for s, c in ((self.controllability, self.continuous_controllability),
                     (self.observability, self.continuous_observability)):
            if c > 0.0:
                ratios.append(s / c)
        return min(ratios) if ratios else 1.0

    @property
    def lost(self) -> bool:
        """The rank dropped to rounding at this period (confirmed loss)."""
        return self.retained <= RANK_LOSS_TOLERANCE


def _relative_sigma(shifted: np.ndarray, column: np.ndarray, scale: float, stack: str) -> float:
    """Smallest singular value of ``[shifted/scale, column/|column|]`` (or stacked as rows): each
    block normalised, so the measure does not depend on the units of B, C or of time."""
    n = shifted.shape[0]
    norm = float(np.linalg.norm(column))
    if norm == 0.0:
        return 0.0
    a = shifted / scale if scale > 0 else shifted
    col = column / norm
    m = np.hstack([a, col.reshape(n, 1)]) if stack == "columns" else np.vstack([a, col.reshape(1, n)])
    s = np.linalg.svd(m, compute_uv=False)
    return float(s[n - 1])


def pbh_test(a: np.ndarray, b: np.ndarray, c: np.ndarray, period_s: float, mode: complex) -> RankTest:
    """PBH test of the zero-order-hold sampled ``(A, B, C)`` at ``z = exp(mode T)``, in delta form.

    ``(Phi - z I)/T = A_delta - lambda I`` with ``lambda = (exp(p T) - 1)/T`` (computed with expm1),
    ``Gamma/T = B_delta``; both from one block exponential. The matrix block is divided by
    ``||A_delta||_2 + |lambda|`` and the column (row) by its norm, so the number reported, the
    smallest singular value, is 0 exactly when the rank drops and of order one for a well
    controllable (observable) mode.
    """
    n = a.shape[0]
    hi = hold_integrals(a, b, period_s)
    x = complex(mode) * period_s
    lam = complex(math.expm1(x.real) * math.cos(x.imag) - 2.0 * math.sin(x.imag / 2.0) ** 2,
                  math.exp(x.real) * math.sin(x.imag)) / period_s
    shifted = hi.a_delta - lam * np.eye(n)
    scale = float(np.linalg.norm(hi.a_delta, 2)) + abs(lam)
    ctrb = _relative_sigma(shifted, hi.b_delta.reshape(n), scale, "columns")
    obsv = _relative_sigma(shifted, c.reshape(n), scale, "rows")
    cont = a - complex(mode) * np.eye(n)
    c_scale = float(np.linalg.norm(a, 2)) + abs(mode)
    c_ctrb = _relative_sigma(cont, b.reshape(n), c_scale, "columns")
    c_obsv = _relative_sigma(cont, c.reshape(n), c_scale, "rows")
    return RankTest(ctrb, obsv, c_ctrb, c_obsv)


@dataclass(frozen=True)
class PathologicalCheck:
    """The pair whose pathological period is nearest (relatively) to the chosen period."""

    pair: ModePair
    multiple: int
    pathological_period_s: float
    relative_distance: float  # |T - T_k| / T_k
    rank: RankTest


def nearest_pathological(a: np.ndarray, b: np.ndarray, c: np.ndarray, period_s: float) -> PathologicalCheck | None:
    """Nearest pathological period of the continuous system ``(A, B, C)`` to ``period_s``, with the
    PBH test of the sampled system at the chosen period; None when no pair of modes can collide."""
    modes = np.linalg.eigvals(a) if a.shape[0] else np.zeros(0, dtype=complex)
    best: PathologicalCheck | None = None
    for pair in mode_pairs(modes):
        k, tk = pair.nearest(period_s)
        rel = abs(period_s - tk) / tk
        if best is None or rel < best.relative_distance:
            tests = [pbh_test(a, b, c, period_s, m) for m in (pair.mode_a, pair.mode_b)]
            worst = min(tests, key=lambda r: min(r.controllability, r.observability))
            best = PathologicalCheck(pair, k, tk, rel, worst)
    return best
