"""Banded systems I - P of the breeding currency, assembled and factorised in band storage.

A step moves the reserves up by at most the largest net gain of a capture and
down by at most the daily cost plus the largest injury loss (plus one level
for the interpolation split, MODEL.md section 2). Ordering the living states
level by level, healthy and injured side by side (state (j, k) at 2 (j - 1) + k),
makes I - P a band matrix: ``kl`` diagonals below the main one, ``ku`` above.
LAPACK's banded LU (gbtrf, partial pivoting; it keeps ``kl`` extra diagonals
for the pivots' fill-in) then costs about 2 n kl (kl + ku) operations instead of
the dense (2/3) n^3; for the map benchmark (n = 198, kl = 34, ku = 80) a
factorisation takes about half the time of the dense one.

Where an entry lands depends only on the grid (the outcomes' reserve splits),
not on the policy, so :class:`BandLayout` finds the positions once per batch
and each policy-iteration round only multiplies the outcome chances in.

References
----------
.. [1] Golub, G. H. & Van Loan, C. F. (2013). Matrix Computations, 4th ed.,
   Johns Hopkins, section 4.3 (band LU with partial pivoting).
.. [2] Anderson, E. et al. (1999). LAPACK Users' Guide, 3rd ed., SIAM
   (band storage, routines dgbtrf and dgbtrs).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg.lapack import dgbtrf, dgbtrs

from riskdiet.core.grid import Grid, Outcome


def interleave(x: np.ndarray) -> np.ndarray:
    """Condition-major (…, 2, m) state arrays as level-major (…, 2 m) vectors."""
    return np.swapaxes(x, -1, -2).reshape(*x.shape[:-2], -1)


def deinterleave(x: np.ndarray) -> np.ndarray:
    """Level-major (…, 2 m) state vectors as condition-major (…, 2, m) arrays."""
    return np.swapaxes(x.reshape(*x.shape[:-1], -1, 2), -1, -2)


@dataclass(frozen=True)
class BandLayout:
    """Where each outcome's chance goes in the band storage of I - P.

    Band storage as LAPACK's gbtrf wants it: for each cell an array of shape
    ``(2 kl + ku + 1, 2 m)``, column by column, entry (i, j) of the matrix at
    row ``kl + ku + i - j``. The batch is held as a C-ordered array of shape
    ``(B, 2 m, 2 kl + ku + 1)`` so that each cell's transpose is the
    Fortran-ordered band.

    Attributes
    ----------
    kl, ku : int
        Sub- and superdiagonals of I - P (largest over the batch's cells).
    index : list of ndarray, each shape (4, B, 2, m, X)
        Per outcome (quiet day, captures, injuries): position within the cell's
        band storage of the mass landing on the split's lower and upper level
        (first axis: lower-healthy, lower-injured, upper-healthy, upper-injured).
    share : list of ndarray, each shape (4, B, 2, m, X)
        The fraction of the outcome's chance that goes there (interpolation
        weight times the chance of each condition; 0 where it lands on death or
        breeding).
    breed : list of ndarray, each shape (B, 2, m, X)
        The fraction of the outcome's chance that reaches breeding.
    """

    kl: int
    ku: int
    index: list[np.ndarray]
    share: list[np.ndarray]
    breed: list[np.ndarray]

    @property
    def rows(self) -> int:
        """Rows of the band storage, 2 kl + ku + 1 (room for the pivots' fill-in)."""
        return 2 * self.kl + self.ku + 1

    def take(self, cells: np.ndarray) -> BandLayout:
        """The layout of the cells ``cells`` (same bandwidths)."""
        return BandLayout(self.kl, self.ku, [i[:, cells] for i in self.index],
                          [s[:, cells] for s in self.share], [b[cells] for b in self.breed])

    def assemble(self, parts: list[Outcome]) -> tuple[np.ndarray, np.ndarray]:
        """I - P of each cell in band storage, and the one-step breeding chance.

        Parameters
        ----------
        parts : list of Outcome
            The step's outcomes under the current policy
            (:func:`riskdiet.core.grid.outcomes`), for the layout's cells.

        Returns
        -------
        band : ndarray, shape (B, 2 m, 2 kl + ku + 1)
            ``band[b].T`` is cell b's I - P in LAPACK band storage
            (Fortran-ordered, ready to be factorised in place).
        breed : ndarray, shape (B, 2 m)
            Level-major one-step chance of reaching breeding.
        """
        batch = self.breed[0].shape[0]
        size = self.breed[0].shape[-3] * self.breed[0].shape[-2]
        cell_size = size * self.rows
        offset = (np.arange(batch) * cell_size)[None, :, None, None, None]
        idx = np.concatenate([(i + offset).reshape(-1) for i in self.index])
        vals = np.concatenate([(-o.prob[None] * s).reshape(-1)
                               for o, s in zip(parts, self.share, strict=True)])
        band = np.bincount(idx, vals, minlength=batch * cell_size).reshape(
            batch, size, self.rows)
        band[:, :, self.kl + self.ku] += 1.0
        breed = sum((o.prob * b).sum(-1) for o, b in zip(parts, self.breed, strict=True))
        return band, interleave(breed)


def band_layout(grid: Grid, parts: list[Outcome]) -> BandLayout:
    """Positions and shares of every outcome in the band storage of I - P.

    Parameters
    ----------
    grid : Grid
        A stacked grid, breeding currency.
    parts : list of Outcome
        Outcomes of one step under any policy: only their splits and
        condition shares (which do not depend on the policy) are used.
    """
    m, top = grid.n_living, grid.top
    batch = parts[0].prob.shape[0]
    state = 2 * np.arange(m)[None, None, :, None] + np.arange(2)[None, :, None, None]
    pieces = []
    for o in parts:
        shape = o.prob.shape
        row = np.broadcast_to(state, shape)
        cols, shares, breed = [], [], np.zeros(shape)
        for level, wt in ((o.split.low, 1.0 - o.split.weight),
                          (o.split.low + 1, o.split.weight)):
            level = np.broadcast_to(level, shape)
            alive = (level >= 1) & (level < top)
            breed = breed + np.where(level >= top, wt, 0.0)
            healthy = np.broadcast_to(o.healthy_share, shape)
            for cond, part in ((0, wt * healthy), (1, wt * (1.0 - healthy))):
                col = np.where(alive, 2 * (level - 1) + cond, row)
                cols.append(col)
                shares.append(np.where(alive, part, 0.0))
        pieces.append((row, np.stack(cols), np.stack(shares), breed))
    kl = ku = 0
    for row, col, share, _ in pieces:
        used = share != 0.0
        if used.any():
            kl = max(kl, int((row - col)[used].max()))
            ku = max(ku, int((col - row)[used].max()))
    rows = 2 * kl + ku + 1
    index = [col * rows + (kl + ku) + row - col for row, col, _, _ in pieces]
    assert batch == pieces[0][3].shape[0]
    return BandLayout(kl, ku, index, [p[2] for p in pieces], [p[3] for p in pieces])


def band_factor(band: np.ndarray, kl: int, ku: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Banded LU of each cell, in place (LAPACK gbtrf).

    Parameters
    ----------
    band : ndarray, shape (B, n, 2 kl + ku + 1)
        As returned by :meth:`BandLayout.assemble` (overwritten by the factors).

    Returns
    -------
    factors : ndarray
        ``band``, now holding the factors.
    pivots : ndarray of int32, shape (B, n)
    info : ndarray of int, shape (B,)
        LAPACK's status per cell: > 0 means an exactly zero pivot (singular).
    """
    pivots = np.empty(band.shape[:2], dtype=np.int32)
    info = np.zeros(band.shape[0], dtype=int)
    for i in range(band.shape[0]):
        ab = band[i].T  # Fortran-ordered: factorised where it lies
        lu, piv, inf = dgbtrf(ab, kl, ku, overwrite_ab=1)
        if inf < 0:  # pragma: no cover - an argument error cannot happen here
            raise ValueError(f"gbtrf argument {-inf} invalid")
        # bounds only: np.shares_memory solves an exact overlap problem, far slower
        if not np.may_share_memory(lu, ab):  # pragma: no cover - f2py copied after all
            band[i] = lu.T
        pivots[i] = piv
        info[i] = inf
    return band, pivots, info


def band_solve(factors: np.ndarray, pivots: np.ndarray, kl: int, ku: int, rhs: np.ndarray,
               transposed: bool = False) -> np.ndarray:
    """Solve (I - P) x = rhs, or its transpose, with banded LU factors (LAPACK gbtrs).

    Parameters
    ----------
    factors, pivots : ndarray
        From :func:`band_factor`.
    rhs : ndarray, shape (B, n, r)
    transposed : bool
        Solve (I - P)^T x = rhs.

    Returns
    -------
    ndarray, shape (B, n, r)
    """
    out = np.empty(rhs.shape)
    trans = 1 if transposed else 0
    for i in range(factors.shape[0]):
        x, _ = dgbtrs(factors[i].T, kl, ku, rhs[i], pivots[i], trans=trans)
        out[i] = x
    return out


__all__ = ["BandLayout", "band_factor", "band_layout", "band_solve", "deinterleave",
           "interleave"]
