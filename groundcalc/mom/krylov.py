"""Preconditioned conjugate gradients for the symmetric positive definite moment systems.

One loop serves the dense matrix (Jacobi preconditioner, :mod:`groundcalc.mom.solver`) and the
matrix-free operator (block-Jacobi preconditioner, :mod:`groundcalc.mom.fastop`).

References
----------
M. R. Hestenes and E. Stiefel, Methods of conjugate gradients for solving linear systems,
J. Res. NBS 49, 1952; Y. Saad, Iterative Methods for Sparse Linear Systems, 2nd ed., SIAM 2003,
Algorithm 9.1.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

__all__ = ["preconditioned_cg"]


def preconditioned_cg(
    matvec: Callable[[np.ndarray], np.ndarray],
    precond: Callable[[np.ndarray], np.ndarray],
    rhs: np.ndarray,
    tol: float,
    max_iter: int,
    on_residual: Callable[[float], None] | None = None,
):
    """Solve ``A x = rhs`` for symmetric positive definite ``A`` given as ``matvec``.

    Parameters
    ----------
    matvec : callable
        ``p -> A p``.
    precond : callable
        ``r -> M^-1 r`` for a symmetric positive definite preconditioner ``M``.
    rhs : numpy.ndarray
        Right-hand side.
    tol : float
        Stop when ``|r| <= tol |rhs|``.
    max_iter : int
        Largest number of iterations.
    on_residual : callable, optional
        Called with ``|r| / |rhs|`` after every iteration (progress display).

    Returns
    -------
    (x, iterations) or (None, iterations)
        ``None`` when it did not converge or met a non-positive curvature.
    """
    rhs = np.asarray(rhs, dtype=float)
    x = np.zeros_like(rhs)
    r = rhs.copy()
    z = precond(r)
    p = z.copy()
    rz = float(r @ z)
    target = tol * float(np.linalg.norm(rhs))
    for k in range(1, max_iter + 1):
        q = matvec(p)
        curv = float(p @ q)
        if not curv > 0:
            return None, k
        alpha = rz / curv
        x += alpha * p
        r -= alpha * q
        rnorm = float(np.linalg.norm(r))
        if on_residual is not None:
            on_residual(rnorm * tol / target if target > 0 else 0.0)
        if rnorm <= target:
            return x, k
        z = precond(r)
        rz_new = float(r @ z)
        p = z + (rz_new / rz) * p
        rz = rz_new
    return None, max_iter
