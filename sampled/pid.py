"""PID controllers: continuous design and the digital update rules of each term.

The parallel form is ``C(s) = kp + ki/s + kd s/(tf s + 1)`` with ``tf`` the derivative filter
time constant (0: no filter). The standard (ideal, non-interacting) form with ``kp, ti, td`` is
``kp (1 + 1/(ti s) + td s/(tf s + 1))``, i.e. ``ki = kp/ti``, ``kd = kp td``.

Each term is discretised by its own rule, as firmware does it, by exact substitution for s:

==============  ===============================  =======================================
rule            substitution                     integral term ``ki/s`` becomes
==============  ===============================  =======================================
forward-euler   s = (z - 1)/T                    ki T / (z - 1)
backward-euler  s = (z - 1)/(T z)                ki T z / (z - 1)
tustin          s = (2/T)(z - 1)/(z + 1)         ki T (z + 1) / (2 (z - 1))
==============  ===============================  =======================================

References
----------
K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006, section 3.5 (PID
discretisation); K. J. Astrom and B. Wittenmark, *Computer-Controlled Systems*, 3rd ed., 1997,
section 8.5.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Literal, get_args

from sampled import poly as P
from sampled.errors import InputError
from sampled.systems import ContinuousSystem

UpdateRule = Literal["forward-euler", "backward-euler", "tustin"]
UPDATE_RULES: tuple[str, ...] = get_args(UpdateRule)


@dataclass(frozen=True)
class PidGains:
    """Parallel-form gains: kp [-], ki [1/s], kd [s], derivative filter time constant tf [s]."""

    kp: float
    ki: float
    kd: float
    tf: float = 0.0
    integral: UpdateRule = "backward-euler"
    derivative: UpdateRule = "backward-euler"

    def continuous(self) -> ContinuousSystem:
        """``kp + ki/s + kd s/(tf s + 1)`` as one transfer (exact in the gains as given)."""
        kp, ki, kd, tf = (P.exact(x) for x in (self.kp, self.ki, self.kd, self.tf))
        # Common denominator s (tf s + 1).
        den_d = (tf, Fraction(1)) if tf else (Fraction(1),)
        den = P.mul((Fraction(1), Fraction(0)), den_d)
        num = P.mul((kp, Fraction(0)), den_d)  # kp * s * (tf s + 1)
        num = P.add(num, P.scale(den_d, ki))  # ki * (tf s + 1)
        num = P.add(num, (kd, Fraction(0), Fraction(0)))  # kd s^2
        if not self.tf and self.kd:
            raise InputError(
                "a derivative term without a filter is improper in continuous time; give "
                "derivative_filter (a time constant, typically kd/kp/5 to /20)",
                "controller.pid.derivative_filter",
            )
        return ContinuousSystem(P.trim(num), P.trim(den))

    def discrete(self, period_s: float) -> tuple[P.ExactPoly, P.ExactPoly]:
        """Exact ``(num, den)`` in descending powers of z of the digital PID at ``period_s``."""
        T = P.exact(period_s)
        num: P.ExactPoly = (P.exact(self.kp),)
        den: P.ExactPoly = P.ONE
        terms: list[tuple[P.ExactPoly, P.ExactPoly]] = [(num, den)]
        if self.ki:
            terms.append(_substitute(((P.exact(self.ki),), (Fraction(1), Fraction(0))), self.integral, T))
        if self.kd:
            kd, tf = P.exact(self.kd), P.exact(self.tf)
            d_num = (kd, Fraction(0))
            d_den = (tf, Fraction(1)) if tf else P.ONE
            if not tf and self.derivative == "forward-euler":
                raise InputError(
                    "a forward-Euler derivative without a filter needs the next sample (not causal); "
                    "give derivative_filter or use backward-euler",
                    "controller.pid.derivative",
                )
            terms.append(_substitute((d_num, d_den), self.derivative, T))
        total_num, total_den = P.ZERO, P.ONE
        for n, d in terms:
            total_num = P.add(P.mul(total_num, d), P.mul(n, total_den))
            total_den = P.mul(total_den, d)
        g = P.gcd(total_num, total_den)
        if P.degree(g) > 0:
            total_num = P.divmod_(total_num, g)[0]
            total_den = P.divmod_(total_den, g)[0]
        lead = total_den[0]
        return P.scale(total_num, 1 / lead), P.scale(total_den, 1 / lead)


def substitution(rule: UpdateRule, T: Fraction) -> tuple[P.ExactPoly, P.ExactPoly]:
    """``s = a(z)/b(z)`` for an update rule, exact."""
    one, zero = Fraction(1), Fraction(0)
    if rule == "forward-euler":
        return (one, -one), (T,)
    if rule == "backward-euler":
        return (one, -one), (T, zero)
    if rule == "tustin":
        return (2 * one, -2 * one), (T, T)
    raise InputError(f"unknown update rule {rule!r}; allowed: {', '.join(UPDATE_RULES)}")


def _substitute(tf: tuple[P.ExactPoly, P.ExactPoly], rule: UpdateRule, T: Fraction) -> tuple[P.ExactPoly, P.ExactPoly]:
    """``N(a/b)/D(a/b)`` cleared of denominators: ``N~ b^(nD-nN) / D~`` (nD >= nN)."""
    num, den = tf
    a, b = substitution(rule, T)
    nn, nd = P.degree(num), P.degree(den)
    n_sub = P.compose_mobius(num, a, b)
    d_sub = P.compose_mobius(den, a, b)
    if nd >= nn:
        n_sub = P.mul(n_sub, P.power(b, nd - nn))
    else:
        d_sub = P.mul(d_sub, P.power(b, nn - nd))
    if P.degree(n_sub) > P.degree(d_sub):
        raise InputError(f"the {rule} rule makes this term non-causal")
    return n_sub, d_sub


def from_standard(kp: float, ti: float | None, td: float, tf: float, integral: UpdateRule, derivative: UpdateRule) -> PidGains:
    """Gains of the standard form ``kp (1 + 1/(ti s) + td s/(tf s + 1))``; ``ti = None`` (or inf): no integral."""
    ki = 0.0 if ti is None else kp / ti
    return PidGains(kp, ki, kp * td, tf, integral, derivative)
