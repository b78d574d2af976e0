"""Polynomials built exactly from factors whose roots are known, for checking root counts.

Every factor is a small polynomial with rational coefficients whose root locations follow from
the quadratic formula (derived beside each kind below), so the true counts of roots in the left
half-plane, on the imaginary axis and in the right half-plane are known exactly, including
multiplicities on the imaginary axis. Also holds the independent root counters used as oracles
(mpmath at 50 digits, numpy's companion-matrix roots).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from fractions import Fraction

import mpmath
import numpy as np
import sympy
from hypothesis import strategies as st

from sampled import poly as P

F = Fraction

# Small pools, so that repeated factors (repeated roots) come up often.
REALS = [F(1, 4), F(1, 2), F(1), F(3, 2), F(2), F(7, 3), F(5)]
SIGMAS = [F(1, 4), F(1, 2), F(1), F(2), F(3)]
OMEGAS = [F(1, 3), F(1), F(5, 2), F(4)]
OMEGA_SQUARED = [F(1, 4), F(1), F(2), F(9, 4), F(10), F(1, 3)]


@dataclass(frozen=True)
class Factor:
    """One exact factor and where its roots lie.

    kinds (roots derived by the quadratic formula):
    * ``left_real``  s + a, a > 0: root -a.
    * ``right_real`` s - a: root +a.
    * ``origin``     s: root 0 (imaginary axis).
    * ``left_pair``  s^2 + 2 sg s + sg^2 + w^2: roots -sg +- j w.
    * ``right_pair`` s^2 - 2 sg s + sg^2 + w^2: roots +sg +- j w.
    * ``imag_pair``  s^2 + w2 (w2 > 0 rational): roots +- j sqrt(w2).
    * ``sym_real``   s^2 - a^2: roots +- a (gives a row of zeros).
    * ``quad``       (s^2 + 2 sg s + r)(s^2 - 2 sg s + r), r = sg^2 + w^2: roots +-sg +- j w,
                     symmetric about the origin (row of zeros).
    """

    kind: str
    coeffs: tuple[Fraction, ...]
    left: int
    imaginary: int
    right: int
    axis_key: object = None  # identifies imaginary-axis roots, for multiplicity


def left_real(a: Fraction) -> Factor:
    return Factor("left_real", (F(1), a), 1, 0, 0)


def right_real(a: Fraction) -> Factor:
    return Factor("right_real", (F(1), -a), 0, 0, 1)


def origin() -> Factor:
    return Factor("origin", (F(1), F(0)), 0, 1, 0, "origin")


def left_pair(sg: Fraction, w: Fraction) -> Factor:
    return Factor("left_pair", (F(1), 2 * sg, sg * sg + w * w), 2, 0, 0)


def right_pair(sg: Fraction, w: Fraction) -> Factor:
    return Factor("right_pair", (F(1), -2 * sg, sg * sg + w * w), 0, 0, 2)


def imag_pair(w2: Fraction) -> Factor:
    return Factor("imag_pair", (F(1), F(0), w2), 0, 2, 0, ("jw", w2))


def sym_real(a: Fraction) -> Factor:
    return Factor("sym_real", (F(1), F(0), -a * a), 1, 0, 1)


def quad(sg: Fraction, w: Fraction) -> Factor:
    r = sg * sg + w * w
    return Factor("quad", P.mul((F(1), 2 * sg, r), (F(1), -2 * sg, r)), 2, 0, 2)


def factor_strategy(allow_axis: bool = True) -> st.SearchStrategy[Factor]:
    options = [
        st.sampled_from(REALS).map(left_real),
        st.sampled_from(REALS).map(right_real),
        st.builds(left_pair, st.sampled_from(SIGMAS), st.sampled_from(OMEGAS)),
        st.builds(right_pair, st.sampled_from(SIGMAS), st.sampled_from(OMEGAS)),
        st.sampled_from(REALS).map(sym_real),
        st.builds(quad, st.sampled_from(SIGMAS), st.sampled_from(OMEGAS)),
    ]
    if allow_axis:
        options += [st.just(origin()), st.sampled_from(OMEGA_SQUARED).map(imag_pair)]
    return st.one_of(*options)


@dataclass(frozen=True)
class Built:
    coeffs: tuple[Fraction, ...]
    factors: tuple[Factor, ...]
    left: int
    imaginary: int
    right: int
    repeated_imaginary: bool
    simple_roots: bool

    @property
    def verdict(self) -> str:
        if self.right or self.repeated_imaginary:
            return "unstable"
        return "marginal" if self.imaginary else "stable"


def build(factors: list[Factor], scale: Fraction = F(1)) -> Built:
    coeffs: tuple[Fraction, ...] = (scale,)
    for f in factors:
        coeffs = P.mul(coeffs, f.coeffs)
    axis = Counter(f.axis_key for f in factors if f.axis_key is not None)
    # Two factors with a common root: same kind and parameters, or a sym_real a vs real +-a, or
    # a quad vs a pair with the same sg, w. Check exactly with the gcd of the product and its
    # derivative instead of enumerating the coincidences.
    g = P.gcd(coeffs, P.derivative(coeffs))
    return Built(
        coeffs=coeffs,
        factors=tuple(factors),
        left=sum(f.left for f in factors),
        imaginary=sum(f.imaginary for f in factors),
        right=sum(f.right for f in factors),
        repeated_imaginary=any(n >= 2 for n in axis.values()),
        simple_roots=P.degree(g) <= 0,
    )


@st.composite
def built_polynomials(draw: st.DrawFn, max_degree: int = 12, allow_axis: bool = True) -> Built:
    factors: list[Factor] = []
    total = 0
    wanted = draw(st.integers(1, max_degree))
    while total < wanted:
        f = draw(factor_strategy(allow_axis))
        d = len(f.coeffs) - 1
        if total + d > max_degree:
            break
        factors.append(f)
        total += d
    if not factors:
        factors.append(draw(st.sampled_from(REALS).map(left_real)))
    scale = draw(st.sampled_from([F(1), F(-1), F(3, 7), F(-5, 2), F(1000)]))
    return build(factors, scale)


# ---- independent counters ------------------------------------------------------------------------

def mpmath_roots(coeffs: tuple[Fraction, ...], dps: int = 50) -> list[mpmath.mpc]:
    """All roots, with multiplicity, at ``dps`` digits.

    mpmath.polyroots (Durand-Kerner) does not converge to its tolerance on multiple roots, so the
    polynomial is first split exactly into square-free factors by sympy (``sqf_list``); each
    factor's simple roots come from mpmath.polyroots with extra working precision and are repeated
    by the factor's multiplicity.
    """
    s = sympy.Symbol("s")
    poly = sympy.Poly([sympy.Rational(c.numerator, c.denominator) for c in coeffs], s)
    _, parts = poly.sqf_list()
    out: list[mpmath.mpc] = []
    with mpmath.workdps(dps):
        for factor, multiplicity in parts:
            c = [mpmath.mpf(int(x.p)) / int(x.q) for x in factor.all_coeffs()]
            n = len(c) - 1
            if n == 0:
                continue
            roots = mpmath.polyroots(c, maxsteps=500, extraprec=20 * n + 100)
            out.extend(mpmath.mpc(r) for r in roots for _ in range(multiplicity))
    return out


def counts_from_roots(roots: list[complex] | list[mpmath.mpc], tol: float) -> tuple[int, int, int]:
    left = imag = right = 0
    for r in roots:
        re = float(mpmath.re(r)) if isinstance(r, mpmath.mpc) else float(np.real(r))
        mag = float(abs(r))
        if abs(re) <= tol * max(1.0, mag):
            imag += 1
        elif re < 0:
            left += 1
        else:
            right += 1
    return left, imag, right


def mpmath_counts(coeffs: tuple[Fraction, ...], tol: float = 1e-30) -> tuple[int, int, int]:
    return counts_from_roots(mpmath_roots(coeffs), tol)


def numpy_counts(coeffs: tuple[Fraction, ...], tol: float = 1e-6) -> tuple[int, int, int]:
    return counts_from_roots(list(np.roots([float(c) for c in coeffs])), tol)
