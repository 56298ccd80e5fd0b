"""The result tables a manager attaches to a plan, independent of file format.

The workbook writer and the CSV writer both write exactly these tables, so the
two never disagree. Column headers carry units.
"""

from __future__ import annotations

import datetime as _dt
import re
from dataclasses import dataclass, field

from riskdiet.analysis.compare import comparison_table
from riskdiet.analysis.glossary import result_words
from riskdiet.analysis.results import ScenarioResult, StudyResult
from riskdiet.analysis.wording import number, probability, technical
from riskdiet.fields import UNIT_WORDS, field_specs, words
from riskdiet.model import Predator, Prey, Study


@dataclass(frozen=True)
class Table:
    """A titled table.

    Attributes
    ----------
    name : str
        Sheet name / CSV file stem.
    title : str
        One line describing the table.
    header : list of str
        Column names with units.
    rows : list of list
        Cell values (numbers stay numbers).
    formats : dict of int to str
        Number format by column index (spreadsheet syntax, e.g. ``0.000``).
    notes : list of str
        Lines shown under the title.
    keys : list of str
        The machine name of each column (the CSV header and JSON key); the
        workbook shows ``header``, the words, and its Glossary sheet maps one
        to the other. Empty: the header is its own key.
    """

    name: str
    title: str
    header: list[str]
    rows: list[list]
    formats: dict[int, str] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    keys: list[str] = field(default_factory=list)

    @classmethod
    def from_keys(cls, name: str, title: str, keys: list[str], rows: list[list],
                  formats: dict[int, str] | None = None,
                  notes: list[str] | None = None) -> Table:
        """A table whose header is the words of its column keys
        (:func:`riskdiet.analysis.glossary.result_words`)."""
        return cls(name, title, [result_words(k) for k in keys], rows, formats or {},
                   notes or [], list(keys))

    @property
    def column_keys(self) -> list[str]:
        """The key of every column (the header where no keys are given)."""
        return self.keys or self.header


def sheet_name(text: str, taken: set[str]) -> str:
    """A valid, unique sheet name (≤ 31 characters, no ``[]:*?/\\``)."""
    base = re.sub(r"[\[\]:*?/\\]", "-", text).strip("'") or "sheet"
    base = base[:31]
    name, i = base, 2
    while name.lower() in taken:
        suffix = f" ({i})"
        name = base[: 31 - len(suffix)] + suffix
        i += 1
    taken.add(name.lower())
    return name


def _summary(result: StudyResult, date: str) -> Table:
    rows = [["study", result.study.name], ["input file", result.study.source],
            ["input SHA-256", result.study.source_sha256],
            ["riskdiet version", result.riskdiet_version], ["date", date], [], ]
    rows.append(["scenario", "finding"])
    for s in result.scenarios:
        for i, f in enumerate(s.findings):
            rows.append([s.name if i == 0 else "", f])
    return Table.from_keys("Summary", "What the predator is predicted to take, scenario by "
                 "scenario", ["item", "value"], rows,
                 notes=["Decision aid only: values must come from local data; any measure "
                        "follows wildlife law, the wildlife authority and licensed "
                        "professionals' judgement."])


def _scenario(s: ScenarioResult, name: str) -> Table:
    n = s.grid.n
    header = ["level", "reserves_mj", "reserves_fraction", "fitness_healthy",
              "fitness_injured", "attacks_healthy", "attacks_injured",
              "marginal_hunting_ability_healthy"]
    rows = []
    marginal = s.solution.marginal_by_level
    for j in range(n + 1):
        rows.append([j, float(s.reserves_mj[j]), j / n, float(s.fitness["healthy"][j]),
                     float(s.fitness["injured"][j]), ", ".join(s.policy["healthy"][j]),
                     ", ".join(s.policy["injured"][j]), float(marginal[0, j])])
    what = ("probability of reaching breeding condition" if s.currency == "breeding"
            else "probability of ending the season alive and in condition (day 0)")
    elasticity = ("— (undefined where fitness is 0)" if s.elasticity is None
                  else number(s.elasticity, 3, floor=0.001))
    notes = [f"Fitness = {what}. Fitness at start: {probability(s.fitness_at_start, 4)}.",
             "Value of hunting ability at start: "
             f"{number(s.marginal_hunting_ability, 3, floor=0.0001)} per unit of ability "
             f"(elasticity {elasticity})."]
    return Table.from_keys(name, f"Scenario {s.name}: decisions and fitness by reserve level",
                           header,
                 rows, {1: "0.00", 2: "0%", 3: "0.0000", 4: "0.0000", 7: "0.0000"}, notes)


def _kills(result: StudyResult) -> Table:
    header = ["scenario", "prey", "group", "kills_per_predator_per_day",
              "kills_per_predator_per_30_days", "kills_per_predator_per_year",
              "kills_per_year_population", "diet_share_by_number", "diet_share_by_energy",
              "expected_kills_per_predator_per_season", "expected_kills_population_per_season"]
    rows = []
    for s in result.scenarios:
        for p in s.prey:
            k, z = s.kills, s.season_kills
            rows.append([
                s.name, p.name, p.group,
                k.kills_per_predator_per_day[p.name] if k else None,
                k.kills_per_predator_per_30_days[p.name] if k else None,
                k.kills_per_predator_per_year[p.name] if k else None,
                k.kills_per_year_population[p.name] if k else None,
                k.diet_share_by_number[p.name] if k else None,
                k.diet_share_by_energy[p.name] if k else None,
                z.expected_kills[p.name] if z else None,
                z.expected_kills_population[p.name] if z else None,
            ])
    return Table.from_keys("Kills", "Long-run kills of each prey type, places kept filled "
                 "(every death "
                 "replaced at once), or over the season", header,
                 rows, {3: "0.0000", 4: "0.00", 5: "0.0", 6: "0.0", 7: "0%", 8: "0%", 9: "0.00",
                        10: "0.0"})


def _cohort(result: StudyResult) -> Table:
    header = ["scenario", "prey", "group", "released_animals", "horizon_days", "cohort_kills"]
    rows = []
    for s in result.scenarios:
        c = s.cohort
        for p in s.prey:
            rows.append([s.name, p.name, p.group, c.animals, c.horizon_days, c.kills[p.name]])
    return Table.from_keys("Cohort", "Kills by the animals released, within the planning "
                 "horizon (no "
                 "replacement)", header, rows, {5: "0.0"},
                 notes=["The numbers to plan with: the animals released on day 0, "
                        "none replaced. The Kills sheet's yearly rates instead keep every place "
                        "filled (each death replaced at once)."])


def _grid_check(result: StudyResult) -> Table:
    header = ["scenario", "levels_compared", "quantity", "name", "relative_change"]
    rows = []
    notes = []
    for s in result.scenarios:
        g = s.grid_check
        if g is None:
            continue
        levels = f"{g.levels_compared[0]} vs {g.levels_compared[1]}"
        if g.problem:
            rows.append([s.name, levels, "not made", g.problem, None])
            continue
        rows.append([s.name, levels, "fitness at start", "", g.fitness_relative_change])
        for quantity, values in (("long-run kills of a prey", g.kills_relative_change),
                                 ("long-run kills of a group", g.kills_by_group_relative_change),
                                 ("released animals' kills of a prey",
                                  g.cohort_kills_relative_change),
                                 ("released animals' kills of a group",
                                  g.cohort_kills_by_group_relative_change)):
            rows += [[s.name, levels, quantity, k, v] for k, v in values.items()]
        if g.warning:
            notes.append(f"{s.name}: {g.warning}")
    notes.append("Relative change = (value at the check's levels - value at the study's) / "
                 "value at the study's; blank where the study's value is 0.")
    return Table.from_keys("Grid check", "Does the answer depend on the number of energy levels? "
                 "(the same scenario on a second grid)", header, rows, {4: "0.0%"}, notes)


def _predators(result: StudyResult) -> Table:
    header = ["scenario", "currency", "share_of_time_injured", "mean_reserves_fraction",
              "mean_reserves_mj", "daily_survival", "expected_lifetime_days",
              "expected_breeding_events", "first_breeding_probability",
              "death_before_breeding_starvation", "death_before_breeding_attack",
              "death_before_breeding_other", "survival_to_end", "chance_above_threshold",
              "cohort_alive_at_horizon", "cohort_survivors", "cohort_breeding_events",
              "cohort_median_survival_days"]
    rows = []
    notes = []
    for s in result.scenarios:
        k, z, c = s.kills, s.season_kills, s.cohort
        if k is not None and k.lifetime_note:
            notes.append(f"{s.name}: lifetime and breeding events shown as a dash because "
                         f"{k.lifetime_note}.")
        if s.viability:
            notes.append(f"{s.name}: {s.viability}")
        rows.append([
            s.name, s.currency,
            k.share_of_time_injured if k else None, k.mean_reserves_fraction if k else None,
            k.mean_reserves_mj if k else None, k.daily_survival if k else None,
            (k.expected_lifetime_days if k.expected_lifetime_days is not None else "—")
            if k else None,
            (k.expected_breeding_events if k.expected_breeding_events is not None
             else "—") if k else None,
            k.first_breeding_probability if k else None,
            k.death_before_breeding.get("starvation") if k else None,
            k.death_before_breeding.get("attack") if k else None,
            k.death_before_breeding.get("other") if k else None,
            z.survival_to_end if z else None, z.chance_above_threshold if z else None,
            c.alive_at_horizon if c else None, c.survivors if c else None,
            c.breeding_events if c else None,
            (c.median_survival_days if c.median_survival_days is not None
             else f"over {c.horizon_days} days") if c else None,
        ])
    return Table.from_keys("Predators", "What happens to the predators themselves", header, rows,
                 {2: "0.0%", 3: "0%", 4: "0.0", 5: "0.00000", 6: "0", 7: "0.00", 8: "0.000",
                  9: "0.000", 10: "0.000", 11: "0.000", 12: "0.000", 13: "0.000", 14: "0.000",
                  15: "0.0", 16: "0.0"}, notes)


def _comparison(result: StudyResult) -> Table:
    table = comparison_table(result)
    header = list(table.keys)
    rows = [list(r) for r in table.rows]
    delta_rows = []
    for r, row in enumerate(table.deltas):
        if r == 0:
            continue
        delta_rows.append([f"{table.rows[r][0]} minus baseline", *row[1:]])
    formats = {}
    for i, c in enumerate(table.columns):
        formats[i] = {"probability": "0.000", "fraction": "0%", "count": "0.0"}.get(c.kind, "")
    return Table.from_keys("Comparison", "Scenarios compared, with each scenario's change "
                 "against the baseline (“… minus baseline”)", header,
                 rows + ([[]] if delta_rows else []) + delta_rows,
                 {k: v for k, v in formats.items() if v},
                 notes=["“takes it below”: the reserves, as a share of capacity, below which "
                        "the prey is taken (blank: never)."])


def _classic(result: StudyResult) -> Table:
    header = ["scenario", "prey", "rank", "profitability_mj_per_day", "in_rate_maximizing_diet",
              "in_risk_adjusted_diet", "switching_threshold_per_day"]
    rows = []
    notes = []
    for s in result.scenarios:
        c = s.classic
        if c is None:
            continue
        notes.append(f"{s.name}: rate {number(c.rate_mj_per_day)} MJ/day. {c.statement}")
        order = sorted(range(len(c.names)), key=lambda i: int(c.rank[i]))
        for i in order:
            name = c.names[i]
            prof = float(c.profitability_mj_per_day[i])
            thr = c.switching_threshold_per_day.get(name)
            rows.append([s.name, name, int(c.rank[i]), prof if prof != float("inf") else "no "
                         "handling time", "yes" if name in c.rate_maximizing_diet else "no",
                         ("yes" if name in c.risk_adjusted_diet else "no")
                         if c.risk_adjusted_diet is not None else "no diet pays",
                         (thr if thr != float("inf") else "never") if thr is not None else None])
    return Table.from_keys("Classic", "Classic prey model (well-fed forager): Charnov ranking and "
                 "Gilliam's risk-adjusted diet", header, rows, {3: "0.00", 6: "0.000"}, notes)


def glossary_table(tables: list[Table]) -> Table:
    """The Glossary sheet: trade terms, inputs by words and key, and every column header
    of ``tables`` with its key."""
    from riskdiet.analysis.glossary import TERMS, field_glossary

    rows = [[term, meaning, ""] for term, meaning in TERMS]
    rows += [[words_, meaning, key] for words_, key, meaning in field_glossary()]
    seen: set[tuple[str, str]] = set()
    own = Table.from_keys("Glossary", "", ["term", "meaning", "key"], [])
    for table in [*tables, own]:
        for header, key in zip(table.header, table.column_keys, strict=True):
            if header != key and (header, key) not in seen:
                seen.add((header, key))
                rows.append([header, f"Column of the {table.name} sheet.", key])
    return Table.from_keys("Glossary", "Terms used in these results, the inputs and the "
                           "column headers by name", own.keys, rows,
                           notes=["Study workbooks, JSON files and the CSV tables name inputs "
                                  "and columns by their keys; this workbook names them in "
                                  "words."])


def _provenance(result: StudyResult, date: str) -> Table:
    rows: list[list] = [["riskdiet version", "", "", result.riskdiet_version, ""],
                        ["input file", "", "", result.study.source, ""],
                        ["input SHA-256", "", "", result.study.source_sha256, ""],
                        ["date", "", "", date, ""]]
    for s in result.scenarios:
        rows.append([s.name, "", "solver", f"{s.linear_solver}; {s.iterations} round(s); "
                     f"converged {'yes' if s.converged else 'no'}; Bellman residual "
                     f"{technical(s.residual)}", ""])
        for name, spec in field_specs(Predator).items():
            value = getattr(s.predator, name)
            if name == "daily_cost_mj" and s.predator.daily_cost_is_estimated:
                value = (f"{number(s.predator.effective_daily_cost_mj, 4)} (estimated, "
                         "Kleiber 1961)")
            rows.append([s.name, "predator", _input_words(name, spec), value, name])
        for p in s.prey:
            for name, spec in field_specs(Prey).items():
                value = getattr(p, name)
                if name == "skill_dependent":
                    value = p.is_skill_dependent
                if name == "encounters_per_day" and value is None:
                    value = f"{number(p.encounters(s.predator), 4)} (from density)"
                rows.append([s.name, p.name, _input_words(name, spec), value, name])
    return Table.from_keys("Provenance", "Where these numbers come from: every input value "
                           "as used", ["scenario", "record", "input", "value", "key"], rows)


def _input_words(name: str, spec) -> str:
    unit = UNIT_WORDS.get(spec.unit, spec.unit)
    return f"{words(name)} [{unit}]"


def scenario_sheet_names(scenario_names: list[str]) -> list[str]:
    """Sheet names of the per-scenario tables, unique and valid."""
    taken = {"summary", "comparison", "cohort", "kills", "predators", "classic", "map",
             "grid check", "glossary", "provenance"}
    return [sheet_name(name, taken) for name in scenario_names]


def table_names(study: Study) -> list[str]:
    """Names of the tables :func:`results_tables` will give for a study, known before solving."""
    names = ["Summary", "Comparison", "Cohort", "Kills", "Predators"]
    names += scenario_sheet_names([s.name for s in study.scenarios])
    names.append("Classic")
    if study.settings.map_x and study.settings.map_y:
        names.append("Map")
    return [*names, "Grid check", "Glossary", "Provenance"]


def results_tables(result: StudyResult, date: str | None = None) -> list[Table]:
    """Every table of the results workbook, in sheet order."""
    date = date or result.study.settings.report_date or _dt.date.today().isoformat()
    tables = [_summary(result, date), _comparison(result), _cohort(result), _kills(result),
              _predators(result)]
    sheets = scenario_sheet_names([s.name for s in result.scenarios])
    tables += [_scenario(s, name) for s, name in zip(result.scenarios, sheets, strict=True)]
    tables += [_classic(result)]
    if result.map is not None:
        tables.append(_map(result))
    tables += [_grid_check(result)]
    provenance = _provenance(result, date)
    return [*tables, glossary_table([*tables, provenance]), provenance]


def _map(result: StudyResult) -> Table:
    surface = result.map
    req = surface.request
    formats = {i: "0.0000" for i, c in enumerate(surface.columns())
               if c.startswith(("fitness", "marginal"))}
    formats.update({i: "0.00" for i, c in enumerate(surface.columns())
                    if c.startswith("kills")})
    return Table.from_keys("Map", f"Map of scenario {req.scenario}: across = {req.x.label}, "
                           f"up = {req.y.label}; one row per cell", surface.columns(),
                           surface.rows(), formats,
                           notes=["Largest Bellman residual: "
                                  f"{technical(surface.max_residual)}."])

