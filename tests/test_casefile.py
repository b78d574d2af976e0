"""Case files: every key read as documented, every bad input refused in one line naming file and key.

Unit conversions checked here are SI definitions (1 Hz = 2 pi rad/s; common practice, no source);
schema validity is checked with the jsonschema library (reference implementation).
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import jsonschema
import pytest
import tomllib
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled.casefile import SCHEMA, load_case, parse_case
from sampled.errors import CaseFileError, SampledError

CASES = sorted(Path(__file__).resolve().parent.parent.joinpath("cases").glob("*.toml"))

GOOD = """
title = "good"
[plant]
transfer = "2.5/(0.8*s + 1)"
delay = "40 ms"
[sensor]
transfer = "1/(0.002*s + 1)"
[controller]
transfer = "1.2*(0.5*s + 1)/(0.5*s)"
method = "tustin"
prewarp = "5 Hz"
[timing]
period = "10 ms"
compute_delay = "1 sample"
[requirements]
gain_margin_db = 6
phase_margin_deg = 40
delay_margin = "1 sample"
sensitivity_peak = 2.0
"""


def test_good_case_reads_every_key() -> None:
    spec = parse_case(GOOD, "good.toml")
    assert spec.title == "good"
    assert spec.plant.delay_s == pytest.approx(0.04)
    assert spec.period_s == pytest.approx(0.01)
    assert spec.compute_delay.samples == 1
    assert spec.controller.method == "tustin"
    assert spec.controller.prewarp_rad_s == pytest.approx(2 * math.pi * 5)
    assert spec.requirements.gain_margin_db == 6
    assert spec.requirements.delay_margin is not None and spec.requirements.delay_margin.samples == 1


def test_numbers_are_read_exactly_as_typed() -> None:
    text = GOOD.replace('[controller]\ntransfer = "1.2*(0.5*s + 1)/(0.5*s)"\nmethod = "tustin"\nprewarp = "5 Hz"',
                        "[controller.digital]\nb = [0.52, -0.47]\na = [1.0, -1.0]")
    spec = parse_case(text)
    assert spec.controller.digital is not None
    assert spec.controller.digital.b == (Fraction(52, 100), Fraction(-47, 100))


def test_rate_means_its_period() -> None:
    spec = parse_case(GOOD.replace('period = "10 ms"', 'period = "100 Hz"'))
    assert spec.period_s == pytest.approx(0.01, rel=1e-15)


@pytest.mark.parametrize("case", CASES, ids=[c.stem for c in CASES])
def test_demo_cases_validate_against_the_schema(case: Path) -> None:
    """Every demo case is valid under the published JSON Schema (jsonschema, reference library)."""
    doc = tomllib.loads(case.read_text())
    jsonschema.validate(doc, SCHEMA)
    load_case(case)


def test_schema_is_a_valid_json_schema() -> None:
    jsonschema.Draft202012Validator.check_schema(SCHEMA)


BAD = [
    ("malformed TOML", GOOD.replace("[timing]", "[timing"), "malformed TOML"),
    ("missing table", GOOD.replace("[timing]\nperiod = \"10 ms\"\ncompute_delay = \"1 sample\"", ""), "timing"),
    ("missing period", GOOD.replace('period = "10 ms"', ""), "timing.period"),
    ("unknown key", GOOD.replace('period = "10 ms"', 'period = "10 ms"\nperiode = 3'), "did you mean 'period'"),
    ("unknown top key", GOOD + "\n[plants]\nx = 1\n", "plants"),
    ("NaN", GOOD.replace("gain_margin_db = 6", "gain_margin_db = nan"), "requirements.gain_margin_db"),
    ("inf", GOOD.replace("sensitivity_peak = 2.0", "sensitivity_peak = inf"), "requirements.sensitivity_peak"),
    ("improper", GOOD.replace('"2.5/(0.8*s + 1)"', '"(s^2 + 1)/(s + 1)"'), "improper"),
    ("zero leading coefficient", GOOD.replace('transfer = "2.5/(0.8*s + 1)"', "num = [2.5]\nden = [0, 0.8, 1]"), "plant.den"),
    ("non-positive period", GOOD.replace('period = "10 ms"', 'period = "-10 ms"'), "timing.period"),
    ("zero period", GOOD.replace('period = "10 ms"', "period = 0"), "timing.period"),
    ("unknown unit", GOOD.replace('period = "10 ms"', 'period = "10 fortnights"'), "unknown unit"),
    ("unknown method", GOOD.replace('method = "tustin"', 'method = "tustn"'), "did you mean 'tustin'"),
    ("prewarp above Nyquist", GOOD.replace('prewarp = "5 Hz"', 'prewarp = "60 Hz"'), "Nyquist"),
    ("two controllers", GOOD.replace('method = "tustin"', 'method = "tustin"\n[controller.pid]\nkp = 1'), "exactly one"),
    ("bad expression", GOOD.replace('"2.5/(0.8*s + 1)"', '"2.5/(0.8*x + 1)"'), "plant.transfer"),
    ("eval attempt", GOOD.replace('"2.5/(0.8*s + 1)"', '"__import__(1)"'), "plant.transfer"),
]


@pytest.mark.parametrize("name, text, needle", BAD, ids=[b[0] for b in BAD])
def test_bad_input_is_one_precise_error(name: str, text: str, needle: str) -> None:
    with pytest.raises(CaseFileError) as info:
        parse_case(text, "loop.toml")
    message = str(info.value)
    assert message.startswith("loop.toml"), message
    assert needle in message, message
    assert "\n" not in message


@pytest.mark.parametrize("name, text, needle", BAD[:6], ids=[b[0] for b in BAD[:6]])
def test_cli_bad_input_exit_2_one_line(tmp_path: Path, name: str, text: str, needle: str) -> None:
    path = tmp_path / "loop.toml"
    path.write_text(text)
    proc = subprocess.run([sys.executable, "-m", "sampled", "check", str(path), "--json"],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert proc.stdout == ""
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1, proc.stderr
    assert "Traceback" not in proc.stderr
    assert str(path) in lines[0] and needle in lines[0]


def test_missing_file() -> None:
    with pytest.raises(CaseFileError) as info:
        load_case("/nonexistent/loop.toml")
    assert "/nonexistent/loop.toml" in str(info.value)


# ---- broken case files never produce a traceback ---------------------------------------------------

_KEYS = ["title", "plant", "transfer", "num", "den", "delay", "period", "compute_delay", "method", "prewarp",
         "gain_margin_db", "kp", "ki", "b", "a", "format", "zeros", "poles", "gain", "points", "from", "to"]
_VALUES = st.one_of(
    st.integers(-10**6, 10**6).map(str),
    st.floats(allow_nan=True, allow_infinity=True).map(lambda x: repr(x).replace("nan", "nan").replace("inf", "inf")),
    st.sampled_from(['"10 ms"', '"-1 s"', '"1/s"', '"s^2"', '"(s+1"', '"Q15"', '"tustin"', "[1, 0]", "[]", "[0]",
                     '["1"]', "true", '"2 kHz"', '"0.5 sample"', '"abc"', "[[1]]", '"1e999"']),
)


@settings(max_examples=30)
@given(
    drop=st.lists(st.integers(0, 30), max_size=3),
    edits=st.lists(st.tuples(st.sampled_from(_KEYS), _VALUES), max_size=3),
)
def test_broken_case_files_never_crash(drop: list[int], edits: list[tuple[str, str]]) -> None:
    """Delete lines and overwrite or add keys at random: only SampledError may come out."""
    lines = GOOD.strip().splitlines()
    for i in sorted(set(drop), reverse=True):
        if i < len(lines):
            del lines[i]
    for key, value in edits:
        for i, line in enumerate(lines):
            if line.split("=")[0].strip() == key:
                lines[i] = f"{key} = {value}"
                break
        else:
            lines.insert(1, f"{key} = {value}")
    text = "\n".join(lines)
    try:
        spec = parse_case(text, "fuzz.toml")
    except SampledError as exc:
        assert "\n" not in str(exc)
        return
    # A readable case must also assemble without anything but SampledError.
    from sampled.loop import assess

    try:
        assess(spec, with_margins=False)
    except SampledError:
        pass


def test_schema_command_prints_the_schema() -> None:
    proc = subprocess.run([sys.executable, "-m", "sampled", "schema"], capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0
    assert json.loads(proc.stdout) == json.loads(json.dumps(SCHEMA))
