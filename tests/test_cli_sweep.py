"""`sampled sweep`: exit codes, JSON keys, CSV and plot files, messages naming the bad option."""

from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path

import pytest

from sampled.cli import main

CASE = """
title = "integrator loop"
[plant]
transfer = "1/s"
[controller]
transfer = "4"
method = "tustin"
[timing]
period = "{period}"
[requirements]
phase_margin_deg = 30
"""


def write_case(tmp_path: Path, period: str) -> str:
    path = tmp_path / "loop.toml"
    path.write_text(CASE.format(period=period))
    return str(path)


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    code = main(["sweep", *argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_text_output_states_the_answer_and_exit_0(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Integrator 1/s with gain K = 4 is stable for K T < 2 (closed form: pole z = 1 - K T), so the
    stability boundary is T = 0.5 s; at T = 0.1 s the phase margin is far above 30 deg."""
    case = write_case(tmp_path, "0.1 s")
    code, out, err = run([case, "--from", "10 ms", "--to", "1 s", "--points", "60"], capsys)
    assert code == 0
    assert "Largest period meeting every requirement:" in out
    assert "stability: unstable" in out
    assert "500 ms" in out  # the boundary T = 2/K
    assert "Caution" in out
    assert err == ""  # no progress bar when stderr is not a terminal


def test_exit_1_when_the_case_period_fails(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    case = write_case(tmp_path, "0.7 s")  # K T = 2.8 > 2: unstable
    code, _, _ = run([case, "--from", "10 ms", "--to", "1 s", "--points", "20"], capsys)
    assert code == 1


def test_json_has_the_promised_keys(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    case = write_case(tmp_path, "0.1 s")
    code, out, _ = run([case, "--from", "10 ms", "--to", "1 s", "--points", "30", "--json"], capsys)
    assert code == 0
    d = json.loads(out)
    for key in ("periods", "verdicts", "spectral_radius", "boundaries", "largest_period_meeting_requirements"):
        assert key in d
    assert len(d["periods"]) == 30 == len(d["verdicts"])
    stab = [b for b in d["boundaries"] if b["kind"] == "stability"]
    assert len(stab) == 1 and math.isclose(stab[0]["period"], 0.5, rel_tol=1e-9)
    assert d["largest_period_meeting_requirements"] <= 0.5


def test_json_null_when_no_period_meets(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    case = write_case(tmp_path, "0.7 s")
    code, out, _ = run([case, "--from", "0.6 s", "--to", "1 s", "--points", "5", "--json"], capsys)
    assert code == 1
    assert json.loads(out)["largest_period_meeting_requirements"] is None


def test_csv_file(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    case = write_case(tmp_path, "0.1 s")
    target = tmp_path / "out" / "sweep.csv"
    code, _, _ = run([case, "--from", "10 ms", "--to", "1 s", "--points", "12", "--csv", str(target)], capsys)
    assert code == 0
    rows = list(csv.DictReader(io.StringIO(target.read_text())))
    assert len(rows) == 12
    assert {"period_s", "verdict", "spectral_radius", "met_phase_margin_deg", "met_all"} <= set(rows[0])
    assert rows[0]["verdict"] == "stable" and rows[-1]["verdict"] == "unstable"


def test_plot_and_gain_chart(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    case = write_case(tmp_path, "0.1 s")
    target = tmp_path / "sweep.svg"
    code, out, _ = run([case, "--from", "10 ms", "--to", "1 s", "--points", "12", "--plot", str(target),
                        "--gain-chart"], capsys)
    assert code == 0
    assert target.read_text().lstrip().startswith("<?xml")
    assert (tmp_path / "sweep-gain-chart.svg").exists()
    assert "Stability chart" in out


@pytest.mark.parametrize(
    ("extra", "named"),
    [
        (["--points", "1"], "--points"),
        (["--points", "many"], "--points"),
        (["--from", "10 parsecs"], "--from"),
        (["--from", "1 s", "--to", "10 ms"], "--from"),
        (["--plot", "figure.bmp"], "--plot"),
    ],
)
def test_bad_options_exit_2_naming_the_option(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                              extra: list[str], named: str) -> None:
    case = write_case(tmp_path, "0.1 s")
    csv_target = tmp_path / "never.csv"
    code, out, err = run([case, *extra, "--csv", str(csv_target)], capsys)
    assert code == 2
    assert named in err and len(err.strip().splitlines()) == 1
    assert out == ""
    assert not csv_target.exists()  # no partial output


def test_missing_case_file_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run([str(tmp_path / "nope.toml")], capsys)
    assert code == 2 and "nope.toml" in err
