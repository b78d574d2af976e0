"""What sampling hides (sampled.hazards): each check against a reference outside the module.

Sources, named beside each test:
* rank of controllability / observability matrices of the ZOH equivalent computed independently
  with scipy.signal.cont2discrete and numpy.linalg.matrix_rank;
* scipy.integrate.solve_ivp of the continuous plant under the held input (ripple);
* closed forms derived in the docstrings (Tustin pole map, integrator loop phase, RC filter gain,
  second-order resonance peak, first-order rise time and bandwidth);
* the textbook ranges as recalled: Astrom and Wittenmark, "Computer-Controlled Systems", 3rd ed.,
  1997 (w_c T in 0.15..0.5, N_r in 4..10; from memory); Franklin, Powell and Workman, "Digital
  Control of Dynamic Systems", 3rd ed., 1998, chapter 11 (sample rate 6..40 times the bandwidth;
  from memory).
"""

from __future__ import annotations

import glob
import json
import math
import subprocess
import sys

import numpy as np
import pytest
import scipy.integrate
import scipy.signal

from sampled.casefile import parse_case
from sampled.hazards import rules, sampling_findings
from sampled.hazards.aliasing import folded_frequency
from sampled.hazards.pathological import mode_pairs, nearest_pathological
from sampled.loop import assess
from sampled.simulate import step_response

CASES = sorted(glob.glob("cases/*.toml"))


def _kinds(findings, kind):
    return [f for f in findings if f.kind == kind]


def _oscillator(w: float, zeta: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """w^2 / (s^2 + 2 zeta w s + w^2) in state space (position, velocity)."""
    a = np.array([[0.0, 1.0], [-w * w, -2.0 * zeta * w]])
    b = np.array([[0.0], [w * w]])
    c = np.array([[1.0, 0.0]])
    return a, b, c, np.zeros((1, 1))


def _ranks(a, b, c, d, period_s):
    """Independent: ZOH by scipy.signal.cont2discrete, ranks of the Kalman matrices by numpy."""
    phi, gam, cd, _, _ = scipy.signal.cont2discrete((a, b, c, d), period_s, method="zoh")
    n = a.shape[0]
    ctrb = np.hstack([np.linalg.matrix_power(phi, i) @ gam for i in range(n)])
    obsv = np.vstack([cd @ np.linalg.matrix_power(phi, i) for i in range(n)])
    return np.linalg.matrix_rank(ctrb, tol=1e-9 * np.linalg.norm(ctrb)), np.linalg.matrix_rank(obsv, tol=1e-9 * np.linalg.norm(obsv))


# ---- 1. pathological sampling ------------------------------------------------------------------------

@pytest.mark.parametrize("zeta", [0.0, 0.02])
def test_pathological_period_of_an_oscillator_detected_and_rank_confirmed(zeta):
    """Undamped and lightly damped oscillator at T = pi / w_d (w_d = w sqrt(1 - zeta^2)): both
    modes map to z = -exp(-zeta w T), Phi is a multiple of I and the sampled pair loses
    controllability and observability (Kalman, Ho and Narendra 1963). Confirmed independently:
    rank of [Gamma, Phi Gamma] and [C; C Phi] of scipy's ZOH equivalent is 1."""
    w = 3.0
    a, b, c, d = _oscillator(w, zeta)
    wd = w * math.sqrt(1 - zeta * zeta)
    t = math.pi / wd
    check = nearest_pathological(a, b, c, t)
    assert check is not None
    assert check.pathological_period_s == pytest.approx(t, rel=1e-12)
    assert check.multiple == 1
    assert check.rank.lost
    assert check.rank.retained < 1e-10
    assert _ranks(a, b, c, d, t) == (1, 1)
    # away from it: no loss, full rank by the same independent computation
    t_ok = 0.8 * t
    ok = nearest_pathological(a, b, c, t_ok)
    assert ok is not None and not ok.rank.lost and ok.rank.retained > 0.1
    assert _ranks(a, b, c, d, t_ok) == (2, 2)


def _oscillator_case(w: float, zeta: float, period: float, gain: float = 0.2) -> str:
    den = f"s^2 + {2 * zeta * w!r}*s + {w * w!r}" if zeta else f"s^2 + {w * w!r}"
    return f"""
[plant]
transfer = "{w * w!r}/(({den})*(s + 1))"
[controller.digital]
b = [0, {gain}]
a = [1, -1]
[timing]
period = {period!r}
"""


def test_pathological_finding_through_assess():
    """The finding appears in assess() with the rank loss confirmed at T = pi / w_d, as a warning
    within a few percent, and as information far from it."""
    w, zeta = 3.0, 0.02
    t = math.pi / (w * math.sqrt(1 - zeta**2))
    exact = _kinds(assess(parse_case(_oscillator_case(w, zeta, t))).warnings, "pathological-sampling")
    assert len(exact) == 1 and exact[0].severity == "warning"
    assert exact[0].numbers["rank_loss_confirmed"] is True
    assert exact[0].numbers["pathological_period_s"] == pytest.approx(t, rel=1e-12)
    near = _kinds(assess(parse_case(_oscillator_case(w, zeta, 1.03 * t))).warnings, "pathological-sampling")
    assert near[0].severity == "warning" and near[0].numbers["rank_loss_confirmed"] is False
    assert near[0].numbers["relative_distance"] == pytest.approx(0.03, rel=1e-9)
    far = _kinds(assess(parse_case(_oscillator_case(w, zeta, 0.4 * t))).warnings, "pathological-sampling")
    assert far[0].severity == "info"


def test_two_resonances_collide_at_the_difference_frequency():
    """Undamped modes at 3 and 5 rad/s: exp(j 3 T) = exp(j 5 T) at T = 2 pi / 2 = pi (and the
    conjugate sums give 2 pi / 8 multiples). At T = pi the sampled 4-state plant loses rank,
    confirmed with scipy's ZOH equivalent and numpy's rank."""
    modes = np.array([3j, -3j, 5j, -5j])
    spacings = sorted({round(p.spacing_rad_s, 12) for p in mode_pairs(modes)})
    assert spacings == [2.0, 6.0, 8.0, 10.0]
    a = np.zeros((4, 4))
    a[0, 1], a[1, 0], a[2, 3], a[3, 2] = 1.0, -9.0, 1.0, -25.0
    b = np.array([[0.0], [1.0], [0.0], [1.0]])
    c = np.array([[1.0, 0.0, 1.0, 0.0]])
    check = nearest_pathological(a, b, c, math.pi * 1.0000001)
    assert check is not None and check.rank.retained < 1e-5
    ctrb_rank, obsv_rank = _ranks(a, b, c, np.zeros((1, 1)), math.pi)
    assert ctrb_rank < 4 and obsv_rank < 4
    assert _ranks(a, b, c, np.zeros((1, 1)), 0.9) == (4, 4)


# ---- 3. intersample ripple -------------------------------------------------------------------------

def test_hidden_ripple_found_and_checked_against_ode():
    """Plant w^2/((s^2 + 2 zeta w s + w^2)(s + 1)), zeta = 0.005, sampled at T = 2 pi / w_d: each
    held value drives the resonance through whole periods of its damped oscillation, so the samples
    settle while the output between them keeps ringing. The finding's steady swing is checked
    against scipy.integrate.solve_ivp of the plant under the held commands."""
    w, zeta = 2 * math.pi, 0.005
    wd = w * math.sqrt(1 - zeta**2)
    t = 2 * math.pi / wd
    spec = parse_case(_oscillator_case(w, zeta, t, gain=0.3))
    a = assess(spec)
    assert a.digital.verdict == "stable"
    ripple = _kinds(a.warnings, "intersample-ripple")
    assert ripple and ripple[0].severity == "warning" and "hidden oscillation" in ripple[0].message
    nums = ripple[0].numbers
    assert nums["steady_sampled_swing"] < 0.2 * nums["steady_continuous_swing"]
    assert nums["ripple_frequency_rad_s"] == pytest.approx(wd, rel=0.05)
    # independent: integrate the plant under the held input from the same response
    r = step_response(spec, samples=nums["samples"], points_per_period=16, with_continuous=False)
    A, B, C, _ = spec.plant.state_space()
    x = np.zeros(A.shape[0])
    start = nums["window_start_s"]
    values = []
    for k in range(r.samples - 1):
        tt = r.t_fine[k * r.fine_per_period:(k + 1) * r.fine_per_period + 1]
        sol = scipy.integrate.solve_ivp(lambda _t, xx, u=r.u_samples[k]: A @ xx + B[:, 0] * u,
                                        (tt[0], tt[-1]), x, method="DOP853", rtol=1e-11, atol=1e-13, t_eval=tt)
        x = sol.y[:, -1]
        if tt[0] >= start - 1e-12:
            values.extend(C[0] @ sol.y)
    assert np.ptp(values) == pytest.approx(nums["steady_continuous_swing"], rel=1e-6)
    # the pathological-sampling check names the same period (k = 2 of the pair +- j w_d)
    path = _kinds(a.warnings, "pathological-sampling")
    assert path and path[0].numbers["multiple"] == 2


def test_no_ripple_warning_for_a_well_sampled_loop():
    spec = parse_case(_oscillator_case(2 * math.pi, 0.5, 0.02))
    assert not _kinds(assess(spec).warnings, "intersample-ripple")


# ---- 5. ringing controller ---------------------------------------------------------------------------

def _lead_case(method: str) -> str:
    return f"""
[plant]
transfer = "20/(s*(0.1*s + 1))"
[controller]
transfer = "(0.1*s + 1)/(0.001*s + 1)"
method = "{method}"
[timing]
period = "10 ms"
"""


def test_tustin_fast_pole_rings():
    """Tustin maps p = -1000 rad/s at T = 10 ms to z = (1 + pT/2)/(1 - pT/2) = -4/6
    (closed form); the matched map sends it to exp(-10), no ringing."""
    a = assess(parse_case(_lead_case("tustin")))
    ring = _kinds(a.warnings, "ringing-controller")
    assert len(ring) == 1 and ring[0].severity == "warning"
    z = complex(*ring[0].numbers["pole"])
    assert z == pytest.approx(-4.0 / 6.0, abs=1e-12)
    assert ring[0].numbers["samples_to_tenth"] == pytest.approx(math.log(0.1) / math.log(4 / 6), rel=1e-9)
    matched = assess(parse_case(_lead_case("matched")))
    assert not _kinds(matched.warnings, "ringing-controller")
    assert not [f for f in _kinds(matched.warnings, "intersample-ripple") if "alternates" in f.message]


def test_half_rate_actuator_oscillation_against_dlsim():
    """The Tustin lead's pole at z = -2/3 makes the command alternate. Reference command, built
    without sampled: G(z) = ZOH of 20/(s(0.1 s + 1)) and C(z) = bilinear map of the lead, both by
    scipy.signal.cont2discrete; u/r = nc dg / (dc dg + nc ng), simulated by scipy.signal.dlsim. The
    finding's peak alternation |u[k+1] - 2 u[k] + u[k-1]|/4 (where u changes direction) matches."""
    t = 0.01
    a = assess(parse_case(_lead_case("tustin")))
    alt = [f for f in _kinds(a.warnings, "intersample-ripple") if "alternates" in f.message]
    assert len(alt) == 1
    nums = alt[0].numbers
    ng, dg, _ = scipy.signal.cont2discrete(([20.0], [0.1, 1.0, 0.0]), t, method="zoh")
    nc, dc, _ = scipy.signal.cont2discrete(([0.1, 1.0], [0.001, 1.0]), t, method="bilinear")
    ng, nc = np.trim_zeros(np.ravel(ng), "f"), np.ravel(nc)
    den = np.polyadd(np.polymul(dc, dg), np.polymul(nc, ng))
    num = np.polymul(nc, dg)
    k = nums["samples"]
    u = scipy.signal.dlsim((num, den, t), np.ones(k))[1][:, 0]
    d1 = np.diff(u)
    second = np.where(d1[1:] * d1[:-1] < 0, np.abs(u[2:] - 2 * u[1:-1] + u[:-2]) / 4, 0.0)
    assert nums["alternation_peak"] == pytest.approx(float(np.max(second)), rel=1e-9)
    assert nums["actuator_scale"] == pytest.approx(float(np.max(np.abs(u))), rel=1e-9)


# ---- 2. aliasing -------------------------------------------------------------------------------------

def test_anti_alias_filter_against_rc_closed_form():
    """RC filter 1/(tau s + 1) at w_N = pi/T: |F| = 1/sqrt(1 + (tau pi / T)^2) (closed form).
    Criterion: at least 20 dB (common practice, no source): tau = 2T gives 16.0 dB (reported),
    tau = 5T gives 24.0 dB (adequate, no warning)."""
    for tau_over_t, reported in ((2.0, True), (5.0, False)):
        t = 0.01
        text = f"""
[plant]
transfer = "5/(s + 5)"
[sensor]
transfer = "1/({tau_over_t * t!r}*s + 1)"
[controller]
transfer = "2*(0.2*s + 1)/(0.2*s)"
[timing]
period = {t!r}
"""
        found = _kinds(assess(parse_case(text)).warnings, "aliasing")
        expect_db = -10 * math.log10(1 + (tau_over_t * math.pi) ** 2)
        if reported:
            assert len(found) == 1 and found[0].severity == "warning"
            assert found[0].numbers["attenuation_db"] == pytest.approx(expect_db, abs=1e-9)
        else:
            assert found == []


def test_resonance_above_nyquist_folds():
    """A resonance w_r = 3 w_N (zeta = 0.02) in the plant: peak |P| = 1/(2 zeta sqrt(1 - zeta^2))
    at w_n sqrt(1 - 2 zeta^2) relative to the DC gain 1 (closed form; the reference here is the
    crossover of a slow loop, where |P| is within 0.1 % of 1), folding to |w_r - 2 w_N| = w_N."""
    t = 0.001
    wn_nyq = math.pi / t
    wr, zeta = 3 * wn_nyq, 0.02
    text = f"""
[plant]
transfer = "{wr * wr!r}/(s^2 + {2 * zeta * wr!r}*s + {wr * wr!r})"
[sensor]
transfer = "1/(0.01*s + 1)"
[controller]
transfer = "10/s"
[timing]
period = {t!r}
"""
    a = assess(parse_case(text))
    res = [f for f in _kinds(a.warnings, "aliasing") if "resonance" in f.message]
    assert len(res) == 1
    nums = res[0].numbers
    w_peak = wr * math.sqrt(1 - 2 * zeta**2)
    assert nums["resonance_rad_s"] == pytest.approx(w_peak, rel=2e-3)
    # sensor at the peak and at the crossover, times the plant's resonance peak
    f_peak = 1 / abs(1 + 0.01j * w_peak)
    wc = nums["reference_rad_s"]
    f_ref = 1 / abs(1 + 0.01j * wc)
    expect = 20 * math.log10(f_peak / f_ref / (2 * zeta * math.sqrt(1 - zeta**2)))
    assert nums["resonance_db"] == pytest.approx(expect, abs=0.05)
    assert nums["folds_to_rad_s"] == pytest.approx(abs(nums["resonance_rad_s"] - 2 * wn_nyq), rel=1e-12)
    assert folded_frequency(3.3 * wn_nyq, t) == pytest.approx(0.7 * wn_nyq)


# ---- 4. rules of thumb -------------------------------------------------------------------------------

def _integrator_case(k: float, t: float, delay: str = "0 s") -> str:
    return f"""
[plant]
transfer = "1/s"
[controller]
transfer = "{k!r}"
[timing]
period = {t!r}
compute_delay = "{delay}"
"""


def test_crossover_one_sixth_of_nyquist_costs_fifteen_degrees():
    """Loop K/s with ZOH: |L(exp(j w T))| = K T / (2 sin(w T/2)) (closed form), so
    K = 2 sin(pi/12)/T puts the crossover at w_c T = pi/6 = 0.524: 1/6 of Nyquist, just above the
    upper end of Astrom and Wittenmark's 0.15..0.5 (from memory), and the hold lag w_c T/2 = 15
    degrees. Half that gain (w_c T about 0.26) is inside the range."""
    t = 0.01
    k = 2 * math.sin(math.pi / 12) / t
    a = assess(parse_case(_integrator_case(k, t)))
    first = _kinds(a.warnings, "rule-of-thumb")[0]
    nums = first.numbers
    assert nums["crossover_times_period"] == pytest.approx(math.pi / 6, rel=1e-6)
    assert nums["hold_lag_deg"] == pytest.approx(15.0, rel=1e-6)
    assert nums["nyquist_over_crossover"] == pytest.approx(6.0, rel=1e-6)
    assert "1/6 of Nyquist" in first.message and "15 degrees" in first.message and "above" in first.message
    assert first.severity == "info"  # above, but not far above (twice the upper end)
    assert nums["recommended_range"] == [0.15, 0.5]
    half = _kinds(assess(parse_case(_integrator_case(k / 2, t))).warnings, "rule-of-thumb")[0]
    assert "inside" in half.message


def test_hold_and_delay_lag_match_the_exact_phase():
    """Integrator K/s, one sample of computation delay: the digital loop is K T z^-1/(z - 1), whose
    phase is exactly -90 - (w T/2 + w T) degrees (since exp(j w T) - 1 = 2 j sin(w T/2) exp(j w T/2)),
    so the finding's hold lag plus delay lag equals the phase the digital loop lost at the crossover."""
    t = 0.01
    a = assess(parse_case(_integrator_case(20.0, t, "1 sample")))
    nums = _kinds(a.warnings, "rule-of-thumb")[0].numbers
    wc = nums["crossover_rad_s"]
    lz = complex(a.loop.open_loop.evaluate(np.exp(1j * wc * t))[0])
    lost = -90.0 - math.degrees(np.angle(lz))
    assert nums["hold_lag_deg"] + nums["compute_delay_lag_deg"] == pytest.approx(lost % 360, abs=1e-8)


@pytest.mark.parametrize("prewarp", [None, "3 Hz"])
def test_tustin_warping_equivalent_frequency(prewarp):
    """The Tustin-mapped controller at exp(j w_c T) equals the continuous design at j w_a with
    w_a = (2/T) tan(w_c T/2) (or (w0/tan(w0 T/2)) tan(w_c T/2) prewarped): evaluated directly,
    controller from sampled.discretize against numpy.polyval of the continuous transfer."""
    pw = f'prewarp = "{prewarp}"' if prewarp else ""
    text = f"""
[plant]
transfer = "30/(s*(0.05*s + 1))"
[controller]
transfer = "0.8*(0.1*s + 1)/(0.02*s + 1)"
method = "tustin"
{pw}
[timing]
period = "20 ms"
"""
    a = assess(parse_case(text))
    warp = [f for f in _kinds(a.warnings, "rule-of-thumb") if "Tustin" in f.message]
    assert len(warp) == 1
    nums = warp[0].numbers
    wc, wa, t = nums["crossover_rad_s"], nums["equivalent_continuous_rad_s"], 0.02
    cz = complex(a.loop.controller.evaluate(np.exp(1j * wc * t))[0])
    cs = np.polyval([0.08, 0.8], 1j * wa) / np.polyval([0.02, 1.0], 1j * wa)
    assert cz == pytest.approx(complex(cs), rel=1e-9)


def test_rise_time_and_bandwidth_closed_forms():
    """1 - exp(-t/tau) rises 10 % to 90 % in tau ln 9; T(z) = (1 - a)/(z - a) is 3 dB down where
    cos(w T) = (1 + a^2 - 2 (1 - a)^2)/(2 a) (closed forms)."""
    tt = np.linspace(0, 10, 200001)
    assert rules.rise_time_s(tt, 1 - np.exp(-tt / 0.7), 1.0) == pytest.approx(0.7 * math.log(9), rel=1e-6)
    from sampled.discrete import DiscreteSystem

    a_pole, t = 0.8, 0.1
    cl = DiscreteSystem.from_transfer([1 - a_pole], [1.0, -a_pole], t)
    bw = rules.closed_loop_bandwidth(cl, points=4000)
    expect = math.acos((1 + a_pole**2 - 2 * (1 - a_pole) ** 2) / (2 * a_pole)) / t
    assert bw.bandwidth_rad_s == pytest.approx(expect, rel=1e-3)


def test_rules_state_textbook_ranges():
    """The ranges as recalled from the textbooks (see the module docstring)."""
    assert rules.CROSSOVER_PERIOD_RANGE == (0.15, 0.5)
    assert rules.RISE_SAMPLES_RANGE == (4.0, 10.0)
    assert rules.BANDWIDTH_RATIO_RANGE == (6.0, 40.0)
    assert rules.tustin_equivalent_rad_s(100.0, 0.01) == pytest.approx(200 * math.tan(0.5))


# ---- whole cases ----------------------------------------------------------------------------------

@pytest.mark.parametrize("path", CASES)
def test_every_case_checks_with_hazard_findings(path):
    """Every demo case runs through `sampled check --json` (exit 0 or 1, never 2) and its warnings
    are well-formed findings."""
    proc = subprocess.run([sys.executable, "-m", "sampled", "check", path, "--json"],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode in (0, 1), proc.stderr
    out = json.loads(proc.stdout)
    for w in out["warnings"]:
        assert set(w) >= {"kind", "message", "advice", "severity", "numbers"}
    kinds = {w["kind"] for w in out["warnings"]}
    assert kinds & {"rule-of-thumb", "aliasing", "pathological-sampling", "digital-unstable"}


def test_sampling_findings_direct_call_matches_assess():
    spec = parse_case(_lead_case("tustin"))
    a = assess(spec)
    direct = sampling_findings(a)
    assert [f.message for f in direct] == [f.message for f in a.warnings if f in direct]
