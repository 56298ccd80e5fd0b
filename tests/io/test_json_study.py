"""Tests of JSON study files and of choosing a reader by file type.

References used below:
RFC 8259 (JSON syntax); FIPS 180-4 (SHA-256, computed here with Python's
hashlib as the reference); MODEL.md section 1 (field names = JSON keys).
"""

from __future__ import annotations

import copy
import hashlib
import json

import pytest
from conftest import EXAMPLE, INJURY_STUDY

from riskdiet.errors import StudyError
from riskdiet.io import load_study
from riskdiet.io.json_study import read_json_study, study_to_dict
from riskdiet.validation import build_study


def _problems(path) -> list:
    with pytest.raises(StudyError) as info:
        load_study(path)
    return info.value.problems


def test_syntax_error_names_line_and_column(tmp_path):
    """A JSON syntax error is reported with its line and column (1-based, as
    editors count; RFC 8259 grammar: a member name must follow a comma)."""
    lines = ["{", '  "predator": {', '    "name": "x",,', "  }", "}"]
    path = tmp_path / "broken.json"
    path.write_text("\n".join(lines), encoding="utf-8")
    column = lines[2].index(",,") + 2  # the second comma, 1-based
    (problem,) = _problems(path)
    assert problem.where == f"{path} line 3 column {column}"
    assert problem.expected == "valid JSON"


def test_value_problems_are_json_paths(tmp_path):
    """Faults are located by JSON path, e.g. prey[2].capture_success (MODEL.md
    section 1 names; JSON array indices from 0 per RFC 8259)."""
    raw = copy.deepcopy(INJURY_STUDY)
    raw["prey"][2]["capture_success"] = 1.7
    raw["predator"]["recovery_days"] = 0
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    where = {p.where for p in _problems(path)}
    assert where == {"prey[2].capture_success", "predator.recovery_days"}
    with pytest.raises(StudyError) as info:
        read_json_study(path)
    assert info.value.source == str(path)


@pytest.mark.parametrize(("suffix", "word"), [(".xls", "old-style Excel"),
                                              (".ods", "OpenDocument"), (".csv", "CSV"),
                                              (".txt", '".txt"'), ("", "(nothing)")])
def test_other_file_types_are_refused_with_advice(tmp_path, suffix, word):
    """Only .xlsx and .json are read; other spreadsheet formats are named and the
    user is told to save as .xlsx (common practice for file-type errors)."""
    path = tmp_path / f"study{suffix}"
    path.write_bytes(b"predator,prey\n")
    (problem,) = _problems(path)
    assert problem.where == str(path)
    assert ".xlsx" in problem.expected and ".json" in problem.expected
    assert word in problem.found


def test_missing_file_is_a_study_error(tmp_path):
    """A missing file is reported as such, not as a traceback (common practice)."""
    (problem,) = _problems(tmp_path / "nowhere.json")
    assert problem.found == "no such file"


def test_source_hash_is_sha256_of_the_file_bytes():
    """The recorded input hash equals SHA-256 of the file's bytes (FIPS 180-4,
    via hashlib)."""
    study = load_study(EXAMPLE)
    assert study.source_sha256 == hashlib.sha256(EXAMPLE.read_bytes()).hexdigest()
    assert study.source == str(EXAMPLE)


def test_byte_order_mark_is_accepted(tmp_path):
    """A UTF-8 byte-order mark, as some Windows editors write, is ignored
    (RFC 8259 section 8.1 allows parsers to ignore it)."""
    path = tmp_path / "bom.json"
    path.write_bytes(b"\xef\xbb\xbf" + json.dumps(INJURY_STUDY).encode("utf-8"))
    assert load_study(path).prey[0].name == "vole"


def test_study_round_trips_through_its_dictionary(tmp_path):
    """Writing a study back to the JSON layout and reading it again gives the
    same inputs (common practice: lossless round trip)."""
    study = load_study(EXAMPLE)
    path = tmp_path / "copy.json"
    path.write_text(json.dumps(study_to_dict(study)), encoding="utf-8")
    again = read_json_study(path)
    assert again.predator == study.predator
    assert again.prey == study.prey
    assert [s.name for s in again.scenarios] == [s.name for s in study.scenarios]
    assert [[(c.prey, c.field, c.change, c.value) for c in s.changes] for s in again.scenarios] \
        == [[(c.prey, c.field, c.change, c.value) for c in s.changes] for s in study.scenarios]
    assert again.uncertainty == study.uncertainty
    assert again.notes == study.notes
    assert build_study(study_to_dict(study)).settings == study.settings
