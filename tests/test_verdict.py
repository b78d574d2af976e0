"""The combined Verdict (s and z), near-boundary flags, JSON pieces, and gain ranges in z."""

from __future__ import annotations

import json
import math
from fractions import Fraction

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled import poly
from sampled.commands.common import to_jsonable
from sampled.criteria.gain import stable_gain_ranges
from sampled.errors import InputError
from sampled.verdict import NEAR_BOUNDARY, judge, judge_s, judge_z

ONE = Fraction(1)


def test_ogata_quartic_all_methods_agree() -> None:
    """Ogata, "Discrete-Time Control Systems", 1995, section 4-3 (from memory): z^4 - 1.2 z^3 +
    0.07 z^2 + 0.3 z - 0.08 is stable. Its roots 0.8, 0.5, -0.5, 0.4 (expand the product to check)
    give spectral radius 0.8 and distance 0.2."""
    assert poly.mul(poly.mul((ONE, -Fraction("0.8")), (ONE, -Fraction("0.5"))), poly.mul((ONE, Fraction("0.5")), (ONE, -Fraction("0.4")))) == poly.from_values(
        ["1", "-1.2", "0.07", "0.3", "-0.08"]
    )
    v = judge_z(["1", "-1.2", "0.07", "0.3", "-0.08"])
    assert v.verdict == "stable"
    assert v.counts == {"inside": 4, "on": 0, "outside": 0}
    assert v.disagreeing == ()
    assert set(v.agreeing) == {"circle counts", "Jury table", "w-plane Routh", "roots (numpy)", "roots (mpmath)"}
    assert v.worst == pytest.approx(0.8, abs=1e-15)
    assert v.distance == pytest.approx(0.2, abs=1e-15)
    assert not v.near_boundary
    assert v.confirmed == "exact"


def test_near_boundary_is_flagged_with_exact_distance() -> None:
    """z - 0.999999999: root 1 - 1e-9 (closed form), stable but 1e-9 from the circle."""
    v = judge_z(["1", "-0.999999999"])
    assert v.verdict == "stable"
    assert v.distance == pytest.approx(1e-9, rel=1e-12)
    assert v.near_boundary and v.distance < NEAR_BOUNDARY


def test_typed_coefficients_decide_and_double_roots_are_flagged() -> None:
    """(z - 0.999999)^3 typed exactly is stable (closed form); double-precision roots of the same
    polynomial scatter by about (1e-16)^(1/3) ~ 5e-6 > 1e-6 and put a root outside, so the float
    method disagrees and the verdict is flagged near the boundary; mpmath (on the exact factors)
    agrees with the exact counts."""
    v = judge_z(["1", "-2.999997", "2.999994000003", "-0.999997000002999999"])
    assert v.verdict == "stable"
    assert v.confirmed == "exact"
    assert "roots (mpmath)" in v.agreeing
    assert "roots (numpy)" in v.disagreeing
    assert v.near_boundary
    assert v.distance == pytest.approx(1e-6, rel=1e-12)


@pytest.mark.parametrize(
    ("coeffs", "verdict", "counts"),
    [
        (["1", "2", "1"], "stable", (2, 0, 0)),  # (s + 1)^2
        (["1", "0", "1", "0"], "marginal", (0, 3, 0)),  # s (s^2 + 1)
        (["1", "0", "2", "0", "1"], "unstable", (0, 4, 0)),  # (s^2 + 1)^2, repeated +-j
        (["1", "2", "3", "6"], "marginal", (1, 2, 0)),  # (s + 2)(s^2 + 3)
        (["1", "-1", "2"], "unstable", (0, 0, 2)),  # roots 0.5 +- j 1.32
    ],
)
def test_judge_s_closed_forms(coeffs: list[str], verdict: str, counts: tuple[int, int, int]) -> None:
    """Factored forms given beside each case (closed forms). Double-precision roots of the
    imaginary-axis cases land a rounding error off the axis, so only mpmath must agree."""
    v = judge_s(coeffs)
    assert v.verdict == verdict
    assert (v.stable_side, v.boundary, v.unstable_side) == counts
    assert "roots (mpmath)" in v.agreeing
    assert v.near_boundary == (counts[1] > 0)


def test_judge_s_distance_is_minus_largest_real_part() -> None:
    """(s + 1)(s^2 + 0.2 s + 1): largest real part -0.1 (closed form: -zeta omega = -0.1)."""
    v = judge_s(poly.mul((ONE, ONE), (ONE, Fraction("0.2"), ONE)))
    assert v.worst == pytest.approx(-0.1, abs=1e-15)
    assert v.distance == pytest.approx(0.1, abs=1e-15)
    assert v.to_dict()["largest_real_part"] == pytest.approx(-0.1, abs=1e-15)


def test_to_dict_has_the_table_command_pieces() -> None:
    d = judge_z(["1", "-1.1", "-0.1", "0.2"]).to_dict()
    for key in ("domain", "verdict", "counts", "jury", "spectral_radius", "wplane"):
        assert key in d
    assert d["domain"] == "z"
    assert d["verdict"] == "marginal"
    assert d["counts"] == {"inside": 2, "on": 1, "outside": 0}
    assert all(isinstance(x, str) for row in d["jury"] for x in row)
    assert d["spectral_radius"] == pytest.approx(1.0, abs=1e-15)
    text = json.dumps(to_jsonable(d), sort_keys=True, allow_nan=False)
    assert '"jury_first_failure": "P(1) > 0"' in text


def test_bad_input() -> None:
    with pytest.raises(InputError, match="polynomial"):
        judge_z(["2"])
    with pytest.raises(InputError, match="domain"):
        judge(["1", "1"], "q")  # type: ignore[arg-type]
    with pytest.raises(InputError, match="polynomial"):
        judge_s(["1", "x"])


@settings(derandomize=True, max_examples=30, deadline=None)
@given(st.lists(st.integers(min_value=-5, max_value=5), min_size=2, max_size=9).filter(lambda c: c[0] != 0))
def test_exact_methods_always_agree(coeffs: list[int]) -> None:
    """The three exact z-domain methods agree on every integer polynomial; the mpmath roots agree
    unless a root lies within 1e-30 of the circle (then the exact counts decide)."""
    v = judge_z(coeffs)
    assert v.confirmed == "exact"
    assert {"circle counts", "Jury table", "w-plane Routh"} <= set(v.agreeing)
    assert "roots (mpmath)" in v.agreeing


# ---- gain ranges in z (lead's stable_gain_ranges reused through the w-plane) -----------------------

def test_integrator_under_zero_order_hold() -> None:
    """Integrator 1/s under zero-order hold with period T: G(z) = T/(z - 1). With proportional gain K
    the characteristic polynomial is z - 1 + K T, root 1 - K T, inside the circle iff
    -1 < 1 - K T < 1, that is 0 < K T < 2 (derived here). Ends are open: at K T = 0 or 2 the root
    is at +1 or -1."""
    for period in ("0.1", "0.004", "2"):
        t = Fraction(period)
        (interval,) = stable_gain_ranges((ONE, -ONE), (t,), domain="z")
        assert interval.low_exact == 0 and interval.high_exact == 2 / t
        assert not interval.low_closed and not interval.high_closed
        assert judge_z((ONE, -1 + (2 / t) * t)).verdict == "marginal"
        assert judge_z((ONE, -1 + (1 / t) * t)).verdict == "stable"


def test_double_integrator_lag_under_zero_order_hold() -> None:
    """Plant 1/(s (s + 1)) under zero-order hold, T = 1 s: G(z) = (b1 z + b0)/((z - 1)(z - p)) with
    p = e^-T, b1 = T - 1 + p, b0 = 1 - p - T p (the standard hold equivalent, derived from the
    partial fractions 1/s^2 - 1/s + 1/(s + 1)). The characteristic polynomial
    z^2 + (a1 + K b1) z + (a0 + K b0), a1 = -(1 + p), a0 = p, is affine in K, and the triangle
    conditions are linear in K: P(1) = K (b1 + b0) > 0 gives K > 0; a0 + K b0 < 1 gives
    K < (1 - p)/b0; P(-1) > 0 gives K < (1 - a1 + a0)/(b1 - b0); a0 + K b0 > -1 holds for K > 0.
    So the range is 0 < K < min of the two bounds (exact in the double value of p)."""
    p = Fraction(math.exp(-1.0))
    t = ONE
    b1, b0 = t - 1 + p, 1 - p - t * p
    a1, a0 = -(1 + p), p
    high = min((1 - a0) / b0, (1 - a1 + a0) / (b1 - b0))
    (interval,) = stable_gain_ranges((ONE, a1, a0), (Fraction(0), b1, b0), domain="z")
    assert interval.low == 0
    assert interval.high == pytest.approx(float(high), rel=1e-12)
    # mpmath double-check just inside and just outside the upper end
    for k, inside in ((high * (1 - Fraction(1, 10**6)), True), (high * (1 + Fraction(1, 10**6)), False)):
        coeffs = [1, a1 + k * b1, a0 + k * b0]
        with mpmath.workdps(30):
            radius = max(abs(r) for r in mpmath.polyroots([mpmath.mpf(c.numerator) / c.denominator for c in map(Fraction, coeffs)]))
        assert (radius < 1) is inside
        assert (judge_z(coeffs).verdict == "stable") is inside
