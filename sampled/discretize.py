"""From continuous to discrete: hold equivalents, controller mappings and delays.

Hold equivalents describe a continuous plant as the sampled controller sees it (exact for the hold
they assume): zero-order hold (``zoh``) and first-order triangle hold (``foh``). Mappings turn a
continuous controller design into a difference equation (approximations): Tustin / bilinear with an
optional prewarp frequency (``tustin``), forward and backward Euler, matched pole-zero
(``matched``). Every result carries the shift form and the delta form (see
:mod:`sampled.discrete`), the latter computed without subtracting nearly equal numbers.

A transport delay of any length is split into whole periods (a pure ``z^-N``) and a fraction of a
period, which the zero-order hold equivalent represents exactly by augmenting the state with the
previous input (the modified z-transform in state-space form).

References
----------
G. F. Franklin, J. D. Powell and M. L. Workman, "Digital Control of Dynamic Systems", 3rd ed.,
Addison-Wesley, 1998, chapter 4 (zero-order hold equivalent, delays, modified z-transform) and
chapter 6 (Tustin with prewarping, matched pole-zero, triangle hold equivalent).
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., Prentice Hall, 1997,
section 2.3 (sampling systems with time delay) and section 8.2 (approximations of continuous
controllers).
E. I. Jury, "Theory and Application of the z-Transform Method", Wiley, 1964, chapter 2
(modified z-transform).
"""

from __future__ import annotations

import math
import weakref
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np
import scipy.linalg
import scipy.signal

from sampled.discrete import DiscreteSystem, fmt_complex
from sampled.errors import InputError
from sampled.phi import hold_integrals
from sampled.systems import ContinuousSystem

Method = Literal["zoh", "foh", "tustin", "forward-euler", "backward-euler", "matched"]
#: The method names in the order the command line lists them.
METHODS: tuple[str, ...] = get_args(Method)
#: Methods that are exact for their hold (hold equivalents) rather than approximations.
HOLD_METHODS: tuple[str, ...] = ("zoh", "foh")

#: A delay whose ratio to the period is within this of an integer counts as whole periods.
WHOLE_PERIOD_TOLERANCE = 1e-9


@dataclass(frozen=True)
class DelaySplit:
    """A delay split into whole sample periods and a remaining fraction.

    Attributes
    ----------
    whole_periods : int
        ``N`` in ``delay = N T + fraction_s``.
    fraction_s : float [s]
        ``0 <= fraction_s < T``; exactly 0 when the delay is within ``WHOLE_PERIOD_TOLERANCE``
        periods of a whole number of periods.
    """

    whole_periods: int
    fraction_s: float


def split_delay(delay_s: float, period_s: float) -> DelaySplit:
    """Split ``delay_s`` [s] into whole periods of ``period_s`` [s] and a fraction.

    Ratios within ``WHOLE_PERIOD_TOLERANCE`` of an integer snap to it, so ``3 ms`` at ``1 ms``
    (``3.0000000000000004`` periods in floating point) is three whole periods.
    """
    _check_period(period_s)
    if not (math.isfinite(delay_s) and delay_s >= 0):
        raise InputError(f"the delay must be finite and non-negative, got {delay_s!r}", "delay")
    ratio = delay_s / period_s
    nearest = round(ratio)
    if abs(ratio - nearest) <= WHOLE_PERIOD_TOLERANCE * max(1.0, ratio):
        return DelaySplit(int(nearest), 0.0)
    whole = math.floor(ratio)
    fraction = delay_s - whole * period_s
    fraction = min(max(fraction, 0.0), period_s)
    return DelaySplit(whole, fraction)


@dataclass(frozen=True)
class _Realisation:
    a: np.ndarray
    b: np.ndarray
    c: np.ndarray
    d: np.ndarray
    poles: np.ndarray


_REALISATIONS: "weakref.WeakKeyDictionary[ContinuousSystem, _Realisation]" = weakref.WeakKeyDictionary()


def _realisation(system: ContinuousSystem) -> _Realisation:
    """``system.state_space()`` and its poles, computed once per system object.

    The realisation finds the poles in extended precision (mpmath), which costs far more than the
    discretisation itself; a sweep over periods reuses it. Arrays are read-only.
    """
    found = _REALISATIONS.get(system)
    if found is None:
        a, b, c, d = (np.array(m, dtype=float) for m in system.state_space())
        poles = system.poles()
        for m in (a, b, c, d, poles):
            m.setflags(write=False)
        found = _Realisation(a, b, c, d, poles)
        _REALISATIONS[system] = found
    return found


def _check_period(period_s: float) -> None:
    if isinstance(period_s, bool) or not isinstance(period_s, (int, float)) or not (
        math.isfinite(period_s) and period_s > 0
    ):
        raise InputError(f"the sample period must be finite and positive, got {period_s!r}", "period")


# ---- hold equivalents -----------------------------------------------------------------------------

def zoh_with_delay(system: ContinuousSystem, period_s: float, delay_s: float) -> DiscreteSystem:
    """Zero-order-hold equivalent of the rational part of ``system`` behind a delay of ``delay_s``.

    This is the pulse transfer from the controller output ``u[k]`` (computed at ``kT``) to the
    sampled output ``y[k]`` when ``u`` reaches the hold ``delay_s`` later and the output is sampled
    at ``kT``. Pass the whole input-to-output delay: plant transport delay plus computation delay.

    Parameters
    ----------
    system : ContinuousSystem
        The continuous system; its own ``delay_s`` is NOT added again (``delay_s`` is the total and
        must be at least ``system.delay_s``).
    period_s : float [s]
        Sample period ``T > 0``.
    delay_s : float [s]
        Total delay ``tau = N T + theta`` with ``0 <= theta < T``.

    Returns
    -------
    DiscreteSystem
        ``delay_samples = N``; for ``theta > 0`` one extra state holds ``u[k-1]``.

    Notes
    -----
    With ``theta > 0`` the held input is ``u[k-1]`` on ``[kT, kT + theta)`` and ``u[k]`` on
    ``[kT + theta, (k+1)T)``. Integrating ``dx/dt = A x + B u`` over the period,

        x[k+1] = Phi x[k] + Gamma_0 u[k] + Gamma_1 u[k-1],
        Gamma_0 = int_0^(T-theta) exp(A s) ds B,
        Gamma_1 = exp(A (T-theta)) int_0^theta exp(A s) ds B,

    and ``y[k] = C x[k] + D u[k-1]`` (Astrom and Wittenmark 1997, section 2.3; Franklin, Powell and
    Workman 1998, section 4.3.4). Both integrals come from block exponentials over ``T - theta`` and
    ``theta``, so ``Gamma_1`` is never the difference ``Gamma - Gamma_0``. The delta form of the
    augmented system is ``[[A_delta, Gamma_1/T], [0, -1/T]]`` and ``[Gamma_0/T; 1/T]``.
    """
    _check_period(period_s)
    if not (isinstance(delay_s, (int, float)) and math.isfinite(delay_s) and delay_s >= 0):
        raise InputError(f"the delay must be finite and non-negative, got {delay_s!r}", "delay")
    if delay_s < system.delay_s * (1 - 1e-12):
        raise InputError(
            f"the total delay {delay_s!r} s is shorter than the system's own transport delay "
            f"{system.delay_s!r} s (pass plant delay plus computation delay)",
            "delay",
        )
    split = split_delay(delay_s, period_s)
    r = _realisation(system)
    a, b, c, d = r.a, r.b, r.c, r.d
    n = a.shape[0]
    t = period_s
    full = hold_integrals(a, b, t)
    theta = split.fraction_s
    if theta == 0.0:
        disc = DiscreteSystem(full.phi, full.gamma, c, d, t, full.a_delta, full.b_delta,
                              split.whole_periods, "zoh")
    else:
        late = hold_integrals(a, b, t - theta)  # u[k] acts during the last T - theta
        early = hold_integrals(a, b, theta)  # u[k-1] acts during the first theta
        gamma0 = late.gamma
        gamma1 = late.phi @ early.gamma
        m = n + 1
        phi = np.zeros((m, m))
        a_dl = np.zeros((m, m))
        phi[:n, :n] = full.phi
        phi[:n, n:] = gamma1
        a_dl[:n, :n] = full.a_delta
        a_dl[:n, n:] = gamma1 / t
        a_dl[n, n] = -1.0 / t
        gamma = np.vstack([gamma0, [[1.0]]])
        b_dl = np.vstack([gamma0 / t, [[1.0 / t]]])
        c_aug = np.hstack([c, d])
        disc = DiscreteSystem(phi, gamma, c_aug, np.zeros((1, 1)), t, a_dl, b_dl, split.whole_periods, "zoh")
    return _with_notes(disc, system, "zero-order hold")


def zero_order_hold(system: ContinuousSystem, period_s: float) -> DiscreteSystem:
    """Zero-order-hold equivalent including the system's own transport delay.

    Without delay, from one block exponential (Van Loan 1978):

        expm([[A, B], [0, 0]] T) = [[Phi, Gamma], [0, 1]],   Phi = exp(A T),  Gamma = T phi_1(A T) B,

    and the delta form ``A_delta = A phi_1(A T)``, ``B_delta = phi_1(A T) B`` from the same
    phi function. See :func:`zoh_with_delay` for delays.

    Parameters
    ----------
    system : ContinuousSystem
    period_s : float [s]
    """
    return zoh_with_delay(system, period_s, system.delay_s)


def first_order_hold(system: ContinuousSystem, period_s: float) -> DiscreteSystem:
    """Triangle-hold (non-causal first-order hold) equivalent.

    The input is interpolated linearly between samples. Integrating over one period,

        x[k+1] = Phi x[k] + (Gamma - Gamma_2) u[k] + Gamma_2 u[k+1],
        Gamma = T phi_1(A T) B,   Gamma_2 = T phi_2(A T) B = (1/T) int_0^T exp(A s)(T - s) ds B,

    and with the state ``xi[k] = x[k] - Gamma_2 u[k]`` this is causal:

        xi[k+1] = Phi xi[k] + (Gamma + (Phi - I) Gamma_2) u[k],   y[k] = C xi[k] + (D + C Gamma_2) u[k].

    ``(Phi - I) Gamma_2 = T A_delta Gamma_2`` needs no subtraction. A transport delay must be a
    whole number of periods here.

    References
    ----------
    Franklin, Powell and Workman (1998), section 6.3.2 (triangle hold equivalent).
    """
    _check_period(period_s)
    split = split_delay(system.delay_s, period_s)
    if split.fraction_s:
        raise InputError(
            f"the first-order hold takes only whole-period delays; {system.delay_s!r} s is "
            f"{system.delay_s / period_s:.6g} periods (use zoh for a fractional delay)",
            "delay",
        )
    r = _realisation(system)
    a, b, c, d = r.a, r.b, r.c, r.d
    t = period_s
    f = hold_integrals(a, b, t, ramp=True)
    assert f.ramp is not None
    b_dl = f.b_delta + f.a_delta @ f.ramp
    gamma = f.gamma + t * (f.a_delta @ f.ramp)
    d_new = d + c @ f.ramp
    disc = DiscreteSystem(f.phi, gamma, c, d_new, t, f.a_delta, b_dl, split.whole_periods, "foh")
    return _with_notes(disc, system, "first-order hold")


# ---- mappings -----------------------------------------------------------------------------------

def _rational_mapping(
    system: ContinuousSystem, period_s: float, weight: float, h: float, method: str, label: str
) -> DiscreteSystem:
    """Substitution ``s = (z - 1) / (h (weight z + 1 - weight))`` in state space.

    ``weight`` 0: forward Euler, 1/2: Tustin (``h = T``, or prewarped), 1: backward Euler. With
    ``M = I - weight h A``:

        Phi = M^-1 (I + (1 - weight) h A),  Gamma = h M^-1 B,  C_d = C M^-1,  D_d = D + weight C Gamma,

    and the delta form ``(Phi - I)/T = (h/T) M^-1 A``, ``Gamma/T = (h/T) M^-1 B`` (no subtraction).
    """
    whole = _whole_delay(system, period_s, label)
    r = _realisation(system)
    a, b, c, d = r.a, r.b, r.c, r.d
    n = a.shape[0]
    eye = np.eye(n)
    m = eye - weight * h * a
    if n:
        sv = np.linalg.svd(m, compute_uv=False)
        if sv[-1] <= 1e-13 * max(1.0, float(sv[0])):
            pole = 1.0 / (weight * h) if weight else math.inf
            raise InputError(
                f"the {label} mapping sends a pole at s = {pole:.6g} rad/s to z = infinity; "
                "choose another period",
                "period",
            )
        lu = scipy.linalg.lu_factor(m, check_finite=True)
        phi = scipy.linalg.lu_solve(lu, eye + (1.0 - weight) * h * a)
        minv_a = scipy.linalg.lu_solve(lu, a)
        minv_b = scipy.linalg.lu_solve(lu, b)
        c_d = scipy.linalg.lu_solve(lu, c.T, trans=1).T
    else:
        phi, minv_a, minv_b, c_d = eye, a, b.reshape(0, 1), c
    gamma = h * minv_b
    d_d = d + weight * (c @ gamma)
    ratio = h / period_s
    disc = DiscreteSystem(phi, gamma, c_d, d_d, period_s, ratio * minv_a, ratio * minv_b, whole, method)
    return _with_notes(disc, system, label)


def tustin(system: ContinuousSystem, period_s: float, prewarp_rad_s: float | None = None) -> DiscreteSystem:
    """Tustin (bilinear) mapping ``s = (2/T) (z - 1)/(z + 1)``, optionally prewarped.

    With a prewarp frequency ``w0`` the map is ``s = (w0 / tan(w0 T/2)) (z - 1)/(z + 1)``, so that
    ``z = exp(j w0 T)`` lands on ``s = j w0`` and the discrete response equals the continuous one
    exactly at ``w0``.

    Parameters
    ----------
    system : ContinuousSystem
    period_s : float [s]
    prewarp_rad_s : float [rad/s], optional
        ``0 < w0 < pi / T`` (below the Nyquist frequency).

    References
    ----------
    Franklin, Powell and Workman (1998), section 6.3.1 (Tustin's method with prewarping).
    """
    _check_period(period_s)
    h = period_s
    label = "Tustin"
    if prewarp_rad_s is not None:
        nyquist = math.pi / period_s
        if not (isinstance(prewarp_rad_s, (int, float)) and math.isfinite(prewarp_rad_s) and prewarp_rad_s > 0):
            raise InputError(f"the prewarp frequency must be finite and positive, got {prewarp_rad_s!r}", "prewarp")
        if prewarp_rad_s >= nyquist:
            raise InputError(
                f"the prewarp frequency {prewarp_rad_s / (2 * math.pi):.6g} Hz is at or above the Nyquist "
                f"frequency {nyquist / (2 * math.pi):.6g} Hz of the period {period_s:.6g} s",
                "prewarp",
            )
        half = prewarp_rad_s * period_s / 2.0
        h = 2.0 * math.tan(half) / prewarp_rad_s
        label = f"Tustin (prewarped at {prewarp_rad_s:.6g} rad/s)"
    return _rational_mapping(system, period_s, 0.5, h, "tustin", label)


def forward_euler(system: ContinuousSystem, period_s: float) -> DiscreteSystem:
    """Forward Euler (forward difference) ``s = (z - 1)/T``: ``Phi = I + T A``, ``A_delta = A``.

    A stable pole ``p`` maps to ``z = 1 + p T``, outside the unit circle when ``|1 + p T| > 1``
    (a fast pole at a slow period); the result's notes say so.
    """
    _check_period(period_s)
    return _rational_mapping(system, period_s, 0.0, period_s, "forward-euler", "forward-Euler")


def backward_euler(system: ContinuousSystem, period_s: float) -> DiscreteSystem:
    """Backward Euler (backward difference) ``s = (z - 1)/(T z)``: ``z = 1/(1 - p T)``."""
    _check_period(period_s)
    return _rational_mapping(system, period_s, 1.0, period_s, "backward-euler", "backward-Euler")


def _expm1_complex(x: complex) -> complex:
    """``exp(x) - 1`` for complex ``x`` without cancellation:
    ``expm1(a) cos b - 2 sin^2(b/2) + j exp(a) sin b``."""
    a, b = x.real, x.imag
    if b == 0:
        return complex(math.expm1(a), 0.0)
    return complex(math.expm1(a) * math.cos(b) - 2.0 * math.sin(b / 2.0) ** 2, math.exp(a) * math.sin(b))


def _delta_images(roots: np.ndarray, period_s: float) -> list[complex]:
    """Delta-plane images ``(exp(r T) - 1)/T`` of real roots and of conjugate pairs (each pair
    computed once, so the two members are exactly conjugate)."""
    out: list[complex] = []
    for r in roots:
        if r.imag == 0:
            out.append(complex(math.expm1(r.real * period_s) / period_s))
        elif r.imag > 0:
            w = _expm1_complex(complex(r) * period_s) / period_s
            out += [w, w.conjugate()]
    return out


def _factors(roots: list[complex]) -> list[np.ndarray]:
    """Real monic factors ``[1, -r]`` and ``[1, -2 Re r, |r|^2]``, second-order ones first."""
    out = [np.array([1.0, -r.real]) for r in roots if r.imag == 0]
    out = [np.array([1.0, -2.0 * r.real, r.real**2 + r.imag**2]) for r in roots if r.imag > 0] + out
    return out


def _cascade_from_roots(
    zeros: list[complex], poles: list[complex], gain: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Balanced state-space realisation of ``gain prod(x - zeros)/prod(x - poles)`` as a cascade of
    first- and second-order sections (each pole a function of at most two coefficients, which keeps
    widely spread poles accurate; companion forms would not)."""
    p_f, z_f = _factors(poles), _factors(zeros)
    if not p_f:
        return np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), np.array([[gain]])
    # Each section: [numerator, denominator, room left for zeros]. Zero factors go to the first
    # section with room; when none has room, the two roomiest sections merge (a complex zero pair
    # facing two real poles needs a second-order section).
    secs: list[list] = [[np.array([1.0]), pf, pf.size - 1] for pf in p_f]
    for zf in z_f:
        deg = zf.size - 1
        while not any(sec[2] >= deg for sec in secs):
            secs.sort(key=lambda sec: -sec[2])
            s1, s2 = secs.pop(0), secs.pop(0)
            secs.insert(0, [np.polymul(s1[0], s2[0]), np.polymul(s1[1], s2[1]), s1[2] + s2[2]])
        sec = next(sec for sec in secs if sec[2] >= deg)
        sec[0] = np.polymul(sec[0], zf)
        sec[2] -= deg
    sections = [scipy.signal.tf2ss(num_k, den_k) for num_k, den_k, _ in secs]
    a, b, c, d = (np.array(m, dtype=float) for m in sections[0])
    for sec in sections[1:]:
        a2, b2, c2, d2 = sec
        n1, n2 = a.shape[0], a2.shape[0]
        a = np.block([[a, np.zeros((n1, n2))], [b2 @ c, a2]])
        b = np.vstack([b, b2 @ d])
        c = np.hstack([d2 @ c, c2])
        d = d2 @ d
    c, d = c * gain, d * gain
    _, (scale, _) = scipy.linalg.matrix_balance(a, permute=False, separate=True)
    a = a * scale[np.newaxis, :] / scale[:, np.newaxis]
    b = b / scale[:, np.newaxis]
    c = c * scale[np.newaxis, :]
    return a, b, c, d


def matched_pole_zero(system: ContinuousSystem, period_s: float) -> DiscreteSystem:
    """Matched pole-zero mapping: every pole and finite zero ``r`` goes to ``z = exp(r T)``.

    Conventions (stated once here):

    * Zeros at infinity: a system with ``r >= 1`` more poles than zeros gets ``r - 1`` zeros at
      ``z = -1`` and keeps one zero at infinity, so the result stays strictly proper and leaves a
      full period for computation (the "modified" matched mapping of Franklin, Powell and Workman
      1998, section 6.3.3). A biproper system keeps its degree.
    * Gain: the low-frequency behaviour is matched. With ``k`` the number of poles minus zeros at
      the origin, ``lim_{s->0} s^k G(s) = lim_{z->1} ((z - 1)/T)^k G_d(z)``; for ``k = 0`` this is
      the DC gain ``G_d(1) = G(0)``, for an integrator ``1/s -> T/(z - 1)``.

    The mapping is built in the delta plane, ``lambda = expm1(r T)/T``, so poles near ``z = 1`` keep
    their accuracy at fast sampling, and realised as a cascade of first- and second-order sections.
    """
    _check_period(period_s)
    whole = _whole_delay(system, period_s, "matched pole-zero")
    t = period_s
    num, den = system.num_exact, system.den_exact
    if all(c == 0 for c in num):
        return DiscreteSystem.from_delta(
            np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), 0.0, t, whole, "matched")
    poles = _realisation(system).poles
    zeros = _cached_zeros(system)
    lam = _delta_images(poles, t)
    mu = _delta_images(zeros, t)
    rel = len(lam) - len(mu)
    mu += [complex(-2.0 / t)] * max(rel - 1, 0)  # zeros at infinity -> z = -1, one kept at infinity

    def lowest(p: tuple) -> object:
        return next(coef for coef in reversed(p) if coef != 0)

    g0 = float(lowest(num) / lowest(den))  # lim s->0 s^k G(s), exact ratio

    def prod_nonzero(vals: list[complex]) -> complex:
        acc = complex(1.0)
        for w in vals:
            if w != 0:
                acc *= -w
        return acc

    gain = g0 * (prod_nonzero(lam) / prod_nonzero(mu)).real
    a, b, c, d = _cascade_from_roots(mu, lam, gain)  # a transfer in the delta variable
    disc = DiscreteSystem.from_delta(a, b, c, d, t, whole, "matched")
    return _with_notes(disc, system, "matched pole-zero")


_ZEROS: "weakref.WeakKeyDictionary[ContinuousSystem, np.ndarray]" = weakref.WeakKeyDictionary()


def _cached_zeros(system: ContinuousSystem) -> np.ndarray:
    found = _ZEROS.get(system)
    if found is None:
        found = system.zeros() if len(system.num_exact) > 1 else np.zeros(0, dtype=complex)
        found.setflags(write=False)
        _ZEROS[system] = found
    return found


# ---- dispatch -----------------------------------------------------------------------------------

def discretize(
    system: ContinuousSystem,
    period_s: float,
    method: Method = "zoh",
    prewarp_rad_s: float | None = None,
) -> DiscreteSystem:
    """Discretise ``system`` (including its transport delay) at ``period_s`` [s] by ``method``.

    Parameters
    ----------
    system : ContinuousSystem
    period_s : float [s]
    method : {"zoh", "foh", "tustin", "forward-euler", "backward-euler", "matched"}
    prewarp_rad_s : float [rad/s], optional
        Only with ``tustin``.

    Notes
    -----
    Hold equivalents take a delay of any length (``zoh``; ``foh`` whole periods); the mappings take a
    delay only when it is a whole number of periods, realised as ``z^-N``.
    """
    _check_period(period_s)
    if method not in METHODS:
        raise InputError(f"unknown method {method!r}; allowed: {', '.join(METHODS)}", "method")
    if prewarp_rad_s is not None and method != "tustin":
        raise InputError(f"a prewarp frequency applies only to the tustin method, not {method!r}", "prewarp")
    if method == "zoh":
        return zero_order_hold(system, period_s)
    if method == "foh":
        return first_order_hold(system, period_s)
    if method == "tustin":
        return tustin(system, period_s, prewarp_rad_s)
    if method == "forward-euler":
        return forward_euler(system, period_s)
    if method == "backward-euler":
        return backward_euler(system, period_s)
    return matched_pole_zero(system, period_s)


# ---- helpers ------------------------------------------------------------------------------------

def _whole_delay(system: ContinuousSystem, period_s: float, label: str) -> int:
    split = split_delay(system.delay_s, period_s)
    if split.fraction_s:
        raise InputError(
            f"the {label} mapping takes only a delay that is a whole number of periods; "
            f"{system.delay_s!r} s is {system.delay_s / period_s:.6g} periods (use zoh for a fractional delay)",
            "delay",
        )
    return split.whole_periods


def stability_change(system: ContinuousSystem, disc: DiscreteSystem, label: str | None = None) -> str | None:
    """A sentence when ``disc`` is stable and ``system`` is not, or the other way round; else None.

    Continuous stability: every pole has ``Re(s) < 0``. Discrete: every pole has ``1 - |z| > 0``.
    """
    label = label or disc.method
    eps = np.finfo(float).eps
    s_poles = _realisation(system).poles
    s_tol = 100 * eps * (float(np.max(np.abs(s_poles))) if s_poles.size else 0.0)
    cont_stable = bool(np.all(s_poles.real < -s_tol)) if s_poles.size else True
    cont_unstable_or_marginal = [s for s in s_poles if s.real >= -s_tol]
    p = disc.poles()
    # Poles within rounding of the unit circle count as on it (not clearly inside).
    z_tol = 100 * eps * disc.period_s * (float(np.linalg.norm(disc.a_delta)) if disc.order else 0.0)
    outside = [(z, dist) for z, dist in zip(p.z, p.unit_circle_distance) if dist <= z_tol]
    if cont_stable and outside:
        listed = ", ".join(f"{fmt_complex(complex(z))} (|z| = {abs(z):.6g})" for z, _ in outside)
        return f"the {label} mapping made the stable system unstable: pole at z = {listed}"
    if cont_unstable_or_marginal and not outside:
        bad = ", ".join(fmt_complex(complex(s)) for s in cont_unstable_or_marginal)
        return (
            f"the {label} mapping made the unstable or marginal system (pole at s = {bad}) look stable "
            "in discrete time"
        )
    return None


def _with_notes(disc: DiscreteSystem, system: ContinuousSystem, label: str) -> DiscreteSystem:
    """Attach the continuous system's notes and a stability-change note, if any."""
    notes = list(system.notes)
    change = stability_change(system, disc, label)
    if change:
        notes.append(change)
    if not notes:
        return disc
    return DiscreteSystem(disc.phi, disc.gamma, disc.c, disc.d, disc.period_s, disc.a_delta, disc.b_delta,
                          disc.delay_samples, disc.method, disc.notes + tuple(notes))
