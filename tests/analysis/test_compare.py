"""Scenario comparison table and the reserve levels at which prey enter the diet."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import riskdiet
from riskdiet.analysis.compare import comparison_table, entry_reserves

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "harrow-vale.json"


@pytest.fixture(scope="module")
def result():
    return riskdiet.solve(riskdiet.load_study(EXAMPLE))


def test_deltas_are_differences_against_baseline(result):
    """Each delta is value minus baseline value and each percentage is 100 delta / baseline
    (the definitions of absolute and relative change; common practice)."""
    table = comparison_table(result)
    base = table.rows[0]
    for row, deltas, pct in zip(table.rows, table.deltas, table.percent, strict=True):
        for v, b, d, p in zip(row[1:], base[1:], deltas[1:], pct[1:], strict=True):
            if isinstance(v, float) and isinstance(b, float):
                assert d == pytest.approx(v - b, abs=1e-15)
                if b != 0:
                    assert p == pytest.approx(100 * (v - b) / b)
    assert all(d in (None, 0.0) for d in table.deltas[0][1:])


def test_rows_and_columns(result):
    """One row per scenario, baseline first; columns named with their units and groups."""
    table = comparison_table(result)
    assert [r[0] for r in table.rows] == [s.name for s in result.scenarios]
    keys = table.keys
    assert "fitness_at_start" in keys
    assert "kills_per_year_population_livestock" in keys
    assert "kills_per_year_population_wild" not in keys  # wild prey are not "unwanted"
    assert "share_of_time_injured" in keys
    for name in result.scenarios[0].prey_names:
        assert f"healthy_takes_below_fraction_{name}" in keys
        assert f"injured_takes_below_fraction_{name}" in keys


def test_entry_reserves_read_from_policy(result):
    """The reserve fraction below which a prey is taken is the highest living level whose
    optimal attack set holds it, divided by n (MODEL.md section 7: thresholds as fractions
    of R), read here directly from the solver's priority array."""
    s = result.scenarios[0]
    for k, cond in enumerate(("healthy", "injured")):
        for i, name in enumerate(s.prey_names):
            attacked = np.flatnonzero(s.solution.priority[k, :, i] >= 0)
            expected = attacked.max() / s.grid.n if attacked.size else None
            assert entry_reserves(s, name, cond) == expected


def test_group_kills_sum_prey_kills(result):
    """Group columns are sums over the prey of each group (definition of a group total)."""
    table = comparison_table(result)
    col = table.keys.index("kills_per_predator_per_year_livestock")
    for s, row in zip(result.scenarios, table.rows, strict=True):
        ewes = sum(v for n, v in s.kills.kills_per_predator_per_year.items()
                   if next(p for p in s.prey if p.name == n).group == "livestock")
        assert row[col] == pytest.approx(ewes)
