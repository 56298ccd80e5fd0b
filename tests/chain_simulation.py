"""Individual-based simulation of predators, for checking riskdiet.core.chain.

Written from MODEL.md section 2 (one day) and section 5 (the resets), using
only the study dataclasses and the solver's attack ranks as the decision rule;
nothing here calls riskdiet.core.grid or riskdiet.core.chain. Every predator is
simulated step by step with its own random numbers, vectorised over many
predators with numpy. A fractional reserve y between levels L and L + 1 is
moved to L + 1 with probability y - L, the random-rounding reading of the
interpolation in MODEL.md section 2 step 5.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

NO_RANK = 1 << 20


def _half_up(x: float) -> int:
    return math.floor(x + 0.5)


@dataclass(frozen=True)
class Parameters:
    """The day's process in levels, worked out from the study fields."""

    n: int
    breeding: bool
    top: int            # breeding level J, or the cap n in the season currency
    cost: np.ndarray    # (2,) levels per day by condition
    mortality: np.ndarray  # (2,)
    meet: np.ndarray    # (P,) daily encounter probability
    gain: np.ndarray    # (P,) levels
    handling: np.ndarray  # (P,) days
    success: np.ndarray  # (2, P)
    injury: np.ndarray
    injury_loss: np.ndarray
    fatality: np.ndarray
    recovery: float
    start: int
    after_breeding: int
    season_days: int
    goal: int


def parameters(predator, prey) -> Parameters:
    """Translate a predator and its prey into per-level quantities (MODEL.md 1-2)."""
    n = predator.energy_levels
    delta = predator.reserve_capacity_mj / n
    breeding = predator.currency == "breeding"
    big_j = _half_up(predator.breeding_threshold * n)
    top_living = big_j - 1 if breeding else n
    cost = predator.daily_cost_mj / delta
    handling = np.array([p.handling_days for p in prey], dtype=float)
    if not breeding:
        handling = np.floor(handling + 0.5)
    success = []
    for p in prey:
        risky = p.injury_chance > 0 or p.fatality_chance > 0
        skill = risky if p.skill_dependent is None else p.skill_dependent
        success.append(min(1.0, predator.hunting_ability * p.capture_success) if skill
                       else p.capture_success)
    success = np.array(success)
    return Parameters(
        n=n,
        breeding=breeding,
        top=big_j if breeding else n,
        cost=np.array([cost, cost + predator.injured_extra_cost_mj / delta]),
        mortality=np.array([predator.background_mortality,
                            predator.background_mortality + predator.injured_extra_mortality]),
        meet=np.array([1.0 - math.exp(-p.encounters_per_day) for p in prey]),
        gain=np.array([p.energy_mj for p in prey]) / delta,
        handling=handling,
        success=np.stack([success, predator.injured_capture_factor * success]),
        injury=np.array([p.injury_chance for p in prey], dtype=float),
        injury_loss=np.array([p.injury_energy_mj for p in prey]) / delta,
        fatality=np.array([p.fatality_chance for p in prey], dtype=float),
        recovery=1.0 / predator.recovery_days,
        start=min(max(_half_up(predator.start_reserves * n), 1), top_living),
        after_breeding=min(max(_half_up(predator.reserves_after_breeding * n), 1), top_living),
        season_days=int(predator.season_days or 0),
        goal=max(1, _half_up(predator.season_reserve_threshold * n)),
    )


@dataclass
class StepResult:
    """What happened to each simulated predator in one step."""

    level: np.ndarray      # level after the step (meaningless for the dead)
    condition: np.ndarray
    length: np.ndarray     # days the step took
    kill: np.ndarray       # prey killed (-1 none); counts at capture
    death: np.ndarray      # 0 alive, 1 starvation, 2 attack, 3 other causes
    bred: np.ndarray       # reached breeding condition


def one_step(par: Parameters, ranks: np.ndarray, level: np.ndarray, cond: np.ndarray,
             rng: np.random.Generator) -> StepResult:
    """One decision step of every predator (MODEL.md section 2, steps 1-5).

    ``ranks`` (N, P) are the solver's attack ranks at each predator's state.
    """
    count, n_prey = ranks.shape
    ranks = ranks.astype(np.int64)  # the solver may store ranks in a narrow integer type
    rows = np.arange(count)
    other = rng.random(count) < par.mortality[cond]
    met = rng.random((count, n_prey)) < par.meet
    key = np.where(met & (ranks >= 0), ranks, NO_RANK)
    target = key.argmin(axis=1)
    attacks = ~other & (key[rows, target] < NO_RANK)
    fatal = attacks & (rng.random(count) < par.fatality[target])
    fight = attacks & ~fatal
    caught = fight & (rng.random(count) < par.success[cond, target])
    hurt = fight & ~caught & (rng.random(count) < par.injury[target])

    cost = par.cost[cond]
    hold = np.where(caught, par.handling[target], 0.0)
    y = level - cost * (1.0 + hold)
    y = y + np.where(caught, par.gain[target], 0.0) - np.where(hurt, par.injury_loss[target], 0.0)
    length = 1.0 + hold
    handling_death = caught & (rng.random(count) >= (1.0 - par.mortality[cond]) ** hold)

    recover = (cond == 1) & ~hurt & (rng.random(count) < 1.0 - (1.0 - par.recovery) ** length)
    new_cond = np.where(hurt, 1, np.where(recover, 0, cond))

    y = np.minimum(y, float(par.top))
    low = np.floor(y)
    new_level = (low + (rng.random(count) < y - low)).astype(np.int64)
    starve = new_level <= 0
    bred = (new_level >= par.top) if par.breeding else np.zeros(count, dtype=bool)

    death = np.zeros(count, dtype=np.int8)
    death[other | handling_death] = 3
    death[fatal] = 2
    death[(death == 0) & starve] = 1
    bred &= death == 0
    return StepResult(new_level, new_cond, length, np.where(caught, target, -1), death, bred)


def simulate_breeding(predator, prey, priority: np.ndarray, individuals: int, steps: int,
                      burn_in: int, batches: int, seed: int) -> dict[str, np.ndarray]:
    """A lineage per individual: deaths replaced by newcomers, breeding continues.

    Parameters
    ----------
    priority : ndarray of int, shape (2, n + 1, P)
        The solver's attack ranks.
    individuals, steps, burn_in : int
        Predators run side by side, steps each, of which the first ``burn_in``
        are not recorded.
    batches : int
        Independent groups of predators whose totals are returned separately.

    Returns
    -------
    dict
        Per batch: ``kills`` (batches, P), ``days``, ``injured_days``,
        ``level_days`` (sum of level x step length), ``deaths``, ``breeding``.
    """
    par = parameters(predator, prey)
    rng = np.random.default_rng(seed)
    level = np.full(individuals, par.start)
    cond = np.zeros(individuals, dtype=np.int64)
    group = np.arange(individuals) % batches
    n_prey = len(prey)
    out = {"kills": np.zeros((batches, n_prey)), "days": np.zeros(batches),
           "injured_days": np.zeros(batches), "level_days": np.zeros(batches),
           "deaths": np.zeros(batches), "breeding": np.zeros(batches)}
    for step in range(steps):
        res = one_step(par, priority[cond, level], level, cond, rng)
        if step >= burn_in:
            out["days"] += np.bincount(group, res.length, batches)
            out["injured_days"] += np.bincount(group, res.length * (cond == 1), batches)
            out["level_days"] += np.bincount(group, res.length * level, batches)
            out["deaths"] += np.bincount(group, res.death > 0, batches)
            out["breeding"] += np.bincount(group, res.bred, batches)
            hit = res.kill >= 0
            np.add.at(out["kills"], (group[hit], res.kill[hit]), 1.0)
        dead = res.death > 0
        level = np.where(dead, par.start, np.where(res.bred, par.after_breeding, res.level))
        cond = np.where(dead | res.bred, 0, res.condition)
    return out


def simulate_first_breeding(predator, prey, priority: np.ndarray, individuals: int,
                            seed: int) -> np.ndarray:
    """Fate of newcomers followed to their first breeding or death.

    Returns
    -------
    ndarray, shape (4,)
        Shares that bred first, died of starvation, of an attack, of other causes.
    """
    par = parameters(predator, prey)
    rng = np.random.default_rng(seed)
    level = np.full(individuals, par.start)
    cond = np.zeros(individuals, dtype=np.int64)
    fate = np.full(individuals, -1)
    active = np.arange(individuals)
    while active.size:
        res = one_step(par, priority[cond[active], level[active]], level[active], cond[active],
                       rng)
        fate[active[res.bred]] = 0
        died = res.death > 0
        fate[active[died]] = res.death[died]
        level[active], cond[active] = res.level, res.condition
        active = active[fate[active] < 0]
    return np.bincount(fate, minlength=4) / individuals


def simulate_season(predator, prey, priority_by_day: np.ndarray, individuals: int, seed: int
                    ) -> dict[str, np.ndarray]:
    """Newcomers at day 0 followed to the end of the season.

    A step started on day t ends on day t + length; a step ending on or after
    T ends the season (judged at its end). A predator that dies in a step is
    dead from the day after the step began; one in the middle of a handling
    step it survives counts as alive, at the level it ends the step with.

    Returns
    -------
    dict
        Per predator: ``kills`` (N, P), ``alive`` and ``level`` at the end,
        ``alive_by_day`` (T + 1, N) and ``level_by_day`` (T + 1, N) (level of
        the living; 0 for the dead).
    """
    par = parameters(predator, prey)
    rng = np.random.default_rng(seed)
    days = par.season_days
    level = np.full(individuals, par.start)
    cond = np.zeros(individuals, dtype=np.int64)
    clock = np.zeros(individuals, dtype=np.int64)
    alive = np.ones(individuals, dtype=bool)
    kills = np.zeros((individuals, len(prey)))
    level_by_day = np.zeros((days + 1, individuals))
    level_by_day[0] = level
    active = np.arange(individuals)
    while active.size:
        t = clock[active]
        res = one_step(par, priority_by_day[t, cond[active], level[active]], level[active],
                       cond[active], rng)
        hit = res.kill >= 0
        kills[active[hit], res.kill[hit]] += 1.0
        end = np.minimum(t + np.rint(res.length).astype(np.int64), days)
        survived = res.death == 0
        who, stop = active[survived], end[survived]
        for offset in range(1, int((stop - t[survived]).max(initial=0)) + 1):
            day = t[survived] + offset
            inside = day <= stop
            level_by_day[day[inside], who[inside]] = res.level[survived][inside]
        alive[active[~survived]] = False
        level[active], cond[active], clock[active] = res.level, res.condition, end
        active = active[alive[active] & (clock[active] < days)]
    return {"kills": kills, "alive": alive, "level": level,
            "alive_by_day": level_by_day > 0, "level_by_day": level_by_day}


def simulate_cohort(predator, prey, priority: np.ndarray, individuals: int, horizon: int,
                    seed: int) -> dict[str, np.ndarray]:
    """Released animals followed day by day to the horizon, no replacement.

    The clock of MODEL.md section 5: a capture step with handling h started on
    day t ends on day t + 1 + floor(h), or one day later with probability
    frac(h); other steps end on day t + 1. Kills count on the start day (days
    0..L-1); an animal that dies in a step is dead from the next day; a
    breeding event counts on the end day (if it is at most L) and the animal
    goes on at the after-breeding level, healthy.

    Returns
    -------
    dict
        Per animal: ``kills`` (N, P), ``alive`` (at day L), ``breeding`` (events).
    """
    par = parameters(predator, prey)
    rng = np.random.default_rng(seed)
    level = np.full(individuals, par.start)
    cond = np.zeros(individuals, dtype=np.int64)
    clock = np.zeros(individuals, dtype=np.int64)
    alive = np.ones(individuals, dtype=bool)
    kills = np.zeros((individuals, len(prey)))
    breeding = np.zeros(individuals)
    active = np.arange(individuals)
    while active.size:
        t = clock[active]
        res = one_step(par, priority[cond[active], level[active]], level[active], cond[active],
                       rng)
        hit = res.kill >= 0
        kills[active[hit], res.kill[hit]] += 1.0
        hold = res.length - 1.0
        whole = np.floor(hold)
        end = t + 1 + whole.astype(np.int64) + (rng.random(active.size) < hold - whole)
        died = res.death > 0
        alive[active[died]] = False
        bred = res.bred & (end <= horizon)
        breeding[active[bred]] += 1.0
        level[active] = np.where(res.bred, par.after_breeding, res.level)
        cond[active] = np.where(res.bred, 0, res.condition)
        clock[active] = end
        active = active[alive[active] & (clock[active] < horizon)]
    return {"kills": kills, "alive": alive, "breeding": breeding}
