"""Geometry repairs, workbook edge cases, warnings that travel, and physical invariants (hypothesis)."""

from __future__ import annotations

import json
import math

import numpy as np
import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pypdf import PdfReader

from groundcalc.analysis import analyse, solve_geometry
from groundcalc.cli import main
from groundcalc.errors import InputError
from groundcalc.geometry.repairs import clean_design
from groundcalc.io.workbook import read_design
from groundcalc.model import Conductor, GridSpec, Rod, Soil
from groundcalc.surface.potential import surface_potential

from .conftest import make_design, write_workbook

GRID = GridSpec("G", 0.0, 0.0, 20.0, 20.0, 3, 3, 0.5, 0.01)


def _r(design):
    return solve_geometry(design).solution.resistance_ohm


def test_snap_moves_a_near_miss_onto_the_grid_and_says_so():
    # A tail that stops 5 cm short of the grid edge: with a 0.1 m snap tolerance it is joined (and
    # reported); without, it is reported as not connected.
    tail = Conductor("TAIL", (20.05, 10.0, 0.5), (26.0, 10.0, 0.5), 0.01)
    loose = clean_design(make_design(grids=[GRID], conductors=[tail]), 0.0)
    snapped = clean_design(make_design(grids=[GRID], conductors=[tail]), 0.1)
    assert snapped.conductors[0].start == pytest.approx((20.0, 10.0, 0.5))
    assert any(n.code == "snapped" and "TAIL start" in n.message for n in snapped.notices)
    assert not any(n.code == "snapped" for n in loose.notices)
    seg = solve_geometry(loose).segmentation
    assert any(n.code == "not-connected" for n in seg.notices)
    assert not any(n.code == "not-connected" for n in solve_geometry(snapped).segmentation.notices)


def test_rod_near_a_conductor_is_moved_whole():
    # top 4 cm beside and 3 cm below the edge conductor y = 0: gap 0.05 m less the radii
    rod = Rod("R", 5.0, 0.04, 0.53, 3.0, 0.016)
    d = clean_design(make_design(grids=[GRID], rods=[rod]), 0.05)
    r = d.rods[0]
    assert (r.x_m, r.y_m, r.top_depth_m, r.length_m) == pytest.approx((5.0, 0.0, 0.5, 3.0), abs=1e-9)


def test_conductor_along_a_grid_edge_is_counted_once():
    # A perimeter conductor drawn over the grid's edge adds no metal: the resistance must equal the grid's
    # alone (to round-off), where counting it twice would make the matrix nearly singular.
    over = Conductor("EDGE", (-5.0, 0.0, 0.5), (20.0, 0.0, 0.5), 0.01)
    d = clean_design(make_design(grids=[GRID], conductors=[over]), 0.0)
    assert len(d.conductors) == 1
    assert d.conductors[0].start == pytest.approx((-5.0, 0.0, 0.5))
    assert d.conductors[0].end == pytest.approx((0.0, 0.0, 0.5))
    assert any(n.code == "overlap-merged" for n in d.notices)
    stub = make_design(grids=[GRID], conductors=[Conductor("EDGE", (-5.0, 0.0, 0.5), (0.0, 0.0, 0.5), 0.01)])
    assert _r(d) == pytest.approx(_r(stub), rel=1e-12)


def test_two_overlapping_conductors_are_merged():
    a = Conductor("A", (0.0, 0.0, 0.5), (6.0, 0.0, 0.5), 0.01)
    b = Conductor("B", (4.0, 0.0, 0.5), (10.0, 0.0, 0.5), 0.012)
    d = clean_design(make_design(conductors=[a, b]), 0.0)
    assert len(d.conductors) == 1
    c = d.conductors[0]
    assert sorted([c.start[0], c.end[0]]) == pytest.approx([0.0, 10.0]) and c.diameter_m == 0.012


def test_duplicate_rods_are_counted_once():
    rods = [Rod("R1", 0.0, 0.0, 0.5, 3.0, 0.016), Rod("R2", 0.0, 0.0, 0.5, 3.0, 0.016)]
    d = clean_design(make_design(grids=[GRID], rods=rods), 0.0)
    assert [r.label for r in d.rods] == ["R1"]
    assert any(n.code == "duplicate-rod" and "R2" in n.message for n in d.notices)


def test_far_coordinates_and_depths():
    far = Conductor("F", (2e7, 0.0, 0.5), (2e7 + 10, 0.0, 0.5), 0.01)
    with pytest.raises(InputError, match="beyond 10,000,000 m"):
        clean_design(make_design(conductors=[far]), 0.0)
    with pytest.raises(InputError, match="below grade"):
        clean_design(make_design(rods=[Rod("R", 0, 0, 0.5, 3000.0, 0.016)]), 0.0)
    d = clean_design(make_design(grids=[GRID], rods=[Rod("R", 0, 0, 0.5, 40.0, 0.016)]), 0.0)
    assert any(n.code == "deep-conductor" for n in d.notices)


def test_snap_warning_travels_to_json_stderr_and_report(tmp_path, capsys):
    p = write_workbook(
        tmp_path / "d.xlsx",
        grids=[["G", 0, 0, 20, 20, 3, 3, 0.5, 10]],
        conductors=[["TAIL", 20.05, 10, 0.5, 26, 10, 0.5, 10]],
        settings={"Segment length [m]": 2, "Raster spacing [m]": 1, "Snap tolerance [m]": 0.1},
    )
    code = main(["run", str(p), "--json", str(tmp_path / "r.json"), "--report", str(tmp_path / "r.pdf")])
    assert code == 0
    err = capsys.readouterr().err
    assert "moved onto the nearest conductor" in err
    data = json.loads((tmp_path / "r.json").read_text())
    assert any(w["code"] == "snapped" for w in data["warnings"])
    pdf = " ".join(" ".join(pg.extract_text().split()) for pg in PdfReader(tmp_path / "r.pdf").pages)
    assert "moved onto the nearest conductor" in pdf


def test_non_ascii_labels_blank_trailing_rows_and_text_numbers(tmp_path):
    p = write_workbook(
        tmp_path / "d.xlsx",
        grids=[["Schaltanlage Süd – Ω", 0, 0, "20", "20,0", 3, 3, 0.5, 10]],
        rods=[["Stab-Ä", 0, 0, 0.5, 3, 16]],
        settings={"Segment length [m]": 2},
    )
    wb = openpyxl.load_workbook(p)
    for _ in range(50):
        wb["Conductors"].append([None] * 8)
    wb.save(p)
    d = read_design(p)
    assert d.grids[0].label == "Schaltanlage Süd – Ω" and d.grids[0].length_y_m == 20.0


def test_hidden_rows_are_read_with_a_note(tmp_path):
    p = write_workbook(tmp_path / "d.xlsx", grids=[["G", 0, 0, 20, 20, 3, 3, 0.5, 10]], rods=[["R1", 0, 0, 0.5, 3, 16]])
    wb = openpyxl.load_workbook(p)
    wb["Rods"].row_dimensions[2].hidden = True
    wb.save(p)
    d = read_design(p)
    assert len(d.rods) == 1
    assert any(n.code == "hidden-rows" and "Rods" in n.message and "2" in n.message for n in d.notices)


def test_very_large_sheet_gets_a_limit_message(tmp_path, capsys):
    p = write_workbook(tmp_path / "big.xlsx", grids=[["G", 0, 0, 20, 20, 3, 3, 0.5, 10]])
    wb = openpyxl.load_workbook(p)
    ws = wb["Conductors"]
    for k in range(20_002):
        ws.append([f"C{k}", k, 0, 0.5, k + 0.5, 0, 0.5, 10])
    wb.save(p)
    assert main(["run", str(p)]) == 2
    err = capsys.readouterr().err
    assert "sheet 'Conductors'" in err and "more than 20000 rows" in err


# --------------------------------------------------------------------------------------------
# Physical invariants on random valid layouts (common practice; see each assertion).
# --------------------------------------------------------------------------------------------

layouts = st.fixed_dictionaries(
    {
        "lx": st.floats(8.0, 30.0),
        "ly": st.floats(8.0, 30.0),
        "nx": st.integers(2, 4),
        "ny": st.integers(2, 4),
        "depth": st.floats(0.3, 1.2),
        "rods": st.integers(0, 3),
        "rho": st.floats(20.0, 2000.0),
        "angle": st.floats(0.0, 2 * math.pi),
        "shift": st.tuples(st.floats(-5e5, 5e5), st.floats(-5e5, 5e5)),
    }
)


def _layout(p, angle=0.0, shift=(0.0, 0.0), reverse=False):
    g = GridSpec("G", 0.0, 0.0, p["lx"], p["ly"], p["nx"], p["ny"], p["depth"], 0.01)
    conds = g.conductors()
    corners = [(0, 0), (p["lx"], 0), (p["lx"], p["ly"])][: p["rods"]]
    c, s = math.cos(angle), math.sin(angle)

    def tr(x, y):
        return (c * x - s * y + shift[0], s * x + c * y + shift[1])

    conds = [
        Conductor(k.label, (*tr(*k.start[:2]), k.start[2]), (*tr(*k.end[:2]), k.end[2]), k.diameter_m) for k in conds
    ]
    rods = [Rod(f"R{i}", *tr(x, y), p["depth"], 2.5, 0.016) for i, (x, y) in enumerate(corners)]
    if reverse:
        conds, rods = conds[::-1], rods[::-1]
    return make_design(conductors=conds, rods=rods, soil=Soil("uniform", p["rho"]), segment=2.0, spacing=1.0)


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(layouts)
def test_invariants_of_random_layouts(p):
    base = _layout(p)
    sol = solve_geometry(base).solution
    r = sol.resistance_ohm
    assert r > 0
    # adding conductors never raises the resistance: R is below that of its longest conductor alone
    longest = max(base.conductors, key=lambda c: c.length_m)
    assert r <= _r(make_design(conductors=[longest], soil=base.soil, segment=2.0)) * (1 + 1e-9)
    # surface potential between 0 and the GPR (here 1 V), over and around the grid
    rng = np.random.default_rng(0)
    pts = np.column_stack([rng.uniform(-10, p["lx"] + 10, 200), rng.uniform(-10, p["ly"] + 10, 200)])
    v = surface_potential(pts, sol, 1.0)
    assert np.all(v > 0) and np.all(v < 1.0)
    # unchanged by a rigid rotation and translation of the whole layout, and by the order of rows
    moved = _layout(p, p["angle"], p["shift"])
    assert _r(moved) == pytest.approx(r, rel=1e-6)
    assert _r(_layout(p, reverse=True)) == pytest.approx(r, rel=1e-9)


def test_touch_and_step_survive_translation_and_rotation():
    # Full pipeline under a rigid motion (500 km from the origin, 30 degrees): touch and step within the
    # raster-refinement accuracy (0.5 %).
    p = {"lx": 20.0, "ly": 14.0, "nx": 3, "ny": 4, "depth": 0.5, "rods": 2, "rho": 100.0}
    a = analyse(_layout(p))
    b = analyse(_layout(p, math.radians(30), (5e5, -3e5)))
    assert b.resistance_ohm == pytest.approx(a.resistance_ohm, rel=1e-6)
    assert b.max_touch_v == pytest.approx(a.max_touch_v, rel=5e-3)
    assert b.max_step_v == pytest.approx(a.max_step_v, rel=5e-3)
