"""Variants of one design: typed overrides of soil, surface layer and fault, run beside the base case.

The geometry solution and the surface raster depend only on the layout and
the soil model: both are computed per volt of GPR. Variants that share a soil
model share them; only the fault and surface-layer data (GPR, limits,
sizing) are applied again, because the model is linear in the current.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields, replace
from typing import Any

from ..analysis import FieldResult, GeometryResult, Results, evaluate, resolve_soil, solve_geometry, surface_field
from ..errors import InputError
from ..model import Design, Soil, SurfaceLayer

__all__ = [
    "FaultOverride",
    "SoilOverride",
    "SurfaceLayerOverride",
    "Variant",
    "VariantError",
    "VariantRun",
    "apply_variant",
    "run_variants",
]


@dataclass(frozen=True)
class SoilOverride:
    """Soil quantities a variant replaces; ``None`` keeps the base value.

    Parameters
    ----------
    rho1_ohm_m : float or None
        Soil (or upper-layer) resistivity. [ohm*m]
    thickness_m : float or None
        Upper-layer thickness H; with ``rho2_ohm_m`` it makes uniform soil two-layer. [m]
    rho2_ohm_m : float or None
        Lower-layer resistivity. [ohm*m]
    """

    rho1_ohm_m: float | None = None
    thickness_m: float | None = None
    rho2_ohm_m: float | None = None


@dataclass(frozen=True)
class SurfaceLayerOverride:
    """Surface-layer quantities a variant replaces; ``None`` keeps the base value.

    Parameters
    ----------
    rho_ohm_m : float or None
        Surface layer resistivity rho_s. [ohm*m]
    thickness_m : float or None
        Surface layer thickness h_s. [m]
    """

    rho_ohm_m: float | None = None
    thickness_m: float | None = None


@dataclass(frozen=True)
class FaultOverride:
    """Fault quantities a variant replaces; ``None`` keeps the base value.

    Parameters
    ----------
    fault_current_a : float or None
        Fault current 3I0. [A]
    split_factor : float or None
        Split factor Sf.
    fault_duration_s : float or None
        Fault duration tf; the shock duration follows it where the two are equal in the base. [s]
    body_weight_kg : float or None
        Body weight, 50 or 70. [kg]
    """

    fault_current_a: float | None = None
    split_factor: float | None = None
    fault_duration_s: float | None = None
    body_weight_kg: float | None = None


#: Plain name and unit of every override field, for tables and reports.
LABELS = {
    ("soil", "rho1_ohm_m"): ("upper resistivity", "ohm*m"),
    ("soil", "thickness_m"): ("upper thickness", "m"),
    ("soil", "rho2_ohm_m"): ("lower resistivity", "ohm*m"),
    ("surface_layer", "rho_ohm_m"): ("surface layer resistivity", "ohm*m"),
    ("surface_layer", "thickness_m"): ("surface layer thickness", "m"),
    ("fault", "fault_current_a"): ("fault current", "A"),
    ("fault", "split_factor"): ("split factor", ""),
    ("fault", "fault_duration_s"): ("fault duration", "s"),
    ("fault", "body_weight_kg"): ("body weight", "kg"),
}


@dataclass(frozen=True)
class Variant:
    """A named variant of the base case: typed overrides of soil, surface layer and fault.

    Parameters
    ----------
    name : str
        Variant name.
    soil, surface_layer, fault : SoilOverride, SurfaceLayerOverride, FaultOverride
        What the variant replaces (``None`` fields keep the base values).
    """

    name: str
    soil: SoilOverride = field(default_factory=SoilOverride)
    surface_layer: SurfaceLayerOverride = field(default_factory=SurfaceLayerOverride)
    fault: FaultOverride = field(default_factory=FaultOverride)

    def items(self) -> list[tuple[str, str, float]]:
        """The changed quantities as ``(group, field, value)``, in a fixed order."""
        out = []
        for group in ("soil", "surface_layer", "fault"):
            part = getattr(self, group)
            for f in fields(part):
                v = getattr(part, f.name)
                if v is not None:
                    out.append((group, f.name, float(v)))
        return out

    def changes(self) -> dict[str, dict[str, float]]:
        """The changed quantities by group, e.g. ``{"fault": {"fault_current_a": 6360.0}}`` (for JSON)."""
        out: dict[str, dict[str, float]] = {}
        for group, name, v in self.items():
            out.setdefault(group, {})[name] = v
        return out

    def describe(self) -> str:
        """The changes in words, e.g. ``"fault current 6360 A, split factor 0.5"``."""
        parts = []
        for group, name, v in self.items():
            label, unit = LABELS[(group, name)]
            parts.append(f"{label} {v:g}" + (f" {unit}" if unit else ""))
        return ", ".join(parts)


@dataclass
class VariantRun:
    """Results of the base case and its variants.

    Attributes
    ----------
    names : list of str
        "base case" then the variant names.
    results : list of Results
        One per name.
    variants : list of Variant or None
        ``None`` for the base case, then each variant.
    geometry_solves : int
        How many times the geometry was solved (once per distinct soil model).
    """

    names: list[str]
    results: list[Results]
    variants: list[Variant | None]
    geometry_solves: int

    @property
    def changes(self) -> list[dict[str, Any]]:
        """What each case changed, by group (empty for the base case)."""
        return [{} if v is None else v.changes() for v in self.variants]

    @property
    def descriptions(self) -> list[str]:
        """What each case changed, in words (``"-"`` for the base case)."""
        return ["-" if v is None else (v.describe() or "-") for v in self.variants]


class VariantError(InputError):
    """A variant whose overrides do not make a valid design.

    Attributes
    ----------
    variant : str
        The variant's name.
    field : tuple of str
        ``(group, field)`` of the override at fault, e.g. ``("soil", "thickness_m")``,
        so that the caller can point at the input it came from.
    """

    def __init__(self, problem: str, *, variant: str, field: tuple[str, str], fix: str) -> None:
        self.variant = variant
        self.field = field
        super().__init__(problem, fix=fix)


def _check_values(variant: Variant) -> None:
    """Every override is a finite positive number; Sf at most 1; body weight 50 or 70 kg (IEEE Std 80)."""
    for group, name, v in variant.items():
        label, unit = LABELS[(group, name)]
        if not math.isfinite(v) or v <= 0:
            raise VariantError(
                f"variant '{variant.name}': the {label} must be a positive number, got {v:g}",
                variant=variant.name,
                field=(group, name),
                fix=f"Give a positive {label}" + (f" in {unit}" if unit else ""),
            )
        if name == "split_factor" and v > 1:
            raise VariantError(
                f"variant '{variant.name}': the split factor {v:g} is more than 1",
                variant=variant.name,
                field=(group, name),
                fix="The split factor is the fraction of 3I0 that flows through the grid: at most 1",
            )
        if name == "body_weight_kg" and round(v) not in (50, 70):
            raise VariantError(
                f"variant '{variant.name}': the body weight {v:g} kg is neither 50 nor 70 kg",
                variant=variant.name,
                field=(group, name),
                fix="IEEE Std 80 gives tolerable voltages for 50 kg and 70 kg bodies",
            )


def apply_variant(base: Design, variant: Variant) -> Design:
    """The base design with the variant's overrides applied (soil already resolved).

    Raises
    ------
    VariantError
        When the overrides do not make a valid design (naming the variant and the override).
    """
    _check_values(variant)
    so, lo, fo = variant.soil, variant.surface_layer, variant.fault
    soil = base.soil
    rho1 = so.rho1_ohm_m if so.rho1_ohm_m is not None else soil.rho1_ohm_m
    if soil.model == "uniform":
        if (so.thickness_m is None) != (so.rho2_ohm_m is None):
            name = "thickness_m" if so.thickness_m is not None else "rho2_ohm_m"
            raise VariantError(
                f"variant '{variant.name}' gives only one of the upper thickness and the lower resistivity "
                "for uniform base soil",
                variant=variant.name,
                field=("soil", name),
                fix="Give both to make the soil two-layer, or neither",
            )
        soil = Soil("two-layer", rho1, so.thickness_m, so.rho2_ohm_m) if so.thickness_m is not None else Soil(
            "uniform", rho1
        )
    else:
        soil = Soil(
            "two-layer",
            rho1,
            so.thickness_m if so.thickness_m is not None else soil.thickness_m,
            so.rho2_ohm_m if so.rho2_ohm_m is not None else soil.rho2_ohm_m,
        )
    surface = base.surface_layer
    if lo.rho_ohm_m is not None or lo.thickness_m is not None:
        if surface is None and (lo.rho_ohm_m is None or lo.thickness_m is None):
            name = "rho_ohm_m" if lo.rho_ohm_m is not None else "thickness_m"
            raise VariantError(
                f"variant '{variant.name}' adds a surface layer but gives only one of its resistivity and thickness",
                variant=variant.name,
                field=("surface_layer", name),
                fix="Give both the surface layer resistivity and its thickness",
            )
        surface = SurfaceLayer(
            lo.rho_ohm_m if lo.rho_ohm_m is not None else surface.rho_ohm_m,
            lo.thickness_m if lo.thickness_m is not None else surface.thickness_m,
        )
    f = base.fault
    tf = fo.fault_duration_s if fo.fault_duration_s is not None else f.fault_duration_s
    ts = tf if f.shock_duration_s == f.fault_duration_s else f.shock_duration_s
    fault = replace(
        f,
        fault_current_a=fo.fault_current_a if fo.fault_current_a is not None else f.fault_current_a,
        split_factor=fo.split_factor if fo.split_factor is not None else f.split_factor,
        fault_duration_s=tf,
        shock_duration_s=ts,
        body_weight_kg=float(round(fo.body_weight_kg)) if fo.body_weight_kg is not None else f.body_weight_kg,
    )
    return replace(base, soil=soil, surface_layer=surface, fault=fault, variants=())


def _soil_key(soil: Soil) -> tuple:
    return (
        (soil.model, soil.rho1_ohm_m, soil.thickness_m, soil.rho2_ohm_m)
        if soil.model == "two-layer"
        else (
            "uniform",
            soil.rho1_ohm_m,
        )
    )


def run_variants(design: Design) -> VariantRun:
    """Analyse the base case and every variant, solving each distinct soil model once.

    Parameters
    ----------
    design : Design
        Design with ``variants`` (may be empty: then only the base case).

    Returns
    -------
    VariantRun
    """
    base, fit = resolve_soil(design)
    designs = [replace(base, variants=())] + [apply_variant(base, v) for v in design.variants]
    names = ["base case"] + [v.name for v in design.variants]
    cache: dict[tuple, tuple[GeometryResult, FieldResult]] = {}
    results = []
    for d in designs:
        key = _soil_key(d.soil)
        if key not in cache:
            geometry = solve_geometry(d)
            cache[key] = (geometry, surface_field(d, geometry))
        geometry, field_result = cache[key]
        results.append(evaluate(d, geometry, field_result, fit))
    return VariantRun(names, results, [None, *design.variants], len(cache))
