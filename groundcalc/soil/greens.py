"""Green's functions of layered soil as point images plus smooth tails.

The potential at observer point P = (x, y, z) of a point current I at
Q = (x', y', z') in soil with an insulating surface at z = 0 (depth positive
down) is written as

    V(P) = I / (4 pi) * [ sum_k  w_k / |P - Q_k|  +  sum_f  w_f T(d, v_f) ]

* **Explicit images** ``Q_k = (x', y', s_k z' + t_k)`` with weight ``w_k``
  (ohm*m), sign ``s_k`` (+1 shifted copy, -1 mirrored copy) and shift
  ``t_k`` (m). Every image is moved in depth only, so the image of a straight
  segment is again a straight segment and the segment integrals of
  :mod:`groundcalc.mom.integrals` apply term by term.
* **Tails**: what is left of an infinite image series after its explicit
  terms. ``T(d, v) = sum_{m>=0} K^m / sqrt(d^2 + (v + 2 m H)^2)`` with ``d``
  the horizontal distance and ``v = a z + b z' + c`` a linear function of the
  two depths. Tails are only formed from images that are far from every
  observer (``v`` is at least the near distance), so they are smooth and a
  low-order rule integrates them accurately.

This module holds the data types and the uniform-soil images; the two-layer
series are built in :mod:`groundcalc.soil.twolayer`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from ..model import Soil

__all__ = ["Greens", "Image", "PairKernel", "Tail", "uniform_greens"]


@dataclass(frozen=True)
class Image:
    """One point image: weight, sign and shift of the depth map.

    Parameters
    ----------
    weight_ohm_m : float
        Multiplies ``I / (4 pi |P - Q_k|)``. [ohm*m]
    sign : int
        +1 for a shifted copy, -1 for a mirrored copy.
    shift_m : float
        Depth offset t in ``z_k = sign * z' + t``. [m]
    """

    weight_ohm_m: float
    sign: int
    shift_m: float

    def map_depth(self, z: np.ndarray) -> np.ndarray:
        """Depth of the image of a source at depth ``z``. [m]"""
        return self.sign * z + self.shift_m


@dataclass(frozen=True)
class Tail:
    """The far remainder of an image series: ``weight * T(d, v)``.

    Parameters
    ----------
    weight_ohm_m : float
        Weight of the first omitted image. [ohm*m]
    slope_o, slope_s : float
        Coefficients of observer and source depth in ``v`` (each +1 or -1).
    offset_m : float
        Constant part of ``v``. [m]
    """

    weight_ohm_m: float
    slope_o: float
    slope_s: float
    offset_m: float

    def argument(self, z_o: np.ndarray, z_s: np.ndarray) -> np.ndarray:
        """Vertical argument ``v`` of the tail function. [m]"""
        return self.slope_o * z_o + self.slope_s * z_s + self.offset_m


@dataclass(frozen=True)
class PairKernel:
    """Images for one (observer layer, source layer) pair.

    Attributes
    ----------
    explicit : tuple of Image
        Images integrated exactly; the first ``direct`` of them are the
        leading (n = 0) images, which the fast far-field path evaluates
        directly. The rest are handled by radial tables there.
    tails : tuple of Tail
        Smooth remainders of the image series.
    direct : int
        Number of leading images in ``explicit``.
    """

    explicit: tuple[Image, ...]
    tails: tuple[Tail, ...] = ()
    direct: int = 0

    @property
    def direct_images(self) -> tuple[Image, ...]:
        """The leading images."""
        return self.explicit[: self.direct]

    @property
    def other_images(self) -> tuple[Image, ...]:
        """Explicit images after the leading ones."""
        return self.explicit[self.direct :]


@dataclass(frozen=True)
class Greens:
    """Green's function of a soil model, ready for assembly and surface evaluation.

    Attributes
    ----------
    pairs : dict
        ``(observer_layer, source_layer) -> PairKernel`` for observers on
        buried segments; layers are 0 (upper, or the only layer) and 1.
    surface : dict
        ``source_layer -> PairKernel`` for observers on the earth surface
        (z = 0); images that coincide there are merged.
    description : str
        How the series was built, for the report.
    terms : int
        Largest number of image terms summed for any potential (explicit
        images plus tail terms up to the tolerance).
    explicit_terms : int
        Largest number of explicit images of any layer pair.
    tail_function : callable or None
        ``T(d, v)`` evaluator (vectorised), ``None`` without tails.
    radial_far : dict or None
        ``(lo, ls, z_o, z_s) -> RadialSums``: sums over the non-leading
        images for horizontal segments at fixed depths (keys from
        :func:`groundcalc.soil.twolayer.depth_key`), used for distant pairs;
        ``None`` for uniform soil.
    radial_surface : dict or None
        ``(ls, z_s) -> RadialSums``: the same for surface observers.
    radial_near, radial_surface_near : dict or None
        The same over the tails only, for near pairs (the explicit images
        are integrated exactly there).
    tolerance : float
        Relative truncation tolerance of the image series.
    notes : tuple of str
        Plain-language remarks for the report.
    """

    pairs: dict[tuple[int, int], PairKernel]
    surface: dict[int, PairKernel]
    description: str
    terms: int
    explicit_terms: int
    tail_function: Callable[[np.ndarray, np.ndarray], np.ndarray] | None = None
    radial_far: dict | None = None
    radial_surface: dict | None = None
    radial_near: dict | None = None
    radial_surface_near: dict | None = None
    tolerance: float = 0.0
    notes: tuple[str, ...] = field(default=())

    @property
    def layered(self) -> bool:
        """True when any image series needs tables (two-layer soil)."""
        return self.radial_far is not None or self.tail_function is not None


def uniform_greens(soil: Soil) -> Greens:
    """Images of a uniform half-space with an insulating surface.

    Parameters
    ----------
    soil : Soil
        Soil model; only ``rho1_ohm_m`` is used.

    Returns
    -------
    Greens
        The source itself and its mirror image in the surface, both with
        weight rho; on the surface the two coincide (weight 2 rho).

    References
    ----------
    Method of images for a half-space; e.g. E. D. Sunde, *Earth Conduction
    Effects in Transmission Systems*, Dover, 1968, ch. 2.
    """
    rho = soil.rho1_ohm_m
    terms = PairKernel((Image(rho, 1, 0.0), Image(rho, -1, 0.0)), (), 2)
    on_surface = PairKernel((Image(2.0 * rho, 1, 0.0),), (), 1)
    # the same kernel for every layer label, so segments split at a depth still see uniform soil
    return Greens(
        pairs={(lo, ls): terms for lo in (0, 1) for ls in (0, 1)},
        surface={0: on_surface, 1: on_surface},
        description="uniform soil: source and surface image",
        terms=2,
        explicit_terms=2,
    )
