"""The released cohort: what the animals actually released do over a horizon.

Long-run kill rates (:mod:`riskdiet.core.chain`) describe a *place kept filled*:
every predator that dies is replaced at once. A manager plans with the animals
they release, without replacement. This module pushes the distribution of one
released animal's state forward day by day under the optimal policy, exactly
(no simulation), and reads off its expected kills within the horizon, its
survival curve and its breeding events (MODEL.md section 5).

Breeding currency: each decision step's outcomes are those of the breeding
chain, with the exact handling days h_i for energy and survival. The clock
keeps the expected duration exact: a capture step started on day t ends on day
t + 1 + floor(h_i) with probability 1 - frac(h_i) and on day t + 2 + floor(h_i)
with probability frac(h_i); other steps end on day t + 1. A kill counts on the
day its step starts; an animal that dies in a step is dead from the next day;
one that survives a long step is alive on the days in between; a breeding event
counts on the day its step ends, and the animal goes on at (round(rho n),
healthy).

Season currency: the season's own forward propagation
(:func:`riskdiet.core.season_chain.season_outlook`) over the season; no breeding events.

Many cells (map cells, scenarios, draws) are pushed forward together: their
transitions form one block-diagonal sparse matrix per step length, so each day
costs one sparse product per step length for the whole batch.

References
----------
.. [1] Caswell, H. (2001). Matrix Population Models, 2nd ed. Sinauer
   (projecting a state distribution forward with the transition matrix).
.. [2] Grinstead, C. M. & Snell, J. L. (1997). Introduction to Probability,
   2nd ed. AMS, ch. 11.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from riskdiet.core.grid import (
    Grid,
    Outcome,
    attack_probabilities,
    kill_probabilities,
    outcomes,
    stack_grids,
    targets,
)
from riskdiet.core.season_chain import SeasonOutlook, season_outlook
from riskdiet.core.solver import Solution
from riskdiet.errors import RiskdietError


@dataclass(frozen=True)
class CohortOutlook:
    """What one released animal does within the horizon (expected values).

    Attributes
    ----------
    horizon_days : int
        L, the planning horizon [day].
    kills : ndarray, shape (P,)
        Expected kills of each prey by one released animal in steps started
        on days 0..L-1 [kills].
    alive_by_day : ndarray, shape (L + 1,)
        S(t), the chance that the animal is alive on day t [probability].
    breeding_events : float or None
        Expected breeding events on days 1..L; None in the season currency.
    """

    horizon_days: int
    kills: np.ndarray
    alive_by_day: np.ndarray
    breeding_events: float | None

    @property
    def alive_at_horizon(self) -> float:
        """S(L): the chance that a released animal is alive at the horizon."""
        return float(self.alive_by_day[-1])

    @property
    def median_survival_days(self) -> int | None:
        """Smallest whole day t <= L with S(t) <= 1/2; None when none (over L days)."""
        return median_day(self.alive_by_day)


def median_day(alive_by_day: np.ndarray) -> int | None:
    """Smallest whole day t with S(t) <= 1/2, or None (MODEL.md section 5)."""
    below = np.flatnonzero(np.asarray(alive_by_day) <= 0.5)
    return int(below[0]) if below.size else None


@dataclass(frozen=True)
class CohortBatch:
    """The released cohort of every cell of a batch, per released animal.

    Attributes
    ----------
    kills : ndarray, shape (B, P)
    alive_by_day : ndarray, shape (B, L + 1)
    breeding_events : ndarray, shape (B,)
    """

    horizon_days: int
    kills: np.ndarray
    alive_by_day: np.ndarray
    breeding_events: np.ndarray

    def cell(self, b: int) -> CohortOutlook:
        return CohortOutlook(self.horizon_days, self.kills[b], self.alive_by_day[b],
                             float(self.breeding_events[b]))


def _split_by_length(parts: list[Outcome], handling: np.ndarray) -> dict[int, list[Outcome]]:
    """The step's outcomes grouped by how many whole days the step lasts (exact clock)."""
    whole = np.floor(handling)
    frac = handling - whole
    by_length: dict[int, list[Outcome]] = {}
    for o in parts:
        if not o.captured:
            by_length.setdefault(1, []).append(o)
            continue
        for extra, share in ((1, 1.0 - frac), (2, frac)):
            lengths = whole + extra
            for length in np.unique(lengths[share > 0]):
                weight = np.where((lengths == length) & (share > 0), share, 0.0)
                by_length.setdefault(int(length), []).append(
                    dataclasses.replace(o, prob=o.prob * weight[..., None, None, :]))
    return by_length


def _block_moves(grid: Grid, parts: list[Outcome]) -> tuple[sp.csr_matrix, np.ndarray]:
    """Transposed block-diagonal transitions among living states and the breeding chance.

    States of cell b are numbered b S + k m + (j - 1), S = 2m.

    Returns
    -------
    moves_t : csr_matrix, shape (B S, B S)
        Entry (target, source): the chance of moving from source to target.
    breed : ndarray, shape (B S,)
    """
    m = grid.n_living
    size = 2 * m
    batch = parts[0].prob.shape[0]
    cell = np.arange(batch)[:, None, None, None] * size
    state = (np.arange(2)[:, None] * m + np.arange(m)[None, :])[None, :, :, None]
    rows, cols, vals, b_idx, b_vals = [], [], [], [], []
    for o in parts:
        src = np.broadcast_to(cell + state, o.prob.shape)
        for level, wt in ((o.split.low, 1.0 - o.split.weight), (o.split.low + 1, o.split.weight)):
            level = np.broadcast_to(level, o.prob.shape)
            mass = o.prob * wt
            alive = (mass > 0) & (level >= 1) & (level < grid.top)
            top = (mass > 0) & (level >= grid.top)
            healthy = mass * o.healthy_share
            for cond, val in ((0, healthy), (1, mass - healthy)):
                target = np.broadcast_to(cell + cond * m + level - 1, o.prob.shape)
                keep = alive & (val > 0)
                rows.append(target[keep])
                cols.append(src[keep])
                vals.append(val[keep])
            b_idx.append(src[top])
            b_vals.append(mass[top])
    total = batch * size
    moves_t = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                            shape=(total, total))
    breed = np.bincount(np.concatenate(b_idx), np.concatenate(b_vals), minlength=total)
    return moves_t, breed


def _day_moves(grid: Grid, by_length: dict[int, list[Outcome]]
               ) -> tuple[sp.csr_matrix, np.ndarray, np.ndarray]:
    """Where a day's arrivals come from, as one matrix, breeding re-entries included.

    Parameters
    ----------
    grid : Grid
        A stacked grid, breeding currency.
    by_length : dict of int to list of Outcome
        The step's outcomes by step length (:func:`_split_by_length`).

    Returns
    -------
    inflow : csr_matrix, shape (B S, L_max B S)
        Column block L_max - L (columns (L_max - L) B S to (L_max - L + 1) B S
        - 1) holds the transposed transitions of the steps lasting L days,
        entry (target, source), with the step's breeding mass moved to the
        cell's (j_rho, healthy) state. So the mass starting a step on day t is
        this matrix times the masses of days t - L_max .. t - 1, in that order.
    breed : ndarray, shape (L_max, B S)
        Chance that a step from each state lasts L days and ends in breeding.
    outflow : ndarray, shape (L_max, B S)
        Chance that a step from each state lasts L days and is survived (the
        column sums of block L - 1).
    """
    batch, size = grid.cost.shape[0], 2 * grid.n_living
    total = batch * size
    longest = max(by_length)
    restart = np.repeat(np.arange(batch) * size + grid.after_breeding_level - 1, size)
    rows, cols, vals = [], [], []
    breed = np.zeros((longest, total))
    outflow = np.zeros((longest, total))
    for length, group in by_length.items():
        moves_t, breed[length - 1] = _block_moves(grid, group)
        moves_t = moves_t.tocoo()
        bred = np.flatnonzero(breed[length - 1])
        source = np.concatenate([moves_t.col, bred])
        value = np.concatenate([moves_t.data, breed[length - 1, bred]])
        rows.append(np.concatenate([moves_t.row, restart[bred]]))
        cols.append(source + (longest - length) * total)
        vals.append(value)
        outflow[length - 1] = np.bincount(source, value, minlength=total)
    inflow = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                           shape=(total, longest * total))
    return inflow, breed, outflow


def cohort_batch(grid: Grid, priority: np.ndarray, horizon_days: int) -> CohortBatch:
    """Forward propagation of one released animal per cell, over the planning horizon.

    Parameters
    ----------
    grid : Grid
        A stacked grid (:func:`riskdiet.core.grid.stack_grids`), breeding currency.
    priority : ndarray of int, shape (B, 2, m, P)
        The optimal ranked attack sets on living levels of each cell.
    horizon_days : int
        L [day].

    Returns
    -------
    CohortBatch

    Notes
    -----
    The mass of animals starting a step on day t, a_t over the living states,
    starts as the unit mass at (j0, healthy). Each step moves it with the
    transitions of steps of each length to day t + length [1]_; the breeding
    mass of a step re-enters at (j_rho, healthy) on its end day. The chance of
    being alive on day t adds the mass starting a step on t and the mass in
    the middle of a step it will survive.

    Each day's arrivals are one sparse product with the masses of the last
    L_max days (the transitions of all step lengths side by side, the breeding
    re-entries folded in: :func:`_day_moves`); the kills,
    breeding events and mass in transit are linear in the a_t and are read off
    the stored a_t afterwards, with a few array products over all days.
    """
    if grid.currency != "breeding":
        raise RiskdietError("cohort_batch covers the breeding currency; the season currency "
                            "uses the season propagation")
    if horizon_days < 1:
        raise RiskdietError(f"the horizon must be at least 1 day, found {horizon_days}")
    batch = grid.cost.shape[0]
    m, n_prey = grid.n_living, grid.n_prey
    size = 2 * m
    total = batch * size
    tg = targets(grid)
    attack_prob = attack_probabilities(grid.encounter_prob, np.asarray(priority, dtype=np.intp))
    parts = outcomes(grid, tg, attack_prob)
    kill = kill_probabilities(grid, attack_prob).reshape(batch, size, n_prey)
    inflow, breed, outflow = _day_moves(grid, _split_by_length(parts, grid.handling))
    longest = breed.shape[0]
    # row longest + t holds day t; the rows before day 0 stay zero
    days = np.zeros((longest + horizon_days + 1, total))
    days[longest, np.arange(batch) * size + grid.start_level - 1] = 1.0
    for row in range(longest + 1, longest + horizon_days + 1):
        days[row] = inflow @ days[row - longest: row].reshape(-1)
    arrivals = days[longest:]  # the mass starting a step on days 0..L
    started = arrivals[:horizon_days]  # ... on days 0..L-1
    kills = np.einsum("bs,bsp->bp", started.sum(0).reshape(batch, size), kill)
    breeding = np.zeros(batch)
    for length in range(1, min(longest, horizon_days) + 1):  # breeding by day L counts
        ends_in_time = arrivals[: horizon_days - length + 1].sum(0)
        breeding += (ends_in_time * breed[length - 1]).reshape(batch, size).sum(1)
    # mass in the middle of a step it survives: a step of L days started on day t is in
    # transit on days t + 1 .. t + L - 1; summed window by window (all terms >= 0, so the
    # small survival near the horizon keeps its relative precision)
    in_transit = np.zeros((horizon_days + 1, batch))
    if longest > 1:
        moved = np.einsum("tbs,lbs->ltb", started.reshape(horizon_days, batch, size),
                          outflow.reshape(longest, batch, size))
        for length in range(2, longest + 1):
            for k in range(1, length):
                in_transit[k:] += moved[length - 1, : horizon_days + 1 - k]
    alive = arrivals[: horizon_days + 1].reshape(horizon_days + 1, batch, size).sum(2)
    alive = np.clip((alive + in_transit).T, 0.0, 1.0)  # rounding only: mass never exceeds one
    if not (np.all(np.isfinite(alive)) and np.all(np.isfinite(kills))
            and np.all(np.isfinite(breeding))):
        raise RiskdietError("the released cohort's propagation produced an invalid number")
    return CohortBatch(horizon_days, kills, alive, breeding)


def released_cohort(grid: Grid, solution: Solution, horizon_days: int,
                    season: SeasonOutlook | None = None) -> CohortOutlook:
    """Forward propagation of one released animal over the planning horizon.

    Parameters
    ----------
    grid : Grid
        Discretised study.
    solution : Solution
        Its optimal policy (:func:`riskdiet.core.solver.solve_grid`).
    horizon_days : int
        L [day]; ignored in the season currency, whose horizon is the season.
    season : SeasonOutlook, optional
        Season currency: the season's propagation when already computed
        (:func:`riskdiet.core.season_chain.season_outlook` of the same grid and
        solution), so that it is not computed twice.

    Returns
    -------
    CohortOutlook
        Per released animal; multiply by the number released for the cohort.
    """
    if grid.currency == "season":
        out = season_outlook(grid, solution) if season is None else season
        return CohortOutlook(grid.season_days, np.asarray(out.expected_kills, dtype=float),
                             np.asarray(out.survival_by_day, dtype=float), None)
    single = cohort_batch(stack_grids([grid]), solution.living_priority(grid)[None],
                          horizon_days)
    return single.cell(0)
