"""Root evidence: polynomial roots in double and in high precision, and the distance to the boundary.

In the z-plane the boundary is the unit circle and the distance is ``1 - spectral radius``; in the
s-plane it is the imaginary axis and the distance is ``-(largest real part)``. Positive distance
means every root is on the stable side.

High-precision roots are found on the square-free factors of the polynomial (Yun's decomposition in
exact arithmetic), so repeated roots are found as simple roots of a factor and carry their exact
multiplicity; mpmath's Durand-Kerner iteration then converges fast.

References
----------
Johansson, F. et al., "mpmath: a Python library for arbitrary-precision floating-point arithmetic",
version 1.3, 2023, ``polyroots``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal

import mpmath
import numpy as np

from sampled import poly
from sampled.criteria.unit_circle import square_free_parts
from sampled.errors import InputError, NumericalError

Domain = Literal["s", "z"]


@dataclass(frozen=True)
class RootEvidence:
    """Roots of a polynomial and how far the worst one is from the stability boundary.

    Attributes
    ----------
    domain : {"s", "z"}
    roots : tuple of complex
        All roots with multiplicity (rounded to double precision for storage).
    multiplicities : tuple of int
        Multiplicity of each entry of ``roots`` (1 for the double-precision method, which cannot
        tell).
    worst : float
        Spectral radius (z) or largest real part (s); ``-inf`` / ``0`` with no roots.
    distance : float
        ``1 - spectral radius`` (z) or ``-largest real part`` (s); ``inf`` with no roots.
    digits : int
        Working precision in decimal digits (15 for numpy).
    method : str
        ``"numpy"`` or ``"mpmath"``.
    """

    domain: Domain
    roots: tuple[complex, ...]
    multiplicities: tuple[int, ...]
    worst: float
    distance: float
    digits: int
    method: str

    def to_dict(self) -> dict[str, object]:
        key = "spectral_radius" if self.domain == "z" else "largest_real_part"
        return {
            "domain": self.domain,
            "method": self.method,
            "digits": self.digits,
            "roots": [[r.real, r.imag] for r in self.roots],
            "multiplicities": list(self.multiplicities),
            key: self.worst,
            "distance_to_boundary": self.distance,
        }


def _check(domain: str) -> None:
    if domain not in ("s", "z"):
        raise InputError(f"domain must be 's' or 'z', got {domain!r}", "domain")


def _summary(domain: Domain, values: Sequence[complex]) -> tuple[float, float]:
    if not values:
        return (0.0, math.inf) if domain == "z" else (-math.inf, math.inf)
    if domain == "z":
        worst = max(abs(v) for v in values)
        return worst, 1.0 - worst
    worst = max(v.real for v in values)
    return worst, -worst


def numeric_roots(coeffs: Sequence[object], domain: Domain = "z") -> RootEvidence:
    """Roots in double precision (numpy companion-matrix eigenvalues).

    Parameters
    ----------
    coeffs : sequence of numbers
        Descending powers; each coefficient rounded once to the nearest double.
    domain : {"s", "z"}
    """
    _check(domain)
    p = poly.from_values(list(coeffs), "polynomial")
    if poly.is_zero(p):
        raise InputError("the zero polynomial has no defined roots", "polynomial")
    values = [complex(v) for v in np.roots(poly.to_float(p))] if poly.degree(p) >= 1 else []
    worst, distance = _summary(domain, values)
    return RootEvidence(domain, tuple(values), (1,) * len(values), worst, distance, 15, "numpy")


def precise_roots(coeffs: Sequence[object], domain: Domain = "z", digits: int = 50) -> RootEvidence:
    """Roots to ``digits`` significant digits with mpmath, on exact square-free factors.

    Parameters
    ----------
    coeffs : sequence of numbers
        Descending powers, read exactly.
    domain : {"s", "z"}
    digits : int
        Working precision [decimal digits]; mpmath is asked for an error estimate below
        ``10^-(digits/2)`` and given extra precision until it converges.

    Returns
    -------
    RootEvidence
        ``worst`` and ``distance`` are computed at full precision before rounding to float, so a
        distance of 1e-40 is reported as such, not as 0.

    Raises
    ------
    NumericalError
        When mpmath does not converge even with extra precision.
    """
    _check(domain)
    p = poly.from_values(list(coeffs), "polynomial")
    if poly.is_zero(p):
        raise InputError("the zero polynomial has no defined roots", "polynomial")
    roots: list[complex] = []
    mults: list[int] = []
    worst_mp = None
    with mpmath.workdps(digits):
        for factor, mult in square_free_parts(p):
            found = _mp_factor_roots(factor, digits)
            for r in found:
                key = abs(r) if domain == "z" else r.real if isinstance(r, mpmath.mpc) else mpmath.mpf(r)
                worst_mp = key if worst_mp is None or key > worst_mp else worst_mp
                roots.append(complex(r))
                mults.append(mult)
        if worst_mp is None:
            worst, distance = _summary(domain, [])
        elif domain == "z":
            worst, distance = float(worst_mp), float(1 - worst_mp)
        else:
            worst, distance = float(worst_mp), float(-worst_mp)
    expanded = tuple(r for r, m in zip(roots, mults) for _ in range(m))
    expanded_m = tuple(m for m in mults for _ in range(m))
    return RootEvidence(domain, expanded, expanded_m, worst, distance, digits, "mpmath")


def _mp_factor_roots(factor: Sequence[Fraction], digits: int) -> list[object]:
    """Roots of one square-free exact factor at ``digits`` digits."""
    coeffs = [_mp(c) for c in factor]
    if len(coeffs) == 2:
        return [-coeffs[1] / coeffs[0]]
    extra = 2 * digits
    for _ in range(4):
        try:
            found = mpmath.polyroots(coeffs, maxsteps=200 + 20 * len(coeffs), extraprec=extra)
        except mpmath.libmp.NoConvergence:
            extra *= 2
            continue
        return list(found)
    raise NumericalError(f"mpmath did not converge on a degree-{len(factor) - 1} factor at {digits} digits")


def _mp(x: Fraction) -> object:
    """Fraction to mpf at the working precision (one rounding)."""
    return mpmath.mpf(x.numerator) / x.denominator


def spectral_radius(coeffs: Sequence[object], digits: int = 50) -> float:
    """Largest root magnitude, computed at ``digits`` digits (see :func:`precise_roots`)."""
    return precise_roots(coeffs, "z", digits).worst
