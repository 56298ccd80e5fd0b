"""Validating a study and building it, independent of the file format.

The JSON and workbook readers hand over a plain dictionary in the JSON layout
plus a :class:`Locator` that turns a position into a location string
(``prey[2].energy_mj`` or ``Prey!E4 (energy_mj)``); :func:`build_study` checks
every field and rule of MODEL.md section 1, collects every problem with its
location, and returns a :class:`riskdiet.model.Study`.
"""

from __future__ import annotations

from typing import Any, Protocol

from riskdiet.errors import Notice, Problem, StudyError, describe
from riskdiet.fields import NUMBER, FieldSpec, coerce, field_specs, is_blank
from riskdiet.model import (
    BASELINE,
    CHANGE_KINDS,
    SHAPES,
    Change,
    Predator,
    Prey,
    Scenario,
    Settings,
    Study,
    UncertainInput,
    apply_changes,
)


class Locator(Protocol):
    """Turns a position in the input into a location string for messages."""

    def predator(self, field: str) -> str: ...
    def prey(self, index: int, field: str) -> str: ...
    def scenario(self, index: int, key: str) -> str: ...
    def change(self, scenario: int, index: int, key: str) -> str: ...
    def uncertainty(self, index: int, key: str) -> str: ...
    def settings(self, field: str) -> str: ...


class JsonLocator:
    """Locations as JSON paths, e.g. ``prey[2].capture_success``."""

    def predator(self, field: str) -> str:
        return f"predator.{field}"

    def prey(self, index: int, field: str) -> str:
        return f"prey[{index}].{field}" if field else f"prey[{index}]"

    def scenario(self, index: int, key: str) -> str:
        return f"scenarios[{index}].{key}" if key else f"scenarios[{index}]"

    def change(self, scenario: int, index: int, key: str) -> str:
        return f"scenarios[{scenario}].changes[{index}].{key}"

    def uncertainty(self, index: int, key: str) -> str:
        return f"uncertainty[{index}].{key}"

    def settings(self, field: str) -> str:
        return f"settings.{field}"


# --------------------------------------------------------------------------- building

def _build_record(cls: type, raw: Any, where: Any, problems: list[Problem],
                  section: str) -> Any:
    """Coerce one raw mapping into a dataclass, collecting type problems."""
    specs = field_specs(cls)
    if not isinstance(raw, dict):
        problems.append(Problem(where(""), f"a {section} record (a mapping of field to value)",
                                describe(raw)))
        return None
    values: dict[str, Any] = {}
    for key, value in raw.items():
        name = str(key).strip().lower()
        if name not in specs:
            problems.append(Problem(where(str(key)), f"a {section} field name "
                                    f"({', '.join(specs)})", describe(key)))
            continue
        converted, problem = coerce(specs[name], value, where(name))
        if problem:
            problems.append(problem)
        elif converted is not None:
            values[name] = converted
    for name, spec in specs.items():
        if spec.required and name not in values and not any(
                p.where == where(name) for p in problems):
            problems.append(Problem(where(name), spec.expected(), "nothing (blank)"))
    try:
        return cls(**values)
    except TypeError:  # pragma: no cover - guarded by the specs above
        return None


def range_problems(predator: Predator, prey: list[tuple[int, Prey]],
                   where_predator: Any, where_prey: Any) -> list[Problem]:
    """Values outside their field's bounds; ``prey`` pairs each record with its input index."""
    problems: list[Problem] = []
    for name, spec in field_specs(Predator).items():
        value = getattr(predator, name)
        if spec.numeric and value is not None and not spec.in_range(value):
            problems.append(Problem(where_predator(name), spec.expected(), describe(value)))
    for i, p in prey:
        for name, spec in field_specs(Prey).items():
            value = getattr(p, name)
            if spec.numeric and value is not None and not spec.in_range(value):
                problems.append(Problem(where_prey(i, name), spec.expected(), describe(value)))
    return problems


def check_values(predator: Predator, prey: tuple[Prey, ...],
                 where_predator: Any, where_prey: Any) -> tuple[list[Problem], list[Notice]]:
    """Range and cross-field rules on built inputs (baseline or scenario).

    Parameters
    ----------
    where_predator : callable
        ``field -> location``.
    where_prey : callable
        ``(index, field) -> location``.
    """
    notices: list[Notice] = []
    problems = range_problems(predator, list(enumerate(prey)), where_predator, where_prey)
    if problems:
        return problems, notices

    # cross-field rules
    if predator.daily_cost_mj is None and predator.body_mass_kg is None:
        problems.append(Problem(where_predator("daily_cost_mj"),
                                "a daily cost > 0, or body_mass_kg to estimate it",
                                "neither"))
    if predator.background_mortality + predator.injured_extra_mortality >= 1:
        problems.append(Problem(where_predator("injured_extra_mortality"),
                                "background_mortality + injured_extra_mortality below 1",
                                describe(predator.background_mortality
                                         + predator.injured_extra_mortality)))
    if predator.currency == "breeding" and predator.breeding_level < 2:
        problems.append(Problem(where_predator("breeding_threshold"),
                                "a threshold giving breeding level round(b·n) ≥ 2",
                                f"level {predator.breeding_level}"))
    if predator.currency == "season" and predator.season_days is None:
        problems.append(Problem(where_predator("season_days"),
                                "a whole number ≥ 1 for the season currency", "nothing (blank)"))
    if not prey:
        problems.append(Problem(where_prey(0, "name"), "at least one prey type", "none"))
    seen: dict[str, int] = {}
    for i, p in enumerate(prey):
        if ":" in p.name:
            problems.append(Problem(where_prey(i, "name"), "a name without ':'",
                                    describe(p.name)))
        key = p.name.strip().lower()
        if key in seen:
            problems.append(Problem(where_prey(i, "name"),
                                    f"a unique prey name (also used by prey {seen[key] + 1})",
                                    describe(p.name)))
        seen.setdefault(key, i)
        if p.encounters_per_day is None:
            if p.density_per_km2 is None:
                problems.append(Problem(where_prey(i, "encounters_per_day"),
                                        "encounters_per_day, or density_per_km2 with the "
                                        "predator's search_area_km2_per_day", "neither"))
            elif predator.search_area_km2_per_day is None:
                problems.append(Problem(where_predator("search_area_km2_per_day"),
                                        f"a search area, because {p.name} is given by density",
                                        "nothing (blank)"))
    if problems:
        return problems, notices

    capacity = predator.reserve_capacity_mj
    cost = predator.effective_daily_cost_mj
    if predator.daily_cost_is_estimated:
        notices.append(Notice(where_predator("daily_cost_mj"),
                              f"estimated from body mass by Kleiber's law: {cost:.3g} MJ/day "
                              f"(activity multiplier {predator.activity_multiplier:g})"))
    if cost >= capacity:
        notices.append(Notice(where_predator("daily_cost_mj"),
                              f"one day's cost ({cost:.3g} MJ) empties full reserves "
                              f"({capacity:.3g} MJ) in under a day"))
    step = capacity / predator.energy_levels
    if cost < step:
        notices.append(Notice(where_predator("energy_levels"),
                              f"the daily cost is less than one grid step ({step:.3g} MJ); "
                              "consider more energy levels"))
    for i, p in enumerate(prey):
        if p.energy_mj > capacity:
            notices.append(Notice(where_prey(i, "energy_mj"),
                                  f"one capture ({p.energy_mj:g} MJ) is worth more than the "
                                  f"whole reserve capacity ({capacity:g} MJ)"))
        if p.encounters(predator) > 20:
            notices.append(Notice(where_prey(i, "encounters_per_day"),
                                  f"{p.encounters(predator):.3g} encounters a day is very many"))
        if p.fatality_chance > 0.5:
            notices.append(Notice(where_prey(i, "fatality_chance"),
                                  "more than half of all attacks kill the predator"))
    return problems, notices


def build_study(raw: Any, locator: Locator | None = None, source: str = "") -> Study:
    """Validate a study given in the JSON layout and build it.

    Parameters
    ----------
    raw : dict
        ``{"predator": {...}, "prey": [...], "scenarios": [...],
        "uncertainty": [...], "settings": {...}}`` with MODEL.md field names.
    locator : Locator, optional
        Turns positions into locations; JSON paths by default.
    source : str
        File name, for messages and provenance.

    Raises
    ------
    StudyError
        With every problem found, each naming its location.
    """
    loc = locator or JsonLocator()
    problems: list[Problem] = []
    if not isinstance(raw, dict):
        raise StudyError([Problem("(top level)", "a mapping with predator and prey",
                                  describe(type(raw).__name__))], source or None)
    known = {"predator", "prey", "scenarios", "uncertainty", "settings"}
    for key in raw:
        if key not in known:
            problems.append(Problem(str(key), "one of " + ", ".join(sorted(known)),
                                    describe(key)))

    raw_predator = raw.get("predator")
    if raw_predator is None:
        problems.append(Problem(loc.predator("")[:-1] or "predator", "the predator's fields",
                                "nothing"))
        raw_predator = {}
    notes = {}
    if isinstance(raw_predator, dict) and isinstance(raw_predator.get("notes"), dict):
        raw_predator = dict(raw_predator)
        notes = {str(k): str(v) for k, v in raw_predator.pop("notes").items()}
    predator = _build_record(Predator, raw_predator, loc.predator, problems, "predator")

    raw_prey = raw.get("prey")
    prey: list[Prey] = []
    built_prey: list[tuple[int, Prey]] = []
    if not isinstance(raw_prey, list) or not raw_prey:
        problems.append(Problem("prey", "a list of at least one prey type", describe(raw_prey)))
        raw_prey = []
    for i, row in enumerate(raw_prey):
        built = _build_record(Prey, row, lambda f, i=i: loc.prey(i, f), problems, "prey")
        if built is not None:
            prey.append(built)
            built_prey.append((i, built))

    settings = _build_record(Settings, raw.get("settings") or {}, loc.settings, problems,
                             "settings") or Settings()
    notices: list[Notice] = []
    if not problems and predator is not None:
        found, notices = check_values(predator, tuple(prey), loc.predator, loc.prey)
        problems.extend(found)
    elif predator is not None:
        # values that did convert are still range-checked, so one pass reports every fault
        problems.extend(range_problems(predator, built_prey, loc.predator, loc.prey))

    scenarios = _build_scenarios(raw.get("scenarios") or [], loc, problems)
    uncertainty = _build_uncertainty(raw.get("uncertainty") or [], loc, problems, prey)

    if not problems and predator is not None:
        for sc in scenarios[1:]:
            p2, y2, found = apply_changes(predator, tuple(prey), sc.changes)
            problems.extend(found)
            if found:
                continue
            found, _ = check_values(
                p2, y2, lambda f, sc=sc: _scenario_where(sc, None, f),
                lambda i, f, sc=sc, y2=y2: _scenario_where(sc, y2[i].name, f))
            problems.extend(found)
    if problems:
        raise StudyError(problems, source or None)
    return Study(predator=predator, prey=tuple(prey), scenarios=tuple(scenarios),
                 uncertainty=tuple(uncertainty), settings=settings, notices=tuple(notices),
                 notes=notes, source=source)


def _scenario_where(sc: Scenario, prey: str | None, field: str) -> str:
    """Locate a value a scenario produced: its change if it made it, else the scenario."""
    for ch in reversed(sc.changes):
        if ch.field == field and (ch.prey or None) == prey:
            return f"{ch.where} (scenario {sc.name!r} gives {prey + ': ' if prey else ''}{field})"
    return f"scenario {sc.name!r} ({prey + ': ' if prey else ''}{field})"


def _build_scenarios(raw: Any, loc: Locator, problems: list[Problem]) -> list[Scenario]:
    scenarios = [Scenario(BASELINE, (), "the inputs as given")]
    if not isinstance(raw, list):
        problems.append(Problem("scenarios", "a list of scenarios", describe(raw)))
        return scenarios
    names = {BASELINE: -1}
    for si, item in enumerate(raw):
        if not isinstance(item, dict):
            problems.append(Problem(loc.scenario(si, ""), "a scenario with name and changes",
                                    describe(item)))
            continue
        name = item.get("name")
        if is_blank(name) or not isinstance(name, str):
            problems.append(Problem(loc.scenario(si, "name"), "a scenario name", describe(name)))
            continue
        name = name.strip()
        if name.lower() in {n.lower() for n in names}:
            problems.append(Problem(loc.scenario(si, "name"),
                                    "a unique scenario name (baseline is implicit)"
                                    if name.lower() == BASELINE else "a unique scenario name",
                                    describe(name)))
            continue
        names[name] = si
        changes = []
        raw_changes = item.get("changes") or []
        if not isinstance(raw_changes, list) or not raw_changes:
            problems.append(Problem(loc.scenario(si, "changes"), "a list of at least one change",
                                    describe(item.get("changes"))))
            raw_changes = []
        for ci, ch in enumerate(raw_changes):
            where = lambda key, si=si, ci=ci: loc.change(si, ci, key)
            if not isinstance(ch, dict):
                problems.append(Problem(where("change"), "a change record", describe(ch)))
                continue
            unknown = set(ch) - {"prey", "field", "change", "value", "note"}
            for key in sorted(unknown):
                problems.append(Problem(where(key), "prey, field, change, value or note",
                                        describe(key)))
            prey = ch.get("prey")
            prey = None if is_blank(prey) else str(prey).strip()
            field = ch.get("field")
            kind = ch.get("change", "set")
            kind = "set" if is_blank(kind) else str(kind).strip().lower()
            ok = True
            if is_blank(field) or not isinstance(field, str):
                problems.append(Problem(where("field"), "a field name", describe(field)))
                ok = False
            if kind not in CHANGE_KINDS:
                problems.append(Problem(where("change"), "set, scale or add", describe(kind)))
                ok = False
            if is_blank(ch.get("value")):
                problems.append(Problem(where("value"), "a value", "nothing (blank)"))
                ok = False
            if ok:
                changes.append(Change(prey, field.strip().lower(), kind, ch["value"],
                                      where("value")))
        scenarios.append(Scenario(name, tuple(changes), str(item.get("note") or "")))
    return scenarios


def _build_uncertainty(raw: Any, loc: Locator, problems: list[Problem],
                       prey: list[Prey]) -> list[UncertainInput]:
    out: list[UncertainInput] = []
    if not isinstance(raw, list):
        problems.append(Problem("uncertainty", "a list of ranges", describe(raw)))
        return out
    names = {p.name.strip().lower() for p in prey}
    pspecs, yspecs = field_specs(Predator), field_specs(Prey)
    num = FieldSpec(NUMBER, "", "")
    for i, item in enumerate(raw):
        where = lambda key, i=i: loc.uncertainty(i, key)
        if not isinstance(item, dict):
            problems.append(Problem(where("field"), "a range record", describe(item)))
            continue
        before = len(problems)
        target = item.get("prey")
        target = None if is_blank(target) else str(target).strip()
        if target is not None and target.lower() not in names:
            problems.append(Problem(where("prey"), "the name of a prey type in the study",
                                    describe(target)))
        field = str(item.get("field") or "").strip().lower()
        specs = pspecs if target is None else yspecs
        if field not in specs or not specs[field].numeric:
            numeric = [f for f, s in specs.items() if s.numeric]
            problems.append(Problem(where("field"), "a numeric field (" + ", ".join(numeric) + ")",
                                    describe(item.get("field"))))
        low, p1 = coerce(num, item.get("low"), where("low"))
        high, p2 = coerce(num, item.get("high"), where("high"))
        mode, p3 = coerce(num, item.get("mode"), where("mode"))
        shape = str(item.get("shape") or "uniform").strip().lower()
        problems.extend(p for p in (p1, p2, p3) if p)
        if low is None and not p1:
            problems.append(Problem(where("low"), "a number", "nothing (blank)"))
        if high is None and not p2:
            problems.append(Problem(where("high"), "a number", "nothing (blank)"))
        if shape not in SHAPES:
            problems.append(Problem(where("shape"), "one of " + ", ".join(SHAPES),
                                    describe(item.get("shape"))))
        if len(problems) > before:
            continue
        if not low < high:
            problems.append(Problem(where("high"), f"a number above low ({low:g})",
                                    describe(high)))
            continue
        if shape == "triangular" and (mode is None or not low <= mode <= high):
            problems.append(Problem(where("mode"), f"a mode from {low:g} to {high:g}",
                                    describe(mode)))
            continue
        if shape == "loguniform" and low <= 0:
            problems.append(Problem(where("low"), "a number > 0 for a log-uniform range",
                                    describe(low)))
            continue
        spec = specs[field]
        for key, value in (("low", low), ("high", high)):
            if not spec.in_range(value):
                problems.append(Problem(where(key), spec.expected(), describe(value)))
        out.append(UncertainInput(target, field, low, high, shape, mode,
                                  str(item.get("note") or ""), where("field")))
    return out
