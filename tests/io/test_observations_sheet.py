"""The Observations sheet and JSON ``observations``: reading, validation at the cell, the
homogeneity test on a published table read through the study reader.

Sources: Agresti (2002, Categorical Data Analysis, 2nd ed., Wiley, Table 7.1), primary food
of 219 alligators by lake; G² = 43.195 on 12 df as computed by the reference library
``scipy.stats.chi2_contingency(..., lambda_="log-likelihood")``. The validation rules are
those of issue 13 / MODEL.md section 10.
"""

from __future__ import annotations

import openpyxl
import pytest
from scipy import stats

from riskdiet.analysis.fit import homogeneity
from riskdiet.analysis.fit_data import fit_data
from riskdiet.errors import StudyError
from riskdiet.io.load import load_study
from riskdiet.io.template import build_workbook, write_study_workbook
from riskdiet.validation import build_study
from tests.analysis.fit_studies import records, tiny

FOODS = ("bird", "fish", "invertebrate", "other", "reptile")
LAKES = {"George": (3, 33, 20, 6, 1), "Hancock": (5, 30, 4, 13, 3),
         "Oklawaha": (1, 18, 19, 3, 7), "Trafford": (4, 13, 18, 10, 8)}


def test_homogeneity_on_agresti_alligator_table_read_from_a_workbook(tmp_path):
    """Agresti (2002) Table 7.1 entered as four sources of scats records in an Observations
    sheet and read back by the workbook reader: the homogeneity G-test gives G² = 43.195 on
    12 df, as scipy.stats.chi2_contingency(lambda_="log-likelihood") does."""
    raw = tiny(fit="hunting_ability")
    raw["prey"] = [{"name": f, "encounters_per_day": 0.5, "energy_mj": 5 + i,
                    "handling_days": 0.2, "capture_success": 0.4, "skill_dependent": True}
                   for i, f in enumerate(FOODS)]
    raw["observations"] = [row for lake, counts in LAKES.items()
                           for row in records(dict(zip(FOODS, counts, strict=True)),
                                              kind="scats", source=lake)]
    path = write_study_workbook(tmp_path / "alligators.xlsx", raw)
    study = load_study(path)
    (test,) = [h.test for h in homogeneity(fit_data(study))]
    ref = stats.chi2_contingency(list(LAKES.values()), lambda_="log-likelihood")
    assert test.g == pytest.approx(ref.statistic, rel=1e-10)
    assert test.g == pytest.approx(43.195, abs=5e-4)
    assert test.df == 12 == ref.dof


def _workbook_with(tmp_path, rows):
    wb = build_workbook(tiny())
    ws = wb["Observations"]
    header = [c.value for c in ws[1]]
    for r, row in enumerate(rows, start=2):
        for key, value in row.items():
            ws.cell(row=r, column=header.index(key) + 1, value=value)
    path = tmp_path / "bad.xlsx"
    wb.save(path)
    return path


def test_bad_observations_are_reported_at_their_cells(tmp_path):
    """Unknown prey, negative and fractional counts, detection at or below 0, a wrong kind,
    predator_days on a prey row, a composition whose counts are all 0 and an unknown
    scenario are each reported at their own cell of the Observations sheet, all at once
    (issue 13 item 1)."""
    path = _workbook_with(tmp_path, [
        {"prey": "dear", "count": 3},
        {"prey": "hare", "count": -2},
        {"prey": "boar", "count": 2.5},
        {"prey": "deer", "count": 4, "detection": 0, "source": "x"},
        {"prey": "hare", "count": 1, "kind": "bones", "source": "y"},
        {"prey": "boar", "count": 1, "predator_days": 20, "source": "z"},
        {"prey": "deer", "count": 1, "scenario": "winter", "source": "w"},
    ])
    with pytest.raises(StudyError) as err:
        load_study(path)
    where = {p.where for p in err.value.problems}
    assert {"Observations!A2 (prey)", "Observations!B3 (count)", "Observations!B4 (count)",
            "Observations!D5 (detection)", "Observations!C6 (kind)",
            "Observations!H7 (predator_days)", "Observations!E8 (scenario)"} <= where
    assert 'did you mean "deer"' in str(err.value)


def test_a_composition_of_zeros_and_a_prey_twice_are_refused():
    """A composition whose counts are all zero holds no records, and a prey listed twice in
    one composition is ambiguous: both are errors at their JSON paths (issue 13 item 1)."""
    rows = records({"deer": 0, "hare": 0}, source="a") + records({"deer": 2}, source="b") \
        + records({"deer": 1}, source="b")
    with pytest.raises(StudyError) as err:
        build_study(tiny(rows))
    where = [p.where for p in err.value.problems]
    assert "observations[0].count" in where and "observations[3].prey" in where


def test_template_read_me_explains_detection_with_an_example():
    """The Read me sheet explains detection with a worked example from scat correction
    factors (issue 13 item 1) and lists every Observations column."""
    wb = build_workbook(None)
    text = " ".join(str(c.value) for row in wb["Read me"].iter_rows() for c in row if c.value)
    assert "detection is the relative chance" in text and "scats" in text
    assert "give deer detection 20 and hare 2" in text
    header = [c.value for c in wb["Observations"][1]]
    assert header == ["prey", "count", "kind", "detection", "scenario", "source", "note",
                      "predator_days"]


def test_observations_round_trip_through_json_and_workbook(tmp_path):
    """Records written into a study workbook read back as the same rows (the reader and the
    writer share one layout)."""
    rate = {"count": 7, "kind": "kills", "predator_days": 30.5, "detection": 0.8}
    raw = tiny([*records({"deer": 3, "hare": 5}, source="pack"), rate])
    study = build_study(raw)
    path = write_study_workbook(tmp_path / "s.xlsx", study)
    again = load_study(path)
    strip = [(o.prey, o.count, o.kind, o.detection, o.source, o.predator_days)
             for o in study.observations]
    assert [(o.prey, o.count, o.kind, o.detection, o.source, o.predator_days)
            for o in again.observations] == strip
    assert openpyxl.load_workbook(path)["Observations"].max_row >= 4
