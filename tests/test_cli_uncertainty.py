"""`riskdiet uncertainty`: JSON layout fixed by issue 12, text, workbook sheets, errors."""

from __future__ import annotations

import json

import pandas as pd
from openpyxl import load_workbook
from typer.testing import CliRunner

from riskdiet.cli import app
from tests.analysis.test_uncertainty import small

RANGES = [{"prey": "sheep", "field": "capture_success", "low": 0.3, "high": 0.8},
          {"prey": "hedgehog", "field": "energy_mj", "low": 0.005, "high": 0.02},
          {"field": "daily_cost_mj", "low": 1.5, "high": 2.5, "shape": "triangular",
           "mode": 2}]


def _no_constant(name):
    raise ValueError(f"{name} in JSON output")


def write(tmp_path, ranges=RANGES, **settings):
    path = tmp_path / "study.json"
    path.write_text(json.dumps(small(ranges, **settings)))
    return path


def test_json_layout_is_the_one_the_issue_fixes(tmp_path):
    """Issue 12 fixes the keys of `uncertainty --json` (tidy records, pandas-ready) and the
    project rule forbids NaN/Infinity (parsed with a parse_constant that raises). The
    probabilities better/equal/worse are shares of the same draws and sum to 1."""
    study = write(tmp_path)
    result = CliRunner().invoke(app, ["uncertainty", str(study), "--json", "--draws", "8",
                                      "--seed", "2", "--quiet"])
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout, parse_constant=_no_constant)
    assert list(doc) == ["draws", "seed", "goal", "scenarios", "sobol", "elasticities",
                         "measure_next"]
    assert (doc["draws"], doc["seed"], doc["goal"]) == (8, 2, "fewer:livestock")
    assert [s["name"] for s in doc["scenarios"]] == ["baseline", "sheep penned"]
    for s in doc["scenarios"]:
        assert list(s) == ["name", "intervals", "probability_better", "probability_equal",
                           "probability_worse", "probability_in_diet",
                           "classic_disagreement_share"]
        frame = pd.DataFrame(s["intervals"])
        assert list(frame.columns) == ["outcome", "name", "median", "p05", "p95"]
        assert set(frame.outcome) == {"fitness_at_start", "kills_per_predator_per_year",
                                      "kills_per_predator_per_year_by_group", "cohort_kills",
                                      "cohort_kills_by_group"}
        assert (frame.p05 <= frame["median"]).all() and (frame["median"] <= frame.p95).all()
        assert frame[frame.outcome == "fitness_at_start"]["name"].isna().all()
        total = s["probability_better"] + s["probability_equal"] + s["probability_worse"]
        assert abs(total - 1) < 1e-12
        assert set(s["probability_in_diet"]) == {"deer", "sheep", "hedgehog"}
    sobol = pd.DataFrame(doc["sobol"])
    assert list(sobol.columns) == ["outcome", "name", "input", "first", "first_low",
                                   "first_high", "total", "total_low", "total_high"]
    assert set(sobol.input) == {"sheep:capture_success", "hedgehog:energy_mj", "daily_cost_mj"}
    elastic = pd.DataFrame(doc["elasticities"])
    assert list(elastic.columns) == ["input", "value", "has_range"]
    assert elastic.set_index("input").loc["sheep:capture_success", "has_range"]
    assert not elastic.set_index("input").loc["deer:energy_mj", "has_range"]
    assert sorted(doc["measure_next"]) == sorted(set(sobol.input))


def test_no_sobol_text_words_and_progress_quiet_in_ci(tmp_path, monkeypatch):
    """Without Sobol the JSON has no indices and no ranking; the text gives probabilities in
    IPCC AR5 words with their number (Mastrandrea et al. 2010) and no progress bar when CI
    is set (rich would otherwise draw one)."""
    study = write(tmp_path)
    monkeypatch.setenv("CI", "1")
    runner = CliRunner()
    result = runner.invoke(app, ["uncertainty", str(study), "--json", "--draws", "6",
                                 "--no-sobol"])
    doc = json.loads(result.stdout, parse_constant=_no_constant)
    assert doc["sobol"] == [] and doc["measure_next"] == []
    text = runner.invoke(app, ["uncertainty", str(study), "--draws", "6", "--no-sobol"])
    assert text.exit_code == 0, text.output
    assert "does better than the baseline" not in text.stdout  # phrase of the brief
    assert "virtually certain (p = 1.00)" in text.stdout  # penned sheep: fewer kills
    assert "solving draws" not in text.stderr


def test_out_writes_sheets_and_refuses_to_overwrite(tmp_path):
    """--out writes the results workbook with the uncertainty sheets; an existing file is
    kept unless --force (project rule: never overwrite without --force)."""
    study = write(tmp_path)
    out = tmp_path / "results.xlsx"
    args = ["uncertainty", str(study), "--draws", "6", "--out", str(out), "--quiet"]
    result = CliRunner().invoke(app, args)
    assert result.exit_code == 0, result.output
    names = load_workbook(out, read_only=True).sheetnames
    assert {"Uncertainty intervals", "Uncertainty comparisons", "Sobol indices",
            "Elasticities"} <= set(names)
    before = out.read_bytes()
    again = CliRunner().invoke(app, args)
    assert again.exit_code == 2 and out.read_bytes() == before
    assert CliRunner().invoke(app, [*args, "--force"]).exit_code == 0


def test_errors_go_to_stderr_with_exit_2(tmp_path):
    """A study without ranges, a bad --out ending and a failing draw are errors (exit 2, no
    traceback); a draw whose solve fails names the draw's input values (MODEL.md
    section 9)."""
    runner = CliRunner()
    none = write(tmp_path, ranges=[])
    result = runner.invoke(app, ["uncertainty", str(none)])
    assert result.exit_code == 2 and "at least one range" in result.stderr
    result = runner.invoke(app, ["uncertainty", str(write(tmp_path)), "--out", "x.csv"])
    assert result.exit_code == 2 and ".xlsx" in result.stderr
    # background and injured extra mortality must sum below 1: some draws break that rule
    bad = write(tmp_path, ranges=[{"field": "background_mortality", "low": 0.1,
                                   "high": 0.9}])
    raw = json.loads(bad.read_text())
    raw["predator"]["injured_extra_mortality"] = 0.5
    bad.write_text(json.dumps(raw))
    result = runner.invoke(app, ["uncertainty", str(bad), "--draws", "4", "--no-sobol"])
    assert result.exit_code == 2, result.output
    assert "background_mortality = " in result.stderr and "Traceback" not in result.output
