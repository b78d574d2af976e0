"""Quantities with units, parsed once at the edge (case files, command line).

Plain numbers are SI: seconds for times, rad/s for angular frequencies. Strings carry one unit:

=========  ===========================================
kind       units
=========  ===========================================
time       s, ms, us (or µs), ns
rate       Hz, kHz, MHz (cycles per second), rad/s
samples    sample, samples (whole or fractional periods)
=========  ===========================================

Everything inward of this module is SI: seconds and rad/s.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Literal

from sampled.errors import UnitError

Kind = Literal["time", "rate", "samples"]

#: unit spelling -> (kind, factor to SI). Rates in Hz convert to rad/s with 2*pi.
UNITS: dict[str, tuple[Kind, float]] = {
    "s": ("time", 1.0),
    "ms": ("time", 1e-3),
    "us": ("time", 1e-6),
    "µs": ("time", 1e-6),
    "ns": ("time", 1e-9),
    "hz": ("rate", 2.0 * math.pi),
    "khz": ("rate", 2.0 * math.pi * 1e3),
    "mhz": ("rate", 2.0 * math.pi * 1e6),
    "rad/s": ("rate", 1.0),
    "sample": ("samples", 1.0),
    "samples": ("samples", 1.0),
}

_QUANTITY = re.compile(
    r"^\s*(?P<number>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(?P<unit>[A-Za-zµ/]+)?\s*$"
)


@dataclass(frozen=True)
class Quantity:
    """A number with the kind of unit it carried.

    Attributes
    ----------
    value : float
        SI value: seconds for ``time``, rad/s for ``rate``, periods for ``samples``.
    kind : {"time", "rate", "samples", None}
        ``None`` for a plain number (no unit given).
    """

    value: float
    kind: Kind | None


def _finite(value: float, where: str | None) -> float:
    if not math.isfinite(value):
        raise UnitError(f"expected a finite number, got {value!r}", where)
    return value


def parse_quantity(value: object, where: str | None = None) -> Quantity:
    """Read a plain number or a string such as ``"1.5 ms"``, ``"2 kHz"``, ``"0.4 sample"``.

    Parameters
    ----------
    value : int, float or str
        The raw value from a case file or the command line.
    where : str, optional
        Location named in error messages (``--period`` or ``timing.period``).
    """
    if isinstance(value, bool):
        raise UnitError(f"expected a number or a quantity with a unit, got {value!r}", where)
    if isinstance(value, (int, float)):
        return Quantity(_finite(float(value), where), None)
    if not isinstance(value, str):
        raise UnitError(f"expected a number or a quantity with a unit, got {value!r}", where)
    match = _QUANTITY.match(value)
    if not match:
        raise UnitError(
            f"cannot read {value!r}: expected a number and a unit such as '10 ms', '2 kHz' "
            f"or '0.5 sample'",
            where,
        )
    number = _finite(float(match.group("number")), where)
    unit = match.group("unit")
    if unit is None:
        return Quantity(number, None)
    key = unit.lower()
    if key not in UNITS:
        allowed = ", ".join(sorted({u for u in UNITS if u != "µs"}, key=str.lower))
        raise UnitError(f"unknown unit {unit!r} in {value!r}; allowed: {allowed}", where)
    kind, factor = UNITS[key]
    return Quantity(number * factor, kind)


def parse_period(value: object, where: str | None = None) -> float:
    """A sample period [s] from a time (``"10 ms"``) or a rate (``"100 Hz"``: its period).

    Plain numbers are seconds. The result is finite and positive.
    """
    q = parse_quantity(value, where)
    if q.kind == "samples":
        raise UnitError(f"a period cannot be given in samples (got {value!r})", where)
    if q.kind == "rate":
        if q.value <= 0:
            raise UnitError(f"a rate must be positive, got {value!r}", where)
        period = 2.0 * math.pi / q.value
    else:
        period = q.value
    if not period > 0:
        raise UnitError(f"the period must be positive, got {value!r}", where)
    return period


def parse_time(value: object, where: str | None = None, *, allow_zero: bool = True) -> float:
    """A duration [s] (``"40 ms"``); plain numbers are seconds. Negative values are refused."""
    q = parse_quantity(value, where)
    if q.kind not in (None, "time"):
        raise UnitError(f"expected a time such as '40 ms', got {value!r}", where)
    if q.value < 0 or (q.value == 0 and not allow_zero):
        raise UnitError(f"expected a {'non-negative' if allow_zero else 'positive'} time, got {value!r}", where)
    return q.value


def parse_frequency(value: object, where: str | None = None) -> float:
    """An angular frequency [rad/s] from ``"50 Hz"`` or ``"300 rad/s"``; plain numbers are rad/s."""
    q = parse_quantity(value, where)
    if q.kind not in (None, "rate"):
        raise UnitError(f"expected a frequency such as '50 Hz' or '300 rad/s', got {value!r}", where)
    if not q.value > 0:
        raise UnitError(f"expected a positive frequency, got {value!r}", where)
    return q.value


@dataclass(frozen=True)
class Delay:
    """A delay given either as a time or as a number of sample periods (exactly one is set)."""

    seconds: float | None = None
    samples: float | None = None

    def in_samples(self, period_s: float) -> float:
        """The delay in sample periods at ``period_s``."""
        if self.samples is not None:
            return self.samples
        assert self.seconds is not None
        return self.seconds / period_s

    def in_seconds(self, period_s: float) -> float:
        """The delay in seconds at ``period_s``."""
        if self.seconds is not None:
            return self.seconds
        assert self.samples is not None
        return self.samples * period_s


def parse_delay(value: object, where: str | None = None) -> Delay:
    """A delay as a time (``"150 us"``, plain numbers are seconds) or in samples (``"0.4 sample"``)."""
    q = parse_quantity(value, where)
    if q.kind == "rate":
        raise UnitError(f"expected a time or a number of samples, got {value!r}", where)
    if q.value < 0:
        raise UnitError(f"a delay cannot be negative, got {value!r}", where)
    if q.kind == "samples":
        return Delay(samples=q.value)
    return Delay(seconds=q.value)


def format_time(seconds: float) -> str:
    """Human-readable time with an engineering unit (``0.00125`` -> ``"1.25 ms"``)."""
    if seconds == 0 or not math.isfinite(seconds):
        return f"{seconds:g} s"
    for unit, factor in (("s", 1.0), ("ms", 1e-3), ("us", 1e-6), ("ns", 1e-9)):
        if abs(seconds) >= factor * 0.9995:
            return f"{seconds / factor:.4g} {unit}"
    return f"{seconds / 1e-9:.4g} ns"


def format_frequency(rad_s: float) -> str:
    """Human-readable frequency in Hz with an engineering prefix, from rad/s."""
    hz = rad_s / (2.0 * math.pi)
    if not math.isfinite(hz) or hz == 0:
        return f"{hz:g} Hz"
    for unit, factor in (("MHz", 1e6), ("kHz", 1e3), ("Hz", 1.0)):
        if abs(hz) >= factor * 0.9995:
            return f"{hz / factor:.4g} {unit}"
    return f"{hz:.4g} Hz"
