"""Runs a study: every scenario through the state-dependent solver.

This module orchestrates the numeric core (:mod:`riskdiet.grid`,
:mod:`riskdiet.solver`) and packs the numbers into documented result
dataclasses with names instead of indices. The CLI and the report only format
these results; they never recompute.

Scenarios are independent, so :func:`solve` accepts any
:class:`concurrent.futures.Executor` to run them in parallel.
"""

from __future__ import annotations

import dataclasses
from concurrent.futures import Executor
from dataclasses import dataclass, field

import numpy as np

import riskdiet
from riskdiet.classic import ClassicResult, classic_prey_model
from riskdiet.errors import SolveError
from riskdiet.grid import Grid, make_grid
from riskdiet.grid_check import GridCheck, coarse_predator, compare_grids, not_possible
from riskdiet.maps import MapResult, make_map, request_from_settings
from riskdiet.model import Predator, Prey, Scenario, Study
from riskdiet.predictions import (
    CohortKills,
    SeasonKills,
    SteadyStateKills,
    cohort_kills,
    season_kills,
    steady_state_kills,
)
from riskdiet.solver import Solution, solve_grid

CONDITIONS = ("healthy", "injured")

VIABLE_BREEDING = 0.5
"""Below this chance of reaching breeding condition a release is called failing."""
VIABLE_MEDIAN_DAYS = 60
"""A median survival of the released animals shorter than this is called failing [day]."""


@dataclass(frozen=True)
class AttackRange:
    """A run of consecutive living levels at which one prey is attacked.

    Attributes
    ----------
    prey : str
        Prey name.
    condition : str
        ``healthy`` or ``injured``.
    low_fraction, high_fraction : float
        Lowest and highest reserves of the run, as fractions of capacity.
    low_mj, high_mj : float
        The same in MJ.
    """

    prey: str
    condition: str
    low_fraction: float
    high_fraction: float
    low_mj: float
    high_mj: float


@dataclass(frozen=True)
class ScenarioResult:
    """State-dependent answer for one scenario.

    Attributes
    ----------
    name : str
        Scenario name (``baseline`` first).
    currency : str
        ``breeding`` or ``season``.
    predator : Predator
        Predator inputs as used (scenario changes applied).
    prey : tuple of Prey
        Prey inputs as used.
    reserves_mj : ndarray, shape (n + 1,)
        Reserves x_j = j R / n at every level [MJ].
    fitness : dict of str to ndarray
        V at every level for ``healthy`` and ``injured`` [probability]; day 0
        for the season currency.
    fitness_at_start : float
        V(j0, healthy) [probability].
    policy : dict of str to list of list of str
        For each condition and level, the prey worth attacking, best first.
    marginal_hunting_ability : float
        dV(j0, healthy)/da, policy held fixed [probability per unit ability].
    elasticity : float or None
        (a / V) dV/da [dimensionless]; None when V = 0 (undefined).
    residual : float
        Final Bellman residual relative to the values (MODEL.md section 3).
    grid, solution
        The discretised inputs and the numeric-core solution, for downstream
        analyses (figures, maps).
    classic : ClassicResult
        The classic prey model for a well-fed forager (MODEL.md section 6).
    kills : SteadyStateKills or None
        Long-run kill predictions (breeding currency).
    season_kills : SeasonKills or None
        Kill predictions over the season (season currency).
    cohort : CohortKills or None
        The released animals' kills, survival and breeding within the
        planning horizon (MODEL.md section 5).
    grid_check : GridCheck or None
        Whether the answer still depends on the number of energy levels
        (MODEL.md section 8).
    viability : str or None
        A plain warning when the released animals mostly die before breeding
        or within weeks; the kill numbers then describe a failing release.
    findings : tuple of str
        Plain-language sentences derived from the numbers.
    """

    name: str
    currency: str
    predator: Predator
    prey: tuple[Prey, ...]
    reserves_mj: np.ndarray
    fitness: dict[str, np.ndarray]
    fitness_at_start: float
    policy: dict[str, list[list[str]]]
    marginal_hunting_ability: float
    elasticity: float | None
    residual: float
    iterations: int
    converged: bool
    linear_solver: str
    grid: Grid = field(repr=False)
    solution: Solution = field(repr=False)
    classic: ClassicResult | None = None
    kills: SteadyStateKills | None = None
    season_kills: SeasonKills | None = None
    cohort: CohortKills | None = None
    grid_check: GridCheck | None = None
    viability: str | None = None
    findings: tuple[str, ...] = ()

    @property
    def prey_names(self) -> list[str]:
        return [p.name for p in self.prey]

    def attack_ranges(self) -> list[AttackRange]:
        """Runs of reserves over which each prey is attacked, per condition."""
        out = []
        n = self.grid.n
        cap = self.predator.reserve_capacity_mj
        living = self.grid.living
        for k, cond in enumerate(CONDITIONS):
            attacked = self.solution.priority[k][living] >= 0  # (m, P)
            for i, name in enumerate(self.prey_names):
                for lo, hi in _runs(attacked[:, i]):
                    jl, jh = living[lo], living[hi]
                    out.append(AttackRange(name, cond, float(jl / n), float(jh / n),
                                           float(jl * cap / n), float(jh * cap / n)))
        return out

    def to_dict(self) -> dict:
        """JSON-ready dictionary (the ``solve --json`` layout)."""
        return {
            "name": self.name,
            "currency": self.currency,
            "reserves_mj": _floats(self.reserves_mj),
            "fitness": {c: _floats(v) for c, v in self.fitness.items()},
            "fitness_at_start": _float(self.fitness_at_start),
            "policy": self.policy,
            "selection_gradient": {"hunting_ability": _float(self.marginal_hunting_ability),
                                   "elasticity": _float(self.elasticity)},
            "residual": _float(self.residual),
            "iterations": self.iterations,
            "converged": self.converged,
            "linear_solver": self.linear_solver,
            "classic": self.classic.to_dict() if self.classic else None,
            **({"steady_state": self.kills.to_dict()} if self.kills else {}),
            **({"season": self.season_kills.to_dict()} if self.season_kills else {}),
            "cohort": self.cohort.to_dict() if self.cohort else None,
            "grid_check": self.grid_check.to_dict() if self.grid_check else None,
            "viability_warning": self.viability,
            "findings": list(self.findings),
        }


@dataclass(frozen=True)
class StudyResult:
    """Results of every scenario of a study.

    Attributes
    ----------
    study : Study
        The study as read.
    scenarios : tuple of ScenarioResult
        Baseline first, then the scenarios in input order.
    riskdiet_version : str
        Version that computed the results.
    map : MapResult or None
        The map asked for in the study's settings (``map_x``, ``map_y``), if any.
    """

    study: Study
    scenarios: tuple[ScenarioResult, ...]
    riskdiet_version: str = riskdiet.__version__
    map: MapResult | None = None

    def scenario(self, name: str) -> ScenarioResult:
        for s in self.scenarios:
            if s.name == name:
                return s
        raise KeyError(name)

    def to_dict(self) -> dict:
        """JSON-ready dictionary (the ``solve --json`` document).

        Numbers that are undefined are null, never NaN or infinity: the reason
        is documented beside each such key (README, "JSON output").
        """
        return finite({
            "riskdiet_version": self.riskdiet_version,
            "study_name": self.study.name,
            "input_file": self.study.source,
            "input_sha256": self.study.source_sha256,
            "scenarios": [s.to_dict() for s in self.scenarios],
            **({"map": {"scenario": self.map.request.scenario,
                        "x": self.map.request.x.target, "y": self.map.request.y.target,
                        "columns": self.map.columns(), "rows": self.map.rows()}}
               if self.map is not None else {}),
        })


def finite(value):
    """Replace every non-finite float in a JSON-ready structure by None.

    The fields that can be undefined are set to None where they are computed;
    this is the last guard, so that no output can ever carry NaN or infinity.
    """
    if isinstance(value, float):
        return value if np.isfinite(value) else None
    if isinstance(value, dict):
        return {k: finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [finite(v) for v in value]
    if isinstance(value, np.generic):
        return finite(value.item())
    return value


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges (inclusive) of consecutive True values."""
    padded = np.concatenate([[False], mask, [False]]).astype(np.int8)
    edges = np.flatnonzero(np.diff(padded))
    return [(int(a), int(b) - 1) for a, b in zip(edges[::2], edges[1::2], strict=True)]


def _float(x: float | None) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if np.isfinite(x) else None


def _floats(a: np.ndarray) -> list[float]:
    return [float(v) for v in np.asarray(a, dtype=float)]


def policy_names(priority: np.ndarray, names: list[str]) -> list[list[str]]:
    """Ranked prey names per level from a priority array of shape (levels, P)."""
    out = []
    for row in priority:
        ranked = sorted((int(r), i) for i, r in enumerate(row) if r >= 0)
        out.append([names[i] for _, i in ranked])
    return out


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
    if grid.currency == "breeding":
        kills, season = steady_state_kills(predator, prey, grid, solution), None
    else:
        kills, season = None, season_kills(predator, prey, grid, solution)
    cohort = cohort_kills(predator, prey, grid, solution, horizon_days)
    return _Numbers(grid, solution, kills, season, cohort)


def _long_run(numbers: _Numbers) -> tuple[dict[str, float], dict[str, float]]:
    """Long-run kills per predator per year (season: per season), by prey and group."""
    if numbers.kills is not None:
        return (numbers.kills.kills_per_predator_per_year,
                numbers.kills.kills_per_predator_per_year_by_group)
    return numbers.season.expected_kills, numbers.season.expected_kills_by_group


def grid_check(predator: Predator, prey: tuple[Prey, ...], horizon_days: int,
               fine: _Numbers) -> GridCheck:
    """MODEL.md section 8: the same scenario at n' levels, compared with n."""
    n = predator.energy_levels
    coarse = coarse_predator(predator)
    if coarse is None:
        return not_possible(n, "grid check not possible: the breeding level would be below 2 "
                            "on the check's grid")
    try:
        other = _numbers(coarse, prey, horizon_days)
    except SolveError as err:
        return not_possible(n, f"the solve on the check's grid failed: {err.reason}")
    k_other, g_other = _long_run(other)
    k_fine, g_fine = _long_run(fine)
    return compare_grids(
        (coarse.energy_levels, n),
        (other.solution.fitness_at_start, fine.solution.fitness_at_start),
        (k_other, k_fine), (g_other, g_fine),
        (other.cohort.kills, fine.cohort.kills),
        (other.cohort.kills_by_group, fine.cohort.kills_by_group))


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
        policy={c: policy_names(solution.priority[k], names) for k, c in enumerate(CONDITIONS)},
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


def solve(study: Study, executor: Executor | None = None) -> StudyResult:
    """Solve every scenario of a study.

    Parameters
    ----------
    study : Study
        A validated study (see :func:`riskdiet.load_study`).
    executor : concurrent.futures.Executor, optional
        Runs scenarios in parallel when given (processes, threads or a Dask
        client's executor); in order in this process otherwise.

    Returns
    -------
    StudyResult
    """
    request_from_settings(study)  # a bad map request fails before any work
    if executor is None:
        results = [solve_scenario(study, s) for s in study.scenarios]
    else:
        results = list(executor.map(solve_scenario, [study] * len(study.scenarios),
                                    study.scenarios))
    from riskdiet.findings import findings

    baseline = results[0]
    results = [dataclasses.replace(r, findings=findings(r, baseline)) for r in results]
    request = request_from_settings(study)
    surface = None if request is None else make_map(study, request, executor)
    return StudyResult(study, tuple(results), map=surface)
