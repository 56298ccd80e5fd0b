"""Tests of the command line through typer's test runner.

References used below:
POSIX utility conventions (exit status 0 on success, 2 for usage/input
errors; diagnostics on standard error); FIPS 180-4 SHA-256 via Python's
hashlib; RFC 8259 JSON. The documented ``solve --json`` keys are those of
riskdiet.analysis.study (StudyResult.to_dict).
"""

from __future__ import annotations

import hashlib
import json
import math
import subprocess
import sys

import pytest
from conftest import EXAMPLE, ROOT, injury_raw
from typer.main import get_command
from typer.testing import CliRunner

import riskdiet
from riskdiet.cli import app

runner = CliRunner()


def test_version_prints_the_package_version():
    """``riskdiet --version`` prints the version and exits 0 (common practice)."""
    result = runner.invoke(app, ["--version"])
    assert result.exit_code == 0
    assert result.stdout.strip() == f"riskdiet {riskdiet.__version__}"


def test_help_lists_every_command():
    """``riskdiet --help`` exits 0 and names every command (common practice)."""
    result = runner.invoke(app, ["--help"])
    assert result.exit_code == 0
    for name in get_command(app).commands:
        assert name in result.stdout


def test_every_command_and_option_has_help_text():
    """Each command has a description and each of its arguments and options a
    help line, and ``riskdiet COMMAND --help`` works (common practice for
    self-documenting tools)."""
    commands = get_command(app).commands
    assert "solve" in commands
    for name, command in commands.items():
        assert (command.help or "").strip(), name
        for param in command.params:
            assert (getattr(param, "help", None) or "").strip(), (name, param.name)
        result = runner.invoke(app, [name, "--help"])
        assert result.exit_code == 0, (name, result.stdout, result.stderr)
        assert "Usage" in result.stdout


def test_solve_json_document_has_the_documented_keys():
    """``solve --json`` prints one valid JSON document (RFC 8259) with the
    documented keys, and its input hash is SHA-256 of the input file's bytes
    (FIPS 180-4, via hashlib)."""
    result = runner.invoke(app, ["solve", str(EXAMPLE), "--json"])
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    assert doc["riskdiet_version"] == riskdiet.__version__
    assert doc["input_sha256"] == hashlib.sha256(EXAMPLE.read_bytes()).hexdigest()
    study = json.loads(EXAMPLE.read_text(encoding="utf-8"))
    names = [s["name"] for s in doc["scenarios"]]
    assert names == ["baseline"] + [s["name"] for s in study["scenarios"]]
    n = study["predator"]["energy_levels"]
    prey = {p["name"] for p in study["prey"]}
    for sc in doc["scenarios"]:
        assert sc["currency"] == study["predator"]["currency"]
        assert len(sc["reserves_mj"]) == n + 1
        assert sc["reserves_mj"][-1] == pytest.approx(study["predator"]["reserve_capacity_mj"])
        assert set(sc["fitness"]) == {"healthy", "injured"} == set(sc["policy"])
        for cond in ("healthy", "injured"):
            assert len(sc["fitness"][cond]) == n + 1
            assert all(0 <= v <= 1 for v in sc["fitness"][cond])
            assert len(sc["policy"][cond]) == n + 1
            assert all(set(level) <= prey for level in sc["policy"][cond])
        assert 0 <= sc["fitness_at_start"] <= 1
        assert set(sc["selection_gradient"]) >= {"hunting_ability", "elasticity"}
        assert math.isfinite(sc["selection_gradient"]["hunting_ability"])
        assert sc["residual"] < 1e-10


def test_invalid_study_exits_2_with_located_problems_on_stderr(tmp_path):
    """An invalid study exits with status 2 (POSIX usage error), lists every
    problem with its location on standard error, and shows no traceback."""
    raw = injury_raw(reserve_capacity_mj=-1)
    raw["prey"][1]["capture_success"] = 3
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    result = runner.invoke(app, ["solve", str(path)])
    assert result.exit_code == 2
    assert "predator.reserve_capacity_mj" in result.stderr
    assert "prey[1].capture_success" in result.stderr
    assert "2 problem(s)" in result.stderr
    assert "Traceback" not in result.stderr + result.stdout
    assert result.stdout == ""


@pytest.mark.parametrize("name", ["study.ods", "study.txt"])
def test_unknown_file_type_exits_2(tmp_path, name):
    """A file of a type riskdiet does not read exits 2 with the accepted types
    named on standard error (POSIX usage error)."""
    path = tmp_path / name
    path.write_text("not a study", encoding="utf-8")
    result = runner.invoke(app, ["solve", str(path)])
    assert result.exit_code == 2
    assert ".xlsx" in result.stderr and ".json" in result.stderr
    assert "Traceback" not in result.stderr + result.stdout


def test_importing_the_cli_does_not_import_heavy_libraries():
    """``import riskdiet.cli`` leaves pandas, scipy.stats and matplotlib
    unimported, so ``riskdiet --help`` stays fast (common practice: import
    heavy libraries inside commands)."""
    code = ("import sys, riskdiet.cli; "
            "print(','.join(m for m in ('pandas', 'scipy.stats', 'matplotlib') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         cwd=ROOT, check=True)
    assert out.stdout.strip() == ""
