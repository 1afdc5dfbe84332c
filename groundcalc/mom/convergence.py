"""Estimate of the discretisation error from a second, coarser solve.

The geometry is solved a second time with twice the target segment length (the
same grading rule, so a coarser member of the same family of meshes). With two
levels h and 2h and an assumed order of convergence p, Richardson's estimate of
the error of the fine result X_h is

    X_h - X_0 ~ (X_h - X_2h) / (2^p - 1).

The order is taken as p = 1, about the lowest order measured for rod-and-grid
layouts with graded segments (tests/test_convergence.py: 1.1 and 1.2 in uniform
soil, 1.4 in two-layer soil from 1 / 0.5 / 0.25 m; coarser two-layer levels were
still pre-asymptotic at 0.9, where the estimate is somewhat low). A higher true
order makes the estimate an overestimate, so p = 1 is the cautious choice.

Why a coarser and not a finer level: the coarse solve has about half the
unknowns, so its assembly costs about a quarter and its factorisation an eighth
of the main solve, and the touch voltage needs the coarse surface potential at
one point only (the location of the main maximum). A twice-finer check would
cost four to eight times the main solve. When doubling the target length
hardly coarsens the mesh (the pieces between crossings are already one or two
segments long: more than ``COARSE_MIN_SAVING`` of the segments remain), the
coarse level cannot see the error, and a finer level (half the target
length) is used instead, at its higher cost; then ``(X_h - X_h/2) / (1 - 2^-p)``.

The estimate covers the segment length. It does not cover the thin-wire model
itself (for example the end of a rod, see :mod:`groundcalc.geometry.segments`),
the soil model or the raster search.

References
----------
L. F. Richardson, "The deferred approach to the limit", Phil. Trans. R. Soc.
A 226, 1927, pp. 299-361; P. J. Roache, *Verification and Validation in
Computational Science and Engineering*, Hermosa, 1998 (grid convergence index
with a safety factor on the two-level estimate).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "ASSUMED_ORDER",
    "COARSE_MIN_SAVING",
    "WARN_RELATIVE",
    "DiscretisationError",
    "richardson_error",
]

#: Order of convergence assumed in the two-level estimate.
ASSUMED_ORDER = 1.0
#: A coarse level with more than this fraction of the segments is replaced by a finer level.
COARSE_MIN_SAVING = 0.75
#: Relative error above which a run carries a warning.
WARN_RELATIVE = 0.01


def richardson_error(fine: float, coarse: float, ratio: float = 2.0, order: float = ASSUMED_ORDER) -> float:
    """Estimated relative error of ``fine`` from two levels (Richardson).

    Parameters
    ----------
    fine, coarse : float
        The result to be judged (segment length h) and the other level
        (segment length ``ratio * h``).
    ratio : float
        Ratio of the segment lengths: 2 for a coarser check level, 0.5 for a
        finer one.
    order : float
        Assumed order of convergence p.

    Returns
    -------
    float
        ``|fine - coarse| / (|ratio^p - 1| |fine|)`` for a coarser level and
        ``|fine - coarse| / ((1 - ratio^p) |fine|)`` for a finer one (the same
        formula); NaN when ``fine`` is zero.

    References
    ----------
    Richardson (1927); Roache (1998), ch. 5.
    """
    if fine == 0.0 or not np.isfinite(fine) or not np.isfinite(coarse):
        return float("nan")
    return abs(fine - coarse) / (abs(ratio**order - 1.0) * abs(fine))


@dataclass(frozen=True)
class DiscretisationError:
    """Two-level estimate of the discretisation error.

    Attributes
    ----------
    resistance_rel : float
        Estimated relative error of the grid resistance.
    touch_rel : float or None
        Estimated relative error of the largest touch voltage (at its location).
    segment_length_m, coarse_segment_length_m : float
        Target segment lengths of the two levels. [m]
    segments, coarse_segments : int
        Segment counts of the two levels.
    coarse_resistance_ohm : float
        Grid resistance of the coarse level. [ohm]
    seconds : float
        Time taken by the coarse level. [s]
    order : float
        Assumed order of convergence.
    """

    resistance_rel: float
    touch_rel: float | None
    segment_length_m: float
    coarse_segment_length_m: float
    segments: int
    coarse_segments: int
    coarse_resistance_ohm: float
    seconds: float
    order: float = ASSUMED_ORDER

    @property
    def largest_rel(self) -> float:
        """The larger of the two relative errors."""
        vals = [v for v in (self.resistance_rel, self.touch_rel) if v is not None and np.isfinite(v)]
        return max(vals) if vals else float("nan")

    @property
    def exceeds_warning(self) -> bool:
        """True when either estimate exceeds ``WARN_RELATIVE``."""
        return bool(self.largest_rel > WARN_RELATIVE)
