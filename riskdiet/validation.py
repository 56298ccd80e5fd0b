"""Validating a study and building it, independent of the file format.

The JSON and workbook readers hand over a plain dictionary in the JSON layout
plus a :class:`Locator` that turns a position into a location string
(``prey[2].energy_mj`` or ``Prey!E4 (energy_mj)``); :func:`build_study` checks
every field and rule of MODEL.md section 1, collects every problem with its
location, and returns a :class:`riskdiet.model.Study`.
"""

from __future__ import annotations

import datetime as dt
import re
from typing import Any, Protocol

from riskdiet.errors import Notice, Problem, StudyError, describe
from riskdiet.fields import (
    NAME_MAX_LENGTH,
    NUMBER,
    FieldSpec,
    coerce,
    did_you_mean,
    field_specs,
    is_blank,
    text_problem,
)
from riskdiet.model import (
    BASELINE,
    CHANGE_KINDS,
    GRID_SHAPE_FIELDS,
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
    def observation(self, index: int, key: str) -> str: ...


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

    def observation(self, index: int, key: str) -> str:
        return f"observations[{index}].{key}"


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
                                    f"({', '.join(specs)})",
                                    describe(key) + did_you_mean(key, list(specs))))
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
            problems.append(Problem(where_predator(name), spec.expected_for(value),
                                    describe(value)))
    for i, p in prey:
        for name, spec in field_specs(Prey).items():
            value = getattr(p, name)
            if spec.numeric and value is not None and not spec.in_range(value):
                problems.append(Problem(where_prey(i, name), spec.expected_for(value),
                                        describe(value)))
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
    size = size_problem(predator, len(prey), where_predator("energy_levels"))
    if size:
        problems.append(size)
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
    notices += plausibility_notices(predator, prey, where_predator, where_prey)
    return problems, notices


def plausibility_notices(predator: Predator, prey: tuple[Prey, ...], where_predator: Any,
                         where_prey: Any) -> list[Notice]:
    """Values within their ranges that are likely slips (issue: plausibility warnings).

    Each notice names its cell: hunting ability above 3, handling above 30 days,
    daily background mortality above 0.01, density and encounters both given,
    every capture success 0, no prey able to pay for the days it takes.
    """
    notices: list[Notice] = []
    if predator.hunting_ability > 3:
        notices.append(Notice(where_predator("hunting_ability"),
                              f"hunting ability {predator.hunting_ability:g} is over three "
                              "times typical (1 = typical); is this intended?"))
    mu = predator.background_mortality
    if mu > 0.01:
        yearly = 1 - (1 - mu) ** 365
        notices.append(Notice(where_predator("background_mortality"),
                              f"a daily mortality of {mu:g} kills {100 * yearly:.0f} % of the "
                              "animals within a year: an annual figure typed as daily? (a yearly "
                              "mortality m is a daily 1 − (1 − m)^(1/365))"))
    for i, p in enumerate(prey):
        if p.handling_days > 30:
            notices.append(Notice(where_prey(i, "handling_days"),
                                  f"{p.handling_days:g} days to handle one capture: hours typed "
                                  "as days? (the unit is days)"))
        if p.density_per_km2 is not None and p.encounters_per_day is not None:
            notices.append(Notice(where_prey(i, "density_per_km2"),
                                  "both density_per_km2 and encounters_per_day are given: "
                                  "encounters_per_day is used and the density is ignored"))
    if prey and all(p.capture_success == 0 for p in prey):
        notices.append(Notice(where_prey(0, "capture_success"),
                              "every prey's capture success is 0: no attack can ever succeed"))
    cost = predator.effective_daily_cost_mj
    if prey and not any(p.energy_mj > cost * (1 + p.handling_days) for p in prey):
        notices.append(Notice(where_prey(0, "energy_mj"),
                              f"no prey pays for its day: every capture yields at most the "
                              f"daily cost ({cost:.3g} MJ) times the days it takes "
                              "(1 + handling_days), so the predator can only lose reserves"))
    return notices


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
    known = {"predator", "prey", "scenarios", "uncertainty", "settings", "observations"}
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
    uncertainty = _build_uncertainty(raw.get("uncertainty") or [], loc, problems, prey,
                                     [sc.name for sc in scenarios])

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
    problems += _settings_problems(settings, loc)
    if not problems and predator is not None:
        from riskdiet.uncertainty_rules import goal_problems, range_rules

        found, range_notices = range_rules(predator, tuple(prey), scenarios, uncertainty)
        problems += found + goal_problems(settings.goal, prey, loc.settings("goal"))
        notices += range_notices
    observations = _observations(raw, loc, prey, scenarios, settings, problems)
    if problems:
        raise StudyError(problems, source or None)
    notices += _scale_notices(scenarios)
    locations = {f"settings.{f}": loc.settings(f) for f in field_specs(Settings)}
    return Study(predator=predator, prey=tuple(prey), scenarios=tuple(scenarios),
                 uncertainty=tuple(uncertainty), settings=settings, notices=tuple(notices),
                 notes=notes, source=source, locations=locations,
                 observations=tuple(observations))


def _observations(raw: dict, loc: Locator, prey: list[Prey], scenarios: list[Scenario],
                  settings: Settings, problems: list[Problem]) -> list:
    """Field diet records and the fit settings (MODEL.md section 10), located."""
    from riskdiet.observations import build_observations, settings_fit_problems

    where = getattr(loc, "observation", None) or JsonLocator().observation
    before = len(problems)
    rows = build_observations(raw.get("observations"), where, prey,
                              [s.name for s in scenarios], problems)
    if len(problems) == before and all(p.name for p in prey):
        problems += settings_fit_problems(settings, tuple(prey), rows, loc.settings)
    return rows


_LOCAL_DATE = re.compile(r"^\s*(\d{1,2})[./-](\d{1,2})[./-](\d{2,4})\s*$")


def _settings_problems(settings: Settings, loc: Locator) -> list[Problem]:
    """Settings every command relies on: the report date, both axes of a map."""
    problems: list[Problem] = []
    date = settings.report_date
    if date is not None:
        try:
            ok = len(date) == 10 and dt.date.fromisoformat(date) is not None
        except ValueError:
            ok = False
        if not ok:
            found = describe(date)
            m = _LOCAL_DATE.match(date)
            if m:
                day, month, year = m.groups()
                year = year if len(year) == 4 else "20" + year
                found += (f" (a local date style: write {year}-{int(month):02d}-{int(day):02d} "
                          f"if the day comes first, {year}-{int(day):02d}-{int(month):02d} if "
                          "the month does)")
            problems.append(Problem(loc.settings("report_date"),
                                    "a date written YYYY-MM-DD, e.g. 2026-03-31", found))
    for given, missing in (("map_x", "map_y"), ("map_y", "map_x")):
        if getattr(settings, given) and not getattr(settings, missing):
            problems.append(Problem(loc.settings(missing),
                                    f"{missing} as well: a map needs both axes (or clear "
                                    f"{given})", "nothing (blank)"))
    if not (settings.map_x or settings.map_y):
        for name in ("map_scenario", "map_gradient"):
            if getattr(settings, name):
                problems.append(Problem(loc.settings(name), f"map_x and map_y with {name} "
                                        "(or clear it)", "no map axes"))
    return problems


def _scale_notices(scenarios: list[Scenario]) -> list[Notice]:
    """Scale factors of 10 or more: a percentage typed as a factor?"""
    notices = []
    for sc in scenarios:
        for ch in sc.changes:
            if ch.change != "scale":
                continue
            factor, problem = coerce(FieldSpec(NUMBER, "", ""), ch.value, ch.where)
            if problem is None and factor is not None and factor >= 10:
                notices.append(Notice(ch.where, f"scenario {sc.name!r} multiplies {ch.field} "
                                      f"by {factor:g}: meant {factor:g} %? (then write "
                                      f"{factor / 100:g})"))
    return notices


ARRAY_LIMIT_BYTES = 2 * 1024**3
"""Largest working set riskdiet will allocate (MODEL.md section 1, Bounds)."""


def array_bytes(predator: Predator, prey_count: int, cells: int = 1) -> float:
    """Estimated memory of a solve: 8 bytes x 2 conditions x levels x days x prey x cells.

    Days are the season length in the season currency and 1 in the breeding
    currency (a stationary solve); ``cells`` counts the cells of a map.
    """
    days = (predator.season_days or 1) if predator.currency == "season" else 1
    return 8.0 * 2 * (predator.energy_levels + 1) * days * (prey_count + 1) * cells


def size_problem(predator: Predator, prey_count: int, where: str, cells: int = 1
                 ) -> Problem | None:
    """A located problem when a solve would need more than 2 GiB of arrays."""
    need = array_bytes(predator, prey_count, cells)
    if need <= ARRAY_LIMIT_BYTES:
        return None
    days = (predator.season_days or 1) if predator.currency == "season" else 1
    shape = f"{predator.energy_levels} levels × {days} day(s) × {prey_count} prey"
    if cells > 1:
        shape += f" × {cells} map cells"
    return Problem(where, "a study whose arrays fit in 2 GiB (fewer energy_levels, a shorter "
                   "season, fewer prey or map cells)",
                   f"{shape}, about {need / 1024**3:.1f} GiB")


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
        problem = text_problem(name, loc.scenario(si, "name"), NAME_MAX_LENGTH)
        if problem:
            problems.append(problem)
            continue
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
                                      where("value"), where("prey"), where("field")))
        scenarios.append(Scenario(name, tuple(changes), str(item.get("note") or "")))
    return scenarios


def _build_uncertainty(raw: Any, loc: Locator, problems: list[Problem],
                       prey: list[Prey], scenario_names: list[str] = ()) -> list[UncertainInput]:
    out: list[UncertainInput] = []
    if not isinstance(raw, list):
        problems.append(Problem("uncertainty", "a list of ranges", describe(raw)))
        return out
    names = {p.name.strip().lower() for p in prey if p.name}
    pspecs, yspecs = field_specs(Predator), field_specs(Prey)
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
                                    describe(target) + did_you_mean(
                                        target, [p.name for p in prey if p.name])))
        field = str(item.get("field") or "").strip().lower()
        specs = pspecs if target is None else yspecs
        if field not in specs or not specs[field].numeric:
            numeric = [f for f, s in specs.items() if s.numeric]
            problems.append(Problem(where("field"), "a numeric field (" + ", ".join(numeric) + ")",
                                    describe(item.get("field"))
                                    + did_you_mean(item.get("field"), numeric)))
        # a range takes a % sign where its field does
        num = FieldSpec(NUMBER, "", "", percent=field in specs and specs[field].percent)
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
        if field in GRID_SHAPE_FIELDS and target is None:
            problems.append(Problem(where("field"), "a field that does not change the grid's "
                                    "shape (no range on " + ", ".join(GRID_SHAPE_FIELDS) + ")",
                                    describe(item.get("field"))))
        scenario = item.get("scenario")
        scenario = None if is_blank(scenario) else str(scenario).strip()
        if scenario is not None and scenario not in scenario_names:
            problems.append(Problem(where("scenario"), "blank (every scenario) or a scenario of "
                                    "the study (" + ", ".join(scenario_names) + ")",
                                    describe(scenario) + did_you_mean(scenario,
                                                                      list(scenario_names))))
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
        if shape != "triangular" and mode is not None:
            problems.append(Problem(where("mode"), f"no mode for a {shape} range (only "
                                    "triangular has one)", describe(mode)))
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
                                  str(item.get("note") or ""), where("field"), scenario))
    return out
