"""Result tables from the CLI: ``run --csv DIR`` and ``run --results-xlsx FILE``, read back with pandas and openpyxl."""

from __future__ import annotations

import hashlib
import json

import numpy as np
import openpyxl
import pandas as pd
import pytest

from groundcalc.cautions import DRAFT_MARK
from groundcalc.cli import main
from groundcalc.io.frames import CSV_FILES, RESULT_SHEETS
from groundcalc.io.schema import VARIANTS
from groundcalc.io.units import normalise_name
from groundcalc.io.workbook import VARIANT_COLUMNS

from .conftest import write_workbook

# Annex B soil and surface layer (400 ohm*m; 2500 ohm*m, 0.102 m [mem]) on a coarse 20 m grid
SOIL = {
    "Model": "uniform",
    "Upper resistivity [ohm*m]": 400,
    "Surface layer resistivity [ohm*m]": 2500,
    "Surface layer thickness [m]": 0.102,
}
COARSE = {"Segment length [m]": 4, "Raster spacing [m]": 1, "Margin [m]": 3}
GRID = ["G", 0, 0, 20, 20, 3, 3, 0.5, 10]


def _sha(p):
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("tables")
    src = write_workbook(tmp / "site.xlsx", soil=SOIL, grids=[GRID], settings=COARSE)
    before = _sha(src)
    code = main(
        [
            "run", str(src), "--json", str(tmp / "r.json"), "--csv", str(tmp / "tables"),
            "--results-xlsx", str(tmp / "results.xlsx"), "--quiet",
        ]
    )  # fmt: skip
    assert code == 0
    assert _sha(src) == before  # the input is never changed
    return tmp, json.loads((tmp / "r.json").read_text())


def test_csv_tables_read_back(outputs):
    tmp, d = outputs
    folder = tmp / "tables"
    assert sorted(p.name for p in folder.iterdir()) == sorted(CSV_FILES.values())
    seg = pd.read_csv(folder / "segments.csv")
    assert len(seg) == d["segment_count"]
    assert "leakage_density_a_per_m" in seg.columns
    # Kirchhoff: the segments' leakage adds up to the grid current I_G (common practice)
    assert seg.leakage_current_a.sum() == pytest.approx(d["grid_current_a"], rel=1e-9)
    ras = pd.read_csv(folder / "surface.csv")
    nx, ny = d["settings"]["raster_points"]
    assert len(ras) == nx * ny
    assert (ras.touch_v[ras.in_touch_area]).max() <= d["max_touch_v"] + 1e-6
    np.testing.assert_allclose(ras.touch_v + ras.potential_v, d["gpr_v"], rtol=1e-12)
    prof = pd.read_csv(folder / "profiles.csv")
    assert set(prof.profile) == {"touch", "step"}
    touch = prof[prof.profile == "touch"]
    # the touch profile runs along x through the worst touch point, across the whole raster
    assert touch.y_m.round(3).unique().tolist() == [d["touch_location"]["y_m"]]
    assert touch.x_m.min() == pytest.approx(ras.x_m.min()) and touch.x_m.max() == pytest.approx(ras.x_m.max())
    summ = pd.read_csv(folder / "summary.csv").set_index("quantity")
    assert float(summ.loc["resistance_ohm", "value"]) == d["grid_resistance_ohm"]
    assert summ.loc["touch_limit_v", "unit"] == "V"
    assert summ.loc["status", "value"] == DRAFT_MARK


def test_results_workbook_read_back(outputs):
    tmp, d = outputs
    wb = openpyxl.load_workbook(tmp / "results.xlsx", read_only=True)
    assert wb.sheetnames == list(RESULT_SHEETS)
    rows = {r[0]: (r[1], r[2]) for r in wb["Summary"].iter_rows(min_row=2, values_only=True)}
    assert rows["resistance_ohm"] == (d["grid_resistance_ohm"], "ohm")
    assert rows["max_touch_v"][0] == d["max_touch_v"] and rows["verdict"][0] == ("PASS" if d["passed"] else "FAIL")
    head = next(wb["Segments"].iter_rows(max_row=1, values_only=True))
    assert "leakage_density_a_per_m" in head and "length_m" in head
    assert sum(1 for _ in wb["Segments"].iter_rows(min_row=2)) == d["segment_count"]
    nx, ny = d["settings"]["raster_points"]
    assert sum(1 for _ in wb["Surface"].iter_rows(min_row=2)) == nx * ny
    csv = pd.read_csv(tmp / "tables" / "profiles.csv")
    xl = pd.read_excel(tmp / "results.xlsx", sheet_name="Profiles", engine="openpyxl")
    pd.testing.assert_frame_equal(xl, csv, check_exact=False, rtol=1e-12)
    wb.close()


@pytest.mark.parametrize(
    "option,target,words",
    [
        ("--results-xlsx", "input", "is the input file"),
        ("--results-xlsx", "out.csv", "must end in .xlsx"),
        ("--results-xlsx", "missing/out.xlsx", "does not exist"),
        ("--csv", "r.json", "same path as another output"),
        ("--csv", "afile.txt", "is a file, not a folder"),
        ("--csv", "missing/deeper", "does not exist"),
        ("--csv", "existing", "already exists"),
    ],
)
def test_bad_table_outputs_are_refused_before_work(tmp_path, capsys, option, target, words):
    src = write_workbook(tmp_path / "site.xlsx", soil=SOIL, grids=[GRID], settings=COARSE)
    before = _sha(src)
    (tmp_path / "afile.txt").write_text("keep")
    (tmp_path / "existing").mkdir()
    (tmp_path / "existing" / "segments.csv").write_text("keep")
    path = src if target == "input" else tmp_path / target
    args = ["run", str(src), option, str(path), "--json", str(tmp_path / "r.json")]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert words in err, err
    assert _sha(src) == before
    assert not (tmp_path / "r.json").exists()  # refused before any work
    assert (tmp_path / "afile.txt").read_text() == "keep"
    assert (tmp_path / "existing" / "segments.csv").read_text() == "keep"


def test_every_variants_column_maps_onto_a_typed_override():
    names = {normalise_name(f.name) for f in VARIANTS.fields[1:]}
    assert names == set(VARIANT_COLUMNS)
    groups = {"soil", "surface_layer", "fault"}
    assert {g for g, _ in VARIANT_COLUMNS.values()} == groups
