"""`sampled table`: exit codes, JSON keys, gain ranges and one-line errors.

Bad input is checked through a real subprocess (`python -m sampled table ...`): exit status 2,
exactly one line on stderr naming the argument or option, nothing on stdout, no traceback.
Expected verdicts come from closed forms stated beside each case.
"""

from __future__ import annotations

import json
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor

import pytest

from sampled.cli import main

from test_routh import A0_TEXT, A1_TEXT


def run_cli(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "sampled", "table", *args],
        capture_output=True,
        text=True,
        timeout=120,
    )


def run_json(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, dict]:
    code = main(["table", *args, "--json"])
    out = capsys.readouterr().out
    return code, json.loads(out)


@pytest.mark.parametrize(
    "text, code, verdict, counts",
    [
        # (s + 1)(s + 2)(s + 3): all roots left.
        ("(s+1)*(s+2)*(s+3)", 0, "stable", {"left": 3, "imaginary": 0, "right": 0}),
        # (s + 2)(s^2 + 4): simple pair +-2j.
        ("s^3 + 2*s^2 + 4*s + 8", 1, "marginal", {"left": 1, "imaginary": 2, "right": 0}),
        # (s + 2)(s^2 - s + 1): pair at 1/2 +- j sqrt(3)/2.
        ("s^3 + s^2 - s + 2", 1, "unstable", {"left": 1, "imaginary": 0, "right": 2}),
        # (s^2 + 1)^2: repeated pair, grows like t sin t.
        ("(s^2+1)^2", 1, "unstable", {"left": 0, "imaginary": 4, "right": 0}),
        # s (s + 1): root at the origin.
        ("s^2 + s", 1, "marginal", {"left": 1, "imaginary": 1, "right": 0}),
    ],
)
def test_json_verdicts(capsys, text: str, code: int, verdict: str, counts: dict) -> None:
    got_code, data = run_json(capsys, text)
    assert got_code == code
    assert data["domain"] == "s"
    assert data["verdict"] == verdict
    assert data["counts"] == counts
    assert isinstance(data["routh"], list)
    assert all(isinstance(x, str) for row in data["routh"] for x in row)
    assert len(data["routh"]) == sum(counts.values()) - data["origin_roots"] + 1


def test_json_from_subprocess_sorted_keys() -> None:
    """s^3 + 3 s^2 + 3 s + 1 = (s + 1)^3: stable, exit 0; keys sorted on stdout."""
    proc = run_cli("s^3 + 3*s^2 + 3*s + 1", "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert list(data) == sorted(data)
    assert data["routh"][0] == ["1", "3"] and data["counts"]["left"] == 3


def test_text_output_shows_rows_and_counts(capsys) -> None:
    """Ogata 5th ed. section 5-6 (from memory): s^3 - 3 s + 2 = (s - 1)^2 (s + 2): eps row, 2 right."""
    code = main(["table", "s^3 - 3*s + 2"])
    out = capsys.readouterr().out
    assert code == 1
    assert "eps" in out
    assert "2 in the right half-plane" in out
    assert "Verdict: unstable" in out


def test_typed_digits_decide(capsys) -> None:
    """The 31-digit case of tests/test_routh.py: exactly stable as typed; unstable once rounded."""
    code, data = run_json(capsys, f"s^3 + {A1_TEXT}*s^2 + {A1_TEXT}*s + {A0_TEXT}")
    assert code == 0 and data["verdict"] == "stable"
    rounded = [repr(float(x)) for x in (A1_TEXT, A1_TEXT, A0_TEXT)]
    code, data = run_json(capsys, f"s^3 + {rounded[0]}*s^2 + {rounded[1]}*s + {rounded[2]}")
    assert code == 1 and data["verdict"] == "unstable"


def test_gain_ranges_json(capsys) -> None:
    """s^3 + 3 s^2 + 2 s + K: 0 < K < 6 (Hurwitz degree 3: 3*2 > K); s^2 + K s + 1: K > 0."""
    code, data = run_json(capsys, "s^3 + 3*s^2 + 2*s + K", "--gain", "K")
    assert code == 0
    assert data["domain"] == "s"
    assert data["gain_ranges"] == [[0.0, 6.0]]
    assert data["gain_range_ends_closed"] == [[False, False]]
    code, data = run_json(capsys, "s^2 + K*s + 1", "--gain", "K")
    assert code == 0 and data["gain_ranges"] == [[0.0, None]]
    # (s + 1)(s^2 + K): never stable -> exit 1, empty list.
    code, data = run_json(capsys, "s^3 + s^2 + K*s + K", "--gain", "K")
    assert code == 1 and data["gain_ranges"] == []


def test_gain_text(capsys) -> None:
    code = main(["table", "s^3 + 2*s^2 + 4*s + Kp", "--gain", "Kp"])
    out = capsys.readouterr().out
    assert code == 0 and "Kp in (0, 8)" in out  # Dorf & Bishop ch. 6 (from memory): 0 < K < 8


BAD_INPUT: list[tuple[list[str], str]] = [
    ([""], "polynomial"),
    (["0*s^3 + 0"], "polynomial"),  # zero polynomial: no leading coefficient at all
    (["s - s"], "polynomial"),
    (["nan*s + 1"], "polynomial"),
    (["inf*s^2 + 1"], "polynomial"),
    (["s^2 + x*s + 1"], "polynomial"),
    (["(s+1)*(s+2"], "polynomial"),
    (["s+1)"], "polynomial"),
    (["__import__('os').system('echo hi')"], "polynomial"),
    (["(s+1).__class__"], "polynomial"),
    (["s^99999"], "polynomial"),
    (["1e999999999*s + 1"], "polynomial"),
    (["1/(s+1)"], "polynomial"),
    (["s^2 + K*s + 1", "--gain", "s"], "--gain"),
    (["s^2 + K^2*s + 1", "--gain", "K"], "polynomial"),
    (["s^2 + s + 1", "--domain", "w"], "--domain"),
    (["s + 1", "--no-such-option"], "--no-such-option"),
]


@pytest.fixture(scope="module")
def bad_input_results() -> list[subprocess.CompletedProcess[str]]:
    """Run every bad-input command line once, a few at a time (start-up dominates)."""
    with ThreadPoolExecutor(max_workers=3) as pool:
        return list(pool.map(lambda case: run_cli(*case[0]), BAD_INPUT))


@pytest.mark.parametrize("index", range(len(BAD_INPUT)), ids=[" ".join(a) or "empty" for a, _ in BAD_INPUT])
def test_bad_input_one_line_exit_2(bad_input_results, index: int) -> None:
    name = BAD_INPUT[index][1]
    proc = bad_input_results[index]
    assert proc.returncode == 2, proc.stderr
    assert proc.stdout == ""
    lines = proc.stderr.splitlines()
    assert len(lines) == 1, proc.stderr
    assert name in lines[0]
    assert "Traceback" not in proc.stderr
