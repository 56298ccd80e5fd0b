"""Tests of the policy-regime names on hand-built attack tables.

References used below:
MODEL.md section 7 (the regime definitions: read the attack set level by level
from low to high reserves; every prey at all reserves, only low-risk prey, only
risky prey, reserve-dependent with the reserve fractions where the set
changes, nothing taken). Every expected name and threshold below is worked by
hand from those definitions for a table built in the test; none is copied from
a run of the code.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.analysis.regimes import (
    MERGE_FRACTION,
    WHEN_KEYS,
    classify,
    when_attacked,
    when_threshold,
)

NAMES = ["hare", "deer", "boar"]
RISKY = np.array([False, True, True])


def table(levels: int, runs: list[tuple[int, list[bool]]]) -> np.ndarray:
    """Attack table (levels x prey) from runs of (number of levels, attacked flags)."""
    rows = [flags for count, flags in runs for _ in range(count)]
    assert len(rows) == levels
    return np.array(rows, dtype=bool)


def fractions_of(levels: int, capacity_levels: int) -> np.ndarray:
    """Reserve fraction j / n of living levels 1..levels."""
    return np.arange(1, levels + 1) / capacity_levels


@pytest.mark.parametrize(("flags", "category"), [
    ([True, True, True], "all prey at all reserves"),
    ([True, False, False], "low-risk prey only"),
    ([False, True, True], "risky prey only"),
    ([False, False, False], "nothing taken"),
])
def test_one_set_at_every_level_is_named_without_numbers(flags, category):
    """The same attack set at every level gives one of the plain regimes of
    MODEL.md section 7 (all prey at all reserves; only low-risk prey; only risky
    prey; nothing taken), with no reserve thresholds; category and detail agree.
    Expected names worked by hand from the definitions."""
    attacked = np.tile(flags, (19, 1))
    regime = classify(attacked, RISKY, NAMES, fractions_of(19, 20))
    assert regime.category == category
    assert regime.detail == category
    assert regime.thresholds == ()


def test_one_set_skipping_a_prey_is_named_by_what_is_skipped():
    """With three prey, a set that is neither a whole risk class nor all prey
    is named by the one or two prey it skips (MODEL.md section 7: name the
    sets; riskdiet.analysis.regimes.describe_set; worked by hand)."""
    fr = fractions_of(10, 10)
    skip_boar = classify(np.tile([True, True, False], (10, 1)), RISKY, NAMES, fr)
    assert skip_boar.category == "all but boar at all reserves"
    only_deer = classify(np.tile([False, True, False], (10, 1)), RISKY, NAMES, fr)
    assert only_deer.category == "all but hare and boar at all reserves"


def test_reserve_dependent_thresholds_are_the_first_level_of_each_new_set():
    """n = 20 levels, living levels 1..19 (reserves j/20 of capacity). All prey
    are attacked at levels 1-7, only the low-risk prey at 8-15, only the risky
    prey at 16-19. Reading from low to high reserves (MODEL.md section 7) the set
    changes at level 8 (reserves 8/20 = 40 %) and level 16 (16/20 = 80 %);
    worked by hand."""
    attacked = table(19, [(7, [True, True, True]), (8, [True, False, False]),
                          (4, [False, True, True])])
    regime = classify(attacked, RISKY, NAMES, fractions_of(19, 20))
    assert regime.category == ("reserve-dependent: all prey, then low-risk prey only, "
                               "then risky prey only")
    assert regime.sets == ("all prey", "low-risk prey only", "risky prey only")
    assert regime.thresholds == pytest.approx((0.40, 0.80), abs=1e-15)
    assert regime.detail == ("reserve-dependent: all prey below 40 %, low-risk prey only "
                             "from 40 to 80 %, risky prey only above")


def test_levels_with_nothing_attacked_at_the_bottom_are_left_out():
    """Levels at the bottom of the grid where nothing is attacked are not a
    regime of their own (riskdiet.analysis.regimes module notes, applied to MODEL.md
    section 7): nothing at levels 1-3, then all prey, is "all prey at all
    reserves"; worked by hand."""
    attacked = table(19, [(3, [False, False, False]), (16, [True, True, True])])
    regime = classify(attacked, RISKY, NAMES, fractions_of(19, 20))
    assert regime.category == "all prey at all reserves"
    assert regime.thresholds == ()


def test_short_run_merges_into_its_neighbour_in_the_category_only():
    """A run shorter than MERGE_FRACTION of the levels is a grid detail: the
    category fuses it with the run below (and two equal neighbours then merge),
    the detail keeps every change (riskdiet.analysis.regimes, MERGE_FRACTION; MODEL.md
    section 7). n = 100, living levels 1..99: all prey at 1-49, low-risk only at
    50-51 (2 levels < ceil(0.05 * 99) = 5), all prey at 52-79, risky only at
    80-99. Worked by hand: category "all prey, then risky prey only" with the
    one threshold at level 80 (80 %); detail changes at 50, 52 and 80 %."""
    assert int(np.ceil(MERGE_FRACTION * 99)) == 5
    attacked = table(99, [(49, [True, True, True]), (2, [True, False, False]),
                          (28, [True, True, True]), (20, [False, True, True])])
    regime = classify(attacked, RISKY, NAMES, fractions_of(99, 100))
    assert regime.category == "reserve-dependent: all prey, then risky prey only"
    assert regime.thresholds == pytest.approx((0.80,), abs=1e-15)
    assert regime.detail == ("reserve-dependent: all prey below 50 %, low-risk prey only "
                             "from 50 to 52 %, all prey from 52 to 80 %, risky prey only "
                             "above")


def test_short_first_run_merges_into_the_next():
    """A short run at the lowest attacked levels joins the run above it in the
    category (there is no run below); the detail still shows it (riskdiet.analysis.regimes,
    MODEL.md section 7). n = 40: risky only at level 1, all prey at 2-39;
    ceil(0.05 * 39) = 2 levels is the shortest kept run. Worked by hand."""
    attacked = table(39, [(1, [False, True, True]), (38, [True, True, True])])
    regime = classify(attacked, RISKY, NAMES, fractions_of(39, 40))
    assert regime.category == "all prey at all reserves"
    assert regime.thresholds == ()
    assert regime.detail == "reserve-dependent: risky prey only below 5 %, all prey above"


def test_long_runs_are_never_merged():
    """Runs at least MERGE_FRACTION of the levels long stay separate regimes in
    the category (MODEL.md section 7: reserve-dependent, list the sets). n = 40,
    low-risk only at 1-2 (2 levels = the shortest kept run), all prey at 3-39;
    threshold at level 3 = 7.5 % of capacity. Worked by hand."""
    attacked = table(39, [(2, [True, False, False]), (37, [True, True, True])])
    regime = classify(attacked, RISKY, NAMES, fractions_of(39, 40))
    assert regime.category == "reserve-dependent: low-risk prey only, then all prey"
    assert regime.thresholds == pytest.approx((0.075,), abs=1e-15)


# ------------------------------------------------------------------ when each prey is taken


def runs_of(column: np.ndarray) -> list[tuple[int, int]]:
    """First and last index of every run of True (written for the test)."""
    out, start = [], None
    for j, v in enumerate([*column.tolist(), False]):
        if v and start is None:
            start = j
        elif not v and start is not None:
            out.append((start, j - 1))
            start = None
    return out


def by_hand(attacked: np.ndarray, fractions: np.ndarray) -> list[tuple[str, float]]:
    """The when-attacked category and threshold of each prey, read straight from the
    definition (module docstring of regimes.when_attacked; common practice for
    "taken only when reserves are low / high"): one run from the lowest level at
    which anything is attacked to the top is "all", one run from that level that
    stops below the top is "low" (threshold: its highest level), one run reaching
    the top from higher up is "high" (threshold: its lowest level), anything else
    "other"."""
    any_rows = np.flatnonzero(attacked.any(axis=1))
    out = []
    for i in range(attacked.shape[1]):
        runs = runs_of(attacked[:, i])
        if not runs:
            out.append(("never", np.nan))
            continue
        top = attacked.shape[0] - 1
        if len(runs) == 1 and runs[0][0] == any_rows[0] and runs[0][1] == top:
            out.append(("all_reserves", np.nan))
        elif len(runs) == 1 and runs[0][0] == any_rows[0]:
            out.append(("low_reserves", fractions[runs[0][1]]))
        elif len(runs) == 1 and runs[0][1] == top:
            out.append(("high_reserves", fractions[runs[0][0]]))
        else:
            out.append(("other", np.nan))
    return out


def test_when_attacked_on_a_hand_built_table():
    """Ten living levels of a grid with n = 10 (fractions 0.1 ... 1.0). Levels 1-2
    attack nothing (hopeless). Hare is taken from level 3 to the top: "at all
    reserves" — the hopeless bottom does not count against it. Deer from level 3
    to 6: "only when reserves are low", threshold 0.6 (its highest level). Boar
    from level 8 to the top: "only when reserves are high", threshold 0.8. Each
    worked by hand from the definition (MODEL.md section 7 read per prey;
    common-practice wording)."""
    attacked = table(10, [(2, [False, False, False]), (4, [True, True, False]),
                          (1, [True, False, False]), (3, [True, False, True])])
    codes, lower, upper = when_attacked(attacked, fractions_of(10, 10))
    assert [WHEN_KEYS[c] for c in codes] == ["all_reserves", "low_reserves", "high_reserves"]
    threshold = when_threshold(codes, lower, upper)
    assert np.isnan(threshold[0])
    assert threshold[1] == pytest.approx(0.6)
    assert threshold[2] == pytest.approx(0.8)
    assert lower.tolist() == pytest.approx([0.3, 0.3, 0.8])
    assert upper.tolist() == pytest.approx([1.0, 0.6, 1.0])


@pytest.mark.parametrize(("column", "expected"), [
    ([0, 0, 0, 0, 0, 0], "never"),
    ([1, 1, 0, 0, 1, 1], "other"),      # two runs: taken when low and when high
    ([0, 1, 1, 0, 0, 0], "other"),      # one run in the middle
    ([1, 1, 1, 1, 1, 1], "all_reserves"),
    ([1, 0, 0, 0, 0, 0], "low_reserves"),
    ([0, 0, 0, 0, 0, 1], "high_reserves"),
])
def test_when_attacked_categories(column, expected):
    """One prey beside a hare taken at every level (so the lowest level with an
    attack is level 1): the category follows the definition worked by hand —
    never; two runs or a run in the middle are "other"; one run from the bottom
    to the top is "at all reserves"; from the bottom only "low"; to the top only
    "high" (common-practice wording)."""
    attacked = np.array([[True, bool(v)] for v in column])
    codes, _, _ = when_attacked(attacked, fractions_of(6, 6))
    assert WHEN_KEYS[codes[1]] == expected
    assert WHEN_KEYS[codes[0]] == "all_reserves"


@settings(max_examples=150, deadline=None)
@given(st.integers(2, 12).flatmap(lambda m: st.lists(
    st.lists(st.booleans(), min_size=3, max_size=3), min_size=m, max_size=m)))
def test_when_attacked_matches_the_definition_on_any_table(rows):
    """For any attack table (levels x 3 prey) the vectorised reading equals the
    run-by-run reading of the definition written separately in this test; and a
    stack of tables is read like each table alone."""
    attacked = np.array(rows, dtype=bool)
    fractions = fractions_of(len(rows), len(rows) + 1)
    codes, lower, upper = when_attacked(attacked, fractions)
    thresholds = when_threshold(codes, lower, upper)
    for i, (key, threshold) in enumerate(by_hand(attacked, fractions)):
        assert WHEN_KEYS[codes[i]] == key
        if np.isnan(threshold):
            assert np.isnan(thresholds[i])
        else:
            assert thresholds[i] == threshold
    stacked, _, _ = when_attacked(np.stack([attacked, ~attacked]), fractions)
    assert stacked[0].tolist() == codes.tolist()
    assert stacked[1].tolist() == when_attacked(~attacked, fractions)[0].tolist()
