"""Method of moments for the leakage current of an equipotential grid.

Unknowns are the leakage currents of the segments (constant per unit length
on each segment). Average-potential (Galerkin) testing gives the symmetric
positive definite system

    Z I = 1,   Z_ij = 1 / (4 pi L_i L_j) * sum_k w_k  int_i int_j' g dl dl'

where j' runs over the images of segment j. With unit potential on the grid,
the grid resistance is ``R = 1 / sum(I)``; the leakage at a real GPR is
``I * GPR``.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.linalg

from ..errors import InputError
from ..geometry.segments import Segmentation, Segments
from ..model import Notice
from ..soil.greens import Greens
from .assembly import assemble
from .krylov import preconditioned_cg
from .operator import Operator

__all__ = ["GeometryResult", "Solution", "assemble", "solve"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class Solution:
    """Result of :func:`solve`.

    Attributes
    ----------
    segments : Segments
        The segments solved for.
    resistance_ohm : float
        Grid resistance to remote earth. [ohm]
    currents_per_gpr : numpy.ndarray
        Leakage current of each segment per volt of GPR (the grid at 1 V). [A/V]
    greens : Greens
        Soil Green's function used.
    method : str
        Linear solver used.
    notices : tuple of Notice
        Numerical warnings.
    """

    segments: Segments
    resistance_ohm: float
    currents_per_gpr: np.ndarray
    greens: Greens
    method: str
    notices: tuple[Notice, ...] = ()
    #: The matrix-free operator (:class:`groundcalc.mom.fastop.FastOperator`) when the
    #: system was solved by it; surface potentials of many points then use it too.
    fast_operator: object | None = None

    @cached_property
    def operator(self) -> Operator:
        """The operator of these segments and soil, for potentials at points (made once)."""
        if self.fast_operator is not None:
            return self.fast_operator.op
        return Operator(self.segments, self.greens)

    def leakage_a(self, gpr_v: float) -> np.ndarray:
        """Leakage current of each segment at the given GPR. [A]"""
        return self.currents_per_gpr * gpr_v

    def leakage_density_a_per_m(self, gpr_v: float) -> np.ndarray:
        """Leakage current per metre of each segment at the given GPR. [A/m]"""
        return self.currents_per_gpr * gpr_v / self.segments.length


#: Systems at least this large are solved by conjugate gradients first.
CG_MIN_SIZE = 2500
#: Largest system assembled as a dense matrix (30,000 segments: 7 GiB of matrix).
DENSE_MAX_SIZE = 30_000


def refuse_dense(n: int, why: str) -> None:
    """Refuse a dense matrix too large for memory, with what to change."""
    if n <= DENSE_MAX_SIZE:
        return
    raise InputError(
        f"{why}, and a dense matrix of {n:,} segments would need {8 * n * n / 2**30:,.0f} GiB",
        quantity="settings.segment_length_m",
        fix=f"Use a longer segment length so that the design has at most {DENSE_MAX_SIZE:,} segments",
    )


#: Relative residual at which conjugate gradients stop.
CG_TOLERANCE = 1e-10
#: Iterations after which conjugate gradients give way to the factorisation.
CG_MAX_ITERATIONS = 1000


def conjugate_gradients(z: np.ndarray, rhs: np.ndarray, tol: float = CG_TOLERANCE, max_iter: int = CG_MAX_ITERATIONS):
    """Jacobi-preconditioned conjugate gradients on the upper triangle of ``z``.

    Parameters
    ----------
    z : numpy.ndarray, shape (n, n)
        Symmetric positive definite matrix; only its upper triangle (C order)
        is read.
    rhs : numpy.ndarray
        Right-hand side.
    tol : float
        Stop when ``|r| <= tol |rhs|``.
    max_iter : int
        Largest number of iterations.

    Returns
    -------
    (x, iterations) or (None, iterations)
        ``None`` when it did not converge or met a non-positive curvature.

    The iteration is :func:`groundcalc.mom.krylov.preconditioned_cg`.
    """
    from scipy.linalg.blas import dsymv

    # the C-order upper triangle is the Fortran-order lower triangle of z.T (no copy)
    zt = z.T
    diag = np.diagonal(z).copy()
    if np.any(diag <= 0):
        return None, 0
    dinv = 1.0 / diag
    return preconditioned_cg(lambda p: dsymv(1.0, zt, p, lower=1), lambda r: dinv * r, rhs, tol, max_iter)


def solve(segments: Segments, greens: Greens, method: str = "auto") -> Solution:
    """Solve for the leakage currents of a grid held at 1 V.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : Greens
        Soil Green's function.
    method : str
        ``"auto"`` (the matrix-free operator of :mod:`groundcalc.mom.fastop`
        from ``FAST_MIN_SIZE`` segments, conjugate gradients on the dense
        matrix from ``CG_MIN_SIZE``, else Cholesky), ``"fast"``,
        ``"cholesky"`` or ``"cg"``.

    Returns
    -------
    Solution
        Resistance and unit-potential leakage currents.

    Notes
    -----
    The Galerkin matrix of a positive kernel is symmetric positive definite.
    Large systems are solved by Jacobi-preconditioned conjugate gradients to a
    relative residual of 1e-10 (tens of iterations on grids: each costs one
    matrix-vector product, against n/3 of them for a factorisation); small ones,
    and any where the iteration does not converge, by Cholesky factorisation.
    If that fails (round-off with extremely fine segmentation), a symmetric
    indefinite solve is used and a notice issued.

    From ``FAST_MIN_SIZE`` segments (or with ``method="fast"``) no matrix is
    stored: the product is applied matrix-free (plan-grid FFT with exact
    near pairs, :mod:`groundcalc.mom.fastop`) in block-Jacobi preconditioned
    conjugate gradients to a relative residual of 1e-9; when the soil model
    offers no plan kernels, or the iteration does not converge, the dense path
    is taken.
    """
    from .fastop import FAST_MIN_SIZE, fast_solve

    if method not in ("auto", "cholesky", "cg", "fast"):
        raise ValueError(f"unknown linear solver {method!r}; valid: auto, fast, cholesky, cg")
    n = len(segments)
    rhs = np.ones(n)
    notices: list[Notice] = []
    currents = None
    fast = None
    if method == "fast" or (method == "auto" and n >= FAST_MIN_SIZE):
        fast, currents, iterations = fast_solve(segments, greens, rhs)
        if currents is not None:
            solver = (
                f"matrix-free plan-grid FFT operator, block-Jacobi conjugate gradients "
                f"({iterations} iterations, residual 1e-9)"
            )
    if currents is None:
        refuse_dense(n, "the matrix-free operator could not be used")
        log.info("assembling %d x %d matrix", n, n)
        z = assemble(segments, greens)
    if currents is None and (method == "cg" or (method == "auto" and n >= CG_MIN_SIZE)):
        currents, iterations = conjugate_gradients(z, rhs)
        if currents is not None:
            solver = f"conjugate gradients, Jacobi preconditioner ({iterations} iterations, residual 1e-10)"
        else:
            log.info("conjugate gradients did not converge in %d iterations; factorising", iterations)
    if currents is None:
        try:
            factor = scipy.linalg.cho_factor(z, lower=False, overwrite_a=True, check_finite=False)
            currents = scipy.linalg.cho_solve(factor, rhs, check_finite=False)
            solver = "Cholesky"
        except np.linalg.LinAlgError:
            z = assemble(segments, greens)
            z = np.triu(z) + np.triu(z, 1).T
            currents = scipy.linalg.solve(z, rhs, assume_a="sym")
            solver = "symmetric indefinite (Cholesky failed)"
            notices.append(
                Notice(
                    "matrix-not-positive",
                    "The moment matrix was not numerically positive definite; segments may be too "
                    "short for their radius. Results were solved by a slower method; check them.",
                )
            )
    total = float(currents.sum())
    if not np.isfinite(total) or total <= 0.0:
        raise ArithmeticError("method-of-moments solve failed: non-positive total current")
    if np.any(currents < 0.0):
        notices.append(
            Notice(
                "negative-leakage",
                f"{int(np.sum(currents < 0))} segment(s) have negative leakage current, a sign that "
                "segments are too short or conductors overlap. Use a longer segment length.",
            )
        )
    return Solution(segments, 1.0 / total, currents, greens, solver, tuple(notices), fast)


@dataclass(frozen=True)
class GeometryResult:
    """Segmentation and method-of-moments solution of a design (per volt of GPR)."""

    segmentation: Segmentation
    solution: Solution
    seconds: dict[str, float]
