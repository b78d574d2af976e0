"""Judge one loop as it will run: verdicts, margins, what going digital cost, requirements.

Examples:
  sampled check cases/kiln_heater_plc.toml
  sampled check cases/drone_motor_speed.toml --period 250us --json
  sampled check cases/camera_gimbal_pitch.toml --plot gimbal.png

Exit status: 0 the loop as implemented is stable and meets every requirement, 1 it does not,
2 bad input.
"""

from __future__ import annotations

import argparse
import sys

from sampled.casefile import load_case
from sampled.commands.common import SAFETY_CAUTION, print_json
from sampled.commands.render import render_assessment
from sampled.loop import assess
from sampled.units import parse_period


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("case", help="case file (TOML)")
    parser.add_argument("--period", help="judge at this period instead of the case's ('250us', '4 kHz')")
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.add_argument("--plot", metavar="FILE", help="also save the z-plane and step-response figure (.png, .svg or .pdf)")


def run(args: argparse.Namespace) -> int:
    if args.plot is not None:
        from sampled.report.figures import plot_format

        plot_format(args.plot, "--plot")  # a bad suffix fails before any work
    spec = load_case(args.case)
    period = parse_period(args.period, "--period") if args.period is not None else None
    if period is not None:
        spec = spec.with_period(period)
    result = assess(spec)
    if args.plot is not None:
        from sampled.report.figures import check_figure, save_figure
        from sampled.simulate import step_response

        save_figure(check_figure(result, step_response(spec)), args.plot, "--plot")
    if args.json:
        out = result.to_dict()
        out["caution"] = SAFETY_CAUTION
        print_json(out)
    else:
        print(render_assessment(result))
        print(SAFETY_CAUTION, file=sys.stdout)
    return 0 if result.passed else 1
