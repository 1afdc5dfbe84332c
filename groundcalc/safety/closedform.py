"""IEEE Std 80 hand-method checks beside the numerical solution.

The closed forms of IEEE Std 80 (Sverak, Laurent-Niemann and Schwarz grid
resistance; mesh voltage Em and step voltage Es) are evaluated for the
design's layout, and every conductor is checked against the cross-section
the fault current needs (Eq. 37). The method-of-moments solution is the
design value; the closed forms are a sanity check with known limits.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..geometry.footprint import Footprint
from ..model import Design
from .ieee80 import (
    effective_parallel_count,
    irregularity_factor,
    laurent_niemann_resistance,
    mesh_effective_length,
    mesh_factor,
    mesh_voltage,
    schwarz_k1_k2,
    schwarz_resistance,
    step_effective_length,
    step_factor,
    step_voltage,
    sverak_resistance,
)
from .materials import MATERIALS, decrement_current_a, required_area_mm2

__all__ = [
    "ClosedForm",
    "ConductorSizing",
    "LayoutQuantities",
    "SizedConductor",
    "closed_form_check",
    "conductor_sizing",
    "layout_quantities",
]

#: A rod closer than this to the footprint boundary counts as a perimeter rod. [m]
PERIMETER_TOLERANCE_M = 0.5


@dataclass(frozen=True)
class LayoutQuantities:
    """The symbols of IEEE Std 80 clauses 14 and 16 for one layout.

    Attributes
    ----------
    lc_m : float
        Total length of horizontal conductors LC. [m]
    lr_total_m : float
        Total rod length LR. [m]
    rod_count : int
        Number of rods nR.
    rod_length_m : float
        Mean rod length Lr. [m]
    rod_radius_m : float
        Mean rod radius. [m]
    area_m2, perimeter_m, length_x_m, length_y_m, max_distance_m : float
        A, Lp, Lx, Ly and Dm of the footprint. [m^2, m]
    spacing_m : float
        Spacing D between parallel conductors. [m]
    depth_m : float
        Length-weighted burial depth h. [m]
    diameter_m : float
        Length-weighted conductor diameter d. [m]
    rods_on_perimeter : bool
        Some rods lie on the perimeter or in the corners.
    spacing_from : str
        How D was obtained.
    """

    lc_m: float
    lr_total_m: float
    rod_count: int
    rod_length_m: float
    rod_radius_m: float
    area_m2: float
    perimeter_m: float
    length_x_m: float
    length_y_m: float
    max_distance_m: float
    spacing_m: float
    depth_m: float
    diameter_m: float
    rods_on_perimeter: bool
    spacing_from: str


def _distance_to_boundary(points: np.ndarray, polygons) -> np.ndarray:
    best = np.full(points.shape[0], np.inf)
    for poly in polygons:
        a = poly
        b = np.roll(poly, -1, axis=0)
        for p0, p1 in zip(a, b, strict=True):
            d = p1 - p0
            l2 = float(d @ d)
            t = np.clip(((points - p0) @ d) / l2, 0.0, 1.0) if l2 > 0 else np.zeros(points.shape[0])
            foot = p0 + t[:, None] * d
            best = np.minimum(best, np.linalg.norm(points - foot, axis=1))
    return best


def layout_quantities(design: Design, footprint: Footprint) -> LayoutQuantities | None:
    """IEEE Std 80 layout symbols, or ``None`` when the conductors enclose no area.

    Notes
    -----
    The spacing D is the common spacing of a single ``Grids`` row with equal
    spacing in x and y, the mean of the two spacings when they differ, and
    otherwise ``D = 2 A / (LC - Lp / 2)``, which is exact for a square or
    rectangular grid of equal spacing (LC = 2 A / D + Lp / 2) and a
    reasonable average for other layouts.
    """
    if footprint.empty:
        return None
    horiz = [c for c in design.all_conductors() if c.kind != "rod"]
    lengths = np.array([c.length_m for c in horiz])
    lc = float(lengths.sum())
    depth = float(np.sum(lengths * np.array([(c.start[2] + c.end[2]) / 2 for c in horiz])) / lc)
    diam = float(np.sum(lengths * np.array([c.diameter_m for c in horiz])) / lc)
    rods = design.rods
    lr = float(sum(r.length_m for r in rods))
    on_perimeter = False
    if rods:
        xy = np.array([[r.x_m, r.y_m] for r in rods])
        on_perimeter = bool(np.any(_distance_to_boundary(xy, footprint.polygons) <= PERIMETER_TOLERANCE_M))
    a, lp = footprint.area_m2, footprint.perimeter_m
    if len(design.grids) == 1 and not design.conductors:
        g = design.grids[0]
        dx = g.length_x_m / (g.n_along_y - 1)
        dy = g.length_y_m / (g.n_along_x - 1)
        spacing = 0.5 * (dx + dy)
        how = "grid spacing" if math.isclose(dx, dy, rel_tol=1e-9) else "mean of the x and y spacings"
    else:
        spacing = 2.0 * a / (lc - 0.5 * lp) if lc > 0.5 * lp else math.inf
        how = "estimated as 2A / (LC - Lp/2)"
    return LayoutQuantities(
        lc,
        lr,
        len(rods),
        lr / len(rods) if rods else 0.0,
        float(np.mean([r.diameter_m / 2 for r in rods])) if rods else 0.0,
        a,
        lp,
        footprint.length_x_m,
        footprint.length_y_m,
        footprint.max_distance_m,
        spacing,
        depth,
        diam,
        on_perimeter,
        how,
    )


@dataclass(frozen=True)
class ClosedForm:
    """IEEE Std 80 closed-form results for one layout.

    Attributes
    ----------
    layout : LayoutQuantities
        Inputs taken from the layout.
    rho_ohm_m : float
        Resistivity used (the upper layer in two-layer soil). [ohm*m]
    sverak_ohm, laurent_niemann_ohm, schwarz_ohm : float
        Grid resistance by Eqs. (52), (51) and (53)-(56). [ohm]
    n, na, nb, nc, nd : float
        Effective number of parallel conductors and its factors.
    km, ki, ks : float
        Mesh, irregularity and step factors.
    lm_m, ls_m : float
        Effective lengths for the mesh and step voltages. [m]
    mesh_voltage_v, step_voltage_v : float
        Em and Es. [V]
    warnings : tuple of str
        Where the layout is outside the equations' validity limits.
    """

    layout: LayoutQuantities
    rho_ohm_m: float
    sverak_ohm: float
    laurent_niemann_ohm: float
    schwarz_ohm: float
    n: float
    na: float
    nb: float
    nc: float
    nd: float
    km: float
    ki: float
    ks: float
    lm_m: float
    ls_m: float
    mesh_voltage_v: float
    step_voltage_v: float
    warnings: tuple[str, ...]


def closed_form_check(design: Design, footprint: Footprint, grid_current_a: float) -> ClosedForm | None:
    """Evaluate the IEEE Std 80 closed forms for a design.

    Parameters
    ----------
    design : Design
        The design (its soil must already be uniform or two-layer).
    footprint : Footprint
        Grid footprint.
    grid_current_a : float
        Maximum grid current I_G. [A]

    Returns
    -------
    ClosedForm or None
        ``None`` when the layout encloses no area (the equations need a grid).

    References
    ----------
    IEEE Std 80-2000, clauses 14.2, 14.3 and 16.5 (see :mod:`groundcalc.safety.ieee80`).
    """
    q = layout_quantities(design, footprint)
    if q is None or not math.isfinite(q.spacing_m):
        return None
    rho = design.soil.rho1_ohm_m
    warn: list[str] = []
    if design.soil.model != "uniform":
        warn.append(
            "The closed forms assume uniform soil; they are evaluated with the upper-layer resistivity, "
            "which can differ much from what governs in two-layer soil."
        )
    lt = q.lc_m + q.lr_total_m
    sverak = sverak_resistance(rho, lt, q.area_m2, q.depth_m)
    ln = laurent_niemann_resistance(rho, lt, q.area_m2)
    ratio = max(q.length_x_m, q.length_y_m) / min(q.length_x_m, q.length_y_m)
    _, _, inside = schwarz_k1_k2(q.depth_m, q.area_m2, ratio)
    if not inside:
        warn.append("The grid is deeper than sqrt(A)/6, beyond the curves of IEEE Std 80 Fig. 25 used by Schwarz.")
    schwarz = schwarz_resistance(
        rho, q.lc_m, q.area_m2, q.depth_m, q.diameter_m / 2, ratio, q.rod_count, q.rod_length_m, q.rod_radius_m
    )
    n, (na, nb, nc, nd) = effective_parallel_count(
        q.lc_m, q.perimeter_m, q.area_m2, q.length_x_m, q.length_y_m, q.max_distance_m
    )
    km = mesh_factor(q.spacing_m, q.depth_m, q.diameter_m, n, q.rods_on_perimeter)
    ki = irregularity_factor(n)
    ks = step_factor(q.spacing_m, q.depth_m, n)
    lm = mesh_effective_length(q.lc_m, q.lr_total_m, q.rod_length_m, q.length_x_m, q.length_y_m, q.rods_on_perimeter)
    ls = step_effective_length(q.lc_m, q.lr_total_m)
    em = mesh_voltage(rho, km, ki, grid_current_a, lm)
    es = step_voltage(rho, ks, ki, grid_current_a, ls)
    # validity limits of the mesh and step equations, IEEE Std 80-2000 clause 16.5.1 (from memory)
    if n > 25:
        warn.append(f"n = {n:.1f} exceeds 25, the limit of the mesh and step equations.")
    if not 0.25 <= q.depth_m <= 2.5:
        warn.append(f"Depth h = {q.depth_m:.2f} m is outside 0.25 to 2.5 m, the range of the mesh and step equations.")
    if not q.diameter_m < 0.25 * q.depth_m:
        warn.append(f"Conductor diameter {q.diameter_m * 1000:.0f} mm is not below h/4, a limit of the equations.")
    if not q.spacing_m > 2.5:
        warn.append(f"Spacing D = {q.spacing_m:.2f} m is not above 2.5 m, a limit of the mesh and step equations.")
    if q.spacing_from.startswith("estimated"):
        warn.append(f"The conductor spacing D = {q.spacing_m:.2f} m is {q.spacing_from} for this irregular layout.")
    return ClosedForm(q, rho, sverak, ln, schwarz, n, na, nb, nc, nd, km, ki, ks, lm, ls, em, es, tuple(warn))


@dataclass(frozen=True)
class SizedConductor:
    """Sizing of one conductor or rod."""

    label: str
    kind: str
    material: str
    area_mm2: float
    required_mm2: float
    max_temp_c: float

    @property
    def ok(self) -> bool:
        """True when the cross-section is at least the required one."""
        return self.area_mm2 >= self.required_mm2


@dataclass(frozen=True)
class ConductorSizing:
    """Fault-current sizing of every conductor (IEEE Std 80 Eq. 37).

    Attributes
    ----------
    current_a : float
        Current each conductor is sized for, Df * 3I0. [A]
    duration_s : float
        Its duration, the fault duration. [s]
    ambient_c : float
        Ambient temperature. [degC]
    items : tuple of SizedConductor
        One per conductor and rod.
    """

    current_a: float
    duration_s: float
    ambient_c: float
    items: tuple[SizedConductor, ...]

    @property
    def ok(self) -> bool:
        """True when no conductor is undersized."""
        return all(i.ok for i in self.items)

    @property
    def undersized(self) -> tuple[SizedConductor, ...]:
        """The conductors that fail."""
        return tuple(i for i in self.items if not i.ok)

    @property
    def required_mm2(self) -> float:
        """Largest required cross-section over the materials used. [mm^2]"""
        return max(i.required_mm2 for i in self.items)


def conductor_sizing(design: Design, decrement: float) -> ConductorSizing:
    """Check every conductor and rod against the cross-section the fault current needs.

    Parameters
    ----------
    design : Design
        The design.
    decrement : float
        Decrement factor Df.

    Returns
    -------
    ConductorSizing

    Notes
    -----
    Conservatively each conductor is sized for the whole asymmetrical fault
    current Df * 3I0 for the fault duration (IEEE Std 80 clause 11.3 sizes
    for the maximum current a conductor can carry). The cross-section is
    that of a solid round conductor of the given diameter; a stranded
    conductor has less metal than its overall diameter suggests.

    References
    ----------
    IEEE Std 80-2000, clause 11.3, Eq. (37), Table 1.
    """
    f = design.fault
    current = decrement_current_a(f.fault_current_a, decrement)
    items = []
    for c in design.all_conductors():
        mat = MATERIALS[c.material]
        tm = f.max_conductor_c if f.max_conductor_c is not None else mat.fusing_c
        req = required_area_mm2(current, f.fault_duration_s, mat, f.ambient_c, tm)
        area = math.pi * (c.diameter_m * 1000.0) ** 2 / 4.0
        items.append(SizedConductor(c.label, c.kind, c.material, area, req, tm))
    return ConductorSizing(current, f.fault_duration_s, f.ambient_c, tuple(items))
