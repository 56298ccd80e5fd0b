"""A new study with the fitted values in place (``riskdiet fit --out``).

The fitted study is the input study in the JSON layout with each identified
fitted input replaced by its maximum-likelihood value and a note saying so
(value, 95 % profile interval, records, date-free so the file is reproducible).
An input the records cannot identify keeps its value, with a note saying why.
The workbook is written by :func:`riskdiet.io.template.workbook_bytes`, the
writer of every study workbook, so it reads back as the same study.
"""

from __future__ import annotations

from pathlib import Path

from riskdiet.analysis.fit import FitResult
from riskdiet.io.json_study import study_to_dict
from riskdiet.model import Study

SIGNIFICANT = 6
"""Significant digits of a fitted value written into the study."""


def _note(f, records: int) -> str:
    pieces = " ∪ ".join(f"{p.low:.3g}–{p.high:.3g}" for p in f.interval.pieces)
    if not f.identified:
        return (f"riskdiet fit: the {records} field records cannot identify {f.name} (the 95 % "
                f"interval spans the whole search range {f.search[0]:g}–{f.search[1]:g}); "
                "value left as entered.")
    bound = " (reaches the search range's end)" if f.interval.at_bound else ""
    return (f"riskdiet fit: maximum-likelihood value from {records} field records; 95 % "
            f"profile-likelihood interval {pieces}{bound}.")


def fitted_study_dict(study: Study, result: FitResult) -> dict:
    """The study in the JSON layout with the fitted values in place and a note on each."""
    raw = study_to_dict(study)
    records = result.data.observations
    predator = raw["predator"]
    notes = dict(predator.get("notes") or {})
    for f in result.fitted:
        value = float(f"{f.value:.{SIGNIFICANT}g}")
        note = _note(f, records)
        if ":" in f.name:
            prey_name, field = f.name.rsplit(":", 1)
            for row in raw["prey"]:
                if row["name"] == prey_name:
                    if f.identified:
                        row[field] = value
                    row["note"] = (str(row.get("note") or "") + f" {field}: {note}").strip()
        else:
            if f.identified:
                predator[f.name] = value
            notes[f.name] = ((notes.get(f.name, "") + " ") if notes.get(f.name) else "") + note
    if notes:
        predator["notes"] = notes
    return raw


def fitted_workbook_bytes(study: Study, result: FitResult) -> bytes:
    """The fitted study as .xlsx bytes (deterministic)."""
    from riskdiet.io.template import workbook_bytes

    return workbook_bytes(fitted_study_dict(study, result))


def write_fitted_study(path: str | Path, study: Study, result: FitResult, outputs) -> Path:
    """Stage the fitted study workbook in an :class:`riskdiet.io.atomic.OutputSet`."""
    data = fitted_workbook_bytes(study, result)
    return outputs.stage(Path(path), lambda tmp: tmp.write_bytes(data))
