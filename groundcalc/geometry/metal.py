"""Metal besides the grid: groups at their own potentials, fences, check points.

A *group* is a set of buried conductors that are connected to one another
(by their own metal or above grade, like the posts of one fence through its
fabric) and so sit at one potential. The grid is group 0. A bonded group is
joined to the grid (held at the GPR); a floating one carries no net current
and takes the potential the field puts on it.

The validated description (frozen dataclasses in SI units, built by
:mod:`groundcalc.io.metal`) lives in :mod:`groundcalc.model`; this module expands fence runs into posts (vertical
rods) and buried bottom wires, and segments everything for the solver with
a group index per segment.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError
from ..model import (
    DEFAULT_FENCE_REACH_M,
    DEFAULT_WIRE_DIAMETER_M,
    CheckArea,
    CheckPoint,
    Conductor,
    FenceRun,
    MetalGroup,
    MetalLayout,
    Notice,
    Profile,
)
from .repairs import collinear_overlap, near_line
from .segments import Segmentation, Segments, move_off_interface, not_connected_notice, segment_conductors

__all__ = [
    "DEFAULT_FENCE_REACH_M",
    "DEFAULT_WIRE_DIAMETER_M",
    "CheckArea",
    "CheckPoint",
    "FenceRun",
    "GroupedSegmentation",
    "MetalGroup",
    "MetalLayout",
    "Profile",
    "segment_groups",
    "segment_distance",
]

#: Posts closer than this are taken as one (a corner shared by two runs). [m]
POST_MERGE_M = 1e-3


def fence_conductors(runs: list[FenceRun] | tuple[FenceRun, ...]) -> tuple[Conductor, ...]:
    """Posts (as vertical rods from grade) and bottom wires of the runs of one fence.

    A post shared by two runs (a corner) is kept once.
    """
    out: list[Conductor] = []
    seen: list[np.ndarray] = []
    for run in runs:
        for k, p in enumerate(run.post_positions()):
            if any(float(np.hypot(*(p - q))) < POST_MERGE_M for q in seen):
                continue
            seen.append(p)
            out.append(
                Conductor(
                    f"{run.label} post {len(seen)}",
                    (float(p[0]), float(p[1]), 0.0),
                    (float(p[0]), float(p[1]), run.post_length_m),
                    run.post_diameter_m,
                    "rod",
                    f"{run.source}, post {k + 1}",
                    "steel 1020",
                )
            )
        wire = run.bottom_wire()
        if wire is not None:
            out.append(wire)
    return tuple(out)


def segment_distance(p1: np.ndarray, q1: np.ndarray, p2: np.ndarray, q2: np.ndarray) -> float:
    """Shortest distance between two straight segments in space. [m]

    References
    ----------
    C. Ericson, Real-Time Collision Detection, Morgan Kaufmann 2005, sec. 5.1.9.
    """
    d1, d2, r = q1 - p1, q2 - p2, p1 - p2
    a, e, f = float(d1 @ d1), float(d2 @ d2), float(d2 @ r)
    if a <= 1e-24 and e <= 1e-24:
        return float(np.linalg.norm(r))
    if a <= 1e-24:
        s, t = 0.0, min(max(f / e, 0.0), 1.0)
    else:
        c = float(d1 @ r)
        if e <= 1e-24:
            t, s = 0.0, min(max(-c / a, 0.0), 1.0)
        else:
            b = float(d1 @ d2)
            den = a * e - b * b
            s = min(max((b * f - c * e) / den, 0.0), 1.0) if den > 1e-24 else 0.0
            t = (b * s + f) / e
            if t < 0.0:
                t, s = 0.0, min(max(-c / a, 0.0), 1.0)
            elif t > 1.0:
                t, s = 1.0, min(max((b - c) / a, 0.0), 1.0)
    return float(np.linalg.norm(p1 + d1 * s - (p2 + d2 * t)))


@dataclass(frozen=True)
class GroupedSegmentation:
    """Segments of the grid and every metal group, with a group index per segment.

    Attributes
    ----------
    segmentation : Segmentation
        All segments (grid and bonded groups first, then each floating group).
    group : numpy.ndarray of int
        Group of each segment: 0 = grid, k = ``names[k]``.
    names : tuple of str
        ``names[0]`` is ``"grid"``; then the metal groups in layout order.
    bonded : numpy.ndarray of bool
        Whether each group is at the GPR (True for the grid).
    """

    segmentation: Segmentation
    group: np.ndarray
    names: tuple[str, ...]
    bonded: np.ndarray

    @property
    def floating(self) -> np.ndarray:
        """Whether each group floats."""
        return ~self.bonded


def _concat(parts: list[Segmentation]) -> Segmentation:
    """One segmentation from several, conductor indices offset."""
    a, b, r, c, lay, comps, conds, notes = [], [], [], [], [], [], [], []
    offset = 0
    for p in parts:
        s = p.segments
        a.append(s.a)
        b.append(s.b)
        r.append(s.radius)
        c.append(s.conductor + offset)
        lay.append(s.layer)
        comps.append(np.asarray(p.components) + offset)
        conds.extend(p.conductors)
        notes.extend(p.notices)
        offset += len(p.conductors)
    segs = Segments(np.concatenate(a), np.concatenate(b), np.concatenate(r), np.concatenate(c), np.concatenate(lay))
    return Segmentation(segs, tuple(conds), np.concatenate(comps), tuple(notes))


def _loose_grid_notice(seg: Segmentation, n_grid: int) -> Notice | None:
    """The 'not connected' warning, for grid conductors only (metal groups are connected by definition)."""
    grid = seg.conductors[:n_grid]
    return not_connected_notice(
        [c.label for c in grid], np.asarray(seg.components)[:n_grid], [c.length_m for c in grid]
    )


def segment_groups(
    grid: list[Conductor],
    layout: MetalLayout,
    target_length_m: float,
    interface_depth_m: float | None = None,
) -> GroupedSegmentation:
    """Segment the grid and the metal groups for a coupled solution.

    Parameters
    ----------
    grid : list of Conductor
        Grid conductors and rods (group 0).
    layout : MetalLayout
        The other metal.
    target_length_m : float
        Maximum segment length. [m]
    interface_depth_m : float, optional
        Two-layer interface depth. [m]

    Returns
    -------
    GroupedSegmentation

    Notes
    -----
    The grid and the bonded groups are segmented together, so a bonded
    conductor is split where it crosses the grid exactly as a grid conductor
    would be. Each floating group is segmented on its own: it is not joined
    to anything it crosses. A floating conductor that touches the grid is
    reported, because in the ground it would be bonded by that contact.
    """
    notices: list[Notice] = []

    def prepared(conds):
        conds = list(conds)
        if interface_depth_m is not None:
            conds, moved = move_off_interface(conds, interface_depth_m)
            notices.extend(moved)
        return list(conds)

    grid_c = prepared(grid)
    bonded_c: list[Conductor] = []
    bonded_g: list[int] = []
    for k, g in enumerate(layout.groups, start=1):
        if g.bonded:
            cs = prepared(g.conductors)
            bonded_c += cs
            bonded_g += [k] * len(cs)
    parts = [segment_conductors(grid_c + bonded_c, target_length_m, interface_depth_m=interface_depth_m)]
    cond_group = [0] * len(grid_c) + bonded_g
    first = parts[0]
    kept = [n for n in first.notices if n.code != "not-connected"]
    loose = _loose_grid_notice(first, len(grid_c))
    parts[0] = replace(first, notices=((loose,) if loose else ()) + tuple(kept))
    placed: list[tuple[str, Conductor]] = [("grid", c) for c in grid_c + bonded_c]
    for k, g in enumerate(layout.groups, start=1):
        if g.bonded:
            continue
        cs = prepared(g.conductors)
        _refuse_shared_metal(g.name, cs, placed)
        s = segment_conductors(cs, target_length_m, interface_depth_m=interface_depth_m)
        parts.append(replace(s, notices=tuple(n for n in s.notices if n.code != "not-connected")))
        cond_group += [k] * len(cs)
        touching = _touching(cs, grid_c + bonded_c)
        if touching:
            notices.append(
                Notice(
                    "floating-touches-grid",
                    f"The floating group '{g.name}' touches grid-connected metal ({touching}); in the ground "
                    "that contact bonds it. It is still solved as floating; mark it bonded if the contact is real.",
                )
            )
        earlier = [c for name, c in placed if name != "grid"]
        touching = _touching(cs, earlier)
        if touching:
            notices.append(
                Notice(
                    "floating-groups-touch",
                    f"The floating group '{g.name}' touches another floating group ({touching}); in the ground "
                    "that contact joins them. Both are still solved as separate floating groups; give them one "
                    "group (or one fence label) if the contact is real.",
                )
            )
        placed += [(g.name, c) for c in cs]
    seg = _concat(parts)
    seg = replace(seg, notices=tuple(notices) + seg.notices)
    group = np.asarray(cond_group, dtype=np.int64)[seg.segments.conductor]
    names = ("grid",) + tuple(g.name for g in layout.groups)
    bonded = np.array([True] + [g.bonded for g in layout.groups], dtype=bool)
    return GroupedSegmentation(seg, group, names, bonded)


def _refuse_shared_metal(name: str, conds: list[Conductor], placed: list[tuple[str, Conductor]]) -> None:
    """Refuse a floating conductor that lies along metal of another group (a shared post or wire).

    The shared length would be counted twice and the moment matrix would be
    singular; which group the metal belongs to is the user's decision.
    """
    others = [c for _, c in placed]
    for c in conds:
        for j in near_line(c, others):
            if collinear_overlap(c, others[j]) is None:
                continue
            owner, d = placed[j]
            where = "the grid or bonded metal" if owner == "grid" else f"the floating group '{owner}'"
            raise InputError(
                f"{c.kind} '{c.label}' of the floating group '{name}' lies along {d.kind} '{d.label}' of {where}: "
                "the same metal cannot belong to two groups",
                fix="A shared post or wire joins them: give fence runs that meet the same Label (one fence), "
                "put the metal in one group, or move one of them",
                item=c.source or None,
            )


def _touching(conds: list[Conductor], others: list[Conductor]) -> str:
    """Label pair of the first floating conductor within its radii (plus 1 mm) of another, or ''."""
    if not others:
        return ""
    oa = np.array([o.start for o in others], float)
    ob = np.array([o.end for o in others], float)
    orad = np.array([o.diameter_m / 2 for o in others])
    for c in conds:
        ca, cb = np.array(c.start, float), np.array(c.end, float)
        # cheap plan-box filter before the exact distance
        lo = np.minimum(ca, cb) - c.diameter_m
        hi = np.maximum(ca, cb) + c.diameter_m
        near = np.all(np.minimum(oa, ob) - orad[:, None] - 1e-3 <= hi, axis=1) & np.all(
            np.maximum(oa, ob) + orad[:, None] + 1e-3 >= lo, axis=1
        )
        for j in np.flatnonzero(near):
            if segment_distance(ca, cb, oa[j], ob[j]) <= c.diameter_m / 2 + orad[j] + 1e-3:
                return f"{c.label} and {others[j].label}"
    return ""
