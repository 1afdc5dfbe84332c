"""Metal groups at their own potentials against closed forms and reciprocity."""

import numpy as np
import pytest

from groundcalc.geometry.metal import MetalGroup, MetalLayout, segment_groups
from groundcalc.geometry.segments import segment_conductors
from groundcalc.model import Conductor, GridSpec, Rod, Soil
from groundcalc.mom.groups import resistance_matrix, solve_groups
from groundcalc.mom.solver import solve
from groundcalc.soil.uniform import uniform_greens

RHO = 100.0
L = 3.0
GREENS = uniform_greens(Soil("uniform", RHO))


def rod(label, x, y, length=L, top=0.0, d=0.016):
    return Rod(label, x, y, top, length, d).as_conductor()


def solved(grid, groups, seg_len=0.5):
    gs = segment_groups(grid, MetalLayout(groups=tuple(groups)), seg_len)
    return gs, solve_groups(gs.segmentation.segments, GREENS, gs.group, gs.bonded, gs.names)


def sunde_mutual(rho, length, spacing):
    """Mutual resistance of two parallel driven rods of length L at spacing D in a uniform half-space,
    each with uniform current, potential averaged over the other rod:
    R12 = rho/(2 pi L) [asinh(2L/D) - sqrt(1 + (D/2L)^2) + D/(2L)].
    [calc]: closed form derived here from the double integral of 1/R over two parallel lines
    (parallel filaments, F. W. Grover, Inductance Calculations, 1946 [mem]) applied to each rod with
    its surface image. Sunde (1968) and Tagg (1964) give closed forms for two rods [mem]; they were
    not checked against the books. Far apart it tends to the point-source value rho/(2 pi D)
    (textbook result: point source on a half-space, Sunde 1968 [mem])."""
    q = spacing / (2 * length)
    return rho / (2 * np.pi * length) * (np.arcsinh(1 / q) - np.sqrt(1 + q * q) + q)


@pytest.mark.parametrize(("spacing", "rtol"), [(5.0, 0.01), (10.0, 0.005), (30.0, 0.002)])
def test_floating_rod_potential_against_sunde_mutual_resistance(spacing, rtol):
    # Energised rod A, floating rod B at spacing D: V_B / I_A is the mutual resistance.
    # Tolerance: Sunde's formula assumes uniform current on the rods; the solution's current
    # crowds to the ends, which matters less as D grows (0.5 % at D = 5 m measured).
    gs, res = solved([rod("A", 0, 0)], [MetalGroup("B", False, (rod("B", spacing, 0),))])
    mutual = res.potential_pu[1] * res.solution.resistance_ohm
    assert mutual == pytest.approx(sunde_mutual(RHO, L, spacing), rel=rtol)


def test_far_floating_rod_tends_to_point_source_potential_and_zero():
    # Far away a driven electrode looks like a point source on the surface of a uniform
    # half-space: V = rho I / (2 pi r) (Sunde 1968 [mem]), which tends to 0.
    values = []
    for r in (50.0, 200.0):
        _, res = solved([rod("A", 0, 0)], [MetalGroup("B", False, (rod("B", r, 0),))], seg_len=1.0)
        v_per_a = res.potential_pu[1] * res.solution.resistance_ohm
        assert v_per_a == pytest.approx(RHO / (2 * np.pi * r), rel=2e-3)
        values.append(res.potential_pu[1])
    assert 0 < values[1] < values[0] < 0.02  # per unit of GPR, falling towards 0


def test_floating_group_passes_no_net_current():
    # Kirchhoff: an isolated conductor can only exchange current with the soil in and out.
    grid = GridSpec("G", 0, 0, 10, 10, 3, 3, 0.5, 0.01).conductors()
    pipe = Conductor("pipe", (-5, 4, 1.0), (15, 4, 1.0), 0.1)
    gs, res = solved(grid, [MetalGroup("pipe", False, (pipe,))], seg_len=2.0)
    cur = res.solution.currents_per_gpr
    on_pipe = gs.group == 1
    assert abs(cur[on_pipe].sum()) < 1e-12 * np.abs(cur).sum()
    assert res.net_current_a[1] == pytest.approx(0.0, abs=1e-12 * res.net_current_a[0])
    # current enters the pipe where the soil is raised by the grid and leaves it further out
    assert cur[on_pipe].min() < 0 < cur[on_pipe].max()
    assert 0 < res.potential_pu[1] < 1


def test_bonded_group_equals_the_same_conductors_in_the_grid():
    # A bonded group is at the GPR, the same boundary condition as the grid itself.
    grid = GridSpec("G", 0, 0, 10, 10, 3, 3, 0.5, 0.01).conductors()
    extra = [rod("F1", 12, 0, 2.0, 0.0, 0.05), rod("F2", 12, 10, 2.0, 0.0, 0.05)]
    seg = segment_conductors(grid + extra, 2.0)
    ref = solve(seg.segments, GREENS)
    gs, res = solved(grid, [MetalGroup("fence", True, tuple(extra))], seg_len=2.0)
    assert res.solution.resistance_ohm == pytest.approx(ref.resistance_ohm, rel=1e-10)
    assert np.allclose(res.solution.currents_per_gpr, ref.currents_per_gpr, rtol=1e-9, atol=0)
    assert res.potential_pu[1] == 1.0
    assert res.net_current_a.sum() == pytest.approx(1 / ref.resistance_ohm, rel=1e-10)


def test_two_mirror_image_floating_groups_float_alike():
    # Symmetry: rods mirrored about the grid's centre line see the same field.
    grid = GridSpec("G", 0, 0, 10, 10, 3, 3, 0.5, 0.01).conductors()
    a = MetalGroup("west", False, (rod("W", -4, 5, 2.0),))
    b = MetalGroup("east", False, (rod("E", 14, 5, 2.0),))
    _, res = solved(grid, [a, b], seg_len=2.0)
    assert res.potential_pu[1] == pytest.approx(res.potential_pu[2], rel=1e-9)
    assert res.potential_pu[1] < 1


def test_mutual_resistance_is_reciprocal():
    # Green's reciprocity theorem: the potential of B per ampere into A equals that of A per
    # ampere into B. Two different solves: A energised with B floating, then B energised with
    # A floating (segments in another order, so another matrix).
    grid_a = GridSpec("A", 0, 0, 8, 6, 3, 2, 0.5, 0.01).conductors()
    group_b = (rod("B1", 20, 3, 4.0, 0.3), Conductor("B2", (20, 3, 0.3), (26, 9, 0.3), 0.02))
    _, ab = solved(grid_a, [MetalGroup("B", False, group_b)], seg_len=1.5)
    _, ba = solved(list(group_b), [MetalGroup("A", False, tuple(grid_a))], seg_len=1.5)
    r_ba = ab.potential_pu[1] * ab.solution.resistance_ohm
    r_ab = ba.potential_pu[1] * ba.solution.resistance_ohm
    assert r_ab == pytest.approx(r_ba, rel=1e-9)
    gs, _ = solved(grid_a, [MetalGroup("B", False, group_b)], seg_len=1.5)
    m = resistance_matrix(gs.segmentation.segments, GREENS, gs.group, 2)
    assert m[0, 1] == pytest.approx(r_ba, rel=1e-9)
    assert m[1, 0] == pytest.approx(r_ba, rel=1e-9)


def test_floating_ring_around_a_small_electrode_takes_the_potential_of_a_point_source():
    # A thin ring of radius a at depth h around a short rod: far from the rod the field is that
    # of a point source with its surface image, V = rho I / (4 pi) [1/r1 + 1/r2]
    # (method of images, uniform half-space; Sunde 1968). The ring's potential is that value at
    # its own position (it passes no net current and is at one potential all round).
    a, h = 30.0, 0.5
    n = 24
    pts = [(a * np.cos(2 * np.pi * k / n), a * np.sin(2 * np.pi * k / n)) for k in range(n + 1)]
    ring = tuple(Conductor(f"r{k}", (*pts[k], h), (*pts[k + 1], h), 0.01) for k in range(n))
    src = rod("A", 0, 0, 1.0, 0.0, 0.016)
    _, res = solved([src], [MetalGroup("ring", False, ring)], seg_len=4.0)
    i_a = 1 / res.solution.resistance_ohm
    z0 = 0.5  # source centre depth
    # average along one chord of the 24-sided ring (the ring is a polygon, not a circle)
    t = (np.arange(2000) + 0.5) / 2000
    x = pts[0][0] + t * (pts[1][0] - pts[0][0])
    y = pts[0][1] + t * (pts[1][1] - pts[0][1])
    d = np.hypot(x, y)
    point = RHO * i_a / (4 * np.pi) * np.mean(1 / np.hypot(d, h - z0) + 1 / np.hypot(d, h + z0))
    # tolerance: the rod is 1 m long, not a point (its potential at 30 m differs by ~1e-4)
    assert res.potential_pu[1] == pytest.approx(point, rel=2e-3)


def test_floating_rod_far_from_a_grid_takes_the_point_source_potential():
    # Far from a 10 m grid its field is that of a point source on the surface of the half-space,
    # V = rho I / (2 pi r) (Sunde 1968 [mem]). Tolerance 1 %: at r = 60 m the grid's
    # size and the rod's 2 m length change the potential by less than (5/60)^2.
    grid = GridSpec("G", 0, 0, 10, 10, 3, 3, 0.5, 0.01).conductors()
    r = 60.0
    _, res = solved(grid, [MetalGroup("B", False, (rod("B", 5 + r, 5, 2.0),))], seg_len=2.0)
    v_per_a = res.potential_pu[1] * res.solution.resistance_ohm
    assert v_per_a == pytest.approx(RHO / (2 * np.pi * r), rel=0.01)


def test_floating_metal_touching_the_grid_is_reported_and_loose_grid_parts_still_are():
    # A floating pipe laid across grid conductors at the same depth is in contact with them.
    # (x = 2.5 m runs across the conductors along x; at x = 5 m it would lie along one of the
    # grid's own conductors, which is refused: tests/test_fences.py.)
    grid = GridSpec("G", 0, 0, 10, 10, 3, 3, 0.5, 0.01).conductors()
    loose = Conductor("loose", (30, 0, 0.5), (34, 0, 0.5), 0.01)
    pipe = Conductor("pipe", (2.5, -5, 0.5), (2.5, 15, 0.5), 0.1)
    gs = segment_groups(grid + [loose], MetalLayout(groups=(MetalGroup("pipe", False, (pipe,)),)), 2.0)
    codes = {n.code: n.message for n in gs.segmentation.notices}
    assert "floating-touches-grid" in codes and "pipe" in codes["floating-touches-grid"]
    assert "not-connected" in codes and "loose" in codes["not-connected"] and "pipe" not in codes["not-connected"]
