"""Convergence of rods and rod-and-grid layouts against an independent solution of the solid cylinder.

The outside reference is tests/data/rod_reference.py: an axisymmetric boundary solution of the true
cylinder (lateral surface and bottom disc) with the ring-source kernel written with scipy's complete
elliptic integral, extrapolated in the panel count. It does not use groundcalc. It is itself checked
here against Dwight's formula (H. B. Dwight, "Calculation of resistances to ground", AIEE Trans. 55,
1936: R = rho/(2 pi L) [ln(4L/a) - 1]) and against Tagg's image-series formula for a rod in the upper
layer (G. F. Tagg, Earth Resistances, 1964; the value is [calc] from that formula, docs/references.md).
"""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import pytest

from groundcalc.geometry.segments import segment_conductors
from groundcalc.model import GridSpec, Rod, Soil
from groundcalc.mom.assembly import build_greens
from groundcalc.mom.convergence import richardson_error
from groundcalc.mom.solver import solve

DATA = Path(__file__).resolve().parent / "data"
sys.path.insert(0, str(DATA))
import rod_reference  # noqa: E402

REF = json.loads((DATA / "rod-reference.json").read_text())
SOILS = {
    "uniform": (Soil("uniform", 100.0), None),
    "two-layer": (Soil("two-layer", 300.0, 1.5, 60.0), 1.5),
}
ROD = Rod("r", 0.0, 0.0, 0.0, 3.0, 0.016).as_conductor()  # 3 m, 8 mm radius, top at grade


def rod_resistance(case: str, seg_len: float, **kw) -> float:
    soil, h = SOILS[case]
    seg = segment_conductors([ROD], seg_len, interface_depth_m=h, **kw).segments
    return solve(seg, build_greens(soil, seg)).resistance_ohm


def dwight(rho, length, a):
    return rho / (2 * np.pi * length) * (np.log(4 * length / a) - 1)


def test_cylinder_reference_converges_and_sits_below_dwight():
    # The reference converges monotonically from above (order about 2.6 from three levels) and lies
    # about 0.9 % below Dwight's 33.49 ohm ([calc] from Dwight 1936; a converged thin-wire method of
    # moments sitting about 1 % below Dwight is common practice [mem]).
    u = REF["uniform"]
    vals = u["values_ohm"]
    assert vals[0] > vals[1] > vals[2] > u["reference_ohm"]
    assert u["observed_order"] > 2.0
    assert abs(vals[2] - u["reference_ohm"]) / u["reference_ohm"] < 1e-5
    below = 1.0 - u["reference_ohm"] / dwight(100.0, 3.0, 0.008)
    assert 0.006 < below < 0.012
    # recomputed here at a coarse level: agrees with the stored limit to 1e-4 (the script is current)
    assert rod_reference.resistance(3.0, 0.008, (100.0,), 20) == pytest.approx(u["reference_ohm"], rel=1e-4)


def test_two_layer_reference_converges_and_matches_tagg_in_the_upper_layer():
    t = REF["two-layer"]
    assert t["values_ohm"][0] > t["values_ohm"][1] > t["values_ohm"][2] > t["reference_ohm"]
    assert t["observed_order"] > 2.0
    # Tagg's series for a rod wholly in the upper layer (rho1 = 100, rho2 = 300, H = 5 m): 35.75 ohm [calc]
    # from Tagg 1964. Like Dwight's formula it is an approximation a little above the cylinder (0.6 % here,
    # against 0.9 % for Dwight in uniform soil).
    k = (300 - 100) / 400
    tagg = (
        100
        / (2 * np.pi * 3)
        * (np.log(12 / 0.008) - 1 + sum(k**n * np.log((10 * n + 3) / (10 * n - 3)) for n in range(1, 200)))
    )
    assert tagg == pytest.approx(35.75, abs=0.01)
    up = REF["upper-layer"]["reference_ohm"]
    assert 0.003 < 1.0 - up / tagg < 0.012


def test_two_layer_reference_kernel_reduces_to_uniform_soil():
    # K = 0 (rho1 = rho2): the image series is the uniform half-space (common practice); same panels.
    pan = rod_reference.panels(3.0, 0.008, (100.0, 100.0, 1.5), 12)
    orig = rod_reference.panels
    try:
        rod_reference.panels = lambda *a, **k: pan
        r_two = rod_reference.resistance(3.0, 0.008, (100.0, 100.0, 1.5), 12)
        r_one = rod_reference.resistance(3.0, 0.008, (100.0,), 12)
    finally:
        rod_reference.panels = orig
    assert r_two == pytest.approx(r_one, rel=1e-12)


@pytest.mark.parametrize("case", ["uniform", "two-layer"])
@pytest.mark.parametrize("seg_len", [1.0, 0.5, 0.25])
def test_rod_within_0p15_percent_of_the_cylinder(case, seg_len):
    # Target: within 0.15 % at the default 1 m segments (measured 0.065 % uniform, 0.102 % two-layer).
    ref = REF[case]["reference_ohm"]
    r = rod_resistance(case, seg_len)
    assert abs(r / ref - 1.0) < 1.5e-3
    assert r > ref  # the thin-wire Galerkin result stays above the solid cylinder at these tips


@pytest.mark.parametrize("case", ["uniform", "two-layer"])
def test_equal_segments_converge_slowly_at_the_free_end(case):
    # Equal segments: 0.56 % (uniform) and 0.78 % (two-layer) high at 1 m, and the error falls only as about
    # h^0.5 (order from 1 / 0.5 / 0.25 m against the cylinder below 0.7). Grading is what fixes it.
    ref = REF[case]["reference_ohm"]
    errs = [rod_resistance(case, h, grading=False) / ref - 1.0 for h in (1.0, 0.5, 0.25)]
    assert errs[0] > 4e-3
    order = math.log2(errs[1] / errs[2])
    assert 0.2 < order < 0.7
    assert rod_resistance(case, 1.0) / ref - 1.0 < errs[0] / 4


@pytest.mark.parametrize("case", ["uniform", "two-layer"])
def test_rod_error_falls_with_the_tip_length(case):
    # The remaining error is set by the free-end segment: halving the tip (12 -> 6 -> 3 radii) cuts the
    # error against the cylinder by a factor of 1.5 or more each time (measured order 0.6-0.9); refining the
    # rest (1 m -> 0.25 m) moves the result by less than 1e-4.
    ref = REF[case]["reference_ohm"]
    errs = [rod_resistance(case, 1.0, tip_radii=t) / ref - 1.0 for t in (12.0, 6.0, 3.0)]
    assert errs[0] / errs[1] > 1.5 and errs[1] / errs[2] > 1.5
    assert abs(rod_resistance(case, 0.25) / rod_resistance(case, 1.0) - 1.0) < 1e-4


GRID = GridSpec("G", 0.0, 0.0, 20.0, 20.0, 3, 3, 0.5, 0.01).conductors()
CORNER_RODS = [
    Rod(f"R{i}", x, y, 0.5, 3.0, 0.016).as_conductor() for i, (x, y) in enumerate([(0, 0), (20, 0), (0, 20), (20, 20)])
]


def grid_sequence(case, lengths=(2.0, 1.0, 0.5)):
    soil, h = SOILS[case]
    out = []
    for s in lengths:
        seg = segment_conductors(GRID + CORNER_RODS, s, interface_depth_m=h).segments
        out.append(solve(seg, build_greens(soil, seg)).resistance_ohm)
    return out


def test_rod_and_grid_converges_at_least_as_h_in_uniform_soil():
    # Observed order from three levels (observed order of accuracy, P. J. Roache,
    # Verification and Validation in Computational Science and Engineering, 1998 [mem]): at least 1,
    # so the error against the extrapolated reference at least halves per halving (measured 1.2).
    r2, r1, r05 = grid_sequence("uniform")
    order = math.log2((r2 - r1) / (r1 - r05))
    assert order >= 1.0
    limit = r05 + (r05 - r1) / (2**order - 1)
    e2, e1, e05 = (r - limit for r in (r2, r1, r05))
    assert e1 <= e2 / 2 and e05 <= e1 / 2
    # and the two-level estimate of the 1 m result (order 1 assumed) is not an underestimate
    assert richardson_error(r1, r2) >= abs(r1 / limit - 1)


def test_rod_and_grid_converges_at_least_as_h_in_two_layer_soil():
    # Same fit in two-layer soil, where the rods cross the interface. From 2 / 1 / 0.5 m the observed order
    # is 0.87 (not yet asymptotic); from 1 / 0.5 / 0.25 m it is 1.36.
    r1, r05, r025 = grid_sequence("two-layer", (1.0, 0.5, 0.25))
    assert math.log2((r1 - r05) / (r05 - r025)) >= 1.0
