"""Run time of regular against unequally spaced grids of the same size, and a 100,000-segment grid.

Each line prints the whole run (segmentation, solve, surface raster, touch and step search;
no report) for a grid of 12 mm conductors 0.5 m deep with four 3 m corner rods and 1 m
segments, conductor positions either equally spaced or compressed toward the edges
(cosine spacing, common practice to even out mesh voltages), and the ratio
unequal / regular (same size, same soil) measured in the same run. Targets:

* 140 m grid, 29 x 29 conductors: ratio at most 1.5 in uniform soil, at most 2 in
  two-layer soil (300 / 50 ohm*m, H = 3 m);
* 200 m grid, 41 x 41 conductors: ratio at most 2;
* ``--large``: an unequally spaced 500 m x 400 m grid (101 x 81 conductors, 0.8 m segments,
  100 rods, 110,088 segments; ``--seg 1`` gives about 82,000) in two-layer soil:
  the whole run under 3 minutes and peak memory under 6 GiB, printed with the time of one
  complex FFT of the same number of points and one ``numpy.dot`` of two vectors of that
  length as a floor;
* ``--km``: an unequally spaced 1 km x 1 km grid (101 x 101 conductors, 1 m segments, 100 rods,
  211,544 segments) in the same soil, with the same floors (no target; its surface grid is
  coarsened to fit the memory cap);
* ``--sweep``: 24 unequal 140 m layouts (conductor counts 24 to 35 per side, uniform soil of
  100 and 200 ohm*m) side by side by ``groundcalc.compare``, which takes the same matrix-free path.

Run:  python benchmarks/bench_layouts.py [--large] [--km] [--sweep] [--only 140]
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from groundcalc.analysis import solve_geometry, surface_field  # noqa: E402
from groundcalc.model import Conductor, Design, Fault, Project, Settings, Soil, SurfaceLayer  # noqa: E402

UNIFORM = Soil("uniform", 100.0)
TWO_LAYER = Soil("two-layer", 300.0, 3.0, 50.0)


def positions(width: float, count: int, unequal: bool) -> np.ndarray:
    t = np.linspace(0.0, 1.0, count)
    if unequal:
        t = 0.7 * (0.5 - 0.5 * np.cos(np.pi * t)) + 0.3 * t
    return width * t


def conductors(width, height, nx, ny, unequal, rods=4, depth=0.5):
    xs, ys = positions(width, nx, unequal), positions(height, ny, unequal)
    c = [Conductor(f"x{i}", (x, 0.0, depth), (x, height, depth), 0.012) for i, x in enumerate(xs)]
    c += [Conductor(f"y{i}", (0.0, y, depth), (width, y, depth), 0.012) for i, y in enumerate(ys)]
    if rods == 4:
        spots = [(0.0, 0.0), (width, 0.0), (0.0, height), (width, height)]
    else:  # rods spread over the perimeter crossings
        per = np.linspace(0.0, 1.0, rods // 4 + 1)[:-1]
        spots = [(width * p, 0.0) for p in per] + [(width, height * p) for p in per]
        spots += [(width * (1 - p), height) for p in per] + [(0.0, height * (1 - p)) for p in per]
    for k, (x, y) in enumerate(spots):
        c.append(Conductor(f"r{k}", (x, y, depth), (x, y, depth + 3.0), 0.016, "rod"))
    return c


def design(cond, soil, seg_m=1.0):
    return Design(
        project=Project("Kestrel Brook layout benchmark"),
        soil=soil,
        surface_layer=SurfaceLayer(2500.0, 0.1),
        fault=Fault(3000.0, 0.6, 0.0, 0.5, 0.5, 70.0, 50.0),
        conductors=tuple(cond),
        rods=(),
        grids=(),
        settings=Settings(seg_m, None, 5.0),
    )


def whole_run(d: Design):
    t0 = time.perf_counter()
    geo = solve_geometry(d)
    t1 = time.perf_counter()
    field = surface_field(d, geo)
    t2 = time.perf_counter()
    sol = geo.solution
    return {
        "n": len(sol.segments),
        "total": t2 - t0,
        "solve": t1 - t0,
        "surface": t2 - t1,
        "rg": sol.resistance_ohm,
        "touch": field.touch.voltage_per_gpr,
        "step": field.step.voltage_per_gpr,
        "method": sol.method,
    }


def line(label, r):
    print(
        f"  {label:<30} n={r['n']:>6}  total {r['total']:7.1f} s  (solve {r['solve']:6.1f}, surface "
        f"{r['surface']:6.1f})  Rg {r['rg']:.5g} ohm  [{r['method']}]",
        flush=True,
    )


def pair(side, count, soil, name, target):
    reg = whole_run(design(conductors(side, side, count, count, False), soil))
    line(f"{side:.0f} m regular, {name}", reg)
    une = whole_run(design(conductors(side, side, count, count, True), soil))
    line(f"{side:.0f} m unequal, {name}", une)
    ratio = une["total"] / reg["total"]
    print(f"  ratio unequal / regular = {ratio:.2f}  (target <= {target})  {'ok' if ratio <= target else 'MISSED'}")


def peak_gib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**20


def large(seg_m: float, km: bool = False):
    if km:
        d = design(conductors(1000.0, 1000.0, 101, 101, True, rods=100), TWO_LAYER, 1.0)
        r = whole_run(d)
        line("1000 x 1000 m unequal, two-layer", r)
    else:
        d = design(conductors(500.0, 400.0, 101, 81, True, rods=100), TWO_LAYER, seg_m)
        r = whole_run(d)
        line("500 x 400 m unequal, two-layer", r)
    n = r["n"]
    x = np.random.default_rng(0).standard_normal(n) + 0j
    t = time.perf_counter()
    np.fft.fft(x)
    t_fft = time.perf_counter() - t
    v = np.random.default_rng(1).standard_normal(n)
    t = time.perf_counter()
    np.dot(v, v)
    t_dot = time.perf_counter() - t
    print(f"  floor: one FFT of {n} points {t_fft * 1e3:.2f} ms, numpy.dot of length {n} {t_dot * 1e3:.3f} ms")
    gib = peak_gib()
    if km:
        print(f"  whole run {r['total']:.1f} s; peak memory {gib:.2f} GiB")
        return
    print(
        f"  whole run {r['total']:.1f} s (target < 180 s) {'ok' if r['total'] < 180 else 'MISSED'}; "
        f"peak memory {gib:.2f} GiB (target < 6) {'ok' if gib < 6 else 'MISSED'}"
    )


def sweep():
    import groundcalc as gc

    designs = [
        design(conductors(140.0, 140.0, count, count, True), soil)
        for count in range(24, 36)
        for soil in (UNIFORM, Soil("uniform", 200.0))
    ]
    t0 = time.perf_counter()
    table = gc.compare(designs)
    t = time.perf_counter() - t0
    print(f"  24 unequal 140 m layouts by groundcalc.compare: {t:.1f} s in all, {t / 24:.1f} s per layout")
    print(f"  segments per layout {int(table['segment_count'].min())} to {int(table['segment_count'].max())}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--large", action="store_true", help="also the 500 m x 400 m grid")
    ap.add_argument("--km", action="store_true", help="a 1 km x 1 km grid instead (about 210,000 segments)")
    ap.add_argument("--sweep", action="store_true", help="also 24 unequal 140 m layouts")
    ap.add_argument("--only", choices=["140", "200", "none"], help="one size of pairs only")
    ap.add_argument("--seg", type=float, default=0.8, help="segment length of the large grid [m]")
    args = ap.parse_args()
    if args.only in (None, "140"):
        pair(140.0, 29, UNIFORM, "uniform", 1.5)
        pair(140.0, 29, TWO_LAYER, "two-layer", 2.0)
    if args.only in (None, "200"):
        pair(200.0, 41, UNIFORM, "uniform", 2.0)
        pair(200.0, 41, TWO_LAYER, "two-layer", 2.0)
    if args.large:
        large(args.seg)
    if args.km:
        large(args.seg, km=True)
    if args.sweep:
        sweep()


if __name__ == "__main__":
    main()
