"""Two-layer soil against uniform soil on the IEEE Std 80 Annex B Example 1 grid.

70 m x 70 m, 11 x 11 conductors at 0.5 m depth, 1 m segments; rho1 = 400 ohm*m over a
lower layer with K = +0.9 (rho2 = 7600) or K = -0.9 (rho2 = 21.05), for two upper-layer
thicknesses. Prints the time of the geometry solve (Green's function set-up, assembly and
Cholesky) and of the whole analysis (adding the surface raster and the touch/step search),
each as a ratio to the uniform-soil run of the same grid measured in the same run.

Run:  python benchmarks/bench_twolayer.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from groundcalc.analysis import solve_geometry, surface_field  # noqa: E402
from groundcalc.model import Design, Fault, GridSpec, Project, Settings, Soil, SurfaceLayer  # noqa: E402


def design(soil: Soil) -> Design:
    return Design(
        project=Project("bench"),
        soil=soil,
        surface_layer=SurfaceLayer(2500.0, 0.102),
        fault=Fault(3180.0, 0.6, 0.0, 0.5, 0.5, 70.0, 60.0),
        conductors=(),
        rods=(),
        grids=(GridSpec("B1", 0.0, 0.0, 70.0, 70.0, 11, 11, 0.5, 0.01),),
        settings=Settings(1.0, 0.5, 5.0),
    )


def timed(soil: Soil) -> tuple[float, float, float, int]:
    d = design(soil)
    t0 = time.perf_counter()
    geo = solve_geometry(d)
    t1 = time.perf_counter()
    surface_field(d, geo)
    t2 = time.perf_counter()
    return t1 - t0, t2 - t0, geo.solution.resistance_ohm, geo.solution.greens.terms


def main() -> None:
    rho1 = 400.0
    cases = [("uniform", Soil("uniform", rho1))]
    for h in (5.0, 1.0):
        for k in (0.9, -0.9):
            cases.append((f"K = {k:+.1f}, H = {h:g} m", Soil("two-layer", rho1, h, rho1 * (1 + k) / (1 - k))))
    base = None
    print("Annex B Example 1 grid, 1540 segments of 1 m")
    head = ("case", "solve [s]", "ratio", "all [s]", "ratio", "Rg [ohm]", "terms")
    print("  {:<22s} {:>9s} {:>6s} {:>8s} {:>6s} {:>9s} {:>6s}".format(*head))
    for name, soil in cases:
        ts, ta, r, terms = timed(soil)
        if base is None:
            base = (ts, ta)
        print(f"  {name:<22s} {ts:9.3f} {ts / base[0]:6.2f} {ta:8.3f} {ta / base[1]:6.2f} {r:9.4f} {terms:6d}")


if __name__ == "__main__":
    main()
