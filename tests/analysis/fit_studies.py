"""Tiny invented studies for the fitting tests (illustrative numbers, ~20 energy levels)."""

from __future__ import annotations

import copy

TINY = {
    "settings": {"study_name": "tiny fit study (illustrative)", "fit": "hunting_ability",
                 "report_date": "2026-12-01"},
    "predator": {"name": "test predator (illustrative)", "reserve_capacity_mj": 20,
                 "energy_levels": 20, "daily_cost_mj": 2, "background_mortality": 0.002,
                 "hunting_ability": 1.0, "breeding_threshold": 1.0},
    "prey": [
        {"name": "deer", "encounters_per_day": 0.6, "energy_mj": 12, "handling_days": 1,
         "capture_success": 0.3, "skill_dependent": True},
        {"name": "hare", "encounters_per_day": 1.0, "energy_mj": 4, "handling_days": 0.1,
         "capture_success": 0.5, "skill_dependent": False},
        {"name": "boar", "encounters_per_day": 0.4, "energy_mj": 15, "handling_days": 1,
         "capture_success": 0.25, "injury_chance": 0.2, "injury_energy_mj": 3},
    ],
    "observations": [],
}


def tiny(observations=None, **settings) -> dict:
    """The tiny study in the JSON layout with the given records and settings."""
    raw = copy.deepcopy(TINY)
    raw["observations"] = list(observations or [])
    raw["settings"].update(settings)
    return raw


def records(counts: dict, kind: str = "kills", source: str | None = None, **extra) -> list:
    """Observation rows from {prey: count}."""
    rows = []
    for prey, n in counts.items():
        row = {"prey": prey, "count": int(n), "kind": kind, **extra}
        if source:
            row["source"] = source
        rows.append(row)
    return rows
