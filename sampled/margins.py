"""Stability margins of a single feedback loop: gain, phase and delay margins, sensitivity peak.

The loop is ``u = -L y`` closed around an open-loop gain ``L`` (see :mod:`sampled.frequency`).
Every crossing is found, not only the first: crossings are bracketed on a dense logarithmic grid
that is refined where the response turns quickly, then each is solved by Brent's method to about
1e-13 relative in frequency.

Conventions
-----------
Gain crossover
    A frequency ``wc > 0`` with ``|L| = 1``. Its phase margin is ``180 deg + arg L(wc)`` wrapped into
    (-180, 180] deg. The headline ``phase_margin_deg`` is the smallest over all gain crossovers.
Phase crossover
    A frequency ``wp >= 0`` where ``L`` is real and negative (``arg L = -180 deg mod 360``),
    including ``w = 0`` and, for a discrete loop, the Nyquist frequency ``pi/T`` where ``L`` is
    real. Its gain margin is ``-20 log10 |L(wp)|`` [dB]: positive means the loop gain may be raised
    by that much, negative means it may be lowered by that much before the Nyquist curve passes
    through -1. The headline ``gain_margin_db`` is the crossing with the smallest ``|dB|`` (sign kept).
Delay margin
    The smallest extra pure delay that puts a gain crossover onto -1:
    ``min over crossovers of (PM mod 360 deg, in rad) / wc`` [s]; equal to ``PM/wc`` when
    ``0 < PM <= 180 deg``. For a discrete loop it is also given in samples (``/T``). It is exact
    for delays of whole samples; for a fractional delay it is the first-order estimate (the
    phase ``-w*delay`` of a delay placed before the hold). A discrete loop whose delay margin is
    below one sample cannot absorb one more sample of computation delay - a classic hazard.
Sensitivity peak
    ``max |1/(1 + L)|`` over ``w >= 0`` within the analysed band (for a discrete loop the whole
    band up to ``pi/T``, which covers all frequencies by periodicity and symmetry).
No crossing
    An absent crossing gives ``math.inf`` for its margin and ``None`` for its frequency.

The headline margins mean what they say only when the closed loop is stable; pass the
closed-loop verdict as ``closed_loop_stable`` and read :attr:`Margins.classical_valid`.
Crossings of the negative real axis at infinite or zero magnitude (where a pole or zero lies on
the imaginary axis / unit circle, and the Nyquist contour detours around it) carry no finite gain
margin and are not listed. A gain crossover at exactly ``w = 0`` is not listed (no delay moves
it). A magnitude identically 1 or a phase identically -180 deg over a whole band (a unit-gain
all-pass, a pure double integrator) is a continuum of crossings; such degenerate stretches are
not listed either - their rounding noise is not taken for crossings.

References
----------
K. J. Astrom and R. M. Murray, "Feedback Systems", Princeton University Press, 2008, section 9.3
(stability margins) and section 12.2 (maximum sensitivity) (section numbers from memory).
G. F. Franklin, J. D. Powell and M. Workman, "Digital Control of Dynamic Systems", 3rd ed.,
Addison-Wesley, 1998, chapter 7 (frequency response design of sampled loops) (from memory).
R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973, chapter 4.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.optimize

from sampled.errors import InputError, NumericalError
from sampled.frequency import (
    Domain,
    LoopGain,
    equivalent_roots,
    frequency_response,
    rational_response,
)

#: Base density of the search grid [points per decade].
POINTS_PER_DECADE = 200
#: The grid is refined until neighbouring points differ by less than this in phase [rad] ...
_MAX_PHASE_STEP_RAD = math.radians(5.0)
#: ... and by less than this in natural log of magnitude (about 0.9 dB).
_MAX_LOG_MAG_STEP = 0.1
#: Upper bound on grid points for one loop (keeps pathological inputs bounded in time).
_MAX_POINTS = 400_000
#: A root closer than this (relative) to the imaginary axis is treated as lying on it.
_AXIS_TOL = 1e-6
#: Relative frequency tolerance of Brent's method.
_RTOL = 1e-13
#: Changes below this (in log magnitude or in turns of phase) are rounding noise.
_DEGENERATE = 1e-12
#: Turns of pure-delay phase searched beyond which a continuous band is cut (see analysis_band).
MAX_DELAY_TURNS = 250
#: More crossings than this in one band means the response is noise, not a loop.
MAX_CROSSINGS = 2000
_IRREGULAR = (
    "the loop's frequency response cannot be resolved between {a:.6g} and {b:.6g} rad/s (it looks "
    "like rounding noise; at fast sampling give the loop in state-space delta form instead of "
    "polynomial coefficients in z)"
)
#: A phase margin smaller than this [rad] is zero (the loop is on the boundary).
_ZERO_PHASE_RAD = 1e-10
#: Decades added beyond the slowest / fastest break frequency.
_BAND_DECADES = 3.0


@dataclass(frozen=True)
class GainCrossover:
    """A frequency where ``|L| = 1``.

    Attributes
    ----------
    frequency_rad_s : float [rad/s]
    phase_margin_deg : float [deg], in (-180, 180]
    delay_margin_s : float [s]
        ``(phase margin mod 360 deg) / frequency``: extra delay that moves this crossover onto -1.
    """

    frequency_rad_s: float
    phase_margin_deg: float
    delay_margin_s: float

    def to_dict(self) -> dict[str, float]:
        return {
            "frequency_rad_s": self.frequency_rad_s,
            "phase_margin_deg": self.phase_margin_deg,
            "delay_margin_s": self.delay_margin_s,
        }


@dataclass(frozen=True)
class PhaseCrossover:
    """A frequency where ``L`` is real and negative.

    Attributes
    ----------
    frequency_rad_s : float [rad/s]
    gain_margin_db : float [dB]
        ``-20 log10 |L|``: > 0 the gain may rise by this much, < 0 it may fall by ``|this|``.
    """

    frequency_rad_s: float
    gain_margin_db: float

    def to_dict(self) -> dict[str, float]:
        return {"frequency_rad_s": self.frequency_rad_s, "gain_margin_db": self.gain_margin_db}


@dataclass(frozen=True)
class Margins:
    """Stability margins of one loop. See the module docstring for every convention.

    Attributes
    ----------
    domain : {"continuous", "discrete"}
    gain_margin_db : float [dB]
        Phase crossover with the smallest ``|dB|`` (sign kept); ``inf`` if there is none.
    phase_crossover_rad_s : float or None [rad/s]
        Frequency of that phase crossover.
    phase_margin_deg : float [deg]
        Smallest phase margin over the gain crossovers; ``inf`` if there is none.
    gain_crossover_rad_s : float or None [rad/s]
        Frequency of that gain crossover.
    delay_margin_s : float [s]
        Smallest delay margin over the gain crossovers; ``inf`` if there is none.
    delay_margin_samples : float or None
        ``delay_margin_s / period_s`` for a discrete loop; None for a continuous loop.
    sensitivity_peak : float
        ``max |1/(1 + L)|``; ``inf`` when ``1 + L`` vanishes on the band.
    sensitivity_peak_rad_s : float [rad/s]
        Frequency of the sensitivity peak.
    gain_crossovers, phase_crossovers : tuple
        Every crossing found in the band, by increasing frequency.
    band_rad_s : (float, float) [rad/s]
        Frequency band searched (w = 0 is also checked).
    period_s : float or None [s]
        Sample period of a discrete loop.
    closed_loop_stable : bool or None
        Closed-loop verdict supplied by the caller (None: not supplied).
    """

    domain: Domain
    gain_margin_db: float
    phase_crossover_rad_s: float | None
    phase_margin_deg: float
    gain_crossover_rad_s: float | None
    delay_margin_s: float
    delay_margin_samples: float | None
    sensitivity_peak: float
    sensitivity_peak_rad_s: float
    gain_crossovers: tuple[GainCrossover, ...]
    phase_crossovers: tuple[PhaseCrossover, ...]
    band_rad_s: tuple[float, float]
    period_s: float | None
    closed_loop_stable: bool | None = None

    @property
    def classical_valid(self) -> bool | None:
        """True when the headline margins are classical margins (the closed loop is stable).

        None when the caller did not supply the closed-loop verdict.
        """
        return self.closed_loop_stable

    @property
    def delay_margin_below_one_sample(self) -> bool | None:
        """True when a discrete loop cannot absorb one more sample of delay (a classic hazard:
        one more sample of computation latency, and the loop reaches the boundary).

        None for a continuous loop.
        """
        if self.delay_margin_samples is None:
            return None
        return self.delay_margin_samples < 1.0

    def to_dict(self) -> dict[str, Any]:
        """Plain dict; infinite margins stay ``math.inf`` (the CLI layer writes ``"inf"``)."""
        return {
            "domain": self.domain,
            "gain_margin_db": self.gain_margin_db,
            "phase_crossover_rad_s": self.phase_crossover_rad_s,
            "phase_margin_deg": self.phase_margin_deg,
            "gain_crossover_rad_s": self.gain_crossover_rad_s,
            "delay_margin_s": self.delay_margin_s,
            "delay_margin_samples": self.delay_margin_samples,
            "sensitivity_peak": self.sensitivity_peak,
            "sensitivity_peak_rad_s": self.sensitivity_peak_rad_s,
            "gain_crossovers": [g.to_dict() for g in self.gain_crossovers],
            "phase_crossovers": [p.to_dict() for p in self.phase_crossovers],
            "band_rad_s": list(self.band_rad_s),
            "period_s": self.period_s,
            "closed_loop_stable": self.closed_loop_stable,
            "classical_valid": self.classical_valid,
            "delay_margin_below_one_sample": self.delay_margin_below_one_sample,
        }


# --------------------------------------------------------------------------- the band


def _log_mag(values: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return np.log(np.abs(values))


def _asymptotic_slope(loop: LoopGain, w: float) -> float:
    """d log|L| / d log w at ``w``, from two points a factor 2 apart, rounded when near an integer."""
    vals = _log_mag(rational_response(loop, np.array([w, 2.0 * w])))
    if not np.all(np.isfinite(vals)):
        return 0.0
    slope = float(vals[1] - vals[0]) / math.log(2.0)
    nearest = round(slope)
    return float(nearest) if abs(slope - nearest) < 0.05 else slope


def analysis_band(loop: LoopGain) -> tuple[float, float]:
    """Frequency band [rad/s] searched for crossings.

    Continuous loop: from ``10^-3`` times the slowest to ``10^3`` times the fastest break
    frequency (moduli of the nonzero poles and zeros, and ``1/delay``). Discrete loop: from
    ``10^-3`` times the slowest break (equivalent roots ``log(z)/T``) up to the Nyquist frequency
    ``pi/T``, beyond which the response repeats. Either end is then pushed outward when the
    asymptotic slope of ``|L|`` shows a gain crossover lies beyond it (integrators, high gains).
    A continuous loop with a transport delay has a phase crossover for every turn of the delay
    phase, without end; its band is cut after :data:`MAX_DELAY_TURNS` turns (``w*delay =
    2*pi*MAX_DELAY_TURNS``) unless a gain crossover lies further out.

    Returns
    -------
    (w_low, w_high) : tuple of float [rad/s]
    """
    return _band(loop, *_snap_origin(loop, *equivalent_roots(loop)))


def _snap_origin(loop: LoopGain, poles: np.ndarray, zeros: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Set roots within ``_AXIS_TOL`` of the origin (relative to the fastest root, ``1/delay`` or
    ``pi/T``) to exactly 0: a repeated integrator comes out of a root finder as a tiny pair
    ``+-1e-8 j``, and ``L(0)`` evaluated there is rounding noise, not a value."""
    finite = np.concatenate([poles, zeros])
    finite = np.abs(finite[np.isfinite(finite)])
    scale = float(finite.max()) if finite.size else 0.0
    if loop.nyquist_rad_s is not None:
        scale = max(scale, loop.nyquist_rad_s)
    if loop.delay_s > 0:
        scale = max(scale, 1.0 / loop.delay_s)
    tol = _AXIS_TOL * scale
    return (
        np.where(np.abs(poles) <= tol, 0.0, poles),
        np.where(np.abs(zeros) <= tol, 0.0, zeros),
    )


def _band(loop: LoopGain, poles: np.ndarray, zeros: np.ndarray) -> tuple[float, float]:
    mags = np.abs(np.concatenate([poles, zeros]))
    mags = mags[np.isfinite(mags) & (mags > 0)]
    nyquist = loop.nyquist_rad_s
    if loop.domain == "continuous" and loop.delay_s > 0:
        mags = np.append(mags, 1.0 / loop.delay_s)
    if nyquist is not None:
        mags = mags[mags < nyquist]
    factor = 10.0**_BAND_DECADES
    if mags.size:
        low, high = float(mags.min()) / factor, float(mags.max()) * factor
    else:
        low, high = 1.0 / factor, factor
    if nyquist is not None:
        high = nyquist
        low = min(low, nyquist / factor / 10.0) if mags.size else nyquist / factor / 10.0
    for _ in range(4):
        # Asymptote |L| ~ |L(w0)| (w/w0)^m: a crossing beyond the end exists when it heads for 1.
        mag_low = float(np.abs(rational_response(loop, np.array([low]))[0]))
        m = _asymptotic_slope(loop, low)
        if abs(m) >= 0.5 and 0 < mag_low < math.inf and (m < 0) == (mag_low < 1.0) and mag_low != 1.0:
            cross = low * mag_low ** (-1.0 / m)
            low = max(cross / factor, 1e-300)
        else:
            break
    if nyquist is None:
        for _ in range(4):
            mag_high = float(np.abs(rational_response(loop, np.array([high]))[0]))
            m = _asymptotic_slope(loop, high / 2.0)
            if abs(m) >= 0.5 and 0 < mag_high < math.inf and (m < 0) == (mag_high > 1.0) and mag_high != 1.0:
                cross = high * mag_high ** (-1.0 / m)
                high = min(cross * factor, 1e300)
            else:
                break
        if loop.delay_s > 0:
            high = _delay_cap(loop, high)
    return low, high


def _delay_cap(loop: LoopGain, high: float) -> float:
    """Limit the band of a delayed continuous loop to MAX_DELAY_TURNS turns of delay phase.

    Each turn brings a phase crossover, of ever smaller |L| for a strictly proper loop; beyond the
    cap only gain crossovers matter, so the band still reaches 10 times the last one.
    """
    cap = MAX_DELAY_TURNS * 2 * math.pi / loop.delay_s
    if high <= cap:
        return high
    probe = np.geomspace(cap, high, 2000)
    g = _log_mag(rational_response(loop, probe))
    change = np.flatnonzero(np.isfinite(g[:-1]) & np.isfinite(g[1:]) & (g[:-1] * g[1:] <= 0))
    if change.size == 0:
        return cap
    return min(high, max(cap, float(probe[change[-1] + 1]) * 10.0))


def _axis_frequencies(
    poles: np.ndarray, zeros: np.ndarray, low: float, high: float
) -> list[tuple[float, float]]:
    """(frequency, half-width) of poles and zeros on the imaginary axis inside the band."""
    out: list[tuple[float, float]] = []
    for r in np.concatenate([poles, zeros]):
        w0 = abs(r.imag)
        if not math.isfinite(w0) or w0 == 0:
            continue
        if abs(r.real) <= _AXIS_TOL * abs(r) and low < w0 <= high * (1 + 1e-12):
            half = min(max(1e-9 * w0, 10 * abs(r.real)), 1e-5 * w0)
            out.append((w0, half))
    return sorted(out)


def _segments(low: float, high: float, gaps: list[tuple[float, float]]) -> list[tuple[float, float]]:
    segs: list[tuple[float, float]] = []
    start = low
    for w0, half in gaps:
        if w0 - half > start:
            segs.append((start, w0 - half))
        start = max(start, w0 + half)
    if high > start:
        segs.append((start, high))
    return segs


# --------------------------------------------------------------------------- the grid


def _needs_split(w: np.ndarray, lr: np.ndarray, tau: float) -> np.ndarray:
    """Intervals whose ends differ too much in L or in 1 + L (and are not already tiny)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = lr[1:] / lr[:-1]
        full = lr * np.exp(-1j * w * tau) if tau else lr
        ret = 1.0 + full
        ratio_s = ret[1:] / ret[:-1]
        big = (
            (np.abs(np.angle(ratio)) > _MAX_PHASE_STEP_RAD)
            | (np.abs(np.log(np.abs(ratio))) > _MAX_LOG_MAG_STEP)
            | (np.abs(np.angle(ratio_s)) > _MAX_PHASE_STEP_RAD)
            | (np.abs(np.log(np.abs(ratio_s))) > _MAX_LOG_MAG_STEP)
        )
    big &= np.isfinite(ratio) & np.isfinite(ratio_s)
    big &= w[1:] > w[:-1] * (1.0 + 1e-10)
    return big


def _segment_grid(loop: LoopGain, a: float, b: float, budget: int) -> tuple[np.ndarray, np.ndarray]:
    """Log grid on [a, b] refined by bisection until the response is resolved.

    Raises
    ------
    NumericalError
        If the point budget runs out first: the response is irregular at every scale, which is
        what rounding noise looks like (typically polynomial coefficients in z at fast sampling).
    """
    decades = math.log10(b / a) if b > a else 0.0
    count = max(16, int(math.ceil(decades * POINTS_PER_DECADE)) + 1)
    w = np.geomspace(a, b, count)
    w[0], w[-1] = a, b
    lr = rational_response(loop, w)
    tau = loop.delay_total_s
    for _ in range(80):
        split = _needs_split(w, lr, tau)
        if not split.any():
            break
        if w.size + int(split.sum()) > budget:
            raise NumericalError(_IRREGULAR.format(a=a, b=b))
        idx = np.flatnonzero(split)
        mids = np.sqrt(w[idx] * w[idx + 1])
        w_new = np.concatenate([w, mids])
        lr_new = np.concatenate([lr, rational_response(loop, mids)])
        order = np.argsort(w_new, kind="stable")
        w, lr = w_new[order], lr_new[order]
    ok = np.isfinite(lr) & (lr != 0)
    return w[ok], lr[ok]


# --------------------------------------------------------------------------- crossings


def _brent(f: Any, a: float, b: float) -> float:
    return float(scipy.optimize.brentq(f, a, b, xtol=1e-300, rtol=_RTOL, maxiter=200))


def _scalar_response(loop: LoopGain, w: float) -> complex:
    return complex(rational_response(loop, np.array([w]))[0])


def _gain_crossings(loop: LoopGain, w: np.ndarray, lr: np.ndarray, nyquist_end: bool) -> list[float]:
    g = _log_mag(lr)
    found: list[float] = []
    if nyquist_end and abs(g[-1]) < 1e-12:
        g = g.copy()
        g[-1] = 0.0
        found.append(float(w[-1]))

    def f(x: float) -> float:
        return math.log(abs(_scalar_response(loop, x)))

    # A magnitude identically 1 (an all-pass loop) is degenerate: rounding noise is not a crossing.
    strict = (g[:-1] * g[1:] < 0) & (np.maximum(np.abs(g[:-1]), np.abs(g[1:])) > _DEGENERATE)
    for i in np.flatnonzero(strict):
        found.append(_brent(f, float(w[i]), float(w[i + 1])))
    # A grid point exactly on |L| = 1 with its neighbours on either side.
    sides = (g[:-2] * g[2:] < 0) & (np.minimum(np.abs(g[:-2]), np.abs(g[2:])) > _DEGENERATE)
    for j in np.flatnonzero((g[1:-1] == 0) & sides) + 1:
        found.append(float(w[j]))
    return found


def _phase_crossings(loop: LoopGain, w: np.ndarray, lr: np.ndarray, nyquist_end: bool) -> list[float]:
    tau = loop.delay_total_s
    phi = np.unwrap(np.angle(lr)) - w * tau
    u = (phi + math.pi) / (2 * math.pi)  # integer u <=> L real negative
    found: list[float] = []
    if nyquist_end:
        near = round(float(u[-1]))
        if abs(u[-1] - near) < 1e-6:
            u = u.copy()
            u[-1] = float(near)
            found.append(float(w[-1]))
    lo = np.minimum(u[:-1], u[1:])
    hi = np.maximum(u[:-1], u[1:])
    first = np.floor(lo) + 1  # smallest integer strictly above lo
    for i in np.flatnonzero(first < hi):
        # A phase identically -180 deg (a double integrator) is degenerate: skip rounding noise.
        if hi[i] - lo[i] < _DEGENERATE:
            continue
        wa, wb = float(w[i]), float(w[i + 1])
        base_lr, base_phi = complex(lr[i]), float(phi[i] + w[i] * tau)

        def f(x: float, n: float) -> float:
            local = base_phi + cmath.phase(_scalar_response(loop, x) / base_lr)
            return (local - x * tau + math.pi) / (2 * math.pi) - n

        n = first[i]
        while n < hi[i]:
            found.append(_brent(lambda x, n=n: f(x, n), wa, wb))
            n += 1
    # A grid point exactly on a level with its neighbours on either side.
    level = np.round(u[1:-1])
    left, right = u[:-2] - level, u[2:] - level
    sides = (left * right < 0) & (np.minimum(np.abs(left), np.abs(right)) > _DEGENERATE)
    exact = (u[1:-1] == level) & sides
    found.extend(float(w[j]) for j in np.flatnonzero(exact) + 1)
    return found


# --------------------------------------------------------------------------- sensitivity


def _sensitivity_peak(
    loop: LoopGain, grids: list[tuple[np.ndarray, np.ndarray]], at_zero: complex | None
) -> tuple[float, float]:
    best_r, best_w = math.inf, 0.0
    if at_zero is not None:
        best_r = abs(1.0 + at_zero)
    tau = loop.delay_total_s
    best_seg: tuple[np.ndarray, int] | None = None
    for w, lr in grids:
        if w.size == 0:
            continue
        r = np.abs(1.0 + lr * np.exp(-1j * w * tau))
        i = int(np.argmin(r))
        if r[i] < best_r:
            best_r, best_w, best_seg = float(r[i]), float(w[i]), (w, i)
    if best_seg is not None and best_r > 0:
        w, i = best_seg
        a, b = float(w[max(i - 1, 0)]), float(w[min(i + 1, w.size - 1)])
        if b > a:
            def f(x: float) -> float:
                return abs(1.0 + complex(frequency_response(loop, np.array([x]))[0]))
            res = scipy.optimize.minimize_scalar(
                f, bounds=(a, b), method="bounded", options={"xatol": 1e-12 * b, "maxiter": 500}
            )
            if res.success and float(res.fun) < best_r:
                best_r, best_w = float(res.fun), float(res.x)
    peak = math.inf if best_r == 0 else 1.0 / best_r
    return peak, best_w


# --------------------------------------------------------------------------- main entry


def loop_margins(
    loop: LoopGain,
    *,
    closed_loop_stable: bool | None = None,
    band_rad_s: tuple[float, float] | None = None,
) -> Margins:
    """Gain, phase and delay margins and sensitivity peak of the loop closed around ``loop``.

    Parameters
    ----------
    loop : LoopGain
        Open-loop gain (see :mod:`sampled.frequency`).
    closed_loop_stable : bool, optional
        Closed-loop verdict from a stability criterion, stored so that readers know whether the
        headline margins are classical ones (they are only when the closed loop is stable).
    band_rad_s : (float, float), optional [rad/s]
        Search band; default :func:`analysis_band`. For a discrete loop the upper end is capped
        at the Nyquist frequency ``pi/T``.

    Returns
    -------
    Margins

    Raises
    ------
    InputError
        If ``band_rad_s`` is not an increasing pair of positive numbers (below ``pi/T``).
    NumericalError
        If the response cannot be resolved on the grid (rounding noise, typically from
        polynomial coefficients in z at fast sampling) or shows more than
        :data:`MAX_CROSSINGS` crossings.

    Notes
    -----
    Crossings are bracketed on a logarithmic grid of :data:`POINTS_PER_DECADE` points per decade,
    refined by bisection until neighbouring points differ by less than 5 deg in phase and 0.9 dB
    in magnitude (of both ``L`` and ``1 + L``), and solved with Brent's method (Brent 1973, ch. 4).
    A pure delay is added to the phase analytically, so phase crossovers of long delays are all
    found however fast the phase turns. Poles and zeros on the imaginary axis (integrators,
    undamped modes; ``z`` on the unit circle) are stepped around by a relative 1e-9 or more.
    Crossings beyond the band (for instance the endless phase crossovers of a delay loop whose
    gain tends to a nonzero constant) are not listed.
    """
    poles, zeros = _snap_origin(loop, *equivalent_roots(loop))
    if band_rad_s is None:
        low, high = _band(loop, poles, zeros)
    else:
        low, high = (float(band_rad_s[0]), float(band_rad_s[1]))
        if not (0 < low < high and math.isfinite(high)):
            raise InputError(f"expected 0 < low < high, got {band_rad_s!r}", "band_rad_s")
    nyquist = loop.nyquist_rad_s
    if nyquist is not None:
        high = min(high, nyquist)
        if low >= high:
            raise InputError(f"the band lies above the Nyquist frequency {nyquist:g} rad/s", "band_rad_s")

    gaps = _axis_frequencies(poles, zeros, low, high)
    segments = _segments(low, high, gaps)
    budget = max(_MAX_POINTS // max(len(segments), 1), 1000)
    grids = [_segment_grid(loop, a, b, budget) for a, b in segments]

    gain_w: list[float] = []
    phase_w: list[float] = []
    for (a, b), (w, lr) in zip(segments, grids):
        if w.size < 2:
            continue
        nyquist_end = nyquist is not None and b == nyquist and w[-1] == nyquist
        gain_w.extend(_gain_crossings(loop, w, lr, nyquist_end))
        phase_w.extend(_phase_crossings(loop, w, lr, nyquist_end))
        if len(gain_w) + len(phase_w) > MAX_CROSSINGS:
            raise NumericalError(
                f"more than {MAX_CROSSINGS} crossings between {low:.6g} and {high:.6g} rad/s: "
                + _IRREGULAR.format(a=a, b=b)
            )

    # w = 0: L is real there (real coefficients); a finite negative value is a phase crossover.
    with np.errstate(all="ignore"):
        at_zero_val = complex(rational_response(loop, np.array([0.0]))[0])
    at_origin = bool(np.any(poles == 0) or np.any(zeros == 0))
    at_zero = at_zero_val if np.isfinite(at_zero_val) and not at_origin else None
    phase_list: list[PhaseCrossover] = []
    if at_zero is not None and at_zero.real < 0:
        phase_list.append(PhaseCrossover(0.0, -20.0 * math.log10(abs(at_zero.real))))

    for wp in sorted(set(phase_w)):
        mag = abs(_scalar_response(loop, wp))
        if mag > 0 and math.isfinite(mag):
            phase_list.append(PhaseCrossover(wp, -20.0 * math.log10(mag)))

    gain_list: list[GainCrossover] = []
    for wc in sorted(set(gain_w)):
        value = complex(frequency_response(loop, np.array([wc]))[0])
        pm_rad = math.atan2(-value.imag, -value.real)  # arg(-L) = 180 deg + arg L, in (-pi, pi]
        if abs(pm_rad) < _ZERO_PHASE_RAD:
            pm_rad = 0.0  # on the boundary: do not let rounding wrap the delay margin a full turn
        lag_room = pm_rad % (2 * math.pi)
        delay = lag_room / wc
        gain_list.append(GainCrossover(wc, math.degrees(pm_rad), delay))

    if phase_list:
        worst_p = min(phase_list, key=lambda p: (abs(p.gain_margin_db), p.frequency_rad_s))
        gm_db, wp_head = worst_p.gain_margin_db, worst_p.frequency_rad_s
    else:
        gm_db, wp_head = math.inf, None
    if gain_list:
        worst_g = min(gain_list, key=lambda g: (g.phase_margin_deg, g.frequency_rad_s))
        pm_deg, wc_head = worst_g.phase_margin_deg, worst_g.frequency_rad_s
        dm_s = min(g.delay_margin_s for g in gain_list)
    else:
        pm_deg, wc_head, dm_s = math.inf, None, math.inf
    dm_samples = None if loop.period_s is None else dm_s / loop.period_s

    peak, peak_w = _sensitivity_peak(loop, grids, at_zero)
    return Margins(
        domain=loop.domain,
        gain_margin_db=gm_db,
        phase_crossover_rad_s=wp_head,
        phase_margin_deg=pm_deg,
        gain_crossover_rad_s=wc_head,
        delay_margin_s=dm_s,
        delay_margin_samples=dm_samples,
        sensitivity_peak=peak,
        sensitivity_peak_rad_s=peak_w,
        gain_crossovers=tuple(gain_list),
        phase_crossovers=tuple(phase_list),
        band_rad_s=(low, high),
        period_s=loop.period_s,
        closed_loop_stable=closed_loop_stable,
    )
