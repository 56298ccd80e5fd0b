"""Tests of the classic prey model against published rules and brute force.

References used below:
Charnov, E. L. (1976) Optimal foraging: attack strategy of a mantid. American
Naturalist 110, 141-151.
Holling, C. S. (1959) Some characteristics of simple types of predation and
parasitism. Canadian Entomologist 91, 385-398.
Werner, E. E. & Gilliam, J. F. (1984) The ontogenetic niche and species
interactions in size-structured populations. Annual Review of Ecology and
Systematics 15, 393-425.
Stephens, D. W. & Krebs, J. R. (1986) Foraging Theory, Princeton University Press.
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.core.classic import (
    EXACT_METHOD,
    HEURISTIC_METHOD,
    classic_prey_model,
    holling_rate,
)

FAST = settings(max_examples=60, deadline=None)


# --- independent plain-Python references -------------------------------------


def plain_rate(study: dict, diet: set[int]) -> float:
    """Holling (1959) multi-prey disc equation, summed term by term."""
    num = sum(study["lam"][i] * study["s"][i] * study["e"][i] for i in diet)
    den = 1.0 + sum(study["lam"][i] * study["s"][i] * study["h"][i] for i in diet)
    return num / den


def plain_mortality(study: dict, diet: set[int]) -> float:
    """Werner & Gilliam (1984) mortality rate of a diet, summed term by term."""
    risk = sum(study["lam"][i] * study["f"][i] for i in diet)
    den = 1.0 + sum(study["lam"][i] * study["s"][i] * study["h"][i] for i in diet)
    return study["mu"] + risk / den


def all_diets(count: int):
    for size in range(1, count + 1):
        yield from (set(c) for c in itertools.combinations(range(count), size))


def run(study: dict, **kwargs):
    return classic_prey_model(
        study["names"],
        study["lam"],
        study["e"],
        study["h"],
        study["s"],
        study["f"],
        study["mu"],
        study["c"],
        **kwargs,
    )


def indices(study: dict, diet) -> set[int]:
    return {study["names"].index(name) for name in diet}


def real(low: float, high: float):
    return st.floats(low, high, allow_nan=False, allow_infinity=False, allow_subnormal=False)


@st.composite
def studies(draw, min_prey: int = 1, max_prey: int = 7, min_energy: float = 0.0):
    count = draw(st.integers(min_prey, max_prey))

    def column(low, high):
        return draw(st.lists(real(low, high), min_size=count, max_size=count))

    return {
        "names": [f"prey{i}" for i in range(count)],
        "lam": column(0.0, 5.0),
        "e": column(min_energy, 50.0),
        "h": column(0.01, 5.0),
        "s": column(0.0, 1.0),
        "f": column(0.0, 0.2),
        "mu": draw(real(0.0, 0.05)),
        "c": draw(real(0.0, 20.0)),
    }


# --- rate-maximising diet ------------------------------------------------------


@FAST
@given(studies())
def test_charnov_rule_matches_best_diet_by_enumeration(study):
    """Charnov's (1976) zero-one rule reaches the highest rate of Holling's (1959)
    multi-prey disc equation over every non-empty diet, enumerated here by brute
    force; the diet is a top-k prefix of the profitability ranking (Stephens &
    Krebs 1986, ch. 2)."""
    result = run(study)
    best = max(plain_rate(study, d) for d in all_diets(len(study["names"])))
    assert result.rate_mj_per_day == pytest.approx(best, rel=1e-12, abs=1e-300)
    chosen = indices(study, result.rate_maximizing_diet)
    assert result.rate_mj_per_day == pytest.approx(plain_rate(study, chosen), rel=1e-12)
    by_rank = sorted(range(len(study["names"])), key=lambda i: result.rank[i])
    assert [study["names"][i] for i in by_rank[: len(chosen)]] == list(result.rate_maximizing_diet)


@FAST
@given(studies(), st.integers(1, 3), st.randoms(use_true_random=False))
def test_holling_rate_vectorised_matches_term_by_term_sum(study, depth, rng):
    """A stack of diet masks gives the same R(D) as Holling's (1959) disc equation
    summed term by term for each diet."""
    count = len(study["names"])
    shape = (depth, 3, count)
    flat = [rng.random() < 0.5 for _ in range(int(np.prod(shape)))]
    masks = np.array(flat, dtype=bool).reshape(shape)
    rates = holling_rate(study["lam"], study["s"], study["e"], study["h"], masks)
    assert rates.shape == shape[:-1]
    for index in np.ndindex(*shape[:-1]):
        diet = set(np.flatnonzero(masks[index]).tolist())
        assert rates[index] == pytest.approx(plain_rate(study, diet), rel=1e-12, abs=1e-300)
    single = holling_rate(study["lam"], study["s"], study["e"], study["h"], masks[0, 0])
    assert isinstance(single, float)


def test_two_prey_switching_threshold_hand_worked():
    """Two-prey threshold lambda_1 = e_2 / (e_1 h_2 - e_2 h_1) (Charnov 1976), with
    invented numbers worked by hand.

    e1 = 10 MJ, h1 = 1 day; e2 = 4 MJ, h2 = 2 day; s = 1.
    Profitabilities 10 and 2 MJ/day, so prey 1 ranks first.
    lambda_1* = 4 / (10*2 - 4*1) = 4/16 = 0.25 per day.
    At lambda_1 = 0.25: R({1}) = 0.25*10 / (1 + 0.25*1) = 2.5/1.25 = 2 = e2/h2,
    so prey 2 still joins (the rule includes on equality).
    At 0.2: R = 2/1.2 = 1.67 < 2, prey 2 joins. At 0.3: R = 3/1.3 = 2.31 > 2,
    prey 2 is left out and its threshold is reported as 0.25.
    """

    def model(lam1, s1=1.0):
        return classic_prey_model(
            ["big", "small"], [lam1, 1.0], [10.0, 4.0], [1.0, 2.0], [s1, 1.0], [0.0, 0.0], 0.0, 0.5
        )

    above = model(0.3)
    assert above.profitability_mj_per_day.tolist() == [10.0, 2.0]
    assert above.rank.tolist() == [1, 2]
    assert above.rate_maximizing_diet == ("big",)
    assert above.rate_mj_per_day == pytest.approx(3.0 / 1.3, rel=1e-14)
    assert above.switching_threshold_per_day["small"] == pytest.approx(0.25, rel=1e-14)
    assert model(0.25).rate_maximizing_diet == ("big", "small")
    assert model(0.2).rate_maximizing_diet == ("big", "small")
    assert model(0.2).switching_threshold_per_day == {}
    assert model(0.26).rate_maximizing_diet == ("big",)


def test_two_prey_switching_threshold_with_capture_success():
    """Charnov's (1976) two-prey threshold with capture success s_1 on the better
    prey: lambda_1 s_1 e_1 / (1 + lambda_1 s_1 h_1) = e_2/h_2 gives
    lambda_1* = e_2 / (s_1 (e_1 h_2 - e_2 h_1)). Hand-worked: s1 = 0.5 with
    e1 = 10, h1 = 1, e2 = 4, h2 = 2 gives 4 / (0.5 * 16) = 0.5 per day; at 0.5,
    0.5*0.5*10 / (1 + 0.25) = 2.5/1.25 = 2 = e2/h2."""
    result = classic_prey_model(
        ["big", "small"], [0.8, 1.0], [10.0, 4.0], [1.0, 2.0], [0.5, 1.0], [0.0, 0.0], 0.0, 0.5
    )
    assert result.rate_maximizing_diet == ("big",)
    assert result.switching_threshold_per_day["small"] == pytest.approx(0.5, rel=1e-14)


def test_three_prey_switching_threshold_hand_worked():
    """Switching threshold with two better prey scaled together, from Holling's
    (1959) disc equation and Charnov's (1976) rule. Invented numbers, by hand:
    e = (10, 6, 1) MJ, h = 1 day each, lambda = 1/day each, s = 1.
    R(top 1) = 10/2 = 5 <= 6, prey 2 joins; R(top 2) = 16/3 = 5.33 > 1, prey 3 is
    left out. Scaling both better prey by t: 16t / (1 + 2t) = 1 gives t = 1/14,
    total encounter rate 2t = 1/7 per day."""
    result = classic_prey_model(
        ["a", "b", "c"], [1.0, 1.0, 1.0], [10.0, 6.0, 1.0], [1.0] * 3, [1.0] * 3, [0.0] * 3, 0, 1
    )
    assert result.rate_maximizing_diet == ("a", "b")
    assert result.rate_mj_per_day == pytest.approx(16.0 / 3.0, rel=1e-14)
    assert result.switching_threshold_per_day == {"c": pytest.approx(1.0 / 7.0, rel=1e-14)}


@FAST
@given(studies(min_prey=2, min_energy=0.1))
def test_switching_threshold_is_where_the_better_prey_rate_equals_profitability(study):
    """For each excluded prey j, scaling the encounter rates of all better-ranked
    prey so that they total the reported threshold makes their Holling (1959) rate
    equal e_j/h_j (recomputed term by term); 1% fewer brings j back into Charnov's
    (1976) diet, 1% more keeps it out."""
    result = run(study)
    order = sorted(range(len(study["names"])), key=lambda i: result.rank[i])
    for name, threshold in result.switching_threshold_per_day.items():
        j = study["names"].index(name)
        better = order[: order.index(j)]
        total = sum(study["lam"][i] for i in better)
        profitability = study["e"][j] / study["h"][j]
        assert math.isfinite(threshold)
        assert threshold < total * (1 + 1e-12)  # it is excluded now
        for factor, included in ((1.0, None), (0.99, True), (1.01, False)):
            scaled = dict(study, lam=list(study["lam"]))
            for i in better:
                scaled["lam"][i] = study["lam"][i] * factor * threshold / total
            if included is None:
                rate = plain_rate(scaled, set(better))
                assert rate == pytest.approx(profitability, rel=1e-9)
            else:
                assert (name in run(scaled).rate_maximizing_diet) is included


def test_zero_handling_and_zero_encounter_prey():
    """Zero handling time means infinite profitability, ranked first and always
    included; a prey never met is ranked but leaves the Holling (1959) rate
    unchanged (common practice). Hand-worked: prey "carrion" e = 3 MJ, h = 0,
    lambda = 0.5; prey "deer" e = 10 MJ, h = 1 day, lambda = 1. R({carrion}) = 1.5
    <= 10, deer joins; R = (1.5 + 10) / (1 + 1) = 5.75 MJ/day."""
    result = classic_prey_model(
        ["deer", "ghost", "carrion"],
        [1.0, 0.0, 0.5],
        [10.0, 40.0, 3.0],
        [1.0, 1.0, 0.0],
        [1.0, 1.0, 1.0],
        [0.0, 0.0, 0.0],
        0.0,
        1.0,
    )
    assert math.isinf(result.profitability_mj_per_day[2])
    assert result.rank.tolist() == [3, 2, 1]
    assert result.rate_maximizing_diet == ("carrion", "ghost", "deer")
    assert result.rate_mj_per_day == pytest.approx(5.75, rel=1e-14)


def test_equal_profitability_ties_go_to_listing_order():
    """Ties in e/h are broken by listing order (our documented convention)."""
    result = classic_prey_model(
        ["second", "first", "top"],
        [1.0, 1.0, 1.0],
        [4.0, 2.0, 9.0],
        [2.0, 1.0, 1.0],
        [1.0] * 3,
        [0.0] * 3,
        0.0,
        1.0,
    )
    assert result.rank.tolist() == [2, 3, 1]


# --- risk-adjusted diet --------------------------------------------------------


def brute_gilliam(study: dict):
    """All non-empty diets with g > 0 as (ratio, gain, diet), best ratio first."""
    rows = []
    for diet in all_diets(len(study["names"])):
        gain = plain_rate(study, diet) - study["c"]
        if gain > 0:
            rows.append((plain_mortality(study, diet) / gain, gain, diet))
    return sorted(rows, key=lambda row: row[0])


def assert_local_optimum(study: dict, diet: set[int], ratio: float) -> None:
    """No single addition or removal lowers mu/g (recomputed term by term)."""
    for i in range(len(study["names"])):
        other = diet ^ {i}
        if not other:
            continue
        gain = plain_rate(study, other) - study["c"]
        if gain > 0:
            assert plain_mortality(study, other) / gain >= ratio * (1 - 1e-9)


def check_against_brute_force(study: dict, result) -> None:
    rows = brute_gilliam(study)
    if not rows:
        assert result.risk_adjusted_diet is None
        assert not result.meets_daily_cost
        return
    assert result.meets_daily_cost
    diet = indices(study, result.risk_adjusted_diet)
    gain = plain_rate(study, diet) - study["c"]
    mortality = plain_mortality(study, diet)
    assert result.risk_adjusted_net_gain_mj_per_day == pytest.approx(gain, rel=1e-9, abs=1e-12)
    assert result.risk_adjusted_mortality_per_day == pytest.approx(mortality, rel=1e-12)
    best_ratio = rows[0][0]
    assert mortality / gain == pytest.approx(best_ratio, rel=1e-9, abs=1e-300)
    near = [row for row in rows if row[0] <= best_ratio * (1 + 1e-9)]
    if len(near) == 1:
        assert diet == rows[0][2]
    else:
        # Diets this close are tied beyond doubt (sums differ only by rounding):
        # the documented tie rule must give one of the highest net gain.
        tied = [row for row in rows if row[0] <= best_ratio * (1 + 1e-13)]
        assert gain >= max(row[1] for row in tied) * (1 - 1e-12)


@FAST
@given(studies())
def test_gilliam_diet_matches_brute_force(study):
    """Gilliam's rule (Werner & Gilliam 1984): the reported diet minimises
    mu(D)/g(D) over every non-empty diet with g > 0, checked against a plain
    itertools enumeration; near ties must go to the highest net gain."""
    result = run(study)
    assert result.risk_adjusted_method == EXACT_METHOD
    check_against_brute_force(study, result)


def test_risk_free_ties_go_to_highest_net_gain():
    """With no fatality and no background mortality every diet has mu(D) = 0, so
    mu/g ties at 0 (Werner & Gilliam 1984); the documented tie rule picks the
    highest g, which is Charnov's (1976) rate-maximising diet."""
    study = {
        "names": ["a", "b", "c", "d"],
        "lam": [0.4, 1.0, 2.0, 0.7],
        "e": [12.0, 5.0, 1.0, 8.0],
        "h": [1.0, 0.8, 0.5, 2.0],
        "s": [0.9, 0.6, 1.0, 0.5],
        "f": [0.0] * 4,
        "mu": 0.0,
        "c": 0.5,
    }
    result = run(study)
    assert result.risk_adjusted_mortality_per_day == 0.0
    assert set(result.risk_adjusted_diet) == set(result.rate_maximizing_diet)
    best = max(plain_rate(study, d) for d in all_diets(4)) - study["c"]
    assert result.risk_adjusted_net_gain_mj_per_day == pytest.approx(best, rel=1e-12)


@settings(max_examples=15, deadline=None)
@given(studies(min_prey=17, max_prey=22))
def test_heuristic_above_limit_is_valid_and_no_worse_than_its_starts(study):
    """Above 16 prey types the local search returns a non-empty diet with
    g > 0 whose mu/g (Werner & Gilliam 1984, recomputed term by term) is no worse
    than Charnov's (1976) rate-maximising diet or the best single prey type, and
    that no single addition or removal improves (checked by brute force over
    its neighbours)."""
    result = run(study)
    assert result.risk_adjusted_method == HEURISTIC_METHOD
    charnov = indices(study, result.rate_maximizing_diet)
    charnov_gain = plain_rate(study, charnov) - study["c"]
    assert result.meets_daily_cost == (charnov_gain > 0)
    if charnov_gain <= 0:
        assert result.risk_adjusted_diet is None
        return
    diet = indices(study, result.risk_adjusted_diet)
    assert diet and len(diet) == len(result.risk_adjusted_diet)
    gain = plain_rate(study, diet) - study["c"]
    assert gain > 0
    ratio = plain_mortality(study, diet) / gain
    assert ratio <= plain_mortality(study, charnov) / charnov_gain * (1 + 1e-9)
    assert_local_optimum(study, diet, ratio)
    for i in range(len(study["names"])):
        single_gain = plain_rate(study, {i}) - study["c"]
        if single_gain > 0:
            assert ratio <= plain_mortality(study, {i}) / single_gain * (1 + 1e-9)


@FAST
@given(studies())
def test_heuristic_on_small_cases_bounded_by_enumeration(study):
    """Forcing the local search on small cases: its mu/g can never beat the true
    optimum found by a plain itertools enumeration (Werner & Gilliam 1984), never
    loses to Charnov's (1976) diet it starts from, and ends where no single
    addition or removal improves."""
    result = run(study, exact_limit=0)
    rows = brute_gilliam(study)
    assert (result.risk_adjusted_diet is None) == (not rows)
    if not rows:
        return
    diet = indices(study, result.risk_adjusted_diet)
    gain = plain_rate(study, diet) - study["c"]
    ratio = plain_mortality(study, diet) / gain
    assert ratio >= rows[0][0] * (1 - 1e-9)
    assert_local_optimum(study, diet, ratio)
    charnov = indices(study, result.rate_maximizing_diet)
    charnov_gain = plain_rate(study, charnov) - study["c"]
    assert ratio <= plain_mortality(study, charnov) / charnov_gain * (1 + 1e-9)


@pytest.mark.parametrize("exact_limit", [16, 0])
def test_only_a_mixed_diet_pays_the_cost(exact_limit):
    """Two prey that each fall short of the daily cost but together exceed it
    (Holling 1959 disc equation), so Gilliam's rule (Werner & Gilliam 1984) has a
    single candidate; the local search must find it from the rate-maximising
    diet since no single prey type is a valid start. Hand-worked: e = 3 MJ,
    h = 1 day, lambda = 0.45/day, s = 1 each, c = 1 MJ/day:
    R({a}) = 1.35/1.45 = 0.93 < 1, R({a, b}) = 2.7/1.9 = 1.42 > 1."""
    result = classic_prey_model(
        ["a", "b"],
        [0.45, 0.45],
        [3.0, 3.0],
        [1.0, 1.0],
        [1.0, 1.0],
        [0.0, 0.01],
        0.001,
        1.0,
        exact_limit=exact_limit,
    )
    assert result.rate_maximizing_diet == ("a", "b")
    assert result.risk_adjusted_diet == ("a", "b")
    assert result.risk_adjusted_net_gain_mj_per_day == pytest.approx(2.7 / 1.9 - 1.0, rel=1e-14)
    # mu(D) = 0.001 + 0.45*0.01 / 1.9
    assert result.risk_adjusted_mortality_per_day == pytest.approx(0.001 + 0.0045 / 1.9, rel=1e-14)


@pytest.mark.parametrize("exact_limit", [16, 0])
@pytest.mark.parametrize("cost", [1.0, 1.5])
def test_no_diet_meets_daily_cost(cost, exact_limit):
    """When no diet's Holling (1959) rate exceeds the daily cost, Gilliam's rule
    (Werner & Gilliam 1984) has no diet with g > 0. Hand-worked: lambda = (1, 0.5),
    e = (2, 1) MJ, h = (1, 1) day, s = 1: R({1}) = 2/2 = 1, R({2}) = 0.5/1.5 = 0.33,
    R({1,2}) = 2.5/2.5 = 1 MJ/day; a cost of 1 (g = 0 exactly) or 1.5 leaves none."""
    result = classic_prey_model(
        ["a", "b"],
        [1.0, 0.5],
        [2.0, 1.0],
        [1.0, 1.0],
        [1.0, 1.0],
        [0.01, 0.0],
        0.001,
        cost,
        exact_limit=exact_limit,
    )
    assert result.rate_mj_per_day == pytest.approx(1.0, rel=1e-14)
    assert result.risk_adjusted_diet is None
    assert result.risk_adjusted_mortality_per_day is None
    assert result.risk_adjusted_net_gain_mj_per_day is None
    assert result.meets_daily_cost is False
    assert "no diet meets the daily cost" in result.statement.lower()
    assert "does not apply" in result.statement


def test_to_dict_is_strict_json_and_ranked():
    """to_dict survives json.dumps(allow_nan=False) with an infinitely profitable
    prey (h = 0) and an excluded prey, and lists the ranking by rank (common
    practice for a profitability table)."""
    result = classic_prey_model(
        ["deer", "hare", "carrion", "mouse"],
        [0.5, 2.0, 0.1, 5.0],
        [60.0, 4.0, 8.0, 0.05],
        [1.0, 0.2, 0.0, 0.1],
        [0.3, 0.5, 1.0, 0.8],
        [0.01, 0.0, 0.0, 0.0],
        0.001,
        10.0,
    )
    data = json.loads(json.dumps(result.to_dict(), allow_nan=False))
    ranks = [row["rank"] for row in data["ranking"]]
    assert ranks == [1, 2, 3, 4]
    assert [row["name"] for row in data["ranking"]] == ["carrion", "deer", "hare", "mouse"]
    assert data["ranking"][0]["profitability_mj_per_day"] is None
    assert data["ranking"][1]["profitability_mj_per_day"] == 60.0
    assert data["rate_maximizing_diet"] == list(result.rate_maximizing_diet)
    assert "mouse" in data["switching_threshold_per_day"]
    assert data["risk_adjusted_diet"] == list(result.risk_adjusted_diet)
    assert data["meets_daily_cost"] is True


def test_result_arrays_are_read_only():
    """Results are documented data and must not be altered after the fact (common practice)."""
    result = classic_prey_model(["a"], [1.0], [2.0], [1.0], [1.0], [0.0], 0.0, 0.5)
    with pytest.raises(ValueError):
        result.rank[0] = 5


@pytest.mark.parametrize(
    "change",
    [
        {"lam": [1.0]},
        {"s": [1.2, 0.5]},
        {"f": [1.0, 0.0]},
        {"h": [-1.0, 1.0]},
        {"e": [float("nan"), 1.0]},
        {"names": ["a", "a"]},
        {"mu": 1.0},
        {"c": -1.0},
    ],
)
def test_invalid_inputs_raise_value_error(change):
    """Programming errors (wrong lengths, out-of-range values) raise ValueError
    (common practice)."""
    study = {
        "names": ["a", "b"],
        "lam": [1.0, 1.0],
        "e": [2.0, 1.0],
        "h": [1.0, 1.0],
        "s": [1.0, 0.5],
        "f": [0.0, 0.0],
        "mu": 0.0,
        "c": 0.5,
    }
    with pytest.raises(ValueError):
        run({**study, **change})


def test_mask_of_wrong_width_raises():
    """A diet mask must have one column per prey type (common practice)."""
    with pytest.raises(ValueError):
        holling_rate([1.0, 1.0], [1.0, 1.0], [1.0, 1.0], [1.0, 1.0], [True, False, True])
