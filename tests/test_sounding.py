"""Wenner soundings over N layers: the Stefanescu integral against the IEEE Std 81 two-layer series
and scipy quadrature, and model selection by the information criterion."""

from types import SimpleNamespace

import numpy as np
import openpyxl
import pytest
from scipy.integrate import quad
from scipy.special import j0

from groundcalc.analysis import resolve_soil
from groundcalc.cli import main
from groundcalc.io.workbook import read_design
from groundcalc.model import WennerReadings
from groundcalc.soil.multilayer import Profile
from groundcalc.soil.sounding import fit_layers, resistivity_transform, wenner_curve
from groundcalc.soil.wenner import two_layer_wenner

from .conftest import write_workbook

SPACINGS = np.array([0.5, 1, 1.5, 2, 3, 4, 6, 8, 10, 15, 20, 30, 40, 60])
THREE = Profile((300.0, 60.0, 1000.0), (2.0, 8.0))


def test_two_layer_curve_equals_the_ieee81_series():
    # IEEE Std 81-2012 two-layer Wenner series (as in groundcalc.soil.wenner) against the Stefanescu integral.
    a = np.geomspace(0.3, 200.0, 25)
    for r1, r2, h in [(100.0, 300.0, 6.1), (500.0, 50.0, 2.0), (80.0, 8000.0, 0.7)]:
        got = wenner_curve(a, Profile((r1, r2), (h,)))
        assert np.abs(got / two_layer_wenner(a, r1, r2, h) - 1).max() < 1e-9


def test_three_layer_curve_equals_direct_quadrature():
    # No published three-layer table to hand: scipy.integrate.quad of the Stefanescu integral
    # (Koefoed 1979) with the same resistivity transform, to 1e-6.
    a = np.array([0.5, 2.0, 7.0, 25.0, 80.0])
    got = wenner_curve(a, THREE)
    for x, g in zip(a, got, strict=True):

        def f(lam, x=x):
            return (resistivity_transform(THREE, np.array([lam]))[0] - 300.0) * (j0(lam * x) - j0(2 * lam * x))

        top = 60.0 / min(x, 2.0)
        ref = 300.0 + 2 * x * sum(
            quad(f, lo, hi, limit=2000, epsabs=1e-12, epsrel=1e-11)[0] for lo, hi in [(0, top), (top, 400.0)]
        )
        assert g == pytest.approx(ref, rel=1e-6)


def test_uniform_and_limits():
    # Equal resistivities read the true resistivity at every spacing; short spacings read the top layer
    # and long ones the bottom (Wenner array limits, IEEE Std 81-2012 clause 8.2.3).
    a = np.geomspace(0.5, 50, 9)
    assert np.allclose(wenner_curve(a, Profile((70.0,) * 3, (1.0, 3.0))), 70.0, rtol=1e-9)
    far = wenner_curve(np.array([0.01, 5000.0]), THREE)
    assert far[0] == pytest.approx(300.0, rel=1e-3) and far[1] == pytest.approx(1000.0, rel=2e-2)


@pytest.fixture(scope="module")
def noisy_fit():
    rng = np.random.default_rng(5)
    meas = wenner_curve(SPACINGS, THREE) * (1 + 0.03 * rng.standard_normal(SPACINGS.size))
    return fit_layers(WennerReadings(tuple(SPACINGS), tuple(meas)), 3)


def test_three_layer_readings_with_noise_pick_three_layers(noisy_fit):
    # Synthetic three-layer readings with 3 % multiplicative noise: BIC (Schwarz 1978) must prefer three
    # layers, and the fitted curve must follow the true one within the noise.
    snd = noisy_fit
    true = wenner_curve(SPACINGS, THREE)
    assert [f.layers for f in snd.fits] == [1, 2, 3]
    assert snd.chosen.layers == 3
    dev = snd.chosen.curve(SPACINGS) / true - 1
    assert np.sqrt(np.mean(dev**2)) < 0.03
    assert snd.fits[1].rms_pct > 3 * snd.chosen.rms_pct  # two layers cannot follow an H-type curve


def test_exact_two_layer_readings_keep_two_layers():
    # Noise-free two-layer readings: a third layer fits no better than the 0.1 % floor, so BIC keeps two.
    meas = two_layer_wenner(SPACINGS, 100.0, 300.0, 6.1)
    snd = fit_layers(WennerReadings(tuple(SPACINGS), tuple(meas)), 3)
    assert snd.chosen.layers == 2
    assert snd.chosen.profile.rho[0] == pytest.approx(100.0, rel=1e-3)


def _fitted_book(path):
    p = write_workbook(path, soil={"Model": "fitted"}, grids=[["G", 0, 0, 20, 20, 2, 2, 0.5, 10]])
    wb = openpyxl.load_workbook(p)
    rng = np.random.default_rng(5)
    meas = wenner_curve(SPACINGS, THREE) * (1 + 0.03 * rng.standard_normal(SPACINGS.size))
    for x, r in zip(SPACINGS, meas, strict=True):
        wb["Wenner"].append([float(x), None, float(r)])
    wb.save(p)
    return p


def test_fitted_model_takes_the_preferred_layers_and_says_so(tmp_path, capsys):
    book = _fitted_book(tmp_path / "f.xlsx")
    design, fit = resolve_soil(read_design(book))
    assert design.soil.model == "multilayer" and len(design.soil.layers) == 3
    notes = [n.message for n in design.notices if n.code == "soil-model-chosen"]
    assert notes and "3-layer model chosen by the Bayesian information criterion" in notes[0]
    # the soil command lists every fit and ranks them by the criterion asked for
    copy = tmp_path / "f-fitted.xlsx"
    assert main(["soil", str(book), "--criterion", "AIC", "--write-design", str(copy)]) == 0
    out = capsys.readouterr().out
    assert "ranked by AIC" in out and "<- preferred" in out
    assert out.count("RMS misfit") >= 3
    written = read_design(copy).soil
    assert written.model == "multilayer" and len(written.layers) == 3 and written.layers[-1][1] is None


def test_report_pages_show_every_fit_and_the_profile(tmp_path, noisy_fit):
    from pypdf import PdfReader
    from reportlab.platypus import SimpleDocTemplate

    from groundcalc.report.soilcharts import layered_fit_flowables

    out = tmp_path / "soil.pdf"
    fit = SimpleNamespace(readings=noisy_fit.readings, layered=noisy_fit)
    SimpleDocTemplate(str(out)).build(layered_fit_flowables(fit))
    text = "".join(p.extract_text() for p in PdfReader(out).pages)
    assert "3-layer fit" in text and "2-layer fit" in text and "1-layer fit" in text
    assert "Chosen profile (3 layer(s))" in text and "(to any depth)" in text
