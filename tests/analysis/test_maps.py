"""Tests of two-input maps against separate single-study solves.

References used below:
Puterman, M. L. (1994). Markov Decision Processes. Wiley, ch. 7 (the optimal
value and policy of a study do not depend on how its solve is organised, so a
map cell must equal the study solved on its own).
Kemeny, J. G. & Snell, J. L. (1960). Finite Markov Chains. Van Nostrand (the
fundamental matrix behind riskdiet.core.chain.steady_state, the reference for kill
rates).
Mangel, M. & Clark, C. W. (1988). Dynamic Modeling in Behavioral Ecology.
Princeton University Press (backward induction, the season currency).
Lande, R. (1979). Evolution 33, 402-416 (selection gradient = derivative of
fitness in the trait).
Milgrom, P. & Segal, I. (2002). Envelope theorems for arbitrary choice sets.
Econometrica 70, 583-601 (the derivative of the optimum equals the derivative
at the fixed optimal choice; zero when the objective does not depend on the
parameter at that choice).
Press, W. H., Teukolsky, S. A., Vetterling, W. T. & Flannery, B. P. (2007).
Numerical Recipes, 3rd ed. Cambridge University Press, section 5.7 (central
differences, error O(h^2)).
Kingman, J. F. C. (1993). Poisson Processes. Oxford University Press, ch. 2
(superposition: independent Poisson encounter streams add their rates).
The reference solves are riskdiet.core.solver.solve_grid on riskdiet.core.grid.make_grid
(tested separately against Feller's ruin problem and an independent simulation),
riskdiet.core.chain.steady_state and riskdiet.core.season_chain.season_outlook.
"""

from __future__ import annotations

import copy
import dataclasses
import json
from concurrent.futures import ProcessPoolExecutor

import numpy as np
import pytest
from conftest import EXAMPLE, INJURY_STUDY
from hypothesis import given, settings
from hypothesis import strategies as st

from riskdiet.analysis.maps import MapRequest, cell_inputs, make_map, parse_axis
from riskdiet.analysis.regimes import classify
from riskdiet.core.chain import steady_state
from riskdiet.core.grid import make_grid
from riskdiet.core.season_chain import season_outlook
from riskdiet.core.solver import solve_grid
from riskdiet.errors import StudyError
from riskdiet.model import BASELINE
from riskdiet.validation import build_study

DEMO = json.loads(EXAMPLE.read_text(encoding="utf-8"))


def demo_study(levels: int = 30, **predator):
    """The invented demo study (illustrative) on a coarse grid."""
    raw = copy.deepcopy(DEMO)
    raw["predator"].update(energy_levels=levels, **predator)
    return build_study(raw)


def injury_study(levels: int = 30, prey_changes: dict | None = None, **predator):
    """The invented three-prey injury study of conftest (illustrative)."""
    raw = copy.deepcopy(INJURY_STUDY)
    raw["predator"].update(energy_levels=levels, **predator)
    for index, changes in (prey_changes or {}).items():
        raw["prey"][index].update(changes)
    return build_study(raw)


def map_request(study, x: str, y: str, gradient=None) -> MapRequest:
    return MapRequest(BASELINE, parse_axis(x, study, "--x"), parse_axis(y, study, "--y"),
                      gradient)


def single(study, req, ix: int, iy: int):
    """Inputs, grid and single-study solution of one map cell."""
    pred, prey = cell_inputs(study, req, req.x.values[ix], req.y.values[iy])
    grid = make_grid(pred, prey)
    return pred, prey, grid, solve_grid(grid)


def regimes_of(prey, grid, solution) -> list:
    attacked = solution.living_priority(grid) >= 0
    risky = np.array([p.risky for p in prey])
    return [classify(attacked[k], risky, [p.name for p in prey], grid.living / grid.n)
            for k in (0, 1)]


def group_totals(prey, per_prey: np.ndarray) -> dict[str, float]:
    out: dict[str, float] = {}
    for p, k in zip(prey, per_prey, strict=True):
        out[p.group] = out.get(p.group, 0.0) + float(k)
    return out


# --------------------------------------------------------------------------- cells = single solves

BREEDING_MAPS = {
    # five prey, three groups; boar share of encounters x hunting ability
    "demo": (lambda: demo_study(30), "wild boar:encounter_share=0:0.8:6",
             "hunting_ability=0.3:1.5:5"),
    # breeding level differs between the cells of a row (batches of different shape),
    # start level between rows
    "injury": (lambda: injury_study(24), "breeding_threshold=0.6:1:6",
               "start_reserves=0.1:0.7:5"),
}


@pytest.fixture(scope="module", params=sorted(BREEDING_MAPS))
def breeding_map(request):
    make, x, y = BREEDING_MAPS[request.param]
    study = make()
    req = map_request(study, x, y)
    return study, req, make_map(study, req)


def test_breeding_map_cells_equal_single_solves(breeding_map):
    """Every cell of a breeding-currency map has the fitness at the start state,
    the marginal value of hunting ability and the attack set at every living
    level (read through the regime detail, which names every change of the set)
    of the same study solved on its own by sparse-LU policy iteration
    (Puterman 1994 ch. 7; Lande 1979 for the gradient)."""
    study, req, result = breeding_map
    assert result.fitness_at_start.shape == (req.y.steps, req.x.steps)
    for iy in range(req.y.steps):
        for ix in range(req.x.steps):
            _, prey, grid, sol = single(study, req, ix, iy)
            assert result.fitness_at_start[iy, ix] == pytest.approx(sol.fitness_at_start,
                                                                    rel=1e-12, abs=1e-13)
            assert result.marginal_hunting_ability[iy, ix] == pytest.approx(
                sol.marginal_hunting_ability, rel=1e-10, abs=1e-12)
            healthy, injured = regimes_of(prey, grid, sol)
            assert result.regime_healthy_detail[iy, ix] == healthy.detail
            assert result.regime_injured_detail[iy, ix] == injured.detail
            assert result.regime_healthy[iy, ix] == healthy.category
            assert result.regime_injured[iy, ix] == injured.category
    assert result.max_residual < 1e-12


def test_breeding_map_kills_equal_the_chain_steady_state(breeding_map):
    """Kills per predator per year by prey group in sampled cells equal 365
    times the long-run kill rates of the chain with death and breeding resets,
    summed over the group (Kemeny & Snell 1960, via riskdiet.core.chain.steady_state;
    MODEL.md section 5), to 1e-12 relative."""
    study, req, result = breeding_map
    cells = [(0, 0), (req.x.steps - 1, 0), (2, 1), (1, req.y.steps - 1),
             (req.x.steps - 1, req.y.steps - 1), (3, 3)]
    groups = {p.group for p in study.prey}
    assert set(result.groups) == groups
    for ix, iy in cells:
        _, prey, grid, sol = single(study, req, ix, iy)
        expected = group_totals(prey, 365.0 * steady_state(grid, sol).kills_per_day)
        for g in groups:
            assert result.kills_per_year[g][iy, ix] == pytest.approx(expected[g], rel=1e-12,
                                                                     abs=1e-13)


def test_breeding_map_rows_cover_the_grid_in_csv_order(breeding_map):
    """map rows are one per cell, x varying fastest, with the axis values and the
    cell's numbers in the order of the columns (RFC 4180 one record per line;
    common practice for tidy tables)."""
    _, req, result = breeding_map
    rows = result.rows()
    cols = result.columns()
    assert len(rows) == req.x.steps * req.y.steps
    assert all(len(r) == len(cols) for r in rows)
    fit = cols.index("fitness_at_start")
    for n, row in enumerate(rows):
        iy, ix = divmod(n, req.x.steps)
        assert row[0] == req.x.values[ix]
        assert row[1] == req.y.values[iy]
        assert row[fit] == result.fitness_at_start[iy, ix]


def test_season_map_cells_equal_single_solves():
    """Season-currency cells equal their own backward induction (Mangel & Clark
    1988): fitness at the start, marginal value of hunting ability, the day-0
    attack sets (through the regime detail) and the expected kills of the
    season by group from the forward chain (riskdiet.core.season_chain.season_outlook)."""
    study = injury_study(24, currency="season", season_days=30)
    req = map_request(study, "deer:injury_chance=0:0.6:4", "hunting_ability=0.5:1.5:3")
    result = make_map(study, req)
    assert result.currency == "season"
    assert any(c.startswith("kills_per_season_") for c in result.columns())
    for iy in range(req.y.steps):
        for ix in range(req.x.steps):
            _, prey, grid, sol = single(study, req, ix, iy)
            assert result.fitness_at_start[iy, ix] == pytest.approx(sol.fitness_at_start,
                                                                    rel=1e-12, abs=1e-14)
            assert result.marginal_hunting_ability[iy, ix] == pytest.approx(
                sol.marginal_hunting_ability, rel=1e-12, abs=1e-14)
            healthy, injured = regimes_of(prey, grid, sol)
            assert result.regime_healthy_detail[iy, ix] == healthy.detail
            assert result.regime_injured_detail[iy, ix] == injured.detail
            kills = group_totals(prey, season_outlook(grid, sol).expected_kills)
            for g, k in kills.items():
                assert result.kills_per_year[g][iy, ix] == pytest.approx(k, rel=1e-12,
                                                                         abs=1e-14)


def test_integer_axis_rounds_to_whole_levels():
    """An integer field as an axis (energy_levels) is rounded half up to whole
    values, and every cell, whatever its grid size, equals its own solve
    (MODEL.md section 1: energy_levels is an integer; Puterman 1994 ch. 7)."""
    study = injury_study(20)
    req = map_request(study, "energy_levels=20:30:4", "hunting_ability=0.6:1.2:2")
    result = make_map(study, req)
    for iy in range(2):
        for ix, levels in enumerate((20, 23, 27, 30)):
            pred, _, _, sol = single(study, req, ix, iy)
            assert pred.energy_levels == levels
            assert result.fitness_at_start[iy, ix] == pytest.approx(sol.fitness_at_start,
                                                                    rel=1e-12)


# --------------------------------------------------------------------------- encounter share

@settings(max_examples=30, deadline=None)
@given(share=st.floats(0.0, 1.0), prey_index=st.integers(0, 4))
def test_encounter_share_keeps_the_total_and_the_others_proportions(share, prey_index):
    """Setting one prey's share of all expected encounters keeps the total
    expected encounters per day fixed (superposition of Poisson encounter
    streams, Kingman 1993 ch. 2: the total rate is the sum of the rates), gives
    that prey exactly the share, and rescales the others in proportion (their
    ratios unchanged). Demo study: one prey is given by density x search area."""
    study = demo_study(30)
    name = study.prey[prey_index].name
    req = map_request(study, f"{name}:encounter_share=0:1:3", "hunting_ability=0.5:1:2")
    base_pred, base_prey = study.inputs_for(study.scenario(BASELINE))
    base = np.array([p.encounters(base_pred) for p in base_prey])
    pred, prey = cell_inputs(study, req, share, 1.0)
    rates = np.array([p.encounters(pred) for p in prey])
    assert rates.sum() == pytest.approx(base.sum(), rel=1e-12)
    assert rates[prey_index] == pytest.approx(share * base.sum(), rel=1e-12, abs=1e-15)
    others = np.arange(len(prey)) != prey_index
    if share < 1.0:
        np.testing.assert_allclose(rates[others] / rates[others].sum(),
                                   base[others] / base[others].sum(), rtol=1e-12)
    else:
        assert np.all(rates[others] == 0)


def test_encounter_share_axis_at_every_value():
    """Along a whole share axis the total stays at the baseline total and the
    prey has exactly each axis value as its share (Kingman 1993 ch. 2)."""
    study = demo_study(30)
    req = map_request(study, "upland ewe:encounter_share=0:1:6", "hunting_ability=0.5:1:2")
    base_pred, base_prey = study.inputs_for(study.scenario(BASELINE))
    total = sum(p.encounters(base_pred) for p in base_prey)
    ewe = [p.name for p in base_prey].index("upland ewe")
    assert base_prey[ewe].encounters_per_day is None  # given by density x search area
    for value in req.x.values:
        pred, prey = cell_inputs(study, req, value, 0.5)
        rates = [p.encounters(pred) for p in prey]
        assert sum(rates) == pytest.approx(total, rel=1e-12)
        assert rates[ewe] / sum(rates) == pytest.approx(value, abs=1e-12)


def test_encounter_share_is_refused_when_no_other_prey_is_met():
    """If every other prey has zero expected encounters, the rest of the share
    has nowhere to go and the total could not stay fixed (Kingman 1993 ch. 2:
    the total rate is the sum of the rates); the map is refused with a problem
    located at the axis option instead of silently changing the total."""
    never = {"encounters_per_day": 0.0}
    study = injury_study(20, prey_changes={1: never, 2: never})
    req = map_request(study, "vole:encounter_share=0:1:5", "hunting_ability=0.5:1:2")
    with pytest.raises(StudyError) as caught:
        make_map(study, req)
    assert [p.where for p in caught.value.problems] == ["--x"]


# --------------------------------------------------------------------------- zero gradient

def never_skill(raw_prey):
    for p in raw_prey:
        p["skill_dependent"] = False


@pytest.mark.parametrize("currency", ["breeding", "season"])
def test_no_skill_dependent_prey_means_zero_value_of_hunting_ability(currency):
    """When no prey's capture success depends on hunting ability, fitness does
    not depend on it at any policy, so its marginal value is exactly 0 in every
    cell (envelope theorem, Milgrom & Segal 2002; common practice)."""
    raw = copy.deepcopy(DEMO)
    raw["predator"].update(energy_levels=24, currency=currency, season_days=30)
    never_skill(raw["prey"])
    study = build_study(raw)
    req = map_request(study, "wild boar:encounter_share=0:0.8:4", "daily_cost_mj=5:9:3")
    result = make_map(study, req)
    assert np.all(result.marginal_hunting_ability == 0.0)
    assert result.fitness_at_start.max() > 0.0


def test_never_attacked_skill_prey_means_zero_value_of_hunting_ability():
    """Only the risky prey are skill-dependent (the default). Here a capture of
    either brings less energy than the cost of its handling days and an attack
    kills the predator with chance 0.9, so attacking them is never better than
    ignoring them (V rises with reserves) and they are never attacked. Capture
    success of the prey that are attacked does not depend on hunting ability,
    so its marginal value is exactly 0 (envelope theorem, Milgrom & Segal 2002;
    common practice)."""
    useless = {"fatality_chance": 0.9, "energy_mj": 1.0}
    study = injury_study(24, prey_changes={1: useless, 2: useless})
    assert [p.is_skill_dependent for p in study.prey] == [False, True, True]
    req = map_request(study, "vole:energy_mj=2:4:4", "hunting_ability=0.5:2:3")
    result = make_map(study, req)
    assert set(result.regime_healthy.ravel()) == {"low-risk prey only"}
    assert set(result.regime_injured.ravel()) == {"low-risk prey only"}
    assert result.fitness_at_start.min() > 0.0
    assert np.all(result.marginal_hunting_ability == 0.0)


def test_capped_capture_success_means_zero_value_of_hunting_ability():
    """Above a s_i = 1 capture success is capped, d min(1, a s_i)/da = 0
    (MODEL.md section 4), so a map whose hunting abilities cap every
    skill-dependent prey has a marginal value of exactly 0 (envelope theorem,
    Milgrom & Segal 2002), while below the cap it is positive."""
    study = injury_study(24)
    req = map_request(study, "deer:energy_mj=8:11:3", "hunting_ability=3.6:5:2")
    assert req.y.start * 0.28 > 1.0
    result = make_map(study, req)
    assert np.all(result.marginal_hunting_ability == 0.0)
    low = make_map(study, map_request(study, "deer:energy_mj=8:11:3", "hunting_ability=0.8:1.2:2"))
    assert np.all(low.marginal_hunting_ability > 0.0)


# --------------------------------------------------------------------------- gradient vs FD

def shifted_inputs(pred, prey, target, value):
    prey_name, field = target
    if prey_name is None:
        return dataclasses.replace(pred, **{field: value}), prey
    return pred, tuple(dataclasses.replace(p, **{field: value}) if p.name == prey_name else p
                       for p in prey)


def base_value(pred, prey, target) -> float:
    prey_name, field = target
    if prey_name is None:
        return float(getattr(pred, field))
    rec = next(p for p in prey if p.name == prey_name)
    value = getattr(rec, field)
    return float(rec.encounters(pred) if value is None else value)


def central_difference(pred, prey, target, rel_step=1e-5):
    """(V(theta + h) - V(theta - h)) / 2h from single solves, with the policies."""
    theta = base_value(pred, prey, target)
    h = rel_step * abs(theta)
    sols = [solve_grid(make_grid(*shifted_inputs(pred, prey, target, theta + s * h)))
            for s in (+1, -1)]
    return (sols[0].fitness_at_start - sols[1].fitness_at_start) / (2 * h), sols


GRADIENTS = [("wild boar", "energy_mj"), (None, "daily_cost_mj"), (None, "hunting_ability"),
             ("upland ewe", "encounters_per_day"), ("forest deer", "handling_days")]


@pytest.fixture(scope="module")
def gradient_maps():
    study = demo_study(30)
    out = {}
    for target in GRADIENTS:
        req = map_request(study, "mountain hare:energy_mj=4:8:4", "hunting_ability=0.4:1.4:3",
                      gradient=target)
        out[target] = make_map(study, req)
    return study, out


@pytest.mark.parametrize("target", GRADIENTS, ids=lambda t: f"{t[0]}:{t[1]}")
def test_policy_fixed_gradient_matches_central_difference(gradient_maps, target):
    """The map's marginal value of a further input (policy held fixed) agrees
    with a central finite difference of single-study solves, h = 1e-5 theta,
    in every cell; the optimal policy is checked to be the same at theta - h,
    theta and theta + h, so the envelope theorem applies (Milgrom & Segal 2002; Press et
    al. 2007 section 5.7 for the O(h^2) difference; Lande 1979). For the ewe,
    given by density in the demo, the encounter rate is shifted directly."""
    study, maps = gradient_maps
    result = maps[target]
    req = result.request
    column = result.gradient_column
    built_in = target == (None, "hunting_ability")  # always mapped: no further column
    assert column is None if built_in else column in result.columns()
    for ix, iy in np.ndindex(req.x.steps, req.y.steps):
        pred, prey, _, sol = single(study, req, ix, iy)
        fd, (plus, minus) = central_difference(pred, prey, target)
        np.testing.assert_array_equal(plus.priority, sol.priority)
        np.testing.assert_array_equal(minus.priority, sol.priority)
        mapped = (result.marginal_hunting_ability if built_in else result.marginal_extra)
        assert mapped[iy, ix] == pytest.approx(fd, rel=1e-6, abs=1e-9)


def test_marginal_hunting_ability_matches_central_difference():
    """The built-in marginal value of hunting ability agrees with a central
    difference of single solves where the policy does not change (MODEL.md
    section 4; Press et al. 2007 section 5.7; Milgrom & Segal 2002), also in
    the injury study with fractional energies and handling."""
    study = injury_study(30)
    req = map_request(study, "boar:injury_chance=0.1:0.7:3", "hunting_ability=0.7:1.5:3")
    result = make_map(study, req)
    for ix, iy in [(0, 0), (2, 1), (1, 2)]:
        pred, prey, _, sol = single(study, req, ix, iy)
        fd, (plus, minus) = central_difference(pred, prey, (None, "hunting_ability"))
        np.testing.assert_array_equal(plus.priority, sol.priority)
        np.testing.assert_array_equal(minus.priority, sol.priority)
        assert result.marginal_hunting_ability[iy, ix] == pytest.approx(fd, rel=1e-6,
                                                                       abs=1e-9)


def test_season_policy_fixed_gradient_matches_central_difference():
    """Season currency: the marginal value of a prey's energy with the policy of
    every day held fixed agrees with a central difference of single
    backward-induction solves (Mangel & Clark 1988; Press et al. 2007 section
    5.7) where the day-by-day policy is the same at theta - h, theta, theta + h
    (envelope theorem, Milgrom & Segal 2002)."""
    study = injury_study(24, currency="season", season_days=30)
    target = ("deer", "energy_mj")
    req = map_request(study, "vole:energy_mj=2:3:3", "hunting_ability=0.6:1.4:2",
                      gradient=target)
    result = make_map(study, req)
    for ix, iy in np.ndindex(req.x.steps, req.y.steps):
        pred, prey, _, sol = single(study, req, ix, iy)
        fd, (plus, minus) = central_difference(pred, prey, target)
        np.testing.assert_array_equal(plus.priority_by_day, sol.priority_by_day)
        np.testing.assert_array_equal(minus.priority_by_day, sol.priority_by_day)
        assert result.marginal_extra[iy, ix] == pytest.approx(fd, rel=1e-6, abs=1e-9)


# --------------------------------------------------------------------------- executors

def assert_same_map(a, b):
    for name in ("fitness_at_start", "marginal_hunting_ability", "regime_healthy",
                 "regime_injured", "regime_healthy_detail", "regime_injured_detail"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name), err_msg=name)
    assert a.groups == b.groups
    for g in a.groups:
        np.testing.assert_array_equal(a.kills_per_year[g], b.kills_per_year[g], err_msg=g)
    if a.marginal_extra is not None:
        np.testing.assert_array_equal(a.marginal_extra, b.marginal_extra)
    assert a.rows() == b.rows()


@pytest.fixture(scope="module")
def inline_map():
    study = demo_study(24)
    req = map_request(study, "wild boar:encounter_share=0:0.8:5", "hunting_ability=0.3:1.5:6",
                  gradient=("upland ewe", "energy_mj"))
    return study, req, make_map(study, req)


def test_map_through_a_local_dask_cluster_equals_inline(inline_map):
    """A map run through a local Dask cluster's concurrent.futures executor
    (Client.get_executor, Dask distributed documentation), in several bands,
    equals the inline map exactly (Puterman 1994 ch. 7: the final policy, and so
    the final linear system, does not depend on the starting guess)."""
    distributed = pytest.importorskip("distributed")
    study, req, inline = inline_map
    # one worker thread: overlapping batch solves in threads of one process are the
    # subject of test_batch.test_overlapping_solves_in_threads_restore_the_blas_thread_count
    with distributed.LocalCluster(processes=False, n_workers=1, threads_per_worker=1,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        seen = []
        result = make_map(study, req, client.get_executor(), bands=3,
                          progress=lambda done, total: seen.append((done, total)))
    assert_same_map(result, inline)
    assert seen[-1] == (req.y.steps, req.y.steps)


def test_map_through_a_process_pool_equals_inline(inline_map):
    """A map run through concurrent.futures.ProcessPoolExecutor(2) (Python
    standard library documentation) in bands of rows equals the inline map
    exactly (Puterman 1994 ch. 7)."""
    study, req, inline = inline_map
    with ProcessPoolExecutor(2) as pool:
        result = make_map(study, req, pool, bands=4)
    assert_same_map(result, inline)


def test_solving_in_small_blocks_gives_the_same_map(monkeypatch):
    """Maps are solved in blocks whose policies are read and dropped (memory stays
    modest); blocks of 4 cells, with a block boundary inside a row, give the same
    map to the bit as one block (the cells are independent solves, MODEL.md
    section 3)."""
    import riskdiet.analysis.maps as maps

    study = demo_study(24)
    req = map_request(study, "wild boar:encounter_share=0:0.8:5", "hunting_ability=0.5:1.5:3")
    whole = make_map(study, req)
    monkeypatch.setattr(maps, "BLOCK_CELLS", 4)
    pieces = make_map(study, req)
    assert pieces.rows() == whole.rows()
    np.testing.assert_array_equal(pieces.when_codes, whole.when_codes)
    np.testing.assert_array_equal(pieces.when_threshold, whole.when_threshold)


def test_asking_again_for_the_value_of_hunting_ability_adds_nothing():
    """The value of hunting ability is mapped always (MODEL.md section 4), so a further
    gradient on hunting_ability is dropped rather than repeated as a second column, figure
    and sentence; another input is kept (common practice: one quantity, one column)."""
    study = demo_study()
    x = parse_axis("hunting_ability=0.5:1.5:2", study, "--x")
    y = parse_axis("daily_cost_mj=3:5:2", study, "--y")
    assert MapRequest("baseline", x, y, (None, "hunting_ability")).gradient is None
    kept = MapRequest("baseline", x, y, ("wild boar", "capture_success"))
    assert kept.gradient == ("wild boar", "capture_success")
