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
    """Characters of ``text`` the brief's regular font has no glyph for (shown as boxes).

    Reads the character map of DejaVu Sans (the brief's text font); with the
    fallback fonts, characters outside Latin-1 count as undrawable.
    """
    cmap = _character_map()
    chars = dict.fromkeys(c for c in text if not c.isspace())
    if cmap is None:
        return [c for c in chars if ord(c) > 0xFF]
    return [c for c in chars if ord(c) not in cmap]


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
