"""Matrix-free operator (Ewald-split plan-grid FFT) against the exact dense path.

Reference: the dense Galerkin matrix solved by ``scipy.linalg.solve`` (LAPACK, a general-purpose
library); the dense entries themselves are checked against closed forms (Dwight 1936, Sunde 1968)
in tests/test_solver.py and tests/test_kernels.py. The fast product must reproduce that matrix:
precorrected FFT (Phillips and White 1997) corrects the near field exactly, so the only errors
are the grid interpolation of a smooth kernel and the two-point Gauss rule on distant pairs.
Tolerances: Rg 0.05 %, surface potential 1e-3 of GPR at 1,000 random points (common practice for
a fast-method accuracy guard); the surface check is held to 1e-4 of GPR (measured 7e-7 to 1.1e-5).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg

from groundcalc.geometry.segments import segment_conductors
from groundcalc.model import Conductor, Soil
from groundcalc.mom.assembly import assemble
from groundcalc.mom.fastop import FastOperator, _Grid
from groundcalc.mom.operator import Operator, build_greens


def unequal_grid(width, height, nx, ny, depth=0.5, rods=True):
    """Grid with conductors compressed toward the edges (cosine spacing), four 3 m corner rods."""
    t = np.linspace(0.0, 1.0, nx)
    u = np.linspace(0.0, 1.0, ny)
    t = 0.7 * (0.5 - 0.5 * np.cos(np.pi * t)) + 0.3 * t
    u = 0.7 * (0.5 - 0.5 * np.cos(np.pi * u)) + 0.3 * u
    xs, ys = width * t, height * u
    c = [Conductor(f"x{i}", (x, 0.0, depth), (x, height, depth), 0.012) for i, x in enumerate(xs)]
    c += [Conductor(f"y{i}", (0.0, y, depth), (width, y, depth), 0.012) for i, y in enumerate(ys)]
    if rods:
        for k, (x, y) in enumerate([(0, 0), (width, 0), (0, height), (width, height)]):
            c.append(Conductor(f"r{k}", (x, y, depth), (x, y, depth + 3.0), 0.016, "rod"))
    return c


def k_soil(k, rho1=300.0, h=3.0):
    """Two-layer soil with reflection factor K = (rho2 - rho1) / (rho2 + rho1)."""
    return Soil("two-layer", rho1, h, rho1 * (1.0 + k) / (1.0 - k))


SOILS = {
    "uniform": (Soil("uniform", 100.0), None),
    "K+0.9": (k_soil(0.9), 3.0),
    "K-0.9": (k_soil(-0.9), 3.0),
}


@pytest.fixture(scope="module", params=list(SOILS))
def case(request):
    soil, interface = SOILS[request.param]
    seg = segment_conductors(unequal_grid(40.0, 30.0, 7, 6), 2.0, interface_depth_m=interface).segments
    greens = build_greens(soil, seg, 10.0)
    op = Operator(seg, greens)
    z = assemble(seg, greens)
    z = np.triu(z) + np.triu(z, 1).T
    exact = scipy.linalg.solve(z, np.ones(len(seg)), assume_a="pos")
    return op, z, exact, FastOperator(op)


def test_product_matches_dense_matrix(case):
    op, z, _, fast = case
    x = np.random.default_rng(1).random(len(op.segments))
    ref = z @ x
    assert np.max(np.abs(fast.matvec(x) - ref)) < 1e-3 * np.max(np.abs(ref))


def test_resistance_within_0p05_percent_of_dense_solve(case):
    _, _, exact, fast = case
    x, iterations = fast.solve(np.ones(exact.size))
    assert x is not None and iterations < 60
    assert abs(exact.sum() / x.sum() - 1.0) < 5e-4


def test_surface_potential_at_random_points_within_1e4_of_gpr(case):
    op, _, exact, fast = case
    pts = np.random.default_rng(2).uniform([-10.0, -10.0], [50.0, 40.0], size=(1000, 2))
    # points on top of conductors as well (the near correction at zero plan distance)
    pts[:20] = op.mid[op.horizontal][:20, :2]
    ref = op.surface_potential(pts, exact)  # grid at 1 V: potentials are per unit GPR
    assert np.max(np.abs(fast.surface_potential(pts, exact) - ref)) < 1e-4


def test_grid_interpolation_is_exact_for_polynomials():
    """Lagrange weights of order 6 reproduce polynomials of degree 5 (interpolation theory)."""
    grid = _Grid(np.array([0.0, 0.0]), np.array([10.0, 7.0]), 0.7)
    gx = grid.x0[0] + grid.h * np.arange(grid.shape[0])
    gy = grid.x0[1] + grid.h * np.arange(grid.shape[1])
    nodal = (gx[:, None] ** 5 - 3 * gx[:, None] * gy[None, :] ** 2 + gy[None, :] ** 4).ravel()
    pts = np.random.default_rng(3).uniform([0.0, 0.0], [10.0, 7.0], size=(50, 2))
    want = pts[:, 0] ** 5 - 3 * pts[:, 0] * pts[:, 1] ** 2 + pts[:, 1] ** 4
    assert np.allclose(grid.weights(pts) @ nodal, want, rtol=1e-9, atol=1e-8)


@pytest.mark.parametrize("name", list(SOILS))
def test_whole_run_touch_and_step_within_0p3_percent_of_dense_path(name, monkeypatch):
    """Solve, surface raster and touch/step search: matrix-free against dense, same design."""
    from groundcalc.analysis import solve_geometry, surface_field
    from groundcalc.mom import fastop

    from .conftest import make_design

    soil, _ = SOILS[name]
    design = make_design(conductors=unequal_grid(40.0, 30.0, 7, 6), soil=soil, segment=2.0, spacing=1.0)
    geo_exact = solve_geometry(design)
    field_exact = surface_field(design, geo_exact)
    monkeypatch.setattr(fastop, "FAST_MIN_SIZE", 0)
    geo_fast = solve_geometry(design)
    assert geo_fast.solution.fast_operator is not None
    assert geo_exact.solution.fast_operator is None
    field_fast = surface_field(design, geo_fast)
    assert geo_fast.solution.resistance_ohm == pytest.approx(geo_exact.solution.resistance_ohm, rel=5e-4)
    assert field_fast.touch.voltage_per_gpr == pytest.approx(field_exact.touch.voltage_per_gpr, rel=3e-3)
    assert field_fast.step.voltage_per_gpr == pytest.approx(field_exact.step.voltage_per_gpr, rel=3e-3)


ROD_SOILS = dict(
    SOILS, three_layer=(Soil("multilayer", 300.0, 2.0, 80.0, layers=((300.0, 2.0), (80.0, 6.0), (500.0, None))), None)
)


@pytest.mark.parametrize("name", list(ROD_SOILS))
def test_rod_couplings_from_radial_splines_match_exact_entries(name):
    """Rods far from a segment or a surface point: spline of the point kernel against the exact operator.

    Reference: the operator's exact entries (closed forms per image, Dwight 1936; image tails) for
    every pair, the rods spread over the perimeter so that most pairs are distant.
    """
    soil, _ = ROD_SOILS[name]
    cond = unequal_grid(40.0, 30.0, 7, 6, rods=False)
    for k, (x, y) in enumerate([(0, 0), (20, 0), (40, 0), (40, 15), (40, 30), (20, 30), (0, 30), (0, 15)]):
        cond.append(Conductor(f"r{k}", (x, y, 0.5), (x, y, 3.5), 0.016, "rod"))
    seg = segment_conductors(cond, 2.0).segments
    op = Operator(seg, build_greens(soil, seg, 10.0))
    fast = FastOperator(op)
    dense_h, _ = fast._dense_columns()
    exact = fast._exact_block(fast.hidx, fast.vidx)
    assert fast.rod_pos.size == fast.vidx.size > 0
    assert np.max(np.abs(dense_h - exact)) < 1e-6 * np.max(np.abs(exact))
    rods = fast.vidx[fast.rod_pos]
    pts = np.random.default_rng(4).uniform([-30.0, -30.0], [70.0, 60.0], size=(500, 2))
    q = np.random.default_rng(5).uniform(0.5, 1.5, rods.size)
    ref = op.surface_potential(pts, q, rods)
    assert np.max(np.abs(fast.rod_field.surface_potential(pts, q) - ref)) < 1e-6 * np.max(np.abs(ref))


def test_large_matrix_free_solve_reports_near_pairs_and_residual_decades(case, monkeypatch, caplog):
    """Progress of the setup and of conjugate gradients; the solution is the same as without it."""
    import logging

    from groundcalc.mom import fastop

    op, _, exact, _ = case
    quiet, _ = FastOperator(op).solve(np.ones(exact.size))
    monkeypatch.setattr(fastop, "PROGRESS_MIN_SIZE", 1)
    with caplog.at_level(logging.INFO, logger="groundcalc"):
        shown, _ = FastOperator(op).solve(np.ones(exact.size))
    messages = [r.getMessage() for r in caplog.records]
    assert any(m.startswith("near pairs: 1/1 done") for m in messages)
    assert any(m.startswith("conjugate gradients (residual decades): 9/9 done") for m in messages)
    np.testing.assert_array_equal(shown, quiet)


def test_surface_grid_too_large_for_memory_is_coarsened_then_summed_directly(case, monkeypatch, caplog):
    """A surface grid over the memory cap: a coarser grid (still within 1e-3 of GPR), then direct sums."""
    import logging

    from groundcalc.mom import fastop

    op, _, exact, _ = case
    pts = np.random.default_rng(6).uniform([-10.0, -10.0], [50.0, 40.0], size=(300, 2))
    ref = op.surface_potential(pts, exact)
    full = FastOperator(op)
    nodes = full._surface_grid(pts).padded
    monkeypatch.setattr(fastop, "MAX_GRID_NODES", nodes[0] * nodes[1] - 1)
    coarse = FastOperator(op)
    with caplog.at_level(logging.INFO, logger="groundcalc"):
        got = coarse.surface_potential(pts, exact)
    assert coarse._surface_cache["grid_obj"].h > full._surface_grid(pts).h
    assert any("coarsened" in r.getMessage() for r in caplog.records)
    assert np.max(np.abs(got - ref)) < 1e-3
    monkeypatch.setattr(fastop, "MAX_GRID_NODES", 1)
    with caplog.at_level(logging.INFO, logger="groundcalc"):
        direct = FastOperator(op).surface_potential(pts, exact)
    assert any("summed directly" in r.getMessage() for r in caplog.records)
    np.testing.assert_allclose(direct, ref, rtol=1e-12, atol=1e-14)


def test_rod_coupling_across_the_plan_diagonal_of_a_large_square_layout():
    """Segments at the far corner of a 400 m square from a rod: the splines reach the whole diagonal."""
    cond = [
        Conductor("a", (0.0, 0.0, 0.5), (10.0, 0.0, 0.5), 0.012),
        Conductor("b", (390.0, 400.0, 0.5), (400.0, 400.0, 0.5), 0.012),
        Conductor("c", (400.0, 390.0, 0.5), (400.0, 400.0, 0.5), 0.012),
        Conductor("r", (0.0, 0.0, 0.5), (0.0, 0.0, 3.5), 0.016, "rod"),
    ]
    seg = segment_conductors(cond, 2.0).segments
    op = Operator(seg, build_greens(k_soil(0.9), seg, 10.0))
    fast = FastOperator(op)
    dense_h, _ = fast._dense_columns()
    exact = fast._exact_block(fast.hidx, fast.vidx)
    far = op.mid[fast.hidx, 0] > 300.0
    assert far.sum() >= 8
    # measured 2e-11; splines that stopped short of the diagonal extrapolated to 7e-7
    assert np.max(np.abs(dense_h[far] - exact[far]) / np.abs(exact[far])) < 1e-8


@pytest.mark.parametrize("name", ["uniform", "K-0.9"])
def test_floating_metal_groups_matrix_free_against_the_dense_schur_complement(name, monkeypatch):
    """Grid with a floating perimeter fence wire and a floating pipe: same potentials, no net current.

    Reference: the dense Cholesky factorisation with the Schur complement on the group potentials
    (Golub and Van Loan 2013, sec. 4.2), itself checked against Sunde's mutual resistance in
    tests/test_groups.py.
    """
    from groundcalc.geometry.metal import MetalGroup, MetalLayout, segment_groups
    from groundcalc.mom import fastop
    from groundcalc.mom.groups import solve_groups

    soil, interface = SOILS[name]
    fence = [
        Conductor(f"f{k}", a, b, 0.008)
        for k, (a, b) in enumerate(
            [
                ((-2.0, -2.0, 0.3), (42.0, -2.0, 0.3)),
                ((42.0, -2.0, 0.3), (42.0, 32.0, 0.3)),
                ((42.0, 32.0, 0.3), (-2.0, 32.0, 0.3)),
                ((-2.0, 32.0, 0.3), (-2.0, -2.0, 0.3)),
            ]
        )
    ]
    pipe = (Conductor("pipe", (-10.0, 12.0, 1.0), (50.0, 12.0, 1.0), 0.1),)
    layout = MetalLayout(groups=(MetalGroup("fence", False, tuple(fence)), MetalGroup("pipe", False, pipe)))
    gs = segment_groups(unequal_grid(40.0, 30.0, 7, 6), layout, 2.0, interface_depth_m=interface)
    seg = gs.segmentation.segments
    greens = build_greens(soil, seg, 10.0)
    dense = solve_groups(seg, greens, gs.group, gs.bonded, gs.names)
    monkeypatch.setattr(fastop, "FAST_MIN_SIZE", 0)
    fast = solve_groups(seg, greens, gs.group, gs.bonded, gs.names)
    assert fast.solution.fast_operator is not None and dense.solution.fast_operator is None
    assert fast.solution.resistance_ohm == pytest.approx(dense.solution.resistance_ohm, rel=5e-4)
    np.testing.assert_allclose(fast.potential_pu, dense.potential_pu, rtol=1e-3)
    assert np.all(np.abs(fast.net_current_a[1:]) < 1e-6 * fast.net_current_a[0])


def test_no_dense_fallback_beyond_memory(monkeypatch):
    """Rods only (no horizontal segment for the plan grid): the dense path is refused when too large."""
    from groundcalc.errors import InputError
    from groundcalc.mom import fastop, solver

    cond = [Conductor(f"r{k}", (3.0 * k, 0.0, 0.5), (3.0 * k, 0.0, 3.5), 0.016, "rod") for k in range(4)]
    seg = segment_conductors(cond, 1.0).segments
    greens = build_greens(Soil("uniform", 100.0), seg, 5.0)
    monkeypatch.setattr(fastop, "FAST_MIN_SIZE", 0)
    assert solver.solve(seg, greens).fast_operator is None  # dense fallback while it fits
    monkeypatch.setattr(solver, "DENSE_MAX_SIZE", len(seg) - 1)
    with pytest.raises(InputError, match="dense matrix of .* segments would need") as err:
        solver.solve(seg, greens)
    assert err.value.quantity == "settings.segment_length_m"
