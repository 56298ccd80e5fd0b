"""The vocabulary: one description of every input field.

Each field of the study dataclasses carries a :class:`FieldSpec` in its
metadata. The JSON reader, the workbook reader, the template writer, the
``check`` command and the brief all read these specs, so a field's name, unit,
bounds and description are written exactly once.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

from riskdiet.errors import Problem, describe

NUMBER = "number"
INTEGER = "integer"
TEXT = "text"
BOOLEAN = "boolean"
CHOICE = "choice"

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
        text = str(value).strip()
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
        number = float(value)
    elif isinstance(value, str):
        text = value.strip().replace("\u2212", "-")
        percent = text.endswith("%")
        try:
            number = float(text.rstrip("%").strip())
        except ValueError:
            return None, Problem(where, spec.expected(), describe(value))
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
