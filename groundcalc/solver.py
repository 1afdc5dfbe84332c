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

from .greens import ImageSet
from .kernels import pair_integral
from .model import Notice
from .segments import Segments

__all__ = ["Solution", "assemble", "solve"]

log = logging.getLogger(__name__)

#: Number of segment pairs handled at once during assembly (memory bound).
CHUNK_PAIRS = 1_000_000


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
    images : ImageSet
        Soil images used.
    method : str
        Linear solver used.
    notices : tuple of Notice
        Numerical warnings.
    """

    segments: Segments
    resistance_ohm: float
    unit_currents_a: np.ndarray
    images: ImageSet
    method: str
    notices: tuple[Notice, ...] = ()

    def leakage_a(self, gpr_v: float) -> np.ndarray:
        """Leakage current of each segment at the given GPR. [A]"""
        return self.unit_currents_a * gpr_v

    def leakage_density_a_per_m(self, gpr_v: float) -> np.ndarray:
        """Leakage current per metre of each segment at the given GPR. [A/m]"""
        return self.unit_currents_a * gpr_v / self.segments.length


def _block_pairs(n: int, i0: int, i1: int) -> tuple[np.ndarray, np.ndarray]:
    """Index pairs (i, j) with i0 <= i < i1 and j >= i."""
    rows = np.arange(i0, i1)
    counts = n - rows
    ii = np.repeat(rows, counts)
    starts = np.cumsum(counts) - counts
    jj = np.arange(ii.size) - np.repeat(starts, counts) + ii
    return ii, jj


def assemble(segments: Segments, images: ImageSet) -> np.ndarray:
    """Upper triangle of the Galerkin matrix.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    images : ImageSet
        Point images of the soil's Green's function.

    Returns
    -------
    numpy.ndarray, shape (n, n)
        Matrix with the upper triangle (including the diagonal) filled and
        the strict lower triangle zero. [ohm]
    """
    n = len(segments)
    a, b = segments.a, segments.b
    radius = segments.radius
    length = segments.length
    layer = segments.layer
    z = np.zeros((n, n))
    rows = max(1, CHUNK_PAIRS // max(n, 1))
    for i0 in range(0, n, rows):
        ii, jj = _block_pairs(n, i0, min(n, i0 + rows))
        vals = np.zeros(ii.size)
        for (lo, ls), terms in images.images.items():
            sel = np.flatnonzero((layer[ii] == lo) & (layer[jj] == ls))
            if sel.size == 0:
                continue
            oi, sj = ii[sel], jj[sel]
            oa, ob = a[oi], b[oi]
            r2 = radius[oi] * radius[sj]
            acc = np.zeros(sel.size)
            for img in terms:
                sa = a[sj].copy()
                sb = b[sj].copy()
                sa[:, 2] = img.map_depth(sa[:, 2])
                sb[:, 2] = img.map_depth(sb[:, 2])
                acc += img.weight_ohm_m * pair_integral(oa, ob, sa, sb, r2)
            vals[sel] = acc
        z[ii, jj] = vals / (4.0 * np.pi * length[ii] * length[jj])
    return z


def solve(segments: Segments, images: ImageSet) -> Solution:
    """Solve for the leakage currents of a grid held at 1 V.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    images : ImageSet
        Point images of the soil's Green's function.

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
    z = assemble(segments, images)
    rhs = np.ones(n)
    notices: list[Notice] = []
    try:
        factor = scipy.linalg.cho_factor(z, lower=False, overwrite_a=True, check_finite=False)
        currents = scipy.linalg.cho_solve(factor, rhs, check_finite=False)
        method = "Cholesky"
    except np.linalg.LinAlgError:
        z = assemble(segments, images)
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
    return Solution(segments, 1.0 / total, currents, images, method, tuple(notices))
