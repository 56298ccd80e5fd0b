"""Scenario changes: set, scale and add apply exactly; bad targets name their place."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest

from riskdiet.errors import StudyError
from riskdiet.validation import build_study

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "harrow-vale.json"


def _raw(changes):
    raw = json.loads(EXAMPLE.read_text())
    raw["scenarios"] = [{"name": "test", "changes": changes}]
    return raw


def _inputs(changes):
    study = build_study(_raw(changes))
    return study, study.inputs_for(study.scenario("test"))


def test_set_scale_add_apply_exactly():
    """set replaces, scale multiplies, add increments the baseline value (the definition
    of the three change kinds in the study-file layout; exact float arithmetic)."""
    study, (pred, prey) = _inputs([
        {"prey": None, "field": "hunting_ability", "change": "set", "value": 0.6},
        {"prey": "wild boar", "field": "encounters_per_day", "change": "scale", "value": 0.5},
        {"prey": "forest deer", "field": "energy_mj", "change": "add", "value": 2.5},
        {"prey": None, "field": "population", "change": "scale", "value": 1.5},
    ])
    base = {p.name: p for p in study.prey}
    by = {p.name: p for p in prey}
    assert pred.hunting_ability == 0.6
    assert by["wild boar"].encounters_per_day == base["wild boar"].encounters_per_day * 0.5
    assert by["forest deer"].energy_mj == base["forest deer"].energy_mj + 2.5
    assert pred.population == 18  # 12 x 1.5, whole number field
    assert by["upland ewe"] == base["upland ewe"]  # untouched prey stay identical
    assert study.predator.hunting_ability == 1.0  # the baseline itself is not modified


def test_changes_apply_in_order():
    """Two changes to one field compose in the order given: (x * 2) + 1."""
    study, (_, prey) = _inputs([
        {"prey": "mountain hare", "field": "energy_mj", "change": "scale", "value": 2},
        {"prey": "mountain hare", "field": "energy_mj", "change": "add", "value": 1},
    ])
    base = {p.name: p for p in study.prey}["mountain hare"].energy_mj
    assert {p.name: p for p in prey}["mountain hare"].energy_mj == base * 2 + 1


def test_scale_of_density_derived_field():
    """Scaling a blank encounters_per_day works on the value derived from density x search
    area (MODEL.md section 1: m_i = A * density)."""
    study, (pred, prey) = _inputs([
        {"prey": "upland ewe", "field": "encounters_per_day", "change": "scale", "value": 0.5}])
    ewe = {p.name: p for p in prey}["upland ewe"]
    base = {p.name: p for p in study.prey}["upland ewe"]
    assert ewe.encounters(pred) == pytest.approx(0.5 * base.encounters(study.predator))


@pytest.mark.parametrize("change, where, fragment", [
    ({"prey": "snow leopard", "field": "energy_mj", "change": "set", "value": 1},
     "scenarios[0].changes[0].prey", "name of a prey type"),
    ({"prey": None, "field": "wingspan_m", "change": "set", "value": 1},
     "scenarios[0].changes[0].field", "predator field"),
    ({"prey": "wild boar", "field": "group", "change": "scale", "value": 2},
     "scenarios[0].changes[0].value", "non-numeric"),
    ({"prey": "wild boar", "field": "capture_success", "change": "add", "value": 0.95},
     "scenarios[0].changes[0].value", "from 0 to 1"),
    ({"prey": "wild boar", "field": "capture_success", "change": "multiply", "value": 2},
     "scenarios[0].changes[0].change", "set, scale or add"),
])
def test_bad_changes_are_located(change, where, fragment):
    """Unknown prey, unknown or non-numeric fields, out-of-range results and unknown change
    kinds are rejected with the change's JSON path (common practice for located errors)."""
    with pytest.raises(StudyError) as info:
        build_study(_raw([change]))
    text = "\n".join(str(p) for p in info.value.problems)
    assert where in text
    assert fragment in text


def test_all_bad_changes_reported_together():
    """Several bad scenarios give several problems in one error (all problems at once)."""
    raw = _raw([{"prey": "nobody", "field": "energy_mj", "change": "set", "value": 1}])
    raw["scenarios"].append(copy.deepcopy(raw["scenarios"][0]) | {"name": "second"})
    raw["scenarios"][1]["changes"][0]["prey"] = "nobody either"
    with pytest.raises(StudyError) as info:
        build_study(raw)
    assert len(info.value.problems) == 2
