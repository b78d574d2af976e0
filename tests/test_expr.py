"""The safe expression reader: grammar, exact numbers, and refusals.

Reference: sympy expands the same text (written in Python syntax, with exact Rationals) and its
coefficients must equal ours; sympy sees only expressions written here in the test, never user
text.
"""

from __future__ import annotations

import re
from fractions import Fraction

import pytest
import sympy
from hypothesis import given
from hypothesis import strategies as st

from sampled import expr
from sampled.errors import ExpressionError, InputError

F = Fraction
S = sympy.Symbol("s")


def sympy_coeffs(e: sympy.Expr) -> tuple[tuple[Fraction, ...], tuple[Fraction, ...]]:
    """Numerator and denominator of a sympy rational function, normalised like parse_rational:
    denominator's leading coefficient positive and 1 for a constant denominator."""
    num, den = sympy.fraction(sympy.cancel(sympy.together(e)))
    # parse_rational keeps common factors, so compare reduced forms on both sides.
    n = [F(int(c.p), int(c.q)) for c in sympy.Poly(num, S).all_coeffs()]
    d = [F(int(c.p), int(c.q)) for c in sympy.Poly(den, S).all_coeffs()]
    k = d[0]
    return tuple(c / k for c in n), tuple(c / k for c in d)


def reduced(text: str) -> tuple[tuple[Fraction, ...], tuple[Fraction, ...]]:
    num, den = expr.parse_rational(text)
    as_sympy = sympy.Poly(list(num), S).as_expr() / sympy.Poly(list(den), S).as_expr()
    return sympy_coeffs(as_sympy)


@pytest.mark.parametrize(
    "text, reference",
    [
        ("1 + 2*s^2", 1 + 2 * S**2),  # ^ binds tighter than *
        ("2*s**3 - s", 2 * S**3 - S),
        ("-s^2", -(S**2)),  # unary minus is looser than ^
        ("-2^2 + s", -4 + S),
        ("2^3^2", sympy.Integer(2) ** 9),  # right associative, as in Python
        ("s/2/4", S / 8),  # left associative division
        ("1 - s - 1", -S),  # left associative subtraction
        ("2s + 3", 2 * S + 3),  # implicit multiplication
        ("2 s^2", 2 * S**2),  # implicit product binds like *, below ^
        ("(s+1)(s+2)", (S + 1) * (S + 2)),
        ("s(s+1)", S * (S + 1)),
        ("s^-1", 1 / S),  # negative exponent
        ("(s+1)^-2 * s", S / (S + 1) ** 2),
        ("10*(s+2)/(s*(0.5*s+1)^2)", 10 * (S + 2) / (S * (sympy.Rational(1, 2) * S + 1) ** 2)),
        ("0.1*s + 1e-3", sympy.Rational(1, 10) * S + sympy.Rational(1, 1000)),
        ("1/(s^2 + 2*0.7*3*s + 9)", 1 / (S**2 + sympy.Rational(42, 10) * S + 9)),
        ("+s", S),
        ("(((s)))", S),
    ],
)
def test_grammar_against_sympy(text: str, reference: sympy.Expr) -> None:
    assert reduced(text) == sympy_coeffs(reference)


def test_numbers_are_exact_decimals() -> None:
    """0.1 is 1/10 exactly, and 35 significant digits survive."""
    assert expr.parse_polynomial("0.1") == (F(1, 10),)
    digits = "3.1415926535897932384626433832795028"
    assert expr.parse_polynomial(f"{digits}*s") == (F(digits), F(0))
    assert F(digits) != F(float(digits))
    assert expr.parse_polynomial("2.5e-3") == (F(1, 400),)
    assert expr.parse_polynomial(".5") == (F(1, 2),)


def test_common_factors_are_kept() -> None:
    """parse_rational keeps (s+1)/(s+1) as written; cancellation is the caller's decision."""
    assert expr.parse_rational("(s+1)/(s+1)") == ((F(1), F(1)), (F(1), F(1)))


def test_denominator_normalised() -> None:
    """A constant denominator is folded in; a negative leading coefficient is moved up."""
    assert expr.parse_rational("s/4") == ((F(1, 4), F(0)), (F(1),))
    assert expr.parse_rational("1/(-s+1)") == ((F(-1),), (F(1), F(-1)))


def test_variable_z() -> None:
    assert expr.parse_polynomial("z^2 - 1.2*z + 0.5", "z") == (F(1), F(-6, 5), F(1, 2))
    with pytest.raises(ExpressionError, match="unknown name 's'"):
        expr.parse_polynomial("s + 1", "z")


def test_affine_in_gain() -> None:
    """s^3 + 3 s^2 + 2 s + K -> p0 = s^3 + 3 s^2 + 2 s, p1 = 1; K may multiply a polynomial."""
    assert expr.parse_affine("s^3 + 3*s^2 + 2*s + K") == ((F(1), F(3), F(2), F(0)), (F(1),))
    assert expr.parse_affine("s*(s+1) + K*(s+3)/2") == ((F(1), F(1), F(0)), (F(1, 2), F(3, 2)))
    with pytest.raises(ExpressionError, match="affine"):
        expr.parse_affine("s + K^2")
    with pytest.raises(ExpressionError, match="does not appear"):
        expr.parse_affine("s + 1")
    with pytest.raises(ExpressionError, match="ratio"):
        expr.parse_affine("1/(s + K)")


@pytest.mark.parametrize(
    "text, message",
    [
        ("", "empty"),
        ("   ", "empty"),
        ("s^2 + x", "unknown name 'x'"),
        ("nan*s + 1", "unknown name 'nan'"),
        ("inf", "unknown name 'inf'"),
        ("(s+1", "unbalanced"),
        ("s+1)", "unbalanced"),
        ("__import__('os')", "unexpected character"),
        ("__import__", "unknown name '__import__'"),
        ("s.real", "unexpected character '.'"),
        ("(s+1).__class__", "unexpected character '.'"),
        ("s^100000", "too large"),
        ("s^(10^10)", "too large"),
        ("s^0.5", "whole number"),
        ("s^s", "must be a number"),
        ("1/0", "division by zero"),
        ("1/(s-s)", "division by zero"),
        ("0^-1", "division by zero"),
        ("1e999999999*s", "out of range"),
        ("s + 1e-999999999", "out of range"),
        ("((((((2^64)^64)^64)^64)^64)^64)", "bits"),
        ("(s+1)^64*(s+1)^64", "degree"),
        ("s +", "end of expression"),
        ("s * * 2", "unexpected"),
        ("s; 1", "unexpected character ';'"),
        ("s $ 1", "unexpected character '$'"),
    ],
)
def test_refusals(text: str, message: str) -> None:
    with pytest.raises(ExpressionError, match=re.escape(message)) as info:
        expr.parse_rational(text, where="--plant")
    assert str(info.value).startswith("--plant: ")
    assert "\n" not in str(info.value)
    assert isinstance(info.value, InputError) and isinstance(info.value, ValueError)


def test_ratio_refused_as_polynomial() -> None:
    with pytest.raises(ExpressionError, match="ratio"):
        expr.parse_polynomial("1/(s+1)")


def test_non_text_refused() -> None:
    with pytest.raises(ExpressionError, match="as text"):
        expr.parse_rational(3)  # type: ignore[arg-type]


coef = st.fractions(min_value=-20, max_value=20, max_denominator=12)


@given(st.lists(coef, min_size=1, max_size=8).filter(lambda c: c[0] != 0))
def test_round_trip_through_text(coeffs: list[Fraction]) -> None:
    """Writing a polynomial as text (p/q coefficients) and reading it back gives it exactly."""
    n = len(coeffs) - 1
    text = " + ".join(f"({c.numerator}/{c.denominator})*s^{n - i}" for i, c in enumerate(coeffs))
    assert expr.parse_polynomial(text) == tuple(coeffs)


@given(st.lists(coef, min_size=1, max_size=4), st.lists(coef, min_size=1, max_size=4))
def test_product_matches_sympy(a: list[Fraction], b: list[Fraction]) -> None:
    """(a(s))*(b(s)) expands as sympy expands it."""
    ta = "+".join(f"({c.numerator}/{c.denominator})*s^{len(a) - 1 - i}" for i, c in enumerate(a))
    tb = "+".join(f"({c.numerator}/{c.denominator})*s^{len(b) - 1 - i}" for i, c in enumerate(b))
    got = expr.parse_polynomial(f"({ta})({tb})")
    sa = sum(sympy.Rational(c.numerator, c.denominator) * S ** (len(a) - 1 - i) for i, c in enumerate(a))
    sb = sum(sympy.Rational(c.numerator, c.denominator) * S ** (len(b) - 1 - i) for i, c in enumerate(b))
    prod = sympy.expand(sa * sb)
    if prod == 0:
        assert got == (F(0),)
    else:
        want = tuple(F(int(c.p), int(c.q)) for c in sympy.Poly(prod, S).all_coeffs())
        assert got == want
