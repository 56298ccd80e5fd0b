"""Render-free checks of the brief's and the results workbook's words (issue 14).

The brief is read back with pypdf (text, outline, XMP) and, where installed,
poppler's ``pdffonts``; the workbook with openpyxl. References: ISO 32000-1:2008
(PDF 1.7) 14.3.2 (metadata streams) and 14.3.3 (document information
dictionary), ISO 16684-1 (XMP: dc:title, dc:creator, dc:description,
dc:language, xmp:CreateDate, pdf:Producer); the field names are those of
MODEL.md section 1 (docs/MODEL.md).
"""

from __future__ import annotations

import io
import re
import shutil
import subprocess
from pathlib import Path

import pypdf
import pytest
from conftest import injury_raw

from riskdiet.analysis.study import solve
from riskdiet.analysis.uncertainty import run_uncertainty
from riskdiet.analysis.verdict import verdict
from riskdiet.report.brief import build_brief
from riskdiet.report.sections import section_titles
from riskdiet.validation import build_study

MODEL = Path(__file__).resolve().parents[2] / "docs" / "MODEL.md"
ODD_NAME = "Łoś øδ の"
"""A prey name with Polish, Danish, Greek and Japanese letters: the first three are in
the text font (DejaVu Sans), の only in a fallback font (STIX General)."""


def _field_names() -> set[str]:
    """Field names of MODEL.md's input tables that are not ordinary words (they hold
    an underscore: ``density_per_km2``, ``hunting_ability``...)."""
    names = set(re.findall(r"^\| `([a-z0-9_]+)` \|", MODEL.read_text(encoding="utf-8"),
                           flags=re.MULTILINE))
    return {n for n in names if "_" in n}


@pytest.fixture(scope="module")
def study():
    raw = injury_raw()
    raw["prey"][0]["name"] = ODD_NAME
    raw["prey"][2]["group"] = "livestock"
    raw["settings"] = {"study_name": "words test (illustrative)", "report_date": "2026-03-01",
                       "draws": 8}
    raw["scenarios"] = [
        {"name": "boar halved", "changes": [
            {"prey": "boar", "field": "encounters_per_day", "change": "scale", "value": 0.5}]},
        {"name": "weak hunters", "changes": [
            {"field": "hunting_ability", "change": "set", "value": 0.7}]}]
    raw["uncertainty"] = [{"prey": "deer", "field": "injury_chance", "low": 0.1, "high": 0.5},
                          {"field": "daily_cost_mj", "low": 1.1, "high": 1.5}]
    return build_study(raw)


@pytest.fixture(scope="module")
def solved(study):
    return solve(study)


@pytest.fixture(scope="module")
def pdf_bytes(study, solved) -> bytes:
    return build_brief(solved, uncertainty=run_uncertainty(study, sobol_n=8))


@pytest.fixture(scope="module")
def reader(pdf_bytes):
    return pypdf.PdfReader(io.BytesIO(pdf_bytes))


def _titles(solved) -> list[str]:
    """The brief's sections: the result's, with the uncertainty section before the
    cautions (the brief is built with an uncertainty analysis)."""
    titles = section_titles(solved)
    titles.insert(titles.index("Assumptions and cautions"), "Uncertainty and sensitivity")
    return titles


def _text(reader) -> str:
    return "\n".join(p.extract_text() for p in reader.pages)


def _body(reader, solved) -> str:
    """The text before the technical appendix, without the user's own names."""
    titles = _titles(solved)
    text = _text(reader)
    appendix = f"{titles.index('Technical appendix') + 1}. Technical appendix"
    body = text[:text.rindex(appendix)]
    names = [solved.study.name] + [p.name for p in solved.study.prey]
    names += [p.group for p in solved.study.prey] + [s.name for s in solved.scenarios]
    for name in sorted(names, key=len, reverse=True):
        body = body.replace(name, " ")
    return body


def test_page_one_gives_every_scenarios_verdict_sentence(solved, reader):
    """Page 1 holds the verdict on the study's goal and each scenario's sentence, as
    riskdiet.analysis.verdict words them from the results (issue 14, item 1)."""
    first = " ".join(reader.pages[0].extract_text().split())
    v = verdict(solved)
    assert " ".join(v.summary.split()) in first
    for s in solved.scenarios:
        assert " ".join(v.sentences[s.name].split()) in first


def test_no_field_name_or_scientific_notation_outside_the_appendix(solved, reader):
    """Outside the technical appendix the brief names inputs in words: no field name of
    MODEL.md section 1 (those with an underscore, which no sentence would use) and no
    number in scientific notation; the user's own prey, group and scenario names are
    ignored (issue 14, items 3 and 4)."""
    body = _body(reader, solved)
    joined = body.replace("-\n", "").replace("\n", " ")
    found = sorted(n for n in _field_names() if re.search(rf"\b{n}\b", joined))
    assert not found, found
    assert not re.search(r"\d[eE][+-]?\d", joined), re.search(r".{30}\d[eE][+-]?\d.{10}",
                                                               joined)
    assert not re.search(r"\bnan\b|\binf\b", joined, flags=re.IGNORECASE)
    assert not re.search(r"[+-]0\.0+\b(?! *%)", joined)  # no signed zero such as -0.00


def test_section_references_point_at_the_right_sections(solved, reader):
    """Each numbered heading is printed with its number, and the reading guide and page 1
    refer to the sections by those numbers (issue 14: section references resolve)."""
    titles = _titles(solved)
    n = {t: i for i, t in enumerate(titles, start=1)}
    text = " ".join(_text(reader).split())
    for title, number in n.items():
        assert f"{number}. {title}" in text
    assert f"Section {n['Inputs']} lists every input" in text
    assert f"section {n['Predicted kills']} turns the decisions into predicted kills" in text
    assert f"section {n['Technical appendix']} holds the technical details" in text
    assert f"Section {n['Uncertainty and sensitivity']} says how sure" in text
    outline = [o.title for o in reader.outline if not isinstance(o, list)]
    assert outline == [f"{i}. {t}" for t, i in n.items()]


def test_xmp_metadata_states_the_information_dictionary(reader, pdf_bytes, study, solved):
    """The catalog's XMP packet (ISO 16684-1) says what the information dictionary says
    (ISO 32000-1, 14.3.3): title, author, subject, keywords, producer, creator tool,
    creation and modification dates, and the document language of /Lang; the same input
    and date give the same bytes."""
    info, xmp = reader.metadata, reader.xmp_metadata
    assert xmp is not None
    assert xmp.dc_title["x-default"] == info.title
    assert xmp.dc_creator == [info.author]
    assert xmp.dc_description["x-default"] == info.subject
    assert xmp.pdf_keywords == info["/Keywords"]
    assert xmp.pdf_producer == info.producer
    assert xmp.xmp_creator_tool == info.creator
    assert xmp.dc_language == [reader.trailer["/Root"]["/Lang"]]
    assert xmp.xmp_create_date.replace(tzinfo=None) == info.creation_date.replace(tzinfo=None)
    assert xmp.xmp_modify_date.replace(tzinfo=None) == info.modification_date.replace(
        tzinfo=None)
    assert info.creation_date.date().isoformat() == "2026-03-01"
    again = build_brief(solved, uncertainty=run_uncertainty(study, sobol_n=8))
    assert again == pdf_bytes


def test_a_name_with_letters_of_other_scripts_is_drawn(reader):
    """A prey name with Ł, ø, δ and の is printed, not dropped: pypdf extracts it from the
    page text (each glyph comes with its Unicode value, ISO 32000-1, 9.10.3)."""
    text = _text(reader)
    assert ODD_NAME in text or all(c in text for c in ODD_NAME.replace(" ", ""))


@pytest.mark.skipif(shutil.which("pdffonts") is None, reason="poppler's pdffonts not installed")
def test_the_fallback_font_is_embedded(pdf_bytes, tmp_path):
    """の has no glyph in DejaVu Sans, so it is set in the fallback font (STIX General,
    shipped with matplotlib), which pdffonts lists as embedded (ISO 32000-1, 9.9)."""
    path = tmp_path / "b.pdf"
    path.write_bytes(pdf_bytes)
    lines = subprocess.run(["pdffonts", str(path)], capture_output=True, text=True,
                           check=True).stdout.splitlines()[2:]
    stix = [line for line in lines if "STIX" in line]
    assert stix, lines
    assert all(line.split()[-5] == "yes" for line in stix)


def test_check_warns_only_about_characters_no_font_draws(study):
    """check's font warning names characters that neither the text font nor a fallback
    font can draw; Ł, ø, δ (DejaVu Sans) and の (STIX General) are all drawable, a
    private-use character (U+E000, which no font shipped here maps) is not."""
    from riskdiet.report.fonts import undrawable

    assert undrawable(ODD_NAME) == []
    assert undrawable("deer \ue000") == ["\ue000"]


def test_results_workbook_headers_are_words_with_their_keys_in_the_glossary(solved,
                                                                             tmp_path):
    """Every header of every results sheet is the word-list entry of its column key
    (riskdiet.analysis.glossary.result_words), holds no underscore (not a field name), and
    the Glossary sheet maps it to that key (issue 14, items 4 and 7)."""
    from openpyxl import load_workbook

    from riskdiet.analysis.glossary import result_words
    from riskdiet.io.results_tables import results_tables
    from riskdiet.io.results_workbook import FEW, WIDE, write_results_workbook

    tables = results_tables(solved)
    wb = load_workbook(write_results_workbook(solved, tmp_path / "r.xlsx"))
    glossary = {(r[0], r[2]) for r in wb["Glossary"].iter_rows(values_only=True)
                if r and r[2]}
    for t in tables:
        assert t.header == [result_words(k) for k in t.column_keys], t.name
        row = 1 + len(t.notes) + 1  # title, notes, then the header
        if len(t.header) > WIDE and len([r for r in t.rows if r]) <= FEW:
            # a wide table with a row per scenario is shown turned: words, then keys, down
            # the first two columns
            ws = wb[t.name]
            assert [c.value for c in ws[row]][:2] == ["Quantity", "Key (CSV column)"]
            first = [ws.cell(row=row + 1 + j, column=1).value for j in range(len(t.header) - 1)]
            keys = [ws.cell(row=row + 1 + j, column=2).value for j in range(len(t.header) - 1)]
            assert first == t.header[1:], t.name
            assert keys == t.column_keys[1:], t.name
        else:
            sheet = [c.value for c in wb[t.name][row]][:len(t.header)]
            assert sheet == t.header, t.name
        for header, key in zip(t.header, t.column_keys, strict=True):
            assert "_" not in header, (t.name, header)
            if header != key:
                assert (header, key) in glossary, (t.name, header)
    kills = next(t for t in tables if t.name == "Kills")
    assert "Kills per predator per year" in kills.header
