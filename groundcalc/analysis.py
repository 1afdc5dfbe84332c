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
from .geometry.segments import move_off_interface, segment_conductors
from .model import Design, Notice
from .mom.assembly import build_greens
from .mom.convergence import (
    COARSE_MIN_SAVING,
    WARN_RELATIVE,
    DiscretisationError,
    richardson_error,
)
from .mom.solver import GeometryResult, solve
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
from .validation import prepare, validate

__all__ = [
    "FieldResult",
    "GeometryResult",
    "Results",
    "analyse",
    "discretisation_estimate",
    "evaluate",
    "with_discretisation",
    "resolve_soil",
    "solve_geometry",
    "surface_field",
]

log = logging.getLogger(__name__)


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
    if design.metal is not None and design.metal.groups:
        from .metal_analysis import solve_metal_geometry

        return solve_metal_geometry(design)
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
    raster = build_raster(sol, area, spacing, design.settings.margin_m)

    def potential(xy: np.ndarray) -> np.ndarray:
        return surface_potential(xy, sol, 1.0)

    log.info("searching for the largest touch and step voltages")
    touch = find_max_touch(raster, potential)
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
    metal: object | None = None  # groundcalc.metal_analysis.MetalResult when the design has other metal
    discretisation: DiscretisationError | None = None

    @property
    def resistance_ohm(self) -> float:
        """Grid resistance. [ohm]"""
        return self.geometry.solution.resistance_ohm

    @property
    def max_touch_v(self) -> float:
        """Largest touch voltage. [V]"""
        return self.field.touch.voltage_per_gpr * self.gpr_v

    @property
    def max_step_v(self) -> float:
        """Largest step voltage. [V]"""
        return self.field.step.voltage_per_gpr * self.gpr_v


def resolve_soil(design: Design) -> tuple[Design, SoilFit | None]:
    """Replace a ``fitted`` soil model by the model fitted to the design's Wenner readings.

    Uniform, two- and three-layer models are fitted; the one the Bayesian information criterion
    prefers replaces ``fitted`` (the two-layer image series serves two layers).
    """
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
    design: Design,
    geometry: GeometryResult,
    field_result: FieldResult,
    soil_fit: SoilFit | None = None,
    discretisation: DiscretisationError | None = None,
) -> Results:
    """Apply the fault and safety data of ``design`` to a solved geometry."""
    f = design.fault
    df = decrement_factor(f.x_over_r, f.fault_duration_s, f.frequency_hz)
    ig = grid_current_a(f.fault_current_a, f.split_factor, df)
    gpr = ig * geometry.solution.resistance_ohm
    limits = tolerable_limits(design.soil, design.surface_layer, f)
    sizing = conductor_sizing(design, df)
    result_assessment = assess(
        limits, field_result.touch.voltage_per_gpr * gpr, field_result.step.voltage_per_gpr * gpr, sizing.ok
    )
    metal = None
    if design.metal is not None:
        from .metal_analysis import metal_checks

        result_assessment, metal = metal_checks(design, geometry, gpr, limits, result_assessment)
    closed = closed_form_check(design, field_result.raster.touch_area.footprint, ig)
    extra: list[Notice] = []
    if metal is not None:
        extra += list(metal.notices)
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
    if discretisation is not None and discretisation.exceeds_warning:
        extra.append(_discretisation_notice(discretisation))
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
        design,
        geometry,
        field_result,
        df,
        ig,
        gpr,
        limits,
        result_assessment,
        notices,
        soil_fit,
        closed,
        sizing,
        metal,
        discretisation,
    )


def _discretisation_notice(est: DiscretisationError) -> Notice:
    return Notice(
        "discretisation-error",
        f"The estimated discretisation error is {100 * est.resistance_rel:.2g} % for the grid resistance and "
        f"{100 * (est.touch_rel or 0.0):.2g} % for the largest touch voltage (more than {100 * WARN_RELATIVE:g} %; "
        f"from a second solve with {est.coarse_segment_length_m:g} m segments). Use a shorter segment length.",
    )


def with_discretisation(results: Results) -> Results:
    """``results`` with the discretisation-error estimate added (and its warning, if any)."""
    if results.discretisation is not None:
        return results
    est = discretisation_estimate(results.design, results.geometry, results.field)
    notices = results.notices + ((_discretisation_notice(est),) if est.exceeds_warning else ())
    return replace(results, discretisation=est, notices=notices)


def discretisation_estimate(design: Design, geometry: GeometryResult, field_result: FieldResult) -> DiscretisationError:
    """Two-level (Richardson) estimate of the discretisation error of Rg and of the largest touch voltage.

    The geometry is solved again, by the same path as the main solve (every
    soil interface, every metal group), with twice the segment length, or with
    half of it when doubling hardly coarsens the mesh; the touch voltage of that
    solution is evaluated at the location of the main result's maximum.
    """
    sol = geometry.solution
    h = design.settings.segment_length_m

    def level(ratio: float):
        log.info("discretisation check: solving the same design again with %g m segments", ratio * h)
        t = time.perf_counter()
        other = solve_geometry(replace(design, settings=replace(design.settings, segment_length_m=ratio * h)))
        return other.solution, other.solution.segments, time.perf_counter() - t

    ratio = 2.0
    coarse, seg, seconds = level(ratio)
    if len(seg) > COARSE_MIN_SAVING * len(sol.segments):
        # doubling hardly coarsens this mesh: check against a finer level instead
        ratio = 0.5
        coarse, seg, more = level(ratio)
        seconds += more
    t0 = time.perf_counter()
    r_rel = richardson_error(sol.resistance_ohm, coarse.resistance_ohm, ratio)
    touch_pu = field_result.touch.voltage_per_gpr
    touch_rel = None
    if touch_pu > 0.0:
        xy = np.array([field_result.touch.location_xy], dtype=float)
        coarse_touch = (1.0 - float(surface_potential(xy, coarse, 1.0)[0])) * coarse.resistance_ohm
        touch_rel = richardson_error(touch_pu * sol.resistance_ohm, coarse_touch, ratio)
    seconds += time.perf_counter() - t0
    log.info(
        "discretisation error estimate: Rg %.2g, touch %s", r_rel, "n/a" if touch_rel is None else f"{touch_rel:.2g}"
    )
    return DiscretisationError(
        r_rel,
        touch_rel,
        h,
        ratio * h,
        len(sol.segments),
        len(seg),
        coarse.resistance_ohm,
        seconds,
    )


def analyse(design: Design, error_estimate: bool = True) -> Results:
    """Run the whole pipeline on one design.

    Parameters
    ----------
    design : Design
        A design read from a workbook or built in code. It is checked and
        repaired first (:func:`groundcalc.validation.prepare`), so every entry
        point gets the same errors and notes.
    error_estimate : bool
        Also estimate the discretisation error from a coarser second solve
        (:func:`discretisation_estimate`; about 10 % more run time).

    Returns
    -------
    Results

    Raises
    ------
    InputError
        When the design cannot give a meaningful answer.
    """
    design, fit = resolve_soil(prepare(design))
    if fit is not None:
        design = validate(design)
    geometry = solve_geometry(design)
    field_result = surface_field(design, geometry)
    est = discretisation_estimate(design, geometry, field_result) if error_estimate else None
    return evaluate(design, geometry, field_result, fit, est)
