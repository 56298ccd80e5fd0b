"""Content of the brief, section by section (flowables; the document is in brief.py).

Every number printed here is read from the results (:class:`StudyResult`,
:func:`riskdiet.analysis.compare.comparison_table`); nothing is recomputed.
"""

from __future__ import annotations

import io
from collections.abc import Callable

from reportlab.platypus import CondPageBreak, Image, KeepTogether, Paragraph, Spacer

from riskdiet.analysis.results import CONDITIONS, ScenarioResult, StudyResult
from riskdiet.analysis.wording import count, fixed, number, probability, value
from riskdiet.fields import UNIT_WORDS, field_specs, words
from riskdiet.model import Predator, Prey, Study
from riskdiet.report.figure_style import BriefFigure, png_bytes
from riskdiet.report.layout import Column, Styles, esc, split_wide
from riskdiet.report.text import format_delta, format_value

SECTIONS = (
    "Summary",
    "Inputs",
    "Classic prey model",
    "Decisions by reserves",
    "Predicted kills",
    "Assumptions and cautions",
    "Technical appendix",
)
"""Section headings, in order (numbered 1-7 in the brief; a study that asks for a map
gets a "Maps" section after "Predicted kills", see :func:`section_titles`)."""

MAPS = "Maps"


def section_titles(result: StudyResult) -> list[str]:
    """The brief's section headings for this result, in order."""
    titles = list(SECTIONS)
    if result.map is not None:
        titles.insert(titles.index("Predicted kills") + 1, MAPS)
    return titles

REFERENCES = (
    "Charnov, E. L. (1976) Optimal foraging: attack strategy of a mantid. "
    "American Naturalist 110: 141–151.",
    "Holling, C. S. (1959) Some characteristics of simple types of predation and parasitism. "
    "Canadian Entomologist 91: 385–398.",
    "Houston, A. I. & McNamara, J. M. (1999) Models of Adaptive Behaviour: An Approach Based "
    "on State. Cambridge University Press, Cambridge.",
    "Kleiber, M. (1961) The Fire of Life: An Introduction to Animal Energetics. Wiley, "
    "New York.",
    "Lande, R. (1979) Quantitative genetic analysis of multivariate evolution, applied to "
    "brain:body size allometry. Evolution 33: 402–416.",
    "Mangel, M. & Clark, C. W. (1988) Dynamic Modeling in Behavioral Ecology. Princeton "
    "University Press, Princeton.",
    "Werner, E. E. & Gilliam, J. F. (1984) The ontogenetic niche and species interactions in "
    "size-structured populations. Annual Review of Ecology and Systematics 15: 393–425.",
)

ASSUMPTIONS = (
    "The predator attacks at most one prey animal a day: of the prey it meets that day it "
    "goes for the one that serves it best, or for none.",
    "Encounters are random and independent: each prey type is met on a given day with the "
    "chance that follows from its expected encounters per day (a Poisson process).",
    "Every value in the input is fixed: no seasons within the year, no change in prey "
    "numbers, no year-to-year variation except what a scenario changes.",
    "The predator behaves as if it knew the values in the input and chose the best attack "
    "for its reserves and condition; it does not learn, and it does not make mistakes.",
    "It hunts alone: no pack hunting, no sharing of kills, no competition with other "
    "predators or scavengers for a carcass.",
    "Prey are not used up: kills do not lower the encounter rates that follow (no prey "
    "depletion), and prey do not change their behaviour in response.",
    "Reserves are counted in equal steps of energy; an injured animal recovers at a fixed "
    "daily chance.",
)

CANNOT_SAY = (
    "what one particular animal will do on one particular day;",
    "how prey populations will respond to the predicted kills;",
    "anything about prey types, places or conditions that are not in the input;",
    "whether the input values are right: every result follows from them, and a different "
    "value may change the answer.",
)

CAUTIONS = (
    "The results are a decision aid for people who know the site. They describe what an "
    "animal that behaves as the model assumes would do on average; they are not a forecast "
    "of what individual animals will do.",
    "The values in the input must come from local data and local expertise. The example "
    "values shipped with riskdiet are invented and must never be used for a decision.",
    "Any reintroduction, translocation, cull or livestock-protection measure must follow the "
    "wildlife law that applies where it takes place, the requirements of the wildlife "
    "authority, and the judgement of licensed professionals.",
    "Rules on animal welfare and public safety come first, whatever this brief suggests.",
)

NUM = Column(right=True, max_share=0.22)
"""A numeric column: right-aligned, its header wraps beyond a fifth of the page."""


def _num(x, digits: int = 3) -> str:
    """A number for a table (:func:`riskdiet.analysis.wording.number`): a dash for none,
    ∞ for unbounded, ``digits`` significant figures, ``< 0.001`` below."""
    return number(x, sig=digits)


def _count(x) -> str:
    """A predicted number of kills: three significant figures, ``< 0.01`` below."""
    return count(x)


def _unit(spec) -> str:
    return UNIT_WORDS.get(spec.unit, spec.unit)


def attack_percent(result: ScenarioResult, prey: str, condition: str) -> str:
    """Where one prey is attacked, as shares of capacity, e.g. ``1–35 %, 56–63 %``."""
    runs = [r for r in result.attack_ranges() if r.prey == prey and r.condition == condition]
    if prey not in result.prey_names:
        return "—"
    if not runs:
        return "never"
    return ", ".join(f"{fixed(100 * r.low_fraction, 0)} %" if r.low_fraction == r.high_fraction
                     else f"{fixed(100 * r.low_fraction, 0)}–{fixed(100 * r.high_fraction, 0)} %"
                     for r in runs)


def _list(names) -> str:
    names = list(names)
    if not names:
        return "none"
    if len(names) == 1:
        return names[0]
    return ", ".join(names[:-1]) + " and " + names[-1]


def grid_summary(result: StudyResult) -> str:
    """One sentence for page 1: is the grid fine enough for every scenario?"""
    checks = [(s.name, s.grid_check) for s in result.scenarios if s.grid_check is not None]
    flagged = [name for name, g in checks if g.warning]
    failed = [name for name, g in checks if g.problem]
    if flagged:
        return ("Accuracy: the numbers of " + _list(flagged) + " still depend on the number of "
                "energy levels (see the grid check in the technical appendix); treat them as "
                "rough until the study is solved with a larger number of energy levels.")
    levels = {g.levels_compared for _, g in checks if not g.problem}
    pair = (f" between {next(iter(levels))[0]} and {next(iter(levels))[1]} energy levels"
            if len(levels) == 1 else "")
    text = ("Accuracy: solved again on a second grid" + pair + ", no scenario's fitness or "
            "kill estimates change beyond the grid check's limits (5 %; see the technical "
            "appendix): the grid is fine enough.")
    if failed:
        text += " The check could not be made for " + _list(failed) + " (see the appendix)."
    return text


class Builder:
    """Collects the flowables of the brief; one method per section.

    Parameters
    ----------
    result : StudyResult
        Solved study.
    styles : Styles
        Paragraph styles.
    width, height : float
        Text frame [pt].
    figures : list of BriefFigure
        Figures to draw, in order (see :func:`riskdiet.report.figures.brief_figures`).
    """

    def __init__(self, result: StudyResult, styles: Styles, width: float, height: float,
                 figures: list[BriefFigure]):
        self.result = result
        self.study: Study = result.study
        self.s = styles
        self.width = width
        self.height = height
        self.story: list = []
        self.figures = {f.key: f for f in figures}
        self.figure_order = [f.key for f in figures]
        self.drawn: list[str] = []
        self.titles = section_titles(result)
        self.uncertainty = None  # an UncertaintyResult when the study has ranges (brief.py)

    # --- small helpers -----------------------------------------------------------------------
    def para(self, text: str, style=None) -> None:
        self.story.append(Paragraph(text, style or self.s.body))

    def number(self, title: str) -> int:
        """Section number of a heading in this brief."""
        return self.titles.index(title) + 1

    def heading(self, title: str) -> None:
        self.story.append(CondPageBreak(150))
        self.para(f"{self.number(title)}. {esc(title)}", self.s.h1)
        # the PDF's bookmarks list every section (riskdiet.report.brief._BriefDocument)
        self.story[-1].outline_title = f"{self.number(title)}. {title}"
        self.story[-1].outline_level = 0

    def sub(self, text: str) -> None:
        # room for the heading and a few lines; a table after it may then split normally
        # (not straight after a section heading, which already keeps with what follows)
        last = self.story[-1] if self.story else None
        if not (isinstance(last, Paragraph) and last.style is self.s.h1):
            self.story.append(CondPageBreak(90))
        self.para(esc(text), self.s.h2)

    def bullets(self, lines, style=None) -> None:
        for line in lines:
            self.story.append(Paragraph(line, style or self.s.bullet, bulletText="•"))

    def tables(self, rows, columns, keep: int = 1, note: str | None = None) -> None:
        parts = split_wide(rows, columns, self.s, self.width, keep)
        last = self.story[-1] if self.story else None
        lead = []
        if isinstance(last, Paragraph) and last.style is self.s.h2:
            lead = [self.story.pop()]  # a sub-heading moves with its table, never alone
        for i, table in enumerate(parts):
            if i:
                self.story.append(Spacer(1, 5))
            # a short part of a split table moves whole to the next page rather than break
            if len(parts) > 1 and len(rows) <= 25:
                self.story.append(KeepTogether([*lead, table]))
            else:
                self.story.extend([*lead, table])
            lead = []
        if note:
            self.para(note, self.s.small)
        self.story.append(Spacer(1, 6))

    def figure(self, key: str, lead: list | None = None) -> None:
        """Embed one figure at the frame width (smaller when it would not fit the frame).

        ``lead`` flowables (a heading) are kept on the same page as the figure.
        """
        fig = self.figures.get(key)
        if fig is None:
            return
        w_in, h_in = fig.figure.get_size_inches()
        scale = min(self.width / (w_in * 72), (self.height - 60) / (h_in * 72))
        image = Image(io.BytesIO(png_bytes(fig.figure)), width=w_in * 72 * scale,
                      height=h_in * 72 * scale)
        number = self.figure_order.index(key) + 1
        self.drawn.append(key)
        self.story.append(KeepTogether([
            *(lead or []), image,
            Paragraph(f"Figure {number}. {esc(fig.caption)}", self.s.caption)]))

    def scenarios_in(self, test: Callable[[ScenarioResult], bool]) -> list[ScenarioResult]:
        return [s for s in self.result.scenarios if test(s)]

    def changes_text(self, name: str) -> str:
        sc = self.study.scenario(name)
        if not sc.changes:
            return "the inputs as given"
        return "; ".join(c.in_words() for c in sc.changes)

    # --- 2. summary --------------------------------------------------------------------------
    def summary(self) -> None:
        self.heading("Summary")
        self.para("What the model predicts for each scenario, in plain words, then the key "
                  "numbers side by side. The first numbers are those of the animals actually "
                  "released, none replaced; the long-run rates further on keep every place "
                  "filled (every death replaced at once). Section "
                  f"{self.number('Inputs')} shows the inputs behind them and section "
                  f"{self.number('Assumptions and cautions')} what the model assumes.")
        self.para(esc(grid_summary(self.result)))
        self.verdict()
        for s in self.result.scenarios:
            self.story.append(CondPageBreak(90))
            head = [Paragraph(esc(f"Scenario: {s.name}"), self.s.h2),
                    Paragraph(f"<i>Changes: {esc(self.changes_text(s.name))}.</i>", self.s.small)]
            lines = [Paragraph(esc(line), self.s.bullet, bulletText="•") for line in s.findings]
            self.story.append(KeepTogether(head + lines[:2]))
            self.story.extend(lines[2:])
        self.sub("Released animals")
        self.cohort_table(self.result.scenarios)
        self.sub("Key numbers")
        self.comparison()

    def verdict(self) -> None:
        """The answer first: the scenarios ranked on the study's goal, each in one sentence.

        No conditional page break here, so page 1 always starts with it.
        """
        from riskdiet.analysis.verdict import verdict

        v = verdict(self.result)
        self.para("Verdict", self.s.h2)
        self.para(f"<b>{esc(v.summary)}</b>")
        u = self.uncertainty
        lines = []
        for s in self.result.scenarios:
            change = "" if not self.study.scenario(s.name).changes else (
                f" <i>(Changes: {esc(self.changes_text(s.name))}.)</i>")
            sure = ""
            if u is not None:
                from riskdiet.report.uncertainty_text import verdict_how_sure

                sure = " " + esc(verdict_how_sure(u, s.name, list(v.groups)))
            lines.append(esc(v.sentences[s.name]) + sure + change)
        self.bullets(lines)

    def cohort_table(self, scenarios) -> None:
        """The released cohort per scenario: kills by group, survival, breeding."""
        rows = [["", *(esc(s.name) for s in scenarios)]]
        cohorts = [s.cohort for s in scenarios]
        groups: list[str] = []
        for c in cohorts:
            groups += [g for g in c.kills_by_group if g not in groups]
        rows.append(["animals released"] + [_num(c.animals) for c in cohorts])
        rows.append(["horizon [days]"] + [_num(c.horizon_days) for c in cohorts])
        rows += [[f"{esc(g)} prey killed in the horizon"]
                 + [_count(c.kills_by_group.get(g, 0.0)) for c in cohorts] for g in groups]
        rows.append(["alive at the horizon [share of animals]"]
                    + [format_value(c.alive_at_horizon, "fraction") for c in cohorts])
        rows.append(["expected survivors"] + [_count(c.survivors) for c in cohorts])
        rows.append(["median survival [days]"]
                    + [_num(c.median_survival_days) if c.median_survival_days is not None
                       else f"over {c.horizon_days}" for c in cohorts])
        if any(c.breeding_events is not None for c in cohorts):
            rows.append(["expected breeding events"] + [_count(c.breeding_events)
                                                        for c in cohorts])
        self.tables(rows, [Column(max_share=0.35)] + [NUM] * len(scenarios), note=(
            "Expected numbers for the animals released on day 0, with none replaced; a dash "
            "where a number does not apply (no breeding events in the season currency)."))

    def comparison(self) -> None:
        from riskdiet.analysis.compare import comparison_table

        table = comparison_table(self.result)
        cols = table.columns
        scen = [row[0] for row in table.rows]

        def cell(r: int, c: int) -> str:
            kind = cols[c].kind
            text = esc(format_value(table.rows[r][c], kind))
            delta = table.deltas[r][c]
            if r > 0 and delta is not None and abs(delta) > 5e-4 * max(1.0, abs(
                    table.rows[0][c] or 0.0)):
                change = format_delta(delta, table.percent[r][c], kind)
                if change:
                    text += f'<br/><font size="6.5" color="#555555">{esc(change)}</font>'
            return text

        if len(cols) - 1 > len(scen):
            rows = [["<b>scenario</b>"] + [esc(n) for n in scen]]
            rows += [[esc(col.label)] + [cell(r, c) for r in range(len(scen))]
                     for c, col in enumerate(cols) if c > 0]
            layout = [Column(max_share=0.34)] + [NUM] * len(scen)
        else:
            rows = [[esc(col.label) for col in cols]]
            rows += [[esc(scen[r])] + [cell(r, c) for c in range(1, len(cols))]
                     for r in range(len(scen))]
            layout = [Column(max_share=0.3)] + [NUM] * (len(cols) - 1)
        self.tables(rows, layout, note=(
            "Under each value: the change against the baseline, where there is one "
            "(percentage points for shares of capacity or of days). “fitness at start”: the "
            "chance of the currency's goal for a healthy animal arriving with the start "
            "reserves. “healthy takes X below”: the reserves, as a share of capacity, below "
            "which a healthy animal attacks X when it meets it (the top of the highest range "
            "in section 4; a dash means never). Kills are per year in the breeding currency "
            "and per season in the season currency."))

    # --- 3. inputs ---------------------------------------------------------------------------
    def inputs(self) -> None:
        self.heading("Inputs")
        p = self.study.predator
        self.para("The values below are those of the input file; the notes column carries the "
                  "sources the user gave. Values that riskdiet derived rather than read are "
                  "marked <i>estimated</i> or <i>derived</i>.")
        self.sub(f"Predator: {p.name}")
        rows = [["input", "value", "unit", "note"]]
        for name, spec in field_specs(Predator).items():
            given = getattr(p, name)
            note = self.study.notes.get(name, "")
            if name == "daily_cost_mj" and p.daily_cost_is_estimated:
                shown = f"{value(p.effective_daily_cost_mj, 3)} (estimated)"
                note = ("Estimated from body mass: activity multiplier × Kleiber's "
                        "70·M^0.75 kcal/day (Kleiber 1961). " + note).strip()
            elif isinstance(given, str):
                shown = given
            else:
                shown = value(given)
            rows.append([f"{esc(words(name))}<br/><font size=\"6.5\" color=\"#444444\">"
                         f"{esc(spec.description)}</font>", esc(shown), esc(_unit(spec)),
                         esc(note)])
        self.tables(rows, [Column(max_share=0.4), Column(max_share=0.16), Column(max_share=0.13),
                           Column(max_share=0.36)])

        self.sub("Prey types")
        prey = self.study.prey
        specs = field_specs(Prey)
        rows = [["input [unit]"] + [f"<b>{esc(y.name)}</b>" for y in prey]]
        for name, spec in specs.items():
            if name in ("name", "note"):
                continue
            line = [f"{esc(words(name))} [{esc(_unit(spec))}]"]
            for y in prey:
                line.append(esc(self.prey_value(y, name)))
            rows.append(line)
        rows.append(["risky (can injure or kill) [derived]"]
                    + ["yes" if y.risky else "no" for y in prey])
        self.tables(rows, [Column(max_share=0.3)] + [NUM] * len(prey),
                    note="“derived”: encounters per day computed as the predator's search area "
                         "per day × the density. “default”: skill dependence not given, so "
                         "taken as yes exactly for risky prey.")
        noted = [y for y in prey if y.note]
        if noted:
            self.sub("Sources and notes on the prey values")
            rows = [["prey", "note"]] + [[esc(y.name), esc(y.note)] for y in noted]
            self.tables(rows, [Column(max_share=0.3), Column(max_share=0.8)])

        self.sub("Scenarios")
        rows = [["scenario", "changes to the baseline", "note"]]
        for sc in self.study.scenarios:
            changes = "<br/>".join(esc(c.in_words()) for c in sc.changes) or "—"
            rows.append([esc(sc.name), changes, esc(sc.note)])
        self.tables(rows, [Column(max_share=0.25), Column(max_share=0.45),
                           Column(max_share=0.45)])

        self.sub("Checks on the inputs")
        if self.study.notices:
            self.para("These values are allowed but unusual; check them:")
            self.bullets([esc(str(n)) for n in self.study.notices])
        else:
            self.para("riskdiet found no unusual values in the inputs.")

    def prey_value(self, y: Prey, name: str) -> str:
        given = getattr(y, name)
        if name == "encounters_per_day" and given is None:
            try:
                return f"{value(y.encounters(self.study.predator), 3)} (derived)"
            except ValueError:
                return "—"
        if name == "skill_dependent" and given is None:
            return ("yes" if y.is_skill_dependent else "no") + " (default)"
        if isinstance(given, str):
            return given
        return value(given)

    # --- 4. classic --------------------------------------------------------------------------
    def classic(self) -> None:
        self.heading("Classic prey model")
        self.para(
            "The classic model describes a well-fed forager that only maximises its rate of "
            "energy intake and has no reserves to worry about. Prey types are ranked by "
            "profitability (energy per capture over handling days); the rate-maximising diet "
            "adds prey in that order while each one's profitability is at least the rate of "
            "the diet so far (Charnov 1976), with the rate from Holling's (1959) disc "
            "equation. The risk-adjusted diet weighs the predator's own mortality against "
            "its net energy gain and keeps the diet with the lowest mortality per unit of "
            "net gain (Gilliam's rule; Werner &amp; Gilliam 1984). Where the classic model "
            "and the state-dependent model of section 4 disagree, the difference shows how "
            "much reserves and injury change the picture.")
        base = self.result.scenarios[0]
        self.sub(f"Profitability ranking ({base.name})")
        self.ranking(base)
        for s in self.result.scenarios[1:]:
            c, b = s.classic, base.classic
            if c is not None and b is not None and (
                    list(c.rank) != list(b.rank) or c.names != b.names
                    or list(c.profitability_mj_per_day) != list(b.profitability_mj_per_day)):
                self.sub(f"Profitability ranking ({s.name})")
                self.ranking(s)
        self.sub("Diets by scenario")
        rows = [["scenario", "rate-maximising diet", "intake rate [MJ/day]",
                 "risk-adjusted diet", "mortality [1/day]", "net gain [MJ/day]"]]
        heuristic = []
        for s in self.result.scenarios:
            c = s.classic
            if c is None:
                continue
            risk = "none meets the daily cost" if c.risk_adjusted_diet is None else (
                ", ".join(c.risk_adjusted_diet))
            rows.append([esc(s.name), esc(", ".join(c.rate_maximizing_diet)),
                         _num(c.rate_mj_per_day), esc(risk),
                         _num(c.risk_adjusted_mortality_per_day),
                         _num(c.risk_adjusted_net_gain_mj_per_day)])
            if c.risk_adjusted_method != "exact enumeration":
                heuristic.append(c.risk_adjusted_method)
        note = "Diets list their prey in profitability order."
        if heuristic:
            note += (" With more than 16 prey types the risk-adjusted diet is found by "
                     f"{esc(heuristic[0])}; it is not guaranteed to be the best diet.")
        self.tables(rows, [Column(max_share=0.2), Column(max_share=0.3), NUM,
                           Column(max_share=0.3), NUM, NUM],
                    note=note)
        self.sub("In words")
        self.bullets([f"<b>{esc(s.name)}</b>: {esc(s.classic.statement)}"
                      for s in self.result.scenarios if s.classic is not None])

    def ranking(self, s: ScenarioResult) -> None:
        c = s.classic
        if c is None:
            self.para("The classic model was not computed for this scenario.")
            return
        rows = [["rank", "prey", "profitability [MJ/day]", "in rate-maximising diet",
                 "in risk-adjusted diet", "switching threshold [1/day]"]]
        order = sorted(range(len(c.names)), key=lambda i: int(c.rank[i]))
        risk = set(c.risk_adjusted_diet or ())
        for i in order:
            name = c.names[i]
            threshold = c.switching_threshold_per_day.get(name)
            rows.append([str(int(c.rank[i])), esc(name), _num(c.profitability_mj_per_day[i]),
                         "yes" if name in c.rate_maximizing_diet else "no",
                         ("yes" if name in risk else "no") if c.risk_adjusted_diet is not None
                         else "—",
                         _num(threshold) if threshold is not None else "—"])
        self.tables(rows, [NUM, Column(max_share=0.3), NUM,
                           Column(), Column(), NUM],
                    note="Switching threshold: for a prey left out of the rate-maximising "
                         "diet, the total encounter rate of all better-ranked prey above which "
                         "it stays left out (∞: no abundance of better prey alone excludes "
                         "it). ∞ profitability: no handling time.")

    # --- 5. decisions ------------------------------------------------------------------------
    def decisions(self) -> None:
        self.heading("Decisions by reserves")
        self.para(
            "The state-dependent model (Houston &amp; McNamara 1999; Mangel &amp; Clark 1988) "
            "finds, for every level of reserves and for a healthy and an injured animal, "
            "which prey types are worth attacking when met, so as to maximise the chance "
            "named in the title of the lower panel. Bars show where each prey type "
            "is attacked; a gap means it is ignored at those reserves. The dashed vertical "
            "line marks the reserves of a newly arrived animal.")
        self.sub("Reserves at which each prey type is attacked")
        scenarios = self.result.scenarios
        capacities = sorted({s.predator.reserve_capacity_mj for s in scenarios})
        one = len(capacities) == 1
        rows = [["prey", *(esc(s.name) if one else
                           f"{esc(s.name)} (R = {value(s.predator.reserve_capacity_mj)} MJ)"
                           for s in scenarios)]]
        for cond in CONDITIONS:
            rows.append([f"<b>{cond}</b>"] + [""] * len(scenarios))
            for n in self.prey_union(list(scenarios)):
                rows.append([esc(n)] + [esc(attack_percent(s, n, cond)) for s in scenarios])
        note = ("Rows are grouped by the condition of the predator. Reserves as a share of "
                f"the capacity R{f' = {value(capacities[0])} MJ' if one else ''}; several ranges "
                "mean the prey is dropped and taken again as reserves rise; “never”: not "
                "attacked at any level.")
        keys = self._decision_keys()
        if keys:
            first, last = (self.figure_order.index(k) + 1 for k in (keys[0], keys[-1]))
            note += (f" Figure {first}" if first == last else f" Figures {first}–{last}") + (
                " draw the same ranges with the fitness at every level.")
        self.tables(rows, [Column(max_share=0.3)] + [Column(max_share=0.3)] * len(scenarios),
                    note=note)
        for key in keys:
            self.figure(key)

    def _decision_keys(self) -> list[str]:
        return [k for k in self.figure_order if "-decisions-" in k]

    # --- 6. kills ----------------------------------------------------------------------------
    def kills(self) -> None:
        self.heading("Predicted kills")
        breeding = self.scenarios_in(lambda s: s.kills is not None)
        season = self.scenarios_in(lambda s: s.season_kills is not None)
        self.sub("The released animals, within the planning horizon")
        self.para("What the animals actually released are expected to kill, with none "
                  "replaced, from release day to the end of the horizon (the season in the "
                  "season currency). These are the numbers to plan with.")
        rows = [["prey (group)", *(esc(s.name) for s in self.result.scenarios)]]
        group_of = {}
        for s in self.result.scenarios:
            group_of.update({p.name: p.group for p in s.prey})
        for n in self.prey_union(list(self.result.scenarios)):
            rows.append([f"{esc(n)} ({esc(group_of[n])})"]
                        + [_count(s.cohort.kills.get(n)) for s in self.result.scenarios])
        self.tables(rows, [Column(max_share=0.35)] + [NUM] * len(self.result.scenarios))
        if breeding:
            self.sub("Long run, places kept filled (every death replaced)")
            self.para(
                f"Kills of predators that all follow the decisions of section "
                f"{self.number('Decisions by reserves')}, in the long run, with every place "
                "kept filled: an animal that dies is replaced at once by a newcomer with the "
                "start reserves, and an animal that breeds continues with the reserves after "
                "breeding. Kills are counted at capture; totals multiply by the number of "
                "places (the population).")
            self.kill_table(breeding, "kills_per_predator_per_year",
                            "kills_per_predator_per_year_by_group", "per predator per year")
            self.kill_table(breeding, "kills_per_year_population",
                            "kills_per_year_population_by_group",
                            "by all places kept filled, per year", population=True)
            self.life_table(breeding)
            for key in self.figure_order:
                if key.endswith("-kills-breeding"):
                    self.figure(key)
        if season:
            self.sub("One season, season currency")
            self.para("Expected kills of a newly arrived animal over one season, counted "
                      "while it is alive, and its chance of lasting the season.")
            rows = [["prey", *(esc(s.name) for s in season)]]
            names = self.prey_union(season)
            for n in names:
                rows.append([f"{esc(n)} (per predator)"]
                            + [_count(s.season_kills.expected_kills.get(n)) for s in season])
            for n in names:
                rows.append([f"{esc(n)} (all predators)"]
                            + [_count(s.season_kills.expected_kills_population.get(n))
                               for s in season])
            rows.append(["survives the season [probability]"]
                        + [probability(s.season_kills.survival_to_end, 3) for s in season])
            rows.append(["ends the season in condition [probability]"]
                        + [probability(s.season_kills.chance_above_threshold, 3) for s in season])
            self.tables(rows, [Column(max_share=0.35)] + [NUM] * len(season))
            for key in self.figure_order:
                if key.endswith("-kills-season") or key.endswith("-season-outlook"):
                    self.figure(key)
        if not breeding and not season:
            self.para("No kill predictions are available for these scenarios.")

    def prey_union(self, scenarios: list[ScenarioResult]) -> list[str]:
        names: list[str] = []
        for s in scenarios:
            names += [n for n in s.prey_names if n not in names]
        return names

    def kill_table(self, scenarios, by_prey: str, by_group: str, words: str,
                   population: bool = False) -> None:
        self.story.append(CondPageBreak(90))
        self.para(f"<b>Predicted kills {esc(words)}</b>", self.s.small)
        rows = [["prey (group)", *(esc(s.name) for s in scenarios)]]
        if population:
            rows.append(["places kept filled (population)"]
                        + [_num(s.predator.population) for s in scenarios])
        group_of = {}
        for s in scenarios:
            group_of.update({p.name: p.group for p in s.prey})
        for n in self.prey_union(scenarios):
            rows.append([f"{esc(n)} ({esc(group_of[n])})"]
                        + [_count(getattr(s.kills, by_prey).get(n)) for s in scenarios])
        groups = list(dict.fromkeys(group_of.values()))
        for g in groups:
            rows.append([f"<b>all {esc(g)} prey</b>"]
                        + [f"<b>{_count(getattr(s.kills, by_group).get(g, 0.0))}</b>"
                           for s in scenarios])
        self.tables(rows, [Column(max_share=0.35)] + [NUM] * len(scenarios))

    def life_table(self, scenarios) -> None:
        self.story.append(CondPageBreak(90))
        self.para("<b>The life of a predator under these decisions</b>", self.s.small)
        rows = [["", *(esc(s.name) for s in scenarios)]]
        ks = [s.kills for s in scenarios]
        lines = [
            ("share of days spent injured", [format_value(k.share_of_time_injured, "fraction")
                                              for k in ks]),
            ("mean reserves [share of capacity]",
             [format_value(k.mean_reserves_fraction, "fraction") for k in ks]),
            ("chance of surviving a day", [probability(k.daily_survival, 4) for k in ks]),
            ("expected lifetime of a newcomer [days]",
             [_num(k.expected_lifetime_days) for k in ks]),
            ("expected breeding events of a newcomer",
             [_num(k.expected_breeding_events) for k in ks]),
            ("chance a newcomer breeds at least once", [probability(k.first_breeding_probability)
                                                        for k in ks]),
        ]
        for cause in ("starvation", "attack", "other"):
            lines.append((f"dies of {cause} before first breeding",
                          [probability(k.death_before_breeding.get(cause, 0.0), 3) for k in ks]))
        rows += [[esc(label), *values] for label, values in lines]
        never = [s.name for s in scenarios if s.kills.lifetime_note]
        self.tables(rows, [Column(max_share=0.35)] + [NUM] * len(scenarios),
                    note="“attack”: killed by prey it attacked; “other”: background and "
                         "injury mortality." + (
                             f" A dash for {esc(_list(never))}: the animal practically never "
                             "dies (its chance of dying before the next breeding event is "
                             "below one in a billion), so a lifetime is unbounded."
                             if never else ""))

    # --- 7. assumptions and cautions ---------------------------------------------------------
    def cautions(self) -> None:
        self.heading("Assumptions and cautions")
        self.sub("What the model assumes")
        self.bullets([esc(a) for a in ASSUMPTIONS])
        self.sub("What it cannot say")
        self.para("The model cannot tell")
        self.bullets([esc(a) for a in CANNOT_SAY])
        self.sub("Cautions")
        self.bullets([esc(a) for a in CAUTIONS])
