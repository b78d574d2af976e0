"""`sampled discretize`: output, JSON keys, exit codes and one-line errors naming the option."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.signal

from sampled.cli import main
from sampled.commands.common import SAFETY_CAUTION


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run the command; argparse usage errors (SystemExit) count as their exit status."""
    try:
        code = main(["discretize", *argv])
    except SystemExit as exc:
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


def test_json_tustin_against_scipy(capsys: pytest.CaptureFixture[str]) -> None:
    """Reference: scipy.signal.cont2discrete (bilinear) of the same transfer at T = 1 ms."""
    code, out, err = _run(capsys, "10*(s+2)/(s*(s+5))", "--period", "1ms", "--method", "tustin", "--json")
    assert code == 0 and err == ""
    data = json.loads(out)
    for key in ("num", "den", "period", "method", "poles", "unit_circle_distance", "b", "a", "difference_equation"):
        assert key in data
    assert data["period"] == pytest.approx(1e-3, rel=1e-15)
    assert data["method"] == "tustin"
    num_ref, den_ref, _ = scipy.signal.cont2discrete(([10, 20], [1, 5, 0]), 1e-3, method="bilinear")
    np.testing.assert_allclose(data["den"], den_ref / den_ref[0], rtol=1e-12)
    np.testing.assert_allclose(data["num"], np.ravel(num_ref) / den_ref[0], rtol=1e-10, atol=1e-15)
    assert all(len(p) == 2 for p in data["poles"])
    assert len(data["unit_circle_distance"]) == len(data["poles"])
    # The integrator sits exactly on the circle; the other pole is (1 - 5T/2)/(1 + 5T/2) (closed form).
    zs = sorted(complex(*p).real for p in data["poles"])
    assert zs[0] == pytest.approx((1 - 2.5e-3) / (1 + 2.5e-3), rel=1e-14)
    assert zs[1] == pytest.approx(1.0, abs=1e-15)


def test_rate_means_its_period_and_delay(capsys: pytest.CaptureFixture[str]) -> None:
    """'2 kHz' is a 0.5 ms period; a 1.3-period delay gives delay_samples 1 plus one augmented state."""
    code, out, _ = _run(capsys, "1/(s+100)", "--period", "2 kHz", "--delay", "0.65ms", "--json")
    assert code == 0
    data = json.loads(out)
    assert data["period"] == pytest.approx(5e-4, rel=1e-14)
    assert data["delay_samples"] == 1
    assert len(data["poles"]) == 3  # plant pole, augmented state at 0, one delay pole at 0


def test_human_output(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(capsys, "1/(s+1)", "--period", "100 us", "--method", "zoh")
    assert code == 0 and err == ""
    assert "Transfer in z:" in out and "Transfer in z^-1" in out
    assert "y[k] = " in out and "u[k-1]" in out and "y[k-1]" in out
    assert "1 - |z|" in out
    assert SAFETY_CAUTION in out


def test_difference_equation_reproduces_step_response(capsys: pytest.CaptureFixture[str]) -> None:
    """Closed form: the ZOH equivalent of 1/(s+1) is exact at the samples, so running the printed
    difference equation on a unit step gives y[k] = 1 - e^(-kT)."""
    code, out, _ = _run(capsys, "1/(s+1)", "--period", "0.1", "--json")
    assert code == 0
    eq = json.loads(out)["difference_equation"]
    rhs = eq.split("=", 1)[1]
    y: list[float] = []
    for k in range(30):
        env = {"u": lambda i: 1.0 if i >= 0 else 0.0, "y": lambda i: y[i] if i >= 0 else 0.0, "k": k}
        expr = rhs.replace("[", "(").replace("]", ")")
        y.append(eval(expr, {"__builtins__": {}}, env))  # test-only: our own printed equation
    np.testing.assert_allclose(y, [1 - math.exp(-0.1 * k) for k in range(30)], rtol=1e-13, atol=1e-15)


def test_unstable_mapping_exit_1(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(capsys, "100/(s+100)", "--period", "0.1", "--method", "forward-euler")
    assert code == 1
    assert "made the stable system unstable" in out


@pytest.mark.parametrize(
    "argv, option",
    [
        (["--period=-1ms"], "--period"),
        (["--period", "0"], "--period"),
        (["--period", "inf"], "--period"),
        (["--period", "nan s"], "--period"),
        (["--period", "1 furlong"], "--period"),
        (["--period", "1ms", "--method", "bilinear"], "--method"),
        (["--period", "1ms", "--method", "tustin", "--prewarp", "500Hz"], "--prewarp"),
        (["--period", "1ms", "--method", "tustin", "--prewarp", "3 kHz"], "--prewarp"),
        (["--period", "1ms", "--method", "tustin", "--prewarp", "2 ms"], "--prewarp"),
        (["--period", "1ms", "--method", "zoh", "--prewarp", "50Hz"], "--prewarp"),
        (["--period", "1ms", "--delay=-2ms"], "--delay"),
        (["--period", "1ms", "--delay", "1.5ms", "--method", "tustin"], "--delay"),
        (["--period", "1ms", "--delay", "5 Hz"], "--delay"),
    ],
)
def test_bad_input_one_line_exit_2(capsys: pytest.CaptureFixture[str], argv: list[str], option: str) -> None:
    """Bad input: exit 2, nothing on stdout, one line on stderr naming the option."""
    code, out, err = _run(capsys, "1/(s+1)", *argv)
    assert code == 2
    assert out == ""
    assert len(err.strip().splitlines()) == 1
    assert option in err


def test_argparse_choice_exit_code() -> None:
    with pytest.raises(SystemExit) as info:
        main(["discretize", "1/(s+1)", "--period", "1ms", "--method", "bilinear"])
    assert info.value.code == 2


def test_improper_expression(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(capsys, "s^2/(s+1)", "--period", "1ms")
    assert code == 2 and out == ""
    assert "improper" in err and len(err.strip().splitlines()) == 1


def test_fast_sampling_warns_about_coefficients(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(capsys, "1/((s+1)*(s^2+0.2*s+100))", "--period", "1ns")
    assert code == 0
    assert "coefficients in z place the poles only to" in out
    code, out, _ = _run(capsys, "1/((s+1)*(s^2+0.2*s+100))", "--period", "1ms")
    assert "coefficients in z place the poles" not in out
