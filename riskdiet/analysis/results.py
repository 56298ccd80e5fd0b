"""Result dataclasses of a solved study: what the CLI, the report and io format.

Every number a person sees comes from one of these frozen dataclasses; their
``to_dict`` methods are the ``solve --json`` layout. Nothing here computes:
:mod:`riskdiet.analysis.study` fills them.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from riskdiet.analysis.grid_check import GridCheck
from riskdiet.analysis.maps import MapResult
from riskdiet.analysis.predictions import CohortKills, SeasonKills, SteadyStateKills
from riskdiet.core.classic import ClassicResult
from riskdiet.core.grid import Grid
from riskdiet.core.solver import Solution
from riskdiet.model import Predator, Prey, Study
from riskdiet.version import __version__

CONDITIONS = ("healthy", "injured")


@dataclass(frozen=True)
class AttackRange:
    """A run of consecutive living levels at which one prey is attacked.

    Attributes
    ----------
    prey : str
        Prey name.
    condition : str
        ``healthy`` or ``injured``.
    low_fraction, high_fraction : float
        Lowest and highest reserves of the run, as fractions of capacity.
    low_mj, high_mj : float
        The same in MJ.
    """

    prey: str
    condition: str
    low_fraction: float
    high_fraction: float
    low_mj: float
    high_mj: float


@dataclass(frozen=True)
class ScenarioResult:
    """State-dependent answer for one scenario.

    Attributes
    ----------
    name : str
        Scenario name (``baseline`` first).
    currency : str
        ``breeding`` or ``season``.
    predator : Predator
        Predator inputs as used (scenario changes applied).
    prey : tuple of Prey
        Prey inputs as used.
    reserves_mj : ndarray, shape (n + 1,)
        Reserves x_j = j R / n at every level [MJ].
    fitness : dict of str to ndarray
        V at every level for ``healthy`` and ``injured`` [probability]; day 0
        for the season currency.
    fitness_at_start : float
        V(j0, healthy) [probability].
    policy : dict of str to list of list of str
        For each condition and level, the prey worth attacking, best first.
    marginal_hunting_ability : float
        dV(j0, healthy)/da, policy held fixed [probability per unit ability].
    elasticity : float or None
        (a / V) dV/da [dimensionless]; None when V = 0 (undefined).
    residual : float
        Final Bellman residual relative to the values (MODEL.md section 3).
    grid, solution
        The discretised inputs and the numeric-core solution, for downstream
        analyses (figures, maps).
    classic : ClassicResult
        The classic prey model for a well-fed forager (MODEL.md section 6).
    kills : SteadyStateKills or None
        Long-run kill predictions (breeding currency).
    season_kills : SeasonKills or None
        Kill predictions over the season (season currency).
    cohort : CohortKills or None
        The released animals' kills, survival and breeding within the
        planning horizon (MODEL.md section 5).
    grid_check : GridCheck or None
        Whether the answer still depends on the number of energy levels
        (MODEL.md section 8).
    viability : str or None
        A plain warning when the released animals mostly die before breeding
        or within weeks; the kill numbers then describe a failing release.
    findings : tuple of str
        Plain-language sentences derived from the numbers.
    """

    name: str
    currency: str
    predator: Predator
    prey: tuple[Prey, ...]
    reserves_mj: np.ndarray
    fitness: dict[str, np.ndarray]
    fitness_at_start: float
    policy: dict[str, list[list[str]]]
    marginal_hunting_ability: float
    elasticity: float | None
    residual: float
    iterations: int
    converged: bool
    linear_solver: str
    grid: Grid = field(repr=False)
    solution: Solution = field(repr=False)
    classic: ClassicResult | None = None
    kills: SteadyStateKills | None = None
    season_kills: SeasonKills | None = None
    cohort: CohortKills | None = None
    grid_check: GridCheck | None = None
    viability: str | None = None
    findings: tuple[str, ...] = ()

    @property
    def prey_names(self) -> list[str]:
        return [p.name for p in self.prey]

    def attack_ranges(self) -> list[AttackRange]:
        """Runs of reserves over which each prey is attacked, per condition."""
        out = []
        n = self.grid.n
        cap = self.predator.reserve_capacity_mj
        living = self.grid.living
        for k, cond in enumerate(CONDITIONS):
            attacked = self.solution.priority[k][living] >= 0  # (m, P)
            for i, name in enumerate(self.prey_names):
                for lo, hi in _runs(attacked[:, i]):
                    jl, jh = living[lo], living[hi]
                    out.append(AttackRange(name, cond, float(jl / n), float(jh / n),
                                           float(jl * cap / n), float(jh * cap / n)))
        return out

    def to_dict(self) -> dict:
        """JSON-ready dictionary (the ``solve --json`` layout)."""
        return {
            "name": self.name,
            "currency": self.currency,
            "reserves_mj": _floats(self.reserves_mj),
            "fitness": {c: _floats(v) for c, v in self.fitness.items()},
            "fitness_at_start": _float(self.fitness_at_start),
            "policy": self.policy,
            "selection_gradient": {"hunting_ability": _float(self.marginal_hunting_ability),
                                   "elasticity": _float(self.elasticity)},
            "residual": _float(self.residual),
            "iterations": self.iterations,
            "converged": self.converged,
            "linear_solver": self.linear_solver,
            "classic": self.classic.to_dict() if self.classic else None,
            **({"steady_state": self.kills.to_dict()} if self.kills else {}),
            **({"season": self.season_kills.to_dict()} if self.season_kills else {}),
            "cohort": self.cohort.to_dict() if self.cohort else None,
            "grid_check": self.grid_check.to_dict() if self.grid_check else None,
            "viability_warning": self.viability,
            "findings": list(self.findings),
        }


@dataclass(frozen=True)
class StudyResult:
    """Results of every scenario of a study.

    Attributes
    ----------
    study : Study
        The study as read.
    scenarios : tuple of ScenarioResult
        Baseline first, then the scenarios in input order.
    riskdiet_version : str
        Version that computed the results.
    map : MapResult or None
        The map asked for in the study's settings (``map_x``, ``map_y``), if any.
    verdict : dict or None
        The scenarios ranked on the study's goal, in words (``goal``, ``ranking``,
        ``summary``, ``sentences``; :mod:`riskdiet.analysis.verdict`).
    """

    study: Study
    scenarios: tuple[ScenarioResult, ...]
    riskdiet_version: str = __version__
    map: MapResult | None = None
    verdict: dict | None = None

    def scenario(self, name: str) -> ScenarioResult:
        for s in self.scenarios:
            if s.name == name:
                return s
        raise KeyError(name)

    def to_dict(self) -> dict:
        """JSON-ready dictionary (the ``solve --json`` document).

        Numbers that are undefined are null, never NaN or infinity: the reason
        is documented beside each such key (README, "JSON output").
        """
        return finite({
            "riskdiet_version": self.riskdiet_version,
            "study_name": self.study.name,
            "input_file": self.study.source,
            "input_sha256": self.study.source_sha256,
            "scenarios": [s.to_dict() for s in self.scenarios],
            "verdict": self.verdict,
            **({"map": {"scenario": self.map.request.scenario,
                        "x": self.map.request.x.target, "y": self.map.request.y.target,
                        "columns": self.map.columns(), "rows": self.map.rows()}}
               if self.map is not None else {}),
        })


def finite(value):
    """Replace every non-finite float in a JSON-ready structure by None.

    The fields that can be undefined are set to None where they are computed;
    this is the last guard, so that no output can ever carry NaN or infinity.
    """
    if isinstance(value, float):
        return value if np.isfinite(value) else None
    if isinstance(value, dict):
        return {k: finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [finite(v) for v in value]
    if isinstance(value, np.generic):
        return finite(value.item())
    return value


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges (inclusive) of consecutive True values."""
    padded = np.concatenate([[False], mask, [False]]).astype(np.int8)
    edges = np.flatnonzero(np.diff(padded))
    return [(int(a), int(b) - 1) for a, b in zip(edges[::2], edges[1::2], strict=True)]


def _float(x: float | None) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if np.isfinite(x) else None


def _floats(a: np.ndarray) -> list[float]:
    return [float(v) for v in np.asarray(a, dtype=float)]


def policy_names(priority: np.ndarray, names: list[str]) -> list[list[str]]:
    """Ranked prey names per level from a priority array of shape (levels, P)."""
    out = []
    for row in priority:
        ranked = sorted((int(r), i) for i, r in enumerate(row) if r >= 0)
        out.append([names[i] for _, i in ranked])
    return out


