"""Cells of a design workbook: opening it, checking formulas, and reading key-value and table sheets.

Every value comes back as a :class:`Cell` that knows its sheet, row, column and unit, so that any
later error can name where it came from. Numbers are converted to SI units by the unit in the header
(:mod:`groundcalc.io.units`). The workbook is opened read only and never written.
"""

from __future__ import annotations

import datetime as _dt
import math
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import openpyxl
from openpyxl.utils import get_column_letter

from ..errors import InputError
from ..model import Notice
from ..safety.materials import MATERIALS, material
from .schema import Field, SheetSpec
from .sheetcheck import find_sheet as _find_sheet
from .sheetcheck import parse_text_number
from .units import UNITS, normalise_name, split_header, to_si, unit_case_problem

#: Largest number of rows read from one table sheet.
MAX_TABLE_ROWS = 20_000

_DIMENSIONLESS_UNITS = {"", "-", "pu", "p.u.", "1"}


@dataclass(frozen=True)
class Cell:
    """A value read from the workbook with its location."""

    value: Any
    sheet: str
    row: int
    column: str  # header text and column letter, e.g. "'X1 [m]' (B)"
    unit: str | None
    unit_row: int  # row holding the unit (header row of a table, own row of a key-value sheet)


def open_workbook(path: str | Path):
    """Open an .xlsx workbook read-only with cached formula values.

    Raises
    ------
    InputError
        When the file is missing, not an .xlsx workbook, or unreadable.
    """
    p = Path(path)
    if not p.exists():
        raise InputError(f"file '{p}' does not exist", fix="Check the path and file name")
    if p.is_dir():
        raise InputError(f"'{p}' is a folder, not a workbook", fix="Give the path of an .xlsx file")
    suffix = p.suffix.lower()
    if suffix in (".xls", ".csv", ".ods", ".numbers"):
        raise InputError(
            f"'{p.name}' is a {suffix} file, not an .xlsx workbook",
            fix="Open it in a spreadsheet program and save it as 'Excel Workbook (.xlsx)'",
        )
    if not zipfile.is_zipfile(p):
        raise InputError(
            f"'{p.name}' is not an .xlsx workbook (it is not a zip-based Office Open XML file; "
            "it may be password-protected, damaged or another format)",
            fix="Save it from a spreadsheet program as 'Excel Workbook (.xlsx)' without a password",
        )
    try:
        return openpyxl.load_workbook(p, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for damaged files
        raise InputError(
            f"'{p.name}' could not be read as an .xlsx workbook ({type(exc).__name__}: {exc})",
            fix="Re-save it from a spreadsheet program as 'Excel Workbook (.xlsx)'",
        ) from exc


def check_formulas(path: str | Path, wb, notices: list[Notice] | None = None) -> None:
    """Refuse formula cells without a cached value and merged cells; note hidden rows that are read.

    A workbook written by a script, or saved by a program that does not
    calculate, holds formulas without their results; openpyxl cannot
    calculate them, and reading them as blank would silently change the
    design. A merged cell keeps its value in its first cell only, so the
    other rows it covers would read as blank. Hidden rows are read like any
    other (hiding is not deleting), with a note.
    """
    from .schema import ALL_SHEETS

    large = Path(path).stat().st_size > 2_000_000
    fwb = openpyxl.load_workbook(path, read_only=large, data_only=False)
    try:
        for spec in ALL_SHEETS:
            ws, fws = _find_sheet(wb, spec.name), _find_sheet(fwb, spec.name)
            if ws is None or fws is None:
                continue
            if not large:
                _check_layout(fws, notices)
            rows = zip(ws.iter_rows(values_only=True), fws.iter_rows(values_only=True), strict=False)
            for r, (vals, forms) in enumerate(rows, start=1):
                if r > MAX_TABLE_ROWS + 1:
                    break
                for c, (v, f) in enumerate(zip(vals, forms, strict=False)):
                    if v is None and isinstance(f, str) and f.startswith("="):
                        raise InputError(
                            f"the cell holds the formula '{f}' but no calculated value",
                            sheet=ws.title,
                            row=r,
                            column=get_column_letter(c + 1),
                            fix="Open the workbook in a spreadsheet program and save it (that stores the "
                            "results of formulas), or type the value in",
                        )
    finally:
        fwb.close()


def _check_layout(ws, notices: list[Notice] | None) -> None:
    """Merged cells are refused; hidden rows with content get a note."""
    for rng in ws.merged_cells.ranges:
        raise InputError(
            f"the cells {rng.coord} are merged",
            sheet=ws.title,
            row=rng.min_row,
            column=get_column_letter(rng.min_col),
            fix="Unmerge them and give every row and column its own value",
        )
    if notices is None:
        return
    hidden = [r for r, dim in ws.row_dimensions.items() if dim.hidden and any(c.value is not None for c in ws[r])]
    if hidden:
        notices.append(
            Notice(
                "hidden-rows",
                f"Sheet '{ws.title}': hidden row(s) {', '.join(map(str, sorted(hidden)[:10]))} were read like the "
                "others (hiding a row does not remove it; delete rows that are not part of the design).",
            )
        )


def _rows(ws, limit: int) -> list[tuple[int, tuple[Any, ...]]]:
    out = []
    for idx, row in enumerate(ws.iter_rows(values_only=True), start=1):
        if idx > limit + 1:
            raise InputError(
                f"the sheet has more than {limit} rows",
                sheet=ws.title,
                row=idx,
                fix=f"Split the design or remove unused rows; at most {limit} rows are read",
            )
        out.append((idx, tuple(row)))
    return out


def _is_blank(v: Any) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


def _column_label(header: str, col: int) -> str:
    return f"'{header}' ({get_column_letter(col + 1)})"


def read_keyvalue(wb, spec: SheetSpec) -> dict[str, Cell]:
    """Read a ``Quantity | Value`` sheet.

    Returns
    -------
    dict
        Normalised field name -> :class:`Cell` (only rows with a value).
    """
    ws = _find_sheet(wb, spec.name)
    if ws is None:
        if spec.required:
            raise InputError(
                f"the workbook has no '{spec.name}' sheet",
                fix=f"Add a sheet named '{spec.name}' (run 'groundcalc template NEW.xlsx' for the format)",
            )
        return {}
    rows = _rows(ws, 1000)
    if not rows:
        if spec.required:
            raise InputError("the sheet is empty", sheet=ws.title, fix=f"Fill in {spec.purpose}")
        return {}
    header = [normalise_name(h) if h is not None else "" for h in rows[0][1]]
    key_names = {normalise_name(spec.key_header), "quantity", "field", "item"}
    try:
        kcol = next(i for i, h in enumerate(header) if h in key_names)
        vcol = header.index("value")
    except (StopIteration, ValueError):
        raise InputError(
            f"the first row must hold the headers '{spec.key_header}' and 'Value'",
            sheet=ws.title,
            row=1,
            fix=f"Put '{spec.key_header}' in A1 and 'Value' in B1, as in the template",
        ) from None
    out: dict[str, Cell] = {}
    for idx, row in rows[1:]:
        key_raw = row[kcol] if kcol < len(row) else None
        val = row[vcol] if vcol < len(row) else None
        if _is_blank(key_raw):
            if not _is_blank(val):
                raise InputError(
                    "a value has no quantity name beside it",
                    sheet=ws.title,
                    row=idx,
                    column=_column_label(spec.key_header, kcol),
                    fix="Write the quantity name in the first column or delete the value",
                )
            continue
        name, unit = split_header(str(key_raw))
        field = spec.field(name)
        if field is None:
            valid = ", ".join(f"'{f.header()}'" for f in spec.fields)
            raise InputError(
                f"'{key_raw}' is not a known quantity on this sheet",
                sheet=ws.title,
                row=idx,
                column=_column_label(spec.key_header, kcol),
                fix=f"Valid quantities are {valid}",
            )
        if field.key in out:
            raise InputError(
                f"'{field.name}' is given twice (first on row {out[field.key].row})",
                sheet=ws.title,
                row=idx,
                column=_column_label(spec.key_header, kcol),
                fix="Keep one row per quantity",
            )
        out[field.key] = Cell(val, ws.title, idx, _column_label("Value", vcol) + f" ('{key_raw}')", unit, idx)
    return out


def read_table(wb, spec: SheetSpec, limit: int = MAX_TABLE_ROWS) -> list[dict[str, Cell]]:
    """Read a table sheet: headers in row 1, one item per row below.

    Returns
    -------
    list of dict
        One dict per non-empty row: normalised field name -> :class:`Cell`.
    """
    ws = _find_sheet(wb, spec.name)
    if ws is None:
        return []
    rows = _rows(ws, limit)
    if not rows:
        return []
    headers = rows[0][1]
    colmap: dict[str, tuple[int, str, str | None]] = {}
    for col, h in enumerate(headers):
        if _is_blank(h):
            continue
        name, unit = split_header(str(h))
        field = spec.field(name)
        if field is None:
            continue
        if field.key in colmap:
            raise InputError(
                f"the column '{field.name}' appears twice",
                sheet=ws.title,
                row=1,
                column=_column_label(str(h), col),
                fix="Keep one column per quantity",
            )
        colmap[field.key] = (col, str(h), unit)
    data_rows = [(i, r) for i, r in rows[1:] if any(not _is_blank(v) for v in r)]
    if not data_rows:
        return []
    for f in spec.fields:
        if f.required and f.key not in colmap:
            raise InputError(
                f"the required column '{f.header()}' is missing",
                sheet=ws.title,
                row=1,
                fix="Headers in row 1 must be: " + ", ".join(f"'{g.header()}'" for g in spec.fields),
            )
    out = []
    for idx, row in data_rows:
        item = {}
        for key, (col, header, unit) in colmap.items():
            v = row[col] if col < len(row) else None
            item[key] = Cell(v, ws.title, idx, _column_label(header, col), unit, 1)
        out.append(item)
    return out


def _as_number(cell: Cell, field: Field) -> float:
    v = cell.value
    if isinstance(v, bool) or isinstance(v, (_dt.date, _dt.time, _dt.timedelta)):
        raise InputError(
            f"'{v}' is not a number",
            sheet=cell.sheet,
            row=cell.row,
            column=cell.column,
            fix="Enter a plain number (the cell may be formatted as a date or TRUE/FALSE)",
        )
    if isinstance(v, (int, float)):
        x = float(v)
    else:
        text = str(v).strip().replace("\u00a0", "").replace(" ", "")
        if text.startswith("#"):
            raise InputError(
                f"the cell holds the spreadsheet error '{text}'",
                sheet=cell.sheet,
                row=cell.row,
                column=cell.column,
                fix="Fix the formula in the spreadsheet program and save the file again",
            )
        try:
            x = parse_text_number(text)
        except ValueError as exc:
            if str(exc).startswith("the text"):
                raise InputError(
                    str(exc),
                    sheet=cell.sheet,
                    row=cell.row,
                    column=cell.column,
                    fix="Type the number without separators (e.g. 25000 or 25.5), or enter it as a number "
                    "rather than text",
                ) from None
            raise InputError(
                f"'{v}' is not a number",
                sheet=cell.sheet,
                row=cell.row,
                column=cell.column,
                fix=f"Enter a number{_unit_hint(cell, field)}",
            ) from None
    if not math.isfinite(x):
        raise InputError(
            f"'{v}' is not a finite number",
            sheet=cell.sheet,
            row=cell.row,
            column=cell.column,
            fix=f"Enter a number{_unit_hint(cell, field)}",
        )
    return x


def _unit_hint(cell: Cell, field: Field) -> str:
    if field.kind in UNITS:
        return f" in {cell.unit or field.header()}"
    return ""


def _factor(cell: Cell, field: Field) -> float:
    if field.kind in UNITS:
        if cell.unit is None:
            accepted = ", ".join(UNITS[field.kind])
            raise InputError(
                f"'{field.name}' has no unit in brackets",
                sheet=cell.sheet,
                row=cell.unit_row,
                column=cell.column,
                fix=f"Write the unit after the name, e.g. '{field.header()}'; accepted units: {accepted}",
            )
        case = unit_case_problem(cell.unit)
        if case is not None:
            raise InputError(
                f"unit '{cell.unit}' for '{field.name}' is ambiguous: {case}",
                sheet=cell.sheet,
                row=cell.unit_row,
                column=cell.column,
                fix="Write milli with a small m (mm, ms, mohm); mega is not accepted",
            )
        f = to_si(field.kind, cell.unit)
        if f is None:
            accepted = ", ".join(UNITS[field.kind])
            raise InputError(
                f"unit '{cell.unit}' is not supported for '{field.name}'",
                sheet=cell.sheet,
                row=cell.unit_row,
                column=cell.column,
                fix=f"Use one of: {accepted}",
            )
        return f
    if cell.unit is not None and cell.unit.strip().lower() not in _DIMENSIONLESS_UNITS:
        raise InputError(
            f"'{field.name}' is a plain number and takes no unit, but '[{cell.unit}]' is given",
            sheet=cell.sheet,
            row=cell.unit_row,
            column=cell.column,
            fix=f"Write the header as '{field.header()}'",
        )
    return 1.0


def _check_rule(x: float, cell: Cell, field: Field) -> None:
    bad = None
    if field.rule == "positive" and not x > 0:
        bad = "must be greater than zero"
    elif field.rule == "nonnegative" and not x >= 0:
        bad = "must not be negative"
    elif field.rule == "fraction" and not 0 < x <= 1:
        bad = "must be greater than 0 and at most 1"
    if bad is None:
        return
    extra = ""
    if "depth" in field.key:
        extra = " (depth is measured downward from grade; a negative depth would be above grade)"
    raise InputError(
        f"{field.name} {bad}, got {cell.value}{extra}",
        sheet=cell.sheet,
        row=cell.row,
        column=cell.column,
        fix=f"Typical values: {field.typical}" if field.typical else "Enter a valid value",
    )


def value(cells: dict[str, Cell], field: Field, default: Any = None) -> Any:
    """Typed, SI-converted, rule-checked value of ``field`` (or ``default``)."""
    cell = cells.get(field.key)
    if cell is None or _is_blank(cell.value):
        return default
    if field.kind == "text":
        return str(cell.value).strip()
    if field.kind == "material":
        mat = material(str(cell.value))
        if mat is None:
            raise InputError(
                f"'{cell.value}' is not a known conductor material",
                sheet=cell.sheet,
                row=cell.row,
                column=cell.column,
                fix="Use one of: " + ", ".join(MATERIALS) + " (or leave blank for hard-drawn copper)",
            )
        return mat.name
    if field.kind == "choice":
        text = normalise_name(str(cell.value)).replace("_", "-")
        text = {"two layer": "two-layer", "2-layer": "two-layer", "twolayer": "two-layer", "2 layer": "two-layer"}.get(
            text, text
        )
        text = {"multi-layer": "multilayer", "multi layer": "multilayer", "n-layer": "multilayer"}.get(text, text)
        if text not in field.choices:
            raise InputError(
                f"'{cell.value}' is not a valid {field.name.lower()}",
                sheet=cell.sheet,
                row=cell.row,
                column=cell.column,
                fix="Valid values: " + ", ".join(field.choices),
            )
        return text
    x = _as_number(cell, field)
    factor = _factor(cell, field)
    if field.kind == "count":
        if x != int(x):
            raise InputError(
                f"{field.name} must be a whole number, got {cell.value}",
                sheet=cell.sheet,
                row=cell.row,
                column=cell.column,
                fix=f"Typical values: {field.typical}",
            )
        _check_rule(x, cell, field)
        return int(x)
    _check_rule(x, cell, field)
    return x * factor


def _required(cells: dict[str, Cell], spec: SheetSpec, field: Field, where_row: int | None = None) -> Any:
    v = value(cells, field)
    if v is None:
        raise InputError(
            f"'{field.header()}' is required but blank",
            sheet=spec.name,
            row=where_row if where_row is not None else _row_of(cells),
            column=f"'{field.header()}'",
            fix=f"{field.help} Typical: {field.typical}".strip() if field.typical else field.help,
        )
    return v


def _row_of(cells: dict[str, Cell]) -> int | None:
    for c in cells.values():
        return c.row
    return None


def _missing(cells: dict[str, Cell], spec: SheetSpec, field: Field, why: str = "") -> InputError:
    """Error for a required key-value quantity that is blank or absent."""
    cell = cells.get(field.key)
    fix = field.help + (f" Typical: {field.typical}." if field.typical else "")
    if cell is None:
        return InputError(
            f"the quantity '{field.header()}' is missing{why}",
            sheet=spec.name,
            column=f"'{spec.key_header}'",
            fix=f"Add a row '{field.header()}' with its value. {fix}",
        )
    return InputError(
        f"'{field.header()}' is required{why} but its value is blank",
        sheet=cell.sheet,
        row=cell.row,
        column=cell.column,
        fix=fix,
    )
