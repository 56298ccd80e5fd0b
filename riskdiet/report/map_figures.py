"""Figures of a two-input map: when each prey is attacked, the value of hunting skill,
predicted kills and, when asked for, the value of a further input.

Drawn only from a :class:`riskdiet.analysis.maps.MapResult`; nothing is recomputed.
Prey keep their colour of every other figure (:func:`figure_style.prey_bar_style`,
a band above each panel); the when-attacked categories have a key of their own
(:data:`figure_style.REGIME_STYLE`), with hatches so that the maps read in greyscale.
Every panel marks where the study itself sits.
"""

from __future__ import annotations

import textwrap

import numpy as np

from riskdiet.analysis.findings import WILD_GROUPS
from riskdiet.analysis.map_reading import gradient_sentence, gradient_words, what_fitness
from riskdiet.analysis.maps import MapResult
from riskdiet.analysis.regimes import WHEN_ALL, WHEN_HIGH, WHEN_LOW, WHEN_NEVER, WHEN_OTHER
from riskdiet.report.figure_style import (
    REGIME_STYLE,
    WIDTH_IN,
    BriefFigure,
    _style,
    hatch_colour,
    prey_bar_style,
    slug,
)

REGIME_KEY = (
    (WHEN_NEVER, "never"),
    (WHEN_ALL, "at all reserves"),
    (WHEN_LOW, "only when reserves are low: below the % on the lines"),
    (WHEN_HIGH, "only when reserves are high: above the % on the lines"),
    (WHEN_OTHER, "other (several ranges of reserves, or one in the middle)"),
)
"""Key of the when-attacked panels: category code and its short label."""

CONTOUR_LABEL = {"fontsize": 7.5, "inline": True, "inline_spacing": 3}
"""Contour labels large enough to read on paper, set into a gap in their line."""


def _halo():
    """A white outline behind text and labels drawn over colour."""
    from matplotlib import patheffects

    return [patheffects.withStroke(linewidth=2.4, foreground="white")]


def _edges(v: np.ndarray) -> np.ndarray:
    mid = (v[1:] + v[:-1]) / 2
    return np.concatenate([[v[0] - (mid[0] - v[0])], mid, [v[-1] + (v[-1] - mid[-1])]])


def _inside(result: MapResult) -> bool:
    """Whether the study's own values lie on the map."""
    sx, sy = result.study_x, result.study_y
    if not (np.isfinite(sx) and np.isfinite(sy)):
        return False
    xs, ys = (min(result.x[0], result.x[-1]), max(result.x[0], result.x[-1])), \
        (min(result.y[0], result.y[-1]), max(result.y[0], result.y[-1]))
    return xs[0] <= sx <= xs[1] and ys[0] <= sy <= ys[1]


def study_label(result: MapResult) -> str:
    """How the marker at the study's own values is labelled."""
    sc = result.request.scenario
    return "study" if sc == "baseline" else f"“{textwrap.shorten(sc, 24, placeholder='…')}”"


def _mark_study(ax, result: MapResult) -> None:
    """A marker and a label where the mapped scenario itself sits."""
    if not _inside(result):
        return
    ax.plot([result.study_x], [result.study_y], marker="*", markersize=10,
            markerfacecolor="white", markeredgecolor="black", markeredgewidth=1.0,
            linestyle="none", zorder=6)
    right = result.study_x <= (result.x[0] + result.x[-1]) / 2
    ax.annotate(study_label(result), (result.study_x, result.study_y),
                xytext=(7 if right else -7, 5), textcoords="offset points",
                ha="left" if right else "right", va="bottom", fontsize=7.5,
                fontweight="bold", path_effects=_halo(), zorder=7)


def _axes_labels(ax, result: MapResult, left: bool = True, width: int = 34) -> None:
    ax.set_xlabel(textwrap.fill(result.request.x.label, width))
    if left:
        ax.set_ylabel(textwrap.fill(result.request.y.label, width))


def shown_conditions(result: MapResult) -> tuple[int, ...]:
    """Conditions the when-attacked figure shows: the healthy animal, and the injured
    one too where it differs from the healthy one somewhere for a prey shown."""
    focus = list(result.focus)
    healthy, injured = result.when_codes[0, focus], result.when_codes[1, focus]
    return (0,) if np.array_equal(healthy, injured) else (0, 1)


def _threshold_levels(t: np.ndarray) -> np.ndarray:
    """At most three round percentages for threshold lines (near the quartiles of the
    thresholds on the map), so the lines stay few and their labels readable."""
    finite = 100 * t[np.isfinite(t)]
    if finite.size == 0 or finite.max() - finite.min() < 5:
        return np.array([])
    step = 10 if finite.max() - finite.min() >= 20 else 5
    picks = np.unique(step * np.round(np.quantile(finite, [0.25, 0.5, 0.75]) / step))
    return picks[(picks > finite.min()) & (picks < finite.max())]


def _threshold_ranges(codes: np.ndarray, t: np.ndarray) -> str:
    """The thresholds of a panel in short words, e.g. ``low: below 10–79 %``."""
    parts = []
    for code, side in ((WHEN_LOW, "below"), (WHEN_HIGH, "above")):
        values = 100 * t[codes == code]
        if values.size:
            lo, hi = values.min(), values.max()
            span = f"{lo:.0f} %" if hi - lo < 0.5 else f"{lo:.0f}–{hi:.0f} %"
            parts.append(f"{side} {span}")
    return "; ".join(parts)


def _outline(contours) -> None:
    """A white edge around contour lines, so they show on dark and light colours alike."""
    from matplotlib import patheffects

    contours.set_path_effects([patheffects.withStroke(linewidth=2.2, foreground="white")])


def when_figure(result: MapResult) -> object:
    """One small panel per prey that matters: when it is attacked, over the map.

    Colours are the categories of :func:`riskdiet.analysis.regimes.when_attacked`
    (never / at all reserves / only when reserves are low / only when high /
    other); lines mark where the low or high threshold crosses a round
    percentage; a star marks the study's own values.
    """
    from matplotlib.colors import BoundaryNorm, ListedColormap
    from matplotlib.figure import Figure
    from matplotlib.patches import Patch, Rectangle

    focus = list(result.focus)
    conditions = shown_conditions(result)
    ncols = min(3, len(focus))
    rows_per_cond = -(-len(focus) // ncols)
    nrows = rows_per_cond * len(conditions)
    panel_in = (WIDTH_IN - 0.9) / ncols
    with _style():
        panel_h = min(panel_in * 0.78, 2.8)
        band = 0.08 / panel_h  # a band about 0.08 in high above each panel, whatever its size
        fig = Figure(figsize=(WIDTH_IN, nrows * (panel_h + 0.75) + 0.9),
                     layout="constrained")
        axes = np.atleast_2d(fig.subplots(nrows, ncols, sharex=True, sharey=True,
                                          squeeze=False))
        xe, ye = _edges(result.x), _edges(result.y)
        cmap = ListedColormap([fill for fill, _ in REGIME_STYLE])
        norm = BoundaryNorm(np.arange(len(REGIME_STYLE) + 1) - 0.5, len(REGIME_STYLE))
        for ax in axes.ravel():
            ax.set_visible(False)
        for c_pos, k in enumerate(conditions):
            for p_pos, i in enumerate(focus):
                ax = axes[c_pos * rows_per_cond + p_pos // ncols, p_pos % ncols]
                ax.set_visible(True)
                codes = result.when_codes[k, i].astype(float)
                ax.pcolormesh(xe, ye, codes, cmap=cmap, norm=norm, shading="flat")
                _hatch(ax, result, codes)
                t = result.when_threshold[k, i]
                levels = _threshold_levels(t)
                if levels.size and len(result.x) > 1 and len(result.y) > 1:
                    masked = np.ma.masked_invalid(100 * t)
                    cs = ax.contour(result.x, result.y, masked, levels=levels, colors="black",
                                    linewidths=0.9)
                    _outline(cs)
                    labels = ax.clabel(cs, fmt="%.0f %%", **CONTOUR_LABEL)
                    for label in labels:
                        label.set_path_effects(_halo())
                _mark_study(ax, result)
                ax.add_patch(Rectangle((0, 1.015), 1, band, transform=ax.transAxes,
                                       clip_on=False, gid=f"prey:{result.prey[i]}",
                                       **prey_bar_style(i)))
                name = textwrap.shorten(result.prey[i], 28, placeholder="…")
                who = "healthy" if k == 0 else "injured"
                title = f"{name} — {who} animal" if len(conditions) > 1 else name
                ranges = _threshold_ranges(result.when_codes[k, i], t)
                ax.set_title(title + (f"\n{ranges}" if ranges else ""), pad=10, fontsize=8.5)
                if p_pos % ncols == 0:
                    ax.set_ylabel(textwrap.fill(result.request.y.label, 26))
        for r, c in np.ndindex(nrows, ncols):
            ax = axes[r, c]
            if ax.get_visible() and not (r + 1 < nrows and axes[r + 1, c].get_visible()):
                ax.set_xlabel(textwrap.fill(result.request.x.label, 26))
                ax.xaxis.set_tick_params(labelbottom=True)
        handles = [Patch(label=label, **_key_style(code)) for code, label in REGIME_KEY]
        fig.legend(handles=handles, loc="outside lower center", ncols=2, frameon=False,
                   title="When the prey is attacked (read from low to high reserves)",
                   handlelength=2.2, handleheight=1.1)
    return fig


def _key_style(code: int) -> dict:
    fill, hatch = REGIME_STYLE[code]
    return {"facecolor": fill, "hatch": hatch, "edgecolor": "#555555" if code == WHEN_NEVER
            else hatch_colour(fill), "linewidth": 0.6 if code == WHEN_NEVER else 0.0}


def _hatch(ax, result: MapResult, codes: np.ndarray) -> None:
    """Hatch each category's cells (greyscale print), cell by cell."""
    from matplotlib.collections import PatchCollection
    from matplotlib.patches import Rectangle

    xe, ye = _edges(result.x), _edges(result.y)
    for code, (fill, hatch) in enumerate(REGIME_STYLE):
        if not hatch:
            continue
        if not (codes == code).any():
            continue
        boxes = _runs_as_boxes(codes == code, xe, ye)
        ax.add_collection(PatchCollection(
            [Rectangle((x0, y0), x1 - x0, y1 - y0) for x0, y0, x1, y1 in boxes],
            facecolor="none", edgecolor=hatch_colour(fill), hatch=hatch, linewidth=0.0))


def _runs_as_boxes(mask: np.ndarray, xe: np.ndarray, ye: np.ndarray) -> list[tuple]:
    """Rectangles covering ``mask``: one per run of cells along each row (few patches)."""
    boxes = []
    for iy in range(mask.shape[0]):
        row = np.concatenate([[False], mask[iy], [False]])
        change = np.flatnonzero(row[1:] != row[:-1])
        for a, b in zip(change[::2], change[1::2], strict=True):
            boxes.append((xe[a], ye[iy], xe[b], ye[iy + 1]))
    return boxes


def _surface(result: MapResult, z: np.ndarray, title: str, colour_label: str,
             diverging: bool) -> object:
    """One continuous map: colours, labelled contours, the zero line, the study marker."""
    from matplotlib.colors import TwoSlopeNorm
    from matplotlib.figure import Figure

    with _style():
        fig = Figure(figsize=(WIDTH_IN, 3.4), layout="constrained")
        ax = fig.subplots()
        lo, hi = float(np.min(z)), float(np.max(z))
        if diverging:
            bound = max(abs(lo), abs(hi), 1e-12)
            mesh = ax.pcolormesh(_edges(result.x), _edges(result.y), z, cmap="PuOr_r",
                                 norm=TwoSlopeNorm(0.0, -bound, bound), shading="flat")
        else:
            mesh = ax.pcolormesh(_edges(result.x), _edges(result.y), z, cmap="cividis",
                                 shading="flat")
        grid = len(result.x) > 1 and len(result.y) > 1
        if grid and hi > lo:
            cs = ax.contour(result.x, result.y, z, levels=5, colors="#222222", linewidths=0.7,
                            linestyles="dashed")
            _outline(cs)
            for label in ax.clabel(cs, fmt="%.2g", **CONTOUR_LABEL):
                label.set_path_effects(_halo())
        if grid and diverging and lo < 0 < hi:
            zero = ax.contour(result.x, result.y, z, levels=[0.0], colors="black",
                              linewidths=1.6)
            _outline(zero)
            for label in ax.clabel(zero, fmt={0.0: "0"}, **CONTOUR_LABEL):
                label.set_path_effects(_halo())
        _mark_study(ax, result)
        fig.colorbar(mesh, ax=ax, label=textwrap.fill(colour_label, 40))
        _axes_labels(ax, result, width=50)
        ax.set_title(title, loc="left")
    return fig


def marginal_figure(result: MapResult) -> object:
    """Marginal value of hunting ability (selection gradient) with its zero line."""
    return _surface(result, result.marginal_hunting_ability,
                    "Value of better hunting (selection gradient)",
                    f"change in the {what_fitness(result)} per unit of hunting ability", True)


def gradient_figure(result: MapResult) -> object:
    """Marginal value of the further input asked for (``--gradient``), with its zero line."""
    words, per = gradient_words(result)
    return _surface(result, result.marginal_extra, f"Value of a higher {words}",
                    f"change in the {what_fitness(result)} {per}", True)


def default_group(result: MapResult) -> str:
    """The group a kills map shows by default: the first non-wild group, else the first."""
    return first_unwanted_group(list(result.groups))


def first_unwanted_group(groups: list[str]) -> str:
    """The first group that is not wild (livestock, protected...), else the first group."""
    return next((g for g in groups if g.lower() not in WILD_GROUPS), groups[0])


def gradient_key(gradient: tuple[str | None, str]) -> str:
    """File-name part of the gradient figure, e.g. ``wild-boar-energy-mj``."""
    prey, field = gradient
    return slug(f"{prey} {field}" if prey else field)


def figure_keys(group: str, first: int = 1, gradient: tuple[str | None, str] | None = None
                ) -> list[str]:
    """File stems of the map figures: regimes (when each prey is attacked), hunting
    ability, kills of ``group`` and, when asked for, the further gradient."""
    keys = [f"{first:02d}-map-regimes", f"{first + 1:02d}-map-hunting-ability",
            f"{first + 2:02d}-map-kills-{slug(group)}"]
    if gradient is not None:
        keys.append(f"{first + 3:02d}-map-gradient-{gradient_key(gradient)}")
    return keys


def kills_figure(result: MapResult, group: str) -> object:
    """Kills of one prey group per predator per year (or season) over the map."""
    per = "year" if result.currency == "breeding" else "season"
    return _surface(result, result.kills_per_year[group], f"Predicted {group} kills",
                    f"{group} kills per predator per {per}", False)


def _outside_note(result: MapResult) -> str:
    return "" if _inside(result) else " The study's own values lie outside this map."


def map_figures(result: MapResult, group: str | None = None, first: int = 1
                ) -> list[BriefFigure]:
    """The map figures with captions, numbered from ``first``."""
    group = group or default_group(result)
    sc = result.request.scenario
    keys = figure_keys(group, first, result.request.gradient)
    z = result.marginal_hunting_ability
    crosses_zero = bool((z < 0).any() and (z > 0).any())
    star = (f" The star marks the {'study' if sc == 'baseline' else 'scenario'}'s own "
            "values." if _inside(result) else _outside_note(result))
    conds = shown_conditions(result)
    who = ("by a healthy animal (top) and an injured one (bottom)" if len(conds) == 2
           else "by a healthy animal (an injured one does the same)")
    names = [result.prey[i] for i in result.focus]
    out = [
        BriefFigure(keys[0], f"Scenario “{sc}”: when {_list(names)} "
                    + ("is" if len(names) == 1 else "are") + f" attacked {who}, across the "
                    "map. Lines give the reserves (% of capacity) below or above which the "
                    "prey is taken." + star,
                    when_figure(result)),
        BriefFigure(keys[1], f"Scenario “{sc}”: value of better hunting (policy held fixed)"
                    + ("; the solid black line is where better hunting stops paying (zero)."
                       if crosses_zero else "; dashed lines join equal values.") + star,
                    marginal_figure(result)),
        BriefFigure(keys[2], f"Scenario “{sc}”: predicted {group} kills per predator." + star,
                    kills_figure(result, group)),
    ]
    if result.request.gradient is not None:
        words, _ = gradient_words(result)
        out.append(BriefFigure(keys[3], f"Scenario “{sc}”: value of a higher {words} (policy "
                               "held fixed). " + gradient_sentence(result) + star,
                               gradient_figure(result)))
    return out


def _list(names: list[str]) -> str:
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]

