"""riskdiet: what a predator will kill, and at what risk to itself.

A decision aid for wildlife managers. Read a study (predator, prey, scenarios)
from a workbook or JSON file, solve the state-dependent attack decisions of the
predator for every scenario, and report them.

>>> import riskdiet
>>> study = riskdiet.load_study("examples/harrow-vale.json")   # doctest: +SKIP
>>> result = riskdiet.solve(study)                               # doctest: +SKIP
>>> result.scenarios[0].fitness_at_start                         # doctest: +SKIP
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from riskdiet.version import __version__

if TYPE_CHECKING:  # pragma: no cover
    from riskdiet.analysis.results import StudyResult
    from riskdiet.model import Study


def load_study(path) -> Study:
    """Read and validate a study file (``.xlsx`` or ``.json``); see :mod:`riskdiet.io`."""
    from riskdiet.io import load_study as _load

    return _load(path)


def solve(study: Study, executor=None) -> StudyResult:
    """Solve every scenario of a study; see :func:`riskdiet.analysis.solve`."""
    from riskdiet.analysis.study import solve as _solve

    return _solve(study, executor)


__all__ = ["__version__", "load_study", "solve"]
