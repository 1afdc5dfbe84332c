"""The Layers sheet: reading, clear errors for bad rows, and a run through the whole pipeline."""

import openpyxl
import pytest

from groundcalc.analysis import analyse, solve_geometry
from groundcalc.errors import InputError
from groundcalc.io.workbook import read_design

from .conftest import write_workbook

GRID = [("g", 0, 0, 10, 10, 2, 2, 0.5, 10)]  # 10 mm conductor
ROD = [("r1", 0, 0, 0.5, 4.0, 16)]  # 16 mm rod


def _book(tmp_path, layers, name="ml.xlsx", rods=ROD):
    path = write_workbook(tmp_path / name, soil={"Model": "multilayer"}, grids=GRID, rods=rods)
    wb = openpyxl.load_workbook(path)
    for row in layers:
        wb["Layers"].append(list(row))
    wb.save(path)
    return path


def test_layers_sheet_is_read_in_si_units(tmp_path):
    d = read_design(_book(tmp_path, [(1, 300, 1.5), (2, 60, 4), (3, 800, None)]))
    assert d.soil.model == "multilayer"
    assert d.soil.layers == ((300.0, 1.5), (60.0, 4.0), (800.0, None))
    assert d.soil.interfaces_m == (1.5, 5.5)


@pytest.mark.parametrize(
    "layers, words",
    [
        ([(1, 300, 1.5), (2, 60, 4)], "last layer"),
        ([(1, 300, 1.5), (3, 60, None)], "expected 2"),
        ([(1, 300, None), (2, 60, None)], "no thickness"),
        ([(1, 300, None)], "only one layer"),
        ([(1, -5, 1.0), (2, 60, None)], "Resistivity"),
    ],
)
def test_bad_layers_rows_are_named(tmp_path, layers, words):
    with pytest.raises(InputError) as err:
        read_design(_book(tmp_path, layers))
    text = str(err.value)
    assert words.lower() in text.lower() and "Layers" in text


def test_missing_layers_sheet_is_named(tmp_path):
    with pytest.raises(InputError, match="Layers"):
        read_design(_book(tmp_path, []))


def test_equal_layers_run_like_uniform_soil(tmp_path):
    # Equal resistivities in every layer: the whole pipeline must give the uniform-soil resistance
    # and touch voltage (method of images, Sunde 1968 ch. 2). Grid only, so the segments are the same.
    ml = analyse(read_design(_book(tmp_path, [(1, 200, 1.5), (2, 200, 1.0), (3, 200, None)], rods=[])))
    uni_path = write_workbook(
        tmp_path / "u.xlsx", soil={"Model": "uniform", "Upper resistivity [ohm*m]": 200}, grids=GRID
    )
    uni = analyse(read_design(uni_path))
    assert ml.resistance_ohm == pytest.approx(uni.resistance_ohm, rel=1e-9)
    assert ml.max_touch_v == pytest.approx(uni.max_touch_v, rel=1e-7)


def test_three_layer_resistance_lies_between_the_uniform_bounds(tmp_path):
    # Thomson's principle: the resistance grows with the resistivity of any part of the soil, so a
    # layered soil lies between uniform soils of its smallest and largest resistivity. The rod crosses
    # both interfaces and is split there.
    layers = [(1, 300, 1.0), (2, 60, 2.0), (3, 900, None)]
    ml = solve_geometry(read_design(_book(tmp_path, layers))).solution
    assert set(ml.segments.layer.tolist()) == {0, 1, 2}
    bounds = []
    for rho in (60, 900):
        path = write_workbook(
            tmp_path / f"u{rho}.xlsx", soil={"Model": "uniform", "Upper resistivity [ohm*m]": rho}, grids=GRID, rods=ROD
        )
        bounds.append(solve_geometry(read_design(path)).solution.resistance_ohm)
    assert bounds[0] < ml.resistance_ohm < bounds[1]
