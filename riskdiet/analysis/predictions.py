"""What gets killed: kill predictions with names, per predator and population.

Turns the numeric core's Markov-chain results (:mod:`riskdiet.core.chain`) into
named tables a management plan can quote: kills of each prey type per predator
per day, per 30 days and per year, population totals, diet shares by number
and by energy, and sums by prey group (MODEL.md section 5).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from riskdiet.core.chain import kill_rates, steady_state
from riskdiet.core.cohort import released_cohort
from riskdiet.core.grid import Grid
from riskdiet.core.season_chain import SeasonOutlook, season_outlook
from riskdiet.core.solver import Solution
from riskdiet.model import Predator, Prey

DAYS_PER_YEAR = 365.0
DAYS_PER_MONTH = 30.0


def _named(names: list[str], values: np.ndarray) -> dict[str, float]:
    return {n: float(v) for n, v in zip(names, values, strict=True)}


def _by_group(prey: tuple[Prey, ...], values: np.ndarray) -> dict[str, float]:
    out: dict[str, float] = {}
    for p, v in zip(prey, values, strict=True):
        out[p.group] = out.get(p.group, 0.0) + float(v)
    return out


def _shares(values: np.ndarray) -> np.ndarray:
    total = float(values.sum())
    return values / total if total > 0 else np.zeros_like(values)


def _finite(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


@dataclass(frozen=True)
class SteadyStateKills:
    """Long-run kills of a predator population in the breeding currency.

    Attributes
    ----------
    kills_per_predator_per_day : dict of str to float
        K_i for each prey [kills/predator/day].
    kills_per_predator_per_30_days, kills_per_predator_per_year : dict
        30 K_i and 365 K_i [kills/predator].
    kills_per_year_population : dict
        population x 365 K_i [kills/year].
    diet_share_by_number, diet_share_by_energy : dict
        Shares of kills, and of energy eaten (K_i e_i), per prey [fraction].
    kills_per_predator_per_year_by_group, kills_per_year_population_by_group : dict
        The same kills summed by prey group.
    diet_share_by_number_by_group, diet_share_by_energy_by_group : dict
        Diet shares summed by prey group [fraction].
    share_of_time_injured : float
        Long-run fraction of days spent injured.
    mean_reserves_fraction, mean_reserves_mj : float
        Long-run mean reserves [fraction of capacity], [MJ].
    daily_survival : float
        Long-run chance of surviving a day [probability].
    expected_lifetime_days : float or None
        Of a newcomer; None when unbounded (it can live forever).
    expected_breeding_events : float or None
        Of a newcomer over its life; None when unbounded.
    lifetime_note : str or None
        Why the two numbers above are None, when they are (MODEL.md section 5:
        an animal that practically never dies).
    first_breeding_probability : float
        Chance that a newcomer reaches breeding condition before dying.
    death_before_breeding : dict
        Chance that a newcomer dies of ``starvation``, ``attack`` or ``other``
        causes before its first breeding.
    """

    kills_per_predator_per_day: dict[str, float]
    kills_per_predator_per_30_days: dict[str, float]
    kills_per_predator_per_year: dict[str, float]
    kills_per_year_population: dict[str, float]
    diet_share_by_number: dict[str, float]
    diet_share_by_energy: dict[str, float]
    kills_per_predator_per_year_by_group: dict[str, float]
    kills_per_year_population_by_group: dict[str, float]
    diet_share_by_number_by_group: dict[str, float]
    diet_share_by_energy_by_group: dict[str, float]
    share_of_time_injured: float
    mean_reserves_fraction: float
    mean_reserves_mj: float
    daily_survival: float
    expected_lifetime_days: float | None
    expected_breeding_events: float | None
    first_breeding_probability: float
    death_before_breeding: dict[str, float]
    lifetime_note: str | None = None

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class SeasonKills:
    """Kills over one season in the season currency.

    Attributes
    ----------
    expected_kills : dict of str to float
        Expected kills of each prey per predator over the season.
    expected_kills_population : dict
        population x expected kills.
    expected_kills_by_group, expected_kills_population_by_group : dict
        The same summed by prey group.
    survival_to_end : float
        Chance of being alive on the last day.
    chance_above_threshold : float
        Chance of being alive on the last day with reserves at or above the
        season reserve threshold (equals the fitness at the start state).
    survival_by_day : list of float
        Chance of being alive on each day 0..T.
    mean_reserves_fraction_by_day : list of float or None
        Mean reserves of the living on each day [fraction of capacity]; None
        on days when no animal is alive (a mean over nobody is undefined).
    """

    expected_kills: dict[str, float]
    expected_kills_population: dict[str, float]
    expected_kills_by_group: dict[str, float]
    expected_kills_population_by_group: dict[str, float]
    survival_to_end: float
    chance_above_threshold: float
    survival_by_day: list[float]
    mean_reserves_fraction_by_day: list[float | None]

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def steady_state_kills(predator: Predator, prey: tuple[Prey, ...], grid: Grid,
                       solution: Solution) -> SteadyStateKills:
    """Named long-run kill predictions (breeding currency)."""
    chain = steady_state(grid, solution)
    names = [p.name for p in prey]
    per_day = np.asarray(chain.kills_per_day, dtype=float)
    energy = per_day * np.array([p.energy_mj for p in prey])
    per_year = DAYS_PER_YEAR * per_day
    population = per_year * predator.population
    return SteadyStateKills(
        kills_per_predator_per_day=_named(names, per_day),
        kills_per_predator_per_30_days=_named(names, DAYS_PER_MONTH * per_day),
        kills_per_predator_per_year=_named(names, per_year),
        kills_per_year_population=_named(names, population),
        diet_share_by_number=_named(names, _shares(per_day)),
        diet_share_by_energy=_named(names, _shares(energy)),
        kills_per_predator_per_year_by_group=_by_group(prey, per_year),
        kills_per_year_population_by_group=_by_group(prey, population),
        diet_share_by_number_by_group=_by_group(prey, _shares(per_day)),
        diet_share_by_energy_by_group=_by_group(prey, _shares(energy)),
        share_of_time_injured=float(chain.share_of_time_injured),
        mean_reserves_fraction=float(chain.mean_reserves_levels) / grid.n,
        mean_reserves_mj=float(chain.mean_reserves_levels) * grid.step_mj,
        daily_survival=float(chain.daily_survival),
        expected_lifetime_days=_finite(chain.expected_lifetime_days),
        expected_breeding_events=_finite(chain.expected_breeding_events),
        first_breeding_probability=float(chain.first_breeding_probability),
        death_before_breeding={k: float(v) for k, v in chain.death_before_breeding.items()},
        lifetime_note=chain.lifetime_note,
    )


def season_kills(predator: Predator, prey: tuple[Prey, ...], grid: Grid,
                 solution: Solution, outlook: SeasonOutlook | None = None) -> SeasonKills:
    """Named season kill predictions (season currency); ``outlook`` is the season's
    propagation when already computed."""
    out = season_outlook(grid, solution) if outlook is None else outlook
    names = [p.name for p in prey]
    kills = np.asarray(out.expected_kills, dtype=float)
    population = kills * predator.population
    return SeasonKills(
        expected_kills=_named(names, kills),
        expected_kills_population=_named(names, population),
        expected_kills_by_group=_by_group(prey, kills),
        expected_kills_population_by_group=_by_group(prey, population),
        survival_to_end=float(out.survival_to_end),
        chance_above_threshold=float(out.chance_above_threshold),
        survival_by_day=[float(v) for v in out.survival_by_day],
        mean_reserves_fraction_by_day=[_finite(float(v) / grid.n)
                                       for v in out.mean_reserves_by_day],
    )


@dataclass(frozen=True)
class CohortKills:
    """What the released animals do within the planning horizon (no replacement).

    Attributes
    ----------
    horizon_days : int
        Planning horizon L (season currency: the season) [day].
    animals : int
        Animals released on day 0 (``released_animals``, default ``population``).
    kills : dict of str to float
        Expected kills of each prey by the whole cohort within the horizon [kills].
    kills_by_group : dict of str to float
        The same summed by prey group.
    alive_at_horizon : float
        Chance that one released animal is alive at the horizon [probability].
    survivors : float
        Expected released animals alive at the horizon [animals].
    breeding_events : float or None
        Expected breeding events by the cohort within the horizon; None in the
        season currency.
    median_survival_days : int or None
        Smallest whole day by which half the released animals are expected to
        have died; None when more than half are alive at the horizon.
    survival_by_day : list of float
        Chance that one released animal is alive on each day 0..L.
    """

    horizon_days: int
    animals: int
    kills: dict[str, float]
    kills_by_group: dict[str, float]
    alive_at_horizon: float
    survivors: float
    breeding_events: float | None
    median_survival_days: int | None
    survival_by_day: list[float]

    def to_dict(self) -> dict:
        """The ``cohort`` object of ``solve --json`` (survival curve left out)."""
        out = dict(self.__dict__)
        del out["survival_by_day"]
        return out


def cohort_kills(predator: Predator, prey: tuple[Prey, ...], grid: Grid, solution: Solution,
                 horizon_days: int, outlook: SeasonOutlook | None = None) -> CohortKills:
    """Named predictions for the released cohort (MODEL.md section 5); in the season
    currency ``outlook`` is the season's propagation when already computed."""
    out = released_cohort(grid, solution, horizon_days, outlook)
    animals = predator.cohort_size
    kills = animals * np.asarray(out.kills, dtype=float)
    return CohortKills(
        horizon_days=out.horizon_days,
        animals=animals,
        kills=_named([p.name for p in prey], kills),
        kills_by_group=_by_group(prey, kills),
        alive_at_horizon=out.alive_at_horizon,
        survivors=animals * out.alive_at_horizon,
        breeding_events=None if out.breeding_events is None else animals * out.breeding_events,
        median_survival_days=out.median_survival_days,
        survival_by_day=[float(v) for v in out.alive_by_day],
    )


def kills_per_year(prey: tuple[Prey, ...], grid: Grid, solution: Solution
                   ) -> tuple[dict[str, float], dict[str, float]]:
    """Long-run kills per predator per year by prey and by group, and nothing else
    (breeding currency; what the grid check compares, MODEL.md section 8). Equal to
    ``kills_per_predator_per_year`` and its ``_by_group`` of :func:`steady_state_kills`."""
    per_year = DAYS_PER_YEAR * np.asarray(kill_rates(grid, solution), dtype=float)
    return _named([p.name for p in prey], per_year), _by_group(prey, per_year)
