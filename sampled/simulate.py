"""The loop as it runs: step response at the samples AND between them, beside the continuous design.

The digital loop is simulated as it runs in the hardware, not through its pulse transfer:

* at ``t = kT`` the sampler reads ``y_m[k]``, the controller (its difference equation) computes
  ``u[k]`` from ``e[k] = r[k] - y_m[k]`` with ``r[k] = 1`` for ``k >= 0``;
* ``u[k]`` reaches the hold ``tau_c`` later (the computation delay) and stays there until the
  next update; the plant sees it after its transport delay ``L_p``, the sampler sees the plant
  output through the sensor filter after the sensor's delay ``L_f``.

Between samples the held input is constant on at most two pieces per period (before and after the
delayed update instant), so the continuous state is propagated EXACTLY with matrix exponentials:
for ``dx/dt = A x + B v`` with ``v`` constant on ``[t0, t0 + h)``,

    x(t0 + h) = exp(A h) x(t0) + (int_0^h exp(A s) ds) B v,

both terms from one block exponential (:func:`sampled.phi.hold_integrals`, Van Loan 1978). No ODE
solver and no interpolation is involved: the plant output ``y(t)`` at every point of the fine grid
is exact up to rounding.

The continuous design's closed loop (when the controller came from one) is computed on a uniform
grid of step ``h``. Without a transport delay the closed loop is an ordinary linear ODE and
``w(t + h) = exp(M h) w(t)`` with the reference held in the state. With a transport delay ``L`` the
grid is chosen with ``L = m h`` exactly and the delay differential equation
``w' = A0 w(t) + A1 w(t - L)`` is advanced by the exact method of steps in matrix form: stacking the
solution on the intervals ``[t - iL, t - iL + h]``, ``i = 0..J``, gives a linear ODE with a block
upper-bidiagonal matrix (``A0`` on the diagonal, ``A1`` above it), whence

    w(t + h) = sum_i E_i w(t - i L),   [E_0 E_1 ... E_J] = first block row of expm(M_J h),

with ``w = 0`` before ``t = 0``. The blocks fall off like ``(|A1| h)^i / i!``; ``J`` is the number
of delays inside the horizon, or smaller once ``E_J`` is below rounding relative to ``E_0`` (the
neglected remainder is then below double precision).

References
----------
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., Prentice Hall, 1997,
section 2.3 (sampling a system with a time delay) and chapter 7 (intersample behaviour).
C. F. Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans. Automatic
Control 23(3), 1978, pp. 395-404.
A. Bellen and M. Zennaro, "Numerical Methods for Delay Differential Equations", Oxford University
Press, 2003, section 2.1 (the method of steps).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.linalg

from sampled.casefile import LoopSpec
from sampled.discrete import DiscreteSystem
from sampled.discretize import split_delay
from sampled.errors import InputError, NumericalError
from sampled.loop import compute_delay_s, digital_controller, digital_loop

#: Bounds on the number of samples chosen from the slowest closed-loop pole.
MIN_SAMPLES = 30
MAX_SAMPLES = 4000
#: Time constants of the slowest decaying closed-loop pole covered by the default horizon.
SETTLING_TIME_CONSTANTS = 7.0
#: Growth (in nepers) shown for an unstable loop by the default horizon.
UNSTABLE_GROWTH_NEPERS = 6.0
#: Largest number of grid steps of the continuous design's response.
MAX_CONTINUOUS_STEPS = 20000
#: Instants closer than this fraction of a period count as one (the same delay computed two ways).
SNAP = 1e-9
#: Largest number of delay blocks kept in the method of steps.
MAX_DELAY_BLOCKS = 40


@dataclass(frozen=True, eq=False)
class StepResponse:
    """Unit step response of the loop as it runs, and of the continuous design.

    Attributes
    ----------
    period_s : float [s]
    compute_delay_s : float [s]
        Sample-to-actuator latency used.
    t_samples : ndarray (K,) [s]
        Sampling instants ``k T``.
    y_samples : ndarray (K,)
        Measured output ``y_m[k]`` (after the sensor filter) at the sampling instants.
    u_samples : ndarray (K,)
        Controller output ``u[k]`` computed at ``k T``.
    t_fine : ndarray [s]
        Fine grid: ``points_per_period`` uniform points per period plus the instants where the
        held input changes (computation delay, and computation plus plant delay), sorted; ends at
        the last sample. ``t_fine[k * fine_per_period] = t_samples[k]``.
    y_fine : ndarray
        Plant output ``y(t)`` (before the sensor) at ``t_fine``, exact between samples.
    u_fine : ndarray
        Actuator command as applied at ``t_fine``: the staircase ``u[k]`` shifted by the
        computation delay (right-continuous at the update instants).
    fine_per_period : int
        Points of ``t_fine`` per period.
    continuous_t, continuous_y : ndarray or None [s], [-]
        The continuous design's closed-loop step response (plant output); None when the controller
        has no continuous design or the design cannot be simulated (see ``notes``).
    continuous_method : str
        How ``continuous_y`` was computed.
    notes : tuple of str
    """

    period_s: float
    compute_delay_s: float
    t_samples: np.ndarray
    y_samples: np.ndarray
    u_samples: np.ndarray
    t_fine: np.ndarray
    y_fine: np.ndarray
    u_fine: np.ndarray
    fine_per_period: int
    continuous_t: np.ndarray | None
    continuous_y: np.ndarray | None
    continuous_method: str = ""
    notes: tuple[str, ...] = ()

    @property
    def samples(self) -> int:
        return int(self.t_samples.size)

    def plant_output_at_samples(self) -> np.ndarray:
        """``y(kT)``: the plant output (before the sensor) at the sampling instants."""
        return self.y_fine[:: self.fine_per_period]

    def to_dict(self) -> dict[str, Any]:
        def arr(x: np.ndarray | None) -> list[float] | None:
            return None if x is None else [float(v) for v in x]

        return {
            "period_s": self.period_s,
            "compute_delay_s": self.compute_delay_s,
            "t_samples": arr(self.t_samples),
            "y_samples": arr(self.y_samples),
            "u_samples": arr(self.u_samples),
            "t_fine": arr(self.t_fine),
            "y_fine": arr(self.y_fine),
            "u_fine": arr(self.u_fine),
            "fine_per_period": self.fine_per_period,
            "continuous_t": arr(self.continuous_t),
            "continuous_y": arr(self.continuous_y),
            "continuous_method": self.continuous_method,
            "notes": list(self.notes),
        }


# ---- state-space pieces --------------------------------------------------------------------------

StateSpace = tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]


def _series(first: StateSpace, second: StateSpace) -> StateSpace:
    """``u -> first -> second -> y`` with state ``[x_first; x_second]``."""
    a1, b1, c1, d1 = first
    a2, b2, c2, d2 = second
    n1, n2 = a1.shape[0], a2.shape[0]
    a = np.block([[a1, np.zeros((n1, n2))], [b2 @ c1, a2]])
    b = np.vstack([b1, b2 @ d1])
    c = np.hstack([d2 @ c1, c2])
    return a, b, c, d2 @ d1


def _ss(system: Any) -> StateSpace:
    a, b, c, d = system.state_space()
    n = a.shape[0]
    return (np.asarray(a, float).reshape(n, n), np.asarray(b, float).reshape(n, 1),
            np.asarray(c, float).reshape(1, n), np.asarray(d, float).reshape(1, 1))


def path_state_space(spec: LoopSpec) -> tuple[StateSpace, np.ndarray, int]:
    """Plant then sensor in series, every mode kept.

    Returns ``((A, B, C, D), plant_rows, plant_states)`` where ``plant_rows = [C_p, 0 | D_p]``
    reads the plant output (before the sensor) from the series state and the input, and the first
    ``plant_states`` states are the plant's.
    """
    plant = _ss(spec.plant)
    n_p = plant[0].shape[0]
    if spec.sensor is None:
        path = plant
    else:
        path = _series(plant, _ss(spec.sensor))
    n = path[0].shape[0]
    rows = np.zeros(n + 1)
    rows[:n_p] = plant[2][0]
    rows[n] = plant[3][0, 0]
    return path, rows, n_p


@dataclass(frozen=True)
class HeldPropagator:
    """Exact propagation of ``dx/dt = A x + B v`` under a staircase input that reaches the system
    ``delay_s`` after each update instant ``kT``.

    With ``delay_s = N T + theta`` the input on ``[kT, kT + theta)`` is ``a_k = u[k - N - 1]`` and on
    ``[kT + theta, (k+1)T)`` it is ``b_k = u[k - N]``; then (Astrom and Wittenmark 1997, section 2.3)

        x[k+1] = Phi x[k] + Gamma_a a_k + Gamma_b b_k,
        Phi = exp(A T),  Gamma_b = int_0^(T-theta) exp(A s) ds B,
        Gamma_a = exp(A (T - theta)) int_0^theta exp(A s) ds B,

    and at an offset ``s`` inside the period the same with ``T`` replaced by ``s``.
    """

    period_s: float
    whole: int  # N
    theta_s: float
    phi: np.ndarray
    gamma_a: np.ndarray  # (n,)
    gamma_b: np.ndarray  # (n,)
    offsets_s: np.ndarray  # (M,)
    e_off: np.ndarray  # (M, n, n)
    ga_off: np.ndarray  # (M, n)
    gb_off: np.ndarray  # (M, n)
    after_update: np.ndarray  # (M,) bool: offset >= theta (input is b_k)

    @classmethod
    def build(cls, a: np.ndarray, b: np.ndarray, period_s: float, delay_s: float,
              offsets_s: np.ndarray) -> "HeldPropagator":
        split = split_delay(delay_s, period_s)
        theta = split.fraction_s
        n = a.shape[0]
        offsets_s = np.asarray(offsets_s, dtype=float)
        after = offsets_s >= theta - SNAP * period_s
        # every interval length needed, exponentiated in one batched call
        lengths = np.concatenate([[theta, period_s - theta, period_s], offsets_s, offsets_s - theta])
        lengths = np.maximum(lengths, 0.0)
        e, g = hold_exponentials(a, b, lengths)
        m = offsets_s.size
        e_theta, g_theta = e[0], g[0]
        phi = e[2]
        gamma_a = e[1] @ g_theta
        gamma_b = g[1]
        e_off = e[3:3 + m]
        before = ~after
        ga_off = np.where(before[:, None], g[3:3 + m], np.einsum("mij,j->mi", e[3 + m:], g_theta))
        gb_off = np.where(after[:, None], g[3 + m:], 0.0)
        del e_theta
        return cls(period_s, split.whole_periods, theta, phi, gamma_a, gamma_b, offsets_s,
                   e_off, ga_off, gb_off, after)

    def inputs(self, u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """``(a_k, b_k)`` for ``k = 0..len(u)-1`` (zero before the first update)."""
        k = np.arange(u.size)
        ia, ib = k - self.whole - 1, k - self.whole
        a = np.where(ia >= 0, u[np.clip(ia, 0, None)], 0.0)
        b = np.where(ib >= 0, u[np.clip(ib, 0, None)], 0.0)
        return a, b

    def states(self, u: np.ndarray) -> np.ndarray:
        """States ``x[k]`` at ``kT``, ``k = 0..len(u)-1``, from rest."""
        n = self.phi.shape[0]
        a, b = self.inputs(u)
        x = np.zeros((u.size, n))
        for k in range(u.size - 1):
            x[k + 1] = self.phi @ x[k] + self.gamma_a * a[k] + self.gamma_b * b[k]
        return x

    def fine(self, x: np.ndarray, u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """States at every offset of every period (``(K, M, n)``) and the input applied there
        (``(K, M)``)."""
        a, b = self.inputs(u)
        xs = np.einsum("mij,kj->kmi", self.e_off, x)
        xs += a[:, None, None] * self.ga_off[None, :, :] + b[:, None, None] * self.gb_off[None, :, :]
        v = np.where(self.after_update[None, :], b[:, None], a[:, None])
        return xs, v


def hold_exponentials(a: np.ndarray, b: np.ndarray, lengths_s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``exp(A h)`` and ``int_0^h exp(A s) ds B`` for every ``h`` in ``lengths_s`` [s].

    From the block exponential ``expm([[A, B], [0, 0]] h) = [[exp(A h), Gamma(h)], [0, 1]]``
    (Van Loan 1978), all lengths in one batched call. Returns arrays ``(L, n, n)`` and ``(L, n)``.
    """
    n = a.shape[0]
    block = np.zeros((n + 1, n + 1))
    block[:n, :n] = a
    block[:n, n] = b.reshape(n)
    stack = block[None, :, :] * np.asarray(lengths_s, dtype=float)[:, None, None]
    big = scipy.linalg.expm(stack) if n else np.tile(np.eye(1), (len(lengths_s), 1, 1))
    return big[:, :n, :n], big[:, :n, n]


def staircase(u: np.ndarray, period_s: float, delay_s: float, offsets_s: np.ndarray) -> np.ndarray:
    """The held command ``u[k]`` applied ``delay_s`` after ``kT``, at ``kT + offsets`` (``(K, M)``)."""
    split = split_delay(delay_s, period_s)
    k = np.arange(u.size)
    ia, ib = k - split.whole_periods - 1, k - split.whole_periods
    a = np.where(ia >= 0, u[np.clip(ia, 0, None)], 0.0)
    b = np.where(ib >= 0, u[np.clip(ib, 0, None)], 0.0)
    after = offsets_s >= split.fraction_s - SNAP * period_s
    return np.where(after[None, :], b[:, None], a[:, None])


# ---- horizon ---------------------------------------------------------------------------------------

def default_samples(closed_loop: DiscreteSystem) -> int:
    """Samples covering ``SETTLING_TIME_CONSTANTS`` time constants of the slowest decaying pole.

    A pole ``z`` decays as ``|z|^k = exp(k ln|z|)``: its time constant is ``-1/ln|z|`` samples
    (``ln|z| = log1p(-(1 - |z|))`` from the accurate distance to the circle). An unstable loop is
    shown until its fastest-growing pole has grown by ``UNSTABLE_GROWTH_NEPERS``. The result is
    clamped to ``[MIN_SAMPLES, MAX_SAMPLES]``.
    """
    poles = closed_loop.poles()
    dist = poles.unit_circle_distance
    extra = closed_loop.delay_samples + 2
    if dist.size == 0:
        return MIN_SAMPLES
    with np.errstate(divide="ignore"):
        log_r = np.log1p(-np.clip(dist, -1e300, 1.0 - 1e-300))
    growing = log_r[log_r > 1e-9]
    if growing.size:
        k = UNSTABLE_GROWTH_NEPERS / float(np.max(growing))
        return int(min(max(math.ceil(k) + extra, MIN_SAMPLES), MAX_SAMPLES))
    decaying = log_r[log_r < -1e-12]
    if decaying.size == 0:
        return MAX_SAMPLES // 4
    tau = -1.0 / float(np.max(decaying))
    k = SETTLING_TIME_CONSTANTS * tau + extra
    return int(min(max(math.ceil(k), MIN_SAMPLES), MAX_SAMPLES))


# ---- the digital loop --------------------------------------------------------------------------------

def _controller_arrays(ctrl: DiscreteSystem) -> tuple[np.ndarray, np.ndarray, np.ndarray, float, int]:
    n = ctrl.order
    return (ctrl.phi, ctrl.gamma.reshape(n), ctrl.c.reshape(n), float(ctrl.d[0, 0]), ctrl.delay_samples)


def _fine_offsets(period_s: float, points_per_period: int, breakpoints_s: list[float]) -> np.ndarray:
    """Uniform offsets in ``[0, T)`` plus the breakpoints; points closer than ``SNAP T`` merge."""
    base = list(np.arange(points_per_period) * (period_s / points_per_period))
    for b in sorted(breakpoints_s):
        if 0.0 < b < period_s and min(abs(b - x) for x in base) > SNAP * period_s:
            base.append(b)
    return np.array(sorted(base))


def step_response(
    spec: LoopSpec,
    period_s: float | None = None,
    *,
    samples: int | None = None,
    points_per_period: int = 16,
    controller: DiscreteSystem | None = None,
    with_continuous: bool = True,
) -> StepResponse:
    """Unit step response of the loop as it runs, exact between samples, and of the continuous design.

    Parameters
    ----------
    spec : LoopSpec
    period_s : float [s], optional
        Sample period (default: the case's).
    samples : int, optional
        Number of sampling instants ``K >= 2``; by default from the slowest closed-loop pole
        (:func:`default_samples`).
    points_per_period : int
        Uniform points per period on the fine grid (at least 1; the instants where the held input
        changes are added).
    controller : DiscreteSystem, optional
        Replaces the case's controller (e.g. quantised coefficients).
    with_continuous : bool
        Also simulate the continuous design (skipped by the hazard checks, which need only the
        digital loop).

    Returns
    -------
    StepResponse
    """
    t = spec.period_s if period_s is None else float(period_s)
    if isinstance(points_per_period, bool) or not isinstance(points_per_period, int) or points_per_period < 1:
        raise InputError(f"points_per_period must be a positive integer, got {points_per_period!r}", "points_per_period")
    ctrl = controller if controller is not None else digital_controller(spec, t)
    if samples is None:
        samples = default_samples(digital_loop(spec, t, ctrl).closed_loop)
    if isinstance(samples, bool) or not isinstance(samples, int) or samples < 2:
        raise InputError(f"samples must be an integer of at least 2, got {samples!r}", "samples")
    tau_c = compute_delay_s(spec, t)
    plant_delay = spec.plant.delay_s
    sensor_delay = spec.sensor.delay_s if spec.sensor is not None else 0.0
    path, _, _ = path_state_space(spec)
    a_g, b_g, c_g, d_g = path
    total_delay = tau_c + plant_delay + sensor_delay

    # -- the loop, sample by sample: sampler -> controller -> (delay, hold) -> plant -> sensor
    meas = HeldPropagator.build(a_g, b_g, t, total_delay, np.zeros(0))
    phi_c, gam_c, c_c, d_c, dly_c = _controller_arrays(ctrl)
    cg = c_g.reshape(-1)
    dg = float(d_g[0, 0])
    n_w, theta = meas.whole, meas.theta_s
    u = np.zeros(samples)
    y_m = np.zeros(samples)
    e_hist = np.zeros(samples)
    x = np.zeros(a_g.shape[0])
    xc = np.zeros(phi_c.shape[0])
    for k in range(samples):
        # the input held at t = kT (right-continuous): u[k-N] when the update falls on kT, else u[k-N-1]
        i_now = k - n_w - (0 if theta == 0.0 else 1)
        if i_now < k or dg == 0.0:
            y_m[k] = cg @ x + (dg * u[i_now] if i_now >= 0 else 0.0)
            e_hist[k] = 1.0 - y_m[k]
            u[k] = c_c @ xc + (d_c * e_hist[k - dly_c] if k >= dly_c else 0.0)
        elif dly_c > 0:
            u[k] = c_c @ xc + (d_c * e_hist[k - dly_c] if k >= dly_c else 0.0)
            y_m[k] = cg @ x + dg * u[k]
            e_hist[k] = 1.0 - y_m[k]
        else:
            # y_m = C x + D u[k] and u[k] = C_c x_c + D_c (1 - y_m): solve the algebraic loop
            denom = 1.0 + d_c * dg
            if denom == 0.0:
                raise NumericalError("the loop is an algebraic loop with 1 + D_controller D_path = 0")
            u[k] = (c_c @ xc + d_c * (1.0 - cg @ x)) / denom
            y_m[k] = cg @ x + dg * u[k]
            e_hist[k] = 1.0 - y_m[k]
        xc = phi_c @ xc + gam_c * (e_hist[k - dly_c] if k >= dly_c else 0.0)
        a_k = u[k - n_w - 1] if k - n_w - 1 >= 0 else 0.0
        b_k = u[k - n_w] if k - n_w >= 0 else 0.0
        x = meas.phi @ x + meas.gamma_a * a_k + meas.gamma_b * b_k
    if not (np.all(np.isfinite(u)) and np.all(np.isfinite(y_m))):
        raise NumericalError("the simulated response overflowed; ask for fewer samples")

    # -- the plant output between samples: plant alone, input delayed by tau_c + L_p
    theta_c = split_delay(tau_c, t).fraction_s
    theta_p = split_delay(tau_c + plant_delay, t).fraction_s
    offsets = _fine_offsets(t, points_per_period, [theta_c, theta_p])
    a_p, b_p, c_p, d_p = _ss(spec.plant)
    prop = HeldPropagator.build(a_p, b_p, t, tau_c + plant_delay, offsets)
    xp = prop.states(u)
    xs, v = prop.fine(xp, u)
    y_grid = np.einsum("i,kmi->km", c_p.reshape(-1), xs) + float(d_p[0, 0]) * v
    u_grid = staircase(u, t, tau_c, offsets)
    t_grid = (np.arange(samples)[:, None] * t) + offsets[None, :]
    last = samples - 1  # the fine grid covers periods 0..K-2 and ends at the last sample
    t_fine = np.concatenate([t_grid[:last].reshape(-1), [t_grid[last, 0]]])
    y_fine = np.concatenate([y_grid[:last].reshape(-1), [y_grid[last, 0]]])
    u_fine = np.concatenate([u_grid[:last].reshape(-1), [u_grid[last, 0]]])

    notes: list[str] = []
    cont_t: np.ndarray | None = None
    cont_y: np.ndarray | None = None
    method = ""
    if with_continuous:
        horizon = t * (samples - 1)
        cont = continuous_step(spec, horizon, t / points_per_period)
        if cont is None:
            notes.append("the controller has no continuous design: no continuous response")
        elif isinstance(cont, str):
            notes.append(cont)
        else:
            cont_t, cont_y, method = cont
    return StepResponse(t, tau_c, np.arange(samples) * t, y_m, u, t_fine, y_fine, u_fine, offsets.size,
                        cont_t, cont_y, method, tuple(notes))


# ---- the continuous design ----------------------------------------------------------------------------

def continuous_step(spec: LoopSpec, horizon_s: float, step_s: float) -> tuple[np.ndarray, np.ndarray, str] | str | None:
    """Closed-loop unit step response (plant output) of the continuous design on ``[0, horizon_s]``.

    Returns ``(t, y, method)``, a sentence saying why it cannot be computed, or None when the
    controller has no continuous design. See the module docstring for the method.
    """
    design = spec.controller.continuous()
    if design is None:
        return None
    ac, bc, cc, dc_m = _ss(design)
    path, plant_rows, _ = path_state_space(spec)
    ag, bg, cg, dg_m = path
    nc, ng = ac.shape[0], ag.shape[0]
    dc, dg, dp = float(dc_m[0, 0]), float(dg_m[0, 0]), float(plant_rows[-1])
    cy = plant_rows[:-1]
    delay = design.delay_s + spec.plant.delay_s + (spec.sensor.delay_s if spec.sensor is not None else 0.0)
    sensor_delay = spec.sensor.delay_s if spec.sensor is not None else 0.0
    n = nc + ng + 1  # w = [x_c; x_g; r]
    zero_c, zero_g = np.zeros(nc), np.zeros(ng)
    a0 = np.zeros((n, n))
    a0[:nc, :nc] = ac
    a0[nc:nc + ng, nc:nc + ng] = ag
    a1 = np.zeros((n, n))
    bc_col = np.concatenate([bc.reshape(nc), zero_g, [0.0]])
    bg_col = np.concatenate([zero_c, bg.reshape(ng), [0.0]])
    y1 = np.zeros(n)
    if delay == 0.0:
        denom = 1.0 + dc * dg
        if denom == 0.0:
            return "the continuous loop has an algebraic loop (1 + D_controller D_path = 0): no continuous response"
        ku = np.concatenate([cc.reshape(nc), -dc * cg.reshape(ng), [dc]]) / denom
        ke = np.concatenate([zero_c, -cg.reshape(ng), [1.0]]) - dg * ku
        a0 += np.outer(bc_col, ke) + np.outer(bg_col, ku)
        y0 = np.concatenate([zero_c, cy, [0.0]]) + dp * ku
        method = "exact closed-loop matrix exponential on a uniform grid"
    else:
        if dg != 0.0 and dc != 0.0:
            return ("the continuous design with a transport delay and direct feedthrough in both controller and "
                    "path is a neutral delay equation: no continuous response")
        # u(t) = C_c x_c + D_c e(t),  e(t) = r - C_g x_g - D_g u(t - L)  (D_g D_c = 0 here)
        ku0 = np.concatenate([cc.reshape(nc), -dc * cg.reshape(ng), [dc]])
        ke0 = np.concatenate([zero_c, -cg.reshape(ng), [1.0]])
        ke1 = -dg * np.concatenate([cc.reshape(nc), zero_g, [0.0]])
        a0 += np.outer(bc_col, ke0)
        a1 += np.outer(bg_col, ku0) + np.outer(bc_col, ke1)
        y0 = np.concatenate([zero_c, cy, [0.0]])
        y1 = dp * ku0
        method = "exact method of steps with matrix exponentials on a uniform grid (delay a whole number of steps)"
    end = horizon_s + sensor_delay
    h = max(step_s, end / MAX_CONTINUOUS_STEPS)
    lag = 0
    if delay > 0.0:
        lag = max(1, math.ceil(delay / h - 1e-9))
        h = delay / lag
    steps = max(1, math.ceil(end / h - 1e-9))
    blocks = 0 if delay == 0.0 else min(steps // lag, MAX_DELAY_BLOCKS)
    e_blocks = _method_of_steps_blocks(a0, a1, h, blocks)
    if blocks == MAX_DELAY_BLOCKS and len(e_blocks) == blocks + 1 and steps // lag > blocks:
        return ("the continuous design's delay equation needs more than "
                f"{MAX_DELAY_BLOCKS} delay blocks at this grid: no continuous response")
    blocks = len(e_blocks) - 1
    w = np.zeros((steps + 1, n))
    w[0, -1] = 1.0  # r = 1 from t = 0; the states start at rest
    e0 = e_blocks[0]
    if blocks == 0:
        for i in range(steps):
            w[i + 1] = e0 @ w[i]
    else:
        i = 0
        while i < steps:
            stop = min(steps, (i // lag + 1) * lag)  # one delay interval: the lagged terms are known
            idx = np.arange(i, stop)
            forcing = np.zeros((idx.size, n))
            for l in range(1, blocks + 1):
                past = idx - l * lag
                ok = past >= 0
                if not np.any(ok):
                    break
                forcing[ok] += w[past[ok]] @ e_blocks[l].T
            for j, ii in enumerate(idx):
                w[ii + 1] = e0 @ w[ii] + forcing[j]
            i = stop
    if not np.all(np.isfinite(w)):
        return "the continuous design's response overflowed on this horizon: no continuous response"
    y = w @ y0
    if delay > 0.0:
        past = np.arange(steps + 1) - lag
        ok = past >= 0
        y[ok] += w[past[ok]] @ y1
    tt = np.arange(steps + 1) * h
    if sensor_delay > 0.0:
        # the plant block above sees the whole delay; the plant output itself is that signal
        # sensor_delay earlier: y(t) = y_shifted(t + L_f), exact on the shifted grid
        keep = tt >= sensor_delay - 1e-12 * max(1.0, end)
        tt = np.maximum(tt[keep] - sensor_delay, 0.0)
        y = y[keep]
    inside = tt <= horizon_s * (1 + 1e-12)
    return tt[inside], y[inside], method


def _method_of_steps_blocks(a0: np.ndarray, a1: np.ndarray, h: float, blocks: int) -> list[np.ndarray]:
    """``E_0..E_J``: the first block row of ``expm(M h)``, ``M`` block upper-bidiagonal with ``A0``
    on the diagonal and ``A1`` above it (``J = blocks``); trailing blocks below rounding are dropped."""
    n = a0.shape[0]
    size = n * (blocks + 1)
    m = np.zeros((size, size))
    for i in range(blocks + 1):
        m[i * n:(i + 1) * n, i * n:(i + 1) * n] = a0
        if i < blocks:
            m[i * n:(i + 1) * n, (i + 1) * n:(i + 2) * n] = a1
    e = scipy.linalg.expm(m * h)
    out = [e[:n, i * n:(i + 1) * n] for i in range(blocks + 1)]
    scale = float(np.max(np.abs(out[0]))) or 1.0
    while len(out) > 1 and float(np.max(np.abs(out[-1]))) <= 1e-18 * scale:
        out.pop()
    return out
