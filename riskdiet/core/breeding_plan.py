"""A breeding-currency step's choice values as one sparse matrix, built once per batch.

In the breeding currency the one-step values of every choice (MODEL.md
section 3: G, the value of a day without attack, and A_i, the value of
attacking prey i) are linear in the values with coefficients that depend on
the cell's inputs only: outcomes land on the same levels with the same
interpolation weights in every round of the policy iteration. So each round's
improvement step is one product of a fixed sparse matrix with the round's
values. V and its complement U = 1 - V share the matrix (interpolation weights
are the same); U only adds, to A_i, the chance of dying in the attack or in
the handling days.

Rows have a fixed number of entries (4 for G: two levels of the healthy and
the injured row; 10 for A_i: 4 for a capture, 2 for an injury, 4 for a
failed attack without injury), zero coefficients included, so the matrix is
assembled without masks.

References
----------
.. [1] Puterman, M. L. (1994). Markov Decision Processes. Wiley, section 6.4
   (the improvement step maximises r + P V, linear in V for each action).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from riskdiet.core.grid import Grid, Targets

_UPPER = np.array([0, 1, 0, 1])
"""Entry of an interpolation: 0 the lower level, 1 the upper one."""
_ROW = np.array([0, 0, 1, 1])
"""Entry of an interpolation: 0 the healthy value row, 1 the injured one."""


@dataclass(frozen=True)
class ChoicePlan:
    """Choice values of a batch of breeding cells as one sparse matrix of their values.

    Attributes
    ----------
    matrix : scipy.sparse.csr_array
        Rows: G (B, 2, m), then A_i without the constant (P, B, 2, m); columns:
        the values by (cell, condition, level 0..J).
    u_constant : ndarray, shape (P, B, 2, 1)
        f_i + (1 - f_i) s_i^k (1 - (1 - mu_k)^h_i): added to A_i on U.
    """

    matrix: sp.csr_array
    u_constant: np.ndarray

    def choice_values(self, values: np.ndarray
                      ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """G and A_i on V and on U from stored values.

        Parameters
        ----------
        values : ndarray, shape (B, 2, J + 1, 2)
            V (last index 0) and U (last index 1) of every cell, levels 0..J.

        Returns
        -------
        gv, gu : ndarray, shape (B, 2, m)
        av, au : ndarray, shape (P, B, 2, m)
        """
        n_prey, batch = self.u_constant.shape[:2]
        out = self.matrix @ values.reshape(-1, 2)
        states = out.shape[0] // (batch * (1 + n_prey))
        ignore = out[:batch * states].reshape(batch, 2, -1, 2)
        attack = out[batch * states:].reshape(n_prey, batch, 2, -1, 2)
        return (ignore[..., 0], ignore[..., 1], attack[..., 0],
                attack[..., 1] + self.u_constant)


def choice_plan(grid: Grid, tg: Targets) -> ChoicePlan:
    """The choice values of MODEL.md section 3 (breeding) as a matrix of the values.

    The coefficients are those of :func:`riskdiet.core.choice.step_values`
    multiplied out: A_i = (1 - f) s S_h W(capture) + (1 - f)(1 - s) q V(injury)
    + (1 - f)(1 - s)(1 - q) G, so values agree with it to rounding.

    Parameters
    ----------
    grid : Grid
        A stacked grid (:func:`riskdiet.core.grid.stack_grids`), breeding currency.
    tg : Targets
        Its outcome reserves (:func:`riskdiet.core.grid.targets`).
    """
    batch, n_prey, m = grid.cost.shape[0], grid.n_prey, grid.n_living
    levels = grid.top + 1
    cell = np.arange(batch).reshape(batch, 1, 1, 1)

    def interpolation(split_low, split_weight, healthy_share, cell_b):
        """Columns and weights of an interpolation on the healthy and injured rows."""
        w = split_weight[..., None]
        share = healthy_share[..., None]
        val = (np.where(_UPPER == 1, w, 1.0 - w)
               * np.where(_ROW == 0, share, 1.0 - share))
        col = (cell_b * 2 + _ROW) * levels + split_low[..., None] + _UPPER
        return col, val

    r = np.asarray(tg.recover_stay, dtype=float).reshape(batch, 1, 1)
    stay_share = np.where(np.arange(2)[None, :, None] == 0, 1.0, r)        # (B, 2, 1)
    stay_col, stay_val = interpolation(tg.stay.low, tg.stay.weight, stay_share, cell)
    cap_share = np.where(np.arange(2)[None, :, None, None] == 0, 1.0,
                         tg.recover_capture[:, None, None, :])             # (B, 2, 1, P)
    cap_col, cap_val = interpolation(tg.capture.low, tg.capture.weight, cap_share,
                                     cell[..., None])
    inj_col = ((cell[..., None] * 2 + 1) * levels + tg.injury.low[..., None] + _UPPER[:2])
    inj_w = tg.injury.weight[..., None]
    inj_val = np.where(_UPPER[:2] == 1, inj_w, 1.0 - inj_w)

    f = grid.fatality[:, None, None, :, None]
    s = grid.capture[:, :, None, :, None]
    q = grid.injury_chance[:, None, None, :, None]
    sh = tg.survive_handling[:, :, None, :, None]
    shape = (batch, 2, m, n_prey)
    a_col = np.concatenate([np.broadcast_to(cap_col, (*shape, 4)),
                            np.broadcast_to(inj_col, (*shape, 2)),
                            np.broadcast_to(stay_col[:, :, :, None], (*shape, 4))], axis=-1)
    a_val = np.concatenate([np.broadcast_to((1 - f) * s * sh * cap_val, (*shape, 4)),
                            np.broadcast_to((1 - f) * (1 - s) * q * inj_val, (*shape, 2)),
                            np.broadcast_to((1 - f) * (1 - s) * (1 - q)
                                            * stay_val[:, :, :, None], (*shape, 4))], axis=-1)
    n_g, n_a = batch * 2 * m, n_prey * batch * 2 * m
    indptr = np.concatenate([np.arange(0, 4 * n_g, 4), 4 * n_g + np.arange(0, 10 * n_a + 1, 10)])
    cols = np.concatenate([np.broadcast_to(stay_col, (batch, 2, m, 4)).reshape(-1),
                           np.moveaxis(a_col, 3, 0).reshape(-1)])
    vals = np.concatenate([np.broadcast_to(stay_val, (batch, 2, m, 4)).reshape(-1),
                           np.moveaxis(a_val, 3, 0).reshape(-1)])
    index = np.int32 if indptr[-1] < 2 ** 31 and batch * 2 * levels < 2 ** 31 else np.int64
    matrix = sp.csr_array((vals, cols.astype(index), indptr.astype(index)),
                          shape=(n_g + n_a, batch * 2 * levels))
    f4, s4 = grid.fatality.T[:, :, None, None], np.moveaxis(grid.capture, -1, 0)[..., None]
    u_constant = f4 + (1.0 - f4) * s4 * np.moveaxis(tg.die_handling, -1, 0)[..., None]
    return ChoicePlan(matrix, u_constant)
