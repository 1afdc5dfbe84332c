"""Two-level (Richardson) estimate of the discretisation error in every run."""

from __future__ import annotations

import math

import pytest

from groundcalc.analysis import analyse
from groundcalc.geometry.segments import segment_conductors
from groundcalc.model import GridSpec, Rod, Soil
from groundcalc.mom.assembly import build_greens
from groundcalc.mom.convergence import DiscretisationError, richardson_error
from groundcalc.mom.solver import solve

from .conftest import make_design

GRID = [GridSpec("G", 0.0, 0.0, 20.0, 20.0, 3, 3, 0.5, 0.01)]
RODS = [Rod(f"R{i}", x, y, 0.5, 3.0, 0.016) for i, (x, y) in enumerate([(0, 0), (20, 0), (0, 20), (20, 20)])]


def test_richardson_estimate_is_exact_for_a_first_order_sequence():
    # X(h) = X0 + C h: (X_h - X_2h) / (2^1 - 1) is exactly X_h - X0 (Richardson 1927).
    x0, c, h = 2.5, 0.03, 1.0
    fine, coarse = x0 + c * h, x0 + 2 * c * h
    assert richardson_error(fine, coarse) == pytest.approx(c * h / fine, rel=1e-12)
    # second order: the same two levels with p = 2 divide by 3
    fine2, coarse2 = x0 + c * h**2, x0 + c * (2 * h) ** 2
    assert richardson_error(fine2, coarse2, order=2.0) == pytest.approx(c * h**2 / fine2, rel=1e-12)
    assert math.isnan(richardson_error(0.0, 1.0))


def test_estimate_bounds_the_measured_error_of_a_rod_and_grid_layout():
    # True error of Rg at 2 m segments from a reference extrapolated from 1 and 0.5 m runs (observed order,
    # three levels): the order-1 estimate is not below it, and within a factor of four of it.
    design = make_design(grids=GRID, rods=RODS, soil=Soil("uniform", 100.0), segment=2.0, spacing=1.0, margin=2.0)
    r = analyse(design)
    est = r.discretisation
    assert est is not None and est.coarse_segment_length_m == 4.0
    conds = design.all_conductors()
    soil = Soil("uniform", 100.0)
    r1, r05 = (
        solve(seg, build_greens(soil, seg)).resistance_ohm
        for seg in (segment_conductors(conds, s).segments for s in (1.0, 0.5))
    )
    r2 = r.resistance_ohm
    p = math.log2((r2 - r1) / (r1 - r05))
    limit = r05 + (r05 - r1) / (2**p - 1)
    true_rel = abs(r2 / limit - 1)
    assert true_rel <= est.resistance_rel <= 4 * true_rel
    assert est.touch_rel is not None and est.touch_rel >= 0.0


def test_warning_when_the_estimate_exceeds_one_percent():
    # Graded meshes rarely reach 1 %, so the wiring is checked with a given estimate: 2 % on Rg warns,
    # 0.5 % does not; a real run at 1 m stays below and carries no warning.
    from groundcalc.analysis import evaluate, solve_geometry, surface_field

    design = make_design(grids=GRID, rods=RODS, soil=Soil("uniform", 100.0), segment=2.0, spacing=1.0, margin=2.0)
    geometry = solve_geometry(design)
    field_result = surface_field(design, geometry)
    for rel, warns in ((0.02, True), (0.005, False)):
        est = DiscretisationError(rel, 0.001, 2.0, 4.0, 10, 5, 1.0, 0.0)
        r = evaluate(design, geometry, field_result, None, est)
        assert any(n.code == "discretisation-error" for n in r.notices) is warns
        assert r.discretisation is est
    fine = analyse(make_design(grids=GRID, rods=RODS, soil=Soil("uniform", 100.0), segment=1.0))
    assert not fine.discretisation.exceeds_warning
    assert not any(n.code == "discretisation-error" for n in fine.notices)


def test_finer_check_level_where_doubling_does_not_coarsen():
    # A 12 m wire at 5 m segments (the longest the validation accepts) is mostly graded free-end runs:
    # doubling the target barely changes the mesh, so the check uses half the target length.
    from groundcalc.model import Conductor

    design = make_design(conductors=[Conductor("w", (0, 0, 0.5), (12, 0, 0.5), 0.01)], segment=5.0, spacing=1.0)
    est = analyse(design).discretisation
    assert est.coarse_segment_length_m == 2.5
    assert est.coarse_segments >= est.segments


def test_summary_and_json_carry_the_estimate():
    from groundcalc.cli import _summary_lines
    from groundcalc.io.outputs import results_to_dict

    design = make_design(grids=GRID, soil=Soil("uniform", 100.0), segment=2.0, spacing=2.0, margin=1.0)
    r = analyse(design)
    d = results_to_dict(r)["discretisation_error"]
    assert d["coarse_segment_length_m"] == 4.0 and d["segment_length_m"] == 2.0
    assert d["grid_resistance_rel"] == r.discretisation.resistance_rel
    assert d["exceeds_1_percent"] is False
    assert any(
        line.startswith("Discretisation error (estimated, check level 4 m segments)") for line in _summary_lines(r)
    )
    # switched off (the CLI's --no-error-estimate): null in the JSON, no summary line
    off = analyse(design, error_estimate=False)
    assert results_to_dict(off)["discretisation_error"] is None
    assert not any(line.startswith("Discretisation error") for line in _summary_lines(off))


def test_estimate_solves_the_coarse_level_with_the_same_metal_groups():
    # A floating pipe beside the grid: the check level must keep it floating (zero net current,
    # Kirchhoff), or it would add a second electrode at the GPR and the "error" would be the
    # difference between two different problems (tens of per cent), not the discretisation.
    from dataclasses import replace

    from groundcalc.model import Conductor, MetalGroup, MetalLayout

    pipe = Conductor("pipe", (-6.0, 10.0, 1.0), (26.0, 10.0, 1.0), 0.1)
    base = make_design(grids=GRID, soil=Soil("uniform", 100.0), segment=2.0, spacing=2.0, margin=1.0)
    design = replace(base, metal=MetalLayout(groups=(MetalGroup("pipe", False, (pipe,)),)))
    r = analyse(design)
    assert r.discretisation.coarse_segment_length_m == 4.0
    assert r.discretisation.resistance_rel < 0.01
    bonded = analyse(replace(base, conductors=(pipe,)))
    # the bonded pipe lowers Rg clearly: the two problems differ by far more than the estimate
    assert abs(bonded.resistance_ohm / r.resistance_ohm - 1) > 5 * r.discretisation.resistance_rel
