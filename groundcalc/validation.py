"""Checks of a :class:`~groundcalc.model.Design` that every entry point gets.

:func:`validate` refuses a design whose answer would be meaningless or
silently wrong, and adds a warning where a value is unusual but possible.
:func:`prepare` runs it and then the geometry repairs
(:mod:`groundcalc.geometry.repairs`); :func:`groundcalc.analysis.analyse`
calls :func:`prepare`, so a design read from a workbook, built in code, or
varied by a study gets the same errors and notes.

Errors name the model quantity (``InputError.quantity``, e.g.
``"fault.split_factor"``) and, for a conductor, rod or grid row, its
``source`` (``InputError.item``). They do not name sheets: the workbook
reader translates them into sheet, row and column.

Accepted ranges and their sources are in :data:`RANGES`; where no document
gives a bound, the bound is "common practice": far outside any substation
grounding study, so that a value beyond it is a typing or unit mistake.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from .errors import InputError
from .geometry.repairs import MAX_COORDINATE_M, MAX_DEPTH_M
from .model import Conductor, Design, Notice
from .safety.materials import MATERIALS

__all__ = ["MAX_RASTER_POINTS", "MAX_SEGMENTS", "RANGES", "check_wenner", "merge_notices", "prepare", "validate"]

#: (refuse below, refuse above, warn below, warn above, source) per quantity, in SI units.
#: ``None`` means no bound on that side.
RANGES: dict[str, tuple[float | None, float | None, float | None, float | None, str]] = {
    # Resistivity of soils from seawater (about 0.2 ohm*m) to dry rock (about 1e4 ohm*m): IEEE Std 80-2000
    # Table 8 [mem]; the bounds leave a decade either side (common practice).
    "soil.rho_ohm_m": (0.01, 1e6, 1.0, 1e5, "IEEE Std 80-2000 Table 8 [mem], a decade either side"),
    # Surface materials up to dry asphalt, 2e6 to 3e7 ohm*m (IEEE Std 80-2000 Table 7 [mem]).
    "surface.rho_ohm_m": (1.0, 1e9, None, 1e8, "IEEE Std 80-2000 Table 7 [mem]"),
    # Crushed rock is laid 0.08 to 0.15 m thick; Eq. (27) is for a thin layer; a layer thicker than 1 m
    # belongs in the soil model (common practice).
    "surface.thickness_m": (0.01, 1.0, 0.05, 0.3, "IEEE Std 80-2000 clause 7.4; common practice"),
    "soil.thickness_m": (0.01, 1000.0, None, None, "common practice"),
    # 3I0 of real systems: amperes (resonant-grounded) to about 100 kA (common practice).
    "fault.fault_current_a": (1.0, 1e6, None, 2e5, "common practice"),
    # Sf below 0.01 would credit 99 % of the fault current to other paths; below 0.1 is unusual
    # (IEEE Std 80-2000 clause 15.9 and Annex C curves go down to about 0.1 [mem]).
    "fault.split_factor": (0.01, 1.0, 0.1, None, "IEEE Std 80-2000 clause 15.9 [mem]; common practice"),
    # Table 10 of IEEE Std 80-2000 lists X/R 10 to 40; generator terminals reach about 100 (common practice).
    "fault.x_over_r": (0.0, 1000.0, None, 100.0, "IEEE Std 80-2000 Table 10 [mem]; common practice"),
    # Clearing takes at least half a cycle; a fault lasting 30 s is no longer a fault (common practice).
    "fault.fault_duration_s": (0.008, 30.0, None, 3.0, "common practice"),
    "fault.shock_duration_s": (0.008, 30.0, None, None, "IEEE Std 80-2000 clause 5.2 (0.03 to 3 s)"),
    # Power systems run at 16.7 to 400 Hz; the body-current data of IEEE Std 80 are for 50/60 Hz.
    "fault.frequency_hz": (10.0, 1000.0, None, None, "common practice"),
    # Soil temperatures (common practice); IEEE Std 80-2000 Table 2 uses 40 degC.
    "fault.ambient_c": (-60.0, 100.0, None, None, "common practice"),
    "fault.touch_limit_v": (1.0, 1e5, None, None, "common practice"),
    "fault.step_limit_v": (1.0, 1e5, None, None, "common practice"),
    # Grounding conductors are 5 to 30 mm and rods 12 to 25 mm in diameter; 0.3 m is a pipe or a unit
    # mistake (mm typed in a [m] column) (common practice).
    "diameter_m": (1e-3, 0.3, None, 0.06, "common practice"),
    # A buried grid lies 0.3 to 1.5 m deep (IEEE Std 80-2000 clause 16.4 [mem]); 5 cm is not buried.
    "conductor.depth_m": (0.05, None, 0.2, None, "IEEE Std 80-2000 clause 16.4 [mem]; common practice"),
    # Deep-driven rods reach tens of metres; a kilometre is beyond the model's use (common practice).
    "rod.length_m": (None, 1000.0, None, None, "common practice"),
    "settings.segment_length_m": (0.05, 5.0, None, None, "common practice (0.5 to 2 m is typical)"),
    "settings.raster_spacing_m": (0.05, None, None, None, "common practice (0.25 to 1 m is typical)"),
    # Step voltage outside a grid decays within tens of metres of its edge (common practice).
    "settings.margin_m": (0.0, 500.0, None, None, "common practice (3 to 20 m is typical)"),
    "settings.snap_tolerance_m": (0.0, 1.0, None, None, "common practice (0.01 to 0.1 m is typical)"),
}

#: Most segments one design may need: large grids are solved matrix-free with memory linear in
#: the segments (211,544 segments took 4.1 GiB, benchmarks/bench_layouts.py --km), so this keeps
#: a run within about 6 GiB.
MAX_SEGMENTS = 250_000
#: Longest side of a Grids row (the largest substation grids are about a kilometre across). [m]
MAX_GRID_SIDE_M = 10_000.0
#: Most parallel conductors of one direction in a Grids row (2 to 40 is typical; common practice).
MAX_GRID_LINES = 1000
#: Most rods one design may have (large grids have hundreds; common practice).
MAX_RODS = 10_000
#: Most surface raster points (a raster of 1400 x 1400 at the finest spacing).
MAX_RASTER_POINTS = 2_000_000
#: Largest |K| accepted: a resistivity ratio of about 2000 (common practice; the two-layer image
#: series converge as K^n, so |K| near 1 needs ever more terms and the layers act as an insulator
#: or a perfect conductor, which the model does not represent).
MAX_REFLECTION = 0.999
#: Raster spacing must not exceed this fraction of the smallest mesh or conductor spacing.
RASTER_TO_MESH = 0.5

_UNIT_HINT = {
    "diameter_m": "a diameter in millimetres typed in a [m] column (write the header 'Diameter [mm]')",
    "conductor.depth_m": "a depth in metres typed in a [mm] or [cm] column, or a depth in mm meant as m",
    "rod.length_m": "a length in millimetres typed in a [m] column",
    "surface.thickness_m": "a thickness in millimetres typed in a [m] column",
}


def _fmt(x: float) -> str:
    return f"{x:.6g}"


def _err(problem: str, quantity: str, fix: str, item: str | None = None) -> InputError:
    return InputError(problem, quantity=quantity, item=item, fix=fix)


def _check_range(
    x: float | None,
    key: str,
    name: str,
    unit: str,
    quantity: str,
    notices: list[Notice],
    item: str | None = None,
    label: str = "",
) -> None:
    """Refuse ``x`` outside the refuse bounds of ``RANGES[key]``; warn outside the warn bounds."""
    if x is None:
        return
    lo, hi, wlo, whi, source = RANGES[key]
    who = f"{label}: " if label else ""
    u = f" {unit}" if unit else ""
    if not math.isfinite(x):
        raise _err(f"{who}{name} is {x}, not a finite number", quantity, "Enter a finite number", item)
    accepted = (
        f"accepted: {_fmt(lo) if lo is not None else '-inf'} to {_fmt(hi) if hi is not None else 'inf'}{u} ({source})"
    )
    hint = _UNIT_HINT.get(key)
    tol = 1e-9 * abs(x)  # unit conversions (ft, in) round in the last digits
    if (lo is not None and x < lo - tol) or (hi is not None and x > hi + tol):
        side = "below" if lo is not None and x < lo else "above"
        bound = lo if side == "below" else hi
        text = f"{who}{name} {_fmt(x)}{u} is {side} {_fmt(bound)}{u}, outside the range a grounding study can use"
        fix = accepted[0].upper() + accepted[1:]
        if hint:
            fix += f"; the likely mistake is {hint}"
        raise _err(text, quantity, fix, item)
    if (wlo is not None and x < wlo - tol) or (whi is not None and x > whi + tol):
        side = "below" if wlo is not None and x < wlo else "above"
        bound = wlo if side == "below" else whi
        notices.append(
            Notice(
                "unusual-value",
                f"{who}{name} {_fmt(x)}{u} is {side} {_fmt(bound)}{u}, unusual for a grounding study "
                f"({source}); check the value and its unit." + (f" A common mistake is {hint}." if hint else ""),
            )
        )


def merge_notices(*groups) -> tuple[Notice, ...]:
    """Concatenate notice groups, keeping the first of equal (code, message) pairs."""
    seen: set[tuple[str, str]] = set()
    out = []
    for group in groups:
        for n in group:
            key = (n.code, n.message)
            if key not in seen:
                seen.add(key)
                out.append(n)
    return tuple(out)


def _check_soil(design: Design, notices: list[Notice]) -> None:
    soil = design.soil
    if soil is None:
        raise _err("the design has no soil model", "soil", "Give a Soil, e.g. Soil('uniform', 100.0)")
    if soil.model not in ("uniform", "two-layer", "multilayer", "fitted"):
        raise _err(
            f"soil model '{soil.model}' is not known", "soil.model", "Use uniform, two-layer, multilayer or fitted"
        )
    if soil.model == "multilayer":
        _check_layers(soil, notices)
        return
    if soil.model == "fitted":
        if design.wenner is None:
            raise _err("a fitted soil model needs Wenner readings", "soil.model", "Give the Wenner readings")
        _check_wenner(design)
        return
    if soil.rho1_ohm_m is None:
        raise _err("the soil resistivity is missing", "soil.rho1_ohm_m", "Give the (upper) soil resistivity")
    _check_range(soil.rho1_ohm_m, "soil.rho_ohm_m", "soil resistivity", "ohm*m", "soil.rho1_ohm_m", notices)
    if soil.model == "two-layer":
        if soil.thickness_m is None or soil.rho2_ohm_m is None:
            q = "soil.thickness_m" if soil.thickness_m is None else "soil.rho2_ohm_m"
            raise _err("a two-layer soil needs the upper thickness and the lower resistivity", q, "Give both")
        _check_range(soil.thickness_m, "soil.thickness_m", "upper layer thickness", "m", "soil.thickness_m", notices)
        _check_range(soil.rho2_ohm_m, "soil.rho_ohm_m", "lower resistivity", "ohm*m", "soil.rho2_ohm_m", notices)
        _check_reflection(
            soil.rho1_ohm_m,
            soil.rho2_ohm_m,
            "of the two layers",
            f" (resistivity ratio {soil.rho2_ohm_m / soil.rho1_ohm_m:.4g})",
            "soil.rho2_ohm_m",
            "check the units of the resistivities, or model the extreme layer as an insulator or a perfect "
            "conductor by a more moderate ratio",
        )


def _check_reflection(rho_a: float, rho_b: float, between: str, detail: str, quantity: str, advice: str) -> None:
    """Refuse adjacent layers whose reflection coefficient K = (rho_b - rho_a) / (rho_b + rho_a) is near +-1."""
    k = (rho_b - rho_a) / (rho_b + rho_a)
    if abs(k) > MAX_REFLECTION:
        raise _err(
            f"the reflection coefficient K = {k:+.6f} {between} is within {1 - abs(k):.2g} of "
            f"{'+1' if k > 0 else '-1'}{detail}",
            quantity,
            f"Accepted |K| <= {MAX_REFLECTION} (a ratio of at most about 2000, common practice); {advice}",
        )


def _check_layers(soil, notices: list[Notice]) -> None:
    """Every layer of a multilayer soil in range, the last one without end, adjacent layers not extreme."""
    layers = tuple(soil.layers)
    if len(layers) < 2:
        raise _err(
            "a multilayer soil needs at least two layers",
            "soil.layers",
            "Give two to eight layers, or use Model = uniform",
        )
    for j, (rho, h) in enumerate(layers, start=1):
        _check_range(rho, "soil.rho_ohm_m", f"resistivity of layer {j}", "ohm*m", "soil.layers", notices)
        if j < len(layers):
            if h is None:
                raise _err(f"layer {j} has no thickness", "soil.layers", "Only the last layer has no thickness")
            _check_range(h, "soil.thickness_m", f"thickness of layer {j}", "m", "soil.layers", notices)
        elif h is not None:
            raise _err(f"the last layer ({j}) has a thickness", "soil.layers", "Leave the last layer's thickness blank")
    for j in range(len(layers) - 1):
        _check_reflection(
            layers[j][0], layers[j + 1][0], f"between layers {j + 1} and {j + 2}", "", "soil.layers", "check the units"
        )


def _check_wenner(design: Design) -> None:
    check_wenner(design.wenner)


def check_wenner(w) -> None:
    """Refuse Wenner spacings no survey uses (a unit mistake: mm against m)."""
    for a, row in zip(w.spacing_m, w.rows or [None] * len(w.spacing_m), strict=False):
        where = f"{w.sheet} row {row}" if row else None
        if not 0.1 <= a <= 1000.0:
            raise _err(
                f"Wenner spacing {_fmt(a)} m is outside 0.1 to 1000 m",
                "wenner.spacing_m",
                "Wenner spacings are 0.5 to 100 m (IEEE Std 81; common practice); the likely mistake is "
                + (
                    "spacings in millimetres (write the header 'Spacing [mm]')"
                    if a > 1000
                    else "a [mm] header over spacings in metres"
                ),
                where,
            )


def _check_surface(design: Design, notices: list[Notice]) -> None:
    s = design.surface_layer
    if s is None:
        return
    _check_range(s.rho_ohm_m, "surface.rho_ohm_m", "surface layer resistivity", "ohm*m", "surface.rho_ohm_m", notices)
    _check_range(s.thickness_m, "surface.thickness_m", "surface layer thickness", "m", "surface.thickness_m", notices)
    rho = design.soil.rho1_ohm_m if design.soil is not None else None
    if rho is not None and s.rho_ohm_m < rho:
        notices.append(
            Notice(
                "surface-layer-conductive",
                f"The surface layer ({_fmt(s.rho_ohm_m)} ohm*m) is less resistive than the soil beneath it "
                f"({_fmt(rho)} ohm*m): the derating factor Cs is then above 1 (IEEE Std 80-2000 Eq. 27) and "
                "the layer lowers the tolerable voltages instead of raising them. Check that this is intended.",
            )
        )


def _check_fault(design: Design, notices: list[Notice]) -> None:
    f = design.fault
    if f is None:
        raise _err("the design has no fault data", "fault", "Give a Fault, e.g. Fault(5000, x_over_r=10, ...)")
    for attr, name, unit in (
        ("fault_current_a", "fault current", "A"),
        ("split_factor", "split factor", ""),
        ("x_over_r", "X/R ratio", ""),
        ("fault_duration_s", "fault duration", "s"),
        ("shock_duration_s", "shock duration", "s"),
        ("frequency_hz", "frequency", "Hz"),
        ("ambient_c", "ambient temperature", "degC"),
        ("touch_limit_v", "touch voltage limit", "V"),
        ("step_limit_v", "step voltage limit", "V"),
    ):
        _check_range(getattr(f, attr), f"fault.{attr}", name, unit, f"fault.{attr}", notices)
    if abs(f.body_weight_kg - round(f.body_weight_kg)) > 1e-9 or round(f.body_weight_kg) not in (50, 70):
        raise _err(
            f"body weight must be 50 or 70 kg, got {_fmt(f.body_weight_kg)}",
            "fault.body_weight_kg",
            "IEEE Std 80 gives tolerable voltages for 50 kg and 70 kg; enter 50 or 70",
        )
    if not (abs(f.frequency_hz - 50.0) < 0.5 or abs(f.frequency_hz - 60.0) < 0.5):
        notices.append(
            Notice(
                "unusual-value",
                f"Frequency {_fmt(f.frequency_hz)} Hz is neither 50 nor 60 Hz: the body-current limits of IEEE "
                "Std 80 are for power frequency, and the decrement factor uses this frequency.",
            )
        )
    if f.shock_duration_s is not None and not 0.03 <= f.shock_duration_s <= 3.0:
        notices.append(
            Notice(
                "outside-validity",
                f"Shock duration {f.shock_duration_s:g} s is outside 0.03 to 3 s, the range of the body-current "
                "formula of IEEE Std 80 (clause 5.2); the tolerable voltages are extrapolated.",
            )
        )
    if f.max_conductor_c is not None and f.max_conductor_c <= f.ambient_c:
        raise _err(
            f"the maximum conductor temperature {f.max_conductor_c:g} degC is not above the ambient temperature "
            f"{f.ambient_c:g} degC",
            "fault.max_conductor_c",
            "Enter the largest temperature the conductors and joints may reach, e.g. 250 degC for bolted joints",
        )
    names = sorted({c.material for c in (*design.conductors, *design.rods, *design.grids)})
    for name in names:
        mat = MATERIALS.get(name)
        if mat is None:
            raise _err(f"'{name}' is not a known conductor material", "material", "Use one of: " + ", ".join(MATERIALS))
        if f.max_conductor_c is not None and f.max_conductor_c > mat.fusing_c:
            raise _err(
                f"the maximum conductor temperature {f.max_conductor_c:g} degC is above the fusing "
                f"temperature of {name} ({mat.fusing_c:g} degC)",
                "fault.max_conductor_c",
                f"Enter at most {mat.fusing_c:g} degC, or leave blank to use each material's fusing temperature",
            )
        if f.ambient_c >= mat.fusing_c:
            raise _err(
                f"the ambient temperature {f.ambient_c:g} degC is not below the fusing temperature of {name} "
                f"({mat.fusing_c:g} degC)",
                "fault.ambient_c",
                "Enter the soil temperature, typically 10 to 40 degC",
            )


def _check_settings(design: Design) -> None:
    s = design.settings
    sink: list[Notice] = []
    if s.segment_length_m > 5.0 + 1e-9:
        raise _err(
            f"segment length {s.segment_length_m:g} m is too long for an accurate solution",
            "settings.segment_length_m",
            "Use at most 5 m (0.5 to 2 m is typical)",
        )
    _check_range(
        s.segment_length_m, "settings.segment_length_m", "segment length", "m", "settings.segment_length_m", sink
    )
    if s.raster_spacing_m is not None and s.raster_spacing_m < 0.05:
        raise _err(
            f"raster spacing {s.raster_spacing_m:g} m is finer than needed and would be very slow",
            "settings.raster_spacing_m",
            "Use 0.05 m or more (0.25 to 1 m is typical), or leave it blank",
        )
    _check_range(
        s.raster_spacing_m, "settings.raster_spacing_m", "raster spacing", "m", "settings.raster_spacing_m", sink
    )
    _check_range(s.margin_m, "settings.margin_m", "margin", "m", "settings.margin_m", sink)
    if s.snap_tolerance_m > 1.0:
        raise _err(
            f"snap tolerance {s.snap_tolerance_m:g} m would move conductors by more than a metre",
            "settings.snap_tolerance_m",
            "Use at most 1 m (0.01 to 0.1 m is typical), or fix the coordinates",
        )
    _check_range(
        s.snap_tolerance_m, "settings.snap_tolerance_m", "snap tolerance", "m", "settings.snap_tolerance_m", sink
    )


def _item(c: Conductor) -> str | None:
    return c.source or None


def _check_geometry(design: Design, notices: list[Notice]) -> list[Conductor]:
    conductors = design.all_conductors()
    if not conductors:
        raise _err(
            "the design has no conductors, rods or grids",
            "conductors",
            "Enter the grid as a rectangular grid row, conductors or rods",
        )
    for g in design.grids:
        for attr in ("n_along_x", "n_along_y"):
            n = getattr(g, attr)
            if n != int(n) or n < 2:
                raise _err(
                    f"grid '{g.label}': {attr} must be a whole number of at least 2, got {n}",
                    f"grid.{attr}",
                    "Count every parallel conductor including both outer ones",
                    g.source or None,
                )
        for attr in ("length_x_m", "length_y_m"):
            if not getattr(g, attr) > 0:
                raise _err(
                    f"grid '{g.label}': {attr} must be greater than zero", f"grid.{attr}", "Give the size", g.source
                )
        n_lines = g.n_along_x + g.n_along_y
        if n_lines > 4 * MAX_SEGMENTS:
            raise _err(
                f"grid '{g.label}' has {n_lines:,} conductors", "grid.n_along_x", "Use fewer conductors", g.source
            )
    wide: list[str] = []
    shallow: list[str] = []
    for c in conductors:
        kind = "rod" if c.kind == "rod" else "conductor"
        pts = np.array([c.start, c.end], dtype=float)
        if not np.all(np.isfinite(pts)):
            raise _err(
                f"{kind} '{c.label}' has a coordinate that is not a finite number",
                f"{kind}.position",
                "Enter finite coordinates",
                _item(c),
            )
        if np.any(np.abs(pts[:, :2]) > MAX_COORDINATE_M):
            raise _err(
                f"{kind} '{c.label}' has a plan coordinate beyond {MAX_COORDINATE_M:,.0f} m",
                f"{kind}.position",
                "Use local site coordinates (or check the units of the X and Y columns)",
                _item(c),
            )
        if c.length_m < 1e-6:
            raise _err(
                f"{kind} '{c.label}' has zero length", f"{kind}.length_m", "Give it a length, or delete it", _item(c)
            )
        d0 = len(notices)
        _check_range(
            c.diameter_m, "diameter_m", "diameter", "m", f"{kind}.diameter_m", notices, _item(c), f"{kind} '{c.label}'"
        )
        if len(notices) > d0:
            notices.pop()
            wide.append(c.label)
        radius = c.diameter_m / 2.0
        ends = range(2) if kind == "conductor" else range(1)
        for e in ends:
            z = float(pts[e, 2])
            q = f"conductor.depth{e + 1}" if kind == "conductor" else "rod.depth_m"
            if z < 0:
                raise _err(
                    f"{kind} '{c.label}' has a negative depth {z:g} m (above grade)",
                    q,
                    "Depth is measured downward from grade; enter a positive depth",
                    _item(c),
                )
            if kind != "conductor":
                continue
            if z <= radius:
                raise _err(
                    f"conductor '{c.label}': its radius {radius:g} m reaches its burial depth {z:g} m, so the "
                    "metal would stick out above grade",
                    q,
                    "Check the diameter and depth units: the likely mistake is millimetres against metres",
                    _item(c),
                )
            d0 = len(notices)
            _check_range(z, "conductor.depth_m", "burial depth", "m", q, notices, _item(c), f"conductor '{c.label}'")
            if len(notices) > d0:
                notices.pop()
                if c.label not in shallow:
                    shallow.append(c.label)
        if kind == "rod":
            _check_range(
                c.length_m, "rod.length_m", "length", "m", "rod.length_m", notices, _item(c), f"rod '{c.label}'"
            )
    if wide:
        notices.append(
            Notice(
                "unusual-value",
                f"{len(wide)} conductor(s) or rod(s) are thicker than 60 mm: {', '.join(wide[:10])}. Grounding "
                "conductors are 5 to 30 mm (common practice); check the diameter unit ([mm] against [m]).",
            )
        )
    if shallow:
        notices.append(
            Notice(
                "unusual-value",
                f"{len(shallow)} conductor(s) lie shallower than 0.2 m: {', '.join(shallow[:10])}. Grids are "
                "buried 0.3 to 1.5 m deep (IEEE Std 80-2000 clause 16.4 [mem]); check the depth unit.",
            )
        )
    return conductors


#: Lines compared with each line (in order of offset) when the smallest spacing is sought.
NEIGHBOURS = 64


def _smallest_spacing(design: Design, conductors: list[Conductor]) -> float | None:
    """Smallest distance between parallel plan lines (grid meshes and axis-parallel conductors). [m]"""
    best = math.inf
    for g in design.grids:
        best = min(best, g.length_x_m / (g.n_along_y - 1), g.length_y_m / (g.n_along_x - 1))
    for axis in (0, 1):  # lines along x (axis 0) are told apart by their y, and the reverse
        other = 1 - axis
        lines = []
        for c in design.conductors:
            a, b = c.start, c.end
            if abs(a[2] - b[2]) > 1e-6 or abs(a[other] - b[other]) > 1e-6 or abs(a[axis] - b[axis]) < 1e-6:
                continue
            lines.append((a[other], min(a[axis], b[axis]), max(a[axis], b[axis])))
        if len(lines) < 2:
            continue
        arr = np.array(sorted(lines))  # by offset: near neighbours in the list are near in the plan
        for shift in range(1, min(len(arr), NEIGHBOURS + 1)):
            a, b = arr[:-shift], arr[shift:]
            gap = b[:, 0] - a[:, 0]
            ok = (np.minimum(a[:, 2], b[:, 2]) - np.maximum(a[:, 1], b[:, 1]) > 0) & (gap > 1e-3)
            if ok.any():
                best = min(best, float(gap[ok].min()))
    return best if math.isfinite(best) else None


def _check_count(design: Design) -> None:
    """Refuse a design too large to solve, from its size alone (before any list is expanded)."""
    if len(design.rods) > MAX_RODS:
        raise _err(
            f"the design has {len(design.rods):,} rods, more than {MAX_RODS:,}",
            "rods",
            "Large substation grids have tens to hundreds of rods (common practice); check for repeated rows",
        )
    seg = design.settings.segment_length_m
    if not (math.isfinite(seg) and seg > 0):
        return
    total, n_seg = 0.0, 0
    for g in design.grids:
        if not all(math.isfinite(v) and v > 0 for v in (g.length_x_m, g.length_y_m)):
            continue
        nx, ny = max(int(g.n_along_x), 0), max(int(g.n_along_y), 0)
        total += nx * g.length_x_m + ny * g.length_y_m
        n_seg += nx * max(1, math.ceil(g.length_x_m / seg)) + ny * max(1, math.ceil(g.length_y_m / seg))
    for c in list(design.conductors) + list(design.rods) + list(design.grids):
        xy = (
            (c.start[:2] + c.end[:2])
            if isinstance(c, Conductor)
            else (c.x_m if hasattr(c, "x_m") else c.x0_m, c.y_m if hasattr(c, "y_m") else c.y0_m)
        )
        if any(abs(v) > MAX_COORDINATE_M for v in xy):
            kind = "rod" if hasattr(c, "top_depth_m") else ("grid" if hasattr(c, "x0_m") else "conductor")
            raise _err(
                f"{kind} '{c.label}' has a plan coordinate beyond {MAX_COORDINATE_M:,.0f} m",
                f"{kind}.position",
                "Use local site coordinates (or check the units of the X and Y columns)",
                c.source or None,
            )
    for g in design.grids:
        for attr, name in (("length_x_m", "Length X"), ("length_y_m", "Length Y")):
            if getattr(g, attr) > MAX_GRID_SIDE_M:
                raise _err(
                    f"grid '{g.label}': {name} {getattr(g, attr):.6g} m is beyond {MAX_GRID_SIDE_M:,.0f} m",
                    f"grid.{attr}",
                    "Substation grids are tens to hundreds of metres across (common practice); check the unit "
                    "(mm typed in a [m] column?)",
                    g.source or None,
                )
        for attr in ("n_along_x", "n_along_y"):
            if getattr(g, attr) > MAX_GRID_LINES:
                raise _err(
                    f"grid '{g.label}': {getattr(g, attr):,} parallel conductors, more than {MAX_GRID_LINES:,}",
                    f"grid.{attr}",
                    "Count the conductors of one direction (2 to 40 is typical); use the Conductors sheet for "
                    "irregular layouts",
                    g.source or None,
                )
    for r in design.rods:
        if r.top_depth_m > MAX_DEPTH_M:
            raise _err(
                f"rod '{r.label}' has its top {r.top_depth_m:.6g} m below grade, beyond {MAX_DEPTH_M:g} m",
                "rod.depth_m",
                "Check the top depth and its unit ([m], not [mm])",
                r.source or None,
            )
    for c in list(design.conductors) + list(design.rods):
        length = c.length_m
        if math.isfinite(length):
            total += length
            n_seg += max(1, math.ceil(length / seg - 1e-9))
        else:
            n_seg += MAX_SEGMENTS + 1
    if n_seg > MAX_SEGMENTS:
        raise _err(
            f"the design needs about {n_seg:,} segments ({total:,.0f} m of conductor and rod at "
            f"{seg:g} m), more than {MAX_SEGMENTS:,}",
            "settings.segment_length_m",
            "Use a longer segment length (at most 5 m), fewer conductors and rods, or split the study into parts",
        )


def _check_size(design: Design, conductors: list[Conductor]) -> None:
    s = design.settings
    pts = np.array([p for c in conductors for p in (c.start[:2], c.end[:2])], dtype=float)
    ext = pts.max(axis=0) - pts.min(axis=0) + 2.0 * s.margin_m
    if s.raster_spacing_m:
        spacing = s.raster_spacing_m
    else:  # the spacing the analysis will choose
        from .surface.potential import auto_raster_spacing

        spacing = auto_raster_spacing(float(np.max(pts.max(axis=0) - pts.min(axis=0))), s.segment_length_m)
    points = (math.floor(ext[0] / spacing) + 1) * (math.floor(ext[1] / spacing) + 1)
    if points > MAX_RASTER_POINTS:
        q = "settings.margin_m" if s.margin_m > max(ext) / 4 else "settings.raster_spacing_m"
        raise _err(
            f"the surface raster would have {points:,.0f} points ({ext[0]:,.1f} m x {ext[1]:,.1f} m including "
            f"the {s.margin_m:g} m margin, at {spacing:g} m), more than {MAX_RASTER_POINTS:,}",
            q,
            "Use a smaller margin (3 to 20 m is typical) or a coarser raster spacing",
        )
    if s.raster_spacing_m is not None:
        smallest = _smallest_spacing(design, conductors)
        if smallest is not None and s.raster_spacing_m > RASTER_TO_MESH * smallest + 1e-9:
            raise _err(
                f"raster spacing {s.raster_spacing_m:g} m is more than half the smallest mesh or conductor "
                f"spacing ({smallest:.3g} m): touch-voltage peaks in the mesh centres would be missed",
                "settings.raster_spacing_m",
                f"Use at most {RASTER_TO_MESH * smallest:.3g} m, or leave it blank to choose it from the grid",
            )


def validate(design: Design) -> Design:
    """Refuse a design whose answer would be meaningless; flag unusual values.

    Parameters
    ----------
    design : Design
        A design read from a workbook or built in code.

    Returns
    -------
    Design
        The same design with any warnings added to its notices (repeated
        validation adds nothing new).

    Raises
    ------
    InputError
        Naming the model quantity (``quantity``) and, for a conductor, rod or
        grid, its ``source`` (``item``).
    """
    notices: list[Notice] = []
    _check_settings(design)
    _check_count(design)
    _check_soil(design, notices)
    _check_fault(design, notices)
    _check_surface(design, notices)
    conductors = _check_geometry(design, notices)
    _check_size(design, conductors)
    merged = merge_notices(design.notices, notices)
    return design if merged == design.notices else replace(design, notices=merged)


def prepare(design: Design) -> Design:
    """:func:`validate`, then the geometry repairs of :func:`groundcalc.geometry.repairs.clean_design`."""
    from .geometry.repairs import clean_design  # noqa: PLC0415

    design = validate(design)
    cleaned = clean_design(design, design.settings.snap_tolerance_m)
    merged = merge_notices(cleaned.notices)
    return cleaned if merged == cleaned.notices else replace(cleaned, notices=merged)
