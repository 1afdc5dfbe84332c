"""Variants of one design (Variants sheet): the base case and every variant, side by side.

The geometry solution and the surface raster depend only on the layout and
the soil model: both are computed per volt of GPR. Variants that share a soil
model share them; only the fault and surface-layer data (GPR, limits,
sizing) are applied again, because the model is linear in the current.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from ..analysis import FieldResult, GeometryResult, Results, evaluate, resolve_soil, solve_geometry, surface_field
from ..errors import InputError
from ..io.schema import VARIANTS
from ..model import Design, Soil, SurfaceLayer, Variant

__all__ = ["VariantRun", "apply_variant", "run_variants"]


@dataclass
class VariantRun:
    """Results of the base case and its variants.

    Attributes
    ----------
    names : list of str
        "base case" then the variant names.
    results : list of Results
        One per name.
    overrides : list of dict
        What each variant changed (normalised quantity -> SI value).
    geometry_solves : int
        How many times the geometry was solved (once per distinct soil model).
    """

    names: list[str]
    results: list[Results]
    overrides: list[dict]
    geometry_solves: int


def _err(variant: Variant, key: str, message: str, fix: str) -> InputError:
    return InputError(message, sheet=VARIANTS.name, row=variant.row, column=variant.columns.get(key), fix=fix)


def apply_variant(base: Design, variant: Variant) -> Design:
    """The base design with the variant's overrides applied (soil already resolved).

    Raises
    ------
    InputError
        When the overrides do not make a valid design (naming the row).
    """
    o = variant.overrides
    soil = base.soil
    rho1 = o.get("upper resistivity", soil.rho1_ohm_m)
    if soil.model == "uniform":
        if ("upper thickness" in o) != ("lower resistivity" in o):
            key = "upper thickness" if "upper thickness" in o else "lower resistivity"
            raise _err(
                variant,
                key,
                f"variant '{variant.name}' gives only one of 'Upper thickness' and 'Lower resistivity' for "
                "uniform base soil",
                "Give both to make the soil two-layer, or neither",
            )
        soil = (
            Soil("two-layer", rho1, o["upper thickness"], o["lower resistivity"])
            if "upper thickness" in o
            else Soil("uniform", rho1)
        )
    elif soil.model == "multilayer":
        # overrides act on the top two layers; the deeper ones are kept
        layers = list(soil.layers)
        layers[0] = (rho1, o.get("upper thickness", layers[0][1]))
        layers[1] = (o.get("lower resistivity", layers[1][0]), layers[1][1])
        soil = Soil("multilayer", layers[0][0], layers[0][1], layers[1][0], layers=tuple(layers))
    else:
        soil = Soil(
            "two-layer",
            rho1,
            o.get("upper thickness", soil.thickness_m),
            o.get("lower resistivity", soil.rho2_ohm_m),
        )
    surface = base.surface_layer
    if "surface layer resistivity" in o or "surface layer thickness" in o:
        if surface is None and not ("surface layer resistivity" in o and "surface layer thickness" in o):
            key = "surface layer resistivity" if "surface layer resistivity" in o else "surface layer thickness"
            raise _err(
                variant,
                key,
                f"variant '{variant.name}' adds a surface layer but gives only one of its resistivity and thickness",
                "Give both 'Surface layer resistivity' and 'Surface layer thickness'",
            )
        surface = SurfaceLayer(
            o.get("surface layer resistivity", surface.rho_ohm_m if surface else 0.0),
            o.get("surface layer thickness", surface.thickness_m if surface else 0.0),
        )
    f = base.fault
    tf = o.get("fault duration", f.fault_duration_s)
    ts = tf if f.shock_duration_s == f.fault_duration_s else f.shock_duration_s
    fault = replace(
        f,
        fault_current_a=o.get("fault current", f.fault_current_a),
        split_factor=o.get("split factor", f.split_factor),
        fault_duration_s=tf,
        shock_duration_s=ts,
        body_weight_kg=float(round(o.get("body weight", f.body_weight_kg))),
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
    return VariantRun(names, results, [{}] + [dict(v.overrides) for v in design.variants], len(cache))
