"""The loop as it will run: assembly at a sample period and its assessment.

Signal path (see DEVELOPERS.md)::

    r[k] -> (+) -> e[k] -> C(z) -> z^-d -> hold -> P(s) e^(-s L) -> F(s) -> sample -> y_m[k]
             ^ -                                                                      |
             +------------------------------------------------------------------------+

* The pulse transfer from the controller output u[k] to the measurement y_m[k] is the zero-order
  hold equivalent of ``F(s) P(s)`` behind the total delay ``L + compute delay`` (whole periods as
  ``z^-N``, the fraction by state augmentation).
* The controller is discretised by its rule (transfer + method), built from its PID update rules,
  or taken exactly as the firmware coefficients.
* The closed loop is formed in delta form, so its poles stay accurate at fast sampling; the verdict
  is confirmed exactly on the characteristic polynomial of the closed-loop matrix as stored.
* The continuous counterpart ``C(s) F(s) P(s) e^(-s L)`` (when a continuous design exists) is judged
  by the Nyquist criterion with the exact delay, or by the exact Routh array when there is no delay.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import numpy as np

from sampled import poly as P
from sampled.casefile import LoopSpec
from sampled.charpoly import characteristic_polynomial
from sampled.criteria.routh import routh_array
from sampled.discrete import DiscreteSystem
from sampled.discretize import discretize, zoh_with_delay
from sampled.errors import InputError, NumericalError
from sampled.findings import Finding
from sampled.frequency import continuous_loop, discrete_loop_state_space
from sampled.margins import Margins, loop_margins
from sampled.nyquist import count_right_half_plane, pade
from sampled.systems import ContinuousSystem, accurate_roots, cascade
from sampled.verdict import Verdict, judge_s, judge_z

#: Poles with |1 - |z|| below this are judged by the exact route before a verdict is given.
NEAR_CIRCLE = 1e-9
#: Largest closed-loop order whose exact characteristic polynomial is always formed.
EXACT_ORDER_LIMIT = 16
#: Largest order for which a near-circle verdict is still confirmed exactly (cost grows as n^4).
EXACT_ORDER_NEAR_LIMIT = 40
#: Largest number of whole-sample delays modelled as states (each adds one closed-loop pole).
MAX_DELAY_SAMPLES = 300
#: Pade order used to show continuous closed-loop poles of a loop with a transport delay.
PADE_ORDER = 4


# ---- assembly --------------------------------------------------------------------------------------

def path_system(spec: LoopSpec) -> ContinuousSystem:
    """``F(s) P(s)``: the continuous path from the hold to the sampler, transport delays summed."""
    parts = [spec.plant] + ([spec.sensor] if spec.sensor is not None else [])
    delay = sum(p.delay_s for p in parts)
    rational = [p.with_delay(0.0) for p in parts]
    if len(rational) == 1:
        out = rational[0]
    else:
        num, den = P.ONE, P.ONE
        for p in rational:
            num, den = P.mul(num, p.num_exact), P.mul(den, p.den_exact)
        # Keep every mode of the path: do not cancel (a sensor zero on a plant pole still leaves the mode).
        if spec.plant.given_state_space is not None and spec.sensor is None:
            out = spec.plant.with_delay(0.0)
        else:
            out = ContinuousSystem(num, den)
    return out.with_delay(delay)


def compute_delay_s(spec: LoopSpec, period_s: float) -> float:
    return spec.compute_delay.in_seconds(period_s)


def plant_pulse(spec: LoopSpec, period_s: float) -> DiscreteSystem:
    """Zero-order-hold pulse transfer from u[k] to y_m[k], transport and computation delays included."""
    path = path_system(spec)
    total = path.delay_s + compute_delay_s(spec, period_s)
    return zoh_with_delay(path, period_s, total)


def digital_controller(spec: LoopSpec, period_s: float) -> DiscreteSystem:
    """The controller as it runs at ``period_s``."""
    c = spec.controller
    if c.kind == "transfer":
        assert c.transfer is not None
        prewarp = c.prewarp_rad_s
        if prewarp is not None and prewarp >= math.pi / period_s:
            raise InputError(
                f"the prewarp frequency {prewarp / (2 * math.pi):.6g} Hz is at or above the Nyquist "
                f"frequency {0.5 / period_s:.6g} Hz at this period",
                "controller.prewarp",
            )
        return discretize(c.transfer, period_s, c.method, prewarp)
    if c.kind == "pid":
        assert c.pid is not None
        num, den = c.pid.discrete(period_s)
        return DiscreteSystem.from_transfer(P.to_float(num), P.to_float(den), period_s, "pid")
    assert c.digital is not None
    return DiscreteSystem.from_firmware(P.to_float(c.digital.b), P.to_float(c.digital.a), period_s, "controller.digital")


@dataclass(frozen=True, eq=False)
class DigitalLoop:
    """The sampled loop at one period: controller, plant pulse transfer, open and closed loop."""

    period_s: float
    controller: DiscreteSystem
    plant: DiscreteSystem
    open_loop: DiscreteSystem
    closed_loop: DiscreteSystem


def digital_loop(spec: LoopSpec, period_s: float | None = None, controller: DiscreteSystem | None = None) -> DigitalLoop:
    """Assemble the sampled loop at ``period_s`` (default: the case's period).

    ``controller`` replaces the case's controller (used to judge quantised coefficients).
    """
    t = spec.period_s if period_s is None else period_s
    if not (math.isfinite(t) and t > 0):
        raise InputError(f"the period must be finite and positive, got {t!r}", "period")
    total_delay = path_system(spec).delay_s + compute_delay_s(spec, t)
    if total_delay / t > MAX_DELAY_SAMPLES:
        raise InputError(
            f"the plant and computation delays add up to {total_delay / t:.0f} sample periods at T = {t:g} s; "
            f"at most {MAX_DELAY_SAMPLES} are modelled (each is a closed-loop pole): use a longer period",
            "timing.period",
        )
    ctrl = controller if controller is not None else digital_controller(spec, t)
    plant = plant_pulse(spec, t)
    open_loop = ctrl.series(plant)
    closed = open_loop.feedback()
    return DigitalLoop(t, ctrl, plant, open_loop, closed)


# ---- verdicts --------------------------------------------------------------------------------------

@dataclass(frozen=True)
class DigitalResult:
    """Verdict, poles and margins of the sampled loop."""

    verdict: str
    poles: np.ndarray  # closed-loop poles in z
    unit_circle_distance: np.ndarray  # 1 - |z| per pole, aligned with poles
    spectral_radius: float
    margins: Margins | None
    exact: Verdict | None  # exact judgement of the closed-loop characteristic polynomial
    confirmed: str  # "exact" | "eigenvalues" | "not confirmed"
    order: int
    notes: tuple[str, ...] = ()
    #: det(lambda I - A_delta) of the closed loop, exact for the matrix as stored: the well-conditioned
    #: polynomial (its roots lambda = (z - 1)/T tend to the continuous poles as T -> 0).
    delta_polynomial: P.ExactPoly | None = None

    @property
    def stability_distance(self) -> float:
        return float(np.min(self.unit_circle_distance)) if self.unit_circle_distance.size else 1.0

    def to_dict(self) -> dict[str, Any]:
        m = self.margins
        out: dict[str, Any] = {
            "verdict": self.verdict,
            "spectral_radius": self.spectral_radius,
            "stability_distance": self.stability_distance,
            "poles": [[float(z.real), float(z.imag)] for z in self.poles],
            "unit_circle_distance": [float(d) for d in self.unit_circle_distance],
            "order": self.order,
            "confirmed": self.confirmed,
            "notes": list(self.notes),
        }
        out.update(_margin_fields(m))
        if m is not None:
            out["delay_margin_samples"] = m.delay_margin_samples
        if self.delta_polynomial is not None:
            out["characteristic_polynomial_delta"] = [float(c) for c in self.delta_polynomial]
        if self.exact is not None:
            e = self.exact.to_dict()
            out["exact"] = {
                "counts": e["counts"],
                "verdict": e["verdict"],
                "methods_agreeing": e["methods_agreeing"],
                "methods_disagreeing": e["methods_disagreeing"],
                "jury_first_failure": e.get("jury_first_failure"),
            }
        return out


@dataclass(frozen=True)
class ContinuousResult:
    """Verdict, poles and margins of the continuous design's loop."""

    verdict: str
    poles: np.ndarray
    poles_approximated: bool  # True when the delay was replaced by a Pade approximation for the poles
    largest_real_part: float
    margins: Margins | None
    routh_polynomial: P.ExactPoly
    routh_label: str
    routh_verdict: str
    method: str
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "verdict": self.verdict,
            "method": self.method,
            "poles": [[float(z.real), float(z.imag)] for z in self.poles],
            "poles_note": (f"from a Pade ({PADE_ORDER},{PADE_ORDER}) approximation of the delay" if self.poles_approximated else "exact"),
            "largest_real_part": self.largest_real_part,
            "routh_polynomial": P.format_poly(self.routh_polynomial, "s"),
            "routh_label": self.routh_label,
            "routh_verdict": self.routh_verdict,
            "notes": list(self.notes),
        }
        out.update(_margin_fields(self.margins))
        return out


def _margin_fields(m: Margins | None) -> dict[str, Any]:
    if m is None:
        return {k: None for k in ("gain_margin_db", "phase_margin_deg", "delay_margin_s", "sensitivity_peak",
                                  "gain_margin_frequency_rad_s", "crossover_rad_s", "margins")}
    return {
        "gain_margin_db": m.gain_margin_db,
        "gain_margin_frequency_rad_s": m.phase_crossover_rad_s,
        "phase_margin_deg": m.phase_margin_deg,
        "crossover_rad_s": m.gain_crossover_rad_s,
        "delay_margin_s": m.delay_margin_s,
        "sensitivity_peak": m.sensitivity_peak,
        "margins": m.to_dict(),
    }


def judge_digital(loop: DigitalLoop, *, with_margins: bool = True, exact: bool | None = None) -> DigitalResult:
    """Verdict of the sampled loop from the closed-loop delta matrix, confirmed exactly.

    ``exact=None`` forms the exact characteristic polynomial when the order is at most
    :data:`EXACT_ORDER_LIMIT` or a pole lies within :data:`NEAR_CIRCLE` of the circle.
    """
    closed = loop.closed_loop
    poles = closed.poles()
    dist = poles.unit_circle_distance
    z = poles.z
    radius = float(np.max(np.abs(z))) if z.size else 0.0
    worst = float(np.min(dist)) if dist.size else 1.0
    float_verdict = _verdict_from_distance(z, dist)
    near = abs(worst) < NEAR_CIRCLE
    order = closed.order
    want_exact = exact if exact is not None else (
        order <= EXACT_ORDER_LIMIT or (near and order <= EXACT_ORDER_NEAR_LIMIT))
    exact_v: Verdict | None = None
    lam_poly: P.ExactPoly | None = None
    confirmed = "eigenvalues"
    verdict = float_verdict
    notes: list[str] = []
    if want_exact and order > 0:
        lam_poly = characteristic_polynomial(closed.a_delta)
        t = Fraction(loop.period_s)
        z_poly = P.compose_mobius(lam_poly, (Fraction(1), Fraction(-1)), (t,))
        exact_v = judge_z(z_poly)
        confirmed = "exact"
        if exact_v.verdict != float_verdict:
            notes.append(
                f"the eigenvalues suggest {float_verdict}, the exact count on the closed-loop "
                f"characteristic polynomial says {exact_v.verdict}; the exact count is reported"
            )
        verdict = exact_v.verdict
    elif near:
        confirmed = "not confirmed"
        notes.append(
            f"a pole lies within {NEAR_CIRCLE:g} of the unit circle and the loop has order {order}: "
            "the verdict rests on double-precision eigenvalues only"
        )
    margins = None
    if with_margins:
        ol = loop.open_loop
        lg = discrete_loop_state_space(ol.a_delta, ol.b_delta, ol.c, ol.d, loop.period_s,
                                       delay_samples=ol.delay_samples, form="delta")
        margins = loop_margins(lg, closed_loop_stable=(verdict == "stable"))
    return DigitalResult(verdict, z, dist, radius, margins, exact_v, confirmed, order, tuple(notes) + closed.notes, lam_poly)


def _verdict_from_distance(z: np.ndarray, dist: np.ndarray) -> str:
    if dist.size == 0 or np.min(dist) > NEAR_CIRCLE:
        return "stable"
    if np.min(dist) < -NEAR_CIRCLE:
        return "unstable"
    on = z[np.abs(dist) <= NEAR_CIRCLE]
    # Repeated poles on the circle are unstable.
    for i in range(on.size):
        for j in range(i + 1, on.size):
            if abs(on[i] - on[j]) < 1e-6:
                return "unstable"
    return "marginal"


@dataclass(frozen=True)
class ContinuousDesign:
    """The continuous loop gain ``C(s) F(s) P(s) e^(-s L)`` with every mode kept."""

    num: P.ExactPoly
    den: P.ExactPoly
    delay_s: float
    notes: tuple[str, ...]


def continuous_design(spec: LoopSpec) -> ContinuousDesign | None:
    ctrl = spec.controller.continuous()
    if ctrl is None:
        return None
    parts = [ctrl, spec.plant] + ([spec.sensor] if spec.sensor is not None else [])
    num, den = P.ONE, P.ONE
    for p in parts:
        num, den = P.mul(num, p.num_exact), P.mul(den, p.den_exact)
    reduced = cascade(*[p.with_delay(0.0) for p in parts])
    delay = sum(p.delay_s for p in parts)
    return ContinuousDesign(num, den, delay, reduced.notes)


def judge_continuous(design: ContinuousDesign, *, with_margins: bool = True) -> ContinuousResult:
    """Verdict of the continuous loop: exact Routh without delay, Nyquist count with it."""
    char = P.add(design.den, _pad_to(design.num, len(design.den)))
    notes = list(design.notes)
    if design.delay_s == 0:
        v = judge_s(char)
        verdict, method = v.verdict, "Routh array (exact)"
        poles = accurate_roots(char)
        approx = False
        routh_poly, routh_label, routh_verdict = char, "characteristic polynomial", v.verdict
    else:
        pn, pd = pade(design.delay_s, PADE_ORDER)
        pn_e, pd_e = P.from_float(pn), P.from_float(pd)
        approx_char = P.add(P.mul(design.den, pd_e), P.mul(design.num, pn_e))
        poles = accurate_roots(approx_char)
        approx = True
        routh_poly = approx_char
        routh_label = f"characteristic polynomial with the delay replaced by a Pade ({PADE_ORDER},{PADE_ORDER}) approximation"
        routh_verdict = routh_array(approx_char).verdict
        try:
            count = count_right_half_plane(P.to_float(design.num), P.to_float(design.den), design.delay_s)
            verdict, method = count.verdict, "Nyquist criterion with the exact delay"
        except NumericalError as exc:
            k_inf = abs(design.num[0] / design.den[0]) if len(design.num) == len(design.den) else 0
            verdict = "unstable" if k_inf > 1 else routh_verdict
            method = "neutral delay equation" if k_inf > 1 else f"Pade ({PADE_ORDER},{PADE_ORDER}) approximation"
            notes.append(f"the Nyquist count with the exact delay was not possible: {exc}")
        if routh_verdict != verdict:
            notes.append(
                f"the Pade-approximated Routh array says {routh_verdict}; the Nyquist count with the exact "
                f"delay says {verdict} (the approximation is only good below about {PADE_ORDER}/delay rad/s)"
            )
    largest = float(np.max(poles.real)) if poles.size else -math.inf
    margins = None
    if with_margins:
        lg = continuous_loop(P.to_float(design.num), P.to_float(design.den), delay_s=design.delay_s)
        margins = loop_margins(lg, closed_loop_stable=(verdict == "stable"))
    return ContinuousResult(verdict, poles, approx, largest, margins, routh_poly, routh_label, routh_verdict, method, tuple(notes))


def _pad_to(p: P.ExactPoly, n: int) -> P.ExactPoly:
    if len(p) > n:
        raise InputError("the loop gain is improper (more zeros than poles)")
    return tuple([Fraction(0)] * (n - len(p))) + tuple(p)


# ---- requirements and the assessment ---------------------------------------------------------------

@dataclass(frozen=True)
class RequirementResult:
    name: str
    limit: float
    value: float | None
    met: bool
    unit: str
    detail: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "limit": self.limit, "value": self.value, "met": self.met,
                "unit": self.unit, "detail": self.detail}


def check_requirements(spec: LoopSpec, digital: DigitalResult) -> tuple[RequirementResult, ...]:
    """Each requirement of the case against the sampled loop (an unstable loop meets none)."""
    req = spec.requirements
    m = digital.margins
    stable = digital.verdict == "stable"
    out: list[RequirementResult] = []
    unstable_note = "" if stable else "the sampled loop is not stable, so no margin is met"
    if req.gain_margin_db is not None:
        value = abs(m.gain_margin_db) if m is not None else None
        met = stable and value is not None and value >= req.gain_margin_db
        out.append(RequirementResult("gain_margin_db", req.gain_margin_db, value, met, "dB", unstable_note))
    if req.phase_margin_deg is not None:
        value = m.phase_margin_deg if m is not None else None
        met = stable and value is not None and value >= req.phase_margin_deg
        out.append(RequirementResult("phase_margin_deg", req.phase_margin_deg, value, met, "deg", unstable_note))
    if req.delay_margin is not None:
        limit_s = req.delay_margin.in_seconds(spec.period_s if digital.margins is None else (digital.margins.period_s or spec.period_s))
        value = m.delay_margin_s if m is not None else None
        met = stable and value is not None and value >= limit_s
        out.append(RequirementResult("delay_margin_s", limit_s, value, met, "s", unstable_note))
    if req.sensitivity_peak is not None:
        value = m.sensitivity_peak if m is not None else None
        met = stable and value is not None and value <= req.sensitivity_peak
        out.append(RequirementResult("sensitivity_peak", req.sensitivity_peak, value, met, "", unstable_note))
    return tuple(out)


@dataclass(frozen=True)
class Assessment:
    """Everything `sampled check` reports for one loop at one period."""

    spec: LoopSpec
    period_s: float
    digital: DigitalResult
    continuous: ContinuousResult | None
    requirements: tuple[RequirementResult, ...]
    warnings: tuple[Finding, ...]
    loop: DigitalLoop = field(repr=False)

    @property
    def passed(self) -> bool:
        return self.digital.verdict == "stable" and all(r.met for r in self.requirements)

    def cost(self) -> dict[str, float | None]:
        """Margin lost by going digital: continuous minus digital (positive = lost)."""
        c, d = self.continuous, self.digital
        if c is None or c.margins is None or d.margins is None:
            return {}

        def diff(a: float, b: float) -> float | None:
            if math.isinf(a) and math.isinf(b):
                return 0.0
            if math.isinf(a) or math.isinf(b):
                return math.inf if math.isinf(a) else -math.inf
            return a - b

        return {
            "gain_margin_db": diff(abs(c.margins.gain_margin_db), abs(d.margins.gain_margin_db)),
            "phase_margin_deg": diff(c.margins.phase_margin_deg, d.margins.phase_margin_deg),
            "delay_margin_s": diff(c.margins.delay_margin_s, d.margins.delay_margin_s),
            "sensitivity_peak": diff(d.margins.sensitivity_peak, c.margins.sensitivity_peak),
        }

    def to_dict(self) -> dict[str, Any]:
        from sampled import __version__

        return {
            "title": self.spec.title,
            "case": self.spec.source_path,
            "period_s": self.period_s,
            "compute_delay_s": compute_delay_s(self.spec, self.period_s),
            "digital": self.digital.to_dict(),
            "continuous": None if self.continuous is None else self.continuous.to_dict(),
            "cost": self.cost(),
            "requirements": [r.to_dict() for r in self.requirements],
            "warnings": [w.to_dict() for w in self.warnings],
            "passed": self.passed,
            "controller": controller_summary(self.loop.controller),
            "version": __version__,
        }


def controller_summary(ctrl: DiscreteSystem) -> dict[str, Any]:
    try:
        b, a = ctrl.firmware_coefficients()
    except (ValueError, NumericalError):  # pragma: no cover - defensive
        return {"method": ctrl.method}
    return {"method": ctrl.method, "b": [float(x) for x in b], "a": [float(x) for x in a],
            "delay_samples": ctrl.delay_samples}


def _loop_findings(spec: LoopSpec, loop: DigitalLoop, digital: DigitalResult, continuous: ContinuousResult | None) -> list[Finding]:
    out: list[Finding] = []
    for note in list(spec.plant.notes) + (list(spec.sensor.notes) if spec.sensor else []):
        out.append(Finding("hidden-mode", note))
    for note in loop.controller.notes:
        out.append(Finding("mapping-unstable", note, "Use a shorter period or another mapping (tustin, backward-euler)."))
    if continuous is not None:
        for note in continuous.notes:
            kind = "hidden-mode" if "cancellation" in note else "continuous-unstable"
            out.append(Finding(kind, note, "", "warning" if "UNSTABLE" in note else "info"))
        if continuous.verdict != "stable":
            out.append(Finding("continuous-unstable", f"the continuous design itself is {continuous.verdict} ({continuous.method}).",
                               "Fix the continuous design first."))
        elif digital.verdict != "stable":
            out.append(Finding(
                "digital-unstable",
                f"the continuous design is stable but the loop as implemented is {digital.verdict} "
                f"(spectral radius {digital.spectral_radius:.6g}).",
                "Shorten the period, reduce the computation delay, or retune for the hold and delay lag.",
            ))
    elif digital.verdict != "stable":
        out.append(Finding("digital-unstable", f"the loop as implemented is {digital.verdict} (spectral radius {digital.spectral_radius:.6g}).",
                           "Retune the controller or shorten the period."))
    if digital.verdict == "stable" and abs(digital.stability_distance) < 1e-3:
        out.append(Finding("near-boundary", f"a closed-loop pole lies within {digital.stability_distance:.3g} of the unit circle.",
                           "Small parameter changes may destabilise the loop.", numbers={"unit_circle_distance": digital.stability_distance}))
    if digital.margins is not None and digital.verdict != "stable":
        out.append(Finding("margins-not-classical", "the sampled loop is not stable: its margins are not stability margins.", severity="info"))
    for note in digital.notes:
        out.append(Finding("near-boundary", note, severity="info"))
    return out


def assess(spec: LoopSpec, period_s: float | None = None, *, controller: DiscreteSystem | None = None,
           with_margins: bool = True, with_continuous: bool = True) -> Assessment:
    """Assemble and judge the loop at ``period_s`` (default: the case's period)."""
    t = spec.period_s if period_s is None else period_s
    loop = digital_loop(spec, t, controller)
    digital = judge_digital(loop, with_margins=with_margins)
    continuous = None
    if with_continuous:
        design = continuous_design(spec)
        if design is not None:
            continuous = judge_continuous(design, with_margins=with_margins)
    requirements = check_requirements(spec, digital)
    findings = _loop_findings(spec, loop, digital, continuous)
    partial = Assessment(spec, t, digital, continuous, requirements, tuple(findings), loop)
    from sampled.hazards import sampling_findings  # local: hazards simulates the loop assembled here
    findings.extend(sampling_findings(partial))
    return Assessment(spec, t, digital, continuous, requirements, tuple(findings), loop)
