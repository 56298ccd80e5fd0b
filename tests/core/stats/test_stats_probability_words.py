"""Tests of words for probabilities and of paired comparisons.

References used below:
Mastrandrea, M. D. et al. (2010) Guidance Note for Lead Authors of the IPCC
Fifth Assessment Report on Consistent Treatment of Uncertainties, IPCC
(likelihood scale, Table 1), with the limits as MODEL.md section 9 lists them.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.core.stats.probability_words import (
    compare_paired,
    describe_probability,
    format_probability,
    paired_probabilities,
    probability_word,
)
from riskdiet.errors import RiskdietError

FAST = settings(max_examples=200, deadline=None)

# IPCC AR5 likelihood ranges (Mastrandrea et al. 2010, Table 1), closed intervals
IPCC_RANGES = {
    "virtually certain": (0.99, 1.0),
    "very likely": (0.90, 1.0),
    "likely": (0.66, 1.0),
    "about as likely as not": (0.33, 0.66),
    "unlikely": (0.0, 0.33),
    "very unlikely": (0.0, 0.10),
    "exceptionally unlikely": (0.0, 0.01),
}


@pytest.mark.parametrize("p, word", [
    (1.0, "virtually certain"), (0.99, "virtually certain"), (0.9899, "very likely"),
    (0.95, "very likely"), (0.90, "very likely"), (0.8999, "likely"), (0.66, "likely"),
    (0.6599, "about as likely as not"), (0.5, "about as likely as not"),
    (0.3301, "about as likely as not"), (0.33, "unlikely"), (0.2, "unlikely"),
    (0.1001, "unlikely"), (0.10, "very unlikely"), (0.05, "very unlikely"),
    (0.0101, "very unlikely"), (0.01, "exceptionally unlikely"), (0.0, "exceptionally unlikely"),
])
def test_words_and_their_limits(p, word):
    """Each limit of MODEL.md section 9 (after Mastrandrea et al. 2010) on either side:
    virtually certain >= 0.99; very likely >= 0.90; likely >= 0.66; about as likely as not
    > 0.33; unlikely > 0.10; very unlikely > 0.01; exceptionally unlikely <= 0.01."""
    assert probability_word(p) == word


@FAST
@given(st.floats(0.0, 1.0))
def test_the_word_chosen_is_one_whose_ipcc_range_holds_p(p):
    """Invariant: p lies in the IPCC range of its word (Mastrandrea et al. 2010, Table 1)."""
    low, high = IPCC_RANGES[probability_word(p)]
    assert low <= p <= high


@FAST
@given(st.floats(0.0, 1.0))
def test_the_number_shown_reads_as_the_same_word(p):
    """Invariant: the number printed beside the word falls under the same word, and reads
    0 or 1 only when p is exactly 0 or 1 (never show a number one cannot vouch for)."""
    shown = format_probability(p)
    if shown[0] in "<>":
        assert p < 1e-6 or p > 1 - 1e-6
        return
    value = float(shown)
    assert probability_word(value) == probability_word(p)
    assert (value in (0.0, 1.0)) == (p in (0.0, 1.0))
    assert abs(value - p) <= 0.005


def test_descriptions():
    """The word always comes with the number (MODEL.md section 9); 0.655 needs three decimals
    because 0.66 would already be 'likely'."""
    assert describe_probability(0.93) == "very likely (p = 0.93)"
    assert describe_probability(0.655) == "about as likely as not (p = 0.655)"
    assert describe_probability(0.004) == "exceptionally unlikely (p = 0.004)"
    assert describe_probability(1.0) == "virtually certain (p = 1.00)"
    assert describe_probability(1e-9) == "exceptionally unlikely (p < 0.000001)"


@pytest.mark.parametrize("bad", [-0.1, 1.5, float("nan"), float("inf"), True, "0.5"])
def test_not_a_probability(bad):
    """Values outside [0, 1], NaN, inf and non-numbers raise instead of producing a word."""
    with pytest.raises(RiskdietError):
        probability_word(bad)


def test_paired_comparison_uses_the_relative_threshold():
    """Better by more than 1e-9 max(1, |x|) of the baseline x (MODEL.md section 9): at
    x = 1e6 the threshold is 1e-3, at x = 0.5 it is 1e-9."""
    base = [1e6, 1e6, 1e6, 0.5, 0.5, 0.5]
    scen = [1e6 + 5e-4, 1e6 + 2e-3, 1e6 - 2e-3, 0.5 + 5e-10, 0.5 + 2e-9, 0.5 - 2e-9]
    got = compare_paired(scen, base, higher_is_better=True).tolist()
    assert got == ["same", "better", "worse", "same", "better", "worse"]
    got = compare_paired(scen, base, higher_is_better=False).tolist()
    assert got == ["same", "worse", "better", "same", "worse", "better"]


def test_paired_probabilities_count_draws():
    """Shares of draws, hand-counted: of 4 draws with fewer kills the goal, 2 better (fewer),
    1 same, 1 worse (common practice: shares of paired Monte Carlo draws)."""
    res = paired_probabilities([1.0, 2.0, 3.0, 5.0], [2.0, 3.0, 3.0, 4.0], higher_is_better=False)
    assert (res.better, res.same, res.worse, res.draws) == (0.5, 0.25, 0.25, 4)


@FAST
@given(st.lists(st.tuples(st.floats(-1e6, 1e6), st.floats(-1e6, 1e6)), min_size=1, max_size=30))
def test_paired_shares_sum_to_one_and_direction_swaps_them(pairs):
    """Invariant: the three shares sum to 1; reversing the goal's direction swaps better and
    worse (definition)."""
    s, b = np.array(pairs).T
    up = paired_probabilities(s, b, True)
    down = paired_probabilities(s, b, False)
    assert up.better + up.same + up.worse == pytest.approx(1.0)
    assert (up.better, up.same, up.worse) == (down.worse, down.same, down.better)


def test_paired_comparison_refuses_nan_and_mismatched_draws():
    """NaN outcomes or unequal numbers of draws raise instead of counting silently."""
    with pytest.raises(RiskdietError):
        compare_paired([1.0, np.nan], [1.0, 1.0], True)
    with pytest.raises(RiskdietError):
        compare_paired([1.0], [1.0, 2.0], True)
    with pytest.raises(RiskdietError):
        paired_probabilities([], [], True)
