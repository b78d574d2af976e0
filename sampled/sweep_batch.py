"""Vectorised assembly of the sampled loop at many periods at once (the engine of :mod:`sampled.sweep`).

For a stack of periods ``T_1 .. T_k`` this module builds, without a Python loop per period over
matrix work, the same loop that :func:`sampled.loop.digital_loop` builds one period at a time:

* the zero-order-hold equivalent of ``F(s) P(s)`` behind the total delay ``L + compute delay``,
  split per period into whole periods ``N`` and a fraction ``theta`` (the whole count changes with
  the period, so periods are grouped by ``(N, theta > 0)``: each group has one matrix shape);
* the controller by its rule (Tustin, Euler and zero-order hold batched; firmware coefficients are
  period-independent in shift form; matched pole-zero, triangle hold and PID fall back to the
  per-period constructor, which is cheap for a controller);
* the open loop ``C(z) z^-d G(z)`` and the closed loop in DELTA form, whose eigenvalues ``lambda``
  give ``z = 1 + T lambda`` and ``1 - |z|`` without cancellation.

The block exponentials come from the phi-function pair ``G = exp(X) - I`` and ``F = phi_1(X)``
evaluated for the whole stack by a Taylor polynomial of a scaled matrix and the "modified squaring"
recurrences

    phi_1(2X) = phi_1(X) + (1/2) G(X) phi_1(X),      G(2X) = 2 G(X) + G(X)^2,

which never subtract ``I`` from a matrix close to it (Skaflestad and Wright 2009, section 2, from
memory). ``A_delta = (exp(A h) - I)/h = G/h`` and ``B_delta = phi_1(A h) B = F B``.

References
----------
B. Skaflestad and W. M. Wright, "The scaling and modified squaring method for matrix functions
related to the exponential", Applied Numerical Mathematics 59(3), 2009, pp. 783-799.
N. J. Higham, "Functions of Matrices", SIAM, 2008, section 10.3 (scaling and squaring).
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., 1997, section 2.3
(sampling with a fractional delay).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sampled.casefile import LoopSpec
from sampled.discrete import DiscreteSystem
from sampled.discretize import WHOLE_PERIOD_TOLERANCE
from sampled.errors import InputError
from sampled.loop import digital_controller, path_system
from sampled.systems import ContinuousSystem

#: Taylor degree of phi_1 on a matrix scaled to 1-norm <= TAYLOR_RADIUS; the remainder is below
#: TAYLOR_RADIUS^14 / 15! ~ 5e-17, under the unit roundoff.
TAYLOR_DEGREE = 13
TAYLOR_RADIUS = 0.5

_FACTORIALS = [math.factorial(j) for j in range(TAYLOR_DEGREE + 2)]


def phi_pair(a: np.ndarray, h: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``G = exp(A h) - I`` and ``F = phi_1(A h)`` for every interval in ``h``.

    Parameters
    ----------
    a : ndarray (n, n) [1/s]
    h : ndarray (k,) [s]
        Interval lengths, ``h >= 0``.

    Returns
    -------
    G, F : ndarray (k, n, n)

    Notes
    -----
    Each ``X = A h`` is scaled by ``2^-s`` so that ``||X||_1 <= 0.5``, ``phi_1`` is summed by
    Horner's rule, ``G = X phi_1(X)``, and both are doubled ``s`` times by the recurrences in the
    module docstring (per matrix: the stack carries its own ``s``).
    """
    a = np.asarray(a, dtype=float)
    h = np.asarray(h, dtype=float).reshape(-1)
    n, k = a.shape[0], h.size
    if n == 0:
        return np.zeros((k, 0, 0)), np.zeros((k, 0, 0))
    norm = float(np.max(np.sum(np.abs(a), axis=0))) * h
    with np.errstate(divide="ignore"):
        s = np.where(norm > TAYLOR_RADIUS, np.ceil(np.log2(np.maximum(norm, 1e-300) / TAYLOR_RADIUS)), 0.0)
    s = s.astype(int)
    x = a[None, :, :] * (h / np.exp2(s))[:, None, None]
    eye = np.eye(n)
    f = np.broadcast_to(eye / _FACTORIALS[TAYLOR_DEGREE + 1], (k, n, n)).copy()
    for j in range(TAYLOR_DEGREE - 1, -1, -1):  # phi_1(X) = sum_j X^j / (j + 1)!
        f = x @ f
        f += eye / _FACTORIALS[j + 1]
    g = x @ f
    top = int(s.max()) if k else 0
    for step in range(top):
        m = s > step
        if not np.any(m):
            break
        gm, fm = g[m], f[m]
        f[m] = fm + 0.5 * (gm @ fm)
        g[m] = 2.0 * gm + gm @ gm
    return g, f


@dataclass(frozen=True)
class DeltaStack:
    """A stack of SISO systems in delta form with one shape: ``(k, n, n)``, ``(k, n, 1)``, ``(k, 1, n)``, ``(k,)``.

    ``delay`` is the whole-sample input delay, the same for the whole stack.
    """

    a: np.ndarray
    b: np.ndarray
    c: np.ndarray
    d: np.ndarray
    delay: int

    @property
    def order(self) -> int:
        return int(self.a.shape[1])


@dataclass(frozen=True)
class LoopGroup:
    """Periods sharing one closed-loop shape, with their open loop in delta form.

    Attributes
    ----------
    index : ndarray of int
        Positions of these periods in the caller's array.
    periods_s : ndarray [s]
    open_loop : DeltaStack
        ``C(z) G(z)`` with the whole-sample delay kept separate (as in :class:`DiscreteSystem`).
    loop_a, loop_b, loop_c, loop_d
        The open loop with its delay realised as states: ``A_cl(g) = A - g B C / (1 + g D)`` is the
        closed-loop delta matrix for a loop-gain multiplier ``g``.
    """

    index: np.ndarray
    periods_s: np.ndarray
    open_loop: DeltaStack
    loop_a: np.ndarray
    loop_b: np.ndarray
    loop_c: np.ndarray
    loop_d: np.ndarray

    def closed_loop(self, gain: float = 1.0) -> np.ndarray:
        """Closed-loop delta matrices ``(k, m, m)`` for loop-gain multiplier ``gain``."""
        denom = 1.0 + gain * self.loop_d
        if np.any(denom == 0):
            raise InputError("the feedback loop is not well posed at some period (1 + D = 0: an algebraic loop)")
        return self.loop_a - (gain / denom)[:, None, None] * (self.loop_b @ self.loop_c)


# ---- preparation (once per case) -----------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class PreparedLoop:
    """What does not depend on the period, computed once: realisations of the path and controller.

    Attributes
    ----------
    spec : LoopSpec
    path : tuple (A, B, C, D) of ``F(s) P(s)`` (D as a float), delay excluded
    path_delay_s : float [s]
        Transport delay of the path.
    controller : tuple (A, B, C, D) of the continuous controller, or None
        Set when the controller is batched by its mapping (Tustin, Euler, zero-order hold).
    firmware : DiscreteSystem or None
        The firmware controller (period-independent shift form).
    """

    spec: LoopSpec
    path: tuple[np.ndarray, np.ndarray, np.ndarray, float]
    path_delay_s: float
    controller: tuple[np.ndarray, np.ndarray, np.ndarray, float] | None
    firmware: DiscreteSystem | None


def _realise(system: ContinuousSystem) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    a, b, c, d = system.state_space()
    n = a.shape[0]
    return (np.asarray(a, dtype=float).reshape(n, n), np.asarray(b, dtype=float).reshape(n, 1),
            np.asarray(c, dtype=float).reshape(1, n), float(np.asarray(d).reshape(-1)[0]) if np.size(d) else 0.0)


def prepare_loop(spec: LoopSpec) -> PreparedLoop:
    """Realise the path and (when batched) the controller of ``spec`` once."""
    path = path_system(spec)
    ctrl = spec.controller
    mapped = None
    firmware = None
    if ctrl.kind == "digital":
        firmware = digital_controller(spec, spec.period_s)
    elif ctrl.kind == "transfer" and ctrl.transfer is not None and ctrl.transfer.delay_s == 0 and ctrl.method in BATCHED_METHODS:
        mapped = _realise(ctrl.transfer)
    return PreparedLoop(spec, _realise(path), path.delay_s, mapped, firmware)


#: Controller mappings assembled for the whole stack at once.
BATCHED_METHODS = ("tustin", "forward-euler", "backward-euler", "zoh")


# ---- plant ---------------------------------------------------------------------------------------

def split_delays(prep: PreparedLoop, periods_s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Whole periods and fraction [s] of the total delay at every period.

    The same rule as :func:`sampled.discretize.split_delay` (ratios within
    ``WHOLE_PERIOD_TOLERANCE`` of an integer snap to it), vectorised.
    """
    t = np.asarray(periods_s, dtype=float)
    cd = prep.spec.compute_delay
    compute = cd.samples * t if cd.samples is not None else np.full(t.size, float(cd.seconds or 0.0))
    total = prep.path_delay_s + compute
    ratio = total / t
    nearest = np.round(ratio)
    snap = np.abs(ratio - nearest) <= WHOLE_PERIOD_TOLERANCE * np.maximum(1.0, ratio)
    floor = np.floor(ratio)
    whole = np.where(snap, nearest, floor).astype(int)
    frac = np.where(snap, 0.0, np.clip(total - floor * t, 0.0, t))
    return whole, frac


def plant_stacks(prep: PreparedLoop, periods_s: np.ndarray) -> list[tuple[np.ndarray, DeltaStack]]:
    """Zero-order-hold pulse transfers of ``F(s) P(s)`` with delays, grouped by shape.

    Returns ``[(index, stack), ...]``; see :func:`sampled.discretize.zoh_with_delay` for the
    equations (the same construction, batched).
    """
    a, b, c, d0 = prep.path
    n = a.shape[0]
    whole, frac = split_delays(prep, periods_s)
    out: list[tuple[np.ndarray, DeltaStack]] = []
    keys = sorted({(int(w), bool(f > 0)) for w, f in zip(whole, frac)})
    for w, has_frac in keys:
        idx = np.nonzero((whole == w) & ((frac > 0) == has_frac))[0]
        t = periods_s[idx]
        k = idx.size
        g, f = phi_pair(a, t)
        a_full = g / t[:, None, None]
        if not has_frac:
            stack = DeltaStack(a_full, np.broadcast_to(f @ b, (k, n, 1)).copy(), np.broadcast_to(c, (k, 1, n)).copy(),
                               np.full(k, d0), w)
        else:
            theta = frac[idx]
            g_late, f_late = phi_pair(a, t - theta)  # u[k] acts during the last T - theta
            _, f_early = phi_pair(a, theta)  # u[k-1] acts during the first theta
            gamma0 = (t - theta)[:, None, None] * (f_late @ b)
            gamma_early = theta[:, None, None] * (f_early @ b)
            gamma1 = gamma_early + g_late @ gamma_early  # exp(A (T - theta)) times the early integral
            m = n + 1
            a_dl = np.zeros((k, m, m))
            a_dl[:, :n, :n] = a_full
            a_dl[:, :n, n:] = gamma1 / t[:, None, None]
            a_dl[:, n, n] = -1.0 / t
            b_dl = np.zeros((k, m, 1))
            b_dl[:, :n, :] = gamma0 / t[:, None, None]
            b_dl[:, n, 0] = 1.0 / t
            c_aug = np.zeros((k, 1, m))
            c_aug[:, 0, :n] = c[0]
            c_aug[:, 0, n] = d0
            stack = DeltaStack(a_dl, b_dl, c_aug, np.zeros(k), w)
        out.append((idx, stack))
    return out


# ---- controller ----------------------------------------------------------------------------------

def controller_stacks(prep: PreparedLoop, periods_s: np.ndarray) -> list[tuple[np.ndarray, DeltaStack]]:
    """The controller at every period in delta form, grouped by shape."""
    spec = prep.spec
    k = periods_s.size
    everything = np.arange(k)
    if prep.firmware is not None:
        # Firmware coefficients do not depend on the period; only the delta scaling does.
        base = prep.firmware
        n = base.order
        t = periods_s[:, None, None]
        a = (base.phi - np.eye(n))[None, :, :] / t
        b = base.gamma[None, :, :] / t
        return [(everything, DeltaStack(a, b, np.broadcast_to(base.c, (k, 1, n)).copy(),
                                        np.full(k, float(base.d[0, 0])), base.delay_samples))]
    if prep.controller is not None:
        return [(everything, _mapped_controller(prep, periods_s))]
    # Matched pole-zero, triangle hold, PID, controllers with a delay: the per-period constructor.
    built = [digital_controller(spec, float(t)) for t in periods_s]
    keys = sorted({(s.order, s.delay_samples) for s in built})
    out = []
    for order, delay in keys:
        idx = np.array([i for i, s in enumerate(built) if (s.order, s.delay_samples) == (order, delay)], dtype=int)
        sel = [built[i] for i in idx]
        out.append((idx, DeltaStack(np.array([s.a_delta for s in sel]).reshape(len(sel), order, order),
                                    np.array([s.b_delta for s in sel]).reshape(len(sel), order, 1),
                                    np.array([s.c for s in sel]).reshape(len(sel), 1, order),
                                    np.array([float(s.d[0, 0]) for s in sel]), delay)))
    return out


def _mapped_controller(prep: PreparedLoop, periods_s: np.ndarray) -> DeltaStack:
    """Tustin (with prewarp), forward and backward Euler, or zero-order hold, batched.

    The rational mappings follow :func:`sampled.discretize._rational_mapping`: with
    ``M = I - w h A``, ``A_delta = (h/T) M^-1 A``, ``B_delta = (h/T) M^-1 B``, ``C_d = C M^-1``,
    ``D_d = D + w h C M^-1 B``.
    """
    ctrl = prep.spec.controller
    assert prep.controller is not None
    a, b, c, d0 = prep.controller
    n = a.shape[0]
    t = np.asarray(periods_s, dtype=float)
    k = t.size
    if ctrl.method == "zoh":
        g, f = phi_pair(a, t)
        return DeltaStack(g / t[:, None, None], f @ b, np.broadcast_to(c, (k, 1, n)).copy(), np.full(k, d0), 0)
    weight = {"tustin": 0.5, "forward-euler": 0.0, "backward-euler": 1.0}[ctrl.method]
    h = t.copy()
    if ctrl.method == "tustin" and ctrl.prewarp_rad_s is not None:
        w0 = ctrl.prewarp_rad_s
        too_slow = w0 >= np.pi / t
        if np.any(too_slow):
            limit = math.pi / w0
            raise InputError(
                f"the prewarp frequency {w0 / (2 * math.pi):.6g} Hz is at or above the Nyquist frequency "
                f"for periods of {limit:.6g} s and longer; sweep to a shorter period",
                "controller.prewarp",
            )
        h = 2.0 * np.tan(w0 * t / 2.0) / w0
    if n == 0:
        return DeltaStack(np.zeros((k, 0, 0)), np.zeros((k, 0, 1)), np.zeros((k, 1, 0)), np.full(k, d0), 0)
    m = np.eye(n)[None, :, :] - (weight * h)[:, None, None] * a[None, :, :]
    try:
        rhs = np.concatenate([np.broadcast_to(a, (k, n, n)), np.broadcast_to(b, (k, n, 1))], axis=2)
        sol = np.linalg.solve(m, rhs)
        c_d = np.linalg.solve(np.swapaxes(m, 1, 2), np.broadcast_to(c.T, (k, n, 1))).swapaxes(1, 2)
    except np.linalg.LinAlgError:
        raise InputError(
            f"the {ctrl.method} mapping sends a controller pole to z = infinity at a period in the sweep; "
            "choose another range", "period") from None
    ratio = (h / t)[:, None, None]
    minv_a, minv_b = sol[:, :, :n], sol[:, :, n:]
    d_d = d0 + weight * h * (c_d @ b)[:, 0, 0]  # C M^-1 B h = C Gamma
    return DeltaStack(ratio * minv_a, ratio * minv_b, c_d, d_d, 0)


# ---- the loop ------------------------------------------------------------------------------------

def _series(ctrl: DeltaStack, plant: DeltaStack) -> DeltaStack:
    """``plant`` after ``ctrl`` (state ``[x_c; x_p]``), as :meth:`DiscreteSystem.series`."""
    k = ctrl.a.shape[0]
    n1, n2 = ctrl.order, plant.order
    n = n1 + n2
    a = np.zeros((k, n, n))
    a[:, :n1, :n1] = ctrl.a
    a[:, n1:, n1:] = plant.a
    a[:, n1:, :n1] = plant.b @ ctrl.c
    b = np.concatenate([ctrl.b, plant.b * ctrl.d[:, None, None]], axis=1)
    c = np.concatenate([plant.d[:, None, None] * ctrl.c, plant.c], axis=2)
    return DeltaStack(a, b, c, plant.d * ctrl.d, ctrl.delay + plant.delay)


def _with_delay_states(sys: DeltaStack, periods_s: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The delay ``z^-d`` realised as ``d`` states (as :meth:`DiscreteSystem.with_delay_states`)."""
    dly = sys.delay
    if dly == 0:
        return sys.a, sys.b, sys.c, sys.d
    k, n = sys.a.shape[0], sys.order
    m = n + dly
    inv_t = 1.0 / periods_s
    a = np.zeros((k, m, m))
    a[:, :n, :n] = sys.a
    a[:, :n, m - 1] = sys.b[:, :, 0]
    for i in range(dly):
        j = n + i
        a[:, j, j] = -inv_t
        if i > 0:
            a[:, j, j - 1] = inv_t
    b = np.zeros((k, m, 1))
    b[:, n, 0] = inv_t
    c = np.zeros((k, 1, m))
    c[:, 0, :n] = sys.c[:, 0, :]
    c[:, 0, m - 1] = sys.d
    return a, b, c, np.zeros(k)


def loop_groups(spec: LoopSpec | PreparedLoop, periods_s: np.ndarray) -> list[LoopGroup]:
    """The sampled loop at every period, grouped by shape (see the module docstring).

    Pass a :class:`PreparedLoop` (from :func:`prepare_loop`) when calling repeatedly for one case.
    """
    prep = spec if isinstance(spec, PreparedLoop) else prepare_loop(spec)
    periods_s = np.asarray(periods_s, dtype=float).reshape(-1)
    if periods_s.size == 0:
        return []
    if not (np.all(np.isfinite(periods_s)) and np.all(periods_s > 0)):
        raise InputError("every period must be finite and positive", "period")
    plants = plant_stacks(prep, periods_s)
    ctrls = controller_stacks(prep, periods_s)
    out: list[LoopGroup] = []
    for p_idx, p_stack in plants:
        for c_idx, c_stack in ctrls:
            common, p_pos, c_pos = np.intersect1d(p_idx, c_idx, assume_unique=True, return_indices=True)
            if common.size == 0:
                continue
            pl = _take(p_stack, p_pos)
            ct = _take(c_stack, c_pos)
            t = periods_s[common]
            ol = _series(ct, pl)
            la, lb, lc, ld = _with_delay_states(ol, t)
            out.append(LoopGroup(common, t, ol, la, lb, lc, ld))
    return out


def _take(s: DeltaStack, pos: np.ndarray) -> DeltaStack:
    return DeltaStack(s.a[pos], s.b[pos], s.c[pos], s.d[pos], s.delay)


@dataclass(frozen=True)
class BatchStability:
    """Float evidence from the closed-loop delta eigenvalues at every period.

    Attributes
    ----------
    distance : ndarray
        Smallest ``1 - |z|`` over the closed-loop poles (1.0 for a loop without states).
    spectral_radius : ndarray
        Largest ``|z|``.
    tolerance : ndarray
        Rounding band of ``distance``: inside it the float sign is not trusted.
    """

    distance: np.ndarray
    spectral_radius: np.ndarray
    tolerance: np.ndarray


#: Eigenvalue error allowance relative to ``max |lambda T|`` (about 5e5 unit roundoffs).
EIGEN_TOLERANCE = 1e-10


def closed_loop_eigen(groups: list[LoopGroup], count: int, gain: float = 1.0) -> BatchStability:
    """Distance to the unit circle and spectral radius of the closed loop at every period."""
    dist = np.ones(count)
    radius = np.zeros(count)
    tol = np.zeros(count)
    for grp in groups:
        a_cl = grp.closed_loop(gain)
        t = grp.periods_s
        if a_cl.shape[1] == 0:
            continue
        if not np.all(np.isfinite(a_cl)):
            raise InputError("the closed loop has non-finite coefficients at some period of the sweep", "period")
        lam = np.linalg.eigvals(a_cl)
        lt = lam * t[:, None]
        z_abs = np.abs(1.0 + lt)
        # 1 - |z| = -(2 Re(lambda T) + |lambda T|^2) / (1 + |z|): no cancellation near the circle.
        d = -(2.0 * lt.real + (lt.real**2 + lt.imag**2)) / (1.0 + z_abs)
        dist[grp.index] = np.min(d, axis=1)
        radius[grp.index] = np.max(z_abs, axis=1)
        # Scale of the eigenvalues (LAPACK balances the matrix first, so entry sizes of a badly
        # scaled realisation do not set the error; the largest |lambda T| does).
        tol[grp.index] = EIGEN_TOLERANCE * np.max(np.abs(lt), axis=1)
    return BatchStability(dist, radius, tol)
