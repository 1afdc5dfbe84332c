"""Read a design workbook (.xlsx) into a validated :class:`~groundcalc.model.Design`.

Every problem raises :class:`~groundcalc.errors.InputError` naming the sheet,
row and column and saying what would be valid. The workbook is opened read
only and never written.
"""

from __future__ import annotations

import logging
import re
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..model import (
    Conductor,
    Design,
    Fault,
    FaultOverride,
    GridSpec,
    Notice,
    Project,
    Rod,
    Settings,
    Soil,
    SoilOverride,
    SurfaceLayer,
    SurfaceLayerOverride,
    Variant,
    WennerReadings,
)
from ..safety.materials import DEFAULT_MATERIAL
from ..soil.wenner import wenner_apparent_resistivity
from ..validation import check_wenner, prepare
from .cells import (
    MAX_TABLE_ROWS,
    Cell,
    _column_label,
    _is_blank,
    _missing,
    _required,
    _row_of,
    _rows,
    check_formulas,
    open_workbook,
    read_keyvalue,
    read_table,
    value,
)
from .schema import CONDUCTORS, FAULT, GRIDS, LAYERS, PROJECT, RODS, SETTINGS, SOIL, VARIANTS, WENNER, Field, SheetSpec
from .sheetcheck import check_layout
from .sheetcheck import find_sheet as _find_sheet
from .units import split_header

log = logging.getLogger(__name__)

__all__ = ["MAX_TABLE_ROWS", "locate", "open_workbook", "read_design", "read_keyvalue", "read_table", "read_wenner"]


def _read_project(wb) -> Project:
    cells = read_keyvalue(wb, PROJECT)
    f = {x.key: x for x in PROJECT.fields}
    return Project(
        project=value(cells, f["project"], ""),
        site=value(cells, f["site"], ""),
        prepared_by=value(cells, f["prepared by"], ""),
        revision=value(cells, f["revision"], ""),
    )


def _read_soil(wb, notices: list[Notice]) -> tuple[Soil, SurfaceLayer | None]:
    cells = read_keyvalue(wb, SOIL)
    f = {x.key: x for x in SOIL.fields}

    def req(key: str, why: str) -> Any:
        v = value(cells, f[key])
        if v is None:
            raise _missing(cells, SOIL, f[key], why)
        return v

    model = req("model", "")
    if model == "fitted":
        for key in ("upper resistivity", "upper thickness", "lower resistivity"):
            if value(cells, f[key]) is not None:
                notices.append(
                    Notice(
                        "ignored-input",
                        f"Soil '{f[key].name}' is ignored because Model = fitted (the model is fitted to "
                        "the Wenner readings).",
                        "note",
                    )
                )
        soil = Soil("fitted")
        rho_s = value(cells, f["surface layer resistivity"])
        h_s = value(cells, f["surface layer thickness"])
        return soil, _surface(cells, f, rho_s, h_s)
    if model == "multilayer":
        for key in ("upper resistivity", "upper thickness", "lower resistivity"):
            if value(cells, f[key]) is not None:
                notices.append(
                    Notice(
                        "ignored-input",
                        f"Soil '{f[key].name}' is ignored because Model = multilayer (the layers are read "
                        "from the 'Layers' sheet).",
                        "note",
                    )
                )
        layers = _read_layers(wb)
        soil = Soil("multilayer", layers[0][0], layers[0][1], layers[1][0], layers=layers)
        rho_s = value(cells, f["surface layer resistivity"])
        h_s = value(cells, f["surface layer thickness"])
        return soil, _surface(cells, f, rho_s, h_s)
    rho1 = req("upper resistivity", "")
    if model == "uniform":
        for key in ("upper thickness", "lower resistivity"):
            if value(cells, f[key]) is not None:
                notices.append(
                    Notice("ignored-input", f"Soil '{f[key].name}' is ignored because Model = uniform.", "note")
                )
        soil = Soil("uniform", rho1)
    else:
        soil = Soil(
            "two-layer",
            rho1,
            req("upper thickness", " when Model = two-layer"),
            req("lower resistivity", " when Model = two-layer"),
        )
    rho_s = value(cells, f["surface layer resistivity"])
    h_s = value(cells, f["surface layer thickness"])
    return soil, _surface(cells, f, rho_s, h_s)


#: Most layers the Layers sheet accepts.
MAX_LAYERS = 8


def _read_layers(wb) -> tuple[tuple[float, float | None], ...]:
    """The Layers sheet: (resistivity, thickness) from the top, the last thickness None."""
    f = _field_map(LAYERS)
    rows = read_table(wb, LAYERS)
    if not rows:
        raise InputError(
            "Model = multilayer needs the 'Layers' sheet, but it is missing or empty",
            sheet=SOIL.name,
            column="Value (Model)",
            fix="Add a 'Layers' sheet with the columns "
            + ", ".join(f"'{x.header()}'" for x in LAYERS.fields)
            + ", one row per layer from the top, the last thickness blank",
        )
    if len(rows) > MAX_LAYERS:
        raise InputError(
            f"{len(rows)} layers given; at most {MAX_LAYERS} are supported",
            sheet=LAYERS.name,
            row=_row_of(rows[MAX_LAYERS]),
            column="'Layer' (A)",
            fix="Merge thin layers of similar resistivity",
        )
    out: list[tuple[float, float | None]] = []
    for k, cells in enumerate(rows):
        row = _row_of(cells)
        num = _required(cells, LAYERS, f["layer"], row)
        if num != k + 1:
            c = cells["layer"]
            raise InputError(
                f"layer number {num} on this row, expected {k + 1}",
                sheet=c.sheet,
                row=c.row,
                column=c.column,
                fix="Number the layers 1, 2, 3 ... from the top, one row each, in order",
            )
        rho = _required(cells, LAYERS, f["resistivity"], row)
        h = value(cells, f["thickness"]) if "thickness" in cells else None
        last = k == len(rows) - 1
        if last and h is not None:
            c = cells["thickness"]
            raise InputError(
                f"the last layer (layer {num}) has a thickness ({h:g} m)",
                sheet=c.sheet,
                row=c.row,
                column=c.column,
                fix="Leave the last layer's thickness blank (it extends downward without end), "
                "or add the layer below it",
            )
        if not last and h is None:
            raise InputError(
                f"layer {num} has no thickness",
                sheet=LAYERS.name,
                row=row,
                column=cells["thickness"].column if "thickness" in cells else "'Thickness [m]' (C)",
                fix="Give the thickness of every layer except the last",
            )
        out.append((float(rho), None if last else float(h)))
    if len(out) < 2:
        raise InputError(
            "only one layer given on the 'Layers' sheet",
            sheet=LAYERS.name,
            row=_row_of(rows[0]),
            column="'Layer' (A)",
            fix="Give two or more layers, or choose Model = uniform on the Soil sheet",
        )
    return tuple(out)


def _surface(cells, f, rho_s, h_s) -> SurfaceLayer | None:
    if (rho_s is None) != (h_s is None):
        given, missing = ("surface layer resistivity", "surface layer thickness")[:: 1 if rho_s is not None else -1]
        err = _missing(cells, SOIL, f[missing], f" because '{f[given].name}' is given")
        err.fix = "Give both surface layer values, or leave both blank for no surface layer"
        raise err
    return SurfaceLayer(rho_s, h_s) if rho_s is not None else None


def _read_fault(wb, notices: list[Notice]) -> Fault:
    cells = read_keyvalue(wb, FAULT)
    f = {x.key: x for x in FAULT.fields}

    def req(key: str) -> Any:
        v = value(cells, f[key])
        if v is None:
            raise _missing(cells, FAULT, f[key])
        return v

    i0 = req("fault current")
    xr = req("x/r ratio")
    tf = req("fault duration")
    sf = value(cells, f["split factor"])
    if sf is None:
        sf = 1.0
        notices.append(Notice("default-used", "Split factor blank: taken as 1.0 (all of 3I0 into the grid).", "note"))
    ts = value(cells, f["shock duration"])
    if ts is None:
        ts = tf
        notices.append(Notice("default-used", "Shock duration blank: taken equal to the fault duration.", "note"))
    weight = value(cells, f["body weight"])
    if weight is None:
        weight = 50.0
        notices.append(Notice("default-used", "Body weight blank: 50 kg used (the more conservative limit).", "note"))
    else:
        _check_body_weight(weight, cells[f["body weight"].key])
    freq = value(cells, f["frequency"])
    if freq is None:
        freq = 60.0
        notices.append(Notice("default-used", "Frequency blank: 60 Hz used.", "note"))
    ambient = value(cells, f["ambient temperature"])
    if ambient is None:
        ambient = 40.0
    tmax = value(cells, f["maximum conductor temperature"])
    limits = {}
    for key in ("touch voltage limit", "step voltage limit"):
        limits[key] = value(cells, f[key])
        if limits[key] is not None:
            notices.append(
                Notice(
                    "user-limit",
                    f"{f[key].name} {limits[key]:g} V is user-defined and replaces the IEEE Std 80 value.",
                )
            )
    return Fault(
        fault_current_a=i0,
        split_factor=sf,
        x_over_r=xr,
        fault_duration_s=tf,
        shock_duration_s=ts,
        body_weight_kg=float(round(weight)),
        frequency_hz=freq,
        ambient_c=ambient,
        max_conductor_c=tmax,
        touch_limit_v=limits["touch voltage limit"],
        step_limit_v=limits["step voltage limit"],
    )


def _check_body_weight(weight: float, cell: Cell) -> None:
    """IEEE Std 80 gives tolerable voltages for 50 and 70 kg only."""
    if round(weight) not in (50, 70) or abs(weight - round(weight)) > 1e-9:
        raise InputError(
            f"body weight must be 50 or 70 kg, got {cell.value}",
            sheet=cell.sheet,
            row=cell.row,
            column=cell.column,
            fix="IEEE Std 80 gives tolerable voltages for 50 kg and 70 kg; enter 50 or 70",
        )


def _read_settings(wb) -> Settings:
    cells = read_keyvalue(wb, SETTINGS)
    f = {x.key: x for x in SETTINGS.fields}
    # ranges are checked on the model (groundcalc.validation), whatever the entry point
    seg = value(cells, f["segment length"], 1.0)
    spacing = value(cells, f["raster spacing"])
    snap = value(cells, f["snap tolerance"], 0.0)
    return Settings(seg, spacing, value(cells, f["margin"], 5.0), snap)


def _field_map(spec: SheetSpec) -> dict[str, Field]:
    return {x.key: x for x in spec.fields}


def _read_conductors(wb) -> list[Conductor]:
    f = _field_map(CONDUCTORS)
    out = []
    for cells in read_table(wb, CONDUCTORS):
        row = _row_of(cells)
        v = {k: _required(cells, CONDUCTORS, f[k], row) for k in f if f[k].required}
        label = value(cells, f["label"]) or f"C{row}"
        start = (v["x1"], v["y1"], v["depth1"])
        end = (v["x2"], v["y2"], v["depth2"])
        mat = value(cells, f["material"]) or DEFAULT_MATERIAL
        cond = Conductor(label, start, end, v["diameter"], "conductor", f"{CONDUCTORS.name} row {row}", mat)
        if cond.length_m < 1e-6:
            raise InputError(
                "the conductor has zero length (both ends are the same point)",
                sheet=CONDUCTORS.name,
                row=row,
                column="'X2 [m]' to 'Depth2 [m]'",
                fix="Give the second end a different position, or delete the row",
            )
        out.append(cond)
    return out


def _read_rods(wb) -> list[Rod]:
    f = _field_map(RODS)
    out = []
    for cells in read_table(wb, RODS):
        row = _row_of(cells)
        v = {k: _required(cells, RODS, f[k], row) for k in f if f[k].required}
        label = value(cells, f["label"]) or f"R{row}"
        mat = value(cells, f["material"]) or DEFAULT_MATERIAL
        out.append(
            Rod(label, v["x"], v["y"], v["top depth"], v["length"], v["diameter"], f"{RODS.name} row {row}", mat)
        )
    return out


def _read_grids(wb) -> list[GridSpec]:
    f = _field_map(GRIDS)
    out = []
    for cells in read_table(wb, GRIDS):
        row = _row_of(cells)
        v = {k: _required(cells, GRIDS, f[k], row) for k in f if f[k].required}
        for key in ("conductors along x", "conductors along y"):
            if v[key] < 2:
                c = cells[key]
                raise InputError(
                    f"{f[key].name} must be at least 2 (the two edges), got {c.value}",
                    sheet=c.sheet,
                    row=c.row,
                    column=c.column,
                    fix="Count every parallel conductor including both outer ones",
                )
        label = value(cells, f["label"]) or f"G{row}"
        out.append(
            GridSpec(
                label,
                v["x0"],
                v["y0"],
                v["length x"],
                v["length y"],
                v["conductors along x"],
                v["conductors along y"],
                v["depth"],
                v["diameter"],
                f"{GRIDS.name} row {row}",
                value(cells, f["material"]) or DEFAULT_MATERIAL,
            )
        )
    return out


#: Fewest Wenner spacings a two-layer fit accepts.
MIN_WENNER_SPACINGS = 3


def _read_wenner(wb) -> WennerReadings | None:
    f = _field_map(WENNER)
    rows = read_table(wb, WENNER)
    if not rows:
        return None
    spacing, rho, where = [], [], []
    seen: dict[float, int] = {}
    for cells in rows:
        row = _row_of(cells)
        a = _required(cells, WENNER, f["spacing"], row)
        r = value(cells, f["resistance"])
        ra = value(cells, f["apparent resistivity"])
        b = value(cells, f["pin depth"])
        if (r is None) == (ra is None):
            raise InputError(
                "give either the resistance or the apparent resistivity for this spacing"
                + (" (both are filled in)" if r is not None else " (both are blank)"),
                sheet=WENNER.name,
                row=row,
                column="'Resistance [ohm]' / 'Apparent resistivity [ohm*m]'",
                fix="Fill in exactly one of the two",
            )
        if b is not None and b >= a:
            c = cells["pin depth"]
            raise InputError(
                f"pin depth {b:g} m is not smaller than the spacing {a:g} m",
                sheet=c.sheet,
                row=c.row,
                column=c.column,
                fix="The Wenner formula needs pins much shallower than their spacing (b < a/20 is usual)",
            )
        key = round(a, 9)
        if key in seen:
            c = cells["spacing"]
            raise InputError(
                f"spacing {a:g} m is given twice (first on row {seen[key]})",
                sheet=c.sheet,
                row=c.row,
                column=c.column,
                fix="Average repeated readings into one row, or delete one of them",
            )
        seen[key] = row
        if ra is None:
            ra = float(wenner_apparent_resistivity(a, r, b))
        spacing.append(a)
        rho.append(ra)
        where.append(row)
    if len(spacing) < MIN_WENNER_SPACINGS:
        raise InputError(
            f"only {len(spacing)} Wenner spacing(s) given; a soil model needs at least {MIN_WENNER_SPACINGS}",
            sheet=WENNER.name,
            row=where[-1] + 1,
            column="'Spacing [m]' (A)",
            fix="Add readings at more spacings; 6 to 12 spacings from about 0.5 m to the grid size are usual",
        )
    return WennerReadings(tuple(spacing), tuple(rho), tuple(where), WENNER.name)


#: Variants sheet column -> (group, field) of :class:`~groundcalc.model.Variant`.
VARIANT_COLUMNS = {
    "upper resistivity": ("soil", "rho1_ohm_m"),
    "upper thickness": ("soil", "thickness_m"),
    "lower resistivity": ("soil", "rho2_ohm_m"),
    "surface layer resistivity": ("surface_layer", "rho_ohm_m"),
    "surface layer thickness": ("surface_layer", "thickness_m"),
    "fault current": ("fault", "fault_current_a"),
    "split factor": ("fault", "split_factor"),
    "fault duration": ("fault", "fault_duration_s"),
    "body weight": ("fault", "body_weight_kg"),
}


def _read_variants(wb, base: Design, places: dict[str, tuple[int, dict]] | None = None) -> list[Variant]:
    """Rows of the optional Variants sheet as typed overrides; any column it does not know is an error.

    Each variant is applied to ``base`` once here, so that an inconsistent
    row is reported with its sheet, row and column.
    """
    from ..studies.variants import VariantError, apply_variant

    ws = _find_sheet(wb, VARIANTS.name)
    if ws is None:
        return []
    rows = _rows(ws, MAX_TABLE_ROWS)
    if not rows:
        return []
    for col, h in enumerate(rows[0][1]):
        if _is_blank(h):
            continue
        if VARIANTS.field(split_header(str(h))[0]) is None:
            raise InputError(
                f"'{h}' is not a quantity a variant can change",
                sheet=ws.title,
                row=1,
                column=_column_label(str(h), col),
                fix="Variants may change: " + ", ".join(f"'{f.header()}'" for f in VARIANTS.fields[1:]),
            )
    fields = _field_map(VARIANTS)
    out: list[Variant] = []
    seen: dict[str, int] = {}
    for cells in read_table(wb, VARIANTS):
        row = _row_of(cells)
        name = value(cells, fields["variant"])
        if name is None:
            raise _missing(cells, VARIANTS, fields["variant"], "each variant needs a name")
        name = str(name).strip()
        if name.lower() in seen:
            c = cells["variant"]
            raise InputError(
                f"the variant name '{name}' is used twice (rows {seen[name.lower()]} and {row})",
                sheet=c.sheet,
                row=c.row,
                column=c.column,
                fix="Give every variant its own name",
            )
        seen[name.lower()] = row or 0
        overrides: dict[tuple[str, str], float] = {}
        columns: dict[tuple[str, str], str] = {}
        for key, f in fields.items():
            if key == "variant" or key not in cells:
                continue
            v = value(cells, f)
            if v is not None:
                overrides[VARIANT_COLUMNS[key]] = float(v)
                columns[VARIANT_COLUMNS[key]] = cells[key].column
        if not overrides:
            c = cells["variant"]
            raise InputError(
                f"the variant '{name}' changes nothing",
                sheet=c.sheet,
                row=c.row,
                column=c.column,
                fix="Fill in at least one quantity to change, or delete the row",
            )
        if ("fault", "body_weight_kg") in overrides:
            _check_body_weight(overrides[("fault", "body_weight_kg")], cells["body weight"])
        groups: dict[str, dict[str, float]] = {"soil": {}, "surface_layer": {}, "fault": {}}
        for (group, name_), v in overrides.items():
            groups[group][name_] = v
        variant = Variant(
            name,
            SoilOverride(**groups["soil"]),
            SurfaceLayerOverride(**groups["surface_layer"]),
            FaultOverride(**groups["fault"]),
        )
        try:
            apply_variant(base, variant)
        except VariantError as exc:
            raise InputError(exc.problem, sheet=ws.title, row=row, column=columns.get(exc.field), fix=exc.fix) from None
        if places is not None:
            places[name] = (row, columns)
        out.append(variant)
    return out


#: Model quantity (``InputError.quantity`` of :mod:`groundcalc.validation`) -> (sheet, field key).
_KEYVALUE_QUANTITIES = {
    "soil.model": (SOIL, "model"),
    "soil.rho1_ohm_m": (SOIL, "upper resistivity"),
    "soil.thickness_m": (SOIL, "upper thickness"),
    "soil.rho2_ohm_m": (SOIL, "lower resistivity"),
    "surface.rho_ohm_m": (SOIL, "surface layer resistivity"),
    "surface.thickness_m": (SOIL, "surface layer thickness"),
    "fault.fault_current_a": (FAULT, "fault current"),
    "fault.split_factor": (FAULT, "split factor"),
    "fault.x_over_r": (FAULT, "x/r ratio"),
    "fault.fault_duration_s": (FAULT, "fault duration"),
    "fault.shock_duration_s": (FAULT, "shock duration"),
    "fault.body_weight_kg": (FAULT, "body weight"),
    "fault.frequency_hz": (FAULT, "frequency"),
    "fault.ambient_c": (FAULT, "ambient temperature"),
    "fault.max_conductor_c": (FAULT, "maximum conductor temperature"),
    "fault.touch_limit_v": (FAULT, "touch voltage limit"),
    "fault.step_limit_v": (FAULT, "step voltage limit"),
    "settings.segment_length_m": (SETTINGS, "segment length"),
    "settings.raster_spacing_m": (SETTINGS, "raster spacing"),
    "settings.margin_m": (SETTINGS, "margin"),
    "settings.snap_tolerance_m": (SETTINGS, "snap tolerance"),
}

#: Last part of a quantity of a table item -> field key, per sheet (``None`` key: any sheet).
_TABLE_COLUMNS = {
    "diameter_m": {None: "diameter"},
    "depth1": {"Conductors": "depth1", "Grids": "depth"},
    "depth2": {"Conductors": "depth2", "Grids": "depth"},
    "depth_m": {"Rods": "top depth", "Grids": "depth", "Conductors": "depth1"},
    "position": {"Conductors": "x1", "Rods": "x", "Grids": "x0"},
    "length_m": {"Rods": "length", "Conductors": "x2", "Grids": "length x"},
    "length_x_m": {None: "length x"},
    "length_y_m": {None: "length y"},
    "n_along_x": {None: "conductors along x"},
    "n_along_y": {None: "conductors along y"},
    "spacing_m": {None: "spacing"},
}


def _locations(wb) -> dict:
    """Cells of the key-value quantities and column labels of the tables, for :func:`locate`."""
    cells = {spec.name: read_keyvalue(wb, spec) for spec in (SOIL, FAULT, SETTINGS)}
    columns: dict[str, dict[str, str]] = {}
    for spec in (CONDUCTORS, RODS, GRIDS, WENNER):
        ws = _find_sheet(wb, spec.name)
        labels: dict[str, str] = {}
        if ws is not None:
            for row in ws.iter_rows(min_row=1, max_row=1, values_only=True):
                for col, h in enumerate(row):
                    if not _is_blank(h):
                        f = spec.field(split_header(str(h))[0])
                        if f is not None and f.key not in labels:
                            labels[f.key] = _column_label(str(h), col)
        columns[spec.name] = labels
    return {"cells": cells, "columns": columns}


def locate(exc: InputError, where: dict) -> InputError:
    """Give an error from the model checks the sheet, row and column it came from."""
    if exc.sheet is not None:
        return exc
    q = exc.quantity or ""
    if exc.item:
        m = re.match(r"^(\w+) row (\d+)$", exc.item)
        if m:
            sheet, row = m.group(1), int(m.group(2))
            keys = _TABLE_COLUMNS.get(q.rsplit(".", 1)[-1], {})
            key = keys.get(sheet, keys.get(None))
            column = where["columns"].get(sheet, {}).get(key) if key else None
            return InputError(exc.problem, sheet=sheet, row=row, column=column, fix=exc.fix, quantity=q, item=exc.item)
    if q in _KEYVALUE_QUANTITIES:
        spec, key = _KEYVALUE_QUANTITIES[q]
        cell = where["cells"].get(spec.name, {}).get(key)
        if cell is not None:
            return InputError(exc.problem, sheet=cell.sheet, row=cell.row, column=cell.column, fix=exc.fix, quantity=q)
        fix = (exc.fix or "") + f" (the value is blank on the '{spec.name}' sheet, so its default was used)"
        return InputError(exc.problem, sheet=spec.name, column=f"'{spec.field(key).header()}'", fix=fix, quantity=q)
    return exc


def read_wenner(path: str | Path) -> WennerReadings:
    """Read the Wenner sheet of a workbook.

    Raises
    ------
    InputError
        When the sheet is missing, empty or has bad readings.
    """
    wb = open_workbook(path)
    try:
        check_formulas(path, wb)
        notices: list[Notice] = []
        check_layout(wb, notices)
        for n in notices:
            log.warning("%s: %s", n.level, n.message)
        readings = _read_wenner(wb)
        where = _locations(wb)
    finally:
        wb.close()
    if readings is not None:
        try:
            check_wenner(readings)
        except InputError as exc:
            raise locate(exc, where) from None
    if readings is None:
        raise InputError(
            f"'{Path(path).name}' has no Wenner readings",
            sheet=WENNER.name,
            fix="Add a 'Wenner' sheet with the columns " + ", ".join(f"'{x.header()}'" for x in WENNER.fields),
        )
    return readings


#: Sheet that marks a workbook imported from a drawing (see groundcalc.io.dxf_workbook).
DRAWING_SHEET = "Drawing"


def check_import_complete(wb) -> None:
    """Refuse an imported workbook whose soil or fault data are still blank, naming every one.

    Only workbooks with a ``Drawing`` sheet (written by
    :mod:`groundcalc.io.dxf_workbook`) are checked; others get the reader's
    usual messages.

    Raises
    ------
    InputError
        Listing each blank quantity with its sheet and cell.
    """
    ws = _find_sheet(wb, DRAWING_SHEET)
    if ws is None:
        return
    missing = []
    soil = read_keyvalue(wb, SOIL)
    sf = {x.key: x for x in SOIL.fields}

    def blank(cells, spec, key) -> None:
        cell = cells.get(key)
        if cell is None or cell.value is None or (isinstance(cell.value, str) and not cell.value.strip()):
            where = f"cell B{cell.row}" if cell is not None else "a new row"
            missing.append(f"{spec.name} '{spec.field(key).header()}' ({where})")

    blank(soil, SOIL, "model")
    model = None
    if "model" in soil and soil["model"].value is not None and str(soil["model"].value).strip():
        model = value(soil, sf["model"])
    if model != "fitted":
        blank(soil, SOIL, "upper resistivity")
    if model == "two-layer":
        blank(soil, SOIL, "upper thickness")
        blank(soil, SOIL, "lower resistivity")
    fault = read_keyvalue(wb, FAULT)
    for key in ("fault current", "x/r ratio", "fault duration"):
        blank(fault, FAULT, key)
    if missing:
        raise InputError(
            "this workbook was imported from a drawing and its soil and fault data are not filled in yet: "
            + "; ".join(missing),
            fix="Fill in these values (marked in yellow), save the workbook and run again",
        )


def read_design(path: str | Path) -> Design:
    """Read and validate a design workbook.

    Parameters
    ----------
    path : str or pathlib.Path
        The .xlsx workbook.

    Returns
    -------
    Design
        The validated design in SI units.

    Raises
    ------
    InputError
        For any problem, naming sheet, row and column.
    """
    wb = open_workbook(path)
    try:
        notices: list[Notice] = []
        check_formulas(path, wb, notices)
        check_layout(wb, notices)
        check_import_complete(wb)
        project = _read_project(wb)
        soil, surface = _read_soil(wb, notices)
        fault = _read_fault(wb, notices)
        settings = _read_settings(wb)
        conductors = _read_conductors(wb)
        rods = _read_rods(wb)
        grids = _read_grids(wb)
        from .metal import read_metal

        conductors, rods, metal = read_metal(wb, conductors, rods, notices, bool(grids))
        base = Design(project, soil, surface, fault, (), (), settings=settings)
        variant_places: dict[str, tuple[int, dict]] = {}
        variants = _read_variants(wb, base, variant_places)
        wenner = _read_wenner(wb) if soil.model == "fitted" else None
        if soil.model == "fitted" and wenner is None:
            raise InputError(
                "Model = fitted needs Wenner readings, but the 'Wenner' sheet is missing or empty",
                sheet=SOIL.name,
                row=2,
                column="'Value' (B) ('Model')",
                fix="Fill in the 'Wenner' sheet, or choose uniform or two-layer and give the resistivities",
            )
        if soil.model != "fitted" and _find_sheet(wb, WENNER.name) is not None and read_table(wb, WENNER):
            notices.append(
                Notice(
                    "ignored-input", "The Wenner readings are not used because the Soil model is not 'fitted'.", "note"
                )
            )
        where = _locations(wb)
    finally:
        wb.close()
    if not (conductors or rods or grids):
        raise InputError(
            "the design has no conductors: the Conductors, Rods and Grids sheets are all empty or missing",
            fix="Enter the grid on the 'Grids' sheet (rectangular grids) or the 'Conductors' "
            "sheet, and rods on the 'Rods' sheet",
        )
    design = Design(
        project=project,
        soil=soil,
        surface_layer=surface,
        fault=fault,
        conductors=tuple(conductors),
        rods=tuple(rods),
        grids=tuple(grids),
        settings=settings,
        notices=tuple(notices),
        source_name=Path(path).name,
        wenner=wenner,
        variants=tuple(variants),
        metal=metal,
    )
    try:
        design = prepare(design)
    except InputError as exc:
        raise locate(exc, where) from None
    if soil.model != "fitted":
        _check_variants(design, variant_places)
    return design


def _check_variants(design: Design, places: dict[str, tuple[int, dict]]) -> None:
    """Every variant makes a valid design; a refusal points at the variant's row and column."""
    from ..studies.variants import VariantError, check_variant

    for variant in design.variants:
        try:
            check_variant(design, variant)
        except VariantError as exc:
            row, columns = places.get(variant.name, (None, {}))
            raise InputError(
                exc.problem, sheet=VARIANTS.name, row=row, column=columns.get(exc.field), fix=exc.fix
            ) from None
