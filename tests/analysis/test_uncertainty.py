"""Uncertainty propagation, Sobol indices and elasticities of a study (MODEL.md section 9).

Small invented studies (24 energy levels) keep these fast.
"""

from __future__ import annotations

import copy
from concurrent.futures import ProcessPoolExecutor

import numpy as np
import pytest

from riskdiet.analysis.cells import Cell, solve_cells
from riskdiet.analysis.uncertainty import draw_cells, run_uncertainty, study_goal
from riskdiet.core.stats.ranges import Range, draw_values
from riskdiet.errors import StudyError
from riskdiet.validation import build_study

SMALL = {
    "predator": {"reserve_capacity_mj": 30, "energy_levels": 24, "daily_cost_mj": 2,
                 "background_mortality": 0.002, "population": 20, "start_reserves": 0.5,
                 "breeding_threshold": 1.0},
    "prey": [
        {"name": "deer", "group": "wild", "encounters_per_day": 0.8, "energy_mj": 10,
         "handling_days": 1, "capture_success": 0.35},
        {"name": "sheep", "group": "livestock", "encounters_per_day": 0.4, "energy_mj": 8,
         "handling_days": 0.5, "capture_success": 0.6},
        {"name": "hedgehog", "group": "wild", "encounters_per_day": 0.5, "energy_mj": 0.01,
         "handling_days": 5, "capture_success": 0.1, "fatality_chance": 0.5},
    ],
    "scenarios": [{"name": "sheep penned", "changes": [
        {"prey": "sheep", "field": "encounters_per_day", "change": "scale", "value": 0.3}]}],
    "uncertainty": [],
    "settings": {"draws": 24, "seed": 3},
}


def small(ranges, **settings) -> dict:
    raw = copy.deepcopy(SMALL)
    raw["uncertainty"] = ranges
    raw["settings"].update(settings)
    return raw


def test_draws_of_a_uniform_range_keep_one_per_stratum():
    """Latin hypercube sampling puts exactly one draw in each of the N equal strata of each
    margin (McKay, Beckman & Conover 1979); the cells the analysis builds carry those draws."""
    study = build_study(small([{"prey": "sheep", "field": "capture_success", "low": 0.2,
                                "high": 0.9}]))
    n = 30
    values = draw_values([Range(0.2, 0.9)], n, 5)
    cells = draw_cells(study, values, "baseline")
    drawn = np.array([c.changes[0].value for c in cells])
    strata = np.floor((drawn - 0.2) / 0.7 * n).astype(int)
    assert sorted(strata) == list(range(n))


def test_population_interval_is_the_uniform_quantiles_times_the_per_animal_kills():
    """Cohort kills are P0 times one animal's expected kills (MODEL.md section 5; P0 =
    population when released_animals is blank), so a uniform range 10..30 on population
    gives a median near 20 x k, a 5 % point near 11 x k and a 95 % point near 29 x k
    (quantiles of the uniform distribution; Latin hypercube strata of width 20/40 and
    rounding to whole animals add at most 1), and about 90 % of the draws lie inside."""
    raw = small([{"field": "population", "low": 10, "high": 30}], draws=40)
    study = build_study(raw)
    one = build_study(small([]) | {"predator": dict(SMALL["predator"], population=1)})
    per_animal = solve_cells(one, [Cell()])[0].cohort_kills
    result = run_uncertainty(study, sobol=False)
    base = result.scenarios[0]
    for i, prey in enumerate(["deer", "sheep"]):
        k = per_animal[i]
        iv = base.interval("cohort_kills", prey)
        assert iv.median == pytest.approx(20 * k, abs=1.01 * k)
        assert iv.p05 == pytest.approx(11 * k, abs=1.01 * k)
        assert iv.p95 == pytest.approx(29 * k, abs=1.01 * k)
    # long-run kills per predator do not depend on the number of predators
    iv = base.interval("kills_per_predator_per_year", "deer")
    assert iv.p05 == pytest.approx(iv.p95, rel=1e-12)
    drawn = np.floor(draw_values([Range(10, 30)], 40, 3)[:, 0] + 0.5)
    k = per_animal[1]
    inside = np.mean((drawn * k >= base.interval("cohort_kills", "sheep").p05 - 1e-9)
                     & (drawn * k <= base.interval("cohort_kills", "sheep").p95 + 1e-9))
    assert 0.85 <= inside <= 0.95


def test_input_that_cannot_matter_has_total_index_about_zero():
    """A prey never attacked (tiny energy, long handling, deadly) cannot change any outcome:
    its total Sobol index is 0 (Sobol 2001: S_T = 0 exactly when the output does not depend
    on the input) and shown as "≈ 0", while sheep capture success, which drives livestock
    kills, has a total index above 0.1 on the varying goal outcome in the same run."""
    raw = small([{"prey": "hedgehog", "field": "energy_mj", "low": 0.005, "high": 0.02},
                 {"prey": "sheep", "field": "capture_success", "low": 0.2, "high": 0.9}],
                draws=16)
    study = build_study(raw)
    base = solve_cells(study, [Cell()])[0]
    assert not base.attacked_at_start[2]
    result = run_uncertainty(study, sobol_n=64)
    goal = result.sobol.outcome(result.goal_outcome_key)
    assert result.goal.text == "fewer:livestock"
    assert not goal.constant
    hedgehog, sheep = goal.indices
    assert hedgehog.total_about_zero and abs(hedgehog.total) < 1e-12
    assert sheep.total > 0.1 and not sheep.total_about_zero
    assert result.measure_next()[0] == "sheep:capture_success"
    flagged = {e.input for e in result.influential_without_range()}
    assert "sheep:capture_success" not in flagged


def test_same_seed_same_numbers_with_one_or_two_workers():
    """Results do not depend on the number of workers (MODEL.md section 9): each cell is
    solved alone from the same draws (common practice for seeded Monte Carlo)."""
    raw = small([{"prey": "sheep", "field": "capture_success", "low": 0.3, "high": 0.8,
                  "shape": "triangular", "mode": 0.6},
                 {"field": "daily_cost_mj", "low": 1.5, "high": 2.5, "shape": "loguniform"}],
                draws=12)
    study = build_study(raw)
    inline = run_uncertainty(study, sobol_n=8).to_dict()
    with ProcessPoolExecutor(2) as pool:
        pooled = run_uncertainty(study, sobol_n=8, executor=pool).to_dict()
    assert pooled == inline
    other = run_uncertainty(study, seed=4, sobol=False).to_dict()
    assert other["scenarios"] != inline["scenarios"]


def test_same_numbers_through_dask():
    """A Dask cluster's executor gives the same numbers as solving inline (as above)."""
    distributed = pytest.importorskip("distributed")
    study = build_study(small([{"prey": "sheep", "field": "capture_success", "low": 0.3,
                                "high": 0.8}], draws=8))
    inline = run_uncertainty(study, sobol=False).to_dict()
    with distributed.LocalCluster(processes=False, n_workers=1, threads_per_worker=1,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        assert run_uncertainty(study, sobol=False, executor=client.get_executor()).to_dict() \
            == inline


def test_paired_probabilities_and_scenario_ranges():
    """Penning sheep cuts sheep encounters to 30 %, so in every paired draw the scenario has
    fewer livestock kills (the cohort's kills grow with the encounter rate, MODEL.md
    section 5); a range naming the scenario replaces its final value (stage final), so
    setting sheep encounters back to at least the baseline's 0.4 there makes it no better."""
    ranges = [{"prey": "sheep", "field": "capture_success", "low": 0.3, "high": 0.8}]
    study = build_study(small(ranges, draws=10))
    res = run_uncertainty(study, sobol=False)
    penned = res.scenarios[1]
    assert penned.probability_better == 1.0 and penned.probability_worse == 0.0
    assert res.scenarios[0].probability_equal == 1.0
    ranges.append({"prey": "sheep", "field": "encounters_per_day", "low": 0.4, "high": 0.6,
                   "scenario": "sheep penned"})
    res = run_uncertainty(build_study(small(ranges, draws=10)), sobol=False)
    assert res.scenarios[1].probability_better == 0.0


@pytest.mark.parametrize(("row", "where", "fragment"), [
    ({"field": "daily_cost_mj", "low": 3, "high": 2}, "uncertainty[0].high", "above low"),
    ({"field": "daily_cost_mj", "low": 0, "high": 2, "shape": "loguniform"},
     "uncertainty[0].low", "log-uniform"),
    ({"field": "daily_cost_mj", "low": 1, "high": 2, "shape": "triangular", "mode": 3},
     "uncertainty[0].mode", "a mode from 1 to 2"),
    ({"prey": "sheeep", "field": "energy_mj", "low": 1, "high": 2}, "uncertainty[0].prey",
     "did you mean"),
    ({"prey": "sheep", "field": "energy", "low": 1, "high": 2}, "uncertainty[0].field",
     "a numeric field"),
    ({"field": "energy_levels", "low": 20, "high": 30}, "uncertainty[0].field",
     "grid's shape"),
    ({"field": "breeding_threshold", "low": 0.8, "high": 1}, "uncertainty[0].field",
     "grid's shape"),
    ({"field": "daily_cost_mj", "low": 1, "high": 2, "scenario": "penned"},
     "uncertainty[0].scenario", "a scenario of the study"),
    ({"prey": "sheep", "field": "capture_success", "low": 0.5, "high": 0.9,
      "shape": "uniform", "mode": 0.6}, "uncertainty[0].mode", "only triangular"),
])
def test_bad_ranges_are_rejected_at_their_place(row, where, fragment):
    """MODEL.md section 9: low < high, loguniform above 0, a mode inside the range, known
    prey and numeric fields, no range on a field that changes the grid's shape, a scenario
    of the study; every error names its place (project rule)."""
    with pytest.raises(StudyError) as info:
        build_study(small([row]))
    found = [p for p in info.value.problems if p.where == where]
    assert found and fragment in str(found[0]), info.value.problems


def test_second_range_and_out_of_bounds_scale_are_errors_naming_the_row():
    """At most one range per input and scenario; a range end that a scenario's scale pushes
    out of bounds is an error naming the row (MODEL.md section 9): capture success 0.5..0.9
    scaled by 1.2 gives 1.08 > 1 (the baseline's 0.6 gives a valid 0.72)."""
    rows = [{"prey": "sheep", "field": "capture_success", "low": 0.3, "high": 0.8},
            {"prey": "Sheep", "field": "capture_success", "low": 0.4, "high": 0.7}]
    with pytest.raises(StudyError) as info:
        build_study(small(rows))
    assert [p.where for p in info.value.problems] == ["uncertainty[1].field"]
    raw = small([{"prey": "sheep", "field": "capture_success", "low": 0.5, "high": 0.9}])
    raw["scenarios"][0]["changes"].append({"prey": "sheep", "field": "capture_success",
                                           "change": "scale", "value": 1.2})
    with pytest.raises(StudyError) as info:
        build_study(raw)
    text = str(info.value.problems[0])
    assert info.value.problems[0].where == "uncertainty[0].field"
    assert "sheep penned" in text and "1.08" in text


def test_check_warnings_baseline_outside_range_and_set_overrides():
    """check warns when a baseline value lies outside its own range, and when a scenario
    sets an input whose range has a blank scenario (MODEL.md section 9)."""
    raw = small([{"prey": "sheep", "field": "capture_success", "low": 0.7, "high": 0.9},
                 {"field": "hunting_ability", "low": 0.8, "high": 1.2}])
    raw["scenarios"].append({"name": "poor hunters", "changes": [
        {"prey": None, "field": "hunting_ability", "change": "set", "value": 0.5}]})
    study = build_study(raw)
    texts = [str(n) for n in study.notices]
    assert any("uncertainty[0]" in t and "outside its own range" in t for t in texts)
    assert any("uncertainty[1]" in t and "no effect" in t and "poor hunters" in t
               for t in texts)


@pytest.mark.parametrize(("goal", "expected"), [
    (None, "fewer:livestock"), ("FEWER: Sheep", "fewer:sheep"),
    ("higher:breeding", "higher:breeding")])
def test_goal_setting(goal, expected):
    """MODEL.md section 9: fewer:NAME (case-insensitive prey or group) or higher:breeding;
    default fewer:livestock when that group exists."""
    assert study_goal(build_study(small([], goal=goal))).text == expected


def test_unknown_goal_is_an_error_at_its_setting():
    """A goal naming nothing in the study is an error (MODEL.md section 9)."""
    with pytest.raises(StudyError) as info:
        build_study(small([], goal="fewer:goats"))
    assert info.value.problems[0].where == "settings.goal"
