"""Sweep the sample period: verdicts, margins, boundaries and the largest period meeting every requirement.

Examples:
  sampled sweep cases/drone_motor_speed.toml
  sampled sweep cases/camera_gimbal_pitch.toml --from 10us --to 10ms --points 400 --json
  sampled sweep cases/drone_motor_speed.toml --csv sweep.csv --plot sweep.png --gain-chart

The range comes from the options, else the case's [sweep] table, else T/10 .. 20 T around the
case's period (log-spaced). Margins are computed on an evenly spread subset of the periods (the
output says so); every stability and requirement boundary is located to 1e-9 relative in period.
With --gain-chart the stability chart over period x loop-gain multiplier ([sweep] gain_from and
gain_to, default 0.25 .. 4) is added to the output; with --plot it is drawn to FILE-gain-chart.EXT.

Exit status: 0 the loop at the case's own period is stable and meets every requirement, 1 it does
not, 2 bad input.
"""

from __future__ import annotations

import argparse
import io
import math
import sys
import time
from pathlib import Path
from typing import Any

import numpy as np

from sampled.casefile import load_case
from sampled.commands.common import SAFETY_CAUTION, print_json, write_file_atomically
from sampled.commands.render import REQUIREMENT_LABELS, table
from sampled.errors import InputError
from sampled.loop import assess
from sampled.sweep import SweepResult, StabilityChart, default_gains, default_periods, stability_chart, sweep_periods
from sampled.units import format_time, parse_period

#: Rows of the terminal table for long sweeps (rows next to each boundary come on top).
TABLE_ROWS = 25
#: Periods of the stability chart at most (taken evenly from the sweep).
CHART_PERIODS = 200
#: Seconds before the progress bar appears.
PROGRESS_AFTER_S = 1.0


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("case", help="case file (TOML)")
    parser.add_argument("--from", dest="from_", metavar="PERIOD", help="shortest period ('10us', '50 kHz')")
    parser.add_argument("--to", metavar="PERIOD", help="longest period ('10ms', '100 Hz')")
    parser.add_argument("--points", metavar="N", help="number of log-spaced periods (2 to 1000000)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.add_argument("--csv", metavar="FILE", help="write one row per period to FILE")
    parser.add_argument("--plot", metavar="FILE", help="draw margins against period to FILE (.png, .svg or .pdf)")
    parser.add_argument("--gain-chart", action="store_true", help="add the period x loop-gain stability chart")


def _points(text: str | None) -> int | None:
    if text is None:
        return None
    try:
        value = int(text)
    except ValueError:
        raise InputError(f"expected a whole number, got {text!r}", "--points") from None
    if not 2 <= value <= 1_000_000:
        raise InputError(f"expected a whole number from 2 to 1000000, got {value}", "--points")
    return value


def _periods(args: argparse.Namespace, spec: Any) -> np.ndarray:
    base = default_periods(spec) if (args.from_ is None or args.to is None or args.points is None) else None
    lo = parse_period(args.from_, "--from") if args.from_ is not None else float(base[0])  # type: ignore[index]
    hi = parse_period(args.to, "--to") if args.to is not None else float(base[-1])  # type: ignore[index]
    n = _points(args.points)
    if n is None:
        n = int(base.size)  # type: ignore[union-attr]
    if not lo < hi:
        raise InputError(f"--from must be shorter than --to (got {format_time(lo)} and {format_time(hi)})",
                         "--from" if args.from_ is not None else "--to")
    return np.geomspace(lo, hi, n)


class _ProgressBar:
    """A one-line bar on stderr, shown only on a terminal and only after the sweep has run a while."""

    def __init__(self) -> None:
        self.start = time.monotonic()
        self.enabled = sys.stderr.isatty()
        self.shown = False

    def __call__(self, done: int, total: int) -> None:
        if not self.enabled or time.monotonic() - self.start < PROGRESS_AFTER_S:
            return
        width = 30
        filled = int(width * done / max(total, 1))
        sys.stderr.write(f"\rsweeping [{'#' * filled}{'.' * (width - filled)}] {done}/{total}")
        sys.stderr.flush()
        self.shown = True

    def close(self) -> None:
        if self.shown:
            sys.stderr.write("\r" + " " * 60 + "\r")
            sys.stderr.flush()


def run(args: argparse.Namespace) -> int:
    spec = load_case(args.case)
    periods = _periods(args, spec)
    plot_paths: list[Path] = []
    if args.plot is not None:
        from sampled.report.figures import plot_format

        plot_format(args.plot, "--plot")  # refuse a bad suffix before any work
        plot_paths.append(Path(args.plot))
        if args.gain_chart:
            p = Path(args.plot)
            plot_paths.append(p.with_name(f"{p.stem}-gain-chart{p.suffix}"))
    bar = _ProgressBar()
    try:
        result = sweep_periods(spec, periods, progress=bar)
    finally:
        bar.close()
    chart = None
    if args.gain_chart:
        step = max(1, math.ceil(periods.size / CHART_PERIODS))
        chart = stability_chart(spec, result.periods_s[::step], default_gains(spec))
    at_case = assess(spec, with_continuous=False)
    passed = at_case.passed

    if args.csv is not None:
        write_file_atomically(args.csv, sweep_csv(result))
    if plot_paths:
        from sampled.report.figures import margins_vs_period_figure, save_figure, stability_chart_figure

        save_figure(margins_vs_period_figure(result), plot_paths[0], "--plot")
        if chart is not None:
            save_figure(stability_chart_figure(chart), plot_paths[1], "--plot")

    if args.json:
        out = result.to_dict()
        out["case"] = spec.source_path
        out["case_period_passes"] = passed
        out["gain_chart"] = None if chart is None else chart.to_dict()
        out["caution"] = SAFETY_CAUTION
        print_json(out)
    else:
        print(render_sweep(result, passed, chart))
        print(SAFETY_CAUTION)
    return 0 if passed else 1


# ---- text ----------------------------------------------------------------------------------------

def table_rows(result: SweepResult, rows: int = TABLE_ROWS) -> list[int]:
    """Indices shown in the terminal table: evenly spread (preferring periods with margins), the
    periods on both sides of every boundary, and the one nearest the case's period."""
    k = result.periods_s.size
    if k <= rows:
        return list(range(k))
    chosen: set[int] = set()
    for b in result.boundaries:
        j = int(np.searchsorted(result.periods_s, b.period_s))
        chosen.update(i for i in (j - 1, j) if 0 <= i < k)
    chosen.add(int(np.argmin(np.abs(np.log(result.periods_s / result.case_period_s)))))
    pool = np.nonzero(result.margins_computed)[0]
    if pool.size < rows:
        pool = np.arange(k)
    room = max(rows - len(chosen), 2)
    picks = pool[np.unique(np.round(np.linspace(0, pool.size - 1, min(room, pool.size))).astype(int))]
    chosen.update(int(i) for i in picks)
    chosen.update((0, k - 1))
    return sorted(chosen)


def _cell(x: float, fmt: str) -> str:
    if math.isnan(x):
        return "."
    if math.isinf(x):
        return "inf"
    return format(x, fmt)


def render_sweep(result: SweepResult, passed: bool, chart: StabilityChart | None = None) -> str:
    lines = [f"{result.title}: sample period sweep, {result.periods_s.size} periods from "
             f"{format_time(float(result.periods_s[0]))} to {format_time(float(result.periods_s[-1]))}", ""]
    c = result.continuous
    if c is not None:
        m = c.margins
        extra = "" if m is None else (f"; gain margin {_cell(abs(m.gain_margin_db), '.2f')} dB, phase margin "
                                      f"{_cell(m.phase_margin_deg, '.1f')} deg")
        lines.append(f"Continuous design: {c.verdict}{extra}")
    names = [n for n in result.requirements_met if n != "all"]
    header = ["period", "verdict", "spectral radius", "gain margin", "phase margin", "delay margin", "Ms"]
    if names:
        header.append("requirements")
    body = []
    idx = table_rows(result)
    for i in idx:
        t = float(result.periods_s[i])
        mark = " *" if math.isclose(t, result.case_period_s, rel_tol=0.02) else ""
        row = [format_time(t) + mark, result.verdicts[i], f"{result.spectral_radius[i]:.6f}",
               _cell(abs(result.gain_margin_db[i]), ".2f"), _cell(result.phase_margin_deg[i], ".1f"),
               "." if math.isnan(result.delay_margin_s[i]) else _cell_time(result.delay_margin_s[i]),
               _cell(result.sensitivity_peak[i], ".3f")]
        if names:
            row.append("all met" if result.requirements_met["all"][i] else
                       ("not stable" if result.verdicts[i] != "stable" else
                        "fails " + ", ".join(REQUIREMENT_LABELS.get(n, n) for n in names if not result.requirements_met[n][i])))
        body.append(row)
    lines += table(body, header)
    if len(idx) < result.periods_s.size:
        lines.append(f"  ({len(idx)} of {result.periods_s.size} periods shown; '.' = margins not computed at that "
                     "period; * = the case's period)")
    lines.append("")
    if result.boundaries:
        lines.append("Boundaries (the state just above each period):")
        for b in result.boundaries:
            kind = "stability" if b.kind == "stability" else REQUIREMENT_LABELS.get(b.kind, b.kind)
            lines.append(f"  {format_time(b.period_s):>10}  ({b.period_s:.10g} s)  {kind}: {b.becomes}")
    else:
        lines.append("No boundary in this range.")
    lines.append("")
    lines.append("Stable for periods in: " + (_ivs(result.stable_intervals) or "none of this range"))
    if names:
        lines.append("Every requirement met in: " + (_ivs(result.meeting_intervals) or "none of this range"))
    lines.append(_answer(result))
    lines.append(f"At the case's period {format_time(result.case_period_s)}: "
                 + ("stable and every requirement met." if passed else "NOT stable or a requirement is not met."))
    for note in result.notes:
        lines.append(f"Note: {note}")
    if chart is not None:
        lines.append("")
        lines += render_chart(chart)
    return "\n".join(lines)


def _cell_time(x: float) -> str:
    return "inf" if math.isinf(x) else format_time(x)


def _ivs(ivs: tuple[tuple[float, float], ...]) -> str:
    return ", ".join(f"{format_time(lo)} to {format_time(hi)}" for lo, hi in ivs)


def _answer(result: SweepResult) -> str:
    what = "every requirement" if any(n != "all" for n in result.requirements_met) else "stability"
    if "all" not in result.requirements_met:
        return "Largest period meeting every requirement: not evaluated (no margins)."
    best = result.largest_period_meeting_requirements
    if best is None:
        return f"No period in this range meets {what}."
    if result.limited_by_range:
        return (f"Largest period meeting {what}: at least {format_time(best)} ({best:.10g} s), the end of the "
                "range swept; sweep further to find the limit.")
    return f"Largest period meeting {what}: {format_time(best)} ({best:.10g} s)."


def render_chart(chart: StabilityChart, columns: int = 60) -> list[str]:
    """The stability chart as characters: '#' stable, '.' not, 'o' the design point; gain rows top = high."""
    k = chart.periods_s.size
    cols = np.unique(np.round(np.linspace(0, k - 1, min(columns, k))).astype(int))
    dp, dg = chart.design_point
    col_dp = int(np.argmin(np.abs(np.log(chart.periods_s[cols] / dp))))
    row_dp = int(np.argmin(np.abs(np.log(chart.gains / dg))))
    lines = ["Stability chart ('#' stable, '.' not, 'o' the case's period at gain 1):"]
    for r in range(chart.gains.size - 1, -1, -1):
        cells = "".join("o" if (r == row_dp and j == col_dp) else ("#" if chart.stable[r, c] else ".")
                        for j, c in enumerate(cols))
        lines.append(f"  gain x{chart.gains[r]:<8.3g} {cells}")
    lines.append(f"  {'':10} {format_time(float(chart.periods_s[0]))} ... {format_time(float(chart.periods_s[-1]))} (log scale)")
    return lines


# ---- CSV -----------------------------------------------------------------------------------------

def sweep_csv(result: SweepResult) -> str:
    """One row per period; infinite values as ``inf``, values not computed left empty."""
    import csv

    names = [n for n in result.requirements_met if n != "all"]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["period_s", "verdict", "spectral_radius", "stability_distance", "gain_margin_db", "phase_margin_deg",
                "delay_margin_s", "sensitivity_peak", "margins_computed"] + [f"met_{n}" for n in names]
               + (["met_all"] if "all" in result.requirements_met else []))

    def num(x: float) -> str:
        if math.isnan(x):
            return ""
        if math.isinf(x):
            return "inf" if x > 0 else "-inf"
        return repr(float(x))

    for i, t in enumerate(result.periods_s):
        row = [repr(float(t)), result.verdicts[i], num(result.spectral_radius[i]), num(result.stability_distance[i]),
               num(result.gain_margin_db[i]), num(result.phase_margin_deg[i]), num(result.delay_margin_s[i]),
               num(result.sensitivity_peak[i]), str(bool(result.margins_computed[i])).lower()]
        row += [str(bool(result.requirements_met[n][i])).lower() for n in names]
        if "all" in result.requirements_met:
            row.append(str(bool(result.requirements_met["all"][i])).lower())
        w.writerow(row)
    return buf.getvalue()
