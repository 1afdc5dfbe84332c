"""Sweep a rectangular grid over conductor spacings and perimeter rod counts.

Every combination of the requested spacings and rod counts is built from the
design's single ``Grids`` row, analysed, and costed by the mass of buried
metal; the lightest layout that passes is proposed. This is a design aid: the
engineer decides.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from .. import validation
from ..errors import InputError
from ..model import Design, GridSpec, Rod

__all__ = ["SweepLayout", "parse_counts", "parse_range", "perimeter_rods", "run_sweep", "sweep_layouts"]

#: Largest number of layouts one sweep may try.
MAX_LAYOUTS = 400
#: Closest conductor spacing a sweep accepts (closer meshes are not built in practice). [m]
MIN_SPACING_M = 1.0
#: Most perimeter rods a sweep adds (a rod every metre round a 250 m square grid).
MAX_RODS = 1000
#: Most segments one layout of a sweep may need (the limit of one design).
MAX_SEGMENTS = validation.MAX_SEGMENTS


@dataclass(frozen=True)
class SweepLayout:
    """One tried layout."""

    name: str
    spacing_target_m: float
    spacing_x_m: float
    spacing_y_m: float
    n_along_x: int
    n_along_y: int
    rods_added: int
    design: Design


def parse_range(text: str, option: str) -> list[float]:
    """``"5:10:1"`` -> [5, 6, ..., 10]; ``"5,7.5"`` -> [5, 7.5]; ``"6"`` -> [6]. [m]"""
    try:
        if ":" in text:
            parts = [float(p) for p in text.split(":")]
            if len(parts) != 3:
                raise ValueError
            lo, hi, step = parts
            if step <= 0 or hi < lo:
                raise ValueError
            if not all(math.isfinite(v) for v in parts):
                raise ValueError
            count = int(math.floor((hi - lo) / step + 1e-9)) + 1
            if count > MAX_LAYOUTS:
                raise InputError(
                    f"{option} '{text}' gives {count:,} values, more than {MAX_LAYOUTS} layouts "
                    "(the most a sweep may try)",
                    fix="Use a larger step or a shorter range",
                )
            vals = [lo + k * step for k in range(count)]
        else:
            vals = [float(p) for p in text.split(",") if p.strip()]
    except ValueError:
        raise InputError(
            f"{option} '{text}' is not a list or range of numbers",
            fix=f"Write {option} FROM:TO:STEP (e.g. 5:10:1) or a list (e.g. 5,6,8)",
        ) from None
    if not vals or any(not v > 0 or not math.isfinite(v) for v in vals):
        raise InputError(f"{option} '{text}' must give positive values", fix=f"For example {option} 5:10:1")
    if len(vals) > MAX_LAYOUTS:
        raise InputError(f"{option} '{text}' gives more than {MAX_LAYOUTS} values", fix="Give fewer values")
    return [round(v, 9) for v in vals]


def parse_counts(text: str, option: str) -> list[int]:
    """``"0,8,16"`` -> [0, 8, 16] (whole numbers, zero allowed)."""
    try:
        vals = [float(p) for p in text.split(",") if p.strip()]
    except ValueError:
        vals = []
    if not vals or any(not math.isfinite(v) or v < 0 or v != int(v) for v in vals):
        raise InputError(f"{option} '{text}' must be whole numbers of zero or more", fix=f"For example {option} 0,8,16")
    if len(vals) > MAX_LAYOUTS or max(vals) > MAX_RODS:
        raise InputError(
            f"{option} '{text}' asks for more than {MAX_RODS} rods or {MAX_LAYOUTS} counts",
            fix=f"Give at most {MAX_LAYOUTS} counts of at most {MAX_RODS} rods each",
        )
    return sorted({int(v) for v in vals})


def perimeter_rods(grid: GridSpec, count: int, length_m: float, diameter_m: float) -> list[Rod]:
    """``count`` rods spread evenly along the grid perimeter, the first at the (x0, y0) corner.

    With a multiple of four rods and a square grid, every corner gets one
    (common practice: corners and edges leak most and benefit most).
    """
    if count <= 0:
        return []
    lx, ly = grid.length_x_m, grid.length_y_m
    per = 2.0 * (lx + ly)
    corners = [(0.0, 0.0), (lx, 0.0), (lx, ly), (0.0, ly)]
    edges = [lx, ly, lx, ly]
    rods = []
    for k in range(count):
        s = per * k / count
        for (cx, cy), (nx, ny), e in zip(corners, corners[1:] + corners[:1], edges, strict=True):
            if s <= e + 1e-9:
                t = s / e if e > 0 else 0.0
                x, y = cx + t * (nx - cx), cy + t * (ny - cy)
                break
            s -= e
        rods.append(Rod(f"Sweep-R{k + 1}", grid.x0_m + x, grid.y0_m + y, grid.depth_m, length_m, diameter_m))
    return rods


def sweep_layouts(
    design: Design, spacings_m: list[float], rod_counts: list[int], rod_length_m: float, rod_diameter_m: float
) -> list[SweepLayout]:
    """Every layout of the sweep, built from the design's single Grids row.

    Raises
    ------
    InputError
        When the design has not exactly one Grids row, or the sweep is too large.
    """
    if len(design.grids) != 1:
        raise InputError(
            f"a sweep needs exactly one rectangular grid generator (this design has {len(design.grids)})",
            fix="Describe the grid to vary as one GridSpec; fixed extra conductors may stay as Conductors",
        )
    if len(spacings_m) * len(rod_counts) > MAX_LAYOUTS:
        raise InputError(
            f"the sweep asks for {len(spacings_m) * len(rod_counts)} layouts, more than {MAX_LAYOUTS}",
            fix="Use fewer spacings or rod counts",
        )
    g = design.grids[0]
    if min(spacings_m) < MIN_SPACING_M:
        raise InputError(
            f"a spacing of {min(spacings_m):g} m is closer than {MIN_SPACING_M:g} m",
            fix=f"Use spacings of at least {MIN_SPACING_M:g} m (typical meshes are 3 to 20 m)",
        )
    s_min = min(spacings_m)
    lc = g.length_x_m * (math.ceil(g.length_y_m / s_min) + 1) + g.length_y_m * (math.ceil(g.length_x_m / s_min) + 1)
    if lc / design.settings.segment_length_m > MAX_SEGMENTS:
        raise InputError(
            f"a spacing of {s_min:g} m needs about {lc / design.settings.segment_length_m:,.0f} segments, "
            f"more than {MAX_SEGMENTS:,}",
            fix="Use wider spacings or a longer segment length",
        )
    out = []
    seen = set()
    for s in spacings_m:
        nxx = max(2, math.ceil(g.length_y_m / s - 1e-9) + 1)  # conductors running along x, spread over Ly
        nyy = max(2, math.ceil(g.length_x_m / s - 1e-9) + 1)
        for n_rods in rod_counts:
            key = (nxx, nyy, n_rods)
            if key in seen:  # two target spacings can give the same grid
                continue
            seen.add(key)
            grid = replace(g, n_along_x=nxx, n_along_y=nyy)
            rods = tuple(design.rods) + tuple(perimeter_rods(grid, n_rods, rod_length_m, rod_diameter_m))
            d = replace(design, grids=(grid,), rods=rods, variants=())
            dx, dy = g.length_x_m / (nyy - 1), g.length_y_m / (nxx - 1)
            name = f"{nxx}x{nyy} conductors, {n_rods} rods"
            out.append(SweepLayout(name, s, dx, dy, nxx, nyy, n_rods, d))
    return out


def run_sweep(
    design: Design,
    spacings_m: list[float],
    rod_counts: list[int],
    rod_length_m: float,
    rod_diameter_m: float,
    jobs,
) -> tuple[list[SweepLayout], list]:
    """Build and analyse every layout of the sweep (soil already resolved).

    ``jobs`` is a number of local worker processes, or a
    :class:`groundcalc.studies.engine.Engine` (local pool or Dask cluster).

    Returns
    -------
    tuple
        The layouts and one :class:`~groundcalc.studies.compare.DesignSummary`
        per layout, whose ``extra`` holds the spacing, conductor counts and
        rods added.
    """
    from .compare import summarise_design
    from .engine import run_parallel

    layouts = sweep_layouts(design, spacings_m, rod_counts, rod_length_m, rod_diameter_m)
    items = [(lay.name, lay.design) for lay in layouts]
    if hasattr(jobs, "map"):
        summaries = jobs.map(summarise_design, items, "layouts")
    else:
        summaries = run_parallel(summarise_design, items, jobs)
    for lay, s in zip(layouts, summaries, strict=True):
        s.extra = {
            "spacing_target_m": lay.spacing_target_m,
            "spacing_x_m": lay.spacing_x_m,
            "spacing_y_m": lay.spacing_y_m,
            "conductors_along_x": lay.n_along_x,
            "conductors_along_y": lay.n_along_y,
            "rods_added": lay.rods_added,
        }
    return layouts, summaries
