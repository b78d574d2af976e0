"""Figures of a loop: pure functions that return matplotlib :class:`~matplotlib.figure.Figure` objects.

Nothing here touches pyplot's global state: every figure is a bare ``Figure`` with an Agg canvas,
drawn inside :func:`sampled.report.style.styled`. The data each figure shows comes from the library
(:mod:`sampled.loop`, :mod:`sampled.sweep`, :mod:`sampled.simulate`) unchanged; every data artist
carries a ``gid`` (listed in :data:`GIDS`) so tests and readers can find exactly what was drawn.

Figures
-------
:func:`z_plane_figure`           closed-loop poles (crosses) and zeros (circles) against the unit
                                 circle, with the continuous design's poles mapped by z = e^(sT)
:func:`pole_paths_figure`        closed-loop poles as the sample period grows, coloured by period
:func:`step_response_figure`     continuous design against the sampled loop, exact between samples,
                                 with the held actuator command as a staircase
:func:`margins_vs_period_figure` spectral radius and margins against period, boundaries marked
:func:`stability_chart_figure`   stability over period x loop-gain multiplier, design point marked
:func:`check_figure`             z-plane and step response side by side (``sampled check --plot``)

References
----------
K. J. Astrom and B. Wittenmark, "Computer-Controlled Systems", 3rd ed., Prentice Hall, 1997,
section 2.7 (poles of sampled systems, z = exp(sT)) and section 3.2 (stability of sampled loops).
"""

from __future__ import annotations

import io
import math
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal, get_args

import numpy as np
import scipy.linalg
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import LogNorm, TwoSlopeNorm
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

from sampled.casefile import LoopSpec
from sampled.discrete import DiscreteSystem
from sampled.errors import InputError
from sampled.loop import Assessment
from sampled.report import style as S
from sampled.report.style import styled
from sampled.units import format_time

PlotFormat = Literal["png", "svg", "pdf"]
PLOT_FORMATS: tuple[str, ...] = get_args(PlotFormat)

#: ``gid`` of every data artist, by figure.
GIDS = {
    "z_plane": ("closed-loop-poles", "closed-loop-zeros", "continuous-poles-mapped", "unit-circle"),
    "pole_paths": ("pole-paths", "poles-at-case-period", "unit-circle"),
    "step_response": ("sampled-output-between-samples", "sampled-output-at-samples", "continuous-output",
                      "actuator-staircase", "actuator-samples", "reference"),
    "margins": ("spectral-radius", "gain-margin", "phase-margin", "delay-margin", "sensitivity-peak"),
    "chart": ("spectral-radius-map", "stability-boundary", "design-point"),
}

#: Two poles closer than this (relative) are drawn as one marker with a multiplicity label.
COINCIDENT = 1e-7


# ---- helpers -------------------------------------------------------------------------------------

def _figure(width_in: float, height_in: float) -> Figure:
    fig = Figure(figsize=(width_in, height_in), layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _period_label(period_s: float) -> str:
    return f"T = {format_time(period_s)}"


def _time_axis(t_s: np.ndarray) -> tuple[float, str]:
    """Scale and unit that make the largest time readable (``s``, ``ms``, ``us``)."""
    top = float(np.max(np.abs(t_s))) if t_s.size else 1.0
    for unit, factor in (("s", 1.0), ("ms", 1e-3), ("us", 1e-6)):
        if top >= factor:
            return factor, unit
    return 1e-9, "ns"


def _vector_solids(bar: Any) -> None:
    """Draw a colour bar as vector quads (no embedded image in SVG), edges filled to hide seams."""
    bar.solids.set_rasterized(False)
    bar.solids.set_edgecolor("face")
    bar.solids.set_linewidth(0.2)


def _draw_unit_circle(ax: Axes) -> None:
    theta = np.linspace(0.0, 2.0 * math.pi, 721)
    ax.plot(np.cos(theta), np.sin(theta), color=S.INK, lw=S.THIN, zorder=1, gid="unit-circle")
    ax.axhline(0.0, color=S.REFERENCE, lw=S.THIN * 0.75, zorder=0)
    ax.axvline(0.0, color=S.REFERENCE, lw=S.THIN * 0.75, zorder=0)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("Re z")
    ax.set_ylabel("Im z")


def _multiplicities(points: np.ndarray) -> list[tuple[complex, int]]:
    """Group coincident points: ``[(point, count), ...]``."""
    out: list[tuple[complex, int]] = []
    for p in np.asarray(points, dtype=complex).reshape(-1):
        for i, (q, n) in enumerate(out):
            if abs(p - q) <= COINCIDENT * max(1.0, abs(q)):
                out[i] = (q, n + 1)
                break
        else:
            out.append((complex(p), 1))
    return out


def _label_multiples(ax: Axes, points: np.ndarray, color: str) -> None:
    for p, n in _multiplicities(points):
        if n > 1:
            ax.annotate(f"x{n}", (p.real, p.imag), xytext=(5, 5), textcoords="offset points",
                        color=color, fontsize=S.FONT_SIZE - 1.5)


def system_zeros(system: DiscreteSystem) -> np.ndarray:
    """Finite (invariant) zeros of a discrete system in z, from its delta-form state space.

    The zeros ``gamma`` are the finite generalised eigenvalues of the Rosenbrock system matrix,
    ``[[A_delta, B_delta], [C, D]] v = gamma [[I, 0], [0, 0]] v``, mapped to ``z = 1 + T gamma``. No
    polynomial is formed, which keeps zeros near ``z = 1`` accurate at fast sampling (Emami-Naeini and
    Van Dooren, "Computation of zeros of linear multivariable systems", Automatica 18(4), 1982;
    delta form: Middleton and Goodwin, "Digital Control and Estimation", 1990, chapter 2). Whole-sample
    delays add poles at z = 0, not zeros.
    """
    n = system.order
    if n == 0:
        return np.zeros(0, dtype=complex)
    a, b, c, d = system.a_delta, system.b_delta, system.c, system.d
    m = np.block([[a, b], [c, d]])
    e = np.zeros_like(m)
    e[:n, :n] = np.eye(n)
    alpha_beta = scipy.linalg.eig(m, e, right=False, homogeneous_eigvals=True)
    alpha, beta = np.asarray(alpha_beta[0]), np.asarray(alpha_beta[1])
    scale = max(float(np.linalg.norm(m, 1)), 1e-300)
    finite = np.abs(beta) * scale * 1e8 > np.abs(alpha)
    gamma = alpha[finite] / beta[finite]
    gamma = np.where(np.abs(gamma.imag) <= 1e-12 * np.maximum(np.abs(gamma), 1e-300), gamma.real + 0j, gamma)
    return 1.0 + system.period_s * gamma.astype(complex)


def closed_loop_zeros(assessment: Assessment) -> np.ndarray:
    """Zeros of the closed loop r -> y_m: those of the open loop ``C(z) z^-d G(z)`` (unity feedback)."""
    loop = assessment.loop
    return np.concatenate([system_zeros(loop.controller), system_zeros(loop.plant)])


def mapped_continuous_poles(assessment: Assessment) -> np.ndarray | None:
    """The continuous design's closed-loop poles mapped by ``z = exp(s T)``; None without a design."""
    c = assessment.continuous
    if c is None:
        return None
    with np.errstate(over="ignore"):
        return np.exp(np.asarray(c.poles, dtype=complex) * assessment.period_s)


def _fmt_point(z: complex) -> str:
    if abs(z.imag) < 1e-12 * max(1.0, abs(z)):
        return f"{z.real:.4g}"
    return f"{z.real:.4g}{'+' if z.imag >= 0 else '-'}{abs(z.imag):.4g}j"


def _view_radius(*point_sets: np.ndarray | None) -> float:
    biggest = 1.0
    for pts in point_sets:
        if pts is not None and np.size(pts):
            finite = np.abs(pts[np.isfinite(pts)])
            if finite.size:
                biggest = max(biggest, float(np.max(finite)))
    return min(max(1.18, 1.1 * biggest), 12.0)


# ---- z plane -------------------------------------------------------------------------------------

def draw_z_plane(ax: Axes, assessment: Assessment, *, inset: bool = True) -> None:
    """Draw the closed-loop poles and zeros of ``assessment`` on ``ax`` (see :func:`z_plane_figure`)."""
    d = assessment.digital
    poles = np.asarray(d.poles, dtype=complex)
    zeros = closed_loop_zeros(assessment)
    mapped = mapped_continuous_poles(assessment)
    _draw_unit_circle(ax)
    outside = (d.unit_circle_distance < 0) if poles.size else np.zeros(0, dtype=bool)
    colors = np.where(outside, S.UNSTABLE, S.DIGITAL) if poles.size else []
    layers: list[tuple[Axes, float]] = [(ax, 1.0)]
    if inset:
        zoom = _crowded_near_one(poles, zeros, mapped)
        if zoom is not None:
            sub = ax.inset_axes((0.14, 0.07, 0.34, 0.34))
            sub.set_facecolor(S.PAPER)
            theta = np.linspace(-0.5, 0.5, 2001)
            sub.plot(np.cos(theta), np.sin(theta), color=S.INK, lw=S.THIN)
            (x0, x1), (y0, y1) = zoom
            sub.set_xlim(x0, x1)
            sub.set_ylim(y0, y1)
            sub.tick_params(labelsize=S.FONT_SIZE - 3)
            sub.set_title("near z = 1", fontsize=S.FONT_SIZE - 2, fontweight="normal", pad=2)
            ax.indicate_inset_zoom(sub, edgecolor=S.MUTED)
            layers.append((sub, 0.8))
    for target, scale in layers:
        main = target is ax
        if mapped is not None and mapped.size:
            c = assessment.continuous
            label = "continuous design, z = e^(sT)" + (" (delay by Pade)" if c is not None and c.poles_approximated else "")
            target.scatter(mapped.real, mapped.imag, marker="D", s=34 * scale, facecolors="none",
                           edgecolors=S.CONTINUOUS, linewidths=1.2, zorder=3, label=label if main else None,
                           gid="continuous-poles-mapped" if main else None)
        if zeros.size:
            target.scatter(zeros.real, zeros.imag, marker="o", s=46 * scale, facecolors="none",
                           edgecolors=S.DIGITAL, linewidths=1.4, zorder=4, label="zeros" if main else None,
                           gid="closed-loop-zeros" if main else None)
        if poles.size:
            target.scatter(poles.real, poles.imag, marker="x", s=56 * scale, c=colors, linewidths=1.8,
                           zorder=5, label="poles (as implemented)" if main else None,
                           gid="closed-loop-poles" if main else None)
    _label_multiples(ax, poles, S.DIGITAL)
    r = min(_view_radius(poles, mapped), 3.0)
    ax.set_xlim(-r, r)
    ax.set_ylim(-r, r)
    off = [f"{what} at {_fmt_point(p)}" for what, pts in (("pole", poles), ("zero", zeros)) for p in pts if abs(p) > r]
    if off:
        more = f" and {len(off) - 3} more" if len(off) > 3 else ""
        ax.text(0.99, 0.01, "beyond the view: " + ", ".join(off[:3]) + more, transform=ax.transAxes,
                ha="right", va="bottom", color=S.MUTED, fontsize=S.FONT_SIZE - 2)
    verdict_color = S.STABLE if d.verdict == "stable" else S.UNSTABLE
    ax.text(0.99, 0.99, f"{d.verdict}\nspectral radius {d.spectral_radius:.6g}", transform=ax.transAxes,
            ha="right", va="top", color=verdict_color, fontsize=S.FONT_SIZE - 0.5,
            bbox={"boxstyle": "round,pad=0.3", "facecolor": S.PAPER, "edgecolor": verdict_color, "linewidth": S.THIN})
    ax.set_title(f"Closed-loop poles and zeros, {_period_label(assessment.period_s)}")
    ax.legend(loc="upper left", fontsize=S.FONT_SIZE - 2)


def _crowded_near_one(*sets: np.ndarray | None) -> tuple[tuple[float, float], tuple[float, float]] | None:
    """A zoom window around the points near ``z = 1`` when they crowd into a sliver of the plane."""
    pts = [np.asarray(p, dtype=complex) for p in sets if p is not None and np.size(p)]
    if not pts:
        return None
    allp = np.concatenate(pts)
    allp = allp[np.isfinite(allp)]
    near = allp[np.abs(allp - 1.0) < 0.3]
    if near.size < 2:
        return None
    x0, x1 = float(np.min(near.real)), float(np.max(near.real))
    y0, y1 = float(np.min(near.imag)), float(np.max(near.imag))
    span = max(x1 - x0, y1 - y0, 1.0 - x0)
    if span > 0.12 or span <= 0:
        return None
    half = 0.6 * span
    cx, cy = 0.5 * (x0 + max(x1, 1.0)), 0.5 * (y0 + y1)
    return (cx - half, cx + half), (cy - half, cy + half)


def z_plane_figure(assessment: Assessment) -> Figure:
    """Closed-loop poles (crosses) and zeros (circles) of the loop as implemented, in the z plane.

    The continuous design's closed-loop poles, mapped by ``z = exp(s T)``, are drawn as open diamonds
    for comparison (with a transport delay they come from a Pade (4,4) approximation, as labelled).
    Poles outside the unit circle are red. When the poles crowd near ``z = 1`` (fast sampling) an
    inset shows them enlarged.

    Parameters
    ----------
    assessment : Assessment
        From :func:`sampled.loop.assess`.
    """
    with styled():
        fig = _figure(6.2, 5.6)
        draw_z_plane(fig.add_subplot(), assessment)
    return fig


# ---- pole paths ----------------------------------------------------------------------------------

@dataclass(frozen=True)
class PolePaths:
    """Closed-loop poles at each period, flattened: ``poles_z[i]`` belongs to ``period_of_pole_s[i]``."""

    periods_s: np.ndarray
    period_of_pole_s: np.ndarray
    poles_z: np.ndarray


def pole_paths(spec: LoopSpec, periods_s: Sequence[float] | np.ndarray) -> PolePaths:
    """Closed-loop poles of the loop of ``spec`` at every period (delay poles at z = 0 included).

    Uses the batched assembly of :mod:`sampled.sweep_batch` (closed-loop delta matrices, all
    periods at once) and ``z = 1 + T lambda``.
    """
    from sampled.sweep_batch import loop_groups

    periods = np.unique(np.asarray(periods_s, dtype=float).reshape(-1))
    if periods.size == 0 or not (np.all(np.isfinite(periods)) and np.all(periods > 0)):
        raise InputError("periods must be finite and positive", "periods")
    who: list[np.ndarray] = []
    zs: list[np.ndarray] = []
    for grp in loop_groups(spec, periods):
        a_cl = grp.closed_loop(1.0)
        if a_cl.shape[1] == 0:
            continue
        lam = np.linalg.eigvals(a_cl)
        z = 1.0 + lam * grp.periods_s[:, None]
        zs.append(z.reshape(-1))
        who.append(np.repeat(grp.periods_s, z.shape[1]))
    if not zs:
        return PolePaths(periods, np.zeros(0), np.zeros(0, dtype=complex))
    return PolePaths(periods, np.concatenate(who), np.concatenate(zs).astype(complex))


def pole_paths_figure(spec: LoopSpec, periods_s: Sequence[float] | np.ndarray) -> Figure:
    """Closed-loop poles as the sample period grows, coloured by period (logarithmic colour bar).

    The case's own period is marked with black crosses. The view is limited to ``|z| <= 3`` so that
    the unit circle stays readable; poles beyond are counted in the corner.

    Parameters
    ----------
    spec : LoopSpec
    periods_s : array [s]
    """
    paths = pole_paths(spec, periods_s)
    here = pole_paths(spec, [spec.period_s]).poles_z
    with styled():
        fig = _figure(6.6, 5.6)
        ax = fig.add_subplot()
        _draw_unit_circle(ax)
        norm = LogNorm(vmin=float(paths.periods_s[0]), vmax=float(max(paths.periods_s[-1], paths.periods_s[0] * 1.0001)))
        z = paths.poles_z
        r = min(3.0, _view_radius(z))
        shown = np.abs(z) <= r
        sc = ax.scatter(z.real[shown], z.imag[shown], c=paths.period_of_pole_s[shown], cmap=S.PERIOD_MAP, norm=norm,
                        s=9, linewidths=0, zorder=3, gid="pole-paths")
        ax.scatter(here.real, here.imag, marker="x", s=60, color=S.INK, linewidths=1.8, zorder=5,
                   label=f"case period ({format_time(spec.period_s)})", gid="poles-at-case-period")
        ax.set_xlim(-r, r)
        ax.set_ylim(-r, r)
        hidden = int(np.count_nonzero(~shown))
        if hidden:
            ax.text(0.99, 0.01, f"{hidden} pole positions beyond |z| = {r:g} not shown", transform=ax.transAxes,
                    ha="right", va="bottom", color=S.MUTED, fontsize=S.FONT_SIZE - 2)
        bar = fig.colorbar(sc, ax=ax, shrink=0.85, pad=0.02)
        _vector_solids(bar)
        bar.set_label("sample period")
        bar.ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _pos: format_time(v)))
        bar.ax.yaxis.set_minor_formatter(FuncFormatter(lambda v, _pos: ""))
        if spec.period_s >= norm.vmin and spec.period_s <= norm.vmax:
            bar.ax.axhline(spec.period_s, color=S.INK, lw=1.4)
        ax.set_title(f"Closed-loop poles, {format_time(paths.periods_s[0])} to {format_time(paths.periods_s[-1])}")
        ax.legend(loc="upper left", fontsize=S.FONT_SIZE - 2)
    return fig


# ---- step response -------------------------------------------------------------------------------

def draw_step_response(ax_y: Axes, ax_u: Axes, step: Any) -> None:
    """Draw a :class:`sampled.simulate.StepResponse` on an output axis and an actuator axis."""
    factor, unit = _time_axis(step.t_fine)
    ax_y.axhline(1.0, color=S.REFERENCE, lw=S.THIN, ls="--", zorder=1, gid="reference")
    if step.continuous_t is not None and step.continuous_y is not None:
        ax_y.plot(np.asarray(step.continuous_t) / factor, step.continuous_y, color=S.CONTINUOUS, lw=S.LINE_WIDTH,
                  ls=(0, (5, 2)), label="continuous design", zorder=2, gid="continuous-output")
    ax_y.plot(step.t_fine / factor, step.y_fine, color=S.DIGITAL, lw=S.LINE_WIDTH, zorder=3,
              label="as implemented: plant output y(t), exact between samples", gid="sampled-output-between-samples")
    dense = step.t_samples.size > 120
    size = 3.6 if not dense else (2.2 if step.t_samples.size <= 400 else 1.4)
    ax_y.plot(step.t_samples / factor, step.y_samples, ls="none", marker="o", ms=size, color=S.DIGITAL,
              markeredgecolor=S.DIGITAL if dense else S.PAPER, markeredgewidth=0.0 if dense else 0.5, zorder=4,
              label="measured at the samples, y_m[k]", gid="sampled-output-at-samples")
    ax_y.set_ylabel("output (unit step)")
    ax_y.set_title(f"Unit step response, {_period_label(step.period_s)}")
    ax_y.legend(loc="lower right", fontsize=S.FONT_SIZE - 2, markerscale=3.6 / size)
    _clip_growth(ax_y, [step.y_fine] + ([step.continuous_y] if step.continuous_y is not None else []))
    ax_u.plot(step.t_fine / factor, step.u_fine, color=S.ACTUATOR, lw=S.LINE_WIDTH * 0.9, drawstyle="steps-post",
              label="actuator command as held", gid="actuator-staircase")
    ax_u.plot(step.t_samples / factor, step.u_samples, ls="none", marker=".", ms=3.0, color=S.ACTUATOR,
              zorder=4, label="controller output u[k]", gid="actuator-samples")
    ax_u.set_ylabel("actuator")
    ax_u.set_xlabel(f"time [{unit}]")
    ax_u.legend(loc="upper right", fontsize=S.FONT_SIZE - 2)
    _clip_growth(ax_u, [step.u_fine])
    if step.compute_delay_s > 0:
        ax_u.text(0.0, 1.02, f"updated {format_time(step.compute_delay_s)} after each sample (computation delay)",
                  transform=ax_u.transAxes, fontsize=S.FONT_SIZE - 2, color=S.MUTED, va="bottom")


def _clip_growth(ax: Axes, series: list[np.ndarray]) -> None:
    """Keep an unstable, exploding response from flattening the axis: show it up to 6x the early range."""
    vals = np.concatenate([np.asarray(s, dtype=float).reshape(-1) for s in series])
    vals = vals[np.isfinite(vals)]
    if vals.size == 0:
        return
    early = vals[: max(vals.size // 3, 1)]
    lo, hi = float(np.min(early)), float(np.max(early))
    full_lo, full_hi = float(np.min(vals)), float(np.max(vals))
    span = max(hi - lo, abs(hi), abs(lo), 1e-12)
    if full_hi - full_lo > 6 * span:
        ax.set_ylim(lo - 3 * span, hi + 3 * span)
        ax.text(0.5, 0.98, "growing response clipped", transform=ax.transAxes, ha="center", va="top",
                color=S.UNSTABLE, fontsize=S.FONT_SIZE - 1.5)


def step_response_figure(step: Any) -> Figure:
    """Step response of the continuous design against the sampled loop.

    The sampled loop's plant output between samples is drawn as a line (exact, from
    :func:`sampled.simulate.step_response`), the measured samples as markers, and the held actuator
    command as a staircase on a second axis below.

    Parameters
    ----------
    step : sampled.simulate.StepResponse
    """
    with styled():
        fig = _figure(7.2, 5.4)
        ax_y, ax_u = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [2.2, 1.0]})
        draw_step_response(ax_y, ax_u, step)
    return fig


# ---- margins against period ----------------------------------------------------------------------

def _shade_unstable(ax: Axes, periods: np.ndarray, stable: np.ndarray) -> None:
    """Shade the period ranges where the sweep found the loop not stable."""
    if periods.size == 0:
        return
    edges = np.sqrt(periods[1:] * periods[:-1])
    lo_edges = np.concatenate([[periods[0]], edges])
    hi_edges = np.concatenate([edges, [periods[-1]]])
    i = 0
    while i < periods.size:
        if not stable[i]:
            j = i
            while j + 1 < periods.size and not stable[j + 1]:
                j += 1
            ax.axvspan(lo_edges[i], hi_edges[j], color=S.UNSTABLE, alpha=0.08, lw=0, zorder=0)
            i = j + 1
        else:
            i += 1


def margins_vs_period_figure(sweep: Any) -> Figure:
    """Spectral radius and the margins of the sampled loop against the sample period.

    Panels: spectral radius (with the unit line), gain margin [dB], phase margin [deg], delay margin
    [samples] and sensitivity peak. Margins are drawn only where the loop is stable (elsewhere they are
    not stability margins); periods where it is not stable are shaded. Every boundary the sweep located
    is a vertical line; requirement limits are dotted horizontal lines; the largest period meeting every
    requirement and the case's own period are marked. Continuous-design margins, when known, are
    drawn as horizontal dashed lines for comparison.

    Parameters
    ----------
    sweep : sampled.sweep.SweepResult
    """
    periods = np.asarray(sweep.periods_s, dtype=float)
    stable = np.array([v == "stable" for v in sweep.verdicts], dtype=bool)
    computed = np.asarray(getattr(sweep, "margins_computed", np.ones(periods.size, dtype=bool)), dtype=bool)
    ok = stable & computed

    def masked(values: Any) -> np.ndarray:
        v = np.array(values, dtype=float)
        v[~ok | ~np.isfinite(v)] = np.nan
        return v

    limits = dict(getattr(sweep, "requirement_limits", {}) or {})
    cont = getattr(sweep, "continuous", None)
    cm = cont.margins if cont is not None else None
    panels: list[tuple[str, str, np.ndarray, float | None, float | None, str]] = [
        ("spectral radius", "spectral-radius", np.asarray(sweep.spectral_radius, dtype=float), 1.0, None, ""),
        ("gain margin [dB]", "gain-margin", np.abs(masked(sweep.gain_margin_db)), _limit(limits, "gain_margin_db"),
         None if cm is None else abs(cm.gain_margin_db), ">="),
        ("phase margin [deg]", "phase-margin", masked(sweep.phase_margin_deg), _limit(limits, "phase_margin_deg"),
         None if cm is None else cm.phase_margin_deg, ">="),
        ("delay margin [samples]", "delay-margin", masked(sweep.delay_margin_s) / periods, None, None, ">="),
        ("sensitivity peak", "sensitivity-peak", masked(sweep.sensitivity_peak), _limit(limits, "sensitivity_peak"),
         None if cm is None else cm.sensitivity_peak, "<="),
    ]
    with styled():
        fig = _figure(7.2, 9.0)
        axes = fig.subplots(len(panels), 1, sharex=True, gridspec_kw={"height_ratios": [1.5] + [1.0] * (len(panels) - 1)})
        for ax, (label, gid, values, limit, cont_value, _sense) in zip(axes, panels):
            _shade_unstable(ax, periods, stable)
            if gid == "spectral-radius":
                ax.plot(periods, values, color=S.DIGITAL, gid=gid)
                ax.axhline(1.0, color=S.UNSTABLE, lw=S.THIN, ls="--")
                top = float(np.nanmax(values)) if values.size else 1.0
                ax.set_ylim(max(0.0, float(np.nanmin(values)) - 0.05) if values.size else 0.0, min(max(1.1, top + 0.05), 3.0))
            else:
                ax.plot(periods, values, color=S.DIGITAL, marker="." if np.count_nonzero(ok) < 60 else None,
                        ms=3, gid=gid)
                finite = values[np.isfinite(values)]
                if gid == "sensitivity-peak" and finite.size and np.min(finite) > 0 and np.max(finite) / np.min(finite) > 20:
                    ax.set_yscale("log")
                    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
                if not finite.size:
                    ax.text(0.5, 0.5, "no finite value where the loop is stable", transform=ax.transAxes,
                            ha="center", va="center", color=S.MUTED, fontsize=S.FONT_SIZE - 1.5)
                if limit is not None:
                    ax.axhline(limit, color=S.INK, lw=S.THIN, ls=":", label=f"requirement {limit:g}")
                if cont_value is not None and math.isfinite(cont_value):
                    ax.axhline(cont_value, color=S.CONTINUOUS, lw=S.THIN, ls="--", label="continuous design")
                if limit is not None or (cont_value is not None and math.isfinite(cont_value)):
                    ax.legend(loc="best", fontsize=S.FONT_SIZE - 2.5)
            ax.set_ylabel(label, fontsize=S.FONT_SIZE - 1)
            ax.set_xscale("log")
            for b in sweep.boundaries:
                color = S.UNSTABLE if b.kind == "stability" else S.MUTED
                ax.axvline(b.period_s, color=color, lw=S.THIN, ls="-." if b.kind != "stability" else "-")
            ax.axvline(sweep.case_period_s, color=S.INK, lw=S.THIN * 1.2, ls=(0, (1, 1)))
        top_ax = axes[0]
        # Boundaries are numbered on the top panel and listed in the legend below, so that close
        # boundaries stay readable; the numbers step down in three heights.
        boundary_handles = []
        for i, b in enumerate(sorted(sweep.boundaries, key=lambda b: b.period_s)):
            color = S.UNSTABLE if b.kind == "stability" else S.MUTED
            what = f"becomes {b.becomes}" if b.kind == "stability" else f"{SHORT_NAMES.get(b.kind, b.kind)} {b.becomes}"
            top_ax.annotate(str(i + 1), (b.period_s, 1.0 - 0.14 * (i % 3)), xycoords=("data", "axes fraction"),
                            xytext=(3, -3), textcoords="offset points", va="top", ha="left",
                            fontsize=S.FONT_SIZE - 2, color=color, fontweight="bold")
            boundary_handles.append(Line2D([], [], color=color, lw=S.THIN, ls="-" if b.kind == "stability" else "-.",
                                           label=f"{i + 1}: {format_time(b.period_s)} {what}"))
        top_ax.annotate("case period", (sweep.case_period_s, 0.0), xycoords=("data", "axes fraction"),
                        xytext=(-3, 3), textcoords="offset points", rotation=90, va="bottom", ha="right",
                        fontsize=S.FONT_SIZE - 3, color=S.INK)
        best = sweep.largest_period_meeting_requirements
        if best is not None:
            for ax in axes:
                ax.axvline(best, color=S.STABLE, lw=S.LINE_WIDTH)
            axes[-1].annotate(f"largest period meeting every requirement: {format_time(best)}", (best, 1.0),
                              xycoords=("data", "axes fraction"), xytext=(-4, -4), textcoords="offset points",
                              ha="right", va="top", fontsize=S.FONT_SIZE - 2, color=S.STABLE)
        axes[-1].set_xlabel("sample period")
        axes[-1].xaxis.set_major_formatter(FuncFormatter(lambda v, _pos: format_time(v)))
        title = getattr(sweep, "title", "") or ""
        top_ax.set_title("Margins against sample period" + (f": {title}" if title else ""))
        fig.legend(handles=[Line2D([], [], color=S.UNSTABLE, lw=6, alpha=0.2, label="not stable"),
                            Line2D([], [], color=S.UNSTABLE, lw=S.THIN, label="stability boundary"),
                            Line2D([], [], color=S.MUTED, lw=S.THIN, ls="-.", label="requirement boundary"),
                            Line2D([], [], color=S.STABLE, lw=S.LINE_WIDTH, label="largest period meeting requirements")]
                   + boundary_handles,
                   loc="outside lower center", ncols=4 if not boundary_handles else 2, fontsize=S.FONT_SIZE - 2.5)
    return fig


#: Short labels of requirement boundaries in the margins figure (the legend explains the line styles).
SHORT_NAMES = {"gain_margin_db": "gain margin", "phase_margin_deg": "phase margin",
               "delay_margin_s": "delay margin", "sensitivity_peak": "sens. peak"}


def _limit(limits: dict[str, Any], name: str) -> float | None:
    value = limits.get(name)
    if isinstance(value, (int, float)) and math.isfinite(value):
        return float(value)
    return None


# ---- stability chart -----------------------------------------------------------------------------

def stability_chart_figure(chart: Any) -> Figure:
    """Spectral radius over sample period x loop-gain multiplier, with the stability boundary.

    Colour: spectral radius on a two-slope scale centred on 1 (teal stable, red unstable, clipped at
    2). The thick line is the boundary of the stable cells; the star is the design point (the case's
    period, multiplier 1).

    Parameters
    ----------
    chart : sampled.sweep.StabilityChart
        2-D arrays indexed ``[gain, period]``.
    """
    periods = np.asarray(chart.periods_s, dtype=float)
    gains = np.asarray(chart.gains, dtype=float)
    radius = np.asarray(chart.spectral_radius, dtype=float)
    stable = np.asarray(chart.stable, dtype=bool)
    design_period, design_gain = (float(v) for v in chart.design_point)
    with styled():
        fig = _figure(7.2, 5.2)
        ax = fig.add_subplot()
        lo = max(0.0, min(float(np.nanmin(radius)), 0.99)) if radius.size else 0.0
        norm = TwoSlopeNorm(vmin=lo, vcenter=1.0, vmax=2.0)
        mesh = ax.pcolormesh(periods, gains, np.clip(radius, lo, 2.0), cmap=S.RADIUS_MAP, norm=norm,
                             shading="nearest", rasterized=False, edgecolors="face", linewidth=0.2,
                             gid="spectral-radius-map")
        if stable.any() and (~stable).any() and min(stable.shape) > 1:
            ax.contour(periods, gains, stable.astype(float), levels=[0.5], colors=[S.INK], linewidths=1.8)
            ax.plot([], [], color=S.INK, lw=1.8, label="stability boundary", gid="stability-boundary")
        ax.plot([design_period], [design_gain], marker="*", ms=15, color=S.PAPER, markeredgecolor=S.INK,
                markeredgewidth=1.2, ls="none", label=f"design point ({format_time(design_period)}, x{design_gain:g})",
                gid="design-point")
        ax.set_xscale("log")
        if gains.size > 1 and gains[-1] / gains[0] >= 8:
            ax.set_yscale("log")
            ax.yaxis.set_major_locator(LogLocator(base=2.0))
            ax.yaxis.set_minor_formatter(NullFormatter())
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _pos: format_time(v)))
        ax.xaxis.set_minor_formatter(NullFormatter())
        ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
        ax.set_xlabel("sample period")
        ax.set_ylabel("loop-gain multiplier")
        ax.grid(False)
        bar = fig.colorbar(mesh, ax=ax, pad=0.02, extend="max")
        _vector_solids(bar)
        bar.set_label("spectral radius (above 1: unstable)")
        ax.set_title("Stability over period and loop gain")
        ax.legend(loc="upper right", fontsize=S.FONT_SIZE - 2, frameon=True, facecolor=S.PAPER, edgecolor=S.RULE)
    return fig


# ---- check --plot ----------------------------------------------------------------------------------

def check_figure(assessment: Assessment, step: Any) -> Figure:
    """The z-plane and the step response side by side (what ``sampled check --plot`` saves)."""
    with styled():
        fig = _figure(12.4, 5.6)
        grid = fig.add_gridspec(2, 2, width_ratios=[1.0, 1.25], height_ratios=[2.2, 1.0])
        draw_z_plane(fig.add_subplot(grid[:, 0]), assessment)
        ax_y = fig.add_subplot(grid[0, 1])
        ax_u = fig.add_subplot(grid[1, 1], sharex=ax_y)
        draw_step_response(ax_y, ax_u, step)
        fig.suptitle(assessment.spec.title, fontweight="bold", fontsize=S.FONT_SIZE + 2, x=0.01, ha="left")
    return fig


# ---- output ----------------------------------------------------------------------------------------

def plot_format(path: str | Path, where: str = "--plot") -> PlotFormat:
    """The figure format named by a file's suffix; :class:`InputError` naming ``where`` otherwise."""
    suffix = Path(path).suffix.lower().lstrip(".")
    if suffix not in PLOT_FORMATS:
        allowed = ", ".join("." + f for f in PLOT_FORMATS)
        got = f"'.{suffix}'" if suffix else "no suffix"
        raise InputError(f"cannot tell the figure format from {str(path)!r} ({got}); use one of {allowed}", where)
    return suffix  # type: ignore[return-value]


def figure_bytes(fig: Figure, fmt: PlotFormat) -> bytes:
    """Render ``fig`` to PNG, SVG or PDF bytes (metadata without dates, so output is reproducible)."""
    buf = io.BytesIO()
    metadata: dict[str, Any] = {"png": {"Software": None}, "svg": {"Date": None, "Creator": None},
                                "pdf": {"CreationDate": None, "Creator": None, "Producer": None}}[fmt]
    with styled():
        fig.savefig(buf, format=fmt, metadata=metadata)
    return buf.getvalue()


def save_figure(fig: Figure, path: str | Path, where: str = "--plot") -> None:
    """Write ``fig`` to ``path`` in the format its suffix names, atomically (no partial file)."""
    from sampled.commands.common import write_file_atomically

    fmt = plot_format(path, where)
    write_file_atomically(path, figure_bytes(fig, fmt))

