"""Three-layer soil against two-layer soil on the Kestrel Brook example.

The bundled example (examples/kestrel-brook.xlsx) is read and its soil replaced by a
two-layer model (300 ohm*m over 80 ohm*m below 2 m) and by three-layer models that add a
third layer (1000 ohm*m below 10 m, or 20 ohm*m below 6 m). Prints the time of the geometry
solve (Green's function and tables, assembly, Cholesky) and of the whole analysis (adding the
surface raster and touch/step search), each as a ratio to the two-layer run measured in the
same run. The two-layer model takes the image-series path; the three-layer models the
layer recursion with Hankel-transform tables, built once per run.

Run:  python benchmarks/bench_multilayer.py
"""

from __future__ import annotations

import sys
import time
from dataclasses import replace
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from groundcalc.analysis import solve_geometry, surface_field  # noqa: E402
from groundcalc.io.workbook import read_design  # noqa: E402
from groundcalc.model import Soil  # noqa: E402


def multilayer(layers) -> Soil:
    return Soil("multilayer", layers[0][0], layers[0][1], layers[1][0], layers=tuple(layers))


def timed(base, soil: Soil) -> tuple[float, float, float, int]:
    d = replace(base, soil=soil)
    t0 = time.perf_counter()
    geo = solve_geometry(d)
    t1 = time.perf_counter()
    surface_field(d, geo)
    t2 = time.perf_counter()
    return t1 - t0, t2 - t0, geo.solution.resistance_ohm, len(geo.solution.segments)


def main() -> None:
    base = read_design(ROOT / "examples" / "kestrel-brook.xlsx")
    cases = [
        ("two-layer 300/80, H = 2 m", Soil("two-layer", 300.0, 2.0, 80.0)),
        ("3 layers 300/80/1000 (2, 8 m)", multilayer([(300.0, 2.0), (80.0, 8.0), (1000.0, None)])),
        ("3 layers 300/80/20 (2, 4 m)", multilayer([(300.0, 2.0), (80.0, 4.0), (20.0, None)])),
    ]
    ref = None
    print("Kestrel Brook example")
    head = ("case", "solve [s]", "ratio", "all [s]", "ratio", "Rg [ohm]", "segments")
    print("  {:<32s} {:>9s} {:>6s} {:>8s} {:>6s} {:>9s} {:>8s}".format(*head))
    for name, soil in cases:
        ts, ta, r, n = timed(base, soil)
        if ref is None:
            ref = (ts, ta)
        print(f"  {name:<32s} {ts:9.2f} {ts / ref[0]:6.2f} {ta:8.2f} {ta / ref[1]:6.2f} {r:9.4f} {n:8d}")


if __name__ == "__main__":
    main()
