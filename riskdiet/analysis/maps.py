"""Maps over two inputs: where the decision rule changes, and what hunting skill is worth.

A map varies two inputs of one scenario over a grid of values and solves every
cell. Axes are a numeric predator field (``hunting_ability``), a numeric prey
field (``PREY:FIELD``, e.g. ``upland ewe:density_per_km2``) or a prey's share of
all expected encounters (``PREY:encounter_share``: the others are rescaled in
proportion so that the total stays fixed).

Every cell is one cell of the batched entry point
(:func:`riskdiet.analysis.cells.solve_cells`): cells of equal shape are solved
together, in chunks that any :class:`concurrent.futures.Executor` (a local
process pool, or a Dask cluster's executor) runs in parallel, and each cell
equals the single-study solve of its inputs.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from concurrent.futures import Executor
from dataclasses import dataclass

import numpy as np

from riskdiet.analysis.cells import (
    FINAL_STAGE,
    SHARE,
    Cell,
    CellResult,
    InputChange,
    set_input,
    solve_cell_blocks,
)
from riskdiet.analysis.regimes import WHEN_KEYS, classify, when_attacked, when_threshold
from riskdiet.errors import Problem, SolveError, StudyError, describe
from riskdiet.fields import INTEGER, did_you_mean, field_specs, words
from riskdiet.model import BASELINE, Predator, Prey, Study
from riskdiet.validation import check_values, size_problem

DAYS_PER_YEAR = 365.0


@dataclass(frozen=True)
class Axis:
    """One map axis.

    Attributes
    ----------
    prey : str or None
        Prey name, or None for a predator field.
    field : str
        Field name, or ``encounter_share``.
    start, stop : float
        First and last value.
    steps : int
        Number of values (≥ 2), evenly spaced.
    """

    prey: str | None
    field: str
    start: float
    stop: float
    steps: int

    @property
    def values(self) -> np.ndarray:
        return np.linspace(self.start, self.stop, self.steps)

    @property
    def target(self) -> str:
        return f"{self.prey}:{self.field}" if self.prey else self.field

    @property
    def label(self) -> str:
        """The axis in words with its unit, e.g. ``Wild boar: share of all encounters``."""
        text = f"{self.prey}: {self._field_words}" if self.prey else self._field_words
        return text[:1].upper() + text[1:]

    @property
    def words(self) -> str:
        """The axis in words inside a sentence, e.g. ``share of all encounters of wild boar``."""
        if not self.prey:
            return self._field_words
        unit = UNIT_PHRASES.get(self.unit, "")
        return f"{words(self.field)} of {self.prey}" + (f" ({unit})" if unit else "")

    @property
    def unit(self) -> str:
        """Unit of the axis values as written in study files (``1`` for none)."""
        if self.field == SHARE:
            return "1"
        spec = field_specs(Prey if self.prey else Predator)[self.field]
        return "1" if spec.unit in NO_UNIT else spec.unit

    @property
    def _field_words(self) -> str:
        unit = UNIT_PHRASES.get(self.unit, "")
        return words(self.field) + (f" ({unit})" if unit else "")


NO_UNIT = ("text", "ratio", "count", "probability", "yes/no", "word")
"""Units that an axis label leaves out (the words already say what the number is)."""
UNIT_PHRASES = {"MJ": "MJ", "MJ/day": "MJ per day", "1/day": "per day", "day": "days",
                "km²/day": "km² per day", "1/km²": "per km²", "kg": "kg",
                "fraction of R": "fraction of capacity"}
"""Units in words for axis labels and sentences."""


def parse_target(target: str, study: Study, where: str, numeric_only: bool = True
                 ) -> tuple[str | None, str]:
    """Resolve ``FIELD`` or ``PREY:FIELD`` against a study, or raise a located problem."""
    target = target.strip()
    names = {p.name.lower(): p.name for p in study.prey}
    if ":" in target:
        prey_text, field = (s.strip() for s in target.rsplit(":", 1))
        prey = names.get(prey_text.lower())
        if prey is None:
            raise StudyError([Problem(where, "a prey name of the study ("
                                      + ", ".join(p.name for p in study.prey) + ")",
                                      describe(prey_text) + did_you_mean(
                                          prey_text, [p.name for p in study.prey]))])
        field = field.lower()
        if field == SHARE:
            return prey, field
        specs = field_specs(Prey)
    else:
        prey, field, specs = None, target.lower(), field_specs(Predator)
    numeric = [f for f, s in specs.items() if s.numeric]
    if field not in specs:
        raise StudyError([Problem(where, f"a {'prey' if prey else 'predator'} field ("
                                  + ", ".join(numeric + ([SHARE] if prey else [])) + ")",
                                  describe(field) + did_you_mean(
                                      field, numeric + ([SHARE] if prey else [])))])
    if numeric_only and not specs[field].numeric:
        raise StudyError([Problem(where, "a numeric field (" + ", ".join(numeric) + ")",
                                  f'the {specs[field].kind} field "{field}"')])
    if "gradient" in where and specs[field].kind == INTEGER:
        raise StudyError([Problem(where, "a field that can change by a small amount (not a "
                                  "whole-number field)", f'the whole-number field "{field}"')])
    return prey, field


def parse_axis(spec: str, study: Study, where: str) -> Axis:
    """Parse ``TARGET=START:STOP:STEPS`` (e.g. ``hunting_ability=0.2:1.6:41``).

    Raises
    ------
    StudyError
        Naming the option (``where``), what was expected and what was found.
    """
    if "=" not in spec:
        raise StudyError([Problem(where, "TARGET=START:STOP:STEPS, e.g. "
                                  "hunting_ability=0.2:1.6:41", describe(spec))])
    target, numbers = spec.rsplit("=", 1)
    prey, field = parse_target(target, study, where)
    parts = numbers.split(":")
    if len(parts) != 3:
        raise StudyError([Problem(where, "three numbers START:STOP:STEPS after '='",
                                  describe(numbers))])
    try:
        start, stop = float(parts[0]), float(parts[1])
    except ValueError:
        raise StudyError([Problem(where, "numbers for START and STOP",
                                  describe(numbers))]) from None
    try:
        steps = int(parts[2])
    except ValueError:
        steps = -1
    problems = []
    if steps < 2:
        problems.append(Problem(where, "a whole number of steps ≥ 2", describe(parts[2])))
    if start == stop or not (math.isfinite(start) and math.isfinite(stop)):
        problems.append(Problem(where, "different finite START and STOP",
                                f"{parts[0]} and {parts[1]}"))
    if field == SHARE and not (0 <= min(start, stop) and max(start, stop) <= 1):
        problems.append(Problem(where, "shares from 0 to 1", f"{start:g} to {stop:g}"))
    if problems:
        raise StudyError(problems)
    return Axis(prey, field, start, stop, steps)


def apply_axis(predator: Predator, prey: tuple[Prey, ...], axis: Axis, value: float
               ) -> tuple[Predator, tuple[Prey, ...]]:
    """Inputs with one axis set to ``value`` (``set`` semantics)."""
    return set_input(predator, prey, axis.prey, axis.field, value)


@dataclass(frozen=True)
class MapRequest:
    """What to map: a scenario, two axes and optionally a further gradient."""

    scenario: str
    x: Axis
    y: Axis
    gradient: tuple[str | None, str] | None = None
    where_x: str = "--x"
    where_y: str = "--y"

    def __post_init__(self) -> None:
        # the value of hunting ability is mapped always; asking for it again would only
        # repeat its figure, column and sentence
        if self.gradient == (None, "hunting_ability"):
            object.__setattr__(self, "gradient", None)


def _check_request(study: Study, request: MapRequest) -> None:
    """Every axis value must give valid inputs (checked along both axes and corners)."""
    base_pred, base_prey = study.inputs_for(study.scenario(request.scenario))
    problems: list[Problem] = []
    wx, wy = request.where_x, request.where_y
    if request.x.target == request.y.target:
        problems.append(Problem(wy, f"a different input from {wx}", describe(request.y.target)))
    size = size_problem(base_pred, len(base_prey), f"{wx} and {wy}",
                        request.x.steps * request.y.steps)
    if size:
        problems.append(size)
    for axis, where in ((request.x, wx), (request.y, wy)):
        if axis.field == SHARE:
            rates = [p.encounters(base_pred) for p in base_prey]
            if sum(rates) == 0:
                problems.append(Problem(where, "prey that are met at all (total encounters > 0)",
                                        "no encounters"))
            elif len(base_prey) == 1 and min(axis.start, axis.stop) < 1:
                problems.append(Problem(where, "a second prey type to take the other share",
                                        "only one prey type"))
            elif sum(r for p, r in zip(base_prey, rates, strict=True)
                     if p.name != axis.prey) == 0:
                # the rest of the share has no prey to go to: the total could not stay fixed
                problems.append(Problem(where, "other prey that are met (encounters > 0) to "
                                        "take the rest of the share",
                                        f"no encounters with any prey but {axis.prey}"))
    if problems:
        raise StudyError(problems)
    combos = [(x, y) for x in (request.x.start, request.x.stop)
              for y in (request.y.start, request.y.stop)]
    combos += [(x, request.y.start) for x in request.x.values]
    combos += [(request.x.start, y) for y in request.y.values]
    seen = set()
    for x, y in combos:
        pred, prey = apply_axis(base_pred, base_prey, request.x, x)
        pred, prey = apply_axis(pred, prey, request.y, y)
        found, _ = check_values(pred, prey, lambda f: f"predator.{f}",
                                lambda i, f, prey=prey: f"{prey[i].name}: {f}")
        for p in found:
            key = (p.where, p.expected)
            if key not in seen:
                seen.add(key)
                problems.append(Problem(f"{wx}/{wy}: map cell x={x:g}, y={y:g} ({p.where})",
                                        p.expected, p.found))
    if problems:
        raise StudyError(problems)


@dataclass(frozen=True)
class MapResult:
    """Every cell of a map; arrays have shape (len(y), len(x)).

    Attributes
    ----------
    request : MapRequest
    x, y : ndarray
        Axis values.
    regime_healthy, regime_injured : ndarray of str
        Regime category (MODEL.md section 7) of each cell, without numbers.
    regime_healthy_detail, regime_injured_detail : ndarray of str
        The same with the reserve fractions where the attack set changes.
    fitness_at_start : ndarray
        V(j0, healthy) [probability].
    marginal_hunting_ability : ndarray
        dV/da with the policy held fixed [probability per unit ability].
    marginal_extra : ndarray or None
        dV/d(gradient field) with the policy held fixed.
    kills_per_year : dict of str to ndarray
        Kills per predator per year by prey group (breeding currency; season
        currency: kills per predator over the season, columns
        ``kills_per_season_<group>``).
    groups : tuple of str
    max_residual : float
        Largest Bellman residual over all cells.
    currency : str
    prey : tuple of str
        Prey names, in the study's order.
    prey_groups : tuple of str
        Each prey's group.
    prey_risky : tuple of bool
        Whether each prey is risky in the mapped scenario's own inputs.
    when_codes : ndarray of int8, shape (2, P, len(y), len(x))
        When each prey is attacked, by condition (healthy, injured): codes of
        :data:`riskdiet.analysis.regimes.WHEN_KEYS`.
    when_threshold : ndarray, shape (2, P, len(y), len(x))
        For ``only when reserves are low`` the highest, for ``only when
        reserves are high`` the lowest reserves at which the prey is attacked
        [fraction of capacity]; NaN for the other categories.
    study_x, study_y : float
        The mapped scenario's own values of the two axis inputs.
    """

    request: MapRequest
    x: np.ndarray
    y: np.ndarray
    regime_healthy: np.ndarray
    regime_injured: np.ndarray
    regime_healthy_detail: np.ndarray
    regime_injured_detail: np.ndarray
    fitness_at_start: np.ndarray
    marginal_hunting_ability: np.ndarray
    marginal_extra: np.ndarray | None
    kills_per_year: dict[str, np.ndarray]
    groups: tuple[str, ...]
    max_residual: float
    currency: str
    prey: tuple[str, ...] = ()
    prey_groups: tuple[str, ...] = ()
    prey_risky: tuple[bool, ...] = ()
    when_codes: np.ndarray | None = None
    when_threshold: np.ndarray | None = None
    study_x: float = float("nan")
    study_y: float = float("nan")

    @property
    def gradient_column(self) -> str | None:
        if self.request.gradient is None:
            return None
        prey, field = self.request.gradient
        return f"marginal_{(prey + ':') if prey else ''}{field}"

    @property
    def focus(self) -> tuple[int, ...]:
        """Prey that matter to a plan: risky prey and prey of groups that are not wild
        (livestock, protected...); every prey when none is either."""
        chosen = tuple(i for i, (g, r) in enumerate(zip(self.prey_groups, self.prey_risky,
                                                        strict=True))
                       if r or g.strip().lower() not in WILD)
        return chosen or tuple(range(len(self.prey)))

    def columns(self) -> list[str]:
        """Column names of map.csv: the two axes by their input, then each cell's numbers."""
        cols = [self.request.x.target, self.request.y.target, "regime_healthy",
                "regime_injured", "regime_healthy_detail", "regime_injured_detail"]
        for cond in CONDITION_NAMES:
            cols += [f"when_attacked_{cond}:{p}" for p in self.prey]
            cols += [f"reserve_threshold_{cond}:{p}" for p in self.prey]
        cols += ["fitness_at_start", "marginal_hunting_ability"]
        if self.marginal_extra is not None:
            cols.append(self.gradient_column)
        per = "year" if self.currency == "breeding" else "season"
        cols += [f"kills_per_{per}_{g}" for g in self.groups]
        return cols

    def rows(self) -> list[list]:
        """One row per cell (x varies fastest), in the order of :meth:`columns`; a
        threshold that does not apply is None (an empty CSV field)."""
        out = []
        for iy, yv in enumerate(self.y):
            for ix, xv in enumerate(self.x):
                row = [float(xv), float(yv), str(self.regime_healthy[iy, ix]),
                       str(self.regime_injured[iy, ix]),
                       str(self.regime_healthy_detail[iy, ix]),
                       str(self.regime_injured_detail[iy, ix])]
                for k in range(len(CONDITION_NAMES)):
                    row += [WHEN_KEYS[c] for c in self.when_codes[k, :, iy, ix]]
                    row += [None if np.isnan(t) else float(t)
                            for t in self.when_threshold[k, :, iy, ix]]
                row += [float(self.fitness_at_start[iy, ix]),
                        float(self.marginal_hunting_ability[iy, ix])]
                if self.marginal_extra is not None:
                    row.append(float(self.marginal_extra[iy, ix]))
                row += [float(self.kills_per_year[g][iy, ix]) for g in self.groups]
                out.append(row)
        return out


CONDITION_NAMES = ("healthy", "injured")
WILD = {"wild", ""}
"""Group names that count as wild prey (as in :mod:`riskdiet.analysis.findings`)."""


def study_values(study: Study, request: MapRequest) -> tuple[float, float]:
    """The mapped scenario's own values of the two axis inputs (where the study sits)."""
    pred, prey = study.inputs_for(study.scenario(request.scenario))
    out = []
    for axis in (request.x, request.y):
        if axis.prey is None:
            out.append(float(getattr(pred, axis.field)))
            continue
        if axis.field == SHARE:
            rates = [p.encounters(pred) for p in prey]
            total = sum(rates)
            mine = sum(r for p, r in zip(prey, rates, strict=True) if p.name == axis.prey)
            out.append(mine / total if total > 0 else float("nan"))
            continue
        value = next(getattr(p, axis.field) for p in prey if p.name == axis.prey)
        out.append(float("nan") if value is None else float(value))
    return out[0], out[1]


def cell_inputs(study: Study, request: MapRequest, x: float, y: float,
                base: tuple[Predator, tuple[Prey, ...]] | None = None
                ) -> tuple[Predator, tuple[Prey, ...]]:
    """Inputs of one map cell (``base``: the scenario's inputs, if already known)."""
    pred, prey = base or study.inputs_for(study.scenario(request.scenario))
    pred, prey = apply_axis(pred, prey, request.x, x)
    return apply_axis(pred, prey, request.y, y)


def cell_name(request: MapRequest, x: float, y: float) -> str:
    """How a map cell is named in messages: its two input values."""
    return (f"map cell ({request.x.target} = {x:.6g}, {request.y.target} = {y:.6g}) "
            f"of scenario {request.scenario!r}")


def map_cells(request: MapRequest) -> list[Cell]:
    """The map's cells, row by row (x varies fastest), for the batched entry point."""
    return [Cell(request.scenario,
                 (InputChange(request.x.prey, request.x.field, float(x), FINAL_STAGE),
                  InputChange(request.y.prey, request.y.field, float(y), FINAL_STAGE)),
                 cell_name(request, x, y), request.gradient)
            for y in request.y.values for x in request.x.values]


def _regimes(policy: np.ndarray, prey: tuple[Prey, ...], n: int) -> tuple[str, str, str, str]:
    """Regime names and details of a healthy and an injured animal from one cell's policy."""
    risky = tuple(p.risky for p in prey)
    names = tuple(p.name for p in prey)
    out = []
    for k in (0, 1):
        mask = np.ascontiguousarray(policy[k] >= 0)
        out.append(_classify(mask.tobytes(), mask.shape, risky, names, n, 1))
    (cat_h, det_h), (cat_i, det_i) = out
    return cat_h, cat_i, det_h, det_i


@functools.lru_cache(maxsize=8192)
def _classify(mask: bytes, shape: tuple[int, int], risky: tuple[bool, ...],
              names: tuple[str, ...], n: int, first_level: int) -> tuple[str, str]:
    """Regime category and detail of one attack table (neighbouring cells often share one)."""
    attacked = np.frombuffer(mask, dtype=bool).reshape(shape)
    fractions = (first_level + np.arange(shape[0])) / n
    r = classify(attacked, np.array(risky), list(names), fractions)
    return r.category, r.detail


BLOCK_CELLS = 2048
"""Cells solved before their attack tables are reduced to regimes and per-prey
categories: a 200 x 200 map never holds more than this many policies at once."""


@dataclass
class _Reduced:
    """What a map keeps of each cell once its policy is read (no policy)."""

    regimes: list[tuple[str, str, str, str]]
    codes: list[np.ndarray]
    thresholds: list[np.ndarray]
    fitness: list[float]
    marginal: list[float]
    extra: list[float]
    kills: list[np.ndarray]
    residual: float = 0.0


def _reduce(results: list[CellResult], prey: tuple[Prey, ...], levels: list[int],
            into: _Reduced) -> None:
    """Read a block of cells: regimes, when each prey is attacked, the numbers; drop policies.

    ``levels`` gives each cell's number of energy levels n (an axis may change
    it, or the breeding threshold, and so the shape of the policy): cells of one
    shape are read together.
    """
    codes = np.empty((len(results), 2, len(prey)), dtype=np.int8)
    thresholds = np.empty((len(results), 2, len(prey)))
    shapes: dict[tuple, list[int]] = {}
    for b, r in enumerate(results):
        shapes.setdefault((r.policy.shape, levels[b]), []).append(b)
    for (shape, n), index in shapes.items():
        attacked = np.stack([results[b].policy >= 0 for b in index])   # (B, 2, m, P)
        c, lower, upper = when_attacked(attacked, (1 + np.arange(shape[1])) / n)
        codes[index] = c
        thresholds[index] = when_threshold(c, lower, upper)
    into.codes.append(codes)
    into.thresholds.append(thresholds)
    for r, n in zip(results, levels, strict=True):
        into.regimes.append(_regimes(r.policy, prey, n))
        into.fitness.append(r.fitness_at_start)
        into.marginal.append(r.marginal_hunting_ability)
        into.extra.append(r.marginal_extra if r.marginal_extra is not None else np.nan)
        into.kills.append(np.asarray(r.kills_per_predator_per_year, dtype=float))
        into.residual = max(into.residual, float(r.residual))


def make_map(study: Study, request: MapRequest, executor: Executor | None = None,
             bands: int | None = None, progress: Callable[[int, int], None] | None = None
             ) -> MapResult:
    """Solve every cell of a map with the batched entry point.

    Cells are solved in blocks of at most about :data:`BLOCK_CELLS` (each block
    split into ``bands`` chunks for the executor); each block's policies are
    read into regimes and per-prey categories and then dropped, so memory does
    not grow with the policies of the whole map.

    Parameters
    ----------
    study : Study
    request : MapRequest
    executor : concurrent.futures.Executor, optional
        Runs chunks of cells in parallel; inline when None.
    bands : int, optional
        Number of chunks of cells per block (default: 1 inline, else 8 or one
        per row).
    progress : callable, optional
        ``progress(done_rows, total_rows)`` as chunks finish.

    Raises
    ------
    SolveError
        Naming the first failing cell by its two input values (and how many
        more failed); nothing of the map is returned.
    """
    _check_request(study, request)
    ny, nx = request.y.steps, request.x.steps
    cells = map_cells(request)
    if bands is None:
        bands = 1 if executor is None else min(ny, 8)
    bands = max(1, bands)
    block = max(bands, min(len(cells), BLOCK_CELLS))
    chunk = max(1, -(-block // bands))
    block = chunk * bands
    base = study.inputs_for(study.scenario(request.scenario))
    prey = base[1]
    if "energy_levels" in (request.x.field, request.y.field):
        levels = [cell_inputs(study, request, x, y, base)[0].energy_levels
                  for y in request.y.values for x in request.x.values]
    else:
        levels = [base[0].energy_levels] * len(cells)
    reduced = _Reduced([], [], [], [], [], [], [])
    failed: list[CellResult] = []
    report = None if progress is None else (lambda done, total: progress(done // nx, ny))
    starts = range(0, len(cells), block)
    # the workers solve the next block while this process reads the current one
    solved = solve_cell_blocks(study, [cells[s:s + block] for s in starts], executor,
                               chunk=chunk, keep_policy=True, progress=report, cohort=False)
    for start, results in zip(starts, solved, strict=True):
        bad = [r for r in results if not r.ok]
        failed += bad
        if not failed:
            _reduce(results, prey, levels[start:start + block], reduced)
        del results
    if failed:
        more = f" (and {len(failed) - 1} more cells)" if len(failed) > 1 else ""
        raise SolveError(failed[0].failure, failed[0].label + more)
    return _assemble(study, request, reduced)


def _assemble(study: Study, request: MapRequest, reduced: _Reduced) -> MapResult:
    ny, nx = request.y.steps, request.x.steps
    pred, prey = study.inputs_for(study.scenario(request.scenario))
    groups: list[str] = []
    for p in prey:
        if p.group not in groups:
            groups.append(p.group)
    regimes = np.array(reduced.regimes, dtype=object)

    def grid_of(values, dtype=float):
        return np.asarray(values, dtype=dtype).reshape(ny, nx)

    kills_by_prey = np.stack(reduced.kills)                         # (cells, P)
    kills = {g: np.zeros((ny, nx)) for g in groups}
    for i, p in enumerate(prey):
        kills[p.group] += grid_of(kills_by_prey[:, i])
    extra = grid_of(reduced.extra) if request.gradient is not None else None
    # (cells, 2, P) -> (2, P, ny, nx)
    codes = np.concatenate(reduced.codes).reshape(ny, nx, 2, len(prey)).transpose(2, 3, 0, 1)
    thresholds = np.concatenate(reduced.thresholds).reshape(ny, nx, 2, len(prey)
                                                            ).transpose(2, 3, 0, 1)
    sx, sy = study_values(study, request)
    return MapResult(
        request=request,
        x=request.x.values,
        y=request.y.values,
        regime_healthy=grid_of(regimes[:, 0], object).astype(str),
        regime_injured=grid_of(regimes[:, 1], object).astype(str),
        regime_healthy_detail=grid_of(regimes[:, 2], object).astype(str),
        regime_injured_detail=grid_of(regimes[:, 3], object).astype(str),
        fitness_at_start=grid_of(reduced.fitness),
        marginal_hunting_ability=grid_of(reduced.marginal),
        marginal_extra=extra,
        kills_per_year=kills,
        groups=tuple(groups),
        max_residual=reduced.residual,
        currency=pred.currency,
        prey=tuple(p.name for p in prey),
        prey_groups=tuple(p.group for p in prey),
        prey_risky=tuple(p.risky for p in prey),
        when_codes=np.ascontiguousarray(codes),
        when_threshold=np.ascontiguousarray(thresholds),
        study_x=sx,
        study_y=sy,
    )


def request_from_settings(study: Study) -> MapRequest | None:
    """The map asked for in the study's settings (``map_x``, ``map_y``...), if any."""
    s = study.settings
    if not (s.map_x and s.map_y):
        return None

    def where(name: str) -> str:
        return study.locations.get(f"settings.{name}", f"settings.{name}")

    problems: list[Problem] = []
    scenario = s.map_scenario or BASELINE
    names = [sc.name for sc in study.scenarios]
    if scenario not in names:
        problems.append(Problem(where("map_scenario"), "a scenario of the study ("
                                + ", ".join(names) + ")", describe(scenario)))
    parsed = []
    for name, text in (("map_gradient", s.map_gradient), ("map_x", s.map_x),
                       ("map_y", s.map_y)):
        try:
            if name == "map_gradient":
                parsed.append(parse_target(text, study, where(name)) if text else None)
            else:
                parsed.append(parse_axis(text, study, where(name)))
        except StudyError as exc:
            problems += exc.problems
    if problems:
        raise StudyError(problems, study.source or None)
    return MapRequest(scenario, parsed[1], parsed[2], parsed[0], where("map_x"),
                      where("map_y"))


def check_settings_map(study: Study) -> None:
    """Every check a map asked for in the settings will meet, run before any work.

    Raises
    ------
    StudyError
        Each problem at its Settings cell (or JSON path).
    """
    request = request_from_settings(study)
    if request is not None:
        _check_request(study, request)
