"""Page layout of the brief: paper sizes, paragraph styles, tables that fit the page.

Tables are built from plain-text cells. Column widths are computed from the
text itself (the widest line and the longest unbreakable word of every column)
so that a table never runs past the text frame: a column wraps when space is
short, and a table with too many columns for one page is split into several
tables that each repeat the first column(s). Header rows repeat on every page a
table spans.
"""

from __future__ import annotations

import html
import re
from dataclasses import dataclass

from reportlab.lib import colors
from reportlab.lib.enums import TA_LEFT, TA_RIGHT
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import Paragraph, Table, TableStyle

from riskdiet.report.fonts import FontSet, with_fallback

PAPER = {"a4": A4, "letter": LETTER}
"""Page sizes [pt]: A4 is 210 x 297 mm (ISO 216), letter 8.5 x 11 in (ANSI/ASME Y14.1)."""

MARGIN_SIDE = 20 * mm
MARGIN_TOP = 24 * mm
MARGIN_BOTTOM = 20 * mm
CELL_PAD = 3.0
"""Left and right padding inside a table cell [pt]."""
TABLE_FONT_SIZE = 7.5
HEADER_FILL = colors.HexColor("#e4e4e4")
RULE = colors.HexColor("#9a9a9a")


def frame_size(paper: str) -> tuple[float, float]:
    """Width and height of the text frame on a page of the given paper [pt]."""
    width, height = PAPER[paper]
    return width - 2 * MARGIN_SIDE, height - MARGIN_TOP - MARGIN_BOTTOM


@dataclass(frozen=True)
class Styles:
    """Paragraph styles of the brief, built on one font set."""

    fonts: FontSet
    body: ParagraphStyle
    small: ParagraphStyle
    bullet: ParagraphStyle
    title: ParagraphStyle
    subtitle: ParagraphStyle
    h1: ParagraphStyle
    h2: ParagraphStyle
    caption: ParagraphStyle
    cell: ParagraphStyle
    cell_right: ParagraphStyle
    cell_head: ParagraphStyle
    cell_mono: ParagraphStyle
    box: ParagraphStyle


def make_styles(fonts: FontSet) -> Styles:
    """The brief's paragraph styles."""
    # bulletFontName too: without it reportlab draws bullets in Helvetica, which is not
    # embedded (an archived PDF must embed every font it uses)
    body = ParagraphStyle("body", fontName=fonts.regular, bulletFontName=fonts.regular,
                          fontSize=9.5, leading=12.6,
                          spaceAfter=5, alignment=TA_LEFT)
    cell = ParagraphStyle("cell", fontName=fonts.regular, fontSize=TABLE_FONT_SIZE,
                          leading=TABLE_FONT_SIZE + 1.8, splitLongWords=1)
    return Styles(
        fonts=fonts,
        body=body,
        small=ParagraphStyle("small", parent=body, fontSize=8, leading=10.4, spaceAfter=3),
        bullet=ParagraphStyle("bullet", parent=body, leftIndent=11, bulletIndent=2,
                              spaceAfter=2.5),
        title=ParagraphStyle("title", parent=body, fontName=fonts.bold, fontSize=17,
                             leading=21, spaceAfter=4),
        subtitle=ParagraphStyle("subtitle", parent=body, fontSize=10.5, leading=14,
                                textColor=colors.HexColor("#333333"), spaceAfter=8),
        h1=ParagraphStyle("h1", parent=body, fontName=fonts.bold, fontSize=13.5, leading=17,
                          spaceBefore=10, spaceAfter=6, keepWithNext=1),
        h2=ParagraphStyle("h2", parent=body, fontName=fonts.bold, fontSize=10.5, leading=13.5,
                          spaceBefore=8, spaceAfter=4, keepWithNext=1),
        caption=ParagraphStyle("caption", parent=body, fontName=fonts.italic, fontSize=8,
                               leading=10.4, spaceBefore=2, spaceAfter=8),
        cell=cell,
        cell_right=ParagraphStyle("cell_right", parent=cell, alignment=TA_RIGHT),
        cell_head=ParagraphStyle("cell_head", parent=cell, fontName=fonts.bold),
        cell_mono=ParagraphStyle("cell_mono", parent=cell, fontName=fonts.mono),
        box=ParagraphStyle("box", parent=body, fontSize=9, leading=12, borderColor=RULE,
                           borderWidth=0.6, borderPadding=6, backColor=colors.HexColor("#f4f4f4"),
                           spaceBefore=6, spaceAfter=12),
    )


def esc(text: object) -> str:
    """Text made safe for a reportlab paragraph (``&``, ``<``, ``>`` escaped), with the
    characters the text font lacks set in a fallback font that has them
    (:func:`riskdiet.report.fonts.with_fallback`), so that none is dropped."""
    return with_fallback(html.escape(str(text), quote=False))


_TAG = re.compile(r"<[^>]+>")


def plain(markup: str) -> str:
    """The visible text of paragraph markup (tags removed, entities decoded)."""
    return html.unescape(_TAG.sub("", markup.replace("<br/>", "\n")))


_FONT_NAME = re.compile(r'<font[^>]*\bname="([^"]+)"')


def _widths(text: str, font: str, size: float) -> tuple[float, float]:
    """Widest line and widest single word of a cell's text [pt].

    A cell that switches font (``<font name=...>``) is measured in that font.
    """
    switch = _FONT_NAME.search(text)
    if switch and "Fallback" not in switch.group(1):  # a few fallback glyphs: the cell's font
        font = switch.group(1)
    lines = plain(text).split("\n") or [""]
    widest = max(stringWidth(line, font, size) for line in lines)
    words = [w for line in lines for w in line.split()] or [""]
    longest = max(stringWidth(w, font, size) for w in words)
    return widest, longest


@dataclass(frozen=True)
class Column:
    """How one table column is laid out.

    Attributes
    ----------
    right : bool
        Right-align (numbers).
    mono : bool
        Fixed-width font (checksums, file names).
    max_share : float
        Largest share of the frame width the column may take before it wraps.
    """

    right: bool = False
    mono: bool = False
    max_share: float = 0.5


def _cell_style(styles: Styles, col: Column, head: bool) -> ParagraphStyle:
    if head:
        return styles.cell_head
    if col.mono:
        return styles.cell_mono
    return styles.cell_right if col.right else styles.cell


def _measure(rows: list[list[str]], columns: list[Column], styles: Styles, width: float,
             header_rows: int) -> tuple[list[float], list[float], list[float]]:
    """Per column: narrowest width (longest word), widest body line, widest line [pt].

    The two line widths are capped at the column's ``max_share`` of ``width``;
    all include the cell padding.
    """
    minimum, body, natural = [], [], []
    pad = 2 * CELL_PAD + 0.5
    for c, col in enumerate(columns):
        nat = nat_body = mini = 0.0
        for r, row in enumerate(rows):
            style = _cell_style(styles, col, r < header_rows)
            w, m = _widths(row[c], style.fontName, style.fontSize)
            nat, mini = max(nat, w), max(mini, m)
            if r >= header_rows:
                nat_body = max(nat_body, w)
        cap = max(mini, col.max_share * width)
        minimum.append(mini + pad)
        body.append(max(mini, min(nat_body, cap)) + pad)
        natural.append(max(mini, min(nat, cap)) + pad)
    return minimum, body, natural


def column_widths(rows: list[list[str]], columns: list[Column], styles: Styles,
                  width: float, header_rows: int = 1, strict: bool = True) -> list[float] | None:
    """Column widths [pt] that fit ``width``.

    Each column gets at least its longest word and at most its widest line;
    space beyond the minima goes to the columns that need it, in proportion.
    When even the longest words do not fit, return None (``strict``) or
    shrink every column in proportion (words are then broken inside cells).
    """
    minimum, body, natural = _measure(rows, columns, styles, width, header_rows)
    if sum(minimum) > width + 1e-6:
        if strict:
            return None
        # one very long word (a pasted link, text without spaces) must not squeeze the other
        # columns to nothing: no column's minimum counts for more than its fair share
        fair = width / len(minimum)
        capped = [min(m, max(fair, (c.max_share or 0) * width))
                  for m, c in zip(minimum, columns, strict=True)]
        return [m * width / sum(capped) for m in capped]
    if sum(natural) <= width:
        return natural
    # body cells unwrapped first, headers wrap; if even that is too wide, short columns
    # (a number, a unit) stay whole and the long text columns wrap
    if sum(body) <= width:
        low, high = body, natural
    else:
        low = [b if b <= 0.16 * width else m for b, m in zip(body, minimum, strict=True)]
        if sum(low) > width:
            low = minimum
        high = body
    spare = width - sum(low)
    need = [h - lo for h, lo in zip(high, low, strict=True)]
    total = sum(need)
    if total <= 0:
        return low
    return [lo + spare * d / total for lo, d in zip(low, need, strict=True)]


def make_table(rows: list[list[str]], columns: list[Column], styles: Styles, width: float,
               header_rows: int = 1, widths: list[float] | None = None,
               extra_style: list | None = None) -> Table:
    """A table of paragraph cells with a repeated header, fitted to ``width``.

    Parameters
    ----------
    rows : list of list of str
        Cell markup, header row(s) first.
    columns : list of Column
        Layout of each column.
    width : float
        Available width [pt].

    Columns whose longest words cannot all fit are narrowed in proportion and
    their words broken; :func:`split_wide` avoids that for wide tables.
    """
    widths = widths or column_widths(rows, columns, styles, width, header_rows, strict=False)
    cells = [[Paragraph(text, _cell_style(styles, columns[c], r < header_rows))
              for c, text in enumerate(row)] for r, row in enumerate(rows)]
    style = [
        # the table's own font (reportlab's default is Helvetica, which is not embedded)
        ("FONTNAME", (0, 0), (-1, -1), styles.cell.fontName),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), CELL_PAD),
        ("RIGHTPADDING", (0, 0), (-1, -1), CELL_PAD),
        ("TOPPADDING", (0, 0), (-1, -1), 1.6),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 2.2),
        ("LINEBELOW", (0, header_rows), (-1, -1), 0.3, colors.HexColor("#cfcfcf")),
    ]
    if header_rows:
        style += [("LINEBELOW", (0, header_rows - 1), (-1, header_rows - 1), 0.8, RULE),
                  ("BACKGROUND", (0, 0), (-1, header_rows - 1), HEADER_FILL)]
    table = Table(cells, colWidths=widths, repeatRows=header_rows, splitInRow=1, hAlign="LEFT")
    table.setStyle(TableStyle(style + (extra_style or [])))
    return table


MAX_COLUMNS = 9
"""Most columns in one table part, so that rows stay easy to follow."""


def split_wide(rows: list[list[str]], columns: list[Column], styles: Styles, width: float,
               keep: int = 1, header_rows: int = 1) -> list[Table]:
    """One table, or several parts when the columns are too many for the page.

    The first ``keep`` columns (the row labels) are repeated in every part;
    the other columns are dealt out in order, as many per part as fit at a
    comfortable width (their body text unwrapped, up to a fifth of the frame).
    """
    minimum, body, _ = _measure(rows, columns, styles, width, header_rows)
    comfortable = [max(m, min(b, 0.2 * width)) if c >= keep else max(m, min(b, 0.3 * width))
                   for c, (m, b) in enumerate(zip(minimum, body, strict=True))]
    fixed = sum(comfortable[:keep])
    parts: list[list[int]] = []
    current: list[int] = []
    used = fixed
    for c in range(keep, len(columns)):
        if current and (used + comfortable[c] > width or len(current) + keep >= MAX_COLUMNS):
            parts.append(current)
            current, used = [], fixed
        current.append(c)
        used += comfortable[c]
    if current or not parts:
        parts.append(current)
    tables = []
    for part in parts:
        idx = list(range(keep)) + part
        tables.append(make_table([[row[i] for i in idx] for row in rows],
                                 [columns[i] for i in idx], styles, width, header_rows))
    return tables
