"""One self-contained HTML report of a loop, for a reviewer to read, sign off and reproduce.

The file needs nothing but itself: figures are inline SVG (text drawn as paths, so no font is
fetched), the style sheet is inline, there are no scripts and no URLs of any kind (the SVG
namespace declarations, which HTML does not need, are removed). Sections, in order and with the
``id`` each carries (:data:`SECTIONS`):

summary, verdicts, margins, requirements, warnings, poles, figures, sweep, caution, case-file,
reproduce.

:func:`collect` does the computing (assessment, step response, period sweep, stability chart, pole
paths); :func:`render_report` turns the result into the HTML text; :func:`build_report` does both.
"""

from __future__ import annotations

import hashlib
import html
import math
import platform
import re
import shlex
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from sampled import SAFETY_CAUTION, __version__
from sampled.casefile import LoopSpec
from sampled.commands.render import REQUIREMENT_LABELS, cost_phrases, fmt_db, fmt_deg, fmt_num, fmt_s, margin_cells
from sampled.errors import InputError
from sampled.loop import Assessment, assess, compute_delay_s
from sampled.units import format_frequency, format_time

if TYPE_CHECKING:  # imported lazily at run time
    from sampled.simulate import StepResponse
    from sampled.sweep import StabilityChart, SweepResult

#: Section ids of the report, in order, with their headings.
SECTIONS: tuple[tuple[str, str], ...] = (
    ("summary", "Loop summary"),
    ("verdicts", "Verdicts side by side"),
    ("margins", "Margins"),
    ("requirements", "Requirements"),
    ("warnings", "Warnings"),
    ("poles", "Closed-loop poles"),
    ("figures", "Figures"),
    ("sweep", "Sample period sweep"),
    ("caution", "Safety caution"),
    ("case-file", "Case file"),
    ("reproduce", "Reproduce this report"),
)

#: Periods drawn in the pole-path figure and (at most, never more than the sweep has) in the
#: stability chart, log-spaced over the sweep range.
PATH_POINTS = 120
CHART_PERIOD_POINTS = 72

#: Seconds between progress messages during the sweep.
PROGRESS_EVERY_S = 3.0

Progress = Callable[[str], None]


@dataclass(frozen=True)
class ReportParts:
    """Everything the report shows, computed once."""

    spec: LoopSpec
    assessment: Assessment
    step: "StepResponse"
    sweep: "SweepResult"
    chart: "StabilityChart"
    path_periods_s: np.ndarray
    period_given: bool


def collect(
    spec: LoopSpec,
    period_s: float | None = None,
    *,
    periods_s: Sequence[float] | np.ndarray | None = None,
    gains: Sequence[float] | np.ndarray | None = None,
    margin_points: int | None = None,
    progress: Progress | None = None,
) -> ReportParts:
    """Compute every part of the report.

    Parameters
    ----------
    spec : LoopSpec
    period_s : float [s], optional
        Judge at this period instead of the case's.
    periods_s : array [s], optional
        Periods of the sweep (default: :func:`sampled.sweep.default_periods`).
    gains : array, optional
        Loop-gain multipliers of the stability chart (default: :func:`sampled.sweep.default_gains`).
    margin_points : int, optional
        Periods at which the sweep computes margins (default: the sweep's own).
    progress : callable(str), optional
        Told what is being computed, stage by stage.
    """
    from sampled.simulate import step_response
    from sampled.sweep import default_gains, default_periods, stability_chart, sweep_periods

    say = progress or (lambda _msg: None)
    given = period_s is not None
    if given:
        spec = spec.with_period(float(period_s))  # type: ignore[arg-type]
    periods = np.asarray(default_periods(spec) if periods_s is None else periods_s, dtype=float).reshape(-1)
    if periods.size == 0 or not (np.all(np.isfinite(periods)) and np.all(periods > 0)):
        raise InputError("the sweep periods must be finite, positive and at least one", "periods")
    say(f"judging the loop at {format_time(spec.period_s)}")
    assessment = assess(spec)
    say("simulating the step response")
    step = step_response(spec)
    say(f"sweeping {periods.size} periods from {format_time(float(np.min(periods)))} to {format_time(float(np.max(periods)))}")
    kwargs: dict[str, Any] = {} if margin_points is None else {"margin_points": margin_points}
    if progress is not None:
        last = [time.monotonic()]

        def tick(done: int, total: int) -> None:
            # At most one message every few seconds, and only while the sweep is long.
            now = time.monotonic()
            if now - last[0] >= PROGRESS_EVERY_S and done < total:
                say(f"sweep: {done} of {total} evaluations")
                last[0] = now

        kwargs["progress"] = tick
    sweep = sweep_periods(spec, periods, **kwargs)
    lo, hi = float(sweep.periods_s[0]), float(sweep.periods_s[-1])
    chart_points = min(CHART_PERIOD_POINTS, max(len(sweep.periods_s), 2))
    chart_periods = np.geomspace(lo, hi, chart_points) if hi > lo else np.array([lo])
    gain_grid = np.asarray(default_gains(spec) if gains is None else gains, dtype=float)
    say(f"mapping stability over {chart_periods.size} periods x {gain_grid.size} loop-gain multipliers")
    chart = stability_chart(spec, chart_periods, gain_grid)
    path_periods = np.geomspace(lo, hi, PATH_POINTS) if hi > lo else np.array([lo])
    return ReportParts(spec, assessment, step, sweep, chart, path_periods, given)


def build_report(
    spec: LoopSpec,
    period_s: float | None = None,
    *,
    periods_s: Sequence[float] | np.ndarray | None = None,
    gains: Sequence[float] | np.ndarray | None = None,
    margin_points: int | None = None,
    command: str | None = None,
    progress: Progress | None = None,
) -> str:
    """The self-contained HTML report of the loop of ``spec`` (see the module docstring).

    ``command`` is the command line printed as the way to reproduce the report (default: the
    ``sampled report`` call equivalent to the arguments given).
    """
    parts = collect(spec, period_s, periods_s=periods_s, gains=gains, margin_points=margin_points, progress=progress)
    return render_report(parts, command=command, progress=progress)


# ---- SVG for inline use ----------------------------------------------------------------------------

_COMMENT = re.compile(r"<!--.*?-->", re.S)
_METADATA = re.compile(r"<metadata>.*?</metadata>\s*", re.S)
_XMLNS = re.compile(r'\s+xmlns(:\w+)?="[^"]*"')


def inline_svg(fig: Any, prefix: str, title: str) -> str:
    """SVG text of a figure for inline use in HTML: no prolog, no metadata, no namespace URLs.

    Every ``id`` is prefixed with ``prefix`` (and every ``#id`` reference with it) so several
    figures can share one page; the root element scales to the width of its container.
    """
    from sampled.report.figures import figure_bytes

    text = figure_bytes(fig, "svg").decode("utf-8")
    text = text[text.index("<svg"):]
    text = _COMMENT.sub("", text)
    text = _METADATA.sub("", text)
    text = _XMLNS.sub("", text)
    text = text.replace("xlink:href=", "href=")
    text = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{prefix}-{m.group(1)}"', text)
    text = re.sub(r'href="#([^"]+)"', lambda m: f'href="#{prefix}-{m.group(1)}"', text)
    text = re.sub(r"url\(#([^)]+)\)", lambda m: f"url(#{prefix}-{m.group(1)})", text)
    head_end = text.index(">")
    head = text[:head_end]
    head = re.sub(r'\s(width|height)="[^"]*"', "", head)
    label = html.escape(title, quote=True)
    head += f' class="figure" role="img" aria-label="{label}"'
    return head + text[head_end:]


# ---- rendering ---------------------------------------------------------------------------------------

def _e(x: object) -> str:
    return html.escape(str(x), quote=True)


def _table(header: Sequence[str], rows: Sequence[Sequence[str]], cls: str = "") -> str:
    """An HTML table; cells are already-escaped HTML."""
    head = "".join(f"<th>{h}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in r) + "</tr>" for r in rows)
    c = f' class="{cls}"' if cls else ""
    return f"<table{c}><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _badge(text: str, good: bool | None) -> str:
    cls = "neutral" if good is None else ("good" if good else "bad")
    return f'<span class="badge {cls}">{_e(text)}</span>'


def _verdict_badge(verdict: str) -> str:
    return _badge(verdict, verdict == "stable")


def _fmt_z(z: complex) -> str:
    if abs(z.imag) < 1e-14 * max(1.0, abs(z)):
        return f"{z.real:+.8g}"
    return f"{z.real:+.8g} {'+' if z.imag >= 0 else '&minus;'} {abs(z.imag):.8g}j"


def _system_text(system: Any) -> str:
    if system is None:
        return "none (1)"
    try:
        return str(system.describe())
    except (AttributeError, ValueError):  # pragma: no cover - defensive
        return repr(system)


def _summary(parts: ReportParts) -> str:
    a, spec = parts.assessment, parts.spec
    cd = spec.compute_delay
    cd_s = compute_delay_s(spec, a.period_s)
    cd_text = (f"{cd.samples:g} sample(s) = {format_time(cd_s)}" if cd.samples is not None else format_time(cd_s))
    c = spec.controller
    if c.kind == "transfer":
        ctrl = f"continuous design C(s) = {_system_text(c.transfer)}, discretised by {c.method}"
        if c.prewarp_rad_s is not None:
            ctrl += f" (prewarped at {format_frequency(c.prewarp_rad_s)})"
    elif c.kind == "pid":
        g = c.pid
        assert g is not None
        ctrl = (f"PID, parallel gains kp = {g.kp:g}, ki = {g.ki:g} /s, kd = {g.kd:g} s, derivative filter "
                f"{format_time(g.tf) if g.tf else 'none'}; integral by {g.integral}, derivative by {g.derivative}")
    else:
        ctrl = "firmware coefficients as given"
    b, a_coef = a.loop.controller.firmware_coefficients()
    coef = ("b = [" + ", ".join(f"{x:.10g}" for x in b) + "], a = [" + ", ".join(f"{x:.10g}" for x in a_coef) + "]"
            + (f", then {a.loop.controller.delay_samples} sample(s) of delay" if a.loop.controller.delay_samples else ""))
    rows = [
        ["Plant P(s)", _e(_system_text(spec.plant))],
        ["Sensor filter F(s)", _e(_system_text(spec.sensor))],
        ["Controller", _e(ctrl)],
        ["Controller as it runs (powers of z<sup>-1</sup>)", f"<code>{_e(coef)}</code>"],
        ["Sample period", _e(f"{format_time(a.period_s)} ({format_frequency(2 * math.pi / a.period_s)})"
                             + ("" if not parts.period_given else f"; the case file says {format_time(_case_period(spec))}"))],
        ["Computation delay", _e(cd_text)],
        ["Result", _badge("PASS" if a.passed else "FAIL", a.passed) + " "
         + _e("the loop as implemented is " + a.digital.verdict
              + (" and meets every requirement" if a.passed and a.requirements else "")
              + ("" if a.passed or a.digital.verdict != "stable" else ", but not every requirement is met"))],
    ]
    desc = f"<p>{_e(spec.description)}</p>" if spec.description else ""
    return desc + _table(["", ""], [[f"<strong>{r[0]}</strong>", r[1]] for r in rows], "kv")


def _case_period(spec: LoopSpec) -> float:
    """The period written in the case file (the spec may carry an override)."""
    from sampled.casefile import parse_case

    if spec.source_text is None:
        return spec.period_s
    return parse_case(spec.source_text, spec.source_path or "<case>").period_s


def _verdicts(a: Assessment) -> str:
    d, c = a.digital, a.continuous
    how_d = {"exact": "exact root count on the closed-loop characteristic polynomial",
             "eigenvalues": "eigenvalues of the closed-loop delta matrix",
             "not confirmed": "eigenvalues (NOT confirmed exactly)"}.get(d.confirmed, d.confirmed)
    digital_card = (
        '<div class="card"><h3>As implemented (sampled)</h3>'
        f"<p>{_verdict_badge(d.verdict)}</p>"
        f"<p>spectral radius <strong>{d.spectral_radius:.8g}</strong>; distance to the unit circle "
        f"1&minus;|z| = {d.stability_distance:.3g}</p>"
        f"<p class=\"muted\">judged by {_e(how_d)}; closed-loop order {d.order}</p></div>"
    )
    if c is None:
        cont_card = ('<div class="card"><h3>Continuous design</h3><p>'
                     + _badge("no continuous design", None)
                     + '</p><p class="muted">the controller is given as firmware coefficients only</p></div>')
    else:
        cont_card = (
            '<div class="card"><h3>Continuous design</h3>'
            f"<p>{_verdict_badge(c.verdict)}</p>"
            f"<p>largest real part of a closed-loop pole <strong>{c.largest_real_part:.6g} /s</strong>"
            + (" (delay by Pad&eacute; approximation)" if c.poles_approximated else "") + "</p>"
            f"<p class=\"muted\">judged by {_e(c.method)}</p></div>"
        )
    bits = cost_phrases(a.cost())
    cost_html = ""
    if bits:
        cost_html = ("<p><strong>What going digital cost:</strong> " + _e(", ".join(bits))
                     + " (continuous minus implemented; negative means gained).</p>")
    return f'<div class="cards">{cont_card}{digital_card}</div>{cost_html}'


def _margins(a: Assessment) -> str:
    d, c = a.digital, a.continuous
    dm = margin_cells(d.margins, samples=True)
    cm = margin_cells(c.margins if c else None) if c is not None else ["no continuous design"] + ["-"] * 3
    cost = a.cost()
    cost_cells = [
        fmt_db(cost.get("gain_margin_db")) if cost else "-",
        fmt_deg(cost.get("phase_margin_deg")) if cost else "-",
        fmt_s(cost.get("delay_margin_s")) if cost else "-",
        fmt_num(cost.get("sensitivity_peak")) if cost else "-",
    ]
    names = ["Gain margin", "Phase margin", "Delay margin", "Sensitivity peak max|1/(1+L)|"]
    rows = [[_e(n), _e(x), _e(y), _e(z)] for n, x, y, z in zip(names, cm, dm, cost_cells)]
    note = ""
    if d.verdict != "stable":
        note = '<p class="bad-text">The sampled loop is not stable: its margins are not stability margins.</p>'
    crossings = ""
    if d.margins is not None:
        m = d.margins
        gc = ", ".join(format_frequency(x.frequency_rad_s) for x in m.gain_crossovers) if m.gain_crossovers else "none"
        pc = ", ".join(format_frequency(x.frequency_rad_s) for x in m.phase_crossovers) if m.phase_crossovers else "none"
        crossings = f'<p class="muted">Sampled loop: gain crossovers at {_e(gc)}; phase crossovers at {_e(pc)}.</p>'
    return _table(["", "continuous design", "as implemented", "lost by going digital"], rows) + note + crossings


def _requirements(a: Assessment) -> str:
    if not a.requirements:
        return "<p>The case states no requirements; only stability is judged.</p>"
    rows = []
    for r in a.requirements:
        sense = "&le;" if r.name == "sensitivity_peak" else "&ge;"
        if r.unit == "s":
            limit, value = fmt_s(r.limit), fmt_s(r.value)
        else:
            unit = f" {r.unit}" if r.unit else ""
            limit = f"{r.limit:g}{unit}"
            value = "-" if r.value is None else fmt_num(r.value) + unit
        rows.append([_e(REQUIREMENT_LABELS.get(r.name, r.name)), f"{sense} {_e(limit)}", _e(value),
                     _badge("met" if r.met else "NOT MET", r.met) + (f' <span class="muted">{_e(r.detail)}</span>' if r.detail else "")])
    return _table(["requirement", "limit", "as implemented", "status"], rows)


def _warnings(a: Assessment) -> str:
    if not a.warnings:
        return "<p>No warnings.</p>"
    items = []
    for w in a.warnings:
        cls = "bad" if w.severity == "warning" else "neutral"
        advice = f'<br><span class="muted">{_e(w.advice)}</span>' if w.advice else ""
        items.append(f'<li><span class="badge {cls}">{_e(w.kind)}</span> {_e(w.message)}{advice}</li>')
    return '<ul class="findings">' + "".join(items) + "</ul>"


def _poles(a: Assessment) -> str:
    from sampled.report.figures import closed_loop_zeros, mapped_continuous_poles

    d, c, t = a.digital, a.continuous, a.period_s
    rows = []
    for z, dist in zip(d.poles, d.unit_circle_distance):
        z = complex(z)
        s_eq = "-" if z == 0 else _fmt_z(complex(np.log(z)) / t)
        rows.append([_fmt_z(z), f"{abs(z):.10g}", f'<span class="{"bad-text" if dist < 0 else ""}">{dist:.3g}</span>', s_eq])
    out = "<h3>Loop as implemented (z plane)</h3>" + _table(["pole z", "|z|", "1 &minus; |z|", "equivalent s = ln(z)/T [1/s]"], rows)
    zeros = closed_loop_zeros(a)
    if zeros.size:
        out += '<p class="muted">Zeros: ' + ", ".join(_fmt_z(complex(z)) for z in zeros) + "</p>"
    if c is not None:
        mapped = mapped_continuous_poles(a)
        assert mapped is not None
        crow = [[_fmt_z(complex(s)), _fmt_z(complex(zt))] for s, zt in zip(c.poles, mapped)]
        label = " (the transport delay by a Pad&eacute; approximation)" if c.poles_approximated else ""
        out += f"<h3>Continuous design (s plane){label}</h3>" + _table(["pole s [1/s]", "mapped z = e<sup>sT</sup>"], crow)
    return out


def _sweep(sweep: Any) -> str:
    rows = [[_e(format_time(b.period_s)), _e(b.kind), _e(b.becomes), _e(getattr(b, "detail", ""))] for b in sweep.boundaries]
    best = sweep.largest_period_meeting_requirements
    largest_stable = getattr(sweep, "largest_stable_period", None)
    lines = [
        f"Periods judged: {len(sweep.periods_s)}, from {_e(format_time(float(sweep.periods_s[0])))} to "
        f"{_e(format_time(float(sweep.periods_s[-1])))}.",
        "Largest period meeting every requirement: <strong>"
        + (_e(format_time(best)) if best is not None else "none in the range") + "</strong>"
        + (" (still met at the end of the range: the limit may lie beyond it)" if getattr(sweep, "limited_by_range", False) else "") + ".",
    ]
    if largest_stable is not None:
        lines.append(f"Largest stable period: {_e(format_time(largest_stable))}.")
    intervals = getattr(sweep, "stable_intervals", ())
    if intervals:
        lines.append("Stable for periods in " + ", ".join(
            f"[{_e(format_time(lo))}, {_e(format_time(hi))}]" for lo, hi in intervals) + ".")
    notes = "".join(f'<p class="muted">{_e(n)}</p>' for n in getattr(sweep, "notes", ()))
    table = (_table(["period", "kind", "for longer periods", "detail"], rows) if rows
             else "<p>No stability or requirement boundary in the range.</p>")
    return "".join(f"<p>{x}</p>" for x in lines) + "<h3>Boundaries (located to 1e-9 relative)</h3>" + table + notes


_FIGURE_CAPTIONS = {
    "z-plane": "Closed-loop poles (crosses) and zeros (circles) of the loop as implemented, with the "
               "continuous design's closed-loop poles mapped by z = e^(sT) (diamonds).",
    "step": "Unit step response: the continuous design (dashed), the sampled loop's plant output between "
            "samples (exact, line) and its measured samples (dots); below, the actuator command as held.",
    "pole-paths": "Closed-loop poles as the sample period grows, coloured by period; crosses at the "
                  "period judged.",
    "margins": "Spectral radius and margins of the sampled loop against the sample period; shaded where "
               "not stable; boundaries as vertical lines.",
    "chart": "Spectral radius over sample period and loop-gain multiplier; the thick line bounds the "
             "stable region; the star is the design point.",
}


def render_report(parts: ReportParts, *, command: str | None = None, progress: Progress | None = None) -> str:
    """HTML text of the report from computed parts (see :func:`collect`)."""
    from sampled.report import figures as F

    say = progress or (lambda _msg: None)
    a, spec = parts.assessment, parts.spec
    say("drawing the figures")
    figures = [
        ("z-plane", "Poles and zeros in the z plane", F.z_plane_figure(a)),
        ("step", "Step response", F.step_response_figure(parts.step)),
        ("pole-paths", "Poles as the period grows", F.pole_paths_figure(spec, parts.path_periods_s)),
        ("margins", "Margins against sample period", F.margins_vs_period_figure(parts.sweep)),
        ("chart", "Stability over period and loop gain", F.stability_chart_figure(parts.chart)),
    ]
    fig_html = []
    for i, (key, title, fig) in enumerate(figures):
        svg = inline_svg(fig, f"f{i + 1}", title)
        fig_html.append(f'<figure id="figure-{key}"><h3>{_e(title)}</h3>{svg}'
                        f"<figcaption>Figure {i + 1}. {_e(_FIGURE_CAPTIONS[key])}</figcaption></figure>")
    notes = "".join(f'<p class="muted">{_e(n)}</p>' for n in getattr(parts.step, "notes", ()))
    source = spec.source_text if spec.source_text is not None else "(the loop was not read from a case file)"
    digest = hashlib.sha256(source.encode("utf-8")).hexdigest()
    if command is None:
        argv = ["sampled", "report", spec.source_path or "CASE", "-o", "report.html"]
        if parts.period_given:
            argv += ["--period", f"{a.period_s!r}"]
        command = shlex.join(argv)
    check_argv = ["sampled", "check", spec.source_path or "CASE"] + (["--period", f"{a.period_s!r}"] if parts.period_given else [])
    body = {
        "summary": _summary(parts),
        "verdicts": _verdicts(a),
        "margins": _margins(a),
        "requirements": _requirements(a),
        "warnings": _warnings(a),
        "poles": _poles(a),
        "figures": "".join(fig_html) + notes,
        "sweep": _sweep(parts.sweep),
        "caution": f'<p class="caution">{_e(SAFETY_CAUTION)}</p>',
        "case-file": (f'<p class="muted">{_e(spec.source_path or "")} &middot; SHA-256 {digest}</p>'
                      f"<pre>{_e(source)}</pre>"),
        "reproduce": _table(["", ""], [
            ["<strong>Tool</strong>", _e(f"sampled {__version__} (Python {platform.python_version()}, numpy {np.__version__})")],
            ["<strong>This report</strong>", f"<code>{_e(command)}</code>"],
            ["<strong>The verdict alone</strong>", f"<code>{_e(shlex.join(check_argv))}</code>"],
            ["<strong>Case file SHA-256</strong>", f"<code>{digest}</code>"],
        ], "kv"),
    }
    nav = " ".join(f'<a href="#{sid}">{_e(title)}</a>' for sid, title in SECTIONS)
    sections = "".join(f'<section id="{sid}"><h2>{_e(title)}</h2>{body[sid]}</section>' for sid, title in SECTIONS)
    verdict = "PASS" if a.passed else "FAIL"
    say("writing the report")
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(spec.title)} &middot; sampled report</title>"
        f"<style>{CSS}</style></head><body>"
        f'<header><div class="kicker">sampled {__version__} &middot; loop report</div>'
        f"<h1>{_e(spec.title)} {_badge(verdict, a.passed)}</h1>"
        f'<p class="muted">{_e(spec.source_path or "")} &middot; judged at T = {_e(format_time(a.period_s))}</p>'
        f"<nav>{nav}</nav></header><main>{sections}</main>"
        f'<footer><p>{_e(SAFETY_CAUTION)}</p><p class="muted">sampled {__version__}</p></footer>'
        "</body></html>\n"
    )


CSS = """
:root { --ink: #1d2733; --muted: #5d6b7a; --rule: #dde3ea; --panel: #f7f9fb; --digital: #0b6e7f;
  --continuous: #c26a12; --good: #2f8a57; --bad: #b3262e; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: #ffffff;
  font: 15px/1.5 "DejaVu Sans", "Segoe UI", "Helvetica Neue", Arial, sans-serif; }
header { padding: 28px 40px 14px; border-bottom: 3px solid var(--digital); background: var(--panel); }
.kicker { text-transform: uppercase; letter-spacing: 0.08em; font-size: 12px; color: var(--digital); font-weight: bold; }
h1 { margin: 4px 0 6px; font-size: 26px; }
h2 { font-size: 19px; margin: 0 0 12px; padding-bottom: 4px; border-bottom: 1px solid var(--rule); }
h3 { font-size: 15px; margin: 18px 0 8px; }
nav { margin-top: 10px; font-size: 13px; }
nav a { color: var(--digital); text-decoration: none; margin-right: 14px; white-space: nowrap; }
main { padding: 8px 40px 24px; max-width: 1180px; }
section { margin: 26px 0; }
table { border-collapse: collapse; margin: 6px 0 10px; font-size: 14px; }
th, td { text-align: left; padding: 5px 12px 5px 0; border-bottom: 1px solid var(--rule); vertical-align: top; }
th { color: var(--muted); font-weight: normal; font-size: 13px; }
table.kv td:first-child { white-space: nowrap; width: 1%; padding-right: 24px; }
table.kv thead { display: none; }
code, pre { font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: 13px; }
pre { background: var(--panel); border: 1px solid var(--rule); padding: 12px 14px; overflow-x: auto; white-space: pre-wrap; }
.cards { display: flex; gap: 16px; flex-wrap: wrap; }
.card { flex: 1 1 320px; border: 1px solid var(--rule); border-top: 3px solid var(--continuous); padding: 4px 16px 8px; background: #fff; }
.card + .card { border-top-color: var(--digital); }
.badge { display: inline-block; padding: 1px 9px; border-radius: 3px; font-size: 13px; font-weight: bold; color: #fff; vertical-align: middle; }
.badge.good { background: var(--good); } .badge.bad { background: var(--bad); } .badge.neutral { background: var(--muted); }
.muted { color: var(--muted); font-size: 13px; }
.bad-text { color: var(--bad); }
ul.findings { padding-left: 0; list-style: none; } ul.findings li { margin: 0 0 10px; }
figure { margin: 18px 0 28px; }
svg.figure { width: 100%; max-width: 880px; height: auto; display: block; }
figcaption { color: var(--muted); font-size: 13px; max-width: 880px; }
.caution { border-left: 4px solid var(--bad); background: #fbf1f1; padding: 10px 14px; font-weight: bold; }
footer { padding: 14px 40px 30px; border-top: 1px solid var(--rule); color: var(--muted); font-size: 13px; }
@media print { nav { display: none; } header { background: none; } figure { break-inside: avoid; } }
"""
