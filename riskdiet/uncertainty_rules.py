"""Rules that tie uncertainty ranges and the management goal to the rest of a study.

MODEL.md section 9: at most one range per input and scenario; a value that a
scenario's ``scale`` or ``add`` pushes out of its field's bounds is an error
naming the range's row; ``check`` warns when a baseline value lies outside its
own range and when a scenario ``set``s an input whose range has a blank
scenario (the range then has no effect there). The goal setting is
``fewer:NAME`` (a prey or group, case-insensitive) or ``higher:breeding``.

Single ranges are checked where they are read (:mod:`riskdiet.validation`);
these rules need the whole study.
"""

from __future__ import annotations

import dataclasses

from riskdiet.errors import Notice, Problem, describe
from riskdiet.fields import INTEGER, FieldSpec, did_you_mean, field_specs
from riskdiet.model import (
    BASELINE,
    Predator,
    Prey,
    Scenario,
    UncertainInput,
    apply_changes,
    round_half_up,
)

HIGHER_BREEDING = "higher:breeding"
GOAL_SYNTAX = "fewer:NAME (a prey or group of the study) or higher:breeding"


def _spec(u: UncertainInput) -> FieldSpec:
    return field_specs(Predator if u.prey is None else Prey)[u.field]


def _same_input(u: UncertainInput, prey: str | None, field: str) -> bool:
    if field != u.field or (prey is None) != (u.prey is None):
        return False
    return prey is None or prey.strip().lower() == u.prey.strip().lower()


def _value(predator: Predator, prey: tuple[Prey, ...], u: UncertainInput) -> float | None:
    """The input's value as used (a blank field's derived value where it has one)."""
    if u.prey is None:
        value = getattr(predator, u.field)
        if value is None and u.field == "daily_cost_mj" and predator.body_mass_kg:
            return predator.effective_daily_cost_mj
        if value is None and u.field == "released_animals":
            return predator.cohort_size
        return value
    record = next(p for p in prey if p.name.strip().lower() == u.prey.strip().lower())
    value = getattr(record, u.field)
    if value is None and u.field == "encounters_per_day":
        try:
            return record.encounters(predator)
        except ValueError:
            return None
    return value


def _with_value(predator: Predator, prey: tuple[Prey, ...], u: UncertainInput, value: float
                ) -> tuple[Predator, tuple[Prey, ...]]:
    v = round_half_up(value) if _spec(u).kind == INTEGER else float(value)
    if u.prey is None:
        return dataclasses.replace(predator, **{u.field: v}), prey
    return predator, tuple(dataclasses.replace(p, **{u.field: v})
                           if p.name.strip().lower() == u.prey.strip().lower() else p
                           for p in prey)


def _scenario_label(u: UncertainInput) -> str:
    return "every scenario" if u.scenario is None else f"scenario {u.scenario!r}"


def range_rules(predator: Predator, prey: tuple[Prey, ...], scenarios: list[Scenario],
                ranges: list[UncertainInput]) -> tuple[list[Problem], list[Notice]]:
    """Problems and warnings of the ranges that concern the whole study.

    Parameters
    ----------
    predator, prey
        Validated baseline inputs.
    scenarios : list of Scenario
        Baseline first.
    ranges : list of UncertainInput
        Ranges already checked one by one.

    Returns
    -------
    problems : list of Problem
        A second range on one input and scenario; a range end that a scenario's
        ``scale`` or ``add`` pushes out of bounds (named at the range's row).
    notices : list of Notice
        A baseline (or the named scenario's) value outside its own range; a
        blank-scenario range on an input that a scenario ``set``s.
    """
    problems: list[Problem] = []
    notices: list[Notice] = []
    seen: dict[tuple, str] = {}
    for u in ranges:
        key = (u.prey.strip().lower() if u.prey else None, u.field,
               (u.scenario or "").lower())
        if key in seen:
            problems.append(Problem(u.where, f"at most one range per input and scenario "
                                    f"({seen[key]} already gives {u.name} for "
                                    f"{_scenario_label(u)})", describe(u.name)))
            continue
        seen[key] = u.where
    by_name = {sc.name: sc for sc in scenarios}
    for u in ranges:
        spec = _spec(u)
        if u.scenario is not None:
            p2, y2, found = apply_changes(predator, prey, by_name[u.scenario].changes)
            value = None if found else _value(p2, y2, u)
            if value is not None and not u.low <= value <= u.high:
                notices.append(Notice(u.where, f"the value of {u.name} in scenario "
                                      f"{u.scenario!r} ({value:g}) lies outside its range "
                                      f"{u.low:g} to {u.high:g}"))
            continue
        value = _value(predator, prey, u)
        if value is not None and not u.low <= value <= u.high:
            notices.append(Notice(u.where, f"the baseline value of {u.name} ({value:g}) lies "
                                  f"outside its own range {u.low:g} to {u.high:g}"))
        for sc in scenarios:
            if sc.name == BASELINE:
                continue
            mine = [ch for ch in sc.changes if _same_input(u, ch.prey, ch.field)]
            if any(ch.change == "set" for ch in mine):
                notices.append(Notice(u.where, f"scenario {sc.name!r} sets {u.name}, so this "
                                      "range has no effect in that scenario"))
                continue
            if not mine:
                continue
            for end in (u.low, u.high):
                p2, y2 = _with_value(predator, prey, u, end)
                p2, y2, found = apply_changes(p2, y2, sc.changes)
                new = None if found else _value(p2, y2, u)
                if new is not None and not spec.in_range(new):
                    changes = "; ".join(ch.describe() for ch in mine)
                    problems.append(Problem(u.where, f"a range whose ends stay {spec.expected()} "
                                            f"after scenario {sc.name!r} ({changes})",
                                            f"{end:g}, which becomes {new:g}"))
                    break
    return problems, notices


def parse_goal(goal: str | None, prey: list[Prey] | tuple[Prey, ...]
               ) -> tuple[str, str] | None:
    """The goal as (``fewer``, NAME as in the study) or (``higher``, ``breeding``).

    A blank goal is ``fewer:livestock`` when a group of that name exists, else
    ``higher:breeding`` (MODEL.md section 9). Returns None for a goal that is
    not understood (see :func:`goal_problems`).
    """
    groups = [p.group for p in prey if p.group]
    if goal is None or not goal.strip():
        match = next((g for g in groups if g.strip().lower() == "livestock"), None)
        return ("fewer", match) if match else ("higher", "breeding")
    kind, sep, name = goal.strip().partition(":")
    kind, name = kind.strip().lower(), name.strip()
    if not sep:
        return None
    if kind == "higher" and name.lower() == "breeding":
        return ("higher", "breeding")
    if kind != "fewer":
        return None
    for candidate in [p.name for p in prey if p.name] + groups:
        if candidate.strip().lower() == name.lower():
            return ("fewer", candidate)
    return None


def goal_problems(goal: str | None, prey: list[Prey], where: str) -> list[Problem]:
    """The goal setting checked against the study's prey and groups."""
    if parse_goal(goal, prey) is not None:
        return []
    names = sorted({p.name for p in prey if p.name} | {p.group for p in prey if p.group})
    kind, _, name = str(goal).strip().partition(":")
    hint = ""
    if kind.strip().lower() == "fewer" and name.strip():
        hint = did_you_mean(name.strip(), names) or (
            f" (nothing is called so; prey and groups: {', '.join(names)})")
    return [Problem(where, GOAL_SYNTAX, describe(goal) + hint)]
