"""Coverage of the fitted soil-parameter intervals over repeated synthetic surveys.

Readings are drawn from a known two-layer model with known multiplicative
noise, fitted, and the 90 % Student t interval of each parameter
(:meth:`groundcalc.soil.fit_uncertainty.FitCovariance.interval`) is checked
for covering the true value. Prints the coverage rate per parameter and the
joint rate of the 90 % confidence ellipsoid (F distribution).

    python benchmarks/bench_fit_coverage.py [DRAWS] [NOISE]
"""

from __future__ import annotations

import sys
import time

import numpy as np
import scipy.stats

from groundcalc.model import WennerReadings
from groundcalc.soil.fit_uncertainty import fit_covariance
from groundcalc.soil.wenner import fit_soil, two_layer_wenner

SPACINGS = np.array([1, 2, 3, 5, 7.5, 10, 15, 20, 30, 50.0])
TRUE = np.array([100.0, 300.0, 6.1])  # rho1, rho2 [ohm*m], H [m]


def main(draws: int = 400, noise: float = 0.05, seed: int = 2) -> None:
    rng = np.random.default_rng(seed)
    exact = two_layer_wenner(SPACINGS, TRUE[0], TRUE[1], TRUE[2])
    hits = np.zeros(3)
    joint = 0
    t0 = time.perf_counter()
    for _ in range(draws):
        rho = exact * np.exp(noise * rng.standard_normal(SPACINGS.size))
        cov = fit_covariance(fit_soil(WennerReadings(tuple(SPACINGS), tuple(rho))))
        lo, hi = cov.interval(0.90)
        hits += (lo <= TRUE) & (TRUE <= hi)
        d = np.log(TRUE) - cov.log_mean
        q = float(d @ np.linalg.pinv(cov.cov) @ d) / 3.0
        joint += q <= scipy.stats.f.ppf(0.90, 3, cov.dof)
    sec = time.perf_counter() - t0
    se = np.sqrt(0.9 * 0.1 / draws)
    print(f"{draws} synthetic surveys, {SPACINGS.size} spacings, {100 * noise:g} % noise, {sec:.1f} s")
    for name, h in zip(("rho1", "rho2", "H"), hits, strict=True):
        print(f"  90 % interval of {name:4s} covers the true value in {100 * h / draws:5.1f} % (+/- {100 * se:.1f})")
    print(f"  90 % joint ellipsoid covers the true model in {100 * joint / draws:5.1f} %")


if __name__ == "__main__":
    main(*(int(sys.argv[1]),) if len(sys.argv) > 1 else (), *(float(sys.argv[2]),) if len(sys.argv) > 2 else ())
