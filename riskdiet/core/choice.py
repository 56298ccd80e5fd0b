"""Which attack set is chosen, exactly (MODEL.md section 3).

Values near 1 lose their precision (1 - 1e-13 and 1 - 1e-15 look alike in
floating point) while values near 0 are tiny but exact. So every value V comes
with its complement U = 1 - V computed directly, and two choices are compared
on U when both values exceed one half, else on V, with a *relative*
tolerance. Where no choice is better by more than that tolerance the animal
keeps a default set: what a forager maximising its expected reserves next step
would attack. Policy iteration switches a state from its incumbent set only on
a strict improvement, so it cannot cycle.

Everything here works on a single grid and on a stacked batch of grids
(leading batch axes, :func:`riskdiet.core.grid.stack_grids`) alike.

References
----------
.. [1] Puterman, M. L. (1994). Markov Decision Processes. Wiley, sections 6.4
   and 7.2 (policy iteration keeps the incumbent action unless another is
   strictly better, which guarantees termination).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskdiet.core.grid import Grid, Split, Targets, attack_probabilities, gather

RELATIVE_TOLERANCE = 1e-12
"""tau: one choice beats another only by more than this fraction of the larger value."""


def better(xv: np.ndarray, xu: np.ndarray, yv: np.ndarray, yu: np.ndarray) -> np.ndarray:
    """Whether choice x is better than choice y by more than the tolerance.

    Parameters
    ----------
    xv, xu : ndarray
        Value V of choice x and its complement U = 1 - V, computed separately
        [probability].
    yv, yu : ndarray
        The same for choice y (broadcast against x).

    Returns
    -------
    ndarray of bool
        On U when both values exceed 1/2 (U_y - U_x > tau max(U_x, U_y)),
        else on V (V_x - V_y > tau max(V_x, V_y)), MODEL.md section 3.
    """
    return better_by(xv - yv, xu - yu, xv, xu, yv, yu)


def better_by(dv: np.ndarray, du: np.ndarray, xv: np.ndarray, xu: np.ndarray, yv: np.ndarray,
              yu: np.ndarray) -> np.ndarray:
    """:func:`better` from differences the caller already holds.

    ``dv = xv - yv`` and ``du = xu - yu``; the batched solves keep them for the set
    values (``G + sum P_i (A_i - G)``), so the rule is applied once, here, on the same
    numbers (``-(xu - yu)`` is ``yu - xu`` exactly in floating point).
    """
    upper = (xv > 0.5) & (yv > 0.5)
    by_u = -du > RELATIVE_TOLERANCE * np.maximum(xu, yu)
    by_v = dv > RELATIVE_TOLERANCE * np.maximum(xv, yv)
    return np.where(upper, by_u, by_v)


@dataclass(frozen=True)
class ChoiceValues:
    """Values of every choice from every living state, with their complements.

    Attributes
    ----------
    ignore_v, ignore_u : ndarray, shape (*B, 2, m)
        G, the value of a day without attack, and 1 - G.
    attack_v, attack_u : ndarray, shape (*B, 2, m, P)
        A_i, the value of attacking prey i, and 1 - A_i.
    d_attack : ndarray, shape (*B, 2, m, P)
        dA_i / ds_i^k at fixed values (for the marginal value of hunting ability).
    """

    ignore_v: np.ndarray
    ignore_u: np.ndarray
    attack_v: np.ndarray
    attack_u: np.ndarray
    d_attack: np.ndarray


def _cap_interp(v_cap: np.ndarray, cond: int, s: Split) -> np.ndarray:
    """Interpolate per-prey value rows ``v_cap[..., i, cond, :]`` at capture splits (…, m, P)."""
    if v_cap.ndim == 3:  # a single grid: plain indexing is the fast path
        prey = np.arange(v_cap.shape[0])
        return ((1.0 - s.weight) * v_cap[prey, cond, s.low]
                + s.weight * v_cap[prey, cond, s.low + 1])
    rows = v_cap[..., cond, :]                                  # (*B, P, L)
    low = np.swapaxes(s.low, -1, -2)                            # (*B, P, m)
    w = np.swapaxes(s.weight, -1, -2)
    vals = (1.0 - w) * gather(rows, low) + w * gather(rows, low + 1)
    return np.swapaxes(vals, -1, -2)


def step_values(grid: Grid, tg: Targets, v_stay: np.ndarray, v_cap: np.ndarray
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Values of ignoring and of attacking each prey, from every living state.

    Works on one grid or on a stacked batch of grids (leading batch axes *B on
    every per-cell array, see :func:`riskdiet.core.grid.stack_grids`).

    Parameters
    ----------
    v_stay : ndarray, shape (*B, 2, top + 1)
        Value at the end of a one-day step.
    v_cap : ndarray, shape (*B, P, 2, top + 1)
        Value at the end of a capture step of each prey (differs by prey only
        in the season currency, where handling moves the clock).

    Returns
    -------
    ignore : ndarray, shape (*B, 2, m)
        G = W_k(j - c_k; 1).
    attack : ndarray, shape (*B, 2, m, P)
        A_i of MODEL.md section 3.
    d_attack_d_success : ndarray, shape (*B, 2, m, P)
        dA_i / ds_i^k at fixed values.
    """
    r = np.asarray(tg.recover_stay, dtype=float)[..., None]
    stay = tg.stay
    healthy_now = Split(stay.low[..., 0, :], stay.weight[..., 0, :]).value(v_stay[..., 0, :])
    injured_split = Split(stay.low[..., 1, :], stay.weight[..., 1, :])
    injured_now = (r * injured_split.value(v_stay[..., 0, :])
                   + (1 - r) * injured_split.value(v_stay[..., 1, :]))
    ignore = np.stack([healthy_now, injured_now], axis=-2)

    cap = tg.capture
    won_h = _cap_interp(v_cap, 0, Split(cap.low[..., 0, :, :], cap.weight[..., 0, :, :]))
    rc = tg.recover_capture[..., None, :]
    c1 = Split(cap.low[..., 1, :, :], cap.weight[..., 1, :, :])
    won_i = rc * _cap_interp(v_cap, 0, c1) + (1 - rc) * _cap_interp(v_cap, 1, c1)
    won = np.stack([won_h, won_i], axis=-3)

    hurt = tg.injury.value(v_stay[..., 1, :])

    q, f = grid.injury_chance[..., None, None, :], grid.fatality[..., None, None, :]
    s = grid.capture[..., :, None, :]
    won_net = tg.survive_handling[..., :, None, :] * won
    failed = q * hurt + (1 - q) * ignore[..., None]
    attack = (1 - f) * (s * won_net + (1 - s) * failed)
    return ignore, attack, (1 - f) * (won_net - failed)


def choice_values(grid: Grid, tg: Targets, v_stay: np.ndarray, u_stay: np.ndarray,
                  v_cap: np.ndarray, u_cap: np.ndarray) -> ChoiceValues:
    """Values of ignoring and attacking, and their complements, from every state.

    Parameters
    ----------
    v_stay, u_stay : ndarray, shape (*B, 2, top + 1)
        V and U = 1 - V at the end of a one-day step (U is 1 at level 0 and, in
        the breeding currency, 0 at level J).
    v_cap, u_cap : ndarray, shape (*B, P, 2, top + 1)
        The same at the end of each prey's capture step.

    Returns
    -------
    ChoiceValues

    Notes
    -----
    Interpolation weights add up to one, so the interpolated complement is the
    complement of the interpolated value; only the chances of dying inside the
    attack need adding: 1 - A_i = f_i + (1 - f_i) [s (1 - S_h + S_h U_cap)
    + (1 - s)(q U_hurt + (1 - q) U_stay)], S_h = (1 - mu)^h the chance of
    surviving the handling days.
    """
    ignore_v, attack_v, d_attack = step_values(grid, tg, v_stay, v_cap)
    ignore_u, attack_u, _ = step_values(grid, tg, u_stay, u_cap)
    f = grid.fatality[..., None, None, :]
    s = grid.capture[..., :, None, :]
    attack_u = attack_u + f + (1.0 - f) * s * tg.die_handling[..., :, None, :]
    return ChoiceValues(ignore_v, ignore_u, attack_v, attack_u, d_attack)


def greedy_sets(cv: ChoiceValues) -> np.ndarray:
    """Ranked set of prey worth attacking at every state.

    Returns
    -------
    ndarray of int, shape (*B, 2, m, P)
        Rank of each prey better than ignoring by more than the tolerance
        (0 = best; by U where A_i > 1/2, else by V; equal values go to the
        prey listed first), -1 for the others.
    """
    worth = better(cv.attack_v, cv.attack_u, cv.ignore_v[..., None], cv.ignore_u[..., None])
    upper = cv.attack_v > 0.5
    primary = np.where(worth, np.where(upper, 0, 1), 2)
    secondary = np.where(upper, cv.attack_u, -cv.attack_v)
    index = np.broadcast_to(np.arange(worth.shape[-1]), worth.shape)
    order = np.lexsort((index, secondary, primary), axis=-1)
    ranks = np.empty_like(order)
    np.put_along_axis(ranks, order, index, -1)
    return np.where(worth, ranks, -1)


def set_values(grid: Grid, cv: ChoiceValues, priority: np.ndarray
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One-step value of each state under an attack set, and its complement.

    Returns
    -------
    v, u : ndarray, shape (*B, 2, m)
        (1 - mu)[G + sum P_i (A_i - G)] and mu + (1 - mu)[U_G + sum P_i (U_i - U_G)].
    attack_prob : ndarray, shape (*B, 2, m, P)
        P_i under the set.
    """
    attack_prob = attack_probabilities(grid.encounter_prob, priority)
    mu = grid.mortality[..., :, None]
    v = one_step_value(grid, cv.ignore_v, cv.attack_v, attack_prob)
    u = mu + (1.0 - mu) * (cv.ignore_u
                           + (attack_prob * (cv.attack_u - cv.ignore_u[..., None])).sum(-1))
    return v, u, attack_prob


def keep_unless_better(grid: Grid, cv: ChoiceValues, incumbent: np.ndarray
                       ) -> tuple[np.ndarray, np.ndarray]:
    """Switch a state from its incumbent set to the greedy set only on a strict gain.

    Returns
    -------
    policy : ndarray of int, shape (*B, 2, m, P)
        The greedy set where it beats the incumbent's one-step value by more
        than the tolerance, the incumbent elsewhere.
    switched : ndarray of bool, shape (*B, 2, m)
    """
    greedy = greedy_sets(cv)
    gv, gu, _ = set_values(grid, cv, greedy)
    iv, iu, _ = set_values(grid, cv, incumbent)
    switched = better(gv, gu, iv, iu) & (greedy != incumbent).any(-1)
    return np.where(switched[..., None], greedy, incumbent), switched


def ramp(grid: Grid) -> tuple[np.ndarray, np.ndarray]:
    """The linear value ramp j/J (season: j/n) and its complement, levels 0..top."""
    top = grid.top
    v = np.arange(top + 1, dtype=float) / top
    u = (top - np.arange(top + 1, dtype=float)) / top
    return np.broadcast_to(v, (2, top + 1)), np.broadcast_to(u, (2, top + 1))


def default_sets(grid: Grid, tg: Targets) -> np.ndarray:
    """The default attack set: greedy for the ramp value (a reserve-maximiser's choice).

    Returns
    -------
    ndarray of int, shape (*B, 2, m, P)
    """
    v, u = ramp(grid)
    batch = grid.cost.shape[:-1]
    v = np.broadcast_to(v, (*batch, 2, grid.top + 1))
    u = np.broadcast_to(u, (*batch, 2, grid.top + 1))
    cap = (*batch, grid.n_prey, 2, grid.top + 1)
    cv = choice_values(grid, tg, v, u, np.broadcast_to(v[..., None, :, :], cap),
                       np.broadcast_to(u[..., None, :, :], cap))
    return greedy_sets(cv)


def relative_residual(grid: Grid, cv: ChoiceValues, v: np.ndarray, u: np.ndarray
                      ) -> np.ndarray:
    """Bellman residual of each state relative to its value, max(V, U).

    Parameters
    ----------
    v, u : ndarray, shape (*B, 2, m)
        Values and complements on the living states.

    Returns
    -------
    ndarray, shape (*B, 2, m)
        |T V - V| / max(V, U), read on U where V > 1/2 (MODEL.md section 3).
    """
    tv, tu, _ = set_values(grid, cv, greedy_sets(cv))
    diff = np.where(v > 0.5, np.abs(tu - u), np.abs(tv - v))
    return diff / np.maximum(np.maximum(v, u), 1e-300)


def one_step_value(grid: Grid, ignore: np.ndarray, attack: np.ndarray,
                   attack_prob: np.ndarray) -> np.ndarray:
    """(1 - mu)[G + sum P_i (A_i - G)]: a state's value under given attack chances."""
    alive = (1.0 - grid.mortality)[..., :, None]
    return alive * (ignore + (attack_prob * (attack - ignore[..., None])).sum(-1))
