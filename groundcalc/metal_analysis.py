"""The pipeline stages for designs with metal besides the grid.

:func:`solve_metal_geometry` replaces the grid-only solve when the design has
metal groups (bonded or floating); :func:`metal_checks` adds the touch and
step checks on fences, gates, check points, check areas and the fence-reach
band, and the profiles. A design without any of these never comes here, so
its results are exactly those of the grid-only pipeline.
"""

from __future__ import annotations

import logging
import time
from dataclasses import dataclass

import numpy as np

from .geometry.metal import MetalLayout, segment_groups
from .model import Design, Notice
from .mom.assembly import build_greens
from .mom.groups import GroupSolution, solve_groups
from .mom.solver import GeometryResult
from .safety.checks import Check, MetalAssessment
from .safety.limits import Assessment, Limits
from .surface.checks import (
    ProfileData,
    StepCheck,
    TouchCheck,
    area_step,
    area_touch,
    band_step,
    fence_touch,
    gate_touch,
    point_touch,
    profile,
)
from .surface.potential import surface_potential

__all__ = ["GroupsGeometry", "MetalResult", "metal_checks", "solve_metal_geometry"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class GroupsGeometry(GeometryResult):
    """Geometry result with the potentials and net currents of the metal groups."""

    groups: GroupSolution | None = None


def solve_metal_geometry(design: Design):
    """Segment the grid and every metal group and solve them together (per volt of GPR).

    Returns
    -------
    GroupsGeometry
        A :class:`groundcalc.mom.solver.GeometryResult` that also carries the
        group solution.
    """
    t0 = time.perf_counter()
    interface = design.soil.thickness_m if design.soil.model == "two-layer" else None
    gs = segment_groups(design.all_conductors(), design.metal, design.settings.segment_length_m, interface)
    t1 = time.perf_counter()
    seg = gs.segmentation.segments
    log.info("%d segments in %d groups", len(seg), len(gs.names))
    greens = build_greens(design.soil, seg, design.settings.margin_m)
    groups = solve_groups(seg, greens, gs.group, gs.bonded, gs.names)
    t2 = time.perf_counter()
    return GroupsGeometry(gs.segmentation, groups.solution, {"segmentation": t1 - t0, "solve": t2 - t1}, groups)


@dataclass(frozen=True)
class MetalResult:
    """Group potentials and the added checks, per volt of GPR and in volts.

    Attributes
    ----------
    layout : MetalLayout
        The metal as read.
    groups : GroupSolution or None
        Potentials and net currents per volt of GPR (None without groups).
    touches : tuple of TouchCheck
    steps : tuple of StepCheck
    profiles : tuple of ProfileData
    checks : tuple of Check
        The same touches and steps in volts against their limits.
    gpr_v : float
        Ground potential rise. [V]
    """

    layout: MetalLayout
    groups: GroupSolution | None
    touches: tuple[TouchCheck, ...]
    steps: tuple[StepCheck, ...]
    profiles: tuple[ProfileData, ...]
    checks: tuple[Check, ...]
    gpr_v: float
    notices: tuple[Notice, ...] = ()

    def group_potential_v(self, name: str) -> float:
        """Potential of a group (``"grid"`` for the grid). [V]"""
        return self.gpr_v * self.potential_pu(name)

    def potential_pu(self, name: str) -> float:
        """Potential of a group per volt of GPR."""
        if self.groups is None or name.lower() == "grid":
            return 1.0
        names = [n.lower() for n in self.groups.names]
        return float(self.groups.potential_pu[names.index(name.lower())])


def metal_checks(
    design: Design, geometry, gpr_v: float, limits: Limits, assessment: Assessment
) -> tuple[MetalAssessment, MetalResult]:
    """Touch and step on fences, gates, check points and areas; the combined verdict."""
    layout: MetalLayout = design.metal
    groups = getattr(geometry, "groups", None)
    sol = geometry.solution

    def potential(xy: np.ndarray) -> np.ndarray:
        return surface_potential(np.asarray(xy, float).reshape(-1, 2), sol, 1.0)

    def pu(name: str) -> float:
        if groups is None or not name or name.lower() == "grid":
            return 1.0
        return float(groups.potential_pu[[n.lower() for n in groups.names].index(name.lower())])

    touches: list[TouchCheck] = []
    steps: list[StepCheck] = []
    fences: dict[str, list] = {}
    for run in layout.fences:
        fences.setdefault(run.label, []).append(run)
    reach = layout.fence_reach_m
    for label, runs in fences.items():
        touches.append(fence_touch(label, runs, reach, pu(label), potential))
        for run in runs:
            if run.gate_swing_m:
                touches.append(gate_touch(f"{label} ({run.source})", run, label, pu(label), potential))
        steps.append(band_step(label, runs, reach, potential))
    for pt in layout.check_points:
        touches.append(point_touch(pt.label, (pt.x_m, pt.y_m), pt.group or "grid", pu(pt.group), potential))
    for area in layout.check_areas:
        touches.append(area_touch(area, potential))
        steps.append(area_step(area, potential))
    profiles = tuple(profile(p, potential) for p in layout.profiles)
    checks = [
        Check("touch", t.kind, t.name, t.touch_pu * gpr_v, limits.touch_limit_v, t.location_xy) for t in touches
    ] + [Check("step", s.kind, s.name, s.step_pu * gpr_v, limits.step_limit_v, (s.start_xy, s.end_xy)) for s in steps]
    combined = MetalAssessment(
        assessment.limits,
        assessment.max_touch_v,
        assessment.max_step_v,
        assessment.conductors_ok,
        tuple(checks),
        not layout.areas_replace_footprint,
    )
    notes = []
    bonded = [g.name for g in layout.groups if g.bonded]
    if bonded:
        notes.append(
            Notice(
                "bonded-metal",
                "The grid resistance and GPR include the metal bonded to the grid (" + ", ".join(bonded) + "); "
                "the IEEE Std 80 closed forms beside them describe the grid alone.",
                "note",
            )
        )
    if layout.areas_replace_footprint:
        notes.append(
            Notice(
                "check-areas-replace",
                "Touch of grid metal counts over the check areas only (Settings: Check areas = replace); "
                "the touch voltage over the grid footprint is reported for information.",
                "note",
            )
        )
    result = MetalResult(layout, groups, tuple(touches), tuple(steps), profiles, tuple(checks), gpr_v, tuple(notes))
    return combined, result
