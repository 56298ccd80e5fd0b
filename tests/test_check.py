"""`riskdiet check`: what was read, with derived values worked out and marked."""

from __future__ import annotations

import json
import math
from pathlib import Path

from typer.testing import CliRunner

from riskdiet.cli import app
from riskdiet.report.check import check_text
from riskdiet.validation import build_study

ROOT = Path(__file__).resolve().parent.parent
DEMO_JSON = ROOT / "examples" / "harrow-vale.json"
DEMO_XLSX = ROOT / "examples" / "harrow-vale.xlsx"


def run_check(path: Path):
    return CliRunner().invoke(app, ["check", str(path)])


def line_of(text: str, start: str) -> str:
    return next(line for line in text.splitlines() if line.strip().startswith(start))


def test_prey_table_shows_encounters_and_daily_encounter_probability():
    """p = 1 - exp(-m) is the chance of at least one Poisson encounter in a day (MODEL.md
    section 2; the zero term of the Poisson distribution). Worked by hand: forest deer
    m = 1.2 gives 1 - e^-1.2 = 0.6988; upland ewe by density, m = 12 km²/day x 0.02/km² =
    0.24, gives 1 - e^-0.24 = 0.2134."""
    result = run_check(DEMO_JSON)
    assert result.exit_code == 0, result.output
    deer = line_of(result.stdout, "forest deer")
    assert "1.2" in deer.split() and f"{1 - math.exp(-1.2):.4f}" in deer.split()
    ewe = line_of(result.stdout, "upland ewe")
    m = 12 * 0.02
    assert f"{m:.4g}" in ewe.split() and f"{1 - math.exp(-m):.4f}" in ewe.split()
    assert "search area × density" in ewe
    assert "given" in deer


def test_estimated_daily_cost_is_marked_with_kleibers_law():
    """A blank daily cost with body mass 40 kg is estimated by Kleiber's law: basal
    70 x 40^0.75 = 1113 kcal/day = 4.66 MJ/day at 4.184 kJ/kcal (Kleiber 1961, The Fire
    of Life), times the activity multiplier 2.5 = 11.65 MJ/day, shown as estimated."""
    raw = json.loads(DEMO_JSON.read_text())
    del raw["predator"]["daily_cost_mj"]
    raw["predator"]["body_mass_kg"] = 40
    text = check_text(build_study(raw))
    basal_kcal = 70 * 40**0.75
    basal_mj = basal_kcal * 4.184 / 1000
    assert round(basal_kcal) == 1113 and round(basal_mj, 2) == 4.66
    row = line_of(text, "daily_cost_mj")
    assert f"{2.5 * basal_mj:.4g} *" in row
    note = line_of(text, "* daily_cost_mj")
    assert "estimated from body mass (Kleiber 1961)" in note
    assert f"{basal_kcal:.0f} kcal/day" in note and f"{basal_mj:.3g} MJ/day" in note
    assert "activity multiplier 2.5" in note
    assert "common-practice assumption, replace with local data" in note


def test_given_daily_cost_is_not_marked():
    """A daily cost typed in is used as given (MODEL.md section 1), so nothing is
    marked as estimated."""
    text = check_text(build_study(json.loads(DEMO_JSON.read_text())))
    assert "estimated from body mass" not in text
    assert line_of(text, "daily_cost_mj").split()[1:3] == ["5", "MJ/day"]


def test_check_lists_scenarios_uncertainty_settings_and_warnings():
    """Every scenario change is listed in words (Change.describe), every uncertainty
    range, the settings, and each warning of the study (riskdiet's notices)."""
    raw = json.loads(DEMO_JSON.read_text())
    raw["prey"][0]["energy_mj"] = 150  # more than the reserve capacity: a warning
    study = build_study(raw)
    text = check_text(study)
    for sc in study.scenarios:
        assert sc.name in text
        for ch in sc.changes:
            assert ch.describe() in text
    unc = next(line for line in text.splitlines()
               if line.split()[:3] == ["wild", "boar", "injury_chance"])
    assert unc.split()[3:8] == ["0.2", "0.5", "triangular", "0.35", "(every)"]
    assert "2026-12-01" in line_of(text, "report_date")
    assert study.notices and all(str(n) in text for n in study.notices)
    assert "wildlife law" in text


def test_check_reads_the_workbook_like_the_json():
    """The demo workbook and the demo JSON give the same check text apart from the
    source line (the two files hold one study; scripts/make_demo_workbook.py)."""
    a, b = run_check(DEMO_XLSX), run_check(DEMO_JSON)
    assert a.exit_code == b.exit_code == 0

    def body(text):
        return [line for line in text.splitlines() if not line.startswith("Read from")]

    assert body(a.stdout) == body(b.stdout)


def test_check_exits_2_with_problems_on_stderr(tmp_path):
    """An invalid study exits with status 2, problems on stderr, nothing on stdout
    (riskdiet's CLI contract; common practice for command-line tools)."""
    raw = json.loads(DEMO_JSON.read_text())
    raw["prey"][2]["capture_success"] = 1.4
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(raw))
    result = run_check(path)
    assert result.exit_code == 2
    assert result.stdout == ""
    assert "prey[2].capture_success: expected a number from 0 to 1, found 1.4" in result.stderr


def test_check_lists_the_field_diet_records():
    """`check` shows every Observations row as read (count, kind, detection, source,
    predator-days) and how many compositions they form (MODEL.md section 10:
    rows sharing scenario, kind and source form one composition; a rate row is
    none). Expected values are those typed into the illustrative records study."""
    path = DEMO_JSON.parent / "harrow-vale-records.json"
    raw = json.loads(path.read_text(encoding="utf-8"))
    result = run_check(path)
    assert result.exit_code == 0, result.output
    rows = raw["observations"]
    sources = {(r.get("scenario"), r.get("kind", "kills"), r.get("source")) for r in rows
               if r.get("prey")}
    assert f"Observations ({len(rows)} rows, {len(sources)} composition(s))" in result.stdout
    assert "(rate row)" in result.stdout
