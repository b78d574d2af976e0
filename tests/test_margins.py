"""Margins engine: frequency responses, gain / phase / delay margins, sensitivity peak.

Every check names its source beside it:
- closed forms derived in the docstrings of the tests;
- an independent dense-grid computation written here (``dense_grid_margins``: numpy.polyval on a
  log grid of up to 1e6 points, sign changes located by linear interpolation), which shares no
  code with sampled.margins;
- numpy.roots (closed-loop roots on the stability boundary) and scipy.signal.freqs / freqz
  (frequency responses) as general-purpose reference libraries;
- the zero-order hold's half-sample phase lag (common practice, no source).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg
import scipy.signal
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from sampled.errors import ImproperError, InputError, NumericalError
from sampled.frequency import (
    continuous_loop,
    continuous_loop_state_space,
    discrete_loop,
    discrete_loop_state_space,
    frequency_response,
)
from sampled.margins import MAX_DELAY_TURNS, Margins, analysis_band, loop_margins

# --------------------------------------------------------------------------- the oracle


def dense_grid_margins(
    num,
    den,
    low: float,
    high: float,
    *,
    delay_s: float = 0.0,
    period_s: float | None = None,
    delay_samples: int = 0,
    points: int = 1_000_000,
    max_mag: float = math.inf,
) -> dict:
    """Independent brute-force margins: evaluate L by numpy.polyval on a log grid of ``points``
    frequencies, find sign changes of log|L| and of (unwrapped phase + pi)/(2 pi) - n, locate each
    by linear interpolation in log w, and evaluate L there directly for its margin. Crossings of
    the negative real axis at |L| > max_mag (poles on the axis) are dropped. Sensitivity peak =
    largest grid value of 1/|1 + L|, w = 0 included when L(0) is finite.
    """
    tau = delay_s if period_s is None else delay_samples * period_s

    def response(w):
        x = 1j * w if period_s is None else np.exp(1j * w * period_s)
        return np.polyval(num, x) / np.polyval(den, x) * np.exp(-1j * w * tau)

    w = np.geomspace(low, high, points)
    ell = response(w)
    lw, lm, ph = np.log(w), np.log(np.abs(ell)), np.unwrap(np.angle(ell))

    i = np.flatnonzero(lm[:-1] * lm[1:] < 0)
    t = lm[i] / (lm[i] - lm[i + 1])
    wc = np.exp(lw[i] + t * (lw[i + 1] - lw[i]))
    pm = np.degrees(np.angle(-response(wc)))

    u = (ph + math.pi) / (2 * math.pi)
    k = np.floor(u)
    j = np.flatnonzero(k[:-1] != k[1:])
    assert np.all(np.abs(k[j + 1] - k[j]) == 1), "grid too coarse for the oracle"
    level = np.maximum(k[j], k[j + 1])
    t = (level - u[j]) / (u[j + 1] - u[j])
    wp = np.exp(lw[j] + t * (lw[j + 1] - lw[j]))
    mag_p = np.abs(response(wp))
    keep = mag_p < max_mag
    gm = -20.0 * np.log10(mag_p[keep])
    peak_i = int(np.argmax(1.0 / np.abs(1.0 + ell)))
    peak, peak_w = float(1.0 / np.abs(1.0 + ell[peak_i])), float(w[peak_i])
    with np.errstate(divide="ignore", invalid="ignore"):
        at_zero = np.polyval(num, 1.0 if period_s else 0.0) / np.polyval(den, 1.0 if period_s else 0.0)
    if np.isfinite(at_zero) and 1.0 / abs(1.0 + at_zero) > peak:
        peak, peak_w = float(1.0 / abs(1.0 + at_zero)), 0.0
    return {"wc": wc, "pm": pm, "wp": wp[keep], "gm": gm, "peak": peak, "peak_w": peak_w}


def assert_matches_oracle(
    m: Margins, ref: dict, *, rel_w=1e-7, abs_deg=1e-5, abs_db=1e-5, rel_peak=1e-6, w_max=math.inf
):
    """Crossings strictly inside (0, w_max) and the sensitivity peak agree with the oracle."""
    wc = [g.frequency_rad_s for g in m.gain_crossovers]
    pm = [g.phase_margin_deg for g in m.gain_crossovers]
    inside = [p for p in m.phase_crossovers if 0 < p.frequency_rad_s < w_max]
    wp = [p.frequency_rad_s for p in inside]
    gm = [p.gain_margin_db for p in inside]
    assert len(wc) == len(ref["wc"]), (wc, ref["wc"])
    assert len(wp) == len(ref["wp"]), (wp, ref["wp"])
    np.testing.assert_allclose(wc, ref["wc"], rtol=rel_w)
    np.testing.assert_allclose(pm, ref["pm"], atol=abs_deg)
    np.testing.assert_allclose(wp, ref["wp"], rtol=rel_w)
    np.testing.assert_allclose(gm, ref["gm"], atol=abs_db)
    # The refined peak can only be higher than the grid's, and by little.
    assert m.sensitivity_peak >= ref["peak"] * (1 - 1e-12)
    assert m.sensitivity_peak == pytest.approx(ref["peak"], rel=rel_peak)


# --------------------------------------------------------------------------- closed forms


@pytest.mark.parametrize("gain", [0.3, 1.0, 2.0, 10.0, 250.0])
def test_integrator_and_lag_closed_form(gain):
    """L(s) = K / (s (s + 1)).

    |L(jw)| = K / (w sqrt(1 + w^2)) = 1  <=>  w^4 + w^2 - K^2 = 0  <=>  wc^2 = (sqrt(1 + 4K^2) - 1)/2.
    arg L(jw) = -90 deg - atan(w), so PM = 180 - 90 - atan(wc) = atan(1/wc) [deg], delay margin
    = PM [rad] / wc; the phase tends to -180 deg only as w -> inf, so there is no phase crossover
    and the gain margin is infinite. (Closed form derived here.)
    """
    m = loop_margins(continuous_loop([gain], [1, 1, 0]))
    wc = math.sqrt((math.sqrt(1 + 4 * gain**2) - 1) / 2)
    pm = math.degrees(math.atan(1 / wc))
    assert m.gain_crossover_rad_s == pytest.approx(wc, rel=1e-12)
    assert m.phase_margin_deg == pytest.approx(pm, rel=1e-12)
    assert m.delay_margin_s == pytest.approx(math.radians(pm) / wc, rel=1e-12)
    assert m.gain_margin_db == math.inf and m.phase_crossover_rad_s is None
    assert len(m.gain_crossovers) == 1 and m.phase_crossovers == ()
    assert m.delay_margin_samples is None


@pytest.mark.parametrize("gain", [1.5, 4.0, 8.0, 20.0])
def test_triple_lag_closed_form(gain):
    """L(s) = K / (s + 1)^3.

    arg L = -3 atan(w) = -180 deg at atan(w) = 60 deg, w = sqrt(3); there |s + 1|^2 = 4, so
    |L| = K / 4^(3/2) = K/8 and the gain margin is 8/K, i.e. 20 log10(8/K) dB.
    Gain crossover (K > 1): (1 + wc^2)^(3/2) = K, wc = sqrt(K^(2/3) - 1); PM = 180 - 3 atan(wc).
    (Closed form derived here.)
    """
    m = loop_margins(continuous_loop([gain], [1, 3, 3, 1]))
    assert m.phase_crossover_rad_s == pytest.approx(math.sqrt(3), rel=1e-12)
    assert m.gain_margin_db == pytest.approx(20 * math.log10(8 / gain), abs=1e-11)
    wc = math.sqrt(gain ** (2 / 3) - 1)
    assert m.gain_crossover_rad_s == pytest.approx(wc, rel=1e-12)
    assert m.phase_margin_deg == pytest.approx(180 - 3 * math.degrees(math.atan(wc)), abs=1e-10)
    assert len(m.phase_crossovers) == 1


@pytest.mark.parametrize(("gain", "delay"), [(1.0, 0.5), (2.0, 0.1), (0.5, 2.0), (1.0, 2.0)])
def test_integrator_with_transport_delay_closed_form(gain, delay):
    """L(s) = K exp(-s L) / s.

    |L| = K/w, so wc = K. arg L = -90 deg - w L [rad], so PM = 90 deg - K L 180/pi and the delay
    margin is PM[rad]/wc = pi/(2K) - L (when positive). Phase crossovers: -pi/2 - w L = -pi - 2 pi n,
    w_n = (pi/2 + 2 pi n)/L, each with gain margin 20 log10(w_n/K). (Closed form derived here.)
    """
    m = loop_margins(continuous_loop([gain], [1, 0], delay_s=delay))
    pm = 90 - gain * delay * 180 / math.pi
    assert m.gain_crossover_rad_s == pytest.approx(gain, rel=1e-12)
    assert m.phase_margin_deg == pytest.approx(pm, abs=1e-10)
    if pm > 0:
        assert m.delay_margin_s == pytest.approx(math.pi / (2 * gain) - delay, rel=1e-10)
    else:  # closed loop already unstable: the next encirclement is a full turn further
        assert m.delay_margin_s == pytest.approx((math.radians(pm) + 2 * math.pi) / gain, rel=1e-10)
    high = m.band_rad_s[1]
    n = np.arange(0, int((high * delay / math.pi - 0.5) / 2) + 2)
    wn = (math.pi / 2 + 2 * math.pi * n) / delay
    wn = wn[wn <= high]
    got = [p.frequency_rad_s for p in m.phase_crossovers]
    assert len(got) == len(wn) and len(got) > 10
    np.testing.assert_allclose(got, wn, rtol=1e-12)
    np.testing.assert_allclose(
        [p.gain_margin_db for p in m.phase_crossovers], 20 * np.log10(wn / gain), atol=1e-9
    )
    assert m.gain_margin_db == pytest.approx(20 * math.log10(wn[0] / gain), abs=1e-10)


@pytest.mark.parametrize(("gain", "period"), [(1.0, 1.0), (30.0, 0.01), (5.0, 0.3), (0.01, 0.001)])
def test_discrete_integrator_closed_form(gain, period):
    """L(z) = K T / (z - 1).

    On z = exp(j theta), theta = w T: z - 1 = 2j sin(theta/2) exp(j theta/2), so
    |L| = K T / (2 sin(theta/2)) and arg L = -90 deg - theta/2. The phase reaches -180 deg only at
    theta = pi (the Nyquist frequency pi/T), where |L| = K T/2: gain margin 2/(K T).
    Gain crossover: theta_c = 2 asin(K T/2); PM = 90 deg - theta_c/2; delay margin in samples
    = PM[rad]/theta_c. With K T = 1 (deadbeat): theta_c = pi/3, PM = 60 deg and the delay margin
    is exactly one sample (then z^2 - z + 1 has its roots on the unit circle).
    (Closed form derived here.)
    """
    m = loop_margins(discrete_loop([gain * period], [1, -1], period))
    kt = gain * period
    assert m.gain_margin_db == pytest.approx(20 * math.log10(2 / kt), abs=1e-10)
    assert m.phase_crossover_rad_s == pytest.approx(math.pi / period, rel=1e-15)
    theta_c = 2 * math.asin(kt / 2)
    pm = 90 - math.degrees(theta_c) / 2
    assert m.gain_crossover_rad_s == pytest.approx(theta_c / period, rel=1e-11)
    assert m.phase_margin_deg == pytest.approx(pm, abs=1e-9)
    assert m.delay_margin_samples == pytest.approx(math.radians(pm) / theta_c, rel=1e-10)
    assert m.delay_margin_s == pytest.approx(m.delay_margin_samples * period, rel=1e-15)
    assert len(m.phase_crossovers) == 1 and len(m.gain_crossovers) == 1
    # exactly one sample of margin at K T = 1 (the boundary, left to rounding); beyond it, the hazard
    if kt != 1.0:
        assert m.delay_margin_below_one_sample is (kt > 1.0)


def test_deadbeat_integrator_tolerates_exactly_one_sample():
    """K T = 1 in L(z) = K T/(z - 1): delay margin 1 sample (closed form above). Adding that one
    sample, L(z) = 1/(z (z - 1)): characteristic z^2 - z + 1, roots exp(+-j pi/3) on the unit circle
    (numpy.roots), so the margins of the delayed loop are all zero: PM = 0, GM = 0 dB at w = pi/(3T)."""
    period = 0.002
    m0 = loop_margins(discrete_loop([1.0], [1, -1], period))
    assert m0.delay_margin_samples == pytest.approx(1.0, rel=1e-12)
    m1 = loop_margins(discrete_loop([1.0], [1, -1], period, delay_samples=1))
    assert m1.phase_margin_deg == pytest.approx(0.0, abs=1e-9)
    assert m1.delay_margin_samples == pytest.approx(0.0, abs=1e-9)
    assert m1.gain_margin_db == pytest.approx(0.0, abs=1e-9)
    assert m1.phase_crossover_rad_s == pytest.approx(math.pi / (3 * period), rel=1e-10)
    roots = np.roots([1, -1, 1])
    np.testing.assert_allclose(np.abs(roots), 1.0, rtol=1e-14)
    np.testing.assert_allclose(np.sort(np.abs(np.angle(roots))), [math.pi / 3] * 2, rtol=1e-14)


@pytest.mark.parametrize("kt", [0.1, 0.5, 0.9, 1.0, 1.5])
def test_one_more_sample_costs_one_sample_of_delay_margin(kt):
    """L(z) = K T z^-d / (z - 1): |L| does not depend on d, so the crossover theta_c is the same
    and each extra sample subtracts theta_c [rad] of phase, i.e. exactly one sample of delay margin
    while the margin stays >= 0 (K T <= 1, theta_c <= pi/3). For K T > 1 the phase margin turns
    negative and the delay margin, by its convention (PM mod 360 deg)/wc, is a full turn further:
    m0 - 1 + 2 pi/theta_c samples. With d = 1 the phase crossover is at 3 theta/2 = pi/2,
    theta = pi/3, where |L| = K T / (2 sin(pi/6)) = K T: gain margin -20 log10(K T).
    (Closed form derived here.)"""
    period = 0.01
    m0 = loop_margins(discrete_loop([kt], [1, -1], period))
    m1 = loop_margins(discrete_loop([kt], [1, -1], period, delay_samples=1))
    expected = m0.delay_margin_samples - 1.0
    if kt > 1:
        expected += 2 * math.pi / (2 * math.asin(kt / 2))
    assert m1.delay_margin_samples == pytest.approx(expected, abs=1e-10)
    assert m1.phase_crossover_rad_s == pytest.approx(math.pi / 3 / period, rel=1e-10)
    assert m1.gain_margin_db == pytest.approx(-20 * math.log10(kt), abs=1e-10)


@pytest.mark.parametrize("gain", [1.5, 2.0, 5.0])
def test_unstable_open_loop_closed_form(gain):
    """L(s) = K / (s - 1), one open-loop pole in the right half plane; closed loop s - 1 + K is
    stable for K > 1.

    L(0) = -K is on the negative real axis: phase crossover at w = 0 with gain margin
    -20 log10 K (the gain may be LOWERED by the factor K). |L| = K/sqrt(1 + w^2) = 1 at
    wc = sqrt(K^2 - 1); arg(jw - 1) = 180 - atan(w) so arg L = -180 + atan(w) and PM = atan(wc);
    delay margin atan(wc)/wc [rad/(rad/s)]. (Closed form derived here.)"""
    m = loop_margins(continuous_loop([gain], [1, -1]), closed_loop_stable=True)
    assert m.phase_crossovers[0].frequency_rad_s == 0.0
    assert m.gain_margin_db == pytest.approx(-20 * math.log10(gain), abs=1e-12)
    wc = math.sqrt(gain**2 - 1)
    assert m.gain_crossover_rad_s == pytest.approx(wc, rel=1e-12)
    assert m.phase_margin_deg == pytest.approx(math.degrees(math.atan(wc)), abs=1e-10)
    assert m.delay_margin_s == pytest.approx(math.atan(wc) / wc, rel=1e-11)
    assert m.classical_valid is True


def test_infinite_margins():
    """L(s) = 0.5/(s + 1): |L| <= 0.5 < 1 everywhere (no gain crossover: PM and delay margin
    infinite) and arg L in (-90, 0] deg (no phase crossover: gain margin infinite). Sensitivity
    1/|1 + L| rises from 1/1.5 at w = 0 towards 1 as w -> inf, so within the band the peak is just
    under 1. (Closed form derived here.)"""
    m = loop_margins(continuous_loop([0.5], [1, 1]))
    assert m.gain_margin_db == math.inf
    assert m.phase_margin_deg == math.inf
    assert m.delay_margin_s == math.inf
    assert m.gain_crossover_rad_s is None and m.phase_crossover_rad_s is None
    assert m.gain_crossovers == () and m.phase_crossovers == ()
    high = m.band_rad_s[1]
    assert m.sensitivity_peak == pytest.approx(1 / abs(1 + 0.5 / (1j * high + 1)), rel=1e-12)
    d = m.to_dict()
    assert d["gain_margin_db"] == math.inf and d["phase_margin_deg"] == math.inf
    assert d["delay_margin_s"] == math.inf and d["gain_crossovers"] == []


def test_discrete_infinite_margins_report_samples_as_inf():
    """L(z) = 0.01/(z - 0.9): |L| is largest at z = 1 (0.01/0.1 = 0.1 < 1), so no gain crossover and
    the delay margin is inf s and inf samples. arg(z - 0.9) runs from 0 to 180 deg only at z = -1,
    where L = 0.01/(-1.9) < 0: the only phase crossover is at Nyquist, gain margin 20 log10(190) dB.
    (Closed form derived here.)"""
    m = loop_margins(discrete_loop([0.01], [1, -0.9], 0.1))
    assert m.delay_margin_s == math.inf and m.delay_margin_samples == math.inf
    assert m.phase_margin_deg == math.inf
    assert m.gain_margin_db == pytest.approx(20 * math.log10(190), abs=1e-10)
    assert m.phase_crossover_rad_s == pytest.approx(math.pi / 0.1, rel=1e-15)


def test_integrators_far_from_the_breaks_extend_the_band():
    """L(s) = K/s has |L| = 1 at w = K exactly and PM = 90 deg; K/(s (s+1)) with tiny K crosses at
    w ~= K (closed form of the first test). The band must reach those crossovers however far from
    the breaks they are. (Closed form derived here.)"""
    for gain in (1e-7, 1e7):
        m = loop_margins(continuous_loop([gain], [1, 0]))
        assert m.gain_crossover_rad_s == pytest.approx(gain, rel=1e-12)
        assert m.phase_margin_deg == pytest.approx(90.0, abs=1e-9)
    m = loop_margins(continuous_loop([1e-6], [1, 1, 0]))
    wc = math.sqrt(2e-12 / (math.sqrt(1 + 4e-12) + 1))  # the closed form without cancellation
    assert m.gain_crossover_rad_s == pytest.approx(wc, rel=1e-9)


# --------------------------------------------------------------------------- zero-order hold


@pytest.mark.parametrize("period", [0.001, 0.01, 0.05])
def test_zero_order_hold_lags_half_a_sample(period):
    """ZOH equivalent of a/(s + a): G(z) = (1 - exp(-aT)) / (z - exp(-aT)) (derived: the step
    response 1 - exp(-a t) sampled, differenced). Its phase is the continuous phase -atan(w/a)
    minus about w T/2 for w << pi/T (common practice, no source). The residual found is about
    (w T/2) (a T/6); the check allows 2 % of the half-sample lag for a T <= 0.05."""
    a = 1.0
    p = math.exp(-a * period)
    digital = discrete_loop([-math.expm1(-a * period)], [1, -p], period)
    continuous = continuous_loop([a], [1, a])
    w = np.geomspace(1e-3, 0.1 * math.pi / period, 200)
    lag = w * period / 2
    diff = np.angle(frequency_response(digital, w)) - (np.angle(frequency_response(continuous, w)) - lag)
    assert np.all(np.abs(diff) <= 0.02 * lag)


def test_zero_order_hold_lag_shows_in_the_phase_margin_at_fast_sampling():
    """Plant 2/(s (s + 1)) under a zero-order hold: the digital phase margin is the continuous one
    minus wc T/2 (common practice, no source). ZOH matrices from the block matrix exponential
    expm([[A T, I], [0, 0]]) = [[Phi, phi1], [0, I]] (scipy.linalg.expm), delta form
    A_delta = A phi1, B_delta = phi1 B: at T = 1e-7 s the residual (order (wc T)^2) is far below
    1e-9 deg and the delta form must keep it so."""
    a = np.array([[0.0, 1.0], [0.0, -1.0]])
    b = np.array([[0.0], [1.0]])
    c = np.array([[2.0, 0.0]])
    cont = loop_margins(continuous_loop_state_space(a, b, c, [[0.0]]))
    for period, tol in ((1e-2, 2e-3), (1e-4, 1e-6), (1e-7, 1e-9)):
        block = scipy.linalg.expm(np.block([[a * period, np.eye(2)], [np.zeros((2, 4))]]))
        phi1 = block[:2, 2:]
        dig = loop_margins(discrete_loop_state_space(a @ phi1, phi1 @ b, c, [[0.0]], period, form="delta"))
        expected = cont.phase_margin_deg - math.degrees(cont.gain_crossover_rad_s * period / 2)
        assert dig.phase_margin_deg == pytest.approx(expected, abs=tol)


def _eighth_order_chain():
    """1e5 / ((s+1)(s+2)...(s+8)) as a chain of first-order lags (upper bidiagonal A)."""
    a = np.diag(-np.arange(1.0, 9.0)) + np.diag(np.ones(7), 1)
    b = np.zeros((8, 1))
    b[-1, 0] = 1.0
    c = np.zeros((1, 8))
    c[0, 0] = 1e5
    return a, b, c, np.zeros((1, 1))


def _zoh_delta(a, b, period):
    """Delta-form ZOH matrices from expm([[A T, I], [0, 0]]) = [[Phi, phi1], [0, I]] (scipy)."""
    n = a.shape[0]
    block = scipy.linalg.expm(np.block([[a * period, np.eye(n)], [np.zeros((n, 2 * n))]]))
    phi1 = block[:n, n:]
    return a @ phi1, phi1 @ b, scipy.linalg.expm(a * period), phi1 @ b * period


def test_delta_form_keeps_margins_at_nanosecond_sampling():
    """Eighth-order loop 1e5/((s+1)...(s+8)) under a zero-order hold at T = 1e-9 s (T over the slowest
    time constant = 1e-9): in delta form the digital margins equal the continuous ones less the
    half-sample lag wc T/2 (common practice, no source), here 4e-8 deg, to 1e-9 deg; the gain margin
    moves by less than 1e-7 dB."""
    a, b, c, d = _eighth_order_chain()
    cont = loop_margins(continuous_loop_state_space(a, b, c, d))
    period = 1e-9
    a_delta, b_delta, _, _ = _zoh_delta(a, b, period)
    dig = loop_margins(discrete_loop_state_space(a_delta, b_delta, c, d, period, form="delta"))
    expected = cont.phase_margin_deg - math.degrees(cont.gain_crossover_rad_s * period / 2)
    assert dig.phase_margin_deg == pytest.approx(expected, abs=1e-9)
    assert dig.gain_margin_db == pytest.approx(cont.gain_margin_db, abs=1e-7)
    assert len(dig.phase_crossovers) == len(cont.phase_crossovers) == 2


def test_noise_from_ill_conditioned_coefficients_is_refused():
    """The same eighth-order loop at T = 1e-3 s converted to polynomial coefficients in z by
    scipy.signal.ss2tf: the numerator comes out as rounding noise (all 9 coefficients below 1e-12,
    against a true DC gain of 1e5/40320), so the engine must refuse it rather than report margins."""
    a, b, c, d = _eighth_order_chain()
    _, _, phi, gamma = _zoh_delta(a, b, 1e-3)
    num, den = scipy.signal.ss2tf(phi, gamma, c, d)
    assert np.max(np.abs(num)) < 1e-12
    with pytest.raises(NumericalError, match="state-space delta form"):
        loop_margins(discrete_loop(num[0], den, 1e-3))


def test_discrete_state_space_integrator_matches_transfer():
    """x[k+1] = x[k] + T u[k], y = K x: the same loop as K T/(z - 1) (closed form: GM = 2/(K T))."""
    gain, period = 20.0, 0.01
    ss = loop_margins(discrete_loop_state_space([[1.0]], [[period]], [[gain]], [[0.0]], period))
    assert ss.gain_margin_db == pytest.approx(20 * math.log10(2 / (gain * period)), abs=1e-10)
    tf = loop_margins(discrete_loop([gain * period], [1, -1], period))
    assert ss.phase_margin_deg == pytest.approx(tf.phase_margin_deg, abs=1e-10)
    delta = loop_margins(discrete_loop_state_space([[0.0]], [[1.0]], [[gain]], [[0.0]], period, form="delta"))
    assert delta.phase_margin_deg == pytest.approx(tf.phase_margin_deg, abs=1e-10)


def test_long_delay_band_is_cut_after_a_fixed_number_of_turns():
    """2 exp(-s)/((s + 1)(1e-4 s + 1)): phase crossovers at every turn up to 1e7 rad/s; the band stops
    after MAX_DELAY_TURNS turns, yet the gain crossover (|L| = 1 at w = sqrt(3) for the slow lag,
    closed form, lightly moved by the fast one) is still found."""
    m = loop_margins(continuous_loop([2.0], np.polymul([1, 1], [1e-4, 1]), delay_s=1.0))
    assert m.band_rad_s[1] == pytest.approx(2 * math.pi * MAX_DELAY_TURNS, rel=1e-12)
    assert len(m.phase_crossovers) == MAX_DELAY_TURNS
    assert m.gain_crossover_rad_s == pytest.approx(math.sqrt(3), rel=1e-6)


# --------------------------------------------------------------------------- evaluation paths


def _companion(num, den):
    """Controllable canonical realisation of num/den (proper), built here from the textbook
    companion form: strictly proper part's numerator in C, leading term in D."""
    den = np.asarray(den, float)
    num = np.asarray(num, float)
    n = len(den) - 1
    num = np.concatenate([np.zeros(n + 1 - len(num)), num]) / den[0]
    den = den / den[0]
    d = num[0]
    rest = num[1:] - d * den[1:]
    a = np.zeros((n, n))
    a[0, :] = -den[1:]
    a[1:, :-1] = np.eye(n - 1)
    b = np.zeros((n, 1))
    b[0, 0] = 1.0
    return a, b, rest.reshape(1, n), np.array([[d]])


def test_continuous_responses_against_scipy_freqs():
    """Transfer and state-space paths against scipy.signal.freqs (reference library)."""
    num = [3.0, 1.0, 0.5]
    den = [1.0, 4.0, 6.0, 4.0, 1.0]
    w = np.geomspace(1e-3, 1e4, 500)
    _, ref = scipy.signal.freqs(num, den, worN=w)
    np.testing.assert_allclose(frequency_response(continuous_loop(num, den), w), ref, rtol=1e-11)
    ss = continuous_loop_state_space(*_companion(num, den))
    np.testing.assert_allclose(frequency_response(ss, w), ref, rtol=1e-9)
    delayed = frequency_response(continuous_loop(num, den, delay_s=0.3), w)
    np.testing.assert_allclose(delayed, ref * np.exp(-0.3j * w), rtol=1e-11)


def test_discrete_responses_against_scipy_freqz():
    """Transfer, shift and delta state-space paths against scipy.signal.freqz (reference library;
    it takes powers of z^-1, so the descending-z coefficients are padded to equal length)."""
    period = 0.05
    num = [0.2, -0.1]
    den = [1.0, -1.5, 0.7]
    w = np.linspace(0.01, math.pi / period, 300)
    b = np.concatenate([np.zeros(len(den) - len(num)), num])
    _, ref = scipy.signal.freqz(b, den, worN=w * period)
    np.testing.assert_allclose(frequency_response(discrete_loop(num, den, period), w), ref, rtol=1e-12)
    a_, b_, c_, d_ = _companion(num, den)
    shift = discrete_loop_state_space(a_, b_, c_, d_, period)
    np.testing.assert_allclose(frequency_response(shift, w), ref, rtol=1e-10)
    delta = discrete_loop_state_space((a_ - np.eye(2)) / period, b_ / period, c_, d_, period, form="delta")
    np.testing.assert_allclose(frequency_response(delta, w), ref, rtol=1e-10)
    delayed = discrete_loop(num, den, period, delay_samples=2)
    np.testing.assert_allclose(frequency_response(delayed, w), ref * np.exp(-2j * w * period), rtol=1e-12)


def test_state_space_and_transfer_margins_agree():
    """The same loop given as coefficients and as a companion realisation has the same margins
    (two evaluation paths; closed form cross-check via the triple lag 4/(s+1)^3: GM = 20 log10 2)."""
    num, den = [4.0], [1.0, 3.0, 3.0, 1.0]
    m_tf = loop_margins(continuous_loop(num, den))
    m_ss = loop_margins(continuous_loop_state_space(*_companion(num, den)))
    assert m_ss.gain_margin_db == pytest.approx(20 * math.log10(2), abs=1e-9)
    assert m_ss.phase_margin_deg == pytest.approx(m_tf.phase_margin_deg, abs=1e-9)
    assert m_ss.sensitivity_peak == pytest.approx(m_tf.sensitivity_peak, rel=1e-9)


# --------------------------------------------------------------------------- dense-grid oracle


CONTINUOUS_CASES = {
    # conditionally stable: phase dips below -180 twice then comes back (three phase crossovers)
    "conditionally_stable": (
        list(100 * np.polymul([1, 1], [1, 1])),
        list(np.polymul(np.poly([-0.01] * 3), np.polymul([0.01, 1], [0.01, 1]))),
        0.0,
    ),
    # PI on a lightly damped plant
    "lightly_damped": (list(np.polymul([1, 1], [4])), list(np.polymul([1, 0], [1, 0.02, 4])), 0.0),
    # lead-lag on a double lag with transport delay
    "lead_lag_delay": (list(np.polymul([2.0, 1.0], [5.0])), list(np.polymul([0.2, 1.0], [1, 2, 1])), 0.05),
    # unstable open loop, non-minimum phase zero, delay
    "unstable_nmp": ([-0.5, 4.0], list(np.polymul([1, -1], [1, 5])), 0.02),
}


@pytest.mark.parametrize("name", sorted(CONTINUOUS_CASES))
def test_continuous_margins_against_dense_grid(name):
    """Every crossing and the sensitivity peak against the independent 1e6-point grid
    (dense_grid_margins above), over the band the engine chose."""
    num, den, delay = CONTINUOUS_CASES[name]
    m = loop_margins(continuous_loop(num, den, delay_s=delay))
    low, high = m.band_rad_s
    ref = dense_grid_margins(num, den, low, high, delay_s=delay)
    assert_matches_oracle(m, ref)


def test_continuous_band_needs_no_hint():
    """Rational loops without delay: the engine's own band must contain every crossing that a
    grid over a much wider band [1e-6, 1e7] rad/s finds (dense_grid_margins)."""
    for name in ("conditionally_stable", "lightly_damped"):
        num, den, _ = CONTINUOUS_CASES[name]
        m = loop_margins(continuous_loop(num, den))
        ref = dense_grid_margins(num, den, 1e-6, 1e7)
        assert_matches_oracle(m, ref, rel_w=1e-6, abs_deg=1e-4, abs_db=1e-4, rel_peak=1e-5)


def test_discrete_margins_against_dense_grid():
    """Discrete PI-like loop 0.3 (z - 0.8) z^-2 / ((z - 1)(z - 0.6)) against the 1e6-point grid,
    which stops just short of pi/T. At z = -1 the loop is real: 0.3 (-1.8) / ((-2)(-1.6)) = -0.16875
    (closed form), a phase crossover AT the Nyquist frequency with gain margin -20 log10 0.16875."""
    period = 0.1
    num = list(np.polymul([0.3], [1, -0.8]))
    den = list(np.polymul([1, -1], [1, -0.6]))
    loop = discrete_loop(num, den, period, delay_samples=2)
    m = loop_margins(loop)
    low, high = m.band_rad_s
    ref = dense_grid_margins(num, den, low, high * (1 - 1e-12), period_s=period, delay_samples=2)
    assert_matches_oracle(m, ref, w_max=high)
    last = m.phase_crossovers[-1]
    assert last.frequency_rad_s == math.pi / period
    assert last.gain_margin_db == pytest.approx(-20 * math.log10(0.16875), abs=1e-12)
    assert len(m.gain_crossovers) >= 1 and len(m.phase_crossovers) >= 2


def test_undamped_mode_on_the_axis():
    """L(s) = (s + 0.2) / (s (s^2 + 4)): poles on the imaginary axis at 0 and +-2j. The engine steps
    around w = 2; crossings against the dense grid (which drops the infinite-magnitude axis
    crossing at the pole, |L| > 1e4), and |L| = 1 at each gain crossover by numpy.polyval."""
    num, den = [1.0, 0.2], [1.0, 0.0, 4.0, 0.0]
    m = loop_margins(continuous_loop(num, den))
    low, high = m.band_rad_s
    ref = dense_grid_margins(num, den, low, high, max_mag=1e4)
    assert_matches_oracle(m, ref, rel_peak=1e-5)
    for g in m.gain_crossovers:
        s = 1j * g.frequency_rad_s
        assert abs(np.polyval(num, s) / np.polyval(den, s)) == pytest.approx(1.0, rel=1e-12)


def test_gain_margins_put_closed_loop_roots_on_the_boundary():
    """Scaling the loop by each phase crossover's gain margin puts a root of den + k num on the
    imaginary axis (continuous) or unit circle (discrete) at that frequency (numpy.roots)."""
    num, den, _ = CONTINUOUS_CASES["conditionally_stable"]
    m = loop_margins(continuous_loop(num, den))
    assert len(m.phase_crossovers) == 3
    for p in m.phase_crossovers:
        k = 10 ** (p.gain_margin_db / 20)
        roots = np.roots(np.polyadd(den, k * np.asarray(num)))
        dist = np.min(np.abs(roots - 1j * p.frequency_rad_s))
        assert dist <= 1e-6 * max(1.0, p.frequency_rad_s)
    period = 0.1
    dnum = [0.3, -0.24]
    dden = list(np.polymul([1, -1], [1, -0.6]))
    m = loop_margins(discrete_loop(dnum, dden, period))
    for p in m.phase_crossovers:
        k = 10 ** (p.gain_margin_db / 20)
        roots = np.roots(np.polyadd(dden, k * np.asarray(dnum)))
        target = np.exp(1j * p.frequency_rad_s * period)
        assert np.min(np.abs(roots - target)) <= 1e-7


# --------------------------------------------------------------------------- property


@st.composite
def random_loops(draw):
    log_mag = st.floats(math.log(0.05), math.log(20.0))
    real_poles = draw(st.lists(log_mag, min_size=0, max_size=3))
    signs = draw(st.lists(st.sampled_from([1.0, 1.0, 1.0, -1.0]), min_size=3, max_size=3))
    poles = [-s * math.exp(x) for s, x in zip(signs, real_poles)]
    den = np.poly(poles) if poles else np.array([1.0])
    if draw(st.booleans()):
        wn = math.exp(draw(st.floats(math.log(0.1), math.log(10.0))))
        zeta = draw(st.floats(0.05, 0.9))
        den = np.polymul(den, [1.0, 2 * zeta * wn, wn * wn])
    if draw(st.booleans()):
        den = np.polymul(den, [1.0, 0.0])
    order = len(den) - 1
    zeros = draw(st.lists(st.floats(math.log(0.05), math.log(20.0)), max_size=min(2, order)))
    zsigns = draw(st.lists(st.sampled_from([1.0, 1.0, -1.0]), min_size=2, max_size=2))
    num = np.poly([-s * math.exp(x) for s, x in zip(zsigns, zeros)]) if zeros else np.array([1.0])
    log_gain = draw(st.floats(math.log(0.05), math.log(50.0)))
    delay = draw(st.sampled_from([0.0, 0.0, 0.05, 0.3]))
    if order == 0:
        den = np.array([1.0, 1.0])
    # |L| -> gain at high frequency when the loop is biproper; |L| identically 1 (an all-pass
    # with unit gain) is degenerate - every frequency is a crossover - so keep the gain off 1.
    assume(len(num) < len(den) or abs(log_gain) > 0.05)
    gain = math.exp(log_gain)
    return list(gain * num), list(den), delay


@settings(derandomize=True, max_examples=25, deadline=None)
@given(random_loops())
def test_random_loops_against_dense_grid(loop):
    """Random proper loops (real and complex poles, integrator, right-half-plane poles and zeros,
    delay): every crossing and the sensitivity peak against the independent grid over a fixed
    band [1e-3, 1e3] rad/s (3e5 points; tolerances scaled to the coarser grid)."""
    num, den, delay = loop
    m = loop_margins(continuous_loop(num, den, delay_s=delay), band_rad_s=(1e-3, 1e3))
    ref = dense_grid_margins(num, den, 1e-3, 1e3, delay_s=delay, points=300_000)
    assert_matches_oracle(m, ref, rel_w=1e-6, abs_deg=1e-4, abs_db=1e-4, rel_peak=1e-4)


@st.composite
def random_discrete_loops(draw):
    radius = st.floats(0.1, 1.15)
    angle = st.floats(0.05, 3.0)
    den = np.array([1.0])
    for _ in range(draw(st.integers(1, 3))):
        if draw(st.booleans()):
            den = np.polymul(den, [1.0, -draw(st.floats(-0.95, 1.1))])
        else:
            r, a = draw(radius), draw(angle)
            den = np.polymul(den, [1.0, -2 * r * math.cos(a), r * r])
    if draw(st.booleans()):
        den = np.polymul(den, [1.0, -1.0])  # integrator
    order = len(den) - 1
    zeros = draw(st.lists(st.floats(-0.9, 1.5), max_size=min(2, order)))
    num = np.poly(zeros) if zeros else np.array([1.0])
    log_gain = draw(st.floats(math.log(0.02), math.log(20.0)))
    assume(len(num) < len(den) or abs(log_gain) > 0.05)
    return list(math.exp(log_gain) * num), list(den), draw(st.integers(0, 3))


@settings(derandomize=True, max_examples=20, deadline=None)
@given(random_discrete_loops())
def test_random_discrete_loops_against_dense_grid(loop):
    """Random discrete loops (real and complex poles inside and outside the unit circle, integrator,
    zeros anywhere, 0-3 samples of delay, T = 0.1 s): crossings strictly below pi/T and the
    sensitivity peak against the independent grid (3e5 points up to just short of pi/T), and every
    crossing AT pi/T has L real negative there (numpy.polyval). Tolerances 1e-3 deg / dB: poles
    drawn as close as 0.998 to the unit circle make resonances the 3e5-point grid resolves coarsely
    (see the mpmath regression test below for such a case)."""
    num, den, delay = loop
    period = 0.1
    m = loop_margins(discrete_loop(num, den, period, delay_samples=delay), band_rad_s=(1e-3, 100.0))
    nyquist = math.pi / period
    ref = dense_grid_margins(
        num, den, 1e-3, nyquist * (1 - 1e-9), period_s=period, delay_samples=delay, points=300_000
    )
    assert_matches_oracle(m, ref, rel_w=1e-6, abs_deg=1e-3, abs_db=1e-3, rel_peak=1e-4, w_max=nyquist)
    at_end = np.polyval(num, -1.0) / np.polyval(den, -1.0) * (-1.0) ** delay
    ends = [p for p in m.phase_crossovers if p.frequency_rad_s == nyquist]
    assert len(ends) == (1 if at_end < 0 else 0)
    for p in ends:
        assert p.gain_margin_db == pytest.approx(-20 * math.log10(-at_end), abs=1e-9)


@settings(derandomize=True, max_examples=20, deadline=None)
@given(random_discrete_loops())
def test_transfer_shift_and_delta_forms_agree(loop):
    """Three evaluation paths must agree on random discrete loops: polynomial coefficients in z, a
    shift-form companion realisation and its delta form ((Phi - I)/T, Gamma/T) - same crossings to
    1e-9 relative, same margins to 1e-7 deg / dB."""
    num, den, delay = loop
    period = 0.1
    a, b, c, d = _companion(num, den)
    loops = [
        discrete_loop(num, den, period, delay_samples=delay),
        discrete_loop_state_space(a, b, c, d, period, delay_samples=delay),
        discrete_loop_state_space(
            (a - np.eye(a.shape[0])) / period, b / period, c, d, period, delay_samples=delay, form="delta"
        ),
    ]
    results = [loop_margins(lg, band_rad_s=(1e-3, 100.0)) for lg in loops]
    first = results[0]
    for other in results[1:]:
        assert len(other.gain_crossovers) == len(first.gain_crossovers)
        assert len(other.phase_crossovers) == len(first.phase_crossovers)
        for g, h in zip(first.gain_crossovers, other.gain_crossovers):
            assert h.frequency_rad_s == pytest.approx(g.frequency_rad_s, rel=1e-9)
            assert h.phase_margin_deg == pytest.approx(g.phase_margin_deg, abs=1e-7)
        for p, q in zip(first.phase_crossovers, other.phase_crossovers):
            assert q.frequency_rad_s == pytest.approx(p.frequency_rad_s, rel=1e-9, abs=1e-12)
            assert q.gain_margin_db == pytest.approx(p.gain_margin_db, abs=1e-7)
        assert other.sensitivity_peak == pytest.approx(first.sensitivity_peak, rel=1e-7)


def test_sharp_discrete_resonance_against_mpmath():
    """Regression example found by the property test above: L(z) = 1/(z^2 - 1.1813 z + 0.99610),
    poles at radius 0.998. The phase crossover is solved here independently in 40-digit arithmetic
    (mpmath.findroot on Im L, started from the dense grid's estimate); the engine must agree to
    1e-12 relative in frequency and 1e-9 dB."""
    import mpmath

    num, den, period = [1.0], [1.0, -1.181298411610375, 0.9960975646972656], 0.1
    m = loop_margins(discrete_loop(num, den, period))
    ref = dense_grid_margins(num, den, 1e-3, math.pi / period * (1 - 1e-9), period_s=period)
    assert len(ref["wp"]) == 1 == len(m.phase_crossovers)
    with mpmath.workdps(40):
        def ell(w):
            z = mpmath.exp(1j * w * mpmath.mpf(period))
            return 1 / (z * z + mpmath.mpf(den[1]) * z + mpmath.mpf(den[2]))

        wp = mpmath.findroot(lambda w: mpmath.im(ell(w)), mpmath.mpf(float(ref["wp"][0])))
        gm = float(-20 * mpmath.log10(abs(ell(wp))))
        assert mpmath.re(ell(wp)) < 0
    assert m.phase_crossovers[0].frequency_rad_s == pytest.approx(float(wp), rel=1e-12)
    assert m.gain_margin_db == pytest.approx(gm, abs=1e-9)


# --------------------------------------------------------------------------- output and input


def test_to_dict_lists_every_crossing():
    m = loop_margins(continuous_loop([1.0], [1, 0], delay_s=0.5))
    d = m.to_dict()
    for key in (
        "gain_margin_db", "phase_margin_deg", "delay_margin_s", "delay_margin_samples",
        "sensitivity_peak", "sensitivity_peak_rad_s", "gain_crossover_rad_s",
        "phase_crossover_rad_s", "gain_crossovers", "phase_crossovers", "classical_valid",
    ):
        assert key in d
    assert len(d["phase_crossovers"]) == len(m.phase_crossovers) > 10
    assert d["gain_crossovers"][0]["phase_margin_deg"] == m.phase_margin_deg
    assert d["classical_valid"] is None and d["domain"] == "continuous"
    assert d["delay_margin_below_one_sample"] is None and d["delay_margin_samples"] is None


def test_band_reaches_nyquist_for_discrete_loops():
    low, high = analysis_band(discrete_loop([0.1], [1, -0.9], 0.01))
    assert high == math.pi / 0.01 and 0 < low < high / 1e3


@pytest.mark.parametrize(
    ("build", "where"),
    [
        (lambda: continuous_loop([1.0], [0.0, 0.0]), "den"),
        (lambda: continuous_loop([1.0, float("nan")], [1.0, 1.0]), "num"),
        (lambda: continuous_loop([1.0], [1.0, 1.0], delay_s=-1.0), "delay_s"),
        (lambda: continuous_loop("abc", [1.0, 1.0]), "num"),
        (lambda: discrete_loop([1.0], [1.0, -0.5], 0.0), "period_s"),
        (lambda: discrete_loop([1.0], [1.0, -0.5], 0.1, delay_samples=1.5), "delay_samples"),
        (lambda: discrete_loop([1.0], [1.0, -0.5], 0.1, delay_samples=-1), "delay_samples"),
        (lambda: continuous_loop_state_space([[0, 1]], [[0], [1]], [[1, 0]], [[0]]), "a"),
        (lambda: continuous_loop_state_space([[0, 1], [0, 0]], [[0], [1], [2]], [[1, 0]], [[0]]), "b"),
        (lambda: continuous_loop_state_space([[0, 1], [0, 0]], [[0], [1]], [[1, 0, 1]], [[0]]), "c"),
        (lambda: discrete_loop_state_space([[0.5]], [[1]], [[1]], [[0]], 0.1, form="euler"), "form"),
        (lambda: loop_margins(continuous_loop([1.0], [1.0, 1.0]), band_rad_s=(10.0, 1.0)), "band_rad_s"),
    ],
)
def test_bad_input_names_the_argument(build, where):
    with pytest.raises(InputError) as info:
        build()
    assert str(info.value).startswith(f"{where}:")


def test_non_causal_discrete_loop_is_improper():
    with pytest.raises(ImproperError, match="num: numerator degree 2 exceeds"):
        discrete_loop([1.0, 0.0, 0.0], [1.0, -0.5], 0.1)
    # one sample of delay makes the same numerator causal
    discrete_loop([1.0, 0.0, 0.0], [1.0, -0.5], 0.1, delay_samples=1)
