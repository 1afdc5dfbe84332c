"""N-layer soil: the Hankel filter on closed-form pairs, and the layer recursion against the
two-layer image series and uniform soil."""

from dataclasses import replace

import numpy as np
import pytest
from scipy.special import i0e

from groundcalc.geometry.segments import segment_conductors
from groundcalc.model import GridSpec, Rod, Soil
from groundcalc.mom.assembly import assemble, build_greens
from groundcalc.mom.solver import solve
from groundcalc.soil import twolayer
from groundcalc.soil.hankel import FILTER_BASE, hankel_j0
from groundcalc.soil.multilayer import Profile, point_potential

GRID = GridSpec("g", 0, 0, 30, 30, 4, 4, 0.5, 0.01).conductors()
SMALL = GridSpec("s", 0, 0, 10, 10, 2, 2, 0.5, 0.01).conductors()
RODS = [Rod(f"r{i}", x, y, 0.5, 6.0, 0.016).as_conductor() for i, (x, y) in enumerate([(0, 0), (30, 0), (15, 15)])]


def multilayer(layers):
    return Soil("multilayer", layers[0][0], layers[0][1], layers[1][0], layers=tuple(layers))


def test_filter_base_matches_the_published_abscissae():
    # Key (2012), 201-point J0/J1 filter as distributed with libdlf: first, centre and last abscissae.
    assert FILTER_BASE[0] == pytest.approx(4.1185887075357082e-06, rel=1e-13)
    assert FILTER_BASE[100] == 1.0
    assert FILTER_BASE[-1] == pytest.approx(2.4280161749832361e05, rel=1e-13)


def test_filter_on_closed_form_pairs():
    # Gradshteyn and Ryzhik 6.611.1: int exp(-a l) J0(l r) dl = 1/sqrt(r^2 + a^2);
    # 6.623 (differentiated in a): int l exp(-a l) J0(l r) dl = a/(r^2 + a^2)^(3/2);
    # 6.618.1: int exp(-p^2 l^2) J0(l r) dl = sqrt(pi)/(2p) exp(-r^2/(8p^2)) I0(r^2/(8p^2)).
    r = np.geomspace(1e-3, 1e3, 61)
    e1 = hankel_j0(lambda lam: np.exp(-lam), r) * np.sqrt(r * r + 1.0) - 1.0
    e2 = hankel_j0(lambda lam: lam * np.exp(-lam), r) * (r * r + 1.0) ** 1.5 - 1.0
    rg = np.geomspace(1e-2, 30.0, 31)
    e3 = hankel_j0(lambda lam: np.exp(-lam * lam), rg) / (np.sqrt(np.pi) / 2 * i0e(rg * rg / 8)) - 1.0
    assert np.abs(e1).max() < 1e-9
    assert np.abs(e2).max() < 1e-9
    assert np.abs(e3).max() < 1e-9


def _points(n=300, seed=3, depth=8.0):
    rng = np.random.default_rng(seed)
    p = np.c_[rng.uniform(-40, 40, (n, 2)), rng.uniform(0.0, depth, n)]
    q = np.c_[rng.uniform(-40, 40, (n, 2)), rng.uniform(0.0, depth, n)]
    return p, q


def test_point_potential_of_two_layers_equals_the_image_series():
    # Layer recursion (Sunde 1968 sec. 2.6) with N = 2 against the two-layer image series
    # (Tagg 1964 ch. 5; Sunde 1968 sec. 2.5), observer and source in every layer pair.
    p, q = _points()
    for rho1, rho2, h in [(300.0, 60.0, 2.0), (50.0, 900.0, 1.2)]:
        ref = twolayer.point_potential(p, q, Soil("two-layer", rho1, h, rho2))
        got = point_potential(p, q, Profile((rho1, rho2), (h,)))
        assert np.abs(got / ref - 1).max() < 1e-9


def test_point_potential_limits_of_three_layers():
    # Physical limits, no outside value: equal layers are uniform soil; a layer with the resistivity of
    # the one below merges with it (two layers); a vanishing middle layer is a first-order perturbation.
    p, q = _points()
    uni = twolayer.point_potential(p, q, Soil("uniform", 120.0))
    assert np.abs(point_potential(p, q, Profile((120.0,) * 3, (1.5, 4.0))) / uni - 1).max() < 1e-9
    two = twolayer.point_potential(p, q, Soil("two-layer", 300.0, 2.0, 60.0))
    same = point_potential(p, q, Profile((300.0, 60.0, 60.0), (2.0, 4.0)))
    assert np.abs(same / two - 1).max() < 1e-9
    # a very thin middle layer disappears: error of the order of its thickness over the distances
    thin = point_potential(p, q, Profile((300.0, 20.0, 60.0), (2.0, 1e-7)))
    assert np.abs(thin / two - 1).max() < 1e-5


def _compare(soil3, soil2, relabel, cond=GRID + RODS, seg_len=3.0):
    seg3 = segment_conductors(cond, seg_len, interface_depth_m=soil3.interfaces_m).segments
    seg2 = replace(seg3, layer=relabel(seg3.layer))
    g3, g2 = build_greens(soil3, seg3, 5.0), build_greens(soil2, seg2, 5.0)
    z3, z2 = assemble(seg3, g3), assemble(seg2, g2)
    r3, r2 = solve(seg3, g3).resistance_ohm, solve(seg2, g2).resistance_ohm
    return float(np.abs(z3 - z2).max() / np.abs(z2).max()), r3 / r2 - 1.0, seg3


def test_equal_resistivities_give_uniform_soil():
    # Three equal layers against the uniform half-space images (method of images, Sunde 1968 ch. 2).
    dz, dr, seg = _compare(
        multilayer([(100.0, 2.0), (100.0, 4.0), (100.0, None)]), Soil("uniform", 100.0), lambda lay: np.minimum(lay, 1)
    )
    assert set(seg.layer.tolist()) == {0, 1, 2}  # rods cross both interfaces and are split there
    assert dz < 1e-9 and abs(dr) < 1e-9


@pytest.mark.parametrize(
    "layers, two, relabel",
    [
        # N = 2 through the N-layer code
        ([(300.0, 2.0), (60.0, None)], (300.0, 2.0, 60.0), lambda lay: lay),
        # rho3 = rho2
        ([(300.0, 2.0), (60.0, 4.0), (60.0, None)], (300.0, 2.0, 60.0), lambda lay: np.minimum(lay, 1)),
        # rho2 = rho1
        ([(300.0, 2.0), (300.0, 4.0), (60.0, None)], (300.0, 6.0, 60.0), lambda lay: (lay >= 2).astype(np.int64)),
    ],
)
def test_three_layers_reduce_to_the_two_layer_image_series(layers, two, relabel):
    # Matrix entries and grid resistance against the two-layer image series (Tagg 1964 ch. 5;
    # Sunde 1968 sec. 2.5) to 1e-6.
    dz, dr, _ = _compare(multilayer(layers), Soil("two-layer", two[0], two[1], two[2]), relabel)
    assert dz < 1e-6 and abs(dr) < 1e-6


def test_deep_third_layer_tends_to_two_layers():
    # A third layer far below the grid matters less and less: the change in resistance falls
    # roughly as grid size over depth (point-source far field, Sunde 1968 sec. 2.6).
    two = Soil("two-layer", 300.0, 2.0, 60.0)
    changes = []
    for depth in (200.0, 2000.0):
        _, dr, _ = _compare(
            multilayer([(300.0, 2.0), (60.0, depth), (600.0, None)]), two, lambda lay: np.minimum(lay, 1), cond=GRID
        )
        changes.append(abs(dr))
    assert changes[1] == pytest.approx(changes[0] / 10, rel=0.3) and changes[1] < 5e-3


def test_surface_potential_of_three_layers_with_rho3_equal_rho2():
    # Surface potential (touch and step voltages come from it) against the two-layer image series.
    from groundcalc.surface.potential import surface_potential

    soil3 = multilayer([(300.0, 2.0), (60.0, 4.0), (60.0, None)])
    seg3 = segment_conductors(GRID + RODS, 3.0, interface_depth_m=soil3.interfaces_m).segments
    seg2 = replace(seg3, layer=np.minimum(seg3.layer, 1))
    s3 = solve(seg3, build_greens(soil3, seg3, 5.0))
    s2 = solve(seg2, build_greens(Soil("two-layer", 300.0, 2.0, 60.0), seg2, 5.0))
    xy = np.array([[x, y] for x in (-4.0, 0.3, 7.5, 15.0, 29.0, 34.0) for y in (-3.0, 0.0, 11.0, 15.2)])
    v3, v2 = surface_potential(xy, s3, 1.0), surface_potential(xy, s2, 1.0)
    assert np.abs(v3 / v2 - 1).max() < 1e-6


def test_thin_middle_layer_tends_to_two_layers():
    # A middle layer of vanishing thickness changes the resistance in proportion to its thickness
    # (first-order perturbation in the thickness; a limit check, no outside value).
    two = Soil("two-layer", 300.0, 2.0, 60.0)
    changes = []
    for th in (0.2, 0.04):
        _, dr, _ = _compare(
            multilayer([(300.0, 2.0), (20.0, th), (60.0, None)]), two, lambda lay: np.minimum(lay, 1), cond=SMALL
        )
        changes.append(abs(dr))
    assert changes[1] == pytest.approx(changes[0] / 5, rel=0.2) and changes[1] < 5e-3


def test_five_layers_with_repeated_resistivities_equal_three_layers():
    # Five layers whose neighbours repeat resistivities are the same soil as three layers: an
    # internal consistency check of the recursion at N = 5, on point potentials and on the matrix.
    p, q = _points(depth=12.0)
    five = Profile((300.0, 60.0, 60.0, 1000.0, 1000.0), (2.0, 1.5, 2.5, 3.0))
    three = Profile((300.0, 60.0, 1000.0), (2.0, 4.0))
    assert np.abs(point_potential(p, q, five) / point_potential(p, q, three) - 1).max() < 1e-9
    rod = [Rod("r", 0, 0, 0.5, 9.0, 0.016).as_conductor()]
    dz, dr, seg = _compare(
        multilayer(list(zip(five.rho, five.thickness + (None,), strict=True))),
        multilayer(list(zip(three.rho, three.thickness + (None,), strict=True))),
        lambda lay: np.array([0, 1, 1, 2, 2])[lay],
        cond=SMALL + rod,
    )
    assert set(seg.layer.tolist()) == {0, 1, 2, 3, 4}
    assert dz < 1e-6 and abs(dr) < 1e-6


def test_near_axis_rule_on_closed_form_pairs():
    # Gradshteyn and Ryzhik 6.611.1 and a two-exponential kernel, for r far below the decay length,
    # where the filter alone loses accuracy.
    from groundcalc.soil.hankel import hankel_j0_near_axis

    r = np.geomspace(1e-7, 0.05, 30)
    got = hankel_j0_near_axis(lambda lam: np.exp(-lam), r, np.ones_like(r))
    assert np.abs(got * np.sqrt(r * r + 1) - 1).max() < 1e-12
    got = hankel_j0_near_axis(lambda lam: np.exp(-2 * lam) - 0.3 * np.exp(-7 * lam), r, np.full_like(r, 2.0))
    ref = 1 / np.sqrt(r * r + 4) - 0.3 / np.sqrt(r * r + 49)
    assert np.abs(got / ref - 1).max() < 1e-12


def test_tail_tables_against_the_transform_evaluated_directly():
    # The tabulated remainders against the filter / near-axis rule at random points, relative to the
    # potential of a unit image at that distance: the stated table accuracy.
    soil = multilayer([(300.0, 2.0), (80.0, 8.0), (1000.0, None)])
    seg = segment_conductors(GRID + RODS, 3.0, interface_depth_m=soil.interfaces_m).segments
    g = build_greens(soil, seg, 5.0)
    rng = np.random.default_rng(0)
    worst = 0.0
    for tab in g.tail_tables[::3]:
        d, v = rng.uniform(0, tab.d_hi, 12), rng.uniform(tab.v_lo, tab.v_hi, 12)
        ref = np.array([tab.direct_grid(np.array([a]), np.array([b]))[0, 0] for a, b in zip(d, v, strict=True)])
        worst = max(worst, float(np.max(np.abs(tab(d, v) - ref) * np.sqrt(d * d + (v + tab.g) ** 2) / 300.0)))
    assert worst < 1e-6
