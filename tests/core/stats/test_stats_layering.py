"""The statistical building blocks stay in the numeric core.

Source: the project's layer rule (DEVELOPERS.md, Architecture): the numeric core is pure
numpy/scipy and never imports pandas, openpyxl, reportlab, matplotlib or typer; the stats
modules also know nothing about studies or the solver.
"""

from __future__ import annotations

import subprocess
import sys

MODULES = ["ranges", "sensitivity", "probability_words", "composition_likelihood",
           "goodness_of_fit", "profile_interval"]
FORBIDDEN = ["pandas", "openpyxl", "reportlab", "matplotlib", "typer", "riskdiet.model",
             "riskdiet.core.solver", "riskdiet.analysis.study", "riskdiet.validation",
             "riskdiet.core.batch"]


def test_stats_modules_import_only_numpy_scipy_and_errors():
    """Importing every stats module in a fresh interpreter loads none of the forbidden
    modules (checked in sys.modules, so indirect imports count too)."""
    code = (
        "import sys\n"
        + "".join(f"import riskdiet.core.stats.{m}\n" for m in MODULES)
        + f"print(sorted(m for m in {FORBIDDEN!r} if m in sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "[]"
