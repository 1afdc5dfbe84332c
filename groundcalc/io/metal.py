"""Read the Metal, Fences, Check points, Check areas and Profiles sheets.

Conductors and rods whose ``Group`` column names a group of the Metal sheet
are taken out of the grid and put into that group. Every problem raises
:class:`~groundcalc.errors.InputError` with sheet, row, column and what
would be valid.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..errors import InputError
from ..geometry.metal import (
    DEFAULT_FENCE_REACH_M,
    DEFAULT_WIRE_DIAMETER_M,
    CheckArea,
    CheckPoint,
    FenceRun,
    MetalGroup,
    MetalLayout,
    Profile,
    fence_conductors,
)
from ..model import Conductor, Notice, Rod
from .cells import read_keyvalue, read_table, value
from .schema import CHECK_AREAS, CHECK_POINTS, CONDUCTORS, FENCES, METAL, PROFILES, RODS, SETTINGS, SheetSpec

__all__ = ["MAX_FENCE_REACH_M", "metal_to_dict", "read_metal"]

#: Largest accepted fence reach (a person's reach is about 1 m; common practice). [m]
MAX_FENCE_REACH_M = 3.0

_YES = {"yes", "y", "true", "1", "bonded"}
_NO = {"no", "n", "false", "0", "floating", "isolated", "unbonded"}


def _fields(spec: SheetSpec) -> dict:
    return {f.key: f for f in spec.fields}


def _need(cells: dict, spec: SheetSpec, key: str, row: int) -> Any:
    f = _fields(spec)[key]
    v = value(cells, f)
    if v is None:
        cell = cells.get(key)
        raise InputError(
            f"'{f.header()}' is required but blank",
            sheet=spec.name,
            row=row,
            column=cell.column if cell is not None else f"'{f.header()}'",
            fix=f"{f.help} Typical: {f.typical}" if f.typical else f.help,
        )
    return v


def _yes_no(cells: dict, spec: SheetSpec, key: str, row: int) -> bool:
    cell = cells.get(key)
    f = _fields(spec)[key]
    raw = None if cell is None else cell.value
    if raw is None or (isinstance(raw, str) and not raw.strip()):
        raise InputError(
            f"'{f.header()}' is required but blank",
            sheet=spec.name,
            row=row,
            column=cell.column if cell is not None else f"'{f.header()}'",
            fix="Write yes or no",
        )
    text = str(raw).strip().lower()
    if text in _YES:
        return True
    if text in _NO:
        return False
    raise InputError(
        f"'{raw}' is not yes or no",
        sheet=spec.name,
        row=row,
        column=cell.column,
        fix="Write yes (bonded to the grid) or no (floating)",
    )


def _row(cells: dict) -> int:
    return next(iter(cells.values())).row


def _source_row(source: str) -> int | None:
    try:
        return int(source.rsplit("row", 1)[1])
    except (IndexError, ValueError):
        return None


def _group_column(wb, spec: SheetSpec) -> dict[int, tuple[str, str]]:
    """Row -> (group name, column label) of the rows with a Group."""
    out = {}
    for cells in read_table(wb, spec):
        g = value(cells, _fields(spec)["group"])
        if g:
            out[_row(cells)] = (g, cells["group"].column)
    return out


def _read_groups(wb) -> dict[str, tuple[str, bool, int]]:
    """Lower-case name -> (name, bonded, row)."""
    out: dict[str, tuple[str, bool, int]] = {}
    for cells in read_table(wb, METAL):
        row = _row(cells)
        name = _need(cells, METAL, "group", row)
        key = name.lower()
        if key == "grid":
            raise InputError(
                "'grid' is the name of the grid itself",
                sheet=METAL.name,
                row=row,
                column=cells["group"].column,
                fix="Give the group another name (a conductor with a blank Group is in the grid)",
            )
        if key in out:
            raise InputError(
                f"the group '{name}' is listed twice (first on row {out[key][2]})",
                sheet=METAL.name,
                row=row,
                column=cells["group"].column,
                fix="Keep one row per group",
            )
        out[key] = (name, _yes_no(cells, METAL, "bonded to grid", row), row)
    return out


def _read_fences(wb, groups: dict) -> list[FenceRun]:
    runs: list[FenceRun] = []
    first: dict[str, FenceRun] = {}
    for cells in read_table(wb, FENCES):
        row = _row(cells)
        v = {k: _need(cells, FENCES, k, row) for k, f in _fields(FENCES).items() if f.required and f.kind != "choice"}
        bonded = _yes_no(cells, FENCES, "bonded", row)
        label = v["label"]
        if label.lower() in groups or label.lower() == "grid":
            raise InputError(
                f"the fence label '{label}' is also the name of a metal group",
                sheet=FENCES.name,
                row=row,
                column=cells["label"].column,
                fix="Give fences and Metal-sheet groups different names ('grid' is reserved)",
            )
        if np.hypot(v["x2"] - v["x1"], v["y2"] - v["y1"]) < 1e-3:
            raise InputError(
                "the run has zero length (both ends are the same point)",
                sheet=FENCES.name,
                row=row,
                column="'X1 [m]' to 'Y2 [m]'",
                fix="Give the second end another position, or delete the row",
            )
        wire = value(cells, _fields(FENCES)["bottom wire depth"])
        wire_d = value(cells, _fields(FENCES)["bottom wire diameter"])
        if wire_d is not None and wire is None:
            raise InputError(
                "a bottom-wire diameter is given without a bottom-wire depth",
                sheet=FENCES.name,
                row=row,
                column=cells["bottom wire diameter"].column,
                fix="Give 'Bottom wire depth [m]' too, or clear the diameter",
            )
        if v["post diameter"] > 0.5:
            raise InputError(
                f"a post diameter of {v['post diameter'] * 1000:g} mm is not a fence post",
                sheet=FENCES.name,
                row=row,
                column=cells["post diameter"].column,
                fix="Give the diameter in mm (40 to 80 mm is typical), or change the unit in the header",
            )
        run = FenceRun(
            label,
            (v["x1"], v["y1"]),
            (v["x2"], v["y2"]),
            v["post spacing"],
            v["post length"],
            v["post diameter"],
            bonded,
            wire,
            wire_d or DEFAULT_WIRE_DIAMETER_M,
            value(cells, _fields(FENCES)["gate swing"]),
            f"{FENCES.name} row {row}",
        )
        prev = first.setdefault(label.lower(), run)
        if prev.bonded != bonded:
            raise InputError(
                f"the fence '{label}' is bonded on {prev.source} but not here (or the other way round)",
                sheet=FENCES.name,
                row=row,
                column=cells["bonded"].column,
                fix="Runs with the same label are one fence: give them the same 'Bonded', or another label",
            )
        runs.append(run)
    return runs


def _read_points(wb, names: dict[str, str]) -> list[CheckPoint]:
    out = []
    for cells in read_table(wb, CHECK_POINTS):
        row = _row(cells)
        label = _need(cells, CHECK_POINTS, "label", row)
        x = _need(cells, CHECK_POINTS, "x", row)
        y = _need(cells, CHECK_POINTS, "y", row)
        g = value(cells, _fields(CHECK_POINTS)["group"]) or ""
        if g and g.lower() not in names and g.lower() != "grid":
            raise InputError(
                f"'{g}' is not a metal group or fence",
                sheet=CHECK_POINTS.name,
                row=row,
                column=cells["group"].column,
                fix="Use blank (the grid) or one of: " + (", ".join(sorted(names.values())) or "(none defined)"),
            )
        out.append(CheckPoint(label, x, y, "" if g.lower() in ("", "grid") else names[g.lower()], f"row {row}"))
    return out


def _read_areas(wb) -> list[CheckArea]:
    verts: dict[str, dict[int, tuple[float, float, int]]] = {}
    names: dict[str, str] = {}
    for cells in read_table(wb, CHECK_AREAS):
        row = _row(cells)
        name = _need(cells, CHECK_AREAS, "area", row)
        k = _need(cells, CHECK_AREAS, "vertex", row)
        x = _need(cells, CHECK_AREAS, "x", row)
        y = _need(cells, CHECK_AREAS, "y", row)
        d = verts.setdefault(name.lower(), {})
        names.setdefault(name.lower(), name)
        if k in d:
            raise InputError(
                f"vertex {k} of the area '{name}' is given twice (first on row {d[k][2]})",
                sheet=CHECK_AREAS.name,
                row=row,
                column=cells["vertex"].column,
                fix="Number the vertices of each area 1, 2, 3, ... once each",
            )
        d[k] = (x, y, row)
    out = []
    for key, d in verts.items():
        rows = [r for _, _, r in d.values()]
        if len(d) < 3:
            raise InputError(
                f"the area '{names[key]}' has {len(d)} vertex(es); a polygon needs at least 3",
                sheet=CHECK_AREAS.name,
                row=min(rows),
                column="'Vertex'",
                fix="Add the missing vertices (rows with the same Area name)",
            )
        poly = np.array([d[k][:2] for k in sorted(d)])
        xs, ys = poly[:, 0], poly[:, 1]
        area = 0.5 * abs(float(np.dot(xs, np.roll(ys, -1)) - np.dot(ys, np.roll(xs, -1))))
        if area < 0.01:
            raise InputError(
                f"the area '{names[key]}' encloses no area (its vertices lie on a line or coincide)",
                sheet=CHECK_AREAS.name,
                row=min(rows),
                column="'X [m]', 'Y [m]'",
                fix="Give the vertices in order around the area",
            )
        out.append(CheckArea(names[key], tuple((float(a), float(b)) for a, b in poly), f"rows {min(rows)}-{max(rows)}"))
    return out


def _read_profiles(wb) -> list[Profile]:
    out = []
    for cells in read_table(wb, PROFILES):
        row = _row(cells)
        v = {k: _need(cells, PROFILES, k, row) for k in ("label", "x1", "y1", "x2", "y2")}
        if np.hypot(v["x2"] - v["x1"], v["y2"] - v["y1"]) < 0.1:
            raise InputError(
                "the profile is shorter than 0.1 m",
                sheet=PROFILES.name,
                row=row,
                column="'X1 [m]' to 'Y2 [m]'",
                fix="Give the start and end of the line",
            )
        out.append(Profile(v["label"], (v["x1"], v["y1"]), (v["x2"], v["y2"]), f"row {row}"))
    return out


def _read_settings(wb) -> tuple[float, bool]:
    cells = read_keyvalue(wb, SETTINGS)
    f = _fields(SETTINGS)
    reach = value(cells, f["fence reach"], DEFAULT_FENCE_REACH_M)
    if reach > MAX_FENCE_REACH_M:
        c = cells["fence reach"]
        raise InputError(
            f"a fence reach of {reach:g} m is beyond a person's reach",
            sheet=c.sheet,
            row=c.row,
            column=c.column,
            fix=f"Use at most {MAX_FENCE_REACH_M:g} m (1 m is common practice), or leave it blank",
        )
    mode = value(cells, f["check areas"], "extend")
    return reach, mode == "replace"


def read_metal(
    wb, conductors: list[Conductor], rods: list[Rod], notices: list[Notice], has_grids: bool = False
) -> tuple[list[Conductor], list[Rod], MetalLayout | None]:
    """Split grouped conductors and rods off the grid and read the metal sheets.

    Returns
    -------
    (grid conductors, grid rods, layout or None)
        ``None`` when the workbook has none of the metal sheets or columns,
        so that such a design is analysed exactly as before.
    """
    groups = _read_groups(wb)
    cond_groups = _group_column(wb, CONDUCTORS)
    rod_groups = _group_column(wb, RODS)
    members: dict[str, list[Conductor]] = {k: [] for k in groups}
    used: dict[str, int] = {}

    def take(items, table, spec, as_cond):
        keep = []
        for item in items:
            row = _source_row(item.source)
            g = table.get(row) if row is not None else None
            if g is None or g[0].lower() == "grid":
                keep.append(item)
                continue
            if g[0].lower() not in groups:
                raise InputError(
                    f"'{g[0]}' is not a group of the Metal sheet",
                    sheet=spec.name,
                    row=row,
                    column=g[1],
                    fix="Leave Group blank for the grid, or use one of: "
                    + (", ".join(v[0] for v in groups.values()) or "(add the group to a 'Metal' sheet first)"),
                )
            members[g[0].lower()].append(as_cond(item))
            used[g[0].lower()] = used.get(g[0].lower(), 0) + 1
        return keep

    conductors = take(conductors, cond_groups, CONDUCTORS, lambda c: c)
    rods = take(rods, rod_groups, RODS, lambda r: r.as_conductor())
    runs = _read_fences(wb, groups)
    fence_names: dict[str, str] = {}
    for r in runs:
        fence_names.setdefault(r.label.lower(), r.label)
    names = {k: v[0] for k, v in groups.items()} | fence_names
    points = _read_points(wb, names)
    areas = _read_areas(wb)
    profiles = _read_profiles(wb)
    reach, replace_fp = _read_settings(wb)
    out_groups = []
    for key, (name, bonded, row) in groups.items():
        if not members[key]:
            notices.append(
                Notice(
                    "empty-group",
                    f"The group '{name}' (Metal sheet row {row}) has no conductors or rods: no row of the "
                    "Conductors or Rods sheets names it in its Group column. It is ignored.",
                )
            )
            continue
        out_groups.append(MetalGroup(name, bonded, tuple(members[key]), "metal", f"{METAL.name} row {row}"))
    for key, label in fence_names.items():
        mine = [r for r in runs if r.label.lower() == key]
        out_groups.append(
            MetalGroup(label, mine[0].bonded, fence_conductors(mine), "fence", ", ".join(r.source for r in mine))
        )
    if not (conductors or rods or has_grids) and out_groups:
        raise InputError(
            "every conductor and rod belongs to a metal group, so there is no grid to carry the fault current",
            sheet=CONDUCTORS.name,
            column="'Group'",
            fix="Leave the Group column blank for the grid's conductors and rods",
        )
    layout = MetalLayout(
        tuple(out_groups), tuple(runs), tuple(points), tuple(areas), tuple(profiles), reach, replace_fp
    )
    if layout.empty:
        return conductors, rods, None
    return conductors, rods, layout


def _pt(p) -> dict[str, float]:
    return {"x_m": round(float(p[0]), 3), "y_m": round(float(p[1]), 3)}


def metal_to_dict(results) -> dict[str, Any]:
    """JSON part for metal groups, fences, check points, check areas and profiles (SI units)."""
    m = results.metal
    gpr = results.gpr_v
    out: dict[str, Any] = {"fence_reach_m": m.layout.fence_reach_m}
    groups = []
    if m.groups is not None:
        kinds = {g.name: g.kind for g in m.layout.groups}
        for name, bonded, pu, cur in zip(
            m.groups.names, m.groups.bonded, m.groups.potential_pu, m.groups.net_current_a, strict=True
        ):
            groups.append(
                {
                    "group": name,
                    "kind": kinds.get(name, "grid"),
                    "bonded": bool(bonded),
                    "potential_v": float(pu * gpr),
                    "potential_pct_gpr": float(100.0 * pu),
                    "current_a": float(cur * gpr),
                }
            )
    out["groups"] = groups
    checks = {(c.criterion, c.kind, c.name): c for c in m.checks}
    fences = []
    labels = list(dict.fromkeys(r.label for r in m.layout.fences))
    for label in labels:
        t = checks[("touch", "fence", label)]
        s = checks[("step", "fence reach", label)]
        gates = [c for c in m.checks if c.kind == "gate" and c.name.startswith(f"{label} (")]
        runs = [r for r in m.layout.fences if r.label == label]
        fences.append(
            {
                "label": label,
                "bonded": runs[0].bonded,
                "runs": len(runs),
                "potential_v": m.group_potential_v(label),
                "potential_pct_gpr": 100.0 * m.potential_pu(label),
                "max_touch_v": t.value_v,
                "touch_location": _pt(t.location),
                "touch_limit_v": t.limit_v,
                "max_step_v": s.value_v,
                "step_location": {"start": _pt(s.location[0]), "end": _pt(s.location[1])},
                "gates": [
                    {"gate": g.name, "max_touch_v": g.value_v, "touch_location": _pt(g.location), "ok": g.ok}
                    for g in gates
                ],
                "ok": t.ok and s.ok and all(g.ok for g in gates),
            }
        )
    out["fences"] = fences
    out["check_points"] = [
        {
            "label": c.name,
            "group": t.metal,
            "location": _pt(c.location),
            "touch_v": c.value_v,
            "limit": c.limit_v,
            "ok": c.ok,
        }
        for c, t in zip(
            [c for c in m.checks if c.kind == "point"], [t for t in m.touches if t.kind == "point"], strict=True
        )
    ]
    out["check_areas"] = [
        {
            "area": a.name,
            "max_touch_v": checks[("touch", "area", a.name)].value_v,
            "touch_location": _pt(checks[("touch", "area", a.name)].location),
            "max_step_v": checks[("step", "area", a.name)].value_v,
            "touch_ok": checks[("touch", "area", a.name)].ok,
            "step_ok": checks[("step", "area", a.name)].ok,
        }
        for a in m.layout.check_areas
    ]
    out["check_areas_replace_footprint"] = m.layout.areas_replace_footprint
    out["profiles"] = [
        {
            "label": p.label,
            "start": _pt(p.start),
            "end": _pt(p.end),
            "distance_m": [round(float(d), 4) for d in p.distance_m],
            "surface_potential_v": [float(v * gpr) for v in p.potential_pu],
            "touch_to_grid_v": [float((1.0 - v) * gpr) for v in p.potential_pu],
        }
        for p in m.profiles
    ]
    out["checks"] = [
        {
            "criterion": c.criterion,
            "kind": c.kind,
            "name": c.name,
            "value_v": c.value_v,
            "limit_v": c.limit_v,
            "margin_pct": c.margin_pct,
            "ok": c.ok,
        }
        for c in m.checks
    ]
    return out
