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
# Polynomials in eps are lists of Python ints in ascending powers; an Eps holds a numerator and a
# denominator in lowest terms with integer coefficients (Fraction arithmetic on the binary
# fractions of doubles was the cost before).

def _itrim(c: list[int]) -> list[int]:
    while len(c) > 1 and c[-1] == 0:
        c.pop()
    return c


def _imul(a: Sequence[int], b: Sequence[int]) -> list[int]:
    out = [0] * (len(a) + len(b) - 1)
    for i, x in enumerate(a):
        if x:
            for j, y in enumerate(b):
                out[i + j] += x * y
    return _itrim(out)


def _isub(a: Sequence[int], b: Sequence[int]) -> list[int]:
    n = max(len(a), len(b))
    return _itrim([(a[i] if i < len(a) else 0) - (b[i] if i < len(b) else 0) for i in range(n)])


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


def _ints(values: Sequence[object]) -> tuple[list[int], int]:
    """Integer coefficients and the positive common denominator they were scaled by."""
    fr = [Fraction(x) for x in values]  # type: ignore[arg-type]
    scale = 1
    for x in fr:
        scale = scale * x.denominator // math.gcd(scale, x.denominator)
    return [int(x * scale) for x in fr], scale


class Eps:
    """An exact rational function of ``eps`` (coefficients in ascending powers), judged as eps -> 0+.

    Held in lowest terms with integer coefficients whose overall content is 1 and whose
    denominator has a positive lowest-order coefficient (a unique form). ``num`` and ``den`` give
    the same function as Fractions scaled so the denominator's lowest-order coefficient is 1.
    """

    __slots__ = ("_n", "_d")

    def __init__(self, num: Sequence[object], den: Sequence[object] = (1,)) -> None:
        n, sn = _ints(num)
        d, sd = _ints(den)
        # num/den = (n/sn)/(d/sd) = (n sd)/(d sn)
        self._set([x * sd for x in n], [x * sn for x in d])

    @classmethod
    def _from_ints(cls, n: list[int], d: list[int]) -> "Eps":
        e = cls.__new__(cls)
        e._set(n, d)
        return e

    def _set(self, n: list[int], d: list[int]) -> None:
        n, d = _itrim(list(n)), _itrim(list(d))
        if not any(d):
            raise ZeroDivisionError("division by an identically zero entry")
        if not any(n):
            self._n, self._d = [0], [1]
            return
        # Cancel common powers of eps, then the common polynomial factor, then the content.
        k = min(next(i for i, x in enumerate(n) if x), next(i for i, x in enumerate(d) if x))
        n, d = n[k:], d[k:]
        if len(d) > 1 and len(n) > 1:
            g = _int_poly_gcd(n[::-1], d[::-1])
            if len(g) > 1:
                n = _int_poly_exact_div(n[::-1], g)[::-1]
                d = _int_poly_exact_div(d[::-1], g)[::-1]
        c = 0
        for x in (*n, *d):
            c = math.gcd(c, x)
        if next(x for x in d if x) < 0:
            c = -c
        self._n = [x // c for x in n]
        self._d = [x // c for x in d]

    @property
    def num(self) -> list[Fraction]:
        lead = next(x for x in self._d if x)
        return [Fraction(x, lead) for x in self._n]

    @property
    def den(self) -> list[Fraction]:
        lead = next(x for x in self._d if x)
        return [Fraction(x, lead) for x in self._d]

    @staticmethod
    def of(x: "Entry") -> "Eps":
        if isinstance(x, Eps):
            return x
        f = Fraction(x)
        return Eps._from_ints([f.numerator], [f.denominator])

    def __add__(self, other: "Entry") -> "Eps":
        o = Eps.of(other)
        return Eps._from_ints(
            _isub(_imul(self._n, o._d), [-x for x in _imul(o._n, self._d)]), _imul(self._d, o._d)
        )

    __radd__ = __add__

    def __neg__(self) -> "Eps":
        return Eps._from_ints([-x for x in self._n], self._d)

    def __sub__(self, other: "Entry") -> "Eps":
        o = Eps.of(other)
        return Eps._from_ints(_isub(_imul(self._n, o._d), _imul(o._n, self._d)), _imul(self._d, o._d))

    def __rsub__(self, other: "Entry") -> "Eps":
        return Eps.of(other) - self

    def __mul__(self, other: "Entry") -> "Eps":
        o = Eps.of(other)
        return Eps._from_ints(_imul(self._n, o._n), _imul(self._d, o._d))

    __rmul__ = __mul__

    def __truediv__(self, other: "Entry") -> "Eps":
        o = Eps.of(other)
        if o.is_zero():
            raise ZeroDivisionError("division by an identically zero entry")
        return Eps._from_ints(_imul(self._n, o._d), _imul(self._d, o._n))

    def __rtruediv__(self, other: "Entry") -> "Eps":
        return Eps.of(other) / self

    def is_zero(self) -> bool:
        return not any(self._n)

    def sign(self) -> int:
        """Sign of the limit as eps -> 0+ (0 only for the zero function)."""
        if self.is_zero():
            return 0
        lead_n = next(x for x in self._n if x)
        lead_d = next(x for x in self._d if x)
        return 1 if (lead_n > 0) == (lead_d > 0) else -1

    def __eq__(self, other: object) -> bool:
        if isinstance(other, (int, Fraction)):
            return self == Eps.of(other)
        if isinstance(other, Eps):
            return self._n == other._n and self._d == other._d
        return NotImplemented

    def __hash__(self) -> int:  # pragma: no cover - entries are not hashed
        return hash((tuple(self._n), tuple(self._d)))

    def __str__(self) -> str:
        num, den = self.num, self.den
        n = P.format_poly(tuple(reversed(num)), "eps")
        if den == [Fraction(1)]:
            return n
        d = P.format_poly(tuple(reversed(den)), "eps")
        return f"({n})/({d})"

    __repr__ = __str__


def _routh_entry(a0: "Entry", a1: "Entry", b0: "Entry", b1: "Entry") -> "Entry":
    """(b0 a1 - a0 b1) / b0, the Routh recurrence, with one reduction when eps is involved."""
    if not any(isinstance(x, Eps) for x in (a0, a1, b0, b1)):
        return (b0 * a1 - a0 * b1) / b0
    A0, A1, B0, B1 = (Eps.of(x) for x in (a0, a1, b0, b1))
    # b0 a1 - a0 b1 over the common denominator, then divided by b0 = B0n / B0d.
    diff = _isub(
        _imul(_imul(B0._n, A1._n), _imul(A0._d, B1._d)), _imul(_imul(A0._n, B1._n), _imul(B0._d, A1._d))
    )
    den = _imul(_imul(A1._d, A0._d), _imul(B1._d, B0._n))
    return Eps._from_ints(diff, den)


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
    symmetric_factor: tuple[Fraction, ...] | None = None

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
        if self.symmetric_factor is not None:
            out.append(
                "the eps limit moves imaginary-axis roots off the axis, so the counts come from "
                f"gcd(p(s), p(-s)) = {P.format_poly(self.symmetric_factor, 's')} (roots symmetric about "
                "the origin, axis roots counted exactly by Sturm's theorem) and the array of the quotient"
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
            new.append(_routh_entry(a[0], a[k + 1], b[0], b[k + 1]))
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
    symmetric: P.ExactPoly | None = None
    if eps_rows:
        # The eps limit is a perturbation: it moves roots that sit on the imaginary axis off it,
        # and the first column then counts them on one side. Roots placed symmetrically about the
        # origin (those on the axis among them) are the roots of h = gcd(p(s), p(-s)); count h's
        # axis roots exactly and use the array of p / h, which has none, for the rest.
        h = P.gcd(reduced, P.reflect_negative(reduced))
        if P.degree(h) > 0:
            symmetric = h
            rest = routh_array(P.divmod_(reduced, h)[0])
            imaginary_nonzero = _imaginary_roots_of_symmetric(h)
            right = rest.right + (P.degree(h) - imaginary_nonzero) // 2
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
        sign_changes=_changes(signs),
        left=left,
        imaginary=imaginary,
        right=right,
        repeated_imaginary=repeated,
        eps_rows=tuple(eps_rows),
        auxiliary=tuple(aux_steps),
        symmetric_factor=symmetric,
    )


def _sturm_negative_roots(p: P.ExactPoly) -> int:
    """Distinct real roots of a square-free ``p`` in (-inf, 0), by Sturm's theorem (p(0) != 0).

    Reference: C. Sturm, 1835; e.g. S. Basu, R. Pollack, M.-F. Roy, *Algorithms in Real Algebraic
    Geometry*, 2nd ed., 2006, theorem 2.50.
    """
    seq = [P.trim(p), P.derivative(p)]
    while P.degree(seq[-1]) > 0:
        _, r = P.divmod_(seq[-2], seq[-1])
        if P.is_zero(r):
            break
        seq.append(P.scale(r, Fraction(-1)))
    at_minus_inf = [(1 if q[0] > 0 else -1) * (-1) ** P.degree(q) for q in seq if not P.is_zero(q)]
    at_zero = [(q[-1] > 0) - (q[-1] < 0) for q in seq]
    return _changes(at_minus_inf) - _changes(at_zero)


def _imaginary_roots_of_symmetric(h: P.ExactPoly) -> int:
    """Roots on the imaginary axis, with multiplicity, of an even polynomial h(s) = H(s^2), H(0) != 0.

    s = j w is a root exactly when x = s^2 = -w^2 < 0 is a root of H; each negative root of H of
    multiplicity k gives the pair +-j w, each k times. Multiplicities come from peeling
    f -> gcd(f, f'), each step removing one copy of every root.
    """
    big_h = P.trim(h[0::2]) if P.degree(h) % 2 == 0 else None
    if big_h is None or any(c != 0 for c in h[1::2]):  # pragma: no cover - gcd(p, p(-s)) is even here
        raise ArithmeticError("expected an even polynomial")
    count = 0
    f = big_h
    while P.degree(f) > 0:
        g = P.gcd(f, P.derivative(f))
        square_free = P.divmod_(f, g)[0]
        count += _sturm_negative_roots(square_free)
        f = g
    return 2 * count


def _has_repeated_imaginary(p: P.ExactPoly) -> bool:
    """True when a nonzero imaginary-axis root of ``p`` is repeated: gcd(p, p') has one."""
    g = P.gcd(p, P.derivative(p))
    if P.degree(g) <= 0:
        return False
    return routh_array(g).imaginary > 0


def hurwitz_stable(coefficients: Sequence[object]) -> bool:
    """All roots in the open left half-plane (exact)."""
    return routh_array(coefficients).verdict == "stable"
