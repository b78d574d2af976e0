"""Closed-loop stability of a continuous loop with a transport delay, by the argument principle.

The closed-loop poles of ``L(s) = N(s)/D(s) e^(-s tau)`` under negative feedback are the zeros of
the entire function ``Q(s) = D(s) + N(s) e^(-s tau)``. Taking the contour up the imaginary axis and
round the right half-plane (Nyquist's contour), the number of zeros in the open right half-plane is

    Z = n/2 - Delta/pi,   Delta = change of arg Q(j w) for w from 0 to infinity,   n = deg D,

for strictly proper ``N/D`` (on the large arc ``Q ~ D`` turns by ``n pi``; the lower half of the
axis mirrors the upper half because the coefficients are real). Because ``Q`` has no poles,
integrators and undamped open-loop modes need no indentation. This is the Nyquist criterion
counted on ``1 + L = Q/D``.

References
----------
H. Nyquist, "Regeneration theory", Bell System Technical Journal 11, 1932.
K. J. Astrom and R. M. Murray, *Feedback Systems*, 2nd ed., 2021, section 10.2 (Nyquist criterion
with time delay).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sampled.errors import NumericalError

#: Largest phase step accepted between neighbouring frequencies before the step is refined [rad].
MAX_PHASE_STEP = 0.3
#: Relative size of |Q| against |D| + |N| below which a root is taken to lie on the axis.
AXIS_TOLERANCE = 1e-9


@dataclass(frozen=True)
class DelayLoopCount:
    """Closed-loop roots of ``D + N e^(-s tau)`` in the right half-plane and on the axis."""

    right: int
    on_axis: bool
    axis_frequency_rad_s: float | None
    winding_rad: float
    points: int

    @property
    def verdict(self) -> str:
        if self.right > 0:
            return "unstable"
        return "marginal" if self.on_axis else "stable"


def _q(num: np.ndarray, den: np.ndarray, tau: float, w: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    s = 1j * w
    d = np.polyval(den, s)
    n = np.polyval(num, s) * np.exp(-s * tau)
    return d + n, np.abs(d) + np.abs(n)


def count_right_half_plane(num: np.ndarray, den: np.ndarray, delay_s: float) -> DelayLoopCount:
    """Zeros of ``den(s) + num(s) exp(-s delay_s)`` with positive real part.

    Parameters
    ----------
    num, den : array_like
        Loop numerator and denominator, descending powers of s; ``deg num < deg den``, or equal
        with ``|num[0]/den[0]| < 1`` (a biproper loop whose high-frequency gain is below one).
    delay_s : float [s]
        Transport delay ``tau >= 0``.
    """
    num = np.trim_zeros(np.atleast_1d(np.asarray(num, dtype=float)), "f")
    den = np.trim_zeros(np.atleast_1d(np.asarray(den, dtype=float)), "f")
    if num.size == 0:
        num = np.zeros(1)
    n = den.size - 1
    if num.size > den.size:
        raise NumericalError("the loop is improper; the Nyquist count needs deg N <= deg D")
    k_inf = abs(num[0] / den[0]) if num.size == den.size else 0.0
    if k_inf >= 1 and delay_s > 0:
        # Neutral type: the roots of 1 + k e^(-s tau) = 0 accumulate at Re s = ln|k| / tau >= 0.
        raise NumericalError(
            f"the loop keeps a high-frequency gain of {k_inf:.3g} >= 1 with a delay (a neutral delay "
            "equation): infinitely many closed-loop roots approach Re s = ln|k|/delay >= 0"
        )
    tail_limit = 0.5 if k_inf < 0.25 else 0.5 * (1.0 + k_inf)
    roots = np.concatenate([np.roots(den) if n > 0 else np.zeros(0), np.roots(num) if num.size > 1 else np.zeros(0)])
    scale = max(1.0, float(np.max(np.abs(roots))) if roots.size else 1.0)
    if delay_s > 0:
        scale = max(scale, 1.0 / delay_s)
    # Find Omega beyond which |N/D| < tail_limit < 1 for good (checked over a decade above it).
    omega = 100.0 * scale
    for _ in range(60):
        test = omega * np.logspace(0, 1, 50)
        ratio = np.abs(np.polyval(num, 1j * test)) / np.abs(np.polyval(den, 1j * test))
        if np.all(ratio < tail_limit):
            break
        omega *= 10.0
    else:  # pragma: no cover - only for pathological coefficient sets
        raise NumericalError("could not find a frequency above which the loop gain stays below 1/2")

    # Track arg Q on [0, Omega]: a mixed log/linear grid, refined where the phase jumps.
    low = 1e-6 * min(scale, 1.0 / max(delay_s, 1e-300)) if delay_s > 0 else 1e-6 / scale
    low = min(low, 1e-6 * scale)
    lin_points = int(min(200_000, max(200, 8 * omega * delay_s)))
    w = np.unique(np.concatenate([[0.0], np.logspace(math.log10(low), math.log10(omega), 4000), np.linspace(0, omega, lin_points)]))
    q, size = _q(num, den, delay_s, w)
    for _ in range(30):
        steps = np.abs(np.angle(q[1:] / q[:-1]))
        bad = np.nonzero(steps > MAX_PHASE_STEP)[0]
        if bad.size == 0:
            break
        mids = 0.5 * (w[bad] + w[bad + 1])
        mids = mids[(mids > w[bad]) & (mids < w[bad + 1])]
        if mids.size == 0:
            break
        w = np.sort(np.concatenate([w, mids]))
        q, size = _q(num, den, delay_s, w)
    rel = np.abs(q) / np.maximum(size, 1e-300)
    k = int(np.argmin(rel))
    on_axis = bool(rel[k] < AXIS_TOLERANCE)
    delta = float(np.sum(np.angle(q[1:] / q[:-1])))
    # Beyond Omega: Q = D (1 + L) with |L| < 1, so 1 + L does not wind; arg D turns by the sum over
    # its roots of (pi/2 - arg(j Omega - r)).
    tail = 0.0
    for r in (np.roots(den) if n > 0 else []):
        tail += math.pi / 2 - float(np.angle(1j * omega - r))
    d_om = np.polyval(den, 1j * omega)
    l_om = np.polyval(num, 1j * omega) * np.exp(-1j * omega * delay_s) / d_om
    tail += -float(np.angle(1.0 + l_om))
    total = delta + tail
    z = n / 2.0 - total / math.pi
    right = int(round(z))
    if not on_axis and abs(z - right) > 0.05:
        raise NumericalError(f"the Nyquist count did not settle on a whole number (got {z:.3f})")
    if on_axis:
        # A root on the axis contributes half a turn; count only those strictly to the right.
        right = int(math.floor(z + 0.25))
    return DelayLoopCount(max(right, 0), on_axis, float(w[k]) if on_axis else None, total, int(w.size))


def pade(delay_s: float, order: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """Diagonal Pade approximation of ``exp(-s delay_s)``: ``(num, den)`` in descending powers.

    Coefficients ``c_k = (2m - k)! m! / ((2m)! k! (m - k)!)`` of ``sum c_k (-s tau)^k`` over
    ``sum c_k (s tau)^k`` (G. A. Baker, *Essentials of Pade Approximants*, 1975, section 1.2).
    """
    m = order
    c = [math.factorial(2 * m - k) * math.factorial(m) / (math.factorial(2 * m) * math.factorial(k) * math.factorial(m - k)) for k in range(m + 1)]
    num = np.array([c[k] * (-delay_s) ** k for k in range(m, -1, -1)])
    den = np.array([c[k] * delay_s**k for k in range(m, -1, -1)])
    return num, den
