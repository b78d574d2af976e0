"""Write firmware code (C99 header and source) for the case's controller, judged as implemented.

The controller is rounded for the chosen structure and number format, the loop is judged with
exactly the rounded coefficients (as `sampled quantize` does), and the generated code carries
those coefficients and a comment block with the period, realisation, word length and verdict.
Both files are built in memory first and written atomically. The signal levels of every
controller register in the closed loop (peak for a reference step, worst case for any reference
bounded by the full scale of the signal format, against the register's limit; headroom in bits
and overflow risk) are printed, given in --json as "levels" and recorded in the comment block.

If the implemented loop is not stable or misses a requirement of the case, nothing is written
and the exit status is 1; --force writes the files anyway (the verdict in their comment block
says what was found) and still exits 1.

Examples:
  sampled export cases/print_bed_heater.toml --lang c --format Q15 -o firmware/
  sampled export cases/drone_motor_speed.toml --lang c --format float --structure direct2t -o out/
  sampled export cases/notch_filter_fragile.toml --format Q15 --structure sections --name notch -o out/

Exit status: 0 the implemented loop is stable and meets the requirements (files written), 1 it
does not (no files unless --force), 2 bad input.
"""

from __future__ import annotations

import argparse
import re
import sys
from pathlib import Path

from sampled.casefile import load_case
from sampled.commands.common import SAFETY_CAUTION, print_json, write_file_atomically
from sampled.commands.quantize import render_levels
from sampled.errors import InputError
from sampled.export import LANGUAGES, number_format_from_text
from sampled.export.c import export_c
from sampled.fixedpoint import ROUNDINGS
from sampled.levels import LoopLevels, closed_loop_levels
from sampled.quantize import QuantizedRow, case_controller, judge_implemented
from sampled.realisations import REALISATION_TITLES, REALISATIONS, implement
from sampled.units import format_time


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("case", help="case file (TOML)")
    parser.add_argument("--lang", choices=LANGUAGES, default="c", help="language of the generated code (default c)")
    parser.add_argument("--format", default="float",
                        help="number format: 'float' (IEEE double) or a Q format such as Q15, Q31, Q3.12 (default float)")
    parser.add_argument("--structure", choices=REALISATIONS, default="sections",
                        help="realisation of the controller (default sections)")
    parser.add_argument("--rounding", choices=ROUNDINGS, default="nearest",
                        help="coefficient and data-path rounding in fixed point (default nearest)")
    parser.add_argument("--name", help="C identifier prefix and file stem (default: from the case file name)")
    parser.add_argument("--output-limits", metavar="LOW,HIGH",
                        help="clamp the returned output to [LOW, HIGH] (signal units; the recursion keeps the unclamped value)")
    parser.add_argument("-o", "--output-dir", required=True, help="directory for the header and source")
    parser.add_argument("--force", action="store_true",
                        help="write the files even when the implemented loop is not stable or misses a requirement")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def _default_name(case_path: str) -> str:
    stem = re.sub(r"[^A-Za-z0-9_]", "_", Path(case_path).stem)
    if not stem or stem[0].isdigit():
        stem = "ctl_" + stem
    return stem[:40]


def _limits(text: str | None) -> tuple[float, float] | None:
    if text is None:
        return None
    parts = text.split(",")
    try:
        if len(parts) != 2:
            raise ValueError
        lo, hi = float(parts[0]), float(parts[1])
    except ValueError:
        raise InputError(f"expected two numbers LOW,HIGH such as '-1,1', got {text!r}", "--output-limits") from None
    if not lo < hi:
        raise InputError(f"LOW must be below HIGH, got {text!r}", "--output-limits")
    return lo, hi


def verdict_text(row: QuantizedRow, has_requirements: bool) -> str:
    """One paragraph for the generated comment block and the terminal."""
    lines = [f"loop {row.verdict}, spectral radius {row.spectral_radius:.9g}"
             f" (1-|z| = {row.stability_distance:.3g}); controller spectral radius {row.controller_spectral_radius:.9g}"]
    m = row.margins
    if m is not None:
        lines.append(f"gain margin {abs(m.gain_margin_db):.4g} dB, phase margin {m.phase_margin_deg:.4g} deg, "
                     f"delay margin {format_time(m.delay_margin_s)}, sensitivity peak {m.sensitivity_peak:.4g}")
    if has_requirements:
        parts = [f"{r.name} {'met' if r.met else 'NOT met'}" for r in row.requirements]
        lines.append(("requirements met: " if row.requirements_met else "requirements NOT met: ") + ", ".join(parts))
    else:
        lines.append("no requirements stated in the case")
    return "\n".join(lines)


def levels_comment(levels: LoopLevels) -> str:
    """Closed-loop register levels as plain lines for the generated comment block."""
    if not levels.stable:
        return "signal levels: unbounded (the loop is not stable)"
    lines = [f"signal levels in the closed loop, reference amplitude {levels.reference_amplitude:.6g}:"]
    for r in levels.registers:
        lines.append(f"  {r.name}: step peak {r.step_value:.4g}, worst case {r.worst_case:.4g}, "
                     f"limit {r.limit:.4g}, headroom {r.headroom_bits:+.2f} bits, overflow {r.risk}")
    lines.append(f"overflow risk {levels.risk}")
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    fmt = number_format_from_text(args.format, "--format")
    limits = _limits(args.output_limits)
    name = args.name if args.name is not None else _default_name(args.case)
    out_dir = Path(args.output_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise InputError(f"{str(out_dir)!r} exists and is not a directory", "--output-dir")
    spec = load_case(args.case)
    b, a = case_controller(spec)
    impl = implement(b, a, spec.period_s, args.structure, fmt, rounding=args.rounding)
    row = judge_implemented(spec, impl)
    has_req = spec.requirements.any()
    verdict = verdict_text(row, has_req)
    levels = closed_loop_levels(spec, impl)
    files = export_c(impl, name=name, verdict=verdict + "\n" + levels_comment(levels),
                     output_limits=limits)  # both texts before any write
    passed = row.requirements_met
    write = passed or args.force
    written: list[str] = []
    if write:
        for filename, text in files.items():
            path = out_dir / filename
            write_file_atomically(path, text)
            written.append(str(path))
    number = "IEEE double" if fmt is None else f"{fmt.name} ({fmt.word_bits}-bit words)"
    if args.json:
        print_json({
            "case": spec.source_path,
            "name": name,
            "language": args.lang,
            "structure": args.structure,
            "format": "float" if fmt is None else fmt.name,
            "word_bits": None if fmt is None else fmt.word_bits,
            "period_s": spec.period_s,
            "passed": passed,
            "written": bool(written),
            "files": written,
            "implementation": impl.to_dict(),
            "row": row.to_dict(),
            "verdict_text": verdict,
            "levels": levels.to_dict(),
            "caution": SAFETY_CAUTION,
        })
    else:
        print(f"{spec.title}: {REALISATION_TITLES[impl.realisation]} ({impl.realisation}), {number}, "
              f"period {format_time(spec.period_s)}")
        print("Implemented loop: " + verdict.replace("\n", "; "))
        print("\n".join(render_levels(levels, indent="")))
        if written:
            for path in written:
                print(f"wrote {path}")
        else:
            print("no files written: the implemented loop is not stable or misses a requirement "
                  "(try another --structure or a longer --format, or --force)")
        print(SAFETY_CAUTION)
    if not passed and not args.json:
        print(f"sampled export: the implemented loop {'is ' + row.verdict if not row.stable else 'misses a requirement'}"
              + ("; files written because of --force" if written else "; no files written"), file=sys.stderr)
    return 0 if passed else 1
