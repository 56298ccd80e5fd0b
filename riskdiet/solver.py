"""State-dependent optimal attack policies (MODEL.md sections 2-4).

The breeding currency is solved exactly by policy iteration: each policy is
evaluated with one sparse LU solve of (I - P) V = b, and improved greedily,
until the policy repeats. The season currency is solved by backward induction.
Both return the marginal value of hunting ability with the policy held fixed
(envelope theorem): one extra solve with the same LU factors, or a second
backward recursion.

Everything is vectorised over levels and prey; the only Python loops are over
policy-iteration rounds and days of the season.

References
----------
.. [1] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive Behaviour:
   An Approach Based on State. Cambridge University Press.
.. [2] Mangel, M. & Clark, C. W. (1988). Dynamic Modeling in Behavioral
   Ecology. Princeton University Press.
.. [3] Puterman, M. L. (1994). Markov Decision Processes. Wiley (policy
   iteration, ch. 7).
.. [4] Lande, R. (1979). Quantitative genetic analysis of multivariate
   evolution, applied to brain:body size allometry. Evolution 33, 402-416.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import bicgstab, splu

from riskdiet.errors import RiskdietError
from riskdiet.grid import (
    Grid,
    Outcome,
    Split,
    Targets,
    attack_probabilities,
    outcomes,
    rank_attacks,
    targets,
)

MAX_POLICY_ITERATIONS = 200
DIRECT_LIMIT = 300
"""Largest system (unknowns) factorised directly; larger ones try BiCGSTAB first."""
SOLVE_TOLERANCE = 1e-13
"""Largest accepted residual |(I - P) x - b| of an iterative solve, relative to |b|."""


def _factorise(matrix: sp.csr_matrix):
    """Sparse LU of I - P, or a clear error when some policy never ends."""
    try:
        return splu(matrix.tocsc(), permc_spec="MMD_AT_PLUS_A")
    except RuntimeError:
        raise RiskdietError(
            "the predator's reserves can cycle for ever without death or breeding under some "
            "attack policy (I - P is singular); this happens when a prey is met on every "
            "day (encounters_per_day above about 35) and its captures exactly balance the "
            "daily cost. Lower the encounter rate or change the energy values.") from None


class LinearSolve:
    """Solves (I - P) x = b for one policy, exactly to rounding.

    Small systems are factorised once with a sparse LU (SuperLU). For large
    grids the LU factors fill in (captures jump far up the energy axis), so
    BiCGSTAB is tried first, warm-started, and its answer is accepted only when
    the residual is below ``SOLVE_TOLERANCE`` relative to the right-hand side;
    otherwise the system is factorised after all. Either way the answer is a
    solution of the linear system to rounding error, not a truncated iteration.
    """

    def __init__(self, matrix: sp.csr_matrix):
        self.matrix = matrix
        self.lu = None
        self.method = "sparse LU"
        if matrix.shape[0] <= DIRECT_LIMIT:
            self.lu = _factorise(matrix)

    def __call__(self, rhs: np.ndarray, guess: np.ndarray | None = None) -> np.ndarray:
        if self.lu is None:
            scale = max(float(np.abs(rhs).max()), 1e-300)
            x, info = bicgstab(self.matrix, rhs, x0=guess, rtol=SOLVE_TOLERANCE * 0.1, atol=0.0,
                               maxiter=20 * self.matrix.shape[0])
            if info == 0 and np.abs(self.matrix @ x - rhs).max() <= SOLVE_TOLERANCE * scale:
                self.method = "BiCGSTAB (residual-checked)"
                return x
            self.lu = _factorise(self.matrix)
            self.method = "sparse LU"
        return self.lu.solve(rhs)


@dataclass(frozen=True)
class Solution:
    """Optimal policy and fitness of one study (numeric core result).

    Attributes
    ----------
    currency : str
        ``breeding`` or ``season``.
    fitness : ndarray, shape (2, n + 1)
        V(j, k) at levels 0..n (season: day 0); 0 at level 0, 1 at levels >= J
        in the breeding currency [probability].
    priority : ndarray of int, shape (2, n + 1, P)
        Rank of each prey in the attack set at each level (0 = best), -1 when
        ignored or the level is not a living state (season: day 0).
    fitness_at_start : float
        V(j0, healthy) [probability].
    marginal_hunting_ability : float
        dV(j0, healthy)/da with the policy fixed [probability per unit ability].
    marginal_by_level : ndarray, shape (2, n + 1)
        The same derivative at every state.
    elasticity : float
        (a / V) dV/da at the start state; NaN when V = 0.
    residual : float
        Largest Bellman residual |T V - V| over living states (0 for the season
        currency, whose backward induction is exact by construction).
    iterations : int
        Policy-iteration rounds (season: days).
    converged : bool
        Whether the policy repeated within the iteration limit.
    fitness_by_day : ndarray or None, shape (T + 1, 2, n + 1)
        Season currency: V_t for every day, V_T = terminal reward.
    priority_by_day : ndarray or None, shape (T, 2, n + 1, P)
        Season currency: the policy of every day.
    linear_solver : str
        How the last policy was evaluated (``sparse LU``, ``BiCGSTAB
        (residual-checked)`` or ``backward induction``).
    """

    currency: str
    fitness: np.ndarray
    priority: np.ndarray
    fitness_at_start: float
    marginal_hunting_ability: float
    marginal_by_level: np.ndarray
    elasticity: float
    residual: float
    iterations: int
    converged: bool
    fitness_by_day: np.ndarray | None = None
    priority_by_day: np.ndarray | None = None
    linear_solver: str = "backward induction"

    def living_priority(self, grid: Grid, day: int = 0) -> np.ndarray:
        """Policy restricted to living states, shape (2, m, P)."""
        src = self.priority if self.priority_by_day is None else self.priority_by_day[day]
        return src[:, grid.living, :]


def _cap_interp(v_cap: np.ndarray, cond: int, s: Split) -> np.ndarray:
    """Interpolate per-prey value rows ``v_cap[..., i, cond, :]`` at capture splits (…, m, P)."""
    if v_cap.ndim == 3:  # a single grid: plain indexing is the fast path
        prey = np.arange(v_cap.shape[0])
        return ((1.0 - s.weight) * v_cap[prey, cond, s.low]
                + s.weight * v_cap[prey, cond, s.low + 1])
    rows = v_cap[..., cond, :]                                  # (*B, P, L)
    low = np.swapaxes(s.low, -1, -2)                            # (*B, P, m)
    w = np.swapaxes(s.weight, -1, -2)
    vals = ((1.0 - w) * np.take_along_axis(rows, low, -1)
            + w * np.take_along_axis(rows, low + 1, -1))
    return np.swapaxes(vals, -1, -2)


def step_values(grid: Grid, tg: Targets, v_stay: np.ndarray, v_cap: np.ndarray
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Values of ignoring and of attacking each prey, from every living state.

    Works on one grid or on a stacked batch of grids (leading batch axes *B on
    every per-cell array, see :func:`riskdiet.grid.stack_grids`).

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


def _bellman(grid: Grid, ignore: np.ndarray, attack: np.ndarray,
             attack_prob: np.ndarray) -> np.ndarray:
    alive = (1.0 - grid.mortality)[..., :, None]
    return alive * (ignore + (attack_prob * (attack - ignore[..., None])).sum(-1))


def transition_matrix(grid: Grid, parts: list[Outcome]) -> tuple[sp.csr_matrix, np.ndarray]:
    """Sub-stochastic matrix among living states and the one-step breeding chance.

    States are ordered condition-major: index k m + (j - 1).

    Returns
    -------
    P : csr_matrix, shape (2m, 2m)
        Transitions between living states under the policy.
    breed : ndarray, shape (2m,)
        Chance of reaching breeding condition (level >= J) in one step; zero in
        the season currency, where the top level is a cap, not an absorbing state.
    """
    m = grid.n_living
    absorbing = grid.currency == "breeding"
    rows, cols, vals = [], [], []
    breed = np.zeros(2 * m)
    for o in parts:
        state = (np.arange(2)[:, None] * m + np.arange(m)[None, :])[..., None]
        state = np.broadcast_to(state, o.prob.shape)
        for level, wt in ((o.split.low, 1.0 - o.split.weight), (o.split.low + 1, o.split.weight)):
            level = np.broadcast_to(level, o.prob.shape)
            for cond, share in ((0, o.healthy_share), (1, 1.0 - o.healthy_share)):
                val = o.prob * wt * share
                keep = (val > 0) & (level >= 1)
                if absorbing:
                    top = keep & (level >= grid.top)
                    breed += np.bincount(state[top], val[top], minlength=2 * m)
                    keep &= level < grid.top
                rows.append(state[keep])
                cols.append(cond * m + level[keep] - 1)
                vals.append(val[keep])
    matrix = sp.coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                           shape=(2 * m, 2 * m)).tocsr()
    return matrix, breed


def _full_levels(grid: Grid, living: np.ndarray, dead: float, top: float) -> np.ndarray:
    """Expand values on living states (2, m, ...) to levels 0..n."""
    out = np.full((2, grid.n + 1, *living.shape[2:]), dead, dtype=living.dtype)
    out[:, grid.living] = living
    if grid.currency == "breeding":
        out[:, grid.top:] = top
    return out


def solve_breeding(grid: Grid, initial_priority: np.ndarray | None = None,
                   max_iterations: int = MAX_POLICY_ITERATIONS) -> Solution:
    """Probability of reaching breeding condition before dying, and its policy.

    Parameters
    ----------
    grid : Grid
        Discretised study (breeding currency).
    initial_priority : ndarray of int, shape (2, m, P), optional
        Policy to start from (e.g. a neighbouring map cell's); by default the
        greedy policy of a linear value ramp.
    max_iterations : int
        Limit on policy-iteration rounds.

    Returns
    -------
    Solution

    Notes
    -----
    Policy iteration for a transient Markov decision process: evaluate
    V = (I - P_pi)^-1 b_pi exactly, set pi to the greedy ranked attack set of V,
    stop when pi repeats [3]_. Every policy ends in absorption because c > 0.
    The marginal value of hunting ability solves
    (I - P) dV/da = dP/da V + db/da [1]_, [4]_ with the same factors.

    References
    ----------
    .. [1] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive
       Behaviour. Cambridge University Press.
    .. [3] Puterman, M. L. (1994). Markov Decision Processes. Wiley, ch. 7.
    .. [4] Lande, R. (1979). Evolution 33, 402-416.
    """
    tg = targets(grid)
    m = grid.n_living
    identity = sp.identity(2 * m, format="csr")
    v_full = np.zeros((2, grid.top + 1))
    v_full[:, grid.top] = 1.0
    v_full[:, 1:grid.top] = np.arange(1, grid.top) / grid.top
    if initial_priority is None:
        ignore, attack, _ = step_values(grid, tg, v_full, v_full[None])
        priority = rank_attacks(attack, ignore)
    else:
        priority = np.asarray(initial_priority)
    converged = False
    for iteration in range(1, max_iterations + 1):
        attack_prob = attack_probabilities(grid.encounter_prob, priority)
        matrix, breed = transition_matrix(grid, outcomes(grid, tg, attack_prob))
        lu = LinearSolve((identity - matrix).tocsr())
        v_full[:, 1:grid.top] = lu(breed, v_full[:, 1:grid.top].reshape(-1)).reshape(2, m)
        ignore, attack, d_attack = step_values(
            grid, tg, v_full, np.broadcast_to(v_full, (grid.n_prey, *v_full.shape)))
        improved = rank_attacks(attack, ignore)
        if np.array_equal(improved, priority):
            converged = True
            break
        if iteration < max_iterations:
            priority = improved
    greedy_prob = attack_probabilities(grid.encounter_prob, improved)
    residual = float(np.max(np.abs(_bellman(grid, ignore, attack, greedy_prob)
                                   - v_full[:, 1:grid.top])))
    # envelope theorem: derivative of the one-step value at fixed V and policy
    alive = (1.0 - grid.mortality)[:, None]
    direct = alive * (attack_prob * d_attack * grid.capture_slope[:, None, :]).sum(-1)
    dv = lu(direct.reshape(-1)).reshape(2, m)
    fitness = _full_levels(grid, v_full[:, 1:grid.top], 0.0, 1.0)
    marginal = _full_levels(grid, dv, 0.0, 0.0)
    solution = _finish(grid, fitness, _full_levels(grid, priority, -1, -1), marginal, residual,
                       iteration, converged)
    return dataclasses.replace(solution, linear_solver=lu.method)


def solve_season(grid: Grid) -> Solution:
    """Probability of ending the season alive and in condition, by backward induction.

    Notes
    -----
    V_T(j) = 1 when j >= round(theta n) (and j >= 1), else 0; for t < T the
    day-t value is the Bellman step of MODEL.md section 3 using V_{t+1} for
    one-day steps and V_{min(t + 1 + H_i, T)} for captures [2]_. The marginal
    value of hunting ability is propagated backwards beside V with the day-t
    policy held fixed.

    References
    ----------
    .. [2] Mangel, M. & Clark, C. W. (1988). Dynamic Modeling in Behavioral
       Ecology. Princeton University Press.
    """
    tg = targets(grid)
    days = grid.season_days
    n, n_prey = grid.n, grid.n_prey
    terminal = np.zeros(n + 1)
    terminal[grid.terminal_level:] = 1.0
    values = np.zeros((days + 1, 2, n + 1))
    values[days] = terminal
    slopes = np.zeros_like(values)
    priority = np.full((days, 2, n + 1, n_prey), -1, dtype=np.int16)
    alive = (1.0 - grid.mortality)[:, None]
    skill = grid.capture_slope[:, None, :]
    handling = grid.handling.astype(np.intp)
    for t in range(days - 1, -1, -1):
        cap_day = np.minimum(t + 1 + handling, days)
        ignore, attack, d_attack = step_values(grid, tg, values[t + 1], values[cap_day])
        ranks = rank_attacks(attack, ignore)
        attack_prob = attack_probabilities(grid.encounter_prob, ranks)
        priority[t, :, 1:] = ranks
        values[t, :, 1:] = _bellman(grid, ignore, attack, attack_prob)
        d_ignore, d_attack_lin, _ = step_values(grid, tg, slopes[t + 1], slopes[cap_day])
        d_total = d_attack_lin + d_attack * skill
        slopes[t, :, 1:] = alive * (d_ignore + (attack_prob * (d_total - d_ignore[..., None]))
                                    .sum(-1))
    return _finish(grid, values[0].copy(), priority[0].astype(np.intp), slopes[0].copy(), 0.0,
                   days, True, values, priority)


def _finish(grid: Grid, fitness: np.ndarray, priority: np.ndarray, marginal: np.ndarray,
            residual: float, iterations: int, converged: bool,
            by_day: np.ndarray | None = None, priority_by_day: np.ndarray | None = None
            ) -> Solution:
    j0 = grid.start_level
    v0 = float(fitness[0, j0])
    g = float(marginal[0, j0])
    elasticity = grid.hunting_ability * g / v0 if v0 > 0 else float("nan")
    return Solution(grid.currency, fitness, priority, v0, g, marginal, elasticity, residual,
                    iterations, converged, by_day, priority_by_day)


def solve_grid(grid: Grid, initial_priority: np.ndarray | None = None) -> Solution:
    """Solve a discretised study in its own currency."""
    if grid.currency == "season":
        return solve_season(grid)
    return solve_breeding(grid, initial_priority)
