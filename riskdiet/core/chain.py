"""What the predator kills: the Markov chain under the optimal policy (MODEL.md section 5).

The optimal policy of :mod:`riskdiet.core.solver` turns the day's process into a
Markov chain on the living states (level, condition). This module reads kill
rates, survival and lifetimes off that chain exactly (linear solves, no
simulation):

* breeding currency: the long-run state of a lineage in which a death is
  replaced by a newcomer at (j0, healthy) and a breeding event continues at
  (round(rho n), healthy), plus the fundamental-matrix quantities of one
  newcomer's life (:func:`steady_state`);
* season currency: see :mod:`riskdiet.core.season_chain`.

The transitions themselves come from :func:`riskdiet.core.grid.outcomes` and
:func:`riskdiet.core.solver.transition_matrix`, the same code the solver uses, so
the chain and the fitness values describe one process. Only the split of the
deaths into causes and the kill counts are computed here.

States are ordered condition-major, index k m + (j - 1), as in
:func:`riskdiet.core.solver.transition_matrix`.

References
----------
.. [1] Kemeny, J. G. & Snell, J. L. (1960). Finite Markov Chains. Van
   Nostrand (absorbing chains, the fundamental matrix).
.. [2] Grinstead, C. M. & Snell, J. L. (1997). Introduction to Probability,
   2nd ed. American Mathematical Society, ch. 11.
.. [3] Ross, S. M. (1996). Stochastic Processes, 2nd ed. Wiley, ch. 3
   (renewal-reward processes).
.. [4] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive Behaviour:
   An Approach Based on State. Cambridge University Press.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import breadth_first_order
from scipy.sparse.linalg import splu

from riskdiet.core.grid import (
    Grid,
    Outcome,
    Targets,
    attack_probabilities,
    death_chances,
    kill_probabilities,
    outcomes,
    targets,
)
from riskdiet.core.solver import LinearSolve, Solution, transition_matrix
from riskdiet.errors import RiskdietError

DEATH_CAUSES = ("starvation", "attack", "other")
"""Order of the death causes in :attr:`ChainStep.deaths`."""

NEVER_DIES = 1e-9
"""U(j_rho, healthy) below this: the animal practically never dies (MODEL.md section 5)."""

NEVER_DIES_NOTE = ("the animal practically never dies (its chance of dying before the next "
                   "breeding event is below 1e-9), so a lifetime and the breeding events of "
                   "one life are unbounded; long-run rates are those of the cycle between "
                   "breeding events")

NEGATIVE_TOLERANCE = 1e-9
"""Largest negative expected visit count (relative to the largest) put down to rounding."""


# ---------------------------------------------------------------------------
# one step of the chain


@dataclass(frozen=True)
class ChainStep:
    """One decision step under a fixed policy, from every living state.

    Attributes
    ----------
    transitions : csr_matrix, shape (2m, 2m)
        Transition probabilities between living states.
    breed : ndarray, shape (2m,)
        Chance of reaching breeding condition in the step (breeding currency).
    deaths : ndarray, shape (3, 2m)
        Chance of dying in the step of starvation (reserves reaching level 0,
        including the interpolation weight on level 0), of an attack (f_i) and
        of other causes (background mortality at the start of the step and
        during handling, the injured extra mortality included).
    kill_prob : ndarray, shape (2m, P)
        P(kill i | s): the step starts with a capture of prey i. A kill counts
        at capture, before the handling days are survived.
    days : ndarray, shape (2m,)
        Expected length of the step, E[days | s] = 1 + sum_i P(kill i | s) h_i
        [day].

    Notes
    -----
    For every state, transitions (row sum) + breed + the three death causes
    add up to 1.
    """

    transitions: sp.csr_matrix
    breed: np.ndarray
    deaths: np.ndarray
    kill_prob: np.ndarray
    days: np.ndarray


def death_probabilities(grid: Grid, tg: Targets, attack_prob: np.ndarray,
                        parts: list[Outcome]) -> np.ndarray:
    """Chance of dying in one step, by cause, from every living state.

    Parameters
    ----------
    grid : Grid
    tg : Targets
        Outcome reserves of the grid.
    attack_prob : ndarray, shape (2, m, P)
        P_i under the policy.
    parts : list of Outcome
        The step's outcomes under the same policy (:func:`riskdiet.core.grid.outcomes`).

    Returns
    -------
    ndarray, shape (3, 2, m)
        Starvation (outcome mass landing on level 0), attack
        ((1 - mu_k) sum_i P_i f_i) and other causes
        (mu_k + (1 - mu_k) sum_i P_i (1 - f_i) s_i^k (1 - (1 - mu_k)^h_i)).
    """
    return death_chances(grid, tg, attack_prob, parts)


def chain_step(grid: Grid, priority: np.ndarray, tg: Targets | None = None) -> ChainStep:
    """The chain's step under a ranked attack policy.

    Parameters
    ----------
    grid : Grid
    priority : ndarray of int, shape (2, m, P)
        Rank of each prey in the attack set at each living state, -1 if
        ignored (:meth:`riskdiet.core.solver.Solution.living_priority`).
    tg : Targets, optional
        Outcome reserves, when already computed.

    Returns
    -------
    ChainStep
    """
    tg = targets(grid) if tg is None else tg
    attack_prob = attack_probabilities(grid.encounter_prob, priority)
    parts = outcomes(grid, tg, attack_prob)
    matrix, breed = transition_matrix(grid, parts)
    kill = kill_probabilities(grid, attack_prob).reshape(-1, grid.n_prey)
    deaths = death_probabilities(grid, tg, attack_prob, parts).reshape(3, -1)
    return ChainStep(matrix, breed, deaths, kill, 1.0 + kill @ grid.handling)


# ---------------------------------------------------------------------------
# absorbing chains


@dataclass(frozen=True)
class AbsorbingSummary:
    """Fundamental-matrix quantities of an absorbing Markov chain.

    Attributes
    ----------
    visits : ndarray, shape (t,) or (t, t)
        Expected visits to each transient state: the start's row of
        N = (I - Q)^-1, or all of N when no start was given.
    time : float or ndarray, shape (t,)
        Expected time to absorption, N d (d = time per visit; steps when d = 1).
    absorption : ndarray, shape (r,) or (t, r)
        Absorption probabilities B = N R.
    """

    visits: np.ndarray
    time: float | np.ndarray
    absorption: np.ndarray


def absorbing_summary(transient: sp.spmatrix | np.ndarray, absorbing: np.ndarray,
                      start: int | None = None, duration: np.ndarray | None = None
                      ) -> AbsorbingSummary:
    """Expected visits, time to absorption and absorption probabilities.

    Parameters
    ----------
    transient : sparse matrix or ndarray, shape (t, t)
        Q, transitions among transient states.
    absorbing : ndarray, shape (t, r)
        R, transitions from transient to absorbing states.
    start : int, optional
        Starting state. When given, only its row of N is computed, by one
        sparse solve of (I - Q)^T x = e_start; otherwise N is formed in full
        (small chains only).
    duration : ndarray, shape (t,), optional
        Time spent per visit to each state (default 1: time counts steps).

    Returns
    -------
    AbsorbingSummary

    Notes
    -----
    N = (I - Q)^-1 holds the expected visits, t = N 1 the expected steps before
    absorption and B = N R the absorption probabilities [1]_, [2]_. Q must be
    transient (every state reaches absorption); see :func:`always_absorbed`.

    References
    ----------
    .. [1] Kemeny, J. G. & Snell, J. L. (1960). Finite Markov Chains. Van
       Nostrand, ch. III.
    .. [2] Grinstead, C. M. & Snell, J. L. (1997). Introduction to
       Probability, 2nd ed. AMS, ch. 11, section 11.2.
    """
    q = sp.csr_matrix(transient, dtype=float)
    size = q.shape[0]
    r = np.asarray(absorbing, dtype=float).reshape(size, -1)
    d = np.ones(size) if duration is None else np.asarray(duration, dtype=float)
    system = sp.identity(size, format="csr") - q
    if start is None:
        fundamental = splu(system.tocsc()).solve(np.eye(size))
        return AbsorbingSummary(fundamental, fundamental @ d, fundamental @ r)
    unit = np.zeros(size)
    unit[start] = 1.0
    row = LinearSolve(system.T.tocsr())(unit)
    return AbsorbingSummary(row, float(row @ d), row @ r)


def always_absorbed(transient: sp.spmatrix, exits: np.ndarray, start: int) -> bool:
    """Whether every state reachable from ``start`` can still reach an exit.

    Parameters
    ----------
    transient : sparse matrix, shape (t, t)
        Q; only which entries are positive matters.
    exits : ndarray, shape (t,)
        Chance of leaving to the absorbing states from each state.
    start : int
        Starting state.

    Returns
    -------
    bool
        True when absorption is certain from ``start`` (the restriction of Q to
        the states reachable from it is transient, so I - Q is invertible
        there); False when the chain can stay among transient states forever.
        Decided on the graph of positive entries, so a tiny but positive exit
        chance still counts as an exit.
    """
    graph = sp.csr_matrix(transient, dtype=float)
    graph.data = (graph.data > 0).astype(float)
    graph.eliminate_zeros()
    size = graph.shape[0]
    ahead = breadth_first_order(graph, start, directed=True, return_predecessors=False)
    # search backwards from a sink linked to every exit state
    back = graph.T.tocoo()
    out = np.flatnonzero(np.asarray(exits) > 0)
    rows = np.concatenate([back.row, np.full(out.size, size)])
    cols = np.concatenate([back.col, out])
    reverse = sp.csr_matrix((np.ones(rows.size), (rows, cols)), shape=(size + 1, size + 1))
    behind = breadth_first_order(reverse, size, directed=True, return_predecessors=False)
    reaches_exit = np.zeros(size + 1, dtype=bool)
    reaches_exit[behind] = True
    return bool(reaches_exit[ahead].all())


def _distribution(visits: np.ndarray) -> np.ndarray:
    """Normalise expected visits into a distribution, checking their sign."""
    top = float(visits.max())
    if not np.all(np.isfinite(visits)) or top <= 0 or visits.min() < -NEGATIVE_TOLERANCE * top:
        raise RiskdietError("the chain's expected visits are not a valid distribution "
                            f"(smallest {visits.min():.3g}, largest {top:.3g}); the linear "
                            "solve has failed")
    pi = np.clip(visits, 0.0, None)
    return pi / pi.sum()


# ---------------------------------------------------------------------------
# breeding currency


@dataclass(frozen=True)
class SteadyState:
    """Long-run kills and life history under the breeding-currency policy.

    Long-run quantities refer to a lineage: a death is replaced by a newcomer
    at (j0, healthy) and a breeding event continues at (j_rho, healthy),
    j_rho = round(rho n) clipped to the living levels. Time averages weight
    each decision step by its expected length E[days | s]; the condition and
    reserves at the start of a step count for the whole step.

    Attributes
    ----------
    kills_per_day : ndarray, shape (P,)
        K_i = sum pi P(kill i | .) / sum pi E[days | .], kills of each prey per
        predator per day [1/day].
    share_of_time_injured : float
        Share of days spent injured.
    mean_reserves_levels : float
        Time-weighted mean reserve level [levels].
    daily_survival : float
        1 - deaths per predator-day, i.e. 1 - (sum pi P(death | .)) /
        (sum pi E[days | .]).
    expected_lifetime_days : float
        Expected days lived by a newcomer at (j0, healthy), breeding events
        continuing at (j_rho, healthy): N row of the start times E[days | s];
        the step in which it dies counts in full. ``math.inf`` when it
        practically never dies (U(j_rho, healthy) < 1e-9, MODEL.md section 5).
    expected_breeding_events : float
        Expected breeding events over a newcomer's life (``math.inf`` as above).
    lifetime_note : str or None
        Why the lifetime is unbounded, when it is.
    first_breeding_probability : float
        Chance that a newcomer reaches breeding condition before dying; equals
        the breeding-currency fitness V(j0, healthy).
    death_before_breeding : dict of str to float
        Chance that a newcomer dies of ``starvation``, an ``attack`` or
        ``other`` causes before its first breeding; the three and
        ``first_breeding_probability`` add up to 1.
    stationary : ndarray, shape (2, m)
        Stationary distribution pi per decision step over living states.
    kill_prob : ndarray, shape (2, m, P)
        P(kill i | s).
    days_per_step : ndarray, shape (2, m)
        E[days | s] [day].
    """

    kills_per_day: np.ndarray
    share_of_time_injured: float
    mean_reserves_levels: float
    daily_survival: float
    expected_lifetime_days: float
    expected_breeding_events: float
    first_breeding_probability: float
    death_before_breeding: dict[str, float]
    stationary: np.ndarray
    kill_prob: np.ndarray
    days_per_step: np.ndarray
    lifetime_note: str | None = None


def _solver_step(grid: Grid, solution: Solution) -> ChainStep | None:
    """The policy solve's own chain step, when the solution is this grid's and its
    policy has not been replaced since (None otherwise: build it with :func:`chain_step`)."""
    kept = solution.step
    if (kept is None or kept.grid is not grid or solution.linear is None
            or not np.array_equal(solution.living_priority(grid), kept.priority)):
        return None
    kill = kill_probabilities(grid, kept.attack_prob).reshape(-1, grid.n_prey)
    return ChainStep(kept.transitions, kept.breed, kept.deaths, kill, 1.0 + kill @ grid.handling)


def _step_and_system(grid: Grid, solution: Solution) -> tuple[ChainStep, bool]:
    """The chain's step under the solution's policy, and whether the solution's linear
    solver holds exactly its I - P (always when the step is the solver's own)."""
    step = _solver_step(grid, solution)
    if step is not None:
        return step, True
    step = chain_step(grid, solution.living_priority(grid))
    return step, _same_system(solution, step)


def _same_system(solution: Solution, step: ChainStep) -> bool:
    """Whether the solution's linear solver holds exactly this chain's I - P."""
    linear = solution.linear
    if linear is None or linear.matrix.shape != step.transitions.shape:
        return False
    identity = sp.identity(step.transitions.shape[0], format="csr")
    difference = linear.matrix - (identity - step.transitions)
    return difference.nnz == 0 or float(abs(difference).max()) == 0.0


def steady_state(grid: Grid, solution: Solution) -> SteadyState:
    """Kill rates and life history of the breeding-currency chain.

    Parameters
    ----------
    grid : Grid
        Discretised study, breeding currency.
    solution : Solution
        Its optimal policy (:func:`riskdiet.core.solver.solve_breeding`).

    Returns
    -------
    SteadyState

    Notes
    -----
    With deaths absorbing and breeding continuing at (j_rho, healthy), the
    newcomer's chain has transient part Q = P + b e_rho^T (P the transitions
    among living states, b the breeding chance). Its life is one cycle of the
    lineage, which restarts at (j0, healthy) at each death; by the
    renewal-reward theorem [3]_ the stationary distribution per step is the
    newcomer's expected visits normalised, pi = N[j0] / sum N[j0], and
    K_i = N[j0] P(kill i | .) / N[j0] E[days | .] [1]_, [2]_. This equals the
    solution of pi M = pi, sum pi = 1 for the chain M with both resets.

    When a newcomer practically never dies (U(j_rho, healthy) < 1e-9, MODEL.md
    section 5), the long run repeats the cycles from (j_rho, healthy) to the
    next breeding event, and pi is the normalised visits of that cycle under
    P. Lifetime and breeding events are then unbounded (``math.inf``, with
    ``lifetime_note`` saying why).

    The first breeding and the causes of death before it are the absorption
    probabilities of P with breeding and the three death causes as absorbing
    states.

    References
    ----------
    .. [1] Kemeny, J. G. & Snell, J. L. (1960). Finite Markov Chains. Van
       Nostrand.
    .. [2] Grinstead, C. M. & Snell, J. L. (1997). Introduction to
       Probability, 2nd ed. AMS, ch. 11.
    .. [3] Ross, S. M. (1996). Stochastic Processes, 2nd ed. Wiley, ch. 3.
    """
    if grid.currency != "breeding":
        raise RiskdietError(f"steady_state needs the breeding currency, found {grid.currency!r}")
    m, size = grid.n_living, 2 * grid.n_living
    step, same_system = _step_and_system(grid, solution)
    start = grid.start_level - 1
    restart = grid.after_breeding_level - 1
    death = step.deaths.sum(0)

    exits = np.column_stack([step.breed, step.deaths.T])
    never_dies = (solution.complement is not None
                  and solution.complement[0, grid.after_breeding_level] < NEVER_DIES)
    note = NEVER_DIES_NOTE if never_dies else None
    if same_system:
        # rows of (I - P)^-1 from the policy solve's own factors: two transposed solves
        unit = np.zeros(size)
        unit[start] = 1.0
        from_start = solution.linear.transposed(unit)
        unit[start], unit[restart] = 0.0, 1.0
        from_restart = solution.linear.transposed(unit)
        first = AbsorbingSummary(from_start, float(from_start @ step.days),
                                 from_start @ exits)
        if never_dies:
            visits = from_restart
            lifetime = breeding_events = math.inf
        else:
            # Sherman-Morrison for the breeding reset (see riskdiet.core.batch._kill_rates)
            v_start = solution.fitness[0, grid.start_level]
            u_restart = solution.complement[0, grid.after_breeding_level]
            visits = from_start + (v_start / u_restart) * from_restart
            lifetime = float(visits @ step.days)
            breeding_events = float(visits @ step.breed)
    else:
        first = absorbing_summary(step.transitions, exits, start, step.days)
        bred = np.flatnonzero(step.breed > 0)
        reset = sp.csr_matrix((step.breed[bred], (bred, np.full(bred.size, restart))),
                              shape=(size, size))
        life_chain = (step.transitions + reset).tocsr()
        if not never_dies and always_absorbed(life_chain, death, start):
            life = absorbing_summary(life_chain, death, start, step.days)
            visits = life.visits
            lifetime = life.time
            breeding_events = float(visits @ step.breed)
        else:
            visits = absorbing_summary(step.transitions, step.breed, restart).visits
            lifetime = breeding_events = math.inf
            note = NEVER_DIES_NOTE
    pi = _distribution(visits)
    mean_days = float(pi @ step.days)
    time_share = pi * step.days / mean_days
    levels = np.tile(grid.living, 2).astype(float)
    return SteadyState(
        kills_per_day=pi @ step.kill_prob / mean_days,
        share_of_time_injured=float(time_share[m:].sum()),
        mean_reserves_levels=float(time_share @ levels),
        daily_survival=float(1.0 - (pi @ death) / mean_days),
        expected_lifetime_days=float(lifetime),
        expected_breeding_events=breeding_events,
        first_breeding_probability=float(first.absorption[0]),
        death_before_breeding={c: float(p) for c, p in zip(DEATH_CAUSES, first.absorption[1:],
                                                            strict=True)},
        stationary=pi.reshape(2, m),
        kill_prob=step.kill_prob.reshape(2, m, grid.n_prey),
        days_per_step=step.days.reshape(2, m),
        lifetime_note=note,
    )


def kill_rates(grid: Grid, solution: Solution) -> np.ndarray:
    """Long-run kills per predator per day, K_i, and nothing else.

    Parameters
    ----------
    grid : Grid
        Discretised study, breeding currency.
    solution : Solution
        Its optimal policy (:func:`riskdiet.core.solver.solve_breeding`).

    Returns
    -------
    ndarray, shape (P,)
        :attr:`SteadyState.kills_per_day` [1/day].

    Notes
    -----
    The grid check compares only these rates (MODEL.md section 8). The
    lineage's expected visits are a fixed combination of two rows of
    (I - P)^-1 (:func:`steady_state`, Sherman-Morrison for the breeding
    reset), so by linearity they take one transposed solve with the combined
    right-hand side e_j0 + (V(j0) / U(j_rho)) e_rho instead of two.
    """
    if grid.currency != "breeding":
        raise RiskdietError(f"kill_rates needs the breeding currency, found {grid.currency!r}")
    step, same_system = _step_and_system(grid, solution)
    if not same_system:
        return steady_state(grid, solution).kills_per_day
    unit = np.zeros(2 * grid.n_living)
    restart = grid.after_breeding_level - 1
    u_restart = solution.complement[0, grid.after_breeding_level]
    if u_restart < NEVER_DIES:
        unit[restart] = 1.0
    else:
        unit[grid.start_level - 1] = 1.0
        unit[restart] += solution.fitness[0, grid.start_level] / u_restart
    pi = _distribution(solution.linear.transposed(unit))
    return pi @ step.kill_prob / float(pi @ step.days)


# ---------------------------------------------------------------------------
