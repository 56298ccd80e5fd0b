"""Reading study workbooks: same study as the JSON file, every fault named by its cell.

Cell positions follow the documented layout (riskdiet.io.workbook): Predator
rows in field order from row 2 (name, reserve_capacity_mj, energy_levels,
daily_cost_mj, ...); Prey columns A name, B group, C density_per_km2,
D encounters_per_day, E energy_mj, F handling_days, G capture_success,
H skill_dependent, ..., L note; Scenarios A scenario .. F note; Uncertainty
A prey .. G note. In the demo workbook the prey rows are forest deer (2), wild
boar (3), upland ewe (4), mountain hare (5), heath grouse (6).
"""

from __future__ import annotations

import hashlib
import io
import json
import re
import zipfile
from pathlib import Path

import openpyxl
import pytest
from openpyxl.styles import PatternFill
from typer.testing import CliRunner

from riskdiet.cli import app
from riskdiet.errors import StudyError
from riskdiet.io.json_study import read_json_study
from riskdiet.io.load import load_study
from riskdiet.io.template import write_template
from riskdiet.io.workbook import read_workbook_study

ROOT = Path(__file__).resolve().parents[2]
DEMO_JSON = ROOT / "examples" / "harrow-vale.json"
DEMO_XLSX = ROOT / "examples" / "harrow-vale.xlsx"


def study_key(study) -> dict:
    """What a study says, without where it came from."""
    return {
        "predator": study.predator,
        "prey": study.prey,
        "notes": study.notes,
        "settings": study.settings,
        "scenarios": [(s.name, s.note, [(c.prey, c.field, c.change, c.value) for c in s.changes])
                      for s in study.scenarios],
        "uncertainty": [(u.prey, u.field, u.low, u.high, u.shape, u.mode, u.note)
                        for u in study.uncertainty],
    }


def edited_demo(tmp_path: Path, edit, name: str = "study.xlsx") -> Path:
    """The demo workbook with an edit applied, saved in tmp_path."""
    wb = openpyxl.load_workbook(DEMO_XLSX)
    edit(wb)
    path = tmp_path / name
    wb.save(path)
    return path


def problems_of(path: Path) -> list[str]:
    with pytest.raises(StudyError) as info:
        read_workbook_study(path)
    return [str(p) for p in info.value.problems]


def rejected_by_cli(path: Path) -> str:
    """Run `riskdiet check`; it must exit 2, write nothing and leave the input byte-identical."""
    before = path.read_bytes()
    listing = sorted(p.name for p in path.parent.iterdir())
    result = CliRunner().invoke(app, ["check", str(path)])
    assert result.exit_code == 2, result.output
    assert result.stdout == ""
    assert path.read_bytes() == before
    assert sorted(p.name for p in path.parent.iterdir()) == listing
    return result.stderr


def fill_by_hand(template: Path, raw: dict, out: Path) -> None:
    """Fill a blank template cell by cell as a user would, finding places by their names."""
    wb = openpyxl.load_workbook(template)
    ws = wb["Predator"]
    rows = {ws.cell(r, 1).value: r for r in range(2, ws.max_row + 1)}
    predator = dict(raw["predator"])
    for name, note in predator.pop("notes", {}).items():
        ws.cell(rows[name], 4, note)
    for name, value in predator.items():
        ws.cell(rows[name], 2, value)
    ws = wb["Prey"]
    cols = {c.value: c.column for c in ws[1]}
    for r, prey in enumerate(raw["prey"], start=2):
        for name, value in prey.items():
            ws.cell(r, cols[name], value)
    ws = wb["Scenarios"]
    r = 2
    for sc in raw["scenarios"]:
        for j, ch in enumerate(sc["changes"]):
            for c, value in enumerate((sc["name"], ch["prey"], ch["field"], ch["change"],
                                       ch["value"], sc["note"] if j == 0 else None), start=1):
                ws.cell(r, c, value)
            r += 1
    ws = wb["Uncertainty"]
    cols = {c.value: c.column for c in ws[1]}
    for r, item in enumerate(raw["uncertainty"], start=2):
        for name, value in item.items():
            ws.cell(r, cols[name], value)
    ws = wb["Settings"]
    rows = {ws.cell(r, 1).value: r for r in range(2, ws.max_row + 1)}
    for name, value in raw["settings"].items():
        ws.cell(rows[name], 2, value)
    wb.save(out)


# --------------------------------------------------------------------------- same study


def test_hand_filled_template_gives_the_json_study(tmp_path):
    """Template -> filled cell by cell with openpyxl -> read gives the study the JSON
    reader builds from the same values (reference: riskdiet's JSON reader; MODEL.md
    section 1 names both)."""
    raw = json.loads(DEMO_JSON.read_text())
    template = write_template(tmp_path / "blank.xlsx")
    fill_by_hand(template, raw, tmp_path / "filled.xlsx")
    from_xlsx = read_workbook_study(tmp_path / "filled.xlsx")
    assert study_key(from_xlsx) == study_key(read_json_study(DEMO_JSON))
    assert len(from_xlsx.scenarios) == len(raw["scenarios"]) + 1


def test_demo_workbook_is_the_demo_json(tmp_path):
    """examples/harrow-vale.xlsx holds the same study as examples/harrow-vale.json
    (regenerate with scripts/make_demo_workbook.py); its SHA-256 is that of its bytes
    (hashlib, FIPS 180-4)."""
    from_xlsx = load_study(DEMO_XLSX)
    from_json = load_study(DEMO_JSON)
    assert study_key(from_xlsx) == study_key(from_json)
    assert from_xlsx.source_sha256 == hashlib.sha256(DEMO_XLSX.read_bytes()).hexdigest()
    assert from_xlsx.notices == ()


def test_column_order_case_spaces_and_other_sheets_do_not_matter(tmp_path):
    """Headers in another order and case with spaces, sheet names in lower case and an
    extra sheet give the same study (common practice: spreadsheets are edited freely)."""
    def edit(wb):
        rows = [[c.value for c in row] for row in wb["Prey"].iter_rows()]
        del wb["Prey"]
        ws = wb.create_sheet(" PREY")
        order = list(reversed(range(len(rows[0]))))
        for r, row in enumerate(rows, start=1):
            for c, i in enumerate(order, start=1):
                ws.cell(r, c, row[i])
        ws.cell(1, 1, "  NOTE ")
        ws.cell(1, len(order), " Name")
        wb["Scenarios"].title = "tmp"  # openpyxl refuses a same-name rename
        wb["tmp"].title = "scenarios"
        wb.create_sheet("my own data")["A1"] = "anything"
    path = edited_demo(tmp_path, edit)
    study = read_workbook_study(path)
    assert study_key(study) == study_key(read_json_study(DEMO_JSON))
    assert any("my own data" in str(n) and "not read" in str(n) for n in study.notices)


def test_blank_rows_and_styled_empty_rows_are_skipped(tmp_path):
    """Blank rows between prey rows and hundreds of styled but empty rows below them
    (openpyxl counts them in max_row; openpyxl documentation) change nothing."""
    def edit(wb):
        ws = wb["Prey"]
        ws.insert_rows(4)
        for r in range(40, 400):
            ws.cell(r, 3).fill = PatternFill("solid", fgColor="FFFF00")
        wb["Scenarios"].insert_rows(3, amount=2)
    path = edited_demo(tmp_path, edit)
    assert openpyxl.load_workbook(path)["Prey"].max_row >= 399
    assert study_key(read_workbook_study(path)) == study_key(read_json_study(DEMO_JSON))


def test_percentages_as_text_and_as_percent_format(tmp_path):
    """A percent-formatted cell stores the fraction (0.25 shows as 25 %), and the text
    "25 %" reads as 0.25 too (common practice in spreadsheets)."""
    def edit(wb):
        ws = wb["Prey"]
        ws["G2"] = "25 %"
        ws["G3"] = 0.4
        ws["G3"].number_format = "0%"
        ws["G4"] = "70%"
    study = read_workbook_study(edited_demo(tmp_path, edit))
    assert [p.capture_success for p in study.prey[:3]] == pytest.approx([0.25, 0.4, 0.7])


def test_yes_no_words_booleans_and_numbers(tmp_path):
    """yes/no, TRUE/FALSE (typed or as spreadsheet booleans) and 1/0 all read as yes or
    no (common practice)."""
    def edit(wb):
        ws = wb["Prey"]
        for r, value in zip(range(2, 7), ("Yes", False, "TRUE", 1, 0), strict=True):
            ws.cell(r, 8, value)
    study = read_workbook_study(edited_demo(tmp_path, edit))
    assert [p.skill_dependent for p in study.prey] == [True, False, True, True, False]


def test_formula_with_saved_result_is_read(tmp_path):
    """A formula cell counts with the result a spreadsheet program saved with it
    (openpyxl documentation: data_only=True reads the cached value). The cached value is
    written into the file's XML the way a spreadsheet program stores it (ECMA-376 part 1,
    18.3.1.4 c element: f holds the formula, v its value)."""
    path = edited_demo(tmp_path, lambda wb: wb["Prey"].__setitem__("E4", "=E2*2"))
    buffer = io.BytesIO()
    with zipfile.ZipFile(path) as src, zipfile.ZipFile(buffer, "w") as dst:
        for info in src.infolist():
            data = src.read(info.filename)
            if b"<f>E2*2</f>" in data:
                data, n = re.subn(rb"<f>E2\*2</f><v ?/>", b"<f>E2*2</f><v>90</v>", data)
                assert n == 1
            dst.writestr(info, data)
    path.write_bytes(buffer.getvalue())
    study = read_workbook_study(path)
    assert study.prey[2].energy_mj == 90.0


def test_dates_in_text_fields_read_as_iso_dates(tmp_path):
    """A date typed into report_date (which spreadsheet programs turn into a date cell)
    reads back as YYYY-MM-DD (ISO 8601)."""
    import datetime

    def edit(wb):
        ws = wb["Settings"]
        ws["B3"] = datetime.datetime(2027, 3, 4)
    study = read_workbook_study(edited_demo(tmp_path, edit))
    assert study.settings.report_date == "2027-03-04"


def test_contiguous_rows_of_one_scenario_form_one_scenario(tmp_path):
    """Several rows with the same scenario name, one below the other, are one scenario
    with several changes, in row order (the documented layout)."""
    def edit(wb):
        ws = wb["Scenarios"]
        ws.insert_rows(3)
        for c, value in enumerate(("Flocks guarded ", "upland ewe", "capture_success",
                                   "scale", 0.5, "and fewer successes"), start=1):
            ws.cell(3, c, value)
    study = read_workbook_study(edited_demo(tmp_path, edit))
    guarded = study.scenario("flocks guarded")
    assert [(c.field, c.value) for c in guarded.changes] == [("density_per_km2", 0.2),
                                                            ("capture_success", 0.5)]
    assert guarded.note.endswith("and fewer successes")
    assert len(study.scenarios) == 4


def test_unit_column_changed_gives_a_warning(tmp_path):
    """A unit typed over the template's unit is suspicious (the value is read in the
    field's unit, MODEL.md section 1): the study is valid but warns, naming the cell."""
    path = edited_demo(tmp_path, lambda wb: wb["Predator"].__setitem__("C5", "kcal/day"))
    study = read_workbook_study(path)
    assert any(n.where == "Predator!C5 (daily_cost_mj)" and "kcal/day" in n.message
               for n in study.notices)
    result = CliRunner().invoke(app, ["check", str(path)])
    assert result.exit_code == 0
    assert "Predator!C5 (daily_cost_mj)" in result.stdout


def test_reading_never_changes_the_file(tmp_path):
    """The workbook is only read (common practice: never save into a user's workbook)."""
    path = tmp_path / "demo.xlsx"
    path.write_bytes(DEMO_XLSX.read_bytes())
    before = path.read_bytes()
    result = CliRunner().invoke(app, ["check", str(path)])
    assert result.exit_code == 0
    assert path.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == ["demo.xlsx"]


# --------------------------------------------------------------------------- faults


def _set(sheet: str, cell: str, value):
    def edit(wb):
        wb[sheet][cell] = value
    return edit


def _delete_sheet(sheet):
    def edit(wb):
        del wb[sheet]
    return edit


def _merge(wb):
    wb["Prey"].merge_cells("A3:B3")


def _delete_energy_column(wb):
    wb["Prey"].delete_cols(5)


def _delete_capacity_row(wb):
    wb["Predator"].delete_rows(3)


def _repeat_scenario_later(wb):
    ws = wb["Scenarios"]
    for c, value in enumerate(("flocks guarded", "upland ewe", "energy_mj", "scale", 0.9),
                              start=1):
        ws.cell(5, c, value)


def _continuation_without_name(wb):
    ws = wb["Scenarios"]
    for c, value in enumerate((None, "upland ewe", "energy_mj", "scale", 0.9), start=1):
        ws.cell(5, c, value)


FAULTS = {
    "text in a number cell": (
        _set("Prey", "E4", "abc"),
        ['Prey!E4 (energy_mj): expected a number ≥ 0, found "abc"']),
    "formula without saved result": (
        _set("Prey", "E4", "=E2*2"),
        ["Prey!E4 (energy_mj)", "open the workbook in a spreadsheet program and save it",
         '"=E2*2"']),
    "spreadsheet error": (
        _set("Prey", "G3", "#DIV/0!"),
        ["Prey!G3 (capture_success)", "the spreadsheet error #DIV/0!"]),
    "merged cells in a data row": (
        _merge, ["Prey!A3:B3", "merged cells", "unmerge"]),
    "missing required sheet": (
        _delete_sheet("Prey"), ["Prey sheet: expected a sheet named Prey", "no such sheet"]),
    "missing required column": (
        _delete_energy_column,
        ["Prey!L1 (energy_mj): expected a column named energy_mj, found no such column"]),
    "missing predator row": (
        _delete_capacity_row,
        ["Predator!A22 (reserve_capacity_mj: row missing): expected a number > 0"]),
    "duplicate prey name": (
        _set("Prey", "A4", "Forest deer"),
        ['Prey!A4 (name): expected a unique prey name (also in row 2), found "Forest deer"']),
    "duplicate scenario further down": (
        _repeat_scenario_later,
        ["Scenarios!A5 (scenario)", "rows of one scenario must follow one another",
         "starts in row 2"]),
    "continuation row without a name": (
        _continuation_without_name,
        ["Scenarios!A5 (scenario): expected a scenario name (repeat it on every row"]),
    "scenario names an unknown prey": (
        _set("Scenarios", "B3", "wild pig"),
        ['Scenarios!B3 (prey): expected the name of a prey type on the Prey sheet',
         '"wild pig"']),
    "scenario names an unknown field": (
        _set("Scenarios", "C4", "hunting_skill"),
        ['Scenarios!C4 (field): expected a predator field (', '"hunting_skill"']),
    "uncertainty names an unknown prey": (
        _set("Uncertainty", "A2", "wild pig"),
        ['Uncertainty!A2 (prey): expected the name of a prey type', '"wild pig"']),
    "uncertainty names an unknown field": (
        _set("Uncertainty", "B3", "hunting_skil"),
        ['Uncertainty!B3 (field): expected a numeric field', '"hunting_skil"']),
    "misspelt column name": (
        _set("Prey", "M1", "capture_sucess"),
        ['Prey!M1: expected a column name of the Prey sheet (name, group', '"capture_sucess"']),
    "values under no column name": (
        _set("Prey", "N3", 5),
        ["Prey!N1: expected a column name above the values in column N",
         "N3 holds a value"]),
    "unknown predator field": (
        _set("Predator", "A9", "hunting_skill"),
        ['Predator!A9 (field): expected a predator field name (name, reserve_capacity_mj',
         '"hunting_skill"']),
    "value out of range": (
        _set("Prey", "G2", 1.4),
        ["Prey!G2 (capture_success): expected a number from 0 to 1, found 1.4"]),
}


@pytest.mark.parametrize("fault", list(FAULTS))
def test_fault_is_named_by_its_cell(tmp_path, fault):
    """Each faulty workbook is rejected with the sheet, cell and field of the fault,
    exit status 2, nothing written and the input unchanged (riskdiet's error contract,
    common practice for data-entry checks). Formula cells written by openpyxl have no
    saved result (openpyxl documentation); merged cells keep only the top-left value
    (openpyxl documentation)."""
    edit, expected = FAULTS[fault]
    path = edited_demo(tmp_path, edit)
    problems = problems_of(path)
    text = "\n".join(problems)
    for fragment in expected:
        assert fragment in text, text
    stderr = rejected_by_cli(path)
    for fragment in expected:
        assert fragment in stderr


def test_one_problem_per_cell_for_a_missing_column_and_an_unreadable_cell(tmp_path):
    """A missing required column is reported once, not once per prey row; a cell whose
    formula has no result is not reported again as blank (riskdiet's error contract)."""
    problems = problems_of(edited_demo(tmp_path, _delete_energy_column))
    assert sum("energy_mj" in p for p in problems) == 1
    problems = problems_of(edited_demo(tmp_path, _set("Prey", "E4", "=E2*2")))
    assert sum("Prey!E4" in p for p in problems) == 1


def test_title_row_above_the_column_names_is_ignored(tmp_path):
    """A title typed (and merged) above the column names is skipped: the column names are
    on the first row holding one (common practice: sheets often carry a title)."""
    def edit(wb):
        ws = wb["Prey"]
        ws.insert_rows(1)
        ws["A1"] = "Prey of Harrow Vale"
        ws.merge_cells("A1:F1")
    study = read_workbook_study(edited_demo(tmp_path, edit))
    assert study_key(study) == study_key(read_json_study(DEMO_JSON))


def test_consequences_of_one_fault_are_not_reported_again(tmp_path):
    """One fault, one problem (riskdiet's error contract): cells hidden under a merged
    range are not also reported blank (openpyxl documentation: only the top-left cell of a
    merged range holds the value); without prey rows, the prey named by scenarios are not
    also reported unknown; an unreadable predator value is labelled by its field, as the
    validation labels it."""
    def merge_scenario_names(wb):
        ws = wb["Scenarios"]
        ws["A3"] = ws["A4"] = "flocks guarded"
        ws.merge_cells("A2:A4")
    assert problems_of(edited_demo(tmp_path, merge_scenario_names)) == [
        "Scenarios!A2:A4: expected separate cells: only the top-left cell of merged cells "
        "keeps its value (unmerge them and fill in every cell), found merged cells"]
    merged_required = problems_of(edited_demo(tmp_path, lambda wb: wb["Prey"].merge_cells(
        "F3:G3")))
    assert len(merged_required) == 1 and merged_required[0].startswith("Prey!F3:G3")
    no_rows = problems_of(edited_demo(tmp_path, lambda wb: wb["Prey"].delete_rows(2, 5)))
    assert no_rows == ["Prey sheet: expected at least one prey row below the column names, "
                       "found none"]
    formula = problems_of(edited_demo(tmp_path, _set("Predator", "B3", "=B5*10")))
    assert len(formula) == 1
    assert formula[0].startswith("Predator!B3 (reserve_capacity_mj): expected a saved value")


def test_all_problems_reported_at_once_in_sheet_order(tmp_path):
    """Problems found while reading cells and problems found by the study validation come
    in one report, ordered by sheet and row (riskdiet's error contract: fix everything in
    one pass)."""
    def edit(wb):
        wb["Prey"]["E4"] = "=E2*2"            # reader: no saved result
        wb["Prey"]["G2"] = 1.4                 # validation: out of range
        wb["Prey"]["M1"] = "colour"            # reader: unknown column
        wb["Predator"]["B3"] = -5              # validation: out of range
        wb["Uncertainty"]["E2"] = "bell"       # validation: unknown shape
    problems = problems_of(edited_demo(tmp_path, edit))
    order = [next(i for i, p in enumerate(problems) if p.startswith(w))
             for w in ("Predator!B3", "Prey!M1", "Prey!G2", "Prey!E4", "Uncertainty!E2")]
    assert order == sorted(order)
    assert len(problems) == 5


@pytest.mark.parametrize("kind", ["csv text", "truncated", "random bytes", "zip of other files",
                                  "empty"])
def test_file_that_is_not_a_workbook(tmp_path, kind):
    """A renamed CSV, a truncated or random file, a zip that is not a workbook and an
    empty file are each "not an .xlsx workbook", with what riskdiet accepts (common
    practice; zipfile raises BadZipFile or KeyError for these)."""
    path = tmp_path / "study.xlsx"
    if kind == "csv text":
        path.write_text("name,energy_mj\nforest deer,45\n")
    elif kind == "truncated":
        path.write_bytes(DEMO_XLSX.read_bytes()[:5000])
    elif kind == "random bytes":
        path.write_bytes(bytes(range(256)) * 8)
    elif kind == "zip of other files":
        with zipfile.ZipFile(path, "w") as z:
            z.writestr("hello.txt", "hello")
    else:
        path.write_bytes(b"")
    text = "\n".join(problems_of(path))
    assert "not an .xlsx workbook" in text
    assert ".json" in text and ".xlsx (Excel workbook)" in text
    assert "not an .xlsx workbook" in rejected_by_cli(path)


@pytest.mark.parametrize("suffix", [".xls", ".ods", ".csv"])
def test_other_spreadsheet_formats_are_named(tmp_path, suffix):
    """An .xls, .ods or .csv file given by mistake is named as such, with the advice to
    save as .xlsx (consistent with riskdiet.io.load; common practice)."""
    path = tmp_path / f"study{suffix}"
    path.write_bytes(DEMO_XLSX.read_bytes())
    stderr = rejected_by_cli(path)
    assert "save the file as .xlsx" in stderr
