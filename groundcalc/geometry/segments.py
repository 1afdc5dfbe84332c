"""Split conductors into thin-wire segments.

Conductors are split where they cross or touch one another (X-crossings,
T-joints, rod tops on a conductor), at the interface of a two-layer soil, and
then into pieces no longer than the target segment length. Pieces are kept at
least ``MIN_RADII`` radii long, because a thin-wire model with constant
leakage per segment breaks down below that.

Toward a free end (the foot of a rod, the end of a tail conductor, a rod
top at grade), the leakage density of a thin wire rises steeply over a few
radii. Equal segments resolve this poorly: the resistance of a single rod then
converges only as about h^0.5. The pieces next to such an end are therefore
graded geometrically (ratio ``GRADING_RATIO``) from a tip segment of
``TIP_RADII`` radii up to the target length; the interior keeps equal segments
of at most the target length. The graded lengths depend only on the radius and
the target length, so repeated layouts still produce repeated segments.
Junctions are not graded. There the density dips (the conductors shield one
another) instead of rising: a short graded segment at a rod top on the grid
overshot to negative leakage, with tips of 3 and 10 radii alike, and the
gain in accuracy was about 1e-4 of the resistance. Grid corners and T-joints
converge about as h^1 with equal segments (tests/test_convergence.py), and
grading them would also cost most of the reuse of repeated grid geometry in
the assembly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..model import Conductor, Notice

__all__ = [
    "GRADING_RATIO",
    "MIN_RADII",
    "TIP_RADII",
    "Segmentation",
    "Segments",
    "graded_lengths",
    "move_off_interface",
    "segment_conductors",
]

#: Minimum segment length in conductor radii (thin-wire validity, common practice).
MIN_RADII = 10.0
#: Length of the graded segment at a free end, in conductor radii. Chosen from
#: measurements against a boundary solution of the solid cylinder (tests/data/rod_reference.py):
#: with 3 radii a 3 m rod of 8 mm radius is 0.07 % (uniform soil) and 0.10 % (two-layer) high at
#: 1 m segments, and the leakage density still rises monotonically toward the end; at 1.5 radii
#: and below it starts to oscillate (the thin-wire kernel cannot resolve finer detail).
TIP_RADII = 3.0
#: Ratio of consecutive segment lengths in a graded run (3: four graded segments from 3 radii to
#: 1 m on an 8 mm rod; ratio 2 is 0.006 % closer for two more segments per end).
GRADING_RATIO = 3.0


@dataclass(frozen=True)
class Segments:
    """Straight segments as parallel arrays (n segments).

    Attributes
    ----------
    a, b : numpy.ndarray, shape (n, 3)
        End points (x, y, depth). [m]
    radius : numpy.ndarray, shape (n,)
        Conductor radius. [m]
    conductor : numpy.ndarray of int, shape (n,)
        Index of the conductor each segment belongs to.
    layer : numpy.ndarray of int, shape (n,)
        Soil layer of the segment: 0 for the upper (or only) layer, 1 for the
        next, and so on.
    """

    a: np.ndarray
    b: np.ndarray
    radius: np.ndarray
    conductor: np.ndarray
    layer: np.ndarray

    def __len__(self) -> int:
        return int(self.a.shape[0])

    @property
    def length(self) -> np.ndarray:
        """Segment lengths. [m]"""
        return np.linalg.norm(self.b - self.a, axis=1)

    @property
    def mid(self) -> np.ndarray:
        """Segment mid points. [m]"""
        return 0.5 * (self.a + self.b)


@dataclass(frozen=True)
class Segmentation:
    """Result of :func:`segment_conductors`."""

    segments: Segments
    conductors: tuple[Conductor, ...]
    components: np.ndarray  # connected-component id of every conductor
    notices: tuple[Notice, ...]


def _closest_params(p1, q1, p2, q2):
    """Parameters (s, t) in [0, 1] of the closest points of segment pairs.

    Vectorised form of the classic clamped closest-point algorithm
    (C. Ericson, *Real-Time Collision Detection*, 2005, sec. 5.1.9).
    """
    d1 = q1 - p1
    d2 = q2 - p2
    r = p1 - p2
    a = np.einsum("ij,ij->i", d1, d1)
    e = np.einsum("ij,ij->i", d2, d2)
    f = np.einsum("ij,ij->i", d2, r)
    c = np.einsum("ij,ij->i", d1, r)
    b = np.einsum("ij,ij->i", d1, d2)
    denom = a * e - b * b
    parallel = denom <= 1e-12 * a * e
    s = np.where(parallel, 0.0, np.clip((b * f - c * e) / np.where(parallel, 1.0, denom), 0, 1))
    t = (b * s + f) / e
    low = t < 0.0
    high = t > 1.0
    s = np.where(low, np.clip(-c / a, 0, 1), np.where(high, np.clip((b - c) / a, 0, 1), s))
    t = np.clip(t, 0.0, 1.0)
    gap = np.linalg.norm((p1 + s[:, None] * d1) - (p2 + t[:, None] * d2), axis=1)
    return s, t, gap


def _point_param(p, a, b):
    """Parameter of the projection of p onto segment ab (clamped) and distance."""
    d = b - a
    t = np.clip(np.einsum("ij,ij->i", p - a, d) / np.einsum("ij,ij->i", d, d), 0.0, 1.0)
    gap = np.linalg.norm(a + t[:, None] * d - p, axis=1)
    return t, gap


class _UnionFind:
    def __init__(self, n: int) -> None:
        self.parent = list(range(n))

    def find(self, i: int) -> int:
        while self.parent[i] != i:
            self.parent[i] = self.parent[self.parent[i]]
            i = self.parent[i]
        return i

    def union(self, i: int, j: int) -> None:
        ri, rj = self.find(i), self.find(j)
        if ri != rj:
            self.parent[max(ri, rj)] = min(ri, rj)


def _touching_splits(p0: np.ndarray, p1: np.ndarray, radius: np.ndarray, tol_m: float):
    """Split parameters per conductor and the touching pairs."""
    m = p0.shape[0]
    splits: list[list[float]] = [[] for _ in range(m)]
    pairs: list[tuple[int, int]] = []
    lo = np.minimum(p0, p1)
    hi = np.maximum(p0, p1)
    reach = radius + tol_m
    chunk = max(1, 2_000_000 // max(m, 1))
    for i0 in range(0, m, chunk):
        ii, jj = np.meshgrid(np.arange(i0, min(m, i0 + chunk)), np.arange(m), indexing="ij")
        keep = jj > ii
        ii, jj = ii[keep], jj[keep]
        near = np.all(
            (lo[ii] - reach[ii, None] <= hi[jj] + reach[jj, None])
            & (lo[jj] - reach[jj, None] <= hi[ii] + reach[ii, None]),
            axis=1,
        )
        ii, jj = ii[near], jj[near]
        if ii.size == 0:
            continue
        touch_tol = radius[ii] + radius[jj] + tol_m
        s, t, gap = _closest_params(p0[ii], p1[ii], p0[jj], p1[jj])
        hit = gap <= touch_tol
        for k in np.flatnonzero(hit):
            splits[ii[k]].append(float(s[k]))
            splits[jj[k]].append(float(t[k]))
            pairs.append((int(ii[k]), int(jj[k])))
        # End points lying on the other conductor (T-joints, collinear overlaps).
        for src, dst in ((ii, jj), (jj, ii)):
            for end in (p0, p1):
                tt, g = _point_param(end[src], p0[dst], p1[dst])
                on = g <= touch_tol
                for k in np.flatnonzero(on):
                    splits[dst[k]].append(float(tt[k]))
                    pairs.append((int(src[k]), int(dst[k])))
    return splits, pairs


def move_off_interface(
    conductors: list[Conductor] | tuple[Conductor, ...], interface_depth_m: float
) -> tuple[tuple[Conductor, ...], tuple[Notice, ...]]:
    """Move conductors that lie in the plane of a soil interface just above it.

    A conductor lying exactly on the interface of a two-layer soil belongs to
    neither layer. It is moved up into the upper layer by
    ``min(0.1 mm, H / 1000)``. The resistance is a continuous function of the
    conductor depth, so this gives the value for a conductor centred on the
    interface: moving it the same distance down instead changes the result
    by about 1e-4 (tests/test_twolayer.py).

    Parameters
    ----------
    conductors : sequence of Conductor
        All conductors and rods.
    interface_depth_m : float
        Interface depth H. [m]

    Returns
    -------
    (conductors, notices)
        The conductors (moved ones replaced) and a notice naming them.
    """
    h = float(interface_depth_m)
    delta = min(1e-4, 1e-3 * h)
    out = []
    moved = []
    for c in conductors:
        if abs(c.start[2] - h) <= 1e-6 and abs(c.end[2] - h) <= 1e-6:
            z = h - delta
            c = replace(c, start=(c.start[0], c.start[1], z), end=(c.end[0], c.end[1], z))
            moved.append(c.label)
        out.append(c)
    notices = ()
    if moved:
        notices = (
            Notice(
                "moved-off-interface",
                f"{len(moved)} conductor(s) lie exactly on the soil layer interface (depth {h:g} m) and were "
                f"moved {delta * 1000:.3g} mm up into the upper layer, which gives the result for a conductor "
                "centred on the interface: " + ", ".join(moved[:10]) + (" ..." if len(moved) > 10 else ""),
                "note",
            ),
        )
    return tuple(out), notices


def graded_lengths(
    piece_m: float, target_m: float, tip_m: float, grade_start: bool, grade_end: bool, ratio: float = GRADING_RATIO
) -> np.ndarray:
    """Segment lengths along one piece, graded toward the chosen ends.

    Parameters
    ----------
    piece_m : float
        Length of the piece. [m]
    target_m : float
        Largest segment length. [m]
    tip_m : float
        Length of the segment at a graded end. [m]
    grade_start, grade_end : bool
        Grade toward the start / the end of the piece.
    ratio : float
        Ratio of consecutive lengths in a graded run.

    Returns
    -------
    numpy.ndarray
        Lengths from the start of the piece to its end (they sum to ``piece_m``).

    Notes
    -----
    A graded run is ``tip, tip*ratio, tip*ratio^2, ...`` while the terms stay
    below ``target_m``; the rest of the piece is split into equal segments of at
    most ``target_m``. On a short piece the largest graded terms are dropped until
    the middle part is at least as long as the last graded term, so lengths never
    fall toward the middle. Geometric grading toward a singular end is the usual
    remedy for end singularities (e.g. I. Babuska and B. Q. Guo, "The h, p and h-p
    version of the finite element method", Comput. Methods Appl. Mech. Eng. 133, 1996).
    """
    ends = int(grade_start) + int(grade_end)
    run: list[float] = []
    if ends and tip_m < target_m:
        limit = piece_m / ends
        s = tip_m
        total = 0.0
        while s < target_m * (1.0 - 1e-9) and total + s <= limit:
            run.append(s)
            total += s
            s *= ratio
    while run:
        middle = piece_m - ends * sum(run)
        if middle >= run[-1] * (1.0 - 1e-9):
            break
        run.pop()
    middle = piece_m - ends * sum(run)
    n = max(1, math.ceil(middle / target_m - 1e-9))
    mids = [middle / n] * n
    start = run if grade_start else []
    end = run[::-1] if grade_end else []
    return np.array(start + mids + end)


def _free_ends(p0: np.ndarray, p1: np.ndarray, radius: np.ndarray, tol_m: float) -> np.ndarray:
    """Which conductor ends are free, shape (m, 2) for (start, end).

    An end is free when it touches no other conductor. That includes the top
    of a rod at grade: its image in the surface continues it, so the density
    is smooth there, but the surface potential peaks there, and a long
    constant-current segment across the surface (with its image) puts that
    peak about 0.15 % above the GPR at 1 m segments; graded, it stays below.
    """
    m = p0.shape[0]
    free = np.ones((m, 2), dtype=bool)
    lo = np.minimum(p0, p1)
    hi = np.maximum(p0, p1)
    for k, end in enumerate((p0, p1)):
        chunk = max(1, 2_000_000 // max(m, 1))
        for i0 in range(0, m, chunk):
            ii, jj = np.meshgrid(np.arange(i0, min(m, i0 + chunk)), np.arange(m), indexing="ij")
            keep = ii != jj
            ii, jj = ii[keep], jj[keep]
            reach = (radius[ii] + radius[jj] + tol_m)[:, None]
            near = np.all((end[ii] >= lo[jj] - reach) & (end[ii] <= hi[jj] + reach), axis=1)
            ii, jj = ii[near], jj[near]
            if ii.size == 0:
                continue
            _, gap = _point_param(end[ii], p0[jj], p1[jj])
            free[ii[gap <= radius[ii] + radius[jj] + tol_m], k] = False
    return free


def not_connected_notice(labels: list[str], components, lengths) -> Notice | None:
    """Warning naming the conductors outside the largest connected part (by length), or None.

    ``components`` gives the connected part of each conductor and ``lengths`` its length. [m]
    """
    comps = [int(c) for c in np.asarray(components).tolist()]
    if len(set(comps)) <= 1:
        return None
    totals: dict[int, float] = {}
    for comp, length in zip(comps, np.asarray(lengths, dtype=float).tolist(), strict=True):
        totals[comp] = totals.get(comp, 0.0) + length
    main = max(totals, key=lambda k: totals[k])
    loose = [label for label, comp in zip(labels, comps, strict=True) if comp != main]
    return Notice(
        "not-connected",
        f"{len(loose)} conductor(s) do not touch the main grid and are still treated as "
        "bonded to it (held at the GPR): "
        + ", ".join(loose[:10])
        + (" ..." if len(loose) > 10 else "")
        + ". Check their end coordinates and depths.",
    )


def segment_conductors(
    conductors: list[Conductor] | tuple[Conductor, ...],
    target_length_m: float,
    *,
    interface_depth_m: float | None = None,
    touch_tolerance_m: float = 1e-3,
    grading: bool = True,
    tip_radii: float = TIP_RADII,
) -> Segmentation:
    """Split conductors into segments for the method of moments.

    Parameters
    ----------
    conductors : sequence of Conductor
        All buried conductors and rods.
    target_length_m : float
        Maximum segment length. [m]
    interface_depth_m : float or sequence of float, optional
        Depth of the soil interface(s); conductors crossing one are split
        there, and ``layer`` counts the interfaces above a segment. [m]
    touch_tolerance_m : float
        Gap below which two conductors (beyond their radii) are taken as
        joined. [m]
    grading : bool
        Grade the segments toward free ends (see the module notes); ``False``
        gives equal segments on every piece.
    tip_radii : float
        Length of the segment at a graded end, in conductor radii.

    Returns
    -------
    Segmentation
        Segments, the conductor list, connected components and notices.

    Notes
    -----
    Segments shorter than ``MIN_RADII`` radii are avoided by dropping split
    points closer than that to another split point or to an end, and by
    capping the number of pieces; a notice is issued when a whole conductor
    is shorter than that. Graded runs start from a tip of ``TIP_RADII`` radii
    (shorter than that rule allows), because a single short segment between an
    end and segments growing geometrically does not make the solution oscillate.
    """
    conductors = tuple(conductors)
    m = len(conductors)
    if m == 0:
        raise ValueError("no conductors to segment")
    p0 = np.array([c.start for c in conductors], dtype=float)
    p1 = np.array([c.end for c in conductors], dtype=float)
    radius = np.array([c.diameter_m / 2.0 for c in conductors], dtype=float)
    lengths = np.linalg.norm(p1 - p0, axis=1)

    splits, pairs = _touching_splits(p0, p1, radius, touch_tolerance_m)
    uf = _UnionFind(m)
    for i, j in pairs:
        uf.union(i, j)
    components = np.array([uf.find(i) for i in range(m)])
    notices: list[Notice] = []
    loose_notice = not_connected_notice([c.label for c in conductors], components, lengths)
    if loose_notice is not None:
        notices.append(loose_notice)

    depths = () if interface_depth_m is None else tuple(np.atleast_1d(np.asarray(interface_depth_m, dtype=float)))
    for h in depths:
        z0, z1 = p0[:, 2], p1[:, 2]
        crosses = (np.minimum(z0, z1) < h) & (np.maximum(z0, z1) > h)
        for i in np.flatnonzero(crosses):
            splits[i].append(float((h - z0[i]) / (z1[i] - z0[i])))

    graded_ends = _free_ends(p0, p1, radius, touch_tolerance_m) if grading else np.zeros((m, 2), dtype=bool)
    seg_a: list[np.ndarray] = []
    seg_b: list[np.ndarray] = []
    seg_r: list[np.ndarray] = []
    seg_c: list[np.ndarray] = []
    short_labels: list[str] = []
    capped_labels: list[str] = []
    for i, cond in enumerate(conductors):
        length = lengths[i]
        min_len = MIN_RADII * radius[i]
        if length < min_len:
            short_labels.append(cond.label)
        min_t = min_len / length
        cuts = [0.0]
        for t in sorted(splits[i]):
            if t - cuts[-1] >= min_t and 1.0 - t >= min_t:
                cuts.append(t)
        cuts.append(1.0)
        ts: list[float] = []
        for k in range(len(cuts) - 1):
            piece = (cuts[k + 1] - cuts[k]) * length
            n = max(1, math.ceil(piece / target_length_m - 1e-9))
            n_max = max(1, math.floor(piece / min_len))
            if n > n_max:
                n = n_max
                capped_labels.append(cond.label)
            g0 = bool(graded_ends[i, 0]) and k == 0
            g1 = bool(graded_ends[i, 1]) and k == len(cuts) - 2
            tip = tip_radii * radius[i]
            if (g0 or g1) and target_length_m > min_len and piece > 2.0 * tip:
                sizes = graded_lengths(piece, target_length_m, tip, g0, g1, GRADING_RATIO)
                edges = np.concatenate([[0.0], np.cumsum(sizes)[:-1]]) / length
                ts.extend(cuts[k] + edges)
            else:
                ts.extend(cuts[k] + (cuts[k + 1] - cuts[k]) * np.arange(n) / n)
        ts.append(1.0)
        t_arr = np.array(ts)
        pts = p0[i] + t_arr[:, None] * (p1[i] - p0[i])
        seg_a.append(pts[:-1])
        seg_b.append(pts[1:])
        seg_r.append(np.full(len(ts) - 1, radius[i]))
        seg_c.append(np.full(len(ts) - 1, i))

    if short_labels:
        notices.append(
            Notice(
                "short-conductor",
                "Conductors shorter than ten radii are modelled as one segment and the thin-wire "
                "approximation is poor for them: "
                + ", ".join(short_labels[:10])
                + (" ..." if len(short_labels) > 10 else ""),
            )
        )
    if capped_labels:
        names = sorted(set(capped_labels))
        notices.append(
            Notice(
                "segment-length-capped",
                "The segment length was raised to ten conductor radii on: "
                + ", ".join(names[:10])
                + (" ..." if len(names) > 10 else "")
                + " (shorter segments make the thin-wire solution oscillate).",
                level="note",
            )
        )

    a = np.concatenate(seg_a)
    b = np.concatenate(seg_b)
    mid_z = 0.5 * (a[:, 2] + b[:, 2])
    layer = np.zeros(a.shape[0], dtype=np.int64)
    for h in depths:
        layer += mid_z > h
    segs = Segments(
        a=a,
        b=b,
        radius=np.concatenate(seg_r),
        conductor=np.concatenate(seg_c).astype(np.int64),
        layer=layer,
    )
    return Segmentation(segs, conductors, components, tuple(notices))
