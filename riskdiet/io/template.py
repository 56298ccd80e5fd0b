"""Writing study workbooks: the blank template and filled workbooks.

Everything the template says about a field (name, unit, allowed values,
default, description, data validation) is generated from the field specs of
:mod:`riskdiet.model` and the column descriptions of
:mod:`riskdiet.io.workbook`, so the template cannot drift from what the reader
accepts. The template is made at run time; nothing is stored in the package.

Choices:

- The Predator and Settings value columns start with riskdiet's default where
  the field has one, so the sheet shows the values that will be used; a blank
  value means the same default. Each field name carries a comment with its
  description, allowed values and default; the Read me sheet lists them all.
- Prey, Scenarios and Uncertainty columns carry their description in a comment
  on the column name; data validation covers the first ``VALIDATED_ROWS`` rows.
- Validation is only a typing aid (spreadsheet programs enforce it, pasted
  values bypass it); the reader checks everything again.
- The file is deterministic: fixed document dates and zip timestamps, so the
  same input gives the same bytes and committed workbooks do not churn.
"""

from __future__ import annotations

import datetime as dt
import io
import math
import re
import zipfile
from pathlib import Path
from typing import Any

from riskdiet.errors import Problem, StudyError
from riskdiet.fields import (
    BOOLEAN,
    CHOICE,
    INTEGER,
    NUMBER,
    TEXT,
    FieldSpec,
    display,
    field_defaults,
    field_specs,
)
from riskdiet.io.atomic import write_atomic
from riskdiet.io.sheet_table import column_letter
from riskdiet.io.workbook import (
    FIELD_VALUE_COLUMNS,
    OBSERVATION_COLUMNS,
    OBSERVATIONS,
    PREDATOR,
    PREY,
    README,
    SCENARIO_COLUMNS,
    SCENARIOS,
    SETTINGS,
    UNCERTAINTY,
    UNCERTAINTY_COLUMNS,
)
from riskdiet.model import (
    CHANGE_KINDS,
    OBSERVATION_KINDS,
    SHAPES,
    Predator,
    Prey,
    Settings,
    Study,
)

VALIDATED_ROWS = 500
"""Rows 2..VALIDATED_ROWS of the table sheets carry data validation."""

_FIXED_TIME = dt.datetime(2026, 1, 1)
_ZIP_TIME = (2026, 1, 1, 0, 0, 0)
_HEADER_FILL = "DDE7EE"
_COMMENT_AUTHOR = "riskdiet"

_README_TEXT = (
    ("title", "riskdiet study workbook"),
    ("text", "This workbook describes one study for riskdiet: a predator, the prey it can "
     "meet, and the management scenarios to compare. Fill in the sheets, then check what "
     "riskdiet reads with:   riskdiet check this-file.xlsx   and solve the study with:   "
     "riskdiet solve this-file.xlsx"),
    ("caution", "Caution: every value must come from local data or local expert judgement. "
     "The defaults filled in are neutral placeholders, not facts about any species or "
     "place. riskdiet is a decision aid, not a forecast: any release, translocation, cull "
     "or livestock-protection measure follows the applicable wildlife law, the "
     "requirements of the wildlife authority and the judgement of licensed professionals."),
    ("heading", "The sheets"),
    ("text", "Predator: one row per predator field. Type your value in the value column, in "
     "the unit shown in the unit column (do not change the field or unit columns). The "
     "value column starts with riskdiet's default where there is one; a blank value also "
     "means the default. Use the note column for the source of each value."),
    ("text", "Prey: one row per prey type, one column per prey field (the column order does "
     "not matter). Give each prey type either encounters_per_day or density_per_km2 (the "
     "latter needs the predator's search_area_km2_per_day). Leave a cell blank for the "
     "default."),
    ("text", "Scenarios (optional): each row changes one value of the inputs as given (the "
     "baseline). A scenario with several changes has several rows with the same scenario "
     "name, one below the other. Leave prey blank to change a predator field. change is "
     "set (replace), scale (multiply) or add."),
    ("text", "Uncertainty (optional): a plausible range (low to high) for an uncertain "
     "input, with its shape: uniform, triangular (with its most likely value in mode) or "
     "loguniform. Leave scenario blank to replace the baseline value in every scenario (a "
     "scale or add then acts on the drawn value), or name a scenario to replace its final "
     "value. riskdiet uncertainty draws from these ranges."),
    ("text", "Settings (optional): the study's name, the date printed on the brief, and a "
     "short description."),
    ("text", "Observations (optional): what the predator was seen to eat, for riskdiet fit. "
     "One row per prey and set of records: count, kind (kills found at kill sites, or scats "
     "holding remains), detection, and optionally the scenario under which the records were "
     "collected and their source (a study, pack or season). Rows with the same scenario, kind "
     "and source form one composition; a prey without a row in it counts as 0 records. A rate "
     "row has kind kills, no prey, the kills found and predator_days of monitoring. Name the "
     "inputs to fit in the Settings sheet (fit), then run:   riskdiet fit this-file.xlsx"),
    ("text", "detection is the relative chance that one kill of this prey ends up in your "
     "records (blank means 1). Scats: a large prey is eaten over several days and leaves "
     "many scats, a small one few, so scat counts over-represent large prey. Use published "
     "correction factors: if one deer eaten yields about 20 scats and one hare about 2, give "
     "deer detection 20 and hare 2 (only the ratio matters). Kill sites: if a carcass of a "
     "small prey is found half as often as a large one, give it 0.5 and the large one 1."),
    ("text", "This sheet, and any other sheet you add, is not read by riskdiet."),
    ("heading", "Typing values"),
    ("text", "Probabilities as decimals (0.25) or percentages (25 %). Yes/no fields accept "
     "yes, no, true, false, 1 or 0. Formulas are fine once the workbook has been saved by a "
     "spreadsheet program (riskdiet reads the saved results). Do not merge cells. riskdiet "
     "reports every problem at once, with its sheet and cell, and never changes this file."),
    ("heading", "Every field"),
)


def _field_comment(name: str, spec: FieldSpec, default: Any) -> str:
    lines = [f"{name} [{spec.unit}]", spec.description, f"Allowed: {spec.expected()}."]
    if spec.required:
        lines.append("Required.")
    elif default is not None:
        lines.append(f"Default: {display(default)}.")
    return "\n".join(lines)


# --------------------------------------------------------------------------- cells


def _put(cell: Any, value: Any) -> None:
    """Write a value as the reader reads it back: yes/no words, text never a formula."""
    if value is None:
        return
    if isinstance(value, bool):
        cell.value = "yes" if value else "no"
    elif isinstance(value, float) and value == int(value) and abs(value) < 1e15:
        cell.value = int(value)
    else:
        cell.value = value
    if isinstance(value, str) and value.startswith("="):
        cell.data_type = "s"  # a note such as "=see above" must stay text


def _comment(text: str) -> Any:
    from openpyxl.comments import Comment

    lines = text.split("\n")
    height = 20 + 15 * sum(1 + len(line) // 45 for line in lines)
    return Comment(text, _COMMENT_AUTHOR, height=height, width=320)


def _validation(spec: FieldSpec, name: str) -> Any:
    """Spreadsheet data validation matching a field's kind and bounds, or None."""
    from openpyxl.worksheet.datavalidation import DataValidation

    kwargs: dict[str, Any] = {}
    if spec.kind in (BOOLEAN, CHOICE):
        words = ("yes", "no") if spec.kind == BOOLEAN else spec.choices
        kwargs = {"type": "list", "formula1": '"' + ",".join(words) + '"'}
    elif spec.kind in (NUMBER, INTEGER):
        kind = "whole" if spec.kind == INTEGER else "decimal"
        lo, hi = spec.low, spec.high
        fmt = (lambda x: str(int(x))) if spec.kind == INTEGER else (lambda x: f"{x:g}")
        if lo is not None and hi is not None:
            # spreadsheet bounds are inclusive; an open bound is checked by riskdiet
            kwargs = {"type": kind, "operator": "between", "formula1": fmt(lo),
                      "formula2": fmt(hi)}
        elif lo is not None:
            kwargs = {"type": kind, "formula1": fmt(lo),
                      "operator": "greaterThan" if spec.low_open else "greaterThanOrEqual"}
        elif hi is not None:
            kwargs = {"type": kind, "formula1": fmt(hi),
                      "operator": "lessThan" if spec.high_open else "lessThanOrEqual"}
        elif spec.kind == INTEGER:
            kwargs = {"type": kind, "operator": "between", "formula1": "-1000000000",
                      "formula2": "1000000000"}
    if not kwargs:
        return None
    return DataValidation(allow_blank=True, showErrorMessage=True, errorStyle="stop",
                          errorTitle="riskdiet", error=f"{name}: expected {spec.expected()}.",
                          showInputMessage=True, promptTitle=name[:32],
                          prompt=spec.description[:255], **kwargs)


def _list_validation(words: tuple[str, ...], name: str, prompt: str) -> Any:
    from openpyxl.worksheet.datavalidation import DataValidation

    return DataValidation(type="list", formula1='"' + ",".join(words) + '"', allow_blank=True,
                          showErrorMessage=True, errorStyle="stop", errorTitle="riskdiet",
                          error=f"{name}: expected one of {', '.join(words)}.",
                          showInputMessage=True, promptTitle=name[:32], prompt=prompt[:255])


def _header(ws: Any, names: list[str], comments: dict[str, str], widths: dict[str, float]
            ) -> None:
    from openpyxl.styles import Font, PatternFill


    fill = PatternFill("solid", fgColor=_HEADER_FILL)
    for c, name in enumerate(names, start=1):
        cell = ws.cell(row=1, column=c, value=name)
        cell.font = Font(bold=True)
        cell.fill = fill
        if name in comments:
            cell.comment = _comment(comments[name])
        ws.column_dimensions[column_letter(c)].width = widths.get(name, max(12, len(name) + 3))
    ws.freeze_panes = "A2"


# --------------------------------------------------------------------------- sheets


def _readme_sheet(ws: Any) -> None:
    from openpyxl.styles import Alignment, Font, PatternFill

    widths = {"A": 13, "B": 26, "C": 14, "D": 34, "E": 11, "F": 70}
    for col, width in widths.items():
        ws.column_dimensions[col].width = width
    wrap = Alignment(wrap_text=True, vertical="top")
    r = 1
    for kind, text in _README_TEXT:
        if kind == "heading":
            r += 1  # a blank row above each heading
        cell = ws.cell(row=r, column=1, value=text)
        if kind == "title":
            cell.font = Font(bold=True, size=14)
        elif kind == "heading":
            cell.font = Font(bold=True, size=12)
        else:
            ws.merge_cells(start_row=r, start_column=1, end_row=r, end_column=6)
            cell.alignment = wrap
            if kind == "caution":
                cell.font = Font(bold=True)
                cell.fill = PatternFill("solid", fgColor="FCE8D5")
            ws.row_dimensions[r].height = 15 * math.ceil(len(text) / 150) + 4
        r += 1
    header = ("sheet", "field", "unit", "allowed values", "default", "meaning")
    for c, name in enumerate(header, start=1):
        ws.cell(row=r, column=c, value=name).font = Font(bold=True)
    r += 1
    for sheet, cls in ((PREDATOR, Predator), (PREY, Prey), (SETTINGS, Settings)):
        defaults = field_defaults(cls)
        for name, spec in field_specs(cls).items():
            default = "required" if spec.required else display(defaults[name])
            row = (sheet, name, spec.unit, spec.expected(), default, spec.description)
            for c, value in enumerate(row, start=1):
                ws.cell(row=r, column=c, value=value).alignment = wrap
            r += 1
    for sheet, columns in ((SCENARIOS, SCENARIO_COLUMNS), (UNCERTAINTY, UNCERTAINTY_COLUMNS),
                           (OBSERVATIONS, OBSERVATION_COLUMNS)):
        for name, meaning in columns.items():
            for c, value in enumerate((sheet, name, "", "", "", meaning), start=1):
                ws.cell(row=r, column=c, value=value).alignment = wrap
            r += 1


def _field_value_sheet(ws: Any, cls: type, values: dict, notes: dict) -> None:
    """Predator or Settings: one row per field, value column validated by the field."""
    names = list(FIELD_VALUE_COLUMNS)
    _header(ws, names, FIELD_VALUE_COLUMNS, {"field": 28, "value": 16, "unit": 15,
                                              "note": 70})
    defaults = field_defaults(cls)
    validations: dict[tuple, Any] = {}
    for r, (name, spec) in enumerate(field_specs(cls).items(), start=2):
        ws.cell(row=r, column=1, value=name).comment = _comment(
            _field_comment(name, spec, defaults[name]))
        value = values.get(name, defaults[name])
        value_cell = ws.cell(row=r, column=2)
        _put(value_cell, value)
        if spec.kind == TEXT:
            value_cell.number_format = "@"  # keeps dates typed into text fields as text
        ws.cell(row=r, column=3, value=spec.unit)
        _put(ws.cell(row=r, column=4), notes.get(name))
        dv = _validation(spec, name)
        if dv is not None:
            key = (dv.type, dv.operator, dv.formula1, dv.formula2, dv.error)
            if key not in validations:
                validations[key] = dv
                ws.add_data_validation(dv)
            validations[key].add(value_cell.coordinate)
    ws.column_dimensions["D"].number_format = "@"


def _table_sheet(ws: Any, names: list[str], comments: dict[str, str],
                 validations: dict[str, Any], rows: list[dict], text_columns: set[str],
                 widths: dict[str, float]) -> None:

    _header(ws, names, comments, widths)
    last = max(VALIDATED_ROWS, len(rows) + 1)
    for c, name in enumerate(names, start=1):
        letter = column_letter(c)
        if name in text_columns:
            ws.column_dimensions[letter].number_format = "@"
        dv = validations.get(name)
        if dv is not None:
            ws.add_data_validation(dv)
            dv.add(f"{letter}2:{letter}{last}")
    for r, record in enumerate(rows, start=2):
        for c, name in enumerate(names, start=1):
            _put(ws.cell(row=r, column=c), record.get(name))


def _prey_sheet(ws: Any, prey: list[dict]) -> None:
    specs = field_specs(Prey)
    defaults = field_defaults(Prey)
    names = list(specs)
    comments = {n: _field_comment(n, s, defaults[n]) for n, s in specs.items()}
    validations = {n: _validation(s, n) for n, s in specs.items()}
    text = {n for n, s in specs.items() if s.kind == TEXT}
    widths = {"name": 20, "group": 12, "note": 60}
    _table_sheet(ws, names, comments, {k: v for k, v in validations.items() if v}, prey, text,
                 widths)
    ws.freeze_panes = "B2"  # keep the prey names in view while scrolling right


def _scenario_rows(scenarios: list[dict]) -> list[dict]:
    rows = []
    for sc in scenarios:
        for i, ch in enumerate(sc.get("changes") or []):
            rows.append({"scenario": sc.get("name"), "prey": ch.get("prey"),
                         "field": ch.get("field"), "change": ch.get("change"),
                         "value": ch.get("value"),
                         "note": (sc.get("note") or None) if i == 0 else None})
    return rows


# --------------------------------------------------------------------------- workbook


def build_workbook(study: Study | dict | None = None) -> Any:
    """The study workbook as an ``openpyxl.Workbook``.

    Parameters
    ----------
    study : Study or dict, optional
        Values to fill in: a study, or a dictionary in the JSON study layout.
        None gives the blank template (defaults only).
    """
    import openpyxl

    if isinstance(study, Study):
        from riskdiet.io.json_study import study_to_dict

        raw = study_to_dict(study)
    else:
        raw = dict(study or {})
    predator = dict(raw.get("predator") or {})
    notes = dict(predator.pop("notes", None) or {})
    wb = openpyxl.Workbook()
    wb.properties.creator = _COMMENT_AUTHOR
    wb.properties.title = "riskdiet study workbook"
    _readme_sheet(wb.active)
    wb.active.title = README
    _field_value_sheet(wb.create_sheet(PREDATOR), Predator, predator, notes)
    _prey_sheet(wb.create_sheet(PREY), list(raw.get("prey") or []))
    change = _list_validation(CHANGE_KINDS, "change", SCENARIO_COLUMNS["change"])
    _table_sheet(wb.create_sheet(SCENARIOS), list(SCENARIO_COLUMNS), SCENARIO_COLUMNS,
                 {"change": change}, _scenario_rows(list(raw.get("scenarios") or [])),
                 {"scenario", "prey", "field", "change", "note"},
                 {"scenario": 24, "prey": 20, "field": 26, "change": 10, "value": 12,
                  "note": 60})
    shape = _list_validation(SHAPES, "shape", UNCERTAINTY_COLUMNS["shape"])
    _table_sheet(wb.create_sheet(UNCERTAINTY), list(UNCERTAINTY_COLUMNS), UNCERTAINTY_COLUMNS,
                 {"shape": shape}, list(raw.get("uncertainty") or []),
                 {"prey", "field", "shape", "note", "scenario"},
                 {"prey": 20, "field": 26, "shape": 12, "note": 60, "scenario": 24})
    _field_value_sheet(wb.create_sheet(SETTINGS), Settings, dict(raw.get("settings") or {}),
                       {})
    _observations_sheet(wb.create_sheet(OBSERVATIONS), list(raw.get("observations") or []))
    return wb


def _observations_sheet(ws: Any, rows: list[dict]) -> None:
    """Field diet records: counts validated as whole numbers ≥ 0, kind as a list."""
    from openpyxl.worksheet.datavalidation import DataValidation

    from riskdiet.model import Observation

    specs = field_specs(Observation)
    kind = _list_validation(OBSERVATION_KINDS, "kind", OBSERVATION_COLUMNS["kind"])
    count = DataValidation(type="whole", operator="greaterThanOrEqual", formula1="0",
                           allow_blank=True, showErrorMessage=True, errorStyle="stop",
                           errorTitle="riskdiet", error="count: expected a whole number ≥ 0.",
                           showInputMessage=True, promptTitle="count",
                           prompt=OBSERVATION_COLUMNS["count"][:255])
    validations = {"kind": kind, "count": count,
                   "detection": _validation(specs["detection"], "detection"),
                   "predator_days": _validation(specs["predator_days"], "predator_days")}
    _table_sheet(ws, list(OBSERVATION_COLUMNS), OBSERVATION_COLUMNS,
                 {k: v for k, v in validations.items() if v is not None}, rows,
                 {"prey", "kind", "scenario", "source", "note"},
                 {"prey": 20, "count": 9, "kind": 9, "detection": 11, "scenario": 22,
                  "source": 20, "note": 50, "predator_days": 15})


def workbook_bytes(study: Study | dict | None = None) -> bytes:
    """The study workbook as deterministic .xlsx bytes (fixed dates and zip timestamps)."""
    wb = build_workbook(study)
    wb.properties.created = _FIXED_TIME
    buffer = io.BytesIO()
    wb.save(buffer)
    stamp = _FIXED_TIME.strftime("%Y-%m-%dT%H:%M:%SZ").encode()
    out = io.BytesIO()
    with zipfile.ZipFile(buffer) as src, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            data = src.read(info.filename)
            if info.filename == "docProps/core.xml":
                # openpyxl stamps the save time; a fixed date makes the bytes reproducible
                data = re.sub(rb"(<dcterms:modified[^>]*>)[^<]*", rb"\g<1>" + stamp, data)
            entry = zipfile.ZipInfo(info.filename, date_time=_ZIP_TIME)
            entry.compress_type = zipfile.ZIP_DEFLATED
            dst.writestr(entry, data)
    return out.getvalue()


def _write(path: str | Path, study: Study | dict | None, force: bool,
           inputs: tuple[Path, ...] = ()) -> Path:
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise StudyError([Problem(str(path), "a file name ending in .xlsx",
                                  f'"{path.suffix or "no ending"}"')])
    data = workbook_bytes(study)

    return write_atomic(path, lambda tmp: tmp.write_bytes(data), force=force, inputs=inputs)


def write_template(path: str | Path, force: bool = False) -> Path:
    """Write the blank study template.

    Parameters
    ----------
    path : str or Path
        File to write; must end in ``.xlsx``.
    force : bool
        Replace an existing file (otherwise :class:`riskdiet.errors.OutputExistsError`).

    Returns
    -------
    Path
        The file written (atomically: a temporary file in the same folder, renamed).
    """
    return _write(path, None, force)


def write_study_workbook(path: str | Path, study: Study | dict, force: bool = False) -> Path:
    """Write a filled study workbook from a study or a JSON-layout dictionary.

    Same layout and validation as the template; reading it back gives the same
    study. Refuses to overwrite an existing file unless ``force``, and never
    overwrites the study's own source file.
    """
    inputs = (Path(study.source),) if isinstance(study, Study) and study.source else ()
    return _write(path, study, force, inputs)
