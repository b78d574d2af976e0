"""Stable ranges of a gain K for a characteristic polynomial affine in K: ``p0(x) + K p1(x)``.

Stability can change only at gains where a root crosses the boundary (the imaginary axis for
``s``, the unit circle for ``z``) or where the degree drops (a root escapes through infinity).
Those candidate gains are found from the boundary condition ``p0(jw) + K p1(jw) = 0`` (for ``z``
after the exact bilinear map to the w-plane), the interval between neighbouring candidates is
judged at an exact rational interior point by the Routh array, and candidates that are rational
are judged exactly too, so each end of a range is stated open or closed.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal

import numpy as np

from sampled import poly as P
from sampled.criteria.routh import routh_array
from sampled.errors import InputError

Domain = Literal["s", "z"]


@dataclass(frozen=True)
class GainInterval:
    """One stable range of K. ``None`` ends are unbounded; exact ends are kept as Fractions."""

    low: float | None
    high: float | None
    low_closed: bool
    high_closed: bool
    low_exact: Fraction | None = None
    high_exact: Fraction | None = None

    def contains(self, k: float) -> bool:
        lo_ok = self.low is None or k > self.low or (self.low_closed and k == self.low)
        hi_ok = self.high is None or k < self.high or (self.high_closed and k == self.high)
        return lo_ok and hi_ok

    def describe(self, name: str = "K") -> str:
        lo = "-inf" if self.low is None else _fmt(self.low, self.low_exact)
        hi = "inf" if self.high is None else _fmt(self.high, self.high_exact)
        left = "[" if self.low_closed else "("
        right = "]" if self.high_closed else ")"
        return f"{name} in {left}{lo}, {hi}{right}"

    def to_list(self) -> list[float | None]:
        return [self.low, self.high]


def _fmt(x: float, exact: Fraction | None) -> str:
    if exact is not None:
        return P.format_number(exact, 12)
    return f"{x:.12g}"


def w_plane(p: P.ExactPoly) -> P.ExactPoly:
    """``(w - 1)^n ... `` : the polynomial in w with z = (1 + w)/(1 - w), cleared of denominators.

    Roots inside the unit circle map to the open left half-plane; z = -1 maps to w = infinity,
    so a drop in degree means roots at z = -1.
    """
    return P.compose_mobius(p, (Fraction(1), Fraction(1)), (Fraction(-1), Fraction(1)))


def _stable_s(p: P.ExactPoly) -> bool:
    return routh_array(p).verdict == "stable"


def _stable_z_via_w(n: int) -> Callable[[P.ExactPoly], bool]:
    def judge(pw: P.ExactPoly) -> bool:
        return P.degree(pw) == n and routh_array(pw).verdict == "stable"

    return judge


def _imag_axis_candidates(p0: P.ExactPoly, p1: P.ExactPoly) -> list[float]:
    """Gains K with a root of p0 + K p1 at s = j w, w >= 0."""

    def parts(p: P.ExactPoly) -> tuple[P.ExactPoly, P.ExactPoly]:
        # p(jw) = R(w) + j I(w), both real polynomials in w (descending).
        n = len(p) - 1
        re: list[Fraction] = [Fraction(0)] * (n + 1)
        im: list[Fraction] = [Fraction(0)] * (n + 1)
        for i, c in enumerate(p):
            k = n - i
            unit = [1, 1j, -1, -1j][k % 4]
            if unit.real:
                re[i] = c * int(unit.real)
            else:
                im[i] = c * int(unit.imag)
        return P.trim(re), P.trim(im)

    r0, i0 = parts(p0)
    r1, i1 = parts(p1)
    f = P.sub(P.mul(r0, i1), P.mul(i0, r1))
    ws: list[float] = [0.0]
    if not P.is_zero(f) and P.degree(f) > 0:
        from sampled.systems import accurate_roots

        for r in accurate_roots(f):
            if abs(r.imag) <= 1e-9 * max(1.0, abs(r)) and r.real > 0:
                ws.append(float(r.real))
    out: list[float] = []
    for w in ws:
        v0 = complex(np.polyval(P.to_float(p0), 1j * w))
        v1 = complex(np.polyval(P.to_float(p1), 1j * w))
        if abs(v1) == 0:
            continue
        k = -v0 / v1
        if abs(k.imag) <= 1e-7 * max(1.0, abs(k)):
            out.append(k.real)
    return out


def stable_gain_ranges(p0: P.ExactPoly, p1: P.ExactPoly, domain: Domain = "s") -> tuple[GainInterval, ...]:
    """Exact stable range(s) of K for ``p0 + K p1`` (descending powers of s or z).

    Returns the intervals in increasing order; an empty tuple when no K is stable.

    Notes
    -----
    Candidate gains from the boundary condition are computed in floating point from exactly
    located crossing frequencies; each candidate that is rational within 1e-12 is confirmed exactly.
    Interval interiors are judged by the exact Routh array at rational points.
    """
    p0, p1 = P.trim(p0), P.trim(p1)
    if P.is_zero(p1):
        raise InputError("the gain does not appear in the polynomial")
    n = max(P.degree(p0), P.degree(p1))
    if domain == "z":
        q0, q1 = w_plane(_pad(p0, n)), w_plane(_pad(p1, n))
        judge = _stable_z_via_w(n)
    elif domain == "s":
        q0, q1 = p0, p1
        judge = _stable_s
    else:
        raise InputError(f"unknown domain {domain!r}; allowed: s, z")
    m = max(P.degree(q0), P.degree(q1))
    a0, a1 = _pad(q0, m), _pad(q1, m)

    def poly_at(k: Fraction) -> P.ExactPoly:
        return P.add(a0, P.scale(a1, k))

    def stable_at(k: Fraction) -> bool:
        p = poly_at(k)
        if P.is_zero(p):
            return False
        return judge(p)

    candidates: list[tuple[float, Fraction | None]] = []
    # Degree drops: the coefficient of a leading power vanishes.
    if a1[0] != 0:
        k = -a0[0] / a1[0]
        candidates.append((float(k), k))
    for k in _imag_axis_candidates(a0, a1):
        # A gain that puts a root on the boundary is never itself stable; keep its exact value
        # for display when a nearby short rational is confirmed to be the crossing exactly.
        frac = Fraction(k).limit_denominator(10**9)
        on_boundary = abs(float(frac) - k) <= 1e-9 * max(1.0, abs(k)) and (
            routh_array(poly_at(frac)).imaginary > 0 if not P.is_zero(poly_at(frac)) else False
        )
        candidates.append((float(frac) if on_boundary else k, frac if on_boundary else None))
    # Merge near-duplicates.
    candidates.sort(key=lambda t: t[0])
    merged: list[tuple[float, Fraction | None]] = []
    for k, e in candidates:
        if merged and abs(k - merged[-1][0]) <= 1e-12 * max(1.0, abs(k)):
            if merged[-1][1] is None and e is not None:
                merged[-1] = (k, e)
            continue
        merged.append((k, e))

    def point_stable(k: float, e: Fraction | None) -> bool:
        # An inexact crossing gain puts a root on the boundary: not stable. An exact one is judged.
        return e is not None and stable_at(e)

    pieces: list[tuple[float | None, float | None, Fraction | None, Fraction | None]] = []
    bounds: list[float | None] = [None] + [k for k, _ in merged] + [None]
    exacts: list[Fraction | None] = [None] + [e for _, e in merged] + [None]
    for i in range(len(bounds) - 1):
        lo, hi = bounds[i], bounds[i + 1]
        mid = _interior(lo, hi)
        if stable_at(mid):
            pieces.append((lo, hi, exacts[i], exacts[i + 1]))
    # Build intervals, joining neighbours through a stable candidate point.
    out: list[GainInterval] = []
    for lo, hi, elo, ehi in pieces:
        lo_closed = lo is not None and point_stable(lo, elo)
        hi_closed = hi is not None and point_stable(hi, ehi)
        if out and out[-1].high is not None and lo is not None and out[-1].high == lo and lo_closed:
            prev = out.pop()
            out.append(GainInterval(prev.low, hi, prev.low_closed, hi_closed, prev.low_exact, ehi))
            continue
        out.append(GainInterval(lo, hi, lo_closed, hi_closed, elo, ehi))
    # Isolated stable candidate points (rare) are intervals of one point.
    for k, e in merged:
        if e is not None and stable_at(e) and not any(iv.contains(k) for iv in out):
            out.append(GainInterval(k, k, True, True, e, e))
    out.sort(key=lambda iv: -math.inf if iv.low is None else iv.low)
    return tuple(out)


def _pad(p: P.ExactPoly, n: int) -> P.ExactPoly:
    return tuple([Fraction(0)] * (n + 1 - len(p))) + tuple(p)


def _interior(lo: float | None, hi: float | None) -> Fraction:
    """A short rational strictly between lo and hi (either may be unbounded)."""
    if lo is None and hi is None:
        return Fraction(0)
    if lo is None:
        assert hi is not None
        return Fraction(hi) - max(1, abs(Fraction(hi)))
    if hi is None:
        return Fraction(lo) + max(1, abs(Fraction(lo)))
    a, b = Fraction(lo), Fraction(hi)
    mid = (a + b) / 2
    # Prefer a simple rational near the middle.
    for den in (1, 2, 4, 10, 100, 1000, 10**6):
        cand = Fraction(round(mid * den), den)
        if a < cand < b:
            return cand
    return mid
