"""Study model: the predator, its prey, scenarios and the whole study.

Frozen dataclasses whose field names are the vocabulary of MODEL.md section 1.
Each field carries its unit, bounds and description (:mod:`riskdiet.fields`).
Values are stored as the user gave them; derived quantities (the estimated daily
cost, the default skill dependence, encounter rates) are properties, so a
scenario that changes a source value changes what is derived from it.

Building a study (:func:`build_study`) is independent of the file format: the
JSON and workbook readers hand over a plain dictionary in the JSON layout plus
a :class:`Locator` that turns a position into a location string
(``prey[2].energy_mj`` or ``Prey!E4 (energy_mj)``).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any, Protocol

from riskdiet.errors import Notice, Problem, StudyError, describe
from riskdiet.fields import (
    BOOLEAN,
    CHOICE,
    INTEGER,
    NUMBER,
    TEXT,
    FieldSpec,
    coerce,
    field_specs,
    is_blank,
    spec_field,
)

KCAL_TO_MJ = 4.184e-3
"""Thermochemical calorie: 1 kcal = 4.184 kJ (common practice)."""

CURRENCIES = ("breeding", "season")
CHANGE_KINDS = ("set", "scale", "add")
SHAPES = ("uniform", "triangular", "loguniform")
BASELINE = "baseline"


def round_half_up(x: float) -> int:
    """Round to the nearest integer, halves upwards (MODEL.md's ``round``)."""
    return math.floor(x + 0.5)


def kleiber_basal_mj_per_day(body_mass_kg: float) -> float:
    """Basal metabolic rate from body mass by Kleiber's law [MJ/day].

    Parameters
    ----------
    body_mass_kg : float
        Body mass [kg].

    Returns
    -------
    float
        BMR = 70 M^0.75 kcal/day, converted at 4.184 kJ/kcal [MJ/day].

    References
    ----------
    .. [1] Kleiber, M. (1961). The Fire of Life: An Introduction to Animal
       Energetics. Wiley, New York.
    """
    return 70.0 * body_mass_kg**0.75 * KCAL_TO_MJ


@dataclass(frozen=True)
class Predator:
    """The predator (one per study); MODEL.md section 1."""

    name: str = spec_field("predator", kind=TEXT, unit="text", description="Label only.")
    reserve_capacity_mj: float | None = spec_field(
        kind=NUMBER, unit="MJ", low=0, low_open=True, required=True,
        description="Most energy the predator can store.")
    energy_levels: int = spec_field(
        100, kind=INTEGER, unit="count", low=10, high=2000,
        description="Grid resolution: reserves are counted in this many equal steps.")
    daily_cost_mj: float | None = spec_field(
        kind=NUMBER, unit="MJ/day", low=0, low_open=True,
        description="Energy used in one day; leave blank to estimate it from body mass.")
    body_mass_kg: float | None = spec_field(
        kind=NUMBER, unit="kg", low=0, low_open=True,
        description="Body mass, used only to estimate a blank daily cost (Kleiber's law).")
    activity_multiplier: float = spec_field(
        2.5, kind=NUMBER, unit="ratio", low=0, low_open=True,
        description="Field cost over basal cost (2.5 is a common-practice guess; use local data).")
    background_mortality: float = spec_field(
        0.0, kind=NUMBER, unit="1/day", low=0, high=1, high_open=True,
        description="Daily probability of dying of other causes.")
    hunting_ability: float = spec_field(
        1.0, kind=NUMBER, unit="ratio", low=0,
        description="Multiplier on capture success of skill-dependent prey (1 = typical).")
    search_area_km2_per_day: float | None = spec_field(
        kind=NUMBER, unit="km²/day", low=0, low_open=True,
        description="Area searched per day; turns prey density into encounters.")
    injured_capture_factor: float = spec_field(
        1.0, kind=NUMBER, unit="ratio", low=0, high=1,
        description="Capture success is multiplied by this while injured.")
    injured_extra_cost_mj: float = spec_field(
        0.0, kind=NUMBER, unit="MJ/day", low=0,
        description="Extra daily energy cost while injured.")
    injured_extra_mortality: float = spec_field(
        0.0, kind=NUMBER, unit="1/day", low=0, high=1, high_open=True,
        description="Extra daily probability of dying while injured.")
    recovery_days: float = spec_field(
        1.0, kind=NUMBER, unit="day", low=1,
        description="Mean time to recover from an injury.")
    currency: str = spec_field(
        "breeding", kind=CHOICE, unit="word", choices=CURRENCIES,
        description="What the predator maximises: reaching breeding condition, "
        "or ending the season alive and in condition.")
    breeding_threshold: float = spec_field(
        1.0, kind=NUMBER, unit="fraction of R", low=0, high=1, low_open=True,
        description="Breeding condition is reached at reserves of this fraction of capacity.")
    season_days: int | None = spec_field(
        kind=INTEGER, unit="day", low=1,
        description="Season length (season currency only).")
    season_reserve_threshold: float = spec_field(
        0.0, kind=NUMBER, unit="fraction of R", low=0, high=1,
        description="Reserves needed at the end of the season (0 = alive is enough).")
    start_reserves: float = spec_field(
        0.5, kind=NUMBER, unit="fraction of R", low=0, high=1,
        description="Reserves of a newly arrived or released animal.")
    reserves_after_breeding: float = spec_field(
        0.5, kind=NUMBER, unit="fraction of R", low=0, high=1,
        description="Reserves right after a breeding event.")
    population: int = spec_field(
        1, kind=INTEGER, unit="count", low=0,
        description="Predators in the area, for population totals.")

    @property
    def daily_cost_is_estimated(self) -> bool:
        """True when the daily cost comes from body mass (Kleiber's law)."""
        return self.daily_cost_mj is None and self.body_mass_kg is not None

    @property
    def effective_daily_cost_mj(self) -> float:
        """Daily cost as used [MJ/day]: given, or activity_multiplier x Kleiber BMR."""
        if self.daily_cost_mj is not None:
            return self.daily_cost_mj
        if self.body_mass_kg is None:
            raise ValueError("daily cost neither given nor estimable")
        return self.activity_multiplier * kleiber_basal_mj_per_day(self.body_mass_kg)

    @property
    def recovery_chance_per_day(self) -> float:
        """Daily recovery probability r = 1/D."""
        return 1.0 / self.recovery_days

    @property
    def breeding_level(self) -> int:
        """Breeding level J = round(b n)."""
        return round_half_up(self.breeding_threshold * self.energy_levels)

    @property
    def top_living_level(self) -> int:
        """Highest living level: J-1 (breeding) or n (season)."""
        return self.breeding_level - 1 if self.currency == "breeding" else self.energy_levels

    @property
    def start_level(self) -> int:
        """Start level j0 = round(s0 n), clipped to the living levels."""
        j0 = round_half_up(self.start_reserves * self.energy_levels)
        return min(max(j0, 1), self.top_living_level)

    @property
    def after_breeding_level(self) -> int:
        """Level after breeding, round(rho n), clipped to the living levels."""
        j = round_half_up(self.reserves_after_breeding * self.energy_levels)
        return min(max(j, 1), self.top_living_level)


@dataclass(frozen=True)
class Prey:
    """One prey type; MODEL.md section 1."""

    name: str = spec_field(kind=TEXT, unit="text", required=True,
                           description="Unique name of the prey type.")
    group: str = spec_field("wild", kind=TEXT, unit="text",
                            description="Group for totals, e.g. wild, livestock, protected.")
    density_per_km2: float | None = spec_field(
        kind=NUMBER, unit="1/km²", low=0,
        description="Density; encounters per day = search area x density.")
    encounters_per_day: float | None = spec_field(
        kind=NUMBER, unit="1/day", low=0,
        description="Expected encounters per day while searching; overrides density.")
    energy_mj: float | None = spec_field(
        kind=NUMBER, unit="MJ", low=0, required=True,
        description="Energy the predator gains from one capture.")
    handling_days: float = spec_field(
        0.0, kind=NUMBER, unit="day", low=0,
        description="Extra days one capture occupies (eating, guarding, resting).")
    capture_success: float | None = spec_field(
        kind=NUMBER, unit="probability", low=0, high=1, required=True,
        description="Chance an attack captures the prey, at hunting ability 1.")
    skill_dependent: bool | None = spec_field(
        kind=BOOLEAN, unit="yes/no",
        description="Capture success scales with hunting ability (blank: yes if risky).")
    injury_chance: float = spec_field(
        0.0, kind=NUMBER, unit="probability", low=0, high=1,
        description="Chance that a failed attack injures the predator.")
    injury_energy_mj: float = spec_field(
        0.0, kind=NUMBER, unit="MJ", low=0,
        description="Energy lost when injured.")
    fatality_chance: float = spec_field(
        0.0, kind=NUMBER, unit="probability", low=0, high=1, high_open=True,
        description="Chance that an attack kills the predator.")
    note: str = spec_field("", kind=TEXT, unit="text",
                           description="Free text: sources of the values, caveats.")

    @property
    def risky(self) -> bool:
        """A prey type is risky when it can injure or kill (q > 0 or f > 0)."""
        return self.injury_chance > 0 or self.fatality_chance > 0

    @property
    def is_skill_dependent(self) -> bool:
        """Skill dependence as used: given, else yes exactly when risky."""
        return self.risky if self.skill_dependent is None else self.skill_dependent

    def encounters(self, predator: Predator) -> float:
        """Expected encounters per day m_i [1/day]."""
        if self.encounters_per_day is not None:
            return self.encounters_per_day
        if self.density_per_km2 is None or predator.search_area_km2_per_day is None:
            raise ValueError(f"no encounter information for {self.name}")
        return predator.search_area_km2_per_day * self.density_per_km2

    def encounter_probability(self, predator: Predator) -> float:
        """Daily encounter probability p_i = 1 - exp(-m_i)."""
        return -math.expm1(-self.encounters(predator))


@dataclass(frozen=True)
class Change:
    """One change a scenario makes to the baseline.

    Attributes
    ----------
    prey : str or None
        Prey name, or None for a predator field.
    field : str
        Field name from MODEL.md section 1.
    change : str
        ``set``, ``scale`` (multiply) or ``add``.
    value : float or str or bool
        New value, factor or increment.
    where : str
        Location of the change in the input, for messages.
    """

    prey: str | None
    field: str
    change: str
    value: Any
    where: str = ""

    def describe(self) -> str:
        target = f"{self.prey}: {self.field}" if self.prey else self.field
        verb = {"set": "set to", "scale": "multiplied by", "add": "increased by"}[self.change]
        return f"{target} {verb} {self.value:g}" if isinstance(self.value, float) else (
            f"{target} {verb} {self.value}")


@dataclass(frozen=True)
class Scenario:
    """A named set of changes to the baseline (the baseline has none)."""

    name: str
    changes: tuple[Change, ...] = ()
    note: str = ""


@dataclass(frozen=True)
class UncertainInput:
    """A range of plausible values for one input (used by uncertainty analysis)."""

    prey: str | None
    field: str
    low: float
    high: float
    shape: str = "uniform"
    mode: float | None = None
    note: str = ""
    where: str = ""


@dataclass(frozen=True)
class Settings:
    """Study-wide settings (optional)."""

    study_name: str | None = spec_field(
        kind=TEXT, unit="text", description="Name shown on the brief (default: file name).")
    report_date: str | None = spec_field(
        kind=TEXT, unit="YYYY-MM-DD",
        description="Date printed on the brief; fixes the document so it can be re-made "
        "byte for byte.")
    description: str | None = spec_field(
        kind=TEXT, unit="text", description="One paragraph on what the study is for.")
    map_x: str | None = spec_field(
        kind=TEXT, unit="TARGET=START:STOP:STEPS",
        description="Horizontal axis of a map for the brief, e.g. "
        "wild boar:encounter_share=0:1:41 (blank: no map).")
    map_y: str | None = spec_field(
        kind=TEXT, unit="TARGET=START:STOP:STEPS",
        description="Vertical axis of the map, e.g. hunting_ability=0.2:1.6:41.")
    map_scenario: str | None = spec_field(
        kind=TEXT, unit="text", description="Scenario the map varies (blank: baseline).")
    map_gradient: str | None = spec_field(
        kind=TEXT, unit="FIELD or PREY:FIELD",
        description="A further input whose marginal value the map shows (optional).")


@dataclass(frozen=True)
class Study:
    """A whole study: predator, prey, scenarios (baseline first), ranges, settings.

    Attributes
    ----------
    notices : tuple of Notice
        Warnings about legal but suspicious values.
    notes : dict
        Notes the user attached to predator fields, keyed by field name.
    source : str
        File the study was read from (for messages and provenance).
    source_sha256 : str
        SHA-256 of that file's bytes, hex.
    """

    predator: Predator
    prey: tuple[Prey, ...]
    scenarios: tuple[Scenario, ...]
    uncertainty: tuple[UncertainInput, ...] = ()
    settings: Settings = Settings()
    notices: tuple[Notice, ...] = ()
    notes: dict[str, str] = dataclasses.field(default_factory=dict)
    source: str = ""
    source_sha256: str = ""

    @property
    def name(self) -> str:
        """Study name: the setting, else the file name, else the predator name."""
        if self.settings.study_name:
            return self.settings.study_name
        if self.source:
            stem = self.source.replace("\\", "/").rsplit("/", 1)[-1]
            return stem.rsplit(".", 1)[0]
        return self.predator.name

    def scenario(self, name: str) -> Scenario:
        for s in self.scenarios:
            if s.name == name:
                return s
        raise KeyError(name)

    def inputs_for(self, scenario: Scenario) -> tuple[Predator, tuple[Prey, ...]]:
        """Predator and prey of a scenario: the baseline with its changes applied."""
        predator, prey, problems = apply_changes(self.predator, self.prey, scenario.changes)
        if problems:
            raise StudyError(problems, self.source or None)
        return predator, prey


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


def apply_changes(predator: Predator, prey: tuple[Prey, ...], changes: tuple[Change, ...]
                  ) -> tuple[Predator, tuple[Prey, ...], list[Problem]]:
    """Apply scenario changes in order; problems name the change's location."""
    problems: list[Problem] = []
    prey_list = list(prey)
    index = {p.name.strip().lower(): i for i, p in enumerate(prey)}
    pspecs, yspecs = field_specs(Predator), field_specs(Prey)
    for ch in changes:
        if ch.prey is None:
            spec, current = pspecs.get(ch.field), predator
        else:
            i = index.get(ch.prey.strip().lower())
            if i is None:
                problems.append(Problem(ch.where, "the name of a prey type in the study "
                                        f"({', '.join(p.name for p in prey)})", describe(ch.prey)))
                continue
            spec, current = yspecs.get(ch.field), prey_list[i]
        if spec is None or ch.field == "name":
            allowed = [f for f in (pspecs if ch.prey is None else yspecs) if f != "name"]
            problems.append(Problem(ch.where, f"a {'predator' if ch.prey is None else 'prey'} "
                                    f"field ({', '.join(allowed)})", describe(ch.field)))
            continue
        old = getattr(current, ch.field)
        if ch.change == "set":
            new, problem = coerce(spec, ch.value, ch.where)
            if problem:
                problems.append(problem)
                continue
        else:
            if not spec.numeric:
                problems.append(Problem(ch.where, f"set (not {ch.change}) for the non-numeric "
                                        f"field {ch.field}", describe(ch.change)))
                continue
            factor, problem = coerce(FieldSpec(NUMBER, "", ""), ch.value, ch.where)
            if problem or factor is None:
                problems.append(problem or Problem(ch.where, "a number", "nothing (blank)"))
                continue
            if old is None:
                old = _derived_value(current, ch.field, predator)
                if old is None:
                    problems.append(Problem(ch.where, f"a baseline value of {ch.field} to "
                                            f"{ch.change}", "a blank baseline value"))
                    continue
            new = old * factor if ch.change == "scale" else old + factor
            if spec.kind == INTEGER:
                new = round_half_up(new)
        updated = dataclasses.replace(current, **{ch.field: new})
        if ch.prey is None:
            predator = updated
        else:
            prey_list[index[ch.prey.strip().lower()]] = updated
    return predator, tuple(prey_list), problems


def _derived_value(record: Any, field: str, predator: Predator) -> float | None:
    """Value a blank field stands for, so that scale/add work on derived inputs."""
    if isinstance(record, Predator) and field == "daily_cost_mj" and record.body_mass_kg:
        return record.effective_daily_cost_mj
    if isinstance(record, Prey) and field == "encounters_per_day":
        try:
            return record.encounters(predator)
        except ValueError:
            return None
    return None


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
