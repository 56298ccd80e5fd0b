"""Plain-language findings derived from a scenario's numbers.

Every sentence is generated from the results (attack ranges, kill predictions,
the classic diets, the baseline comparison); nothing is written per study.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from riskdiet.analysis.regimes import when_attacked
from riskdiet.analysis.results import CONDITIONS, ScenarioResult
from riskdiet.analysis.wording import (
    amount,
    change,
    fixed,
    number,
    percent,
    percent_change,
    probability,
)

WILD_GROUPS = {"wild", ""}
_KINDS = ("never", "all", "below", "above", "mixed")
"""Kinds of :class:`AttackPattern` by category code of :data:`regimes.WHEN_KEYS`."""


@dataclass(frozen=True)
class AttackPattern:
    """How one prey is taken by one condition, read from low to high reserves.

    Attributes
    ----------
    kind : str
        ``never``, ``all`` (every level at which anything is attacked),
        ``below`` (only below ``upper``), ``above`` (only above ``lower``) or
        ``mixed`` (several runs).
    lower, upper : float
        Lowest and highest reserve fraction at which the prey is attacked.
    runs : list of (float, float)
        Every run of reserve fractions.
    """

    kind: str
    lower: float
    upper: float
    runs: list[tuple[float, float]]


def attack_pattern(result: ScenarioResult, prey: str, condition: str) -> AttackPattern:
    """Classify where a prey is attacked (MODEL.md section 7, per prey)."""
    ranges = result.attack_ranges()
    runs = [(r.low_fraction, r.high_fraction) for r in ranges
            if r.prey == prey and r.condition == condition]
    if not runs:
        return AttackPattern("never", float("nan"), float("nan"), [])
    # one reading shared with the maps (regimes.when_attacked): "at all reserves" only from
    # the lowest level at which anything is attacked to the top
    living = result.grid.living
    k = CONDITIONS.index(condition)
    codes, lower, upper = when_attacked(result.solution.priority[k][living] >= 0,
                                        living / result.grid.n)
    i = list(result.prey_names).index(prey)
    kind = _KINDS[int(codes[i])]
    lo, hi = float(lower[i]), float(upper[i])
    return AttackPattern(kind, lo, hi, runs)


def _pct(x: float) -> str:
    return percent(x)


def _list(names: list[str]) -> str:
    if len(names) <= 1:
        return "".join(names)
    return ", ".join(names[:-1]) + " and " + names[-1]


def _span(a: float, b: float) -> str:
    return _pct(a) if abs(a - b) < 1e-9 else f"{_pct(a)[:-2]}–{_pct(b)}"


def _describe(pattern: AttackPattern, name: str, mj_per_fraction: float) -> str:
    if pattern.kind == "below":
        return (f"{name} only when reserves are below about {_pct(pattern.upper)} "
                f"({fixed(pattern.upper * mj_per_fraction, 0)} MJ)")
    if pattern.kind == "above":
        if pattern.lower < 0.15:
            return (f"{name} except when reserves are nearly exhausted (below "
                    f"{_pct(pattern.lower)})")
        return f"{name} only when reserves are above about {_pct(pattern.lower)}"
    runs = ", ".join(_span(a, b) for a, b in pattern.runs)
    return f"{name} at reserves of {runs}"


def cohort_sentences(result: ScenarioResult) -> list[str]:
    """What the released animals do within the horizon (MODEL.md section 5)."""
    c = result.cohort
    if c is None:
        return []
    when = (f"over the {c.horizon_days}-day season" if result.currency == "season"
            else f"in the first {c.horizon_days} days")
    groups = sorted(c.kills_by_group, key=lambda g: (g.lower() in WILD_GROUPS, g))
    kills = _list([f"{amount(c.kills_by_group[g])} {g}" for g in groups])
    animals = "animal" if c.animals == 1 else "animals"
    out = [f"The {c.animals} released {animals} are expected to kill {kills} prey {when}."]
    median = ("more than half are expected to be alive at the end" if c.median_survival_days
              is None else f"half are expected to be dead within {c.median_survival_days} days")
    alive = (f"{percent(c.alive_at_horizon)} of them" if c.alive_at_horizon >= 0.005
             else "almost none of them")
    out.append(f"{alive[0].upper()}{alive[1:]} are expected to be alive at the end "
               f"({amount(c.survivors)} animals); {median}"
               + (f"; they are expected to breed {amount(c.breeding_events)} times."
                  if c.breeding_events is not None else "."))
    return out


def grid_sentence(result: ScenarioResult) -> list[str]:
    """One plain sentence when the answer still depends on the grid (MODEL.md section 8)."""
    g = result.grid_check
    return [g.warning] if g is not None and g.warning else []


def _kills_sentence(result: ScenarioResult) -> list[str]:
    out = []
    pop = result.predator.population
    if result.kills is not None:
        k = result.kills
        per_year = k.kills_per_predator_per_year
        order = sorted(per_year, key=per_year.get, reverse=True)
        main = [f"{amount(per_year[n])} {n}" for n in order if per_year[n] >= 0.05][:4]
        if main:
            out.append(f"In the long run, each place kept filled (every death replaced at once) "
                       f"sees about {_list(main)} killed a year"
                       + (f"; for {pop} places, "
                          + _list([f"{amount(k.kills_per_year_population[n])} {n}"
                                   for n in order if per_year[n] >= 0.05][:4]) + " a year."
                          if pop > 1 else "."))
        unwanted = {g: v for g, v in k.kills_per_year_population_by_group.items()
                    if g.lower() not in WILD_GROUPS}
        for group, value in unwanted.items():
            out.append(f"Long-run {group} kills with every death replaced: {amount(value)} a "
                       f"year ({percent(k.diet_share_by_number_by_group.get(group, 0))} of kills "
                       "by number).")
        out.append(f"A predator spends {_pct(k.share_of_time_injured)} of its days "
                   f"injured; mean reserves are {_pct(k.mean_reserves_fraction)} of capacity.")
        if k.expected_lifetime_days is not None:
            out.append(f"A newly arrived animal lives about {amount(k.expected_lifetime_days)} "
                       "days on average; of newcomers, "
                       f"{_pct(k.death_before_breeding.get('starvation', 0))} starve, "
                       f"{_pct(k.death_before_breeding.get('attack', 0))} are killed by "
                       f"prey and {_pct(k.death_before_breeding.get('other', 0))} die of "
                       "other causes before they first breed.")
    if result.season_kills is not None:
        s = result.season_kills
        main = [f"{amount(v)} {n}" for n, v in sorted(s.expected_kills.items(),
                                                  key=lambda kv: -kv[1]) if v >= 0.05][:4]
        if main:
            out.append(f"Over the season each predator is predicted to kill about {_list(main)}.")
        out.append(f"It survives the season with probability {probability(s.survival_to_end)} "
                   "and ends it in condition with probability "
                   f"{probability(s.chance_above_threshold)}.")
    return out


def _classic_sentences(result: ScenarioResult) -> list[str]:
    c = result.classic
    if c is None:
        return []
    if not c.meets_daily_cost:
        return [c.statement]
    out = []
    always = set()
    for name in result.prey_names:
        if attack_pattern(result, name, "healthy").kind == "all":
            always.add(name)
    classic = set(c.rate_maximizing_diet)
    taken = {n for n in result.prey_names
             if attack_pattern(result, n, "healthy").kind != "never"}
    extra = [n for n in result.prey_names if n in taken and n not in classic]
    skipped = [n for n in result.prey_names if n in classic and n not in always]
    if not extra and not skipped:
        out.append("The classic rate-maximising diet and the state-dependent model agree for a "
                   "healthy predator.")
    if extra:
        out.append(f"The classic rate-maximising diet leaves out {_list(extra)}, but a "
                   "predator short of reserves takes "
                   + ("it." if len(extra) == 1 else "them."))
    if skipped:
        out.append(f"The classic model includes {_list(skipped)} at all times, but the "
                   "state-dependent predator takes " + ("it" if len(skipped) == 1 else "them")
                   + " only at some reserves.")
    return out


def findings(result: ScenarioResult, baseline: ScenarioResult | None = None) -> tuple[str, ...]:
    """Short sentences a manager can quote, derived from one scenario's results.

    Parameters
    ----------
    result : ScenarioResult
        The scenario.
    baseline : ScenarioResult, optional
        The baseline, for sentences on what the scenario changes.
    """
    p = result.predator
    out: list[str] = []
    if result.viability:
        out.append(result.viability)
    out.extend(cohort_sentences(result))
    out.extend(grid_sentence(result))
    what = ("reaches breeding condition" if result.currency == "breeding"
            else "ends the season alive and in condition")
    out.append(f"A healthy animal arriving with {_pct(p.start_reserves)} reserves {what} with "
               f"probability {probability(result.fitness_at_start)}.")
    mj = p.reserve_capacity_mj
    for cond in CONDITIONS:
        patterns = {n: attack_pattern(result, n, cond) for n in result.prey_names}
        always = [n for n, pt in patterns.items() if pt.kind == "all"]
        never = [n for n, pt in patterns.items() if pt.kind == "never"]
        some = [_describe(pt, n, mj) for n, pt in patterns.items() if pt.kind not in
                ("all", "never")]
        who = "A healthy" if cond == "healthy" else "An injured"
        parts = []
        if always:
            parts.append(f"takes {_list(always)} at all reserves")
        if some:
            parts.append("takes " + "; ".join(some))
        if never:
            parts.append(f"never attacks {_list(never)}")
        if parts:
            out.append(f"{who} predator " + "; ".join(parts) + ".")
    for prey in result.prey:
        if prey.group.lower() in WILD_GROUPS:
            continue
        h = attack_pattern(result, prey.name, "healthy")
        i = attack_pattern(result, prey.name, "injured")
        if h.kind == "below":
            out.append(f"The {prey.group} prey {prey.name} enters the diet when reserves fall "
                       f"below about {_pct(h.upper)} ({fixed(h.upper * mj, 0)} MJ).")
        elif h.kind == "all":
            out.append(f"The {prey.group} prey {prey.name} is taken whenever met, at all "
                       "reserves.")
        elif h.kind == "mixed":
            out.append(f"The {prey.group} prey {prey.name} is taken at reserves of "
                       + ", ".join(_span(a, b) for a, b in h.runs) + ".")
        if i.kind != h.kind or (i.kind == h.kind == "below" and abs(i.upper - h.upper) > 0.02):
            if i.kind == "never":
                out.append(f"Injury stops attacks on {prey.name}.")
            elif h.kind != "all" and i.upper > (h.upper if h.kind != "never" else 0) + 0.02:
                out.append(f"Injury widens attacks on {prey.name}: an injured animal takes it "
                           f"up to {_pct(i.upper)} reserves.")
    for prey in result.prey:
        if not prey.risky:
            continue
        h = attack_pattern(result, prey.name, "healthy")
        i = attack_pattern(result, prey.name, "injured")
        if h.kind != "never" and i.kind != "never" and i.upper > h.upper + 0.02:
            out.append(f"Injured animals take the risky {prey.name} at higher reserves (up to "
                       f"{_pct(i.upper)}) than healthy ones (up to {_pct(h.upper)}).")
    out.extend(_classic_sentences(result))
    out.extend(_kills_sentence(result))
    g = result.marginal_hunting_ability
    if np.isfinite(g):
        el = result.elasticity
        step = change(0.1 * g, "probability")
        step = {"0": "nothing", "< 0.01": "less than 0.01"}.get(step, step)
        out.append(f"Each 0.1 of extra hunting ability changes that probability by {step}"
                   + (f" (elasticity {number(el, 2, floor=0.01)}: 1 % more ability, about "
                      f"{number(abs(el), 2, floor=0.01)} % {'more' if el >= 0 else 'less'} "
                      "chance)." if el is not None and np.isfinite(el) and el != 0 else "."))
    if baseline is not None and baseline is not result:
        out.extend(_versus_baseline(result, baseline))
    return tuple(out)


def _versus_baseline(result: ScenarioResult, baseline: ScenarioResult) -> list[str]:
    out = []
    d = result.fitness_at_start - baseline.fitness_at_start
    before, after = probability(baseline.fitness_at_start), probability(result.fitness_at_start)
    step = change(d, "probability")
    if step == "0":
        out.append(f"Compared with the baseline, the chance does not change ({after}).")
    elif step == "< 0.01":
        out.append(f"Compared with the baseline, the chance changes by less than 0.01 "
                   f"({after} in both).")
    else:
        out.append(f"Compared with the baseline, the chance changes by {step} "
                   f"(from {before} to {after}).")
    a, b = result.cohort, baseline.cohort
    if a is not None and b is not None:
        for group, base in b.kills_by_group.items():
            new = a.kills_by_group.get(group, 0.0)
            if base > 0 and abs(new - base) / base >= 0.05:
                out.append(f"Kills of {group} prey by the released animals within the horizon "
                           f"change from {amount(base)} to {amount(new)} "
                           f"({percent_change((new - base) / base)}).")
        if abs(a.alive_at_horizon - b.alive_at_horizon) >= 0.01:
            out.append(f"The share of released animals alive at the horizon changes from "
                       f"{percent(b.alive_at_horizon)} to {percent(a.alive_at_horizon)}.")
    return out
