"""Exact Routh array: root counts against exact construction, mpmath and numpy; published examples.

Sources of truth, named beside each check:
* polynomials built from exact rational factors (tests/routh_truth.py derives each factor's roots);
* mpmath.polyroots at 50 digits (general-purpose reference library);
* numpy.roots where the roots are simple and well away from the imaginary axis;
* worked examples recalled from textbooks (marked "from memory"), each re-checked with mpmath.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import assume, given, note
from hypothesis import strategies as st

from routh_truth import (
    Built,
    left_pair,
    quad,
    right_pair,
    built_polynomials,
    counts_from_roots,
    imag_pair,
    left_real,
    mpmath_counts,
    mpmath_roots,
    numpy_counts,
    build,
    origin,
)
from sampled import poly as P
from sampled.criteria.routh import Eps, hurwitz_stable, routh_array
from sampled.errors import InputError, SampledError

F = Fraction


def counts(table) -> tuple[int, int, int]:
    return table.left, table.imaginary, table.right


# ---- property tests against exact construction, mpmath and numpy ---------------------------------

@given(built_polynomials(max_degree=12))
def test_counts_match_exact_construction_and_mpmath(b: Built) -> None:
    """Counts equal the construction (exact) and mpmath's 50-digit roots.

    The mpmath oracle splits off repeated factors exactly (sympy sqf_list) first, so every root
    it returns is simple and good to ~50 digits; a 1e-30 band around the axis classifies them.
    """
    note(f"poly = {P.format_poly(b.coeffs)}; factors = {[f.kind for f in b.factors]}")
    table = routh_array(b.coeffs)
    assert counts(table) == (b.left, b.imaginary, b.right)
    assert table.repeated_imaginary == b.repeated_imaginary
    assert table.verdict == b.verdict
    assert mpmath_counts(b.coeffs, tol=1e-30) == (b.left, b.imaginary, b.right)


@given(built_polynomials(max_degree=12))
def test_counts_match_numpy_where_roots_are_well_resolved(b: Built) -> None:
    """numpy.roots (companion matrix, double precision) where every root is simple.

    Simple roots of these modest polynomials are accurate to ~1e-10 relative, and off-axis
    roots have |Re| >= 1/4, so classify with a 1e-6 band.
    """
    assume(b.simple_roots)
    table = routh_array(b.coeffs)
    assert counts(table) == numpy_counts(b.coeffs, tol=1e-6)


@given(built_polynomials(max_degree=12, allow_axis=False))
def test_float_coefficients_enter_exactly(b: Built) -> None:
    """Rounding the coefficients to doubles and passing floats: the array holds the exact binary
    fractions, so its counts equal mpmath's on those same binary fractions."""
    floats = [float(c) for c in b.coeffs]
    table = routh_array(floats)
    assert table.coefficients == tuple(F(x) for x in floats)
    exact_binary = tuple(F(x) for x in floats)
    assert counts(table) == mpmath_counts(exact_binary, tol=1e-30)


@st.composite
def first_column_zero_polynomials(draw: st.DrawFn) -> tuple[Fraction, ...]:
    """Integer polynomials forced to meet a zero first entry in a nonzero row.

    * ``a_{n-1} = 0`` with some other odd-position coefficient nonzero: the s^(n-1) row starts
      with 0 but is not all zeros;
    * ``a_{n-1} a_{n-2} = a_n a_{n-3}``: the s^(n-2) row starts with
      (a_{n-1} a_{n-2} - a_n a_{n-3}) / a_{n-1} = 0.
    """
    n = draw(st.integers(3, 12))
    c = [F(draw(st.integers(-9, 9))) for _ in range(n + 1)]
    c[0] = F(draw(st.sampled_from([1, 2, -1, 3])))
    if draw(st.booleans()):
        c[1] = F(0)
        if all(c[k] == 0 for k in range(3, n + 1, 2)):
            c[3] = F(draw(st.sampled_from([1, -2, 5])))
    else:
        if c[1] == 0:
            c[1] = F(1)
        if c[3] == 0:
            c[3] = F(2)
        c[2] = c[0] * c[3] / c[1]
    c[-1] = c[-1] if c[-1] != 0 else F(draw(st.sampled_from([1, -1, 4])))
    return tuple(c)


@given(first_column_zero_polynomials())
def test_first_column_zero_against_mpmath(coeffs: tuple[Fraction, ...]) -> None:
    """Zero first entries (the eps limit) give mpmath's 50-digit counts.

    Integer polynomials of degree <= 12 with coefficients <= 9 in size have no root within
    1e-30 of the imaginary axis other than roots exactly on it, which mpmath places within
    ~1e-45 (1e-25 for a double root); 1e-20 separates them.
    """
    note(f"poly = {P.format_poly(coeffs)}")
    table = routh_array(coeffs)
    assert table.eps_rows or table.auxiliary  # the special case really happened
    truth = mpmath_counts(coeffs, tol=1e-20)
    assert counts(table) == truth


@given(st.lists(st.integers(-6, 6), min_size=2, max_size=13).filter(lambda c: c[0] != 0 and c[-1] != 0))
def test_random_integer_polynomials_against_mpmath(raw: list[int]) -> None:
    """Unstructured integer coefficients (zero rows and zero first entries come up by chance)."""
    coeffs = tuple(F(x) for x in raw)
    assert counts(routh_array(coeffs)) == mpmath_counts(coeffs, tol=1e-20)


@given(built_polynomials(max_degree=10), st.sampled_from([F(-1), F(2), F(1, 3), F(-7, 5)]))
def test_counts_do_not_depend_on_scale(b: Built, k: Fraction) -> None:
    """Multiplying by a nonzero constant leaves the roots alone."""
    assert counts(routh_array(P.scale(b.coeffs, k))) == counts(routh_array(b.coeffs))


# ---- explicit special cases, each truth derived in the docstring ---------------------------------

def test_repeated_imaginary_pair_is_unstable() -> None:
    """(s^2 + 1)^2 (s + 1): roots +-j twice (response grows like t sin t) and -1."""
    b = build([imag_pair(F(1)), imag_pair(F(1)), left_real(F(1))])
    table = routh_array(b.coeffs)
    assert counts(table) == (1, 4, 0)
    assert table.repeated_imaginary
    assert table.verdict == "unstable"
    assert table.auxiliary  # a row of zeros was met


def test_distinct_imaginary_pairs_are_marginal() -> None:
    """(s^2 + 1)(s^2 + 4)(s + 2): simple roots +-j, +-2j, and -2: marginal."""
    b = build([imag_pair(F(1)), imag_pair(F(4)), left_real(F(2))])
    table = routh_array(b.coeffs)
    assert counts(table) == (1, 4, 0)
    assert not table.repeated_imaginary
    assert table.verdict == "marginal"


def test_roots_at_origin() -> None:
    """s^2 (s + 1): double root at 0 (unstable, response grows like t); s (s + 1): marginal."""
    double = routh_array(build([origin(), origin(), left_real(F(1))]).coeffs)
    assert (double.origin_roots, counts(double), double.verdict) == (2, (1, 2, 0), "unstable")
    single = routh_array(build([origin(), left_real(F(1))]).coeffs)
    assert (single.origin_roots, counts(single), single.verdict) == (1, (1, 1, 0), "marginal")


def test_origin_and_imaginary_pair_together() -> None:
    """s (s^2 + 3)(s + 1): simple roots 0, +-j sqrt 3, -1: marginal, 3 on the axis."""
    table = routh_array(build([origin(), imag_pair(F(3)), left_real(F(1))]).coeffs)
    assert counts(table) == (1, 3, 0)
    assert table.verdict == "marginal"


def test_eps_entries_are_exact_functions() -> None:
    """s^3 + 0 s^2 + s + 1 (eps case): the s^1 row entry is (eps - 1)/eps, negative as eps -> 0+."""
    table = routh_array([1, 0, 1, 1])
    assert table.eps_rows == (1,)
    e1 = table.first_column[2]
    assert isinstance(e1, Eps)
    assert e1 == (Eps([F(0), F(1)]) - 1) / Eps([F(0), F(1)])
    assert table.signs == (1, 1, -1, 1)
    assert counts(table) == mpmath_counts((F(1), F(0), F(1), F(1)))


def test_eps_row_with_imaginary_roots_regression() -> None:
    """Found by hypothesis (kept as a regression): (s^2 + s + 13/36) * quad(1/4, 1/3) *
    (s^2 + 1/4) * (s^2 - s + 5/4). The s^9 coefficient is zero, so the eps limit is used; it moves
    the pair +-j/2 off the axis and the first column alone counts it as left-half-plane roots.
    Truth from the factors (quadratic formula): 4 left, 2 on the axis (+-j/2), 4 right."""
    b = build([left_pair(F(1, 2), F(1, 3)), quad(F(1, 4), F(1, 3)), imag_pair(F(1, 4)), right_pair(F(1, 2), F(1))])
    assert b.coeffs[1] == 0
    table = routh_array(b.coeffs)
    assert table.eps_rows
    assert counts(table) == (4, 2, 4) == mpmath_counts(b.coeffs)
    assert table.symmetric_factor is not None
    assert any("gcd(p(s), p(-s))" in n for n in table.notes)


def test_degree_zero_and_one() -> None:
    """Constant: no roots, stable; s + 2: root -2; s - 2: root 2."""
    assert counts(routh_array([5])) == (0, 0, 0)
    assert routh_array([1, 2]).verdict == "stable"
    assert routh_array([1, -2]).verdict == "unstable"
    assert routh_array([3, 0]).verdict == "marginal"


def test_hurwitz_stable_shortcut() -> None:
    """(s + 1)^3 = s^3 + 3 s^2 + 3 s + 1 is stable; s^3 + s^2 + s + 1 = (s + 1)(s^2 + 1) is not."""
    assert hurwitz_stable([1, 3, 3, 1])
    assert not hurwitz_stable([1, 1, 1, 1])


@pytest.mark.parametrize(
    "coeffs, message",
    [([], "zero polynomial"), ([0, 0], "zero polynomial"), ([0, 1, 2], "leading coefficient"),
     ([1, math.nan, 1], "finite"), ([1, math.inf], "finite"), (["1", "abc"], "expected a number")],
)
def test_bad_coefficients_are_refused(coeffs: list[object], message: str) -> None:
    with pytest.raises(InputError, match=message):
        routh_array(coeffs)
    assert issubclass(InputError, SampledError)


def test_to_dict_shape() -> None:
    """JSON form: entries as strings, counts and verdict."""
    d = routh_array([1, 2, 3, 4]).to_dict()  # s^3+2s^2+3s+4: 2*3 > 1*4, stable (Hurwitz, n = 3)
    assert d["domain"] == "s" and d["verdict"] == "stable"
    assert d["counts"] == {"left": 3, "imaginary": 0, "right": 0}
    assert d["routh"] == [["1", "3"], ["2", "4"], ["1", "0"], ["4", "0"]]
    assert all(isinstance(x, str) for row in d["routh"] for x in row)


# ---- published worked examples (each re-checked with mpmath in the same test) --------------------

def _check_with_mpmath(coeffs: list[int], expected: tuple[int, int, int]) -> None:
    exact = tuple(F(c) for c in coeffs)
    assert mpmath_counts(exact, tol=1e-20) == expected


def test_ogata_zero_in_first_column() -> None:
    """Ogata, *Modern Control Engineering*, 5th ed., section 5-6 (from memory): s^3 - 3 s + 2 = 0.

    The s^2 coefficient is zero, so the s^2 row starts with 0 and is replaced by eps; the first
    column is 1, eps, -3 - 2/eps, 2: two sign changes, two right-half-plane roots. Indeed
    s^3 - 3 s + 2 = (s - 1)^2 (s + 2).
    """
    table = routh_array([1, 0, -3, 2])
    assert table.eps_rows == (1,)
    assert table.signs == (1, 1, -1, 1)
    assert counts(table) == (1, 0, 2)
    _check_with_mpmath([1, 0, -3, 2], (1, 0, 2))


def test_ogata_row_of_zeros() -> None:
    """Ogata, *Modern Control Engineering*, 5th ed., section 5-6 (from memory):
    s^5 + 2 s^4 + 24 s^3 + 48 s^2 - 25 s - 50 = 0.

    The s^3 row vanishes; the auxiliary polynomial is 2 s^4 + 48 s^2 - 50 = 2 (s^2 - 1)(s^2 + 25)
    with derivative 8 s^3 + 96 s. One sign change: one root in the right half-plane (s = 1);
    roots +-5j on the axis; -1 and -2 on the left.
    """
    table = routh_array([1, 2, 24, 48, -25, -50])
    assert len(table.auxiliary) == 1
    aux = table.auxiliary[0]
    assert [F(x) for x in aux.polynomial] == [2, 0, 48, 0, -50]
    assert table.rows[2][:2] == (8, 96)
    assert table.sign_changes == 1
    assert counts(table) == (2, 2, 1)
    assert table.verdict == "unstable"
    _check_with_mpmath([1, 2, 24, 48, -25, -50], (2, 2, 1))


def test_ogata_imaginary_pair_by_zero_row() -> None:
    """Ogata, *Modern Control Engineering*, 5th ed., section 5-6 (from memory): s^3 + 2 s^2 + s + 2 = 0.

    The s^1 row is 0 (a row of zeros of one entry); the pair of imaginary roots is s = +-j since
    s^3 + 2 s^2 + s + 2 = (s^2 + 1)(s + 2): marginal.
    """
    table = routh_array([1, 2, 1, 2])
    assert counts(table) == (1, 2, 0)
    assert table.verdict == "marginal"
    _check_with_mpmath([1, 2, 1, 2], (1, 2, 0))


def test_nise_epsilon_example() -> None:
    """Nise, *Control Systems Engineering*, 6th ed., chapter 6, the epsilon example (from memory):
    T(s) = 10 / (s^5 + 2 s^4 + 3 s^3 + 6 s^2 + 5 s + 3).

    The s^3 row starts with 0; with eps the first column has two sign changes: two poles in the
    right half-plane, three in the left.
    """
    table = routh_array([1, 2, 3, 6, 5, 3])
    assert table.eps_rows == (2,)
    assert table.sign_changes == 2
    assert counts(table) == (3, 0, 2)
    _check_with_mpmath([1, 2, 3, 6, 5, 3], (3, 0, 2))


def test_nise_row_of_zeros_example() -> None:
    """Nise, *Control Systems Engineering*, 6th ed., chapter 6, the row-of-zeros example (from
    memory): T(s) = 10 / (s^5 + 7 s^4 + 6 s^3 + 42 s^2 + 8 s + 56).

    The s^3 row vanishes; the auxiliary polynomial s^4 + 6 s^2 + 8 = (s^2 + 2)(s^2 + 4) puts four
    poles on the imaginary axis (+-j sqrt 2, +-2j); the fifth is -7. No sign change: marginal.
    """
    table = routh_array([1, 7, 6, 42, 8, 56])
    aux = table.auxiliary[0]
    assert [F(x) for x in aux.polynomial] == [7, 0, 42, 0, 56]  # 7 (s^4 + 6 s^2 + 8)
    assert aux.imaginary_roots == 4
    assert counts(table) == (1, 4, 0)
    assert table.verdict == "marginal"
    _check_with_mpmath([1, 7, 6, 42, 8, 56], (1, 4, 0))


def test_dorf_bishop_epsilon_example() -> None:
    """Dorf & Bishop, *Modern Control Systems*, chapter 6 (from memory), the case of a zero first
    element: q(s) = s^5 + 2 s^4 + 2 s^3 + 4 s^2 + 11 s + 10.

    The s^3 row starts with 0; with eps the first column changes sign twice: two roots in the right
    half-plane.
    """
    table = routh_array([1, 2, 2, 4, 11, 10])
    assert table.eps_rows
    assert counts(table) == (3, 0, 2)
    _check_with_mpmath([1, 2, 2, 4, 11, 10], (3, 0, 2))


def test_dorf_bishop_gain_limit_and_origin() -> None:
    """Dorf & Bishop, *Modern Control Systems*, chapter 6 (from memory): s^3 + 2 s^2 + 4 s + K is
    stable for 0 < K < 8. At K = 8 the s^1 row vanishes: s^3 + 2 s^2 + 4 s + 8 = (s + 2)(s^2 + 4),
    roots +-2j. At K = 0 the root at the origin appears: s (s^2 + 2 s + 4).
    """
    at8 = routh_array([1, 2, 4, 8])
    assert counts(at8) == (1, 2, 0) and at8.verdict == "marginal"
    _check_with_mpmath([1, 2, 4, 8], (1, 2, 0))
    at0 = routh_array([1, 2, 4, 0])
    assert at0.origin_roots == 1 and counts(at0) == (2, 1, 0) and at0.verdict == "marginal"
    _check_with_mpmath([1, 2, 4], (2, 0, 0))  # the quotient s^2 + 2 s + 4
    assert routh_array([1, 2, 4, 4]).verdict == "stable"
    assert routh_array([1, 2, 4, 9]).verdict == "unstable"


# ---- exactness: typed decimals vs doubles ---------------------------------------------------------

#: a2 = a1 = 1 + 6e-17 (31 significant digits): below half an ulp above 1 (1.11e-16), rounds to 1.
A1_TEXT = "1.000000000000000060000000000000"
#: a0 = 1 + 1.2e-16 + 1e-33: above half an ulp, rounds to 1 + 2^-52.
A0_TEXT = "1.000000000000000120000000000000001"


def test_typed_decimals_decide_the_verdict() -> None:
    """s^3 + a2 s^2 + a1 s + a0 with a3 = 1 is Hurwitz iff all a > 0 and a2 a1 > a0 (closed form,
    derived in tests/test_gain.py).

    Exactly: a2 a1 = 1 + 1.2e-16 + 3.6e-33 > a0 = 1 + 1.2e-16 + 1e-33: stable, with a complex pair
    about 1e-33 left of the axis. After rounding to double: a2 = a1 = 1, a0 = 1 + 2^-52, so
    a2 a1 < a0: unstable. The Routh verdict on the typed text must be the exact one.
    """
    a1, a0 = P.exact(A1_TEXT), P.exact(A0_TEXT)
    assert a1 * a1 > a0  # closed form, exact
    assert float(a1) * float(a1) < float(a0)  # closed form on the doubles
    exact_table = routh_array(["1", A1_TEXT, A1_TEXT, A0_TEXT])
    assert exact_table.verdict == "stable"
    rounded_table = routh_array([1.0, float(A1_TEXT), float(A1_TEXT), float(A0_TEXT)])
    assert rounded_table.verdict == "unstable"
    # mpmath at 50 digits on the exact coefficients: all real parts negative (the pair's at ~-1e-33)
    roots = mpmath_roots((F(1), a1, a1, a0), dps=60)
    assert all(r.real < 0 for r in roots)
    assert max(float(r.real) for r in roots) > -1e-30  # genuinely close to the boundary
    assert counts_from_roots(roots, tol=0.0) == (3, 0, 0)
