"""The bundled example is rebuilt by its script and runs through the pipeline."""

import importlib.util

import openpyxl

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
    # the demo is meant to show a passing design; touch governs
    assert r.assessment.passed
    assert r.assessment.governing == "touch"


def test_uncertainty_example_reads_its_ranges():
    from groundcalc.io.uncertainty import read_uncertainty

    p = ROOT / "examples" / "kestrel-brook-uncertainty.xlsx"
    qs, notes = read_uncertainty(p, read_design(p))
    assert [q.key for q in qs] == ["fault current", "split factor", "fault duration", "surface layer resistivity"]
    assert qs[0].low == 7000.0 and qs[0].high == 9000.0  # kA converted to A
    assert notes == ()  # every range contains the design's own value
