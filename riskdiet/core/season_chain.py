"""What a newcomer kills over a season: the season-currency chain pushed forward day by day
(MODEL.md section 5).

The distribution of states is pushed forward from (j0, healthy) under the policy of each day
of :func:`riskdiet.core.solver.solve_season`; its transitions come from
:func:`riskdiet.core.grid.outcomes` and :func:`riskdiet.core.solver.transition_matrix`, the
same code the solver uses, so the outlook and the fitness describe one process.

References
----------
.. [1] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive Behaviour:
   An Approach Based on State. Cambridge University Press (forward iteration of the state
   distribution).
.. [2] Mangel, M. & Clark, C. W. (1988). Dynamic Modeling in Behavioral Ecology. Princeton
   University Press.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from riskdiet.core.grid import (
    Grid,
    Targets,
    attack_probabilities,
    kill_probabilities,
    outcomes,
    targets,
)
from riskdiet.core.solver import Solution, transition_matrix
from riskdiet.errors import RiskdietError


@dataclass(frozen=True)
class SeasonOutlook:
    """What a newcomer kills over the season and how it fares.

    Conventions: every predator starts at (j0, healthy) on day 0. A step
    started on day t < T lasts 1 day, or 1 + H_i days after a capture of prey
    i, and ends on day min(t + 1 + H_i, T); a step that would end after T is
    judged at T with the reserves and survival of the whole step, as the
    solver's terminal value is (MODEL.md section 3). A predator that dies in
    a step (of any cause: background or handling mortality, an attack, or
    starvation at the end of the step) is dead from the day after the step
    began. One in the middle of a handling step that it will survive counts as
    alive on the days in between, at the reserve level it will end the step
    with.

    Attributes
    ----------
    expected_kills : ndarray, shape (P,)
        Expected kills of each prey per predator over the season (a kill
        started on a day t < T counts, at capture).
    survival_to_end : float
        P(alive on day T).
    chance_above_threshold : float
        P(alive on day T with level >= ``grid.terminal_level``), interpolation
        weights included; equals the season fitness V_0(j0, healthy).
    survival_by_day : ndarray, shape (T + 1,)
        P(alive on day t), t = 0..T.
    mean_reserves_by_day : ndarray, shape (T + 1,)
        Mean reserve level of the living on day t [levels]; NaN when none is alive.
    kills_by_day : ndarray, shape (T, P)
        Expected kills started on day t.
    """

    expected_kills: np.ndarray
    survival_to_end: float
    chance_above_threshold: float
    survival_by_day: np.ndarray
    mean_reserves_by_day: np.ndarray
    kills_by_day: np.ndarray


def _moves_by_length(grid: Grid, tg: Targets, priority: np.ndarray
                     ) -> tuple[np.ndarray, list[tuple[int, sp.csr_matrix]]]:
    """Kill chances and the transposed transitions of one day, by step length."""
    attack_prob = attack_probabilities(grid.encounter_prob, priority)
    parts = outcomes(grid, tg, attack_prob)
    lengths = np.unique(np.concatenate([o.days for o in parts]))
    moves = []
    for length in lengths:
        pieces = [dataclasses.replace(o, prob=o.prob * (o.days == length)) for o in parts
                  if np.any(o.days == length)]
        matrix, _ = transition_matrix(grid, pieces)
        moves.append((round(float(length)), matrix.T.tocsr()))
    return kill_probabilities(grid, attack_prob).reshape(-1, grid.n_prey), moves


def season_outlook(grid: Grid, solution: Solution) -> SeasonOutlook:
    """Forward propagation of the season-currency chain from (j0, healthy).

    Parameters
    ----------
    grid : Grid
        Discretised study, season currency.
    solution : Solution
        Its day-by-day policy (:func:`riskdiet.core.solver.solve_season`).

    Returns
    -------
    SeasonOutlook

    Notes
    -----
    The distribution of predators at decision points, a_t over the living
    states, starts as the unit mass at (j0, healthy). The mass of day t moves
    with the transitions of the day-t policy to day t + 1 (one-day steps) or
    min(t + 1 + H_i, T) (captures), so a_T F is the dual of the solver's
    backward induction and reproduces V_0(j0, healthy) [4]_.

    References
    ----------
    .. [4] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive
       Behaviour. Cambridge University Press.
    """
    if grid.currency != "season" or solution.priority_by_day is None:
        raise RiskdietError("season_outlook needs the season currency and its day-by-day "
                            f"policy, found currency {grid.currency!r}")
    days, m, n_prey = grid.season_days, grid.n_living, grid.n_prey
    tg = targets(grid)
    levels = np.tile(grid.living, 2).astype(float)
    arrivals = np.zeros((days + 1, 2 * m))
    arrivals[0, grid.start_level - 1] = 1.0
    # in-transit mass and level sums as difference arrays over days
    transit = np.zeros((2, days + 1))
    kills_by_day = np.zeros((days, n_prey))
    policy = None
    for t in range(days):
        today = solution.living_priority(grid, t)
        if policy is None or not np.array_equal(today, policy):
            policy = today
            kill, moves = _moves_by_length(grid, tg, today)
        mass = arrivals[t]
        if not mass.any():
            continue
        kills_by_day[t] = mass @ kill
        for length, moves_t in moves:
            flow = moves_t @ mass
            end = min(t + length, days)
            arrivals[end] += flow
            if end > t + 1:
                carried = np.array([flow.sum(), flow @ levels])
                transit[:, t + 1] += carried
                transit[:, end] -= carried
    transit = np.cumsum(transit, axis=1)
    alive = arrivals.sum(1) + transit[0]
    level_sum = arrivals @ levels + transit[1]
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_levels = np.where(alive > 0, level_sum / np.where(alive > 0, alive, 1.0), np.nan)
    final = arrivals[days]
    return SeasonOutlook(
        expected_kills=kills_by_day.sum(0),
        survival_to_end=float(final.sum()),
        chance_above_threshold=float(final @ (levels >= grid.terminal_level)),
        survival_by_day=alive,
        mean_reserves_by_day=mean_levels,
        kills_by_day=kills_by_day,
    )
