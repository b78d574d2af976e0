"""Fixed-point formats, rounding, saturation, realisations and signal levels.

References used as checks (named beside each test):
- numpy integer and float arithmetic (np.rint, np.floor, np.right_shift, np.clip) for rounding,
  shifting and saturation;
- scipy.signal (tf2sos, sosfilt, lfilter) for second-order sections and responses;
- mpmath.polyroots at high precision and numpy.roots for pole moduli;
- closed forms derived in the docstrings.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest
import scipy.signal as ss
from hypothesis import example, given, settings
from hypothesis import strategies as st

from sampled.errors import InputError
from sampled.fixedpoint import (
    FixedFormat,
    bank_fraction_bits,
    format_from_bits,
    parse_format,
    round_fraction,
    round_shift,
    saturate,
    scale_bank,
    values_from_integers,
)
from sampled.realisations import (
    REALISATIONS,
    delta_coefficients,
    implement,
    implement_word_lengths,
    normalise,
    overflow_report,
    pair_sections,
    signal_levels,
    simulate_fixed,
    simulate_float,
    smallest_word_bits,
    state_space,
)

# ---------------------------------------------------------------------------------------------
# Formats
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text, word, frac",
    # Q notation, common practice, no source: Qn has n fraction bits after the sign bit,
    # Qm.n has m integer bits and n fraction bits after the sign bit.
    [("Q15", 16, 15), ("Q31", 32, 31), ("Q1.14", 16, 14), ("q3.12", 16, 12), ("Q7", 8, 7), ("Q0.15", 16, 15)],
)
def test_parse_format(text: str, word: int, frac: int) -> None:
    fmt = parse_format(text)
    assert (fmt.word_bits, fmt.fraction_bits) == (word, frac)
    assert parse_format(fmt.name) == fmt


def test_format_limits_q15() -> None:
    """Q15 range [-1, 1 - 2^-15] (common practice, no source)."""
    fmt = parse_format("Q15")
    assert fmt.min_value == -1
    assert fmt.max_value == 1 - Fraction(1, 32768)
    assert fmt.lsb == Fraction(1, 32768)
    assert (fmt.min_int, fmt.max_int) == (-32768, 32767)
    assert format_from_bits(24) == FixedFormat(24, 23)


@pytest.mark.parametrize("text", ["Q", "15", "Q1.2.3", "Q40", "float", ""])
def test_parse_format_rejects(text: str) -> None:
    with pytest.raises(InputError, match="--format"):
        parse_format(text, "--format")


def test_format_word_bits_range() -> None:
    with pytest.raises(InputError, match="word_bits"):
        FixedFormat(40, 39)


# ---------------------------------------------------------------------------------------------
# Rounding and saturation against numpy
# ---------------------------------------------------------------------------------------------


@settings(derandomize=True, max_examples=200)
@given(
    st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False),
    st.integers(min_value=0, max_value=20),
)
def test_round_fraction_matches_numpy(x: float, frac: int) -> None:
    """Ties-to-even rounding equals numpy.rint, floor equals numpy.floor (reference library).

    x * 2**frac is exact in double (a power-of-two scaling), so numpy sees the same number.
    """
    scaled = x * 2.0**frac
    assert round_fraction(Fraction(x), frac, "nearest") == int(np.rint(scaled))
    assert round_fraction(Fraction(x), frac, "floor") == int(np.floor(scaled))


def test_round_half_even_ties() -> None:
    """Ties go to the even integer: 0.5 -> 0, 1.5 -> 2, -2.5 -> -2 (numpy.rint, reference library)."""
    for x in (0.5, 1.5, 2.5, -0.5, -1.5, -2.5):
        assert round_fraction(Fraction(x), 0) == int(np.rint(x))


@settings(derandomize=True, max_examples=200)
@given(st.integers(min_value=-(2**50), max_value=2**50), st.integers(min_value=0, max_value=20))
def test_round_shift_matches_numpy(v: int, s: int) -> None:
    """floor = numpy arithmetic right shift; nearest = numpy.rint of the exact quotient."""
    arr = np.array([v], dtype=np.int64)
    assert round_shift(v, s, "floor") == int(np.right_shift(arr, s)[0])
    assert round_shift(v, s, "nearest") == int(np.rint(v / 2.0**s))  # v / 2**s exact: |v| < 2**53


@settings(derandomize=True, max_examples=100)
@given(st.integers(min_value=-(2**40), max_value=2**40), st.sampled_from([8, 12, 16, 24, 32]))
def test_saturate_matches_numpy_clip(v: int, bits: int) -> None:
    lo, hi = -(2 ** (bits - 1)), 2 ** (bits - 1) - 1
    assert saturate(v, bits) == int(np.clip(np.int64(v), lo, hi))


# ---------------------------------------------------------------------------------------------
# Coefficient scaling
# ---------------------------------------------------------------------------------------------


def test_bank_shift_hand_worked() -> None:
    """Smallest shift, derived by hand for 16-bit words (nominal Q15).

    1.9 needs one integer bit: 1.9 * 2^14 = 31129.6 -> 31130 <= 32767 but 1.9 * 2^15 > 32767, so
    14 fraction bits, shift 1. 0.99999 * 2^15 = 32767.67 rounds to 32768 (does not fit), so it
    also needs shift 1. 0.001 * 2^24 = 16777.2 fits while 0.001 * 2^25 = 33554.4 does not: shift
    15 - 24 = -9 (small coefficients gain precision).
    """
    fmt = FixedFormat(16, 15)
    bank = scale_bank([1.9, -0.5], fmt)
    assert bank.fraction_bits == 14 and bank.shift == 1
    assert bank.integers == (31130, -8192)
    assert bank.values == (Fraction(31130, 2**14), Fraction(-1, 2))
    assert scale_bank([0.99999], fmt).shift == 1
    assert scale_bank([0.001], fmt).shift == -9
    # -1 fits exactly at 15 fraction bits (the most negative word).
    assert scale_bank([-1.0], fmt).fraction_bits == 15


@settings(derandomize=True, max_examples=60)
@given(
    st.lists(st.floats(min_value=-1e4, max_value=1e4, allow_nan=False), min_size=1, max_size=6),
    st.sampled_from([8, 16, 24, 32]),
)
def test_bank_fraction_bits_is_the_largest_that_fits(values: list[float], word: int) -> None:
    vals = [Fraction(v) for v in values]
    fc = bank_fraction_bits(vals, word)
    bank = scale_bank(values, FixedFormat(word, word - 1))
    hi = 2 ** (word - 1) - 1
    assert all(-hi - 1 <= i <= hi for i in bank.integers)
    if fc < 2 * word - 2:
        assert any(not -hi - 1 <= round_fraction(v, fc + 1) <= hi for v in vals)
    # each stored value within half an LSB of the ideal
    for v, q in zip(vals, bank.values):
        assert abs(v - q) <= Fraction(1, 2) ** (fc + 1)


def test_values_from_integers() -> None:
    fmt = parse_format("Q15")
    assert values_from_integers([16384, -32768], fmt) == (Fraction(1, 2), Fraction(-1))
    with pytest.raises(InputError, match=r"coef\[1\]"):
        values_from_integers([0, 40000], fmt, "coef")


# ---------------------------------------------------------------------------------------------
# Realisations
# ---------------------------------------------------------------------------------------------

BANDPASS = ss.butter(3, [45.0, 55.0], btype="bandpass", fs=10_000.0)  # 6th order, T = 100 us


def _lead_lag(period_s: float = 1e-3) -> tuple[np.ndarray, np.ndarray]:
    """Third-order lead-lag with an integral-like slow pole, by Tustin (scipy.signal.bilinear)."""
    num = np.polymul([1.0 / 20.0, 1.0], [1.0 / 5.0, 1.0]) * 8.0
    den = np.polymul(np.polymul([1.0 / 200.0, 1.0], [1.0 / 0.5, 1.0]), [1.0 / 400.0, 1.0])
    return ss.bilinear(num, den, fs=1.0 / period_s)


def test_normalise_rejects_noncausal() -> None:
    with pytest.raises(InputError, match=r"controller\.a.*causal"):
        normalise([1.0], [0.0, 1.0])
    with pytest.raises(InputError, match="controller.b"):
        normalise([0.0, 0.0], [1.0, 0.5])


def test_implement_rejects_bad_choices() -> None:
    with pytest.raises(InputError, match="realisation"):
        implement([1.0], [1.0, -0.5], 1e-3, "ladder", None)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="period"):
        implement([1.0], [1.0, -0.5], -1.0, "direct1", None)
    with pytest.raises(InputError, match="signal_format"):
        implement([1.0], [1.0, -0.5], 1e-3, "direct1", FixedFormat(16, 15), signal_format=FixedFormat(24, 23))


@pytest.mark.parametrize("realisation", REALISATIONS)
@pytest.mark.parametrize("fmt", [None, FixedFormat(16, 15), FixedFormat(12, 11), FixedFormat(24, 20)])
def test_running_arithmetic_is_the_reported_transfer(realisation: str, fmt: FixedFormat | None) -> None:
    """The program's linear arithmetic has exactly the transfer reported for the loop check.

    Impulse response of the float program (implemented coefficient values) against
    scipy.signal.lfilter on the reported (b, a) (reference library); the controller is well
    conditioned so both double computations agree to rounding.
    """
    b, a = _lead_lag()
    impl = implement(b, a, 1e-3, realisation, fmt)  # type: ignore[arg-type]
    x = np.zeros(400)
    x[0] = 1.0
    ours = simulate_float(impl, x)
    ref = ss.lfilter([float(v) for v in impl.b], [float(v) for v in impl.a], x)
    assert np.allclose(ours, ref, rtol=1e-9, atol=1e-12 * np.max(np.abs(ref)))
    # Reported poles are the roots of the reported denominator (mpmath, reference library).
    with mpmath.workdps(40):
        coeffs = [mpmath.mpf(c.numerator) / c.denominator for c in impl.a]
        ref_poles = sorted(abs(complex(r)) for r in mpmath.polyroots(coeffs, maxsteps=300, extraprec=300))
    assert sorted(abs(p) for p in impl.poles if abs(p) > 0) == pytest.approx([r for r in ref_poles if r > 0], rel=1e-9)
    # State space agrees too (eigenvalues are poles; realisation may add poles at 0).
    A, B, C, D = state_space(impl)
    assert max(np.abs(np.linalg.eigvals(A)), default=0.0) == pytest.approx(impl.spectral_radius, rel=1e-6)


@pytest.mark.parametrize("realisation", REALISATIONS)
def test_float_realisation_matches_ideal(realisation: str) -> None:
    """In double precision each structure computes the given controller (scipy.signal.lfilter)."""
    b, a = _lead_lag()
    impl = implement(b, a, 1e-3, realisation, None)  # type: ignore[arg-type]
    x = np.random.default_rng(7).standard_normal(500)
    assert np.allclose(simulate_float(impl, x), ss.lfilter(b, a, x), rtol=1e-9, atol=1e-9)


def test_sections_against_scipy_tf2sos() -> None:
    """Pairing and ordering agree with scipy.signal.tf2sos (pairing 'nearest'), reference library.

    Both pair the poles closest to the unit circle with the nearest zeros and put them last. Our
    section coefficients come from 40-digit roots, scipy's from double roots, so denominators
    agree to ~1e-6 (the double roots of clustered poles are that inaccurate), and our product
    reproduces the given denominator to double precision while scipy's is off by ~1e-14.
    """
    b, a = BANDPASS
    ours = np.array([[float(v) for v in num + den] for num, den in pair_sections(*normalise(b, a))])
    ref = ss.tf2sos(b, a)
    assert ours.shape == ref.shape
    assert np.allclose(ours[:, 3:], ref[:, 3:], atol=1e-5)
    dens = [np.array(r[3:]) for r in ours]
    prod = dens[0]
    for d in dens[1:]:
        prod = np.convolve(prod, d)
    assert np.allclose(prod, a, rtol=0, atol=1e-14)
    # Response: sosfilt over our sections equals the cascade simulated by us.
    x = np.random.default_rng(3).standard_normal(1000)
    impl = implement(b, a, 1e-4, "sections", None)
    assert np.allclose(simulate_float(impl, x), ss.sosfilt(ours, x), rtol=1e-9, atol=1e-12)
    # Accuracy: against the given (b, a) run as a difference equation in 50-digit arithmetic
    # (mpmath, reference library), our sections are right to ~1e-12 of the peak; scipy's
    # double-root sections and lfilter's direct form are off by ~1e-5 and ~1e-6 of the peak.
    truth = _mp_difference_equation(b, a, x)
    peak = np.max(np.abs(truth))
    assert np.max(np.abs(ss.sosfilt(ours, x) - truth)) < 1e-10 * peak
    assert np.max(np.abs(ss.sosfilt(ref, x) - truth)) > 1e-8 * peak  # why we find roots in 40 digits


def test_sections_peak_gain_scaling() -> None:
    """Each section's output but the last peaks at 1 over frequency for the input (l-infinity
    scaling, Jackson 1970, from memory), checked with scipy.signal.sosfreqz on a dense grid that
    includes the pole angles (reference library; grid peak within 1e-3 of the true peak)."""
    b, a = BANDPASS
    sos = np.array([[float(v) for v in num + den] for num, den in pair_sections(*normalise(b, a))])
    for k in range(1, len(sos)):
        _, h = ss.sosfreqz(sos[:k], worN=1 << 16)
        assert np.max(np.abs(h)) == pytest.approx(1.0, rel=1e-3)


def _mp_difference_equation(b, a, x, digits: int = 50) -> np.ndarray:
    """y[k] = sum b_i x[k-i] - sum a_i y[k-i] (a[0] = 1) in ``digits``-digit arithmetic."""
    with mpmath.workdps(digits):
        bb = [mpmath.mpf(float(v)) for v in b]
        aa = [mpmath.mpf(float(v)) for v in a]
        xs = [mpmath.mpf(float(v)) for v in x]
        ys: list = []
        for k in range(len(xs)):
            acc = mpmath.mpf(0)
            for i, c in enumerate(bb):
                if k - i >= 0:
                    acc += c * xs[k - i]
            for i in range(1, len(aa)):
                if k - i >= 0:
                    acc -= aa[i] * ys[k - i]
            ys.append(acc / aa[0])
        return np.array([float(v) for v in ys])


@settings(derandomize=True, max_examples=25)
@given(
    st.lists(st.tuples(st.floats(0.05, 0.95), st.floats(0.0, 3.1)), min_size=1, max_size=3),
    st.lists(st.floats(-0.95, 0.95), min_size=0, max_size=2),
    st.lists(st.floats(-1.5, 1.5), min_size=1, max_size=5),
    st.integers(0, 2),
)
@example(pairs=[(0.95, 0.0)], reals=[0.9453125], zeros=[0.0], delays=0)  # found by hypothesis: double pole
def test_sections_product_is_the_controller(pairs, reals, zeros, delays) -> None:
    """The product of the sections is the controller (exact polynomial algebra + scipy lfilter)."""
    poles = []
    for r, th in pairs:
        poles += [r * np.exp(1j * th), r * np.exp(-1j * th)]
    poles += reals
    a = np.real(np.poly(poles))
    zs = zeros[: len(poles) - delays] if len(poles) > delays else []
    b = np.concatenate([np.zeros(delays), np.real(np.poly(zs)) if zs else [1.0]]) * 0.7
    impl = implement(b, a, 1e-3, "sections", None)
    x = np.random.default_rng(1).standard_normal(200)
    ref = ss.lfilter(b, a, x)
    assert np.allclose(simulate_float(impl, x), ref, rtol=1e-7, atol=1e-7 * max(1.0, np.max(np.abs(ref))))
    # Poles of the controller as given (its double coefficients), by mpmath at 40 digits. Not the
    # poles it was built from: a double pole (angle 0) next to a real pole splits by ~1e-7 when
    # the coefficients are rounded to double. The sections, rounded to double again, agree to
    # the square root of the rounding (a double root in one section): 1e-6 relative.
    with mpmath.workdps(40):
        radii = [abs(r) for r in mpmath.polyroots([mpmath.mpf(float(c)) for c in a], maxsteps=500, extraprec=400)]
    assert impl.spectral_radius == pytest.approx(float(max(radii)), rel=1e-6)
    # Ordering rule: distance of each section's poles to the unit circle is non-increasing.
    dist = [min(abs(1 - abs(r)) for r in np.roots([float(c) for c in den])) if den[2] or den[1] else 1.0
            for _, den in impl.sections or ()]
    assert all(dist[i] >= dist[i + 1] - 1e-9 for i in range(len(dist) - 1))


def test_delta_coefficients_closed_form() -> None:
    """C(z) = (z - 0.5)/(z - 0.9) with z = 1 + T delta gives (delta + 0.5/T)/(delta + (1 - 0.9)/T).

    Derived by substitution; exact in Fractions of the double coefficients.
    """
    T = 0.01
    impl = implement([1.0, -0.5], [1.0, -0.9], T, "delta", None)
    beta, alpha = delta_coefficients(impl)
    t = Fraction(T)
    assert beta == (Fraction(1), Fraction(1, 2) / t)
    assert alpha[0] == 1
    assert abs(alpha[1] - (1 - Fraction(0.9)) / t) < Fraction(1, 10**12)


def test_delta_step_is_power_of_two_near_pole_distance() -> None:
    """Poles at 1 - 2^-6 and 1 - 2^-8: geometric mean distance 2^-7, so Delta = 2^-7 (by hand)."""
    a = np.poly([1 - 2.0**-6, 1 - 2.0**-8])
    impl = implement([1.0, 0.0, 0.0], a, 1e-3, "delta", None)
    assert impl.delta_step == Fraction(1, 128)


def test_fixed_direct_form_matches_numpy_integer_arithmetic() -> None:
    """Direct form I with floor rounding against a numpy int64 implementation written here.

    y[k] = floor((sum b_i x[k-i] - sum a_i y[k-i]) / 2^fc) with the stored integer coefficients;
    the signals are kept small so no saturation occurs (numpy.right_shift is the arithmetic shift).
    """
    b, a = _lead_lag()
    impl = implement(b, a, 1e-3, "direct1", FixedFormat(32, 31), rounding="floor")
    coefs = impl.coefficients
    n = len(impl.a) - 1
    bi = np.array([c.integer for c in coefs[: n + 1]], dtype=object)
    ai = np.array([c.integer for c in coefs[n + 1 :]], dtype=object)
    fcs = {c.fraction_bits for c in coefs}
    rng = np.random.default_rng(11)
    x = rng.integers(-2000, 2000, size=300)
    ours = simulate_fixed(impl, x.tolist())
    # |inputs| < 2000 keep every product and sum well inside int64.
    fc_min = min(fcs)
    bshift = [c.fraction_bits - fc_min for c in coefs[: n + 1]]
    ashift = [c.fraction_bits - fc_min for c in coefs[n + 1 :]]
    xh = [0] * (n + 1)
    yh = [0] * n
    ref = []
    for xv in x.tolist():
        xh = [xv] + xh[:-1]
        acc = 0
        for i in range(n + 1):
            acc += int(np.right_shift(np.int64(bi[i] * xh[i]), bshift[i]))
        for i in range(n):
            acc -= int(np.right_shift(np.int64(ai[i] * yh[i]), ashift[i]))
        y = int(np.right_shift(np.int64(acc), fc_min))
        yh = [y] + yh[:-1]
        ref.append(y)
    assert ours == ref


@pytest.mark.parametrize("realisation", REALISATIONS)
def test_fixed_simulation_tracks_float_at_32_bits(realisation: str) -> None:
    """With 32-bit words the fixed-point output stays within a few hundred LSB of lfilter."""
    b, a = _lead_lag()
    impl = implement(b, a, 1e-3, realisation, FixedFormat(32, 31))  # type: ignore[arg-type]
    rng = np.random.default_rng(5)
    x = rng.uniform(-0.01, 0.01, 400)
    xi = [int(round(v * 2**31)) for v in x]
    y = np.array(simulate_fixed(impl, xi), dtype=float) / 2**31
    ref = ss.lfilter(b, a, np.array(xi, dtype=float) / 2**31)
    assert np.max(np.abs(y - ref)) < 1e-6


def test_fragile_narrow_band_direct_form_unstable_sections_not() -> None:
    """A 6th-order band-pass (45-55 Hz) sampled at 10 kHz: direct form at 16 bits is unstable.

    Reason: the six poles sit in a cluster at |z - 1| ~ 0.03. A root of a polynomial moves by
    d(coefficient) / |a'(p)|, and |a'(p)| is the product of the distances to the other five poles
    (~1e-7 here), so the absolute rounding of the direct-form coefficients (whose sizes reach
    C(6,3) = 20, leaving 10 fraction bits in a 16-bit word) moves the poles far outside the unit
    circle. Second-order sections hold each conjugate pair alone, the sensitivity is then
    1 / |p - conj(p)| ~ 30, and the pair stays inside. Oppenheim & Schafer, "Discrete-Time Signal
    Processing", 3rd ed., 2010, section 6.8 (effects of coefficient quantisation; poles of
    clustered high-order direct forms), from memory. The delta form keeps them inside too
    (Middleton & Goodwin 1990, chapter 2, from memory).
    """
    b, a = BANDPASS
    fmt = parse_format("Q15")
    direct = implement(b, a, 1e-4, "direct1", fmt)
    sections = implement(b, a, 1e-4, "sections", fmt)
    delta = implement(b, a, 1e-4, "delta", fmt)
    with mpmath.workdps(50):
        coeffs = [mpmath.mpf(c.numerator) / c.denominator for c in direct.a]
        moduli = [abs(r) for r in mpmath.polyroots(coeffs, maxsteps=500, extraprec=500)]
    assert max(moduli) > 1.05
    assert direct.spectral_radius == pytest.approx(float(max(moduli)), rel=1e-9)
    for _, den in sections.sections or ():
        assert max(abs(np.roots([float(c) for c in den]))) < 1.0
    assert sections.spectral_radius < 1.0
    assert delta.spectral_radius < 1.0
    # The ideal controller is stable (numpy.roots of the given denominator).
    assert max(abs(np.roots(a))) < 1.0


def test_implement_word_lengths_shapes() -> None:
    b, a = _lead_lag()
    rows = implement_word_lengths(b, a, 1e-3, range(8, 33, 8))
    assert len(rows) == 4 * len(REALISATIONS)
    assert {r.word_bits for r in rows} == {8, 16, 24, 32}


# ---------------------------------------------------------------------------------------------
# Signal levels
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("p", [0.9, -0.5, 0.5])
def test_levels_first_order_closed_form(p: float) -> None:
    """C = 1 / (1 - p z^-1): impulse response p^k, so the l1 norm is 1 / (1 - |p|); the step
    response (1 - p^(k+1)) / (1 - p) peaks at 1 / (1 - p) for p > 0 and at 1 (k = 0) for p < 0.
    In direct form II transposed the state s1 = p y, so its levels are |p| times the output's.
    """
    impl = implement([1.0], [1.0, -p], 1e-3, "direct2t", None)
    levels = {r.name: r for r in signal_levels(impl).registers}
    assert levels["y"].bounded_input_gain == pytest.approx(1 / (1 - abs(p)), rel=1e-12)
    step = 1 / (1 - p) if p > 0 else 1.0
    assert levels["y"].step_peak == pytest.approx(step, rel=1e-12)
    assert levels["s1"].bounded_input_gain == pytest.approx(abs(p) / (1 - abs(p)), rel=1e-12)


def test_levels_integrator_unbounded_and_overflow_likely() -> None:
    """An integrator (pole at z = 1) has no l1 bound and a ramp step response (inf, inf)."""
    impl = implement([0.5, -0.4], [1.0, -1.0], 1e-3, "direct2t", FixedFormat(16, 15))
    levels = signal_levels(impl)
    assert not levels.converged
    y = {r.name: r for r in levels.registers}["y"]
    assert math.isinf(y.bounded_input_gain) and math.isinf(y.step_peak)
    report = overflow_report(impl, levels=levels)
    assert report.risk == "likely"
    assert report.headroom_bits == -math.inf


def test_overflow_report_gain_against_word() -> None:
    """A gain of 3 (direct form I, Q15 signals, |x| <= 1) needs log2(3) = 1.58 bits more than the
    output word has: headroom log2(1 / 3) (signal full scale 1 - 2^-15, so input bound that)."""
    impl = implement([3.0], [1.0], 1e-3, "direct1", FixedFormat(16, 15))
    report = overflow_report(impl)
    y = {r.name: r for r in report.registers}["y"]
    bound = 1 - 2.0**-15
    assert y.worst_case == pytest.approx(3 * bound)
    assert y.headroom_bits == pytest.approx(math.log2(2.0**0 / (3 * bound)), abs=1e-9)
    assert y.risk == "likely"
    small = overflow_report(implement([0.25], [1.0, -0.5], 1e-3, "direct1", FixedFormat(16, 15)))
    assert small.risk == "none"


def test_overflow_report_rejects_bad_bound() -> None:
    impl = implement([0.25], [1.0, -0.5], 1e-3, "direct1", FixedFormat(16, 15))
    with pytest.raises(InputError, match="input_bound"):
        overflow_report(impl, input_bound=-1.0)


def test_smallest_word_bits_for_the_fragile_case() -> None:
    """Sections keep the band-pass poles strictly inside from 12 bits on; direct form never does.

    Closed form: a section with poles p, conj(p) has 1 + a1 + a2 = |1 - p|^2 (its denominator at
    z = 1), about (2 pi 50 Hz * 100 us)^2 ~ 1e-3 here. With |a1| ~ 2 a w-bit word keeps w - 2
    fraction bits, so up to 11 bits (LSB 2^-9 ~ 2e-3) the rounding can cancel it exactly and put
    a pole ON z = 1: checked in exact arithmetic below, independent of any root finder.
    Direct form fails at every word up to 32 bits (radius 1.0126 at 32 bits; mpmath-checked in
    the fragile test above for 16 bits).
    """
    b, a = BANDPASS
    rows = implement_word_lengths(b, a, 1e-4, range(8, 33), ["sections", "direct1"])  # type: ignore[list-item]
    sections = [r for r in rows if r.realisation == "sections"]
    direct = [r for r in rows if r.realisation == "direct1"]
    for r in sections:
        on_one = any(den[0] + den[1] + den[2] == 0 for _, den in r.sections or ())
        assert on_one == (r.word_bits <= 11)
        if on_one:
            assert r.spectral_radius == pytest.approx(1.0, abs=1e-12)
    inside = lambda r: r.spectral_radius < 1.0  # noqa: E731
    assert smallest_word_bits(sections, inside) == 12
    assert smallest_word_bits(direct, inside) is None


def test_smallest_word_bits_not_monotone() -> None:
    """A pass at 10 bits, fail at 11, pass from 12: the answer is 12 (start of the final run)."""
    b, a = _lead_lag()
    rows = implement_word_lengths(b, a, 1e-3, range(10, 15), ["direct1"])  # type: ignore[list-item]
    verdicts = {10: True, 11: False, 12: True, 13: True, 14: True}
    assert smallest_word_bits(rows, lambda r: verdicts[r.word_bits]) == 12


def test_to_dict_is_json_ready() -> None:
    import json

    from sampled.commands.common import to_jsonable

    impl = implement([0.5, 0.1], [1.0, -0.5], 1e-3, "delta", FixedFormat(16, 15))
    data = json.loads(json.dumps(to_jsonable(impl.to_dict()), allow_nan=False))
    assert data["format"] == "Q15" and data["word_bits"] == 16
    assert Fraction(data["a"][1]) == impl.a[1]
    assert [c["integer"] for c in data["coefficients"]] == [c.integer for c in impl.coefficients]
