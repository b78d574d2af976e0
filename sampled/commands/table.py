"""Print the stability table of a characteristic polynomial in s (Routh) or z (Jury, w-plane Routh).

Examples:
  sampled table "s^3 + 3*s^2 + 2*s + 1"
  sampled table "s^3 + 3*s^2 + 2*s + K" --gain K
  sampled table "z^2 - 1.2*z + 0.5" --json

Coefficients are read exactly as typed (0.1 is 1/10). Exit status: 0 stable, 1 not stable
(marginal or unstable; with --gain: no stable range), 2 bad input.
"""

from __future__ import annotations

import argparse
import re


from sampled import expr
from sampled import poly as P
from sampled.commands.common import print_json
from sampled.criteria import gain as gain_mod
from sampled.criteria.routh import RouthArray, entry_text, routh_array
from sampled.errors import InputError


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("polynomial", help="polynomial in s or z, e.g. \"s^3 + 3*s^2 + 2*s + 1\"")
    parser.add_argument(
        "--domain",
        choices=("s", "z"),
        help="variable of the polynomial (default: the one that appears in it)",
    )
    parser.add_argument("--gain", metavar="NAME", help="name of a gain the polynomial is affine in; prints its stable ranges")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def detect_domain(text: str, gain: str | None) -> str:
    names = set(re.findall(r"[A-Za-z_][A-Za-z_0-9]*", text)) - ({gain} if gain else set())
    if "z" in names and "s" not in names:
        return "z"
    return "s"


def run(args: argparse.Namespace) -> int:
    domain = args.domain or detect_domain(args.polynomial, args.gain)
    if args.gain is not None:
        if not re.fullmatch(r"[A-Za-z_][A-Za-z_0-9]*", args.gain) or args.gain in ("s", "z"):
            raise InputError(f"the gain name must be a plain name other than s and z, got {args.gain!r}", "--gain")
        return _run_gain(args, domain)
    coeffs = expr.parse_polynomial(args.polynomial, domain, "polynomial")
    if P.degree(coeffs) < 0:
        raise InputError("the polynomial is zero", "polynomial")
    if domain == "z":
        from sampled.commands.table_z import run_z

        return run_z(args, coeffs)
    table = routh_array(coeffs)
    if args.json:
        print_json(table.to_dict())
    else:
        print(render_routh(table, "s"))
    return 0 if table.verdict == "stable" else 1


def _run_gain(args: argparse.Namespace, domain: str) -> int:
    p0, p1 = expr.parse_affine(args.polynomial, domain, args.gain, "polynomial")
    ranges = gain_mod.stable_gain_ranges(p0, p1, domain)  # type: ignore[arg-type]
    if args.json:
        print_json(
            {
                "domain": domain,
                "gain": args.gain,
                "polynomial_at_zero_gain": P.format_poly(p0, domain),
                "gain_coefficient": P.format_poly(p1, domain),
                "gain_ranges": [iv.to_list() for iv in ranges],
                "gain_range_ends_closed": [[iv.low_closed, iv.high_closed] for iv in ranges],
                "gain_ranges_text": [iv.describe(args.gain) for iv in ranges],
            }
        )
    else:
        gain_part = args.gain if p1 == P.ONE else f"{args.gain}*({P.format_poly(p1, domain)})"
        print(f"Characteristic polynomial: {P.format_poly(p0, domain)} + {gain_part}")
        where = "open left half-plane" if domain == "s" else "open unit disc"
        if ranges:
            print(f"All roots lie in the {where} for:")
            for iv in ranges:
                print(f"  {iv.describe(args.gain)}")
        else:
            print(f"No value of {args.gain} puts every root in the {where}.")
    return 0 if ranges else 1


def render_routh(table: RouthArray, variable: str = "s", title: str = "Routh array") -> str:
    """Text rendering: rows labelled by power, first-column signs, counts, verdict, notes."""
    lines = [f"Polynomial: {P.format_poly(table.coefficients, variable)}  (degree {table.degree})", ""]
    lines.append(title + (f" (after removing {variable}^{table.origin_roots})" if table.origin_roots else ""))
    cells = [[entry_text(x) for x in row] for row in table.rows]
    ncols = max(len(r) for r in cells)
    # Drop trailing columns that are zero in every row.
    while ncols > 1 and all(len(r) < ncols or r[ncols - 1] == "0" for r in cells):
        ncols -= 1
    widths = [max(len(r[c]) if c < len(r) else 0 for r in cells) for c in range(ncols)]
    label_w = max(len(f"{variable}^{p}") for p in table.powers)
    for power, row, sign in zip(table.powers, cells, table.signs):
        label = f"{variable}^{power}".rjust(label_w)
        body = "  ".join(row[c].rjust(widths[c]) if c < len(row) else "".rjust(widths[c]) for c in range(ncols))
        lines.append(f"  {label} | {body}    {'+' if sign > 0 else '-' if sign < 0 else '0'}")
    lines.append(f"  first-column sign changes: {table.sign_changes}")
    lines.append("")
    lines.append(
        f"Roots: {table.left} in the left half-plane, {table.imaginary} on the imaginary axis, "
        f"{table.right} in the right half-plane"
    )
    for note in table.notes_for(variable):
        lines.append(f"  note: {note}")
    lines.append(f"Verdict: {table.verdict}")
    return "\n".join(lines)


