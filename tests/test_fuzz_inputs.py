"""Fuzz test: broken study files never crash riskdiet (issue 10, "Deliver").

Hypothesis mutates the valid demo study, as a JSON file and as a workbook: wrong
types, blanks, out-of-range numbers, unicode (control characters, lone
surrogates), missing, extra and renamed sheets and columns, merged cells,
formulas with and without saved values, duplicate names, truncated files. For
every mutation ``riskdiet check`` (which runs every validation the other commands
run) must either accept the study (exit 0) or exit 2 with every problem located
("PLACE: expected ..., found ..."); never a traceback; the input byte-identical;
nothing written beside it. The invariant is the project's error contract
(common practice); example counts keep the test well under 60 s.
"""

from __future__ import annotations

import datetime as dt
import io
import json
import re
import zipfile
from pathlib import Path

import openpyxl
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from riskdiet.cli import app

ROOT = Path(__file__).resolve().parent.parent
DEMO = json.loads((ROOT / "examples" / "harrow-vale.json").read_text())
DEMO_XLSX = (ROOT / "examples" / "harrow-vale.xlsx").read_bytes()
PROBLEM = re.compile(r"^  \S.*?: expected .+, found .+$")
FUZZ = settings(max_examples=100, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.function_scoped_fixture,
                                       HealthCheck.too_slow])

odd_text = st.text(alphabet=st.characters(codec=None, categories=None), max_size=12)
values = st.one_of(
    st.none(), st.just(""), st.just("   "), st.booleans(),
    st.integers(min_value=-(10**30), max_value=10**30), st.just(10**400),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from(["45%", "0,4", "30 %", "1/10", "2026-01-10", "abc", "−0.5", "yes",
                     "x" * 500, "\x00", "\ud800", "deer\nsmall", "=1+1", "1e400", ":zero:"]),
    odd_text, st.lists(st.integers(), max_size=2), st.dictionaries(st.text(max_size=3),
                                                                   st.integers(), max_size=2),
)


def assert_clean(path: Path) -> None:
    """The error contract for one input file."""
    before = path.read_bytes()
    listing = sorted(p.name for p in path.parent.iterdir())
    result = CliRunner().invoke(app, ["check", str(path)])
    assert result.exit_code in (0, 2), (result.exit_code, result.output, result.exception)
    assert result.exception is None or isinstance(result.exception, SystemExit), \
        result.exception
    assert "Traceback" not in result.stderr
    if result.exit_code == 2:
        lines = result.stderr.splitlines()
        assert lines[0].startswith("riskdiet: ")
        if "problem(s)" in lines[0]:
            assert lines[1:], result.stderr
            for line in lines[1:]:
                assert PROBLEM.match(line), line
        assert result.stdout == ""
    else:
        assert ": valid" in result.stdout
    assert path.read_bytes() == before
    assert sorted(p.name for p in path.parent.iterdir()) == listing


@st.composite
def json_mutation(draw):
    raw = json.loads(json.dumps(DEMO))
    kind = draw(st.sampled_from(["value", "value", "value", "delete", "extra", "section",
                                 "duplicate", "scenario", "truncate"]))
    if kind in ("value", "delete", "extra"):
        section = draw(st.sampled_from(["predator", "prey", "settings", "uncertainty"]))
        record = raw[section]
        if isinstance(record, list):
            record = record[draw(st.integers(0, len(record) - 1))]
        key = draw(st.sampled_from(sorted(record)))
        if kind == "value":
            record[key] = draw(values)
        elif kind == "delete":
            del record[key]
        else:
            record[draw(st.text(min_size=1, max_size=15))] = draw(values)
    elif kind == "section":
        raw[draw(st.sampled_from(["predator", "prey", "scenarios", "settings",
                                  "uncertainty", "extra"]))] = draw(values)
    elif kind == "duplicate":
        raw["prey"].append(dict(raw["prey"][draw(st.integers(0, len(raw["prey"]) - 1))]))
    elif kind == "scenario":
        change = raw["scenarios"][0]["changes"][0]
        change[draw(st.sampled_from(["prey", "field", "change", "value", "other"]))] = \
            draw(values)
    text = json.dumps(raw)
    if kind == "truncate":
        text = text[: draw(st.integers(0, len(text) - 1))]
    return text


@given(text=json_mutation())
@FUZZ
def test_mutated_json_studies_never_crash(tmp_path_factory, text):
    """Mutated JSON studies: exit 0 or exit 2 with located problems; see module docstring."""
    folder = tmp_path_factory.mktemp("json")
    path = folder / "study.json"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    assert_clean(path)


cell_values = st.one_of(
    values.filter(lambda v: not isinstance(v, (list, dict))
                  and not (isinstance(v, str) and any((ord(c) < 32 and c not in "\t\n\r")
                                                      or 0xD800 <= ord(c) <= 0xDFFF
                                                      for c in v))
                  and not (isinstance(v, int) and not isinstance(v, bool) and abs(v) > 2**53)),
    st.sampled_from(["=1/0", "=A1", '=IF(1=1,"",5)', "=SUM(B2:B3)"]),
    st.just(dt.datetime(2026, 1, 10)), st.just(dt.time(6, 30)))


@st.composite
def workbook_mutation(draw):
    wb = openpyxl.load_workbook(io.BytesIO(DEMO_XLSX))
    names = ["Predator", "Prey", "Scenarios", "Uncertainty", "Settings"]
    for _ in range(draw(st.integers(1, 3))):
        kind = draw(st.sampled_from(["cell", "cell", "cell", "delete sheet", "rename sheet",
                                     "add sheet", "merge", "insert column", "delete column",
                                     "delete row"]))
        present = [n for n in names if n in wb.sheetnames]
        if not present:
            break
        ws = wb[draw(st.sampled_from(present))]
        if kind == "cell":
            ws.cell(draw(st.integers(1, 10)), draw(st.integers(1, 13))).value = draw(cell_values)
        elif kind == "delete sheet":
            del wb[ws.title]
        elif kind == "rename sheet":
            ws.title = draw(st.sampled_from(["Scenario", "Uncertainity", "Setting", "prey ",
                                             "PREDATOR", "Sheet"]))
        elif kind == "add sheet":
            wb.create_sheet(draw(st.sampled_from(["Notes", "Prey2", "Settings "])))
        elif kind == "merge":
            r, c = draw(st.integers(1, 6)), draw(st.integers(1, 8))
            ws.merge_cells(start_row=r, start_column=c, end_row=r + draw(st.integers(0, 2)),
                           end_column=c + draw(st.integers(0, 2)))
        elif kind == "insert column":
            ws.insert_cols(draw(st.integers(1, 12)))
        elif kind == "delete column":
            ws.delete_cols(draw(st.integers(1, 12)))
        else:
            ws.delete_rows(draw(st.integers(1, 8)))
    buffer = io.BytesIO()
    wb.save(buffer)
    data = buffer.getvalue()
    finish = draw(st.sampled_from(["none", "none", "none", "cached formula", "truncate"]))
    if finish == "cached formula":
        # a formula with a saved result, as a spreadsheet program stores it
        out = io.BytesIO()
        with zipfile.ZipFile(io.BytesIO(data)) as src, zipfile.ZipFile(out, "w") as dst:
            for item in src.infolist():
                part = src.read(item)
                part = re.sub(rb'<c r="([A-Z]+[0-9]+)"( t="n")?><v>([^<]*)</v></c>',
                              rb'<c r="\1"\2><f>0+\3</f><v>\3</v></c>', part, count=3)
                dst.writestr(item, part)
        data = out.getvalue()
    elif finish == "truncate":
        # a fraction: the saved size varies (openpyxl stamps the time into docProps)
        data = data[: int(draw(st.floats(0, 0.999)) * len(data))]
    return data


@given(data=workbook_mutation())
@settings(max_examples=40, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
def test_mutated_workbooks_never_crash(tmp_path_factory, data):
    """Mutated study workbooks: exit 0 or exit 2 with located problems; see module
    docstring."""
    folder = tmp_path_factory.mktemp("xlsx")
    path = folder / "study.xlsx"
    path.write_bytes(data)
    assert_clean(path)
