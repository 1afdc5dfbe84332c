"""Fences, check points and areas through the whole pipeline, against physics and common practice."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from groundcalc.analysis import analyse
from groundcalc.geometry.metal import (
    CheckArea,
    CheckPoint,
    FenceRun,
    MetalGroup,
    MetalLayout,
    Profile,
    fence_conductors,
)
from groundcalc.io.outputs import results_to_dict
from groundcalc.model import GridSpec
from groundcalc.surface.potential import surface_potential

from .conftest import make_design

GRID = GridSpec("G", 0, 0, 12, 12, 3, 3, 0.5, 0.01)


def _fence(bonded: bool, offset: float = 1.5, gate: float | None = None) -> tuple[FenceRun, ...]:
    lo, hi = -offset, 12 + offset
    corners = [(lo, lo), (hi, lo), (hi, hi), (lo, hi), (lo, lo)]
    return tuple(
        FenceRun("F", corners[k], corners[k + 1], 3.0, 1.0, 0.06, bonded, gate_swing_m=gate if k == 0 else None)
        for k in range(4)
    )


def _design(bonded: bool, **layout):
    runs = _fence(bonded, gate=layout.pop("gate", None))
    group = MetalGroup("F", bonded, fence_conductors(runs), "fence")
    metal = MetalLayout(groups=(group,), fences=runs, **layout)
    return replace(make_design(grids=[GRID], segment=2.0, spacing=1.0, margin=4.0), metal=metal)


@pytest.fixture(scope="module")
def bonded():
    return analyse(_design(True, gate=3.0, check_points=(CheckPoint("handle", 6.0, 6.0),)))


@pytest.fixture(scope="module")
def floating():
    return analyse(_design(False, profiles=(Profile("x", (-10.0, 6.0), (22.0, 6.0)),)))


def _check(results, kind, name=None):
    return next(c for c in results.metal.checks if c.kind == kind and (name is None or c.name == name))


def test_bonded_fence_outside_the_grid_has_more_touch_than_the_meshes(bonded):
    # Common practice (IEEE Std 80 discusses fence grounding; clause not cited, numbers differ
    # between editions): the surface just outside the grid edge falls away fast, so a fence at
    # the GPR 1.5 m outside sees a larger touch voltage than the mesh touch inside the footprint.
    fence = _check(bonded, "fence")
    assert fence.value_v > bonded.max_touch_v
    assert bonded.metal.potential_pu("F") == 1.0


def test_floating_fence_sits_between_remote_earth_and_the_gpr_and_touches_less(bonded, floating):
    # Physics: a floating conductor in the grid's field takes a potential between the grid's
    # (GPR) and remote earth's (0), and passes no net current (Kirchhoff). Outside the grid
    # the surface is below the GPR, so a floating fence sees less touch than a bonded one.
    pu = floating.metal.potential_pu("F")
    assert 0.0 < pu < 1.0
    g = floating.metal.groups
    assert abs(g.net_current_a[1]) < 1e-10 * g.net_current_a[0]
    assert _check(floating, "fence").value_v < _check(bonded, "fence").value_v
    # the floating fence is at about the surface potential near it (within the touch it reports)
    v_near = surface_potential(np.array([[-1.5, 6.0]]), floating.geometry.solution, 1.0)[0]
    assert abs(pu - v_near) * floating.gpr_v <= _check(floating, "fence").value_v + 1e-9


def test_fence_touch_is_the_fence_potential_minus_the_surface_at_reach(floating):
    # Definition of touch voltage (IEEE Std 80, definitions [mem]): metal potential minus the
    # potential where the person stands; the reach is 1 m (common practice).
    c = _check(floating, "fence")
    x, y = c.location
    lo, hi = -1.5, 13.5
    if lo <= x <= hi and lo <= y <= hi:
        dist = min(x - lo, hi - x, y - lo, hi - y)
    else:
        dist = np.hypot(max(lo - x, 0, x - hi), max(lo - y, 0, y - hi))
    assert dist == pytest.approx(1.0, abs=1e-6)
    v = surface_potential(np.array([c.location]), floating.geometry.solution, 1.0)[0]
    pu = floating.metal.potential_pu("F")
    assert c.value_v == pytest.approx(abs(pu - v) * floating.gpr_v, rel=1e-9)


def test_gate_check_point_and_verdict(bonded):
    gate = _check(bonded, "gate")
    assert gate.value_v > 0
    handle = _check(bonded, "point", "handle")
    v = surface_potential(np.array([[6.0, 6.0]]), bonded.geometry.solution, 1.0)[0]
    assert handle.value_v == pytest.approx((1 - v) * bonded.gpr_v, rel=1e-9)
    a = bonded.assessment
    worst = min(a.checks, key=lambda c: c.margin_pct)
    if worst.margin_pct < min(a.touch_margin_pct, a.step_margin_pct):
        assert a.governing == worst.title
    assert a.passed == (a.touch_ok and a.step_ok and a.conductors_ok and all(c.ok for c in a.checks))


def test_json_lists_groups_fences_points_and_profiles(bonded, floating):
    d = results_to_dict(bonded)
    assert d["fences"][0]["label"] == "F" and d["fences"][0]["bonded"] is True
    assert d["fences"][0]["potential_pct_gpr"] == pytest.approx(100.0)
    assert {g["group"] for g in d["groups"]} == {"grid", "F"}
    assert d["check_points"][0]["label"] == "handle"
    assert d["passed"] == bonded.assessment.passed
    f = results_to_dict(floating)
    assert f["groups"][1]["current_a"] == pytest.approx(0.0, abs=1e-9 * f["grid_current_a"])
    assert len(f["profiles"][0]["distance_m"]) == len(f["profiles"][0]["surface_potential_v"])


def test_check_area_outside_the_grid_sees_more_touch_than_the_footprint():
    # A person far outside the grid touching grid-connected metal (a transferred GPR) sees
    # nearly the whole GPR: touch = GPR - V_s with V_s -> 0 far away (Sunde 1968, point source).
    far = CheckArea("far", ((40.0, 0.0), (44.0, 0.0), (44.0, 4.0), (40.0, 4.0)))
    design = replace(
        make_design(grids=[GRID], segment=2.0, spacing=1.0, margin=3.0), metal=MetalLayout(check_areas=(far,))
    )
    r = analyse(design)
    c = _check(r, "area", "far")
    assert r.max_touch_v < c.value_v < r.gpr_v
    # point-source estimate of the surface potential where the worst touch is, ~38 m from the
    # centre of the 12 m grid; tolerance 3 %: the grid is not a point (quadrupole terms ~ (6/38)^2)
    rho, i = 400.0, r.grid_current_a
    v_point = rho * i / (2 * np.pi * np.hypot(c.location[0] - 6.0, c.location[1] - 6.0))
    assert r.gpr_v - c.value_v == pytest.approx(v_point, rel=0.03)
    step = next(c for c in r.metal.checks if c.criterion == "step")
    assert 0 < step.value_v < r.max_step_v


def test_report_section_lists_groups_and_checks_as_in_the_json(bonded, tmp_path):
    # The report prints the same numbers as the JSON of the same run (pypdf text extraction).
    from pypdf import PdfReader

    from groundcalc.report.pdf import write_report

    write_report(bonded, tmp_path / "r.pdf", "test", "0" * 64)
    text = " ".join(" ".join(p.extract_text() for p in PdfReader(tmp_path / "r.pdf").pages).split())
    assert "Fences, other metal and check points" in text
    d = results_to_dict(bonded)
    for c in d["checks"]:
        assert f"{c['value_v']:,.0f}" in text
    assert ("FAIL" in text) == (not all(c["ok"] for c in d["checks"]) or not d["passed"])
    assert f"{d['fences'][0]['potential_v']:,.0f}" in text


def test_two_layer_reciprocity_and_zero_net_current():
    # Green's reciprocity theorem holds in layered soil too: swap which group is energised.
    from groundcalc.geometry.metal import segment_groups
    from groundcalc.model import Conductor, Soil
    from groundcalc.mom.assembly import build_greens
    from groundcalc.mom.groups import solve_groups

    soil = Soil("two-layer", 100.0, 2.0, 400.0)
    a = [Conductor("a", (0, 0, 0.5), (8, 0, 0.5), 0.01), Conductor("a2", (0, 0, 0.5), (0, 0, 4.0), 0.016)]
    b = [Conductor("b", (12, 3, 1.0), (20, 3, 1.0), 0.05)]
    out = []
    for grid, other in ((a, b), (b, a)):
        gs = segment_groups(grid, MetalLayout(groups=(MetalGroup("x", False, tuple(other)),)), 1.0, 2.0)
        seg = gs.segmentation.segments
        res = solve_groups(seg, build_greens(soil, seg), gs.group, gs.bonded)
        assert abs(res.net_current_a[1]) < 1e-12 * res.net_current_a[0]
        out.append(res.potential_pu[1] * res.solution.resistance_ohm)
    assert out[0] == pytest.approx(out[1], rel=1e-6)


def test_verdict_counts_every_check_and_check_areas_may_replace_the_footprint(bonded):
    from groundcalc.safety.checks import Check, MetalAssessment

    lim = bonded.limits
    ok_check = Check("touch", "area", "yard", 0.5 * lim.touch_limit_v, lim.touch_limit_v, (0.0, 0.0))
    bad_check = Check("step", "area", "yard", 1.2 * lim.step_limit_v, lim.step_limit_v, ((0.0, 0.0), (1.0, 0.0)))
    high_touch = 1.1 * lim.touch_limit_v  # the footprint fails
    counted = MetalAssessment(lim, high_touch, 0.1 * lim.step_limit_v, True, (ok_check,), True)
    replaced = MetalAssessment(lim, high_touch, 0.1 * lim.step_limit_v, True, (ok_check,), False)
    assert not counted.passed and counted.governing == "touch"
    assert replaced.passed and replaced.governing == "touch at area 'yard'"
    failing = MetalAssessment(lim, 0.1 * lim.touch_limit_v, 0.1 * lim.step_limit_v, True, (ok_check, bad_check), True)
    assert not failing.passed and failing.governing == "step at area 'yard'"
    assert failing.governing_margin_pct == pytest.approx(-20.0)


def test_bonded_metal_and_replace_mode_are_noted():
    inner = CheckArea("inner", ((2.0, 2.0), (10.0, 2.0), (10.0, 10.0), (2.0, 10.0)))
    r = analyse(_design(True, check_areas=(inner,), areas_replace_footprint=True))
    codes = {n.code for n in r.notices}
    assert {"bonded-metal", "check-areas-replace"} <= codes
    assert not r.assessment.footprint_counts
    # inside the footprint the area touch cannot exceed the footprint maximum (same field, subset)
    assert _check(r, "area", "inner").value_v <= r.max_touch_v * (1 + 1e-6)


def test_two_fences_sharing_a_post_are_refused_naming_the_row(tmp_path):
    """Fence runs that meet at a post but carry different labels: one post in two groups.

    The shared post would be counted twice (a singular moment matrix); the reader's row is named
    and the fix (one label) is said. Workbook: the fence demo with its paddock fence moved to
    start at the perimeter's north-east corner post, floating.
    """
    import openpyxl

    from groundcalc.errors import InputError
    from groundcalc.io.workbook import read_design

    from .conftest import ROOT

    wb = openpyxl.load_workbook(ROOT / "examples" / "kestrel-brook-fence-unbonded.xlsx")
    ws = wb["Fences"]
    row = next(r for r in range(2, ws.max_row + 1) if ws.cell(r, 1).value == "Paddock")
    for col, value in ((2, 73.5), (3, 41.5), (4, 150.0), (5, 41.5)):
        ws.cell(row, col, value)
    path = tmp_path / "shared-post.xlsx"
    wb.save(path)
    with pytest.raises(InputError) as err:
        analyse(read_design(path))
    text = str(err.value)
    assert f"Fences row {row}" in text
    assert "the same metal cannot belong to two groups" in text
    assert "same Label" in text


def test_floating_groups_that_cross_are_noted():
    """Two floating conductors crossing at one point: solved as two groups, with a notice."""
    from groundcalc.model import Conductor

    a = MetalGroup("pipe A", False, (Conductor("a", (-6.0, 6.0, 1.0), (18.0, 6.0, 1.0), 0.1),))
    b = MetalGroup("pipe B", False, (Conductor("b", (6.0, -6.0, 1.0), (6.0, 18.0, 1.0), 0.1),))
    design = replace(make_design(grids=[GRID], segment=2.0, spacing=1.0), metal=MetalLayout(groups=(a, b)))
    from groundcalc.analysis import solve_geometry

    geo = solve_geometry(design)
    notes = geo.segmentation.notices
    assert any(n.code == "floating-groups-touch" and "pipe B" in n.message for n in notes)


def test_floating_pipe_along_a_grid_conductor_is_refused():
    """A floating pipe on the axis of a grid conductor: the same place cannot hold two metals."""
    from groundcalc.errors import InputError
    from groundcalc.geometry.metal import segment_groups
    from groundcalc.model import Conductor

    grid = GridSpec("G", 0, 0, 10, 10, 3, 3, 0.5, 0.01).conductors()
    pipe = Conductor("pipe", (5.0, -5.0, 0.5), (5.0, 15.0, 0.5), 0.1, source="Conductors row 7")
    with pytest.raises(InputError, match="lies along conductor 'G-Y2' of the grid") as err:
        segment_groups(grid, MetalLayout(groups=(MetalGroup("pipe", False, (pipe,)),)), 2.0)
    assert "Conductors row 7" in str(err.value)
