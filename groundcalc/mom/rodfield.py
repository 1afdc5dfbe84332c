"""Far couplings of vertical segments (driven rods) by radial splines of the point kernel.

A vertical segment sits on one plan axis, so its coupling to a distant
point at depth ``z_o`` depends on the horizontal distance ``d`` to the axis
and on the two depths alone. For every pair of depths (an observation depth
group, a Gauss depth of some rod segment) the point kernel of the soil
model ``G(d) = sum_k w_k / R_k`` (every image; the far layered images from
its radial sums or its tails,
:meth:`groundcalc.mom.operator.Operator.point_kernel`) is sampled once on
a mesh uniform in ``log d`` and interpolated by a cubic spline (scipy.interpolate.CubicSpline), one spline
with a value per rod depth for each observation depth.

Beyond ``SPLIT_RADII`` smoothing lengths plus the longer segment, the
two-point Gauss rule on each segment (horizontal and vertical) agrees with
the exact pair integral to a few parts in 1e7 of the largest coupling
(measured in tests/test_fastop.py for uniform, K = +-0.9 and three-layer
soil), so those couplings are spline values; nearer pairs take the exact
entries of the operator. This
removes the ``n x n_rod`` exact layered-kernel evaluations that would
otherwise dominate large grids with many rods.
"""

from __future__ import annotations

import numpy as np
from scipy.interpolate import CubicSpline
from scipy.spatial import cKDTree

from ..soil.greens import SURFACE
from .operator import _G2, Operator

__all__ = ["RodField"]

#: Mesh step of the radial splines in log(d) (relative step 0.3 %).
LOG_STEP = 0.003
#: Point-axis pairs evaluated at once for surface potentials (memory bound).
POINT_AXIS_CHUNK = 2_000_000


class RodField:
    """Couplings of vertical segments ``rods`` to horizontal segments and surface points.

    Parameters
    ----------
    op : Operator
        The exact operator.
    rods : numpy.ndarray of int
        Vertical segments.
    obs_gauss : numpy.ndarray, shape (nh, 2, 3)
        Two Gauss points of each horizontal (observation) segment.
    obs_group, obs_keys :
        Depth group of each horizontal segment and the ``(layer, z)`` of each group.
    r_segment, r_point : float
        Near radii (plan distance of mid point to the rod axis) for segment
        pairs and for surface points; the longest rod segment is added. [m]
    extent : float
        Plan diagonal of the layout, the largest segment-rod distance (the
        splines reach a quarter farther, plus 20 m; farther surface points are
        summed exactly). [m]
    """

    def __init__(self, op: Operator, rods, obs_gauss, obs_group, obs_keys, r_segment, r_point, extent) -> None:
        seg = op.segments
        self.op = op
        self.rods = np.asarray(rods, dtype=np.int64)
        xy = seg.a[self.rods, :2]
        _, axis = np.unique(np.round(xy, 9), axis=0, return_inverse=True)
        self.axis = axis.reshape(-1)
        self.n_axes = int(self.axis.max()) + 1
        self.axis_pos = [np.flatnonzero(self.axis == k) for k in range(self.n_axes)]
        self.axis_xy = np.array([xy[p].mean(axis=0) for p in self.axis_pos])
        za, zb = seg.a[self.rods, 2], seg.b[self.rods, 2]
        gz = za[:, None] + _G2[None, :] * (zb - za)[:, None]
        lay = np.repeat(seg.layer[self.rods], 2)
        keys = np.column_stack([lay.astype(float), np.round(gz.ravel(), 9)])
        rkeys, rgroup = np.unique(keys, axis=0, return_inverse=True)
        self.rgroup = rgroup.reshape(-1, 2)
        self.rkeys = [(int(a), float(z)) for a, z in rkeys]
        lv = float(op.length[self.rods].max())
        self.r_segment = float(r_segment) + lv
        self.r_point = float(r_point) + lv
        self.obs_gauss = obs_gauss
        self.obs_group = obs_group
        self.obs_members = [np.flatnonzero(obs_group == g) for g in range(len(obs_keys))]
        self.obs_mid = 0.5 * (obs_gauss[:, 0, :2] + obs_gauss[:, 1, :2])
        self.d_lo = 0.25 * min(self.r_segment, self.r_point)
        # farther points are summed exactly; the soil model's tables cover the layout's distances
        self.d_hi = 1.25 * float(extent) + 20.0
        d_hi = 1.01 * self.d_hi
        n = int(np.ceil(np.log(d_hi / self.d_lo) / LOG_STEP)) + 8
        self.u = np.linspace(np.log(self.d_lo), np.log(d_hi), n)
        d = np.exp(self.u)
        self.obs_splines = [self._spline(lay_o, z_o, d) for lay_o, z_o in obs_keys]
        self.surface_spline = self._spline(SURFACE, 0.0, d)
        self._coef = None  # (currents, per-axis cubics) of the last surface evaluation

    def _spline(self, layer_o: int, z_o: float, d: np.ndarray) -> CubicSpline:
        cols = [self.op.point_kernel(layer_o, z_o, lay_s, z_s)(d) for lay_s, z_s in self.rkeys]
        return CubicSpline(self.u, np.column_stack(cols) / (4.0 * np.pi))

    def _values(self, spline: CubicSpline, d: np.ndarray) -> np.ndarray:
        return spline(np.log(np.maximum(d, self.d_lo)))

    def columns(self, hidx: np.ndarray) -> np.ndarray:
        """``Z[hidx, rods]`` (nh x n_rods): spline values, exact entries for near pairs. [ohm]"""
        nh = self.obs_gauss.shape[0]
        out = np.zeros((nh, self.rods.size))
        rg = self.rgroup
        for g, mem in enumerate(self.obs_members):
            gp = self.obs_gauss[mem][:, :, :2]
            spline = self.obs_splines[g]
            for k, pos in enumerate(self.axis_pos):
                d = np.hypot(gp[:, :, 0] - self.axis_xy[k, 0], gp[:, :, 1] - self.axis_xy[k, 1])
                vals = self._values(spline, d.ravel()).reshape(mem.size, 2, -1).mean(axis=1)
                out[np.ix_(mem, pos)] = 0.5 * (vals[:, rg[pos, 0]] + vals[:, rg[pos, 1]])
        # near pairs: exact entries
        near = cKDTree(self.axis_xy).query_ball_point(self.obs_mid, self.r_segment)
        hi = np.repeat(np.arange(nh), [len(a) for a in near])
        if hi.size:
            ak = np.concatenate([np.asarray(a, dtype=np.int64) for a in near if a])
            counts = np.array([self.axis_pos[k].size for k in ak])
            rows = np.repeat(hi, counts)
            cols = np.concatenate([self.axis_pos[k] for k in ak])
            out[rows, cols] = self.op.entries(hidx[rows], self.rods[cols])
        return out

    def surface_potential(self, pts: np.ndarray, q: np.ndarray) -> np.ndarray:
        """Potential at surface plan points ``pts`` of rod currents ``q`` (one per rod segment). [V]

        The surface spline is contracted with each axis's currents into one
        cubic per axis and mesh interval, evaluated for every point-axis pair
        at once (the mesh is uniform in ``log d``); near pairs are exact.
        """
        cached = self._coef
        if cached is not None and np.array_equal(cached[0], q):
            coef = cached[1]
        else:
            w = np.zeros((self.n_axes, len(self.rkeys)))
            for t in range(2):
                np.add.at(w, (self.axis, self.rgroup[:, t]), 0.5 * q)
            coef = np.einsum("kir,ar->kia", self.surface_spline.c, w)  # (4, intervals, axes)
            self._coef = (np.array(q, dtype=float), coef)
        u0, du, last = self.u[0], self.u[1] - self.u[0], coef.shape[1] - 1
        axes = np.arange(self.n_axes)[None, :]
        out = np.zeros(pts.shape[0])
        near_p, near_a = [], []
        step = max(1, POINT_AXIS_CHUNK // self.n_axes)
        for p0 in range(0, pts.shape[0], step):
            pp = pts[p0 : p0 + step]
            d = np.hypot(pp[:, 0, None] - self.axis_xy[None, :, 0], pp[:, 1, None] - self.axis_xy[None, :, 1])
            x = np.log(np.maximum(d, self.d_lo)) - u0
            i = np.clip(np.floor(x / du).astype(np.int64), 0, last)
            x -= i * du
            val = ((coef[0][i, axes] * x + coef[1][i, axes]) * x + coef[2][i, axes]) * x + coef[3][i, axes]
            far = (d >= self.r_point) & (d <= self.d_hi)
            out[p0 : p0 + step] = np.where(far, val, 0.0).sum(axis=1)
            pi, ai = np.nonzero(~far)
            near_p.append(pi + p0)
            near_a.append(ai)
        pi, ai = np.concatenate(near_p), np.concatenate(near_a)
        for k in np.unique(ai).tolist():
            sel = pi[ai == k]
            pos = self.axis_pos[k]
            out[sel] += self.op.surface_potential(pts[sel], q[pos], self.rods[pos])
        return out
