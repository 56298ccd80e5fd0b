"""One table comparing scenarios, with signed changes against the baseline."""

from __future__ import annotations

from dataclasses import dataclass

from riskdiet.analysis.findings import WILD_GROUPS
from riskdiet.analysis.results import CONDITIONS, ScenarioResult, StudyResult


@dataclass(frozen=True)
class Column:
    """One column of the comparison.

    Attributes
    ----------
    key : str
        Machine name with units, used as the CSV/workbook header.
    label : str
        Short human label for the terminal and the brief.
    kind : str
        ``probability``, ``count``, ``fraction`` or ``text``.
    """

    key: str
    label: str
    kind: str


@dataclass(frozen=True)
class ComparisonTable:
    """Scenarios side by side.

    Attributes
    ----------
    columns : list of Column
        The first column is the scenario name.
    rows : list of list
        One row per scenario, baseline first; ``None`` where a value does not
        apply (e.g. a prey never taken).
    deltas : list of list
        Value minus the baseline's value (``None`` where either is missing).
    percent : list of list
        Relative change against the baseline [%] (``None`` where the baseline is 0).
    """

    columns: list[Column]
    rows: list[list]
    deltas: list[list]
    percent: list[list]

    @property
    def keys(self) -> list[str]:
        return [c.key for c in self.columns]


def entry_reserves(result: ScenarioResult, prey: str, condition: str) -> float | None:
    """Reserve fraction below which a prey is taken (the top of its highest run).

    As reserves fall from full, this is where the prey enters the diet; ``None``
    when it is never taken.
    """
    runs = [r for r in result.attack_ranges() if r.prey == prey and r.condition == condition]
    return max(r.high_fraction for r in runs) if runs else None


def _groups(result: StudyResult) -> list[str]:
    seen: list[str] = []
    for s in result.scenarios:
        for p in s.prey:
            if p.group not in seen:
                seen.append(p.group)
    return seen


def comparison_table(result: StudyResult) -> ComparisonTable:
    """Build the scenario comparison (MODEL.md section 5 and 7 quantities)."""
    groups = _groups(result)
    unwanted = [g for g in groups if g.lower() not in WILD_GROUPS]
    prey_names: list[str] = []
    for s in result.scenarios:
        prey_names += [n for n in s.prey_names if n not in prey_names]
    breeding = any(s.kills is not None for s in result.scenarios)
    season = any(s.season_kills is not None for s in result.scenarios)

    cols = [Column("scenario", "scenario", "text")]
    # the released cohort first: what the animals actually released will do
    cols += [Column(f"cohort_kills_{g}", f"{g} kills by released animals in horizon", "count")
             for g in groups]
    cols += [Column("cohort_alive_at_horizon", "released alive at horizon", "probability"),
             Column("cohort_median_survival_days", "median survival, days", "count")]
    if breeding:
        cols.append(Column("cohort_breeding_events", "breeding events in horizon", "count"))
    cols.append(Column("fitness_at_start", "fitness at start", "probability"))
    if breeding:
        cols += [Column(f"kills_per_predator_per_year_{g}",
                        f"{g} kills per place kept filled per year", "count") for g in groups]
        cols += [Column(f"kills_per_year_population_{g}",
                        f"{g} kills a year, places kept filled", "count") for g in unwanted]
        cols.append(Column("share_of_time_injured", "time injured", "fraction"))
    if season:
        cols += [Column(f"kills_per_predator_per_season_{g}", f"{g} kills per predator per season",
                        "count") for g in groups]
        cols += [Column(f"kills_per_season_population_{g}", f"{g} kills, population, per season",
                        "count") for g in unwanted]
        cols.append(Column("survival_to_end", "survives season", "probability"))
    for cond in CONDITIONS:
        cols += [Column(f"{cond}_takes_below_fraction_{n}", f"{cond} takes {n} below", "fraction")
                 for n in prey_names]

    rows = []
    for s in result.scenarios:
        c = s.cohort
        row: list = [s.name]
        row += [c.kills_by_group.get(g, 0.0) if c else None for g in groups]
        row += [c.alive_at_horizon if c else None,
                None if c is None or c.median_survival_days is None
                else float(c.median_survival_days)]
        if breeding:
            row.append(c.breeding_events if c else None)
        row.append(s.fitness_at_start)
        if breeding:
            k = s.kills
            row += [k.kills_per_predator_per_year_by_group.get(g, 0.0) if k else None
                    for g in groups]
            row += [k.kills_per_year_population_by_group.get(g, 0.0) if k else None
                    for g in unwanted]
            row.append(k.share_of_time_injured if k else None)
        if season:
            z = s.season_kills
            row += [z.expected_kills_by_group.get(g, 0.0) if z else None for g in groups]
            row += [z.expected_kills_population_by_group.get(g, 0.0) if z else None
                    for g in unwanted]
            row.append(z.survival_to_end if z else None)
        for cond in CONDITIONS:
            row += [entry_reserves(s, n, cond) if n in s.prey_names else None
                    for n in prey_names]
        rows.append(row)

    base = rows[0]
    deltas, percent = [], []
    for row in rows:
        d, p = [None], [None]
        for v, b in zip(row[1:], base[1:], strict=True):
            if isinstance(v, float) and isinstance(b, float):
                d.append(v - b)
                p.append(100.0 * (v - b) / b if b != 0 else None)
            else:
                d.append(None)
                p.append(None)
        deltas.append(d)
        percent.append(p)
    return ComparisonTable(cols, rows, deltas, percent)
