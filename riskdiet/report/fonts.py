"""Fonts for the PDF brief: the DejaVu TrueType fonts that ship with matplotlib.

The fourteen standard PDF fonts have no glyphs for ≥, ±, μ, ², θ or the en dash
in every viewer, and the brief needs all of them (units such as km², bounds such
as ≥ 0). matplotlib installs the DejaVu family with every copy, so the brief
embeds those (subset) instead of depending on fonts of the reader's machine.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

SANS = "RiskdietSans"
SANS_BOLD = "RiskdietSans-Bold"
SANS_ITALIC = "RiskdietSans-Italic"
SANS_BOLD_ITALIC = "RiskdietSans-BoldItalic"
MONO = "RiskdietMono"

_FILES = {
    SANS: "DejaVuSans.ttf",
    SANS_BOLD: "DejaVuSans-Bold.ttf",
    SANS_ITALIC: "DejaVuSans-Oblique.ttf",
    SANS_BOLD_ITALIC: "DejaVuSans-BoldOblique.ttf",
    MONO: "DejaVuSansMono.ttf",
}


@dataclass(frozen=True)
class FontSet:
    """Names of the registered fonts, for paragraph styles and canvases.

    Attributes
    ----------
    regular, bold, italic, bold_italic : str
        The sans-serif text family (``<b>`` and ``<i>`` in paragraphs map to
        the bold and italic faces).
    mono : str
        Fixed-width face for file names and checksums.
    embedded : bool
        True when the DejaVu fonts were found and registered; False when the
        brief falls back to Helvetica and Courier (some symbols then show as
        boxes).
    """

    regular: str
    bold: str
    italic: str
    bold_italic: str
    mono: str
    embedded: bool


FALLBACK = FontSet("Helvetica", "Helvetica-Bold", "Helvetica-Oblique", "Helvetica-BoldOblique",
                   "Courier", False)


def font_folder() -> Path:
    """Folder of the TrueType fonts bundled with matplotlib."""
    import matplotlib

    return Path(matplotlib.get_data_path()) / "fonts" / "ttf"


def register_fonts() -> FontSet:
    """Register the DejaVu fonts with reportlab once and return their names.

    Safe to call many times. Falls back to the standard PDF fonts when the
    files are missing (a stripped-down matplotlib).
    """
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.pdfmetrics import registerFontFamily
    from reportlab.pdfbase.ttfonts import TTFont

    registered = set(pdfmetrics.getRegisteredFontNames())
    folder = font_folder()
    if not all((folder / f).is_file() for f in _FILES.values()):
        return FALLBACK
    for name, file in _FILES.items():
        if name not in registered:
            pdfmetrics.registerFont(TTFont(name, str(folder / file)))
    registerFontFamily(SANS, normal=SANS, bold=SANS_BOLD, italic=SANS_ITALIC,
                       boldItalic=SANS_BOLD_ITALIC)
    return FontSet(SANS, SANS_BOLD, SANS_ITALIC, SANS_BOLD_ITALIC, MONO, True)


def undrawable(text: str) -> list[str]:
    """Characters of ``text`` that no font of the brief can draw (shown as boxes).

    A character counts as drawable when the text font (DejaVu Sans) or one of
    the fallback fonts (:func:`fallback_font`) has a glyph for it; with the
    standard PDF fonts instead (no DejaVu files), characters outside Latin-1
    count as undrawable.
    """
    cmap = _character_map()
    chars = dict.fromkeys(c for c in text if not c.isspace())
    if cmap is None:
        return [c for c in chars if ord(c) > 0xFF]
    return [c for c in chars if ord(c) not in cmap and fallback_font(c) is None]


_CMAP: list = []


def _character_map() -> set[int] | None:
    if not _CMAP:
        path = font_folder() / _FILES[SANS]
        if not path.is_file():
            _CMAP.append(None)
        else:
            from reportlab.pdfbase.ttfonts import TTFontFile

            _CMAP.append(set(TTFontFile(str(path)).charToGlyph))
    return _CMAP[0]


FALLBACK_FILES = ("STIXGeneral.ttf", "DejaVuSerif.ttf")
"""Fonts bundled with matplotlib tried, in this order, for a character DejaVu Sans
lacks (STIX covers many letter-like symbols, some kana and mathematical letters)."""

SYSTEM_FONT_FOLDERS = ("/usr/share/fonts", "/usr/local/share/fonts",
                       "/Library/Fonts", "C:/Windows/Fonts")
"""Folders searched, in sorted file order, for a TrueType font covering a character
that neither DejaVu Sans nor the bundled fallbacks can draw (e.g. CJK)."""

FALLBACK_FAMILIES = ("STIXGeneral", "DejaVu Serif")
"""The same bundled fallbacks by their family names, for matplotlib's font fallback."""


def needs_fallback(text: str) -> bool:
    """Whether ``text`` holds a character the text font (DejaVu Sans) has no glyph for."""
    cmap = _character_map()
    return (not text.isascii() and cmap is not None
            and any(ord(c) not in cmap and not c.isspace() for c in text))


_FALLBACKS: list[tuple[str, str, set[int]]] = []
_SYSTEM: list[tuple[str, str, set[int]]] = []
_SYSTEM_SCANNED: list[bool] = []


def _load_fallbacks(paths: list[Path], into: list, prefix: str) -> None:
    from reportlab.pdfbase.ttfonts import TTFError, TTFontFile

    for path in paths:
        try:
            cmap = set(TTFontFile(str(path)).charToGlyph)
        except (TTFError, OSError, KeyError, ValueError, IndexError, AssertionError):
            continue  # a font reportlab cannot read (CFF outlines, damaged file) is skipped
        into.append((f"{prefix}{len(into) + 1}", str(path), cmap))


def fallback_font(char: str) -> str | None:
    """The name of a registered fallback font that can draw ``char``, or None.

    Tries the fonts bundled with matplotlib first (the same on every machine),
    then TrueType fonts of the system. The font is registered with reportlab on
    first use and embedded (subset) like the text font.
    """
    code = ord(char)
    if not _FALLBACKS:
        _load_fallbacks([font_folder() / f for f in FALLBACK_FILES
                         if (font_folder() / f).is_file()], _FALLBACKS, "RiskdietFallback")
    found = next((f for f in _FALLBACKS if code in f[2]), None)
    if found is None:
        if not _SYSTEM_SCANNED:
            _SYSTEM_SCANNED.append(True)
            files = sorted(p for folder in SYSTEM_FONT_FOLDERS if Path(folder).is_dir()
                           for p in Path(folder).rglob("*") if p.suffix.lower() == ".ttf")
            _load_fallbacks(files, _SYSTEM, "RiskdietSystemFallback")
        found = next((f for f in _SYSTEM if code in f[2]), None)
    if found is None:
        return None
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    name, path, _ = found
    if name not in pdfmetrics.getRegisteredFontNames():
        pdfmetrics.registerFont(TTFont(name, path))
    return name


def runs(text: str) -> list[tuple[str | None, str]]:
    """Split ``text`` into runs: (None, text the main font draws) and
    (fallback font name, characters only that font draws)."""
    cmap = _character_map()
    if text.isascii() or cmap is None:
        return [(None, text)]
    out: list[tuple[str | None, str]] = []
    for c in text:
        font = None if ord(c) in cmap or c.isspace() else fallback_font(c)
        if out and out[-1][0] == font:
            out[-1] = (font, out[-1][1] + c)
        else:
            out.append((font, c))
    return out


def with_fallback(markup: str) -> str:
    """Paragraph markup with every character the text font lacks wrapped in
    ``<font name="...">`` of a fallback font that has it (not dropped, not a box).

    ``markup`` is already escaped text (entities and tags are ASCII, so they
    stay with the main font).
    """
    return "".join(text if font is None else f'<font name="{font}">{text}</font>'
                   for font, text in runs(markup))


def draw_string(canvas, x: float, y: float, text: str, font: str, size: float) -> None:
    """``canvas.drawString`` that draws the characters ``font`` lacks in a fallback font."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    for name, part in runs(text):
        face = name or font
        canvas.setFont(face, size)
        canvas.drawString(x, y, part)
        x += stringWidth(part, face, size)
    canvas.setFont(font, size)
