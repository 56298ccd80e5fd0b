"""Independent individual-based simulation of the day-by-day process.

Written from the text of MODEL.md section 2 (one decision step) and section 3
(the two currencies), and deliberately sharing no code with
:mod:`riskdiet.core.grid` or :mod:`riskdiet.core.solver`: the grid units, encounter
chances, capture success, boundaries and the season clock are all recomputed
here from the study's raw fields. The only thing taken from the solver is its
answer to "which prey does the predator attack in state (j, k)", the priority
array, which is used as the decision rule of every simulated individual.

Fractional reserves y between levels L and L + 1 are rounded at random: to
L + 1 with probability w = y - L, else to L. This randomised rounding is the
process whose value MODEL.md's linear interpolation computes, so the fraction
of simulated successes estimates the solver's fitness without bias.

Individuals are simulated side by side in numpy arrays, one step per loop pass.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from statistics import NormalDist

import numpy as np

DEAD, RUNNING, SUCCEEDED = 0, 1, 2


@dataclass(frozen=True)
class Process:
    """The day's process in grid units (energy counted in levels of R / n)."""

    currency: str
    n: int
    breeding_level: int
    cost: np.ndarray  # (2,) levels/day, healthy and injured
    mortality: np.ndarray  # (2,) 1/day
    meet: np.ndarray  # (P,) daily encounter probability
    gain: np.ndarray  # (P,) levels
    handling: np.ndarray  # (P,) days (whole days in the season currency)
    success: np.ndarray  # (2, P) capture success, healthy and injured
    injury: np.ndarray  # (P,)
    injury_loss: np.ndarray  # (P,) levels
    fatality: np.ndarray  # (P,)
    recovery: float  # daily recovery chance
    season_days: int
    terminal_level: int


def _half_up(x: float) -> int:
    return math.floor(x + 0.5)


def process_of(predator, prey) -> Process:
    """Recompute the process from the raw study fields (MODEL.md sections 1-2)."""
    n = predator.energy_levels
    delta = predator.reserve_capacity_mj / n
    if predator.daily_cost_mj is None:
        raise ValueError("the simulation needs an explicit daily cost")
    season = predator.currency == "season"
    c = predator.daily_cost_mj
    meet, gain, handling, base, injury, loss, fatal = [], [], [], [], [], [], []
    for p in prey:
        rate = p.encounters_per_day
        if rate is None:
            rate = predator.search_area_km2_per_day * p.density_per_km2
        meet.append(1.0 - math.exp(-rate))
        gain.append(p.energy_mj / delta)
        handling.append(_half_up(p.handling_days) if season else p.handling_days)
        risky = p.injury_chance > 0 or p.fatality_chance > 0
        skill = risky if p.skill_dependent is None else p.skill_dependent
        s = min(1.0, predator.hunting_ability * p.capture_success) if skill else p.capture_success
        base.append(s)
        injury.append(p.injury_chance)
        loss.append(p.injury_energy_mj / delta)
        fatal.append(p.fatality_chance)
    base = np.array(base)
    mu = predator.background_mortality
    return Process(
        currency=predator.currency,
        n=n,
        breeding_level=_half_up(predator.breeding_threshold * n),
        cost=np.array([c, c + predator.injured_extra_cost_mj]) / delta,
        mortality=np.array([mu, mu + predator.injured_extra_mortality]),
        meet=np.array(meet),
        gain=np.array(gain),
        handling=np.array(handling, dtype=float),
        success=np.stack([base, predator.injured_capture_factor * base]),
        injury=np.array(injury),
        injury_loss=np.array(loss),
        fatality=np.array(fatal),
        recovery=1.0 / predator.recovery_days,
        season_days=int(predator.season_days or 0),
        terminal_level=_half_up(predator.season_reserve_threshold * n),
    )


def _one_step(proc: Process, rank: np.ndarray, level: np.ndarray, injured: np.ndarray,
              rng: np.random.Generator):
    """One decision step for a batch of individuals.

    Returns whether each survived, its reserves y (fractional levels), whether
    it is injured afterwards, and the length of the step in days.
    """
    count = level.shape[0]
    rank = rank.astype(np.int64)  # the solver may store ranks in a narrow integer type
    k = injured.astype(int)
    cost = proc.cost[k]
    alive = rng.random(count) >= proc.mortality[k]
    # every prey type is met independently; the best-ranked prey met is attacked
    met = rng.random((count, proc.meet.size)) < proc.meet
    wanted = met & (rank >= 0)
    attacks = wanted.any(axis=1)
    choice = np.argmin(np.where(wanted, rank, proc.meet.size), axis=1)
    y = level - cost
    days = np.ones(count)
    newly_injured = np.zeros(count, dtype=bool)

    killed = attacks & (rng.random(count) < proc.fatality[choice])
    alive &= ~killed
    tried = attacks & ~killed
    caught = tried & (rng.random(count) < proc.success[k, choice])
    h = proc.handling[choice]
    y = np.where(caught, level + proc.gain[choice] - cost * (1.0 + h), y)
    survived_handling = rng.random(count) < (1.0 - proc.mortality[k]) ** h
    alive &= ~caught | survived_handling
    days = np.where(caught, 1.0 + h, days)
    failed = tried & ~caught
    hurt = failed & (rng.random(count) < proc.injury[choice])
    y = np.where(hurt, level - cost - proc.injury_loss[choice], y)
    newly_injured |= hurt

    recovers = injured & ~newly_injured & (
        rng.random(count) < 1.0 - (1.0 - proc.recovery) ** days)
    injured_after = (injured | newly_injured) & ~recovers
    return alive, y, injured_after, days


def _round_at_random(y: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    low = np.floor(y)
    return (low + (rng.random(y.shape) < y - low)).astype(np.int64)


def simulate_breeding(proc: Process, priority: np.ndarray, start_level: np.ndarray,
                      start_injured: np.ndarray, rng: np.random.Generator,
                      max_steps: int = 100_000) -> np.ndarray:
    """Whether each individual reaches breeding condition before dying.

    Parameters
    ----------
    priority : ndarray of int, shape (2, n + 1, P)
        The attack rule: rank of each prey in state (condition, level), -1 = ignore.
    start_level, start_injured : ndarray, shape (N,)
        Start state of each individual.
    """
    level = np.asarray(start_level, dtype=np.int64).copy()
    injured = np.asarray(start_injured, dtype=bool).copy()
    status = np.full(level.shape, RUNNING)
    for _ in range(max_steps):
        idx = np.flatnonzero(status == RUNNING)
        if idx.size == 0:
            return status == SUCCEEDED
        j, inj = level[idx], injured[idx]
        alive, y, inj_after, _ = _one_step(proc, priority[inj.astype(int), j], j, inj, rng)
        new = _round_at_random(np.clip(y, 0.0, proc.breeding_level), rng)
        dead = ~alive | (y <= 0) | (new <= 0)
        bred = ~dead & (new >= proc.breeding_level)
        status[idx[bred]] = SUCCEEDED
        status[idx[dead & ~bred]] = DEAD
        go = ~bred & ~dead
        level[idx[go]] = new[go]
        injured[idx[go]] = inj_after[go]
    raise RuntimeError("individuals still running after max_steps")


def simulate_season(proc: Process, priority_by_day: np.ndarray, start_level: np.ndarray,
                    start_injured: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """Whether each individual is alive at day T with reserves at the threshold.

    Parameters
    ----------
    priority_by_day : ndarray of int, shape (T, 2, n + 1, P)
        The attack rule of every day.

    Notes
    -----
    Each individual carries its own clock. A step started on day t lasts one
    day, or 1 + H_i days after a capture; a step that ends on or after day T is
    judged by the terminal reward at the level it reached (MODEL.md section 3).
    """
    days_total = proc.season_days
    level = np.asarray(start_level, dtype=np.int64).copy()
    injured = np.asarray(start_injured, dtype=bool).copy()
    clock = np.zeros(level.shape, dtype=np.int64)
    status = np.full(level.shape, RUNNING)
    needed = max(1, proc.terminal_level)
    while True:
        idx = np.flatnonzero(status == RUNNING)
        if idx.size == 0:
            return status == SUCCEEDED
        j, inj, t = level[idx], injured[idx], clock[idx]
        rank = priority_by_day[t, inj.astype(int), j]
        alive, y, inj_after, days = _one_step(proc, rank, j, inj, rng)
        new = _round_at_random(np.clip(y, 0.0, proc.n), rng)
        dead = ~alive | (y <= 0) | (new <= 0)
        t_end = t + days.astype(np.int64)
        over = t_end >= days_total
        status[idx[dead]] = DEAD
        status[idx[~dead & over & (new >= needed)]] = SUCCEEDED
        status[idx[~dead & over & (new < needed)]] = DEAD
        go = ~dead & ~over
        level[idx[go]] = new[go]
        injured[idx[go]] = inj_after[go]
        clock[idx[go]] = t_end[go]


def wilson_interval(successes: int, trials: int, confidence: float = 0.999
                    ) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion.

    References
    ----------
    .. [1] Wilson, E. B. (1927). Probable inference, the law of succession, and
       statistical inference. JASA 22, 209-212.
    """
    z = NormalDist().inv_cdf(0.5 + confidence / 2.0)
    phat = successes / trials
    denom = 1.0 + z * z / trials
    centre = (phat + z * z / (2.0 * trials)) / denom
    half = z / denom * math.sqrt(phat * (1.0 - phat) / trials + z * z / (4.0 * trials * trials))
    low = 0.0 if successes == 0 else centre - half
    high = 1.0 if successes == trials else centre + half
    return low, high
