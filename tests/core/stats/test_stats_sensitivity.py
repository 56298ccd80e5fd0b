"""Tests of the Sobol wrapper and the one-at-a-time elasticities.

References used below:
Ishigami, T. & Homma, T. (1990) An importance quantification technique in
uncertainty analysis for computer models. Proceedings of ISUMA '90, 398-403.
Sobol', I. M. & Levitan, Y. L. (1999) On the use of variance reducing
multipliers in Monte Carlo computations of a global sensitivity index.
Computer Physics Communications 117, 52-61 (analytic Ishigami variances).
Saltelli, A. et al. (2010) Computer Physics Communications 181, 259-270.
scipy.stats.sobol_indices (reference library).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from riskdiet.core.stats.ranges import Range
from riskdiet.core.stats.sensitivity import elasticities, power_of_two_at_least, sobol_analysis
from riskdiet.errors import RiskdietError

A, B = 7.0, 0.1
PI_RANGE = Range(-math.pi, math.pi)


def ishigami(x: np.ndarray) -> np.ndarray:
    """Ishigami & Homma (1990) test function, x_i uniform on [-pi, pi]."""
    return np.sin(x[0]) + A * np.sin(x[1]) ** 2 + B * x[2] ** 4 * np.sin(x[0])


def ishigami_indices() -> tuple[list[float], list[float]]:
    """Analytic first-order and total indices of the Ishigami function (a = 7, b = 0.1) from
    its partial variances (Sobol' & Levitan 1999): V1 = (1 + b pi^4/5)^2 / 2, V2 = a^2/8,
    V13 = b^2 pi^8 (1/18 - 1/50), V3 = 0."""
    v1 = 0.5 * (1 + B * math.pi**4 / 5) ** 2
    v2 = A**2 / 8
    v13 = B**2 * math.pi**8 * (1 / 18 - 1 / 50)
    v = v1 + v2 + v13
    return [v1 / v, v2 / v, 0.0], [(v1 + v13) / v, v2 / v, v13 / v]


def test_analytic_ishigami_indices_are_the_published_ones():
    """The analytic indices used below round to the values quoted for a = 7, b = 0.1
    (Ishigami & Homma 1990): S = 0.3139, 0.4424, 0; S_T = 0.5576, 0.4424, 0.2437."""
    first, total = ishigami_indices()
    assert [round(v, 4) for v in first] == [0.3139, 0.4424, 0.0]
    assert [round(v, 4) for v in total] == [0.5576, 0.4424, 0.2437]


@pytest.fixture(scope="module")
def ishigami_run():
    def model(x):
        # three outcomes: the Ishigami function, a constant, and x2 alone
        return np.stack([ishigami(x), np.full(x.shape[1], 2.5), 3.0 * x[1]])

    return sobol_analysis(model, [PI_RANGE] * 3, 4096, seed=1,
                          inputs=["x1", "x2", "x3"], outcomes=["ishigami", "flat", "only x2"])


def test_ishigami_indices_lie_in_their_bootstrap_intervals(ishigami_run):
    """At N = 4096 every analytic index of the Ishigami function (Ishigami & Homma 1990;
    Sobol' & Levitan 1999) lies inside its 95 % bootstrap interval, the first-order index of
    x3 (exactly 0) is shown as about 0, and the inputs rank x1, x2, x3 by total index."""
    first, total = ishigami_indices()
    result = ishigami_run.outcome("ishigami")
    assert not result.constant
    for idx, s, st_ in zip(result.indices, first, total, strict=True):
        assert idx.first_low <= s <= idx.first_high, idx
        assert idx.total_low <= st_ <= idx.total_high, idx
        assert idx.first_high - idx.first_low < 0.1  # intervals are informative at this N
    assert result.indices[2].first_about_zero
    assert not result.indices[0].first_about_zero
    assert not any(i.total_about_zero for i in result.indices)
    assert result.ranking() == ("x1", "x2", "x3")
    assert ishigami_run.n == 4096 and ishigami_run.evaluations == 4096 * 5


def test_constant_outcome_and_inputs_without_effect(ishigami_run):
    """An outcome that does not vary is reported constant with no indices; on an outcome that
    depends on x2 only, x1 and x3 get total index about 0 while x2's total index is near 1
    (definition of Sobol indices, Sobol' 2001)."""
    flat = ishigami_run.outcome("flat")
    assert flat.constant and flat.indices == () and flat.ranking() == ()
    only = ishigami_run.outcome("only x2")
    assert [i.total_about_zero for i in only.indices] == [True, False, True]
    assert only.indices[1].total > 0.9
    assert only.ranking()[0] == "x2"
    with pytest.raises(RiskdietError, match="no outcome"):
        ishigami_run.outcome("missing")


def test_point_estimates_equal_scipy_sobol_indices():
    """With the same seed, the wrapper's design and point estimates are those of
    scipy.stats.sobol_indices (reference library; Saltelli et al. 2010 estimators)."""
    dists = [stats.uniform(loc=-math.pi, scale=2 * math.pi)] * 3
    ref = stats.sobol_indices(func=ishigami, n=512, dists=dists, rng=5)
    got = sobol_analysis(ishigami, [PI_RANGE] * 3, 512, seed=5, resamples=99,
                         method="percentile").outcomes[0]
    assert np.allclose([i.first for i in got.indices], ref.first_order, rtol=1e-12, atol=1e-14)
    assert np.allclose([i.total for i in got.indices], ref.total_order, rtol=1e-12, atol=1e-14)


def test_same_seed_same_numbers():
    """Reproducibility: the same seed gives identical indices and intervals (common practice)."""
    run = lambda: sobol_analysis(ishigami, [PI_RANGE] * 3, 256, seed=9, resamples=199)
    assert run() == run()


def test_sample_size_rounded_up_to_a_power_of_two():
    """Sobol' points need N a power of two (Saltelli et al. 2010): 1000 -> 1024, 1024 -> 1024,
    1 -> 1; the model is evaluated N (d + 2) times."""
    assert [power_of_two_at_least(n) for n in (1, 2, 3, 1000, 1024, 1025)] == [
        1, 2, 4, 1024, 1024, 2048]
    calls = []

    def model(x):
        calls.append(x.shape)
        return x[0] + 2 * x[1]

    res = sobol_analysis(model, [Range(0, 1), Range(0, 1)], 100, seed=1, resamples=99,
                         method="percentile")
    assert res.n == 128 and calls == [(2, 128 * 4)]


def test_a_failed_evaluation_names_its_inputs():
    """A model value that is not finite is an error naming the draw's input values (MODEL.md
    section 9), never a NaN index."""
    def model(x):
        return np.where(x[0] > 0.5, np.nan, x[0])

    with pytest.raises(RiskdietError, match=r"hunting_ability = 0\.[5-9]"):
        sobol_analysis(model, [Range(0, 1)], 64, seed=1, inputs=["hunting_ability"])


@settings(max_examples=50, deadline=None)
@given(
    k=st.floats(-4, 4),
    x=st.floats(0.01, 100),
    c=st.floats(-10, 10).filter(lambda c: abs(c) > 1e-3),
)
def test_elasticity_of_a_power_law_is_its_exponent(k, x, c):
    """y = c x^k has d ln y / d ln x = k exactly (calculus; the log central difference is
    exact for power laws), for either sign of c."""
    e = elasticities(lambda v: c * v[0] ** k * (1 + 0 * v[1]), [x, 3.0])
    assert e[0] == pytest.approx(k, abs=1e-8)
    assert e[1] == pytest.approx(0.0, abs=1e-12)


def test_elasticity_of_a_linear_function():
    """y = 2 + 3x at x = 4: elasticity (x/y) dy/dx = 12/14 (calculus), to O(step^2)."""
    e = elasticities(lambda v: 2 + 3 * v[0], [4.0])
    assert e[0] == pytest.approx(12 / 14, rel=1e-4)


def test_undefined_elasticities_are_none():
    """x0 = 0 (no relative change), y = 0, or y changing sign give None, not NaN or inf."""
    assert elasticities(lambda v: v[0] + v[1], [0.0, 2.0])[0] is None
    assert elasticities(lambda v: 0 * v[0], [1.0]) == (None,)
    assert elasticities(lambda v: v[0] - 1.0, [1.0]) == (None,)
    with pytest.raises(RiskdietError), np.errstate(invalid="ignore"):
        elasticities(lambda v: np.log(v[0] - 1.0), [1.0])
