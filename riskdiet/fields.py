"""The vocabulary: one description of every input field.

Each field of the study dataclasses carries a :class:`FieldSpec` in its
metadata. The JSON reader, the workbook reader, the template writer, the
``check`` command and the brief all read these specs, so a field's name, unit,
bounds and description are written exactly once.
"""

from __future__ import annotations

import dataclasses
import math
import re
import unicodedata
from dataclasses import dataclass
from typing import Any

from riskdiet.errors import Problem, describe

NUMBER = "number"
INTEGER = "integer"
TEXT = "text"
BOOLEAN = "boolean"
CHOICE = "choice"

NAME_MAX_LENGTH = 80
"""Longest name of a prey type, group or scenario (MODEL.md section 1, Bounds)."""

MAX_ANIMALS = 1_000_000
"""Upper bound of animal counts such as ``population`` (MODEL.md section 1, Bounds)."""

_TRUE_WORDS = {"yes", "y", "true", "1"}
_FALSE_WORDS = {"no", "n", "false", "0"}


@dataclass(frozen=True)
class FieldSpec:
    """Description of one input field.

    Attributes
    ----------
    kind : str
        ``number``, ``integer``, ``text``, ``boolean`` or ``choice``.
    unit : str
        Unit shown beside the field (``MJ``, ``day``, ``1/day``, ``fraction of R``...).
    description : str
        One plain-language line for the template and the brief.
    low, high : float, optional
        Bounds of the allowed range.
    low_open, high_open : bool
        Whether the bound itself is excluded.
    choices : tuple of str
        Allowed words for ``choice`` fields.
    required : bool
        Whether a value must be given (no default).
    percent : bool
        Whether a ``%`` sign is accepted (fractions and probabilities only,
        MODEL.md section 1): ``30 %`` means 0.3.
    max_length : int, optional
        Longest text allowed; such a text is a name: printable characters only.
    """

    kind: str
    unit: str
    description: str
    low: float | None = None
    high: float | None = None
    low_open: bool = False
    high_open: bool = False
    choices: tuple[str, ...] = ()
    required: bool = False
    percent: bool = False
    max_length: int | None = None

    @property
    def numeric(self) -> bool:
        return self.kind in (NUMBER, INTEGER)

    def expected(self) -> str:
        """Describe a valid value in words, e.g. ``a number from 0 to 1``."""
        if self.kind == BOOLEAN:
            return "yes or no"
        if self.kind == CHOICE:
            return "one of " + ", ".join(self.choices)
        if self.kind == TEXT:
            return "text"
        noun = "a whole number" if self.kind == INTEGER else "a number"
        lo, hi = self.low, self.high
        if lo is not None and hi is not None:
            if not self.low_open and not self.high_open:
                return f"{noun} from {_fmt(lo)} to {_fmt(hi)}"
            left = f"above {_fmt(lo)}" if self.low_open else f"from {_fmt(lo)}"
            right = (f"up to, but not including, {_fmt(hi)}" if self.high_open
                     else f"up to {_fmt(hi)}")
            return f"{noun} {left} and {right}" if self.low_open else f"{noun} {left} {right}"
        if lo is not None:
            return f"{noun} {'>' if self.low_open else '≥'} {_fmt(lo)}"
        if hi is not None:
            return f"{noun} {'<' if self.high_open else '≤'} {_fmt(hi)}"
        return noun

    def expected_for(self, value: float) -> str:
        """:meth:`expected`, with a hint when ``value`` looks like a slip."""
        text = self.expected()
        if (self.percent and self.high == 1 and isinstance(value, (int, float))
                and 2 <= value <= 100):
            text += f" (for {value:g} %, type {value / 100:g} or {value:g} %)"
        return text

    def in_range(self, value: float) -> bool:
        """Whether a numeric value lies within the bounds."""
        if not math.isfinite(value):
            return False
        if self.low is not None and (value < self.low or (self.low_open and value == self.low)):
            return False
        if self.high is not None and (
            value > self.high or (self.high_open and value == self.high)
        ):
            return False
        return True


def _fmt(x: float) -> str:
    return f"{x:g}"


def spec_field(default: Any = None, **kwargs: Any) -> Any:
    """A dataclass field whose metadata holds its :class:`FieldSpec`."""
    spec = FieldSpec(**kwargs)
    return dataclasses.field(default=default, metadata={"spec": spec})


def field_specs(cls: type) -> dict[str, FieldSpec]:
    """Map field name to spec for a study dataclass, in declaration order."""
    return {f.name: f.metadata["spec"] for f in dataclasses.fields(cls) if "spec" in f.metadata}


def field_defaults(cls: type) -> dict[str, Any]:
    """Map field name to its default value."""
    return {f.name: f.default for f in dataclasses.fields(cls) if "spec" in f.metadata}


def display(value: Any, blank: str = "", number: str = "g") -> str:
    """An input value as a person reads it: yes/no for booleans, ``number`` format for floats."""
    if value is None:
        return blank
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return format(value, number)
    return str(value)


def is_blank(value: Any) -> bool:
    """Blank cells and empty strings count as not given."""
    return value is None or (isinstance(value, str) and value.strip() == "")


def coerce(spec: FieldSpec, value: Any, where: str) -> tuple[Any, Problem | None]:
    """Convert a raw value (JSON or cell) to the field's type, or explain why not.

    Only the type is checked here; ranges are checked on the built study so that
    scenario changes go through the same rules.

    Returns
    -------
    value, problem
        The converted value (``None`` for a blank) and ``None``, or ``None`` and
        the problem.
    """
    if is_blank(value):
        return None, None
    if spec.kind == BOOLEAN:
        if isinstance(value, bool):
            return value, None
        if isinstance(value, (int, float)) and value in (0, 1):
            return bool(value), None
        if isinstance(value, str) and value.strip().lower() in _TRUE_WORDS | _FALSE_WORDS:
            return value.strip().lower() in _TRUE_WORDS, None
        return None, Problem(where, "yes or no (also true/false, 1/0)", describe(value))
    if spec.kind in (TEXT, CHOICE):
        if isinstance(value, bool) or not isinstance(value, (str, int, float)):
            return None, Problem(where, spec.expected(), describe(value))
        if isinstance(value, int) and abs(value) > 10**30:
            return None, Problem(where, spec.expected(), describe(value))
        text = str(value).strip()
        problem = text_problem(text, where, spec.max_length)
        if problem:
            return None, problem
        if spec.kind == CHOICE:
            word = text.lower()
            if word not in spec.choices:
                return None, Problem(where, spec.expected(), describe(value))
            return word, None
        return text, None
    # numbers
    number: float
    if isinstance(value, bool):
        return None, Problem(where, spec.expected(), describe(value))
    if isinstance(value, (int, float)):
        try:
            number = float(value)
        except OverflowError:
            return None, Problem(where, spec.expected(), describe(value))
    elif isinstance(value, str):
        text = value.strip().replace("\u2212", "-")
        percent = text.endswith("%")
        if percent and not spec.percent:
            return None, Problem(where, spec.expected() + " (a % sign is accepted only for "
                                 "fractions and probabilities)", describe(value))
        try:
            number = float(text.rstrip("%").strip())
        except ValueError:
            return None, Problem(where, spec.expected(), _found_text(value))
        if percent:
            number /= 100.0
    else:
        return None, Problem(where, spec.expected(), describe(value))
    if not math.isfinite(number):
        return None, Problem(where, spec.expected(), describe(value))
    if spec.kind == INTEGER:
        if number != int(number):
            return None, Problem(where, spec.expected(), describe(value))
        return int(number), None
    return number, None


_DATE = re.compile(r"^\d{4}-\d{2}-\d{2}( \d{2}:\d{2}(:\d{2})?)?$|^\d{2}:\d{2}:\d{2}$")
_DECIMAL_COMMA = re.compile(r"^[-+]?\d*,\d+\s*%?$")
_FORBIDDEN = {"Cc", "Cs", "Co", "Cn", "Zl", "Zp"}
_MULTILINE = {"\t", "\n", "\r"}


def _found_text(value: str) -> str:
    """Describe a text that is not a number, with the likely slip when there is one."""
    text = value.strip()
    if _DECIMAL_COMMA.match(text):
        return (f"{describe(value)} (a decimal comma? riskdiet reads a decimal point: "
                f"{text.replace(',', '.')})")
    if _DATE.match(text):
        return (f"the date or time {describe(value)}: the spreadsheet converted the entry "
                "to a date; format the cell as a number (or text) and type the value again")
    return describe(value)


def text_problem(text: str, where: str, max_length: int | None = None) -> Problem | None:
    """A text riskdiet cannot show faithfully, or a name that is too long.

    Texts may not hold control characters (notes may hold tabs and line
    breaks), unpaired surrogates or unassigned code points, because they
    cannot be printed, saved or drawn. A name (``max_length`` given) must be
    one line of at most ``max_length`` printable characters (MODEL.md
    section 1, Bounds).
    """
    bad = [c for c in text if unicodedata.category(c) in _FORBIDDEN
           and (max_length is not None or c not in _MULTILINE)]
    if bad:
        codes = ", ".join(f"U+{ord(c):04X}" for c in dict.fromkeys(bad))
        shown = "".join("?" if c in bad else c for c in text)[:60]
        return Problem(where, "printable text" + (" on one line" if max_length else ""),
                       f'"{shown}" with the control or invalid character(s) {codes}')
    if max_length is not None and len(text) > max_length:
        return Problem(where, f"a name of at most {max_length} characters",
                       f'{len(text)} characters ("{text[:40]}…")')
    return None


def did_you_mean(word: object, options: list[str] | tuple[str, ...]) -> str:
    """`` (did you mean "x"?)`` for the closest option to a misspelt word, else ``""``."""
    import difflib

    if not isinstance(word, str) or not word.strip():
        return ""
    lower = {o.lower(): o for o in options}
    found = difflib.get_close_matches(word.strip().lower(), list(lower), n=1, cutoff=0.6)
    return f' (did you mean "{lower[found[0]]}"?)' if found else ""


WORDS = {
    # predator
    "name": "name",
    "reserve_capacity_mj": "reserve capacity",
    "energy_levels": "number of energy levels",
    "daily_cost_mj": "daily energy cost",
    "body_mass_kg": "body mass",
    "activity_multiplier": "activity multiplier",
    "background_mortality": "daily mortality from other causes",
    "hunting_ability": "hunting ability",
    "search_area_km2_per_day": "area searched per day",
    "injured_capture_factor": "capture success while injured (factor)",
    "injured_extra_cost_mj": "extra daily cost while injured",
    "injured_extra_mortality": "extra daily mortality while injured",
    "recovery_days": "recovery time",
    "currency": "fitness currency",
    "breeding_threshold": "reserves needed to breed",
    "season_days": "season length",
    "season_reserve_threshold": "reserves needed at the end of the season",
    "start_reserves": "reserves at release",
    "reserves_after_breeding": "reserves after breeding",
    "population": "predators in the area",
    "released_animals": "animals released",
    # prey
    "group": "group",
    "density_per_km2": "density",
    "encounters_per_day": "encounters per day",
    "energy_mj": "energy per capture",
    "handling_days": "handling time",
    "capture_success": "capture success",
    "skill_dependent": "dependence on hunting skill",
    "injury_chance": "chance of injury in a failed attack",
    "injury_energy_mj": "energy lost to an injury",
    "fatality_chance": "chance of being killed in an attack",
    "note": "note",
    "encounter_share": "share of all encounters",
}
"""The words people read for each field (brief, results workbook); the key stays the
name in study files and JSON, and the glossaries map one to the other."""

UNIT_WORDS = {"MJ": "MJ", "MJ/day": "MJ a day", "1/day": "a day", "day": "days",
              "km²/day": "km² a day", "1/km²": "per km²", "kg": "kg",
              "fraction of R": "share of capacity"}
"""Units as words, where a unit reads better spelled out."""


def words(field: str) -> str:
    """The words for a field (the field name itself when none are defined)."""
    return WORDS.get(field, field.replace("_", " "))
