"""Plain-text summaries for the terminal."""

from __future__ import annotations

from riskdiet.analysis.results import CONDITIONS, ScenarioResult, StudyResult
from riskdiet.analysis.wording import (
    amount,
    change,
    number,
    percent_change,
    probability,
    technical,
    value,
)
from riskdiet.analysis.wording import percent as _percent


def percent(fraction: float) -> str:
    """A reserve fraction as a whole percentage, e.g. ``35 %``."""
    return _percent(fraction)


def ranges_text(result: ScenarioResult, prey: str, condition: str) -> str:
    """Where one prey is attacked, e.g. ``1-35 % (1-35 MJ)``, or ``never``."""
    runs = [r for r in result.attack_ranges() if r.prey == prey and r.condition == condition]
    if not runs:
        return "never"
    parts = [f"{percent(r.low_fraction)[:-2]}–{percent(r.high_fraction)} "
             f"({value(r.low_mj, 3)}–{value(r.high_mj, 3)} MJ)" for r in runs]
    return ", ".join(parts)


def scenario_summary(result: ScenarioResult) -> str:
    """A few lines on one scenario: fitness, attack ranges, hunting-skill value."""
    p = result.predator
    what = ("reaching breeding condition" if result.currency == "breeding"
            else f"ending the {p.season_days}-day season alive with reserves ≥ "
            f"{percent(p.season_reserve_threshold)}")
    lines = [f"Scenario: {result.name}"]
    if result.viability:
        lines.append(f"  WARNING: {result.viability}")
    lines += cohort_lines(result)
    lines += long_run_lines(result)
    lines.append(f"  Chance of {what}, from {percent(p.start_reserves)} reserves, healthy: "
                 f"{probability(result.fitness_at_start, 3)}")
    width = max(len(n) for n in result.prey_names)
    for cond in CONDITIONS:
        article = "an" if cond[0] in "aeiou" else "a"
        lines.append(f"  Prey attacked by {article} {cond} animal, by reserves (fraction of "
                     f"{value(p.reserve_capacity_mj)} MJ):")
        for name in result.prey_names:
            lines.append(f"    {name:<{width}}  {ranges_text(result, name, cond)}")
    el = result.elasticity
    lines.append(f"  Value of hunting ability: each 0.1 more changes that chance by "
                 f"{change(0.1 * result.marginal_hunting_ability, 'probability')}"
                 + (f" (elasticity {number(el, 2, floor=0.01)})" if el is not None
                               else " (elasticity — : undefined where the chance is 0)"))
    lines.append(f"  Solver: {result.linear_solver}, {result.iterations} round(s), "
                 f"Bellman residual {technical(result.residual)} (relative to the values)")
    lines.append("  " + grid_check_line(result))
    return "\n".join(lines)


def cohort_lines(result: ScenarioResult) -> list[str]:
    """The released cohort's numbers: what the animals released will do."""
    c = result.cohort
    if c is None:
        return []
    horizon = (f"the {c.horizon_days}-day season" if result.currency == "season"
               else f"the first {c.horizon_days} days")
    lines = [f"  Released animals ({c.animals}, no replacement), within {horizon}:"]
    width = max(len(n) for n in c.kills)
    kills = [f"    {name:<{width}}  {amount(v)}" for name, v in c.kills.items()]
    groups = ", ".join(f"{g} {amount(v)}" for g, v in c.kills_by_group.items())
    median = ("over the horizon" if c.median_survival_days is None
              else f"{c.median_survival_days} days")
    lines.append("    expected kills by prey:")
    lines += ["  " + k for k in kills]
    lines.append(f"    by group: {groups}")
    lines.append(f"    alive at the end: {_percent(c.alive_at_horizon)} of animals "
                 f"({amount(c.survivors)} expected survivors); median survival {median}")
    if c.breeding_events is not None:
        lines.append(f"    expected breeding events: {amount(c.breeding_events)}")
    return lines


def long_run_lines(result: ScenarioResult) -> list[str]:
    """Long-run kills: places kept filled, every death replaced at once."""
    k = result.kills
    if k is None:
        return []
    groups = ", ".join(f"{g} {amount(v)}" for g, v in k.kills_per_year_population_by_group.items())
    line = [f"  Long-run kills a year by {result.predator.population} places kept filled "
            f"(every death replaced): {groups}"]
    if k.lifetime_note:
        line.append(f"    (expected lifetime: — ; {k.lifetime_note})")
    return line


def grid_check_line(result: ScenarioResult) -> str:
    """One line on whether the answer still depends on the grid (MODEL.md section 8)."""
    g = result.grid_check
    if g is None:
        return "Grid check: not made"
    if g.problem:
        return f"Grid check: {g.problem}"
    if g.warning:
        return f"Grid check: WARNING. {g.warning}"
    change = g.fitness_relative_change
    text = "—" if change is None else percent_change(change, decimals=2)
    return (f"Grid check: at {g.levels_compared[0]} instead of {g.levels_compared[1]} energy "
            f"levels fitness changes by {text} and no kill estimate by more than 5 %: "
            "fine enough")


def solve_summary(result: StudyResult) -> str:
    """Summary of every scenario of a study, the verdict on the study's goal first."""
    from riskdiet.analysis.verdict import verdict

    v = verdict(result)
    head = [f"{result.study.name} (riskdiet {result.riskdiet_version})",
            f"Input: {result.study.source}  SHA-256 {result.study.source_sha256}", "",
            f"Verdict: {v.summary}"]
    head += [f"  {v.sentences[s.name]}" for s in result.scenarios]
    head += ["", ""]
    return "\n".join(head) + "\n\n".join(scenario_summary(s) for s in result.scenarios)


def format_value(value, kind: str) -> str:
    """One comparison cell for people (the number policy of :mod:`riskdiet.analysis.wording`):
    probabilities to 3 places, fractions as %, counts to 3 significant figures."""
    if value is None:
        return "—"
    if kind == "text":
        return str(value)
    if kind == "fraction":
        return _percent(value)
    if kind == "probability":
        return probability(value, 3)
    return number(value, floor=0.01)


def format_delta(delta, pct, kind: str) -> str:
    """A signed change against the baseline, e.g. ``+0.12 (+15 %)``; ``0`` when it
    rounds to nothing."""
    if delta is None:
        return ""
    text = change(delta, "count" if kind not in ("fraction", "probability") else kind)
    if kind == "fraction" or text in ("0", "0 pts") or text.startswith("<") or pct is None:
        return text
    return f"{text} ({percent_change(pct / 100)})"


def comparison_renderables(table, width: int = 100) -> list:
    """The scenario comparison as rich Tables (rows = scenarios).

    A table wider than ``width`` characters is printed in column blocks, each
    repeating the scenario column, the way wide data frames are printed.
    """
    from rich.table import Table

    cells = []
    for r, row in enumerate(table.rows):
        line = []
        for c, col in enumerate(table.columns):
            text = format_value(row[c], col.kind)
            if r > 0 and c > 0:
                change = format_delta(table.deltas[r][c], table.percent[r][c], col.kind)
                if change:
                    text += "\n" + change
            line.append(text)
        cells.append(line)
    need = []
    for c, col in enumerate(table.columns):
        longest_word = max(len(w) for w in col.label.split())
        longest_cell = max(len(x) for line in cells for x in line[c].split("\n"))
        need.append(max(longest_word, longest_cell, min(len(col.label), 14)) + 3)
    blocks, current, used = [], [], need[0]
    for c in range(1, len(table.columns)):
        if current and used + need[c] > width:
            blocks.append(current)
            current, used = [], need[0]
        current.append(c)
        used += need[c]
    if current:
        blocks.append(current)
    out = []
    for b, block in enumerate(blocks):
        title = ("Scenarios compared (under each value: change against the baseline)"
                 if b == 0 else None)
        t = Table(title=title, show_lines=True)
        for c in [0, *block]:
            col = table.columns[c]
            t.add_column(col.label, justify="left" if c == 0 else "right",
                         min_width=need[c] - 3)
        for line in cells:
            t.add_row(*[line[c] for c in [0, *block]])
        out.append(t)
    return out


def classic_summary(result: StudyResult) -> str:
    """The classic prey model of every scenario as text."""
    blocks = []
    for s in result.scenarios:
        c = s.classic
        lines = [f"Scenario: {s.name}", "  rank  prey                      profitability (MJ/day)"]
        order = sorted(range(len(c.names)), key=lambda i: int(c.rank[i]))
        for i in order:
            prof = float(c.profitability_mj_per_day[i])
            prof_text = "no handling time" if prof == float("inf") else number(prof)
            lines.append(f"  {int(c.rank[i]):>4}  {c.names[i]:<24}  {prof_text}")
        lines.append(f"  Rate-maximising diet (Charnov 1976): "
                     f"{', '.join(c.rate_maximizing_diet) or 'none'}; rate "
                     f"{number(c.rate_mj_per_day)} MJ/day")
        for name, thr in c.switching_threshold_per_day.items():
            lines.append(f"    {name} stays out while the better prey are met more than "
                         + ("(never: abundance of better prey alone cannot exclude it)"
                            if thr == float("inf") else f"{number(thr)} times a day"))
        if c.risk_adjusted_diet is None:
            lines.append("  Risk-adjusted diet (Gilliam's rule): none")
        else:
            lines.append("  Risk-adjusted diet (Gilliam's rule, Werner & Gilliam 1984): "
                         f"{', '.join(c.risk_adjusted_diet)} ({c.risk_adjusted_method})")
        lines.append(f"  {c.statement}")
        blocks.append("\n".join(lines))
    return "\n\n".join(blocks)
