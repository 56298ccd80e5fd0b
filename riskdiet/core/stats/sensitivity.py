"""Global sensitivity (Sobol indices) and one-at-a-time elasticities.

Sobol indices split an outcome's variance over the uncertain inputs: the
first-order index S_i is the share of the variance that input i explains on
its own, the total index S_Ti the share it explains with all its interactions.
Narrowing the range of the input with the largest total index narrows the
answer most ("measure this next").

The model is a vectorised function of the inputs: it takes an array of shape
(d, m) -- one column per evaluation -- and returns (s, m) outcomes (or (m,) for
one outcome). It is called once with every evaluation the estimator needs,
N (d + 2) columns, so a batched solver can take them all together.

References
----------
.. [1] Sobol', I. M. (2001) Global sensitivity indices for nonlinear
   mathematical models and their Monte Carlo estimates. Mathematics and
   Computers in Simulation 55, 271-280.
.. [2] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M. &
   Tarantola, S. (2010) Variance based sensitivity analysis of model output.
   Design and estimator for the total sensitivity index. Computer Physics
   Communications 181, 259-270 (estimators of ``scipy.stats.sobol_indices``).
.. [3] Efron, B. & Tibshirani, R. J. (1993) An Introduction to the Bootstrap.
   Chapman & Hall (BCa intervals, ``scipy.stats.bootstrap``).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Protocol

import numpy as np
from scipy.stats import DegenerateDataWarning, bootstrap, qmc, sobol_indices

from riskdiet.errors import RiskdietError

CONSTANT_TOLERANCE = 1e-9
"""An outcome whose evaluations all lie within 1e-9 max(1, |y|) of each other is
constant [dimensionless, relative]: it has no variance to split."""

ELASTICITY_STEP = 0.01
"""Relative step of the one-at-a-time elasticities: x (1 +/- 0.01) [dimensionless]."""

VectorisedModel = Callable[[np.ndarray], np.ndarray]


class HasPpf(Protocol):
    """Anything with an inverse CDF, e.g. :class:`riskdiet.core.stats.ranges.Range`."""

    def ppf(self, u: np.ndarray) -> np.ndarray: ...  # pragma: no cover


@dataclass(frozen=True)
class SobolIndex:
    """First-order and total Sobol indices of one input on one outcome.

    Attributes
    ----------
    input : str
        Name of the uncertain input.
    first, first_low, first_high : float
        First-order index and its bootstrap interval [dimensionless].
    total, total_low, total_high : float
        Total index and its bootstrap interval [dimensionless].
    """

    input: str
    first: float
    first_low: float
    first_high: float
    total: float
    total_low: float
    total_high: float

    @property
    def first_about_zero(self) -> bool:
        """True when the first-order interval reaches 0 (shown as "≈ 0")."""
        return self.first_low <= 0.0

    @property
    def total_about_zero(self) -> bool:
        """True when the total-index interval reaches 0 (shown as "≈ 0")."""
        return self.total_low <= 0.0


@dataclass(frozen=True)
class OutcomeSensitivity:
    """Sobol indices of every input on one outcome.

    Attributes
    ----------
    outcome : str
        Name of the outcome.
    constant : bool
        The outcome did not vary over the draws; ``indices`` is then empty.
    indices : tuple of SobolIndex
        One per input, in input order.
    """

    outcome: str
    constant: bool
    indices: tuple[SobolIndex, ...]

    def ranking(self) -> tuple[str, ...]:
        """Inputs by total index, largest first (ties in input order); empty if constant."""
        order = sorted(range(len(self.indices)), key=lambda i: (-self.indices[i].total, i))
        return tuple(self.indices[i].input for i in order)


@dataclass(frozen=True)
class SobolAnalysis:
    """Result of :func:`sobol_analysis`.

    Attributes
    ----------
    n : int
        Base sample size actually used (a power of two).
    evaluations : int
        Model evaluations made, n (d + 2).
    seed : int
        Seed of the Sobol' design and of the bootstrap.
    confidence : float
        Confidence level of the intervals.
    outcomes : tuple of OutcomeSensitivity
        One per outcome, in the model's output order.
    """

    n: int
    evaluations: int
    seed: int
    confidence: float
    outcomes: tuple[OutcomeSensitivity, ...]

    def outcome(self, name: str) -> OutcomeSensitivity:
        """The sensitivity of the outcome called ``name``."""
        for o in self.outcomes:
            if o.outcome == name:
                return o
        raise RiskdietError(f"no outcome called {name!r}; outcomes are "
                            + ", ".join(o.outcome for o in self.outcomes))


def power_of_two_at_least(n: int) -> int:
    """The smallest power of two not below n (n >= 1); Sobol' points need one."""
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise RiskdietError(f"sample size must be a whole number >= 1, found {n!r}")
    return 1 << (int(n) - 1).bit_length()


def _saltelli(f_a: np.ndarray, f_b: np.ndarray, f_ab: np.ndarray) -> np.ndarray:
    """Saltelli et al. (2010) Table 2 (b) and (f); last axis = draws. Returns (2, ..., d)."""
    var = np.var(np.concatenate([f_a, f_b], axis=-1), axis=-1)
    first = np.mean(f_b * (f_ab - f_a), axis=-1) / var
    total = 0.5 * np.mean((f_a - f_ab) ** 2, axis=-1) / var
    return np.stack([first, total])


def sobol_analysis(
    func: VectorisedModel,
    ranges: Sequence[HasPpf],
    n: int,
    seed: int,
    *,
    inputs: Sequence[str] | None = None,
    outcomes: Sequence[str] | None = None,
    confidence: float = 0.95,
    resamples: int = 999,
    method: str = "BCa",
) -> SobolAnalysis:
    """Sobol first-order and total indices with bootstrap intervals.

    Parameters
    ----------
    func : callable
        Vectorised model: ``func(x)`` with x of shape (d, m) [inputs' units]
        returns outcomes of shape (s, m) or (m,).
    ranges : sequence
        One distribution per input with a ``ppf`` method (e.g.
        :class:`riskdiet.core.stats.ranges.Range`).
    n : int
        Requested base sample size; rounded up to a power of two, the model
        is evaluated n (d + 2) times.
    seed : int
        Seed of the scrambled Sobol' design and of the bootstrap; the same
        seed gives the same numbers.
    inputs, outcomes : sequence of str, optional
        Names; default ``x1..xd`` and ``y1..ys``.
    confidence : float
        Confidence level of the bootstrap intervals (default 0.95).
    resamples : int
        Bootstrap resamples (default 999).
    method : str
        ``BCa`` (default, as ``scipy.stats.sobol_indices(...).bootstrap``) or
        ``percentile``.

    Returns
    -------
    SobolAnalysis
        Indices per outcome; an outcome that does not vary (see
        :data:`CONSTANT_TOLERANCE`) is marked constant and has no indices.

    Raises
    ------
    riskdiet.errors.RiskdietError
        If the model returns a wrong shape or a value that is not finite
        (naming the inputs of the first such evaluation), or an argument is
        invalid.

    Notes
    -----
    The design and the point estimates are those of
    ``scipy.stats.sobol_indices`` (Saltelli et al. 2010 estimators, outputs
    centred on their mean); the model is evaluated here once so that the
    bootstrap can be seeded (scipy's own ``bootstrap`` method draws unseeded).
    A bootstrap interval that comes out undefined because every resample gives
    the same index (an input with no effect at all) is that single value.
    """
    d = len(ranges)
    if d < 1:
        raise RiskdietError("sobol_analysis: at least one uncertain input is needed")
    if not 0 < confidence < 1:
        raise RiskdietError(f"sobol_analysis: confidence must lie in (0, 1), found {confidence!r}")
    names = list(inputs) if inputs is not None else [f"x{i + 1}" for i in range(d)]
    if len(names) != d:
        raise RiskdietError(f"sobol_analysis: {d} ranges but {len(names)} input names")
    n = max(power_of_two_at_least(n), 2)

    # same layout as scipy.stats._sensitivity_analysis.sample_A_B: one 2d-dim Sobol' design
    a_b = qmc.Sobol(d=2 * d, rng=seed, bits=64).random(n).T.reshape(2, d, n)
    for j, dist in enumerate(ranges):
        a_b[:, j] = dist.ppf(a_b[:, j])
    a, b = a_b
    ab = np.tile(a, (d, 1, 1))
    ab[np.arange(d), np.arange(d)] = b  # page i: A with row i taken from B
    x = np.concatenate([a, b, *ab], axis=1)  # (d, n (d + 2))

    y = _evaluate(func, x, names)
    s = y.shape[0]
    out_names = list(outcomes) if outcomes is not None else [f"y{k + 1}" for k in range(s)]
    if len(out_names) != s:
        raise RiskdietError(f"sobol_analysis: the model returned {s} outcomes but "
                            f"{len(out_names)} outcome names were given")

    span = y.max(axis=1) - y.min(axis=1)
    scale = np.maximum(1.0, np.abs(y).max(axis=1))
    constant = span <= CONSTANT_TOLERANCE * scale
    varying = np.flatnonzero(~constant)

    results: dict[int, OutcomeSensitivity] = {
        int(k): OutcomeSensitivity(out_names[k], True, ()) for k in np.flatnonzero(constant)
    }
    if varying.size:
        f_a = y[varying, :n]
        f_b = y[varying, n:2 * n]
        f_ab = np.moveaxis(y[varying, 2 * n:].reshape(varying.size, d, n), 1, 0)  # (d, s', n)
        res = sobol_indices(func={"f_A": f_a, "f_B": f_b, "f_AB": f_ab}, n=n)
        first = np.reshape(res.first_order, (varying.size, d))
        total = np.reshape(res.total_order, (varying.size, d))
        low, high = _bootstrap_intervals(f_a, f_b, f_ab, seed, confidence, resamples, method)
        for row, k in enumerate(varying):
            indices = tuple(
                SobolIndex(
                    input=names[j],
                    first=float(first[row, j]),
                    first_low=float(low[0, row, j]),
                    first_high=float(high[0, row, j]),
                    total=float(total[row, j]),
                    total_low=float(low[1, row, j]),
                    total_high=float(high[1, row, j]),
                )
                for j in range(d)
            )
            results[int(k)] = OutcomeSensitivity(out_names[k], False, indices)
    return SobolAnalysis(
        n=n,
        evaluations=x.shape[1],
        seed=seed,
        confidence=confidence,
        outcomes=tuple(results[k] for k in range(s)),
    )


def _evaluate(func: VectorisedModel, x: np.ndarray, names: Sequence[str]) -> np.ndarray:
    y = np.asarray(func(x.copy()), dtype=float)
    if y.ndim == 1:
        y = y[np.newaxis, :]
    if y.ndim != 2 or y.shape[1] != x.shape[1]:
        raise RiskdietError(f"the model must return shape (outcomes, {x.shape[1]}) for "
                            f"{x.shape[1]} evaluations; it returned {np.shape(y)}")
    bad = ~np.isfinite(y)
    if bad.any():
        column = int(np.flatnonzero(bad.any(axis=0))[0])
        values = ", ".join(f"{name} = {x[j, column]:.6g}" for j, name in enumerate(names))
        raise RiskdietError(f"the model gave no finite result for the draw {values}")
    return y


def _bootstrap_intervals(
    f_a: np.ndarray,
    f_b: np.ndarray,
    f_ab: np.ndarray,
    seed: int,
    confidence: float,
    resamples: int,
    method: str,
) -> tuple[np.ndarray, np.ndarray]:
    """Bootstrap intervals of (first, total), each of shape (2, s, d)."""
    mean = np.mean(np.concatenate([f_a, f_b], axis=-1), axis=-1, keepdims=True)
    f_a, f_b, f_ab = f_a - mean, f_b - mean, f_ab - mean
    f_ab_t = np.moveaxis(f_ab, 0, 1)  # (s, d, n): outcome, input, draw

    def statistic(idx: np.ndarray, axis: int = -1) -> np.ndarray:
        # idx: (..., n) resampled draw numbers; result (2, s, d, ...)
        fa = f_a[:, idx][:, np.newaxis]  # (s, 1, ..., n)
        fb = f_b[:, idx][:, np.newaxis]
        fab = f_ab_t[:, :, idx]  # (s, d, ..., n)
        return _saltelli(fa, fb, fab)

    n = f_a.shape[1]
    batch = max(1, int(2e7 // max(1, f_ab.size)))  # keeps each resampled block near 160 MB
    # an input with no effect gives the same index in every resample: BCa is then undefined
    # (and warns); such intervals are filled in from the bootstrap distribution below
    with np.errstate(divide="ignore", invalid="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", DegenerateDataWarning)
        res = bootstrap((np.arange(n),), statistic, vectorized=True, method=method,
                        n_resamples=resamples, confidence_level=confidence, rng=seed,
                        batch=batch)
    low = np.array(res.confidence_interval.low, dtype=float)
    high = np.array(res.confidence_interval.high, dtype=float)
    undefined = ~(np.isfinite(low) & np.isfinite(high))
    if undefined.any():
        dist = res.bootstrap_distribution  # (2, s, d, resamples)
        if not np.all(np.isfinite(dist[undefined])):
            raise RiskdietError("the bootstrap of the Sobol indices gave no finite interval")
        alpha = (1 - confidence) / 2
        low[undefined] = np.quantile(dist[undefined], alpha, axis=-1)
        high[undefined] = np.quantile(dist[undefined], 1 - alpha, axis=-1)
    return low, high


def elasticities(
    func: VectorisedModel,
    x0: Sequence[float],
    step: float = ELASTICITY_STEP,
) -> tuple[float | None, ...]:
    """One-at-a-time elasticities d ln y / d ln x_j at x0 by central difference.

    Each input in turn is multiplied by (1 + step) and (1 - step), the others
    held at x0, and

        e_j = [ln |y(x_j (1 + step))| - ln |y(x_j (1 - step))|]
              / [ln(1 + step) - ln(1 - step)],

    which is exact for a power law y = c x_j^k. All 2d evaluations are made in
    one call of the vectorised model.

    Parameters
    ----------
    func : callable
        Vectorised model: x of shape (d, m) [inputs' units] -> y of shape (m,)
        (or (1, m)), one outcome.
    x0 : sequence of float
        The point (e.g. the baseline) [inputs' units].
    step : float
        Relative step, in (0, 1) (default 0.01, i.e. +/- 1 %).

    Returns
    -------
    tuple of (float or None)
        One elasticity per input [dimensionless]; ``None`` where it is
        undefined: x0_j = 0 (no relative change), or y is 0 or changes sign
        across the two evaluations (no logarithm).

    Raises
    ------
    riskdiet.errors.RiskdietError
        If the model returns a wrong shape or a value that is not finite, or
        the step is not in (0, 1).

    References
    ----------
    .. [1] Saltelli, A. et al. (2008) Global Sensitivity Analysis: The Primer.
       Wiley (one-at-a-time screening, chapter 1).
    """
    if not (isinstance(step, (int, float)) and 0 < step < 1):
        raise RiskdietError(f"elasticities: step must lie in (0, 1), found {step!r}")
    x0 = np.asarray(x0, dtype=float)
    if x0.ndim != 1 or x0.size == 0 or not np.all(np.isfinite(x0)):
        raise RiskdietError("elasticities: x0 must be a non-empty list of finite numbers")
    d = x0.size
    x = np.tile(x0[:, np.newaxis], (1, 2 * d))
    j = np.arange(d)
    x[j, 2 * j] *= 1 + step
    x[j, 2 * j + 1] *= 1 - step
    y = _evaluate(func, x, [f"x{i + 1}" for i in range(d)])
    if y.shape[0] != 1:
        raise RiskdietError(f"elasticities: the model must return one outcome, not {y.shape[0]}")
    up, down = y[0, 0::2], y[0, 1::2]
    denominator = math.log1p(step) - math.log1p(-step)
    result: list[float | None] = []
    for k in range(d):
        if x0[k] == 0 or up[k] == 0 or down[k] == 0 or (up[k] > 0) != (down[k] > 0):
            result.append(None)
        else:
            result.append(float((math.log(abs(up[k])) - math.log(abs(down[k]))) / denominator))
    return tuple(result)
