"""The Routh array in exact rational arithmetic, with every special case handled.

Coefficients are exact Fractions (see :mod:`sampled.poly`), so each sign in the first column is
exact for the polynomial as given. Special cases:

* roots at the origin: factored out first (``s^m``), counted on the imaginary axis;
* a zero in the first column of an otherwise nonzero row: replaced by a small positive ``eps`` and
  the array continued with entries that are exact rational functions of ``eps``; signs are those
  of the limit ``eps -> 0+`` (the limit argument, done exactly);
* a whole row of zeros: the auxiliary polynomial formed from the row above is differentiated and
  its coefficients replace the zero row. The auxiliary polynomial holds the roots placed
  symmetrically about the origin; those on the imaginary axis are ``deg(aux) - 2 V`` where ``V``
  counts the sign changes from the auxiliary row to the end.

References
----------
E. J. Routh, *A Treatise on the Stability of a Given State of Motion*, 1877.
K. Ogata, *Modern Control Engineering*, 5th ed., 2010, section 5-6 (special cases).
N. S. Nise, *Control Systems Engineering*, 6th ed., 2011, chapter 6 (zero rows, epsilon method).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal, Union

from sampled import poly as P
from sampled.errors import InputError

VerdictName = Literal["stable", "marginal", "unstable"]


# ---- exact rational functions of eps, for the limit argument --------------------------------------

def _asc_trim(c: list[Fraction]) -> list[Fraction]:
    while len(c) > 1 and c[-1] == 0:
        c.pop()
    return c


def _asc_mul(a: Sequence[Fraction], b: Sequence[Fraction]) -> list[Fraction]:
    out = [Fraction(0)] * (len(a) + len(b) - 1)
    for i, x in enumerate(a):
        if x:
            for j, y in enumerate(b):
                out[i + j] += x * y
    return _asc_trim(out)


def _asc_add(a: Sequence[Fraction], b: Sequence[Fraction]) -> list[Fraction]:
    n = max(len(a), len(b))
    out = [(a[i] if i < len(a) else 0) + (b[i] if i < len(b) else 0) for i in range(n)]
    return _asc_trim([Fraction(x) for x in out])


def _primitive(p: list[int]) -> list[int]:
    g = 0
    for x in p:
        g = math.gcd(g, x)
        if g == 1:
            return p
    return [x // g for x in p] if g > 1 else p


def _int_poly_gcd(a: list[int], b: list[int]) -> list[int]:
    """Primitive gcd, positive leading coefficient, of two integer polynomials (descending powers).

    sympy's dense gcd over the integers (heuristic gcd with a modular fallback) keeps the integers
    small; Euclid over the rationals makes them grow exponentially with the degree, which made a
    degree-20 eps case take most of a minute.
    """
    from sympy.polys.domains import ZZ
    from sympy.polys.euclidtools import dup_gcd

    g = _primitive([int(x) for x in dup_gcd([ZZ(x) for x in a], [ZZ(x) for x in b], ZZ)])
    return [-x for x in g] if g[0] < 0 else g


def _int_poly_exact_div(p: list[int], g: list[int]) -> list[int]:
    """Quotient of integer polynomials (descending) known to divide exactly with g primitive."""
    r = list(p)
    out: list[int] = []
    for i in range(len(p) - len(g) + 1):
        q, rem = divmod(r[i], g[0])
        assert rem == 0
        out.append(q)
        if q:
            for j in range(1, len(g)):
                r[i + j] -= q * g[j]
    return out


def _cancel_common_factor(n: list[Fraction], d: list[Fraction]) -> tuple[list[Fraction], list[Fraction]]:
    """Divide the ascending-power polynomials n and d by their greatest common divisor, exactly,
    working on integers (both are first scaled by the common denominator of their coefficients)."""
    scale = 1
    for x in (*n, *d):
        scale = scale * x.denominator // math.gcd(scale, x.denominator)
    ni = [int(x * scale) for x in reversed(n)]
    di = [int(x * scale) for x in reversed(d)]
    g = _int_poly_gcd(ni, di)
    if len(g) <= 1:
        return n, d
    nq = _int_poly_exact_div(ni, g)
    dq = _int_poly_exact_div(di, g)
    return [Fraction(x) for x in reversed(nq)], [Fraction(x) for x in reversed(dq)]


class Eps:
    """An exact rational function of ``eps`` (coefficients in ascending powers), judged as eps -> 0+."""

    __slots__ = ("num", "den")

    def __init__(self, num: Sequence[Fraction], den: Sequence[Fraction] = (Fraction(1),)) -> None:
        n, d = _asc_trim(list(num)), _asc_trim(list(den))
        if all(x == 0 for x in n):
            self.num, self.den = [Fraction(0)], [Fraction(1)]
            return
        # Cancel common powers of eps, then the common polynomial factor.
        k = min(next(i for i, x in enumerate(n) if x), next(i for i, x in enumerate(d) if x))
        n, d = n[k:], d[k:]
        if len(d) > 1 and len(n) > 1:
            n, d = _cancel_common_factor(n, d)
        lead = next(x for x in d if x)
        self.num = [x / lead for x in n]
        self.den = [x / lead for x in d]

    @staticmethod
    def of(x: "Entry") -> "Eps":
        return x if isinstance(x, Eps) else Eps([Fraction(x)])

    def __add__(self, other: "Entry") -> "Eps":
        o = Eps.of(other)
        return Eps(_asc_add(_asc_mul(self.num, o.den), _asc_mul(o.num, self.den)), _asc_mul(self.den, o.den))

    __radd__ = __add__

    def __neg__(self) -> "Eps":
        return Eps([-x for x in self.num], self.den)

    def __sub__(self, other: "Entry") -> "Eps":
        return self + (-Eps.of(other))

    def __rsub__(self, other: "Entry") -> "Eps":
        return Eps.of(other) - self

    def __mul__(self, other: "Entry") -> "Eps":
        o = Eps.of(other)
        return Eps(_asc_mul(self.num, o.num), _asc_mul(self.den, o.den))

    __rmul__ = __mul__

    def __truediv__(self, other: "Entry") -> "Eps":
        o = Eps.of(other)
        if o.is_zero():
            raise ZeroDivisionError("division by an identically zero entry")
        return Eps(_asc_mul(self.num, o.den), _asc_mul(self.den, o.num))

    def __rtruediv__(self, other: "Entry") -> "Eps":
        return Eps.of(other) / self

    def is_zero(self) -> bool:
        return all(x == 0 for x in self.num)

    def sign(self) -> int:
        """Sign of the limit as eps -> 0+ (0 only for the zero function)."""
        if self.is_zero():
            return 0
        lead_n = next(x for x in self.num if x)
        lead_d = next(x for x in self.den if x)
        return 1 if (lead_n > 0) == (lead_d > 0) else -1

    def __eq__(self, other: object) -> bool:
        if isinstance(other, (int, Fraction)):
            return self.num == [Fraction(other)] and self.den == [Fraction(1)] or (other == 0 and self.is_zero())
        if isinstance(other, Eps):
            return self.num == other.num and self.den == other.den
        return NotImplemented

    def __hash__(self) -> int:  # pragma: no cover - entries are not hashed
        return hash((tuple(self.num), tuple(self.den)))

    def __str__(self) -> str:
        n = P.format_poly(tuple(reversed(self.num)), "eps")
        if self.den == [Fraction(1)]:
            return n
        d = P.format_poly(tuple(reversed(self.den)), "eps")
        return f"({n})/({d})"

    __repr__ = __str__


Entry = Union[Fraction, Eps]


def sign_of(x: Entry) -> int:
    if isinstance(x, Eps):
        return x.sign()
    return (x > 0) - (x < 0)


def is_zero(x: Entry) -> bool:
    return x.is_zero() if isinstance(x, Eps) else x == 0


def entry_text(x: Entry, digits: int = 12) -> str:
    """Short text of an entry: an exact short decimal, a small ratio ``5/3``, else ``digits`` figures."""
    if isinstance(x, Eps):
        return str(x)
    d = x.denominator
    while d % 2 == 0:
        d //= 2
    while d % 5 == 0:
        d //= 5
    text = P.format_number(x)
    if d == 1 and len(text) <= 16:
        return text
    if abs(x.numerator) < 10**6 and x.denominator < 10**6:
        return f"{x.numerator}/{x.denominator}"
    return P.format_number(x, digits)


# ---- the array ----------------------------------------------------------------------------------

@dataclass(frozen=True)
class AuxiliaryStep:
    """A row of zeros replaced by the derivative of the auxiliary polynomial."""

    row: int  # index of the zero row in ``rows``
    polynomial: tuple[Entry, ...]  # auxiliary polynomial, descending powers (all powers listed)
    imaginary_roots: int  # roots of the auxiliary polynomial on the imaginary axis


@dataclass(frozen=True)
class RouthArray:
    """The Routh array of a polynomial and what it says about the roots.

    Attributes
    ----------
    coefficients : tuple of Fraction
        The polynomial as given, descending powers.
    origin_roots : int
        Roots at s = 0, factored out before the array was built.
    rows : tuple of tuple of Entry
        The array of the polynomial with the origin roots removed; row ``i`` belongs to power
        ``s^(n - i)``.
    powers : tuple of int
        The power of s labelling each row.
    first_column : tuple of Entry
    signs : tuple of int
        Sign of each first-column entry (the limit eps -> 0+ where eps appears).
    sign_changes : int
    left, imaginary, right : int
        Root counts: open left half-plane, imaginary axis (origin included), open right half-plane.
    repeated_imaginary : bool
        Some imaginary-axis root (or the origin) is repeated.
    eps_rows : tuple of int
        Rows where a zero first entry was replaced by eps.
    auxiliary : tuple of AuxiliaryStep
    """

    coefficients: tuple[Fraction, ...]
    origin_roots: int
    rows: tuple[tuple[Entry, ...], ...]
    powers: tuple[int, ...]
    first_column: tuple[Entry, ...]
    signs: tuple[int, ...]
    sign_changes: int
    left: int
    imaginary: int
    right: int
    repeated_imaginary: bool
    eps_rows: tuple[int, ...]
    auxiliary: tuple[AuxiliaryStep, ...]

    @property
    def degree(self) -> int:
        return len(self.coefficients) - 1

    @property
    def verdict(self) -> VerdictName:
        """stable: all roots in the open left half-plane; marginal: simple imaginary-axis roots and
        none on the right; unstable otherwise."""
        if self.right > 0 or self.repeated_imaginary:
            return "unstable"
        if self.imaginary > 0:
            return "marginal"
        return "stable"

    @property
    def notes(self) -> tuple[str, ...]:
        return self.notes_for("s")

    def notes_for(self, v: str) -> tuple[str, ...]:
        """The notes with the polynomial's variable named ``v`` (``"w"`` for a w-plane array)."""
        out: list[str] = []
        if self.origin_roots:
            out.append(f"{self.origin_roots} root(s) at {v} = 0 factored out before the array")
        for r in self.eps_rows:
            out.append(f"row {v}^{self.powers[r]}: zero in the first column replaced by eps -> 0+")
        for a in self.auxiliary:
            aux = (
                P.format_poly(tuple(_plain(x) for x in a.polynomial), v)
                if all(not isinstance(x, Eps) for x in a.polynomial)
                else "[" + ", ".join(map(str, a.polynomial)) + "]"
            )
            out.append(
                f"row {v}^{self.powers[a.row]} was all zeros: replaced by the derivative of the auxiliary "
                f"polynomial {aux}, which has {a.imaginary_roots} root(s) on the imaginary axis"
            )
        if self.repeated_imaginary:
            out.append("repeated roots on the imaginary axis: unstable (the response grows like t)")
        return tuple(out)

    def to_dict(self) -> dict[str, object]:
        return {
            "domain": "s",
            "coefficients": [str(c) for c in self.coefficients],
            "routh": [[entry_text(x) for x in row] for row in self.rows],
            "powers": list(self.powers),
            "first_column": [entry_text(x) for x in self.first_column],
            "first_column_signs": list(self.signs),
            "sign_changes": self.sign_changes,
            "counts": {"left": self.left, "imaginary": self.imaginary, "right": self.right},
            "origin_roots": self.origin_roots,
            "repeated_imaginary": self.repeated_imaginary,
            "verdict": self.verdict,
            "notes": list(self.notes),
        }


def _plain(x: Entry) -> Fraction:
    assert not isinstance(x, Eps)
    return x


def _changes(signs: Sequence[int]) -> int:
    nz = [s for s in signs if s != 0]
    return sum(1 for a, b in zip(nz, nz[1:]) if a != b)


def _array(coeffs: P.ExactPoly) -> tuple[list[list[Entry]], list[int], list[AuxiliaryStep]]:
    """Build the rows; returns rows, eps row indices and auxiliary steps (imaginary counts filled later)."""
    n = len(coeffs) - 1
    width = n // 2 + 1
    r0: list[Entry] = list(coeffs[0::2]) + [Fraction(0)] * (width - len(coeffs[0::2]))
    r1: list[Entry] = list(coeffs[1::2]) + [Fraction(0)] * (width - len(coeffs[1::2]))
    rows: list[list[Entry]] = [r0]
    if n == 0:
        return rows, [], []
    rows.append(r1)
    eps_rows: list[int] = []
    aux_rows: list[tuple[int, list[Entry]]] = []

    def fix(i: int) -> None:
        row = rows[i]
        power = n - i
        if all(is_zero(x) for x in row):
            above = rows[i - 1]
            deg_aux = power + 1
            aux = above[: deg_aux // 2 + 1]
            deriv: list[Entry] = [x * (deg_aux - 2 * k) for k, x in enumerate(aux)][: (power // 2) + 1]
            rows[i] = deriv + [Fraction(0)] * (width - len(deriv))
            full: list[Entry] = []
            for k, x in enumerate(aux):
                full.append(x)
                if k < len(aux) - 1:
                    full.append(Fraction(0))
            aux_rows.append((i, full))
        if is_zero(rows[i][0]):
            rows[i][0] = Eps([Fraction(0), Fraction(1)])
            eps_rows.append(i)

    fix(1)
    for i in range(2, n + 1):
        a, b = rows[i - 2], rows[i - 1]
        new: list[Entry] = []
        for k in range(width - 1):
            new.append((b[0] * a[k + 1] - a[0] * b[k + 1]) / b[0])
        new.append(Fraction(0))
        rows.append(new)
        fix(i)
    return rows, eps_rows, [AuxiliaryStep(i, tuple(p), 0) for i, p in aux_rows]


def routh_array(coefficients: Sequence[object]) -> RouthArray:
    """Routh array and root counts of a real polynomial (descending powers), exactly.

    Parameters
    ----------
    coefficients : sequence of numbers
        Floats enter as their exact binary fractions; strings and Fractions exactly.

    Raises
    ------
    InputError
        The zero polynomial, or a zero leading coefficient.
    """
    raw = [P.exact(c) for c in coefficients]
    if not raw or all(c == 0 for c in raw):
        raise InputError("the zero polynomial has no roots to count")
    if raw[0] == 0:
        raise InputError("the leading coefficient is zero (drop it or give the intended degree)")
    coeffs = tuple(raw)
    m0 = 0
    reduced = coeffs
    while len(reduced) > 1 and reduced[-1] == 0:
        reduced = reduced[:-1]
        m0 += 1
    n = len(reduced) - 1
    rows, eps_rows, aux = _array(reduced)
    first = tuple(r[0] for r in rows)
    signs = tuple(sign_of(x) for x in first)
    right = _changes(signs)
    aux_steps: list[AuxiliaryStep] = []
    imaginary_nonzero = 0
    for step in aux:
        deg_aux = n - step.row + 1
        v = _changes(signs[step.row - 1:])
        j = deg_aux - 2 * v
        aux_steps.append(AuxiliaryStep(step.row, step.polynomial, j))
    if aux_steps:
        imaginary_nonzero = aux_steps[0].imaginary_roots
    left = n - right - imaginary_nonzero
    imaginary = imaginary_nonzero + m0
    repeated = m0 >= 2
    if not repeated and imaginary_nonzero > 0:
        repeated = _has_repeated_imaginary(reduced)
    return RouthArray(
        coefficients=coeffs,
        origin_roots=m0,
        rows=tuple(tuple(r) for r in rows),
        powers=tuple(n - i for i in range(len(rows))),
        first_column=first,
        signs=signs,
        sign_changes=right,
        left=left,
        imaginary=imaginary,
        right=right,
        repeated_imaginary=repeated,
        eps_rows=tuple(eps_rows),
        auxiliary=tuple(aux_steps),
    )


def _has_repeated_imaginary(p: P.ExactPoly) -> bool:
    """True when a nonzero imaginary-axis root of ``p`` is repeated: gcd(p, p') has one."""
    g = P.gcd(p, P.derivative(p))
    if P.degree(g) <= 0:
        return False
    return routh_array(g).imaginary > 0


def hurwitz_stable(coefficients: Sequence[object]) -> bool:
    """All roots in the open left half-plane (exact)."""
    return routh_array(coefficients).verdict == "stable"
