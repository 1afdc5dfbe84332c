"""Body-current limits and fault-current factors of IEEE Std 80.

Equation numbers are those of IEEE Std 80-2000 (the 2013 edition keeps them
for clauses 7 to 8 and adds five for clauses 14 to 16). Values quoted in the
tests carry their own source tags.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "BODY_CONSTANT",
    "decrement_factor",
    "effective_parallel_count",
    "grid_current_a",
    "irregularity_factor",
    "laurent_niemann_resistance",
    "mesh_effective_length",
    "mesh_factor",
    "mesh_voltage",
    "schwarz_k1_k2",
    "schwarz_resistance",
    "step_effective_length",
    "step_factor",
    "step_voltage",
    "surface_layer_factor",
    "sverak_resistance",
    "step_limit_v",
    "touch_limit_v",
]

#: Body-current constant k = sqrt(S_B) for 50 kg and 70 kg body weight, IEEE Std 80-2000,
#: Eqs. (29)-(30) and (32)-(33): 0.116 and 0.157.
BODY_CONSTANT = {50: 0.116, 70: 0.157}


def surface_layer_factor(rho_soil_ohm_m: float, rho_surface_ohm_m: float, thickness_m: float) -> float:
    """Surface-layer derating factor Cs.

    Parameters
    ----------
    rho_soil_ohm_m : float
        Resistivity of the soil beneath the surface layer. [ohm*m]
    rho_surface_ohm_m : float
        Resistivity of the surface layer material. [ohm*m]
    thickness_m : float
        Surface layer thickness h_s. [m]

    Returns
    -------
    float
        Cs (1.0 when the surface layer is no more resistive than the soil is
        not assumed: the formula is applied as written).

    Notes
    -----
    ``Cs = 1 - 0.09 (1 - rho / rho_s) / (2 h_s + 0.09)``; the standard states
    it agrees with its exact series within 5 %.

    References
    ----------
    IEEE Std 80-2000, clause 7.4, Eq. (27).
    """
    return 1.0 - 0.09 * (1.0 - rho_soil_ohm_m / rho_surface_ohm_m) / (2.0 * thickness_m + 0.09)


def _body_k(body_weight_kg: float) -> float:
    key = int(round(body_weight_kg))
    if key not in BODY_CONSTANT:
        raise ValueError(f"body weight must be 50 or 70 kg, got {body_weight_kg}")
    return BODY_CONSTANT[key]


def touch_limit_v(cs: float, rho_surface_ohm_m: float, shock_duration_s: float, body_weight_kg: float) -> float:
    """Tolerable touch voltage.

    Parameters
    ----------
    cs : float
        Surface layer derating factor (1 without a surface layer).
    rho_surface_ohm_m : float
        Resistivity under the feet: the surface layer, or the soil when there
        is none. [ohm*m]
    shock_duration_s : float
        Shock duration t_s. [s]
    body_weight_kg : float
        50 or 70. [kg]

    Returns
    -------
    float
        ``(1000 + 1.5 Cs rho_s) k / sqrt(t_s)``. [V]

    Notes
    -----
    Dalziel's fibrillation limit; valid for 0.03 s <= t_s <= 3 s.

    References
    ----------
    IEEE Std 80-2000, clause 8.3, Eqs. (32) (50 kg) and (33) (70 kg).
    """
    return (1000.0 + 1.5 * cs * rho_surface_ohm_m) * _body_k(body_weight_kg) / math.sqrt(shock_duration_s)


def step_limit_v(cs: float, rho_surface_ohm_m: float, shock_duration_s: float, body_weight_kg: float) -> float:
    """Tolerable step voltage.

    Parameters are those of :func:`touch_limit_v`.

    Returns
    -------
    float
        ``(1000 + 6 Cs rho_s) k / sqrt(t_s)``. [V]

    References
    ----------
    IEEE Std 80-2000, clause 8.3, Eqs. (29) (50 kg) and (30) (70 kg).
    """
    return (1000.0 + 6.0 * cs * rho_surface_ohm_m) * _body_k(body_weight_kg) / math.sqrt(shock_duration_s)


def decrement_factor(x_over_r: float, fault_duration_s: float, frequency_hz: float) -> float:
    """Decrement factor Df for the DC offset of an asymmetrical fault.

    Parameters
    ----------
    x_over_r : float
        System X/R ratio at the fault location.
    fault_duration_s : float
        Fault duration t_f. [s]
    frequency_hz : float
        System frequency. [Hz]

    Returns
    -------
    float
        ``Df = sqrt(1 + (Ta / tf) (1 - exp(-2 tf / Ta)))`` with
        ``Ta = (X/R) / (2 pi f)``; 1.0 when X/R is zero.

    References
    ----------
    IEEE Std 80-2000, clause 15.10, Eq. (79) and Table 10.

    Notes
    -----
    ``1 - exp(-x)`` is evaluated as ``-expm1(-x)``, so that a very large
    Ta / tf tends to the true limit Df = sqrt(3) instead of rounding to 1.
    """
    if x_over_r <= 0.0:
        return 1.0
    ta = x_over_r / (2.0 * math.pi * frequency_hz)
    return math.sqrt(1.0 + ta / fault_duration_s * -math.expm1(-2.0 * fault_duration_s / ta))


def grid_current_a(fault_current_a: float, split_factor: float, decrement: float) -> float:
    """Maximum grid current I_G = Df * Sf * 3I0.

    Parameters
    ----------
    fault_current_a : float
        Symmetrical rms ground-fault current 3I0. [A]
    split_factor : float
        Current division factor Sf.
    decrement : float
        Decrement factor Df.

    Returns
    -------
    float
        I_G. [A]

    References
    ----------
    IEEE Std 80-2000, clause 15 (Ig = Sf 3I0, I_G = Df Ig), from memory of the
    equation numbers (Eqs. (63) and (64)).
    """
    return decrement * split_factor * fault_current_a


# ---------------------------------------------------------------------------
# Grid resistance (clause 14) and mesh and step voltages (clause 16).
# Equation numbers of IEEE Std 80-2000; the 2013 edition numbers them five higher.
# ---------------------------------------------------------------------------


def sverak_resistance(rho_ohm_m: float, total_length_m: float, area_m2: float, depth_m: float) -> float:
    """Grid resistance by Sverak's formula.

    Parameters
    ----------
    rho_ohm_m : float
        Soil resistivity. [ohm*m]
    total_length_m : float
        Total buried length LT of conductors and rods. [m]
    area_m2 : float
        Area A occupied by the grid. [m^2]
    depth_m : float
        Burial depth h. [m]

    Returns
    -------
    float
        ``Rg = rho [1/LT + 1/sqrt(20 A) (1 + 1/(1 + h sqrt(20/A)))]``. [ohm]

    Notes
    -----
    For 0.25 m <= h <= 2.5 m; assumes uniform soil.

    References
    ----------
    IEEE Std 80-2000, clause 14.2, Eq. (52) (Eq. (57) in IEEE Std 80-2013).
    """
    a = area_m2
    return rho_ohm_m * (
        1.0 / total_length_m + 1.0 / math.sqrt(20.0 * a) * (1.0 + 1.0 / (1.0 + depth_m * math.sqrt(20.0 / a)))
    )


def laurent_niemann_resistance(rho_ohm_m: float, total_length_m: float, area_m2: float) -> float:
    """Grid resistance by Laurent and Niemann: ``(rho/4) sqrt(pi/A) + rho/LT``. [ohm]

    References
    ----------
    IEEE Std 80-2000, clause 14.2, Eq. (51).
    """
    return rho_ohm_m / 4.0 * math.sqrt(math.pi / area_m2) + rho_ohm_m / total_length_m


def schwarz_k1_k2(depth_m: float, area_m2: float, length_to_width: float) -> tuple[float, float, bool]:
    """Coefficients k1, k2 of Schwarz's equations from the curve fits of Fig. 25.

    Parameters
    ----------
    depth_m : float
        Grid depth h. [m]
    area_m2 : float
        Grid area A. [m^2]
    length_to_width : float
        Length-to-width ratio x of the grid (>= 1).

    Returns
    -------
    (k1, k2, inside) : tuple
        Interpolated linearly in h between the curves for h = 0,
        h = sqrt(A)/10 and h = sqrt(A)/6; ``inside`` is False when h is
        beyond sqrt(A)/6 (the last curve is used).

    References
    ----------
    IEEE Std 80-2000, clause 14.3, Figure 25 (curves A, B, C) as straight
    lines: h = 0: k1 = -0.04x + 1.41, k2 = 0.15x + 5.50; h = sqrt(A)/10:
    k1 = -0.05x + 1.20, k2 = 0.10x + 4.68; h = sqrt(A)/6: k1 = -0.05x + 1.13,
    k2 = -0.05x + 4.40 (from memory [mem]; listed in docs/references.md).
    """
    x = length_to_width
    s = math.sqrt(area_m2)
    hs = (0.0, s / 10.0, s / 6.0)
    k1s = (-0.04 * x + 1.41, -0.05 * x + 1.20, -0.05 * x + 1.13)
    k2s = (0.15 * x + 5.50, 0.10 * x + 4.68, -0.05 * x + 4.40)
    inside = depth_m <= hs[2]
    h = min(depth_m, hs[2])
    return float(np.interp(h, hs, k1s)), float(np.interp(h, hs, k2s)), inside


def schwarz_resistance(
    rho_ohm_m: float,
    conductor_length_m: float,
    area_m2: float,
    depth_m: float,
    conductor_radius_m: float,
    length_to_width: float,
    rod_count: int = 0,
    rod_length_m: float = 0.0,
    rod_radius_m: float = 0.0,
) -> float:
    """Grid resistance by Schwarz's equations (grid, rods and their mutual resistance).

    Parameters
    ----------
    rho_ohm_m : float
        Soil resistivity. [ohm*m]
    conductor_length_m : float
        Total length Lc of grid conductors. [m]
    area_m2 : float
        Grid area A. [m^2]
    depth_m : float
        Grid depth h. [m]
    conductor_radius_m : float
        Grid conductor radius a. [m]
    length_to_width : float
        Length-to-width ratio of the grid.
    rod_count : int
        Number of rods nR (0: grid alone).
    rod_length_m : float
        Length of each rod Lr. [m]
    rod_radius_m : float
        Rod radius b. [m]

    Returns
    -------
    float
        ``Rg = (R1 R2 - Rm^2) / (R1 + R2 - 2 Rm)``, or R1 without rods. [ohm]

    Notes
    -----
    ``R1 = rho/(pi Lc) [ln(2 Lc/a') + k1 Lc/sqrt(A) - k2]`` with
    ``a' = sqrt(2 a h)``;
    ``R2 = rho/(2 pi nR Lr) [ln(4 Lr/b) - 1 + 2 k1 Lr/sqrt(A) (sqrt(nR) - 1)^2]``;
    ``Rm = rho/(pi Lc) [ln(2 Lc/Lr) + k1 Lc/sqrt(A) - k2 + 1]``.

    References
    ----------
    IEEE Std 80-2000, clause 14.3, Eqs. (53) to (56) (from memory [mem];
    listed in docs/references.md); S. J. Schwarz, "Analytical expressions for the
    resistance of grounding systems", AIEE Trans. 73, 1954.
    """
    k1, k2, _ = schwarz_k1_k2(depth_m, area_m2, length_to_width)
    lc = conductor_length_m
    sa = math.sqrt(area_m2)
    a_eff = math.sqrt(2.0 * conductor_radius_m * depth_m) if depth_m > 0 else conductor_radius_m
    r1 = rho_ohm_m / (math.pi * lc) * (math.log(2.0 * lc / a_eff) + k1 * lc / sa - k2)
    if rod_count <= 0 or rod_length_m <= 0:
        return r1
    lr, nr = rod_length_m, rod_count
    r2 = (
        rho_ohm_m
        / (2.0 * math.pi * nr * lr)
        * (math.log(4.0 * lr / rod_radius_m) - 1.0 + 2.0 * k1 * lr / sa * (math.sqrt(nr) - 1.0) ** 2)
    )
    rm = rho_ohm_m / (math.pi * lc) * (math.log(2.0 * lc / lr) + k1 * lc / sa - k2 + 1.0)
    return (r1 * r2 - rm * rm) / (r1 + r2 - 2.0 * rm)


def effective_parallel_count(
    conductor_length_m: float,
    perimeter_m: float,
    area_m2: float,
    length_x_m: float,
    length_y_m: float,
    max_distance_m: float,
) -> tuple[float, tuple[float, float, float, float]]:
    """Geometric factor n = na nb nc nd of the mesh and step equations.

    Returns
    -------
    (n, (na, nb, nc, nd)) : tuple

    Notes
    -----
    ``na = 2 LC / Lp``, ``nb = sqrt(Lp / (4 sqrt(A)))``,
    ``nc = (Lx Ly / A)^(0.7 A / (Lx Ly))``, ``nd = Dm / sqrt(Lx^2 + Ly^2)``.
    They reduce to nb = 1 for square grids, nc = 1 for square and
    rectangular grids and nd = 1 for square, rectangular and L-shaped grids,
    as the standard states, so one formula serves every shape.

    References
    ----------
    IEEE Std 80-2000, clause 16.5.1, Eqs. (84) to (88) (from memory of the
    numbers).
    """
    na = 2.0 * conductor_length_m / perimeter_m
    nb = math.sqrt(perimeter_m / (4.0 * math.sqrt(area_m2)))
    lxly = length_x_m * length_y_m
    nc = (lxly / area_m2) ** (0.7 * area_m2 / lxly)
    nd = max_distance_m / math.hypot(length_x_m, length_y_m)
    return na * nb * nc * nd, (na, nb, nc, nd)


def irregularity_factor(n: float) -> float:
    """Ki = 0.644 + 0.148 n.

    References
    ----------
    IEEE Std 80-2000, clause 16.5.1, Eq. (89).
    """
    return 0.644 + 0.148 * n


def mesh_factor(spacing_m: float, depth_m: float, diameter_m: float, n: float, rods_on_perimeter: bool) -> float:
    """Geometric factor Km of the mesh voltage.

    Parameters
    ----------
    spacing_m : float
        Spacing D between parallel conductors. [m]
    depth_m : float
        Grid depth h. [m]
    diameter_m : float
        Grid conductor diameter d. [m]
    n : float
        Effective number of parallel conductors.
    rods_on_perimeter : bool
        Rods along the perimeter or in the corners (Kii = 1).

    Returns
    -------
    float
        ``Km = 1/(2 pi) {ln[D^2/(16 h d) + (D + 2h)^2/(8 D d) - h/(4d)]
        + (Kii/Kh) ln[8 / (pi (2n - 1))]}`` with ``Kh = sqrt(1 + h/h0)``,
        h0 = 1 m, and ``Kii = 1`` with perimeter or corner rods, else
        ``1/(2n)^(2/n)``.

    References
    ----------
    IEEE Std 80-2000, clause 16.5.1, Eqs. (81) to (83) (from memory of the
    numbers [mem]; listed in docs/references.md).
    """
    d, h, dd = spacing_m, depth_m, diameter_m
    kii = 1.0 if rods_on_perimeter else 1.0 / (2.0 * n) ** (2.0 / n)
    kh = math.sqrt(1.0 + h / 1.0)
    first = math.log(d * d / (16.0 * h * dd) + (d + 2.0 * h) ** 2 / (8.0 * d * dd) - h / (4.0 * dd))
    return (first + kii / kh * math.log(8.0 / (math.pi * (2.0 * n - 1.0)))) / (2.0 * math.pi)


def mesh_effective_length(
    conductor_length_m: float,
    rod_total_m: float,
    rod_length_m: float,
    length_x_m: float,
    length_y_m: float,
    rods_on_perimeter: bool,
) -> float:
    """Effective buried length LM of the mesh voltage.

    Returns
    -------
    float
        ``LC + LR`` without perimeter or corner rods, else
        ``LC + [1.55 + 1.22 Lr / sqrt(Lx^2 + Ly^2)] LR``. [m]

    References
    ----------
    IEEE Std 80-2000, clause 16.5.1, Eqs. (90) and (91) (from memory of the
    numbers).
    """
    if not rods_on_perimeter or rod_total_m <= 0:
        return conductor_length_m + rod_total_m
    return conductor_length_m + (1.55 + 1.22 * rod_length_m / math.hypot(length_x_m, length_y_m)) * rod_total_m


def step_factor(spacing_m: float, depth_m: float, n: float) -> float:
    """Ks = (1/pi) [1/(2h) + 1/(D + h) + (1/D)(1 - 0.5^(n - 2))].

    References
    ----------
    IEEE Std 80-2000, clause 16.5.2, Eq. (94) (for 0.25 m < h < 2.5 m).
    """
    d, h = spacing_m, depth_m
    return (1.0 / (2.0 * h) + 1.0 / (d + h) + (1.0 / d) * (1.0 - 0.5 ** (n - 2.0))) / math.pi


def step_effective_length(conductor_length_m: float, rod_total_m: float) -> float:
    """LS = 0.75 LC + 0.85 LR. [m]

    References
    ----------
    IEEE Std 80-2000, clause 16.5.2, Eq. (93).
    """
    return 0.75 * conductor_length_m + 0.85 * rod_total_m


def mesh_voltage(rho_ohm_m: float, km: float, ki: float, grid_current_a: float, lm_m: float) -> float:
    """Em = rho Km Ki I_G / LM. [V]

    References
    ----------
    IEEE Std 80-2000, clause 16.5.1, Eq. (80).
    """
    return rho_ohm_m * km * ki * grid_current_a / lm_m


def step_voltage(rho_ohm_m: float, ks: float, ki: float, grid_current_a: float, ls_m: float) -> float:
    """Es = rho Ks Ki I_G / LS. [V]

    References
    ----------
    IEEE Std 80-2000, clause 16.5.2, Eq. (92).
    """
    return rho_ohm_m * ks * ki * grid_current_a / ls_m
