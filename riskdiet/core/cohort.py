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
(:func:`riskdiet.core.chain.season_outlook`) over the season; no breeding events.

References
----------
.. [1] Caswell, H. (2001). Matrix Population Models, 2nd ed. Sinauer
   (projecting a state distribution forward with the transition matrix).
.. [2] Grinstead, C. M. & Snell, J. L. (1997). Introduction to Probability,
   2nd ed. AMS, ch. 11.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from riskdiet.core.chain import kill_probabilities, season_outlook
from riskdiet.core.grid import Grid, attack_probabilities, outcomes, targets
from riskdiet.core.solver import Solution, transition_matrix
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
        below = np.flatnonzero(self.alive_by_day <= 0.5)
        return int(below[0]) if below.size else None


def _moves(grid: Grid, priority: np.ndarray
           ) -> tuple[np.ndarray, list[tuple[int, sp.csr_matrix, np.ndarray]]]:
    """Kill chances and the one-step moves of the chain, grouped by step length.

    Returns
    -------
    kill : ndarray, shape (2m, P)
    moves : list of (length, transposed transitions, breeding chance)
        For each whole number of days a step can last: the transposed
        transitions among living states of steps of that length, shape
        (2m, 2m), and their chance of reaching breeding condition, shape (2m,).
    """
    tg = targets(grid)
    attack_prob = attack_probabilities(grid.encounter_prob, priority)
    parts = outcomes(grid, tg, attack_prob)
    handling = np.asarray(grid.handling, dtype=float)
    whole = np.floor(handling)
    frac = handling - whole
    by_length: dict[int, list] = {}
    for o in parts:
        if not o.captured:
            by_length.setdefault(1, []).append(o)
            continue
        for extra, share in ((1, 1.0 - frac), (2, frac)):
            for length in np.unique(whole[share > 0] + extra):
                weight = np.where((whole + extra == length) & (share > 0), share, 0.0)
                by_length.setdefault(int(length), []).append(
                    dataclasses.replace(o, prob=o.prob * weight))
    moves = []
    for length in sorted(by_length):
        matrix, breed = transition_matrix(grid, by_length[length])
        moves.append((length, matrix.T.tocsr(), breed))
    kill = kill_probabilities(grid, attack_prob).reshape(-1, grid.n_prey)
    return kill, moves


def released_cohort(grid: Grid, solution: Solution, horizon_days: int) -> CohortOutlook:
    """Forward propagation of one released animal over the planning horizon.

    Parameters
    ----------
    grid : Grid
        Discretised study.
    solution : Solution
        Its optimal policy (:func:`riskdiet.core.solver.solve_grid`).
    horizon_days : int
        L [day]; ignored in the season currency, whose horizon is the season.

    Returns
    -------
    CohortOutlook
        Per released animal; multiply by the number released for the cohort.

    Notes
    -----
    The mass of animals starting a step on day t, a_t over the living states,
    starts as the unit mass at (j0, healthy). Each step moves it with the
    transitions of steps of each length to day t + length [1]_; the breeding
    mass of a step re-enters at (j_rho, healthy) on its end day. The chance of
    being alive on day t adds the mass starting a step on t and the mass in
    the middle of a step it will survive.
    """
    if grid.currency == "season":
        out = season_outlook(grid, solution)
        return CohortOutlook(grid.season_days, np.asarray(out.expected_kills, dtype=float),
                             np.asarray(out.survival_by_day, dtype=float), None)
    if horizon_days < 1:
        raise RiskdietError(f"the horizon must be at least 1 day, found {horizon_days}")
    kill, moves = _moves(grid, solution.living_priority(grid))
    longest = max(length for length, _, _ in moves)
    size = 2 * grid.n_living
    restart = grid.after_breeding_level - 1
    arrivals = np.zeros((horizon_days + longest + 1, size))
    arrivals[0, grid.start_level - 1] = 1.0
    transit = np.zeros(horizon_days + longest + 2)  # difference array of mass mid-step
    kills = np.zeros(grid.n_prey)
    breeding = 0.0
    for t in range(horizon_days):
        mass = arrivals[t]
        if not mass.any():
            continue
        kills += mass @ kill
        for length, moves_t, breed in moves:
            end = t + length
            flow = moves_t @ mass
            bred = float(breed @ mass)
            arrivals[end] += flow
            arrivals[end, restart] += bred
            if end <= horizon_days:
                breeding += bred
            if length > 1:
                transit[t + 1] += flow.sum() + bred
                transit[end] -= flow.sum() + bred
    in_transit = np.cumsum(transit)[: horizon_days + 1]
    alive = arrivals[: horizon_days + 1].sum(1) + in_transit
    alive = np.clip(alive, 0.0, 1.0)  # rounding only: the mass can never exceed one
    if not (np.all(np.isfinite(alive)) and np.all(np.isfinite(kills)) and math.isfinite(breeding)):
        raise RiskdietError("the released cohort's propagation produced an invalid number")
    return CohortOutlook(horizon_days, kills, alive, breeding)
