"""Plain-language findings are generated from the numbers, not written per study."""

from __future__ import annotations

import json
from pathlib import Path

import riskdiet
from riskdiet.analysis.compare import entry_reserves
from riskdiet.analysis.wording import amount
from riskdiet.validation import build_study

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "harrow-vale.json"


def _solve(raw):
    return riskdiet.solve(build_study(raw))


def test_findings_quote_the_computed_numbers():
    """The first sentence quotes the released cohort's computed kills by group, a
    later one the computed fitness at start to two places, and the kill sentence
    quotes the computed long-run kills (generated text follows the numbers)."""
    result = riskdiet.solve(riskdiet.load_study(EXAMPLE))
    for s in result.scenarios:
        livestock = s.cohort.kills_by_group["livestock"]
        assert f"{livestock:,.0f} livestock" in s.findings[0]
        assert any(f"probability {s.fitness_at_start:.2f}" in f for f in s.findings)
        top = max(s.kills.kills_per_predator_per_year.items(), key=lambda kv: kv[1])
        assert any(f"{amount(top[1])} {top[0]}" in f for f in s.findings)


def test_unwanted_prey_threshold_sentence_matches_policy():
    """When a livestock prey is taken only below some reserve level, the sentence names that
    level, read from the policy (MODEL.md section 7)."""
    raw = json.loads(EXAMPLE.read_text())
    raw["scenarios"] = []
    for p in raw["prey"]:
        if p["name"] == "upland ewe":
            # lethal control and a wary flock make ewes a last resort
            p["fatality_chance"], p["capture_success"] = 0.25, 0.3
    result = _solve(raw)
    s = result.scenarios[0]
    upper = entry_reserves(s, "upland ewe", "healthy")
    assert upper is not None and upper < 0.85
    sentence = [f for f in s.findings if "upland ewe enters the diet" in f]
    assert sentence and f"{100 * upper:.0f} %" in sentence[0]


def test_findings_change_with_inputs():
    """Different inputs give different sentences (no fixed text per demo)."""
    raw = json.loads(EXAMPLE.read_text())
    raw["scenarios"] = []
    a = _solve(raw).scenarios[0].findings
    raw["predator"]["hunting_ability"] = 0.5
    b = _solve(raw).scenarios[0].findings
    assert a[0] != b[0]


def test_scenario_findings_compare_with_baseline():
    """Non-baseline scenarios say how the chance changes against the baseline, with the
    signed difference of the two computed values (in words where it rounds to zero)."""
    result = riskdiet.solve(riskdiet.load_study(EXAMPLE))
    base = result.scenarios[0]
    for s in result.scenarios[1:]:
        d = s.fitness_at_start - base.fitness_at_start
        if abs(d) >= 0.005:
            assert any(f"changes by {d:+.2f}" in f for f in s.findings)
        else:  # a difference that rounds to nothing is said in words, never as "-0.00"
            assert any("changes by less than 0.01" in f or "does not change" in f
                       for f in s.findings)
            assert not any("-0.00" in f or "+0.00 " in f for f in s.findings)
