"""Galerkin matrix of the thin-wire method of moments: blocking and reuse of repeated geometry.

The entries themselves come from :class:`groundcalc.mom.operator.Operator`
(near and far rules, images and tails); this module decides which entries
to evaluate. The direct assembly walks the upper triangle in row blocks,
taking every far entry of a block at once and the rest pair by pair; on
regular layouts, segments that are shifted copies of one another share their
entries (see below).
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np

from ..geometry.classes import horizontal_mask, segment_classes
from ..geometry.segments import Segments
from ..progress import Progress
from ..soil.greens import GreensFunction
from .operator import FAR_RATIO, Operator, build_greens

__all__ = [
    "FAR_RATIO",
    "AssemblyStats",
    "assemble",
    "build_greens",
    "general_entries",
    "horizontal_mask",
    "pair_entries",
    "segment_classes",
]

log = logging.getLogger(__name__)

#: Matrix elements computed per block of the fast path (memory and cache bound).
BLOCK_ELEMENTS = 400_000
#: Systems at least this large show the progress of their assembly (row blocks) on stderr.
PROGRESS_MIN_SIZE = 4000
#: Pairs evaluated per call of the general path.
GENERAL_CHUNK = 200_000


def general_entries(segments: Segments, greens: GreensFunction, ii: np.ndarray, jj: np.ndarray) -> np.ndarray:
    """Matrix entries ``Z[ii, jj]`` image by image (any geometry). [ohm]"""
    return Operator(segments, greens).general_entries(np.asarray(ii), np.asarray(jj))


def pair_entries(segments: Segments, greens: GreensFunction, ii: np.ndarray, jj: np.ndarray) -> np.ndarray:
    """Entries ``Z[ii, jj]`` by the same rules as the full assembly (far rule for distant pairs). [ohm]"""
    return Operator(segments, greens).entries(ii, jj)


def _assemble_direct(segments: Segments, greens: GreensFunction, z: np.ndarray | None = None, op=None) -> np.ndarray:
    """Upper triangle of the Galerkin matrix, every pair evaluated.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : GreensFunction
        Soil Green's function.
    z : numpy.ndarray, optional
        Matrix to fill (entries already there are overwritten).
    op : Operator, optional
        The operator of ``segments`` and ``greens`` (made when omitted).

    Returns
    -------
    numpy.ndarray, shape (n, n)
        Matrix with the upper triangle (including the diagonal) filled and
        the strict lower triangle zero. [ohm]
    """
    n = len(segments)
    if z is None:
        z = np.zeros((n, n))
    op = op if op is not None else Operator(segments, greens)
    rows = max(1, BLOCK_ELEMENTS // max(n, 1))
    gen_i: list[np.ndarray] = []
    gen_j: list[np.ndarray] = []
    for i0 in range(0, n, rows):
        i1 = min(n, i0 + rows)
        r = slice(i0, i1)
        c = slice(i0, n)
        fast, vals = op.far_block(r, c)
        upper = np.arange(i0, n)[None, :] >= np.arange(i0, i1)[:, None]
        if vals is not None:
            z[r, c] = np.where(fast & upper, vals, 0.0)
        gi, gj = np.nonzero(~fast & upper)
        gen_i.append(gi + i0)
        gen_j.append(gj + i0)
    ii = np.concatenate(gen_i) if gen_i else np.zeros(0, dtype=np.int64)
    jj = np.concatenate(gen_j) if gen_j else np.zeros(0, dtype=np.int64)
    log.debug("assembly: %d of %d pairs by the general rule", ii.size, n * (n + 1) // 2)
    for k0 in range(0, ii.size, GENERAL_CHUNK):
        si, sj = ii[k0 : k0 + GENERAL_CHUNK], jj[k0 : k0 + GENERAL_CHUNK]
        z[si, sj] = op.general_entries(si, sj)
    return z


# ---------------------------------------------------------------------------
# Reuse of repeated relative geometry.
#
# In a grid, many segments are copies of one another shifted in plan: same
# direction, length, depth, radius and layer (a "class"). The entry of a pair
# depends only on the plan offset of their mid points, and the offsets of two
# classes whose mid points sit on a few distinct x and y coordinates take
# few distinct values. Each distinct offset is evaluated once, by the same
# rules as above, and gathered into the matrix.
# ---------------------------------------------------------------------------

#: Plan coordinates are matched on this grid (far below any effect on an entry). [m]
LATTICE_QUANTUM_M = 1e-9
#: A class pair uses reuse when it has at least this many pairs per distinct offset.
LATTICE_GAIN = 8.0
#: Above this many large classes the layout is treated as irregular (every pair evaluated).
MAX_CLASSES = 200
#: Classes smaller than this are not worth reuse; their pairs are evaluated directly.
MIN_CLASS_SIZE = 32
#: Matrix elements gathered per step (memory bound).
GATHER_ELEMENTS = 2_000_000


@dataclass
class AssemblyStats:
    """What :func:`assemble` did (for tests and benchmarks)."""

    method: str = "direct"
    classes: int = 0
    pairs: int = 0
    evaluated: int = 0
    reused_pairs: int = 0


@dataclass
class _Class:
    idx: np.ndarray  # segment indices
    ux: np.ndarray  # distinct quantised x of the mid points
    uy: np.ndarray
    ix: np.ndarray  # position of each segment in ux
    iy: np.ndarray


def _class_table(segments: Segments, cls: np.ndarray) -> list[_Class]:
    mid = segments.mid
    out = []
    for c in range(int(cls.max()) + 1):
        idx = np.flatnonzero(cls == c)
        kx = np.rint(mid[idx, 0] / LATTICE_QUANTUM_M).astype(np.int64)
        ky = np.rint(mid[idx, 1] / LATTICE_QUANTUM_M).astype(np.int64)
        ux, ix = np.unique(kx, return_inverse=True)
        uy, iy = np.unique(ky, return_inverse=True)
        out.append(_Class(idx, ux, uy, ix.reshape(-1), iy.reshape(-1)))
    return out


def _lattice_block(op: Operator, z, ca: _Class, cb: _Class, same: bool, stats: AssemblyStats) -> bool:
    """Fill the block of classes ``ca`` (rows) and ``cb`` (columns) by reuse; False if not worth it."""
    pairs = ca.idx.size * (ca.idx.size + 1) // 2 if same else ca.idx.size * cb.idx.size
    udx, lx = np.unique(ca.ux[:, None] - cb.ux[None, :], return_inverse=True)
    udy, ly = np.unique(ca.uy[:, None] - cb.uy[None, :], return_inverse=True)
    count = udx.size * udy.size
    if count * LATTICE_GAIN > pairs:
        return False
    lx = lx.reshape(ca.ux.size, cb.ux.size)
    ly = ly.reshape(ca.uy.size, cb.uy.size)
    gx, gy = np.meshgrid(udx * LATTICE_QUANTUM_M, udy * LATTICE_QUANTUM_M, indexing="ij")
    table = op.shifted_entries(int(ca.idx[0]), int(cb.idx[0]), gx.ravel(), gy.ravel())
    # flat table index of pair (p, q) = lx[ix_p, ix_q] * len(udy) + ly[iy_p, iy_q]: two row gathers
    # from small per-coordinate tables, one add, one gather from the (cached) table
    itype = np.int32 if count < 2**31 else np.int64
    col_x = (lx[:, cb.ix] * udy.size).astype(itype)
    col_y = ly[:, cb.iy].astype(itype)
    rows_c, cols_c = _as_range(ca.idx), _as_range(cb.idx)
    # with both classes contiguous and the rows first, the block lies in the upper triangle
    upper_only = same or (rows_c is not None and cols_c is not None and rows_c.stop <= cols_c.start)
    rows = max(1, GATHER_ELEMENTS // max(cb.idx.size, 1))
    for r0 in range(0, ca.idx.size, rows):
        r = slice(r0, r0 + rows)
        flat = col_x[ca.ix[r]]
        flat += col_y[ca.iy[r]]
        blk = table[flat]
        if rows_c is not None and cols_c is not None:
            z[rows_c.start + r0 : rows_c.start + r0 + blk.shape[0], cols_c] = blk
            if not upper_only:
                z[cols_c, rows_c.start + r0 : rows_c.start + r0 + blk.shape[0]] = blk.T
        else:
            z[np.ix_(ca.idx[r], cb.idx)] = blk
            if not upper_only:
                z[np.ix_(cb.idx, ca.idx[r])] = blk.T
    stats.evaluated += count
    stats.reused_pairs += pairs
    return True


def _as_range(idx: np.ndarray) -> slice | None:
    """The slice equal to a sorted index array, if it is contiguous."""
    if idx.size and idx[-1] - idx[0] + 1 == idx.size:
        return slice(int(idx[0]), int(idx[-1]) + 1)
    return None


def assemble(segments: Segments, greens: GreensFunction, stats: AssemblyStats | None = None) -> np.ndarray:
    """Galerkin matrix; the upper triangle (with the diagonal) is what solvers read.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : GreensFunction
        Soil Green's function.
    stats : AssemblyStats, optional
        Filled with what was done.

    Returns
    -------
    numpy.ndarray, shape (n, n)
        Matrix whose upper triangle including the diagonal holds the entries;
        the strict lower triangle holds either zeros or the same entries
        mirrored, so use ``np.triu`` before relying on it. [ohm]

    Notes
    -----
    Regular layouts reuse entries of repeated relative geometry (see
    ``segment_classes``); irregular ones evaluate every pair. Both use the
    same rules, so they agree to round-off (tests/test_assembly.py).
    """
    stats = stats if stats is not None else AssemblyStats()
    n = len(segments)
    stats.pairs = n * (n + 1) // 2
    cls = segment_classes(segments) if n else np.zeros(0, dtype=np.int64)
    stats.classes = int(cls.max()) + 1 if n else 0
    big = [c for c in _class_table(segments, cls) if c.idx.size >= MIN_CLASS_SIZE] if n >= 64 else []
    if not big or len(big) > MAX_CLASSES:
        stats.method = "direct"
        stats.evaluated = stats.pairs
        return _assemble_direct(segments, greens)
    big.sort(key=lambda c: int(c.idx[0]))
    op = Operator(segments, greens)
    z = np.zeros((n, n))
    done = np.zeros((len(big), len(big)), dtype=bool)
    for a_ in range(len(big)):
        for b_ in range(a_, len(big)):
            if _lattice_block(op, z, big[a_], big[b_], a_ == b_, stats):
                done[a_, b_] = done[b_, a_] = True
    if not done.any():
        stats.method = "direct"
        stats.evaluated = stats.pairs
        return _assemble_direct(segments, greens, z, op)
    # every pair not covered by reuse, by the usual rules, row block by row block
    big_id = np.full(n, -1, dtype=np.int64)
    for k, c in enumerate(big):
        big_id[c.idx] = k
    rows = max(1, GATHER_ELEMENTS // max(n, 1))
    starts = range(0, n, rows)
    with Progress("matrix assembly", len(starts) if n >= PROGRESS_MIN_SIZE else 0, unit="block") as progress:
        for i0 in starts:
            i1 = min(n, i0 + rows)
            bi = big_id[i0:i1, None]
            bj = big_id[None, i0:]
            covered = (bi >= 0) & (bj >= 0) & done[np.maximum(bi, 0), np.maximum(bj, 0)]
            need = ~covered & (np.arange(i0, n)[None, :] >= np.arange(i0, i1)[:, None])
            ii, jj = np.nonzero(need)
            if ii.size:
                ii += i0
                jj += i0
                z[ii, jj] = op.entries(ii, jj)
                stats.evaluated += ii.size
            progress.update()
    stats.method = "reuse of repeated geometry"
    log.debug("assembly: %d classes, %d of %d pairs evaluated", stats.classes, stats.evaluated, stats.pairs)
    return z
