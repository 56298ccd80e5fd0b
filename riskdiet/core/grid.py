"""Discretised inputs of the state-dependent model (MODEL.md section 2).

Turns a predator and its prey into arrays in grid units (energy measured in
levels of size R/n), and enumerates the outcomes of one decision step under a
given attack policy. The solver and the Markov chain both build on these
outcomes, so the day's process is written once.

Arrays use condition as the first axis (0 = healthy, 1 = injured), then the
living levels, then prey in listing order.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from riskdiet.model import Predator, Prey, round_half_up

HEALTHY, INJURED = 0, 1


@dataclass(frozen=True)
class Grid:
    """Inputs of one study in grid units.

    Attributes
    ----------
    currency : str
        ``breeding`` or ``season``.
    n : int
        Number of energy levels; level j holds reserves j R / n.
    top : int
        Highest value level: J (breeding, absorbing) or n (season, cap).
    living : ndarray of int, shape (m,)
        Living levels: 1..J-1 (breeding) or 1..n (season).
    step_mj : float
        Size of one level, R / n [MJ].
    cost : ndarray, shape (2,)
        Daily cost per condition [levels/day].
    mortality : ndarray, shape (2,)
        Daily background mortality per condition [1/day].
    encounter_prob : ndarray, shape (P,)
        Daily encounter probability p_i = 1 - exp(-m_i).
    gain : ndarray, shape (P,)
        Energy per capture [levels].
    handling : ndarray, shape (P,)
        Handling days h_i (season: rounded to whole days) [day].
    capture : ndarray, shape (2, P)
        Capture success per condition at the current hunting ability.
    capture_slope : ndarray, shape (2, P)
        Derivative of capture success with respect to hunting ability.
    injury_chance, injury_loss, fatality : ndarray, shape (P,)
        q_i, d_i [levels], f_i.
    recovery : float
        Daily recovery probability r = 1/D.
    hunting_ability : float
        a.
    season_days : int
        T (0 for the breeding currency).
    terminal_level : int
        Lowest level counted as success at the end of the season.
    start_level : int
        j0.
    after_breeding_level : int
        round(rho n) clipped to the living levels, where a breeding event
        continues (MODEL.md section 5).
    """

    currency: str
    n: int
    top: int
    living: np.ndarray
    step_mj: float
    cost: np.ndarray
    mortality: np.ndarray
    encounter_prob: np.ndarray
    gain: np.ndarray
    handling: np.ndarray
    capture: np.ndarray
    capture_slope: np.ndarray
    injury_chance: np.ndarray
    injury_loss: np.ndarray
    fatality: np.ndarray
    recovery: float
    hunting_ability: float
    season_days: int
    terminal_level: int
    start_level: int
    after_breeding_level: int

    @property
    def n_prey(self) -> int:
        return self.gain.shape[-1]

    @property
    def n_living(self) -> int:
        return self.living.shape[0]


def capture_success(base: np.ndarray, skill: np.ndarray, ability: float,
                    injured_factor: float) -> tuple[np.ndarray, np.ndarray]:
    """Capture success per condition and its derivative in hunting ability.

    Parameters
    ----------
    base : ndarray, shape (P,)
        Capture success s_i at hunting ability 1.
    skill : ndarray of bool, shape (P,)
        Whether success scales with hunting ability.
    ability : float
        Hunting ability a.
    injured_factor : float
        phi, the factor on capture success while injured.

    Returns
    -------
    success, slope : ndarray, shape (2, P)
        s_i^k and d s_i^k / d a; the derivative of min(1, a s_i) is s_i where
        a s_i < 1 and 0 where the cap binds (MODEL.md section 4).
    """
    ability = np.asarray(ability, dtype=float)[..., None]
    injured_factor = np.asarray(injured_factor, dtype=float)[..., None]
    scaled = np.minimum(1.0, ability * base)
    healthy = np.where(skill, scaled, base)
    slope_h = np.where(skill & (ability * base < 1.0), base, 0.0)
    return (np.stack([healthy, injured_factor * healthy], axis=-2),
            np.stack([slope_h, injured_factor * slope_h], axis=-2))


def make_grid(predator: Predator, prey: tuple[Prey, ...]) -> Grid:
    """Discretise a validated predator and its prey (MODEL.md section 2)."""
    batched = make_grids([(predator, prey)])
    return dataclasses.replace(batched, **{name: getattr(batched, name)[0] for name in PER_CELL})


def make_grids(cells: list[tuple[Predator, tuple[Prey, ...]]]) -> Grid:
    """Discretise many cells of equal shape at once: a stacked grid (leading axis = cell).

    Equivalent to :func:`stack_grids` of :func:`make_grid` for each cell, with
    one pass over the inputs instead of one small array per field and cell.
    """
    preds = [c[0] for c in cells]
    first = preds[0]
    n = first.energy_levels
    season = first.currency == "season"
    top = n if season else first.breeding_level
    keys = {(p.currency, p.energy_levels, n if season else p.breeding_level, len(c[1]))
            for p, c in zip(preds, cells, strict=True)}
    if len(keys) > 1:
        raise ValueError("cells of different shape cannot share a grid")

    def per_cell(f) -> np.ndarray:
        return np.array([f(p) for p in preds], dtype=float)

    def per_prey(f) -> np.ndarray:
        return np.array([[f(q, p) for q in c[1]] for p, c in zip(preds, cells, strict=True)],
                        dtype=float)

    step = per_cell(lambda p: p.reserve_capacity_mj / p.energy_levels)
    cost = per_cell(lambda p: p.effective_daily_cost_mj)
    handling = per_prey(lambda q, p: q.handling_days)
    if season:
        handling = np.floor(handling + 0.5)
    skill = per_prey(lambda q, p: q.is_skill_dependent).astype(bool)
    success, slope = capture_success(per_prey(lambda q, p: q.capture_success), skill,
                                     per_cell(lambda p: p.hunting_ability),
                                     per_cell(lambda p: p.injured_capture_factor))
    mu = per_cell(lambda p: p.background_mortality)
    return Grid(
        currency=first.currency,
        n=n,
        top=top,
        living=np.arange(1, n + 1) if season else np.arange(1, top),
        step_mj=step,
        cost=np.stack([cost, cost + per_cell(lambda p: p.injured_extra_cost_mj)], -1)
        / step[:, None],
        mortality=np.stack([mu, mu + per_cell(lambda p: p.injured_extra_mortality)], -1),
        encounter_prob=per_prey(lambda q, p: q.encounter_probability(p)),
        gain=per_prey(lambda q, p: q.energy_mj) / step[:, None],
        handling=handling,
        capture=success,
        capture_slope=slope,
        injury_chance=per_prey(lambda q, p: q.injury_chance),
        injury_loss=per_prey(lambda q, p: q.injury_energy_mj) / step[:, None],
        fatality=per_prey(lambda q, p: q.fatality_chance),
        recovery=per_cell(lambda p: p.recovery_chance_per_day),
        hunting_ability=per_cell(lambda p: p.hunting_ability),
        season_days=int(first.season_days or 0) if season else 0,
        terminal_level=np.array([max(1, round_half_up(p.season_reserve_threshold * n))
                                 for p in preds]),
        start_level=np.array([p.start_level for p in preds]),
        after_breeding_level=np.array([p.after_breeding_level for p in preds]),
    )


PER_CELL = ("step_mj", "cost", "mortality", "encounter_prob", "gain", "handling", "capture",
            "capture_slope", "injury_chance", "injury_loss", "fatality", "recovery",
            "hunting_ability", "terminal_level", "start_level", "after_breeding_level")
"""Grid fields that may differ between the cells of a batch (all others must agree)."""


def shape_key(grid: Grid) -> tuple:
    """Grids with equal keys can be stacked into one batch."""
    return (grid.currency, grid.n, grid.top, grid.n_prey, grid.season_days)


def stack_grids(grids: list[Grid]) -> Grid:
    """Stack grids of equal shape into one batched grid (leading axis = cell).

    The numeric core's step functions accept such a grid unchanged: every
    per-cell array gains a leading axis of length ``len(grids)``.
    """
    first = grids[0]
    if any(shape_key(g) != shape_key(first) for g in grids):
        raise ValueError("grids of different shape cannot be stacked")
    cells = {name: np.stack([np.asarray(getattr(g, name)) for g in grids]) for name in PER_CELL}
    return dataclasses.replace(first, **cells)


def take_cells(grid: Grid, index: np.ndarray) -> Grid:
    """The cells ``index`` of a batched grid, still batched."""
    return dataclasses.replace(grid, **{name: getattr(grid, name)[index] for name in PER_CELL})


@dataclass(frozen=True)
class Split:
    """Where a fractional reserve y lands: weight 1-w on level L, w on L+1."""

    low: np.ndarray
    weight: np.ndarray

    def value(self, v: np.ndarray) -> np.ndarray:
        """Interpolate value rows ``v`` (shape (..., top + 1)) at the split points.

        The split points may carry trailing axes of their own (levels, prey);
        leading axes of ``v`` are batch axes shared with the split.
        """
        return ((1.0 - self.weight) * gather(v, self.low)
                + self.weight * gather(v, self.low + 1))


def gather(v: np.ndarray, index: np.ndarray) -> np.ndarray:
    """``v[..., index]`` per batch: v has shape (*B, L), index (*B, *S) -> (*B, *S)."""
    if v.ndim == 1:  # a single grid: plain indexing is the fast path
        return v[index]
    # flat indexing with per-row offsets: much cheaper than take_along_axis's index grids
    length = v.shape[-1]
    rows = int(np.prod(v.shape[:-1]))
    flat = np.ascontiguousarray(v).reshape(-1)
    offsets = (np.arange(rows) * length).reshape(*v.shape[:-1], *([1] * (index.ndim
                                                                        - v.ndim + 1)))
    return flat[offsets + index]


def split(y: np.ndarray, top: int) -> Split:
    """Split fractional levels y between neighbouring grid levels.

    y <= 0 lands on level 0 (death) and y >= top on level ``top`` (breeding, or
    the cap of the season currency), as MODEL.md section 2 step 5 states.
    """
    yc = np.clip(y, 0.0, float(top))
    low = np.minimum(np.floor(yc).astype(np.intp), top - 1)
    return Split(low, yc - low)


@dataclass(frozen=True)
class Targets:
    """Reserves after each outcome, from every living state (fixed per grid).

    Attributes
    ----------
    stay : Split, shape (2, m)
        No attack or an attack that fails without injury: y = j - c_k.
    capture : Split, shape (2, m, P)
        y = j + e_i - c_k (1 + h_i).
    injury : Split, shape (2, m, P)
        y = j - c_k - d_i.
    recover_stay, recover_capture : ndarray
        Recovery chance of an injured predator over a 1-day step, shape (),
        and over a 1 + h_i day capture step, shape (P,).
    survive_handling : ndarray, shape (2, P)
        (1 - mu_k)^h_i.
    die_handling : ndarray, shape (2, P)
        1 - (1 - mu_k)^h_i, computed without cancellation (tiny when mu is).
    """

    stay: Split
    capture: Split
    injury: Split
    recover_stay: float
    recover_capture: np.ndarray
    survive_handling: np.ndarray
    die_handling: np.ndarray


def targets(grid: Grid) -> Targets:
    """Compute the outcome reserves of one step for every living state.

    Works on a single grid and on a stacked batch of grids alike (per-cell
    arrays then carry leading batch axes; see :func:`stack_grids`).
    """
    j = grid.living.astype(float)
    c = grid.cost[..., :, None, None]
    gain = grid.gain[..., None, None, :]
    handling = grid.handling[..., None, None, :]
    y_stay = j - grid.cost[..., :, None]
    y_cap = j[:, None] + gain - c * (1.0 + handling)
    y_inj = j[:, None] - c - grid.injury_loss[..., None, None, :]
    r = np.asarray(grid.recovery, dtype=float)
    return Targets(
        stay=split(y_stay, grid.top),
        capture=split(y_cap, grid.top),
        injury=split(y_inj, grid.top),
        recover_stay=r,
        recover_capture=1.0 - (1.0 - r[..., None]) ** (1.0 + grid.handling),
        survive_handling=(1.0 - grid.mortality[..., :, None]) ** grid.handling[..., None, :],
        die_handling=-np.expm1(grid.handling[..., None, :]
                               * np.log1p(-grid.mortality[..., :, None])),
    )


def attack_probabilities(encounter_prob: np.ndarray, priority: np.ndarray) -> np.ndarray:
    """Chance that each prey is the one attacked, under a ranked attack set.

    Parameters
    ----------
    encounter_prob : ndarray, shape (P,) or (*B, P)
        p_i (per cell of a batch: then priority has shape (*B, 2, m, P)).
    priority : ndarray of int, shape (..., P)
        Rank of prey i in the attack set (0 = best), or -1 when ignored.

    Returns
    -------
    ndarray, shape (..., P)
        P_i = p_i prod_{l ranked above i} (1 - p_l) for attacked prey, else 0
        (MODEL.md section 3).
    """
    n_prey = encounter_prob.shape[-1]
    attacked = priority >= 0
    # order prey by rank; ignored prey go last and contribute a factor of 1
    key = np.where(attacked, priority, n_prey)
    order = np.argsort(key, axis=-1, kind="stable")
    p = np.broadcast_to(encounter_prob[..., None, None, :] if encounter_prob.ndim > 1
                        else encounter_prob, priority.shape)
    p_sorted = np.where(np.take_along_axis(attacked, order, -1),
                        np.take_along_axis(p, order, -1), 0.0)
    survive = np.cumprod(1.0 - p_sorted, axis=-1)
    before = np.concatenate([np.ones_like(survive[..., :1]), survive[..., :-1]], axis=-1)
    out = np.empty_like(p_sorted)
    np.put_along_axis(out, order, p_sorted * before, -1)
    return out


@dataclass(frozen=True)
class Outcome:
    """One kind of outcome of a decision step, from every living state.

    Attributes
    ----------
    prob : ndarray, shape (2, m, X)
        Probability of the outcome from each state (death and its other causes
        are what the outcomes of a state leave out).
    split : Split, shape (2, m, X)
        Reserve level reached.
    healthy_share : ndarray, shape (2, m, X)
        Chance that the predator is healthy after the outcome.
    prey : ndarray of int, shape (X,)
        Prey involved (-1 for a day without capture or injury).
    captured : bool
        Whether the outcome is a kill.
    days : ndarray, shape (X,)
        Length of the step [day].
    """

    prob: np.ndarray
    split: Split
    healthy_share: np.ndarray
    prey: np.ndarray
    captured: bool
    days: np.ndarray


def outcomes(grid: Grid, tg: Targets, attack_prob: np.ndarray) -> list[Outcome]:
    """Outcomes of one step under a policy (MODEL.md section 2, steps 1-4).

    Parameters
    ----------
    attack_prob : ndarray, shape (*B, 2, m, P)
        Chance that each prey is the one attacked, from each living state
        (with leading batch axes for a stacked grid).

    Returns
    -------
    list of Outcome
        The quiet day (no attack, or a failed attack without injury), the
        captures and the injuries.
    """
    alive = (1.0 - grid.mortality)[..., :, None, None]
    s = grid.capture[..., :, None, :]
    q, f = grid.injury_chance[..., None, None, :], grid.fatality[..., None, None, :]
    quiet_attacks = (attack_prob * (1 - f) * (1 - s) * (1 - q)).sum(-1, keepdims=True)
    quiet = alive * (1.0 - attack_prob.sum(-1, keepdims=True) + quiet_attacks)
    batch = attack_prob.shape[:-3]
    m, n_prey = grid.n_living, grid.n_prey
    r = np.asarray(tg.recover_stay, dtype=float)
    healthy_quiet = np.empty((*batch, 2, m, 1))
    healthy_quiet[..., 0, :, :] = 1.0
    healthy_quiet[..., 1, :, :] = r[..., None, None] if r.ndim else r
    healthy_capture = np.empty((*batch, 2, m, n_prey))
    healthy_capture[..., 0, :, :] = 1.0
    healthy_capture[..., 1, :, :] = tg.recover_capture[..., None, :]
    stay = Split(tg.stay.low[..., None], tg.stay.weight[..., None])
    survive = tg.survive_handling[..., :, None, :]
    return [
        Outcome(quiet, stay, healthy_quiet, np.array([-1]), False, np.array([1.0])),
        Outcome(alive * attack_prob * (1 - f) * s * survive, tg.capture, healthy_capture,
                np.arange(n_prey), True, 1.0 + grid.handling),
        Outcome(alive * attack_prob * (1 - f) * (1 - s) * q, tg.injury,
                np.zeros((*batch, 2, m, n_prey)), np.arange(n_prey), False, np.ones(n_prey)),
    ]


def kill_probabilities(grid: Grid, attack_prob: np.ndarray) -> np.ndarray:
    """Chance that a step from each state starts with a kill of each prey.

    Parameters
    ----------
    attack_prob : ndarray, shape (*B, 2, m, P)
        P_i, the chance that prey i is the one attacked (zero if ignored).

    Returns
    -------
    ndarray, shape (*B, 2, m, P)
        (1 - mu_k) P_i (1 - f_i) s_i^k (MODEL.md section 5; a kill counts at
        capture, before the handling days are survived).
    """
    alive = (1.0 - grid.mortality)[..., :, None, None]
    return (alive * attack_prob * (1.0 - grid.fatality)[..., None, None, :]
            * grid.capture[..., :, None, :])


def death_chances(grid: Grid, tg: Targets, attack_prob: np.ndarray,
                  parts: list[Outcome]) -> np.ndarray:
    """Chance of dying in one step, by cause, from every living state.

    Computed from the causes themselves, never as one minus the chances of
    living, so that tiny chances keep their precision (the complement U = 1 - V
    of MODEL.md section 3 is solved from them).

    Parameters
    ----------
    attack_prob : ndarray, shape (*B, 2, m, P)
        P_i under the policy.
    parts : list of Outcome
        The step's outcomes under the same policy (:func:`outcomes`).

    Returns
    -------
    ndarray, shape (*B, 3, 2, m)
        Starvation (outcome mass landing on level 0, interpolation weight
        included), an attack ((1 - mu_k) sum_i P_i f_i) and other causes
        (mu_k + sum_i P(kill i) (1 - (1 - mu_k)^h_i)).
    """
    starvation = np.zeros(attack_prob.shape[:-1])
    for o in parts:
        on_zero = (o.split.low == 0) * (1.0 - o.split.weight)
        starvation = starvation + (o.prob * on_zero).sum(-1)
    alive = (1.0 - grid.mortality)[..., :, None]
    attack = alive * (attack_prob * grid.fatality[..., None, None, :]).sum(-1)
    kill = kill_probabilities(grid, attack_prob)
    other = grid.mortality[..., :, None] + (kill * tg.die_handling[..., :, None, :]).sum(-1)
    return np.stack([starvation, attack, np.broadcast_to(other, attack.shape)], axis=-3)
