"""The answer to a manager's first question: which scenario does best on the study's goal?

One sentence per scenario on what the released animals do within the horizon
(kills of the prey groups a plan is about, survival, breeding), and a ranking
of the scenarios on the study's management goal (MODEL.md section 9: fewer
kills of a prey or group by the released animals, or a higher chance of
reaching breeding condition). Every number comes from the results; when the
study has uncertainty ranges, the caller adds the chance that each scenario
beats the baseline.
"""

from __future__ import annotations

from dataclasses import dataclass

from riskdiet.analysis.results import ScenarioResult, StudyResult
from riskdiet.analysis.wording import amount, percent
from riskdiet.uncertainty_rules import parse_goal

WILD = {"wild", ""}


@dataclass(frozen=True)
class Verdict:
    """Scenarios ranked on the goal, in words.

    Attributes
    ----------
    goal_words : str
        The goal in words, e.g. ``fewer livestock kills by the released animals
        in the first 365 days``.
    ranking : tuple of str
        Scenario names, best first.
    sentences : dict of str to str
        One sentence per scenario (its cohort numbers and its change against
        the baseline).
    summary : str
        One sentence naming the scenario the study favours on its goal.
    groups : tuple of str
        The prey groups the sentences name (those other than wild, or every group
        when all are wild).
    """

    goal_words: str
    ranking: tuple[str, ...]
    sentences: dict[str, str]
    summary: str
    groups: tuple[str, ...] = ()


def _goal_value(s: ScenarioResult, kind: str, name: str) -> float:
    c = s.cohort
    if kind == "higher":
        return s.fitness_at_start
    if name in c.kills:
        return c.kills[name]
    return c.kills_by_group.get(name, 0.0)


def _when(s: ScenarioResult) -> str:
    c = s.cohort
    return (f"over the {c.horizon_days}-day season" if s.currency == "season"
            else f"in the first {c.horizon_days} days")


def verdict(result: StudyResult) -> Verdict:
    """Rank the scenarios on the study's goal and say what each does, in words."""
    study = result.study
    goal = parse_goal(study.settings.goal, study.prey) or ("higher", "breeding")
    kind, name = goal
    base = result.scenarios[0]
    if kind == "fewer":
        goal_words = f"fewer {name} kills by the released animals {_when(base)}"
    else:
        goal_words = ("a higher chance that a released animal reaches breeding condition"
                      if base.currency == "breeding"
                      else "a higher chance that a released animal ends the season in condition")
    values = {s.name: _goal_value(s, kind, name) for s in result.scenarios}
    order = sorted(result.scenarios, key=lambda s: (values[s.name] if kind == "fewer"
                                                    else -values[s.name]))
    ranking = tuple(s.name for s in order)
    sentences = {s.name: _sentence(s, base, kind, name) for s in result.scenarios}
    best = order[0]
    same = [s.name for s in order if abs(values[s.name] - values[best.name])
            <= 1e-9 * max(1.0, abs(values[best.name]))]
    if len(result.scenarios) == 1:
        summary = (f"The study has one scenario; on its goal ({goal_words}) there is nothing "
                   "to rank.")
    elif len(same) == len(result.scenarios):
        summary = f"On the study's goal ({goal_words}) the scenarios do equally well."
    else:
        tied = f" (tied with {', '.join(same[1:])})" if len(same) > 1 else ""
        summary = (f"On the study's goal ({goal_words}), {best.name} does best{tied}; "
                   "the full order, best first: " + ", ".join(ranking) + ".")
    return Verdict(goal_words, ranking, sentences, summary, tuple(_groups(base)))


def _groups(s: ScenarioResult) -> list[str]:
    """The groups a plan is about: those other than wild, or all when every prey is wild."""
    kills = s.cohort.kills_by_group
    return [g for g in kills if g.strip().lower() not in WILD] or list(kills)


def _sentence(s: ScenarioResult, base: ScenarioResult, kind: str, name: str) -> str:
    c = s.cohort
    animals = f"the {c.animals} released animal" + ("" if c.animals == 1 else "s")
    groups = _groups(s)
    kills = ", ".join(f"{amount(c.kills_by_group[g])} {g}" for g in groups)
    if s is base:
        lead = f"{s.name}: {animals} are expected to kill {kills} prey {_when(s)}"
    else:
        changes = [f"{amount(base.cohort.kills_by_group.get(g, 0.0))} → "
                   f"{amount(c.kills_by_group[g])} {g}" for g in groups]
        lead = f"{s.name}: expected kills by {animals} {_when(s)} change " + ", ".join(changes)
    alive = percent(c.alive_at_horizon) if c.alive_at_horizon >= 0.005 else "almost none"
    tail = f"; {alive} of them alive at the end"
    if c.breeding_events is not None:
        tail += f", {amount(c.breeding_events)} breeding events"
    if s.viability:
        tail += " (a failing release: see below)"
    return lead + tail + "."
