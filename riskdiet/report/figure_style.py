"""Shared look of riskdiet's figures: palette, hatches, sizes, style and export.

Colours come from :data:`PALETTE`, eight colours chosen for this project so
that every pair stays apart under simulated protanopia, deuteranopia and
tritanopia, and every colour carries its own hatching (:data:`HATCHES`), so a
figure still reads when printed in greyscale.
"""

from __future__ import annotations

import io
import re
import textwrap
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass

import numpy as np

PALETTE = (
    "#23236e",  # indigo
    "#da833c",  # orange
    "#bfd0e7",  # pale blue
    "#7c270c",  # rust
    "#ecd202",  # yellow
    "#459777",  # green
    "#9b73c4",  # lavender
    "#4c293c",  # aubergine
)
"""Fill colours, in order of use. Chosen for riskdiet: every pair differs by at
least 30 CIELAB units in normal vision and under the protanopia, deuteranopia
and tritanopia simulations of Machado, Oliveira & Fernandes (2009)."""

HATCHES = ("", "////", "....", "\\\\\\\\", "xxx", "---", "oo", "|||", "+++")
"""Hatch patterns, in order of use; nine patterns against eight colours, so the
(colour, hatch) pair of the first 72 items is unique."""

LINE_STYLES = ("-", "--", ":", "-.", (0, (5, 1, 1, 1, 1, 1)), (0, (1, 3)))
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")

DPI_BRIEF = 200
"""Resolution of the figures embedded in the PDF [dots per inch]."""
DPI_EXPORT = 300
"""Resolution of the PNG files written by ``--figures`` [dots per inch]."""

WIDTH_IN = 6.7
"""Figure width: the text width of an A4 or letter page with 20 mm margins [in]."""

MAX_BARS = 48
"""Above this many bars (prey types x scenarios) the kills chart sums by prey group."""

_STYLE = {
    "font.family": "DejaVu Sans",
    "font.size": 8,
    "axes.titlesize": 9,
    "axes.labelsize": 8,
    "xtick.labelsize": 7.5,
    "ytick.labelsize": 7.5,
    "legend.fontsize": 7.5,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "hatch.linewidth": 0.7,
    "svg.hashsalt": "riskdiet",
    "svg.fonttype": "path",
    "savefig.facecolor": "white",
    "figure.facecolor": "white",
}


@contextmanager
def _style() -> Iterator[None]:
    import matplotlib

    with matplotlib.rc_context(_STYLE):
        yield


def prey_style(index: int) -> tuple[str, str]:
    """Fill colour and hatch of the prey (or scenario) listed at ``index``."""
    return PALETTE[index % len(PALETTE)], HATCHES[index % len(HATCHES)]


def _luminance(colour: str) -> float:
    """Relative luminance of an sRGB hex colour (IEC 61966-2-1)."""
    rgb = np.array([int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    return float(lin @ np.array([0.2126, 0.7152, 0.0722]))


def hatch_colour(fill: str) -> str:
    """Hatch lines light on dark fills and dark on light fills, for contrast."""
    return "#ffffff" if _luminance(fill) < 0.18 else "#1a1a1a"


def _bar_style(index: int) -> dict:
    fill, hatch = prey_style(index)
    return {"facecolor": fill, "hatch": hatch, "edgecolor": hatch_colour(fill),
            "linewidth": 0.0}


def short_label(text: str, width: int = 26) -> str:
    """A name shortened for an axis label (tables in the brief carry it in full)."""
    return textwrap.shorten(text, width=width, placeholder="…") if len(text) > width else text


def slug(text: str) -> str:
    """A file-name-safe form of a scenario name."""
    s = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    return s or "scenario"


@dataclass(frozen=True)
class BriefFigure:
    """One figure of the brief.

    Attributes
    ----------
    key : str
        Stem of the exported file names, e.g. ``01-decisions-baseline``.
    caption : str
        Caption printed under the figure in the brief.
    figure : matplotlib.figure.Figure
        The figure.
    """

    key: str
    caption: str
    figure: object


def png_bytes(figure, dpi: int | None = None) -> bytes:
    """The figure as PNG bytes, without a creation-software or time stamp.

    ``dpi`` defaults to :data:`DPI_BRIEF`.
    """
    buffer = io.BytesIO()
    with _style():
        figure.savefig(buffer, format="png", dpi=dpi or DPI_BRIEF, metadata={"Software": None})
    return buffer.getvalue()


def svg_bytes(figure) -> bytes:
    """The figure as SVG bytes with fixed element ids and no date."""
    buffer = io.BytesIO()
    with _style():
        figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
    return buffer.getvalue()


# --- One colour scheme per kind of thing --------------------------------------------------------
# Prey take the colours of PALETTE (by their place in the study's prey list), in every figure.
# Scenarios take neutral greys, and the when-attacked categories of the maps a fixed key of
# their own, so a colour never means a prey in one figure and a scenario or a regime in another.


def prey_bar_style(index: int) -> dict:
    """Fill, hatch and edge of the prey listed at ``index`` in the study (every figure)."""
    return _bar_style(index)


def prey_colour(index: int) -> str:
    """Fill colour of the prey listed at ``index`` in the study (every figure)."""
    return prey_style(index)[0]


SCENARIO_GREYS = ("#1a1a1a", "#6b6b6b", "#a8a8a8", "#e3e3e3")
"""Bar fills of scenarios, in order: neutral greys (no prey colour is grey), told apart
by lightness and, past four scenarios, by hatch."""
SCENARIO_LINE_GREYS = ("#000000", "#5a5a5a", "#969696")
"""Line colours of scenarios, with dash pattern and marker as the main difference."""


def scenario_bar_style(index: int) -> dict:
    """Fill, hatch and edge of the scenario at ``index`` (bars)."""
    fill = SCENARIO_GREYS[index % len(SCENARIO_GREYS)]
    hatch = HATCHES[(index // len(SCENARIO_GREYS)) % len(HATCHES)]
    return {"facecolor": fill, "hatch": hatch, "edgecolor": hatch_colour(fill),
            "linewidth": 0.0}


def scenario_line_style(index: int) -> dict:
    """Colour, dash pattern and marker of the scenario at ``index`` (lines)."""
    return {"color": SCENARIO_LINE_GREYS[index % len(SCENARIO_LINE_GREYS)],
            "linestyle": LINE_STYLES[index % len(LINE_STYLES)],
            "marker": MARKERS[index % len(MARKERS)]}


CONDITION_LINES = ({"color": "#000000", "linestyle": "-"},
                   {"color": "#6b6b6b", "linestyle": "--"})
"""Lines of a healthy and an injured animal: black and grey, solid and dashed."""

REGIME_STYLE = (
    ("#ffffff", ""),       # never
    ("#0b5d66", ""),       # at all reserves: dark teal
    ("#8fd6cc", "...."),   # only when reserves are low: mint, dotted
    ("#c45a8f", "////"),   # only when reserves are high: magenta, hatched
    ("#d9c89a", "xxx"),    # other: sand, cross-hatched
)
"""Fill and hatch of each when-attacked category, by code of
:data:`riskdiet.analysis.regimes.WHEN_KEYS`: a key of its own, at least 20 CIELAB
units from every prey colour, lightness falling from "never" to "at all reserves",
and a distinct hatch wherever two fills could look alike."""


def regime_bar_style(code: int) -> dict:
    """Fill, hatch and edge of a when-attacked category (map panels and their key)."""
    fill, hatch = REGIME_STYLE[code]
    return {"facecolor": fill, "hatch": hatch, "edgecolor": hatch_colour(fill),
            "linewidth": 0.0}
