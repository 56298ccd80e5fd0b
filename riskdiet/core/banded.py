"""Banded systems I - P of the breeding currency, assembled and factorised in band storage.

A step moves the reserves up by at most the largest net gain of a capture and
down by at most the daily cost plus the largest injury loss (plus one level
for the interpolation split, MODEL.md section 2). Ordering the living states
level by level, healthy and injured side by side (state (j, k) at 2 (j - 1) + k),
makes I - P a band matrix: ``kl`` diagonals below the main one, ``ku`` above.
LAPACK's banded LU (gbtrf, partial pivoting; it keeps ``kl`` extra diagonals
for the pivots' fill-in) then costs about 2 n kl (kl + ku) operations instead of
the dense (2/3) n^3; for the map benchmark (n = 198, kl = 34, ku = 80) a
factorisation takes about 140 µs against 226 µs for the dense one (DEVELOPERS.md,
Benchmarks).

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

from dataclasses import dataclass, field

import numpy as np
from scipy.linalg.lapack import dgbtrf, dgbtrs

from riskdiet.core.grid import Grid, Outcome

CHUNK = 4
"""Cells placed in band storage at once: four bands of the map benchmark (n = 198,
149 rows) take 0.9 MiB, so a cell's band stays in the processor's cache from its
placement through its factorisation and solves."""


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
    row ``kl + ku + i - j`` (the first ``kl`` rows hold the fill-in of the
    pivots). Each cell's storage is laid out as a C-ordered ``(2 m, 2 kl + ku + 1)``
    block, whose transpose is the Fortran-ordered band.

    Several outcomes land on the same entry, so each cell's entries are
    numbered once (``slot``) and a round sums the chances by slot
    (``numpy.bincount``, in the order of the outcomes, as a dense assembly
    would) into a short vector per cell before they are placed in the band.

    Attributes
    ----------
    kl, ku : int
        Sub- and superdiagonals of I - P (largest over the batch's cells).
    size : int
        Unknowns per cell, 2 m.
    share : ndarray, shape (B, L)
        Per outcome (quiet day, captures, injuries, in this order) and for each
        of the outcome's chances (shape (2, m, X)): the fraction that lands on
        the split's lower level healthy, lower injured, upper healthy and upper
        injured (interpolation weight times the chance of each condition; 0
        where it lands on death or breeding).
    slot : ndarray of int, shape (B, L)
        The entry of the cell that each of those L fractions adds to.
    position : ndarray of int, shape (B, S)
        Position of each entry in the cell's band storage, read as a flat
        C-ordered ``(2 m, 2 kl + ku + 1)`` block; entries beyond a cell's own
        count point at a spare element just after the block.
    breed : list of ndarray, each shape (B, 2, m, X)
        The fraction of each outcome's chance that reaches breeding.

    Methods taking ``cells`` work on those cells of the layout (the policy
    iteration drops finished cells); by default on all.
    """

    kl: int
    ku: int
    size: int
    share: np.ndarray
    slot: np.ndarray
    position: np.ndarray
    breed: list[np.ndarray]
    workspace: list[np.ndarray] = field(default_factory=list, repr=False, compare=False)

    @property
    def rows(self) -> int:
        """Rows of the band storage, 2 kl + ku + 1 (room for the pivots' fill-in)."""
        return 2 * self.kl + self.ku + 1

    @property
    def diagonal(self) -> np.ndarray:
        """Positions of the main diagonal in a cell's band storage."""
        return np.arange(self.size) * self.rows + self.kl + self.ku

    def entries(self, parts: list[Outcome], cells: np.ndarray | None = None) -> np.ndarray:
        """The entries of each cell's -P, summed by slot.

        Parameters
        ----------
        parts : list of Outcome
            The step's outcomes under the current policy
            (:func:`riskdiet.core.grid.outcomes`), for the cells ``cells``.

        Returns
        -------
        ndarray, shape (C, S)
            Entry ``s`` belongs at ``position[:, s]`` of the band storage.
        """
        count = self.slot.shape[0] if cells is None else len(cells)
        width = self.position.shape[1]
        # into buffers kept with the layout: fresh arrays of this size would each cost
        # page faults on every round (see DEVELOPERS.md, Benchmarks)
        vals, index = self._buffers()
        vals, index = vals[:count], index[:count]
        if cells is None:
            vals[...] = self.share
            index[...] = self.slot
        else:
            # mode="clip": the indices are valid, and "raise" would copy through a temporary
            np.take(self.share, cells, axis=0, out=vals, mode="clip")
            np.take(self.slot, cells, axis=0, out=index, mode="clip")
        at = 0
        for o in parts:
            step = 4 * o.prob[0].size
            vals[:, at:at + step].reshape(count, 4, *o.prob.shape[1:])[...] *= o.prob[:, None]
            at += step
        np.negative(vals, out=vals)
        index += (np.arange(count) * width)[:, None]
        return np.bincount(index.reshape(-1), vals.reshape(-1),
                           minlength=count * width).reshape(count, width)

    def _buffers(self) -> tuple[np.ndarray, np.ndarray]:
        if not self.workspace:
            self.workspace.append(np.empty(self.share.shape))
            self.workspace.append(np.empty(self.slot.shape, dtype=self.slot.dtype))
        return self.workspace[0], self.workspace[1]

    def breed_chance(self, parts: list[Outcome], cells: np.ndarray | None = None) -> np.ndarray:
        """Level-major one-step chance of reaching breeding, shape (C, 2 m)."""
        breed = sum((o.prob * (b if cells is None else b[cells])).sum(-1)
                    for o, b in zip(parts, self.breed, strict=True))
        return interleave(breed)

    def place(self, entries: np.ndarray, out: np.ndarray, position: np.ndarray) -> None:
        """Write I - P of C cells into zeroed band storage ``out``, shape (C, 2 m rows + 1).

        ``entries`` and ``position`` are those cells' rows of :meth:`entries`
        and of :attr:`position`.
        """
        count = entries.shape[0]
        np.put(out[:count], position + (np.arange(count) * out.shape[1])[:, None], entries)
        out[:count, self.diagonal] += 1.0

    def assemble(self, parts: list[Outcome], cells: np.ndarray | None = None) -> np.ndarray:
        """I - P of the cells in band storage, shape (C, 2 m, 2 kl + ku + 1).

        ``band[b].T`` is cell b's matrix in LAPACK band storage.
        """
        position = self.position if cells is None else self.position[cells]
        out = np.zeros((position.shape[0], self.size * self.rows + 1))
        self.place(self.entries(parts, cells), out, position)
        return out[:, :-1].reshape(position.shape[0], self.size, self.rows)


def band_layout(grid: Grid, parts: list[Outcome]) -> BandLayout:
    """Slots, positions and shares of every outcome in the band storage of I - P.

    Parameters
    ----------
    grid : Grid
        A stacked grid, breeding currency.
    parts : list of Outcome
        Outcomes of one step under any policy: only their splits and
        condition shares (which do not depend on the policy) are used.

    Notes
    -----
    Cells whose outcomes land on the same levels with the same weights (all
    cells of a map that changes chances only, such as hunting ability or
    encounters) have the same layout, which is worked out once. They are
    grouped by the bytes of their splits and shares (exact equality).
    """
    batch = parts[0].prob.shape[0]
    fixed = [np.broadcast_to(x, o.prob.shape) for o in parts
             for x in (o.split.low, o.split.weight, o.healthy_share)]
    seen: dict[bytes, int] = {}
    which = np.array([seen.setdefault(b"".join(np.ascontiguousarray(x[b]).tobytes()
                                               for x in fixed), len(seen))
                      for b in range(batch)])
    first = np.unique(which, return_index=True)[1]
    kl, ku, share, slot, where, breed = _layout(grid, [
        (o.split.low[first], o.split.weight[first], o.healthy_share[first],
         (len(first), *o.prob.shape[1:])) for o in parts])
    return BandLayout(kl, ku, 2 * grid.n_living, share[which], slot[which], where[which],
                      [b[which] for b in breed])


def _layout(grid: Grid, parts: list[tuple[np.ndarray, np.ndarray, np.ndarray, tuple]]):
    """:func:`band_layout` for cells of distinct structure: (low, weight, healthy, shape) each."""
    m, top = grid.n_living, grid.top
    size = 2 * m
    batch = parts[0][3][0]
    state = 2 * np.arange(m)[None, None, :, None] + np.arange(2)[None, :, None, None]
    pieces = []
    for low, weight, healthy_share, shape in parts:
        row = np.broadcast_to(state, shape)
        cols, shares, breed = [], [], np.zeros(shape)
        healthy = np.broadcast_to(healthy_share, shape)
        for level, wt in ((low, 1.0 - weight), (low + 1, weight)):
            level = np.broadcast_to(level, shape)
            alive = (level >= 1) & (level < top)
            breed = breed + np.where(level >= top, wt, 0.0)
            for cond, part in ((0, wt * healthy), (1, wt * (1.0 - healthy))):
                # an entry that lands on death or breeding adds 0 to the diagonal
                cols.append(np.where(alive, 2 * (level - 1) + cond, row))
                shares.append(np.where(alive, part, 0.0))
        pieces.append((np.broadcast_to(row, (4, *shape)), np.stack(cols), np.stack(shares),
                       breed))
    kl = ku = 0
    for row, col, share, _ in pieces:
        used = share != 0.0
        if used.any():
            kl = max(kl, int((row - col)[used].max()))
            ku = max(ku, int((col - row)[used].max()))
    rows = 2 * kl + ku + 1
    block = size * rows
    # flat position in the C-ordered (2m, rows) block: column-major band storage
    position = np.concatenate([np.moveaxis(col * rows + (kl + ku) + row - col, 1, 0)
                               .reshape(batch, -1) for row, col, _, _ in pieces], axis=1)
    slots, wheres = [], []
    for cell_positions in position:
        used = np.zeros(block, dtype=bool)
        used[cell_positions] = True
        slots.append(np.cumsum(used)[cell_positions] - 1)
        wheres.append(np.flatnonzero(used))
    width = max(len(w) for w in wheres)
    where = np.full((batch, width), block)  # spare element after the block
    for k, w in enumerate(wheres):
        where[k, :len(w)] = w
    share = np.concatenate([np.moveaxis(p[2], 1, 0).reshape(batch, -1) for p in pieces], axis=1)
    return kl, ku, share, np.asarray(slots), where, [p[3] for p in pieces]


def factor_solve(layout: BandLayout, entries: np.ndarray, rhs: np.ndarray,
                 rhs_transposed: np.ndarray, cells: np.ndarray | None = None,
                 chunk: int = CHUNK) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Factorise each cell's I - P (LAPACK gbtrf) and solve it and its transpose (gbtrs).

    The cells are placed in band storage a few at a time and each is solved
    right after its factorisation, while its band is still in the processor's
    cache; the factors are not kept.

    Parameters
    ----------
    layout : BandLayout
    entries : ndarray, shape (B, S)
        From :meth:`BandLayout.entries`, for the cells ``cells`` of the layout
        (default: all).
    rhs : ndarray, shape (B, 2 m, r)
        Right-hand sides of (I - P) x = rhs.
    rhs_transposed : ndarray, shape (B, 2 m, t)
        Right-hand sides of (I - P)^T y = rhs_transposed.
    chunk : int
        Cells placed in band storage at once.

    Returns
    -------
    x : ndarray, shape (B, 2 m, r)
    y : ndarray, shape (B, 2 m, t)
    info : ndarray of int, shape (B,)
        LAPACK's status per cell: > 0 means an exactly zero pivot (singular;
        x and y then hold infinities or NaN).
    """
    kl, ku, size, rows = layout.kl, layout.ku, layout.size, layout.rows
    batch = entries.shape[0]
    x = np.empty(rhs.shape)
    y = np.empty(rhs_transposed.shape)
    info = np.zeros(batch, dtype=int)
    buffer = np.empty((min(chunk, batch), size * rows + 1))
    for lo in range(0, batch, chunk):
        count = min(chunk, batch - lo)
        buffer[:count] = 0.0
        index = slice(lo, lo + count) if cells is None else cells[lo:lo + count]
        layout.place(entries[lo:lo + count], buffer, layout.position[index])
        for c in range(count):
            ab = buffer[c, :-1].reshape(size, rows).T  # Fortran-ordered band, factorised in place
            lu, piv, inf = dgbtrf(ab, kl, ku, overwrite_ab=1)
            if inf < 0:  # pragma: no cover - an argument error cannot happen here
                raise ValueError(f"gbtrf argument {-inf} invalid")
            i = lo + c
            info[i] = inf
            x[i] = dgbtrs(lu, kl, ku, rhs[i], piv)[0]
            y[i] = dgbtrs(lu, kl, ku, rhs_transposed[i], piv, trans=1)[0]
    return x, y, info


__all__ = ["CHUNK", "BandLayout", "band_layout", "deinterleave", "factor_solve", "interleave"]
