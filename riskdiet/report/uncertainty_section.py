"""The brief's uncertainty: page-1 intervals and chances, the *Uncertainty and sensitivity*
section and its sensitivity bar chart (MODEL.md section 9).

Drawn only when the study has ranges (the brief command then runs the
uncertainty analysis with the study's ``draws`` and ``seed`` settings).
"""

from __future__ import annotations

from reportlab.platypus import Paragraph

from riskdiet.analysis.glossary import input_words
from riskdiet.analysis.uncertainty import COHORT_GROUP, FITNESS, UncertaintyResult
from riskdiet.analysis.wording import percent, probability, value
from riskdiet.core.stats.probability_words import describe_probability
from riskdiet.report.figure_style import (
    SCENARIO_GREYS,
    WIDTH_IN,
    BriefFigure,
    _style,
    hatch_colour,
    short_label,
)
from riskdiet.report.layout import Column, esc
from riskdiet.report.sections import NUM, Builder
from riskdiet.report.uncertainty_text import (
    elasticity,
    index_text,
    interval_text,
    measure_next_sentence,
    robustness_sentence,
)

UNCERTAINTY = "Uncertainty and sensitivity"
FIGURE_KEY = "sensitivity"


def sensitivity_figure(u: UncertaintyResult):
    """Horizontal bars of the first-order and total Sobol indices on the goal outcome,
    with the total index's 95 % bootstrap interval; None without indices."""
    if u.sobol is None:
        return None
    goal = u.sobol.outcome(u.goal_outcome_key)
    if goal.constant:
        return None
    from matplotlib.figure import Figure

    ranked = sorted(goal.indices, key=lambda ix: ix.total)
    labels = [short_label(input_words(ix.input), 34) for ix in ranked]
    height = 0.9 + 0.32 * len(ranked)
    with _style():
        fig = Figure(figsize=(WIDTH_IN, height), layout="constrained")
        ax = fig.subplots()
        y = range(len(ranked))
        total = [max(ix.total, 0.0) for ix in ranked]
        first = [max(ix.first, 0.0) for ix in ranked]
        err = [[t - max(ix.total_low, 0.0) for t, ix in zip(total, ranked, strict=True)],
               [max(ix.total_high - t, 0.0) for t, ix in zip(total, ranked, strict=True)]]
        ax.barh([v + 0.2 for v in y], total, height=0.38, color=SCENARIO_GREYS[1],
                label="total index (with interactions)", xerr=err, capsize=2,
                error_kw={"linewidth": 0.8})
        ax.barh([v - 0.2 for v in y], first, height=0.38, color=SCENARIO_GREYS[2], hatch="////",
                edgecolor=hatch_colour(SCENARIO_GREYS[2]), label="first-order index (alone)")
        ax.set_yticks(list(y), labels)
        ax.set_xlabel("share of the variance of " + _goal_label(u))
        ax.set_xlim(0, max(1.0, max(ix.total_high for ix in ranked)))
        ax.legend(loc="lower right", frameon=False)
    return fig


def _goal_label(u: UncertaintyResult) -> str:
    if u.goal.outcome == FITNESS:
        return "the chance of reaching breeding condition"
    return f"{u.goal.name} kills by the released animals"


def uncertainty_figures(u: UncertaintyResult, first: int) -> list[BriefFigure]:
    fig = sensitivity_figure(u)
    if fig is None:
        return []
    return [BriefFigure(f"{first:02d}-{FIGURE_KEY}",
                        "Sobol indices of " + _goal_label(u) + " on the baseline: the share of "
                        "its variance over the draws that each uncertain input explains alone "
                        "(first-order) and with its interactions (total; line: 95 % bootstrap "
                        "interval). Longest bar: the input to measure next.", fig)]


def page_one(b: Builder, u: UncertaintyResult) -> None:
    """Page 1: the cohort numbers with intervals, and the chance each scenario beats baseline."""
    b.sub("How sure are these numbers?")
    b.para(f"Over {u.draws} draws of the {len(u.inputs)} uncertain inputs (section "
           f"{b.number(UNCERTAINTY)}): median and, in brackets, the 5–95 % interval of the "
           "released animals' kills within the horizon. The goal is "
           f"{esc(u.goal.words)}.")
    groups = [i.name for i in u.scenarios[0].intervals if i.outcome == COHORT_GROUP]
    rows = [["", *(esc(s.name) for s in u.scenarios)]]
    rows += [[f"{esc(g)} prey killed in the horizon"]
             + [interval_text(s, COHORT_GROUP, g) for s in u.scenarios] for g in groups]
    rows.append(["chance of reaching breeding condition" if u.study.predator.currency
                 == "breeding" else "chance of ending the season in condition"]
                + [interval_text(s, FITNESS, None) for s in u.scenarios])
    rows.append(["does better than baseline on the goal"] + ["—"] + [
        describe_probability(s.probability_better) for s in u.scenarios[1:]])
    b.tables(rows, [Column(max_share=0.3)] + [NUM] * len(u.scenarios))


def section(b: Builder, u: UncertaintyResult) -> None:
    """The *Uncertainty and sensitivity* section."""
    b.heading(UNCERTAINTY)
    b.para(
        f"Every uncertain input was drawn {u.draws} times from its range by Latin hypercube "
        f"sampling (seed {u.seed}; the same seed gives the same numbers) and every scenario was "
        "solved on the same draws, so each scenario is compared with the baseline draw by "
        "draw. Ranges: " + esc("; ".join(_range_text(x) for x in u.study.uncertainty)) + ". "
        "Probabilities are given in the words of the IPCC's uncertainty guidance (Mastrandrea "
        "et al. 2010) with their number. The intervals say what the ranges entered imply; they "
        "are not forecasts."
        + (" The draws use the study's own ranges, not the intervals fitted to the field "
           "records (section on the fit); to propagate those, enter them as ranges."
           if u.study.observations and u.study.settings.fit else ""))
    b.sub("Intervals")
    groups = [i.name for i in u.scenarios[0].intervals if i.outcome == COHORT_GROUP]
    rows = [["median (5–95 %)", *(esc(s.name) for s in u.scenarios)]]
    rows.append(["fitness at start"] + [interval_text(s, FITNESS, None) for s in u.scenarios])
    for g in groups:
        rows.append([f"{esc(g)}: released animals' kills in the horizon"]
                    + [interval_text(s, COHORT_GROUP, g) for s in u.scenarios])
    for g in groups:
        rows.append([f"{esc(g)}: kills per predator per year, long run"]
                    + [interval_text(s, "kills_per_predator_per_year_by_group", g)
                       for s in u.scenarios])
    for p in u.scenarios[0].probability_in_diet:
        rows.append([f"chance {esc(p)} is in a healthy animal's diet at the start"]
                    + [probability(s.probability_in_diet[p]) for s in u.scenarios])
    rows.append(["share of draws where the classic diet differs"]
                + [percent(s.classic_disagreement_share) for s in u.scenarios])
    b.tables(rows, [Column(max_share=0.34)] + [NUM] * len(u.scenarios))
    b.sub("How robust each finding is")
    b.bullets([esc(robustness_sentence(u, s)) for s in u.scenarios])
    for s in u.scenarios[1:]:
        b.story.append(Paragraph(
            esc(f"“{s.name}” does better than the baseline on the goal: "
                f"{describe_probability(s.probability_better)}; the same: "
                f"p = {probability(s.probability_equal)}; worse: "
                f"{describe_probability(s.probability_worse)}."), b.s.bullet, bulletText="•"))
    b.sub("What to measure next")
    b.para(esc(measure_next_sentence(u)))
    key = next((k for k in b.figure_order if k.endswith(FIGURE_KEY)), None)
    if key:
        b.figure(key)
    if u.sobol is not None:
        goal = u.sobol.outcome(u.goal_outcome_key)
        if not goal.constant:
            rows = [["input", "first-order index", "total index"]]
            rows += [[esc(input_words(ix.input)), index_text(ix.first, ix.first_low, ix.first_high),
                      index_text(ix.total, ix.total_low, ix.total_high)]
                     for ix in sorted(goal.indices, key=lambda ix: -ix.total)]
            b.tables(rows, [Column(max_share=0.4), NUM, NUM], note=(
                f"Sobol indices (Saltelli et al. 2010) on the baseline, N = {u.sobol.n} "
                f"({u.sobol.evaluations} solves), with 95 % bootstrap intervals; “≈ 0” where "
                "the interval reaches 0."))
    flagged = u.influential_without_range()
    if flagged:
        b.para(esc("Inputs without a range that matter at the baseline (elasticity of the goal "
                   "outcome, a 1 % change in the input moves it by about e %): "
                   + ", ".join(f"{input_words(e.input)} ({elasticity(e.value)})" for e in flagged)
                   + ". Their uncertainty is not in the intervals above; give them ranges."))
    else:
        b.para("No input without a range has an elasticity of 0.5 or more on the goal "
               f"outcome at the baseline ({len(u.elasticities)} inputs screened).")


def _range_text(x) -> str:
    where = "" if x.scenario is None else f" in {x.scenario}"
    mode = f", mode {value(x.mode)}" if x.mode is not None else ""
    return f"{input_words(x.name)}{where} {value(x.low)}–{value(x.high)} ({x.shape}{mode})"
