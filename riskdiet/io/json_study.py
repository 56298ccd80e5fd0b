"""JSON study files: the same field names as the workbook and MODEL.md."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

from riskdiet.errors import Problem, StudyError
from riskdiet.io.source import file_sha256
from riskdiet.model import Study
from riskdiet.validation import build_study


def read_json_study(path: str | Path) -> Study:
    """Read a JSON study file.

    The layout is ``{"predator": {...}, "prey": [{...}], "scenarios": [{"name",
    "changes": [{"prey", "field", "change", "value"}]}], "uncertainty": [...],
    "settings": {...}}``; errors point at JSON paths such as
    ``prey[2].capture_success``.
    """
    path = Path(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise StudyError([Problem(str(path), "a file riskdiet may read",
                                  exc.strerror or type(exc).__name__)]) from None
    try:
        raw = json.loads(data.decode("utf-8-sig"))
    except UnicodeDecodeError:
        raise StudyError([Problem(str(path), "a UTF-8 text file of JSON",
                                  "bytes that are not text")]) from None
    except json.JSONDecodeError as exc:
        raise StudyError([Problem(f"{path} line {exc.lineno} column {exc.colno}",
                                  "valid JSON", exc.msg)]) from None
    except RecursionError:
        raise StudyError([Problem(str(path), "a JSON study (records nested a few levels "
                                  "deep)", "values nested too deeply to read")]) from None
    except ValueError as exc:  # e.g. an integer of more than 4300 digits
        raise StudyError([Problem(str(path), "valid JSON with numbers of ordinary size",
                                  str(exc).split(";")[0])]) from None
    study = build_study(raw, source=str(path))
    return dataclasses.replace(study, source_sha256=file_sha256(path))


def study_to_dict(study: Study) -> dict:
    """The study as a JSON-ready dictionary in the study-file layout (inputs as given)."""
    from riskdiet.fields import field_specs
    from riskdiet.model import BASELINE, Observation, Predator, Prey, Settings

    def record(obj, cls):
        return {k: getattr(obj, k) for k in field_specs(cls) if getattr(obj, k) is not None}

    predator = record(study.predator, Predator)
    if study.notes:
        predator["notes"] = dict(study.notes)
    return {
        "settings": record(study.settings, Settings),
        "predator": predator,
        "prey": [record(p, Prey) for p in study.prey],
        "scenarios": [
            {"name": s.name, "note": s.note,
             "changes": [{"prey": c.prey, "field": c.field, "change": c.change,
                          "value": c.value} for c in s.changes]}
            for s in study.scenarios if s.name != BASELINE
        ],
        "uncertainty": [
            {"prey": u.prey, "field": u.field, "low": u.low, "high": u.high, "shape": u.shape,
             "mode": u.mode, "note": u.note, "scenario": u.scenario}
            for u in study.uncertainty
        ],
        "observations": [record(o, Observation) for o in study.observations],
    }
