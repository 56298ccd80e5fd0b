"""The study template: generated from the field specs, validated, never overwriting."""

from __future__ import annotations

import json
from pathlib import Path

import openpyxl
import pytest
from typer.testing import CliRunner

from riskdiet.cli import app
from riskdiet.errors import OutputExistsError, StudyError
from riskdiet.fields import field_defaults, field_specs
from riskdiet.io.json_study import read_json_study
from riskdiet.io.template import VALIDATED_ROWS, workbook_bytes, write_study_workbook
from riskdiet.io.workbook import SCENARIO_COLUMNS, UNCERTAINTY_COLUMNS, read_workbook_study
from riskdiet.model import Predator, Prey, Settings

ROOT = Path(__file__).resolve().parents[2]
COMMITTED = ROOT / "templates" / "riskdiet-template.xlsx"
DEMO_JSON = ROOT / "examples" / "harrow-vale.json"


def snapshot(path: Path) -> dict:
    """Everything a user sees in a workbook, independent of zip timestamps."""
    wb = openpyxl.load_workbook(path)
    out = {"sheets": wb.sheetnames}
    for ws in wb.worksheets:
        out[ws.title] = {
            "cells": {c.coordinate: c.value for row in ws.iter_rows() for c in row
                      if c.value is not None},
            "comments": {c.coordinate: c.comment.text for row in ws.iter_rows() for c in row
                         if c.comment},
            "validations": sorted((dv.type, dv.operator, dv.formula1, dv.formula2,
                                   str(dv.sqref)) for dv in ws.data_validations.dataValidation),
            "freeze": ws.freeze_panes,
            "merged": sorted(str(m) for m in ws.merged_cells.ranges),
        }
    return out


def validations_at(ws) -> dict[str, tuple]:
    """Cell coordinate -> (type, operator, formula1, formula2) for the cells listed."""
    out = {}
    for dv in ws.data_validations.dataValidation:
        for rng in dv.sqref.ranges:
            for row in ws.iter_rows(min_row=rng.min_row, max_row=min(rng.max_row, rng.min_row + 1),
                                    min_col=rng.min_col, max_col=rng.max_col):
                for c in row:
                    out[c.coordinate] = (dv.type, dv.operator, dv.formula1, dv.formula2)
    return out


@pytest.fixture
def template(tmp_path) -> Path:
    result = CliRunner().invoke(app, ["template", str(tmp_path / "blank.xlsx")])
    assert result.exit_code == 0, result.output
    return tmp_path / "blank.xlsx"


def test_template_refuses_to_overwrite_without_force(tmp_path, template):
    """An existing file is never replaced unless --force is given (exit 2 and the file
    unchanged); the write leaves no temporary file behind (common practice for
    command-line tools: write a temporary file, then rename)."""
    template.write_bytes(b"my own notes")
    result = CliRunner().invoke(app, ["template", str(template)])
    assert result.exit_code == 2
    assert "already exists" in result.stderr and "--force" in result.stderr
    assert template.read_bytes() == b"my own notes"
    result = CliRunner().invoke(app, ["template", str(template), "--force"])
    assert result.exit_code == 0
    assert openpyxl.load_workbook(template).sheetnames[0] == "Read me"
    assert [p.name for p in tmp_path.iterdir()] == ["blank.xlsx"]


def test_template_name_must_end_in_xlsx(tmp_path):
    """Only .xlsx is written, since only .xlsx is read back (riskdiet.io.load)."""
    result = CliRunner().invoke(app, ["template", str(tmp_path / "blank.xls")])
    assert result.exit_code == 2
    assert "ending in .xlsx" in result.stderr
    assert list(tmp_path.iterdir()) == []


def test_template_lists_every_field_with_its_unit_and_default(template):
    """Predator and Settings rows, Prey columns and their units come from the one field
    description (MODEL.md section 1 via riskdiet.fields); the Predator value column starts
    with the defaults."""
    wb = openpyxl.load_workbook(template)
    ws = wb["Predator"]
    rows = [[c.value for c in row] for row in ws.iter_rows(min_row=2)]
    specs, defaults = field_specs(Predator), field_defaults(Predator)
    assert [r[0] for r in rows] == list(specs)
    assert [r[2] for r in rows] == [s.unit for s in specs.values()]
    assert [r[1] for r in rows] == [defaults[n] for n in specs]
    assert [c.value for c in wb["Prey"][1]] == list(field_specs(Prey))
    assert [c.value for c in wb["Scenarios"][1]] == list(SCENARIO_COLUMNS)
    assert [c.value for c in wb["Uncertainty"][1]] == list(UNCERTAINTY_COLUMNS)
    assert [r[0].value for r in wb["Settings"].iter_rows(min_row=2)] == list(
        field_specs(Settings))
    for c in wb["Prey"][1]:
        spec = field_specs(Prey)[c.value]
        assert spec.description in c.comment.text and f"[{spec.unit}]" in c.comment.text
    assert "Most energy the predator can store" in ws["A3"].comment.text


def test_template_read_me_explains_and_cautions(template):
    """The first sheet explains every sheet and field and says that values come from local
    data and decisions follow wildlife law and the wildlife authority (project rule)."""
    wb = openpyxl.load_workbook(template)
    assert wb.sheetnames == ["Read me", "Predator", "Prey", "Scenarios", "Uncertainty",
                             "Settings", "Observations"]
    text = "\n".join(str(c.value) for row in wb["Read me"].iter_rows() for c in row
                     if c.value is not None)
    for phrase in ("local data", "wildlife law", "wildlife authority", "riskdiet check"):
        assert phrase in text
    for name in [*field_specs(Predator), *field_specs(Prey), *SCENARIO_COLUMNS]:
        assert name in text


def test_template_validations_and_frozen_headers(template):
    """Probabilities take decimals 0 to 1, counts whole numbers, yes/no fields and the
    change, shape and currency columns lists (MODEL.md section 1 bounds; common practice
    for data entry); header rows are frozen."""
    wb = openpyxl.load_workbook(template)
    prey = validations_at(wb["Prey"])
    cols = {c.value: c.column_letter for c in wb["Prey"][1]}
    for name in ("capture_success", "injury_chance", "fatality_chance"):
        assert prey[f"{cols[name]}2"] == ("decimal", "between", "0", "1")
    assert prey[f"{cols['skill_dependent']}3"] == ("list", None, '"yes,no"', None)
    assert prey[f"{cols['energy_mj']}2"] == ("decimal", "greaterThanOrEqual", "0", None)
    assert f"{cols['name']}2" not in prey
    last = {str(dv.sqref) for dv in wb["Prey"].data_validations.dataValidation}
    assert f"G2:G{VALIDATED_ROWS}" in last

    predator = validations_at(wb["Predator"])
    rows = {wb["Predator"].cell(r, 1).value: r for r in range(2, wb["Predator"].max_row + 1)}
    assert predator[f"B{rows['energy_levels']}"] == ("whole", "between", "10", "2000")
    assert predator[f"B{rows['population']}"] == ("whole", "between", "0", "1000000")
    assert predator[f"B{rows['currency']}"] == ("list", None, '"breeding,season"', None)
    assert predator[f"B{rows['start_reserves']}"] == ("decimal", "between", "0", "1")
    assert validations_at(wb["Scenarios"])["D2"] == ("list", None, '"set,scale,add"', None)
    assert validations_at(wb["Uncertainty"])["E2"] == (
        "list", None, '"uniform,triangular,loguniform"', None)
    assert wb["Prey"].freeze_panes == "B2"
    for name in ("Predator", "Scenarios", "Uncertainty", "Settings"):
        assert wb[name].freeze_panes == "A2"


def test_committed_template_is_what_the_generator_writes(tmp_path, template):
    """templates/riskdiet-template.xlsx equals the template generated now (regenerate with
    scripts/make_demo_workbook.py); compared cell by cell, comments, validations, frozen
    panes and merged ranges (xlsx is a zip of XML, ECMA-376)."""
    assert snapshot(COMMITTED) == snapshot(template)


def test_committed_demo_workbook_is_what_the_generator_writes(tmp_path):
    """examples/harrow-vale.xlsx equals the workbook generated now from the JSON demo
    (regenerate with scripts/make_demo_workbook.py)."""
    fresh = write_study_workbook(tmp_path / "demo.xlsx", read_json_study(DEMO_JSON))
    assert snapshot(ROOT / "examples" / "harrow-vale.xlsx") == snapshot(fresh)


def test_writer_output_does_not_depend_on_the_clock(monkeypatch):
    """The same input gives the same bytes even years later: the zip entries' times (ZIP
    application note, local file header) and the document's modified date (ECMA-376
    part 2, core properties) are fixed. The clocks zipfile and openpyxl read are moved on
    by four years for the second write."""
    import datetime
    import io
    import types
    import zipfile

    import openpyxl.writer.excel as excel

    study = read_json_study(DEMO_JSON)
    first = workbook_bytes(study)
    real_time = zipfile.time
    later = real_time.time() + 4 * 365 * 86400
    monkeypatch.setattr(zipfile, "time", types.SimpleNamespace(
        time=lambda: later, localtime=real_time.localtime))

    class Later(datetime.datetime):
        @classmethod
        def now(cls, tz=None):
            return datetime.datetime(2031, 5, 6, 7, 8, 9, tzinfo=tz)

    monkeypatch.setattr(excel, "datetime", types.SimpleNamespace(
        datetime=Later, timezone=datetime.timezone))
    plain = io.BytesIO()
    openpyxl.Workbook().save(plain)  # the patched clocks do reach an ordinary save
    with zipfile.ZipFile(plain) as z:
        assert z.infolist()[0].date_time[0] == real_time.localtime(later).tm_year
        assert b"2031-05-06" in z.read("docProps/core.xml")
    assert workbook_bytes(study) == first


def test_blank_template_reads_with_located_problems(template):
    """A blank template is not a valid study, and says where to start: the required
    reserve capacity and the prey rows (MODEL.md section 1: reserve_capacity_mj > 0, at
    least one prey type)."""
    with pytest.raises(StudyError) as info:
        read_workbook_study(template)
    wheres = [p.where for p in info.value.problems]
    assert wheres == ["Predator!B3 (reserve_capacity_mj)", "Prey sheet"]


def test_filled_workbook_round_trips_awkward_values(tmp_path):
    """Text that looks like a formula stays text, yes/no and set-to-yes changes survive,
    a blank prey means a predator field (the documented layout); reading the written
    workbook gives the study back (reference: the JSON reader)."""
    raw = json.loads(DEMO_JSON.read_text())
    raw["prey"][0]["note"] = "=not a formula"
    raw["prey"][1]["skill_dependent"] = False
    raw["scenarios"].append({"name": "skilled boar hunting", "note": "",
                             "changes": [{"prey": "wild boar", "field": "skill_dependent",
                                          "change": "set", "value": True},
                                         {"prey": None, "field": "currency",
                                          "change": "set", "value": "season"}]})
    source = tmp_path / "study.json"
    source.write_text(json.dumps(raw))
    study = read_json_study(source)
    path = write_study_workbook(tmp_path / "study.xlsx", study)
    back = read_workbook_study(path)
    assert back.prey == study.prey
    assert back.prey[0].note == "=not a formula"
    last = back.scenarios[-1]
    assert [(c.prey, c.field, c.value) for c in last.changes] == [
        ("wild boar", "skill_dependent", "yes"), (None, "currency", "season")]
    assert back.inputs_for(last)[1][1].skill_dependent is True
    with pytest.raises(OutputExistsError):
        write_study_workbook(path, study)
