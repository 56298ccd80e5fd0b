"""The brief and the results workbook as files to attach to a management plan.

References used below:
ISO 32000-1:2008 (PDF 1.7): 7.7.2 (document catalog: /Lang, /Outlines,
/ViewerPreferences /DisplayDocTitle), 9.9 (embedded font programs). Office Open
XML (ECMA-376), part 1, 18.3.1.63 (pageSetup) and 18.2.5 (defined names:
_xlnm.Print_Titles). poppler's ``pdffonts`` and ``qpdf --check`` are the
outside tools that read the PDF back; each test is skipped where its tool is
absent.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest
from conftest import injury_raw

from riskdiet.analysis.study import solve
from riskdiet.io.results_workbook import write_results_workbook
from riskdiet.report.brief import write_brief
from riskdiet.report.sections import section_titles
from riskdiet.validation import build_study


@pytest.fixture(scope="module")
def solved():
    raw = injury_raw()
    raw["settings"] = {"study_name": "attachment test (illustrative)",
                       "report_date": "2026-03-01"}
    raw["scenarios"] = [{"name": "more boar", "changes": [
        {"prey": "boar", "field": "encounters_per_day", "change": "scale", "value": 2}]}]
    return solve(build_study(raw))


@pytest.fixture(scope="module")
def brief_pdf(solved, tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("brief") / "brief.pdf"
    write_brief(solved, path)
    return path


def test_every_section_has_a_bookmark_and_the_catalog_names_language_and_title(solved,
                                                                               brief_pdf):
    """The outline lists every numbered section in order; the catalog carries
    /Lang and asks viewers to show the document title (ISO 32000-1, 7.7.2)."""
    import pypdf

    reader = pypdf.PdfReader(brief_pdf)
    titles = [o.title for o in reader.outline if not isinstance(o, list)]
    expected = [f"{i}. {t}" for i, t in enumerate(section_titles(solved), start=1)]
    assert titles == expected
    root = reader.trailer["/Root"]
    assert root["/Lang"] == "en-GB"
    assert root["/ViewerPreferences"]["/DisplayDocTitle"]
    assert reader.metadata.title.startswith("attachment test (illustrative)")


@pytest.mark.skipif(shutil.which("pdffonts") is None, reason="poppler's pdffonts not installed")
def test_every_font_is_embedded(brief_pdf):
    """pdffonts lists every font the PDF uses with emb = yes (ISO 32000-1, 9.9);
    bullets and the page preamble used to fall back to an unembedded Helvetica."""
    out = subprocess.run(["pdffonts", str(brief_pdf)], capture_output=True, text=True,
                         check=True).stdout.splitlines()[2:]
    assert out, "no fonts listed"
    for line in out:
        assert line.split()[-5] == "yes", line  # the "emb" column


@pytest.mark.skipif(shutil.which("qpdf") is None, reason="qpdf not installed")
def test_qpdf_finds_no_structural_error(brief_pdf):
    """qpdf --check validates the cross-reference table, streams and objects."""
    result = subprocess.run(["qpdf", "--check", str(brief_pdf)], capture_output=True,
                            text=True)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "No syntax or stream encoding errors" in result.stdout


def test_results_workbook_prints_and_is_byte_reproducible(solved, tmp_path):
    """The same results and date give identical bytes (fixed zip times and
    document dates); every sheet prints landscape, fitted to the page width,
    with its header row repeated (ECMA-376 pageSetup and Print_Titles); the
    document has a title."""
    from openpyxl import load_workbook

    a = write_results_workbook(solved, tmp_path / "a.xlsx")
    b = write_results_workbook(solved, tmp_path / "b.xlsx")
    assert a.read_bytes() == b.read_bytes()
    wb = load_workbook(a)
    assert wb.properties.title.startswith("attachment test (illustrative)")
    for ws in wb.worksheets:
        assert ws.page_setup.orientation == "landscape"
        assert ws.sheet_properties.pageSetUpPr.fitToPage
        assert ws.page_setup.fitToWidth == 1
        assert ws.print_title_rows
    json.dumps(wb.sheetnames)


def test_workbook_and_brief_carry_a_glossary(solved, brief_pdf, tmp_path):
    """The workbook's Glossary sheet maps every input's words to its key in study
    files and JSON (MODEL.md section 1 names the keys), and explains the trade
    terms used in the outputs; the brief's appendix has the same terms."""
    import pypdf
    from openpyxl import load_workbook

    from riskdiet.analysis.glossary import TERMS
    from riskdiet.fields import WORDS

    wb = load_workbook(write_results_workbook(solved, tmp_path / "g.xlsx"))
    rows = [r for r in wb["Glossary"].iter_rows(values_only=True)]
    keys = {r[2] for r in rows if r and r[2]}
    assert {"energy_mj", "capture_success", "released_animals"} <= keys
    assert all(WORDS[k] in {r[0] for r in rows} for k in ("energy_mj", "handling_days"))
    text = " ".join(p.extract_text() for p in pypdf.PdfReader(brief_pdf).pages[-3:])
    assert "Glossary" in text
    assert all(term.split()[0] in text for term, _ in TERMS[:4])
