"""Closed-loop register levels (sampled.levels): step peaks, bounded-reference gains, overflow risk."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
import scipy.signal
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled.casefile import load_case
from sampled.discrete import DiscreteSystem
from sampled.errors import InputError
from sampled.fixedpoint import FixedFormat
from sampled.levels import closed_loop_levels, loop_levels
from sampled.quantize import case_controller
from sampled.realisations import REALISATIONS, implement, register_maps, signal_levels

T = 0.01


def _first_order_plant(a: float, b: float, delay: int = 0) -> DiscreteSystem:
    """``b / (z - a)``, i.e. ``y[k+1] = a y[k] + b u[k]``, optionally behind ``z^-delay``."""
    return DiscreteSystem.from_firmware([0.0, b], [1.0, -a], T).delayed(delay)


def _tf_desc(sys: DiscreteSystem) -> tuple[np.ndarray, np.ndarray]:
    """Transfer in descending powers of z (delay as poles at the origin), from scipy."""
    p = sys.with_delay_states()
    num, den = scipy.signal.ss2tf(p.phi, p.gamma, p.c, p.d)
    return np.atleast_1d(num[0]), np.atleast_1d(den)


def _controller_desc(impl) -> tuple[np.ndarray, np.ndarray]:
    """Implemented controller ``b(z^-1)/a(z^-1)`` in descending powers of z (same length)."""
    return np.array([float(v) for v in impl.b]), np.array([float(v) for v in impl.a])


def _reference_simulation(impl, plant: DiscreteSystem, samples: int) -> dict[str, np.ndarray]:
    """Register values for a unit reference step, simulated independently with scipy.

    The error ``e = r - y_m`` comes from ``scipy.signal.dlsim`` of ``1 / (1 + C P)`` built by
    polynomial products of the implemented controller's b/a and the plant's ss2tf; the registers
    then from ``dlsim`` of the controller program's maps driven by that error. No part of the
    closed-loop assembly under test is used.
    """
    cb, ca = _controller_desc(impl)
    pn, pd = _tf_desc(plant)
    # S = 1 / (1 + C P) = ca pd / (ca pd + cb pn), all descending powers of z.
    num = np.polymul(ca, pd)
    den = np.polyadd(num, np.polymul(cb, pn))
    n = len(den)
    num = np.concatenate([np.zeros(n - len(num)), num])
    r = np.ones(samples)
    _, e = scipy.signal.dlsim((num, den, T), r)
    regs, A, B, M, N = register_maps(impl)
    _, q, _ = scipy.signal.dlsim((A, B, M, N, T), e[:, 0]) if A.shape[0] else (None, e @ N.T, None)
    out = {"x": e[:, 0]}
    for i, v in enumerate(regs):
        out[v.name] = np.asarray(q)[:, i]
    return out


@pytest.mark.parametrize("realisation", REALISATIONS)
@pytest.mark.parametrize("fmt", [None, FixedFormat(16, 15)], ids=["double", "Q15"])
def test_step_peak_matches_scipy_simulation(realisation: str, fmt: FixedFormat | None) -> None:
    """Source: scipy.signal.dlsim (reference library) of the same loop, assembled from transfer
    functions (see _reference_simulation). Controller: a PI with a lead term (integrator at z=1),
    plant 0.05/(z-0.95) behind one sample of computation delay."""
    b = [0.8, -1.2, 0.45]
    a = [1.0, -1.3, 0.3]  # (1 - z^-1)(1 - 0.3 z^-1)
    impl = implement(b, a, T, realisation, fmt)
    plant = _first_order_plant(0.95, 0.05, delay=1)
    lv = loop_levels(impl, plant)
    assert lv.stable and lv.converged
    sim = _reference_simulation(impl, plant, 4000)
    for reg in lv.registers:
        expected = float(np.max(np.abs(sim[reg.name])))
        assert reg.step_peak == pytest.approx(expected, rel=1e-9, abs=1e-12), reg.name
        assert math.isfinite(reg.bounded_input_gain) and reg.bounded_input_gain >= reg.step_peak - 1e-12


def test_first_order_closed_form() -> None:
    """Closed form. Plant ``y[k+1] = a y[k] + b u[k]`` (b/(z-a)), controller ``u = k e``,
    ``e = r - y``. Then ``y[k+1] = (a - k b) y[k] + k b r[k]``, pole ``p = a - k b``, and for an
    impulse in r: ``y[0] = 0``, ``y[n] = k b p^(n-1)`` (n >= 1). Hence

    * ``u = k (r - y)``: ``h_u[0] = k``, ``h_u[n] = -k^2 b p^(n-1)``, so
      ``||h_u||_1 = |k| + k^2 |b| / (1 - |p|)``;
    * ``e``: ``h_e[0] = 1``, ``h_e[n] = -k b p^(n-1)``, ``||h_e||_1 = 1 + |k b| / (1 - |p|)``;
    * unit step, ``u[n] = k (1 - k b (1 - p^n) / (1 - p))``; with ``0 < p < 1`` and ``k b > 0``
      it falls monotonically from ``u[0] = k``, so the peak is ``|k|``;
    * disturbance d at the plant input: ``y[n] = b p^(n-1)``, ``u = -k y``:
      ``||h_u||_1 = |k b| / (1 - |p|)``.
    """
    a, b, k = 0.9, 0.2, 2.0
    p = a - k * b
    impl = implement([k], [1], T, "direct1", None)
    lv = loop_levels(impl, _first_order_plant(a, b))
    u, e = lv.register("y"), lv.register("x")
    assert u.bounded_input_gain == pytest.approx(abs(k) + k * k * abs(b) / (1 - abs(p)), rel=1e-12)
    assert e.bounded_input_gain == pytest.approx(1 + abs(k * b) / (1 - abs(p)), rel=1e-12)
    assert u.step_peak == pytest.approx(abs(k), rel=1e-12)
    assert u.disturbance_gain == pytest.approx(abs(k * b) / (1 - abs(p)), rel=1e-12)
    assert u.limit == math.inf and u.risk == "none" and lv.reference_amplitude == 1.0


@settings(max_examples=25)
@given(
    a=st.floats(-0.95, 0.95),
    b=st.floats(0.05, 1.0),
    p=st.floats(-0.9, 0.9),
)
def test_first_order_closed_form_property(a: float, b: float, p: float) -> None:
    """Closed form of test_first_order_closed_form over random stable first-order loops
    (gain chosen for the closed-loop pole p: k = (a - p) / b)."""
    k = (a - p) / b
    if abs(k) < 1e-3:
        return
    lv = loop_levels(implement([k], [1], T, "direct2t", None), _first_order_plant(a, b))
    assert lv.register("y").bounded_input_gain == pytest.approx(abs(k) + k * k * b / (1 - abs(p)), rel=1e-9)


def test_l1_matches_brute_force_long_sum() -> None:
    """Source: a brute-force sum of |h| over 200000 samples of the impulse response from r to the
    controller output, computed with scipy.signal.lfilter on the closed-loop transfer C/(1 + C P)
    built by polynomial products (reference library)."""
    impl = implement([0.8, -1.2, 0.45], [1.0, -1.3, 0.3], T, "sections", None)
    plant = _first_order_plant(0.95, 0.05, delay=1)
    cb, ca = _controller_desc(impl)
    pn, pd = _tf_desc(plant)
    num = np.polymul(cb, pd)
    den = np.polyadd(np.polymul(ca, pd), np.polymul(cb, pn))
    num = np.concatenate([np.zeros(len(den) - len(num)), num])
    impulse = np.zeros(200_000)
    impulse[0] = 1.0
    h = scipy.signal.lfilter(num, den, impulse)
    lv = loop_levels(impl, plant)
    assert lv.register("y").bounded_input_gain == pytest.approx(float(np.sum(np.abs(h))), rel=1e-9)


def test_unstable_loop_gives_inf() -> None:
    """Proportional gain k on b/(z-a): closed-loop pole a - k b = 0.9 - 3 * 1 = -2.1 (closed form),
    outside the unit circle: every level is unbounded and the risk is "likely"."""
    lv = loop_levels(implement([3.0], [1], T, "direct1", FixedFormat(16, 15)), _first_order_plant(0.9, 1.0))
    assert not lv.stable and lv.loop_spectral_radius == pytest.approx(2.1, rel=1e-12)
    for r in lv.registers:
        assert r.bounded_input_gain == math.inf and r.step_peak == math.inf and r.headroom_bits == -math.inf
    assert lv.risk == "likely"


def test_integrator_finite_in_stable_loop() -> None:
    """The point of the module: a PI controller ``(0.5 - 0.4 z^-1)/(1 - z^-1)`` (integrator) has an
    unbounded worst case alone (signal_levels), but a finite one in a stable loop with
    0.1/(z - 0.9). Its integrator holds the constant ``u`` that cancels the reference at steady
    state: u(inf) = r (1 - a)/b = 1 (closed form, DC gain of the plant 1 at z = 1)."""
    impl = implement([Fraction(1, 2), Fraction(-2, 5)], [1, -1], T, "direct2t", FixedFormat(16, 15))
    alone = signal_levels(impl)
    assert any(math.isinf(r.bounded_input_gain) for r in alone.registers)
    lv = loop_levels(impl, _first_order_plant(0.9, 0.1), reference_amplitude=0.5)
    assert lv.stable and lv.converged
    for r in lv.registers:
        assert math.isfinite(r.bounded_input_gain) and math.isfinite(r.step_peak)
    assert lv.register("y").step_peak >= 1.0 - 1e-9
    # A half-scale reference: the output stays within Q15 for a step; worst case decides the risk.
    assert lv.reference_amplitude == 0.5
    assert lv.risk in ("none", "possible")
    assert lv.headroom_bits == min(r.headroom_bits for r in lv.registers)


def test_risk_levels_and_headroom() -> None:
    """Risk rule (module docstring) on the first-order loop of test_first_order_closed_form in Q15:
    u peaks at k = 0.5 for a unit step, worst case 0.5 + 0.25*0.2/(1-0.8) = 0.75 (closed form)."""
    impl = implement([0.5], [1], T, "direct1", FixedFormat(16, 15))
    plant = _first_order_plant(0.9, 0.2)
    u = loop_levels(impl, plant, reference_amplitude=1.0).register("y")
    assert u.bounded_input_gain == pytest.approx(0.75, rel=1e-9)
    assert u.limit == 1.0 and u.headroom_bits == pytest.approx(math.log2(1 / 0.75), rel=1e-9)
    assert u.risk == "none"
    assert loop_levels(impl, plant, reference_amplitude=1.6).register("y").risk == "possible"  # 0.8 step, 1.2 worst
    assert loop_levels(impl, plant, reference_amplitude=2.5).register("y").risk == "likely"  # 1.25 step
    # a disturbance adds to the worst case: 1.0 * 0.75 + 1.0 * 0.5*0.2/0.2 = 1.25 > 1
    assert loop_levels(impl, plant, reference_amplitude=1.0, disturbance=1.0).register("y").risk != "none"


def test_bad_amplitudes_are_input_errors() -> None:
    impl = implement([0.5], [1], T, "direct1", None)
    plant = _first_order_plant(0.9, 0.2)
    with pytest.raises(InputError, match="reference amplitude"):
        loop_levels(impl, plant, reference_amplitude=-1.0)
    with pytest.raises(InputError, match="disturbance"):
        loop_levels(impl, plant, disturbance=math.nan)
    with pytest.raises(InputError, match="period"):
        loop_levels(impl, DiscreteSystem.from_firmware([0.0, 0.2], [1.0, -0.9], 0.02))


def test_case_file_levels() -> None:
    """A demo case end to end: the case's controller in Q15 sections gives finite closed-loop levels
    (the case's loop is stable), with the reference at full scale by default."""
    spec = load_case("cases/print_bed_heater.toml")
    b, a = case_controller(spec)
    impl = implement(b, a, spec.period_s, "sections", FixedFormat(16, 15))
    lv = closed_loop_levels(spec, impl)
    assert lv.stable and lv.converged
    assert lv.reference_amplitude == pytest.approx(1 - 2.0**-15)
    assert all(math.isfinite(r.bounded_input_gain) for r in lv.registers)
    d = lv.to_dict()
    assert {"risk", "headroom_bits", "registers", "reference_amplitude"} <= set(d)


def _cli(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    from sampled.cli import main

    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


def test_quantize_shows_levels_of_best_structure(capsys: pytest.CaptureFixture[str]) -> None:
    """`sampled quantize --json` carries the closed-loop levels on the best structure, equal to the
    library's for the same implementation; the text report shows the table."""
    import json

    code, out, err = _cli(capsys, "quantize", "cases/print_bed_heater.toml", "--bits", "16", "--structure", "sections", "--json")
    assert code == 0, err
    data = json.loads(out)
    best = next(s for s in data["structures"] if s["name"] == data["best_structure"])
    spec = load_case("cases/print_bed_heater.toml")
    b, a = case_controller(spec)
    lv = closed_loop_levels(spec, implement(b, a, spec.period_s, "sections", FixedFormat(16, 15)))
    assert best["levels_bits"] == 16
    assert best["levels"]["risk"] == lv.risk
    got = {r["name"]: r["bounded_input_gain"] for r in best["levels"]["registers"]}
    assert got == pytest.approx({r.name: r.bounded_input_gain for r in lv.registers}, rel=1e-12)
    code, out, err = _cli(capsys, "quantize", "cases/print_bed_heater.toml", "--bits", "16", "--structure", "sections")
    assert code == 0, err
    assert "Signal levels of the controller registers in the closed loop" in out and "Overflow risk:" in out


def test_export_records_levels(capsys: pytest.CaptureFixture[str], tmp_path) -> None:
    """`sampled export` prints the levels, gives them in JSON and writes them in the header comment."""
    import json

    code, out, err = _cli(capsys, "export", "cases/print_bed_heater.toml", "--format", "Q15", "-o", str(tmp_path),
                          "--name", "bed", "--json")
    assert code == 0, err
    data = json.loads(out)
    assert data["levels"]["stable"] is True and data["levels"]["risk"] in ("none", "possible", "likely")
    header = (tmp_path / "bed.h").read_text()
    assert "signal levels in the closed loop" in header and f"overflow risk {data['levels']['risk']}" in header
    code, out, err = _cli(capsys, "export", "cases/print_bed_heater.toml", "--format", "Q15", "-o", str(tmp_path / "t"))
    assert code == 0, err
    assert "Overflow risk:" in out
