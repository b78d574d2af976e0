"""Round the controller to each word length in each realisation and judge the loop that results.

For every structure (direct1, direct2t, sections, delta) and word length, the coefficients are
rounded (Q(w-1) words with one shift per coefficient bank, signals Q(w-1)) and the loop is judged
with exactly the controller the rounded numbers implement. The table gives the loop verdict, the
loop's and the controller's largest pole modulus, the margins and the requirements; below each
table, the shortest word that keeps the loop stable and the shortest that meets the requirements
(from there up to the longest word tried, every word passes), with the stored coefficients and
controller poles at that word. --json adds every row's coefficients, poles and zeros.

For the best structure at its shortest word, the signal levels of every controller register in
the closed loop: the peak for a reference step and the worst case for any reference bounded by
the reference amplitude (the l1 norm of the impulse response from the reference), against the
largest value the register's fixed-point format holds; the headroom in bits and the overflow risk.
The reference amplitude is the full scale of the signal format (the largest reference the input
word carries). --json gives them as "levels" on the best structure.

Examples:
  sampled quantize cases/print_bed_heater.toml
  sampled quantize cases/notch_filter_fragile.toml --bits 12-24 --structure direct1,sections
  sampled quantize cases/kiln_heater_plc.toml --bits 16,24,32 --rounding floor --json

Exit status: 0 at least one structure tried meets the case's requirements (stable, when the case
states none) from some word length up to the longest word tried, 1 none does, 2 bad input.
"""

from __future__ import annotations

import argparse
import math
import sys

from sampled.casefile import LoopSpec, load_case
from sampled.commands.common import SAFETY_CAUTION, print_json
from sampled.commands.render import fmt_db, fmt_deg, fmt_z, table
from sampled.fixedpoint import ROUNDINGS
from sampled.levels import LoopLevels, closed_loop_levels
from sampled.quantize import (
    QuantizedRow,
    QuantizeResult,
    StructureResult,
    quantize_loop,
    realisations_from_text,
    word_bits_from_text,
)
from sampled.realisations import REALISATIONS
from sampled.units import format_time

DEFAULT_BITS = "8-32"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("case", help="case file (TOML)")
    parser.add_argument("--bits", default=DEFAULT_BITS,
                        help=f"word lengths to try, sign included: a range '8-32', a list '12,16,24' or both (default {DEFAULT_BITS})")
    parser.add_argument("--structure", default=",".join(REALISATIONS),
                        help=f"realisations to try, comma-separated from {', '.join(REALISATIONS)} (default all)")
    parser.add_argument("--rounding", choices=ROUNDINGS, default="nearest",
                        help="coefficient and data-path rounding: nearest (ties to even) or floor (arithmetic shift)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


class _Progress:
    """Rows done on stderr, only on a terminal."""

    def __init__(self) -> None:
        self.enabled = sys.stderr.isatty()
        self.shown = False

    def __call__(self, done: int, total: int) -> None:
        if self.enabled:
            sys.stderr.write(f"\rjudging {done}/{total} implementations")
            sys.stderr.flush()
            self.shown = True

    def close(self) -> None:
        if self.shown:
            sys.stderr.write("\r" + " " * 50 + "\r")
            sys.stderr.flush()


def run(args: argparse.Namespace) -> int:
    words = word_bits_from_text(args.bits, "--bits")
    structures = realisations_from_text(args.structure, "--structure")
    spec = load_case(args.case)
    progress = _Progress()
    try:
        result = quantize_loop(spec, words, structures, rounding=args.rounding, progress=progress)
    finally:
        progress.close()
    levels = best_levels(spec, result)
    if args.json:
        out = result.to_dict()
        if levels is not None:
            best = result.best()
            for s in out["structures"]:
                if best is not None and s["name"] == best.name:
                    s["levels"] = levels.to_dict()
                    s["levels_bits"] = best.min_bits_requirements
        out["caution"] = SAFETY_CAUTION
        print_json(out)
    else:
        print(render_quantize(result, levels))
        print(SAFETY_CAUTION)
    return 0 if result.implementable else 1


def best_levels(spec: LoopSpec, result: QuantizeResult) -> LoopLevels | None:
    """Closed-loop register levels of the best structure at its shortest passing word."""
    best = result.best()
    if best is None:
        return None
    row = next((r for r in best.rows if r.bits == best.min_bits_requirements), None)
    if row is None or row.implementation is None:
        return None
    return closed_loop_levels(spec, row.implementation)


# ---- text ----------------------------------------------------------------------------------------

def _level(x: float) -> str:
    return f"{x:.4g}"


def _bits(x: float) -> str:
    return f"{x:+.2f}" if math.isfinite(x) else ("+inf" if x > 0 else "-inf")


def render_levels(levels: LoopLevels, indent: str = "  ") -> list[str]:
    """Short table of closed-loop register levels (step peak, worst case, limit, headroom, risk)."""
    amp = f"reference amplitude {levels.reference_amplitude:.6g}"
    if levels.disturbance_amplitude:
        amp += f", input disturbance {levels.disturbance_amplitude:.6g}"
    if not levels.stable:
        return [f"{indent}Signal levels in the closed loop: unbounded (the loop is not stable, "
                f"largest pole modulus {levels.loop_spectral_radius:.6f})."]
    lines = [f"{indent}Signal levels of the controller registers in the closed loop ({amp}):"]
    cells = [[r.name, r.label, _level(r.step_value), _level(r.worst_case), _level(r.limit), _bits(r.headroom_bits), r.risk]
             for r in levels.registers]
    lines += table(cells, ["register", "holds", "step peak", "worst case", "limit", "headroom bits", "risk"],
                   indent=indent + "  ")
    bound = "" if levels.converged else f" (impulse responses cut at {levels.samples} samples: worst cases are lower bounds)"
    lines.append(f"{indent}  Overflow risk: {levels.risk}; smallest headroom {_bits(levels.headroom_bits)} bits{bound}.")
    return lines


def _radius(x: float | None) -> str:
    return "-" if x is None else f"{x:.6f}"


def _distance(x: float | None) -> str:
    if x is None:
        return "-"
    return f"{x:.3g}"


def _requirements_cell(row: QuantizedRow, has_requirements: bool) -> str:
    if row.implementation is None:
        return "-"
    if not has_requirements:
        return "met (stable)" if row.stable else "not met"
    failed = [r.name for r in row.requirements if not r.met]
    if row.requirements_met:
        return "met"
    return "not met" + (f" ({', '.join(failed)})" if failed and row.stable else "")


def _row_cells(row: QuantizedRow, has_requirements: bool) -> list[str]:
    # Margins of a loop that is not stable are not stability margins: not shown (JSON keeps them).
    m = row.margins if row.stable else None
    verdict = row.verdict if row.implementation is not None else f"unrepresentable: {row.note}"
    return [
        str(row.bits),
        verdict,
        _radius(row.spectral_radius),
        _distance(row.stability_distance),
        _radius(row.controller_spectral_radius),
        "-" if m is None else fmt_db(abs(m.gain_margin_db)),
        "-" if m is None else fmt_deg(m.phase_margin_deg),
        _requirements_cell(row, has_requirements),
    ]


def _shortest_text(s: StructureResult, has_requirements: bool, longest: int) -> str:
    what = "meets the requirements" if has_requirements else "is stable"
    if s.min_bits_stable is None:
        return f"no word length tried keeps the loop stable (the {longest}-bit word does not)."
    stable = f"stable from {s.min_bits_stable} bits"
    if s.min_bits_requirements is None:
        return f"{stable}; the loop never {what} up to {longest} bits."
    if not has_requirements:
        return f"{stable} (the case states no requirements)."
    return f"{stable}; meets the requirements from {s.min_bits_requirements} bits."


def _coefficient_lines(row: QuantizedRow) -> list[str]:
    impl = row.implementation
    if impl is None:
        return []
    lines = [f"  Coefficients at {row.bits} bits (stored word x 2^-fraction bits):"]
    cells = []
    for c in impl.coefficients:
        cells.append([c.name, str(c.integer), f"2^-{c.fraction_bits}", f"{float(c.value):.10g}",
                      f"{float(c.value - c.ideal):+.3g}"])
    lines += table(cells, ["name", "word", "scale", "value", "rounding error"], indent="    ")
    if impl.delta_step is not None:
        lines.append(f"    delta step {impl.delta_step} (delta = (q - 1) / step)")
    poles = sorted(impl.poles, key=lambda z: -abs(z))
    zeros = sorted(impl.zeros, key=lambda z: -abs(z))
    lines.append("    controller poles: " + (", ".join(f"{fmt_z(z)} (|z| {abs(z):.9f})" for z in poles) or "none"))
    lines.append("    controller zeros: " + (", ".join(fmt_z(z) for z in zeros) or "none"))
    return lines


def render_quantize(result: QuantizeResult, levels: LoopLevels | None = None) -> str:
    """Plain-text report of :func:`sampled.quantize.quantize_loop` (``levels``: of the best structure)."""
    lines = [f"{result.title}" + (f"  ({result.case})" if result.case else "")]
    ref = result.reference
    period = format_time(result.period_s)
    ref_req = ("meets its requirements" if ref.requirements_met else "does not meet its requirements") if result.has_requirements else "states no requirements"
    lines.append(
        f"Sample period {period}. Unrounded controller (double precision): loop {ref.verdict}, "
        f"spectral radius {ref.spectral_radius:.6f}; the case {ref_req}."
    )
    lines.append(
        f"Coefficients Q(w-1) with one shift per coefficient bank, signals Q(w-1), rounding "
        f"{'to nearest (ties to even)' if result.rounding == 'nearest' else 'toward minus infinity'}."
    )
    longest = max(result.word_bits)
    header = ["bits", "loop verdict", "loop |z| max", "1-|z|", "ctrl |z| max", "gain margin", "phase margin", "requirements"]
    for s in result.structures:
        lines += ["", f"{s.title} ({s.name})"]
        lines += table([_row_cells(r, result.has_requirements) for r in s.rows], header)
        lines.append(f"  Shortest word: {_shortest_text(s, result.has_requirements, longest)}")
        shown_bits = s.min_bits_requirements or s.min_bits_stable or longest
        shown = next(r for r in s.rows if r.bits == shown_bits)
        lines += _coefficient_lines(shown)
    lines += ["", _answer(result)]
    best = result.best()
    if levels is not None and best is not None:
        lines += [f"At {best.min_bits_requirements} bits in {best.name}:"]
        lines += render_levels(levels)
    return "\n".join(lines)


def _answer(result: QuantizeResult) -> str:
    what = "meet the requirements" if result.has_requirements else "keep the loop stable"
    best = result.best()
    tried = f"{min(result.word_bits)} to {max(result.word_bits)} bits" if len(result.word_bits) > 1 else f"{result.word_bits[0]} bits"
    if best is None:
        return f"Answer: no structure tried can {what} with {tried}."
    others = [f"{s.name} {s.min_bits_requirements if s.min_bits_requirements is not None else 'none'}"
              for s in result.structures if s is not best]
    text = (f"Answer: the shortest word that will {what} is {best.min_bits_requirements} bits, "
            f"in {best.title} ({best.name})")
    if others:
        text += "; others: " + ", ".join(others)
    return text + "."

