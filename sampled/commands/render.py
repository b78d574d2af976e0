"""Plain-text rendering of assessments, shared by check, sweep and report."""

from __future__ import annotations

import math
from collections.abc import Sequence

from sampled.loop import Assessment
from sampled.margins import Margins
from sampled.units import format_frequency, format_time


REQUIREMENT_LABELS = {
    "gain_margin_db": "gain margin",
    "phase_margin_deg": "phase margin",
    "delay_margin_s": "delay margin",
    "sensitivity_peak": "sensitivity peak",
}


def fmt_db(x: float | None) -> str:
    if x is None:
        return "-"
    if math.isinf(x):
        return "infinite"
    return f"{x:.2f} dB"


def fmt_deg(x: float | None) -> str:
    if x is None:
        return "-"
    if math.isinf(x):
        return "infinite"
    return f"{x:.1f} deg"


def fmt_s(x: float | None) -> str:
    if x is None:
        return "-"
    if math.isinf(x):
        return "infinite"
    return format_time(x)


def fmt_num(x: float | None, digits: int = 4) -> str:
    if x is None:
        return "-"
    if math.isinf(x):
        return "infinite"
    return f"{x:.{digits}g}"


def fmt_z(z: complex) -> str:
    if abs(z.imag) < 1e-14:
        return f"{z.real:+.6f}"
    return f"{z.real:+.6f} {'+' if z.imag >= 0 else '-'} {abs(z.imag):.6f}j"


def _at(freq: float | None) -> str:
    return f" at {format_frequency(freq)}" if freq is not None and freq > 0 else (" at 0 Hz" if freq == 0 else "")


def margin_cells(m: Margins | None, samples: bool = False) -> list[str]:
    if m is None:
        return ["-"] * 4
    dm = fmt_s(m.delay_margin_s)
    if samples and m.delay_margin_samples is not None and math.isfinite(m.delay_margin_samples):
        dm += f" ({m.delay_margin_samples:.3g} samples)"
    return [
        fmt_db(m.gain_margin_db) + (_at(m.phase_crossover_rad_s) if math.isfinite(m.gain_margin_db) else ""),
        fmt_deg(m.phase_margin_deg) + (_at(m.gain_crossover_rad_s) if math.isfinite(m.phase_margin_deg) else ""),
        dm,
        fmt_num(m.sensitivity_peak) + (_at(m.sensitivity_peak_rad_s) if math.isfinite(m.sensitivity_peak) else ""),
    ]


def table(rows: Sequence[Sequence[str]], header: Sequence[str] | None = None, indent: str = "  ") -> list[str]:
    all_rows = ([list(header)] if header else []) + [list(r) for r in rows]
    widths = [max(len(r[c]) for r in all_rows) for c in range(len(all_rows[0]))]
    out = []
    for i, r in enumerate(all_rows):
        out.append(indent + "  ".join(cell.ljust(widths[c]) for c, cell in enumerate(r)).rstrip())
        if header and i == 0:
            out.append(indent + "  ".join("-" * w for w in widths))
    return out


def cost_phrases(cost: dict[str, float | None]) -> list[str]:
    """What going digital cost, as short phrases (``"2.55 dB of gain margin"``), shared by text and HTML."""
    parts = []
    if cost.get("gain_margin_db") is not None:
        parts.append(f"{fmt_num(cost['gain_margin_db'], 3)} dB of gain margin")
    if cost.get("phase_margin_deg") is not None:
        parts.append(f"{fmt_num(cost['phase_margin_deg'], 3)} deg of phase margin")
    if cost.get("delay_margin_s") is not None:
        parts.append(f"{fmt_s(cost['delay_margin_s'])} of delay margin")
    return parts


def render_assessment(a: Assessment, max_poles: int = 8) -> str:
    spec = a.spec
    lines: list[str] = []
    src = f"  ({spec.source_path})" if spec.source_path else ""
    lines.append(f"{spec.title}{src}")
    cd = spec.compute_delay
    cd_text = (f"{cd.samples:g} sample(s) = {format_time(cd.in_seconds(a.period_s))}" if cd.samples is not None
               else format_time(cd.in_seconds(a.period_s)))
    lines.append(f"Sample period {format_time(a.period_s)} ({format_frequency(2 * math.pi / a.period_s)}), "
                 f"computation delay {cd_text}, controller {a.loop.controller.method or spec.controller.kind}")
    lines.append("")
    d, c = a.digital, a.continuous
    dm = margin_cells(d.margins, samples=True)
    cm = margin_cells(c.margins if c else None)
    if c is None:
        cm = ["no continuous design"] + ["-"] * 3
    d_how = {"exact": "exact root count (" + ", ".join((d.exact.agreeing if d.exact else ())[:3]) + ")",
             "eigenvalues": "eigenvalues of the closed-loop delta matrix",
             "not confirmed": "eigenvalues (NOT confirmed exactly)"}[d.confirmed]
    rows = [
        ["verdict", c.verdict if c else "-", d.verdict],
        ["worst pole", f"largest Re(s) {c.largest_real_part:.4g}/s" + (" (Pade)" if c.poles_approximated else "") if c else "-",
         f"spectral radius {d.spectral_radius:.6g} (1-|z| = {d.stability_distance:.3g})"],
        ["gain margin", cm[0], dm[0]],
        ["phase margin", cm[1], dm[1]],
        ["delay margin", cm[2], dm[2]],
        ["sensitivity peak", cm[3], dm[3]],
        ["how judged", c.method if c else "-", d_how],
    ]
    lines.extend(table(rows, ["", "continuous design", "as implemented"]))
    parts = cost_phrases(a.cost())
    if parts:
        lines.append("")
        lines.append("Going digital cost: " + ", ".join(parts) + " (continuous minus implemented; negative = gained).")
    if a.requirements:
        lines.append("")
        lines.append("Requirements (judged on the loop as implemented)")
        req_rows = []
        for r in a.requirements:
            sign = "<=" if r.name == "sensitivity_peak" else ">="
            value = "-" if r.value is None else (fmt_s(r.value) if r.unit == "s" else fmt_num(r.value) + (f" {r.unit}" if r.unit else ""))
            limit = fmt_s(r.limit) if r.unit == "s" else f"{r.limit:g}{(' ' + r.unit) if r.unit else ''}"
            req_rows.append([REQUIREMENT_LABELS.get(r.name, r.name), f"{sign} {limit}", value, "met" if r.met else "NOT MET"])
        lines.extend(table(req_rows))
    lines.append("")
    lines.append(f"Closed-loop poles of the implemented loop (closest to the unit circle first, {min(max_poles, d.poles.size)} of {d.poles.size})")
    pole_rows = [[fmt_z(complex(z)), f"|z| = {abs(z):.8f}", f"1-|z| = {dist:.3g}"]
                 for z, dist in list(zip(d.poles, d.unit_circle_distance))[:max_poles]]
    if pole_rows:
        lines.extend(table(pole_rows))
    if a.warnings:
        lines.append("")
        lines.append("Warnings")
        for w in a.warnings:
            lines.append(f"  [{w.kind}] {w.text()}")
    lines.append("")
    if a.passed:
        lines.append("RESULT: PASS - the loop as implemented is stable" + (" and meets every requirement." if a.requirements else "."))
    elif d.verdict != "stable":
        lines.append(f"RESULT: FAIL - the loop as implemented is {d.verdict}.")
    else:
        failed = [REQUIREMENT_LABELS.get(r.name, r.name) for r in a.requirements if not r.met]
        lines.append("RESULT: FAIL - stable, but not met: " + ", ".join(failed) + ".")
    return "\n".join(lines)
