"""Tests of the period sweep: boundaries against closed forms, agreement with the per-period path.

Sources are named beside each check: closed forms derived in the docstrings, scipy and numpy as
reference libraries, and the per-period route of ``sampled check`` (sampled.loop.assess).
"""

from __future__ import annotations

import glob
import math

import numpy as np
import pytest
import scipy.linalg
import scipy.signal
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled.casefile import load_case, parse_case
from sampled.errors import InputError
from sampled.loop import assess, digital_loop, judge_digital
from sampled.sweep import (
    BOUNDARY_RTOL,
    default_periods,
    stability_chart,
    sweep_periods,
)
from sampled.sweep_batch import closed_loop_eigen, loop_groups, phi_pair

CASES = sorted(glob.glob("cases/*.toml"))


def loop_case(plant: str, controller: str, compute_delay: str = "0 s", period: str = "0.1 s",
              requirements: str = "") -> object:
    return parse_case(f"""
title = "test loop"
[plant]
transfer = "{plant}"
[controller]
transfer = "{controller}"
method = "tustin"
[timing]
period = "{period}"
compute_delay = "{compute_delay}"
{requirements}
""", "test.toml")


def only_stability_boundary(result: object) -> float:
    found = [b for b in result.boundaries if b.kind == "stability"]  # type: ignore[attr-defined]
    assert len(found) == 1, found
    assert found[0].becomes == "unstable"
    return found[0].period_s


# ---- the batched block exponential ----------------------------------------------------------------

def test_phi_pair_against_scipy_block_exponential() -> None:
    """G = exp(A h) - I and F = phi_1(A h) against scipy.linalg.expm of the block
    [[A h, I], [0, 0]] (Van Loan 1978), whose upper-right block is phi_1(A h)."""
    a = np.array([[-1.0, 2.0, 0.0], [0.0, -3.0, 1.0], [0.5, 0.0, -400.0]])
    h = np.array([1e-3, 0.05, 0.3, 5.0])
    g, f = phi_pair(a, h)
    for i, hh in enumerate(h):
        big = np.zeros((6, 6))
        big[:3, :3], big[:3, 3:] = a * hh, np.eye(3)
        e = scipy.linalg.expm(big)
        assert np.allclose(f[i], e[:3, 3:], rtol=1e-12, atol=1e-14 * np.abs(e[:3, 3:]).max())
        assert np.allclose(np.eye(3) + g[i], e[:3, :3], rtol=1e-12, atol=1e-13)


def test_phi_pair_keeps_relative_accuracy_at_tiny_steps() -> None:
    """For a diagonal A the pair is elementwise: G = expm1(a h), F = expm1(a h)/(a h) (closed form;
    numpy.expm1 as the reference). Relative accuracy must survive h -> 0, where exp(A h) - I by
    subtraction would lose every digit."""
    lam = np.array([-1.0, -250.0, 3.0])
    h = np.array([1e-12, 1e-9, 1e-6, 1e-3, 1.0])
    g, f = phi_pair(np.diag(lam), h)
    for i, hh in enumerate(h):
        x = lam * hh
        assert np.allclose(np.diag(g[i]), np.expm1(x), rtol=1e-14, atol=0)
        assert np.allclose(np.diag(f[i]), np.expm1(x) / x, rtol=1e-14, atol=0)


# ---- boundaries against closed forms ---------------------------------------------------------------

def test_first_order_lag_boundary_is_coth() -> None:
    """First-order lag a/(s + a) under zero-order hold with proportional gain K (closed form).

    The pulse transfer is G(z) = (1 - e^{-aT}) / (z - e^{-aT}); with u = -K y the closed-loop pole is
    z = e^{-aT} - K (1 - e^{-aT}). It is below +1 for every K > 0, and above -1 when
    e^{-aT} (1 + K) > K - 1, i.e. for K > 1 when T < (1/a) ln((K + 1)/(K - 1)) = (2/a) arccoth K,
    which is K < coth(a T / 2). So the largest stable period is T* = (2/a) arccoth(K).
    """
    a, k = 2.0, 3.0
    expected = (2.0 / a) * math.atanh(1.0 / k)
    assert math.isclose(k, 1.0 / math.tanh(a * expected / 2.0), rel_tol=1e-14)
    spec = loop_case(f"{a}/(s + {a})", f"{k}")
    result = sweep_periods(spec, np.geomspace(0.01, 2.0, 60))
    found = only_stability_boundary(result)
    assert abs(found - expected) <= BOUNDARY_RTOL * expected
    assert result.largest_stable_period == found
    assert result.largest_period_meeting_requirements == found  # no requirements: stability decides
    assert result.stable_intervals == ((0.01, found),)


@settings(max_examples=8)
@given(st.floats(0.1, 100.0), st.floats(1.1, 20.0))
def test_first_order_lag_boundary_property(a: float, k: float) -> None:
    """The coth boundary (derived above) for generated a [1/s] and K."""
    expected = (2.0 / a) * math.atanh(1.0 / k)
    spec = loop_case(f"{a!r}/(s + {a!r})", f"{k!r}")
    result = sweep_periods(spec, np.geomspace(expected / 7.0, expected * 9.0, 25), with_margins=False)
    assert abs(only_stability_boundary(result) - expected) <= BOUNDARY_RTOL * expected


@pytest.mark.parametrize(
    ("delay", "kt_limit"),
    [
        # No delay: z - 1 + K T, stable for 0 < K T < 2 (closed form).
        ("0 s", 2.0),
        # One whole sample: z^2 - z + K T (Jury: |K T| < 1, 1 - 1 + K T > 0, 1 + 1 + K T > 0), K T < 1.
        ("1 sample", 1.0),
        # Fractional delays, see test_integrator_fractional_delay for the derivation.
        ("0.1 sample", 2.0 / (1.0 - 2 * 0.1)),
        ("0.3 sample", 1.0 / 0.3),
    ],
)
def test_integrator_loop_boundaries(delay: str, kt_limit: float) -> None:
    """Integrator plant 1/s with proportional gain K: the largest stable period is (limit)/K."""
    k = 4.0
    expected = kt_limit / k
    spec = loop_case("1/s", f"{k}", delay)
    result = sweep_periods(spec, np.geomspace(expected / 20, expected * 5, 40))
    found = only_stability_boundary(result)
    assert abs(found - expected) <= BOUNDARY_RTOL * expected


def test_integrator_fractional_delay_characteristic_polynomial() -> None:
    """Derivation for a computation delay theta = f T (0 < f < 1) and plant K/s (closed form).

    Over one period u[k-1] is held for theta and u[k] for T - theta:
    y[k+1] = y[k] + K ((T - theta) u[k] + theta u[k-1]). With u = -y, the characteristic polynomial
    is z^2 + (K T (1 - f) - 1) z + K T f. Jury conditions for z^2 + a1 z + a0: |a0| < 1,
    1 + a1 + a0 = K T > 0 and 1 - a1 + a0 = 2 - K T (1 - 2 f) > 0, so the loop is stable for
    K T < min(1/f, 2/(1 - 2 f)) (the second only when f < 1/2). Checked here against numpy.roots
    on both sides of the boundary, then against the sweep at several fractions.
    """
    k = 4.0
    for f in (0.1, 0.25, 0.3, 0.6):
        limit = min(1.0 / f, 2.0 / (1.0 - 2.0 * f) if f < 0.5 else math.inf)
        for side, stable in ((1 - 1e-6, True), (1 + 1e-6, False)):
            x = limit * side
            roots = np.roots([1.0, x * (1 - f) - 1.0, x * f])
            assert (np.max(np.abs(roots)) < 1.0) == stable
        expected = limit / k
        spec = loop_case("1/s", f"{k}", f"{f} sample")
        result = sweep_periods(spec, np.geomspace(expected / 10, expected * 4, 30), with_margins=False)
        found = only_stability_boundary(result)
        assert abs(found - expected) <= BOUNDARY_RTOL * expected, (f, found, expected)


# ---- non-monotone ------------------------------------------------------------------------------------

def test_lightly_damped_plant_is_stable_again_at_long_periods() -> None:
    """A lightly damped oscillator 1/(s^2 + 0.02 s + 1) under P control (K = 1) loses stability at
    short periods and regains it near T = 2 pi (the sampler no longer sees the oscillation: the
    pathological-sampling effect, Astrom and Wittenmark 1997, section 2.6, from memory). The sweep
    must report intervals; each boundary is checked against an independent per-period computation
    (scipy.signal.cont2discrete + numpy.roots, valid at these moderate periods)."""
    spec = loop_case("1/(s^2 + 0.02*s + 1)", "1")
    result = sweep_periods(spec, np.geomspace(0.01, 8.0, 200), with_margins=False)
    assert len(result.stable_intervals) == 2
    (lo1, hi1), (lo2, hi2) = result.stable_intervals
    assert lo1 == 0.01 and hi1 < 0.1 and 5.0 < lo2 < 2 * math.pi < hi2 < 8.0

    def radius(t: float) -> float:
        num, den, _ = scipy.signal.cont2discrete(([1.0], [1.0, 0.02, 1.0]), t, method="zoh")
        char = np.polyadd(den, np.squeeze(num))
        return float(np.max(np.abs(np.roots(char))))

    for b in result.boundaries:
        below, above = b.period_s * (1 - 1e-6), b.period_s * (1 + 1e-6)
        assert (radius(below) < 1.0) == (b.becomes == "unstable")
        assert (radius(above) < 1.0) == (b.becomes == "stable")


# ---- agreement with the per-period path -------------------------------------------------------------

@pytest.mark.slow
@pytest.mark.parametrize("path", CASES)
def test_sweep_agrees_with_check_at_every_point(path: str) -> None:
    """Verdicts and requirement status of the sweep equal those of the per-period route
    (sampled.loop.assess, as `sampled check` runs it) at sweep periods across the range and at
    periods just either side of every boundary found."""
    spec = load_case(path)
    periods = default_periods(spec)
    periods = np.geomspace(periods[0], periods[-1], 61)
    result = sweep_periods(spec, periods)
    picks = [0, 20, 40, 60]
    for i in picks:
        a = assess(spec, float(result.periods_s[i]), with_continuous=False)
        assert result.verdicts[i] == a.digital.verdict, (path, result.periods_s[i])
        for r in a.requirements:
            assert bool(result.requirements_met[r.name][i]) == r.met, (path, r.name, result.periods_s[i])
        assert bool(result.requirements_met["all"][i]) == a.passed
    for b in result.boundaries:
        # 1e-4 either side: close enough to test the located boundary, far enough that the per-period
        # route does not need its exact count on a high-order loop (slow beyond order 16).
        for side in (1 - 1e-4, 1 + 1e-4):
            t = b.period_s * side
            if not periods[0] <= t <= periods[-1]:
                continue
            a = assess(spec, t, with_continuous=False)
            inside_met = any(lo <= t <= hi for lo, hi in result.meeting_intervals)
            assert a.passed == inside_met, (path, b, t)
            inside_stable = any(lo <= t <= hi for lo, hi in result.stable_intervals)
            assert (a.digital.verdict == "stable") == inside_stable, (path, b, t)


@pytest.mark.parametrize("path", CASES)
def test_batched_verdicts_equal_per_period_verdicts(path: str) -> None:
    """The batched closed-loop eigen evidence gives the per-period verdict (judge_digital on
    digital_loop) at every one of a spread of periods, and the same spectral radius to rounding."""
    spec = load_case(path)
    periods = np.geomspace(*default_periods(spec)[[0, -1]], 15)
    result = sweep_periods(spec, periods, with_margins=False)
    for i, t in enumerate(periods):
        d = judge_digital(digital_loop(spec, float(t)), with_margins=False)
        assert result.verdicts[i] == d.verdict, (path, t)
        assert math.isclose(result.spectral_radius[i], d.spectral_radius, rel_tol=1e-9)


# ---- the result and the chart ------------------------------------------------------------------------

def test_requirements_give_a_smaller_largest_period() -> None:
    """With a phase-margin requirement the answer is a requirement boundary below the stability one,
    and it is where the per-period margin equals the limit (sampled.loop.assess at both sides)."""
    spec = loop_case("2/(s + 2)", "3", requirements="[requirements]\nphase_margin_deg = 60")
    result = sweep_periods(spec, np.geomspace(0.01, 2.0, 40))
    best = result.largest_period_meeting_requirements
    assert best is not None and best < result.largest_stable_period  # type: ignore[operator]
    below = assess(spec, best * (1 - 1e-6), with_continuous=False)
    above = assess(spec, best * (1 + 1e-6), with_continuous=False)
    assert below.passed and not above.passed
    assert math.isclose(below.digital.margins.phase_margin_deg, 60.0, abs_tol=1e-3)  # type: ignore[union-attr]


def test_no_period_meets_the_requirements_gives_none() -> None:
    spec = loop_case("2/(s + 2)", "3", requirements="[requirements]\ngain_margin_db = 60")
    result = sweep_periods(spec, np.geomspace(0.01, 0.3, 10))
    assert result.largest_period_meeting_requirements is None
    assert result.meeting_intervals == ()
    assert result.to_dict()["largest_period_meeting_requirements"] is None


def test_to_dict_has_the_promised_keys() -> None:
    spec = loop_case("1/s", "4")
    d = sweep_periods(spec, np.geomspace(0.1, 1.0, 5)).to_dict()
    for key in ("periods", "verdicts", "spectral_radius", "boundaries", "largest_period_meeting_requirements"):
        assert key in d
    assert d["boundaries"][0]["kind"] == "stability" and "period" in d["boundaries"][0]


def test_stability_chart_matches_coth_in_gain_and_period() -> None:
    """Chart cell (g, T) of a/(s + a) with gain K is stable iff g K < coth(a T / 2) (closed form
    above), away from the boundary; the design point is (case period, 1)."""
    a, k = 2.0, 3.0
    spec = loop_case(f"{a}/(s + {a})", f"{k}")
    periods = np.geomspace(0.05, 2.0, 30)
    gains = np.geomspace(0.2, 5.0, 21)
    chart = stability_chart(spec, periods, gains)
    assert chart.design_point == (0.1, 1.0)
    expect = (gains[:, None] * k) < 1.0 / np.tanh(a * periods[None, :] / 2.0)
    assert np.array_equal(chart.stable, expect)


def test_gain_one_row_equals_the_sweep() -> None:
    spec = load_case("cases/camera_gimbal_pitch.toml")
    periods = np.geomspace(1e-4, 1e-2, 40)
    chart = stability_chart(spec, periods, np.array([0.5, 1.0, 2.0]))
    result = sweep_periods(spec, periods, with_margins=False)
    assert np.array_equal(chart.stable[1], result.stable)


def test_progress_is_reported() -> None:
    calls: list[tuple[int, int]] = []
    sweep_periods(loop_case("1/s", "4"), np.geomspace(0.1, 1.0, 9), progress=lambda d, t: calls.append((d, t)))
    assert calls and calls[-1][0] == calls[-1][1]


def test_default_periods_from_the_case_and_around_its_period() -> None:
    drone = load_case("cases/drone_motor_speed.toml")
    p = default_periods(drone)
    assert p.size == 400 and math.isclose(p[0], 20e-6) and math.isclose(p[-1], 5e-3)
    assert np.allclose(np.diff(np.log(p)), np.log(p[1] / p[0]))
    plain = loop_case("1/s", "4")
    q = default_periods(plain)
    assert q[0] < 0.1 < q[-1]


def test_bad_periods_are_refused() -> None:
    spec = loop_case("1/s", "4")
    with pytest.raises(InputError, match="period"):
        sweep_periods(spec, np.array([0.1, -1.0]))
    with pytest.raises(InputError, match="period"):
        sweep_periods(spec, np.array([]))


def test_batched_loop_matches_per_period_poles_at_fast_sampling() -> None:
    """Down to T/tau = 1e-9 the batched delta eigenvalues give the same 1 - |z| as the per-period
    delta-form poles (DiscreteSystem.poles), relative to its size."""
    spec = load_case("cases/drone_motor_speed.toml")
    periods = np.array([3.5e-11, 3.5e-9, 3.5e-7])
    ev = closed_loop_eigen(loop_groups(spec, periods), periods.size)
    for i, t in enumerate(periods):
        ref = digital_loop(spec, float(t)).closed_loop.poles().unit_circle_distance.min()
        assert ref > 0 and math.isclose(ev.distance[i], ref, rel_tol=1e-6)
