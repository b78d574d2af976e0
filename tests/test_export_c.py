"""Generated C99 code compiled with gcc and run against the Python simulations.

Checks:
- fixed point: the compiled code's output words equal :func:`simulate_fixed` bit for bit (our
  simulation is itself checked against numpy integer arithmetic in test_fixedpoint.py);
- double: outputs equal :func:`simulate_float` exactly and are within 1e-6 relative of
  scipy.signal.lfilter on the given controller (reference library);
- inputs: a unit step and a seeded pseudo-random sequence (numpy default_rng, seed named).
Compiled with ``gcc -std=c99 -Wall -Wextra -Werror -pedantic``; skipped only when no C compiler
exists.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
import scipy.signal as ss

from sampled.errors import InputError
from sampled.export import export_controller, number_format_from_text
from sampled.export.c import export_c, fixed_output_limits
from sampled.fixedpoint import FixedFormat, parse_format
from sampled.realisations import REALISATIONS, ImplementedController, implement, simulate_fixed, simulate_float

CC = shutil.which("gcc") or shutil.which("cc")
needs_cc = pytest.mark.skipif(CC is None, reason="no C compiler (gcc or cc) on PATH: generated C not compiled")

CFLAGS = ["-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic", "-O1"]
SEED = 20240611


def _controller(period_s: float = 1e-3) -> tuple[np.ndarray, np.ndarray]:
    """Third-order lead-lag (gain 8, slow pole at 0.5 rad/s), Tustin via scipy.signal.bilinear."""
    num = np.polymul([1.0 / 20.0, 1.0], [1.0 / 5.0, 1.0]) * 8.0
    den = np.polymul(np.polymul([1.0 / 200.0, 1.0], [1.0 / 0.5, 1.0]), [1.0 / 400.0, 1.0])
    return ss.bilinear(num, den, fs=1.0 / period_s)


_MAIN_FIXED = """#include <stdio.h>
#include "ctl.h"
int main(void)
{
    ctl_state st;
    long long v;
    ctl_init(&st);
    while (scanf("%lld", &v) == 1) {
        printf("%lld\\n", (long long)ctl_step(&st, (WORD)v));
    }
    return 0;
}
"""

_MAIN_DOUBLE = """#include <stdio.h>
#include "ctl.h"
int main(void)
{
    ctl_state st;
    double v;
    ctl_init(&st);
    while (scanf("%lf", &v) == 1) {
        printf("%.17g\\n", ctl_step(&st, v));
    }
    return 0;
}
"""


def _build(tmp_path: Path, files: dict[str, str], word_type: str | None) -> Path:
    for name, text in files.items():
        (tmp_path / name).write_text(text)
    main = _MAIN_DOUBLE if word_type is None else _MAIN_FIXED.replace("WORD", word_type)
    (tmp_path / "main.c").write_text(main)
    exe = tmp_path / "run"
    res = subprocess.run(
        [CC, *CFLAGS, "-o", str(exe), "main.c", "ctl.c"], cwd=tmp_path, capture_output=True, text=True
    )
    assert res.returncode == 0, res.stderr
    return exe


def _run(exe: Path, inputs: list[str]) -> list[str]:
    res = subprocess.run([str(exe)], input="\n".join(inputs) + "\n", capture_output=True, text=True, check=True)
    return res.stdout.split()


def _word_type(impl: ImplementedController) -> str:
    w = impl.number_format.word_bits  # type: ignore[union-attr]
    return "int8_t" if w <= 8 else "int16_t" if w <= 16 else "int32_t"


def _fixed_inputs(fmt: FixedFormat, n: int = 600) -> list[int]:
    """A unit step at a quarter of full scale, then seeded pseudo-random words over the full range."""
    step = [fmt.max_int // 4] * 200
    rng = np.random.default_rng(SEED)
    noise = rng.integers(fmt.min_int, fmt.max_int + 1, size=n - 200).tolist()
    return step + [int(v) for v in noise]


@needs_cc
@pytest.mark.parametrize("realisation", REALISATIONS)
@pytest.mark.parametrize("fmt_text, rounding", [("Q15", "nearest"), ("Q31", "nearest"), ("Q11", "floor"), ("Q3.12", "floor")])
def test_fixed_point_c_is_bit_exact(tmp_path: Path, realisation: str, fmt_text: str, rounding: str) -> None:
    """Compiled fixed-point code == Python fixed-point simulation, word for word.

    The pseudo-random part drives the states into saturation, so the saturating paths run too.
    """
    b, a = _controller()
    fmt = parse_format(fmt_text)
    impl = implement(b, a, 1e-3, realisation, fmt, rounding=rounding)  # type: ignore[arg-type]
    files = export_c(impl, name="ctl", verdict="test build")
    exe = _build(tmp_path, files, _word_type(impl))
    x = _fixed_inputs(fmt)
    got = [int(v) for v in _run(exe, [str(v) for v in x])]
    assert got == simulate_fixed(impl, x)
    assert fmt.max_int in got or fmt.min_int in got  # the saturating path did run


@needs_cc
def test_fixed_point_c_output_clamp(tmp_path: Path) -> None:
    """The clamp limits the returned word; the recursion is unchanged (Python simulation)."""
    b, a = _controller()
    impl = implement(b, a, 1e-3, "direct2t", parse_format("Q15"))
    limits = (-0.25, 0.3)
    files = export_c(impl, name="ctl", verdict="test", output_limits=limits)
    exe = _build(tmp_path, files, "int16_t")
    x = _fixed_inputs(parse_format("Q15"))
    got = [int(v) for v in _run(exe, [str(v) for v in x])]
    lo, hi = fixed_output_limits(impl, limits)
    assert (lo, hi) == (-8192, 9830)  # -0.25 * 2^15 exact; floor(0.3 * 2^15) = 9830 (inward)
    assert got == simulate_fixed(impl, x, output_limits=(lo, hi))
    assert min(got) == lo and max(got) == hi


@needs_cc
@pytest.mark.parametrize("realisation", REALISATIONS)
def test_double_c_matches_lfilter(tmp_path: Path, realisation: str) -> None:
    """Compiled double code: equal to simulate_float exactly (same operations, no contraction in
    ISO C mode) and within 1e-6 relative of scipy.signal.lfilter (reference library)."""
    b, a = _controller()
    impl = implement(b, a, 1e-3, realisation, None)  # type: ignore[arg-type]
    files = export_c(impl, name="ctl", verdict="test")
    exe = _build(tmp_path, files, None)
    rng = np.random.default_rng(SEED)
    x = np.concatenate([np.ones(300), rng.standard_normal(700)])
    got = np.array([float(v) for v in _run(exe, [repr(float(v)) for v in x])])
    assert np.array_equal(got, simulate_float(impl, x))
    ref = ss.lfilter(b, a, x)
    scale = np.max(np.abs(ref))
    assert np.max(np.abs(got - ref)) <= 1e-6 * scale
    # relative per sample where the output is not tiny
    big = np.abs(ref) > 1e-3 * scale
    assert np.all(np.abs(got[big] - ref[big]) <= 1e-6 * np.abs(ref[big]))


def test_coefficients_in_source_are_the_checked_ones() -> None:
    """Every stored word appears in the source in order, and the exact transfer is recorded."""
    b, a = _controller()
    impl = implement(b, a, 1e-3, "sections", parse_format("Q15"))
    src = export_c(impl, name="ctl", verdict="stable, phase margin 48 deg")["ctl.c"]
    table = src[src.index("ctl_coef[") : src.index("};")]
    words = [int(m) if not m.startswith("(") else -32768 for m in re.findall(r"^\s+(-?\d+|\(-?\d+ - 1\)),", table, re.M)]
    assert words == [c.integer for c in impl.coefficients]
    assert "Sample period: 0.001 s" in src
    assert "second-order sections" in src
    assert "Word length: 16 bits" in src
    assert "stable, phase margin 48 deg" in src


def test_comment_block_cannot_be_closed_by_the_verdict() -> None:
    impl = implement([0.5], [1.0, -0.5], 1e-3, "direct1", None)
    files = export_c(impl, name="ctl", verdict="ok */ int evil;")
    assert "int evil" not in files["ctl.c"].split("*/", 1)[1]


def test_export_rejects_bad_name_and_limits() -> None:
    impl = implement([0.5], [1.0, -0.5], 1e-3, "direct1", parse_format("Q15"))
    with pytest.raises(InputError, match="name"):
        export_c(impl, name="2fast")
    with pytest.raises(InputError, match="name"):
        export_c(impl, name="double")
    with pytest.raises(InputError, match="output_limits"):
        export_c(impl, output_limits=(1.0, -1.0))


def test_export_controller_and_format_text() -> None:
    assert number_format_from_text("float") is None
    assert number_format_from_text("Q31") == FixedFormat(32, 31)
    with pytest.raises(InputError, match="--format"):
        number_format_from_text("Q99")
    impl, files = export_controller([0.5, 0.1], [1.0, -0.5], 1e-3, "delta", parse_format("Q15"), name="pi_loop")
    assert set(files) == {"pi_loop.h", "pi_loop.c"}
    assert "pi_loop_step" in files["pi_loop.h"]
    assert impl.realisation == "delta"
    with pytest.raises(InputError, match="--lang"):
        export_controller([0.5], [1.0], 1e-3, "delta", None, language="rust")  # type: ignore[arg-type]


@needs_cc
@pytest.mark.parametrize("realisation", ["sections", "delta"])
def test_fixed_point_c_bit_exact_narrow_band(tmp_path: Path, realisation: str) -> None:
    """The fragile 6th-order band-pass (45-55 Hz at 10 kHz) in Q15: per-section shifts (sections)
    and Delta = 2^-5 scaled increments (delta) run bit-exact in C as in Python."""
    b, a = ss.butter(3, [45.0, 55.0], btype="bandpass", fs=10_000.0)
    fmt = parse_format("Q15")
    impl = implement(b, a, 1e-4, realisation, fmt)  # type: ignore[arg-type]
    exe = _build(tmp_path, export_c(impl, name="ctl", verdict="test"), "int16_t")
    t = np.arange(1500)
    x = [int(v) for v in np.round(0.5 * fmt.max_int * np.sin(2 * np.pi * 50.0 * t * 1e-4))]
    got = [int(v) for v in _run(exe, [str(v) for v in x])]
    assert got == simulate_fixed(impl, x)
    assert max(abs(v) for v in got) > fmt.max_int // 8  # the pass band passes: signal, not zeros


@needs_cc
@pytest.mark.parametrize(
    "b, a",
    [([0.75], [1.0]), ([0.0, 0.5], [1.0]), ([0.0, 0.3, -0.25], [1.0, -1.0]), ([0.1, -0.05, 0.01], [1.0, -2.0, 1.0])],
    ids=["gain", "delay", "integrator-with-delay", "double-integrator"],
)
@pytest.mark.parametrize("realisation", REALISATIONS)
def test_edge_controllers_compile_and_match(tmp_path: Path, b, a, realisation: str) -> None:
    """Controllers without states, with pure delays and with poles on z = 1 compile cleanly and
    run bit-exact (Q15) like the Python simulation."""
    fmt = parse_format("Q15")
    impl = implement(b, a, 1e-3, realisation, fmt)  # type: ignore[arg-type]
    exe = _build(tmp_path, export_c(impl, name="ctl"), "int16_t")
    x = _fixed_inputs(fmt, 300)
    assert [int(v) for v in _run(exe, [str(v) for v in x])] == simulate_fixed(impl, x)
