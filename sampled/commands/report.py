"""Write one self-contained HTML report of a loop: verdicts, margins, poles, figures, the case file.

The report is a single file with inline figures and no links, scripts or fonts to fetch, so it can
be archived with a design review. It ends with the command that reproduces it.

Examples:
  sampled report cases/kiln_heater_plc.toml -o kiln.html
  sampled report cases/drone_motor_speed.toml -o drone.html --period 250us

Exit status: 0 the loop as implemented is stable and meets every requirement, 1 it does not
(the report is written either way), 2 bad input (no file is written).
"""

from __future__ import annotations

import argparse
import shlex
import sys
import time
from pathlib import Path

from sampled.casefile import load_case
from sampled.errors import InputError
from sampled.units import parse_period

REPORT_SUFFIXES = (".html", ".htm")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("case", help="case file (TOML)")
    parser.add_argument("-o", "--output", required=True, metavar="FILE", help="HTML file to write (.html)")
    parser.add_argument("--period", help="judge at this period instead of the case's ('250us', '4 kHz')")
    parser.add_argument("--quiet", action="store_true", help="no progress messages on stderr")


def run(args: argparse.Namespace) -> int:
    out = Path(args.output)
    if out.suffix.lower() not in REPORT_SUFFIXES:
        raise InputError(f"the report is HTML: give a file name ending in .html, got {args.output!r}", "--output")
    if out.exists() and out.is_dir():
        raise InputError(f"{args.output!r} is a directory", "--output")
    spec = load_case(args.case)
    period = parse_period(args.period, "--period") if args.period is not None else None
    argv = ["sampled", "report", args.case, "-o", args.output] + (["--period", args.period] if args.period else [])
    started = time.monotonic()

    def progress(message: str) -> None:
        if not args.quiet:
            print(f"sampled report: {message} ({time.monotonic() - started:.1f} s)", file=sys.stderr, flush=True)

    from sampled.commands.common import write_file_atomically
    from sampled.report.html import collect, render_report

    parts = collect(spec, period, progress=progress)
    text = render_report(parts, command=shlex.join(argv), progress=progress)
    write_file_atomically(out, text)
    progress(f"wrote {out}")
    return 0 if parts.assessment.passed else 1
