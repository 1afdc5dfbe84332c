"""Two-layer soil: image series of the point-source potential.

Upper layer resistivity rho1 and thickness H over a lower layer rho2 of
infinite depth, K = (rho2 - rho1) / (rho2 + rho1). For a point current I at
depth z' and an observer at depth z, horizontal distance d, r(u) =
sqrt(d^2 + u^2):

* both in the upper layer:
  ``V = rho1 I/(4 pi) sum_{n=-inf..inf} K^|n| [1/r(z - z' + 2nH) + 1/r(z + z' + 2nH)]``
* one in each layer (z the deeper point; symmetric by reciprocity):
  ``V = rho1 (1 + K) I/(4 pi) sum_{n>=0} K^n [1/r(z - z' + 2nH) + 1/r(z + z' + 2nH)]``
* both in the lower layer:
  ``V = rho2 I/(4 pi) [1/r(z - z') - K/r(z + z' - 2H) + (1 - K^2) sum_{n>=0} K^n / r(z + z' + 2nH)]``

Each series is split into *families* of images whose depth moves by 2H per
term. The images of a family that come within the near distance of some
observer are kept as explicit images (integrated exactly over segments); the
rest form a tail ``w T(d, v)`` that is smooth where it is used (see
:mod:`groundcalc.soil.greens`) and is summed to a tolerance with a rigorous bound
(:mod:`groundcalc.soil.tables`).

References
----------
.. [1] G. F. Tagg, *Earth Resistances*, Newnes, 1964, ch. 5 (image series of
   two-layer soil).
.. [2] E. D. Sunde, *Earth Conduction Effects in Transmission Systems*, Dover,
   1968, sec. 2.5.
.. [3] IEEE Std 80-2000, clause 13 (two-layer soil model), for the
   definition of K (from memory; IEEE Std 80-2013 treats it in Annex E).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np

from ..model import Soil
from .greens import SURFACE, DepthRanges, Image, KernelLookup, RadialPart, Tail
from .greens import PairKernel as _PairKernel
from .tables import RadialSums, TailTable, series_sums

__all__ = [
    "MAX_EXPLICIT",
    "TwoLayerGreens",
    "point_potential",
    "two_layer_greens",
]

#: Largest number of explicit images per family (very thin layers stop here).
MAX_EXPLICIT = 128
#: Horizontal segments at more distinct depths than this use the general path.
MAX_DEPTH_GROUPS = 6


def _depth_key(z: float) -> float:
    """Depth rounded to a nanometre for use as a table key. [m]"""
    return float(np.round(float(z), 9))


@dataclass(frozen=True)
class _Family:
    """Images ``w0 K^n`` at depth ``sign z' + n step`` for n >= n_start."""

    w0: float
    sign: int
    step: float
    n_start: int
    direct: bool  # the n = n_start image is a leading image


def _families(soil: Soil) -> dict[tuple[int, int], list[_Family]]:
    rho1, rho2, h = soil.rho1_ohm_m, soil.rho2_ohm_m, soil.thickness_m
    k = soil.reflection_k
    c = rho1 * (1.0 + k)
    return {
        (0, 0): [
            _Family(rho1, 1, -2 * h, 0, True),  # 1/r(z - z' + 2nH), n >= 0
            _Family(rho1, -1, -2 * h, 0, True),  # 1/r(z + z' + 2nH), n >= 0
            _Family(rho1, 1, 2 * h, 1, False),  # 1/r(z - z' - 2nH), n >= 1
            _Family(rho1, -1, 2 * h, 1, False),  # 1/r(z + z' - 2nH), n >= 1
        ],
        # observer in the lower layer (the deeper point is the observer)
        (1, 0): [_Family(c, 1, -2 * h, 0, True), _Family(c, -1, -2 * h, 0, True)],
        # observer in the upper layer (the deeper point is the source)
        (0, 1): [_Family(c, 1, 2 * h, 0, True), _Family(c, -1, -2 * h, 0, True)],
        (1, 1): [_Family(rho2 * (1.0 - k * k), -1, -2 * h, 0, True)],
    }


def _single_images(soil: Soil, layer_o: int, layer_s: int) -> tuple[list[Image], list[Image]]:
    """Images that are not part of a family: (leading, other)."""
    if (layer_o, layer_s) != (1, 1):
        return [], []
    rho2, h, k = soil.rho2_ohm_m, soil.thickness_m, soil.reflection_k
    other = [Image(-k * rho2, -1, 2.0 * h)] if k != 0.0 else []
    return [Image(rho2, 1, 0.0)], other


def _min_v(sigma: float, sign: int, obox: tuple[float, float], sbox: tuple[float, float]) -> float:
    return min(sigma * (zo - sign * zs) for zo, zs in itertools.product(obox, sbox))


def _split_family(fam: _Family, k: float, h: float, obox, sbox, near: float) -> tuple[list[Image], Tail | None, bool]:
    """Explicit images of a family and the tail after them."""
    sigma = -math.copysign(1.0, fam.step)
    smin = _min_v(sigma, fam.sign, obox, sbox)
    images: list[Image] = []
    n = fam.n_start
    capped = False
    ak = abs(k)
    while True:
        vmin = smin + 2.0 * n * h
        if vmin >= near and vmin > 0.0:
            break
        if n - fam.n_start >= MAX_EXPLICIT and vmin > 0.0:
            capped = True
            break
        w = fam.w0 * k**n
        if w != 0.0:
            images.append(Image(w, fam.sign, n * fam.step))
        n += 1
        if ak == 0.0 or ak**n <= 1e-13 * (1.0 - ak):
            return images, None, False
    tail = Tail(fam.w0 * k**n, sigma, -sigma * fam.sign, 2.0 * n * h)
    return images, tail, capped


def _pair_kernel(soil: Soil, layer_o: int, layer_s: int, obox, sbox, near: float) -> tuple[_PairKernel, bool]:
    k, h = soil.reflection_k, soil.thickness_m
    lead, other = _single_images(soil, layer_o, layer_s)
    tails: list[Tail] = []
    capped = False
    for fam in _families(soil)[(layer_o, layer_s)]:
        imgs, tail, cap = _split_family(fam, k, h, obox, sbox, near)
        capped |= cap
        if fam.direct and imgs and imgs[0].shift_m == 0.0:
            lead.append(imgs[0])
            other.extend(imgs[1:])
        else:
            other.extend(imgs)
        if tail is not None:
            tails.append(tail)
    return _PairKernel(tuple(lead + other), tuple(tails), len(lead)), capped


def _merge_surface(kernel: _PairKernel) -> _PairKernel:
    """Merge images that are equally far from an observer at z = 0."""
    lead: dict[float, float] = {}
    other: dict[float, float] = {}
    for idx, img in enumerate(kernel.explicit):
        e = round(img.sign * img.shift_m, 12)  # |sign z' + shift| = |z' + sign shift|
        target = lead if idx < kernel.direct else other
        target[e] = target.get(e, 0.0) + img.weight_ohm_m
    tails: dict[tuple[float, float], float] = {}
    for t in kernel.tails:
        key = (t.slope_s, round(t.offset_m, 12))
        tails[key] = tails.get(key, 0.0) + t.weight_ohm_m
    explicit = [Image(w, 1, e) for e, w in lead.items()] + [Image(w, 1, e) for e, w in other.items()]
    return _PairKernel(
        tuple(explicit),
        tuple(Tail(w, 0.0, s, c) for (s, c), w in tails.items()),
        len(lead),
    )


def _tail_range(kernel: _PairKernel, obox, sbox) -> tuple[float, float]:
    vals = [t.argument(zo, zs) for t in kernel.tails for zo, zs in itertools.product(obox, sbox)]
    return (min(vals), max(vals)) if vals else (math.inf, -math.inf)


def _radial(
    kernel: _PairKernel,
    zo: float,
    zs: float,
    soil: Soil,
    d_lo: float,
    d_hi: float,
    scale: float,
    tol: float,
    tails_only: bool = False,
):
    others = () if tails_only else kernel.other_images
    if not others and not kernel.tails:
        return None
    return RadialSums(
        [i.weight_ohm_m for i in others],
        [zo - i.map_depth(zs) for i in others],
        [t.weight_ohm_m for t in kernel.tails],
        [t.argument(zo, zs) for t in kernel.tails],
        soil.reflection_k,
        soil.thickness_m,
        d_lo,
        d_hi,
        scale,
        tol,
    )


class TwoLayerGreens(KernelLookup):
    """Green's function of two-layer soil: explicit images, tables of radial sums, tails.

    Built by :func:`two_layer_greens`; implements
    :class:`groundcalc.soil.greens.GreensFunction`. The image families,
    the tables and their depth keys are private.
    """

    def __init__(
        self,
        pairs: dict[tuple[int, int], _PairKernel],
        surface: dict[int, _PairKernel],
        description: str,
        terms: int,
        explicit_terms: int,
        tail_table: TailTable | None,
        radial: dict[tuple, RadialSums],
        tolerance: float,
        notes: tuple[str, ...],
    ) -> None:
        self._pairs = pairs
        self._surface = surface
        self._tail_table = tail_table
        self._radial = radial  # (part, observer layer, source layer, z_o key, z_s key) -> RadialSums
        self.description = description
        self.terms = terms
        self.explicit_terms = explicit_terms
        self.tolerance = tolerance
        self.notes = notes

    def tail_sum(self, d: np.ndarray, v: np.ndarray) -> np.ndarray:
        if self._tail_table is None:
            raise ValueError("this two-layer Green's function has no image tails")
        return self._tail_table(d, v)

    def radial_sums(self, layer_o: int, layer_s: int, z_o: float, z_s: float, part: RadialPart):
        return self._radial.get((part, layer_o, layer_s, _depth_key(z_o), _depth_key(z_s)))


def two_layer_greens(soil: Soil, ranges: DepthRanges, tol: float = 1e-9) -> TwoLayerGreens:
    """Image series of a two-layer soil prepared for one set of segments.

    Parameters
    ----------
    soil : Soil
        Two-layer soil model.
    ranges : DepthRanges
        Depth ranges per layer, horizontal segment depths and distances.
    tol : float
        Relative truncation tolerance of every image series (1e-6 would
        already be invisible in the results; 1e-9 is used so that the tables
        add no visible error either).

    Returns
    -------
    TwoLayerGreens

    Notes
    -----
    With K = 0 (rho1 = rho2) every image beyond the leading ones has zero
    weight and is dropped, so the result is the uniform-soil Green's
    function exactly.
    """
    h = soil.thickness_m
    k = soil.reflection_k
    near = ranges.near_m
    surface_box = (0.0, 0.0)
    pairs: dict[tuple[int, int], _PairKernel] = {}
    boxes: dict[tuple[int, int], tuple] = {}
    capped = False
    for layer_o, layer_s in itertools.product(sorted(ranges.layers), repeat=2):
        obox, sbox = ranges.layers[layer_o], ranges.layers[layer_s]
        pairs[(layer_o, layer_s)], cap = _pair_kernel(soil, layer_o, layer_s, obox, sbox, near)
        boxes[(layer_o, layer_s)] = (obox, sbox)
        capped |= cap
    surface: dict[int, _PairKernel] = {}
    for layer_s in sorted(ranges.layers):
        kern, cap = _pair_kernel(soil, 0, layer_s, surface_box, ranges.layers[layer_s], near)
        surface[layer_s] = _merge_surface(kern)
        boxes[("s", layer_s)] = (surface_box, ranges.layers[layer_s])
        capped |= cap

    v_lo, v_hi = math.inf, -math.inf
    for key, kern in list(pairs.items()) + [(("s", layer_s), kern) for layer_s, kern in surface.items()]:
        lo_v, hi_v = _tail_range(kern, *boxes[key])
        v_lo, v_hi = min(v_lo, lo_v), max(v_hi, hi_v)
    d_hi = max(ranges.extent_m, 1.0) * 1.05
    table = TailTable(k, h, v_lo, v_hi, d_hi, tol) if v_lo < math.inf else None
    terms = table.terms if table else 0

    radial: dict[tuple, RadialSums] = {}
    d_near = 1.05 * near
    groups = {lay: tuple(sorted({_depth_key(z) for z in zs})) for lay, zs in ranges.horizontal_depths.items()}
    n_groups = sum(len(g) for g in groups.values())
    d_far = 0.95 * ranges.far_m
    if n_groups <= MAX_DEPTH_GROUPS:
        for layer_o, layer_s in pairs:
            for zo in groups.get(layer_o, ()):
                for zs in groups.get(layer_s, ()):
                    rs = _radial(pairs[(layer_o, layer_s)], zo, zs, soil, d_far, d_hi, d_far, tol)
                    if rs is not None:
                        radial[("far", layer_o, layer_s, zo, zs)] = rs
                        terms = max(terms, rs.terms)
                    rs = _radial(pairs[(layer_o, layer_s)], zo, zs, soil, 0.0, d_near, near, tol, tails_only=True)
                    if rs is not None:
                        radial[("tails", layer_o, layer_s, zo, zs)] = rs
        for layer_s, kern in surface.items():
            for zs in groups.get(layer_s, ()):
                rs = _radial(kern, 0.0, zs, soil, d_far, d_hi, d_far, tol)
                if rs is not None:
                    radial[("far", SURFACE, layer_s, 0.0, zs)] = rs
                    terms = max(terms, rs.terms)
                rs = _radial(kern, 0.0, zs, soil, 0.0, d_near, near, tol, tails_only=True)
                if rs is not None:
                    radial[("tails", SURFACE, layer_s, 0.0, zs)] = rs
    explicit = max(len(p.explicit) for p in pairs.values())
    notes = [
        f"Two-layer soil, K = {k:+.4f}: image series summed until the omitted terms are below "
        f"{tol:g} of the potential; up to {explicit} explicit images per layer pair and up to "
        f"{max(terms, explicit)} image terms in all."
    ]
    if capped:
        notes.append(
            "The upper layer is very thin compared with the segment length; some image series "
            "were cut over to their smooth tail closer than usual, which lowers accuracy slightly."
        )
    return TwoLayerGreens(
        pairs=pairs,
        surface=surface,
        description=f"two-layer soil (K = {k:+.4f}, H = {h:g} m): image series to {tol:g}",
        terms=max(terms, explicit),
        explicit_terms=explicit,
        tail_table=table,
        radial=radial,
        tolerance=tol,
        notes=tuple(notes),
    )


def point_potential(p: np.ndarray, q: np.ndarray, soil: Soil, tol: float = 1e-12) -> np.ndarray:
    """Potential at points P of a unit point current at points Q, summed directly.

    A reference implementation of the series in the module docstring, with
    no tables: for tests and checks.

    Parameters
    ----------
    p, q : numpy.ndarray, shape (m, 3)
        Observer and source points (x, y, depth). [m]
    soil : Soil
        Two-layer (or uniform) soil.
    tol : float
        Relative tolerance of the series.

    Returns
    -------
    numpy.ndarray, shape (m,)
        ``V / I``. [ohm]
    """
    p = np.atleast_2d(np.asarray(p, dtype=float))
    q = np.atleast_2d(np.asarray(q, dtype=float))
    d = np.hypot(p[:, 0] - q[:, 0], p[:, 1] - q[:, 1])
    z, zs = p[:, 2], q[:, 2]
    if soil.model == "uniform" or soil.rho2_ohm_m is None:
        r1 = np.sqrt(d * d + (z - zs) ** 2)
        r2 = np.sqrt(d * d + (z + zs) ** 2)
        return soil.rho1_ohm_m * (1 / r1 + 1 / r2) / (4 * np.pi)
    h, k = soil.thickness_m, soil.reflection_k
    rho1, rho2 = soil.rho1_ohm_m, soil.rho2_ohm_m
    out = np.zeros(d.shape)
    up_o, up_s = z <= h, zs <= h

    def s(v, sel):
        # sum_{n>=0} K^n / r(v + 2nH), v >= 0
        return series_sums(d[sel], v, k, h, (1,), tol)[0][0]

    sel = up_o & up_s
    if sel.any():
        a, b = z[sel] - zs[sel], z[sel] + zs[sel]
        # n = 0, then n >= 1 and n <= -1 of both families: sum_{n>=1} K^n f(2nH) = K S(2H + .)
        n0 = 1 / np.hypot(d[sel], a) + 1 / np.hypot(d[sel], b)
        pos = k * (s(a + 2 * h, sel) + s(b + 2 * h, sel))
        neg = k * (s(-a + 2 * h, sel) + s(-b + 2 * h, sel))
        out[sel] = rho1 * (n0 + pos + neg)
    sel = up_o ^ up_s
    if sel.any():
        deep = np.maximum(z[sel], zs[sel])
        shallow = np.minimum(z[sel], zs[sel])
        out[sel] = rho1 * (1 + k) * (s(deep - shallow, sel) + s(deep + shallow, sel))
    sel = ~up_o & ~up_s
    if sel.any():
        a, b = z[sel] - zs[sel], z[sel] + zs[sel]
        out[sel] = rho2 * (1 / np.hypot(d[sel], a) - k / np.hypot(d[sel], b - 2 * h) + (1 - k * k) * s(b, sel))
    return out / (4 * np.pi)
