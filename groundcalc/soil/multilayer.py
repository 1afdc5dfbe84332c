"""Soil of N horizontal layers: point-source potential by Hankel transforms.

Layers j = 0 .. N-1 with resistivity rho_j, top t_j and bottom b_j (the last
layer is infinitely deep); the surface z = 0 is insulating. A point current
I at depth z' in layer s gives in layer i (horizontal distance d)

    V = I / (4 pi) int_0^inf [ delta_is rho_s exp(-l |z - z'|)
                               + sum_k C_k(l) exp(-l v_k) ] J0(l d) dl,

with at most four terms k per layer pair, each with ``v_k`` linear in z and
z'. The coefficients come from the standard layer recursion (Sunde 1968,
sec. 2.6; Koefoed 1979, ch. 3): the reflection coefficient seen from layer
j looking down,

    R_j = (1/rho_j - Y) / (1/rho_j + Y),
    Y = (1/rho_{j+1}) (1 - R_{j+1} e^{-2 l T_{j+1}}) / (1 + R_{j+1} e^{-2 l T_{j+1}}),

(R = 0 in the last layer) and the same upward with R = 1 at the surface.
For two layers this reproduces the classical image series exactly.

For the method of moments the potential is split as in
:mod:`groundcalc.soil.greens`: explicit images are the high-wavenumber
limit of each term, ``C_k(inf)``, repeated in the source layer as the image
series of a slab between its two neighbours (reflection coefficients
``k_up`` and ``k_down`` of the adjacent interfaces); those coming within the
near distance of an observer are integrated exactly. What is left of
``C_k`` is smooth and is tabulated once per run against horizontal distance
and the vertical argument, with the Hankel transform evaluated by the
digital linear filter of :mod:`groundcalc.soil.hankel`.

References
----------
.. [1] E. D. Sunde, *Earth Conduction Effects in Transmission Systems*,
   Dover, 1968, sec. 2.6 (n-layer earth).
.. [2] O. Koefoed, *Geosounding Principles 1: Resistivity Sounding
   Measurements*, Elsevier, 1979 (resistivity transform and its recursion).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.interpolate import RectBivariateSpline, make_interp_spline

from ..model import Soil
from .greens import SURFACE, DepthRanges, Image, KernelLookup, PairKernel, RadialPart, Tail
from .hankel import SMALL_R, hankel_j0, hankel_j0_near_axis
from .twolayer import MAX_DEPTH_GROUPS, MAX_EXPLICIT

__all__ = [
    "MultiLayerGreens",
    "Profile",
    "multilayer_greens",
    "point_potential",
    "profile_of",
]

#: Each tail kind reads its own table; kind k lives on v in [k SPAN, (k + 1) SPAN).
SPAN_M = 1.0e4
#: Images weaker than this fraction of a term's strongest stay in its smooth remainder.
WEIGHT_FLOOR = 1e-5
#: Distances below this fraction of the tail's smoothing length are evaluated there.
_D_FLOOR = 1e-4


def depth_key(z: float) -> float:
    """Depth rounded to a nanometre for use as a table key. [m]"""
    return float(np.round(float(z), 9))


@dataclass(frozen=True)
class Profile:
    """Resistivities and thicknesses of N layers (the last thickness is infinite).

    Attributes
    ----------
    rho : tuple of float
        Layer resistivities from the top. [ohm*m]
    thickness : tuple of float
        Thicknesses of the first N - 1 layers. [m]
    """

    rho: tuple[float, ...]
    thickness: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        if len(self.thickness) != len(self.rho) - 1:
            raise ValueError("N layers need N - 1 thicknesses")
        if any(not r > 0 for r in self.rho) or any(not t > 0 for t in self.thickness):
            raise ValueError("resistivities and thicknesses must be positive")

    @property
    def n(self) -> int:
        """Number of layers."""
        return len(self.rho)

    @property
    def interfaces(self) -> tuple[float, ...]:
        """Interface depths from the top. [m]"""
        return tuple(float(x) for x in np.cumsum(self.thickness))

    def top(self, j: int) -> float:
        """Depth of the top of layer j. [m]"""
        return 0.0 if j == 0 else self.interfaces[j - 1]

    def bottom(self, j: int) -> float:
        """Depth of the bottom of layer j (infinite for the last). [m]"""
        return math.inf if j == self.n - 1 else self.interfaces[j]

    def layer_of(self, z: np.ndarray) -> np.ndarray:
        """Layer index of depths z (a depth on an interface belongs to the upper layer)."""
        return np.searchsorted(np.asarray(self.interfaces), np.asarray(z, dtype=float), side="left")

    def k_down(self, j: int) -> float:
        """Reflection coefficient of the interface below layer j (0 for the last)."""
        if j == self.n - 1:
            return 0.0
        a, b = self.rho[j], self.rho[j + 1]
        return (b - a) / (b + a)

    def k_up(self, j: int) -> float:
        """Reflection coefficient of the boundary above layer j (1 at the surface)."""
        if j == 0:
            return 1.0
        a, b = self.rho[j], self.rho[j - 1]
        return (b - a) / (b + a)


def profile_of(soil: Soil) -> Profile:
    """The layer profile of a soil model (uniform, two-layer or multilayer)."""
    layers = getattr(soil, "layers", ())
    if layers:
        return Profile(tuple(float(r) for r, _ in layers), tuple(float(t) for _, t in layers[:-1]))
    if soil.model == "uniform" or soil.rho2_ohm_m is None:
        return Profile((float(soil.rho1_ohm_m),))
    return Profile((float(soil.rho1_ohm_m), float(soil.rho2_ohm_m)), (float(soil.thickness_m),))


class Series:
    """A finite sum ``sum_m a_m exp(-l tau_m)`` (a Dirichlet series in l), truncated at ``tau <= cap``.

    The layer recursion written with these instead of arrays gives the image
    expansion of every coefficient: each term is an image at ``v + tau_m``
    with weight ``a_m``. Terms beyond ``cap`` are dropped; that never makes
    a result wrong, because the images only decide what is integrated
    exactly and the rest is always the exact remainder.
    """

    __slots__ = ("terms", "cap")
    MAX_TERMS = 200

    def __init__(self, terms: dict[float, float], cap: float) -> None:
        self.terms = terms
        self.cap = cap

    @staticmethod
    def _lift(x, cap):
        return x if isinstance(x, Series) else Series({0.0: float(x)} if x != 0 else {}, cap)

    def _trim(self) -> Series:
        big = max((abs(v) for v in self.terms.values()), default=0.0)
        t = {k: v for k, v in self.terms.items() if k <= self.cap and abs(v) > 1e-14 * big}
        if len(t) > self.MAX_TERMS:
            t = dict(sorted(t.items())[: self.MAX_TERMS])
        self.terms = t
        return self

    def __add__(self, o):
        o = Series._lift(o, self.cap)
        t = dict(self.terms)
        for k, v in o.terms.items():
            t[k] = t.get(k, 0.0) + v
        return Series(t, self.cap)._trim()

    __radd__ = __add__

    def __neg__(self):
        return Series({k: -v for k, v in self.terms.items()}, self.cap)

    def __sub__(self, o):
        return self + (-Series._lift(o, self.cap))

    def __rsub__(self, o):
        return Series._lift(o, self.cap) - self

    def __mul__(self, o):
        if not isinstance(o, Series):
            return Series({k: v * float(o) for k, v in self.terms.items()}, self.cap)._trim()
        t: dict[float, float] = {}
        for k1, v1 in self.terms.items():
            for k2, v2 in o.terms.items():
                k = round(k1 + k2, 9)
                if k <= self.cap:
                    t[k] = t.get(k, 0.0) + v1 * v2
        return Series(t, self.cap)._trim()

    __rmul__ = __mul__

    def inverse(self) -> Series:
        c = self.terms.get(0.0, 0.0)
        if c == 0.0:
            raise ZeroDivisionError("series without a constant term")
        rest = Series({k: -v / c for k, v in self.terms.items() if k != 0.0}, self.cap)
        out = Series({0.0: 1.0}, self.cap)
        power = Series({0.0: 1.0}, self.cap)
        for _ in range(200):
            power = power * rest
            if not power.terms or max(abs(v) for v in power.terms.values()) < 1e-12:
                break
            out = out + power
        return out * (1.0 / c)

    def __truediv__(self, o):
        if not isinstance(o, Series):
            return self * (1.0 / float(o))
        return self * o.inverse()

    def __rtruediv__(self, o):
        return Series._lift(o, self.cap) * self.inverse()


class Recursion:
    """Reflection coefficients of every layer, at wavenumbers or as image series.

    Parameters
    ----------
    prof : Profile
    lam : numpy.ndarray, optional
        Wavenumbers [1/m]; without them every quantity is a :class:`Series`
        truncated at ``cap`` [m].
    """

    def __init__(self, prof: Profile, lam: np.ndarray | None = None, cap: float = 0.0) -> None:
        n = prof.n
        sig = [1.0 / r for r in prof.rho]
        t = prof.thickness
        self.lam = lam
        if lam is None:
            self.e = [Series({round(2.0 * t[j], 9): 1.0}, cap) for j in range(n - 1)] + [0.0]
            zero, one = 0.0, 1.0
        else:
            self.e = [np.exp(-2.0 * lam * t[j]) for j in range(n - 1)] + [np.zeros_like(lam)]
            zero, one = np.zeros_like(lam), np.ones_like(lam)
        down = [zero for _ in range(n)]
        for j in range(n - 2, -1, -1):
            g = down[j + 1] * self.e[j + 1]
            a, b = sig[j] * (1.0 + g), sig[j + 1] * (1.0 - g)
            down[j] = (a - b) / (a + b)
        up = [one for _ in range(n)]
        for j in range(1, n):
            g = up[j - 1] * self.e[j - 1]
            a, b = sig[j] * (1.0 + g), sig[j - 1] * (1.0 - g)
            up[j] = (a - b) / (a + b)
        if lam is None:
            down = [Series._lift(x, cap) for x in down]
            up = [Series._lift(x, cap) for x in up]
        self.down, self.up = down, up
        self.prof = prof
        self.cache: dict = {}

    def _memo(self, key, make):
        if self.lam is not None:
            return make()
        if key not in self.cache:
            self.cache[key] = make()
        return self.cache[key]

    def denominator(self, s: int):
        """``1 - R_up R_down e^{-2 l T_s}`` of layer s."""
        return self._memo(("d", s), lambda: 1.0 - self.up[s] * self.down[s] * self.e[s])

    def transmission(self, s: int, i: int):
        """``rho_s / D_s prod_{j=s}^{i-1} (1 + R_down_j) / (1 + Gamma_{j+1})`` for i > s."""

        def make():
            p = self.prof.rho[s] / self.denominator(s)
            for j in range(s, i):
                p = p * (1.0 + self.down[j]) / (1.0 + self.down[j + 1] * self.e[j + 1])
            return p

        return self._memo(("t", s, i), make)


@dataclass(frozen=True)
class Term:
    """One term ``C(l) exp(-l v)`` of a layer pair, ``v = so z + ss z' + c``.

    ``coef(rec)`` gives C from a :class:`Recursion`: at wavenumbers, or as a
    :class:`Series` whose terms are the images of the term.
    """

    so: float
    ss: float
    c: float
    coef: Callable[[Recursion], object]


def _pair_terms(prof: Profile, i: int, s: int) -> list[Term]:
    """Terms of the pair (observer layer i, source layer s), excluding the direct 1/R."""
    if i < s:
        # reciprocity: swap the roles of observer and source
        return [Term(t.ss, t.so, t.c, t.coef) for t in _pair_terms(prof, s, i)]
    rho = prof.rho[s]
    ts, bs = prof.top(s), prof.bottom(s)
    if i == s:
        if s == prof.n - 1:
            # the last layer: only the upward reflection, C = rho R_up
            return [Term(1.0, 1.0, -2.0 * ts, lambda r, s=s, rho=rho: rho * r.up[s])]
        tt = bs - ts

        def c1(r, s=s):
            return rho * r.up[s] / r.denominator(s)

        def c2(r, s=s):
            return rho * r.up[s] * r.down[s] / r.denominator(s)

        def c3(r, s=s):
            return rho * r.down[s] / r.denominator(s)

        return [
            Term(1.0, 1.0, -2.0 * ts, c1),
            Term(1.0, -1.0, 2.0 * tt, c2),
            Term(-1.0, -1.0, 2.0 * bs, c3),
            Term(-1.0, 1.0, 2.0 * tt, c2),
        ]

    # observer below the source (i > s)
    def p1(r, s=s, i=i):
        return r.transmission(s, i)

    def p2(r, s=s, i=i):
        return r.transmission(s, i) * r.up[s]

    terms = [Term(1.0, -1.0, 0.0, p1), Term(1.0, 1.0, -2.0 * ts, p2)]
    if i < prof.n - 1:
        bi = prof.bottom(i)

        def p3(r, s=s, i=i):
            return r.transmission(s, i) * r.down[i]

        def p4(r, s=s, i=i):
            return r.transmission(s, i) * r.up[s] * r.down[i]

        terms += [Term(-1.0, -1.0, 2.0 * bi, p3), Term(-1.0, 1.0, 2.0 * bi - 2.0 * ts, p4)]
    return terms


def _term_image(t: Term, tau: float, weight: float) -> Image:
    """The image of a term at extra depth tau as an :class:`Image`."""
    c = t.c + tau
    if t.so > 0:
        return Image(weight, int(-t.ss), -c)
    return Image(weight, int(t.ss), c)


def _v_min(t: Term, obox, sbox) -> float:
    return min(t.so * zo + t.ss * zs + t.c for zo, zs in itertools.product(obox, sbox))


def _v_max(t: Term, obox, sbox) -> float:
    return max(t.so * zo + t.ss * zs + t.c for zo, zs in itertools.product(obox, sbox))


def _split_series(series: Series, vmin: float, near: float) -> tuple[list[tuple[float, float]], float]:
    """Images to integrate exactly, and the extra depth of the nearest one left in the remainder."""
    items = sorted(series.terms.items())
    big = max((abs(a) for _, a in items), default=0.0)
    explicit, rest = [], []
    for tau, a in items:
        keep = tau == 0.0 or (vmin + tau < near and abs(a) >= WEIGHT_FLOOR * big)
        (explicit if keep and len(explicit) < MAX_EXPLICIT else rest).append((tau, a))
    gap = min((tau for tau, _ in rest), default=series.cap)
    return explicit, gap


def _remainder(t: Term, explicit: list[tuple[float, float]]) -> Callable[[Recursion], np.ndarray]:
    """``C(l)`` minus its explicit images."""

    def f(rec: Recursion) -> np.ndarray:
        out = t.coef(rec)
        for tau, a in explicit:
            out = out - a * np.exp(-rec.lam * tau)
        return out

    return f


class TermTable:
    """``T(d, v) = int rem(l) exp(-l v) J0(l d) dl`` on a grid, by a bicubic spline.

    The product ``T sqrt(d^2 + (v + g)^2)`` is tabulated in
    ``(asinh(d / g), log(v + g))``, with g the distance to the nearest
    singularity behind the remainder, where it is smooth and bounded.
    """

    def __init__(self, prof: Profile, rem, v_lo: float, v_hi: float, d_hi: float, gap: float, step: float = 0.04):
        self.prof, self.rem, self.g = prof, rem, float(gap)
        self.v_lo, self.v_hi, self.d_hi = float(v_lo), float(max(v_hi, v_lo + 1e-6)), float(d_hi)
        x1 = float(np.arcsinh(self.d_hi / self.g)) + 1e-9
        y0, y1 = math.log(max(self.v_lo, 0.0) + self.g), math.log(self.v_hi + self.g) + 1e-9
        nx = max(6, int(math.ceil(x1 / step)) + 1)
        ny = max(6, int(math.ceil((y1 - y0) / step)) + 1)
        self.x = np.linspace(0.0, x1, nx)
        self.y = np.linspace(y0, y1, ny)
        d = self.g * np.sinh(self.x)
        v = np.exp(self.y) - self.g
        vals = self.direct_grid(d, v)
        scale = np.sqrt(d[:, None] ** 2 + (v[None, :] + self.g) ** 2)
        self.spline = RectBivariateSpline(self.x, self.y, vals * scale, kx=3, ky=3, s=0)

    def direct_grid(self, d: np.ndarray, v: np.ndarray) -> np.ndarray:
        """T on the grid d x v, by the filter. Shape (len(d), len(v))."""
        dd = np.maximum(d, _D_FLOOR * (self.g + max(self.v_lo, 0.0)))
        v = np.maximum(v, 0.0)

        def kern(lam):
            rec = Recursion(self.prof, lam)
            c = self.rem(rec)
            return c[None, ...] * np.exp(-lam[None, ...] * v[:, None, None])

        f0 = self.rem(Recursion(self.prof, np.zeros(1)))[0]
        out = hankel_j0(kern, dd, at_zero=np.full((v.size, 1), f0)).T
        a = v[None, :] + self.g
        near = d[:, None] < SMALL_R * a
        if near.any():
            dn = np.broadcast_to(d[:, None], near.shape)[near]
            vn = np.broadcast_to(v[None, :], near.shape)[near]

            def kn(lam):
                return self.rem(Recursion(self.prof, lam)) * np.exp(-lam * vn[:, None])

            out[near] = hankel_j0_near_axis(kn, dn, vn + self.g)
        return out

    def __call__(self, d: np.ndarray, v: np.ndarray) -> np.ndarray:
        d = np.asarray(d, dtype=float)
        v = np.asarray(v, dtype=float)
        x = np.arcsinh(np.minimum(d, self.d_hi) / self.g)
        y = np.log(np.clip(v, self.v_lo, self.v_hi) + self.g)
        out = self.spline.ev(x, y) / np.sqrt(d * d + (v + self.g) ** 2)
        outside = (d > self.d_hi * (1 + 1e-9)) | (v < self.v_lo - 1e-9) | (v > self.v_hi + 1e-9)
        if outside.any():
            out[outside] = np.array(
                [
                    self.direct_grid(np.array([a]), np.array([b]))[0, 0]
                    for a, b in zip(d[outside], v[outside], strict=True)
                ]
            )
        return out


class TailFunctions:
    """All tail tables of a soil behind the single ``T(d, v)`` of :class:`Greens`.

    Tail kind k is stored with its vertical argument shifted by
    ``k * SPAN_M``, so one function of ``(d, v)`` serves every kind.
    """

    def __init__(self) -> None:
        self.tables: list[TermTable] = []

    def add(self, table: TermTable) -> int:
        self.tables.append(table)
        return len(self.tables) - 1

    def __call__(self, d: np.ndarray, v: np.ndarray) -> np.ndarray:
        d = np.asarray(d, dtype=float)
        v = np.asarray(v, dtype=float)
        if v.size == 0:
            return np.zeros(v.shape)
        kind = np.floor(v / SPAN_M).astype(np.int64)
        k0 = int(kind.flat[0])
        if np.all(kind == k0):
            return self.tables[k0](d, v - k0 * SPAN_M)
        out = np.empty(v.shape)
        for k in np.unique(kind):
            m = kind == k
            out[m] = self.tables[int(k)](d[m], v[m] - k * SPAN_M)
        return out


class RadialTable:
    """Sums over images and tails at fixed depths as functions of horizontal distance.

    Returns ``(S1, S3, S5)`` as :class:`groundcalc.soil.tables.RadialSums`
    does: for ``f(d) = F(u)``, ``u = d^2``, ``S1 = F``, ``S3 = -2 F'(u)``,
    ``S5 = 4/3 F''(u)`` (which are ``1/R``, ``1/R^3``, ``1/R^5`` for a single
    image), from a quintic spline of F in u.
    """

    def __init__(self, prof: Profile, images, tails, d_lo: float, d_hi: float, scale: float, step: float = 0.02):
        self.images = [(float(w), float(dz)) for w, dz in images]
        self.tails = [(rem, v) for rem, v, _ in tails]  # (remainder, v)
        self.floor = min((v + g for _, v, g in tails), default=1.0)
        self.prof = prof
        self.scale = float(scale)
        x0 = float(np.arcsinh(max(d_lo, 0.0) / self.scale))
        x1 = float(np.arcsinh(d_hi / self.scale))
        n = max(8, int(math.ceil((x1 - x0) / step)) + 1)
        d = self.scale * np.sinh(np.linspace(x0, x1, n))
        self.d_lo, self.d_hi = float(d[0]), float(d[-1])
        self.terms = len(self.images) + len(self.tails)
        u = d * d
        self.spline = make_interp_spline(u, self.direct(d), k=5)
        self.d1 = self.spline.derivative(1)
        self.d2 = self.spline.derivative(2)

    def direct(self, d: np.ndarray) -> np.ndarray:
        """f(d) summed directly."""
        d = np.asarray(d, dtype=float)
        out = np.zeros(d.shape)
        for w, dz in self.images:
            out += w / np.sqrt(d * d + dz * dz)
        if self.tails:
            gap = max(self.floor, 1e-3)
            dd = np.maximum(d, _D_FLOOR * gap)

            def kern(lam):
                rec = Recursion(self.prof, lam)
                acc = np.zeros(lam.shape)
                for rem, v in self.tails:
                    acc += rem(rec) * np.exp(-lam * v)
                return acc

            rec0 = Recursion(self.prof, np.zeros(1))
            f0 = float(sum(rem(rec0)[0] for rem, _ in self.tails))
            val = hankel_j0(kern, dd, at_zero=f0)
            near = d < SMALL_R * self.floor
            if near.any():
                val[near] = hankel_j0_near_axis(kern, d[near], np.full(int(near.sum()), self.floor))
            out += val
        return out

    def __call__(self, d: np.ndarray, clamp: bool = False):
        """``(S1, S3, S5)`` at horizontal distances d; outside the table summed directly unless clamped."""
        d = np.asarray(d, dtype=float)
        u = np.clip(d * d, self.d_lo**2, self.d_hi**2)
        s1 = self.spline(u)
        s3 = -2.0 * self.d1(u)
        s5 = (4.0 / 3.0) * self.d2(u)
        if not clamp:
            out = (d < self.d_lo * (1 - 1e-12)) | (d > self.d_hi * (1 + 1e-12))
            if out.any():
                uo = d[out] ** 2
                h = 1e-3 * (uo + self.scale**2)
                f = [self.direct(np.sqrt(np.maximum(uo + k * h, 0.0))) for k in (-1, 0, 1)]
                s1[out] = f[1]
                s3[out] = -2.0 * (f[2] - f[0]) / (2.0 * h)
                s5[out] = (4.0 / 3.0) * (f[2] - 2.0 * f[1] + f[0]) / (h * h)
        return s1, s3, s5


class MultiLayerGreens(KernelLookup):
    """Green's function of an N-layer soil: explicit images, Hankel-transform tables, tails.

    Built by :func:`multilayer_greens`; implements
    :class:`groundcalc.soil.greens.GreensFunction`. The layer kernels, the
    tables and their depth keys are private.
    """

    def __init__(self, pairs, surface, tail_function, radial: dict, profile: Profile, **info) -> None:
        self._pairs = pairs
        self._surface = surface
        self._tail_function = tail_function
        self._radial = radial  # (part, observer layer, source layer, z_o key, z_s key) -> RadialTable
        self.profile = profile
        self.description = info["description"]
        self.terms = info["terms"]
        self.explicit_terms = info["explicit_terms"]
        self.tolerance = info["tolerance"]
        self.notes = info["notes"]

    def tail_sum(self, d: np.ndarray, v: np.ndarray) -> np.ndarray:
        return self._tail_function(d, v)

    @property
    def tail_tables(self) -> tuple:
        """The tables of the smooth remainders (for checks of their accuracy)."""
        return tuple(getattr(self._tail_function, "tables", ()))

    def radial_sums(self, layer_o: int, layer_s: int, z_o: float, z_s: float, part: RadialPart):
        return self._radial.get((part, layer_o, layer_s, depth_key(z_o), depth_key(z_s)))


def _kernels(prof, srec: Recursion, lo, ls, obox, sbox, near, tails: TailFunctions, d_hi):
    """PairKernel of one layer pair; registers its tail tables."""
    lead: list[Image] = []
    other: list[Image] = []
    tl: list[Tail] = []
    info = []
    if lo == ls:
        lead.append(Image(prof.rho[ls], 1, 0.0))
    probe = Recursion(prof, np.geomspace(1e-4, 1e2, 25) / max(min(prof.thickness, default=1.0), 1e-3))
    for t in _pair_terms(prof, lo, ls):
        vmin = _v_min(t, obox, sbox)
        explicit, gap = _split_series(t.coef(srec), vmin, near)
        for tau, a in explicit:
            img = _term_image(t, tau, a)
            (lead if tau == 0.0 and img.shift_m == 0.0 else other).append(img)
        rem = _remainder(t, explicit)
        if np.all(np.abs(rem(probe)) <= 1e-13 * max(prof.rho)):
            continue  # the images are the whole term (equal resistivities)
        v_lo, v_hi = vmin, _v_max(t, obox, sbox)
        table = TermTable(prof, rem, v_lo, v_hi, d_hi, max(gap, 1e-3))
        kind = tails.add(table)
        tl.append(Tail(1.0, t.so, t.ss, t.c + kind * SPAN_M))
        info.append((t, rem, table.g))
    return PairKernel(tuple(lead + other), tuple(tl), len(lead)), info


def _merge_surface(kernel: PairKernel) -> PairKernel:
    """Merge explicit images that are equally far from an observer at z = 0."""
    lead: dict[float, float] = {}
    other: dict[float, float] = {}
    for idx, img in enumerate(kernel.explicit):
        e = round(img.sign * img.shift_m, 12)
        target = lead if idx < kernel.direct else other
        target[e] = target.get(e, 0.0) + img.weight_ohm_m
    explicit = [Image(w, 1, e) for e, w in lead.items()] + [Image(w, 1, e) for e, w in other.items() if w != 0.0]
    return PairKernel(tuple(explicit), kernel.tails, len(lead))


def multilayer_greens(soil: Soil, ranges: DepthRanges, tol: float = 1e-9) -> MultiLayerGreens:
    """Green's function of an N-layer soil prepared for one set of segments.

    Parameters
    ----------
    soil : Soil
        Any layered soil (see :func:`profile_of`).
    ranges : DepthRanges
        Depth ranges per layer (layer indices of the profile), horizontal
        segment depths and distances.
    tol : float
        Stated accuracy of the tables (the filter and splines reach about
        1e-9 relative on smooth remainders, measured in tests).

    Returns
    -------
    MultiLayerGreens
    """
    prof = profile_of(soil)
    near = ranges.near_m
    d_hi = max(ranges.extent_m, 1.0) * 1.05
    tails = TailFunctions()
    # image series of every coefficient, to the near distance plus the deepest layer pair
    depth = max(hi for _, hi in ranges.layers.values())
    srec = Recursion(prof, None, cap=near + 2.0 * depth + 2.0 * max(prof.thickness, default=0.0))
    pairs: dict[tuple[int, int], PairKernel] = {}
    infos: dict = {}
    for lo, ls in itertools.product(sorted(ranges.layers), repeat=2):
        pairs[(lo, ls)], infos[(lo, ls)] = _kernels(
            prof, srec, lo, ls, ranges.layers[lo], ranges.layers[ls], near, tails, d_hi
        )
    surface: dict[int, PairKernel] = {}
    sinfo: dict = {}
    for ls in sorted(ranges.layers):
        kern, sinfo[ls] = _kernels(prof, srec, 0, ls, (0.0, 0.0), ranges.layers[ls], near, tails, d_hi)
        surface[ls] = _merge_surface(kern)

    radial: dict = {}
    groups = {lay: tuple(sorted({depth_key(z) for z in zs})) for lay, zs in ranges.horizontal_depths.items()}
    n_groups = sum(len(g) for g in groups.values())
    d_far = 0.95 * ranges.far_m
    d_near = 1.05 * near

    def table(kern, info, zo, zs, lo_d, hi_d, scale, tails_only):
        imgs = [] if tails_only else [(i.weight_ohm_m, zo - i.map_depth(zs)) for i in kern.other_images]
        tl = [(rem, t.so * zo + t.ss * zs + t.c, g) for t, rem, g in info]
        if not imgs and not tl:
            return None
        # a small grid can have its far-rule distance beyond its extent: keep the range non-empty
        # (points beyond a table are summed directly)
        return RadialTable(prof, imgs, tl, lo_d, max(hi_d, 2.0 * lo_d, lo_d + 1.0), scale)

    if n_groups <= MAX_DEPTH_GROUPS:
        for lo, ls in pairs:
            for zo in groups.get(lo, ()):
                for zs in groups.get(ls, ()):
                    rs = table(pairs[(lo, ls)], infos[(lo, ls)], zo, zs, d_far, d_hi, d_far, False)
                    if rs is not None:
                        radial[("far", lo, ls, zo, zs)] = rs
                    rs = table(pairs[(lo, ls)], infos[(lo, ls)], zo, zs, 0.0, d_near, near, True)
                    if rs is not None:
                        radial[("tails", lo, ls, zo, zs)] = rs
        for ls, kern in surface.items():
            for zs in groups.get(ls, ()):
                rs = table(kern, sinfo[ls], 0.0, zs, d_far, d_hi, d_far, False)
                if rs is not None:
                    radial[("far", SURFACE, ls, 0.0, zs)] = rs
                rs = table(kern, sinfo[ls], 0.0, zs, 0.0, d_near, near, True)
                if rs is not None:
                    radial[("tails", SURFACE, ls, 0.0, zs)] = rs
    explicit = max(len(p.explicit) for p in pairs.values())
    rho_txt = ", ".join(f"{r:g}" for r in prof.rho)
    th_txt = ", ".join(f"{t:g}" for t in prof.thickness)
    notes = (
        f"{prof.n}-layer soil (resistivities {rho_txt} ohm*m; thicknesses {th_txt} m): leading images "
        f"integrated exactly (up to {explicit} per layer pair), the smooth rest tabulated once per run "
        f"({len(tails.tables)} tables) by a Hankel transform with the 201-point filter of Key (2012).",
    )
    return MultiLayerGreens(
        pairs,
        surface,
        tails if tails.tables else _zero_tail,
        radial,
        prof,
        description=f"{prof.n}-layer soil: images plus Hankel-transform tables",
        terms=explicit,
        explicit_terms=explicit,
        tolerance=tol,
        notes=notes,
    )


def _zero_tail(d: np.ndarray, v: np.ndarray) -> np.ndarray:
    return np.zeros(np.shape(d))


def point_potential(p: np.ndarray, q: np.ndarray, soil: Soil | Profile) -> np.ndarray:
    """Potential at points P of a unit point current at points Q, by the filter directly.

    A reference implementation with no tables, for tests, checks and the
    Wenner curves: ``V / I = 1/(4 pi) [rho_s delta_is / R + sum_k H[C_k e^{-l v_k}](d)]``.

    Parameters
    ----------
    p, q : numpy.ndarray, shape (m, 3)
        Observer and source points (x, y, depth). [m]
    soil : Soil or Profile
        The layered soil.

    Returns
    -------
    numpy.ndarray, shape (m,)
        ``V / I``. [ohm]
    """
    prof = soil if isinstance(soil, Profile) else profile_of(soil)
    p = np.atleast_2d(np.asarray(p, dtype=float))
    q = np.atleast_2d(np.asarray(q, dtype=float))
    d = np.hypot(p[:, 0] - q[:, 0], p[:, 1] - q[:, 1])
    z, zs = p[:, 2], q[:, 2]
    lo, ls = prof.layer_of(z), prof.layer_of(zs)
    out = np.zeros(d.shape)
    for i, s in set(zip(lo.tolist(), ls.tolist(), strict=True)):
        m = (lo == i) & (ls == s)
        dm, zm, zsm = d[m], z[m], zs[m]
        terms = _pair_terms(prof, i, s)
        vv = [t.so * zm + t.ss * zsm + t.c for t in terms]
        scale = np.maximum(np.hypot(dm, np.min(vv, axis=0) if vv else 0.0), 1e-9)
        dd = np.maximum(dm, _D_FLOOR * scale)

        def kern(lam, terms=terms, vv=vv):
            rec = Recursion(prof, lam)
            acc = np.zeros(lam.shape)
            for t, v in zip(terms, vv, strict=True):
                acc += t.coef(rec) * np.exp(-lam * v[:, None])
            return acc

        rec0 = Recursion(prof, np.zeros(1))
        f0 = sum(t.coef(rec0)[0] for t in terms) * np.ones(dm.shape)
        val = hankel_j0(kern, dd, at_zero=f0) if terms else np.zeros(dm.shape)
        vmin = np.min(vv, axis=0) if vv else np.zeros(dm.shape)
        near = (dm < SMALL_R * vmin) & (vmin > 0.0)
        if terms and near.any():
            vn = [v[near] for v in vv]

            def kn(lam, terms=terms, vn=vn):
                rec = Recursion(prof, lam)
                acc = np.zeros(lam.shape)
                for t, v in zip(terms, vn, strict=True):
                    acc += t.coef(rec) * np.exp(-lam * v[:, None])
                return acc

            val[near] = hankel_j0_near_axis(kn, dm[near], vmin[near])
        if i == s:
            val = val + prof.rho[s] / np.hypot(dm, zm - zsm)
        out[m] = val
    return out / (4.0 * np.pi)
