"""End-to-end timing of IEEE Std 80 Annex B Example 1 (70 m x 70 m, 11 x 11, 1 m segments).

Prints how the time splits between reading the workbook, segmentation, matrix assembly,
the linear solve, the surface raster and the touch/step search, and the ratio of the whole
run to a bare scipy Cholesky factorisation of a random SPD matrix of the same size measured
in the same run (a machine-independent baseline).

Run:  python benchmarks/bench_pipeline.py
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import scipy.linalg

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from groundcalc.analysis import plan_lines  # noqa: E402
from groundcalc.geometry.footprint import compute_footprint  # noqa: E402
from groundcalc.geometry.segments import segment_conductors  # noqa: E402
from groundcalc.io.template import build_template  # noqa: E402
from groundcalc.io.workbook import read_design  # noqa: E402
from groundcalc.mom.assembly import assemble, build_greens  # noqa: E402
from groundcalc.mom.solver import Solution  # noqa: E402
from groundcalc.surface.potential import TouchArea, build_raster, find_max_step, find_max_touch, surface_potential  # noqa: E402


def annex_b1_workbook(path: Path) -> Path:
    wb = build_template()
    for row in wb["Soil"].iter_rows(min_row=2):
        row[1].value = {
            "Model": "uniform",
            "Upper resistivity [ohm*m]": 400,
            "Surface layer resistivity [ohm*m]": 2500,
            "Surface layer thickness [m]": 0.102,
        }.get(row[0].value)
    vals = {
        "Fault current [A]": 3180,
        "Split factor": 0.6,
        "X/R ratio": 0,
        "Fault duration [s]": 0.5,
        "Body weight [kg]": 70,
        "Frequency [Hz]": 60,
    }
    for row in wb["Fault"].iter_rows(min_row=2):
        row[1].value = vals.get(row[0].value)
    for row in wb["Settings"].iter_rows(min_row=2):
        row[1].value = {"Segment length [m]": 1.0, "Raster spacing [m]": 0.5}.get(row[0].value)
    wb["Grids"].append(["B1", 0, 0, 70, 70, 11, 11, 0.5, 10])
    wb.save(path)
    return path


def main() -> None:
    times: dict[str, float] = {}
    with tempfile.TemporaryDirectory() as tmp:
        path = annex_b1_workbook(Path(tmp) / "b1.xlsx")
        t = time.perf_counter()
        design = read_design(path)
        times["read workbook"] = time.perf_counter() - t
    t = time.perf_counter()
    seg = segment_conductors(design.all_conductors(), design.settings.segment_length_m)
    times["segmentation"] = time.perf_counter() - t
    t = time.perf_counter()
    images = build_greens(design.soil, seg.segments, design.settings.margin_m)
    z = assemble(seg.segments, images)
    times["assembly"] = time.perf_counter() - t
    n = z.shape[0]
    t = time.perf_counter()
    c = scipy.linalg.cho_factor(z, lower=False, overwrite_a=True, check_finite=False)
    cur = scipy.linalg.cho_solve(c, np.ones(n), check_finite=False)
    times["solve"] = time.perf_counter() - t
    sol = Solution(seg.segments, 1.0 / cur.sum(), cur, images, "Cholesky")
    t = time.perf_counter()
    lines = plan_lines(design)
    area = TouchArea(compute_footprint(lines), lines)
    raster = build_raster(sol, area, design.settings.raster_spacing_m, design.settings.margin_m)
    times["surface raster"] = time.perf_counter() - t
    t = time.perf_counter()
    find_max_touch(raster, lambda xy: surface_potential(xy, sol, 1.0))
    find_max_step(raster, lambda xy: surface_potential(xy, sol, 1.0))
    times["touch/step search"] = time.perf_counter() - t

    rng = np.random.default_rng(0)
    a = rng.standard_normal((n, n))
    spd = a @ a.T + n * np.eye(n)
    t = time.perf_counter()
    scipy.linalg.cho_factor(spd, overwrite_a=True, check_finite=False)
    base = time.perf_counter() - t

    total = sum(times.values())
    print(
        f"Annex B Example 1: {n} segments, raster {raster.x.size} x {raster.y.size}, Rg = {sol.resistance_ohm:.4f} ohm"
    )
    for k, v in times.items():
        print(f"  {k:<20s} {v:8.3f} s  {100 * v / total:5.1f} %")
    print(f"  {'total':<20s} {total:8.3f} s")
    print(
        f"baseline: bare Cholesky of a random {n} x {n} SPD matrix {base:.3f} s; total / baseline = {total / base:.1f}"
    )


if __name__ == "__main__":
    main()
