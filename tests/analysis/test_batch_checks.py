"""The array check of many cells' inputs agrees with the record-by-record check.

Reference: riskdiet.validation.check_values, the study's own input checks
(field bounds from riskdiet.fields, cross-field rules of MODEL.md section 1),
applied one cell at a time; and riskdiet.analysis.cells.cell_inputs for the
located messages of a failing cell.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from conftest import injury_raw
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.analysis.batch_checks import problem_free
from riskdiet.analysis.cells import Cell, InputChange, cell_inputs, solve_cells
from riskdiet.errors import StudyError
from riskdiet.fields import INTEGER, field_specs
from riskdiet.model import Predator, Prey
from riskdiet.validation import build_study, check_values

BLANKABLE = {"daily_cost_mj", "body_mass_kg", "search_area_km2_per_day", "encounters_per_day",
             "density_per_km2", "season_days"}
NUMBERS = st.sampled_from([-1.0, 0.0, 1e-9, 0.3, 0.5, 0.6, 0.7, 0.999, 1.0, 1.5, 40.0, math.nan,
                           math.inf, None])
WHOLE = st.sampled_from([-1, 0, 1, 2, 3, 40, 2000, 3650, 10 ** 9, None])


def _changed(data, record, cls):
    specs = {n: s for n, s in field_specs(cls).items() if s.numeric}
    changes = {}
    for name in data.draw(st.lists(st.sampled_from(sorted(specs)), max_size=3)):
        value = data.draw(WHOLE if specs[name].kind == INTEGER else NUMBERS)
        if value is None and name not in BLANKABLE:
            continue
        changes[name] = value
    return dataclasses.replace(record, **changes)


@settings(max_examples=150, deadline=None)
@given(st.data())
def test_array_check_equals_check_values(data):
    """For cells with a few inputs set to values in, on and beyond their bounds
    (blanks, NaN and inf included), a cell passes the array check exactly when
    check_values finds no problem."""
    raw = injury_raw(currency=data.draw(st.sampled_from(["breeding", "season"])),
                     season_days=30)
    study = build_study(raw)
    inputs = []
    for _ in range(data.draw(st.integers(1, 4))):
        predator = _changed(data, study.predator, Predator)
        prey = tuple(_changed(data, p, Prey) for p in study.prey)
        inputs.append((predator, prey))
    got = problem_free(inputs)
    for b, (predator, prey) in enumerate(inputs):
        problems, _ = check_values(predator, prey, lambda f: f, lambda i, f: f)
        assert bool(got[b]) == (not problems), problems


def test_array_check_of_the_size_rule():
    """A season of 3650 days on 2000 levels with 24 prey needs more than 2 GiB of
    arrays (check_values's size rule; 8 bytes x 2 x 2001 x 3650 x 25, counted
    directly): the array check sends exactly that cell to check_values."""
    raw = injury_raw(currency="season", season_days=3650, energy_levels=2000)
    raw["prey"] = [dict(p, name=f"{p['name']} {k}") for k in range(8) for p in raw["prey"]]
    big = build_study(dict(raw, predator=dict(raw["predator"], season_days=30)))
    predator = dataclasses.replace(big.predator, season_days=3650)
    inputs = [(predator, big.prey), (big.predator, big.prey)]
    assert 8.0 * 2 * 2001 * 3650 * 25 > 2 * 1024 ** 3
    assert problem_free(inputs).tolist() == [False, True]
    assert check_values(predator, big.prey, lambda f: f, lambda i, f: f)[0]


def test_failing_cells_keep_their_located_messages():
    """A batch reports each invalid cell with the problems cell_inputs names for
    it (cell label and field), and solves the others."""
    study = build_study(injury_raw())
    cells = [Cell("baseline", (InputChange("deer", "capture_success", 1.5),), "draw 1"),
             Cell("baseline", (InputChange(None, "hunting_ability", 1.2),), "draw 2"),
             Cell("baseline", (InputChange(None, "background_mortality", 0.99),
                               InputChange(None, "injured_extra_mortality", 0.5)), "draw 3")]
    results = solve_cells(study, cells)
    assert [r.ok for r in results] == [False, True, False]
    for cell, result in zip(cells, results, strict=True):
        if result.ok:
            continue
        try:
            cell_inputs(study, cell)
        except StudyError as err:
            want = "; ".join(str(p) for p in err.problems)
        assert result.failure == f"invalid inputs: {want}"
        assert cell.label in result.failure
    assert np.isfinite(results[1].fitness_at_start)
