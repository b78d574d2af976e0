"""The ``sampled`` command line: parse arguments, call one library function, render.

Exit status: 0 the loop (or polynomial) is stable and meets its requirements, 1 it does not,
2 bad input. Every :class:`sampled.errors.SampledError` becomes one line on stderr.
"""

from __future__ import annotations

import argparse
import ast
import importlib
import importlib.util
import os
import sys
from pathlib import Path

# The matrices here are small (tens of states): one BLAS thread is fastest, and a threaded BLAS on a
# busy two-core machine is slower by an order of magnitude. Set before numpy loads; user settings win.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
from collections.abc import Sequence

from sampled import __version__
from sampled.errors import SampledError

#: Command modules under ``sampled.commands``, in the order ``--help`` lists them.
COMMANDS: tuple[str, ...] = (
    "check",
    "sweep",
    "table",
    "discretize",
    "schema",
    "report",
    "quantize",
    "export",
)

EXIT_BAD_INPUT = 2


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors in one line with exit status 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: error: {message}\n")


def _docstring(name: str) -> str:
    """A command module's docstring, read without importing it (imports are slow; help is not)."""
    spec = importlib.util.find_spec(f"sampled.commands.{name.replace('-', '_')}")
    if spec is None or spec.origin is None:  # pragma: no cover - packaging error
        return name
    tree = ast.parse(Path(spec.origin).read_text(encoding="utf-8"))
    return ast.get_docstring(tree) or name


def build_parser(selected: str | None = None) -> argparse.ArgumentParser:
    """The argument parser; only the ``selected`` command's module is imported (all when None)."""
    parser = _Parser(
        prog="sampled",
        description="Stability, margins and sample-period limits of digital control loops.",
        epilog="Verdicts hold for the linear model given; verify on hardware with protective limits.",
    )
    parser.add_argument("--version", action="version", version=f"sampled {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMANDS:
        doc = _docstring(name)
        help_text = doc.strip().splitlines()[0]
        command = sub.add_parser(
            name,
            help=help_text,
            description=doc.strip(),
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )
        if selected is None or name == selected:
            module = importlib.import_module(f"sampled.commands.{name.replace('-', '_')}")
            module.add_arguments(command)
            command.set_defaults(_run=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the console script; returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    selected = next((a for a in argv if not a.startswith("-")), None)
    # Import only the chosen command's module ("" imports none: top-level help, usage errors).
    parser = build_parser(selected if selected in COMMANDS else "")
    args = parser.parse_args(argv)
    if getattr(args, "_run", None) is None:
        parser.print_help(sys.stderr)
        return EXIT_BAD_INPUT
    try:
        return int(args._run(args))
    except SampledError as exc:
        message = " ".join(str(exc).split())
        print(f"sampled {args.command}: error: {message}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except BrokenPipeError:
        # The reader (head, less) went away; exit quietly as command-line tools do.
        import os

        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 0
    except KeyboardInterrupt:
        print("sampled: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
