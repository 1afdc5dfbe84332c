"""Wenner apparent resistivity, the two-layer Wenner series and the soil fit."""

import numpy as np
import pytest

from groundcalc.model import WennerReadings
from groundcalc.soil.wenner import fit_soil, two_layer_wenner, wenner_apparent_resistivity

SPACINGS = np.array([1, 2, 3, 5, 7.5, 10, 15, 20, 30, 50.0])


def test_two_layer_series_reference_points():
    # Two-layer Wenner series (IEEE Std 81; Tagg 1964), check points recomputed from the published
    # series [calc] (docs/references.md), H = 6.1 m; the values are printed to 2 decimals.
    assert two_layer_wenner([10, 20, 50], 100, 300, 6.1) == pytest.approx([149.22, 203.58, 264.09], abs=0.006)
    assert two_layer_wenner([10, 20], 300, 100, 6.1) == pytest.approx([191.52, 123.86], abs=0.006)


def test_two_layer_series_limits():
    # short spacings read rho1, long spacings rho2; equal layers read the common value (common practice)
    r = two_layer_wenner([0.01, 1e5], 100, 400, 2.0)
    assert r[0] == pytest.approx(100, rel=1e-3) and r[1] == pytest.approx(400, rel=1e-3)
    assert two_layer_wenner([1, 10], 250, 250, 3.0) == pytest.approx([250, 250])


def test_apparent_resistivity_surface_pins_and_pin_depth():
    # IEEE Std 81 (from memory, clause 8.2.3.2): rho_a = 2 pi a R for b << a; with pin depth b
    # rho_a = 4 pi a R / (1 + 2a/sqrt(a^2 + 4b^2) - a/sqrt(a^2 + b^2)).
    assert wenner_apparent_resistivity(10.0, 2.0) == pytest.approx(2 * np.pi * 20.0)
    a, r, b = 2.0, 5.0, 0.5
    expected = 4 * np.pi * a * r / (1 + 2 * a / np.sqrt(a * a + 4 * b * b) - a / np.sqrt(a * a + b * b))
    assert wenner_apparent_resistivity(a, r, b) == pytest.approx(expected)
    # the correction vanishes as b/a -> 0
    assert wenner_apparent_resistivity(100.0, 1.0, 0.01) == pytest.approx(2 * np.pi * 100.0, rel=1e-7)


@pytest.mark.parametrize("model", [(100, 300, 6.1), (300, 100, 6.1), (50, 1000, 2.0), (800, 40, 1.5)])
def test_fit_recovers_synthetic_model_within_2_percent(model):
    # Synthetic readings from the two-layer Wenner series (IEEE Std 81-2012; Tagg 1964) are fitted
    # back to rho1, rho2, H within 2 %.
    r1, r2, h = model
    fit = fit_soil(WennerReadings(tuple(SPACINGS), tuple(two_layer_wenner(SPACINGS, r1, r2, h))))
    assert fit.rho1_ohm_m == pytest.approx(r1, rel=0.02)
    assert fit.rho2_ohm_m == pytest.approx(r2, rel=0.02)
    assert fit.thickness_m == pytest.approx(h, rel=0.02)
    assert fit.misfit_pct < 0.01
    assert fit.uniform_misfit_pct > 10  # a uniform model cannot explain layered readings


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_noisy_readings_give_a_sensible_fit_with_misfit_reported(seed):
    # 5 % multiplicative noise: the fitted curve follows the true one over the measured spacings
    # (within 12 %, 2.4 times the noise), rho1 stays within 15 %, and the misfit reported is of the order of the noise,
    # far below that of a uniform model. rho2 is loosely determined (the longest spacing reads only
    # 88 % of it), so it is only held within a factor 1.5.
    rng = np.random.default_rng(seed)
    true = two_layer_wenner(SPACINGS, 100, 300, 6.1)
    rho = true * (1 + 0.05 * rng.standard_normal(SPACINGS.size))
    fit = fit_soil(WennerReadings(tuple(SPACINGS), tuple(rho)))
    assert np.max(np.abs(fit.model_ohm_m(SPACINGS) / true - 1)) < 0.12
    assert fit.rho1_ohm_m == pytest.approx(100, rel=0.15)
    assert 200 < fit.rho2_ohm_m < 450
    assert 1.0 < fit.misfit_pct < 8.0
    assert fit.uniform_misfit_pct > 3 * fit.misfit_pct
    rows = fit.table()
    assert len(rows) == SPACINGS.size and all(abs(r[3]) < 20 for r in rows)


def test_uniform_readings_fit_equal_layers():
    fit = fit_soil(WennerReadings(tuple(SPACINGS), (200.0,) * SPACINGS.size))
    assert fit.uniform_ohm_m == pytest.approx(200)
    assert fit.rho1_ohm_m == pytest.approx(200, rel=1e-3) and fit.rho2_ohm_m == pytest.approx(200, rel=1e-3)


def test_fewer_than_three_spacings_refused():
    with pytest.raises(ValueError):
        fit_soil(WennerReadings((1.0, 2.0), (100.0, 120.0)))
