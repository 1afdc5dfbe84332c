"""Figures of the report built from one design's results.

Each function returns a list of flowables (figure, spacer, caption) for the
caller to keep together. All
voltages are at the design's GPR; positions are in the workbook's plan
coordinates.
"""

from __future__ import annotations

import numpy as np
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import Paragraph, Spacer

from ..analysis import Results, plan_lines
from ..surface.potential import surface_potential
from .charts import Series, line_chart
from .maps import ColourBar, Marker, PlanFigure, colour_of, map_image

__all__ = [
    "leakage_figure",
    "map_arrays",
    "plan_figure",
    "potential_figure",
    "step_profile",
    "touch_figure",
    "touch_profile",
]

WIDTH = 168 * mm  # fits the 174 mm text width less the frame padding
POTENTIAL_COLOUR = colors.HexColor("#1f4e79")
LIMIT_COLOUR = colors.HexColor("#b2182b")
REF_COLOUR = colors.HexColor("#333333")


def _raster_extent(results: Results) -> tuple[float, float, float, float]:
    r = results.field.raster
    h = r.spacing_m / 2.0
    return float(r.x[0] - h), float(r.x[-1] + h), float(r.y[0] - h), float(r.y[-1] + h)


def _markers(results: Results) -> list[Marker]:
    t, s = results.field.touch, results.field.step
    return [
        Marker(t.location_xy, f"max touch {results.max_touch_v:,.0f} V"),
        Marker(s.start_xy, f"max step {results.max_step_v:,.0f} V", to=s.end_xy),
    ]


def _figure(results: Results, bounds, max_height: float) -> PlanFigure:
    fig = PlanFigure(WIDTH, max_height, bounds)
    fig.lines = plan_lines(results.design)
    d = results.design
    fig.rods = np.array([[r.x_m, r.y_m] for r in d.rods]).reshape(-1, 2)
    return fig


def _caption(text: str, style) -> Paragraph:
    return Paragraph(text, style)


def plan_figure(results: Results, style, max_height: float = 120 * mm) -> list:
    """The layout to scale with the worst touch and step locations."""
    lines = plan_lines(results.design)
    pts = [lines.reshape(-1, 2)] if lines.size else []
    pts += [np.array([[r.x_m, r.y_m] for r in results.design.rods]).reshape(-1, 2)]
    pts += [np.array([results.field.touch.location_xy, results.field.step.start_xy, results.field.step.end_xy])]
    allp = np.concatenate(pts)
    lo, hi = allp.min(axis=0), allp.max(axis=0)
    pad = max(2.0, 0.05 * float(np.max(hi - lo)))
    fig = _figure(results, (lo[0] - pad, hi[0] + pad, lo[1] - pad, hi[1] + pad), max_height)
    fig.markers = _markers(results)
    n_c = len([c for c in results.design.all_conductors() if c.kind != "rod"])
    text = (
        f"Plan of the grid to scale: {n_c} horizontal conductors (lines) and {len(results.design.rods)} rods "
        "(circles), with the worst touch point (cross) and the worst step (the two foot positions, 1 m apart)."
    )
    return [fig, Spacer(1, 2), _caption(text, style)]


def map_arrays(results: Results) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Surface potential, touch voltage (NaN outside the touch area) and where touch exceeds its limit. [V]"""
    r = results.field.raster
    pot = r.potential_per_gpr * results.gpr_v
    touch = np.where(r.touch_mask, results.gpr_v - pot, np.nan)
    exceed = r.touch_mask & (results.gpr_v - pot > results.limits.touch_limit_v)
    return pot, touch, exceed


def potential_figure(results: Results, style, max_height: float = 115 * mm) -> list:
    """Colour map of the earth-surface potential."""
    pot, _, exceed = map_arrays(results)
    lo, hi = float(np.min(pot)), float(np.max(pot))
    fig = _figure(results, _raster_extent(results), max_height)
    fig.image = map_image(pot, lo, hi, hatch=exceed)
    fig.image_extent = _raster_extent(results)
    fig.line_colour = colors.Color(0, 0, 0, alpha=0.55)
    fig.line_width = 0.6
    fig.markers = _markers(results)
    fig.set_colour_bar(ColourBar(lo, hi, "Earth-surface potential [V]", [(results.gpr_v, "GPR")]))
    text = (
        f"Earth-surface potential at a GPR of {results.gpr_v:,.0f} V on a {results.field.raster.spacing_m:.3g} m "
        f"raster ({pot.shape[1]} x {pot.shape[0]} points). "
        + (
            "Hatching: inside the footprint, where the touch voltage exceeds the tolerable "
            f"{results.limits.touch_limit_v:,.0f} V."
            if exceed.any()
            else "Nowhere inside the footprint does the touch voltage exceed the tolerable "
            f"{results.limits.touch_limit_v:,.0f} V (there would be hatching)."
        )
    )
    return [fig, Spacer(1, 2), _caption(text, style)]


def touch_figure(results: Results, style, max_height: float = 115 * mm) -> list:
    """Colour map of the touch voltage over the touch area, limit marked."""
    _, touch, exceed = map_arrays(results)
    lo = 0.0
    hi = float(np.nanmax(touch)) if np.isfinite(touch).any() else 1.0
    limit = results.limits.touch_limit_v
    fig = _figure(results, _raster_extent(results), max_height)
    fig.image = map_image(touch, lo, hi, hatch=exceed)
    fig.image_extent = _raster_extent(results)
    fig.line_colour = colors.Color(0, 0, 0, alpha=0.55)
    fig.line_width = 0.6
    fig.markers = _markers(results)[:1]
    fig.set_colour_bar(ColourBar(lo, hi, "Touch voltage [V]", [(limit, "limit")]))
    where = results.field.raster.touch_area.description
    pct = 100.0 * float(exceed.sum()) / max(1, int(results.field.raster.touch_mask.sum()))
    text = (
        f"Touch voltage (GPR minus surface potential) where it is assessed, the {where}; grey outside it. "
        f"The tolerable touch voltage is {limit:,.0f} V ({results.limits.touch_basis}); "
        + (
            f"hatched where it is exceeded ({pct:.1f} % of the area)."
            if exceed.any()
            else f"it is above the whole scale (largest {results.max_touch_v:,.0f} V), so nothing is hatched."
        )
    )
    return [fig, Spacer(1, 2), _caption(text, style)]


def _line_points(results: Results, origin, direction, n: int = 361) -> tuple[np.ndarray, np.ndarray]:
    x0, x1, y0, y1 = _raster_extent(results)
    u = np.asarray(direction, float)
    u = u / np.linalg.norm(u)
    reach = float(np.hypot(x1 - x0, y1 - y0))
    s = np.linspace(-reach, reach, 4 * n)
    p = np.asarray(origin, float) + s[:, None] * u
    inside = (p[:, 0] >= x0) & (p[:, 0] <= x1) & (p[:, 1] >= y0) & (p[:, 1] <= y1)
    s = np.linspace(s[inside].min(), s[inside].max(), n)
    return s, np.asarray(origin, float) + s[:, None] * u


def touch_profile(results: Results, style) -> list:
    """Surface potential along x through the worst touch point, with GPR and the tolerable band."""
    t = results.field.touch
    s, pts = _line_points(results, t.location_xy, (1.0, 0.0))
    sol = results.geometry.solution
    v = surface_potential(pts, sol, results.gpr_v)
    x = pts[:, 0]
    floor = results.gpr_v - results.limits.touch_limit_v
    series = [Series(x, v, "surface potential", POTENTIAL_COLOUR, "line")]
    chart = line_chart(
        series,
        WIDTH,
        62 * mm,
        f"x [m] along y = {t.location_xy[1]:.2f} m",
        "Surface potential [V]",
        ylim=(min(0.0, float(v.min())), results.gpr_v * 1.18),  # room for the legend above GPR
        hlines=[
            (results.gpr_v, f"GPR {results.gpr_v:,.0f} V", REF_COLOUR),
            (floor, f"GPR - tolerable touch ({floor:,.0f} V)", LIMIT_COLOUR),
        ],
    )
    text = (
        f"Surface potential along the line y = {t.location_xy[1]:.2f} m through the worst touch point "
        f"(x = {t.location_xy[0]:.2f} m). Inside the footprint the touch voltage is the gap between the GPR "
        "line and the curve; where the curve falls below the red dashed line the tolerable touch voltage is "
        "exceeded."
    )
    return [chart, Spacer(1, 2), _caption(text, style)]


def step_profile(results: Results, style) -> list:
    """Step voltage (difference over 1 m) along the line of the worst step."""
    st = results.field.step
    a, b = np.asarray(st.start_xy), np.asarray(st.end_xy)
    u = (b - a) / np.linalg.norm(b - a)
    s, pts = _line_points(results, a, u)
    sol = results.geometry.solution
    v0 = surface_potential(pts, sol, results.gpr_v)
    v1 = surface_potential(pts + u, sol, results.gpr_v)
    step = np.abs(v0 - v1)
    limit = results.limits.step_limit_v
    top = max(float(step.max()), results.max_step_v) * 1.1
    hl = [(limit, f"tolerable step {limit:,.0f} V", LIMIT_COLOUR)] if limit <= top * 1.5 else []
    chart = line_chart(
        [Series(s, step, "step voltage over 1 m", POTENTIAL_COLOUR, "line")],
        WIDTH,
        58 * mm,
        "distance along the worst step's direction from its first foot [m]",
        "Step voltage [V]",
        ylim=(0.0, max(top, limit * 1.08) if hl else top),
        hlines=hl,
    )
    text = (
        f"Step voltage along the line through the worst step, from ({a[0]:.2f}, {a[1]:.2f}) towards "
        f"({b[0]:.2f}, {b[1]:.2f}) m, both feet on the line 1 m apart. The tolerable step voltage is "
        f"{limit:,.0f} V ({results.limits.step_basis})" + ("." if hl else ", far above this scale.")
    )
    return [chart, Spacer(1, 2), _caption(text, style)]


def leakage_figure(results: Results, style, max_height: float = 115 * mm) -> list:
    """Leakage current density along the conductors, and per rod."""
    sol = results.geometry.solution
    seg = sol.segments
    dens = sol.leakage_density_a_per_m(results.gpr_v)
    plan = np.hypot(seg.b[:, 0] - seg.a[:, 0], seg.b[:, 1] - seg.a[:, 1])
    horiz = plan > 1e-9
    # the scale spans the horizontal conductors (rods beyond it are drawn at its end and quoted)
    scale_d = dens[horiz] if horiz.any() else dens
    lo, hi = float(scale_d.min()), float(scale_d.max())
    lines = np.stack([seg.a[horiz, :2], seg.b[horiz, :2]], axis=1)
    allp = np.concatenate([lines.reshape(-1, 2), seg.a[:, :2]])
    pmin, pmax = allp.min(axis=0), allp.max(axis=0)
    pad = max(2.0, 0.05 * float(np.max(pmax - pmin)))
    fig = PlanFigure(WIDTH, max_height, (pmin[0] - pad, pmax[0] + pad, pmin[1] - pad, pmax[1] + pad))
    fig.lines = lines
    fig.line_colours = [colour_of(v, lo, hi) for v in dens[horiz]]
    fig.line_width = 2.6
    rods = results.design.rods
    rod_xy = np.array([[r.x_m, r.y_m] for r in rods]).reshape(-1, 2)
    rod_mean = []
    vert = ~horiz
    for x, y in rod_xy:
        near = vert & (np.hypot(seg.a[:, 0] - x, seg.a[:, 1] - y) < 1e-6)
        rod_mean.append(float(np.sum(dens[near] * seg.length[near]) / np.sum(seg.length[near])) if near.any() else lo)
    fig.rods = rod_xy
    fig.rod_colours = [colour_of(v, lo, hi) for v in rod_mean]
    fig.set_colour_bar(ColourBar(lo, hi, "Leakage current density [A/m]"))
    total = float(np.sum(dens * seg.length))
    rod_share = 100.0 * float(np.sum(dens[vert] * seg.length[vert])) / total if total > 0 else 0.0
    k = int(np.argmax(dens))
    mid = 0.5 * (seg.a[k, :2] + seg.b[k, :2])
    text = (
        f"Leakage current density along the conductors at a GPR of {results.gpr_v:,.0f} V "
        f"(total {total:,.0f} A = I_G). Largest {float(dens[k]):.3g} A/m near ({mid[0]:.1f}, {mid[1]:.1f}) m"
    )
    if horiz.any():
        mean_h = float(np.sum(dens[horiz] * seg.length[horiz]) / np.sum(seg.length[horiz]))
        text += f"; horizontal conductors {lo:.3g} to {hi:.3g} A/m, average {mean_h:.3g} A/m"
    if rods:
        text += (
            f"; rods (circles, coloured by their mean, {min(rod_mean):.3g} to {max(rod_mean):.3g} A/m"
            + (", beyond the scale" if max(rod_mean) > hi * 1.001 else "")
            + f") carry {rod_share:.1f} % of the current"
        )
    text += ". Perimeter and corner conductors leak more than interior ones; rods there lower the touch voltage most."
    return [fig, Spacer(1, 2), _caption(text, style)]
