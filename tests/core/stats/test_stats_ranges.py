"""Tests of input ranges and Latin hypercube draws.

References used below:
McKay, M. D., Beckman, R. J. & Conover, W. J. (1979) A comparison of three
methods for selecting values of input variables in the analysis of output
from a computer code. Technometrics 21, 239-245.
scipy.stats (reference library): ``uniform``, ``triang``, ``loguniform``.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from riskdiet.core.stats.ranges import Range, draw_values, latin_hypercube, round_half_up
from riskdiet.errors import RiskdietError, StudyError

FAST = settings(max_examples=60, deadline=None)
U = np.linspace(0.0, 1.0, 201)


@pytest.mark.parametrize("n, d", [(10, 1), (97, 3), (1000, 6)])
def test_latin_hypercube_one_draw_per_stratum(n, d):
    """Each margin cut into n equal strata holds exactly one draw.

    The defining property of Latin hypercube sampling (McKay, Beckman & Conover 1979).
    """
    u = latin_hypercube(n, d, seed=1)
    assert u.shape == (n, d)
    for j in range(d):
        strata = np.floor(u[:, j] * n).astype(int)
        assert np.array_equal(np.sort(strata), np.arange(n))


def test_mapped_draws_keep_one_draw_per_stratum_of_each_distribution():
    """After mapping by the inverse CDFs, each of n equal-probability strata of every input's
    distribution (its CDF from scipy.stats) still holds exactly one draw (McKay et al. 1979)."""
    ranges = [
        Range(2.0, 5.0, "uniform"),
        Range(0.1, 0.9, "triangular", mode=0.3),
        Range(0.01, 10.0, "loguniform"),
    ]
    reference = [
        stats.uniform(loc=2.0, scale=3.0),
        stats.triang(c=(0.3 - 0.1) / 0.8, loc=0.1, scale=0.8),
        stats.loguniform(0.01, 10.0),
    ]
    n = 500
    x = draw_values(ranges, n, seed=7)
    for j, dist in enumerate(reference):
        strata = np.floor(dist.cdf(x[:, j]) * n + 1e-9).astype(int)
        strata = np.minimum(strata, n - 1)
        assert np.array_equal(np.sort(strata), np.arange(n))


def test_same_seed_same_draws_other_seed_other_draws():
    """Reproducibility: the design depends only on (n, d, seed) (common practice)."""
    a = latin_hypercube(64, 4, seed=3)
    b = latin_hypercube(64, 4, seed=3)
    c = latin_hypercube(64, 4, seed=4)
    assert np.array_equal(a, b)
    assert not np.array_equal(a, c)


@pytest.mark.parametrize("low, high", [(0.0, 1.0), (-3.0, 7.5)])
def test_uniform_inverse_cdf_matches_scipy(low, high):
    """Uniform inverse CDF equals scipy.stats.uniform.ppf (reference library)."""
    got = Range(low, high, "uniform").ppf(U)
    assert np.allclose(got, stats.uniform(loc=low, scale=high - low).ppf(U), rtol=0, atol=1e-12)


def test_a_range_of_one_value_gives_that_value():
    """low == high is a point mass at low for every shape (definition; scipy returns NaN for a
    zero-width uniform, so the value is checked directly)."""
    for r in (Range(2.0, 2.0), Range(2.0, 2.0, "triangular", mode=2.0),
              Range(2.0, 2.0, "loguniform")):
        assert np.array_equal(r.ppf(U), np.full_like(U, 2.0))


@pytest.mark.parametrize("low, mode, high", [(0.0, 0.5, 1.0), (1.0, 1.0, 4.0), (1.0, 4.0, 4.0),
                                             (-2.0, 3.0, 10.0)])
def test_triangular_inverse_cdf_matches_scipy(low, mode, high):
    """Triangular inverse CDF equals scipy.stats.triang.ppf with c = (mode-low)/(high-low),
    including modes at either end (reference library)."""
    got = Range(low, high, "triangular", mode=mode).ppf(U)
    ref = stats.triang(c=(mode - low) / (high - low), loc=low, scale=high - low).ppf(U)
    assert np.allclose(got, ref, rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("low, high", [(0.01, 100.0), (3.0, 4.0)])
def test_loguniform_inverse_cdf_matches_scipy(low, high):
    """Loguniform inverse CDF equals scipy.stats.loguniform.ppf (reference library)."""
    got = Range(low, high, "loguniform").ppf(U)
    assert np.allclose(got, stats.loguniform(low, high).ppf(U), rtol=1e-12, atol=0)


@FAST
@given(
    low=st.floats(-1e3, 1e3),
    width=st.floats(0.0, 1e3),
    t=st.floats(0.0, 1.0),
    u=st.lists(st.floats(0.0, 1.0), min_size=1, max_size=20),
)
def test_values_stay_in_range_and_increase_with_u(low, width, t, u):
    """Invariant: an inverse CDF is non-decreasing and maps [0, 1] into [low, high]
    (definition of a quantile function; common practice)."""
    high = low + width
    u = np.sort(np.asarray(u))
    for r in (Range(low, high), Range(low, high, "triangular", mode=low + t * width)):
        x = r.ppf(u)
        assert np.all((x >= low) & (x <= high))
        assert np.all(np.diff(x) >= 0)


def test_bad_ranges_are_rejected_all_at_once_with_location():
    """Low above high, a loguniform range through 0, a mode outside the range and an unknown
    shape are each rejected naming the place (project error rules)."""
    with pytest.raises(StudyError) as info:
        Range(5.0, 1.0, "uniform", where="Uncertainty!C4")
    assert "Uncertainty!C4" in str(info.value)
    with pytest.raises(StudyError, match="above 0"):
        Range(0.0, 1.0, "loguniform")
    with pytest.raises(StudyError, match="mode"):
        Range(0.0, 1.0, "triangular", mode=2.0)
    with pytest.raises(StudyError, match="mode"):
        Range(0.0, 1.0, "triangular")
    with pytest.raises(StudyError, match="mode"):
        Range(0.0, 1.0, "uniform", mode=0.5)
    with pytest.raises(StudyError) as info:
        Range(float("nan"), 1.0, "normal")
    assert len(info.value.problems) == 2


def test_draws_outside_unit_interval_are_refused():
    """A draw outside [0, 1] or NaN has no quantile; it raises instead of returning NaN."""
    with pytest.raises(RiskdietError):
        Range(0.0, 1.0).ppf([0.5, 1.5])
    with pytest.raises(RiskdietError):
        Range(0.0, 1.0).ppf([np.nan])


def test_round_half_up():
    """floor(x + 0.5 + 1e-9): halves go up (2.5 -> 3, 3.5 -> 4, -2.5 -> -2), unlike Python's
    round-half-to-even; a value a rounding error below a half still goes up (MODEL.md 9)."""
    x = [2.5, 3.5, -2.5, 2.4999999999, 2.49, 0.0, 7.0]
    assert round_half_up(x).tolist() == [3, 4, -2, 3, 2, 0, 7]
    assert [round(v) for v in (2.5, 3.5)] == [2, 4]  # why not Python's round
    with pytest.raises(RiskdietError):
        round_half_up([np.inf])
