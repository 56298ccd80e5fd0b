"""Tests of the field vocabulary: type conversion and descriptions of valid values.

References used below:
MODEL.md section 1 (field names, units and bounds); the spellings accepted
for numbers and yes/no values are common spreadsheet practice.
"""

from __future__ import annotations

import dataclasses

import pytest

from riskdiet.fields import BOOLEAN, INTEGER, NUMBER, FieldSpec, coerce, field_specs
from riskdiet.model import Predator, Prey

PROBABILITY = FieldSpec(NUMBER, "probability", "", low=0, high=1, percent=True)


@pytest.mark.parametrize(("raw", "value"), [
    (0.25, 0.25), ("0.25", 0.25), (" 25 % ", 0.25), ("25%", 0.25), ("\u22120.5", -0.5), (1, 1.0),
])
def test_numbers_accept_spreadsheet_spellings(raw, value):
    """Numbers may come as text, with a percent sign or a typographic minus
    (common spreadsheet practice); types only, ranges are checked later."""
    assert coerce(PROBABILITY, raw, "x") == (pytest.approx(value), None)


@pytest.mark.parametrize("raw", ["lots", True, [1], "nan", "inf"])
def test_non_numbers_are_problems_naming_the_location(raw):
    """Text, booleans, lists and non-finite values are not numbers (common practice)."""
    value, problem = coerce(PROBABILITY, raw, "prey[0].capture_success")
    assert value is None
    assert problem.where == "prey[0].capture_success"
    assert problem.expected == "a number from 0 to 1"


def test_integers_refuse_fractions_and_blanks_are_not_given():
    """Whole-number fields refuse 10.5; blank cells mean "not given" (MODEL.md section 1)."""
    spec = FieldSpec(INTEGER, "count", "", low=10, high=2000)
    assert coerce(spec, 10.0, "x") == (10, None)
    assert coerce(spec, 10.5, "x")[1].expected == "a whole number from 10 to 2000"
    assert coerce(spec, "  ", "x") == (None, None)
    assert coerce(spec, None, "x") == (None, None)


@pytest.mark.parametrize(("raw", "value"), [("yes", True), ("No", False), (1, True),
                                            ("true", True), (False, False)])
def test_booleans_accept_yes_no(raw, value):
    """yes/no fields accept yes/no, true/false and 1/0 (common practice)."""
    assert coerce(FieldSpec(BOOLEAN, "yes/no", ""), raw, "x") == (value, None)


def test_every_field_has_a_unit_and_a_description():
    """Every input field carries its unit and a plain-language description, so the
    template and the brief can show them (MODEL.md section 1 lists a unit for
    every field)."""
    for cls in (Predator, Prey):
        specs = field_specs(cls)
        assert set(specs) == {f.name for f in dataclasses.fields(cls)}
        for name, spec in specs.items():
            assert spec.unit, name
            assert spec.description.strip(), name


def test_bounds_are_described_in_words():
    """Open and closed bounds read as words (MODEL.md section 1: mu in [0, 1),
    capacity > 0)."""
    specs = field_specs(Predator)
    words = specs["background_mortality"].expected()
    assert words == "a number from 0 up to, but not including, 1"
    assert specs["reserve_capacity_mj"].expected() == "a number > 0"
    assert not specs["background_mortality"].in_range(1.0)
    assert specs["background_mortality"].in_range(0.0)
