"""Touch and step where people meet metal other than over the grid.

All values are per volt of GPR: the model is linear in the fault current.
Touch voltage is the difference between the potential of the metal touched
and the surface potential where the person stands, ``|V_metal - V_s|``
(a floating fence can sit below the soil around it). Step voltage is the
largest potential difference over 1 m (IEEE Std 80-2000, clause 8.3).

- Fences: at the reach distance on both sides of every run, and round its
  ends (common practice: a person touches a fence from about 1 m).
- Gates: over the disc swept by the leaf, about the hinge.
- Check points: at the given place, for the metal of the given group.
- Check areas: touch of grid-connected metal and step over each polygon.
- Step in the fence-reach band, where people walk to touch the fence.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import scipy.optimize

from ..geometry.footprint import points_in_polygon
from ..geometry.metal import CheckArea, FenceRun, Profile

__all__ = [
    "PROFILE_POINTS",
    "ProfileData",
    "StepCheck",
    "TouchCheck",
    "area_step",
    "area_touch",
    "band_step",
    "fence_touch",
    "gate_touch",
    "point_touch",
    "profile",
]

#: Spacing of the samples along a fence. [m]
FENCE_SAMPLE_M = 0.25
#: Spacing of the samples over areas and bands. [m]
AREA_SAMPLE_M = 0.5
#: Closest approach to a gate hinge post that is sampled. [m]
HINGE_CLEARANCE_M = 0.3
#: Points along a profile.
PROFILE_POINTS = 201
#: Step length (IEEE Std 80-2000, clause 8.3). [m]
STEP_M = 1.0

Potential = Callable[[np.ndarray], np.ndarray]


@dataclass(frozen=True)
class TouchCheck:
    """Largest touch voltage on one piece of metal, per volt of GPR.

    Attributes
    ----------
    name : str
        Fence label, gate, check point or area name.
    kind : str
        ``"fence"``, ``"gate"``, ``"point"`` or ``"area"``.
    metal : str
        Group touched (``"grid"`` for the grid and bonded metal).
    metal_pu : float
        Potential of that metal per volt of GPR.
    touch_pu : float
        Largest ``|V_metal - V_s|`` per volt of GPR.
    location_xy : tuple of float
        Where the person stands. [m]
    """

    name: str
    kind: str
    metal: str
    metal_pu: float
    touch_pu: float
    location_xy: tuple[float, float]


@dataclass(frozen=True)
class StepCheck:
    """Largest step voltage over a walking area, per volt of GPR."""

    name: str
    kind: str  # "fence reach" or "area"
    step_pu: float
    start_xy: tuple[float, float]
    end_xy: tuple[float, float]


@dataclass(frozen=True)
class ProfileData:
    """Surface potential along a line, per volt of GPR."""

    label: str
    start: tuple[float, float]
    end: tuple[float, float]
    distance_m: np.ndarray
    potential_pu: np.ndarray


def _xy(p) -> tuple[float, float]:
    return (float(p[0]), float(p[1]))


def fence_touch(name: str, runs: list[FenceRun], reach_m: float, metal_pu: float, potential: Potential) -> TouchCheck:
    """Touch on a fence at ``reach_m`` from it on both sides, along every run and round its ends.

    The largest sample is refined by a bounded scalar search along its line.
    """
    lines = []  # (origin, direction, length) of each line at the reach distance
    pts = []
    owner = []
    for run in runs:
        a, b = np.array(run.start, float), np.array(run.end, float)
        length = float(np.linalg.norm(b - a))
        u = (b - a) / length
        n = np.array([-u[1], u[0]])
        t = np.linspace(0.0, length, max(2, math.ceil(length / FENCE_SAMPLE_M) + 1))
        for side in (1.0, -1.0):
            o = a + side * reach_m * n
            lines.append((o, u, length))
            pts.append(o[None, :] + t[:, None] * u[None, :])
            owner += [len(lines) - 1] * t.size
        # round the two ends: half circles of radius reach
        for end, out in ((a, -u), (b, u)):
            ang = np.linspace(-0.5 * np.pi, 0.5 * np.pi, 9)[1:-1]
            c, s = np.cos(ang), np.sin(ang)
            dirs = c[:, None] * out[None, :] + s[:, None] * n[None, :]
            pts.append(end[None, :] + reach_m * dirs)
            owner += [-1] * ang.size
    p = np.concatenate(pts)
    touch = np.abs(metal_pu - potential(p))
    k = int(np.argmax(touch))
    best, where = float(touch[k]), _xy(p[k])
    if owner[k] >= 0:
        o, u, length = lines[owner[k]]
        t0 = float((p[k] - o) @ u)

        def f(t: float) -> float:
            return -abs(metal_pu - float(potential((o + t * u)[None, :])[0]))

        lo, hi = max(0.0, t0 - FENCE_SAMPLE_M), min(length, t0 + FENCE_SAMPLE_M)
        res = scipy.optimize.minimize_scalar(f, bounds=(lo, hi), method="bounded", options={"xatol": 1e-3})
        if -res.fun > best:
            best, where = float(-res.fun), _xy(o + res.x * u)
    return TouchCheck(name, "fence", name, metal_pu, best, where)


def gate_touch(name: str, run: FenceRun, metal: str, metal_pu: float, potential: Potential) -> TouchCheck:
    """Touch on a gate over the disc its leaf sweeps about the hinge (both ways)."""
    r_max = float(run.gate_swing_m)
    hinge = np.array(run.start, float)
    radii = np.linspace(min(HINGE_CLEARANCE_M, r_max), r_max, max(2, math.ceil(r_max / FENCE_SAMPLE_M) + 1))
    pts = []
    for r in radii:
        m = max(8, math.ceil(2 * np.pi * r / FENCE_SAMPLE_M))
        ang = 2 * np.pi * np.arange(m) / m
        pts.append(hinge[None, :] + r * np.column_stack([np.cos(ang), np.sin(ang)]))
    p = np.concatenate(pts)
    touch = np.abs(metal_pu - potential(p))
    k = int(np.argmax(touch))
    return TouchCheck(name, "gate", metal, metal_pu, float(touch[k]), _xy(p[k]))


def point_touch(name: str, xy: tuple[float, float], metal: str, metal_pu: float, potential: Potential) -> TouchCheck:
    """Touch for a person standing at ``xy`` and touching metal at ``metal_pu``."""
    v = float(potential(np.array([xy], float))[0])
    return TouchCheck(name, "point", metal, metal_pu, abs(metal_pu - v), _xy(xy))


def _samples(contains, lo: np.ndarray, hi: np.ndarray, h: float):
    nx = max(2, math.ceil((hi[0] - lo[0]) / h) + 1)
    ny = max(2, math.ceil((hi[1] - lo[1]) / h) + 1)
    x = np.linspace(lo[0], hi[0], nx)
    y = np.linspace(lo[1], hi[1], ny)
    xx, yy = np.meshgrid(x, y)
    flat = np.column_stack([xx.ravel(), yy.ravel()])
    inside = contains(flat).reshape(ny, nx)
    return x, y, flat, inside


def _candidates(values: np.ndarray, flat: np.ndarray, count: int, separation: float) -> list[int]:
    order = np.argsort(-values)
    out: list[int] = []
    for k in order:
        if not np.isfinite(values[k]):
            continue
        if all(np.hypot(*(flat[k] - flat[j])) >= separation for j in out):
            out.append(int(k))
        if len(out) >= count:
            break
    return out


def area_touch(area: CheckArea, potential: Potential, metal_pu: float = 1.0) -> TouchCheck:
    """Largest touch of grid-connected metal over a polygon (samples, then a Nelder-Mead search inside)."""
    poly = np.array(area.polygon, float)

    def contains(p):
        return points_in_polygon(np.asarray(p, float).reshape(-1, 2), poly)

    _, _, flat, inside = _samples(contains, poly.min(axis=0), poly.max(axis=0), AREA_SAMPLE_M)
    pts = np.concatenate([flat[inside.ravel()], poly])
    touch = np.abs(metal_pu - potential(pts))
    best_k = int(np.argmax(touch))
    best, where = float(touch[best_k]), _xy(pts[best_k])
    for k in _candidates(touch, pts, 4, 2.0):

        def f(v):
            if not contains(v)[0]:
                return 0.0
            return -abs(metal_pu - float(potential(v[None, :])[0]))

        s = pts[k]
        res = scipy.optimize.minimize(
            f,
            s,
            method="Nelder-Mead",
            options={"xatol": 0.01, "fatol": 1e-5, "initial_simplex": [s, s + [0.25, 0], s + [0, 0.25]]},
        )
        if -res.fun > best and contains(res.x)[0]:
            best, where = float(-res.fun), _xy(res.x)
    return TouchCheck(area.name, "area", "grid", metal_pu, best, where)


def _step_search(name: str, kind: str, contains, lo, hi, potential: Potential) -> StepCheck:
    """Largest 1 m potential difference with its mid point inside ``contains``."""
    h = AREA_SAMPLE_M
    x, y, flat, inside = _samples(contains, lo - h, hi + h, h)
    pot = np.full(inside.shape, np.nan)
    # neighbours of the inside points too, so the gradient is defined at the edges
    near = inside.copy()
    near[1:, :] |= inside[:-1, :]
    near[:-1, :] |= inside[1:, :]
    near[:, 1:] |= inside[:, :-1]
    near[:, :-1] |= inside[:, 1:]
    pot[near] = potential(flat[near.ravel()])
    gy, gx = np.gradient(pot, y, x)
    grad = np.where(inside, np.hypot(gx, gy) * STEP_M, np.nan).ravel()
    if not np.isfinite(grad).any():
        return StepCheck(name, kind, 0.0, (0.0, 0.0), (0.0, 0.0))
    gxf, gyf = gx.ravel(), gy.ravel()

    def pair(v):
        u = 0.5 * STEP_M * np.array([np.cos(v[2]), np.sin(v[2])])
        return np.array([v[:2] + u, v[:2] - u])

    def f(v):
        if not contains(v[:2])[0]:
            return 0.0
        pv = potential(pair(v))
        return -abs(float(pv[0] - pv[1]))

    best, best_v = -1.0, None
    for k in _candidates(grad, flat, 4, 2.0):
        s = np.array([flat[k][0], flat[k][1], math.atan2(gyf[k], gxf[k])])
        res = scipy.optimize.minimize(
            f,
            s,
            method="Nelder-Mead",
            options={
                "xatol": 0.005,
                "fatol": 1e-7,
                "initial_simplex": [s, s + [0.25, 0, 0], s + [0, 0.25, 0], s + [0, 0, 0.3]],
            },
        )
        if -res.fun > best and contains(res.x[:2])[0]:
            best, best_v = float(-res.fun), res.x
    if best_v is None:
        k = int(np.nanargmax(grad))
        best_v = np.array([flat[k][0], flat[k][1], math.atan2(gyf[k], gxf[k])])
        pv = potential(pair(best_v))
        best = abs(float(pv[0] - pv[1]))
    p = pair(best_v)
    pv = potential(p)
    hi_i, lo_i = (0, 1) if pv[0] >= pv[1] else (1, 0)
    return StepCheck(name, kind, best, _xy(p[hi_i]), _xy(p[lo_i]))


def area_step(area: CheckArea, potential: Potential) -> StepCheck:
    """Largest step voltage over a check area."""
    poly = np.array(area.polygon, float)

    def contains(p):
        return points_in_polygon(np.asarray(p, float).reshape(-1, 2), poly)

    return _step_search(area.name, "area", contains, poly.min(axis=0), poly.max(axis=0), potential)


def _distance_to_runs(p: np.ndarray, runs: list[FenceRun]) -> np.ndarray:
    d = np.full(p.shape[0], np.inf)
    for run in runs:
        a, b = np.array(run.start, float), np.array(run.end, float)
        ab = b - a
        t = np.clip(((p - a) @ ab) / float(ab @ ab), 0.0, 1.0)
        d = np.minimum(d, np.linalg.norm(p - (a + t[:, None] * ab), axis=1))
    return d


def band_step(name: str, runs: list[FenceRun], reach_m: float, potential: Potential) -> StepCheck:
    """Largest step voltage within the reach distance of a fence (where people stand to touch it)."""
    ends = np.array([r.start for r in runs] + [r.end for r in runs], float)

    def contains(p):
        return _distance_to_runs(np.asarray(p, float).reshape(-1, 2), runs) <= reach_m

    return _step_search(
        name, "fence reach", contains, ends.min(axis=0) - reach_m, ends.max(axis=0) + reach_m, potential
    )


def profile(line: Profile, potential: Potential) -> ProfileData:
    """Surface potential at ``PROFILE_POINTS`` points along a straight line."""
    a, b = np.array(line.start, float), np.array(line.end, float)
    t = np.linspace(0.0, 1.0, PROFILE_POINTS)
    pts = a[None, :] + t[:, None] * (b - a)[None, :]
    return ProfileData(line.label, line.start, line.end, t * float(np.linalg.norm(b - a)), potential(pts))
