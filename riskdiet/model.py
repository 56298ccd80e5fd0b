"""Study model: the predator, its prey, scenarios and the whole study.

Frozen dataclasses whose field names are the vocabulary of MODEL.md section 1.
Each field carries its unit, bounds and description (:mod:`riskdiet.fields`).
Values are stored as the user gave them; derived quantities (the estimated daily
cost, the default skill dependence, encounter rates) are properties, so a
scenario that changes a source value changes what is derived from it.

Building and validating a study from the JSON layout is
:mod:`riskdiet.validation`; scenario changes are applied here
(:func:`apply_changes`), since they define what a scenario means.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

from riskdiet.errors import Notice, Problem, StudyError, describe
from riskdiet.fields import (
    BOOLEAN,
    CHOICE,
    INTEGER,
    MAX_ANIMALS,
    NAME_MAX_LENGTH,
    NUMBER,
    TEXT,
    FieldSpec,
    coerce,
    did_you_mean,
    field_specs,
    spec_field,
    words,
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
        0.0, percent=True, kind=NUMBER, unit="1/day", low=0, high=1, high_open=True,
        description="Daily probability of dying of other causes.")
    hunting_ability: float = spec_field(
        1.0, kind=NUMBER, unit="ratio", low=0,
        description="Multiplier on capture success of skill-dependent prey (1 = typical).")
    search_area_km2_per_day: float | None = spec_field(
        kind=NUMBER, unit="km²/day", low=0, low_open=True,
        description="Area searched per day; turns prey density into encounters.")
    injured_capture_factor: float = spec_field(
        1.0, percent=True, kind=NUMBER, unit="ratio", low=0, high=1,
        description="Capture success is multiplied by this while injured.")
    injured_extra_cost_mj: float = spec_field(
        0.0, kind=NUMBER, unit="MJ/day", low=0,
        description="Extra daily energy cost while injured.")
    injured_extra_mortality: float = spec_field(
        0.0, percent=True, kind=NUMBER, unit="1/day", low=0, high=1, high_open=True,
        description="Extra daily probability of dying while injured.")
    recovery_days: float = spec_field(
        1.0, kind=NUMBER, unit="day", low=1,
        description="Mean time to recover from an injury.")
    currency: str = spec_field(
        "breeding", kind=CHOICE, unit="word", choices=CURRENCIES,
        description="What the predator maximises: reaching breeding condition, "
        "or ending the season alive and in condition.")
    breeding_threshold: float = spec_field(
        1.0, percent=True, kind=NUMBER, unit="fraction of R", low=0, high=1, low_open=True,
        description="Breeding condition is reached at reserves of this fraction of capacity.")
    season_days: int | None = spec_field(
        kind=INTEGER, unit="day", low=1, high=3650,
        description="Season length (season currency only).")
    season_reserve_threshold: float = spec_field(
        0.0, percent=True, kind=NUMBER, unit="fraction of R", low=0, high=1,
        description="Reserves needed at the end of the season (0 = alive is enough).")
    start_reserves: float = spec_field(
        0.5, percent=True, kind=NUMBER, unit="fraction of R", low=0, high=1,
        description="Reserves of a newly arrived or released animal.")
    reserves_after_breeding: float = spec_field(
        0.5, percent=True, kind=NUMBER, unit="fraction of R", low=0, high=1,
        description="Reserves right after a breeding event.")
    population: int = spec_field(
        1, kind=INTEGER, unit="count", low=0, high=MAX_ANIMALS,
        description="Predators in the area, for long-run totals (places kept filled: every "
        "death replaced).")
    released_animals: int | None = spec_field(
        kind=INTEGER, unit="count", low=0, high=MAX_ANIMALS,
        description="Animals released on day 0, for the released cohort's numbers "
        "(blank: the population).")

    @property
    def cohort_size(self) -> int:
        """Animals released on day 0 (MODEL.md section 5): the field, else the population."""
        return self.population if self.released_animals is None else self.released_animals

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

    name: str = spec_field(kind=TEXT, unit="text", required=True, max_length=NAME_MAX_LENGTH,
                           description="Unique name of the prey type.")
    group: str = spec_field("wild", kind=TEXT, unit="text", max_length=NAME_MAX_LENGTH,
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
        kind=NUMBER, percent=True, unit="probability", low=0, high=1, required=True,
        description="Chance an attack captures the prey, at hunting ability 1.")
    skill_dependent: bool | None = spec_field(
        kind=BOOLEAN, unit="yes/no",
        description="Capture success scales with hunting ability (blank: yes if the prey is "
        "risky in the baseline inputs).")
    injury_chance: float = spec_field(
        0.0, percent=True, kind=NUMBER, unit="probability", low=0, high=1,
        description="Chance that a failed attack injures the predator.")
    injury_energy_mj: float = spec_field(
        0.0, kind=NUMBER, unit="MJ", low=0,
        description="Energy lost when injured.")
    fatality_chance: float = spec_field(
        0.0, percent=True, kind=NUMBER, unit="probability", low=0, high=1, high_open=True,
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
        Location of the change's value in the input, for messages.
    where_prey, where_field : str
        Locations of its ``prey`` and ``field`` entries (default: ``where``).
    """

    prey: str | None
    field: str
    change: str
    value: Any
    where: str = ""
    where_prey: str = ""
    where_field: str = ""

    def describe(self) -> str:
        """The change in field names, e.g. ``upland ewe: density_per_km2 multiplied by 0.2``."""
        target = f"{self.prey}: {self.field}" if self.prey else self.field
        verb = {"set": "set to", "scale": "multiplied by", "add": "increased by"}[self.change]
        return f"{target} {verb} {self.value:g}" if isinstance(self.value, float) else (
            f"{target} {verb} {self.value}")

    def in_words(self) -> str:
        """The change for people, e.g. ``upland ewe density multiplied by 0.2 (cut to a fifth)``."""
        what = words(self.field)
        target = f"{self.prey} {what}" if self.prey else what
        value = f"{self.value:g}" if isinstance(self.value, float) else str(self.value)
        if self.change == "scale" and isinstance(self.value, float):
            return f"{target} multiplied by {value}" + _share_words(self.value)
        if self.change == "add":
            return f"{target} increased by {value}"
        return f"{target} set to {value}"


def _share_words(factor: float) -> str:
    """``(halved)``-style words for common scale factors, else nothing."""
    named = {0.5: "halved", 0.25: "cut to a quarter", 0.2: "cut to a fifth",
             0.1: "cut to a tenth", 2.0: "doubled", 3.0: "tripled", 0.0: "removed"}
    return f" ({named[factor]})" if factor in named else ""


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
    scenario: str | None = None
    """Scenario whose final value the range replaces; None: the baseline value, in every
    scenario (MODEL.md section 9)."""

    @property
    def name(self) -> str:
        """``FIELD`` (predator) or ``PREY:FIELD``, as outputs name an input."""
        return f"{self.prey}:{self.field}" if self.prey else self.field


GRID_SHAPE_FIELDS = ("energy_levels", "breeding_threshold", "season_days", "currency")
"""Fields that change the grid's shape: no uncertainty range on them (MODEL.md section 9)."""


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
    horizon_days: int = spec_field(
        365, kind=INTEGER, unit="day", low=1, high=3650,
        description="Planning horizon for the released cohort's kills and survival.")
    map_gradient: str | None = spec_field(
        kind=TEXT, unit="FIELD or PREY:FIELD",
        description="A further input whose marginal value the map shows (optional).")
    fit: str | None = spec_field(
        kind=TEXT, unit="FIELD or PREY:FIELD, comma-separated",
        description="One to three inputs to fit to the Observations sheet, e.g. "
        "hunting_ability, upland ewe:encounters_per_day (riskdiet fit).")
    overdispersion: bool = spec_field(
        False, kind=BOOLEAN, unit="yes/no",
        description="Let the compositions of records vary more than chance allows "
        "(Dirichlet-multinomial; needs at least two compositions).")

    draws: int = spec_field(
        1000, kind=INTEGER, unit="count", low=2, high=100000,
        description="Latin hypercube draws of the uncertain inputs (uncertainty analysis).")
    seed: int = spec_field(
        1, kind=INTEGER, unit="count", low=0, high=2**32 - 1,
        description="Seed of the draws: the same seed gives the same numbers.")
    goal: str | None = spec_field(
        kind=TEXT, unit="fewer:NAME or higher:breeding",
        description="Management goal scenarios are judged by: fewer:NAME (fewer cohort kills "
        "of the prey or group NAME) or higher:breeding (blank: fewer:livestock when a group "
        "livestock exists, else higher:breeding).")


OBSERVATION_KINDS = ("kills", "scats")


@dataclass(frozen=True)
class Observation:
    """One row of field diet records (MODEL.md section 10).

    A row with a prey counts records of that prey; a ``kills`` row with
    ``predator_days`` and no prey is a rate row (kills found over a period of
    monitoring). Rows sharing (scenario, kind, source) form one composition.
    """

    prey: str | None = spec_field(
        kind=TEXT, unit="text", max_length=NAME_MAX_LENGTH,
        description="Prey type, as named on the Prey sheet (blank on a rate row).")
    count: int | None = spec_field(
        kind=INTEGER, unit="count", low=0, required=True,
        description="Records of this prey (kills found, or scats holding its remains).")
    kind: str = spec_field(
        "kills", kind=CHOICE, unit="word", choices=OBSERVATION_KINDS,
        description="kills (found at kill sites) or scats (remains in scats or other "
        "diet samples).")
    detection: float = spec_field(
        1.0, kind=NUMBER, unit="ratio", low=0, low_open=True,
        description="Relative chance that one kill of this prey is recorded, e.g. scats "
        "produced per individual eaten (published correction factors).")
    scenario: str | None = spec_field(
        kind=TEXT, unit="text", max_length=NAME_MAX_LENGTH,
        description="Scenario under which the records were collected (blank: baseline).")
    source: str | None = spec_field(
        kind=TEXT, unit="text", max_length=NAME_MAX_LENGTH,
        description="Study, pack or season the records come from; one composition each.")
    note: str = spec_field("", kind=TEXT, unit="text", description="Free text.")
    predator_days: float | None = spec_field(
        kind=NUMBER, unit="predator-days", low=0, low_open=True,
        description="Rate rows only (kills, no prey): days of monitoring summed over "
        "the predators monitored.")
    where: str = ""
    index: int = -1

    @property
    def is_rate(self) -> bool:
        """A rate row: kills over ``predator_days`` of monitoring, no prey."""
        return self.prey is None

    @property
    def composition_key(self) -> tuple[str, str, str]:
        """(scenario, kind, source): the composition this row belongs to."""
        return (self.scenario or BASELINE, self.kind, self.source or "")


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
    locations : dict
        Where some inputs sit in the file (``settings.map_x`` -> ``Settings!B6
        (map_x)``), for problems found after reading.
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
    locations: dict[str, str] = dataclasses.field(default_factory=dict)
    observations: tuple[Observation, ...] = ()

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

    @property
    def baseline_prey(self) -> tuple[Prey, ...]:
        """The prey as entered, with a blank ``skill_dependent`` fixed from baseline risk.

        MODEL.md section 1: a prey that is risky in the baseline inputs is
        skill-dependent unless told otherwise; a scenario, map cell or draw that
        changes its risk later does not change that.
        """
        return tuple(p if p.skill_dependent is not None
                     else dataclasses.replace(p, skill_dependent=p.risky) for p in self.prey)

    def inputs_for(self, scenario: Scenario) -> tuple[Predator, tuple[Prey, ...]]:
        """Predator and prey of a scenario: the baseline with its changes applied."""
        predator, prey, problems = apply_changes(self.predator, self.baseline_prey,
                                                 scenario.changes)
        if problems:
            raise StudyError(problems, self.source or None)
        return predator, prey


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
                names = [p.name for p in prey]
                problems.append(Problem(ch.where_prey or ch.where, "the name of a prey type in "
                                        f"the study ({', '.join(names)})",
                                        describe(ch.prey) + did_you_mean(ch.prey, names)))
                continue
            spec, current = yspecs.get(ch.field), prey_list[i]
        if spec is None or ch.field == "name":
            allowed = [f for f in (pspecs if ch.prey is None else yspecs) if f != "name"]
            other = yspecs if ch.prey is None else pspecs
            hint = did_you_mean(ch.field, allowed)
            if not hint and ch.field in other and ch.field != "name":
                hint = (" (a prey field: name the prey in the prey column)" if ch.prey is None
                        else " (a predator field: leave the prey column blank)")
            problems.append(Problem(ch.where_field or ch.where,
                                    f"a {'predator' if ch.prey is None else 'prey'} "
                                    f"field ({', '.join(allowed)})", describe(ch.field) + hint))
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
