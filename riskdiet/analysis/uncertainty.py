"""How sure: uncertainty propagation, Sobol indices, elasticities (MODEL.md section 9).

Latin hypercube draws of every range (McKay, Beckman & Conover 1979); every
scenario is solved on the *same* draws, so comparisons with the baseline are
paired. A range with a blank scenario replaces the baseline value before the
scenario's changes apply; a range naming a scenario replaces that scenario's
final value. All solves go through the batched entry point
(:func:`riskdiet.analysis.cells.solve_cells`), so results do not depend on
the number of workers.

References
----------
.. [1] McKay, M. D., Beckman, R. J. & Conover, W. J. (1979) Technometrics 21, 239-245.
.. [2] Saltelli, A. et al. (2010) Computer Physics Communications 181, 259-270.
.. [3] Mastrandrea, M. D. et al. (2010) Guidance Note for Lead Authors of the IPCC
   Fifth Assessment Report on Consistent Treatment of Uncertainties. IPCC.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from concurrent.futures import Executor
from dataclasses import dataclass, field

import numpy as np

from riskdiet.analysis.cells import (
    BASELINE_STAGE,
    FINAL_STAGE,
    Cell,
    CellResult,
    InputChange,
    solve_cells,
)
from riskdiet.core.stats.probability_words import paired_probabilities
from riskdiet.core.stats.ranges import Range, draw_values
from riskdiet.core.stats.sensitivity import SobolAnalysis, power_of_two_at_least, sobol_analysis
from riskdiet.errors import SolveError
from riskdiet.model import BASELINE, Study, UncertainInput
from riskdiet.uncertainty_rules import parse_goal

Progress = Callable[[int, int], None]

FITNESS = "fitness_at_start"
KILLS = "kills_per_predator_per_year"
KILLS_GROUP = "kills_per_predator_per_year_by_group"
COHORT = "cohort_kills"
COHORT_GROUP = "cohort_kills_by_group"


@dataclass(frozen=True)
class Goal:
    """The study's management goal.

    Attributes
    ----------
    text : str
        ``fewer:NAME`` or ``higher:breeding``.
    higher_is_better : bool
    outcome, name : str, str or None
        The outcome judged (``cohort_kills``/``cohort_kills_by_group`` with the
        prey or group, or ``fitness_at_start`` with None).
    words : str
        The goal in words, e.g. ``fewer livestock kills by the released animals``.
    """

    text: str
    higher_is_better: bool
    outcome: str
    name: str | None
    words: str


def study_goal(study: Study) -> Goal:
    """The goal setting resolved (MODEL.md section 9; default fewer:livestock if it exists)."""
    kind, name = parse_goal(study.settings.goal, study.prey)
    if kind == "higher":
        what = ("ending the season in condition" if study.predator.currency == "season"
                else "reaching breeding condition")
        return Goal("higher:breeding", True, FITNESS, None, f"a higher chance of {what}")
    is_prey = any(p.name == name for p in study.prey)
    return Goal(f"fewer:{name}", False, COHORT if is_prey else COHORT_GROUP, name,
                f"fewer {name} kills by the released animals")


def groups_of(study: Study) -> list[str]:
    """Prey groups in order of first appearance."""
    out: list[str] = []
    for p in study.prey:
        if p.group not in out:
            out.append(p.group)
    return out


def goal_values(study: Study, goal: Goal, results: Sequence[CellResult]) -> np.ndarray:
    """The goal outcome of each cell."""
    if goal.outcome == FITNESS:
        return np.array([r.fitness_at_start for r in results])
    if goal.outcome == COHORT:
        i = next(k for k, p in enumerate(study.prey) if p.name == goal.name)
        return np.array([r.cohort_kills[i] for r in results])
    mask = np.array([p.group == goal.name for p in study.prey])
    return np.array([r.cohort_kills[mask].sum() for r in results])


def _ranges(study: Study) -> list[Range]:
    return [Range(u.low, u.high, u.shape, u.mode if u.shape == "triangular" else None, u.where)
            for u in study.uncertainty]


def applies(u: UncertainInput, scenario: str) -> bool:
    """Whether a range acts in a scenario (blank scenario: every one)."""
    return u.scenario is None or u.scenario == scenario


def draw_cells(study: Study, values: np.ndarray, scenario: str, label: str = "draw"
               ) -> list[Cell]:
    """One cell per draw (row of ``values``, one column per range) of a scenario."""
    cols = [(j, u) for j, u in enumerate(study.uncertainty) if applies(u, scenario)]
    return [Cell(scenario, tuple(
        InputChange(u.prey, u.field, float(row[j]),
                    BASELINE_STAGE if u.scenario is None else FINAL_STAGE)
        for j, u in cols), f"{label} {k + 1} of scenario {scenario!r}")
        for k, row in enumerate(values)]


def solve_all(study: Study, cells: list[Cell], executor: Executor | None = None,
              progress: Progress | None = None, done: int = 0, total: int = 0,
              block: int = 1024) -> list[CellResult]:
    """Solve cells in blocks (for progress); a failed cell is an error naming its values."""
    out: list[CellResult] = []
    for lo in range(0, len(cells), block):
        part = solve_cells(study, cells[lo:lo + block], executor, chunk=256)
        for r in part:
            if not r.ok:
                raise SolveError(r.failure, r.label)
        out += part
        if progress is not None:
            progress(done + len(out), total or len(cells))
    return out


@dataclass(frozen=True)
class Interval:
    """Median and 5-95 % interval of one outcome over the draws."""

    outcome: str
    name: str | None
    median: float
    p05: float
    p95: float

    def to_dict(self) -> dict:
        return {"outcome": self.outcome, "name": self.name, "median": self.median,
                "p05": self.p05, "p95": self.p95}


def _interval(outcome: str, name: str | None, values: np.ndarray) -> Interval:
    q = np.quantile(values, [0.5, 0.05, 0.95])
    return Interval(outcome, name, float(q[0]), float(q[1]), float(q[2]))


@dataclass(frozen=True)
class ScenarioUncertainty:
    """One scenario over the draws.

    Attributes
    ----------
    name : str
    intervals : tuple of Interval
    probability_better, probability_equal, probability_worse : float
        Paired with the baseline on the goal (baseline itself: equal = 1).
    probability_in_diet : dict
        Prey -> share of draws in which a healthy animal at the start reserves
        attacks it.
    classic_disagreement_share : float
        Share of draws in which the classic diet and that diet differ.
    goal_values : ndarray
        The goal outcome in each draw (kept for the brief, not in JSON).
    """

    name: str
    intervals: tuple[Interval, ...]
    probability_better: float
    probability_equal: float
    probability_worse: float
    probability_in_diet: dict[str, float]
    classic_disagreement_share: float
    goal_values: np.ndarray = field(repr=False, compare=False, default=None)

    def interval(self, outcome: str, name: str | None = None) -> Interval:
        return next(i for i in self.intervals if i.outcome == outcome and i.name == name)

    def to_dict(self) -> dict:
        return {"name": self.name, "intervals": [i.to_dict() for i in self.intervals],
                "probability_better": self.probability_better,
                "probability_equal": self.probability_equal,
                "probability_worse": self.probability_worse,
                "probability_in_diet": dict(self.probability_in_diet),
                "classic_disagreement_share": self.classic_disagreement_share}


def summarise(study: Study, name: str, results: Sequence[CellResult], goal: Goal,
              baseline_goal: np.ndarray) -> ScenarioUncertainty:
    """Intervals, probabilities and disagreement of one scenario's draws."""
    prey = [p.name for p in study.prey]
    fitness = np.array([r.fitness_at_start for r in results])
    kills = np.array([r.kills_per_predator_per_year for r in results])
    cohort = np.array([r.cohort_kills for r in results])
    attacked = np.array([r.attacked_at_start for r in results])
    classic = np.array([r.classic_diet for r in results])
    intervals = [_interval(FITNESS, None, fitness)]
    intervals += [_interval(KILLS, p, kills[:, i]) for i, p in enumerate(prey)]
    groups = groups_of(study)
    masks = {g: np.array([p.group == g for p in study.prey]) for g in groups}
    intervals += [_interval(KILLS_GROUP, g, kills[:, masks[g]].sum(axis=1)) for g in groups]
    intervals += [_interval(COHORT, p, cohort[:, i]) for i, p in enumerate(prey)]
    intervals += [_interval(COHORT_GROUP, g, cohort[:, masks[g]].sum(axis=1)) for g in groups]
    mine = goal_values(study, goal, results)
    paired = paired_probabilities(mine, baseline_goal, goal.higher_is_better)
    return ScenarioUncertainty(
        name=name, intervals=tuple(intervals),
        probability_better=paired.better, probability_equal=paired.same,
        probability_worse=paired.worse,
        probability_in_diet={p: float(attacked[:, i].mean()) for i, p in enumerate(prey)},
        classic_disagreement_share=float(np.mean(np.any(attacked != classic, axis=1))),
        goal_values=mine)


@dataclass(frozen=True)
class Elasticity:
    """d ln(goal)/d ln(input) at the baseline; None where undefined."""

    input: str
    value: float | None
    has_range: bool

    def to_dict(self) -> dict:
        return {"input": self.input, "value": self.value, "has_range": self.has_range}


INFLUENTIAL = 0.5
"""An elasticity of at least 0.5 in size marks an influential input: a 10 % error in it
moves the goal outcome by 5 % or more [dimensionless]."""


@dataclass(frozen=True)
class UncertaintyResult:
    """Everything ``riskdiet uncertainty`` reports (its JSON layout is :meth:`to_dict`).

    Attributes
    ----------
    study : Study
    draws, seed : int
    goal : Goal
    inputs : tuple of str
        Names of the ranges' inputs, in row order (``FIELD`` or ``PREY:FIELD``,
        with `` in SCENARIO`` for a range that names a scenario).
    scenarios : tuple of ScenarioUncertainty
        Baseline first.
    sobol : SobolAnalysis or None
        On the baseline scenario; None with ``--no-sobol`` or no range acting there.
    sobol_inputs : tuple of str
        Inputs of the Sobol analysis.
    elasticities : tuple of Elasticity
    """

    study: Study
    draws: int
    seed: int
    goal: Goal
    inputs: tuple[str, ...]
    scenarios: tuple[ScenarioUncertainty, ...]
    sobol: SobolAnalysis | None
    sobol_inputs: tuple[str, ...]
    elasticities: tuple[Elasticity, ...]

    @property
    def goal_outcome_key(self) -> str:
        return _outcome_key(self.goal.outcome, self.goal.name)

    def measure_next(self) -> list[str]:
        """Uncertain inputs by total index on the goal outcome, largest first."""
        if self.sobol is None:
            return []
        return list(self.sobol.outcome(self.goal_outcome_key).ranking())

    def influential_without_range(self) -> list[Elasticity]:
        return [e for e in self.elasticities if not e.has_range and e.value is not None
                and abs(e.value) >= INFLUENTIAL]

    def sobol_records(self) -> list[dict]:
        if self.sobol is None:
            return []
        out = []
        for o in self.sobol.outcomes:
            outcome, _, name = o.outcome.partition("|")
            name = name or None
            if o.constant:
                # a constant outcome has no variance to split: no indices (null)
                out += [{"outcome": outcome, "name": name, "input": i, "first": None,
                         "first_low": None, "first_high": None, "total": None,
                         "total_low": None, "total_high": None} for i in self.sobol_inputs]
                continue
            out += [{"outcome": outcome, "name": name, "input": ix.input, "first": ix.first,
                     "first_low": ix.first_low, "first_high": ix.first_high,
                     "total": ix.total, "total_low": ix.total_low, "total_high": ix.total_high}
                    for ix in o.indices]
        return out

    def to_dict(self) -> dict:
        """The JSON layout of ``riskdiet uncertainty --json`` (README)."""
        return {"draws": self.draws, "seed": self.seed, "goal": self.goal.text,
                "scenarios": [s.to_dict() for s in self.scenarios],
                "sobol": self.sobol_records(),
                "elasticities": [e.to_dict() for e in self.elasticities],
                "measure_next": self.measure_next()}


def _outcome_key(outcome: str, name: str | None) -> str:
    return outcome if name is None else f"{outcome}|{name}"


def input_label(u: UncertainInput) -> str:
    return u.name if u.scenario is None else f"{u.name} in {u.scenario}"


def sobol_outcomes(study: Study, goal: Goal) -> list[tuple[str, str | None]]:
    """Fitness at start, each group's long-run kills, and the goal outcome (MODEL.md 9)."""
    out: list[tuple[str, str | None]] = [(FITNESS, None)]
    out += [(KILLS_GROUP, g) for g in groups_of(study)]
    if (goal.outcome, goal.name) not in out:
        out.append((goal.outcome, goal.name))
    return out


def outcome_matrix(study: Study, outcomes: list[tuple[str, str | None]],
                   results: Sequence[CellResult]) -> np.ndarray:
    rows = []
    for outcome, name in outcomes:
        if outcome == FITNESS:
            rows.append([r.fitness_at_start for r in results])
        elif outcome == KILLS_GROUP:
            mask = np.array([p.group == name for p in study.prey])
            rows.append([r.kills_per_predator_per_year[mask].sum() for r in results])
        else:
            rows.append(goal_values(study, Goal("", False, outcome, name, ""), results))
    return np.array(rows, dtype=float)


def run_uncertainty(study: Study, draws: int | None = None, seed: int | None = None,
                    executor: Executor | None = None, sobol: bool = True,
                    sobol_n: int | None = None, progress: Progress | None = None
                    ) -> UncertaintyResult:
    """Propagate the study's ranges, and (optionally) the Sobol analysis and elasticities.

    Parameters
    ----------
    study : Study
        A validated study with at least one range.
    draws, seed : int, optional
        Override the settings ``draws`` and ``seed``.
    executor : concurrent.futures.Executor, optional
        Passed to :func:`solve_cells`; results do not depend on it.
    sobol : bool
        Compute Sobol indices on the baseline scenario.
    sobol_n : int, optional
        Base sample of the Sobol design (default: draws rounded up to a power of two).
    progress : callable, optional
        ``progress(done, total)`` after each block of solves.

    Raises
    ------
    SolveError
        A draw whose solve fails, naming the draw's input values.
    """
    from riskdiet.errors import RiskdietError

    if not study.uncertainty:
        raise RiskdietError("the study has no uncertainty ranges: add rows to its Uncertainty "
                            "sheet (or its uncertainty list) first")
    n = study.settings.draws if draws is None else draws
    s = study.settings.seed if seed is None else seed
    goal = study_goal(study)
    ranges = _ranges(study)
    values = draw_values(ranges, n, s)
    base_cols = [j for j, u in enumerate(study.uncertainty) if applies(u, BASELINE)]
    n_sobol = power_of_two_at_least(sobol_n or n) if sobol and base_cols else 0
    d = len(base_cols)
    inputs_e = elasticity_inputs(study)
    total = n * len(study.scenarios) + n_sobol * (d + 2) + 2 * len(inputs_e)
    done = 0
    summaries = []
    baseline_goal = None
    for sc in study.scenarios:
        results = solve_all(study, draw_cells(study, values, sc.name), executor, progress,
                            done, total)
        done += len(results)
        if baseline_goal is None:
            baseline_goal = goal_values(study, goal, results)
        summaries.append(summarise(study, sc.name, results, goal, baseline_goal))
    analysis = None
    names = [input_label(study.uncertainty[j]) for j in base_cols]
    if n_sobol:
        outcomes = sobol_outcomes(study, goal)

        def model(x: np.ndarray) -> np.ndarray:
            nonlocal done
            full = np.zeros((x.shape[1], len(study.uncertainty)))
            full[:, base_cols] = x.T
            results = solve_all(study, draw_cells(study, full, BASELINE, "Sobol point"),
                                executor, progress, done, total)
            done += len(results)
            return outcome_matrix(study, outcomes, results)

        analysis = sobol_analysis(model, [ranges[j] for j in base_cols], n_sobol, s,
                                  inputs=names,
                                  outcomes=[_outcome_key(o, k) for o, k in outcomes])
    elastic = elasticities(study, goal, inputs_e, executor, progress, done, total)
    return UncertaintyResult(study, n, s, goal,
                             tuple(input_label(u) for u in study.uncertainty),
                             tuple(summaries), analysis, tuple(names), elastic)


def elasticity_inputs(study: Study) -> list[tuple[str | None, str, float]]:
    """Every numeric input with a value at the baseline: (prey or None, field, value).

    Fields that change the grid's shape are left out (a 1 % step would change
    the grid, not the input); so are blank fields without a derived value.
    """
    from riskdiet.fields import field_specs
    from riskdiet.model import GRID_SHAPE_FIELDS, Predator, Prey

    out: list[tuple[str | None, str, float]] = []
    predator = study.predator
    for f, spec in field_specs(Predator).items():
        if not spec.numeric or f in GRID_SHAPE_FIELDS:
            continue
        value = getattr(predator, f)
        if value is None and f == "daily_cost_mj" and predator.body_mass_kg:
            value = predator.effective_daily_cost_mj
        if value is None and f == "released_animals":
            value = predator.cohort_size
        if f == "body_mass_kg" and predator.daily_cost_mj is not None:
            continue  # used only to estimate a blank daily cost
        if f == "activity_multiplier" and predator.daily_cost_mj is not None:
            continue
        if value is not None:
            out.append((None, f, float(value)))
    for p in study.baseline_prey:
        for f, spec in field_specs(Prey).items():
            if not spec.numeric:
                continue
            value = getattr(p, f)
            if f == "density_per_km2" and p.encounters_per_day is not None:
                continue  # overridden by encounters_per_day
            if value is None and f == "encounters_per_day":
                continue  # density is the input that stands for it
            if value is not None:
                out.append((p.name, f, float(value)))
    return out


def elasticities(study: Study, goal: Goal, inputs: list[tuple[str | None, str, float]],
                 executor: Executor | None = None, progress: Progress | None = None,
                 done: int = 0, total: int = 0) -> tuple[Elasticity, ...]:
    """One-at-a-time elasticities of the goal outcome at the baseline, +/- 1 %.

    e = [ln y(x (1 + 0.01)) - ln y(x (1 - 0.01))] / [ln x+ - ln x-], with x+ and x- the
    values actually used (whole-number fields are rounded half up, so the step
    divided by is the step taken; no step left after rounding: None). None also
    where x = 0, y = 0 or y changes sign, and for an input whose +/- 1 % leaves
    its bounds (probability 1, say).

    References
    ----------
    .. [1] Saltelli, A. et al. (2008) Global Sensitivity Analysis: The Primer. Wiley, ch. 1.
    """
    from riskdiet.core.stats.sensitivity import ELASTICITY_STEP
    from riskdiet.fields import INTEGER, field_specs
    from riskdiet.model import Predator, Prey, round_half_up

    cells = []
    used = []
    for prey, f, x in inputs:
        spec = field_specs(Predator if prey is None else Prey)[f]
        pair = []
        for sign in (1, -1):
            v = x * (1 + sign * ELASTICITY_STEP)
            if spec.kind == INTEGER:
                v = float(round_half_up(v))
            pair.append(v)
        used.append(pair)
        cells += [Cell(BASELINE, (InputChange(prey, f, v, BASELINE_STAGE),),
                       f"elasticity step of {prey + ':' if prey else ''}{f}") for v in pair]
    results = solve_cells(study, cells, executor, chunk=256)
    if progress is not None:
        progress(done + len(cells), total or len(cells))
    ranged = {(u.prey.lower() if u.prey else None, u.field) for u in study.uncertainty}
    out = []
    for k, (prey, f, x) in enumerate(inputs):
        name = f"{prey}:{f}" if prey else f
        up, down = results[2 * k], results[2 * k + 1]
        value = None
        xp, xm = used[k]
        if up.ok and down.ok and x != 0 and xp > 0 and xm > 0 and xp != xm:
            yp, ym = goal_values(study, goal, [up, down])
            if yp != 0 and ym != 0 and (yp > 0) == (ym > 0):
                value = float((np.log(abs(yp)) - np.log(abs(ym))) / (np.log(xp) - np.log(xm)))
        out.append(Elasticity(name, value, (prey.lower() if prey else None, f) in ranged))
    return tuple(out)
