"""Unit strings at the edge: SI conversions (definitions of the SI prefixes and of the hertz,
1 Hz = 2 pi rad/s for an angular frequency; common practice, no source beyond the SI brochure)."""

from __future__ import annotations

import math

import pytest

from sampled import units as U
from sampled.errors import InputError, UnitError


@pytest.mark.parametrize(
    "text, value, kind",
    [
        ("1.5 ms", 1.5e-3, "time"),
        ("250us", 250e-6, "time"),
        ("250 µs", 250e-6, "time"),
        ("20 ns", 20e-9, "time"),
        ("2 s", 2.0, "time"),
        ("50 Hz", 2 * math.pi * 50, "rate"),
        ("2 kHz", 2 * math.pi * 2e3, "rate"),
        ("1 MHz", 2 * math.pi * 1e6, "rate"),
        ("300 rad/s", 300.0, "rate"),
        ("0.4 sample", 0.4, "samples"),
        ("2 samples", 2.0, "samples"),
        ("1e-3", 1e-3, None),
        (0.25, 0.25, None),
        (3, 3.0, None),
    ],
)
def test_parse_quantity(text: object, value: float, kind: str | None) -> None:
    q = U.parse_quantity(text, "--period")
    assert q.kind == kind
    assert q.value == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize("bad", ["", "ms", "1 parsec", "1..2 s", "nan s", math.nan, math.inf, True, None, [1], "1e999 s"])
def test_parse_quantity_refuses(bad: object) -> None:
    with pytest.raises(UnitError, match="--period") as info:
        U.parse_quantity(bad, "--period")
    assert isinstance(info.value, InputError)


def test_period_from_rate_and_time() -> None:
    assert U.parse_period("10 ms") == pytest.approx(0.01)
    assert U.parse_period("100 Hz") == pytest.approx(0.01)  # T = 1/f
    assert U.parse_period(0.002) == 0.002
    for bad in ("0 s", "-1 ms", "1 sample", "0 Hz"):
        with pytest.raises(UnitError, match="timing.period"):
            U.parse_period(bad, "timing.period")


def test_time_frequency_delay() -> None:
    assert U.parse_time("40 ms") == pytest.approx(0.04)
    with pytest.raises(UnitError):
        U.parse_time("-1 ms")
    with pytest.raises(UnitError):
        U.parse_time("0 s", allow_zero=False)
    with pytest.raises(UnitError):
        U.parse_time("5 Hz")
    assert U.parse_frequency("1 Hz") == pytest.approx(2 * math.pi)
    with pytest.raises(UnitError):
        U.parse_frequency("1 ms")
    d = U.parse_delay("0.4 sample")
    assert d.samples == 0.4 and d.in_seconds(0.01) == pytest.approx(0.004)
    d = U.parse_delay("150 us")
    assert d.seconds == pytest.approx(150e-6) and d.in_samples(1e-3) == pytest.approx(0.15)
    with pytest.raises(UnitError):
        U.parse_delay("1 kHz")
    with pytest.raises(UnitError):
        U.parse_delay("-1 sample")


def test_format() -> None:
    assert U.format_time(0.00125) == "1.25 ms"
    assert U.format_time(2.0) == "2 s"
    assert U.format_time(3e-7) == "300 ns"
    assert U.format_frequency(2 * math.pi * 1500) == "1.5 kHz"
    assert U.format_frequency(2 * math.pi * 50) == "50 Hz"
    assert U.format_time(math.inf) == "inf s"
