"""How numbers read for people: the one number-formatting policy of every output.

Every number a manager reads (the brief, the results workbook's text cells, the
text of ``solve`` and ``compare``) goes through these functions, so that the
same quantity always looks the same:

* no scientific notation, no ``nan`` or ``inf`` (a dash where there is no
  number, ``∞`` for an unbounded value);
* a sensible number of significant figures (three by default), thousands
  separated;
* tiny positive values as a floor, ``< 0.1`` for an expected count, ``< 1 %``
  for a share, ``< 0.01`` for a probability; shares and probabilities just
  short of one as ``> 99 %`` / ``> 0.99``;
* a sign only where a change is meant (:func:`change`, :func:`percent_change`),
  and never a signed zero;
* rounding half up, as MODEL.md section 3 fixes it:
  round(x) = ⌊x + 0.5 + 1e−9⌋ (symmetric for negative values).

Technical figures (residuals, tolerances) are shown by :func:`technical`, for
the technical appendix only.
"""

from __future__ import annotations

import math

DASH = "—"
"""Shown where a number does not exist or does not apply."""


def _missing(x) -> bool:
    return x is None or (isinstance(x, float) and math.isnan(x))


def round_half_up(x: float, decimals: int = 0) -> float:
    """Round ``x`` to ``decimals`` places, halves away from zero.

    Parameters
    ----------
    x : float
        The value.
    decimals : int
        Places after the decimal point (may be negative: -1 rounds to tens).

    Returns
    -------
    float
        ⌊|x|·10^d + 0.5 + 1e−9⌋ / 10^d with the sign of ``x`` (MODEL.md
        section 3; the 1e−9 keeps 0.145 × 100 at 15 despite binary floating
        point).
    """
    if decimals > 300:
        return x  # far below anything shown (see SMALLEST)
    scale = 10.0 ** decimals
    scaled = abs(x) * scale
    if not math.isfinite(scaled) or scaled >= 2.0 ** 52:
        return x  # already a whole number at that place (or unbounded)
    y = math.floor(scaled + 0.5 + 1e-9) / scale
    return -y if x < 0 else y


def fixed(x: float, decimals: int) -> str:
    """``x`` with exactly ``decimals`` places, rounded half up, thousands
    separated, never ``-0``."""
    y = round_half_up(x, decimals)
    if math.isinf(y):
        return "∞" if y > 0 else "−∞"
    if y == 0:
        y = 0.0
    return f"{y:,.{max(decimals, 0)}f}"


SMALLEST = 1e-9
"""Below this, even a number shown in full (no floor) reads ``< 0.000000001``."""


def _decimals_for(x: float, sig: int) -> int:
    """Places after the point that show ``sig`` significant figures of ``x``."""
    if x == 0:
        return 0
    exponent = math.floor(math.log10(abs(x)))
    d = sig - 1 - exponent
    if d <= 0:
        return 0  # whole numbers keep all their digits
    # the rounding may carry into a new digit (9.996 -> 10.0): one place fewer
    if abs(round_half_up(x, d)) >= 10.0 ** (exponent + 1):
        d -= 1
    return max(d, 0)


def number(x, sig: int = 3, floor: float | None = 0.001, unbounded: str = "∞") -> str:
    """A general number for people: ``sig`` significant figures, positional.

    Parameters
    ----------
    x : float or None
        The value; None or NaN gives a dash, ±infinity ``∞`` / ``−∞``.
    sig : int
        Significant figures (whole numbers from 10^sig up keep all their digits).
    floor : float or None
        Positive values below it read ``< floor`` (negative ones ``> −floor``);
        None shows small values positionally down to :data:`SMALLEST`.
    unbounded : str
        Text for +infinity.
    """
    if _missing(x):
        return DASH
    if isinstance(x, bool):
        return "yes" if x else "no"
    if isinstance(x, int):
        return f"{x:,}"
    x = float(x)
    if math.isinf(x):
        return unbounded if x > 0 else "−" + unbounded
    if x == 0:
        return "0"
    floor = SMALLEST if floor is None else floor
    if abs(x) < floor:
        return f"< {plain(floor)}" if x > 0 else f"> -{plain(floor)}"
    return fixed(x, _decimals_for(x, sig))


def plain(x: float) -> str:
    """A short decimal of a round value such as a floor (0.001 -> ``0.001``)."""
    text = f"{x:.12f}".rstrip("0").rstrip(".")
    return text or "0"


def value(x, sig: int = 4) -> str:
    """An input value as the user gave it: up to ``sig`` significant figures,
    trailing zeros dropped, however small (0.0005 stays ``0.0005``)."""
    if _missing(x) or isinstance(x, (bool, int)) or math.isinf(float(x)):
        return number(x)
    x = float(x)
    if x == 0 or abs(x) < SMALLEST:
        return number(x, floor=SMALLEST)
    text = fixed(x, _decimals_for(x, sig))
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return text


def amount(x) -> str:
    """An expected count in a sentence: whole numbers from 10 up, one decimal
    below, ``< 0.1`` for tiny positive values, a dash when there is none."""
    if _missing(x):
        return DASH
    x = float(x)
    if math.isinf(x):
        return "∞"
    if round_half_up(x, 1) >= 10:
        return fixed(x, 0)
    if 0 < x < 0.05:
        return "< 0.1"
    return fixed(x, 1)


def count(x) -> str:
    """An expected count in a table: three significant figures, whole numbers
    from 100 up, ``< 0.01`` for tiny positive values."""
    return number(x, sig=3, floor=0.01)


def percent(fraction, decimals: int = 0) -> str:
    """A share as a percentage: ``35 %``, ``< 1 %`` and ``> 99 %`` near the ends."""
    if _missing(fraction):
        return DASH
    p = 100.0 * float(fraction)
    step = 10.0 ** -decimals
    if 0 < p < step / 2:
        return f"< {plain(step)} %"
    if 100 - step / 2 < p < 100:
        return f"> {plain(100 - step)} %"
    return f"{fixed(p, decimals)} %"


def probability(p, decimals: int = 2) -> str:
    """A probability: ``decimals`` places, ``< 0.01`` / ``> 0.99`` near 0 and 1."""
    if _missing(p):
        return DASH
    p = float(p)
    step = 10.0 ** -decimals
    if 0 < p < step / 2:
        return f"< {plain(step)}"
    if 1 - step / 2 <= p < 1:
        return f"> {fixed(1 - step, decimals)}"
    return fixed(p, decimals)


def change(delta, kind: str = "count") -> str:
    """A signed change, written the way the quantity itself is written.

    Parameters
    ----------
    delta : float or None
        The change (new − old); None gives an empty string.
    kind : {"count", "probability", "fraction", "number"}
        ``count``: as :func:`amount` (whole from 10 up, one decimal below, so that
        a column of changes has one precision); ``probability``: two places;
        ``fraction``: percentage points; ``number``: three significant figures.

    Returns
    -------
    str
        ``+12``, ``-0.06``, ``+6 pts``; ``0`` (no sign) when the change rounds
        to nothing at that precision, ``< 0.01`` style when it is tiny but real.
    """
    if _missing(delta):
        return ""
    d = float(delta)
    if kind == "fraction":
        pts = 100 * d
        if round_half_up(pts, 0) == 0:
            return "0 pts" if pts == 0 else "< 1 pt"
        return f"{'+' if pts > 0 else ''}{fixed(pts, 0)} pts"
    if kind == "probability":
        if round_half_up(d, 2) == 0:
            return "0" if d == 0 else "< 0.01"
        return f"{'+' if d > 0 else ''}{fixed(d, 2)}"
    if d == 0:
        return "0"
    text = amount(abs(d)) if kind == "count" else number(abs(d))
    if text.startswith("<"):
        return text
    return f"{'+' if d > 0 else '-'}{text}"


def percent_change(rel, decimals: int = 0) -> str:
    """A relative change: ``+12 %``, ``-83 %``; ``×13`` from a doubling up, ``0 %``.

    Parameters
    ----------
    rel : float or None
        (new − old) / old [ratio]; None gives an empty string.
    decimals : int
        Places of the percentage (the technical appendix shows two).
    """
    if _missing(rel):
        return ""
    r = float(rel)
    if math.isinf(r):
        return "from none"
    if r >= 1:
        return f"×{number(1 + r, sig=2, floor=None)}"
    pct = round_half_up(100 * r, decimals)
    if pct == 0:
        return "0 %"
    return f"{'+' if pct > 0 else ''}{fixed(pct, decimals)} %"


def technical(x) -> str:
    """A technical figure for the appendix (residuals, tolerances): two
    significant figures as a power of ten, e.g. ``5.5 × 10⁻¹⁶``."""
    if _missing(x):
        return DASH
    x = float(x)
    if math.isinf(x):
        return "∞"
    if x == 0:
        return "0"
    exponent = math.floor(math.log10(abs(x)))
    if -3 <= exponent < 4:
        return number(x, sig=2, floor=None)
    mantissa = round_half_up(x / 10.0 ** exponent, 1)
    if abs(mantissa) >= 10:
        mantissa, exponent = mantissa / 10, exponent + 1
    sup = str(exponent).translate(str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹"))
    return f"{mantissa:.1f} × 10{sup}"
