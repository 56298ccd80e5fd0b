"""Field diet records and the inputs fitted to them: validation (MODEL.md section 10).

The JSON and workbook readers hand the ``observations`` list and the ``fit``
and ``overdispersion`` settings to :func:`observation_problems` (called by
:func:`riskdiet.validation.build_study`), so every mistake is reported at its
cell or path with the other problems of the study: unknown prey or scenario,
negative or fractional counts, a composition whose counts are all zero,
detection at or below 0, a rate row that is not a ``kills`` row, a fit
setting naming an unknown input, two inputs that enter only together, and
overdispersion with fewer than two compositions.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from riskdiet.errors import Problem, describe
from riskdiet.fields import INTEGER, coerce, did_you_mean, field_specs
from riskdiet.model import BASELINE, Observation, Predator, Prey, Settings

MAX_FITTED = 3
"""At most this many inputs are fitted at once (MODEL.md section 10)."""

SHAPE_FIELDS = ("energy_levels", "breeding_threshold", "season_days", "currency")
"""Fields that change the grid's shape: never fitted (as for ranges, MODEL.md section 9)."""

NO_EFFECT_FIELDS = ("population", "released_animals", "name")
"""Fields that do not change the predicted diet (K of MODEL.md section 5)."""


@dataclass(frozen=True)
class FitTarget:
    """One input named in the ``fit`` setting.

    Attributes
    ----------
    prey : str or None
        Prey name as in the study, or None for a predator field.
    field : str
        Numeric field name.
    """

    prey: str | None
    field: str

    @property
    def name(self) -> str:
        """``FIELD`` or ``PREY:FIELD``, as the fit setting and the JSON output name it."""
        return f"{self.prey}:{self.field}" if self.prey else self.field


def parse_fit_targets(text: str | None, prey: tuple[Prey, ...], where: str
                      ) -> tuple[list[FitTarget], list[Problem]]:
    """Read the ``fit`` setting: one to three inputs, comma-separated.

    Parameters
    ----------
    text : str or None
        The setting, e.g. ``hunting_ability, upland ewe:encounters_per_day``.
    prey : tuple of Prey
        The study's prey (names are matched ignoring case and spaces around).
    where : str
        Location of the setting, for problems.
    """
    if text is None or not str(text).strip():
        return [], []
    targets: list[FitTarget] = []
    problems: list[Problem] = []
    names = {p.name.strip().lower(): p.name for p in prey}
    pspecs, yspecs = field_specs(Predator), field_specs(Prey)
    items = [t.strip() for t in str(text).split(",")]
    if any(not t for t in items):
        problems.append(Problem(where, "input names separated by commas",
                                describe(text) + " (an empty name between commas)"))
    items = [t for t in items if t]
    if len(items) > MAX_FITTED:
        problems.append(Problem(where, f"one to {MAX_FITTED} inputs to fit",
                                f"{len(items)} ({', '.join(items)})"))
        return [], problems
    for item in items:
        prey_name, field = (item.rsplit(":", 1) if ":" in item else (None, item))
        field = field.strip().lower()
        if prey_name is not None:
            key = prey_name.strip().lower()
            if key not in names:
                problems.append(Problem(where, "FIELD or PREY:FIELD with a prey of the study ("
                                        + ", ".join(names.values()) + ")",
                                        describe(item) + did_you_mean(prey_name, list(
                                            names.values()))))
                continue
            prey_name = names[key]
        specs = pspecs if prey_name is None else yspecs
        allowed = [f for f, s in specs.items() if s.numeric and f not in SHAPE_FIELDS
                   and f not in NO_EFFECT_FIELDS]
        if field not in allowed:
            why = ""
            if field in SHAPE_FIELDS:
                why = " (it changes the energy grid's shape and cannot be fitted)"
            elif field in NO_EFFECT_FIELDS:
                why = " (it does not change the predicted diet)"
            elif prey_name is None and field in yspecs:
                why = " (a prey field: write PREY:" + field + ")"
            kind = "predator" if prey_name is None else "prey"
            problems.append(Problem(where, f"a numeric {kind} input ({', '.join(allowed)})",
                                    describe(item) + (why or did_you_mean(field, allowed))))
            continue
        target = FitTarget(prey_name, field)
        if target in targets:
            problems.append(Problem(where, "each input once", describe(item) + " twice"))
            continue
        targets.append(target)
    if not problems:
        problems += confounded_problems(targets, prey, where)
    return targets, problems


def confounded_problems(targets: list[FitTarget], prey: tuple[Prey, ...], where: str
                        ) -> list[Problem]:
    """Inputs that enter the model only together, or not at all, cannot be fitted.

    Hunting ability and the capture success of the only skill-dependent prey
    enter only as min(1, a·s) (MODEL.md section 10); a density is ignored when
    the prey's encounters per day are given (MODEL.md section 1).
    """
    problems: list[Problem] = []
    skilled = [p for p in prey if p.is_skill_dependent]
    names = {t.name for t in targets}
    if "hunting_ability" in names and len(skilled) == 1:
        s = skilled[0]
        if f"{s.name}:capture_success" in names:
            problems.append(Problem(
                where, "inputs the records can tell apart",
                f"hunting_ability and {s.name}:capture_success: {s.name} is the only "
                "skill-dependent prey, so they enter only as their product min(1, a·s) "
                "and cannot both be fitted; fit one of them"))
    if "hunting_ability" in names and not skilled:
        problems.append(Problem(where, "an input that changes the predicted diet",
                                "hunting_ability, but no prey is skill-dependent, so hunting "
                                "ability changes nothing"))
    by_name = {p.name: p for p in prey}
    for t in targets:
        if t.prey and t.field == "density_per_km2" and \
                by_name[t.prey].encounters_per_day is not None:
            problems.append(Problem(where, "an input that changes the predicted diet",
                                    f"{t.name}, but {t.prey} has encounters_per_day, which "
                                    "overrides its density; fit encounters_per_day instead"))
    return problems


def build_observations(raw: Any, where: Any, prey: list[Prey], scenarios: list[str],
                       problems: list[Problem]) -> list[Observation]:
    """Validate the ``observations`` list and build its rows.

    Parameters
    ----------
    raw : list of dict
        Rows in the JSON layout (``prey``, ``count``, ``kind``, ``detection``,
        ``scenario``, ``source``, ``note``, ``predator_days``).
    where : callable
        ``(index, key) -> location``.
    prey : list of Prey
        The study's prey types.
    scenarios : list of str
        The study's scenario names, baseline first.
    problems : list of Problem
        Problems are appended here.
    """
    out: list[Observation] = []
    if raw is None:
        return out
    if not isinstance(raw, list):
        problems.append(Problem("observations", "a list of records", describe(raw)))
        return out
    specs = field_specs(Observation)
    prey_names = {p.name.strip().lower(): p.name for p in prey if p.name}
    scenario_names = {s.strip().lower(): s for s in scenarios}
    for i, item in enumerate(raw):
        at = lambda key, i=i: where(i, key)
        if not isinstance(item, dict):
            problems.append(Problem(at("count"), "a record with prey and count",
                                    describe(item)))
            continue
        before = len(problems)
        values: dict[str, Any] = {}
        for key, value in item.items():
            name = str(key).strip().lower()
            if name not in specs:
                problems.append(Problem(at(str(key)), "an observation field ("
                                        + ", ".join(specs) + ")",
                                        describe(key) + did_you_mean(key, list(specs))))
                continue
            spec = specs[name]
            if spec.kind == INTEGER and name == "count":
                converted, problem = _count(value, at(name))
            else:
                converted, problem = coerce(spec, value, at(name))
            if problem:
                problems.append(problem)
            elif converted is not None:
                values[name] = converted
        if "count" not in values and not any(p.where == at("count") for p in problems):
            problems.append(Problem(at("count"), "a whole number ≥ 0", "nothing (blank)"))
        if "detection" in values and not values["detection"] > 0:
            problems.append(Problem(at("detection"), "a number above 0 (records per kill, "
                                    "relative)", describe(values["detection"])))
        if "predator_days" in values and not values["predator_days"] > 0:
            problems.append(Problem(at("predator_days"), "a number of predator-days above 0",
                                    describe(values["predator_days"])))
        name = values.get("prey")
        if name is not None:
            if name.strip().lower() not in prey_names:
                problems.append(Problem(at("prey"), "the name of a prey type in the study ("
                                        + ", ".join(prey_names.values()) + ")",
                                        describe(name) + did_you_mean(
                                            name, list(prey_names.values()))))
            else:
                values["prey"] = prey_names[name.strip().lower()]
            if "predator_days" in values:
                problems.append(Problem(at("predator_days"), "blank on a row with a prey "
                                        "(predator_days belongs to rate rows: kills with no "
                                        "prey)", describe(values["predator_days"])))
        else:
            if "predator_days" not in values:
                problems.append(Problem(at("prey"), "a prey name (or, on a rate row of kills, "
                                        "predator_days)", "nothing (blank)"))
            elif values.get("kind", "kills") != "kills":
                problems.append(Problem(at("kind"), "kills on a rate row (predator_days "
                                        "with no prey)", describe(values.get("kind"))))
        sc = values.get("scenario")
        if sc is not None:
            if sc.strip().lower() not in scenario_names:
                problems.append(Problem(at("scenario"), "a scenario of the study ("
                                        + ", ".join(scenario_names.values())
                                        + "), or blank for baseline",
                                        describe(sc) + did_you_mean(
                                            sc, list(scenario_names.values()))))
            else:
                values["scenario"] = scenario_names[sc.strip().lower()]
                if values["scenario"] == BASELINE:
                    values["scenario"] = None
        if len(problems) > before:
            continue
        out.append(Observation(**values, where=at("count"), index=i))
    if not problems:
        problems += composition_problems(out, where)
    return out


def _count(value: Any, where: str) -> tuple[Any, Problem | None]:
    """A count: a whole number ≥ 0 (a fraction or a negative number says so)."""
    spec = field_specs(Observation)["count"]
    converted, problem = coerce(spec, value, where)
    if problem is not None:
        return None, Problem(where, "a whole number of records ≥ 0", problem.found)
    if converted is not None and converted < 0:
        return None, Problem(where, "a whole number of records ≥ 0", describe(value))
    return converted, None


def composition_problems(rows: list[Observation], where: Any) -> list[Problem]:
    """A prey twice in one composition; a composition whose counts are all zero."""
    problems: list[Problem] = []
    seen: dict[tuple, Observation] = {}
    totals: dict[tuple, list[Observation]] = {}
    for row in rows:
        if row.is_rate:
            continue
        key = (*row.composition_key, row.prey.lower())
        if key in seen:
            problems.append(Problem(where(row.index, "prey"), "each prey once per "
                                    "composition (same scenario, kind and source)",
                                    f"{row.prey!r} again (first at "
                                    f"{where(seen[key].index, 'prey')})"))
        seen.setdefault(key, row)
        totals.setdefault(row.composition_key, []).append(row)
    for (scenario, kind, source), members in totals.items():
        if all(r.count == 0 for r in members):
            label = f"{kind} of {scenario}" + (f", source {source!r}" if source else "")
            problems.append(Problem(members[0].where, "at least one record above 0 in a "
                                    "composition", f"every count 0 ({label})"))
    return problems


def compositions(rows: tuple[Observation, ...] | list[Observation]
                 ) -> dict[tuple[str, str, str], list[Observation]]:
    """Rows with a prey grouped by (scenario, kind, source), in order of appearance."""
    out: dict[tuple[str, str, str], list[Observation]] = {}
    for row in rows:
        if not row.is_rate:
            out.setdefault(row.composition_key, []).append(row)
    return out


def settings_fit_problems(settings: Settings, prey: tuple[Prey, ...],
                          rows: list[Observation], where: Any) -> list[Problem]:
    """The ``fit`` and ``overdispersion`` settings against the study and its records."""
    problems: list[Problem] = []
    _, found = parse_fit_targets(settings.fit, prey, where("fit"))
    problems += found
    if settings.overdispersion and len(compositions(rows)) < 2:
        problems.append(Problem(where("overdispersion"), "at least two compositions of "
                                "records (scenario, kind, source) for overdispersion, or no",
                                f"{len(compositions(rows))} composition(s)"))
    return problems
