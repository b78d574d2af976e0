"""Figures: the data each one shows, checked against references outside the project.

* The sampled step response at the samples against ``scipy.signal.dlsim`` of a closed loop built
  here from ``scipy.signal.cont2discrete`` (zero-order hold plant, bilinear controller) and
  polynomial algebra, independently of sampled's own assembly.
* The plant output between samples against ``scipy.integrate.solve_ivp`` of the continuous plant
  driven by the held input, integrated piece by piece between the instants where the hold changes.
* The continuous design's response against ``scipy.signal.step`` of the continuous closed loop.
* Poles, zeros and margins against closed forms derived in the docstrings.

Every figure is a bare ``matplotlib.figure.Figure`` on the Agg canvas (no pyplot); the data artists
are found by their ``gid``.
"""

from __future__ import annotations

import math
from pathlib import Path

import matplotlib
import numpy as np
import pytest
import scipy.integrate
import scipy.signal
from matplotlib.backends.backend_agg import FigureCanvasAgg

from sampled.casefile import parse_case
from sampled.errors import InputError
from sampled.loop import assess
from sampled.report import figures as F
from sampled.simulate import step_response
from sampled.sweep import stability_chart, sweep_periods


def _case(plant: str, controller: str, period: str, delay: str = "0 s", extra: str = "", method: str = "tustin"):
    text = f"""
title = "figure test"
[plant]
transfer = "{plant}"
[controller]
transfer = "{controller}"
method = "{method}"
[timing]
period = "{period}"
compute_delay = "{delay}"
{extra}
"""
    return parse_case(text, "figure-test.toml")


def _artist(fig, gid):
    for ax in fig.axes:
        for artist in list(ax.get_lines()) + list(ax.collections):
            if artist.get_gid() == gid:
                return artist
    raise AssertionError(f"no artist with gid {gid!r}")


def _xy(artist) -> tuple[np.ndarray, np.ndarray]:
    return np.asarray(artist.get_xdata(), dtype=float), np.asarray(artist.get_ydata(), dtype=float)


def _offsets(artist) -> np.ndarray:
    xy = np.asarray(artist.get_offsets(), dtype=float)
    return xy[:, 0] + 1j * xy[:, 1]


def _same_points(a: np.ndarray, b: np.ndarray, tol: float) -> None:
    a, b = np.sort_complex(np.asarray(a, complex)), np.sort_complex(np.asarray(b, complex))
    assert a.size == b.size
    np.testing.assert_allclose(a.real, b.real, atol=tol)
    np.testing.assert_allclose(a.imag, b.imag, atol=tol)


# ---- step response ---------------------------------------------------------------------------------

PLANT_NUM, PLANT_DEN = [2.0], [0.5, 1.5, 1.0]  # 2/((s + 1)(0.5 s + 1))
CTRL_NUM, CTRL_DEN = [0.48, 0.6], [0.8, 0.0]  # 0.6 (0.8 s + 1)/(0.8 s)
PLANT_TEXT = "2/(0.5*s^2 + 1.5*s + 1)"
CTRL_TEXT = "0.6*(0.8*s + 1)/(0.8*s)"
T = 0.1


def _time_scale(fig) -> float:
    label = fig.axes[-1].get_xlabel()
    return {"time [s]": 1.0, "time [ms]": 1e-3, "time [us]": 1e-6}[label]


def test_step_figure_samples_equal_dlsim_of_an_independent_closed_loop():
    """y_m[k] and u[k] of the figure against scipy.signal.dlsim.

    Reference loop, built without sampled: G(z) = ZOH(P) by cont2discrete, C(z) by the bilinear
    (Tustin) map, one whole sample of computation delay z^-1. With C = nc/dc, G = ng/dg:
    y/r = nc ng / (z dc dg + nc ng) and u/r = z nc dg / (z dc dg + nc ng).
    """
    spec = _case(PLANT_TEXT, CTRL_TEXT, f"{T} s", "1 sample")
    step = step_response(spec, samples=60)
    fig = F.step_response_figure(step)
    assert isinstance(fig.canvas, FigureCanvasAgg)
    scale = _time_scale(fig)

    ng, dg, _ = scipy.signal.cont2discrete((PLANT_NUM, PLANT_DEN), T, method="zoh")
    nc, dc, _ = scipy.signal.cont2discrete((CTRL_NUM, CTRL_DEN), T, method="bilinear")
    ng, nc = np.ravel(ng), np.ravel(nc)
    open_num = np.polymul(nc, ng)
    den = np.polyadd(np.polymul(np.polymul(dc, dg), [1.0, 0.0]), open_num)
    u_num = np.polymul(np.polymul(nc, dg), [1.0, 0.0])
    k = step.t_samples.size
    y_ref = scipy.signal.dlsim((open_num, den, T), np.ones(k))[1]
    u_ref = scipy.signal.dlsim((u_num, den, T), np.ones(k))[1]

    t_art, y_art = _xy(_artist(fig, "sampled-output-at-samples"))
    np.testing.assert_allclose(t_art * scale, np.arange(k) * T, rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(y_art, y_ref.ravel(), rtol=1e-8, atol=1e-10)
    _, u_art = _xy(_artist(fig, "actuator-samples"))
    np.testing.assert_allclose(u_art, u_ref.ravel(), rtol=1e-8, atol=1e-10)
    # The figure shows the library's data unchanged.
    np.testing.assert_array_equal(y_art, step.y_samples)


def _ode_between_samples(t_fine, u_samples, period_s, delay_s):
    """Plant output under the held input u[k] on [kT + delay, (k+1)T + delay), by solve_ivp piecewise.

    The plant is realised by scipy.signal.tf2ss; each hold interval is integrated separately (DOP853,
    rtol 1e-11) so the solver never steps across a jump of the input.
    """
    a, b, c, d = scipy.signal.tf2ss(PLANT_NUM, PLANT_DEN)
    switches = [delay_s + k * period_s for k in range(u_samples.size)]
    edges = sorted({0.0, *[s for s in switches if s < t_fine[-1]], float(t_fine[-1])})

    def held(t):
        k = math.floor((t - delay_s) / period_s + 1e-12)
        return 0.0 if k < 0 else float(u_samples[min(k, u_samples.size - 1)])

    x = np.zeros(a.shape[0])
    out = np.empty_like(t_fine)
    for lo, hi in zip(edges[:-1], edges[1:]):
        v = held(0.5 * (lo + hi))
        inside = (t_fine >= lo) & (t_fine <= hi)
        sol = scipy.integrate.solve_ivp(lambda _t, xx: a @ xx + b[:, 0] * v, (lo, hi), x, method="DOP853",
                                        rtol=1e-11, atol=1e-13, t_eval=t_fine[inside], dense_output=False)
        out[inside] = (c @ sol.y)[0] + d[0, 0] * v
        x = scipy.integrate.solve_ivp(lambda _t, xx: a @ xx + b[:, 0] * v, (lo, hi), x, method="DOP853",
                                      rtol=1e-11, atol=1e-13).y[:, -1]
    return out, np.array([held(t) for t in t_fine])


@pytest.mark.parametrize("delay_samples", [1.0, 0.4])
def test_step_figure_between_samples_equals_ode_solution(delay_samples):
    """The line of the sampled loop is the exact plant output between samples (solve_ivp), and the
    actuator staircase is the controller output held from kT + computation delay."""
    spec = _case(PLANT_TEXT, CTRL_TEXT, f"{T} s", f"{delay_samples} sample")
    step = step_response(spec, samples=40)
    fig = F.step_response_figure(step)
    scale = _time_scale(fig)
    t_line, y_line = _xy(_artist(fig, "sampled-output-between-samples"))
    t = t_line * scale
    y_ref, u_held = _ode_between_samples(t, step.u_samples, T, delay_samples * T)
    np.testing.assert_allclose(y_line, y_ref, rtol=1e-7, atol=1e-9)
    # Points strictly inside a period exist: this is the intersample response, not the samples.
    assert np.count_nonzero(np.abs(np.mod(t / T + 0.5, 1.0) - 0.5) > 1e-6) > 5 * step.t_samples.size
    stair = _artist(fig, "actuator-staircase")
    assert stair.get_drawstyle() == "steps-post"
    _, u_line = _xy(stair)
    away = np.abs(np.mod((t - delay_samples * T) / T + 0.5, 1.0) - 0.5) > 1e-9  # not at a switching instant
    np.testing.assert_allclose(u_line[away], u_held[away], rtol=1e-12, atol=1e-12)


def test_step_figure_continuous_design_equals_scipy_step():
    """The dashed line is the continuous closed loop C P / (1 + C P) under a unit step (scipy.signal.step)."""
    spec = _case(PLANT_TEXT, CTRL_TEXT, f"{T} s", "1 sample")
    step = step_response(spec, samples=40)
    fig = F.step_response_figure(step)
    t_c, y_c = _xy(_artist(fig, "continuous-output"))
    t_c = t_c * _time_scale(fig)
    num = np.polymul(CTRL_NUM, PLANT_NUM)
    den = np.polyadd(np.polymul(CTRL_DEN, PLANT_DEN), num)
    _, y_ref = scipy.signal.step((num, den), T=t_c)
    np.testing.assert_allclose(y_c, y_ref, rtol=1e-6, atol=1e-8)


# ---- z plane and pole paths ------------------------------------------------------------------------

A_LAG, K_LAG = 2.0, 3.0


def _lag_spec(period: float):
    return _case(f"{A_LAG}/(s + {A_LAG})", f"{K_LAG}", f"{period} s")


def _lag_pole(period: float, gain: float = 1.0) -> float:
    """Closed-loop pole of K a/(s+a) under a zero-order hold with unity feedback (derivation):

    G(z) = (1 - e)/(z - e), e = exp(-a T)  (ZOH equivalent of a first-order lag);
    1 + g K G(z) = 0  =>  z = e - g K (1 - e).
    """
    e = math.exp(-A_LAG * period)
    return e - gain * K_LAG * (1.0 - e)


def test_z_plane_figure_first_order_closed_form():
    """Pole cross at the closed form; the continuous design's pole s = -a(1 + K) drawn at exp(sT)."""
    period = 0.1
    a = assess(_lag_spec(period))
    fig = F.z_plane_figure(a)
    _same_points(_offsets(_artist(fig, "closed-loop-poles")), [_lag_pole(period)], 1e-12)
    _same_points(_offsets(_artist(fig, "continuous-poles-mapped")), [math.exp(-A_LAG * (1 + K_LAG) * period)], 1e-12)
    circle = _xy(_artist(fig, "unit-circle"))
    np.testing.assert_allclose(np.hypot(*circle), 1.0, rtol=1e-12)


def test_z_plane_zero_of_sampled_motor_closed_form_and_scipy():
    """Zero of the ZOH equivalent of 1/(s (s + 1)): with e = exp(-T),

    G(z) = ((T - 1 + e) z + (1 - e - T e)) / ((z - 1)(z - e))
    (K. J. Astrom and B. Wittenmark, Computer-Controlled Systems, 3rd ed., 1997, section 2.3, from
    memory), so the zero is z0 = -(1 - e - T e)/(T - 1 + e); also against the numerator roots of
    scipy.signal.cont2discrete. A constant controller adds no zeros.
    """
    period = 0.5
    a = assess(_case("1/(s^2 + s)", "0.8", f"{period} s"))
    fig = F.z_plane_figure(a)
    e = math.exp(-period)
    z0 = -(1 - e - period * e) / (period - 1 + e)
    zeros = _offsets(_artist(fig, "closed-loop-zeros"))
    _same_points(zeros, [z0], 1e-10)
    num, _den, _ = scipy.signal.cont2discrete(([1.0], [1.0, 1.0, 0.0]), period, method="zoh")
    _same_points(zeros, np.roots(np.trim_zeros(np.ravel(num), "f")), 1e-9)
    # Closed-loop poles: roots of (z - 1)(z - e) + 0.8 ((T - 1 + e) z + (1 - e - T e)).
    char = np.polyadd(np.polymul([1, -1], [1, -e]), 0.8 * np.array([period - 1 + e, 1 - e - period * e]))
    _same_points(_offsets(_artist(fig, "closed-loop-poles")), np.roots(char), 1e-10)
    # Continuous design: s^2 + s + 0.8 = 0, mapped by exp(sT).
    _same_points(_offsets(_artist(fig, "continuous-poles-mapped")), np.exp(np.roots([1, 1, 0.8]) * period), 1e-10)


def test_zeros_stay_accurate_at_fast_sampling():
    """At T = 1e-4 s the sampling zero of the ZOH motor model 1/(s (s + 1)) still sits at the closed
    form above, evaluated by series so that it does not cancel (derivation):

    T - 1 + e^-T = T^2/2 - T^3/6 + T^4/24 - ...,   1 - e^-T (1 + T) = T^2/2 - T^3/3 + T^4/8 - ...
    """
    period = 1e-4
    a = assess(_case("1/(s^2 + s)", "0.8", f"{period} s"))
    lead = period**2 / 2 - period**3 / 6 + period**4 / 24
    const = period**2 / 2 - period**3 / 3 + period**4 / 8
    _same_points(F.closed_loop_zeros(a), [-const / lead], 1e-8)


def test_pole_paths_follow_the_closed_form():
    """Every dot is the closed-form pole at its period; its colour value is that period."""
    periods = np.geomspace(0.01, 1.0, 25)
    fig = F.pole_paths_figure(_lag_spec(0.1), periods)
    dots = _artist(fig, "pole-paths")
    z = _offsets(dots)
    colour_period = np.asarray(dots.get_array(), dtype=float)
    expected = np.array([_lag_pole(p) for p in colour_period])
    assert z.size == periods.size  # one pole per period, all inside the |z| <= 3 view
    np.testing.assert_allclose(z.real, expected, atol=1e-11)
    np.testing.assert_array_equal(z.imag, 0.0)
    np.testing.assert_allclose(np.sort(colour_period), periods, rtol=1e-15)
    here = _offsets(_artist(fig, "poles-at-case-period"))
    _same_points(here, [_lag_pole(0.1)], 1e-12)


# ---- sweeps --------------------------------------------------------------------------------------------

def _gain_margin_db(period: float) -> float:
    """Gain margin of the first-order loop: the phase crossover is at z = -1 (Nyquist frequency),
    where K G(-1) = -K (1 - e)/(1 + e); the margin is 20 log10((1 + e) / (K (1 - e)))."""
    e = math.exp(-A_LAG * period)
    return 20 * math.log10((1 + e) / (K_LAG * (1 - e)))


def test_margins_figure_shows_the_sweep_and_the_closed_form_boundary():
    """Stability is lost where z = -1: e (1 + K) = K - 1, i.e. T* = ln((K + 1)/(K - 1)) / a."""
    periods = np.geomspace(0.05, 1.0, 30)
    sweep = sweep_periods(_lag_spec(0.1), periods, margin_points=30)
    fig = F.margins_vs_period_figure(sweep)
    t, radius = _xy(_artist(fig, "spectral-radius"))
    np.testing.assert_array_equal(t, sweep.periods_s)
    np.testing.assert_allclose(radius, [abs(_lag_pole(p)) for p in t], rtol=1e-9)
    t_star = math.log((K_LAG + 1) / (K_LAG - 1)) / A_LAG
    verticals = [float(line.get_xdata()[0]) for line in fig.axes[0].get_lines()
                 if len(set(np.asarray(line.get_xdata(), dtype=float))) == 1 and line.get_gid() is None]
    assert any(abs(v / t_star - 1) < 1e-8 for v in verticals), (verticals, t_star)
    _, gm = _xy(_artist(fig, "gain-margin"))
    stable = t < t_star * (1 - 1e-6)
    expected = np.array([_gain_margin_db(p) for p in t[stable]])
    np.testing.assert_allclose(gm[stable], expected, rtol=1e-6)
    assert np.all(np.isnan(gm[t > t_star * (1 + 1e-6)]))


def test_stability_chart_figure_shows_the_chart():
    """The colour mesh is the chart's spectral radius (clipped at 2 for colour), which is the closed
    form |e - g K (1 - e)|; the design point is (case period, multiplier 1)."""
    periods = np.geomspace(0.02, 1.0, 12)
    gains = np.geomspace(0.25, 4.0, 7)
    chart = stability_chart(_lag_spec(0.1), periods, gains)
    fig = F.stability_chart_figure(chart)
    mesh = np.asarray(_artist(fig, "spectral-radius-map").get_array(), dtype=float).reshape(gains.size, periods.size)
    expected = np.array([[abs(_lag_pole(p, g)) for p in periods] for g in gains])
    np.testing.assert_allclose(np.asarray(chart.spectral_radius), expected, rtol=1e-9)
    np.testing.assert_allclose(mesh, np.clip(expected, mesh.min(), 2.0), rtol=1e-9)
    x, y = _xy(_artist(fig, "design-point"))
    assert (x[0], y[0]) == (0.1, 1.0)


# ---- check figure, saving, style ---------------------------------------------------------------------

def test_check_figure_has_both_panels():
    spec = _case(PLANT_TEXT, CTRL_TEXT, f"{T} s", "1 sample")
    fig = F.check_figure(assess(spec), step_response(spec, samples=30))
    for gid in ("closed-loop-poles", "sampled-output-between-samples", "actuator-staircase"):
        _artist(fig, gid)


@pytest.mark.parametrize("suffix, magic", [(".png", b"\x89PNG"), (".svg", b"<?xml"), (".pdf", b"%PDF")])
def test_save_figure_by_suffix(tmp_path, suffix, magic):
    fig = F.z_plane_figure(assess(_lag_spec(0.1)))
    path = tmp_path / f"poles{suffix}"
    F.save_figure(fig, path)
    assert path.read_bytes().startswith(magic)
    assert [p.name for p in tmp_path.iterdir()] == [path.name]


@pytest.mark.parametrize("name", ["poles.bmp", "poles", "poles.png.txt"])
def test_save_figure_refuses_unknown_suffix(tmp_path, name):
    fig = F.z_plane_figure(assess(_lag_spec(0.1)))
    with pytest.raises(InputError, match="--plot"):
        F.save_figure(fig, tmp_path / name)
    assert list(tmp_path.iterdir()) == []


def test_drawing_leaves_matplotlib_settings_alone():
    before = dict(matplotlib.rcParams)
    F.z_plane_figure(assess(_lag_spec(0.1)))
    after = dict(matplotlib.rcParams)
    assert before == after


def test_pole_paths_agree_with_the_per_period_assembly():
    """The batched route of the pole-path figure and sampled.loop's per-period route give the same
    closed-loop poles, with a fractional computation delay (delay states included)."""
    spec = _case(PLANT_TEXT, CTRL_TEXT, f"{T} s", "0.4 sample")
    periods = [0.03, 0.1, 0.3]
    paths = F.pole_paths(spec, periods)
    for p in periods:
        batched = paths.poles_z[paths.period_of_pole_s == p]
        _same_points(batched, assess(spec, p).digital.poles, 1e-9)


CASES = sorted((Path(__file__).resolve().parent.parent / "cases").glob("*.toml"))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_z_plane_of_every_demo_case_draws(path):
    """Every demo loop's z-plane figure draws, with one cross per closed-loop pole."""
    from sampled.casefile import load_case

    a = assess(load_case(path))
    fig = F.z_plane_figure(a)
    fig.canvas.draw()
    assert _offsets(_artist(fig, "closed-loop-poles")).size == a.digital.poles.size
