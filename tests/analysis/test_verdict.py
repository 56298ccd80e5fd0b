"""The page-1 verdict: scenarios ranked on the study's goal, with their cohort numbers.

Source: MODEL.md section 9 (the goal: ``fewer:NAME`` judged on the released
cohort's kills of NAME within the horizon, or ``higher:breeding``; default
``fewer:livestock`` when a group of that name exists). The expected order is
recomputed here from the solved numbers, so the test checks the ranking and
the wording against the results, not against stored values.
"""

from __future__ import annotations

import copy

from conftest import injury_raw

from riskdiet.analysis.study import solve
from riskdiet.analysis.verdict import verdict
from riskdiet.validation import build_study


def _raw(goal=None):
    raw = injury_raw()
    raw["prey"][0]["group"] = "livestock"
    raw["scenarios"] = [
        {"name": "fewer voles", "changes": [
            {"prey": "vole", "field": "encounters_per_day", "change": "scale", "value": 0.3}]},
        {"name": "more voles", "changes": [
            {"prey": "vole", "field": "encounters_per_day", "change": "scale", "value": 2.0}]},
    ]
    if goal:
        raw["settings"] = {"goal": goal}
    return raw


def test_default_goal_ranks_by_the_cohorts_livestock_kills():
    """With a livestock group and no goal setting, scenarios are ranked by the
    released animals' livestock kills within the horizon, fewest first, and the
    summary names the first."""
    result = solve(build_study(_raw()))
    v = verdict(result)
    kills = {s.name: s.cohort.kills_by_group["livestock"] for s in result.scenarios}
    assert list(v.ranking) == sorted(kills, key=kills.get)
    assert v.summary.startswith("On the study's goal (fewer livestock kills")
    assert f"{v.ranking[0]} does best" in v.summary
    base = result.scenarios[0]
    assert f"{base.cohort.animals} released animal" in v.sentences[base.name]


def test_breeding_goal_ranks_by_the_chance_of_breeding():
    """``higher:breeding`` ranks by the chance of reaching breeding condition,
    highest first."""
    result = solve(build_study(_raw("higher:breeding")))
    v = verdict(result)
    chance = {s.name: s.fitness_at_start for s in result.scenarios}
    assert list(v.ranking) == sorted(chance, key=lambda n: -chance[n])
    assert "higher chance" in v.goal_words


def test_equal_scenarios_are_said_to_do_equally_well():
    """Two scenarios with identical inputs tie; the summary says so rather than
    picking one (a tie within 1e-9 relative, MODEL.md section 9)."""
    raw = _raw()
    raw["scenarios"] = [copy.deepcopy(raw["scenarios"][0]), copy.deepcopy(raw["scenarios"][0])]
    raw["scenarios"][0]["changes"][0]["value"] = 1.0
    raw["scenarios"][1]["name"] = "same again"
    raw["scenarios"][1]["changes"][0]["value"] = 1.0
    v = verdict(solve(build_study(raw)))
    assert "equally well" in v.summary
