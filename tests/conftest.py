"""Shared fixtures: invented, illustrative studies used across the tests.

Nothing here is species data. The studies are small (20-40 energy levels) so
that the solver, the simulation and the hypothesis invariants stay fast.
"""

from __future__ import annotations

import copy
import os
import sys
from pathlib import Path

# the independent simulations (tests/simulation.py, tests/chain_simulation.py) are imported
# by tests in sub-folders too
sys.path.insert(0, str(Path(__file__).resolve().parent))

# must be set before typer is first imported, so CLI output carries no colour codes
os.environ["_TYPER_FORCE_DISABLE_TERMINAL"] = "1"
os.environ.pop("FORCE_COLOR", None)
os.environ.pop("PY_COLORS", None)

import pytest

from riskdiet.core.grid import make_grid
from riskdiet.model import BASELINE
from riskdiet.validation import build_study

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "examples" / "harrow-vale.json"

# An invented three-prey study with every injury mechanism switched on, fractional
# energies and fractional handling days (illustrative, not field data).
INJURY_STUDY = {
    "predator": {
        "name": "test predator (illustrative)",
        "reserve_capacity_mj": 30.0,
        "energy_levels": 30,
        "daily_cost_mj": 1.3,
        "background_mortality": 0.004,
        "hunting_ability": 1.1,
        "injured_capture_factor": 0.6,
        "injured_extra_cost_mj": 0.45,
        "injured_extra_mortality": 0.012,
        "recovery_days": 4.0,
        "currency": "breeding",
        "breeding_threshold": 0.9,
        "season_days": 40,
        "season_reserve_threshold": 0.5,
        "start_reserves": 0.4,
    },
    "prey": [
        {"name": "vole", "encounters_per_day": 1.2, "energy_mj": 2.7, "handling_days": 0.2,
         "capture_success": 0.45},
        {"name": "deer", "encounters_per_day": 0.5, "energy_mj": 9.55, "handling_days": 1.4,
         "capture_success": 0.3, "injury_chance": 0.3, "injury_energy_mj": 2.25,
         "fatality_chance": 0.02},
        {"name": "boar", "encounters_per_day": 0.35, "energy_mj": 14.3, "handling_days": 2.6,
         "capture_success": 0.28, "injury_chance": 0.5, "injury_energy_mj": 3.15,
         "fatality_chance": 0.05},
    ],
}


def injury_raw(**predator_changes) -> dict:
    """A copy of the injury study in the JSON layout, with predator fields changed."""
    raw = copy.deepcopy(INJURY_STUDY)
    raw["predator"].update(predator_changes)
    return raw


def grid_of(raw: dict):
    """Validate a raw study and discretise its baseline."""
    study = build_study(raw)
    predator, prey = study.inputs_for(study.scenario(BASELINE))
    return predator, prey, make_grid(predator, prey)


def rounding_below_zero_grid():
    """The smallest case hypothesis found where a hopeless state solves to about -4e-18:
    a never-met prey whose attack always kills (fatality edited to 1, which validation
    forbids) beside a prey that always injures on failure (MODEL.md section 3, "V >= 0")."""
    import dataclasses

    from riskdiet.model import Predator, Prey

    predator = Predator(name="predator", reserve_capacity_mj=10.0, energy_levels=10,
                        daily_cost_mj=0.5, hunting_ability=0.5, currency="breeding",
                        breeding_threshold=1.0, start_reserves=0.5, reserves_after_breeding=0.5,
                        injured_capture_factor=0.0, background_mortality=0.0)
    never_met = Prey(name="prey 0", encounters_per_day=0.0, energy_mj=0.0, handling_days=0.0,
                     capture_success=0.0)
    hurts = Prey(name="prey 1", encounters_per_day=1.0, energy_mj=1.0, handling_days=0.0,
                 capture_success=1.0, injury_chance=1.0, injury_energy_mj=1.0)
    grid = make_grid(predator, (never_met, hurts))
    fatality = grid.fatality.copy()
    fatality[0] = 1.0
    return dataclasses.replace(grid, fatality=fatality)


@pytest.fixture
def example_path() -> Path:
    """The invented demo study shipped with the package."""
    return EXAMPLE
