r"""Stable gain ranges against closed-form Hurwitz conditions and mpmath root locations.

Closed forms (derived from the Routh array, E. J. Routh 1877; the same conditions are tabulated in
Ogata, *Modern Control Engineering*, 5th ed., section 5-6, from memory):

Degree 3, a3 s^3 + a2 s^2 + a1 s + a0 with a3 > 0. The rows are
    s^3: a3, a1;  s^2: a2, a0;  s^1: (a2 a1 - a3 a0)/a2;  s^0: a0.
No sign change in the first column iff a2 > 0, a2 a1 - a3 a0 > 0 and a0 > 0; then a1 > 0 follows.
So: stable  <=>  a3, a2, a1, a0 > 0  and  a2 a1 > a3 a0.

Degree 4, a4 s^4 + a3 s^3 + a2 s^2 + a1 s + a0 with a4 > 0. The rows are
    s^4: a4, a2, a0;  s^3: a3, a1;  s^2: b1 = (a3 a2 - a4 a1)/a3, a0;
    s^1: c1 = (b1 a1 - a3 a0)/b1;  s^0: a0.
With a3 > 0: b1 > 0 <=> a3 a2 > a4 a1; with b1 > 0: c1 > 0 <=> a1 (a3 a2 - a4 a1) > a0 a3^2.
So: stable  <=>  all a > 0,  a3 a2 > a4 a1  and  a1 a2 a3 > a0 a3^2 + a4 a1^2.

When K enters one coefficient (not the leading one) each condition is a polynomial of degree
<= 2 in K; the stable set is where all are positive. Its ends are zeros of some condition, where
the polynomial has a root at s = 0 (a0 = 0) or a pair on the imaginary axis: every finite end is
open.

Degree 2 in z, z^2 + a1 z + a0 (Jury's conditions, closed form): roots inside the unit circle
<=> |a0| < 1 and |a1| < 1 + a0 (from p(1) > 0, p(-1) > 0 and |a0| < 1).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction

import mpmath
import pytest
from hypothesis import given, note
from hypothesis import strategies as st

from routh_truth import counts_from_roots, mpmath_roots
from sampled import expr
from sampled import poly as P
from sampled.criteria.gain import GainInterval, stable_gain_ranges
from sampled.errors import InputError

F = Fraction

Cond = Callable[[list[Fraction]], Fraction]


def hurwitz_conditions(n: int) -> list[Cond]:
    """Closed-form conditions (each must be > 0); coefficients a[k] is the coefficient of s^k."""
    if n == 3:
        return [lambda a, k=k: a[k] for k in range(4)] + [lambda a: a[2] * a[1] - a[3] * a[0]]
    if n == 4:
        return [lambda a, k=k: a[k] for k in range(5)] + [
            lambda a: a[3] * a[2] - a[4] * a[1],
            lambda a: a[1] * a[2] * a[3] - a[0] * a[3] ** 2 - a[4] * a[1] ** 2,
        ]
    raise ValueError(n)


def expected_ranges(
    base: list[Fraction], index: int, mult: Fraction
) -> list[tuple[float | None, float | None, Fraction | None, Fraction | None]]:
    """Stable K ranges from the closed form, K entering a[index] as base + mult K.

    Each condition is a polynomial in K of degree <= 2; its coefficients are recovered exactly by
    evaluating at K = 0, 1, -1. Its zeros are the only places the verdict can change; the verdict
    between neighbouring zeros is read from the closed form at an exact rational point. Returns
    (low, high, low exact, high exact); an exact end is given where the zero is rational.
    A zero where the closed form is not satisfied on either side still splits the range (the
    polynomial touches the boundary there and is not stable at that point).
    """
    n = len(base) - 1
    conds = hurwitz_conditions(n)

    def coeffs_at(k: Fraction) -> list[Fraction]:
        a = list(base)
        a[index] += mult * k
        return a

    def ok(k: Fraction) -> bool:
        a = coeffs_at(k)
        return all(c(a) > 0 for c in conds)

    crit: dict[float, Fraction | None] = {}
    for c in conds:
        f0, f1, fm = c(coeffs_at(F(0))), c(coeffs_at(F(1))), c(coeffs_at(F(-1)))
        q2 = (f1 + fm) / 2 - f0
        q1 = (f1 - fm) / 2
        q0 = f0
        if q2 == 0:
            if q1 != 0:
                crit[float(-q0 / q1)] = -q0 / q1
            continue
        disc = q1 * q1 - 4 * q2 * q0
        if disc < 0:
            continue
        num, den = math.isqrt(disc.numerator), math.isqrt(disc.denominator)
        if num * num == disc.numerator and den * den == disc.denominator:
            for sgn in (1, -1):
                r = (-q1 + sgn * F(num, den)) / (2 * q2)
                crit[float(r)] = r
            continue
        with mpmath.workdps(40):
            root = mpmath.sqrt(mpmath.mpf(disc.numerator) / disc.denominator)
            for sgn in (1, -1):
                r = (-mpmath.mpf(q1.numerator) / q1.denominator + sgn * root) / (
                    2 * mpmath.mpf(q2.numerator) / q2.denominator
                )
                crit.setdefault(float(r), None)
    ends = sorted(crit)
    bounds: list[float | None] = [None, *ends, None]
    out: list[tuple[float | None, float | None]] = []
    for lo, hi in zip(bounds, bounds[1:]):
        if lo is None and hi is None:
            mid = F(0)
        elif lo is None:
            mid = F(hi) - 1 - abs(F(hi))
        elif hi is None:
            mid = F(lo) + 1 + abs(F(lo))
        else:
            mid = (F(lo) + F(hi)) / 2
        if ok(mid):
            out.append((lo, hi))
    return [(lo, hi, None if lo is None else crit[lo], None if hi is None else crit[hi]) for lo, hi in out]


def close(x: float | None, y: float | None) -> bool:
    if x is None or y is None:
        return x is y
    return math.isclose(x, y, rel_tol=1e-9, abs_tol=1e-12)


small = st.sampled_from([F(1), F(2), F(3), F(1, 2), F(5, 2), F(-1), F(4), F(10), F(1, 3), F(0)])


@st.composite
def one_coefficient_gain(draw: st.DrawFn) -> tuple[list[Fraction], int, Fraction]:
    n = draw(st.sampled_from([3, 4]))
    base = [draw(small) for _ in range(n)] + [draw(st.sampled_from([F(1), F(2), F(1, 2)]))]
    index = draw(st.integers(0, n - 1))  # not the leading coefficient
    mult = draw(st.sampled_from([F(1), F(-1), F(2), F(1, 10)]))
    return base, index, mult


@given(one_coefficient_gain())
def test_ranges_match_hurwitz_closed_form(case: tuple[list[Fraction], int, Fraction]) -> None:
    """Degree 3 and 4, K in one coefficient: ranges equal the closed form (module docstring)."""
    base, index, mult = case
    n = len(base) - 1
    p0 = tuple(reversed(base))  # descending powers
    p1 = tuple(reversed([mult if k == index else F(0) for k in range(n + 1)]))
    note(f"p0 = {P.format_poly(p0)}, p1 = {P.format_poly(p1)}")
    got = stable_gain_ranges(p0, p1)
    want = expected_ranges(base, index, mult)
    assert len(got) == len(want), (got, want)
    for iv, (lo, hi, lo_exact, hi_exact) in zip(got, want):
        assert close(iv.low, lo) and close(iv.high, hi), (iv, lo, hi)
        # Every finite end zeroes a closed-form condition: open.
        assert not iv.low_closed and not iv.high_closed
        # Rational ends are reported exactly.
        assert iv.low_exact == lo_exact and iv.high_exact == hi_exact, (iv, lo_exact, hi_exact)


@st.composite
def affine_polynomials(draw: st.DrawFn) -> tuple[tuple[Fraction, ...], tuple[Fraction, ...]]:
    n = draw(st.integers(1, 5))
    p0 = tuple([F(1)] + [F(draw(st.integers(-5, 8))) for _ in range(n)])
    p1 = tuple(F(draw(st.integers(-3, 3))) for _ in range(n))  # degree < n: no degree drop
    if all(c == 0 for c in p1):
        p1 = p1[:-1] + (F(1),)
    return p0, P.trim(p1)


def _mpmath_stable(p: tuple[Fraction, ...]) -> bool:
    left, imag, right = counts_from_roots(mpmath_roots(P.trim(p)), tol=1e-30)
    return imag == 0 and right == 0


@given(affine_polynomials())
def test_ranges_agree_with_mpmath_roots_at_probe_points(case) -> None:
    """General p0 + K p1 (K in several coefficients, possibly several ranges): at points inside each
    range, and just outside each finite end, mpmath's 50-digit roots agree with the ranges."""
    p0, p1 = case
    note(f"p0 = {P.format_poly(p0)}, p1 = {P.format_poly(p1)}")
    got = stable_gain_ranges(p0, p1)
    probes: list[Fraction] = [F(0), F(-1000), F(1000)]
    for iv in got:
        lo = iv.low_exact if iv.low_exact is not None else (None if iv.low is None else F(iv.low))
        hi = iv.high_exact if iv.high_exact is not None else (None if iv.high is None else F(iv.high))
        if lo is not None and hi is not None:
            probes.append((lo + hi) / 2)
        for end in (lo, hi):
            if end is not None:
                d = F(1, 10**6) * (1 + abs(end))
                probes += [end - d, end + d]
    for k in probes:
        p = P.add(p0, P.scale(p1, k))
        inside = any(iv.contains(float(k)) for iv in got)
        assert inside == _mpmath_stable(p), (k, got)


def test_third_order_textbook_range() -> None:
    """s^3 + 3 s^2 + 2 s + K: stable iff 0 < K < 3*2/1 = 6 (closed form, degree 3)."""
    (iv,) = stable_gain_ranges(*expr.parse_affine("s^3 + 3*s^2 + 2*s + K"))
    assert (iv.low, iv.high, iv.low_closed, iv.high_closed) == (0.0, 6.0, False, False)
    assert (iv.low_exact, iv.high_exact) == (F(0), F(6))
    assert iv.describe() == "K in (0, 6)"


def test_dorf_bishop_range() -> None:
    """Dorf & Bishop, *Modern Control Systems*, chapter 6 (from memory): s^3 + 2 s^2 + 4 s + K is
    stable for 0 < K < 8 (closed form: 2*4 > K)."""
    (iv,) = stable_gain_ranges(*expr.parse_affine("s^3 + 2*s^2 + 4*s + K"))
    assert (iv.low_exact, iv.high_exact, iv.low_closed, iv.high_closed) == (F(0), F(8), False, False)


def test_irrational_ends() -> None:
    """s^4 + 2 s^3 + 3 s^2 + K s + 1 (degree 4, K = a1): K > 0, 6 > K and 6K - 4 - K^2 > 0, so
    3 - sqrt 5 < K < 3 + sqrt 5 (both within (0, 6))."""
    (iv,) = stable_gain_ranges(*expr.parse_affine("s^4 + 2*s^3 + 3*s^2 + K*s + 1"))
    assert iv.low == pytest.approx(3 - math.sqrt(5), rel=1e-12)
    assert iv.high == pytest.approx(3 + math.sqrt(5), rel=1e-12)
    assert not iv.low_closed and not iv.high_closed


def test_unbounded_range() -> None:
    """s^2 + K s + 1: stable iff K > 0 (degree 2: all coefficients positive)."""
    (iv,) = stable_gain_ranges(*expr.parse_affine("s^2 + K*s + 1"))
    assert iv.low == 0.0 and iv.high is None and not iv.low_closed
    assert iv.to_list() == [0.0, None]
    assert iv.describe() == "K in (0, inf)"


def test_no_stable_gain() -> None:
    """s^3 + s^2 + K s + K = (s + 1)(s^2 + K): never Hurwitz (a2 a1 = K = a3 a0)."""
    assert stable_gain_ranges(*expr.parse_affine("s^3 + s^2 + K*s + K")) == ()


def test_closed_end_where_the_degree_drops() -> None:
    """(1 - K) s^2 + s + 1: for K < 1 all coefficients are positive (stable); at K = 1 it is s + 1
    (root -1, stable); for K > 1 the leading coefficient is negative, the others positive: a root
    in the right half-plane. So K in (-inf, 1], closed at 1.

    K s^3 + s^2 + s + 1: for K > 0 the degree-3 closed form needs 1 > K; at K = 0 it is
    s^2 + s + 1 (stable); for K < 0 the signs differ. So K in [0, 1).
    """
    (iv,) = stable_gain_ranges(*expr.parse_affine("(1 - K)*s^2 + s + 1"))
    assert (iv.low, iv.high, iv.high_closed) == (None, 1.0, True)
    (iv,) = stable_gain_ranges(*expr.parse_affine("K*s^3 + s^2 + s + 1"))
    assert (iv.low, iv.high, iv.low_closed, iv.high_closed) == (0.0, 1.0, True, False)


@pytest.mark.parametrize("a1", [F(0), F(1, 2), F(-3, 2), F(5, 4)])
def test_z_domain_second_order(a1: Fraction) -> None:
    """z^2 + a1 z + K: roots in the unit disc iff |K| < 1 and |a1| < 1 + K (Jury, closed form in
    the module docstring), i.e. max(-1, |a1| - 1) < K < 1 when that is non-empty."""
    got = stable_gain_ranges((F(1), a1, F(0)), (F(1),), "z")
    lo, hi = max(F(-1), abs(a1) - 1), F(1)
    if lo >= hi:
        assert got == ()
        return
    (iv,) = got
    assert iv.low == pytest.approx(float(lo), abs=1e-12) and iv.high == pytest.approx(float(hi), abs=1e-12)
    assert not iv.low_closed and not iv.high_closed


def test_gain_interval_contains() -> None:
    iv = GainInterval(0.0, 6.0, False, True)
    assert not iv.contains(0.0) and iv.contains(3.0) and iv.contains(6.0) and not iv.contains(6.5)


def test_gain_must_appear() -> None:
    with pytest.raises(InputError, match="gain does not appear"):
        stable_gain_ranges((F(1), F(1)), (F(0),))
    with pytest.raises(InputError, match="unknown domain"):
        stable_gain_ranges((F(1), F(1)), (F(1),), "q")  # type: ignore[arg-type]
