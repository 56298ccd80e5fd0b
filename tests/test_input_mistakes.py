"""Input mistakes a person can type or save: each one a located message, never a crash.

Every test reproduces a report of issue 10 (or a plausibility warning of issue 9)
first. Expected locations follow the project's rule that every input problem names
its cell or JSON path (common practice for located errors); bounds come from
MODEL.md section 1 ("Bounds").
"""

from __future__ import annotations

import json
from pathlib import Path

import openpyxl
import pytest
from typer.testing import CliRunner

from riskdiet.cli import app
from riskdiet.errors import StudyError
from riskdiet.io.load import load_study
from riskdiet.validation import build_study

ROOT = Path(__file__).resolve().parent.parent
DEMO_JSON = ROOT / "examples" / "harrow-vale.json"
DEMO_XLSX = ROOT / "examples" / "harrow-vale.xlsx"


def demo_raw() -> dict:
    return json.loads(DEMO_JSON.read_text())


def problems(raw: dict) -> str:
    with pytest.raises(StudyError) as info:
        build_study(raw)
    return "\n".join(str(p) for p in info.value.problems)


def notices(raw: dict) -> str:
    return "\n".join(str(n) for n in build_study(raw).notices)


def edited_workbook(tmp_path: Path, edit) -> Path:
    wb = openpyxl.load_workbook(DEMO_XLSX)
    edit(wb)
    path = tmp_path / "study.xlsx"
    wb.save(path)
    return path


def cli(*args: str):
    return CliRunner().invoke(app, [str(a) for a in args])


def rejected(path: Path, command: str = "check") -> str:
    """The command exits 2 without traceback, prints nothing to stdout, writes nothing and
    leaves the input byte-identical; returns stderr."""
    before = path.read_bytes()
    listing = sorted(p.name for p in path.parent.iterdir())
    result = cli(command, path)
    assert result.exit_code == 2, (result.output, result.exception)
    assert "Traceback" not in result.stderr
    assert result.stdout == ""
    assert path.read_bytes() == before
    assert sorted(p.name for p in path.parent.iterdir()) == listing
    return result.stderr


# --------------------------------------------------------------------------- crashes

def test_json_prey_without_name_is_located():
    """A JSON prey without ``name`` crashed with AttributeError; now ``prey[0].name``."""
    raw = demo_raw()
    del raw["prey"][0]["name"]
    assert "prey[0].name: expected text, found nothing (blank)" in problems(raw)


@pytest.mark.parametrize("row", ["numbers before the name", "name cleared", "only a note"])
def test_workbook_prey_row_without_name_is_located(tmp_path, row):
    """The three ways of leaving a prey row without a name (issue 10) each name the name
    cell of that row and exit 2 in every command."""
    def edit(wb):
        ws = wb["Prey"]
        if row == "numbers before the name":
            ws["E8"] = 12  # energy typed on a fresh row, name still to come
        elif row == "name cleared":
            ws["A3"] = None
        else:
            ws["L8"] = "to be filled in"
    path = edited_workbook(tmp_path, edit)
    where = "Prey!A3 (name)" if row == "name cleared" else "Prey!A8 (name)"
    for command in ("check", "solve", "compare", "rank"):
        assert where in rejected(path, command)


def test_huge_integer_and_deep_nesting_are_located(tmp_path):
    """An integer of 10^400 (float() overflows) and JSON nested 100,000 deep (RecursionError)
    are input errors, not tracebacks."""
    raw = demo_raw()
    raw["predator"]["population"] = 10**400
    text = problems(raw)
    assert "predator.population: expected a whole number from 0 to 1e+06" in text
    assert "about 400 digits" in text
    deep = tmp_path / "deep.json"
    deep.write_text("[" * 100_000 + "]" * 100_000)
    assert "nested too deeply" in rejected(deep)
    long = tmp_path / "long.json"
    long.write_text('{"predator": {"population": ' + "9" * 5000 + "}}")
    assert "long.json" in rejected(long)


@pytest.mark.parametrize(("field", "value", "expected"), [
    ("season_days", 1e9, "a whole number from 1 to 3650"),
    ("population", 1e308, "a whole number from 0 to 1e+06"),
    ("population", 1_000_001, "a whole number from 0 to 1e+06"),
])
def test_upper_bounds_of_model_section_1(field, value, expected):
    """MODEL.md section 1, Bounds: season_days <= 3650, population <= 1,000,000 (season_days
    1e9 tried to allocate 1.5 TiB; population 1e308 put infinity into JSON)."""
    raw = demo_raw()
    raw["predator"][field] = value
    assert f"predator.{field}: expected {expected}" in problems(raw)


def test_bounds_hold_at_the_limit():
    """The bounds themselves are allowed (MODEL.md section 1: <=)."""
    raw = demo_raw()
    raw["predator"].update(population=1_000_000, season_days=3650)
    raw["prey"][0]["name"] = "x" * 80
    for row in raw["uncertainty"]:  # the demo's ranges name the prey
        if row["prey"] == "forest deer":
            row["prey"] = "x" * 80
    build_study(raw)


@pytest.mark.parametrize(("name", "fragment"), [
    ("x" * 81, "a name of at most 80 characters"),
    ("x" * 450, "a name of at most 80 characters"),
    ("deer\x00", "U+0000"),
    ("deer\x07bell", "U+0007"),
    ("deer\ud800", "U+D800"),
    ("two\nlines", "on one line"),
])
def test_names_are_short_printable_single_lines(name, fragment):
    """Names of prey, groups and scenarios: at most 80 printable characters, no control
    characters (MODEL.md section 1, Bounds); NUL, lone surrogates and a 450-character name
    crashed the brief or the console."""
    for place in ("name", "group"):
        raw = demo_raw()
        raw["prey"][1][place] = name
        assert f"prey[1].{place}: " in problems(raw)
        assert fragment in problems(raw)
    raw = demo_raw()
    raw["scenarios"][0]["name"] = name
    assert "scenarios[0].name: " in problems(raw) and fragment in problems(raw)


def test_size_guard_refuses_huge_arrays_before_allocating():
    """MODEL.md section 1: a study whose arrays would need more than 2 GiB (levels x days x
    prey) is refused with its estimated size: 8 bytes x 2 conditions x 2001 levels x 3650
    days x 31 (prey + 1) = 3.6e9 bytes = 3.4 GiB (arithmetic)."""
    raw = demo_raw()
    raw["predator"].update(currency="season", season_days=3650, energy_levels=2000)
    raw["prey"] = [dict(raw["prey"][4], name=f"hare {i}") for i in range(30)]
    text = problems(raw)
    assert "predator.energy_levels: expected a study whose arrays fit in 2 GiB" in text
    assert "2000 levels × 3650 day(s) × 30 prey, about 3.4 GiB" in text


# --------------------------------------------------------------------------- percent signs

@pytest.mark.parametrize(("section", "index", "field", "value"), [
    ("prey", 0, "energy_mj", "45%"),
    ("predator", None, "energy_levels", "5000%"),
    ("prey", 0, "handling_days", "50 %"),
])
def test_percent_sign_only_where_model_allows_it(section, index, field, value):
    """A % sign divided any number by 100 ("45%" MJ became 0.45 MJ); MODEL.md section 1
    accepts it only for fractions and probabilities."""
    raw = demo_raw()
    record = raw[section] if index is None else raw[section][index]
    record[field] = value
    where = f"{section}.{field}" if index is None else f"{section}[{index}].{field}"
    assert f"{where}: expected" in problems(raw)
    assert "% sign is accepted only for fractions and probabilities" in problems(raw)


def test_percent_sign_accepted_for_fractions_and_probabilities():
    """The listed fields of MODEL.md section 1 take "30 %" as 0.3 (÷ 100)."""
    raw = demo_raw()
    raw["prey"][0]["capture_success"] = "30 %"
    raw["predator"]["start_reserves"] = "40%"
    raw["predator"]["background_mortality"] = "0.1 %"
    study = build_study(raw)
    assert study.prey[0].capture_success == pytest.approx(0.3)
    assert study.predator.start_reserves == pytest.approx(0.4)
    assert study.predator.background_mortality == pytest.approx(0.001)


# --------------------------------------------------------------------------- located

def test_scenario_change_faults_point_at_prey_and_field_keys():
    """Errors in a JSON scenario change pointed at ``.value`` when the fault was its ``prey``
    or ``field`` key; a misspelt name offers the closest one."""
    raw = demo_raw()
    raw["scenarios"] = [{"name": "s", "changes": [
        {"prey": "wild bore", "field": "energy_mj", "change": "set", "value": 1},
        {"prey": "wild boar", "field": "energy_mg", "change": "set", "value": 1}]}]
    text = problems(raw)
    assert 'scenarios[0].changes[0].prey: expected the name of a prey type' in text
    assert '"wild bore" (did you mean "wild boar"?)' in text
    assert 'scenarios[0].changes[1].field: expected a prey field' in text
    assert '"energy_mg" (did you mean "energy_mj"?)' in text


def test_report_date_in_local_style_is_located_by_check(tmp_path):
    """``report_date`` typed "01/03/2026" passed check and solve, then brief blamed
    settings.report_date; now check names the cell and suggests the ISO date."""
    def edit(wb):
        wb["Settings"]["B3"] = "15/03/2027"
    path = edited_workbook(tmp_path, edit)
    err = rejected(path)
    assert "Settings!B3 (report_date): expected a date written YYYY-MM-DD" in err
    assert "2027-03-15" in err


def test_settings_map_faults_are_located_at_settings_cells(tmp_path):
    """A bad map_x was reported as settings.map_x; a map cell outside a field's range was
    blamed on --x/--y by solve only; map_x without map_y was ignored. check finds all."""
    def edit(wb):
        wb["Settings"]["B5"] = "wild boar:energy_mj=-10:40:5"
    err = rejected(edited_workbook(tmp_path, edit))
    assert "Settings!B5 (map_x)/Settings!B6 (map_y): map cell x=-10" in err
    assert "--x" not in err

    def edit2(wb):
        wb["Settings"]["B5"] = "wild boar:energy=0:1:5"
    err = rejected(edited_workbook(tmp_path, edit2))
    assert 'Settings!B5 (map_x): expected a prey field' in err
    assert 'did you mean "energy_mj"?' in err

    def edit3(wb):
        wb["Settings"]["B6"] = None
    err = rejected(edited_workbook(tmp_path, edit3))
    assert "Settings!B6 (map_y): expected map_y as well" in err


def test_probability_typed_as_percentage_number_gets_a_hint():
    """30 for 0.3: say "type 0.3 or 30 %"."""
    raw = demo_raw()
    raw["prey"][0]["capture_success"] = 30
    assert "(for 30 %, type 0.3 or 30 %), found 30" in problems(raw)


def test_decimal_comma_and_date_converted_number_get_hints(tmp_path):
    """"0,4" in a number cell: a decimal comma; "1/10" turned into a date by the spreadsheet:
    say so (issue 10)."""
    import datetime as dt

    def edit(wb):
        wb["Prey"]["G2"] = "0,4"
        wb["Prey"]["F3"] = dt.datetime(2026, 1, 10)
    err = rejected(edited_workbook(tmp_path, edit))
    assert 'Prey!G2 (capture_success): expected a number from 0 to 1, found "0,4" (a decimal ' \
           "comma? riskdiet reads a decimal point: 0.4)" in err
    assert "Prey!F3 (handling_days)" in err
    assert "the spreadsheet converted the entry to a date" in err


def test_misspelt_field_names_offer_the_closest():
    """A misspelt field name offers the closest existing name ("did you mean …?")."""
    raw = demo_raw()
    raw["prey"][0]["capture_sucess"] = 0.3
    assert 'did you mean "capture_success"?' in problems(raw)


# --------------------------------------------------------------------------- warnings

@pytest.mark.parametrize(("edit", "where", "fragment"), [
    (lambda r: r["predator"].update(hunting_ability=3.5), "predator.hunting_ability",
     "over three times typical"),
    (lambda r: r["prey"][0].update(handling_days=36), "prey[0].handling_days",
     "hours typed as days?"),
    (lambda r: r["predator"].update(background_mortality=0.2), "predator.background_mortality",
     "an annual figure typed as daily?"),
    (lambda r: r["scenarios"][0]["changes"][0].update(value=30), "scenarios[0].changes[0].value",
     "meant 30 %?"),
    (lambda r: r["prey"][0].update(density_per_km2=2), "prey[0].density_per_km2",
     "encounters_per_day is used and the density is ignored"),
    (lambda r: [p.update(capture_success=0) for p in r["prey"]], "prey[0].capture_success",
     "no attack can ever succeed"),
    (lambda r: [p.update(energy_mj=0.1) for p in r["prey"]], "prey[0].energy_mj",
     "no prey pays for its day"),
])
def test_plausibility_warnings_name_their_cell(edit, where, fragment):
    """Issue 9 item 6: likely slips that pass the range checks are warned about at their
    place (thresholds from the issue: ability > 3, handling > 30 days, mortality > 0.01 a
    day, scale >= 10, density and encounters both given, all capture success 0, no prey
    paying for a day)."""
    raw = demo_raw()
    assert fragment not in notices(raw)
    edit(raw)
    line = next(line for line in notices(raw).splitlines() if fragment in line)
    assert line.startswith(where + ": ")


def test_plausibility_warnings_shown_by_solve_and_brief(tmp_path):
    """Warnings that check shows appear at the top of solve's summary and on stderr for
    brief and compare (issue 9 item 6; issue 10: every command shows check's warnings)."""
    raw = demo_raw()
    raw["predator"]["hunting_ability"] = 3.5
    raw["settings"].pop("map_x")
    raw["settings"].pop("map_y")
    raw["settings"]["draws"] = 8  # the brief's uncertainty section, kept quick
    path = tmp_path / "study.json"
    path.write_text(json.dumps(raw))
    solved = cli("solve", path)
    assert solved.exit_code == 0
    assert solved.stdout.lstrip().startswith("Warnings (1)")
    assert "predator.hunting_ability" in solved.stdout.split("Scenario:")[0]
    for args in (("compare", path), ("brief", path, "--out", tmp_path / "b.pdf"),
                 ("solve", path, "--json")):
        result = cli(*args)
        assert result.exit_code == 0, result.output
        assert "predator.hunting_ability: hunting ability 3.5" in result.stderr


def test_load_study_runs_the_map_checks(tmp_path):
    """load_study (used by every command) runs the checks of a map asked for in settings,
    so that check refuses what solve would refuse."""
    raw = demo_raw()
    raw["settings"]["map_y"] = "hunting_ability=-1:1.6:5"
    path = tmp_path / "study.json"
    path.write_text(json.dumps(raw))
    with pytest.raises(StudyError) as info:
        load_study(path)
    assert "settings.map_x/settings.map_y: map cell" in str(info.value)
    assert "predator.hunting_ability" in str(info.value)
