"""The public Python API: entry points, flat results, DataFrames, and the same numbers as the CLI."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

import groundcalc as gc
from groundcalc.cli import main
from groundcalc.studies.variants import VariantError

from .conftest import ANNEX_B_SURFACE, ROOT, annex_b_fault

EXAMPLE = ROOT / "examples" / "kestrel-brook.xlsx"


def _rod_design(rho=100.0, current=1000.0) -> gc.Design:
    """One 3 m rod of 8 mm radius from the surface (segment length 4 m: graded toward both ends)."""
    return gc.Design(
        gc.Project("rod"),
        gc.Soil("uniform", rho),
        None,
        gc.Fault(current, 1.0, 0.0, 0.5, 0.5, 70.0, 60.0),
        (),
        (gc.Rod("R1", 0.0, 0.0, 0.0, 3.0, 0.016),),
        settings=gc.Settings(4.0, 0.5, 3.0),
    )


def _small_grid(n=3, size=20.0, variants=()) -> gc.Design:
    """A 20 m square grid, Annex B soil, surface layer and fault; coarse 4 m segments, 1 m raster."""
    return gc.Design(
        gc.Project("small grid"),
        gc.Soil("uniform", 400.0),
        ANNEX_B_SURFACE,
        annex_b_fault(),
        (),
        (),
        (gc.GridSpec("G", 0.0, 0.0, size, size, n, n, 0.5, 0.01),),
        gc.Settings(4.0, 1.0, 3.0),
        variants=tuple(variants),
    )


@pytest.fixture(scope="module")
def rod():
    return gc.analyse(_rod_design())


@pytest.fixture(scope="module")
def grid():
    return gc.analyse(_small_grid())


def test_package_front_door_exports_the_entry_points_and_model():
    for name in ("read_design", "analyse", "compare", "sweep", "write_report", "write_json", "Results"):
        assert callable(getattr(gc, name)), name
    for name in ("Design", "Soil", "Fault", "SurfaceLayer", "Conductor", "Rod", "GridSpec", "Settings", "Project"):
        assert isinstance(getattr(gc, name), type), name
    for name in ("Variant", "SoilOverride", "FaultOverride", "SurfaceLayerOverride"):
        assert isinstance(getattr(gc, name), type), name
    assert set(gc.__all__) <= set(dir(gc))


def test_one_rod_matches_dwight_and_the_line_source(rod):
    # Dwight, AIEE Trans. 55 (1936): R = rho/(2 pi L) [ln(4L/a) - 1] = 33.49 ohm for rho = 100, L = 3 m,
    # a = 8 mm [calc] (docs/references.md). Dwight assumes a uniform current; the graded solution lets the
    # current crowd toward the ends and lies below it (Galerkin variational upper bound, R. F. Harrington,
    # Field Computation by Moment Methods, 1968 [mem]): a solid-cylinder boundary solution gives
    # 33.194 ohm, 0.89 % below Dwight (tests/data/rod_reference.py).
    dwight = 100.0 / (2 * math.pi * 3.0) * (math.log(4 * 3.0 / 0.008) - 1.0)
    assert dwight * (1 - 0.012) < rod.resistance_ohm < dwight
    assert rod.grid_current_a == pytest.approx(1000.0)  # Df = 1 at X/R = 0 (IEEE Std 80 Eq. 79), Sf = 1
    assert rod.gpr_v == pytest.approx(rod.grid_current_a * rod.resistance_ohm, rel=1e-12)
    # A uniform line current I on 0 <= z <= L under an insulating surface (with its image, a line of
    # 2L carrying 2I): V(r, 0) = rho I / (2 pi L) asinh(L / r) (Sunde 1968, line source) [mem]. The real
    # current is not uniform along the rod; the difference falls off as (L/r)^2 away from it.
    r = np.array([10.0, 40.0])
    exact = 100.0 * 1000.0 / (2 * math.pi * 3.0) * np.arcsinh(3.0 / r)
    got = rod.surface_potential_v(np.column_stack([r, np.zeros(2)]))
    assert got[0] == pytest.approx(exact[0], rel=2e-3) and got[1] == pytest.approx(exact[1], rel=2e-4)
    # Far field: a point source at the surface of a half-space, V = rho I / (2 pi s) (textbook result,
    # docs/references.md); the rod's length changes it by (L/s)^2 / 6 = 4e-5 at 200 m.
    far = rod.surface_potential_v([0.0, 200.0])[0]
    assert far == pytest.approx(100.0 * 1000.0 / (2 * math.pi * 200.0), rel=1e-4)


def test_flat_fields_against_annex_b_values(grid):
    # IEEE Std 80-2000 Annex B: I_G = Df Sf 3I0 = 1.0 * 0.6 * 3180 = 1908 A [doc].
    assert grid.grid_current_a == pytest.approx(1908.0, rel=1e-12)
    assert grid.decrement_factor == pytest.approx(1.0)
    # Annex B Ex. 1: tolerable touch 70 kg = 838.2 V with Cs rounded to 0.74 [doc]; 840.5 V with the
    # unrounded Cs of Eq. 27 [calc]. Step 2686.6 V with the rounded Cs [mem]; 2696.1 V unrounded [calc].
    assert grid.touch_limit_v == pytest.approx(840.5, abs=0.1)
    assert grid.step_limit_v == pytest.approx(2696.1, abs=0.1)
    assert grid.surface_layer_factor_cs == pytest.approx(0.7429, abs=1e-4)  # Eq. 27 unrounded [calc]
    assert grid.ieee80_touch_limit_v == grid.touch_limit_v  # no user-defined limit
    # Sverak (IEEE Std 80 Eq. 52): Rg = rho [1/LT + 1/sqrt(20 A) (1 + 1/(1 + h sqrt(20/A)))] [mem];
    # it reproduces the Annex B Ex. 4 value 2.74 ohm [doc] (tests/test_ieee80.py)
    lt, area, h = 6 * 20.0, 400.0, 0.5
    sverak = 400.0 * (1 / lt + 1 / math.sqrt(20 * area) * (1 + 1 / (1 + h * math.sqrt(20 / area))))
    assert grid.sverak_resistance_ohm == pytest.approx(sverak, rel=1e-9)
    assert grid.touch_margin_pct == pytest.approx(100 * (1 - grid.max_touch_v / grid.touch_limit_v))
    assert grid.verdict == ("PASS" if grid.passed else "FAIL")
    assert grid.passed == (grid.touch_ok and grid.step_ok and grid.conductors_ok)
    assert len(grid.max_touch_xy_m) == 2 and len(grid.max_step_start_xy_m) == 2
    step = math.dist(grid.max_step_start_xy_m, grid.max_step_end_xy_m)
    assert step == pytest.approx(1.0, abs=1e-9)  # IEEE Std 80 step: feet 1 m apart


def test_segments_frame_columns_units_and_kirchhoff(grid):
    seg = grid.segments_frame()
    assert list(seg.columns) == [
        "segment", "conductor", "kind", "material", "x1_m", "y1_m", "depth1_m", "x2_m", "y2_m", "depth2_m",
        "length_m", "radius_m", "soil_layer", "leakage_current_a", "leakage_density_a_per_m",
    ]  # fmt: skip
    assert len(seg) == grid.segment_count
    lengths = np.hypot(seg.x2_m - seg.x1_m, np.hypot(seg.y2_m - seg.y1_m, seg.depth2_m - seg.depth1_m))
    np.testing.assert_allclose(seg.length_m, lengths, rtol=1e-12)
    np.testing.assert_allclose(seg.leakage_density_a_per_m * seg.length_m, seg.leakage_current_a, rtol=1e-12)
    # Kirchhoff: all of the grid current leaks into the soil (common practice)
    assert seg.leakage_current_a.sum() == pytest.approx(grid.grid_current_a, rel=1e-9)
    assert (seg.depth1_m == 0.5).all() and set(seg.kind) == {"conductor"}
    # perimeter (corner) segments leak more than the centre ones (common practice; IEEE Std 80 clause 16)
    corner = seg[(seg.x1_m == 0) & (seg.y1_m == 0)].leakage_density_a_per_m.max()
    middle = seg[(seg.x1_m == 10) & (seg.y1_m.between(8, 12))].leakage_density_a_per_m.max()
    assert corner > middle


def test_raster_frame_matches_surface_potential_at_its_points(grid):
    ras = grid.raster_frame()
    assert list(ras.columns) == ["x_m", "y_m", "potential_v", "touch_v", "in_touch_area"]
    assert ras.in_touch_area.dtype == bool
    np.testing.assert_allclose(ras.touch_v, grid.gpr_v - ras.potential_v, rtol=0, atol=1e-9 * grid.gpr_v)
    pts = ras[["x_m", "y_m"]].to_numpy()
    direct = grid.surface_potential_v(pts)
    np.testing.assert_allclose(grid.touch_voltage_v(pts), grid.gpr_v - direct, rtol=1e-12)
    # the raster is evaluated by FFT convolution of repeated segments, the points directly: same to round-off
    np.testing.assert_allclose(direct, ras.potential_v, rtol=0, atol=1e-9 * grid.gpr_v)
    inside = ras[ras.in_touch_area]
    assert inside.touch_v.max() <= grid.max_touch_v + 1e-9  # the refined maximum is at least the raster's
    assert inside.x_m.between(0, 20).all() and inside.y_m.between(0, 20).all()  # footprint = the grid square


def test_profile_frame_along_a_line(grid):
    prof = grid.profile_frame((-3.0, 10.0), (23.0, 10.0), 27)
    assert list(prof.columns) == ["distance_m", "x_m", "y_m", "potential_v", "touch_v", "step_v", "in_touch_area"]
    assert len(prof) == 27
    np.testing.assert_allclose(prof.distance_m, np.arange(27.0), atol=1e-12)
    np.testing.assert_allclose(prof.potential_v, grid.surface_potential_v(prof[["x_m", "y_m"]]), rtol=1e-12)
    ahead = grid.surface_potential_v(prof[["x_m", "y_m"]].to_numpy() + [1.0, 0.0])
    np.testing.assert_allclose(prof.step_v, np.abs(prof.potential_v - ahead), rtol=1e-12)
    # symmetry of the square grid about x = 10 m (common practice)
    np.testing.assert_allclose(prof.potential_v, prof.potential_v[::-1].to_numpy(), rtol=1e-6)
    off_edge = ~prof.x_m.isin([0.0, 20.0])  # points on the footprint's edge may fall either way
    assert prof.in_touch_area[off_edge].tolist() == [0 < x < 20 for x in prof.x_m[off_edge]]


def test_summary_frame_has_units(grid):
    s = grid.summary_frame().set_index("quantity")
    assert s.loc["resistance_ohm", "unit"] == "ohm"
    assert s.loc["max_touch_x_m", "value"] == grid.max_touch_xy_m[0]
    assert s.loc["required_conductor_area_mm2", "unit"] == "mm2"
    assert s.loc["touch_margin_pct", "unit"] == "%"


def test_api_equals_the_cli_json_for_the_bundled_example(tmp_path):
    out = tmp_path / "k.json"
    assert main(["run", str(EXAMPLE), "--json", str(out), "--quiet"]) == 0
    cli = json.loads(out.read_text())
    res = gc.analyse(gc.read_design(EXAMPLE))
    pairs = {
        "grid_resistance_ohm": res.resistance_ohm,
        "decrement_factor": res.decrement_factor,
        "grid_current_a": res.grid_current_a,
        "gpr_v": res.gpr_v,
        "max_touch_v": res.max_touch_v,
        "max_step_v": res.max_step_v,
        "touch_limit_v": res.touch_limit_v,
        "step_limit_v": res.step_limit_v,
        "surface_layer_factor_cs": res.surface_layer_factor_cs,
        "touch_margin_pct": res.touch_margin_pct,
        "segment_count": res.segment_count,
        "passed": res.passed,
        "governing": res.governing,
    }
    for key, value in pairs.items():
        assert cli[key] == value, key
    assert cli["touch_location"] == {"x_m": round(res.max_touch_xy_m[0], 3), "y_m": round(res.max_touch_xy_m[1], 3)}
    assert cli["closed_form"]["sverak_resistance_ohm"] == res.sverak_resistance_ohm
    assert cli["conductor_sizing"]["smallest_area_mm2"] == res.smallest_conductor_area_mm2
    mine = res.to_dict()
    for key in ("grid_resistance_ohm", "gpr_v", "max_touch_v", "settings", "closed_form", "warnings"):
        assert mine[key] == cli[key], key
    # and the pinned values (tests/data/kestrel-brook-pinned.json)
    pinned = json.loads((ROOT / "tests" / "data" / "kestrel-brook-pinned.json").read_text())
    assert res.touch_limit_v == pinned["touch_limit_v"] and res.max_touch_v == pinned["max_touch_v"]


def test_write_json_and_report(tmp_path, grid):
    p = gc.write_json(grid, tmp_path / "g.json")
    d = json.loads(p.read_text())
    assert d["grid_resistance_ohm"] == grid.resistance_ohm and d["touch_limit_v"] == grid.touch_limit_v
    with pytest.raises(gc.InputError, match="already exists"):
        gc.write_json(grid, p)
    gc.write_json(grid, p, overwrite=True)
    pdf = gc.write_report(grid, tmp_path / "g.pdf")
    assert pdf.read_bytes()[:5] == b"%PDF-"
    with pytest.raises(gc.InputError, match=r"must end in \.pdf"):
        gc.write_report(grid, tmp_path / "g.txt")
    with pytest.raises(gc.InputError, match="does not exist"):
        gc.write_json(grid, tmp_path / "no" / "g.json")
    with pytest.raises(gc.InputError, match="results of groundcalc.analyse"):
        gc.write_json({"a": 1}, tmp_path / "x.json")
    written = gc.write_csv(grid, tmp_path / "tables")
    assert sorted(w.name for w in written) == ["profiles.csv", "segments.csv", "summary.csv", "surface.csv"]
    pd.testing.assert_frame_equal(pd.read_csv(tmp_path / "tables" / "segments.csv"), grid.segments_frame())
    with pytest.raises(gc.InputError, match="already exists"):
        gc.write_csv(grid, tmp_path / "tables")
    book = gc.write_results_xlsx(grid, tmp_path / "g.xlsx")
    surface = pd.read_excel(book, sheet_name="Surface", engine="openpyxl")
    pd.testing.assert_frame_equal(surface, grid.raster_frame(), check_dtype=False)  # whole numbers read back as int
    with pytest.raises(gc.InputError, match=r"must end in \.xlsx"):
        gc.write_results_xlsx(grid, tmp_path / "g.xls")


def test_compare_and_variants_return_frames():
    frame = gc.compare([_small_grid(3), _small_grid(5), "missing.xlsx"], names=["3x3", "5x5", "gone"])
    assert isinstance(frame, pd.DataFrame) and list(frame.name) == ["3x3", "5x5", "gone"]
    for col in ("grid_resistance_ohm", "max_touch_v", "touch_limit_v", "buried_mass_kg", "rank", "error"):
        assert col in frame.columns, col
    gone = frame.set_index("name").loc["gone"]
    assert "does not exist" in gone.error and pd.isna(gone["rank"]) and pd.isna(gone.grid_resistance_ohm)
    assert frame.error[:2].isna().all()
    r3, r5 = frame.grid_resistance_ohm[:2]
    assert r5 < r3  # more buried conductor, lower resistance (common practice)
    # Typed variants: the model is linear in the current, so doubling 3I0 doubles the GPR (Ohm's law);
    # a thicker surface layer raises Cs and the touch limit (IEEE Std 80 Eq. 27, Eq. 32).
    base = _small_grid(
        3,
        variants=[
            gc.Variant("double", fault=gc.FaultOverride(fault_current_a=6360.0)),
            gc.Variant("rock", surface_layer=gc.SurfaceLayerOverride(thickness_m=0.2)),
        ],
    )
    v = gc.compare(base).set_index("name")
    assert list(v.index) == ["base case", "double", "rock"]
    assert v.loc["double", "gpr_v"] == pytest.approx(2 * v.loc["base case", "gpr_v"], rel=1e-12)
    assert v.loc["double", "grid_resistance_ohm"] == v.loc["base case", "grid_resistance_ohm"]
    assert v.loc["rock", "touch_limit_v"] > v.loc["base case", "touch_limit_v"]
    assert v.loc["double", "changes"] == "fault current 6360 A"


def test_sweep_returns_a_ranked_frame():
    frame = gc.sweep(_small_grid(3), spacings_m=[10.0, 5.0], rod_counts=[0], rod_length_m=3.0)
    assert isinstance(frame, pd.DataFrame) and len(frame) == 2
    assert list(frame.conductors_along_x) == [3, 5] and list(frame.spacing_x_m) == [10.0, 5.0]
    assert {"spacing_x_m", "conductors_along_x", "rods_added", "rank"} <= set(frame.columns)
    plain = frame[frame.rods_added == 0].sort_values("conductors_along_x")
    assert plain.grid_resistance_ohm.is_monotonic_decreasing  # closer spacing, lower resistance (common practice)
    assert frame["rank"].dtype == "Int64"


def test_variant_errors_below_the_reader_name_no_sheet():
    design = gc.Design(
        gc.Project(),
        gc.Soil("uniform", 100.0),
        None,
        annex_b_fault(),
        (),
        (gc.Rod("R", 0, 0, 0.5, 3.0, 0.016),),
        variants=(gc.Variant("half", soil=gc.SoilOverride(thickness_m=3.0)),),
    )
    with pytest.raises(VariantError) as err:
        gc.compare(design)
    text = str(err.value)
    assert "only one of the upper thickness" in text and "sheet" not in text and "--" not in text
    assert err.value.field == ("soil", "thickness_m")


@pytest.mark.parametrize(
    "variant,field,words",
    [
        (gc.Variant("v", soil=gc.SoilOverride(rho1_ohm_m=-5.0)), ("soil", "rho1_ohm_m"), "positive"),
        (gc.Variant("v", fault=gc.FaultOverride(split_factor=1.5)), ("fault", "split_factor"), "more than 1"),
        (gc.Variant("v", fault=gc.FaultOverride(body_weight_kg=60.0)), ("fault", "body_weight_kg"), "50 nor 70"),
        (
            gc.Variant("v", surface_layer=gc.SurfaceLayerOverride(rho_ohm_m=math.nan)),
            ("surface_layer", "rho_ohm_m"),
            "positive",
        ),
    ],
)
def test_bad_override_values(variant, field, words):
    with pytest.raises(VariantError, match=words) as err:
        gc.apply_variant(_small_grid(3), variant)
    assert err.value.field == field and "sheet" not in str(err.value)


@pytest.mark.parametrize(
    "call,words",
    [
        (lambda r: r.surface_potential_v([1.0, 2.0, 3.0]), "not (m, 2)"),
        (lambda r: r.surface_potential_v([[np.nan, 0.0]]), "not finite"),
        (lambda r: r.surface_potential_v("ab"), "not numbers"),
        (lambda r: r.profile_frame((0, 0), (0, 0)), "same point"),
        (lambda r: r.profile_frame((0, 0), (5, 0), 1), "at least 2 points"),
        (lambda r: r.profile_frame((0, 0, 0), (5, 0)), "two finite plan points"),
    ],
    ids=["shape", "nan", "text", "same-point", "one-point", "3d"],
)
def test_bad_api_input_is_an_input_error(rod, call, words):
    with pytest.raises(gc.InputError, match=words.replace("(", r"\(").replace(")", r"\)")):
        call(rod)


@pytest.mark.parametrize(
    "kwargs,words",
    [
        ({"spacings_m": []}, "positive"),
        ({"spacings_m": [-1.0]}, "positive"),
        ({"spacings_m": [5.0], "rod_counts": [-2]}, "whole numbers"),
        ({"spacings_m": [5.0], "rod_counts": [1.5]}, "whole numbers"),
        ({"spacings_m": [5.0], "jobs": 0}, "jobs"),
        ({"spacings_m": [0.5]}, "closer than 1 m"),
    ],
)
def test_bad_sweep_arguments(kwargs, words):
    with pytest.raises(gc.InputError, match=words) as err:
        gc.sweep(_small_grid(3), **kwargs)
    assert "--" not in str(err.value) and "sheet" not in str(err.value)


def test_compare_bad_input():
    with pytest.raises(gc.InputError, match="no designs"):
        gc.compare([])
    with pytest.raises(gc.InputError, match="names for"):
        gc.compare([_small_grid(3)], names=["a", "b"])
    with pytest.raises(gc.InputError, match="expected a Design"):
        gc.compare([42])
    with pytest.raises(gc.InputError, match="does not exist"):
        gc.analyse("no-such-design.xlsx")


def test_analyse_and_the_cli_share_one_pipeline_function(monkeypatch):
    # gc.analyse and `groundcalc run` both call groundcalc.analysis.analyse, so checks added there apply to both
    import groundcalc.analysis as pipeline

    calls = []
    real = pipeline.analyse

    def spy(design, **options):
        calls.append(design)
        return real(design, **options)

    monkeypatch.setattr(pipeline, "analyse", spy)
    design = _rod_design()
    res = gc.analyse(design)
    assert calls == [design] and res.pipeline.design.rods == design.rods

    def refuse(design, **options):
        calls.append(design)
        raise gc.InputError("refused by the pipeline")

    monkeypatch.setattr(pipeline, "analyse", refuse)
    calls.clear()
    assert main(["run", str(EXAMPLE), "--quiet"]) == 2
    assert len(calls) == 1 and calls[0].source_name == EXAMPLE.name
