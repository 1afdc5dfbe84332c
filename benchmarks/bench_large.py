"""Large-grid speed targets, each as a ratio to a baseline measured in the same run.

1. Uniform soil, 100 m x 100 m grid, 5 m mesh, 1 m segments (about 4,200 segments):
   assembly plus solve against a bare scipy Cholesky factorisation of a random symmetric
   positive definite matrix of the same size (target: 3 or less).
2. Two-layer soil, K = +0.9 and K = -0.9, same grid: assembly plus solve against the
   uniform-soil time (target: 3 or less).
3. Surface potential at 100,000 points against the same grid: against numpy.log1p over the
   same number of point-segment pairs (target: 3 or less).
4. Scale: about 20,000 segments (200 m x 200 m, 5 m mesh, 0.85 m segments) in uniform soil:
   time and peak memory (target: within 16 GiB), and which linear solver was used.

Run:  python benchmarks/bench_large.py           (all; about a minute and 4 GiB)
      python benchmarks/bench_large.py --quick   (targets 1 to 3 only)
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
from pathlib import Path

import numpy as np
import scipy.linalg

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from groundcalc.geometry.segments import segment_conductors  # noqa: E402
from groundcalc.model import GridSpec, Soil  # noqa: E402
from groundcalc.mom.assembly import AssemblyStats, assemble, build_greens  # noqa: E402
from groundcalc.mom.solver import solve  # noqa: E402
from groundcalc.surface.potential import surface_potential  # noqa: E402


def grid_segments(side_m: float, count: int, seg_m: float):
    g = GridSpec("G", 0.0, 0.0, side_m, side_m, count, count, 0.5, 0.01)
    return segment_conductors(g.conductors(), seg_m).segments


def timed(fn, *args, repeat: int = 1):
    best = np.inf
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn(*args)
        best = min(best, time.perf_counter() - t)
    return best, out


def cholesky_baseline(n: int) -> float:
    rng = np.random.default_rng(0)
    a = rng.standard_normal((n, n))
    spd = a @ a.T + n * np.eye(n)
    t, _ = timed(
        lambda: scipy.linalg.cho_factor(spd.copy(), lower=False, overwrite_a=True, check_finite=False), repeat=3
    )
    return t


def assemble_and_solve(soil: Soil, seg):
    greens = build_greens(soil, seg, 5.0)
    return solve(seg, greens)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--quick", action="store_true", help="skip the 20,000-segment run")
    args = parser.parse_args()

    seg = grid_segments(100.0, 21, 1.0)
    n = len(seg)
    base = cholesky_baseline(n)
    t_u, sol_u = timed(assemble_and_solve, Soil("uniform", 100.0), seg, repeat=3)
    stats = AssemblyStats()
    t_asm, _ = timed(lambda: assemble(seg, build_greens(Soil("uniform", 100.0), seg), stats))
    print(f"[1] uniform, {n} segments: assembly + solve {t_u:.2f} s (assembly {t_asm:.2f} s, {sol_u.method});")
    print(f"    bare Cholesky of a random SPD {n} x {n}: {base:.2f} s  ->  ratio {t_u / base:.2f} (target <= 3)")
    print(
        f"    assembly evaluated {stats.evaluated:,} of {stats.pairs:,} pairs ({stats.method}); "
        f"Rg = {sol_u.resistance_ohm:.5f} ohm"
    )

    for label, soil in (
        ("K = +0.9", Soil("two-layer", 100.0, 3.0, 1900.0)),
        ("K = -0.9", Soil("two-layer", 1900.0, 3.0, 100.0)),
    ):
        t2, sol2 = timed(assemble_and_solve, soil, seg, repeat=2)
        print(
            f"[2] two-layer {label}: {t2:.2f} s  ->  ratio to uniform {t2 / t_u:.2f} (target <= 3); "
            f"Rg = {sol2.resistance_ohm:.5f} ohm"
        )

    rng = np.random.default_rng(1)
    pts = np.column_stack([rng.uniform(-5.0, 105.0, 100_000), rng.uniform(-5.0, 105.0, 100_000)])
    t_s, _ = timed(surface_potential, pts, sol_u, 1.0)
    x = rng.uniform(0.0, 1.0, 10_000_000)
    t_l, _ = timed(np.log1p, x, repeat=3)
    t_floor = t_l / x.size * pts.shape[0] * n
    print(f"[3] surface, 100,000 points x {n} segments: {t_s:.2f} s; log1p over as many pairs {t_floor:.2f} s")
    print(f"    ->  ratio {t_s / t_floor:.2f} (target <= 3)")

    if args.quick:
        return
    big = grid_segments(200.0, 41, 0.85)
    t_b, sol_b = timed(assemble_and_solve, Soil("uniform", 100.0), big)
    peak_gib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**20
    print(f"[4] uniform, {len(big)} segments: assembly + solve {t_b:.1f} s with {sol_b.method};")
    print(f"    peak memory {peak_gib:.1f} GiB (target <= 16); Rg = {sol_b.resistance_ohm:.5f} ohm")


if __name__ == "__main__":
    main()
