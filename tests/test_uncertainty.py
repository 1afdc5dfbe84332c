"""Uncertainty study: the Uncertainty sheet, Latin hypercube sampling, bands, solves saved, CLI, report."""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import replace

import numpy as np
import openpyxl
import pytest
import scipy.stats
from pypdf import PdfReader

import groundcalc.analysis as analysis_mod
from groundcalc.cli import main
from groundcalc.errors import InputError
from groundcalc.io.uncertainty import UncertainQuantity, read_uncertainty
from groundcalc.io.workbook import read_design
from groundcalc.model import FaultOverride, GridSpec, Soil, SoilOverride, Variant, WennerReadings
from groundcalc.soil.wenner import two_layer_wenner
from groundcalc.studies.uncertainty import _lhs, percentile_interval, run_uncertainty

from .conftest import make_design, write_workbook

SOIL = {
    "Model": "uniform",
    "Upper resistivity [ohm*m]": 400,
    "Surface layer resistivity [ohm*m]": 2500,
    "Surface layer thickness [m]": 0.102,
}
TINY = ["G", 0, 0, 12, 12, 3, 3, 0.5, 10]  # 12 m square, 3 x 3 conductors, 10 mm
LOOP = ["G", 0, 0, 8, 8, 2, 2, 0.5, 10]  # one 8 m square mesh (two-layer solves are the slow part)
COARSE = {"Segment length [m]": 3, "Raster spacing [m]": 1.5, "Margin [m]": 2}
SPACINGS = np.array([1, 2, 3, 5, 7.5, 10, 15, 20.0])


def _workbook(path, rows=(), soil=None, wenner=None, grid=TINY):
    p = write_workbook(path, soil=soil or SOIL, grids=[grid], settings=COARSE)
    wb = openpyxl.load_workbook(p)
    for r in rows:
        wb["Uncertainty"].append(list(r))
    for a, rho in wenner or []:
        wb["Wenner"].append([a, None, rho])
    wb.save(p)
    return p


def _tiny(soil=None, **kw):
    return make_design(grids=[GridSpec("G", 0, 0, 12, 12, 3, 3, 0.5, 0.01)], segment=3.0, spacing=1.5, margin=2.0,
                       soil=soil, **kw)  # fmt: skip


def _q(key, name, unit, low, high, dist="uniform", lb=0.0, ub=math.inf):
    return UncertainQuantity(key, name, unit, low, high, dist, lb, ub, 2)


def _count_solves(monkeypatch):
    calls = []
    real = analysis_mod.solve

    def counting(*a, **k):
        calls.append(1)
        return real(*a, **k)

    monkeypatch.setattr(analysis_mod, "solve", counting)
    return calls


# --- the sheet -------------------------------------------------------------------------------------


def test_sheet_rows_are_read_in_si_units(tmp_path):
    p = _workbook(
        tmp_path / "u.xlsx",
        [
            ["Fault current [kA]", 2.8, 3.6, "uniform"],
            ["Split factor", 0.5, 0.7, "Normal"],
            ["Clearing time [ms]", 400, 600, None],
            ["Surface layer resistivity [ohm*m]", 1500, 3500, "lognormal"],
        ],
    )
    design = read_design(p)
    qs, notes = read_uncertainty(p, design)
    got = {q.key: (q.low, q.high, q.distribution) for q in qs}
    assert got["fault current"] == (pytest.approx(2800), pytest.approx(3600), "uniform")
    assert got["split factor"] == (0.5, 0.7, "normal")
    assert got["fault duration"] == (pytest.approx(0.4), pytest.approx(0.6), "uniform")  # blank = uniform
    assert got["surface layer resistivity"][2] == "lognormal"
    assert notes == ()  # every range contains the design value


@pytest.mark.parametrize(
    ("row", "where", "words"),
    [
        (["Soil moisture [%]", 1, 2, "uniform"], "column 'Quantity' (A)", "not a quantity"),
        (["Fault current", 2800, 3600, "uniform"], "column 'Quantity' (A)", "no unit"),
        (["Fault current [A]", 3600, 2800, "uniform"], "column 'High' (C)", "greater than Low"),
        (["Split factor", 0.5, 1.2, "uniform"], "column 'High' (C)", "at most 1"),
        (["Fault current [A]", 2800, 3600, "triangular"], "column 'Distribution' (D)", "uniform, normal, lognormal"),
        (["Fault current [A]", None, 3600, "uniform"], "column 'Low' (B)", "blank"),
        (["Lower resistivity [ohm*m]", 100, 300, "uniform"], "column 'Quantity' (A)", "two-layer"),
        (["X/R ratio", 0, 20, "lognormal"], "column 'Low' (B)", "above zero"),
    ],
)
def test_bad_rows_name_sheet_row_and_column(tmp_path, row, where, words):
    p = _workbook(tmp_path / "bad.xlsx", [["Fault current [A]", 2800, 3600, "uniform"], row])
    with pytest.raises(InputError) as exc:
        read_uncertainty(p, read_design(p))
    text = str(exc.value)
    assert "sheet 'Uncertainty'" in text and "row 3" in text and where in text and words in text, text


def test_soil_ranges_refused_when_the_soil_is_fitted(tmp_path):
    wenner = [(a, float(r)) for a, r in zip(SPACINGS, two_layer_wenner(SPACINGS, 100, 300, 4.0), strict=True)]
    p = _workbook(tmp_path / "f.xlsx", [["Upper resistivity [ohm*m]", 80, 120]], soil={"Model": "fitted"},
                  wenner=wenner)  # fmt: skip
    with pytest.raises(InputError, match="fitted to the Wenner readings") as exc:
        read_uncertainty(p, read_design(p))
    assert "row 2" in str(exc.value)


def test_range_not_containing_the_design_value_is_noted(tmp_path):
    p = _workbook(tmp_path / "n.xlsx", [["Fault current [A]", 4000, 5000]])
    _, notes = read_uncertainty(p, read_design(p))
    assert len(notes) == 1 and "does not contain the design value 3180" in notes[0].message


def test_distributions_put_low_and_high_at_the_stated_percentiles():
    # normal and lognormal: Low and High are P5 and P95 (checked against scipy.stats.norm directly)
    u = np.array([0.05, 0.5, 0.95])
    normal = _q("fault current", "Fault current", "A", 9000.0, 11000.0, "normal")
    assert normal.ppf(u) == pytest.approx([9000, 10000, 11000], rel=1e-9)
    sd = 1000.0 / scipy.stats.norm.ppf(0.95)
    assert normal.ppf(np.array([0.8]))[0] == pytest.approx(scipy.stats.norm.ppf(0.8, 10000, sd))
    logn = _q("surface layer resistivity", "Surface layer resistivity", "ohm*m", 1000.0, 4000.0, "lognormal")
    assert logn.ppf(u) == pytest.approx([1000, 2000, 4000], rel=1e-9)  # geometric mean in the middle
    uni = _q("fault current", "Fault current", "A", 9000.0, 11000.0)
    assert uni.ppf(u) == pytest.approx([9100, 10000, 10900])
    # a normal split factor near 1 is truncated at its physical bound
    sf = _q("split factor", "Split factor", "", 0.8, 1.0, "normal", 0.0, 1.0)
    vals = sf.ppf(np.linspace(0.001, 0.999, 200))
    assert vals.max() <= 1.0 and np.all(np.diff(vals) > 0)


def test_latin_hypercube_is_stratified_and_repeats_with_its_seed():
    # McKay, Beckman and Conover (1979): each of the n equal strata of every input holds exactly one sample.
    u = _lhs(5, 16, seed=7)
    for col in u.T:
        assert sorted(np.floor(col * 16).astype(int)) == list(range(16))
    assert np.array_equal(u, _lhs(5, 16, seed=7))
    assert not np.array_equal(u, _lhs(5, 16, seed=8))


def test_percentile_interval_matches_the_binomial_order_statistics():
    # Conover (1999) sec. 3.2 [mem]: for n = 20 and the median, x_(6) .. x_(15) is the 95 % interval
    # (P(6 <= B <= 14) = 0.959 for B ~ Binomial(20, 0.5)).
    x = np.arange(1.0, 21.0)
    est, lo, hi = percentile_interval(x, 50.0)
    assert (est, lo, hi) == (10.5, 6.0, 15.0)
    b = scipy.stats.binom(20, 0.5)
    assert b.cdf(14) - b.cdf(5) >= 0.95


# --- the study -------------------------------------------------------------------------------------


def test_fault_current_samples_cost_no_solve(monkeypatch):
    # The grid is solved per volt of GPR and the model is linear in I_G = Df Sf 3I0 (IEEE Std 80-2000
    # clause 15, from memory; Df of Eq. 79): varying 3I0 and Sf needs the deterministic solve only,
    # and every sample's touch voltage per ampere of grid current equals the deterministic one.
    calls = _count_solves(monkeypatch)
    qs = (
        _q("fault current", "Fault current", "A", 2800.0, 3560.0),
        _q("split factor", "Split factor", "", 0.5, 0.7, "normal", 0.0, 1.0),
    )
    run = run_uncertainty(_tiny(), qs, samples=32, seed=3)
    assert len(calls) == 1 and run.solves == 1
    case = run.cases[0]
    det = case.deterministic
    s = case.samples
    assert s["max_touch_v"] / s["grid_current_a"] == pytest.approx(det.max_touch_v / det.grid_current_a, rel=1e-12)
    assert np.all(s["rg_ohm"] == det.resistance_ohm)
    frame = case.frame()
    assert len(frame) == 32 and {"fault_current", "split_factor", "max_touch_v", "touch_limit_v"} <= set(frame)
    # the inputs are symmetric about the design values, so the P50 lies within its shown sampling error
    for b in case.bands[1:]:
        lo, hi = b.ci[50.0]
        assert lo <= b.deterministic <= hi, b
    # a 3180 A design in 400 ohm*m soil on a 12 m grid fails touch in every sample
    assert case.exceedance[0].probability == 1.0


def test_soil_range_scales_rg_with_resistivity_in_uniform_soil(monkeypatch):
    # In uniform soil every kernel is proportional to rho (Sunde; Dwight 1936), so Rg / rho is one number:
    # each distinct resistivity costs one solve and reproduces it.
    calls = _count_solves(monkeypatch)
    run = run_uncertainty(_tiny(), (_q("upper resistivity", "Upper resistivity", "ohm*m", 300.0, 500.0),), samples=4)
    assert len(calls) == 1 + 4 and run.solves == 5
    case = run.cases[0]
    s = case.samples
    det = case.deterministic
    assert s["rg_ohm"] / s["upper_resistivity"] == pytest.approx(det.resistance_ohm / 400.0, rel=1e-9)
    assert case.band("Rg").p5 < det.resistance_ohm < case.band("Rg").p95


def test_same_seed_same_band_and_variants_each_get_one(monkeypatch):
    calls = _count_solves(monkeypatch)
    design = replace(
        _tiny(),
        variants=(
            Variant("future fault level", fault=FaultOverride(fault_current_a=4000.0)),
            Variant("wet season", soil=SoilOverride(rho1_ohm_m=250.0)),
        ),
    )
    qs = (_q("fault current", "Fault current", "A", 2800.0, 3560.0),)
    run = run_uncertainty(design, qs, samples=8, seed=5)
    # base and the fault-level variant share one soil; the wet season needs its own: two solves in all
    assert len(calls) == 2 and run.solves == 2
    names = [c.name for c in run.cases]
    assert names == ["base case", "future fault level", "wet season"]
    base, future, wet = (c.samples for c in run.cases)
    # a variant's value of a sampled quantity keeps the sample's ratio to the base value
    assert future["fault_current"] == pytest.approx(base["fault_current"] * 4000.0 / 3180.0)
    assert wet["fault_current"] == pytest.approx(base["fault_current"])
    assert wet["rg_ohm"][0] == pytest.approx(base["rg_ohm"][0] * 250.0 / 400.0, rel=1e-9)  # uniform soil, Rg ~ rho
    again = run_uncertainty(design, qs, samples=8, seed=5)
    assert np.array_equal(again.cases[2].samples["max_touch_v"], wet["max_touch_v"])


def test_exact_readings_collapse_the_band_to_the_deterministic_value():
    # Zero noise in the readings: the fit covariance vanishes, and so does the band (to the fit's tolerance).
    exact = two_layer_wenner(SPACINGS, 100.0, 300.0, 4.0)
    design = make_design(grids=[GridSpec("G", 0, 0, 8, 8, 2, 2, 0.5, 0.01)], segment=4.0, spacing=2.0, margin=2.0,
                         soil=Soil("fitted", math.nan))  # fmt: skip
    design = replace(design, wenner=WennerReadings(tuple(SPACINGS), tuple(exact)))
    run = run_uncertainty(design, (), samples=4, seed=1)
    for b in run.cases[0].bands:
        assert b.p5 == pytest.approx(b.deterministic, rel=1e-5), b
        assert b.p95 == pytest.approx(b.deterministic, rel=1e-5), b
    assert run.soil.residual_sd < 1e-6


def test_nothing_uncertain_is_refused():
    with pytest.raises(InputError, match="nothing is uncertain"):
        run_uncertainty(_tiny(), (), samples=8)


# --- command line, JSON and report (one noisy fitted run shared by the checks) ---------------------


@pytest.fixture(scope="module")
def noisy_run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("unc")
    rng = np.random.default_rng(4)
    rho = two_layer_wenner(SPACINGS, 100.0, 300.0, 4.0) * np.exp(0.04 * rng.standard_normal(SPACINGS.size))
    soil = {"Model": "fitted", "Surface layer resistivity [ohm*m]": 2500, "Surface layer thickness [m]": 0.102}
    p = _workbook(tmp / "site.xlsx", [["Fault current [kA]", 2.9, 3.5]], soil=soil,
                  wenner=list(zip(SPACINGS, rho, strict=True)), grid=LOOP)  # fmt: skip
    sha = hashlib.sha256(p.read_bytes()).hexdigest()
    out, pdf = tmp / "band.json", tmp / "band.pdf"
    args = ["--samples", "4", "--seed", "9", "--jobs", "1", "--json", str(out), "--report", str(pdf)]
    code = main(["uncertainty", str(p), *args])
    return p, sha, code, json.loads(out.read_text()), pdf


def test_cli_band_json(noisy_run):
    p, sha, code, data, _ = noisy_run
    assert code == 0 and hashlib.sha256(p.read_bytes()).hexdigest() == sha  # the input is unchanged
    assert data["samples"] == 4 and data["seed"] == 9 and data["input_sha256"] == sha
    assert data["geometry_solves"] == 1 + 4  # one per soil sample, the fault-current range costs none
    soil = data["soil_uncertainty"]
    assert soil["degrees_of_freedom"] == SPACINGS.size - 3
    case = data["cases"][0]
    touch = case["samples"]["max_touch_v"]
    assert len(touch) == 4
    bands = {b["quantity"]: b for b in case["bands"]}
    for q in ("Rg", "GPR", "max touch", "max step"):
        b = bands[q]
        assert b["p5"] <= b["p50"] <= b["p95"]
        lo, hi = b["confidence_intervals"]["p50"]
        # the Monte Carlo P50 agrees with the deterministic run within the shown sampling error
        assert lo <= b["deterministic"] <= hi, b
    # each sample's own tolerable touch voltage: IEEE Std 80-2000 Eqs. 27 and 32 with its sampled rho1
    # (Cs depends on the soil under the crushed rock), 70 kg (k = 0.157), ts = 0.5 s
    rho1 = np.array(case["samples"]["rho1_ohm_m"])
    cs = 1 - 0.09 * (1 - rho1 / 2500) / (2 * 0.102 + 0.09)
    assert case["samples"]["touch_limit_v"] == pytest.approx((1000 + 1.5 * cs * 2500) * 0.157 / np.sqrt(0.5))
    assert case["deterministic"]["touch_limit_v"] > 0
    ex = {e["criterion"]: e for e in case["exceedance"]}
    lim = case["samples"]["touch_limit_v"]
    assert ex["touch"]["samples_exceeding"] == sum(t > m for t, m in zip(touch, lim, strict=True))
    assert ex["touch"]["confidence_interval"][0] <= ex["touch"]["probability"] <= ex["touch"]["confidence_interval"][1]


def test_cli_band_report(noisy_run):
    _, _, _, data, pdf = noisy_run
    text = " ".join(page.extract_text() for page in PdfReader(pdf).pages)
    b = {x["quantity"]: x for x in data["cases"][0]["bands"]}["max touch"]
    for v in (b["deterministic"], b["p5"], b["p50"], b["p95"]):
        assert f"{v:,.0f}" in text
    assert "Uncertainty band" in text and "Fraction of samples at or below" in text and "seed 9" in text
    assert "DRAFT" in text


def test_cli_refuses_too_few_samples(tmp_path, capsys):
    p = _workbook(tmp_path / "s.xlsx", [["Fault current [A]", 2800, 3600]])
    with pytest.raises(SystemExit) as exc:
        main(["uncertainty", str(p), "--samples", "2"])
    assert exc.value.code == 2 and "--samples must be a whole number of 4 or more" in capsys.readouterr().err


def test_soil_ranges_on_a_multilayer_soil_keep_its_deeper_layers():
    # A range on the upper resistivity of a three-layer soil acts on the top layer only. Thomson's
    # principle (the current takes the path of least dissipation): raising one layer's resistivity
    # can only raise Rg, so samples below the design value give a lower Rg and samples above a higher
    # one, and the band brackets the deterministic value. Dropping the deeper layers would move the
    # whole band away from it.
    layers = ((300.0, 1.5), (60.0, 4.0), (1000.0, None))
    soil = Soil("multilayer", 300.0, 1.5, 60.0, layers=layers)
    design = _tiny(soil=soil)
    qs = (_q("upper resistivity", "Upper resistivity", "ohm*m", 200.0, 400.0),)
    run = run_uncertainty(design, qs, samples=4, seed=3)
    case = run.cases[0]
    det = case.deterministic
    assert det.design.soil.layers == layers
    band = case.band("Rg")
    assert band.p5 < det.resistance_ohm < band.p95
    assert band.p95 / band.p5 < 1.5  # the top layer is thin: a 2:1 range in rho1 moves Rg far less
