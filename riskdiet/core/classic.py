"""Classic prey model of a well-fed forager: ranking, rate-maximising and risk-adjusted diets.

The forager here has no state: it searches, meets prey types at constant rates
and either attacks or ignores each one. Three results follow from the
multi-prey disc equation of Holling (1959):

* the profitability ranking ``e_i / h_i`` and Charnov's (1976) zero-one rule
  for the diet that maximises the long-term rate of energy intake;
* for every prey type left out of that diet, the encounter rate of the better
  prey types above which it stays left out (the switching threshold);
* the diet that minimises mortality per unit of net energy gain (Gilliam's
  rule, Werner & Gilliam 1984), exact by enumeration of every diet up to
  :data:`EXACT_ENUMERATION_LIMIT` prey types and by a stated local search above.

Only numpy is used; the module knows nothing about studies, files or reports.

References
----------
.. [1] Charnov, E. L. (1976) Optimal foraging: attack strategy of a mantid.
   American Naturalist 110, 141-151.
.. [2] Holling, C. S. (1959) Some characteristics of simple types of predation
   and parasitism. Canadian Entomologist 91, 385-398.
.. [3] Werner, E. E. & Gilliam, J. F. (1984) The ontogenetic niche and species
   interactions in size-structured populations. Annual Review of Ecology and
   Systematics 15, 393-425.
.. [4] Stephens, D. W. & Krebs, J. R. (1986) Foraging Theory, Princeton
   University Press.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

__all__ = [
    "EXACT_ENUMERATION_LIMIT",
    "EXACT_METHOD",
    "HEURISTIC_METHOD",
    "ClassicResult",
    "classic_prey_model",
    "holling_rate",
]

#: Largest number of prey types for which every diet is enumerated (2**16 - 1 diets).
EXACT_ENUMERATION_LIMIT = 16

#: ``risk_adjusted_method`` when every diet was compared.
EXACT_METHOD = "exact enumeration"

#: ``risk_adjusted_method`` above :data:`EXACT_ENUMERATION_LIMIT` prey types.
HEURISTIC_METHOD = (
    "greedy add/remove local search started from the rate-maximising diet "
    "and from the best single prey type"
)

# Relative tolerance under which two diets count as equally good; sums taken in
# a different order differ by a few ulps and must not decide between diets.
_TIE_RTOL = 1e-12


@dataclass(frozen=True, eq=False)
class ClassicResult:
    """Outcome of the classic prey model; arrays are in listing order and read-only.

    Attributes
    ----------
    names : tuple of str
        Prey type names in listing order.
    profitability_mj_per_day : numpy.ndarray
        Energy per unit handling time ``e_i / h_i`` [MJ/day]; ``inf`` where
        ``h_i == 0`` and ``e_i > 0``, and ``0`` where both are zero.
    rank : numpy.ndarray
        Profitability rank, 1 = most profitable; ties go to the prey listed first.
    rate_maximizing_diet : tuple of str
        Charnov's rate-maximising diet, in rank order.
    rate_mj_per_day : float
        Long-term intake rate ``R(D)`` of that diet [MJ/day].
    switching_threshold_per_day : dict of str to float
        For each prey type excluded from the rate-maximising diet (in rank
        order): the total encounter rate of all better-ranked prey types above
        which it stays excluded [1/day]; ``inf`` if no abundance of the better
        prey alone excludes it.
    risk_adjusted_diet : tuple of str or None
        Diet minimising ``mu(D) / g(D)`` (Gilliam's rule), in rank order;
        ``None`` when no diet has a positive net gain.
    risk_adjusted_mortality_per_day : float or None
        Mortality rate ``mu(D)`` of that diet [1/day].
    risk_adjusted_net_gain_mj_per_day : float or None
        Net gain ``g(D) = R(D) - c`` of that diet [MJ/day].
    risk_adjusted_method : str
        :data:`EXACT_METHOD` or :data:`HEURISTIC_METHOD`.
    meets_daily_cost : bool
        Whether some diet has ``R(D) > c``.
    statement : str
        Plain-language summary of the result.
    """

    names: tuple[str, ...]
    profitability_mj_per_day: np.ndarray
    rank: np.ndarray
    rate_maximizing_diet: tuple[str, ...]
    rate_mj_per_day: float
    switching_threshold_per_day: dict[str, float]
    risk_adjusted_diet: tuple[str, ...] | None
    risk_adjusted_mortality_per_day: float | None
    risk_adjusted_net_gain_mj_per_day: float | None
    risk_adjusted_method: str
    meets_daily_cost: bool
    statement: str

    def to_dict(self) -> dict:
        """Plain JSON-ready form of the result.

        Returns
        -------
        dict
            ``ranking`` (list of ``{"name", "profitability_mj_per_day", "rank"}``
            ordered by rank), ``rate_maximizing_diet``, ``rate_mj_per_day``,
            ``switching_threshold_per_day``, ``risk_adjusted_diet`` (list or
            ``None``), ``risk_adjusted_mortality_per_day``,
            ``risk_adjusted_net_gain_mj_per_day``, ``risk_adjusted_method``,
            ``meets_daily_cost`` and ``statement``.

        Notes
        -----
        JSON has no infinity, so every ``inf`` or ``nan`` becomes ``None``
        (``null``): a profitability of ``null`` means zero handling time
        (infinitely profitable), a switching threshold of ``null`` means the
        prey is never excluded by the abundance of better prey alone.
        """
        order = np.argsort(self.rank, kind="stable")
        ranking = [
            {
                "name": self.names[i],
                "profitability_mj_per_day": _json_number(self.profitability_mj_per_day[i]),
                "rank": int(self.rank[i]),
            }
            for i in order
        ]
        return {
            "ranking": ranking,
            "rate_maximizing_diet": list(self.rate_maximizing_diet),
            "rate_mj_per_day": _json_number(self.rate_mj_per_day),
            "switching_threshold_per_day": {
                name: _json_number(value)
                for name, value in self.switching_threshold_per_day.items()
            },
            "risk_adjusted_diet": (
                None if self.risk_adjusted_diet is None else list(self.risk_adjusted_diet)
            ),
            "risk_adjusted_mortality_per_day": _json_number(self.risk_adjusted_mortality_per_day),
            "risk_adjusted_net_gain_mj_per_day": _json_number(
                self.risk_adjusted_net_gain_mj_per_day
            ),
            "risk_adjusted_method": self.risk_adjusted_method,
            "meets_daily_cost": bool(self.meets_daily_cost),
            "statement": self.statement,
        }


def holling_rate(
    encounters_per_day: Sequence[float] | np.ndarray,
    capture_success: Sequence[float] | np.ndarray,
    energy_mj: Sequence[float] | np.ndarray,
    handling_days: Sequence[float] | np.ndarray,
    diet_mask: Sequence[bool] | np.ndarray,
) -> float | np.ndarray:
    """Long-term energy intake rate of one diet or of many diets at once.

    Parameters
    ----------
    encounters_per_day : array_like, shape (P,)
        Encounter rate ``lambda_i`` of each prey type while searching [1/day].
    capture_success : array_like, shape (P,)
        Chance ``s_i`` that an attack captures the prey [0-1].
    energy_mj : array_like, shape (P,)
        Energy ``e_i`` gained from one capture [MJ].
    handling_days : array_like, shape (P,)
        Time ``h_i`` one capture occupies [day]; zero is allowed.
    diet_mask : array_like of bool, shape (..., P)
        ``True`` where the prey type is attacked when met; leading axes index
        diets (a bit-matrix of diets is evaluated in one call).

    Returns
    -------
    float or numpy.ndarray
        ``R(D)`` [MJ/day]: a float for a one-dimensional mask, otherwise an
        array of shape ``diet_mask.shape[:-1]``.

    Raises
    ------
    ValueError
        If the arrays differ in length, hold values out of range, or the mask's
        last axis does not match the number of prey types.

    Notes
    -----
    Holling's (1959) disc equation for several prey types, with only
    successful attacks yielding energy and occupying handling time:

    .. math:: R(D) = \\frac{\\sum_{i \\in D} \\lambda_i s_i e_i}
                           {1 + \\sum_{i \\in D} \\lambda_i s_i h_i}

    The empty diet has rate 0. Zero handling times keep the rate finite.

    References
    ----------
    .. [1] Holling, C. S. (1959) Some characteristics of simple types of
       predation and parasitism. Canadian Entomologist 91, 385-398.
    .. [2] Stephens, D. W. & Krebs, J. R. (1986) Foraging Theory, Princeton
       University Press.
    """
    lam = _prey_vector("encounters_per_day", encounters_per_day, None, low=0.0)
    count = lam.size
    s = _prey_vector("capture_success", capture_success, count, low=0.0, high=1.0)
    e = _prey_vector("energy_mj", energy_mj, count, low=0.0)
    h = _prey_vector("handling_days", handling_days, count, low=0.0)
    mask = _diet_mask(diet_mask, count)
    attacks = lam * s
    weights = mask.astype(float)
    rate = (weights @ (attacks * e)) / (1.0 + weights @ (attacks * h))
    if mask.ndim == 1:
        return float(rate)
    return rate


def classic_prey_model(
    names: Sequence[str],
    encounters_per_day: Sequence[float] | np.ndarray,
    energy_mj: Sequence[float] | np.ndarray,
    handling_days: Sequence[float] | np.ndarray,
    capture_success: Sequence[float] | np.ndarray,
    fatality_chance: Sequence[float] | np.ndarray,
    background_mortality: float,
    daily_cost_mj: float,
    *,
    exact_limit: int = EXACT_ENUMERATION_LIMIT,
) -> ClassicResult:
    """Rank prey types and find the rate-maximising and risk-adjusted diets.

    Parameters
    ----------
    names : sequence of str, length P
        Unique prey type names, in listing order (used to break ties).
    encounters_per_day : array_like, shape (P,)
        Encounter rate ``lambda_i = m_i`` while searching [1/day].
    energy_mj : array_like, shape (P,)
        Energy ``e_i`` gained from one capture [MJ].
    handling_days : array_like, shape (P,)
        Time ``h_i`` one capture occupies [day]; zero means infinitely profitable.
    capture_success : array_like, shape (P,)
        Chance ``s_i`` that an attack captures the prey [0-1].
    fatality_chance : array_like, shape (P,)
        Chance ``f_i`` that an attack kills the predator [0-1).
    background_mortality : float
        Mortality ``mu`` from other causes, used as a rate [1/day].
    daily_cost_mj : float
        Metabolic cost ``c`` of a day [MJ/day].
    exact_limit : int, optional
        Enumerate every diet up to this many prey types, otherwise use the
        local search (default :data:`EXACT_ENUMERATION_LIMIT`).

    Returns
    -------
    ClassicResult

    Raises
    ------
    ValueError
        If the inputs differ in length, hold values out of range or repeat a
        name. Checks that name the input location belong upstream.
    TypeError
        If ``names`` is a single string or holds something other than text.

    Notes
    -----
    With ``a_i = lambda_i s_i`` attacks that succeed per search day, the rate of
    a diet ``D`` is Holling's (1959) ``R(D) = sum a_i e_i / (1 + sum a_i h_i)``
    (see :func:`holling_rate`).

    The rate-maximising diet and switching thresholds are those of
    :func:`_charnov`, the risk-adjusted diet that of :func:`_gilliam`.

    References
    ----------
    .. [1] Charnov, E. L. (1976) Optimal foraging: attack strategy of a mantid.
       American Naturalist 110, 141-151.
    .. [2] Holling, C. S. (1959) Some characteristics of simple types of
       predation and parasitism. Canadian Entomologist 91, 385-398.
    .. [3] Werner, E. E. & Gilliam, J. F. (1984) The ontogenetic niche and
       species interactions in size-structured populations. Annual Review of
       Ecology and Systematics 15, 393-425.
    .. [4] Stephens, D. W. & Krebs, J. R. (1986) Foraging Theory, Princeton
       University Press.
    """
    labels = _names(names)
    count = len(labels)
    lam = _prey_vector("encounters_per_day", encounters_per_day, count, low=0.0)
    e = _prey_vector("energy_mj", energy_mj, count, low=0.0)
    h = _prey_vector("handling_days", handling_days, count, low=0.0)
    s = _prey_vector("capture_success", capture_success, count, low=0.0, high=1.0)
    f = _prey_vector("fatality_chance", fatality_chance, count, low=0.0, high=1.0, open_high=True)
    mu = _scalar("background_mortality", background_mortality, high=1.0)
    cost = _scalar("daily_cost_mj", daily_cost_mj)
    if int(exact_limit) != exact_limit or exact_limit < 0:
        raise ValueError(f"exact_limit: expected a whole number >= 0, found {exact_limit!r}")

    prey = _Prey(lam=lam, gain=lam * s * e, handling=lam * s * h, risk=lam * f)
    profitability = _profitability(e, h)
    ranking = _charnov(prey, profitability, labels)
    order, charnov_mask = ranking.order, ranking.diet
    charnov_rate = float(prey.rates(charnov_mask))
    best, method = _gilliam(prey, mu, cost, charnov_mask, exact_limit)

    def in_rank_order(mask: np.ndarray) -> tuple[str, ...]:
        return tuple(labels[i] for i in order if mask[i])

    charnov_diet = in_rank_order(charnov_mask)
    if best is None:
        risk_diet = risk_mortality = risk_gain = None
    else:
        risk_diet = in_rank_order(best)
        risk_mortality = float(prey.mortality(best, mu))
        risk_gain = float(prey.rates(best)) - cost

    statement = _statement(
        charnov_diet, charnov_rate, cost, risk_diet, risk_mortality, risk_gain, method
    )
    return ClassicResult(
        names=labels,
        profitability_mj_per_day=_frozen(profitability),
        rank=_frozen(ranking.rank),
        rate_maximizing_diet=charnov_diet,
        rate_mj_per_day=charnov_rate,
        switching_threshold_per_day=ranking.thresholds,
        risk_adjusted_diet=risk_diet,
        risk_adjusted_mortality_per_day=risk_mortality,
        risk_adjusted_net_gain_mj_per_day=risk_gain,
        risk_adjusted_method=method,
        meets_daily_cost=best is not None,
        statement=statement,
    )


@dataclass(frozen=True)
class _Prey:
    """Per-prey rates that enter the diet sums: lambda, lambda*s*e, lambda*s*h, lambda*f."""

    lam: np.ndarray
    gain: np.ndarray
    handling: np.ndarray
    risk: np.ndarray

    def rates(self, masks: np.ndarray) -> np.ndarray:
        weights = masks.astype(float)
        return (weights @ self.gain) / (1.0 + weights @ self.handling)

    def mortality(self, masks: np.ndarray, mu: float) -> np.ndarray:
        weights = masks.astype(float)
        return mu + (weights @ self.risk) / (1.0 + weights @ self.handling)


@dataclass(frozen=True)
class _Ranking:
    """Charnov's ranking: order by profitability, ranks, the diet and thresholds."""

    order: np.ndarray
    rank: np.ndarray
    diet: np.ndarray
    thresholds: dict[str, float]


def _charnov(prey: _Prey, profitability: np.ndarray, labels: tuple[str, ...]) -> _Ranking:
    """Rank prey by profitability; the zero-one rate-maximising diet and switching thresholds.

    Notes
    -----
    *Rate-maximising diet* (Charnov 1976; Stephens & Krebs 1986, ch. 2). Rank
    by profitability ``e_i / h_i`` (ties: listed first; ``h_i = 0`` ranks
    first). Walking down the ranking, the k-th prey joins when

    .. math:: e_k / h_k \\ge R(\\text{top } k-1)

    and the first prey that fails ends the diet: it and every prey ranked below
    are excluded (zero-one rule). A prey met at zero rate, or never captured,
    still gets a rank; including it leaves the rate unchanged.

    *Switching threshold* of an excluded prey ``j``. Let ``B`` be every prey
    ranked above ``j`` (included or not) and scale all their encounter rates by a
    common factor ``t``. Then ``j`` is excluded exactly while
    ``R(B) > e_j / h_j``. With ``N = sum_B a_i e_i``, ``H = sum_B a_i h_i`` and
    ``Lambda_B = sum_B lambda_i``, solving ``tN / (1 + tH) = e_j / h_j`` gives
    the total encounter rate of the better prey at the switch

    .. math:: \\Lambda^* = \\frac{(e_j/h_j) \\Lambda_B}{N - (e_j/h_j) H}

    which for one better prey is ``e_2 / (s_1 (e_1 h_2 - e_2 h_1))``, the
    classic two-prey threshold of Charnov (1976) when ``s_1 = 1``. When
    ``N <= (e_j/h_j) H`` the better prey can never reach that rate (their
    asymptotic rate ``N/H`` is too low) and the threshold is ``inf``.

    References
    ----------
    .. [1] Charnov, E. L. (1976) Optimal foraging: attack strategy of a mantid.
       American Naturalist 110, 141-151.
    """
    count = len(labels)
    # -inf sorts first, so zero-handling prey lead; a stable sort keeps listing order on ties.
    order = np.argsort(-profitability, kind="stable")
    rank = np.empty(count, dtype=int)
    rank[order] = np.arange(1, count + 1)
    # Rates of the top k-1 prey for every k, from running sums in rank order.
    gain_before = np.concatenate(([0.0], np.cumsum(prey.gain[order])[:-1]))
    handling_before = np.concatenate(([0.0], np.cumsum(prey.handling[order])[:-1]))
    lam_before = np.concatenate(([0.0], np.cumsum(prey.lam[order])[:-1]))
    rate_before = gain_before / (1.0 + handling_before)
    joins = profitability[order] >= rate_before
    n_included = count if joins.all() else int(np.argmin(joins))
    diet = np.zeros(count, dtype=bool)
    diet[order[:n_included]] = True
    thresholds: dict[str, float] = {}
    for position in range(n_included, count):
        j = order[position]
        p = profitability[j]
        slack = gain_before[position] - p * handling_before[position]
        thresholds[labels[j]] = float(p * lam_before[position] / slack) if slack > 0 else math.inf
    return _Ranking(order, rank, diet, thresholds)


def _gilliam(prey: _Prey, mu: float, cost: float, charnov_mask: np.ndarray,
             exact_limit: int) -> tuple[np.ndarray | None, str]:
    """The risk-adjusted diet minimising mortality over net gain, and how it was found.

    Notes
    -----
    *Risk-adjusted diet* (Gilliam's rule; Werner & Gilliam 1984). Each diet has
    mortality rate and net gain

    .. math:: \\mu(D) = \\mu + \\frac{\\sum_{i \\in D} \\lambda_i f_i}
                                    {1 + \\sum_{i \\in D} \\lambda_i s_i h_i},
              \\qquad g(D) = R(D) - c

    and the chosen diet minimises ``mu(D) / g(D)`` [1/MJ] over non-empty diets
    with ``g(D) > 0``. Ties (within a relative 1e-12, e.g. several risk-free
    diets with ``mu(D) = 0``) go to the highest net gain, then to the fewest
    prey types (a prey that changes nothing is left out), then to the diet
    whose prey are listed first. Up to ``exact_limit`` prey types every one of
    the ``2**P - 1`` diets is evaluated at once as a bit-matrix. Above, a local
    search starts from the rate-maximising diet and from the best single prey
    type, and repeatedly makes the single addition or removal that lowers
    ``mu/g`` most, until none does; the better end point is reported. It is
    never worse than either start, but may miss the global optimum.

    No diet has ``g > 0`` exactly when the rate-maximising diet has
    ``R <= c``; then the well-fed model does not apply and the risk-adjusted
    fields are ``None``.

    References
    ----------
    .. [1] Werner, E. E. & Gilliam, J. F. (1984) The ontogenetic niche and
       species interactions in size-structured populations. Annual Review of
       Ecology and Systematics 15, 393-425.
    """
    if len(prey.lam) <= exact_limit:
        return _best_by_enumeration(prey, mu, cost), EXACT_METHOD
    return _best_by_local_search(prey, mu, cost, charnov_mask), HEURISTIC_METHOD


def _best_by_enumeration(prey: _Prey, mu: float, cost: float) -> np.ndarray | None:
    """Gilliam's diet among all 2**P - 1 non-empty diets (bit i of the code = prey i)."""
    count = prey.lam.size
    codes = np.arange(1, 2**count, dtype=np.int64)
    masks = ((codes[:, None] >> np.arange(count)) & 1).astype(bool)
    index = _pick(masks, prey.mortality(masks, mu), prey.rates(masks) - cost)
    return None if index is None else masks[index]


def _best_by_local_search(
    prey: _Prey, mu: float, cost: float, charnov_mask: np.ndarray
) -> np.ndarray | None:
    """Gilliam's diet by steepest-descent local search over single additions and removals."""
    count = prey.lam.size
    # The rate-maximising diet has the highest R, so if it cannot pay the cost, no diet can.
    if float(prey.rates(charnov_mask)) - cost <= 0:
        return None
    singles = np.eye(count, dtype=bool)
    starts = [charnov_mask]
    single = _pick(singles, prey.mortality(singles, mu), prey.rates(singles) - cost)
    if single is not None:
        starts.append(singles[single])

    ends = [_descend(start, prey, mu, cost) for start in starts]
    finals = np.array(ends)
    index = _pick(finals, prey.mortality(finals, mu), prey.rates(finals) - cost)
    return finals[index]


def _descend(start: np.ndarray, prey: _Prey, mu: float, cost: float) -> np.ndarray:
    """Move to the best single-flip neighbour while it strictly improves mu/g."""
    flips = np.eye(start.size, dtype=bool)
    current = start.copy()
    ratio = float(prey.mortality(current, mu)) / (float(prey.rates(current)) - cost)
    gain = float(prey.rates(current)) - cost
    while True:
        neighbours = current[None, :] ^ flips
        index = _pick(neighbours, prey.mortality(neighbours, mu), prey.rates(neighbours) - cost)
        if index is None:
            return current
        n_gain = float(prey.rates(neighbours[index])) - cost
        n_ratio = float(prey.mortality(neighbours[index], mu)) / n_gain
        # Strict improvements only (beyond rounding), so the walk cannot cycle.
        better = n_ratio < ratio * (1.0 - _TIE_RTOL) or (
            n_ratio == 0.0 == ratio and n_gain > gain * (1.0 + _TIE_RTOL)
        )
        if not better:
            return current
        current, ratio, gain = neighbours[index], n_ratio, n_gain


def _pick(masks: np.ndarray, mortality: np.ndarray, gain: np.ndarray) -> int | None:
    """Index of the diet with the lowest mu/g among those with g > 0, ties as documented."""
    valid = (gain > 0) & masks.any(axis=1)
    if not valid.any():
        return None
    ratio = np.full(gain.shape, np.inf)
    ratio[valid] = mortality[valid] / gain[valid]
    best_ratio = ratio.min()
    tied = valid & (ratio <= best_ratio * (1.0 + _TIE_RTOL))
    best_gain = gain[tied].max()
    tied &= gain >= best_gain * (1.0 - _TIE_RTOL)
    sizes = np.where(tied, masks.sum(axis=1), masks.shape[1] + 1)
    tied &= sizes == sizes.min()
    # Among equal-size diets, prefer prey listed first: compare masks as reversed bit codes.
    candidates = np.flatnonzero(tied)
    keys = [tuple(~masks[i]) for i in candidates]
    return int(candidates[min(range(len(candidates)), key=keys.__getitem__)])


def _profitability(e: np.ndarray, h: np.ndarray) -> np.ndarray:
    """e/h with inf for zero handling (0 when the energy is zero too)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        out = e / h
    zero = h == 0
    out[zero] = np.where(e[zero] > 0, np.inf, 0.0)
    return out


def _statement(
    charnov_diet: tuple[str, ...],
    charnov_rate: float,
    cost: float,
    risk_diet: tuple[str, ...] | None,
    risk_mortality: float | None,
    risk_gain: float | None,
    method: str,
) -> str:
    rate_part = (
        f"The rate-maximising diet is {_listing(charnov_diet)}, "
        f"taking {charnov_rate:.4g} MJ per day."
    )
    if risk_diet is None:
        return (
            f"{rate_part} No diet meets the daily cost of {cost:.4g} MJ per day, "
            "so the well-fed model does not apply; use the state-dependent model instead."
        )
    same = set(risk_diet) == set(charnov_diet)
    how = "" if method == EXACT_METHOD else f" (found by {method}, not guaranteed optimal)"
    return (
        f"{rate_part} Weighing mortality against net gain, the diet with the lowest "
        f"mortality per unit of net gain is {_listing(risk_diet)}{how}"
        f"{', the same diet' if same else ''}: mortality {risk_mortality:.4g} per day "
        f"for a net gain of {risk_gain:.4g} MJ per day."
    )


def _listing(diet: tuple[str, ...]) -> str:
    if len(diet) == 1:
        return diet[0]
    return ", ".join(diet[:-1]) + " and " + diet[-1]


def _json_number(value: float | None) -> float | None:
    if value is None or not math.isfinite(value):
        return None
    return float(value)


def _frozen(values: np.ndarray) -> np.ndarray:
    out = np.array(values, copy=True)
    out.setflags(write=False)
    return out


def _names(names: Sequence[str]) -> tuple[str, ...]:
    if isinstance(names, str):
        raise TypeError("names: expected a sequence of prey type names, found one string")
    labels = tuple(names)
    if not labels:
        raise ValueError("names: expected at least one prey type, found none")
    if not all(isinstance(name, str) for name in labels):
        raise TypeError(f"names: expected text, found {labels!r}")
    if len(set(labels)) != len(labels):
        raise ValueError(f"names: expected unique names, found {labels!r}")
    return labels


def _prey_vector(
    label: str,
    values: Sequence[float] | np.ndarray,
    count: int | None,
    *,
    low: float,
    high: float | None = None,
    open_high: bool = False,
) -> np.ndarray:
    array = np.asarray(values, dtype=float)
    if array.ndim != 1 or array.size == 0:
        raise ValueError(f"{label}: expected a non-empty 1-D array, found shape {array.shape}")
    if count is not None and array.size != count:
        raise ValueError(f"{label}: expected {count} values (one per prey), found {array.size}")
    bad = ~np.isfinite(array) | (array < low)
    if high is not None:
        bad |= (array >= high) if open_high else (array > high)
    if bad.any():
        bound = f"{'below' if open_high else 'up to'} {high:g}" if high is not None else ""
        raise ValueError(
            f"{label}: expected finite values >= {low:g} {bound}".rstrip()
            + f", found {array[bad].tolist()} at positions {np.flatnonzero(bad).tolist()}"
        )
    return array.copy()


def _scalar(label: str, value: float, *, high: float | None = None) -> float:
    number = float(value)
    if not math.isfinite(number) or number < 0 or (high is not None and number >= high):
        limit = f" and below {high:g}" if high is not None else ""
        raise ValueError(f"{label}: expected a finite number >= 0{limit}, found {value!r}")
    return number


def _diet_mask(diet_mask: Sequence[bool] | np.ndarray, count: int) -> np.ndarray:
    mask = np.asarray(diet_mask)
    if mask.ndim == 0 or mask.shape[-1] != count:
        raise ValueError(f"diet_mask: expected shape (..., {count}), found shape {mask.shape}")
    if mask.dtype != np.bool_:
        if not np.isin(mask, (0, 1)).all():
            raise ValueError("diet_mask: expected booleans (or 0/1), found other values")
        mask = mask.astype(bool)
    return mask
