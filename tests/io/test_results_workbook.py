"""The results workbook and CSV tables: complete, numeric, safe to write."""

from __future__ import annotations

import csv
import hashlib
import shutil
from pathlib import Path

import openpyxl
import pytest

import riskdiet
from riskdiet.errors import OutputExistsError
from riskdiet.io.results_workbook import write_results_csv, write_results_workbook

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "harrow-vale.json"


@pytest.fixture(scope="module")
def result():
    return riskdiet.solve(riskdiet.load_study(EXAMPLE))


def _header_row(ws, first: str) -> int:
    for row in ws.iter_rows(min_row=1, max_row=10):
        if row[0].value == first:
            return row[0].row
    raise AssertionError(f"no header {first!r} in {ws.title}")


def test_workbook_sheets_numbers_and_provenance(result, tmp_path):
    """The workbook reloads with openpyxl (the reference reader), holds a summary, a
    comparison, kills, one sheet per scenario, the classic ranking and provenance; numbers
    are stored as numbers with number formats and headers are frozen."""
    path = write_results_workbook(result, tmp_path / "r.xlsx")
    wb = openpyxl.load_workbook(path)
    names = wb.sheetnames
    for sheet in ("Summary", "Comparison", "Kills", "Predators", "Classic", "Provenance"):
        assert sheet in names
    for s in result.scenarios:
        assert s.name in names
    ws = wb["baseline"]
    h = _header_row(ws, "Energy level")
    assert ws.freeze_panes == f"A{h + 1}"
    first = ws.cell(row=h + 1 + 50, column=4)  # fitness of a healthy animal at level 50
    assert isinstance(first.value, float)
    assert first.value == pytest.approx(float(result.scenarios[0].fitness["healthy"][50]))
    assert first.number_format == "0.0000"
    prov = [[c.value for c in row] for row in wb["Provenance"].iter_rows()]
    digest = hashlib.sha256(EXAMPLE.read_bytes()).hexdigest()
    assert any(digest in (str(v) for v in row) for row in prov)
    assert any("Bellman residual" in str(row[3]) for row in prov)


def test_csv_tables_match_workbook(result, tmp_path):
    """--csv writes the same Kills table as the workbook (one source of tables): the same
    rows, the CSV header holding each column's key and the workbook its words."""
    wb_path = write_results_workbook(result, tmp_path / "r.xlsx")
    paths = write_results_csv(result, tmp_path / "csv")
    kills_csv = next(p for p in paths if p.name == "kills.csv")
    with open(kills_csv, encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    ws = openpyxl.load_workbook(wb_path)["Kills"]
    h = _header_row(ws, "Scenario")
    sheet_rows = [[c.value for c in r] for r in ws.iter_rows(min_row=h)]
    assert rows[0][:4] == ["scenario", "prey", "group", "kills_per_predator_per_day"]
    assert sheet_rows[0][:4] == ["Scenario", "Prey", "Group", "Kills per predator per day"]
    assert len(rows[0]) == len(sheet_rows[0])
    assert len(rows) == len(sheet_rows)
    for a, b in zip(rows[1:], sheet_rows[1:], strict=True):
        assert a[1] == b[1]
        if b[5] is not None:
            assert float(a[5]) == pytest.approx(b[5])


def test_refuses_overwrite_and_input(result, tmp_path):
    """An existing output is kept unless force is given, and the input is never the output
    (common practice for tools that write into users' folders)."""
    out = tmp_path / "r.xlsx"
    out.write_bytes(b"keep me")
    with pytest.raises(OutputExistsError):
        write_results_workbook(result, out)
    assert out.read_bytes() == b"keep me"
    write_results_workbook(result, out, force=True)
    assert out.read_bytes() != b"keep me"
    copy = tmp_path / "study.json"
    shutil.copy(EXAMPLE, copy)
    study = riskdiet.load_study(copy)
    res = riskdiet.solve(study)
    before = copy.read_bytes()
    with pytest.raises(OutputExistsError):
        write_results_workbook(res, copy, force=True)
    assert copy.read_bytes() == before
    assert not list(tmp_path.glob(".*.part"))


def test_wide_scenario_tables_are_turned_in_the_workbook_only(result, tmp_path):
    """The Comparison table (more than WIDE columns, a row per scenario) is shown turned in the
    workbook so it prints legibly: each scenario's column holds exactly the numbers of its row in
    the CSV file (read back with the standard library's csv module), which keeps one row per
    scenario (common practice for tidy data: a row per observation)."""
    from riskdiet.io.results_workbook import WIDE

    wb = openpyxl.load_workbook(write_results_workbook(result, tmp_path / "r.xlsx"))
    paths = write_results_csv(result, tmp_path / "csv")
    path = next(p for p in paths if "comparison" in p.name.lower())
    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    header, scenarios = rows[0], [r for r in rows[1:] if r and r[0] in
                                  {s.name for s in result.scenarios}]
    assert len(header) > WIDE
    ws = wb["Comparison"]
    head = next(r for r in ws.iter_rows(values_only=True) if r and r[0] == "Quantity")
    body = [r for r in ws.iter_rows(values_only=True) if r and r[1] in header[1:]]
    assert [r[1] for r in body] == header[1:]
    for row in scenarios:
        col = head.index(row[0])
        for j in range(1, len(header)):
            shown = body[j - 1][col]
            if row[j] == "":
                assert shown is None
            elif isinstance(shown, (int, float)) and not isinstance(shown, bool):
                assert shown == pytest.approx(float(row[j]), rel=1e-12)
            else:
                assert str(shown) == row[j]
