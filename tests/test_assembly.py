"""Speed-ups of the assembly and solve against the plain evaluation (accuracy guard).

Reuse of repeated geometry, the far-pair rule and conjugate gradients must not move results:
resistance within 0.1 % and maximum touch and step within 0.5 % of the plain exact assembly
(every pair by the closed-form integrals, factorised), as the performance targets require.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg

import groundcalc.mom.assembly as assembly
import groundcalc.mom.operator as operator
import groundcalc.mom.solver as solver
import groundcalc.surface.potential as surface
from groundcalc.analysis import analyse
from groundcalc.geometry.segments import segment_conductors
from groundcalc.model import Conductor, GridSpec, Rod, Soil
from groundcalc.mom.assembly import AssemblyStats, assemble, build_greens, segment_classes
from groundcalc.mom.solver import conjugate_gradients

from .conftest import make_design

GRID = [GridSpec("G", 0.0, 0.0, 24.0, 18.0, 4, 5, 0.5, 0.01)]
RODS = [Rod(f"R{k}", x, y, 0.5, 4.0, 0.016) for k, (x, y) in enumerate([(0, 0), (24, 0), (0, 18), (24, 18)])]
SOILS = [Soil("uniform", 100.0), Soil("two-layer", 100.0, 2.0, 1900.0), Soil("two-layer", 1900.0, 2.0, 100.0)]


def _segments(soil, seg_len=1.0, grading=True):
    d = make_design(grids=GRID, rods=RODS, soil=soil, segment=seg_len)
    h = soil.thickness_m if soil.model == "two-layer" else None
    return segment_conductors(d.all_conductors(), seg_len, interface_depth_m=h, grading=grading).segments


@pytest.mark.parametrize("soil", SOILS, ids=["uniform", "K+0.9", "K-0.9"])
def test_reuse_of_repeated_geometry_equals_direct_assembly(soil):
    # Same rules, fewer evaluations: entries agree to round-off (the class offsets are exact
    # copies of the pairs they stand for, up to 1e-9 m). Equal segments show the saving; with
    # graded rods (the default) the four rods' short segments are evaluated directly.
    for grading in (False, True):
        seg = _segments(soil, grading=grading)
        g = build_greens(soil, seg)
        stats = AssemblyStats()
        z = assemble(seg, g, stats)
        z0 = assembly._assemble_direct(seg, g)
        iu = np.triu_indices(len(seg))
        assert stats.method == "reuse of repeated geometry"
        assert stats.evaluated < stats.pairs / (1.5 if not grading else 1.2)
        assert np.max(np.abs(z[iu] / z0[iu] - 1)) < 1e-9


def test_classes_group_copies_only():
    # Two parallel wires of equal length and depth are one class whatever their sense; a longer,
    # deeper or thicker one is not.
    c = [
        Conductor("a", (0, 0, 0.5), (1, 0, 0.5), 0.01),
        Conductor("b", (5, 3, 0.5), (4, 3, 0.5), 0.01),
        Conductor("c", (0, 6, 0.5), (2, 6, 0.5), 0.01),
        Conductor("d", (0, 9, 0.8), (1, 9, 0.8), 0.01),
        Conductor("e", (0, 12, 0.5), (1, 12, 0.5), 0.02),
    ]
    cls = segment_classes(segment_conductors(c, 5.0, grading=False).segments)
    assert cls[0] == cls[1]
    assert len(set(cls.tolist())) == 4


def test_irregular_layout_falls_back_to_direct(monkeypatch):
    monkeypatch.setattr(assembly, "MAX_CLASSES", 1)
    seg = _segments(SOILS[0])
    stats = AssemblyStats()
    assemble(seg, build_greens(SOILS[0], seg), stats)
    assert stats.method == "direct" and stats.evaluated == stats.pairs


def test_conjugate_gradients_against_scipy_solve():
    # General-purpose library check: a random SPD system, only the upper triangle given.
    rng = np.random.default_rng(7)
    a = rng.standard_normal((300, 300))
    m = a @ a.T + 300 * np.eye(300)
    b = rng.standard_normal(300)
    x, it = conjugate_gradients(np.triu(m), b)
    assert x is not None and it < 100
    assert np.allclose(x, scipy.linalg.solve(m, b), rtol=1e-8, atol=1e-12)
    # an indefinite matrix is refused rather than answered
    bad = m.copy()
    bad[0, 0] = -1.0
    assert conjugate_gradients(np.triu(bad), b)[0] is None


@pytest.mark.parametrize("soil,seg_len,spacing", [(SOILS[0], 1.0, 0.5), (SOILS[2], 1.0, 0.5)], ids=["uniform", "K-0.9"])
def test_speed_ups_against_plain_exact_pipeline(soil, seg_len, spacing, monkeypatch):
    # Accuracy guard of the performance work: the whole pipeline with reuse, the far-pair rule
    # (matrix and surface) and conjugate gradients, against every pair by the closed-form
    # integrals and a Cholesky factorisation. Limits: R 0.1 %, touch and step 0.5 %.
    design = make_design(grids=GRID, rods=RODS, soil=soil, segment=seg_len, spacing=spacing, margin=3.0)
    monkeypatch.setattr(solver, "CG_MIN_SIZE", 0)
    fast = analyse(design)
    assert fast.geometry.solution.method.startswith("conjugate gradients")
    monkeypatch.undo()
    # no pair counts as far: every matrix entry by the closed forms (the ratio of the pair rule
    # only, so the two-layer image split, which uses FAR_RATIO, is unchanged)
    monkeypatch.setattr(operator, "PAIR_FAR_RATIO", 1e9)
    if soil.model == "uniform":  # the plain two-layer surface is very slow: checked on its own below
        monkeypatch.setattr(operator, "POINT_FAR_RATIO", 1e9)
    monkeypatch.setattr(assembly, "MAX_CLASSES", 0)
    monkeypatch.setattr(solver, "CG_MIN_SIZE", 10**9)
    plain = analyse(design)
    assert plain.geometry.solution.method == "Cholesky"
    assert fast.resistance_ohm == pytest.approx(plain.resistance_ohm, rel=1e-3)
    assert fast.max_touch_v == pytest.approx(plain.max_touch_v, rel=5e-3)
    assert fast.max_step_v == pytest.approx(plain.max_step_v, rel=5e-3)


@pytest.mark.parametrize("soil", SOILS, ids=["uniform", "K+0.9", "K-0.9"])
def test_surface_far_rule_against_plain_evaluation(soil, monkeypatch):
    # The far-pair rule of the surface potential against every pair by the exact line-source
    # formula, at points over and around the grid: within 1e-4 of the GPR.
    design = make_design(grids=GRID, rods=RODS, soil=soil, segment=1.0)
    geometry = __import__("groundcalc.analysis", fromlist=["solve_geometry"]).solve_geometry(design)
    sol = geometry.solution
    rng = np.random.default_rng(3)
    pts = np.column_stack([rng.uniform(-6, 30, 150), rng.uniform(-6, 24, 150)])
    fast = surface.surface_potential(pts, sol, 1.0)
    monkeypatch.setattr(operator, "POINT_FAR_RATIO", 1e9)
    plain = surface.surface_potential(pts, sol, 1.0)
    assert np.max(np.abs(fast - plain)) < 1e-4


def test_reuse_with_irregular_conductors_mixed_in():
    # A diagonal conductor and a short tail are not copies of anything: their pairs are evaluated
    # directly while the grid's classes are reused; the matrix is the same as the direct one.
    extra = [
        Conductor("diag", (0.0, 0.0, 0.5), (24.0, 18.0, 0.5), 0.01),
        Conductor("tail", (24.0, 9.0, 0.5), (27.3, 9.0, 0.5), 0.01),
    ]
    d = make_design(grids=GRID, rods=RODS, conductors=extra, segment=1.0)
    seg = segment_conductors(d.all_conductors(), 1.0).segments
    g = build_greens(SOILS[0], seg)
    stats = AssemblyStats()
    z = assemble(seg, g, stats)
    z0 = assembly._assemble_direct(seg, g)
    iu = np.triu_indices(len(seg))
    assert stats.method == "reuse of repeated geometry" and 0 < stats.reused_pairs < stats.pairs
    assert np.max(np.abs(z[iu] / z0[iu] - 1)) < 1e-9


@pytest.mark.parametrize("soil", SOILS, ids=["uniform", "K+0.9", "K-0.9"])
@pytest.mark.parametrize("spacing", [0.5, 0.37])
def test_raster_convolution_equals_direct_sum(soil, spacing):
    # The raster potential by convolution of repeated segments (FFT) against the direct sum over every
    # point-segment pair: the same to round-off (1e-12 of the GPR). 0.37 m is not commensurate with
    # the 1 m segments, so that case is summed directly.
    design = make_design(grids=GRID, rods=RODS, soil=soil, segment=1.0)
    sol = __import__("groundcalc.analysis", fromlist=["solve_geometry"]).solve_geometry(design).solution
    x = np.arange(-4.0, 28.0, spacing)
    y = np.arange(-4.0, 22.0, spacing)
    conv = surface.raster_potential(x, y, sol, 1.0)
    xx, yy = np.meshgrid(x, y)
    plain = surface.surface_potential(np.column_stack([xx.ravel(), yy.ravel()]), sol, 1.0).reshape(conv.shape)
    assert np.max(np.abs(conv - plain)) < 1e-12


def test_auto_raster_spacing_is_a_fraction_of_the_segment_length():
    assert surface.auto_raster_spacing(110.0, 1.0) == pytest.approx(0.5)
    assert surface.auto_raster_spacing(72.0, 1.0) == pytest.approx(1 / 3)
    assert surface.auto_raster_spacing(72.0) == pytest.approx(0.36)
    assert 0.25 <= surface.auto_raster_spacing(1000.0, 2.0) <= 1.0


def test_large_assembly_reports_its_progress(monkeypatch, caplog):
    # Long solves show their progress (row blocks of the matrix) on stderr; the matrix is the same.
    import logging

    seg = segment_conductors(GRID[0].conductors(), 1.0).segments
    greens = build_greens(Soil("uniform", 100.0), seg)
    quiet = assemble(seg, greens)
    monkeypatch.setattr(assembly, "PROGRESS_MIN_SIZE", 1)
    monkeypatch.setattr(assembly, "GATHER_ELEMENTS", 4 * len(seg))  # several row blocks
    with caplog.at_level(logging.INFO, logger="groundcalc"):
        z = assemble(seg, greens)
    assert any(r.getMessage().startswith("matrix assembly: ") for r in caplog.records)
    np.testing.assert_array_equal(z, quiet)
