"""Rendering of ``sampled table`` for polynomials in z: Jury table, w-plane Routh array, counts."""

from __future__ import annotations

import argparse

from sampled import poly as P
from sampled.commands.common import print_json
from sampled.commands.table import render_routh
from sampled.criteria.routh import entry_text
from sampled.verdict import Verdict, judge_z


def run_z(args: argparse.Namespace, coeffs: P.ExactPoly) -> int:
    """Judge a polynomial in z; exit 0 when every root is strictly inside the unit circle."""
    v = judge_z(coeffs)
    if args.json:
        print_json(v.to_dict())
    else:
        print(render_z(v))
    return 0 if v.verdict == "stable" else 1


def render_z(v: Verdict) -> str:
    lines = [f"Polynomial: {P.format_poly(v.coefficients, 'z')}  (degree {len(v.coefficients) - 1})", ""]
    jury = v.jury
    if jury is not None:
        lines.append("Jury table" + (" (rows from the fourth pair on divided by a positive number; signs unchanged)" if jury.reduced else ""))
        cells = [[entry_text(x) for x in row] for row in jury.rows]
        width = max((len(c) for row in cells for c in row), default=1)
        for i, row in enumerate(cells):
            lines.append(f"  {i + 1:>3} | " + "  ".join(c.rjust(width) for c in row))
        lines.append("  conditions:")
        for c in jury.conditions:
            lines.append(f"    {'holds ' if c.holds else 'FAILS '} {c.name}   ({entry_text(c.left)} vs {entry_text(c.right)})")
        if jury.first_failure:
            lines.append(f"  first condition to fail: {jury.first_failure}")
        lines.append(f"  Jury verdict: {jury.verdict}")
        for note in jury.notes:
            lines.append(f"  note: {note}")
        lines.append("")
    w = v.routh
    if w is not None and hasattr(w, "w_polynomial"):
        lines.append("Bilinear map z = (1 + w)/(1 - w): roots inside the unit circle go to the left half-plane")
        if w.routh is not None:
            block = render_routh(w.routh, "w", "w-plane Routh array").splitlines()
            lines.extend("  " + line for line in block[:-1] if line)
        if w.at_minus_one:
            lines.append(f"  the degree dropped by {w.at_minus_one}: that many roots at z = -1 (on the circle)")
        lines.append("")
    lines.append(
        f"Roots: {v.stable_side} inside the unit circle, {v.boundary} on it, {v.unstable_side} outside"
        + (" (a root on the circle is repeated)" if v.repeated_on_boundary else "")
    )
    lines.append(f"Spectral radius {v.worst:.12g} (1 - radius = {v.distance:.3g}), from roots at 50 digits")
    lines.append("Methods agreeing: " + ", ".join(v.agreeing))
    if v.disagreeing:
        lines.append("Methods DISAGREEING: " + ", ".join(v.disagreeing)
                     + " (double-precision roots of coefficients that crowd near the circle are not reliable)")
    if v.near_boundary:
        lines.append("Near the boundary: the verdict rests on the exact counts.")
    lines.append(f"Verdict: {v.verdict}")
    return "\n".join(lines)
