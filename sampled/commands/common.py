"""Helpers shared by the command modules: JSON rendering, output files, the safety caution."""

from __future__ import annotations

import json
import math
import os
import sys
import tempfile
from fractions import Fraction
from pathlib import Path
from typing import Any

import numpy as np

from sampled import SAFETY_CAUTION

__all__ = ["SAFETY_CAUTION", "print_json", "to_jsonable", "write_file_atomically"]


def to_jsonable(value: Any) -> Any:
    """Convert numbers, arrays, Fractions and dataclass-like objects to JSON values.

    Infinite floats become the strings ``"inf"`` / ``"-inf"``; NaN becomes ``None``; complex numbers
    become ``[re, im]``; Fractions become their exact ``"p/q"`` string.
    """
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, Fraction):
        return str(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        x = float(value)
        if math.isnan(x):
            return None
        if math.isinf(x):
            return "inf" if x > 0 else "-inf"
        return x
    if isinstance(value, (complex, np.complexfloating)):
        return [to_jsonable(value.real), to_jsonable(value.imag)]
    if isinstance(value, np.ndarray):
        return [to_jsonable(v) for v in value.tolist()]
    if isinstance(value, dict):
        return {str(k): to_jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [to_jsonable(v) for v in value]
    if hasattr(value, "to_dict"):
        return to_jsonable(value.to_dict())
    raise TypeError(f"cannot convert {type(value).__name__} to JSON")


def print_json(obj: Any) -> None:
    """Print ``obj`` as JSON with sorted keys to stdout."""
    json.dump(to_jsonable(obj), sys.stdout, sort_keys=True, indent=2, allow_nan=False)
    sys.stdout.write("\n")


def write_file_atomically(path: str | os.PathLike[str], data: str | bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file, so no partial file is ever left."""
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    mode = "wb" if isinstance(data, bytes) else "w"
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".tmp")
    # mkstemp creates the file private (0600); give it the mode an ordinary new file would get.
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    try:
        with os.fdopen(fd, mode) as handle:
            handle.write(data)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
