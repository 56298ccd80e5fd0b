"""The demo: the invented Harrow Vale study as a workbook, its results and its brief.

``riskdiet demo`` shows in one command what riskdiet produces. The study ships
inside the package (``riskdiet/data/harrow-vale.json``, a copy of
``examples/harrow-vale.json`` kept identical by a test); every number in it is
invented and illustrative. The demo writes the study as a filled workbook,
reads that workbook back exactly as a user's file would be read, solves it and
writes the results workbook and the PDF brief beside it.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

DEMO_STUDY = "data/harrow-vale.json"
"""The packaged demo study, relative to the ``riskdiet`` package."""
DEFAULT_FOLDER = Path("riskdiet-demo")


@dataclass(frozen=True)
class DemoFiles:
    """Files written by :func:`write_demo`.

    Attributes
    ----------
    workbook : Path
        The demo study as a filled workbook (the input).
    results : Path
        Its results workbook.
    brief : Path
        Its PDF brief.
    """

    workbook: Path
    results: Path
    brief: Path


def demo_study_dict() -> dict:
    """The packaged demo study in the JSON layout."""
    text = resources.files("riskdiet").joinpath(DEMO_STUDY).read_text(encoding="utf-8")
    return json.loads(text)


def write_demo(folder: str | Path = DEFAULT_FOLDER, force: bool = False) -> DemoFiles:
    """Write the demo workbook, its results workbook and its brief into ``folder``.

    Parameters
    ----------
    folder : str or Path
        Output folder, created if needed.
    force : bool
        Replace files left by an earlier run.

    Returns
    -------
    DemoFiles

    Raises
    ------
    OutputExistsError
        One of the three files exists and ``force`` is False (nothing is written).
    """
    from riskdiet.analysis.study import solve
    from riskdiet.io import load_study
    from riskdiet.io.atomic import check_writable
    from riskdiet.io.results_workbook import write_results_workbook
    from riskdiet.io.template import write_study_workbook
    from riskdiet.report.brief import brief_date, write_brief
    from riskdiet.validation import build_study

    folder = Path(folder)
    files = DemoFiles(folder / "harrow-vale.xlsx", folder / "harrow-vale-results.xlsx",
                      folder / "harrow-vale-brief.pdf")
    for path in (files.workbook, files.results, files.brief):
        check_writable(path, force)
    raw = demo_study_dict()
    build_study(raw, source=DEMO_STUDY)  # the packaged copy must itself be valid
    write_study_workbook(files.workbook, raw, force)
    study = load_study(files.workbook)
    result = solve(study)
    date, _ = brief_date(study)
    from riskdiet.analysis.uncertainty import run_uncertainty
    from riskdiet.io.uncertainty_tables import uncertainty_tables

    unc = run_uncertainty(study) if study.uncertainty else None
    write_results_workbook(result, files.results, force, date=date,
                           extra_tables=uncertainty_tables(unc) if unc else ())
    write_brief(result, files.brief, force=force, uncertainty=unc)
    return files
