"""Segments that are copies of one another: horizontal segments and classes of repeats.

In a grid many segments are copies of one another shifted in plan (same
direction, length, depth, radius and layer). The matrix assembly evaluates
the entries of such a class once per distinct plan offset, and the surface
raster convolves their currents with one kernel.
"""

from __future__ import annotations

import numpy as np

from .segments import Segments

__all__ = ["horizontal_mask", "segment_classes", "vertical_mask"]


def horizontal_mask(segments: Segments) -> np.ndarray:
    """True for segments whose two ends are at the same depth."""
    dz = np.abs(segments.b[:, 2] - segments.a[:, 2])
    return dz <= 1e-12 * np.maximum(segments.length, 1e-300)


def vertical_mask(segments: Segments) -> np.ndarray:
    """True for segments whose two ends have the same plan position (rods)."""
    dxy = np.hypot(segments.b[:, 0] - segments.a[:, 0], segments.b[:, 1] - segments.a[:, 1])
    return dxy <= 1e-12 * np.maximum(segments.length, 1e-300)


def segment_classes(segments: Segments) -> np.ndarray:
    """Class of each segment: equal direction (either sense), length, depth, radius and layer."""
    length = segments.length
    e = (segments.b - segments.a) / length[:, None]
    # either sense of a segment gives the same entries
    first = np.argmax(np.abs(e) > 1e-12, axis=1)
    sign = np.sign(e[np.arange(len(e)), first])
    e = e * sign[:, None]
    key = np.column_stack(
        [
            np.rint(e * 1e9),
            np.rint(length * 1e9),
            np.rint(segments.mid[:, 2] * 1e9),
            np.rint(segments.radius * 1e12),
            segments.layer,
        ]
    ).astype(np.int64)
    _, cls = np.unique(key, axis=0, return_inverse=True)
    return cls.reshape(-1)
