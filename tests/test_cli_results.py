"""The result commands through typer's CliRunner: compare, rank, solve --out/--csv."""

from __future__ import annotations

import json
from pathlib import Path

import openpyxl
from typer.testing import CliRunner

from riskdiet.cli import app

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "harrow-vale.json"
runner = CliRunner()


def test_compare_prints_every_scenario_and_deltas():
    """compare prints one row per scenario with signed changes against the baseline and the
    findings (the layout the command's help promises; common practice for comparisons)."""
    result = runner.invoke(app, ["compare", str(EXAMPLE)])
    assert result.exit_code == 0, result.stderr
    for name in ("baseline", "flocks guarded", "boar culled", "poor hunters released"):
        assert name in result.stdout
    assert "change against the baseline" in result.stdout
    assert "%)" in result.stdout  # percentage changes
    assert "enters the diet" in result.stdout or "at all reserves" in result.stdout


def test_rank_prints_classic_model():
    """rank prints Charnov's rate-maximising diet and Gilliam's risk-adjusted diet per
    scenario (Charnov 1976; Werner & Gilliam 1984)."""
    result = runner.invoke(app, ["rank", str(EXAMPLE)])
    assert result.exit_code == 0, result.stderr
    assert "Rate-maximising diet (Charnov 1976)" in result.stdout
    assert "Gilliam" in result.stdout
    assert result.stdout.count("Scenario:") == 4


def test_solve_json_has_kills_classic_findings():
    """solve --json carries classic, steady_state and findings per scenario, with the
    documented keys."""
    result = runner.invoke(app, ["solve", str(EXAMPLE), "--json"])
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    s = doc["scenarios"][0]
    assert set(s["classic"]) >= {"ranking", "rate_maximizing_diet", "rate_mj_per_day",
                                 "risk_adjusted_diet"}
    assert set(s["steady_state"]) >= {
        "kills_per_predator_per_day", "kills_per_year_population", "diet_share_by_number",
        "diet_share_by_energy", "share_of_time_injured", "mean_reserves_fraction",
        "expected_lifetime_days", "expected_breeding_events"}
    assert s["findings"] and all(isinstance(f, str) for f in s["findings"])
    shares = s["steady_state"]["diet_share_by_number"]
    assert abs(sum(shares.values()) - 1) < 1e-12  # shares of a whole sum to one


def test_solve_out_writes_workbook_and_refuses_overwrite(tmp_path):
    """--out writes a workbook that reloads; a second run without --force exits 2 and keeps
    the file; --csv writes the tables (common practice for tools writing user files)."""
    out = tmp_path / "r.xlsx"
    result = runner.invoke(app, ["solve", str(EXAMPLE), "--out", str(out),
                                 "--csv", str(tmp_path / "csv")])
    assert result.exit_code == 0, result.stderr
    assert "Summary" in openpyxl.load_workbook(out).sheetnames
    assert (tmp_path / "csv" / "kills.csv").exists()
    before = out.read_bytes()
    again = runner.invoke(app, ["solve", str(EXAMPLE), "--out", str(out)])
    assert again.exit_code == 2
    assert "--force" in again.stderr
    assert "Traceback" not in again.stderr
    assert out.read_bytes() == before
    forced = runner.invoke(app, ["solve", str(EXAMPLE), "--out", str(out), "--force"])
    assert forced.exit_code == 0


def test_solve_out_needs_xlsx_name(tmp_path):
    """--out must name an .xlsx file; anything else exits 2 and writes nothing."""
    out = tmp_path / "r.pdf"
    result = runner.invoke(app, ["solve", str(EXAMPLE), "--out", str(out)])
    assert result.exit_code == 2
    assert ".xlsx" in result.stderr
    assert not out.exists()
