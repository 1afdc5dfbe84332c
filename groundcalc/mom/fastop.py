"""Matrix-free thin-wire operator for large grids of any layout: Ewald-split plan-grid FFT.

The dense operator (:mod:`groundcalc.mom.operator`) costs N^2 in time and
memory. This module applies the same operator to a vector, and evaluates
surface potentials, in about N log N time and linear memory, for any plan
layout (no lattice needed). It is a precorrected FFT (Phillips and White
1997) with the point kernel split as in Ewald summation:

    1/R = erf(R / sigma) / R  +  erfc(R / sigma) / R

* **Smooth part, on a plan grid.** Every horizontal segment is represented
  by its two Gauss-Legendre points, each carrying half of its current. For a
  pair of depth groups (segments of one layer at one depth) the smoothed
  kernel ``k(d) = sum_k w_k erf(R_k / sigma) / R_k`` (every image of the
  soil model; the far layered images from its radial sums) depends on the
  horizontal distance ``d`` alone
  (:meth:`groundcalc.mom.operator.Operator.plan_kernel`). Point charges are
  spread to a regular plan grid by tensor Lagrange interpolation weights
  (order ``ORDER``), convolved with the kernel sampled on the grid by a
  zero-padded real FFT (``scipy.fft``), and interpolated back with the same
  weights. The kernel is smooth on the scale ``sigma`` = 2 segment lengths,
  so a grid of one segment length interpolates it accurately at every
  distance, including the self term.
* **Near pairs, exact.** For pairs closer than ``4 sigma`` plus one segment
  length (nine lengths; five for surface points, whose split uses
  ``sigma`` = 1 segment length and a grid of a quarter length) a sparse
  correction replaces the grid's two-point value by the entry of the exact
  operator (closed forms, every image and tail). Beyond
  that distance ``erfc(R / sigma) < 2e-8`` and the two-point Gauss rule is
  as accurate as the corrected mid-point rule of the dense path.
* **Other segments** (rods and sloping conductors) couple to everything by
  dense columns (``n x n_v``); they are few on a grid. Rods (vertical
  segments) take radial splines of the point kernel for distant pairs and
  surface points (:mod:`groundcalc.mom.rodfield`) and exact entries near;
  sloping segments take exact entries everywhere.

The preconditioner is block-Jacobi on plan clusters of at most
``BLOCK_SIZE`` segments (recursive coordinate bisection), each block the
exact principal sub-matrix factorised once; it couples each segment to its
neighbours, which keeps the number of conjugate-gradient iterations nearly
independent of N.

References
----------
J. R. Phillips and J. K. White, A precorrected-FFT method for electrostatic
analysis of complicated 3-D structures, IEEE Trans. CAD 16(10), 1997.
P. P. Ewald, Die Berechnung optischer und elektrostatischer Gitterpotentiale,
Ann. Phys. 369, 1921 (the erf/erfc splitting of 1/R).
"""

from __future__ import annotations

import logging
import math

import numpy as np
import scipy.fft
import scipy.linalg
import scipy.sparse
from scipy.spatial import cKDTree

from ..progress import Progress
from ..soil.greens import SURFACE
from .assembly import PROGRESS_MIN_SIZE
from .krylov import preconditioned_cg
from .operator import _G2, Operator
from .rodfield import RodField

__all__ = ["BLOCK_SIZE", "FAST_MIN_SIZE", "FastOperator", "FastUnavailable", "fast_solve"]

log = logging.getLogger(__name__)

#: Systems at least this large are solved matrix-free by ``solve(method="auto")``.
FAST_MIN_SIZE = 6000
#: Lagrange interpolation order of the plan grid (points per axis).
ORDER = 6
#: Smoothing length of the Ewald split, in (longest horizontal) segment lengths.
SIGMA_RATIO = 2.0
#: Smoothing length for surface points, in segment lengths.
POINT_SIGMA_RATIO = 1.0
#: Pairs farther than this many smoothing lengths (plus a segment length) take the grid value alone:
#: there erfc(R / sigma) < 2e-8.
SPLIT_RADII = 4.0
#: Plan grid spacing, in smoothing lengths.
GRID_RATIO = 0.5
#: Plan grid spacing for surface points, in their smoothing lengths: the potential at z = 0 of a
#: source at grid depth is the least smooth kernel, and 0.25 gives 5e-6 of GPR where 0.5 gave 2e-4
#: (measured on an unequal 80 m x 60 m grid in two-layer soil).
POINT_GRID_RATIO = 0.25
#: Radial samples of a plan kernel per grid step (spline interpolation between them, :class:`_Radial`).
RADIAL_STEPS = 16
#: Largest number of segments in one block of the preconditioner.
BLOCK_SIZE = 48
#: Pairs evaluated at once for near corrections (memory bound).
PAIR_CHUNK = 400_000
#: Largest padded plan grid (nodes) of a surface evaluation (about 2 GiB of FFT work arrays).
MAX_GRID_NODES = 48_000_000
#: Spacings of the surface grid tried in turn (times its default) to stay within ``MAX_GRID_NODES``;
#: twice the default is the matrix grid's ratio (2e-4 of GPR measured); beyond, direct sums.
SURFACE_GRID_COARSENING = (1.0, 1.5, 2.0)


class FastUnavailable(RuntimeError):
    """The soil model offers no plan kernel for some depth pair: use the dense path."""


class _Radial:
    """A smooth plan kernel ``k(d)`` interpolated by a cubic spline on a uniform radial mesh.

    The smoothed kernels are smooth on the scale of two grid steps or more,
    so ``RADIAL_STEPS`` samples per grid step (scipy.interpolate.CubicSpline,
    zero slope at d = 0, where the kernel is even in d) reproduce them to
    about 1e-8 of their largest value (8e-9 measured for the kernels of
    300 / 50 ohm*m two-layer soil): a few thousand kernel evaluations serve every grid offset
    and every near pair. The mesh grows when a larger distance is asked for.
    """

    def __init__(self, kernel, step: float) -> None:
        self.kernel, self.step = kernel, float(step)
        self.reach = 0.0
        self.spline = None

    def __call__(self, d: np.ndarray) -> np.ndarray:
        from scipy.interpolate import CubicSpline

        d = np.asarray(d, dtype=float)
        top = float(d.max()) if d.size else 0.0
        if top > self.reach:
            self.reach = max(2.0 * self.reach, 1.1 * top + 8.0 * self.step)
            r = self.step * np.arange(int(np.ceil(self.reach / self.step)) + 4)
            self.spline = CubicSpline(r, self.kernel(r), bc_type=((1, 0.0), "not-a-knot"))
        return self.spline(d)


class _Grid:
    """Regular plan grid with Lagrange interpolation weights and a padded FFT convolution."""

    def __init__(self, lo: np.ndarray, hi: np.ndarray, h: float, order: int = ORDER) -> None:
        self.h = h
        self.order = order
        half = order // 2
        self.x0 = lo - half * h
        self.shape = tuple(int(math.ceil((hi[k] - self.x0[k]) / h)) + half + 1 for k in range(2))
        self.padded = tuple(scipy.fft.next_fast_len(2 * s - 1, real=True) for s in self.shape)
        self.size = self.shape[0] * self.shape[1]

    def weights(self, xy: np.ndarray) -> scipy.sparse.csr_matrix:
        """Interpolation matrix (len(xy) x nodes): value at xy = W @ nodal values."""
        p = self.order
        m = xy.shape[0]
        w_axes, i_axes = [], []
        for k in range(2):
            u = (xy[:, k] - self.x0[k]) / self.h
            i0 = np.floor(u).astype(np.int64) - (p // 2 - 1)
            t = u - i0
            w = np.ones((m, p))
            for a in range(p):
                for b in range(p):
                    if a != b:
                        w[:, a] *= (t - b) / (a - b)
            w_axes.append(w)
            i_axes.append(i0[:, None] + np.arange(p)[None, :])
        wx, wy = w_axes
        ix, iy = i_axes
        vals = (wx[:, :, None] * wy[:, None, :]).reshape(m, p * p)
        cols = (ix[:, :, None] * self.shape[1] + iy[:, None, :]).reshape(m, p * p)
        rows = np.repeat(np.arange(m), p * p)
        return scipy.sparse.csr_matrix((vals.ravel(), (rows, cols.ravel())), shape=(m, self.size))

    def kernel_hat(self, kernel: _Radial) -> np.ndarray:
        """Real FFT of ``kernel(d)`` sampled at every grid offset (zero on the padding)."""
        px, py = self.padded
        nx, ny = self.shape
        ox = np.arange(px)
        ox = np.where(ox <= px // 2, ox, ox - px)
        oy = np.arange(py)
        oy = np.where(oy <= py // 2, oy, oy - py)
        d = self.h * np.hypot(ox[:, None], oy[None, :])
        used = (np.abs(ox) < nx)[:, None] & (np.abs(oy) < ny)[None, :]
        vals = np.where(used, kernel(np.where(used, d, 0.0)), 0.0)
        return scipy.fft.rfft2(vals)

    def charge_hat(self, nodal: np.ndarray) -> np.ndarray:
        return scipy.fft.rfft2(nodal.reshape(self.shape), s=self.padded)

    def potential(self, hat: np.ndarray) -> np.ndarray:
        return scipy.fft.irfft2(hat, s=self.padded)[: self.shape[0], : self.shape[1]].ravel()


def _bisect(xy: np.ndarray, idx: np.ndarray, size: int, out: list) -> None:
    """Recursive coordinate bisection of ``idx`` into clusters of at most ``size``."""
    stack = [idx]
    while stack:
        cur = stack.pop()
        if cur.size <= size:
            out.append(cur)
            continue
        pts = xy[cur]
        axis = int(np.argmax(pts.max(axis=0) - pts.min(axis=0)))
        order = np.argsort(pts[:, axis], kind="stable")
        half = cur.size // 2
        stack.append(cur[order[:half]])
        stack.append(cur[order[half:]])


class FastOperator:
    """Matrix-free product ``Z x`` and surface potentials of an :class:`Operator`.

    Parameters
    ----------
    op : Operator
        The exact operator (near-pair entries, soil kernels).

    Raises
    ------
    FastUnavailable
        When the soil model has no radial sums for some depth pair.
    """

    def __init__(self, op: Operator) -> None:
        self.op = op
        seg = op.segments
        self.n = len(seg)
        hor = op.horizontal
        self.hidx = np.flatnonzero(hor)
        self.vidx = np.flatnonzero(~hor)
        if self.hidx.size == 0:
            raise FastUnavailable("no horizontal segments")
        length = op.length[self.hidx]
        lmax = float(length.max())
        self.sigma = SIGMA_RATIO * lmax
        self.r_near = SPLIT_RADII * self.sigma + lmax
        self.h_grid = GRID_RATIO * self.sigma
        # surface points: a shorter split (the two-point rule on one segment is accurate from
        # four lengths), so that fewer point-segment pairs need the exact near rule
        self.sigma_p = POINT_SIGMA_RATIO * lmax
        self.r_near_p = SPLIT_RADII * self.sigma_p + lmax
        self.h_grid_p = POINT_GRID_RATIO * self.sigma_p
        a, b = seg.a[self.hidx], seg.b[self.hidx]
        self.gauss = np.stack([a + t * (b - a) for t in _G2], axis=1)  # (nh, 2, 3)
        keys = np.column_stack([seg.layer[self.hidx].astype(float), a[:, 2]])
        ukeys, inv = np.unique(keys, axis=0, return_inverse=True)
        self.group = inv.reshape(-1)
        self.keys = [(int(lay), float(z)) for lay, z in ukeys]
        self._kernels: dict = {}
        self._surface_kernels: dict = {}
        for g1, (l1, z1) in enumerate(self.keys):
            for g2, (l2, z2) in enumerate(self.keys):
                k = op.plan_kernel(l1, z1, l2, z2, self.sigma)
                if k is None:
                    raise FastUnavailable(f"no plan kernel for layers {l1}, {l2} at depths {z1}, {z2} m")
                self._kernels[(g1, g2)] = _Radial(k, self.h_grid / RADIAL_STEPS)
        for g, (lay, z) in enumerate(self.keys):
            k = op.plan_kernel(SURFACE, 0.0, lay, z, self.sigma_p)
            if k is None:
                raise FastUnavailable(f"no surface plan kernel for layer {lay} at depth {z} m")
            self._surface_kernels[g] = _Radial(k, self.h_grid_p / RADIAL_STEPS)
        self._matrix_ready = False
        self._precond = None
        self.members_all = [np.flatnonzero(self.group == g) for g in range(len(self.keys))]
        self.tree = cKDTree(op.mid[self.hidx, :2])
        self._surface_cache: dict = {}
        self.rod_field = None
        rods = self.vidx[op.vertical[self.vidx]]
        if rods.size:
            ends = np.concatenate([op.segments.a[:, :2], op.segments.b[:, :2]])
            span = float(np.hypot(*np.ptp(ends, axis=0)))  # plan diagonal: no segment pair is farther
            self.rod_field = RodField(op, rods, self.gauss, self.group, self.keys, self.r_near, self.r_near_p, span)
        # vertical segments on the rod field, others (sloping) by exact columns
        self.rod_pos = np.flatnonzero(op.vertical[self.vidx])
        self.other_pos = np.setdiff1d(np.arange(self.vidx.size), self.rod_pos)

    def _surface_grid(self, pts: np.ndarray) -> _Grid | None:
        """Plan grid for surface points (kept while later points fall inside it); None if too large."""
        cache = self._surface_cache
        grid = cache.get("grid_obj")
        lo_p, hi_p = pts.min(axis=0), pts.max(axis=0)
        if grid is not None and np.all(lo_p >= cache["lo"]) and np.all(hi_p <= cache["hi"]):
            return grid
        gp = self.gauss[:, :, :2].reshape(-1, 2)
        lo = np.minimum(gp.min(axis=0), lo_p)
        hi = np.maximum(gp.max(axis=0), hi_p)
        if grid is not None:
            lo, hi = np.minimum(lo, cache["lo"]), np.maximum(hi, cache["hi"])
        pad = 0.03 * float(np.max(hi - lo)) + 4.0 * self.h_grid_p  # room for later points nearby
        lo, hi = lo - pad, hi + pad
        for scale in SURFACE_GRID_COARSENING:
            grid = _Grid(lo, hi, scale * self.h_grid_p)
            if grid.padded[0] * grid.padded[1] <= MAX_GRID_NODES:
                break
        else:
            log.warning(
                "surface plan grid of %d x %d nodes is too large: surface potentials summed directly (slow)",
                *grid.padded,
            )
            return None
        if scale > 1.0:
            log.info(
                "surface plan grid coarsened to %.3g m to fit in memory (surface potentials within about "
                "2e-4 of GPR instead of 1e-5)",
                grid.h,
            )
        cache.clear()
        cache.update(
            grid_obj=grid,
            lo=lo,
            hi=hi,
            weights=[grid.weights(self.gauss[m][:, :, :2].reshape(-1, 2)) for m in self.members_all],
            khat=[grid.kernel_hat(self._surface_kernels[g]) for g in range(len(self.keys))],
        )
        return grid

    # -- setup of the product ------------------------------------------------------------

    def _setup_matrix(self) -> None:
        if self._matrix_ready:
            return
        pts = self.gauss[:, :, :2].reshape(-1, 2)
        self.grid = _Grid(pts.min(axis=0), pts.max(axis=0), self.h_grid)
        self.members = [np.flatnonzero(self.group == g) for g in range(len(self.keys))]
        self.w = []
        for mem in self.members:
            self.w.append(self.grid.weights(self.gauss[mem][:, :, :2].reshape(-1, 2)))
        self.khat = {key: self.grid.kernel_hat(k) for key, k in self._kernels.items()}
        self.near = self._near_matrix()
        self.dense_h, self.dense_v = self._dense_columns()
        self._matrix_ready = True

    def _smooth_pairs(self, kernels: dict, gi, gj, pa: np.ndarray, pb: np.ndarray) -> np.ndarray:
        """``1/(4 pi)`` times the mean of the smoothed kernel over Gauss-point pairs.

        ``pa`` (m, ka, 2) and ``pb`` (m, kb, 2) are plan Gauss points; ``gi``,
        ``gj`` the depth groups (``gi`` may be None for surface points).
        """
        out = np.zeros(pa.shape[0])
        ng = len(self.keys)
        code = gj if gi is None else gi * ng + gj
        present = np.flatnonzero(np.bincount(code, minlength=ng * ng if gi is not None else ng))
        for c in present.tolist():
            sel = slice(None) if present.size == 1 else np.flatnonzero(code == c)
            k = kernels[c] if gi is None else kernels[(c // ng, c % ng)]
            qa, qb = pa[sel], pb[sel]
            acc = 0.0
            for s in range(pa.shape[1]):
                for t in range(pb.shape[1]):
                    acc = acc + k(np.hypot(qa[:, s, 0] - qb[:, t, 0], qa[:, s, 1] - qb[:, t, 1]))
            out[sel] = acc / (pa.shape[1] * pb.shape[1])
        return out / (4.0 * np.pi)

    def _near_matrix(self) -> scipy.sparse.csr_matrix:
        """Sparse correction (horizontal segments): exact entry minus the grid's smooth value."""
        nh = self.hidx.size
        mid = self.op.mid[self.hidx, :2]
        pairs = cKDTree(mid).query_pairs(self.r_near, output_type="ndarray")
        ii = np.concatenate([np.arange(nh), pairs[:, 0]])
        jj = np.concatenate([np.arange(nh), pairs[:, 1]])
        vals = np.empty(ii.size)
        exact_all = np.empty(ii.size)
        gp = self.gauss[:, :, :2]
        starts = range(0, ii.size, PAIR_CHUNK)
        with Progress("near pairs", len(starts) if self.n >= PROGRESS_MIN_SIZE else 0, unit="block") as progress:
            for k0 in starts:
                si, sj = ii[k0 : k0 + PAIR_CHUNK], jj[k0 : k0 + PAIR_CHUNK]
                exact = self.op.entries(self.hidx[si], self.hidx[sj])
                smooth = self._smooth_pairs(self._kernels, self.group[si], self.group[sj], gp[si], gp[sj])
                vals[k0 : k0 + PAIR_CHUNK] = exact - smooth
                exact_all[k0 : k0 + PAIR_CHUNK] = exact
                progress.update()
        # exact entries kept (sorted by pair code, i <= j) for the blocks of the preconditioner
        code = ii * nh + jj
        order = np.argsort(code)
        self._near_code, self._near_exact = code[order], exact_all[order]
        off = ii != jj
        rows = np.concatenate([ii, jj[off]])
        cols = np.concatenate([jj, ii[off]])
        data = np.concatenate([vals, vals[off]])
        log.debug("fast operator: %d near pairs", pairs.shape[0])
        return scipy.sparse.csr_matrix((data, (rows, cols)), shape=(nh, nh))

    def _dense_columns(self) -> tuple[np.ndarray, np.ndarray]:
        """Columns ``Z[:, v]`` of the non-horizontal segments: rows of horizontal (nh x nv), of the others (nv x nv).

        Rods couple to horizontal segments through :class:`RodField` (exact
        near pairs); sloping segments, and all pairs of non-horizontal
        segments, take exact entries.
        """
        nv = self.vidx.size
        dense_h = np.zeros((self.hidx.size, nv))
        if nv == 0:
            return dense_h, np.zeros((0, 0))
        if self.rod_pos.size:
            dense_h[:, self.rod_pos] = self.rod_field.columns(self.hidx)
        dense_h[:, self.other_pos] = self._exact_block(self.hidx, self.vidx[self.other_pos])
        return dense_h, self._exact_block(self.vidx, self.vidx)

    def _exact_block(self, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
        """Exact entries ``Z[rows][:, cols]``."""
        out = np.zeros((rows.size, cols.size))
        if cols.size == 0:
            return out
        step = max(1, PAIR_CHUNK // cols.size)
        for i0 in range(0, rows.size, step):
            i1 = min(rows.size, i0 + step)
            ii = np.repeat(rows[i0:i1], cols.size)
            jj = np.tile(cols, i1 - i0)
            out[i0:i1] = self.op.entries(ii, jj).reshape(i1 - i0, cols.size)
        return out

    # -- the product ---------------------------------------------------------------------

    def matvec(self, x: np.ndarray) -> np.ndarray:
        """``Z @ x`` for the full (symmetric) moment matrix. [ohm * x]"""
        self._setup_matrix()
        x = np.asarray(x, dtype=float)
        xh = x[self.hidx]
        hats = []
        for g, mem in enumerate(self.members):
            charges = np.repeat(0.5 * xh[mem], 2)
            hats.append(self.grid.charge_hat(self.w[g].T @ charges))
        yh = np.zeros(self.hidx.size)
        for g1, mem in enumerate(self.members):
            total = sum(self.khat[(g1, g2)] * hats[g2] for g2 in range(len(self.members)))
            vals = self.w[g1] @ self.grid.potential(total)
            yh[mem] = 0.5 * vals.reshape(-1, 2).sum(axis=1) / (4.0 * np.pi)
        yh += self.near @ xh
        y = np.zeros(self.n)
        if self.vidx.size:
            xv = x[self.vidx]
            yh += self.dense_h @ xv
            y[self.vidx] = self.dense_h.T @ xh + self.dense_v @ xv
        y[self.hidx] = yh
        return y

    # -- preconditioner and solve ------------------------------------------------------------

    def _known_entries(self, ci: np.ndarray, cj: np.ndarray) -> np.ndarray:
        """Entries ``Z[ci, cj]`` from what the product already holds (no new exact integrals).

        Near horizontal pairs: the exact entries of the near correction;
        other horizontal pairs (beyond the near radius): the two-point Gauss
        rule on the smoothed kernel, equal there to the exact entry to
        ``erfc(R / sigma)``; pairs with a non-horizontal segment: the dense
        columns.
        """
        nh = self.hidx.size
        hpos = np.full(self.n, -1, dtype=np.int64)
        hpos[self.hidx] = np.arange(nh)
        vpos = np.full(self.n, -1, dtype=np.int64)
        vpos[self.vidx] = np.arange(self.vidx.size)
        hi, hj = hpos[ci], hpos[cj]
        out = np.empty(ci.size)
        both = np.flatnonzero((hi >= 0) & (hj >= 0))
        a, b = np.minimum(hi[both], hj[both]), np.maximum(hi[both], hj[both])
        code = a * nh + b
        k = np.minimum(np.searchsorted(self._near_code, code), self._near_code.size - 1)
        found = self._near_code[k] == code
        out[both[found]] = self._near_exact[k[found]]
        far = both[~found]
        if far.size:
            gp = self.gauss[:, :, :2]
            fa, fb = hi[far], hj[far]
            out[far] = self._smooth_pairs(self._kernels, self.group[fa], self.group[fb], gp[fa], gp[fb])
        hv = np.flatnonzero((hi >= 0) & (hj < 0))
        out[hv] = self.dense_h[hi[hv], vpos[cj[hv]]]
        vh = np.flatnonzero((hi < 0) & (hj >= 0))
        out[vh] = self.dense_h[hj[vh], vpos[ci[vh]]]
        vv = np.flatnonzero((hi < 0) & (hj < 0))
        out[vv] = self.dense_v[vpos[ci[vv]], vpos[cj[vv]]]
        return out

    def block_preconditioner(self):
        """Block-Jacobi preconditioner on plan clusters: ``r -> B^-1 r`` (built once, kept)."""
        if self._precond is None:
            self._precond = self._build_preconditioner()
        return self._precond

    def _build_preconditioner(self):
        self._setup_matrix()
        mid = self.op.mid[:, :2]
        clusters: list[np.ndarray] = []
        _bisect(mid, np.arange(self.n), BLOCK_SIZE, clusters)
        bmax = max(c.size for c in clusters)
        nb = len(clusters)
        idx = np.full((nb, bmax), self.n, dtype=np.int64)
        inv = np.zeros((nb, bmax, bmax))
        for k, c in enumerate(clusters):
            idx[k, : c.size] = c
        # every in-cluster pair at once
        ci = np.concatenate([np.repeat(c, c.size) for c in clusters])
        cj = np.concatenate([np.tile(c, c.size) for c in clusters])
        vals = np.empty(ci.size)
        for k0 in range(0, ci.size, PAIR_CHUNK):
            sl = slice(k0, k0 + PAIR_CHUNK)
            vals[sl] = self._known_entries(ci[sl], cj[sl])
        pos = 0
        for k, c in enumerate(clusters):
            m = c.size
            blk = vals[pos : pos + m * m].reshape(m, m)
            pos += m * m
            blk = 0.5 * (blk + blk.T)
            inv[k, :m, :m] = scipy.linalg.cho_solve(scipy.linalg.cho_factor(blk), np.eye(m))

        def apply(r: np.ndarray) -> np.ndarray:
            rp = np.append(r, 0.0)[idx]
            z = np.matmul(inv, rp[:, :, None])[:, :, 0]
            out = np.zeros(self.n + 1)
            out[idx.ravel()] = z.ravel()
            return out[: self.n]

        return apply

    def solve(self, rhs: np.ndarray, tol: float = 1e-9, max_iter: int = 500):
        """Preconditioned conjugate gradients (Saad 2003, Algorithm 9.1); ``(x, iterations)`` or ``(None, it)``.

        Large systems show their progress as decades of residual reduction.
        """
        precond = self.block_preconditioner()
        decades = int(round(-math.log10(tol))) if self.n >= PROGRESS_MIN_SIZE else 0
        with Progress("conjugate gradients (residual decades)", decades, unit="decade") as progress:

            def on_residual(rel: float) -> None:
                reached = min(decades, int(-math.log10(max(rel, 1e-300))))
                if reached > progress.done:
                    progress.update(reached - progress.done)

            return preconditioned_cg(self.matvec, precond, rhs, tol, max_iter, on_residual)

    # -- surface potentials ----------------------------------------------------------------

    def surface_potential(self, points_xy: np.ndarray, currents: np.ndarray) -> np.ndarray:
        """Potential at plan points on the earth surface of the currents of every segment.

        Same meaning as :meth:`Operator.surface_potential` with all sources. [V]
        """
        pts = np.asarray(points_xy, dtype=float).reshape(-1, 2)
        q = np.asarray(currents, dtype=float)
        op = self.op
        if pts.shape[0] == 0:
            return np.zeros(0)
        grid = self._surface_grid(pts)
        if grid is None:
            return op.surface_potential(pts, q)
        qh = q[self.hidx]
        cache = self._surface_cache
        if cache.get("grid") is not grid or not np.array_equal(cache.get("q"), qh):
            total = None
            for g, w in enumerate(cache["weights"]):
                mem = self.members_all[g]
                hat = cache["khat"][g] * grid.charge_hat(w.T @ np.repeat(0.5 * qh[mem], 2))
                total = hat if total is None else total + hat
            cache["grid"], cache["q"], cache["phi"] = grid, qh.copy(), grid.potential(total)
        out = grid.weights(pts) @ cache["phi"] / (4.0 * np.pi)
        # near corrections
        tree = self.tree
        near = cKDTree(pts).sparse_distance_matrix(tree, self.r_near_p, output_type="ndarray")
        pi = near["i"].astype(np.int64)
        sj = near["j"].astype(np.int64)
        # sparse_distance_matrix omits exact zero distances: add coincident pairs
        zero = cKDTree(pts).query_ball_tree(tree, 0.0)
        zi = np.repeat(np.arange(len(zero)), [len(z) for z in zero])
        if zi.size:
            pi = np.concatenate([pi, zi])
            sj = np.concatenate([sj, np.concatenate([np.asarray(z, dtype=np.int64) for z in zero if z])])
            keyset = np.unique(pi * (self.hidx.size + 1) + sj, return_index=True)[1]
            pi, sj = pi[keyset], sj[keyset]
        for k0 in range(0, pi.size, PAIR_CHUNK):
            a, b = pi[k0 : k0 + PAIR_CHUNK], sj[k0 : k0 + PAIR_CHUNK]
            exact = op.point_pairs(pts[a], self.hidx[b])
            smooth = self._smooth_pairs(
                self._surface_kernels, None, self.group[b], pts[a][:, None, :], self.gauss[b][:, :, :2]
            )
            np.add.at(out, a, (exact - smooth) * qh[b])
        if self.rod_pos.size:
            out += self.rod_field.surface_potential(pts, q[self.vidx[self.rod_pos]])
        if self.other_pos.size:
            out += op.surface_potential(pts, q[self.vidx[self.other_pos]], self.vidx[self.other_pos])
        return out


def fast_solve(segments, greens, rhs: np.ndarray):
    """Solve ``Z X = rhs`` matrix-free for one right-hand side or several (columns).

    One operator and one preconditioner serve every column.

    Returns
    -------
    (FastOperator, X, iterations) or (None, None, iterations)
        ``None`` when the soil model offers no plan kernels or an iteration
        does not converge (logged); ``iterations`` is the largest count.
    """
    try:
        fast = FastOperator(Operator(segments, greens))
    except FastUnavailable as exc:
        log.info("matrix-free operator not available (%s); assembling", exc)
        return None, None, 0
    cols, most = [], 0
    for b in np.asarray(rhs, dtype=float).reshape(len(segments), -1).T:
        x, iterations = fast.solve(b)
        most = max(most, iterations)
        if x is None:
            log.info("matrix-free conjugate gradients did not converge in %d iterations; assembling", iterations)
            return None, None, most
        cols.append(x)
    x = np.column_stack(cols)
    return fast, (x[:, 0] if np.ndim(rhs) == 1 else x), most
