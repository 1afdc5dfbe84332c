"""Workbook format: template round trip, units, and clear errors for bad input."""

import hashlib
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from groundcalc.analysis import solve_geometry
from groundcalc.cli import main
from groundcalc.errors import InputError
from groundcalc.io.template import build_template
from groundcalc.io.workbook import read_design

from .conftest import ROOT, write_workbook

B1_GRID = ["B1", 0, 0, 70, 70, 11, 11, 0.5, 10]  # Annex B Ex. 1 in metres, diameter in mm


def sheet_values(wb):
    return {ws.title: [[c for c in row] for row in ws.iter_rows(values_only=True)] for ws in wb.worksheets}


def test_shipped_template_matches_command(tmp_path):
    out = tmp_path / "t.xlsx"
    assert main(["template", str(out)]) == 0
    shipped = openpyxl.load_workbook(ROOT / "templates" / "groundcalc-template.xlsx")
    written = openpyxl.load_workbook(out)
    assert shipped.sheetnames == written.sheetnames
    assert sheet_values(shipped) == sheet_values(written)


def test_template_lists_every_sheet_of_the_contract():
    names = build_template().sheetnames
    for s in ["Instructions", "Project", "Soil", "Fault", "Conductors", "Rods", "Grids", "Settings"]:
        assert s in names


def test_template_round_trip(tmp_path):
    p = write_workbook(
        tmp_path / "d.xlsx",
        soil={
            "Model": "uniform",
            "Upper resistivity [ohm*m]": 400,
            "Surface layer resistivity [ohm*m]": 2500,
            "Surface layer thickness [m]": 0.102,
        },
        grids=[B1_GRID],
        rods=[["R1", 0, 0, 0.5, 7.5, 20]],
        conductors=[["C1", 0, 0, 0.5, -10, 0, 0.5, 10]],
    )
    d = read_design(p)
    assert d.soil.rho1_ohm_m == 400 and d.surface_layer.thickness_m == pytest.approx(0.102)
    assert d.fault.fault_current_a == 3180 and d.fault.split_factor == 0.6
    assert d.fault.shock_duration_s == 0.5  # blank -> fault duration
    g = d.grids[0]
    assert (g.length_x_m, g.n_along_x, g.diameter_m) == (70, 11, pytest.approx(0.01))
    assert d.rods[0].length_m == 7.5 and d.rods[0].diameter_m == pytest.approx(0.02)
    assert d.conductors[0].end == (-10, 0, 0.5)
    assert d.settings.segment_length_m == 5 and d.settings.margin_m == 5.0


def test_same_grid_in_feet_gives_same_resistance(tmp_path):
    ft = 0.3048
    metric = write_workbook(tmp_path / "m.xlsx", grids=[["B", 0, 0, 70, 70, 5, 5, 0.5, 10]])
    imperial = write_workbook(
        tmp_path / "f.xlsx",
        soil={"Model": "uniform", "Upper resistivity [ohm*cm]": 40000},
        settings={"Segment length [ft]": 5 / ft, "Raster spacing [ft]": 1 / ft},
    )
    wb = openpyxl.load_workbook(imperial)
    ws = wb["Grids"]
    for col, h in enumerate(
        [
            "Label",
            "X0 [ft]",
            "Y0 [ft]",
            "Length X [ft]",
            "Length Y [ft]",
            "Conductors along X",
            "Conductors along Y",
            "Depth [ft]",
            "Diameter [in]",
        ],
        start=1,
    ):
        ws.cell(row=1, column=col, value=h)
    ws.append(["B", 0, 0, 70 / ft, 70 / ft, 5, 5, 0.5 / ft, 0.01 / 0.0254])
    wb.save(imperial)
    dm, df = read_design(metric), read_design(imperial)
    assert df.settings.segment_length_m == pytest.approx(5.0)
    r_m = solve_geometry(dm).solution.resistance_ohm
    r_f = solve_geometry(df).solution.resistance_ohm
    # identical up to round-off of the unit conversion (which can flip a near/far rule choice)
    assert r_f == pytest.approx(r_m, rel=1e-6)


def test_ka_and_ms_units(tmp_path):
    p = write_workbook(
        tmp_path / "u.xlsx",
        fault={"Fault current [kA]": 3.18, "X/R ratio": 10, "Fault duration [ms]": 500, "Body weight [kg]": 50},
        grids=[B1_GRID],
    )
    d = read_design(p)
    assert d.fault.fault_current_a == pytest.approx(3180)
    assert d.fault.fault_duration_s == pytest.approx(0.5)
    assert d.fault.frequency_hz == 60 and d.fault.split_factor == 1.0
    assert {n.code for n in d.notices} >= {"default-used"}


def test_names_match_ignoring_case_and_spaces(tmp_path):
    p = write_workbook(tmp_path / "c.xlsx", grids=[B1_GRID])
    wb = openpyxl.load_workbook(p)
    wb["Soil"]["A3"] = "  upper   RESISTIVITY [Ohm-m] "
    wb["Grids"]["F1"] = "conductors  along x"
    wb.save(p)
    d = read_design(p)
    assert d.soil.rho1_ohm_m == 400 and d.grids[0].n_along_x == 11


def test_decimal_comma_and_numbers_as_text(tmp_path):
    p = write_workbook(tmp_path / "c.xlsx", grids=[["B", "0", "0", "70", "70", "11", "11", "0,5", "10"]])
    assert read_design(p).grids[0].depth_m == 0.5


def _modify(path: Path, fn) -> Path:
    wb = openpyxl.load_workbook(path)
    fn(wb)
    wb.save(path)
    return path


def _set(sheet, cell, value):
    def f(wb):
        wb[sheet][cell] = value

    return f


# (id, how to break a good workbook, words the message must contain: sheet, row/column, fix)
BAD = [
    ("missing-sheet", lambda wb: wb.remove(wb["Fault"]), ["no 'Fault' sheet", "Add a sheet"]),
    ("missing-column", lambda wb: wb["Grids"].delete_cols(4), ["sheet 'Grids'", "row 1", "'Length X [m]'", "missing"]),
    (
        "text-in-number",
        _set("Grids", "E2", "seventy"),
        ["sheet 'Grids'", "row 2", "'Length Y [m]' (E)", "not a number"],
    ),
    (
        "negative-resistivity",
        _set("Soil", "B3", -400),
        ["sheet 'Soil'", "row 3", "greater than zero", "Typical", "(B)"],
    ),
    (
        "zero-length-conductor",
        lambda wb: wb["Conductors"].append(["Z", 1, 1, 0.5, 1, 1, 0.5, 10]),
        ["sheet 'Conductors'", "row 2", "zero length"],
    ),
    (
        "conductor-above-grade",
        lambda wb: wb["Conductors"].append(["A", 0, 0, -0.5, 5, 0, 0.5, 10]),
        ["sheet 'Conductors'", "row 2", "'Depth1 [m]' (D)", "above grade"],
    ),
    (
        "rod-above-grade",
        lambda wb: wb["Rods"].append(["R", 0, 0, -1, 3, 16]),
        ["sheet 'Rods'", "row 2", "'Top depth [m]' (D)", "above grade"],
    ),
    (
        "unsupported-unit",
        _set("Grids", "D1", "Length X [furlong]"),
        ["sheet 'Grids'", "row 1", "furlong", "Use one of: m, cm, mm, ft, in"],
    ),
    ("missing-unit", _set("Grids", "D1", "Length X"), ["sheet 'Grids'", "row 1", "no unit", "Length X [m]"]),
    (
        "unknown-quantity",
        lambda wb: wb["Fault"].append(["Fault curent [A]", 5]),
        ["sheet 'Fault'", "row 13", "not a known quantity", "(A)"],
    ),
    (
        "bad-model",
        _set("Soil", "B2", "three-layer"),
        ["sheet 'Soil'", "row 2", "Valid values: uniform, two-layer", "(B)"],
    ),
    ("body-weight", _set("Fault", "B7", 80), ["sheet 'Fault'", "row 7", "50 or 70", "(B)"]),
    ("split-factor", _set("Fault", "B3", 1.5), ["sheet 'Fault'", "row 3", "at most 1", "(B)"]),
    ("grid-count", _set("Grids", "F2", 1), ["sheet 'Grids'", "row 2", "at least 2", "(F)"]),
    ("fractional-count", _set("Grids", "F2", 2.5), ["sheet 'Grids'", "row 2", "whole number", "(F)"]),
    ("blank-required", _set("Fault", "B2", None), ["sheet 'Fault'", "row 2", "required", "blank", "(B)"]),
    ("surface-half", _set("Soil", "B6", 2500), ["sheet 'Soil'", "row 7", "Surface layer thickness", "both", "(B)"]),
    (
        "two-layer-missing",
        _set("Soil", "B2", "two-layer"),
        ["sheet 'Soil'", "row 4", "Upper thickness", "two-layer", "(B)"],
    ),
    ("no-conductors", lambda wb: wb["Grids"].delete_rows(2), ["no conductors", "Grids"]),
    (
        "date-in-number",
        _set("Grids", "B2", __import__("datetime").datetime(2024, 1, 1)),
        ["sheet 'Grids'", "row 2", "not a number"],
    ),
    ("segment-too-long", _set("Settings", "B2", 50), ["sheet 'Settings'", "row 2", "at most 5 m", "(B)"]),
    (
        "unknown-material",
        _set("Grids", "J2", "brass"),
        ["sheet 'Grids'", "row 2", "'Material' (J)", "not a known conductor material", "hard-drawn copper"],
    ),
    (
        "max-temp-below-ambient",
        lambda wb: (wb["Fault"].__setitem__("B9", 40), wb["Fault"].__setitem__("B10", 30)),
        ["sheet 'Fault'", "row 10", "not above the ambient temperature 40 degC", "(B)"],
    ),
    (
        # IEEE Std 80-2000 Table 1: zinc-coated steel rod fuses at 419 degC [mem]
        "max-temp-above-fusing",
        lambda wb: (
            wb["Rods"].append(["R1", 0, 0, 0.5, 3, 16, "zinc-coated steel rod"]),
            wb["Fault"].__setitem__("B10", 450),
        ),
        ["sheet 'Fault'", "row 10", "above the fusing temperature of zinc-coated steel rod (419 degC)", "(B)"],
    ),
    ("negative-touch-limit", _set("Fault", "B11", -100), ["sheet 'Fault'", "row 11", "greater than zero", "(B)"]),
    (
        "formula-without-value",
        _set("Grids", "D2", "=10*7"),
        ["sheet 'Grids'", "row 2", "column D", "no calculated value", "save it"],
    ),
    ("spreadsheet-error", _set("Grids", "E2", "#DIV/0!"), ["sheet 'Grids'", "row 2", "(E)", "spreadsheet error"]),
    ("infinite", _set("Grids", "E2", "inf"), ["sheet 'Grids'", "row 2", "(E)", "not a finite number"]),
    ("rod-zero-length", lambda wb: wb["Rods"].append(["R", 0, 0, 0.5, 0, 16]), ["sheet 'Rods'", "row 2", "(E)"]),
    ("rod-bad-diameter", lambda wb: wb["Rods"].append(["R", 0, 0, 0.5, 3, -16]), ["sheet 'Rods'", "row 2", "(F)"]),
    ("negative-duration", _set("Fault", "B5", -0.5), ["sheet 'Fault'", "row 5", "(B)", "greater than zero"]),
    ("xr-text", _set("Fault", "B4", "high"), ["sheet 'Fault'", "row 4", "(B)", "not a number"]),
    ("negative-margin", _set("Settings", "B4", -2), ["sheet 'Settings'", "row 4", "(B)"]),
    ("raster-too-fine", _set("Settings", "B3", 0.001), ["sheet 'Settings'", "row 3", "(B)", "finer than needed"]),
    ("snap-too-large", _set("Settings", "B5", 5), ["sheet 'Settings'", "row 5", "(B)", "more than a metre"]),
    (
        "bad-rod-material",
        lambda wb: wb["Rods"].append(["R", 0, 0, 0.5, 3, 16, "wood"]),
        ["sheet 'Rods'", "row 2", "(G)", "not a known conductor material"],
    ),
    (
        "conductor-text-x",
        lambda wb: wb["Conductors"].append(["C", "ten", 0, 0.5, 5, 0, 0.5, 10]),
        ["sheet 'Conductors'", "row 2", "(B)", "not a number"],
    ),
    (
        "surface-negative",
        lambda wb: (wb["Soil"].__setitem__("B6", -3000), wb["Soil"].__setitem__("B7", 0.1)),
        ["sheet 'Soil'", "row 6", "(B)"],
    ),
    (
        "lower-resistivity-text",
        lambda wb: (
            wb["Soil"].__setitem__("B2", "two-layer"),
            wb["Soil"].__setitem__("B4", 3),
            wb["Soil"].__setitem__("B5", "wet"),
        ),
        ["sheet 'Soil'", "row 5", "(B)", "not a number"],
    ),
    ("grid-depth-zero", _set("Grids", "H2", 0), ["sheet 'Grids'", "row 2", "(H)"]),
    (
        "merged-cells",
        lambda wb: (
            wb["Rods"].append(["R1", 0, 0, 0.5, 3, 16]),
            wb["Rods"].append([None, 5, 0, 0.5, 3, 16]),
            wb["Rods"].merge_cells("A2:A3"),
        ),
        ["sheet 'Rods'", "row 2", "column A", "A2:A3 are merged", "Unmerge"],
    ),
    ("frequency-negative", _set("Fault", "B8", -50), ["sheet 'Fault'", "row 8", "(B)"]),
]


@pytest.mark.parametrize("name,breaker,words", BAD, ids=[b[0] for b in BAD])
def test_bad_input_exits_2_with_location(tmp_path, capsys, name, breaker, words):
    p = write_workbook(tmp_path / "bad.xlsx", grids=[B1_GRID])
    _modify(p, breaker)
    before = hashlib.sha256(p.read_bytes()).hexdigest()
    code = main(["run", str(p), "--json", str(tmp_path / "o.json")])
    err = capsys.readouterr().err
    assert code == 2, err
    for w in words:
        assert w in err, (w, err)
    assert "Traceback" not in err
    assert hashlib.sha256(p.read_bytes()).hexdigest() == before
    assert not (tmp_path / "o.json").exists()


@pytest.mark.parametrize(
    "suffix,content", [(".xls", b"\xd0\xcf\x11\xe0junk"), (".csv", b"a,b\n1,2\n"), (".xlsx", b"this is not a zip file")]
)
def test_not_an_xlsx_file(tmp_path, capsys, suffix, content):
    p = tmp_path / f"design{suffix}"
    p.write_bytes(content)
    assert main(["run", str(p)]) == 2
    err = capsys.readouterr().err
    assert ".xlsx" in err and "Traceback" not in err
    assert p.read_bytes() == content


def test_missing_file(capsys, tmp_path):
    assert main(["run", str(tmp_path / "nope.xlsx")]) == 2
    assert "does not exist" in capsys.readouterr().err


def test_read_design_raises_input_error_with_fields(tmp_path):
    p = write_workbook(tmp_path / "x.xlsx", grids=[B1_GRID])
    _modify(p, _set("Grids", "E2", "abc"))
    with pytest.raises(InputError) as e:
        read_design(p)
    assert e.value.sheet == "Grids" and e.value.row == 2 and "(E)" in e.value.column


def _wenner_book(path, rows, soil=None, header=None):
    p = write_workbook(path, soil=soil or {"Model": "fitted"}, grids=[B1_GRID])
    wb = openpyxl.load_workbook(p)
    ws = wb["Wenner"]
    if header:
        for col, h in enumerate(header, start=1):
            ws.cell(row=1, column=col, value=h)
    for r in rows:
        ws.append(list(r))
    wb.save(p)
    return p


GOOD_WENNER = [[1, None, 101.3], [2, None, 103.9], [5, None, 113.8], [10, None, 149.2], [20, None, 203.6]]

# (id, Wenner rows, words the message must contain)
BAD_WENNER = [
    ("two-spacings", [[1, None, 100], [2, None, 110]], ["sheet 'Wenner'", "row 4", "at least 3"]),
    (
        "zero-spacing",
        [[0, None, 100]] + GOOD_WENNER[1:],
        ["sheet 'Wenner'", "row 2", "'Spacing [m]' (A)", "greater than zero"],
    ),
    (
        "negative-resistance",
        [[1, -3, None]] + GOOD_WENNER[1:],
        ["sheet 'Wenner'", "row 2", "'Resistance [ohm]' (B)", "greater than zero"],
    ),
    (
        "zero-rho",
        GOOD_WENNER[:2] + [[5, None, 0]],
        ["sheet 'Wenner'", "row 4", "'Apparent resistivity", "greater than zero"],
    ),
    ("duplicate", GOOD_WENNER + [[10, None, 150]], ["sheet 'Wenner'", "row 7", "given twice", "row 5"]),
    ("text", GOOD_WENNER[:2] + [["five", None, 110]], ["sheet 'Wenner'", "row 4", "'five' is not a number"]),
    ("both-values", GOOD_WENNER[:2] + [[5, 3.6, 113]], ["sheet 'Wenner'", "row 4", "both are filled in"]),
    ("neither-value", GOOD_WENNER[:2] + [[5, None, None, 0.2]], ["sheet 'Wenner'", "row 4", "both are blank"]),
    (
        "pin-too-deep",
        GOOD_WENNER[:2] + [[5, None, 113, 6]],
        ["sheet 'Wenner'", "row 4", "'Pin depth [m]' (D)", "smaller than the spacing"],
    ),
]


@pytest.mark.parametrize("name,rows,words", BAD_WENNER, ids=[b[0] for b in BAD_WENNER])
@pytest.mark.parametrize("command", ["soil", "run"])
def test_bad_wenner_data_names_the_row(tmp_path, capsys, name, rows, words, command):
    p = _wenner_book(tmp_path / "w.xlsx", rows)
    before = hashlib.sha256(p.read_bytes()).hexdigest()
    assert main([command, str(p), "--json", str(tmp_path / "o.json")]) == 2
    err = capsys.readouterr().err
    for w in words:
        assert w in err, (w, err)
    assert "Traceback" not in err and not (tmp_path / "o.json").exists()
    assert hashlib.sha256(p.read_bytes()).hexdigest() == before


def test_fitted_model_needs_wenner_readings(tmp_path, capsys):
    p = _wenner_book(tmp_path / "w.xlsx", [])
    assert main(["run", str(p)]) == 2
    err = capsys.readouterr().err
    assert "sheet 'Soil'" in err and "Wenner" in err


def test_wenner_resistance_with_pin_depth_is_converted(tmp_path):
    # Resistance readings with pin depth go through the IEEE Std 81 formula (see test_soilfit).
    from groundcalc.io.workbook import read_wenner
    from groundcalc.soil.wenner import wenner_apparent_resistivity

    p = _wenner_book(tmp_path / "w.xlsx", [[1, 16.0, None, 0.1], [2, 8.3, None, 0.1], [4, 4.6, None, None]])
    w = read_wenner(p)
    assert w.spacing_m == (1, 2, 4) and w.rows == (2, 3, 4)
    assert w.apparent_ohm_m[0] == pytest.approx(wenner_apparent_resistivity(1, 16.0, 0.1))
    assert w.apparent_ohm_m[2] == pytest.approx(2 * np.pi * 4 * 4.6)


def test_wenner_spacing_in_feet(tmp_path):
    from groundcalc.io.workbook import read_wenner

    header = ["Spacing [ft]", "Resistance [ohm]", "Apparent resistivity [ohm*m]", "Pin depth [ft]"]
    p = _wenner_book(tmp_path / "w.xlsx", [[10, None, 100], [20, None, 120], [40, None, 150]], header=header)
    assert read_wenner(p).spacing_m == pytest.approx((3.048, 6.096, 12.192))


def test_at_least_25_malformed_workbooks_name_sheet_row_and_column(tmp_path):
    # The hardening target: 25 or more malformed workbooks whose errors, raised by the reader itself,
    # carry the sheet, the row and the column.
    located = []
    for name, breaker, _words in BAD:
        p = write_workbook(tmp_path / f"{name}.xlsx", grids=[B1_GRID], edit=breaker)
        with pytest.raises(InputError) as e:
            read_design(p)
        if e.value.sheet and e.value.row is not None and e.value.column:
            located.append(name)
    assert len(BAD) >= 25 and len(located) >= 25, located
