"""Policy regimes: the attack pattern over reserves, named in plain words.

MODEL.md section 7: for one condition, read the attack set level by level from
low to high reserves and name the pattern — every prey type at all reserves,
only low-risk prey, only risky prey, reserve-dependent (the sets and the
reserve fractions where they change), or nothing taken.

Levels at the bottom of the grid where nothing is attacked because no capture
could save the predator any more are left out of the pattern: they are the
same in every regime and would only clutter it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

NOTHING = "nothing taken"
MERGE_FRACTION = 0.05
"""Runs of attack sets shorter than this share of the living levels merge into a
neighbour in the regime category (never in the detail)."""


@dataclass(frozen=True)
class Regime:
    """The attack pattern of one condition.

    Attributes
    ----------
    category : str
        Plain-words name without numbers, e.g. ``reserve-dependent: all prey,
        then low-risk prey only`` — the same for every map cell with this
        pattern, so it can colour a categorical map.
    detail : str
        The same with the reserve fractions where the set changes, e.g.
        ``all prey below 40 %, low-risk prey only above``.
    sets : tuple of str
        Names of the successive attack sets, low to high reserves.
    thresholds : tuple of float
        Reserve fractions (of capacity) where the set changes.
    """

    category: str
    detail: str
    sets: tuple[str, ...]
    thresholds: tuple[float, ...]


def describe_set(attacked: np.ndarray, risky: np.ndarray, names: list[str]) -> str:
    """Name a set of attacked prey in plain words.

    ``all prey``, ``low-risk prey only``, ``risky prey only``, ``nothing``, or
    ``all but X`` when one or two prey are skipped, else the names taken.
    """
    if not attacked.any():
        return "nothing"
    if attacked.all():
        return "all prey"
    if risky.any() and (~risky).any():
        if np.array_equal(attacked, ~risky):
            return "low-risk prey only"
        if np.array_equal(attacked, risky):
            return "risky prey only"
    skipped = [n for n, a in zip(names, attacked, strict=True) if not a]
    if len(skipped) <= 2 and len(names) > 2:
        return "all but " + " and ".join(skipped)
    return " + ".join(n for n, a in zip(names, attacked, strict=True) if a)


def _merge_short_runs(labels: list[str], starts: list[int], length: int, shortest: int
                      ) -> tuple[list[str], list[int]]:
    """Merge runs of fewer than ``shortest`` levels into a neighbour (for the category).

    A few levels of a different set between two long runs are a detail of the
    grid, not a different regime; merging them keeps map legends short. The
    detail string keeps every change.
    """
    labels, starts = list(labels), list(starts)
    changed = True
    while changed and len(labels) > 1:
        changed = False
        ends = [*starts[1:], length]
        sizes = [e - s for s, e in zip(starts, ends, strict=True)]
        k = int(np.argmin(sizes))
        if sizes[k] < shortest:
            if k == 0:
                del labels[0]
                del starts[1]
            else:
                del labels[k]
                del starts[k]
            changed = True
            # neighbours with the same label fuse
            fused_l, fused_s = [labels[0]], [starts[0]]
            for lab, st in zip(labels[1:], starts[1:], strict=True):
                if lab != fused_l[-1]:
                    fused_l.append(lab)
                    fused_s.append(st)
            labels, starts = fused_l, fused_s
    return labels, starts


def classify(attacked: np.ndarray, risky: np.ndarray, names: list[str],
             fractions: np.ndarray) -> Regime:
    """Regime of one condition from its attack sets by level.

    Parameters
    ----------
    attacked : ndarray of bool, shape (m, P)
        Whether each prey is worth attacking at each living level, low to high.
    risky : ndarray of bool, shape (P,)
        Risky prey (injury or fatality chance above 0).
    names : list of str
        Prey names.
    fractions : ndarray, shape (m,)
        Reserve fraction of each living level.
    """
    any_attack = attacked.any(axis=1)
    if not any_attack.any():
        return Regime(NOTHING, NOTHING, ("nothing",), ())
    first = int(np.argmax(any_attack))
    rows = attacked[first:]
    change = np.flatnonzero((rows[1:] != rows[:-1]).any(axis=1)) + 1
    starts = [0, *change.tolist()]
    sets = [describe_set(rows[s], risky, names) for s in starts]
    detail = _name(sets, [float(fractions[first + s]) for s in starts[1:]])
    shortest = max(2, int(np.ceil(MERGE_FRACTION * len(rows))))
    labels, kept = _merge_short_runs(sets, starts, len(rows), shortest)
    thresholds = tuple(float(fractions[first + s]) for s in kept[1:])
    return Regime(_category(labels), detail, tuple(labels), thresholds)


def _category(sets: list[str]) -> str:
    if len(sets) == 1:
        only = sets[0]
        if only == "all prey":
            return "all prey at all reserves"
        return only if only.endswith(" only") else f"{only} at all reserves"
    return "reserve-dependent: " + ", then ".join(sets)


def _name(sets: list[str], thresholds: list[float]) -> str:
    if len(sets) == 1:
        return _category(sets)
    parts = [f"{sets[0]} below {100 * thresholds[0]:.0f} %"]
    for k in range(1, len(sets) - 1):
        parts.append(f"{sets[k]} from {100 * thresholds[k - 1]:.0f} to "
                     f"{100 * thresholds[k]:.0f} %")
    parts.append(f"{sets[-1]} above")
    return "reserve-dependent: " + ", ".join(parts)


# --- When each prey is attacked --------------------------------------------------------------

WHEN_NEVER, WHEN_ALL, WHEN_LOW, WHEN_HIGH, WHEN_OTHER = range(5)
WHEN_KEYS = ("never", "all_reserves", "low_reserves", "high_reserves", "other")
"""Machine-readable names of the when-attacked categories, by code (map.csv, netCDF)."""
WHEN_WORDS = ("never", "at all reserves", "only when reserves are low",
              "only when reserves are high", "other")
"""The same categories in words, by code (figures, sentences)."""
WHEN_SHORT = ("never", "always", "when low", "when high", "other")
"""Short labels of the categories for figure keys, by code."""


def when_attacked(attacked: np.ndarray, fractions: np.ndarray
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """When each prey is attacked, read from low to high reserves, for many attack tables.

    One prey's attacked levels are put in one of five categories:

    * ``never`` — attacked at no level;
    * ``at all reserves`` — one unbroken run from the lowest level at which
      *anything* is attacked up to the top living level (levels at the bottom
      where no prey is worth attacking are the same for every prey and do not
      count against "all");
    * ``only when reserves are low`` — one run that starts at that lowest level
      and stops below the top; its threshold is the highest reserve fraction at
      which the prey is still attacked;
    * ``only when reserves are high`` — one run that reaches the top but starts
      above that lowest level; its threshold is the lowest reserve fraction at
      which it is attacked;
    * ``other`` — several runs, or one run in the middle.

    This is the per-prey reading of MODEL.md section 7 that the findings
    (:func:`riskdiet.analysis.findings.attack_pattern`) and the maps share.

    Parameters
    ----------
    attacked : ndarray of bool, shape (..., m, P)
        Whether each prey is worth attacking at each living level, low to high.
    fractions : ndarray, shape (m,)
        Reserve fraction of each living level [fraction of capacity].

    Returns
    -------
    codes : ndarray of int8, shape (..., P)
        Category codes (:data:`WHEN_KEYS` gives their names).
    lower, upper : ndarray of float, shape (..., P)
        Lowest and highest reserve fraction at which each prey is attacked
        (NaN when never) [fraction of capacity].
    """
    attacked = np.asarray(attacked, dtype=bool)
    fractions = np.asarray(fractions, dtype=float)
    m = attacked.shape[-2]
    any_level = attacked.any(axis=-1)                               # (..., m)
    lowest_any = np.argmax(any_level, axis=-1)[..., None]           # (..., 1)
    taken = attacked.any(axis=-2)                                   # (..., P)
    lo = np.argmax(attacked, axis=-2)                               # (..., P)
    hi = m - 1 - np.argmax(attacked[..., ::-1, :], axis=-2)
    starts = attacked[..., 0, :].astype(int) + (attacked[..., 1:, :]
                                                & ~attacked[..., :-1, :]).sum(axis=-2)
    one_run = starts == 1
    from_bottom = lo <= lowest_any
    to_top = hi == m - 1
    codes = np.full(taken.shape, WHEN_OTHER, dtype=np.int8)
    codes[one_run & from_bottom & to_top] = WHEN_ALL
    codes[one_run & from_bottom & ~to_top] = WHEN_LOW
    codes[one_run & ~from_bottom & to_top] = WHEN_HIGH
    codes[~taken] = WHEN_NEVER
    lower = np.where(taken, fractions[lo], np.nan)
    upper = np.where(taken, fractions[hi], np.nan)
    return codes, lower, upper


def when_threshold(codes: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    """The reserve fraction that bounds a one-sided category, NaN for the others.

    ``only when reserves are low``: the highest fraction at which the prey is
    still attacked; ``only when reserves are high``: the lowest.
    """
    return np.where(codes == WHEN_LOW, upper, np.where(codes == WHEN_HIGH, lower, np.nan))
