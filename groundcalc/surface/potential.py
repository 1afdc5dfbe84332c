"""Earth-surface potential, touch and step voltages.

The surface potential is evaluated on a raster over the grid plus a margin,
in chunks so memory stays bounded. Touch voltage is GPR minus the surface
potential over the touch area (the grid footprint: the area enclosed by the
grid's outer conductors). Step voltage is the largest potential difference
between two surface points 1 m apart. Raster maxima are refined with a local
search so the reported values do not depend much on the raster spacing.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import scipy.ndimage
import scipy.optimize

from ..geometry.classes import segment_classes
from ..geometry.footprint import Footprint
from ..mom.solver import Solution

__all__ = [
    "Raster",
    "StepResult",
    "TouchArea",
    "TouchResult",
    "auto_raster_spacing",
    "build_raster",
    "find_max_step",
    "find_max_touch",
    "raster_potential",
    "surface_potential",
]

log = logging.getLogger(__name__)

#: Step length of IEEE Std 80 (clause 8.3): 1 m.
STEP_LENGTH_M = 1.0


def surface_potential(points_xy: np.ndarray, solution: Solution, gpr_v: float) -> np.ndarray:
    """Potential of the earth surface at the given plan points.

    Parameters
    ----------
    points_xy : numpy.ndarray, shape (m, 2)
        Plan coordinates. [m]
    solution : Solution
        Method-of-moments solution.
    gpr_v : float
        Ground potential rise of the grid. [V]

    Returns
    -------
    numpy.ndarray, shape (m,)
        Surface potential relative to remote earth. [V]

    Notes
    -----
    Evaluated by :meth:`groundcalc.mom.operator.Operator.surface_potential`:
    the corrected mid-point rule for distant horizontal segments, exact
    line-source integrals per image and a Gauss rule on the image tails
    near them. When the solution was found by the matrix-free operator, its
    plan-grid FFT evaluation is used instead (one FFT per set of currents,
    then a few exact near pairs per point;
    :meth:`groundcalc.mom.fastop.FastOperator.surface_potential`).
    """
    pts = np.asarray(points_xy, dtype=float).reshape(-1, 2)
    current = solution.currents_per_gpr * gpr_v
    fast = solution.fast_operator
    if fast is not None:
        return fast.surface_potential(pts, current)
    return solution.operator.surface_potential(pts, current)


@dataclass(frozen=True)
class TouchArea:
    """Where a person may stand while touching grounded metal.

    By default the grid footprint. When the conductors enclose no mesh (a
    single rod or wire), the plan points within ``reach_m`` of a conductor
    or rod.
    """

    footprint: Footprint
    reach_lines: np.ndarray  # (k, 2, 2) plan lines used when the footprint is empty
    reach_m: float = 1.0

    @property
    def description(self) -> str:
        """Plain-language description for outputs."""
        if not self.footprint.empty:
            return "grid footprint (area enclosed by the outer conductors)"
        return f"within {self.reach_m:g} m of the conductors and rods (the layout encloses no mesh)"

    def contains(self, points: np.ndarray) -> np.ndarray:
        """Whether plan points lie in the touch area."""
        pts = np.asarray(points, dtype=float).reshape(-1, 2)
        if not self.footprint.empty:
            return self.footprint.contains(pts)
        out = np.zeros(pts.shape[0], dtype=bool)
        for (xa, ya), (xb, yb) in self.reach_lines:
            out |= _within(pts[:, 0], pts[:, 1], xa, ya, xb, yb, self.reach_m)
        return out


@dataclass(frozen=True)
class Raster:
    """Surface potential on a regular plan raster, per volt of GPR (the grid at 1 V).

    Attributes
    ----------
    x, y : numpy.ndarray
        Raster coordinates. [m]
    potential_per_gpr : numpy.ndarray, shape (len(y), len(x))
        Surface potential per volt of GPR. [V/V]
    touch_mask : numpy.ndarray of bool, shape (len(y), len(x))
        Raster nodes inside the touch area.
    touch_area : TouchArea
        The touch area itself.
    spacing_m : float
        Raster spacing. [m]
    """

    x: np.ndarray
    y: np.ndarray
    potential_per_gpr: np.ndarray
    touch_mask: np.ndarray
    touch_area: TouchArea
    spacing_m: float


#: Segments of one class on one raster offset needed before their potential is convolved.
LATTICE_MIN_GROUP = 16


def _convolve_full(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Full 2-D linear convolution of real arrays by FFT."""
    import scipy.fft

    shape = [a.shape[k] + b.shape[k] - 1 for k in (0, 1)]
    fast = [scipy.fft.next_fast_len(n, real=True) for n in shape]
    prod = scipy.fft.rfft2(a, fast) * scipy.fft.rfft2(b, fast)
    return scipy.fft.irfft2(prod, fast)[: shape[0], : shape[1]]


def raster_potential(x: np.ndarray, y: np.ndarray, solution: Solution, gpr_v: float) -> np.ndarray:
    """Surface potential on the regular raster ``x`` by ``y`` (shape (len(y), len(x))). [V]

    Notes
    -----
    Segments that are shifted copies of one another (a class of
    :func:`groundcalc.geometry.classes.segment_classes`) and whose mid points sit at
    the same fractional position within the raster cells contribute a
    discrete convolution of their currents with one kernel table: the
    potential of one such segment at every raster offset, evaluated once by
    :func:`surface_potential`. The convolution is done by FFT
    (``scipy.fft``); other segments are summed directly. Both
    give the same values to round-off (tests/test_surface.py). A
    matrix-free solution evaluates every raster point by its plan-grid FFT
    (:func:`surface_potential`), whatever the layout.
    """
    seg = solution.segments
    nx, ny = x.size, y.size
    xx, yy = np.meshgrid(x, y)
    flat = np.column_stack([xx.ravel(), yy.ravel()])
    if nx < 2 or ny < 2 or len(seg) < LATTICE_MIN_GROUP or solution.fast_operator is not None:
        return surface_potential(flat, solution, gpr_v).reshape(ny, nx)
    sx, sy = x[1] - x[0], y[1] - y[0]
    mid = seg.mid
    ux = (mid[:, 0] - x[0]) / sx
    uy = (mid[:, 1] - y[0]) / sy
    kx, ky = np.floor(ux + 1e-7), np.floor(uy + 1e-7)
    fx, fy = np.round(ux - kx, 9), np.round(uy - ky, 9)
    cls = segment_classes(seg)
    key = np.column_stack([cls, np.rint(fx * 1e9), np.rint(fy * 1e9)]).astype(np.int64)
    _, group = np.unique(key, axis=0, return_inverse=True)
    group = group.reshape(-1)
    sizes = np.bincount(group)
    out = np.zeros((ny, nx))
    direct = np.flatnonzero(sizes[group] < LATTICE_MIN_GROUP)
    current = solution.currents_per_gpr * gpr_v
    op = solution.operator
    for g in np.flatnonzero(sizes >= LATTICE_MIN_GROUP):
        idx = np.flatnonzero(group == g)
        ix, iy = kx[idx].astype(np.int64), ky[idx].astype(np.int64)
        x0i, x1i, y0i, y1i = ix.min(), ix.max(), iy.min(), iy.max()
        q = np.zeros((y1i - y0i + 1, x1i - x0i + 1))
        np.add.at(q, (iy - y0i, ix - x0i), current[idx])
        # kernel: one segment of the group at raster offsets dx = i - k for i in raster, k in group
        dxs = np.arange(-x1i, nx - x0i)
        dys = np.arange(-y1i, ny - y0i)
        # raster point i lies (i - k) cells from a segment in cell k; for the reference segment that
        # point is the raster coordinate shifted by the reference's own cell
        ref = idx[0]
        px = x[0] + (dxs + kx[ref]) * sx
        py = y[0] + (dys + ky[ref]) * sy
        gx, gy = np.meshgrid(px, py)
        kern = op.surface_potential(np.column_stack([gx.ravel(), gy.ravel()]), np.ones(1), idx[:1])
        kern = kern.reshape(dys.size, dxs.size)
        full = _convolve_full(q, kern)
        # full[a, b] pairs q index (iy - y0i, ix - x0i) with kernel index (j - iy + y1i, i - ix + x1i):
        # raster row j sits at a = j + y1i - y0i, column i at b = i + x1i - x0i
        out += full[y1i - y0i : y1i - y0i + ny, x1i - x0i : x1i - x0i + nx]
    if direct.size:
        out += op.surface_potential(flat, current[direct], direct).reshape(ny, nx)
    return out


def auto_raster_spacing(extent_m: float, segment_length_m: float | None = None) -> float:
    """Default raster spacing from the plan extent of the grid.

    Aims at about 200 raster lines across the grid, but no finer than 0.25 m
    and no coarser than 1 m (common practice: touch peaks sit in mesh
    centres a few metres wide and are refined locally afterwards). With a
    segment length, the spacing is rounded down to a whole fraction of it, so
    that repeated segments sit alike in the raster cells and their potential
    can be convolved (:func:`raster_potential`). [m]
    """
    s = float(np.clip(extent_m / 200.0, 0.25, 1.0))
    if segment_length_m:
        s = segment_length_m / math.ceil(segment_length_m / s - 1e-9)
    return s


def build_raster(
    solution: Solution,
    touch_area: TouchArea,
    spacing_m: float,
    margin_m: float,
) -> Raster:
    """Evaluate the surface potential per volt of GPR on a raster over the grid and margin.

    Parameters
    ----------
    solution : Solution
        Method-of-moments solution.
    touch_area : TouchArea
        Where touch voltage is assessed.
    spacing_m : float
        Raster spacing. [m]
    margin_m : float
        Extension beyond the outermost conductors. [m]

    Returns
    -------
    Raster
    """
    seg = solution.segments
    pts = np.concatenate([seg.a[:, :2], seg.b[:, :2]])
    low = pts.min(axis=0) - margin_m
    high = pts.max(axis=0) + margin_m
    nx = int(np.floor((high[0] - low[0]) / spacing_m + 1e-9)) + 1
    ny = int(np.floor((high[1] - low[1]) / spacing_m + 1e-9)) + 1
    x = low[0] + spacing_m * np.arange(nx)
    y = low[1] + spacing_m * np.arange(ny)
    xx, yy = np.meshgrid(x, y)
    flat = np.column_stack([xx.ravel(), yy.ravel()])
    log.info("surface potential on %d x %d raster (%.2f m)", nx, ny, spacing_m)
    pot = raster_potential(x, y, solution, 1.0)
    mask = touch_area.contains(flat).reshape(ny, nx)
    return Raster(x, y, pot, mask, touch_area, spacing_m)


def _within(px, py, xa, ya, xb, yb, dist):
    dx, dy = xb - xa, yb - ya
    l2 = dx * dx + dy * dy
    t = np.zeros_like(px) if l2 == 0 else np.clip(((px - xa) * dx + (py - ya) * dy) / l2, 0, 1)
    return np.hypot(px - (xa + t * dx), py - (ya + t * dy)) <= dist


def _local_maxima(values: np.ndarray, mask: np.ndarray, count: int) -> list[tuple[int, int]]:
    v = np.where(mask, values, -np.inf)
    peak = (v == scipy.ndimage.maximum_filter(v, size=3, mode="nearest")) & mask
    idx = np.argwhere(peak)
    order = np.argsort(-v[peak])
    return [tuple(idx[k]) for k in order[:count]]


@dataclass(frozen=True)
class TouchResult:
    """Largest touch voltage per volt of GPR and where it occurs."""

    voltage_per_gpr: float
    location_xy: tuple[float, float]
    raster_voltage_per_gpr: float


@dataclass(frozen=True)
class StepResult:
    """Largest step voltage per volt of GPR and the two foot positions."""

    voltage_per_gpr: float
    start_xy: tuple[float, float]
    end_xy: tuple[float, float]
    raster_voltage_per_gpr: float


def find_max_touch(raster: Raster, potential: Callable[[np.ndarray], np.ndarray]) -> TouchResult:
    """Largest touch voltage per volt of GPR (1 minus the surface potential per volt) in the touch area.

    ``potential`` gives the surface potential per volt of GPR at plan points.

    The raster maximum and the next few local maxima are refined by a
    Nelder-Mead search on the exact surface potential, kept inside the touch
    area.
    """
    touch = 1.0 - raster.potential_per_gpr
    if not raster.touch_mask.any():
        raise ValueError("the touch area contains no raster point; use a finer raster spacing")
    cands = _local_maxima(touch, raster.touch_mask, 6)
    i, j = np.unravel_index(np.argmax(np.where(raster.touch_mask, touch, -np.inf)), touch.shape)
    raster_max = float(touch[i, j])
    best = (raster_max, (float(raster.x[j]), float(raster.y[i])))
    h = raster.spacing_m

    def objective(xy: np.ndarray) -> float:
        if not raster.touch_area.contains(xy)[0]:
            return 0.0
        return -(1.0 - float(potential(xy[None, :])[0]))

    for ci, cj in cands:
        start = np.array([raster.x[cj], raster.y[ci]])
        res = scipy.optimize.minimize(
            objective,
            start,
            method="Nelder-Mead",
            options={
                "xatol": 0.01,
                "fatol": 1e-4,
                "initial_simplex": [start, start + [0.5 * h, 0.0], start + [0.0, 0.5 * h]],
            },
        )
        if -res.fun > best[0] and raster.touch_area.contains(res.x)[0]:
            best = (float(-res.fun), (float(res.x[0]), float(res.x[1])))
    return TouchResult(best[0], best[1], raster_max)


def _step_pair(xy: np.ndarray, theta: float) -> np.ndarray:
    u = 0.5 * STEP_LENGTH_M * np.array([np.cos(theta), np.sin(theta)])
    return np.array([xy + u, xy - u])


def find_max_step(raster: Raster, potential: Callable[[np.ndarray], np.ndarray]) -> StepResult:
    """Largest potential difference per volt of GPR between surface points 1 m apart.

    Candidates are local maxima of the raster gradient; each is refined by a
    Nelder-Mead search over the mid point and the direction of the step.
    """
    h = raster.spacing_m
    gy, gx = np.gradient(raster.potential_per_gpr, h)
    grad = np.hypot(gx, gy) * STEP_LENGTH_M
    inner = np.zeros_like(grad, dtype=bool)
    inner[1:-1, 1:-1] = True
    cands = _local_maxima(grad, inner, 8)
    raster_max = float(grad[inner].max()) if inner.any() else float(grad.max())

    def objective(v: np.ndarray) -> float:
        p = _step_pair(v[:2], v[2])
        pot = potential(p)
        return -abs(float(pot[0] - pot[1]))

    best_val = -np.inf
    best = None
    for ci, cj in cands:
        theta = float(np.arctan2(gy[ci, cj], gx[ci, cj]))
        start = np.array([raster.x[cj], raster.y[ci], theta])
        res = scipy.optimize.minimize(
            objective,
            start,
            method="Nelder-Mead",
            options={
                "xatol": 0.005,
                "fatol": 1e-6 * max(raster_max, 1e-9),
                "initial_simplex": [start, start + [0.5 * h, 0, 0], start + [0, 0.5 * h, 0], start + [0, 0, 0.3]],
            },
        )
        if -res.fun > best_val:
            best_val = float(-res.fun)
            best = res.x
    if best is None:
        return StepResult(raster_max, (0.0, 0.0), (0.0, 0.0), raster_max)
    p = _step_pair(best[:2], best[2])
    pot = potential(p)
    high, low = (0, 1) if pot[0] >= pot[1] else (1, 0)
    return StepResult(
        best_val,
        (float(p[high][0]), float(p[high][1])),
        (float(p[low][0]), float(p[low][1])),
        raster_max,
    )
