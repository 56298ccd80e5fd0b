"""Fit the model to what the predator was seen to eat (MODEL.md section 10).

Maximum likelihood over one to three inputs: a coarse grid of batched solves,
then a bounded local refinement (scipy.optimize) from the best grid point; 95 %
profile-likelihood intervals, as unions of pieces where the policy switches;
observed against predicted shares; a G-test of fit with Williams' correction,
and a parametric bootstrap p-value when an expected count is below 5; AICc of
the state-dependent fit against the well-fed (classic) model; a homogeneity
G-test across the sources of one kind; a verdict in plain words.

References
----------
.. [1] Venzon, D. J. & Moolgavkar, S. H. (1988) A method for computing
   profile-likelihood-based confidence intervals. Applied Statistics 37, 87-94.
.. [2] Williams, D. A. (1976) Improved likelihood ratio tests for complete
   contingency tables. Biometrika 63, 33-37.
.. [3] Burnham, K. P. & Anderson, D. R. (2002) Model Selection and Multimodel
   Inference, 2nd ed., Springer (AICc, differences of 2 and more).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize, minimize_scalar

from riskdiet.analysis.fit_data import (
    Evaluator,
    FitData,
    Likelihood,
    Point,
    Prediction,
    classic_log_likelihood,
    log_likelihood,
    require_possible,
    shares,
)
from riskdiet.core.stats.composition_likelihood import aicc
from riskdiet.core.stats.goodness_of_fit import (
    BOOTSTRAP_REPLICATES,
    GTest,
    bootstrap_p_value,
    g_test_of_fit,
    homogeneity_g_test,
    replicate_generators,
)
from riskdiet.core.stats.profile_interval import ProfileInterval, profile_interval

GRID_POINTS = {1: 41, 2: 15, 3: 9}
"""Coarse grid points per input, by the number of inputs fitted."""

SIGNIFICANCE = 0.05
"""p below this: the records fit poorly (common practice)."""

AICC_DIFFERENCE = 2.0
"""AICc differences below this are "about as well" (Burnham & Anderson 2002, section 2.6)."""

Progress = Callable[[str, float], None]


@dataclass(frozen=True)
class FittedInput:
    """One fitted input: the estimate and its 95 % profile-likelihood interval.

    Attributes
    ----------
    name : str
        As in the ``fit`` setting (``FIELD`` or ``PREY:FIELD``).
    value : float
        Maximum-likelihood value [the input's unit].
    interval : ProfileInterval
    search : tuple of float
        The search range, and ``origin`` where it came from.
    """

    name: str
    value: float
    interval: ProfileInterval
    search: tuple[float, float]
    origin: str

    @property
    def identified(self) -> bool:
        """False when the interval reaches both ends of the search range (a flat likelihood)."""
        return not (self.interval.at_lower_bound and self.interval.at_upper_bound)


@dataclass(frozen=True)
class Homogeneity:
    """Do the sources of one kind of records agree well enough to pool?"""

    scenario: str
    kind: str
    sources: tuple[str, ...]
    test: GTest

    @property
    def words(self) -> str:
        t = self.test
        n = len(self.sources)
        where = "" if self.scenario == "baseline" else f" (scenario {self.scenario})"
        head = (f"The {n} sources of {self.kind} records{where} (" + "; ".join(self.sources) + ") ")
        stat = f"(G = {t.g:.2f} on {t.df} df, Williams-corrected p = {_p(t.p_williams)})"
        if t.p_williams < SIGNIFICANCE:
            return head + ("differ more than chance allows " + stat + ": pooling them hides "
                           "real differences between packs, seasons or studies; consider "
                           "overdispersion: yes, or fitting them separately.")
        return head + "agree within chance " + stat + ": they can be pooled."


@dataclass(frozen=True)
class FitResult:
    """Everything ``riskdiet fit`` reports (the JSON layout is :meth:`to_dict`)."""

    data: FitData
    fitted: tuple[FittedInput, ...]
    point: Point
    log_likelihood: float
    concentration: float | None
    observed: dict[str, float]
    predicted: dict[str, float]
    by_composition: tuple[tuple[str, np.ndarray, np.ndarray], ...]
    g_test: GTest | None
    g_test_reason: str | None
    p_bootstrap: float | None
    p_bootstrap_reason: str | None
    aicc_state: float | None
    aicc_classic: float | None
    aicc_reason: str | None
    homogeneity: tuple[Homogeneity, ...]
    solves: int

    @property
    def fits_well(self) -> bool | None:
        if self.g_test is None:
            return None
        p = self.p_bootstrap if self.p_bootstrap is not None else self.g_test.p_williams
        return p >= SIGNIFICANCE

    @property
    def verdict(self) -> str:
        """The fit in plain words: how well the records fit, which model explains them better."""
        parts = []
        fit = self.fits_well
        if fit is None:
            parts.append("The records are too few to test the fit (no degrees of freedom "
                         "left after fitting)")
        else:
            p = self.p_bootstrap if self.p_bootstrap is not None else self.g_test.p_williams
            which = "bootstrap " if self.p_bootstrap is not None else ""
            parts.append(f"The records fit the model {'well' if fit else 'poorly'} "
                         f"({which}p = {_p(p)})")
        if self.aicc_state is not None and self.aicc_classic is None \
                and self.aicc_reason and "infinite" in self.aicc_reason:
            parts.append("the state-dependent model explains them better than the well-fed "
                         "model, which cannot produce them at all")
        elif self.aicc_state is not None and self.aicc_classic is not None:
            diff = self.aicc_classic - self.aicc_state
            if diff >= AICC_DIFFERENCE:
                parts.append("the state-dependent model explains them better than the well-fed "
                             f"model (AICc lower by {diff:.1f})")
            elif diff <= -AICC_DIFFERENCE:
                parts.append("the state-dependent model explains them worse than the well-fed "
                             f"model (AICc higher by {-diff:.1f})")
            else:
                parts.append("the state-dependent model explains them about as well as the "
                             f"well-fed model (AICc differ by {abs(diff):.1f})")
        text = "; ".join(parts) + "."
        lost = [f.name for f in self.fitted if not f.identified]
        if lost:
            text += (" The records cannot identify " + ", ".join(lost) + ": the likelihood is "
                     "flat over the whole search range, so no estimate is given.")
        return text

    def to_dict(self) -> dict:
        """The JSON layout of ``riskdiet fit --json`` (README, "Fitting to field records")."""
        fitted = {}
        for f in self.fitted:
            entry = {"value": f.value if f.identified else None,
                     "low": f.interval.low, "high": f.interval.high,
                     "pieces": [[p.low, p.high] for p in f.interval.pieces],
                     "at_bound": f.interval.at_bound}
            if not f.identified:
                entry["reason"] = ("the records cannot identify this input: the 95 % interval "
                                   f"spans the whole search range {f.search[0]:g}–"
                                   f"{f.search[1]:g}")
            fitted[f.name] = entry
        g = self.g_test
        reasons = [r for r in (self.g_test_reason, self.p_bootstrap_reason) if r]
        g_test = {"G": None if g is None else g.g_williams, "df": None if g is None else g.df,
                  "p": None if g is None else g.p_williams, "p_bootstrap": self.p_bootstrap}
        if reasons:
            g_test["reason"] = " ".join(reasons)
        aic = {"state_dependent": self.aicc_state, "classic": self.aicc_classic}
        if self.aicc_reason:
            aic["reason"] = self.aicc_reason
        out = {"fitted": fitted, "log_likelihood": self.log_likelihood,
               "observed": dict(self.observed), "predicted": dict(self.predicted),
               "g_test": g_test, "aicc": aic, "verdict": self.verdict,
               "homogeneity": [h.words for h in self.homogeneity]}
        if self.concentration is not None:
            out["overdispersion_concentration"] = self.concentration
        return out


def _p(p: float) -> str:
    return "< 0.001" if p < 0.001 else f"{p:.3f}" if p < 0.1 else f"{p:.2f}"


# --------------------------------------------------------------------------- search


class _Search:
    """The likelihood as a function of the fitted inputs, on top of an evaluator."""

    def __init__(self, data: FitData, evaluate: Callable[[Sequence[Point]], list[Prediction]]):
        self.data = data
        self.evaluate = evaluate
        self.values: dict[Point, Likelihood] = {}

    def at(self, points: Sequence[Point]) -> list[Likelihood]:
        points = [tuple(float(v) for v in p) for p in points]
        todo = [p for p in dict.fromkeys(points) if p not in self.values]
        if todo:
            for p, pred in zip(todo, self.evaluate(todo), strict=True):
                self.values[p] = log_likelihood(self.data, pred.kills)
        return [self.values[p] for p in points]

    def best(self) -> tuple[Point, float]:
        p, v = max(((p, v.value) for p, v in self.values.items() if v.value is not None),
                   key=lambda item: item[1])
        return p, float(v)

    def negative(self, point: Sequence[float], penalty: float) -> float:
        v = self.at([tuple(point)])[0].value
        return -v if v is not None else penalty


def _unit(r, v: float) -> float:
    if r.log:
        return math.log(v / r.low) / math.log(r.high / r.low)
    return (v - r.low) / (r.high - r.low)


def _to_unit(ranges, point):
    """Search coordinates in [0, 1] (log-scaled where the grid is)."""
    out = []
    for r, v in zip(ranges, point, strict=True):
        if r.log:
            out.append(math.log(v / r.low) / math.log(r.high / r.low))
        else:
            out.append((v - r.low) / (r.high - r.low))
    return out


def _from_unit(ranges, u) -> Point:
    out = []
    for r, x in zip(ranges, u, strict=True):
        x = min(max(float(x), 0.0), 1.0)
        out.append(r.low * (r.high / r.low) ** x if r.log else r.low + x * (r.high - r.low))
    return tuple(out)


def _refine(search: _Search, ranges, start: Point, step: float,
            fixed: dict[int, float] | None = None) -> None:
    """Bounded local refinement around ``start`` (one grid step each way), in place."""
    fixed = fixed or {}
    free = [i for i in range(len(ranges)) if i not in fixed]
    if not free:
        return
    u0 = _to_unit(ranges, start)
    penalty = -(search.at([start])[0].value or 0.0) + 1e6

    def full(x):
        u = list(u0)
        for i, xi in zip(free, np.atleast_1d(x), strict=True):
            u[i] = xi
        point = list(_from_unit(ranges, u))
        for i, v in fixed.items():
            point[i] = v
        return tuple(point)

    lows = [max(0.0, u0[i] - step) for i in free]
    highs = [min(1.0, u0[i] + step) for i in free]
    if len(free) == 1:
        if highs[0] > lows[0]:
            minimize_scalar(lambda x: search.negative(full([x]), penalty),
                            bounds=(lows[0], highs[0]), method="bounded",
                            options={"xatol": 1e-6})
        return
    minimize(lambda x: search.negative(full(x), penalty), [u0[i] for i in free],
             method="Powell", bounds=list(zip(lows, highs, strict=True)),
             options={"xtol": 1e-5, "ftol": 1e-9, "maxfev": 60 * len(free)})


def _profile(search: _Search, ranges, grid_points: list[Point], j: int, step: float
             ) -> Callable[[float], float | None]:
    """Profile log-likelihood of input ``j``: maximised over the other inputs."""
    if len(ranges) == 1:
        return lambda theta: search.at([(theta,)])[0].value

    def profile(theta: float) -> float | None:
        # start from the best solved point whose input j is nearest theta
        known = [(p, v.value) for p, v in search.values.items() if v.value is not None]
        if not known:
            return None
        u = _unit(ranges[j], theta)
        near = min(abs(_unit(ranges[j], p[j]) - u) for p, _ in known)
        starts = [(p, v) for p, v in known if abs(_unit(ranges[j], p[j]) - u) <= near + 1e-12]
        start = list(max(starts, key=lambda item: item[1])[0])
        start[j] = theta
        search.at([tuple(start)])
        _refine(search, ranges, tuple(start), 1.0, fixed={j: theta})
        values = [v.value for p, v in search.values.items()
                  if v.value is not None and p[j] == theta]
        return max(values) if values else None

    return profile


def _grid(ranges) -> tuple[list[np.ndarray], list[Point]]:
    points = GRID_POINTS[len(ranges)]
    axes = [r.grid(points) for r in ranges]
    return axes, [tuple(float(v) for v in p) for p in itertools.product(*axes)]


def fit_records(data: FitData, evaluate: Callable[[Sequence[Point]], list[Prediction]],
                progress: Progress | None = None, seed: int = 1,
                replicates: int = BOOTSTRAP_REPLICATES, where: str = "the records"
                ) -> FitResult:
    """Maximum-likelihood fit of the inputs in ``data`` (MODEL.md section 10).

    Parameters
    ----------
    data : FitData
    evaluate : callable
        ``evaluate(points)`` -> predictions (an :class:`Evaluator`, or anything
        that predicts kill rates at points of the search).
    progress : callable, optional
        ``progress(stage, fraction_done)``.
    seed, replicates : int
        Of the parametric bootstrap (default 1 and 199).
    where : str
        Name of the records for messages.

    Raises
    ------
    RiskdietError
        When the model cannot produce the records anywhere in the search range.
    """
    say = progress or (lambda stage, done: None)
    ranges = data.ranges
    d = len(ranges)
    search = _Search(data, evaluate)
    axes, points = _grid(ranges)
    say("solving the coarse grid", 0.0)
    values = search.at(points)
    require_possible(values, data, lambda: where)
    step = 1.0 / (GRID_POINTS[d] - 1)
    say("refining the maximum", 0.3)
    _refine(search, ranges, search.best()[0], step)
    fitted = []
    for j, r in enumerate(ranges):
        say(f"profile interval of {r.target.name}", 0.4 + 0.4 * j / d)
        best = search.best()[0]
        interval = profile_interval(_profile(search, ranges, points, j, step), (r.low, r.high),
                                    grid=axes[j], estimate=best[j])
        fitted.append(interval)
    point, ll_hat = search.best()
    fitted_inputs = tuple(
        FittedInput(r.target.name, point[j], interval, (r.low, r.high), r.origin)
        for j, (r, interval) in enumerate(zip(ranges, fitted, strict=True)))
    at_best = search.values[point]
    prediction = evaluate([point])[0]
    say("goodness of fit", 0.85)
    result = _statistics(data, search, evaluate, point, prediction, seed, replicates)
    return FitResult(data=data, fitted=fitted_inputs, point=point, log_likelihood=ll_hat,
                     concentration=at_best.concentration, homogeneity=homogeneity(data),
                     solves=len(search.values), **result)


def _statistics(data: FitData, search: _Search, evaluate, point: Point,
                prediction: Prediction, seed: int, replicates: int) -> dict:
    comps = data.compositions
    observed_list = [c.counts for c in comps]
    share_list = [shares(prediction.kills[c.scenario], c.detection) for c in comps]
    total = sum(c.total for c in comps)
    observed: dict[str, float] = {}
    predicted: dict[str, float] = {}
    if total > 0:
        obs = sum(observed_list) / total
        pred = sum(c.total * s for c, s in zip(comps, share_list, strict=True)) / total
        observed = {n: float(v) for n, v in zip(data.prey_names, obs, strict=True)}
        predicted = {n: float(v) for n, v in zip(data.prey_names, pred, strict=True)}
    by_comp = tuple((c.label, c.counts, c.total * s) for c, s in zip(comps, share_list,
                                                                      strict=True))
    g = g_test_of_fit(observed_list, share_list, len(data.ranges)) if comps else None
    g_reason = None
    if not comps:
        g_reason = "No G-test: the records hold no compositions (rate rows only)."
    elif g is None:
        g_reason = ("No G-test: no degrees of freedom are left (categories − 1 − fitted "
                    "inputs ≤ 0).")
    p_boot, boot_reason = None, None
    if g is not None and g.small_expected:
        p_boot = _bootstrap(data, search, point, share_list, g, seed, replicates)
    elif g is not None:
        boot_reason = ("p_bootstrap not computed: every expected count is at least 5, so the "
                       "chi-square p-value holds.")
    k, n = data.parameters, data.observations
    state = aicc(search.values[point].value, k, n)
    classic_values = [(p, classic_log_likelihood(data, pred))
                      for p, pred in zip(search.values, evaluate(list(search.values)),
                                         strict=True)]
    possible = [v.value for _, v in classic_values if v.value is not None]
    aicc_reason = None
    classic = None
    if not possible:
        outside = sorted({w for _, v in classic_values for w in v.impossible})
        aicc_reason = ("The well-fed model's AICc is infinite: the records include "
                       + ", ".join(outside[:6]) + (" …" if len(outside) > 6 else "")
                       + ", which fall outside Charnov's rate-maximising diet at every "
                       "point searched, so that model cannot produce them.")
    else:
        classic = aicc(max(possible), k, n)
        if classic is None or state is None:
            aicc_reason = "AICc undefined: too few records for the parameters (n − k − 1 ≤ 0)."
    if state is None and aicc_reason is None:
        aicc_reason = "AICc undefined: too few records for the parameters (n − k − 1 ≤ 0)."
    return {"observed": observed, "predicted": predicted, "by_composition": by_comp,
            "g_test": g, "g_test_reason": g_reason, "p_bootstrap": p_boot,
            "p_bootstrap_reason": boot_reason, "aicc_state": state, "aicc_classic": classic,
            "aicc_reason": aicc_reason}


def _bootstrap(data: FitData, search: _Search, point: Point, share_list, g: GTest, seed: int,
               replicates: int) -> float:
    """Parametric bootstrap p of the Williams-corrected G (MODEL.md section 10).

    Records are simulated from the fitted model (multinomial, or
    Dirichlet-multinomial with the fitted concentration) with the observed
    totals; each replicate is refitted over every point solved during the fit
    (no new solves) and its G recomputed. A refit over a finite set of points
    can only give a G at least as large as a full refit, so this p-value errs
    towards "fits well".
    """
    concentration = search.values[point].concentration
    points = [p for p, v in search.values.items() if v.value is not None]
    preds = search.evaluate(points)
    log_shares = []
    for c in data.compositions:
        rows = np.array([shares(pr.kills[c.scenario], c.detection) for pr in preds])
        log_shares.append((rows, np.log(np.where(rows > 0, rows, 1.0)), rows > 0))
    rate_ll = np.array([sum(
        r.count * math.log(max(float(np.sum(r.detection * pr.kills[r.scenario]))
                               * r.predator_days, 1e-300))
        - float(np.sum(r.detection * pr.kills[r.scenario])) * r.predator_days
        for r in data.rates) for pr in preds]) if data.rates else np.zeros(len(points))
    probs = [s / s.sum() for s in share_list]
    totals = [c.total for c in data.compositions]
    statistics: list[float | None] = []
    for rng in replicate_generators(seed, replicates):
        counts = []
        for p, n in zip(probs, totals, strict=True):
            if concentration is not None:
                q = np.zeros_like(p)
                q[p > 0] = rng.dirichlet(concentration * p[p > 0])
                counts.append(rng.multinomial(n, q / q.sum()).astype(float))
            else:
                counts.append(rng.multinomial(n, p).astype(float))
        score = rate_ll.copy()
        possible = np.ones(len(points), bool)
        for x, (_, logs, positive) in zip(counts, log_shares, strict=True):
            possible &= ~np.any((x > 0) & ~positive, axis=1)
            score += logs @ x
        if not possible.any():
            statistics.append(None)
            continue
        best = int(np.argmax(np.where(possible, score, -np.inf)))
        rep = g_test_of_fit(counts, [rows[best] for rows, _, _ in log_shares], len(data.ranges))
        statistics.append(None if rep is None else rep.g_williams)
    return bootstrap_p_value(g.g_williams, statistics).p


def homogeneity(data: FitData) -> tuple[Homogeneity, ...]:
    """Homogeneity G-tests across the sources of each (scenario, kind) with two or more."""
    groups: dict[tuple[str, str], list] = {}
    for c in data.compositions:
        groups.setdefault((c.scenario, c.kind), []).append(c)
    out = []
    for (scenario, kind), members in groups.items():
        if len(members) < 2:
            continue
        test = homogeneity_g_test(np.array([c.counts for c in members]))
        if test is not None:
            out.append(Homogeneity(scenario, kind, tuple(c.source or "(no source)"
                                                         for c in members), test))
    return tuple(out)


def fit_study(study, executor=None, progress: Progress | None = None) -> FitResult:
    """Fit the inputs named in the study's ``fit`` setting to its observations.

    Parameters
    ----------
    study : Study
    executor : concurrent.futures.Executor, optional
        Runs the batched solves in parallel; the result does not depend on it.
    progress : callable, optional
        ``progress(stage, fraction_done)``.
    """
    from riskdiet.analysis.fit_data import fit_data

    data = fit_data(study)
    return fit_records(data, Evaluator(study, data, executor), progress,
                       where=study.source or study.name)
