"""The one number-formatting policy of every manager-facing number (issue 14, item 3).

Rounding rule: MODEL.md section 3, "rounding half up everywhere on this page:
round(x) = ⌊x + 0.5 + 1e−9⌋". Floors such as "< 0.1" and the ban on scientific
notation, NaN and infinity in outputs are the project's rules (issue 14; "never
show a number you cannot vouch for").
"""

from __future__ import annotations

import math
import re

from hypothesis import given
from hypothesis import strategies as st

from riskdiet.analysis.wording import (
    amount,
    change,
    count,
    fixed,
    number,
    percent,
    percent_change,
    probability,
    round_half_up,
    technical,
    value,
)

ANY = st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.none(),
                st.integers(min_value=-10**12, max_value=10**12))
SCIENTIFIC = re.compile(r"\d[eE][+-]?\d")
FORMATTERS = (amount, count, number, value, percent, probability, percent_change,
              lambda x: change(x, "count"), lambda x: change(x, "probability"),
              lambda x: change(x, "fraction"), lambda x: change(x, "number"))


def _float(x):
    return None if x is None else float(x)


@given(ANY)
def test_no_formatter_writes_scientific_notation_nan_or_inf(x):
    """Whatever the value (huge, tiny, NaN, ±infinity, None), no manager-facing
    formatter writes 'e+'/'e-' notation, 'nan' or 'inf' (issue 14 item 3)."""
    for f in FORMATTERS:
        text = f(_float(x)) if f not in (number, value) else f(x)
        assert not SCIENTIFIC.search(text), (f, x, text)
        assert "nan" not in text.lower() and "inf" not in text.lower(), (f, x, text)


@given(st.floats(min_value=1e-300, max_value=0.0499999))
def test_tiny_counts_read_as_a_floor(x):
    """An expected count below what one decimal shows reads "< 0.1" (issue 14 item 3),
    never 0.0 and never a power of ten."""
    assert amount(x) == "< 0.1"


@given(st.floats(min_value=1e-300, max_value=0.0049999))
def test_tiny_shares_and_probabilities_read_as_floors(x):
    """A share below half a percent reads "< 1 %", a probability below 0.005 "< 0.01",
    and the same distance below 1 reads "> 99 %" / "> 0.99" (never "100 %" or "1.00"
    for something that is not certain)."""
    assert percent(x) == "< 1 %"
    assert probability(x) == "< 0.01"
    if 1 - x < 1:  # (1 - x rounds to exactly 1 for the smallest x)
        assert percent(1 - x) == "> 99 %"
        assert probability(1 - x) == "> 0.99"


@given(st.integers(min_value=0, max_value=10**6), st.integers(min_value=0, max_value=3))
def test_halves_round_up(k, d):
    """Exact halves at the last shown place round up, as MODEL.md section 3 fixes:
    round(x) = ⌊x + 0.5 + 1e−9⌋ at that place (Python's own round() would round half to
    even, and binary floating point would turn 0.145 × 100 into 14.4999...)."""
    x = (2 * k + 1) / (2 * 10 ** d)
    expected = (k + 1) / 10 ** d
    assert round_half_up(x, d) == expected
    assert fixed(x, d) == f"{expected:,.{d}f}"


def test_the_worked_examples_of_the_rounding_rule():
    """MODEL.md section 3's own example: 0.145 × 100 rounds to 15; halves go away from
    zero (2.5 -> 3, 0.125 -> 0.13, -2.5 -> -3) and a signed zero is never written."""
    assert fixed(0.145 * 100, 0) == "15"
    assert fixed(2.5, 0) == "3"
    assert fixed(0.125, 2) == "0.13"
    assert fixed(-2.5, 0) == "-3"
    assert fixed(-0.004, 2) == "0.00"


@given(st.floats(min_value=-1e9, max_value=1e9, allow_nan=False))
def test_changes_are_signed_but_never_a_signed_zero(d):
    """A change carries its sign (issue 14: "signed changes only where a change is
    meant"), but one that rounds to nothing at the shown precision is "0", "< 0.01" or
    "< 1 pt", never "-0.00" or "+0"."""
    for kind in ("count", "probability", "fraction", "number"):
        text = change(d, kind)
        assert not re.match(r"^[+-]0(\.0+)?( |$)", text), (kind, d, text)
        if text[:1] in "+-" and text[1:2].isdigit():
            assert (text[0] == "-") == (d < 0)


@given(st.floats(min_value=0.001, max_value=1e12))
def test_numbers_keep_three_significant_figures(x):
    """number() shows x to three significant figures (all digits of whole numbers from
    1,000 up): read back, it is within half a unit of the third figure."""
    text = number(x)
    back = float(text.replace(",", ""))
    exponent = math.floor(math.log10(x))
    assert abs(back - x) <= 0.5 * 10 ** (exponent - 2) * (1 + 1e-9) + 1e-12


def test_words_for_special_values_and_technical_figures():
    """A dash where there is no number, ∞ for an unbounded value; a relative change of
    +1217 % reads "×13" (issue 14 quotes "+1217 %" as unreadable); a technical figure
    such as a residual of 4.52e-05 reads as a power of ten for the appendix."""
    assert number(None) == amount(float("nan")) == "—"
    assert number(float("inf")) == "∞"
    assert percent_change(12.17) == "×13"
    assert percent_change(-0.004) == "0 %"
    assert technical(4.52e-05) == "4.5 × 10⁻⁵"
    assert value(0.0005) == "0.0005"
    assert count(130.0) == "130"
