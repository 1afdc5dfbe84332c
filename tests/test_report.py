"""The PDF report: its numbers match the JSON, every page is marked, the maps are there and readable."""

from __future__ import annotations

import json

import numpy as np
import pytest
from pypdf import PdfReader

from groundcalc.cautions import DRAFT_MARK
from groundcalc.cli import main
from groundcalc.report.maps import COLOUR_STOPS_LAB, PlanFigure, colour_lut, map_image, pixel_scale

from .conftest import ROOT

EXAMPLE = ROOT / "examples" / "kestrel-brook.xlsx"


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    out = tmp_path_factory.mktemp("report")
    code = main(["run", str(EXAMPLE), "--report", str(out / "r.pdf"), "--json", str(out / "r.json"), "--quiet"])
    assert code == 0
    reader = PdfReader(out / "r.pdf")
    pages = [" ".join(p.extract_text().split()) for p in reader.pages]
    return reader, pages, json.loads((out / "r.json").read_text())


def test_report_numbers_match_the_json(report):
    _, pages, d = report
    text = " ".join(pages)
    assert f"{d['grid_resistance_ohm']:.4g} ohm" in text
    assert f"{d['gpr_v']:,.0f} V" in text
    assert f"{d['grid_current_a']:,.0f} A" in text
    # summary table: computed touch and step, and their tolerable values
    assert f"Touch voltage [V] {d['max_touch_v']:.4g} {d['touch_limit_v']:.4g}" in text
    assert f"Step voltage [V] {d['max_step_v']:.4g} {d['step_limit_v']:.4g}" in text
    assert f"max touch {d['max_touch_v']:,.0f} V" in text  # label on the plan
    assert "PASS" in pages[0] or "FAIL" in pages[0]


def test_every_page_is_marked_and_numbered(report):
    _, pages, _ = report
    assert len(pages) >= 5
    for k, p in enumerate(pages, start=1):
        assert DRAFT_MARK in p
        assert f"Page {k} of {len(pages)}" in p


def test_report_has_every_section(report):
    _, pages, d = report
    text = " ".join(pages)
    for heading in (
        "Summary",
        "Inputs",
        "Layout",
        "Earth-surface potential",
        "Touch voltage",
        "Profiles through the worst points",
        "Leakage current along the conductors",
        "IEEE Std 80 closed forms beside the numerical result",
        "Conductor sizing",
        "Assumptions and limitations",
        "Cautions",
        "References",
    ):
        assert heading in text, heading
    assert "IEEE Std 80-2013" in text and "IEEE Std 81-2012" in text
    assert d["input_sha256"] in text.replace(" ", "")


def test_colour_maps_are_images_of_the_raster_size(report):
    reader, pages, d = report
    nx, ny = d["settings"]["raster_points"]
    k = pixel_scale(nx, ny)
    sizes = [img.image.size for page in reader.pages for img in page.images]
    # potential and touch maps, at k pixels per raster point; colour bars are narrow strips
    assert sizes.count((nx * k, ny * k)) == 2, sizes
    assert max(nx, ny) * k >= 600  # large enough to read when printed


def test_colour_scale_lightness_rises_evenly():
    # CIE 15:2004 L* from sRGB (IEC 61966-2-1): our scale must get lighter at every step (ordered in grey
    # print and for colour-deficient vision) and stay within 1.5 L* of the straight line from 20 to 92.
    rgb = colour_lut(256) / 255.0
    lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    y = lin @ np.array([0.2126, 0.7152, 0.0722])
    lstar = np.where(y > (6 / 29) ** 3, 116 * np.cbrt(y) - 16, y * (29 / 3) ** 3)
    assert np.all(np.diff(lstar) >= 0)  # 8-bit rounding can repeat a value
    assert np.all(np.diff(lstar[::8]) > 0)
    target = np.linspace(COLOUR_STOPS_LAB[0, 0], COLOUR_STOPS_LAB[-1, 0], 256)
    assert np.max(np.abs(lstar - target)) < 1.5


def test_map_image_orientation_hatching_and_blank_cells():
    vals = np.arange(12.0).reshape(3, 4)  # rows = y ascending
    vals[0, 0] = np.nan
    hatch = np.zeros_like(vals, dtype=bool)
    hatch[2, 3] = True
    img = np.asarray(map_image(vals, 0.0, 11.0, hatch=hatch))
    k = pixel_scale(4, 3)
    assert img.shape == (3 * k, 4 * k, 3)
    # north up: the last raster row is the top of the image; NaN cell (first row, first column) is grey
    assert tuple(img[-1, 0]) == (222, 222, 222)
    top_right = img[:k, 3 * k :]
    assert len({tuple(p) for p in top_right.reshape(-1, 3)}) == 3  # the cell colour plus dark and light hatch
    plain = img[:k, 2 * k : 3 * k]
    assert len({tuple(p) for p in plain.reshape(-1, 3)}) == 1


def test_plan_is_drawn_to_scale():
    fig = PlanFigure(400.0, 300.0, (0.0, 100.0, 0.0, 40.0))
    assert fig.plot_w / 100.0 == pytest.approx(fig.plot_h / 40.0)
    tall = PlanFigure(400.0, 300.0, (0.0, 10.0, 0.0, 100.0))
    assert tall.plot_w / 10.0 == pytest.approx(tall.plot_h / 100.0)
    assert tall.height <= 300.0


def test_inputs_table_shows_the_discretisation_error_estimate(report):
    # the row of the inputs table carries the JSON's two-level estimate (Richardson, order 1)
    _, pages, d = report
    est = d["discretisation_error"]
    assert est["coarse_segment_length_m"] == 2.0 * est["segment_length_m"]
    assert 0.0 <= est["grid_resistance_rel"] < 0.01 and 0.0 <= est["max_touch_rel"] < 0.01
    rg, touch = 100 * est["grid_resistance_rel"], 100 * est["max_touch_rel"]
    assert f"Discretisation error, est. (Rg / touch) {rg:.2g} % / {touch:.2g} %" in " ".join(pages)
