"""The bilinear map to the w-plane and the Routh array there, with root counts carried back to the circle.

With ``z = (1 + w) / (1 - w)``, that is ``w = (z - 1) / (z + 1)``, the open unit disk maps onto the
open left half-plane and the unit circle onto the imaginary axis; ``z = -1`` maps to ``w = infinity``.
For ``P(z)`` of degree n the w-plane polynomial ``Q(w) = (1 - w)^n P((1 + w) / (1 - w))`` therefore
has the roots of P inside the circle in its left half-plane, and its degree falls short of n by the
multiplicity of the root ``z = -1`` (those roots are ON the circle).

The scaled form ``w' = (2/T) (z - 1) / (z + 1)`` (``z = (1 + T w'/2) / (1 - T w'/2)``) has roots that
tend to the continuous-time poles as the sample period T goes to zero; the counts are the same.

References
----------
Kuo, B. C., "Digital Control Systems", 2nd ed., Saunders, 1992, the w-transformation and the
Routh-Hurwitz criterion applied to it.
Ogata, K., "Discrete-Time Control Systems", 2nd ed., Prentice Hall, 1995, section 4-3 (stability
analysis by the bilinear transformation and the Routh criterion).
Franklin, G. F., Powell, J. D., Workman, M. L., "Digital Control of Dynamic Systems", 3rd ed.,
Addison-Wesley, 1998 (the scaled w-plane).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

from sampled import poly
from sampled.criteria.routh import RouthArray, routh_array
from sampled.criteria.unit_circle import StabilityWord, mobius_transform, verdict_from_counts
from sampled.errors import InputError
from sampled.poly import ExactPoly


def to_w(coeffs: Sequence[object]) -> ExactPoly:
    """``Q(w) = (1 - w)^n P((1 + w)/(1 - w))`` for ``P`` of degree n, exactly (descending powers of w)."""
    p = poly.from_values(list(coeffs), "polynomial")
    return mobius_transform(p, (Fraction(1), Fraction(1)), (Fraction(-1), Fraction(1)))


def to_scaled_w(coeffs: Sequence[object], period_s: object) -> ExactPoly:
    """``Q(w') = (1 - T w'/2)^n P((1 + T w'/2)/(1 - T w'/2))``: the map ``w' = (2/T)(z - 1)/(z + 1)``.

    Parameters
    ----------
    coeffs : sequence of numbers
        ``P(z)``, descending powers, read exactly.
    period_s : number [s]
        Sample period T > 0, read exactly.
    """
    p = poly.from_values(list(coeffs), "polynomial")
    t = poly.exact(period_s, "period_s")
    if t <= 0:
        raise InputError(f"the sample period must be positive, got {period_s!r}", "period_s")
    half = t / 2
    return mobius_transform(p, (half, Fraction(1)), (-half, Fraction(1)))


def from_w(coeffs: Sequence[object], degree: int | None = None) -> ExactPoly:
    """Inverse map: ``P(z) = (z + 1)^n Q((z - 1)/(z + 1))`` with n = ``degree`` (default deg Q).

    Give ``degree`` when ``Q`` came from a polynomial with roots at ``z = -1`` (degree drop); the
    inverse is then exact up to the constant factor ``2^n``.
    """
    q = poly.from_values(list(coeffs), "polynomial")
    n = poly.degree(q) if degree is None else degree
    if n < poly.degree(q):
        raise InputError(f"degree {n} is below the degree of Q, {poly.degree(q)}", "degree")
    padded = tuple([Fraction(0)] * (n - poly.degree(q))) + q
    return mobius_transform(padded, (Fraction(1), Fraction(-1)), (Fraction(1), Fraction(1)))


@dataclass(frozen=True)
class WPlaneRouth:
    """Routh array of the w-plane image of ``P(z)`` and the unit-circle counts it implies.

    Attributes
    ----------
    z_polynomial : tuple of Fraction
        ``P(z)``, descending powers.
    w_polynomial : tuple of Fraction
        ``Q(w)`` (or ``Q(w')`` when ``period_s`` is set).
    period_s : Fraction or None [s]
        Sample period of the scaled map, None for the plain map.
    routh : RouthArray or None
        Routh array of ``Q``; None when ``Q`` is a nonzero constant (every root at z = -1).
    at_minus_one : int
        Degree drop ``deg P - deg Q``: roots at ``z = -1``.
    inside, on, outside : int
        Roots of P inside, on and outside the unit circle: Routh left, imaginary + at_minus_one, right.
    repeated_on_circle : bool
    verdict : {"stable", "marginal", "unstable"}
    """

    z_polynomial: ExactPoly
    w_polynomial: ExactPoly
    period_s: Fraction | None
    routh: RouthArray | None
    at_minus_one: int
    inside: int
    on: int
    outside: int
    repeated_on_circle: bool
    verdict: StabilityWord

    def to_dict(self) -> dict[str, object]:
        variable = "w'" if self.period_s is not None else "w"
        out: dict[str, object] = {
            "variable": variable,
            "period_s": None if self.period_s is None else str(self.period_s),
            "w_polynomial": [str(c) for c in self.w_polynomial],
            "w_polynomial_text": poly.format_poly(self.w_polynomial, variable),
            "roots_at_minus_one": self.at_minus_one,
            "counts": {"inside": self.inside, "on": self.on, "outside": self.outside},
            "repeated_on_circle": self.repeated_on_circle,
            "verdict": self.verdict,
        }
        if self.routh is not None:
            r = self.routh.to_dict()
            out["routh"] = r["routh"]
            out["first_column"] = r["first_column"]
            out["w_counts"] = r["counts"]
            out["notes"] = r["notes"]
        else:
            out["routh"] = []
            out["notes"] = []
        return out


def wplane_routh(coeffs: Sequence[object], period_s: object | None = None) -> WPlaneRouth:
    """Map ``P(z)`` to the w-plane, build the Routh array there and carry the counts back.

    Parameters
    ----------
    coeffs : sequence of numbers
        ``P(z)``, descending powers, degree at least 1, read exactly.
    period_s : number [s], optional
        Use the scaled map ``w' = (2/T)(z - 1)/(z + 1)`` with this T.

    Returns
    -------
    WPlaneRouth

    Notes
    -----
    A root ``z = -1`` of multiplicity d lowers the degree of ``Q`` by d (``w = infinity``); those
    roots are on the circle, and repeated when d >= 2.
    """
    p = poly.from_values(list(coeffs), "polynomial")
    n = poly.degree(p)
    if n < 1:
        raise InputError(f"expected a polynomial of degree 1 or more, got degree {n}", "polynomial")
    t = None if period_s is None else poly.exact(period_s, "period_s")
    q = to_w(p) if t is None else to_scaled_w(p, t)
    drop = n - poly.degree(q)
    if poly.degree(q) >= 1:
        r = routh_array(q)
        left, imaginary, right, rep = r.left, r.imaginary, r.right, r.repeated_imaginary
    else:
        r = None
        left = imaginary = right = 0
        rep = False
    on = imaginary + drop
    repeated = rep or drop >= 2
    return WPlaneRouth(
        z_polynomial=p,
        w_polynomial=q,
        period_s=t,
        routh=r,
        at_minus_one=drop,
        inside=left,
        on=on,
        outside=right,
        repeated_on_circle=repeated,
        verdict=verdict_from_counts(left, on, right, repeated),
    )
