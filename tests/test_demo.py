"""Tests of ``riskdiet demo`` and the demo study shipped inside the package.

References used below:
FIPS 180-4 SHA-256 via Python's hashlib; PEP 621 / setuptools package-data
(files shipped with ``pip install .``); POSIX exit status conventions (0 on
success, 2 for refused input); ECMA-376 (an .xlsx file is a ZIP package).
"""

from __future__ import annotations

import fnmatch
import hashlib
import io
import re
import tomllib
import zipfile
from importlib import resources

from conftest import EXAMPLE, ROOT
from pypdf import PdfReader
from typer.testing import CliRunner

from riskdiet.cli import app
from riskdiet.demo import DEMO_STUDY, demo_study_dict
from riskdiet.io import load_study

runner = CliRunner()


def test_packaged_demo_study_is_byte_identical_to_the_example():
    """The copy inside the package (what ``riskdiet demo`` uses) and
    examples/harrow-vale.json are the same bytes (SHA-256, FIPS 180-4): edit
    the example, then copy it to riskdiet/data/."""
    packaged = resources.files("riskdiet").joinpath(DEMO_STUDY).read_bytes()
    assert hashlib.sha256(packaged).hexdigest() == hashlib.sha256(EXAMPLE.read_bytes()).hexdigest()


def test_packaged_demo_study_is_declared_as_package_data():
    """pyproject's setuptools package-data patterns match the demo study, so
    ``pip install .`` ships it (setuptools package-data, PEP 621 layout)."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    patterns = config["tool"]["setuptools"]["package-data"]["riskdiet"]
    assert any(fnmatch.fnmatch(DEMO_STUDY, p) for p in patterns)


def test_demo_writes_workbook_results_and_brief(tmp_path):
    """``riskdiet demo --out DIR`` writes three files and says where they are;
    the brief names the demo workbook and carries its SHA-256 (FIPS 180-4),
    the workbooks are ZIP packages (ECMA-376), and the workbook reads back as
    the same study as the example file (common practice: a demo is the real
    path a user takes)."""
    out = tmp_path / "demo"
    result = runner.invoke(app, ["demo", "--out", str(out)])
    assert result.exit_code == 0, result.stderr
    workbook = out / "harrow-vale.xlsx"
    results = out / "harrow-vale-results.xlsx"
    brief = out / "harrow-vale-brief.pdf"
    for path in (workbook, results, brief):
        assert path.is_file()
        assert str(path) in result.stdout
    for path in (workbook, results):
        assert zipfile.is_zipfile(path)
    text = re.sub(r"\s+", "", " ".join(p.extract_text() for p in
                                         PdfReader(io.BytesIO(brief.read_bytes())).pages))
    assert hashlib.sha256(workbook.read_bytes()).hexdigest() in text
    assert "harrow-vale.xlsx" in text
    from_workbook, from_json = load_study(workbook), load_study(EXAMPLE)
    assert from_workbook.predator == from_json.predator
    assert from_workbook.prey == from_json.prey
    assert [s.name for s in from_workbook.scenarios] == [s.name for s in from_json.scenarios]


def test_demo_refuses_to_overwrite_without_force(tmp_path):
    """A second run without --force exits 2, names --force and writes nothing;
    with --force it replaces the files (POSIX exit status; common practice)."""
    out = tmp_path / "demo"
    assert runner.invoke(app, ["demo", "--out", str(out)]).exit_code == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    (out / "harrow-vale-brief.pdf").write_bytes(b"edited by the user")
    result = runner.invoke(app, ["demo", "--out", str(out)])
    assert result.exit_code == 2 and "--force" in result.stderr
    assert (out / "harrow-vale-brief.pdf").read_bytes() == b"edited by the user"
    result = runner.invoke(app, ["demo", "--out", str(out), "--force"])
    assert result.exit_code == 0, result.stderr
    assert (out / "harrow-vale-brief.pdf").read_bytes() == before["harrow-vale-brief.pdf"]


def test_demo_study_is_labelled_illustrative():
    """The demo study says it is invented (project rule: demo data are
    illustrative, never field data)."""
    raw = demo_study_dict()
    assert "illustrative" in raw["settings"]["study_name"].lower()
    assert "invented" in raw["settings"]["description"].lower()
