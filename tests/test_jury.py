"""The Jury table: published worked examples, the second-order stability triangle, exact rows."""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled.criteria.jury import jury_table
from sampled.criteria.unit_circle import circle_counts
from sampled.errors import InputError


def _mp_spectral_radius(coeffs: list[str]) -> mpmath.mpf:
    with mpmath.workdps(40):
        roots = mpmath.polyroots([mpmath.mpf(c) for c in coeffs], maxsteps=200, extraprec=80)
        return max(abs(r) for r in roots)


def test_ogata_example_stable_quartic() -> None:
    """Ogata, "Discrete-Time Control Systems", 2nd ed., 1995, section 4-3, Jury test example
    (from memory): P(z) = z^4 - 1.2 z^3 + 0.07 z^2 + 0.3 z - 0.08, judged stable. The book prints
    the b row as -0.9936, 1.1760, -0.0756, -0.2040 and the c row as 0.9456, -1.1839, 0.3150 (four
    decimals, so the tolerance is 5e-5). Double-checked: the roots 0.8, 0.5, -0.5, 0.4 (mpmath).
    """
    coeffs = ["1", "-1.2", "0.07", "0.3", "-0.08"]
    t = jury_table(coeffs, reduced=False)
    assert t.verdict == "stable"
    assert t.first_failure is None
    assert [float(x) for x in t.rows[0]] == [-0.08, 0.3, 0.07, -1.2, 1.0]
    b_row = [float(x) for x in t.rows[2]]
    c_row = [float(x) for x in t.rows[4]]
    assert b_row == pytest.approx([-0.9936, 1.1760, -0.0756, -0.2040], abs=5e-5)
    assert c_row == pytest.approx([0.9456, -1.1839, 0.3150], abs=5e-5)
    assert len(t.rows) == 2 * 4 - 3
    # mpmath double-check of the book's conclusion and of the roots recalled above
    with mpmath.workdps(40):
        roots = sorted(float(mpmath.re(r)) for r in mpmath.polyroots([mpmath.mpf(c) for c in coeffs]))
    assert roots == pytest.approx([-0.5, 0.4, 0.5, 0.8], abs=1e-30)
    assert _mp_spectral_radius(coeffs) < 1


def test_ogata_example_critically_stable_cubic() -> None:
    """Ogata, "Discrete-Time Control Systems", 2nd ed., 1995, section 4-3 (from memory):
    P(z) = z^3 - 1.1 z^2 - 0.1 z + 0.2 has P(1) = 0, so the test fails at the first condition and
    the book calls the system critically stable. Double-check: P = (z - 1)(z - 0.5)(z + 0.4).
    """
    coeffs = ["1", "-1.1", "-0.1", "0.2"]
    t = jury_table(coeffs)
    assert t.first_failure == "P(1) > 0"
    assert t.conditions[0].left == 0
    assert t.verdict == "not stable"
    c = circle_counts(coeffs)
    assert (c.inside, c.on, c.outside, c.verdict) == (2, 1, 0, "marginal")
    with mpmath.workdps(40):
        roots = sorted(float(mpmath.re(r)) for r in mpmath.polyroots([mpmath.mpf(x) for x in coeffs]))
    assert roots == pytest.approx([-0.4, 0.5, 1.0], abs=1e-30)


def _triangle(a1: Fraction, a0: Fraction) -> str:
    """Closed form for z^2 + a1 z + a0 (derived here, not taken from the code under test).

    Both roots are inside iff |a0| < 1, 1 + a1 + a0 > 0 and 1 - a1 + a0 > 0: a0 is the product of
    the roots; P(1) > 0 and P(-1) > 0 say no real root lies in [1, inf) or (-inf, -1] on the side
    where it could cross. On the closed triangle's edges a root sits on the circle:
    P(1) = 0 puts a root at z = 1, P(-1) = 0 at z = -1, a0 = 1 with |a1| < 2 a complex pair on it.
    Marginal means simple on-circle roots and none outside: the edges without the corners
    (corners (a1, a0) = (2, 1) and (-2, 1) are double roots at -1 and 1; (0, -1) gives roots +-1,
    simple, so marginal).
    """
    if abs(a0) < 1 and 1 + a1 + a0 > 0 and 1 - a1 + a0 > 0:
        return "stable"
    inside_closed = abs(a0) <= 1 and 1 + a1 + a0 >= 0 and 1 - a1 + a0 >= 0
    if not inside_closed:
        return "unstable"
    if a0 == 1 and abs(a1) == 2:
        return "unstable"  # double root at z = +-1
    return "marginal"


def test_second_order_triangle_on_fine_grid() -> None:
    """Second-order stability triangle (closed form in ``_triangle``) on a grid of step 1/16 that
    contains every edge and corner exactly: Jury verdict and exact counts agree with it."""
    step = Fraction(1, 16)
    checked = 0
    for i in range(-40, 41):  # a1 in [-2.5, 2.5]
        for j in range(-24, 25):  # a0 in [-1.5, 1.5]
            a1, a0 = i * step, j * step
            expected = _triangle(a1, a0)
            coeffs = [Fraction(1), a1, a0]
            assert (jury_table(coeffs).verdict == "stable") == (expected == "stable"), (a1, a0)
            assert circle_counts(coeffs).verdict == expected, (a1, a0)
            checked += 1
    assert checked == 81 * 49


@pytest.mark.parametrize(
    ("a1", "a0", "failure"),
    [
        ("-2", "1", "P(1) > 0"),  # (z - 1)^2
        ("2", "1", "(-1)^n P(-1) > 0"),  # (z + 1)^2
        ("0", "1", "|a_0| < a_2"),  # z^2 + 1
        ("0", "-1", "P(1) > 0"),  # (z - 1)(z + 1)
    ],
)
def test_triangle_corners_name_first_failure(a1: str, a0: str, failure: str) -> None:
    """Boundary points of the triangle: the first failing condition is the one that is zero there."""
    assert jury_table(["1", a1, a0]).first_failure == failure


def test_negative_leading_coefficient_is_normalised() -> None:
    t = jury_table(["-1", "0.5", "-0.06"])  # -(z - 0.2)(z - 0.3)
    assert t.verdict == "stable"
    assert t.coefficients[0] == 1
    assert t.notes


def test_degree_one() -> None:
    """z - a has its root at a: stable iff |a| < 1 (closed form)."""
    for a, stable in (("0.5", True), ("-0.999", True), ("1", False), ("-1.5", False)):
        assert (jury_table([Fraction(1), -Fraction(a)]).verdict == "stable") is stable


def test_degree_zero_is_refused() -> None:
    with pytest.raises(InputError, match="polynomial"):
        jury_table(["3"])


def test_to_dict_rows_are_strings() -> None:
    d = jury_table(["1", "-1.2", "0.07", "0.3", "-0.08"]).to_dict()
    assert d["rows"][0] == ["-2/25", "3/10", "7/100", "-6/5", "1"]
    assert all(isinstance(x, str) for row in d["rows"] for x in row)
    assert d["verdict"] == "stable"


small_ints = st.integers(min_value=-9, max_value=9)


@settings(derandomize=True, max_examples=60, deadline=None)
@given(st.lists(small_ints, min_size=4, max_size=10).filter(lambda c: c[0] != 0))
def test_reduced_rows_are_positive_multiples_of_textbook_rows(coeffs: list[int]) -> None:
    """Dividing derived rows by |pivot two rows up| is a positive scaling: every condition and the
    sign pattern survive, and the verdict matches the exact counts."""
    plain = jury_table(coeffs, reduced=False)
    short = jury_table(coeffs, reduced=True)
    assert [c.holds for c in plain.conditions] == [c.holds for c in short.conditions]
    for r_plain, r_short in zip(plain.rows, short.rows):
        nz = [(x, y) for x, y in zip(r_plain, r_short) if x != 0 or y != 0]
        if nz:
            ratio = nz[0][0] / nz[0][1]
            assert ratio > 0
            assert all(x == ratio * y for x, y in nz)
    assert (short.verdict == "stable") == (circle_counts(coeffs).verdict == "stable")
