"""Findings: warnings with the numbers behind them and what to change.

Every warning the tool reports is a :class:`Finding` with a ``kind`` from :data:`KINDS`, so
machines can filter them and people can read them.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal, get_args

Kind = Literal[
    "hidden-mode",
    "mapping-unstable",
    "continuous-unstable",
    "digital-unstable",
    "near-boundary",
    "margins-not-classical",
    "discretisation-cost",
    "pathological-sampling",
    "aliasing",
    "intersample-ripple",
    "rule-of-thumb",
    "ringing-controller",
    "fixed-point",
]
KINDS: tuple[str, ...] = get_args(Kind)

Severity = Literal["info", "warning"]


@dataclass(frozen=True)
class Finding:
    """One warning or observation.

    Attributes
    ----------
    kind : str
        One of :data:`KINDS`.
    message : str
        What was found, with its numbers, in one sentence.
    advice : str
        What to change (may be empty).
    severity : {"info", "warning"}
    numbers : dict
        The values behind the message, SI units, keys carrying the unit.
    """

    kind: Kind
    message: str
    advice: str = ""
    severity: Severity = "warning"
    numbers: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "message": self.message,
            "advice": self.advice,
            "severity": self.severity,
            "numbers": dict(self.numbers),
        }

    def text(self) -> str:
        return self.message + (f" {self.advice}" if self.advice else "")
