"""Many season-currency studies of equal shape, solved together.

Backward induction has nothing to batch within one study, but every day's step
is the same array operation on every cell: this module runs the season's
backward induction (MODEL.md section 3) and the forward propagation of its
kills and survival (section 5) over a stacked grid
(:func:`riskdiet.core.grid.stack_grids`) at once. Each cell equals
:func:`riskdiet.core.solver.solve_season` followed by
:func:`riskdiet.core.chain.season_outlook` of its own grid.

References
----------
.. [1] Mangel, M. & Clark, C. W. (1988). Dynamic Modeling in Behavioral
   Ecology. Princeton University Press (backward induction).
.. [2] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive Behaviour.
   Cambridge University Press (forward iteration of the state distribution).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskdiet.core.choice import (
    choice_values,
    default_sets,
    keep_unless_better,
    set_values,
    step_values,
)
from riskdiet.core.grid import Grid, attack_probabilities, kill_probabilities, outcomes, targets
from riskdiet.core.solver import SUM_LIMIT
from riskdiet.errors import RiskdietError


@dataclass(frozen=True)
class SeasonBatch:
    """Per-cell results of a batch of season-currency studies.

    Attributes
    ----------
    fitness_at_start : ndarray, shape (B,)
        V_0(j0, healthy) [probability].
    marginal_hunting_ability : ndarray, shape (B,)
        dV_0(j0, healthy)/da with every day's policy held fixed.
    priority : ndarray of int8, shape (B, 2, m, P)
        The day-0 policy on living levels.
    expected_kills : ndarray, shape (B, P)
        Expected kills of each prey per predator over the season.
    survival_by_day : ndarray, shape (B, T + 1)
        P(alive on day t).
    chance_above_threshold : ndarray, shape (B,)
        P(alive on day T in condition); equals ``fitness_at_start``.
    failures : tuple of (str or None)
        Per cell: None, or why its numbers cannot be vouched for.
    """

    fitness_at_start: np.ndarray
    marginal_hunting_ability: np.ndarray
    priority: np.ndarray
    expected_kills: np.ndarray
    survival_by_day: np.ndarray
    chance_above_threshold: np.ndarray
    failures: tuple[str | None, ...]


def _index(values: np.ndarray, days: np.ndarray) -> np.ndarray:
    """values[days[b, i], b] for every cell b and prey i: shape (B, P, ...)."""
    cells = np.arange(values.shape[1])[:, None]
    return values[days, cells]


def solve_season_batch(grid: Grid) -> SeasonBatch:
    """Backward induction and forward propagation of a batch of season studies.

    Parameters
    ----------
    grid : Grid
        A stacked grid, season currency.

    Returns
    -------
    SeasonBatch
    """
    if grid.currency != "season":
        raise RiskdietError("solve_season_batch needs the season currency")
    batch = grid.cost.shape[0]
    days, n, n_prey, m = grid.season_days, grid.n, grid.n_prey, grid.n_living
    tg = targets(grid)
    terminal = (np.arange(n + 1)[None, :] >= grid.terminal_level[:, None]).astype(float)
    values = np.zeros((days + 1, batch, 2, n + 1))
    values[days] = terminal[:, None, :]
    comps = np.ones((days + 1, batch, 2, n + 1))
    comps[days] = 1.0 - terminal[:, None, :]
    slopes = np.zeros_like(values)
    priority = np.full((days, batch, 2, m, n_prey), -1, dtype=np.int8)
    alive = (1.0 - grid.mortality)[..., :, None]
    skill = grid.capture_slope[..., :, None, :]
    handling = grid.handling.astype(np.intp)
    default = default_sets(grid, tg)
    for t in range(days - 1, -1, -1):
        cap_day = np.minimum(t + 1 + handling, days)
        cv = choice_values(grid, tg, values[t + 1], comps[t + 1], _index(values, cap_day),
                           _index(comps, cap_day))
        ranks, _ = keep_unless_better(grid, cv, default)
        v, u, attack_prob = set_values(grid, cv, ranks)
        priority[t] = ranks
        values[t, :, :, 1:] = v
        comps[t, :, :, 1:] = u
        d_ignore, d_attack_lin, _ = step_values(grid, tg, slopes[t + 1], _index(slopes, cap_day))
        d_total = d_attack_lin + cv.d_attack * skill
        slopes[t, :, :, 1:] = alive * (d_ignore + (attack_prob * (d_total - d_ignore[..., None]))
                                       .sum(-1))
    start = grid.start_level
    cells = np.arange(batch)
    v0 = values[0, cells, 0, start]
    failures: list[str | None] = [None] * batch
    worst = np.abs(values[0, :, :, 1:] + comps[0, :, :, 1:] - 1.0).reshape(batch, -1).max(1)
    for b in np.flatnonzero(~np.isfinite(worst) | (worst > SUM_LIMIT)):
        failures[b] = (f"the season's values are inexact (a chance and its complement differ "
                       f"from 1 by {worst[b]:.1e})")
    kills, survival, above = _forward(grid, tg, priority)
    return SeasonBatch(v0, slopes[0, cells, 0, start], priority[0], kills, survival, above,
                       tuple(failures))


def _forward(grid: Grid, tg, priority: np.ndarray
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Expected kills, survival by day and the end-of-season chance of being in condition.

    The conventions of :func:`riskdiet.core.chain.season_outlook`: a step started on day
    t ends on day min(t + 1 + H_i, T); an animal in the middle of a step it survives
    counts as alive; kills count on the start day.
    """
    batch = grid.cost.shape[0]
    days, m, n_prey = grid.season_days, grid.n_living, grid.n_prey
    size = 2 * m
    total = batch * size
    offset = (np.arange(batch) * size)[:, None, None, None]
    handling = grid.handling.astype(np.intp)
    arrivals = np.zeros((days + 1, total))
    arrivals[0, np.arange(batch) * size + grid.start_level - 1] = 1.0
    transit = np.zeros((days + 2, batch))
    kills = np.zeros((batch, n_prey))
    cell_of = np.repeat(np.arange(batch), size)
    width = int(handling.max(initial=0)) + 1  # days ahead a step can end
    for t in range(days):
        mass = arrivals[t]
        if not mass.any():
            continue
        attack_prob = attack_probabilities(grid.encounter_prob, priority[t].astype(np.intp))
        kill = kill_probabilities(grid, attack_prob)
        source = mass.reshape(batch, 2, m)[..., None]
        kills += (source * kill).sum((1, 2))
        where, weight = [], []
        for o in outcomes(grid, tg, attack_prob):
            if o.captured:
                ahead = np.minimum(t + 1 + handling, days)[:, None, None, :] - (t + 1)
            else:
                ahead = np.zeros((batch, 1, 1, 1), dtype=np.intp)
            ahead = np.broadcast_to(ahead, o.prob.shape)
            flow = source * o.prob
            for level, wt in ((o.split.low, 1.0 - o.split.weight),
                              (o.split.low + 1, o.split.weight)):
                level = np.broadcast_to(level, o.prob.shape)
                mass_to = flow * wt
                living = (mass_to > 0) & (level >= 1)
                healthy = mass_to * o.healthy_share
                for cond, val in ((0, healthy), (1, mass_to - healthy)):
                    keep = living & (val > 0)
                    target = np.broadcast_to(offset + cond * m + level - 1, o.prob.shape)
                    where.append(ahead[keep] * total + target[keep])
                    weight.append(val[keep])
        where_all, weight_all = np.concatenate(where), np.concatenate(weight)
        span = min(width, days - t)
        landed = np.bincount(where_all, weight_all, minlength=span * total)
        arrivals[t + 1:t + 1 + span] += landed.reshape(span, total)
        # mass in the middle of a step it survives is alive on the days in between
        moved = landed.reshape(span, batch, size).sum(2)
        for k in range(1, span):
            transit[t + 1] += moved[k]
            transit[t + 1 + k] -= moved[k]
    in_transit = np.cumsum(transit, axis=0)[: days + 1]
    alive = np.zeros((days + 1, batch))
    for t in range(days + 1):
        alive[t] = np.bincount(cell_of, arrivals[t], minlength=batch)
    survival = np.clip(alive + in_transit, 0.0, 1.0).T
    levels = np.tile(np.arange(1, m + 1), 2)
    good = levels[None, :] >= grid.terminal_level[:, None]
    above = (arrivals[days].reshape(batch, size) * good).sum(1)
    return kills, survival, above
