"""Library `sampled.quantize`: the loop judged with the controller exactly as rounded.

References used here:
- scipy.signal.freqz / sosfreqz (reference library) for the transfer of each implemented structure;
- an independent closed loop built with scipy.signal.cont2discrete (zero-order hold) and numpy
  polynomial arithmetic, whose characteristic roots (numpy.roots) give the loop's spectral radius;
- closed forms derived in the docstrings (rounding of the print-bed PI to 8 bits).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import scipy.signal as ss
from hypothesis import given, settings
from hypothesis import strategies as st

from sampled.casefile import load_case, parse_case
from sampled.errors import InputError
from sampled.fixedpoint import FixedFormat
from sampled.quantize import (
    case_controller,
    implemented_system,
    quantize_loop,
    realisations_from_text,
    word_bits_from_text,
)
from sampled.realisations import REALISATIONS, implement

# A small loop for the independent check: plant 50/(s (0.02 s + 1)), PI controller by Tustin,
# one whole sample of computation delay (so the pulse transfer is z^-1 times the ZOH equivalent).
SMALL_CASE = """
title = "small test loop"
[plant]
transfer = "50/(s*(0.02*s + 1))"
[controller]
transfer = "0.08*(0.1*s + 1)/(0.1*s) * (0.01*s + 1)/(0.002*s + 1)"
method = "tustin"
[timing]
period = "2 ms"
compute_delay = "1 sample"
[requirements]
phase_margin_deg = 30
"""


def _freq(b, a, w):
    return ss.freqz([float(x) for x in b], [float(x) for x in a], worN=w)[1]


@pytest.mark.parametrize("realisation", REALISATIONS)
def test_implemented_system_transfer_matches_scipy(realisation: str) -> None:
    """The DiscreteSystem handed to the loop check has the transfer of the rounded coefficients.

    Reference: scipy.signal.freqz of the exact implemented ``b, a`` (and sosfreqz of the rounded
    sections for the cascade), at frequencies away from the integrator.
    """
    spec = parse_case(SMALL_CASE)
    b, a = case_controller(spec)
    impl = implement(b, a, spec.period_s, realisation, FixedFormat(12, 11))
    sys_ = implemented_system(impl)
    w = np.array([0.01, 0.1, 0.5, 1.5, 3.0])
    got = sys_.evaluate(np.exp(1j * w))
    want = _freq(impl.b, impl.a, w)
    np.testing.assert_allclose(got, want, rtol=1e-9)
    if realisation == "sections":
        sos = np.array([[float(c) for c in num] + [float(c) for c in den] for num, den in impl.sections])
        np.testing.assert_allclose(got, ss.sosfreqz(sos, worN=w)[1], rtol=1e-9)


def _independent_radius(b: list[float], a: list[float]) -> float:
    """Spectral radius of the loop C(z) z^-1 G(z), G the ZOH equivalent of the plant (scipy).

    Characteristic polynomial (in z, after clearing z^-1): a_c(z) d_g(z) z + b_c(z) n_g(z), with
    the controller polynomials from b, a (ascending powers of z^-1 -> descending powers of z).
    """
    num, den = np.array([50.0]), np.polymul([1.0, 0.0], [0.02, 1.0])
    nd, dd, _ = ss.cont2discrete((num, den), 2e-3, method="zoh")
    ng, dg = np.trim_zeros(np.ravel(nd), "f"), dd
    bc, ac = np.array(b), np.array(a)  # same length: descending powers of z
    char = np.polyadd(np.polymul(np.polymul(ac, dg), [1.0, 0.0]), np.polymul(bc, ng))
    return float(np.max(np.abs(np.roots(char))))


def test_loop_radius_against_independent_closed_loop() -> None:
    """Each row's loop spectral radius equals the one of an independently assembled loop.

    Reference: scipy.signal.cont2discrete (zoh) and numpy.roots (see _independent_radius).
    """
    spec = parse_case(SMALL_CASE)
    result = quantize_loop(spec, [10, 16], ["direct1", "sections"])
    for s in result.structures:
        for row in s.rows:
            impl = row.implementation
            assert impl is not None
            ref = _independent_radius([float(x) for x in impl.b], [float(x) for x in impl.a])
            assert row.spectral_radius == pytest.approx(ref, rel=1e-7), (s.name, row.bits)
            assert row.controller_spectral_radius == pytest.approx(
                float(np.max(np.abs(np.roots([float(x) for x in impl.a])))), rel=1e-9)


def test_print_bed_rounding_to_8_bits_cancels_the_integrator() -> None:
    """Closed form: the case stores b = [2622, -2618] / 2^15 (kp ~ 0.08) and a = [1, -1].

    At 8 bits the bank takes 10 fraction bits (0.0800 * 2^10 = 81.9 fits 127, 2^11 would give
    163.9, too big): b0 -> 82, b1 = -0.0799 * 2^10 = -81.8 -> -82. Then b0 + b1 = 0, the zero
    lands on the integrator at z = 1 and cancels it in C(z); the mode stays in the loop, so a
    closed-loop pole sits exactly at z = 1: verdict "marginal", not stable. At 16 bits the words
    are the case's own (2622/2^15 = 1311/2^14), so the row equals the unrounded reference.
    """
    spec = load_case("cases/print_bed_heater.toml")
    result = quantize_loop(spec, [8, 16], ["direct1"])
    rows = {r.bits: r for r in result.structures[0].rows}
    impl8 = rows[8].implementation
    assert impl8 is not None
    assert [c.integer for c in impl8.coefficients[:2]] == [82, -82]
    assert impl8.coefficients[0].fraction_bits == 10
    assert rows[8].verdict == "marginal"
    assert rows[8].spectral_radius == pytest.approx(1.0, abs=1e-12)
    impl16 = rows[16].implementation
    assert impl16 is not None and impl16.b == (Fraction(2622, 32768), Fraction(-2618, 32768))
    assert rows[16].verdict == result.reference.verdict == "stable"
    assert rows[16].spectral_radius == pytest.approx(result.reference.spectral_radius, rel=1e-12)
    assert rows[16].requirements_met and result.reference.requirements_met


def test_fragile_notch_direct_form_unstable_sections_stable() -> None:
    """Known-fragile case (cases/notch_filter_fragile.toml): sixth-order controller (PI, two
    notches at 310 Hz and 620 Hz, a roll-off pole) at 20 kHz.

    Why: the controller's poles cluster near z = 1 (an integrator and two notch pairs at
    omega T = 0.1 and 0.2, a roll-off pole at 0.44), so the direct-form denominator has
    coefficients up to 12.5 (a = 1, -5.18, 11.09, -12.55, 7.89, -2.60, 0.35); a 16-bit word
    with one shift for the bank leaves an LSB of 2^-11, and pole
    sensitivity to a coefficient grows as 1/prod|p_i - p_j| over the cluster (Oppenheim and
    Schafer 2010, section 6.7, from memory): the poles leave the unit circle. Second-order
    sections hold each pair in its own two coefficients, so the same word moves them by about an
    LSB only. Checked against numpy.roots of the implemented denominators (reference library).
    """
    spec = load_case("cases/notch_filter_fragile.toml")
    result = quantize_loop(spec, [16], ["direct1", "sections"])
    direct, sections = result.structures
    d16, s16 = direct.rows[0], sections.rows[0]
    assert d16.verdict == "unstable" and not d16.requirements_met
    assert s16.verdict == "stable" and s16.requirements_met
    assert d16.implementation is not None and s16.implementation is not None
    assert np.max(np.abs(np.roots([float(x) for x in d16.implementation.a]))) > 1.0
    for _, den in s16.implementation.sections:
        assert np.max(np.abs(np.roots([float(x) for x in den]))) <= 1.0 + 1e-15


def test_minimum_bits_is_start_of_final_passing_run() -> None:
    """min_bits_* is the first word from which every longer word tried passes (definition)."""
    spec = load_case("cases/notch_filter_fragile.toml")
    result = quantize_loop(spec, [16, 20, 21, 22, 24], ["direct1", "delta"])
    for s in result.structures:
        stable = [r.bits for r in s.rows if r.stable]
        expected = None
        for r in reversed(s.rows):
            if not r.stable:
                break
            expected = r.bits
        assert s.min_bits_stable == expected and (expected is None or expected in stable)
        if s.min_bits_requirements is not None:
            assert s.min_bits_stable is not None and s.min_bits_requirements >= s.min_bits_stable
    data = result.to_dict()
    for s in data["structures"]:
        assert {"name", "min_bits_stable", "min_bits_requirements", "rows"} <= set(s)
        for row in s["rows"]:
            assert {"bits", "verdict", "spectral_radius"} <= set(row)


def test_unrepresentable_coefficient_is_a_row_not_an_error() -> None:
    """A gain of 1e9 cannot be held by an 8-bit word even with a 16-bit left shift
    (127 * 2^16 = 8.3e6 < 1e9): that row says so; 32 bits hold it."""
    text = """
title = "huge gain"
[plant]
transfer = "1e-9/(s + 1)"
[controller.digital]
b = [1e9, 0]
a = [1, -0.5]
[timing]
period = "10 ms"
"""
    result = quantize_loop(parse_case(text), [8, 32], ["direct1"], with_margins=False)
    rows = result.structures[0].rows
    assert rows[0].verdict == "unrepresentable" and "too large" in rows[0].note
    assert rows[0].implementation is None and not rows[0].requirements_met
    assert rows[1].verdict == "stable"


def test_text_parsers_and_input_errors() -> None:
    assert word_bits_from_text("8-10,16") == (8, 9, 10, 16)
    assert word_bits_from_text(" 12 ") == (12,)
    for bad in ("40-3", "3-40", "x", "", "8-", "1"):
        with pytest.raises(InputError, match="--bits"):
            word_bits_from_text(bad)
    assert realisations_from_text("sections, direct1") == ("sections", "direct1")
    with pytest.raises(InputError, match="--structure.*unknown"):
        realisations_from_text("direct3")
    spec = parse_case(SMALL_CASE)
    with pytest.raises(InputError, match="word_bits"):
        quantize_loop(spec, [40])
    with pytest.raises(InputError, match="realisations"):
        quantize_loop(spec, [16], ["ladder"])
    with pytest.raises(InputError, match="rounding"):
        quantize_loop(spec, [16], rounding="up")  # type: ignore[arg-type]


def test_shortest_word_is_not_the_first_passing_word() -> None:
    """Closed form, a Tustin PI (kp = 0.08, Ti = 0.1 s, T = 2 ms): b0 = kp (1 + T/(2 Ti)) = 0.0808,
    b1 = -kp (1 - T/(2 Ti)) = -0.0792, a = [1, -1].

    6 bits, 8 fraction bits (0.0808 * 2^8 = 20.7 fits 31, 2^9 would not): b = [21, -20]/2^8, the
    integrator is kept (b0 + b1 != 0): stable. 7 bits, 9 fraction bits: 41.37 -> 41 and
    -40.55 -> -41, b0 + b1 = 0 cancels the integrator: a loop pole at z = 1, marginal.
    8 bits: [83, -81]/2^10, stable. So 6 bits passes, 7 fails, and the shortest word from which
    every longer word passes is 8 (rounding robustness is not monotone in the word length).
    """
    text = """
title = "PI, no requirements"
[plant]
transfer = "50/(s*(0.02*s + 1))"
[controller]
transfer = "0.08*(0.1*s + 1)/(0.1*s)"
method = "tustin"
[timing]
period = "2 ms"
"""
    result = quantize_loop(parse_case(text), [6, 7, 8], ["direct1"])
    rows = result.structures[0].rows
    assert [[c.integer for c in r.implementation.coefficients] for r in rows] == [[21, -20, -32], [41, -41, -64], [83, -81, -128]]
    assert [r.verdict for r in rows] == ["stable", "marginal", "stable"]
    assert [r.requirements_met for r in rows] == [True, False, True]  # no requirements: stable
    s = result.structures[0]
    assert s.min_bits_stable == 8 and s.min_bits_requirements == 8
    assert rows[1].confirmed == "exact"  # a pole on the circle is always confirmed exactly


@settings(derandomize=True, max_examples=25, deadline=None)
@given(
    poles=st.lists(st.floats(-0.95, 0.999), min_size=1, max_size=4),
    zeros=st.lists(st.floats(-1.5, 1.5), min_size=0, max_size=3),
    gain=st.floats(0.01, 20.0),
    delay=st.integers(0, 1),
    realisation=st.sampled_from(REALISATIONS),
    bits=st.sampled_from([12, 16, 24]),
)
def test_implemented_system_matches_freqz_property(poles, zeros, gain, delay, realisation, bits) -> None:
    """For random real poles/zeros, a leading delay and every structure, the system handed to the
    loop check has the frequency response of the exact implemented b/a (scipy.signal.freqz)."""
    zeros = zeros[: len(poles) - delay] if len(poles) > delay else []
    a = np.poly(poles)
    b = np.concatenate([np.zeros(delay), gain * np.poly(zeros) if zeros else [gain]])
    n = max(len(a), len(b))
    a = np.concatenate([a, np.zeros(n - len(a))])
    b = np.concatenate([b, np.zeros(n - len(b))])
    impl = implement(b.tolist(), a.tolist(), 1e-3, realisation, FixedFormat(bits, bits - 1))
    w = np.array([0.05, 0.7, 2.0, 3.0])
    got = implemented_system(impl).evaluate(np.exp(1j * w))
    want = _freq(impl.b, impl.a, w)
    np.testing.assert_allclose(got, want, rtol=1e-7, atol=1e-12 * max(1.0, float(np.max(np.abs(want)))))
