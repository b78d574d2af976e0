"""The bilinear map to the w-plane and the Routh array there."""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled import poly
from sampled.criteria.roots import precise_roots
from sampled.criteria.unit_circle import circle_counts, mobius_transform
from sampled.criteria.wplane import from_w, to_scaled_w, to_w, wplane_routh
from sampled.errors import InputError

ONE = Fraction(1)


def test_first_order_closed_form() -> None:
    """P(z) = z - a: Q(w) = (1 - w)((1 + w)/(1 - w) - a) = (1 + a) w + (1 - a) (derived here)."""
    for a in (Fraction(1, 2), Fraction(-3, 4), Fraction(2), Fraction(1), Fraction(-1)):
        assert to_w((ONE, -a)) == poly.trim((1 + a, 1 - a))


def test_second_order_closed_form_is_the_triangle() -> None:
    """P(z) = z^2 + a1 z + a0 maps to Q(w) = (1 - a1 + a0) w^2 + 2 (1 - a0) w + (1 + a1 + a0)
    (expand (1 + w)^2 + a1 (1 + w)(1 - w) + a0 (1 - w)^2). A quadratic is Hurwitz iff its three
    coefficients share a sign, which is the stability triangle P(-1) > 0, |a0| < 1, P(1) > 0."""
    for a1 in (Fraction(-3, 2), Fraction(0), Fraction(7, 5)):
        for a0 in (Fraction(-1, 2), Fraction(1, 3), Fraction(1)):
            q = to_w((ONE, a1, a0))
            assert q == poly.trim((1 - a1 + a0, 2 * (1 - a0), 1 + a1 + a0))


def test_degree_drop_means_roots_at_minus_one() -> None:
    """(z + 1)^2 (z - 1/2): Q has degree 1; the two roots at z = -1 are on the circle, repeated."""
    p = poly.mul(poly.power((ONE, ONE), 2), (ONE, Fraction(-1, 2)))
    r = wplane_routh(p)
    assert poly.degree(r.w_polynomial) == 1
    assert r.at_minus_one == 2
    assert (r.inside, r.on, r.outside, r.repeated_on_circle, r.verdict) == (1, 2, 0, True, "unstable")
    simple = wplane_routh((ONE, ONE))  # z + 1: Q is a nonzero constant, no Routh array
    assert simple.routh is None
    assert (simple.on, simple.verdict) == (1, "marginal")


def test_scaled_map_tends_to_continuous_pole() -> None:
    """First-order lag sampled: z0 = exp(-a T). Its w' image is (2/T)(z0 - 1)/(z0 + 1) =
    -(2/T) tanh(a T / 2) (closed form), which tends to the continuous pole -a as T -> 0."""
    a = 3.0
    for period in ("0.1", "0.001", "1e-6"):
        t = float(period)
        z0 = Fraction(math.exp(-a * t))
        q = to_scaled_w((ONE, -z0), period)
        root = -q[1] / q[0]
        assert float(root) == pytest.approx(-(2 / t) * math.tanh(a * t / 2), rel=1e-9)
    assert float(root) == pytest.approx(-a, rel=1e-9)


def test_scaled_map_refuses_bad_period() -> None:
    with pytest.raises(InputError, match="period_s"):
        to_scaled_w((ONE, Fraction(-1, 2)), "0")
    with pytest.raises(InputError, match="period_s"):
        to_scaled_w((ONE, Fraction(-1, 2)), "-1")


def test_ogata_quartic_counts() -> None:
    """Ogata, "Discrete-Time Control Systems", 1995, section 4-3 (from memory): the stable quartic
    z^4 - 1.2 z^3 + 0.07 z^2 + 0.3 z - 0.08 (roots 0.8, 0.5, -0.5, 0.4) has all four w-plane roots
    in the left half-plane: w = (z - 1)/(z + 1) = -1/9, -1/3, -3, -3/7 (closed form)."""
    r = wplane_routh(["1", "-1.2", "0.07", "0.3", "-0.08"])
    assert (r.inside, r.on, r.outside, r.verdict) == (4, 0, 0, "stable")
    expected = poly.mul(
        poly.mul((ONE, Fraction(1, 9)), (ONE, Fraction(1, 3))), poly.mul((ONE, Fraction(3)), (ONE, Fraction(3, 7)))
    )
    assert poly.monic(r.w_polynomial) == expected


ints = st.integers(min_value=-7, max_value=7)


@settings(derandomize=True, max_examples=60, deadline=None)
@given(st.lists(ints, min_size=2, max_size=10).filter(lambda c: c[0] != 0))
def test_round_trip_and_root_map(coeffs: list[int]) -> None:
    """from_w(to_w(P)) = 2^n P; (z - 1)/(z + 1) of each root of P other than -1 is a root of Q
    (mpmath, 40 digits); scaled and unscaled maps give the same counts as the exact circle counts."""
    p = poly.from_values(coeffs)
    n = poly.degree(p)
    q = to_w(p)
    assert from_w(q, n) == poly.scale(p, Fraction(2**n))
    c = circle_counts(p)
    for r in (wplane_routh(p), wplane_routh(p, "0.01"), wplane_routh(p, "3")):
        assert (r.inside, r.on, r.outside, r.repeated_on_circle) == (c.inside, c.on, c.outside, c.repeated_on_circle)
    # every root z != -1 of P (mpmath, on exact square-free factors) maps to a root of Q
    scale = sum(abs(float(x)) for x in q)
    with mpmath.workdps(40):
        qm = [mpmath.mpf(x.numerator) / x.denominator for x in q]
        for z in precise_roots(p, "z", 40).roots:
            if abs(z + 1) < 1e-12:
                continue
            w = (mpmath.mpc(z) - 1) / (mpmath.mpc(z) + 1)
            assert abs(mpmath.polyval(qm, w)) <= 1e-9 * scale * max(1, abs(w)) ** len(q)


def test_to_dict_keys() -> None:
    d = wplane_routh(["1", "-1.5", "0.5"], period_s="0.5").to_dict()
    assert d["variable"] == "w'"
    assert d["counts"] == {"inside": 1, "on": 1, "outside": 0}
    assert d["verdict"] == "marginal"
    assert all(isinstance(x, str) for row in d["routh"] for x in row)


fracs = st.fractions(min_value=-5, max_value=5, max_denominator=9)


@settings(derandomize=True, max_examples=40, deadline=None)
@given(st.lists(fracs, min_size=1, max_size=9), st.tuples(fracs, fracs), st.tuples(fracs, fracs))
def test_integer_mobius_equals_poly_compose_mobius(p: list[Fraction], a: tuple[Fraction, Fraction], b: tuple[Fraction, Fraction]) -> None:
    """The fast integer substitution used by the maps gives exactly sampled.poly.compose_mobius."""
    assert mobius_transform(tuple(p), a, b) == poly.compose_mobius(tuple(p), a, b)
