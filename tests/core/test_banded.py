"""Tests of the band storage of I - P (riskdiet.core.banded).

References used below:
Anderson, E. et al. (1999). LAPACK Users' Guide, 3rd ed., SIAM, section 5.3.3
(band storage: entry (i, j) at row ku + i - j of column j; gbtrf needs kl more
rows for the fill-in of its pivots).
The reference matrix is riskdiet.core.solver.transition_matrix (the sparse
single-study chain, tested against Feller's ruin problem and a simulation);
the reference solves are scipy.linalg.solve on the dense matrix.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg as sla
from conftest import grid_of, injury_raw

from riskdiet.core.banded import (
    BandLayout,
    band_layout,
    deinterleave,
    factor_solve,
    interleave,
)
from riskdiet.core.grid import attack_probabilities, outcomes, stack_grids, targets
from riskdiet.core.solver import transition_matrix

LEVELS = 24


def _grids():
    """Invented variants of the three-prey injury study (illustrative numbers):
    integer and fractional costs, so splits land on one level or two; the
    first and last cells differ only in hunting ability, so their entries land
    on the same levels."""
    raws = [injury_raw(energy_levels=LEVELS, daily_cost_mj=c, hunting_ability=a)
            for c, a in ((1.3, 1.1), (2.5, 0.4), (1.0, 2.0), (1.75, 3.5), (1.3, 2.2))]
    return [grid_of(raw)[2] for raw in raws]


def _policy(grid, seed):
    """A random ranked attack set per state (any policy has the same band layout)."""
    rng = np.random.default_rng(seed)
    n_prey = grid.n_prey
    shape = (*grid.cost.shape[:-1], 2, grid.n_living)
    ranks = np.argsort(rng.random((*shape, n_prey)), axis=-1)
    return np.where(rng.random((*shape, n_prey)) < 0.7, ranks, -1)


def _dense_from_band(band, kl, ku):
    """Unpack one cell's band storage (n, 2 kl + ku + 1) into a dense matrix."""
    n = band.shape[0]
    dense = np.zeros((n, n))
    for j in range(n):
        for i in range(max(0, j - ku), min(n, j + kl + 1)):
            dense[i, j] = band[j, kl + ku + i - j]
    return dense


@pytest.fixture(scope="module")
def batch():
    grids = _grids()
    stacked = stack_grids(grids)
    tg = targets(stacked)
    priority = _policy(stacked, seed=3)
    parts = outcomes(stacked, tg, attack_probabilities(stacked.encounter_prob, priority))
    layout = band_layout(stacked, parts)
    band = layout.assemble(parts)
    breed = layout.breed_chance(parts)
    references = []
    for b, grid in enumerate(grids):
        one = outcomes(grid, targets(grid),
                       attack_probabilities(grid.encounter_prob, priority[b]))
        chain, reach = transition_matrix(grid, one)
        references.append((np.eye(2 * grid.n_living) - chain.toarray(), reach))
    return grids, stacked, parts, layout, band, breed, references


def test_interleave_orders_states_level_by_level():
    """State (j, k) sits at 2 (j - 1) + k, and deinterleave undoes it (the
    level-major order of the band, common practice)."""
    x = np.arange(10.0).reshape(2, 5)
    flat = interleave(x)
    assert flat[2 * 3 + 1] == x[1, 3]
    assert flat[2 * 4 + 0] == x[0, 4]
    np.testing.assert_array_equal(deinterleave(flat), x)


def test_band_assembly_equals_the_sparse_single_study_matrix(batch):
    """Unpacked from band storage (LAPACK Users' Guide 5.3.3), each cell's I - P and
    breeding chance equal riskdiet.core.solver.transition_matrix's, permuted to
    level-major order, to rounding (1e-15)."""
    grids, _, _, layout, band, breed, references = batch
    for b, grid in enumerate(grids):
        m = grid.n_living
        perm = np.array([k * m + j for j in range(m) for k in range(2)])
        dense, reach = references[b]
        np.testing.assert_allclose(_dense_from_band(band[b], layout.kl, layout.ku),
                                   dense[np.ix_(perm, perm)], rtol=0, atol=1e-15)
        np.testing.assert_allclose(breed[b], reach[perm], rtol=0, atol=1e-15)


def test_bandwidths_are_those_of_the_matrix(batch):
    """kl and ku are the largest distances below and above the diagonal of a
    nonzero chance over the batch's cells, for any policy (LAPACK needs them
    to hold every entry; tighter is faster)."""
    grids, stacked, _, layout, _, _, _ = batch
    full = np.broadcast_to(np.arange(stacked.n_prey), (*stacked.cost.shape[:-1], 2,
                                                       stacked.n_living, stacked.n_prey))
    lower = upper = 0
    for b, grid in enumerate(grids):
        m = grid.n_living
        perm = np.array([k * m + j for j in range(m) for k in range(2)])
        one = outcomes(grid, targets(grid), attack_probabilities(grid.encounter_prob, full[b]))
        chain = transition_matrix(grid, one)[0].toarray()[np.ix_(perm, perm)]
        rows, cols = np.nonzero(chain)
        lower, upper = max(lower, (rows - cols).max()), max(upper, (cols - rows).max())
    assert (layout.kl, layout.ku) == (lower, upper)


def test_layout_of_a_subset_assembles_the_same_cells(batch):
    """Assembling some cells of the layout gives the same band storage as the
    full batch for those cells (the policy iteration drops finished cells),
    and so does solving them (common practice: cover the index paths)."""
    _, _, parts, layout, band, breed, _ = batch
    keep = np.array([3, 1])
    sub_parts = [type(o)(o.prob[keep], o.split, o.healthy_share, o.prey, o.captured, o.days)
                 for o in parts]
    sub_band = layout.assemble(sub_parts, keep)
    sub_breed = layout.breed_chance(sub_parts, keep)
    np.testing.assert_array_equal(sub_band, band[keep])
    np.testing.assert_array_equal(sub_breed, breed[keep])
    rhs = np.ones((len(keep), band.shape[1], 1))
    x_sub = factor_solve(layout, layout.entries(sub_parts, keep), rhs, rhs, keep, chunk=1)
    x_all = factor_solve(layout, layout.entries(parts), np.ones((*band.shape[:2], 1)),
                         np.ones((*band.shape[:2], 1)))
    np.testing.assert_array_equal(x_sub[0], x_all[0][keep])
    np.testing.assert_array_equal(x_sub[1], x_all[1][keep])


def test_band_solves_equal_scipy_dense_solves(batch):
    """Banded LU (LAPACK gbtrf/gbtrs, a few cells at a time) solves (I - P) x = r
    and (I - P)^T y = t as scipy.linalg.solve does on the dense single-study
    matrix (riskdiet.core.solver.transition_matrix, level-major), to 1e-12
    relative, for every cell and whatever the chunk size."""
    grids, _, parts, layout, band, _, references = batch
    rng = np.random.default_rng(5)
    rhs = rng.random((band.shape[0], band.shape[1], 3))
    rhs_t = rng.random((band.shape[0], band.shape[1], 2))
    entries = layout.entries(parts)
    for chunk in (1, 2, 4):
        x, y, info = factor_solve(layout, entries, rhs, rhs_t, chunk=chunk)
        assert (info == 0).all()
        for b, grid in enumerate(grids):
            m = grid.n_living
            perm = np.array([k * m + j for j in range(m) for k in range(2)])
            dense = references[b][0][np.ix_(perm, perm)]
            np.testing.assert_allclose(x[b], sla.solve(dense, rhs[b]), rtol=1e-12, atol=0)
            np.testing.assert_allclose(y[b], sla.solve(dense.T, rhs_t[b]), rtol=1e-12, atol=0)


def test_a_singular_system_is_flagged():
    """A zero column makes the matrix singular; gbtrf reports it with info > 0
    (LAPACK Users' Guide: U(i, i) is exactly zero) and the solution is not
    finite, which the solver turns into a failed cell."""
    n, kl, ku = 6, 1, 2
    rows = 2 * kl + ku + 1
    # I - P with P = 1 at (3, 3) only: column 3 of I - P is zero
    layout = BandLayout(kl, ku, n, np.zeros((1, 0)), np.zeros((1, 0), dtype=int),
                        np.array([[3 * rows + kl + ku]]), [])
    x, _, info = factor_solve(layout, np.array([[-1.0]]), np.ones((1, n, 1)),
                              np.ones((1, n, 1)))
    assert info[0] == 4
    assert not np.isfinite(x).all()
