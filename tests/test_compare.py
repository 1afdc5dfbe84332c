"""Several layouts side by side, variants of one design, and the spacing/rod sweep."""

from __future__ import annotations

import hashlib
import json

import openpyxl
import pytest
from pypdf import PdfReader

import groundcalc.studies.variants as variants_mod
from groundcalc.analysis import analyse
from groundcalc.cautions import DRAFT_MARK
from groundcalc.cli import main
from groundcalc.io.workbook import read_design

from .conftest import write_workbook

ANNEX_B_SOIL = {
    "Model": "uniform",
    "Upper resistivity [ohm*m]": 400,
    "Surface layer resistivity [ohm*m]": 2500,
    "Surface layer thickness [m]": 0.102,
}
COARSE = {"Segment length [m]": 2, "Raster spacing [m]": 1}
B1 = ["B1", 0, 0, 70, 70, 11, 11, 0.5, 10]


def _ex2_rods():
    # Annex B Ex. 2: 20 rods of 7.5 m on the perimeter [mem]; positions ours (corners and 14 m pitch)
    pos = sorted(
        {(t, e) for t in range(0, 71, 14) for e in (0, 70)} | {(e, t) for t in range(0, 71, 14) for e in (0, 70)}
    )
    return [[f"R{k}", x, y, 0.5, 7.5, 20] for k, (x, y) in enumerate(pos)]


def _annex_b(path, rods=()):
    return write_workbook(path, soil=ANNEX_B_SOIL, grids=[B1], rods=list(rods), settings=COARSE)


def _sha(p):
    return hashlib.sha256(p.read_bytes()).hexdigest()


def test_compare_annex_b_examples_1_and_2(tmp_path, capsys):
    # IEEE Std 80 Annex B: Example 2 (Example 1 plus 20 perimeter rods) has the lower resistance and the
    # lower mesh voltage (Em 1002.1 V against 747.4 V by the standard's equations, from memory).
    ex1 = _annex_b(tmp_path / "ex1.xlsx")
    ex2 = _annex_b(tmp_path / "ex2.xlsx", _ex2_rods())
    before = (_sha(ex1), _sha(ex2))
    out = tmp_path / "cmp.json"
    code = main(["compare", str(ex1), str(ex2), "--json", str(out), "--report", str(tmp_path / "c.pdf"), "--jobs", "2"])
    assert code == 0
    assert (_sha(ex1), _sha(ex2)) == before
    d = {x["name"]: x for x in json.loads(out.read_text())["designs"]}
    assert d["ex2"]["grid_resistance_ohm"] < d["ex1"]["grid_resistance_ohm"]
    assert d["ex2"]["max_touch_v"] < d["ex1"]["max_touch_v"]
    assert d["ex2"]["rod_count"] == 20 and d["ex2"]["total_rod_length_m"] == pytest.approx(150.0)
    assert d["ex1"]["total_conductor_length_m"] == pytest.approx(1540.0)  # LC of Annex B Ex. 1 [mem]
    # buried copper: 1540 m of 10 mm conductor at 8890 kg/m3 (common practice) = 1075 kg
    assert d["ex1"]["buried_mass_kg"] == pytest.approx(1540 * 3.14159265 * 0.005**2 * 8890, rel=1e-6)
    # the worse one fails the touch criterion, the better one passes and is ranked
    assert (d["ex1"]["passed"], d["ex2"]["passed"]) == (False, True)
    assert d["ex2"]["rank"] == 1 and d["ex1"]["rank"] is None
    text = capsys.readouterr().out
    assert "ex1" in text and "ex2" in text and "Lightest passing design: ex2" in text
    pdf = " ".join(p.extract_text() for p in PdfReader(tmp_path / "c.pdf").pages)
    assert DRAFT_MARK in pdf and "ex1" in pdf and "ex2" in pdf


def test_compare_reports_the_others_when_one_file_is_missing(tmp_path, capsys):
    ex1 = _annex_b(tmp_path / "ex1.xlsx")
    bad = tmp_path / "bad.xlsx"
    bad.write_bytes(b"not a workbook")
    out = tmp_path / "cmp.json"
    code = main(["compare", str(ex1), str(tmp_path / "missing.xlsx"), str(bad), "--json", str(out), "--jobs", "1"])
    assert code == 2
    err = capsys.readouterr().err
    assert "missing" in err and "does not exist" in err and "bad" in err
    d = {x["name"]: x for x in json.loads(out.read_text())["designs"]}
    assert "error" in d["missing"] and "error" in d["bad"]
    assert d["ex1"]["grid_resistance_ohm"] > 0


def _with_variants(path, rows, headers=None):
    p = _annex_b(path)
    wb = openpyxl.load_workbook(p)
    ws = wb["Variants"]
    if headers:
        for k, h in enumerate(headers, start=1):
            ws.cell(row=1, column=k, value=h)
    cols = {str(c.value): c.column for c in ws[1] if c.value}
    for r in rows:
        row = ws.max_row + 1
        for h, v in r.items():
            ws.cell(row=row, column=cols[h], value=v)
    wb.save(p)
    return p


def test_fault_current_variants_scale_linearly_without_a_new_solve(tmp_path, monkeypatch):
    # The model is linear in the current (common practice): doubling 3I0 doubles GPR, touch and step;
    # and the geometry is solved once (counted through the solver hook, not wall time).
    calls = []
    real = variants_mod.solve_geometry
    monkeypatch.setattr(variants_mod, "solve_geometry", lambda d: calls.append(1) or real(d))
    p = _with_variants(
        tmp_path / "v.xlsx",
        [{"Variant": "double", "Fault current [A]": 6360}, {"Variant": "half kA", "Fault current [A]": 1590}],
    )
    out = tmp_path / "v.json"
    assert main(["run", str(p), "--json", str(out), "--report", str(tmp_path / "v.pdf"), "--quiet"]) == 0
    d = json.loads(out.read_text())
    assert d["geometry_solves"] == 1 and len(calls) == 1
    base, double, half = d["variants"]
    assert base["name"] == "base case"
    for key in ("gpr_v", "max_touch_v", "max_step_v"):
        assert double[key] == pytest.approx(2 * base[key], rel=1e-9)
        assert half[key] == pytest.approx(0.5 * base[key], rel=1e-9)
    assert double["grid_resistance_ohm"] == base["grid_resistance_ohm"]
    assert double["changes"] == {"fault": {"fault_current_a": 6360.0}}
    pdf = " ".join(pg.extract_text() for pg in PdfReader(tmp_path / "v.pdf").pages)
    assert "Variants" in pdf and "double" in pdf


def test_soil_variant_solves_again_and_surface_variant_does_not(tmp_path):
    # Resistance is proportional to rho in uniform soil (dimensional analysis, common practice).
    p = _with_variants(
        tmp_path / "v.xlsx",
        [
            {"Variant": "dry", "Upper resistivity [ohm*m]": 800},
            {"Variant": "more rock", "Surface layer thickness [m]": 0.2},
            {"Variant": "two-layer", "Upper thickness [m]": 3, "Lower resistivity [ohm*m]": 100},
        ],
    )
    out = tmp_path / "v.json"
    assert main(["run", str(p), "--json", str(out), "--quiet"]) == 0
    d = json.loads(out.read_text())
    assert d["geometry_solves"] == 3
    base, dry, rock, two = d["variants"]
    assert dry["grid_resistance_ohm"] == pytest.approx(2 * base["grid_resistance_ohm"], rel=1e-9)
    assert rock["grid_resistance_ohm"] == base["grid_resistance_ohm"]
    assert rock["touch_limit_v"] > base["touch_limit_v"]  # thicker rock: larger Cs (Eq. 27)
    assert two["grid_resistance_ohm"] < base["grid_resistance_ohm"]  # wet clay below lowers Rg


@pytest.mark.parametrize(
    "rows,headers,words",
    [
        (
            [{"Variant": "x", "Fault curent [A]": 5}],
            ["Variant", "Fault curent [A]"],
            ["'Fault curent [A]'", "row 1", "not a quantity a variant can change"],
        ),
        (
            [{"Variant": "x", "Upper thickness [m]": 3}],
            None,
            ["row 2", "column 'Upper thickness [m]'", "only one of the upper thickness"],
        ),
        ([{"Variant": "x", "Body weight [kg]": 60}], None, ["row 2", "50 or 70"]),
        ([{"Variant": "x", "Split factor": 1.5}], None, ["row 2", "at most 1"]),
        ([{"Variant": "x"}, {"Variant": "y", "Split factor": 0.5}], None, ["row 2", "changes nothing"]),
        ([{"Variant": "a", "Split factor": 0.5}, {"Variant": "A", "Split factor": 0.4}], None, ["used twice"]),
    ],
    ids=["unknown-quantity", "half-two-layer", "body-weight", "split-factor", "empty", "duplicate"],
)
def test_bad_variants_exit_2_and_name_the_place(tmp_path, capsys, rows, headers, words):
    p = _with_variants(tmp_path / "v.xlsx", rows, headers)
    before = _sha(p)
    assert main(["run", str(p), "--json", str(tmp_path / "o.json")]) == 2
    err = capsys.readouterr().err
    assert "sheet 'Variants'" in err
    for w in words:
        assert w in err, (w, err)
    assert _sha(p) == before and not (tmp_path / "o.json").exists()


def test_sweep_resistance_falls_and_choice_passes_alone(tmp_path, capsys):
    # Common practice: more conductors lower the resistance; the chosen layout must pass when rerun alone.
    src = _annex_b(tmp_path / "site.xlsx")
    before = _sha(src)
    out = tmp_path / "chosen.xlsx"
    code = main(
        [
            "sweep", str(src), "--spacing", "6:10:2", "--rods", "0,20", "--rod-length", "7.5",
            "--json", str(tmp_path / "s.json"), "--report", str(tmp_path / "s.pdf"), "--write-design", str(out),
            "--jobs", "2",
        ]
    )  # fmt: skip
    assert code == 0
    assert _sha(src) == before
    d = json.loads((tmp_path / "s.json").read_text())
    plain = sorted((x for x in d["designs"] if x["rods_added"] == 0), key=lambda x: x["conductors_along_x"])
    res = [x["grid_resistance_ohm"] for x in plain]
    assert len(res) == 3 and res == sorted(res, reverse=True)
    chosen = next(x for x in d["designs"] if x["rank"] == 1)
    assert d["chosen"] == chosen["name"]
    assert all(chosen["buried_mass_kg"] <= x["buried_mass_kg"] for x in d["designs"] if x["passed"])
    rerun = analyse(read_design(out))
    assert rerun.assessment.passed
    assert rerun.resistance_ohm == pytest.approx(chosen["grid_resistance_ohm"], rel=1e-9)
    assert len(rerun.design.rods) == chosen["rod_count"]
    assert "engineer decides" in capsys.readouterr().out


@pytest.mark.parametrize(
    "extra,words",
    [
        (["--spacing", "a:b"], ["--spacing", "not a list or range"]),
        (["--spacing", "5:10:0"], ["--spacing"]),
        (["--spacing", "5", "--rods", "-4"], ["--rods", "whole numbers"]),
        (["--spacing", "0.5:2:0.5"], ["closer than 1 m"]),
        (["--spacing", "1:300:0.5"], ["more than 400"]),
    ],
)
def test_sweep_bad_arguments(tmp_path, capsys, extra, words):
    src = _annex_b(tmp_path / "site.xlsx")
    assert main(["sweep", str(src), *extra]) == 2
    err = capsys.readouterr().err
    for w in words:
        assert w in err


def test_sweep_needs_one_grids_row(tmp_path, capsys):
    src = write_workbook(tmp_path / "two.xlsx", grids=[B1, ["B2", 80, 0, 20, 20, 3, 3, 0.5, 10]], settings=COARSE)
    assert main(["sweep", str(src), "--spacing", "7"]) == 2
    assert "exactly one row on the 'Grids' sheet" in capsys.readouterr().err


def test_jobs_must_be_positive(tmp_path, capsys):
    with pytest.raises(SystemExit) as e:
        main(["compare", "a.xlsx", "--jobs", "0"])
    assert e.value.code == 2
    assert "--jobs" in capsys.readouterr().err
