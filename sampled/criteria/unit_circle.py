"""Roots of a real polynomial inside, on and outside the unit circle: exact counts and a fast float test.

The exact count works for any real polynomial, the singular cases included, in three parts:

1. roots at z = 0 are split off (they are inside);
2. the self-inversive common factor ``D = gcd(P, P*)``, with ``P*(z) = z^n P(1/z)`` the reciprocal
   polynomial, holds every root on the circle with its full multiplicity, plus any pairs
   ``(r, 1/r)`` of roots mirrored in the circle. After the factors at z = 1 and z = -1 are divided
   out, ``D`` is palindromic of even degree ``2k`` and ``D(z) = z^k R(z + 1/z)``; its roots on the
   circle are the real roots of ``R`` in (-2, 2), counted with a Sturm sequence on each square-free
   factor of ``R`` (so multiplicities are exact). The mirrored pairs put one root inside and one
   outside;
3. the rest ``E = P / D`` has no root on the circle and the Schur-Cohn recursion counts its roots
   inside by Rouche's theorem. A singular step (|constant term| = |leading coefficient|) is
   avoided by first moving the roots with a disk automorphism ``z -> (z + c) / (1 + c z)``, which
   keeps the inside, on and outside counts.

References
----------
Marden, M., "Geometry of Polynomials", 2nd ed., AMS, 1966, sections 42-45 (Schur-Cohn
recursion, self-inversive polynomials).
Henrici, P., "Applied and Computational Complex Analysis", vol. 1, Wiley, 1974, section 6.8
(the Schur-Cohn algorithm and its use of Rouche's theorem).
Bistritz, Y., "Zero location with respect to the unit circle of discrete-time linear system
polynomials", Proc. IEEE 72(9), 1984 (the reciprocal-polynomial view of singular cases).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal

import numpy as np

from sampled import poly
from sampled.errors import InputError, NumericalError
from sampled.poly import ExactPoly

StabilityWord = Literal["stable", "marginal", "unstable"]

#: Disk automorphism parameters tried, in order, when the Schur-Cohn recursion meets a singular step.
_SHIFTS: tuple[Fraction, ...] = tuple(
    Fraction(s) for s in ("1/2", "-1/3", "2/5", "-3/7", "1/4", "-5/9", "3/11", "-2/13", "5/17", "-7/19")
)


@dataclass(frozen=True)
class CircleCounts:
    """Exact numbers of roots inside, on and outside the unit circle, with multiplicity.

    Attributes
    ----------
    degree : int
        Degree of the polynomial.
    inside, on, outside : int
        Roots with ``|z| < 1``, ``|z| = 1`` and ``|z| > 1``.
    repeated_on_circle : bool
        Some root on the circle has multiplicity two or more.
    at_one, at_minus_one : int
        Multiplicities of the roots z = 1 and z = -1 (part of ``on``).
    at_origin : int
        Multiplicity of the root z = 0 (part of ``inside``).
    boundary_factor : tuple of Fraction
        The monic self-inversive factor ``gcd(P, P*)`` (descending powers), which holds every
        root on the circle.
    verdict : {"stable", "marginal", "unstable"}
        All inside: stable; otherwise none outside and the roots on the circle simple: marginal;
        else unstable.
    notes : tuple of str
        How singular steps were handled.
    """

    degree: int
    inside: int
    on: int
    outside: int
    repeated_on_circle: bool
    at_one: int
    at_minus_one: int
    at_origin: int
    boundary_factor: ExactPoly
    verdict: StabilityWord
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        return {
            "degree": self.degree,
            "counts": {"inside": self.inside, "on": self.on, "outside": self.outside},
            "repeated_on_circle": self.repeated_on_circle,
            "roots_at_one": self.at_one,
            "roots_at_minus_one": self.at_minus_one,
            "roots_at_origin": self.at_origin,
            "boundary_factor": [str(c) for c in self.boundary_factor],
            "verdict": self.verdict,
            "notes": list(self.notes),
        }


def verdict_from_counts(inside: int, on: int, outside: int, repeated_on_boundary: bool) -> StabilityWord:
    """Stable when every root is strictly inside; marginal when the rest sit simply on the boundary."""
    if outside > 0 or repeated_on_boundary:
        return "unstable"
    return "marginal" if on > 0 else "stable"


def reciprocal(p: Sequence[Fraction]) -> ExactPoly:
    """The reciprocal polynomial ``P*(z) = z^n P(1/z)`` (coefficients reversed, leading zeros dropped)."""
    return poly.trim(tuple(reversed(tuple(p))))


def _divide_out_root(p: ExactPoly, root: Fraction) -> tuple[ExactPoly, int]:
    """Divide ``(z - root)`` out of ``p`` as often as it goes; return the quotient and the count."""
    count = 0
    factor = (Fraction(1), -root)
    while poly.degree(p) >= 1 and poly.evaluate(p, root) == 0:
        p, _ = poly.divmod_(p, factor)
        count += 1
    return p, count


def square_free_parts(p: Sequence[Fraction]) -> list[tuple[ExactPoly, int]]:
    """Yun's square-free decomposition over the rationals: ``p = c * prod f_m^m`` with each ``f_m`` square-free.

    Returns the pairs ``(f_m, m)`` with ``deg f_m >= 1``.

    References
    ----------
    Yun, D. Y. Y., "On square-free decomposition algorithms", Proc. ACM SYMSAC, 1976.
    """
    p = poly.monic(p)
    if poly.degree(p) < 1:
        return []
    dp = poly.derivative(p)
    a = poly.gcd(p, dp)
    b, _ = poly.divmod_(p, a)
    c, _ = poly.divmod_(dp, a)
    d = poly.sub(c, poly.derivative(b))
    out: list[tuple[ExactPoly, int]] = []
    m = 1
    while poly.degree(b) >= 1:
        g = poly.gcd(b, d) if not poly.is_zero(d) else poly.monic(b)
        if poly.degree(g) >= 1:
            out.append((g, m))
        b, _ = poly.divmod_(b, g)
        c, _ = poly.divmod_(d, g)
        d = poly.sub(c, poly.derivative(b))
        m += 1
    return out


def _sign_changes(values: Sequence[Fraction]) -> int:
    signs = [v > 0 for v in values if v != 0]
    return sum(1 for x, y in zip(signs, signs[1:]) if x != y)


def real_roots_between(p: Sequence[Fraction], low: Fraction, high: Fraction) -> int:
    """Number of distinct real roots of ``p`` in the open interval (low, high), by a Sturm sequence.

    References
    ----------
    Sturm, C., "Memoire sur la resolution des equations numeriques", 1835; see Basu, Pollack and
    Roy, "Algorithms in Real Algebraic Geometry", 2006, theorem 2.50.
    """
    p = poly.trim(p)
    if poly.degree(p) < 1:
        return 0
    chain = [p, poly.derivative(p)]
    while poly.degree(chain[-1]) >= 1:
        _, r = poly.divmod_(chain[-2], chain[-1])
        if poly.is_zero(r):
            break
        chain.append(poly.scale(r, Fraction(-1)))
    at_low = [poly.evaluate(q, low) for q in chain]
    at_high = [poly.evaluate(q, high) for q in chain]
    count = _sign_changes(at_low) - _sign_changes(at_high)
    # a root exactly at an end is not in the open interval; the chain ends in gcd(p, p'), so
    # divide it out first when an end is a root
    if at_low[0] == 0 or at_high[0] == 0:
        g = chain[-1]
        sq, _ = poly.divmod_(p, g) if poly.degree(g) >= 1 else (p, poly.ZERO)
        ends = [e for e in (low, high) if poly.evaluate(sq, e) == 0]
        reduced = sq
        for e in ends:
            reduced, _ = _divide_out_root(reduced, e)
        return real_roots_between(reduced, low, high)
    return count


def _palindrome_to_x(d: ExactPoly) -> ExactPoly:
    """For palindromic ``d`` of degree 2k, the polynomial ``R`` with ``d(z) = z^k R(z + 1/z)``.

    Uses ``z^j + z^-j = V_j(x)``, ``V_0 = 2``, ``V_1 = x``, ``V_{j+1} = x V_j - V_{j-1}``.
    """
    m = len(d) - 1
    k = m // 2
    asc = tuple(reversed(d))  # asc[j] = coefficient of z^j
    x = (Fraction(1), Fraction(0))
    v_prev: ExactPoly = (Fraction(2),)
    v_cur: ExactPoly = x
    r: ExactPoly = (asc[k],)
    for j in range(1, k + 1):
        r = poly.add(r, poly.scale(v_cur, asc[k + j]))
        v_prev, v_cur = v_cur, poly.sub(poly.mul(x, v_cur), v_prev)
    return r


@dataclass(frozen=True)
class _Boundary:
    factor: ExactPoly
    on: int
    repeated: bool
    at_one: int
    at_minus_one: int


def _boundary_part(p: ExactPoly) -> _Boundary:
    """On-circle roots of ``p`` (``p(0) != 0``) from the self-inversive factor ``gcd(p, p*)``."""
    ints = integer_form(p)
    if _coprime_mod_prime(ints, ints[::-1]):
        return _Boundary((Fraction(1),), 0, False, 0, 0)
    d = poly.gcd(p, reciprocal(p))
    if poly.degree(d) < 1:
        return _Boundary((Fraction(1),), 0, False, 0, 0)
    rest, at_one = _divide_out_root(d, Fraction(1))
    rest, at_minus_one = _divide_out_root(rest, Fraction(-1))
    on = at_one + at_minus_one
    repeated = at_one >= 2 or at_minus_one >= 2
    if poly.degree(rest) >= 1:
        rest = poly.monic(rest)
        if len(rest) % 2 == 0 or rest != reciprocal(rest):
            raise NumericalError("internal: the self-inversive factor is not palindromic")
        r = _palindrome_to_x(rest)
        for factor, mult in square_free_parts(r):
            n_real = real_roots_between(factor, Fraction(-2), Fraction(2))
            on += 2 * mult * n_real
            if n_real and mult >= 2:
                repeated = True
    return _Boundary(d, on, repeated, at_one, at_minus_one)


def integer_form(p: Sequence[Fraction]) -> list[int]:
    """The primitive integer polynomial with the roots of ``p``: denominators cleared, content removed."""
    lcm = 1
    for c in p:
        lcm = lcm * c.denominator // math.gcd(lcm, c.denominator)
    ints = [int(c * lcm) for c in p]
    content = math.gcd(*ints)
    if content > 1:
        ints = [x // content for x in ints]
    return ints


#: A prime for the modular gcd test (2^61 - 1).
_PRIME = (1 << 61) - 1


def _coprime_mod_prime(a: list[int], b: list[int]) -> bool:
    """True when ``a`` and ``b`` (integer, descending) are proven coprime over Q by their gcd modulo a prime.

    Degrees must survive the reduction (leading coefficients not divisible by the prime); then
    ``deg gcd_Q <= deg gcd_mod``, so a constant modular gcd proves a constant rational gcd. False
    means "not proven" (the caller then computes the exact gcd).
    """
    q = _PRIME
    if a[0] % q == 0 or b[0] % q == 0:
        return False
    x = [c % q for c in a]
    y = [c % q for c in b]
    while len(y) > 1 or (y and y[0] != 0):
        # remainder of x by y, modulo q
        inv = pow(y[0], q - 2, q)
        x = list(x)
        for i in range(len(x) - len(y) + 1):
            f = x[i] * inv % q
            if f:
                for j in range(1, len(y)):
                    x[i + j] = (x[i + j] - f * y[j]) % q
        r = x[len(x) - len(y) + 1 :] if len(x) >= len(y) else x
        while r and r[0] == 0:
            r = r[1:]
        x, y = y, r
        if not y:
            break
    return len(x) == 1


def _schur_cohn_inside(p: ExactPoly) -> int | None:
    """Roots inside the circle of ``p`` (no roots on the circle) by the Schur-Cohn recursion.

    Returns None at a singular step (|constant term| = |leading coefficient|).

    Each step forms ``T p = a_n p - a_0 p*`` (which vanishes at z = 0) and divides by z. If
    ``delta = a_n^2 - a_0^2 > 0``, Rouche's theorem on ``|z| = 1`` gives ``T p`` as many roots inside
    as ``p``; if ``delta < 0`` as many as ``p*``, that is ``n - inside(p)``. (Henrici 1974, 6.8.)
    The recursion runs on integers; each new polynomial is divided by its content (a positive
    constant, which changes no count).
    """
    steps: list[tuple[int, bool]] = []  # (degree, delta > 0)
    cur = integer_form(p)
    while len(cur) > 1:
        n = len(cur) - 1
        an, a0 = cur[0], cur[-1]
        delta = an * an - a0 * a0
        if delta == 0:
            return None
        nxt = [an * c - a0 * r for c, r in zip(cur, reversed(cur))][:-1]
        content = math.gcd(*nxt)
        cur = [c // content for c in nxt] if content > 1 else nxt
        steps.append((n, delta > 0))
    inside = 0
    for n, positive in reversed(steps):
        inside = inside + 1 if positive else n - 1 - inside
    return inside


def _conv(a: list[int], b: list[int]) -> list[int]:
    out = [0] * (len(a) + len(b) - 1)
    for i, x in enumerate(a):
        if x:
            for j, y in enumerate(b):
                out[i + j] += x * y
    return out


def mobius_transform(p: Sequence[Fraction], a: Sequence[Fraction], b: Sequence[Fraction]) -> ExactPoly:
    """``b(x)^n p(a(x)/b(x))`` for linear ``a``, ``b`` (n = len(p) - 1), exactly.

    Same result as :func:`sampled.poly.compose_mobius`, computed in integers (denominators cleared
    once), which is many times faster for degree 20.
    """
    n = len(p) - 1
    if n < 0:
        return poly.ZERO
    lcm_p = 1
    for c in p:
        lcm_p = lcm_p * c.denominator // math.gcd(lcm_p, c.denominator)
    lcm_ab = 1
    for c in (*a, *b):
        lcm_ab = lcm_ab * Fraction(c).denominator // math.gcd(lcm_ab, Fraction(c).denominator)
    ints = [int(c * lcm_p) for c in p]
    ai = [int(Fraction(c) * lcm_ab) for c in a]
    bi = [int(Fraction(c) * lcm_ab) for c in b]
    a_pow: list[list[int]] = [[1]]
    b_pow: list[list[int]] = [[1]]
    for _ in range(n):
        a_pow.append(_conv(a_pow[-1], ai))
        b_pow.append(_conv(b_pow[-1], bi))
    width = max(len(a_pow[n - i]) + len(b_pow[i]) - 1 for i in range(n + 1))
    out = [0] * width
    for i, ci in enumerate(ints):
        if ci:
            term = _conv(a_pow[n - i], b_pow[i])
            shift = width - len(term)
            for k, x in enumerate(term):
                out[shift + k] += ci * x
    denom = lcm_p * lcm_ab**n
    return poly.trim(Fraction(x, denom) for x in out)


def _inside_no_boundary(p: ExactPoly, notes: list[str]) -> int:
    """Roots inside for ``p`` with no roots on the circle, moving roots by a disk automorphism if singular."""
    if poly.degree(p) < 1:
        return 0
    got = _schur_cohn_inside(p)
    if got is not None:
        return got
    for c in _SHIFTS:
        # g(u) = (1 + c u)^m p((u + c) / (1 + c u)); u = (z - c)/(1 - c z) maps the disk onto itself.
        # Roots of p at z = 1/c (outside) go to u = infinity: g loses degree, not inside roots.
        got = _schur_cohn_inside(mobius_transform(p, (Fraction(1), c), (c, Fraction(1))))
        if got is not None:
            notes.append(f"singular Schur-Cohn step avoided by the disk map z -> (z + {c})/(1 + {c} z)")
            return got
    raise NumericalError("Schur-Cohn recursion stayed singular under every disk map tried")


def circle_counts(coeffs: Sequence[object]) -> CircleCounts:
    """Exact counts of roots inside, on and outside the unit circle.

    Parameters
    ----------
    coeffs : sequence of numbers
        Real polynomial coefficients in descending powers of z; read exactly (``"0.1"`` is 1/10,
        a float is its exact binary fraction).

    Returns
    -------
    CircleCounts

    Raises
    ------
    InputError
        For the zero polynomial.

    Notes
    -----
    Exact for every real polynomial, whatever its singular cases; see the module docstring.
    """
    p = poly.from_values(list(coeffs), "polynomial")
    if poly.is_zero(p):
        raise InputError("the zero polynomial has no defined roots", "polynomial")
    n = poly.degree(p)
    body, at_origin = _divide_out_root(p, Fraction(0))
    notes: list[str] = []
    boundary = _boundary_part(body)
    rest, _ = poly.divmod_(body, boundary.factor)
    paired = poly.degree(boundary.factor) - boundary.on  # mirrored pairs (r, 1/r)
    inside = at_origin + paired // 2 + _inside_no_boundary(rest, notes)
    outside = n - inside - boundary.on
    return CircleCounts(
        degree=n,
        inside=inside,
        on=boundary.on,
        outside=outside,
        repeated_on_circle=boundary.repeated,
        at_one=boundary.at_one,
        at_minus_one=boundary.at_minus_one,
        at_origin=at_origin,
        boundary_factor=boundary.factor,
        verdict=verdict_from_counts(inside, boundary.on, outside, boundary.repeated),
        notes=tuple(notes),
    )


@dataclass(frozen=True)
class FloatCircleVerdicts:
    """Float Schur-Cohn verdicts for many polynomials at once.

    Attributes
    ----------
    stable : ndarray of bool, shape (m,)
        Every reflection coefficient has magnitude below one (all roots inside).
    inside : ndarray of int, shape (m,)
        Roots inside, by the regular Schur-Cohn count (meaningless where ``undecided``).
    min_margin : ndarray of float, shape (m,)
        Smallest ``1 - |k_j|`` over the reflection coefficients ``k_j``; near zero means near the
        boundary. Negative when a step was unstable.
    undecided : ndarray of bool, shape (m,)
        Some ``1 - |k_j|`` fell below ``tolerance``: the float verdict cannot be trusted and an
        exact check (``circle_counts``) is needed.
    """

    stable: np.ndarray
    inside: np.ndarray
    min_margin: np.ndarray
    undecided: np.ndarray


def float_circle_verdicts(coeffs: np.ndarray, tolerance: float = 1e-9) -> FloatCircleVerdicts:
    """Vectorised Schur-Cohn test of many polynomials of one degree in double precision.

    Parameters
    ----------
    coeffs : array_like, shape (m, n + 1)
        One polynomial a row, descending powers of z, leading coefficients nonzero.
    tolerance : float
        Reflection coefficients within ``tolerance`` of magnitude one mark the row undecided.

    Returns
    -------
    FloatCircleVerdicts

    Notes
    -----
    Each step divides by the leading coefficient, takes the reflection coefficient
    ``k = a_0 / a_n`` and forms ``(p - k p*) / (z (1 - k^2))``; all roots are inside exactly when
    every ``|k| < 1`` (Schur-Cohn; Henrici 1974, section 6.8). Cost: ``n`` vector steps over the
    rows, no eigenvalues.
    """
    a = np.array(coeffs, dtype=float, copy=True)
    if a.ndim != 2 or a.shape[1] < 1:
        raise InputError(f"expected a 2-D array of coefficients, got shape {a.shape}", "coeffs")
    if not np.all(np.isfinite(a)):
        raise InputError("coefficients must be finite", "coeffs")
    if np.any(a[:, 0] == 0):
        raise InputError("every leading coefficient must be nonzero", "coeffs")
    rows = a.shape[0]
    margin = np.full(rows, np.inf)
    inside_steps: list[tuple[int, np.ndarray]] = []
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        # one coefficient a row of ``cur`` (shape (n + 1, m)): each step works on contiguous vectors
        cur = (a / a[:, :1]).T.copy()
        cur, margin, inside_steps = _reflect_all(cur, margin, inside_steps)
    stable = margin > 0
    inside = np.zeros(rows, dtype=int)
    for n, positive in reversed(inside_steps):
        inside = np.where(positive, inside + 1, n - 1 - inside)
    # a step with |k| within rounding of one (or an overflow to nan) leaves the row undecided
    undecided = ~(np.abs(margin) >= tolerance)
    return FloatCircleVerdicts(stable=stable, inside=inside, min_margin=margin, undecided=undecided)


def _reflect_all(
    cur: np.ndarray, margin: np.ndarray, inside_steps: list[tuple[int, np.ndarray]]
) -> tuple[np.ndarray, np.ndarray, list[tuple[int, np.ndarray]]]:
    """The Schur-Cohn steps of :func:`float_circle_verdicts` on the transposed coefficient array."""
    while cur.shape[0] > 1:
        k = cur[-1].copy()  # reflection coefficient a_0 / a_n (a_n = 1)
        np.minimum(margin, 1.0 - np.abs(k), out=margin)
        denom = (1.0 - k) * (1.0 + k)
        inside_steps.append((cur.shape[0] - 1, denom > 0))
        denom[denom == 0.0] = 1.0
        # (p - k p*) / z, normalised to leading coefficient one
        nxt = cur[:-1] - k * cur[:0:-1]
        nxt *= 1.0 / denom
        cur = nxt
    return cur, margin, inside_steps


def spectral_radii(coeffs: np.ndarray) -> np.ndarray:
    """Largest root magnitude of each row polynomial, from batched companion-matrix eigenvalues.

    Parameters
    ----------
    coeffs : array_like, shape (m, n + 1)
        One polynomial a row, descending powers, leading coefficients nonzero, n >= 1.

    Returns
    -------
    ndarray, shape (m,)
    """
    a = np.asarray(coeffs, dtype=float)
    if a.ndim != 2 or a.shape[1] < 2:
        raise InputError(f"expected a 2-D array with at least two columns, got shape {a.shape}", "coeffs")
    if np.any(a[:, 0] == 0):
        raise InputError("every leading coefficient must be nonzero", "coeffs")
    n = a.shape[1] - 1
    comp = np.zeros((a.shape[0], n, n))
    comp[:, 0, :] = -a[:, 1:] / a[:, :1]
    if n > 1:
        idx = np.arange(n - 1)
        comp[:, idx + 1, idx] = 1.0
    return np.abs(np.linalg.eigvals(comp)).max(axis=1)
