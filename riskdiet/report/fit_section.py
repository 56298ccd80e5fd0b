"""The brief's *Fit to field records* section and its page-1 sentence.

Drawn when the study has observations and a ``fit`` setting: the observed
against the predicted shares of the records (a figure), the fitted values with
their 95 % profile-likelihood intervals (a table), the fit statistics and the
verdict in words (MODEL.md section 10). Nothing is recomputed here.
"""

from __future__ import annotations

import numpy as np

from riskdiet.analysis.fit import FitResult
from riskdiet.analysis.glossary import input_words
from riskdiet.analysis.wording import value as number_value
from riskdiet.model import Study
from riskdiet.report.figure_style import (
    WIDTH_IN,
    BriefFigure,
    _style,
    scenario_bar_style,
    short_label,
)
from riskdiet.report.fit_text import statistics_words
from riskdiet.report.layout import Column, esc
from riskdiet.report.sections import NUM, Builder

FIT = "Fit to field records"

RELATIVE_MATCH = 1e-3
"""A study value within this relative distance of the estimate counts as the fitted value."""


def fit_figure(fit: FitResult) -> object:
    """Observed against predicted shares of the records, all compositions pooled."""
    from matplotlib.figure import Figure

    names = list(fit.observed)
    x = np.arange(len(names))
    with _style():
        fig = Figure(figsize=(WIDTH_IN, 2.6), layout="constrained")
        ax = fig.subplots()
        obs = [100 * fit.observed[n] for n in names]
        pred = [100 * fit.predicted[n] for n in names]
        ax.bar(x - 0.2, obs, 0.38, label="observed", **scenario_bar_style(0))
        ax.bar(x + 0.2, pred, 0.38, label="predicted at the fitted values",
               **scenario_bar_style(2))
        ax.set_xticks(x, [short_label(n, 18) for n in names])
        ax.set_ylabel("share of records [%]")
        ax.legend(frameon=False, fontsize=8)
    return fig


def fit_brief_figure(fit: FitResult, number: int) -> BriefFigure:
    return BriefFigure(f"{number:02d}-fit-to-records",
                       "Share of the field records by prey: observed, and predicted by the "
                       "state-dependent model at the fitted values (all compositions pooled; "
                       "predicted shares include each prey's detection).", fit_figure(fit))


def fit_page_one(study: Study, fit: FitResult) -> str:
    """Page 1: do the predictions rest on fitted or assumed values?"""
    fitted, inside, outside = [], [], []
    for f in fit.fitted:
        value = _study_value(study, f.name)
        if value is None or not f.identified:
            continue
        if abs(value - f.value) <= RELATIVE_MATCH * max(abs(f.value), 1e-12):
            fitted.append(input_words(f.name))
        elif f.interval.contains(value):
            inside.append(f"{input_words(f.name)} ({number_value(value)})")
        else:
            outside.append(f"{input_words(f.name)} ({number_value(value)}; fitted "
                           f"{number_value(f.value, 3)})")
    lost = [input_words(f.name) for f in fit.fitted if not f.identified]
    parts = []
    if fitted and not inside and not outside:
        parts.append("Calibration: the predictions rest on values fitted to the field records ("
                     + ", ".join(fitted) + ").")
    else:
        text = "Calibration: the predictions rest on assumed values, not fitted ones"
        if inside:
            text += "; the field records support " + ", ".join(inside) + " (inside the 95 % "
            text += "intervals)"
        if outside:
            text += "; the field records contradict " + ", ".join(outside)
        parts.append(text + ". riskdiet fit --out writes the study with the fitted values "
                     "in place.")
    if lost:
        parts.append("The records cannot identify " + ", ".join(lost) + ".")
    return " ".join(parts)


def _study_value(study: Study, name: str) -> float | None:
    if ":" not in name:
        return getattr(study.predator, name)
    prey, field = name.rsplit(":", 1)
    for p in study.prey:
        if p.name == prey:
            value = getattr(p, field)
            if value is None and field == "encounters_per_day":
                return p.encounters(study.predator)
            return value
    return None


def fit_section(b: Builder, fit: FitResult, figure_key: str | None) -> None:
    """Heading, what was fitted, the figure, the fitted values, the statistics in words."""
    b.heading(FIT)
    kinds = sorted({c.kind for c in fit.data.compositions})
    b.para(f"The model was fitted to {fit.data.observations} field records "
           f"({esc(', '.join(kinds) or 'kill rates')}; {len(fit.data.compositions)} "
           f"composition(s), {len(fit.data.rates)} rate row(s)) by maximum likelihood: a coarse "
           "grid of complete solves, then a bounded local search. Each interval is the set of "
           "values whose log-likelihood lies within 1.92 of the best (95 % profile likelihood, "
           "Venzon &amp; Moolgavkar 1988); where the predator's decisions switch it can fall "
           "into pieces, all listed.")
    for h in fit.homogeneity:
        b.para("Before fitting: " + esc(h.words))
    if figure_key:
        b.figure(figure_key)
    rows = [["input", "fitted value", "95 % interval", "search range", "note"]]
    for f in fit.fitted:
        pieces = " ∪ ".join(f"{number_value(p.low, 3)}–{number_value(p.high, 3)}"
                            for p in f.interval.pieces)
        note = ("not identified: flat likelihood" if not f.identified else
                "reaches the search range's end" if f.interval.at_bound else "")
        rows.append([esc(input_words(f.name)),
                     "—" if not f.identified else number_value(f.value, 3), pieces,
                     f"{number_value(f.search[0], 3)}–{number_value(f.search[1], 3)}",
                     esc(note)])
    b.tables(rows, [Column(max_share=0.3), NUM, NUM, NUM, Column(max_share=0.3)],
             note="Search ranges come from the study's Uncertainty sheet where it gives one, "
                  "else the defaults of MODEL.md section 10.")
    b.bullets([esc(line) for line in statistics_words(fit)])
    b.para("<b>Verdict.</b> " + esc(fit.verdict))
    b.para("Venzon, D. J. &amp; Moolgavkar, S. H. (1988) A method for computing "
           "profile-likelihood-based confidence intervals. Applied Statistics 37: 87–94. "
           "Williams, D. A. (1976) Improved likelihood ratio tests for complete contingency "
           "tables. Biometrika 63: 33–37. Burnham, K. P. &amp; Anderson, D. R. (2002) Model "
           "Selection and Multimodel Inference, 2nd ed. Springer.", b.s.small)
