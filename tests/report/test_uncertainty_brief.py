"""The brief's uncertainty: page 1 and the *Uncertainty and sensitivity* section (issue 12)."""

from __future__ import annotations

import io

from pypdf import PdfReader

from riskdiet.analysis.study import solve
from riskdiet.analysis.uncertainty import run_uncertainty
from riskdiet.report.brief import build_brief
from riskdiet.validation import build_study
from tests.analysis.test_uncertainty import small


def test_brief_shows_intervals_on_page_one_and_the_section():
    """Page 1 gives the cohort numbers with 5-95 % intervals and the chance each scenario
    beats baseline in IPCC AR5 words with the number (Mastrandrea et al. 2010); the section
    has the interval table, the ranking sentence and the Sobol bar chart's caption. Penning
    sheep cuts livestock kills in every draw, so its chance is "virtually certain"."""
    raw = small([{"prey": "sheep", "field": "capture_success", "low": 0.3, "high": 0.8},
                 {"field": "daily_cost_mj", "low": 1.5, "high": 2.5}], draws=16,
                report_date="2026-12-01")
    study = build_study(raw)
    unc = run_uncertainty(study, sobol_n=16)
    pdf = PdfReader(io.BytesIO(build_brief(solve(study), uncertainty=unc)))
    first = pdf.pages[0].extract_text()
    assert "How sure are these numbers?" in first
    assert "virtually certain (p = 1.00)" in first
    i = unc.scenarios[0].interval("cohort_kills_by_group", "livestock")
    assert f"({i.p05:.3g} to {i.p95:.3g})" in first
    text = " ".join(p.extract_text() for p in pdf.pages)
    assert "Uncertainty and sensitivity" in text
    assert "narrowing its range would narrow the answer most" in text.replace("\n", " ")
    assert "Sobol indices of livestock kills" in text.replace("\n", " ")


def test_page_one_verdict_says_how_sure_each_scenario_is():
    """Each verdict sentence on page 1 carries the 5-95 % range of the released animals'
    kills of the plan's groups over the draws and, for a scenario other than the baseline,
    the paired chance that it beats the baseline on the goal in IPCC AR5 words with the
    number (Mastrandrea et al. 2010): the manager need not turn the page to know how sure."""
    raw = small([{"prey": "sheep", "field": "capture_success", "low": 0.3, "high": 0.8}],
                draws=16, report_date="2026-12-01")
    study = build_study(raw)
    unc = run_uncertainty(study, sobol_n=16)
    pdf = PdfReader(io.BytesIO(build_brief(solve(study), uncertainty=unc)))
    first = " ".join(pdf.pages[0].extract_text().split())
    verdict = first[first.index("Verdict"):]
    for s in unc.scenarios:
        i = s.interval("cohort_kills_by_group", "livestock")
        assert f"livestock {i.p05:.3g} to {i.p95:.3g}" in verdict
    assert verdict.count("range over 16 draws of the uncertain inputs") == len(unc.scenarios)
    assert verdict.count("Better than the baseline on the goal: ") == len(unc.scenarios) - 1
