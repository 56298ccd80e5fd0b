"""Study workbooks (.xlsx): the layout and the reader.

A study workbook holds the same fields as a JSON study file, one sheet per
section. Sheet names and column names are matched ignoring case and
surrounding spaces; any other sheet is not read (the template's ``Read me``
sheet silently, others with a warning naming them, in case of a misspelt name).

``Predator`` (required)
    Columns ``field``, ``value``, ``unit``, ``note``; one row per predator
    field. A missing row or a blank value means the field's default (a
    required field's missing row is reported at the first free row). Notes
    become :attr:`riskdiet.model.Study.notes`. A unit that differs from the one
    riskdiet reads gives a warning.
``Prey`` (required)
    A row of column names (prey field names, any order) and one row per prey
    type; the ``note`` column is the prey's note.
``Scenarios`` (optional)
    Columns ``scenario``, ``prey`` (blank for a predator field), ``field``,
    ``change`` (set, scale or add; blank means set), ``value``, ``note``. The
    rows of one scenario share its name and must follow one another (blank rows
    between them are allowed); the same name further down, after another
    scenario, is reported as a duplicate. The notes of a scenario's rows are
    joined into the scenario's note.
``Uncertainty`` (optional)
    Columns ``prey``, ``field``, ``low``, ``high``, ``shape``, ``mode``, ``note``.
``Settings`` (optional)
    Columns ``field``, ``value`` (``unit`` and ``note`` allowed, not used).
``Observations`` (optional)
    Field diet records (MODEL.md section 10): ``prey``, ``count``, ``kind``,
    ``detection``, ``scenario``, ``source``, ``note``, ``predator_days``.

The column names are on the first row that holds one of them (rows above,
such as a title, are ignored). Blank rows are skipped wherever they are, so
rows that are styled but empty (counted by ``openpyxl``'s ``max_row``) do no
harm. Every column must have a known name; values in a column without a name
are reported.

Cells are read as saved by the spreadsheet program (``data_only=True``): a
formula counts with its saved result; a formula with no saved result (a file
written by a program that does not calculate) and a formula whose result is a
spreadsheet error (``#DIV/0!``) are reported with their cell. Merged cells
that touch the column-name row or a row holding data are reported, because
only the top-left cell of a merged range keeps a value and the others would be
read as blank (the hidden cells are not reported again). Dates are read as
``YYYY-MM-DD`` text. Numbers typed as text are accepted, as are percentages
(``25 %`` is 0.25; a cell formatted as a percentage already stores 0.25) and
yes/no, true/false, 1/0 for yes-or-no fields (:func:`riskdiet.fields.coerce`).

The workbook is converted to the JSON layout and validated by
:func:`riskdiet.validation.build_study`, with a :class:`WorkbookLocator` so that
every problem names its cell, e.g. ``Prey!E4 (energy_mj)``. Problems found
while reading the sheets and problems found by the validation are reported
together, one per cell, in sheet and row order. The input file is only read.
"""

from __future__ import annotations

import dataclasses
import io
import re
from pathlib import Path
from typing import Any

from riskdiet.errors import Notice, Problem, StudyError, describe
from riskdiet.fields import field_specs
from riskdiet.io.sheet_table import Table, column_letter, key_of, read_table, sheet_ref
from riskdiet.io.source import ACCEPTED, file_sha256
from riskdiet.model import Predator, Prey, Settings, Study
from riskdiet.validation import build_study

PREDATOR = "Predator"
PREY = "Prey"
SCENARIOS = "Scenarios"
UNCERTAINTY = "Uncertainty"
SETTINGS = "Settings"
OBSERVATIONS = "Observations"
README = "Read me"
SHEETS = (PREDATOR, PREY, SCENARIOS, UNCERTAINTY, SETTINGS, OBSERVATIONS)
REQUIRED_SHEETS = (PREDATOR, PREY)

FIELD_VALUE_COLUMNS = {
    "field": "Field name (do not change it).",
    "value": "Your value, in the unit of the unit column. Blank means the default.",
    "unit": "The unit riskdiet reads the value in (for reference; do not change it).",
    "note": "Free text: where the value comes from, caveats.",
}
"""Columns of the Predator and Settings sheets, with their meaning."""

SCENARIO_COLUMNS = {
    "scenario": "Scenario name. One row per change; repeat the name on every row of the "
    "scenario and keep those rows together.",
    "prey": "Prey type the change applies to, as named on the Prey sheet; blank for a "
    "predator field.",
    "field": "Field to change (a Predator field, or a Prey column name).",
    "change": "set (replace the value), scale (multiply it) or add (add to it); blank "
    "means set.",
    "value": "New value (set), factor (scale) or amount (add).",
    "note": "Why; the notes of a scenario's rows are joined into its description.",
}
"""Columns of the Scenarios sheet, with their meaning."""

UNCERTAINTY_COLUMNS = {
    "prey": "Prey type, as named on the Prey sheet; blank for a predator field.",
    "field": "Numeric field whose value is uncertain.",
    "low": "Lowest plausible value, in the field's unit.",
    "high": "Highest plausible value, in the field's unit.",
    "shape": "uniform, triangular (give mode) or loguniform (low above 0); blank means "
    "uniform.",
    "mode": "Most likely value (triangular only).",
    "scenario": "Blank: the range replaces the baseline value in every scenario; a scenario's "
    "name: it replaces that scenario's final value.",
    "note": "Where the range comes from.",
}
"""Columns of the Uncertainty sheet, with their meaning."""

OBSERVATION_COLUMNS = {
    "prey": "Prey type, as named on the Prey sheet. Blank only on a rate row (kills found "
    "over predator_days of monitoring).",
    "count": "Records of this prey: kills found, or scats holding its remains (a whole "
    "number; 0 is a record too).",
    "kind": "kills (found at kill sites) or scats (remains in scats or other diet samples); "
    "blank means kills.",
    "detection": "Relative chance that one kill of this prey is recorded (blank means 1), "
    "e.g. scats produced per individual eaten, from published correction factors.",
    "scenario": "Scenario under which the records were collected; blank means baseline.",
    "source": "Study, pack or season the records come from. Rows with the same scenario, "
    "kind and source form one composition.",
    "note": "Free text: how the records were collected.",
    "predator_days": "Rate rows only (kind kills, prey blank): days of monitoring summed "
    "over the animals monitored, e.g. 4 collared animals for 90 days = 360.",
}
"""Columns of the Observations sheet, with their meaning."""

_REQUIRED_COLUMNS = {
    PREDATOR: ("field", "value"),
    SETTINGS: ("field", "value"),
    PREY: tuple(name for name, spec in field_specs(Prey).items() if spec.required),
    SCENARIOS: ("scenario", "field", "value"),
    UNCERTAINTY: ("field", "low", "high"),
    OBSERVATIONS: ("count",),
}
_ENCOUNTER_COLUMNS = ("encounters_per_day", "density_per_km2")
_ACCEPTED_XLSX = f"{ACCEPTED}; save the file as .xlsx in your spreadsheet program"


# --------------------------------------------------------------------------- locator


class WorkbookLocator:
    """Locations as workbook cells, e.g. ``Prey!E4 (energy_mj)``.

    Built by the reader while it converts the sheets to the JSON layout: it
    records the row of every predator field and setting, of every prey row,
    scenario change and uncertainty row, and the column of every column name.
    A value that is missing points at the cell where it belongs; a missing
    predator row at the first free row of the Predator sheet; a missing column
    at the header cell where it would go; anything on a missing sheet at the
    sheet.
    """

    def __init__(self) -> None:
        self.tables: dict[str, Table] = {}
        self.sheet_names: dict[str, str] = {name: name for name in SHEETS}
        self.field_rows: dict[str, dict[str, int]] = {PREDATOR: {}, SETTINGS: {}}
        self.prey_rows: list[int] = []
        self.scenario_rows: list[list[int]] = []
        self.uncertainty_rows: list[int] = []
        self.observation_rows: list[int] = []

    def covered(self, where: str) -> bool:
        """Whether a location is a cell hidden under merged cells already reported."""
        m = re.match(r"^'?(.*?)'?!([A-Z]+)(\d+) ", where)
        if not m:
            return False
        title = m.group(1).replace("''", "'")
        letters = m.group(2)
        col = 0
        for ch in letters:
            col = col * 26 + ord(ch) - ord("A") + 1
        return any(t.title == title and (int(m.group(3)), col) in t.covered
                   for t in self.tables.values())

    def sheet(self, section: str) -> str:
        """Location of a whole sheet (used when the sheet is missing)."""
        return f"{self.sheet_names[section]} sheet"

    def _field_value(self, section: str, name: str) -> str:
        table = self.tables.get(section)
        if table is None or not table.columns:
            return self.sheet(section)
        if not name:
            return f"{sheet_ref(table.title)} sheet"
        row = self.field_rows[section].get(name)
        if row is None:
            if "field" not in table.columns:
                return table.where("field", table.header_row)
            return (f"{sheet_ref(table.title)}!{column_letter(table.columns['field'])}"
                    f"{table.free_row} ({name}: row missing)")
        return table.where("value", row, name)

    def _row_cell(self, section: str, rows: list[int], index: int, column: str) -> str:
        table = self.tables.get(section)
        if table is None or not table.columns:
            return self.sheet(section)
        row = rows[index] if 0 <= index < len(rows) else table.header_row + 1
        return table.where(column or "name", row)

    def predator(self, field: str) -> str:
        return self._field_value(PREDATOR, field)

    def settings(self, field: str) -> str:
        return self._field_value(SETTINGS, field)

    def prey(self, index: int, field: str) -> str:
        return self._row_cell(PREY, self.prey_rows, index, field or "name")

    def scenario(self, index: int, key: str) -> str:
        rows = [r[0] for r in self.scenario_rows]
        return self._row_cell(SCENARIOS, rows, index, "scenario")

    def change(self, scenario: int, index: int, key: str) -> str:
        rows = self.scenario_rows[scenario] if 0 <= scenario < len(self.scenario_rows) else []
        return self._row_cell(SCENARIOS, rows, index, key)

    def uncertainty(self, index: int, key: str) -> str:
        return self._row_cell(UNCERTAINTY, self.uncertainty_rows, index, key)

    def observation(self, index: int, key: str) -> str:
        return self._row_cell(OBSERVATIONS, self.observation_rows, index, key)


# --------------------------------------------------------------------------- reading


def read_workbook_study(path: str | Path) -> Study:
    """Read, validate and build a study from a study workbook (.xlsx).

    Parameters
    ----------
    path : str or Path
        The workbook; it is only read, never written.

    Returns
    -------
    Study
        With ``source`` the path and ``source_sha256`` the SHA-256 of its bytes.

    Raises
    ------
    StudyError
        Every problem at once, each naming its sheet and cell.
    """
    path = Path(path)
    source = str(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise StudyError([Problem(source, "a file riskdiet may read",
                                  exc.strerror or type(exc).__name__)], source) from None
    workbook, formulas = _open(data, source)
    reader = _Reader(workbook, formulas)
    raw = reader.read()
    problems = reader.problems
    study = None
    try:
        study = build_study(raw, locator=reader.locator, source=source)
    except StudyError as exc:
        # one problem per place: a cell already reported is not reported again as blank
        seen = {p.where for p in problems} | reader.unchecked
        for p in exc.problems:
            where = reader.locator.sheet(PREY) if p.where == "prey" else p.where
            if where not in seen and not reader.locator.covered(where):
                problems.append(dataclasses.replace(p, where=where))
                seen.add(where)
    if problems or study is None:
        raise StudyError(sort_problems(problems), source)
    return dataclasses.replace(study, notices=study.notices + tuple(reader.notices),
                               source_sha256=file_sha256(path))


def sort_problems(problems: list[Problem]) -> list[Problem]:
    """Order problems by sheet (layout order), then row, then column."""
    order = {name.lower(): i for i, name in enumerate(SHEETS)}

    def key(p: Problem) -> tuple:
        m = re.match(r"^'?(.*?)'?(?:!([A-Z]+)(\d+)| sheet)", p.where)
        if not m:
            return (-1, 0, 0, "")
        sheet = m.group(1).replace("''", "'").strip().lower()
        row = int(m.group(3)) if m.group(3) else 0
        col = m.group(2) or ""
        return (order.get(sheet, len(order)), row, len(col), col)

    return sorted(problems, key=key)


def _open(data: bytes, source: str) -> tuple[Any, dict[str, dict[tuple[int, int], str]]]:
    """Load the workbook twice from memory: saved values, and where formulas are."""
    import openpyxl

    formulas: dict[str, dict[tuple[int, int], str]] = {}
    try:
        values = openpyxl.load_workbook(io.BytesIO(data), data_only=True)
        formula_book = openpyxl.load_workbook(io.BytesIO(data), data_only=False, read_only=True)
        try:
            for ws in formula_book.worksheets:
                if key_of(ws.title) not in {s.lower() for s in SHEETS}:
                    continue
                cells = formulas.setdefault(ws.title, {})
                for row in ws.iter_rows():
                    for cell in row:
                        if getattr(cell, "data_type", None) == "f":
                            cells[(cell.row, cell.column)] = str(cell.value)
                if cells:
                    # a formula whose saved result is the empty text reads as a blank cell
                    for key in _empty_text_results(data, getattr(ws, "_worksheet_path", "")):
                        cells.pop(key, None)
        finally:
            formula_book.close()
    except Exception:  # any failure of the parser means "not a workbook we can read"
        raise StudyError([Problem(source, _ACCEPTED_XLSX,
                                  f"a file that is not an .xlsx workbook ({_what_is(data)})"
                                  )], source) from None
    return values, formulas


def _empty_text_results(data: bytes, member: str) -> set[tuple[int, int]]:
    """Formula cells saved with a text result that is empty (``=IF(A1="","",…)``).

    Spreadsheet programs store such a result as ``<c t="str"><f>…</f><v></v></c>``;
    a formula that no program has calculated has no ``t="str"`` (openpyxl) or no
    ``<v>`` at all, and keeps the "no saved result" message.
    """
    import zipfile
    from xml.etree.ElementTree import iterparse

    from openpyxl.utils.cell import column_index_from_string, coordinate_from_string

    ns = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
    found: set[tuple[int, int]] = set()
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        fh = archive.open(member)
    except (KeyError, OSError, zipfile.BadZipFile):
        return found
    with archive, fh:
        for _, element in iterparse(fh):
            if element.tag != f"{ns}c":
                continue
            if (element.get("t") == "str" and element.get("r")
                    and element.find(f"{ns}f") is not None
                    and (v := element.find(f"{ns}v")) is not None and not v.text):
                letters, row = coordinate_from_string(element.get("r"))
                found.add((row, column_index_from_string(letters)))
            element.clear()
    return found


def _what_is(data: bytes) -> str:
    """A plain guess at what a file that failed to open really is."""
    if not data:
        return "an empty file"
    if data.startswith(b"\xd0\xcf\x11\xe0"):
        return "an old-style .xls file, or a password-protected workbook"
    if data.startswith(b"PK") and b"application/vnd.oasis.opendocument.spreadsheet" in data[:200]:
        return ("an OpenDocument spreadsheet (.ods) renamed .xlsx: open it in your spreadsheet "
                "program and save it with File > Save As, type Excel 2007-365 (.xlsx)")
    if data.startswith(b"PK"):
        return "a damaged or incomplete workbook, or a zip archive of other files"
    if data.startswith(b"%PDF"):
        return "a PDF document"
    try:
        data[:4096].decode("utf-8")
    except UnicodeDecodeError:
        return "unrecognised bytes"
    return "a text file, perhaps a CSV file renamed to .xlsx"


class _Reader:
    """Converts the sheets of a loaded workbook to the JSON layout."""

    def __init__(self, workbook: Any, formulas: dict[str, dict[tuple[int, int], str]]):
        self.workbook = workbook
        self.formulas = formulas
        self.locator = WorkbookLocator()
        self.problems: list[Problem] = []
        self.notices: list[Notice] = []
        # places whose validation problems would only repeat one already reported
        self.unchecked: set[str] = set()

    def read(self) -> dict:
        sheets = self._find_sheets()
        raw: dict[str, Any] = {}
        predator, notes = self._field_values(sheets.get(PREDATOR), PREDATOR, Predator)
        if notes:
            predator["notes"] = notes
        raw["predator"] = predator
        raw["prey"], prey_names = self._prey(sheets.get(PREY))
        raw["scenarios"] = self._scenarios(sheets.get(SCENARIOS), prey_names)
        raw["uncertainty"] = self._uncertainty(sheets.get(UNCERTAINTY))
        if prey_names is None:  # no prey rows: every prey name would look unknown
            self.unchecked |= {self.locator.uncertainty(i, "prey")
                               for i, row in enumerate(raw["uncertainty"]) if "prey" in row}
        raw["settings"], _ = self._field_values(sheets.get(SETTINGS), SETTINGS, Settings)
        raw["observations"] = self._observations(sheets.get(OBSERVATIONS))
        if prey_names is None:
            self.unchecked |= {self.locator.observation(i, "prey")
                               for i, row in enumerate(raw["observations"]) if "prey" in row}
        return raw

    def _find_sheets(self) -> dict[str, Any]:
        found: dict[str, Any] = {}
        wanted = {name.lower(): name for name in SHEETS}
        for ws in self.workbook.worksheets:
            section = wanted.get(key_of(ws.title))
            if section is None:
                if key_of(ws.title) != README.lower():
                    self.notices.append(Notice(f"{sheet_ref(ws.title)} sheet",
                                               "not read: riskdiet reads the sheets "
                                               + ", ".join(SHEETS)))
                continue
            if section in found:
                self.problems.append(Problem(f"{sheet_ref(ws.title)} sheet",
                                             f"one sheet named {section}",
                                             f"a second one besides {found[section].title!r}"))
                continue
            found[section] = ws
            self.locator.sheet_names[section] = ws.title
        titles = ", ".join(ws.title for ws in self.workbook.worksheets)
        for section in REQUIRED_SHEETS:
            if section not in found:
                self.problems.append(Problem(self.locator.sheet(section),
                                             f"a sheet named {section} (this workbook has: "
                                             f"{titles})", "no such sheet"))
        return found

    def _table(self, ws: Any, section: str, known: dict[str, Any]) -> Table:
        table = read_table(ws, self.formulas.get(ws.title, {}), known,
                           _REQUIRED_COLUMNS[section], self.problems,
                           optional=section not in REQUIRED_SHEETS,
                           label_by="field" if known is FIELD_VALUE_COLUMNS else None)
        self.locator.tables[section] = table
        return table

    def _field_values(self, ws: Any, section: str, cls: type) -> tuple[dict, dict]:
        """Rows of field/value pairs (Predator, Settings)."""
        values: dict[str, Any] = {}
        notes: dict[str, str] = {}
        if ws is None:
            return values, notes
        table = self._table(ws, section, FIELD_VALUE_COLUMNS)
        specs = field_specs(cls)
        rows = self.locator.field_rows[section]
        for r in table.rows:
            name = table.get("field", r)
            if name is None:
                if table.readable("field", r) and "field" in table.columns:
                    self.problems.append(Problem(table.where("field", r),
                                                 f"a {section.lower()} field name",
                                                 "nothing (blank) in a row holding values"))
                continue
            key = key_of(name)
            if key not in specs:
                self.problems.append(Problem(table.where("field", r),
                                             f"a {section.lower()} field name ("
                                             + ", ".join(specs) + ")", describe(name)))
                continue
            if key in rows:
                self.problems.append(Problem(table.where("field", r),
                                             f"each field once ({key} is already in row "
                                             f"{rows[key]})", describe(name)))
                continue
            rows[key] = r
            value = table.get("value", r)
            if value is not None:
                values[key] = value
            note = table.get("note", r)
            if note is not None and section == PREDATOR:
                notes[key] = str(note).strip()
            unit = table.get("unit", r)
            if section == PREDATOR and unit is not None and (
                    _unitkey_of(unit) != _unitkey_of(specs[key].unit)):
                self.notices.append(Notice(
                    table.where("unit", r, key),
                    f"the unit column says {describe(unit)} but riskdiet reads this value in "
                    f"{specs[key].unit}; convert the value and restore the unit"))
        return values, notes

    def _prey(self, ws: Any) -> tuple[list[dict], set[str] | None]:
        if ws is None:
            return [], None
        specs = field_specs(Prey)
        table = self._table(ws, PREY, specs)
        if not any(c in table.columns for c in _ENCOUNTER_COLUMNS) and table.rows:
            self.problems.append(Problem(table.where(_ENCOUNTER_COLUMNS[0], table.header_row),
                                         "a column named encounters_per_day or "
                                         "density_per_km2", "neither"))
        records: list[dict] = []
        names: dict[str, int] = {}
        for r in table.rows:
            record = {name: table.get(name, r) for name in table.columns
                      if table.get(name, r) is not None}
            name = record.get("name")
            if name is not None:
                key = key_of(name)
                if key in names:
                    self.problems.append(Problem(table.where("name", r),
                                                 f"a unique prey name (also in row {names[key]})",
                                                 describe(name)))
                names.setdefault(key, r)
            records.append(record)
            self.locator.prey_rows.append(r)
        if not table.rows and table.columns:
            self.problems.append(Problem(self.locator.sheet(PREY),
                                         "at least one prey row below the column names",
                                         "none"))
        return records, (set(names) or None)

    def _scenarios(self, ws: Any, prey_names: set[str] | None) -> list[dict]:
        if ws is None:
            return []
        table = self._table(ws, SCENARIOS, SCENARIO_COLUMNS)
        pspecs, yspecs = field_specs(Predator), field_specs(Prey)
        out: list[dict] = []
        started: dict[str, int] = {}
        current: str | None = None
        for r in table.rows:
            name = table.get("scenario", r)
            if name is None:
                if table.readable("scenario", r):
                    self.problems.append(Problem(table.where("scenario", r),
                                                 "a scenario name (repeat it on every row of "
                                                 "the scenario)", "nothing (blank)"))
                current = None
                continue
            key = key_of(name)
            if key != current:
                current = key
                if key in started:
                    self.problems.append(Problem(
                        table.where("scenario", r),
                        f"a scenario name not used above (rows of one scenario must follow "
                        f"one another; {str(name).strip()!r} starts in row {started[key]})",
                        describe(name)))
                    current = "\0duplicate"
                    continue
                started[key] = r
                out.append({"name": str(name).strip(), "changes": [], "notes": [], "rows": []})
            elif current == "\0duplicate":
                continue
            scenario = out[-1]
            note = table.get("note", r)
            if note is not None:
                scenario["notes"].append(str(note).strip())
            if not self._change_ok(table, r, prey_names, pspecs, yspecs):
                continue
            scenario["changes"].append({k: table.get(k, r) for k in
                                        ("prey", "field", "change", "value")})
            scenario["rows"].append(r)
        raw: list[dict] = []
        for scenario in out:
            if not scenario["rows"]:
                continue  # every row was reported already
            raw.append({"name": scenario["name"], "changes": scenario["changes"],
                        "note": " ".join(scenario["notes"])})
            self.locator.scenario_rows.append(scenario["rows"])
        return raw

    def _change_ok(self, table: Table, r: int, prey_names: set[str] | None,
                   pspecs: dict, yspecs: dict) -> bool:
        """Check a change row's prey and field names, pointing at their own cells."""
        ok = True
        prey = table.get("prey", r)
        if prey is not None and prey_names is not None and key_of(prey) not in prey_names:
            self.problems.append(Problem(table.where("prey", r),
                                         "the name of a prey type on the Prey sheet, or blank "
                                         "for a predator field", describe(prey)))
            ok = False
        name = table.get("field", r)
        if name is not None:
            specs = pspecs if prey is None else yspecs
            if key_of(name) not in specs or key_of(name) == "name":
                kind = "predator" if prey is None else "prey"
                allowed = ", ".join(f for f in specs if f != "name")
                self.problems.append(Problem(table.where("field", r),
                                             f"a {kind} field ({allowed})", describe(name)))
                ok = False
        return ok

    def _uncertainty(self, ws: Any) -> list[dict]:
        if ws is None:
            return []
        table = self._table(ws, UNCERTAINTY, UNCERTAINTY_COLUMNS)
        out = []
        for r in table.rows:
            out.append({k: table.get(k, r) for k in UNCERTAINTY_COLUMNS
                        if table.get(k, r) is not None})
            self.locator.uncertainty_rows.append(r)
        return out

    def _observations(self, ws: Any) -> list[dict]:
        if ws is None:
            return []
        table = self._table(ws, OBSERVATIONS, OBSERVATION_COLUMNS)
        out = []
        for r in table.rows:
            out.append({k: table.get(k, r) for k in OBSERVATION_COLUMNS
                        if table.get(k, r) is not None})
            self.locator.observation_rows.append(r)
        return out


def _unitkey_of(unit: Any) -> str:
    return re.sub(r"\s+", "", str(unit)).lower().replace("²", "2")
