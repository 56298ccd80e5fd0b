"""A season day's step as fixed sparse matrices, built once per batch.

The outcomes of a step (MODEL.md section 2) land on fixed levels with fixed
interpolation weights, and every day of the season uses the same ones; only
the values at the end of the step and the policy change from day to day. So
the values of every choice from every state (MODEL.md section 3: G, A_i, and
the derivative of A_i in hunting ability) are one sparse matrix times the
values of the next days, and the forward propagation of the state
distribution (section 5) is one sparse matrix times the day's outcome masses.
Both matrices are built here once per batch of cells.

Layouts
-------
Values are stored by (day, cell, quantity, condition, level), quantity 0 the
value V, 1 its complement U, 2 the derivative in hunting ability; a gather
window starts at day t + 1 and holds ``ahead + 1`` days (captures end up to
``ahead`` days later; days from T on hold the terminal values). Arrivals are
stored by (day ahead, cell, condition, level).

References
----------
.. [1] Mangel, M. & Clark, C. W. (1988). Dynamic Modeling in Behavioral
   Ecology. Princeton University Press (the dynamic programming equation as a
   linear map of next-day values for a fixed decision).
.. [2] Houston, A. I. & McNamara, J. M. (1999). Models of Adaptive Behaviour.
   Cambridge University Press (forward iteration with the transposed
   transitions).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from riskdiet.core.grid import Grid, Targets

QUANTITIES = 3
"""V, U = 1 - V, and dV/da, interpolated together."""
V, U, S = 0, 1, 2


@dataclass(frozen=True)
class BackwardStep:
    """Choice values of every state as one sparse matrix of the next days' values.

    ``matrix @ window`` gives, in this order: G of each quantity, shape
    (B, 3, 2, m); A_i on V, shape (P, B, 2, m) (prey first); A_i on U without
    its constant (add ``u_constant``, shape (P, B, 2, 1): the chance of dying
    in the attack or in the handling days); and dA_i/da at fixed values: A_i
    on the derivatives plus the capture-success slope times dA_i/ds_i on V.
    The products are those of :func:`riskdiet.core.choice.step_values`
    multiplied out, so results agree with it to rounding, not bit for bit.
    """

    matrix: sp.csr_array
    sizes: tuple[int, int, int, int]
    u_constant: np.ndarray


def _csr(cols: list[np.ndarray], vals: list[np.ndarray], n_cols: int) -> sp.csr_array:
    """CSR matrix from per-row entry blocks (rows in block order, zero entries dropped)."""
    flat_c, flat_v, counts = [], [], []
    for c, v in zip(cols, vals, strict=True):
        keep = v != 0.0
        flat_c.append(np.broadcast_to(c, v.shape)[keep])
        flat_v.append(v[keep])
        counts.append(keep.sum(-1).reshape(-1))
    indptr = np.concatenate([[0], np.cumsum(np.concatenate(counts))])
    index = np.int32 if n_cols < 2 ** 31 and indptr[-1] < 2 ** 31 else np.int64
    return sp.csr_array((np.concatenate(flat_v), np.concatenate(flat_c).astype(index),
                         indptr.astype(index)), shape=(indptr.size - 1, n_cols))


def backward_step(grid: Grid, tg: Targets, handling: np.ndarray, ahead: int) -> BackwardStep:
    """The choice values of MODEL.md section 3 as a matrix of the next days' values.

    Parameters
    ----------
    handling : ndarray of int, shape (B, P)
        Handling days H_i capped at the season length [day].
    ahead : int
        Days the gather window reaches beyond day t + 1 (max of ``handling``).
    """
    batch, n_prey, m = grid.cost.shape[0], grid.n_prey, grid.n_living
    levels = grid.n + 1
    q_ = QUANTITIES
    cell = np.arange(batch)[:, None, None, None]
    # entries of an interpolation: (row, upper level) per entry; condition-1 rows mix
    # the healthy and the injured row with the recovery chance
    row = np.array([0, 0, 1, 1])
    upper = np.array([0, 1, 0, 1])

    def col(day, quantity, rows, low):
        return ((day * batch + cell_b(low)) * q_ + quantity) * (2 * levels) + rows * levels + low

    def cell_b(low):
        return cell.reshape((batch,) + (1,) * (low.ndim - 1))

    def shares(recover):
        """(healthy row, injured row) shares per condition: (B, 2, ..., 4)."""
        healthy = np.stack([np.ones_like(recover), recover], axis=1)
        share_row = np.stack([healthy, healthy, 1.0 - healthy, 1.0 - healthy], axis=-1)
        return share_row

    # stay: (B, 2, m, 4)
    s_low = tg.stay.low[..., None] + upper
    s_w = tg.stay.weight[..., None]
    s_weight = np.where(upper == 1, s_w, 1.0 - s_w)
    r = np.asarray(tg.recover_stay, dtype=float).reshape(batch, 1)
    s_share = shares(np.broadcast_to(r, (batch, 1)))                       # (B, 2, 1, 4)
    stay_val = s_weight * s_share
    stay_row = np.broadcast_to(row, stay_val.shape)
    # capture: (B, 2, m, P, 4) at day H_i
    c_low = tg.capture.low[..., None] + upper
    c_w = tg.capture.weight[..., None]
    c_weight = np.where(upper == 1, c_w, 1.0 - c_w)
    c_share = shares(tg.recover_capture)[:, :, None]                       # (B, 2, 1, P, 4)
    cap_val = c_weight * c_share
    cap_day = handling[:, None, None, :, None]
    # injury: (B, 2, m, P, 2), the injured row of day t + 1
    i_low = tg.injury.low[..., None] + upper[:2]
    i_w = tg.injury.weight[..., None]
    inj_val = np.where(upper[:2] == 1, i_w, 1.0 - i_w)

    f = grid.fatality[:, None, None, :, None]
    s = grid.capture[:, :, None, :, None]
    q = grid.injury_chance[:, None, None, :, None]
    sh = tg.survive_handling[:, :, None, :, None]
    skill = grid.capture_slope[:, :, None, :, None]
    alpha, beta, gamma = (1 - f) * s * sh, (1 - f) * (1 - s) * q, (1 - f) * (1 - s) * (1 - q)

    @functools.cache
    def attack_cols(quantity):
        return np.concatenate(
            [np.broadcast_to(col(cap_day, quantity, row, c_low), cap_val.shape),
             np.broadcast_to(col(0, quantity, 1, i_low), inj_val.shape),
             np.broadcast_to(col(0, quantity, stay_row, s_low)[:, :, :, None, :],
                             (batch, 2, m, n_prey, 4))], axis=-1)

    def attack_vals(a, b, c):
        return np.concatenate([np.broadcast_to(a * cap_val, (batch, 2, m, n_prey, 4)),
                               np.broadcast_to(b * inj_val, (batch, 2, m, n_prey, 2)),
                               np.broadcast_to(c * stay_val[:, :, :, None, :],
                                               (batch, 2, m, n_prey, 4))], axis=-1)

    g_cols = np.stack([col(0, k, stay_row, s_low) for k in range(q_)], axis=1)
    g_vals = np.broadcast_to(stay_val[:, None], g_cols.shape)
    a_vals = attack_vals(alpha, beta, gamma)
    d_vals = attack_vals(skill * (1 - f) * sh, -skill * (1 - f) * q,
                         -skill * (1 - f) * (1 - q))
    def prey_first(x):
        return np.moveaxis(x, 3, 0)

    cols = [g_cols, prey_first(attack_cols(V)), prey_first(attack_cols(U)),
            prey_first(np.concatenate([attack_cols(S), attack_cols(V)], axis=-1))]
    vals = [g_vals, prey_first(a_vals), prey_first(a_vals),
            prey_first(np.concatenate([a_vals, d_vals], axis=-1))]
    matrix = _csr(cols, vals, (ahead + 1) * batch * q_ * 2 * levels)
    sizes = (batch * q_ * 2 * m, batch * 2 * m * n_prey, batch * 2 * m * n_prey,
             batch * 2 * m * n_prey)
    f4, s4 = grid.fatality.T[:, :, None, None], np.moveaxis(grid.capture, -1, 0)[..., None]
    u_constant = f4 + (1.0 - f4) * s4 * np.moveaxis(tg.die_handling, -1, 0)[..., None]
    return BackwardStep(matrix, sizes, u_constant)


def forward_moves(grid: Grid, tg: Targets, handling: np.ndarray, ahead: int) -> sp.csr_array:
    """Where the day's outcome masses land: a matrix from outcome masses to arrivals.

    Columns: the masses of the quiet day (B, 2, m), of each capture
    (B, 2, m, P) and of each injury (B, 2, m, P) from every living state. Rows:
    arrivals by (day ahead, cell, condition, level), a capture arriving H_i days
    after the others; level 0 (death) is left out.
    """
    batch, n_prey, m = grid.cost.shape[0], grid.n_prey, grid.n_living
    levels = grid.n + 1
    n_quiet, n_cap = batch * 2 * m, batch * 2 * m * n_prey
    cell = np.arange(batch)[:, None, None]
    upper = np.array([0, 1, 0, 1])
    cond_to = np.array([0, 0, 1, 1])
    r = np.asarray(tg.recover_stay, dtype=float)[:, None, None]
    healthy = np.where(np.arange(2)[None, :, None] == 0, 1.0, r)           # (B, 2, 1)

    def moves(low, weight, healthy_share, day, cell_b):
        w = weight[..., None]
        share = healthy_share[..., None]
        val = (np.where(upper == 1, w, 1.0 - w)
               * np.where(cond_to == 0, share, 1.0 - share))
        level = low[..., None] + upper
        dest = ((day * batch + cell_b) * 2 + cond_to) * levels + level
        return np.broadcast_to(dest, val.shape), val, np.broadcast_to(level, val.shape)

    rows, vals, lv = [], [], []
    for dest, val, level in (
            moves(tg.stay.low, tg.stay.weight, healthy, 0, cell[..., None]),
            moves(tg.capture.low, tg.capture.weight,
                  np.where(np.arange(2)[None, :, None, None] == 0, 1.0,
                           tg.recover_capture[:, None, None, :]),
                  handling[:, None, None, :, None], cell[..., None, None])):
        rows.append(dest)
        vals.append(val)
        lv.append(level)
    inj_level = tg.injury.low[..., None] + upper[:2]
    inj_w = tg.injury.weight[..., None]
    rows.append((cell[..., None, None] * 2 + 1) * levels + inj_level)
    vals.append(np.where(upper[:2] == 1, inj_w, 1.0 - inj_w))
    lv.append(inj_level)
    # flow columns hold prey first: (P, B, 2, m)
    prey_last = np.moveaxis(np.arange(n_cap).reshape(n_prey, batch, 2, m), 0, -1)[..., None]
    sources = [np.arange(n_quiet).reshape(batch, 2, m, 1),
               n_quiet + prey_last,
               n_quiet + n_cap + prey_last]
    r_all, c_all, v_all = [], [], []
    for dest, val, level, src in zip(rows, vals, lv, sources, strict=True):
        keep = (val != 0.0) & (level >= 1)
        r_all.append(dest[keep])
        c_all.append(np.broadcast_to(src, val.shape)[keep])
        v_all.append(val[keep])
    shape = ((ahead + 1) * batch * 2 * levels, n_quiet + 2 * n_cap)
    coo = sp.coo_array((np.concatenate(v_all), (np.concatenate(r_all), np.concatenate(c_all))),
                       shape=shape)
    return coo.tocsr()
