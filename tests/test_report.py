"""The HTML report: parsed with the standard library's html.parser, and rendered by headless Chromium.

Checks: every section is there with its id; nothing refers outside the file (no URL, no ``src``,
no script, no external style or font); the case file is echoed verbatim (escaped in the HTML, equal
to the source after parsing); the figures are inline SVG with unique ids; the numbers shown are the
assessment's. Chromium (Debian packages chromium and chromium-driver) renders the file to a PNG,
which must not be blank; the test skips, saying why, only where Chromium cannot be found.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

from sampled import __version__
from sampled.casefile import parse_case
from sampled.commands.common import SAFETY_CAUTION
from sampled.loop import assess
from sampled.report.html import SECTIONS, build_report

CASE_TEXT = """title = "Lag loop for the report tests"
description = "First-order lag with a PI law & a sensor; markup-like text <b>stays</b> text."

[plant]
transfer = "3/(0.5*s + 1)"   # gain < 4 & time constant > 0, "quoted"

[sensor]
transfer = "1/(0.02*s + 1)"

[controller]
transfer = "0.8*(0.5*s + 1)/(0.5*s)"
method = "tustin"

[timing]
period = "50 ms"
compute_delay = "1 sample"

[requirements]
gain_margin_db = 6
phase_margin_deg = 40
"""


class _Collector(HTMLParser):
    """Every start tag with its attributes, the text of each section, and the <pre> text."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.stack: list[str] = []
        self.section: str | None = None
        self.section_text: dict[str, str] = {}
        self.pre: list[str] = []
        self.in_pre = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag == "section":
            self.section = a.get("id")
            self.section_text[self.section or ""] = ""
        if tag == "pre":
            self.in_pre = True
            self.pre.append("")

    def handle_endtag(self, tag):
        if tag == "section":
            self.section = None
        if tag == "pre":
            self.in_pre = False

    def handle_data(self, data):
        if self.section is not None:
            self.section_text[self.section] += data
        if self.in_pre:
            self.pre[-1] += data


@pytest.fixture(scope="module")
def report():
    """One report (small grids keep it quick), judged at the case's own period given explicitly."""
    spec = parse_case(CASE_TEXT, "cases/lag-report-test.toml")
    text = build_report(spec, 0.05, periods_s=np.geomspace(0.005, 1.0, 24), gains=np.geomspace(0.25, 4.0, 7),
                        margin_points=12)
    parser = _Collector()
    parser.feed(text)
    parser.close()
    return text, parser, assess(spec)


def test_every_section_is_present_in_order(report):
    text, parser, _ = report
    ids = [a.get("id") for tag, a in parser.tags if tag == "section"]
    assert ids == [sid for sid, _ in SECTIONS]
    for sid, title in SECTIONS:
        assert parser.section_text[sid].startswith(title)


def test_nothing_refers_outside_the_file(report):
    text, parser, _ = report
    assert "http" not in text.lower()
    assert "//" not in text
    assert "src=" not in text.lower()
    assert "data:" not in text  # no embedded images either: every figure is vector SVG
    assert "@import" not in text and "@font-face" not in text
    for tag, attrs in parser.tags:
        assert tag not in ("script", "link", "img", "iframe", "object", "embed", "base"), tag
        for name, value in attrs.items():
            assert not name.startswith("on"), name  # no event handlers
            if name in ("href", "xlink:href"):
                assert value is not None and value.startswith("#"), value
    for ref in __import__("re").findall(r"url\(([^)]*)\)", text):
        assert ref.startswith("#"), ref


def test_case_file_echoed_verbatim(report):
    text, parser, _ = report
    assert CASE_TEXT in parser.pre  # exactly, after the parser undoes the escaping
    assert "&lt;b&gt;stays&lt;/b&gt;" in text  # and escaped in the file itself
    assert "<b>stays</b>" not in text


def test_figures_are_inline_svg_with_unique_ids(report):
    text, parser, _ = report
    svgs = [a for tag, a in parser.tags if tag == "svg"]
    assert len(svgs) == 5
    assert all("viewbox" in a for a in svgs)
    ids = [a["id"] for _tag, a in parser.tags if a.get("id")]
    assert len(ids) == len(set(ids))
    known = set(ids)
    for _tag, attrs in parser.tags:
        ref = attrs.get("href") or attrs.get("xlink:href")
        if ref:
            assert ref[1:] in known, ref
    assert len([a for tag, a in parser.tags if tag == "figcaption"]) == 5


def test_numbers_caution_version_and_command(report):
    text, parser, a = report
    verdicts = parser.section_text["verdicts"]
    assert f"{a.digital.spectral_radius:.8g}" in verdicts
    assert a.digital.verdict in verdicts
    assert a.continuous is not None and a.continuous.verdict in verdicts
    reqs = parser.section_text["requirements"]
    for r in a.requirements:
        assert ("met" if r.met else "NOT MET") in reqs
    assert SAFETY_CAUTION in parser.section_text["caution"]
    assert SAFETY_CAUTION in text  # also in the footer
    repro = parser.section_text["reproduce"]
    assert f"sampled {__version__}" in repro
    assert "sampled report cases/lag-report-test.toml -o report.html --period 0.05" in repro
    assert "sampled check cases/lag-report-test.toml --period 0.05" in repro
    assert "judged at T = 50 ms" in text
    poles = parser.section_text["poles"]
    for z in a.digital.poles:
        assert f"{abs(z):.10g}" in poles
    for w in a.warnings:
        assert w.kind in parser.section_text["warnings"]
    sweep = parser.section_text["sweep"]
    assert "stability" in sweep and "Largest period meeting every requirement" in sweep


# ---- rendered by a browser -------------------------------------------------------------------------

def _chromium() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        found = shutil.which(name)
        if found:
            return found
    return "/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None


def test_chromium_renders_a_non_blank_page(report, tmp_path):
    """Headless Chromium screenshot: mostly white paper, but with text, rules and figure colours."""
    browser = _chromium()
    if browser is None:
        pytest.skip("Chromium not found (install the Debian packages chromium and chromium-driver)")
    text, _parser, _ = report
    page = tmp_path / "report.html"
    page.write_text(text, encoding="utf-8")
    shot = tmp_path / "shot.png"
    cmd = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           "--hide-scrollbars", f"--user-data-dir={tmp_path / 'profile'}", f"--screenshot={shot}",
           "--window-size=1200,2000", page.as_uri()]
    env = dict(os.environ, HOME=str(tmp_path))
    subprocess.run(cmd, check=True, capture_output=True, timeout=120, env=env)
    import matplotlib.image

    img = matplotlib.image.imread(str(shot))
    assert img.shape[0] >= 1900 and img.shape[1] >= 1100
    rgb = np.round(img[..., :3] * 255).astype(int)
    white = np.all(rgb >= 250, axis=-1)
    ink_fraction = 1.0 - float(np.mean(white))
    colours = np.unique(rgb.reshape(-1, 3) // 8, axis=0).shape[0]
    assert 0.03 < ink_fraction < 0.9, ink_fraction
    assert colours > 40, colours
    # The header's accent rule is drawn in the "as implemented" colour #0b6e7f.
    teal = np.all(np.abs(rgb - np.array([0x0B, 0x6E, 0x7F])) <= 6, axis=-1)
    assert np.count_nonzero(teal) > 500
