"""`sampled export`: files written only for a passing implemented loop, compiled with gcc and run.

- The exported fixed-point C, fed a step, returns the same words as the Python fixed-point
  simulation (:func:`sampled.realisations.simulate_fixed`, itself checked against numpy integer
  arithmetic in test_fixedpoint.py) of the implementation the command judged.
- The exported double C agrees with scipy.signal.lfilter (reference library) on the implemented
  coefficients within 1e-6 relative.
Compiled with ``gcc -std=c99 -Wall -Wextra -Werror``; those tests are skipped only when no gcc.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
import scipy.signal as ss

from sampled.casefile import load_case
from sampled.cli import main
from sampled.fixedpoint import parse_format
from sampled.quantize import case_controller
from sampled.realisations import implement, simulate_fixed

GCC = shutil.which("gcc")
needs_gcc = pytest.mark.skipif(GCC is None, reason="gcc not found on PATH: exported C not compiled")
CFLAGS = ["-std=c99", "-Wall", "-Wextra", "-Werror"]

_MAIN = """#include <stdio.h>
#include "NAME.h"
int main(void)
{
    NAME_state st;
    TYPE v;
    NAME_init(&st);
    while (scanf(FMT_IN, &v) == 1) {
        printf(FMT_OUT, CAST NAME_step(&st, ARG));
    }
    return 0;
}
"""


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    try:
        code = main(["export", *argv])
    except SystemExit as exc:
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


def _compile_and_run(directory: Path, name: str, inputs: list[str], fixed: bool, word_type: str = "int16_t") -> list[str]:
    main_c = _MAIN.replace("NAME", name)
    if fixed:
        main_c = (main_c.replace("TYPE", "long long").replace("FMT_IN", '"%lld"').replace("FMT_OUT", '"%lld\\n"')
                  .replace("CAST", "(long long)").replace("ARG", f"({word_type})v"))
    else:
        main_c = (main_c.replace("TYPE", "double").replace("FMT_IN", '"%lf"').replace("FMT_OUT", '"%.17g\\n"')
                  .replace("CAST", "").replace("ARG", "v"))
    (directory / "main.c").write_text(main_c)
    exe = directory / "run"
    res = subprocess.run([GCC, *CFLAGS, "-o", str(exe), "main.c", f"{name}.c"], cwd=directory,
                         capture_output=True, text=True)
    assert res.returncode == 0, res.stderr
    done = subprocess.run([str(exe)], input="\n".join(inputs) + "\n", capture_output=True, text=True, check=True)
    return done.stdout.split()


@needs_gcc
@pytest.mark.parametrize("structure", ["sections", "direct1"])
def test_q15_export_bit_exact_for_a_step(tmp_path: Path, capsys: pytest.CaptureFixture[str], structure: str) -> None:
    out_dir = tmp_path / "fw"
    code, out, err = _run(capsys, "cases/print_bed_heater.toml", "--lang", "c", "--format", "Q15",
                          "--structure", structure, "--name", "bed", "-o", str(out_dir))
    assert code == 0, err
    assert sorted(p.name for p in out_dir.iterdir()) == ["bed.c", "bed.h"]
    assert f"wrote {out_dir / 'bed.h'}" in out and "requirements met" in out
    source = (out_dir / "bed.c").read_text()
    for text in ("Sample period: 0.1 s", f"({structure})", "Word length: 16 bits", "loop stable", "requirements met"):
        assert text in source
    spec = load_case("cases/print_bed_heater.toml")
    b, a = case_controller(spec)
    impl = implement(b, a, spec.period_s, structure, parse_format("Q15"))
    step = [8192] * 300  # a quarter of full scale
    got = [int(v) for v in _compile_and_run(out_dir, "bed", [str(v) for v in step], fixed=True)]
    assert got == simulate_fixed(impl, step)
    # Closed form: the first output is b0 * 8192 = 2622 * 8192 / 2^15 = 655.5 -> 656 (nearest, ties
    # to even), then the integrator adds (b0 + b1) * 8192 = 4 * 8192 / 2^15 = 1 word per sample.
    assert got[:3] == [656, 657, 658]


@needs_gcc
def test_float_export_against_lfilter(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out_dir = tmp_path / "fw"
    code, out, err = _run(capsys, "cases/drone_motor_speed.toml", "--format", "float", "--structure", "direct2t",
                          "-o", str(out_dir), "--json")
    assert code == 0, err
    data = json.loads(out)
    assert data["written"] is True and data["format"] == "float" and data["row"]["verdict"] == "stable"
    assert "IEEE 754 double" in (out_dir / "drone_motor_speed.c").read_text()
    spec = load_case("cases/drone_motor_speed.toml")
    b, a = case_controller(spec)
    impl = implement(b, a, spec.period_s, "direct2t", None)
    x = np.ones(200)
    got = np.array([float(v) for v in _compile_and_run(out_dir, "drone_motor_speed", [repr(float(v)) for v in x], fixed=False)])
    want = ss.lfilter([float(c) for c in impl.b], [float(c) for c in impl.a], x)
    np.testing.assert_allclose(got, want, rtol=1e-6)


def test_failing_loop_writes_nothing_unless_forced(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """The buck converter case misses its phase margin requirement (as `sampled check` says)."""
    out_dir = tmp_path / "fw"
    code, out, err = _run(capsys, "cases/buck_converter_voltage.toml", "--format", "Q15", "-o", str(out_dir))
    assert code == 1
    assert not out_dir.exists()
    assert "no files written" in out and "misses a requirement" in err
    code, out, err = _run(capsys, "cases/buck_converter_voltage.toml", "--format", "Q15", "-o", str(out_dir), "--force")
    assert code == 1
    assert sorted(p.name for p in out_dir.iterdir()) == ["buck_converter_voltage.c", "buck_converter_voltage.h"]
    assert "requirements NOT met" in (out_dir / "buck_converter_voltage.h").read_text()


def test_fragile_case_direct_form_refused_sections_written(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, _, _ = _run(capsys, "cases/notch_filter_fragile.toml", "--format", "Q15", "--structure", "direct1", "-o", str(tmp_path / "a"))
    assert code == 1 and not (tmp_path / "a").exists()
    code, out, err = _run(capsys, "cases/notch_filter_fragile.toml", "--format", "Q15", "--structure", "sections", "-o", str(tmp_path / "b"))
    assert code == 0, err
    assert (tmp_path / "b" / "notch_filter_fragile.c").exists()


@pytest.mark.parametrize(
    ("argv", "needle"),
    [
        (["--format", "Q40"], "--format"),
        (["--format", "half"], "--format"),
        (["--structure", "ladder"], "--structure"),
        (["--lang", "rust"], "--lang"),
        (["--name", "int"], "name"),
        (["--output-limits", "1,-1"], "--output-limits"),
        (["--output-limits", "x"], "--output-limits"),
    ],
)
def test_bad_input_exit_2_no_files(tmp_path: Path, capsys: pytest.CaptureFixture[str], argv: list[str], needle: str) -> None:
    out_dir = tmp_path / "fw"
    code, out, err = _run(capsys, "cases/print_bed_heater.toml", "-o", str(out_dir), *argv)
    assert code == 2
    assert needle in err and len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert not out_dir.exists()
