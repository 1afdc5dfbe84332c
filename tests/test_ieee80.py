"""IEEE Std 80 body-current limits and fault-current factors against the standard's values."""

import math

import pytest

from groundcalc.ieee80 import (
    decrement_factor,
    grid_current_a,
    surface_layer_factor,
    tolerable_step_v,
    tolerable_touch_v,
)


def test_cs_annex_b():
    # IEEE Std 80-2000 Annex B: rho = 400, rho_s = 2500, h_s = 0.102 m -> Cs = 0.74
    # (unrounded 0.7429) [mem/calc, REFERENCES.md], Eq. (27).
    cs = surface_layer_factor(400.0, 2500.0, 0.102)
    assert cs == pytest.approx(0.7429, abs=5e-5)
    assert round(cs, 2) == 0.74


def test_tolerable_touch_annex_b_70kg():
    # IEEE Std 80-2000 Annex B: E_touch70 = 838.2 V with Cs = 0.74 [doc]; Eq. (33).
    assert tolerable_touch_v(0.74, 2500.0, 0.5, 70) == pytest.approx(838.2, abs=0.05)
    # With the unrounded Cs: 840.5 V [calc, REFERENCES.md].
    cs = surface_layer_factor(400.0, 2500.0, 0.102)
    assert tolerable_touch_v(cs, 2500.0, 0.5, 70) == pytest.approx(840.5, abs=0.1)


def test_tolerable_step_annex_b_70kg():
    # IEEE Std 80-2000 Annex B: E_step70 = 2686.6 V with Cs = 0.74 [mem/calc]; Eq. (30).
    assert tolerable_step_v(0.74, 2500.0, 0.5, 70) == pytest.approx(2686.6, abs=0.1)
    cs = surface_layer_factor(400.0, 2500.0, 0.102)
    assert tolerable_step_v(cs, 2500.0, 0.5, 70) == pytest.approx(2696.1, abs=0.1)


def test_50kg_limits_use_k_0116():
    # IEEE Std 80-2000 Eqs. (29), (32): k = 0.116 for 50 kg. Bare soil 100 ohm*m, 1 s:
    # touch = (1000 + 150) * 0.116 = 133.4 V; step = (1000 + 600) * 0.116 = 185.6 V [calc].
    assert tolerable_touch_v(1.0, 100.0, 1.0, 50) == pytest.approx(133.4, abs=1e-9)
    assert tolerable_step_v(1.0, 100.0, 1.0, 50) == pytest.approx(185.6, abs=1e-9)


def test_body_weight_other_than_50_or_70_is_refused():
    with pytest.raises(ValueError):
        tolerable_touch_v(1.0, 100.0, 1.0, 60)


@pytest.mark.parametrize(
    "xr,tf,expected",
    # Eq. (79) at 60 Hz; values [calc] that match IEEE Std 80-2000 Table 10 from memory.
    [(10, 0.5, 1.026), (20, 0.5, 1.052), (40, 0.5, 1.101), (10, 0.05, 1.232), (40, 0.05, 1.515)],
)
def test_decrement_factor_table_10(xr, tf, expected):
    assert decrement_factor(xr, tf, 60.0) == pytest.approx(expected, abs=6e-4)  # table prints 3 decimals


def test_decrement_factor_no_dc_offset():
    assert decrement_factor(0.0, 0.5, 60.0) == 1.0
    # long faults: Df -> 1 (Eq. 79 limit as tf -> infinity)
    assert decrement_factor(20, 100.0, 60.0) == pytest.approx(1.0, abs=1e-3)


def test_grid_current_annex_b():
    # Annex B: 3I0 = 3180 A, Sf = 0.6, Df = 1 -> I_G = 1908 A [doc].
    assert grid_current_a(3180.0, 0.6, 1.0) == pytest.approx(1908.0)
    assert math.isclose(grid_current_a(1000.0, 0.5, 1.1), 550.0)
