"""One worksheet read as a table: a row of column names over rows of data.

Generic over the study layout (:mod:`riskdiet.io.workbook` says which sheets
and columns exist). Reading records each known column's position and each
non-blank cell's value, and reports what cannot be used, naming the cell:
unknown or repeated column names, values under no column name, missing
required columns, merged cells touching the table, formulas with no saved
result and spreadsheet errors. Blank rows, wherever they are, are skipped.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass, field
from typing import Any

from riskdiet.errors import Problem, describe
from riskdiet.fields import is_blank


def column_letter(index: int) -> str:
    """Spreadsheet column letters of a 1-based column index (1 -> A, 27 -> AA)."""
    letters = ""
    while index > 0:
        index, rest = divmod(index - 1, 26)
        letters = chr(ord("A") + rest) + letters
    return letters


def sheet_ref(title: str) -> str:
    """A sheet name as written in a cell reference (quoted when it has spaces)."""
    return title if re.fullmatch(r"[A-Za-z0-9_]+", title) else "'" + title.replace("'", "''") + "'"


def key_of(value: Any) -> str:
    """A name as matched: text, surrounding spaces removed, lower case."""
    return str(value).strip().lower()


# --------------------------------------------------------------------------- tables


@dataclass
class Table:
    """One data sheet as read: column names, data rows and cell values.

    Attributes
    ----------
    title : str
        Sheet name as spelt in the workbook.
    header_row : int
        Row of the column names (1-based).
    columns : dict
        Known column name -> column index (1-based).
    missing : dict
        Required column name that is absent -> the column index it is reported at.
    rows : list of int
        Rows holding data, top to bottom.
    values : dict
        (row, column) -> cell value, for non-blank cells.
    withheld : set
        (row, column) of cells whose value was reported as unreadable.
    covered : set
        (row, column) of cells hidden under a reported merged range.
    free_row : int
        First row below the last row of the sheet.
    """

    title: str
    header_row: int = 1
    columns: dict[str, int] = field(default_factory=dict)
    missing: dict[str, int] = field(default_factory=dict)
    rows: list[int] = field(default_factory=list)
    values: dict[tuple[int, int], Any] = field(default_factory=dict)
    withheld: set[tuple[int, int]] = field(default_factory=set)
    covered: set[tuple[int, int]] = field(default_factory=set)
    free_row: int = 2

    def where(self, column: str, row: int, label: str | None = None) -> str:
        """Location of a column's cell in a row; a missing column points at its header."""
        ref = sheet_ref(self.title)
        if column in self.columns:
            return f"{ref}!{column_letter(self.columns[column])}{row} ({label or column})"
        col = self.missing.get(column)
        if col is None:
            col = max([*self.columns.values(), *self.missing.values(), 0]) + 1
            self.missing[column] = col
        return f"{ref}!{column_letter(col)}{self.header_row} ({column})"

    def get(self, column: str, row: int) -> Any:
        col = self.columns.get(column)
        return None if col is None else self.values.get((row, col))

    def readable(self, column: str, row: int) -> bool:
        """Whether the cell was not already reported (unreadable, or under merged cells)."""
        col = self.columns.get(column)
        return col is not None and (row, col) not in self.withheld | self.covered


def _cell_value(cell: Any, formula: str | None) -> tuple[Any, str | None]:
    """A cell's value for the study, or a description of why it cannot be used."""
    value = cell.value
    if getattr(cell, "data_type", None) == "e":
        return None, f"the spreadsheet error {value}"
    if value is None and formula is not None:
        return None, f'the formula "{formula}" with no saved result'
    if isinstance(value, dt.datetime):
        if value.time() == dt.time(0):
            return value.date().isoformat(), None
        return value.isoformat(sep=" "), None
    if isinstance(value, (dt.date, dt.time, dt.timedelta)):
        return str(value), None
    return value, None


def _problem_for(found: str) -> tuple[str, str]:
    if found.startswith("the formula"):
        return ("a saved value: open the workbook in a spreadsheet program and save it so "
                "formula results are stored, or type the value"), found
    return "a value, not an error: fix the formula or type the value", found


def read_table(ws: Any, formulas: dict[tuple[int, int], str], known: dict[str, Any],
               required: tuple[str, ...], problems: list[Problem],
               optional: bool = False, label_by: str | None = None) -> Table:
    """Read a sheet laid out as a row of column names over rows of data.

    Parameters
    ----------
    ws : openpyxl worksheet
        Loaded with ``data_only=True`` (not read-only, for merged-cell ranges).
    formulas : dict
        (row, column) -> formula text, for the formula cells of this sheet.
    known : mapping
        Allowed column names (lower case), in the order shown in messages.
    required : tuple of str
        Column names that must be present.
    problems : list of Problem
        Appended to.
    optional : bool
        An empty sheet is fine (no rows) rather than a problem.
    label_by : str, optional
        Column naming what a row is about (``field`` on the Predator sheet): an
        unreadable cell of that row is then labelled by it, ``Predator!B5
        (daily_cost_mj)``, as the locator labels the row's value.

    Notes
    -----
    The column names are on the first non-blank row that holds one of the
    ``known`` names (or on the first non-blank row if none does); rows above
    it, such as a title, are ignored.
    """
    from openpyxl.cell.cell import MergedCell

    table = Table(ws.title)
    ref = sheet_ref(ws.title)
    grid: dict[tuple[int, int], Any] = {}
    nonblank_rows: list[int] = []
    for row in ws.iter_rows():
        filled = False
        for cell in row:
            if isinstance(cell, MergedCell):
                continue
            r, c = cell.row, cell.column
            value, issue = _cell_value(cell, formulas.get((r, c)))
            if issue is not None:
                grid[(r, c)] = _Issue(issue)
                filled = True
            elif not is_blank(value):
                grid[(r, c)] = value
                filled = True
        if filled:
            nonblank_rows.append(row[0].row)
    table.free_row = (nonblank_rows[-1] + 1) if nonblank_rows else 2
    if not nonblank_rows:
        if not optional:
            problems.append(Problem(f"{ref} sheet", "a row of column names (" + ", ".join(known)
                                    + ") and rows of data below it", "an empty sheet"))
        return table
    header = nonblank_rows[0]
    for r in nonblank_rows:
        if any(rr == r and not isinstance(v, _Issue) and key_of(v) in known
               for (rr, _), v in grid.items()):
            header = r
            break
    table.header_row = header
    table.rows = [r for r in nonblank_rows if r > header]
    grid = {(r, c): v for (r, c), v in grid.items() if r >= header}

    named: set[int] = set()
    for (r, c), value in sorted(grid.items()):
        if r != header:
            continue
        named.add(c)
        where = f"{ref}!{column_letter(c)}{r}"
        if isinstance(value, _Issue):
            problems.append(Problem(where, "a column name", value.found))
            continue
        name = key_of(value)
        if name not in known:
            problems.append(Problem(where, f"a column name of the {ws.title} sheet ("
                                    + ", ".join(known) + ")", describe(value)))
        elif name in table.columns:
            first = column_letter(table.columns[name])
            problems.append(Problem(where, f"each column once ({name} is already column "
                                    f"{first})", describe(value)))
        else:
            table.columns[name] = c
    orphans: dict[int, int] = {}
    for (r, c) in grid:
        if r > header and c not in named:
            orphans.setdefault(c, r)
    for c, r in sorted(orphans.items()):
        problems.append(Problem(f"{ref}!{column_letter(c)}{header}",
                                f"a column name above the values in column {column_letter(c)} "
                                "(or delete those values)",
                                f"no name, while {column_letter(c)}{r} holds a value"))
    for name in required if table.rows else ():
        if name not in table.columns:
            problems.append(Problem(table.where(name, header), f"a column named {name}",
                                    "no such column"))

    data_rows = {header, *table.rows}
    for merged in sorted(ws.merged_cells.ranges, key=lambda m: (m.min_row, m.min_col)):
        if any(merged.min_row <= r <= merged.max_row for r in data_rows):
            problems.append(Problem(f"{ref}!{merged.coord}",
                                    "separate cells: only the top-left cell of merged cells "
                                    "keeps its value (unmerge them and fill in every cell)",
                                    "merged cells"))
            table.covered |= {(r, c) for r in range(merged.min_row, merged.max_row + 1)
                              for c in range(merged.min_col, merged.max_col + 1)
                              if (r, c) != (merged.min_row, merged.min_col)}

    wanted = set(table.columns.values())
    for (r, c), value in grid.items():
        if r == header or c not in wanted or isinstance(value, _Issue):
            continue
        table.values[(r, c)] = value
    for (r, c), value in sorted(grid.items()):
        if r == header or c not in wanted or not isinstance(value, _Issue):
            continue
        name = next(n for n, col in table.columns.items() if col == c)
        label = None
        if label_by is not None and name != label_by:
            subject = table.get(label_by, r)
            label = key_of(subject) if subject is not None else None
        expected, found = _problem_for(value.found)
        problems.append(Problem(table.where(name, r, label), expected, found))
        table.withheld.add((r, c))
    # rows whose only values sit in unnamed or unknown columns were reported above
    used = {r for r, _ in table.values} | {r for r, _ in table.withheld}
    table.rows = [r for r in table.rows if r in used]
    return table


@dataclass(frozen=True)
class _Issue:
    found: str
