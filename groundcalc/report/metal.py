"""Report sections for metal besides the grid: plan, group potentials, checks, profiles.

The plan draws the grid in grey, fences dashed (bonded and floating in their
own colours) with the fence-reach band shaded, gate swings as dotted circles,
other metal groups as solid coloured lines, check areas as outlines and check
points as labelled crosses.
"""

from __future__ import annotations

import numpy as np
from reportlab.graphics.shapes import Circle, Drawing, Line, Polygon, PolyLine, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import KeepTogether, Paragraph, Spacer

from ..analysis import Results, plan_lines
from .charts import Series, line_chart
from .style import BODY, H2, SMALL, table, verdict

__all__ = ["metal_lines", "metal_section"]

WIDTH = 168 * mm
BONDED_COLOUR = colors.HexColor("#1b7837")
FLOATING_COLOUR = colors.HexColor("#c51b7d")
BAND_COLOUR = colors.Color(0.95, 0.75, 0.2, alpha=0.35)
GRID_COLOUR = colors.HexColor("#7a7a7a")
AREA_COLOUR = colors.HexColor("#2166ac")
GROUP_COLOURS = [colors.HexColor(c) for c in ("#8c510a", "#01665e", "#762a83", "#b35806")]


def metal_lines(results: Results) -> list[str]:
    """Plain-text lines for the command line: group potentials and every added check."""
    m = results.metal
    if m is None:
        return []
    out = []
    if m.groups is not None:
        out.append("Metal groups (potential, % of GPR, net current to soil):")
        for name, bonded, pu, cur in zip(
            m.groups.names, m.groups.bonded, m.groups.potential_pu, m.groups.net_current_a, strict=True
        ):
            kind = "bonded" if bonded else "floating"
            out.append(
                f"  {name:<28s} {kind:<8s} {pu * results.gpr_v:10.1f} V  {100 * pu:6.1f} %  "
                f"{cur * results.gpr_v:10.4g} A"
            )
    if m.checks:
        out.append("Checks where people meet metal:")
        for c in m.checks:
            out.append(
                f"  {c.title:<52s} {c.value_v:9.1f} V  limit {c.limit_v:8.1f} V  margin {c.margin_pct:+6.1f} %  "
                f"{'PASS' if c.ok else 'FAIL'}"
            )
    if m.layout.areas_replace_footprint:
        out.append("  (the check areas replace the grid footprint: its touch voltage is for information)")
    return out


def _bounds(results: Results) -> tuple[float, float, float, float]:
    m = results.metal
    pts = [plan_lines(results.design).reshape(-1, 2)]
    for g in m.layout.groups:
        pts.append(np.array([c.start[:2] for c in g.conductors] + [c.end[:2] for c in g.conductors]))
    pts += [np.array(a.polygon) for a in m.layout.check_areas]
    pts += [np.array([[p.x_m, p.y_m] for p in m.layout.check_points]).reshape(-1, 2)]
    allp = np.concatenate([p.reshape(-1, 2) for p in pts if p.size])
    lo, hi = allp.min(axis=0), allp.max(axis=0)
    pad = max(3.0, 0.04 * float(np.max(hi - lo)))
    return float(lo[0] - pad), float(hi[0] + pad), float(lo[1] - pad), float(hi[1] + pad)


def metal_plan(results: Results, max_height: float = 120 * mm) -> Drawing:
    """Plan to scale of the grid, fences, gates, metal groups, check areas and points."""
    m = results.metal
    x0, x1, y0, y1 = _bounds(results)
    left, bottom = 6.0, 6.0
    scale = min((WIDTH - 2 * left) / (x1 - x0), (max_height - 2 * bottom) / (y1 - y0))
    d = Drawing(WIDTH, (y1 - y0) * scale + 2 * bottom)

    def px(x, y):
        return left + (x - x0) * scale, bottom + (y - y0) * scale

    reach = m.layout.fence_reach_m
    for run in m.layout.fences:
        a, b = np.array(run.start, float), np.array(run.end, float)
        u = (b - a) / np.linalg.norm(b - a)
        n = np.array([-u[1], u[0]]) * reach
        corners = [a + n - u * reach, b + n + u * reach, b - n + u * reach, a - n - u * reach]
        d.add(Polygon([v for c in corners for v in px(*c)], fillColor=BAND_COLOUR, strokeColor=None))
    for a in m.layout.check_areas:
        d.add(
            Polygon(
                [v for p in a.polygon for v in px(*p)],
                fillColor=None,
                strokeColor=AREA_COLOUR,
                strokeWidth=0.8,
                strokeDashArray=[1, 2],
            )
        )
        cx, cy = np.mean(np.array(a.polygon), axis=0)
        d.add(String(*px(cx, cy), a.name, fontSize=6, fillColor=AREA_COLOUR, textAnchor="middle"))
    for (xa, ya), (xb, yb) in plan_lines(results.design):
        d.add(Line(*px(xa, ya), *px(xb, yb), strokeColor=GRID_COLOUR, strokeWidth=0.5))
    for r in results.design.rods:
        d.add(Circle(*px(r.x_m, r.y_m), 1.2, fillColor=GRID_COLOUR, strokeColor=None))
    k = 0
    for g in m.layout.groups:
        if g.kind == "fence":
            col = BONDED_COLOUR if g.bonded else FLOATING_COLOUR
            for run in [r for r in m.layout.fences if r.label == g.name]:
                d.add(Line(*px(*run.start), *px(*run.end), strokeColor=col, strokeWidth=1.3, strokeDashArray=[4, 2]))
                if run.gate_swing_m:
                    d.add(
                        Circle(
                            *px(*run.start),
                            run.gate_swing_m * scale,
                            fillColor=None,
                            strokeColor=col,
                            strokeWidth=0.7,
                            strokeDashArray=[1, 1.5],
                        )
                    )
            continue
        col = GROUP_COLOURS[k % len(GROUP_COLOURS)]
        k += 1
        for c in g.conductors:
            if c.kind == "rod" or np.hypot(c.end[0] - c.start[0], c.end[1] - c.start[1]) < 1e-9:
                d.add(Circle(*px(*c.start[:2]), 1.6, fillColor=col, strokeColor=None))
            else:
                d.add(PolyLine([*px(*c.start[:2]), *px(*c.end[:2])], strokeColor=col, strokeWidth=1.6))
        c0 = g.conductors[0]
        d.add(String(*px(*c0.start[:2]), f" {g.name}", fontSize=6, fillColor=col))
    for p in m.layout.check_points:
        x, y = px(p.x_m, p.y_m)
        d.add(Line(x - 2.5, y - 2.5, x + 2.5, y + 2.5, strokeColor=colors.black, strokeWidth=0.8))
        d.add(Line(x - 2.5, y + 2.5, x + 2.5, y - 2.5, strokeColor=colors.black, strokeWidth=0.8))
        d.add(String(x + 3, y + 2, p.label, fontSize=6))
    return d


def _groups_table(results: Results) -> list:
    m = results.metal
    if m.groups is None:
        return []
    rows = [["Group", "Kind", "Bonded", "Potential [V]", "% of GPR", "Net current [A]"]]
    kinds = {g.name: g.kind for g in m.layout.groups}
    for name, bonded, pu, cur in zip(
        m.groups.names, m.groups.bonded, m.groups.potential_pu, m.groups.net_current_a, strict=True
    ):
        rows.append(
            [
                name,
                kinds.get(name, "grid"),
                "yes" if bonded else "no (floating)",
                f"{pu * results.gpr_v:,.0f}",
                f"{100 * pu:.1f}",
                f"{cur * results.gpr_v:.4g}",
            ]
        )
    note = (
        "Floating groups pass no net current (their net current is zero to the accuracy of the solve); "
        "their potential is the transferred potential the grid's field puts on them. Bonded groups are at the GPR "
        "and share the grid current."
    )
    return [table(rows, [44 * mm, 16 * mm, 26 * mm, 26 * mm, 18 * mm, 30 * mm]), Spacer(1, 2), Paragraph(note, SMALL)]


def _checks_table(results: Results) -> list:
    m = results.metal
    rows = [["Check", "Computed [V]", "Tolerable [V]", "Margin [%]", "Where [m]", "Result"]]
    for c in m.checks:
        loc = c.location
        where = (
            f"({loc[0][0]:.1f}, {loc[0][1]:.1f})-({loc[1][0]:.1f}, {loc[1][1]:.1f})"
            if isinstance(loc[0], tuple)
            else f"({loc[0]:.1f}, {loc[1]:.1f})"
        )
        rows.append(
            [
                Paragraph(c.title, SMALL),
                f"{c.value_v:,.0f}",
                f"{c.limit_v:,.0f}",
                f"{c.margin_pct:+.1f}",
                Paragraph(where, SMALL),
                Paragraph(verdict(c.ok), BODY),
            ]
        )
    return [table(rows, [58 * mm, 20 * mm, 20 * mm, 17 * mm, 33 * mm, 16 * mm])]


def _profiles(results: Results) -> list:
    m = results.metal
    out = []
    for p in m.profiles:
        v = p.potential_pu * results.gpr_v
        chart = line_chart(
            [
                Series(p.distance_m, v, "surface potential", colors.HexColor("#1f4e79")),
                Series(p.distance_m, results.gpr_v - v, "touch to grid metal", colors.HexColor("#b35806"), "dashed"),
            ],
            WIDTH,
            55 * mm,
            "distance along the profile [m]",
            "voltage [V]",
            hlines=[(results.limits.touch_limit_v, "tolerable touch", colors.HexColor("#b2182b"))],
        )
        cap = (
            f"Profile '{p.label}' from ({p.start[0]:g}, {p.start[1]:g}) to ({p.end[0]:g}, {p.end[1]:g}) m: "
            "surface potential and the touch voltage of grid-connected metal along it."
        )
        out.append(KeepTogether([chart, Spacer(1, 2), Paragraph(cap, SMALL), Spacer(1, 6)]))
    return out


def metal_section(results: Results) -> list:
    """Flowables of the report section on fences, metal groups, check points and areas."""
    m = results.metal
    if m is None:
        return []
    reach = m.layout.fence_reach_m
    text = (
        f"Touch on a fence is the fence's potential minus the surface potential {reach:g} m from it (the fence reach, "
        "shaded), on both sides along every run and round its ends; on a gate, over the disc its leaf sweeps "
        "(dotted). Step is checked in the fence-reach band and in every check area as well as over the grid. "
        "Fences are dashed (green bonded, magenta floating); other metal groups are solid; check points are crosses."
    )
    out = [Paragraph("Fences, other metal and check points", H2), Paragraph(text, BODY), Spacer(1, 3)]
    out += [KeepTogether([metal_plan(results), Spacer(1, 3)])]
    out += _groups_table(results) + [Spacer(1, 4)]
    out += _checks_table(results) + [Spacer(1, 3)]
    failing = [c for c in m.checks if not c.ok]
    if failing:
        advice = (
            "Failing checks: "
            + "; ".join(c.title for c in failing[:8])
            + (" ..." if len(failing) > 8 else "")
            + ". Common remedies: for a bonded fence, a grading conductor about 1 m outside it joined to the "
            "grid, and the grid extended under gate swings; for an isolated fence, keeping it well away from "
            "the grid or inserting insulating sections; for long metal leaving the site (pipes, fences, rails), "
            "insulating joints or sections where it leaves; a surface layer where people stand; supplies to "
            "equipment outside the grid through isolation rather than the grid's earth."
        )
        out.append(Paragraph(advice, BODY))
    out.append(Spacer(1, 6))
    out += _profiles(results)
    return out
