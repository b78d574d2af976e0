"""Choosing the sample period: the loop across many periods, its boundaries and the largest safe period.

:func:`sweep_periods` judges the loop of a case at every period of an array at once (vectorised
assembly and eigenvalues, :mod:`sampled.sweep_batch`), confirms verdicts within rounding of the
unit circle by the exact per-period route (:func:`sampled.loop.judge_digital`), locates every
stability and requirement boundary by bracketing and Brent's method to 1e-9 relative in period, and
states the largest period that meets every requirement. :func:`stability_chart` maps stability
over period x loop-gain multiplier.

Margins cost far more than verdicts, so they are computed on a decimated subset of the periods
(every period when there are few) plus the periods next to each stability boundary; between two
computed periods whose requirement status differs the boundary is located by Brent's method on
the signed slack of the requirement. A requirement that fails and recovers again between two
computed periods is not seen; ``margin_points`` sets the density.

References
----------
R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973, chapter 4
(the zero finder used by scipy.optimize.brentq).
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., Prentice Hall, 1997,
section 2.7 (choice of sampling interval) and section 3.2 (stability of sampled loops).
"""

from __future__ import annotations

import math
from fractions import Fraction
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.optimize

from sampled.casefile import LoopSpec
from sampled.errors import InputError
from sampled.frequency import discrete_loop_state_space
from sampled.loop import (
    EXACT_ORDER_LIMIT,
    ContinuousResult,
    DigitalResult,
    check_requirements,
    continuous_design,
    digital_loop,
    judge_continuous,
    judge_digital,
)
from sampled.margins import Margins, loop_margins
from sampled import poly as P
from sampled.charpoly import characteristic_polynomial
from sampled.criteria.unit_circle import circle_counts
from sampled.sweep_batch import closed_loop_eigen, loop_groups, prepare_loop

#: Boundaries are located to this relative accuracy in period.
BOUNDARY_RTOL = 1e-9
#: Default number of periods at which margins are computed (all periods when there are fewer).
MARGIN_POINTS = 41
#: Default sweep when the case has no [sweep] table: this factor below and above the case period.
DEFAULT_BELOW, DEFAULT_ABOVE, DEFAULT_POINTS = 10.0, 20.0, 300
#: Default loop-gain multipliers of the stability chart.
DEFAULT_GAIN_FROM, DEFAULT_GAIN_TO, DEFAULT_GAIN_POINTS = 0.25, 4.0, 41

Progress = Callable[[int, int], None]


@dataclass(frozen=True)
class Boundary:
    """A period where the loop changes: ``kind`` is ``"stability"`` or a requirement name.

    ``becomes`` is the state for periods just ABOVE ``period_s``: ``"unstable"``, ``"stable"``,
    ``"marginal"``, ``"not met"`` or ``"met"``.
    """

    period_s: float
    kind: str
    becomes: str
    detail: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"period": self.period_s, "kind": self.kind, "becomes": self.becomes, "detail": self.detail}


@dataclass(frozen=True)
class SweepResult:
    """The loop of one case across a range of periods. Arrays are aligned with ``periods_s``."""

    periods_s: np.ndarray
    verdicts: tuple[str, ...]
    spectral_radius: np.ndarray
    stability_distance: np.ndarray  # 1 - spectral radius, computed without cancellation
    gain_margin_db: np.ndarray  # NaN where not computed (see margins_computed)
    phase_margin_deg: np.ndarray
    delay_margin_s: np.ndarray
    sensitivity_peak: np.ndarray
    margins_computed: np.ndarray  # bool
    requirements_met: dict[str, np.ndarray]  # name -> bool array, plus "all"
    requirement_limits: dict[str, float | str]
    continuous: ContinuousResult | None
    boundaries: tuple[Boundary, ...]
    stable_intervals: tuple[tuple[float, float], ...]
    meeting_intervals: tuple[tuple[float, float], ...]
    largest_period_meeting_requirements: float | None
    largest_stable_period: float | None
    case_period_s: float
    title: str = ""
    confirmed_exactly: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    notes: tuple[str, ...] = ()

    @property
    def stable(self) -> np.ndarray:
        return np.array([v == "stable" for v in self.verdicts], dtype=bool)

    @property
    def limited_by_range(self) -> bool:
        """True when the loop still meets every requirement at the longest period swept."""
        all_met = self.requirements_met.get("all")
        return bool(all_met is not None and all_met.size and all_met[-1])

    def to_dict(self) -> dict[str, Any]:
        c = self.continuous
        cont = None
        if c is not None:
            m = c.margins
            cont = {"verdict": c.verdict, "method": c.method,
                    "gain_margin_db": None if m is None else m.gain_margin_db,
                    "phase_margin_deg": None if m is None else m.phase_margin_deg,
                    "delay_margin_s": None if m is None else m.delay_margin_s,
                    "sensitivity_peak": None if m is None else m.sensitivity_peak}
        return {
            "title": self.title,
            "case_period_s": self.case_period_s,
            "periods": self.periods_s,
            "verdicts": list(self.verdicts),
            "spectral_radius": self.spectral_radius,
            "stability_distance": self.stability_distance,
            "confirmed_exactly": self.confirmed_exactly,
            "gain_margin_db": self.gain_margin_db,
            "phase_margin_deg": self.phase_margin_deg,
            "delay_margin_s": self.delay_margin_s,
            "sensitivity_peak": self.sensitivity_peak,
            "margins_computed": self.margins_computed,
            "requirements_met": {k: v for k, v in self.requirements_met.items()},
            "requirement_limits": dict(self.requirement_limits),
            "continuous": cont,
            "boundaries": [b.to_dict() for b in self.boundaries],
            "stable_intervals": [list(iv) for iv in self.stable_intervals],
            "meeting_intervals": [list(iv) for iv in self.meeting_intervals],
            "largest_period_meeting_requirements": self.largest_period_meeting_requirements,
            "largest_stable_period": self.largest_stable_period,
            "limited_by_range": self.limited_by_range,
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class StabilityChart:
    """Stability over period x loop-gain multiplier; 2-D arrays are indexed ``[gain, period]``.

    ``near_boundary`` marks cells whose float verdict lies within rounding of the unit circle.
    """

    periods_s: np.ndarray
    gains: np.ndarray
    spectral_radius: np.ndarray
    stable: np.ndarray
    near_boundary: np.ndarray
    design_point: tuple[float, float]

    def to_dict(self) -> dict[str, Any]:
        return {"periods": self.periods_s, "gains": self.gains, "spectral_radius": self.spectral_radius,
                "stable": self.stable, "near_boundary": self.near_boundary,
                "design_point": {"period": self.design_point[0], "gain": self.design_point[1]}}


# ---- ranges --------------------------------------------------------------------------------------

def default_periods(spec: LoopSpec) -> np.ndarray:
    """Log-spaced periods [s] from the case's [sweep] table, else ``T/10 .. 20 T`` around its period.

    Without ``to`` in the case, the range stops short of the period whose Nyquist frequency is a
    Tustin prewarp frequency (the mapping is undefined beyond it).
    """
    sw = spec.sweep
    lo = sw.from_s if sw.from_s is not None else spec.period_s / DEFAULT_BELOW
    hi = sw.to_s if sw.to_s is not None else spec.period_s * DEFAULT_ABOVE
    prewarp = spec.controller.prewarp_rad_s if spec.controller.kind == "transfer" else None
    if sw.to_s is None and prewarp is not None:
        hi = min(hi, 0.99 * math.pi / prewarp)  # a Tustin prewarp needs it below the Nyquist frequency
    if not lo < hi:
        raise InputError(f"the sweep must run from a shorter to a longer period (got {lo:g} s to {hi:g} s)", "sweep")
    points = sw.points if sw.points is not None else DEFAULT_POINTS
    return np.geomspace(lo, hi, points)


def default_gains(spec: LoopSpec, points: int = DEFAULT_GAIN_POINTS) -> np.ndarray:
    """Log-spaced loop-gain multipliers from [sweep] gain_from/gain_to, else 0.25 .. 4."""
    g0 = spec.sweep.gain_from if spec.sweep.gain_from is not None else DEFAULT_GAIN_FROM
    g1 = spec.sweep.gain_to if spec.sweep.gain_to is not None else DEFAULT_GAIN_TO
    return np.geomspace(g0, g1, points)


# ---- per-period evaluation -----------------------------------------------------------------------

class _Point:
    """Verdicts and margins at single periods, cached (used near boundaries and on the margin subset)."""

    def __init__(self, spec: LoopSpec) -> None:
        self.spec = spec
        self.prep = prepare_loop(spec)
        self._verdict: dict[float, str] = {}
        self._margins: dict[float, tuple[str, Margins | None, dict[str, tuple[bool, float]]]] = {}

    def distance(self, t: float) -> float:
        groups = loop_groups(self.prep, np.array([t]))
        return float(closed_loop_eigen(groups, 1).distance[0])

    def exact_verdict(self, t: float) -> str:
        """The verdict of the per-period route (``sampled check``): assembled there, counted exactly."""
        if t not in self._verdict:
            self._verdict[t] = judge_digital(digital_loop(self.spec, t), with_margins=False).verdict
        return self._verdict[t]

    def exact_count(self, t: float) -> str:
        """Exact unit-circle count on the characteristic polynomial of the batched closed-loop matrix."""
        a_cl = loop_groups(self.prep, np.array([t]))[0].closed_loop()[0]
        if a_cl.shape[0] == 0:
            return "stable"
        lam_poly = characteristic_polynomial(a_cl)
        z_poly = P.compose_mobius(lam_poly, (Fraction(1), Fraction(-1)), (Fraction(t),))  # lambda = (z - 1)/T
        return circle_counts(z_poly).verdict

    def verdict(self, t: float) -> str:
        groups = loop_groups(self.prep, np.array([t]))
        ev = closed_loop_eigen(groups, 1)
        if abs(ev.distance[0]) <= ev.tolerance[0]:
            return self.exact_verdict(t)
        return "stable" if ev.distance[0] > 0 else "unstable"

    def requirements(self, t: float, verdict: str | None = None) -> tuple[str, Margins | None, dict[str, tuple[bool, float]]]:
        """``(verdict, margins, {name: (met, slack)})`` at period ``t`` [s]; slack >= 0 when met."""
        if t in self._margins:
            return self._margins[t]
        v = verdict if verdict is not None else self.verdict(t)
        groups = loop_groups(self.prep, np.array([t]))
        ol = groups[0].open_loop
        lg = discrete_loop_state_space(ol.a[0], ol.b[0], ol.c[0], np.array([[ol.d[0]]]), t,
                                       delay_samples=ol.delay, form="delta")
        m = loop_margins(lg, closed_loop_stable=(v == "stable"))
        fake = DigitalResult(v, np.zeros(0, dtype=complex), np.zeros(0), math.nan, m, None, "eigenvalues", 0)
        out: dict[str, tuple[bool, float]] = {}
        for r in check_requirements(self.spec, fake):
            out[r.name] = (r.met, _slack(r.name, r.value, r.limit, v == "stable"))
        self._margins[t] = (v, m, out)
        return self._margins[t]


def _slack(name: str, value: float | None, limit: float, stable: bool) -> float:
    """Signed slack of a requirement squashed into (-1, 1]: >= 0 exactly when it is met."""
    if not stable or value is None or math.isnan(value):
        return -1.0
    s = (limit - value) if name == "sensitivity_peak" else (value - limit)
    if math.isinf(s):
        return 1.0 if s > 0 else -1.0
    if name == "delay_margin_s" and limit > 0:
        s = s / limit  # seconds are tiny numbers; keep the squashing meaningful
    return s / (1.0 + abs(s))


def _brent(f: Callable[[float], float], lo: float, hi: float) -> float:
    return float(scipy.optimize.brentq(f, lo, hi, xtol=BOUNDARY_RTOL * lo * 0.1, rtol=1e-12, maxiter=200))


# ---- the sweep -----------------------------------------------------------------------------------

def sweep_periods(
    spec: LoopSpec,
    periods_s: np.ndarray,
    *,
    with_margins: bool = True,
    progress: Progress | None = None,
    margin_points: int = MARGIN_POINTS,
) -> SweepResult:
    """Judge the loop of ``spec`` at every period in ``periods_s`` and locate its boundaries.

    Parameters
    ----------
    spec : LoopSpec
        The case (its own period only marks the design point).
    periods_s : ndarray [s]
        Periods to judge; sorted ascending and de-duplicated here.
    with_margins : bool
        Compute margins and requirement status (on a decimated subset; see the module docstring).
    progress : callable(done, total), optional
        Called as work proceeds (the total may grow while boundaries are being located).
    margin_points : int
        Number of periods, spread evenly in the (log-spaced) index, at which margins are computed.

    Returns
    -------
    SweepResult

    Notes
    -----
    A verdict is taken from the closed-loop delta eigenvalues when ``|1 - |z||`` exceeds its
    rounding band ``1e-10 max |lambda T|``, and from the exact characteristic-polynomial count of
    :func:`sampled.loop.judge_digital` otherwise, so every verdict equals the per-period
    ``sampled check`` verdict.
    """
    periods = np.unique(np.asarray(periods_s, dtype=float).reshape(-1))
    if periods.size == 0:
        raise InputError("the sweep needs at least one period", "periods")
    if not (np.all(np.isfinite(periods)) and periods[0] > 0):
        raise InputError("every period of the sweep must be finite and positive", "periods")
    k = periods.size
    work = [0, 1]

    def tick(extra_total: int = 0, done: int = 1) -> None:
        work[1] += extra_total
        work[0] += done
        if progress is not None:
            progress(min(work[0], work[1]), work[1])

    point = _Point(spec)
    groups = loop_groups(point.prep, periods)
    ev = closed_loop_eigen(groups, k)
    verdicts = np.where(ev.distance > 0, "stable", "unstable").astype(object)
    near = np.abs(ev.distance) <= ev.tolerance
    near_idx = np.nonzero(near)[0]
    tick(int(near_idx.size), 1)
    for i in near_idx:
        verdicts[i] = point.exact_verdict(float(periods[i]))
        tick()
    stable = verdicts == "stable"
    notes: list[str] = []

    # Stability boundaries: between neighbours whose verdicts differ.
    boundaries: list[Boundary] = []
    stab_cross: dict[int, float] = {}
    flips = np.nonzero(verdicts[:-1] != verdicts[1:])[0]
    tick(int(flips.size), 0)
    for i in flips:
        b = _stability_boundary(point, float(periods[i]), float(periods[i + 1]), str(verdicts[i]), str(verdicts[i + 1]))
        boundaries.append(b)
        stab_cross[int(i)] = b.period_s
        tick()

    nan = np.full(k, np.nan)
    gm, pm, dm, sp = nan.copy(), nan.copy(), nan.copy(), nan.copy()
    computed = np.zeros(k, dtype=bool)
    req_met: dict[str, np.ndarray] = {}
    limits: dict[str, float | str] = {}
    req = spec.requirements
    if req.gain_margin_db is not None:
        limits["gain_margin_db"] = req.gain_margin_db
    if req.phase_margin_deg is not None:
        limits["phase_margin_deg"] = req.phase_margin_deg
    if req.delay_margin is not None:
        dmr = req.delay_margin
        limits["delay_margin_s"] = f"{dmr.samples:g} sample" if dmr.samples is not None else float(dmr.seconds or 0.0)
    if req.sensitivity_peak is not None:
        limits["sensitivity_peak"] = req.sensitivity_peak
    crossings: dict[str, dict[int, float]] = {}

    if with_margins:
        subset = set(np.unique(np.round(np.linspace(0, k - 1, min(k, max(2, margin_points)))).astype(int)).tolist())
        for i in flips:
            subset.update((int(i), int(i) + 1))
        subset_idx = sorted(subset)
        tick(len(subset_idx), 0)
        status: dict[int, dict[str, tuple[bool, float]]] = {}
        for i in subset_idx:
            t = float(periods[i])
            if stable[i]:
                _, m, st = point.requirements(t, "stable")
                assert m is not None
                gm[i], pm[i], dm[i], sp[i] = m.gain_margin_db, m.phase_margin_deg, m.delay_margin_s, m.sensitivity_peak
                computed[i] = True
            else:
                st = {name: (False, -1.0) for name in limits}
            status[i] = st
            tick()
        for name in limits:
            met = np.zeros(k, dtype=bool)
            crossings[name] = {}
            for a, b in zip(subset_idx[:-1], subset_idx[1:]):
                ma, mb = status[a][name][0], status[b][name][0]
                met[a], met[b] = ma, mb
                if ma == mb:
                    met[a:b + 1] = ma
                    continue
                if b == a + 1 and a in stab_cross:  # the requirement changes with stability itself
                    cross = stab_cross[a]
                    detail = "at the stability boundary"
                else:
                    tick(1, 0)
                    cross = _brent(lambda t, nm=name: point.requirements(t)[2][nm][1],
                                   float(periods[a]), float(periods[b]))
                    detail = "located by Brent's method on the requirement's slack"
                    tick()
                inside = periods[a:b + 1]
                met[a:b + 1] = np.where(inside < cross, ma, mb)
                crossings[name][a] = cross
                boundaries.append(Boundary(cross, name, "met" if mb else "not met", detail))
            if len(subset_idx) == 1:
                met[subset_idx[0]] = status[subset_idx[0]][name][0]
            req_met[name] = met
        # Margins also at the swept periods on both sides of every boundary (the rows readers look at).
        for b in boundaries:
            j = int(np.searchsorted(periods, b.period_s))
            for i in (j - 1, j):
                if 0 <= i < k and stable[i] and not computed[i]:
                    _, m, _ = point.requirements(float(periods[i]), "stable")
                    assert m is not None
                    gm[i], pm[i], dm[i], sp[i] = m.gain_margin_db, m.phase_margin_deg, m.delay_margin_s, m.sensitivity_peak
                    computed[i] = True
        all_met = stable.copy()
        for met in req_met.values():
            all_met &= met
        req_met["all"] = all_met
    elif limits:
        notes.append("requirements not evaluated (margins were not computed)")
    else:
        req_met["all"] = stable.copy()

    if with_margins and computed.sum() < k:
        notes.append(f"margins computed at {int(computed.sum())} of {k} periods (stable ones of an evenly spread "
                     "subset and those next to each boundary); requirement boundaries between them located by "
                     "Brent's method")
    boundaries.sort(key=lambda b: (b.period_s, b.kind))
    stable_iv = _intervals(periods, stable, [b for b in boundaries if b.kind == "stability"])
    meeting_iv: tuple[tuple[float, float], ...] = ()
    if "all" in req_met:
        meeting_iv = _intervals(periods, req_met["all"], boundaries)
    largest_meeting = meeting_iv[-1][1] if meeting_iv else None
    largest_stable = stable_iv[-1][1] if stable_iv else None

    cont = None
    design = continuous_design(spec)
    if design is not None:
        cont = judge_continuous(design, with_margins=with_margins)
    confirmed = np.zeros(k, dtype=bool)
    confirmed[near_idx] = True
    return SweepResult(
        periods_s=periods,
        verdicts=tuple(str(v) for v in verdicts),
        spectral_radius=ev.spectral_radius,
        stability_distance=ev.distance,
        gain_margin_db=gm,
        phase_margin_deg=pm,
        delay_margin_s=dm,
        sensitivity_peak=sp,
        margins_computed=computed,
        requirements_met=req_met,
        requirement_limits=limits,
        continuous=cont,
        boundaries=tuple(boundaries),
        stable_intervals=stable_iv,
        meeting_intervals=meeting_iv,
        largest_period_meeting_requirements=largest_meeting,
        largest_stable_period=largest_stable,
        case_period_s=spec.period_s,
        title=spec.title,
        confirmed_exactly=confirmed,
        notes=tuple(notes),
    )


def _stability_boundary(point: _Point, lo: float, hi: float, below: str, above: str) -> Boundary:
    """Locate the period in ``(lo, hi)`` where the verdict changes from ``below`` to ``above``."""
    f_lo, f_hi = point.distance(lo), point.distance(hi)
    if f_lo == 0.0 or f_hi == 0.0 or (f_lo > 0) == (f_hi > 0):
        # The change is a marginal verdict within rounding at one end: report that end.
        at = hi if below == "stable" else lo
        return Boundary(at, "stability", above, f"{above} at this period (a pole within rounding of the unit circle)")
    root = _brent(point.distance, lo, hi)
    step = 0.5 * BOUNDARY_RTOL * root
    left, right = max(lo, root - step), min(hi, root + step)
    order = loop_groups(point.prep, np.array([root]))[0].loop_a.shape[1]
    if order > EXACT_ORDER_LIMIT:
        return Boundary(root, "stability", above, f"spectral radius crosses 1 (eigenvalues of the order-{order} "
                        f"closed loop; exact counts are formed up to order {EXACT_ORDER_LIMIT})")
    v_left, v_right = point.exact_count(left), point.exact_count(right)
    if v_left == below and v_right == above:
        detail = f"spectral radius crosses 1; exact count {below} at {left:.12g} s and {above} at {right:.12g} s"
    else:
        detail = (f"spectral radius crosses 1 (eigenvalues); the exact count gives {v_left} and {v_right} "
                  "on either side, within rounding of the boundary")
    return Boundary(root, "stability", above, detail)


def _intervals(periods: np.ndarray, ok: np.ndarray, boundaries: list[Boundary]) -> tuple[tuple[float, float], ...]:
    """Maximal runs of ``ok`` as ``(low, high)`` periods, ends moved to the located boundaries."""
    out: list[tuple[float, float]] = []
    k = periods.size
    i = 0
    while i < k:
        if not ok[i]:
            i += 1
            continue
        j = i
        while j + 1 < k and ok[j + 1]:
            j += 1
        low = float(periods[i]) if i == 0 else _cross(periods[i - 1], periods[i], boundaries, last=True)
        high = float(periods[j]) if j == k - 1 else _cross(periods[j], periods[j + 1], boundaries, last=False)
        out.append((low, high))
        i = j + 1
    return tuple(out)


def _cross(lo: float, hi: float, boundaries: list[Boundary], *, last: bool) -> float:
    """The boundary inside ``[lo, hi]`` that ends (``last=False``: the first) or starts (the last) a run."""
    inside = [b.period_s for b in boundaries if lo <= b.period_s <= hi]
    if not inside:
        return float(hi if last else lo)
    return float(max(inside) if last else min(inside))


# ---- the stability chart -------------------------------------------------------------------------

def stability_chart(spec: LoopSpec, periods_s: np.ndarray, gain_multipliers: np.ndarray) -> StabilityChart:
    """Stability over period x loop-gain multiplier ``g`` (the loop gain ``g C(z) z^-d G(z)``).

    Float verdicts from the closed-loop delta eigenvalues; cells within rounding of the unit circle
    are flagged in ``near_boundary`` (the chart is a map, not a certificate: use
    :func:`sweep_periods` or ``sampled check`` for a confirmed verdict at a point).
    """
    periods = np.asarray(periods_s, dtype=float).reshape(-1)
    gains = np.asarray(gain_multipliers, dtype=float).reshape(-1)
    if gains.size == 0 or not (np.all(np.isfinite(gains)) and np.all(gains > 0)):
        raise InputError("gain multipliers must be finite and positive", "gains")
    groups = loop_groups(prepare_loop(spec), periods)
    radius = np.zeros((gains.size, periods.size))
    stable = np.zeros((gains.size, periods.size), dtype=bool)
    near = np.zeros((gains.size, periods.size), dtype=bool)
    for i, g in enumerate(gains):
        ev = closed_loop_eigen(groups, periods.size, float(g))
        radius[i] = ev.spectral_radius
        stable[i] = ev.distance > 0
        near[i] = np.abs(ev.distance) <= ev.tolerance
    return StabilityChart(periods, gains, radius, stable, near, (spec.period_s, 1.0))
