"""Polynomials in descending powers, exact (tuples of Fraction) and float (numpy arrays).

Numbers typed by the user enter exactly as written (``"0.1"`` is 1/10); numbers computed in
floating point enter as the exact binary fractions they are (``Fraction(0.1)``). Exact polynomials
are tuples of :class:`fractions.Fraction`, highest power first, with no leading zeros except the
zero polynomial ``(Fraction(0),)``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from decimal import Decimal
from fractions import Fraction
from numbers import Rational

import numpy as np

from sampled.errors import InputError

ExactPoly = tuple[Fraction, ...]
ZERO: ExactPoly = (Fraction(0),)
ONE: ExactPoly = (Fraction(1),)
#: Largest power of ten a number given as text may carry (exact reading builds 10**exponent).
MAX_DECIMAL_EXPONENT = 1000


def exact(value: object, where: str | None = None) -> Fraction:
    """Convert a number to an exact Fraction.

    Strings and Decimals are read exactly as written (``"0.1"`` -> 1/10); floats are the exact binary
    fraction they hold; NaN and infinities are refused.
    """
    if isinstance(value, Fraction):
        return value
    if isinstance(value, bool):
        raise InputError(f"expected a number, got {value!r}", where)
    if isinstance(value, (int, Rational)):
        return Fraction(value)  # type: ignore[arg-type]
    if isinstance(value, (float, np.floating)):
        if not math.isfinite(float(value)):
            raise InputError(f"expected a finite number, got {value!r}", where)
        return Fraction(float(value))
    if isinstance(value, np.integer):
        return Fraction(int(value))
    if isinstance(value, (str, Decimal)):
        text = str(value).strip()
        try:
            d = Decimal(text)
        except ArithmeticError:
            raise InputError(f"expected a number, got {value!r}", where) from None
        if not d.is_finite():
            raise InputError(f"expected a finite number, got {value!r}", where)
        if d and abs(d.adjusted()) > MAX_DECIMAL_EXPONENT:
            # Exact reading of 1e999999999 would build a billion-digit integer.
            raise InputError(
                f"number {value!r} is out of range (magnitude between 1e-{MAX_DECIMAL_EXPONENT} and "
                f"1e{MAX_DECIMAL_EXPONENT} allowed)",
                where,
            )
        return Fraction(d)
    raise InputError(f"expected a number, got {value!r}", where)


def trim(coeffs: Iterable[Fraction]) -> ExactPoly:
    """Drop leading zeros; the zero polynomial is ``(0,)``."""
    c = list(coeffs)
    i = 0
    while i < len(c) - 1 and c[i] == 0:
        i += 1
    out = tuple(c[i:])
    return out if out else ZERO


def from_values(values: Sequence[object], where: str | None = None) -> ExactPoly:
    """Exact polynomial from a list of numbers in descending powers (leading zeros dropped)."""
    if len(values) == 0:
        raise InputError("expected at least one coefficient, got an empty list", where)
    return trim(exact(v, f"{where}[{i}]" if where else None) for i, v in enumerate(values))


def degree(p: Sequence[Fraction]) -> int:
    """Degree; the zero polynomial has degree -1."""
    q = trim(p)
    return -1 if (len(q) == 1 and q[0] == 0) else len(q) - 1


def is_zero(p: Sequence[Fraction]) -> bool:
    return all(c == 0 for c in p)


def add(p: Sequence[Fraction], q: Sequence[Fraction]) -> ExactPoly:
    n = max(len(p), len(q))
    a = [Fraction(0)] * (n - len(p)) + list(p)
    b = [Fraction(0)] * (n - len(q)) + list(q)
    return trim(x + y for x, y in zip(a, b))


def scale(p: Sequence[Fraction], k: Fraction) -> ExactPoly:
    return trim(k * c for c in p)


def sub(p: Sequence[Fraction], q: Sequence[Fraction]) -> ExactPoly:
    return add(p, scale(q, Fraction(-1)))


def mul(p: Sequence[Fraction], q: Sequence[Fraction]) -> ExactPoly:
    out = [Fraction(0)] * (len(p) + len(q) - 1)
    for i, a in enumerate(p):
        if a == 0:
            continue
        for j, b in enumerate(q):
            out[i + j] += a * b
    return trim(out)


def power(p: Sequence[Fraction], n: int) -> ExactPoly:
    out: ExactPoly = ONE
    base = trim(p)
    while n > 0:
        if n & 1:
            out = mul(out, base)
        base = mul(base, base)
        n >>= 1
    return out


def divmod_(p: Sequence[Fraction], q: Sequence[Fraction]) -> tuple[ExactPoly, ExactPoly]:
    """Quotient and remainder of exact polynomial division."""
    q = trim(q)
    if is_zero(q):
        raise ZeroDivisionError("polynomial division by zero")
    r = list(trim(p))
    dq = len(q) - 1
    if len(r) - 1 < dq:
        return ZERO, trim(r)
    quot = [Fraction(0)] * (len(r) - dq)
    for i in range(len(quot)):
        c = r[i] / q[0]
        quot[i] = c
        if c:
            for j in range(1, len(q)):
                r[i + j] -= c * q[j]
        r[i] = Fraction(0)
    return trim(quot), trim(r[len(quot):] or [Fraction(0)])


def monic(p: Sequence[Fraction]) -> ExactPoly:
    q = trim(p)
    return q if q[0] in (0, 1) else scale(q, 1 / q[0])


def gcd(p: Sequence[Fraction], q: Sequence[Fraction]) -> ExactPoly:
    """Monic greatest common divisor (Euclid, exact)."""
    a, b = trim(p), trim(q)
    while not is_zero(b):
        _, r = divmod_(a, b)
        a, b = b, monic(r) if not is_zero(r) else r
    return monic(a) if not is_zero(a) else ZERO


def derivative(p: Sequence[Fraction]) -> ExactPoly:
    n = len(p) - 1
    if n <= 0:
        return ZERO
    return trim(c * (n - i) for i, c in enumerate(p[:-1]))


def evaluate(p: Sequence[Fraction], x: Fraction) -> Fraction:
    acc = Fraction(0)
    for c in p:
        acc = acc * x + c
    return acc


def compose_mobius(p: Sequence[Fraction], a: Sequence[Fraction], b: Sequence[Fraction]) -> ExactPoly:
    """``b(x)^n * p(a(x)/b(x))`` for polynomials a, b, n = deg p: a rational substitution cleared of denominators."""
    n = len(p) - 1
    out: ExactPoly = ZERO
    for i, c in enumerate(p):
        k = n - i  # power of the substituted variable
        term = mul(power(a, k), power(b, n - k))
        out = add(out, scale(term, c))
    return out


def reflect_negative(p: Sequence[Fraction]) -> ExactPoly:
    """``p(-x)``."""
    n = len(p) - 1
    return trim(c if (n - i) % 2 == 0 else -c for i, c in enumerate(p))


def to_float(p: Sequence[Fraction]) -> np.ndarray:
    """Float coefficients (each rounded once to the nearest double)."""
    return np.array([float(c) for c in p], dtype=float)


def from_float(p: Iterable[float], where: str | None = None) -> ExactPoly:
    """Exact polynomial holding the binary fractions of the float coefficients."""
    return from_values(list(p), where)


def format_poly(p: Sequence[Fraction], variable: str = "s", digits: int | None = None) -> str:
    """Readable text ``2*s^2 + 0.5*s - 1``; exact values printed as short decimals where they are."""
    terms: list[str] = []
    n = len(p) - 1
    for i, c in enumerate(p):
        k = n - i
        if c == 0 and n > 0:
            continue
        mag = abs(c)
        text = format_number(mag, digits)
        if k == 0:
            body = text
        else:
            xpow = variable if k == 1 else f"{variable}^{k}"
            body = xpow if mag == 1 else f"{text}*{xpow}"
        sign = "-" if c < 0 else "+"
        if not terms:
            terms.append(f"-{body}" if c < 0 else body)
        else:
            terms.append(f"{sign} {body}")
    return " ".join(terms) if terms else "0"


def format_number(x: Fraction | float, digits: int | None = None) -> str:
    """Short text for a number: exact decimal when short, else ``digits`` significant figures."""
    if isinstance(x, Fraction):
        if x.denominator == 1:
            return str(x.numerator)
        if digits is None:
            # terminating decimal with few digits?
            d = x.denominator
            twos = fives = 0
            while d % 2 == 0:
                d //= 2
                twos += 1
            while d % 5 == 0:
                d //= 5
                fives += 1
            if d == 1 and max(twos, fives) <= 12:
                places = max(twos, fives)
                s = f"{Decimal(x.numerator) / Decimal(x.denominator):.{places}f}".rstrip("0").rstrip(".")
                return s
            digits = 10
        return f"{float(x):.{digits}g}"
    return f"{x:.{digits or 10}g}"
