"""The one exception family of riskdiet.

Every input problem carries *where* it is (a JSON path such as
``prey[2].capture_success`` or a workbook cell such as
``Prey!E4 (energy_mj)``), *what was expected* and *what was found*, so that a
user can fix all of them in one pass.
"""

from __future__ import annotations

import unicodedata
from dataclasses import dataclass

_UNSHOWABLE = {"Cc", "Cs", "Co", "Cn", "Zl", "Zp"}


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input.

    Attributes
    ----------
    where : str
        Location of the fault, e.g. ``prey[2].capture_success``.
    expected : str
        What a valid value looks like, e.g. ``a number from 0 to 1``.
    found : str
        What was there instead, already quoted for display.
    """

    where: str
    expected: str
    found: str

    def __str__(self) -> str:
        return shown(f"{self.where}: expected {self.expected}, found {self.found}")


@dataclass(frozen=True)
class Notice:
    """A legal but suspicious value: reported, never fatal.

    Attributes
    ----------
    where : str
        Location of the value.
    message : str
        Plain-language explanation of why it looks suspicious.
    """

    where: str
    message: str

    def __str__(self) -> str:
        return shown(f"{self.where}: {self.message}")


class RiskdietError(Exception):
    """Base class of every error riskdiet raises on purpose."""


class StudyError(RiskdietError):
    """The study (or a request about it) is invalid; carries every problem found.

    Parameters
    ----------
    problems : list of Problem
        All problems found, in input order.
    source : str, optional
        File the problems were found in, for the heading.
    """

    def __init__(self, problems: list[Problem], source: str | None = None):
        self.problems = list(problems)
        self.source = source
        heading = f"{len(self.problems)} problem(s)" + (f" in {source}" if source else "")
        super().__init__(heading + ":\n" + "\n".join(f"  {p}" for p in self.problems))


class SolveError(RiskdietError):
    """A solve did not reach an answer that can be vouched for (MODEL.md section 3).

    Raised instead of returning numbers: the policy iteration reached its
    limit, a linear system was singular, or the Bellman residual stayed too
    large. ``where`` names the scenario, map cell or draw once known.

    Parameters
    ----------
    reason : str
        What went wrong, in plain words.
    where : str, optional
        Which scenario, map cell or draw.
    """

    def __init__(self, reason: str, where: str | None = None):
        self.reason = reason
        self.where = where
        super().__init__(f"{where}: {reason}" if where else reason)

    def located(self, where: str) -> SolveError:
        """The same error, naming where it happened (the innermost name is kept)."""
        return SolveError(self.reason, f"{where}, {self.where}" if self.where else where)


class OutputExistsError(RiskdietError):
    """An output file already exists and overwriting was not asked for."""


def shown(text: str) -> str:
    """Text with control characters, line separators and unpaired surrogates escaped
    (``\\u0000``), so that one message stays one printable line."""
    return "".join(f"\\u{ord(c):04x}" if unicodedata.category(c) in _UNSHOWABLE else c
                   for c in text)


def describe(value: object) -> str:
    """Quote a found value for an error message (strings in quotes, blanks named)."""
    if value is None:
        return "nothing (blank)"
    if isinstance(value, str):
        if value.strip() == "":
            return "nothing (blank)"
        if len(value) > 200:
            value = value[:200] + "…"
        # control characters and unpaired surrogates would garble or break the console
        return f'"{shown(value)}"'
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int) and abs(value) > 10**30:
        return f"a whole number of about {value.bit_length() * 0.30103:.0f} digits"
    if isinstance(value, (dict, list)):
        return "a mapping" if isinstance(value, dict) else f"a list of {len(value)} item(s)"
    return repr(value)
