"""Continuous-time single-input single-output systems and their composition.

A :class:`ContinuousSystem` holds an exact transfer function (numerator and denominator as tuples
of Fraction, descending powers of s), an optional transport delay, and optionally the state-space
matrices it was given as. Constructors read coefficient lists, zeros/poles/gain, state-space
matrices and rational expressions. Composition (cascade, parallel, closed loop) keeps every mode:
when a pole-zero cancellation removes a mode from the reduced transfer, the mode is recorded in
``hidden_modes`` and ``notes`` says so, loudly if the mode is unstable.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from fractions import Fraction

import mpmath
import numpy as np
import scipy.linalg
import scipy.signal

from sampled import expr
from sampled import poly as P
from sampled.errors import ImproperError, InputError


def accurate_roots(p: Sequence[Fraction]) -> np.ndarray:
    """Roots of an exact polynomial, computed in extended precision and rounded to complex128.

    numpy's companion-matrix roots lose relative accuracy for clustered or widely spread roots;
    mpmath's polyroots on the exact coefficients at 40+ digits does not (for the degrees met here).
    """
    q = P.trim(p)
    while len(q) > 1 and q[-1] == 0:  # roots at the origin
        q = q[:-1]
    zeros_at_origin = len(P.trim(p)) - len(q)
    n = len(q) - 1
    if n <= 0:
        return np.zeros(zeros_at_origin, dtype=complex)
    if n == 1:
        r = [complex(-q[1] / q[0])]
    else:
        with mpmath.workdps(max(40, 4 * n)):
            coeffs = [mpmath.mpf(c.numerator) / c.denominator for c in q]
            try:
                found = mpmath.polyroots(coeffs, maxsteps=400, extraprec=200 + 20 * n)
            except mpmath.libmp.NoConvergence:
                found = list(np.roots([float(c) for c in q]))
            r = [complex(x) for x in found]
    out = np.array(r + [0j] * zeros_at_origin, dtype=complex)
    # Clean numerically real roots of a real polynomial.
    out = np.where(np.abs(out.imag) <= 1e-14 * np.maximum(np.abs(out), 1e-300), out.real + 0j, out)
    return out[np.lexsort((out.imag, out.real))]


def _poly_from_roots(roots: Sequence[complex], where: str | None) -> P.ExactPoly:
    """Exact real polynomial with the given roots; complex roots must come in conjugate pairs."""
    real = [r for r in roots if r.imag == 0]
    upper = sorted((r for r in roots if r.imag > 0), key=lambda r: (r.real, r.imag))
    lower = sorted((r.conjugate() for r in roots if r.imag < 0), key=lambda r: (r.real, r.imag))
    if upper != lower:
        raise InputError("complex values must come in conjugate pairs (a+bj with a-bj)", where)
    out: P.ExactPoly = P.ONE
    for r in real:
        out = P.mul(out, (Fraction(1), -P.exact(r.real)))
    for r in upper:
        a, b = P.exact(r.real), P.exact(r.imag)
        out = P.mul(out, (Fraction(1), -2 * a, a * a + b * b))
    return out


def parse_complex(value: object, where: str | None = None) -> complex:
    """A root given as a number, as ``[re, im]`` or as text ``"-1+2j"``."""
    if isinstance(value, bool):
        raise InputError(f"expected a number, got {value!r}", where)
    if isinstance(value, (int, float, complex, np.integer, np.floating, np.complexfloating)):
        x = complex(value)
    elif isinstance(value, (list, tuple)) and len(value) == 2 and all(
        isinstance(v, (int, float)) and not isinstance(v, bool) for v in value
    ):
        x = complex(float(value[0]), float(value[1]))
    elif isinstance(value, str):
        try:
            x = complex(value.replace(" ", "").replace("i", "j"))
        except ValueError:
            raise InputError(f"cannot read {value!r} as a complex number such as '-1+2j'", where) from None
    else:
        raise InputError(f"expected a number, [re, im] or text such as '-1+2j', got {value!r}", where)
    if not (math.isfinite(x.real) and math.isfinite(x.imag)):
        raise InputError(f"expected finite values, got {value!r}", where)
    return x


@dataclass(frozen=True, eq=False)
class ContinuousSystem:
    """A proper SISO transfer ``num(s)/den(s) * exp(-s*delay_s)``.

    Attributes
    ----------
    num_exact, den_exact : tuple of Fraction
        Exact coefficients, descending powers of s; ``den_exact[0] > 0``.
    delay_s : float [s]
        Transport delay.
    given_state_space : tuple of arrays or None
        (A, B, C, D) when the system was given in state space; used as the realisation.
    hidden_modes : tuple of complex
        Modes removed from the transfer by pole-zero cancellation during composition.
    notes : tuple of str
        Messages about the construction (cancellations, especially of unstable modes).
    """

    num_exact: P.ExactPoly
    den_exact: P.ExactPoly
    delay_s: float = 0.0
    given_state_space: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None = None
    hidden_modes: tuple[complex, ...] = ()
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        num, den = P.trim(self.num_exact), P.trim(self.den_exact)
        if P.is_zero(den):
            raise InputError("the denominator is zero")
        if len(num) > len(den):
            raise ImproperError(
                f"improper transfer: numerator degree {len(num) - 1} exceeds denominator degree "
                f"{len(den) - 1} (more zeros than poles cannot be realised)"
            )
        if den[0] < 0:
            num, den = P.scale(num, Fraction(-1)), P.scale(den, Fraction(-1))
        object.__setattr__(self, "num_exact", num)
        object.__setattr__(self, "den_exact", den)
        if not (math.isfinite(self.delay_s) and self.delay_s >= 0):
            raise InputError(f"the transport delay must be finite and non-negative, got {self.delay_s!r}")

    # ---- constructors -------------------------------------------------------------------
    @classmethod
    def from_expression(cls, text: str, delay_s: float = 0.0, where: str | None = None) -> "ContinuousSystem":
        """From a rational expression in s, e.g. ``"10*(s+2)/(s*(0.5*s+1)^2)"``."""
        num, den = expr.parse_rational(text, "s", where)
        return cls._checked(num, den, delay_s, where)

    @classmethod
    def from_coefficients(
        cls, num: Sequence[object], den: Sequence[object], delay_s: float = 0.0, where: str | None = None
    ) -> "ContinuousSystem":
        """From coefficient lists in descending powers of s (numbers or exact decimal text)."""
        n = P.from_values(num, f"{where}.num" if where else "num")
        d = P.from_values(den, f"{where}.den" if where else "den")
        if P.is_zero(d):
            raise InputError("the denominator is zero", f"{where}.den" if where else "den")
        raw = [P.exact(v) for v in den]
        if raw[0] == 0:
            raise InputError(
                "the leading coefficient is zero (drop it or give the intended degree)",
                f"{where}.den" if where else "den",
            )
        return cls._checked(n, d, delay_s, where)

    @classmethod
    def from_zeros_poles_gain(
        cls,
        zeros: Sequence[object],
        poles: Sequence[object],
        gain: object,
        delay_s: float = 0.0,
        where: str | None = None,
    ) -> "ContinuousSystem":
        """From zeros, poles (numbers, ``[re, im]`` or ``"a+bj"``) and the gain ``k`` in
        ``k * prod(s - z_i) / prod(s - p_i)``."""
        w = (lambda k: f"{where}.{k}" if where else k)
        zs = [parse_complex(v, f"{w('zeros')}[{i}]") for i, v in enumerate(zeros)]
        ps = [parse_complex(v, f"{w('poles')}[{i}]") for i, v in enumerate(poles)]
        k = P.exact(gain, w("gain"))
        num = P.scale(_poly_from_roots(zs, w("zeros")), k)
        den = _poly_from_roots(ps, w("poles"))
        return cls._checked(num, den, delay_s, where)

    @classmethod
    def from_state_space(
        cls, a: object, b: object, c: object, d: object = 0.0, delay_s: float = 0.0, where: str | None = None
    ) -> "ContinuousSystem":
        """From matrices of dx/dt = A x + B u, y = C x + D u (single input, single output)."""
        w = (lambda k: f"{where}.{k}" if where else k)
        mats = []
        for name, value in (("a", a), ("b", b), ("c", c), ("d", d)):
            try:
                arr = np.array(value, dtype=float)
            except (TypeError, ValueError):
                raise InputError(f"expected a matrix of numbers, got {value!r}", w(name)) from None
            if not np.all(np.isfinite(arr)):
                raise InputError("expected finite numbers (no NaN or inf)", w(name))
            mats.append(arr)
        A, B, C, D = mats
        A = np.atleast_2d(A)
        n = A.shape[0]
        if A.shape != (n, n) or n == 0:
            raise InputError(f"A must be square and non-empty, got shape {A.shape}", w("a"))
        B = B.reshape(-1, 1) if B.ndim <= 1 else B
        C = C.reshape(1, -1) if C.ndim <= 1 else C
        D = np.atleast_2d(D)
        if B.shape != (n, 1):
            raise InputError(f"B must be {n}x1 (one input), got shape {B.shape}", w("b"))
        if C.shape != (1, n):
            raise InputError(f"C must be 1x{n} (one output), got shape {C.shape}", w("c"))
        if D.shape != (1, 1):
            raise InputError(f"D must be a single number, got shape {D.shape}", w("d"))
        # Exact characteristic polynomial would need exact arithmetic on A; the transfer is computed
        # in floating point (scipy) and then held exactly as the binary fractions it produced.
        num_f, den_f = scipy.signal.ss2tf(A, B, C, D)
        num_arr = np.atleast_1d(np.asarray(num_f[0], dtype=float))
        # ss2tf leaves rounding residue (1e-16 relative) where a coefficient is structurally zero.
        tiny = 64 * np.finfo(float).eps * max(float(np.max(np.abs(num_arr))), 1e-300)
        num_arr = np.where(np.abs(num_arr) <= tiny, 0.0, num_arr)
        num = P.from_float(num_arr)
        den = P.from_float(den_f)
        sys = cls(num, den, delay_s, (A, B, C, D))
        return sys

    @classmethod
    def _checked(cls, num: P.ExactPoly, den: P.ExactPoly, delay_s: float, where: str | None) -> "ContinuousSystem":
        if P.is_zero(den):
            raise InputError("the denominator is zero", where)
        if P.degree(num) > P.degree(den):
            raise ImproperError(
                f"improper transfer: numerator degree {P.degree(num)} exceeds denominator degree "
                f"{P.degree(den)} (more zeros than poles cannot be realised)",
                where,
            )
        return cls(num, den, delay_s)

    # ---- views --------------------------------------------------------------------------
    @property
    def num(self) -> np.ndarray:
        """Numerator coefficients (floats, descending powers of s)."""
        return P.to_float(self.num_exact)

    @property
    def den(self) -> np.ndarray:
        """Denominator coefficients (floats, descending powers of s)."""
        return P.to_float(self.den_exact)

    @property
    def order(self) -> int:
        return P.degree(self.den_exact)

    @property
    def is_strictly_proper(self) -> bool:
        return P.degree(self.num_exact) < P.degree(self.den_exact)

    def poles(self) -> np.ndarray:
        """Poles (roots of the denominator), accurately."""
        if self.given_state_space is not None:
            return np.sort_complex(np.linalg.eigvals(self.given_state_space[0]))
        return accurate_roots(self.den_exact)

    def zeros(self) -> np.ndarray:
        """Finite zeros (roots of the numerator)."""
        if P.is_zero(self.num_exact):
            return np.zeros(0, dtype=complex)
        return accurate_roots(self.num_exact)

    def dc_gain(self) -> float:
        """Value at s = 0 (inf for a pole at the origin)."""
        d0 = self.den_exact[-1]
        n0 = self.num_exact[-1]
        if d0 == 0:
            return math.inf if n0 != 0 else math.nan
        return float(n0 / d0)

    def evaluate(self, s: np.ndarray | complex) -> np.ndarray:
        """Frequency response ``G(s)`` including the transport delay."""
        s = np.asarray(s, dtype=complex)
        return np.polyval(self.num, s) / np.polyval(self.den, s) * np.exp(-s * self.delay_s)

    def with_delay(self, delay_s: float) -> "ContinuousSystem":
        return ContinuousSystem(
            self.num_exact, self.den_exact, delay_s, self.given_state_space, self.hidden_modes, self.notes
        )

    def state_space(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """A well-scaled real realisation (A, B, C, D) of the rational part (delay excluded).

        When the system was given in state space those matrices are returned. Otherwise the transfer
        is realised as a cascade of first- and second-order sections built from accurately computed
        poles and zeros, then balanced by a diagonal similarity (scipy.linalg.matrix_balance). The
        cascade keeps each pole a short-hand function of few coefficients, which matters when the
        time constants span many decades (companion forms do not).
        """
        if self.given_state_space is not None:
            return tuple(np.array(m, dtype=float) for m in self.given_state_space)  # type: ignore[return-value]
        return _cascade_realisation(self.num_exact, self.den_exact)

    def __repr__(self) -> str:
        text = f"({P.format_poly(self.num_exact)})/({P.format_poly(self.den_exact)})"
        if self.delay_s:
            text += f" * exp(-{self.delay_s:g}*s)"
        return f"ContinuousSystem({text})"

    def describe(self) -> str:
        """Transfer as readable text."""
        num = P.format_poly(self.num_exact, "s")
        den = P.format_poly(self.den_exact, "s")
        text = f"({num}) / ({den})"
        if self.delay_s:
            text += f" * exp(-{self.delay_s:g} s)"
        return text


# ---- realisation ------------------------------------------------------------------------------

def _real_factors(roots: np.ndarray) -> list[np.ndarray]:
    """Group roots into real monic factors: [1, -r] or [1, -2 Re p, |p|^2]."""
    out: list[np.ndarray] = []
    for r in roots:
        if abs(r.imag) == 0:
            out.append(np.array([1.0, -r.real]))
        elif r.imag > 0:
            out.append(np.array([1.0, -2.0 * r.real, abs(r) ** 2]))
    return out


def _section_ss(num: np.ndarray, den: np.ndarray) -> tuple[np.ndarray, ...]:
    """Controllable-canonical realisation of one low-order proper section."""
    A, B, C, D = scipy.signal.tf2ss(num, den)
    return A, B, C, D


def _series(s1: tuple[np.ndarray, ...], s2: tuple[np.ndarray, ...]) -> tuple[np.ndarray, ...]:
    """u -> s1 -> s2 -> y."""
    A1, B1, C1, D1 = s1
    A2, B2, C2, D2 = s2
    n1, n2 = A1.shape[0], A2.shape[0]
    A = np.block([[A1, np.zeros((n1, n2))], [B2 @ C1, A2]])
    B = np.vstack([B1, B2 @ D1])
    C = np.hstack([D2 @ C1, C2])
    D = D2 @ D1
    return A, B, C, D


def _cascade_realisation(num: P.ExactPoly, den: P.ExactPoly) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    n = P.degree(den)
    gain = float(num[0] / den[0]) if P.degree(num) == n else 0.0
    if n == 0:
        return (np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), np.array([[float(num[-1] / den[0])]]))
    if P.is_zero(num):
        A, B, C, D = _section_ss(np.array([0.0]), P.to_float(den))
        return A, B, C * 0.0, D * 0.0
    p_factors = _real_factors(accurate_roots(den))
    z_factors = _real_factors(accurate_roots(num)) if P.degree(num) > 0 else []
    # Pair second-order zero factors with second-order pole factors first, then the rest.
    p_factors.sort(key=len, reverse=True)
    z_factors.sort(key=len, reverse=True)
    k = float(num[0] / den[0])
    sections = []
    zi = 0
    for pf in p_factors:
        order = len(pf) - 1
        numerator = np.array([1.0])
        room = order
        taken = []
        while zi < len(z_factors) and len(z_factors[zi]) - 1 <= room:
            taken.append(z_factors[zi])
            room -= len(z_factors[zi]) - 1
            zi += 1
        for zf in taken:
            numerator = np.polymul(numerator, zf)
        sections.append(_section_ss(numerator, pf))
    # Leftover zero factors (only possible when first-order zeros sat behind second-order ones).
    leftovers = z_factors[zi:]
    if leftovers:
        # Fall back to one balanced canonical realisation of the whole transfer.
        A, B, C, D = scipy.signal.tf2ss(P.to_float(num), P.to_float(den))
        return _balanced((A, B, C, D))
    total = sections[0]
    for s in sections[1:]:
        total = _series(total, s)
    A, B, C, D = total
    C = C * k
    D = D * k
    del gain
    return _balanced((A, B, C, D))


def _balanced(ss: tuple[np.ndarray, ...]) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    A, B, C, D = (np.array(m, dtype=float) for m in ss)
    if A.size == 0:
        return A, B, C, D
    _, (scale, perm) = scipy.linalg.matrix_balance(A, permute=False, separate=True)
    A = A * scale[np.newaxis, :] / scale[:, np.newaxis]
    B = B / scale[:, np.newaxis]
    C = C * scale[np.newaxis, :]
    return A, B, C, D


# ---- composition --------------------------------------------------------------------------------

def _reduce(num: P.ExactPoly, den: P.ExactPoly, notes: list[str], hidden: list[complex]) -> tuple[P.ExactPoly, P.ExactPoly]:
    g = P.gcd(num, den)
    if P.degree(g) <= 0:
        return num, den
    modes = accurate_roots(g)
    hidden.extend(complex(m) for m in modes)
    unstable = [m for m in modes if m.real >= 0]
    listed = ", ".join(_fmt_complex(m) for m in modes)
    if unstable:
        notes.append(
            "pole-zero cancellation hides an UNSTABLE mode at s = "
            + ", ".join(_fmt_complex(m) for m in unstable)
            + ": the reduced transfer looks fine but the internal signal grows; do not cancel it"
        )
    else:
        notes.append(f"pole-zero cancellation removed the stable mode(s) s = {listed} from the transfer")
    q_num, _ = P.divmod_(num, g)
    q_den, _ = P.divmod_(den, g)
    return q_num, q_den


def _fmt_complex(z: complex) -> str:
    if abs(z.imag) < 1e-12 * max(1.0, abs(z)):
        return f"{z.real:.6g}"
    return f"{z.real:.6g}{'+' if z.imag >= 0 else '-'}{abs(z.imag):.6g}j"


def cascade(*systems: ContinuousSystem) -> ContinuousSystem:
    """Series connection ``G_n ... G_2 G_1``; delays add; cancellations are recorded."""
    if not systems:
        raise InputError("cascade needs at least one system")
    num, den = P.ONE, P.ONE
    delay = 0.0
    notes: list[str] = []
    hidden: list[complex] = []
    for s in systems:
        num, den = P.mul(num, s.num_exact), P.mul(den, s.den_exact)
        delay += s.delay_s
        notes.extend(s.notes)
        hidden.extend(s.hidden_modes)
    num, den = _reduce(num, den, notes, hidden)
    return ContinuousSystem(num, den, delay, None, tuple(hidden), tuple(notes))


def parallel(*systems: ContinuousSystem) -> ContinuousSystem:
    """Sum ``G_1 + G_2 + ...`` (the systems must have equal transport delays)."""
    if not systems:
        raise InputError("parallel needs at least one system")
    delays = {s.delay_s for s in systems}
    if len(delays) > 1:
        raise InputError("parallel branches with different transport delays have no rational transfer")
    num, den = P.ZERO, P.ONE
    notes: list[str] = []
    hidden: list[complex] = []
    for s in systems:
        num = P.add(P.mul(num, s.den_exact), P.mul(s.num_exact, den))
        den = P.mul(den, s.den_exact)
        notes.extend(s.notes)
        hidden.extend(s.hidden_modes)
    num, den = _reduce(num, den, notes, hidden)
    return ContinuousSystem(num, den, delays.pop(), None, tuple(hidden), tuple(notes))


def closed_loop(
    forward: ContinuousSystem, feedback: ContinuousSystem | None = None, sign: int = -1
) -> ContinuousSystem:
    """``G / (1 - sign * G H)``: negative feedback for ``sign = -1`` (default), positive for ``+1``.

    The characteristic polynomial is formed before any cancellation, ``dG dH - sign nG nH``, so a
    mode shared by a numerator and a denominator stays visible in ``hidden_modes`` and ``notes``.
    Loops with a transport delay have no rational closed-loop transfer and are refused here; the
    loop assessment handles them.
    """
    if sign not in (-1, 1):
        raise InputError(f"feedback sign must be -1 or +1, got {sign!r}")
    h = feedback if feedback is not None else ContinuousSystem(P.ONE, P.ONE)
    if forward.delay_s or h.delay_s:
        raise InputError("a closed loop with a transport delay has no rational transfer")
    notes = list(forward.notes) + list(h.notes)
    hidden = list(forward.hidden_modes) + list(h.hidden_modes)
    num = P.mul(forward.num_exact, h.den_exact)
    den = P.sub(P.mul(forward.den_exact, h.den_exact), P.scale(P.mul(forward.num_exact, h.num_exact), Fraction(sign)))
    if P.is_zero(den):
        raise InputError("the closed loop is degenerate (1 - sign*G*H is identically zero)")
    # A loop whose characteristic polynomial drops degree (biproper G*H = -sign) is not proper.
    num, den = _reduce(num, den, notes, hidden)
    return ContinuousSystem(num, den, 0.0, None, tuple(hidden), tuple(notes))


def characteristic_polynomial(
    forward: ContinuousSystem, feedback: ContinuousSystem | None = None, sign: int = -1
) -> P.ExactPoly:
    """Exact closed-loop characteristic polynomial ``dG dH - sign nG nH`` with every mode kept."""
    h = feedback if feedback is not None else ContinuousSystem(P.ONE, P.ONE)
    return P.sub(
        P.mul(forward.den_exact, h.den_exact), P.scale(P.mul(forward.num_exact, h.num_exact), Fraction(sign))
    )
