"""Exact polynomial helpers against sympy's exact polynomial algebra and numpy's float algebra."""

from __future__ import annotations

import math
from decimal import Decimal
from fractions import Fraction

import numpy as np
import pytest
import sympy
from hypothesis import given
from hypothesis import strategies as st

from sampled import poly as P
from sampled.errors import InputError

F = Fraction
X = sympy.Symbol("x")

coef = st.fractions(min_value=-50, max_value=50, max_denominator=20)
polys = st.lists(coef, min_size=1, max_size=8).map(P.trim)


def to_sympy(p: tuple[Fraction, ...]) -> sympy.Poly:
    return sympy.Poly([sympy.Rational(c.numerator, c.denominator) for c in p], X, domain="QQ")


def from_sympy(p: sympy.Poly) -> tuple[Fraction, ...]:
    c = p.all_coeffs()
    return P.trim(F(int(x.p), int(x.q)) for x in c) if c else P.ZERO


def test_exact_reads_text_as_written_and_floats_as_binary() -> None:
    assert P.exact("0.1") == F(1, 10)
    assert P.exact(Decimal("0.1")) == F(1, 10)
    assert P.exact(0.1) == F(3602879701896397, 2**55)  # the double nearest 0.1 (IEEE 754)
    assert P.exact(np.float64(0.5)) == F(1, 2)
    assert P.exact(np.int64(7)) == F(7)
    assert P.exact(F(2, 3)) == F(2, 3)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf, "nan", "inf", "abc", True, None, [1], "1e999999"])
def test_exact_refuses(bad: object) -> None:
    with pytest.raises(InputError):
        P.exact(bad, "den[0]")


def test_from_values() -> None:
    assert P.from_values([0, 0, 1, 2]) == (F(1), F(2))
    assert P.from_values([0, 0]) == P.ZERO
    with pytest.raises(InputError, match="empty"):
        P.from_values([], "num")
    with pytest.raises(InputError, match=r"num\[1\]"):
        P.from_values([1, math.nan], "num")


def test_degree() -> None:
    assert P.degree(P.ZERO) == -1
    assert P.degree((F(0), F(3))) == 0
    assert P.degree((F(1), F(0), F(0))) == 2


@given(polys, polys)
def test_add_sub_mul_against_sympy(p, q) -> None:
    assert P.add(p, q) == from_sympy(to_sympy(p) + to_sympy(q))
    assert P.sub(p, q) == from_sympy(to_sympy(p) - to_sympy(q))
    assert P.mul(p, q) == from_sympy(to_sympy(p) * to_sympy(q))


@given(polys, polys.filter(lambda q: not P.is_zero(q)))
def test_divmod_gcd_against_sympy(p, q) -> None:
    quot, rem = P.divmod_(p, q)
    sq, sr = sympy.div(to_sympy(p), to_sympy(q))
    assert quot == from_sympy(sq) and rem == from_sympy(sr)
    g = P.gcd(p, q)
    assert g == from_sympy(sympy.gcd(to_sympy(p), to_sympy(q)).monic())


@given(polys, st.integers(0, 5))
def test_power_derivative_evaluate(p, n) -> None:
    assert P.power(p, n) == from_sympy(to_sympy(p) ** n)
    assert P.derivative(p) == from_sympy(to_sympy(p).diff(X))
    x = F(3, 7)
    assert P.evaluate(p, x) == F(str(to_sympy(p).eval(sympy.Rational(3, 7))))


@given(polys)
def test_reflect_negative(p) -> None:
    assert P.reflect_negative(p) == from_sympy(sympy.Poly(to_sympy(p).as_expr().subs(X, -X), X, domain="QQ"))


@given(st.lists(coef, min_size=1, max_size=5).map(P.trim))
def test_compose_mobius_against_sympy(p) -> None:
    """(1 - x)^n p((1 + x)/(1 - x)), n = deg p: the bilinear substitution cleared of denominators."""
    n = len(p) - 1
    got = P.compose_mobius(p, (F(1), F(1)), (F(-1), F(1)))
    want = sympy.expand((1 - X) ** n * to_sympy(p).as_expr().subs(X, (1 + X) / (1 - X)))
    want = sympy.cancel(want)
    assert got == (from_sympy(sympy.Poly(want, X, domain="QQ")) if want != 0 else P.ZERO)


@given(st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=1, max_size=6))
def test_float_round_trip(values) -> None:
    p = P.from_float(values)
    back = P.to_float(p)
    trimmed = np.trim_zeros(np.array(values), "f")
    if trimmed.size == 0:
        trimmed = np.array([0.0])
    assert np.array_equal(back, trimmed)


def test_format() -> None:
    assert P.format_poly((F(2), F(1, 2), F(-1)), "s") == "2*s^2 + 0.5*s - 1"
    assert P.format_poly((F(-1), F(0), F(0)), "z") == "-z^2"
    assert P.format_poly(P.ZERO) == "0"
    assert P.format_number(F(1, 3)) == "0.3333333333"
    assert P.format_number(F(3, 8)) == "0.375"
    assert P.format_number(F(7)) == "7"
