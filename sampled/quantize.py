"""Word length of a controller's coefficients: the loop verdict per realisation and word length.

For every realisation (:data:`sampled.realisations.REALISATIONS`) and every word length tried,
the case's controller is rounded by :func:`sampled.realisations.implement` (coefficients
``Q(w-1)`` with one shift per coefficient bank, signals ``Q(w-1)``), and the loop is judged with
the controller that the rounded coefficients implement EXACTLY: the same assembly and verdict
as ``sampled check`` (closed loop in delta form; the verdict confirmed by an exact count on the
closed-loop characteristic polynomial when a pole lies within :data:`CONFIRM_WITHIN` of the unit
circle), and the case's requirements.

The implemented controller enters the loop in the state-space form of its structure, not through
one polynomial in z: direct forms through their coefficients (each an exact double), the cascade
as the series connection of its sections (the product polynomial of rounded sections needs more
bits than a double holds), the delta form through its delta matrix ``(Delta/T) M`` (no ``Phi - I``
subtraction). So the loop check sees the rounded numbers and nothing else.

The shortest word per realisation is the start of the passing run that reaches the longest word
tried (:func:`sampled.realisations.smallest_word_bits`): robustness to rounding need not be
monotone in the word length.

References
----------
Oppenheim, A. V., Schafer, R. W., "Discrete-Time Signal Processing", 3rd ed., 2010, section 6.7
(coefficient quantisation, sensitivity of direct forms with clustered poles), from memory.
Middleton, R. H., Goodwin, G. C., "Digital Control and Estimation: A Unified Approach", 1990,
chapter 2 (delta operator: coefficients well conditioned at fast sampling), from memory.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, replace
from fractions import Fraction
from typing import Any

import numpy as np

from sampled.casefile import LoopSpec
from sampled.discrete import DiscreteSystem
from sampled.errors import InputError, NumericalError
from sampled.fixedpoint import MAX_WORD_BITS, MIN_WORD_BITS, FixedFormat, ROUNDINGS, Rounding
from sampled.loop import (
    DigitalLoop,
    RequirementResult,
    check_requirements,
    digital_controller,
    digital_loop,
    judge_digital,
)
from sampled.margins import Margins
from sampled.realisations import (
    REALISATION_TITLES,
    REALISATIONS,
    ImplementedController,
    Realisation,
    implement,
    smallest_word_bits,
)

#: Rows of :func:`quantize_loop` are confirmed exactly when a loop pole is this close to the unit
#: circle (``|1 - |z||``); farther out the delta-matrix eigenvalues decide.
CONFIRM_WITHIN = 1e-6

#: Called after each judged row with (rows done, rows in all).
Progress = Callable[[int, int], None]


# ---- the implemented controller as a system ---------------------------------------------------------

def _floats(values: Sequence[Fraction]) -> list[float]:
    return [float(v) for v in values]


def implemented_system(impl: ImplementedController) -> DiscreteSystem:
    """The controller exactly as ``impl`` computes it, as a :class:`DiscreteSystem`.

    Parameters
    ----------
    impl : ImplementedController
        From :func:`sampled.realisations.implement`.

    Returns
    -------
    DiscreteSystem
        Direct forms: from the implemented coefficients ``impl.b, impl.a`` (each rounded
        coefficient of at most 32 bits is an exact double). Cascade: the series connection of
        the rounded sections, each from its own exact coefficients. Delta form: state space
        ``y = v_1 + d_0 x``, ``v_i <- v_i + Delta (e_i x - g_i y + v_(i+1))``, whose delta matrix
        ``(Phi - I)/T = (Delta/T) M`` is formed without a subtraction.
    """
    t = impl.period_s
    if impl.realisation == "sections" and impl.sections:
        system: DiscreteSystem | None = None
        for num, den in impl.sections:
            part = DiscreteSystem.from_firmware(_floats(num), _floats(den), t, "controller section")
            system = part if system is None else system.series(part)
        assert system is not None
        return DiscreteSystem(system.phi, system.gamma, system.c, system.d, t, system.a_delta, system.b_delta,
                              system.delay_samples, "implemented sections")
    if impl.realisation == "delta" and impl.delta_step is not None:
        return _delta_system(impl)
    system = DiscreteSystem.from_firmware(_floats(impl.b), _floats(impl.a), t, "implemented controller")
    return DiscreteSystem(system.phi, system.gamma, system.c, system.d, t, system.a_delta, system.b_delta,
                          system.delay_samples, f"implemented {impl.realisation}")


def _delta_system(impl: ImplementedController) -> DiscreteSystem:
    """State space of the delta-form program (see :func:`implemented_system`)."""
    coef = {c.name: c.value for c in impl.coefficients}
    n = len(impl.ideal_a) - 1
    d0 = coef.get("d0", Fraction(0))
    e = [coef.get(f"e{i}", Fraction(0)) for i in range(1, n + 1)]
    g = [coef.get(f"g{i}", Fraction(0)) for i in range(1, n + 1)]
    step = impl.delta_step
    assert step is not None
    scale = float(step) / impl.period_s  # Delta / T; Delta is a power of two, so only 1/T rounds
    m = np.zeros((n, n))
    for i in range(n):
        m[i, 0] -= float(g[i])
        if i + 1 < n:
            m[i, i + 1] += 1.0
    b_m = np.array([[float(e[i] - g[i] * d0)] for i in range(n)]).reshape(n, 1)
    c = np.zeros((1, n))
    if n:
        c[0, 0] = 1.0
    a_delta = scale * m
    b_delta = scale * b_m
    phi = np.eye(n) + float(step) * m
    gamma = float(step) * b_m
    return DiscreteSystem(phi, gamma, c, np.array([[float(d0)]]), impl.period_s, a_delta, b_delta, 0,
                          "implemented delta")


# ---- results ----------------------------------------------------------------------------------------

@dataclass(frozen=True)
class QuantizedRow:
    """The loop with the controller rounded to one word length in one realisation.

    Attributes
    ----------
    bits : int
        Word length of coefficients and signals (sign included); 0 for IEEE double.
    verdict : str
        Loop verdict: "stable", "marginal" or "unstable"; "unrepresentable" when a coefficient
        does not fit the word even with the largest shift (``note`` says which).
    spectral_radius : float or None
        Largest closed-loop pole modulus of the LOOP (None when unrepresentable).
    stability_distance : float or None
        Smallest ``1 - |z|`` over the loop's poles (negative: unstable).
    controller_spectral_radius : float or None
        Largest pole modulus of the implemented controller (1 for an integrator kept exact).
    margins : Margins or None
        Margins of the implemented loop (None when not computed).
    requirements : tuple of RequirementResult
        The case's requirements judged on the implemented loop.
    implementation : ImplementedController or None
        Rounded coefficients, exact implemented transfer, controller poles and zeros.
    note : str
        Why the row has no implementation, or why it has no margins.
    confirmed : str
        How the verdict was reached: "exact" (exact count on the closed-loop characteristic
        polynomial) or "eigenvalues" (delta matrix, far from the circle); "" without a loop.
    """

    bits: int
    verdict: str
    spectral_radius: float | None
    stability_distance: float | None
    controller_spectral_radius: float | None
    margins: Margins | None
    requirements: tuple[RequirementResult, ...]
    implementation: ImplementedController | None
    note: str = ""
    confirmed: str = ""

    @property
    def word_bits(self) -> int:
        return self.bits

    @property
    def stable(self) -> bool:
        return self.verdict == "stable"

    @property
    def requirements_met(self) -> bool:
        """Stable and every requirement met (a case without requirements: stable)."""
        return self.stable and all(r.met for r in self.requirements)

    def to_dict(self) -> dict[str, Any]:
        impl = self.implementation.to_dict() if self.implementation is not None else {}
        m = self.margins
        return {
            "bits": self.bits,
            "verdict": self.verdict,
            "note": self.note,
            "confirmed": self.confirmed,
            "spectral_radius": self.spectral_radius,
            "stability_distance": self.stability_distance,
            "controller_spectral_radius": self.controller_spectral_radius,
            **_margin_values(m),
            "requirements_met": self.requirements_met,
            "requirements": [r.to_dict() for r in self.requirements],
            "max_coefficient_error": None if self.implementation is None else self.implementation.max_coefficient_error,
            "coefficients": impl.get("coefficients", []),
            "b": impl.get("b"),
            "a": impl.get("a"),
            "controller_poles": impl.get("poles", []),
            "controller_zeros": impl.get("zeros", []),
            "delta_step": impl.get("delta_step"),
        }


def _margin_values(m: Margins | None) -> dict[str, float | None]:
    """The four headline margins of a row (None when they were not computed)."""
    names = ("gain_margin_db", "phase_margin_deg", "delay_margin_s", "sensitivity_peak")
    return {name: None if m is None else getattr(m, name) for name in names}


@dataclass(frozen=True)
class StructureResult:
    """All word lengths of one realisation and the shortest words that pass.

    ``min_bits_stable`` / ``min_bits_requirements``: start of the run of passing word lengths
    that reaches the longest word tried; None when the longest word tried does not pass.
    """

    name: Realisation
    rows: tuple[QuantizedRow, ...]
    min_bits_stable: int | None
    min_bits_requirements: int | None

    @property
    def title(self) -> str:
        return REALISATION_TITLES[self.name]

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "title": self.title,
            "min_bits_stable": self.min_bits_stable,
            "min_bits_requirements": self.min_bits_requirements,
            "rows": [r.to_dict() for r in self.rows],
        }


@dataclass(frozen=True)
class ReferenceResult:
    """The loop with the controller as the case defines it (double precision), as ``check`` judges it."""

    verdict: str
    spectral_radius: float
    margins: Margins | None
    requirements: tuple[RequirementResult, ...]

    @property
    def requirements_met(self) -> bool:
        return self.verdict == "stable" and all(r.met for r in self.requirements)

    def to_dict(self) -> dict[str, Any]:
        m = self.margins
        return {
            "verdict": self.verdict,
            "spectral_radius": self.spectral_radius,
            **_margin_values(m),
            "requirements_met": self.requirements_met,
            "requirements": [r.to_dict() for r in self.requirements],
        }


@dataclass(frozen=True)
class QuantizeResult:
    """Every realisation and word length tried for one case.

    Attributes
    ----------
    title : str
        Case title.
    period_s : float [s]
        Sample period.
    rounding : {"nearest", "floor"}
        Rounding of coefficients and data path.
    word_bits : tuple of int
        Word lengths tried, ascending.
    controller_b, controller_a : tuple of Fraction
        The controller before rounding (ascending powers of z^-1).
    reference : ReferenceResult
        The unrounded loop.
    structures : tuple of StructureResult
    has_requirements : bool
        Whether the case states requirements (otherwise "requirements met" means stable).
    """

    title: str
    case: str | None
    period_s: float
    rounding: Rounding
    word_bits: tuple[int, ...]
    controller_b: tuple[Fraction, ...]
    controller_a: tuple[Fraction, ...]
    reference: ReferenceResult
    structures: tuple[StructureResult, ...]
    has_requirements: bool

    @property
    def implementable(self) -> bool:
        """Some realisation meets the requirements from some word length up to the longest tried."""
        return any(s.min_bits_requirements is not None for s in self.structures)

    def best(self) -> StructureResult | None:
        """The realisation needing the shortest word to meet the requirements (first on ties)."""
        ok = [s for s in self.structures if s.min_bits_requirements is not None]
        return min(ok, key=lambda s: s.min_bits_requirements) if ok else None  # type: ignore[arg-type,return-value]

    def to_dict(self) -> dict[str, Any]:
        best = self.best()
        return {
            "title": self.title,
            "case": self.case,
            "period_s": self.period_s,
            "rounding": self.rounding,
            "word_bits": list(self.word_bits),
            "controller": {"b": list(self.controller_b), "a": list(self.controller_a),
                           "b_float": _floats(self.controller_b), "a_float": _floats(self.controller_a)},
            "reference": self.reference.to_dict(),
            "structures": [s.to_dict() for s in self.structures],
            "has_requirements": self.has_requirements,
            "implementable": self.implementable,
            "best_structure": None if best is None else best.name,
            "best_bits": None if best is None else best.min_bits_requirements,
        }


# ---- the computation --------------------------------------------------------------------------------

def case_controller(spec: LoopSpec) -> tuple[tuple[Fraction, ...], tuple[Fraction, ...]]:
    """The case's controller in ascending powers of ``z^-1``, exact where the case is exact.

    Firmware coefficients given in the case, and a PID's update rules (exact in rational
    arithmetic, so an integrator stays exactly at ``z = 1``), are taken exactly; a continuous
    design discretised by its rule is taken as the doubles
    :func:`sampled.loop.digital_controller` produces.
    """
    c = spec.controller
    if c.kind == "digital" and c.digital is not None:
        return tuple(c.digital.b), tuple(c.digital.a)
    if c.kind == "pid" and c.pid is not None:
        num, den = c.pid.discrete(spec.period_s)  # descending powers of z, den monic
        n = len(den) - 1
        b = (Fraction(0),) * (n + 1 - len(num)) + tuple(num)  # divide by z^n: ascending in z^-1
        return b, tuple(den)
    b, a = digital_controller(spec, spec.period_s).firmware_coefficients()
    return tuple(Fraction(float(v)) for v in b), tuple(Fraction(float(v)) for v in a)


def _check_inputs(word_bits: Iterable[int], realisations: Iterable[str], rounding: str) -> tuple[list[int], list[Realisation]]:
    words = []
    for w in word_bits:
        if isinstance(w, bool) or not isinstance(w, (int, np.integer)):
            raise InputError(f"word lengths must be whole numbers, got {w!r}", "word_bits")
        if not MIN_WORD_BITS <= int(w) <= MAX_WORD_BITS:
            raise InputError(f"word lengths must be from {MIN_WORD_BITS} to {MAX_WORD_BITS} bits, got {w}", "word_bits")
        words.append(int(w))
    words = sorted(set(words))
    if not words:
        raise InputError("no word length to try", "word_bits")
    structures: list[Realisation] = []
    for r in realisations:
        if r not in REALISATIONS:
            raise InputError(f"unknown realisation {r!r}; choose from {', '.join(REALISATIONS)}", "realisations")
        if r not in structures:
            structures.append(r)  # type: ignore[arg-type]
    if not structures:
        raise InputError("no realisation to try", "realisations")
    if rounding not in ROUNDINGS:
        raise InputError(f"unknown rounding {rounding!r}; choose from {', '.join(ROUNDINGS)}", "rounding")
    return words, structures


def judge_implemented(
    spec: LoopSpec,
    impl: ImplementedController,
    *,
    with_margins: bool = True,
    plant: DiscreteSystem | None = None,
    confirm_within: float | None = None,
) -> QuantizedRow:
    """Judge the case's loop with the controller ``impl`` (its exact rounded coefficients).

    Parameters
    ----------
    spec : LoopSpec
    impl : ImplementedController
    with_margins : bool
        Compute margins.
    plant : DiscreteSystem, optional
        The plant pulse transfer :func:`sampled.loop.plant_pulse` at ``impl.period_s``, reused
        (it does not depend on the controller).
    confirm_within : float, optional
        None: confirm the verdict exactly as ``sampled check`` does (always for loops of order
        up to :data:`sampled.loop.EXACT_ORDER_LIMIT`). A number: confirm exactly only when a loop
        pole lies within that distance of the unit circle (``|1 - |z|| < confirm_within``);
        farther out the eigenvalues of the closed-loop delta matrix decide, their error being
        many orders of magnitude smaller.
    """
    ctrl = implemented_system(impl)
    if plant is None:
        loop = digital_loop(spec, impl.period_s, ctrl)
    else:
        open_loop = ctrl.series(plant)
        loop = DigitalLoop(impl.period_s, ctrl, plant, open_loop, open_loop.feedback())
    note = ""
    exact: bool | None = None
    if confirm_within is not None:
        dist = loop.closed_loop.poles().unit_circle_distance
        exact = bool(dist.size) and float(np.min(np.abs(dist))) < confirm_within
    try:
        digital = judge_digital(loop, with_margins=with_margins, exact=exact)
    except NumericalError as err:
        # The margin search could not resolve this loop's frequency response; the verdict stands
        # without margins, and margin requirements count as not met.
        digital = judge_digital(loop, with_margins=False, exact=exact)
        note = f"margins not computed: {err}"
    reqs = check_requirements(spec, digital)
    return QuantizedRow(
        impl.word_bits or 0, digital.verdict, digital.spectral_radius, digital.stability_distance,
        impl.spectral_radius, digital.margins, reqs, impl, note, digital.confirmed,
    )


def _row(
    spec: LoopSpec, b: Sequence[Fraction], a: Sequence[Fraction], name: Realisation, bits: int,
    rounding: Rounding, with_margins: bool, plant: DiscreteSystem, judged: dict[tuple[object, ...], QuantizedRow],
) -> QuantizedRow:
    try:
        impl = implement(b, a, spec.period_s, name, FixedFormat(bits, bits - 1), rounding=rounding)
    except InputError as err:
        return QuantizedRow(bits, "unrepresentable", None, None, None, None, (), None, err.detail)
    key = (name, impl.b, impl.a, impl.delta_step, impl.sections)
    seen = judged.get(key)
    if seen is None:
        row = judge_implemented(spec, impl, with_margins=with_margins, plant=plant, confirm_within=CONFIRM_WITHIN)
        judged[key] = row
        return row
    return replace(seen, bits=bits, implementation=impl)


def quantize_loop(
    spec: LoopSpec,
    word_bits: Iterable[int] = range(8, 33),
    realisations: Iterable[str] = REALISATIONS,
    *,
    rounding: Rounding = "nearest",
    with_margins: bool = True,
    progress: Progress | None = None,
) -> QuantizeResult:
    """Round the case's controller to each word length in each realisation and judge the loop.

    Parameters
    ----------
    spec : LoopSpec
        The case (its period, plant, sensor, delays and requirements).
    word_bits : iterable of int
        Word lengths to try [bits, sign included], each from 2 to 32.
    realisations : iterable of {"direct1", "direct2t", "sections", "delta"}
        Structures to try (module :mod:`sampled.realisations`).
    rounding : {"nearest", "floor"}
        Rounding of the coefficients (and of the data path the export reproduces).
    with_margins : bool
        Compute margins (needed by margin requirements; a case without requirements can skip
        them to save time).
    progress : callable, optional
        ``progress(done, total)`` after each row.

    Returns
    -------
    QuantizeResult
    """
    words, structures = _check_inputs(word_bits, realisations, rounding)
    b, a = case_controller(spec)
    reference_loop = digital_loop(spec, spec.period_s)
    ref_digital = judge_digital(reference_loop, with_margins=with_margins)
    reference = ReferenceResult(ref_digital.verdict, ref_digital.spectral_radius, ref_digital.margins,
                                check_requirements(spec, ref_digital))
    total = len(words) * len(structures)
    done = 0
    results = []
    # Rows whose rounded coefficients coincide (long words holding the case's own fixed-point
    # numbers, short words that round alike) share one judgement: the exact confirmation of a
    # loop pole on the circle is the slow part.
    judged: dict[tuple[object, ...], QuantizedRow] = {}
    for name in structures:
        rows = []
        for w in words:
            rows.append(_row(spec, b, a, name, w, rounding, with_margins, reference_loop.plant, judged))
            done += 1
            if progress is not None:
                progress(done, total)
        stable_from = smallest_word_bits(rows, lambda r: r.stable)  # type: ignore[arg-type,attr-defined]
        met_from = smallest_word_bits(rows, lambda r: r.requirements_met)  # type: ignore[arg-type,attr-defined]
        results.append(StructureResult(name, tuple(rows), stable_from, met_from))
    return QuantizeResult(
        spec.title, spec.source_path, spec.period_s, rounding, tuple(words), b, a, reference,
        tuple(results), spec.requirements.any(),
    )


def word_bits_from_text(text: str, where: str = "--bits") -> tuple[int, ...]:
    """Word lengths from ``"8-32"``, ``"16"`` or ``"12,16,24"`` (ranges and lists may mix)."""
    if not isinstance(text, str) or not text.strip():
        raise InputError("expected word lengths such as '8-32', '16' or '12,16,24'", where)
    out: list[int] = []
    for part in text.split(","):
        piece = part.strip()
        lo_text, sep, hi_text = piece.partition("-")
        try:
            lo = int(lo_text)
            hi = int(hi_text) if sep else lo
        except ValueError:
            raise InputError(f"cannot read {piece!r}; expected word lengths such as '8-32', '16' or '12,16,24'", where) from None
        if lo > hi:
            raise InputError(f"the range {piece!r} runs backwards; write the shorter word first, e.g. '{hi}-{lo}'", where)
        for w in (lo, hi):
            if not MIN_WORD_BITS <= w <= MAX_WORD_BITS:
                raise InputError(f"word length {w} is outside {MIN_WORD_BITS} to {MAX_WORD_BITS} bits", where)
        out.extend(range(lo, hi + 1))
    return tuple(sorted(set(out)))


def realisations_from_text(text: str, where: str = "--structure") -> tuple[Realisation, ...]:
    """Realisation names from a comma-separated list (``"direct1,sections"``)."""
    names = [p.strip() for p in text.split(",") if p.strip()] if isinstance(text, str) else []
    if not names:
        raise InputError(f"expected one or more of {', '.join(REALISATIONS)} separated by commas", where)
    for n in names:
        if n not in REALISATIONS:
            raise InputError(f"unknown structure {n!r}; choose from {', '.join(REALISATIONS)}", where)
    return tuple(dict.fromkeys(names))  # type: ignore[arg-type]
