"""Which attack set is chosen, and policy iteration that always ends right.

References used below:
Grinstead, C. M. & Snell, J. L. (1997). Introduction to Probability, 2nd ed.
AMS, ch. 11, section 11.2 (absorbing chains: B = N R, N = (I - Q)^-1).
Puterman, M. L. (1994). Markov Decision Processes. Wiley, sections 6.4 and 7.2
(policy iteration that keeps the incumbent unless strictly better terminates).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import injury_raw
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.analysis import study as analysis
from riskdiet.core import solver
from riskdiet.core.chain import steady_state
from riskdiet.core.choice import better
from riskdiet.core.grid import make_grid
from riskdiet.errors import SolveError
from riskdiet.model import Predator, Prey
from riskdiet.validation import build_study


def walk_chance(levels: int, gain: int, cost: int, up: float, breed: int
                ) -> tuple[np.ndarray, np.ndarray]:
    """Chance of breeding before starving, and of starving first, for the plain
    walk (+gain - cost on a capture day, -cost otherwise; 0 absorbing as death,
    >= breed absorbing as breeding), levels 1..breed-1, from the fundamental
    matrix B = N R (Grinstead & Snell 1997, ch. 11). Written here from the walk
    alone, sharing nothing with riskdiet."""
    states = breed - 1
    q = np.zeros((states, states))
    r = np.zeros((states, 2))  # columns: breeding, death
    for j in range(1, breed):
        for target, chance in ((j + gain - cost, up), (j - cost, 1.0 - up)):
            if target <= 0:
                r[j - 1, 1] += chance
            elif target >= breed:
                r[j - 1, 0] += chance
            else:
                q[j - 1, target - 1] += chance
    b = np.linalg.solve(np.eye(states) - q, r)
    return b[:, 0], b[:, 1]


def walk_grid(levels: int, gain: int, encounters: float, success: float = 1.0):
    predator = Predator(reserve_capacity_mj=float(levels), energy_levels=levels,
                        daily_cost_mj=1.0)
    prey = (Prey(name="prey", encounters_per_day=encounters, energy_mj=float(gain),
                 capture_success=success),)
    return make_grid(predator, prey)


@pytest.mark.parametrize(("levels", "gain", "encounters"), [(60, 3, 1.0), (30, 8, 2.0)])
def test_saturating_studies_give_the_absorbing_chain_answer(levels, gain, encounters):
    """The two cases that used to cycle (chance of breeding printed as 0.00) or
    stop on a singular system: no background mortality and ample riskless prey.
    V and U = 1 - V equal the plain walk's absorption probabilities (Grinstead &
    Snell 1997, ch. 11) to 1e-9 relative, and the long-run kill rate is
    p_meet x capture success, the closed form when the animal practically
    never dies (every day it meets the prey it captures it)."""
    grid = walk_grid(levels, gain, encounters)
    sol = solver.solve_grid(grid)
    up = -math.expm1(-encounters)
    v, u = walk_chance(levels, gain, 1, up, grid.top)
    np.testing.assert_allclose(sol.fitness[0, 1:grid.top], v, rtol=1e-9)
    np.testing.assert_allclose(sol.complement[0, 1:grid.top], u, rtol=1e-9)
    assert sol.fitness_at_start > 0.99
    chain = steady_state(grid, sol)
    assert chain.kills_per_day[0] == pytest.approx(up, rel=1e-9)
    assert chain.lifetime_note is not None


@settings(max_examples=30, deadline=None)
@given(levels=st.integers(12, 80), gain=st.integers(2, 9), encounters=st.floats(0.3, 4.0))
def test_risk_free_walks_match_the_absorbing_chain(levels, gain, encounters):
    """One riskless prey that pays for its day (gain > cost), zero background
    mortality: V and U at every level equal the plain walk's absorption
    probabilities B = N R (Grinstead & Snell 1997, ch. 11) to 1e-9 relative,
    and the prey is attacked at every level."""
    grid = walk_grid(levels, gain, encounters)
    sol = solver.solve_grid(grid)
    up = -math.expm1(-encounters)
    v, u = walk_chance(levels, gain, 1, up, grid.top)
    np.testing.assert_allclose(sol.fitness[:, 1:grid.top], np.stack([v, v]), rtol=1e-9)
    np.testing.assert_allclose(sol.complement[:, 1:grid.top], np.stack([u, u]), rtol=1e-9,
                               atol=1e-300)
    assert (sol.priority[0, 1:grid.top, 0] == 0).all()


HARSH = dict(reserve_capacity_mj=100.0, daily_cost_mj=1.0, background_mortality=0.5,
             start_reserves=0.1)
HARE = dict(name="hare", encounters_per_day=1.5, energy_mj=2.0, capture_success=0.35)


def test_a_harsh_study_still_attacks_its_riskless_prey_everywhere():
    """Values far below 1e-12 still decide (relative tolerance, MODEL.md section
    3): with a daily mortality of 0.5 fitness is ~1e-76, yet attacking the
    riskless hare beats ignoring it at every level, so it is attacked there and
    its long-run kills are p_meet x success per day alive (common practice:
    a riskless profitable prey is always worth taking)."""
    grid = make_grid(Predator(**HARSH), (Prey(**HARE),))
    sol = solver.solve_grid(grid)
    assert (sol.priority[:, grid.living, 0] >= 0).all()
    chain = steady_state(grid, sol)
    # kills are counted for animals alive at the start of the day
    assert chain.kills_per_day[0] == pytest.approx(
        0.5 * -math.expm1(-1.5) * 0.35, rel=1e-9)


def test_a_long_season_keeps_foraging_where_values_underflow():
    """A 3,000-day season makes every value underflow to 0; where no choice is
    better, the default (reserve-maximising) set is kept, so the hare is still
    attacked on day 0 and the season's kills are positive, not zero."""
    pred = Predator(**{**HARSH, "background_mortality": 0.01}, currency="season",
                    season_days=3000)
    grid = make_grid(pred, (Prey(**HARE),))
    sol = solver.solve_season(grid)
    assert (sol.priority[0, grid.living, 0] >= 0).all()
    from riskdiet.core.season_chain import season_outlook

    assert season_outlook(grid, sol).expected_kills[0] > 1.0


def test_better_uses_the_complement_near_one_and_a_relative_tolerance():
    """MODEL.md section 3: above 1/2 compare on U (1 - 1e-13 vs 1 - 1e-15 is a
    real difference), below on V with tolerance 1e-12 of the larger value
    (1e-80 vs 2e-80 is a real difference; equal values never are)."""
    assert better(1 - 1e-15, 1e-15, 1 - 1e-13, 1e-13)
    assert not better(1 - 1e-13, 1e-13, 1 - 1e-15, 1e-15)
    assert better(2e-80, 1.0, 1e-80, 1.0)
    assert not better(1e-80, 1.0, 1e-80, 1.0)
    assert not better(0.3 + 1e-14, 0.7, 0.3, 0.7)


def _study(fatality: float, skill=None) -> dict:
    prey = {"name": "deer", "encounters_per_day": 0.8, "energy_mj": 12.0, "handling_days": 1.0,
            "capture_success": 0.4, "fatality_chance": fatality}
    if skill is not None:
        prey["skill_dependent"] = skill
    return {"predator": {"reserve_capacity_mj": 40.0, "energy_levels": 40, "daily_cost_mj": 2.0,
                         "hunting_ability": 2.0, "background_mortality": 0.002},
            "prey": [prey],
            "scenarios": [{"name": "riskier", "changes": [
                {"field": "fatality_chance", "prey": "deer", "change": "set", "value": 0.001}]}]}


def test_skill_dependence_default_comes_from_the_baseline():
    """A blank skill_dependent is fixed from the baseline inputs (MODEL.md
    section 1): a scenario that makes a riskless prey slightly fatal does not
    make it skill-dependent, so fitness cannot rise (it used to by 207 %)."""
    result = analysis.solve(build_study(_study(0.0)))
    base, riskier = result.scenarios
    assert riskier.fitness_at_start <= base.fitness_at_start
    assert not riskier.prey[0].skill_dependent


def test_a_solve_that_does_not_settle_is_an_error_naming_the_scenario(monkeypatch):
    """Reaching the iteration limit is an error that names the scenario, never
    numbers shown as valid (MODEL.md section 3)."""
    monkeypatch.setattr(solver.solve_breeding, "__defaults__", (1,))
    raw = injury_raw()  # needs four rounds
    with pytest.raises(SolveError, match=r"scenario .baseline.*did not settle"):
        analysis.solve(build_study(raw))
