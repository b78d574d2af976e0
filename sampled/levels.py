"""Signal levels of the controller's registers inside the closed loop, and the overflow risk.

:func:`sampled.realisations.signal_levels` sizes the registers of the controller alone, for any
controller input bounded by 1. A controller with an integrator then has an unbounded worst case,
which says nothing useful: in the loop, the plant keeps the error small and the integrator holds a
finite value. This module sizes the registers where they run, in the CLOSED loop::

    r --> e = r - y_m --> controller program (registers) --> u --+--> plant pulse transfer --> y_m
                                                                 ^
                                                                 d (input disturbance)

The controller is taken as its program's linear maps (:func:`sampled.realisations.register_maps`:
``s[k+1] = A s[k] + B e[k]``, register values ``q[k] = M s[k] + N e[k]``, states in real units),
the plant as its shift-form state space with the whole-sample delays as states
(:meth:`sampled.discrete.DiscreteSystem.with_delay_states`): ``x[k+1] = Phi x[k] + Gamma (u[k] +
d[k])``, ``y_m[k] = C x[k] + D (u[k] + d[k])``. With ``u = C_c s + D_c e`` (the program's output
register ``y``) and ``e = r - y_m``, solving the one algebraic equation
``e (1 + D D_c) = r - C x - D C_c s - D d`` gives the closed loop in the stacked state ``(s, x)``.

For every register (and the controller's input word, which holds the error) the module reports

* the peak of ``|q[k]|`` for a unit step of the reference,
* the worst case over all references with ``|r[k]| <= 1``: the l1 norm of the impulse response
  from ``r`` to the register, attained by ``r[k-j] = sign h[j]``, summed until the tail is below
  a tolerance; infinite only when the closed loop is not stable (a closed-loop pole on or
  outside the unit circle, hidden modes included),
* the same two numbers for a disturbance added at the plant input,
* the largest value the register can hold in its fixed-point format, and the headroom
  ``log2(limit / worst case)`` in bits.

Overflow risk, for a reference amplitude ``R`` (default: the full scale of the signal format, the
largest reference the input word can carry; 1.0 in floating point) and an optional disturbance
amplitude ``D``: "none" when ``R g_r + D g_d`` fits every register, "likely" when a step of the
reference of size ``R`` (with a step disturbance of size ``D`` of either sign) already overflows
one, "possible" in between.

References
----------
Jackson, L. B., "Digital Filters and Signal Processing", 3rd ed., 1996, section 11.2 (scaling to
prevent overflow: the l1 norm bound and the step bound), from memory.
Franklin, G. F., Powell, J. D., Workman, M. L., "Digital Control of Dynamic Systems", 3rd ed.,
1998, chapter 13 (quantisation effects in digital controllers), from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from sampled.casefile import LoopSpec
from sampled.discrete import DiscreteSystem
from sampled.errors import InputError
from sampled.realisations import ImplementedController, Variable, register_maps

OverflowRisk = Literal["none", "possible", "likely"]
_RISK_ORDER: dict[str, int] = {"none": 0, "possible": 1, "likely": 2}

#: The impulse response is summed until a whole chunk stays below this fraction of the running sum.
TAIL_TOLERANCE = 1e-12


@dataclass(frozen=True)
class LoopRegisterLevel:
    """Size of one controller register's signal in the closed loop.

    Attributes
    ----------
    name, label : str
        Register (C identifier of the generated code; ``x`` is the controller input, the error)
        and what it holds.
    step_peak : float [register units per reference unit]
        Largest |value| for a unit step of the reference (inf when the loop is not stable).
    bounded_input_gain : float [register units per reference unit]
        Largest |value| for any reference with ``|r[k]| <= 1``: the l1 norm of the impulse
        response from the reference (inf when the loop is not stable).
    disturbance_step_peak, disturbance_gain : float [register units per input unit]
        The same for a disturbance added to the controller output at the plant input.
    limit : float [register units]
        Largest |value| the register holds (inf in floating point).
    worst_case : float [register units]
        ``R * bounded_input_gain + D * disturbance_gain`` for the stated amplitudes.
    step_value : float [register units]
        Peak for a reference step of size ``R`` together with a disturbance step of size ``D``
        (worse sign).
    headroom_bits : float [bits]
        ``log2(limit / worst_case)``: negative is bits missing; inf for a zero signal or an
        unbounded register, -inf for an unbounded signal.
    risk : {"none", "possible", "likely"}
    """

    name: str
    label: str
    step_peak: float
    bounded_input_gain: float
    disturbance_step_peak: float
    disturbance_gain: float
    limit: float
    worst_case: float
    step_value: float
    headroom_bits: float
    risk: OverflowRisk

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "label": self.label,
            "step_peak": self.step_peak,
            "bounded_input_gain": self.bounded_input_gain,
            "disturbance_step_peak": self.disturbance_step_peak,
            "disturbance_gain": self.disturbance_gain,
            "limit": self.limit,
            "worst_case": self.worst_case,
            "step_value": self.step_value,
            "headroom_bits": self.headroom_bits,
            "risk": self.risk,
        }


@dataclass(frozen=True)
class LoopLevels:
    """Closed-loop levels of every register of one implementation.

    Attributes
    ----------
    realisation : str
    reference_amplitude : float [signal units]
        ``R`` used for ``worst_case``, ``step_value`` and the risk.
    disturbance_amplitude : float [controller output units]
        ``D`` (0 when no disturbance was stated).
    loop_spectral_radius : float
        Largest closed-loop pole modulus of the stacked state space (hidden modes included).
    stable : bool
        ``loop_spectral_radius < 1``.
    samples : int
        Length of the impulse responses summed.
    converged : bool
        The tail fell below :data:`TAIL_TOLERANCE` of the sums before ``max_samples``; when False
        for a stable loop, the gains are lower bounds (sums of the first ``samples`` terms).
    registers : tuple of LoopRegisterLevel
    risk : {"none", "possible", "likely"}
        Worst over the registers.
    headroom_bits : float [bits]
        Smallest over the registers.
    """

    realisation: str
    reference_amplitude: float
    disturbance_amplitude: float
    loop_spectral_radius: float
    stable: bool
    samples: int
    converged: bool
    registers: tuple[LoopRegisterLevel, ...]
    risk: OverflowRisk
    headroom_bits: float

    def register(self, name: str) -> LoopRegisterLevel:
        for r in self.registers:
            if r.name == name:
                return r
        raise KeyError(name)

    def to_dict(self) -> dict[str, Any]:
        return {
            "realisation": self.realisation,
            "reference_amplitude": self.reference_amplitude,
            "disturbance_amplitude": self.disturbance_amplitude,
            "loop_spectral_radius": self.loop_spectral_radius,
            "stable": self.stable,
            "samples": self.samples,
            "converged": self.converged,
            "risk": self.risk,
            "headroom_bits": self.headroom_bits,
            "registers": [r.to_dict() for r in self.registers],
        }


@dataclass(frozen=True)
class ClosedLoopMaps:
    """The closed loop in the stacked state ``z = (controller states, plant states)``.

    ``z[k+1] = A z[k] + B [r[k], d[k]]^T`` and register values ``q[k] = M z[k] + N [r, d]^T``,
    rows of ``M``/``N`` in ``registers`` order (the controller input ``x`` first).
    """

    registers: tuple[Variable, ...]
    A: np.ndarray
    B: np.ndarray
    M: np.ndarray
    N: np.ndarray


def closed_loop_maps(impl: ImplementedController, plant: DiscreteSystem) -> ClosedLoopMaps:
    """Stack the controller program's register maps and the plant into the closed loop.

    Parameters
    ----------
    impl : ImplementedController
        The controller as implemented (its float program, rounded coefficients).
    plant : DiscreteSystem
        Pulse transfer from the controller output ``u[k]`` to the measurement ``y_m[k]``
        (whole-sample delays are turned into states here).

    Returns
    -------
    ClosedLoopMaps
    """
    regs, A, B, M, N = register_maps(impl)
    names = [r.name for r in regs]
    if "y" not in names:
        raise InputError("the controller program has no output register 'y'", impl.realisation)
    p = plant.with_delay_states()
    yi = names.index("y")
    cc, dc = M[yi : yi + 1, :], float(N[yi, 0])
    phi, gam, cp, dp = p.phi, p.gamma, p.c, float(p.d[0, 0])
    denom = 1.0 + dp * dc
    if abs(denom) < 1e-12:
        raise InputError("the loop has no solution at a sample: 1 + D_plant D_controller = 0 (algebraic loop)", "plant")
    g = 1.0 / denom
    ns, nx = A.shape[0], phi.shape[0]
    # e = Ce z + g r - g dp d
    ce = g * np.hstack([-dp * cc, -cp])
    fe = np.array([[g, -g * dp]])
    # u = cc s + dc e
    cu = np.hstack([cc, np.zeros((1, nx))]) + dc * ce
    fu = dc * fe
    acl = np.zeros((ns + nx, ns + nx))
    acl[:ns, :ns] = A
    acl[:ns, :] += B @ ce
    acl[ns:, ns:] = phi
    acl[ns:, :] += gam @ cu
    bcl = np.vstack([B @ fe, gam @ (fu + np.array([[0.0, 1.0]]))])
    m_reg = np.hstack([M, np.zeros((M.shape[0], nx))]) + N @ ce
    n_reg = N @ fe
    x_var = impl.program.variable("x")
    return ClosedLoopMaps(
        (x_var, *regs),
        acl,
        bcl,
        np.vstack([ce, m_reg]),
        np.vstack([fe, n_reg]),
    )


def register_limit(impl: ImplementedController, var: Variable) -> float:
    """Largest |value| register ``var`` holds: ``2**(bits - 1 - fraction_bits)`` (inf in float)."""
    if impl.number_format is None:
        return math.inf
    w = impl.number_format.word_bits
    bits = w if var.kind == "word" else 2 * w
    return math.ldexp(1.0, bits - 1 - var.fraction_bits)


def _impulse_sums(
    maps: ClosedLoopMaps, r_amp: float, d_amp: float, max_samples: int, chunk: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray, int, bool]:
    """Sums over the impulse responses from the reference and the disturbance.

    Returns the l1 norms and unit-step peaks, arrays (registers, 2) for (reference, disturbance);
    the peak for a reference step ``r_amp`` with a disturbance step ``+-d_amp`` (worse sign);
    the samples summed; whether the tail converged.
    """
    A, B, M, N = maps.A, maps.B, maps.M, maps.N
    n = A.shape[0]
    signs = np.array([[r_amp, r_amp], [d_amp, -d_amp]])  # columns: the two combined steps
    l1 = np.abs(N).copy()
    running = N.copy()  # unit-step responses at sample 0, (registers, 2)
    peak = np.abs(running).copy()
    combined = np.abs(running @ signs).max(axis=1)
    samples = 1
    if n == 0:
        return l1, peak, combined, samples, True
    # A^chunk by sequential products (no repeated squaring, which would perturb clustered
    # eigenvalues); each block of state columns A^k B then follows from the previous block.
    power = np.eye(n)
    for _ in range(chunk):
        power = A @ power
    cols = np.empty((2, n, chunk))
    for j in range(2):
        col = B[:, j].copy()
        for k in range(chunk):
            cols[j, :, k] = col
            col = A @ col
    converged = False
    while samples < max_samples:
        tail = np.zeros(M.shape[0])
        steps = []
        for j in range(2):
            h = M @ cols[j]  # registers x chunk
            l1[:, j] += np.abs(h).sum(axis=1)
            sj = running[:, j : j + 1] + np.cumsum(h, axis=1)
            peak[:, j] = np.maximum(peak[:, j], np.abs(sj).max(axis=1))
            running[:, j] = sj[:, -1]
            steps.append(sj)
            tail = np.maximum(tail, np.abs(h).max(axis=1) / np.maximum(l1[:, j], 1e-300))
        for c in range(2):
            both = signs[0, c] * steps[0] + signs[1, c] * steps[1]
            combined = np.maximum(combined, np.abs(both).max(axis=1))
        samples += chunk
        if np.all(tail <= TAIL_TOLERANCE):
            converged = True
            break
        cols = np.einsum("ab,jbk->jak", power, cols)
    return l1, peak, combined, samples, converged


def loop_levels(
    impl: ImplementedController,
    plant: DiscreteSystem,
    *,
    reference_amplitude: float | None = None,
    disturbance: float | None = None,
    max_samples: int = 1 << 20,
    chunk: int = 1024,
) -> LoopLevels:
    """Closed-loop levels of every register of ``impl`` with the plant pulse transfer ``plant``.

    Parameters
    ----------
    impl : ImplementedController
        The controller as implemented.
    plant : DiscreteSystem
        Pulse transfer from ``u[k]`` to ``y_m[k]`` at ``impl.period_s`` (delays allowed).
    reference_amplitude : float, optional [signal units]
        Largest |reference| expected; default the full scale of the signal format (the largest
        value the input word holds), 1.0 in floating point.
    disturbance : float, optional [controller output units]
        Largest |disturbance| at the plant input to include in the risk (default none).
    max_samples : int
        Longest impulse response summed.
    chunk : int
        Samples per block of the summation.

    Returns
    -------
    LoopLevels
    """
    if reference_amplitude is None:
        reference_amplitude = float(impl.signal_format.max_value) if impl.signal_format is not None else 1.0
    if not (math.isfinite(reference_amplitude) and reference_amplitude > 0):
        raise InputError(f"the reference amplitude must be a positive number, got {reference_amplitude!r}", "reference_amplitude")
    d_amp = 0.0 if disturbance is None else float(disturbance)
    if not (math.isfinite(d_amp) and d_amp >= 0):
        raise InputError(f"the disturbance amplitude must be a non-negative number, got {disturbance!r}", "disturbance")
    if isinstance(max_samples, bool) or int(max_samples) < 1:
        raise InputError(f"max_samples must be a positive whole number, got {max_samples!r}", "max_samples")
    if abs(plant.period_s - impl.period_s) > 1e-12 * impl.period_s:
        raise InputError(f"plant period {plant.period_s!r} s differs from the controller's {impl.period_s!r} s", "period")
    maps = closed_loop_maps(impl, plant)
    n = maps.A.shape[0]
    rho = float(np.max(np.abs(np.linalg.eigvals(maps.A)))) if n else 0.0
    stable = rho < 1.0
    nreg = len(maps.registers)
    if stable:
        l1, peak, combined, samples, converged = _impulse_sums(
            maps, reference_amplitude, d_amp, int(max_samples), max(1, int(chunk)))
    else:
        l1 = np.full((nreg, 2), math.inf)
        peak = np.full((nreg, 2), math.inf)
        # A register the loop's unstable modes cannot reach stays at its direct value; kept simple:
        # an unstable loop has no bounded level.
        combined = np.full(nreg, math.inf)
        samples, converged = 0, False
    rows = []
    for i, var in enumerate(maps.registers):
        limit = register_limit(impl, var)
        worst = reference_amplitude * float(l1[i, 0]) + (d_amp * float(l1[i, 1]) if d_amp else 0.0)
        step_value = float(combined[i])
        if worst <= limit:
            risk: OverflowRisk = "none"
        elif step_value > limit:
            risk = "likely"
        else:
            risk = "possible"
        if math.isinf(worst):
            head = -math.inf
        elif worst == 0 or math.isinf(limit):
            head = math.inf
        else:
            head = math.log2(limit / worst)
        rows.append(LoopRegisterLevel(var.name, var.label, float(peak[i, 0]), float(l1[i, 0]), float(peak[i, 1]),
                                      float(l1[i, 1]), limit, worst, step_value, head, risk))
    risk_all = max((r.risk for r in rows), key=_RISK_ORDER.__getitem__, default="none")
    headroom = min((r.headroom_bits for r in rows), default=math.inf)
    return LoopLevels(impl.realisation, float(reference_amplitude), d_amp, rho, stable, samples, converged,
                      tuple(rows), risk_all, headroom)


def closed_loop_levels(
    spec: LoopSpec,
    impl: ImplementedController,
    *,
    period_s: float | None = None,
    reference_step: float | None = None,
    disturbance: float | None = None,
    max_samples: int = 1 << 20,
    plant: DiscreteSystem | None = None,
) -> LoopLevels:
    """Closed-loop register levels of ``impl`` in the case's loop.

    Parameters
    ----------
    spec : LoopSpec
        The case (plant, sensor, delays).
    impl : ImplementedController
        The controller as implemented.
    period_s : float, optional [s]
        Sample period; default ``impl.period_s`` (must agree with it: the program's coefficients
        belong to that period).
    reference_step : float, optional [signal units]
        Reference amplitude ``R`` for the risk; default the full scale of the signal format
        (1.0 in floating point). The per-unit levels do not depend on it.
    disturbance : float, optional [controller output units]
        Input disturbance amplitude included in the risk (default none).
    max_samples : int
        Longest impulse response summed.
    plant : DiscreteSystem, optional
        The plant pulse transfer, when the caller already has it.

    Returns
    -------
    LoopLevels
    """
    from sampled.loop import plant_pulse  # the loop module imports casefile machinery; keep it lazy

    t = impl.period_s if period_s is None else float(period_s)
    if abs(t - impl.period_s) > 1e-12 * impl.period_s:
        raise InputError(f"the period {t!r} s differs from the implementation's {impl.period_s!r} s", "period_s")
    p = plant if plant is not None else plant_pulse(spec, t)
    return loop_levels(impl, p, reference_amplitude=reference_step, disturbance=disturbance, max_samples=max_samples)
