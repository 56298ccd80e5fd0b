"""The PDF brief: a document a wildlife manager can read, defend and attach to a plan.

Layout: A4 (ISO 216, 210 x 297 mm) by default or US letter (8.5 x 11 in), a
running header with the study name, "page X of Y" in the footer, PDF metadata
(title, subject, creator ``riskdiet <version>``). Sections: a title block
(study, date, riskdiet version, input file and its SHA-256), then
:data:`riskdiet.report.sections.SECTIONS` in order.

Reproducibility: the same study file, date and paper size give the same PDF
byte for byte. reportlab runs in invariant mode (no creation time, fixed
document id), figures are PNG files rendered without time stamps, and the date
printed on the brief is chosen, in this order, from the ``date`` argument
(``--date``), the study's ``report_date`` setting, and the modification date
(UTC) of the input file.
"""

from __future__ import annotations

import datetime as dt
import io
import os
import re
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import BaseDocTemplate, Frame, PageTemplate, Spacer

from riskdiet.analysis.results import StudyResult
from riskdiet.analysis.wording import percent, percent_change, technical
from riskdiet.core.solver import DIRECT_LIMIT, MAX_POLICY_ITERATIONS, SOLVE_TOLERANCE
from riskdiet.errors import Problem, StudyError
from riskdiet.model import Study
from riskdiet.report import figures as figs
from riskdiet.report.figure_style import DPI_BRIEF
from riskdiet.report.fonts import FontSet, draw_string, register_fonts
from riskdiet.report.layout import (
    MARGIN_BOTTOM,
    MARGIN_SIDE,
    MARGIN_TOP,
    PAPER,
    Column,
    Styles,
    esc,
    frame_size,
    make_styles,
    make_table,
)
from riskdiet.report.map_section import map_section
from riskdiet.report.metadata import attach_xmp
from riskdiet.report.sections import MAPS, NUM, REFERENCES, SECTIONS, Builder, _num

__all__ = ["SECTIONS", "BriefPlan", "brief_date", "brief_story", "build_brief", "write_brief"]

_DATE = re.compile(r"^\d{4}-\d{2}-\d{2}$")
FOOTER_NOTE = "Decision aid, not a forecast of individual animals."
LANGUAGE = "en-GB"
"""Document language written to the PDF catalog (/Lang), for screen readers and archives."""


class _BriefDocument(BaseDocTemplate):
    """The brief's document: every section heading becomes a PDF bookmark."""

    def afterFlowable(self, flowable) -> None:
        title = getattr(flowable, "outline_title", None)
        if title is None:
            return
        level = getattr(flowable, "outline_level", 0)
        key = f"section-{len(self._outline_keys)}"
        self._outline_keys.append(key)
        self.canv.bookmarkPage(key)
        self.canv.addOutlineEntry(title, key, level=level, closed=level > 0)

    def build(self, flowables, **kwargs) -> None:
        self._outline_keys: list[str] = []
        super().build(flowables, **kwargs)


def _valid_date(text: str) -> bool:
    if not _DATE.match(text):
        return False
    try:
        dt.date.fromisoformat(text)
    except ValueError:
        return False
    return True


def brief_date(study: Study, date: str | None = None) -> tuple[str, str]:
    """The date printed on the brief and where it came from.

    Parameters
    ----------
    study : Study
        The study (its ``report_date`` setting and source file).
    date : str, optional
        ``YYYY-MM-DD`` given by the user (``--date``); wins over everything.

    Returns
    -------
    date, origin : str
        The ISO date and a few words on its origin, printed in the appendix.

    Raises
    ------
    StudyError
        When the date given or the study's ``report_date`` is not a real
        ``YYYY-MM-DD`` date, or no date can be found at all.
    """
    if date is not None:
        if not _valid_date(date.strip()):
            raise StudyError([Problem("--date", "a date written YYYY-MM-DD, e.g. 2026-03-31",
                                      f'"{date}"')])
        return date.strip(), "the --date option"
    setting = study.settings.report_date
    if setting:
        if not _valid_date(str(setting).strip()):
            raise StudyError([Problem("settings.report_date",
                                      "a date written YYYY-MM-DD, e.g. 2026-03-31",
                                      f'"{setting}"')], study.source or None)
        return str(setting).strip(), "the study's report_date setting"
    if study.source and Path(study.source).is_file():
        stamp = Path(study.source).stat().st_mtime
        day = dt.datetime.fromtimestamp(stamp, tz=dt.UTC).date().isoformat()
        return day, "the modification date (UTC) of the input file"
    raise StudyError([Problem("--date", "a date for the brief (--date, or report_date in the "
                              "study's settings)", "nothing (the study has no input file)")])


class BriefPlan:
    """Everything the brief needs before it is laid out.

    Attributes
    ----------
    result : StudyResult
    paper : str
        ``a4`` or ``letter``.
    date, date_origin : str
        See :func:`brief_date`.
    styles : Styles
    figures : list of BriefFigure
        Every figure the brief draws, in order.
    """

    def __init__(self, result: StudyResult, paper: str = "a4", date: str | None = None,
                 fit=None, uncertainty=None):
        if paper not in PAPER:
            raise StudyError([Problem("--paper", "a4 or letter", f'"{paper}"')])
        self.result = result
        self.paper = paper
        self.date, self.date_origin = brief_date(result.study, date)
        self.fonts: FontSet = register_fonts()
        self.styles: Styles = make_styles(self.fonts)
        self.width, self.height = frame_size(paper)
        self.figures = figs.brief_figures(result)
        self.fit = fit  # a FitResult when the study's records were fitted
        if fit is not None:
            from riskdiet.report.fit_section import fit_brief_figure

            self.figures.append(fit_brief_figure(fit, len(self.figures) + 1))
        self.fit_figure = self.figures[-1].key if fit is not None else None
        self.uncertainty = uncertainty  # riskdiet.analysis.uncertainty.UncertaintyResult
        if uncertainty is not None:
            from riskdiet.report.uncertainty_section import uncertainty_figures

            self.figures += uncertainty_figures(uncertainty, len(self.figures) + 1)


def _input_name(study: Study) -> str:
    return Path(study.source).name if study.source else "(built in memory, no file)"


def _title_block(b: Builder, plan: BriefPlan) -> None:
    study = b.study
    s = b.s
    b.para(esc(study.name), s.title)
    b.para("Decision brief: which prey the predator is predicted to take, at which reserves, "
           "and at what risk to itself", s.subtitle)
    n_sc = len(study.scenarios)
    rows = [
        ["date", esc(plan.date)],
        ["riskdiet version", esc(b.result.riskdiet_version)],
        ["input file", esc(_input_name(study))],
        # a fixed-width face, so that the checksum can be compared character by character
        ["input SHA-256", f'<font name="{plan.fonts.mono}">{esc(study.source_sha256 or "—")}'
                          "</font>"],
        ["predator", esc(study.predator.name)],
        ["prey types", f"{len(study.prey)}: " + esc(", ".join(p.name for p in study.prey))],
        ["scenarios", f"{n_sc}: " + esc(", ".join(sc.name for sc in study.scenarios))],
    ]
    columns = [Column(max_share=0.2), Column(max_share=0.8)]
    b.story.append(make_table(rows, columns, s, b.width, header_rows=0))
    b.story.append(Spacer(1, 8))
    if study.settings.description:
        b.para(esc(study.settings.description))
    n = b.number
    maps = (f" Section {n(MAPS)} maps how the decisions, the value of hunting skill and the "
            "kills change over two inputs." if MAPS in b.titles else "")
    unc = (f" Section {n('Uncertainty and sensitivity')} says how sure these numbers are and "
           "which input to measure next." if "Uncertainty and sensitivity" in b.titles else "")
    b.para("<b>How to read this brief.</b> Section 1 gives the findings in plain words and the "
           f"key numbers. Section {n('Inputs')} lists every input with its source; section "
           f"{n('Classic prey model')} sets the classic prey model beside the state-dependent "
           f"decisions of section {n('Decisions by reserves')}; section "
           f"{n('Predicted kills')} turns the decisions into predicted kills.{maps}{unc} Section "
           f"{n('Assumptions and cautions')} states what the model assumes and the cautions "
           "that apply to any use of these numbers; section "
           f"{n('Technical appendix')} holds the technical details needed to check or "
           "reproduce them. " + esc(FOOTER_NOTE), s.box)


def _appendix(b: Builder, plan: BriefPlan) -> None:
    b.heading("Technical appendix")
    b.sub("Solver and energy grid")
    rows = [["scenario", "currency", "energy levels n", "step [MJ]", "breeding level J / "
             "season days T", "linear solver", "policy rounds", "converged",
             "Bellman residual"]]
    for s in b.result.scenarios:
        g = s.grid
        tj = f"J = {g.top}" if s.currency == "breeding" else f"T = {g.season_days}"
        rows.append([esc(s.name), s.currency, str(g.n), _num(g.step_mj, 4), tj,
                     esc(s.linear_solver), str(s.iterations), "yes" if s.converged else "no",
                     technical(s.residual)])
    b.tables(rows, [Column(max_share=0.2)] + [NUM] * 4
             + [Column(max_share=0.16)] + [NUM] * 3,
             note="Breeding currency: policy iteration from the default (reserve-maximising) "
                  "attack sets, a state switching only on a strict gain, each policy evaluated "
                  f"exactly by a linear solve (sparse LU up to {DIRECT_LIMIT} unknowns; above, "
                  "BiCGSTAB accepted only when its residual in every state is below "
                  f"{technical(SOLVE_TOLERANCE)} of that state's terms), at most "
                  f"{MAX_POLICY_ITERATIONS} rounds; the residual is the largest change one "
                  "more Bellman update would make, relative to each state's value (a solve "
                  f"above {technical(1e-9)} is refused). Season currency: backward induction over "
                  "the days of the season (exact; rounds = days). Reserves "
                  "x<sub>j</sub> = j·R/n; level 0 is death by starvation.")
    if b.result.map is not None:
        surface = b.result.map
        b.para(f"Map of section {b.number(MAPS)}: largest Bellman residual over its "
               f"{surface.x.size * surface.y.size:,} cells "
               f"{technical(surface.max_residual)}.", b.s.small)
    b.sub("Grid check")
    rows = [["scenario", "levels compared", "fitness at start, change",
             "largest kill change (prey with ≥ 1 % of kills)", "verdict"]]
    for s in b.result.scenarios:
        g = s.grid_check
        if g is None:
            continue
        largest = g.largest_kill_change
        fit = g.fitness_relative_change
        verdict = (esc(g.problem) if g.problem else esc(g.warning) if g.warning
                   else "fine enough")
        rows.append([esc(s.name), f"{g.levels_compared[0]} vs {g.levels_compared[1]}",
                     "—" if fit is None else percent_change(fit, decimals=2),
                     "—" if largest is None else percent(largest, 1), verdict])
    b.tables(rows, [Column(max_share=0.2)] + [NUM] * 3 + [Column(max_share=0.45)],
             note="Each scenario is solved again on a second grid (about half as many energy "
                  "levels; twice as many below 20) and the relative changes are compared. A "
                  "warning is given when fitness changes by more than 0.01 and 5 %, or when "
                  "the kills of a prey or group making at least 1 % of kills change by more "
                  "than 5 %: the answer then still depends on the grid, and a larger "
                  "number of energy levels should be used.")
    b.sub("Methods")
    b.bullets([
        "Decisions by reserves and condition: stochastic dynamic programming of a "
        "state-dependent forager (Houston &amp; McNamara 1999; Mangel &amp; Clark 1988).",
        "Classic prey model: profitability ranking and the zero-one rule (Charnov 1976), "
        "intake rates from the multi-prey disc equation (Holling 1959), risk-adjusted diet by "
        "Gilliam's rule (Werner &amp; Gilliam 1984).",
        "Daily cost from body mass, where the input leaves it blank: a multiple of Kleiber's "
        "(1961) basal rate 70·M<super>0.75</super> kcal/day.",
        "Value of hunting ability: the derivative of the fitness at the start state with "
        "respect to hunting ability, the selection gradient of Lande (1979), computed with the "
        "policy held fixed.",
        "Predicted kills: the Markov chain of reserves and condition under the optimal "
        "decisions; long-run averages (breeding currency) or a day-by-day forward "
        "calculation over the season (season currency).",
    ])
    b.sub("How this document was made")
    study = b.study
    n_fig = len(plan.figures)
    b.para(
        f"Made by riskdiet {esc(b.result.riskdiet_version)} from "
        f"<font name=\"{plan.fonts.mono}\">{esc(_input_name(study))}</font> "
        f"(SHA-256 <font name=\"{plan.fonts.mono}\" size=\"7.5\">"
        f"{esc(study.source_sha256 or '—')}</font>). "
        f"Date {esc(plan.date)}, taken from {esc(plan.date_origin)}. "
        f"This brief draws {n_fig} figure{'s' if n_fig != 1 else ''}, embedded as PNG "
        f"images at {DPI_BRIEF} dpi. The same input file, date and paper size give this "
        "document byte for byte: "
        f"<font name=\"{plan.fonts.mono}\" size=\"8\">riskdiet brief "
        f"{esc(_input_name(study))} --date {esc(plan.date)} --paper {plan.paper}</font>.")
    b.sub("Glossary")
    from riskdiet.analysis.glossary import TERMS

    b.tables([["term", "meaning"]] + [[esc(t), esc(m)] for t, m in TERMS],
             [Column(max_share=0.25), Column(max_share=0.75)])
    from riskdiet.analysis.glossary import field_glossary

    b.para("Inputs are named in words in this brief; study workbooks and JSON files name them "
           "by these keys:", b.s.small)
    pairs = dict.fromkeys((w, k) for w, k, _ in field_glossary() if w != k)
    b.tables([["input", "key"]] + [[esc(w), esc(k)] for w, k in pairs],
             [Column(max_share=0.5), Column(max_share=0.5, mono=True)])
    b.sub("References")
    for ref in REFERENCES:
        b.para(esc(ref), b.s.small)


def brief_story(plan: BriefPlan) -> tuple[list, list[str]]:
    """The flowables of the brief, and the keys of the figures it embeds, in order."""
    b = Builder(plan.result, plan.styles, plan.width, plan.height, plan.figures)
    if plan.fit is not None:
        from riskdiet.report.fit_section import FIT, fit_page_one

        b.titles.insert(b.titles.index("Assumptions and cautions"), FIT)
    u = plan.uncertainty
    if u is not None:
        from riskdiet.report import uncertainty_section

        b.titles.insert(b.titles.index("Assumptions and cautions"),
                        uncertainty_section.UNCERTAINTY)
    _title_block(b, plan)
    if plan.fit is not None:
        b.para(esc(fit_page_one(b.study, plan.fit)))
    start = len(b.story)
    b.uncertainty = u  # the verdict on page 1 says how sure each sentence is
    b.summary()
    if u is not None:
        # page 1: the intervals go right after the summary's opening paragraphs, before the
        # findings of each scenario (the second conditional page break of the summary)
        breaks = [i for i in range(start, len(b.story))
                  if type(b.story[i]).__name__ == "CondPageBreak"]
        at = breaks[1] if len(breaks) > 1 else len(b.story)
        tail, b.story = b.story[at:], b.story[:at]
        uncertainty_section.page_one(b, u)
        b.story += tail
    b.inputs()
    b.classic()
    b.decisions()
    b.kills()
    if b.result.map is not None:
        map_section(b)
    if plan.fit is not None:
        from riskdiet.report.fit_section import fit_section

        fit_section(b, plan.fit, plan.fit_figure)
    if u is not None:
        uncertainty_section.section(b, u)
    b.cautions()
    _appendix(b, plan)
    return b.story, b.drawn


def _page_decorations(plan: BriefPlan):
    """Running header (study name) drawn on every page."""
    page_w, page_h = PAPER[plan.paper]
    fonts = plan.fonts
    name = plan.result.study.name

    def draw(canvas: Canvas, _doc) -> None:
        from reportlab.pdfbase.pdfmetrics import stringWidth

        canvas.saveState()
        canvas.setFont(fonts.regular, 8)
        canvas.setFillColor(colors.HexColor("#444444"))
        right = f"riskdiet brief · {plan.date}"
        room = page_w - 2 * MARGIN_SIDE - stringWidth(right, fonts.regular, 8) - 12
        title = name
        while stringWidth(title, fonts.regular, 8) > room and len(title) > 4:
            title = title[:-2].rstrip() + "…"
            title = title[:-1] if title.endswith("……") else title
        y = page_h - MARGIN_TOP + 10 * mm
        draw_string(canvas, MARGIN_SIDE, y, title, fonts.regular, 8)
        canvas.drawRightString(page_w - MARGIN_SIDE, y, right)
        canvas.setStrokeColor(colors.HexColor("#9a9a9a"))
        canvas.setLineWidth(0.5)
        canvas.line(MARGIN_SIDE, y - 3, page_w - MARGIN_SIDE, y - 3)
        canvas.drawString(MARGIN_SIDE, MARGIN_BOTTOM - 10 * mm, FOOTER_NOTE)
        canvas.restoreState()

    return draw


def _numbered_canvas(plan: BriefPlan) -> type[Canvas]:
    """A canvas that holds every page back until the end, then writes "page X of Y"."""
    page_w, _ = PAPER[plan.paper]
    font = plan.fonts.regular

    class NumberedCanvas(Canvas):
        def __init__(self, *args, **kwargs):
            # an embedded font from the start: the default (Helvetica) is never embedded
            kwargs["initialFontName"] = font
            kwargs.setdefault("lang", LANGUAGE)
            super().__init__(*args, **kwargs)
            self._page_states: list[dict] = []
            self.setViewerPreference("DisplayDocTitle", "true")

        def showPage(self):
            self._page_states.append(dict(self.__dict__))
            self._startPage()

        def save(self):
            total = len(self._page_states)
            for state in self._page_states:
                self.__dict__.update(state)
                self.setFont(font, 8)
                self.setFillColor(colors.HexColor("#444444"))
                self.drawRightString(page_w - MARGIN_SIDE, MARGIN_BOTTOM - 10 * mm,
                                     f"page {self._pageNumber} of {total}")
                Canvas.showPage(self)
            self.showOutline()
            attach_xmp(self, LANGUAGE)
            Canvas.save(self)

    return NumberedCanvas


def build_brief(result: StudyResult, paper: str = "a4", date: str | None = None,
                fit=None, uncertainty=None) -> bytes:
    """Lay out the brief and return the PDF bytes.

    Parameters
    ----------
    result : StudyResult
        Solved study (:func:`riskdiet.solve`).
    paper : str
        ``a4`` (default) or ``letter``.
    date : str, optional
        ``YYYY-MM-DD``; see :func:`brief_date` for the default.
    uncertainty : UncertaintyResult, optional
        :func:`riskdiet.analysis.uncertainty.run_uncertainty` of the study: adds
        the page-1 intervals and the *Uncertainty and sensitivity* section.

    Returns
    -------
    bytes
        The PDF.

    Raises
    ------
    StudyError
        Invalid paper or date.
    """
    return _build(BriefPlan(result, paper, date, fit, uncertainty))[0]


def _build(plan: BriefPlan, story: tuple[list, list[str]] | None = None
           ) -> tuple[bytes, list[str]]:
    """Lay out a plan (or an already made story of it) into PDF bytes."""
    study = plan.result.study
    page_w, page_h = PAPER[plan.paper]
    buffer = io.BytesIO()
    doc = _BriefDocument(
        buffer, pagesize=(page_w, page_h), lang=LANGUAGE, leftMargin=MARGIN_SIDE,
        rightMargin=MARGIN_SIDE,
        topMargin=MARGIN_TOP, bottomMargin=MARGIN_BOTTOM, invariant=1,
        title=f"{study.name}: decision brief",
        subject="Predicted prey choice, kills and risk of a predator, by scenario "
                "(riskdiet decision aid)",
        author="riskdiet", creator=f"riskdiet {plan.result.riskdiet_version}",
        keywords=f"riskdiet; {study.name}; input SHA-256 {study.source_sha256}",
    )
    frame = Frame(MARGIN_SIDE, MARGIN_BOTTOM, plan.width, plan.height, id="text",
                  leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0)
    doc.addPageTemplates([PageTemplate(id="page", frames=[frame],
                                       onPage=_page_decorations(plan))])
    flowables, drawn = story if story is not None else brief_story(plan)
    with _creation_date(plan.date):
        doc.build(flowables, canvasmaker=_numbered_canvas(plan))
    return buffer.getvalue(), drawn


@contextmanager
def _creation_date(date: str) -> Iterator[None]:
    """Stamp the PDF's creation and modification dates with the brief's date (00:00 UTC).

    reportlab takes a fixed time from ``SOURCE_DATE_EPOCH`` (else 2000-01-01 in
    invariant mode), so the date is still fixed by the input and the bytes stay
    reproducible; the variable is restored afterwards.
    """
    epoch = int(dt.datetime.strptime(date, "%Y-%m-%d").replace(tzinfo=dt.UTC).timestamp())
    old = os.environ.get("SOURCE_DATE_EPOCH")
    os.environ["SOURCE_DATE_EPOCH"] = str(epoch)
    try:
        yield
    finally:
        if old is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)
        else:
            os.environ["SOURCE_DATE_EPOCH"] = old


def write_brief(result: StudyResult, path: str | Path, paper: str = "a4",
                date: str | None = None, force: bool = False,
                figures_dir: str | Path | None = None, outputs=None, fit=None,
                uncertainty=None) -> list[Path]:
    """Write the brief (and, optionally, its figures) to disk.

    The PDF is written to a temporary file beside ``path`` and renamed into
    place, so a failed run leaves no half-written file. Nothing is written when
    any output exists and ``force`` is False.

    Parameters
    ----------
    result : StudyResult
        Solved study.
    path : str or Path
        PDF to write.
    paper, date
        See :func:`build_brief`.
    force : bool
        Replace existing files.
    figures_dir : str or Path, optional
        Also write every figure as PNG (300 dpi) and SVG into this folder.
    outputs : riskdiet.io.atomic.OutputSet, optional
        Stage the files in this set (the caller commits it); by default the
        PDF and figures are renamed into place together at the end.
    uncertainty : UncertaintyResult, optional
        See :func:`build_brief`.

    Returns
    -------
    list of Path
        Files written, the PDF first.

    Raises
    ------
    OutputExistsError
        An output exists (or is the input file) and ``force`` is False.
    StudyError
        Invalid paper or date.
    """
    from riskdiet.io.atomic import OutputSet

    path = Path(path)
    inputs = (Path(result.study.source),) if result.study.source else ()
    own = outputs is None
    outputs = outputs or OutputSet(force, inputs)
    try:
        if path not in outputs.planned:
            outputs.plan(path)
        plan = BriefPlan(result, paper, date, fit, uncertainty)
        if figures_dir is not None:
            for f in plan.figures:
                for suffix in (".png", ".svg"):
                    target = Path(figures_dir) / f"{f.key}{suffix}"
                    if target not in outputs.planned:
                        outputs.plan(target)
        data, _ = _build(plan)
        written = [outputs.stage(path, lambda tmp: tmp.write_bytes(data))]
        if figures_dir is not None:
            written += figs.write_figures(plan.figures, Path(figures_dir), force, outputs)
        return outputs.commit() if own else written
    finally:
        if own:
            outputs.discard()
