"""The benchmark scripts still import and parse their options (their timings are never
asserted; common practice: a script that no test touches rots when modules move)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

SCRIPTS = sorted((Path(__file__).resolve().parents[1] / "benchmarks").glob("*.py"))


@pytest.mark.parametrize("script", SCRIPTS, ids=[s.stem for s in SCRIPTS])
def test_benchmark_script_imports_and_shows_its_options(script):
    """``python benchmarks/NAME.py --help`` exits 0 and prints a usage line."""
    done = subprocess.run([sys.executable, str(script), "--help"], capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert "usage:" in done.stdout
