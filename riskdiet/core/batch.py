"""Many breeding-currency studies of equal shape, solved together.

Map cells and uncertainty draws differ only in their numbers, not in the shape
of their state space, so their policy iterations run side by side: every
per-cell array carries a leading batch axis (:func:`riskdiet.core.grid.stack_grids`),
each round evaluates every unfinished cell with one banded LU factorisation of
its I - P (:mod:`riskdiet.core.banded`, LAPACK gbtrf), and a cell leaves the
batch as soon as its policy repeats. The same factors give V, its complement U
and the two rows of (I - P)^-1 behind the marginal values (envelope theorem)
and the long-run kill rates, so every cell costs one factorisation per
policy-iteration round.

The equations are those of :mod:`riskdiet.core.solver` and :mod:`riskdiet.core.chain`
(MODEL.md sections 3-5), written once in :mod:`riskdiet.core.grid` and
:func:`riskdiet.core.solver.step_values`; a batch cell equals a single solve.
Only the improvement step is arranged for speed: the values every outcome
reaches are one sparse product with V and U, the matrix built once per
sub-batch (:mod:`riskdiet.core.breeding_plan`); the greedy set is ranked by
pairwise comparisons and its attack chances looked up in a per-cell table of
every ranked set (:mod:`riskdiet.core.ranked_sets`). That changes the rounding
of the choice values (about 1e-16 relative), never the comparison rule of
MODEL.md section 3; the policies, hence the evaluated values, are the single
solver's.

References
----------
.. [1] Puterman, M. L. (1994). Markov Decision Processes. Wiley, ch. 7.
.. [2] Sherman, J. & Morrison, W. J. (1950). Adjustment of an inverse matrix
   corresponding to a change in one element of a given matrix. Annals of
   Mathematical Statistics 21, 124-127.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass

import numpy as np
from threadpoolctl import threadpool_limits

from riskdiet.core.banded import band_layout, deinterleave, factor_solve, interleave
from riskdiet.core.breeding_plan import ChoicePlan, Interpolated, choice_plan
from riskdiet.core.choice import better, better_by, choice_values, ramp
from riskdiet.core.grid import (
    Grid,
    Split,
    Targets,
    death_chances,
    kill_probabilities,
    outcomes,
    take_cells,
    targets,
)
from riskdiet.core.ranked_sets import SetKeys, ranks_prey_first
from riskdiet.core.solver import MAX_POLICY_ITERATIONS, RESIDUAL_LIMIT, SINGULAR, SUM_LIMIT
from riskdiet.errors import RiskdietError

_BLAS_LOCK = threading.Lock()
_BLAS_USERS = 0
_BLAS_LIMIT: threadpool_limits | None = None


@contextmanager
def _one_blas_thread() -> Iterator[None]:
    """Limit BLAS to one thread while any batched solve runs in this process.

    threadpoolctl's limits are process-wide, so solves overlapping in several
    threads (a threaded executor, a Dask worker with several threads) share one
    limit: the first to start sets it, the last to finish restores it.
    """
    global _BLAS_USERS, _BLAS_LIMIT
    with _BLAS_LOCK:
        if _BLAS_USERS == 0:
            _BLAS_LIMIT = threadpool_limits(limits=1)
            _BLAS_LIMIT.__enter__()
        _BLAS_USERS += 1
    try:
        yield
    finally:
        with _BLAS_LOCK:
            _BLAS_USERS -= 1
            if _BLAS_USERS == 0 and _BLAS_LIMIT is not None:
                # the context-manager exit, not restore_original_limits(): after the
                # latter, later limits set from other threads were seen not to apply
                _BLAS_LIMIT.__exit__(None, None, None)
                _BLAS_LIMIT = None


NEVER_DIES = 1e-9
"""U(j_rho) below this: the animal practically never dies (MODEL.md section 5)."""

SUB_BATCH = 128
"""Cells solved together. Larger batches spread numpy's per-call overhead over more
cells; with banded storage placed a few cells at a time the size matters little
(benchmark sample of 512 map cells: 32, 64, 128 and 512 cells per batch within the
noise of a busy machine, 2.3-2.8 ms a cell)."""


@dataclass(frozen=True)
class BatchSolution:
    """Per-cell results of a batch of breeding-currency studies.

    Attributes
    ----------
    fitness : ndarray, shape (B, 2, top + 1)
        V at levels 0..J (0 at level 0, 1 at level J) [probability].
    priority : ndarray of int8, shape (B, 2, m, P)
        Optimal ranked attack sets on living levels (-1 = ignored).
    fitness_at_start : ndarray, shape (B,)
        V(j0, healthy).
    marginal_hunting_ability : ndarray, shape (B,)
        dV(j0, healthy)/da with the policy held fixed.
    marginal_extra : ndarray or None, shape (B,)
        dV(j0, healthy)/d(theta) for a further input, policy held fixed.
    kills_per_day : ndarray, shape (B, P)
        Long-run kills per predator per day (MODEL.md section 5).
    residual : ndarray, shape (B,)
        Bellman residual of each cell.
    iterations : ndarray of int, shape (B,)
        Policy-iteration rounds of each cell.
    failures : tuple of (str or None)
        Per cell: None when the solve is exact, else why it failed (the cell's
        numbers are then zeros and must not be shown).
    """

    fitness: np.ndarray
    priority: np.ndarray
    fitness_at_start: np.ndarray
    marginal_hunting_ability: np.ndarray
    marginal_extra: np.ndarray | None
    kills_per_day: np.ndarray
    residual: np.ndarray
    iterations: np.ndarray
    failures: tuple[str | None, ...] = ()

    @property
    def failed(self) -> np.ndarray:
        """Indices of the cells whose solve failed."""
        return np.array([i for i, f in enumerate(self.failures) if f is not None], dtype=int)


def solve_breeding_batch(grid: Grid, extra_direct=None,
                         max_iterations: int = MAX_POLICY_ITERATIONS) -> BatchSolution:
    """Solve a batch of breeding-currency studies by batched policy iteration.

    Parameters
    ----------
    grid : Grid
        A stacked grid (:func:`riskdiet.core.grid.stack_grids`), breeding currency.
    extra_direct : callable, optional
        ``extra_direct(index, values, priority) -> (C, 2, m)``: the derivative of
        the one-step value with respect to a further input at fixed values and
        policy, for the cells ``index``; its solve gives ``marginal_extra``.
    max_iterations : int
        Limit on policy-iteration rounds.

    Returns
    -------
    BatchSolution
        Every cell equals :func:`riskdiet.core.solver.solve_breeding` of its own
        grid: the iteration starts from the same default policy and keeps
        incumbents on the same rule (MODEL.md section 3). A cell whose solve
        fails is named in ``failures``, never returned as numbers.
    """
    if grid.currency != "breeding":
        raise RiskdietError("batched solving covers the breeding currency only")
    batch = grid.cost.shape[0]
    pieces = []
    with _one_blas_thread():
        # LAPACK on many small matrices: one thread per process is fastest; the
        # parallelism comes from running independent chunks in separate workers
        for lo in range(0, batch, SUB_BATCH):
            cells = np.arange(lo, min(lo + SUB_BATCH, batch))
            extra = (None if extra_direct is None else
                     (lambda idx, v, p, cells=cells: extra_direct(cells[idx], v, p)))
            pieces.append(_solve(take_cells(grid, cells), extra, max_iterations))
    if len(pieces) == 1:
        return pieces[0]
    arrays = {f: None if getattr(pieces[0], f) is None else
              np.concatenate([getattr(p, f) for p in pieces])
              for f in BatchSolution.__dataclass_fields__ if f != "failures"}
    return BatchSolution(**arrays, failures=tuple(f for p in pieces for f in p.failures))


def _solve(grid, extra_direct, max_iterations) -> BatchSolution:
    batch = grid.cost.shape[0]
    m, n_prey, top = grid.n_living, grid.n_prey, grid.top
    values = np.zeros((batch, 2, top + 1))
    values[..., top] = 1.0
    comps = np.ones((batch, 2, top + 1))
    comps[..., top] = 0.0
    all_targets = targets(grid)
    plan = choice_plan(grid, all_targets)
    # V and U side by side, the vector pair the plan multiplies
    store = np.stack([values, comps], axis=-1)
    sets = SetKeys(grid.encounter_prob)
    # policies as keys of ranked sets, their attack chances prey first: (P, C, 2, m)
    key = sets.key(_default_ranks(grid, all_targets))
    prob = sets.attack_probabilities(key)
    out_priority = np.zeros((batch, 2, m, n_prey), dtype=np.int8)
    start = np.zeros(batch)
    marginal = np.zeros(batch)
    extra = np.zeros(batch) if extra_direct is not None else None
    kills = np.zeros((batch, n_prey))
    residual = np.zeros(batch)
    rounds = np.zeros(batch, dtype=np.int64)
    failures: list[str | None] = [None] * batch
    active = np.arange(batch)
    layout = None
    for iteration in range(1, max_iterations + 1):
        n_active = len(active)
        sub = take_cells(grid, active)
        tg = _take_targets(all_targets, active)
        attack_prob = np.ascontiguousarray(np.moveaxis(prob, 0, -1))
        parts = outcomes(sub, tg, attack_prob)
        if layout is None:  # where the entries go does not depend on the policy
            layout = band_layout(sub, parts)
        death = death_chances(sub, tg, attack_prob, parts).sum(-3)
        rhs = np.stack([layout.breed_chance(parts, active), interleave(death)], axis=-1)
        # rows of (I - P)^-1 for (j0, healthy) and (j_rho, healthy), level-major; they are
        # needed only once the policy has settled, but cost little while the factors are at hand
        unit = np.zeros((n_active, 2 * m, 2))
        unit[np.arange(n_active), 2 * (sub.start_level - 1), 0] = 1.0
        unit[np.arange(n_active), 2 * (sub.after_breeding_level - 1), 1] = 1.0
        with np.errstate(all="ignore"):
            sol, rows, info = factor_solve(layout, layout.entries(parts, active), rhs, unit,
                                           active)
        v = deinterleave(sol[..., 0]).reshape(n_active, -1)
        u = deinterleave(sol[..., 1]).reshape(n_active, -1)
        # an exactly zero pivot (info > 0) leaves infinities or NaN; both say singular
        bad = (info > 0) | ~(np.isfinite(v).all(-1) & np.isfinite(u).all(-1))
        worst = np.where(bad, np.inf, np.abs(v + u - 1.0).max(-1, initial=0.0))
        inexact = ~bad & ((worst > SUM_LIMIT) | (v.min(-1, initial=0.0) < -SUM_LIMIT)
                          | (u.min(-1, initial=0.0) < -SUM_LIMIT))
        # rounded negatives where the true value is 0 are clipped before choices are compared,
        # as in riskdiet.core.solver.solve_breeding (DEVELOPERS.md, reading 33)
        v = np.where(bad[:, None], 0.0, np.maximum(v, 0.0)).reshape(-1, 2, m)
        u = np.where(bad[:, None], 1.0, np.maximum(u, 0.0)).reshape(-1, 2, m)
        values[active, :, 1:top] = v
        comps[active, :, 1:top] = u
        store[active, :, 1:top, 0] = v
        store[active, :, 1:top, 1] = u
        reached = plan.interpolate(store, active)
        improved, improved_prob, switched, greedy_v, greedy_u = _improve(
            plan, sets, sub, active, reached, key, prob)
        done = ~switched.reshape(n_active, -1).any(axis=1) | bad | inexact
        if iteration == max_iterations:
            for c in active[~done]:
                failures[c] = f"policy iteration did not settle within {max_iterations} rounds"
            done[:] = True
        for c, is_bad, is_inexact, w in zip(active, bad, inexact, worst, strict=True):
            if is_bad:
                failures[c] = SINGULAR.format(round=iteration)
            elif is_inexact:
                failures[c] = (f"the values of the attack policy of policy-iteration round "
                               f"{iteration} are inexact (a chance and its complement differ "
                               f"from 1 by {w:.1e})")
        if done.any():
            cells = active[done]
            keep = np.flatnonzero(done)
            rounds[cells] = iteration
            ranks = sets.ranks(key[..., keep, :, :])
            out_priority[cells] = ranks
            part = take_cells(sub, keep)
            res = _relative_residual(greedy_v[keep], greedy_u[keep], v[keep],
                                     u[keep]).reshape(len(keep), -1).max(axis=1)
            residual[cells] = res
            for c, r in zip(cells, res, strict=True):
                if failures[c] is None and not (np.isfinite(r) and r <= RESIDUAL_LIMIT):
                    failures[c] = (f"the optimality check failed: the Bellman residual "
                                   f"relative to the values is {r:.1e}, above the accepted "
                                   f"{RESIDUAL_LIMIT:.0e}")
            full, full_u = values[cells], comps[cells]
            alive = (1.0 - part.mortality)[..., :, None]
            d_attack = plan.success_derivative(
                Interpolated(reached.stay[keep], reached.won[:, keep], reached.hurt[:, keep]),
                part.fatality, part.injury_chance, tg.survive_handling[keep])
            slope = np.moveaxis(part.capture_slope, -1, 0)[..., None]
            direct = alive * (prob[:, keep] * d_attack * slope).sum(0)
            ap = attack_prob[keep]
            from_start = deinterleave(rows[keep, :, 0]).reshape(len(keep), -1)
            from_restart = deinterleave(rows[keep, :, 1]).reshape(len(keep), -1)
            start[cells] = full[np.arange(len(keep)), 0, part.start_level]
            marginal[cells] = (from_start * direct.reshape(len(keep), -1)).sum(-1)
            if extra_direct is not None:
                d_extra = extra_direct(cells, full, ranks)
                extra[cells] = (from_start * d_extra.reshape(len(keep), -1)).sum(-1)
            with np.errstate(all="ignore"):
                kills[cells] = _kill_rates(part, ap, from_start, from_restart,
                                           full[np.arange(len(keep)), 0, part.start_level],
                                           full_u[np.arange(len(keep)), 0,
                                                  part.after_breeding_level])
        key = improved[..., ~done, :, :]
        prob = improved_prob[:, ~done]
        active = active[~done]
        if active.size == 0:
            break
    for c, f in enumerate(failures):
        if f is not None:  # never leave numbers behind that could be shown
            start[c] = marginal[c] = residual[c] = 0.0
            kills[c] = 0.0
            if extra is not None:
                extra[c] = 0.0
    return BatchSolution(values, out_priority, start, marginal, extra, kills, residual, rounds,
                         tuple(failures))


def _default_ranks(grid: Grid, tg: Targets) -> np.ndarray:
    """:func:`riskdiet.core.choice.default_sets`, ranked pairwise, prey first (P, B, 2, m).

    The same choice values on the ramp (:func:`riskdiet.core.choice.choice_values`),
    ranked by :func:`riskdiet.core.ranked_sets.ranks_prey_first`, which equals the
    lexicographic sort of :func:`riskdiet.core.choice.greedy_sets`.
    """
    v, u = ramp(grid)
    batch = grid.cost.shape[0]
    v = np.broadcast_to(v, (batch, 2, grid.top + 1))
    u = np.broadcast_to(u, (batch, 2, grid.top + 1))
    cap = (batch, grid.n_prey, 2, grid.top + 1)
    cv = choice_values(grid, tg, v, u, np.broadcast_to(v[:, None], cap),
                       np.broadcast_to(u[:, None], cap))

    def prey_first(x):
        return np.ascontiguousarray(np.moveaxis(x, -1, 0))

    worth = better(cv.attack_v, cv.attack_u, cv.ignore_v[..., None], cv.ignore_u[..., None])
    upper = cv.attack_v > 0.5
    return ranks_prey_first(prey_first(worth), prey_first(upper),
                            prey_first(np.where(upper, cv.attack_u, -cv.attack_v)))


def _take_targets(tg: Targets, index: np.ndarray) -> Targets:
    """The cells ``index`` of batched targets (they do not depend on the policy)."""
    def part(s: Split) -> Split:
        return Split(s.low[index], s.weight[index])
    return Targets(part(tg.stay), part(tg.capture), part(tg.injury),
                   np.asarray(tg.recover_stay)[index], tg.recover_capture[index],
                   tg.survive_handling[index], tg.die_handling[index])


def _improve(plan: ChoicePlan, sets: SetKeys, grid: Grid, active: np.ndarray,
             reached: Interpolated, incumbent: np.ndarray, prob: np.ndarray
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """:func:`riskdiet.core.choice.keep_unless_better`, from one sparse product.

    The choice values of the active cells are the plan's rows times the stored
    values (:mod:`riskdiet.core.breeding_plan`); the greedy set is ranked
    pairwise and its attack chances looked up (:mod:`riskdiet.core.ranked_sets`);
    the comparisons are those of :func:`riskdiet.core.choice.greedy_sets` and
    :func:`riskdiet.core.choice.better`. The incumbent's attack chances are those
    its outcomes were built from, and the greedy set's one-step values are also
    T V of the Bellman residual, so neither is computed twice.

    Returns
    -------
    policy : ndarray of int
        Keys of the sets kept (:class:`riskdiet.core.ranked_sets.SetKeys`).
    attack_prob : ndarray, shape (P, C, 2, m)
        The policy's attack chances.
    switched : ndarray of bool, shape (C, 2, m)
    greedy_v, greedy_u : ndarray, shape (C, 2, m)
        T V and its complement: the one-step values of the greedy set.
    """
    gv, gu, av, au = plan.choice_values(reached, active)
    # choice.better(A, G), with the differences kept for the set values below
    dv = av - gv
    du = au - gu
    upper = av > 0.5
    worth = better_by(dv, du, av, au, gv, gu)
    greedy = sets.key(ranks_prey_first(worth, upper, np.where(upper, au, -av)))
    p_greedy = sets.attack_probabilities(greedy, active)
    mu = grid.mortality[..., :, None]
    alive = 1.0 - mu
    g_v = alive * (gv + (p_greedy * dv).sum(0))
    g_u = mu + alive * (gu + (p_greedy * du).sum(0))
    i_v = alive * (gv + (prob * dv).sum(0))
    i_u = mu + alive * (gu + (prob * du).sum(0))
    switched = better(g_v, g_u, i_v, i_u) & sets.differ(greedy, incumbent)
    return (np.where(switched, greedy, incumbent), np.where(switched, p_greedy, prob),
            switched, g_v, g_u)


def _relative_residual(tv: np.ndarray, tu: np.ndarray, v: np.ndarray, u: np.ndarray
                       ) -> np.ndarray:
    """:func:`riskdiet.core.choice.relative_residual` from T V and its complement."""
    diff = np.where(v > 0.5, np.abs(tu - u), np.abs(tv - v))
    return diff / np.maximum(np.maximum(v, u), 1e-300)


def _kill_rates(grid: Grid, attack_prob: np.ndarray, from_start: np.ndarray,
                from_restart: np.ndarray, v_start: np.ndarray, u_restart: np.ndarray
                ) -> np.ndarray:
    """Long-run kills per day from the visits of one newcomer's life.

    With deaths absorbing and breeding continuing at j_rho, a newcomer's
    expected visits are x = u + V(j0)/(1 - V(j_rho)) w, where u and w are the
    rows of (I - P)^-1 for j0 and j_rho (Sherman-Morrison [2]_ applied to the
    breeding reset). Normalised, x is the stationary distribution of the chain
    with both resets (renewal-reward), so kills per day = x.kill / x.days. When
    the predator cannot die (V(j_rho) = 1) the long run is the cycle between
    breedings, whose visits are w. "Cannot die" means practically never:
    U(j_rho) < 1e-9 (MODEL.md section 5), as in :func:`riskdiet.core.chain.steady_state`.
    """
    kill = kill_probabilities(grid, attack_prob).reshape(attack_prob.shape[0], -1,
                                                         grid.n_prey)
    days = 1.0 + (kill * grid.handling[:, None, :]).sum(-1)
    forever = u_restart < NEVER_DIES
    scale = np.where(forever, 0.0, v_start / np.where(forever, 1.0, u_restart))
    visits = np.where(forever[:, None], from_restart, from_start + scale[:, None] * from_restart)
    per_step = np.einsum("bs,bsp->bp", visits, kill)
    return per_step / (visits * days).sum(-1)[:, None]
