"""The workbook side of a drawing import: the ``Drawing`` sheet and the imported design workbook.

The imported workbook is the ordinary design template
(:func:`groundcalc.io.template.build_template`) with the Conductors and Rods
sheets filled in, the soil and fault quantities the engineer must still give
marked in yellow, and a ``Drawing`` sheet: one row per layer (the mapping,
which ``groundcalc import --layers`` reads back) with what was taken from it,
and beside it a record of the drawing (file, SHA-256, unit, totals).

Its bytes depend only on the drawing and the mapping: the document dates are
the drawing's own last-saved date and the zip entries carry a fixed date.
"""

from __future__ import annotations

import datetime as _dt
import io
import re
import zipfile
from pathlib import Path

from ..errors import InputError
from .dxf_import import CHORD_SAGITTA_M, PARTS, DrawingImport, LayerRule
from .schema import FAULT, SOIL, Field, SheetSpec
from .units import normalise_name
from .workbook import DRAWING_SHEET, check_import_complete

__all__ = [
    "DRAWING",
    "build_import_workbook",
    "check_import_complete",
    "deterministic_xlsx",
    "read_layer_rules",
    "write_import_workbook",
]

DRAWING = SheetSpec(
    DRAWING_SHEET,
    "table",
    (
        Field("Layer", "text", True, help="Layer name in the drawing (capitals do not matter)."),
        Field(
            "Part",
            "choice",
            True,
            help="What the layer holds: conductor (lines, polylines, arcs, circles), rod (points, circles, "
            "block inserts) or ignore.",
            choices=PARTS,
        ),
        Field(
            "Depth",
            "length",
            False,
            "nonnegative",
            "Burial depth of the conductors, or depth of the rod tops (blank for rods = the conductor depth).",
            "0.3 to 1.5 m",
        ),
        Field("Diameter", "length", False, "positive", "Conductor or rod diameter.", "8 to 25 mm", unit="mm"),
        Field("Length", "length", False, "positive", "Driven length of the rods (rod layers only).", "2.4 to 30 m"),
        Field("Material", "material", help="IEEE Std 80 Table 1 material; blank = hard-drawn copper."),
    ),
    "How the layers of the drawing map to conductors and rods. Written by 'groundcalc import' and read "
    "back by 'groundcalc import --layers' so a revised drawing is imported the same way.",
)

_FILL_NOTE = "TO FILL IN before 'groundcalc run' (imported from a drawing). "

# --------------------------------------------------------------------------- the mapping


def read_layer_rules(path: str | Path) -> list[LayerRule]:
    """Layer mapping from the ``Drawing`` sheet of a workbook.

    Raises
    ------
    InputError
        When the workbook has no Drawing sheet or a row is invalid.
    """
    from .cells import open_workbook, read_table, value
    from .sheetcheck import find_sheet as _find_sheet

    wb = open_workbook(path)
    try:
        if _find_sheet(wb, DRAWING.name) is None:
            raise InputError(
                f"'{Path(path).name}' has no '{DRAWING.name}' sheet",
                fix="Give a workbook written by 'groundcalc import', or map the layers with --conductors and --rods",
            )
        f = {x.key: x for x in DRAWING.fields}
        out = []
        for cells in read_table(wb, DRAWING):
            if all(value(cells, f[k]) is None for k in ("layer", "part") if k in cells):
                continue  # a row of the record block beside the table
            row = next(iter(cells.values())).row
            layer, part = value(cells, f["layer"]), value(cells, f["part"])
            if layer is None or part is None:
                raise InputError(
                    "a row needs both a layer name and a part",
                    sheet=DRAWING.name,
                    row=row,
                    column="'Layer' / 'Part'",
                    fix="Fill in both, or delete the row",
                )
            out.append(
                LayerRule(
                    str(layer),
                    part,
                    value(cells, f["depth"]),
                    value(cells, f["diameter"]),
                    value(cells, f["length"]),
                    value(cells, f["material"]),
                    f"sheet '{DRAWING.name}' row {row}",
                )
            )
    finally:
        wb.close()
    return out


# --------------------------------------------------------------------------- the workbook


def build_import_workbook(imp: DrawingImport):
    """The design template with the imported conductors and rods, soil and fault marked to fill.

    Returns
    -------
    openpyxl.Workbook
    """
    from openpyxl.styles import Font, PatternFill

    from .template import _style_header, build_template

    wb = build_template()
    ws = wb["Conductors"]
    for c in imp.conductors:
        ws.append(
            [c.label, c.start[0], c.start[1], c.start[2], c.end[0], c.end[1], c.end[2], _mm(c.diameter_m), c.material]
        )
    ws = wb["Rods"]
    for r in imp.rods:
        ws.append([r.label, r.x_m, r.y_m, r.top_depth_m, r.length_m, _mm(r.diameter_m), r.material])
    fill = PatternFill("solid", fgColor="FFF2A8")
    for spec, keys in (
        (SOIL, ("model", "upper resistivity")),
        (FAULT, ("fault current", "x/r ratio", "fault duration")),
    ):
        ws = wb[spec.name]
        for row in ws.iter_rows(min_row=2):
            name = normalise_name(str(row[0].value).split("[")[0])
            if name in keys:
                row[1].fill = fill
                row[2].value = _FILL_NOTE + str(row[2].value or "")
    ws = wb.create_sheet(DRAWING.name)
    ws.append(
        [f.header() for f in DRAWING.fields]
        + ["Entities on layer", "Taken", "Ignored", "Parts made", "Total length [m]"]
    )
    reports = {normalise_name(r.layer): r for r in imp.layers}
    unmapped = {normalise_name(name): (name, n) for name, n in imp.unmapped.items()}
    for rule in imp.rules:
        key = normalise_name(rule.layer)
        rep = reports.get(key)
        if rep is None:
            name, n = unmapped.pop(key, (rule.layer, 0))
            ws.append([name, rule.part, None, None, None, rule.material, n, None, None, 0, None])
            continue
        ws.append(
            [
                rep.layer,
                rule.part,
                rule.depth_m,
                _mm(rule.diameter_m) if rule.diameter_m is not None else None,
                rule.length_m,
                rule.material,
                rep.entities,
                _counts(rep.taken),
                _counts(rep.ignored),
                rep.items,
                round(rep.length_m, 6),
            ]
        )
    for name, n in unmapped.values():
        ws.append([name, "ignore", None, None, None, None, n, None, None, 0, None])
    _style_header(ws, 11)
    record = [
        ("Drawing file", imp.source_name),
        ("Drawing SHA-256", imp.sha256),
        ("Drawing last saved ($TDUPDATE)", imp.saved.strftime("%Y-%m-%d %H:%M:%S")),
        ("Drawing unit", f"{imp.unit_name} ({imp.unit_source})"),
        ("Metres per drawing unit", imp.scale_m),
        ("Chords of arcs within [m]", CHORD_SAGITTA_M),
        ("Conductors", len(imp.conductors)),
        ("Total conductor length [m]", round(imp.conductor_length_m, 6)),
        ("Rods", len(imp.rods)),
        (
            "Note",
            "Plan x, y as drawn, in metres; drawing elevations are not used. Re-import a revised drawing "
            "with: groundcalc import NEW.dxf NEW.xlsx --layers THIS.xlsx",
        ),
    ]
    for k, (key, val) in enumerate(record, start=1):
        ws.cell(row=k, column=13, value=key).font = Font(bold=True)
        ws.cell(row=k, column=14, value=val)
    for col, width in zip("ABCDEFGHIJKLMN", (22, 11, 11, 14, 11, 20, 10, 26, 20, 8, 12, 2, 26, 40), strict=True):
        ws.column_dimensions[col].width = width
    return wb


def _mm(d_m: float) -> float:
    return round(d_m * 1000.0, 9)


def _counts(c: dict[str, int]) -> str | None:
    return ", ".join(f"{n} {t}" for t, n in sorted(c.items())) or None


def deterministic_xlsx(wb, when: _dt.datetime) -> bytes:
    """Bytes of ``wb`` that depend only on its content and ``when``.

    openpyxl stamps the save time into the document properties and every zip
    entry; both are replaced: the properties by ``when``, the entries by the
    zip epoch.
    """
    wb.properties.created = when
    wb.properties.modified = when
    wb.properties.creator = "groundcalc"
    buf = io.BytesIO()
    wb.save(buf)
    stamp = when.strftime("%Y-%m-%dT%H:%M:%SZ").encode()
    out = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(buf.getvalue())) as zin, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info)
            if info.filename == "docProps/core.xml":
                data = re.sub(
                    rb"(<dcterms:modified[^>]*>)[^<]*(</dcterms:modified>)", rb"\g<1>" + stamp + rb"\g<2>", data
                )
            entry = zipfile.ZipInfo(info.filename, date_time=(1980, 1, 1, 0, 0, 0))
            entry.compress_type = zipfile.ZIP_DEFLATED
            entry.external_attr = info.external_attr
            zout.writestr(entry, data)
    return out.getvalue()


def write_import_workbook(imp: DrawingImport, target: str | Path) -> None:
    """Write the imported design workbook atomically, with deterministic bytes."""
    from .outputs import atomic_write

    data = deterministic_xlsx(build_import_workbook(imp), imp.saved)
    atomic_write(target, lambda tmp: tmp.write_bytes(data))
