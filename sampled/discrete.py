"""Discrete-time single-input single-output systems, carried in shift AND delta form.

A :class:`DiscreteSystem` is

    x[k+1] = Phi x[k] + Gamma u[k - d],      y[k] = C x[k] + D u[k - d]

with sample period ``T`` and a whole-sample input delay ``d``. Alongside ``Phi`` and ``Gamma`` it
carries the delta form (Middleton and Goodwin 1990)

    A_delta = (Phi - I)/T,      B_delta = Gamma/T,

computed by whoever built the system without subtracting ``I`` from ``Phi`` (hold equivalents get it
from the phi functions, mappings from their closed forms). As ``T -> 0`` the delta matrices tend to
the continuous ``A`` and ``B`` while ``Phi -> I``, so poles, the distance ``1 - |z|`` to the unit
circle and transfers in the delta variable stay accurate where polynomials in ``z`` lose every digit.

References
----------
R. H. Middleton and G. C. Goodwin, "Digital Control and Estimation: A Unified Approach",
Prentice Hall, 1990, chapters 2-3 (the delta operator and its state-space form).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from math import comb

import numpy as np
import scipy.linalg
import scipy.signal

from sampled.errors import InputError


@dataclass(frozen=True)
class DiscretePoles:
    """Poles of a discrete system with their distance to the unit circle.

    Attributes
    ----------
    z : ndarray of complex
        Poles in the z plane, ``z = 1 + T lambda``.
    delta : ndarray of complex
        The same poles in the delta plane, ``lambda = (z - 1)/T`` [1/s].
    unit_circle_distance : ndarray of float
        ``1 - |z|`` (positive inside the circle), from ``lambda`` without cancellation.

    The three arrays are aligned and sorted by ``unit_circle_distance`` (closest to instability
    first), then by imaginary part.
    """

    z: np.ndarray
    delta: np.ndarray
    unit_circle_distance: np.ndarray


def unit_circle_distance(delta_poles: np.ndarray, period_s: float) -> np.ndarray:
    """``1 - |z|`` for ``z = 1 + T lambda``, accurate when ``|z|`` is close to one.

    ``|z|^2 = 1 + 2 Re(lambda) T + |lambda|^2 T^2``, hence

        1 - |z| = (1 - |z|^2) / (1 + |z|) = -(2 Re(lambda) T + |lambda|^2 T^2) / (1 + |z|),

    which involves no difference of nearly equal numbers when ``|lambda T| << 1``.

    Parameters
    ----------
    delta_poles : ndarray of complex [1/s]
    period_s : float [s]
    """
    lam = np.asarray(delta_poles, dtype=complex)
    t = float(period_s)
    lt = lam * t
    z_abs = np.abs(1.0 + lt)
    return -(2.0 * lt.real + (lt.real**2 + lt.imag**2)) / (1.0 + z_abs) + 0.0  # no -0.0


def _check_matrix(x: object, shape: tuple[int, int], name: str) -> np.ndarray:
    arr = np.array(x, dtype=float)
    if arr.size == 0:
        arr = arr.reshape(shape)
    if arr.shape != shape:
        arr = arr.reshape(shape) if arr.size == shape[0] * shape[1] else arr
    if arr.shape != shape:
        raise InputError(f"{name} must have shape {shape}, got {arr.shape}")
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name} must hold finite numbers")
    return arr


def _fmt(z: complex) -> str:
    if abs(z.imag) <= 1e-12 * max(1.0, abs(z)):
        return f"{z.real:.10g}"
    return f"{z.real:.10g}{'+' if z.imag >= 0 else '-'}{abs(z.imag):.10g}j"


@dataclass(frozen=True, eq=False)
class DiscreteSystem:
    """A SISO discrete system in shift and delta form, with a whole-sample input delay.

    Attributes
    ----------
    phi : ndarray (n, n)
        State transition matrix ``Phi``.
    gamma : ndarray (n, 1)
        Input matrix ``Gamma``.
    c : ndarray (1, n)
        Output matrix.
    d : ndarray (1, 1)
        Direct feedthrough.
    period_s : float [s]
        Sample period ``T``.
    a_delta : ndarray (n, n) [1/s]
        ``(Phi - I)/T``, computed without the subtraction where the constructor could.
    b_delta : ndarray (n, 1) [1/s]
        ``Gamma/T``.
    delay_samples : int
        Whole-sample input delay ``d``: the transfer is ``z^-d (C (zI - Phi)^-1 Gamma + D)``.
    method : str
        How the system was obtained (``"zoh"``, ``"tustin"``, ``"firmware"``, ...).
    notes : tuple of str
        Warnings about the construction, e.g. a mapping that made a stable system unstable.
    """

    phi: np.ndarray
    gamma: np.ndarray
    c: np.ndarray
    d: np.ndarray
    period_s: float
    a_delta: np.ndarray
    b_delta: np.ndarray
    delay_samples: int = 0
    method: str = ""
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        t = self.period_s
        if not (isinstance(t, (int, float)) and math.isfinite(t) and t > 0):
            raise InputError(f"the sample period must be finite and positive, got {t!r}")
        object.__setattr__(self, "period_s", float(t))
        phi = np.atleast_2d(np.array(self.phi, dtype=float))
        if phi.size == 0:
            phi = phi.reshape(0, 0)
        n = phi.shape[0]
        if phi.shape != (n, n):
            raise InputError(f"Phi must be square, got shape {phi.shape}")
        object.__setattr__(self, "phi", _check_matrix(phi, (n, n), "Phi"))
        object.__setattr__(self, "gamma", _check_matrix(self.gamma, (n, 1), "Gamma"))
        object.__setattr__(self, "c", _check_matrix(self.c, (1, n), "C"))
        object.__setattr__(self, "d", _check_matrix(self.d, (1, 1), "D"))
        object.__setattr__(self, "a_delta", _check_matrix(self.a_delta, (n, n), "A_delta"))
        object.__setattr__(self, "b_delta", _check_matrix(self.b_delta, (n, 1), "B_delta"))
        if isinstance(self.delay_samples, bool) or int(self.delay_samples) != self.delay_samples or self.delay_samples < 0:
            raise InputError(f"the whole-sample delay must be a non-negative integer, got {self.delay_samples!r}")
        object.__setattr__(self, "delay_samples", int(self.delay_samples))
        for m in (self.phi, self.gamma, self.c, self.d, self.a_delta, self.b_delta):
            m.setflags(write=False)

    # ---- constructors -----------------------------------------------------------------------
    @classmethod
    def from_delta(
        cls,
        a_delta: np.ndarray,
        b_delta: np.ndarray,
        c: np.ndarray,
        d: np.ndarray | float,
        period_s: float,
        delay_samples: int = 0,
        method: str = "",
        notes: tuple[str, ...] = (),
    ) -> "DiscreteSystem":
        """From the delta form; ``Phi = I + T A_delta`` and ``Gamma = T B_delta``."""
        a_delta = np.atleast_2d(np.asarray(a_delta, dtype=float))
        if a_delta.size == 0:
            a_delta = a_delta.reshape(0, 0)
        n = a_delta.shape[0]
        b_delta = np.asarray(b_delta, dtype=float).reshape(n, 1)
        phi = np.eye(n) + period_s * a_delta
        return cls(phi, period_s * b_delta, c, np.atleast_2d(d), period_s, a_delta, b_delta,
                   delay_samples, method, notes)

    @classmethod
    def from_shift(
        cls,
        phi: np.ndarray,
        gamma: np.ndarray,
        c: np.ndarray,
        d: np.ndarray | float,
        period_s: float,
        delay_samples: int = 0,
        method: str = "",
        notes: tuple[str, ...] = (),
    ) -> "DiscreteSystem":
        """From the shift form given as numbers (e.g. implemented coefficients).

        The delta form is then ``(Phi - I)/T`` by subtraction: exact for the numbers given, since
        those numbers are all there is.
        """
        phi = np.atleast_2d(np.asarray(phi, dtype=float))
        if phi.size == 0:
            phi = phi.reshape(0, 0)
        n = phi.shape[0]
        if not (isinstance(period_s, (int, float)) and math.isfinite(period_s) and period_s > 0):
            raise InputError(f"the sample period must be finite and positive, got {period_s!r}")
        gamma = np.asarray(gamma, dtype=float).reshape(n, 1) if n else np.zeros((0, 1))
        return cls(phi, gamma, c, np.atleast_2d(d), period_s, (phi - np.eye(n)) / period_s, gamma / period_s,
                   delay_samples, method, notes)

    @classmethod
    def from_transfer(
        cls,
        num: np.ndarray | list[float],
        den: np.ndarray | list[float],
        period_s: float,
        method: str = "transfer",
        where: str | None = None,
    ) -> "DiscreteSystem":
        """From a transfer in descending powers of z, ``num(z)/den(z)``.

        Trailing zeros of the denominator beyond the numerator's (factors ``z^k`` common to
        neither) become the whole-sample delay; the rest is realised in controllable canonical form
        and balanced.
        """
        n_arr = np.trim_zeros(np.atleast_1d(np.asarray(num, dtype=float)), "f")
        d_arr = np.trim_zeros(np.atleast_1d(np.asarray(den, dtype=float)), "f")
        if d_arr.size == 0:
            raise InputError("the denominator is zero", where)
        if not (np.all(np.isfinite(n_arr)) and np.all(np.isfinite(d_arr))):
            raise InputError("coefficients must be finite", where)
        if n_arr.size == 0:
            n_arr = np.zeros(1)
        if n_arr.size > d_arr.size:
            raise InputError(
                f"improper transfer in z: numerator degree {n_arr.size - 1} exceeds denominator degree "
                f"{d_arr.size - 1} (the output would need future inputs)",
                where,
            )
        # Pull common-free factors of z out of the denominator as a pure delay.
        delay = 0
        while d_arr.size > 1 and d_arr[-1] == 0 and n_arr.size < d_arr.size:
            d_arr = d_arr[:-1]
            delay += 1
        # Numerator degree may now exceed the shortened denominator only if it had trailing zeros.
        while n_arr.size > d_arr.size and n_arr[-1] == 0:
            n_arr = n_arr[:-1]
        if d_arr.size == 1:
            a = np.zeros((0, 0))
            b = np.zeros((0, 1))
            c = np.zeros((1, 0))
            dd = np.array([[n_arr[-1] / d_arr[0]]]) if n_arr.size else np.zeros((1, 1))
        else:
            a, b, c, dd = scipy.signal.tf2ss(n_arr, d_arr)
            if a.size:
                _, (scale, _) = scipy.linalg.matrix_balance(a, permute=False, separate=True)
                a = a * scale[np.newaxis, :] / scale[:, np.newaxis]
                b = b / scale[:, np.newaxis]
                c = c * scale[np.newaxis, :]
        return cls.from_shift(a, b, c, dd, period_s, delay, method)

    @classmethod
    def from_firmware(
        cls, b: list[float] | np.ndarray, a: list[float] | np.ndarray, period_s: float, where: str | None = None
    ) -> "DiscreteSystem":
        """From coefficients in powers of z^-1, ``(b0 + b1 z^-1 + ...)/(a0 + a1 z^-1 + ...)``.

        This is the difference equation ``a0 y[k] = sum b_i u[k-i] - sum_{i>=1} a_i y[k-i]``.
        """
        b_arr = np.atleast_1d(np.asarray(b, dtype=float))
        a_arr = np.atleast_1d(np.asarray(a, dtype=float))
        if a_arr.size == 0 or a_arr[0] == 0:
            raise InputError("a[0] (the coefficient of y[k]) must be nonzero", where)
        length = max(a_arr.size, b_arr.size)
        num = np.concatenate([b_arr, np.zeros(length - b_arr.size)])
        den = np.concatenate([a_arr, np.zeros(length - a_arr.size)])
        return cls.from_transfer(num, den, period_s, "firmware", where)

    # ---- size and views -----------------------------------------------------------------------
    @property
    def order(self) -> int:
        """Number of states (delay states not included)."""
        return int(self.phi.shape[0])

    def poles(self) -> DiscretePoles:
        """Poles from the delta matrix: ``z = 1 + T eig(A_delta)``, plus ``d`` poles at ``z = 0``.

        The delay poles sit at ``lambda = -1/T`` in the delta plane.
        """
        t = self.period_s
        lam = scipy.linalg.eigvals(self.a_delta) if self.order else np.zeros(0, dtype=complex)
        lam = np.concatenate([np.asarray(lam, dtype=complex), np.full(self.delay_samples, -1.0 / t, dtype=complex)])
        # Clean numerically real eigenvalues of a real matrix.
        scale = np.maximum(np.abs(lam), 1e-300)
        lam = np.where(np.abs(lam.imag) <= 1e-14 * scale, lam.real + 0j, lam)
        z = 1.0 + t * lam
        dist = unit_circle_distance(lam, t)
        order = np.lexsort((z.imag, z.real, dist))
        return DiscretePoles(z=z[order], delta=lam[order], unit_circle_distance=dist[order])

    def stability_margin(self) -> float:
        """Smallest ``1 - |z|`` over all poles (``1.0`` for a static gain); negative when unstable."""
        dist = self.poles().unit_circle_distance
        return float(np.min(dist)) if dist.size else 1.0

    def coefficient_pole_error(self) -> float:
        """How well the coefficients in z (as doubles) still place the poles.

        Returns the largest ``|z_c - z| / |z - 1|`` over the poles, where ``z_c`` are the roots
        (numpy.roots) of the denominator returned by :meth:`transfer` and ``z`` the poles from the
        delta form (a pole at ``z = 1`` counts with denominator 1). Near 1e-16 the shift
        coefficients are fine; above about 1e-6 a difference equation built from them does not
        have the designed dynamics (use the delta form), which happens at fast sampling.
        """
        p = self.poles()
        if p.z.size == 0:
            return 0.0
        _, den = self.transfer()
        roots = np.roots(den)
        worst = 0.0
        for z in p.z:
            scale = abs(z - 1.0) or 1.0
            worst = max(worst, float(np.min(np.abs(roots - z))) / scale)
        return worst

    def delta_transfer(self) -> tuple[np.ndarray, np.ndarray]:
        """Transfer of the state part in the delta variable ``gamma = (z-1)/T`` (delay excluded).

        Returns ``(num, den)`` in descending powers of gamma; ``den`` is monic of degree ``n``. These
        coefficients stay well conditioned as ``T -> 0`` (they tend to the continuous ones).
        """
        n = self.order
        if n == 0:
            return np.array([float(self.d[0, 0])]), np.array([1.0])
        # The strictly proper part C adj(gamma I - A) B has two exact expressions; each can lose
        # digits, in different places, so each coefficient is taken from the one whose rounding
        # bound is smaller:
        #  (1) Markov parameters M_j = C A^j B: coefficient k = sum_{i<k} den_i M_(k-1-i); cancels
        #      when ||A||^j grows (stiff systems), fine at repeated zeros;
        #  (2) det(gamma I - A + B C) - det(gamma I - A) from eigenvalues; cancels when the
        #      numerator is small beside the denominator (e.g. zeros far out, at z = -1).
        eps = np.finfo(float).eps
        lam = scipy.linalg.eigvals(self.a_delta)
        den = np.real(np.poly(lam))
        closed = self.a_delta - self.b_delta @ self.c
        mu = scipy.linalg.eigvals(closed)
        norm_a = float(np.linalg.norm(self.a_delta, 2))
        norm_closed = float(np.linalg.norm(closed, 2))
        den_abs = np.real(np.poly(-np.abs(lam)))
        closed_abs = np.real(np.poly(-np.abs(mu)))
        strict_eig = np.real(np.poly(mu)) - den
        bound_eig = np.zeros(n + 1)
        bound_eig[1:] = 8 * (n + 1) * eps * (
            closed_abs[1:] + den_abs[1:] + norm_closed * closed_abs[:-1] + norm_a * den_abs[:-1]
        )
        markov = np.empty(n)
        markov_bound = np.empty(n)
        v = self.b_delta[:, 0].copy()
        c_row = self.c[0]
        norm_cb = float(np.linalg.norm(c_row)) * float(np.linalg.norm(v))
        for j in range(n):
            markov[j] = float(c_row @ v)
            markov_bound[j] = norm_cb * norm_a**j
            v = self.a_delta @ v
        strict_markov = np.zeros(n + 1)
        bound_markov = np.zeros(n + 1)
        for k in range(1, n + 1):
            strict_markov[k] = float(np.dot(den[:k], markov[k - 1 :: -1][:k]))
            bound_markov[k] = 8 * (n + 1) * eps * float(np.dot(np.abs(den[:k]), markov_bound[k - 1 :: -1][:k]))
        use_markov = bound_markov <= bound_eig
        strictly = np.where(use_markov, strict_markov, strict_eig)
        bound = np.where(use_markov, bound_markov, bound_eig)
        strictly = np.where(np.abs(strictly) <= bound, 0.0, strictly)
        num = strictly + self.d[0, 0] * den
        return num, den

    def transfer(self) -> tuple[np.ndarray, np.ndarray]:
        """Transfer ``num(z)/den(z)`` in descending powers of z, ``den`` monic, delay included.

        Formed from the delta transfer by substituting ``gamma = (z - 1)/T`` and clearing
        ``T^n``: ``p(z) = sum_k p_k T^(n-k) (z - 1)^k``. At fast sampling these coefficients cannot
        carry the poles to double precision (they all crowd at 1); use :meth:`poles` or
        :meth:`delta_transfer` for analysis.
        """
        n = self.order
        num_d, den_d = self.delta_transfer()
        num_d = np.concatenate([np.zeros(n + 1 - num_d.size), num_d])
        num_z = _delta_to_shift(num_d, self.period_s)
        den_z = _delta_to_shift(den_d, self.period_s)
        den_z = np.concatenate([den_z, np.zeros(self.delay_samples)])
        num_z = np.trim_zeros(num_z, "f")
        if num_z.size == 0:
            num_z = np.zeros(1)
        return num_z, den_z

    def firmware_coefficients(self) -> tuple[np.ndarray, np.ndarray]:
        """Coefficients ``b, a`` in powers of ``z^-1`` with ``a[0] = 1`` (equal lengths).

        The difference equation is ``y[k] = sum_i b[i] u[k-i] - sum_{i>=1} a[i] y[k-i]``.
        """
        num, den = self.transfer()
        b = np.concatenate([np.zeros(den.size - num.size), num]) / den[0]
        a = den / den[0]
        return b, a

    def evaluate(self, z: np.ndarray | complex) -> np.ndarray:
        """Frequency response ``G(z)`` including the whole-sample delay (state-space formula)."""
        z = np.atleast_1d(np.asarray(z, dtype=complex))
        out = np.empty(z.shape, dtype=complex)
        n = self.order
        t = self.period_s
        for i, zi in enumerate(z.flat):
            if n:
                # (zI - Phi) = T (gamma I - A_delta) with gamma = (z - 1)/T: better conditioned.
                g = (zi - 1.0) / t
                x = np.linalg.solve(g * np.eye(n) - self.a_delta, self.b_delta)
                val = (self.c @ x)[0, 0] + self.d[0, 0]
            else:
                val = self.d[0, 0]
            out.flat[i] = val * zi ** (-self.delay_samples)
        return out

    def dc_gain(self) -> float:
        """Value at ``z = 1`` (``inf`` with a pole at ``z = 1``)."""
        n = self.order
        if n and abs(np.linalg.det(self.a_delta)) == 0.0:
            return math.inf
        if n:
            try:
                x = np.linalg.solve(-self.a_delta, self.b_delta)
            except np.linalg.LinAlgError:
                return math.inf
            return float((self.c @ x)[0, 0] + self.d[0, 0])
        return float(self.d[0, 0])

    # ---- composition --------------------------------------------------------------------------
    def delayed(self, samples: int) -> "DiscreteSystem":
        """This system followed (or preceded: SISO delays commute) by ``z^-samples``."""
        if isinstance(samples, bool) or int(samples) != samples or samples < 0:
            raise InputError(f"a whole-sample delay must be a non-negative integer, got {samples!r}")
        return DiscreteSystem(self.phi, self.gamma, self.c, self.d, self.period_s, self.a_delta, self.b_delta,
                              self.delay_samples + int(samples), self.method, self.notes)

    def with_delay_states(self) -> "DiscreteSystem":
        """Equivalent system with the whole-sample delay realised as ``d`` extra states.

        The delay line ``w[k+1] = [u[k], w_1[k], ..., w_{d-1}[k]]`` feeds ``u[k-d] = w_d[k]`` to the
        original states. Its delta form has ``-1/T`` on the diagonal and ``1/T`` below it, exactly.
        """
        dly = self.delay_samples
        if dly == 0:
            return self
        n, t = self.order, self.period_s
        m = n + dly
        phi = np.zeros((m, m))
        a_dl = np.zeros((m, m))
        phi[:n, :n] = self.phi
        a_dl[:n, :n] = self.a_delta
        phi[:n, m - 1] = self.gamma[:, 0]
        a_dl[:n, m - 1] = self.b_delta[:, 0]
        for i in range(dly):
            j = n + i
            a_dl[j, j] = -1.0 / t
            if i > 0:
                phi[j, j - 1] = 1.0
                a_dl[j, j - 1] = 1.0 / t
        gamma = np.zeros((m, 1))
        b_dl = np.zeros((m, 1))
        gamma[n, 0] = 1.0
        b_dl[n, 0] = 1.0 / t
        c = np.zeros((1, m))
        c[0, :n] = self.c[0]
        c[0, m - 1] = self.d[0, 0]
        return DiscreteSystem(phi, gamma, c, np.zeros((1, 1)), t, a_dl, b_dl, 0, self.method, self.notes)

    def _same_period(self, other: "DiscreteSystem") -> None:
        if not isinstance(other, DiscreteSystem):
            raise InputError(f"expected a DiscreteSystem, got {type(other).__name__}")
        if not math.isclose(self.period_s, other.period_s, rel_tol=1e-12, abs_tol=0.0):
            raise InputError(
                f"systems with different sample periods ({self.period_s!r} s and {other.period_s!r} s) "
                "cannot be connected"
            )

    def series(self, other: "DiscreteSystem") -> "DiscreteSystem":
        """``other`` after ``self``: transfer ``G_other(z) G_self(z)``; delays add.

        State ``[x_self; x_other]``; the delta form is assembled block-wise from both delta forms
        (no subtraction).
        """
        self._same_period(other)
        n1, n2 = self.order, other.order
        n = n1 + n2
        phi = np.zeros((n, n))
        a_dl = np.zeros((n, n))
        phi[:n1, :n1], phi[n1:, n1:] = self.phi, other.phi
        a_dl[:n1, :n1], a_dl[n1:, n1:] = self.a_delta, other.a_delta
        phi[n1:, :n1] = other.gamma @ self.c
        a_dl[n1:, :n1] = other.b_delta @ self.c
        gamma = np.vstack([self.gamma, other.gamma @ self.d])
        b_dl = np.vstack([self.b_delta, other.b_delta @ self.d])
        c = np.hstack([other.d @ self.c, other.c])
        d = other.d @ self.d
        return DiscreteSystem(phi, gamma, c, d, self.period_s, a_dl, b_dl,
                              self.delay_samples + other.delay_samples, "series", self.notes + other.notes)

    def feedback(self, other: "DiscreteSystem | None" = None, sign: int = -1) -> "DiscreteSystem":
        """Closed loop ``G / (1 - sign G H)`` with ``self = G`` forward and ``other = H`` (default 1).

        Delays are first realised as states (:meth:`with_delay_states`). The loop must be well posed:
        ``1 - sign D_G D_H != 0``. With ``e = r + sign y_H`` the closed-loop matrices are

            x+ = (blockdiag(Phi_G, Phi_H) + [0 0; Gamma_H C_G 0] + B K) x + B s r,
            B = [Gamma_G; Gamma_H D_G],  s = 1/(1 - sign D_G D_H),  K = s sign [D_H C_G, C_H],

        and the same with the delta matrices for the delta form.
        """
        if sign not in (-1, 1):
            raise InputError(f"feedback sign must be -1 or +1, got {sign!r}")
        h = other if other is not None else DiscreteSystem.from_delta(
            np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), 1.0, self.period_s)
        self._same_period(h)
        g, h = self.with_delay_states(), h.with_delay_states()
        dg, dh = g.d[0, 0], h.d[0, 0]
        denom = 1.0 - sign * dg * dh
        if denom == 0:
            raise InputError("the feedback loop is not well posed (1 - sign*D_G*D_H = 0: an algebraic loop)")
        s = 1.0 / denom
        n1, n2 = g.order, h.order
        n = n1 + n2
        k = s * sign * np.hstack([dh * g.c, h.c])

        def assemble(ag: np.ndarray, bg: np.ndarray, ah: np.ndarray, bh: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            a = np.zeros((n, n))
            a[:n1, :n1], a[n1:, n1:] = ag, ah
            a[n1:, :n1] = bh @ g.c
            b = np.vstack([bg, bh * dg])
            return a + b @ k, b * s

        phi, gamma = assemble(g.phi, g.gamma, h.phi, h.gamma)
        a_dl, b_dl = assemble(g.a_delta, g.b_delta, h.a_delta, h.b_delta)
        c = np.hstack([g.c, np.zeros((1, n2))]) + dg * k
        d = np.array([[dg * s]])
        return DiscreteSystem(phi, gamma, c, d, self.period_s, a_dl, b_dl, 0, "feedback", g.notes + h.notes)

    # ---- text ---------------------------------------------------------------------------------
    def describe_poles(self) -> list[str]:
        """One line per pole: ``z``, ``|z|`` and ``1 - |z|``."""
        p = self.poles()
        return [
            f"z = {_fmt(complex(z))}   |z| = {abs(z):.12g}   1 - |z| = {dist:.6g}"
            for z, dist in zip(p.z, p.unit_circle_distance)
        ]

    def __repr__(self) -> str:
        return (f"DiscreteSystem(order={self.order}, period_s={self.period_s!r}, "
                f"delay_samples={self.delay_samples}, method={self.method!r})")


def _delta_to_shift(p: np.ndarray, period_s: float) -> np.ndarray:
    """``T^n p((z - 1)/T)`` in descending powers of z, for ``p`` of degree ``n`` (length ``n+1``).

    A coefficient whose value is within the rounding bound of its own sum (``8 (n+1) eps`` times the
    sum of the magnitudes of its terms) is set to exact zero: it is indistinguishable from zero, and
    structural zeros (poles at z = 0 from delays) should print as 0.
    """
    n = p.size - 1
    out = np.zeros(n + 1)
    bound = np.zeros(n + 1)
    for i, coef in enumerate(p):
        k = n - i  # power of gamma
        if coef == 0:
            continue
        scale = coef * period_s ** (n - k)
        # (z - 1)^k = sum_j C(k, j) z^j (-1)^(k-j); place in descending order of length n+1
        for j in range(k + 1):
            term = scale * comb(k, j) * (-1.0) ** (k - j)
            out[n - j] += term
            bound[n - j] += abs(term)
    tiny = 8 * (n + 1) * np.finfo(float).eps * bound
    return np.where(np.abs(out) <= tiny, 0.0, out)


def fmt_complex(z: complex) -> str:
    """Complex number as short text (``0.5``, ``0.9+0.1j``)."""
    return _fmt(z)
