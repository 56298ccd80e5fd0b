"""Ranked attack sets without sorting, for many states at once.

The greedy set of MODEL.md section 3 ranks the prey worth attacking by their
value (on U where A_i > 1/2, else on V; equal values go to the prey listed
first). With a handful of prey, pairwise comparisons rank them faster than a
sort, and a ranked set is one of few: with P prey there are
sum_k P!/(P-k)! of them (326 for five prey). Each set gets an integer code, and
the attack probabilities of every set are tabled once per cell, so a day's
policy costs a table look-up instead of a sort and a cumulative product.

References
----------
.. [1] Stephens, D. W. & Krebs, J. R. (1986). Foraging Theory. Princeton
   University Press, ch. 2 (a forager meeting several prey attacks the best one
   it meets: P_i = p_i prod over better prey (1 - p_l)).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from riskdiet.core.choice import ChoiceValues, better
from riskdiet.core.grid import attack_probabilities

MAX_TABLED_PREY = 6
"""Above this many prey the sets are too many to table (1,957 for six prey)."""


def ranks_prey_first(worth: np.ndarray, upper: np.ndarray, secondary: np.ndarray
                     ) -> np.ndarray:
    """Rank of each prey among those worth attacking, by pairwise comparisons.

    Parameters
    ----------
    worth : ndarray of bool, shape (P, ...)
        Whether the prey is in the set.
    upper : ndarray of bool, shape (P, ...)
        Whether its value exceeds one half (such prey rank first).
    secondary : ndarray, shape (P, ...)
        The ranking key within each group, smaller first (U, or -V).

    Returns
    -------
    ndarray of int8, shape (P, ...)
        The rank (0 = best) of every prey in the set, ties to the prey listed
        first; -1 for prey not in the set. Equals a stable lexicographic sort on
        (not worth, not upper, secondary, listing order) for keys that are not
        NaN.
    """
    n_prey = worth.shape[0]
    # 0 = worth and upper, 2 = worth below one half, 4 = not worth: doubled, so that
    # "earlier group, or same group and key not larger" is one integer comparison
    group = 4 - 2 * worth.view(np.int8) * (1 + upper.view(np.int8))
    ranks = np.zeros(worth.shape, dtype=np.int8)
    for i in range(n_prey):
        for j in range(i):
            # prey j (listed first) comes before prey i
            first = (group[i] - group[j] + (secondary[j] <= secondary[i])) > 0
            ranks[i] += first
            ranks[j] += ~first
    ranks[~worth] = -1
    return ranks


def pairwise_ranks(worth: np.ndarray, upper: np.ndarray, secondary: np.ndarray) -> np.ndarray:
    """:func:`ranks_prey_first` for arrays with prey on the last axis."""
    ranks = ranks_prey_first(*(np.ascontiguousarray(np.moveaxis(x, -1, 0))
                               for x in (worth, upper, secondary)))
    return np.moveaxis(ranks, 0, -1)


def greedy_ranks(cv: ChoiceValues) -> np.ndarray:
    """The greedy sets of :func:`riskdiet.core.choice.greedy_sets`, ranked pairwise."""
    worth = better(cv.attack_v, cv.attack_u, cv.ignore_v[..., None], cv.ignore_u[..., None])
    upper = cv.attack_v > 0.5
    return pairwise_ranks(worth, upper, np.where(upper, cv.attack_u, -cv.attack_v))


@dataclass(frozen=True)
class SetTable:
    """Every ranked attack set of P prey, with a code and its attack probabilities.

    Attributes
    ----------
    ranks : ndarray of int8, shape (S, P)
        Set s as ranks (-1 = not attacked); set 0 attacks nothing.
    lookup : ndarray of int, shape ((P + 1) ** P,)
        Code of the set whose ranks r give sum_i (r_i + 1) (P + 1)^i.
    """

    ranks: np.ndarray
    lookup: np.ndarray

    @property
    def size(self) -> int:
        return self.ranks.shape[0]

    def codes(self, ranks: np.ndarray) -> np.ndarray:
        """Codes of ranked sets given as ranks with prey first, shape (P, ...) -> (...)."""
        n_prey = ranks.shape[0]
        digits = np.zeros(ranks.shape[1:], dtype=np.intp)
        for i in range(n_prey):
            digits += (ranks[i] + np.intp(1)) * (n_prey + 1) ** i
        return self.lookup[digits]

    def probabilities(self, encounter_prob: np.ndarray) -> np.ndarray:
        """P_i of every set for every cell: shape (*B, S, P) for p of shape (*B, P).

        Computed by :func:`riskdiet.core.grid.attack_probabilities` itself, so a
        look-up equals the direct computation bit for bit.
        """
        batch = encounter_prob.shape[:-1]
        ranks = np.broadcast_to(self.ranks, (*batch, 1, *self.ranks.shape))
        return attack_probabilities(encounter_prob, ranks)[..., 0, :, :]


def set_table(n_prey: int) -> SetTable | None:
    """The table of ranked sets of ``n_prey`` prey, or None when there are too many."""
    if n_prey > MAX_TABLED_PREY:
        return None
    rows = []
    for size in range(n_prey + 1):
        for chosen in itertools.permutations(range(n_prey), size):
            row = np.full(n_prey, -1, dtype=np.int8)
            row[list(chosen)] = np.arange(size)
            rows.append(row)
    ranks = np.array(rows, dtype=np.int8).reshape(len(rows), n_prey)
    lookup = np.full((n_prey + 1) ** n_prey, -1, dtype=np.int16)
    weights = (n_prey + 1) ** np.arange(n_prey)
    lookup[((ranks.astype(np.intp) + 1) * weights).sum(-1)] = np.arange(len(rows))
    return SetTable(ranks, lookup)


class SetKeys:
    """Ranked sets of a batch of cells as keys: table codes (few prey) or the ranks themselves.

    Ranks and attack probabilities have prey on the first axis: (P, C, 2, m),
    for the cells ``cells`` of the batch (all of them when None).
    """

    def __init__(self, encounter_prob: np.ndarray) -> None:
        self.p = encounter_prob
        self.table: SetTable | None = set_table(encounter_prob.shape[-1])
        if self.table is not None:
            batch, size = encounter_prob.shape[0], self.table.size
            probs = self.table.probabilities(encounter_prob)                # (B, S, P)
            self.probs = np.ascontiguousarray(probs.reshape(batch * size, -1).T)

    def key(self, ranks: np.ndarray) -> np.ndarray:
        """Keys of ranked sets given as ranks with prey first (int8)."""
        return ranks if self.table is None else self.table.codes(ranks)

    def attack_probabilities(self, key: np.ndarray, cells: np.ndarray | None = None
                             ) -> np.ndarray:
        """P_i of each state's set, prey first: (P, C, 2, m)."""
        if cells is None:
            cells = np.arange(self.p.shape[0])
        if self.table is None:
            p = self.p[cells]
            return np.moveaxis(attack_probabilities(p, np.moveaxis(key, 0, -1)), -1, 0)
        offset = (cells * self.table.size)[:, None, None]
        return self.probs.take(key + offset, axis=1)

    def differ(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Whether two sets differ, state by state."""
        return (a != b).any(0) if self.table is None else a != b

    def ranks(self, key: np.ndarray) -> np.ndarray:
        """Ranks with prey last, shape (C, 2, m, P)."""
        return np.moveaxis(key, 0, -1) if self.table is None else self.table.ranks[key]
