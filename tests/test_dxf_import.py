"""Grid from a DXF drawing: layer mapping, units, polylines, the imported workbook, bad drawings.

Drawings are made here with ezdxf (a general-purpose DXF library, https://ezdxf.mozman.at),
the same library the importer reads them with; the unit factors are checked against
ezdxf.units.conversion_factor and the exact definitions of the foot (0.3048 m) and inch.
"""

import hashlib
import math

import ezdxf
import openpyxl
import pytest
from ezdxf.units import conversion_factor

from groundcalc.analysis import analyse
from groundcalc.cli import main
from groundcalc.io.dxf_import import DRAWING_UNITS, complete_rules, import_drawing
from groundcalc.io.workbook import read_design

from .conftest import write_workbook

MM = 1000.0
#: Rod positions of the test design [m]: corners and two mid-sides.
ROD_XY = [(0.0, 0.0), (20.0, 0.0), (0.0, 20.0), (20.0, 20.0), (10.0, 0.0), (10.0, 20.0)]

SOIL = {"Model": "uniform", "Upper resistivity": 400}
FAULT = {"Fault current": 3180, "Split factor": 0.6, "X/R ratio": 0, "Fault duration": 0.5, "Body weight": 70}
SETTINGS = {"Segment length": 5, "Raster spacing": 1}


def grid_drawing(path, units=4, scale=MM, layer="EARTH GRID"):
    """20 m x 20 m grid, 5 x 5 conductors: the perimeter as one closed polyline, the inner
    lines as LINEs; rods as a POINT, a CIRCLE and block INSERTs on their own layer."""
    doc = ezdxf.new("R2010", units=units)
    blk = doc.blocks.new("ROD SYMBOL")
    blk.add_circle((0, 0), 0.2 * scale)
    msp = doc.modelspace()
    s = scale
    msp.add_lwpolyline([(0, 0), (20 * s, 0), (20 * s, 20 * s), (0, 20 * s)], close=True, dxfattribs={"layer": layer})
    for k in (1, 2, 3):
        msp.add_line((0, 5 * k * s), (20 * s, 5 * k * s), dxfattribs={"layer": layer})
        msp.add_line((5 * k * s, 0), (5 * k * s, 20 * s), dxfattribs={"layer": layer})
    msp.add_text("GRID 120 mm2 Cu", dxfattribs={"layer": layer})
    for i, (x, y) in enumerate(ROD_XY):
        attrs = {"layer": "RODS"}
        if i == 0:
            msp.add_point((x * s, y * s), dxfattribs=attrs)
        elif i == 1:
            msp.add_circle((x * s, y * s), 0.3 * s, dxfattribs=attrs)
        else:
            msp.add_blockref("ROD SYMBOL", (x * s, y * s), dxfattribs=attrs)
    msp.add_line((-2 * s, -2 * s), (22 * s, -2 * s), dxfattribs={"layer": "FENCE"})
    msp.add_text("title", dxfattribs={"layer": "ANNOTATION"})
    doc.saveas(path)
    return path


def import_args(dxf, out, *extra):
    return [
        "import",
        str(dxf),
        str(out),
        "--conductors",
        "earth grid",
        "--rods",
        "RODS",
        "--depth",
        "0.5",
        "--diameter",
        "10",
        "--rod-length",
        "3",
        "--rod-diameter",
        "16",
        "--quiet",
        *extra,
    ]


def fill(path_in, path_out, soil=SOIL, fault=FAULT, settings=SETTINGS):
    """What the engineer does: type the soil, fault and settings into the imported workbook."""
    wb = openpyxl.load_workbook(path_in)
    for sheet, values in (("Soil", soil), ("Fault", fault), ("Settings", settings)):
        for row in wb[sheet].iter_rows(min_row=2):
            name = str(row[0].value).split("[")[0].strip()
            if name in values:
                row[1].value = values[name]
    wb.save(path_out)
    return path_out


def sha(p):
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def imported(tmp_path_factory):
    d = tmp_path_factory.mktemp("imp")
    dxf = grid_drawing(d / "site.dxf")
    before = sha(dxf)
    code = main(import_args(dxf, d / "site.xlsx"))
    assert code == 0
    assert sha(dxf) == before  # the drawing is only read
    return d, dxf


def test_import_equals_hand_entered_design(imported, tmp_path):
    # The same grid typed in by hand (a Grids row and Rods rows, in metres) must analyse
    # identically: the import only translates the drawing (mm -> m, polyline -> straight
    # conductors); crossings are joined by the usual segmentation.
    d, _ = imported
    filled = fill(d / "site.xlsx", tmp_path / "filled.xlsx")
    hand = write_workbook(
        tmp_path / "hand.xlsx",
        grids=[["G", 0, 0, 20, 20, 5, 5, 0.5, 10]],
        rods=[[f"R{i}", x, y, 0.5, 3, 16] for i, (x, y) in enumerate(ROD_XY)],
    )
    a, b = analyse(read_design(filled)), analyse(read_design(hand))
    assert len(a.design.conductors) == 10 and len(a.design.rods) == 6
    assert a.resistance_ohm == pytest.approx(b.resistance_ohm, rel=1e-9, abs=0)
    assert a.max_touch_v == pytest.approx(b.max_touch_v, rel=1e-9, abs=0)
    assert a.max_step_v == pytest.approx(b.max_step_v, rel=1e-9, abs=0)
    assert len(a.geometry.solution.segments) == len(b.geometry.solution.segments)


def test_imported_workbook_contents(imported):
    d, dxf = imported
    wb = openpyxl.load_workbook(d / "site.xlsx")
    rows = [r for r in wb["Conductors"].iter_rows(min_row=2, values_only=True) if r[0]]
    # closed perimeter polyline split at its 4 vertices + 6 lines
    assert len(rows) == 10
    length = sum(math.hypot(r[4] - r[1], r[5] - r[2]) for r in rows)
    assert length == pytest.approx(4 * 20.0 + 6 * 20.0, abs=1e-9)
    assert all(r[3] == 0.5 and r[6] == 0.5 and r[7] == 10 for r in rows)
    rods = [r for r in wb["Rods"].iter_rows(min_row=2, values_only=True) if r[0]]
    assert sorted((r[1], r[2]) for r in rods) == sorted(ROD_XY)
    assert all(r[3] == 0.5 and r[4] == 3 and r[5] == 16 for r in rods)
    sheet = wb["Drawing"]
    layers = {r[0]: r for r in sheet.iter_rows(min_row=2, values_only=True) if r[0]}
    assert layers["EARTH GRID"][1] == "conductor" and layers["RODS"][1] == "rod"
    assert layers["FENCE"][1] == "ignore" and layers["ANNOTATION"][1] == "ignore"
    assert "1 TEXT" in layers["EARTH GRID"][8]  # ignored on the conductor layer, by type
    record = {sheet.cell(row=k, column=13).value: sheet.cell(row=k, column=14).value for k in range(1, 11)}
    assert record["Drawing SHA-256"] == sha(dxf)
    assert record["Total conductor length [m]"] == pytest.approx(200.0)
    # soil and fault are left blank, marked to fill
    soil = {r[0]: r for r in wb["Soil"].iter_rows(min_row=2, values_only=True)}
    assert soil["Model"][1] is None and soil["Model"][2].startswith("TO FILL IN")


def test_import_report_on_stdout(tmp_path, capsys):
    dxf = grid_drawing(tmp_path / "site.dxf")
    assert main(import_args(dxf, tmp_path / "a.xlsx")) == 0
    out = capsys.readouterr().out
    assert "layer 'EARTH GRID' -> conductor: 6 LINE, 1 LWPOLYLINE -> 10 conductor(s), 200.00 m" in out
    assert "ignored on this layer: 1 TEXT" in out
    assert "1 CIRCLE, 4 INSERT, 1 POINT -> 6 rod(s)" in out
    assert "layers ignored: 'FENCE' (1 entities), 'ANNOTATION' (1 entities)" in out
    assert "total length 200.00 m" in out


def test_running_twice_gives_the_same_bytes(imported, tmp_path):
    # Same drawing and mapping -> identical file; also when the mapping is taken from the
    # Drawing sheet of the first import (--layers).
    d, dxf = imported
    assert main(import_args(dxf, tmp_path / "again.xlsx")) == 0
    assert (tmp_path / "again.xlsx").read_bytes() == (d / "site.xlsx").read_bytes()
    before = sha(d / "site.xlsx")
    code = main(["import", str(dxf), str(tmp_path / "mapped.xlsx"), "--layers", str(d / "site.xlsx"), "--quiet"])
    assert code == 0
    assert sha(d / "site.xlsx") == before
    assert (tmp_path / "mapped.xlsx").read_bytes() == (d / "site.xlsx").read_bytes()


def test_run_on_incomplete_import_names_what_to_fill(imported, capsys):
    d, _ = imported
    before = sha(d / "site.xlsx")
    assert main(["run", str(d / "site.xlsx"), "--quiet"]) == 2
    err = capsys.readouterr().err
    for what in ("Soil 'Model'", "'Upper resistivity [ohm*m]'", "'Fault current [A]'", "'X/R ratio'", "B5"):
        assert what in err
    assert "Traceback" not in err
    assert sha(d / "site.xlsx") == before


def test_units_from_header_or_flag(tmp_path):
    # ezdxf's own unit table is the outside reference for the factors (rel 1e-9: it stores the
    # foot as 1/3.28083989501 m); ours are exact: 1 ft = 0.3048 m, 1 in = 0.0254 m
    # (international yard and pound agreement, 1959), US survey foot = 1200/3937 m.
    for code, (_, metres) in DRAWING_UNITS.items():
        if code != 21:  # ezdxf's table has no US survey foot
            assert metres == pytest.approx(conversion_factor(code, 6), rel=1e-9)
    assert DRAWING_UNITS[21][1] == pytest.approx(0.3048006096, rel=1e-10)
    rules = complete_rules([], ["EARTH GRID"], ["RODS"], 0.5, 0.01, 3.0, 0.016, None)
    ft = import_drawing(grid_drawing(tmp_path / "ft.dxf", units=2, scale=1 / 0.3048), rules)
    assert ft.unit_name == "ft"
    assert max(r.x_m for r in ft.rods) == pytest.approx(20.0, abs=1e-9)
    unknown = grid_drawing(tmp_path / "u0.dxf", units=0, scale=MM)
    forced = import_drawing(unknown, rules, units="mm")
    assert forced.unit_source == "--units" and forced.conductor_length_m == pytest.approx(200.0)


def test_polylines_split_and_arcs_followed_by_chords(tmp_path):
    # A ring conductor drawn as a circle of radius R: the chords form a regular polygon
    # whose perimeter is 2 n R sin(pi/n) (elementary geometry), within the 10 mm chord
    # tolerance of the circle; a 3D polyline is split at its vertices; the zero-length piece at
    # its repeated vertex and a zero-length line are dropped and counted.
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    msp.add_circle((50, 50), 10.0, dxfattribs={"layer": "RING"})
    msp.add_polyline3d([(0, 0, 0), (10, 0, 0), (10, 10, 0), (10, 10, 0), (0, 10, 0)], dxfattribs={"layer": "RING"})
    msp.add_line((5, 5), (5, 5), dxfattribs={"layer": "RING"})
    doc.saveas(tmp_path / "ring.dxf")
    rules = complete_rules([], ["ring"], [], 0.5, 0.01, None, None, None)
    imp = import_drawing(tmp_path / "ring.dxf", rules)
    rep = imp.layers[0]
    assert rep.taken == {"CIRCLE": 1, "POLYLINE": 1, "LINE": 1}
    assert rep.dropped_pieces == 2
    chords = [c for c in imp.conductors if c.start[0] > 30]
    square = [c for c in imp.conductors if c.start[0] <= 30]
    assert len(square) == 3 and sum(c.length_m for c in square) == pytest.approx(30.0)
    n = len(chords)
    ring = sum(c.length_m for c in chords)
    assert ring < 2 * math.pi * 10.0
    for c in chords:  # every chord end on the circle, every chord within the sagitta bound
        assert math.hypot(c.start[0] - 50, c.start[1] - 50) == pytest.approx(10.0, abs=1e-6)
        half = c.length_m / 2
        assert 10.0 - math.sqrt(100.0 - half * half) <= 0.01 + 1e-9
    assert n >= 8 and ring == pytest.approx(2 * n * 10.0 * math.sin(math.pi / n), rel=1e-9)


def bad(tmp_path, name, writer):
    p = tmp_path / name
    writer(p)
    return p


@pytest.mark.parametrize(
    "case, message",
    [
        ("text", "could not be read as a DXF drawing"),
        ("binary", "binary DXF"),
        ("empty", "is empty"),
        ("no entities", "model space is empty"),
        ("3dfaces", "Layers found: 'EARTH GRID' (2 3DFACE)"),
        ("unitless", "unit is unknown"),
        ("no header", "no $INSUNITS"),
        ("dwg", "DWG drawing"),
        ("wrong layer", "the layer 'earth grid' (--conductors) is not in the drawing. Layers found: 'GROUND' (1 LINE)"),
    ],
)
def test_bad_drawings_exit_2(tmp_path, capsys, case, message):
    def faces(p):
        doc = ezdxf.new("R2010", units=4)
        for k in range(2):
            doc.modelspace().add_3dface([(0, k, 0), (1, k, 0), (1, k + 1, 0), (0, k + 1, 0)], {"layer": "EARTH GRID"})
        doc.saveas(p)

    def binary(p):
        doc = ezdxf.new("R2010", units=4)
        doc.modelspace().add_line((0, 0), (1000, 0), dxfattribs={"layer": "EARTH GRID"})
        doc.saveas(p, fmt="bin")

    def r12(p):
        doc = ezdxf.new("R12")
        doc.modelspace().add_line((0, 0), (1000, 0), dxfattribs={"layer": "EARTH GRID"})
        doc.saveas(p)

    def wrong_layer(p):
        doc = ezdxf.new("R2010", units=4)
        doc.modelspace().add_line((0, 0), (1000, 0), dxfattribs={"layer": "GROUND"})
        doc.saveas(p)

    writers = {
        "text": lambda p: p.write_text("X1,Y1,X2,Y2\n0,0,10,0\n"),
        "binary": binary,
        "empty": lambda p: p.write_bytes(b""),
        "no entities": lambda p: ezdxf.new("R2010", units=4).saveas(p),
        "3dfaces": faces,
        "unitless": lambda p: grid_drawing(p, units=0),
        "no header": r12,
        "dwg": lambda p: p.write_bytes(b"AC1032\x00\x00\x00\x00binary"),
        "wrong layer": wrong_layer,
    }
    p = bad(tmp_path, "bad.dxf", writers[case])
    before = sha(p)
    args = import_args(p, tmp_path / "out.xlsx")
    if case in ("wrong layer", "3dfaces"):
        args = [a for a in args if a not in ("--rods", "RODS")]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert message in err, err
    assert "Traceback" not in err
    assert not (tmp_path / "out.xlsx").exists()
    assert sha(p) == before


def test_missing_dimensions_and_conflicts_exit_2(tmp_path, capsys):
    dxf = grid_drawing(tmp_path / "site.dxf")
    base = ["import", str(dxf), str(tmp_path / "o.xlsx"), "--conductors", "EARTH GRID", "--quiet"]
    assert main(base + ["--diameter", "10"]) == 2
    assert "--depth" in capsys.readouterr().err
    assert main(base + ["--depth", "0.5", "--diameter", "10", "--rods", "RODS", "--rod-diameter", "16"]) == 2
    assert "--rod-length" in capsys.readouterr().err
    assert main(base + ["--depth", "0.5", "--diameter", "10", "--rods", "EARTH GRID"]) == 2
    assert "both --conductors and --rods" in capsys.readouterr().err
    assert main(base + ["--depth", "-0.5", "--diameter", "10"]) == 2
    assert "must be greater than zero, got -0.5 m" in capsys.readouterr().err
    assert main(base + ["--depth", "0.5", "--diameter", "-10"]) == 2
    assert "diameter -0.01 m for layer 'EARTH GRID' (--conductors) is out of range" in capsys.readouterr().err
    assert main(base + ["--depth", "0.5", "--diameter", "10", "--units", "furlong"]) == 2
    assert "not a drawing unit" in capsys.readouterr().err
    assert main(["import", str(dxf), str(dxf), "--conductors", "EARTH GRID", "--quiet"]) == 2
    assert "is the input file" in capsys.readouterr().err
    assert main(base + ["--depth", "0.5", "--diameter", "10", "--layers", str(tmp_path / "none.xlsx")]) == 2
    assert "does not exist" in capsys.readouterr().err


def test_bad_drawing_sheet_is_located(imported, tmp_path, capsys):
    d, dxf = imported
    wb = openpyxl.load_workbook(d / "site.xlsx")
    wb["Drawing"]["B2"] = "wire"
    wb.save(tmp_path / "bad-map.xlsx")
    assert main(["import", str(dxf), str(tmp_path / "o.xlsx"), "--layers", str(tmp_path / "bad-map.xlsx")]) == 2
    err = capsys.readouterr().err
    assert "sheet 'Drawing', row 2" in err and "'wire' is not a valid part" in err and "conductor, rod, ignore" in err
