"""Realisations of a digital controller and the exact transfer each one implements.

A controller ``C(z) = b(z^-1) / a(z^-1)`` (coefficients in ascending powers of ``z^-1``, the
convention of difference equations and of :func:`scipy.signal.lfilter`) can be computed in
firmware by several structures. With exact coefficients they agree; with coefficients rounded to a
word they do not, and the loop check must judge the transfer that actually runs. For every
structure this module

1. computes the ideal coefficients of the structure,
2. rounds them to a fixed-point word (or to IEEE double),
3. returns the EXACT rational transfer ``(b_q, a_q)`` built from the rounded coefficients, with
   the poles and zeros computed the way the structure holds them (per section, or in the delta
   variable), and
4. describes the arithmetic as a small straight-line :class:`Program`, which the bit-exact
   simulation :func:`simulate_fixed` and the C export (:mod:`sampled.export.c`) both follow
   term by term, so the code and the check cannot drift apart.

Structures (``Realisation``)
----------------------------
``"direct1"``
    direct form I: ``y = sum b_i x[k-i] - sum a_i y[k-i]`` in one double-width accumulator,
    one shift for all coefficients; states are past inputs and outputs (signal words).
``"direct2t"``
    direct form II transposed: ``y = b0 x + s1``, ``s_i = b_i x - a_i y + s_(i+1)``; states held
    in the double-width accumulator register at product scale.
``"sections"``
    cascade of second-order sections, each a direct form I with its own shift. Pairing: the pole
    (or conjugate pair) closest to the unit circle starts a section; a real pole is paired with
    the remaining real pole closest to the unit circle; the section takes the remaining zero
    closest to its first pole (with its conjugate when complex; a real zero is completed by the
    next closest real zero). Ordering: sections with poles closest to the unit circle come LAST
    (small gain first, the high-Q sections at the end, so their peaks are not amplified by later
    sections); pure delays fill free numerator slots from the first section on. Scaling: each
    section's numerator is scaled so the response from the input to its output peaks at 1 over
    frequency, the last section taking the remaining gain (so a tiny overall gain does not
    round the intermediate signals to zero). Jackson (1970) gives the peak-gain argument for
    this order and scaling.
``"delta"``
    delta-operator form with ``delta = (q - 1) / Delta``, ``Delta = 2**-m`` the power of two
    closest to the mean distance of the poles from ``z = 1``, so the stored coefficients are
    O(1) and multiplying by ``Delta`` is a shift: ``y = d0 x + v1``,
    ``v_i <- v_i + Delta (e_i x - g_i y + v_(i+1))``. The states sit in the double-width
    register with ``m + 2`` guard bits beyond the signal's fraction (fewer if that would leave
    the register under three integer bits), so the small increments are not rounded away.
    The coefficients with respect to ``delta = (q - 1) / T`` (the period) are reported by
    :func:`delta_coefficients`.

Arithmetic (fixed point)
------------------------
Products of a coefficient word and a signal word go into a signed accumulator of twice the word
length; every addition saturates at the accumulator range; each term is first aligned to the
accumulator's scale (right shifts round by the chosen rule, left shifts saturate); the result is
rounded to the target scale and saturated to the target register (a signal word, or the
double-width register for wide states). Signals (input, output, word states) use the signal
format, by default ``Q(w-1)`` of the same word length.

References
----------
Oppenheim, A. V., Schafer, R. W., "Discrete-Time Signal Processing", 3rd ed., 2010, sections 6.3
to 6.9 (basic structures, cascade form, coefficient quantisation), from memory.
Jackson, L. B., "Roundoff-noise analysis for fixed-point digital filters realized in cascade or
parallel form", IEEE Trans. Audio Electroacoustics 18(2), 1970, from memory.
Middleton, R. H., Goodwin, G. C., "Digital Control and Estimation: A Unified Approach", 1990,
chapter 2 (the delta operator), from memory.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from typing import Literal, get_args

import mpmath
import numpy as np

from sampled import poly
from sampled.errors import InputError
from sampled.fixedpoint import FixedFormat, Rounding, round_shift, saturate, scale_bank

Realisation = Literal["direct1", "direct2t", "sections", "delta"]
REALISATIONS: tuple[str, ...] = get_args(Realisation)

#: Human names of the structures, for reports and generated code comments.
REALISATION_TITLES: dict[str, str] = {
    "direct1": "direct form I",
    "direct2t": "direct form II transposed",
    "sections": "cascade of second-order sections (direct form I each)",
    "delta": "delta-operator form (transposed, delta integrators)",
}

Kind = Literal["word", "wide"]


# ---------------------------------------------------------------------------------------------
# The straight-line program shared by the simulations and the code generator
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Variable:
    """A signal register.

    Attributes
    ----------
    name : str
        C identifier (``x`` is the input, ``y`` the output).
    kind : {"word", "wide"}
        A signal word of the word length, or the double-width accumulator register.
    fraction_bits : int
        Scale of the stored integer (value = integer * 2**-fraction_bits). 0 in floating point.
    state : bool
        Kept from one sample to the next.
    label : str
        What the register holds, in words.
    """

    name: str
    kind: Kind
    fraction_bits: int
    state: bool
    label: str


@dataclass(frozen=True)
class Term:
    """``sign * coefficient * variable * 2**-extra_bits`` (coefficient ``None`` means 1)."""

    sign: int
    coefficient: int | None
    variable: str
    extra_bits: int = 0


@dataclass(frozen=True)
class Assignment:
    """``target = sum(terms)``, accumulated at ``acc_fraction_bits`` then stored."""

    target: str
    terms: tuple[Term, ...]
    acc_fraction_bits: int


@dataclass(frozen=True)
class Coefficient:
    """A stored coefficient.

    Attributes
    ----------
    name : str
        Role in the structure (``b1``, ``s2.a1``, ``g3``).
    ideal : Fraction
        Value before rounding.
    value : Fraction
        Exact value implemented (``integer * 2**-fraction_bits`` in fixed point, the double in
        floating point).
    integer : int or None
        Stored word (None in floating point).
    fraction_bits : int or None
        Scale of the stored word (None in floating point).
    """

    name: str
    ideal: Fraction
    value: Fraction
    integer: int | None
    fraction_bits: int | None


@dataclass(frozen=True)
class Program:
    """Straight-line arithmetic of one sample of a realisation, executed in order."""

    variables: tuple[Variable, ...]
    coefficients: tuple[Coefficient, ...]
    steps: tuple[Assignment, ...]

    def variable(self, name: str) -> Variable:
        for v in self.variables:
            if v.name == name:
                return v
        raise KeyError(name)

    @property
    def states(self) -> tuple[Variable, ...]:
        return tuple(v for v in self.variables if v.state)


# ---------------------------------------------------------------------------------------------
# Result
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ImplementedController:
    """A controller as one realisation computes it with rounded coefficients.

    Attributes
    ----------
    realisation : Realisation
    number_format : FixedFormat or None
        Coefficient word (None: IEEE double throughout).
    signal_format : FixedFormat or None
        Input, output and word-state format (None in floating point).
    rounding : {"nearest", "floor"}
        Rounding of coefficients and of the data path.
    period_s : float [s]
        Sample period.
    ideal_b, ideal_a : tuple of Fraction
        Controller as given, ascending powers of z^-1, ``ideal_a[0] == 1``, equal lengths.
    b, a : tuple of Fraction
        EXACT transfer implemented by the rounded coefficients, same convention; this is what
        the loop check must judge.
    poles, zeros : tuple of complex
        Of the implemented transfer, computed structure-wise (per section; in the delta
        variable) and in high precision.
    spectral_radius : float
        Largest pole modulus (0 with no poles).
    program : Program
        The arithmetic, for simulation and code generation.
    delta_step : Fraction or None
        ``Delta`` of the delta form (a power of two), None for other structures.
    sections : tuple of (tuple of Fraction, tuple of Fraction) or None
        Implemented sections ``(b0, b1, b2), (1, a1, a2)`` for the cascade.
    """

    realisation: Realisation
    number_format: FixedFormat | None
    signal_format: FixedFormat | None
    rounding: Rounding
    period_s: float
    ideal_b: tuple[Fraction, ...]
    ideal_a: tuple[Fraction, ...]
    b: tuple[Fraction, ...]
    a: tuple[Fraction, ...]
    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]
    spectral_radius: float
    program: Program
    delta_step: Fraction | None = None
    sections: tuple[tuple[tuple[Fraction, ...], tuple[Fraction, ...]], ...] | None = None

    @property
    def coefficients(self) -> tuple[Coefficient, ...]:
        return self.program.coefficients

    @property
    def word_bits(self) -> int | None:
        return None if self.number_format is None else self.number_format.word_bits

    @property
    def acc_bits(self) -> int | None:
        return None if self.number_format is None else 2 * self.number_format.word_bits

    @property
    def max_coefficient_error(self) -> float:
        """Largest |implemented - ideal| over the stored coefficients."""
        return max((float(abs(c.value - c.ideal)) for c in self.coefficients), default=0.0)

    def to_dict(self) -> dict[str, object]:
        """Plain values for JSON (Fractions stay exact; see sampled.commands.common.to_jsonable)."""
        fmt = self.number_format
        return {
            "realisation": self.realisation,
            "word_bits": None if fmt is None else fmt.word_bits,
            "format": "double" if fmt is None else fmt.name,
            "signal_format": None if self.signal_format is None else self.signal_format.name,
            "rounding": self.rounding,
            "period_s": self.period_s,
            "coefficients": [
                {
                    "name": c.name,
                    "integer": c.integer,
                    "fraction_bits": c.fraction_bits,
                    "value": c.value,
                    "value_float": float(c.value),
                    "ideal_float": float(c.ideal),
                }
                for c in self.coefficients
            ],
            "b": list(self.b),
            "a": list(self.a),
            "poles": list(self.poles),
            "zeros": list(self.zeros),
            "spectral_radius": self.spectral_radius,
            "delta_step": self.delta_step,
        }


# ---------------------------------------------------------------------------------------------
# Input normalisation and roots
# ---------------------------------------------------------------------------------------------


def normalise(b: Sequence[object], a: Sequence[object]) -> tuple[tuple[Fraction, ...], tuple[Fraction, ...]]:
    """Exact coefficients, ``a[0] = 1``, equal lengths, common trailing zeros removed.

    Raises :class:`InputError` for an empty list, ``a[0] == 0`` (not causal) or a zero numerator.
    """
    if len(b) == 0:
        raise InputError("the numerator has no coefficients", "controller.b")
    if len(a) == 0:
        raise InputError("the denominator has no coefficients", "controller.a")
    bb = [poly.exact(v, f"controller.b[{i}]") for i, v in enumerate(b)]
    aa = [poly.exact(v, f"controller.a[{i}]") for i, v in enumerate(a)]
    if aa[0] == 0:
        raise InputError("a[0] must be nonzero (with a[0] = 0 the controller is not causal)", "controller.a")
    if all(v == 0 for v in bb):
        raise InputError("the numerator is zero", "controller.b")
    n = max(len(bb), len(aa))
    bb += [Fraction(0)] * (n - len(bb))
    aa += [Fraction(0)] * (n - len(aa))
    while n > 1 and bb[-1] == 0 and aa[-1] == 0:
        bb.pop()
        aa.pop()
        n -= 1
    lead = aa[0]
    return tuple(v / lead for v in bb), tuple(v / lead for v in aa)


def _to_mpf(x: Fraction) -> mpmath.mpf:
    return mpmath.mpf(x.numerator) / x.denominator


def _mpf_to_fraction(x: mpmath.mpf) -> Fraction:
    sign, man, exp, _ = mpmath.mpf(x)._mpf_
    value = Fraction(int(man)) * Fraction(2) ** int(exp)
    return -value if sign else value


def roots(coeffs: Sequence[Fraction], digits: int = 40) -> list[complex]:
    """Roots of an exact polynomial (descending powers) computed with mpmath at ``digits`` digits.

    Leading zeros are dropped. Roots at the origin are found exactly (trailing zeros). Falls back
    to :func:`numpy.roots` if the high-precision iteration does not converge.
    """
    return [complex(r) for r in _roots_mp(coeffs, digits)]


def _roots_mp(coeffs: Sequence[Fraction], digits: int = 40) -> list[mpmath.mpc]:
    p = list(poly.trim(coeffs))
    origin = 0
    while len(p) > 1 and p[-1] == 0:
        p.pop()
        origin += 1
    out: list[mpmath.mpc] = [mpmath.mpc(0)] * origin
    if len(p) <= 1:
        return out
    for factor, multiplicity in _square_free(tuple(p)):
        out.extend(list(_polished_roots(factor, digits)) * multiplicity)
    return out


def _square_free(p: tuple[Fraction, ...]) -> list[tuple[tuple[Fraction, ...], int]]:
    """Yun's square-free factorisation in exact arithmetic: ``p = c * prod f_i ** i``.

    Exactly repeated roots (an integrator pair, rounded coefficients that coincide) would make
    the root polish converge only linearly; each factor here has simple roots.
    Reference: Yun, D. Y. Y., "On square-free decomposition algorithms", SYMSAC 1976.
    """
    if len(p) <= 2:
        return [(p, 1)]
    dp = poly.derivative(p)
    g = poly.gcd(p, dp)
    if len(g) <= 1:
        return [(p, 1)]
    out = []
    b, _ = poly.divmod_(p, g)
    c, _ = poly.divmod_(dp, g)
    d = poly.sub(c, poly.derivative(b))
    i = 1
    while len(b) > 1:
        a = poly.gcd(b, d)
        if len(a) > 1:
            out.append((tuple(a), i))
        b, _ = poly.divmod_(b, a)
        c, _ = poly.divmod_(d, a)
        d = poly.sub(c, poly.derivative(b))
        i += 1
    return out


@lru_cache(maxsize=512)
def _polished_roots(p: tuple[Fraction, ...], digits: int) -> tuple[mpmath.mpc, ...]:
    """Roots of ``p`` (no root at 0): numpy estimates polished by Weierstrass (Durand-Kerner)
    iteration at ``digits`` digits; mpmath.polyroots when the polish does not settle.

    Weierstrass iteration from good starting points converges quadratically to simple roots and
    keeps clustered roots apart (each correction divides by the distances to the others).
    """
    with mpmath.workdps(digits + 10):
        mp = [_to_mpf(c) for c in p]
        lead = mp[0]
        n = len(mp) - 1
        with np.errstate(all="ignore"):
            start = np.roots([float(c) for c in p])
        if start.size != n or not np.all(np.isfinite(start)):
            start = np.array([complex(0.4, 0.9) ** k for k in range(n)])
        # Separate coincident starting points (exact multiple roots in double).
        zs = [mpmath.mpc(complex(z)) * (1 + mpmath.mpf(k) * mpmath.mpf(10) ** -12) for k, z in enumerate(start)]
        tol = mpmath.mpf(10) ** (-digits)
        for _ in range(200):
            biggest = mpmath.mpf(0)
            new = []
            for i, z in enumerate(zs):
                den = lead
                for j, w in enumerate(zs):
                    if j != i:
                        den *= z - w
                val = mpmath.polyval(mp, z)
                step = val / den if den != 0 else mpmath.mpf(0)
                new.append(z - step)
                scale = max(abs(z), mpmath.mpf(1))
                biggest = max(biggest, abs(step) / scale)
            zs = new
            if biggest < tol:
                return tuple(zs)
        try:
            return tuple(mpmath.polyroots(mp, maxsteps=400, extraprec=4 * digits + 10 * len(mp)))
        except mpmath.libmp.libhyper.NoConvergence:
            return tuple(zs)


# ---------------------------------------------------------------------------------------------
# Builders
# ---------------------------------------------------------------------------------------------


def _coefficients(
    names: Sequence[str],
    ideals: Sequence[Fraction],
    fmt: FixedFormat | None,
    rounding: Rounding,
) -> list[Coefficient]:
    """Round one bank (shared shift) or convert to doubles."""
    if fmt is None:
        return [Coefficient(n, v, Fraction(float(v)), None, None) for n, v in zip(names, ideals)]
    bank = scale_bank(ideals, fmt, rounding)
    return [
        Coefficient(n, v, q, i, bank.fraction_bits)
        for n, v, q, i in zip(names, ideals, bank.values, bank.integers)
    ]


def _fb(c: Coefficient) -> int:
    return 0 if c.fraction_bits is None else c.fraction_bits


def _build_direct(
    b: Sequence[Fraction], a: Sequence[Fraction], fmt: FixedFormat | None, rounding: Rounding,
    fs: int, transposed: bool,
) -> tuple[Program, tuple[Fraction, ...], tuple[Fraction, ...]]:
    n = len(a) - 1
    coefs = _coefficients([f"b{i}" for i in range(n + 1)], list(b), fmt, rounding)
    coefs += _coefficients([f"a{i}" for i in range(1, n + 1)], list(a[1:]), fmt, rounding)
    acc = min(_fb(c) for c in coefs) + fs
    bq = tuple(c.value for c in coefs[: n + 1])
    aq = (Fraction(1),) + tuple(c.value for c in coefs[n + 1 :])
    word = "word"
    variables = [Variable("x", word, fs, False, "input"), Variable("y", word, fs, False, "output")]
    steps: list[Assignment] = []

    def bt(i: int, var: str) -> list[Term]:
        return [Term(1, i, var)] if coefs[i].value != 0 else []

    def at(i: int, var: str) -> list[Term]:
        k = n + i  # a_i sits at index n + i
        return [Term(-1, k, var)] if coefs[k].value != 0 else []

    if not transposed:
        for i in range(1, n + 1):
            variables.append(Variable(f"xd{i}", word, fs, True, f"input delayed {i} sample(s)"))
        for i in range(1, n + 1):
            variables.append(Variable(f"yd{i}", word, fs, True, f"output delayed {i} sample(s)"))
        terms = bt(0, "x")
        for i in range(1, n + 1):
            terms += bt(i, f"xd{i}")
        for i in range(1, n + 1):
            terms += at(i, f"yd{i}")
        steps.append(Assignment("y", tuple(terms), acc))
        for i in range(n, 0, -1):
            src = "x" if i == 1 else f"xd{i - 1}"
            steps.append(Assignment(f"xd{i}", (Term(1, None, src),), fs))
        for i in range(n, 0, -1):
            src = "y" if i == 1 else f"yd{i - 1}"
            steps.append(Assignment(f"yd{i}", (Term(1, None, src),), fs))
    else:
        for i in range(1, n + 1):
            variables.append(Variable(f"s{i}", "wide", acc, True, f"transposed state {i}"))
        first = bt(0, "x") + ([Term(1, None, "s1")] if n >= 1 else [])
        steps.append(Assignment("y", tuple(first), acc))
        for i in range(1, n + 1):
            terms = bt(i, "x") + at(i, "y")
            if i < n:
                terms.append(Term(1, None, f"s{i + 1}"))
            steps.append(Assignment(f"s{i}", tuple(terms), acc))
    return Program(tuple(variables), tuple(coefs), tuple(steps)), bq, aq


def _distance_to_circle(p: mpmath.mpc) -> float:
    return abs(1.0 - abs(complex(p)))


def _is_real(p: mpmath.mpc) -> bool:
    return abs(mpmath.im(p)) <= 1e-20 * max(1.0, abs(complex(p)))


def _take_nearest(pool: list[mpmath.mpc], target: mpmath.mpc, real_only: bool = False) -> mpmath.mpc | None:
    best, best_d = None, math.inf
    for z in pool:
        if real_only and not _is_real(z):
            continue
        d = abs(complex(z) - complex(target))
        if d < best_d:
            best, best_d = z, d
    if best is not None:
        pool.remove(best)
    return best


def _take_conjugate(pool: list[mpmath.mpc], z: mpmath.mpc) -> mpmath.mpc:
    partner = _take_nearest(pool, mpmath.conj(z))
    assert partner is not None, "complex root without its conjugate"
    return partner


def _quadratic(rs: Sequence[mpmath.mpc]) -> tuple[Fraction, Fraction, Fraction]:
    """Coefficients of prod (1 - r z^-1) over at most two roots (real when conjugate or real)."""
    if len(rs) == 0:
        return Fraction(1), Fraction(0), Fraction(0)
    if len(rs) == 1:
        return Fraction(1), _mpf_to_fraction(-mpmath.re(rs[0])), Fraction(0)
    s = rs[0] + rs[1]
    p = rs[0] * rs[1]
    return Fraction(1), _mpf_to_fraction(-mpmath.re(s)), _mpf_to_fraction(mpmath.re(p))


def pair_sections(
    b: Sequence[Fraction], a: Sequence[Fraction], digits: int = 40
) -> list[tuple[tuple[Fraction, Fraction, Fraction], tuple[Fraction, Fraction, Fraction]]]:
    """Ideal second-order sections ``((b0, b1, b2), (1, a1, a2))``, paired and ordered.

    See the module docstring for the pairing and ordering rules. Coefficients come from roots
    found at ``digits`` significant digits, so they are accurate to double precision and beyond
    even for poles clustered near ``z = 1``. ``b`` and ``a`` as from :func:`normalise`.
    """
    return list(_pair_sections(tuple(Fraction(v) for v in b), tuple(Fraction(v) for v in a), digits))


@lru_cache(maxsize=64)
def _pair_sections(
    b: tuple[Fraction, ...], a: tuple[Fraction, ...], digits: int
) -> tuple[tuple[tuple[Fraction, Fraction, Fraction], tuple[Fraction, Fraction, Fraction]], ...]:
    n = len(a) - 1
    if n == 0:
        return (((b[0], Fraction(0), Fraction(0)), (Fraction(1), Fraction(0), Fraction(0))),)
    with mpmath.workdps(digits):
        poles = _roots_mp(a, digits)
        bt = list(b)
        delays = 0
        while bt and bt[0] == 0:
            bt.pop(0)
            delays += 1
        gain = bt[0]
        zeros = _roots_mp(bt, digits)
        groups: list[tuple[list[mpmath.mpc], list[mpmath.mpc]]] = []
        pole_pool = list(poles)
        zero_pool = list(zeros)
        while pole_pool:
            first = min(pole_pool, key=_distance_to_circle)
            pole_pool.remove(first)
            sec_poles = [first]
            if not _is_real(first):
                sec_poles.append(_take_conjugate(pole_pool, first))
            else:
                reals = [p for p in pole_pool if _is_real(p)]
                if reals:
                    other = min(reals, key=_distance_to_circle)
                    pole_pool.remove(other)
                    sec_poles.append(other)
            sec_zeros: list[mpmath.mpc] = []
            z = _take_nearest(zero_pool, first)
            if z is not None:
                sec_zeros.append(z)
                if not _is_real(z):
                    sec_zeros.append(_take_conjugate(zero_pool, z))
                elif len(sec_poles) == 2:
                    z2 = _take_nearest(zero_pool, first, real_only=True)
                    if z2 is not None:
                        sec_zeros.append(z2)
            groups.append((sec_poles, sec_zeros))
        # Zeros left over (a section took one real zero where two were free) go to sections with
        # free numerator slots.
        for z in list(zero_pool):
            if not _is_real(z):
                continue
            for sp, sz in groups:
                if len(sz) < 2:
                    sz.append(z)
                    zero_pool.remove(z)
                    break
        assert not zero_pool, "zeros left after pairing"
        # Order: poles farthest from the unit circle first, closest last (module docstring).
        groups.sort(key=lambda g: -min(_distance_to_circle(p) for p in g[0]))
        sections = []
        for sp, sz in groups:
            sections.append([list(_quadratic(sz)), list(_quadratic(sp))])
    # Gain into the first section, delays into free numerator slots from the first on.
    sections[0][0] = [gain * c for c in sections[0][0]]
    for _ in range(delays):
        for sec in sections:
            if sec[0][2] == 0:
                sec[0] = [Fraction(0), sec[0][0], sec[0][1]]
                break
        else:  # pragma: no cover - slot count guarantees a free slot
            raise AssertionError("no free numerator slot for a delay")
    _scale_sections(sections)
    return tuple((tuple(s[0]), tuple(s[1])) for s in sections)  # type: ignore[misc]


def _scale_sections(sections: list[list[list[Fraction]]], grid_points: int = 4096) -> None:
    """Peak-gain scaling: the response from the input to each section's output but the last
    peaks at 1 over frequency (sinusoidal inputs of full scale neither overflow nor vanish); the
    last section takes the remaining gain. Exact: the scale factors telescope in Fractions, so
    the product of the sections is unchanged. Sections whose cumulative peak is not finite (a
    pole on the unit circle) keep their gain. Jackson (1970), l-infinity scaling, from memory.
    """
    if len(sections) < 2:
        return
    poles = np.concatenate([np.roots([float(c) for c in sec[1]]) for sec in sections if any(sec[1][1:])] or [np.zeros(0)])
    # Uniform grid plus a fine comb around each pole angle, width a few times 1 - |p| (the
    # half-power width of a resonance), so sharp peaks are not missed.
    local = [
        np.abs(np.angle(p)) + np.linspace(-4.0, 4.0, 129) * max(abs(1.0 - abs(p)), 1e-9)
        for p in poles
    ]
    grid = np.clip(np.concatenate([np.linspace(0.0, np.pi, grid_points), *local]), 0.0, np.pi)
    z_inv = np.exp(-1j * grid)
    cumulative = np.ones_like(z_inv)
    total = Fraction(1)
    with np.errstate(all="ignore"):
        for sec in sections[:-1]:
            num = np.polyval([float(c) for c in sec[0][::-1]], z_inv)
            den = np.polyval([float(c) for c in sec[1][::-1]], z_inv)
            cumulative = cumulative * num / den
            peak = float(np.max(np.abs(cumulative)))
            if not (math.isfinite(peak) and peak > 0):
                continue  # keep this section's gain
            factor = 1 / Fraction(peak)
            sec[0] = [c * factor for c in sec[0]]
            cumulative = cumulative / peak
            total *= factor
    sections[-1][0] = [c / total for c in sections[-1][0]]


def _build_sections(
    b: Sequence[Fraction], a: Sequence[Fraction], fmt: FixedFormat | None, rounding: Rounding, fs: int,
):
    ideal = pair_sections(b, a)
    coefs: list[Coefficient] = []
    variables = [
        Variable("x", "word", fs, False, "input"),
        Variable("y", "word", fs, False, "output"),
        Variable("h0_1", "word", fs, True, "input delayed 1 sample"),
        Variable("h0_2", "word", fs, True, "input delayed 2 samples"),
    ]
    steps: list[Assignment] = []
    implemented = []
    count = len(ideal)
    outs = []
    for k, (num, den) in enumerate(ideal, start=1):
        bank = _coefficients([f"s{k}_b0", f"s{k}_b1", f"s{k}_b2"], list(num), fmt, rounding)
        bank += _coefficients([f"s{k}_a1", f"s{k}_a2"], list(den[1:]), fmt, rounding)
        base = len(coefs)
        coefs.extend(bank)
        out = "y" if k == count else f"u{k}"
        if k != count:
            variables.append(Variable(out, "word", fs, False, f"output of section {k}"))
        variables.append(Variable(f"h{k}_1", "word", fs, True, f"section {k} output delayed 1 sample"))
        variables.append(Variable(f"h{k}_2", "word", fs, True, f"section {k} output delayed 2 samples"))
        src = "x" if k == 1 else f"u{k - 1}"
        srcs = [src, f"h{k - 1}_1", f"h{k - 1}_2"]
        terms = [Term(1, base + j, srcs[j]) for j in range(3) if bank[j].value != 0]
        terms += [Term(-1, base + 3 + j, f"h{k}_{j + 1}") for j in range(2) if bank[3 + j].value != 0]
        steps.append(Assignment(out, tuple(terms), min(_fb(c) for c in bank) + fs))
        outs.append(out)
        implemented.append(
            ((bank[0].value, bank[1].value, bank[2].value), (Fraction(1), bank[3].value, bank[4].value))
        )
    for j, out in enumerate(["x"] + outs):
        steps.append(Assignment(f"h{j}_2", (Term(1, None, f"h{j}_1"),), fs))
        steps.append(Assignment(f"h{j}_1", (Term(1, None, out),), fs))
    bq: tuple[Fraction, ...] = (Fraction(1),)
    aq: tuple[Fraction, ...] = (Fraction(1),)
    for num, den in implemented:
        bq = _mul_ascending(bq, num)
        aq = _mul_ascending(aq, den)
    return Program(tuple(variables), tuple(coefs), tuple(steps)), bq, aq, tuple(implemented)


def _mul_ascending(p: Sequence[Fraction], q: Sequence[Fraction]) -> tuple[Fraction, ...]:
    out = [Fraction(0)] * (len(p) + len(q) - 1)
    for i, x in enumerate(p):
        if x:
            for j, y in enumerate(q):
                out[i + j] += x * y
    return tuple(out)


def _shift_to_z_minus_one(p: Sequence[Fraction]) -> tuple[Fraction, ...]:
    """Coefficients of ``p(w + 1)`` (descending powers of w = z - 1) from ``p`` in z."""
    out = poly.compose_mobius(list(p), (Fraction(1), Fraction(1)), (Fraction(1),))
    return (Fraction(0),) * (len(p) - len(out)) + tuple(out)


def _shift_from_z_minus_one(p: Sequence[Fraction]) -> tuple[Fraction, ...]:
    """Coefficients of ``p(z - 1)`` (descending powers of z) from ``p`` in w = z - 1."""
    out = poly.compose_mobius(list(p), (Fraction(1), Fraction(-1)), (Fraction(1),))
    return (Fraction(0),) * (len(p) - len(out)) + tuple(out)


#: Poles closer than this to ``z = 1`` count as integrators when choosing the delta step.
INTEGRATOR_DISTANCE = 1e-12


def delta_step_for(a: Sequence[Fraction]) -> Fraction:
    """``Delta = 2**-m``: the power of two nearest the geometric mean of ``|p - 1|`` over the poles.

    Poles at ``z = 1`` are left out of the mean, and so are poles within
    :data:`INTEGRATOR_DISTANCE` of it: an integrator whose coefficients were rounded to doubles
    (a discretised design) sits 1e-16 away, and counting it would ask for ``Delta = 2**-27`` and
    coefficients of 1e14. ``m`` is kept within 0..40 so that coefficients stay O(1) without
    asking for more guard bits than any word can give.
    """
    dist = [abs(complex(p) - 1.0) for p in roots(a)]
    dist = [d for d in dist if d > INTEGRATOR_DISTANCE]
    if not dist:
        return Fraction(1)
    mean_log2 = sum(math.log2(d) for d in dist) / len(dist)
    m = min(40, max(0, round(-mean_log2)))
    return Fraction(1, 1 << m)


def _build_delta(
    b: Sequence[Fraction], a: Sequence[Fraction], fmt: FixedFormat | None, rounding: Rounding, fs: int,
):
    n = len(a) - 1
    step = delta_step_for(a)
    m = step.denominator.bit_length() - 1
    wb = _shift_to_z_minus_one(b)  # d_i
    wa = _shift_to_z_minus_one(a)  # c_i, c_0 = 1
    e = [wb[0]] + [wb[i] / step**i for i in range(1, n + 1)]
    g = [wa[i] / step**i for i in range(1, n + 1)]
    coefs = _coefficients(["d0"] + [f"e{i}" for i in range(1, n + 1)], e, fmt, rounding)
    coefs += _coefficients([f"g{i}" for i in range(1, n + 1)], g, fmt, rounding)
    if fmt is None:
        guard = 0  # unused in floating point
    else:
        # m guard bits resolve the Delta-scaled increments; two more for rounding, but keep at
        # least three integer bits in the double-width register.
        guard = max(0, min(m + 2, 2 * fmt.word_bits - 1 - fs - 3))
    sf = fs + guard
    variables = [Variable("x", "word", fs, False, "input"), Variable("y", "word", fs, False, "output")]
    for i in range(1, n + 1):
        variables.append(Variable(f"v{i}", "wide", sf if fmt else 0, True, f"delta integrator {i}"))
    acc = sf if fmt else 0
    first = ([Term(1, 0, "x")] if coefs[0].value != 0 else []) + ([Term(1, None, "v1")] if n else [])
    steps = [Assignment("y", tuple(first), acc)]
    for i in range(1, n + 1):
        terms = [Term(1, None, f"v{i}")]
        if coefs[i].value != 0:
            terms.append(Term(1, i, "x", m))
        if coefs[n + i].value != 0:
            terms.append(Term(-1, n + i, "y", m))
        if i < n:
            terms.append(Term(1, None, f"v{i + 1}", m))
        steps.append(Assignment(f"v{i}", tuple(terms), acc))
    # Implemented polynomials in w = z - 1: c_i = g_i Delta^i, d_i = e_i Delta^i.
    dq = [coefs[0].value] + [coefs[i].value * step**i for i in range(1, n + 1)]
    cq = [Fraction(1)] + [coefs[n + i].value * step**i for i in range(1, n + 1)]
    bq = _shift_from_z_minus_one(dq)
    aq = _shift_from_z_minus_one(cq)
    with mpmath.workdps(40):
        gpoly = [Fraction(1)] + [coefs[n + i].value for i in range(1, n + 1)]
        poles = tuple(complex(1 + _to_mpf(step) * r) for r in _roots_mp(gpoly))
    return Program(tuple(variables), tuple(coefs), tuple(steps)), bq, aq, step, poles


def _check_formats(fmt: FixedFormat | None, signal_format: FixedFormat | None) -> FixedFormat | None:
    if fmt is None:
        return None
    sig = signal_format if signal_format is not None else FixedFormat(fmt.word_bits, fmt.word_bits - 1)
    if sig.word_bits != fmt.word_bits:
        raise InputError(
            f"signal format {sig.name} has {sig.word_bits} bits but the coefficients have "
            f"{fmt.word_bits}; both must use the same word length",
            "signal_format",
        )
    return sig


def implement(
    b: Sequence[object],
    a: Sequence[object],
    period_s: float,
    realisation: Realisation,
    number_format: FixedFormat | None,
    *,
    rounding: Rounding = "nearest",
    signal_format: FixedFormat | None = None,
) -> ImplementedController:
    """Round a controller's coefficients for one realisation and return what it implements.

    Parameters
    ----------
    b, a : sequence of numbers
        Numerator and denominator in ascending powers of ``z^-1`` (``a[0] != 0``). Floats are
        read as the exact binary fractions they hold; strings and Fractions exactly.
    period_s : float [s]
        Sample period (recorded; used for the delta-form coefficients).
    realisation : {"direct1", "direct2t", "sections", "delta"}
        Structure (module docstring).
    number_format : FixedFormat or None
        Coefficient word; the shift is chosen per bank (:func:`sampled.fixedpoint.scale_bank`).
        ``None`` means IEEE double coefficients and arithmetic.
    rounding : {"nearest", "floor"}
        Rounding of coefficients and in the data path.
    signal_format : FixedFormat, optional
        Format of input, output and word states; same word length as ``number_format``.
        Default ``Q(w-1)``.

    Returns
    -------
    ImplementedController
        With the exact implemented transfer ``(b, a)`` for the loop check.
    """
    if realisation not in REALISATIONS:
        raise InputError(f"unknown realisation {realisation!r}; choose one of {', '.join(REALISATIONS)}", "realisation")
    if not (isinstance(period_s, (int, float)) and math.isfinite(period_s) and period_s > 0):
        raise InputError(f"the period must be a positive number of seconds, got {period_s!r}", "period")
    ib, ia = normalise(b, a)
    sig = _check_formats(number_format, signal_format)
    fs = sig.fraction_bits if sig else 0
    step = None
    sections = None
    poles: tuple[complex, ...] | None = None
    if realisation in ("direct1", "direct2t"):
        program, bq, aq = _build_direct(ib, ia, number_format, rounding, fs, realisation == "direct2t")
    elif realisation == "sections":
        program, bq, aq, sections = _build_sections(ib, ia, number_format, rounding, fs)
        poles = tuple(r for _, den in sections for r in roots(list(den)))
    else:
        program, bq, aq, step, poles = _build_delta(ib, ia, number_format, rounding, fs)
    bq, aq = _trim_common_tail(bq, aq)
    if poles is None:
        poles = tuple(roots(list(aq)))
    zeros = tuple(roots(list(bq)))
    radius = max((abs(p) for p in poles), default=0.0)
    return ImplementedController(
        realisation, number_format, sig, rounding, float(period_s), ib, ia, bq, aq,
        poles, zeros, radius, program, step, sections,
    )


def _trim_common_tail(b: Sequence[Fraction], a: Sequence[Fraction]):
    n = max(len(b), len(a))
    bb = list(b) + [Fraction(0)] * (n - len(b))
    aa = list(a) + [Fraction(0)] * (n - len(a))
    while n > 1 and bb[-1] == 0 and aa[-1] == 0:
        bb.pop()
        aa.pop()
        n -= 1
    return tuple(bb), tuple(aa)


def implement_word_lengths(
    b: Sequence[object],
    a: Sequence[object],
    period_s: float,
    word_bits: Iterable[int],
    realisations: Iterable[Realisation] = REALISATIONS,  # type: ignore[assignment]
    *,
    rounding: Rounding = "nearest",
) -> tuple[ImplementedController, ...]:
    """:func:`implement` for every realisation and word length (coefficients ``Q(w-1)`` + shift)."""
    out = []
    words = list(word_bits)
    for r in realisations:
        for w in words:
            out.append(implement(b, a, period_s, r, FixedFormat(w, w - 1), rounding=rounding))
    return tuple(out)


def smallest_word_bits(
    rows: Iterable[ImplementedController], passes: Callable[[ImplementedController], bool]
) -> int | None:
    """Smallest word length from which every longer word in ``rows`` passes ``passes``.

    ``rows`` are implementations of one realisation at several word lengths (as from
    :func:`implement_word_lengths`); ``passes`` is the caller's test (loop stable, requirements
    met). Robustness to rounding need not be monotone in the word length (a lucky rounding can
    pass at 11 bits and fail at 12), so the answer is the start of the passing run that reaches
    the longest word tried; None when the longest word fails.
    """
    ordered = sorted(rows, key=lambda r: r.word_bits or 0)
    best: int | None = None
    for row in reversed(ordered):
        if not passes(row):
            break
        best = row.word_bits
    return best


def delta_coefficients(impl: ImplementedController) -> tuple[tuple[Fraction, ...], tuple[Fraction, ...]]:
    """Implemented coefficients in delta form with ``delta = (q - 1) / T``, T the period.

    Returns ``(beta, alpha)`` with ``C = (beta_0 delta^n + ... + beta_n) / (delta^n + alpha_1
    delta^(n-1) + ... + alpha_n)``, exact (T taken as the binary fraction of ``period_s``).
    """
    t = Fraction(impl.period_s)
    wb = _shift_to_z_minus_one(impl.b)
    wa = _shift_to_z_minus_one(impl.a)
    beta = tuple(c / t**i for i, c in enumerate(wb))
    alpha = tuple(c / t**i for i, c in enumerate(wa))
    return beta, alpha


# ---------------------------------------------------------------------------------------------
# Simulation
# ---------------------------------------------------------------------------------------------


def simulate_fixed(impl: ImplementedController, x: Iterable[int], output_limits: tuple[int, int] | None = None) -> list[int]:
    """Bit-exact fixed-point run of the realisation from zero state.

    Parameters
    ----------
    impl : ImplementedController
        A fixed-point implementation.
    x : iterable of int
        Input words (signal format); values outside the word are saturated first.
    output_limits : (int, int), optional
        Clamp applied to the returned output words (the recursion uses the unclamped output).

    Returns
    -------
    list of int
        Output words, one per input.
    """
    if impl.number_format is None:
        raise InputError("simulate_fixed needs a fixed-point implementation", "number_format")
    w = impl.number_format.word_bits
    acc_bits = 2 * w
    prog = impl.program
    kinds = {v.name: v for v in prog.variables}
    ints = [c.integer for c in prog.coefficients]
    cfb = [c.fraction_bits for c in prog.coefficients]
    values = {v.name: 0 for v in prog.variables}
    rounding = impl.rounding
    out: list[int] = []
    for sample in x:
        values["x"] = saturate(int(sample), w)
        for step in prog.steps:
            acc = 0
            for t in step.terms:
                var = kinds[t.variable]
                v = values[t.variable]
                if t.coefficient is None:
                    term, scale = v, var.fraction_bits
                else:
                    term, scale = ints[t.coefficient] * v, cfb[t.coefficient] + var.fraction_bits  # type: ignore[operator]
                term = saturate(round_shift(term, scale + t.extra_bits - step.acc_fraction_bits, rounding), acc_bits)
                if t.sign < 0:
                    term = -term
                acc = saturate(acc + term, acc_bits)
            target = kinds[step.target]
            value = round_shift(acc, step.acc_fraction_bits - target.fraction_bits, rounding)
            values[step.target] = saturate(value, w if target.kind == "word" else acc_bits)
        y = values["y"]
        if output_limits is not None:
            y = min(max(y, output_limits[0]), output_limits[1])
        out.append(y)
    return out


def simulate_float(impl: ImplementedController, x: Iterable[float]) -> np.ndarray:
    """Run the realisation in double precision with its implemented coefficient values."""
    prog = impl.program
    coef = [float(c.value) for c in prog.coefficients]
    values = {v.name: 0.0 for v in prog.variables}
    out = []
    for sample in x:
        values["x"] = float(sample)
        for step in prog.steps:
            acc = 0.0
            for t in step.terms:
                v = values[t.variable] * (1.0 if t.coefficient is None else coef[t.coefficient])
                if t.extra_bits:
                    v = math.ldexp(v, -t.extra_bits)
                acc += v if t.sign > 0 else -v
            values[step.target] = acc
        out.append(values["y"])
    return np.array(out, dtype=float)


def _float_step(prog: Program, coef: Sequence[float], values: dict[str, float]) -> None:
    for s in prog.steps:
        acc = 0.0
        for t in s.terms:
            v = values[t.variable] * (1.0 if t.coefficient is None else coef[t.coefficient])
            if t.extra_bits:
                v = math.ldexp(v, -t.extra_bits)
            acc += v if t.sign > 0 else -v
        values[s.target] = acc


def register_maps(impl: ImplementedController) -> tuple[list[Variable], np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Linear maps of one sample of the float program, states in real units.

    Returns ``(registers, A, B, M, N)``: the state update ``s[k+1] = A s[k] + B u[k]`` and the
    value every register takes during sample k, ``r[k] = M s[k] + N u[k]`` (states hold their
    new value, computed registers such as ``y`` the value computed). Found by running one step of
    the program from each unit state and from a unit input (the program is linear).
    """
    prog = impl.program
    states = [v.name for v in prog.states]
    registers = [v for v in prog.variables if v.name != "x"]
    coef = [float(c.value) for c in prog.coefficients]
    n = len(states)

    def run(state: np.ndarray, u: float) -> dict[str, float]:
        values = {v.name: 0.0 for v in prog.variables}
        values.update(dict(zip(states, state.tolist())))
        values["x"] = u
        _float_step(prog, coef, values)
        return values

    A = np.zeros((n, n))
    M = np.zeros((len(registers), n))
    for j in range(n):
        e = np.zeros(n)
        e[j] = 1.0
        vals = run(e, 0.0)
        A[:, j] = [vals[k] for k in states]
        M[:, j] = [vals[r.name] for r in registers]
    vals = run(np.zeros(n), 1.0)
    B = np.array([vals[k] for k in states]).reshape(n, 1)
    N = np.array([vals[r.name] for r in registers]).reshape(len(registers), 1)
    return registers, A, B, M, N


def state_space(impl: ImplementedController) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Float state-space ``(A, B, C, D)`` of the realisation, states in ``impl.program.states`` order."""
    registers, A, B, M, N = register_maps(impl)
    row = [r.name for r in registers].index("y")
    return A, B, M[row : row + 1, :], N[row : row + 1, :]


# ---------------------------------------------------------------------------------------------
# Internal signal levels and overflow risk
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class RegisterLevel:
    """Size of one register's signal for inputs of magnitude at most 1.

    Attributes
    ----------
    name, label : str
        Register (C identifier) and what it holds.
    step_peak : float
        Largest |value| in the response to a unit step input (inf if it grows without bound).
    bounded_input_gain : float
        Largest |value| for any input with |x[k]| <= 1: the l1 norm of the impulse response from
        the input to the register (inf when it does not converge: poles on or outside the
        unit circle).
    register_limit : float
        Largest |value| the register holds in the implementation (inf in floating point).
    """

    name: str
    label: str
    step_peak: float
    bounded_input_gain: float
    register_limit: float


@dataclass(frozen=True)
class SignalLevels:
    """Levels of every state and computed signal of a realisation.

    ``samples`` is the length of impulse response summed; ``converged`` whether it decayed
    below 1e-15 of the running sums before that.
    """

    realisation: Realisation
    registers: tuple[RegisterLevel, ...]
    samples: int
    converged: bool


def _register_limit(impl: ImplementedController, var: Variable) -> float:
    if impl.number_format is None:
        return math.inf
    bits = impl.number_format.word_bits if var.kind == "word" else 2 * impl.number_format.word_bits
    return math.ldexp(1.0, bits - 1 - var.fraction_bits)


def signal_levels(impl: ImplementedController, max_samples: int = 1 << 18, chunk: int = 512) -> SignalLevels:
    """Peak of every register for a unit step, and the worst case for a bounded input.

    The worst case over inputs with ``|x[k]| <= 1`` of ``|r[k]|`` is the l1 norm of the impulse
    response from the input to ``r`` (attained by the input ``x[k-j] = sign h[j]``); the sums run
    in chunks until the response has decayed or ``max_samples`` is reached.

    References
    ----------
    Jackson, L. B., "Digital Filters and Signal Processing", 3rd ed., 1996, section 11.2
    (scaling to prevent overflow: l1 and step bounds), from memory.
    """
    registers, A, B, M, N = register_maps(impl)
    if impl.spectral_radius >= 1.0:
        # Not summable: only the growth of the step response is left to judge.
        max_samples = min(max_samples, 1 << 14)
    n = A.shape[0]
    h0 = N[:, 0]
    l1 = np.abs(h0).copy()
    running = h0.copy()  # step response at sample 0
    step_peak = np.abs(running).copy()
    first_half_peak = step_peak.copy()
    converged = n == 0
    samples = 1
    if n:
        col = B[:, 0].copy()
        block = np.empty((n, chunk))
        with np.errstate(over="ignore", invalid="ignore"):
            while samples < max_samples:
                # Columns A^(k-1) B, iterated sample by sample: powers of A by repeated squaring
                # would perturb the clustered eigenvalues of a direct form.
                for k in range(chunk):
                    block[:, k] = col
                    col = A @ col
                h = M @ block  # registers x chunk
                if not np.all(np.isfinite(h)):
                    break
                l1 += np.abs(h).sum(axis=1)
                steps = running[:, None] + np.cumsum(h, axis=1)
                step_peak = np.maximum(step_peak, np.abs(steps).max(axis=1))
                running = steps[:, -1]
                samples += chunk
                if samples <= max_samples // 2:
                    first_half_peak = step_peak.copy()
                tail = np.abs(h).max(axis=1)
                if np.all(tail <= 1e-15 * np.maximum(l1, 1e-300)):
                    converged = True
                    break
    levels = []
    for i, r in enumerate(registers):
        gain = float(l1[i]) if converged else math.inf
        peak = float(step_peak[i])
        if not converged and (not math.isfinite(peak) or peak > 1.01 * float(first_half_peak[i]) + 1e-300):
            peak = math.inf
        levels.append(RegisterLevel(r.name, r.label, peak, gain, _register_limit(impl, r)))
    return SignalLevels(impl.realisation, tuple(levels), samples, converged)


OverflowRisk = Literal["none", "possible", "likely"]


@dataclass(frozen=True)
class RegisterRisk:
    """Overflow risk of one register for inputs bounded by ``input_bound``.

    ``risk`` is "none" when the worst case fits the register, "likely" when a constant input of
    the full bound (a step) already overflows it, "possible" in between. ``headroom_bits`` is
    ``log2(limit / worst_case)`` (negative: bits missing; inf: signal identically zero).
    """

    name: str
    label: str
    worst_case: float
    step_peak: float
    limit: float
    headroom_bits: float
    risk: OverflowRisk


@dataclass(frozen=True)
class OverflowReport:
    """Overflow risk of every register; ``risk`` is the worst over registers."""

    realisation: Realisation
    input_bound: float
    registers: tuple[RegisterRisk, ...]
    risk: OverflowRisk
    headroom_bits: float


def overflow_report(
    impl: ImplementedController, input_bound: float | None = None, levels: SignalLevels | None = None
) -> OverflowReport:
    """Compare the signal levels with the registers of the implementation.

    Parameters
    ----------
    impl : ImplementedController
    input_bound : float, optional
        Largest |input| expected [input units]; default the full scale of the signal format
        (1.0 in floating point).
    levels : SignalLevels, optional
        Reuse levels computed by :func:`signal_levels`.
    """
    if input_bound is None:
        input_bound = float(impl.signal_format.max_value) if impl.signal_format else 1.0
    if not (math.isfinite(input_bound) and input_bound > 0):
        raise InputError(f"the input bound must be a positive number, got {input_bound!r}", "input_bound")
    levels = levels or signal_levels(impl)
    order = {"none": 0, "possible": 1, "likely": 2}
    rows = []
    for r in levels.registers:
        worst = r.bounded_input_gain * input_bound
        step = r.step_peak * input_bound
        if worst <= r.register_limit:
            risk: OverflowRisk = "none"
        elif step > r.register_limit:
            risk = "likely"
        else:
            risk = "possible"
        if worst == 0:
            head = math.inf
        elif math.isinf(worst):
            head = -math.inf
        else:
            head = math.log2(r.register_limit / worst) if math.isfinite(r.register_limit) else math.inf
        rows.append(RegisterRisk(r.name, r.label, worst, step, r.register_limit, head, risk))
    worst_risk = max((row.risk for row in rows), key=order.__getitem__, default="none")
    headroom = min((row.headroom_bits for row in rows), default=math.inf)
    return OverflowReport(impl.realisation, float(input_bound), tuple(rows), worst_risk, headroom)
