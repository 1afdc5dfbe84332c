"""Uniform soil: the source and its mirror image in the insulating surface."""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

from ..model import Soil
from .greens import SURFACE, DepthRanges, Image, RadialPart, Tail

__all__ = ["UniformGreens", "uniform_greens"]


class UniformGreens:
    """Green's function of a uniform half-space with an insulating surface.

    Parameters
    ----------
    soil : Soil
        Soil model; only ``rho1_ohm_m`` is used.

    Notes
    -----
    Two images of weight rho: the source itself and its mirror in the
    surface; on the surface the two coincide (one image of weight 2 rho).
    The same images serve every layer label, so segments split at some depth
    still see uniform soil. There are no tails and no radial sums.

    References
    ----------
    Method of images for a half-space; e.g. E. D. Sunde, *Earth Conduction
    Effects in Transmission Systems*, Dover, 1968, ch. 2.
    """

    description = "uniform soil: source and surface image"
    terms = 2
    explicit_terms = 2
    tolerance = 0.0
    notes: tuple[str, ...] = ()

    def __init__(self, soil: Soil) -> None:
        rho = soil.rho1_ohm_m
        self._buried = (Image(rho, 1, 0.0), Image(rho, -1, 0.0))
        self._surface = (Image(2.0 * rho, 1, 0.0),)

    def layer_pairs(self) -> Iterable[tuple[int, int]]:
        return [(layer_o, layer_s) for layer_o in (0, 1) for layer_s in (0, 1)]

    def images(self, layer_o: int, layer_s: int) -> tuple[Image, ...]:
        return self._surface if layer_o == SURFACE else self._buried

    def leading_images(self, layer_o: int, layer_s: int) -> tuple[Image, ...]:
        return self.images(layer_o, layer_s)

    def tails(self, layer_o: int, layer_s: int) -> tuple[Tail, ...]:
        return ()

    def tail_sum(self, d: np.ndarray, v: np.ndarray) -> np.ndarray:
        raise ValueError("uniform soil has no image tails")

    def radial_sums(self, layer_o: int, layer_s: int, z_o: float, z_s: float, part: RadialPart):
        return None


def uniform_greens(soil: Soil, ranges: DepthRanges | None = None, tol: float = 0.0) -> UniformGreens:
    """Green's function of uniform soil (``ranges`` and ``tol`` are not needed)."""
    return UniformGreens(soil)
