"""Uncertainty results in words: intervals, probability statements, what to measure next.

Shared by ``riskdiet uncertainty`` and the brief. Probabilities are always
given in words with their number (IPCC AR5 scale, Mastrandrea et al. 2010;
MODEL.md section 9).
"""

from __future__ import annotations

from riskdiet.analysis.glossary import input_words
from riskdiet.analysis.uncertainty import (
    COHORT_GROUP,
    FITNESS,
    KILLS_GROUP,
    ScenarioUncertainty,
    UncertaintyResult,
)
from riskdiet.analysis.wording import number, percent, probability
from riskdiet.core.stats.probability_words import describe_probability, probability_word


def fmt(x: float) -> str:
    """A number for people (:func:`riskdiet.analysis.wording.number`): three significant
    figures, thousands separated, ``< 0.001`` below."""
    return number(x)


def elasticity(x: float) -> str:
    """An elasticity with its sign (a direction, not a change): ``-1.3``, ``+0.79``."""
    text = number(x, 2, floor=0.01)
    return text if x <= 0 or text.startswith("<") else "+" + text


def interval_text(s: ScenarioUncertainty, outcome: str, name: str | None) -> str:
    i = s.interval(outcome, name)
    return f"{fmt(i.median)} ({fmt(i.p05)} to {fmt(i.p95)})"


def index_text(value: float, low: float, high: float) -> str:
    """An index with its interval, "≈ 0 (up to …)" when the interval reaches 0, and
    "< 0.001" when even its upper end is below that."""
    if high < 0.0005:
        return "< 0.001"
    if low <= 0:
        return f"≈ 0 (up to {fmt(high)})"
    return f"{fmt(value)} ({fmt(low)} to {fmt(high)})"


def comparison_sentences(u: UncertaintyResult) -> list[str]:
    """One sentence per scenario on how likely it does better than baseline on the goal."""
    out = []
    for s in u.scenarios[1:]:
        out.append(f"Scenario “{s.name}” gives {u.goal.words} than the baseline: "
                   f"{describe_probability(s.probability_better)}; the same: "
                   f"p = {probability(s.probability_equal)}; worse: "
                   f"{describe_probability(s.probability_worse)}.")
    return out


def measure_next_sentence(u: UncertaintyResult) -> str:
    """The ranking by total index on the goal as a plain sentence."""
    if u.sobol is None:
        return "Sobol indices were not computed, so there is no ranking of what to measure next."
    goal = u.sobol.outcome(u.goal_outcome_key)
    subject = (f"the {u.goal.name} estimate" if u.goal.name else
               "the chance of reaching breeding condition")
    if goal.constant:
        return (f"{subject[0].upper() + subject[1:]} does not vary over the ranges given, so no "
                "input needs measuring for it.")
    ranked = sorted(goal.indices, key=lambda ix: -ix.total)
    top = ranked[0]
    rest = [ix for ix in ranked[1:] if not ix.total_about_zero][:2]
    text = (f"{subject[0].upper() + subject[1:]} depends mostly on {input_words(top.input)} "
            "(total index "
            f"{index_text(top.total, top.total_low, top.total_high)}); narrowing its range "
            "would narrow the answer most")
    if rest:
        text += ", then " + " and ".join(
            f"{input_words(ix.input)} ({fmt(ix.total)})" for ix in rest)
    return text + "."


def robustness_sentence(u: UncertaintyResult, s: ScenarioUncertainty) -> str:
    """How robust one scenario's finding on the goal is, in words with numbers."""
    goal = s.interval(u.goal.outcome, u.goal.name)
    what = (f"{u.goal.name} kills by the released animals" if u.goal.name
            else "the chance of reaching breeding condition")
    text = (f"“{s.name}”: {what} {fmt(goal.median)} (5–95 %: {fmt(goal.p05)} to "
            f"{fmt(goal.p95)})")
    if s.name == u.scenarios[0].name:
        return text + "."
    word = probability_word(s.probability_better)
    robust = ("robust to the ranges given" if s.probability_better >= 0.9
              or s.probability_worse >= 0.9 else "not robust to the ranges given")
    return (text + f"; it is {word} to do better than the baseline "
            f"(p = {probability(s.probability_better)}), so the comparison is {robust}.")


def uncertainty_summary(u: UncertaintyResult) -> str:
    """The text printed by ``riskdiet uncertainty``."""
    study = u.study
    lines = [f"Uncertainty: {u.draws} Latin hypercube draws (seed {u.seed}) of "
             f"{len(u.inputs)} ranges: {', '.join(input_words(i) for i in u.inputs)}.",
             f"Goal: {u.goal.text} ({u.goal.words}).", ""]
    groups = [i.name for i in u.scenarios[0].intervals if i.outcome == COHORT_GROUP]
    for s in u.scenarios:
        lines.append(f"Scenario {s.name}: median (5–95 % interval)")
        lines.append(f"  fitness at start: {interval_text(s, FITNESS, None)}")
        for g in groups:
            lines.append(f"  {g} kills by the released animals within the horizon: "
                         f"{interval_text(s, COHORT_GROUP, g)}")
        for g in groups:
            lines.append(f"  {g} kills per predator per year (long run, places kept filled): "
                         f"{interval_text(s, KILLS_GROUP, g)}")
        diet = ", ".join(f"{p} {describe_probability(q)}" for p, q in
                         s.probability_in_diet.items())
        lines.append(f"  in a healthy animal's diet at the start reserves: {diet}")
        lines.append(f"  classic and state-dependent diets differ in "
                     f"{percent(s.classic_disagreement_share)} of draws")
        lines.append("")
    lines += comparison_sentences(u)
    if u.sobol is not None:
        lines += ["", f"Sobol indices on the baseline (N = {u.sobol.n}, {u.sobol.evaluations} "
                  "solves; first-order and total, 95 % bootstrap intervals):"]
        for o in u.sobol.outcomes:
            outcome, _, name = o.outcome.partition("|")
            label = outcome + (f" ({name})" if name else "")
            if o.constant:
                lines.append(f"  {label}: constant over the draws (no indices)")
                continue
            lines.append(f"  {label}:")
            for ix in sorted(o.indices, key=lambda ix: -ix.total):
                first = index_text(ix.first, ix.first_low, ix.first_high)
                total = index_text(ix.total, ix.total_low, ix.total_high)
                lines.append(f"    {input_words(ix.input)}: first {first}, total {total}")
    lines += ["", "Measure next: " + measure_next_sentence(u)]
    flagged = u.influential_without_range()
    if flagged:
        lines.append("Influential inputs without a range (elasticity of the goal outcome at the "
                     "baseline, |e| ≥ 0.5): "
                     + ", ".join(f"{input_words(e.input)} ({elasticity(e.value)})"
                                 for e in flagged)
                     + "; consider giving them ranges.")
    lines += ["", "Read the intervals as what the ranges entered imply, not as forecasts; "
              f"study: {study.name}."]
    return "\n".join(lines)


def verdict_how_sure(u: UncertaintyResult, name: str, groups: list[str]) -> str:
    """Page 1: how sure one scenario's verdict sentence is, in one sentence.

    The 5–95 % interval of the released animals' kills of each named group over the
    draws, and (for a scenario other than the baseline) the paired chance that it does
    better on the study's goal, in words with its number.
    """
    s = next(x for x in u.scenarios if x.name == name)
    parts = []
    for g in groups:
        try:
            i = s.interval(COHORT_GROUP, g)
        except StopIteration:
            continue
        parts.append(f"{g} {fmt(i.p05)} to {fmt(i.p95)}")
    text = ""
    if parts:
        text = (f"5–95 % range over {u.draws} draws of the uncertain inputs: "
                + ", ".join(parts) + ".")
    if s is not u.scenarios[0]:
        text += (f" Better than the baseline on the goal: "
                 f"{describe_probability(s.probability_better)}.")
    return text.strip()
