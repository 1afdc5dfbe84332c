"""Body-current limits and fault-current factors of IEEE Std 80.

Equation numbers are those of IEEE Std 80-2000 (the 2013 edition keeps them
for clauses 7 to 8 and adds five for clauses 14 to 16). Values quoted in the
tests carry their own source tags.
"""

from __future__ import annotations

import math

__all__ = [
    "BODY_CONSTANT",
    "decrement_factor",
    "grid_current_a",
    "surface_layer_factor",
    "tolerable_step_v",
    "tolerable_touch_v",
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


def tolerable_touch_v(cs: float, rho_surface_ohm_m: float, shock_duration_s: float, body_weight_kg: float) -> float:
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


def tolerable_step_v(cs: float, rho_surface_ohm_m: float, shock_duration_s: float, body_weight_kg: float) -> float:
    """Tolerable step voltage.

    Parameters are those of :func:`tolerable_touch_v`.

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
    """
    if x_over_r <= 0.0:
        return 1.0
    ta = x_over_r / (2.0 * math.pi * frequency_hz)
    return math.sqrt(1.0 + ta / fault_duration_s * (1.0 - math.exp(-2.0 * fault_duration_s / ta)))


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
