"""Write the blank, self-explaining design workbook."""

from __future__ import annotations

from pathlib import Path

import openpyxl
from openpyxl.comments import Comment
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.datavalidation import DataValidation

from .schema import ALL_SHEETS, SheetSpec
from .units import UNITS

__all__ = ["INSTRUCTIONS_SHEET", "build_template", "keyvalue_sheet"]

INSTRUCTIONS_SHEET = "Instructions"

_HEAD_FONT = Font(bold=True)
_HEAD_FILL = PatternFill("solid", fgColor="DDE6EE")
_WRAP = Alignment(wrap_text=True, vertical="top")

_INTRO = [
    "groundcalc design workbook",
    "Fill in the sheets below, save the file, then run:  groundcalc run THIS_FILE.xlsx --report "
    "draft.pdf --json results.json",
    "Every header and quantity carries its unit in brackets. You may change the unit (for "
    "example [m] to [ft], [A] to [kA], [s] to [ms]); the value is converted. Names are matched "
    "without regard to capitals or extra spaces. Rows left completely blank are skipped.",
    "Coordinates: x and y in plan, in any site system; depth is measured downward from grade "
    "(finished ground level) and must be positive for buried conductors.",
    "Describe the grid either with one row per rectangular grid on the 'Grids' sheet, or with one "
    "row per straight conductor on the 'Conductors' sheet, or both. Conductors that cross or "
    "touch are joined. Rods go on the 'Rods' sheet; a rod whose top depth equals the grid depth "
    "and whose position lies on a conductor is joined to it.",
    "Other buried metal (pipes, rails, isolated equipment) goes on the Conductors and Rods sheets with a name in "
    "their 'Group' column and that name on the 'Metal' sheet (bonded to the grid or floating). Fences go on the "
    "'Fences' sheet; places where people touch metal on 'Check points'; extra walking areas on 'Check areas'.",
    "Results are a draft design aid for review by a licensed professional engineer; the "
    "applicable standards and local codes govern. See CAUTIONS.md.",
]


def _style_header(ws, ncols: int) -> None:
    for c in range(1, ncols + 1):
        cell = ws.cell(row=1, column=c)
        cell.font = _HEAD_FONT
        cell.fill = _HEAD_FILL
        cell.alignment = _WRAP
    ws.freeze_panes = "A2"


def keyvalue_sheet(wb, spec: SheetSpec):
    """Add a key-value sheet laid out as in the template; returns it."""
    ws = wb.create_sheet(spec.name)
    ws.append([spec.key_header, "Value", "Notes"])
    for f in spec.fields:
        note = f.help + (f" Typical: {f.typical}." if f.typical else "")
        if f.required:
            note = "Required. " + note
        ws.append([f.header(), None, note])
        ws.cell(row=ws.max_row, column=3).alignment = _WRAP
    _style_header(ws, 3)
    ws.column_dimensions["A"].width = 34
    ws.column_dimensions["B"].width = 16
    ws.column_dimensions["C"].width = 90
    for f_idx, f in enumerate(spec.fields, start=2):
        if f.kind == "choice":
            dv = DataValidation(type="list", formula1='"' + ",".join(f.choices) + '"', allow_blank=True)
            dv.add(f"B{f_idx}")
            ws.add_data_validation(dv)
        if f.key == "body weight":
            dv = DataValidation(type="list", formula1='"50,70"', allow_blank=True)
            dv.add(f"B{f_idx}")
            ws.add_data_validation(dv)
    return ws


def _table_sheet(wb, spec: SheetSpec) -> None:
    ws = wb.create_sheet(spec.name)
    ws.append([f.header() for f in spec.fields])
    for col, f in enumerate(spec.fields, start=1):
        text = ("Required. " if f.required else "") + f.help + (f" Typical: {f.typical}." if f.typical else "")
        ws.cell(row=1, column=col).comment = Comment(text, "groundcalc")
        ws.column_dimensions[get_column_letter(col)].width = max(12, len(f.header()) + 4)
        if f.kind == "choice":
            letter = get_column_letter(col)
            dv = DataValidation(type="list", formula1='"' + ",".join(f.choices) + '"', allow_blank=True)
            dv.add(f"{letter}2:{letter}200")
            ws.add_data_validation(dv)
    if spec.name == "Uncertainty":
        ws.column_dimensions["A"].width = 36
    _style_header(ws, len(spec.fields))


def _instructions(wb) -> None:
    ws = wb.active
    ws.title = INSTRUCTIONS_SHEET
    for line in _INTRO:
        ws.append([line])
        ws.cell(row=ws.max_row, column=1).alignment = _WRAP
    ws.cell(row=1, column=1).font = Font(bold=True, size=14)
    ws.append([])
    ws.append(["Sheet", "Field", "Unit", "Required", "Meaning", "Typical values"])
    head = ws.max_row
    for c in range(1, 7):
        ws.cell(row=head, column=c).font = _HEAD_FONT
        ws.cell(row=head, column=c).fill = _HEAD_FILL
    for spec in ALL_SHEETS:
        ws.append([spec.name, "", "", "", spec.purpose, ""])
        ws.cell(row=ws.max_row, column=1).font = _HEAD_FONT
        for f in spec.fields:
            header = f.header()
            unit = header[header.index("[") + 1 : -1] if "[" in header else ""
            ws.append([spec.name, f.name, unit, "yes" if f.required else "", f.help, f.typical])
            for c in (5, 6):
                ws.cell(row=ws.max_row, column=c).alignment = _WRAP
    ws.append([])
    ws.append(["Accepted units"])
    ws.cell(row=ws.max_row, column=1).font = _HEAD_FONT
    for kind, units in UNITS.items():
        ws.append([kind, ", ".join(units)])
    ws.column_dimensions["A"].width = 14
    ws.column_dimensions["B"].width = 26
    ws.column_dimensions["C"].width = 9
    ws.column_dimensions["D"].width = 9
    ws.column_dimensions["E"].width = 80
    ws.column_dimensions["F"].width = 40
    for r in range(1, len(_INTRO) + 1):
        ws.merge_cells(start_row=r, start_column=1, end_row=r, end_column=6)
        ws.row_dimensions[r].height = 30 if r > 1 else 20


def build_template() -> openpyxl.Workbook:
    """Build the blank design workbook in memory.

    Returns
    -------
    openpyxl.Workbook
        Instructions sheet followed by the Project, Soil, Fault, Conductors,
        Rods, Grids and Settings sheets, headers only.
    """
    wb = openpyxl.Workbook()
    _instructions(wb)
    for spec in ALL_SHEETS:
        if spec.layout == "keyvalue":
            keyvalue_sheet(wb, spec)
        else:
            _table_sheet(wb, spec)
    return wb


def save_workbook(wb: openpyxl.Workbook, path: Path) -> None:
    """Save a workbook (used by the output helpers, which handle atomicity)."""
    wb.save(path)
