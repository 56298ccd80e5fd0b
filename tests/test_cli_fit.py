"""``riskdiet fit``: the command, its JSON layout, the fitted study and the brief section.

Sources: the JSON layout is the one issue 13 fixes (documented in the README); RFC 8259
(no NaN or Infinity in JSON, caught with ``parse_constant``); POSIX conventions (exit 2
for input errors, diagnostics on stderr). Expected fitted values are not hard-coded:
the fitted workbook is checked against the fit's own JSON output.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from riskdiet.cli import app
from riskdiet.io.load import load_study
from tests.analysis.fit_studies import records, tiny

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[1]


def _strict(text: str) -> dict:
    def refuse(constant: str):
        raise AssertionError(f"non-standard JSON constant {constant}")

    return json.loads(text, parse_constant=refuse)


@pytest.fixture
def study_file(tmp_path) -> Path:
    rows = (records({"deer": 14, "hare": 25, "boar": 4}, source="pack A")
            + records({"deer": 11, "hare": 21, "boar": 6}, source="pack B")
            + [{"count": 30, "kind": "kills", "predator_days": 100}])
    path = tmp_path / "study.json"
    path.write_text(json.dumps(tiny(rows)), encoding="utf-8")
    return path


def test_fit_json_has_exactly_the_issue_layout_and_no_nan(study_file):
    """`fit --json` prints one strict JSON document with the layout of issue 13: fitted
    (value, low, high, pieces, at_bound), log_likelihood, observed, predicted, g_test (G, df,
    p, p_bootstrap), aicc (state_dependent, classic), verdict; inputs named as in the fit
    setting; shares sum to 1."""
    result = runner.invoke(app, ["fit", str(study_file), "--json"])
    assert result.exit_code == 0, result.stderr
    doc = _strict(result.stdout)
    for key in ("fitted", "log_likelihood", "observed", "predicted", "g_test", "aicc",
                "verdict"):
        assert key in doc
    entry = doc["fitted"]["hunting_ability"]
    assert {"value", "low", "high", "pieces", "at_bound"} <= set(entry)
    assert entry["low"] <= entry["value"] <= entry["high"]
    assert entry["pieces"][0][0] == entry["low"] and entry["pieces"][-1][1] == entry["high"]
    assert {"G", "df", "p", "p_bootstrap"} <= set(doc["g_test"])
    assert {"state_dependent", "classic"} <= set(doc["aicc"])
    assert sum(doc["observed"].values()) == pytest.approx(1.0)
    assert sum(doc["predicted"].values()) == pytest.approx(1.0)
    assert doc["verdict"].startswith("The records fit the model")
    assert doc["homogeneity"] and "pack A" in doc["homogeneity"][0]


def test_fit_out_writes_the_fitted_study_and_never_touches_the_input(study_file, tmp_path):
    """--out writes a new study workbook holding the fitted value with a note; the input's
    bytes are unchanged; a second run without --force refuses to overwrite (exit 2)."""
    before = hashlib.sha256(study_file.read_bytes()).hexdigest()
    out = tmp_path / "fitted.xlsx"
    result = runner.invoke(app, ["fit", str(study_file), "--out", str(out), "--json"])
    assert result.exit_code == 0, result.stderr
    value = _strict(result.stdout)["fitted"]["hunting_ability"]["value"]
    fitted = load_study(out)
    assert fitted.predator.hunting_ability == pytest.approx(value, rel=1e-5)
    assert "riskdiet fit" in fitted.notes["hunting_ability"]
    assert len(fitted.observations) == len(load_study(study_file).observations)
    assert hashlib.sha256(study_file.read_bytes()).hexdigest() == before
    again = runner.invoke(app, ["fit", str(study_file), "--out", str(out)])
    assert again.exit_code == 2 and "--force" in again.stderr


def test_fit_without_records_exits_2_naming_what_is_missing(tmp_path):
    """A study without observations cannot be fitted: exit 2, the reason on stderr, no
    traceback, nothing written."""
    path = tmp_path / "study.json"
    path.write_text(json.dumps(tiny([])), encoding="utf-8")
    out = tmp_path / "fitted.xlsx"
    result = runner.invoke(app, ["fit", str(path), "--out", str(out)])
    assert result.exit_code == 2
    assert "observations" in result.stderr and "Traceback" not in result.stderr
    assert not out.exists()


def test_brief_has_a_fit_section_and_says_on_page_one_whether_values_are_fitted(
        study_file, tmp_path):
    """With records and a fit setting the brief has a "Fit to field records" section with
    the figure and the verdict, and page 1 says the predictions rest on assumed values;
    the brief of the fitted study says they rest on fitted values (common practice: say
    where the numbers come from)."""
    from pypdf import PdfReader

    pdf = tmp_path / "brief.pdf"
    result = runner.invoke(app, ["brief", str(study_file), "--out", str(pdf)])
    assert result.exit_code == 0, result.stderr
    pages = [p.extract_text() for p in PdfReader(pdf).pages]
    assert "rest on assumed values" in pages[0]
    text = " ".join(pages)
    assert "Fit to field records" in text and "Verdict" in text
    fitted = tmp_path / "fitted.xlsx"
    assert runner.invoke(app, ["fit", str(study_file), "--out", str(fitted)]).exit_code == 0
    pdf2 = tmp_path / "brief2.pdf"
    result = runner.invoke(app, ["brief", str(fitted), "--out", str(pdf2)])
    assert result.exit_code == 0, result.stderr
    assert "rest on values fitted to the field records" in PdfReader(pdf2).pages[0].extract_text()
