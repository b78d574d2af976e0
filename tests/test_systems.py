"""Continuous systems: constructors agree with scipy.signal, composition with sympy's algebra,
realisations reproduce the transfer (scipy.signal.ss2tf) and their eigenvalues are the poles."""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import scipy.signal
import sympy
from hypothesis import given
from hypothesis import strategies as st

from sampled import poly as P
from sampled.criteria.routh import routh_array
from sampled.errors import ImproperError, InputError
from sampled.systems import (
    ContinuousSystem,
    accurate_roots,
    cascade,
    characteristic_polynomial,
    closed_loop,
    parallel,
    parse_complex,
)

F = Fraction
S = sympy.Symbol("s")


def as_sympy(sys: ContinuousSystem) -> sympy.Expr:
    def p(c):
        return sum(sympy.Rational(x.numerator, x.denominator) * S ** (len(c) - 1 - i) for i, x in enumerate(c))

    return p(sys.num_exact) / p(sys.den_exact)


def assert_same_roots(a, b, atol: float) -> None:
    """Equal as multisets within atol (greedy nearest matching; sorting is fragile for ties)."""
    rest = list(np.asarray(b, complex))
    assert len(rest) == len(a)
    for x in np.asarray(a, complex):
        i = int(np.argmin([abs(x - y) for y in rest]))
        assert abs(x - rest[i]) <= atol, (a, b)
        rest.pop(i)


def same_rational(a: sympy.Expr, b: sympy.Expr) -> bool:
    return sympy.cancel(a - b) == 0


def normalised(num, den):
    """Monic denominator; numerator padded with leading zeros to the denominator's length (scipy
    leaves ~1e-16 residue where a leading numerator coefficient is structurally zero)."""
    num, den = np.atleast_1d(np.real(np.asarray(num))), np.atleast_1d(np.real(np.asarray(den)))
    den = np.trim_zeros(den, "f")
    num = np.concatenate([np.zeros(max(0, len(den) - len(num))), num])[-len(den):]
    return num / den[0], den / den[0]


# ---- constructors ------------------------------------------------------------------------------

def test_four_constructors_agree() -> None:
    """10 (s + 2) / (s (0.5 s + 1)^2) = 40 (s + 2) / (s (s + 2)^2): zeros -2, poles 0, -2, -2, gain 40."""
    a = ContinuousSystem.from_expression("10*(s+2)/(s*(0.5*s+1)^2)")
    b = ContinuousSystem.from_coefficients([10, 20], [0.25, 1, 1, 0])
    c = ContinuousSystem.from_zeros_poles_gain([-2], [0, -2, -2], 40)
    z_num, z_den = scipy.signal.zpk2tf([-2], [0, -2, -2], 40)
    for sys in (a, b, c):
        assert same_rational(as_sympy(sys), 40 * (S + 2) / (S * (S + 2) ** 2))
        n, d = normalised(sys.num, sys.den)
        zn, zd = normalised(z_num, z_den)
        np.testing.assert_allclose(n, zn, rtol=1e-14)
        np.testing.assert_allclose(d, zd, rtol=1e-14)
    # State space of the same transfer from scipy's realisation.
    A, B, C, D = scipy.signal.zpk2ss([-2], [0, -2, -2], 40)
    d_ss = ContinuousSystem.from_state_space(A, B, C, D)
    n, d = normalised(d_ss.num, d_ss.den)
    zn, zd = normalised(z_num, z_den)
    np.testing.assert_allclose(d, zd, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(n, zn, rtol=1e-12, atol=1e-12)


roots_st = st.sampled_from([-0.5, -1.0, -2.0, -3.5, 0.7, -10.0])
pairs_st = st.tuples(st.sampled_from([-0.2, -1.0, 0.3, -4.0]), st.sampled_from([0.5, 1.0, 3.0]))


@st.composite
def zpk(draw):
    poles_r = draw(st.lists(roots_st, max_size=3, unique=True))
    poles_c = draw(st.lists(pairs_st, max_size=2, unique=True))
    poles = poles_r + [complex(a, b) for a, b in poles_c] + [complex(a, -b) for a, b in poles_c]
    if not poles:
        poles = [-1.0]
    zeros = draw(st.lists(st.sampled_from([-0.3, -5.0, 2.0, -1.5]), max_size=len(poles), unique=True))
    gain = draw(st.sampled_from([1.0, -2.5, 0.125, 30.0]))
    return zeros, poles, gain


@given(zpk())
def test_zpk_against_scipy(case) -> None:
    zeros, poles, gain = case
    sys = ContinuousSystem.from_zeros_poles_gain(zeros, poles, gain)
    zn, zd = scipy.signal.zpk2tf(zeros, poles, gain)
    n, d = normalised(sys.num, sys.den)
    zn, zd = normalised(np.real(zn), np.real(zd))
    np.testing.assert_allclose(d, zd, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(n, zn, rtol=1e-12, atol=1e-12)


@given(zpk())
def test_state_space_input_against_scipy(case) -> None:
    """from_state_space on scipy.signal.zpk2ss matrices: transfer equal to scipy.signal.ss2tf, poles
    equal to the eigenvalues of A (numpy.linalg.eigvals)."""
    zeros, poles, gain = case
    A, B, C, D = scipy.signal.zpk2ss(zeros, poles, gain)
    sys = ContinuousSystem.from_state_space(A, B, C, D)
    sn, sd = scipy.signal.ss2tf(A, B, C, D)
    n, d = normalised(sys.num, sys.den)
    sn, sd = normalised(sn[0], sd)
    np.testing.assert_allclose(d, sd, rtol=1e-10, atol=1e-10)
    np.testing.assert_allclose(n, sn, rtol=1e-10, atol=1e-9 * max(1.0, np.max(np.abs(sn))))
    assert_same_roots(sys.poles(), np.linalg.eigvals(A), atol=1e-12)


@given(zpk())
def test_realisation_reproduces_transfer(case) -> None:
    """state_space() of a transfer: scipy.signal.ss2tf(A, B, C, D) gives the transfer back, and
    eig(A) equals the accurately computed poles."""
    zeros, poles, gain = case
    sys = ContinuousSystem.from_zeros_poles_gain(zeros, poles, gain)
    A, B, C, D = sys.state_space()
    sn, sd = scipy.signal.ss2tf(A, B, C, D)
    n, d = normalised(sys.num, sys.den)
    sn, sd = normalised(sn[0], sd)
    scale = max(1.0, float(np.max(np.abs(d))))
    np.testing.assert_allclose(sd, d, rtol=1e-9, atol=1e-9 * scale)
    np.testing.assert_allclose(sn, n, rtol=1e-9, atol=1e-9 * max(1.0, float(np.max(np.abs(n)))))
    eig = np.linalg.eigvals(A)
    acc = accurate_roots(sys.den_exact)
    assert_same_roots(eig, acc, atol=1e-9)


def test_realisation_of_biproper_and_static() -> None:
    """(2 s + 1)/(s + 3): D = 2; static gain 5: no states."""
    A, B, C, D = ContinuousSystem.from_expression("(2*s+1)/(s+3)").state_space()
    assert D[0, 0] == pytest.approx(2.0)
    n, d = scipy.signal.ss2tf(A, B, C, D)
    np.testing.assert_allclose(n[0] / d[0], [2.0, 1.0], rtol=1e-12)
    A, B, C, D = ContinuousSystem.from_expression("5").state_space()
    assert A.shape == (0, 0) and D[0, 0] == 5.0


def test_accurate_roots_against_mpmath_cluster() -> None:
    """(s + 1)^3 (s + 1e-6): numpy's companion matrix splits the triple root by ~1e-5; the
    extended-precision roots come back to double precision (truth: the factors)."""
    p = P.mul(P.power((F(1), F(1)), 3), (F(1), F(1, 10**6)))
    r = accurate_roots(p)
    np.testing.assert_allclose(np.sort(r.real), [-1, -1, -1, -1e-6], rtol=1e-12)
    assert np.all(r.imag == 0)


def test_improper_refused() -> None:
    for make in (
        lambda: ContinuousSystem.from_expression("s^2/(s+1)"),
        lambda: ContinuousSystem.from_coefficients([1, 0, 0], [1, 1]),
        lambda: ContinuousSystem.from_zeros_poles_gain([-1, -2], [-3], 1),
        lambda: ContinuousSystem.from_expression("s"),
    ):
        with pytest.raises(ImproperError, match="improper"):
            make()


@pytest.mark.parametrize(
    "make, where",
    [
        (lambda: ContinuousSystem.from_coefficients([1], [0, 1, 1], where="plant"), "plant.den"),
        (lambda: ContinuousSystem.from_coefficients([1], [0, 0], where="plant"), "plant.den"),
        (lambda: ContinuousSystem.from_coefficients([float("nan")], [1, 1], where="plant"), "plant.num[0]"),
        (lambda: ContinuousSystem.from_zeros_poles_gain([], ["1+2j"], 1, where="plant"), "plant.poles"),
        (lambda: ContinuousSystem.from_zeros_poles_gain([], ["x"], 1, where="plant"), "plant.poles[0]"),
        (lambda: ContinuousSystem.from_state_space([[1, 2]], [1], [1], 0, where="plant"), "plant.a"),
        (lambda: ContinuousSystem.from_state_space([[1]], [1, 2], [1], 0, where="plant"), "plant.b"),
        (lambda: ContinuousSystem.from_state_space([[float("inf")]], [1], [1], 0, where="plant"), "plant.a"),
        (lambda: ContinuousSystem.from_expression("1/(s+1)", delay_s=-1.0), "delay"),
    ],
)
def test_bad_input_names_the_place(make, where: str) -> None:
    with pytest.raises(InputError, match=where.replace(".", r"\.").replace("[", r"\[").replace("]", r"\]")):
        make()


def test_parse_complex() -> None:
    assert parse_complex("-1+2j") == complex(-1, 2)
    assert parse_complex("-1 + 2i") == complex(-1, 2)
    assert parse_complex([1.0, -3.0]) == complex(1, -3)
    assert parse_complex(4) == 4
    with pytest.raises(InputError):
        parse_complex(True)


def test_frequency_response_and_dc_gain() -> None:
    """evaluate() against scipy.signal.freqs; dc gain from the closed form num(0)/den(0)."""
    sys = ContinuousSystem.from_expression("10*(s+2)/((s+1)*(0.5*s+1)^2)", delay_s=0.01)
    w = np.logspace(-2, 2, 9)
    _, h = scipy.signal.freqs(sys.num, sys.den, w)
    np.testing.assert_allclose(sys.evaluate(1j * w), h * np.exp(-1j * w * 0.01), rtol=1e-12)
    assert sys.dc_gain() == 20.0
    assert ContinuousSystem.from_expression("1/s").dc_gain() == float("inf")


# ---- composition -------------------------------------------------------------------------------

G1 = "10*(s+2)/(s*(s+5))"
G2 = "(s+0.5)/(s^2+2*s+10)"
H = "20/(s+20)"


def test_cascade_parallel_against_sympy() -> None:
    g1, g2 = ContinuousSystem.from_expression(G1), ContinuousSystem.from_expression(G2)
    assert same_rational(as_sympy(cascade(g1, g2)), as_sympy(g1) * as_sympy(g2))
    assert same_rational(as_sympy(parallel(g1, g2)), as_sympy(g1) + as_sympy(g2))


@pytest.mark.parametrize("sign", [-1, 1])
def test_closed_loop_against_sympy(sign: int) -> None:
    """G / (1 - sign G H) by sympy; the characteristic polynomial dG dH - sign nG nH by numpy."""
    g, h = ContinuousSystem.from_expression(G1), ContinuousSystem.from_expression(H)
    t = closed_loop(g, h, sign)
    gs, hs = as_sympy(g), as_sympy(h)
    assert same_rational(as_sympy(t), gs / (1 - sign * gs * hs))
    char = characteristic_polynomial(g, h, sign)
    want = np.polysub(np.polymul(g.den, h.den), sign * np.polymul(g.num, h.num))
    np.testing.assert_allclose(P.to_float(char), want, rtol=1e-14)
    unity = closed_loop(g)
    assert same_rational(as_sympy(unity), gs / (1 + gs))


def test_unstable_cancellation_is_reported() -> None:
    """Controller (s - 1)/(s + 3) cascaded with plant 1/((s - 1)(s + 2)): the transfer reduces to
    1/((s + 3)(s + 2)) but the mode at s = 1 is still there (unstable hidden mode)."""
    c = ContinuousSystem.from_expression("(s-1)/(s+3)")
    p = ContinuousSystem.from_expression("1/((s-1)*(s+2))")
    series = cascade(c, p)
    assert same_rational(as_sympy(series), 1 / ((S + 3) * (S + 2)))
    assert P.degree(series.den_exact) == 2
    assert any(abs(m - 1) < 1e-12 for m in series.hidden_modes)
    assert any("UNSTABLE" in n and "s = 1" in n for n in series.notes)
    # Unity feedback around it keeps the note; the full characteristic polynomial keeps the mode.
    loop = closed_loop(series)
    assert any("UNSTABLE" in n for n in loop.notes)
    raw = ContinuousSystem.from_coefficients([1, -1], P.mul((F(1), F(3)), P.mul((F(1), F(-1)), (F(1), F(2)))))
    char = characteristic_polynomial(raw)
    assert routh_array(char).right == 1  # (s - 1)((s + 3)(s + 2) + 1): root at s = 1 remains
    assert any("UNSTABLE" in n for n in closed_loop(raw).notes)


def test_stable_cancellation_is_noted_quietly() -> None:
    series = cascade(ContinuousSystem.from_expression("(s+1)/(s+3)"), ContinuousSystem.from_expression("1/(s+1)"))
    assert not any("UNSTABLE" in n for n in series.notes)
    assert any("stable mode" in n for n in series.notes)


def test_composition_refusals() -> None:
    delayed = ContinuousSystem.from_expression("1/(s+1)", delay_s=0.1)
    with pytest.raises(InputError, match="delay"):
        closed_loop(delayed)
    with pytest.raises(InputError, match="delays"):
        parallel(delayed, ContinuousSystem.from_expression("1/(s+2)"))
    with pytest.raises(InputError, match="sign"):
        closed_loop(ContinuousSystem.from_expression("1/(s+1)"), sign=0)
    with pytest.raises(InputError):
        cascade()
    assert cascade(delayed, delayed).delay_s == pytest.approx(0.2)
