"""Hold equivalents, mappings and delays, each against a reference named beside the check."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
import scipy.signal
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled.discrete import DiscreteSystem
from sampled.discretize import (
    METHODS,
    backward_euler,
    discretize,
    first_order_hold,
    forward_euler,
    matched_pole_zero,
    split_delay,
    tustin,
    zero_order_hold,
    zoh_with_delay,
)
from sampled.errors import InputError
from sampled.phi import hold_integrals, phi_functions
from sampled.systems import ContinuousSystem

# ---- helpers ---------------------------------------------------------------------------------------


def _normalised(num: np.ndarray, den: np.ndarray, length: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Monic denominator, numerator padded on the left to the same length."""
    num = np.atleast_1d(np.squeeze(np.asarray(num, dtype=float)))
    den = np.atleast_1d(np.asarray(den, dtype=float))
    den = np.trim_zeros(den, "f")
    num = num / den[0]
    den = den / den[0]
    size = max(length or 0, den.size, num.size)
    num = np.trim_zeros(num, "f") if np.any(num) else np.zeros(1)
    return np.concatenate([np.zeros(size - num.size), num]), np.concatenate([den, np.zeros(size - den.size)])


def _assert_same_transfer(ours: DiscreteSystem, num_ref: np.ndarray, den_ref: np.ndarray, rtol: float = 1e-9) -> None:
    num, den = ours.transfer()
    a_num, a_den = _normalised(num, den)
    b_num, b_den = _normalised(num_ref, den_ref, a_den.size)
    a_num, a_den = _normalised(num, den, b_den.size)
    scale = max(1.0, float(np.max(np.abs(b_den))), float(np.max(np.abs(b_num))))
    np.testing.assert_allclose(a_den, b_den, rtol=rtol, atol=rtol * scale)
    np.testing.assert_allclose(a_num, b_num, rtol=rtol, atol=rtol * scale)


@st.composite
def random_systems(draw: st.DrawFn, max_order: int = 4, biproper: bool = True) -> ContinuousSystem:
    """Random real systems with stable and unstable poles (|p| <= 5, Re p <= 3)."""
    order = draw(st.integers(1, max_order))
    poles: list[object] = []
    while len(poles) < order:
        if order - len(poles) >= 2 and draw(st.booleans()):
            re = draw(st.floats(-5, 3).map(lambda v: round(v, 3)))
            im = draw(st.floats(0.1, 5).map(lambda v: round(v, 3)))
            poles += [[re, im], [re, -im]]
        else:
            poles.append(draw(st.floats(-5, 3).map(lambda v: round(v, 3))))
    n_zeros = draw(st.integers(0, order if biproper else order - 1))
    zeros = [draw(st.floats(-6, 6).map(lambda v: round(v, 3))) for _ in range(n_zeros)]
    gain = draw(st.floats(0.1, 10).map(lambda v: round(v, 3)))
    return ContinuousSystem.from_zeros_poles_gain(zeros, poles, gain)


PERIODS = st.floats(0.01, 0.3).map(lambda v: round(v, 4))

# ---- agreement with scipy.signal.cont2discrete (reference library) ---------------------------------

SCIPY_NAMES = {
    "zoh": "zoh",
    "foh": "foh",
    "tustin": "bilinear",
    "forward-euler": "euler",
    "backward-euler": "backward_diff",
}


@settings(max_examples=30)
@given(system=random_systems(), period=PERIODS, method=st.sampled_from(sorted(SCIPY_NAMES)))
def test_against_scipy_cont2discrete(system: ContinuousSystem, period: float, method: str) -> None:
    """Reference: scipy.signal.cont2discrete (general-purpose library) on random stable and unstable
    systems at moderate periods."""
    ours = discretize(system, period, method)  # type: ignore[arg-type]
    num_ref, den_ref, _ = scipy.signal.cont2discrete((system.num, system.den), period, method=SCIPY_NAMES[method])
    _assert_same_transfer(ours, num_ref, den_ref, rtol=1e-8)


@settings(max_examples=20)
@given(system=random_systems(), period=PERIODS)
def test_zoh_state_space_matches_scipy(system: ContinuousSystem, period: float) -> None:
    """Reference: scipy.signal.cont2discrete in state space (same realisation: Phi, Gamma must agree),
    and the delta form must equal (Phi - I)/T, Gamma/T."""
    a, b, c, d = system.state_space()
    ours = zero_order_hold(system, period)
    phi, gamma, _, _, _ = scipy.signal.cont2discrete((a, b, c, d), period, method="zoh")
    np.testing.assert_allclose(ours.phi, phi, rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(ours.gamma, gamma, rtol=1e-10, atol=1e-12 * period)
    np.testing.assert_allclose(ours.a_delta, (phi - np.eye(len(phi))) / period, rtol=1e-7, atol=1e-9)
    np.testing.assert_allclose(ours.b_delta, gamma / period, rtol=1e-9, atol=1e-11)


# ---- closed forms ----------------------------------------------------------------------------------


@pytest.mark.parametrize("k, a, t", [(2.0, 3.0, 0.1), (0.5, 0.2, 1.5), (7.0, -1.0, 0.05)])
def test_zoh_first_order_lag_closed_form(k: float, a: float, t: float) -> None:
    """Closed form derived here: for G(s) = K/(s+a), x' = -a x + K u with u held over a period,

        x[k+1] = e^(-aT) x[k] + (K/a)(1 - e^(-aT)) u[k],

    so G(z) = (K/a)(1 - e^(-aT)) / (z - e^(-aT)) (also for a < 0, an unstable lag)."""
    g = ContinuousSystem.from_coefficients([k], [1, a])
    num, den = zero_order_hold(g, t).transfer()
    e = math.exp(-a * t)
    np.testing.assert_allclose(den, [1.0, -e], rtol=1e-14)
    np.testing.assert_allclose(num, [k / a * (1 - e)], rtol=1e-13)


@pytest.mark.parametrize("k, t", [(1.0, 0.1), (4.0, 1e-3), (0.3, 2.0)])
def test_zoh_integrator_closed_form(k: float, t: float) -> None:
    """Closed form derived here: for K/s the held input integrates to K T u[k] per period, so
    G(z) = K T/(z - 1). The delta form is exactly A_delta = 0, B_delta = K."""
    sys = zero_order_hold(ContinuousSystem.from_coefficients([k], [1, 0]), t)
    num, den = sys.transfer()
    np.testing.assert_allclose(den, [1.0, -1.0], rtol=0, atol=0)
    np.testing.assert_allclose(num, [k * t], rtol=1e-15)
    assert sys.poles().unit_circle_distance[0] == 0.0


@pytest.mark.parametrize("t", [0.1, 1e-4])
def test_foh_integrator_is_trapezoidal(t: float) -> None:
    """Closed form derived here: with the input interpolated linearly, the integral of u over
    [kT, (k+1)T] is (T/2)(u[k] + u[k+1]) (trapezoid), so 1/s -> (T/2)(z + 1)/(z - 1)."""
    num, den = first_order_hold(ContinuousSystem.from_coefficients([1], [1, 0]), t).transfer()
    np.testing.assert_allclose(den, [1.0, -1.0], rtol=1e-15)
    np.testing.assert_allclose(num, [t / 2, t / 2], rtol=1e-14)


@settings(max_examples=25)
@given(system=random_systems(), period=PERIODS, fraction=st.floats(0.05, 0.95))
def test_tustin_prewarp_matches_at_prewarp_frequency(system: ContinuousSystem, period: float, fraction: float) -> None:
    """Closed form derived here: with s = (w0/tan(w0 T/2)) (z-1)/(z+1), at z = e^(j w0 T)
    (z-1)/(z+1) = j tan(w0 T/2), hence s = j w0 and G_d(e^(j w0 T)) = G(j w0) exactly."""
    w0 = fraction * math.pi / period
    g_c = complex(system.evaluate(1j * w0))
    if not math.isfinite(abs(g_c)) or abs(g_c) > 1e8:
        return  # a continuous pole on the imaginary axis at w0
    ours = tustin(system, period, prewarp_rad_s=w0)
    g_d = complex(ours.evaluate(np.exp(1j * w0 * period))[0])
    assert abs(g_d - g_c) <= 1e-9 * max(1.0, abs(g_c))


def test_tustin_refuses_prewarp_at_or_above_nyquist() -> None:
    g = ContinuousSystem.from_expression("1/(s+1)")
    with pytest.raises(InputError, match="Nyquist"):
        tustin(g, 1e-3, prewarp_rad_s=math.pi / 1e-3)
    with pytest.raises(InputError, match="Nyquist"):
        tustin(g, 1e-3, prewarp_rad_s=2 * math.pi * 600)
    with pytest.raises(InputError, match="prewarp"):
        discretize(g, 1e-3, "zoh", prewarp_rad_s=10.0)


def test_forward_euler_of_fast_pole_is_unstable_and_says_so() -> None:
    """Closed form: forward Euler maps s = p to z = 1 + pT; p = -100, T = 0.1 gives z = -9."""
    sys = forward_euler(ContinuousSystem.from_expression("100/(s+100)"), 0.1)
    p = sys.poles()
    assert p.z[0] == pytest.approx(-9.0, abs=1e-12)
    assert p.unit_circle_distance[0] == pytest.approx(-8.0, abs=1e-12)
    assert any("made the stable system unstable" in n and "z = -9" in n for n in sys.notes)
    # A stable mapping says nothing.
    assert tustin(ContinuousSystem.from_expression("100/(s+100)"), 0.1).notes == ()


def test_backward_euler_closed_form() -> None:
    """Closed form: s = (z-1)/(Tz) in a/(s+a) gives aTz / ((1 + aT) z - 1)."""
    a, t = 4.0, 0.05
    num, den = backward_euler(ContinuousSystem.from_coefficients([a], [1, a]), t).transfer()
    np.testing.assert_allclose(den, [1.0, -1 / (1 + a * t)], rtol=1e-14)
    np.testing.assert_allclose(num, [a * t / (1 + a * t), 0.0], rtol=1e-14, atol=1e-16)


def test_matched_integrator_and_lag_closed_forms() -> None:
    """Closed forms from the stated conventions (derived here):

    * 1/s: pole z = 1, relative degree 1 -> no zero at -1; gain lim ((z-1)/T) G_d = 1 -> T/(z-1).
    * 1/(s+a)^2: poles e^(-aT) (double), relative degree 2 -> one zero at z = -1; DC gain 1/a^2
      -> k (z+1)/(z - e^(-aT))^2 with k = (1 - e^(-aT))^2 / (2 a^2).
    * (s+b)/((s+a)(s+c)): zero e^(-bT), poles e^(-aT), e^(-cT); DC gain b/(ac)."""
    t = 0.1
    num, den = matched_pole_zero(ContinuousSystem.from_expression("1/s"), t).transfer()
    np.testing.assert_allclose(num, [t], rtol=1e-14)
    np.testing.assert_allclose(den, [1, -1], rtol=1e-14)

    a = 2.0
    e = math.exp(-a * t)
    num, den = matched_pole_zero(ContinuousSystem.from_coefficients([1], [1, 2 * a, a * a]), t).transfer()
    k = (1 - e) ** 2 / (2 * a * a)
    np.testing.assert_allclose(den, [1, -2 * e, e * e], rtol=1e-13)
    np.testing.assert_allclose(num, [k, k], rtol=1e-12)

    b, a, c = 1.0, 3.0, 7.0
    sys = matched_pole_zero(ContinuousSystem.from_expression(f"(s+{b})/((s+{a})*(s+{c}))"), t)
    num, den = sys.transfer()
    assert np.roots(num) == pytest.approx([math.exp(-b * t)], rel=1e-12)
    assert sorted(np.roots(den).real) == pytest.approx(sorted([math.exp(-a * t), math.exp(-c * t)]), rel=1e-12)
    assert sys.dc_gain() == pytest.approx(b / (a * c), rel=1e-12)


@settings(max_examples=25)
@given(system=random_systems(), period=PERIODS)
def test_tustin_round_trip_recovers_continuous_poles(system: ContinuousSystem, period: float) -> None:
    """Round trip: Tustin maps p to z = (1 + pT/2)/(1 - pT/2); the inverse s = (2/T)(z-1)/(z+1)
    = lambda / (1 + lambda T/2) in delta terms must give back the continuous poles."""
    lam = tustin(system, period).poles().delta
    back = lam / (1 + lam * period / 2)
    ref = system.poles()
    assert back.size == ref.size
    for r in ref:  # matched by nearest: sorting complex values is fragile at rounding level
        assert np.min(np.abs(back - r)) <= 1e-6 * max(1.0, abs(r))  # double poles move by sqrt(eps)
    for b in back:
        assert np.min(np.abs(ref - b)) <= 1e-6 * max(1.0, abs(b))


# ---- delays ------------------------------------------------------------------------------------------


def test_split_delay() -> None:
    assert split_delay(3e-3, 1e-3).whole_periods == 3 and split_delay(3e-3, 1e-3).fraction_s == 0.0
    s = split_delay(1.3e-3, 1e-3)
    assert s.whole_periods == 1 and s.fraction_s == pytest.approx(0.3e-3, rel=1e-12)
    assert split_delay(0.0, 1.0) == split_delay(1e-15, 1.0)


@pytest.mark.parametrize("k, a, t, delay", [(2.0, 3.0, 0.1, 0.13), (1.0, 0.5, 1.0, 0.25), (5.0, 20.0, 0.01, 0.047)])
def test_fractional_delay_first_order_lag_modified_z_closed_form(k: float, a: float, t: float, delay: float) -> None:
    """Closed form derived here (modified z-transform, Jury 1964 ch. 2): delay tau = N T + theta,
    m = 1 - theta/T. The step response of K e^(-s tau)/(s+a) is (K/a)(1 - e^(-a(t - tau))) for
    t >= tau; sampled at kT >= (N+1)T, t - tau = (k-N-1)T + mT. Summing the z-transform and
    multiplying by (1 - z^-1) (zero-order hold):

        G(z) = (K/a) z^-(N+1) [(1 - e^(-amT)) + (e^(-amT) - e^(-aT)) z^-1] / (1 - e^(-aT) z^-1).
    """
    g = ContinuousSystem.from_coefficients([k], [1, a], delay_s=delay)
    b, den = zero_order_hold(g, t).firmware_coefficients()
    n_whole = math.floor(delay / t)
    m = 1 - (delay - n_whole * t) / t
    e, em = math.exp(-a * t), math.exp(-a * m * t)
    expected_b = np.zeros(n_whole + 3)
    expected_b[n_whole + 1] = k / a * (1 - em)
    expected_b[n_whole + 2] = k / a * (em - e)
    expected_a = np.zeros(n_whole + 3)
    expected_a[0], expected_a[1] = 1.0, -e
    np.testing.assert_allclose(den, expected_a, rtol=1e-13, atol=1e-15)
    np.testing.assert_allclose(b, expected_b, rtol=1e-12, atol=1e-15)


def _mp_hold(a: mpmath.matrix, b: mpmath.matrix, h: mpmath.mpf) -> tuple[mpmath.matrix, mpmath.matrix]:
    """exp(A h) and int_0^h exp(A s) ds B by mpmath.expm of the block matrix [[A, B], [0, 0]] h."""
    n = a.rows
    big = mpmath.zeros(n + 1, n + 1)
    for i in range(n):
        for j in range(n):
            big[i, j] = a[i, j] * h
        big[i, n] = b[i, 0] * h
    e = mpmath.expm(big)
    return e[:n, :n], e[:n, n]


def test_fractional_delay_pulse_response_against_mpmath() -> None:
    """Reference: an independent mpmath computation (40 digits) of the sampled pulse response.

    The input pulse u[0] = 1 leaves the hold at [tau, tau + T). The exact state at kT is
    ``int_0^(kT - tau) exp(A s) ds B`` while the pulse is on and
    ``exp(A (kT - tau - T)) int_0^T exp(A s) ds B`` after it; y(kT) = C x(kT) + D u(kT - tau).
    Our state-augmented system is simulated and must give the same samples."""
    system = ContinuousSystem.from_expression("(3*s^2 + s + 8)/((s+1)*(s^2 + 0.6*s + 4))", delay_s=0.0)
    a_f, b_f, c_f, d_f = system.state_space()
    t, tau = 0.2, 0.47  # 2 whole periods and 0.35 of a period
    ours = zoh_with_delay(system, t, tau)
    assert ours.delay_samples == 2 and ours.order == 4
    steps = 16
    u = np.zeros(steps)
    u[0] = 1.0
    y = _simulate(ours, u)
    with mpmath.workdps(40):
        a = mpmath.matrix(a_f.tolist())
        b = mpmath.matrix(b_f.tolist())
        c = mpmath.matrix(c_f.tolist())
        t_mp, tau_mp = mpmath.mpf(t), mpmath.mpf(tau)
        ref = []
        for k in range(steps):
            since = k * t_mp - tau_mp
            if since <= 0:
                ref.append(mpmath.mpf(0))
                continue
            if since < t_mp:
                _, x = _mp_hold(a, b, since)
                on = 1
            else:
                _, x = _mp_hold(a, b, t_mp)
                phi, _ = _mp_hold(a, b, since - t_mp)
                x = phi * x
                on = 0
            ref.append((c * x)[0, 0] + d_f[0, 0] * on)
    ref_f = np.array([float(v) for v in ref])
    np.testing.assert_allclose(y, ref_f, rtol=1e-9, atol=1e-11)


def _simulate(sys: DiscreteSystem, u: np.ndarray) -> np.ndarray:
    """Run the state equations (delay realised as states) from rest."""
    s = sys.with_delay_states()
    x = np.zeros((s.order, 1))
    y = np.empty(u.size)
    for k, uk in enumerate(u):
        y[k] = (s.c @ x)[0, 0] + s.d[0, 0] * uk
        x = s.phi @ x + s.gamma * uk
    return y


def test_fractional_delay_matrices_against_mpmath_expm() -> None:
    """Reference: mpmath.expm at 40 digits of [[A, B], [0, 0]] over T - theta and theta gives
    Gamma_0 and Gamma_1 = exp(A (T - theta)) int_0^theta exp(A s) ds B; ours must agree to 1e-12."""
    system = ContinuousSystem.from_expression("5*(s+2)/((s+0.5)*(s^2 + 3*s + 30))")
    a_f, b_f, _, _ = system.state_space()
    t, theta = 0.05, 0.0123
    ours = zoh_with_delay(system, t, theta)
    n = a_f.shape[0]
    with mpmath.workdps(40):
        a, b = mpmath.matrix(a_f.tolist()), mpmath.matrix(b_f.tolist())
        phi_late, g0 = _mp_hold(a, b, mpmath.mpf(t) - mpmath.mpf(theta))
        _, g_early = _mp_hold(a, b, mpmath.mpf(theta))
        g1 = phi_late * g_early
        phi_full, _ = _mp_hold(a, b, mpmath.mpf(t))
        ad_ref = (phi_full - mpmath.eye(n)) / mpmath.mpf(t)
    to_np = (lambda m: np.array([[float(m[i, j]) for j in range(m.cols)] for i in range(m.rows)]))
    np.testing.assert_allclose(ours.gamma[:n], to_np(g0), rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(ours.phi[:n, n:], to_np(g1), rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(ours.phi[:n, :n], to_np(phi_full), rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(ours.a_delta[:n, :n], to_np(ad_ref), rtol=1e-11, atol=1e-12)


def test_whole_period_delay_and_biproper_feedthrough() -> None:
    """A whole-period delay is z^-N exactly; a fractional delay moves D behind one sample
    (y[k] = C x[k] + D u[k-1])."""
    g = ContinuousSystem.from_expression("(s+2)/(s+1)", delay_s=0.3)
    sys = zero_order_hold(g, 0.1)
    assert sys.delay_samples == 3 and sys.order == 1
    plain = zero_order_hold(g.with_delay(0.0), 0.1)
    z = np.exp(1j * 0.7)
    assert complex(sys.evaluate(z)[0]) == pytest.approx(complex(plain.evaluate(z)[0]) * z**-3, rel=1e-13)
    frac = zoh_with_delay(g.with_delay(0.0), 0.1, 0.05)
    assert frac.d[0, 0] == 0.0 and frac.c[0, -1] == pytest.approx(1.0)


def test_delay_errors() -> None:
    g = ContinuousSystem.from_expression("1/(s+1)", delay_s=0.25)
    for method in ("foh", "tustin", "forward-euler", "backward-euler", "matched"):
        with pytest.raises(InputError, match="whole"):
            discretize(g, 0.1, method)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="shorter"):
        zoh_with_delay(g, 0.1, 0.1)
    whole = discretize(g.with_delay(0.3), 0.1, "tustin")
    assert whole.delay_samples == 3


@pytest.mark.parametrize("period", [0.0, -1.0, math.inf, math.nan])
def test_bad_period(period: float) -> None:
    g = ContinuousSystem.from_expression("1/(s+1)")
    for method in METHODS:
        with pytest.raises(InputError, match="period"):
            discretize(g, period, method)  # type: ignore[arg-type]


def test_unknown_method() -> None:
    with pytest.raises(InputError, match="unknown method"):
        discretize(ContinuousSystem.from_expression("1/(s+1)"), 0.1, "bilinear")  # type: ignore[arg-type]


def test_tustin_pole_sent_to_infinity_is_refused() -> None:
    """Closed form: Tustin sends s = 2/T to z = infinity (1 - pT/2 = 0)."""
    with pytest.raises(InputError, match="infinity"):
        tustin(ContinuousSystem.from_expression("1/(s-20)"), 0.1)


# ---- fast sampling against mpmath at 50 digits ---------------------------------------------------

#: A 6th-order plant; slowest time constant 1 s (pole at -1).
FAST_POLES = [-1.0, -4.0, [-2.0, 5.0], [-2.0, -5.0], [-30.0, 40.0], [-30.0, -40.0]]
FAST_RATIOS = [10.0**-k for k in range(1, 10)]


@pytest.mark.parametrize("ratio", FAST_RATIOS)
@pytest.mark.parametrize("method", ["zoh", "matched", "tustin"])
def test_fast_sampling_poles_against_mpmath(ratio: float, method: str) -> None:
    """Reference: mpmath at 50 digits of the exact discrete poles (closed forms of each method):
    zoh and matched map p to z = exp(pT) (lambda = expm1(pT)/T, 1 - |z| = -expm1(Re(p) T));
    Tustin maps p to z = (1 + pT/2)/(1 - pT/2) (lambda = p/(1 - pT/2)).

    Required: lambda = (z - 1)/T and 1 - |z| within 1e-6 relative for T/(slowest time constant) from
    1e-1 down to 1e-9 (the shift coefficients alone could not deliver this)."""
    plant = ContinuousSystem.from_zeros_poles_gain([-3.0], FAST_POLES, 1000.0)
    t = ratio * 1.0
    sys = discretize(plant, t, method)  # type: ignore[arg-type]
    got = sys.poles()
    with mpmath.workdps(50):
        t_mp = mpmath.mpf(t)
        ref_lam, ref_dist = [], []
        for p in FAST_POLES:
            pc = mpmath.mpc(*(p if isinstance(p, list) else [p, 0.0]))
            if method == "tustin":
                z = (1 + pc * t_mp / 2) / (1 - pc * t_mp / 2)
                lam = pc / (1 - pc * t_mp / 2)
                dist = 1 - abs(z)
            else:
                lam = mpmath.expm1(pc * t_mp) / t_mp
                dist = -mpmath.expm1(pc.real * t_mp)
            ref_lam.append(complex(lam))
            ref_dist.append(float(dist))
    for lam_ref, dist_ref in zip(ref_lam, ref_dist):
        i = int(np.argmin(np.abs(got.delta - lam_ref)))
        assert abs(got.delta[i] - lam_ref) <= 1e-6 * abs(lam_ref)
        assert abs(got.unit_circle_distance[i] - dist_ref) <= 1e-6 * abs(dist_ref)
        assert abs(got.z[i] - (1 + t * lam_ref)) <= 1e-12


@pytest.mark.parametrize("ratio", [1e-3, 1e-6, 1e-9])
def test_fast_sampling_delta_matrix_against_mpmath_expm(ratio: float) -> None:
    """Reference: mpmath.expm at 50 digits on the same A (exact binary values):
    A_delta = (exp(A T) - I)/T and B_delta = (1/T) int_0^T exp(A s) ds B, normwise to 1e-12."""
    plant = ContinuousSystem.from_zeros_poles_gain([-3.0], FAST_POLES, 1000.0)
    a_f, b_f, _, _ = plant.state_space()
    t = ratio
    sys = zero_order_hold(plant, t)
    n = a_f.shape[0]
    with mpmath.workdps(50):
        a, b = mpmath.matrix(a_f.tolist()), mpmath.matrix(b_f.tolist())
        phi, gamma = _mp_hold(a, b, mpmath.mpf(t))
        ad = (phi - mpmath.eye(n)) / mpmath.mpf(t)
        bd = gamma / mpmath.mpf(t)
        ad_f = np.array([[float(ad[i, j]) for j in range(n)] for i in range(n)])
        bd_f = np.array([[float(bd[i, 0])] for i in range(n)])
    assert np.linalg.norm(sys.a_delta - ad_f) <= 1e-12 * np.linalg.norm(ad_f)
    assert np.linalg.norm(sys.b_delta - bd_f) <= 1e-12 * np.linalg.norm(bd_f)


# ---- phi functions --------------------------------------------------------------------------------


def test_phi_functions_scalar_closed_forms() -> None:
    """Closed forms: phi_1(x) = (e^x - 1)/x, phi_2(x) = (e^x - 1 - x)/x^2 (mpmath at 30 digits);
    at x = 1e-12 the series values 1 + x/2 and 1/2 + x/6 hold to double precision."""
    for x in (-3.0, -1e-3, 0.7, 1e-12):
        f = phi_functions(np.array([[x]]), order=2)
        with mpmath.workdps(30):
            xm = mpmath.mpf(x)
            p1 = mpmath.expm1(xm) / xm
            p2 = (mpmath.expm1(xm) - xm) / xm**2
        assert f.phi1[0, 0] == pytest.approx(float(p1), rel=1e-14)
        assert f.phi2 is not None and f.phi2[0, 0] == pytest.approx(float(p2), rel=1e-12)


def test_hold_integrals_zero_interval() -> None:
    a = np.array([[0.0, 1.0], [-2.0, -3.0]])
    b = np.array([[0.0], [1.0]])
    h = hold_integrals(a, b, 0.0)
    np.testing.assert_array_equal(h.phi, np.eye(2))
    np.testing.assert_array_equal(h.gamma, np.zeros((2, 1)))
    np.testing.assert_allclose(h.a_delta, a)


def test_given_state_space_against_scipy() -> None:
    """Reference: scipy.signal.cont2discrete on the same matrices (a system given in state space,
    with direct feedthrough), for the hold equivalents and the bilinear mapping."""
    a = [[0.0, 1.0, 0.0], [0.0, 0.0, 1.0], [-6.0, -11.0, -6.0]]
    b, c, d = [[0.0], [0.0], [1.0]], [[2.0, 1.0, 0.5]], [[0.25]]
    system = ContinuousSystem.from_state_space(a, b, c, d)
    for method, name in (("zoh", "zoh"), ("foh", "foh"), ("tustin", "bilinear")):
        ours = discretize(system, 0.2, method)  # type: ignore[arg-type]
        ref = scipy.signal.cont2discrete((np.array(a), np.array(b), np.array(c), np.array(d)), 0.2, method=name)
        num_ref, den_ref = scipy.signal.ss2tf(*ref[:4])
        _assert_same_transfer(ours, num_ref, den_ref, rtol=1e-10)


def test_realisation_is_reused_across_periods() -> None:
    """A sweep over periods reuses the (extended-precision) realisation of the same system object,
    and the cached arrays cannot be modified by a caller."""
    from sampled.discretize import _realisation

    system = ContinuousSystem.from_expression("1/((s+1)*(s+2))")
    first = _realisation(system)
    zero_order_hold(system, 0.1)
    assert _realisation(system) is first
    with pytest.raises(ValueError):
        first.a[0, 0] = 1.0


def test_static_gain_with_fractional_delay() -> None:
    """Closed form: a static gain K behind a delay of half a period is sampled as K u[k-1]
    (the held value at kT - T/2 is u[k-1])."""
    sys = zoh_with_delay(ContinuousSystem.from_expression("5"), 1e-3, 0.5e-3)
    b, a = sys.firmware_coefficients()
    np.testing.assert_allclose(b, [0.0, 5.0], atol=1e-15)
    np.testing.assert_allclose(a, [1.0, 0.0], atol=1e-15)


def test_coefficient_pole_error_grows_at_fast_sampling() -> None:
    """Measured fact (common practice, no source: shift coefficients lose the poles as T -> 0):
    for this 6th-order plant the z denominator places the poles to ~4e-14 in (z - 1) at
    T/tau = 1e-1, ~6e-9 at 1e-2, but 3 % at 1e-3 and not at all at 1e-9, while the delta form
    keeps them to 1e-15 (tested above against mpmath)."""
    plant = ContinuousSystem.from_zeros_poles_gain([-3.0], FAST_POLES, 1000.0)
    assert zero_order_hold(plant, 1e-1).coefficient_pole_error() < 1e-11
    assert zero_order_hold(plant, 1e-3).coefficient_pole_error() > 1e-3
    assert zero_order_hold(plant, 1e-9).coefficient_pole_error() > 1.0


@settings(max_examples=20)
@given(
    system=random_systems(),
    period=PERIODS,
    sub=st.integers(2, 5),
    data=st.data(),
)
def test_fractional_delay_against_fast_rate_construction(
    system: ContinuousSystem, period: float, sub: int, data: st.DataObject
) -> None:
    """Independent construction: when theta = j T / M, sample the plant M times faster (ZOH at T/M,
    whole-sample delay N M + j), hold each input for M fast samples and keep every M-th output.
    The pulse response must equal that of our state-augmented modified z-transform."""
    j = data.draw(st.integers(1, sub - 1))
    whole = data.draw(st.integers(0, 2))
    delay = whole * period + j * period / sub
    ours = zoh_with_delay(system, period, delay)
    fast = zoh_with_delay(system, period / sub, whole * period + j * period / sub)
    assert fast.order == system.order  # a whole number of fast periods: no augmentation
    steps = 10
    u = np.zeros(steps)
    u[0] = 1.0
    y_slow = _simulate(ours, u)
    y_fast = _simulate(fast, np.repeat(u, sub))[::sub]
    scale = max(1.0, float(np.max(np.abs(y_fast))))
    np.testing.assert_allclose(y_slow, y_fast, rtol=1e-8, atol=1e-10 * scale)


@settings(max_examples=20)
@given(system=random_systems(), period=PERIODS, method=st.sampled_from(sorted(METHODS)))
def test_delta_form_consistent_with_shift_form(system: ContinuousSystem, period: float, method: str) -> None:
    """Identity at moderate periods: A_delta = (Phi - I)/T and B_delta = Gamma/T for every method
    (where the subtraction is still harmless)."""
    sys = discretize(system, period, method)  # type: ignore[arg-type]
    n = sys.order
    scale = max(1.0, float(np.linalg.norm(sys.a_delta)))
    np.testing.assert_allclose(sys.a_delta, (sys.phi - np.eye(n)) / period, atol=1e-9 * scale)
    np.testing.assert_allclose(sys.b_delta, sys.gamma / period, rtol=1e-12, atol=1e-12 * scale)


@settings(max_examples=25)
@given(system=random_systems(), period=PERIODS)
def test_matched_maps_roots_by_exponential(system: ContinuousSystem, period: float) -> None:
    """Definition (closed form): poles p -> exp(pT), finite zeros q -> exp(qT), r - 1 extra zeros at
    z = -1 for relative degree r >= 1, and the low-frequency gain matched (DC gain when there is no
    root at s = 0). Reference values from numpy.exp of the accurately computed continuous roots;
    our roots are compared through their polynomials (robust to repeated roots)."""
    sys = matched_pole_zero(system, period)
    poles, zeros = system.poles(), system.zeros()
    rel = poles.size - zeros.size
    ref_den = np.real(np.poly(np.exp(poles * period)))
    ref_zeros = np.concatenate([np.exp(zeros * period), -np.ones(max(rel - 1, 0))])
    ref_num_monic = np.real(np.poly(ref_zeros))
    num, den = sys.transfer()
    np.testing.assert_allclose(den, ref_den, rtol=1e-9, atol=1e-11)
    np.testing.assert_allclose(num / num[0], ref_num_monic, rtol=1e-8, atol=1e-10)
    if np.all(np.abs(poles) > 1e-9) and np.all(np.abs(zeros) > 1e-9):
        assert sys.dc_gain() == pytest.approx(system.dc_gain(), rel=1e-8)


def test_matched_complex_zero_pair_over_real_poles() -> None:
    """A complex zero pair facing two real poles needs one second-order section; the result must
    still have zeros exp(+-jT) and poles exp(-T), exp(-2T) (closed form)."""
    t = 0.1
    num, den = matched_pole_zero(ContinuousSystem.from_expression("(s^2+1)/((s+1)*(s+2))"), t).transfer()
    np.testing.assert_allclose(num / num[0], np.real(np.poly([np.exp(1j * t), np.exp(-1j * t)])), rtol=1e-13)
    np.testing.assert_allclose(den, np.poly([np.exp(-t), np.exp(-2 * t)]), rtol=1e-13)


def test_matched_triple_zero_at_minus_one_regression() -> None:
    """Regression (found by hypothesis): 1/(s^2 (s^2 + 1)) has relative degree 4, so three zeros
    at z = -1; the numerator must be k (z + 1)^3 to near double precision (it was off by 3e-8 when
    the numerator came from the eigenvalues of A - B C, which a triple zero makes inaccurate)."""
    sys = matched_pole_zero(ContinuousSystem.from_coefficients([1], [1, 0, 1, 0, 0]), 0.0117)
    num, _ = sys.transfer()
    np.testing.assert_allclose(num / num[0], [1, 3, 3, 1], rtol=1e-11)
