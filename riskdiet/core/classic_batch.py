"""Charnov's rate-maximising diet (MODEL.md section 6) for many cells at once.

The batched entry point reports, for every map cell or draw, which prey the
classic prey model includes. :func:`riskdiet.core.classic.classic_prey_model`
does that and much more (ranks, thresholds, the risk-adjusted diet, a
statement) for one cell; here only the diet, with the same arithmetic along a
leading cell axis, so each cell's diet is the one of the single model.

References
----------
.. [1] Charnov, E. L. (1976) Optimal foraging: attack strategy of a mantid.
   American Naturalist 110, 141-151.
.. [2] Holling, C. S. (1959) Some characteristics of simple types of
   predation and parasitism. Canadian Entomologist 91, 385-398.
"""

from __future__ import annotations

import numpy as np


def rate_maximizing_diets(encounters_per_day: np.ndarray, energy_mj: np.ndarray,
                          handling_days: np.ndarray, capture_success: np.ndarray
                          ) -> np.ndarray:
    """Which prey each cell's rate-maximising diet includes (zero-one rule).

    Parameters
    ----------
    encounters_per_day : ndarray, shape (B, P)
        lambda_i = m_i [1/day].
    energy_mj : ndarray, shape (B, P)
        e_i [MJ].
    handling_days : ndarray, shape (B, P)
        h_i [day]; zero handling is infinitely profitable (zero energy too: 0).
    capture_success : ndarray, shape (B, P)
        s_i [0-1].

    Returns
    -------
    ndarray of bool, shape (B, P)
        Rank by e_i / h_i (ties: listed first); walking down the ranking the
        k-th prey joins while e_k / h_k >= R(top k - 1), Holling's rate
        R(D) = sum a_i e_i / (1 + sum a_i h_i) with a_i = lambda_i s_i; the
        first that fails ends the diet.
    """
    lam = np.asarray(encounters_per_day, dtype=float)
    e = np.asarray(energy_mj, dtype=float)
    h = np.asarray(handling_days, dtype=float)
    s = np.asarray(capture_success, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        profitability = e / h
    profitability = np.where(h == 0, np.where(e > 0, np.inf, 0.0), profitability)
    order = np.argsort(-profitability, axis=-1, kind="stable")
    gain = np.take_along_axis(lam * s * e, order, -1)
    handling = np.take_along_axis(lam * s * h, order, -1)
    zero = np.zeros_like(gain[..., :1])
    gain_before = np.concatenate([zero, np.cumsum(gain, axis=-1)[..., :-1]], axis=-1)
    handling_before = np.concatenate([zero, np.cumsum(handling, axis=-1)[..., :-1]], axis=-1)
    joins = np.take_along_axis(profitability, order, -1) >= gain_before / (1.0 + handling_before)
    diet = np.empty(joins.shape, dtype=bool)
    np.put_along_axis(diet, order, np.logical_and.accumulate(joins, axis=-1), -1)
    return diet
