"""`sampled report` and `sampled check --plot`: exit codes, files written atomically, one-line errors.

Exit status: 0 stable and every requirement met (report written), 1 not (report still written),
2 bad input (one line naming the option or key, no file written, an existing file left untouched).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sampled.cli import main
from sampled.errors import NumericalError

LAG = """title = "Lag loop, command test"

[plant]
transfer = "3/(0.5*s + 1)"

[controller]
transfer = "{gain}*(0.5*s + 1)/(0.5*s)"
method = "tustin"

[timing]
period = "50 ms"
compute_delay = "1 sample"

[requirements]
gain_margin_db = 6

[sweep]
from = "10 ms"
to = "400 ms"
points = 10
gain_from = 0.5
gain_to = 2
"""


def _case(tmp_path: Path, gain: float = 0.8, name: str = "lag.toml") -> Path:
    path = tmp_path / name
    path.write_text(LAG.format(gain=gain), encoding="utf-8")
    return path


def _files(directory: Path) -> list[str]:
    return sorted(p.name for p in directory.iterdir())


def test_report_writes_one_html_file_and_exits_0(tmp_path, capsys):
    case = _case(tmp_path)
    out = tmp_path / "out" / "lag.html"
    assert main(["report", str(case), "-o", str(out)]) == 0
    captured = capsys.readouterr()
    assert captured.out == ""
    assert "sampled report: sweeping 10 periods" in captured.err
    assert f"wrote {out}" in captured.err
    text = out.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>") and text.rstrip().endswith("</html>")
    assert f"sampled report {case} -o {out}" in text
    assert _files(out.parent) == ["lag.html"]  # no temporary file left behind


def test_report_of_a_failing_loop_is_written_and_exits_1(tmp_path, capsys):
    """Gain 8 with a sample of delay: the sampled loop is unstable (its gain margin is negative)."""
    case = _case(tmp_path, gain=8.0)
    out = tmp_path / "bad.html"
    assert main(["report", str(case), "-o", str(out), "--quiet", "--period", "100ms"]) == 1
    captured = capsys.readouterr()
    assert captured.err == "" and captured.out == ""
    text = out.read_text(encoding="utf-8")
    assert "FAIL" in text and "--period 100ms" in text


@pytest.mark.parametrize(
    "args, where",
    [
        (["-o", "{tmp}/r.pdf"], "--output"),
        (["-o", "{tmp}/r"], "--output"),
        (["-o", "{tmp}/r.html", "--period", "5 parsecs"], "--period"),
        (["-o", "{tmp}/r.html", "--period", "-1 ms"], "--period"),
    ],
)
def test_bad_options_exit_2_with_one_line_and_no_file(tmp_path, capsys, args, where):
    case = _case(tmp_path)
    argv = ["report", str(case)] + [a.format(tmp=tmp_path) for a in args]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and where in err and "Traceback" not in err
    assert _files(tmp_path) == ["lag.toml"]


def test_bad_case_exits_2_naming_the_key(tmp_path, capsys):
    case = tmp_path / "broken.toml"
    case.write_text(LAG.format(gain=1).replace("[timing]", "[timing]\nperiode = 3"), encoding="utf-8")
    assert main(["report", str(case), "-o", str(tmp_path / "r.html")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "timing.periode" in err and "period" in err
    assert _files(tmp_path) == ["broken.toml"]


def test_missing_case_and_directory_output(tmp_path, capsys):
    assert main(["report", str(tmp_path / "nope.toml"), "-o", str(tmp_path / "r.html")]) == 2
    assert "nope.toml" in capsys.readouterr().err
    (tmp_path / "dir.html").mkdir()
    assert main(["report", str(_case(tmp_path)), "-o", str(tmp_path / "dir.html")]) == 2
    assert "--output" in capsys.readouterr().err


def test_failure_while_building_leaves_the_old_file_untouched(tmp_path, capsys, monkeypatch):
    import sampled.report.html as report_html

    def broken(*_args, **_kwargs):
        raise NumericalError("the sweep could not reach its accuracy")

    monkeypatch.setattr(report_html, "collect", broken)
    out = tmp_path / "keep.html"
    out.write_text("previous report", encoding="utf-8")
    case = _case(tmp_path)
    assert main(["report", str(case), "-o", str(out)]) == 2
    assert "could not reach its accuracy" in capsys.readouterr().err
    assert out.read_text(encoding="utf-8") == "previous report"
    assert _files(tmp_path) == ["keep.html", "lag.toml"]


# ---- check --plot ----------------------------------------------------------------------------------

@pytest.mark.parametrize("suffix, magic", [(".png", b"\x89PNG"), (".svg", b"<?xml"), (".PDF", b"%PDF")])
def test_check_plot_writes_the_figure(tmp_path, capsys, suffix, magic):
    case = _case(tmp_path)
    out = tmp_path / f"loop{suffix}"
    assert main(["check", str(case), "--plot", str(out)]) == 0
    assert out.read_bytes().startswith(magic)
    assert "RESULT: PASS" in capsys.readouterr().out


def test_check_plot_of_an_unstable_loop_still_writes_it(tmp_path, capsys):
    case = _case(tmp_path, gain=8.0)
    out = tmp_path / "loop.svg"
    assert main(["check", str(case), "--plot", str(out), "--period", "100ms", "--json"]) == 1
    assert out.read_bytes().startswith(b"<?xml")
    assert '"verdict": "unstable"' in capsys.readouterr().out


@pytest.mark.parametrize("name", ["loop.bmp", "loop", "loop.jpeg"])
def test_check_plot_bad_suffix_exits_2_before_any_output(tmp_path, capsys, name):
    case = _case(tmp_path)
    assert main(["check", str(case), "--plot", str(tmp_path / name)]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err.count("\n") == 1 and "--plot" in captured.err and ".png" in captured.err
    assert _files(tmp_path) == ["lag.toml"]
