"""Profile-likelihood intervals that may fall apart into several pieces.

The 95 % profile-likelihood interval of a parameter theta is the set
{theta : l_hat - l_p(theta) <= chi2_1(0.95) / 2 = 1.92}, where l_p is the
profile log-likelihood (the log-likelihood maximised over any other fitted
inputs at each theta) and l_hat its maximum (Venzon & Moolgavkar 1988). The
diet model's likelihood jumps where the optimal policy switches, so the set
can be a union of separate pieces; every piece is reported. A piece that
reaches an end of the search range is flagged: the data cannot bound the
parameter on that side.

References
----------
.. [1] Venzon, D. J. & Moolgavkar, S. H. (1988) A method for computing
   profile-likelihood-based confidence intervals. Applied Statistics 37,
   87-94.
.. [2] Pawitan, Y. (2001) In All Likelihood: Statistical Modelling and
   Inference Using Likelihood. Oxford University Press (likelihood
   intervals, chapter 2).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import partial

import numpy as np
from scipy.optimize import brentq, minimize_scalar
from scipy.stats import chi2

from riskdiet.errors import RiskdietError

PROFILE_DROP = float(chi2.ppf(0.95, 1) / 2)
"""l_hat - l(theta) allowed inside a 95 % interval: chi2_1(0.95)/2 = 1.9207 [log-likelihood]."""

GRID_POINTS = 41
"""Default number of points of the coarse grid over the search range."""

Profile = Callable[[float], "float | None"]


@dataclass(frozen=True)
class Piece:
    """One connected piece of a profile-likelihood interval.

    Attributes
    ----------
    low, high : float
        Ends of the piece [parameter's unit].
    low_at_bound, high_at_bound : bool
        The piece reaches the lower / upper end of the search range, so the
        data do not bound the parameter there.
    """

    low: float
    high: float
    low_at_bound: bool
    high_at_bound: bool


@dataclass(frozen=True)
class ProfileInterval:
    """A profile-likelihood interval as a union of pieces.

    Attributes
    ----------
    estimate : float
        Maximum-likelihood value of the parameter [parameter's unit].
    max_log_likelihood : float
        l_hat, the profile log-likelihood at ``estimate``.
    pieces : tuple of Piece
        Disjoint pieces in increasing order; one of them holds ``estimate``.
    bounds : tuple of float
        The search range.
    drop : float
        The allowed drop in log-likelihood (1.92 for 95 %).
    """

    estimate: float
    max_log_likelihood: float
    pieces: tuple[Piece, ...]
    bounds: tuple[float, float]
    drop: float

    @property
    def low(self) -> float:
        """Lowest end of all pieces."""
        return self.pieces[0].low

    @property
    def high(self) -> float:
        """Highest end of all pieces."""
        return self.pieces[-1].high

    @property
    def at_lower_bound(self) -> bool:
        """The interval reaches the lower end of the search range."""
        return self.pieces[0].low_at_bound

    @property
    def at_upper_bound(self) -> bool:
        """The interval reaches the upper end of the search range."""
        return self.pieces[-1].high_at_bound

    @property
    def at_bound(self) -> bool:
        """The interval reaches either end: the data cannot bound the parameter there."""
        return self.at_lower_bound or self.at_upper_bound

    def contains(self, theta: float) -> bool:
        """True when theta lies in one of the pieces."""
        return any(p.low <= theta <= p.high for p in self.pieces)


def _as_log_likelihood(value: object, theta: float) -> float | None:
    if value is None:
        return None
    v = float(value)  # type: ignore[arg-type]
    if v == -math.inf:
        return None
    if not math.isfinite(v):
        raise RiskdietError(f"the profile log-likelihood at {theta!r} is {v!r}; expected a "
                            "finite number, or None where the model cannot produce the records")
    return v


def _check_bounds(bounds: Sequence[float]) -> tuple[float, float]:
    lo, hi = (float(b) for b in bounds)
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise RiskdietError(f"search bounds must be two finite numbers, low below high, "
                            f"found {tuple(bounds)!r}")
    return lo, hi


def profile_interval(
    profile: Profile,
    bounds: Sequence[float],
    *,
    grid: Sequence[float] | None = None,
    points: int = GRID_POINTS,
    log_scale: bool = False,
    estimate: float | None = None,
    drop: float = PROFILE_DROP,
    xtol: float | None = None,
) -> ProfileInterval:
    """Profile-likelihood interval of one parameter from a callable profile.

    The profile is evaluated on a grid over the bounds (plus the bounds
    themselves and ``estimate``); the maximum is refined with a bounded
    optimiser next to the best grid point; every change between inside and
    outside the interval along the grid is located with Brent's method
    (which converges to the jump where the profile jumps). Pieces narrower
    than the grid spacing between two outside grid points can be missed:
    pass a finer ``grid`` where the policy switches.

    Parameters
    ----------
    profile : callable
        ``profile(theta)`` -> profile log-likelihood, or ``None`` (or -inf)
        where the model cannot produce the records.
    bounds : (float, float)
        Search range [parameter's unit].
    grid : sequence of float, optional
        Coarse grid to use (e.g. the one a batched search already solved);
        points outside the bounds are dropped.
    points : int
        Grid size when no grid is given (default 41).
    log_scale : bool
        Space the default grid evenly in log theta (bounds must be > 0).
    estimate : float, optional
        A maximiser found elsewhere (e.g. by the fit's refinement).
    drop : float
        Allowed drop in log-likelihood (default 1.92, 95 %).
    xtol : float, optional
        Absolute tolerance of the located ends (default 1e-8 of the range).

    Returns
    -------
    ProfileInterval

    Raises
    ------
    riskdiet.errors.RiskdietError
        If the model cannot produce the records anywhere on the grid, the
        profile returns NaN or +inf, or an argument is invalid.
    """
    lo, hi = _check_bounds(bounds)
    if not (isinstance(drop, (int, float)) and math.isfinite(drop) and drop > 0):
        raise RiskdietError(f"drop must be a finite number above 0, found {drop!r}")
    if grid is not None:
        base = np.asarray(grid, dtype=float)
        base = base[np.isfinite(base) & (base >= lo) & (base <= hi)]
    elif log_scale:
        if lo <= 0:
            raise RiskdietError("a log-scale grid needs bounds above 0")
        base = np.geomspace(lo, hi, max(int(points), 2))
    else:
        base = np.linspace(lo, hi, max(int(points), 2))
    xtol = (hi - lo) * 1e-8 if xtol is None else float(xtol)

    cache: dict[float, float | None] = {}

    def evaluate(theta: float) -> float | None:
        theta = float(theta)
        if theta not in cache:
            cache[theta] = _as_log_likelihood(profile(theta), theta)
        return cache[theta]

    start = [lo, hi, *base.tolist()] + ([float(estimate)] if estimate is not None else [])
    for theta in start:
        if not lo <= theta <= hi:
            raise RiskdietError(f"estimate {theta!r} lies outside the bounds {lo!r}-{hi!r}")
        evaluate(theta)
    _refine_maximum(evaluate, cache)

    for _ in range(10):  # a located end can reveal a higher point; then start again
        thetas = sorted(cache)
        values = [cache[t] for t in thetas]
        best = max(v for v in values if v is not None)
        target = best - drop

        locate = partial(_locate_end, evaluate, target, xtol)
        result = _pieces(thetas, values, lo, hi, drop, locate)
        if max(v for v in cache.values() if v is not None) <= best:
            return result
    return result


def _locate_end(evaluate: Callable[[float], float | None], target: float, xtol: float,
                t_in: float, t_out: float) -> float:
    """Where the profile crosses ``target`` between an inside and an outside point (Brent)."""
    def excess(t: float) -> float:
        v = evaluate(t)
        return -1.0 if v is None else v - target  # cannot produce: surely outside

    a, b = min(t_in, t_out), max(t_in, t_out)
    return float(brentq(excess, a, b, xtol=xtol))


def _refine_maximum(evaluate: Callable[[float], float | None],
                    cache: dict[float, float | None]) -> None:
    thetas = sorted(cache)
    values = [cache[t] for t in thetas]
    finite = [i for i, v in enumerate(values) if v is not None]
    if not finite:
        raise RiskdietError("the model cannot produce the records anywhere in the search range")
    j = max(finite, key=lambda i: values[i])  # first of equal maxima
    a, b = thetas[max(j - 1, 0)], thetas[min(j + 1, len(thetas) - 1)]
    if a < b:
        penalty = -(values[j] or 0.0) + 1e6
        minimize_scalar(lambda t: -v if (v := evaluate(t)) is not None else penalty,
                        bounds=(a, b), method="bounded", options={"xatol": (b - a) * 1e-6})


def _pieces(
    thetas: Sequence[float],
    values: Sequence[float | None],
    lo: float,
    hi: float,
    drop: float,
    locate: Callable[[float, float], float],
) -> ProfileInterval:
    best_i = max((i for i, v in enumerate(values) if v is not None), key=lambda i: values[i])
    best = values[best_i]
    inside = [v is not None and best - v <= drop for v in values]
    pieces: list[Piece] = []
    i, m = 0, len(thetas)
    while i < m:
        if not inside[i]:
            i += 1
            continue
        j = i
        while j + 1 < m and inside[j + 1]:
            j += 1
        low = thetas[i] if i == 0 else locate(thetas[i], thetas[i - 1])
        high = thetas[j] if j == m - 1 else locate(thetas[j], thetas[j + 1])
        pieces.append(Piece(low=low, high=high, low_at_bound=(i == 0 and thetas[0] <= lo),
                            high_at_bound=(j == m - 1 and thetas[-1] >= hi)))
        i = j + 1
    # + 0.0 turns a -0.0 into 0.0 for display
    return ProfileInterval(estimate=float(thetas[best_i]), max_log_likelihood=float(best) + 0.0,
                           pieces=tuple(pieces), bounds=(lo, hi), drop=drop)


def profile_interval_from_grid(
    theta: Sequence[float],
    log_likelihood: Sequence[float | None],
    *,
    bounds: Sequence[float] | None = None,
    drop: float = PROFILE_DROP,
) -> ProfileInterval:
    """Profile-likelihood interval from a profile known only on a grid.

    Ends between an inside and an outside grid point are found by linear
    interpolation of the log-likelihood; where the outside point cannot
    produce the records (``None``), the end is the last inside grid point
    (the profile between is unknown). Use :func:`profile_interval` with a
    callable for exact ends.

    Parameters
    ----------
    theta : sequence of float
        Grid of parameter values (any order, distinct) [parameter's unit].
    log_likelihood : sequence of float or None
        Profile log-likelihood at each grid point; ``None`` (or -inf) where
        the model cannot produce the records.
    bounds : (float, float), optional
        Search range; default the grid's ends. A piece reaching a grid end
        is at the bound only if that end is a bound.
    drop : float
        Allowed drop (default 1.92).

    Returns
    -------
    ProfileInterval
    """
    t = np.asarray(theta, dtype=float)
    if t.ndim != 1 or t.size < 2 or not np.all(np.isfinite(t)) or np.unique(t).size != t.size:
        raise RiskdietError("the grid needs at least two distinct finite parameter values")
    if len(log_likelihood) != t.size:
        raise RiskdietError(f"{t.size} grid points but {len(log_likelihood)} log-likelihoods")
    lo, hi = _check_bounds(bounds if bounds is not None else (t.min(), t.max()))
    if t.min() < lo or t.max() > hi:
        raise RiskdietError("grid points lie outside the bounds")
    order = np.argsort(t)
    thetas = t[order].tolist()
    values = [_as_log_likelihood(log_likelihood[k], thetas[n]) for n, k in enumerate(order)]
    if all(v is None for v in values):
        raise RiskdietError("the model cannot produce the records anywhere on the grid")
    best = max(v for v in values if v is not None)
    index = {th: n for n, th in enumerate(thetas)}

    def locate(t_in: float, t_out: float) -> float:
        v_in, v_out = values[index[t_in]], values[index[t_out]]
        if v_out is None:
            return t_in
        target = best - drop
        return t_in + (t_out - t_in) * (v_in - target) / (v_in - v_out)

    return _pieces(thetas, values, lo, hi, drop, locate)
