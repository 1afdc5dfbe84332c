"""Galerkin matrix of the thin-wire method of moments.

Entry ``Z_ij`` is the average potential over segment i of a unit current
spread evenly over segment j:

    Z_ij = 1 / (4 pi L_i L_j) * [ sum_k w_k int_i int_j' g dl dl'
                                  + L_i L_j sum_f w_f <T(d, v_f)>_ij ]

where j' runs over the explicit images of segment j (:mod:`groundcalc.soil.greens`)
and the tails ``T`` are averaged with a 2 x 2 Gauss rule (they are smooth: the
images behind them are at least the near distance away).

Distant pairs of horizontal segments (horizontal distance at least
``FAR_RATIO`` segment lengths) take a fast path: the corrected mid-point rule
written with radial sums ``S_p = sum_k w_k / R_k^p``,

    Z_ij = 1/(4 pi) [S1 + L_i^2/24 (3 (D.e_i)^2 S5 - S3) + L_j^2/24 (3 (D.e_j)^2 S5 - S3)],

which is :func:`groundcalc.mom.integrals.far_pair_integral` summed over all images
at once. The leading images are summed directly and the rest of a two-layer
series comes from :class:`groundcalc.soil.tables.RadialSums`.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np

from ..geometry.segments import Segments
from ..model import Soil
from ..soil.greens import Greens, uniform_greens
from ..soil.twolayer import DepthRanges, depth_key, two_layer_greens
from .integrals import FAR_MARGIN, FAR_RATIO, pair_integral

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
#: Pairs evaluated per call of the general path.
GENERAL_CHUNK = 200_000
#: Gauss-Legendre points on [0, 1] for the tails (2-point rule).
_G2 = np.array([0.5 - 0.5 / np.sqrt(3.0), 0.5 + 0.5 / np.sqrt(3.0)])


def horizontal_mask(segments: Segments) -> np.ndarray:
    """True for segments whose two ends are at the same depth."""
    dz = np.abs(segments.b[:, 2] - segments.a[:, 2])
    return dz <= 1e-12 * np.maximum(segments.length, 1e-300)


def build_greens(soil: Soil, segments: Segments, margin_m: float = 0.0) -> Greens:
    """Green's function of ``soil`` prepared for ``segments``.

    Parameters
    ----------
    soil : Soil
        Soil model.
    segments : Segments
        The segments to be solved for (their depths decide which images are
        explicit and where tables are needed).
    margin_m : float
        How far beyond the segments surface potentials will be evaluated. [m]

    Returns
    -------
    Greens
    """
    if soil.model == "uniform":
        return uniform_greens(soil)
    horizontal = horizontal_mask(segments)
    layers: dict[int, tuple[float, float]] = {}
    hdepths: dict[int, tuple[float, ...]] = {}
    for lay in range(int(segments.layer.max()) + 1 if soil.model == "multilayer" else 2):
        sel = segments.layer == lay
        if not sel.any():
            continue
        z = np.concatenate([segments.a[sel, 2], segments.b[sel, 2]])
        layers[lay] = (float(z.min()), float(z.max()))
        hdepths[lay] = tuple(np.unique(segments.a[sel & horizontal, 2]).tolist())
    plan = np.concatenate([segments.a[:, :2], segments.b[:, :2]])
    span = plan.max(axis=0) - plan.min(axis=0)
    extent = float(np.hypot(*(span + 2.0 * margin_m)))
    length = segments.length
    ranges = DepthRanges(layers, hdepths, FAR_RATIO * float(length.max()), FAR_RATIO * float(length.min()), extent)
    if soil.model == "multilayer":
        from ..soil.multilayer import multilayer_greens

        return multilayer_greens(soil, ranges)
    return two_layer_greens(soil, ranges)


def general_entries(segments: Segments, greens: Greens, ii: np.ndarray, jj: np.ndarray) -> np.ndarray:
    """Matrix entries ``Z[ii, jj]`` by the general rule (any geometry).

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : Greens
        Soil Green's function.
    ii, jj : numpy.ndarray of int
        Observer and source segment indices.

    Returns
    -------
    numpy.ndarray
        Entries. [ohm]
    """
    out = np.zeros(ii.size)
    a, b, rad, length, layer = segments.a, segments.b, segments.radius, segments.length, segments.layer
    for (lo, ls), kern in greens.pairs.items():
        sel = np.flatnonzero((layer[ii] == lo) & (layer[jj] == ls))
        if sel.size == 0:
            continue
        oi, sj = ii[sel], jj[sel]
        oa, ob = a[oi], b[oi]
        r2 = rad[oi] * rad[sj]
        acc = np.zeros(sel.size)
        for img in kern.explicit:
            sa = a[sj].copy()
            sb = b[sj].copy()
            sa[:, 2] = img.map_depth(sa[:, 2])
            sb[:, 2] = img.map_depth(sb[:, 2])
            acc += img.weight_ohm_m * pair_integral(oa, ob, sa, sb, r2)
        if kern.tails:
            acc += _tail_pairs(segments, greens, kern, lo, ls, oi, sj)
        out[sel] = acc / (4.0 * np.pi * length[oi] * length[sj])
    return out


def _tail_pairs(segments: Segments, greens: Greens, kern, lo: int, ls: int, oi: np.ndarray, sj: np.ndarray):
    """Double integral of the image tails over segment pairs (times the weights)."""
    a, b, length = segments.a, segments.b, segments.length
    lo_len, ls_len = length[oi], length[sj]
    out = np.zeros(oi.size)
    horizontal = horizontal_mask(segments)
    rest = np.ones(oi.size, dtype=bool)
    if greens.radial_near:
        both = horizontal[oi] & horizontal[sj]
        ko = depth_key(a[oi, 2])
        ks = depth_key(a[sj, 2])
        for key, table in greens.radial_near.items():
            if key[0] != lo or key[1] != ls:
                continue
            m = both & (ko == key[2]) & (ks == key[3])
            if not m.any():
                continue
            mo, ms = 0.5 * (a[oi[m]] + b[oi[m]]), 0.5 * (a[sj[m]] + b[sj[m]])
            dx, dy = mo[:, 0] - ms[:, 0], mo[:, 1] - ms[:, 1]
            eo = (b[oi[m]] - a[oi[m]]) / lo_len[m, None]
            es = (b[sj[m]] - a[sj[m]]) / ls_len[m, None]
            po = dx * eo[:, 0] + dy * eo[:, 1]
            ps = dx * es[:, 0] + dy * es[:, 1]
            s1, s3, s5 = table(np.hypot(dx, dy))
            lo2, ls2 = lo_len[m] ** 2, ls_len[m] ** 2
            corr = lo2 / 24.0 * (3.0 * po * po * s5 - s3) + ls2 / 24.0 * (3.0 * ps * ps * s5 - s3)
            out[m] = (s1 + corr) * lo_len[m] * ls_len[m]
            rest &= ~m
    if rest.any():
        ri, rj = oi[rest], sj[rest]
        tsum = np.zeros(ri.size)
        do, ds = b[ri] - a[ri], b[rj] - a[rj]
        for to in _G2:
            po3 = a[ri] + to * do
            for ts in _G2:
                ps3 = a[rj] + ts * ds
                d = np.hypot(po3[:, 0] - ps3[:, 0], po3[:, 1] - ps3[:, 1])
                for tail in kern.tails:
                    tsum += tail.weight_ohm_m * greens.tail_function(d, tail.argument(po3[:, 2], ps3[:, 2]))
        out[rest] = 0.25 * tsum * length[ri] * length[rj]
    return out


def _groups(segments: Segments, greens: Greens, horizontal: np.ndarray) -> tuple[np.ndarray, list]:
    """Fast-path group of every segment (-1: general path only) and the group keys."""
    n = len(segments)
    gid = np.full(n, -1, dtype=np.int64)
    keys: list[tuple[int, float]] = []
    if not greens.layered:
        gid[horizontal] = segments.layer[horizontal]
        return gid, [(0, 0.0), (1, 0.0)]
    lookup: dict[tuple[int, float], int] = {}
    zs = depth_key(segments.a[:, 2])
    for i in np.flatnonzero(horizontal):
        key = (int(segments.layer[i]), float(zs[i]))
        if key not in lookup:
            lookup[key] = len(keys)
            keys.append(key)
        gid[i] = lookup[key]
    # groups whose tables were not built fall back to the general path
    ok = set()
    for g1, (l1, z1) in enumerate(keys):
        if all((l1, l2, z1, z2) in greens.radial_far or not _needs_table(greens, l1, l2) for l2, z2 in keys):
            ok.add(g1)
    for g in range(len(keys)):
        if g not in ok:
            gid[gid == g] = -1
    return gid, keys


def _needs_table(greens: Greens, lo: int, ls: int) -> bool:
    kern = greens.pairs.get((lo, ls))
    return kern is not None and (bool(kern.other_images) or bool(kern.tails))


def _fast_block(dx, dy, zo, zs, eo, es, lo_len, ls_len, r2, greens: Greens, lay_o, lay_s, go, gs, keys) -> np.ndarray:
    """Fast-path entries for a block (every element; the caller masks)."""
    d2 = dx * dx + dy * dy
    po = dx * eo[0] + dy * eo[1]
    ps = dx * es[0] + dy * es[1]
    s1 = np.zeros(d2.shape)
    s3 = np.zeros(d2.shape)
    s5 = np.zeros(d2.shape)
    pairs_present = [(lo, ls) for (lo, ls) in greens.pairs if np.any(lay_o == lo) and np.any(lay_s == ls)]
    for lo, ls in pairs_present:
        kern = greens.pairs[(lo, ls)]
        m = (lay_o == lo) & (lay_s == ls) if len(pairs_present) > 1 else None
        for img in kern.direct_images:
            dz = zo - img.map_depth(zs)
            rr = d2 + dz * dz + r2
            inv = 1.0 / np.sqrt(rr)
            inv3 = inv / rr
            w = img.weight_ohm_m if m is None else np.where(m, img.weight_ohm_m, 0.0)
            s1 += w * inv
            s3 += w * inv3
            s5 += w * inv3 / rr
    if greens.layered:
        d = np.sqrt(d2)
        for g1, (l1, z1) in enumerate(keys):
            for g2, (l2, z2) in enumerate(keys):
                table = greens.radial_far.get((l1, l2, z1, z2))
                if table is None:
                    continue
                sel = (go == g1) & (gs == g2)
                if not sel.any():
                    continue
                t1, t3, t5 = table(d[sel], clamp=True)
                s1[sel] += t1
                s3[sel] += t3
                s5[sel] += t5
    corr = (lo_len * lo_len / 24.0) * (3.0 * po * po * s5 - s3) + (ls_len * ls_len / 24.0) * (3.0 * ps * ps * s5 - s3)
    return (s1 + corr) / (4.0 * np.pi)


def _assemble_direct(segments: Segments, greens: Greens, z: np.ndarray | None = None) -> np.ndarray:
    """Upper triangle of the Galerkin matrix, every pair evaluated.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : Greens
        Soil Green's function.

    Returns
    -------
    numpy.ndarray, shape (n, n)
        Matrix with the upper triangle (including the diagonal) filled and
        the strict lower triangle zero. [ohm]
    """
    n = len(segments)
    if z is None:
        z = np.zeros((n, n))
    mid = segments.mid
    length = segments.length
    e = (segments.b - segments.a) / length[:, None]
    horizontal = horizontal_mask(segments)
    gid, keys = _groups(segments, greens, horizontal)
    fast_ok = gid >= 0
    zdep = mid[:, 2]
    rows = max(1, BLOCK_ELEMENTS // max(n, 1))
    gen_i: list[np.ndarray] = []
    gen_j: list[np.ndarray] = []
    for i0 in range(0, n, rows):
        i1 = min(n, i0 + rows)
        r = slice(i0, i1)
        c = slice(i0, n)
        dx = mid[r, 0, None] - mid[None, c, 0]
        dy = mid[r, 1, None] - mid[None, c, 1]
        size = np.maximum(length[r, None], length[None, c])
        far = (dx * dx + dy * dy) >= (FAR_RATIO * size) ** 2 * FAR_MARGIN
        fast = far & fast_ok[r, None] & fast_ok[None, c]
        upper = np.arange(i0, n)[None, :] >= np.arange(i0, i1)[:, None]
        if fast.any():
            vals = _fast_block(
                dx,
                dy,
                zdep[r, None],
                zdep[None, c],
                (e[r, 0, None], e[r, 1, None]),
                (e[None, c, 0], e[None, c, 1]),
                length[r, None],
                length[None, c],
                segments.radius[r, None] * segments.radius[None, c],
                greens,
                segments.layer[r, None],
                segments.layer[None, c],
                gid[r, None],
                gid[None, c],
                keys,
            )
            z[r, c] = np.where(fast & upper, vals, 0.0)
        gi, gj = np.nonzero(~fast & upper)
        gen_i.append(gi + i0)
        gen_j.append(gj + i0)
    ii = np.concatenate(gen_i)
    jj = np.concatenate(gen_j)
    log.debug("assembly: %d of %d pairs by the general rule", ii.size, n * (n + 1) // 2)
    for k0 in range(0, ii.size, GENERAL_CHUNK):
        si, sj = ii[k0 : k0 + GENERAL_CHUNK], jj[k0 : k0 + GENERAL_CHUNK]
        z[si, sj] = general_entries(segments, greens, si, sj)
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


def pair_entries(
    segments: Segments, greens: Greens, ii: np.ndarray, jj: np.ndarray, groups: tuple | None = None
) -> np.ndarray:
    """Entries ``Z[ii, jj]`` by the same rules as the full assembly (fast path for far pairs).

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : Greens
        Soil Green's function.
    ii, jj : numpy.ndarray of int
        Observer and source segment indices.
    groups : (gid, keys), optional
        Fast-path groups of ``segments`` (as from the whole layout); computed
        from ``segments`` when omitted.

    Returns
    -------
    numpy.ndarray
        Entries. [ohm]
    """
    ii = np.asarray(ii, dtype=np.int64)
    jj = np.asarray(jj, dtype=np.int64)
    mid = segments.mid
    length = segments.length
    e = (segments.b - segments.a) / length[:, None]
    gid, keys = groups if groups is not None else _groups(segments, greens, horizontal_mask(segments))
    dx = mid[ii, 0] - mid[jj, 0]
    dy = mid[ii, 1] - mid[jj, 1]
    size = np.maximum(length[ii], length[jj])
    fast = ((dx * dx + dy * dy) >= (FAR_RATIO * size) ** 2 * FAR_MARGIN) & (gid[ii] >= 0) & (gid[jj] >= 0)
    out = np.empty(ii.size)
    f = np.flatnonzero(fast)
    if f.size:
        fi, fj = ii[f], jj[f]
        out[f] = _fast_block(
            dx[f],
            dy[f],
            mid[fi, 2],
            mid[fj, 2],
            (e[fi, 0], e[fi, 1]),
            (e[fj, 0], e[fj, 1]),
            length[fi],
            length[fj],
            segments.radius[fi] * segments.radius[fj],
            greens,
            segments.layer[fi],
            segments.layer[fj],
            gid[fi],
            gid[fj],
            keys,
        )
    g = np.flatnonzero(~fast)
    for k0 in range(0, g.size, GENERAL_CHUNK):
        sel = g[k0 : k0 + GENERAL_CHUNK]
        out[sel] = general_entries(segments, greens, ii[sel], jj[sel])
    return out


def segment_classes(segments: Segments) -> np.ndarray:
    """Class of each segment: equal direction (either sense), length, depth, radius and layer."""
    length = segments.length
    e = (segments.b - segments.a) / length[:, None]
    # either sense of a segment gives the same entries
    first = np.argmax(np.abs(e) > 1e-12, axis=1)
    sign = np.sign(e[np.arange(len(e)), first])
    e = e * sign[:, None]
    key = np.column_stack(
        [
            np.rint(e * 1e9),
            np.rint(length * 1e9),
            np.rint(segments.mid[:, 2] * 1e9),
            np.rint(segments.radius * 1e12),
            segments.layer,
        ]
    ).astype(np.int64)
    _, cls = np.unique(key, axis=0, return_inverse=True)
    return cls.reshape(-1)


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


def _offset_entries(segments: Segments, greens: Greens, groups, obs: int, src: int, dx: np.ndarray, dy: np.ndarray):
    """Entries for the observer shaped like segment ``obs`` at plan offset (dx, dy) from ``src``.

    The copies keep the fast-path groups of the originals, so every pair is
    evaluated by exactly the rule the direct assembly would use.
    """
    m = dx.size
    a0, b0 = segments.a, segments.b
    mo, ms = 0.5 * (a0[obs] + b0[obs]), 0.5 * (a0[src] + b0[src])
    shift = np.zeros((m, 3))
    shift[:, 0] = dx + ms[0] - mo[0]
    shift[:, 1] = dy + ms[1] - mo[1]
    a = np.concatenate([a0[obs] + shift, a0[src][None, :]])
    b = np.concatenate([b0[obs] + shift, b0[src][None, :]])
    synth = Segments(
        a,
        b,
        np.concatenate([np.full(m, segments.radius[obs]), [segments.radius[src]]]),
        np.zeros(m + 1, dtype=np.int64),
        np.concatenate([np.full(m, segments.layer[obs]), [segments.layer[src]]]),
    )
    gid, keys = groups
    synth_groups = (np.concatenate([np.full(m, gid[obs]), [gid[src]]]), keys)
    return pair_entries(synth, greens, np.arange(m), np.full(m, m), synth_groups)


def _lattice_block(segments, greens, groups, z, ca: _Class, cb: _Class, same: bool, stats: AssemblyStats) -> bool:
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
    table = _offset_entries(segments, greens, groups, int(ca.idx[0]), int(cb.idx[0]), gx.ravel(), gy.ravel())
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


def assemble(segments: Segments, greens: Greens, stats: AssemblyStats | None = None) -> np.ndarray:
    """Galerkin matrix; the upper triangle (with the diagonal) is what solvers read.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : Greens
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
    groups = _groups(segments, greens, horizontal_mask(segments))
    z = np.zeros((n, n))
    done = np.zeros((len(big), len(big)), dtype=bool)
    for a_ in range(len(big)):
        for b_ in range(a_, len(big)):
            if _lattice_block(segments, greens, groups, z, big[a_], big[b_], a_ == b_, stats):
                done[a_, b_] = done[b_, a_] = True
    if not done.any():
        stats.method = "direct"
        stats.evaluated = stats.pairs
        return _assemble_direct(segments, greens, z)
    # every pair not covered by reuse, by the usual rules, row block by row block
    big_id = np.full(n, -1, dtype=np.int64)
    for k, c in enumerate(big):
        big_id[c.idx] = k
    rows = max(1, GATHER_ELEMENTS // max(n, 1))
    for i0 in range(0, n, rows):
        i1 = min(n, i0 + rows)
        bi = big_id[i0:i1, None]
        bj = big_id[None, i0:]
        covered = (bi >= 0) & (bj >= 0) & done[np.maximum(bi, 0), np.maximum(bj, 0)]
        need = ~covered & (np.arange(i0, n)[None, :] >= np.arange(i0, i1)[:, None])
        ii, jj = np.nonzero(need)
        if ii.size:
            ii += i0
            jj += i0
            z[ii, jj] = pair_entries(segments, greens, ii, jj, groups)
            stats.evaluated += ii.size
    stats.method = "reuse of repeated geometry"
    log.debug("assembly: %d classes, %d of %d pairs evaluated", stats.classes, stats.evaluated, stats.pairs)
    return z
