"""A safe reader for rational expressions such as ``10*(s+2)/(s*(0.5*s+1)^2)``.

The grammar is deliberately tiny: numbers, the variable (``s`` or ``z``), optionally one parameter
(``K``), ``+ - * / ^ **``, parentheses and implicit multiplication (``2s``, ``(s+1)(s+2)``). The text
is tokenised and parsed by our own recursive-descent parser into exact rational functions; it is
never passed to ``eval`` or to a computer-algebra parser. Numbers are read exactly as written
(``0.1`` is 1/10).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation
from fractions import Fraction

from sampled import poly as P
from sampled.errors import ExpressionError

#: Largest exponent and largest polynomial degree an expression may produce.
MAX_EXPONENT = 64
MAX_DEGREE = 100
#: Largest power of ten a number may be written with (``1e1000``); beyond it exact reading would
#: build integers of billions of digits (``1e999999999`` never finishes).
MAX_DECIMAL_EXPONENT = 1000
#: Largest size [bits] of any exact coefficient an expression may build; nested powers such as
#: ``((2^64)^64)^64`` would otherwise grow without bound.
MAX_COEFFICIENT_BITS = 1 << 16

_TOKEN = re.compile(
    r"\s*(?:(?P<number>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)|(?P<name>[A-Za-z_][A-Za-z_0-9]*)"
    r"|(?P<op>\*\*|[-+*/^()]))"
)

# A multivariate polynomial: {(power of variable, power of parameter): coefficient}.
_Poly = dict[tuple[int, int], Fraction]


@dataclass(frozen=True)
class _Rational:
    num: tuple[tuple[tuple[int, int], Fraction], ...]
    den: tuple[tuple[tuple[int, int], Fraction], ...]


def _p(d: _Poly) -> tuple[tuple[tuple[int, int], Fraction], ...]:
    return tuple(sorted((k, v) for k, v in d.items() if v != 0))


def _const(c: Fraction) -> _Poly:
    return {(0, 0): c} if c != 0 else {}


def _pmul(a: _Poly, b: _Poly) -> _Poly:
    out: _Poly = {}
    for (i1, j1), c1 in a.items():
        for (i2, j2), c2 in b.items():
            key = (i1 + i2, j1 + j2)
            out[key] = out.get(key, Fraction(0)) + c1 * c2
    return {k: v for k, v in out.items() if v != 0}


def _padd(a: _Poly, b: _Poly, sign: int = 1) -> _Poly:
    out = dict(a)
    for k, v in b.items():
        out[k] = out.get(k, Fraction(0)) + sign * v
    return {k: v for k, v in out.items() if v != 0}


def _deg(a: _Poly) -> int:
    return max((i + j for i, j in a), default=0)


class _Parser:
    def __init__(self, text: str, variable: str, parameter: str | None, where: str | None):
        self.text = text
        self.variable = variable
        self.parameter = parameter
        self.where = where
        self.tokens = self._tokenise(text)
        self.pos = 0

    def fail(self, message: str) -> ExpressionError:
        return ExpressionError(f"{message} in {self.text!r}", self.where)

    def _tokenise(self, text: str) -> list[tuple[str, str]]:
        tokens: list[tuple[str, str]] = []
        i = 0
        stripped = text.rstrip()
        while i < len(stripped):
            m = _TOKEN.match(stripped, i)
            if not m or m.end() == i:
                bad = stripped[i:].lstrip()[:1]
                raise self.fail(f"unexpected character {bad!r}")
            kind = m.lastgroup
            assert kind is not None
            tokens.append((kind, m.group(kind)))
            i = m.end()
        if not tokens:
            raise ExpressionError("empty expression", self.where)
        return tokens

    def peek(self) -> tuple[str, str] | None:
        return self.tokens[self.pos] if self.pos < len(self.tokens) else None

    def take(self) -> tuple[str, str]:
        tok = self.peek()
        if tok is None:
            raise self.fail("unexpected end of expression")
        self.pos += 1
        return tok

    def parse(self) -> tuple[_Poly, _Poly]:
        value = self.expr()
        if self.peek() is not None:
            tok = self.peek()
            assert tok is not None
            if tok[1] == ")":
                raise self.fail("unbalanced parentheses: unexpected ')'")
            raise self.fail(f"unexpected {tok[1]!r}")
        return value

    # expr := term (('+'|'-') term)*
    def expr(self) -> tuple[_Poly, _Poly]:
        num, den = self.term()
        while (tok := self.peek()) is not None and tok[1] in "+-" and tok[0] == "op":
            self.take()
            n2, d2 = self.term()
            sign = 1 if tok[1] == "+" else -1
            if den == d2:
                num = _padd(num, n2, sign)
            else:
                num = _padd(_pmul(num, d2), _pmul(n2, den), sign)
                den = _pmul(den, d2)
            self._check_size(num, den)
        return num, den

    # term := unary (('*'|'/') unary | implicit unary)*
    def term(self) -> tuple[_Poly, _Poly]:
        num, den = self.unary()
        while (tok := self.peek()) is not None:
            if tok[0] == "op" and tok[1] in ("*", "/"):
                self.take()
                n2, d2 = self.unary()
                if tok[1] == "/":
                    if not n2:
                        raise self.fail("division by zero")
                    n2, d2 = d2, n2
            elif tok[0] in ("number", "name") or tok[1] == "(":
                n2, d2 = self.power()  # implicit multiplication: 2s, (s+1)(s+2)
            else:
                break
            num, den = _pmul(num, n2), _pmul(den, d2)
            self._check_size(num, den)
        return num, den

    def unary(self) -> tuple[_Poly, _Poly]:
        tok = self.peek()
        if tok is not None and tok[0] == "op" and tok[1] in "+-":
            self.take()
            num, den = self.unary()
            return ({k: -v for k, v in num.items()} if tok[1] == "-" else num), den
        return self.power()

    # power := atom (('^'|'**') unary)?
    def power(self) -> tuple[_Poly, _Poly]:
        num, den = self.atom()
        tok = self.peek()
        if tok is not None and tok[0] == "op" and tok[1] in ("^", "**"):
            self.take()
            en, ed = self.unary()
            exponent = self._constant(en, ed, "exponent")
            if exponent.denominator != 1:
                raise self.fail(f"exponent must be a whole number, got {exponent}")
            n = int(exponent)
            if abs(n) > MAX_EXPONENT:
                raise self.fail(f"exponent {n} is too large (at most {MAX_EXPONENT})")
            if n < 0:
                if not num:
                    raise self.fail("division by zero")
                num, den, n = den, num, -n
            rn: _Poly = _const(Fraction(1))
            rd: _Poly = _const(Fraction(1))
            for _ in range(n):
                rn, rd = _pmul(rn, num), _pmul(rd, den)
                self._check_size(rn, rd)
            return rn, rd
        return num, den

    def atom(self) -> tuple[_Poly, _Poly]:
        kind, text = self.take()
        one = _const(Fraction(1))
        if kind == "number":
            try:
                d = Decimal(text)
            except InvalidOperation:  # pragma: no cover - the token pattern admits only decimals
                raise self.fail(f"cannot read number {text!r}") from None
            if d and abs(d.adjusted()) > MAX_DECIMAL_EXPONENT:
                raise self.fail(
                    f"number {text!r} is out of range (magnitude between 1e-{MAX_DECIMAL_EXPONENT} "
                    f"and 1e{MAX_DECIMAL_EXPONENT} allowed)"
                )
            return _const(Fraction(d)), one
        if kind == "name":
            if text == self.variable:
                return {(1, 0): Fraction(1)}, one
            if self.parameter is not None and text == self.parameter:
                return {(0, 1): Fraction(1)}, one
            allowed = f"'{self.variable}'" + (f" and '{self.parameter}'" if self.parameter else "")
            raise self.fail(f"unknown name {text!r} (only {allowed} and numbers are allowed)")
        if text == "(":
            value = self.expr()
            tok = self.peek()
            if tok is None or tok[1] != ")":
                raise self.fail("unbalanced parentheses: missing ')'")
            self.take()
            return value
        raise self.fail(f"unexpected {text!r}")

    def _constant(self, num: _Poly, den: _Poly, what: str) -> Fraction:
        if any(k != (0, 0) for k in num) or any(k != (0, 0) for k in den):
            raise self.fail(f"{what} must be a number")
        return num.get((0, 0), Fraction(0)) / den[(0, 0)]

    def _check_size(self, num: _Poly, den: _Poly) -> None:
        if _deg(num) > MAX_DEGREE or _deg(den) > MAX_DEGREE:
            raise self.fail(f"expression degree exceeds {MAX_DEGREE}")
        for c in (*num.values(), *den.values()):
            if max(c.numerator.bit_length(), c.denominator.bit_length()) > MAX_COEFFICIENT_BITS:
                raise self.fail(f"a coefficient exceeds {MAX_COEFFICIENT_BITS} bits (numbers too large)")


def _univariate(d: _Poly, param_power: int = 0) -> P.ExactPoly:
    terms = {i: c for (i, j), c in d.items() if j == param_power}
    if not terms:
        return P.ZERO
    n = max(terms)
    return P.trim(terms.get(n - k, Fraction(0)) for k in range(n + 1))


def parse_rational(text: str, variable: str = "s", where: str | None = None) -> tuple[P.ExactPoly, P.ExactPoly]:
    """Read a rational expression in one variable as exact ``(numerator, denominator)``.

    Coefficients are in descending powers. Common factors are kept as written (the caller decides
    about cancellation). The denominator is never the zero polynomial.

    Raises
    ------
    ExpressionError
        Empty text, unknown names, unbalanced parentheses, division by zero, huge exponents.
    """
    if not isinstance(text, str):
        raise ExpressionError(f"expected an expression as text, got {text!r}", where)
    num, den = _Parser(text, variable, None, where).parse()
    if not den:
        raise ExpressionError(f"division by zero in {text!r}", where)
    n, d = _univariate(num), _univariate(den)
    if P.is_zero(d):  # pragma: no cover - guarded above
        raise ExpressionError(f"division by zero in {text!r}", where)
    # Normalise so the denominator's leading coefficient is positive and, if constant, one.
    if len(d) == 1:
        n, d = P.scale(n, 1 / d[0]), P.ONE
    elif d[0] < 0:
        n, d = P.scale(n, Fraction(-1)), P.scale(d, Fraction(-1))
    return n, d


def parse_polynomial(text: str, variable: str = "s", where: str | None = None) -> P.ExactPoly:
    """Read a polynomial in one variable, exactly; a non-constant denominator is refused."""
    n, d = parse_rational(text, variable, where)
    if len(d) > 1:
        raise ExpressionError(f"expected a polynomial in {variable}, got a ratio in {text!r}", where)
    return n


def parse_affine(
    text: str, variable: str = "s", parameter: str = "K", where: str | None = None
) -> tuple[P.ExactPoly, P.ExactPoly]:
    """Read a polynomial affine in a parameter: returns ``(p0, p1)`` with ``p = p0 + K*p1``.

    The expression may be a ratio whose denominator is a nonzero constant.
    """
    if not isinstance(text, str):
        raise ExpressionError(f"expected an expression as text, got {text!r}", where)
    num, den = _Parser(text, variable, parameter, where).parse()
    if any(k != (0, 0) for k in den):
        raise ExpressionError(
            f"expected a polynomial in {variable} and {parameter}, got a ratio in {text!r}", where
        )
    scale = 1 / den[(0, 0)]
    if any(j > 1 for (_, j) in num):
        raise ExpressionError(f"the polynomial must be affine in {parameter} (no {parameter}^2) in {text!r}", where)
    p0 = P.scale(_univariate(num, 0), scale)
    p1 = P.scale(_univariate(num, 1), scale)
    if P.is_zero(p1):
        raise ExpressionError(f"{parameter} does not appear in {text!r}", where)
    return p0, p1
