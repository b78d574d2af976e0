"""Whole loops against closed forms derived here, and margins against a dense grid.

Each closed form is derived in the test's docstring from the zero-order-hold pulse transfer and
the Jury conditions for first- and second-order polynomials (Jury, *Theory and Application of the
z-Transform Method*, 1964; the second-order triangle |a0| < 1, 1 + a1 + a0 > 0, 1 - a1 + a0 > 0).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.optimize

from sampled.casefile import parse_case
from sampled.loop import assess, digital_loop, judge_digital


def _case(plant: str, controller: str, period: str, compute_delay: str = "0 sample", extra: str = "") -> str:
    return f"""
title = "test loop"
[plant]
transfer = "{plant}"
{controller}
[timing]
period = "{period}"
compute_delay = "{compute_delay}"
{extra}
"""


def _p_gain(kp: float) -> str:
    return f"[controller.digital]\nb = [{kp!r}]\na = [1.0]"


def _verdict(text: str) -> str:
    spec = parse_case(text)
    return judge_digital(digital_loop(spec), with_margins=False).verdict


class TestIntegratorLoop:
    """Plant K/s, proportional gain kp, zero-order hold.

    ZOH of K/s is K T/(z - 1). Without computation delay the characteristic polynomial is
    z - 1 + kp K T: one root at 1 - kp K T, inside the circle iff 0 < kp K T < 2.
    With one whole sample of computation delay: z (z - 1) + kp K T = z^2 - z + kp K T; the
    triangle gives a0 = kp K T < 1, 1 - 1 + a0 > 0, 1 + 1 + a0 > 0, so 0 < kp K T < 1.
    """

    @pytest.mark.parametrize("kt, expected", [(1.99, "stable"), (2.01, "unstable"), (0.5, "stable"), (3.0, "unstable")])
    def test_no_delay(self, kt: float, expected: str) -> None:
        # K = 4, T = 0.01 s, kp = kt / (K T)
        kp = kt / (4 * 0.01)
        assert _verdict(_case("4/s", _p_gain(kp), "10 ms")) == expected

    def test_no_delay_exact_boundary_is_marginal(self) -> None:
        # kp K T = 2 exactly: the pole sits at z = -1 (K = 4, T = 0.25 s is exact in binary).
        assert _verdict(_case("4/s", _p_gain(2.0), "0.25 s")) == "marginal"

    @pytest.mark.parametrize("kt, expected", [(0.99, "stable"), (1.01, "unstable")])
    def test_one_sample_delay(self, kt: float, expected: str) -> None:
        kp = kt / (4 * 0.01)
        assert _verdict(_case("4/s", _p_gain(kp), "10 ms", "1 sample")) == expected

    def test_margins_closed_form(self) -> None:
        """L(z) = a/(z - 1) with a = kp K T.

        Phase crossover at z = -1 (w = pi/T): L = -a/2, gain margin 2/a.
        Gain crossover: |e^{j theta} - 1| = 2 sin(theta/2) = a, theta_c = 2 arcsin(a/2); the phase of
        1/(e^{j theta} - 1) is -(pi/2 + theta/2), so the phase margin is pi/2 - arcsin(a/2).
        """
        a = 0.5
        T = 0.01
        kp = a / (4 * T)
        spec = parse_case(_case("4/s", _p_gain(kp), "10 ms"))
        res = assess(spec)
        m = res.digital.margins
        assert m is not None
        assert m.gain_margin_db == pytest.approx(20 * math.log10(2 / a), rel=1e-8)
        assert m.phase_margin_deg == pytest.approx(math.degrees(math.pi / 2 - math.asin(a / 2)), rel=1e-8)
        theta_c = 2 * math.asin(a / 2)
        assert m.gain_crossover_rad_s == pytest.approx(theta_c / T, rel=1e-8)
        # delay margin = PM / w_c
        assert m.delay_margin_s == pytest.approx(math.radians(m.phase_margin_deg) / (theta_c / T), rel=1e-8)


class TestFirstOrderLag:
    """Plant a/(s + a), proportional gain K, ZOH.

    ZOH equivalent: (1 - e^{-aT})/(z - e^{-aT}). Closed-loop pole z = e^{-aT} - K (1 - e^{-aT}).
    It is > -1 iff K < (1 + e^{-aT})/(1 - e^{-aT}) = coth(aT/2) (and < 1 for K > -1).
    """

    @pytest.mark.parametrize("period", [0.05, 0.2, 1.0])
    def test_boundary(self, period: float) -> None:
        a = 3.0
        k_crit = 1 / math.tanh(a * period / 2)
        for factor, expected in ((0.999, "stable"), (1.001, "unstable")):
            k = k_crit * factor
            text = _case(f"{a}/(s + {a})", _p_gain(k), f"{period!r} s")
            assert _verdict(text) == expected, (period, factor)


class TestSecondOrderCriticalPeriod:
    """Plant 1/(s (s + 1)), proportional gain K, ZOH: fails above a critical period.

    ZOH equivalent (standard result, derived by partial fractions of 1/(s^2 (s + 1))):
        G(z) = [(T - 1 + e^{-T}) z + (1 - e^{-T} - T e^{-T})] / ((z - 1)(z - e^{-T})).
    Characteristic polynomial z^2 + a1 z + a0 with
        a1 = K (T - 1 + e^{-T}) - (1 + e^{-T}),   a0 = e^{-T} + K (1 - e^{-T} - T e^{-T}).
    1 + a1 + a0 = K T (1 - e^{-T}) > 0 always; the loop is lost when a0 reaches 1 or when
    1 - a1 + a0 reaches 0, whichever comes first as T grows. Both are solved with brentq.
    """

    def test_critical_period(self) -> None:
        K = 4.0

        def a0_minus_1(T: float) -> float:
            e = math.exp(-T)
            return e + K * (1 - e - T * e) - 1

        def one_minus_a1_plus_a0(T: float) -> float:
            e = math.exp(-T)
            a1 = K * (T - 1 + e) - (1 + e)
            a0 = e + K * (1 - e - T * e)
            return 1 - a1 + a0

        candidates = []
        for f in (a0_minus_1, one_minus_a1_plus_a0):
            grid = np.linspace(1e-3, 5, 5000)
            vals = [f(t) for t in grid]
            for i in range(len(grid) - 1):
                if np.sign(vals[i]) != np.sign(vals[i + 1]):
                    candidates.append(scipy.optimize.brentq(f, grid[i], grid[i + 1], xtol=1e-14))
                    break
        t_crit = min(candidates)
        assert 0.1 < t_crit < 3
        for factor, expected in ((0.995, "stable"), (1.005, "unstable")):
            text = _case("1/(s*(s + 1))", _p_gain(K), f"{t_crit * factor!r} s")
            assert _verdict(text) == expected


def test_hold_phase_lag_is_half_a_period() -> None:
    """The zero-order hold lags by about w T/2 at the crossover (common practice, no source).

    The same proportional controller on 1/(s (0.1 s + 1)) in continuous time and sampled at
    T = 1 ms with no computation delay: the phase margins differ by w_c T/2 to within 3 %.
    """
    text = _case("1/(s*(0.1*s + 1))", '[controller]\ntransfer = "5"\nmethod = "tustin"', "1 ms")
    res = assess(parse_case(text))
    assert res.continuous is not None and res.continuous.margins is not None
    wc = res.continuous.margins.gain_crossover_rad_s
    lost = res.continuous.margins.phase_margin_deg - res.digital.margins.phase_margin_deg
    assert lost == pytest.approx(math.degrees(wc * 1e-3 / 2), rel=0.03)


def test_compute_delay_lag_adds() -> None:
    """A computation delay tau adds w_c tau of phase lag (pure delay, common practice, no source)."""
    base = assess(parse_case(_case("1/(s*(0.1*s + 1))", '[controller]\ntransfer = "5"', "1 ms")))
    late = assess(parse_case(_case("1/(s*(0.1*s + 1))", '[controller]\ntransfer = "5"', "1 ms", "0.5 sample")))
    wc = base.digital.margins.gain_crossover_rad_s
    extra = base.digital.margins.phase_margin_deg - late.digital.margins.phase_margin_deg
    assert extra == pytest.approx(math.degrees(wc * 0.5e-3), rel=0.03)


def test_digital_margins_against_dense_grid() -> None:
    """Digital margins against a brute-force evaluation of L(e^{jwT}) on 1e5 points (independent)."""
    text = _case("2.5/((0.8*s + 1)*(0.05*s + 1))", '[controller]\ntransfer = "1.2*(0.5*s + 1)/(0.5*s)"\nmethod = "tustin"', "10 ms", "1 sample")
    res = assess(parse_case(text))
    ol = res.loop.open_loop
    T = 0.01
    w = np.linspace(1e-3, math.pi / T, 100_000)
    z = np.exp(1j * w * T)
    # Evaluate via the shift-form state space, independently of the margins module.
    n = ol.phi.shape[0]
    lhs = z[:, None, None] * np.eye(n)[None] - ol.phi[None]
    rhs = np.broadcast_to(ol.gamma.astype(complex), (z.size, n, 1))
    L = (ol.c[None] @ np.linalg.solve(lhs, rhs))[:, 0, 0] + ol.d[0, 0]
    L = L * z ** (-ol.delay_samples)
    mag = np.abs(L)
    i = np.nonzero(np.diff(np.sign(mag - 1)))[0][0]
    pm_grid = 180 + math.degrees(np.angle(L[i]))
    assert res.digital.margins.phase_margin_deg == pytest.approx(pm_grid, abs=0.05)
    s_peak = np.max(1 / np.abs(1 + L))
    assert res.digital.margins.sensitivity_peak == pytest.approx(s_peak, rel=1e-3)
    ang = np.angle(L)
    # Crossing the negative real axis shows as a wrap of the principal angle between -pi and pi.
    j = np.nonzero(np.abs(np.diff(ang)) > math.pi)[0]
    gm_grid = min(-20 * math.log10(mag[k]) for k in j)
    assert abs(res.digital.margins.gain_margin_db) == pytest.approx(abs(gm_grid), abs=0.02)


def test_continuous_nyquist_with_delay_closed_form() -> None:
    """K e^{-sL}/s is closed-loop stable iff K L < pi/2 (phase -pi/2 - w L reaches -pi at w = K).

    Controller 'K' (pure gain), plant 1/s with a transport delay L.
    """
    for L, expected in ((0.15, "stable"), (0.16, "unstable")):
        text = _case("1/s", '[controller]\ntransfer = "10"', "1 ms", extra="")
        text = text.replace('transfer = "1/s"', f'transfer = "1/s"\ndelay = "{L} s"')
        res = assess(parse_case(text))
        assert res.continuous is not None
        assert res.continuous.verdict == expected  # K L = 1.5 < 1.5708 < 1.6


def test_unstable_hidden_by_cancellation_is_reported() -> None:
    """A controller zero on an unstable plant pole: the mode stays in the loop and is reported."""
    text = _case("1/(s - 1)", '[controller]\ntransfer = "(s - 1)/(s + 5)"', "1 ms")
    res = assess(parse_case(text))
    kinds = [w.kind for w in res.warnings]
    assert "hidden-mode" in kinds
    assert res.continuous is not None and res.continuous.verdict == "unstable"
