"""Convergence of a single rod and of IEEE Std 80 Annex B Example 2, and the cost of the error estimate.

Prints
- the error of a 3 m, 8 mm radius rod against the solid-cylinder reference (tests/data/rod-reference.json)
  at 1, 0.5 and 0.25 m, with equal segments and with graded free ends, and the observed orders;
- the Annex B Example 2 grid (70 m x 70 m, 11 x 11, 20 rods of 7.5 m) at 1 m and 0.5 m;
- the bundled example's run time with and without the discretisation-error estimate (CPU time, best of 3).

Run:  python benchmarks/bench_convergence.py
"""

from __future__ import annotations

import json
import math
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from groundcalc.analysis import analyse  # noqa: E402
from groundcalc.geometry.segments import segment_conductors  # noqa: E402
from groundcalc.io.workbook import read_design  # noqa: E402
from groundcalc.model import GridSpec, Rod, Soil  # noqa: E402
from groundcalc.mom.assembly import build_greens  # noqa: E402
from groundcalc.mom.solver import solve  # noqa: E402


def resistance(conductors, soil, h, seg_len, grading=True):
    seg = segment_conductors(conductors, seg_len, interface_depth_m=h, grading=grading).segments
    return solve(seg, build_greens(soil, seg)).resistance_ohm, len(seg)


def main() -> None:
    ref = json.loads((ROOT / "tests" / "data" / "rod-reference.json").read_text())
    rod = [Rod("r", 0, 0, 0, 3.0, 0.016).as_conductor()]
    cases = {"uniform": (Soil("uniform", 100.0), None), "two-layer": (Soil("two-layer", 300.0, 1.5, 60.0), 1.5)}
    for name, (soil, h) in cases.items():
        r0 = ref[name]["reference_ohm"]
        print(f"3 m rod, {name} soil, cylinder reference {r0:.5f} ohm")
        for grading in (False, True):
            errs = []
            for s in (1.0, 0.5, 0.25):
                r, n = resistance(rod, soil, h, s, grading)
                errs.append(r / r0 - 1)
                label = "graded" if grading else "equal "
                print(f"  {label} {s:5.2f} m  {n:3d} segments  {r:.5f} ohm  {100 * errs[-1]:+.3f} %")
            orders = [math.log2(errs[k] / errs[k + 1]) for k in range(2)]
            print(f"  observed order against the cylinder: {orders[0]:.2f}, {orders[1]:.2f}")
    grid = GridSpec("B2", 0, 0, 70, 70, 11, 11, 0.5, 0.01).conductors()
    pos = set()
    for k in range(6):
        t = 14.0 * k
        pos |= {(t, 0.0), (t, 70.0), (0.0, t), (70.0, t)}
    rods = [Rod(f"R{i}", x, y, 0.5, 7.5, 0.02).as_conductor() for i, (x, y) in enumerate(sorted(pos))]
    soil = Soil("uniform", 400.0)
    vals = []
    for s in (1.0, 0.5):
        t = time.perf_counter()
        r, n = resistance(grid + rods, soil, None, s)
        vals.append(r)
        print(f"Annex B Ex. 2 at {s} m: {n} segments, Rg = {r:.5f} ohm ({time.perf_counter() - t:.1f} s)")
    print(f"  change between 1 m and 0.5 m: {100 * (vals[0] / vals[1] - 1):+.3f} %")
    design = read_design(ROOT / "examples" / "kestrel-brook.xlsx")
    best = {}
    for est in (False, True, False, True):
        t = time.process_time()
        res = analyse(design, error_estimate=est)
        best[est] = min(best.get(est, 1e9), time.process_time() - t)
    est = res.discretisation
    print(
        f"Example: {best[False]:.2f} s without the estimate, {best[True]:.2f} s with it "
        f"(+{100 * (best[True] / best[False] - 1):.0f} %); estimate Rg {100 * est.resistance_rel:.2g} %, "
        f"touch {100 * est.touch_rel:.2g} %"
    )


if __name__ == "__main__":
    main()
