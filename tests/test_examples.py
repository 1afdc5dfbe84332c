"""The bundled example is rebuilt by its script and runs through the pipeline."""

import importlib.util

import openpyxl
import pytest

from groundcalc.analysis import analyse
from groundcalc.io.workbook import read_design

from .conftest import ROOT


def _load_script():
    spec = importlib.util.spec_from_file_location("make_example", ROOT / "examples" / "make_example.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_example_script_reproduces_the_shipped_workbook(tmp_path):
    mod = _load_script()
    path = mod.build(tmp_path / "k.xlsx")
    a = openpyxl.load_workbook(path)
    b = openpyxl.load_workbook(ROOT / "examples" / "kestrel-brook.xlsx")
    for ws in a.worksheets:
        assert list(ws.iter_rows(values_only=True)) == list(b[ws.title].iter_rows(values_only=True))


def test_example_design_reads_and_passes():
    d = read_design(ROOT / "examples" / "kestrel-brook.xlsx")
    assert "fictional" in d.project.site
    r = analyse(d)
    # A guard on the demo design, not a physics check: the example is meant to show a passing
    # design in which touch governs.
    assert r.assessment.passed
    assert r.assessment.governing == "touch"


def _load_fence_script():
    spec = importlib.util.spec_from_file_location("make_fence_example", ROOT / "examples" / "make_fence_example.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_fence_example_script_reproduces_the_shipped_workbooks_and_they_read(tmp_path):
    mod = _load_fence_script()
    for name, bonded in (("kestrel-brook-fence.xlsx", True), ("kestrel-brook-fence-unbonded.xlsx", False)):
        path = mod.build(tmp_path / name, bonded=bonded)
        a = openpyxl.load_workbook(path)
        b = openpyxl.load_workbook(ROOT / "examples" / name)
        for ws in a.worksheets:
            assert list(ws.iter_rows(values_only=True)) == list(b[ws.title].iter_rows(values_only=True))
        metal = read_design(ROOT / "examples" / name).metal
        groups = {g.name: g.bonded for g in metal.groups}
        assert groups == {"Water main": False, "Perimeter": bonded, "Paddock": False}
        assert any(r.gate_swing_m for r in metal.fences)


def test_api_example_runs_and_its_numbers_check_out(capsys):
    import math

    spec = importlib.util.spec_from_file_location("api_example", ROOT / "examples" / "api_example.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    res = mod.main(segment_length_m=4.0, raster_spacing_m=1.0)  # coarse, so the test is quick
    out = capsys.readouterr().out
    assert "Grid resistance" in out and "leakage_density_a_per_m" in out and "future fault level" in out
    assert "Wrenfield Lane" in mod.build_design().project.project
    # IEEE Std 80-2000 Eq. 79: Df = sqrt(1 + Ta/tf (1 - exp(-2 tf/Ta))), Ta = (X/R) / (2 pi f); X/R = 12,
    # 50 Hz, tf = 0.4 s. I_G = Df Sf 3I0 (Eq. 64) with Sf = 0.5, 3I0 = 6000 A.
    ta = 12.0 / (2 * math.pi * 50.0)
    df = math.sqrt(1 + ta / 0.4 * (1 - math.exp(-2 * 0.4 / ta)))
    assert res.decrement_factor == pytest.approx(df, rel=1e-12)
    assert res.grid_current_a == pytest.approx(df * 0.5 * 6000.0, rel=1e-12)
    # Sverak, IEEE Std 80-2000 Eq. 52, with LT = 9 x 40 m + 11 x 30 m + 4 x 6 m rods, A = 1200 m2, h = 0.6 m
    lt, area, h = 9 * 40.0 + 11 * 30.0 + 4 * 6.0, 1200.0, 0.6
    sverak = 150.0 * (1 / lt + 1 / math.sqrt(20 * area) * (1 + 1 / (1 + h * math.sqrt(20 / area))))
    assert res.sverak_resistance_ohm == pytest.approx(sverak, rel=1e-9)
    assert res.gpr_v == pytest.approx(res.grid_current_a * res.resistance_ohm, rel=1e-12)


def test_uncertainty_example_reads_its_ranges():
    from groundcalc.io.uncertainty import read_uncertainty

    p = ROOT / "examples" / "kestrel-brook-uncertainty.xlsx"
    qs, notes = read_uncertainty(p, read_design(p))
    assert [q.key for q in qs] == ["fault current", "split factor", "fault duration", "surface layer resistivity"]
    assert qs[0].low == 7000.0 and qs[0].high == 9000.0  # kA converted to A
    assert notes == ()  # every range contains the design's own value


def test_large_example_script_reproduces_the_shipped_workbook_which_takes_the_matrix_free_path(tmp_path):
    from groundcalc.geometry.segments import segment_conductors
    from groundcalc.mom.fastop import FAST_MIN_SIZE

    spec = importlib.util.spec_from_file_location("make_large_example", ROOT / "examples" / "make_large_example.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    path = mod.build(tmp_path / "large.xlsx")
    a = openpyxl.load_workbook(path)
    b = openpyxl.load_workbook(ROOT / "examples" / "kestrel-brook-large.xlsx")
    for ws in a.worksheets:
        assert list(ws.iter_rows(values_only=True)) == list(b[ws.title].iter_rows(values_only=True))
    d = read_design(ROOT / "examples" / "kestrel-brook-large.xlsx")
    assert "fictional" in d.project.site
    assert d.soil.model == "two-layer"
    seg = segment_conductors(d.all_conductors(), d.settings.segment_length_m, interface_depth_m=2.5)
    assert len(seg.segments) >= FAST_MIN_SIZE
