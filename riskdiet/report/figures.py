"""Figures of the brief: decisions by reserves, predicted kills, the season outlook.

Every figure is a :class:`matplotlib.figure.Figure` built with the
object-oriented API, so nothing touches pyplot's global state or the user's
interactive backend; raster output goes through Agg. Figures only draw numbers
already in the results (:class:`riskdiet.analysis.StudyResult`); nothing is
recomputed here.

Colours come from :data:`PALETTE`, eight colours chosen for this project so
that every pair stays apart under simulated protanopia, deuteranopia and
tritanopia, and every colour carries its own hatching (:data:`HATCHES`), so a
figure still reads when printed in greyscale. Prey keep the same colour and
hatch in every figure of a brief; lines differ by dash pattern and marker as
well as colour.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from riskdiet.analysis.results import CONDITIONS, ScenarioResult, StudyResult
from riskdiet.analysis.wording import amount, percent, value
from riskdiet.report.figure_style import (
    CONDITION_LINES,
    DPI_EXPORT,
    MAX_BARS,
    WIDTH_IN,
    BriefFigure,
    _style,
    png_bytes,
    prey_bar_style,
    scenario_bar_style,
    scenario_line_style,
    short_label,
    slug,
    svg_bytes,
)
from riskdiet.report.fonts import FALLBACK_FAMILIES, needs_fallback
from riskdiet.report.map_figures import map_figures


def _what(result: ScenarioResult) -> str:
    if result.currency == "breeding":
        return "chance of reaching breeding condition"
    return "chance of ending the season alive and in condition"


def decision_figure(result: ScenarioResult) -> object:
    """Which prey are worth attacking at each level of reserves, and the fitness.

    The upper panel has one band per condition (healthy, injured) with one
    row per prey type; a bar covers the reserves at which the optimal policy
    attacks that prey when met (``solution.priority >= 0``). The lower panel
    shows the fitness V(reserves, condition) of both conditions.

    Parameters
    ----------
    result : ScenarioResult
        One solved scenario (the policy of day 0 in the season currency).

    Returns
    -------
    matplotlib.figure.Figure

    References
    ----------
    .. [1] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive
       Behaviour: An Approach Based on State. Cambridge University Press.
    """
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    names = result.prey_names
    n_prey = len(names)
    grid = result.grid
    n = grid.n
    capacity = result.predator.reserve_capacity_mj
    row_in = 0.13 if n_prey <= 8 else max(0.09, 1.05 / n_prey)
    bands_in = 2 * (n_prey + 0.6) * row_in + 0.55
    legend_cols = 4 if n_prey + 2 <= 8 else 3
    legend_rows = -(-(n_prey + 2) // legend_cols)
    height = bands_in + 1.35 + 0.2 * legend_rows + 0.45
    with _style():
        fig = Figure(figsize=(WIDTH_IN, height), layout="constrained")
        axes = fig.subplots(2, 1, sharex=True,
                            gridspec_kw={"height_ratios": [bands_in, 1.35]})
        bands, curve = axes
        half = 0.5 / n
        ticks, labels = [], []
        ranges = result.attack_ranges()
        for k, cond in enumerate(CONDITIONS):
            offset = k * (n_prey + 1)
            for i, name in enumerate(names):
                y = offset + i
                ticks.append(y)
                labels.append(short_label(name))
                spans = [(r.low_fraction - half, r.high_fraction - r.low_fraction + 2 * half)
                         for r in ranges if r.prey == name and r.condition == cond]
                if spans:
                    bands.broken_barh(spans, (y - 0.38, 0.76), gid=f"{cond}:{name}",
                                      **prey_bar_style(i))
            centre = offset + (n_prey - 1) / 2
            bands.text(1.012, centre, cond, transform=bands.get_yaxis_transform(),
                       rotation=90, va="center", ha="left", fontsize=8, fontweight="bold")
            if k == 0:
                bands.axhline(n_prey, color="#999999", linewidth=0.6)
        bands.set_yticks(ticks, labels)
        bands.set_ylim(2 * n_prey + 0.5, -0.7)
        bands.tick_params(axis="y", length=0)
        extra = []
        if result.currency == "breeding":
            edge = grid.top / n - half
            for ax in axes:
                ax.axvspan(edge, 1.0, facecolor="#e6e6e6", edgecolor="#8c8c8c", hatch="..",
                           linewidth=0.0, zorder=0)
            extra.append(Patch(facecolor="#e6e6e6", edgecolor="#8c8c8c", hatch="..",
                               linewidth=0.0, label="breeding condition reached"))
        start = grid.start_level / n
        for ax in axes:
            ax.axvline(start, color="#000000", linestyle=(0, (4, 2)), linewidth=0.9)
        extra.append(Line2D([], [], color="#000000", linestyle=(0, (4, 2)), linewidth=0.9,
                            label=f"reserves at release ({percent(start)})"))
        day = ", policy of day 0" if result.currency == "season" else ""
        bands.set_title(f"Scenario “{short_label(result.name, 60)}”{day}: prey worth attacking "
                        "when met", loc="left")

        reserves = np.arange(n + 1) / n
        for k, cond in enumerate(CONDITIONS):
            values = np.asarray(result.fitness[cond], dtype=float)
            curve.plot(reserves, values, **CONDITION_LINES[k],
                       linewidth=(1.4, 1.6)[k], label=cond,
                       gid=f"fitness:{cond}")
        curve.set_ylim(-0.02, 1.02)
        curve.set_ylabel("chance")
        curve.set_title(f"{_what(result).capitalize()}, from each level of reserves", loc="left")
        curve.set_xlim(0, 1)
        curve.xaxis.set_major_formatter(_percent_formatter())
        curve.set_xlabel(f"reserves (share of capacity; 100 % = {value(capacity)} MJ)")
        curve.legend(loc="upper left", title="the animal is", frameon=False)
        curve.grid(axis="y", color="#dddddd", linewidth=0.5)
        top = bands.secondary_xaxis("top", functions=(lambda f: f * capacity,
                                                      lambda mj: mj / capacity))
        top.set_xlabel("reserves [MJ]")
        handles = [Patch(label=short_label(name, 30), **prey_bar_style(i))
                   for i, name in enumerate(names)] + extra
        fig.legend(handles=handles, loc="outside lower center", ncols=legend_cols,
                   frameon=False, handlelength=2.2, handleheight=1.1)
        _freeze(fig)
    return fig


def _freeze(fig):
    """Run the constrained layout once and keep it, so every rendering is identical.

    Constrained layout refines positions on each draw; a frozen layout gives the
    same bytes however often, and at whatever resolution, a figure is saved.
    Texts with characters DejaVu Sans lacks (a prey name in another script) get
    matplotlib's font fallback to the same fonts as the PDF text.
    """
    from matplotlib.text import Text

    for text in fig.findobj(Text):
        if needs_fallback(text.get_text()):
            text.set_fontfamily(["DejaVu Sans", *FALLBACK_FAMILIES])
    fig.draw_without_rendering()
    fig.set_layout_engine(None)
    return fig


def _percent_formatter():
    from matplotlib.ticker import FuncFormatter

    return FuncFormatter(lambda x, _pos: f"{100 * x:.0f} %")


def _kills_series(result: StudyResult, currency: str) -> tuple[list[str], list[str],
                                                               np.ndarray, bool] | None:
    """Scenario names, category labels and values (scenarios x categories)."""
    chosen = [s for s in result.scenarios if s.currency == currency
              and (s.kills if currency == "breeding" else s.season_kills) is not None]
    if not chosen:
        return None
    prey_names = list(dict.fromkeys(n for s in chosen for n in s.prey_names))
    groups = list(dict.fromkeys(p.group for s in chosen for p in s.prey))
    by_group = len(prey_names) * len(chosen) > MAX_BARS
    labels = groups if by_group else prey_names
    values = np.zeros((len(chosen), len(labels)))
    for r, s in enumerate(chosen):
        if currency == "breeding":
            table = (s.kills.kills_per_predator_per_year_by_group if by_group
                     else s.kills.kills_per_predator_per_year)
        else:
            table = (s.season_kills.expected_kills_by_group if by_group
                     else s.season_kills.expected_kills)
        values[r] = [table.get(c, 0.0) for c in labels]
    return [s.name for s in chosen], labels, values, by_group


def kills_figure(result: StudyResult, currency: str = "breeding") -> object | None:
    """Grouped horizontal bars: predicted kills per predator, scenarios side by side.

    Parameters
    ----------
    result : StudyResult
        Solved study.
    currency : str
        ``breeding`` (long-run kills per year) or ``season`` (expected kills
        over one season); scenarios in the other currency are left out.

    Returns
    -------
    matplotlib.figure.Figure or None
        None when no scenario uses that currency. Bars are per prey type, or
        per prey group when there would be more than :data:`MAX_BARS` bars.
    """
    from matplotlib.figure import Figure

    series = _kills_series(result, currency)
    if series is None:
        return None
    scenarios, labels, values, by_group = series
    n_s, n_c = values.shape
    bar_in = 0.16 if n_s * n_c <= 24 else max(0.07, 6.0 / (n_s * n_c))
    height = min(8.6, n_c * (n_s + 0.8) * bar_in + 0.9 + 0.2 * -(-n_s // 4))
    unit = "per predator per year" if currency == "breeding" else "per predator per season"
    with _style():
        fig = Figure(figsize=(WIDTH_IN, height), layout="constrained")
        ax = fig.subplots()
        thick = 0.8 / n_s
        centres = np.arange(n_c)
        top = float(values.max()) if values.size else 0.0
        for r, name in enumerate(scenarios):
            y = centres - 0.4 + thick * (r + 0.5)
            ax.barh(y, values[r], height=thick * 0.92, label=short_label(name, 34),
                    gid=f"kills:{name}", **scenario_bar_style(r))
            if n_s * n_c <= 40:
                for yy, v in zip(y, values[r], strict=True):
                    ax.text(v + 0.01 * max(top, 1e-9), yy, _count(v), va="center",
                            ha="left", fontsize=6.5)
        ax.set_yticks(centres, [short_label(c) for c in labels])
        ax.set_ylim(n_c - 0.5, -0.5)
        ax.set_xlim(0, max(top, 1e-9) * 1.12)
        ax.tick_params(axis="y", length=0)
        ax.grid(axis="x", color="#dddddd", linewidth=0.5)
        ax.set_axisbelow(True)
        ax.set_xlabel(f"predicted kills {unit}")
        what = "prey group" if by_group else "prey type"
        ax.set_title(f"Predicted kills by {what}, scenarios compared", loc="left")
        fig.legend(loc="outside lower center", ncols=min(n_s, 4), frameon=False,
                   handleheight=1.1, handlelength=2.2)
        _freeze(fig)
    return fig


def _count(v: float) -> str:
    return amount(v)


def season_figure(result: StudyResult) -> object | None:
    """Survival and mean reserves over the season, one line per season scenario.

    Returns
    -------
    matplotlib.figure.Figure or None
        None when no scenario uses the season currency.
    """
    from matplotlib.figure import Figure

    chosen = [s for s in result.scenarios if s.season_kills is not None]
    if not chosen:
        return None
    height = 3.2 + 0.2 * -(-len(chosen) // 4)
    with _style():
        fig = Figure(figsize=(WIDTH_IN, height), layout="constrained")
        left, right = fig.subplots(1, 2)
        thresholds: list[float] = []
        for r, s in enumerate(chosen):
            z = s.season_kills
            days = np.arange(len(z.survival_by_day))
            every = max(1, len(days) // 8)
            style = {**scenario_line_style(r), "markevery": (r % every, every),
                     "markersize": 3.5, "linewidth": 1.3}
            left.plot(days, z.survival_by_day, label=short_label(s.name, 34),
                      gid=f"survival:{s.name}", **style)
            right.plot(days, z.mean_reserves_fraction_by_day, gid=f"reserves:{s.name}", **style)
            threshold = s.predator.season_reserve_threshold
            if threshold > 0 and threshold not in thresholds:
                thresholds.append(threshold)
                right.axhline(threshold, color="#555555", linewidth=0.8, linestyle=":",
                              label="reserves needed at the end" if len(thresholds) == 1
                              else None)
        left.set_ylim(0, 1.02)
        right.set_ylim(0, 1.02)
        right.yaxis.set_major_formatter(_percent_formatter())
        left.set_xlabel("day of the season")
        right.set_xlabel("day of the season")
        left.set_title("Chance of being alive", loc="left")
        left.set_ylabel("chance")
        right.set_ylabel("share of capacity")
        right.set_title("Mean reserves of the living", loc="left")
        for ax in (left, right):
            ax.grid(color="#dddddd", linewidth=0.5)
        if thresholds:
            right.legend(loc="lower right", frameon=False, fontsize=6.5)
        fig.legend(handles=left.get_lines(), loc="outside lower center",
                   ncols=min(len(chosen), 4), frameon=False)
        _freeze(fig)
    return fig


def decision_figure_keys(study) -> list[str]:
    """File stems of the decision figures, one per scenario (known before solving)."""
    return [f"{i:02d}-decisions-{slug(s.name)}" for i, s in enumerate(study.scenarios, start=1)]


def brief_figures(result: StudyResult) -> list[BriefFigure]:
    """Every figure of the brief, in the order the brief shows them."""
    out = []
    keys = decision_figure_keys(result.study)
    for key, s in zip(keys, result.scenarios, strict=True):
        day = ", policy of day 0 of the season" if s.currency == "season" else ""
        out.append(BriefFigure(
            key,
            f"Scenario “{s.name}”{day}. Top: the reserves at which each prey type is worth "
            "attacking when met, for a healthy and an injured animal. Bottom: the "
            f"{_what(s)} from each level of reserves.",
            decision_figure(s)))
    number = len(out)
    for currency, words in (("breeding", "per predator per year, in the long run"),
                            ("season", "per predator over one season")):
        fig = kills_figure(result, currency)
        if fig is not None:
            number += 1
            out.append(BriefFigure(f"{number:02d}-kills-{currency}",
                                   f"Predicted kills {words}, scenarios side by side.", fig))
    fig = season_figure(result)
    if fig is not None:
        number += 1
        out.append(BriefFigure(f"{number:02d}-season-outlook",
                               "Season currency: chance of being alive and mean reserves "
                               "of the living, day by day, for a newly arrived animal.", fig))
    if result.map is not None:
        out += map_figures(result.map, first=len(out) + 1)
    return out


def write_figures(figures: list[BriefFigure], folder: Path, force: bool = False,
                  outputs=None) -> list[Path]:
    """Write every figure as PNG (:data:`DPI_EXPORT` dpi) and SVG into a folder.

    Refuses (before writing anything) when a file exists and ``force`` is
    False; the files are written together or not at all (staged in
    ``outputs``, an :class:`riskdiet.io.atomic.OutputSet`, when given).

    Raises
    ------
    OutputExistsError
        A file exists and ``force`` is False.
    """
    from riskdiet.io.atomic import OutputSet

    folder = Path(folder)
    targets = []
    for f in figures:
        for suffix, render in ((".png", lambda fig: png_bytes(fig, DPI_EXPORT)),
                               (".svg", svg_bytes)):
            targets.append((folder / f"{f.key}{suffix}", render, f.figure))
    own = outputs is None
    outputs = outputs or OutputSet(force)
    try:
        for path, _, _ in targets:
            if path not in outputs.planned:
                outputs.plan(path)
        for path, render, fig in targets:
            data = render(fig)
            outputs.stage(path, lambda tmp, data=data: tmp.write_bytes(data))
        return outputs.commit() if own else [path for path, _, _ in targets]
    finally:
        if own:
            outputs.discard()
