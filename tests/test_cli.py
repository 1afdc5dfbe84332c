"""Command line: the example end to end, JSON contents, output safety, exit codes."""

import hashlib
import json
import subprocess
import sys

import pytest

from groundcalc.cli import main

from .conftest import ROOT

EXAMPLE = ROOT / "examples" / "kestrel-brook.xlsx"

REQUIRED_KEYS = [
    "grid_resistance_ohm",
    "gpr_v",
    "grid_current_a",
    "decrement_factor",
    "max_touch_v",
    "max_step_v",
    "touch_limit_v",
    "step_limit_v",
    "touch_ok",
    "step_ok",
    "segment_count",
    "touch_location",
    "step_location",
]


@pytest.fixture(scope="module")
def example_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("run")
    before = hashlib.sha256(EXAMPLE.read_bytes()).hexdigest()
    code = main(["run", str(EXAMPLE), "--report", str(out / "r.pdf"), "--json", str(out / "r.json"), "--quiet"])
    assert hashlib.sha256(EXAMPLE.read_bytes()).hexdigest() == before
    return code, out, json.loads((out / "r.json").read_text())


def test_example_runs_and_writes_outputs(example_run):
    code, out, data = example_run
    assert code == 0
    assert (out / "r.pdf").read_bytes()[:5] == b"%PDF-"
    for k in REQUIRED_KEYS:
        assert k in data


def test_json_is_self_consistent(example_run):
    # Physics bookkeeping (IEEE Std 80 definitions): GPR = I_G Rg, I_G = Df Sf 3I0,
    # pass flags agree with the numbers.
    _, _, d = example_run
    f = d["fault"]
    assert d["grid_current_a"] == pytest.approx(d["decrement_factor"] * f["split_factor"] * f["fault_current_3i0_a"])
    assert d["gpr_v"] == pytest.approx(d["grid_current_a"] * d["grid_resistance_ohm"])
    assert d["touch_ok"] == (d["max_touch_v"] <= d["touch_limit_v"])
    assert d["step_ok"] == (d["max_step_v"] <= d["step_limit_v"])
    assert 0 < d["max_touch_v"] < d["gpr_v"]
    assert set(d["step_location"]) == {"start", "end"}
    assert len(d["input_sha256"]) == 64
    assert any("licensed" in c for c in d["cautions"])


def test_existing_output_needs_overwrite(tmp_path, capsys):
    out = tmp_path / "r.json"
    out.write_text("keep me")
    assert main(["run", str(EXAMPLE), "--json", str(out)]) == 2
    assert "--overwrite" in capsys.readouterr().err
    assert out.read_text() == "keep me"


def test_output_equal_to_input_is_refused(tmp_path, capsys):
    copy = tmp_path / "d.xlsx"
    copy.write_bytes(EXAMPLE.read_bytes())
    assert main(["run", str(copy), "--report", str(copy), "--overwrite"]) == 2
    assert "is the input file" in capsys.readouterr().err
    assert copy.read_bytes() == EXAMPLE.read_bytes()


def test_template_refuses_to_overwrite(tmp_path, capsys):
    p = tmp_path / "t.xlsx"
    p.write_bytes(b"precious")
    assert main(["template", str(p)]) == 2
    assert p.read_bytes() == b"precious"


def test_console_script_prints_cautions_and_no_traceback(tmp_path):
    # The installed entry point, as a user runs it (python -m groundcalc).
    bad = tmp_path / "bad.xlsx"
    bad.write_text("not a workbook")
    r = subprocess.run([sys.executable, "-m", "groundcalc", "run", str(bad)], capture_output=True, text=True)
    assert r.returncode == 2
    assert "Traceback" not in r.stderr and "not an .xlsx workbook" in r.stderr
    r = subprocess.run([sys.executable, "-m", "groundcalc", "--help"], capture_output=True, text=True)
    assert r.returncode == 0 and "template" in r.stdout and "run" in r.stdout


def test_outputs_get_ordinary_permissions(example_run):
    import os
    import stat

    _, out, _ = example_run
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE(os.stat(out / "r.json").st_mode) == 0o666 & ~umask


def _fitted_workbook(path):
    """A small design with Model = fitted and Wenner readings of a known two-layer soil (series
    of IEEE Std 81 with rho1 = 100, rho2 = 300, H = 6.1 m)."""
    import numpy as np
    import openpyxl

    from groundcalc.soil.wenner import two_layer_wenner

    from .conftest import write_workbook

    p = write_workbook(path, soil={"Model": "fitted"}, grids=[["G", 0, 0, 20, 20, 3, 3, 0.5, 10]])
    wb = openpyxl.load_workbook(p)
    a = np.array([1, 2, 3, 5, 7.5, 10, 15, 20, 30, 50.0])
    for x, r in zip(a, two_layer_wenner(a, 100, 300, 6.1), strict=True):
        wb["Wenner"].append([float(x), None, float(r)])
    wb.save(p)
    return p


def test_soil_command_prints_fit_and_writes_design_copy(tmp_path, capsys):
    src = _fitted_workbook(tmp_path / "site.xlsx")
    before = src.read_bytes()
    out = tmp_path / "site-fitted.xlsx"
    assert main(["soil", str(src), "--write-design", str(out), "--json", str(tmp_path / "fit.json")]) == 0
    text = capsys.readouterr().out
    assert "Two-layer model" in text and "RMS misfit" in text and "CAUTION" in text
    assert src.read_bytes() == before  # the input is never changed
    from groundcalc.io.workbook import read_design

    d = read_design(out)
    assert d.soil.model == "two-layer"
    assert d.soil.rho1_ohm_m == pytest.approx(100, rel=0.01) and d.soil.thickness_m == pytest.approx(6.1, rel=0.01)
    fit = json.loads((tmp_path / "fit.json").read_text())["soil_fit"]
    assert fit["two_layer"]["lower_resistivity_ohm_m"] == pytest.approx(300, rel=0.01)
    assert len(fit["readings"]) == 10


def test_soil_command_refuses_to_overwrite_its_input(tmp_path, capsys):
    src = _fitted_workbook(tmp_path / "site.xlsx")
    assert main(["soil", str(src), "--write-design", str(src), "--overwrite"]) == 2
    assert "is the input file" in capsys.readouterr().err


def test_run_with_fitted_soil_reports_the_fit(tmp_path):
    src = _fitted_workbook(tmp_path / "site.xlsx")
    assert (
        main(["run", str(src), "--json", str(tmp_path / "r.json"), "--report", str(tmp_path / "r.pdf"), "--quiet"]) == 0
    )
    d = json.loads((tmp_path / "r.json").read_text())
    assert d["soil"]["model"] == "two-layer" and "soil_fit" in d
    assert d["soil"]["image_terms"] >= d["soil"]["explicit_images"] > 2
    from pypdf import PdfReader

    text = "".join(p.extract_text() for p in PdfReader(tmp_path / "r.pdf").pages)
    assert "Soil model fitted to Wenner readings" in text and "Image terms" in text


def test_closed_forms_beside_numerical_in_json_cli_and_pdf(example_run, capsys):
    # IEEE Std 80-2000 Eqs. (51)-(56), (80), (92): the JSON carries the closed forms, and its differences
    # are (numerical - closed) / closed. The PDF states which one is the design value.
    _, out, d = example_run
    cf = d["closed_form"]
    for k in ("sverak_resistance_ohm", "schwarz_resistance_ohm", "mesh_voltage_v", "step_voltage_v"):
        assert cf[k] > 0
    by_material = d["conductor_sizing"]["by_material"]
    assert cf["required_conductor_area_mm2"] == pytest.approx(by_material["hard-drawn copper"]["required_area_mm2"])
    diff = cf["difference_pct"]
    assert diff["resistance_vs_sverak"] == pytest.approx(
        100 * (d["grid_resistance_ohm"] - cf["sverak_resistance_ohm"]) / cf["sverak_resistance_ohm"]
    )
    assert diff["touch_vs_mesh_voltage"] == pytest.approx(
        100 * (d["max_touch_v"] - cf["mesh_voltage_v"]) / cf["mesh_voltage_v"]
    )
    assert "design value" in cf["note"]
    from pypdf import PdfReader

    text = " ".join(p.extract_text() for p in PdfReader(out / "r.pdf").pages)
    assert "closed forms beside the numerical result" in text
    assert f"{cf['sverak_resistance_ohm']:.4g} ohm" in text
    assert f"{cf['mesh_voltage_v']:,.1f} V" in text
    assert "Conductor sizing" in text and "Eq. 37" in text


def test_user_limits_and_undersized_conductor(tmp_path, capsys):
    # A user-entered limit (for a jurisdiction using another standard) replaces the IEEE Std 80 value and
    # is labelled as user-defined everywhere; a 2 mm conductor (3.1 mm2) cannot carry 3.18 kA for 0.5 s
    # (IEEE Std 80 Eq. 37 needs about 8 mm2 of hard-drawn copper), so the design fails naming it.
    from .conftest import write_workbook

    fault = {
        "Fault current [A]": 3180,
        "Split factor": 0.6,
        "X/R ratio": 0,
        "Fault duration [s]": 0.5,
        "Body weight [kg]": 70,
        "Frequency [Hz]": 60,
        "Touch voltage limit [V]": 2000,
    }
    p = write_workbook(
        tmp_path / "d.xlsx",
        fault=fault,
        grids=[["G", 0, 0, 20, 20, 3, 3, 0.5, 10]],
        conductors=[["TAIL-7", 20, 10, 0.5, 26, 10, 0.5, 2, "annealed copper"]],
    )
    code = main(["run", str(p), "--json", str(tmp_path / "r.json"), "--report", str(tmp_path / "r.pdf"), "--quiet"])
    assert code == 0
    text = capsys.readouterr().out
    d = json.loads((tmp_path / "r.json").read_text())
    assert d["touch_limit_v"] == 2000
    assert d["touch_limit_basis"].startswith("user-defined")
    assert d["step_limit_basis"] == "IEEE Std 80"
    assert d["ieee80_touch_limit_v"] < 2000
    assert d["step_limit_v"] == pytest.approx(d["ieee80_step_limit_v"])
    assert "user-defined touch limit" in text
    assert d["conductors_ok"] is False and d["passed"] is False
    bad = d["conductor_sizing"]["undersized"]
    assert [b["label"] for b in bad] == ["TAIL-7"]
    # Eq. (42) with Table 2's Kf = 7.00 for annealed copper [mem]: A = 3.18 kA x 7.00 x sqrt(0.5 s) kcmil
    assert bad[0]["required_mm2"] == pytest.approx(3.18 * 7.00 * 0.5**0.5 / 1.9735, rel=2e-3)
    assert bad[0]["area_mm2"] == pytest.approx(3.14159, rel=1e-4)
    assert any(w["code"] == "undersized-conductor" and "TAIL-7" in w["message"] for w in d["warnings"])
    assert "FAIL" in text and "undersized" in text
    from pypdf import PdfReader

    pdf = " ".join(" ".join(pg.extract_text().split()) for pg in PdfReader(tmp_path / "r.pdf").pages)
    assert "User-defined limits replace IEEE Std 80" in pdf
    assert "Undersized (annealed copper): TAIL-7" in pdf
