"""The thin-wire operator: surface potentials at any distance, and its far rule against the near rule."""

import numpy as np
import pytest
from scipy.integrate import quad

import groundcalc.mom.operator as operator
from groundcalc.geometry.segments import segment_conductors
from groundcalc.model import Conductor, GridSpec, Soil
from groundcalc.mom.assembly import build_greens
from groundcalc.mom.operator import FAR_MARGIN, PAIR_FAR_RATIO, Operator
from groundcalc.mom.solver import Solution
from groundcalc.soil.greens import SURFACE, GreensFunction
from groundcalc.soil.registry import registered_models
from groundcalc.soil.twolayer import point_potential
from groundcalc.surface.potential import surface_potential


def k_soil(k, h, rho1=100.0):
    return Soil("two-layer", rho1, h, rho1 * (1 + k) / (1 - k))


def _wire_solution(soil, per_m=0.1):
    # a 10 m wire at 0.5 m depth with a given leakage per metre; no surface margin, so the
    # soil's tables reach only about the wire's own extent
    wire = Conductor("w", (0, 0, 0.5), (10, 0, 0.5), 1e-5)
    seg = segment_conductors([wire], 1.0, interface_depth_m=soil.thickness_m).segments
    return Solution(seg, 1.0, per_m * seg.length, build_greens(soil, seg), "given")


@pytest.mark.parametrize("k", [0.9, -0.9])
def test_surface_potential_far_outside_the_tables(k):
    # Points 50 m to 200 m from a 10 m wire, far beyond the range of the soil's tables: the surface
    # potential against scipy.integrate.quad over the wire of the point-source image series summed
    # term by term (Sunde's two-layer series: E. D. Sunde, Earth Conduction Effects in Transmission
    # Systems, Dover 1968, sec. 2.5; G. F. Tagg, Earth Resistances, 1964, ch. 5; docs/references.md).
    # The series is summed to 1e-9 and the far rule errs by O((L/R)^4) < 1e-8 here: 1e-6 leaves room
    # for both.
    soil = k_soil(k, 2.0)
    sol = _wire_solution(soil)
    pts = np.array([[60.0, 0.0], [5.0, 50.0], [-200.0, 30.0]])
    v = surface_potential(pts, sol, 1.0)
    for p, vi in zip(pts, v, strict=True):

        def f(t, p=p):
            return point_potential(np.array([[p[0], p[1], 0.0]]), np.array([[t, 0, 0.5]]), soil)[0]

        ref = 0.1 * quad(f, 0, 10, limit=200, epsrel=1e-11)[0]
        assert vi == pytest.approx(ref, rel=1e-6)


@pytest.mark.parametrize("k", [0.9, -0.5])
def test_surface_potential_tends_to_the_lower_layer_far_away(k):
    # Far from a compact electrode (r >> H) two-layer soil acts as the lower layer alone:
    # V -> rho2 I / (2 pi r) (limit of Sunde's series, 1968, sec. 2.5: sum_n K^n -> 1/(1 - K), so
    # rho1 (1 + 2K/(1 - K)) = rho2). At r = 5 km with H = 2 m the next term is below 1e-4 relative.
    soil = k_soil(k, 2.0)
    sol = _wire_solution(soil)
    r = 5000.0
    v = surface_potential(np.array([[5.0, r]]), sol, 1.0)[0]
    total = float(sol.currents_per_gpr.sum())
    assert v == pytest.approx(soil.rho2_ohm_m * total / (2 * np.pi * r), rel=1e-4)


@pytest.mark.parametrize("k", [0.9, -0.9])
def test_far_rule_entries_against_near_rule_at_the_switch(k, monkeypatch):
    # Two-layer matrix entries of horizontal pairs just beyond the switch-over distance: the far rule
    # (corrected mid-point rule with the tabulated radial sums) against the general rule (every image
    # integrated by the closed forms, tails by Gauss points) that it replaces there.
    # Both are the same integral; the far rule's remainder is O((L/R)^4): below 2e-5 (see
    # test_kernels.py for one image against scipy.integrate.dblquad).
    soil = k_soil(k, 2.0)
    grid = GridSpec("g", 0, 0, 30, 30, 4, 4, 0.5, 0.01).conductors()
    seg = segment_conductors(grid, 2.0, interface_depth_m=2.0).segments
    op = Operator(seg, build_greens(soil, seg))
    mid, length = seg.mid, seg.length
    ii, jj = np.triu_indices(len(seg), 1)
    d2 = np.sum((mid[ii, :2] - mid[jj, :2]) ** 2, axis=1)
    size = np.maximum(length[ii], length[jj])
    switch = (PAIR_FAR_RATIO * size) ** 2 * FAR_MARGIN
    sel = (d2 >= switch) & (d2 < 1.3 * switch)
    assert sel.sum() > 50
    far = op.entries(ii[sel], jj[sel])
    monkeypatch.setattr(operator, "PAIR_FAR_RATIO", 1e9)  # every image pair by the closed forms
    near = op.general_entries(ii[sel], jj[sel])
    assert not np.array_equal(far, near)  # two different rules
    assert np.max(np.abs(far / near - 1)) < 2e-5


def test_soil_models_implement_the_greens_function_protocol():
    # every registered model answers the protocol; an unknown model is refused by name
    seg = segment_conductors(GridSpec("g", 0, 0, 10, 10, 2, 2, 0.5, 0.01).conductors(), 2.0).segments
    for soil in (Soil("uniform", 100.0), k_soil(0.5, 2.0)):
        g = build_greens(soil, seg)
        assert isinstance(g, GreensFunction)
        assert g.images(0, 0)[: len(g.leading_images(0, 0))] == g.leading_images(0, 0)
    assert set(registered_models()) >= {"uniform", "two-layer"}
    with pytest.raises(ValueError, match="three-layer"):
        build_greens(Soil("three-layer", 100.0), seg)


def test_equal_layers_have_the_uniform_images():
    # rho1 = rho2 (K = 0): the two-layer series reduces to the source and its surface image
    # (common practice), with no tails, for buried and for surface observers
    seg = segment_conductors(GridSpec("g", 0, 0, 10, 10, 2, 2, 0.5, 0.01).conductors(), 2.0).segments
    two = build_greens(k_soil(0.0, 2.0), seg)
    uni = build_greens(Soil("uniform", 100.0), seg)
    for layer_o in (0, SURFACE):
        assert two.images(layer_o, 0) == uni.images(layer_o, 0)
        assert two.tails(layer_o, 0) == ()
