"""The batched season solve: its building blocks and its equality with single solves.

References used below:
MODEL.md section 3 (the greedy set: prey worth attacking ranked by U where
A_i > 1/2, else by V, ties to the prey listed first; P_i = p_i prod over prey
ranked above i of (1 - p_l); the season's backward induction) and section 5
(the season's forward propagation). Independent references: numpy's lexsort
for the ranking (the single solver's own ranking, riskdiet.core.choice),
explicit products written here for P_i, counting of ranked subsets
(sum_k P!/(P-k)!, common practice), and the single-cell solvers
riskdiet.core.solver.solve_season and riskdiet.core.season_chain.season_outlook, which
share none of the batch's sparse matrices, pairwise ranking or set tables.
"""

from __future__ import annotations

import copy
import math

import numpy as np
import pytest
from conftest import grid_of, injury_raw
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.core.choice import ChoiceValues, choice_values, greedy_sets
from riskdiet.core.grid import attack_probabilities, stack_grids, targets
from riskdiet.core.ranked_sets import greedy_ranks, set_table
from riskdiet.core.season_batch import solve_season_batch
from riskdiet.core.season_chain import season_outlook
from riskdiet.core.season_plan import backward_step
from riskdiet.core.solver import solve_season

# few distinct values, so that ties (equal values, values of exactly 1/2) are frequent
VALUES = st.sampled_from([0.0, 1e-300, 0.1, 0.3, 0.3, 0.5, 0.5, 0.6, 0.9, 1.0 - 1e-15, 1.0])


@settings(max_examples=60, deadline=None)
@given(st.data())
def test_pairwise_ranking_equals_the_lexicographic_sort(data):
    """Ranking the prey worth attacking by pairwise comparisons gives the ranks
    of the single solver's lexicographic sort (numpy lexsort on group, value and
    listing order, MODEL.md section 3), ties included."""
    n_prey = data.draw(st.integers(1, 7))
    states = data.draw(st.integers(1, 6))
    shape = (states, n_prey)

    def arr(shape):
        return np.array(data.draw(st.lists(VALUES, min_size=math.prod(shape),
                                           max_size=math.prod(shape)))).reshape(shape)

    attack_v = arr(shape)
    # complements as computed separately: 1 - V, sometimes off by a little
    attack_u = np.clip(1.0 - attack_v + arr(shape) * 1e-16, 0.0, 1.0)
    ignore_v = arr((states,))
    ignore_u = 1.0 - ignore_v
    cv = ChoiceValues(ignore_v, ignore_u, attack_v, attack_u, np.zeros(shape))
    np.testing.assert_array_equal(greedy_ranks(cv), greedy_sets(cv))


@pytest.mark.parametrize("n_prey", [1, 2, 3, 5, 6])
def test_set_table_holds_every_ranked_set_once(n_prey):
    """The table holds sum_k P!/(P-k)! ranked sets (ordered subsets, counted
    directly: common practice), each once, and a set's code gives it back."""
    table = set_table(n_prey)
    expected = sum(math.perm(n_prey, k) for k in range(n_prey + 1))
    assert table.size == expected
    assert len({tuple(r) for r in table.ranks}) == expected
    codes = table.codes(np.ascontiguousarray(table.ranks.T))
    np.testing.assert_array_equal(codes, np.arange(expected))


def test_no_table_for_many_prey():
    """Seven prey have 13,700 ranked sets: no table; the batch ranks them directly."""
    assert set_table(7) is None


@settings(max_examples=40, deadline=None)
@given(st.data())
def test_tabled_attack_probabilities_follow_the_formula(data):
    """Each tabled set's P_i equals p_i times the product of (1 - p_l) over the
    prey ranked above i, multiplied out here prey by prey (MODEL.md section 3;
    Stephens & Krebs 1986, ch. 2), and equals the solver's own function bit for bit."""
    n_prey = data.draw(st.integers(1, 5))
    p = np.array(data.draw(st.lists(st.floats(0.0, 1.0), min_size=n_prey, max_size=n_prey)))
    table = set_table(n_prey)
    got = table.probabilities(p)
    assert got.shape == (table.size, n_prey)
    for ranks, row in zip(table.ranks, got, strict=True):
        for i in range(n_prey):
            want = 0.0
            if ranks[i] >= 0:
                want = p[i]
                for ell in range(n_prey):
                    if 0 <= ranks[ell] < ranks[i]:
                        want *= 1.0 - p[ell]
            assert row[i] == pytest.approx(want, rel=1e-14, abs=1e-300)
    np.testing.assert_array_equal(got, attack_probabilities(p, table.ranks.astype(np.intp)))


def _season_grids(days=20, levels=24):
    """Season variants of the invented injury study: a few inputs changed."""
    grids = []
    for ability, deer_handling in ((1.1, 1.4), (0.7, 3.6), (1.4, 30.0)):
        raw = injury_raw(currency="season", season_days=days, energy_levels=levels,
                         hunting_ability=ability, start_reserves=0.5)
        raw["prey"][1]["handling_days"] = deer_handling  # 30 days: ends after the season
        grids.append(grid_of(raw)[2])
    return grids


def test_sparse_choice_values_equal_the_step_values():
    """G, A_i on V and U, and dA_i/da from the sparse matrix equal the single
    solver's choice values (riskdiet.core.choice.choice_values, MODEL.md
    section 3) on arbitrary next-day values, to rounding."""
    grid = stack_grids(_season_grids())
    batch, m, n_prey, levels = 3, grid.n_living, grid.n_prey, grid.n + 1
    tg = targets(grid)
    handling = np.minimum(grid.handling, grid.season_days).astype(np.intp)
    ahead = int(handling.max())
    step = backward_step(grid, tg, handling, ahead)
    rng = np.random.default_rng(7)
    store = rng.random((ahead + 1, batch, 3, 2, levels))
    out = step.matrix @ store.reshape(-1)
    ignore, av, au, d_total = np.split(out, np.cumsum(step.sizes)[:-1])
    cells = np.arange(batch)[:, None]

    def at_capture(q):
        return store[handling, cells, q]                                    # (B, P, 2, L)

    cv = choice_values(grid, tg, store[0, :, 0], store[0, :, 1], at_capture(0), at_capture(1))
    slope = choice_values(grid, tg, store[0, :, 2], store[0, :, 2], at_capture(2),
                          at_capture(2))
    ignore = ignore.reshape(batch, 3, 2, m)
    for got, want in ((ignore[:, 0], cv.ignore_v), (ignore[:, 1], cv.ignore_u),
                      (ignore[:, 2], slope.ignore_v)):
        np.testing.assert_allclose(got, want, rtol=1e-13)

    def prey_last(x):
        return np.moveaxis(x.reshape(n_prey, batch, 2, m), 0, -1)

    np.testing.assert_allclose(prey_last(av), cv.attack_v, rtol=1e-13)
    u_const = np.moveaxis(step.u_constant, 0, -1)
    np.testing.assert_allclose(prey_last(au) + u_const, cv.attack_u, rtol=1e-13)
    skill = grid.capture_slope[..., :, None, :]
    np.testing.assert_allclose(prey_last(d_total), slope.attack_v + cv.d_attack * skill,
                               rtol=1e-12, atol=1e-15)


def _seven_prey_grid():
    """The injury study with four more invented prey: too many for the set table."""
    raw = injury_raw(currency="season", season_days=15, energy_levels=20, start_reserves=0.5)
    extra = copy.deepcopy(raw["prey"])
    for k, prey in enumerate(extra + extra[:1]):
        prey = dict(prey, name=f"{prey['name']} {k}",
                    encounters_per_day=prey["encounters_per_day"] * (0.5 + 0.2 * k))
        raw["prey"].append(prey)
    return grid_of(raw)[2]


@pytest.mark.parametrize("case", ["three prey", "seven prey"])
def test_batch_equals_single_solves(case):
    """Every cell of a batch equals the single solve and forward propagation of
    its own grid (solve_season, season_outlook; MODEL.md sections 3 and 5):
    values to 1e-12, the value of hunting ability to 1e-10, kills and survival
    to 1e-12, the same day-0 policy; a capture that ends after the season and
    seven prey (ranked without the set table) included."""
    grids = _season_grids() if case == "three prey" else [_seven_prey_grid()] * 2
    got = solve_season_batch(stack_grids(grids))
    assert got.failures == (None,) * len(grids)
    for b, grid in enumerate(grids):
        ref = solve_season(grid)
        out = season_outlook(grid, ref)
        assert got.fitness_at_start[b] == pytest.approx(ref.fitness_at_start, rel=1e-12)
        assert got.marginal_hunting_ability[b] == pytest.approx(
            ref.marginal_hunting_ability, rel=1e-10, abs=1e-14)
        np.testing.assert_array_equal(got.priority[b], ref.priority_by_day[0][:, 1:])
        np.testing.assert_allclose(got.expected_kills[b], out.expected_kills, rtol=1e-12,
                                   atol=1e-15)
        np.testing.assert_allclose(got.survival_by_day[b], out.survival_by_day, rtol=1e-12,
                                   atol=1e-15)
        assert got.chance_above_threshold[b] == pytest.approx(out.chance_above_threshold,
                                                              rel=1e-12)


def test_results_do_not_depend_on_the_chunk():
    """Cells solved one pass at a time or all together give identical numbers
    (each cell's rows of the sparse matrices are the same; MODEL.md section 3)."""
    grid = stack_grids(_season_grids())
    whole, single = solve_season_batch(grid), solve_season_batch(grid, chunk=1)
    for name in ("fitness_at_start", "marginal_hunting_ability", "priority", "expected_kills",
                 "survival_by_day", "chance_above_threshold"):
        np.testing.assert_array_equal(getattr(whole, name), getattr(single, name))
