"""Reading the Metal, Fences, Check points, Check areas and Profiles sheets; clear errors for bad input."""

from __future__ import annotations

import openpyxl
import pytest

from groundcalc.errors import InputError
from groundcalc.io.metal import read_metal
from groundcalc.io.workbook import read_design

from .conftest import write_workbook

GRID = [["G", 0, 0, 20, 20, 3, 3, 0.5, 10]]


def _fill(wb, sheets: dict) -> None:
    for name, rows in sheets.items():
        ws = wb[name.replace("_", " ")]
        cols = {str(c.value): c.column for c in ws[1]}
        for values in rows:
            r = ws.max_row + 1
            for header, v in values.items():
                ws.cell(row=r, column=cols[header], value=v)


def _book(tmp_path, settings=None, **sheets):
    """A valid small design file plus rows (dicts header -> value) on the named sheets."""
    path = write_workbook(tmp_path / "m.xlsx", grids=GRID, settings=settings)
    wb = openpyxl.load_workbook(path)
    _fill(wb, sheets)
    wb.save(path)
    return path


def _read_in_memory(**sheets):
    """The metal sheets of an in-memory workbook, read as read_design reads them (no file)."""
    from groundcalc.io.template import build_template
    from groundcalc.io.workbook import _read_conductors, _read_rods

    wb = build_template()
    wb["Grids"].append(GRID[0])
    _fill(wb, sheets)
    notices = []
    return read_metal(wb, _read_conductors(wb), _read_rods(wb), notices, True), notices


FENCE = {
    "Label": "F",
    "X1 [m]": -2,
    "Y1 [m]": -2,
    "X2 [m]": 22,
    "Y2 [m]": -2,
    "Post spacing [m]": 3,
    "Post length [m]": 1,
    "Post diameter [mm]": 60,
    "Bonded": "no",
}
PIPE = {
    "Label": "P",
    "X1 [m]": -10,
    "Y1 [m]": 10,
    "Depth1 [m]": 1,
    "X2 [m]": 30,
    "Y2 [m]": 10,
    "Depth2 [m]": 1,
    "Diameter [mm]": 100,
    "Group": "Pipe",
}


def _error(path) -> InputError:
    with pytest.raises(InputError) as e:
        read_design(path)
    return e.value


def test_workbook_without_metal_sheets_has_no_metal(tmp_path):
    assert read_design(_book(tmp_path)).metal is None


def test_groups_fences_points_areas_profiles_are_read(tmp_path):
    path = _book(
        tmp_path,
        settings={"Segment length [m]": 5, "Fence reach [m]": 1.2, "Check areas": "replace"},
        Metal=[{"Group": "Pipe", "Bonded to grid": "no"}],
        Conductors=[PIPE],
        Fences=[FENCE, {**FENCE, "X1 [m]": 22, "Y1 [m]": -2, "X2 [m]": 22, "Y2 [m]": 22, "Gate swing [m]": 3}],
        Check_points=[{"Label": "valve", "X [m]": 25, "Y [m]": 10, "Group": "pipe"}],
        Check_areas=[
            {"Area": "A", "Vertex": k, "X [m]": x, "Y [m]": y} for k, (x, y) in enumerate([(0, 0), (5, 0), (5, 5)], 1)
        ],
        Profiles=[{"Label": "L", "X1 [m]": 0, "Y1 [m]": 10, "X2 [m]": 30, "Y2 [m]": 10}],
    )
    d = read_design(path)
    m = d.metal
    assert [g.name for g in m.groups] == ["Pipe", "F"]
    assert not m.groups[0].bonded and not m.groups[1].bonded
    assert d.conductors == ()  # the pipe left the grid
    posts = [c for c in m.groups[1].conductors if c.kind == "rod"]
    # 24 m at <= 3 m: 9 posts on each run, the shared corner once -> 17
    assert len(posts) == 17
    assert all(c.start[2] == 0.0 and c.end[2] == 1.0 for c in posts)
    assert m.fence_reach_m == pytest.approx(1.2)
    assert m.areas_replace_footprint
    assert m.check_points[0].group == "Pipe"
    assert m.fences[1].gate_swing_m == 3


@pytest.mark.parametrize(
    ("sheets", "where", "words"),
    [
        ({"Conductors": [PIPE]}, ("Conductors", "Group"), "not a group of the Metal sheet"),
        ({"Metal": [{"Group": "Pipe", "Bonded to grid": "maybe"}]}, ("Metal", "Bonded to grid"), "not yes or no"),
        ({"Metal": [{"Group": "grid", "Bonded to grid": "no"}]}, ("Metal", "Group"), "name of the grid"),
        (
            {"Metal": [{"Group": "Pipe", "Bonded to grid": "no"}, {"Group": "pipe", "Bonded to grid": "yes"}]},
            ("Metal", "Group"),
            "listed twice",
        ),
        ({"Fences": [{**FENCE, "X2 [m]": -2}]}, ("Fences", "X1"), "zero length"),
        ({"Fences": [{**FENCE, "Post spacing [m]": 0}]}, ("Fences", "Post spacing"), "greater than zero"),
        ({"Fences": [{**FENCE, "Post length [m]": None}]}, ("Fences", "Post length"), "required"),
        ({"Fences": [{**FENCE, "Bonded": "perhaps"}]}, ("Fences", "Bonded"), "not yes or no"),
        ({"Fences": [FENCE, {**FENCE, "Bonded": "yes"}]}, ("Fences", "Bonded"), "bonded on"),
        ({"Fences": [{**FENCE, "Post diameter [mm]": 600}]}, ("Fences", "Post diameter"), "not a fence post"),
        ({"Fences": [{**FENCE, "Gate swing [m]": -1}]}, ("Fences", "Gate swing"), "greater than zero"),
        ({"Fences": [{**FENCE, "Bottom wire diameter [mm]": 10}]}, ("Fences", "Bottom wire diameter"), "without"),
        (
            {"Check_points": [{"Label": "x", "X [m]": 1, "Y [m]": 1, "Group": "nothing"}]},
            ("Check points", "Group"),
            "not a metal group or fence",
        ),
        ({"Check_points": [{"Label": "x", "X [m]": 1}]}, ("Check points", "Y"), "required"),
        (
            {"Check_areas": [{"Area": "A", "Vertex": k, "X [m]": k, "Y [m]": 0} for k in (1, 2)]},
            ("Check areas", "Vertex"),
            "at least 3",
        ),
        (
            {"Check_areas": [{"Area": "A", "Vertex": k, "X [m]": k, "Y [m]": k} for k in (1, 2, 3)]},
            ("Check areas", "X"),
            "encloses no area",
        ),
        (
            {"Check_areas": [{"Area": "A", "Vertex": 1, "X [m]": 0, "Y [m]": 0}] * 2},
            ("Check areas", "Vertex"),
            "given twice",
        ),
        (
            {"Profiles": [{"Label": "L", "X1 [m]": 0, "Y1 [m]": 0, "X2 [m]": 0, "Y2 [m]": 0}]},
            ("Profiles", "X1"),
            "shorter than",
        ),
    ],
)
def test_bad_metal_input_names_sheet_row_column_and_fix(sheets, where, words):
    with pytest.raises(InputError) as e:
        _read_in_memory(**sheets)
    err = e.value
    assert err.sheet == where[0]
    assert where[1].lower() in (err.column or "").lower()
    assert err.row is not None and err.row >= 2
    assert words in err.problem
    assert err.fix


def test_bad_fence_reach_and_check_area_mode(tmp_path):
    err = _error(_book(tmp_path, settings={"Segment length [m]": 5, "Fence reach [m]": 10}))
    assert err.sheet == "Settings" and "reach" in err.problem and "1 m" in err.fix
    err = _error(_book(tmp_path, settings={"Segment length [m]": 5, "Check areas": "sometimes"}))
    assert err.sheet == "Settings" and "extend" in err.fix


def test_fence_label_may_not_repeat_a_group_name(tmp_path):
    err = _error(
        _book(
            tmp_path,
            Metal=[{"Group": "F", "Bonded to grid": "no"}],
            Conductors=[{**PIPE, "Group": "F"}],
            Fences=[FENCE],
        )
    )
    assert err.sheet == "Fences" and "also the name" in err.problem


def test_every_conductor_in_a_group_leaves_no_grid(tmp_path):
    path = write_workbook(tmp_path / "m.xlsx", conductors=[[*list(PIPE.values())[:-1], None, "Pipe"]])
    wb = openpyxl.load_workbook(path)
    wb["Metal"].append(["Pipe", "no"])
    wb.save(path)
    err = _error(path)
    assert "no grid" in err.problem and err.sheet == "Conductors"


def test_empty_group_is_noted():
    _, notices = _read_in_memory(Metal=[{"Group": "Rail", "Bonded to grid": "yes"}], Fences=[FENCE])
    assert any(n.code == "empty-group" and "Rail" in n.message for n in notices)
