"""Distributions of an uncertain input's range, and Latin hypercube draws.

A range gives an input's ``low`` and ``high`` and a ``shape``:

* ``uniform`` -- every value in [low, high] equally likely;
* ``triangular`` -- density rising linearly from ``low`` to ``mode`` and
  falling linearly to ``high``;
* ``loguniform`` -- the logarithm is uniform (low > 0), for inputs known to
  within a factor rather than a difference.

Draws are made on the unit interval (Latin hypercube sampling, McKay, Beckman
& Conover 1979) and mapped to values by each range's inverse cumulative
distribution function, so one design serves every shape and every scenario
(common random numbers).

References
----------
.. [1] McKay, M. D., Beckman, R. J. & Conover, W. J. (1979) A comparison of
   three methods for selecting values of input variables in the analysis of
   output from a computer code. Technometrics 21, 239-245.
.. [2] Johnson, N. L., Kotz, S. & Balakrishnan, N. (1995) Continuous
   Univariate Distributions, vol. 2, 2nd ed., Wiley (triangular
   distribution, chapter 26).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.stats import qmc

from riskdiet.errors import Problem, RiskdietError, StudyError, describe

SHAPES = ("uniform", "triangular", "loguniform")
"""Shapes a range may take, as written in a study."""

ROUNDING_SLACK = 1e-9
"""Added before flooring in :func:`round_half_up`, so that 2.4999999999 from
floating-point arithmetic on a typed 2.5 still rounds up [dimensionless]."""


@dataclass(frozen=True)
class Range:
    """The range of one uncertain input and its shape.

    Parameters
    ----------
    low, high : float
        Ends of the range, in the input's own unit; ``low <= high``.
    shape : str
        One of :data:`SHAPES`.
    mode : float, optional
        Most likely value [input's unit]; required for ``triangular`` (and
        only allowed there), ``low <= mode <= high``.
    where : str
        Where the range was given (e.g. ``Uncertainty!C4``), used to name
        the place in any error.

    Raises
    ------
    riskdiet.errors.StudyError
        Listing every problem at once: a non-finite end, ``low > high``, an
        unknown shape, a missing or misplaced mode, or a loguniform range
        that does not lie above 0.
    """

    low: float
    high: float
    shape: str = "uniform"
    mode: float | None = None
    where: str = "range"

    def __post_init__(self) -> None:
        problems = _range_problems(self)
        if problems:
            raise StudyError(problems)

    def ppf(self, u: np.ndarray | float) -> np.ndarray:
        """Map unit-interval draws to values of the input (inverse CDF).

        Parameters
        ----------
        u : array_like
            Draws in [0, 1] [dimensionless], any shape.

        Returns
        -------
        numpy.ndarray
            Values [input's unit], same shape as ``u``, inside [low, high].

        Raises
        ------
        riskdiet.errors.RiskdietError
            If a draw is not a finite number in [0, 1].
        """
        return inverse_cdf(u, self.shape, self.low, self.high, self.mode)


def _is_finite_number(value: object) -> bool:
    return (not isinstance(value, bool) and isinstance(value, (int, float, np.integer, np.floating))
            and math.isfinite(value))


def _range_problems(r: Range) -> list[Problem]:
    problems: list[Problem] = []
    ends_ok = True
    for name in ("low", "high"):
        value = getattr(r, name)
        if not _is_finite_number(value):
            problems.append(Problem(f"{r.where} ({name})", "a finite number", describe(value)))
            ends_ok = False
    if r.shape not in SHAPES:
        problems.append(Problem(f"{r.where} (shape)", "one of " + ", ".join(SHAPES),
                                describe(r.shape)))
    if ends_ok and r.low > r.high:
        problems.append(Problem(f"{r.where} (low, high)", "low not above high",
                                f"low {r.low!r} above high {r.high!r}"))
    if r.shape == "loguniform" and ends_ok and r.low <= 0:
        problems.append(Problem(f"{r.where} (low)", "a low above 0 for a loguniform range",
                                describe(r.low)))
    if r.shape == "triangular":
        if not _is_finite_number(r.mode):
            problems.append(Problem(f"{r.where} (mode)", "a finite mode for a triangular range",
                                    describe(r.mode)))
        elif ends_ok and not r.low <= r.mode <= r.high:
            problems.append(Problem(f"{r.where} (mode)",
                                    f"a mode from {r.low!r} to {r.high!r}", describe(r.mode)))
    elif r.mode is not None:
        problems.append(Problem(f"{r.where} (mode)",
                                f"no mode for a {r.shape} range (only triangular has one)",
                                describe(r.mode)))
    return problems


def inverse_cdf(
    u: np.ndarray | float,
    shape: str,
    low: float,
    high: float,
    mode: float | None = None,
) -> np.ndarray:
    """Inverse cumulative distribution function of a range, vectorised.

    Parameters
    ----------
    u : array_like
        Probabilities in [0, 1] [dimensionless], any shape.
    shape : str
        ``uniform``, ``triangular`` or ``loguniform``.
    low, high : float
        Ends of the range [input's unit]; already checked (see :class:`Range`).
    mode : float, optional
        Mode of a triangular range [input's unit].

    Returns
    -------
    numpy.ndarray
        Values x with F(x) = u, clipped to [low, high] against rounding.

    Raises
    ------
    riskdiet.errors.RiskdietError
        If a draw is not a finite number in [0, 1] or the shape is unknown.

    Notes
    -----
    Triangular (Johnson, Kotz & Balakrishnan 1995, ch. 26): with
    c = (mode - low)/(high - low),
    x = low + sqrt(u (high - low)(mode - low)) for u < c, else
    x = high - sqrt((1 - u)(high - low)(high - mode)).
    Loguniform: x = low (high/low)^u. A range with low == high is a single value.
    """
    u = np.asarray(u, dtype=float)
    if not np.all(np.isfinite(u)) or np.any((u < 0) | (u > 1)):
        raise RiskdietError("inverse_cdf: draws must be finite numbers in [0, 1]")
    width = high - low
    if shape == "uniform":
        x = low + u * width
    elif shape == "triangular":
        if mode is None:
            raise RiskdietError("inverse_cdf: a triangular range needs a mode")
        if width == 0:
            x = np.full_like(u, low)
        else:
            c = (mode - low) / width
            left = low + np.sqrt(u * width * (mode - low))
            right = high - np.sqrt((1 - u) * width * (high - mode))
            # each branch stays on its side of the mode: rounding (1 - u close to 1)
            # must not put a right-branch value below a left-branch one
            x = np.where(u < c, np.minimum(left, mode), np.maximum(right, mode))
    elif shape == "loguniform":
        x = low * np.exp(u * math.log(high / low))
    else:
        raise RiskdietError(f"inverse_cdf: unknown shape {shape!r}; expected one of {SHAPES}")
    return np.clip(x, low, high)


def latin_hypercube(n: int, d: int, seed: int) -> np.ndarray:
    """Latin hypercube design of n points in d dimensions on the unit cube.

    Each margin is cut into n equal strata and each stratum holds exactly one
    point (McKay, Beckman & Conover 1979); points are placed at random within
    their strata and the strata are paired at random across dimensions.

    Parameters
    ----------
    n : int
        Number of draws, at least 1.
    d : int
        Number of uncertain inputs, at least 1.
    seed : int
        Seed; the same seed gives the same design.

    Returns
    -------
    numpy.ndarray, shape (n, d)
        Draws in [0, 1) [dimensionless].

    Raises
    ------
    riskdiet.errors.RiskdietError
        If n or d is not a positive whole number.

    References
    ----------
    .. [1] McKay, M. D., Beckman, R. J. & Conover, W. J. (1979) Technometrics
       21, 239-245 (``scipy.stats.qmc.LatinHypercube``).
    """
    for name, value in (("n", n), ("d", d)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
            raise RiskdietError(f"latin_hypercube: {name} must be a whole number >= 1, "
                                f"found {value!r}")
    return qmc.LatinHypercube(d=int(d), rng=seed).random(int(n))


def draw_values(ranges: Sequence[Range], n: int, seed: int) -> np.ndarray:
    """Latin hypercube draws of several inputs, mapped to their ranges.

    Parameters
    ----------
    ranges : sequence of Range
        One range per uncertain input (column order of the result).
    n : int
        Number of draws.
    seed : int
        Seed of the design.

    Returns
    -------
    numpy.ndarray, shape (n, len(ranges))
        Input values [each input's unit]; column j lies in ranges[j].
    """
    if len(ranges) == 0:
        raise RiskdietError("draw_values: at least one range is needed")
    u = latin_hypercube(n, len(ranges), seed)
    return np.column_stack([r.ppf(u[:, j]) for j, r in enumerate(ranges)])


def round_half_up(x: np.ndarray | float) -> np.ndarray:
    """Round to whole numbers, halves upwards, for whole-number fields.

    ``floor(x + 0.5 + 1e-9)``: 2.5 -> 3, -2.5 -> -2, and a value a rounding
    error below a half (2.4999999999) still goes up. The small slack is
    :data:`ROUNDING_SLACK`. Python's ``round`` rounds halves to even, which
    would make 2.5 and 3.5 both land on even numbers and skew draws.

    Parameters
    ----------
    x : array_like
        Finite values [the field's unit].

    Returns
    -------
    numpy.ndarray of int64
        Rounded values, same shape as ``x``.

    Raises
    ------
    riskdiet.errors.RiskdietError
        If a value is not finite.
    """
    x = np.asarray(x, dtype=float)
    if not np.all(np.isfinite(x)):
        raise RiskdietError("round_half_up: values must be finite")
    return np.floor(x + 0.5 + ROUNDING_SLACK).astype(np.int64)
