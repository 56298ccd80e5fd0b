"""The results workbook's uncertainty sheets: draws' summaries, comparisons, indices.

Tidy tables (one row per scenario and outcome, per input and outcome), the
same records as ``riskdiet uncertainty --json``; undefined numbers are empty
cells.
"""

from __future__ import annotations

from riskdiet.analysis.glossary import input_words, result_words
from riskdiet.analysis.uncertainty import UncertaintyResult
from riskdiet.io.results_tables import Table


def uncertainty_tables(u: UncertaintyResult) -> list[Table]:
    """Sheets ``Uncertainty intervals``, ``Uncertainty comparisons``, ``Sobol indices``,
    ``Elasticities``."""
    setup = (f"{u.draws} Latin hypercube draws, seed {u.seed}, goal {u.goal.words}; ranges: "
             + ", ".join(input_words(i) for i in u.inputs))
    intervals = Table.from_keys(
        "Uncertainty intervals", "Median and 5–95 % interval over the draws, per scenario",
        ["scenario", "outcome", "name", "median", "p05", "p95"],
        [[s.name, result_words(i.outcome), i.name, i.median, i.p05, i.p95]
         for s in u.scenarios for i in s.intervals],
        {3: "0.000", 4: "0.000", 5: "0.000"}, [setup])
    comparisons = Table.from_keys(
        "Uncertainty comparisons", "Paired with the baseline on the goal, and diets",
        ["scenario", "probability_better", "probability_equal", "probability_worse",
         "classic_disagreement_share"]
        + [f"probability_in_diet: {p}" for p in u.scenarios[0].probability_in_diet],
        [[s.name, s.probability_better, s.probability_equal, s.probability_worse,
          s.classic_disagreement_share, *s.probability_in_diet.values()] for s in u.scenarios],
        {c: "0.000" for c in range(1, 5 + len(u.scenarios[0].probability_in_diet))},
        [setup, "Chance in a healthy animal's diet: share of draws in which a healthy "
         "animal at the start reserves attacks the prey when met"])
    records = u.sobol_records()
    sobol = Table.from_keys(
        "Sobol indices", "Sobol first-order and total indices on the baseline, 95 % bootstrap "
        "intervals (≈ 0 when the interval reaches 0)",
        ["outcome", "name", "input", "first", "first_low", "first_high", "total", "total_low",
         "total_high"],
        [_sobol_row(r) for r in records], {c: "0.000" for c in range(3, 9)},
        [f"N = {u.sobol.n}, {u.sobol.evaluations} solves; measure next: "
         + ", ".join(input_words(i) for i in u.measure_next()) if u.sobol is not None
         else "not computed (--no-sobol, or no range acts on the baseline)"])
    elastic = Table.from_keys(
        "Elasticities", "One-at-a-time elasticities of the goal outcome at the baseline (±1 %)",
        ["input", "elasticity", "has_range"],
        [[input_words(e.input), e.value, e.has_range] for e in u.elasticities], {1: "0.000"},
        ["Elasticity: d ln(goal outcome) / d ln(input), the percentage change of the goal "
         "outcome per 1 % change of the input; empty where undefined"])
    return [intervals, comparisons, sobol, elastic]


def _sobol_row(record: dict) -> list:
    """A Sobol record with its outcome and input in words."""
    row = list(record.values())
    keys = list(record)
    for i, key in enumerate(keys):
        if key == "outcome":
            row[i] = result_words(str(row[i]))
        elif key == "input":
            row[i] = input_words(str(row[i]))
    return row
