"""Exact unit-circle root counts, cross-checked against constructions with known roots, mpmath roots,
the Jury table and the w-plane Routh array; and the vectorised float verdicts against numpy roots."""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import mpmath
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled import poly
from sampled.criteria.jury import jury_table
from sampled.criteria.roots import precise_roots
from sampled.criteria.unit_circle import (
    circle_counts,
    float_circle_verdicts,
    real_roots_between,
    spectral_radii,
    square_free_parts,
)
from sampled.criteria.wplane import wplane_routh
from sampled.errors import InputError
from sampled.verdict import judge_z

ONE = Fraction(1)


# ---- polynomials with known roots ----------------------------------------------------------------

@dataclass(frozen=True)
class Factor:
    """(z - r)^m for a real root, or (z^2 - 2 c rho z + rho^2)^m for the pair rho exp(+-i t), cos t = c."""

    kind: str
    a: Fraction  # r, or c
    rho: Fraction  # |root|
    mult: int

    def poly(self) -> poly.ExactPoly:
        if self.kind == "real":
            base: poly.ExactPoly = (ONE, -self.a)
        else:
            base = (ONE, -2 * self.a * self.rho, self.rho * self.rho)
        return poly.power(base, self.mult)

    @property
    def degree(self) -> int:
        return self.mult * (1 if self.kind == "real" else 2)

    @property
    def key(self) -> tuple[str, Fraction, Fraction]:
        return (self.kind, self.a, self.rho)


NEAR = Fraction(1, 1000)
radii = st.sampled_from([ONE, ONE - NEAR, ONE + NEAR, Fraction(1, 2), Fraction(3, 2), Fraction(9, 10), Fraction(11, 10)])
cosines = st.fractions(min_value=Fraction(-49, 50), max_value=Fraction(49, 50), max_denominator=50)
mults = st.sampled_from([1, 1, 1, 2, 3])


@st.composite
def factors(draw: st.DrawFn) -> Factor:
    if draw(st.booleans()):
        rho = draw(radii)
        sign = draw(st.sampled_from([1, -1]))
        special = draw(st.booleans())
        r = sign * rho if special else draw(st.fractions(min_value=-2, max_value=2, max_denominator=20))
        return Factor("real", r, abs(r), draw(mults))
    return Factor("pair", draw(cosines), draw(radii), draw(mults))


@st.composite
def known_polys(draw: st.DrawFn, max_degree: int = 12) -> tuple[poly.ExactPoly, list[Factor]]:
    chosen: list[Factor] = []
    total = 0
    for f in draw(st.lists(factors(), min_size=1, max_size=8)):
        if total + f.degree <= max_degree:
            chosen.append(f)
            total += f.degree
    if not chosen:
        chosen = [Factor("real", Fraction(1, 2), Fraction(1, 2), 1)]
    lead = draw(st.sampled_from([ONE, Fraction(-3), Fraction(2, 7)]))
    p: poly.ExactPoly = (lead,)
    for f in chosen:
        p = poly.mul(p, f.poly())
    return p, chosen


def expected_counts(chosen: list[Factor]) -> tuple[int, int, int, bool]:
    """Counts read off the construction: each factor's roots have modulus ``rho``."""
    inside = on = outside = 0
    on_mult: dict[tuple[str, Fraction, Fraction], int] = {}
    for f in chosen:
        n = f.degree
        if f.rho < 1:
            inside += n
        elif f.rho > 1:
            outside += n
        else:
            on += n
            on_mult[f.key] = on_mult.get(f.key, 0) + f.mult
    return inside, on, outside, any(m >= 2 for m in on_mult.values())


def mp_counts(p: poly.ExactPoly, tol: float = 1e-30) -> tuple[int, int, int]:
    """Counts from mpmath roots at 50 digits (reference library), ``||z| - 1| <= tol`` counted as on."""
    ev = precise_roots(p, "z", 50)
    inside = sum(1 for r in ev.roots if abs(r) < 1 - tol)
    outside = sum(1 for r in ev.roots if abs(r) > 1 + tol)
    return inside, len(ev.roots) - inside - outside, outside


@settings(derandomize=True, max_examples=80, deadline=None)
@given(known_polys())
def test_counts_agree_with_construction_jury_wplane_and_mpmath(case: tuple[poly.ExactPoly, list[Factor]]) -> None:
    """Roots on, just inside (1 - 1/1000) and just outside (1 + 1/1000) the circle, repeated ones,
    reciprocal pairs: exact counts = construction = w-plane Routh counts = mpmath roots, and the
    Jury table says stable exactly when all roots are inside."""
    p, chosen = case
    inside, on, outside, repeated = expected_counts(chosen)
    c = circle_counts(p)
    assert (c.inside, c.on, c.outside, c.repeated_on_circle) == (inside, on, outside, repeated)
    w = wplane_routh(p)
    assert (w.inside, w.on, w.outside, w.repeated_on_circle) == (inside, on, outside, repeated)
    assert w.verdict == c.verdict
    assert (jury_table(p).verdict == "stable") == (inside == poly.degree(p))
    # mpmath: the near-circle roots are 1e-3 away, far above the 1e-30 tolerance
    assert mp_counts(p) == (inside, on, outside)


@settings(derandomize=True, max_examples=80, deadline=None)
@given(st.lists(st.integers(min_value=-6, max_value=6), min_size=2, max_size=13).filter(lambda c: c[0] != 0))
def test_counts_agree_on_random_integer_polynomials(coeffs: list[int]) -> None:
    """Random integer polynomials up to degree 12 (many singular Jury / Schur-Cohn cases, roots at
    0 and +-1): exact counts = w-plane Routh counts = mpmath roots; Jury agrees on the verdict."""
    c = circle_counts(coeffs)
    w = wplane_routh(coeffs)
    assert (c.inside, c.on, c.outside) == (w.inside, w.on, w.outside)
    assert c.verdict == w.verdict
    assert (jury_table(coeffs).verdict == "stable") == (c.verdict == "stable")
    assert mp_counts(poly.from_values(coeffs), tol=1e-25) == (c.inside, c.on, c.outside)


def test_judge_z_confirms_exactly_on_a_constructed_case() -> None:
    """(z - 1)(z^2 + 1)(z - 0.999)(z + 1.001): one simple root each side, three on: unstable."""
    p = poly.mul(poly.mul((ONE, -ONE), (ONE, Fraction(0), ONE)), poly.mul((ONE, -Fraction("0.999")), (ONE, Fraction("1.001"))))
    v = judge_z(p)
    assert v.verdict == "unstable"
    assert v.counts == {"inside": 1, "on": 3, "outside": 1}
    assert v.confirmed == "exact"
    assert v.near_boundary  # roots exactly on the circle: distance 0


@pytest.mark.parametrize(
    ("coeffs", "expected"),
    [
        # z^6 - 1: sixth roots of unity, all simple on the circle (closed form)
        ([1, 0, 0, 0, 0, 0, -1], (0, 6, 0, False, "marginal")),
        # (z^2 + 1)^2 = z^4 + 2 z^2 + 1: +-i double
        ([1, 0, 2, 0, 1], (0, 4, 0, True, "unstable")),
        # z^3: triple root at the origin, inside
        ([1, 0, 0, 0], (3, 0, 0, False, "stable")),
        # (z - 2)(z - 1/2) = z^2 - 2.5 z + 1: reciprocal pair, palindromic, none on the circle
        ([1, "-2.5", 1], (1, 0, 1, False, "unstable")),
        # (z + 1)^3 (z - 0.5)
        ([1, "2.5", "1.5", "-0.5", "-0.5"], (1, 3, 0, True, "unstable")),
        # z^3 + 2 z^2 + 3 z + 1: |a0| = |a3|, a singular Schur-Cohn step; mpmath moduli 1.5247 (x2), 0.4302
        ([1, 2, 3, 1], (1, 0, 2, False, "unstable")),
    ],
)
def test_special_cases(coeffs: list[object], expected: tuple[int, int, int, bool, str]) -> None:
    c = circle_counts(coeffs)
    assert (c.inside, c.on, c.outside, c.repeated_on_circle, c.verdict) == expected


def test_singular_step_is_noted_and_matches_mpmath() -> None:
    c = circle_counts([1, 2, 3, 1])
    assert c.notes and "disk map" in c.notes[0]
    with mpmath.workdps(30):
        moduli = sorted(abs(r) for r in mpmath.polyroots([1, 2, 3, 1]))
    assert float(moduli[0]) == pytest.approx(0.43015971, abs=1e-8)
    assert sum(1 for m in moduli if m < 1) == c.inside


def test_coefficients_read_exactly_as_typed_matter() -> None:
    """(z - 0.999999)^3 expanded exactly: z^3 - 2.999997 z^2 + 2.999994000003 z - 0.999997000002999999.

    Read exactly, all three roots are at 0.999999 (stable, closed form). Rounded to doubles, the
    coefficients describe another polynomial, with a root outside the circle: mpmath at 50 digits
    on the double values confirms it (a negative distance)."""
    typed = ["1", "-2.999997", "2.999994000003", "-0.999997000002999999"]
    assert poly.from_values(typed) == poly.power((ONE, -Fraction("0.999999")), 3)
    exact = circle_counts(typed)
    assert (exact.inside, exact.on, exact.outside, exact.verdict) == (3, 0, 0, "stable")
    doubles = [float(x) for x in typed]
    rounded = circle_counts(doubles)
    assert rounded.verdict == "unstable"
    assert precise_roots(doubles, "z", 50).distance < 0
    assert precise_roots(typed, "z", 50).distance == pytest.approx(1e-6, rel=1e-12)


def test_zero_polynomial_is_refused() -> None:
    with pytest.raises(InputError, match="zero polynomial"):
        circle_counts([0, 0])


def test_square_free_parts_and_sturm() -> None:
    """(x - 1)^2 (x + 3) (x^2 - 2): parts by multiplicity; real roots in (-2, 2) are 1, +-sqrt 2."""
    p = poly.mul(poly.mul(poly.power((ONE, -ONE), 2), (ONE, Fraction(3))), (ONE, Fraction(0), Fraction(-2)))
    parts = dict((m, f) for f, m in square_free_parts(p))
    assert parts[2] == (ONE, -ONE)
    assert poly.degree(parts[1]) == 3
    assert real_roots_between(parts[1], Fraction(-2), Fraction(2)) == 2
    assert real_roots_between(parts[2], Fraction(-2), Fraction(2)) == 1
    # a root exactly at an end is not inside the open interval
    assert real_roots_between((ONE, Fraction(-2)), Fraction(-2), Fraction(2)) == 0


# ---- vectorised float verdicts -------------------------------------------------------------------

def test_float_verdicts_match_numpy_roots() -> None:
    """Batched Schur-Cohn in doubles against numpy.roots on 2000 random degree-8 polynomials,
    away from the boundary (rows with a root within 1e-6 of the circle are skipped)."""
    rng = np.random.default_rng(20240607)
    roots = rng.uniform(0.2, 1.15, size=(2000, 8)) * np.exp(1j * rng.uniform(0, np.pi, size=(2000, 8)))
    coeffs = np.array([np.real(np.poly(np.concatenate([r[:4], np.conj(r[:4])]))) for r in roots])
    res = float_circle_verdicts(coeffs)
    radii = spectral_radii(coeffs)
    for i in range(coeffs.shape[0]):
        mods = np.abs(np.roots(coeffs[i]))
        if np.min(np.abs(mods - 1)) < 1e-6:
            continue
        assert bool(res.stable[i]) == bool(np.all(mods < 1))
        assert int(res.inside[i]) == int(np.sum(mods < 1))
        assert radii[i] == pytest.approx(mods.max(), rel=1e-7)
    assert 0 < int(np.sum(res.stable)) < coeffs.shape[0]


def test_float_verdicts_flag_the_boundary() -> None:
    """(z - 1)(z - 0.5): a reflection coefficient of magnitude one, marked undecided."""
    res = float_circle_verdicts(np.array([[1.0, -1.5, 0.5], [1.0, -0.5, 0.06]]))
    assert bool(res.undecided[0]) and not bool(res.stable[0])
    assert bool(res.stable[1]) and not bool(res.undecided[1])


def test_float_verdicts_overflow_is_undecided_not_a_warning() -> None:
    """Coefficients spanning 600 decades overflow in doubles: the row is marked undecided, and no
    RuntimeWarning escapes (warnings are errors in this test run)."""
    res = float_circle_verdicts(np.array([[1e-300, 1e300, 1.0, 1.0], [1.0, 0.0, 0.0, 0.25]]))
    assert bool(res.undecided[0])
    assert bool(res.stable[1]) and int(res.inside[1]) == 3


def test_float_verdicts_refuse_bad_arrays() -> None:
    with pytest.raises(InputError, match="coeffs"):
        float_circle_verdicts(np.array([[0.0, 1.0]]))
    with pytest.raises(InputError, match="coeffs"):
        float_circle_verdicts(np.array([1.0, 2.0]))
