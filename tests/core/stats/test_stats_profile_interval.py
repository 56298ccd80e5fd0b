"""Tests of profile-likelihood intervals (possibly in several pieces).

References used below:
Venzon, D. J. & Moolgavkar, S. H. (1988) Applied Statistics 37, 87-94
(interval {theta : l_hat - l(theta) <= chi2_1(0.95)/2}).
Agresti, A. (2002) Categorical Data Analysis, 2nd ed., Wiley, section 1.4
(0 successes in 25 trials: likelihood-ratio 95 % interval (0, 0.074); from memory).
Pawitan, Y. (2001) In All Likelihood, Oxford University Press, chapter 2 (for a
quadratic log-likelihood the likelihood interval is estimate +/- 1.96 se).
scipy.stats.chi2 and scipy.stats.norm (reference library).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from riskdiet.core.stats.composition_likelihood import multinomial_log_likelihood
from riskdiet.core.stats.profile_interval import (
    PROFILE_DROP,
    profile_interval,
    profile_interval_from_grid,
)
from riskdiet.errors import RiskdietError


def test_drop_is_half_the_chi_square_quantile():
    """chi2_1(0.95)/2 = 1.92 (MODEL.md section 10; scipy.stats.chi2)."""
    assert PROFILE_DROP == pytest.approx(stats.chi2.ppf(0.95, 1) / 2, rel=1e-15)
    assert round(PROFILE_DROP, 2) == 1.92


def test_quadratic_profile_gives_estimate_plus_minus_1_96_se():
    """l = -(theta - 2)^2 / (2 se^2) with se = 0.5: the interval is 2 +/- z_0.975 se (Pawitan
    2001, ch. 2; z from scipy.stats.norm)."""
    res = profile_interval(lambda t: -((t - 2.0) ** 2) / (2 * 0.25), (0.0, 5.0))
    z = stats.norm.ppf(0.975)
    assert len(res.pieces) == 1 and not res.at_bound
    assert res.low == pytest.approx(2 - z * 0.5, abs=1e-7)
    assert res.high == pytest.approx(2 + z * 0.5, abs=1e-7)
    assert res.estimate == pytest.approx(2.0, abs=1e-5)


def test_binomial_with_no_successes():
    """0 of 25: l(p) = 25 ln(1 - p), maximal at the bound p = 0; the likelihood-ratio interval
    is (0, 1 - exp(-1.92/25)) = (0, 0.074) (Agresti 2002, section 1.4, from memory); the lower
    end is flagged at the bound. At p = 1 the model cannot produce the records (None)."""
    res = profile_interval(lambda p: 25 * math.log1p(-p) if p < 1 else None, (0.0, 1.0))
    assert res.at_lower_bound and not res.at_upper_bound and res.estimate == 0.0
    assert res.high == pytest.approx(1 - math.exp(-PROFILE_DROP / 25), abs=1e-8)
    assert round(res.high, 3) == 0.074


def test_two_pieces():
    """l = -min((t + 3)^2, (t - 3)^2) / 2 has two separate pieces 3 +/- sqrt(2 x 1.92) and
    -3 +/- sqrt(2 x 1.92) (hand computation from the definition, Venzon & Moolgavkar 1988)."""
    res = profile_interval(lambda t: -min((t + 3) ** 2, (t - 3) ** 2) / 2, (-10.0, 10.0))
    w = math.sqrt(2 * PROFILE_DROP)
    assert len(res.pieces) == 2
    for piece, centre in zip(res.pieces, (-3.0, 3.0), strict=True):
        assert piece.low == pytest.approx(centre - w, abs=1e-7)
        assert piece.high == pytest.approx(centre + w, abs=1e-7)
    assert not res.contains(0.0) and res.contains(3.0) and res.contains(-3.0)


def test_flat_profile_cannot_identify_the_parameter():
    """A flat likelihood does not bound the parameter: the interval is the whole search range,
    flagged at both bounds (MODEL.md section 10: the data cannot identify it)."""
    res = profile_interval(lambda t: -3.0, (0.05, 5.0), log_scale=True)
    assert (res.low, res.high) == (0.05, 5.0)
    assert res.at_lower_bound and res.at_upper_bound


def test_ends_at_a_jump_and_where_the_model_cannot_produce_the_records():
    """Where the profile jumps (a policy switch) the end is the jump, found to within xtol;
    where the model cannot produce the records (None) the interval stops there (definition:
    the likelihood is 0 there)."""
    res = profile_interval(lambda t: 0.0 if t < 1.0 else -5.0, (0.0, 3.0))
    assert res.high == pytest.approx(1.0, abs=1e-7) and res.at_lower_bound
    res = profile_interval(lambda t: -((t - 1.0) ** 2) if t < 1.5 else None, (0.0, 4.0))
    assert res.low == 0.0 and res.at_lower_bound
    assert res.high == pytest.approx(1.5, abs=1e-7) and not res.at_upper_bound


def test_a_higher_point_found_while_locating_an_end_moves_the_maximum():
    """A narrow peak missed by the coarse grid but met while refining makes the interval
    around it (the definition uses the true maximum, Venzon & Moolgavkar 1988)."""
    def profile(t):
        return -abs(t - 2.0) + (10.0 if 2.0 < t < 2.02 else 0.0)

    res = profile_interval(profile, (0.0, 4.0), points=5)
    assert res.max_log_likelihood >= 9.9
    assert 2.0 <= res.estimate <= 2.02
    assert all(2.0 - 1e-6 <= p.low and p.high <= 2.02 + 1e-6 for p in res.pieces)


def test_grid_version_interpolates():
    """On a grid of a quadratic profile, ends by linear interpolation lie within the grid's
    interpolation error of 2 +/- 1.96 x 0.5 (Pawitan 2001, ch. 2)."""
    t = np.linspace(0, 5, 501)
    res = profile_interval_from_grid(t, list(-((t - 2.0) ** 2) / 0.5), bounds=(0.0, 5.0))
    z = stats.norm.ppf(0.975)
    assert res.low == pytest.approx(2 - z * 0.5, abs=1e-3)
    assert res.high == pytest.approx(2 + z * 0.5, abs=1e-3)
    res = profile_interval_from_grid([1.0, 2.0, 3.0], [None, -1.0, -np.inf], bounds=(0.0, 4.0))
    assert (res.low, res.high, res.at_bound) == (2.0, 2.0, False)


def test_invalid_profiles_raise():
    """NaN or +inf, no point the model can produce, and bad bounds raise riskdiet's error type
    instead of returning a spurious interval."""
    with pytest.raises(RiskdietError):
        profile_interval(lambda t: float("nan"), (0.0, 1.0))
    with pytest.raises(RiskdietError, match="cannot produce"):
        profile_interval(lambda t: None, (0.0, 1.0))
    with pytest.raises(RiskdietError):
        profile_interval(lambda t: -t, (1.0, 1.0))
    with pytest.raises(RiskdietError):
        profile_interval_from_grid([1.0, 1.0], [0.0, 0.0])


bumps = st.lists(st.tuples(st.floats(-8, 8), st.floats(0.2, 3), st.floats(0, 6)),
                 min_size=1, max_size=4)


@settings(max_examples=40, deadline=None)
@given(bumps)
def test_pieces_are_ordered_disjoint_inside_bounds_and_hold_the_maximiser(spec):
    """Invariants of the definition (Venzon & Moolgavkar 1988) on random multimodal profiles:
    pieces are ordered, disjoint and inside the bounds; one holds the estimate; every grid
    point within 1.92 of the maximum lies in a piece; every piece end not at a bound has
    l = l_hat - 1.92."""
    def profile(t):
        return max(h - (t - c) ** 2 / (2 * s * s) for c, s, h in spec)

    grid = np.linspace(-10, 10, 41)
    res = profile_interval(profile, (-10.0, 10.0))
    ends = [x for p in res.pieces for x in (p.low, p.high)]
    assert ends == sorted(ends) and -10.0 <= ends[0] and ends[-1] <= 10.0
    assert res.contains(res.estimate)
    assert res.max_log_likelihood >= max(profile(t) for t in grid)
    for t in grid:
        if res.max_log_likelihood - profile(t) <= PROFILE_DROP - 1e-9:
            assert res.contains(t)
    for p in res.pieces:
        for end, flagged in ((p.low, p.low_at_bound), (p.high, p.high_at_bound)):
            if not flagged:
                assert profile(end) == pytest.approx(res.max_log_likelihood - PROFILE_DROP,
                                                     abs=1e-5)


def hardy_weinberg(theta: float) -> list[float]:
    return [theta**2, 2 * theta * (1 - theta), (1 - theta) ** 2]


def test_coverage_of_profile_intervals():
    """Over 400 simulated data sets (Hardy-Weinberg shares, theta = 0.3, 60 records) the 95 %
    profile interval covers the truth in 92-98 % of them (Venzon & Moolgavkar 1988; the
    likelihood-ratio interval's asymptotic coverage)."""
    rng = np.random.default_rng(12)
    covered = 0
    for _ in range(400):
        x = rng.multinomial(60, hardy_weinberg(0.3))
        res = profile_interval(
            lambda t, x=x: multinomial_log_likelihood(x, hardy_weinberg(t)).value,
            (0.0, 1.0), points=21)
        covered += res.contains(0.3)
    assert 0.92 <= covered / 400 <= 0.98
