"""Plan geometry of a grid: its footprint, area and perimeter.

The footprint is the area enclosed by the grid's outer conductors, that is
the union of its meshes: for an L-shaped grid an L, not the convex hull or
bounding box. It is found from the plan view of the horizontal conductors as
a planar graph: conductors are split where they cross in plan, the faces of
the graph are traced, and the outer boundary of every connected part is kept.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.spatial

__all__ = ["Footprint", "compute_footprint", "points_in_polygon"]

#: Plan points closer than this are merged into one node. [m]
NODE_TOLERANCE_M = 1e-3


def points_in_polygon(points: np.ndarray, polygon: np.ndarray) -> np.ndarray:
    """Even-odd test of plan points against a closed polygon.

    Parameters
    ----------
    points : numpy.ndarray, shape (m, 2)
        Plan points. [m]
    polygon : numpy.ndarray, shape (k, 2)
        Vertices in order (the last is joined to the first). [m]

    Returns
    -------
    numpy.ndarray of bool, shape (m,)
    """
    px, py = points[:, 0], points[:, 1]
    inside = np.zeros(points.shape[0], dtype=bool)
    x1, y1 = polygon[:, 0], polygon[:, 1]
    x2, y2 = np.roll(x1, -1), np.roll(y1, -1)
    for k in range(polygon.shape[0]):
        if y1[k] == y2[k]:
            continue
        cross = (y1[k] > py) != (y2[k] > py)
        xint = x1[k] + (py - y1[k]) * (x2[k] - x1[k]) / (y2[k] - y1[k])
        inside ^= cross & (px < xint)
    return inside


@dataclass(frozen=True)
class Footprint:
    """Footprint of a grid in plan.

    Attributes
    ----------
    polygons : tuple of numpy.ndarray
        Outer boundary of each enclosed part, shape (k, 2) each, counter-
        clockwise. [m]
    area_m2 : float
        Enclosed area A. [m^2]
    perimeter_m : float
        Length of the outer boundary Lp. [m]
    length_x_m, length_y_m : float
        Largest extents in x and y (Lx, Ly of IEEE Std 80). [m]
    max_distance_m : float
        Largest distance between any two points of the boundary (Dm). [m]
    """

    polygons: tuple[np.ndarray, ...]
    area_m2: float
    perimeter_m: float
    length_x_m: float
    length_y_m: float
    max_distance_m: float

    @property
    def empty(self) -> bool:
        """True when the conductors enclose no area."""
        return self.area_m2 <= 0.0

    def contains(self, points: np.ndarray) -> np.ndarray:
        """Whether plan points lie inside the footprint."""
        pts = np.asarray(points, dtype=float).reshape(-1, 2)
        out = np.zeros(pts.shape[0], dtype=bool)
        for poly in self.polygons:
            out |= points_in_polygon(pts, poly)
        return out


def _split_plan(lines: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
    """Split plan segments where they cross or touch one another."""
    k = lines.shape[0]
    cuts: list[list[float]] = [[0.0, 1.0] for _ in range(k)]
    p, q = lines[:, 0], lines[:, 1]
    d = q - p
    for i in range(k):
        # crossings of segment i with all later segments
        j = np.arange(i + 1, k)
        if j.size == 0:
            break
        r = p[j] - p[i]
        den = d[i, 0] * d[j, 1] - d[i, 1] * d[j, 0]
        with np.errstate(divide="ignore", invalid="ignore"):
            s = (r[:, 0] * d[j, 1] - r[:, 1] * d[j, 0]) / den
            t = (r[:, 0] * d[i, 1] - r[:, 1] * d[i, 0]) / den
        ok = (np.abs(den) > 1e-12) & (s >= -1e-9) & (s <= 1 + 1e-9) & (t >= -1e-9) & (t <= 1 + 1e-9)
        for m in np.flatnonzero(ok):
            cuts[i].append(float(np.clip(s[m], 0, 1)))
            cuts[j[m]].append(float(np.clip(t[m], 0, 1)))
    # end points lying on another segment (T-joints, collinear overlaps)
    for i in range(k):
        li2 = float(d[i] @ d[i])
        for end in (p, q):
            t = ((end - p[i]) @ d[i]) / li2
            foot = p[i] + np.outer(t, d[i])
            near = (np.linalg.norm(end - foot, axis=1) <= NODE_TOLERANCE_M) & (t > 0) & (t < 1)
            cuts[i].extend(t[near].tolist())
    pieces = []
    for i in range(k):
        ts = np.unique(np.round(np.array(cuts[i]), 12))
        pts = p[i] + np.outer(ts, d[i])
        for a, b in zip(pts[:-1], pts[1:], strict=True):
            if np.linalg.norm(b - a) > NODE_TOLERANCE_M:
                pieces.append((a, b))
    return pieces


def compute_footprint(lines: np.ndarray) -> Footprint:
    """Footprint of the horizontal conductors in plan.

    Parameters
    ----------
    lines : numpy.ndarray, shape (k, 2, 2)
        Plan end points of the horizontal (or inclined) conductors. [m]

    Returns
    -------
    Footprint
        Empty (zero area, no polygons) when nothing is enclosed.
    """
    lines = np.asarray(lines, dtype=float).reshape(-1, 2, 2)
    if lines.shape[0] == 0:
        return Footprint((), 0.0, 0.0, 0.0, 0.0, 0.0)
    pieces = _split_plan(lines)
    keys: dict[tuple[int, int], int] = {}
    coords: list[np.ndarray] = []

    def node(pt: np.ndarray) -> int:
        key = (int(round(pt[0] / NODE_TOLERANCE_M)), int(round(pt[1] / NODE_TOLERANCE_M)))
        if key not in keys:
            keys[key] = len(coords)
            coords.append(pt)
        return keys[key]

    edges = set()
    for a, b in pieces:
        u, v = node(a), node(b)
        if u != v:
            edges.add((min(u, v), max(u, v)))
    xy = np.array(coords)
    nbrs: dict[int, list[int]] = {}
    for u, v in edges:
        nbrs.setdefault(u, []).append(v)
        nbrs.setdefault(v, []).append(u)
    for u, vs in nbrs.items():
        vs.sort(key=lambda v, u=u: math.atan2(xy[v, 1] - xy[u, 1], xy[v, 0] - xy[u, 0]))
    # Trace faces: from half-edge u->v the next is v->w with w the neighbour
    # of v just clockwise of u; bounded faces come out counter-clockwise.
    seen: set[tuple[int, int]] = set()
    polygons: list[np.ndarray] = []
    area = 0.0
    perimeter = 0.0
    for u0, v0 in [(u, v) for u, v in edges] + [(v, u) for u, v in edges]:
        if (u0, v0) in seen:
            continue
        face = []
        u, v = u0, v0
        while (u, v) not in seen:
            seen.add((u, v))
            face.append((u, v))
            ring = nbrs[v]
            w = ring[(ring.index(u) - 1) % len(ring)]
            u, v = v, w
        pts = xy[[e[0] for e in face]]
        signed = 0.5 * float(np.sum(pts[:, 0] * np.roll(pts[:, 1], -1) - np.roll(pts[:, 0], -1) * pts[:, 1]))
        if signed < -1e-9:
            # outer boundary of a connected part (clockwise): keep it, reversed
            polygons.append(pts[::-1].copy())
            area += -signed
            half = set(face)
            for a, b in face:
                if (b, a) not in half:
                    perimeter += float(np.linalg.norm(xy[b] - xy[a]))
    if not polygons:
        return Footprint((), 0.0, 0.0, 0.0, 0.0, 0.0)
    allpts = np.unique(np.concatenate(polygons), axis=0)
    span = allpts.max(axis=0) - allpts.min(axis=0)
    if allpts.shape[0] > 3:
        allpts = allpts[scipy.spatial.ConvexHull(allpts).vertices]
    diff = allpts[:, None, :] - allpts[None, :, :]
    dmax = float(np.sqrt(np.max(np.einsum("ijk,ijk->ij", diff, diff))))
    return Footprint(tuple(polygons), area, perimeter, float(span[0]), float(span[1]), dmax)
