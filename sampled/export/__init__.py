"""Firmware code for a controller realisation.

:func:`export_controller` rounds a controller for one realisation and number format and returns
the generated files; :func:`sampled.export.c.export_c` renders an already checked
:class:`sampled.realisations.ImplementedController`, so the files carry exactly the
coefficients that were judged.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Literal, get_args

from sampled.errors import InputError
from sampled.export.c import export_c
from sampled.fixedpoint import FixedFormat, Rounding, parse_format
from sampled.realisations import ImplementedController, Realisation, implement

Language = Literal["c"]
LANGUAGES: tuple[str, ...] = get_args(Language)

__all__ = ["LANGUAGES", "Language", "export_c", "export_controller", "number_format_from_text"]


def number_format_from_text(text: str, where: str | None = "--format") -> FixedFormat | None:
    """``"float"`` (IEEE double, returns None) or a Q-notation format such as ``"Q15"``."""
    if isinstance(text, str) and text.strip().lower() in ("float", "double"):
        return None
    return parse_format(text, where)


def export_controller(
    b: Sequence[object],
    a: Sequence[object],
    period_s: float,
    realisation: Realisation,
    number_format: FixedFormat | None,
    *,
    language: Language = "c",
    name: str = "controller",
    verdict: str = "not checked",
    output_limits: tuple[float, float] | None = None,
    rounding: Rounding = "nearest",
    signal_format: FixedFormat | None = None,
) -> tuple[ImplementedController, dict[str, str]]:
    """Round ``b/a`` (ascending powers of z^-1) for a realisation and generate code for it.

    Returns the implementation (whose exact transfer ``impl.b / impl.a`` is what the loop check
    must judge) and ``{file name: text}``.
    """
    if language not in LANGUAGES:
        raise InputError(f"unknown language {language!r}; choose one of {', '.join(LANGUAGES)}", "--lang")
    impl = implement(b, a, period_s, realisation, number_format, rounding=rounding, signal_format=signal_format)
    return impl, export_c(impl, name=name, verdict=verdict, output_limits=output_limits)
