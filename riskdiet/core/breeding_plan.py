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
class Interpolated:
    """The values a step's outcomes reach, for the active cells of a batch.

    Each array has a last axis of 2: the value V and its complement U.

    Attributes
    ----------
    stay : ndarray, shape (C, 2, m, 2)
        G = W_k(j - c_k; 1), the value of a day without attack.
    won : ndarray, shape (P, C, 2, m, 2)
        W_k(j + e_i - c_k (1 + h_i); 1 + h_i), the value after a capture.
    hurt : ndarray, shape (P, C, 2, m, 2)
        V(j - c_k - d_i, injured), the value after an injury.
    """

    stay: np.ndarray
    won: np.ndarray
    hurt: np.ndarray


@dataclass(frozen=True)
class ChoicePlan:
    """Choice values of a batch of breeding cells from one sparse product.

    Attributes
    ----------
    matrix : scipy.sparse.csr_array
        Rows: G (B, 2, m), the capture values (P, B, 2, m) and the injury values
        (P, B, 2, m); columns: the values by (cell, condition, level 0..J).
    won, hurt, stay : ndarray, shape (P, B, 2, 1)
        Weights of A_i = won W + hurt V_hurt + stay G: (1 - f) s S_h,
        (1 - f)(1 - s) q and (1 - f)(1 - s)(1 - q), S_h = (1 - mu_k)^h_i.
    u_constant : ndarray, shape (P, B, 2, 1)
        f_i + (1 - f_i) s_i^k (1 - (1 - mu_k)^h_i): added to A_i on U.
    """

    matrix: sp.csr_array
    won: np.ndarray
    hurt: np.ndarray
    stay: np.ndarray
    u_constant: np.ndarray

    def interpolate(self, values: np.ndarray, cells: np.ndarray) -> Interpolated:
        """The values every outcome reaches, for the cells ``cells``.

        Parameters
        ----------
        values : ndarray, shape (B, 2, J + 1, 2)
            V (last index 0) and U (last index 1) of every cell, levels 0..J.
        """
        n_prey, batch = self.won.shape[:2]
        out = self.matrix @ values.reshape(-1, 2)
        block = out.shape[0] // (1 + 2 * n_prey)
        stay = out[:block].reshape(batch, 2, -1, 2)
        won = out[block:block * (1 + n_prey)].reshape(n_prey, batch, 2, -1, 2)
        hurt = out[block * (1 + n_prey):].reshape(n_prey, batch, 2, -1, 2)
        if len(cells) < batch:
            stay, won, hurt = stay[cells], won[:, cells], hurt[:, cells]
        return Interpolated(stay, won, hurt)

    def choice_values(self, at: Interpolated, cells: np.ndarray
                      ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """G and A_i on V and on U (MODEL.md section 3).

        Returns
        -------
        gv, gu : ndarray, shape (C, 2, m)
        av, au : ndarray, shape (P, C, 2, m)
        """
        gv, gu = at.stay[..., 0], at.stay[..., 1]
        won, hurt, stay = self.won[:, cells], self.hurt[:, cells], self.stay[:, cells]
        av = won * at.won[..., 0] + hurt * at.hurt[..., 0] + stay * gv
        au = (won * at.won[..., 1] + hurt * at.hurt[..., 1] + stay * gu
              + self.u_constant[:, cells])
        return gv, gu, av, au

    def success_derivative(self, at: Interpolated, fatality: np.ndarray, injury_chance: np.ndarray,
                           survive_handling: np.ndarray) -> np.ndarray:
        """dA_i/ds_i^k at fixed values, shape (P, C, 2, m): (1 - f)(S_h W - q V_hurt - (1 - q) G).

        ``fatality`` and ``injury_chance`` have shape (C, P), ``survive_handling`` (C, 2, P).
        """
        f = fatality.T[:, :, None, None]
        q = injury_chance.T[:, :, None, None]
        sh = np.moveaxis(survive_handling, -1, 0)[..., None]
        failed = q * at.hurt[..., 0] + (1.0 - q) * at.stay[..., 0]
        return (1.0 - f) * (sh * at.won[..., 0] - failed)


def choice_plan(grid: Grid, tg: Targets) -> ChoicePlan:
    """The outcomes of MODEL.md section 3 (breeding) as a matrix of the values.

    G, the capture value W and the injury value are interpolations of the
    values (:func:`riskdiet.core.choice.step_values`), so they agree with it to
    rounding; A_i is then (1 - f)[s S_h W + (1 - s)(q V_hurt + (1 - q) G)].

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
    n_g, n_p = batch * 2 * m, n_prey * batch * 2 * m
    nnz = 4 * n_g + 4 * n_p + 2 * n_p
    index = np.int32 if nnz < 2 ** 31 and batch * 2 * levels < 2 ** 31 else np.int64
    cols = np.empty(nnz, dtype=index)
    vals = np.empty(nnz)

    def fill(start, rows, col, val):
        """Write a block of rows with a fixed number of entries; returns its end."""
        width = val.shape[-1]
        stop = start + rows * width
        cols[start:stop].reshape(*val.shape)[...] = col
        vals[start:stop].reshape(*val.shape)[...] = val
        return stop

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
    col, val = interpolation(tg.stay.low, tg.stay.weight, stay_share, cell)
    end = fill(0, n_g, col, val)
    cap_share = np.where(np.arange(2)[None, :, None, None] == 0, 1.0,
                         tg.recover_capture[:, None, None, :])             # (B, 2, 1, P)
    col, val = interpolation(tg.capture.low, tg.capture.weight, cap_share, cell[..., None])
    end = fill(end, n_p, np.moveaxis(col, 3, 0), np.moveaxis(val, 3, 0))
    inj_col = ((cell[..., None] * 2 + 1) * levels + tg.injury.low[..., None] + _UPPER[:2])
    inj_w = tg.injury.weight[..., None]
    inj_val = np.where(_UPPER[:2] == 1, inj_w, 1.0 - inj_w)
    fill(end, n_p, np.moveaxis(inj_col, 3, 0), np.moveaxis(inj_val, 3, 0))
    indptr = np.concatenate([np.arange(0, 4 * (n_g + n_p), 4),
                             4 * (n_g + n_p) + np.arange(0, 2 * n_p + 1, 2)]).astype(index)
    matrix = sp.csr_array((vals, cols, indptr), shape=(n_g + 2 * n_p, batch * 2 * levels))

    f = grid.fatality.T[:, :, None, None]                                 # (P, B, 1, 1)
    s = np.moveaxis(grid.capture, -1, 0)[..., None]                       # (P, B, 2, 1)
    q = grid.injury_chance.T[:, :, None, None]
    sh = np.moveaxis(tg.survive_handling, -1, 0)[..., None]
    u_constant = f + (1.0 - f) * s * np.moveaxis(tg.die_handling, -1, 0)[..., None]
    return ChoicePlan(matrix, (1 - f) * s * sh, (1 - f) * (1 - s) * q,
                      (1 - f) * (1 - s) * (1 - q), u_constant)
