"""Turn a transfer in s into the difference equation to flash, with its poles.

Prints the discrete transfer in z and in z^-1, the difference equation ready to type into
firmware (y[k] = ...), and each pole with its distance 1 - |z| to the unit circle.

Methods: zoh and foh (hold equivalents of a plant), tustin (optionally --prewarp), forward-euler,
backward-euler and matched (mappings of a controller). --delay is a transport delay of the
continuous system (any length with zoh; whole periods with the others).

Exit status: 0 done, 1 the method changed stability (a stable design became unstable or the
other way round), 2 bad input.

Example: sampled discretize "10*(s+2)/(s*(s+5))" --period 1ms --method tustin --prewarp 50Hz
"""

from __future__ import annotations

import argparse
import math

import numpy as np

from sampled import units
from sampled.commands.common import SAFETY_CAUTION, print_json
from sampled.discrete import DiscreteSystem, fmt_complex
from sampled.discretize import METHODS, discretize, stability_change
from sampled.errors import InputError
from sampled.systems import ContinuousSystem


#: Relative pole error of the printed z coefficients above which the text output warns.
COEFFICIENT_WARNING = 1e-6


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("expression", help='transfer in s, e.g. "10*(s+2)/(s*(0.5*s+1))"')
    parser.add_argument(
        "--period", required=True, help='sample period, e.g. "1ms", "100 us", or a rate "2 kHz" (its period)'
    )
    parser.add_argument("--method", choices=METHODS, default="zoh", help="discretisation method (default: zoh)")
    parser.add_argument("--prewarp", help='Tustin prewarp frequency, e.g. "50Hz" or "300 rad/s" (below Nyquist)')
    parser.add_argument(
        "--delay", help='transport delay of the continuous system, e.g. "1.3ms" or "0.4 sample" (default 0)'
    )
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def _coef(x: float) -> str:
    """A coefficient as the shortest text that reads back to the same double."""
    return repr(float(x))


def _poly_text(coeffs: np.ndarray, power: str) -> str:
    """``c0*z^n + c1*z^(n-1) + ...`` (power='z') or ``c0 + c1*z^-1 + ...`` (power='z^-1')."""
    n = coeffs.size - 1
    terms = []
    for i, c in enumerate(coeffs):
        if c == 0 and coeffs.size > 1:
            continue
        k = n - i if power == "z" else i
        if k == 0:
            body = _coef(abs(c))
        elif power == "z":
            body = f"{_coef(abs(c))}*z" + (f"^{k}" if k > 1 else "")
        else:
            body = f"{_coef(abs(c))}*z^-{k}"
        sign = "-" if c < 0 else "+"
        terms.append(f"-{body}" if (not terms and c < 0) else (body if not terms else f"{sign} {body}"))
    return " ".join(terms) if terms else "0"


def difference_equation(b: np.ndarray, a: np.ndarray) -> str:
    """``y[k] = b0*u[k] + b1*u[k-1] + ... - a1*y[k-1] - ...`` with ``a[0] = 1``."""
    terms: list[tuple[float, str]] = []
    for i, c in enumerate(b):
        if c != 0:
            terms.append((float(c), "u[k]" if i == 0 else f"u[k-{i}]"))
    for i, c in enumerate(a[1:], start=1):
        if c != 0:
            terms.append((-float(c), f"y[k-{i}]"))
    if not terms:
        return "y[k] = 0"
    parts = []
    for j, (c, sig) in enumerate(terms):
        if j == 0:
            parts.append(f"{'-' if c < 0 else ''}{_coef(abs(c))}*{sig}")
        else:
            parts.append(f"{'-' if c < 0 else '+'} {_coef(abs(c))}*{sig}")
    return "y[k] = " + " ".join(parts)


def _inputs(args: argparse.Namespace) -> tuple[ContinuousSystem, float, float | None]:
    period_s = units.parse_period(args.period, "--period")
    prewarp = units.parse_frequency(args.prewarp, "--prewarp") if args.prewarp is not None else None
    delay_s = 0.0
    if args.delay is not None:
        delay_s = units.parse_delay(args.delay, "--delay").in_seconds(period_s)
        if not math.isfinite(delay_s):
            raise InputError(f"the delay must be finite, got {args.delay!r}", "--delay")
    system = ContinuousSystem.from_expression(args.expression, delay_s, "expression")
    return system, period_s, prewarp


def run(args: argparse.Namespace) -> int:
    system, period_s, prewarp = _inputs(args)
    try:
        disc = discretize(system, period_s, args.method, prewarp)
    except InputError as exc:
        option = {"prewarp": "--prewarp", "delay": "--delay", "period": "--period", "method": "--method"}
        if exc.where in option:
            raise InputError(exc.detail, option[exc.where]) from None
        raise
    changed = stability_change(system, disc) is not None
    if args.json:
        print_json(_as_dict(system, disc, prewarp))
    else:
        print(_render(system, disc, prewarp))
    return 1 if changed else 0


def _as_dict(system: ContinuousSystem, disc: DiscreteSystem, prewarp: float | None) -> dict[str, object]:
    num, den = disc.transfer()
    b, a = disc.firmware_coefficients()
    p = disc.poles()
    return {
        "continuous": system.describe(),
        "period": disc.period_s,
        "method": disc.method,
        "prewarp_rad_s": prewarp,
        "delay_samples": disc.delay_samples,
        "num": num,
        "den": den,
        "b": b,
        "a": a,
        "difference_equation": difference_equation(b, a),
        "poles": [complex(z) for z in p.z],
        "delta_poles": [complex(x) for x in p.delta],
        "unit_circle_distance": p.unit_circle_distance,
        "notes": list(disc.notes),
        "coefficient_pole_error": disc.coefficient_pole_error(),
    }


def _render(system: ContinuousSystem, disc: DiscreteSystem, prewarp: float | None) -> str:
    num, den = disc.transfer()
    b, a = disc.firmware_coefficients()
    p = disc.poles()
    lines = [
        f"{system.describe()}",
        f"discretised by {disc.method} at T = {units.format_time(disc.period_s)} "
        f"({1.0 / disc.period_s:.6g} Hz)"
        + (f", prewarped at {units.format_frequency(prewarp)}" if prewarp is not None else ""),
        "",
        "Transfer in z:",
        f"  G(z) = ({_poly_text(num, 'z')})",
        f"         / ({_poly_text(den, 'z')})",
        "Transfer in z^-1 (firmware form, a[0] = 1):",
        f"  G(z) = ({_poly_text(b, 'z^-1')})",
        f"         / ({_poly_text(a, 'z^-1')})",
        "Difference equation:",
        f"  {difference_equation(b, a)}",
        "",
        "Poles (1 - |z| > 0 inside the unit circle):",
    ]
    if p.z.size == 0:
        lines.append("  none (a static gain)")
    for z, lam, dist in zip(p.z, p.delta, p.unit_circle_distance):
        lines.append(
            f"  z = {fmt_complex(complex(z)):<28} |z| = {abs(z):<18.15g} 1 - |z| = {dist:.6g}"
            f"   (delta pole {fmt_complex(complex(lam))} 1/s)"
        )
    notes = list(disc.notes)
    err = disc.coefficient_pole_error()
    if err > COEFFICIENT_WARNING:
        notes.append(
            f"at this sample rate the coefficients in z place the poles only to {err:.2g} relative error "
            "in (z - 1): a difference equation typed from them will not have these dynamics; implement "
            "the delta form (x += T*(A_delta x + B_delta u)) or use longer coefficients"
        )
    if notes:
        lines.append("")
        lines.extend(f"Note: {n}" for n in notes)
    lines += ["", SAFETY_CAUTION]
    return "\n".join(lines)
