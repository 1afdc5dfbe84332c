"""Surface potential of vertical segments (rods) in closed form.

A vertical segment from depth z1 to z2 seen from a surface point at plan
distance d has the line integral

    int dz / sqrt(d^2 + a^2 + z^2) = asinh(z2 / rho) - asinh(z1 / rho),   rho^2 = d^2 + a^2

for each of its point images (each image of a vertical segment is again
vertical: the image maps only depths). This is the same regularised kernel as
:func:`groundcalc.mom.integrals.line_integral`, written for this one direction,
so graded rods (many short segments) cost little on a surface raster. Image
tails use the same Gauss rule as the general path.
"""

from __future__ import annotations

import numpy as np

from ..mom.integrals import gauss_legendre_unit

__all__ = ["vertical_mask", "vertical_surface_potential"]

#: Point-segment pairs evaluated at once (memory bound).
CHUNK_PAIRS = 262_144
#: Gauss points along a source segment for the smooth image tails (as the general path).
TAIL_POINTS = 4


def vertical_mask(segments) -> np.ndarray:
    """True for segments whose two ends have the same plan position."""
    dxy = np.hypot(segments.b[:, 0] - segments.a[:, 0], segments.b[:, 1] - segments.a[:, 1])
    return dxy <= 1e-12 * np.maximum(segments.length, 1e-300)


def vertical_surface_potential(points_xy: np.ndarray, solution, gpr_v: float, src: np.ndarray) -> np.ndarray:
    """Surface potential at plan points of the vertical segments ``src``. [V]

    Parameters
    ----------
    points_xy : numpy.ndarray, shape (m, 2)
        Plan coordinates. [m]
    solution : Solution
        Method-of-moments solution.
    gpr_v : float
        Ground potential rise. [V]
    src : numpy.ndarray of int
        Indices of vertical segments.

    Returns
    -------
    numpy.ndarray, shape (m,)
        Their contribution to the surface potential. [V]

    References
    ----------
    Potential of a uniform line source (Dwight 1936; Sunde 1968, ch. 2),
    integrated in closed form along the axis.
    """
    pts = np.asarray(points_xy, dtype=float).reshape(-1, 2)
    seg = solution.segments
    greens = solution.greens
    current = solution.unit_currents_a * gpr_v
    out = np.zeros(pts.shape[0])
    for ls, kern in greens.surface.items():
        sel = src[seg.layer[src] == ls]
        if sel.size == 0:
            continue
        x, y = seg.a[sel, 0], seg.a[sel, 1]
        za, zb = seg.a[sel, 2], seg.b[sel, 2]
        r2 = seg.radius[sel] ** 2
        length = seg.length[sel]
        q = current[sel] / (4.0 * np.pi * length)
        rows = max(1, CHUNK_PAIRS // sel.size)
        for p0 in range(0, pts.shape[0], rows):
            pp = pts[p0 : p0 + rows]
            d2 = (pp[:, 0, None] - x[None, :]) ** 2 + (pp[:, 1, None] - y[None, :]) ** 2
            rho = np.sqrt(d2 + r2[None, :])
            acc = np.zeros(d2.shape)
            for img in kern.explicit:
                z1, z2 = img.map_depth(za), img.map_depth(zb)
                acc += img.weight_ohm_m * np.abs(np.arcsinh(z2[None, :] / rho) - np.arcsinh(z1[None, :] / rho))
            if kern.tails:
                t, w = gauss_legendre_unit(TAIL_POINTS)
                d = np.sqrt(d2)
                for ti, wi in zip(t, w, strict=True):
                    zq = za + ti * (zb - za)
                    for tail in kern.tails:
                        v = tail.argument(0.0, zq)
                        acc += (wi * tail.weight_ohm_m * length)[None, :] * greens.tail_function(
                            d.ravel(), np.broadcast_to(v[None, :], d.shape).ravel()
                        ).reshape(d.shape)
            out[p0 : p0 + rows] += acc @ q
    return out
