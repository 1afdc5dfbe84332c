"""Several metal groups in one solution: bonded at the GPR, or floating.

With the Galerkin matrix ``Z`` of all segments, the unknowns are the segment
currents ``I`` and the potential ``V_k`` of every floating group ``k``:

    Z I - B V = e,      B^T I = 0,

where ``e`` is 1 on segments of the grid and bonded groups (unit GPR) and 0
elsewhere, and column ``k`` of ``B`` is 1 on the segments of floating group
``k``. This bordered system is symmetric but indefinite; eliminating ``I``
leaves the Schur complement on the group potentials,

    (B^T Z^-1 B) V = -B^T Z^-1 e,

which is symmetric positive definite because ``Z`` is. One Cholesky
factorisation of ``Z`` with ``1 + G`` right-hand sides gives everything;
from ``FAST_MIN_SIZE`` segments the same right-hand sides are solved by
the matrix-free operator instead (:mod:`groundcalc.mom.fastop`), one
preconditioner for all of them.
The same factorisation gives the resistance matrix between groups,
``R = (C^T Z^-1 C)^-1`` for the incidence ``C`` of all groups: the
potentials of the groups for given net currents into them, which is
symmetric (Green's reciprocity theorem).
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
import scipy.linalg

from ..geometry.segments import Segments
from ..model import Notice
from ..soil.greens import Greens
from .assembly import assemble
from .solver import CG_MIN_SIZE, Solution, conjugate_gradients, refuse_dense

__all__ = ["GroupSolution", "resistance_matrix", "solve_groups"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class GroupSolution:
    """Result of :func:`solve_groups`, per volt of GPR.

    Attributes
    ----------
    solution : Solution
        Segment currents with the grid at 1 V and the floating groups at
        their own potentials; its resistance is the grid's (GPR over the
        current the grid and bonded groups pass to remote earth).
    names : tuple of str
        Group names, ``names[0] == "grid"``.
    bonded : numpy.ndarray of bool
        Whether each group is held at the GPR.
    group : numpy.ndarray of int
        Group of each segment.
    potential_pu : numpy.ndarray
        Potential of each group per volt of GPR (1 for bonded groups).
    net_current_a : numpy.ndarray
        Net current each group passes to the soil per volt of GPR. [A/V]
    """

    solution: Solution
    names: tuple[str, ...]
    bonded: np.ndarray
    group: np.ndarray
    potential_pu: np.ndarray
    net_current_a: np.ndarray


def _symmetric(z: np.ndarray) -> np.ndarray:
    """Full symmetric matrix from the upper triangle that :func:`assemble` guarantees."""
    return np.triu(z) + np.triu(z, 1).T


def _solve_many(z: np.ndarray, rhs: np.ndarray) -> tuple[np.ndarray, str]:
    """Solve ``Z X = rhs`` for several right-hand sides (columns)."""
    n = z.shape[0]
    if n >= CG_MIN_SIZE:
        cols = []
        for k in range(rhs.shape[1]):
            x, _ = conjugate_gradients(z, rhs[:, k].copy())
            if x is None:
                break
            cols.append(x)
        else:
            return np.column_stack(cols), "conjugate gradients, Jacobi preconditioner (residual 1e-10), per group"
    factor = scipy.linalg.cho_factor(z, lower=False, check_finite=False)
    method = "Cholesky with the Schur complement on the group potentials"
    return scipy.linalg.cho_solve(factor, rhs, check_finite=False), method


def _solve_matrix_free(segments: Segments, greens: Greens, rhs: np.ndarray):
    """``(fast operator, X)`` for ``Z X = rhs`` without a matrix from ``FAST_MIN_SIZE`` segments, else ``(None, None)``.

    One operator and one preconditioner serve every right-hand side
    (:func:`groundcalc.mom.fastop.fast_solve`); any failure returns to the
    dense path.
    """
    from . import fastop

    if len(segments) < fastop.FAST_MIN_SIZE:
        return None, None
    fast, x, _ = fastop.fast_solve(segments, greens, rhs)
    return fast, x


def solve_groups(
    segments: Segments, greens: Greens, group: np.ndarray, bonded: np.ndarray, names: tuple[str, ...] = ()
) -> GroupSolution:
    """Currents of the grid at 1 V with bonded and floating metal groups.

    Parameters
    ----------
    segments : Segments
        All segments.
    greens : Greens
        Soil Green's function.
    group : numpy.ndarray of int
        Group of each segment (0 = grid).
    bonded : numpy.ndarray of bool
        Per group: held at the GPR (True) or floating (False). ``bonded[0]``
        must be True.
    names : tuple of str, optional
        Group names for the result.

    Returns
    -------
    GroupSolution

    Notes
    -----
    Floating groups pass no net current: ``sum(I)`` over their segments is
    zero to the accuracy of the linear solve, which the tests check.

    References
    ----------
    G. H. Golub and C. F. Van Loan, Matrix Computations, 4th ed., 2013,
    sec. 4.2 (Cholesky) and the Schur complement of a bordered system.
    """
    group = np.asarray(group, dtype=np.int64)
    bonded = np.asarray(bonded, dtype=bool)
    if not bonded[0]:
        raise ValueError("group 0 is the grid and is held at the GPR")
    n = len(segments)
    ng = bonded.size
    e = bonded[group].astype(float)
    fl = np.flatnonzero(~bonded)
    b = np.zeros((n, fl.size))
    for col, k in enumerate(fl):
        b[group == k, col] = 1.0
    rhs = np.column_stack([e, b])
    fast, x = _solve_matrix_free(segments, greens, rhs)
    if fast is not None:
        method = "matrix-free plan-grid FFT operator, block-Jacobi conjugate gradients (residual 1e-9), per group"
    else:
        refuse_dense(n, "the matrix-free operator could not be used for the metal groups")
        x, method = _solve_many(_symmetric(assemble(segments, greens)), rhs)
    x0, xb = x[:, 0], x[:, 1:]
    v = np.ones(ng)
    if fl.size:
        schur = b.T @ xb
        schur = 0.5 * (schur + schur.T)
        v[fl] = -scipy.linalg.solve(schur, b.T @ x0, assume_a="pos")
        currents = x0 + xb @ v[fl]
    else:
        currents = x0
    net = np.bincount(group, weights=currents, minlength=ng)
    total = float(net[bonded].sum())
    if not np.isfinite(total) or total <= 0.0:
        raise ArithmeticError("method-of-moments solve failed: non-positive total current")
    notices: list[Notice] = []
    neg = (currents < 0.0) & bonded[group]
    if neg.any():
        notices.append(
            Notice(
                "negative-leakage",
                f"{int(neg.sum())} segment(s) of the grid or of bonded metal have negative leakage current: "
                "current enters them from nearby metal, or segments are too short. Check the leakage plot.",
                "note",
            )
        )
    sol = Solution(segments, 1.0 / total, currents, greens, method, tuple(notices), fast)
    log.info("grid resistance %.4g ohm with %d floating group(s)", sol.resistance_ohm, fl.size)
    return GroupSolution(sol, tuple(names), bonded, group, v, net)


def resistance_matrix(segments: Segments, greens: Greens, group: np.ndarray, n_groups: int) -> np.ndarray:
    """Self and mutual resistances between groups, each at its own potential. [ohm]

    Entry ``R[i, j]`` is the potential of group ``i`` per ampere injected into
    group ``j`` with no net current in the others. By Green's reciprocity
    theorem the matrix is symmetric.

    Parameters
    ----------
    segments : Segments
        All segments.
    greens : Greens
        Soil Green's function.
    group : numpy.ndarray of int
        Group of each segment, 0 .. n_groups - 1.
    n_groups : int
        Number of groups.

    Returns
    -------
    numpy.ndarray, shape (n_groups, n_groups)
    """
    group = np.asarray(group, dtype=np.int64)
    z = _symmetric(assemble(segments, greens))
    c = np.zeros((len(segments), n_groups))
    c[np.arange(len(segments)), group] = 1.0
    x, _ = _solve_many(z, c)
    return np.linalg.inv(c.T @ x)
