"""Conductor materials and the fault-current sizing of IEEE Std 80.

Material constants are those of IEEE Std 80 Table 1 (from memory of the
table; the Kf column of Table 2 is recovered from them within 0.01, checked in
tests/test_materials.py). Densities, used only for the buried-metal mass, are
handbook values (common practice).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..io.units import normalise_name

__all__ = [
    "DEFAULT_MATERIAL",
    "MATERIALS",
    "Material",
    "decrement_current_a",
    "kf_constant",
    "material",
    "required_area_mm2",
]


@dataclass(frozen=True)
class Material:
    """Constants of a conductor material.

    Attributes
    ----------
    name : str
        Name as written in the workbook.
    conductivity_pct : float
        Conductivity relative to annealed copper. [%]
    alpha_r : float
        Thermal coefficient of resistivity at 20 degC. [1/degC]
    k0 : float
        1/alpha_0, the inferred temperature of zero resistance. [degC]
    fusing_c : float
        Fusing (melting) temperature Tm. [degC]
    rho_r_microohm_cm : float
        Resistivity at 20 degC. [microohm*cm]
    tcap : float
        Thermal capacity per unit volume. [J/(cm^3 degC)]
    density_kg_m3 : float
        Density, for the mass of buried metal. [kg/m^3]
    """

    name: str
    conductivity_pct: float
    alpha_r: float
    k0: float
    fusing_c: float
    rho_r_microohm_cm: float
    tcap: float
    density_kg_m3: float


#: IEEE Std 80-2000 Table 1 (from memory), densities common practice.
MATERIALS: dict[str, Material] = {
    m.name: m
    for m in (
        Material("annealed copper", 100.0, 0.00393, 234.0, 1083.0, 1.72, 3.42, 8890.0),
        Material("hard-drawn copper", 97.0, 0.00381, 242.0, 1084.0, 1.78, 3.42, 8890.0),
        Material("copper-clad steel wire 40%", 40.0, 0.00378, 245.0, 1084.0, 4.40, 3.85, 8150.0),
        Material("copper-clad steel wire 30%", 30.0, 0.00378, 245.0, 1084.0, 5.86, 3.85, 8100.0),
        Material("copper-clad steel rod 20%", 20.0, 0.00378, 245.0, 1084.0, 8.62, 3.85, 8000.0),
        Material("aluminium", 61.0, 0.00403, 228.0, 657.0, 2.86, 2.56, 2700.0),
        Material("steel 1020", 10.8, 0.00160, 605.0, 1510.0, 15.90, 3.28, 7860.0),
        Material("stainless-clad steel rod", 9.8, 0.00160, 605.0, 1400.0, 17.50, 4.44, 7900.0),
        Material("zinc-coated steel rod", 8.6, 0.00320, 293.0, 419.0, 20.10, 3.93, 7860.0),
        Material("stainless steel 304", 2.4, 0.00130, 749.0, 1400.0, 72.00, 4.03, 8000.0),
    )
}

#: Material used when the Material column is blank.
DEFAULT_MATERIAL = "hard-drawn copper"

_ALIASES = {
    "copper": "hard-drawn copper",
    "hard drawn copper": "hard-drawn copper",
    "annealed soft-drawn copper": "annealed copper",
    "soft-drawn copper": "annealed copper",
    "aluminum": "aluminium",
    "aluminium ec": "aluminium",
    "aluminum ec": "aluminium",
    "ec aluminium": "aluminium",
    "steel": "steel 1020",
    "1020 steel": "steel 1020",
    "galvanised steel rod": "zinc-coated steel rod",
    "galvanized steel rod": "zinc-coated steel rod",
    "stainless steel": "stainless steel 304",
    "304 stainless steel": "stainless steel 304",
    "copper-clad steel 40%": "copper-clad steel wire 40%",
    "copper-clad steel 30%": "copper-clad steel wire 30%",
    "copper-clad steel rod": "copper-clad steel rod 20%",
    "copper-clad steel 20%": "copper-clad steel rod 20%",
}


def material(name: str | None) -> Material | None:
    """Material by name (case and spaces ignored, common aliases accepted); ``None`` if unknown."""
    if name is None:
        return MATERIALS[DEFAULT_MATERIAL]
    key = normalise_name(name).replace(" %", "%")
    key = _ALIASES.get(key, key)
    return MATERIALS.get(key)


def kf_constant(mat: Material, ambient_c: float = 40.0, max_temp_c: float | None = None) -> float:
    """Kf of IEEE Std 80 Table 2: A [kcmil] = I [kA] Kf sqrt(tc).

    Parameters
    ----------
    mat : Material
        Conductor material.
    ambient_c : float
        Ambient temperature Ta. [degC]
    max_temp_c : float, optional
        Maximum allowable temperature Tm; the fusing temperature by default. [degC]

    Returns
    -------
    float
        Kf. [kcmil / (kA s^0.5)]

    References
    ----------
    IEEE Std 80-2000, clause 11.3, Eq. (37) and Eq. (42), Table 2 (Ta = 40 degC).
    1 mm^2 = 1.9735 kcmil.
    """
    return 1.9735 / math.sqrt(_capacity(mat, ambient_c, max_temp_c))


def _capacity(mat: Material, ambient_c: float, max_temp_c: float | None) -> float:
    tm = mat.fusing_c if max_temp_c is None else max_temp_c
    return mat.tcap * 1e-4 / (mat.alpha_r * mat.rho_r_microohm_cm) * math.log((mat.k0 + tm) / (mat.k0 + ambient_c))


def required_area_mm2(
    current_a: float, duration_s: float, mat: Material, ambient_c: float = 40.0, max_temp_c: float | None = None
) -> float:
    """Smallest conductor cross-section that carries a fault current without exceeding Tm.

    Parameters
    ----------
    current_a : float
        rms fault current the conductor carries. [A]
    duration_s : float
        Current duration tc. [s]
    mat : Material
        Conductor material.
    ambient_c : float
        Ambient temperature Ta. [degC]
    max_temp_c : float, optional
        Maximum allowable temperature Tm (fusing temperature by default). [degC]

    Returns
    -------
    float
        ``A = I / sqrt((TCAP 1e-4 / (tc alpha_r rho_r)) ln((K0 + Tm)/(K0 + Ta)))``
        with I in kA. [mm^2]

    References
    ----------
    IEEE Std 80-2000, clause 11.3, Eq. (37) (Onderdonk's equation).
    """
    return current_a / 1000.0 / math.sqrt(_capacity(mat, ambient_c, max_temp_c) / duration_s)


def decrement_current_a(fault_current_a: float, decrement: float) -> float:
    """rms asymmetrical fault current Df * 3I0 used for conductor sizing. [A]

    References
    ----------
    IEEE Std 80-2000, clause 11.3 (the conductor must carry the maximum fault
    current including the dc offset) and clause 15.10.
    """
    return fault_current_a * decrement
