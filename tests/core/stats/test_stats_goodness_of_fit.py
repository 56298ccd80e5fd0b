"""Tests of the G-tests, Williams' correction and the parametric bootstrap p-value.

References used below:
scipy.stats.power_divergence(lambda_="log-likelihood") and
scipy.stats.chi2_contingency (reference library).
Agresti, A. (2002) Categorical Data Analysis, 2nd ed., Wiley, Table 7.1
(primary food choice of 219 alligators by lake).
McDonald, J. H. (2014) Handbook of Biological Statistics, 3rd ed., Sparky House
(G-test of goodness-of-fit, Mendel's peas 423 smooth : 133 wrinkled against
3:1, G = 0.35, P = 0.555; from memory).
Williams, D. A. (1976) Biometrika 63, 33-37, formulas as given by Sokal, R. R.
& Rohlf, F. J. (1995) Biometry, 3rd ed., chapter 17 (box numbers from memory).
Sokal & Rohlf (1995), chapter 17: additivity of G (pooled + heterogeneity =
total) for replicated goodness-of-fit tests (from memory).
Davison, A. C. & Hinkley, D. V. (1997) Bootstrap Methods and their Application,
section 4.2 (Monte Carlo p-value).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy import stats

from riskdiet.core.stats.goodness_of_fit import (
    bootstrap_p_value,
    g_test_of_fit,
    homogeneity_g_test,
    multinomial_simulator,
    parametric_bootstrap_p,
    replicate_generators,
)
from riskdiet.errors import RiskdietError

FAST = settings(max_examples=60, deadline=None)

ALLIGATORS = np.array([  # Agresti (2002) Table 7.1: bird, fish, invertebrate, other, reptile
    [3, 33, 20, 6, 1],    # George
    [5, 30, 4, 13, 3],    # Hancock
    [1, 18, 19, 3, 7],    # Oklawaha
    [4, 13, 18, 10, 8],   # Trafford
])


def test_mendel_peas():
    """423 smooth : 133 wrinkled against 3:1 gives G = 0.35, P = 0.555 (McDonald 2014, from
    memory) and agrees with scipy.stats.power_divergence; Williams' q = 1 + (a^2-1)/(6 n nu)
    = 1 + 3/3336 (hand computation from the formula of Williams 1976)."""
    res = g_test_of_fit([423, 133], [3, 1])
    ref = stats.power_divergence([423, 133], [417, 139], lambda_="log-likelihood")
    assert res.g == pytest.approx(ref.statistic, rel=1e-12)
    assert res.p == pytest.approx(ref.pvalue, rel=1e-12)
    assert (round(res.g, 2), round(res.p, 3), res.df) == (0.35, 0.555, 1)
    assert res.q == pytest.approx(1 + 3 / 3336, rel=1e-12)
    assert res.g_williams == pytest.approx(ref.statistic / (1 + 3 / 3336), rel=1e-12)
    assert res.p_williams == pytest.approx(stats.chi2.sf(res.g_williams, 1), rel=1e-12)


@FAST
@given(data=st.data(), fitted=st.integers(0, 2))
def test_fit_agrees_with_scipy_power_divergence(data, fitted):
    """G and p equal scipy.stats.power_divergence(lambda_="log-likelihood", ddof=fitted)
    (reference library) for random counts and positive shares."""
    k = data.draw(st.integers(fitted + 2, 7))
    x = np.array(data.draw(st.lists(st.integers(0, 60), min_size=k, max_size=k)))
    assume(x.sum() > 0)
    w = np.array(data.draw(st.lists(st.floats(0.05, 5.0), min_size=k, max_size=k)))
    res = g_test_of_fit(x, w, fitted_parameters=fitted)
    ref = stats.power_divergence(x, x.sum() * w / w.sum(), ddof=fitted,
                                 lambda_="log-likelihood")
    assert res.g == pytest.approx(ref.statistic, rel=1e-9, abs=1e-9)
    # Where counts equal their expectations, scipy's sum can round to a tiny negative G
    # (-1e-13) and then returns p = NaN; G >= 0 by Gibbs' inequality, so the reference p is
    # chi2.sf of G clipped at 0, which is 1.
    ref_p = stats.chi2.sf(max(ref.statistic, 0.0), k - 1 - fitted)
    assert res.p == pytest.approx(ref_p, rel=1e-9, abs=1e-12)
    assert res.df == k - 1 - fitted
    assert res.smallest_expected == pytest.approx((x.sum() * w / w.sum()).min())


def test_several_compositions_sum_their_g_and_df():
    """Summed over compositions: G = sum of each composition's G (scipy.stats.power_divergence),
    df = sum(categories - 1) - fitted inputs (MODEL.md section 10), Williams' correction
    applied per composition (formula of Williams 1976)."""
    obs = [[10, 4, 6], [3, 9]]
    shares = [[0.5, 0.2, 0.3], [0.4, 0.6]]
    res = g_test_of_fit(obs, shares, fitted_parameters=1)
    g_parts = [stats.power_divergence(o, np.sum(o) * np.array(s), lambda_="log-likelihood")
               .statistic for o, s in zip(obs, shares, strict=True)]
    assert res.df == 2 + 1 - 1
    assert res.g == pytest.approx(sum(g_parts))
    q = [1 + 8 / (6 * 20 * 2), 1 + 3 / (6 * 12 * 1)]
    assert res.g_williams == pytest.approx(g_parts[0] / q[0] + g_parts[1] / q[1])
    assert res.p == pytest.approx(stats.chi2.sf(sum(g_parts), 2))


def test_no_test_without_degrees_of_freedom():
    """df <= 0 gives no test (None), as MODEL.md section 10 says."""
    assert g_test_of_fit([5, 7], [0.5, 0.5], fitted_parameters=1) is None
    assert homogeneity_g_test([[3, 4]]) is None


def test_categories_predicted_absent():
    """A prey predicted at share 0 without records is not tested (equal to scipy on the other
    categories); with records the model cannot produce them and the test refuses."""
    res = g_test_of_fit([5, 0, 7, 2], [0.3, 0.0, 0.5, 0.2])
    ref = stats.power_divergence([5, 7, 2], 14 * np.array([0.3, 0.5, 0.2]),
                                 lambda_="log-likelihood")
    assert res.g == pytest.approx(ref.statistic) and res.df == 2
    with pytest.raises(RiskdietError, match="cannot produce"):
        g_test_of_fit([5, 1, 7, 2], [0.3, 0.0, 0.5, 0.2])


def test_alligator_food_by_lake_is_not_homogeneous():
    """Agresti (2002) Table 7.1 as four sources of scat records: G^2 = 43.195 on 12 df, the
    value of scipy.stats.chi2_contingency(..., lambda_="log-likelihood") (reference library);
    Williams' q by the r x c formula of Williams (1976) computed by hand from the margins."""
    res = homogeneity_g_test(ALLIGATORS)
    ref = stats.chi2_contingency(ALLIGATORS, lambda_="log-likelihood")
    assert res.df == ref.dof == 12
    assert res.g == pytest.approx(ref.statistic, rel=1e-12)
    assert round(res.g, 3) == 43.195
    assert res.p == pytest.approx(ref.pvalue, rel=1e-9)
    assert res.smallest_expected == pytest.approx(ref.expected_freq.min())
    n = 219
    rows, cols = [63, 55, 48, 53], [13, 94, 61, 32, 19]
    q = 1 + (n * sum(1 / r for r in rows) - 1) * (n * sum(1 / c for c in cols) - 1) / (6 * n * 12)
    assert res.q == pytest.approx(q, rel=1e-12)
    assert res.g_williams == pytest.approx(ref.statistic / q)
    assert res.small_expected  # some expected counts are below 5


def test_empty_rows_and_columns_are_left_out():
    """A source without records and a prey never recorded add nothing: same G and df as
    scipy.stats.chi2_contingency on the rest (reference library)."""
    table = np.zeros((5, 6))
    table[:4, :5] = ALLIGATORS
    res = homogeneity_g_test(table)
    assert res.df == 12 and res.g == pytest.approx(43.19523870370783)


@FAST
@given(st.lists(st.lists(st.integers(1, 30), min_size=3, max_size=3), min_size=2, max_size=4))
def test_total_g_is_pooled_plus_heterogeneity(rows):
    """Additivity of G (Sokal & Rohlf 1995, chapter 17, replicated goodness of fit; from
    memory): the homogeneity G equals the sum of each composition's G against the pooled
    shares minus the pooled composition's G against the same shares (which is 0)."""
    table = np.array(rows)
    pooled = table.sum(axis=0) / table.sum()
    summed = g_test_of_fit(list(table), [pooled] * len(table))
    assert homogeneity_g_test(table).g == pytest.approx(summed.g, rel=1e-9, abs=1e-9)


def test_bootstrap_p_value_by_hand():
    """p = (1 + #{t* >= t}) / (B + 1) (Davison & Hinkley 1997, section 4.2): t = 5 and
    replicates 1, 6, 5, impossible, 2 give (1 + 3) / 6; an impossible replicate (None) counts
    as at least as large."""
    res = bootstrap_p_value(5.0, [1.0, 6.0, 5.0, None, 2.0])
    assert (res.p, res.at_least, res.cannot_produce, res.replicates) == (4 / 6, 3, 1, 5)
    with pytest.raises(RiskdietError):
        bootstrap_p_value(5.0, [])
    with pytest.raises(RiskdietError):
        bootstrap_p_value(5.0, [np.nan])


def test_bootstrap_agrees_with_chi_square_for_large_counts():
    """With large expected counts the chi-square approximation holds, so the parametric
    bootstrap p-value (199 replicates) is close to the chi-square one (Davison & Hinkley
    1997; tolerance 0.1, about three Monte Carlo standard errors)."""
    shares = [0.5, 0.3, 0.2]
    observed = [260, 140, 100]
    g = g_test_of_fit(observed, shares)
    simulate = multinomial_simulator([shares], [500])
    res = parametric_bootstrap_p(g.g, simulate, lambda recs: g_test_of_fit(recs, [shares]).g)
    assert res.replicates == 199
    assert abs(res.p - g.p) < 0.1
    again = parametric_bootstrap_p(g.g, simulate, lambda recs: g_test_of_fit(recs, [shares]).g)
    assert again == res  # same seed, same p


def hardy_weinberg(theta: float) -> np.ndarray:
    return np.array([theta**2, 2 * theta * (1 - theta), (1 - theta) ** 2])


def refit_hardy_weinberg(records: list[np.ndarray]) -> float:
    """Refit the one-parameter Hardy-Weinberg model (MLE theta = (2 x1 + x2) / 2n, common
    practice in population genetics) and return G with df = 3 - 1 - 1."""
    x = records[0]
    theta = (2 * x[0] + x[1]) / (2 * x.sum())
    return g_test_of_fit(x, hardy_weinberg(theta), fitted_parameters=1).g


def test_refitted_bootstrap_p_values_are_calibrated_under_the_model():
    """Under the model, refitted bootstrap p-values are roughly uniform: of 60 data sets of
    30 records drawn with theta = 0.3, the share with p <= 0.25 lies within 3 binomial
    standard errors of 0.25 (definition of a valid p-value; Davison & Hinkley 1997, 4.2)."""
    rng = np.random.default_rng(2026)
    small = 0
    for _ in range(60):
        x = rng.multinomial(30, hardy_weinberg(0.3))
        g = refit_hardy_weinberg([x])
        theta = (2 * x[0] + x[1]) / 60
        res = parametric_bootstrap_p(
            g, multinomial_simulator([hardy_weinberg(theta)], [30]), refit_hardy_weinberg,
            replicates=99, seed=int(rng.integers(1 << 30)))
        small += res.p <= 0.25
    sd = (0.25 * 0.75 / 60) ** 0.5
    assert abs(small / 60 - 0.25) < 3 * sd


def test_replicate_generators_do_not_depend_on_order():
    """Replicate i gets the same numbers however many replicates are asked for, so workers can
    share them out (numpy SeedSequence.spawn; common practice)."""
    a = [g.random() for g in replicate_generators(7, 5)]
    b = [g.random() for g in replicate_generators(7, 3)]
    assert a[:3] == b
    assert len(set(a)) == 5


def test_counts_equal_to_their_expectations_give_p_one():
    """Six equal counts with equal shares: G = 0 and p = 1 (the chi-square survival function at
    0, Sokal & Rohlf 1995, G-test), where scipy.stats.power_divergence rounds G to about -1e-13
    and returns p = NaN; no NaN may reach a user."""
    res = g_test_of_fit(np.full(6, 38), np.full(6, 4.6786085), fitted_parameters=0)
    assert res.g == 0.0
    assert res.p == 1.0
    assert res.df == 5
