"""Building blocks of the batched breeding solve: the choice values as one sparse
product, the tabled attack chances per cell, and Charnov's diet across cells.

References used below:
MODEL.md section 3 (G and A_i of the breeding currency, and their complements),
computed independently by the single solver's own
riskdiet.core.choice.choice_values (interpolation then weighting, no matrix);
MODEL.md section 3 / Stephens & Krebs (1986), Foraging Theory, ch. 2 for the
attack chances P_i = p_i prod over better prey (1 - p_l), computed by
riskdiet.core.grid.attack_probabilities; Charnov (1976), American Naturalist
110, 141-151 (zero-one rule of the rate-maximising diet) as computed one cell
at a time by riskdiet.core.classic.classic_prey_model.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import grid_of, injury_raw
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.core.breeding_plan import choice_plan
from riskdiet.core.choice import choice_values
from riskdiet.core.classic import classic_prey_model
from riskdiet.core.classic_batch import rate_maximizing_diets
from riskdiet.core.grid import attack_probabilities, stack_grids, targets
from riskdiet.core.ranked_sets import SetKeys


def _breeding_grids(levels=24):
    """Breeding variants of the invented injury study (illustrative numbers)."""
    grids = []
    for ability, handling, cost in ((1.1, 1.4, 1.2), (0.7, 3.6, 1.6), (2.5, 0.0, 1.0)):
        raw = injury_raw(energy_levels=levels, hunting_ability=ability, daily_cost_mj=cost)
        raw["prey"][1]["handling_days"] = handling
        grids.append(grid_of(raw)[2])
    return grids


def test_sparse_choice_values_equal_the_step_values():
    """G and A_i on V and on U, and dA_i/ds_i, from the plan's one sparse
    product equal the single solver's choice values
    (riskdiet.core.choice.choice_values, MODEL.md section 3) on arbitrary values
    and complements, to rounding, for all cells and for a subset of them."""
    grid = stack_grids(_breeding_grids())
    batch, top = grid.cost.shape[0], grid.top
    tg = targets(grid)
    rng = np.random.default_rng(5)
    v = rng.random((batch, 2, top + 1))
    u = rng.random((batch, 2, top + 1))
    plan = choice_plan(grid, tg)
    cap = (batch, grid.n_prey, 2, top + 1)
    cv = choice_values(grid, tg, v, u, np.broadcast_to(v[:, None], cap),
                       np.broadcast_to(u[:, None], cap))
    for cells in (np.arange(batch), np.array([2, 0])):
        at = plan.interpolate(np.stack([v, u], axis=-1), cells)
        gv, gu, av, au = plan.choice_values(at, cells)
        np.testing.assert_allclose(gv, cv.ignore_v[cells], rtol=1e-13)
        np.testing.assert_allclose(gu, cv.ignore_u[cells], rtol=1e-13)
        np.testing.assert_allclose(np.moveaxis(av, 0, -1), cv.attack_v[cells], rtol=1e-13)
        np.testing.assert_allclose(np.moveaxis(au, 0, -1), cv.attack_u[cells], rtol=1e-13)
        d = plan.success_derivative(at, grid.fatality[cells], grid.injury_chance[cells],
                                    tg.survive_handling[cells])
        np.testing.assert_allclose(np.moveaxis(d, 0, -1), cv.d_attack[cells], rtol=1e-12,
                                   atol=1e-15)


def test_tabled_attack_chances_of_chosen_cells():
    """Keys of ranked sets give, for any subset of the batch's cells, the attack
    chances of riskdiet.core.grid.attack_probabilities bit for bit (MODEL.md
    section 3), with and without the set table (seven prey: no table)."""
    rng = np.random.default_rng(3)
    for n_prey in (3, 7):
        p = rng.random((5, n_prey))
        ranks = np.full((5, 2, 4, n_prey), -1, dtype=np.int8)
        for idx in np.ndindex(5, 2, 4):
            chosen = rng.permutation(n_prey)[:rng.integers(0, n_prey + 1)]
            ranks[idx][chosen] = np.arange(len(chosen))
        sets = SetKeys(p)
        cells = np.array([4, 1, 2])
        key = sets.key(np.ascontiguousarray(np.moveaxis(ranks[cells], -1, 0)))
        got = np.moveaxis(sets.attack_probabilities(key, cells), 0, -1)
        np.testing.assert_array_equal(got, attack_probabilities(p[cells], ranks[cells]))
        np.testing.assert_array_equal(sets.ranks(key), ranks[cells])


POSITIVE = st.sampled_from([0.0, 0.05, 0.5, 1.0, 2.0, 3.0, 7.5])


@settings(max_examples=60, deadline=None)
@given(st.data())
def test_charnov_diets_across_cells_equal_the_single_model(data):
    """Each cell's rate-maximising diet equals that of classic_prey_model
    (Charnov 1976 zero-one rule with Holling's rate), ties in profitability and
    zero handling included."""
    n_prey = data.draw(st.integers(1, 5))
    cells = data.draw(st.integers(1, 4))

    def arr(values=POSITIVE):
        return np.array(data.draw(st.lists(values, min_size=cells * n_prey,
                                           max_size=cells * n_prey))).reshape(cells, n_prey)

    lam, e, h = arr(), arr(), arr()
    s = arr(st.sampled_from([0.0, 0.2, 0.5, 1.0]))
    got = rate_maximizing_diets(lam, e, h, s)
    names = [f"prey {i}" for i in range(n_prey)]
    for b in range(cells):
        ref = classic_prey_model(names, lam[b], e[b], h[b], s[b], np.zeros(n_prey), 0.001, 1.0)
        want = [name in ref.rate_maximizing_diet for name in names]
        assert got[b].tolist() == want


@pytest.mark.parametrize("ability", [0.5, 1.0, 3.0])
def test_charnov_diet_of_the_injury_study(ability):
    """The three-prey injury study (invented): the batched diet equals
    classic_prey_model's for its capture success at several hunting abilities."""
    predator, prey, grid = grid_of(injury_raw(hunting_ability=ability))
    lam = np.array([[p.encounters(predator) for p in prey]])
    e = np.array([[p.energy_mj for p in prey]])
    h = np.array([[p.handling_days for p in prey]])
    got = rate_maximizing_diets(lam, e, h, grid.capture[None, 0])
    ref = classic_prey_model([p.name for p in prey], lam[0], e[0], h[0], grid.capture[0],
                             [p.fatality_chance for p in prey], predator.background_mortality,
                             predator.effective_daily_cost_mj)
    assert got[0].tolist() == [p.name in ref.rate_maximizing_diet for p in prey]
