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

import numpy as np
import scipy.linalg

from .assembly import assemble
from .greens import Greens
from .model import Notice
from .segments import Segments

__all__ = ["Solution", "assemble", "solve"]

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
    unit_currents_a : numpy.ndarray
        Leakage current of each segment when the grid is at 1 V. [A/V]
    greens : Greens
        Soil Green's function used.
    method : str
        Linear solver used.
    notices : tuple of Notice
        Numerical warnings.
    """

    segments: Segments
    resistance_ohm: float
    unit_currents_a: np.ndarray
    greens: Greens
    method: str
    notices: tuple[Notice, ...] = ()

    def leakage_a(self, gpr_v: float) -> np.ndarray:
        """Leakage current of each segment at the given GPR. [A]"""
        return self.unit_currents_a * gpr_v

    def leakage_density_a_per_m(self, gpr_v: float) -> np.ndarray:
        """Leakage current per metre of each segment at the given GPR. [A/m]"""
        return self.unit_currents_a * gpr_v / self.segments.length


def solve(segments: Segments, greens: Greens) -> Solution:
    """Solve for the leakage currents of a grid held at 1 V.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : Greens
        Soil Green's function.

    Returns
    -------
    Solution
        Resistance and unit-potential leakage currents.

    Notes
    -----
    The Galerkin matrix of a positive kernel is symmetric positive definite,
    so a Cholesky factorisation is used. If it fails (round-off with
    extremely fine segmentation), an LU solve is used and a notice issued.
    """
    n = len(segments)
    log.info("assembling %d x %d matrix", n, n)
    z = assemble(segments, greens)
    rhs = np.ones(n)
    notices: list[Notice] = []
    try:
        factor = scipy.linalg.cho_factor(z, lower=False, overwrite_a=True, check_finite=False)
        currents = scipy.linalg.cho_solve(factor, rhs, check_finite=False)
        method = "Cholesky"
    except np.linalg.LinAlgError:
        z = assemble(segments, greens)
        z = z + np.triu(z, 1).T
        currents = scipy.linalg.solve(z, rhs, assume_a="sym")
        method = "symmetric indefinite (Cholesky failed)"
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
    return Solution(segments, 1.0 / total, currents, greens, method, tuple(notices))
