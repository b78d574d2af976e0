"""The DiscreteSystem type: transfers, poles, composition; references named beside each check."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
import scipy.signal
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled.discrete import DiscreteSystem, unit_circle_distance
from sampled.discretize import tustin, zero_order_hold
from sampled.errors import InputError
from sampled.systems import ContinuousSystem


@st.composite
def firmware_filters(draw: st.DrawFn) -> tuple[np.ndarray, np.ndarray]:
    """Random (b, a) with a[0] = 1, built from random poles inside |z| < 0.95 and random zeros."""
    order = draw(st.integers(1, 4))
    poles: list[complex] = []
    while len(poles) < order:
        r = draw(st.floats(0.05, 0.95))
        if order - len(poles) >= 2 and draw(st.booleans()):
            ang = draw(st.floats(0.1, 3.0))
            poles += [r * np.exp(1j * ang), r * np.exp(-1j * ang)]
        else:
            poles.append(complex(r if draw(st.booleans()) else -r))
    a = np.real(np.poly(poles))
    nb = draw(st.integers(1, order + 1))
    b = np.array([draw(st.floats(-3, 3).map(lambda v: round(v, 3))) for _ in range(nb)])
    if not np.any(b):
        b[0] = 1.0
    return b, a


@settings(max_examples=30)
@given(filt=firmware_filters(), period=st.floats(1e-4, 1.0))
def test_firmware_round_trip_and_poles(filt: tuple[np.ndarray, np.ndarray], period: float) -> None:
    """Round trip: coefficients in -> realisation -> coefficients out. Poles against numpy.roots
    (reference library) of the denominator."""
    b, a = filt
    sys = DiscreteSystem.from_firmware(b, a, period)
    b2, a2 = sys.firmware_coefficients()
    size = max(b.size, a.size, b2.size)
    pad = (lambda v: np.concatenate([v, np.zeros(size - v.size)]))
    np.testing.assert_allclose(pad(a2), pad(a), atol=1e-12)
    np.testing.assert_allclose(pad(b2), pad(b), atol=1e-11)
    # Poles: repeated roots are ill-conditioned (a triple root moves by eps^(1/3)), so compare the
    # polynomial they rebuild, and the roots themselves only where numpy.roots finds them simple.
    z = sys.poles().z
    z = z[np.abs(z) > 0] if sys.delay_samples else z
    np.testing.assert_allclose(np.real(np.poly(z)), a, atol=1e-10)
    ref = np.roots(a)
    gaps = np.abs(ref[:, None] - ref[None, :]) + np.eye(ref.size)
    if ref.size == z.size and np.min(gaps) > 1e-2:
        for r in ref:
            assert np.min(np.abs(z - r)) <= 1e-9


@settings(max_examples=30)
@given(filt=firmware_filters(), period=st.floats(1e-3, 1.0))
def test_evaluate_matches_polyval(filt: tuple[np.ndarray, np.ndarray], period: float) -> None:
    """Reference: numpy.polyval of the coefficients in z^-1 at points on the unit circle."""
    b, a = filt
    sys = DiscreteSystem.from_firmware(b, a, period)
    w = np.linspace(0.1, 3.0, 5)
    zinv = np.exp(-1j * w)
    ref = np.polyval(b[::-1], zinv) / np.polyval(a[::-1], zinv)
    np.testing.assert_allclose(sys.evaluate(np.exp(1j * w)), ref, rtol=1e-9, atol=1e-12)


def test_unit_circle_distance_accuracy_near_one() -> None:
    """Reference: mpmath at 50 digits of 1 - |1 + lambda T| for |lambda T| down to 1e-12, where
    1 - abs(z) in double precision would keep at most 4 digits."""
    lam = np.array([-1.0 + 0.0j, -2.0 + 30.0j, 0.5 - 1.0j])
    for t in (1e-3, 1e-8, 1e-12):
        ours = unit_circle_distance(lam, t)
        with mpmath.workdps(50):
            ref = [float(1 - abs(1 + mpmath.mpc(x.real, x.imag) * mpmath.mpf(t))) for x in lam]
        np.testing.assert_allclose(ours, ref, rtol=1e-13)


def test_transfer_matches_scipy_ss2tf_on_shift_form() -> None:
    """Reference: scipy.signal.ss2tf of (Phi, Gamma, C, D) at a moderate period."""
    g = ContinuousSystem.from_expression("(s+3)*(s+0.5)/((s+1)*(s^2+0.4*s+9))")
    sys = zero_order_hold(g, 0.05)
    num, den = sys.transfer()
    n_ref, d_ref = scipy.signal.ss2tf(sys.phi, sys.gamma, sys.c, sys.d)
    np.testing.assert_allclose(den, d_ref, rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(np.concatenate([np.zeros(d_ref.size - num.size), num]), n_ref[0], atol=1e-12)


def test_series_is_product_of_transfers() -> None:
    """Reference: numpy.polymul of the two transfers; delays add."""
    g1 = DiscreteSystem.from_firmware([0.2, 0.1], [1, -0.5], 0.01)
    g2 = DiscreteSystem.from_firmware([0, 0, 1.5], [1, 0.3, 0.02], 0.01)
    both = g1.series(g2)
    n1, d1 = g1.transfer()
    n2, d2 = g2.transfer()
    num, den = both.transfer()
    np.testing.assert_allclose(den, np.polymul(d1, d2), atol=1e-13)
    np.testing.assert_allclose(num, np.polymul(n1, n2), atol=1e-13)
    assert both.delay_samples == g1.delay_samples + g2.delay_samples
    # delta form consistent with the shift form of the result
    np.testing.assert_allclose(both.a_delta * 0.01 + np.eye(both.order), both.phi, atol=1e-14)


def test_feedback_closed_loop_polynomial() -> None:
    """Reference: closed loop G/(1 + G) of G = n/d has denominator d + n (numpy polynomial sum);
    here G carries a two-sample delay, realised as states first."""
    g = DiscreteSystem.from_firmware([0.0, 0.4, 0.1], [1.0, -1.2, 0.35], 0.1).delayed(2)
    n, d = g.transfer()
    cl = g.feedback()
    num, den = cl.transfer()
    np.testing.assert_allclose(den, np.polyadd(d, n), atol=1e-12)
    np.testing.assert_allclose(np.trim_zeros(num, "f"), np.trim_zeros(n, "f"), atol=1e-12)
    ref_poles = np.sort_complex(np.roots(np.polyadd(d, n)))
    np.testing.assert_allclose(np.sort_complex(cl.poles().z), ref_poles, atol=1e-9)


def test_feedback_with_feedthrough_and_sensor() -> None:
    """Reference: G/(1 + G H) with G = (nG/dG), H = (nH/dH): den dG dH + nG nH, num nG dH."""
    g = DiscreteSystem.from_firmware([0.5, 0.2], [1.0, -0.9], 0.1)  # biproper
    h = DiscreteSystem.from_firmware([0.3], [1.0, -0.2], 0.1)  # biproper (static-ish)
    cl = g.feedback(h)
    ng, dg = g.transfer()
    nh, dh = h.transfer()
    num, den = cl.transfer()
    ref_den = np.polyadd(np.polymul(dg, dh), np.polymul(ng, nh))
    ref_num = np.polymul(ng, dh)
    np.testing.assert_allclose(den, ref_den / ref_den[0], atol=1e-12)
    np.testing.assert_allclose(num, ref_num / ref_den[0], atol=1e-12)


def test_with_delay_states_same_response() -> None:
    """Identity: realising z^-d as states does not change the response."""
    g = tustin(ContinuousSystem.from_expression("(s+2)/(s^2+s+4)"), 0.05).delayed(3)
    s = g.with_delay_states()
    assert s.delay_samples == 0 and s.order == g.order + 3
    z = np.exp(1j * np.array([0.1, 0.9, 2.5]))
    np.testing.assert_allclose(s.evaluate(z), g.evaluate(z), rtol=1e-12)
    np.testing.assert_allclose(s.phi, np.eye(s.order) + 0.05 * s.a_delta, atol=1e-14)


def test_delta_transfer_tends_to_continuous() -> None:
    """Closed form: as T -> 0 the delta transfer of the ZOH equivalent tends to G(s) (coefficients
    within O(T) of the continuous ones)."""
    g = ContinuousSystem.from_expression("4*(s+1)/(s^2+2*s+5)")
    num, den = zero_order_hold(g, 1e-7).delta_transfer()
    np.testing.assert_allclose(den, [1, 2, 5], rtol=1e-5)
    np.testing.assert_allclose(num[-2:], [4, 4], rtol=1e-5)


def test_bad_inputs() -> None:
    with pytest.raises(InputError, match="period"):
        DiscreteSystem.from_firmware([1], [1, -0.5], 0.0)
    with pytest.raises(InputError, match="period"):
        DiscreteSystem.from_firmware([1], [1, -0.5], math.nan)
    with pytest.raises(InputError, match="improper"):
        DiscreteSystem.from_transfer([1, 2, 3], [1, 0.5], 0.1)
    with pytest.raises(InputError, match="a\\[0\\]"):
        DiscreteSystem.from_firmware([1], [0, 1], 0.1)
    with pytest.raises(InputError, match="sample periods"):
        DiscreteSystem.from_firmware([1], [1, -0.5], 0.1).series(DiscreteSystem.from_firmware([1], [1, -0.5], 0.2))
    with pytest.raises(InputError, match="shape"):
        DiscreteSystem(np.eye(2), np.ones((3, 1)), np.ones((1, 2)), np.zeros((1, 1)), 0.1, np.eye(2), np.ones((2, 1)))
    with pytest.raises(InputError, match="not well posed"):
        DiscreteSystem.from_firmware([-1.0], [1.0], 0.1).feedback()


def test_static_gain_and_pure_delay() -> None:
    """Closed form: b = [0, 0, 2], a = [1] is 2 z^-2: no states, two poles at z = 0 (distance 1)."""
    sys = DiscreteSystem.from_firmware([0, 0, 2.0], [1.0], 0.01)
    assert sys.order == 0 and sys.delay_samples == 2
    p = sys.poles()
    np.testing.assert_array_equal(p.z, [0, 0])
    np.testing.assert_array_equal(p.unit_circle_distance, [1.0, 1.0])
    b, a = sys.firmware_coefficients()
    np.testing.assert_array_equal(b, [0, 0, 2.0])
    np.testing.assert_array_equal(a, [1.0, 0, 0])
    assert sys.dc_gain() == 2.0


def test_delta_transfer_of_stiff_system() -> None:
    """Closed form (limit): the ZOH delta transfer is G(s) + O(T ||A||). For a stiff plant (poles
    from -1 to -1e5, zeros -10 and -1e4) at T = 1e-9 s every numerator and denominator coefficient
    must be within 2e-4 relative of the continuous one; the Markov-parameter formula alone loses
    the constant numerator term here (its rounding bound exceeds the value), the eigenvalue
    formula alone loses repeated zeros at z = -1, so each coefficient uses the better one."""
    g = ContinuousSystem.from_zeros_poles_gain([-10.0, -1e4], [-1.0, -1e3, -1e5, [-50, 300], [-50, -300]], 1e9)
    num, den = zero_order_hold(g, 1e-9).delta_transfer()
    np.testing.assert_allclose(den, g.den, rtol=2e-4)
    np.testing.assert_allclose(num[-3:], g.num, rtol=2e-4)
    np.testing.assert_array_equal(num[:-3], 0.0)
