"""Segmentation: splits at crossings, T-joints, rod tops and the soil interface."""

import numpy as np
import pytest

from groundcalc.geometry.segments import GRADING_RATIO, MIN_RADII, TIP_RADII, graded_lengths, segment_conductors
from groundcalc.model import Conductor, GridSpec, Rod


def ends(seg):
    return {tuple(np.round(p, 6)) for p in np.concatenate([seg.a, seg.b])}


def test_crossing_conductors_are_split_at_the_crossing():
    a = Conductor("a", (0, 5, 0.5), (10, 5, 0.5), 0.01)
    b = Conductor("b", (5, 0, 0.5), (5, 10, 0.5), 0.01)
    s = segment_conductors([a, b], 3.0).segments
    assert (5.0, 5.0, 0.5) in ends(s)
    # no segment straddles the crossing
    for p, q in zip(s.a, s.b, strict=False):
        assert not (min(p[0], q[0]) < 5 < max(p[0], q[0]) and p[1] == 5)
    assert np.all(s.length <= 3.0 + 1e-9)
    assert s.length.sum() == pytest.approx(20.0)


def test_t_joint_and_rod_top_split_the_conductor():
    a = Conductor("a", (0, 0, 0.5), (10, 0, 0.5), 0.01)
    t = Conductor("t", (3.3, 0, 0.5), (3.3, 4, 0.5), 0.01)
    rod = Rod("r", 7.7, 0, 0.5, 3, 0.016).as_conductor()
    res = segment_conductors([a, t, rod], 5.0)
    e = ends(res.segments)
    assert (3.3, 0.0, 0.5) in e and (7.7, 0.0, 0.5) in e
    assert len(set(res.components.tolist())) == 1
    assert not res.notices


def test_floating_conductor_is_reported():
    a = Conductor("main", (0, 0, 0.5), (10, 0, 0.5), 0.01)
    b = Conductor("stray", (0, 2, 0.5), (10, 2, 0.5), 0.01)
    res = segment_conductors([a, b], 5.0)
    assert any(n.code == "not-connected" and "stray" in n.message for n in res.notices)


def test_rod_just_below_conductor_is_not_joined():
    # a rod whose top is 0.1 m below the conductor does not touch it
    a = Conductor("a", (0, 0, 0.5), (10, 0, 0.5), 0.01)
    rod = Rod("r", 5, 0, 0.6, 3, 0.016).as_conductor()
    res = segment_conductors([a, rod], 5.0)
    assert len(set(res.components.tolist())) == 2


def test_segments_never_shorter_than_ten_radii():
    wire = Conductor("w", (0, 0, 0.5), (1, 0, 0.5), 0.02)  # radius 10 mm -> min 0.1 m
    s = segment_conductors([wire], 0.01)
    assert np.all(s.segments.length >= MIN_RADII * 0.01 - 1e-12)
    assert any(n.code == "segment-length-capped" for n in s.notices)


def test_crossing_close_to_an_end_does_not_make_a_tiny_segment():
    a = Conductor("a", (0, 0, 0.5), (10, 0, 0.5), 0.02)
    b = Conductor("b", (0.05, -5, 0.5), (0.05, 5, 0.5), 0.02)  # 5 cm from a's end: < 10 radii
    s = segment_conductors([a, b], 2.0, grading=False).segments
    assert np.all(s.length >= MIN_RADII * 0.01 - 1e-12)
    # with grading only the graded tips at the free ends are shorter, and the crossing still makes no cut
    s = segment_conductors([a, b], 2.0).segments
    assert np.all(s.length >= TIP_RADII * 0.01 - 1e-12)
    on_a = (s.a[:, 1] == 0.0) & (s.b[:, 1] == 0.0)
    assert 0.05 not in set(np.round(s.a[on_a, 0], 9))


def test_interface_splits_rods_and_assigns_layers():
    rod = Rod("r", 0, 0, 0.5, 6.0, 0.016).as_conductor()
    s = segment_conductors([rod], 1.0, interface_depth_m=2.25).segments
    assert 2.25 in set(np.round(s.b[:, 2], 9))
    mid = 0.5 * (s.a[:, 2] + s.b[:, 2])
    assert np.all((mid < 2.25) == (s.layer == 0))


def test_grid_generator_counts():
    g = GridSpec("g", 0, 0, 70, 70, 11, 11, 0.5, 0.01)
    conds = g.conductors()
    assert len(conds) == 22
    assert sum(c.length_m for c in conds) == pytest.approx(1540.0)  # Annex B Ex. 1: LC = 1540 m [mem]
    s = segment_conductors(conds, 1.0, grading=False).segments
    assert len(s) == 1540
    graded = segment_conductors(conds, 1.0).segments
    assert graded.length.max() <= 1.0 + 1e-9
    assert graded.length.sum() == pytest.approx(1540.0)
    assert len(graded) == len(s)  # grid corners and T-joints are not graded (horizontal junction ends)


def test_graded_lengths_grow_geometrically_and_fill_the_piece():
    sizes = graded_lengths(3.0, 1.0, 0.024, False, True)
    assert sizes.sum() == pytest.approx(3.0)
    assert sizes.max() <= 1.0 + 1e-12
    assert sizes[-1] == pytest.approx(0.024)
    run = sizes[::-1][:4]  # 0.024, 0.072, 0.216, 0.648 with ratio 3
    assert np.allclose(run[1:] / run[:-1], GRADING_RATIO)
    # a short piece graded at both ends: lengths never fall toward the middle
    short = graded_lengths(0.5, 1.0, 0.024, True, True)
    assert short.sum() == pytest.approx(0.5)
    half = short[: (len(short) + 1) // 2]
    assert np.all(np.diff(half) >= -1e-12)


def test_rod_at_grade_is_graded_at_both_ends():
    # the foot is a free end; the top at grade is graded too (the surface potential peaks there)
    rod = Rod("r", 0, 0, 0.0, 3.0, 0.016).as_conductor()
    s = segment_conductors([rod], 1.0).segments
    assert s.length[s.b[:, 2].argmax()] == pytest.approx(TIP_RADII * 0.008)
    assert s.length[s.a[:, 2].argmin()] == pytest.approx(TIP_RADII * 0.008)
    assert s.length.max() <= 1.0 + 1e-12


def test_only_free_ends_are_graded():
    # rod top on a conductor and the joint of two collinear conductors: not graded; the rod's foot
    # and the outer ends of the conductors are free and graded
    a = Conductor("a", (0, 0, 0.5), (5, 0, 0.5), 0.01)
    b = Conductor("b", (5, 0, 0.5), (10, 0, 0.5), 0.01)
    rod = Rod("r", 2.5, 0, 0.5, 3.0, 0.016).as_conductor()
    s = segment_conductors([a, b, rod], 1.0).segments
    vertical = s.a[:, 2] != s.b[:, 2]
    top = vertical & (np.minimum(s.a[:, 2], s.b[:, 2]) == 0.5)
    foot = vertical & (np.maximum(s.a[:, 2], s.b[:, 2]) == 3.5)
    assert s.length[foot][0] == pytest.approx(TIP_RADII * 0.008)
    assert s.length[top][0] > 0.5
    near_joint = ~vertical & (np.abs(s.mid[:, 0] - 5.0) < 1.0)
    assert np.all(s.length[near_joint] > 0.5)
    assert s.length[~vertical].min() == pytest.approx(TIP_RADII * 0.005)
