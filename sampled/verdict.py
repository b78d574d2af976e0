"""One verdict for a characteristic polynomial in s or z, combining every criterion we have.

The exact methods decide (the Routh array in s; the exact unit-circle counts, the Jury table and
the w-plane Routh array in z). Root finding in double precision and in high precision (mpmath)
gives the distance to the boundary, and the double-precision roots show whether a float-only
verdict would have been right: when it would not, or when the distance is within
``NEAR_BOUNDARY`` of zero, the verdict is flagged as near the boundary.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

from sampled import poly
from sampled.criteria.jury import JuryTable, jury_table
from sampled.criteria.roots import Domain, RootEvidence, numeric_roots, precise_roots
from sampled.criteria.routh import RouthArray, routh_array
from sampled.criteria.unit_circle import StabilityWord, circle_counts, verdict_from_counts
from sampled.criteria.wplane import WPlaneRouth, wplane_routh
from sampled.errors import InputError
from sampled.poly import ExactPoly

#: A distance to the boundary (1 - spectral radius in z, minus the largest real part in s
#: [1/s]) below this is reported as near the boundary.
NEAR_BOUNDARY = 1e-6

#: Decimal digits of the high-precision root evidence.
PRECISE_DIGITS = 50

Confirmation = Literal["exact", "not confirmed"]

_COUNT_NAMES: dict[str, tuple[str, str, str]] = {
    "z": ("inside", "on", "outside"),
    "s": ("left", "imaginary", "right"),
}


@dataclass(frozen=True)
class MethodResult:
    """What one method says.

    Attributes
    ----------
    name : str
        ``"circle counts"``, ``"Jury table"``, ``"w-plane Routh"``, ``"Routh array"``,
        ``"roots (numpy)"`` or ``"roots (mpmath)"``.
    verdict : str
        ``"stable" | "marginal" | "unstable"``; the Jury table says only ``"stable"`` or
        ``"not stable"``.
    counts : tuple of int or None
        (stable side, boundary, unstable side) when the method counts roots.
    exact : bool
        Exact rational arithmetic.
    agrees : bool
        Agrees with the exact verdict (for the Jury table: says "stable" exactly when it is).
    """

    name: str
    verdict: str
    counts: tuple[int, int, int] | None
    exact: bool
    agrees: bool

    def to_dict(self, domain: Domain) -> dict[str, object]:
        names = _COUNT_NAMES[domain]
        return {
            "method": self.name,
            "verdict": self.verdict,
            "counts": None if self.counts is None else dict(zip(names, self.counts)),
            "exact": self.exact,
            "agrees": self.agrees,
        }


@dataclass(frozen=True)
class Verdict:
    """Stability of one characteristic polynomial, with the evidence.

    Attributes
    ----------
    domain : {"s", "z"}
    coefficients : tuple of Fraction
        Descending powers, exactly as judged.
    verdict : {"stable", "marginal", "unstable"}
        From the exact counts: all roots strictly on the stable side -> stable; otherwise none on
        the unstable side and the boundary roots simple -> marginal; else unstable.
    stable_side, boundary, unstable_side : int
        Root counts (z: inside / on / outside the unit circle; s: left / imaginary axis / right).
    repeated_on_boundary : bool
    methods : tuple of MethodResult
    worst : float
        Spectral radius (z) or largest real part [1/s] (s), from the high-precision roots.
    distance : float
        ``1 - spectral radius`` (z) or ``-largest real part`` (s); positive on the stable side.
    near_boundary : bool
        ``|distance| < NEAR_BOUNDARY`` or the double-precision roots give another verdict.
    confirmed : {"exact", "not confirmed"}
        ``"exact"`` when every exact method gives the same counts.
    jury : JuryTable or None
        z only.
    routh : RouthArray or WPlaneRouth or None
        The Routh array of P (s) or of its w-plane image (z).
    """

    domain: Domain
    coefficients: ExactPoly
    verdict: StabilityWord
    stable_side: int
    boundary: int
    unstable_side: int
    repeated_on_boundary: bool
    methods: tuple[MethodResult, ...]
    worst: float
    distance: float
    near_boundary: bool
    confirmed: Confirmation
    jury: JuryTable | None = None
    routh: RouthArray | WPlaneRouth | None = None

    @property
    def counts(self) -> dict[str, int]:
        return dict(zip(_COUNT_NAMES[self.domain], (self.stable_side, self.boundary, self.unstable_side)))

    @property
    def agreeing(self) -> tuple[str, ...]:
        return tuple(m.name for m in self.methods if m.agrees)

    @property
    def disagreeing(self) -> tuple[str, ...]:
        return tuple(m.name for m in self.methods if not m.agrees)

    def to_dict(self) -> dict[str, object]:
        out: dict[str, object] = {
            "domain": self.domain,
            "coefficients": [str(c) for c in self.coefficients],
            "polynomial": poly.format_poly(self.coefficients, self.domain),
            "verdict": self.verdict,
            "counts": self.counts,
            "repeated_on_boundary": self.repeated_on_boundary,
            "methods": [m.to_dict(self.domain) for m in self.methods],
            "methods_agreeing": list(self.agreeing),
            "methods_disagreeing": list(self.disagreeing),
            "distance_to_boundary": self.distance,
            "near_boundary": self.near_boundary,
            "confirmed": self.confirmed,
        }
        if self.domain == "z":
            out["spectral_radius"] = self.worst
            if self.jury is not None:
                j = self.jury.to_dict()
                out["jury"] = j["rows"]
                out["jury_conditions"] = j["conditions"]
                out["jury_first_failure"] = j["first_failure"]
                out["jury_verdict"] = j["verdict"]
            if isinstance(self.routh, WPlaneRouth):
                out["wplane"] = self.routh.to_dict()
        else:
            out["largest_real_part"] = self.worst
            if isinstance(self.routh, RouthArray):
                r = self.routh.to_dict()
                out["routh"] = r["routh"]
                out["first_column"] = r["first_column"]
        return out


def _classify(domain: Domain, ev: RootEvidence, tol: float) -> tuple[tuple[int, int, int], bool]:
    """Counts from roots, ``|x| within tol of the boundary`` counted as on it; and repeated-on flag."""
    inside = on = outside = 0
    repeated = False
    for r, m in zip(ev.roots, ev.multiplicities):
        x = abs(r) - 1.0 if domain == "z" else r.real
        if abs(x) <= tol:
            on += 1
            repeated = repeated or m >= 2
        elif x < 0:
            inside += 1
        else:
            outside += 1
    return (inside, on, outside), repeated


def _root_methods(domain: Domain, p: ExactPoly, truth: tuple[int, int, int]) -> tuple[list[MethodResult], RootEvidence, bool]:
    methods: list[MethodResult] = []
    fast = numeric_roots(p, domain)
    fast_counts, _ = _classify(domain, fast, 0.0)
    # double-precision roots cannot be exactly on the boundary in general; count them as they fall
    fast_verdict = verdict_from_counts(*fast_counts, repeated_on_boundary=False)
    methods.append(MethodResult("roots (numpy)", fast_verdict, fast_counts, False, fast_counts == truth))
    precise = precise_roots(p, domain, PRECISE_DIGITS)
    precise_counts, rep = _classify(domain, precise, 10.0 ** (-(PRECISE_DIGITS - 10)))
    precise_verdict = verdict_from_counts(*precise_counts, repeated_on_boundary=rep)
    methods.append(MethodResult("roots (mpmath)", precise_verdict, precise_counts, False, precise_counts == truth))
    return methods, precise, fast_counts != truth


def _exact(coeffs: Sequence[object]) -> ExactPoly:
    p = poly.from_values(list(coeffs), "polynomial")
    if poly.degree(p) < 1:
        raise InputError(f"expected a polynomial of degree 1 or more, got {poly.format_poly(p)}", "polynomial")
    return p


def judge_z(coeffs: Sequence[object]) -> Verdict:
    """Verdict for a characteristic polynomial in z (stable means all roots strictly inside |z| = 1).

    Parameters
    ----------
    coeffs : sequence of numbers
        Descending powers of z, degree at least 1; read exactly (tuples of Fraction from
        :mod:`sampled.poly`, strings as typed, floats as their binary fractions).

    Returns
    -------
    Verdict
    """
    p = _exact(coeffs)
    exact = circle_counts(p)
    truth = (exact.inside, exact.on, exact.outside)
    jury = jury_table(p)
    wr = wplane_routh(p)
    wcounts = (wr.inside, wr.on, wr.outside)
    methods = [
        MethodResult("circle counts", exact.verdict, truth, True, True),
        MethodResult("Jury table", jury.verdict, None, True, (jury.verdict == "stable") == (exact.verdict == "stable")),
        MethodResult("w-plane Routh", wr.verdict, wcounts, True, wcounts == truth and wr.verdict == exact.verdict),
    ]
    root_methods, precise, float_wrong = _root_methods("z", p, truth)
    methods.extend(root_methods)
    confirmed: Confirmation = "exact" if all(m.agrees for m in methods if m.exact) else "not confirmed"
    return Verdict(
        domain="z",
        coefficients=p,
        verdict=exact.verdict,
        stable_side=exact.inside,
        boundary=exact.on,
        unstable_side=exact.outside,
        repeated_on_boundary=exact.repeated_on_circle,
        methods=tuple(methods),
        worst=precise.worst,
        distance=precise.distance,
        near_boundary=abs(precise.distance) < NEAR_BOUNDARY or float_wrong,
        confirmed=confirmed,
        jury=jury,
        routh=wr,
    )


def judge_s(coeffs: Sequence[object]) -> Verdict:
    """Verdict for a characteristic polynomial in s (stable means all roots in the open left half-plane).

    Parameters
    ----------
    coeffs : sequence of numbers
        Descending powers of s, degree at least 1; read exactly.

    Returns
    -------
    Verdict
    """
    p = _exact(coeffs)
    r = routh_array(p)
    truth = (r.left, r.imaginary, r.right)
    methods = [MethodResult("Routh array", r.verdict, truth, True, True)]
    root_methods, precise, float_wrong = _root_methods("s", p, truth)
    methods.extend(root_methods)
    return Verdict(
        domain="s",
        coefficients=p,
        verdict=r.verdict,
        stable_side=r.left,
        boundary=r.imaginary,
        unstable_side=r.right,
        repeated_on_boundary=r.repeated_imaginary,
        methods=tuple(methods),
        worst=precise.worst,
        distance=precise.distance,
        near_boundary=abs(precise.distance) < NEAR_BOUNDARY or float_wrong,
        confirmed="exact",
        routh=r,
    )


def judge(coeffs: Sequence[object], domain: Domain) -> Verdict:
    """:func:`judge_s` or :func:`judge_z` by ``domain``."""
    if domain == "z":
        return judge_z(coeffs)
    if domain == "s":
        return judge_s(coeffs)
    raise InputError(f"domain must be 's' or 'z', got {domain!r}", "domain")


__all__ = ["Verdict", "MethodResult", "judge", "judge_s", "judge_z", "NEAR_BOUNDARY"]
