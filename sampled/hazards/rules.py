"""Rules of thumb for the sample period, stated as findings with their sources.

Each rule gives a number of the loop and the range a textbook recommends, never a verdict:

* crossover against the period: ``w_c T`` in about 0.15 to 0.5 (Astrom and Wittenmark 1997;
  from memory), equivalently the crossover between about 1/20 and 1/6 of the Nyquist frequency;
* samples per rise time: ``N_r = T_r / T`` in about 4 to 10 (Astrom and Wittenmark 1997; from
  memory);
* sample rate against closed-loop bandwidth: ``w_s / w_b`` from about 6 (smoothness) to 40, with
  20 or more often recommended (Franklin, Powell and Workman 1998, chapter 11 on sample-rate
  selection; from memory);
* the zero-order hold behaves like a delay of ``T/2``: phase lag ``w_c T / 2`` [rad] at the
  crossover (exact for the hold alone: ``(1 - exp(-j w T)) / (j w T) = exp(-j w T/2) sinc``);
  the computation delay ``tau`` adds ``w_c tau`` [rad];
* Tustin's map ``s = (2/T)(z - 1)/(z + 1)`` sends the continuous frequency
  ``w_a = (2/T) tan(w T / 2)`` to the discrete frequency ``w``: at the crossover the controller
  acts as the continuous design would at ``w_a`` (with a prewarp frequency ``w_0`` the factor
  ``2/T`` becomes ``w_0 / tan(w_0 T / 2)``).

References
----------
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., Prentice Hall, 1997,
rules for the choice of sampling period (chapters 2 and 8; from memory, section numbers not
verified).
G. F. Franklin, J. D. Powell and M. L. Workman, "Digital Control of Dynamic Systems", 3rd ed.,
Addison-Wesley, 1998, chapter 11 (sample-rate selection) and section 6.3.1 (Tustin with
prewarping); from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sampled.discrete import DiscreteSystem

#: Recommended range of w_c T (Astrom and Wittenmark 1997, from memory).
CROSSOVER_PERIOD_RANGE = (0.15, 0.5)
#: Recommended samples per rise time (Astrom and Wittenmark 1997, from memory).
RISE_SAMPLES_RANGE = (4.0, 10.0)
#: Sample rate over closed-loop bandwidth (Franklin, Powell and Workman 1998, from memory).
BANDWIDTH_RATIO_RANGE = (6.0, 40.0)
#: "Far out": w_c T beyond this factor of the upper end, or N_r below half the lower end.
FAR_FACTOR = 2.0


def hold_lag_deg(crossover_rad_s: float, period_s: float) -> float:
    """Phase lag of the zero-order hold at ``w``: ``w T / 2`` [rad] in degrees."""
    return math.degrees(crossover_rad_s * period_s / 2.0)


def delay_lag_deg(crossover_rad_s: float, delay_s: float) -> float:
    """Phase lag of a pure delay ``tau`` at ``w``: ``w tau`` [rad] in degrees."""
    return math.degrees(crossover_rad_s * delay_s)


def tustin_equivalent_rad_s(w_rad_s: float, period_s: float, prewarp_rad_s: float | None = None) -> float:
    """The continuous frequency whose response the Tustin-mapped controller shows at ``w``:
    ``(2/T) tan(w T/2)``, or ``(w0 / tan(w0 T/2)) tan(w T/2)`` with prewarp ``w0``. Infinite at
    and above the Nyquist frequency."""
    half = w_rad_s * period_s / 2.0
    if half >= math.pi / 2:
        return math.inf
    gain = 2.0 / period_s if prewarp_rad_s is None else prewarp_rad_s / math.tan(prewarp_rad_s * period_s / 2.0)
    return gain * math.tan(half)


def rise_time_s(t: np.ndarray, y: np.ndarray, final: float) -> float | None:
    """10 % to 90 % rise time of ``y`` towards ``final`` (linear interpolation between points);
    None if the response never reaches 90 %."""
    if final == 0 or not math.isfinite(final):
        return None
    yn = y / final

    def first(level: float) -> float | None:
        idx = np.flatnonzero(yn >= level)
        if idx.size == 0:
            return None
        i = int(idx[0])
        if i == 0:
            return float(t[0])
        y0, y1 = yn[i - 1], yn[i]
        return float(t[i - 1] + (level - y0) / (y1 - y0) * (t[i] - t[i - 1]))

    lo, hi = first(0.1), first(0.9)
    if lo is None or hi is None:
        return None
    return hi - lo


@dataclass(frozen=True)
class Bandwidth:
    bandwidth_rad_s: float | None  # None: |T| never falls 3 dB below its zero-frequency value
    dc_gain: float


def closed_loop_bandwidth(closed_loop: DiscreteSystem, points: int = 2000) -> Bandwidth:
    """First frequency below Nyquist where ``|T(exp(j w T))|`` is 3 dB below ``|T(1)|``."""
    t = closed_loop.period_s
    dc = abs(complex(closed_loop.evaluate(1.0)[0]))
    if not math.isfinite(dc) or dc == 0.0:
        return Bandwidth(None, dc)
    wn = math.pi / t
    w = wn * np.logspace(-5, 0, points)
    mag = np.abs(closed_loop.evaluate(np.exp(1j * w * t)))
    below = np.flatnonzero(mag < dc / math.sqrt(2.0))
    if below.size == 0:
        return Bandwidth(None, dc)
    i = int(below[0])
    if i == 0:
        return Bandwidth(float(w[0]), dc)
    # interpolate in log frequency
    a, b = mag[i - 1], mag[i]
    target = dc / math.sqrt(2.0)
    frac = (a - target) / (a - b)
    return Bandwidth(float(math.exp(math.log(w[i - 1]) + frac * (math.log(w[i]) - math.log(w[i - 1])))), dc)
