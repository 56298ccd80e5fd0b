"""What a fit to field diet records works on: compositions, rate rows, search ranges.

MODEL.md section 10. The study's observations become *compositions* (counts
by prey for each (scenario, kind, source), 0 for a prey without a row) and
*rate rows* (kills over predator-days); the ``fit`` setting becomes the
inputs to fit, each with its search range. :class:`Evaluator` turns points
of the search into predicted daily kill rates K_i (section 5) through the
batched entry point :func:`riskdiet.analysis.cells.solve_cells`, with a cache
so that no point is solved twice; :func:`log_likelihood` turns those into
the likelihood of the records.

References
----------
.. [1] Mosimann, J. E. (1962) On the compound multinomial distribution, the
   multivariate beta-distribution, and correlations among proportions.
   Biometrika 49, 65-82.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from concurrent.futures import Executor
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from riskdiet.analysis.cells import BASELINE_STAGE, Cell, InputChange, cell_inputs, solve_cells
from riskdiet.core.stats.composition_likelihood import (
    LogLikelihood,
    dirichlet_multinomial_log_likelihood,
    multinomial_log_likelihood,
    poisson_rate_log_likelihood,
)
from riskdiet.errors import Problem, RiskdietError, SolveError, StudyError
from riskdiet.fields import field_specs
from riskdiet.model import BASELINE, Predator, Prey, Study
from riskdiet.observations import FitTarget, compositions, parse_fit_targets

DEFAULT_HUNTING_RANGE = (0.05, 5.0)
"""Default search range of hunting ability (MODEL.md section 10)."""

DEFAULT_FACTORS = (0.1, 10.0)
"""Default search range of other inputs: this factor times the study's value (section 10)."""

LOG_CONCENTRATION_RANGE = (math.log(1e-2), math.log(1e6))
"""Search range of ln c, the Dirichlet-multinomial concentration (c -> inf: multinomial)."""


@dataclass(frozen=True)
class Composition:
    """Counts of records by prey from one (scenario, kind, source).

    Attributes
    ----------
    scenario, kind, source : str
    counts : ndarray, shape (P,)
        Records per prey of the study, 0 for a prey without a row [records].
    detection : ndarray, shape (P,)
        Relative chance that one kill of each prey is recorded [ratio].
    """

    scenario: str
    kind: str
    source: str
    counts: np.ndarray
    detection: np.ndarray

    @property
    def label(self) -> str:
        text = f"{self.kind}" + (f" from {self.source}" if self.source else "")
        return text + ("" if self.scenario == BASELINE else f" (scenario {self.scenario})")

    @property
    def total(self) -> int:
        return int(self.counts.sum())


@dataclass(frozen=True)
class RateRow:
    """Kills found over ``predator_days`` of monitoring (a Poisson count)."""

    scenario: str
    source: str
    count: int
    predator_days: float
    detection: np.ndarray

    @property
    def label(self) -> str:
        text = "kill rate" + (f" from {self.source}" if self.source else "")
        return text + ("" if self.scenario == BASELINE else f" (scenario {self.scenario})")


@dataclass(frozen=True)
class SearchRange:
    """Where one input is searched.

    Attributes
    ----------
    target : FitTarget
    low, high : float
        Bounds [the input's unit].
    log : bool
        Grid evenly spaced in log (ranges spanning a factor of 10 or more).
    origin : str
        In words: the study's Uncertainty range, or the default.
    """

    target: FitTarget
    low: float
    high: float
    log: bool
    origin: str

    def grid(self, points: int) -> np.ndarray:
        if self.log:
            return np.geomspace(self.low, self.high, points)
        return np.linspace(self.low, self.high, points)


@dataclass(frozen=True)
class FitData:
    """Everything a fit needs besides the solver.

    Attributes
    ----------
    ranges : tuple of SearchRange
        One per fitted input, in the order of the ``fit`` setting.
    compositions : tuple of Composition
    rates : tuple of RateRow
    prey_names : tuple of str
    overdispersion : bool
        Dirichlet-multinomial compositions with one shared concentration.
    """

    ranges: tuple[SearchRange, ...]
    compositions: tuple[Composition, ...]
    rates: tuple[RateRow, ...]
    prey_names: tuple[str, ...]
    overdispersion: bool = False

    @property
    def scenarios(self) -> tuple[str, ...]:
        """Scenarios with records, in order of first appearance."""
        names = [c.scenario for c in self.compositions] + [r.scenario for r in self.rates]
        return tuple(dict.fromkeys(names))

    @property
    def parameters(self) -> int:
        """Fitted parameters k: the inputs, plus the concentration when overdispersed."""
        return len(self.ranges) + (1 if self.overdispersion else 0)

    @property
    def observations(self) -> int:
        """Sample size n for AICc: records in compositions plus one per rate row."""
        return sum(c.total for c in self.compositions) + len(self.rates)

    def with_counts(self, counts: Sequence[np.ndarray]) -> FitData:
        """The same data with other composition counts (simulated records)."""
        comps = tuple(Composition(c.scenario, c.kind, c.source, np.asarray(x, dtype=float),
                                  c.detection)
                      for c, x in zip(self.compositions, counts, strict=True))
        return FitData(self.ranges, comps, self.rates, self.prey_names, self.overdispersion)


def search_range(study: Study, target: FitTarget) -> SearchRange:
    """The input's Uncertainty range (blank scenario) if given, else the default range."""
    for u in study.uncertainty:
        if u.field == target.field and (u.prey or "").lower() == (target.prey or "").lower():
            return SearchRange(target, u.low, u.high, u.low > 0 and u.high / u.low >= 10,
                               "the study's Uncertainty range")
    if target.prey is None:
        spec = field_specs(Predator)[target.field]
        value = getattr(study.predator, target.field)
        if target.field == "daily_cost_mj" and value is None:
            value = study.predator.effective_daily_cost_mj
    else:
        spec = field_specs(Prey)[target.field]
        record = next(p for p in study.prey if p.name == target.prey)
        value = getattr(record, target.field)
        if target.field == "encounters_per_day" and value is None:
            value = record.encounters(study.predator)
    if target.field == "hunting_ability":
        low, high = DEFAULT_HUNTING_RANGE
        origin = "the default range for hunting ability"
    elif spec.low is not None and spec.high is not None:
        # chances and fractions: within their bounds (an open end is kept just inside)
        width = spec.high - spec.low
        low = spec.low + (1e-3 * width if spec.low_open else 0.0)
        high = spec.high - (1e-2 * width if spec.high_open else 0.0)
        origin = "the input's own bounds"
    else:
        if value is None or value <= 0:
            raise StudyError([Problem(study.locations.get("settings.fit", "settings.fit"),
                                      f"a search range for {target.name}: give it a row on the "
                                      "Uncertainty sheet (its study value is not above 0, so "
                                      "0.1× to 10× of it is no range)", describe_value(value))])
        low, high = DEFAULT_FACTORS[0] * value, DEFAULT_FACTORS[1] * value
        if spec.high is not None:
            high = min(high, spec.high)
        if spec.low is not None:
            low = max(low, spec.low)
        origin = f"the default range, 0.1× to 10× the study's value {value:g}"
    return SearchRange(target, float(low), float(high), low > 0 and high / low >= 10, origin)


def describe_value(value: object) -> str:
    return "nothing (blank)" if value is None else f"{value:g}"  # type: ignore[str-format]


def fit_data(study: Study) -> FitData:
    """Compositions, rate rows and search ranges of a study, ready to fit.

    Raises
    ------
    StudyError
        No observations, no ``fit`` setting, or an input without a usable range.

    Notes
    -----
    A prey without a row in a composition has 0 records; its detection is the
    one given for it in another composition of the same kind (first found),
    else 1. A rate row uses, for each prey, the detection of that prey in the
    ``kills`` rows of the same scenario and source, else the rate row's own
    detection.
    """
    where = study.locations.get("settings.fit", "settings.fit")
    if not study.observations:
        raise StudyError([Problem("Observations sheet (observations)", "field diet records "
                                  "to fit (rows of prey and count)", "none")],
                         study.source or None)
    targets, problems = parse_fit_targets(study.settings.fit, study.prey, where)
    if problems:
        raise StudyError(problems, study.source or None)
    if not targets:
        raise StudyError([Problem(where, "one to three inputs to fit, e.g. hunting_ability",
                                  "nothing (blank)")], study.source or None)
    names = [p.name for p in study.prey]
    index = {n: i for i, n in enumerate(names)}
    known: dict[tuple[str, str], float] = {}
    for row in study.observations:
        if not row.is_rate:
            known.setdefault((row.kind, row.prey), row.detection)
    comps = []
    for (scenario, kind, source), rows in compositions(study.observations).items():
        counts = np.zeros(len(names))
        detection = np.array([known.get((kind, n), 1.0) for n in names])
        for row in rows:
            counts[index[row.prey]] = row.count
            detection[index[row.prey]] = row.detection
        comps.append(Composition(scenario, kind, source, counts, detection))
    rates = []
    for row in study.observations:
        if row.is_rate:
            scenario, _, source = row.composition_key
            detection = np.full(len(names), row.detection)
            for other in study.observations:
                if not other.is_rate and other.composition_key == (scenario, "kills", source):
                    detection[index[other.prey]] = other.detection
            rates.append(RateRow(scenario, source, int(row.count), float(row.predator_days),
                                 detection))
    ranges = tuple(search_range(study, t) for t in targets)
    return FitData(ranges, tuple(comps), tuple(rates), tuple(names),
                   bool(study.settings.overdispersion))


# --------------------------------------------------------------------------- predictions


@dataclass(frozen=True)
class Prediction:
    """Predicted daily kill rates at one point of the search, per scenario with records.

    Attributes
    ----------
    kills : dict
        Scenario -> K_i, expected kills of each prey per predator per day
        (MODEL.md section 5; season currency: season kills / season days).
    classic : dict
        Scenario -> the well-fed forager's kill rates (MODEL.md section 6):
        lambda_i s_i / (1 + sum_D lambda_j s_j h_j) within Charnov's diet D, else 0.
    """

    kills: dict[str, np.ndarray]
    classic: dict[str, np.ndarray]


Point = tuple[float, ...]


def _changes(ranges: Sequence[SearchRange], point: Point) -> tuple[InputChange, ...]:
    return tuple(InputChange(r.target.prey, r.target.field, float(v), BASELINE_STAGE)
                 for r, v in zip(ranges, point, strict=True))


def classic_rates(predator: Predator, prey: tuple[Prey, ...], diet: np.ndarray) -> np.ndarray:
    """Kill rates of the well-fed forager within Charnov's diet [kills/day] (section 6)."""
    a = predator.hunting_ability
    lam = np.array([p.encounters(predator) for p in prey])
    s = np.array([min(1.0, a * p.capture_success) if p.is_skill_dependent else p.capture_success
                  for p in prey])
    h = np.array([p.handling_days for p in prey])
    d = np.asarray(diet, dtype=bool)
    return np.where(d, lam * s, 0.0) / (1.0 + float(np.sum((lam * s * h)[d])))


class Evaluator:
    """Predicted kill rates at points of the search, solved in batches and cached.

    Parameters
    ----------
    study : Study
    data : FitData
    executor : concurrent.futures.Executor, optional
        Passed to :func:`riskdiet.analysis.cells.solve_cells`.
    """

    def __init__(self, study: Study, data: FitData, executor: Executor | None = None):
        self.study = study
        self.data = data
        self.executor = executor
        self.cache: dict[Point, Prediction] = {}
        self.solves = 0

    def __call__(self, points: Sequence[Point]) -> list[Prediction]:
        todo = [p for p in dict.fromkeys(tuple(float(v) for v in p) for p in points)
                if p not in self.cache]
        if todo:
            scenarios = self.data.scenarios
            cells = [Cell(sc, _changes(self.data.ranges, p), label=f"fit point {sc}")
                     for p in todo for sc in scenarios]
            results = solve_cells(self.study, cells, self.executor)
            self.solves += len(cells)
            for k, p in enumerate(todo):
                kills, classic = {}, {}
                for j, sc in enumerate(scenarios):
                    cell, r = cells[k * len(scenarios) + j], results[k * len(scenarios) + j]
                    if not r.ok:
                        raise SolveError(f"the fit could not solve {r.label}: {r.failure}")
                    predator, prey = cell_inputs(self.study, cell)
                    days = (predator.season_days if r.currency == "season" else 365.0)
                    kills[sc] = np.asarray(r.kills_per_predator_per_year, float) / days
                    classic[sc] = classic_rates(predator, prey, r.classic_diet)
                self.cache[p] = Prediction(kills, classic)
        return [self.cache[tuple(float(v) for v in p)] for p in points]


# --------------------------------------------------------------------------- likelihood


def shares(kills: np.ndarray, detection: np.ndarray) -> np.ndarray:
    """Predicted shares of the records, pi_i proportional to d_i K_i (MODEL.md section 10)."""
    w = np.asarray(detection, float) * np.maximum(np.asarray(kills, float), 0.0)
    total = w.sum()
    return w / total if total > 0 else w


@dataclass(frozen=True)
class Likelihood:
    """Log-likelihood of the records at one point, or why the model cannot produce them.

    Attributes
    ----------
    value : float or None
        ln L [dimensionless]; None when the model cannot produce the records.
    concentration : float or None
        Fitted Dirichlet-multinomial concentration (overdispersion only).
    impossible : tuple of str
        What cannot be produced: ``prey in composition``.
    """

    value: float | None
    concentration: float | None = None
    impossible: tuple[str, ...] = ()


def log_likelihood(data: FitData, rates: dict[str, np.ndarray]) -> Likelihood:
    """ln L of every composition and rate row given daily kill rates by scenario.

    Multinomial compositions, or Dirichlet-multinomial with one concentration
    shared by all compositions (maximised here, on a log scale) when
    ``data.overdispersion``; rate rows are Poisson with mean
    sum_i d_i K_i x predator_days.
    """
    impossible: list[str] = []
    pis = []
    for c in data.compositions:
        pi = shares(rates[c.scenario], c.detection)
        bad = np.flatnonzero((c.counts > 0) & (pi == 0))
        impossible += [f"{data.prey_names[i]} in {c.label}" for i in bad]
        pis.append(pi)
    rate_total = LogLikelihood(0.0)
    for r in data.rates:
        part = poisson_rate_log_likelihood(
            r.count, float(np.sum(r.detection * rates[r.scenario])), r.predator_days)
        if not part.possible:
            impossible.append(f"the kills of {r.label}")
        rate_total = rate_total + part
    if impossible:
        return Likelihood(None, None, tuple(impossible))
    assert rate_total.value is not None
    if not data.overdispersion:
        value = sum(multinomial_log_likelihood(c.counts, pi).value  # type: ignore[misc]
                    for c, pi in zip(data.compositions, pis, strict=True))
        return Likelihood(float(value) + rate_total.value)

    def negative(log_c: float) -> float:
        c = math.exp(log_c)
        return -sum(dirichlet_multinomial_log_likelihood(x.counts, pi, c).value  # type: ignore
                    for x, pi in zip(data.compositions, pis, strict=True))

    best = minimize_scalar(negative, bounds=LOG_CONCENTRATION_RANGE, method="bounded",
                           options={"xatol": 1e-4})
    # the bounded search never evaluates the ends; an end may still be best
    candidates = [(float(best.fun), float(best.x))] + [
        (negative(x), x) for x in LOG_CONCENTRATION_RANGE]
    fun, log_c = min(candidates)
    return Likelihood(-fun + rate_total.value, math.exp(log_c))


def classic_log_likelihood(data: FitData, prediction: Prediction) -> Likelihood:
    """ln L of the records under the well-fed forager's prediction at the same point."""
    return log_likelihood(data, prediction.classic)


def require_possible(values: Sequence[Likelihood], data: FitData,
                     where: Callable[[], str]) -> None:
    """Raise when the model cannot produce the records anywhere on the search grid."""
    if any(v.value is not None for v in values):
        return
    what = sorted({w for v in values for w in v.impossible})
    ranges = "; ".join(f"{r.target.name} {r.low:g}–{r.high:g}" for r in data.ranges)
    raise RiskdietError(
        f"{where()}: the model cannot produce these records anywhere in the search range "
        f"({ranges}): at every point the predator is predicted never to kill "
        + ", ".join(what[:6]) + (" …" if len(what) > 6 else "")
        + ". Check the records, or widen the search ranges on the Uncertainty sheet.")
