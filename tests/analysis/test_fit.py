"""Fitting the model to field diet records (MODEL.md section 10).

Sources: the profile-likelihood interval of Venzon & Moolgavkar (1988,
Applied Statistics 37: 87-94) has asymptotic 95 % coverage, checked here by
simulation from the model itself; the G statistic and its p-value are checked
against ``scipy.stats.power_divergence(lambda_="log-likelihood")`` and the
Dirichlet-multinomial likelihood against ``scipy.stats.dirichlet_multinomial``
(reference library); Williams' correction q = 1 + (a² − 1)/(6 n ν) as in Sokal &
Rohlf (1995, Biometry, 3rd ed., chapter 17; box number from memory, formula as
in Williams 1976, Biometrika 63: 33-37).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from riskdiet.analysis.fit import fit_records, fit_study
from riskdiet.analysis.fit_data import Evaluator, Prediction, fit_data, log_likelihood
from riskdiet.errors import StudyError
from riskdiet.validation import build_study
from tests.analysis.fit_studies import records, tiny

PREY = ("deer", "hare", "boar")


def _study_at(truth: dict, observations=None, **settings):
    raw = tiny(observations or records({"deer": 1, "hare": 1, "boar": 1}), **settings)
    for name, value in truth.items():
        if ":" in name:
            prey, field = name.split(":")
            next(p for p in raw["prey"] if p["name"] == prey)[field] = value
        else:
            raw["predator"][name] = value
    return raw


def _simulated(truth: dict, fit: str, n: int, seed: int):
    """Records drawn from the model's predicted shares at ``truth`` (multinomial)."""
    study = build_study(_study_at(truth, fit=fit))
    data = fit_data(study)
    point = tuple(truth[r.target.name] for r in data.ranges)
    kills = Evaluator(study, data)([point])[0].kills["baseline"]
    counts = np.random.default_rng(seed).multinomial(n, kills / kills.sum())
    return records(dict(zip(PREY, counts, strict=True)))


@pytest.mark.parametrize(("truth", "start"), [
    ({"hunting_ability": 0.7}, {"hunting_ability": 1.0}),
    ({"boar:encounters_per_day": 0.25}, {"boar:encounters_per_day": 0.4}),
])
def test_fit_recovers_a_known_input_from_records_simulated_by_the_model(truth, start):
    """Records simulated from the model at a known hunting ability (and, in a second study, a
    known encounter rate of boar) are fitted starting from another value: the 95 % profile
    interval holds the truth and the estimate is close to it. Expected values: the truth the
    records were simulated from (Venzon & Moolgavkar 1988 for the interval)."""
    name = next(iter(truth))
    rows = _simulated(truth, name, 2000, seed=7)
    study = build_study(_study_at(start, rows, fit=name))
    result = fit_study(study)
    (fitted,) = result.fitted
    assert fitted.name == name
    assert fitted.interval.contains(truth[name])
    assert fitted.value == pytest.approx(truth[name], rel=0.15)
    assert not fitted.interval.at_bound


def test_profile_interval_covers_the_truth_in_about_95_percent_of_replicates():
    """Over 400 replicates of 300 records simulated at hunting ability ≈ 1, the 95 % profile
    interval covers the truth in 92-98 % of them (Venzon & Moolgavkar 1988: asymptotic 95 %;
    the band is ±2.7 binomial standard deviations). The model is solved once on a fine grid
    of hunting ability; every replicate's fit evaluates its likelihood on that grid (kill
    rates interpolated in log hunting ability), so the whole fit path runs 400 times cheaply."""
    study = build_study(tiny(records({"deer": 1, "hare": 1, "boar": 1})))
    data = fit_data(study)
    grid = np.exp(np.linspace(math.log(0.05), math.log(5.0), 301))
    solved = Evaluator(study, data)([(float(a),) for a in grid])
    kills = np.array([p.kills["baseline"] for p in solved])
    classic = np.array([p.classic["baseline"] for p in solved])
    truth_index = int(np.argmin(abs(grid - 1.0)))
    truth = float(grid[truth_index])
    log_grid = np.log(grid)

    def interpolated(points):
        out = []
        for (a,) in points:
            x = math.log(a)
            k = np.array([np.interp(x, log_grid, kills[:, i]) for i in range(3)])
            c = np.array([np.interp(x, log_grid, classic[:, i]) for i in range(3)])
            out.append(Prediction({"baseline": k}, {"baseline": c}))
        return out

    p = kills[truth_index] / kills[truth_index].sum()
    rng = np.random.default_rng(2026)
    covered = 0
    replicates = 400
    for _ in range(replicates):
        counts = rng.multinomial(300, p).astype(float)
        result = fit_records(data.with_counts([counts]), interpolated)
        covered += result.fitted[0].interval.contains(truth)
    assert 0.92 <= covered / replicates <= 0.98


def test_g_statistic_and_p_value_agree_with_scipy_power_divergence():
    """G and its p-value of the fit agree with scipy.stats.power_divergence
    (lambda_="log-likelihood", ddof = fitted inputs) on the expected counts at the fitted
    value; the reported G is divided by Williams' q = 1 + (a² − 1)/(6 n ν) (Sokal & Rohlf
    1995, chapter 17; Williams 1976) and its p is the chi-square p on ν − 1 df."""
    rows = records({"deer": 30, "hare": 41, "boar": 9})
    result = fit_study(build_study(tiny(rows)))
    observed = np.array([30.0, 41.0, 9.0])
    expected = result.by_composition[0][2]
    ref = stats.power_divergence(observed, expected, ddof=1, lambda_="log-likelihood")
    g = result.g_test
    assert g.g == pytest.approx(ref.statistic, rel=1e-10)
    assert g.p == pytest.approx(ref.pvalue, rel=1e-8)
    q = 1 + (3**2 - 1) / (6 * 80 * 2)
    document = result.to_dict()["g_test"]
    assert document["G"] == pytest.approx(ref.statistic / q, rel=1e-10)
    assert document["df"] == 1
    assert document["p"] == pytest.approx(stats.chi2.sf(ref.statistic / q, 1), rel=1e-8)


def test_dirichlet_multinomial_likelihood_agrees_with_scipy():
    """With overdispersion the likelihood is the Dirichlet-multinomial of every composition
    with one shared concentration c, maximised over c: it equals the maximum over c of the
    sum of scipy.stats.dirichlet_multinomial.logpmf (reference library) found by a fine scan."""
    rows = (records({"deer": 12, "hare": 20, "boar": 3}, source="pack A")
            + records({"deer": 25, "hare": 8, "boar": 6}, source="pack B"))
    study = build_study(tiny(rows, overdispersion=True))
    data = fit_data(study)
    prediction = Evaluator(study, data)([(1.0,)])[0]
    ours = log_likelihood(data, prediction.kills)
    k = prediction.kills["baseline"]
    pi = k / k.sum()

    def reference(c):
        return sum(stats.dirichlet_multinomial.logpmf(comp.counts, c * pi, comp.total)
                   for comp in data.compositions)

    scan = max(reference(c) for c in np.geomspace(1e-2, 1e6, 4001))
    assert ours.value == pytest.approx(reference(ours.concentration), rel=1e-10)
    assert ours.value >= scan - 1e-9
    assert ours.value == pytest.approx(scan, abs=1e-3)


def test_a_flat_likelihood_says_the_records_cannot_identify_the_input():
    """An input that cannot change the diet (the extra daily cost of injury when no prey can
    injure) gives a flat likelihood: the interval reaches both ends of the search range and
    no estimate is given (MODEL.md section 10: report every piece; common practice: an
    unidentified parameter has no point estimate)."""
    raw = tiny(records({"deer": 10, "hare": 20}), fit="injured_extra_cost_mj")
    raw["prey"] = raw["prey"][:2]
    raw["predator"]["injured_extra_cost_mj"] = 1.0
    result = fit_study(build_study(raw))
    (fitted,) = result.fitted
    assert fitted.interval.at_lower_bound and fitted.interval.at_upper_bound
    assert not fitted.identified
    entry = result.to_dict()["fitted"]["injured_extra_cost_mj"]
    assert entry["value"] is None and "cannot identify" in entry["reason"]
    assert "cannot identify injured_extra_cost_mj" in result.verdict


def test_inputs_that_enter_only_together_are_refused():
    """Hunting ability and the capture success of the only skill-dependent prey enter only as
    min(1, a·s) (MODEL.md section 10): fitting both is an error at the fit setting."""
    raw = tiny(records({"deer": 10, "hare": 20}), fit="hunting_ability, deer:capture_success")
    raw["prey"] = raw["prey"][:2]
    with pytest.raises(StudyError) as err:
        build_study(raw)
    (problem,) = err.value.problems
    assert problem.where == "settings.fit" and "only skill-dependent" in problem.found


def test_overdispersion_needs_two_compositions():
    """MODEL.md section 10: overdispersion needs at least two compositions, else an error
    at the setting."""
    with pytest.raises(StudyError) as err:
        build_study(tiny(records({"deer": 10, "hare": 20}), overdispersion=True))
    assert [p.where for p in err.value.problems] == ["settings.overdispersion"]


def test_classic_model_that_cannot_produce_the_records_has_infinite_aicc_said_in_words():
    """When the records include a prey outside Charnov's rate-maximising diet the well-fed
    model's likelihood is 0 (MODEL.md section 10): its AICc is null with a reason, and the
    JSON holds no NaN or infinity. Hare is excluded from Charnov's diet at every hunting
    ability because its profitability (1 MJ / 1 day) is below the rate boar alone gives,
    0.4·0.25·15 / (1 + 0.4·0.25·1) = 1.36 MJ/day (Charnov 1976; Holling 1959), and boar's
    capture success does not depend on skill here."""
    raw = tiny(records({"deer": 30, "hare": 12, "boar": 10}))
    raw["prey"][1].update(energy_mj=1.0, handling_days=1.0)
    raw["prey"][2]["skill_dependent"] = False
    raw["predator"]["daily_cost_mj"] = 0.5
    result = fit_study(build_study(raw))
    document = result.to_dict()
    assert document["aicc"]["classic"] is None
    assert "infinite" in document["aicc"]["reason"] and "hare" in document["aicc"]["reason"]
    assert "well-fed model, which cannot produce them" in result.verdict
