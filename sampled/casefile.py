"""TOML case files: one loop a file, read into a :class:`LoopSpec` with precise error messages.

The key names and their meaning are stated once, in :data:`SCHEMA` (JSON Schema, printed by
``sampled schema``); unknown keys are refused with a did-you-mean hint derived from it. Numbers are
read exactly as typed (TOML floats are parsed as decimals), so ``b = [0.52, -0.47]`` means 52/100
and -47/100, not the nearest doubles.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from dataclasses import dataclass, field
from decimal import Decimal
from fractions import Fraction
from pathlib import Path
from typing import Any, Literal, get_args

from sampled import poly as P
from sampled.errors import CaseFileError, InputError
from sampled.pid import UPDATE_RULES, PidGains, UpdateRule, from_standard
from sampled.systems import ContinuousSystem
from sampled.units import Delay, parse_delay, parse_frequency, parse_period, parse_time

Method = Literal["zoh", "foh", "tustin", "forward-euler", "backward-euler", "matched"]
METHODS: tuple[str, ...] = get_args(Method)

_QUANTITY = {"type": ["number", "string"]}
_NUMBER_LIST = {"type": "array", "items": {"type": ["number", "string"]}, "minItems": 1}
_MATRIX = {"type": "array", "items": {"type": ["array", "number"]}}
_ROOTS = {"type": "array", "items": {"type": ["number", "string", "array"]}}


def _system_properties(role: str) -> dict[str, Any]:
    return {
        "transfer": {"type": "string", "description": f"{role} transfer as a rational expression in s, e.g. '2.5/(0.8*s + 1)'"},
        "num": {**_NUMBER_LIST, "description": "numerator coefficients, descending powers of s"},
        "den": {**_NUMBER_LIST, "description": "denominator coefficients, descending powers of s"},
        "zeros": {**_ROOTS, "description": "zeros: numbers, [re, im] pairs or text '-1+2j'"},
        "poles": {**_ROOTS, "description": "poles: numbers, [re, im] pairs or text '-1+2j'"},
        "gain": {"type": ["number", "string"], "description": "gain k of k*prod(s-z)/prod(s-p)"},
        "a": {**_MATRIX, "description": "state matrix A of dx/dt = A x + B u"},
        "b": {**_MATRIX, "description": "input matrix B (n x 1)"},
        "c": {**_MATRIX, "description": "output matrix C (1 x n)"},
        "d": {"type": ["number", "array"], "description": "feedthrough D (default 0)"},
        "delay": {**_QUANTITY, "description": "transport delay: seconds or '40 ms'"},
    }


#: The case-file format. The single source of key names: validation and `sampled schema` use it.
SCHEMA: dict[str, Any] = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "sampled case file",
    "description": "One digital control loop: continuous plant, optional sensor filter, controller, timing, requirements.",
    "type": "object",
    "additionalProperties": False,
    "required": ["plant", "controller", "timing"],
    "properties": {
        "title": {"type": "string", "description": "short name of the loop"},
        "description": {"type": "string", "description": "free text shown in reports"},
        "plant": {
            "type": "object",
            "additionalProperties": False,
            "description": "continuous process from actuator command to measured quantity; exactly one of: transfer; num+den; zeros+poles+gain; a+b+c(+d)",
            "properties": _system_properties("plant"),
        },
        "sensor": {
            "type": "object",
            "additionalProperties": False,
            "description": "optional continuous filter between the process and the sampler (anti-alias filter, sensor lag)",
            "properties": _system_properties("sensor"),
        },
        "controller": {
            "type": "object",
            "additionalProperties": False,
            "description": "exactly one of: transfer (+ method), [controller.pid], [controller.digital]",
            "properties": {
                "transfer": {"type": "string", "description": "continuous controller design in s"},
                "method": {"enum": list(METHODS), "description": "discretisation rule for the transfer (default tustin)"},
                "prewarp": {**_QUANTITY, "description": "Tustin prewarp frequency: '5 Hz' or rad/s"},
                "pid": {
                    "type": "object",
                    "additionalProperties": False,
                    "properties": {
                        "form": {"enum": ["parallel", "standard"], "description": "parallel: kp, ki, kd; standard: kp, ti, td (default parallel)"},
                        "kp": {"type": ["number", "string"], "description": "proportional gain"},
                        "ki": {"type": ["number", "string"], "description": "integral gain [1/s] (parallel form)"},
                        "kd": {"type": ["number", "string"], "description": "derivative gain [s] (parallel form)"},
                        "ti": {**_QUANTITY, "description": "integral time (standard form); omit for no integral action"},
                        "td": {**_QUANTITY, "description": "derivative time (standard form)"},
                        "derivative_filter": {**_QUANTITY, "description": "derivative filter time constant (default 0: none)"},
                        "integral": {"enum": list(UPDATE_RULES), "description": "update rule of the integral term (default backward-euler)"},
                        "derivative": {"enum": list(UPDATE_RULES), "description": "update rule of the derivative term (default backward-euler)"},
                    },
                },
                "digital": {
                    "type": "object",
                    "additionalProperties": False,
                    "properties": {
                        "b": {**_NUMBER_LIST, "description": "numerator in powers of z^-1, exactly as in the firmware"},
                        "a": {**_NUMBER_LIST, "description": "denominator in powers of z^-1, a[0] = 1 (or 2^fraction_bits in fixed point)"},
                        "format": {"type": "string", "description": "fixed-point format of integer coefficients, e.g. 'Q15' or 'Q2.13'"},
                        "word_bits": {"type": "integer", "description": "fixed-point word length (with fraction_bits, instead of format)"},
                        "fraction_bits": {"type": "integer", "description": "fixed-point fraction bits"},
                    },
                },
            },
        },
        "timing": {
            "type": "object",
            "additionalProperties": False,
            "required": ["period"],
            "properties": {
                "period": {**_QUANTITY, "description": "sample period ('10 ms', seconds) or rate ('100 Hz')"},
                "compute_delay": {**_QUANTITY, "description": "sample-to-actuator latency: '1 sample', '0.4 sample', '150 us' (default 0)"},
            },
        },
        "requirements": {
            "type": "object",
            "additionalProperties": False,
            "properties": {
                "gain_margin_db": {"type": "number", "description": "smallest allowed gain margin [dB]"},
                "phase_margin_deg": {"type": "number", "description": "smallest allowed phase margin [deg]"},
                "delay_margin": {**_QUANTITY, "description": "smallest allowed delay margin: '1 sample' or a time"},
                "sensitivity_peak": {"type": "number", "description": "largest allowed |1/(1+L)|"},
            },
        },
        "sweep": {
            "type": "object",
            "additionalProperties": False,
            "properties": {
                "from": {**_QUANTITY, "description": "shortest period of the sweep"},
                "to": {**_QUANTITY, "description": "longest period of the sweep"},
                "points": {"type": "integer", "minimum": 2, "description": "number of periods (log-spaced)"},
                "gain_from": {"type": "number", "description": "smallest loop-gain multiplier of the stability chart"},
                "gain_to": {"type": "number", "description": "largest loop-gain multiplier of the stability chart"},
            },
        },
    },
}


@dataclass(frozen=True)
class DigitalController:
    """Controller coefficients exactly as implemented: ``b(z^-1)/a(z^-1)``, a[0] = 1 after scaling.

    ``word_bits``/``fraction_bits`` are set when the case gave integer fixed-point coefficients;
    ``b_raw``/``a_raw`` then keep those integers.
    """

    b: tuple[Fraction, ...]
    a: tuple[Fraction, ...]
    word_bits: int | None = None
    fraction_bits: int | None = None
    b_raw: tuple[int, ...] | None = None
    a_raw: tuple[int, ...] | None = None

    def transfer_z(self) -> tuple[P.ExactPoly, P.ExactPoly]:
        """``(num, den)`` in descending powers of z (same length, padded with zeros)."""
        n = max(len(self.b), len(self.a))
        b = tuple(self.b) + (Fraction(0),) * (n - len(self.b))
        a = tuple(self.a) + (Fraction(0),) * (n - len(self.a))
        return P.trim(b), P.trim(a)


@dataclass(frozen=True)
class ControllerSpec:
    """Exactly one of ``transfer`` (+ method), ``pid`` or ``digital``."""

    kind: Literal["transfer", "pid", "digital"]
    transfer: ContinuousSystem | None = None
    method: Method = "tustin"
    prewarp_rad_s: float | None = None
    pid: PidGains | None = None
    digital: DigitalController | None = None

    def continuous(self) -> ContinuousSystem | None:
        """The continuous design this controller came from, if any."""
        if self.kind == "transfer":
            return self.transfer
        if self.kind == "pid":
            assert self.pid is not None
            if self.pid.kd and not self.pid.tf:
                return None
            return self.pid.continuous()
        return None


@dataclass(frozen=True)
class Requirements:
    gain_margin_db: float | None = None
    phase_margin_deg: float | None = None
    delay_margin: Delay | None = None
    sensitivity_peak: float | None = None

    def any(self) -> bool:
        return any(v is not None for v in (self.gain_margin_db, self.phase_margin_deg, self.delay_margin, self.sensitivity_peak))


@dataclass(frozen=True)
class SweepSpec:
    from_s: float | None = None
    to_s: float | None = None
    points: int | None = None
    gain_from: float | None = None
    gain_to: float | None = None


@dataclass(frozen=True)
class LoopSpec:
    """A loop as described by a case file (pure data; nothing computed yet)."""

    title: str
    plant: ContinuousSystem
    controller: ControllerSpec
    period_s: float
    compute_delay: Delay = field(default_factory=lambda: Delay(seconds=0.0))
    sensor: ContinuousSystem | None = None
    requirements: Requirements = field(default_factory=Requirements)
    sweep: SweepSpec = field(default_factory=SweepSpec)
    description: str = ""
    source_path: str | None = None
    source_text: str | None = None

    def with_period(self, period_s: float) -> "LoopSpec":
        from dataclasses import replace

        return replace(self, period_s=period_s)


# ---- reading ---------------------------------------------------------------------------------------

def _unknown(table: dict[str, Any], allowed: dict[str, Any], prefix: str) -> None:
    for key in table:
        if key not in allowed:
            hint = difflib.get_close_matches(key, list(allowed), n=1, cutoff=0.6)
            extra = f"; did you mean {hint[0]!r}?" if hint else f"; allowed: {', '.join(allowed)}"
            raise CaseFileError(f"unknown key{extra}", f"{prefix}{key}")


def _plain(value: Any) -> Any:
    """Decimals (exact TOML floats) to float for quantities; lists recursively."""
    if isinstance(value, Decimal):
        if not value.is_finite():
            return float(value)
        return float(value)
    if isinstance(value, list):
        return [_plain(v) for v in value]
    return value


def _exact_list(value: Any, where: str) -> list[Fraction]:
    if not isinstance(value, list) or not value:
        raise CaseFileError("expected a non-empty list of numbers", where)
    out = []
    for i, v in enumerate(value):
        if isinstance(v, bool) or not isinstance(v, (int, Decimal, str, float)):
            raise CaseFileError(f"expected a number, got {v!r}", f"{where}[{i}]")
        if isinstance(v, Decimal) and not v.is_finite():
            raise CaseFileError(f"expected a finite number, got {v}", f"{where}[{i}]")
        out.append(P.exact(v, f"{where}[{i}]"))
    return out


def _number(value: Any, where: str, *, positive: bool = False, allow_zero: bool = True) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, Decimal, str)):
        raise CaseFileError(f"expected a number, got {value!r}", where)
    x = float(P.exact(value, where)) if not (isinstance(value, Decimal) and not value.is_finite()) else float(value)
    if not math.isfinite(x):
        raise CaseFileError(f"expected a finite number, got {value}", where)
    if positive and (x < 0 or (x == 0 and not allow_zero)):
        raise CaseFileError(f"expected a {'non-negative' if allow_zero else 'positive'} number, got {value}", where)
    return x


def _table(doc: dict[str, Any], key: str, prefix: str = "") -> dict[str, Any] | None:
    value = doc.get(key)
    if value is None:
        return None
    if not isinstance(value, dict):
        raise CaseFileError(f"expected a table [{prefix}{key}], got {type(value).__name__}", f"{prefix}{key}")
    return value


def _system(tbl: dict[str, Any], role: str) -> ContinuousSystem:
    props = SCHEMA["properties"][role]["properties"]
    _unknown(tbl, props, f"{role}.")
    delay_s = parse_time(_plain(tbl["delay"]), f"{role}.delay") if "delay" in tbl else 0.0
    forms = {
        "transfer": ("transfer",),
        "num/den": ("num", "den"),
        "zeros/poles/gain": ("zeros", "poles", "gain"),
        "a/b/c/d": ("a", "b", "c"),
    }
    present = [name for name, keys in forms.items() if any(k in tbl for k in keys) or (name == "a/b/c/d" and "d" in tbl)]
    if not present:
        raise CaseFileError("missing the transfer: give transfer, num and den, zeros/poles/gain, or a, b, c", role)
    if len(present) > 1:
        raise CaseFileError(f"give exactly one form of the transfer, got {' and '.join(present)}", role)
    form = present[0]
    for k in forms[form]:
        if k not in tbl and not (form == "zeros/poles/gain" and k in ("zeros",)):
            raise CaseFileError(f"missing key {k!r} (the {form} form needs {', '.join(forms[form])})", f"{role}.{k}")
    if form == "transfer":
        text = tbl["transfer"]
        if not isinstance(text, str):
            raise CaseFileError(f"expected an expression as text, got {text!r}", f"{role}.transfer")
        return ContinuousSystem.from_expression(text, delay_s, f"{role}.transfer")
    if form == "num/den":
        num = _exact_list(tbl["num"], f"{role}.num")
        den = _exact_list(tbl["den"], f"{role}.den")
        if den[0] == 0:
            raise CaseFileError("the leading coefficient is zero (drop it or give the intended degree)", f"{role}.den")
        try:
            return ContinuousSystem.from_coefficients(num, den, delay_s, role)
        except InputError as exc:
            raise exc.located(role) if exc.where is None else exc
    if form == "zeros/poles/gain":
        zeros = _plain(tbl.get("zeros", []))
        poles = _plain(tbl["poles"])
        for key, val in (("zeros", zeros), ("poles", poles)):
            if not isinstance(val, list):
                raise CaseFileError("expected a list", f"{role}.{key}")
        return ContinuousSystem.from_zeros_poles_gain(zeros, poles, _plain(tbl["gain"]), delay_s, role)
    return ContinuousSystem.from_state_space(
        _plain(tbl["a"]), _plain(tbl["b"]), _plain(tbl["c"]), _plain(tbl.get("d", 0.0)), delay_s, role
    )


def _controller(tbl: dict[str, Any], period_s: float) -> ControllerSpec:
    props = SCHEMA["properties"]["controller"]["properties"]
    _unknown(tbl, props, "controller.")
    kinds = [k for k in ("transfer", "pid", "digital") if k in tbl]
    if not kinds:
        raise CaseFileError("give exactly one of transfer (+ method), [controller.pid] or [controller.digital]", "controller")
    if len(kinds) > 1:
        raise CaseFileError(f"give exactly one of transfer, pid or digital, got {' and '.join(kinds)}", "controller")
    kind = kinds[0]
    if kind != "transfer":
        for k in ("method", "prewarp"):
            if k in tbl:
                raise CaseFileError(f"{k!r} applies to controller.transfer only", f"controller.{k}")
    if kind == "transfer":
        text = tbl["transfer"]
        if not isinstance(text, str):
            raise CaseFileError(f"expected an expression as text, got {text!r}", "controller.transfer")
        system = ContinuousSystem.from_expression(text, 0.0, "controller.transfer")
        method = tbl.get("method", "tustin")
        if method not in METHODS:
            hint = difflib.get_close_matches(str(method), METHODS, n=1)
            raise CaseFileError(
                f"unknown method {method!r}" + (f"; did you mean {hint[0]!r}?" if hint else "") + f"; allowed: {', '.join(METHODS)}",
                "controller.method",
            )
        prewarp = None
        if "prewarp" in tbl:
            if method != "tustin":
                raise CaseFileError("prewarp applies to the tustin method only", "controller.prewarp")
            prewarp = parse_frequency(_plain(tbl["prewarp"]), "controller.prewarp")
            if prewarp >= math.pi / period_s:
                raise CaseFileError(
                    f"the prewarp frequency {prewarp / (2 * math.pi):.6g} Hz is at or above the Nyquist "
                    f"frequency {0.5 / period_s:.6g} Hz",
                    "controller.prewarp",
                )
        return ControllerSpec("transfer", transfer=system, method=method, prewarp_rad_s=prewarp)
    if kind == "pid":
        pid = tbl["pid"]
        if not isinstance(pid, dict):
            raise CaseFileError("expected a table [controller.pid]", "controller.pid")
        return ControllerSpec("pid", pid=_pid(pid))
    dig = tbl["digital"]
    if not isinstance(dig, dict):
        raise CaseFileError("expected a table [controller.digital]", "controller.digital")
    return ControllerSpec("digital", digital=_digital(dig))


def _rule(tbl: dict[str, Any], key: str) -> UpdateRule:
    value = tbl.get(key, "backward-euler")
    if value not in UPDATE_RULES:
        raise CaseFileError(f"unknown update rule {value!r}; allowed: {', '.join(UPDATE_RULES)}", f"controller.pid.{key}")
    return value  # type: ignore[no-any-return]


def _pid(tbl: dict[str, Any]) -> PidGains:
    props = SCHEMA["properties"]["controller"]["properties"]["pid"]["properties"]
    _unknown(tbl, props, "controller.pid.")
    form = tbl.get("form", "parallel")
    if form not in ("parallel", "standard"):
        raise CaseFileError(f"unknown form {form!r}; allowed: parallel, standard", "controller.pid.form")
    w = "controller.pid."
    tf = parse_time(_plain(tbl["derivative_filter"]), w + "derivative_filter") if "derivative_filter" in tbl else 0.0
    integral, derivative = _rule(tbl, "integral"), _rule(tbl, "derivative")
    if "kp" not in tbl and form == "standard":
        raise CaseFileError("missing key 'kp' (the standard form needs kp, ti, td)", w + "kp")
    kp = _number(tbl.get("kp", 0), w + "kp")
    if form == "parallel":
        for k in ("ti", "td"):
            if k in tbl:
                raise CaseFileError(f"{k!r} belongs to form = \"standard\"; the parallel form takes kp, ki, kd", w + k)
        ki = _number(tbl.get("ki", 0), w + "ki")
        kd = _number(tbl.get("kd", 0), w + "kd")
        if kp == 0 and ki == 0 and kd == 0:
            raise CaseFileError("all gains are zero: give kp, ki or kd", "controller.pid")
        gains = PidGains(kp, ki, kd, tf, integral, derivative)
    else:
        for k in ("ki", "kd"):
            if k in tbl:
                raise CaseFileError(f"{k!r} belongs to form = \"parallel\"; the standard form takes kp, ti, td", w + k)
        ti = parse_time(_plain(tbl["ti"]), w + "ti", allow_zero=False) if "ti" in tbl else None
        td = parse_time(_plain(tbl["td"]), w + "td") if "td" in tbl else 0.0
        gains = from_standard(kp, ti, td, tf, integral, derivative)
    if gains.kd and not gains.tf and gains.derivative == "forward-euler":
        raise CaseFileError(
            "a forward-Euler derivative without a filter needs the next sample; give derivative_filter or use backward-euler",
            w + "derivative",
        )
    return gains


def _digital(tbl: dict[str, Any]) -> DigitalController:
    props = SCHEMA["properties"]["controller"]["properties"]["digital"]["properties"]
    _unknown(tbl, props, "controller.digital.")
    w = "controller.digital."
    for k in ("b", "a"):
        if k not in tbl:
            raise CaseFileError("missing key (give b and a in powers of z^-1)", w + k)
    word = frac = None
    if "format" in tbl:
        if "word_bits" in tbl or "fraction_bits" in tbl:
            raise CaseFileError("give either format or word_bits + fraction_bits, not both", w + "format")
        word, frac = parse_q_format(tbl["format"], w + "format")
    elif "word_bits" in tbl or "fraction_bits" in tbl:
        for k in ("word_bits", "fraction_bits"):
            if k not in tbl or isinstance(tbl[k], bool) or not isinstance(tbl[k], int):
                raise CaseFileError("expected a whole number (word_bits and fraction_bits go together)", w + k)
        word, frac = int(tbl["word_bits"]), int(tbl["fraction_bits"])
        if not (2 <= word <= 64 and 0 <= frac < word):
            raise CaseFileError(f"need 2 <= word_bits <= 64 and 0 <= fraction_bits < word_bits, got {word}, {frac}", w + "word_bits")
    b = _exact_list(tbl["b"], w + "b")
    a = _exact_list(tbl["a"], w + "a")
    b_raw = a_raw = None
    if word is not None:
        assert frac is not None
        lim = 2 ** (word - 1)
        for key, vals in (("b", b), ("a", a)):
            for i, v in enumerate(vals):
                if v.denominator != 1:
                    raise CaseFileError(f"fixed-point coefficients must be integers, got {v}", f"{w}{key}[{i}]")
                if key == "a" and i == 0:
                    continue  # a[0] is the implied unity of the recursion (2^fraction_bits), never stored
                if not (-lim <= v < lim):
                    raise CaseFileError(f"{int(v)} does not fit a {word}-bit word [{-lim}, {lim - 1}]", f"{w}{key}[{i}]")
        b_raw = tuple(int(v) for v in b)
        a_raw = tuple(int(v) for v in a)
        scale = Fraction(1, 2**frac)
        b = [v * scale for v in b]
        a = [v * scale for v in a]
    if a[0] == 0:
        raise CaseFileError("a[0] must be nonzero (it multiplies the newest output)", w + "a[0]")
    if a[0] != 1:
        if word is not None:
            # Fixed-point a[0] is the implied 1 of the recursion only when it equals 2^frac.
            raise CaseFileError(
                f"a[0] must represent 1 (= 2^{frac} = {2**frac} in this format), got {a_raw[0] if a_raw else a[0]}",
                w + "a[0]",
            )
        lead = a[0]
        a = [v / lead for v in a]
        b = [v / lead for v in b]
    return DigitalController(tuple(b), tuple(a), word, frac, b_raw, a_raw)


def parse_q_format(text: object, where: str) -> tuple[int, int]:
    """``"Q15"`` -> (16, 15); ``"Q1.14"`` -> (16, 14); ``"Q31"`` -> (32, 31) (sign bit included)."""
    import re

    if not isinstance(text, str):
        raise CaseFileError(f"expected text such as 'Q15' or 'Q2.13', got {text!r}", where)
    m = re.fullmatch(r"\s*[Qq](?:(\d+)\.)?(\d+)\s*", text)
    if not m:
        raise CaseFileError(f"cannot read {text!r}; expected 'Qn' (e.g. Q15) or 'Qm.n' (e.g. Q2.13)", where)
    integer = int(m.group(1)) if m.group(1) else 0
    frac = int(m.group(2))
    word = 1 + integer + frac
    if not (2 <= word <= 64):
        raise CaseFileError(f"{text!r} needs a {word}-bit word; supported: 2 to 64 bits", where)
    return word, frac


def _requirements(tbl: dict[str, Any]) -> Requirements:
    props = SCHEMA["properties"]["requirements"]["properties"]
    _unknown(tbl, props, "requirements.")
    w = "requirements."
    gm = _number(tbl["gain_margin_db"], w + "gain_margin_db") if "gain_margin_db" in tbl else None
    pm = _number(tbl["phase_margin_deg"], w + "phase_margin_deg") if "phase_margin_deg" in tbl else None
    if pm is not None and not (0 <= pm < 180):
        raise CaseFileError(f"expected 0 <= phase margin < 180 degrees, got {pm}", w + "phase_margin_deg")
    dm = parse_delay(_plain(tbl["delay_margin"]), w + "delay_margin") if "delay_margin" in tbl else None
    sp = _number(tbl["sensitivity_peak"], w + "sensitivity_peak") if "sensitivity_peak" in tbl else None
    if sp is not None and sp < 1:
        raise CaseFileError(f"a sensitivity peak below 1 cannot be met by any loop, got {sp}", w + "sensitivity_peak")
    return Requirements(gm, pm, dm, sp)


def _sweep(tbl: dict[str, Any]) -> SweepSpec:
    props = SCHEMA["properties"]["sweep"]["properties"]
    _unknown(tbl, props, "sweep.")
    w = "sweep."
    lo = parse_period(_plain(tbl["from"]), w + "from") if "from" in tbl else None
    hi = parse_period(_plain(tbl["to"]), w + "to") if "to" in tbl else None
    if lo is not None and hi is not None and not lo < hi:
        raise CaseFileError(f"'from' must be shorter than 'to' (got {lo:g} s and {hi:g} s)", w + "to")
    points = tbl.get("points")
    if points is not None and (isinstance(points, bool) or not isinstance(points, int) or not 2 <= points <= 1_000_000):
        raise CaseFileError(f"expected a whole number from 2 to 1000000, got {points!r}", w + "points")
    g0 = _number(tbl["gain_from"], w + "gain_from", positive=True, allow_zero=False) if "gain_from" in tbl else None
    g1 = _number(tbl["gain_to"], w + "gain_to", positive=True, allow_zero=False) if "gain_to" in tbl else None
    if g0 is not None and g1 is not None and not g0 < g1:
        raise CaseFileError("gain_from must be below gain_to", w + "gain_to")
    return SweepSpec(lo, hi, points, g0, g1)


def parse_case(text: str, source: str = "<case>") -> LoopSpec:
    """Read a case file's text; every error names ``source`` and the key."""
    try:
        try:
            doc = tomllib.loads(text, parse_float=Decimal)
        except tomllib.TOMLDecodeError as exc:
            raise CaseFileError(f"malformed TOML: {exc}") from None
        return _build(doc, source, text)
    except InputError as exc:
        raise CaseFileError(exc.detail, f"{source}: {exc.where}" if exc.where else source) from None


def _build(doc: dict[str, Any], source: str, text: str) -> LoopSpec:
    _unknown(doc, SCHEMA["properties"], "")
    for key in SCHEMA["required"]:
        if key not in doc:
            raise CaseFileError(f"missing table [{key}]", key)
    title = doc.get("title", Path(source).stem)
    if not isinstance(title, str):
        raise CaseFileError(f"expected text, got {title!r}", "title")
    description = doc.get("description", "")
    if not isinstance(description, str):
        raise CaseFileError(f"expected text, got {description!r}", "description")
    timing = _table(doc, "timing")
    assert timing is not None
    _unknown(timing, SCHEMA["properties"]["timing"]["properties"], "timing.")
    if "period" not in timing:
        raise CaseFileError("missing key (the sample period, e.g. period = \"10 ms\")", "timing.period")
    period = parse_period(_plain(timing["period"]), "timing.period")
    compute = parse_delay(_plain(timing["compute_delay"]), "timing.compute_delay") if "compute_delay" in timing else Delay(seconds=0.0)
    plant_tbl = _table(doc, "plant")
    assert plant_tbl is not None
    plant = _system(plant_tbl, "plant")
    sensor_tbl = _table(doc, "sensor")
    sensor = _system(sensor_tbl, "sensor") if sensor_tbl is not None else None
    ctrl_tbl = _table(doc, "controller")
    assert ctrl_tbl is not None
    controller = _controller(ctrl_tbl, period)
    req_tbl = _table(doc, "requirements")
    requirements = _requirements(req_tbl) if req_tbl is not None else Requirements()
    sweep_tbl = _table(doc, "sweep")
    sweep = _sweep(sweep_tbl) if sweep_tbl is not None else SweepSpec()
    return LoopSpec(
        title=title,
        plant=plant,
        controller=controller,
        period_s=period,
        compute_delay=compute,
        sensor=sensor,
        requirements=requirements,
        sweep=sweep,
        description=description,
        source_path=source,
        source_text=text,
    )


def load_case(path: str | Path) -> LoopSpec:
    """Read a case file from disk."""
    p = Path(path)
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise CaseFileError(f"cannot read the file: {exc.strerror or exc}", str(path)) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise CaseFileError("the file is not UTF-8 text", str(path)) from None
    return parse_case(text, str(path))
