"""Integrals of the thin-wire kernel over straight segments.

Every function here integrates the regularised kernel

    g(R) = 1 / sqrt(R**2 + a**2)

over one or two straight segments, where ``R`` is the distance between a point
on the observer and a point on the source axis and ``a`` is the conductor radius
(the *reduced kernel* of thin-wire theory: source current on the axis,
observation on the conductor surface). For separations much larger than ``a``
the kernel is the plain 1/R of a point source.

The results are purely geometric (unit: metre for single integrals is
dimensionless, double integrals are in metres). Multiply by
``rho / (4 pi)`` and divide by the segment lengths to get potentials.

All functions are vectorised: array arguments are broadcast elementwise.

References
----------
.. [1] H. B. Dwight, "Calculation of resistances to ground", AIEE
   Transactions, vol. 55, pp. 1319-1328, 1936.
.. [2] R. F. Harrington, *Field Computation by Moment Methods*, Macmillan,
   1968, ch. 1 (Galerkin testing, thin-wire reduced kernel).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "gauss_legendre_unit",
    "line_integral",
    "near_pair_integral",
    "parallel_pair_integral",
    "perpendicular_pair_integral",
]


def line_integral(p: np.ndarray, a: np.ndarray, b: np.ndarray, radius2: np.ndarray | float) -> np.ndarray:
    """Integral of ``g`` over segment AB as seen from point P.

    Implements ``ln((r1 + r2 + L) / (r1 + r2 - L))``, the potential of a
    uniform line source, in a form without cancellation for points near the
    segment or far from it.

    Parameters
    ----------
    p, a, b : array_like, shape (..., 3)
        Observation point and segment end points. [m]
    radius2 : array_like
        Square of the regularising radius added to every squared distance.
        [m^2]

    Returns
    -------
    numpy.ndarray
        ``integral_A^B g(|P - Q|) dl(Q)``. [dimensionless]

    References
    ----------
    Dwight (1936), potential of a uniformly charged line segment; the closed
    form is standard (e.g. Harrington 1968, sec. 1.5).
    """
    ab = b - a
    length = np.sqrt(np.einsum("...i,...i->...", ab, ab))
    e = ab / length[..., None]
    pa = p - a
    u1 = np.einsum("...i,...i->...", pa, e)
    perp = pa - u1[..., None] * e
    rho2 = np.einsum("...i,...i->...", perp, perp) + radius2
    u2 = u1 - length
    r1 = np.sqrt(u1 * u1 + rho2)
    r2 = np.sqrt(u2 * u2 + rho2)
    # r1 + r2 - L = (r1 - u1) + (r2 + u2); each bracket is evaluated without
    # cancellation: r - u = rho^2 / (r + u) when u > 0.
    p1 = np.where(u1 > 0.0, rho2 / (r1 + np.abs(u1)), r1 - u1)
    q2 = np.where(u2 < 0.0, rho2 / (r2 + np.abs(u2)), r2 + u2)
    return np.log1p(2.0 * length / (p1 + q2))


def _f_parallel(u: np.ndarray, d: np.ndarray) -> np.ndarray:
    return u * np.arcsinh(u / d) - np.sqrt(u * u + d * d)


def parallel_pair_integral(s: np.ndarray, l1: np.ndarray, l2: np.ndarray, d2: np.ndarray) -> np.ndarray:
    """Double integral of ``g`` over two parallel segments.

    The observer lies on ``[0, l1]`` and the source on ``[s, s + l2]`` along
    the common direction; their axes are a distance ``d`` apart.

    Parameters
    ----------
    s : array_like
        Offset of the source start from the observer start along the common
        direction. [m]
    l1, l2 : array_like
        Observer and source lengths. [m]
    d2 : array_like
        Squared axis separation plus squared radius (must be > 0). [m^2]

    Returns
    -------
    numpy.ndarray
        ``integral integral g dl1 dl2``. [m]

    Notes
    -----
    With ``F(u) = u asinh(u/d) - sqrt(u^2 + d^2)`` the integral is
    ``F(s + l2) - F(s) - F(s + l2 - l1) + F(s - l1)``. The four terms cancel
    for distant pairs (relative error grows like eps (R/L)^2); callers use a
    quadrature rule there.

    References
    ----------
    Standard result, e.g. F. W. Grover, *Inductance Calculations*, 1946,
    ch. 4 (mutual inductance of parallel filaments: the same double integral).
    """
    d = np.sqrt(d2)
    return _f_parallel(s + l2, d) - _f_parallel(s, d) - _f_parallel(s + l2 - l1, d) + _f_parallel(s - l1, d)


def _g_perpendicular(x: np.ndarray, y: np.ndarray, c: np.ndarray) -> np.ndarray:
    x2 = x * x
    y2 = y * y
    c2 = c * c
    r = np.sqrt(x2 + y2 + c2)
    return x * np.arcsinh(y / np.sqrt(x2 + c2)) + y * np.arcsinh(x / np.sqrt(y2 + c2)) - c * np.arctan(x * y / (c * r))


def perpendicular_pair_integral(
    x1: np.ndarray,
    x2: np.ndarray,
    y1: np.ndarray,
    y2: np.ndarray,
    c2: np.ndarray,
) -> np.ndarray:
    """Double integral of ``g`` over two perpendicular segments.

    The observer runs along x on ``[x1, x2]``, the source along y on
    ``[y1, y2]``; the origin is where their axes cross in plan of the common
    normal, and ``c`` is the offset between the axes along that normal.

    Parameters
    ----------
    x1, x2, y1, y2 : array_like
        Segment extents relative to the crossing point. [m]
    c2 : array_like
        Squared axis offset plus squared radius (must be > 0). [m^2]

    Returns
    -------
    numpy.ndarray
        ``integral integral dx dy / sqrt(x^2 + y^2 + c^2)``. [m]

    Notes
    -----
    Antiderivative ``G(x, y) = x asinh(y / sqrt(x^2 + c^2)) + y asinh(x /
    sqrt(y^2 + c^2)) - c atan(x y / (c sqrt(x^2 + y^2 + c^2)))``; the result is
    ``G(x2, y2) - G(x1, y2) - G(x2, y1) + G(x1, y1)``. The regularising
    radius keeps ``c > 0`` so no limit is needed.

    References
    ----------
    Standard result, e.g. Grover (1946), ch. 4; checked against numerical
    quadrature in the tests.
    """
    c = np.sqrt(c2)
    return (
        _g_perpendicular(x2, y2, c)
        - _g_perpendicular(x1, y2, c)
        - _g_perpendicular(x2, y1, c)
        + _g_perpendicular(x1, y1, c)
    )


_GAUSS_CACHE: dict[int, tuple[np.ndarray, np.ndarray]] = {}


def gauss_legendre_unit(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes on [0, 1] and weights summing to 1.

    Parameters
    ----------
    n : int
        Number of points.

    Returns
    -------
    (nodes, weights) : tuple of numpy.ndarray
        Nodes in [0, 1] and weights (sum 1).
    """
    if n not in _GAUSS_CACHE:
        x, w = np.polynomial.legendre.leggauss(n)
        _GAUSS_CACHE[n] = (0.5 * (x + 1.0), 0.5 * w)
    return _GAUSS_CACHE[n]


#: Gauss points on the observer for oblique pairs that are close together.
OBLIQUE_POINTS = 16


def _dot(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    return np.einsum("ij,ij->i", u, v)


def near_pair_integral(
    oa: np.ndarray,
    ob: np.ndarray,
    sa: np.ndarray,
    sb: np.ndarray,
    radius2: np.ndarray,
) -> np.ndarray:
    """Double integral of ``g`` over observer and source segments, pairwise, at any distance.

    Closed forms for parallel and perpendicular pairs, Gauss points on the
    observer with the exact line integral for other pairs. For pairs many
    segment lengths apart the four-term closed forms lose digits to
    cancellation; :mod:`groundcalc.mom.operator` uses the corrected mid-point
    rule there.

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
    return _near_pair(oa, do, np.sqrt(_dot(do, do)), sa, sb, ds, np.sqrt(_dot(ds, ds)), radius2)


def _near_pair(oa, do, len_o, sa, sb, ds, len_s, radius2) -> np.ndarray:
    eo = do / len_o[:, None]
    es = ds / len_s[:, None]
    cos = _dot(eo, es)
    out = np.empty(oa.shape[0])

    par = np.abs(cos) > 1.0 - 1e-10
    if par.any():
        flip = cos[par] < 0.0
        start = np.where(flip[:, None], sb[par], sa[par])
        w = start - oa[par]
        s = _dot(w, eo[par])
        perp = w - s[:, None] * eo[par]
        out[par] = parallel_pair_integral(s, len_o[par], len_s[par], _dot(perp, perp) + radius2[par])

    orth = np.abs(cos) < 1e-10
    if orth.any():
        e1 = eo[orth]
        e2 = es[orth]
        nrm = np.cross(e1, e2)
        w = oa[orth] - sa[orth]
        x1 = _dot(w, e1)
        y1 = -_dot(w, e2)
        c = _dot(w, nrm)
        out[orth] = perpendicular_pair_integral(x1, x1 + len_o[orth], y1, y1 + len_s[orth], c * c + radius2[orth])

    other = ~par & ~orth
    if other.any():
        t, wts = gauss_legendre_unit(OBLIQUE_POINTS)
        acc = np.zeros(int(other.sum()))
        a0 = oa[other]
        d0 = do[other]
        s0, s1, r2 = sa[other], sb[other], radius2[other]
        for ti, wi in zip(t, wts, strict=True):
            acc += wi * line_integral(a0 + ti * d0, s0, s1, r2)
        out[other] = acc * len_o[other]
    return out
