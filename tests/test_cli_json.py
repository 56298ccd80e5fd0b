"""Every JSON document riskdiet prints is strict JSON, and solve failures exit 2.

References used below:
RFC 8259 (JSON has no NaN or Infinity: Python's json module writes them only
as a non-standard extension, which ``parse_constant`` catches on reading).
POSIX utility conventions (exit status 2 for input errors; diagnostics on
standard error). Grid-convergence checks: Roache (1998), Verification and
Validation in Computational Science and Engineering, ch. 5 (compare the
answer on two grids).
"""

from __future__ import annotations

import json
import math

import pytest
from conftest import EXAMPLE, ROOT, injury_raw
from typer.testing import CliRunner

from riskdiet.cli import app
from riskdiet.core import solver

runner = CliRunner()


def _strict(text: str) -> dict:
    def refuse(constant: str):
        raise AssertionError(f"non-standard JSON constant {constant}")

    return json.loads(text, parse_constant=refuse)


def _one_prey(predator: dict, prey: dict) -> dict:
    return {"predator": predator, "prey": [{"name": "prey", **prey}]}


STUDIES = {
    "demo json": None,
    "demo workbook": ROOT / "examples" / "harrow-vale.xlsx",
    "failing release": ROOT / "examples" / "stony-fell.json",
    "injury, breeding": injury_raw(),
    "injury, season": injury_raw(currency="season", season_days=40),
    "saturating": _one_prey({"reserve_capacity_mj": 60, "energy_levels": 60,
                             "daily_cost_mj": 1},
                            {"encounters_per_day": 1, "energy_mj": 3, "capture_success": 1}),
    "singular before": _one_prey({"reserve_capacity_mj": 30, "energy_levels": 30,
                                  "daily_cost_mj": 1},
                                 {"encounters_per_day": 2, "energy_mj": 8,
                                  "capture_success": 1}),
    "harsh": _one_prey({"reserve_capacity_mj": 100, "daily_cost_mj": 1,
                        "background_mortality": 0.5, "start_reserves": 0.1},
                       {"encounters_per_day": 1.5, "energy_mj": 2, "capture_success": 0.35}),
    "season, all die": _one_prey({"reserve_capacity_mj": 30, "energy_levels": 30,
                                  "daily_cost_mj": 1, "currency": "season",
                                  "season_days": 60},
                                 {"encounters_per_day": 0, "energy_mj": 3,
                                  "capture_success": 0.5}),
}


def _path(tmp_path, name):
    study = STUDIES[name]
    if study is None:
        return EXAMPLE
    if not isinstance(study, dict):
        return study
    path = tmp_path / "study.json"
    path.write_text(json.dumps(study), encoding="utf-8")
    return path


@pytest.mark.parametrize("name", list(STUDIES))
def test_solve_json_is_strict_json_with_cohort_and_grid_check(tmp_path, name):
    """``solve --json`` on every test study parses with a parse_constant that
    refuses NaN and Infinity (RFC 8259), and every scenario carries the
    documented ``cohort`` and ``grid_check`` objects."""
    result = runner.invoke(app, ["solve", str(_path(tmp_path, name)), "--json"])
    assert result.exit_code == 0, result.stderr
    doc = _strict(result.stdout)
    for s in doc["scenarios"]:
        assert set(s["cohort"]) == {"horizon_days", "animals", "kills", "kills_by_group",
                                    "alive_at_horizon", "survivors", "breeding_events",
                                    "median_survival_days"}
        assert {"levels_compared", "fitness_relative_change", "kills_relative_change",
                "warning"} <= set(s["grid_check"])
        assert len(s["grid_check"]["levels_compared"]) == 2


def test_saturating_study_prints_the_right_chance_of_breeding(tmp_path):
    """The case that printed 0.00 now prints the walk's answer (above 0.99:
    Grinstead & Snell 1997, ch. 11, see tests/test_choice.py) and kills at the
    closed-form rate p_meet = 1 - e^-1 per day (every meeting is a capture)."""
    result = runner.invoke(app, ["solve", str(_path(tmp_path, "saturating")), "--json"])
    s = _strict(result.stdout)["scenarios"][0]
    assert s["fitness_at_start"] > 0.99
    per_day = s["steady_state"]["kills_per_predator_per_day"]["prey"]
    assert per_day == pytest.approx(-math.expm1(-1.0), rel=1e-9)
    assert s["steady_state"]["expected_lifetime_days"] is None
    assert "never dies" in s["steady_state"]["lifetime_note"]


def test_a_failed_solve_is_an_error_naming_the_scenario(tmp_path, monkeypatch):
    """A solve that does not settle exits 2 with a message naming the scenario
    on stderr and prints no numbers (POSIX conventions; MODEL.md section 3)."""
    monkeypatch.setattr(solver.solve_breeding, "__defaults__", (1,))
    path = tmp_path / "study.json"
    path.write_text(json.dumps(injury_raw()), encoding="utf-8")
    result = runner.invoke(app, ["solve", str(path), "--json"])
    assert result.exit_code == 2
    assert "scenario 'baseline'" in result.stderr
    assert "did not settle" in result.stderr
    assert result.stdout == ""
    assert "Traceback" not in result.stderr


def test_grid_check_flags_a_coarse_study_and_not_a_fine_one(tmp_path):
    """The grid check (MODEL.md section 8) warns when the answer still depends
    on the grid: the injury study at 10 energy levels (compared with 20) moves
    by more than 5 %, while the same study at 200 levels (compared with 100)
    does not (grid convergence, Roache 1998)."""
    coarse = tmp_path / "coarse.json"
    coarse.write_text(json.dumps(injury_raw(energy_levels=10, reserve_capacity_mj=30.0)),
                      encoding="utf-8")
    fine = tmp_path / "fine.json"
    fine.write_text(json.dumps(injury_raw(energy_levels=200)), encoding="utf-8")
    flagged = _strict(runner.invoke(app, ["solve", str(coarse), "--json"]).stdout)
    check = flagged["scenarios"][0]["grid_check"]
    assert check["levels_compared"] == [20, 10]
    assert check["warning"] and "larger number of energy levels" in check["warning"]
    calm = _strict(runner.invoke(app, ["solve", str(fine), "--json"]).stdout)
    check = calm["scenarios"][0]["grid_check"]
    assert check["levels_compared"] == [100, 200]
    assert check["warning"] is None
    assert abs(check["fitness_relative_change"]) < 0.05


def test_text_summary_leads_with_the_released_animals(tmp_path):
    """``solve`` text shows the cohort's numbers before the long-run rates, and
    labels the latter as places kept filled; a failing release is warned of."""
    out = runner.invoke(app, ["solve", str(ROOT / "examples" / "stony-fell.json")]).stdout
    assert out.index("Released animals") < out.index("places kept filled")
    assert "WARNING: This release looks like it would fail" in out
    demo = runner.invoke(app, ["solve", str(EXAMPLE)]).stdout
    assert "would fail" not in demo
    assert "Grid check" in demo
