"""Print the JSON Schema of the case-file format (for editors that complete and validate TOML).

Example:
  sampled schema > sampled-case.schema.json
"""

from __future__ import annotations

import argparse

from sampled.casefile import SCHEMA
from sampled.commands.common import print_json


def add_arguments(parser: argparse.ArgumentParser) -> None:
    del parser  # no options


def run(args: argparse.Namespace) -> int:
    del args
    print_json(SCHEMA)
    return 0
