"""Aliasing: what reaches the sampler at and above the Nyquist frequency ``w_N = pi / T``.

Anything the sampler sees at a frequency ``w`` above ``w_N`` is indistinguishable from content at
the folded frequency ``|w - 2 k w_N|`` (the nearest image in ``[0, w_N]``). Two sources matter:

* measurement noise entering at the sensor: only the sensor filter ``F(s)`` (the ``[sensor]``
  transfer, the anti-alias filter) attenuates it before sampling;
* plant dynamics above Nyquist (a structural resonance, an LC filter peak): the zero-order-hold
  model of the loop is exact, but a disturbance that excites the resonance shows up folded at a
  low frequency where the controller acts on it.

Criterion for the anti-alias filter (common practice, no source): the filter should attenuate by at
least :data:`ANTI_ALIAS_ATTENUATION_DB` at the Nyquist frequency relative to its gain at zero
frequency, so that noise near ``w_N`` folds back at a tenth of its amplitude or less. The filter's
phase lag at the crossover frequency is reported beside it, since that is the price of the
attenuation.

References
----------
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., Prentice Hall, 1997,
section 7.4 (aliasing and prefiltering; from memory, section number not verified).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sampled.systems import ContinuousSystem

#: Attenuation the anti-alias filter should give at the Nyquist frequency (common practice, no source).
ANTI_ALIAS_ATTENUATION_DB = 20.0
#: A resonance above Nyquist whose sensor-path gain is within this of the reference gain is reported.
RESONANCE_REPORT_DB = -20.0
#: Frequency grid above Nyquist: decades covered and points per decade.
DECADES_ABOVE_NYQUIST = 3
POINTS_PER_DECADE = 400


def _db(x: float) -> float:
    return 20.0 * math.log10(x) if x > 0 else -math.inf


def folded_frequency(w_rad_s: float, period_s: float) -> float:
    """The frequency in ``[0, pi/T]`` that ``w`` aliases to: ``|w - k 2 pi / T|`` minimised over k."""
    ws = 2.0 * math.pi / period_s
    r = math.fmod(w_rad_s, ws)
    return min(r, ws - r)


@dataclass(frozen=True)
class FilterCheck:
    """The anti-alias filter at the Nyquist frequency."""

    nyquist_rad_s: float
    attenuation_db: float  # 20 log10 |F(j w_N) / F(0)|, negative = attenuation
    adequate: bool
    phase_lag_at_crossover_deg: float | None


def filter_check(sensor: ContinuousSystem, period_s: float, crossover_rad_s: float | None) -> FilterCheck:
    """|F(j w_N)| relative to the filter's low-frequency gain, against :data:`ANTI_ALIAS_ATTENUATION_DB`."""
    wn = math.pi / period_s
    rational = sensor.with_delay(0.0)
    ref = abs(sensor.dc_gain())
    if not math.isfinite(ref) or ref == 0.0:
        ref = float(abs(rational.evaluate(1j * wn / 100.0)[()]))
    at_n = float(abs(rational.evaluate(1j * wn)[()]))
    att = _db(at_n / ref) if ref > 0 else math.inf
    lag = None
    if crossover_rad_s:
        lag = -math.degrees(float(np.angle(sensor.evaluate(1j * crossover_rad_s)[()] / (ref if ref else 1.0))))
    return FilterCheck(wn, att, att <= -ANTI_ALIAS_ATTENUATION_DB, lag)


@dataclass(frozen=True)
class ResonanceCheck:
    """The largest peak of the sensor-path gain |F P| above the Nyquist frequency."""

    nyquist_rad_s: float
    reference_rad_s: float | None  # None: reference is the gain at zero frequency
    reference_gain: float
    gain_at_nyquist_db: float  # relative to the reference
    peak_rad_s: float
    peak_db: float  # relative to the reference
    folds_to_rad_s: float
    is_resonance: bool  # a local maximum strictly above Nyquist, not the roll-off starting at w_N


def resonance_check(path: ContinuousSystem, period_s: float, reference_rad_s: float | None) -> ResonanceCheck | None:
    """Peak of |F(jw) P(jw)| for ``w >= pi/T`` relative to the gain at ``reference_rad_s`` (the
    crossover) or, when None, at zero frequency (when finite and nonzero). None if no reference."""
    wn = math.pi / period_s
    if reference_rad_s is not None:
        ref = float(abs(path.evaluate(1j * reference_rad_s)[()]))
    else:
        ref = abs(path.dc_gain())
    if not math.isfinite(ref) or ref == 0.0:
        return None
    grid = wn * np.logspace(0.0, DECADES_ABOVE_NYQUIST, DECADES_ABOVE_NYQUIST * POINTS_PER_DECADE + 1)
    modes = path.poles()
    peaks = [abs(m.imag) for m in modes if abs(m.imag) > wn]
    # a lightly damped peak sits near the damped frequency: add it and close neighbours
    extra = [w * f for w in peaks for f in (0.999, 1.0, 1.001)]
    grid = np.unique(np.concatenate([grid, np.array(extra, dtype=float)]))
    grid = grid[grid >= wn]
    mag = np.abs(path.evaluate(1j * grid)) / ref
    i = int(np.argmax(mag))
    local = 0 < i < grid.size - 1 and mag[i] >= mag[i - 1] and mag[i] >= mag[i + 1]
    return ResonanceCheck(wn, reference_rad_s, ref, _db(float(mag[0])), float(grid[i]), _db(float(mag[i])),
                          folded_frequency(float(grid[i]), period_s), bool(local))
