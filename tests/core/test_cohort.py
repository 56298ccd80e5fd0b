"""Tests of the released cohort over a planning horizon (MODEL.md section 5).

References used below:
Feller, W. (1968). An Introduction to Probability Theory and Its Applications,
vol. I, 3rd ed. Wiley. Ch. XIV (the ruin problem, ruin by a given time).
Ross, S. M. (1996). Stochastic Processes, 2nd ed. Wiley, ch. 3 (renewal-reward:
long-run rate = expected reward per cycle / expected cycle length).
Wilson, E. B. (1927). Probable inference ... JASA 22, 209-212 (intervals for
simulated proportions).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from chain_simulation import simulate_cohort
from conftest import grid_of, injury_raw
from simulation import wilson_interval

from riskdiet.analysis.predictions import cohort_kills
from riskdiet.core.chain import steady_state
from riskdiet.core.cohort import released_cohort
from riskdiet.core.grid import make_grid
from riskdiet.core.solver import solve_grid
from riskdiet.model import Predator, Prey


def walk(up: float, start: int, levels: int = 400):
    """One risk-free prey met with probability ``up``, capture success 1: a capture
    day nets +1 level, any other day -1; breeding capacity out of reach."""
    predator = Predator(reserve_capacity_mj=float(levels), energy_levels=levels,
                        daily_cost_mj=1.0, start_reserves=start / levels)
    prey = (Prey(name="prey", encounters_per_day=-math.log1p(-up), energy_mj=2.0,
                 capture_success=1.0),)
    grid = make_grid(predator, prey)
    return predator, prey, grid, solve_grid(grid)


def ruin_by_time(up: float, start: int, days: int) -> np.ndarray:
    """P(not yet ruined after t steps), t = 0..days, of a +-1 walk from ``start``
    absorbed at 0, by direct recursion over the walk's position distribution
    (Feller 1968, vol. I, ch. XIV, section 4: ruin probabilities by a given time).
    Written here from the walk itself; shares nothing with riskdiet."""
    width = start + days + 2
    position = np.zeros(width)
    position[start] = 1.0
    alive = [1.0]
    for _ in range(days):
        nxt = np.zeros(width)
        nxt[1:] += up * position[:-1]
        nxt[:-1] += (1.0 - up) * position[1:]
        nxt[0] = 0.0  # absorbed: dead
        position = nxt
        alive.append(position.sum())
    return np.array(alive)


@pytest.mark.parametrize(("days", "expected"), [(10, 0.83197), (50, 0.71857), (200, 0.70385)])
def test_cohort_survival_is_ruin_by_time_of_the_walk(days, expected):
    """For p = 0.6 from 3 levels the chance of being alive after T days is
    0.83197 (T = 10), 0.71857 (50), 0.70385 (200): the issue's values from the
    absorbing chain, checked here against an independent recursion of Feller's
    walk (1968, ch. XIV) and then against the cohort propagation."""
    reference = ruin_by_time(0.6, 3, days)
    assert reference[-1] == pytest.approx(expected, abs=5e-6)
    *_, grid, solution = walk(0.6, 3)
    out = released_cohort(grid, solution, days)
    np.testing.assert_allclose(out.alive_by_day, reference, rtol=1e-10, atol=1e-13)
    assert out.alive_at_horizon == pytest.approx(expected, abs=5e-6)


def test_median_survival_is_the_first_day_at_or_below_one_half():
    """With p = 0.3 from 2 levels the walk drifts down; the median survival is
    the smallest whole day t with S(t) <= 1/2 of the independent recursion
    (MODEL.md section 5 definition); with p = 0.6 over 200 days S stays above
    1/2 and the median is reported as none."""
    reference = ruin_by_time(0.3, 2, 100)
    *_, grid, solution = walk(0.3, 2)
    assert released_cohort(grid, solution, 100).median_survival_days == int(
        np.flatnonzero(reference <= 0.5)[0])
    *_, grid, solution = walk(0.6, 3)
    assert released_cohort(grid, solution, 200).median_survival_days is None


def test_walk_cohort_kills_are_captures_made_by_the_living():
    """Expected kills within T days = sum over days t < T of P(alive at t) x p:
    a capture is made on each day the walker is alive with probability p
    (Feller's walk, as above)."""
    reference = ruin_by_time(0.6, 3, 50)
    *_, grid, solution = walk(0.6, 3)
    out = released_cohort(grid, solution, 50)
    assert out.kills[0] == pytest.approx(0.6 * reference[:-1].sum(), rel=1e-10)


def slow_walk_reference(up: float, mortality: float, start: int, days: int
                       ) -> tuple[np.ndarray, float]:
    """S(t), t = 0..days, and the captures started on days 0..days-1 of a walk
    whose captures take 3.5 days and gain 2 levels, other steps 1 day and lose 2
    levels, with a chance ``mortality`` of dying at the start of each step and
    (1 - mortality)^2.5 of surviving the handling; absorbed (dead) at level 0.
    Direct recursion over the step-start distribution by day (Feller 1968,
    vol. I, ch. XIV: the walk; the clock, a 3.5-day step ending after 3 or 4
    days with chance 1/2 each, alive until it ends, is MODEL.md section 5).
    Written here from the walk itself; shares nothing with riskdiet."""
    width = start + 2 * days + 3
    starts = np.zeros((days + 5, width))
    starts[0, start] = 1.0
    alive, kills = np.zeros(days + 5), 0.0
    for t in range(days + 1):
        alive[t] += starts[t].sum()
        if t == days:
            break
        lives = (1.0 - mortality) * starts[t]
        kills += up * lives.sum()
        captured = up * lives * (1.0 - mortality) ** 2.5
        for length in (3, 4):
            starts[t + length, 2:] += 0.5 * captured[:-2]
            alive[t + 1: t + length] += 0.5 * captured.sum()  # in the middle of the step
        starts[t + 1, :-2] += (1.0 - up) * lives[2:]
        starts[t + 1, 0] = 0.0  # reserves gone: dead
    return alive[: days + 1], kills


def test_cohort_with_long_captures_keeps_small_survival_exact():
    """A walk (Feller 1968, ch. XIV) whose captures take 3.5 days, with 6 %
    mortality per day: S(t) for a whole year, down to S(365) of order 1e-10, and
    the kills agree to 1e-10 relative with the independent recursion above; this
    checks the fractional-handling clock, the mass in transit and that the small
    survival near the horizon keeps its relative precision."""
    levels = 400
    predator = Predator(reserve_capacity_mj=float(levels), energy_levels=levels,
                        daily_cost_mj=2.0, start_reserves=10 / levels,
                        background_mortality=0.06)
    prey = (Prey(name="prey", encounters_per_day=-math.log1p(-0.6), energy_mj=9.0,
                 handling_days=2.5, capture_success=1.0),)
    grid = make_grid(predator, prey)
    solution = solve_grid(grid)
    assert np.all(solution.living_priority(grid) == 0)  # the prey is taken everywhere
    alive, kills = slow_walk_reference(0.6, 0.06, 10, 365)
    out = released_cohort(grid, solution, 365)
    assert alive[-1] < 1e-8
    np.testing.assert_allclose(out.alive_by_day, alive, rtol=1e-10, atol=0)
    assert out.kills[0] == pytest.approx(kills, rel=1e-10)


@pytest.fixture(scope="module")
def injured_case():
    predator, prey, grid = grid_of(injury_raw(background_mortality=0.01))
    return predator, prey, grid, solve_grid(grid)


def test_cohort_matches_individual_based_simulation(injured_case):
    """Kills by prey, breeding events and survival at a 60-day horizon agree
    with an independent individual-based simulation (tests/chain_simulation.py,
    written from MODEL.md sections 2 and 5 with the same clock for fractional
    handling days): proportions inside 99.9 % Wilson (1927) intervals, means
    inside 99.9 % normal intervals (z = 3.29)."""
    predator, prey, grid, solution = injured_case
    horizon = 60
    out = released_cohort(grid, solution, horizon)
    sim = simulate_cohort(predator, prey, solution.priority, 40_000, horizon, seed=11)
    lo, hi = wilson_interval(int(sim["alive"].sum()), sim["alive"].size)
    assert lo <= out.alive_at_horizon <= hi
    for i in range(len(prey)):
        k = sim["kills"][:, i]
        half = 3.29 * k.std(ddof=1) / math.sqrt(k.size)
        assert abs(out.kills[i] - k.mean()) <= half + 1e-12
    b = sim["breeding"]
    assert abs(out.breeding_events - b.mean()) <= 3.29 * b.std(ddof=1) / math.sqrt(b.size)


def test_very_long_horizon_gives_a_newcomers_lifetime_kills(injured_case):
    """Over a horizon far beyond any lifetime, the cohort's kills per animal are
    a newcomer's expected lifetime kills, K_i x expected lifetime (renewal-reward,
    Ross 1996, ch. 3: the long-run rate is kills per life over days per life), and
    its breeding events are the expected breeding events of one life."""
    _, _, grid, solution = injured_case
    chain = steady_state(grid, solution)
    out = released_cohort(grid, solution, 20_000)
    assert out.alive_at_horizon < 1e-12
    np.testing.assert_allclose(out.kills, chain.kills_per_day * chain.expected_lifetime_days,
                               rtol=1e-9)
    assert out.breeding_events == pytest.approx(chain.expected_breeding_events, rel=1e-9)


def test_named_cohort_scales_by_the_animals_released(injured_case):
    """Cohort totals are the per-animal expectations times released_animals
    (linearity of expectation); survivors = animals x S(L); groups sum prey."""
    predator, prey, grid, solution = injured_case
    import dataclasses

    released = dataclasses.replace(predator, released_animals=7)
    named = cohort_kills(released, prey, grid, solution, 90)
    per_animal = released_cohort(grid, solution, 90)
    assert named.animals == 7
    for i, p in enumerate(prey):
        assert named.kills[p.name] == pytest.approx(7 * per_animal.kills[i], rel=1e-14)
    assert named.survivors == pytest.approx(7 * per_animal.alive_at_horizon, rel=1e-14)
    assert sum(named.kills_by_group.values()) == pytest.approx(sum(named.kills.values()))
    default = cohort_kills(predator, prey, grid, solution, 90)
    assert default.animals == predator.population


def test_season_cohort_is_the_season_propagation():
    """In the season currency the cohort's horizon is the season and its
    numbers are those of the season's forward propagation; breeding is null."""
    _, _, grid = grid_of(injury_raw(currency="season", season_days=30))
    solution = solve_grid(grid)
    out = released_cohort(grid, solution, 365)
    assert out.horizon_days == 30
    assert out.breeding_events is None
    assert out.alive_by_day.shape == (31,)
