"""Many season-currency studies of equal shape, solved together.

Backward induction has nothing to batch within one study, but every day's step
is the same array operation on every cell: this module runs the season's
backward induction (MODEL.md section 3) and the forward propagation of its
kills and survival (section 5) over a stacked grid
(:func:`riskdiet.core.grid.stack_grids`) at once. Each cell equals
:func:`riskdiet.core.solver.solve_season` followed by
:func:`riskdiet.core.season_chain.season_outlook` of its own grid to rounding: the
same choice values, the same comparison rule and default sets, the same
policies, only arranged for speed:

* a day's choice values (G, A_i on V and on U, dA_i/da) are one product of a
  sparse matrix, built once per batch (:mod:`riskdiet.core.season_plan`), with
  the values of the next days, stored by (day, cell, quantity, condition,
  level); days from the end of the season on hold the terminal values, so a
  capture step ending on or after day T needs no clipping of the day;
* the greedy set is ranked by pairwise comparisons
  (:mod:`riskdiet.core.ranked_sets`) and its attack probabilities are looked
  up in a table of every ranked set, computed once per cell;
* the default set's attack probabilities are computed once, and the values of
  the chosen set are those of the greedy or the default set already computed;
* the forward propagation is one product per day of a fixed sparse matrix
  with the day's outcome masses.

Multiplying the step out changes the rounding (values agree with single
solves to about 1e-15 relative), never the rule of MODEL.md section 3.

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

from riskdiet.core.choice import better, better_by, default_sets
from riskdiet.core.grid import Grid, Targets, take_cells, targets
from riskdiet.core.ranked_sets import SetKeys, ranks_prey_first
from riskdiet.core.season_plan import QUANTITIES, S, U, V, backward_step, forward_moves
from riskdiet.core.solver import SUM_LIMIT
from riskdiet.errors import RiskdietError

CHUNK = 64
"""Cells per pass, at most (fewer when a long season on many levels would make the
stored values of a pass larger than ``STORE_BYTES``)."""

STORE_BYTES = 64 * 2 ** 20
"""Memory for the stored values (3 quantities by day, condition and level) of one pass."""


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


def solve_season_batch(grid: Grid, chunk: int = CHUNK) -> SeasonBatch:
    """Backward induction and forward propagation of a batch of season studies.

    Parameters
    ----------
    grid : Grid
        A stacked grid, season currency.
    chunk : int
        Cells solved in one pass, at most (results do not depend on it).

    Returns
    -------
    SeasonBatch
    """
    if grid.currency != "season":
        raise RiskdietError("solve_season_batch needs the season currency")
    batch = grid.cost.shape[0]
    ahead = int(np.minimum(grid.handling, grid.season_days).max(initial=0))
    per_cell = (grid.season_days + 1 + ahead) * 3 * 2 * (grid.n + 1) * 8
    chunk = max(1, min(chunk, STORE_BYTES // per_cell))
    parts = [_solve_chunk(take_cells(grid, np.arange(lo, min(lo + chunk, batch))))
             for lo in range(0, batch, chunk)]
    return SeasonBatch(*(np.concatenate([getattr(p, name) for p in parts])
                         for name in ("fitness_at_start", "marginal_hunting_ability",
                                      "priority", "expected_kills", "survival_by_day",
                                      "chance_above_threshold")),
                       tuple(f for p in parts for f in p.failures))


def _solve_chunk(grid: Grid) -> SeasonBatch:
    batch = grid.cost.shape[0]
    days, n, m = grid.season_days, grid.n, grid.n_living
    levels = n + 1
    tg = targets(grid)
    handling = np.minimum(grid.handling, days).astype(np.intp)
    ahead = int(handling.max(initial=0))
    store = np.zeros((days + 1 + ahead, batch, QUANTITIES, 2, levels))
    store[:, :, U] = 1.0
    terminal = (np.arange(levels)[None, :] >= grid.terminal_level[:, None]).astype(float)
    store[days:, :, V] = terminal[:, None, :]
    store[days:, :, U] = 1.0 - terminal[:, None, :]
    flat = store.reshape(-1)
    day_size = batch * QUANTITIES * 2 * levels
    window = (ahead + 1) * day_size
    step = backward_step(grid, tg, handling, ahead)
    cut = np.cumsum(step.sizes)[:-1]
    n_prey = grid.n_prey
    mu = grid.mortality[..., :, None]
    alive = 1.0 - mu

    policies = SetKeys(grid.encounter_prob)
    default = policies.key(np.ascontiguousarray(np.moveaxis(default_sets(grid, tg), -1, 0)
                                                .astype(np.int8)))
    p_default = policies.attack_probabilities(default)
    keys = np.empty((days, *default.shape), dtype=default.dtype)
    for t in range(days - 1, -1, -1):
        start = (t + 1) * day_size
        out = step.matrix @ flat[start:start + window]
        ignore, av, au, d_total = np.split(out, cut)
        ignore = ignore.reshape(batch, QUANTITIES, 2, m)
        av = av.reshape(n_prey, batch, 2, m)
        au = au.reshape(n_prey, batch, 2, m) + step.u_constant
        d_total = d_total.reshape(n_prey, batch, 2, m)
        gv, gu = ignore[:, V], ignore[:, U]

        # choice.better(A, G), with the differences kept for the set values below
        dv = av - gv
        du = au - gu
        upper = av > 0.5
        worth = better_by(dv, du, av, au, gv, gu)
        greedy = policies.key(ranks_prey_first(worth, upper, np.where(upper, au, -av)))
        p_greedy = policies.attack_probabilities(greedy)
        g_v = alive * (gv + (p_greedy * dv).sum(0))
        g_u = mu + alive * (gu + (p_greedy * du).sum(0))
        i_v = alive * (gv + (p_default * dv).sum(0))
        i_u = mu + alive * (gu + (p_default * du).sum(0))
        switched = better(g_v, g_u, i_v, i_u) & policies.differ(greedy, default)
        keys[t] = np.where(switched, greedy, default)
        prob = np.where(switched, p_greedy, p_default)
        today = store[t]
        today[:, V, :, 1:] = np.where(switched, g_v, i_v)
        today[:, U, :, 1:] = np.where(switched, g_u, i_u)
        d_ignore = ignore[:, S]
        today[:, S, :, 1:] = alive * (d_ignore + (prob * (d_total - d_ignore)).sum(0))

    start = grid.start_level
    cells = np.arange(batch)
    v0 = store[0, cells, V, 0, start]
    failures: list[str | None] = [None] * batch
    worst = np.abs(store[0, :, V, :, 1:] + store[0, :, U, :, 1:] - 1.0).reshape(batch, -1)
    worst = worst.max(1)
    for b in np.flatnonzero(~np.isfinite(worst) | (worst > SUM_LIMIT)):
        failures[b] = (f"the season's values are inexact (a chance and its complement differ "
                       f"from 1 by {worst[b]:.1e})")
    kills, survival, above = _forward(grid, tg, policies, keys, handling)
    priority = policies.ranks(keys[0]).astype(np.int8)
    return SeasonBatch(v0, store[0, cells, S, 0, start], priority, kills, survival, above,
                       tuple(failures))


def _forward(grid: Grid, tg: Targets, policies: SetKeys, keys: np.ndarray,
             handling: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Expected kills, survival by day and the end-of-season chance of being in condition.

    The conventions of :func:`riskdiet.core.season_chain.season_outlook`: a step started on day
    t ends on day min(t + 1 + H_i, T); an animal in the middle of a step it survives
    counts as alive; kills count on the start day. Arrivals are kept by day, level 0
    (death) included, on days up to T + max H_i; those on or after day T are the
    end of the season.
    """
    batch = grid.cost.shape[0]
    days, m, n_prey = grid.season_days, grid.n_living, grid.n_prey
    levels = grid.n + 1
    ahead = int(handling.max(initial=0))
    span = ahead + 1
    arrivals = np.zeros((days + 1 + ahead, batch, 2, levels))
    arrivals[0, np.arange(batch), 0, grid.start_level] = 1.0
    transit = np.zeros((days + 2 + ahead, batch))
    attacks = np.zeros((n_prey, batch, 2, m))  # expected attacks by start state

    moves = forward_moves(grid, tg, handling, ahead)
    n_quiet, n_cap = batch * 2 * m, batch * 2 * m * n_prey
    flows = np.empty(n_quiet + 2 * n_cap)
    f_quiet = flows[:n_quiet].reshape(batch, 2, m)
    f_cap = flows[n_quiet:n_quiet + n_cap].reshape(n_prey, batch, 2, m)
    f_inj = flows[n_quiet + n_cap:].reshape(n_prey, batch, 2, m)

    # chances per attack, prey first: (P, B, 2, 1)
    alive3 = (1.0 - grid.mortality)[:, :, None]
    alive = alive3[None]
    f4 = grid.fatality.T[:, :, None, None]
    s4 = np.moveaxis(grid.capture, -1, 0)[..., None]
    q4 = grid.injury_chance.T[:, :, None, None]
    kill_c = alive * (1.0 - f4) * s4
    # an attack leaves a quiet day unless it kills, injures or captures
    not_quiet = 1.0 - (1.0 - f4) * (1.0 - s4) * (1.0 - q4)
    capture_c = kill_c * np.moveaxis(tg.survive_handling, -1, 0)[..., None]
    injury_c = alive * (1.0 - f4) * (1.0 - s4) * q4
    for t in range(days):
        mass = arrivals[t, :, :, 1:]
        if not mass.any():
            continue
        prob = policies.attack_probabilities(keys[t])
        attacked = mass * prob
        attacks += attacked
        f_quiet[...] = mass * alive3 * (1.0 - (prob * not_quiet).sum(0))
        np.multiply(attacked, capture_c, out=f_cap)
        np.multiply(attacked, injury_c, out=f_inj)
        landed = (moves @ flows).reshape(span, batch, 2, levels)
        arrivals[t + 1:t + 1 + span] += landed
        if ahead:
            # mass in the middle of a step it survives is alive on the days in between
            moved = landed[1:].sum((2, 3))
            transit[t + 1] += moved.sum(0)
            transit[t + 2:t + 2 + ahead] -= moved
    kills = (attacks * kill_c).sum((2, 3)).T
    in_transit = np.cumsum(transit, axis=0)[:days]
    alive_by_day = np.empty((days + 1, batch))
    alive_by_day[:days] = arrivals[:days, :, :, 1:].sum((2, 3)) + in_transit
    final = arrivals[days:, :, :, 1:].sum(0)
    alive_by_day[days] = final.sum((1, 2))
    survival = np.clip(alive_by_day, 0.0, 1.0).T
    good = np.arange(1, m + 1)[None, :] >= grid.terminal_level[:, None]
    above = (final * good[:, None, :]).sum((1, 2))
    return kills, survival, above
