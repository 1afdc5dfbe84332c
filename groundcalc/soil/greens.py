"""The Green's-function interface of a soil model: explicit images, radial sums and tails.

The potential at observer point P = (x, y, z) of a point current I at
Q = (x', y', z') in soil with an insulating surface at z = 0 (depth positive
down) is written as

    V(P) = I / (4 pi) * [ sum_k  w_k / |P - Q_k|  +  sum_f  w_f T(d, v_f) ]

* **Explicit images** ``Q_k = (x', y', s_k z' + t_k)`` with weight ``w_k``
  (ohm*m), sign ``s_k`` (+1 shifted copy, -1 mirrored copy) and shift
  ``t_k`` (m). Every image is moved in depth only, so the image of a straight
  segment is again a straight segment and the segment integrals of
  :mod:`groundcalc.mom.integrals` apply term by term. The first few
  (*leading*) images are the ones a distant observer sums one by one.
* **Tails**: what is left of an infinite image series after its explicit
  terms. ``T(d, v) = sum_{m>=0} K^m / sqrt(d^2 + (v + 2 m H)^2)`` with ``d``
  the horizontal distance and ``v = a z + b z' + c`` a linear function of the
  two depths. Tails are only formed from images that are far from every
  observer (``v`` is at least the near distance), so they are smooth and a
  low-order rule integrates them accurately.
* **Radial sums**: for horizontal segments at fixed depths every image sits at
  a fixed vertical offset, so ``S_p(d) = sum w / R^p`` (p = 1, 3, 5) over a
  set of images and tails is a function of the horizontal distance alone. A
  soil model may tabulate them; they give the corrected mid-point rule of
  :mod:`groundcalc.mom.operator` without a loop over images.

:class:`GreensFunction` is the protocol every soil model implements; the
operator in :mod:`groundcalc.mom.operator` is its only user. How a model
stores its images and tables (depth keys, dictionaries, image families) is
private to it. :func:`groundcalc.soil.registry.greens_for` picks the
implementation registered for a :class:`~groundcalc.model.Soil` model.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Literal, Protocol, runtime_checkable

import numpy as np

__all__ = [
    "KernelLookup",
    "PairKernel",
    "SURFACE",
    "DepthRanges",
    "Greens",
    "GreensFunction",
    "Image",
    "RadialPart",
    "Tail",
]

#: Observer "layer" of points on the earth surface (z = 0); buried observers use 0 (upper) and 1.
SURFACE = -1

#: Which images a radial sum covers: every image but the leading ones, or the tails only.
RadialPart = Literal["far", "tails"]


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
        Coefficients of observer and source depth in ``v`` (each +1, -1 or 0).
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
    """Images of one (observer layer, source layer) pair, for models built from image series.

    ``explicit`` are integrated exactly; the first ``direct`` of them are the
    leading images, which distant pairs sum one by one; the rest are in the
    radial tables there. ``tails`` are the smooth remainders.
    """

    explicit: tuple[Image, ...]
    tails: tuple[Tail, ...] = ()
    direct: int = 0

    @property
    def direct_images(self) -> tuple[Image, ...]:
        return self.explicit[: self.direct]

    @property
    def other_images(self) -> tuple[Image, ...]:
        return self.explicit[self.direct :]


class KernelLookup:
    """The image part of :class:`GreensFunction` for models that keep one :class:`PairKernel`
    per buried layer pair (``_pairs``) and per source layer seen from the surface (``_surface``)."""

    _pairs: dict[tuple[int, int], PairKernel]
    _surface: dict[int, PairKernel]

    def _kernel(self, layer_o: int, layer_s: int) -> PairKernel:
        kern = self._surface.get(layer_s) if layer_o == SURFACE else self._pairs.get((layer_o, layer_s))
        return kern if kern is not None else PairKernel(())

    def layer_pairs(self) -> list[tuple[int, int]]:
        return list(self._pairs)

    def images(self, layer_o: int, layer_s: int) -> tuple[Image, ...]:
        return self._kernel(layer_o, layer_s).explicit

    def leading_images(self, layer_o: int, layer_s: int) -> tuple[Image, ...]:
        return self._kernel(layer_o, layer_s).direct_images

    def tails(self, layer_o: int, layer_s: int) -> tuple[Tail, ...]:
        return self._kernel(layer_o, layer_s).tails


@dataclass(frozen=True)
class DepthRanges:
    """What a Green's function must serve: depth ranges and distances.

    Attributes
    ----------
    layers : dict
        ``layer -> (z_min, z_max)`` of the segment points in that layer. [m]
    horizontal_depths : dict
        ``layer -> tuple of depths`` of horizontal segments. [m]
    near_m : float
        Images closer than this to an observer are explicit. [m]
    far_m : float
        Smallest horizontal distance of the far-field path. [m]
    extent_m : float
        Largest horizontal distance tables need to cover (grid plus surface
        margin); beyond it a model evaluates its series directly. [m]
    """

    layers: dict[int, tuple[float, float]]
    horizontal_depths: dict[int, tuple[float, ...]]
    near_m: float
    far_m: float
    extent_m: float


@runtime_checkable
class GreensFunction(Protocol):
    """Green's function of a soil model, prepared for one set of segments.

    Layers are labelled 0 (upper, or the only layer) and 1 (lower); the
    observer layer :data:`SURFACE` stands for points on the earth surface,
    where images that coincide are merged.

    Attributes
    ----------
    description : str
        How the function was built, for the report.
    terms : int
        Largest number of image terms summed for any potential.
    explicit_terms : int
        Largest number of explicit images of any layer pair.
    tolerance : float
        Relative truncation tolerance of the image series (0 when exact).
    notes : tuple of str
        Plain-language remarks for the report.
    """

    description: str
    terms: int
    explicit_terms: int
    tolerance: float
    notes: tuple[str, ...]

    def layer_pairs(self) -> Iterable[tuple[int, int]]:
        """``(observer layer, source layer)`` pairs of buried segments that have images."""
        ...

    def images(self, layer_o: int, layer_s: int) -> tuple[Image, ...]:
        """Every explicit image, the leading ones first."""
        ...

    def leading_images(self, layer_o: int, layer_s: int) -> tuple[Image, ...]:
        """The leading images (summed one by one for distant pairs)."""
        ...

    def tails(self, layer_o: int, layer_s: int) -> tuple[Tail, ...]:
        """Smooth remainders of the image series after the explicit images."""
        ...

    def tail_sum(self, d: np.ndarray, v: np.ndarray) -> np.ndarray:
        """``T(d, v)`` at horizontal distances ``d`` and arguments ``v`` (same shape). [1/m]"""
        ...

    def radial_sums(
        self, layer_o: int, layer_s: int, z_o: float, z_s: float, part: RadialPart
    ) -> Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray]] | None:
        """``d -> (S1, S3, S5)`` for horizontal segments at depths ``z_o``, ``z_s``, if tabulated.

        ``part`` ``"far"`` covers every image but the leading ones and the
        tails; ``"tails"`` the tails only. ``None`` when the model has no
        such sums for these depths (callers then integrate images and tails
        one by one). The sums are right at every distance: a table evaluates
        its series directly outside its range. [ohm*m/m^p]
        """
        ...


#: Type name used across the package for any Green's function.
Greens = GreensFunction
