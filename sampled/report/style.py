"""The visual style of sampled's figures: colours, fonts and line widths, stated once.

Every figure is drawn inside :func:`styled`, a temporary set of matplotlib parameters that is
restored afterwards, so a library caller's own settings are never changed. Fonts are DejaVu Sans,
which ships inside matplotlib, so drawing needs no network and no system fonts; SVG output draws
text as paths so an inline figure looks the same in every browser.

Colour meanings (the same in every figure and in the HTML report):

* ``DIGITAL``     the loop as implemented (sampled, at the case's period)
* ``CONTINUOUS``  the continuous design the controller came from
* ``ACTUATOR``    the held actuator command
* ``STABLE`` / ``UNSTABLE``  verdict colours
* ``INK`` / ``MUTED`` / ``RULE`` / ``PAPER``  text, secondary text, grid and background
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from typing import Any

import matplotlib
from matplotlib.colors import LinearSegmentedColormap

INK = "#1d2733"
MUTED = "#5d6b7a"
RULE = "#dde3ea"
PAPER = "#ffffff"
PANEL = "#f7f9fb"

DIGITAL = "#0b6e7f"
CONTINUOUS = "#c26a12"
ACTUATOR = "#6a4c93"
REFERENCE = "#8a96a3"
STABLE = "#2f8a57"
UNSTABLE = "#b3262e"
BOUNDARY = "#1d2733"

LINE_WIDTH = 1.6
THIN = 0.8
MARKER_SIZE = 7.0
FONT_SIZE = 9.5

#: Sample period from short (deep blue-green) to long (sand): used for pole paths.
PERIOD_MAP = LinearSegmentedColormap.from_list(
    "sampled-period", ["#14324f", "#0b6e7f", "#4fa38a", "#b7c46a", "#e3a13b"]
)
#: Spectral radius: calm teal inside the unit circle, through pale at 1, to red outside.
RADIUS_MAP = LinearSegmentedColormap.from_list(
    "sampled-radius", ["#0d4d5c", "#3f9aa6", "#cfe6e3", "#f6efe4", "#eab08a", "#c4452f", "#7a1620"]
)

#: matplotlib parameters applied while a figure is drawn (see :func:`styled`).
RC: dict[str, Any] = {
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans"],
    "font.size": FONT_SIZE,
    "axes.titlesize": FONT_SIZE + 1,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.titlepad": 8.0,
    "axes.labelsize": FONT_SIZE,
    "axes.labelcolor": INK,
    "axes.edgecolor": MUTED,
    "axes.linewidth": THIN,
    "axes.facecolor": PANEL,
    "axes.grid": True,
    "axes.axisbelow": True,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "grid.color": RULE,
    "grid.linewidth": THIN,
    "grid.linestyle": "-",
    "xtick.color": MUTED,
    "ytick.color": MUTED,
    "xtick.labelcolor": INK,
    "ytick.labelcolor": INK,
    "xtick.direction": "out",
    "ytick.direction": "out",
    "legend.frameon": False,
    "legend.fontsize": FONT_SIZE - 1,
    "lines.linewidth": LINE_WIDTH,
    "lines.markersize": MARKER_SIZE,
    "figure.facecolor": PAPER,
    "figure.dpi": 100,
    "savefig.dpi": 150,
    "savefig.facecolor": PAPER,
    "text.color": INK,
    "mathtext.default": "regular",
    "svg.fonttype": "path",
    "svg.hashsalt": "sampled",
    "pdf.fonttype": 42,
}


@contextlib.contextmanager
def styled() -> Iterator[None]:
    """Apply :data:`RC` while the block runs; the caller's matplotlib settings come back after."""
    with matplotlib.rc_context(RC):
        yield
