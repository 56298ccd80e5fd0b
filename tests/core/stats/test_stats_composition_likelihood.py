"""Tests of the likelihood of diet records and of AICc.

References used below:
scipy.stats.multinomial, scipy.stats.dirichlet_multinomial, scipy.stats.poisson
(reference library).
Agresti, A. (2002) Categorical Data Analysis, 2nd ed., Wiley, section 1.2.2
(the multinomial MLE is the observed proportions).
Mosimann, J. E. (1962) Biometrika 49, 65-82 (Dirichlet-multinomial; multinomial
limit as the concentration grows).
Hurvich, C. M. & Tsai, C.-L. (1989) Biometrika 76, 297-307 (AICc formula).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy import stats

from riskdiet.core.stats.composition_likelihood import (
    LogLikelihood,
    aicc,
    dirichlet_multinomial_log_likelihood,
    multinomial_log_likelihood,
    poisson_log_likelihood,
    poisson_rate_log_likelihood,
    total_log_likelihood,
)
from riskdiet.errors import RiskdietError

FAST = settings(max_examples=80, deadline=None)

counts_st = st.lists(st.integers(0, 40), min_size=2, max_size=6)


def shares_for(k: int) -> st.SearchStrategy:
    return st.lists(st.floats(0.01, 10.0), min_size=k, max_size=k)


@FAST
@given(data=st.data())
def test_multinomial_matches_scipy(data):
    """ln L equals scipy.stats.multinomial.logpmf (reference library) for random counts and
    positive shares given as unnormalised weights."""
    x = data.draw(counts_st)
    w = np.array(data.draw(shares_for(len(x))))
    got = multinomial_log_likelihood(x, w)
    ref = stats.multinomial(sum(x), w / w.sum()).logpmf(x)
    assert got.possible and got.value == pytest.approx(ref, rel=1e-10, abs=1e-10)


@FAST
@given(data=st.data(), c=st.floats(0.05, 200.0))
def test_dirichlet_multinomial_matches_scipy(data, c):
    """ln L equals scipy.stats.dirichlet_multinomial.logpmf with alpha = c pi (reference
    library; Mosimann 1962)."""
    x = data.draw(counts_st)
    assume(sum(x) > 0)
    w = np.array(data.draw(shares_for(len(x))))
    got = dirichlet_multinomial_log_likelihood(x, w, c)
    ref = stats.dirichlet_multinomial.logpmf(x, c * w / w.sum(), sum(x))
    assert got.value == pytest.approx(ref, rel=1e-9, abs=1e-9)


def test_dirichlet_multinomial_tends_to_the_multinomial():
    """As the concentration grows the Dirichlet-multinomial becomes the multinomial
    (Mosimann 1962); here at c = 1e9 they agree to 1e-6."""
    x, p = [4, 0, 7, 1], [0.3, 0.1, 0.5, 0.1]
    dm = dirichlet_multinomial_log_likelihood(x, p, 1e9).value
    assert dm == pytest.approx(multinomial_log_likelihood(x, p).value, abs=1e-6)


def test_a_category_predicted_absent_and_not_recorded_drops_out():
    """A prey with predicted share 0 and no records contributes nothing: the result equals
    scipy's over the remaining categories (limit alpha_i -> 0, Mosimann 1962)."""
    x, p = [4, 0, 7], [0.4, 0.0, 0.6]
    assert multinomial_log_likelihood(x, p).value == pytest.approx(
        stats.multinomial(11, [0.4, 0.6]).logpmf([4, 7]))
    assert dirichlet_multinomial_log_likelihood(x, p, 3.0).value == pytest.approx(
        stats.dirichlet_multinomial.logpmf([4, 7], [1.2, 1.8], 11))


def test_records_the_model_cannot_produce():
    """Records of a prey predicted at share 0 make the likelihood 0 (MODEL.md section 10):
    reported as 'cannot produce' with the category, not as -inf; a sum with such a part is
    impossible too."""
    for res in (multinomial_log_likelihood([1, 2, 3], [0.0, 0.5, 0.5]),
                dirichlet_multinomial_log_likelihood([1, 2, 3], [0.0, 0.5, 0.5], 2.0)):
        assert not res.possible and res.value is None and res.cannot_produce == (0,)
    nothing = multinomial_log_likelihood([0, 2], [0.0, 0.0])
    assert nothing.cannot_produce == (1,)
    total = total_log_likelihood([LogLikelihood(-1.0), multinomial_log_likelihood([1], [0.0])])
    assert total.value is None
    assert total_log_likelihood([LogLikelihood(-1.0), LogLikelihood(-2.5)]).value == -3.5


@FAST
@given(data=st.data())
def test_multinomial_is_largest_at_the_observed_shares(data):
    """Invariant: the multinomial MLE of the shares is x/n (Agresti 2002, section 1.2.2), so
    no other shares give a higher log-likelihood."""
    x = np.array(data.draw(counts_st))
    assume(x.sum() > 0)
    w = np.array(data.draw(shares_for(x.size)))
    best = multinomial_log_likelihood(x, x / x.sum()).value
    assert multinomial_log_likelihood(x, w).value <= best + 1e-9


@pytest.mark.parametrize("k, mu", [(0, 0.7), (3, 2.2), (12, 30.5), (0, 0.0)])
def test_poisson_matches_scipy(k, mu):
    """ln L of a rate row equals scipy.stats.poisson.logpmf (reference library)."""
    assert poisson_log_likelihood(k, mu).value == pytest.approx(stats.poisson.logpmf(k, mu))


def test_poisson_rate_rows():
    """Mean = kills per predator-day x predator_days (MODEL.md section 10): 9 kills in 120
    predator-days at 0.05 kills/day is Poisson with mean 6 (scipy.stats.poisson); kills with
    a predicted rate of 0 cannot be produced."""
    got = poisson_rate_log_likelihood(9, 0.05, 120.0)
    assert got.value == pytest.approx(stats.poisson.logpmf(9, 6.0))
    assert poisson_rate_log_likelihood(2, 0.0, 30.0).cannot_produce == (0,)
    with pytest.raises(RiskdietError):
        poisson_rate_log_likelihood(2, 0.1, 0.0)


def test_aicc_by_hand():
    """AICc = -2 lnL + 2k + 2k(k+1)/(n-k-1) (Hurvich & Tsai 1989): lnL = -10, k = 2, n = 20
    gives 24 + 12/17 (hand computation); k = 0 gives plain -2 lnL; undefined (None) when
    n - k - 1 <= 0 and when the model cannot produce the records."""
    assert aicc(-10.0, 2, 20) == pytest.approx(24 + 12 / 17)
    assert aicc(LogLikelihood(-10.0), 0, 5) == pytest.approx(20.0)
    assert aicc(-10.0, 2, 3) is None
    assert aicc(LogLikelihood(None, (1,)), 1, 50) is None
    assert aicc(-10.0, 1, 1e12) == pytest.approx(22.0)  # tends to AIC for large n


@pytest.mark.parametrize("counts, shares", [
    ([1, -1], [0.5, 0.5]), ([1.5, 1], [0.5, 0.5]), ([1, np.nan], [0.5, 0.5]),
    ([1, 1], [0.5, -0.5]), ([1, 1], [0.5, np.inf]), ([1, 1], [1.0]), ([], []),
])
def test_invalid_arguments_raise(counts, shares):
    """Negative, fractional or non-finite counts and bad shares raise riskdiet's error type
    instead of giving NaN."""
    with pytest.raises(RiskdietError):
        multinomial_log_likelihood(counts, shares)
    with pytest.raises(RiskdietError):
        dirichlet_multinomial_log_likelihood(counts, shares, 1.0)


def test_invalid_concentration_raises():
    """The Dirichlet concentration must be a finite number above 0."""
    for c in (0.0, -1.0, np.inf, np.nan):
        with pytest.raises(RiskdietError):
            dirichlet_multinomial_log_likelihood([1, 2], [0.5, 0.5], c)
