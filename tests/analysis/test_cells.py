"""The batched entry point equals single solves, names failing cells, and ignores workers.

References used below:
Puterman, M. L. (1994). Markov Decision Processes. Wiley, ch. 7 (a batch of
independent problems solved side by side has each problem's own solution).
The single-study solvers (riskdiet.analysis.study.solve_scenario) are the
reference: every number of a cell must equal its single solve to 1e-12
relative (values, kills) and 1e-10 (derivatives), MODEL.md sections 3-5.
"""

from __future__ import annotations

import threading
from concurrent.futures import Future, ProcessPoolExecutor, ThreadPoolExecutor

import numpy as np
import pytest
from conftest import injury_raw

from riskdiet.analysis.cells import (
    BASELINE_STAGE,
    FINAL_STAGE,
    Cell,
    InputChange,
    cell_inputs,
    solve_cell_blocks,
    solve_cells,
)
from riskdiet.analysis.study import solve_scenario
from riskdiet.model import Scenario
from riskdiet.validation import build_study


def _study(**predator):
    raw = injury_raw(**predator)
    raw["scenarios"] = [{"name": "cheap boar", "changes": [
        {"prey": "boar", "field": "encounters_per_day", "change": "scale", "value": 2.0}]}]
    return build_study(raw)


CELLS = [Cell("baseline", (InputChange(None, "hunting_ability", a),), f"cell {i}")
         for i, a in enumerate(np.linspace(0.4, 1.8, 9))]
CELLS += [Cell("cheap boar", (InputChange("deer", "capture_success", s, BASELINE_STAGE),
                              InputChange("boar", "injury_chance", q, FINAL_STAGE)), "mixed")
          for s in (0.2, 0.35) for q in (0.1, 0.6)]


def _single(study, cell):
    """The reference: the single-study pipeline on the cell's own inputs."""
    predator, prey = cell_inputs(study, cell)
    import dataclasses

    one = dataclasses.replace(study, predator=predator, prey=prey,
                              scenarios=(Scenario("baseline", ()),))
    return solve_scenario(one, one.scenarios[0])


@pytest.mark.parametrize("currency", ["breeding", "season"])
def test_every_cell_equals_its_single_solve(currency):
    """Fitness, the value of hunting ability, long-run (or season) kills, the
    released cohort's kills, survival and breeding, and the diet at the start
    reserves of every cell equal the single solve of the cell's inputs."""
    study = _study(currency=currency, season_days=30)
    results = solve_cells(study, CELLS)
    for cell, got in zip(CELLS, results, strict=True):
        assert got.ok, got.failure
        ref = _single(study, cell)
        assert got.fitness_at_start == pytest.approx(ref.fitness_at_start, rel=1e-12, abs=1e-300)
        assert got.marginal_hunting_ability == pytest.approx(ref.marginal_hunting_ability,
                                                             rel=1e-10, abs=1e-13)
        names = ref.prey_names
        long_run = (ref.kills.kills_per_predator_per_year if currency == "breeding"
                    else ref.season_kills.expected_kills)
        np.testing.assert_allclose(got.kills_per_predator_per_year,
                                   [long_run[n] for n in names], rtol=1e-12, atol=1e-14)
        np.testing.assert_allclose(got.cohort_kills, [ref.cohort.kills[n] for n in names],
                                   rtol=1e-12, atol=1e-14)
        assert got.cohort_alive_at_horizon == pytest.approx(ref.cohort.alive_at_horizon,
                                                            rel=1e-12, abs=1e-15)
        assert got.cohort_median_survival_days == ref.cohort.median_survival_days
        if currency == "breeding":
            assert got.cohort_breeding_events == pytest.approx(ref.cohort.breeding_events,
                                                               rel=1e-12)
        j0 = ref.grid.start_level
        np.testing.assert_array_equal(got.attacked_at_start,
                                      ref.solution.priority[0, j0] >= 0)


def test_a_cell_with_invalid_inputs_is_named_not_solved():
    """A value out of its bounds (capture success 1.5) makes that cell a failure
    naming the cell and the value; the other cells are solved."""
    study = _study()
    cells = [Cell("baseline", (InputChange("deer", "capture_success", 1.5),), "draw 3"),
             CELLS[0]]
    bad, good = solve_cells(study, cells)
    assert not bad.ok and "draw 3" in bad.label and "capture_success = 1.5" in bad.label
    assert "capture_success" in bad.failure
    assert good.ok


def test_a_cell_whose_solve_fails_is_reported(monkeypatch):
    """A batch cell that reaches the iteration limit carries the reason instead of
    numbers (MODEL.md section 3: never a number shown as if valid)."""
    from riskdiet.core import batch

    monkeypatch.setattr(batch.solve_breeding_batch, "__defaults__", (None, 1))
    results = solve_cells(_study(), CELLS[:3])
    assert all(not r.ok and "did not settle" in r.failure for r in results)
    assert all(np.isnan(r.fitness_at_start) for r in results)


def test_results_do_not_depend_on_workers_or_chunks():
    """The same cells on a process pool of two workers, in chunks of 3, give
    identical numbers to the in-process run (each cell is solved independently)."""
    study = _study()
    inline = solve_cells(study, CELLS)
    with ProcessPoolExecutor(2) as pool:
        pooled = solve_cells(study, CELLS, executor=pool, chunk=3)
    for a, b in zip(inline, pooled, strict=True):
        assert a.fitness_at_start == b.fitness_at_start
        np.testing.assert_array_equal(a.cohort_kills, b.cohort_kills)
        np.testing.assert_array_equal(a.kills_per_predator_per_year,
                                      b.kills_per_predator_per_year)


def test_results_on_a_dask_cluster_equal_the_inline_run():
    """A Dask LocalCluster's executor gives the in-process numbers (Dask
    documentation: Client.get_executor returns a concurrent.futures Executor)."""
    distributed = pytest.importorskip("distributed")
    study = _study()
    inline = solve_cells(study, CELLS[:6])
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        remote = solve_cells(study, CELLS[:6], executor=client.get_executor(), chunk=2)
    for a, b in zip(inline, remote, strict=True):
        assert a.fitness_at_start == b.fitness_at_start
        np.testing.assert_array_equal(a.cohort_kills, b.cohort_kills)


def test_blocks_are_yielded_in_order_with_the_numbers_of_one_call():
    """solve_cell_blocks on a thread pool hands over each block's results in
    input order, equal to one solve_cells call on all cells (each cell is solved
    independently, Puterman 1994), with progress counted over all blocks."""
    study = _study()
    blocks = [CELLS[:4], CELLS[4:5], CELLS[5:]]
    whole = solve_cells(study, CELLS)
    seen = []
    with ThreadPoolExecutor(2) as pool:
        got = list(solve_cell_blocks(study, blocks, pool, chunk=2,
                                     progress=lambda done, total: seen.append((done, total))))
    assert [len(b) for b in got] == [4, 1, len(CELLS) - 5]
    for a, b in zip(whole, [r for block in got for r in block], strict=True):
        assert a.label == b.label
        assert a.fitness_at_start == b.fitness_at_start
        np.testing.assert_array_equal(a.kills_per_predator_per_year,
                                      b.kills_per_predator_per_year)
    assert seen[-1] == (len(CELLS), len(CELLS))
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)


class _Recording(ThreadPoolExecutor):
    """One thread; keeps every future it hands out and holds all but the first
    ``free`` tasks until released."""

    def __init__(self, free: int):
        super().__init__(1)
        self.futures: list[Future] = []
        self.free = free
        self.release = threading.Event()

    def submit(self, fn, *args, **kwargs):
        held = len(self.futures) >= self.free

        def task():
            if held:
                self.release.wait(10)
            return fn(*args, **kwargs)
        future = super().submit(task)
        self.futures.append(future)
        return future


def test_the_next_block_is_submitted_early_and_cancelled_when_the_caller_stops():
    """While the caller reads block 1, block 2's chunks are already submitted
    (the workers keep going); when the caller stops, the ones not yet running
    are cancelled, so no work runs for nothing (concurrent.futures
    documentation: Future.cancel succeeds for a task not yet running)."""
    study = _study()
    pool = _Recording(free=2)  # block 1's two chunks run; block 2's wait
    try:
        blocks = solve_cell_blocks(study, [CELLS[:4], CELLS[4:8], CELLS[8:]], pool, chunk=2)
        first = next(blocks)
        assert len(first) == 4
        assert len(pool.futures) == 4  # blocks 1 and 2, two chunks each; block 3 not yet
        blocks.close()
        # block 2's first chunk holds the one thread; its second never started
        assert pool.futures[-1].cancelled()
    finally:
        pool.release.set()
        pool.shutdown()


def test_a_failed_task_stops_the_waiting_ones(monkeypatch):
    """When a chunk's task fails (a worker died), the error reaches the caller
    and the chunks still waiting, of this block and the next, are cancelled
    (concurrent.futures documentation: Future.cancel)."""
    import riskdiet.analysis.cells as cells_module

    real = cells_module._solve_chunk

    def first_fails(study, piece, *args):
        if piece[0] is CELLS[0]:
            raise RuntimeError("worker lost")
        return real(study, piece, *args)

    monkeypatch.setattr(cells_module, "_solve_chunk", first_fails)
    pool = _Recording(free=1)  # the failing task runs; the others wait
    try:
        blocks = solve_cell_blocks(_study(), [CELLS[:6], CELLS[6:10]], pool, chunk=2)
        with pytest.raises(RuntimeError, match="worker lost"):
            next(blocks)
        # the thread may already hold block 1's second task; its third and block 2's never ran
        assert len(pool.futures) == 5 and not pool.futures[0].cancelled()
        assert all(f.cancelled() for f in pool.futures[2:])
    finally:
        pool.release.set()
        pool.shutdown()
