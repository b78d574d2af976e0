"""What sampling hides: findings about the period, the anti-alias filter and the intersample output.

:func:`sampling_findings` turns an :class:`~sampled.loop.Assessment` into findings of the kinds

* ``pathological-sampling``: the period is at or near one where two plant or sensor modes land on
  one z-plane point (:mod:`sampled.hazards.pathological`);
* ``aliasing``: the anti-alias filter at the Nyquist frequency, resonances above it
  (:mod:`sampled.hazards.aliasing`);
* ``intersample-ripple``: the plant output between samples against the samples, and a hidden
  oscillation at half the sample rate (:mod:`sampled.hazards.intersample`);
* ``rule-of-thumb``: the period against the crossover, rise time and bandwidth, the hold's and the
  computation delay's phase lag, Tustin's frequency warping (:mod:`sampled.hazards.rules`);
* ``ringing-controller``: controller poles on or near the negative real axis.

Each finding carries the numbers behind it (SI units, keys naming the unit) and what to change.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from sampled.errors import NumericalError
from sampled.findings import Finding
from sampled.hazards import aliasing, intersample, pathological, rules

if TYPE_CHECKING:  # pragma: no cover
    from sampled.loop import Assessment

#: Most samples simulated for the ripple check (keeps ``assess`` fast on slow loops).
RIPPLE_MAX_SAMPLES = 1500
#: Uniform points per period of the ripple check's fine grid.
RIPPLE_POINTS_PER_PERIOD = 16

__all__ = ["sampling_findings", "pathological_findings", "aliasing_findings", "ripple_findings",
           "rule_of_thumb_findings", "ringing_findings"]


def _c(z: complex) -> list[float]:
    return [float(z.real), float(z.imag)]


def _fmt_s(x: float) -> str:
    """A time with a readable unit."""
    ax = abs(x)
    for unit, scale in (("s", 1.0), ("ms", 1e-3), ("us", 1e-6), ("ns", 1e-9)):
        if ax >= scale:
            return f"{x / scale:.4g} {unit}"
    return f"{x:.3g} s"


def _fmt_hz(w_rad_s: float) -> str:
    f = w_rad_s / (2 * math.pi)
    for unit, scale in (("MHz", 1e6), ("kHz", 1e3), ("Hz", 1.0)):
        if abs(f) >= scale:
            return f"{f / scale:.4g} {unit}"
    return f"{f:.3g} Hz"


def _fmt_rel(x: float) -> str:
    """A relative distance: percent, or scientific notation when tiny."""
    return f"{x:.2%}" if x >= 1e-4 else f"{x:.1e} (relative)"


def _fmt_mode(p: complex) -> str:
    if p.imag == 0:
        return f"{p.real:.4g}"
    return f"{p.real:.4g}{'+' if p.imag >= 0 else '-'}{abs(p.imag):.4g}j"


# ---- 1. pathological sampling ------------------------------------------------------------------------

def pathological_findings(a: Assessment) -> list[Finding]:
    """Nearest pathological period of the plant-and-sensor modes, with the PBH confirmation."""
    from sampled.simulate import path_state_space

    (am, bm, cm, _), _, _ = path_state_space(a.spec)
    check = pathological.nearest_pathological(am, bm, cm, a.period_s)
    if check is None:
        return []
    t = a.period_s
    pair, tk, rel = check.pair, check.pathological_period_s, check.relative_distance
    rank = check.rank
    numbers: dict[str, Any] = {
        "period_s": t,
        "pathological_period_s": tk,
        "multiple": check.multiple,
        "relative_distance": rel,
        "distance_s": t - tk,
        "mode_a": _c(pair.mode_a),
        "mode_b": _c(pair.mode_b),
        "mode_spacing_rad_s": pair.spacing_rad_s,
        "controllability_sampled": rank.controllability,
        "observability_sampled": rank.observability,
        "controllability_continuous": rank.continuous_controllability,
        "observability_continuous": rank.continuous_observability,
        "retained_fraction": rank.retained,
        "rank_loss_confirmed": rank.lost,
        "criterion": (f"Im(p_a - p_b) T = 2 pi k; warn within {pathological.WARN_RELATIVE_DISTANCE:.0%}; "
                      f"rank loss when the sampled/continuous PBH measure <= {pathological.RANK_LOSS_TOLERANCE:g}"),
    }
    modes = f"s = {_fmt_mode(pair.mode_a)} and s = {_fmt_mode(pair.mode_b)}"
    if rank.retained >= 0.5:
        pbh = "PBH rank test of the sampled plant at this period: no loss"
    else:
        pbh = (f"PBH rank test of the sampled plant at this period: {rank.retained:.3g} of the mode's continuous "
               f"controllability/observability remains")
    lo = tk * (1 - 2 * pathological.WARN_RELATIVE_DISTANCE)
    advice = (f"Move the period away from {_fmt_s(tk)} (outside about {_fmt_s(lo)} to "
              f"{_fmt_s(tk * (1 + 2 * pathological.WARN_RELATIVE_DISTANCE))}); below "
              f"{_fmt_s(pair.period_s(1))} no period of this pair is pathological. Damping the mode also helps.")
    if rank.lost:
        msg = (f"pathological sampling: the period {_fmt_s(t)} is {_fmt_rel(rel)} from {_fmt_s(tk)} = {check.multiple} x 2 pi / "
               f"{pair.spacing_rad_s:.6g} rad/s, where the modes {modes} land on the same z-plane point; the sampled "
               f"plant has lost controllability or observability of that mode, confirmed: {pbh}.")
        return [Finding("pathological-sampling", msg, advice, "warning", numbers)]
    if rel <= pathological.WARN_RELATIVE_DISTANCE:
        msg = (f"the period {_fmt_s(t)} is within {_fmt_rel(rel)} of the pathological period {_fmt_s(tk)} of the modes {modes}: "
               f"the sampled plant nearly loses that mode ({pbh}).")
        return [Finding("pathological-sampling", msg, advice, "warning", numbers)]
    side = "below" if t < tk else "above"
    msg = (f"the nearest pathological period (modes {modes}) is {_fmt_s(tk)}; the period {_fmt_s(t)} is "
           f"{rel:.1%} {side} it ({pbh}).")
    return [Finding("pathological-sampling", msg, "", "info", numbers)]


# ---- 2. aliasing ---------------------------------------------------------------------------------------

def _crossover(a: Assessment) -> float | None:
    """Gain crossover of the loop as implemented, else of the continuous design."""
    return _crossover_with_source(a)[0]


def _crossover_with_source(a: Assessment) -> tuple[float | None, str]:
    m = a.digital.margins
    if m is not None and m.gain_crossover_rad_s:
        return float(m.gain_crossover_rad_s), "loop as implemented"
    if a.continuous is not None and a.continuous.margins is not None and a.continuous.margins.gain_crossover_rad_s:
        return float(a.continuous.margins.gain_crossover_rad_s), "continuous design"
    return None, ""


def aliasing_findings(a: Assessment) -> list[Finding]:
    """The anti-alias filter at Nyquist and resonances of the sensor path above Nyquist."""
    from sampled.loop import path_system

    out: list[Finding] = []
    t = a.period_s
    wn = math.pi / t
    wc = _crossover(a)
    crit = (f"|F(j w_N)/F(0)| <= -{aliasing.ANTI_ALIAS_ATTENUATION_DB:g} dB at w_N = pi/T "
            "(common practice, no source)")
    if a.spec.sensor is None:
        out.append(Finding(
            "aliasing",
            f"no [sensor] filter is given: measurement noise at and above the Nyquist frequency {_fmt_hz(wn)} "
            "folds back into the loop unattenuated (unless the sensor itself filters).",
            f"Describe the sensor's filter in [sensor], or add an anti-alias filter attenuating at least "
            f"{aliasing.ANTI_ALIAS_ATTENUATION_DB:g} dB at {_fmt_hz(wn)}.",
            "info",
            {"nyquist_rad_s": wn, "attenuation_db": 0.0, "criterion": crit},
        ))
    else:
        fc = aliasing.filter_check(a.spec.sensor, t, wc)
        numbers = {"nyquist_rad_s": wn, "attenuation_db": fc.attenuation_db, "adequate": fc.adequate,
                   "required_attenuation_db": aliasing.ANTI_ALIAS_ATTENUATION_DB,
                   "filter_phase_lag_at_crossover_deg": fc.phase_lag_at_crossover_deg,
                   "crossover_rad_s": wc, "criterion": crit}
        if not fc.adequate:
            lag = ("" if fc.phase_lag_at_crossover_deg is None
                   else f"; it already costs {fc.phase_lag_at_crossover_deg:.3g} degrees at the crossover")
            out.append(Finding(
                "aliasing",
                f"the sensor filter attenuates only {-fc.attenuation_db:.3g} dB at the Nyquist frequency {_fmt_hz(wn)} "
                f"(criterion: at least {aliasing.ANTI_ALIAS_ATTENUATION_DB:g} dB){lag}: noise near {_fmt_hz(wn)} "
                f"folds back at {10 ** (fc.attenuation_db / 20):.2g} of its amplitude.",
                "Sample faster, or lower the filter's corner (or raise its order) and retune for its phase lag.",
                "warning",
                numbers,
            ))
    path = path_system(a.spec)
    rc = aliasing.resonance_check(path, t, wc)
    if rc is not None and rc.is_resonance and rc.peak_db >= aliasing.RESONANCE_REPORT_DB:
        ref = "at the crossover" if rc.reference_rad_s is not None else "at zero frequency"
        out.append(Finding(
            "aliasing",
            f"the sensor path F(s)P(s) has a resonance at {_fmt_hz(rc.peak_rad_s)}, above the Nyquist frequency "
            f"{_fmt_hz(wn)}, with gain {rc.peak_db:.3g} dB relative to its gain {ref}: disturbances exciting it appear "
            f"folded at {_fmt_hz(rc.folds_to_rad_s)}.",
            "Filter it before the sampler (notch or lower anti-alias corner), or sample fast enough that it lies "
            "below the Nyquist frequency and the controller can account for it.",
            "warning",
            {"nyquist_rad_s": wn, "resonance_rad_s": rc.peak_rad_s, "resonance_db": rc.peak_db,
             "folds_to_rad_s": rc.folds_to_rad_s, "gain_at_nyquist_db": rc.gain_at_nyquist_db,
             "reference_rad_s": rc.reference_rad_s, "report_threshold_db": aliasing.RESONANCE_REPORT_DB},
        ))
    return out


# ---- 3. intersample ripple and 5. ringing controller ---------------------------------------------

def ringing_findings(a: Assessment) -> list[Finding]:
    """Controller poles on or near the negative real axis."""
    out = []
    t = a.period_s
    for p in intersample.ringing_poles(a.loop.controller):
        on_axis = abs(p.z.imag) <= 1e-9 * max(1.0, p.radius)
        where = "on the negative real axis" if on_axis else f"near the negative real axis (angle {math.degrees(math.atan2(p.z.imag, p.z.real)):.4g} degrees)"
        decay = ("never decays" if not math.isfinite(p.samples_to_tenth)
                 else f"decays to 10 % in {p.samples_to_tenth:.3g} samples")
        severity = "warning" if p.radius >= intersample.RINGING_WARN_RADIUS else "info"
        out.append(Finding(
            "ringing-controller",
            f"controller pole at z = {_fmt_mode(p.z)} ({where}, |z| = {p.radius:.4g}): the actuator command "
            f"alternates at up to half the sample rate ({_fmt_hz(p.frequency_rad_s)}) and {decay}.",
            "Such a pole usually comes from a Tustin-mapped controller pole faster than 2/T or a derivative filter "
            f"shorter than the period ({_fmt_s(t)}): lengthen that time constant, map it with matched pole-zero "
            "or backward Euler, or sample faster.",
            severity,
            {"pole": _c(p.z), "radius": p.radius, "samples_to_tenth": p.samples_to_tenth,
             "frequency_rad_s": p.frequency_rad_s, "period_s": t},
        ))
    return out


def ripple_findings(a: Assessment, response: Any | None = None) -> list[Finding]:
    """Ripple of the plant output between samples from the exact step response."""
    from sampled.simulate import default_samples, step_response

    if a.digital.verdict == "unstable":
        return []
    if response is None:
        k = min(default_samples(a.loop.closed_loop), RIPPLE_MAX_SAMPLES)
        response = step_response(a.spec, a.period_s, samples=k, points_per_period=RIPPLE_POINTS_PER_PERIOD,
                                 controller=a.loop.controller, with_continuous=False)
    rp = intersample.measure_ripple(response)
    numbers = {"largest_departure": rp.largest_departure, "largest_departure_time_s": rp.largest_departure_time_s,
               "steady_departure": rp.steady_departure, "steady_sampled_swing": rp.steady_sampled_swing,
               "steady_continuous_swing": rp.steady_continuous_swing,
               "ripple_frequency_rad_s": rp.ripple_frequency_rad_s,
               "actuator_alternation": rp.actuator_alternation, "actuator_scale": rp.actuator_scale,
               "window_start_s": rp.window_start_s, "samples": response.samples,
               "hidden_threshold": intersample.HIDDEN_RIPPLE, "transient_threshold": intersample.TRANSIENT_RIPPLE}
    out = []
    ringing = intersample.ringing_poles(a.loop.controller)
    if rp.steady_departure > intersample.HIDDEN_RIPPLE and rp.steady_continuous_swing > 2 * rp.steady_sampled_swing:
        freq = "" if rp.ripple_frequency_rad_s is None else f" at about {_fmt_hz(rp.ripple_frequency_rad_s)}"
        out.append(Finding(
            "intersample-ripple",
            f"hidden oscillation: once the samples have settled (from {_fmt_s(rp.window_start_s)}) they vary by only "
            f"{rp.steady_sampled_swing:.3g} but the output between samples swings {rp.steady_continuous_swing:.3g} "
            f"peak to peak{freq} (unit step).",
            "The loop cannot see this: look for a plant mode near a pathological period or above the Nyquist "
            "frequency, or an actuator alternating each sample; change the period or damp the mode.",
            "warning",
            numbers,
        ))
    elif rp.largest_departure > intersample.TRANSIENT_RIPPLE:
        out.append(Finding(
            "intersample-ripple",
            f"between samples the plant output departs up to {rp.largest_departure:.3g} (unit step) from the straight "
            f"line through the samples (at t = {_fmt_s(rp.largest_departure_time_s)}): the samples understate the "
            "transient.",
            "Sample faster if the peak between samples matters.",
            "info",
            numbers,
        ))
    if ringing and rp.actuator_scale > 0 and rp.alternation_peak > intersample.ALTERNATION_REPORT * rp.actuator_scale:
        worst = max(ringing, key=lambda p: p.radius)
        out.append(Finding(
            "intersample-ripple",
            f"the actuator command alternates each sample by up to {rp.alternation_peak:.3g} "
            f"({rp.alternation_peak / rp.actuator_scale:.1%} of its largest value, near t = {_fmt_s(rp.alternation_time_s)}): "
            f"a hidden oscillation at half the sample rate ({_fmt_hz(math.pi / a.period_s)}) from the controller pole "
            f"at z = {_fmt_mode(worst.z)}; the plant filters it, so the samples show little of it.",
            "See the ringing-controller finding: move that controller pole away from z = -1.",
            "warning",
            {**numbers, "alternation_peak": rp.alternation_peak, "alternation_time_s": rp.alternation_time_s,
             "controller_pole": _c(worst.z), "report_threshold": intersample.ALTERNATION_REPORT},
        ))
    return out


# ---- 4. rules of thumb -----------------------------------------------------------------------------

def rule_of_thumb_findings(a: Assessment, response: Any | None = None) -> list[Finding]:
    """Crossover, hold and delay lag, Tustin warping, rise time and bandwidth against textbook ranges."""
    from sampled.loop import compute_delay_s

    out: list[Finding] = []
    if a.digital.verdict != "stable":
        return out
    t = a.period_s
    wn = math.pi / t
    wc, label = _crossover_with_source(a)
    tau = compute_delay_s(a.spec, t)
    source_aw = "Astrom and Wittenmark, Computer-Controlled Systems, 3rd ed., 1997 (from memory)"
    if wc is not None:
        wct = wc * t
        hold = rules.hold_lag_deg(wc, t)
        dly = rules.delay_lag_deg(wc, tau)
        lo, hi = rules.CROSSOVER_PERIOD_RANGE
        inside = lo <= wct <= hi
        far = wct > hi * rules.FAR_FACTOR
        ratio = wn / wc
        place = "inside" if inside else ("below" if wct < lo else "above")
        out.append(Finding(
            "rule-of-thumb",
            f"crossover is 1/{ratio:.3g} of Nyquist (w_c T = {wct:.3g}, {place} the usual {lo:g} to {hi:g}): "
            f"the hold costs {hold:.3g} degrees and the computation delay {dly:.3g} degrees of phase at "
            f"{_fmt_hz(wc)}.",
            "" if not far else "Sample faster or lower the crossover: the hold and delay lag eat most of the margin.",
            "warning" if far else "info",
            {"crossover_rad_s": wc, "crossover_times_period": wct, "nyquist_over_crossover": ratio,
             "hold_lag_deg": hold, "compute_delay_lag_deg": dly, "compute_delay_s": tau,
             "recommended_range": list(rules.CROSSOVER_PERIOD_RANGE), "source": source_aw,
             "hold_lag_rule": "w_c T / 2 rad (zero-order hold as a half-period delay)",
             "crossover_from": label},
        ))
        c = a.spec.controller
        if c.kind == "transfer" and c.method == "tustin":
            wa = rules.tustin_equivalent_rad_s(wc, t, c.prewarp_rad_s)
            warp = wa / wc - 1.0
            pw = "" if c.prewarp_rad_s is None else f" (prewarped at {_fmt_hz(c.prewarp_rad_s)})"
            out.append(Finding(
                "rule-of-thumb",
                f"Tustin warping{pw}: at the crossover {_fmt_hz(wc)} the controller acts as the continuous design "
                f"would at {_fmt_hz(wa)} ({warp:+.2%}).",
                "" if abs(warp) < 0.1 else "Prewarp at the crossover frequency, or sample faster.",
                "info" if abs(warp) < 0.25 else "warning",
                {"crossover_rad_s": wc, "equivalent_continuous_rad_s": wa, "warping": warp,
                 "prewarp_rad_s": c.prewarp_rad_s,
                 "rule": "w_a = (2/T) tan(w T / 2) (Franklin, Powell and Workman 1998, section 6.3.1; from memory)"},
            ))
    if response is not None:
        ys = response.y_fine
        final = float(np.mean(response.plant_output_at_samples()[-max(1, response.samples // 10):]))
        tr = rules.rise_time_s(response.t_fine, ys, final)
        if tr is not None and tr > 0:
            nr = tr / t
            lo, hi = rules.RISE_SAMPLES_RANGE
            far = nr < lo / rules.FAR_FACTOR
            place = "inside" if lo <= nr <= hi else ("below" if nr < lo else "above")
            out.append(Finding(
                "rule-of-thumb",
                f"the loop rises (10 % to 90 %) in {_fmt_s(tr)}, N_r = {nr:.3g} samples per rise time ({place} the "
                f"usual {lo:g} to {hi:g}).",
                "" if not far else "Sample faster: the rise happens within a couple of samples.",
                "warning" if far else "info",
                {"rise_time_s": tr, "samples_per_rise": nr, "recommended_range": list(rules.RISE_SAMPLES_RANGE),
                 "source": source_aw},
            ))
    bw = rules.closed_loop_bandwidth(a.loop.closed_loop, points=600)
    if bw.bandwidth_rad_s is not None:
        ws = 2 * math.pi / t
        r = ws / bw.bandwidth_rad_s
        lo, hi = rules.BANDWIDTH_RATIO_RANGE
        place = "inside" if lo <= r <= hi else ("below" if r < lo else "above")
        out.append(Finding(
            "rule-of-thumb",
            f"the sample rate is {r:.3g} times the closed-loop bandwidth {_fmt_hz(bw.bandwidth_rad_s)} ({place} the "
            f"usual {lo:g} to {hi:g}).",
            "" if r >= lo else "Sample faster: below about 6 samples per bandwidth period the response is rough.",
            "warning" if r < lo else "info",
            {"bandwidth_rad_s": bw.bandwidth_rad_s, "sample_rate_rad_s": ws, "ratio": r,
             "recommended_range": list(rules.BANDWIDTH_RATIO_RANGE),
             "source": "Franklin, Powell and Workman, Digital Control of Dynamic Systems, 3rd ed., 1998, chapter 11 (from memory)"},
        ))
    return out


# ---- all ---------------------------------------------------------------------------------------------

def sampling_findings(assessment: Assessment) -> list[Finding]:
    """Every hazard finding for the loop of ``assessment`` (see the module docstring)."""
    from sampled.simulate import default_samples, step_response

    a = assessment
    out: list[Finding] = []
    out.extend(pathological_findings(a))
    out.extend(aliasing_findings(a))
    response = None
    if a.digital.verdict != "unstable":
        k = min(default_samples(a.loop.closed_loop), RIPPLE_MAX_SAMPLES)
        try:
            response = step_response(a.spec, a.period_s, samples=k, points_per_period=RIPPLE_POINTS_PER_PERIOD,
                                     controller=a.loop.controller, with_continuous=False)
        except NumericalError as exc:
            out.append(Finding("intersample-ripple", f"the output between samples was not checked: {exc}",
                               "", "info", {"samples": k}))
    out.extend(ripple_findings(a, response) if response is not None else [])
    out.extend(rule_of_thumb_findings(a, response))
    out.extend(ringing_findings(a))
    return out
