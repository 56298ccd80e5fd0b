"""Figures of a two-input map: regimes, the value of hunting skill, predicted kills.

Drawn only from a :class:`riskdiet.analysis.maps.MapResult`; nothing is recomputed.
Regime colours and hatches come from the brief's palette
(:data:`riskdiet.report.figure_style.PALETTE`), so the maps read in greyscale too.
"""

from __future__ import annotations

import textwrap

import numpy as np

from riskdiet.analysis.findings import WILD_GROUPS
from riskdiet.analysis.maps import MapResult
from riskdiet.report.figure_style import (
    HATCHES,
    PALETTE,
    WIDTH_IN,
    BriefFigure,
    _style,
    hatch_colour,
    slug,
)


def regime_categories(result: MapResult) -> list[str]:
    """Regime names of both conditions, most common first (legend order)."""
    names, counts = np.unique(np.concatenate([result.regime_healthy.ravel(),
                                              result.regime_injured.ravel()]),
                              return_counts=True)
    return [str(n) for n in names[np.argsort(-counts, kind="stable")]]


def _edges(v: np.ndarray) -> np.ndarray:
    mid = (v[1:] + v[:-1]) / 2
    return np.concatenate([[v[0] - (mid[0] - v[0])], mid, [v[-1] + (v[-1] - mid[-1])]])


def regime_figure(result: MapResult) -> object:
    """Regime map: one panel per condition, categorical colours with hatching."""
    from matplotlib.colors import BoundaryNorm, ListedColormap
    from matplotlib.figure import Figure
    from matplotlib.patches import Patch

    cats = regime_categories(result)
    index = {c: i for i, c in enumerate(cats)}
    with _style():
        height = 3.2 + 0.17 * len(cats)
        fig = Figure(figsize=(WIDTH_IN, height), layout="constrained")
        axes = fig.subplots(1, 2, sharey=True)
        xe, ye = _edges(result.x), _edges(result.y)
        colours = [PALETTE[k % len(PALETTE)] for k in range(len(cats))]
        cmap = ListedColormap(colours)
        norm = BoundaryNorm(np.arange(len(cats) + 1) - 0.5, len(cats))
        for ax, grid, cond in ((axes[0], result.regime_healthy, "healthy"),
                               (axes[1], result.regime_injured, "injured")):
            codes = np.vectorize(index.get)(grid).astype(float)
            ax.pcolormesh(xe, ye, codes, cmap=cmap, norm=norm, shading="flat")
            for k in range(len(cats)):
                hatch = HATCHES[k % len(HATCHES)]
                inside = codes == k
                if hatch and inside.any() and len(result.x) > 1 and len(result.y) > 1:
                    hatched = ax.contourf(result.x, result.y, inside.astype(float),
                                          levels=[0.5, 1.5], colors="none", hatches=[hatch])
                    hatched.set_edgecolor(hatch_colour(PALETTE[k % len(PALETTE)]))
                    hatched.set_linewidth(0.0)
            ax.set_title(f"{cond} animal")
            ax.set_xlabel(textwrap.fill(result.request.x.label, 40))
        axes[0].set_ylabel(textwrap.fill(result.request.y.label, 40))
        handles = [Patch(facecolor=PALETTE[k % len(PALETTE)], hatch=HATCHES[k % len(HATCHES)],
                         edgecolor=hatch_colour(PALETTE[k % len(PALETTE)]),
                         label=textwrap.fill(c, 90)) for k, c in enumerate(cats)]
        fig.legend(handles=handles, loc="outside lower center", ncols=1, frameon=False,
                   title="Which prey are attacked, read from low to high reserves")
    return fig


def marginal_figure(result: MapResult) -> object:
    """Marginal value of hunting ability with its zero contour."""
    from matplotlib.colors import TwoSlopeNorm
    from matplotlib.figure import Figure

    z = result.marginal_hunting_ability
    with _style():
        fig = Figure(figsize=(WIDTH_IN, 3.1), layout="constrained")
        ax = fig.subplots()
        lo, hi = float(np.nanmin(z)), float(np.nanmax(z))
        bound = max(abs(lo), abs(hi), 1e-12)
        mesh = ax.pcolormesh(_edges(result.x), _edges(result.y), z, cmap="PuOr_r",
                             norm=TwoSlopeNorm(0.0, -bound, bound), shading="flat")
        if lo < 0 < hi:
            cs = ax.contour(result.x, result.y, z, levels=[0.0], colors="black",
                            linewidths=1.2)
            ax.clabel(cs, fmt="0", fontsize=7)
        cs2 = ax.contour(result.x, result.y, z, levels=6, colors="#444444", linewidths=0.4,
                         linestyles="dotted")
        ax.clabel(cs2, fmt="%.2g", fontsize=6)
        fig.colorbar(mesh, ax=ax, label="change in fitness per unit of hunting ability")
        ax.set_xlabel(textwrap.fill(result.request.x.label, 50))
        ax.set_ylabel(textwrap.fill(result.request.y.label, 40))
        ax.set_title("Marginal value of hunting ability (selection gradient)")
    return fig


def default_group(result: MapResult) -> str:
    """The group a kills map shows by default: the first non-wild group, else the first."""
    return first_unwanted_group(list(result.groups))


def first_unwanted_group(groups: list[str]) -> str:
    """The first group that is not wild (livestock, protected...), else the first group."""
    return next((g for g in groups if g.lower() not in WILD_GROUPS), groups[0])


def figure_keys(group: str, first: int = 1) -> list[str]:
    """File stems of the three map figures (regimes, hunting ability, kills of ``group``)."""
    return [f"{first:02d}-map-regimes", f"{first + 1:02d}-map-hunting-ability",
            f"{first + 2:02d}-map-kills-{slug(group)}"]


def kills_figure(result: MapResult, group: str) -> object:
    """Kills of one prey group per predator per year (or season) over the map."""
    from matplotlib.figure import Figure

    z = result.kills_per_year[group]
    per = "year" if result.currency == "breeding" else "season"
    with _style():
        fig = Figure(figsize=(WIDTH_IN, 3.1), layout="constrained")
        ax = fig.subplots()
        mesh = ax.pcolormesh(_edges(result.x), _edges(result.y), z, cmap="cividis",
                             shading="flat")
        if np.nanmax(z) > np.nanmin(z):
            cs = ax.contour(result.x, result.y, z, levels=6, colors="white", linewidths=0.6)
            ax.clabel(cs, fmt="%.3g", fontsize=6)
        fig.colorbar(mesh, ax=ax, label=f"{group} kills per predator per {per}")
        ax.set_xlabel(textwrap.fill(result.request.x.label, 50))
        ax.set_ylabel(textwrap.fill(result.request.y.label, 40))
        ax.set_title(f"Predicted {group} kills")
    return fig


def map_figures(result: MapResult, group: str | None = None, first: int = 1
                ) -> list[BriefFigure]:
    """The three map figures with captions, numbered from ``first``."""
    group = group or default_group(result)
    sc = result.request.scenario
    keys = figure_keys(group, first)
    z = result.marginal_hunting_ability
    crosses_zero = bool((z <= 0).any() and (z > 0).any())
    return [
        BriefFigure(keys[0], f"Scenario “{sc}”: which prey a healthy and an injured animal "
                    "attack, across the map (regimes read from low to high reserves).",
                    regime_figure(result)),
        BriefFigure(keys[1], f"Scenario “{sc}”: marginal value of hunting ability (policy "
                    "held fixed)" + ("; the black line is where better hunting stops paying "
                                     "(zero)." if crosses_zero
                                     else "; dotted lines are contours of equal value."),
                    marginal_figure(result)),
        BriefFigure(keys[2], f"Scenario “{sc}”: predicted {group} kills per predator.",
                    kills_figure(result, group)),
    ]
