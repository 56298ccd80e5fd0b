"""Files saved by real spreadsheet programs read as typed.

The LibreOffice tests run where LibreOffice (``soffice``) is installed and are
skipped otherwise; CI installs it (``.ci/run``). How LibreOffice stores a formula
that returns empty text (``t="str"`` with an empty ``<v>``) is its documented
behaviour for SpreadsheetML (ECMA-376 Part 1, §18.3.1.4 ``c``, attribute ``t``).
"""

from __future__ import annotations

import io
import shutil
import subprocess
import zipfile
from pathlib import Path

import openpyxl
import pytest
from typer.testing import CliRunner

from riskdiet.cli import app
from riskdiet.io.json_study import read_json_study
from riskdiet.io.template import write_study_workbook
from riskdiet.io.workbook import read_workbook_study

ROOT = Path(__file__).resolve().parents[2]
DEMO_JSON = ROOT / "examples" / "harrow-vale.json"
SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
needs_libreoffice = pytest.mark.skipif(SOFFICE is None, reason="LibreOffice is not installed")


def study_key(study) -> dict:
    """What a study says, without where it came from."""
    return {
        "predator": study.predator, "prey": study.prey, "notes": study.notes,
        "settings": study.settings,
        "scenarios": [(s.name, s.note, [(c.prey, c.field, c.change, c.value) for c in s.changes])
                      for s in study.scenarios],
        "uncertainty": [(u.prey, u.field, u.low, u.high, u.shape, u.mode, u.note)
                        for u in study.uncertainty],
    }


def convert(source: Path, kind: str, out_dir: Path) -> Path:
    """Re-save a file with LibreOffice, as a user saving it would (headless)."""
    profile = out_dir / "lo-profile"
    out_dir.mkdir(parents=True, exist_ok=True)
    subprocess.run([SOFFICE, "--headless", "--norestore",
                    f"-env:UserInstallation=file://{profile}", "--convert-to", kind,
                    "--outdir", str(out_dir), str(source)],
                   check=True, capture_output=True, timeout=180)
    return out_dir / f"{source.stem}.{kind}"


def with_empty_text_formula(tmp_path: Path) -> Path:
    """The demo workbook with Prey!C2 = a formula returning "" (openpyxl: no saved result)."""
    wb = openpyxl.load_workbook(ROOT / "examples" / "harrow-vale.xlsx")
    wb["Prey"]["C2"] = '=IF(1=1,"",5)'
    path = tmp_path / "formula.xlsx"
    wb.save(path)
    return path


def test_empty_text_result_reads_as_blank(tmp_path):
    """A formula saved with an empty text result (``<c t="str"><f>…</f><v></v></c>``, how
    spreadsheet programs store ``=IF(A1="","",…)``) is a blank cell, not "no saved result";
    the same formula never calculated (openpyxl) keeps the message."""
    raw = with_empty_text_formula(tmp_path)
    result = CliRunner().invoke(app, ["check", str(raw)])
    assert result.exit_code == 2 and "no saved result" in result.stderr
    saved = tmp_path / "saved.xlsx"
    with zipfile.ZipFile(raw) as src, zipfile.ZipFile(saved, "w") as dst:
        for item in src.infolist():
            data = src.read(item)
            if b'<c r="C2"><f>' in data:
                data = data.replace(b'<c r="C2"><f>IF(1=1,"",5)</f><v /></c>',
                                    b'<c r="C2" t="str"><f>IF(1=1,"",5)</f><v></v></c>')
                assert b't="str"' in data
            dst.writestr(item, data)
    study = read_workbook_study(saved)
    assert study.prey[0].density_per_km2 is None


@needs_libreoffice
def test_libreoffice_round_trip_gives_the_same_numbers(tmp_path):
    """Template filled with the demo study -> re-saved by LibreOffice as xlsx -> the same
    study (every number, text and setting) as the original."""
    original = write_study_workbook(tmp_path / "filled.xlsx", read_json_study(DEMO_JSON))
    resaved = convert(original, "xlsx", tmp_path / "lo")
    assert resaved.read_bytes() != original.read_bytes()
    assert study_key(read_workbook_study(resaved)) == study_key(read_workbook_study(original))


@needs_libreoffice
def test_libreoffice_saved_empty_text_formula_and_renamed_ods(tmp_path):
    """LibreOffice's own save of a formula returning "" reads as blank; an OpenDocument file
    renamed .xlsx is named as such, with how to save as .xlsx."""
    resaved = convert(with_empty_text_formula(tmp_path), "xlsx", tmp_path / "lo")
    assert read_workbook_study(resaved).prey[0].density_per_km2 is None
    ods = convert(ROOT / "examples" / "harrow-vale.xlsx", "ods", tmp_path / "lo2")
    renamed = tmp_path / "renamed.xlsx"
    renamed.write_bytes(ods.read_bytes())
    result = CliRunner().invoke(app, ["check", str(renamed)])
    assert result.exit_code == 2
    assert "an OpenDocument spreadsheet (.ods) renamed .xlsx" in result.stderr
    assert "Excel 2007-365 (.xlsx)" in result.stderr


def test_misspelt_optional_sheet_is_reported_by_every_command(tmp_path):
    """A misspelt optional sheet ("Scenario") was dropped with a warning only check and the
    brief showed; solve and compare now show it too."""
    wb = openpyxl.load_workbook(ROOT / "examples" / "harrow-vale.xlsx")
    wb["Scenarios"].title = "Scenario"
    path = tmp_path / "study.xlsx"
    buffer = io.BytesIO()
    wb.save(buffer)
    path.write_bytes(buffer.getvalue())
    for command in (["solve"], ["solve", "--json"], ["compare"], ["rank"]):
        result = CliRunner().invoke(app, [*command, str(path)])
        assert result.exit_code == 0, result.output
        assert "Scenario sheet: not read" in result.stdout + result.stderr
