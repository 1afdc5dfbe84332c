"""The thin-wire operator: matrix entries of segment pairs and potentials at surface points.

This is the one place that decides between the near and the far rule and
that walks the images and tails of a Green's function
(:class:`groundcalc.soil.greens.GreensFunction`).

**Matrix entries.** Entry ``Z_ij`` is the average potential over segment i of
a unit current spread evenly over segment j:

    Z_ij = 1 / (4 pi L_i L_j) * [ sum_k w_k int_i int_j' g dl dl'
                                  + L_i L_j sum_f w_f <T(d, v_f)>_ij ]

where j' runs over the explicit images of segment j and the tails ``T`` are
averaged with a 2 x 2 Gauss rule (they are smooth: the images behind them are
at least the near distance away). Each image integral is exact (closed forms
of :mod:`groundcalc.mom.integrals`) unless the image is ``FAR_RATIO`` segment
lengths away, where the corrected mid-point rule is used.

**Far rule.** Distant pairs of horizontal segments (horizontal distance at
least ``FAR_RATIO`` segment lengths) take a fast path: the corrected
mid-point rule written with radial sums ``S_p = sum_k w_k / R_k^p``,

    Z_ij = 1/(4 pi) [S1 + L_i^2/24 (3 (D.e_i)^2 S5 - S3) + L_j^2/24 (3 (D.e_j)^2 S5 - S3)],

summed over all images at once: the leading images one by one, the rest of a
layered series from the soil model's radial sums. For a point observer
(the earth surface) the observer term drops out. :func:`corrected_midpoint`
is the only copy of this rule.

**Surface potentials.** :meth:`Operator.surface_potential` sums the same
rules over points at z = 0: the exact line-source formula per explicit image
and a Gauss rule on the tails near a segment, the far rule elsewhere.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import partial

import numpy as np

from ..geometry.classes import horizontal_mask, vertical_mask
from ..geometry.segments import Segments
from ..model import Soil
from ..soil.greens import SURFACE, DepthRanges, GreensFunction, Image
from ..soil.registry import greens_for
from .integrals import gauss_legendre_unit, line_integral, near_pair_integral

__all__ = [
    "FAR_MARGIN",
    "FAR_RATIO",
    "PAIR_FAR_RATIO",
    "POINT_FAR_RATIO",
    "Operator",
    "build_greens",
    "corrected_midpoint",
    "far_pair_integral",
    "pair_integral",
]

#: Pairs whose mid-point distance exceeds this many segment lengths use the
#: corrected mid-point rule instead of the closed forms; images closer than
#: this many (longest) segment lengths are explicit in a layered series.
FAR_RATIO = 8.0
#: The far rule for pairs of segments, in segment lengths (the same ratio; a
#: separate name so that a check can switch the matrix rule alone).
PAIR_FAR_RATIO = FAR_RATIO
#: The far rule for surface points and segments, in segment lengths.
POINT_FAR_RATIO = FAR_RATIO
#: Pairs within this relative margin of the far boundary count as near, so that
#: round-off in coordinates never decides which rule a pair gets.
FAR_MARGIN = 1.0 + 1e-6
#: Pairs evaluated per call of the general rule (memory bound).
GENERAL_CHUNK = 200_000
#: Point-segment pairs evaluated at once for surface potentials (memory bound).
POINT_CHUNK_PAIRS = 131_072
#: Gauss points along a source segment for the image tails seen from a point.
TAIL_POINTS = 4
#: Gauss-Legendre points on [0, 1] for the tails between two segments (2-point rule).
_G2 = np.array([0.5 - 0.5 / np.sqrt(3.0), 0.5 + 0.5 / np.sqrt(3.0)])

_RadialFn = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray]]


def corrected_midpoint(s1, s3, s5, ps, len_s2, po=None, len_o2=None):
    """Corrected mid-point rule from radial sums.

    Parameters
    ----------
    s1, s3, s5 : array_like
        ``S_p = sum_k w_k / R_k^p`` over the images, ``R_k`` the distance of
        the mid points (plus the regularising radius). [ohm*m/m^p]
    ps : array_like
        Offset of the mid points along the source segment. [m]
    len_s2 : array_like
        Squared source length. [m^2]
    po, len_o2 : array_like, optional
        The same for the observer segment; omitted for a point observer.

    Returns
    -------
    numpy.ndarray
        ``S1 + Lo^2/24 (3 po^2 S5 - S3) + Ls^2/24 (3 ps^2 S5 - S3)``: the
        average of ``sum_k w_k / R`` over the segment(s). [ohm*m/m]

    Notes
    -----
    Second-order Taylor expansion of ``1/R`` about the mid points; the
    remainder is O((L/R)^4): measured relative error below 2e-5 at eight
    segment lengths and 2e-7 at 25 against the closed forms
    (tests/test_kernels.py).
    """
    # written in place (one temporary per segment term); the same operations in the same order as
    # s1 + ((Lo^2/24) (3 po po S5 - S3) + (Ls^2/24) (3 ps ps S5 - S3))
    out = np.multiply(3.0, ps)
    out *= ps
    out *= s5
    out -= s3
    out *= len_s2 / 24.0
    if po is not None:
        obs = np.multiply(3.0, po)
        obs *= po
        obs *= s5
        obs -= s3
        obs *= len_o2 / 24.0
        obs += out
        out = obs
    out += s1
    return out


def _dot(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    return np.einsum("ij,ij->i", u, v)


def far_pair_integral(do: np.ndarray, ds: np.ndarray, dm: np.ndarray, radius2: np.ndarray | float) -> np.ndarray:
    """Double integral of ``g`` for a distant pair of segments: corrected mid-point rule.

    Parameters
    ----------
    do, ds : numpy.ndarray, shape (m, 3)
        Observer and source direction vectors (end minus start). [m]
    dm : numpy.ndarray, shape (m, 3)
        Observer mid point minus source mid point. [m]
    radius2 : array_like
        Squared regularising radius. [m^2]

    Returns
    -------
    numpy.ndarray
        Approximate double integral. [m]

    Notes
    -----
    :func:`corrected_midpoint` for one image of unit weight, times both
    lengths: ``Lo Ls / R [1 + (Lo^2 (3 cos_o^2 - 1) + Ls^2 (3 cos_s^2 - 1))
    / (24 R^2)]`` with ``cos`` the angle between each segment and the line of
    centres.
    """
    r2 = _dot(dm, dm) + radius2
    len_o2 = _dot(do, do)
    len_s2 = _dot(ds, ds)
    len_o, len_s = np.sqrt(len_o2), np.sqrt(len_s2)
    inv = 1.0 / np.sqrt(r2)
    inv3 = inv / r2
    return (
        corrected_midpoint(inv, inv3, inv3 / r2, _dot(dm, ds) / len_s, len_s2, _dot(dm, do) / len_o, len_o2)
        * len_o
        * len_s
    )


def pair_integral(
    oa: np.ndarray,
    ob: np.ndarray,
    sa: np.ndarray,
    sb: np.ndarray,
    radius2: np.ndarray,
) -> np.ndarray:
    """Double integral of ``g`` over observer and source segments, pairwise.

    Exact (:func:`groundcalc.mom.integrals.near_pair_integral`) for pairs
    closer than ``FAR_RATIO`` segment lengths, the corrected mid-point rule
    for distant pairs.

    Parameters
    ----------
    oa, ob : numpy.ndarray, shape (m, 3)
        Observer segment end points. [m]
    sa, sb : numpy.ndarray, shape (m, 3)
        Source segment end points (possibly an image). [m]
    radius2 : numpy.ndarray, shape (m,)
        Squared regularising radius of each pair. [m^2]

    Returns
    -------
    numpy.ndarray, shape (m,)
        ``integral_obs integral_src g dl dl'``. [m]
    """
    do = ob - oa
    ds = sb - sa
    dm = 0.5 * ((oa + ob) - (sa + sb))
    size = np.sqrt(np.maximum(_dot(do, do), _dot(ds, ds)))
    far = _dot(dm, dm) >= (PAIR_FAR_RATIO * size) ** 2 * FAR_MARGIN
    out = np.empty(oa.shape[0])
    if far.any():
        out[far] = far_pair_integral(do[far], ds[far], dm[far], radius2[far])
    near = np.flatnonzero(~far)
    if near.size:
        out[near] = near_pair_integral(oa[near], ob[near], sa[near], sb[near], radius2[near])
    return out


def _image_sum(images: Sequence[Image], sa: np.ndarray, sb: np.ndarray, integral) -> np.ndarray:
    """``sum_k w_k integral(image_k of the sources)``: the one loop over explicit images."""
    acc = np.zeros(sa.shape[0])
    for img in images:
        ia = sa.copy()
        ib = sb.copy()
        ia[:, 2] = img.map_depth(ia[:, 2])
        ib[:, 2] = img.map_depth(ib[:, 2])
        acc += img.weight_ohm_m * integral(ia, ib)
    return acc


def _leading_sums(images: Sequence[Image], d2, dz_of, r2, weight_mask=None):
    """``(S1, S3, S5)`` over the leading images, one by one (``dz_of(img)`` the vertical offsets)."""
    s1 = s3 = s5 = None
    for img in images:
        dz = dz_of(img)
        t = d2 + dz * dz
        t += r2
        np.divide(1.0, t, out=t)  # 1 / R^2
        inv = np.sqrt(t)
        w = img.weight_ohm_m if weight_mask is None else np.where(weight_mask, img.weight_ohm_m, 0.0)
        inv *= w
        inv3 = inv * t
        inv5 = np.multiply(inv3, t, out=t)
        if s1 is None:
            s1, s3, s5 = inv, inv3, inv5
        else:
            s1 += inv
            s3 += inv3
            s5 += inv5
    if s1 is None:
        s1, s3, s5 = np.zeros(np.shape(d2)), np.zeros(np.shape(d2)), np.zeros(np.shape(d2))
    return s1, s3, s5


def build_greens(soil: Soil, segments: Segments, margin_m: float = 0.0) -> GreensFunction:
    """Green's function of ``soil`` prepared for ``segments``.

    Parameters
    ----------
    soil : Soil
        Soil model.
    segments : Segments
        The segments to be solved for (their depths decide which images are
        explicit and where tables are needed).
    margin_m : float
        How far beyond the segments surface potentials will mostly be
        evaluated (tables cover this; farther points are summed directly). [m]

    Returns
    -------
    GreensFunction
    """
    if len(segments) == 0:
        return greens_for(soil, DepthRanges({}, {}, 0.0, 0.0, 0.0))
    horizontal = horizontal_mask(segments)
    layers: dict[int, tuple[float, float]] = {}
    hdepths: dict[int, tuple[float, ...]] = {}
    for lay in range(int(segments.layer.max()) + 1):
        sel = segments.layer == lay
        if not sel.any():
            continue
        z = np.concatenate([segments.a[sel, 2], segments.b[sel, 2]])
        layers[lay] = (float(z.min()), float(z.max()))
        hdepths[lay] = tuple(np.unique(segments.a[sel & horizontal, 2]).tolist())
    plan = np.concatenate([segments.a[:, :2], segments.b[:, :2]])
    span = plan.max(axis=0) - plan.min(axis=0)
    extent = float(np.hypot(*(span + 2.0 * margin_m)))
    length = segments.length
    ranges = DepthRanges(layers, hdepths, FAR_RATIO * float(length.max()), FAR_RATIO * float(length.min()), extent)
    return greens_for(soil, ranges)


@dataclass(frozen=True)
class _FastGroups:
    """Horizontal segments that take the far-pair fast path, grouped by layer and depth."""

    gid: np.ndarray  # group of each segment, -1: general rule only
    tables: dict[tuple[int, int], _RadialFn]  # (observer group, source group) -> radial sums of the rest


class Operator:
    """Matrix entries and surface potentials of thin-wire segments in one soil.

    Parameters
    ----------
    segments : Segments
        Thin-wire segments.
    greens : GreensFunction
        Soil Green's function prepared for them.
    """

    def __init__(self, segments: Segments, greens: GreensFunction, _groups: _FastGroups | None = None) -> None:
        self.segments = segments
        self.greens = greens
        self.length = segments.length
        self.mid = segments.mid
        self.unit = (segments.b - segments.a) / self.length[:, None] if len(segments) else np.zeros((0, 3))
        self.horizontal = horizontal_mask(segments)
        self.vertical = vertical_mask(segments)
        self.layer_pairs = list(greens.layer_pairs())
        self._groups = _groups

    # -- what the Green's function offers -------------------------------------------------

    def _has_rest(self, layer_o: int, layer_s: int) -> bool:
        """True when images beyond the leading ones, or tails, exist for the layer pair."""
        g = self.greens
        return len(g.images(layer_o, layer_s)) > len(g.leading_images(layer_o, layer_s)) or bool(
            g.tails(layer_o, layer_s)
        )

    @property
    def groups(self) -> _FastGroups:
        """Fast-path groups of the segments (computed once)."""
        if self._groups is None:
            self._groups = self._make_groups()
        return self._groups

    def _make_groups(self) -> _FastGroups:
        seg, g = self.segments, self.greens
        n = len(seg)
        gid = np.full(n, -1, dtype=np.int64)
        hor = np.flatnonzero(self.horizontal)
        if not any(self._has_rest(layer_o, layer_s) for layer_o, layer_s in self.layer_pairs):
            gid[hor] = seg.layer[hor]
            return _FastGroups(gid, {})
        if hor.size == 0:
            return _FastGroups(gid, {})
        pairs = np.column_stack([seg.layer[hor].astype(float), seg.a[hor, 2]])
        keys, inv = np.unique(pairs, axis=0, return_inverse=True)
        gid[hor] = inv.reshape(-1)
        keys = [(int(lay), float(z)) for lay, z in keys]
        tables: dict[tuple[int, int], _RadialFn] = {}
        bad = set()
        for g1, (l1, z1) in enumerate(keys):
            for g2, (l2, z2) in enumerate(keys):
                if not self._has_rest(l1, l2):
                    continue
                table = g.radial_sums(l1, l2, z1, z2, "far")
                if table is None:
                    bad.add(g1)
                else:
                    tables[(g1, g2)] = table
        for g1 in bad:
            gid[gid == g1] = -1
        return _FastGroups(gid, {k: t for k, t in tables.items() if k[0] not in bad and k[1] not in bad})

    # -- smooth plan kernels for fast products (groundcalc.mom.fastop) ---------------------

    def plan_kernel(self, layer_o: int, z_o: float, layer_s: int, z_s: float, sigma_m: float):
        """Smoothed point kernel between two depths, a function of horizontal distance alone.

        ``k(d) = sum_k w_k erf(R_k / sigma) / R_k`` over every image (the tails
        from the soil model's radial sums, unsmoothed: they are far), with
        ``R_k = sqrt(d^2 + dz_k^2)``. It equals the point kernel to
        ``erfc(R / sigma)`` and is smooth on the scale ``sigma`` (Ewald
        splitting). ``layer_o`` may be :data:`SURFACE` (``z_o`` = 0).
        ``sigma_m = 0`` gives the point kernel itself, ``sum_k w_k / R_k``.

        Returns
        -------
        callable or None
            ``d -> k(d)`` [ohm*m/m]; ``None`` when the model has no radial sums
            for these depths.
        """
        from scipy.special import erf

        g = self.greens
        images = g.images(layer_o, layer_s)
        lead = g.leading_images(layer_o, layer_s)
        table = None
        if self._has_rest(layer_o, layer_s):
            table = g.radial_sums(layer_o, layer_s, z_o, z_s, "far")
            if table is None:
                return None
            used = images[: len(lead)]
            rest = images[len(lead) :]
        else:
            used, rest = images, ()
        terms = [(img.weight_ohm_m, z_o - img.map_depth(z_s)) for img in used]
        less = [(img.weight_ohm_m, z_o - img.map_depth(z_s)) for img in rest]

        def smooth(w_dz, d2):
            out = np.zeros(d2.shape)
            for w, dz in w_dz:
                r = np.sqrt(d2 + dz * dz)
                if sigma_m <= 0.0:
                    out += w / r
                    continue
                tiny = r < 1e-9 * sigma_m
                safe = np.where(tiny, 1.0, r)
                out += w * np.where(tiny, 2.0 / (sigma_m * np.sqrt(np.pi)), erf(safe / sigma_m) / safe)
            return out

        def kernel(d: np.ndarray) -> np.ndarray:
            d = np.asarray(d, dtype=float)
            d2 = d * d
            out = smooth(terms, d2)
            if table is not None:
                # the table holds the non-leading images unsmoothed: remove their erfc part
                out += table(d)[0]
                for w, dz in less if sigma_m > 0.0 else ():
                    r = np.sqrt(d2 + dz * dz)
                    out -= w * (1.0 - erf(r / sigma_m)) / np.maximum(r, 1e-300)
            return out

        return kernel

    def point_kernel(self, layer_o: int, z_o: float, layer_s: int, z_s: float):
        """Point kernel ``d -> sum_k w_k / R_k`` between two depths, every image and tail. [ohm*m/m]

        From the soil model's radial sums where it has them for these depths,
        else image by image plus the tails (any depths). ``layer_o`` may be
        :data:`SURFACE` (``z_o`` = 0).
        """
        k = self.plan_kernel(layer_o, z_o, layer_s, z_s, 0.0)
        if k is not None:
            return k
        g = self.greens
        terms = [(img.weight_ohm_m, z_o - img.map_depth(z_s)) for img in g.images(layer_o, layer_s)]
        tails = [(t.weight_ohm_m, float(t.argument(z_o, z_s))) for t in g.tails(layer_o, layer_s)]

        def kernel(d: np.ndarray) -> np.ndarray:
            d = np.asarray(d, dtype=float)
            out = np.zeros(d.shape)
            for w, dz in terms:
                out += w / np.sqrt(d * d + dz * dz)
            for w, v in tails:
                out += w * g.tail_sum(d, np.full(d.shape, v))
            return out

        return kernel

    def point_pairs(self, points_xy: np.ndarray, src: np.ndarray) -> np.ndarray:
        """Potential per unit current at surface points of segments ``src``, pairwise, image by image. [ohm]"""
        src = np.asarray(src, dtype=np.int64)
        out = np.zeros(src.size)
        p3 = np.zeros((src.size, 3))
        p3[:, :2] = points_xy
        for layer_s in np.unique(self.segments.layer[src]).tolist():
            sel = np.flatnonzero(self.segments.layer[src] == layer_s)
            out[sel] = self._point_general(p3[sel], src[sel], layer_s)
        return out

    # -- matrix entries ------------------------------------------------------------------

    def _far_sums(self, dx, dy, zo, zs, eo, es, len_o, len_s, r2, layers_o, layers_s, go, gs, fast) -> np.ndarray:
        """Far-rule entries for a block (every element; only those in ``fast`` are meaningful)."""
        d2 = dx * dx + dy * dy
        po = dx * eo[0] + dy * eo[1]
        ps = dx * es[0] + dy * es[1]
        s1 = np.zeros(d2.shape)
        s3 = np.zeros(d2.shape)
        s5 = np.zeros(d2.shape)
        present = [
            (layer_o, layer_s)
            for (layer_o, layer_s) in self.layer_pairs
            if np.any(layers_o == layer_o) and np.any(layers_s == layer_s)
        ]
        for layer_o, layer_s in present:
            m = (layers_o == layer_o) & (layers_s == layer_s) if len(present) > 1 else None
            t1, t3, t5 = _leading_sums(
                self.greens.leading_images(layer_o, layer_s), d2, lambda img: zo - img.map_depth(zs), r2, m
            )
            s1 += t1
            s3 += t3
            s5 += t5
        tables = self.groups.tables
        if tables:
            d = np.sqrt(d2)
            for (g1, g2), table in tables.items():
                sel = (go == g1) & (gs == g2) & fast
                if not sel.any():
                    continue
                t1, t3, t5 = table(d[sel])
                s1[sel] += t1
                s3[sel] += t3
                s5[sel] += t5
        return corrected_midpoint(s1, s3, s5, ps, len_s * len_s, po, len_o * len_o) / (4.0 * np.pi)

    def _far_mask(self, d2, size):
        return d2 >= (PAIR_FAR_RATIO * size) ** 2 * FAR_MARGIN

    def far_block(self, rows: slice, cols: slice) -> tuple[np.ndarray, np.ndarray | None]:
        """Entries of the block ``rows`` x ``cols`` that the far rule gives.

        Returns
        -------
        (fast, values)
            ``fast`` marks the entries the far rule gave; ``values`` holds
            them (other elements are meaningless), or is None when none is.
            The rest come from :meth:`general_entries`.
        """
        mid, length, e, seg = self.mid, self.length, self.unit, self.segments
        gid = self.groups.gid
        dx = mid[rows, 0, None] - mid[None, cols, 0]
        dy = mid[rows, 1, None] - mid[None, cols, 1]
        size = np.maximum(length[rows, None], length[None, cols])
        fast = self._far_mask(dx * dx + dy * dy, size) & (gid[rows, None] >= 0) & (gid[None, cols] >= 0)
        if not fast.any():
            return fast, None
        vals = self._far_sums(
            dx,
            dy,
            mid[rows, 2, None],
            mid[None, cols, 2],
            (e[rows, 0, None], e[rows, 1, None]),
            (e[None, cols, 0], e[None, cols, 1]),
            length[rows, None],
            length[None, cols],
            seg.radius[rows, None] * seg.radius[None, cols],
            seg.layer[rows, None],
            seg.layer[None, cols],
            gid[rows, None],
            gid[None, cols],
            fast,
        )
        return fast, vals

    def entries(self, ii: np.ndarray, jj: np.ndarray) -> np.ndarray:
        """Entries ``Z[ii, jj]``: the far rule for distant horizontal pairs, the general rule otherwise. [ohm]"""
        ii = np.asarray(ii, dtype=np.int64)
        jj = np.asarray(jj, dtype=np.int64)
        mid, length, e, seg = self.mid, self.length, self.unit, self.segments
        gid = self.groups.gid
        dx = mid[ii, 0] - mid[jj, 0]
        dy = mid[ii, 1] - mid[jj, 1]
        size = np.maximum(length[ii], length[jj])
        fast = self._far_mask(dx * dx + dy * dy, size) & (gid[ii] >= 0) & (gid[jj] >= 0)
        out = np.empty(ii.size)
        f = np.flatnonzero(fast)
        if f.size:
            fi, fj = ii[f], jj[f]
            out[f] = self._far_sums(
                dx[f],
                dy[f],
                mid[fi, 2],
                mid[fj, 2],
                (e[fi, 0], e[fi, 1]),
                (e[fj, 0], e[fj, 1]),
                length[fi],
                length[fj],
                seg.radius[fi] * seg.radius[fj],
                seg.layer[fi],
                seg.layer[fj],
                gid[fi],
                gid[fj],
                np.ones(f.size, dtype=bool),
            )
        g = np.flatnonzero(~fast)
        for k0 in range(0, g.size, GENERAL_CHUNK):
            sel = g[k0 : k0 + GENERAL_CHUNK]
            out[sel] = self.general_entries(ii[sel], jj[sel])
        return out

    def shifted_entries(self, obs: int, src: int, dx: np.ndarray, dy: np.ndarray) -> np.ndarray:
        """Entries for copies of segment ``obs`` whose mid points sit at plan offsets (dx, dy) from ``src``.

        The copies keep the fast-path group of ``obs``, so every entry is
        evaluated by exactly the rule a pair at that offset gets in
        :meth:`entries`. [ohm]
        """
        m = dx.size
        seg = self.segments
        a0, b0 = seg.a, seg.b
        mo, ms = 0.5 * (a0[obs] + b0[obs]), 0.5 * (a0[src] + b0[src])
        shift = np.zeros((m, 3))
        shift[:, 0] = dx + ms[0] - mo[0]
        shift[:, 1] = dy + ms[1] - mo[1]
        synth = Segments(
            np.concatenate([a0[obs] + shift, a0[src][None, :]]),
            np.concatenate([b0[obs] + shift, b0[src][None, :]]),
            np.concatenate([np.full(m, seg.radius[obs]), [seg.radius[src]]]),
            np.zeros(m + 1, dtype=np.int64),
            np.concatenate([np.full(m, seg.layer[obs]), [seg.layer[src]]]),
        )
        gid = self.groups.gid
        groups = _FastGroups(np.concatenate([np.full(m, gid[obs]), [gid[src]]]), self.groups.tables)
        return Operator(synth, self.greens, groups).entries(np.arange(m), np.full(m, m))

    def general_entries(self, ii: np.ndarray, jj: np.ndarray) -> np.ndarray:
        """Entries ``Z[ii, jj]`` image by image (any geometry). [ohm]"""
        seg = self.segments
        out = np.zeros(ii.size)
        a, b, rad, length, layer = seg.a, seg.b, seg.radius, self.length, seg.layer
        for layer_o, layer_s in self.layer_pairs:
            sel = np.flatnonzero((layer[ii] == layer_o) & (layer[jj] == layer_s))
            if sel.size == 0:
                continue
            oi, sj = ii[sel], jj[sel]
            oa, ob = a[oi], b[oi]
            r2 = rad[oi] * rad[sj]
            acc = _image_sum(
                self.greens.images(layer_o, layer_s), a[sj], b[sj], partial(pair_integral, oa, ob, radius2=r2)
            )
            if self.greens.tails(layer_o, layer_s):
                acc += self._tail_pairs(layer_o, layer_s, oi, sj)
            out[sel] = acc / (4.0 * np.pi * length[oi] * length[sj])
        return out

    def _tail_pairs(self, layer_o: int, layer_s: int, oi: np.ndarray, sj: np.ndarray) -> np.ndarray:
        """Double integral of the image tails over segment pairs (times the weights)."""
        seg, g = self.segments, self.greens
        a, b, length = seg.a, seg.b, self.length
        len_o, len_s = length[oi], length[sj]
        out = np.zeros(oi.size)
        rest = np.ones(oi.size, dtype=bool)
        both = np.flatnonzero(self.horizontal[oi] & self.horizontal[sj])
        if both.size:
            depths = np.column_stack([a[oi[both], 2], a[sj[both], 2]])
            combos, which = np.unique(depths, axis=0, return_inverse=True)
            which = which.reshape(-1)
            for c, (zo, zs) in enumerate(combos):
                table = g.radial_sums(layer_o, layer_s, float(zo), float(zs), "tails")
                if table is None:
                    continue
                m = np.zeros(oi.size, dtype=bool)
                m[both[which == c]] = True
                mo, ms = 0.5 * (a[oi[m]] + b[oi[m]]), 0.5 * (a[sj[m]] + b[sj[m]])
                dx, dy = mo[:, 0] - ms[:, 0], mo[:, 1] - ms[:, 1]
                eo = (b[oi[m]] - a[oi[m]]) / len_o[m, None]
                es = (b[sj[m]] - a[sj[m]]) / len_s[m, None]
                po = dx * eo[:, 0] + dy * eo[:, 1]
                ps = dx * es[:, 0] + dy * es[:, 1]
                s1, s3, s5 = table(np.hypot(dx, dy))
                out[m] = corrected_midpoint(s1, s3, s5, ps, len_s[m] ** 2, po, len_o[m] ** 2) * len_o[m] * len_s[m]
                rest &= ~m
        if rest.any():
            ri, rj = oi[rest], sj[rest]
            tsum = np.zeros(ri.size)
            do, ds = b[ri] - a[ri], b[rj] - a[rj]
            for to in _G2:
                po3 = a[ri] + to * do
                for ts in _G2:
                    ps3 = a[rj] + ts * ds
                    d = np.hypot(po3[:, 0] - ps3[:, 0], po3[:, 1] - ps3[:, 1])
                    for tail in g.tails(layer_o, layer_s):
                        tsum += tail.weight_ohm_m * g.tail_sum(d, tail.argument(po3[:, 2], ps3[:, 2]))
            out[rest] = 0.25 * tsum * length[ri] * length[rj]
        return out

    # -- surface potentials ----------------------------------------------------------------

    def surface_potential(
        self, points_xy: np.ndarray, currents: np.ndarray, sources: np.ndarray | None = None
    ) -> np.ndarray:
        """Potential at plan points on the earth surface (z = 0) of the segment currents.

        Parameters
        ----------
        points_xy : numpy.ndarray, shape (m, 2)
            Plan coordinates. [m]
        currents : numpy.ndarray
            Leakage current of each source segment. [A] (or per volt of GPR)
        sources : numpy.ndarray of int, optional
            Source segments (default: all); ``currents`` then has one value
            per source.

        Returns
        -------
        numpy.ndarray, shape (m,)
            Potential relative to remote earth. [V] (or per volt of GPR)

        Notes
        -----
        Horizontal segments more than ``POINT_FAR_RATIO`` of their lengths
        away use the far rule (relative error below 2e-5 there), summed over
        all images at once; other pairs use the exact line-source formula per
        explicit image and a Gauss rule on the smooth image tails.
        """
        pts = np.asarray(points_xy, dtype=float).reshape(-1, 2)
        m = pts.shape[0]
        seg = self.segments
        src = np.arange(len(seg)) if sources is None else np.asarray(sources, dtype=np.int64)
        q_all = np.asarray(currents, dtype=float)
        out = np.zeros(m)
        for layer_s in np.unique(seg.layer[src]).tolist():
            pick = np.flatnonzero(seg.layer[src] == layer_s)
            sel = src[pick]
            q = q_all[pick]
            rows = max(1, POINT_CHUNK_PAIRS // sel.size)
            vert = self.vertical[sel]
            vsel, vq = sel[vert], q[vert]
            sel, q = sel[~vert], q[~vert]
            src_data = self._point_sources(sel, layer_s) if sel.size else None
            for p0 in range(0, m, rows):
                pp = pts[p0 : p0 + rows]
                if sel.size:
                    out[p0 : p0 + rows] += self._point_block(pp, sel, layer_s, src_data) @ q
                if vsel.size:
                    out[p0 : p0 + rows] += self._point_vertical(pp, vsel, layer_s) @ vq
        return out

    def _point_vertical(self, pp: np.ndarray, sel: np.ndarray, layer_s: int) -> np.ndarray:
        """Potential per unit current at surface points ``pp`` of vertical segments ``sel`` (rods).

        Each image of a vertical segment is vertical (images move depths only), and the line
        integral along it is closed: int dz / sqrt(rho^2 + z^2) = asinh(z2/rho) - asinh(z1/rho),
        rho^2 = d^2 + a^2 (the regularised kernel of :func:`line_integral`, for this direction;
        uniform line source, Dwight 1936). The image tails take the Gauss rule of the general path.
        """
        seg, g = self.segments, self.greens
        x, y = seg.a[sel, 0], seg.a[sel, 1]
        za, zb = seg.a[sel, 2], seg.b[sel, 2]
        length = self.length[sel]
        d2 = (pp[:, 0, None] - x[None, :]) ** 2 + (pp[:, 1, None] - y[None, :]) ** 2
        rho = np.sqrt(d2 + (seg.radius[sel] ** 2)[None, :])
        acc = np.zeros(d2.shape)
        for img in g.images(SURFACE, layer_s):
            z1, z2 = img.map_depth(za), img.map_depth(zb)
            acc += img.weight_ohm_m * np.abs(np.arcsinh(z2[None, :] / rho) - np.arcsinh(z1[None, :] / rho))
        tails = g.tails(SURFACE, layer_s)
        if tails:
            d = np.sqrt(d2).ravel()
            t, w = gauss_legendre_unit(TAIL_POINTS)
            for ti, wi in zip(t, w, strict=True):
                zq = za + ti * (zb - za)
                for tail in tails:
                    v = np.broadcast_to(tail.argument(0.0, zq)[None, :], d2.shape).ravel()
                    acc += (wi * tail.weight_ohm_m * length)[None, :] * g.tail_sum(d, v).reshape(d2.shape)
        return acc / (4.0 * np.pi * length)[None, :]

    def _point_sources(self, sel: np.ndarray, layer_s: int) -> dict:
        """What the point rules need of source segments ``sel`` (all in layer ``layer_s``)."""
        length = self.length[sel]
        l2 = (length * length)[None, :]
        far_ok, groups = self._point_groups(sel, layer_s)
        mid = self.mid[sel]
        return {
            "mid": mid,
            "e": self.unit[sel],
            "l2": l2,
            "near_d2": (POINT_FAR_RATIO * POINT_FAR_RATIO) * FAR_MARGIN * l2,
            "far_ok": far_ok[None, :],
            "groups": groups,
            "zs": mid[:, 2],
            "r2": (self.segments.radius[sel] ** 2)[None, :],
            "leading": self.greens.leading_images(SURFACE, layer_s),
        }

    def _point_groups(self, sel: np.ndarray, layer_s: int) -> tuple[np.ndarray, list]:
        """Sources of ``sel`` that take the far rule from surface points, and their radial sums."""
        ok = self.horizontal[sel].copy()
        groups: list[tuple[_RadialFn, np.ndarray]] = []
        if self._has_rest(SURFACE, layer_s):
            z = self.segments.a[sel, 2]
            uz, which = np.unique(z, return_inverse=True)
            which = which.reshape(-1)
            has = np.zeros(uz.size, dtype=bool)
            tables = []
            for k, zk in enumerate(uz.tolist()):
                t = self.greens.radial_sums(SURFACE, layer_s, 0.0, zk, "far")
                has[k] = t is not None
                tables.append(t)
            ok &= has[which]
            for k in np.flatnonzero(has):
                cols = np.flatnonzero(ok & (which == k))
                if cols.size:
                    groups.append((tables[k], cols))
        return ok, groups

    def _point_block(self, pp: np.ndarray, sel: np.ndarray, layer_s: int, src: dict) -> np.ndarray:
        """Potential per unit current at surface points ``pp`` of segments ``sel``, shape (len(pp), len(sel))."""
        mid, e = src["mid"], src["e"]
        dx = pp[:, 0, None] - mid[None, :, 0]
        dy = pp[:, 1, None] - mid[None, :, 1]
        d2 = dx * dx
        d2 += dy * dy
        general = (d2 < src["near_d2"]) | ~src["far_ok"]
        dx *= e[None, :, 0]
        dy *= e[None, :, 1]
        dx += dy
        ps = dx  # plan offset along the segment
        zs = src["zs"]
        s1, s3, s5 = _leading_sums(src["leading"], d2, lambda img: img.map_depth(zs)[None, :], src["r2"])
        groups = src["groups"]
        for table, cols in groups:
            use = ~general[:, cols]
            if use.all():
                t1, t3, t5 = table(np.sqrt(d2[:, cols]))
                s1[:, cols] += t1
                s3[:, cols] += t3
                s5[:, cols] += t5
                continue
            if not use.any():
                continue
            t1, t3, t5 = table(np.sqrt(d2[:, cols][use]))
            for s, t in ((s1, t1), (s3, t3), (s5, t5)):
                blk = s[:, cols]
                blk[use] += t
                s[:, cols] = blk
        vals = corrected_midpoint(s1, s3, s5, ps, src["l2"])
        vals /= 4.0 * np.pi
        if general.any():
            pi, sj = np.nonzero(general)
            p3 = np.zeros((pi.size, 3))
            p3[:, :2] = pp[pi]
            vals[pi, sj] = self._point_general(p3, sel[sj], layer_s)
        return vals

    def _point_general(self, p: np.ndarray, src: np.ndarray, layer_s: int) -> np.ndarray:
        """Potential per unit current at surface points ``p`` (m, 3) of segments ``src``, image by image."""
        seg = self.segments
        a, b = seg.a[src], seg.b[src]
        r2 = seg.radius[src] ** 2
        acc = _image_sum(self.greens.images(SURFACE, layer_s), a, b, partial(line_integral, p, radius2=r2))
        if self.greens.tails(SURFACE, layer_s):
            acc += self._point_tails(p, src, layer_s)
        return acc / (4.0 * np.pi * self.length[src])

    def _point_tails(self, p: np.ndarray, src: np.ndarray, layer_s: int) -> np.ndarray:
        """Integral of the image tails over source segments seen from surface points (times weights)."""
        seg, g = self.segments, self.greens
        a, b = seg.a[src], seg.b[src]
        length = self.length[src]
        out = np.zeros(src.size)
        rest = np.ones(src.size, dtype=bool)
        hor = np.flatnonzero(self.horizontal[src])
        if hor.size:
            uz, which = np.unique(a[hor, 2], return_inverse=True)
            which = which.reshape(-1)
            for k, zk in enumerate(uz.tolist()):
                table = g.radial_sums(SURFACE, layer_s, 0.0, zk, "tails")
                if table is None:
                    continue
                m = np.zeros(src.size, dtype=bool)
                m[hor[which == k]] = True
                mid = 0.5 * (a[m] + b[m])
                dx, dy = p[m, 0] - mid[:, 0], p[m, 1] - mid[:, 1]
                e = (b[m] - a[m]) / length[m, None]
                ps = dx * e[:, 0] + dy * e[:, 1]
                s1, s3, s5 = table(np.hypot(dx, dy))
                out[m] = corrected_midpoint(s1, s3, s5, ps, length[m] ** 2) * length[m]
                rest &= ~m
        if rest.any():
            t, w = gauss_legendre_unit(TAIL_POINTS)
            tsum = np.zeros(int(rest.sum()))
            ar, br, pr = a[rest], b[rest], p[rest]
            for ti, wi in zip(t, w, strict=True):
                q = ar + ti * (br - ar)
                d = np.hypot(pr[:, 0] - q[:, 0], pr[:, 1] - q[:, 1])
                for tail in g.tails(SURFACE, layer_s):
                    tsum += wi * tail.weight_ohm_m * g.tail_sum(d, tail.argument(0.0, q[:, 2]))
            out[rest] = tsum * length[rest]
        return out
