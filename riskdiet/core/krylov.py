"""BiCGSTAB with little per-iteration overhead, for the policy solve's systems.

The policy solve evaluates each policy with a few linear solves of
(I - P) x = b (MODEL.md section 3) and the chain reads rows of its
fundamental matrix (section 5). On the grids riskdiet uses (a few thousand
unknowns, about ten non-zeros a row) one iteration's arithmetic takes tens of
microseconds, and a general-purpose implementation that wraps the matrix in
an operator object spends about as long again in Python per iteration. This
is the textbook iteration written directly on arrays: two sparse products and
a handful of vector operations per iteration, nothing else.

The caller decides whether an answer is good enough (riskdiet checks every
state's residual, :meth:`riskdiet.core.solver.LinearSolve.accepted`); this
module only iterates.

References
----------
.. [1] van der Vorst, H. A. (1992). Bi-CGSTAB: a fast and smoothly
   converging variant of Bi-CG for the solution of nonsymmetric linear
   systems. SIAM Journal on Scientific and Statistical Computing 13, 631-644.
.. [2] Saad, Y. (2003). Iterative Methods for Sparse Linear Systems, 2nd ed.
   SIAM, algorithm 7.7.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp

__all__ = ["bicgstab"]


def bicgstab(matrix: sp.csr_matrix, rhs: np.ndarray, guess: np.ndarray | None = None,
             rtol: float = 1e-14, maxiter: int | None = None) -> tuple[np.ndarray, bool]:
    """Solve A x = b by BiCGSTAB.

    Parameters
    ----------
    matrix : sparse matrix, shape (N, N)
        A, non-singular (riskdiet passes I - P or its transpose).
    rhs : ndarray, shape (N,)
        b.
    guess : ndarray, shape (N,), optional
        Starting point (default zero).
    rtol : float
        Stop when ||b - A x||_2 <= rtol ||b||_2.
    maxiter : int, optional
        Iterations allowed (default 20 N).

    Returns
    -------
    x : ndarray, shape (N,)
        The last finite iterate.
    converged : bool
        Whether the stopping test was met; False after a breakdown (a zero
        or non-finite denominator) or when the iterations ran out.

    Notes
    -----
    r = b - A x, r^ = r; then with rho = r^ . r and
    beta = (rho / rho_old)(alpha / omega): p = r + beta (p - omega v),
    v = A p, alpha = rho / (r^ . v), s = r - alpha v, t = A s,
    omega = (t . s) / (t . t), x += alpha p + omega s, r = s - omega t
    [1]_, [2]_. When s already meets the test the step ends with
    x += alpha p.
    """
    b = np.asarray(rhs, dtype=float)
    size = b.shape[0]
    maxiter = 20 * size if maxiter is None else maxiter
    limit = rtol * math.sqrt(float(b @ b))
    if guess is None:
        x = np.zeros(size)
        r = b.copy()
    else:
        x = np.array(guess, dtype=float)
        r = b - matrix @ x
    if math.sqrt(float(r @ r)) <= limit:
        return x, True
    r_hat = r.copy()
    p = r.copy()
    v = np.zeros(size)
    rho_old = alpha = omega = 1.0
    for iteration in range(maxiter):
        rho = float(r_hat @ r)
        if iteration:
            if rho == 0.0 or omega == 0.0:
                return x, False
            beta = (rho / rho_old) * (alpha / omega)
            p = r + beta * (p - omega * v)
        v = matrix @ p
        denominator = float(r_hat @ v)
        if denominator == 0.0 or not math.isfinite(denominator):
            return x, False
        alpha = rho / denominator
        s = r - alpha * v
        if math.sqrt(float(s @ s)) <= limit:
            x = x + alpha * p
            return x, bool(np.isfinite(x).all())
        t = matrix @ s
        tt = float(t @ t)
        if tt == 0.0 or not math.isfinite(tt):
            return x, False
        omega = float(t @ s) / tt
        x = x + alpha * p + omega * s
        r = s - omega * t
        rho_old = rho
        if math.sqrt(float(r @ r)) <= limit:
            return x, bool(np.isfinite(x).all())
    return x, False
