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
from scipy.sparse.linalg import splu

from riskdiet.core.choice import (
    choice_values,
    default_sets,
    keep_unless_better,
    relative_residual,
    set_values,
    step_values,
)
from riskdiet.core.grid import (
    Grid,
    Outcome,
    attack_probabilities,
    death_chances,
    outcomes,
    targets,
)
from riskdiet.core.krylov import bicgstab
from riskdiet.errors import SolveError

__all__ = ["LinearSolve", "PolicyStep", "Solution", "solve_breeding", "solve_grid", "solve_season",
           "step_values", "transition_matrix"]

MAX_POLICY_ITERATIONS = 500
"""Policy-iteration rounds before the solve is declared failed (a few to tens are typical)."""
DIRECT_LIMIT = 300
"""Largest system (unknowns) factorised directly; larger ones try BiCGSTAB first."""
SOLVE_TOLERANCE = 1e-13
"""Largest accepted residual of an iterative solve in each state, relative to b_s + (P x)_s."""
REFINEMENTS = 6
"""Defect-correction rounds an iterative solve may take before a factorisation is used."""
RESIDUAL_LIMIT = 1e-9
"""Largest accepted Bellman residual relative to each state's value (MODEL.md section 3)."""
SUM_LIMIT = 1e-9
"""Largest accepted |V + U - 1| in any state: the value and its complement solved separately."""

SINGULAR = ("the linear system of the attack policy tried in policy-iteration round {round} "
            "is singular to working precision: under that policy the predator would "
            "practically never die nor reach breeding condition (it could stay within a band "
            "of reserves for an astronomically long time), so its chances cannot be computed. "
            "This is a limit of the solver, not an error in the inputs; please report it with "
            "the study")


def _factorise(matrix: sp.csr_matrix, label: str):
    """Sparse LU of I - P, or an error saying which policy could not be evaluated."""
    try:
        return splu(matrix.tocsc(), permc_spec="MMD_AT_PLUS_A")
    except RuntimeError:
        raise SolveError(SINGULAR.format(round=label)) from None


class LinearSolve:
    """Solves (I - P) x = b for one policy, exactly to rounding.

    Small systems are factorised once with a sparse LU (SuperLU). For large
    grids the LU factors fill in (captures jump far up the energy axis), so
    BiCGSTAB is tried first, warm-started, and its answer is accepted only when
    the residual is below ``SOLVE_TOLERANCE`` relative to the right-hand side;
    otherwise the system is factorised after all. Either way the answer is a
    solution of the linear system to rounding error, not a truncated iteration.
    """

    def __init__(self, matrix: sp.csr_matrix, label: str = "1", factorise: bool = True):
        self.matrix = matrix
        self.label = label
        self.lu = None
        self.matrix_t = None
        self.method = "sparse LU"
        if factorise and matrix.shape[0] <= DIRECT_LIMIT:
            self.lu = _factorise(matrix, label)


    def accepted(self, x: np.ndarray, rhs: np.ndarray) -> bool:
        """MODEL.md section 3: x >= 0 and |((I - P)x - b)_s| <= 1e-13 (b_s + (P x)_s)."""
        if not np.all(np.isfinite(x)) or x.min() < 0:
            return False
        lhs = self.matrix @ x
        return bool(np.all(np.abs(lhs - rhs) <= SOLVE_TOLERANCE * (rhs + (x - lhs))))

    def _iterate(self, matrix: sp.csr_matrix, rhs: np.ndarray, guess: np.ndarray | None
                 ) -> np.ndarray | None:
        """BiCGSTAB, then defect-correction rounds until the per-state test holds.

        Each round solves for the correction from the residual r = b - A x,
        which floating point computes to each state's own precision, so small
        values (tiny chances of dying) gain relative accuracy round by round.
        """
        x, converged = bicgstab(matrix, rhs, guess, rtol=SOLVE_TOLERANCE * 0.1)
        if not converged:
            return None
        check = LinearSolve(matrix, self.label, factorise=False)
        for _ in range(REFINEMENTS):
            if check.accepted(x, rhs):
                return x
            residual = rhs - matrix @ x
            if not np.any(residual):
                break
            # a breakdown on a tiny residual still returns a usable correction; the
            # per-state test below decides whether the answer is accepted
            delta, _ = bicgstab(matrix, residual, rtol=SOLVE_TOLERANCE * 0.1)
            if not np.all(np.isfinite(delta)):
                return None
            x = x + delta
        return x if check.accepted(x, rhs) else None

    def __call__(self, rhs: np.ndarray, guess: np.ndarray | None = None) -> np.ndarray:
        if self.lu is None:
            x = self._iterate(self.matrix, rhs, guess)
            if x is not None:
                self.method = "BiCGSTAB (residual-checked)"
                return x
            self.lu = _factorise(self.matrix, self.label)
            self.method = "sparse LU"
        x = self.lu.solve(rhs)
        if not np.all(np.isfinite(x)):
            raise SolveError(SINGULAR.format(round=self.label))
        return x

    def transposed(self, rhs: np.ndarray) -> np.ndarray:
        """Solve (I - P)^T x = b: rows of the fundamental matrix (expected visits).

        Reuses the policy solve's LU factors when there are any (SuperLU solves
        the transposed system with the same factors); otherwise BiCGSTAB on the
        transposed matrix, accepted on the same per-state residual test, else a
        factorisation after all.
        """
        if self.lu is None:
            # expected visits need accuracy relative to the largest (kill rates to 1e-10),
            # not per state: unreachable states are exact zeros an iteration only nears
            if self.matrix_t is None:
                self.matrix_t = self.matrix.T.tocsr()
            matrix_t = self.matrix_t
            # started from b itself: from zero, a unit right-hand side breaks BiCGSTAB down
            x, converged = bicgstab(matrix_t, rhs, rhs, rtol=SOLVE_TOLERANCE * 0.1)
            scale = max(float(np.abs(x).max(initial=0.0)), float(np.abs(rhs).max()))
            if (converged and np.all(np.isfinite(x))
                    and np.abs(matrix_t @ x - rhs).max() <= SOLVE_TOLERANCE * scale):
                return x
            self.lu = _factorise(self.matrix, self.label)
            self.method = "sparse LU"
        x = self.lu.solve(rhs, trans="T")
        if not np.all(np.isfinite(x)):
            raise SolveError(SINGULAR.format(round=self.label))
        return x


@dataclass(frozen=True)
class PolicyStep:
    """The final policy's one-step chain, as the policy solve built it.

    The kill chain (:func:`riskdiet.core.chain.steady_state`) needs exactly
    these arrays; keeping them spares building them again.

    Attributes
    ----------
    grid : Grid
        The grid solved (the arrays hold for this grid object only).
    priority : ndarray of int, shape (2, m, P)
        The final policy on living states.
    transitions : csr_matrix, shape (2m, 2m)
        P among living states (:func:`transition_matrix`).
    breed : ndarray, shape (2m,)
        One-step breeding chance.
    deaths : ndarray, shape (3, 2m)
        One-step chance of dying by cause (:func:`riskdiet.core.grid.death_chances`).
    attack_prob : ndarray, shape (2, m, P)
        P_i under the policy.
    """

    grid: Grid
    priority: np.ndarray
    transitions: sp.csr_matrix
    breed: np.ndarray
    deaths: np.ndarray
    attack_prob: np.ndarray


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
    elasticity : float or None
        (a / V) dV/da at the start state; None when V = 0 (undefined).
    residual : float
        Largest Bellman residual over living states relative to each state's
        value, max |T V - V| / max(V, U) (0 for the season currency, whose
        backward induction is exact by construction).
    iterations : int
        Policy-iteration rounds (season: days).
    converged : bool
        Always True: a solve that does not settle raises
        :class:`riskdiet.errors.SolveError` instead of returning.
    fitness_by_day : ndarray or None, shape (T + 1, 2, n + 1)
        Season currency: V_t for every day, V_T = terminal reward.
    priority_by_day : ndarray or None, shape (T, 2, n + 1, P)
        Season currency: the policy of every day.
    linear_solver : str
        How the last policy was evaluated (``sparse LU``, ``BiCGSTAB
        (residual-checked)`` or ``backward induction``).
    complement : ndarray, shape (2, n + 1)
        U = 1 - V computed directly (MODEL.md section 3), exact for values
        near 1 where V has lost its precision.
    linear : LinearSolve or None
        The final policy's linear solver (breeding currency), whose factors
        the kill chain reuses for the rows of the fundamental matrix.
    step : PolicyStep or None
        The final policy's one-step chain (breeding currency).
    """

    currency: str
    fitness: np.ndarray
    priority: np.ndarray
    fitness_at_start: float
    marginal_hunting_ability: float
    marginal_by_level: np.ndarray
    elasticity: float | None
    residual: float
    iterations: int
    converged: bool
    fitness_by_day: np.ndarray | None = None
    priority_by_day: np.ndarray | None = None
    linear_solver: str = "backward induction"
    complement: np.ndarray | None = None
    linear: LinearSolve | None = dataclasses.field(default=None, repr=False, compare=False)
    step: PolicyStep | None = dataclasses.field(default=None, repr=False, compare=False)

    def living_priority(self, grid: Grid, day: int = 0) -> np.ndarray:
        """Policy restricted to living states, shape (2, m, P)."""
        src = self.priority if self.priority_by_day is None else self.priority_by_day[day]
        return src[:, grid.living, :]


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


def _check_values(v: np.ndarray, u: np.ndarray, label: str) -> None:
    """A value and its complement, solved separately, must be probabilities adding to one."""
    if not (np.all(np.isfinite(v)) and np.all(np.isfinite(u))):
        raise SolveError(SINGULAR.format(round=label))
    worst = float(np.max(np.abs(v + u - 1.0), initial=0.0))
    if worst > SUM_LIMIT or v.min(initial=0.0) < -SUM_LIMIT or u.min(initial=0.0) < -SUM_LIMIT:
        raise SolveError(f"the values of the attack policy of policy-iteration round {label} are "
                         f"inexact (a chance and its complement differ from 1 by {worst:.1e}); "
                         "the linear system is too ill-conditioned to vouch for the numbers")


def _check_residual(residual: float) -> None:
    if not np.isfinite(residual) or residual > RESIDUAL_LIMIT:
        raise SolveError(f"the optimality check failed: the Bellman residual relative to the "
                         f"values is {residual:.1e}, above the accepted {RESIDUAL_LIMIT:.0e}")


def solve_breeding(grid: Grid, max_iterations: int = MAX_POLICY_ITERATIONS, *,
                   marginal: bool = True) -> Solution:
    """Probability of reaching breeding condition before dying, and its policy.

    Parameters
    ----------
    grid : Grid
        Discretised study (breeding currency).
    max_iterations : int
        Limit on policy-iteration rounds; reaching it is an error.
    marginal : bool
        Compute the marginal value of hunting ability (one more linear
        solve). The grid check, which compares other numbers only, leaves it
        out; the marginal fields are then NaN, meaning "not computed", and
        such a solution is never shown.

    Returns
    -------
    Solution

    Raises
    ------
    SolveError
        When the iteration does not settle, a policy's linear system is
        singular, or the answer fails its checks (MODEL.md section 3).

    Notes
    -----
    Policy iteration for a transient Markov decision process [3]_, started
    from the default policy (:func:`riskdiet.core.choice.default_sets`). Each round
    evaluates V = (I - P)^-1 b and its complement U = (I - P)^-1 d exactly (b
    the one-step breeding chance, d the one-step chance of dying), then
    switches a state to the greedy set only where that raises its one-step
    value by more than the relative tolerance; the iteration ends when no
    state switches. Every policy ends in absorption because c > 0. The
    marginal value of hunting ability solves (I - P) dV/da = dP/da V + db/da
    [1]_, [4]_ with the same factors.

    References
    ----------
    .. [1] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive
       Behaviour. Cambridge University Press.
    .. [3] Puterman, M. L. (1994). Markov Decision Processes. Wiley, sections
       6.4 and 7.2.
    .. [4] Lande, R. (1979). Evolution 33, 402-416.
    """
    tg = targets(grid)
    m, top, n_prey = grid.n_living, grid.top, grid.n_prey
    identity = sp.identity(2 * m, format="csr")
    v_full = np.zeros((2, top + 1))
    v_full[:, top] = 1.0
    v_full[:, 1:top] = np.arange(1, top) / top
    u_full = 1.0 - v_full
    priority = default_sets(grid, tg)
    for iteration in range(1, max_iterations + 1):
        attack_prob = attack_probabilities(grid.encounter_prob, priority)
        parts = outcomes(grid, tg, attack_prob)
        matrix, breed = transition_matrix(grid, parts)
        deaths = death_chances(grid, tg, attack_prob, parts).reshape(3, -1)
        lu = LinearSolve((identity - matrix).tocsr(), str(iteration))
        v = lu(breed, v_full[:, 1:top].reshape(-1))
        u = lu(deaths.sum(0), u_full[:, 1:top].reshape(-1))
        _check_values(v, u, str(iteration))
        # (I - P) is an M-matrix with a nonnegative inverse, so V and U are >= 0; a rounded
        # -4e-18 where the true value is 0 would make a worthless attack (value 0) look
        # better than a hopeless day (value "-0") and enter the policy.
        v, u = np.maximum(v, 0.0), np.maximum(u, 0.0)
        v_full[:, 1:top] = v.reshape(2, m)
        u_full[:, 1:top] = u.reshape(2, m)
        cv = choice_values(grid, tg, v_full, u_full, np.broadcast_to(v_full, (n_prey, 2, top + 1)),
                           np.broadcast_to(u_full, (n_prey, 2, top + 1)))
        improved, switched = keep_unless_better(grid, cv, priority)
        if not switched.any():
            break
        priority = improved
    else:
        raise SolveError(f"policy iteration did not settle within {max_iterations} rounds")
    residual = float(relative_residual(grid, cv, v_full[:, 1:top], u_full[:, 1:top]).max())
    _check_residual(residual)
    if marginal:
        # envelope theorem: derivative of the one-step value at fixed V and policy
        alive = (1.0 - grid.mortality)[:, None]
        direct = alive * (attack_prob * cv.d_attack * grid.capture_slope[:, None, :]).sum(-1)
        dv = lu(direct.reshape(-1)).reshape(2, m)
    else:
        dv = np.full((2, m), np.nan)
    fitness = _full_levels(grid, v_full[:, 1:top], 0.0, 1.0)
    complement = _full_levels(grid, u_full[:, 1:top], 1.0, 0.0)
    marginal = _full_levels(grid, dv, 0.0, 0.0)
    solution = _finish(grid, fitness, complement, _full_levels(grid, priority, -1, -1), marginal,
                       residual, iteration)
    step = PolicyStep(grid, priority, matrix, breed, deaths, attack_prob)
    return dataclasses.replace(solution, linear_solver=lu.method, linear=lu, step=step)


def solve_season(grid: Grid) -> Solution:
    """Probability of ending the season alive and in condition, by backward induction.

    Notes
    -----
    V_T(j) = 1 when j >= round(theta n) (and j >= 1), else 0, and U_T = 1 - V_T;
    for t < T the day-t values are the Bellman step of MODEL.md section 3
    using day t + 1 for one-day steps and day min(t + 1 + H_i, T) for
    captures [2]_. At every day and state the default set is kept unless the
    greedy set is better by more than the relative tolerance. The marginal
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
    comps = np.ones((days + 1, 2, n + 1))
    comps[days] = 1.0 - terminal
    slopes = np.zeros_like(values)
    priority = np.full((days, 2, n + 1, n_prey), -1, dtype=np.int16)
    alive = (1.0 - grid.mortality)[:, None]
    skill = grid.capture_slope[:, None, :]
    handling = grid.handling.astype(np.intp)
    default = default_sets(grid, tg)
    for t in range(days - 1, -1, -1):
        cap_day = np.minimum(t + 1 + handling, days)
        cv = choice_values(grid, tg, values[t + 1], comps[t + 1], values[cap_day],
                           comps[cap_day])
        ranks, _ = keep_unless_better(grid, cv, default)
        v, u, attack_prob = set_values(grid, cv, ranks)
        priority[t, :, 1:] = ranks
        values[t, :, 1:] = v
        comps[t, :, 1:] = u
        d_ignore, d_attack_lin, _ = step_values(grid, tg, slopes[t + 1], slopes[cap_day])
        d_total = d_attack_lin + cv.d_attack * skill
        slopes[t, :, 1:] = alive * (d_ignore + (attack_prob * (d_total - d_ignore[..., None]))
                                    .sum(-1))
    _check_values(values[0, :, 1:], comps[0, :, 1:], "of day 0")
    return _finish(grid, values[0].copy(), comps[0].copy(), priority[0].astype(np.intp),
                   slopes[0].copy(), 0.0, days, values, priority)


def _finish(grid: Grid, fitness: np.ndarray, complement: np.ndarray, priority: np.ndarray,
            marginal: np.ndarray, residual: float, iterations: int,
            by_day: np.ndarray | None = None, priority_by_day: np.ndarray | None = None
            ) -> Solution:
    j0 = grid.start_level
    v0 = float(fitness[0, j0])
    g = float(marginal[0, j0])
    elasticity = grid.hunting_ability * g / v0 if v0 > 0 else None
    return Solution(grid.currency, fitness, priority, v0, g, marginal, elasticity, residual,
                    iterations, True, by_day, priority_by_day, complement=complement)


def solve_grid(grid: Grid) -> Solution:
    """Solve a discretised study in its own currency.

    Raises
    ------
    SolveError
        When no answer that can be vouched for was reached (MODEL.md section 3).
    """
    if grid.currency == "season":
        return solve_season(grid)
    return solve_breeding(grid)
