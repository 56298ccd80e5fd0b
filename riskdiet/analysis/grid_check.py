"""Does the answer still depend on the grid? (MODEL.md section 8.)

Every scenario is solved a second time on a grid of about half as many
energy levels (twice as many when the grid is small), and the relative change
of fitness at start, of each prey's and group's long-run kills and of the
released cohort's kills is reported. Large changes mean that the number of
energy levels is too small for the numbers to be trusted, and a warning says
so in plain words.

References
----------
.. [1] Roache, P. J. (1998). Verification and Validation in Computational
   Science and Engineering. Hermosa (grid-convergence studies: compare the
   answer on two grids of different resolution).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from riskdiet.analysis.wording import change
from riskdiet.model import Predator, round_half_up

FITNESS_ABSOLUTE = 0.01
"""A fitness change is flagged only when it exceeds this absolute amount [probability] ..."""
RELATIVE_LIMIT = 0.05
"""... and this fraction of the value; kills are flagged above this fraction too."""
SHARE_FLOOR = 0.01
"""Kills of a prey or group making less than this share of kills are not flagged."""


@dataclass(frozen=True)
class GridCheck:
    """Relative changes between a coarser (or finer) grid and the study's grid.

    Attributes
    ----------
    levels_compared : tuple of int
        (n', n): the check's energy levels and the study's.
    fitness_relative_change : float or None
        (V' - V) / V at the start state; None when V = 0.
    kills_relative_change, kills_by_group_relative_change : dict
        Same for long-run kills (season currency: the season's kills) by prey
        and by group; None where the value at n is 0.
    cohort_kills_relative_change, cohort_kills_by_group_relative_change : dict
        Same for the released cohort's kills.
    largest_kill_change : float or None
        Largest |relative change| among the kills of prey and groups making at
        least 1 % of kills (the ones a warning is about).
    warning : str or None
        A plain sentence when the answer still depends on the grid.
    problem : str or None
        Why the check could not be made, when it could not (then every
        change is None).
    """

    levels_compared: tuple[int, int]
    fitness_relative_change: float | None
    kills_relative_change: dict[str, float | None]
    kills_by_group_relative_change: dict[str, float | None]
    cohort_kills_relative_change: dict[str, float | None]
    cohort_kills_by_group_relative_change: dict[str, float | None]
    largest_kill_change: float | None
    warning: str | None
    problem: str | None = None

    def to_dict(self) -> dict:
        """The ``grid_check`` object of ``solve --json``."""
        out = dict(self.__dict__)
        out["levels_compared"] = list(self.levels_compared)
        return out


def check_levels(n: int) -> int:
    """n' = round(n / 2) when n >= 20, else 2n (MODEL.md section 8)."""
    return round_half_up(n / 2) if n >= 20 else 2 * n


def coarse_predator(predator: Predator) -> Predator | None:
    """The predator on the check's grid, or None when its breeding level would be below 2."""
    levels = check_levels(predator.energy_levels)
    coarse = dataclasses.replace(predator, energy_levels=levels)
    if predator.currency == "breeding" and coarse.breeding_level < 2:
        return None
    return coarse


def _change(new: float, old: float) -> float | None:
    return None if old == 0 else (new - old) / old


def _changes(new: dict[str, float], old: dict[str, float]) -> dict[str, float | None]:
    return {k: _change(new.get(k, 0.0), v) for k, v in old.items()}


def _relevant(changes: dict[str, float | None], values: dict[str, float]) -> dict[str, float]:
    """Changes of the prey or groups that make at least 1 % of kills."""
    total = sum(values.values())
    return {k: abs(c) for k, c in changes.items()
            if c is not None and total > 0 and values[k] >= SHARE_FLOOR * total}


def compare_grids(n_pair: tuple[int, int], fitness: tuple[float, float],
                  kills: tuple[dict, dict], kills_by_group: tuple[dict, dict],
                  cohort: tuple[dict, dict], cohort_by_group: tuple[dict, dict]) -> GridCheck:
    """Build the grid check from the numbers at n' (first of each pair) and n (second)."""
    dv = fitness[0] - fitness[1]
    fit_change = _change(fitness[0], fitness[1])
    k = _changes(*kills)
    kg = _changes(*kills_by_group)
    c = _changes(*cohort)
    cg = _changes(*cohort_by_group)
    reasons = []
    if abs(dv) > FITNESS_ABSOLUTE and (fit_change is None or abs(fit_change) > RELATIVE_LIMIT):
        reasons.append(f"fitness at the start reserves changes by {change(dv, 'probability')}")
    relevant = [_relevant(k, kills[1]), _relevant(kg, kills_by_group[1]),
                _relevant(c, cohort[1]), _relevant(cg, cohort_by_group[1])]
    largest = max((v for d in relevant for v in d.values()), default=None)
    moved = sorted({name for d in relevant for name, v in d.items() if v > RELATIVE_LIMIT})
    if moved:
        reasons.append("kills of " + ", ".join(moved) + " change by more than 5 %")
    warning = None
    if reasons:
        warning = (f"The answer still depends on the grid: between {n_pair[0]} and {n_pair[1]} "
                   f"energy levels {' and '.join(reasons)}. Use a larger number of energy levels "
                   f"(for example {min(2000, 2 * max(n_pair))}) before relying on these numbers.")
    return GridCheck(n_pair, fit_change, k, kg, c, cg, largest, warning)


def not_possible(n: int, reason: str) -> GridCheck:
    """A grid check that could not be made, saying why."""
    return GridCheck((check_levels(n), n), None, {}, {}, {}, {}, None, None, reason)

