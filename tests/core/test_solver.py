"""Tests of the state-dependent solver against outside references.

References used below:
Feller, W. (1968). An Introduction to Probability Theory and Its Applications,
vol. I, 3rd ed. Wiley. Ch. XIV (the classical ruin problem), eq. 2.4.
Wilson, E. B. (1927). Probable inference, the law of succession, and
statistical inference. JASA 22, 209-212.
Lande, R. (1979). Quantitative genetic analysis of multivariate evolution.
Evolution 33, 402-416 (selection gradient = derivative of fitness in the trait).
Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive Behaviour.
Cambridge University Press (state-dependent policies; monotonicity of fitness).
Puterman, M. L. (1994). Markov Decision Processes. Wiley (value and policy iteration).
Mangel, M. & Clark, C. W. (1988). Dynamic Modeling in Behavioral Ecology.
Princeton University Press (backward induction).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from conftest import EXAMPLE, grid_of, injury_raw, rounding_below_zero_grid
from hypothesis import given, settings
from hypothesis import strategies as st
from simulation import process_of, simulate_breeding, simulate_season, wilson_interval

from riskdiet.core import solver
from riskdiet.core.grid import make_grid
from riskdiet.core.solver import solve_grid
from riskdiet.io import load_study
from riskdiet.model import Predator, Prey
from riskdiet.validation import build_study

INVARIANTS = settings(max_examples=40, deadline=None)


# --------------------------------------------------------------------------- ruin problem

def ruin_study(up: float, levels: int, threshold: float, capture: float) -> dict:
    """One risk-free prey: a capture day nets +1 level, any other day -1.

    The encounter rate is chosen so that p_meet * capture_success = up.
    """
    meet = up / capture
    return {
        "predator": {"reserve_capacity_mj": float(levels), "energy_levels": levels,
                     "daily_cost_mj": 1.0, "breeding_threshold": threshold},
        "prey": [{"name": "prey", "encounters_per_day": -math.log1p(-meet), "energy_mj": 2.0,
                  "handling_days": 0.0, "capture_success": capture}],
    }


def feller_success(z: int, a: int, p: float) -> float:
    """1 - q_z, with q_z the ruin probability of Feller (1968) ch. XIV eq. 2.4."""
    q = 1.0 - p
    if p == q:
        return z / a
    ratio = q / p
    return 1.0 - (ratio**a - ratio**z) / (ratio**a - 1.0)


@pytest.mark.parametrize(("up", "levels", "threshold", "capture"), [
    (0.4, 20, 1.0, 0.8),
    (0.6, 30, 0.5, 0.75),
    (0.5, 20, 1.0, 1.0),
    (0.5, 24, 0.5, 0.625),
])
def test_fitness_is_gamblers_ruin_success(up, levels, threshold, capture):
    """Breeding fitness equals the absorption probability of the simple random walk.

    With no risk, cost one level a day and a gain of two levels, reserves move
    +1 with probability p = p_i s_i and -1 otherwise; the walk is absorbed at 0
    (death) and at J (breeding). The chance of reaching J from z is one minus
    the ruin probability q_z = ((q/p)^a - (q/p)^z) / ((q/p)^a - 1), or z/a when
    p = q (Feller 1968, vol. I, ch. XIV, eq. 2.4), checked at every level.
    """
    study = build_study(ruin_study(up, levels, threshold, capture))
    grid = make_grid(study.predator, study.prey)
    assert grid.encounter_prob[0] * grid.capture[0, 0] == pytest.approx(up, abs=1e-15)
    sol = solve_grid(grid)
    a = study.predator.breeding_level
    assert a == round(threshold * levels)
    expected = np.array([feller_success(z, a, up) for z in range(1, a)])
    np.testing.assert_allclose(sol.fitness[0, 1:a], expected, rtol=0, atol=1e-12)
    np.testing.assert_allclose(sol.fitness[1, 1:a], expected, rtol=0, atol=1e-12)
    assert sol.converged and sol.residual < 1e-12
    # a risk-free prey is always worth attacking while reserves are short of J
    assert (sol.priority[0, 1:a, 0] == 0).all()


# --------------------------------------------------------------------------- simulation

START_STATES = [(3, 0), (12, 0), (22, 0), (15, 1)]
PER_START = 40_000


@pytest.mark.parametrize("currency", ["breeding", "season"])
def test_fitness_agrees_with_individual_based_simulation(currency):
    """Solver fitness lies in the 99.9 % Wilson interval of an independent simulation.

    tests/simulation.py follows MODEL.md's day-by-day process for 40,000
    individuals per start state, with every injury mechanism, fractional
    energies and fractional handling days; it takes only the solver's policy.
    The interval is the Wilson (1927) score interval for a binomial proportion;
    with randomised rounding of fractional reserves the simulated process is
    exactly the one whose value the interpolation computes (MODEL.md section 2).
    """
    predator, prey, grid = grid_of(injury_raw(currency=currency))
    sol = solve_grid(grid)
    proc = process_of(predator, prey)
    levels = np.repeat([j for j, _ in START_STATES], PER_START)
    injured = np.repeat([k for _, k in START_STATES], PER_START).astype(bool)
    rng = np.random.default_rng(20260 + len(currency))
    if currency == "breeding":
        success = simulate_breeding(proc, sol.priority, levels, injured, rng)
    else:
        success = simulate_season(proc, sol.priority_by_day, levels, injured, rng)
    # the policy really depends on the state here, so the check covers the decision rule
    assert len({tuple(r) for r in sol.priority[0, 1:grid.top]}) > 1
    for q, (j, k) in enumerate(START_STATES):
        wins = int(success[q * PER_START:(q + 1) * PER_START].sum())
        low, high = wilson_interval(wins, PER_START, 0.999)
        assert low <= sol.fitness[k, j] <= high, (j, k, sol.fitness[k, j], wins / PER_START)


# --------------------------------------------------------------------------- value iteration

def _plain_bellman(proc, v_next, v_caps, k, j):
    """MODEL.md section 3's Bellman step for one state, scalar arithmetic only."""
    top = len(v_next[0]) - 1

    def at(row, y):
        y = min(max(y, 0.0), float(top))
        low = min(math.floor(y), top - 1)
        return (1 - (y - low)) * row[low] + (y - low) * row[low + 1]

    def carry(v, y, days):
        if k == 0:
            return at(v[0], y)
        rec = 1 - (1 - proc.recovery) ** days
        return rec * at(v[0], y) + (1 - rec) * at(v[1], y)

    c, mu = proc.cost[k], proc.mortality[k]
    ignore = carry(v_next, j - c, 1)
    worth = []
    for i in range(proc.meet.size):
        h, s = proc.handling[i], proc.success[k, i]
        won = (1 - mu) ** h * carry(v_caps[i], j + proc.gain[i] - c * (1 + h), 1 + h)
        failed = (proc.injury[i] * at(v_next[1], j - c - proc.injury_loss[i])
                  + (1 - proc.injury[i]) * ignore)
        value = (1 - proc.fatality[i]) * (s * won + (1 - s) * failed)
        if value > ignore + 1e-12 * max(1.0, ignore):
            worth.append((-value, i))
    total, none_better = ignore, 1.0
    for neg_value, i in sorted(worth):
        total += proc.meet[i] * none_better * (-neg_value - ignore)
        none_better *= 1 - proc.meet[i]
    return (1 - mu) * total


def test_policy_iteration_reaches_the_value_iteration_fixed_point():
    """Policy iteration gives the optimal value: plain value iteration from V = 0
    (Puterman 1994, Markov Decision Processes, ch. 6-7: it converges to the
    optimal value of a transient MDP whatever the start) reaches the solver's
    fitness to 1e-10, and the season's backward induction (Mangel & Clark 1988,
    ch. 2) matches to 1e-12. Both are written here state by state from MODEL.md
    section 3."""
    predator, prey, grid = grid_of(injury_raw())
    proc = process_of(predator, prey)
    sol = solve_grid(grid)
    top = proc.breeding_level
    v = [[0.0] * top + [1.0], [0.0] * top + [1.0]]
    for _ in range(2000):
        new = [[0.0] + [_plain_bellman(proc, v, [v] * 3, k, j) for j in range(1, top)] + [1.0]
               for k in (0, 1)]
        change = max(abs(a - b) for r, q in zip(new, v, strict=True)
                     for a, b in zip(r, q, strict=True))
        v = new
        if change < 1e-14:
            break
    np.testing.assert_allclose(np.array(v), sol.fitness[:, :top + 1], rtol=0, atol=1e-10)

    predator, prey, grid = grid_of(injury_raw(currency="season"))
    proc = process_of(predator, prey)
    sol = solve_grid(grid)
    n, days = proc.n, proc.season_days
    terminal = [0.0] + [1.0 if j >= proc.terminal_level else 0.0 for j in range(1, n + 1)]
    by_day = {days: [terminal, terminal]}
    for t in range(days - 1, -1, -1):
        caps = [by_day[min(t + 1 + int(h), days)] for h in proc.handling]
        by_day[t] = [[0.0] + [_plain_bellman(proc, by_day[t + 1], caps, k, j)
                              for j in range(1, n + 1)] for k in (0, 1)]
    np.testing.assert_allclose(np.array(by_day[0]), sol.fitness, rtol=0, atol=1e-12)


# --------------------------------------------------------------------------- selection gradient

def _solve_at(predator: Predator, prey: tuple[Prey, ...], ability: float):
    grid = make_grid(dataclasses.replace(predator, hunting_ability=ability), prey)
    return grid, solve_grid(grid)


def _policy(sol):
    return sol.priority if sol.priority_by_day is None else sol.priority_by_day


@pytest.mark.parametrize(("currency", "ability", "capped"), [
    ("breeding", 1.1, False),
    ("season", 1.1, False),
    ("breeding", 1.3, True),
    ("season", 1.3, True),
])
def test_marginal_hunting_ability_matches_central_difference(currency, ability, capped):
    """dV/da with the policy fixed equals a central finite difference in a.

    Lande (1979) defines the selection gradient as the derivative of fitness in
    the trait; MODEL.md section 4 computes it by the envelope theorem, which is
    the plain derivative wherever the policy is the same at a - delta and
    a + delta (asserted here). In the capped cases one prey has
    a s_i >= 1, so its success is flat in a (MODEL.md section 1). The central
    difference error is O(delta^2) (common practice).
    """
    raw = injury_raw(currency=currency, hunting_ability=ability)
    if capped:
        raw["prey"][0].update(capture_success=0.8, skill_dependent=True)
    predator, prey, grid = grid_of(raw)
    sol = solve_grid(grid)
    if capped:
        assert ability * 0.8 >= 1 and grid.capture_slope[0, 0] == 0.0
    delta = 1e-5
    _, up = _solve_at(predator, prey, ability + delta)
    _, down = _solve_at(predator, prey, ability - delta)
    assert np.array_equal(_policy(up), _policy(sol))
    assert np.array_equal(_policy(down), _policy(sol))
    fd = (up.fitness - down.fitness) / (2 * delta)
    np.testing.assert_allclose(sol.marginal_by_level, fd, rtol=0, atol=2e-7)
    assert sol.marginal_hunting_ability == pytest.approx(fd[0, grid.start_level], abs=2e-7)
    assert np.abs(sol.marginal_by_level).max() > 1e-3  # the check is not vacuous
    assert sol.elasticity == pytest.approx(
        ability * sol.marginal_hunting_ability / sol.fitness_at_start, rel=1e-12)


# --------------------------------------------------------------------------- invariants

def _floats(low, high):
    return st.floats(low, high, allow_nan=False, allow_infinity=False)


@st.composite
def small_studies(draw, currency=None):
    """Random small valid studies (10-30 levels, 1-3 prey), invented values."""
    n = draw(st.integers(10, 30))
    predator = Predator(
        reserve_capacity_mj=float(n), energy_levels=n, daily_cost_mj=draw(_floats(0.3, 3.0)),
        background_mortality=draw(_floats(0.0, 0.05)),
        hunting_ability=draw(_floats(0.5, 1.5)),
        injured_capture_factor=draw(_floats(0.0, 1.0)),
        injured_extra_cost_mj=draw(_floats(0.0, 1.0)),
        injured_extra_mortality=draw(_floats(0.0, 0.05)),
        recovery_days=draw(_floats(1.0, 10.0)),
        currency=currency or draw(st.sampled_from(["breeding", "season"])),
        breeding_threshold=draw(_floats(0.5, 1.0)),
        season_days=draw(st.integers(1, 25)),
        season_reserve_threshold=draw(_floats(0.0, 1.0)),
    )
    prey = tuple(Prey(
        name=f"prey {i}", encounters_per_day=draw(_floats(0.0, 3.0)),
        energy_mj=draw(_floats(0.0, 1.5 * n)), handling_days=draw(_floats(0.0, 3.0)),
        capture_success=draw(_floats(0.0, 1.0)), injury_chance=draw(_floats(0.0, 1.0)),
        injury_energy_mj=draw(_floats(0.0, 5.0)), fatality_chance=draw(_floats(0.0, 0.3)),
    ) for i in range(draw(st.integers(1, 3))))
    return predator, prey


@INVARIANTS
@given(small_studies())
def test_fitness_is_a_probability_and_rises_with_reserves(case):
    """Fitness lies in [0, 1] and never falls as reserves rise, in both conditions.

    V is a probability (MODEL.md section 3). Monotonicity: every outcome's
    reserves shift one-for-one with j and interpolation preserves order, so the
    Bellman operator maps non-decreasing V to non-decreasing V (Houston &
    McNamara 1999, ch. 2; from memory). Rounding allowance 1e-12.
    """
    predator, prey = case
    grid = make_grid(predator, prey)
    sol = solve_grid(grid)
    assert np.all(sol.fitness >= -1e-12) and np.all(sol.fitness <= 1 + 1e-12)
    assert np.all(np.diff(sol.fitness, axis=1) >= -1e-12)
    if grid.currency == "breeding":
        assert sol.converged and sol.residual < 1e-10


@INVARIANTS
@given(small_studies(), st.data())
def test_adding_a_prey_type_never_lowers_fitness(case, data):
    """An extra prey type never lowers optimal fitness at any state.

    The predator may always ignore the new prey, so the old policy stays
    available (MODEL.md section 3; common practice for optimal policies).
    """
    predator, prey = case
    extra = Prey(name="extra", encounters_per_day=data.draw(_floats(0.0, 3.0)),
                 energy_mj=data.draw(_floats(0.0, predator.reserve_capacity_mj)),
                 handling_days=data.draw(_floats(0.0, 3.0)),
                 capture_success=data.draw(_floats(0.0, 1.0)),
                 injury_chance=data.draw(_floats(0.0, 1.0)), injury_energy_mj=1.0,
                 fatality_chance=data.draw(_floats(0.0, 0.5)))
    without = solve_grid(make_grid(predator, prey)).fitness
    with_extra = solve_grid(make_grid(predator, (*prey, extra))).fitness
    assert np.all(with_extra >= without - 1e-10)


@INVARIANTS
@given(small_studies(), _floats(0.001, 0.2))
def test_higher_background_mortality_never_raises_fitness(case, more):
    """Raising background mortality never raises fitness at any state.

    Every term of the Bellman equation carries a survival factor (1 - mu)
    or (1 - mu)^h and values are non-negative (MODEL.md section 3; common
    practice).
    """
    predator, prey = case
    riskier = dataclasses.replace(predator,
                                  background_mortality=predator.background_mortality + more)
    base = solve_grid(make_grid(predator, prey)).fitness
    worse = solve_grid(make_grid(riskier, prey)).fitness
    assert np.all(worse <= base + 1e-10)


@INVARIANTS
@given(small_studies(), st.data())
def test_a_certainly_fatal_prey_is_never_attacked(case, data):
    """A prey whose attack always kills (f = 1) is never attacked.

    Its attack value is 0, which never beats ignoring it (MODEL.md section 3:
    ties go to ignoring). Validation forbids f = 1, so the grid is edited.
    """
    predator, prey = case
    grid = make_grid(predator, prey)
    i = data.draw(st.integers(0, grid.n_prey - 1))
    fatality = grid.fatality.copy()
    fatality[i] = 1.0
    sol = solve_grid(dataclasses.replace(grid, fatality=fatality))
    assert np.all(sol.priority[..., i] == -1)
    if sol.priority_by_day is not None:
        assert np.all(sol.priority_by_day[..., i] == -1)


# --------------------------------------------------------------------------- linear solvers

def test_iterative_solve_matches_sparse_lu(monkeypatch):
    """Above DIRECT_LIMIT unknowns BiCGSTAB is tried first; whichever path is
    accepted, the fitness equals the sparse-LU fitness to 1e-12.

    Both solve the same linear system (I - P) V = b of policy evaluation; the
    iterative answer is accepted only when its residual in every state is below
    1e-13 of that state's terms (MODEL.md section 3), else the system is
    factorised after all.
    """
    study = load_study(EXAMPLE)
    predator, prey = study.inputs_for(study.scenarios[0])
    grid = make_grid(predator, prey)
    direct = solve_grid(grid)
    assert direct.linear_solver == "sparse LU"
    monkeypatch.setattr(solver, "DIRECT_LIMIT", 0)
    iterative = solve_grid(grid)
    assert iterative.linear_solver in ("BiCGSTAB (residual-checked)", "sparse LU")
    np.testing.assert_allclose(iterative.fitness, direct.fitness, rtol=0, atol=1e-12)
    np.testing.assert_allclose(iterative.marginal_by_level, direct.marginal_by_level,
                               rtol=0, atol=1e-10)
    assert np.array_equal(iterative.priority, direct.priority)


def test_an_iterative_answer_is_checked_state_by_state():
    """MODEL.md section 3: x is accepted only if x >= 0 and, in every state,
    |((I - P)x - b)_s| <= 1e-13 (b_s + (P x)_s). An error of 1e-20 in a state
    whose value is 1e-18 passes a norm-wise check against |b| = 1 but not this
    one; the exact solution of a 2-state chain passes; a negative value fails."""
    import scipy.sparse as sp

    p = np.array([[0.0, 0.5], [0.0, 0.0]])
    b = np.array([0.5, 1e-18])
    matrix = sp.csr_matrix(np.eye(2) - p)
    solve = solver.LinearSolve(matrix)
    exact = np.linalg.solve(np.eye(2) - p, b)
    assert solve.accepted(exact, b)
    off = exact.copy()
    off[1] += 1e-20
    assert np.abs(matrix @ off - b).max() <= 1e-13 * np.abs(b).max()  # norm-wise: fine
    assert not solve.accepted(off, b)
    assert not solve.accepted(np.array([exact[0], -1e-30]), b)


def test_leaving_out_the_marginal_changes_nothing_else():
    """The grid check solves without the marginal value of hunting ability (MODEL.md
    section 8 compares fitness and kills only): the policy, V and U are those of the
    full solve (the same policy iteration, MODEL.md section 3), and the marginal
    fields say "not computed" (NaN) instead of a number."""
    _, _, grid = grid_of(injury_raw())
    full = solver.solve_breeding(grid)
    lean = solver.solve_breeding(grid, marginal=False)
    np.testing.assert_array_equal(lean.priority, full.priority)
    np.testing.assert_array_equal(lean.fitness, full.fitness)
    np.testing.assert_array_equal(lean.complement, full.complement)
    assert np.isnan(lean.marginal_hunting_ability)
    assert np.isnan(lean.marginal_by_level[:, grid.living]).all()


def test_rounding_below_zero_never_puts_a_worthless_attack_in_the_policy():
    """A prey that is never met and whose attack always kills (value 0) stays out of the policy
    even where policy iteration passes through hopeless states (true value 0, solved as about
    -4e-18): V >= 0 because I - P is an M-matrix with a nonnegative inverse (Berman & Plemmons
    1994, ch. 6), so a rounded negative is no reason to prefer a value of 0 (MODEL.md section 3).
    The case is the smallest one hypothesis found for the invariant above."""
    sol = solve_grid(rounding_below_zero_grid())
    assert np.all(sol.priority[..., 0] == -1)
    assert np.all(sol.fitness >= 0.0)
