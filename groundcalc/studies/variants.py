"""Variants of one design: typed overrides of soil, surface layer and fault, run beside the base case.

The geometry solution and the surface raster depend only on the layout and
the soil model: both are computed per volt of GPR. Variants that share a soil
model share them; only the fault and surface-layer data (GPR, limits,
sizing) are applied again, because the model is linear in the current.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

from ..analysis import FieldResult, GeometryResult, Results, evaluate, resolve_soil, solve_geometry, surface_field
from ..errors import InputError
from ..model import LABELS, Design, FaultOverride, Soil, SoilOverride, SurfaceLayer, SurfaceLayerOverride, Variant
from ..validation import prepare, validate

__all__ = [
    "FaultOverride",
    "SoilOverride",
    "SurfaceLayerOverride",
    "Variant",
    "VariantError",
    "VariantRun",
    "apply_variant",
    "check_variant",
    "run_variants",
]


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

    def __init__(self, problem: str, *, variant: str, field: tuple[str, str] | None, fix: str) -> None:
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


#: Model quantity (``InputError.quantity`` of :mod:`groundcalc.validation`) -> override field.
_QUANTITY_FIELDS = {
    "soil.rho1_ohm_m": ("soil", "rho1_ohm_m"),
    "soil.thickness_m": ("soil", "thickness_m"),
    "soil.rho2_ohm_m": ("soil", "rho2_ohm_m"),
    "surface.rho_ohm_m": ("surface_layer", "rho_ohm_m"),
    "surface.thickness_m": ("surface_layer", "thickness_m"),
    "fault.fault_current_a": ("fault", "fault_current_a"),
    "fault.split_factor": ("fault", "split_factor"),
    "fault.fault_duration_s": ("fault", "fault_duration_s"),
    "fault.shock_duration_s": ("fault", "fault_duration_s"),
    "fault.body_weight_kg": ("fault", "body_weight_kg"),
}


def check_variant(base: Design, variant: Variant) -> Design:
    """The base design with the variant applied and validated like any design.

    Raises
    ------
    VariantError
        When the overrides, or the design they make, are refused; ``field`` names
        the override the refusal comes from (``None`` when it is none of them).
    """
    design = apply_variant(base, variant)
    try:
        return validate(design)
    except VariantError:
        raise
    except InputError as exc:
        raise VariantError(
            f"variant '{variant.name}': {exc.problem}",
            variant=variant.name,
            field=_QUANTITY_FIELDS.get(exc.quantity or ""),
            fix=exc.fix,
        ) from None


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
        soil = (
            Soil("two-layer", rho1, so.thickness_m, so.rho2_ohm_m)
            if so.thickness_m is not None
            else Soil("uniform", rho1)
        )
    elif soil.model == "multilayer":
        # overrides act on the top two layers; the deeper ones are kept
        layers = list(soil.layers)
        layers[0] = (rho1, so.thickness_m if so.thickness_m is not None else layers[0][1])
        layers[1] = (so.rho2_ohm_m if so.rho2_ohm_m is not None else layers[1][0], layers[1][1])
        soil = Soil("multilayer", layers[0][0], layers[0][1], layers[1][0], layers=tuple(layers))
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
    if soil.model == "multilayer":
        return ("multilayer", soil.layers)
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
    base, fit = resolve_soil(prepare(design))
    designs = [validate(replace(base, variants=()))]
    designs += [check_variant(base, v) for v in design.variants]
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
