"""Terms of the trade used in riskdiet's outputs, explained once (brief and workbook)."""

from __future__ import annotations

from riskdiet.fields import WORDS, field_specs
from riskdiet.model import Predator, Prey

TERMS = (
    ("fitness", "The chance the model assumes the predator maximises: reaching breeding "
     "condition before dying (breeding currency), or ending the season alive and in "
     "condition (season currency)."),
    ("fitness at start", "Fitness of a healthy animal with the reserves it has at release."),
    ("policy", "Which prey the predator attacks when it meets them, for every level of "
     "reserves and condition (healthy or injured): the decisions by reserves."),
    ("released animals (cohort)", "The animals released on day 0, followed without "
     "replacement over the planning horizon; their kills, survival and breeding are the "
     "numbers to plan with."),
    ("place kept filled", "The long-run view: every predator that dies is replaced at once "
     "by a newcomer, so the yearly rates describe a territory that is always occupied."),
    ("selection gradient", "How much fitness at start changes per unit of hunting ability, "
     "with the decisions held fixed (Lande 1979)."),
    ("elasticity", "The relative change of an outcome per relative change of an input "
     "(d ln y / d ln x): 0.5 means a 10 % larger input gives about a 5 % larger outcome."),
    ("profitability", "Energy gained per day of handling a capture (classic prey model, "
     "Charnov 1976)."),
    ("encounter rate", "Expected meetings with a prey type per day of searching."),
    ("handling time", "Extra days one capture occupies (eating, guarding, resting)."),
    ("diet breadth", "How many prey types are taken."),
    ("grid check", "The same scenario solved again on a grid of about half as many energy "
     "levels; large changes mean the numbers still depend on the grid."),
    ("Bellman residual", "How far the computed fitness is from satisfying its own equation; "
     "a check on the solver, accepted below one in a billion."),
    ("Sobol index", "The share of an outcome's variance due to one uncertain input, alone "
     "(first order) or with its interactions (total)."),
)
"""(term, meaning) pairs, in the order a reader meets them."""


def field_glossary() -> list[tuple[str, str, str]]:
    """(words, key in study files and JSON, meaning) for every input field."""
    rows = []
    for record in (Predator, Prey):
        for name, spec in field_specs(record).items():
            if name in WORDS:
                rows.append((WORDS[name], name, spec.description))
    return rows
