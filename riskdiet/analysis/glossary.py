"""Terms of the trade used in riskdiet's outputs, explained once (brief and workbook)."""

from __future__ import annotations

from riskdiet.fields import WORDS, field_specs, words
from riskdiet.model import Predator, Prey

TERMS = (
    ("fitness", "The chance the model assumes the predator maximises: reaching breeding "
     "condition before dying (breeding currency), or ending the season alive and in "
     "condition (season currency)."),
    ("fitness currency", "Which of the two goals the model assumes: the breeding currency "
     "(reaching breeding condition before dying; kills are given per year) or the season "
     "currency (ending a season of fixed length alive and in condition; kills are given per "
     "season)."),
    ("fitness at start", "Fitness of a healthy animal with the reserves it has at release."),
    ("policy", "Which prey the predator attacks when it meets them, for every level of "
     "reserves and condition (healthy or injured): the decisions by reserves."),
    ("released animals (cohort)", "The animals released on day 0, followed without "
     "replacement over the planning horizon; their kills, survival and breeding are the "
     "numbers to plan with."),
    ("place kept filled", "The long-run view: every predator that dies is replaced at once "
     "by a newcomer, so the yearly rates describe a territory that is always occupied."),
    ("selection gradient", "How much fitness at start changes per unit of hunting ability, "
     "with the decisions held fixed (Lande 1979)."),
    ("elasticity", "The relative change of an outcome per relative change of an input "
     "(d ln y / d ln x): 0.5 means a 10 % larger input gives about a 5 % larger outcome."),
    ("profitability", "Energy gained per day of handling a capture (classic prey model, "
     "Charnov 1976)."),
    ("encounter rate", "Expected meetings with a prey type per day of searching."),
    ("handling time", "Extra days one capture occupies (eating, guarding, resting)."),
    ("diet breadth", "How many prey types are taken."),
    ("grid check", "The same scenario solved again on a grid of about half as many energy "
     "levels; large changes mean the numbers still depend on the grid."),
    ("Bellman residual", "How far the computed fitness is from satisfying its own equation; "
     "a check on the solver, accepted below one in a billion."),
    ("Sobol index", "The share of an outcome's variance due to one uncertain input, alone "
     "(first order) or with its interactions (total)."),
)
"""(term, meaning) pairs, in the order a reader meets them."""


def field_glossary() -> list[tuple[str, str, str]]:
    """(words, key in study files and JSON, meaning) for every input field."""
    rows = []
    for record in (Predator, Prey):
        for name, spec in field_specs(record).items():
            if name in WORDS:
                rows.append((WORDS[name], name, spec.description))
    return rows


def input_words(label: str) -> str:
    """An uncertain or fitted input in words: ``upland ewe:density_per_km2`` reads
    ``upland ewe: density``, ``daily_cost_mj`` reads ``daily energy cost``.

    The prey name is everything before the last colon (a name may hold one);
    a label that is not a field name is returned as given.
    """
    prey, colon, name = label.rpartition(":")
    key = name.strip()
    if key not in WORDS:
        return label
    return f"{prey.strip()}: {WORDS[key]}" if colon else WORDS[key]


RESULT_WORDS = {
    # common
    "scenario": "Scenario",
    "prey": "Prey",
    "group": "Group",
    "name": "Prey or group",
    "item": "Item",
    "value": "Value",
    "note": "Note",
    # one scenario, by reserve level
    "level": "Energy level",
    "reserves_mj": "Reserves [MJ]",
    "reserves_fraction": "Reserves [share of capacity]",
    "fitness_healthy": "Fitness, healthy animal [probability]",
    "fitness_injured": "Fitness, injured animal [probability]",
    "attacks_healthy": "Prey a healthy animal attacks when met (best first)",
    "attacks_injured": "Prey an injured animal attacks when met (best first)",
    "marginal_hunting_ability_healthy": "Value of hunting ability, healthy animal "
                                        "[probability per unit of ability]",
    # long-run kills
    "kills_per_predator_per_day": "Kills per predator per day",
    "kills_per_predator_per_30_days": "Kills per predator per 30 days",
    "kills_per_predator_per_year": "Kills per predator per year",
    "kills_per_year_population": "Kills per year, all places kept filled",
    "diet_share_by_number": "Share of kills by number",
    "diet_share_by_energy": "Share of energy eaten",
    "expected_kills_per_predator_per_season": "Kills per predator per season",
    "expected_kills_population_per_season": "Kills per season, whole population",
    # released cohort
    "released_animals": "Animals released",
    "horizon_days": "Planning horizon [days]",
    "cohort_kills": "Kills by the released animals within the horizon",
    # grid check
    "levels_compared": "Energy levels compared",
    "quantity": "Quantity",
    "relative_change": "Relative change",
    # predators
    "currency": "Fitness currency",
    "share_of_time_injured": "Share of days injured",
    "mean_reserves_fraction": "Mean reserves [share of capacity]",
    "mean_reserves_mj": "Mean reserves [MJ]",
    "daily_survival": "Chance of surviving a day",
    "expected_lifetime_days": "Expected lifetime of a newcomer [days]",
    "expected_breeding_events": "Expected breeding events of a newcomer",
    "first_breeding_probability": "Chance a newcomer breeds at least once",
    "death_before_breeding_starvation": "Chance of starving before first breeding",
    "death_before_breeding_attack": "Chance of being killed by prey before first breeding",
    "death_before_breeding_other": "Chance of dying of other causes before first breeding",
    "survival_to_end": "Chance of surviving the season",
    "chance_above_threshold": "Chance of ending the season in condition",
    "cohort_alive_at_horizon": "Released animals alive at the horizon [share]",
    "cohort_survivors": "Expected survivors of the released animals",
    "cohort_breeding_events": "Breeding events of the released animals within the horizon",
    "cohort_median_survival_days": "Median survival of the released animals [days]",
    "fitness_at_start": "Fitness at start [probability]",
    # classic prey model
    "rank": "Rank by profitability",
    "profitability_mj_per_day": "Profitability [MJ per day of handling]",
    "in_rate_maximizing_diet": "In the rate-maximising diet",
    "in_risk_adjusted_diet": "In the risk-adjusted diet",
    "switching_threshold_per_day": "Switching threshold [encounters of better prey a day]",
    # provenance
    "record": "Predator or prey",
    "input": "Input",
    "key": "Key in study files, JSON and CSV",
    # glossary
    "term": "Term",
    "meaning": "Meaning",
    # map
    "x": "Across (first map input)",
    "y": "Up (second map input)",
    "regime_healthy": "Decisions of a healthy animal",
    "regime_injured": "Decisions of an injured animal",
    "regime_healthy_detail": "Decisions of a healthy animal, with thresholds",
    "regime_injured_detail": "Decisions of an injured animal, with thresholds",
    "marginal_hunting_ability": "Value of hunting ability [probability per unit of ability]",
    # uncertainty
    "outcome": "Outcome",
    "median": "Median",
    "p05": "5th percentile",
    "p95": "95th percentile",
    "probability_better": "Chance of doing better than the baseline on the goal",
    "probability_equal": "Chance of doing the same as the baseline on the goal",
    "probability_worse": "Chance of doing worse than the baseline on the goal",
    "classic_disagreement_share": "Share of draws where the classic diet differs",
    "first": "First-order Sobol index",
    "first_low": "First-order index, 2.5th percentile",
    "first_high": "First-order index, 97.5th percentile",
    "total": "Total Sobol index",
    "total_low": "Total index, 2.5th percentile",
    "total_high": "Total index, 97.5th percentile",
    "elasticity": "Elasticity of the goal outcome",
    "has_range": "Has a range",
    "kills_per_predator_per_year_by_group": "Kills per predator per year, by group",
    "cohort_kills_by_group": "Kills by the released animals within the horizon, by group",
}
"""Headers of the results workbook in words (with units), by their key in CSV and JSON."""

_RESULT_PREFIXES = (
    ("cohort_kills_", "Kills by the released animals within the horizon: {}"),
    ("kills_per_predator_per_year_", "Kills per predator per year: {}"),
    ("kills_per_year_population_", "Kills per year, all places kept filled: {}"),
    ("kills_per_predator_per_season_", "Kills per predator per season: {}"),
    ("kills_per_season_population_", "Kills per season, whole population: {}"),
    ("kills_per_year_", "Kills per predator per year: {}"),
    ("kills_per_season_", "Kills per predator per season: {}"),
    ("healthy_takes_below_fraction_", "Healthy animal takes it below [share of capacity]: {}"),
    ("injured_takes_below_fraction_", "Injured animal takes it below [share of capacity]: {}"),
    ("probability_in_diet: ", "Chance in a healthy animal's diet at the start reserves: {}"),
    ("marginal_", "Value of {} [probability per unit]"),
)


def result_words(key: str) -> str:
    """The words of a results-workbook header, from its key (CSV header and JSON key).

    Keys that carry a prey or group name (``kills_per_predator_per_year_livestock``)
    read ``Kills per predator per year: livestock``; any other key reads as its
    words with a capital letter.
    """
    if key in RESULT_WORDS:
        return RESULT_WORDS[key]
    for prefix, template in _RESULT_PREFIXES:
        if key.startswith(prefix) and len(key) > len(prefix):
            rest = key[len(prefix):]
            return template.format(words(rest) if prefix == "marginal_" else rest)
    text = words(key)
    return text[:1].upper() + text[1:]
