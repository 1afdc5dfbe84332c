"""Two-layer soil: limits, boundary conditions, reciprocity, Tagg's rod formula, and the
tabulated series against brute-force image summation."""

import numpy as np
import pytest
from scipy.integrate import quad

from groundcalc.analysis import analyse
from groundcalc.geometry.segments import move_off_interface, segment_conductors
from groundcalc.model import Conductor, GridSpec, Rod, Soil
from groundcalc.mom.assembly import assemble, build_greens, general_entries
from groundcalc.mom.operator import pair_integral
from groundcalc.mom.solver import Solution, solve
from groundcalc.soil.twolayer import point_potential
from groundcalc.surface.potential import surface_potential

from .conftest import make_design


def two_layer(rho1, rho2, h):
    return Soil("two-layer", rho1, h, rho2)


def k_soil(k, h, rho1=100.0):
    return two_layer(rho1, rho1 * (1 + k) / (1 - k), h)


def resistance(conductors, soil, seg_len):
    h = soil.thickness_m if soil.model == "two-layer" else None
    seg = segment_conductors(conductors, seg_len, interface_depth_m=h).segments
    return solve(seg, build_greens(soil, seg)).resistance_ohm


GRID = GridSpec("g", 0, 0, 30, 30, 4, 4, 0.5, 0.01).conductors()
RODS = [Rod(f"r{i}", x, y, 0.5, 6.0, 0.016).as_conductor() for i, (x, y) in enumerate([(0, 0), (30, 0), (15, 15)])]


def test_equal_resistivities_give_the_uniform_result():
    # rho1 = rho2 (K = 0): the two-layer machinery, with the segments split at H into both layers,
    # must equal uniform soil to 1e-9 (common practice). The same segments are used for both,
    # and the rods cross the "interface" so all four layer pairs occur.
    seg = segment_conductors(GRID + RODS, 2.0, interface_depth_m=2.0).segments
    assert set(seg.layer.tolist()) == {0, 1}
    ru = solve(seg, build_greens(Soil("uniform", 150.0), seg)).resistance_ohm
    r2 = solve(seg, build_greens(two_layer(150.0, 150.0, 2.0), seg)).resistance_ohm
    assert r2 == pytest.approx(ru, rel=1e-9)


def test_thick_upper_layer_tends_to_rho1():
    # H much larger than the grid: R -> R(rho1) (common practice). Far images of a compact grid act
    # like point sources at depths 2nH, so to first order R(H) - R(rho1) = rho1 ln(1/(1 - K)) / (2 pi H)
    # (sum_{n>=1} K^n / n = -ln(1 - K); image method, Tagg 1964): checked to 3 %.
    ru = resistance(GRID, Soil("uniform", 100.0), 2.0)
    k = 0.5
    for h in (300.0, 3000.0):
        r = resistance(GRID, two_layer(100.0, 300.0, h), 2.0)
        assert r - ru == pytest.approx(100.0 * np.log(1 / (1 - k)) / (2 * np.pi * h), rel=0.03)
    assert resistance(GRID, two_layer(100.0, 300.0, 3e5), 2.0) == pytest.approx(ru, rel=1e-4)


def test_thin_upper_layer_tends_to_rho2():
    # H tending to zero leaves the lower layer alone: R -> R(rho2) (common practice). The deviation
    # shrinks in proportion to H (a thin conductive skin), checked to 15 %.
    ru2 = resistance(GRID, Soil("uniform", 300.0), 2.0)
    hs = (0.3, 0.1, 0.03)
    dev = [resistance(GRID, two_layer(100.0, 300.0, h), 2.0) / ru2 - 1 for h in hs]
    slopes = [d / h for d, h in zip(dev, hs, strict=True)]
    assert all(d < 0 for d in dev)
    assert max(slopes) / min(slopes) < 1.15
    assert abs(dev[-1]) < 6e-3


@pytest.mark.parametrize("k", [0.9, -0.9, 0.5])
def test_potential_continuous_across_interface(k):
    # Boundary conditions at z = H (common practice): V continuous, and the normal current density
    # -(1/rho) dV/dz continuous. Sources in both layers, observers just above and just below.
    soil = k_soil(k, 2.0)
    h, eps = 2.0, 1e-6
    for src in ([0, 0, 0.7], [0, 0, 5.0]):
        q = np.array([src, src])
        for x in (0.3, 1.5, 7.0):
            at = point_potential(np.array([[x, 0, h - 1e-10], [x, 0, h + 1e-10]]), q, soil)
            assert at[0] == pytest.approx(at[1], rel=1e-8)
            above = point_potential(np.array([[x, 0, h - eps], [x, 0, h - 3 * eps]]), q, soil)
            below = point_potential(np.array([[x, 0, h + eps], [x, 0, h + 3 * eps]]), q, soil)
            grad_up = (above[0] - above[1]) / (2 * eps) / soil.rho1_ohm_m
            grad_dn = (below[1] - below[0]) / (2 * eps) / soil.rho2_ohm_m
            assert grad_up == pytest.approx(grad_dn, rel=2e-3, abs=1e-6 * abs(above[0]))


@pytest.mark.parametrize("k", [0.9, -0.9])
def test_reciprocity_of_point_potential_and_matrix(k):
    # Reciprocity (common practice): V at P from a unit source at Q equals V at Q from P, for every
    # layer combination; so the Galerkin matrix is symmetric.
    soil = k_soil(k, 2.0)
    pts = np.array([[0, 0, 0.5], [3, 1, 1.9], [1, 4, 2.5], [6, 2, 9.0]], float)
    for i in range(4):
        for j in range(4):
            if i != j:
                pq = point_potential(pts[[i]], pts[[j]], soil)
                qp = point_potential(pts[[j]], pts[[i]], soil)
                assert pq == pytest.approx(qp, rel=1e-12)
    seg = segment_conductors(GRID[:3] + RODS, 2.0, interface_depth_m=2.0).segments
    g = build_greens(soil, seg)
    n = len(seg)
    ii, jj = np.triu_indices(n, 1)
    assert np.allclose(general_entries(seg, g, ii, jj), general_entries(seg, g, jj, ii), rtol=1e-6)


def test_rod_in_upper_layer_against_tagg():
    # Tagg, Earth Resistances (1964): rod of length L from the surface wholly in the upper layer,
    # R = rho1/(2 pi L) [ln(4L/a) - 1 + sum_n K^n ln((2nH + L)/(2nH - L))];
    # L = 3 m, a = 8 mm, rho1 = 100, rho2 = 300, H = 5 m -> 35.75 ohm [calc] from that formula.
    # Tolerance 2 %: constant-current segments converge slowly at a rod's free end, where the
    # current crowds (common practice).
    k, h, length, a = 0.5, 5.0, 3.0, 0.008
    n = np.arange(1, 200)
    ref = (
        100
        / (2 * np.pi * length)
        * (np.log(4 * length / a) - 1 + np.sum(k**n * np.log((2 * n * h + length) / (2 * n * h - length))))
    )
    assert ref == pytest.approx(35.75, abs=0.01)
    rod = [Rod("r", 0, 0, 0, length, 2 * a).as_conductor()]
    r = resistance(rod, two_layer(100.0, 300.0, h), 0.5)
    assert r == pytest.approx(ref, rel=0.02)


def _brute_images(soil, lo, ls, n_max):
    """Every image of the three point-source formulas (Tagg 1964 ch. 5; Sunde 1968 sec. 2.5), written out."""
    r1, r2, h, k = soil.rho1_ohm_m, soil.rho2_ohm_m, soil.thickness_m, soil.reflection_k
    out = []
    if (lo, ls) == (0, 0):
        for n in range(-n_max, n_max + 1):
            w = r1 * k ** abs(n)
            out += [(w, 1, -2 * n * h), (w, -1, -2 * n * h)]
    elif lo != ls:
        for n in range(n_max + 1):
            w = r1 * (1 + k) * k**n
            out += [(w, 1, (-2 if lo == 1 else 2) * n * h), (w, -1, -2 * n * h)]
    else:
        out += [(r2, 1, 0.0), (-k * r2, -1, 2 * h)]
        out += [(r2 * (1 - k * k) * k**n, -1, -2 * n * h) for n in range(n_max + 1)]
    return out


def _brute_matrix(seg, soil, n_max):
    n = len(seg)
    ii, jj = np.triu_indices(n)
    vals = np.zeros(ii.size)
    for lo in (0, 1):
        for ls in (0, 1):
            sel = np.flatnonzero((seg.layer[ii] == lo) & (seg.layer[jj] == ls))
            if sel.size == 0:
                continue
            oi, sj = ii[sel], jj[sel]
            acc = np.zeros(sel.size)
            for w, s, t in _brute_images(soil, lo, ls, n_max):
                sa, sb = seg.a[sj].copy(), seg.b[sj].copy()
                sa[:, 2], sb[:, 2] = s * sa[:, 2] + t, s * sb[:, 2] + t
                acc += w * pair_integral(seg.a[oi], seg.b[oi], sa, sb, seg.radius[oi] * seg.radius[sj])
            vals[sel] = acc / (4 * np.pi * seg.length[oi] * seg.length[sj])
    z = np.zeros((n, n))
    z[ii, jj] = vals
    return z


@pytest.mark.parametrize("k,h", [(0.9, 2.0), (-0.9, 2.0), (0.9, 0.6), (-0.98, 3.0)])
def test_matrix_against_brute_force_images(k, h):
    # Every image summed explicitly with the closed-form segment integrals (n up to where
    # |K|^n < 1e-13 (1 - |K|)) against the tables and tails: entries within 1e-5, R within 1e-6.
    soil = k_soil(k, h)
    seg = segment_conductors(GRID + RODS, 2.0, interface_depth_m=h).segments
    z = assemble(seg, build_greens(soil, seg))
    n_max = int(np.log(1e-13 * (1 - abs(k))) / np.log(abs(k))) + 1
    zb = _brute_matrix(seg, soil, n_max)
    iu = np.triu_indices(len(seg))
    assert np.max(np.abs(z[iu] / zb[iu] - 1)) < 1e-5

    def r_of(m):
        full = np.triu(m) + np.triu(m, 1).T
        return 1 / np.linalg.solve(full, np.ones(len(seg))).sum()

    assert r_of(z) == pytest.approx(r_of(zb), rel=1e-6)


@pytest.mark.parametrize("k", [0.98, -0.98])
def test_surface_potential_against_quadrature_of_point_series(k):
    # Fixed leakage (0.1 A/m on a wire at 0.5 m, 0.2 A/m on a rod crossing the interface):
    # surface potential against scipy.integrate.quad of the directly summed point series.
    h = 2.0
    soil = k_soil(k, h)
    wire = Conductor("w", (0, 0, 0.5), (10, 0, 0.5), 1e-5)
    rod = Rod("r", 20, 0, 0.5, 4.0, 1e-5).as_conductor()
    seg = segment_conductors([wire, rod], 1.0, interface_depth_m=h).segments
    per_m = np.where(np.abs(seg.b[:, 2] - seg.a[:, 2]) > 0, 0.2, 0.1)
    sol = Solution(seg, 1.0, per_m * seg.length, build_greens(soil, seg, 20.0), "given")
    pts = np.array([[5.0, 0.3], [5.0, 3.0], [14.0, 1.0], [20.5, 0.0], [-30.0, 4.0]])
    v = surface_potential(pts, sol, 1.0)
    for p, vi in zip(pts, v, strict=True):

        def f_wire(t, p=p):
            return point_potential(np.array([[p[0], p[1], 0.0]]), np.array([[t, 0, 0.5]]), soil)[0]

        def f_rod(t, p=p):
            return point_potential(np.array([[p[0], p[1], 0.0]]), np.array([[20, 0, t]]), soil)[0]

        ref = 0.1 * quad(f_wire, 0, 10, limit=200, epsrel=1e-9)[0]
        ref += 0.2 * (quad(f_rod, 0.5, h, limit=200, epsrel=1e-9)[0] + quad(f_rod, h, 4.5, limit=200, epsrel=1e-9)[0])
        assert vi == pytest.approx(ref, rel=3e-5)  # far-field corrected mid-point rule: 2e-5


def test_conductor_on_the_interface_is_moved_and_reported():
    c = Conductor("on-H", (0, 0, 2.0), (10, 0, 2.0), 0.01)
    moved, notes = move_off_interface([c, RODS[0]], 2.0)
    assert moved[0].start[2] == pytest.approx(2.0 - 1e-4) and moved[1] == RODS[0]
    assert notes and "on-H" in notes[0].message and "0.1 mm" in notes[0].message
    d = make_design(conductors=[c], soil=two_layer(100, 300, 2.0), surface=None, segment=2.0)
    r = analyse(d)
    assert any(n.code == "moved-off-interface" for n in r.notices)

    def at(z):
        return analyse(
            make_design(conductors=[Conductor("b", (0, 0, z), (10, 0, z), 0.01)], soil=two_layer(100, 300, 2.0))
        )

    # The resistance is continuous in depth (the potential is continuous across the interface):
    # the same distance below gives nearly the same value, although a few radii either side the
    # thin wire's near field makes it change steeply (about 10 % over +-5 mm here).
    assert r.resistance_ohm == pytest.approx(at(2.0001).resistance_ohm, rel=5e-4)
    assert at(2.005).resistance_ohm > 1.05 * at(1.995).resistance_ohm


@pytest.mark.parametrize("k", [0.9, -0.9])
def test_two_layer_surface_between_zero_and_gpr(k):
    # maximum principle (common practice): 0 < V(surface) < GPR, touch and step positive
    d = make_design(grids=[GridSpec("g", 0, 0, 20, 20, 3, 3, 0.5, 0.01)], soil=k_soil(k, 3.0), segment=2.0)
    r = analyse(d)
    pot = r.field.raster.potential_per_gpr
    assert pot.max() < 1.0 and pot.min() > 0.0
    assert 0 < r.max_touch_v < r.gpr_v and r.max_step_v > 0
