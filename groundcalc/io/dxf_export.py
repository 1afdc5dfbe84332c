"""Give the results back to the drawing: a DXF in the design's coordinates.

Layers (plain names of our own):

- ``GRID-CONDUCTORS``: every buried conductor as a line in plan;
- ``GRID-RODS``: every rod as a small circle at its position;
- ``TOUCH-VOLTAGE-CONTOURS``: touch voltage (GPR minus the surface
  potential) at chosen levels, as polylines with a text label in volts; each
  polyline also carries its level as extended data (application
  ``GROUNDCALC``, group 1040, volts);
- ``TOUCH-LIMIT-EXCEEDED``: where the touch voltage inside the touch area is
  above the tolerable value, as closed polylines with a hatch;
- ``WORST-TOUCH-POINT`` and ``WORST-STEP-POINTS``: the worst touch point and
  the two feet of the worst step, as labelled points;
- ``RESULT-NOTES``: what the drawing shows and that it is a draft.

Contours come from the surface raster the analysis already computed
(:attr:`groundcalc.analysis.FieldResult.raster`), traced by ``contourpy``
(linear interpolation within each raster cell).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = [
    "LAYERS",
    "XDATA_APP",
    "build_results_dxf",
    "default_levels",
    "exceeded_areas",
    "parse_levels",
    "touch_contours",
    "touch_field_v",
    "write_results_dxf",
]

#: Layer names, with the ACI colour of each.
LAYERS: dict[str, tuple[str, int]] = {
    "conductors": ("GRID-CONDUCTORS", 7),
    "rods": ("GRID-RODS", 7),
    "contours": ("TOUCH-VOLTAGE-CONTOURS", 3),
    "exceeded": ("TOUCH-LIMIT-EXCEEDED", 1),
    "touch": ("WORST-TOUCH-POINT", 6),
    "step": ("WORST-STEP-POINTS", 5),
    "notes": ("RESULT-NOTES", 7),
}
#: Extended-data application name on the contour polylines.
XDATA_APP = "GROUNDCALC"
#: Output units: name -> ($INSUNITS code, metres per unit).
OUTPUT_UNITS: dict[str, tuple[int, float]] = {
    "m": (6, 1.0),
    "mm": (4, 0.001),
    "cm": (5, 0.01),
    "ft": (2, 0.3048),
    "in": (1, 0.0254),
}
#: Default contour levels as fractions of the tolerable touch voltage.
DEFAULT_FRACTIONS = (0.25, 0.5, 0.75, 1.0, 1.5, 2.0)


def parse_levels(text: str) -> list[float]:
    """Contour levels from ``"200,400,600"`` (volts), sorted and without repeats.

    Raises
    ------
    InputError
        When a level is not a positive number.
    """
    out = []
    for part in text.split(","):
        p = part.strip()
        if not p:
            continue
        try:
            v = float(p)
        except ValueError:
            v = float("nan")
        if not np.isfinite(v) or v <= 0:
            raise InputError(
                f"--contours: '{p}' is not a touch voltage in volts",
                fix="Give positive numbers separated by commas, e.g. --contours 200,400,600",
            )
        out.append(v)
    if not out:
        raise InputError("--contours is empty", fix="Give levels in volts, e.g. --contours 200,400,600")
    return sorted(set(out))


def default_levels(limit_v: float, low_v: float | None = None, high_v: float | None = None) -> list[float]:
    """Contour levels from the tolerable touch voltage: 25 % to 200 % of it, rounded to 1 V. [V]

    When the touch voltage on the drawing spans ``low_v`` to ``high_v`` and none of those levels
    falls inside it (a design far above or below its limit), six levels evenly across the span,
    rounded to two significant digits, are added so that the drawing still shows the field.
    """
    levels = {float(round(f * limit_v)) if f != 1.0 else float(limit_v) for f in DEFAULT_FRACTIONS}
    if low_v is not None and high_v is not None and high_v > low_v:
        if not any(low_v < lv < high_v for lv in levels):
            for v in np.linspace(low_v, high_v, 8)[1:-1]:
                levels.add(float(f"{v:.2g}"))
    return sorted(levels)


def touch_field_v(results) -> np.ndarray:
    """Touch voltage GPR - V(surface) on the analysis raster, shape (len(y), len(x)). [V]

    The raster holds the surface potential per volt of GPR.
    """
    return results.gpr_v * (1.0 - results.field.raster.potential_per_gpr)


def touch_contours(x: np.ndarray, y: np.ndarray, touch_v: np.ndarray, levels: list[float]) -> dict:
    """Iso-lines of the touch voltage, by level.

    Parameters
    ----------
    x, y : numpy.ndarray
        Raster coordinates. [m]
    touch_v : numpy.ndarray, shape (len(y), len(x))
        Touch voltage. [V]
    levels : list of float
        Levels. [V]

    Returns
    -------
    dict
        Level -> list of (n, 2) vertex arrays. [m]

    References
    ----------
    contourpy (https://contourpy.readthedocs.io), marching squares with
    linear interpolation along the cell edges.
    """
    import contourpy

    gen = contourpy.contour_generator(x, y, touch_v, line_type=contourpy.LineType.Separate)
    return {lv: [np.asarray(a, dtype=float) for a in gen.lines(lv) if len(a) >= 2] for lv in levels}


def exceeded_areas(
    x: np.ndarray, y: np.ndarray, touch_v: np.ndarray, mask: np.ndarray, limit_v: float
) -> list[list[np.ndarray]]:
    """Closed areas of the touch area where the touch voltage is above ``limit_v``.

    Raster cells with a corner outside the touch area are left out, so the
    boundary follows the touch area to within one raster cell.

    Returns
    -------
    list of list of numpy.ndarray
        One entry per area: its outer boundary, then any holes (closed rings,
        first point repeated at the end). [m]
    """
    import contourpy

    if not mask.any() or not np.any(touch_v[mask] > limit_v):
        return []
    z = np.ma.masked_array(touch_v, mask=~mask)
    top = float(np.max(touch_v[mask])) * 1.01 + 1.0
    gen = contourpy.contour_generator(x, y, z, fill_type=contourpy.FillType.OuterOffset)
    points, offsets = gen.filled(limit_v, top)
    out = []
    for pts, off in zip(points, offsets, strict=True):
        rings = [np.asarray(pts[a:b], dtype=float) for a, b in zip(off[:-1], off[1:], strict=True) if b - a >= 4]
        if rings:
            out.append(rings)
    return out


def _polyline_length(p: np.ndarray) -> float:
    return float(np.sum(np.hypot(*np.diff(p, axis=0).T)))


def build_results_dxf(results, levels: list[float] | None = None, units: str = "m"):
    """A DXF drawing of the design and its touch-voltage results.

    Parameters
    ----------
    results : groundcalc.analysis.Results
        Analysed design.
    levels : list of float, optional
        Contour levels. [V] Default :func:`default_levels` of the tolerable
        touch voltage.
    units : str
        Drawing unit of the output: m, mm, cm, ft or in.

    Returns
    -------
    tuple
        The ezdxf drawing and a dict of entity counts by layer.
    """
    import ezdxf
    from ezdxf.enums import TextEntityAlignment

    from ..cautions import DRAFT_MARK

    if units not in OUTPUT_UNITS:
        raise InputError(f"--dxf-units '{units}' is not supported", fix="Use one of: " + ", ".join(OUTPUT_UNITS))
    code, unit_m = OUTPUT_UNITS[units]
    k = 1.0 / unit_m

    def pt(p) -> tuple[float, float]:
        return (float(p[0]) * k, float(p[1]) * k)

    raster = results.field.raster
    limit = results.limits.touch_limit_v
    touch_v = touch_field_v(results)
    levels = list(levels) if levels else default_levels(limit, float(touch_v.min()), float(touch_v.max()))
    extent_m = float(max(raster.x[-1] - raster.x[0], raster.y[-1] - raster.y[0]))
    text_m = float(np.clip(extent_m / 120.0, 0.05, 2.0))
    h = text_m * k

    doc = ezdxf.new("R2010", units=code)
    doc.header["$MEASUREMENT"] = 0 if units in ("ft", "in") else 1
    doc.appids.new(XDATA_APP)
    for name, colour in LAYERS.values():
        doc.layers.add(name, color=colour)
    msp = doc.modelspace()
    counts = {name: 0 for name, _ in LAYERS.values()}

    def add(entity, key):
        counts[LAYERS[key][0]] += 1
        return entity

    lay = {key: {"layer": name} for key, (name, _) in LAYERS.items()}
    design = results.design
    for c in design.all_conductors():
        if c.kind == "rod":
            continue
        if np.hypot(c.end[0] - c.start[0], c.end[1] - c.start[1]) > 0:
            add(msp.add_line(pt(c.start), pt(c.end), dxfattribs=lay["conductors"]), "conductors")
    for r in design.rods:
        add(msp.add_circle(pt((r.x_m, r.y_m)), 0.5 * h, dxfattribs=lay["rods"]), "rods")

    lines = touch_contours(raster.x, raster.y, touch_v, levels)
    for lv, polys in lines.items():
        label = f"{lv:.0f} V" + (" (limit)" if lv == limit else "")
        for p in polys:
            closed = len(p) > 3 and np.allclose(p[0], p[-1])
            verts = [pt(v) for v in (p[:-1] if closed else p)]
            pl = add(msp.add_lwpolyline(verts, close=closed, dxfattribs=lay["contours"]), "contours")
            pl.set_xdata(XDATA_APP, [(1000, "touch voltage [V]"), (1040, float(lv))])
            if _polyline_length(p) >= 6.0 * text_m:
                i = len(p) // 2
                a, b = p[max(i - 1, 0)], p[min(i + 1, len(p) - 1)]
                ang = float(np.degrees(np.arctan2(b[1] - a[1], b[0] - a[0])))
                if ang > 90.0 or ang < -90.0:
                    ang -= 180.0 * np.sign(ang)
                t = msp.add_text(label, height=0.8 * h, rotation=ang, dxfattribs=lay["contours"])
                t.set_placement(pt(p[i]), align=TextEntityAlignment.MIDDLE_CENTER)
                counts[LAYERS["contours"][0]] += 1

    areas = exceeded_areas(raster.x, raster.y, touch_v, raster.touch_mask, limit)
    for rings in areas:
        hatch = add(msp.add_hatch(color=1, dxfattribs=lay["exceeded"]), "exceeded")
        hatch.set_pattern_fill("ANSI31", scale=max(extent_m / 150.0, 0.02) * k / 3.175 * 2.0)
        for j, ring in enumerate(rings):
            verts = [pt(v) for v in ring[:-1]]
            add(msp.add_lwpolyline(verts, close=True, dxfattribs=lay["exceeded"]), "exceeded")
            flags = ezdxf.const.BOUNDARY_PATH_EXTERNAL if j == 0 else ezdxf.const.BOUNDARY_PATH_DEFAULT
            hatch.paths.add_polyline_path(verts, is_closed=True, flags=flags)

    tr = results.field.touch
    add(msp.add_point(pt(tr.location_xy), dxfattribs=lay["touch"]), "touch")
    add(msp.add_circle(pt(tr.location_xy), 0.6 * h, dxfattribs=lay["touch"]), "touch")
    t = add(
        msp.add_text(
            f"worst touch {results.max_touch_v:.0f} V (tolerable {limit:.0f} V)", height=h, dxfattribs=lay["touch"]
        ),
        "touch",
    )
    t.set_placement((pt(tr.location_xy)[0] + h, pt(tr.location_xy)[1] + h), align=TextEntityAlignment.BOTTOM_LEFT)
    st = results.field.step
    for foot in (st.start_xy, st.end_xy):
        add(msp.add_point(pt(foot), dxfattribs=lay["step"]), "step")
    add(msp.add_line(pt(st.start_xy), pt(st.end_xy), dxfattribs=lay["step"]), "step")
    t = add(
        msp.add_text(
            f"worst step {results.max_step_v:.0f} V over 1 m (tolerable {results.limits.step_limit_v:.0f} V)",
            height=h,
            dxfattribs=lay["step"],
        ),
        "step",
    )
    t.set_placement((pt(st.end_xy)[0] + h, pt(st.end_xy)[1] - 2 * h), align=TextEntityAlignment.TOP_LEFT)

    notes = [
        f"groundcalc results: {DRAFT_MARK}",
        f"GPR {results.gpr_v:.0f} V, grid resistance {results.resistance_ohm:.4g} ohm; tolerable touch "
        f"{limit:.0f} V, step {results.limits.step_limit_v:.0f} V ({results.limits.basis})",
        "Contours (green): touch voltage = GPR - surface potential, in volts, at "
        + ", ".join(f"{lv:.0f}" for lv in levels)
        + " V",
        f"Hatched (red): touch voltage above {limit:.0f} V inside the touch area "
        f"({raster.touch_area.description}); raster {raster.spacing_m:.3g} m",
        f"Coordinates as in the design workbook, drawing unit {units}",
    ]
    x0, y0 = float(raster.x[0]) * k, float(raster.y[-1]) * k + 2.0 * h * len(notes)
    for i, line in enumerate(notes):
        t = add(msp.add_text(line, height=h, dxfattribs=lay["notes"]), "notes")
        t.set_placement((x0, y0 - 1.8 * h * i), align=TextEntityAlignment.BOTTOM_LEFT)
    return doc, counts


def write_results_dxf(results, path: str | Path, levels: list[float] | None = None, units: str = "m") -> dict:
    """Write :func:`build_results_dxf` to ``path`` atomically; returns the entity counts by layer."""
    from .outputs import atomic_write

    doc, counts = build_results_dxf(results, levels, units)
    atomic_write(path, lambda tmp: doc.saveas(tmp))
    return counts
