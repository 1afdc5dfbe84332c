"""Writing results: machine-readable JSON and safe, atomic file output.

Outputs are written to a temporary file in the target folder and renamed
into place, so a crash never leaves a half-written file. An output path that
is one of the inputs is refused, and an existing file is only replaced when
the caller allows it.
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

from ..analysis import Results
from ..cautions import CAUTIONS, DRAFT_MARK
from ..errors import InputError
from ..version import __version__

__all__ = [
    "atomic_write",
    "check_output",
    "file_sha256",
    "closed_form_to_dict",
    "results_to_dict",
    "sizing_to_dict",
    "soil_fit_to_dict",
    "write_design_with_soil",
    "write_json",
]


def file_sha256(path: str | Path) -> str:
    """SHA-256 of a file's bytes, as hex."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def check_output(path: str | Path, inputs: Iterable[str | Path], overwrite: bool, what: str) -> Path:
    """Validate an output path before any work is done.

    Raises
    ------
    InputError
        When the output is one of the inputs, exists without ``overwrite``,
        or its folder does not exist.
    """
    out = Path(path)
    name_max = 255
    if out.parent.is_dir():
        try:
            name_max = os.pathconf(out.parent, "PC_NAME_MAX")
        except (OSError, ValueError, AttributeError):
            pass
    if len(os.fsencode(out.name)) + 16 > name_max:  # room for the temporary file's prefix and suffix
        raise InputError(
            f"the {what} output name '{out.name[:40]}...' is too long ({len(os.fsencode(out.name))} bytes; "
            f"this folder allows {name_max})",
            fix="Choose a shorter file name",
        )
    for inp in inputs:
        ip = Path(inp)
        if out.resolve() == ip.resolve() or (out.exists() and ip.exists() and os.path.samefile(out, ip)):
            raise InputError(
                f"the {what} output '{out}' is the input file '{ip}'",
                fix="Choose another name for the output; inputs are never overwritten",
            )
    if out.exists() and out.is_dir():
        raise InputError(f"the {what} output '{out}' is a folder", fix="Give a file name")
    if out.exists() and not overwrite:
        raise InputError(
            f"the {what} output '{out}' already exists",
            fix="Choose another name, or add --overwrite to replace it",
        )
    if not out.parent.exists():
        raise InputError(
            f"the folder '{out.parent}' for the {what} output does not exist",
            fix="Create the folder first or choose another path",
        )
    if not out.parent.is_dir():
        raise InputError(
            f"'{out.parent}', the folder for the {what} output, is a file",
            fix="Choose a path inside an existing folder",
        )
    if not os.access(out.parent, os.W_OK | os.X_OK):
        raise InputError(
            f"the folder '{out.parent}' for the {what} output cannot be written to",
            fix="Choose a folder you may write in",
        )
    return out


def check_distinct(paths: dict[str, Path | None]) -> None:
    """Refuse two outputs given the same path (before any work)."""
    seen: dict[Path, str] = {}
    for what, p in paths.items():
        if p is None:
            continue
        key = p.resolve()
        if key in seen:
            raise InputError(
                f"the {seen[key]} and {what} outputs are the same file '{p}'",
                fix="Give each output its own name",
            )
        seen[key] = what


def atomic_write(path: str | Path, writer: Callable[[Path], None]) -> None:
    """Call ``writer(tmp_path)`` and rename the temporary file to ``path``."""
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    os.close(fd)
    try:
        writer(Path(tmp))
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp creates 0600; give the usual permissions
        os.replace(tmp, target)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def _xy(p: tuple[float, float]) -> dict[str, float]:
    return {"x_m": round(p[0], 3), "y_m": round(p[1], 3)}


def results_to_dict(results: Results, input_path: str | Path | None = None) -> dict[str, Any]:
    """Results as a JSON-ready dictionary (SI units, keys carry units)."""
    d = results.design
    a = results.assessment
    sol = results.geometry.solution
    seg = sol.segments
    touch = results.field.touch
    step = results.field.step
    out: dict[str, Any] = {
        "groundcalc_version": __version__,
        "status": DRAFT_MARK,
        "input_file": str(input_path) if input_path else d.source_name,
        "input_sha256": file_sha256(input_path) if input_path else None,
        "project": {
            "project": d.project.project,
            "site": d.project.site,
            "prepared_by": d.project.prepared_by,
            "revision": d.project.revision,
        },
        "soil": {
            "model": d.soil.model,
            "upper_resistivity_ohm_m": d.soil.rho1_ohm_m,
            "upper_thickness_m": d.soil.thickness_m,
            "lower_resistivity_ohm_m": d.soil.rho2_ohm_m,
            "reflection_coefficient": d.soil.reflection_k,
            "image_terms": sol.greens.terms,
            "green_function": sol.greens.description,
            "layers": [{"resistivity_ohm_m": r, "thickness_m": t} for r, t in d.soil.layers] or None,
        },
        "surface_layer": None
        if d.surface_layer is None
        else {
            "resistivity_ohm_m": d.surface_layer.rho_ohm_m,
            "thickness_m": d.surface_layer.thickness_m,
        },
        "fault": {
            "fault_current_3i0_a": d.fault.fault_current_a,
            "split_factor": d.fault.split_factor,
            "x_over_r": d.fault.x_over_r,
            "fault_duration_s": d.fault.fault_duration_s,
            "shock_duration_s": d.fault.shock_duration_s,
            "body_weight_kg": d.fault.body_weight_kg,
            "frequency_hz": d.fault.frequency_hz,
        },
        "grid_resistance_ohm": results.resistance_ohm,
        "decrement_factor": results.decrement_factor,
        "grid_current_a": results.grid_current_a,
        "gpr_v": results.gpr_v,
        "max_touch_v": results.max_touch_v,
        "max_step_v": results.max_step_v,
        "surface_layer_factor_cs": results.limits.cs,
        "touch_limit_v": results.limits.touch_limit_v,
        "step_limit_v": results.limits.step_limit_v,
        "limits_basis": results.limits.basis,
        "touch_ok": a.touch_ok,
        "step_ok": a.step_ok,
        "passed": a.passed,
        "touch_margin_pct": a.touch_margin_pct,
        "step_margin_pct": a.step_margin_pct,
        "governing": a.governing,
        "touch_location": _xy(touch.location_xy),
        "step_location": {"start": _xy(step.start_xy), "end": _xy(step.end_xy)},
        "segment_count": len(seg),
        "conductor_count": len(results.geometry.segmentation.conductors),
        "total_conductor_length_m": float(sum(c.length_m for c in d.all_conductors() if c.kind != "rod")),
        "rod_count": len(d.rods),
        "total_rod_length_m": float(sum(r.length_m for r in d.rods)),
        "settings": {
            "segment_length_m": d.settings.segment_length_m,
            "raster_spacing_m": results.field.raster.spacing_m,
            "raster_points": [len(results.field.raster.x), len(results.field.raster.y)],
            "margin_m": d.settings.margin_m,
            "linear_solver": sol.method,
        },
        "warnings": [{"code": n.code, "level": n.level, "message": n.message} for n in results.notices],
        "cautions": [f"{h}: {t}" for h, t in CAUTIONS],
        "timings_s": {**results.geometry.seconds, "surface": results.field.seconds},
    }
    out["conductors_ok"] = a.conductors_ok
    out["touch_limit_basis"] = results.limits.touch_basis
    out["step_limit_basis"] = results.limits.step_basis
    out["ieee80_touch_limit_v"] = results.limits.ieee80_touch_limit_v
    out["ieee80_step_limit_v"] = results.limits.ieee80_step_limit_v
    out["closed_form"] = closed_form_to_dict(results)
    out["conductor_sizing"] = sizing_to_dict(results.sizing)
    g = sol.greens
    out["soil"]["explicit_images"] = g.explicit_terms
    out["soil"]["series_tolerance"] = g.tolerance or None
    if results.soil_fit is not None:
        out["soil_fit"] = soil_fit_to_dict(results.soil_fit)
    out["discretisation_error"] = discretisation_to_dict(results.discretisation)
    if results.metal is not None:
        from .metal import metal_to_dict

        out.update(metal_to_dict(results))
    return out


def discretisation_to_dict(est) -> dict[str, Any] | None:
    """The two-level discretisation-error estimate (relative errors as fractions), or None when not run."""
    if est is None:
        return None
    return {
        "grid_resistance_rel": est.resistance_rel,
        "max_touch_rel": est.touch_rel,
        "method": "Richardson estimate from a second solve with twice (or, where that hardly coarsens the "
        "mesh, half) the segment length, assumed order 1",
        "segment_length_m": est.segment_length_m,
        "coarse_segment_length_m": est.coarse_segment_length_m,
        "segment_count": est.segments,
        "coarse_segment_count": est.coarse_segments,
        "coarse_grid_resistance_ohm": est.coarse_resistance_ohm,
        "exceeds_1_percent": est.exceeds_warning,
        "seconds": est.seconds,
    }


def _diff_pct(numerical: float, closed: float) -> float:
    return 100.0 * (numerical - closed) / closed


#: Statement shown with every closed-form comparison (CLI, JSON, PDF).
CLOSED_FORM_NOTE = (
    "The method-of-moments solution is the design value; the IEEE Std 80 closed forms are a "
    "sanity check with known limits (uniform soil, regular grids)."
)


def closed_form_rows(results: Results) -> list[tuple[str, float, str, float, str, float]]:
    """Rows (quantity, numerical, unit, closed form, equation, difference %) of the comparison.

    Empty when the closed forms do not apply (no enclosed area).
    """
    cf = results.closed_form
    if cf is None:
        return []
    rows = [
        ("Grid resistance", results.resistance_ohm, "ohm", cf.sverak_ohm, "Sverak, Eq. 52"),
        ("Grid resistance", results.resistance_ohm, "ohm", cf.schwarz_ohm, "Schwarz, Eqs. 53-56"),
        ("Grid resistance", results.resistance_ohm, "ohm", cf.laurent_niemann_ohm, "Laurent-Niemann, Eq. 51"),
        ("Touch / mesh voltage", results.max_touch_v, "V", cf.mesh_voltage_v, "Em, Eq. 80"),
        ("Step voltage", results.max_step_v, "V", cf.step_voltage_v, "Es, Eq. 92"),
    ]
    return [(q, num, u, c, eq, _diff_pct(num, c)) for q, num, u, c, eq in rows]


def closed_form_to_dict(results: Results) -> dict[str, Any]:
    """IEEE Std 80 closed forms beside the numerical values."""
    cf = results.closed_form
    sizing = results.sizing
    out: dict[str, Any] = {
        "note": CLOSED_FORM_NOTE,
        "required_conductor_area_mm2": sizing.required_mm2 if sizing else None,
    }
    if cf is None:
        out["available"] = False
        out["reason"] = "the conductors enclose no area, so the grid equations do not apply"
        return out
    q = cf.layout
    out.update(
        {
            "available": True,
            "resistivity_used_ohm_m": cf.rho_ohm_m,
            "sverak_resistance_ohm": cf.sverak_ohm,
            "laurent_niemann_resistance_ohm": cf.laurent_niemann_ohm,
            "schwarz_resistance_ohm": cf.schwarz_ohm,
            "mesh_voltage_v": cf.mesh_voltage_v,
            "step_voltage_v": cf.step_voltage_v,
            "n": cf.n,
            "na": cf.na,
            "nb": cf.nb,
            "nc": cf.nc,
            "nd": cf.nd,
            "km": cf.km,
            "ki": cf.ki,
            "ks": cf.ks,
            "lm_m": cf.lm_m,
            "ls_m": cf.ls_m,
            "layout": {
                "lc_m": q.lc_m,
                "lr_m": q.lr_total_m,
                "rod_count": q.rod_count,
                "area_m2": q.area_m2,
                "perimeter_m": q.perimeter_m,
                "lx_m": q.length_x_m,
                "ly_m": q.length_y_m,
                "dm_m": q.max_distance_m,
                "spacing_m": q.spacing_m,
                "spacing_from": q.spacing_from,
                "depth_m": q.depth_m,
                "diameter_m": q.diameter_m,
                "rods_on_perimeter": q.rods_on_perimeter,
            },
            "difference_pct": {
                "resistance_vs_sverak": _diff_pct(results.resistance_ohm, cf.sverak_ohm),
                "resistance_vs_schwarz": _diff_pct(results.resistance_ohm, cf.schwarz_ohm),
                "resistance_vs_laurent_niemann": _diff_pct(results.resistance_ohm, cf.laurent_niemann_ohm),
                "touch_vs_mesh_voltage": _diff_pct(results.max_touch_v, cf.mesh_voltage_v),
                "step_vs_step_voltage": _diff_pct(results.max_step_v, cf.step_voltage_v),
            },
            "warnings": list(cf.warnings),
        }
    )
    return out


def sizing_to_dict(sizing) -> dict[str, Any] | None:
    """Conductor sizing (IEEE Std 80 Eq. 37) as a dictionary."""
    if sizing is None:
        return None
    mats: dict[str, dict[str, float]] = {}
    for i in sizing.items:
        mats.setdefault(i.material, {"required_area_mm2": i.required_mm2, "max_temperature_c": i.max_temp_c})
    return {
        "current_a": sizing.current_a,
        "duration_s": sizing.duration_s,
        "ambient_c": sizing.ambient_c,
        "ok": sizing.ok,
        "by_material": mats,
        "undersized": [
            {
                "label": i.label,
                "kind": i.kind,
                "material": i.material,
                "area_mm2": i.area_mm2,
                "required_mm2": i.required_mm2,
            }
            for i in sizing.undersized
        ],
        "smallest_area_mm2": min(i.area_mm2 for i in sizing.items),
    }


def soil_fit_to_dict(fit) -> dict[str, Any]:
    """A :class:`~groundcalc.soil.wenner.SoilFit` as a JSON-ready dictionary."""
    return {
        "two_layer": {
            "upper_resistivity_ohm_m": fit.rho1_ohm_m,
            "upper_thickness_m": fit.thickness_m,
            "lower_resistivity_ohm_m": fit.rho2_ohm_m,
            "reflection_coefficient": fit.soil.reflection_k,
            "rms_misfit_pct": fit.misfit_pct,
        },
        "uniform": {"resistivity_ohm_m": fit.uniform_ohm_m, "rms_misfit_pct": fit.uniform_misfit_pct},
        "readings": [
            {
                "spacing_m": a,
                "measured_ohm_m": m,
                "two_layer_ohm_m": p,
                "two_layer_deviation_pct": dev,
                "uniform_deviation_pct": udev,
                "row": row,
            }
            for (a, m, p, dev, udev), row in zip(fit.table(), fit.readings.rows or [None] * 999, strict=False)
        ],
        "method": "least squares on log apparent resistivity, IEEE Std 81 two-layer Wenner series",
        "starting_points": fit.starts,
        "layered": None
        if getattr(fit, "layered", None) is None
        else {
            "criterion": fit.layered.criterion,
            "chosen_layers": fit.layered.chosen.layers,
            "summary": fit.layered.summary(),
            "fits": [
                {
                    "layers": f.layers,
                    "resistivities_ohm_m": list(f.profile.rho),
                    "thicknesses_m": list(f.profile.thickness),
                    "rms_misfit_pct": f.rms_pct,
                    "aic": f.aic,
                    "bic": f.bic,
                    "parameters": f.parameters,
                    "starting_points": f.starts,
                }
                for f in fit.layered.fits
            ],
        },
    }


def write_design_with_soil(source: str | Path, target: str | Path, fit) -> None:
    """Copy a workbook with its Soil sheet set to the fitted two-layer model.

    The source is only read. Rows for Model, upper resistivity, upper
    thickness and lower resistivity are rewritten in the template's units
    (or added); every other cell and sheet is copied as openpyxl reads it.
    """
    import openpyxl

    from .schema import SOIL
    from .template import keyvalue_sheet
    from .units import normalise_name, split_header

    wb = openpyxl.load_workbook(source, data_only=True)  # formulas written as their cached values
    ws = None
    for name in wb.sheetnames:
        if normalise_name(name) == normalise_name(SOIL.name):
            ws = wb[name]
    if ws is None:
        ws = keyvalue_sheet(wb, SOIL)
    note = (
        f"Fitted by groundcalc soil to the Wenner readings (RMS misfit {fit.misfit_pct:.2g} %); "
        "check against the site investigation."
    )
    values = {
        "model": ("Model", "two-layer"),
        "upper resistivity": ("Upper resistivity [ohm*m]", round(fit.rho1_ohm_m, 6)),
        "upper thickness": ("Upper thickness [m]", round(fit.thickness_m, 6)),
        "lower resistivity": ("Lower resistivity [ohm*m]", round(fit.rho2_ohm_m, 6)),
    }
    layered = getattr(fit, "layered", None)
    if layered is not None and layered.chosen.layers >= 3:
        _write_layers_sheet(wb, layered.chosen.profile)
        values = {"model": ("Model", "multilayer")}
        note = (
            f"Fitted by groundcalc soil to the Wenner readings: {layered.chosen.layers} layers on the "
            f"'Layers' sheet ({layered.criterion} preferred; RMS misfit {layered.chosen.rms_pct:.2g} %); "
            "check against the site investigation."
        )
    heads = [normalise_name(c.value) if c.value is not None else "" for c in ws[1]]
    key_names = {normalise_name(SOIL.key_header), "quantity", "field", "item"}
    kcol = next((i for i, h in enumerate(heads) if h in key_names), 0) + 1  # the sheet's own layout
    vcol = (heads.index("value") + 1) if "value" in heads else kcol + 1
    ncol = (heads.index("notes") + 1) if "notes" in heads else max(kcol, vcol) + 1
    for r in range(2, ws.max_row + 1):
        text = ws.cell(row=r, column=kcol).value
        if text is None:
            continue
        key = split_header(str(text))[0]
        if key in values:
            header, val = values.pop(key)
            ws.cell(row=r, column=kcol, value=header)
            ws.cell(row=r, column=vcol, value=val)
            ws.cell(row=r, column=ncol, value=note)
    for header, val in values.values():
        r = ws.max_row + 1
        ws.cell(row=r, column=kcol, value=header)
        ws.cell(row=r, column=vcol, value=val)
        ws.cell(row=r, column=ncol, value=note)
    atomic_write(target, lambda tmp: wb.save(tmp))


def _write_layers_sheet(wb, prof) -> None:
    """Replace (or add) the Layers sheet with a fitted profile."""
    from .schema import LAYERS
    from .units import normalise_name

    for name in list(wb.sheetnames):
        if normalise_name(name) == normalise_name(LAYERS.name):
            del wb[name]
    ws = wb.create_sheet(LAYERS.name)
    ws.append([f.header() for f in LAYERS.fields])
    for k, rho in enumerate(prof.rho):
        thick = round(prof.thickness[k], 6) if k < len(prof.thickness) else None
        ws.append([k + 1, round(rho, 6), thick])


def write_design_with_layout(source: str | Path, target: str | Path, grid, added_rods, note: str) -> None:
    """Copy a workbook with its single Grids row set to ``grid`` and ``added_rods`` appended.

    The source is only read. Only the two conductor counts of the Grids row
    change; the rods go below the existing rows of the Rods sheet, in its
    column order.
    """
    import openpyxl

    from .schema import GRIDS, RODS
    from .units import UNITS, normalise_name, normalise_unit, split_header

    wb = openpyxl.load_workbook(source, data_only=True)  # formulas written as their cached values

    def sheet(spec):
        for name in wb.sheetnames:
            if normalise_name(name) == normalise_name(spec.name):
                return wb[name]
        return None

    def columns(ws) -> dict[str, int]:
        return {split_header(str(c.value))[0]: c.column for c in ws[1] if c.value is not None}

    ws = sheet(GRIDS)
    cols = columns(ws)
    data = [r for r in ws.iter_rows(min_row=2) if any(c.value is not None for c in r)]
    row = data[0][0].row
    ws.cell(row=row, column=cols["conductors along x"], value=grid.n_along_x)
    ws.cell(row=row, column=cols["conductors along y"], value=grid.n_along_y)
    rods_ws = sheet(RODS)
    if rods_ws is None:
        rods_ws = wb.create_sheet(RODS.name)
        rods_ws.append([f.header() for f in RODS.fields])
    rcols = columns(rods_ws)
    scale = {}
    for c in rods_ws[1]:
        if c.value is None:
            continue
        name, unit = split_header(str(c.value))
        scale[name] = UNITS["length"].get(normalise_unit(unit), 1.0) if unit else 1.0
    last = max([r[0].row for r in rods_ws.iter_rows(min_row=2) if any(c.value is not None for c in r)] or [1])
    for k, rod in enumerate(added_rods, start=1):
        vals = {
            "label": rod.label,
            "x": rod.x_m,
            "y": rod.y_m,
            "top depth": rod.top_depth_m,
            "length": rod.length_m,
            "diameter": rod.diameter_m,
        }
        for key, v in vals.items():
            if key in rcols:
                out = v if key == "label" else round(v / scale.get(key, 1.0), 9)
                rods_ws.cell(row=last + k, column=rcols[key], value=out)
    if added_rods:
        rods_ws.cell(row=last + 1, column=max(rcols.values()) + 1, value=note)
    atomic_write(target, lambda tmp: wb.save(tmp))


def _json_scalar(value: Any) -> Any:
    """NumPy scalars (float64, bool_, int64) as their Python values; anything else is an error."""
    import numpy as np

    if isinstance(value, np.generic):
        return value.item()
    raise TypeError(f"Object of type {type(value).__name__} is not JSON serializable")


def write_json(path: str | Path, data: dict[str, Any]) -> None:
    """Write ``data`` as indented JSON, atomically."""

    def writer(tmp: Path) -> None:
        with open(tmp, "w", encoding="utf-8") as fh:
            json.dump(data, fh, indent=2, allow_nan=False, default=_json_scalar)
            fh.write("\n")

    atomic_write(path, writer)
