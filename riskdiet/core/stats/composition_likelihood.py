"""Likelihood of diet records given predicted shares, and AICc.

A *composition* is a set of counts of records by prey type (kills found, or
prey remains in scats) from one source. Given the model's predicted shares
pi_i of the records, a composition is multinomial, or Dirichlet-multinomial
when the records are overdispersed (packs or seasons differ more than chance
allows). Rate rows -- kills counted over a number of predator-days of
monitoring -- are Poisson.

Records of a prey whose predicted share is 0 have likelihood 0: the model
cannot produce them at those values. That is returned as a result that says
so (``value`` is ``None`` and ``cannot_produce`` names the categories), never
as minus infinity.

References
----------
.. [1] Agresti, A. (2002) Categorical Data Analysis, 2nd ed., Wiley
   (multinomial likelihood, section 1.2.2).
.. [2] Mosimann, J. E. (1962) On the compound multinomial distribution, the
   multivariate beta-distribution, and correlations among proportions.
   Biometrika 49, 65-82 (Dirichlet-multinomial).
.. [3] Hurvich, C. M. & Tsai, C.-L. (1989) Regression and time series model
   selection in small samples. Biometrika 76, 297-307 (AICc).
.. [4] Burnham, K. P. & Anderson, D. R. (2002) Model Selection and Multimodel
   Inference, 2nd ed., Springer (AICc, section 2.4).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.special import gammaln

from riskdiet.errors import RiskdietError

RISING_SUM_LIMIT = 100_000
"""Up to this many records, ln G(a + m) - ln G(a) is summed term by term [records]."""


@dataclass(frozen=True)
class LogLikelihood:
    """A log-likelihood, or the fact that the model cannot produce the records.

    Attributes
    ----------
    value : float or None
        Natural log-likelihood [dimensionless]; ``None`` when the likelihood
        is 0 (never minus infinity).
    cannot_produce : tuple of int
        Positions of the categories with records but a predicted share (or
        mean) of 0; empty when ``value`` is a number.
    """

    value: float | None
    cannot_produce: tuple[int, ...] = ()

    @property
    def possible(self) -> bool:
        """True when the model can produce the records (the likelihood is above 0)."""
        return self.value is not None

    def __add__(self, other: LogLikelihood) -> LogLikelihood:
        """Log-likelihood of independent parts; impossible if either part is."""
        if self.value is None or other.value is None:
            return LogLikelihood(None, tuple(sorted(set(self.cannot_produce)
                                                    | set(other.cannot_produce))))
        return LogLikelihood(self.value + other.value)


def total_log_likelihood(parts: Sequence[LogLikelihood]) -> LogLikelihood:
    """Sum of the log-likelihoods of independent compositions and rate rows.

    ``cannot_produce`` of the total lists positions as given by the parts; a
    caller that needs to know which composition failed should look at the parts.
    """
    total = LogLikelihood(0.0)
    for part in parts:
        total = total + part
    return total


def _counts(counts: Sequence[float] | np.ndarray) -> np.ndarray:
    x = np.asarray(counts, dtype=float)
    if x.ndim != 1 or x.size == 0:
        raise RiskdietError("counts must be a non-empty list of numbers")
    if not np.all(np.isfinite(x)) or np.any(x < 0) or np.any(x != np.floor(x)):
        raise RiskdietError(f"counts must be whole numbers >= 0, found {x.tolist()}")
    return x


def normalised_shares(shares: Sequence[float] | np.ndarray, size: int) -> np.ndarray:
    """Predicted shares scaled to sum to 1 (all zeros stay zeros).

    Parameters
    ----------
    shares : array_like, shape (size,)
        Non-negative finite predicted shares, or any weights proportional to
        them (e.g. d_i K_i, detection times kill rate).
    size : int
        Number of categories expected.

    Returns
    -------
    numpy.ndarray
        Shares summing to 1, or all zeros if every weight is 0.
    """
    p = np.asarray(shares, dtype=float)
    if p.shape != (size,):
        raise RiskdietError(f"expected {size} predicted shares, found shape {p.shape}")
    if not np.all(np.isfinite(p)) or np.any(p < 0):
        raise RiskdietError(f"predicted shares must be finite and >= 0, found {p.tolist()}")
    total = p.sum()
    return p / total if total > 0 else p


def _impossible(x: np.ndarray, p: np.ndarray) -> tuple[int, ...]:
    return tuple(int(i) for i in np.flatnonzero((x > 0) & (p == 0)))


def multinomial_log_likelihood(
    counts: Sequence[float] | np.ndarray,
    shares: Sequence[float] | np.ndarray,
) -> LogLikelihood:
    """Multinomial log-likelihood of one composition.

    ln L = ln n! - sum_i ln x_i! + sum_i x_i ln pi_i, with 0 ln 0 = 0.

    Parameters
    ----------
    counts : array_like, shape (k,)
        Records per category x_i (whole numbers >= 0) [records].
    shares : array_like, shape (k,)
        Predicted shares pi_i, or weights proportional to them [dimensionless].

    Returns
    -------
    LogLikelihood
        The log-likelihood, or ``value`` None with the categories that have
        records but a predicted share of 0.

    Raises
    ------
    riskdiet.errors.RiskdietError
        If a count is negative, fractional or not finite, or a share is
        negative or not finite, or the lengths differ.
    """
    x = _counts(counts)
    p = normalised_shares(shares, x.size)
    bad = _impossible(x, p)
    if bad:
        return LogLikelihood(None, bad)
    used = x > 0
    n = x.sum()
    value = gammaln(n + 1) - gammaln(x + 1).sum() + float(np.sum(x[used] * np.log(p[used])))
    return LogLikelihood(float(value))


def dirichlet_multinomial_log_likelihood(
    counts: Sequence[float] | np.ndarray,
    shares: Sequence[float] | np.ndarray,
    concentration: float,
) -> LogLikelihood:
    """Dirichlet-multinomial log-likelihood of one composition.

    With alpha_i = c pi_i and alpha_0 = c (Mosimann 1962):
    ln L = ln n! - sum ln x_i! + ln G(alpha_0) - ln G(n + alpha_0)
    + sum_i [ln G(x_i + alpha_i) - ln G(alpha_i)],
    where a category with pi_i = 0 and no records contributes nothing (the
    limit alpha_i -> 0). Small c means strong overdispersion; the
    intra-composition correlation is 1 / (1 + c), and c -> infinity gives
    the multinomial.

    Parameters
    ----------
    counts : array_like, shape (k,)
        Records per category [records].
    shares : array_like, shape (k,)
        Predicted shares, or weights proportional to them [dimensionless].
    concentration : float
        c = sum of the Dirichlet parameters, > 0 [dimensionless].

    Returns
    -------
    LogLikelihood
        As :func:`multinomial_log_likelihood`.

    Raises
    ------
    riskdiet.errors.RiskdietError
        On invalid counts or shares, or a concentration that is not a finite
        number above 0.
    """
    if isinstance(concentration, bool) or not isinstance(concentration, (int, float, np.number)) \
            or not math.isfinite(concentration) or concentration <= 0:
        raise RiskdietError(f"concentration must be a finite number above 0, "
                            f"found {concentration!r}")
    x = _counts(counts)
    p = normalised_shares(shares, x.size)
    bad = _impossible(x, p)
    if bad:
        return LogLikelihood(None, bad)
    if p.sum() == 0:  # no prey predicted and no records: the empty composition
        return LogLikelihood(0.0)
    keep = p > 0
    x, alpha = x[keep], concentration * p[keep]
    n = x.sum()
    value = (gammaln(n + 1) - gammaln(x + 1).sum() - _log_rising(concentration, n)
             + sum(_log_rising(a, m) for a, m in zip(alpha, x, strict=True)))
    return LogLikelihood(float(value))


def _log_rising(a: float, m: float) -> float:
    """ln G(a + m) - ln G(a) for whole m >= 0.

    As a sum of ln(a + j) for small m: the gammaln difference loses about
    a x 1e-16 to cancellation, which matters at large concentrations.
    """
    if m <= RISING_SUM_LIMIT:
        return float(np.sum(np.log(a + np.arange(m))))
    return float(gammaln(a + m) - gammaln(a))


def poisson_log_likelihood(count: float, mean: float) -> LogLikelihood:
    """Poisson log-likelihood of one rate row.

    ln L = k ln mu - mu - ln k!, with mu = (sum_i d_i K_i) x predator_days
    for kills counted over a monitoring period (MODEL.md section 10).

    Parameters
    ----------
    count : float
        Records k (a whole number >= 0) [records].
    mean : float
        Expected records mu >= 0 [records].

    Returns
    -------
    LogLikelihood
        The log-likelihood; ``value`` None (``cannot_produce`` = (0,)) when
        mu = 0 but k > 0.
    """
    k = _counts([count])[0]
    if isinstance(mean, bool) or not math.isfinite(mean) or mean < 0:
        raise RiskdietError(f"a Poisson mean must be a finite number >= 0, found {mean!r}")
    if mean == 0:
        return LogLikelihood(None, (0,)) if k > 0 else LogLikelihood(0.0)
    return LogLikelihood(float(k * math.log(mean) - mean - gammaln(k + 1)))


def poisson_rate_log_likelihood(count: float, rate_per_day: float,
                                predator_days: float) -> LogLikelihood:
    """Poisson log-likelihood of kills counted over a monitoring period.

    Parameters
    ----------
    count : float
        Kills found [kills].
    rate_per_day : float
        Predicted detectable kills per predator per day, sum_i d_i K_i
        [kills predator^-1 day^-1].
    predator_days : float
        Monitoring effort, > 0 [predator-days].

    Returns
    -------
    LogLikelihood
        See :func:`poisson_log_likelihood`.
    """
    if isinstance(predator_days, bool) or not math.isfinite(predator_days) or predator_days <= 0:
        raise RiskdietError(f"predator_days must be a finite number above 0, "
                            f"found {predator_days!r}")
    if not math.isfinite(rate_per_day) or rate_per_day < 0:
        raise RiskdietError(f"a kill rate must be a finite number >= 0, found {rate_per_day!r}")
    return poisson_log_likelihood(count, rate_per_day * predator_days)


def aicc(log_likelihood: LogLikelihood | float | None, parameters: int,
         observations: float) -> float | None:
    """Akaike's information criterion corrected for small samples.

    AICc = -2 ln L + 2 k + 2 k (k + 1) / (n - k - 1)
    (Hurvich & Tsai 1989; Burnham & Anderson 2002, section 2.4).

    Parameters
    ----------
    log_likelihood : LogLikelihood or float or None
        Maximised log-likelihood; None or an impossible LogLikelihood means
        the model cannot produce the records.
    parameters : int
        Number of fitted parameters k >= 0.
    observations : float
        Sample size n (for compositions: the number of records) [records].

    Returns
    -------
    float or None
        AICc [dimensionless]; ``None`` when the model cannot produce the
        records (AICc infinite: say so) or when n - k - 1 <= 0 (undefined).
    """
    if isinstance(log_likelihood, LogLikelihood):
        log_likelihood = log_likelihood.value
    if isinstance(parameters, bool) or not isinstance(parameters, (int, np.integer)) \
            or parameters < 0:
        raise RiskdietError(f"parameters must be a whole number >= 0, found {parameters!r}")
    if log_likelihood is None:
        return None
    if not math.isfinite(log_likelihood):
        raise RiskdietError(f"a log-likelihood must be finite, found {log_likelihood!r}")
    k, n = int(parameters), float(observations)
    if n - k - 1 <= 0:
        return None
    return -2.0 * log_likelihood + 2.0 * k + 2.0 * k * (k + 1) / (n - k - 1)
