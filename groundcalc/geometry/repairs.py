"""Geometry checks and repairs applied when a design is read.

- Conductor ends that miss another conductor by less than the snap tolerance
  (Settings sheet) are moved onto it; rods are moved whole. Each snap is
  reported.
- A Conductors-sheet conductor lying along another conductor (collinear and
  overlapping) would be counted twice and makes the moment matrix nearly
  singular: the overlapping part is removed (two Conductors-sheet conductors
  are merged into one), with a note.
- Duplicate rods (same position, overlapping depths) are reduced to one rod over
  the union of their metal.
- Coordinates beyond any site system and conductors deeper than a grounding
  grid can be are refused; unusually deep conductors are flagged.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ..errors import InputError
from ..model import Conductor, Design, Notice, Rod

__all__ = ["MAX_COORDINATE_M", "MAX_DEPTH_M", "clean_design"]

#: Plan coordinates beyond this are refused (no site grid system is this large). [m]
MAX_COORDINATE_M = 1.0e7
#: Conductors deeper than this are refused (outside the model's use). [m]
MAX_DEPTH_M = 1000.0
#: Conductors deeper than this are flagged (check the units). [m]
DEEP_WARNING_M = 30.0
#: Gap taken as touching without any snapping (as the segmentation does). [m]
TOUCH_M = 1e-3


def _closest_on_segment(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Closest points on segments (a, b) to point p, and their distances."""
    d = b - a
    l2 = np.einsum("ij,ij->i", d, d)
    t = np.clip(np.einsum("ij,ij->i", p[None, :] - a, d) / np.where(l2 > 0, l2, 1.0), 0.0, 1.0)
    q = a + t[:, None] * d
    return q, np.linalg.norm(q - p[None, :], axis=1)


def _snap(conductors: list[Conductor], rods: list[Rod], others: list[Conductor], tol: float, notices: list) -> tuple:
    """Move loose ends within ``tol`` of another conductor onto it."""
    allc = conductors + others + [r.as_conductor() for r in rods]
    a = np.array([c.start for c in allc], dtype=float).reshape(-1, 3)
    b = np.array([c.end for c in allc], dtype=float).reshape(-1, 3)
    rad = np.array([c.diameter_m / 2 for c in allc])
    snapped: list[str] = []
    new_c = []
    for i, c in enumerate(conductors):
        ends = [np.array(c.start, float), np.array(c.end, float)]
        for k in (0, 1):
            q, dist = _closest_on_segment(ends[k], a, b)
            dist[i] = np.inf
            gap = dist - rad - rad[i]
            j = int(np.argmin(gap))
            if TOUCH_M < gap[j] <= tol:
                snapped.append(f"{c.label or f'row {i + 1}'} {'start' if k == 0 else 'end'} ({gap[j]:.3f} m)")
                ends[k] = q[j]
        new_c.append(replace(c, start=tuple(ends[0]), end=tuple(ends[1])))
    off = len(conductors) + len(others)
    new_r = []
    for i, r in enumerate(rods):
        top = np.array([r.x_m, r.y_m, r.top_depth_m])
        q, dist = _closest_on_segment(top, a, b)
        dist[off + i] = np.inf
        gap = dist - rad - rad[off + i]
        j = int(np.argmin(gap))
        if TOUCH_M < gap[j] <= tol:
            snapped.append(f"rod {r.label or f'row {i + 1}'} ({gap[j]:.3f} m)")
            new_r.append(replace(r, x_m=float(q[j][0]), y_m=float(q[j][1]), top_depth_m=float(q[j][2])))
        else:
            new_r.append(r)
    if snapped:
        notices.append(
            Notice(
                "snapped",
                f"{len(snapped)} end(s) within the snap tolerance of {tol:g} m were moved onto the nearest "
                "conductor: " + ", ".join(snapped[:12]) + (" ..." if len(snapped) > 12 else ""),
            )
        )
    return new_c, new_r


def collinear_overlap(c: Conductor, d: Conductor) -> tuple[float, float] | None:
    """Parameter interval of ``c`` that lies along ``d`` (collinear within 1 mm), or None."""
    a, b = np.array(c.start, float), np.array(c.end, float)
    p, q = np.array(d.start, float), np.array(d.end, float)
    u = b - a
    length = float(np.linalg.norm(u))
    if length == 0:
        return None
    u /= length
    for x in (p, q):
        w = x - a
        if np.linalg.norm(w - (w @ u) * u) > TOUCH_M:
            return None
    t0, t1 = sorted(((p - a) @ u / length, (q - a) @ u / length))
    lo, hi = max(0.0, t0), min(1.0, t1)
    if (hi - lo) * length <= TOUCH_M:
        return None
    return lo, hi


def near_line(c: Conductor, cand: list[Conductor]) -> np.ndarray:
    """Indices of candidates whose both ends lie within 1 mm of the line of ``c`` (vectorised filter)."""
    a, b = np.array(c.start, float), np.array(c.end, float)
    length = float(np.linalg.norm(b - a))
    if length == 0 or not cand:
        return np.zeros(0, dtype=int)
    u = (b - a) / length
    ok = np.ones(len(cand), dtype=bool)
    for pts in (np.array([d.start for d in cand], float), np.array([d.end for d in cand], float)):
        w = pts - a
        ok &= np.linalg.norm(w - (w @ u)[:, None] * u, axis=1) <= TOUCH_M
    return np.flatnonzero(ok)


def _remove_overlaps(conductors: list[Conductor], fixed: list[Conductor], notices: list) -> list[Conductor]:
    """Trim Conductors-sheet conductors where they lie along others; merge pairs of them."""
    out = list(conductors)
    changed: list[str] = []
    k = 0
    while k < len(out):
        c = out[k]
        hit = False
        cand = out + fixed
        for j in near_line(c, cand):
            d = cand[j]
            if j == k:
                continue
            ov = collinear_overlap(c, d)
            if ov is None:
                continue
            a, b = np.array(c.start, float), np.array(c.end, float)
            if j < len(out):  # both from the Conductors sheet: one conductor over their union
                p, q = np.array(d.start, float), np.array(d.end, float)
                pts = np.array([a, b, p, q])
                u = (b - a) / np.linalg.norm(b - a)
                s = (pts - a) @ u
                merged = replace(
                    c,
                    start=tuple(pts[np.argmin(s)]),
                    end=tuple(pts[np.argmax(s)]),
                    diameter_m=max(c.diameter_m, d.diameter_m),
                )
                changed.append(f"{c.label} and {d.label} merged")
                out[k] = merged
                del out[j]
                if j < k:
                    k -= 1
            else:  # along a grid line or rod: keep only the parts of c beyond it
                lo, hi = ov
                pieces = []
                if lo * np.linalg.norm(b - a) > TOUCH_M:
                    pieces.append(replace(c, end=tuple(a + lo * (b - a))))
                if (1 - hi) * np.linalg.norm(b - a) > TOUCH_M:
                    pieces.append(replace(c, start=tuple(a + hi * (b - a))))
                changed.append(f"{c.label} overlaps {d.label}" + (" (removed)" if not pieces else " (trimmed)"))
                out[k : k + 1] = pieces
            hit = True
            break
        if not hit:
            k += 1
    if changed:
        notices.append(
            Notice(
                "overlap-merged",
                "Conductors lying along one another were counted once: "
                + "; ".join(changed[:10])
                + ("; ..." if len(changed) > 10 else "")
                + ". Check the Conductors sheet.",
                level="note",
            )
        )
    return out


def _dedupe_rods(rods: list[Rod], notices: list) -> list[Rod]:
    """Rods at the same place whose depths overlap become one rod over the union of their metal."""
    out: list[Rod] = []
    dup: list[str] = []
    cells: dict[tuple[int, int], list[int]] = {}  # plan cells of TOUCH_M: candidates in O(1), not O(n)
    for r in rods:
        cx, cy = int(np.floor(r.x_m / TOUCH_M)), int(np.floor(r.y_m / TOUCH_M))
        near = [i for dx in (-1, 0, 1) for dy in (-1, 0, 1) for i in cells.get((cx + dx, cy + dy), ())]
        k = next(
            (
                i
                for i in sorted(near)
                if abs(out[i].x_m - r.x_m) <= TOUCH_M
                and abs(out[i].y_m - r.y_m) <= TOUCH_M
                and r.top_depth_m <= out[i].top_depth_m + out[i].length_m + TOUCH_M
                and out[i].top_depth_m <= r.top_depth_m + r.length_m + TOUCH_M
            ),
            None,
        )
        if k is None:
            cells.setdefault((cx, cy), []).append(len(out))
            out.append(r)
            continue
        o = out[k]
        top = min(o.top_depth_m, r.top_depth_m)
        bottom = max(o.top_depth_m + o.length_m, r.top_depth_m + r.length_m)
        merged = replace(o, top_depth_m=top, length_m=bottom - top, diameter_m=max(o.diameter_m, r.diameter_m))
        grown = merged != o
        out[k] = merged
        dup.append(f"{r.label} (same place as {o.label}" + (f"; kept {top:g} to {bottom:g} m deep)" if grown else ")"))
    if dup:
        notices.append(
            Notice(
                "duplicate-rod",
                "Rods at the same place were counted once, over the union of their lengths: "
                + ", ".join(dup[:10])
                + (" ..." if len(dup) > 10 else ""),
            )
        )
    return out


def _check_extent(design: Design, notices: list) -> None:
    deep = []
    for c in design.all_conductors():
        pts = np.array([c.start, c.end], float)
        if np.any(np.abs(pts[:, :2]) > MAX_COORDINATE_M):
            raise InputError(
                f"{c.kind} '{c.label}' has a plan coordinate beyond {MAX_COORDINATE_M:,.0f} m",
                fix="Use local site coordinates (or check the units of the X and Y columns)",
                quantity=f"{c.kind}.position",
                item=c.source or None,
            )
        zmax = float(pts[:, 2].max())
        if zmax > MAX_DEPTH_M:
            raise InputError(
                f"{c.kind} '{c.label}' reaches {zmax:g} m below grade, beyond {MAX_DEPTH_M:g} m",
                fix="Check the depth columns and their units ([m], not [mm])",
                quantity=f"{c.kind}.length_m" if c.kind == "rod" else "conductor.depth_m",
                item=c.source or None,
            )
        if zmax > DEEP_WARNING_M:
            deep.append(c.label)
    if deep:
        notices.append(
            Notice(
                "deep-conductor",
                f"{len(deep)} conductor(s) or rod(s) reach deeper than {DEEP_WARNING_M:g} m: "
                + ", ".join(deep[:10])
                + ". Deep electrodes are modelled, but check the depth units.",
            )
        )


def clean_design(design: Design, snap_tolerance_m: float = 0.0) -> Design:
    """Apply the checks and repairs of this module; notices are added to the design."""
    notices: list[Notice] = []
    _check_extent(design, notices)
    rods = _dedupe_rods(list(design.rods), notices)
    grid_lines = [c for g in design.grids for c in g.conductors()]
    conductors = list(design.conductors)
    if snap_tolerance_m > 0:
        conductors, rods = _snap(conductors, rods, grid_lines, snap_tolerance_m, notices)
    fixed = grid_lines + [r.as_conductor() for r in rods]
    conductors = _remove_overlaps(conductors, fixed, notices)
    if not notices:
        return design
    return replace(design, conductors=tuple(conductors), rods=tuple(rods), notices=design.notices + tuple(notices))
