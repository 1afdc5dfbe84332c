"""Grid footprint: area, perimeter and outline of square, L-shaped and open layouts."""

import numpy as np
import pytest

from groundcalc.geometry.footprint import compute_footprint
from groundcalc.model import GridSpec


def plan(grids):
    return np.array([[c.start[:2], c.end[:2]] for g in grids for c in g.conductors()])


def test_square_grid():
    fp = compute_footprint(plan([GridSpec("g", 0, 0, 70, 70, 11, 11, 0.5, 0.01)]))
    assert fp.area_m2 == pytest.approx(4900.0)  # Annex B Ex. 1: A = 4900 m2 [mem]
    assert fp.perimeter_m == pytest.approx(280.0)
    assert fp.max_distance_m == pytest.approx(70 * np.sqrt(2))


def test_l_shaped_grid_is_an_l_not_its_bounding_box():
    # Our own L: a 70 x 35 rectangle with a 35 x 35 square on its top-left (plane geometry:
    # A = 70*35 + 35*35 = 3675 m2, perimeter 70 + 35 + 35 + 35 + 35 + 70 = 280 m).
    grids = [GridSpec("a", 0, 0, 70, 35, 6, 11, 0.5, 0.01), GridSpec("b", 0, 35, 35, 35, 6, 6, 0.5, 0.01)]
    fp = compute_footprint(plan(grids))
    assert fp.area_m2 == pytest.approx(70 * 35 + 35 * 35)
    assert fp.perimeter_m == pytest.approx(2 * 70 + 2 * 70)  # L perimeter equals its bounding box's
    assert fp.contains(np.array([[10.0, 60.0]]))[0]
    assert not fp.contains(np.array([[60.0, 60.0]]))[0]  # the notch is outside
    assert fp.length_x_m == pytest.approx(70) and fp.length_y_m == pytest.approx(70)


def test_tail_conductor_adds_no_area_or_perimeter():
    lines = plan([GridSpec("g", 0, 0, 10, 10, 2, 2, 0.5, 0.01)])
    lines = np.concatenate([lines, [[[10, 5], [20, 5]]]])
    fp = compute_footprint(lines)
    assert fp.area_m2 == pytest.approx(100.0)
    assert fp.perimeter_m == pytest.approx(40.0)


def test_open_layout_has_empty_footprint():
    fp = compute_footprint(np.array([[[0, 0], [10, 0]], [[10, 0], [10, 10]]]))
    assert fp.empty and not fp.contains(np.array([[5.0, 5.0]]))[0]


def test_crossing_lines_without_shared_ends_enclose_meshes():
    # a '#' drawn with four long lines: footprint is the central square plus nothing else
    lines = np.array([[[0, 3], [10, 3]], [[0, 6], [10, 6]], [[3, 0], [3, 10]], [[6, 0], [6, 10]]], float)
    fp = compute_footprint(lines)
    assert fp.area_m2 == pytest.approx(9.0)
