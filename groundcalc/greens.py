"""Green's functions of layered soil as sums of point images.

The potential at observer point P = (x, y, z) of a point current I at
Q = (x', y', z') in soil with an insulating surface at z = 0 (depth positive
down) is written as

    V(P) = I / (4 pi) * sum_k  w_k / |P - Q_k|,   Q_k = (x', y', s_k z' + t_k)

with weights ``w_k`` (ohm*m), signs ``s_k`` (+1 shifted copy, -1 mirrored
copy) and shifts ``t_k`` (m). Because every image is a point mirrored or
shifted in depth only, the image of a straight segment is again a straight
segment and the segment integrals of :mod:`groundcalc.kernels` apply term by
term.

This module gives the uniform-soil images. Layered soil adds its own image
series in :mod:`groundcalc.twolayer`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .model import Soil

__all__ = ["Image", "ImageSet", "uniform_images"]


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
class ImageSet:
    """Images for every (observer layer, source layer) pair.

    Attributes
    ----------
    images : dict
        ``(observer_layer, source_layer) -> tuple of Image``; layers are 0
        (upper, or the only layer) and 1 (lower).
    description : str
        How the series was built, for the report.
    terms : int
        Largest number of image terms used for any layer pair.
    """

    images: dict[tuple[int, int], tuple[Image, ...]]
    description: str
    terms: int


def uniform_images(soil: Soil) -> ImageSet:
    """Images of a uniform half-space with an insulating surface.

    Parameters
    ----------
    soil : Soil
        Soil model; only ``rho1_ohm_m`` is used.

    Returns
    -------
    ImageSet
        The source itself and its mirror image in the surface, both with
        weight rho, for layer pair (0, 0).

    References
    ----------
    Method of images for a half-space; e.g. E. D. Sunde, *Earth Conduction
    Effects in Transmission Systems*, Dover, 1968, ch. 2.
    """
    rho = soil.rho1_ohm_m
    terms = (Image(rho, 1, 0.0), Image(rho, -1, 0.0))
    return ImageSet({(0, 0): terms}, "uniform soil: source and surface image", len(terms))
