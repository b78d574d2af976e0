"""The Jury stability table in exact rational arithmetic.

For ``P(z) = a_n z^n + a_{n-1} z^{n-1} + ... + a_0`` with ``a_n > 0`` the table has rows

    row 1:  a_0      a_1      ...  a_n
    row 2:  a_n      a_{n-1}  ...  a_0
    row 3:  b_0      b_1      ...  b_{n-1}         b_k = a_0 a_k - a_n a_{n-k}
    row 4:  b_{n-1}  b_{n-2}  ...  b_0
    row 5:  c_0      ...      c_{n-2}              c_k = b_0 b_k - b_{n-1} b_{n-1-k}
    ...
    last :  q_0      q_1      q_2

and all roots lie strictly inside the unit circle exactly when

    P(1) > 0,  (-1)^n P(-1) > 0,  |a_0| < a_n,  |b_0| > |b_{n-1}|,  |c_0| > |c_{n-2}|, ...,  |q_0| > |q_2|.

References
----------
Jury, E. I., "Theory and Application of the z-Transform Method", Wiley, 1964, chapter 3.
Kuo, B. C., "Digital Control Systems", 2nd ed., Saunders, 1992, section on the Jury stability
test (the notation above).
Ogata, K., "Discrete-Time Control Systems", 2nd ed., Prentice Hall, 1995, section 4-3 (same
table with the coefficient indices reversed).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal

from sampled import poly
from sampled.criteria.unit_circle import integer_form
from sampled.errors import InputError
from sampled.poly import ExactPoly

JuryWord = Literal["stable", "not stable"]


@dataclass(frozen=True)
class JuryCondition:
    """One inequality of the Jury test, with the exact numbers compared.

    Attributes
    ----------
    name : str
        The condition as written, e.g. ``"|b_0| > |b_2|"`` or ``"P(1) > 0"``.
    left, right : Fraction
        The two sides compared (``right`` is 0 for the sign conditions).
    holds : bool
    """

    name: str
    left: Fraction
    right: Fraction
    holds: bool

    def to_dict(self) -> dict[str, object]:
        return {"condition": self.name, "left": _exact_text(self.left), "right": _exact_text(self.right), "holds": self.holds}


@dataclass(frozen=True)
class JuryTable:
    """The Jury table of a real polynomial and its verdict.

    Attributes
    ----------
    coefficients : tuple of Fraction
        The polynomial as used, descending powers, leading coefficient made positive.
    rows : tuple of tuple of Fraction
        Every row, the reversed rows included (rows 1, 2, 3, 4, ... of the textbook layout).
    reduced : bool
        From the fourth row pair on (the ``d`` rows), each new pair was divided by the positive
        number ``|first entry of the pair two above|`` (``d`` by ``|b_0|``, ``e`` by ``|c_0|``, ...).
        The division is exact in integer arithmetic, as in Bareiss elimination (checked
        symbolically up to degree 6 and on random integer polynomials up to degree 20; the code
        verifies divisibility and otherwise divides in
        rationals). It keeps the entries' size growing linearly instead of doubling each pair,
        and, being a positive scaling, changes no condition. ``False`` gives the textbook numbers.
    conditions : tuple of JuryCondition
        The necessary conditions (``P(1) > 0``, ``(-1)^n P(-1) > 0``, ``|a_0| < a_n``) then one
        condition for each derived row pair.
    first_failure : str or None
        Name of the first condition (in the order above) that does not hold.
    verdict : {"stable", "not stable"}
        ``"stable"`` when every condition holds: all roots strictly inside the unit circle. The
        table cannot tell marginal from unstable; see ``sampled.criteria.unit_circle``.
    notes : tuple of str
    """

    coefficients: ExactPoly
    rows: tuple[tuple[Fraction, ...], ...]
    reduced: bool
    conditions: tuple[JuryCondition, ...]
    first_failure: str | None
    verdict: JuryWord
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        return {
            "coefficients": [_exact_text(c) for c in self.coefficients],
            "rows": [[_exact_text(x) for x in row] for row in self.rows],
            "reduced": self.reduced,
            "conditions": [c.to_dict() for c in self.conditions],
            "first_failure": self.first_failure,
            "verdict": self.verdict,
            "notes": list(self.notes),
        }


def _exact_text(x: Fraction) -> str:
    """``str(x)``, or a 17-digit approximation when the exact fraction has more digits than
    Python converts to text (``sys.get_int_max_str_digits``; entries of deep tables can)."""
    try:
        return str(x)
    except ValueError:
        import mpmath

        with mpmath.workdps(20):
            approx = mpmath.nstr(mpmath.mpf(x.numerator) / x.denominator, 17)
        return f"~{approx} (exact fraction too long to print)"


_LETTERS = "abcdefghijklmnopqrstuvwxy"


def _row_name(index: int) -> str:
    """Letter of derived row pair ``index`` (0 is the coefficient row ``a``)."""
    return _LETTERS[index] if index < len(_LETTERS) else f"r{index}"


def jury_table(coeffs: Sequence[object], reduced: bool = True) -> JuryTable:
    """Build the Jury table exactly and decide whether all roots are inside the unit circle.

    Parameters
    ----------
    coeffs : sequence of numbers
        Polynomial in descending powers of z, degree at least 1; read exactly.
    reduced : bool
        Divide derived rows by their exact positive divisor to keep numbers short (default); set
        ``False`` for the textbook entries.

    Returns
    -------
    JuryTable

    Raises
    ------
    InputError
        For a polynomial of degree below 1.
    """
    p = poly.from_values(list(coeffs), "polynomial")
    n = poly.degree(p)
    if n < 1:
        raise InputError(f"the Jury table needs degree 1 or more, got degree {n}", "polynomial")
    notes: list[str] = []
    if p[0] < 0:
        p = poly.scale(p, Fraction(-1))
        notes.append("multiplied by -1 to make the leading coefficient positive")
    asc = tuple(reversed(p))  # asc[k] = a_k
    conditions: list[JuryCondition] = []
    p_one = poly.evaluate(p, Fraction(1))
    p_minus = poly.evaluate(p, Fraction(-1)) * (-1) ** n
    conditions.append(JuryCondition("P(1) > 0", p_one, Fraction(0), p_one > 0))
    name_minus = "(-1)^n P(-1) > 0"
    conditions.append(JuryCondition(name_minus, p_minus, Fraction(0), p_minus > 0))
    conditions.append(JuryCondition(f"|a_0| < a_{n}", abs(asc[0]), asc[n], abs(asc[0]) < asc[n]))

    # The table is built on the integer polynomial scale * P (exact, fast); a row that is
    # homogeneous of degree d in the coefficients is divided by scale^d at the end.
    scale = Fraction(integer_form(p)[0]) / p[0]
    work: list[int | Fraction] = [c * scale for c in asc]
    work = [int(x) if isinstance(x, Fraction) and x.denominator == 1 else x for x in work]
    # Jury (1964) chapter 3 / Kuo (1992): each row pair from the determinants of the pair above
    pairs: list[list[int | Fraction]] = [work]
    degrees = [1]
    while len(pairs[-1]) > 3:
        r = pairs[-1]
        m = len(r) - 1
        new = [r[0] * r[k] - r[m] * r[m - k] for k in range(m)]
        j = len(pairs)  # index of the new pair
        deg = 2 * degrees[-1]
        if reduced and j >= 3:
            divisor = abs(pairs[j - 2][0])
            if divisor != 0:
                # exact in integers (a Bareiss-type identity); Fractions otherwise
                if isinstance(divisor, int) and all(isinstance(x, int) and x % divisor == 0 for x in new):
                    new = [x // divisor for x in new]  # type: ignore[operator]
                else:
                    new = [Fraction(x) / divisor for x in new]
                deg -= degrees[j - 2]
            else:
                notes.append(f"row {_row_name(j)} not reduced: {_row_name(j - 2)}_0 = 0")
        pairs.append(new)
        degrees.append(deg)
    rows: list[tuple[Fraction, ...]] = []
    for j, (r, deg) in enumerate(zip(pairs, degrees)):
        factor = scale**deg
        row = tuple(Fraction(x) / factor for x in r) if j else asc
        rows.extend([row, tuple(reversed(row))])
        if j:
            letter = _row_name(j)
            last = len(row) - 1
            conditions.append(
                JuryCondition(f"|{letter}_0| > |{letter}_{last}|", abs(row[0]), abs(row[last]), abs(row[0]) > abs(row[last]))
            )
    # the textbook layout prints the last (three-entry) row once: 2n - 3 rows for n >= 2
    rows = rows[: max(2 * n - 3, 1)]
    first_failure = next((c.name for c in conditions if not c.holds), None)
    return JuryTable(
        coefficients=p,
        rows=tuple(rows),
        reduced=reduced,
        conditions=tuple(conditions),
        first_failure=first_failure,
        verdict="stable" if first_failure is None else "not stable",
        notes=tuple(notes),
    )
