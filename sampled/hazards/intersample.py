"""What the samples do not show: ripple between samples and a ringing actuator.

Ripple is measured on the exact step response of :mod:`sampled.simulate`: per period, the largest
distance of the plant output ``y(t)`` from the straight line between its values at the two sampling
instants (a smooth output departs from that chord by ``|y''| T^2 / 8`` at most), over the whole
response and from the instant the samples have settled (within :data:`SETTLE_BAND` of their final
value for good; at the latest the last quarter of the response). A loop whose samples
have settled while the output between them still swings hides an oscillation: typically a plant
mode at or near a pathological period, or an actuator that alternates each sample.

A controller pole on the negative real axis, ``z = -a`` with ``0 < a < 1``, contributes a sequence
``(-a)^k``: the command alternates sign every sample and decays by ``a`` per sample, an
oscillation at half the sample rate (the Nyquist frequency) that the output, filtered by the plant,
may hardly show at the samples while the actuator works hard. Such poles come from Tustin-mapped
controller poles faster than ``2/T`` (``z = (1 + pT/2)/(1 - pT/2) < 0`` for ``p < -2/T``) and from
derivative filters shorter than the period.

References
----------
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., Prentice Hall, 1997,
the chapters on deadbeat control and its intersample ripple, and section 8.2 on Tustin's
approximation (from memory; section numbers not verified).
G. F. Franklin, J. D. Powell and M. L. Workman, "Digital Control of Dynamic Systems", 3rd ed.,
Addison-Wesley, 1998, the discussion of ripple in deadbeat designs (from memory; section not
verified).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sampled.discrete import DiscreteSystem
from sampled.simulate import StepResponse

#: Steady ripple (last quarter, fraction of the unit step) above which hidden oscillation is reported.
HIDDEN_RIPPLE = 0.01
#: Band around the final sampled value (unit step) within which the samples count as settled.
SETTLE_BAND = 0.02
#: Transient departure from the chord (fraction of the unit step) above which ripple is reported.
TRANSIENT_RIPPLE = 0.1
#: Alternation of the command (fraction of its largest value) reported with ringing controller poles.
ALTERNATION_REPORT = 0.05
#: Controller poles with |z| below this are ignored (they die out within two samples).
RINGING_MIN_RADIUS = 0.1
#: Poles whose angle is within this of pi count as on/near the negative real axis [rad].
RINGING_ANGLE_RAD = math.pi / 4
#: |z| at and above which a ringing pole is a warning rather than information.
RINGING_WARN_RADIUS = 0.5


@dataclass(frozen=True)
class Ripple:
    """Ripple of the plant output between samples (unit step; amplitudes in output units)."""

    largest_departure: float  # max over periods of max |y(t) - chord|
    largest_departure_time_s: float
    steady_departure: float  # the same once the samples have settled (window)
    steady_sampled_swing: float  # peak-to-peak of y(kT) in the window
    steady_continuous_swing: float  # peak-to-peak of y(t) in the window
    ripple_frequency_rad_s: float | None  # dominant frequency of y - chord in the window
    actuator_alternation: float  # max |u[k+1] - 2 u[k] + u[k-1]| / 4 in the window
    actuator_scale: float  # max |u| over the response
    alternation_peak: float  # max |u[k+1] - 2 u[k] + u[k-1]| / 4 where u changes direction each sample
    alternation_time_s: float  # where that peak is
    window_start_s: float


def measure_ripple(r: StepResponse) -> Ripple:
    """Chord departures and swings of ``r.y_fine`` (see the module docstring)."""
    m = r.fine_per_period
    k = r.samples
    periods = k - 1
    grid = r.y_fine[: periods * m].reshape(periods, m)
    t_grid = r.t_fine[: periods * m].reshape(periods, m)
    ys = r.y_fine[::m]  # y(kT)
    frac = (t_grid - r.t_samples[:periods, None]) / r.period_s
    chord = ys[:periods, None] * (1.0 - frac) + ys[1:, None] * frac
    dep = np.abs(grid - chord)
    per_period = dep.max(axis=1)
    i = int(np.argmax(per_period))
    j = int(np.argmax(dep[i]))
    # window: from the instant the samples settle (stay within SETTLE_BAND of their final value)
    final = float(np.mean(ys[-max(1, k // 10):]))
    outside = np.flatnonzero(np.abs(ys - final) > SETTLE_BAND)
    start = int(outside[-1]) + 1 if outside.size else 0
    start = min(start, max(0, periods - max(1, periods // 4)))
    steady = float(per_period[start:].max())
    samp_tail = ys[start:]
    cont_tail = r.y_fine[start * m:]
    freq = None
    resid = (grid[start:] - chord[start:]).reshape(-1)
    if resid.size >= 8 and np.max(np.abs(resid)) > 0:
        # resample on a uniform grid (the fine grid has the update instants added)
        tt = t_grid[start:].reshape(-1)
        dt = r.period_s / m
        uniform = np.arange(tt[0], tt[-1], dt)
        resid = np.interp(uniform, tt, resid)
        spec = np.abs(np.fft.rfft(resid - resid.mean()))
        f = np.fft.rfftfreq(resid.size, dt)
        q = int(np.argmax(spec[1:])) + 1 if spec.size > 1 else 0
        freq = float(2.0 * math.pi * f[q]) if q else None
    u = r.u_samples
    u_tail = u[start:]
    alt = float(np.max(np.abs(u_tail[2:] - 2 * u_tail[1:-1] + u_tail[:-2])) / 4.0) if u_tail.size >= 3 else 0.0
    peak, peak_t = 0.0, 0.0
    if u.size >= 3:
        d1 = np.diff(u)
        flips = d1[1:] * d1[:-1] < 0  # the command changes direction at k (alternation)
        second = np.abs(u[2:] - 2 * u[1:-1] + u[:-2]) / 4.0
        second = np.where(flips, second, 0.0)
        q = int(np.argmax(second))
        peak, peak_t = float(second[q]), float(r.t_samples[q + 1])
    return Ripple(float(per_period[i]), float(t_grid[i, j]), steady, float(np.ptp(samp_tail)),
                  float(np.ptp(cont_tail)), freq, alt, float(np.max(np.abs(u))) if u.size else 0.0,
                  peak, peak_t, float(r.t_samples[start]))


@dataclass(frozen=True)
class RingingPole:
    z: complex
    radius: float
    samples_to_tenth: float  # samples for |z|^k to fall to 0.1
    frequency_rad_s: float  # |arg z| / T


def ringing_poles(controller: DiscreteSystem) -> list[RingingPole]:
    """Controller poles on or near the negative real axis (angle within :data:`RINGING_ANGLE_RAD`
    of pi) with ``|z| >= RINGING_MIN_RADIUS``."""
    out = []
    t = controller.period_s
    for z in controller.poles().z:
        z = complex(z)
        r = abs(z)
        if r < RINGING_MIN_RADIUS or z.imag < 0:
            continue
        ang = abs(math.atan2(z.imag, z.real))
        if math.pi - ang > RINGING_ANGLE_RAD:
            continue
        tenth = math.log(0.1) / math.log(r) if r < 1 else math.inf
        out.append(RingingPole(z, r, tenth, ang / t))
    return out
