"""Surface potential, touch and step search against closed forms and brute force."""

import numpy as np
import pytest
from scipy.integrate import quad

from groundcalc.analysis import analyse
from groundcalc.geometry.footprint import compute_footprint
from groundcalc.geometry.segments import segment_conductors
from groundcalc.model import Conductor, GridSpec, Rod, Soil
from groundcalc.mom.solver import Solution, solve
from groundcalc.soil.uniform import uniform_greens
from groundcalc.surface.potential import TouchArea, build_raster, find_max_step, find_max_touch, surface_potential

from .conftest import make_design


def fixed_solution(conductors, rho, seg_len, currents_per_m):
    seg = segment_conductors(conductors, seg_len).segments
    cur = currents_per_m * seg.length
    return Solution(seg, 1.0, cur, uniform_greens(Soil("uniform", rho)), "given")


def test_rod_surface_potential_matches_line_source_closed_form():
    # Uniform line source on [0, L] below an insulating surface: at the surface the source and
    # its image coincide, V(r) = rho I / (2 pi L) asinh(L / r) (textbook image method).
    rho, length, i_total = 100.0, 3.0, 1.0
    sol = fixed_solution([Rod("r", 0, 0, 0, length, 1e-5).as_conductor()], rho, 0.5, i_total / length)
    r = np.array([0.5, 1.0, 2.0, 5.0, 20.0, 100.0])
    v = surface_potential(np.column_stack([r, 0 * r]), sol, 1.0)
    ref = rho * i_total / (2 * np.pi * length) * np.arcsinh(length / r)
    assert np.allclose(v, ref, rtol=1e-6)


def test_buried_wire_surface_potential_matches_quadrature():
    # Point-source image formula integrated by scipy.integrate.quad along a 10 m wire at 0.5 m.
    rho, h = 200.0, 0.5
    sol = fixed_solution([Conductor("w", (0, 0, h), (10, 0, h), 1e-5)], rho, 1.0, 0.1)
    pts = np.array([[5.0, 0.0], [5.0, 3.0], [12.0, 1.0], [-30.0, 4.0]])
    v = surface_potential(pts, sol, 1.0)
    for p, vi in zip(pts, v, strict=False):
        ref = quad(lambda t, p=p: 2 / np.sqrt((p[0] - t) ** 2 + p[1] ** 2 + h * h), 0, 10, limit=200)[0]
        assert vi == pytest.approx(rho * 0.1 / (4 * np.pi) * ref, rel=1e-5)


def test_far_field_tends_to_point_source_on_surface():
    # Far from any electrode the surface potential is rho I / (2 pi r) (hemispherical spreading,
    # textbook). At r = 2 km from a 20 m grid the difference is below 0.1 %.
    grid = GridSpec("g", 0, 0, 20, 20, 3, 3, 0.5, 0.01).conductors()
    seg = segment_conductors(grid, 2.0).segments
    sol = solve(seg, uniform_greens(Soil("uniform", 100.0)))
    gpr = 1000.0
    i_total = gpr / sol.resistance_ohm
    v = surface_potential(np.array([[2010.0, 10.0]]), sol, gpr)[0]
    assert v == pytest.approx(100.0 * i_total / (2 * np.pi * 2000.0), rel=1e-3)


@pytest.fixture(scope="module")
def small_grid_field():
    grid = GridSpec("g", 0, 0, 20, 20, 5, 5, 0.5, 0.01)
    seg = segment_conductors(grid.conductors(), 1.0).segments
    sol = solve(seg, uniform_greens(Soil("uniform", 100.0)))
    lines = np.array([[c.start[:2], c.end[:2]] for c in grid.conductors()])
    area = TouchArea(compute_footprint(lines), lines)
    raster = build_raster(sol, area, 0.5, 4.0)
    return sol, raster


def test_surface_potential_below_gpr_and_positive(small_grid_field):
    # Maximum principle: the surface potential lies between 0 and the GPR (common practice).
    _, raster = small_grid_field
    assert raster.potential_per_gpr.max() < 1.0
    assert raster.potential_per_gpr.min() > 0.0


def test_refined_touch_not_below_raster_and_inside_footprint(small_grid_field):
    sol, raster = small_grid_field
    pot = lambda xy: surface_potential(xy, sol, 1.0)  # noqa: E731
    t = find_max_touch(raster, pot)
    assert t.voltage_per_gpr >= t.raster_voltage_per_gpr - 1e-12
    assert 0 <= t.location_xy[0] <= 20 and 0 <= t.location_xy[1] <= 20
    # the worst touch point of a square grid lies in a corner mesh (IEEE Std 80 clause 16.5, common practice)
    x, y = t.location_xy
    assert min(x, 20 - x) < 5 and min(y, 20 - y) < 5


def test_refined_step_beats_brute_force_on_raster(small_grid_field):
    # Brute force: every pair of raster nodes exactly 1 m apart along x or y (spacing 0.5 m); the step
    # is taken over 1 m (common practice, IEEE Std 80 definition of step voltage [mem]).
    sol, raster = small_grid_field
    v = raster.potential_per_gpr
    brute = max(np.abs(v[:, 2:] - v[:, :-2]).max(), np.abs(v[2:, :] - v[:-2, :]).max())
    pot = lambda xy: surface_potential(xy, sol, 1.0)  # noqa: E731
    s = find_max_step(raster, pot)
    assert s.voltage_per_gpr >= brute - 1e-9
    assert np.hypot(s.start_xy[0] - s.end_xy[0], s.start_xy[1] - s.end_xy[1]) == pytest.approx(1.0)
    # the step voltage matches the potentials at its two ends
    ends = pot(np.array([s.start_xy, s.end_xy]))
    assert ends[0] - ends[1] == pytest.approx(s.voltage_per_gpr, rel=1e-9)


def test_touch_and_step_scale_with_raster_spacing_only_slightly():
    # Local refinement makes the maxima nearly independent of the raster spacing (a convergence check
    # of our own search, no outside value).
    d1 = make_design(grids=[GridSpec("g", 0, 0, 20, 20, 5, 5, 0.5, 0.01)], spacing=1.0)
    d2 = make_design(grids=[GridSpec("g", 0, 0, 20, 20, 5, 5, 0.5, 0.01)], spacing=0.4)
    r1, r2 = analyse(d1), analyse(d2)
    assert r1.max_touch_v == pytest.approx(r2.max_touch_v, rel=0.01)
    assert r1.max_step_v == pytest.approx(r2.max_step_v, rel=0.01)


def test_single_rod_uses_reach_area():
    d = make_design(rods=[Rod("r", 0, 0, 0, 3, 0.016)], surface=None, spacing=0.25)
    r = analyse(d)
    assert any(n.code == "no-enclosed-mesh" for n in r.notices)
    x, y = r.field.touch.location_xy
    assert np.hypot(x, y) <= 1.0 + 1e-9  # touch reach 1 m from the metal (common practice)
