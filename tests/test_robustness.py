"""Inputs a careful engineer would question are refused or flagged, never silently answered.

One table of cases, each a workbook made here with openpyxl (from the template) and a
command line. Every case states its class of fault and its exact outcome:

- ``refused``: exit 2, a message with the given words (sheet, row and column where the
  problem has a place), no traceback, the input bytes unchanged, no output left behind;
- ``warned``: exit 0 and a warning with the given code in the JSON, on the terminal, and
  whose message holds the given words;
- ``accepted``: exit 0, none of the layout warnings, and the read value checked.

The accepted ranges are those of ``groundcalc.validation.RANGES`` (each with its source
or "common practice"). Most cases fail while reading, before any solve; the cases that
solve use a 12 m x 12 m grid of 6 m meshes with 3 m segments.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
from pathlib import Path

import openpyxl
import pytest

from groundcalc.analysis import analyse
from groundcalc.cli import main
from groundcalc.errors import InputError
from groundcalc.io.workbook import read_design
from groundcalc.model import Conductor, Design, Fault, GridSpec, Rod, Settings, Soil
from groundcalc.safety.ieee80 import decrement_factor
from groundcalc.validation import prepare, validate

from .conftest import write_workbook

GRID = ["G", 0, 0, 12, 12, 3, 3, 0.5, 10]  # 6 m meshes, 10 mm conductor
SETTINGS = {"Segment length [m]": 3, "Raster spacing [m]": 1, "Margin [m]": 2}
LAYOUT_CODES = {"ignored-sheet", "ignored-column", "hidden-sheet", "unusual-value"}


def _set(sheet, cell, value):
    def f(wb):
        wb[sheet][cell] = value

    return f


def _both(*fns):
    def f(wb):
        for fn in fns:
            fn(wb)

    return f


def _append(sheet, row):
    return lambda wb: wb[sheet].append(list(row))


def _add_sheet(name, hidden=False, rows=()):
    def f(wb):
        ws = wb.create_sheet(name)
        for r in rows:
            ws.append(list(r))
        if hidden:
            ws.sheet_state = "hidden"

    return f


def _hide(sheet):
    def f(wb):
        wb[sheet].sheet_state = "hidden"

    return f


def _wenner(header_unit, spacings):
    def f(wb):
        wb["Soil"]["B2"] = "fitted"
        ws = wb["Wenner"]
        ws["A1"] = f"Spacing [{header_unit}]"
        for a, rho in zip(spacings, (100, 120, 150, 190), strict=False):
            ws.append([a, None, rho])

    return f


def _wenner_ok(wb):
    ws = wb["Wenner"]
    for row in ([1, None, 101.3], [2, None, 103.9], [5, None, 113.8], [10, None, 149.2]):
        ws.append(row)


R, W, A = "refused", "warned", "accepted"

# (id, class of fault, edit of the base workbook, command and options, outcome, words or (code, words))
CASES = [
    # --- numbers typed as text -----------------------------------------------------------------------
    ("thousands-comma", "text-number", _set("Fault", "B2", "25,000"), "run", R,
     ["sheet 'Fault'", "row 2", "(B)", "'25,000'", "25000", "25 "]),
    ("thousands-comma-length", "text-number", _set("Grids", "D2", "1,200"), "run", R,
     ["sheet 'Grids'", "row 2", "'Length X [m]' (D)", "1200", "1.2"]),
    ("thousands-dot", "text-number", _set("Fault", "B2", "3.180"), "run", R,
     ["sheet 'Fault'", "row 2", "3180", "3.18"]),
    ("two-groups", "text-number", _set("Fault", "B2", "1,000,000"), "run", R,
     ["sheet 'Fault'", "row 2", "thousands separators"]),
    ("comma-and-dot", "text-number", _set("Fault", "B2", "3,180.5"), "run", R,
     ["sheet 'Fault'", "row 2", "thousands separators"]),
    ("decimal-comma", "text-number", _set("Grids", "H2", "0,5"), "run", A, ("depth_m", 0.5)),
    ("decimal-comma-long", "text-number", _set("Grids", "D2", "12,00"), "run", A, ("length_x_m", 12.0)),
    ("space-grouping", "text-number", _set("Fault", "B2", "3 180"), "run", A, ("fault_current_a", 3180.0)),
    ("nan-text", "extreme", _set("Grids", "E2", "nan"), "run", R,
     ["sheet 'Grids'", "row 2", "(E)", "not a finite number"]),
    # --- sheet names --------------------------------------------------------------------------------
    ("sheet-case-twin", "sheet-name", _add_sheet("FAULT "), "run", R, ["'Fault'", "'FAULT '", "same name"]),
    ("sheet-hidden-twin", "sheet-name", _add_sheet("soil ", hidden=True), "run", R,
     ["'Soil'", "'soil ' (hidden)", "same name"]),
    ("sheet-near-name", "sheet-name", _add_sheet("Conductor", rows=[["Label"]]), "run", R,
     ["sheet 'Conductor'", "close to 'Conductors'"]),
    ("sheet-misspelt", "sheet-name", _add_sheet("Setings"), "run", R, ["sheet 'Setings'", "close to 'Settings'"]),
    ("sheet-unknown", "sheet-name", _add_sheet("Site photos"), "run", W,
     ("ignored-sheet", ["'Site photos'", "ignored"])),
    ("sheet-hidden-known", "sheet-name", _hide("Rods"), "run", W, ("hidden-sheet", ["'Rods'", "hidden"])),
    # --- columns ------------------------------------------------------------------------------------
    ("column-misspelt", "column-name", _set("Grids", "J1", "Materail"), "run", R,
     ["sheet 'Grids'", "row 1", "'Materail' (J)", "close to 'Material'"]),
    ("column-near-unit", "column-name", _set("Conductors", "H1", "Diamter [mm]"), "run", R,
     ["sheet 'Conductors'", "row 1", "(H)", "close to 'Diameter [mm]'"]),
    ("column-unknown", "column-name", _set("Rods", "H1", "Supplier"), "run", W,
     ("ignored-column", ["'Rods'", "'Supplier' (H)"])),
    ("column-notes", "column-name", _set("Grids", "K1", "Notes"), "run", A, ("n_along_x", 3)),
    ("value-twice", "column-name", _set("Fault", "D1", "Value"), "run", R,
     ["sheet 'Fault'", "row 1", "'Value' (D)", "appears twice"]),
    ("table-header-twice", "column-name", _set("Grids", "K1", "Depth [m]"), "run", R,
     ["sheet 'Grids'", "row 1", "(K)", "appears twice"]),
    ("value-misspelt", "column-name", _set("Soil", "B1", "Valeu"), "run", R,
     ["sheet 'Soil'", "row 1", "'Valeu' (B)"]),
    # --- physically impossible geometry -------------------------------------------------------------
    ("radius-reaches-grade", "geometry", _append("Conductors", ["C", 12, 6, 0.004, 18, 6, 0.5, 10]), "run", R,
     ["sheet 'Conductors'", "row 2", "'Depth1 [m]' (D)", "above grade", "millimetres against metres"]),
    ("grid-2cm-deep", "geometry", _set("Grids", "H2", 0.02), "run", R,
     ["sheet 'Grids'", "row 2", "'Depth [m]' (H)", "below 0.05 m", "likely mistake"]),
    ("rod-2m-diameter", "geometry", _append("Rods", ["R", 0, 0, 0.5, 3, 2000]), "run", R,
     ["sheet 'Rods'", "row 2", "'Diameter [mm]' (F)", "above 0.3 m", "millimetres"]),
    ("rod-diameter-in-m", "geometry",
     _both(_set("Rods", "F1", "Diameter [m]"), _append("Rods", ["R", 0, 0, 0.5, 3, 16])), "run", R,
     ["sheet 'Rods'", "row 2", "'Diameter [m]' (F)", "above 0.3 m"]),
    ("conductor-80mm", "geometry", _append("Conductors", ["C", 12, 6, 0.5, 18, 6, 0.5, 80]), "run", W,
     ("unusual-value", ["thicker than 60 mm", "C"])),
    ("grid-15cm-deep", "geometry", _set("Grids", "H2", 0.15), "run", W, ("unusual-value", ["shallower than 0.2 m"])),
    ("rod-1-5km", "geometry", _append("Rods", ["R", 0, 0, 0.5, 1500, 16]), "run", R,
     ["sheet 'Rods'", "row 2", "'Length [m]' (E)"]),
    ("coordinate-20000km", "geometry", _append("Conductors", ["F", 2e7, 0, 0.5, 2e7 + 5, 0, 0.5, 10]), "run", R,
     ["sheet 'Conductors'", "row 2", "(B)", "beyond 10,000,000 m"]),
    ("coordinate-1e308", "extreme", _append("Conductors", ["F", 1e308, 0, 0.5, 0, 0, 0.5, 10]), "run", R,
     ["sheet 'Conductors'", "row 2", "beyond"]),
    # --- units that differ only in capitals --------------------------------------------------------
    ("unit-MM", "unit-case", _both(_set("Rods", "F1", "Diameter [MM]"), _append("Rods", ["R", 0, 0, 0.5, 3, 16])),
     "run", R, ["sheet 'Rods'", "row 1", "(F)", "'MM'", "mega"]),
    ("unit-Ms", "unit-case", _set("Fault", "A5", "Fault duration [Ms]"), "run", R,
     ["sheet 'Fault'", "row 5", "'Ms'", "ambiguous"]),
    ("unit-MOhm-m", "unit-case", _set("Soil", "A3", "Upper resistivity [MOhm*m]"), "run", R,
     ["sheet 'Soil'", "row 3", "ambiguous"]),
    ("unit-ms-ok", "unit-case", _both(_set("Fault", "A5", "Fault duration [ms]"), _set("Fault", "B5", 500)), "run",
     A, ("fault_duration_s", 0.5)),
    # --- settings that make the answer meaningless --------------------------------------------------
    ("raster-above-half-mesh", "settings", _set("Settings", "B3", 4), "run", R,
     ["sheet 'Settings'", "row 3", "(B)", "more than half the smallest mesh", "at most 3 m"]),
    ("raster-half-mesh", "settings", _set("Settings", "B3", 3), "run", A, ("raster_spacing_m", 3.0)),
    ("raster-near-conductors", "settings",
     _both(_append("Conductors", ["P1", 20, 0, 0.5, 30, 0, 0.5, 10]), _append("Conductors", ["P2", 20, 1, 0.5, 30, 1,
                                                                                          0.5, 10])), "run", R,
     ["sheet 'Settings'", "row 3", "smallest mesh or conductor spacing (1 m)"]),
    ("margin-huge", "settings", _set("Settings", "B4", 1e5), "run", R, ["sheet 'Settings'", "row 4", "above 500 m"]),
    ("raster-millions", "huge", _both(_set("Settings", "B4", 450), _set("Settings", "B3", None)), "run", R,
     ["sheet 'Settings'", "row 4", "points", "more than 2,000,000"]),
    ("segment-1cm", "settings", _set("Settings", "B2", 0.01), "run", R, ["sheet 'Settings'", "row 2", "below 0.05 m"]),
    # --- values that saturate a formula ---------------------------------------------------------------
    ("xr-1e20", "saturation", _set("Fault", "B4", 1e20), "run", R,
     ["sheet 'Fault'", "row 4", "(B)", "X/R ratio", "above 1000"]),
    ("xr-150", "saturation", _set("Fault", "B4", 150), "run", W, ("unusual-value", ["X/R ratio 150"])),
    ("frequency-1e-300", "saturation", _set("Fault", "B8", 1e-300), "run", R,
     ["sheet 'Fault'", "row 8", "(B)", "below 10 Hz"]),
    ("frequency-400", "saturation", _set("Fault", "B8", 400), "run", W, ("unusual-value", ["neither 50 nor 60"])),
    ("split-1e-12", "saturation", _set("Fault", "B3", 1e-12), "run", R, ["sheet 'Fault'", "row 3", "below 0.01"]),
    ("split-0-05", "saturation", _set("Fault", "B3", 0.05), "run", W, ("unusual-value", ["split factor 0.05"])),
    ("surface-100m", "saturation", _both(_set("Soil", "B6", 2500), _set("Soil", "B7", 100)), "run", R,
     ["sheet 'Soil'", "row 7", "above 1 m"]),
    ("surface-0-5m", "saturation", _both(_set("Soil", "B6", 2500), _set("Soil", "B7", 0.5)), "run", W,
     ("unusual-value", ["surface layer thickness 0.5 m"])),
    ("surface-conductive", "saturation", _both(_set("Soil", "B6", 100), _set("Soil", "B7", 0.1)), "run", W,
     ("surface-layer-conductive", ["Cs is then above 1"])),
    ("wenner-mm-in-m", "saturation", _wenner("m", [2000, 4000, 8000]), "soil", R,
     ["sheet 'Wenner'", "row 2", "'Spacing [m]' (A)", "millimetres"]),
    ("wenner-m-in-mm", "saturation", _wenner("mm", [1, 2, 5]), "soil", R,
     ["sheet 'Wenner'", "row 2", "'Spacing [mm]' (A)", "outside 0.1 to 1000 m"]),
    ("wenner-ok", "saturation", _wenner_ok, "soil", A, None),
    ("shock-5s", "saturation", _set("Fault", "B6", 5), "run", W, ("outside-validity", ["0.03 to 3 s"])),
    # --- extreme numbers ----------------------------------------------------------------------------
    ("current-1e308", "extreme", _set("Fault", "B2", 1e308), "run", R, ["sheet 'Fault'", "row 2", "above"]),
    ("current-1e308-kA", "extreme", _both(_set("Fault", "A2", "Fault current [kA]"), _set("Fault", "B2", 1e308)),
     "run", R, ["sheet 'Fault'", "row 2", "not a finite number"]),
    ("ambient-minus-300", "extreme", _set("Fault", "B9", -300), "run", R, ["sheet 'Fault'", "row 9", "below -60"]),
    ("ambient-above-fusing", "extreme", _set("Fault", "B9", 1200), "run", R,
     ["sheet 'Fault'", "row 9", "(B)", "above 100 degC"]),
    ("max-temp-below-ambient", "extreme",
     _both(_set("Fault", "B9", 90), _append("Rods", ["R", 0, 0, 0.5, 3, 16, "zinc-coated steel rod"]),
           _set("Fault", "B10", 80)), "run", R, ["sheet 'Fault'", "row 10", "not above the ambient"]),
    ("reflection-near-minus-1", "extreme",
     _both(_set("Soil", "B2", "two-layer"), _set("Soil", "B3", 1e5), _set("Soil", "B4", 2), _set("Soil", "B5", 0.02)),
     "run", R, ["sheet 'Soil'", "row 5", "(B)", "reflection coefficient", "-1"]),
    ("duration-1e-300", "extreme", _set("Fault", "B5", 1e-300), "run", R, ["sheet 'Fault'", "row 5", "below"]),
    ("duration-100s", "extreme", _set("Fault", "B5", 100), "run", R, ["sheet 'Fault'", "row 5", "above 30 s"]),
    ("touch-limit-1e9", "extreme", _set("Fault", "B11", 1e9), "run", R, ["sheet 'Fault'", "row 11", "above"]),
    ("resistivity-1e9", "extreme", _set("Soil", "B3", 1e9), "run", R, ["sheet 'Soil'", "row 3", "above"]),
    # --- huge inputs --------------------------------------------------------------------------------
    ("grid-100000-lines", "huge", _set("Grids", "F2", 100000), "run", R,
     ["sheet 'Grids'", "row 2", "'Conductors along X' (F)", "more than 1,000"]),
    ("grid-segments", "huge", _both(_set("Grids", "D2", 5000), _set("Grids", "F2", 500), _set("Settings", "B2", 0.5)),
     "run", R, ["sheet 'Settings'", "row 2", "segments", "more than 250,000"]),
    ("grid-1e308-long", "extreme", _set("Grids", "D2", 1e308), "run", R,
     ["sheet 'Grids'", "row 2", "'Length X [m]' (D)", "beyond 10,000 m"]),
    ("rod-top-1e308", "extreme", _append("Rods", ["R", 0, 0, 1e308, 3, 16]), "run", R,
     ["sheet 'Rods'", "row 2", "'Top depth [m]' (D)", "beyond 1000 m"]),
    # --- repairs ------------------------------------------------------------------------------------
    ("rods-overlap-union", "repair",
     _both(_append("Rods", ["R1", 0, 0, 0.5, 3, 16]), _append("Rods", ["R2", 0, 0, 0.5, 6, 16])), "run", W,
     ("duplicate-rod", ["R2", "0.5 to 6.5 m"])),
]

# (id, class, command line after the workbook; OUT is the output folder, IN the workbook, outcome, words)
CLI_CASES = [
    ("sweep-rod-diameter-0", "sweep", ["sweep", "IN", "--spacing", "6", "--rod-diameter", "0"], ["--rod-diameter 0"]),
    ("sweep-rod-diameter-neg", "sweep", ["sweep", "IN", "--spacing", "6", "--rod-diameter", "-5"], ["out of range"]),
    ("sweep-rod-diameter-1km", "sweep", ["sweep", "IN", "--spacing", "6", "--rod-diameter", "1e6"], ["millimetres"]),
    ("sweep-rod-length-nan", "sweep", ["sweep", "IN", "--spacing", "6", "--rod-length", "nan"], ["--rod-length"]),
    ("sweep-100000-rods", "huge", ["sweep", "IN", "--spacing", "6", "--rods", "100000"], ["more than 1000 rods"]),
    ("sweep-1e12-spacings", "huge", ["sweep", "IN", "--spacing", "1:1e9:1e-3"], ["more than 400 layouts"]),
    ("sweep-inf-spacing", "sweep", ["sweep", "IN", "--spacing", "1:inf:1"], ["not a list or range"]),
    ("sweep-same-outputs", "outputs",
     ["sweep", "IN", "--spacing", "6", "--json", "OUT/a.xlsx", "--write-design", "OUT/a.xlsx"], ["same file"]),
    ("soil-same-outputs", "outputs", ["soil", "IN", "--json", "OUT/a.xlsx", "--write-design", "OUT/a.xlsx"],
     ["same file"]),
    ("run-same-outputs", "outputs", ["run", "IN", "--json", "OUT/a.pdf", "--report", "OUT/a.pdf"], ["same file"]),
    ("parent-is-a-file", "outputs", ["run", "IN", "--json", "IN/r.json"], ["is a file"]),
    ("check-with-report", "outputs", ["run", "IN", "--check", "--report", "OUT/r.pdf"], ["writes no report"]),
    ("name-too-long", "outputs", ["run", "IN", "--json", "OUT/" + "x" * 300 + ".json"], ["too long"]),
]


def _sha(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


def _book(tmp_path: Path, edit) -> Path:
    return write_workbook(tmp_path / "design.xlsx", grids=[GRID], settings=dict(SETTINGS), edit=edit)


#: Cases run through the whole analysis; the others stop after reading and checking (``run --check``),
#: which is where every refusal and warning of this table arises.
FULL = {"sheet-unknown", "column-unknown", "surface-conductive", "rods-overlap-union", "decimal-comma", "xr-150"}


def _argv(name: str, command: str, book: Path, out: Path) -> list[str]:
    check = ["--check"] if command == "run" and name not in FULL else []
    return [command, str(book), "--json", str(out / "r.json"), *check]


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_workbook_case(tmp_path, capsys, case):
    name, fault_class, edit, command, outcome, expect = case
    book = _book(tmp_path, edit)
    out = tmp_path / "out"
    out.mkdir()
    before = _sha(book)
    code = main(_argv(name, command, book, out))
    err = capsys.readouterr().err
    assert "Traceback" not in err, (fault_class, err)
    assert _sha(book) == before, "the input workbook changed"
    if outcome == R:
        assert code == 2, (fault_class, err)
        for w in expect:
            assert w in err, (fault_class, w, err)
        assert list(out.iterdir()) == [], "an output was left behind"
        return
    assert code == 0, (fault_class, err)
    data = json.loads((out / "r.json").read_text())
    if command == "run":  # the whole analysis ran, or it stopped after the checks as asked
        assert data.get("checked_only", False) == (name not in FULL)
        assert ("grid_resistance_ohm" in data) == (name in FULL)
    if outcome == W:
        want, words = expect
        hits = [w for w in data["warnings"] if w["code"] == want]
        assert hits, (fault_class, want, data["warnings"])
        for w in words:
            assert any(w in h["message"] for h in hits), (w, hits)
        assert any(w in err for w in words)
        return
    assert not [w for w in data.get("warnings", []) if w.get("code") in LAYOUT_CODES], data.get("warnings")
    if expect is not None:  # accepted: the value was read as meant
        key, val = expect
        d = read_design(book)
        obj = {"depth_m": d.grids[0], "length_x_m": d.grids[0], "n_along_x": d.grids[0]}.get(key)
        obj = obj or (d.settings if key == "raster_spacing_m" else d.fault)
        assert getattr(obj, key) == pytest.approx(val)


@pytest.mark.parametrize("case", CLI_CASES, ids=[c[0] for c in CLI_CASES])
def test_command_line_case(tmp_path, capsys, case):
    name, fault_class, argv, words = case
    book = _book(tmp_path, _wenner_ok if argv[0] == "soil" else None)
    out = tmp_path / "out"
    out.mkdir()
    before = _sha(book)
    args = [a.replace("IN", str(book)).replace("OUT", str(out)) for a in argv]
    code = main(args)
    err = capsys.readouterr().err
    assert code == 2, (fault_class, err)
    assert "Traceback" not in err
    for w in words:
        assert w in err, (fault_class, w, err)
    assert _sha(book) == before
    assert list(out.iterdir()) == [], "an output was left behind"


def test_there_are_at_least_60_cases_in_every_outcome_class():
    outcomes = {c[4] for c in CASES} | ({R} if CLI_CASES else set())
    assert len(CASES) + len(CLI_CASES) >= 60 and outcomes == {R, W, A}


# --- the same checks for a design built in code (no workbook, no sheet names) ---------------------------


def _code_design(**kw) -> Design:
    base = dict(
        soil=Soil(rho1_ohm_m=400.0),
        fault=Fault(3180.0, x_over_r=10.0, fault_duration_s=0.5),
        grids=[GridSpec("G", 0.0, 0.0, 12.0, 12.0, 3, 3, 0.5, 0.01)],
        settings=Settings(segment_length_m=3.0, raster_spacing_m=1.0, margin_m=2.0),
    )
    base.update(kw)
    return Design(**base)


def test_defaults_of_the_model():
    # defaults: Sf = 1, ts = tf, 50 kg, 60 Hz, 40 degC (see the Fault docstring for their sources)
    f = Fault(5000.0, x_over_r=10.0, fault_duration_s=0.3)
    assert (f.split_factor, f.shock_duration_s, f.body_weight_kg, f.frequency_hz, f.ambient_c) == (
        1.0,
        0.3,
        50.0,
        60.0,
        40.0,
    )
    assert Soil(rho1_ohm_m=100.0).model == "uniform" and Soil("fitted").rho1_ohm_m is None
    assert Settings().segment_length_m == 1.0 and Settings().margin_m == 5.0
    with pytest.raises(TypeError, match="x_over_r"):
        Fault(5000.0)


def test_code_design_gets_the_overlap_note_like_a_workbook(tmp_path):
    over = Conductor("EDGE", (-3.0, 0.0, 0.5), (12.0, 0.0, 0.5), 0.01)
    res = analyse(_code_design(conductors=[over]))
    note = [n for n in res.notices if n.code == "overlap-merged"]
    book = _book(tmp_path, _append("Conductors", ["EDGE", -3, 0, 0.5, 12, 0, 0.5, 10]))
    from_book = [n for n in read_design(book).notices if n.code == "overlap-merged"]
    assert note and from_book and note[0].message == from_book[0].message
    assert res.design.conductors[0].end == pytest.approx((0.0, 0.0, 0.5))


@pytest.mark.parametrize(
    "kw,quantity,words",
    [
        ({"settings": Settings(segment_length_m=10.0)}, "settings.segment_length_m", "too long"),
        ({"fault": Fault(3180.0, 1e-12, 10.0, 0.5)}, "fault.split_factor", "below 0.01"),
        ({"fault": Fault(3180.0, x_over_r=1e20, fault_duration_s=0.5)}, "fault.x_over_r", "above 1000"),
        ({"fault": Fault(3180.0, x_over_r=10, fault_duration_s=0.5, body_weight_kg=60)}, "fault.body_weight_kg",
         "50 or 70"),
        ({"rods": [Rod("R", 0, 0, 0.5, 3.0, 2.0)]}, "rod.diameter_m", "above 0.3 m"),
        ({"soil": None}, "soil", "no soil"),
        ({"settings": Settings(3.0, 4.0, 2.0)}, "settings.raster_spacing_m", "half the smallest mesh"),
    ],
    ids=["segment-10m", "split", "xr", "body", "rod-diameter", "no-soil", "raster"],
)
def test_code_design_gets_the_same_errors_without_sheet_names(kw, quantity, words):
    with pytest.raises(InputError) as e:
        analyse(_code_design(**kw))
    assert e.value.quantity == quantity and words in str(e.value)
    assert e.value.sheet is None and "sheet" not in str(e.value)


def test_20000_rods_are_refused_from_their_count():
    rods = [Rod(f"R{k}", float(k % 100), float(k // 100), 0.5, 3.0, 0.016) for k in range(20_000)]
    with pytest.raises(InputError, match="20,000 rods, more than 10,000"):
        analyse(_code_design(rods=rods, settings=Settings(3.0, None, 2.0)))


def test_sweep_rods_on_existing_rods_count_once():
    # a perimeter rod placed where the design already has one is one piece of metal
    from groundcalc.studies.sweep import sweep_layouts

    d = _code_design(rods=[Rod("R0", 0.0, 0.0, 0.5, 3.0, 0.016)])
    lay = sweep_layouts(d, [6.0], [4], 3.0, 0.016)[0]
    prepared = prepare(lay.design)
    assert len(lay.design.rods) == 5 and len(prepared.rods) == 4
    assert any(n.code == "duplicate-rod" for n in prepared.notices)


def test_validation_is_idempotent():
    d = prepare(_code_design(fault=Fault(3180.0, 0.05, 10.0, 0.5)))
    assert validate(d) is d and prepare(d).notices == d.notices


def test_decrement_factor_tends_to_sqrt3_for_a_long_time_constant():
    # IEEE Std 80-2000 Eq. (79): as Ta/tf -> infinity, (Ta/tf)(1 - exp(-2 tf/Ta)) -> 2, so Df -> sqrt(3)
    assert decrement_factor(1e20, 0.5, 60.0) == pytest.approx(math.sqrt(3.0), rel=1e-12)
    # Table 10 check value [calc] from Eq. (79), matching Table 10 from memory: X/R 40, tf = 0.05 s, 60 Hz -> 1.515
    assert decrement_factor(40.0, 0.05, 60.0) == pytest.approx(1.515, abs=5e-4)


@pytest.mark.skipif(os.geteuid() == 0, reason="the superuser may write into a read-only folder")
def test_read_only_output_folder(tmp_path, capsys):
    book = _book(tmp_path, None)
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o500)
    try:
        assert main(["run", str(book), "--json", str(ro / "r.json")]) == 2
        assert "cannot be written" in capsys.readouterr().err
    finally:
        ro.chmod(0o700)


def test_markup_and_any_script_print_as_typed_in_the_report(tmp_path):
    # Cyrillic, Greek, CJK and markup in the title block, and markup in a column header (which
    # reaches the report through the ignored-column warning): one report for all of them
    from pypdf import PdfReader

    from groundcalc.report.text import markup

    names = {"B2": "Пастбище Кестрел", "B3": "Κέστρελ Μπρουκ", "B4": "茶隼溪变电站", "B5": "<b>Kestrel & Brook</b>"}
    edits = [_set("Project", cell, v) for cell, v in names.items()] + [_set("Rods", "H1", "<i>x</i>")]
    book = _book(tmp_path, _both(*edits))
    assert main(["run", str(book), "--report", str(tmp_path / "r.pdf"), "--quiet"]) == 0
    text = " ".join(pg.extract_text() for pg in PdfReader(tmp_path / "r.pdf").pages)
    assert "<b>Kestrel & Brook</b>" in text and "'<i>x</i>' (H)" in text
    for name in names.values():
        if markup(name)[1] == 0:  # every character has a font on this system
            assert name in text, name
    if any(markup(n)[1] for n in names.values()):  # said plainly instead
        assert "could not be printed" in text


def test_soil_copy_keeps_a_sheet_with_a_leading_column_and_reads_back(tmp_path, capsys):
    # the Soil sheet has an extra first column: the fitted model goes into its own Quantity/Value columns
    book = _book(tmp_path, _both(_wenner_ok, lambda wb: wb["Soil"].insert_cols(1)))
    copy = tmp_path / "fitted.xlsx"
    assert main(["soil", str(book), "--write-design", str(copy), "--quiet"]) == 0
    d = read_design(copy)
    assert d.soil.model == "two-layer" and d.soil.rho1_ohm_m > 0
    ws = openpyxl.load_workbook(copy)["Soil"]
    assert ws["B2"].value == "Model" and ws["C2"].value == "two-layer"


def test_sweep_copy_reads_back(tmp_path, capsys):
    book = _book(tmp_path, _set("Fault", "B2", 10))  # a small fault current: the layout passes
    copy = tmp_path / "swept.xlsx"
    code = main(["sweep", str(book), "--spacing", "6", "--rods", "4", "--write-design", str(copy), "--quiet"])
    assert code == 0, capsys.readouterr().err
    d = read_design(copy)
    assert len(d.rods) == 4 and d.grids[0].n_along_x == 3


def test_one_output_failing_leaves_none_behind(tmp_path, capsys, monkeypatch):
    # the JSON is written first; the report then fails: the JSON must not be left behind
    import groundcalc.report as report_pkg

    def broken(*args, **kwargs):
        raise InputError("the report could not be written (simulated)")

    monkeypatch.setattr(report_pkg, "write_report", broken)
    book = _book(tmp_path, None)
    out = tmp_path / "out"
    out.mkdir()
    code = main(["run", str(book), "--json", str(out / "r.json"), "--report", str(out / "r.pdf"), "--quiet"])
    assert code == 2 and "simulated" in capsys.readouterr().err
    assert list(out.iterdir()) == []


def test_raster_size_limit_uses_the_spacing_the_analysis_will_choose():
    """A 500 m x 400 m grid with a blank raster spacing: the automatic spacing is 1 m (about 200
    lines across, common practice), so the raster has about 210,000 points and is accepted; the
    same grid at a given 0.25 m spacing would need 3.3 million and is refused."""
    from groundcalc.surface.potential import auto_raster_spacing
    from groundcalc.validation import MAX_RASTER_POINTS, validate

    grid = [GridSpec("G", 0.0, 0.0, 500.0, 400.0, 11, 9, 0.5, 0.01)]
    blank = _code_design(grids=grid, settings=Settings(segment_length_m=1.0, raster_spacing_m=None, margin_m=5.0))
    assert auto_raster_spacing(500.0, 1.0) == 1.0
    assert (511 * 411) < MAX_RASTER_POINTS
    validate(blank)
    fine = _code_design(grids=grid, settings=Settings(segment_length_m=1.0, raster_spacing_m=0.25, margin_m=5.0))
    with pytest.raises(InputError, match="more than 2,000,000"):
        validate(fine)
