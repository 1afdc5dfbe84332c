"""Results drawing: contours on the iso-level, exceeded areas, worst points, layers, CLI.

The drawing is read back with ezdxf (an independent DXF reader), and the contour vertices
are checked against the surface potential evaluated directly at them
(groundcalc.surface.potential.surface_potential), not against the raster they came from.
"""

import hashlib
from dataclasses import replace

import ezdxf
import numpy as np
import pytest

from groundcalc.analysis import analyse
from groundcalc.cli import main
from groundcalc.geometry.footprint import points_in_polygon
from groundcalc.io.dxf_export import (
    LAYERS,
    XDATA_APP,
    default_levels,
    parse_levels,
    touch_field_v,
    write_results_dxf,
)
from groundcalc.model import GridSpec, Rod
from groundcalc.surface.potential import surface_potential

from .conftest import make_design, write_workbook


@pytest.fixture(scope="module")
def results():
    grid = GridSpec("G", 0.0, 0.0, 20.0, 15.0, 4, 5, 0.5, 0.01)
    rods = [Rod(f"R{i}", x, y, 0.5, 3.0, 0.016) for i, (x, y) in enumerate([(0, 0), (20, 0), (0, 15), (20, 15)])]
    res = analyse(make_design(grids=[grid], rods=rods, segment=2.0, spacing=0.5, margin=3.0))
    # A tolerable touch voltage between the smallest and largest touch voltage of the grid
    # footprint, so that only part of it is exceeded (the corner meshes).
    t = touch_field_v(res)[res.field.raster.touch_mask]
    limit = float(np.min(t) + 0.7 * (np.max(t) - np.min(t)))
    return replace(res, limits=replace(res.limits, touch_limit_v=limit))


def layer(doc, key, kind=None):
    name = LAYERS[key][0]
    return [e for e in doc.modelspace() if e.dxf.layer == name and (kind is None or e.dxftype() == kind)]


@pytest.fixture(scope="module")
def drawing(results, tmp_path_factory):
    path = tmp_path_factory.mktemp("dxf") / "results.dxf"
    counts = write_results_dxf(results, path)
    return ezdxf.readfile(path), counts


def test_contours_lie_on_the_iso_level(results, drawing):
    # Each vertex of a contour at level L must be within one raster cell h of the true
    # iso-line T(x, y) = L, T = GPR - V, with V evaluated directly at and around the vertex:
    # T - L takes both signs on the disc of radius h about the vertex (sampled on its rim),
    # so by continuity the iso-line crosses the disc. The linearised distance
    # |T - L| / |grad T| measures how close the vertices typically are.
    doc, _ = drawing
    sol, gpr, h = results.geometry.solution, results.gpr_v, results.field.raster.spacing_m
    polys = layer(doc, "contours", "LWPOLYLINE")
    assert len(polys) >= 4

    def touch(xy):
        return gpr - surface_potential(xy, sol, gpr)

    rim = h * np.array([(np.cos(a), np.sin(a)) for a in np.linspace(0, 2 * np.pi, 16, endpoint=False)])
    dists, levels = [], set()
    for pl in polys:
        lv = dict(pl.get_xdata(XDATA_APP))[1040]
        levels.add(lv)
        xy = np.array([(p[0], p[1]) for p in pl.get_points("xy")])
        t = touch(xy)
        around = touch((xy[:, None, :] + rim[None, :, :]).reshape(-1, 2)).reshape(len(xy), -1)
        lo = np.minimum(t, around.min(axis=1))
        hi = np.maximum(t, around.max(axis=1))
        assert np.all((lo <= lv) & (lv <= hi)), lv
        d = 1e-3
        tx = (touch(xy + [d, 0]) - touch(xy - [d, 0])) / (2 * d)
        ty = (touch(xy + [0, d]) - touch(xy - [0, d])) / (2 * d)
        dists.append(np.abs(t - lv) / np.hypot(tx, ty))
    assert np.median(np.concatenate(dists)) < 0.05 * h  # linear interpolation in the cells
    tmin, tmax = float(touch_field_v(results).min()), float(touch_field_v(results).max())
    assert levels == {lv for lv in default_levels(results.limits.touch_limit_v) if tmin < lv < tmax}


def test_contours_are_labelled_in_volts(results, drawing):
    doc, _ = drawing
    labels = [t.dxf.text for t in layer(doc, "contours", "TEXT")]
    assert labels and all(s.endswith(" V") or s.endswith(" V (limit)") for s in labels)
    assert any(s.endswith("(limit)") for s in labels)


def test_exceeded_areas_are_closed_and_hatched(results, drawing):
    # Raster nodes inside an area exceed the limit; nodes of the touch area that exceed it
    # (away from the touch-area edge, where the area follows the raster cells) are inside one.
    doc, _ = drawing
    r = results.field.raster
    limit = results.limits.touch_limit_v
    rings = [np.array([(p[0], p[1]) for p in pl.get_points("xy")]) for pl in layer(doc, "exceeded", "LWPOLYLINE")]
    hatches = layer(doc, "exceeded", "HATCH")
    assert rings and hatches
    assert all(pl.closed for pl in layer(doc, "exceeded", "LWPOLYLINE"))
    assert sum(len(hh.paths) for hh in hatches) == len(rings)
    xx, yy = np.meshgrid(r.x, r.y)
    nodes = np.column_stack([xx.ravel(), yy.ravel()])
    inside = np.zeros(len(nodes), bool)
    for ring in rings:
        inside ^= points_in_polygon(nodes, ring)
    t = touch_field_v(results).ravel()
    assert np.all(t[inside] >= limit - 1e-6 * limit)
    m = r.touch_mask
    interior = m.copy()
    interior[1:-1, 1:-1] &= m[:-2, 1:-1] & m[2:, 1:-1] & m[1:-1, :-2] & m[1:-1, 2:]
    interior[[0, -1], :] = False
    interior[:, [0, -1]] = False
    must = interior.ravel() & (t > limit * (1 + 1e-6))
    assert must.any() and np.all(inside[must])
    assert not np.all(t[m.ravel()] > limit)  # only part of the footprint is exceeded


def test_worst_points_conductors_and_rods(results, drawing):
    doc, counts = drawing
    (touch,) = layer(doc, "touch", "POINT")
    assert tuple(touch.dxf.location)[:2] == pytest.approx(results.field.touch.location_xy, abs=1e-9)
    feet = sorted(tuple(p.dxf.location)[:2] for p in layer(doc, "step", "POINT"))
    s = results.field.step
    assert np.ravel(feet) == pytest.approx(np.ravel(sorted([s.start_xy, s.end_xy])), abs=1e-9)
    assert f"{results.max_touch_v:.0f} V" in layer(doc, "touch", "TEXT")[0].dxf.text
    assert len(layer(doc, "conductors", "LINE")) == 9 and len(layer(doc, "rods", "CIRCLE")) == 4
    total = sum(np.hypot(*(np.array(e.dxf.end) - np.array(e.dxf.start))[:2]) for e in layer(doc, "conductors"))
    assert total == pytest.approx(4 * 20.0 + 5 * 15.0)
    assert doc.header["$INSUNITS"] == 6
    assert counts[LAYERS["conductors"][0]] == 9


def test_output_in_millimetres(results, tmp_path):
    write_results_dxf(results, tmp_path / "mm.dxf", [100.0], units="mm")
    doc = ezdxf.readfile(tmp_path / "mm.dxf")
    assert doc.header["$INSUNITS"] == 4
    xs = [e.dxf.end[0] for e in layer(doc, "conductors")]
    assert max(xs) == pytest.approx(20000.0)


def test_parse_levels():
    assert parse_levels("400, 200,200,600") == [200.0, 400.0, 600.0]
    for bad in ("abc", "-5", "0", ",", "nan"):
        with pytest.raises(Exception, match="--contours"):
            parse_levels(bad)


def test_cli_run_writes_dxf(tmp_path, capsys):
    wb = write_workbook(tmp_path / "d.xlsx", grids=[["G", 0, 0, 20, 15, 4, 5, 0.5, 10]])
    before = hashlib.sha256(wb.read_bytes()).hexdigest()
    out = tmp_path / "r.dxf"
    assert main(["run", str(wb), "--dxf", str(out), "--contours", "1000,3000,5000", "--quiet"]) == 0
    assert "wrote" in capsys.readouterr().out
    doc = ezdxf.readfile(out)
    lv = {dict(p.get_xdata(XDATA_APP))[1040] for p in layer(doc, "contours", "LWPOLYLINE")}
    assert lv == {3000.0, 5000.0}  # 1000 V is below the smallest touch voltage of this design
    assert hashlib.sha256(wb.read_bytes()).hexdigest() == before
    for args, msg in (
        (["--dxf", str(out)], "already exists"),
        (["--dxf", str(tmp_path / "r.txt")], "must end in .dxf"),
        (["--dxf", str(wb)], "is the input file"),
        (["--contours", "300"], "--contours needs --dxf"),
        (["--dxf", str(tmp_path / "x.dxf"), "--contours", "a,b"], "not a touch voltage"),
        (["--dxf", str(tmp_path / "x.dxf"), "--json", str(tmp_path / "x.dxf")], "same file"),
    ):
        assert main(["run", str(wb), "--quiet", *args]) == 2
        err = capsys.readouterr().err
        assert msg in err, err
    assert not (tmp_path / "x.dxf").exists()


def test_results_drawing_imports_back(results, tmp_path):
    # The conductor and rod layers of the results drawing are a drawing like any other:
    # importing them gives back the analysed plan geometry.
    from groundcalc.io.dxf_import import complete_rules, import_drawing

    path = tmp_path / "back.dxf"
    write_results_dxf(results, path, units="mm")
    rules = complete_rules([], [LAYERS["conductors"][0]], [LAYERS["rods"][0]], 0.5, 0.01, 3.0, 0.016, None)
    imp = import_drawing(path, rules)
    assert imp.unit_name == "mm" and LAYERS["contours"][0] in imp.unmapped

    def plan(cs):
        return sorted(tuple(round(v, 6) for v in (*c.start[:2], *c.end[:2])) for c in cs)

    assert plan(imp.conductors) == plan(c for c in results.design.all_conductors() if c.kind != "rod")
    assert sorted((r.x_m, r.y_m) for r in imp.rods) == sorted((r.x_m, r.y_m) for r in results.design.rods)


def test_default_levels_follow_the_field_when_the_limit_levels_miss_it():
    # a design far above its limit: 25 % to 200 % of a 190 V limit (47 to 380 V) lie below every
    # touch voltage of 1000 to 2300 V, so levels across that span are added
    levels = default_levels(190.0, 1000.0, 2300.0)
    inside = [lv for lv in levels if 1000.0 < lv < 2300.0]
    assert len(inside) == 6 and 190.0 in levels
    # levels that already cut the field are left as they are
    assert default_levels(1000.0, 100.0, 900.0) == default_levels(1000.0)
