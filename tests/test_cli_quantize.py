"""`sampled quantize`: exit codes, JSON keys, text answer, one-line errors naming the option."""

from __future__ import annotations

import json

import pytest

from sampled.cli import main


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    try:
        code = main(["quantize", *argv])
    except SystemExit as exc:
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


def test_json_fragile_case(capsys: pytest.CaptureFixture[str]) -> None:
    """The twin-notch case at 16 bits: direct form fails, sections pass (see test_quantize.py for
    the reason and the numpy.roots check), so the command exits 0 and names sections."""
    code, out, err = _run(capsys, "cases/notch_filter_fragile.toml", "--bits", "16", "--structure", "direct1,sections", "--json")
    assert code == 0, err
    data = json.loads(out)
    names = [s["name"] for s in data["structures"]]
    assert names == ["direct1", "sections"]
    by = {s["name"]: s for s in data["structures"]}
    assert by["direct1"]["min_bits_stable"] is None and by["direct1"]["min_bits_requirements"] is None
    assert by["sections"]["min_bits_stable"] == 16 and by["sections"]["min_bits_requirements"] == 16
    row = by["direct1"]["rows"][0]
    assert row["bits"] == 16 and row["verdict"] == "unstable" and row["spectral_radius"] > 1
    assert {"coefficients", "controller_poles", "controller_zeros", "controller_spectral_radius"} <= set(row)
    assert data["best_structure"] == "sections" and data["implementable"] is True
    assert "caution" in data


def test_text_answer_and_exit_1_when_no_structure_passes(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(capsys, "cases/notch_filter_fragile.toml", "--bits", "12,16", "--structure", "direct2t")
    assert code == 1, err
    assert "direct form II transposed (direct2t)" in out
    assert "no word length tried keeps the loop stable" in out
    assert "Answer: no structure tried can meet the requirements with 12 to 16 bits." in out


def test_text_shortest_word(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(capsys, "cases/drone_motor_speed.toml", "--bits", "12,16", "--structure", "sections", "--rounding", "floor")
    assert code == 0
    assert "Shortest word: stable from 12 bits; meets the requirements from 12 bits." in out
    assert "Answer: the shortest word that will meet the requirements is 12 bits" in out
    assert "toward minus infinity" in out


@pytest.mark.parametrize(
    ("argv", "needle"),
    [
        (["--bits", "40-3"], "--bits"),
        (["--bits", "8-40"], "--bits"),
        (["--bits", "eight"], "--bits"),
        (["--structure", "ladder"], "--structure"),
        (["--rounding", "up"], "--rounding"),
    ],
)
def test_bad_options_exit_2_one_line(capsys: pytest.CaptureFixture[str], argv: list[str], needle: str) -> None:
    code, out, err = _run(capsys, "cases/drone_motor_speed.toml", *argv)
    assert code == 2
    assert out == ""
    assert needle in err and len(err.strip().splitlines()) == 1


def test_missing_case_file(capsys: pytest.CaptureFixture[str], tmp_path) -> None:
    code, out, err = _run(capsys, str(tmp_path / "nope.toml"), "--bits", "16")
    assert code == 2 and out == "" and "nope.toml" in err and "Traceback" not in err
