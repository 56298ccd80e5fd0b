"""Words for probabilities, and paired better/same/worse comparisons.

Probabilities are put in words after the IPCC AR5 guidance on consistent
treatment of uncertainties (Mastrandrea et al. 2010), using the terms and
limits of MODEL.md section 9. The IPCC ranges overlap (``likely`` is 66-100 %,
``very likely`` 90-100 %); the most specific term that applies is used, and the
number is always given with the word.

References
----------
.. [1] Mastrandrea, M. D., Field, C. B., Stocker, T. F., Edenhofer, O., Ebi,
   K. L., Frame, D. J., Held, H., Kriegler, E., Mach, K. J., Matschoss, P. R.,
   Plattner, G.-K., Yohe, G. W. & Zwiers, F. W. (2010) Guidance Note for Lead
   Authors of the IPCC Fifth Assessment Report on Consistent Treatment of
   Uncertainties. Intergovernmental Panel on Climate Change.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from riskdiet.errors import RiskdietError

# (word, lower limit, limit included?) from the most to the least likely; the first
# whose limit p passes is the most specific term (MODEL.md section 9)
SCALE: tuple[tuple[str, float, bool], ...] = (
    ("virtually certain", 0.99, True),
    ("very likely", 0.90, True),
    ("likely", 0.66, True),
    ("about as likely as not", 0.33, False),
    ("unlikely", 0.10, False),
    ("very unlikely", 0.01, False),
    ("exceptionally unlikely", 0.0, True),
)
"""The likelihood scale: a term applies when p >= limit (or p > limit where the
limit is not included)."""

EQUAL_TOLERANCE = 1e-9
"""Two outcomes are the same when they differ by at most 1e-9 max(1, |x|) [relative]."""

BETTER, SAME, WORSE = "better", "same", "worse"


def _check_probability(p: float) -> float:
    if isinstance(p, bool) or not isinstance(p, (int, float, np.integer, np.floating)) \
            or not math.isfinite(p) or not 0.0 <= p <= 1.0:
        raise RiskdietError(f"a probability must be a number from 0 to 1, found {p!r}")
    return float(p)


def probability_word(p: float) -> str:
    """The most specific likelihood term for a probability.

    Parameters
    ----------
    p : float
        Probability in [0, 1] [dimensionless].

    Returns
    -------
    str
        ``virtually certain`` (p >= 0.99), ``very likely`` (>= 0.90),
        ``likely`` (>= 0.66), ``about as likely as not`` (> 0.33),
        ``unlikely`` (> 0.10), ``very unlikely`` (> 0.01) or
        ``exceptionally unlikely`` (<= 0.01).

    Raises
    ------
    riskdiet.errors.RiskdietError
        If p is not a finite number in [0, 1].
    """
    p = _check_probability(p)
    for word, limit, included in SCALE:
        if p > limit or (included and p == limit):
            return word
    raise AssertionError("unreachable: the last term applies to every p >= 0")


def format_probability(p: float) -> str:
    """The number shown beside the word: two decimals, more where needed.

    More decimals are used (up to six) while the rounded number would fall
    under a different term than p itself (0.655 is "about as likely as not",
    but 0.66 would be "likely") or would read 0 or 1 when p is neither.

    Parameters
    ----------
    p : float
        Probability in [0, 1].

    Returns
    -------
    str
        E.g. ``0.93``, ``0.004``, ``0.655``; ``< 0.000001`` or ``> 0.999999``
        when even six decimals are not enough.
    """
    p = _check_probability(p)
    word = probability_word(p)
    for decimals in range(2, 7):
        shown = round(p, decimals)
        if probability_word(shown) == word and (0 < shown < 1 or shown == p):
            return f"{shown:.{decimals}f}"
    return "< 0.000001" if p < 0.5 else "> 0.999999"


def describe_probability(p: float) -> str:
    """A probability in words with its number, e.g. ``very likely (p = 0.93)``.

    Parameters
    ----------
    p : float
        Probability in [0, 1].

    Returns
    -------
    str
        The term of :func:`probability_word` and the number of
        :func:`format_probability`.
    """
    shown = format_probability(p)
    relation = "" if shown[0] in "<>" else "= "
    return f"{probability_word(p)} (p {relation}{shown})"


def compare_paired(
    scenario: Sequence[float] | np.ndarray,
    baseline: Sequence[float] | np.ndarray,
    higher_is_better: bool,
) -> np.ndarray:
    """Better, same or worse than baseline, draw by draw.

    The scenario is better in a draw when it beats the baseline's value x in
    that draw by more than 1e-9 max(1, |x|), worse when the baseline beats it
    by more than that, and the same otherwise (MODEL.md section 9).

    Parameters
    ----------
    scenario, baseline : array_like, shape (n,)
        The goal outcome in each draw for the scenario and for the baseline
        (paired: the same draw of the inputs) [outcome's unit].
    higher_is_better : bool
        True for ``higher:...`` goals, False for ``fewer:...`` goals.

    Returns
    -------
    numpy.ndarray of str, shape (n,)
        ``"better"``, ``"same"`` or ``"worse"`` per draw.

    Raises
    ------
    riskdiet.errors.RiskdietError
        If the arrays differ in shape or hold a value that is not finite.
    """
    s = np.asarray(scenario, dtype=float)
    b = np.asarray(baseline, dtype=float)
    if s.shape != b.shape or s.ndim != 1:
        raise RiskdietError(f"paired comparison needs two equal 1-D arrays, found shapes "
                            f"{s.shape} and {b.shape}")
    if not (np.all(np.isfinite(s)) and np.all(np.isfinite(b))):
        raise RiskdietError("paired comparison: an outcome is not a finite number")
    gain = s - b if higher_is_better else b - s
    tolerance = EQUAL_TOLERANCE * np.maximum(1.0, np.abs(b))
    return np.where(gain > tolerance, BETTER, np.where(gain < -tolerance, WORSE, SAME))


@dataclass(frozen=True)
class PairedProbabilities:
    """Shares of paired draws in which a scenario does better, the same, or worse.

    Attributes
    ----------
    better, same, worse : float
        Shares of draws [dimensionless]; they sum to 1.
    draws : int
        Number of paired draws.
    """

    better: float
    same: float
    worse: float
    draws: int


def paired_probabilities(
    scenario: Sequence[float] | np.ndarray,
    baseline: Sequence[float] | np.ndarray,
    higher_is_better: bool,
) -> PairedProbabilities:
    """Probabilities that a scenario does better than, the same as, or worse than baseline.

    Parameters
    ----------
    scenario, baseline : array_like, shape (n,)
        Paired goal outcomes, n >= 1 (see :func:`compare_paired`).
    higher_is_better : bool
        Direction of the goal.

    Returns
    -------
    PairedProbabilities
        Shares of the n draws.
    """
    verdicts = compare_paired(scenario, baseline, higher_is_better)
    n = verdicts.size
    if n == 0:
        raise RiskdietError("paired comparison needs at least one draw")
    better = int(np.count_nonzero(verdicts == BETTER))
    worse = int(np.count_nonzero(verdicts == WORSE))
    return PairedProbabilities(better=better / n, same=(n - better - worse) / n,
                               worse=worse / n, draws=n)
