"""Tests of the PDF brief: content, layout, reproducibility, safe writing.

References used below:
ISO 216 (A4 = 210 x 297 mm); ANSI/ASME Y14.1 (US letter = 8.5 x 11 in);
1 PostScript/PDF point = 1/72 in, 1 in = 25.4 mm (ISO 32000-1, 8.3.2.3);
FIPS 180-4 SHA-256 via Python's hashlib; ISO 8601 calendar dates; Kleiber,
M. (1961) The Fire of Life, Wiley (BMR = 70 M^0.75 kcal/day); 1 kcal =
4.184 kJ (thermochemical calorie). Running headers, "page X of Y" footers,
repeated table headers and document metadata are common practice for reports.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import json
import os
import re
import subprocess
import sys

import pytest
from conftest import EXAMPLE, ROOT, injury_raw
from pypdf import PdfReader
from reportlab.platypus import Image, KeepTogether, Table
from typer.testing import CliRunner

import riskdiet
from riskdiet.analysis.study import solve
from riskdiet.cli import app
from riskdiet.errors import OutputExistsError, StudyError
from riskdiet.io import load_study
from riskdiet.report import brief as brief_mod
from riskdiet.report import figure_style
from riskdiet.report import figures as figs
from riskdiet.report.layout import frame_size
from riskdiet.report.sections import (
    ASSUMPTIONS,
    CAUTIONS,
    REFERENCES,
    section_titles,
)
from riskdiet.validation import build_study

runner = CliRunner()
MM = 72 / 25.4


def text_of(pdf: bytes) -> list[str]:
    """Text of every page, whitespace collapsed (pypdf)."""
    return [re.sub(r"\s+", " ", p.extract_text()) for p in PdfReader(io.BytesIO(pdf)).pages]


def squash(text: str) -> str:
    return re.sub(r"\s+", "", text)


@pytest.fixture(scope="module")
def demo_result():
    return solve(load_study(EXAMPLE))


@pytest.fixture(scope="module")
def demo_pdf(demo_result) -> bytes:
    return brief_mod.build_brief(demo_result)


@pytest.fixture(scope="module")
def small_result():
    """The invented three-prey injury study (30 levels) with a dated setting."""
    raw = injury_raw()
    raw["settings"] = {"study_name": "Small test study (illustrative)",
                       "report_date": "2026-02-03"}
    raw["scenarios"] = [{"name": "fewer voles", "changes": [
        {"prey": "vole", "field": "encounters_per_day", "change": "scale", "value": 0.5}]}]
    return solve(build_study(raw))


def test_brief_contains_every_heading_name_caution_and_checksum(demo_pdf, demo_result):
    """Extracted text holds every section heading in order, every scenario and
    prey name, the assumptions and cautions, and the input's SHA-256 computed
    here with hashlib (FIPS 180-4); reproducibility needs the checksum printed
    (common practice)."""
    pages = text_of(demo_pdf)
    whole = " ".join(pages)
    flat = squash(whole)
    positions = [whole.find(f"{i}. {h}") for i, h in
                 enumerate(section_titles(demo_result), start=1)]
    assert all(p >= 0 for p in positions) and positions == sorted(positions)
    raw = json.loads(EXAMPLE.read_text(encoding="utf-8"))
    for name in ["baseline"] + [s["name"] for s in raw["scenarios"]]:
        assert name in whole
    for prey in raw["prey"]:
        assert prey["name"] in whole
    for sentence in CAUTIONS + ASSUMPTIONS:
        assert squash(sentence) in flat
    sha = hashlib.sha256(EXAMPLE.read_bytes()).hexdigest()
    assert sha in flat
    assert "harrow-vale.json" in whole


def test_every_page_has_running_header_and_page_x_of_y(demo_pdf, demo_result):
    """Each page carries the study name and "page i of N" (common practice)."""
    pages = text_of(demo_pdf)
    for i, page in enumerate(pages, start=1):
        assert f"page {i} of {len(pages)}" in page
        assert demo_result.study.name in page


def test_metadata_names_title_subject_and_creator(demo_pdf, demo_result):
    """PDF document information: title with the study name, a subject, and the
    creator "riskdiet <version>" (ISO 32000-1, 14.3.3)."""
    meta = PdfReader(io.BytesIO(demo_pdf)).metadata
    assert demo_result.study.name in meta.title
    assert meta.subject
    assert meta.creator == f"riskdiet {riskdiet.__version__}"


def test_a4_page_size(demo_pdf):
    """A4 is 210 x 297 mm (ISO 216) = 595.28 x 841.89 pt at 72 pt per inch."""
    for page in PdfReader(io.BytesIO(demo_pdf)).pages:
        box = page.mediabox
        assert float(box.width) == pytest.approx(210 * MM, abs=0.01)
        assert float(box.height) == pytest.approx(297 * MM, abs=0.01)


def test_letter_page_size(small_result):
    """US letter is 8.5 x 11 in (ANSI/ASME Y14.1) = 612 x 792 pt."""
    pdf = brief_mod.build_brief(small_result, paper="letter")
    for page in PdfReader(io.BytesIO(pdf)).pages:
        assert (float(page.mediabox.width), float(page.mediabox.height)) == (612, 792)


def test_embedded_images_match_the_figures_the_brief_says_it_draws(demo_pdf, demo_result):
    """The number of embedded images equals the number of figures the brief
    states in its appendix and the number figures.brief_figures makes
    (common practice: what a document says it contains, it contains)."""
    reader = PdfReader(io.BytesIO(demo_pdf))
    images = sum(len(page.images) for page in reader.pages)
    stated = re.search(r"This brief draws (\d+) figures?", " ".join(text_of(demo_pdf)))
    assert stated is not None
    # one figure per scenario (decisions), one kills chart (breeding currency only) and
    # the three map figures, since the demo's settings ask for a map
    maps = 3 if demo_result.map is not None else 0
    assert images == int(stated.group(1)) == len(demo_result.scenarios) + 1 + maps
    assert len(figs.brief_figures(demo_result)) == images


def test_same_input_gives_identical_bytes_even_in_a_fresh_process(tmp_path, small_result):
    """Building twice, in this process and in a new interpreter, gives the same
    PDF byte for byte (reportlab invariant mode; common practice for
    reproducible reports)."""
    first = brief_mod.build_brief(small_result)
    assert brief_mod.build_brief(small_result) == first
    study = tmp_path / "small.json"
    raw = injury_raw()
    raw["settings"] = {"report_date": "2026-02-03"}
    study.write_text(json.dumps(raw), encoding="utf-8")
    code = ("import sys, riskdiet; from riskdiet.report.brief import build_brief; "
            "sys.stdout.buffer.write(build_brief(riskdiet.solve(riskdiet.load_study(sys.argv[1]))))")
    runs = [subprocess.run([sys.executable, "-c", code, str(study)], capture_output=True,
                           check=True, cwd=ROOT).stdout for _ in range(2)]
    assert runs[0] == runs[1]
    assert runs[0].startswith(b"%PDF")


def test_date_comes_from_option_then_setting_then_file_date(tmp_path):
    """The date is --date if given, else settings.report_date, else the input
    file's modification date in UTC; dates are ISO 8601 YYYY-MM-DD and an
    impossible one is refused with its location."""
    raw = injury_raw()
    path = tmp_path / "s.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    stamp = dt.datetime(2025, 7, 14, 23, 30, tzinfo=dt.UTC).timestamp()
    os.utime(path, (stamp, stamp))
    study = load_study(path)
    assert brief_mod.brief_date(study)[0] == "2025-07-14"
    assert brief_mod.brief_date(study, "2026-01-31")[0] == "2026-01-31"
    raw["settings"] = {"report_date": "2024-02-29"}
    path.write_text(json.dumps(raw), encoding="utf-8")
    study = load_study(path)
    assert brief_mod.brief_date(study)[0] == "2024-02-29"
    assert brief_mod.brief_date(study, "2026-01-31")[0] == "2026-01-31"
    for bad in ("2026-02-30", "31/01/2026", "2026-1-5"):
        with pytest.raises(StudyError) as err:
            brief_mod.brief_date(study, bad)
        assert err.value.problems[0].where == "--date"
    raw["settings"] = {"report_date": "2023-02-29"}
    path.write_text(json.dumps(raw), encoding="utf-8")
    with pytest.raises(StudyError) as err:
        brief_mod.brief_date(load_study(path))
    assert err.value.problems[0].where == "settings.report_date"


def test_estimated_daily_cost_is_flagged_with_its_kleiber_value(tmp_path):
    """A blank daily cost is shown as activity x 70 M^0.75 kcal/day x 4.184 kJ/kcal
    (Kleiber 1961) and marked estimated."""
    raw = injury_raw(body_mass_kg=12.0, activity_multiplier=2.0)
    del raw["predator"]["daily_cost_mj"]
    raw["settings"] = {"report_date": "2026-02-03"}
    result = solve(build_study(raw))
    expected = 2.0 * 70 * 12.0 ** 0.75 * 4.184e-3
    whole = " ".join(text_of(brief_mod.build_brief(result)))
    assert f"{expected:.3g} (estimated)" in whole
    assert "Kleiber" in whole


def test_references_are_cited_in_full(demo_pdf):
    """The appendix lists the published methods with authors, year, title,
    journal or publisher, and volume:pages where there are any (Charnov 1976
    Am. Nat. 110:141-151; Holling 1959 Can. Entomol. 91:385-398; Werner &
    Gilliam 1984 Annu. Rev. Ecol. Syst. 15:393-425; Lande 1979 Evolution
    33:402-416; the books of Houston & McNamara 1999, Mangel & Clark 1988 and
    Kleiber 1961)."""
    flat = squash(" ".join(text_of(demo_pdf)))
    for ref in REFERENCES:
        assert squash(ref) in flat
    for key in ("110:141–151", "91:385–398", "15:393–425", "33:402–416",
                "CambridgeUniversityPress", "PrincetonUniversityPress", "Wiley"):
        assert key in flat


def big_raw(currency: str = "breeding") -> dict:
    """An invented study with 20 prey types, 12 scenarios and long names, for layout."""
    prey = []
    for i in range(20):
        name = (f"prey type number {i + 1} with a rather long descriptive name" if i % 5 == 0
                else f"prey {i + 1}")
        prey.append({"name": name, "group": ["wild", "livestock", "protected"][i % 3],
                     "encounters_per_day": 0.1 + 0.05 * i, "energy_mj": 2 + 1.5 * i,
                     "handling_days": 0.2 + 0.1 * i, "capture_success": 0.2 + 0.02 * i,
                     "injury_chance": 0.1 if i % 4 == 0 else 0,
                     "injury_energy_mj": 2 if i % 4 == 0 else 0,
                     "fatality_chance": 0.01 if i % 6 == 0 else 0,
                     "note": "Illustrative value for a layout test."})
    scenarios = [{"name": (f"scenario {k + 1}: a management option with a long name"
                           if k % 4 == 0 else f"option {k + 1}"),
                  "changes": [{"prey": prey[k]["name"], "field": "encounters_per_day",
                               "change": "scale", "value": 0.5}]} for k in range(11)]
    return {"settings": {"study_name": "Layout test (illustrative)", "report_date": "2026-01-02"},
            "predator": {"name": "test predator", "reserve_capacity_mj": 40,
                         "energy_levels": 20, "daily_cost_mj": 3, "background_mortality": 0.001,
                         "currency": currency, "season_days": 20,
                         "season_reserve_threshold": 0.4, "injured_capture_factor": 0.6,
                         "recovery_days": 5, "breeding_threshold": 0.9, "population": 5},
            "prey": prey, "scenarios": scenarios}


def flowables(story):
    for f in story:
        if isinstance(f, KeepTogether):
            yield from flowables(f._content)
        else:
            yield f


@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_twenty_prey_twelve_scenarios_fit_the_page(monkeypatch, paper):
    """With 20 prey types and 12 scenarios every table and image is at most the
    text-frame width (page width minus 2 x 20 mm margins; ISO 216 / ANSI
    letter sizes), images also fit the frame height, tables repeat their header
    row, and the document builds (common practice: nothing runs off the page)."""
    monkeypatch.setattr(figure_style, "DPI_BRIEF", 30)  # layout does not depend on resolution
    result = solve(build_study(big_raw("breeding" if paper == "a4" else "season")))
    plan = brief_mod.BriefPlan(result, paper=paper)
    width, height = frame_size(paper)
    page_w = {"a4": 210 * MM, "letter": 8.5 * 72}[paper]
    assert width == pytest.approx(page_w - 40 * MM)
    story, drawn = brief_mod.brief_story(plan)
    tables = images = 0
    for f in flowables(story):
        if isinstance(f, Table):
            tables += 1
            w, _ = f.wrap(width, height)
            assert w <= width + 0.01
            assert sum(f._colWidths) <= width + 0.01
            assert f.repeatRows in (0, 1)
        if isinstance(f, Image):
            images += 1
            assert f.drawWidth <= width + 0.01 and f.drawHeight <= height + 0.01
    assert tables > 10 and images == len(plan.figures) == len(drawn)
    pdf, _ = brief_mod._build(plan, (story, drawn))
    whole = " ".join(text_of(pdf))
    for p in result.study.prey:
        assert squash(p.name) in squash(whole)


def test_cli_brief_on_invalid_input_exits_2_and_writes_nothing(tmp_path):
    """An invalid study gives exit status 2, the located problems on stderr and
    no PDF (POSIX convention for input errors; common practice)."""
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({"predator": {"reserve_capacity_mj": -1}, "prey": []}),
                   encoding="utf-8")
    out = tmp_path / "brief.pdf"
    result = runner.invoke(app, ["brief", str(bad), "--out", str(out)])
    assert result.exit_code == 2
    assert "predator.reserve_capacity_mj" in result.stderr
    assert not out.exists()
    assert list(tmp_path.iterdir()) == [bad]


def test_cli_brief_refuses_to_overwrite_without_force(tmp_path):
    """An existing output is left alone unless --force (exit 2 with a message);
    with --force it is replaced (common practice)."""
    study = tmp_path / "s.json"
    raw = injury_raw()
    raw["settings"] = {"report_date": "2026-02-03"}
    study.write_text(json.dumps(raw), encoding="utf-8")
    out = tmp_path / "brief.pdf"
    out.write_bytes(b"keep me")
    result = runner.invoke(app, ["brief", str(study), "--out", str(out)])
    assert result.exit_code == 2 and "--force" in result.stderr
    assert out.read_bytes() == b"keep me"
    result = runner.invoke(app, ["brief", str(study), "--out", str(out), "--force",
                                 "--paper", "letter"])
    assert result.exit_code == 0, result.stderr
    assert out.read_bytes().startswith(b"%PDF")
    for bad in (["--paper", "a5"], ["--date", "2026-02-30"]):
        result = runner.invoke(app, ["brief", str(study), "--out", str(tmp_path / "x.pdf"),
                                     *bad])
        assert result.exit_code == 2
        assert not (tmp_path / "x.pdf").exists()
    result = runner.invoke(app, ["brief", str(study), "--out", str(tmp_path / "x.txt")])
    assert result.exit_code == 2 and not (tmp_path / "x.txt").exists()


def test_cli_figures_option_writes_png_and_svg(tmp_path):
    """--figures DIR writes each figure of the brief as PNG and SVG (common
    practice for reusing figures in other documents)."""
    study = tmp_path / "s.json"
    raw = injury_raw()
    raw["settings"] = {"report_date": "2026-02-03"}
    study.write_text(json.dumps(raw), encoding="utf-8")
    result = runner.invoke(app, ["brief", str(study), "--out", str(tmp_path / "b.pdf"),
                                 "--figures", str(tmp_path / "figs")])
    assert result.exit_code == 0, result.stderr
    keys = [f.key for f in figs.brief_figures(solve(load_study(study)))]
    files = sorted(p.name for p in (tmp_path / "figs").iterdir())
    assert files == sorted(f"{k}{ext}" for k in keys for ext in (".png", ".svg"))
    for name in files:
        data = (tmp_path / "figs" / name).read_bytes()
        assert data.startswith(b"\x89PNG") if name.endswith(".png") else b"<svg" in data


def test_failed_write_leaves_no_file_and_no_temporary(monkeypatch, tmp_path, small_result):
    """If building fails half-way, neither the PDF nor a temporary file is left
    behind (atomic write: temporary file in the same folder, then rename)."""
    def broken(plan):
        raise RuntimeError("simulated failure")

    monkeypatch.setattr(brief_mod, "_build", broken)
    with pytest.raises(RuntimeError):
        brief_mod.write_brief(small_result, tmp_path / "b.pdf")
    assert list(tmp_path.iterdir()) == []


def test_write_brief_never_overwrites_its_input(tmp_path):
    """Writing the brief over the study file itself is refused even with force
    (common practice: never destroy the user's input)."""
    path = tmp_path / "s.json"
    raw = injury_raw()
    raw["settings"] = {"report_date": "2026-02-03"}
    path.write_text(json.dumps(raw), encoding="utf-8")
    result = solve(load_study(path))
    with pytest.raises(OutputExistsError):
        brief_mod.write_brief(result, path, force=True)
    assert json.loads(path.read_text(encoding="utf-8")) == raw


def test_brief_module_is_not_imported_by_the_cli_at_start():
    """``riskdiet --help`` stays fast: importing the CLI does not import
    reportlab or matplotlib (ECOSYSTEM.md; common practice)."""
    code = ("import sys, riskdiet.cli; "
            "print(any(m.split('.')[0] in ('reportlab', 'matplotlib') for m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, cwd=ROOT).stdout.strip()
    assert out == "False"



def test_maps_section_only_when_a_map_is_requested(demo_pdf, demo_result, small_result):
    """A study whose settings ask for a map gets a Maps section that reads the map in words
    and embeds its three figures; a study without one gets none (issue layout; common
    practice)."""
    whole = " ".join(text_of(demo_pdf))
    number = section_titles(demo_result).index("Maps") + 1
    assert f"{number}. Maps" in whole
    assert "The map varies" in whole
    assert "Marginal value of hunting ability" in whole or "hunting ability" in whole
    small = " ".join(text_of(brief_mod.build_brief(small_result)))
    assert small_result.map is None
    assert ". Maps" not in small


def test_pdf_metadata_carries_title_creator_and_the_brief_date(small_result):
    """Title, subject and creator (with riskdiet's version) are set, and the creation date
    is the brief's date at 00:00 UTC, not the time of building (PDF 1.7, ISO 32000-1,
    14.3.3: document information dictionary; date format D:YYYYMMDDHHmmSS)."""
    import riskdiet

    pdf = brief_mod.build_brief(small_result, date="2026-02-03")
    meta = PdfReader(io.BytesIO(pdf)).metadata
    assert meta["/CreationDate"].startswith("D:20260203000000")
    assert meta["/Creator"] == f"riskdiet {riskdiet.__version__}"
    assert small_result.study.name in meta["/Title"]
    assert meta["/Subject"]
    assert "SOURCE_DATE_EPOCH" not in __import__("os").environ
