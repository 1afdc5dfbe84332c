"""Run time of the uncertainty study against the number of samples and of geometry solves.

Two cases on the Kestrel Brook demo (examples/kestrel-brook-uncertainty.xlsx):

1. the fault-side ranges of its Uncertainty sheet only: every sample reuses the deterministic solve;
2. the soil fitted to synthetic Wenner readings (4 % noise) of a two-layer model: one solve per sample
   (segment length SEGMENT m to keep the benchmark short).

    python benchmarks/bench_uncertainty.py [SAMPLES_FAULT] [SAMPLES_SOIL] [SEGMENT]
"""

from __future__ import annotations

import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

from groundcalc.io.uncertainty import read_uncertainty
from groundcalc.io.workbook import read_design
from groundcalc.model import Soil, WennerReadings
from groundcalc.soil.wenner import two_layer_wenner
from groundcalc.studies.uncertainty import run_uncertainty

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "kestrel-brook-uncertainty.xlsx"


def main(n_fault: int = 64, n_soil: int = 8, segment_m: float = 3.0) -> None:
    design = read_design(EXAMPLE)
    quantities, _ = read_uncertainty(EXAMPLE, design)
    for n in (n_fault // 4, n_fault):
        t0 = time.perf_counter()
        run = run_uncertainty(design, quantities, samples=n)
        touch = run.cases[0].band("max touch")
        print(
            f"fault-side ranges: {n:4d} samples, {run.solves} geometry solve(s), {time.perf_counter() - t0:7.1f} s "
            f"(deterministic {run.timings['deterministic']:.1f} s); max touch P5/P50/P95 "
            f"{touch.p5:.0f}/{touch.p50:.0f}/{touch.p95:.0f} V (deterministic {touch.deterministic:.0f} V)"
        )
    a = np.array([1, 2, 3, 5, 7.5, 10, 15, 20, 30, 40.0])
    rho = two_layer_wenner(a, 120.0, 300.0, 3.0) * np.exp(0.04 * np.random.default_rng(1).standard_normal(a.size))
    fitted = replace(
        design,
        soil=Soil("fitted", float("nan")),
        wenner=WennerReadings(tuple(a), tuple(rho)),
        settings=replace(design.settings, segment_length_m=segment_m),
    )
    t0 = time.perf_counter()
    run = run_uncertainty(fitted, quantities, samples=n_soil)
    sec = time.perf_counter() - t0
    touch = run.cases[0].band("max touch")
    print(
        f"fitted soil + ranges: {n_soil:4d} samples, {run.solves} geometry solve(s), {sec:7.1f} s "
        f"({run.timings['sample_solves'] / max(run.solves - 1, 1):.2f} s per sample solve, {segment_m:g} m segments); "
        f"max touch P5/P50/P95 {touch.p5:.0f}/{touch.p50:.0f}/{touch.p95:.0f} V (deterministic "
        f"{touch.deterministic:.0f} V); P(touch > limit) {100 * run.cases[0].exceedance[0].probability:.0f} %"
    )


if __name__ == "__main__":
    args = sys.argv[1:]
    main(*(int(args[0]),) if args else (), *(int(args[1]),) if len(args) > 1 else (),
         *(float(args[2]),) if len(args) > 2 else ())  # fmt: skip
