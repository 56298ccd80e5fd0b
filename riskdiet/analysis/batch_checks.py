"""Which cells of a batch certainly pass the input checks, in array operations.

Every cell of a map or a set of draws is a full set of inputs that
:func:`riskdiet.validation.check_values` must accept before it is solved.
Checking tens of thousands of cells one record at a time costs as much as a
good part of their solves, and almost every cell passes. So the rules of
``check_values`` that can raise a problem (each numeric field within its
bounds; the cross-field rules) are evaluated here for all cells at once; a
cell that fails any of them goes through ``check_values`` itself, which
reports every problem with its location. A rule missing here would only send
fewer cells to ``check_values``, so this list must follow that function's
problem rules (notices do not matter: cells report problems only).
"""

from __future__ import annotations

import functools

import numpy as np

from riskdiet.fields import field_specs
from riskdiet.model import Predator, Prey
from riskdiet.validation import ARRAY_LIMIT_BYTES, array_bytes


@functools.cache
def _numeric(cls: type) -> tuple[tuple[str, ...], np.ndarray, np.ndarray, np.ndarray,
                                 np.ndarray]:
    """Numeric fields of a record type with their bounds (inf where unbounded)."""
    specs = {n: s for n, s in field_specs(cls).items() if s.numeric}
    low = np.array([-np.inf if s.low is None else s.low for s in specs.values()])
    high = np.array([np.inf if s.high is None else s.high for s in specs.values()])
    low_open = np.array([s.low_open for s in specs.values()])
    high_open = np.array([s.high_open for s in specs.values()])
    return tuple(specs), low, high, low_open, high_open


def _in_range(values: np.ndarray, blank: np.ndarray, cls: type) -> np.ndarray:
    """FieldSpec.in_range for every value along the last axis (blanks pass)."""
    _, low, high, low_open, high_open = _numeric(cls)
    with np.errstate(invalid="ignore"):
        ok = (np.isfinite(values) & (values >= low) & ~(low_open & (values == low))
              & (values <= high) & ~(high_open & (values == high)))
    return (ok | blank).all(-1)


@functools.cache
def _names_ok(names: tuple[str, ...]) -> bool:
    keys = [n.strip().lower() for n in names]
    return bool(names) and len(set(keys)) == len(keys) and not any(":" in n for n in names)


def problem_free(inputs: list[tuple[Predator, tuple[Prey, ...]]]) -> np.ndarray:
    """Whether each cell certainly passes :func:`riskdiet.validation.check_values`.

    Parameters
    ----------
    inputs : list of (Predator, tuple of Prey)
        The cells' inputs, all with the same number of prey.

    Returns
    -------
    ndarray of bool, shape (B,)
        True where no problem rule of ``check_values`` applies: every numeric
        field in its bounds, a daily cost or a body mass, the two mortalities
        summing below 1, breeding level >= 2 (breeding) or a season length
        (season), arrays within 2 GiB, unique prey names without ':', and
        encounters given directly or by density and search area. False cells
        must be checked by ``check_values`` (which may still accept them).
    """
    pred_names = _numeric(Predator)[0]
    prey_names = _numeric(Prey)[0]

    raw_pred = [[getattr(p, f) for f in pred_names] for p, _ in inputs]
    raw_prey = [[[getattr(q, f) for f in prey_names] for q in qs] for _, qs in inputs]
    blank = np.array([[v is None for v in row] for row in raw_pred], dtype=bool)
    prey_blank = np.array([[[v is None for v in row] for row in qs] for qs in raw_prey],
                          dtype=bool).reshape(len(inputs), -1, len(prey_names))
    pred = np.array([[0.0 if v is None else v for v in row] for row in raw_pred], dtype=float)
    prey = np.array([[[0.0 if v is None else v for v in row] for row in qs]
                     for qs in raw_prey], dtype=float).reshape(prey_blank.shape)
    ok = _in_range(pred, blank, Predator) & _in_range(prey, prey_blank, Prey).all(-1)
    col = {f: k for k, f in enumerate(pred_names)}
    qcol = {f: k for k, f in enumerate(prey_names)}
    ok &= ~(blank[:, col["daily_cost_mj"]] & blank[:, col["body_mass_kg"]])
    with np.errstate(invalid="ignore"):
        ok &= (pred[:, col["background_mortality"]] + pred[:, col["injured_extra_mortality"]]
               < 1)
    no_rate = prey_blank[..., qcol["encounters_per_day"]]
    no_density = prey_blank[..., qcol["density_per_km2"]]
    ok &= ~(no_rate & (no_density | blank[:, col["search_area_km2_per_day"]][:, None])).any(-1)
    for b, (p, qs) in enumerate(inputs):
        if not ok[b]:
            continue
        ok[b] = (_names_ok(tuple(q.name for q in qs))
                 and array_bytes(p, len(qs)) <= ARRAY_LIMIT_BYTES
                 and (p.breeding_level >= 2 if p.currency == "breeding"
                      else p.currency != "season" or p.season_days is not None))
    return ok
