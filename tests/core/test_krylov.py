"""Tests of the BiCGSTAB used by the policy solve (riskdiet.core.krylov).

References used below: van der Vorst, H. A. (1992). Bi-CGSTAB. SIAM J. Sci.
Stat. Comput. 13, 631-644 (the iteration and its breakdown when r^ . A p = 0);
LAPACK's dense LU through scipy.linalg.solve and scipy.sparse.linalg.bicgstab
(reference libraries).
"""

from __future__ import annotations

import numpy as np
import scipy.linalg
import scipy.sparse as sp
import scipy.sparse.linalg as sla

from riskdiet.core.krylov import bicgstab


def chain_system(size: int, seed: int) -> sp.csr_matrix:
    """I - P for a random sparse sub-stochastic P (rows sum to 0.97 at most), the
    kind of system the policy solve meets."""
    rng = np.random.default_rng(seed)
    p = sp.random(size, size, density=8 / size, random_state=rng, format="csr")
    p = sp.diags(0.97 / np.maximum(np.asarray(p.sum(1)).ravel(), 1e-300)) @ p
    return (sp.identity(size, format="csr") - p).tocsr()


def test_bicgstab_solves_a_chain_system_like_a_dense_lu():
    """x of (I - P) x = b agrees with LAPACK's dense solve (scipy.linalg.solve)
    to 1e-12 relative, from zero and from a rough guess, and with
    scipy.sparse.linalg.bicgstab run to the same tolerance."""
    matrix = chain_system(400, 3)
    b = np.random.default_rng(4).random(400)
    exact = scipy.linalg.solve(matrix.toarray(), b)
    x, converged = bicgstab(matrix, b)
    assert converged
    np.testing.assert_allclose(x, exact, rtol=1e-12)
    x, converged = bicgstab(matrix, b, guess=exact * 1.1)
    assert converged
    np.testing.assert_allclose(x, exact, rtol=1e-12)
    reference, info = sla.bicgstab(matrix, b, rtol=1e-14, atol=0.0)
    assert info == 0
    np.testing.assert_allclose(x, reference, rtol=1e-12)


def test_bicgstab_stops_at_an_exact_guess_and_on_a_zero_right_hand_side():
    """An exact starting point (scipy.linalg.solve) already meets the test and is
    returned as it is; b = 0 gives x = 0."""
    matrix = chain_system(50, 5)
    b = np.random.default_rng(6).random(50)
    exact = scipy.linalg.solve(matrix.toarray(), b)
    x, converged = bicgstab(matrix, b, guess=exact)
    assert converged
    np.testing.assert_array_equal(x, exact)
    x, converged = bicgstab(matrix, np.zeros(50))
    assert converged
    assert not x.any()


def test_bicgstab_reports_a_breakdown_and_running_out():
    """For A = [[0, 1], [1, 0]] and b = e_1 the first step has r^ . A p = 0, the
    breakdown of the iteration (van der Vorst 1992), reported as not converged;
    so is a system that needs more iterations than allowed."""
    swap = sp.csr_matrix(np.array([[0.0, 1.0], [1.0, 0.0]]))
    x, converged = bicgstab(swap, np.array([1.0, 0.0]))
    assert not converged
    assert np.isfinite(x).all()
    rhs = np.random.default_rng(4).random(400)
    _, converged = bicgstab(chain_system(400, 3), rhs, maxiter=1)
    assert not converged
