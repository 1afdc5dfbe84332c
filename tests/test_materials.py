"""Conductor materials and fault-current sizing against IEEE Std 80-2000 clause 11.3."""

import math

import pytest

from groundcalc.safety.materials import MATERIALS, kf_constant, material, required_area_mm2


@pytest.mark.parametrize(
    "name,kf",
    # Kf column of IEEE Std 80-2000 Table 2 (Ta = 40 degC, Tm = fusing temperature) [mem]; recovered from the
    # Table 1 constants [mem] to within 0.01 [calc] through Eq. (42) (docs/references.md).
    [
        ("annealed copper", 7.00),
        ("hard-drawn copper", 7.06),
        ("copper-clad steel wire 30%", 12.06),
        ("steel 1020", 15.95),
    ],
)
def test_kf_of_table_2_from_table_1(name, kf):
    assert kf_constant(MATERIALS[name]) == pytest.approx(kf, abs=0.01)


def test_eq_37_agrees_with_the_table_2_shortcut():
    # Eq. (37) in mm2 and Eq. (42) A [kcmil] = I [kA] Kf sqrt(tc) with the printed Kf = 7.06 for hard-drawn
    # copper [mem]: 3.18 kA for 0.5 s needs 3.18 * 7.06 * sqrt(0.5) kcmil = 8.04 mm2 (1 mm2 = 1.9735 kcmil).
    a = required_area_mm2(3180.0, 0.5, MATERIALS["hard-drawn copper"])
    assert a == pytest.approx(3.18 * 7.06 * math.sqrt(0.5) / 1.9735, rel=2e-3)


def test_area_scales_with_current_and_root_of_duration():
    # Eq. (37): A is proportional to I and to sqrt(tc) (the adiabatic assumption).
    mat = MATERIALS["annealed copper"]
    a1 = required_area_mm2(10_000.0, 1.0, mat)
    assert required_area_mm2(20_000.0, 1.0, mat) == pytest.approx(2 * a1)
    assert required_area_mm2(10_000.0, 4.0, mat) == pytest.approx(2 * a1)


def test_lower_allowed_temperature_needs_more_copper():
    # Eq. (37): a bolted joint limited to 250 degC (common practice for mechanical connectors) needs a
    # larger section than a welded one at the fusing temperature.
    mat = MATERIALS["hard-drawn copper"]
    assert required_area_mm2(10_000.0, 0.5, mat, 40.0, 250.0) > required_area_mm2(10_000.0, 0.5, mat)
    # hotter ambient -> less margin -> more metal
    assert required_area_mm2(10_000.0, 0.5, mat, 50.0) > required_area_mm2(10_000.0, 0.5, mat, 20.0)


def test_material_names_and_aliases():
    assert material(None).name == "hard-drawn copper"  # default of the workbook's Material column
    assert material("  Copper ").name == "hard-drawn copper"
    assert material("Galvanized steel rod").name == "zinc-coated steel rod"
    assert material("ALUMINUM").name == "aluminium"
    assert material("unobtainium") is None
