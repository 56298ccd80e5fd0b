"""Regenerate the committed workbooks from their single sources.

- ``examples/harrow-vale.xlsx``: the demo study, written from
  ``examples/harrow-vale.json`` (validated first), so the two never drift.
- ``templates/riskdiet-template.xlsx``: the blank template, for people browsing
  the repository (``riskdiet template PATH`` writes the same workbook).

Run from anywhere: ``python scripts/make_demo_workbook.py``. The output is
deterministic, so an unchanged source gives unchanged files.
"""

from __future__ import annotations

from pathlib import Path

from riskdiet.io.load import load_study
from riskdiet.io.template import write_study_workbook, write_template

ROOT = Path(__file__).resolve().parent.parent
DEMO_JSON = ROOT / "examples" / "harrow-vale.json"
DEMO_XLSX = ROOT / "examples" / "harrow-vale.xlsx"
TEMPLATE = ROOT / "templates" / "riskdiet-template.xlsx"


def main() -> None:
    study = load_study(DEMO_JSON)
    for path in (write_study_workbook(DEMO_XLSX, study, force=True),
                 write_template(TEMPLATE, force=True)):
        print(f"wrote {path.relative_to(ROOT)}")


if __name__ == "__main__":
    main()
