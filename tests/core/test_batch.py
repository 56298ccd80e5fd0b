"""Tests of the batched breeding-currency solver against one-study-at-a-time solves.

References used below:
Puterman, M. L. (1994). Markov Decision Processes. Wiley, ch. 7 (policy
iteration stops at the unique optimal value whatever policy it starts from;
started from the greedy policy of the optimal values it stops after one
evaluation).
Kemeny, J. G. & Snell, J. L. (1960). Finite Markov Chains. Van Nostrand (the
fundamental matrix behind riskdiet.core.chain.steady_state, the reference for kill
rates here).
Lande, R. (1979). Evolution 33, 402-416 (selection gradient, the derivative of
fitness in the trait, here hunting ability).
The reference solves are riskdiet.core.solver.solve_breeding (sparse LU via
scipy.sparse.linalg.splu, tested separately against Feller's ruin problem and
an independent simulation) and riskdiet.core.chain.steady_state.
"""

from __future__ import annotations

import copy
import threading

import numpy as np
import pytest
from conftest import grid_of, injury_raw, rounding_below_zero_grid
from threadpoolctl import threadpool_info, threadpool_limits

from riskdiet.core import batch
from riskdiet.core.chain import steady_state
from riskdiet.core.grid import attack_probabilities, stack_grids, take_cells, targets
from riskdiet.core.solver import solve_breeding, step_values

LEVELS = 20


def random_cells(count: int, seed: int) -> list[dict]:
    """Invented variants of the three-prey injury study (illustrative numbers).

    Hunting ability reaches 4, where the capture success of both risky prey is
    capped at 1 (zero slope); start and after-breeding reserves differ per cell.
    """
    rng = np.random.default_rng(seed)
    raws = []
    for _ in range(count):
        raw = injury_raw(energy_levels=LEVELS,
                         hunting_ability=float(rng.uniform(0.3, 4.0)),
                         start_reserves=float(rng.uniform(0.05, 0.85)),
                         reserves_after_breeding=float(rng.uniform(0.2, 0.8)),
                         daily_cost_mj=float(rng.uniform(1.0, 1.8)))
        raw["prey"][1]["encounters_per_day"] = float(rng.uniform(0.1, 1.5))
        raw["prey"][2]["injury_chance"] = float(rng.uniform(0.0, 0.9))
        raws.append(raw)
    return raws


@pytest.fixture(scope="module")
def raws():
    return random_cells(batch.SUB_BATCH + 6, seed=11)


@pytest.fixture(scope="module")
def cells(raws):
    """More cells than one sub-batch, with their single-study solutions."""
    grids = [grid_of(raw)[2] for raw in raws]
    return grids, [solve_breeding(g) for g in grids]


@pytest.fixture(scope="module")
def solved(cells):
    grids, _ = cells
    return batch.solve_breeding_batch(stack_grids(grids))


def test_cells_differ_in_start_level_and_cross_a_sub_batch(cells):
    """The batch is a real test of the bookkeeping: more cells than
    batch.SUB_BATCH, several start and after-breeding levels, and both capped
    and uncapped capture success (common practice: cover the index paths)."""
    grids, _ = cells
    assert len(grids) > batch.SUB_BATCH
    assert len({g.start_level for g in grids}) >= 5
    assert len({g.after_breeding_level for g in grids}) >= 5
    slopes = np.array([g.capture_slope[0] for g in grids])
    assert (slopes[:, 1:] == 0).any() and (slopes[:, 1:] > 0).any()


def test_batch_fitness_policy_and_gradient_equal_single_solves(cells, solved):
    """Each cell of the batch has the fitness at every level, the ranked attack
    set at every living level, the fitness at the start state and the marginal
    value of hunting ability of its own sparse-LU solve (Puterman 1994 ch. 7:
    the optimum does not depend on how the evaluation is organised; Lande 1979
    for the gradient), and a Bellman residual at rounding level."""
    grids, singles = cells
    for b, (grid, single) in enumerate(zip(grids, singles, strict=True)):
        top = grid.top
        np.testing.assert_allclose(solved.fitness[b], single.fitness[:, :top + 1],
                                   rtol=0, atol=1e-12)
        np.testing.assert_array_equal(solved.priority[b], single.priority[:, grid.living])
        assert solved.fitness_at_start[b] == pytest.approx(single.fitness_at_start,
                                                           rel=1e-12, abs=1e-14)
        assert solved.marginal_hunting_ability[b] == pytest.approx(
            single.marginal_hunting_ability, rel=1e-10, abs=1e-13)
        assert solved.residual[b] < 1e-12
        assert solved.iterations[b] >= 1
    assert solved.marginal_extra is None


def test_batch_kill_rates_equal_the_chain_steady_state(cells, solved):
    """Long-run kills per predator per day of every cell equal those of the
    stationary distribution of the chain with death and breeding resets
    (Kemeny & Snell 1960, via riskdiet.core.chain.steady_state), to 1e-12 relative."""
    grids, singles = cells
    for b in range(0, len(grids), 7):
        reference = steady_state(grids[b], singles[b]).kills_per_day
        np.testing.assert_allclose(solved.kills_per_day[b], reference, rtol=1e-12,
                                   atol=1e-15)


def _fixed_policy_step(grid, values, priority):
    """V -> (1 - mu_k) [G + sum_i P_i (A_i - G)] under a fixed ranked attack set
    (MODEL.md section 3), for a stacked grid; shape (B, 2, m)."""
    n_prey = grid.n_prey
    ignore, attack, _ = step_values(grid, targets(grid), values,
                                    np.broadcast_to(values[:, None],
                                                    (values.shape[0], n_prey, *values.shape[1:])))
    prob = attack_probabilities(grid.encounter_prob, priority.astype(np.int64))
    alive = (1.0 - grid.mortality)[..., :, None]
    return alive * (ignore + (prob * (attack - ignore[..., None])).sum(-1))


def test_extra_gradient_for_hunting_ability_equals_the_built_in_one(raws, cells, solved):
    """A further policy-fixed derivative passed as ``extra_direct`` (here the
    central difference, step 1e-6, of the one-step value in hunting ability at
    fixed values and policy) gives dV(j0)/da of the built-in envelope-theorem
    gradient for every cell, across sub-batches (Lande 1979; envelope theorem,
    common practice). Cells near the capture-success cap are left out: the
    derivative has a kink there."""
    grids, _ = cells
    step = 1e-6
    keep = [b for b, raw in enumerate(raws)
            if all((raw["predator"]["hunting_ability"] + 2 * step) * p["capture_success"] < 1
                   for p in raw["prey"])]
    assert len(keep) > batch.SUB_BATCH // 4

    def shifted(sign):
        out = []
        for b in keep:
            raw = copy.deepcopy(raws[b])
            raw["predator"]["hunting_ability"] += sign * step
            out.append(grid_of(raw)[2])
        return stack_grids(out)

    plus, minus = shifted(+1), shifted(-1)

    def extra(index, values, priority):
        return (_fixed_policy_step(take_cells(plus, index), values, priority)
                - _fixed_policy_step(take_cells(minus, index), values, priority)) / (2 * step)

    result = batch.solve_breeding_batch(stack_grids([grids[b] for b in keep]),
                                        extra_direct=extra)
    np.testing.assert_allclose(result.marginal_extra, solved.marginal_hunting_ability[keep],
                               rtol=1e-7, atol=1e-9)
    np.testing.assert_array_equal(result.priority, solved.priority[keep])


def test_rejects_the_season_currency():
    """Batching covers the stationary breeding currency only; a season grid is
    refused with a library error, not solved wrongly (MODEL.md section 3)."""
    from riskdiet.errors import RiskdietError

    _, _, grid = grid_of(injury_raw(energy_levels=LEVELS, currency="season"))
    with pytest.raises(RiskdietError):
        batch.solve_breeding_batch(stack_grids([grid]))


def test_overlapping_solves_in_threads_restore_the_blas_thread_count(cells):
    """Two batch solves whose lifetimes overlap in two threads (as map bands do
    on a threaded executor, e.g. a Dask worker with several threads) must leave
    the process's BLAS thread count as it found it, and must not let BLAS run
    multi-threaded inside the other solve (threadpoolctl documentation: limits
    are process-wide). The interleaving is forced: A enters, B enters, A
    leaves, B leaves (common practice for race reproductions)."""
    grids, _ = cells
    grid = stack_grids(grids[:4])
    m = grid.n_living
    a_inside, b_inside, a_done = threading.Event(), threading.Event(), threading.Event()

    def extra_a(index, values, priority):
        a_inside.set()
        b_inside.wait(10)
        return np.zeros((len(index), 2, m))

    def extra_b(index, values, priority):
        b_inside.set()
        a_done.wait(10)
        return np.zeros((len(index), 2, m))

    def run(extra):
        batch.solve_breeding_batch(grid, extra_direct=extra)

    def blas_threads():
        return {i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"}

    before = blas_threads()
    if before in (set(), {1}):
        pytest.skip("needs a multi-threaded BLAS to observe the thread count")
    first = threading.Thread(target=run, args=(extra_a,))
    second = threading.Thread(target=run, args=(extra_b,))
    first.start()
    assert a_inside.wait(10)
    second.start()
    first.join(10)
    a_done.set()
    second.join(10)
    after = blas_threads()
    threadpool_limits(limits=max(before))  # repair the process for the tests that follow
    assert after == before


def test_a_cell_with_an_exactly_zero_pivot_fails_as_singular(cells, monkeypatch):
    """When LAPACK's banded LU reports an exactly zero pivot for a cell (gbtrf
    info > 0, LAPACK Users' Guide), that cell fails as singular with no numbers
    (MODEL.md section 3: a singular system is an error, never a number shown as
    if valid) while the other cells of the batch are solved as before. No valid
    study is singular (c > 0 ends every policy in absorption), so the status is
    forced here."""
    grids, singles = cells
    real = batch.factor_solve

    def zero_pivot_in_first_cell(layout, entries, rhs, rhs_t, cells=None, **kwargs):
        x, y, info = real(layout, entries, rhs, rhs_t, cells, **kwargs)
        info = info.copy()
        info[(np.arange(len(info)) if cells is None else np.asarray(cells)) == 0] = 1
        return x, y, info

    monkeypatch.setattr(batch, "factor_solve", zero_pivot_in_first_cell)
    result = batch.solve_breeding_batch(stack_grids(grids[:3]))
    assert "singular" in result.failures[0]
    assert result.fitness_at_start[0] == 0.0 and (result.kills_per_day[0] == 0.0).all()
    assert result.failures[1] is None and result.failures[2] is None
    assert result.fitness_at_start[1] == pytest.approx(singles[1].fitness_at_start, rel=1e-12)


def test_batched_solve_clips_rounded_negatives_like_the_single_solve():
    """The case of tests/core/test_solver.py where a hopeless state solves to about -4e-18: a
    never-met, always-fatal prey stays out of the batched policy too, and the batch equals the
    single solve (riskdiet.core.solver.solve_breeding, the reference; MODEL.md section 3)."""
    grid = rounding_below_zero_grid()
    single = solve_breeding(grid)
    many = batch.solve_breeding_batch(stack_grids([grid, grid]))
    assert not many.failed.any()
    for k in range(2):
        assert np.all(many.priority[k][..., 0] == -1)
        np.testing.assert_array_equal(many.priority[k], single.priority[:, 1:-1])
        assert many.fitness_at_start[k] == pytest.approx(single.fitness_at_start, rel=1e-12)
