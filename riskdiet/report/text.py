"""Plain-text summaries for the terminal."""

from __future__ import annotations

from riskdiet.analysis import CONDITIONS, ScenarioResult, StudyResult


def percent(fraction: float) -> str:
    """A reserve fraction as a whole percentage, e.g. ``35 %``."""
    return f"{100 * fraction:.0f} %"


def ranges_text(result: ScenarioResult, prey: str, condition: str) -> str:
    """Where one prey is attacked, e.g. ``1-35 % (1-35 MJ)``, or ``never``."""
    runs = [r for r in result.attack_ranges() if r.prey == prey and r.condition == condition]
    if not runs:
        return "never"
    parts = [f"{percent(r.low_fraction)[:-2]}–{percent(r.high_fraction)} "
             f"({r.low_mj:.3g}–{r.high_mj:.3g} MJ)" for r in runs]
    return ", ".join(parts)


def scenario_summary(result: ScenarioResult) -> str:
    """A few lines on one scenario: fitness, attack ranges, hunting-skill value."""
    p = result.predator
    what = ("reaching breeding condition" if result.currency == "breeding"
            else f"ending the {p.season_days}-day season alive with reserves ≥ "
            f"{percent(p.season_reserve_threshold)}")
    lines = [
        f"Scenario: {result.name}",
        f"  Chance of {what}, from {percent(p.start_reserves)} reserves, healthy: "
        f"{result.fitness_at_start:.3f}",
    ]
    width = max(len(n) for n in result.prey_names)
    for cond in CONDITIONS:
        lines.append(f"  Prey attacked by {"an" if cond[0] in "aeiou" else "a"} {cond} animal, by reserves (fraction of "
                     f"{p.reserve_capacity_mj:g} MJ):")
        for name in result.prey_names:
            lines.append(f"    {name:<{width}}  {ranges_text(result, name, cond)}")
    el = result.elasticity
    lines.append(f"  Marginal value of hunting ability: {result.marginal_hunting_ability:+.4f} "
                 "per unit" + (f" (elasticity {el:+.3f})" if el == el else ""))
    lines.append(f"  Solver: {result.linear_solver}, {result.iterations} round(s), "
                 f"Bellman residual {result.residual:.1e}")
    return "\n".join(lines)


def solve_summary(result: StudyResult) -> str:
    """Summary of every scenario of a study."""
    head = [f"{result.study.name} (riskdiet {result.riskdiet_version})",
            f"Input: {result.study.source}  SHA-256 {result.study.source_sha256}", "", ""]
    return "\n".join(head) + "\n\n".join(scenario_summary(s) for s in result.scenarios)
