"""Signed fixed-point numbers: formats, rounding, saturation and coefficient scaling.

A signed fixed-point word of ``word_bits`` bits with ``fraction_bits`` fraction bits holds the
integer ``i`` in ``[-2**(word_bits-1), 2**(word_bits-1) - 1]`` and means the exact value
``i * 2**-fraction_bits``. Texts in Q notation name formats by their bits after the sign:
``"Q15"`` is 16 bits with 15 fraction bits, ``"Q1.14"`` is 16 bits with one integer bit and 14
fraction bits, ``"Q31"`` is 32 bits.

Rounding
--------
Two rules are offered, both exact on integers and on :class:`fractions.Fraction`:

``"nearest"``
    round to the nearest representable value, ties to the even integer (IEEE 754 default rule,
    the rule of :func:`numpy.rint`). Chosen over ties-away-from-zero because it is unbiased: a
    long run of tied products does not drift the state.
``"floor"``
    truncation toward minus infinity: what an arithmetic right shift does on a two's-complement
    DSP, the cheapest rule in firmware.

Results that do not fit are saturated (clamped to the most positive or most negative word),
never wrapped.

Coefficient scaling
-------------------
A set of coefficients sharing one accumulator (a "bank") is stored as integers with one common
number of fraction bits ``fc``; the firmware shifts the accumulator right by ``fc`` to come back
to the signal format. ``shift = fraction_bits - fc`` is the smallest shift (it may be negative:
small coefficients gain precision) that makes the largest coefficient fit the word after
rounding.

References
----------
Oppenheim, A. V., Schafer, R. W., "Discrete-Time Signal Processing", 3rd ed., 2010, section 6.7
(finite-precision numerical effects), from memory.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal, get_args

from sampled.errors import InputError

Rounding = Literal["nearest", "floor"]
ROUNDINGS: tuple[str, ...] = get_args(Rounding)

#: Word lengths the simulation and the C export support (C containers int8/16/32_t, a
#: double-width accumulator in int64_t).
MIN_WORD_BITS = 2
MAX_WORD_BITS = 32


@dataclass(frozen=True)
class FixedFormat:
    """A signed two's-complement fixed-point format.

    Parameters
    ----------
    word_bits : int
        Bits in the word, sign included (2 to 32).
    fraction_bits : int
        Bits after the binary point; may exceed ``word_bits - 1`` (all values small) or be
        negative (values are multiples of a power of two above one).
    """

    word_bits: int
    fraction_bits: int

    def __post_init__(self) -> None:
        if not isinstance(self.word_bits, int) or isinstance(self.word_bits, bool):
            raise InputError(f"word bits must be an integer, got {self.word_bits!r}", "word_bits")
        if not MIN_WORD_BITS <= self.word_bits <= MAX_WORD_BITS:
            raise InputError(
                f"word bits must be from {MIN_WORD_BITS} to {MAX_WORD_BITS}, got {self.word_bits}",
                "word_bits",
            )
        if not isinstance(self.fraction_bits, int) or isinstance(self.fraction_bits, bool):
            raise InputError(
                f"fraction bits must be an integer, got {self.fraction_bits!r}", "fraction_bits"
            )
        if abs(self.fraction_bits) > 2 * MAX_WORD_BITS:
            raise InputError(
                f"fraction bits must be within +-{2 * MAX_WORD_BITS}, got {self.fraction_bits}",
                "fraction_bits",
            )

    @property
    def integer_bits(self) -> int:
        """Bits between the sign and the binary point (the ``m`` of ``Qm.n``)."""
        return self.word_bits - 1 - self.fraction_bits

    @property
    def min_int(self) -> int:
        return -(1 << (self.word_bits - 1))

    @property
    def max_int(self) -> int:
        return (1 << (self.word_bits - 1)) - 1

    @property
    def lsb(self) -> Fraction:
        """Value of one unit in the last place."""
        return Fraction(2) ** -self.fraction_bits

    @property
    def min_value(self) -> Fraction:
        return self.min_int * self.lsb

    @property
    def max_value(self) -> Fraction:
        return self.max_int * self.lsb

    @property
    def name(self) -> str:
        """Q notation: ``Q15`` when no integer bits, else ``Qm.n``."""
        if self.integer_bits == 0:
            return f"Q{self.fraction_bits}"
        return f"Q{self.integer_bits}.{self.fraction_bits}"

    def value(self, integer: int) -> Fraction:
        """Exact value held by the integer ``integer``."""
        return integer * self.lsb

    def to_integer(self, value: Fraction | float | int, rounding: Rounding = "nearest") -> int:
        """Nearest word (by ``rounding``) to ``value``, saturated."""
        return saturate(round_fraction(Fraction(value), self.fraction_bits, rounding), self.word_bits)


_Q_PATTERN = re.compile(r"^[Qq](\d+)(?:\.(\d+))?$")


def parse_format(text: str, where: str | None = None) -> FixedFormat:
    """Read a format in Q notation: ``"Q15"``, ``"Q1.14"``, ``"Q31"``, ``"q3.12"``.

    ``Qn`` is a word of ``n + 1`` bits with ``n`` fraction bits; ``Qm.n`` has ``m`` integer bits
    and ``n`` fraction bits, ``m + n + 1`` bits in all (the sign bit is not written).
    """
    match = _Q_PATTERN.match(text.strip()) if isinstance(text, str) else None
    if match is None:
        raise InputError(
            f"expected a fixed-point format like 'Q15', 'Q1.14' or 'Q31', got {text!r}", where
        )
    if match.group(2) is None:
        integer_bits, fraction_bits = 0, int(match.group(1))
    else:
        integer_bits, fraction_bits = int(match.group(1)), int(match.group(2))
    word_bits = integer_bits + fraction_bits + 1
    if not MIN_WORD_BITS <= word_bits <= MAX_WORD_BITS:
        raise InputError(
            f"{text!r} is a {word_bits}-bit word; supported words have {MIN_WORD_BITS} to "
            f"{MAX_WORD_BITS} bits",
            where,
        )
    return FixedFormat(word_bits, fraction_bits)


def format_from_bits(word_bits: int, fraction_bits: int | None = None, where: str | None = None) -> FixedFormat:
    """Format from a word length and fraction bits (default ``word_bits - 1``, i.e. ``Q(w-1)``)."""
    try:
        return FixedFormat(word_bits, word_bits - 1 if fraction_bits is None else fraction_bits)
    except InputError as err:
        raise err.located(where) if where else err


def saturate(value: int, bits: int) -> int:
    """Clamp an integer to the signed range of ``bits`` bits."""
    top = (1 << (bits - 1)) - 1
    bottom = -(1 << (bits - 1))
    return top if value > top else bottom if value < bottom else value


def round_shift(value: int, shift: int, rounding: Rounding = "nearest") -> int:
    """``value / 2**shift`` rounded to an integer by ``rounding``; a negative shift multiplies.

    This is the firmware's rescaling of an accumulator: ``floor`` is the arithmetic right shift.
    """
    if shift <= 0:
        return value << -shift
    q, r = divmod(value, 1 << shift)  # Python divmod floors: q = floor(value / 2**shift)
    if rounding == "floor":
        return q
    half = 1 << (shift - 1)
    if r > half or (r == half and q & 1):
        q += 1
    return q


def round_fraction(value: Fraction, fraction_bits: int, rounding: Rounding = "nearest") -> int:
    """Integer nearest (by ``rounding``) to ``value * 2**fraction_bits``, computed exactly."""
    num, den = value.numerator, value.denominator
    if fraction_bits >= 0:
        num <<= fraction_bits
    else:
        den <<= -fraction_bits
    q, r = divmod(num, den)
    if rounding == "floor":
        return q
    twice = 2 * r
    if twice > den or (twice == den and q & 1):
        q += 1
    return q


def fits(value: Fraction, fraction_bits: int, word_bits: int, rounding: Rounding = "nearest") -> bool:
    """Whether ``value`` rounded to ``fraction_bits`` fits a ``word_bits`` word without saturating."""
    i = round_fraction(value, fraction_bits, rounding)
    return -(1 << (word_bits - 1)) <= i <= (1 << (word_bits - 1)) - 1


@dataclass(frozen=True)
class ScaledBank:
    """Coefficients sharing one scaling, as stored in firmware.

    Attributes
    ----------
    integers : tuple of int
        Stored words.
    fraction_bits : int
        Fraction bits of the stored words (``fc``); value = integer * 2**-fc.
    shift : int
        ``format.fraction_bits - fc``: the smallest shift making the largest coefficient fit.
    values : tuple of Fraction
        Exact values held: what the loop check must judge.
    """

    integers: tuple[int, ...]
    fraction_bits: int
    shift: int
    values: tuple[Fraction, ...]


def bank_fraction_bits(
    values: Iterable[Fraction], word_bits: int, rounding: Rounding = "nearest"
) -> int:
    """Largest number of fraction bits with which every value fits a ``word_bits`` word.

    Capped at ``2 * word_bits - 2`` (all-zero or tiny banks), so that the rescaling shift stays
    inside the double-width accumulator. Raises :class:`InputError` when a value is so large
    that even ``-2 * word_bits`` fraction bits do not hold it.
    """
    vals = [Fraction(v) for v in values]
    top = 2 * word_bits - 2
    bottom = -2 * word_bits
    big = max((abs(v) for v in vals), default=Fraction(0))
    if big == 0:
        return top
    # Start from the estimate given by the binary exponent of the largest magnitude, then
    # correct by at most a couple of steps (rounding up can push a value over the top).
    estimate = word_bits - 1 - (big.numerator.bit_length() - big.denominator.bit_length()) + 1
    fc = min(top, estimate)
    while fc >= bottom and not all(fits(v, fc, word_bits, rounding) for v in vals):
        fc -= 1
    if fc < bottom:
        raise InputError(
            f"coefficient {float(big):.6g} is too large for a {word_bits}-bit word even with a "
            f"left shift of {2 * word_bits} bits"
        )
    while fc < top and all(fits(v, fc + 1, word_bits, rounding) for v in vals):
        fc += 1
    return fc


def scale_bank(
    values: Sequence[Fraction | float | int],
    fmt: FixedFormat,
    rounding: Rounding = "nearest",
    fraction_bits: int | None = None,
) -> ScaledBank:
    """Quantise a bank of coefficients to ``fmt.word_bits`` with the smallest fitting shift.

    Parameters
    ----------
    values : sequence of numbers
        Ideal coefficients (floats are taken as the exact binary fractions they hold).
    fmt : FixedFormat
        Word length and nominal fraction bits of the coefficients.
    rounding : {"nearest", "floor"}
        Rounding rule (see module docstring).
    fraction_bits : int, optional
        Force the stored fraction bits instead of choosing them (values then saturate if they do
        not fit).
    """
    vals = [Fraction(v) for v in values]
    fc = bank_fraction_bits(vals, fmt.word_bits, rounding) if fraction_bits is None else fraction_bits
    ints = tuple(saturate(round_fraction(v, fc, rounding), fmt.word_bits) for v in vals)
    lsb = Fraction(2) ** -fc
    return ScaledBank(ints, fc, fmt.fraction_bits - fc, tuple(i * lsb for i in ints))


def values_from_integers(integers: Sequence[int], fmt: FixedFormat, where: str | None = None) -> tuple[Fraction, ...]:
    """Exact values of firmware words given as integers in ``fmt`` (range checked)."""
    out = []
    for k, i in enumerate(integers):
        if isinstance(i, bool) or not isinstance(i, int):
            raise InputError(f"expected an integer word, got {i!r}", f"{where}[{k}]" if where else None)
        if not fmt.min_int <= i <= fmt.max_int:
            raise InputError(
                f"{i} does not fit {fmt.name} ({fmt.word_bits} bits: {fmt.min_int} to {fmt.max_int})",
                f"{where}[{k}]" if where else None,
            )
        out.append(fmt.value(i))
    return tuple(out)
