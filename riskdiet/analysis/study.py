"""Runs a study: every scenario through the state-dependent solver.

This module orchestrates the numeric core (:mod:`riskdiet.core.grid`,
:mod:`riskdiet.core.solver`) and packs the numbers into documented result
dataclasses with names instead of indices. The CLI and the report only format
these results; they never recompute.

Scenarios are independent, so :func:`solve` accepts any
:class:`concurrent.futures.Executor` to run them in parallel.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from concurrent.futures import Executor
from dataclasses import dataclass

import numpy as np

from riskdiet.analysis.findings import findings
from riskdiet.analysis.grid_check import GridCheck, coarse_predator, compare_grids, not_possible
from riskdiet.analysis.maps import make_map, request_from_settings
from riskdiet.analysis.predictions import (
    CohortKills,
    SeasonKills,
    SteadyStateKills,
    cohort_kills,
    kills_per_year,
    season_kills,
    steady_state_kills,
)
from riskdiet.analysis.results import CONDITIONS, ScenarioResult, StudyResult, policy_names
from riskdiet.analysis.verdict import verdict
from riskdiet.core.classic import classic_prey_model
from riskdiet.core.grid import Grid, make_grid
from riskdiet.core.season_chain import season_outlook
from riskdiet.core.solver import Solution, solve_breeding, solve_grid, solve_season
from riskdiet.errors import SolveError
from riskdiet.model import Predator, Prey, Scenario, Study

VIABLE_BREEDING = 0.5
"""Below this chance of reaching breeding condition a release is called failing."""
VIABLE_MEDIAN_DAYS = 60
"""A median survival of the released animals shorter than this is called failing [day]."""


@dataclass(frozen=True)
class _Numbers:
    """The state-dependent numbers of one set of inputs."""

    grid: Grid
    solution: Solution
    kills: SteadyStateKills | None
    season: SeasonKills | None
    cohort: CohortKills


def _numbers(predator: Predator, prey: tuple[Prey, ...], horizon_days: int) -> _Numbers:
    grid = make_grid(predator, prey)
    solution = solve_grid(grid)
    outlook = None
    if grid.currency == "breeding":
        kills, season = steady_state_kills(predator, prey, grid, solution), None
    else:
        outlook = season_outlook(grid, solution)  # one propagation for both uses
        kills, season = None, season_kills(predator, prey, grid, solution, outlook)
    cohort = cohort_kills(predator, prey, grid, solution, horizon_days, outlook)
    return _Numbers(grid, solution, kills, season, cohort)


@dataclass(frozen=True)
class _Compared:
    """The numbers the grid check compares (MODEL.md section 8), at one grid."""

    fitness_at_start: float
    kills: dict[str, float]
    kills_by_group: dict[str, float]
    cohort: dict[str, float]
    cohort_by_group: dict[str, float]


def _compared(numbers: _Numbers) -> _Compared:
    """The compared numbers read off the full results at n levels."""
    if numbers.kills is not None:
        kills = (numbers.kills.kills_per_predator_per_year,
                 numbers.kills.kills_per_predator_per_year_by_group)
    else:
        kills = numbers.season.expected_kills, numbers.season.expected_kills_by_group
    return _Compared(numbers.solution.fitness_at_start, *kills, numbers.cohort.kills,
                     numbers.cohort.kills_by_group)


def _check_numbers(predator: Predator, prey: tuple[Prey, ...], horizon_days: int) -> _Compared:
    """Only the compared numbers, at the check's levels: no marginal value, no
    lifetimes or causes of death, no classic model (MODEL.md section 8)."""
    grid = make_grid(predator, prey)
    outlook = None
    if grid.currency == "breeding":
        solution = solve_breeding(grid, marginal=False)
        kills = kills_per_year(prey, grid, solution)
    else:
        solution = solve_season(grid)
        outlook = season_outlook(grid, solution)
        season = season_kills(predator, prey, grid, solution, outlook)
        kills = season.expected_kills, season.expected_kills_by_group
    cohort = cohort_kills(predator, prey, grid, solution, horizon_days, outlook)
    return _Compared(solution.fitness_at_start, *kills, cohort.kills, cohort.kills_by_group)


def grid_check(predator: Predator, prey: tuple[Prey, ...], horizon_days: int,
               fine: _Numbers) -> GridCheck:
    """MODEL.md section 8: the same scenario at n' levels, compared with n."""
    n = predator.energy_levels
    coarse = coarse_predator(predator)
    if coarse is None:
        return not_possible(n, "grid check not possible: the breeding level would be below 2 "
                            "on the check's grid")
    try:
        other = _check_numbers(coarse, prey, horizon_days)
    except SolveError as err:
        return not_possible(n, f"the solve on the check's grid failed: {err.reason}")
    at_n = _compared(fine)
    return compare_grids(
        (coarse.energy_levels, n),
        (other.fitness_at_start, at_n.fitness_at_start),
        (other.kills, at_n.kills), (other.kills_by_group, at_n.kills_by_group),
        (other.cohort, at_n.cohort), (other.cohort_by_group, at_n.cohort_by_group))


def _policy_names(priority: np.ndarray, names: list[str]) -> list[list[str]]:
    """Ranked prey names per level; the attack set repeats over long runs of levels,
    so each distinct row is named once."""
    rows, which = np.unique(priority, axis=0, return_inverse=True)
    named = policy_names(rows, names)
    return [list(named[i]) for i in which.reshape(-1)]


def viability(currency: str, fitness_at_start: float, cohort: CohortKills) -> str | None:
    """A plain warning when the released animals mostly fail (None when they do not)."""
    reasons = []
    if fitness_at_start < VIABLE_BREEDING:
        what = ("reach breeding condition" if currency == "breeding"
                else "end the season alive and in condition")
        reasons.append(f"only {100 * fitness_at_start:.0f} % of released animals are expected "
                       f"to {what}")
    median = cohort.median_survival_days
    if median is not None and median < VIABLE_MEDIAN_DAYS:
        reasons.append(f"half of them are expected to be dead within {median} days")
    if not reasons:
        return None
    return ("This release looks like it would fail: " + " and ".join(reasons) + ". The kill "
            "numbers then describe a failing release; revisit the release plan before relying "
            "on them.")


def solve_scenario(study: Study, scenario: Scenario) -> ScenarioResult:
    """Solve one scenario of a study (pure function of its inputs).

    Raises
    ------
    SolveError
        Naming the scenario, when its solve cannot be vouched for.
    """
    predator, prey = study.inputs_for(scenario)
    horizon = study.settings.horizon_days
    try:
        numbers = _numbers(predator, prey, horizon)
    except SolveError as err:
        raise err.located(f"scenario {scenario.name!r}") from None
    grid, solution = numbers.grid, numbers.solution
    names = [p.name for p in prey]
    reserves = np.arange(grid.n + 1) * grid.step_mj
    classic = classic_prey_model(
        names,
        [p.encounters(predator) for p in prey],
        [p.energy_mj for p in prey],
        [p.handling_days for p in prey],
        grid.capture[0],
        [p.fatality_chance for p in prey],
        predator.background_mortality,
        predator.effective_daily_cost_mj,
    )
    return ScenarioResult(
        name=scenario.name,
        currency=grid.currency,
        predator=predator,
        prey=prey,
        reserves_mj=reserves,
        fitness={c: solution.fitness[k] for k, c in enumerate(CONDITIONS)},
        fitness_at_start=solution.fitness_at_start,
        policy={c: _policy_names(solution.priority[k], names) for k, c in enumerate(CONDITIONS)},
        marginal_hunting_ability=solution.marginal_hunting_ability,
        elasticity=solution.elasticity,
        residual=solution.residual,
        iterations=solution.iterations,
        converged=solution.converged,
        linear_solver=solution.linear_solver,
        grid=grid,
        solution=solution,
        classic=classic,
        kills=numbers.kills,
        season_kills=numbers.season,
        cohort=numbers.cohort,
        grid_check=grid_check(predator, prey, horizon, numbers),
        viability=viability(grid.currency, solution.fitness_at_start, numbers.cohort),
    )


def solve(study: Study, executor: Executor | None = None,
          progress: Callable[[int, int], None] | None = None) -> StudyResult:
    """Solve every scenario of a study.

    Parameters
    ----------
    study : Study
        A validated study (see :func:`riskdiet.load_study`).
    executor : concurrent.futures.Executor, optional
        Runs scenarios in parallel when given (processes, threads or a Dask
        client's executor); in order in this process otherwise.
    progress : callable, optional
        ``progress(done, total)`` in steps of work: one per scenario, then one
        per row of the map the settings ask for.

    Returns
    -------
    StudyResult
    """
    request = request_from_settings(study)  # a bad map request fails before any work
    rows = 0 if request is None else request.y.steps
    total = len(study.scenarios) + rows
    if executor is None:
        results = []
        for s in study.scenarios:
            results.append(solve_scenario(study, s))
            if progress:
                progress(len(results), total)
    else:
        results = list(executor.map(solve_scenario, [study] * len(study.scenarios),
                                    study.scenarios))
    baseline = results[0]
    results = [dataclasses.replace(r, findings=findings(r, baseline)) for r in results]
    done = len(results)
    step = None if progress is None else (lambda row, _rows: progress(done + row, total))
    surface = None if request is None else make_map(study, request, executor, progress=step)
    solved = StudyResult(study, tuple(results), map=surface)
    v = verdict(solved)
    return dataclasses.replace(solved, verdict={
        "goal": v.goal_words, "ranking": list(v.ranking), "summary": v.summary,
        "sentences": v.sentences})


__all__ = ["CONDITIONS", "ScenarioResult", "StudyResult", "grid_check", "solve", "solve_scenario",
           "viability"]
