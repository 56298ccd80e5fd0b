"""G-tests of diet records: fit to predicted shares, homogeneity across sources.

The G-test (log-likelihood ratio test) compares observed counts O with
expected counts E: G = 2 sum O ln(O / E), approximately chi-square. Two uses:

* **fit**: do the records agree with the model's predicted shares? Summed over
  compositions, df = sum over compositions of (categories - 1), minus the
  number of fitted inputs (MODEL.md section 10);
* **homogeneity**: do several compositions of one kind (packs, seasons,
  studies) agree well enough to pool? The R x C test of independence.

Williams' (1976) correction divides G by q > 1 so that its distribution is
closer to chi-square in small samples. When expected counts are small, a
parametric bootstrap p-value (simulate records from the fitted model, refit,
recompute G) does not rely on the chi-square approximation at all.

References
----------
.. [1] Williams, D. A. (1976) Improved likelihood ratio tests for complete
   contingency tables. Biometrika 63, 33-37.
.. [2] Sokal, R. R. & Rohlf, F. J. (1995) Biometry, 3rd ed., Freeman,
   chapter 17 (G-tests with Williams' correction). The formulas used are
   q = 1 + (a^2 - 1) / (6 n nu) for a goodness-of-fit test with a classes
   and q = 1 + (n sum 1/R_i - 1)(n sum 1/C_j - 1) / (6 n (r - 1)(c - 1)) for
   an r x c test of independence; the box numbers (17.1 for goodness of fit,
   17.6 for the r x c table) are cited from memory, not checked against the
   book. The formulas agree with secondary summaries of Williams (1976).
.. [3] Davison, A. C. & Hinkley, D. V. (1997) Bootstrap Methods and their
   Application. Cambridge University Press (Monte Carlo p-value
   (1 + #{t* >= t}) / (B + 1), section 4.2).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.stats import chi2

from riskdiet.errors import RiskdietError

SMALL_EXPECTED = 5.0
"""An expected count below this calls for the bootstrap p-value [records]
(common practice for chi-square approximations, MODEL.md section 10)."""

BOOTSTRAP_REPLICATES = 199
"""Refitted replicates of the parametric bootstrap (MODEL.md section 10)."""

TIE_TOLERANCE = 1e-9
"""A replicate's G within 1e-9 max(1, G) below the observed G counts as at least
as large [relative]: ties from rounding are resolved against the model."""


@dataclass(frozen=True)
class GTest:
    """Result of a G-test.

    Attributes
    ----------
    g : float
        G statistic without correction [dimensionless].
    df : int
        Degrees of freedom.
    p : float
        Chi-square p-value of ``g``.
    q : float
        Williams' correction factor (for several compositions: g / g_williams).
    g_williams : float
        G divided by Williams' factor.
    p_williams : float
        Chi-square p-value of ``g_williams``.
    smallest_expected : float
        Smallest expected count among the categories tested [records].
    """

    g: float
    df: int
    p: float
    q: float
    g_williams: float
    p_williams: float
    smallest_expected: float

    @property
    def small_expected(self) -> bool:
        """True when an expected count is below :data:`SMALL_EXPECTED`."""
        return self.smallest_expected < SMALL_EXPECTED


def _matrix_counts(x: Any, what: str) -> np.ndarray:
    a = np.asarray(x, dtype=float)
    if a.size == 0 or not np.all(np.isfinite(a)) or np.any(a < 0) or np.any(a != np.floor(a)):
        raise RiskdietError(f"{what} must be whole numbers >= 0, found {np.asarray(x).tolist()}")
    return a


def _g(observed: np.ndarray, expected: np.ndarray) -> float:
    used = observed > 0
    return float(2.0 * np.sum(observed[used] * np.log(observed[used] / expected[used])))


def _result(g: float, df: int, q: float, smallest: float) -> GTest:
    g = max(g, 0.0)  # rounding can leave -1e-15 where observed equals expected
    gw = g / q
    return GTest(g=g, df=df, p=float(chi2.sf(g, df)), q=q, g_williams=gw,
                 p_williams=float(chi2.sf(gw, df)), smallest_expected=smallest)


def g_test_of_fit(
    observed: Sequence[Sequence[float]] | Sequence[float] | np.ndarray,
    shares: Sequence[Sequence[float]] | Sequence[float] | np.ndarray,
    fitted_parameters: int = 0,
) -> GTest | None:
    """G-test of records against predicted shares, summed over compositions.

    For each composition c with n_c records and predicted shares pi
    (normalised), E = n_c pi and G_c = 2 sum O ln(O/E) over categories with
    records. Categories predicted at share 0 without records are not tested
    (they cannot differ); compositions without records are skipped.
    G = sum G_c, df = sum (a_c - 1) - fitted_parameters, where a_c is the
    number of categories tested. Williams' correction is applied per
    composition, q_c = 1 + (a_c^2 - 1) / (6 n_c (a_c - 1)) (Sokal & Rohlf
    1995, chapter 17, box from memory; Williams 1976), with nu = a_c - 1 as
    for a hypothesis fixed in advance: the correction is O(1/n) and this
    keeps it independent of how the fitted parameters are shared out.

    Parameters
    ----------
    observed : array_like, shape (k,) or list of such
        Records per category of one composition, or a list of compositions
        (each may have its own length) [records].
    shares : array_like, same layout as ``observed``
        Predicted shares (or weights proportional to them) [dimensionless].
    fitted_parameters : int
        Inputs fitted to these records (reduces df).

    Returns
    -------
    GTest or None
        ``None`` when df <= 0 (no test possible, MODEL.md section 10).

    Raises
    ------
    riskdiet.errors.RiskdietError
        If records fall in a category predicted at share 0 (the model cannot
        produce them: check the likelihood first), or on invalid counts or
        shares.
    """
    obs_list, share_list = _compositions(observed, shares)
    if isinstance(fitted_parameters, bool) or not isinstance(fitted_parameters, (int, np.integer)) \
            or fitted_parameters < 0:
        raise RiskdietError(f"fitted_parameters must be a whole number >= 0, "
                            f"found {fitted_parameters!r}")
    g_total = gw_total = 0.0
    df = 0
    smallest = math.inf
    for i, (o, w) in enumerate(zip(obs_list, share_list, strict=True)):
        o = _matrix_counts(o, f"composition {i + 1}")
        w = np.asarray(w, dtype=float)
        if w.shape != o.shape or not np.all(np.isfinite(w)) or np.any(w < 0):
            raise RiskdietError(f"composition {i + 1}: predicted shares must be {o.size} finite "
                                f"numbers >= 0, found {np.asarray(w).tolist()}")
        n = o.sum()
        if n == 0:
            continue
        if w.sum() == 0 or np.any((o > 0) & (w == 0)):
            raise RiskdietError(f"composition {i + 1}: the model cannot produce these records "
                                "(records of a prey predicted at share 0)")
        keep = w > 0
        o, e = o[keep], n * w[keep] / w.sum()
        a = o.size
        g = _g(o, e)
        q = 1.0 + (a * a - 1.0) / (6.0 * n * (a - 1)) if a > 1 else 1.0
        g_total += g
        gw_total += g / q
        df += a - 1
        smallest = min(smallest, float(e.min()))
    df -= int(fitted_parameters)
    if df <= 0:
        return None
    g_total, gw_total = max(g_total, 0.0), max(gw_total, 0.0)
    # g_williams is the sum of per-composition corrected G's; q reports the overall factor
    return GTest(g=g_total, df=df, p=float(chi2.sf(g_total, df)),
                 q=g_total / gw_total if gw_total > 0 else 1.0, g_williams=gw_total,
                 p_williams=float(chi2.sf(gw_total, df)), smallest_expected=smallest)


def _compositions(observed: Any, shares: Any) -> tuple[list, list]:
    if len(observed) == 0:
        raise RiskdietError("no compositions to test")
    nested = np.ndim(observed[0]) == 1 if not isinstance(observed, np.ndarray) \
        else observed.ndim == 2
    if nested:
        if len(shares) != len(observed):
            raise RiskdietError(f"{len(observed)} compositions but {len(shares)} sets of shares")
        return list(observed), list(shares)
    return [observed], [shares]


def homogeneity_g_test(table: Sequence[Sequence[float]] | np.ndarray) -> GTest | None:
    """G-test of homogeneity (independence) of several compositions.

    Rows are compositions (sources), columns categories (prey). Rows and
    columns without records are left out. E_ij = R_i C_j / n,
    G = 2 sum O ln(O/E), df = (r - 1)(c - 1), and Williams' factor
    q = 1 + (n sum_i 1/R_i - 1)(n sum_j 1/C_j - 1) / (6 n df)
    (Williams 1976; Sokal & Rohlf 1995, chapter 17, box from memory).

    Parameters
    ----------
    table : array_like, shape (r, c)
        Records per composition and category [records].

    Returns
    -------
    GTest or None
        ``None`` when fewer than two compositions or two categories have
        records (df = 0: nothing to compare).
    """
    o = _matrix_counts(table, "a table of records")
    if o.ndim != 2:
        raise RiskdietError(f"a table of records must have rows and columns, found shape {o.shape}")
    o = o[o.sum(axis=1) > 0][:, o.sum(axis=0) > 0]
    r, c = o.shape
    df = (r - 1) * (c - 1)
    if df <= 0:
        return None
    rows, cols = o.sum(axis=1), o.sum(axis=0)
    n = o.sum()
    e = np.outer(rows, cols) / n
    q = 1.0 + (n * np.sum(1.0 / rows) - 1.0) * (n * np.sum(1.0 / cols) - 1.0) / (6.0 * n * df)
    return _result(_g(o, e), df, float(q), float(e.min()))


@dataclass(frozen=True)
class BootstrapP:
    """A Monte Carlo p-value.

    Attributes
    ----------
    p : float
        (1 + at_least) / (1 + replicates) [dimensionless].
    replicates : int
        Replicates made.
    at_least : int
        Replicates whose statistic was at least the observed one (including
        replicates the refitted model could not produce, whose G is infinite).
    cannot_produce : int
        Replicates the refitted model could not produce.
    """

    p: float
    replicates: int
    at_least: int
    cannot_produce: int


def bootstrap_p_value(observed: float, replicate_statistics: Sequence[float | None]) -> BootstrapP:
    """Monte Carlo p-value from replicate statistics (Davison & Hinkley 1997, section 4.2).

    p = (1 + #{t* >= t}) / (B + 1). A replicate given as ``None`` (the refitted
    model cannot produce the simulated records: G infinite) counts as at least
    as large as the observed statistic; so does one within
    :data:`TIE_TOLERANCE` below it.

    Parameters
    ----------
    observed : float
        Observed statistic t (finite).
    replicate_statistics : sequence of float or None
        Statistics t* of B >= 1 replicates.

    Returns
    -------
    BootstrapP
    """
    if isinstance(observed, bool) or not math.isfinite(observed):
        raise RiskdietError(f"the observed statistic must be finite, found {observed!r}")
    stats = list(replicate_statistics)
    if not stats:
        raise RiskdietError("a bootstrap p-value needs at least one replicate")
    floor = observed - TIE_TOLERANCE * max(1.0, abs(observed))
    impossible = sum(1 for t in stats if t is None)
    finite = [float(t) for t in stats if t is not None]
    if not all(math.isfinite(t) for t in finite):
        raise RiskdietError("a replicate statistic is not finite; give None for a replicate "
                            "the model cannot produce")
    at_least = impossible + sum(1 for t in finite if t >= floor)
    return BootstrapP(p=(1 + at_least) / (1 + len(stats)), replicates=len(stats),
                      at_least=at_least, cannot_produce=impossible)


def replicate_generators(seed: int, replicates: int) -> list[np.random.Generator]:
    """Independent random generators, one per replicate, from one seed.

    Spawned from ``numpy.random.SeedSequence(seed)``, so replicate i gets the
    same numbers whichever worker computes it and in whatever order.
    """
    if isinstance(replicates, bool) or not isinstance(replicates, (int, np.integer)) \
            or replicates < 1:
        raise RiskdietError(f"replicates must be a whole number >= 1, found {replicates!r}")
    return [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(int(replicates))]


def multinomial_simulator(
    shares: Sequence[Sequence[float]],
    totals: Sequence[int],
) -> Callable[[np.random.Generator], list[np.ndarray]]:
    """A simulator of compositions under fitted shares, with the observed totals.

    Parameters
    ----------
    shares : list of array_like
        Fitted predicted shares per composition (or proportional weights).
    totals : list of int
        Records per composition (kept fixed, as the records' totals are
        fixed by the sampling effort).

    Returns
    -------
    callable
        ``simulate(rng)`` -> list of count arrays, one per composition.
    """
    if len(shares) != len(totals):
        raise RiskdietError(f"{len(shares)} sets of shares but {len(totals)} totals")
    probs = []
    for w in shares:
        w = np.asarray(w, dtype=float)
        if not np.all(np.isfinite(w)) or np.any(w < 0) or w.sum() <= 0:
            raise RiskdietError(f"shares must be finite, >= 0 and not all 0, found {w.tolist()}")
        probs.append(w / w.sum())
    sizes = [int(t) for t in totals]

    def simulate(rng: np.random.Generator) -> list[np.ndarray]:
        return [rng.multinomial(n, p) for n, p in zip(sizes, probs, strict=True)]

    return simulate


def parametric_bootstrap_p(
    observed: float,
    simulate: Callable[[np.random.Generator], Any],
    refit: Callable[[Any], float | None],
    replicates: int = BOOTSTRAP_REPLICATES,
    seed: int = 1,
) -> BootstrapP:
    """Parametric bootstrap p-value of a goodness-of-fit statistic.

    For each of B replicates: simulate records from the fitted model, refit
    the model to them and recompute the statistic (``refit``); then
    p = (1 + #{G* >= G}) / (B + 1) (Davison & Hinkley 1997, section 4.2).

    Parameters
    ----------
    observed : float
        Statistic of the actual records (e.g. G of :func:`g_test_of_fit`).
    simulate : callable
        ``simulate(rng)`` -> simulated records (e.g. from
        :func:`multinomial_simulator`).
    refit : callable
        ``refit(records)`` -> the statistic after refitting, or ``None`` when
        the refitted model cannot produce those records.
    replicates : int
        B (default 199, MODEL.md section 10).
    seed : int
        Seed; replicate i uses generator i of :func:`replicate_generators`.

    Returns
    -------
    BootstrapP
    """
    statistics = []
    for rng in replicate_generators(seed, replicates):
        t = refit(simulate(rng))
        statistics.append(None if t is None else float(t))
    return bootstrap_p_value(observed, statistics)
