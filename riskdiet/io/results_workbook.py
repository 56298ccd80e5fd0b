"""Results as a workbook (one sheet per table) or as CSV files (one per table)."""

from __future__ import annotations

import csv
from pathlib import Path

from riskdiet.analysis.results import StudyResult
from riskdiet.io.atomic import OutputSet, write_atomic
from riskdiet.io.results_tables import Table, glossary_table, results_tables, table_names
from riskdiet.model import Study

WIDE = 12
"""A table with more columns than this and at most :data:`FEW` rows (one per scenario) is shown
turned (one row per quantity, one column per scenario) so that it prints legibly on a page; the
CSV file keeps one row per scenario."""
FEW = 12


def turned(table: Table) -> Table:
    """A wide table with rows and columns swapped: a row per column of ``table`` (its words,
    then its key), a column per row of ``table`` (named by the row's first cell)."""
    rows = [r for r in table.rows if r]
    keys = table.column_keys
    header = ["Quantity", "Key (CSV column)", *(str(r[0]) for r in rows)]
    out = [[table.header[j], keys[j], *(r[j] if j < len(r) else None for r in rows)]
           for j in range(1, len(table.header))]
    return Table(table.name, table.title, header, out, {}, table.notes, [])


def _write_sheet(ws, table: Table) -> None:
    import textwrap

    from openpyxl.styles import Alignment, Font
    from openpyxl.utils import get_column_letter

    row_formats = {}
    if len(table.header) > WIDE and len([r for r in table.rows if r]) <= FEW:
        # number formats belong to the former columns, now rows
        row_formats = {j - 1: f for j, f in table.formats.items() if j >= 1}
        table = turned(table)
    ws.append([table.title])
    ws["A1"].font = Font(bold=True, size=12)
    for note in table.notes:
        ws.append([note])
    header_row = ws.max_row + 1
    ws.append(table.header)
    for cell in ws[header_row]:
        cell.font = Font(bold=True)
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    for row in table.rows:
        ws.append([_cell(v) for v in row])
    for col, fmt in table.formats.items():
        letter = get_column_letter(col + 1)
        for r in range(header_row + 1, ws.max_row + 1):
            cell = ws[f"{letter}{r}"]
            if isinstance(cell.value, (int, float)) and not isinstance(cell.value, bool):
                cell.number_format = fmt
    for row, fmt in row_formats.items():
        for cell in ws[header_row + 1 + row]:
            if isinstance(cell.value, (int, float)) and not isinstance(cell.value, bool):
                cell.number_format = fmt
    ws.freeze_panes = ws.cell(row=header_row + 1, column=1)
    header_lines = 1
    for i, name in enumerate(table.header, start=1):
        # headers are words with units: they wrap over up to HEADER_LINES lines, so a
        # column is as wide as its values (and the header's longest word) need
        head = str(name)
        word = max((len(w) for w in head.split()), default=0)
        longest = max([word, -(-len(head) // HEADER_LINES)]
                      + [len(_shown(r[i - 1])) for r in table.rows[:200]
                         if len(r) >= i and r[i - 1] is not None])
        width = min(max(10, longest + 2), WIDEST)
        ws.column_dimensions[get_column_letter(i)].width = width
        header_lines = max(header_lines, len(textwrap.wrap(head, max(width - 2, 1))))
        if longest + 2 > WIDEST:  # long text (findings, notes) wraps inside its column
            for r in range(header_row + 1, ws.max_row + 1):
                cell = ws.cell(row=r, column=i)
                cell.alignment = Alignment(wrap_text=True, vertical="top")
                # spreadsheet programs do not grow rows for wrapped text on their own
                lines = -(-len(str(cell.value or "")) // (WIDEST - 4))
                if lines > 1:
                    height = LINE_POINTS * lines
                    current = ws.row_dimensions[r].height or 0
                    ws.row_dimensions[r].height = max(current, height)
    if header_lines > 1:
        ws.row_dimensions[header_row].height = LINE_POINTS * header_lines
    _print_setup(ws, header_row, len(table.header))


WIDEST = 60
"""Widest column [characters]; longer text wraps."""
HEADER_LINES = 3
"""Lines a header may wrap over before its column is widened."""


def _shown(value) -> str:
    """A cell's value roughly as a spreadsheet shows it (numbers with their format's few
    decimals, not every binary digit)."""
    if isinstance(value, float):
        return f"{value:,.4g}"
    return str(value)
LINE_POINTS = 15
"""Height of one line of wrapped text [pt]."""


def _print_setup(ws, header_row: int, columns: int) -> None:
    """Landscape, fit to the page width, the header row repeated on every printed page."""
    from openpyxl.utils import get_column_letter

    ws.print_area = f"A1:{get_column_letter(max(columns, 1))}{ws.max_row}"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_title_rows = f"{header_row}:{header_row}"
    ws.print_options.gridLines = True
    ws.oddFooter.center.text = "&P of &N"
    ws.oddHeader.left.text = "&A"


def _reproducible(data: bytes, stamp: tuple[int, int, int]) -> bytes:
    """The same workbook bytes for the same content: fixed zip times, fixed order.

    openpyxl stamps the zip entries with the time of saving; the date of the
    results (the study's report date, else today) is used instead.
    """
    import io
    import re
    import zipfile

    source = zipfile.ZipFile(io.BytesIO(data))
    when = f"{stamp[0]:04d}-{stamp[1]:02d}-{stamp[2]:02d}T00:00:00Z"
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        for info in source.infolist():
            fixed = zipfile.ZipInfo(info.filename, date_time=(*stamp, 0, 0, 0))
            fixed.compress_type = zipfile.ZIP_DEFLATED
            fixed.external_attr = 0o600 << 16
            content = source.read(info.filename)
            if info.filename == "docProps/core.xml":  # openpyxl sets "modified" to now on save
                content = re.sub(rb"(<dcterms:modified[^>]*>)[^<]*", rb"\g<1>" + when.encode(),
                                 content)
            target.writestr(fixed, content)
    return out.getvalue()


def _date_of(tables: list[Table]) -> str:
    """The results' date, as the Summary table records it."""
    for row in tables[0].rows:
        if len(row) == 2 and row[0] == "date":
            return str(row[1])
    raise ValueError("the Summary table has no date")


def _cell(value):
    if isinstance(value, bool):
        return "yes" if value else "no"
    return value


def write_results_workbook(result: StudyResult, path: str | Path, force: bool = False,
                           date: str | None = None, outputs: OutputSet | None = None,
                           extra_tables: list[Table] | tuple[Table, ...] = ()) -> Path:
    """Write the results workbook (summary, comparison, kills, scenarios, provenance).

    ``extra_tables`` (e.g. the uncertainty sheets) follow the result's own tables.

    Numbers are stored as numbers with number formats; headers carry units and
    are frozen. The file is written to a temporary name and renamed (when
    ``outputs`` is given: staged in that set, renamed when it is committed), and
    an existing file is replaced only with ``force``; the input is never touched.
    """
    import datetime as dt
    import io

    from openpyxl import Workbook

    tables = results_tables(result, date) + list(extra_tables)
    if extra_tables:  # the Glossary names the extra sheets' headers too
        tables = [glossary_table([t for t in tables if t.name != "Glossary"])
                  if t.name == "Glossary" else t for t in tables]
    source = (Path(result.study.source),) if result.study.source else ()
    day = dt.date.fromisoformat(_date_of(tables))

    def write(tmp: Path) -> None:
        wb = Workbook()
        wb.remove(wb.active)
        for table in tables:
            _write_sheet(wb.create_sheet(table.name), table)
        stamp = dt.datetime(day.year, day.month, day.day)
        wb.properties.title = f"{result.study.name}: riskdiet results"
        wb.properties.subject = "Predicted prey choice, kills and risk of a predator, by scenario"
        wb.properties.creator = f"riskdiet {result.riskdiet_version}"
        wb.properties.lastModifiedBy = f"riskdiet {result.riskdiet_version}"
        wb.properties.created = wb.properties.modified = stamp
        buffer = io.BytesIO()
        wb.save(buffer)
        tmp.write_bytes(_reproducible(buffer.getvalue(), (day.year, day.month, day.day)))

    return write_atomic(Path(path), write, force, source, outputs)


def csv_paths(study: Study, folder: str | Path) -> list[Path]:
    """The CSV files :func:`write_results_csv` writes for a study, one per table.

    File names are the table names made safe for every file system, and unique
    ignoring case: ``deer small`` and ``deer_small`` get ``deer_small.csv`` and
    ``deer_small-2.csv``, never one file for two tables.
    """
    folder = Path(folder)
    taken: set[str] = set()
    paths = []
    for name in table_names(study):
        base = _slug(name) or "table"
        stem, i = base, 2
        while stem.lower() in taken:
            stem, i = f"{base}-{i}", i + 1
        taken.add(stem.lower())
        paths.append(folder / f"{stem}.csv")
    return paths


def write_results_csv(result: StudyResult, folder: str | Path, force: bool = False,
                      date: str | None = None, outputs: OutputSet | None = None) -> list[Path]:
    """Write the same tables as CSV files (UTF-8, one header row) into a folder.

    The CSV header row holds each column's key (as in JSON), for programs; the
    workbook shows the same columns' words.

    All files are written together or not at all (see :class:`OutputSet`).
    """
    tables = results_tables(result, date)
    paths = csv_paths(result.study, folder)
    source = (Path(result.study.source),) if result.study.source else ()
    own = outputs is None
    outputs = outputs or OutputSet(force, source)
    try:
        for p in paths:
            if p not in outputs.planned:
                outputs.plan(p)
        for table, p in zip(tables, paths, strict=True):
            def write(tmp: Path, table: Table = table) -> None:
                with open(tmp, "w", newline="", encoding="utf-8") as fh:
                    out = csv.writer(fh)
                    out.writerow(table.column_keys)
                    for row in table.rows:
                        out.writerow(["" if v is None else v for v in row])
            outputs.stage(p, write)
        return outputs.commit() if own else paths
    finally:
        if own:
            outputs.discard()


def _slug(name: str) -> str:
    return "".join(c if c.isalnum() or c in "-_" else "_" for c in name.lower()).strip("_")
