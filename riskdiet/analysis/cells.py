"""One entry point for many complete solves: map cells, uncertainty draws, fitting searches.

A *cell* is a scenario of the study with some inputs replaced. Cells of equal
shape are solved together in array operations (batched policy iteration,
batched season induction, batched cohort propagation), in chunks that an
optional :class:`concurrent.futures.Executor` (a process pool or a Dask
client's executor) runs in parallel. Every cell comes back with its complete
numbers — fitness, the value of hunting ability, long-run kills, the released
cohort's kills, survival and breeding, the diet at the start reserves — or
with the reason its solve failed, so a caller can name every failing cell.

Each cell equals the single-study solve of its own inputs (MODEL.md section 3:
the same default policy and strict-improvement rule; batching changes nothing
but speed), and the results do not depend on the executor or the chunking.

References
----------
.. [1] Puterman, M. L. (1994). Markov Decision Processes. Wiley, ch. 7.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Executor, as_completed
from dataclasses import dataclass

import numpy as np

from riskdiet.analysis.batch_checks import problem_free
from riskdiet.core.batch import SUB_BATCH, solve_breeding_batch
from riskdiet.core.choice import one_step_value, step_values
from riskdiet.core.classic_batch import rate_maximizing_diets
from riskdiet.core.cohort import cohort_batch, median_day
from riskdiet.core.grid import (
    attack_probabilities,
    make_grid,
    make_grids,
    shape_key,
    take_cells,
    targets,
)
from riskdiet.core.season_batch import solve_season_batch
from riskdiet.core.solver import solve_season
from riskdiet.errors import RiskdietError, StudyError
from riskdiet.fields import INTEGER, field_specs
from riskdiet.model import BASELINE, Predator, Prey, Study, apply_changes, round_half_up
from riskdiet.validation import check_values

DAYS_PER_YEAR = 365.0
SHARE = "encounter_share"

BASELINE_STAGE = "baseline"
"""The value replaces the baseline input before the scenario's changes apply."""
FINAL_STAGE = "final"
"""The value replaces the scenario's final input (after its changes)."""


@dataclass(frozen=True)
class InputChange:
    """One input of a cell set to a value.

    Attributes
    ----------
    prey : str or None
        Prey name, or None for a predator field.
    field : str
        A numeric field name, or ``encounter_share`` (that prey's share of all
        expected encounters, the others rescaled so the total stays fixed).
    value : float
        The value [the field's unit]; whole-number fields are rounded half up.
    stage : str
        ``baseline`` (replaces the baseline value; a scenario's ``scale`` or
        ``add`` then acts on it and its ``set`` overrides it) or ``final``
        (replaces the scenario's final value), MODEL.md section 9.
    """

    prey: str | None
    field: str
    value: float
    stage: str = FINAL_STAGE

    @property
    def name(self) -> str:
        """``FIELD`` or ``PREY:FIELD``, as the issue texts and JSON name inputs."""
        return f"{self.prey}:{self.field}" if self.prey else self.field


@dataclass(frozen=True)
class Cell:
    """A scenario with some inputs replaced.

    Attributes
    ----------
    scenario : str
        Scenario name (``baseline`` for the study as entered).
    changes : tuple of InputChange
    label : str
        How the cell is named in messages, e.g. ``draw 17`` or a map cell's
        coordinates; its input values are added to failure messages.
    gradient : (prey or None, field), optional
        A further input whose marginal value (policy held fixed) is wanted.
    """

    scenario: str = BASELINE
    changes: tuple[InputChange, ...] = ()
    label: str = ""
    gradient: tuple[str | None, str] | None = None


@dataclass(frozen=True)
class CellResult:
    """Complete numbers of one cell, or why it has none.

    Attributes
    ----------
    label : str
        The cell's label.
    failure : str or None
        None when the solve is exact; else what went wrong (the numbers are
        then NaN and must not be shown).
    currency : str
    fitness_at_start : float
        V(j0, healthy) [probability].
    marginal_hunting_ability : float
        dV(j0, healthy)/da, policy held fixed.
    kills_per_predator_per_year : ndarray, shape (P,)
        Long-run kills per place kept filled per year (season currency: per
        predator over the season) [kills].
    cohort_kills : ndarray, shape (P,)
        Expected kills by the whole released cohort within the horizon.
    cohort_alive_at_horizon : float
        Chance that one released animal is alive at the horizon.
    cohort_breeding_events : float or None
        Expected breeding events of the cohort within the horizon (None: season).
    cohort_median_survival_days : int or None
    attacked_at_start : ndarray of bool, shape (P,)
        Whether a healthy animal at the start reserves attacks each prey.
    classic_diet : ndarray of bool, shape (P,)
        Charnov's rate-maximising diet for the cell's inputs.
    residual : float
        Bellman residual relative to the values (0 in the season currency).
    marginal_extra : float or None
        dV(j0, healthy)/d(gradient input), policy held fixed, when asked for.
    policy : ndarray of int8 or None, shape (2, m, P)
        Ranked attack sets on the living levels (day 0 in the season
        currency), when asked for (``keep_policy``).
    """

    label: str
    failure: str | None
    currency: str
    fitness_at_start: float
    marginal_hunting_ability: float
    kills_per_predator_per_year: np.ndarray
    cohort_kills: np.ndarray
    cohort_alive_at_horizon: float
    cohort_breeding_events: float | None
    cohort_median_survival_days: int | None
    attacked_at_start: np.ndarray
    classic_diet: np.ndarray
    residual: float = 0.0
    marginal_extra: float | None = None
    policy: np.ndarray | None = None

    @property
    def ok(self) -> bool:
        return self.failure is None


def set_input(predator: Predator, prey: tuple[Prey, ...], prey_name: str | None, field: str,
              value: float) -> tuple[Predator, tuple[Prey, ...]]:
    """Inputs with one field set to ``value`` (``set`` semantics; see :class:`InputChange`)."""
    if prey_name is None:
        spec = field_specs(Predator)[field]
        v = round_half_up(value) if spec.kind == INTEGER else float(value)
        return dataclasses.replace(predator, **{field: v}), prey
    index = next(i for i, p in enumerate(prey) if p.name.lower() == prey_name.lower())
    if field != SHARE:
        spec = field_specs(Prey)[field]
        v = round_half_up(value) if spec.kind == INTEGER else float(value)
        out = list(prey)
        out[index] = dataclasses.replace(prey[index], **{field: v})
        return predator, tuple(out)
    rates = np.array([p.encounters(predator) for p in prey])
    total = rates.sum()
    others = total - rates[index]
    new = rates * ((1.0 - value) * total / others) if others > 0 else np.zeros_like(rates)
    new[index] = value * total
    return predator, tuple(dataclasses.replace(p, encounters_per_day=float(m))
                           for p, m in zip(prey, new, strict=True))


def cell_inputs(study: Study, cell: Cell) -> tuple[Predator, tuple[Prey, ...]]:
    """The predator and prey of a cell, validated.

    Raises
    ------
    StudyError
        When a value, or a scenario change applied to a drawn value, leaves its
        bounds; the problems name the cell.
    """
    predator, prey, problems = _changed_inputs(study, cell)
    if not problems:
        problems = _value_problems(cell, predator, prey)
    if problems:
        raise StudyError(problems)
    return predator, prey


def _changed_inputs(study: Study, cell: Cell) -> tuple[Predator, tuple[Prey, ...], list]:
    """The cell's inputs, and the problems of applying the scenario's changes to them."""
    predator, prey = study.predator, study.baseline_prey
    for ch in cell.changes:
        if ch.stage == BASELINE_STAGE:
            predator, prey = set_input(predator, prey, ch.prey, ch.field, ch.value)
    predator, prey, problems = apply_changes(predator, prey, study.scenario(cell.scenario).changes)
    for ch in cell.changes:
        if ch.stage == FINAL_STAGE:
            predator, prey = set_input(predator, prey, ch.prey, ch.field, ch.value)
    return predator, prey, problems


def _value_problems(cell: Cell, predator: Predator, prey: tuple[Prey, ...]) -> list:
    """check_values's problems of a cell's inputs, located in the cell."""
    problems, _ = check_values(predator, prey,
                               lambda f: f"{describe_cell(cell)}: predator.{f}",
                               lambda i, f: f"{describe_cell(cell)}: {prey[i].name}.{f}")
    return problems


def describe_cell(cell: Cell) -> str:
    """The cell's label with the values it sets, for messages."""
    values = ", ".join(f"{c.name} = {c.value:.6g}" for c in cell.changes)
    name = cell.label or f"scenario {cell.scenario!r}"
    return f"{name} ({values})" if values else name


def _shifted(predator: Predator, prey: tuple[Prey, ...], target: tuple[str | None, str],
             sign: float) -> tuple[tuple[Predator, tuple[Prey, ...]], float]:
    """Inputs with the gradient input moved by +-delta, delta = 1e-6 max(1, |value|)."""
    prey_name, field = target
    if prey_name is None:
        value = getattr(predator, field)
        if value is None and field == "daily_cost_mj":
            value = predator.effective_daily_cost_mj
    else:
        rec = next(p for p in prey if p.name.lower() == prey_name.lower())
        value = getattr(rec, field)
        if value is None and field == "encounters_per_day":
            value = rec.encounters(predator)
    value = float(value or 0.0)
    step = 1e-6 * max(1.0, abs(value))
    return set_input(predator, prey, prey_name, field, value + sign * step), step


def _policy_fixed_step(grid, values: np.ndarray, priority: np.ndarray) -> np.ndarray:
    """One Bellman step under a fixed policy, batched: T_pi(V), shape (B, 2, m)."""
    tg = targets(grid)
    cap = (values.shape[0], grid.n_prey, *values.shape[1:])
    ignore, attack, _ = step_values(grid, tg, values, np.broadcast_to(values[:, None], cap))
    return one_step_value(grid, ignore, attack, attack_probabilities(grid.encounter_prob,
                                                                     priority))


def _breeding_extra(inputs: list[tuple[Predator, tuple[Prey, ...]]],
                    target: tuple[str | None, str]):
    """``extra_direct`` for :func:`solve_breeding_batch`: the one-step derivative in the
    gradient input by a central difference at fixed values and policy."""
    shifted = [(_shifted(*inp, target, +1), _shifted(*inp, target, -1)) for inp in inputs]
    plus = make_grids([hi[0] for hi, _ in shifted])
    minus = make_grids([lo[0] for _, lo in shifted])
    steps = np.array([hi[1] for hi, _ in shifted])

    def extra(idx, values, priority):
        hi = _policy_fixed_step(take_cells(plus, idx), values, priority)
        lo = _policy_fixed_step(take_cells(minus, idx), values, priority)
        return (hi - lo) / (2.0 * steps[idx])[:, None, None]
    return extra


def _season_extra(inputs: tuple[Predator, tuple[Prey, ...]],
                  target: tuple[str | None, str]) -> float:
    """Season currency: central difference with the policy of every day held fixed."""
    (plus, step), (minus, _) = _shifted(*inputs, target, +1), _shifted(*inputs, target, -1)
    base = solve_season(make_grid(*inputs))
    return (_fixed_season_value(make_grid(*plus), base)
            - _fixed_season_value(make_grid(*minus), base)) / (2 * step)


def _fixed_season_value(grid, base) -> float:
    """Season fitness at start of ``grid`` under the day-by-day policy of ``base``."""
    tg = targets(grid)
    days = grid.season_days
    values = np.zeros((days + 1, 2, grid.n + 1))
    values[days, :, grid.terminal_level:] = 1.0
    handling = grid.handling.astype(np.intp)
    for t in range(days - 1, -1, -1):
        cap_day = np.minimum(t + 1 + handling, days)
        ignore, attack, _ = step_values(grid, tg, values[t + 1], values[cap_day])
        prob = attack_probabilities(grid.encounter_prob,
                                    base.priority_by_day[t][:, 1:].astype(np.int64))
        values[t, :, 1:] = one_step_value(grid, ignore, attack, prob)
    return float(values[0, 0, grid.start_level])


def _failed(label: str, reason: str, currency: str, n_prey: int) -> CellResult:
    nan = np.full(n_prey, np.nan)
    return CellResult(label, reason, currency, np.nan, np.nan, nan, nan, np.nan, None, None,
                      np.zeros(n_prey, bool), np.zeros(n_prey, bool))


def _classic_masks(inputs: list[tuple[Predator, tuple[Prey, ...]]], success: np.ndarray
                   ) -> np.ndarray:
    """Charnov's rate-maximising diet of every cell (that of
    :func:`riskdiet.core.classic.classic_prey_model`), shape (B, P)."""
    columns = np.array([[(p.encounters(predator), p.energy_mj, p.handling_days) for p in prey]
                        for predator, prey in inputs], dtype=float)
    return rate_maximizing_diets(columns[..., 0], columns[..., 1], columns[..., 2], success)


def _solve_group(cells: list[Cell], inputs: list[tuple[Predator, tuple[Prey, ...]]],
                 horizon_days: int, keep_policy: bool, cohort: bool = True
                 ) -> list[CellResult]:
    """Solve cells of one shape together (one batch per ``SUB_BATCH`` cells)."""
    grid = make_grids(inputs)
    currency = grid.currency
    n_prey = grid.n_prey
    labels = [describe_cell(c) for c in cells]
    gradient = cells[0].gradient
    extra = [None] * len(cells)
    residual = np.zeros(len(cells))
    if currency == "breeding":
        sol = solve_breeding_batch(
            grid, None if gradient is None else _breeding_extra(inputs, gradient))
        residual = sol.residual
        if sol.marginal_extra is not None:
            extra = [float(x) for x in sol.marginal_extra]
        failures = list(sol.failures)
        ok = np.array([f is None for f in failures])
        priority = sol.priority
        kills_year = sol.kills_per_day * DAYS_PER_YEAR
        fitness, marginal = sol.fitness_at_start, sol.marginal_hunting_ability
        released = None
        if ok.any() and cohort:
            index = np.flatnonzero(ok)
            released = cohort_batch(take_cells(grid, index), priority[index], horizon_days)
        cohort_kills = np.full((len(cells), n_prey), np.nan)
        alive = np.full((len(cells), horizon_days + 1), np.nan)
        breeding = np.full(len(cells), np.nan)
        if released is not None:
            cohort_kills[index], alive[index] = released.kills, released.alive_by_day
            breeding[index] = released.breeding_events
    else:
        sol = solve_season_batch(grid)
        failures = list(sol.failures)
        priority = sol.priority
        kills_year = sol.expected_kills
        fitness, marginal = sol.fitness_at_start, sol.marginal_hunting_ability
        cohort_kills, alive = sol.expected_kills, sol.survival_by_day
        breeding = None
        if gradient is not None:
            extra = [None if failures[b] else _season_extra(inputs[b], gradient)
                     for b in range(len(cells))]
    classic = _classic_masks(inputs, grid.capture[:, 0])
    out = []
    for b, (predator, _) in enumerate(inputs):
        if failures[b] is not None:
            out.append(_failed(labels[b], failures[b], currency, n_prey))
            continue
        animals = predator.cohort_size
        start = int(grid.start_level[b]) - 1
        out.append(CellResult(
            label=labels[b], failure=None, currency=currency,
            fitness_at_start=float(fitness[b]),
            marginal_hunting_ability=float(marginal[b]),
            kills_per_predator_per_year=np.asarray(kills_year[b], dtype=float),
            cohort_kills=animals * np.asarray(cohort_kills[b], dtype=float),
            cohort_alive_at_horizon=float(alive[b][-1]),
            cohort_breeding_events=None if breeding is None else animals * float(breeding[b]),
            cohort_median_survival_days=median_day(alive[b]),
            attacked_at_start=np.asarray(priority[b][0, start] >= 0),
            classic_diet=classic[b],
            residual=float(residual[b]), marginal_extra=extra[b],
            policy=np.asarray(priority[b], dtype=np.int8) if keep_policy else None))
    return out


def _solve_chunk(study: Study, cells: list[Cell], keep_policy: bool = False,
                 cohort: bool = True) -> list[CellResult]:
    """Solve a chunk of cells in this process (one task of an executor)."""
    horizon = study.settings.horizon_days
    results: list[CellResult | None] = [None] * len(cells)
    groups: dict[tuple, list[int]] = {}
    inputs: dict[int, tuple[Predator, tuple[Prey, ...]]] = {}
    n_prey = len(study.prey)
    problems: dict[int, list] = {}
    for i, cell in enumerate(cells):
        predator, prey, found = _changed_inputs(study, cell)
        if found:
            problems[i] = found
        else:
            inputs[i] = predator, prey
    # the checks of cell_inputs, in array operations; only cells that may have a problem
    # go through check_values, which names each problem's location
    checked = list(inputs)
    if checked:
        passed = problem_free([inputs[i] for i in checked])
        for i in np.asarray(checked)[~passed].tolist():
            found = _value_problems(cells[i], *inputs[i])
            if found:
                problems[i] = found
                del inputs[i]
    for i, found in problems.items():
        reason = "; ".join(str(p) for p in found)
        results[i] = _failed(describe_cell(cells[i]), f"invalid inputs: {reason}",
                             study.predator.currency, n_prey)
    for i, cell in enumerate(cells):
        if i not in inputs:
            continue
        p, q = inputs[i]
        groups.setdefault((p.currency, p.energy_levels, p.breeding_level, len(q),
                           p.season_days if p.currency == "season" else 0, cell.gradient),
                          []).append(i)
    for members in groups.values():
        for lo in range(0, len(members), SUB_BATCH):
            part = members[lo:lo + SUB_BATCH]
            solved = _solve_group([cells[i] for i in part], [inputs[i] for i in part], horizon,
                                  keep_policy, cohort)
            for i, r in zip(part, solved, strict=True):
                results[i] = r
    return results  # type: ignore[return-value]


def solve_cells(study: Study, cells: Sequence[Cell], executor: Executor | None = None,
                chunk: int = 4 * SUB_BATCH, keep_policy: bool = False,
                progress: Callable[[int, int], None] | None = None, cohort: bool = True
                ) -> list[CellResult]:
    """Complete numbers for every cell, in input order, each with its status.

    Parameters
    ----------
    study : Study
        A validated study.
    cells : sequence of Cell
        Scenarios with inputs replaced (map cells, draws, fitting points).
    executor : concurrent.futures.Executor, optional
        Runs chunks of cells in parallel (a process pool or a Dask client's
        executor); in this process when None. Results do not depend on it.
    chunk : int
        Cells per task.
    keep_policy : bool
        Return each cell's attack sets (``CellResult.policy``), e.g. for maps.
    progress : callable, optional
        ``progress(done_cells, total_cells)`` after each chunk.
    cohort : bool
        Compute the released cohort (breeding currency: a day-by-day
        propagation over the horizon, the costliest part after the policy);
        without it the cohort numbers are NaN. Maps leave it out.

    Returns
    -------
    list of CellResult
        A cell whose solve failed has ``failure`` set and NaN numbers; the
        caller decides whether that is an error (naming the cell) or a gap.
    """
    (results,) = solve_cell_blocks(study, [cells], executor, chunk, keep_policy, progress,
                                   cohort)
    return results


def solve_cell_blocks(study: Study, blocks: Sequence[Sequence[Cell]],
                      executor: Executor | None = None, chunk: int = 4 * SUB_BATCH,
                      keep_policy: bool = False,
                      progress: Callable[[int, int], None] | None = None, cohort: bool = True
                      ) -> Iterator[list[CellResult]]:
    """:func:`solve_cells` for a sequence of blocks, each block's results yielded in order.

    With an executor, the next block's chunks are submitted before a block's
    results are handed over, so the workers keep solving while the caller reads
    a block (a map reduces each block's policies to regimes in this process),
    and the results of at most two blocks exist at once.

    Parameters
    ----------
    blocks : sequence of sequences of Cell
    progress : callable, optional
        ``progress(done_cells, total_cells)`` over all blocks, after each chunk.

    Other parameters are those of :func:`solve_cells`.

    Yields
    ------
    list of CellResult
        One block's results, in input order.
    """
    blocks = [list(b) for b in blocks]
    for block in blocks:
        for c in block:
            study.scenario(c.scenario)  # an unknown scenario is a programming error: KeyError
    if chunk < 1:
        raise RiskdietError(f"chunk must be at least 1, found {chunk}")
    total = sum(len(b) for b in blocks)
    done = 0
    submitted: list = []

    def submit(block):
        pieces = [block[i:i + chunk] for i in range(0, len(block), chunk)]
        if executor is None or len(pieces) <= 1:
            return pieces, None  # solved here when its turn comes
        futures = [executor.submit(_solve_chunk, study, piece, keep_policy, cohort)
                   for piece in pieces]
        submitted.extend(futures)
        return pieces, futures

    ahead = submit(blocks[0]) if blocks else None
    try:
        for k in range(len(blocks)):
            pieces, futures = ahead
            ahead = submit(blocks[k + 1]) if k + 1 < len(blocks) else None
            if futures is None:
                out: list[CellResult] = []
                for piece in pieces:
                    out += _solve_chunk(study, piece, keep_policy, cohort)
                    done += len(piece)
                    if progress:
                        progress(done, total)
                yield out
                continue
            index = {f: j for j, f in enumerate(futures)}
            for future in as_completed(futures):
                future.result()  # a failed task raises here, as soon as it is known
                done += len(pieces[index[future]])
                if progress:
                    progress(done, total)
            yield [r for future in futures for r in future.result()]
    finally:
        # the caller stopped or a task failed: no work left waiting to run for nothing
        # (cancelling a finished or running task does nothing)
        for future in submitted:
            future.cancel()


__all__ = ["BASELINE_STAGE", "FINAL_STAGE", "Cell", "CellResult", "InputChange", "cell_inputs",
           "describe_cell", "set_input", "shape_key", "solve_cell_blocks", "solve_cells"]
