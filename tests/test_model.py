"""Tests of study validation: every rule names its location.

References used below:
MODEL.md section 1 (field bounds and cross-field rules).
Kleiber, M. (1961). The Fire of Life: An Introduction to Animal Energetics.
Wiley (basal metabolic rate 70 M^0.75 kcal/day).
1 kcal = 4.184 kJ (thermochemical calorie; common practice).
"""

from __future__ import annotations

import pytest
from conftest import injury_raw

from riskdiet.errors import StudyError
from riskdiet.model import kleiber_basal_mj_per_day
from riskdiet.validation import build_study


def problems_of(raw: dict) -> dict[str, str]:
    """Location -> message of every problem, asserting that the study is refused."""
    with pytest.raises(StudyError) as info:
        build_study(raw)
    return {p.where: str(p) for p in info.value.problems}


def with_prey(index: int, **changes) -> dict:
    raw = injury_raw()
    raw["prey"][index].update(changes)
    return raw


@pytest.mark.parametrize(("raw", "where", "found"), [
    (with_prey(0, capture_success=1.5), "prey[0].capture_success", "1.5"),
    (with_prey(1, injury_chance=-0.1), "prey[1].injury_chance", "-0.1"),
    (with_prey(2, fatality_chance=1.0), "prey[2].fatality_chance", "1.0"),
    (injury_raw(background_mortality=1.0), "predator.background_mortality", "1.0"),
    (injury_raw(injured_capture_factor=1.2), "predator.injured_capture_factor", "1.2"),
    (injury_raw(reserve_capacity_mj=0), "predator.reserve_capacity_mj", "0.0"),
    (injury_raw(reserve_capacity_mj=-5), "predator.reserve_capacity_mj", "-5.0"),
    (injury_raw(daily_cost_mj=0), "predator.daily_cost_mj", "0.0"),
    (injury_raw(energy_levels=9), "predator.energy_levels", "9"),
    (injury_raw(energy_levels=2001), "predator.energy_levels", "2001"),
    (injury_raw(energy_levels=10.5), "predator.energy_levels", "10.5"),
    (injury_raw(recovery_days=0.5), "predator.recovery_days", "0.5"),
    (with_prey(0, energy_mj="lots"), "prey[0].energy_mj", '"lots"'),
    (injury_raw(energy_levels="many"), "predator.energy_levels", '"many"'),
])
def test_bad_values_are_refused_with_their_location(raw, where, found):
    """Each value outside its MODEL.md section 1 range, or of the wrong type, is
    reported at its JSON path with the value found (common practice for
    located input errors)."""
    problems = problems_of(raw)
    assert where in problems, problems
    assert problems[where].endswith(f"found {found}")
    assert "expected" in problems[where]


@pytest.mark.parametrize("levels", [10, 2000])
def test_energy_levels_accepts_the_ends_of_its_range(levels):
    """energy_levels is an integer from 10 to 2000 inclusive (MODEL.md section 1)."""
    study = build_study(injury_raw(energy_levels=levels))
    assert study.predator.energy_levels == levels


def test_duplicate_prey_names_are_refused():
    """Prey names are unique, ignoring case and surrounding spaces (MODEL.md
    section 1: "name: unique")."""
    problems = problems_of(with_prey(2, name=" Vole "))
    assert "prey[2].name" in problems and "unique" in problems["prey[2].name"]


def test_missing_encounter_information_is_located():
    """A prey needs encounters_per_day, or a density plus the predator's search
    area (MODEL.md section 1)."""
    raw = injury_raw()
    del raw["prey"][1]["encounters_per_day"]
    assert "prey[1].encounters_per_day" in problems_of(raw)
    raw = injury_raw()
    del raw["prey"][1]["encounters_per_day"]
    raw["prey"][1]["density_per_km2"] = 0.1
    problems = problems_of(raw)
    assert "predator.search_area_km2_per_day" in problems
    assert "deer" in problems["predator.search_area_km2_per_day"]
    raw["predator"]["search_area_km2_per_day"] = 5.0
    study = build_study(raw)
    assert study.prey[1].encounters(study.predator) == pytest.approx(0.5)


def test_cross_field_rules_are_located():
    """Breeding level round(b n) >= 2, season_days for the season currency and
    mu + mu_injured < 1 (MODEL.md sections 1 and 3)."""
    assert "predator.breeding_threshold" in problems_of(
        injury_raw(energy_levels=10, breeding_threshold=0.1))
    build_study(injury_raw(energy_levels=10, breeding_threshold=0.2))  # J = 2 is enough
    raw = injury_raw(currency="season")
    del raw["predator"]["season_days"]
    assert "predator.season_days" in problems_of(raw)
    problems = problems_of(injury_raw(background_mortality=0.6, injured_extra_mortality=0.4))
    assert "predator.injured_extra_mortality" in problems
    assert "below 1" in problems["predator.injured_extra_mortality"]


def test_unknown_field_names_are_located():
    """Field names outside the vocabulary of MODEL.md section 1 are refused at
    their own location (common practice: catch misspelt headers)."""
    raw = injury_raw(wingspan_m=2.0)
    raw["prey"][0]["colour"] = "brown"
    problems = problems_of(raw)
    assert "predator.wingspan_m" in problems and "prey[0].colour" in problems
    assert "reserve_capacity_mj" in problems["predator.wingspan_m"]  # lists the valid names


def _with_change(**change) -> dict:
    raw = injury_raw()
    raw["scenarios"] = [{"name": "test", "changes": [change]}]
    return raw


def test_scenario_changes_are_checked_at_the_change():
    """A scenario naming an unknown prey or field, scaling a text field, or
    pushing a probability above 1 is refused at its change (MODEL.md section 1
    bounds apply to scenario values too)."""
    unknown_prey = problems_of(_with_change(prey="unicorn", field="energy_mj",
                                            change="scale", value=2))
    assert any(w.startswith("scenarios[0].changes[0]") and "unicorn" in m
               for w, m in unknown_prey.items())
    unknown_field = problems_of(_with_change(prey="deer", field="speed_kmh", change="set",
                                             value=2))
    assert any(w.startswith("scenarios[0].changes[0]") and "speed_kmh" in m
               for w, m in unknown_field.items())
    text_scaled = problems_of(_with_change(prey="deer", field="group", change="scale",
                                           value=2))
    assert any(w.startswith("scenarios[0].changes[0]") and "non-numeric" in m
               for w, m in text_scaled.items())
    too_likely = problems_of(_with_change(prey="boar", field="capture_success", change="scale",
                                          value=4))
    (where, message), = too_likely.items()
    assert where.startswith("scenarios[0].changes[0]")
    assert "boar" in where and "capture_success" in where
    assert message.endswith(f"found {0.28 * 4!r}")


def test_a_valid_scenario_applies_its_changes():
    """set, scale and add change the baseline in order (MODEL.md section 1)."""
    raw = injury_raw()
    raw["scenarios"] = [{"name": "test", "changes": [
        {"prey": "deer", "field": "capture_success", "change": "scale", "value": 2},
        {"prey": "deer", "field": "capture_success", "change": "add", "value": 0.1},
        {"field": "hunting_ability", "change": "set", "value": 0.7}]}]
    study = build_study(raw)
    predator, prey = study.inputs_for(study.scenario("test"))
    assert prey[1].capture_success == pytest.approx(0.7)
    assert predator.hunting_ability == 0.7
    assert study.prey[1].capture_success == 0.3  # the baseline is untouched


def test_every_problem_is_reported_at_once():
    """Several faults in one file give one message each, type and range faults
    together, so the user can fix them in one pass (common practice)."""
    raw = injury_raw(reserve_capacity_mj=-1, wingspan_m=3)
    raw["prey"][0]["energy_mj"] = "lots"
    raw["prey"][1]["capture_success"] = 2.0
    raw["prey"][2]["injury_chance"] = -1
    problems = problems_of(raw)
    assert {"predator.reserve_capacity_mj", "predator.wingspan_m", "prey[0].energy_mj",
            "prey[1].capture_success", "prey[2].injury_chance"} <= set(problems)
    with pytest.raises(StudyError) as info:
        build_study(raw)
    assert str(info.value).startswith(f"{len(info.value.problems)} problem(s)")


def test_suspicious_values_give_notices():
    """A capture worth more than the whole capacity, and a daily cost that
    empties full reserves in under a day, are legal but flagged (common
    practice: warn on implausible values)."""
    raw = injury_raw(daily_cost_mj=31.0)
    raw["prey"][2]["energy_mj"] = 40.0
    notices = {n.where: n.message for n in build_study(raw).notices}
    assert "prey[2].energy_mj" in notices and "capacity" in notices["prey[2].energy_mj"]
    assert "predator.daily_cost_mj" in notices
    assert "under a day" in notices["predator.daily_cost_mj"]
    assert build_study(injury_raw()).notices == ()


def test_kleiber_estimate_of_daily_cost():
    """A blank daily cost is activity_multiplier x 70 M^0.75 kcal/day (Kleiber
    1961): for 40 kg, 70 x 40^0.75 = 1113 kcal/day = 4.66 MJ/day (hand
    calculation at 4.184 kJ/kcal)."""
    assert kleiber_basal_mj_per_day(40.0) / 4.184e-3 == pytest.approx(1113.4, abs=0.1)
    assert kleiber_basal_mj_per_day(40.0) == pytest.approx(4.66, abs=0.005)
    raw = injury_raw(body_mass_kg=40.0, activity_multiplier=2.0)
    del raw["predator"]["daily_cost_mj"]
    study = build_study(raw)
    assert study.predator.daily_cost_is_estimated
    assert study.predator.effective_daily_cost_mj == pytest.approx(2 * 4.658, abs=0.005)
    assert any(n.where == "predator.daily_cost_mj" and "Kleiber" in n.message
               for n in study.notices)
    raw["predator"].pop("body_mass_kg")
    assert "predator.daily_cost_mj" in problems_of(raw)


def test_derived_levels_round_halves_up():
    """J = round(b n), j0 = round(s0 n) clipped to the living levels, halves
    upwards (MODEL.md sections 2-3)."""
    study = build_study(injury_raw(energy_levels=30, breeding_threshold=0.85,
                                   start_reserves=0.95))
    assert study.predator.breeding_level == 26  # 25.5 rounds up
    assert study.predator.start_level == 25  # round(28.5) = 29, clipped to J - 1
