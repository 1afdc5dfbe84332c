"""Independent reference: resistance of a driven rod as a solid cylinder, by an axisymmetric boundary solution.

This does not use groundcalc. The rod is the true cylinder (radius a, length L,
flat bottom end) with its top at grade; the insulating surface is replaced by the
mirror image, so the conductor is a cylinder of length 2L in full space (uniform
soil) or the image series of a two-layer soil. The unknown is the leakage current
density on the lateral surface and on the bottom disc, constant on each panel;
the potential of a ring of current is written with the complete elliptic
integral of the first kind (scipy.special.ellipk/ellipkm1) and the panel
integrals are done by Gauss-Legendre rules, with a cubic change of variable on
either side of the singular point of the panel's own integral. Panels are graded
geometrically toward the edge of the bottom disc (where the density is singular)
and toward the layer interface. The potential is matched at panel mid points
(collocation) and the result is extrapolated in the panel count (Richardson, order
fitted from three levels).

References
----------
- Potential of a ring source: W. R. Smythe, *Static and Dynamic Electricity*,
  3rd ed., McGraw-Hill, 1968, sec. 5.24 (from memory): V = q/(4 pi eps) *
  2 K(m) / (pi sqrt((r + r')^2 + (z - z')^2)), m = 4 r r' / ((r + r')^2 + (z - z')^2).
- Two-layer point-source images: E. D. Sunde, *Earth Conduction Effects in
  Transmission Systems*, Dover, 1968, ch. 2; G. F. Tagg, *Earth Resistances*, 1964.
- Dwight's formula as the outside anchor: H. B. Dwight, AIEE Trans. 55, 1936.

Run from the repository root: ``python tests/data/rod_reference.py [case ...]`` writes
``tests/data/rod-reference.json`` (a few minutes).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
from scipy.special import ellipk, ellipkm1

HERE = Path(__file__).resolve().parent


def ring_kernel(r, rs, u):
    """2 K(m) / (pi sqrt((r + r')^2 + u^2)): the ring's 1/distance (point limit 1/sqrt(r'^2 + u^2))."""
    s = (r + rs) ** 2 + u * u
    p = ((r - rs) ** 2 + u * u) / s  # 1 - m
    k = np.where(p < 0.5, ellipkm1(np.maximum(p, 1e-300)), ellipk(1.0 - p))
    return 2.0 * k / (np.pi * np.sqrt(s))


def image_terms(soil, obs_layer, src_layer, tol=1e-12):
    """Point images for an observer and a source in the given layers (0 upper, 1 lower).

    Returns (weight [ohm*m], so, ss, c) with the vertical offset u = so z + ss z' + c, from the
    image series of Sunde (1968) ch. 2; ``soil`` is (rho1, rho2, H) or (rho,) for uniform soil.
    """
    if len(soil) == 1:
        return [(soil[0], 1, -1, 0.0), (soil[0], 1, 1, 0.0)]
    rho1, rho2, h = soil
    k = (rho2 - rho1) / (rho2 + rho1)
    nmax = 0 if k == 0 else int(math.log(tol) / math.log(abs(k))) + 2
    out = []
    if obs_layer == 0 and src_layer == 0:
        for n in range(-nmax, nmax + 1):
            w = rho1 * k ** abs(n)
            out += [(w, 1, -1, 2 * n * h), (w, 1, 1, 2 * n * h)]
    elif obs_layer != src_layer:
        so = 1 if obs_layer == 1 else -1  # deep minus shallow
        for n in range(nmax + 1):
            w = rho1 * (1 + k) * k**n
            out += [(w, so, -so, 2 * n * h), (w, 1, 1, 2 * n * h)]
    else:
        out += [(rho2, 1, -1, 0.0), (-k * rho2, 1, 1, -2 * h)]
        for n in range(nmax + 1):
            out.append((rho2 * (1 - k * k) * k**n, 1, 1, 2 * n * h))
    return out


def graded(lo, hi, n, toward, power=2.0):
    """n panels on [lo, hi], power-graded (edges ~ (i/n)^power) toward 'lo', 'hi', 'both' or None."""
    if toward is None:
        return np.linspace(lo, hi, n + 1)
    if toward == "both":
        m = n // 2
        left = graded(lo, 0.5 * (lo + hi), m, "lo", power)
        right = graded(0.5 * (lo + hi), hi, n - m, "hi", power)
        return np.concatenate([left, right[1:]])
    e = (np.arange(n + 1) / n) ** power
    t = e if toward == "lo" else 1.0 - e[::-1]
    return lo + (hi - lo) * t


def panels(length, radius, soil, n):
    """Panel list: arrays (r0, z0, r1, z1) of straight generator pieces."""
    pieces = []
    if len(soil) == 3 and 0 < soil[2] < length:
        h = soil[2]
        nu = max(4, int(n * h / length))
        zu = graded(0.0, h, nu, "hi")
        zl = graded(h, length, max(4, n - nu), "both")
        zz = np.concatenate([zu, zl[1:]])
    else:
        zz = graded(0.0, length, n, "hi")
    for a, b in zip(zz[:-1], zz[1:], strict=True):
        pieces.append((radius, a, radius, b))
    rr = graded(0.0, radius, max(6, n // 4), "hi")
    for a, b in zip(rr[:-1], rr[1:], strict=True):
        pieces.append((a, length, b, length))
    return np.array(pieces)


def resistance(length, radius, soil, n, gauss=8, near_gauss=24):
    """Resistance of the cylinder by collocation with ``n`` lateral panels. [ohm]"""
    p = panels(length, radius, soil, n)
    m = p.shape[0]
    mid_r = 0.5 * (p[:, 0] + p[:, 2])
    mid_z = 0.5 * (p[:, 1] + p[:, 3])
    plen = np.hypot(p[:, 2] - p[:, 0], p[:, 3] - p[:, 1])
    x, w = np.polynomial.legendre.leggauss(gauss)
    t_far, w_far = 0.5 * (x + 1), 0.5 * w
    xn, wn = np.polynomial.legendre.leggauss(near_gauss)
    # cubic clustering toward the singular end on each side of the collocation point
    tn = 0.5 * (xn + 1)
    s_n, w_n = tn**3, 3 * tn**2 * 0.5 * wn
    a_mat = np.zeros((m, m))
    for j in range(m):
        r0, z0, r1, z1 = p[j]
        # quadrature points on panel j as parameters in [0, 1]; near rows use a split rule
        near = np.hypot(mid_r - mid_r[j], mid_z - mid_z[j]) < 3.0 * max(plen[j], 1e-300) + 2 * radius
        for rows, tq, wq in ((np.flatnonzero(~near), t_far, w_far), (np.flatnonzero(near), None, None)):
            if rows.size == 0:
                continue
            if tq is None:
                vals = np.zeros(rows.size)
                for k, i in enumerate(rows):
                    # split panel j at the projection of the observer point (or keep whole)
                    c = _project(p[j], mid_r[i], mid_z[i])
                    tt = np.concatenate([c - c * s_n, c + (1 - c) * s_n])
                    ww = np.concatenate([c * w_n, (1 - c) * w_n])
                    vals[k] = _panel_sum(p[j], plen[j], mid_r[i : i + 1], mid_z[i : i + 1], tt, ww, soil)[0]
                a_mat[rows, j] = vals
            else:
                a_mat[rows, j] = _panel_sum(p[j], plen[j], mid_r[rows], mid_z[rows], tq, wq, soil)
    sigma = np.linalg.solve(a_mat, np.ones(m))
    # panel areas (the disc panels are annuli)
    area = np.pi * (p[:, 0] + p[:, 2]) * plen
    return 1.0 / float(sigma @ area)


def _project(pan, r, z):
    r0, z0, r1, z1 = pan
    d = np.array([r1 - r0, z1 - z0])
    t = ((r - r0) * d[0] + (z - z0) * d[1]) / float(d @ d)
    return float(np.clip(t, 0.0, 1.0))


def _panel_sum(pan, plen, ro, zo, tq, wq, soil):
    """Potential at (ro, zo) of unit current density on the panel (current = density * area)."""
    r0, z0, r1, z1 = pan
    rs = r0 + tq * (r1 - r0)
    zs = z0 + tq * (z1 - z0)
    src_layer = int(_layer(0.5 * (z0 + z1), soil))
    lay_o = _layer(zo, soil)
    out = np.zeros(ro.size)
    for lay in np.unique(lay_o):
        sel = lay_o == lay
        acc = np.zeros((int(sel.sum()), tq.size))
        for wt, so, ss, c in image_terms(soil, int(lay), src_layer):
            u = so * zo[sel, None] + ss * zs[None, :] + c
            acc += wt * ring_kernel(ro[sel, None], rs[None, :], u)
        ring_current = 2 * np.pi * rs * plen * wq
        out[sel] = acc @ ring_current / (4 * np.pi)
    return out


def _layer(z, soil):
    if len(soil) == 1:
        return np.zeros(np.shape(z), dtype=int)
    return (np.asarray(z) >= soil[2]).astype(int)


def extrapolate(levels: list[int], values: list[float]) -> tuple[float, float]:
    """Richardson extrapolation from three levels with doubling; returns (limit, observed order)."""
    r1, r2, r3 = values
    order = math.log(abs((r1 - r2) / (r2 - r3))) / math.log(levels[1] / levels[0])
    return r3 + (r3 - r2) / (2**order - 1), order


CASES = {
    "uniform": {"length_m": 3.0, "radius_m": 0.008, "soil": (100.0,)},
    "two-layer": {"length_m": 3.0, "radius_m": 0.008, "soil": (300.0, 60.0, 1.5)},
    # wholly inside the upper layer: the case of Tagg's image-series formula (G. F. Tagg, Earth Resistances, 1964)
    "upper-layer": {"length_m": 3.0, "radius_m": 0.008, "soil": (100.0, 300.0, 5.0)},
}

if __name__ == "__main__":
    import sys

    path = HERE / "rod-reference.json"
    out = json.loads(path.read_text()) if path.exists() else {}
    for name, case in CASES.items():
        if len(sys.argv) > 1 and name not in sys.argv[1:]:
            continue
        levels = [40, 80, 160]
        vals = [resistance(case["length_m"], case["radius_m"], case["soil"], n) for n in levels]
        lim, order = extrapolate(levels, vals)
        out[name] = {**case, "levels": levels, "values_ohm": vals, "reference_ohm": lim, "observed_order": order}
        print(name, vals, lim, order)
    path.write_text(json.dumps(out, indent=2) + "\n")
