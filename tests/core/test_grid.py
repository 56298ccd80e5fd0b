"""Tests of the discretised day (grid.py) by brute-force enumeration.

References used below:
MODEL.md section 2 (the day's process) and section 3 (P_i, the chance that
prey i is the best prey met); brute-force enumeration of the 2^P encounter sets
is the independent reference (common practice).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from conftest import grid_of, injury_raw
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.core.choice import ChoiceValues, greedy_sets
from riskdiet.core.grid import attack_probabilities, outcomes, split, targets


def _enumerated(meet: list[float], rank: list[int]) -> list[float]:
    """Chance each prey is attacked: sum over every set of prey met that day."""
    out = [0.0] * len(meet)
    for met in itertools.product([False, True], repeat=len(meet)):
        chance = 1.0
        for p, m in zip(meet, met, strict=True):
            chance *= p if m else 1.0 - p
        wanted = [i for i, m in enumerate(met) if m and rank[i] >= 0]
        if wanted:
            out[min(wanted, key=lambda i: rank[i])] += chance
    return out


@settings(max_examples=40, deadline=None)
@given(st.data())
def test_attack_probabilities_match_enumeration_of_encounter_sets(data):
    """P_i = p_i prod_{l ranked above i} (1 - p_l) equals the enumerated chance
    that i is the best-ranked prey met (independent Poisson encounters,
    MODEL.md section 2; brute force over all 2^P encounter sets)."""
    count = data.draw(st.integers(1, 5))
    meet = data.draw(st.lists(st.floats(0, 1), min_size=count, max_size=count))
    attacked = data.draw(st.lists(st.booleans(), min_size=count, max_size=count))
    order = data.draw(st.permutations(range(count)))
    ranks, r = [-1] * count, 0
    for i in order:
        if attacked[i]:
            ranks[i], r = r, r + 1
    got = attack_probabilities(np.array(meet), np.array(ranks))
    np.testing.assert_allclose(got, _enumerated(meet, ranks), rtol=0, atol=1e-12)


def test_greedy_sets_break_ties_by_listing_order_and_need_a_relative_gain():
    """Equal attack values go to the prey listed first; a value better than
    ignoring by no more than 1e-12 of the larger value is not worth attacking,
    while one far below 1e-12 in absolute terms but relatively better is
    (MODEL.md section 3)."""
    values = np.array([[0.5, 0.7, 0.7, 0.4 + 1e-13, 0.3]])
    cv = ChoiceValues(np.array([0.4]), np.array([0.6]), values, 1.0 - values,
                      np.zeros_like(values))
    assert greedy_sets(cv).tolist() == [[2, 0, 1, -1, -1]]
    tiny = np.array([[2e-80, 1e-80]])
    cv = ChoiceValues(np.array([1e-80]), np.array([1.0]), tiny, 1.0 - tiny,
                      np.zeros_like(tiny))
    assert greedy_sets(cv).tolist() == [[0, -1]]


def test_split_puts_weight_on_the_upper_level_and_clips_at_the_boundaries():
    """Linear interpolation: y = L + w puts 1 - w on L and w on L + 1; y <= 0 is
    level 0 and y >= top the top level (MODEL.md section 2, step 5)."""
    s = split(np.array([-0.3, 0.0, 2.25, 7.0, 9.5]), 8)
    assert s.low.tolist() == [0, 0, 2, 7, 7]
    np.testing.assert_allclose(s.weight, [0.0, 0.0, 0.25, 0.0, 1.0])
    v = np.arange(9) ** 2.0
    np.testing.assert_allclose(s.value(v), [0, 0, 0.75 * 4 + 0.25 * 9, 49, 64])


@pytest.mark.parametrize("currency", ["breeding", "season"])
def test_outcomes_and_death_account_for_every_step(currency):
    """Outcome probabilities plus the chance of dying sum to one from every state.

    Death is background mortality mu_k, an attack that kills (P_i f_i), or
    dying during handling ((1 - (1 - mu_k)^h_i) after a capture), summed by
    hand from MODEL.md section 2 steps 1-3.
    """
    _, _, grid = grid_of(injury_raw(currency=currency))
    rng = np.random.default_rng(7)
    priority = np.stack([rng.permutation(grid.n_prey) for _ in range(2 * grid.n_living)])
    priority = priority.reshape(2, grid.n_living, grid.n_prey)
    priority[:, ::3, 1] = -1  # some prey ignored at some levels
    attack = attack_probabilities(grid.encounter_prob, priority)
    parts = outcomes(grid, targets(grid), attack)
    total = sum(o.prob.sum(-1) for o in parts)
    mu = grid.mortality[:, None]
    h = grid.handling
    f, s = grid.fatality, grid.capture[:, None, :]
    dying_on_handling = 1.0 - (1.0 - mu[..., None]) ** h
    death = mu + (1 - mu) * (attack * (f + (1 - f) * s * dying_on_handling)).sum(-1)
    np.testing.assert_allclose(total + death, 1.0, rtol=0, atol=1e-13)
    for o in parts:
        assert np.all(o.prob >= 0)
        assert np.all((o.healthy_share >= 0) & (o.healthy_share <= 1))


def test_grid_units_follow_the_level_size():
    """Energies in grid units are MJ divided by the level size R/n; the season
    currency rounds handling to whole days, halves upwards (MODEL.md sections 2-3)."""
    predator, prey, grid = grid_of(injury_raw(currency="season"))
    step = predator.reserve_capacity_mj / predator.energy_levels
    assert grid.step_mj == pytest.approx(step)
    np.testing.assert_allclose(grid.gain, [p.energy_mj / step for p in prey])
    np.testing.assert_allclose(grid.cost, [1.3 / step, 1.75 / step])
    assert grid.handling.tolist() == [0.0, 1.0, 3.0]  # 0.2, 1.4, 2.6 days
    _, _, breeding = grid_of(injury_raw())
    np.testing.assert_allclose(breeding.handling, [0.2, 1.4, 2.6])
    assert breeding.top == 27 and breeding.living.tolist() == list(range(1, 27))
