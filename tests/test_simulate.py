"""Step response of the loop as it runs (sampled.simulate), against references outside the module.

References used, named beside each check:
* scipy.signal.dlsim on the closed-loop state space that sampled.loop assembles (the samples);
* scipy.integrate.solve_ivp (tight tolerances, integrated piece by piece between the instants where
  the held input changes) of the continuous plant under the held input (between samples);
* closed forms derived in the docstrings (first-order loop, integrator with delay, hidden ripple);
* scipy.signal.step of the continuous closed-loop transfer (the continuous design without delay).
"""

from __future__ import annotations

import glob
import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
import scipy.integrate
import scipy.signal

from sampled.casefile import load_case, parse_case
from sampled.errors import InputError
from sampled.loop import digital_loop
from sampled.simulate import continuous_step, default_samples, step_response

CASES = sorted(glob.glob("cases/*.toml"))


def _case(plant: str, controller: str, period: str, extra: str = "") -> str:
    return f"""
[plant]
{plant}
{extra}
[controller]
{controller}
[timing]
period = "{period}"
"""


def _dlsim(spec, samples: int) -> np.ndarray:
    cl = digital_loop(spec).closed_loop.with_delay_states()
    _, y, _ = scipy.signal.dlsim((cl.phi, cl.gamma, cl.c, cl.d, cl.period_s), np.ones(samples))
    return y[:, 0]


@pytest.mark.parametrize("path", CASES)
def test_samples_equal_dlsim_of_the_closed_loop(path):
    """The measured output at the samples equals scipy.signal.dlsim of the closed loop assembled by
    sampled.loop (a different construction: pulse transfer and feedback in state space)."""
    spec = load_case(path)
    r = step_response(spec, samples=120, with_continuous=False)
    ref = _dlsim(spec, 120)
    scale = max(1.0, float(np.max(np.abs(ref))))
    assert np.max(np.abs(r.y_samples - ref)) <= 1e-9 * scale


def test_first_order_loop_closed_form():
    """Plant a/(s + a), proportional gain K, no delay. With p = exp(-a T) the ZOH plant is
    y[k+1] = p y[k] + (1 - p) u[k] and u[k] = K (1 - y[k]), so

        y[k] = K/(1 + K) (1 - (p - (1 - p) K)^k).

    (closed form derived here)"""
    a, k_gain, t = 3.0, 2.0, 0.1
    spec = parse_case(_case(f'transfer = "{a}/(s + {a})"', f'transfer = "{k_gain}"', f"{t} s"))
    r = step_response(spec, samples=40)
    p = math.exp(-a * t)
    k = np.arange(40)
    ref = k_gain / (1 + k_gain) * (1 - (p - (1 - p) * k_gain) ** k)
    assert np.max(np.abs(r.y_samples - ref)) < 1e-13
    assert np.allclose(r.u_samples, k_gain * (1 - ref), atol=1e-13)


def _ode_reference(spec, r, t_eval: np.ndarray) -> np.ndarray:
    """Plant output under the held input u[k] applied at kT + tau_c + L_p, by solve_ivp piecewise."""
    a, b, c, d = spec.plant.state_space()
    n = a.shape[0]
    t_per = r.period_s
    lag = r.compute_delay_s + spec.plant.delay_s
    switch = np.arange(r.samples) * t_per + lag  # u[k] from here on

    def held(tt: float) -> float:
        idx = int(np.searchsorted(switch, tt, side="right")) - 1
        return float(r.u_samples[idx]) if idx >= 0 else 0.0

    edges = np.unique(np.concatenate([[0.0], switch[switch < t_eval[-1]], [t_eval[-1]]]))
    x = np.zeros(n)
    out = np.zeros(t_eval.size)
    for lo, hi in zip(edges[:-1], edges[1:]):
        v = held(lo)
        mask = (t_eval >= lo) & (t_eval <= hi)
        sol = scipy.integrate.solve_ivp(lambda _t, xx: a @ xx + b[:, 0] * v, (lo, hi), x, method="DOP853",
                                        rtol=1e-12, atol=1e-14, t_eval=t_eval[mask], dense_output=False)
        if mask.any():
            out[mask] = c[0] @ sol.y + d[0, 0] * np.array([held(tt) for tt in t_eval[mask]])
        end = scipy.integrate.solve_ivp(lambda _t, xx: a @ xx + b[:, 0] * v, (lo, hi), x, method="DOP853",
                                        rtol=1e-12, atol=1e-14)
        x = end.y[:, -1]
    return out


@pytest.mark.parametrize("path", ["cases/drone_motor_speed.toml", "cases/print_bed_heater.toml"])
def test_between_samples_equals_ode_solution(path):
    """y(t) between samples against scipy.integrate.solve_ivp of the continuous plant driven by the
    held commands (fractional computation delay and plant transport delay included)."""
    spec = load_case(path)
    r = step_response(spec, samples=25, points_per_period=8, with_continuous=False)
    ref = _ode_reference(spec, r, r.t_fine)
    scale = max(1.0, float(np.max(np.abs(ref))))
    assert np.max(np.abs(r.y_fine - ref)) <= 1e-8 * scale


def test_fractional_plant_delay_against_ode():
    """A plant delay of 0.37 periods plus a computation delay of 1.2 periods: both breakpoints are on
    the fine grid and the output matches solve_ivp."""
    text = _case('transfer = "4/((s + 1)*(0.5*s + 1))"\ndelay = "0.037 s"', 'transfer = "0.6*(s + 2)/s"', "0.1 s")
    text = text.replace('period = "0.1 s"', 'period = "0.1 s"\ncompute_delay = "1.2 sample"')
    spec = parse_case(text)
    r = step_response(spec, samples=60, points_per_period=5)
    theta = (0.037 + 0.12) % 0.1
    assert np.any(np.isclose(r.t_fine[: r.fine_per_period], theta, atol=1e-15))
    ref = _ode_reference(spec, r, r.t_fine)
    assert np.max(np.abs(r.y_fine - ref)) <= 1e-8
    # the staircase as applied changes 1.2 periods after each update
    k = 7
    on_switch = np.flatnonzero(np.isclose(r.t_fine, (k + 1.2) * 0.1, rtol=0, atol=1e-12))
    assert on_switch.size == 1
    assert r.u_fine[on_switch[0]] == r.u_samples[k]
    assert r.u_fine[on_switch[0] - 1] == r.u_samples[k - 1]


def test_hidden_ripple_closed_form():
    """Plant  w^2/((s^2 + w^2)(s + 1))  with w = 2 pi / T (an undamped mode at the pathological
    period), integral controller u[k] = u[k-1] + 0.3 e[k-1].

    Each held value drives the oscillator through whole periods, so its state at the samples never
    moves; the lag sees u (1 - cos w t). In steady state (u = u_inf) the output is periodic with the
    sample period:

        y(t) = u_inf - u_inf Re(exp(j w t) / (1 + j w)),

    and y(kT) = 1 gives u_inf = (1 + w^2)/w^2. So the samples settle at exactly 1 while the output
    between samples keeps oscillating with amplitude u_inf / sqrt(1 + w^2). (closed form derived here)
    """
    w = 2 * math.pi
    text = f"""
[plant]
transfer = "{w * w!r}/((s^2 + {w * w!r})*(s + 1))"
[controller.digital]
b = [0, 0.3]
a = [1, -1]
[timing]
period = "1 s"
"""
    spec = parse_case(text)
    r = step_response(spec, samples=80, points_per_period=32)
    u_inf = (1 + w * w) / (w * w)
    assert np.max(np.abs(r.y_samples[-10:] - 1.0)) < 1e-9
    assert r.u_samples[-1] == pytest.approx(u_inf, rel=1e-9)
    tail = r.t_fine >= 70.0
    tt = r.t_fine[tail]
    ref = u_inf - u_inf * np.real(np.exp(1j * w * tt) / (1 + 1j * w))
    assert np.max(np.abs(r.y_fine[tail] - ref)) < 1e-8
    amp = u_inf / math.sqrt(1 + w * w)
    assert (np.max(r.y_fine[tail]) - np.min(r.y_fine[tail])) / 2 == pytest.approx(amp, rel=0.01)
    # and against the ODE solution of the plant under the held input
    ref_ode = _ode_reference(spec, r, r.t_fine[r.t_fine <= 12.0])
    assert np.max(np.abs(r.y_fine[r.t_fine <= 12.0] - ref_ode)) < 1e-8
    assert r.continuous_y is None and r.notes


def test_integrator_with_delay_continuous_closed_form():
    """Continuous design: plant 2/s with transport delay L = 0.3 s, controller 0.8 (K = 1.6).
    y'(t) = K (1 - y(t - L)) with y = 0 before L; by the method of steps on [0, 5L]

        y(t) = sum_{j=1..5} (-1)^(j+1) K^j (t - jL)_+^j / j!.

    (closed form derived here)"""
    spec = parse_case(_case('transfer = "2/s"\ndelay = "0.3 s"', 'transfer = "0.8"', "0.1 s"))
    out = continuous_step(spec, 1.5, 0.01)
    assert isinstance(out, tuple)
    t, y, method = out
    k, lag = 1.6, 0.3
    ref = sum((-1) ** (j + 1) * k**j * np.clip(t - j * lag, 0, None) ** j / math.factorial(j) for j in range(1, 6))
    assert np.max(np.abs(y - ref)) < 1e-12
    assert "method of steps" in method


def test_sensor_delay_shifts_the_plant_output():
    """With the whole delay in the sensor, the plant output of the continuous design starts moving at
    t = 0 (controller output acts at once) while the loop only reacts after the delay:
    y(t) = K t  for  t < L  (plant 2/s, proportional 0.8). (closed form derived here)"""
    text = _case('transfer = "2/s"', 'transfer = "0.8"', "0.1 s", '[sensor]\ntransfer = "1"\ndelay = "0.3 s"')
    out = continuous_step(parse_case(text), 1.0, 0.01)
    assert isinstance(out, tuple)
    t, y, _ = out
    early = t < 0.3 - 1e-9
    assert np.max(np.abs(y[early] - 1.6 * t[early])) < 1e-12
    assert t[0] == 0.0


def test_continuous_design_against_scipy_step():
    """No delay: C(s) = 2(s + 1)/s, P(s) = 1/(s^2 + 0.4 s + 1), F(s) = 1/(0.1 s + 1); the plant output
    is C P / (1 + C P F), compared with scipy.signal.step of that transfer."""
    text = _case('transfer = "1/(s^2+0.4*s+1)"', 'transfer = "2*(s+1)/s"', "0.05 s", '[sensor]\ntransfer = "1/(0.1*s+1)"')
    spec = parse_case(text)
    r = step_response(spec, samples=200)
    assert r.continuous_t is not None and r.continuous_y is not None
    num = np.polymul([2, 2], [0.1, 1])
    den = np.polyadd(np.polymul(np.polymul([1, 0], [1, 0.4, 1]), [0.1, 1]), np.polymul([2, 2], [1]))
    _, ref = scipy.signal.step((num, den), T=r.continuous_t)
    assert np.max(np.abs(r.continuous_y - ref)) < 1e-9
    assert r.continuous_t[-1] == pytest.approx(r.t_samples[-1])


def test_default_horizon_covers_the_slowest_pole():
    """Default K: 7 time constants of the slowest closed-loop pole (-1/ln|z| samples)."""
    spec = parse_case(_case('transfer = "1/(s + 1)"', 'transfer = "0.5"', "0.1 s"))
    cl = digital_loop(spec).closed_loop
    z = abs(complex(cl.poles().z[0]))
    assert default_samples(cl) == math.ceil(7 * (-1 / math.log(z)) + 2)
    r = step_response(spec)
    assert r.samples == default_samples(cl)


def test_fine_grid_layout_and_json():
    spec = load_case("cases/water_tank_level.toml")
    r = step_response(spec, samples=10, points_per_period=4)
    assert r.t_fine[-1] == r.t_samples[-1]
    assert np.all(np.diff(r.t_fine) > 0)
    assert np.allclose(r.t_fine[:: r.fine_per_period], r.t_samples)
    d = r.to_dict()
    assert len(d["t_fine"]) == len(d["y_fine"]) == len(d["u_fine"])
    assert d["continuous_t"] is None


def test_bad_arguments():
    spec = load_case("cases/water_tank_level.toml")
    with pytest.raises(InputError, match="samples"):
        step_response(spec, samples=1)
    with pytest.raises(InputError, match="points_per_period"):
        step_response(spec, points_per_period=0)


@given(
    gain=st.floats(0.2, 5.0),
    tau1=st.floats(0.05, 3.0),
    tau2=st.floats(0.0, 1.0),
    plant_delay_periods=st.floats(0.0, 2.5),
    compute_periods=st.floats(0.0, 1.5),
    kp=st.floats(0.05, 1.0),
    ti=st.floats(0.2, 5.0),
)
def test_property_samples_agree_with_dlsim(gain, tau1, tau2, plant_delay_periods, compute_periods, kp, ti):
    """Property (derandomised profile of tests/conftest.py): for lag plants with any transport and
    computation delay, the simulation as it runs equals scipy.signal.dlsim of the closed loop
    assembled by sampled.loop at every sample, stable or not."""
    t = 0.1
    den = f"({tau1!r}*s + 1)" + (f"*({tau2!r}*s + 1)" if tau2 > 0.01 else "")
    text = _case(f'transfer = "{gain!r}/({den})"\ndelay = {plant_delay_periods * t!r}',
                 f'transfer = "{kp!r}*({ti!r}*s + 1)/({ti!r}*s)"', f"{t} s")
    text = text.replace(f'period = "{t} s"', f'period = "{t} s"\ncompute_delay = "{compute_periods!r} sample"')
    spec = parse_case(text)
    r = step_response(spec, samples=60, points_per_period=2, with_continuous=False)
    ref = _dlsim(spec, 60)
    scale = max(1.0, float(np.max(np.abs(ref))))
    assert np.max(np.abs(r.y_samples - ref)) <= 1e-9 * scale
