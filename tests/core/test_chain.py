"""Tests of the Markov-chain kill predictions (riskdiet.core.chain, MODEL.md section 5).

References used below:
Grinstead, C. M. & Snell, J. L. (1997) Introduction to Probability, 2nd ed.,
American Mathematical Society, ch. 11 (absorbing chains; example 11.13, the
drunkard's walk on 0..4).
Feller, W. (1968) An Introduction to Probability Theory and Its Applications,
vol. I, 3rd ed., Wiley, ch. XIV (classical ruin problem: ruin probability
section 2, expected duration eq. 3.4).
Ross, S. M. (1996) Stochastic Processes, 2nd ed., Wiley, ch. 3 (renewal-reward
theorem: long-run rate = expected reward per cycle / expected cycle length).
Kemeny, J. G. & Snell, J. L. (1960) Finite Markov Chains, Van Nostrand
(stationary distribution as the solution of pi M = pi, sum pi = 1).
The individual-based simulations live in tests/chain_simulation.py, written
from MODEL.md independently of riskdiet.core.grid and riskdiet.core.chain.
"""

from __future__ import annotations

import dataclasses
import math

import chain_simulation as sim
import numpy as np
import pytest
import scipy.linalg
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from riskdiet.core.chain import (
    _solver_step,
    absorbing_summary,
    always_absorbed,
    chain_step,
    kill_rates,
    steady_state,
)
from riskdiet.core.grid import make_grid
from riskdiet.core.season_chain import season_outlook
from riskdiet.core.solver import solve_grid
from riskdiet.model import Predator, Prey

# --- published fixtures -------------------------------------------------------

# Grinstead & Snell (1997), example 11.13: transient states 1, 2, 3 of the
# drunkard's walk on 0..4 (step +-1 with probability 1/2), absorbing 0 and 4.
WALK_Q = np.array([[0.0, 0.5, 0.0], [0.5, 0.0, 0.5], [0.0, 0.5, 0.0]])
WALK_R = np.array([[0.5, 0.0], [0.0, 0.0], [0.0, 0.5]])
WALK_N = np.array([[1.5, 1.0, 0.5], [1.0, 2.0, 1.0], [0.5, 1.0, 1.5]])
WALK_T = np.array([3.0, 4.0, 3.0])
WALK_B = np.array([[0.75, 0.25], [0.5, 0.5], [0.25, 0.75]])


def feller_duration(z: int, a: int, p: float) -> float:
    """Feller (1968) vol. I, ch. XIV, eq. 3.4: expected duration of the ruin game."""
    q = 1.0 - p
    if math.isclose(p, q):
        return float(z * (a - z))
    ratio = q / p
    return z / (q - p) - a / (q - p) * (1.0 - ratio**z) / (1.0 - ratio**a)


def feller_ruin(z: int, a: int, p: float) -> float:
    """Feller (1968) vol. I, ch. XIV, section 2: probability of ruin from z."""
    q = 1.0 - p
    if math.isclose(p, q):
        return 1.0 - z / a
    ratio = q / p
    return (ratio**a - ratio**z) / (ratio**a - 1.0)


# --- scenarios (invented, illustrative) ---------------------------------------


def walk_study(levels: int, win: float, start: int, restart: int | None = None):
    """A riskdiet predator whose reserves follow a simple random walk.

    One low-risk prey, met with probability 1/2 a day (or more), no handling,
    no mortality; the daily cost is 1 level and a capture gains 2 levels, so a
    day is +1 level with probability ``win`` = meet x capture success and -1
    level otherwise. Breeding level J = ``levels``.
    """
    meet = 0.5 if win <= 0.5 else 0.8
    predator = Predator(reserve_capacity_mj=float(levels), energy_levels=levels,
                        daily_cost_mj=1.0, background_mortality=0.0, breeding_threshold=1.0,
                        start_reserves=start / levels,
                        reserves_after_breeding=(start if restart is None else restart) / levels)
    prey = (Prey(name="walk prey", energy_mj=2.0, handling_days=0.0, capture_success=win / meet,
                 encounters_per_day=-math.log1p(-meet), skill_dependent=False),)
    return predator, prey


def rich_predator(**changes) -> Predator:
    base = Predator(reserve_capacity_mj=30.0, energy_levels=30, daily_cost_mj=1.7,
                    background_mortality=0.002, injured_capture_factor=0.6,
                    injured_extra_cost_mj=0.45, injured_extra_mortality=0.008,
                    recovery_days=5.5, currency="breeding", breeding_threshold=0.9,
                    start_reserves=0.5, reserves_after_breeding=0.35, season_days=40,
                    season_reserve_threshold=0.6)
    return dataclasses.replace(base, **changes)


RICH_PREY = (
    Prey(name="small prey", energy_mj=3.3, handling_days=0.25, capture_success=0.55,
         encounters_per_day=1.1),
    Prey(name="large prey", energy_mj=11.7, handling_days=1.6, capture_success=0.4,
         injury_chance=0.25, injury_energy_mj=2.3, fatality_chance=0.12,
         encounters_per_day=0.45),
    Prey(name="medium prey", energy_mj=6.1, handling_days=0.7, capture_success=0.35,
         injury_chance=0.06, injury_energy_mj=1.1, fatality_chance=0.004,
         encounters_per_day=0.35, skill_dependent=False),
    Prey(name="tiny prey", energy_mj=1.0, handling_days=0.5, capture_success=0.8,
         encounters_per_day=0.9),
)


@pytest.fixture(scope="module")
def rich_breeding():
    predator = rich_predator()
    grid = make_grid(predator, RICH_PREY)
    solution = solve_grid(grid)
    return predator, grid, solution, steady_state(grid, solution)


@pytest.fixture(scope="module")
def rich_season():
    predator = rich_predator(currency="season")
    grid = make_grid(predator, RICH_PREY)
    solution = solve_grid(grid)
    return predator, grid, solution, season_outlook(grid, solution)


def reset_chain(grid, step) -> np.ndarray:
    """Dense chain with both resets: deaths to (j0, H), breeding to (j_rho, H)."""
    full = step.transitions.toarray()
    full[:, grid.after_breeding_level - 1] += step.breed
    full[:, grid.start_level - 1] += step.deaths.sum(0)
    return full


# --- absorbing-chain algebra --------------------------------------------------


def test_absorbing_summary_reproduces_drunkards_walk():
    """N, t = N 1 and B = N R of the drunkard's walk on 0..4 (Grinstead & Snell
    1997, ch. 11, example 11.13), in full and row by row."""
    full = absorbing_summary(sp.csr_matrix(WALK_Q), WALK_R)
    np.testing.assert_allclose(full.visits, WALK_N, atol=1e-14)
    np.testing.assert_allclose(full.time, WALK_T, atol=1e-14)
    np.testing.assert_allclose(full.absorption, WALK_B, atol=1e-14)
    for start in range(3):
        row = absorbing_summary(WALK_Q, WALK_R, start=start)
        np.testing.assert_allclose(row.visits, WALK_N[start], atol=1e-14)
        assert row.time == pytest.approx(WALK_T[start], abs=1e-14)
        np.testing.assert_allclose(row.absorption, WALK_B[start], atol=1e-14)


def test_absorbing_summary_weights_time_per_visit():
    """Expected time with a duration per visit is N d (Kemeny & Snell 1960,
    fundamental matrix), here with d = (1, 2, 3) on the walk of Grinstead &
    Snell (1997) example 11.13."""
    d = np.array([1.0, 2.0, 3.0])
    row = absorbing_summary(WALK_Q, WALK_R, start=0, duration=d)
    assert row.time == pytest.approx(WALK_N[0] @ d, abs=1e-14)


def test_always_absorbed_detects_a_closed_set():
    """A chain that can stay among transient states forever has no finite
    fundamental matrix (Kemeny & Snell 1960): state 2 of Q below loops on
    itself with no exit, so from 0 absorption is not certain; from the
    drunkard's walk (Grinstead & Snell 1997, example 11.13) it is."""
    trapped = sp.csr_matrix(np.array([[0.0, 0.5, 0.5], [0.0, 0.0, 0.0], [0.0, 0.0, 1.0]]))
    assert not always_absorbed(trapped, np.array([0.0, 1.0, 0.0]), 0)
    assert always_absorbed(trapped, np.array([0.0, 1.0, 0.0]), 1)
    assert always_absorbed(sp.csr_matrix(WALK_Q), WALK_R.sum(1), 1)


# --- riskdiet grids that are textbook walks -----------------------------------


def test_grid_chain_is_the_drunkards_walk():
    """A riskdiet predator with cost 1 level, gain 2 levels, capture chance 1/2
    a day, J = 4 and no mortality is the drunkard's walk on 0..4 (Grinstead &
    Snell 1997, example 11.13): its healthy transitions are Q, its exits R, and
    the fundamental-matrix quantities are N, t and B."""
    grid = make_grid(*walk_study(4, 0.5, start=2))
    solution = solve_grid(grid)
    step = chain_step(grid, solution.living_priority(grid))
    healthy = slice(0, 3)
    np.testing.assert_allclose(step.transitions.toarray()[healthy, healthy], WALK_Q, atol=1e-15)
    exits = np.column_stack([step.deaths[0], step.breed])[healthy]
    np.testing.assert_allclose(exits, WALK_R, atol=1e-15)
    walk = absorbing_summary(step.transitions[healthy, healthy], exits)
    np.testing.assert_allclose(walk.visits, WALK_N, atol=1e-12)
    np.testing.assert_allclose(walk.time, WALK_T, atol=1e-12)
    np.testing.assert_allclose(walk.absorption, WALK_B, atol=1e-12)


@pytest.mark.parametrize("start", [1, 2])
def test_walk_steady_state_follows_from_fundamental_matrix(start):
    """Life history of the walk predator (Grinstead & Snell 1997, example
    11.13: N, t, B), breeding continuing at level 2. First breeding from j0 is
    B[j0, 4]; a life is a first passage t[j0] plus, on breeding, a life from 2,
    so E[L_2] = t_2 / B[2, 0] and E[L_j0] = t[j0] + B[j0, 4] E[L_2]; breeding
    events likewise. By the renewal-reward theorem (Ross 1996, ch. 3) the
    stationary distribution is the visits of one life normalised and the death
    rate is 1 / E[L]; every step captures with chance 1/2, one day each."""
    grid = make_grid(*walk_study(4, 0.5, start=start, restart=2))
    solution = solve_grid(grid)
    ss = steady_state(grid, solution)
    i = start - 1
    life_2 = WALK_T[1] / WALK_B[1, 0]
    events_2 = WALK_B[1, 1] / WALK_B[1, 0]
    lifetime = WALK_T[i] + WALK_B[i, 1] * life_2
    visits = WALK_N[i] + WALK_B[i, 1] * WALK_N[1] / WALK_B[1, 0]
    assert ss.first_breeding_probability == pytest.approx(WALK_B[i, 1], abs=1e-12)
    assert ss.first_breeding_probability == pytest.approx(solution.fitness_at_start, abs=1e-12)
    assert ss.death_before_breeding["starvation"] == pytest.approx(WALK_B[i, 0], abs=1e-12)
    assert ss.death_before_breeding["attack"] == 0.0
    assert ss.death_before_breeding["other"] == 0.0
    assert ss.expected_lifetime_days == pytest.approx(lifetime, rel=1e-12)
    assert ss.expected_breeding_events == pytest.approx(WALK_B[i, 1] * (1 + events_2), rel=1e-12)
    np.testing.assert_allclose(ss.stationary[0], visits / visits.sum(), atol=1e-12)
    np.testing.assert_allclose(ss.stationary[1], 0.0, atol=1e-15)
    np.testing.assert_allclose(ss.kills_per_day, [0.5], atol=1e-12)
    assert ss.daily_survival == pytest.approx(1.0 - 1.0 / lifetime, abs=1e-12)
    assert ss.share_of_time_injured == 0.0


@pytest.mark.parametrize("win", [0.3, 0.5, 0.65])
def test_gamblers_ruin_duration_and_lifetime(win):
    """With one low-risk prey and no mortality, the steps to first breeding or
    starvation are the expected duration of the ruin game, and the first
    breeding chance its complement of ruin (Feller 1968, vol. I, ch. XIV,
    eq. 3.4 and section 2; a = J = 10, capital z = reserve level). With
    breeding continuing at z, a life is a geometric number of games:
    E[L] = D_z / q_z and E[breeding events] = (1 - q_z) / q_z (Ross 1996, ch. 3)."""
    a = 10
    grid = make_grid(*walk_study(a, win, start=5))
    solution = solve_grid(grid)
    step = chain_step(grid, solution.living_priority(grid))
    exits = np.column_stack([step.breed, step.deaths.T])
    games = absorbing_summary(step.transitions, exits)
    for z in range(1, a):
        assert games.time[z - 1] == pytest.approx(feller_duration(z, a, win), rel=1e-11)
        assert games.absorption[z - 1, 1] == pytest.approx(feller_ruin(z, a, win), rel=1e-11)
    for z in (2, 5, 8):
        g = make_grid(*walk_study(a, win, start=z))
        ss = steady_state(g, solve_grid(g))
        ruin = feller_ruin(z, a, win)
        assert ss.first_breeding_probability == pytest.approx(1.0 - ruin, rel=1e-11)
        assert ss.expected_lifetime_days == pytest.approx(feller_duration(z, a, win) / ruin,
                                                          rel=1e-11)
        assert ss.expected_breeding_events == pytest.approx((1.0 - ruin) / ruin, rel=1e-11)


def test_immortal_lineage_has_infinite_lifetime():
    """A predator that meets its prey every day (p = 1 in floating point),
    always captures it (+2 levels net) and has no mortality never dies: from
    j0 = j_rho = 5 with J = 10 it visits 5, 7, 9 and breeds, forever. Lifetime
    and breeding events are infinite; the long run is that 3-step cycle, one
    kill a day (brute-force enumeration of the deterministic path). The
    always-attack policy is set by hand (on a solution of the same grid shape)."""
    predator = Predator(reserve_capacity_mj=10.0, energy_levels=10, daily_cost_mj=1.0,
                        start_reserves=0.5, reserves_after_breeding=0.5)
    prey = Prey(name="sure prey", energy_mj=3.0, capture_success=1.0, encounters_per_day=50.0,
                skill_dependent=False)
    grid = make_grid(predator, (prey,))
    assert grid.encounter_prob[0] == 1.0
    solution = solve_grid(make_grid(predator, (dataclasses.replace(prey, encounters_per_day=2.0),)))
    attack_all = np.zeros_like(solution.priority)
    ss = steady_state(grid, dataclasses.replace(solution, priority=attack_all))
    assert ss.expected_lifetime_days == math.inf
    assert ss.expected_breeding_events == math.inf
    assert ss.first_breeding_probability == pytest.approx(1.0, abs=1e-15)
    expected = np.zeros(grid.n_living)
    expected[[4, 6, 8]] = 1.0 / 3.0
    np.testing.assert_allclose(ss.stationary[0], expected, atol=1e-14)
    np.testing.assert_allclose(ss.kills_per_day, [1.0], atol=1e-14)
    assert ss.daily_survival == 1.0


# --- exact identities on a rich scenario --------------------------------------


def test_step_probabilities_add_up(rich_breeding):
    """From every living state, the next state, breeding and the three causes
    of death exhaust the possibilities (law of total probability; MODEL.md
    section 2 lists the outcomes)."""
    _, grid, solution, _ = rich_breeding
    step = chain_step(grid, solution.living_priority(grid))
    total = np.asarray(step.transitions.sum(1)).ravel() + step.breed + step.deaths.sum(0)
    np.testing.assert_allclose(total, 1.0, atol=1e-13)
    assert (step.deaths >= 0).all()
    assert (step.deaths[1] > 0).any() and (step.deaths[0] > 0).any()


def test_first_breeding_and_death_causes(rich_breeding):
    """First breeding plus the three causes of death before it sum to 1, first
    breeding equals the solver's fitness V(j0, healthy) (both are the
    absorption probability into breeding; Grinstead & Snell 1997, ch. 11,
    B = N R), and the split agrees with following 200 000 simulated newcomers
    (independent code) within a 99.9 % binomial interval."""
    predator, _, solution, ss = rich_breeding
    causes = ss.death_before_breeding
    assert set(causes) == {"starvation", "attack", "other"}
    assert ss.first_breeding_probability + sum(causes.values()) == pytest.approx(1.0, abs=1e-12)
    assert ss.first_breeding_probability == pytest.approx(solution.fitness_at_start, abs=1e-12)
    count = 200_000
    shares = sim.simulate_first_breeding(predator, RICH_PREY, solution.priority, count, seed=7)
    exact = np.array([ss.first_breeding_probability, causes["starvation"], causes["attack"],
                      causes["other"]])
    z = stats.norm.ppf(1 - 0.001 / 2)
    half = z * np.sqrt(exact * (1 - exact) / count)
    assert np.all(exact > 0.02)
    assert np.all(np.abs(shares - exact) <= half), (shares, exact, half)


def test_stationary_solves_the_balance_equations(rich_breeding):
    """pi is the unique solution of pi M = pi, sum pi = 1 for the chain with
    both resets (Kemeny & Snell 1960), computed here as scipy's null space of
    M^T - I; deaths per day are 1 / E[lifetime] and breeding events per day are
    E[events] / E[lifetime] (renewal-reward theorem, Ross 1996, ch. 3)."""
    _, grid, solution, ss = rich_breeding
    step = chain_step(grid, solution.living_priority(grid))
    full = reset_chain(grid, step)
    basis = scipy.linalg.null_space(full.T - np.eye(full.shape[0]))
    assert basis.shape[1] == 1
    reference = basis[:, 0] / basis[:, 0].sum()
    np.testing.assert_allclose(ss.stationary.ravel(), reference, atol=1e-12)
    pi = ss.stationary.ravel()
    mean_days = pi @ ss.days_per_step.ravel()
    assert (1 - ss.daily_survival) * ss.expected_lifetime_days == pytest.approx(1.0, rel=1e-10)
    assert (pi @ step.breed) / mean_days == pytest.approx(
        ss.expected_breeding_events / ss.expected_lifetime_days, rel=1e-10)


@pytest.mark.parametrize("levels", [30, 240])
def test_kill_rates_alone_match_the_balance_equations(levels):
    """K_i = pi P(kill i | .) / pi E[days | .] with pi the solution of pi M = pi,
    sum pi = 1 for the chain with both resets (Kemeny & Snell 1960), pi computed
    here as scipy's null space of M^T - I; riskdiet's one-solve shortcut for the
    grid check must give the same rates as the steady state, with the policy
    solve's sparse LU (30 levels) and with its BiCGSTAB (240 levels)."""
    grid = make_grid(rich_predator(energy_levels=levels), RICH_PREY)
    solution = solve_grid(grid)
    step = chain_step(grid, solution.living_priority(grid))
    full = reset_chain(grid, step)
    basis = scipy.linalg.null_space(full.T - np.eye(full.shape[0]))
    assert basis.shape[1] == 1
    pi = basis[:, 0] / basis[:, 0].sum()
    reference = pi @ step.kill_prob / (pi @ step.days)
    rates = kill_rates(grid, solution)
    np.testing.assert_allclose(rates, reference, rtol=1e-10)
    np.testing.assert_allclose(rates, steady_state(grid, solution).kills_per_day, rtol=1e-13)


def test_kill_rates_of_an_immortal_lineage_are_its_cycle():
    """The predator of the immortal-lineage test above, solved as it is (it
    attacks its sure prey everywhere), never dies: the long run is the 3-step
    cycle 5, 7, 9 with one kill a day (brute-force enumeration of the
    deterministic path)."""
    predator = Predator(reserve_capacity_mj=10.0, energy_levels=10, daily_cost_mj=1.0,
                        start_reserves=0.5, reserves_after_breeding=0.5)
    prey = Prey(name="sure prey", energy_mj=3.0, capture_success=1.0, encounters_per_day=50.0,
                skill_dependent=False)
    grid = make_grid(predator, (prey,))
    solution = solve_grid(grid)
    assert solution.complement[0, grid.after_breeding_level] < 1e-9
    np.testing.assert_allclose(kill_rates(grid, solution), [1.0], atol=1e-14)


def test_kill_probabilities_follow_model_formula(rich_breeding):
    """P(kill i | s) = (1 - mu_k) P_i (1 - f_i) s_i^k with P_i the chance that i
    is the best prey met (MODEL.md sections 3 and 5), recomputed here by
    enumerating every subset of prey met (brute force), and
    E[days | s] = 1 + sum_i P(kill i | s) h_i."""
    predator, grid, solution, ss = rich_breeding
    par = sim.parameters(predator, RICH_PREY)
    n_prey = len(RICH_PREY)
    for k in (0, 1):
        for idx, level in enumerate(grid.living):
            ranks = solution.priority[k, level]
            expected = np.zeros(n_prey)
            for mask in range(1 << n_prey):
                met = [(mask >> i) & 1 for i in range(n_prey)]
                chance = np.prod([par.meet[i] if met[i] else 1 - par.meet[i]
                                  for i in range(n_prey)])
                options = [i for i in range(n_prey) if met[i] and ranks[i] >= 0]
                if options:
                    best = min(options, key=lambda i: ranks[i])
                    expected[best] += chance * (1 - par.mortality[k]) * (
                        1 - par.fatality[best]) * par.success[k, best]
            np.testing.assert_allclose(ss.kill_prob[k, idx], expected, atol=1e-14)
    np.testing.assert_allclose(ss.days_per_step, 1 + ss.kill_prob @ par.handling, atol=1e-14)


# --- agreement with the individual-based simulation ---------------------------


def test_stationary_rates_match_simulation(rich_breeding):
    """Kill rates per predator-day, share of time injured, mean reserves and
    daily deaths agree with a long individual-based simulation (independent
    code: 20 000 lineages, 1 200 steps after 300 burn-in steps, deaths replaced
    by newcomers, breeding continuing at j_rho) within 99.9 % batch-means
    confidence intervals over 20 independent batches (Student t). Injuries,
    fractional energies and fractional handling times are all active."""
    predator, grid, solution, ss = rich_breeding
    batches = 20
    out = sim.simulate_breeding(predator, RICH_PREY, solution.priority, individuals=20_000,
                                steps=1_500, burn_in=300, batches=batches, seed=11)
    days = out["days"]
    checks = {
        "kills": (out["kills"] / days[:, None], ss.kills_per_day),
        "injured": (out["injured_days"] / days, ss.share_of_time_injured),
        "reserves": (out["level_days"] / days, ss.mean_reserves_levels),
        "deaths": (out["deaths"] / days, 1 - ss.daily_survival),
        "breeding": (out["breeding"] / days, ss.expected_breeding_events
                     / ss.expected_lifetime_days),
    }
    t = stats.t.ppf(1 - 0.001 / 2, batches - 1)
    for name, (per_batch, exact) in checks.items():
        mean = per_batch.mean(0)
        half = t * per_batch.std(0, ddof=1) / np.sqrt(batches)
        assert np.all(half < 0.02 * np.abs(exact)), name  # the check has teeth
        assert np.all(np.abs(mean - exact) <= half), (name, mean, exact, half)
    assert ss.share_of_time_injured > 0.05
    assert (solution.priority[:, grid.living] < 0).any()  # some prey ignored somewhere


def test_season_matches_simulation(rich_season):
    """Expected kills over the season, survival to day T, the chance of ending
    above the threshold, survival on every day and mean reserves of the
    living agree with 200 000 simulated newcomers (independent code) within
    99.9 % normal intervals (Bonferroni-corrected over days)."""
    predator, grid, solution, so = rich_season
    count = 200_000
    out = sim.simulate_season(predator, RICH_PREY, solution.priority_by_day, count, seed=5)
    z = stats.norm.ppf(1 - 0.001 / 2)
    kills = out["kills"]
    half = z * kills.std(0, ddof=1) / np.sqrt(count)
    assert np.all(np.abs(kills.mean(0) - so.expected_kills) <= half)
    assert np.all(half < 0.05 * so.expected_kills)
    goal = grid.terminal_level
    for share, exact in ((out["alive"].mean(), so.survival_to_end),
                         ((out["alive"] & (out["level"] >= goal)).mean(),
                          so.chance_above_threshold)):
        assert 0.05 < exact < 0.95
        assert abs(share - exact) <= z * math.sqrt(exact * (1 - exact) / count)
    days = grid.season_days + 1
    z_days = stats.norm.ppf(1 - 0.001 / (2 * days))
    alive = out["alive_by_day"]
    p = so.survival_by_day
    assert np.all(np.abs(alive.mean(1) - p) <= z_days * np.sqrt(p * (1 - p) / count) + 1e-15)
    living = out["level_by_day"]
    for day in range(days):
        lv = living[day][alive[day]]
        half = z_days * lv.std(ddof=1) / math.sqrt(lv.size) if lv.size > 1 else 0.0
        assert abs(lv.mean() - so.mean_reserves_by_day[day]) <= half + 1e-12, day
    assert so.survival_by_day[0] == 1.0
    assert np.all(np.diff(so.survival_by_day) <= 1e-15)
    np.testing.assert_allclose(so.kills_by_day.sum(0), so.expected_kills, rtol=1e-14)


# --- season chain against the season solver -----------------------------------


@pytest.mark.parametrize("season_days", [3, 40])
def test_season_threshold_chance_equals_solver_fitness(season_days):
    """Backward induction computes V_0 = E[F(state on day T)] under the
    day-by-day policy (Mangel & Clark 1988, Dynamic Modeling in Behavioral
    Ecology, ch. 2), so forward propagation of the state distribution must give
    the same number: the chance of being alive above the threshold on day T
    equals V_0(j0, healthy), including steps that run past T (3-day season,
    handling up to 2 days)."""
    predator = rich_predator(currency="season", season_days=season_days)
    grid = make_grid(predator, RICH_PREY)
    solution = solve_grid(grid)
    so = season_outlook(grid, solution)
    assert so.chance_above_threshold == pytest.approx(solution.fitness_at_start, abs=1e-10)
    assert so.chance_above_threshold <= so.survival_to_end + 1e-15
    assert so.survival_by_day[-1] == pytest.approx(so.survival_to_end, abs=1e-15)


# --- invariants on random studies ---------------------------------------------


@st.composite
def random_study(draw):
    n = draw(st.integers(10, 24))
    predator = Predator(
        reserve_capacity_mj=10.0, energy_levels=n,
        daily_cost_mj=draw(st.floats(0.3, 2.0)),
        background_mortality=draw(st.floats(0.0, 0.05)),
        injured_capture_factor=draw(st.floats(0.2, 1.0)),
        injured_extra_cost_mj=draw(st.floats(0.0, 0.5)),
        injured_extra_mortality=draw(st.floats(0.0, 0.05)),
        recovery_days=draw(st.floats(1.0, 10.0)),
        breeding_threshold=draw(st.floats(0.5, 1.0)),
        start_reserves=draw(st.floats(0.0, 1.0)),
        reserves_after_breeding=draw(st.floats(0.0, 1.0)))
    prey = tuple(
        Prey(name=f"prey {i}", energy_mj=draw(st.floats(0.5, 6.0)),
             handling_days=draw(st.floats(0.0, 2.0)), capture_success=draw(st.floats(0.05, 1.0)),
             injury_chance=draw(st.floats(0.0, 0.5)), injury_energy_mj=draw(st.floats(0.0, 2.0)),
             fatality_chance=draw(st.floats(0.0, 0.2)),
             encounters_per_day=draw(st.floats(0.05, 2.0)))
        for i in range(draw(st.integers(1, 3))))
    return predator, prey


@settings(max_examples=25, deadline=None)
@given(random_study())
def test_chain_invariants_on_random_studies(study):
    """On random studies: step probabilities add to 1, first breeding equals
    the solver's fitness and closes with the death causes (Grinstead & Snell
    1997, ch. 11), and pi balances the reset chain (Kemeny & Snell 1960)."""
    grid = make_grid(*study)
    solution = solve_grid(grid)
    ss = steady_state(grid, solution)
    step = chain_step(grid, solution.living_priority(grid))
    total = np.asarray(step.transitions.sum(1)).ravel() + step.breed + step.deaths.sum(0)
    np.testing.assert_allclose(total, 1.0, atol=1e-12)
    assert ss.first_breeding_probability == pytest.approx(solution.fitness_at_start, abs=1e-10)
    assert ss.first_breeding_probability + sum(ss.death_before_breeding.values()) == (
        pytest.approx(1.0, abs=1e-10))
    pi = ss.stationary.ravel()
    assert pi.min() >= 0 and pi.sum() == pytest.approx(1.0, abs=1e-12)
    np.testing.assert_allclose(pi @ reset_chain(grid, step), pi, atol=1e-10)


def test_the_solvers_kept_step_is_the_chain_of_its_policy(rich_breeding):
    """The policy solve keeps its final one-step chain for the kill chain; it must be
    the chain of the final policy exactly as chain_step builds it (MODEL.md section 5
    transitions, breeding chance and deaths by cause), and a solution whose policy
    was replaced afterwards must not use it."""
    _, grid, solution, _ = rich_breeding
    kept = solution.step
    fresh = chain_step(grid, solution.living_priority(grid))
    assert kept is not None and kept.grid is grid
    assert (abs(kept.transitions - fresh.transitions)).max() == 0.0
    np.testing.assert_array_equal(kept.breed, fresh.breed)
    np.testing.assert_array_equal(kept.deaths, fresh.deaths)
    replaced = dataclasses.replace(solution, priority=np.zeros_like(solution.priority))
    assert _solver_step(grid, replaced) is None
    assert _solver_step(make_grid(rich_predator(), RICH_PREY), solution) is None
