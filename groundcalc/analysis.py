"""Run one design through the whole pipeline.

The stages are kept apart so that variants can reuse work: the geometry
solution depends only on conductors, soil and segment length; the surface
field is computed per volt of GPR and scaled, because the model is linear in
the fault current.
"""

from __future__ import annotations

import logging
import time
from dataclasses import dataclass, field, replace

import numpy as np

from .geometry.footprint import compute_footprint
from .geometry.segments import Segmentation, move_off_interface, segment_conductors
from .model import Design, Notice
from .mom.assembly import build_greens
from .mom.solver import Solution, solve
from .safety.closedform import ClosedForm, ConductorSizing, closed_form_check, conductor_sizing
from .safety.ieee80 import decrement_factor, grid_current_a
from .safety.limits import Assessment, Limits, assess, tolerable_limits
from .soil.wenner import SoilFit, fit_soil
from .surface.potential import (
    Raster,
    StepResult,
    TouchArea,
    TouchResult,
    auto_raster_spacing,
    build_raster,
    find_max_step,
    find_max_touch,
    surface_potential,
)

__all__ = [
    "FieldResult",
    "GeometryResult",
    "Results",
    "analyse",
    "evaluate",
    "resolve_soil",
    "solve_geometry",
    "surface_field",
]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class GeometryResult:
    """Segmentation and method-of-moments solution (per volt of GPR)."""

    segmentation: Segmentation
    solution: Solution
    seconds: dict[str, float]


@dataclass(frozen=True)
class FieldResult:
    """Surface raster, touch and step maxima, all per volt of GPR."""

    raster: Raster
    touch: TouchResult
    step: StepResult
    notices: tuple[Notice, ...]
    seconds: float


def plan_lines(design: Design) -> np.ndarray:
    """Plan end points of every non-vertical conductor, shape (k, 2, 2). [m]"""
    lines = []
    for c in design.all_conductors():
        if c.kind == "rod":
            continue
        a, b = np.array(c.start[:2]), np.array(c.end[:2])
        if np.linalg.norm(b - a) > 0:
            lines.append([a, b])
    return np.array(lines, dtype=float).reshape(-1, 2, 2)


def solve_geometry(design: Design) -> GeometryResult:
    """Segment the conductors and solve for the leakage currents."""
    t0 = time.perf_counter()
    interfaces = design.soil.interfaces_m
    interface = (interfaces[0] if len(interfaces) == 1 else interfaces) if interfaces else None
    conductors = design.all_conductors()
    moved: tuple[Notice, ...] = ()
    for depth in interfaces:
        conductors, more = move_off_interface(conductors, depth)
        moved += more
    seg = segment_conductors(conductors, design.settings.segment_length_m, interface_depth_m=interface)
    if moved:
        seg = replace(seg, notices=moved + seg.notices)
    t1 = time.perf_counter()
    log.info("%d conductors split into %d segments", len(seg.conductors), len(seg.segments))
    greens = build_greens(design.soil, seg.segments, design.settings.margin_m)
    sol = solve(seg.segments, greens)
    t2 = time.perf_counter()
    log.info("grid resistance %.4g ohm", sol.resistance_ohm)
    return GeometryResult(seg, sol, {"segmentation": t1 - t0, "solve": t2 - t1})


def surface_field(design: Design, geometry: GeometryResult) -> FieldResult:
    """Surface potential raster and touch/step maxima per volt of GPR."""
    t0 = time.perf_counter()
    sol = geometry.solution
    lines = plan_lines(design)
    seg = sol.segments
    pts = np.concatenate([seg.a[:, :2], seg.b[:, :2]])
    extent = float(np.max(pts.max(axis=0) - pts.min(axis=0)))
    spacing = design.settings.raster_spacing_m or auto_raster_spacing(extent, design.settings.segment_length_m)
    footprint = compute_footprint(lines)
    reach = np.concatenate([seg.a[:, None, :2], seg.b[:, None, :2]], axis=1)
    area = TouchArea(footprint, reach)
    notices = []
    if footprint.empty:
        notices.append(
            Notice(
                "no-enclosed-mesh",
                "The layout encloses no mesh, so touch voltage is "
                "assessed within 1 m of the conductors and rods (reach distance, common practice).",
                "note",
            )
        )
    raster = build_raster(sol, 1.0, area, spacing, design.settings.margin_m)

    def potential(xy: np.ndarray) -> np.ndarray:
        return surface_potential(xy, sol, 1.0)

    log.info("searching for the largest touch and step voltages")
    touch = find_max_touch(raster, 1.0, potential)
    step = find_max_step(raster, potential)
    return FieldResult(raster, touch, step, tuple(notices), time.perf_counter() - t0)


@dataclass(frozen=True)
class Results:
    """Everything computed for one design."""

    design: Design
    geometry: GeometryResult
    field: FieldResult
    decrement_factor: float
    grid_current_a: float
    gpr_v: float
    limits: Limits
    assessment: Assessment
    notices: tuple[Notice, ...] = field(default=())
    soil_fit: SoilFit | None = None
    closed_form: ClosedForm | None = None
    sizing: ConductorSizing | None = None

    @property
    def resistance_ohm(self) -> float:
        """Grid resistance. [ohm]"""
        return self.geometry.solution.resistance_ohm

    @property
    def max_touch_v(self) -> float:
        """Largest touch voltage. [V]"""
        return self.field.touch.voltage_v * self.gpr_v

    @property
    def max_step_v(self) -> float:
        """Largest step voltage. [V]"""
        return self.field.step.voltage_v * self.gpr_v


def resolve_soil(design: Design) -> tuple[Design, SoilFit | None]:
    """Replace a ``fitted`` soil model by the two-layer model fitted to the design's Wenner readings."""
    if design.soil.model != "fitted":
        return design, None
    fit = fit_soil(design.wenner, max_layers=3)
    note = Notice(
        "soil-fitted",
        f"Soil model fitted to {len(fit.readings.spacing_m)} Wenner readings: rho1 = {fit.rho1_ohm_m:.4g} ohm*m, "
        f"H = {fit.thickness_m:.3g} m, rho2 = {fit.rho2_ohm_m:.4g} ohm*m (RMS misfit {fit.misfit_pct:.2g} %; "
        f"uniform {fit.uniform_ohm_m:.4g} ohm*m would misfit by {fit.uniform_misfit_pct:.2g} %).",
        "note",
    )
    chosen = Notice("soil-model-chosen", "Model = fitted: " + fit.layered.summary(), "note")
    return replace(design, soil=fit.chosen_soil, notices=design.notices + (note, chosen)), fit


def evaluate(
    design: Design, geometry: GeometryResult, field_result: FieldResult, soil_fit: SoilFit | None = None
) -> Results:
    """Apply the fault and safety data of ``design`` to a solved geometry."""
    f = design.fault
    df = decrement_factor(f.x_over_r, f.fault_duration_s, f.frequency_hz)
    ig = grid_current_a(f.fault_current_a, f.split_factor, df)
    gpr = ig * geometry.solution.resistance_ohm
    limits = tolerable_limits(design.soil, design.surface_layer, f)
    sizing = conductor_sizing(design, df)
    result_assessment = assess(limits, field_result.touch.voltage_v * gpr, field_result.step.voltage_v * gpr, sizing.ok)
    closed = closed_form_check(design, field_result.raster.touch_area.footprint, ig)
    extra: list[Notice] = []
    if closed is not None:
        extra += [Notice("closed-form-validity", w, "note") for w in closed.warnings]
    groups: dict[tuple, list[str]] = {}
    for item in sizing.undersized:
        groups.setdefault(
            (item.kind, item.material, round(item.area_mm2, 1), item.required_mm2, item.max_temp_c), []
        ).append(item.label)
    for (kind, mat, area, req, tm), labels in groups.items():
        extra.append(
            Notice(
                "undersized-conductor",
                f"{len(labels)} {kind}(s) of {mat}, {area:.1f} mm2, are smaller than the {req:.1f} mm2 needed to "
                f"carry {sizing.current_a:,.0f} A for {sizing.duration_s:g} s without exceeding {tm:g} degC "
                "(IEEE Std 80 Eq. 37): " + ", ".join(labels[:10]) + (" ..." if len(labels) > 10 else ""),
            )
        )
    soil_notes = tuple(Notice("image-series", t, "note") for t in geometry.solution.greens.notes)
    notices = (
        design.notices
        + geometry.segmentation.notices
        + soil_notes
        + geometry.solution.notices
        + field_result.notices
        + tuple(extra)
    )
    return Results(
        design, geometry, field_result, df, ig, gpr, limits, result_assessment, notices, soil_fit, closed, sizing
    )


def analyse(design: Design) -> Results:
    """Run the whole pipeline on one design.

    Parameters
    ----------
    design : Design
        Validated design.

    Returns
    -------
    Results
    """
    design, fit = resolve_soil(design)
    geometry = solve_geometry(design)
    field_result = surface_field(design, geometry)
    return evaluate(design, geometry, field_result, fit)
