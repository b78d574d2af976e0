"""Frequency response of a single-loop open-loop gain, continuous or discrete.

A loop gain is described once, as a :class:`LoopGain`, in one of four forms:

* continuous transfer ``L(s) = N(s)/D(s) * exp(-s*delay_s)``, evaluated at ``s = j*w``;
* continuous state space ``L(s) = (C (sI - A)^-1 B + D) * exp(-s*delay_s)``;
* discrete transfer ``L(z) = N(z)/D(z) * z^-d`` (descending powers of z), at ``z = exp(j*w*T)``;
* discrete state space, either in shift form ``C (zI - Phi)^-1 Gamma + D`` or in delta form
  ``C (delta I - A_delta)^-1 B_delta + D`` with ``delta = (z - 1)/T``,
  ``A_delta = (Phi - I)/T`` and ``B_delta = Gamma/T``.

The frequency ``w`` is always in rad/s. State-space forms are evaluated by solving linear systems,
never by forming polynomial coefficients: at fast sampling the coefficients of a polynomial in z
have lost the information (all roots crowd at z = 1), while the delta form keeps it. Give the
state-space (preferably delta) form whenever one is at hand.

References
----------
R. H. Middleton and G. C. Goodwin, "Digital Control and Estimation: A Unified Approach",
Prentice Hall, 1990, chapter 2 (the delta operator and its frequency variable).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
import scipy.linalg

from sampled.errors import ImproperError, InputError

Domain = Literal["continuous", "discrete"]
StateForm = Literal["shift", "delta"]

#: Largest number of frequencies solved in one batched linear solve (bounds memory use).
_SOLVE_CHUNK = 4096


@dataclass(frozen=True, eq=False)
class LoopGain:
    """An open-loop gain ready for frequency evaluation. Build it with the ``*_loop*`` functions.

    Attributes
    ----------
    domain : {"continuous", "discrete"}
    num, den : ndarray or None
        Transfer numerator and denominator, descending powers (leading zeros removed).
    a, b, c, d : ndarray or None
        State-space matrices of a single-input single-output realisation (n x n, n x 1, 1 x n,
        1 x 1). For a discrete loop in delta form these are ``A_delta``, ``B_delta``, ``C``, ``D``.
    state_form : {"shift", "delta"}
        Meaning of the discrete state-space matrices; ignored for continuous loops.
    period_s : float or None
        Sample period [s] of a discrete loop; None for a continuous one.
    delay_s : float
        Transport delay [s] of a continuous loop (0 for a discrete loop).
    delay_samples : int
        Whole-sample delay ``z^-d`` of a discrete loop (0 for a continuous loop).
    """

    domain: Domain
    num: np.ndarray | None
    den: np.ndarray | None
    a: np.ndarray | None
    b: np.ndarray | None
    c: np.ndarray | None
    d: np.ndarray | None
    state_form: StateForm
    period_s: float | None
    delay_s: float
    delay_samples: int

    @property
    def is_state_space(self) -> bool:
        return self.a is not None

    @property
    def delay_total_s(self) -> float:
        """Pure delay of the loop [s]: the transport delay, or ``d*T`` for a discrete loop."""
        if self.domain == "discrete":
            assert self.period_s is not None
            return self.delay_samples * self.period_s
        return self.delay_s

    @property
    def nyquist_rad_s(self) -> float | None:
        """Nyquist frequency ``pi/T`` [rad/s] of a discrete loop; None for a continuous one."""
        return None if self.period_s is None else math.pi / self.period_s


# --------------------------------------------------------------------------- construction


def _vector(values: object, where: str) -> np.ndarray:
    try:
        arr = np.array(values, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"expected a list of real numbers, got {values!r}", where) from None
    if arr.ndim == 0:
        arr = arr.reshape(1)
    if arr.ndim != 1 or arr.size == 0:
        raise InputError(f"expected a non-empty 1-D list of coefficients, got shape {arr.shape}", where)
    if not np.all(np.isfinite(arr)):
        raise InputError("coefficients must be finite numbers", where)
    nz = np.flatnonzero(arr)
    arr = arr[nz[0]:] if nz.size else arr[-1:]
    arr.setflags(write=False)
    return arr


def _matrix(values: object, where: str, shape: tuple[int | None, int | None]) -> np.ndarray:
    try:
        arr = np.array(values, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"expected a real matrix, got {values!r}", where) from None
    if arr.ndim == 0:
        arr = arr.reshape(1, 1)
    elif arr.ndim == 1 and shape[0] is not None and shape[0] == 1:
        arr = arr.reshape(1, -1)
    elif arr.ndim == 1:
        arr = arr.reshape(-1, 1)
    if arr.ndim != 2:
        raise InputError(f"expected a 2-D matrix, got shape {arr.shape}", where)
    for axis, want in enumerate(shape):
        if want is not None and arr.shape[axis] != want:
            raise InputError(f"expected shape {_shape_text(shape)}, got {arr.shape}", where)
    if not np.all(np.isfinite(arr)):
        raise InputError("entries must be finite numbers", where)
    arr.setflags(write=False)
    return arr


def _shape_text(shape: tuple[int | None, int | None]) -> str:
    return "(" + ", ".join("n" if s is None else str(s) for s in shape) + ")"


def _check_delay_s(delay_s: float) -> float:
    x = float(delay_s)
    if not math.isfinite(x) or x < 0:
        raise InputError(f"must be a finite number >= 0 [s], got {delay_s!r}", "delay_s")
    return x


def _check_period_s(period_s: float) -> float:
    x = float(period_s)
    if not math.isfinite(x) or x <= 0:
        raise InputError(f"must be a finite number > 0 [s], got {period_s!r}", "period_s")
    return x


def _check_delay_samples(delay_samples: int) -> int:
    if isinstance(delay_samples, bool) or int(delay_samples) != delay_samples or delay_samples < 0:
        raise InputError(f"must be a whole number >= 0, got {delay_samples!r}", "delay_samples")
    return int(delay_samples)


def _check_transfer(num: object, den: object) -> tuple[np.ndarray, np.ndarray]:
    n = _vector(num, "num")
    dd = _vector(den, "den")
    if not np.any(dd):
        raise InputError("the denominator is the zero polynomial", "den")
    return n, dd


def _check_state_space(a: object, b: object, c: object, d: object) -> tuple[np.ndarray, ...]:
    aa = _matrix(a, "a", (None, None))
    if aa.shape[0] != aa.shape[1]:
        raise InputError(f"expected a square matrix, got shape {aa.shape}", "a")
    n = aa.shape[0]
    bb = _matrix(b, "b", (n, 1))
    cc = _matrix(c, "c", (1, n))
    dd = _matrix(d, "d", (1, 1))
    return aa, bb, cc, dd


def continuous_loop(num: object, den: object, *, delay_s: float = 0.0) -> LoopGain:
    """Continuous loop gain ``N(s)/D(s) * exp(-s*delay_s)`` from coefficients in descending powers.

    Parameters
    ----------
    num, den : sequence of float
        Numerator and denominator coefficients, highest power of s first.
    delay_s : float [s]
        Transport delay, >= 0.
    """
    n, d = _check_transfer(num, den)
    return LoopGain("continuous", n, d, None, None, None, None, "shift", None, _check_delay_s(delay_s), 0)


def continuous_loop_state_space(
    a: object, b: object, c: object, d: object, *, delay_s: float = 0.0
) -> LoopGain:
    """Continuous loop gain ``(C (sI - A)^-1 B + D) * exp(-s*delay_s)`` (single input, single output).

    Parameters
    ----------
    a, b, c, d : array_like
        Matrices of shapes (n, n), (n, 1), (1, n), (1, 1).
    delay_s : float [s]
        Transport delay, >= 0.
    """
    aa, bb, cc, dd = _check_state_space(a, b, c, d)
    return LoopGain("continuous", None, None, aa, bb, cc, dd, "shift", None, _check_delay_s(delay_s), 0)


def discrete_loop(num: object, den: object, period_s: float, *, delay_samples: int = 0) -> LoopGain:
    """Discrete loop gain ``N(z)/D(z) * z^-delay_samples``, coefficients in descending powers of z.

    Parameters
    ----------
    num, den : sequence of float
        Numerator and denominator coefficients, highest power of z first.
    period_s : float [s]
        Sample period T > 0.
    delay_samples : int
        Extra whole-sample delay d >= 0.

    Raises
    ------
    ImproperError
        If ``deg N > deg D + d`` (the loop would need future samples).
    """
    n, d = _check_transfer(num, den)
    period = _check_period_s(period_s)
    delay = _check_delay_samples(delay_samples)
    if len(n) - 1 > len(d) - 1 + delay:
        raise ImproperError(
            f"numerator degree {len(n) - 1} exceeds denominator degree {len(d) - 1} plus "
            f"delay {delay}: the loop is not causal",
            "num",
        )
    return LoopGain("discrete", n, d, None, None, None, None, "shift", period, 0.0, delay)


def discrete_loop_state_space(
    a: object,
    b: object,
    c: object,
    d: object,
    period_s: float,
    *,
    delay_samples: int = 0,
    form: StateForm = "shift",
) -> LoopGain:
    """Discrete loop gain from a state-space realisation, times ``z^-delay_samples``.

    Parameters
    ----------
    a, b, c, d : array_like
        Shift form (``form="shift"``): ``Phi, Gamma, C, D`` with ``x[k+1] = Phi x[k] + Gamma u[k]``.
        Delta form (``form="delta"``): ``A_delta = (Phi - I)/T, B_delta = Gamma/T, C, D``; this is
        the well-conditioned choice at fast sampling.
    period_s : float [s]
        Sample period T > 0.
    delay_samples : int
        Extra whole-sample delay d >= 0.
    form : {"shift", "delta"}
    """
    if form not in ("shift", "delta"):
        raise InputError(f"expected 'shift' or 'delta', got {form!r}", "form")
    aa, bb, cc, dd = _check_state_space(a, b, c, d)
    return LoopGain(
        "discrete", None, None, aa, bb, cc, dd, form, _check_period_s(period_s), 0.0,
        _check_delay_samples(delay_samples),
    )


# --------------------------------------------------------------------------- evaluation


def _frequencies(w_rad_s: object) -> np.ndarray:
    w = np.asarray(w_rad_s, dtype=float)
    if not np.all(np.isfinite(w)):
        raise InputError("frequencies must be finite numbers [rad/s]", "w_rad_s")
    return w


def _ratio_of_polys(num: np.ndarray, den: np.ndarray, x: np.ndarray) -> np.ndarray:
    """``N(x)/D(x)``, with reversed (1/x) evaluation where |x| > 1 to avoid overflow."""
    out = np.empty(x.shape, dtype=complex)
    big = np.abs(x) > 1.0
    shift = (len(den) - 1) - (len(num) - 1)  # relative degree
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        xs = x[~big]
        out[~big] = np.polyval(num, xs) / np.polyval(den, xs)
        xb = x[big]
        if xb.size:
            y = 1.0 / xb
            # N(x)/D(x) = x^(m-n) * Nrev(1/x)/Drev(1/x), Nrev(y) = y^m N(1/y)
            out[big] = np.polyval(num[::-1], y) / np.polyval(den[::-1], y) * y**shift
    return out


def _state_space_response(
    a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray, lam: np.ndarray
) -> np.ndarray:
    """``C (lam I - A)^-1 B + D`` for each complex ``lam``, by batched linear solves.

    Where ``lam I - A`` is singular (a pole hit exactly) the result is ``inf``.
    """
    n = a.shape[0]
    flat = lam.reshape(-1)
    out = np.empty(flat.shape, dtype=complex)
    if n == 0:
        out[:] = d[0, 0]
        return out.reshape(lam.shape)
    eye = np.eye(n)
    bvec = b[:, 0].astype(complex)
    cvec = c[0, :]
    for start in range(0, flat.size, _SOLVE_CHUNK):
        part = flat[start:start + _SOLVE_CHUNK]
        mats = part[:, None, None] * eye[None, :, :] - a[None, :, :]
        rhs = np.broadcast_to(bvec, (part.size, n))[..., None]
        try:
            x = np.linalg.solve(mats, rhs)[..., 0]
            out[start:start + part.size] = x @ cvec + d[0, 0]
        except np.linalg.LinAlgError:
            for i, m in enumerate(mats):
                try:
                    xi = np.linalg.solve(m, bvec)
                    out[start + i] = xi @ cvec + d[0, 0]
                except np.linalg.LinAlgError:
                    out[start + i] = complex(math.inf, 0.0)
    return out.reshape(lam.shape)


def _unit_circle_minus_one(theta: np.ndarray) -> np.ndarray:
    """``exp(j*theta) - 1`` without cancellation: ``2j sin(theta/2) exp(j theta/2)``."""
    return 2j * np.sin(theta / 2) * np.exp(0.5j * theta)


def rational_response(loop: LoopGain, w_rad_s: object) -> np.ndarray:
    """Frequency response of the loop WITHOUT its pure delay (complex array, shape of ``w_rad_s``).

    The pure delay only adds the phase ``-w*delay`` and never changes the magnitude; keeping it
    apart lets the margin search treat it analytically.
    """
    w = _frequencies(w_rad_s)
    if loop.domain == "continuous":
        s = 1j * w
        if loop.is_state_space:
            return _state_space_response(loop.a, loop.b, loop.c, loop.d, s)  # type: ignore[arg-type]
        return _ratio_of_polys(loop.num, loop.den, s)  # type: ignore[arg-type]
    period = loop.period_s
    assert period is not None
    theta = w * period
    if loop.is_state_space:
        if loop.state_form == "delta":
            delta = _unit_circle_minus_one(theta) / period
            return _state_space_response(loop.a, loop.b, loop.c, loop.d, delta)  # type: ignore[arg-type]
        z = np.exp(1j * theta)
        return _state_space_response(loop.a, loop.b, loop.c, loop.d, z)  # type: ignore[arg-type]
    z = np.exp(1j * theta)
    return _ratio_of_polys(loop.num, loop.den, z)  # type: ignore[arg-type]


def frequency_response(loop: LoopGain, w_rad_s: object) -> np.ndarray:
    """Complex frequency response ``L(j w)`` or ``L(exp(j w T))`` at frequencies ``w_rad_s`` [rad/s].

    Parameters
    ----------
    loop : LoopGain
    w_rad_s : array_like [rad/s]
        Frequencies; for a discrete loop the response is periodic in ``2*pi/T``.

    Returns
    -------
    ndarray of complex
        Same shape as ``w_rad_s``; ``inf`` where a pole is hit exactly.
    """
    w = _frequencies(w_rad_s)
    out = rational_response(loop, w)
    tau = loop.delay_total_s
    if tau:
        out = out * np.exp(-1j * w * tau)
    return out


# --------------------------------------------------------------------------- roots


def equivalent_roots(loop: LoopGain) -> tuple[np.ndarray, np.ndarray]:
    """Poles and zeros of the rational part, as continuous-time equivalents [rad/s].

    For a discrete loop each root ``z`` maps to ``log(z)/T`` (``log1p(T*lambda)/T`` in delta
    form), so that ``|root|`` is a break frequency and a root on the unit circle lands on the
    imaginary axis. Roots at ``z = 0`` (pure delays, deadbeat modes) are dropped: they have no
    break within the band. Zeros of a state-space loop are the finite generalised eigenvalues
    of the Rosenbrock system pencil.

    Returns
    -------
    poles, zeros : ndarray of complex [rad/s]
    """
    if loop.is_state_space:
        a, b, c, d = loop.a, loop.b, loop.c, loop.d
        assert a is not None and b is not None and c is not None and d is not None
        n = a.shape[0]
        poles = np.linalg.eigvals(a) if n else np.zeros(0, complex)
        zeros = _invariant_zeros(a, b, c, d)
    else:
        assert loop.num is not None and loop.den is not None
        poles = np.roots(loop.den) if len(loop.den) > 1 else np.zeros(0, complex)
        zeros = np.roots(loop.num) if len(loop.num) > 1 and np.any(loop.num) else np.zeros(0, complex)
    poles = np.asarray(poles, dtype=complex)
    zeros = np.asarray(zeros, dtype=complex)
    if loop.domain == "continuous":
        return poles, zeros
    period = loop.period_s
    assert period is not None
    return _to_s_plane(poles, loop, period), _to_s_plane(zeros, loop, period)


def _to_s_plane(roots: np.ndarray, loop: LoopGain, period: float) -> np.ndarray:
    if loop.is_state_space and loop.state_form == "delta":
        t_lambda = roots * period  # z - 1
    else:
        t_lambda = roots - 1.0
    z = 1.0 + t_lambda
    keep = np.abs(z) > 1e-300
    with np.errstate(divide="ignore", invalid="ignore"):
        # log(z) = log1p(z - 1) for z near 1, principal branch otherwise
        near = np.abs(t_lambda) < 0.5
        out = np.where(near, _complex_log1p(t_lambda), np.log(np.where(keep, z, 1.0)))
    return (out / period)[keep]


def _complex_log1p(x: np.ndarray) -> np.ndarray:
    """``log(1 + x)`` for complex x accurate near 0: real part ``0.5*log1p(2 Re x + |x|^2)``."""
    re = 0.5 * np.log1p(2 * x.real + np.abs(x) ** 2)
    im = np.arctan2(x.imag, 1.0 + x.real)
    return re + 1j * im


def _invariant_zeros(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray) -> np.ndarray:
    n = a.shape[0]
    m = np.block([[a, b], [c, d]])
    nmat = np.zeros((n + 1, n + 1))
    nmat[:n, :n] = np.eye(n)
    alpha, beta = scipy.linalg.eigvals(m, nmat, homogeneous_eigvals=True)
    scale = max(1.0, float(np.max(np.abs(m))))
    finite = np.abs(beta) > 1e-12 * np.abs(alpha) + 1e-300 * scale
    with np.errstate(divide="ignore", invalid="ignore"):
        return alpha[finite] / beta[finite]
