"""Covariance of the fitted two-layer soil parameters, its sampling, and its coverage."""

import numpy as np
import pytest
import scipy.optimize
import scipy.stats

from groundcalc.model import WennerReadings
from groundcalc.soil.fit_uncertainty import fit_covariance
from groundcalc.soil.wenner import fit_soil, two_layer_wenner

SPACINGS = np.array([1, 2, 3, 5, 7.5, 10, 15, 20, 30, 50.0])
TRUE = np.array([100.0, 300.0, 6.1])  # rho1, rho2 [ohm*m], H [m]


def _noisy_fit(seed, noise=0.05, true=TRUE):
    rng = np.random.default_rng(seed)
    rho = two_layer_wenner(SPACINGS, true[0], true[1], true[2]) * np.exp(noise * rng.standard_normal(SPACINGS.size))
    return fit_soil(WennerReadings(tuple(SPACINGS), tuple(rho)))


def test_covariance_equals_curve_fit_pcov():
    # scipy.optimize.curve_fit (absolute_sigma=False) returns pcov = s^2 (J^T J)^-1 with s^2 the residual
    # variance over n - p degrees of freedom: the same estimate, by an independent implementation
    # (scipy's own finite-difference Jacobian). 1e-5: difference of two finite-difference Jacobians.
    fit = _noisy_fit(11)
    cov = fit_covariance(fit)

    def model(a, x1, x2, x3):
        return np.log(two_layer_wenner(a, np.exp(x1), np.exp(x2), np.exp(x3)))

    popt, pcov = scipy.optimize.curve_fit(model, SPACINGS, np.log(fit.readings.apparent_ohm_m), p0=cov.log_mean)
    assert popt == pytest.approx(cov.log_mean, abs=1e-6)  # the fit is at the optimum curve_fit finds
    assert cov.cov == pytest.approx(pcov, rel=1e-5, abs=1e-12)
    assert cov.dof == SPACINGS.size - 3


def test_jacobian_obeys_homogeneity_of_the_wenner_series():
    # rho_a of the two-layer series (IEEE Std 81; Tagg 1964) is homogeneous of degree one in (rho1, rho2):
    # K depends on their ratio only. Euler's theorem then gives d log rho_a/d log rho1 + d/d log rho2 = 1
    # at every spacing. 1e-6: central differences with a 1e-4 step.
    jac = fit_covariance(_noisy_fit(3)).jacobian
    assert jac[:, 0] + jac[:, 1] == pytest.approx(np.ones(SPACINGS.size), abs=1e-6)
    # short spacings see rho1 only, the sensitivity to rho2 grows with the spacing (common practice)
    assert jac[0, 0] > 0.99 and np.all(np.diff(jac[:, 1]) > 0) and jac[-1, 1] > 0.5


def test_exact_readings_give_no_spread():
    exact = two_layer_wenner(SPACINGS, *TRUE[:2], TRUE[2])
    cov = fit_covariance(fit_soil(WennerReadings(tuple(SPACINGS), tuple(exact))))
    assert np.all(cov.log_sd < 1e-5)
    lo, hi = cov.interval(0.9)
    assert lo == pytest.approx(TRUE, rel=1e-4) and hi == pytest.approx(TRUE, rel=1e-4)


def test_samples_follow_the_multivariate_t_marginals():
    # Each marginal of a multivariate t (centre m, scale C, nu dof) is a univariate t with scale sqrt(C_ii)
    # (standard result; checked with scipy.stats.t by a Kolmogorov-Smirnov test). No fits beyond one.
    cov = fit_covariance(_noisy_fit(5, noise=0.02))
    u = scipy.stats.qmc.LatinHypercube(d=4, rng=np.random.default_rng(1)).random(2000)
    params, clipped = cov.sample(u)
    assert clipped == 0
    for k in range(3):
        z = (np.log(params[:, k]) - cov.log_mean[k]) / cov.log_sd[k]
        assert scipy.stats.kstest(z, "t", args=(cov.dof,)).pvalue > 0.01
    # and the correlation of the log-parameters is that of the covariance (sampling error about 0.03)
    emp = np.corrcoef(np.log(params).T)
    assert emp == pytest.approx(cov.correlation, abs=0.08)


def test_fit_intervals_cover_the_true_model_at_about_the_stated_rate():
    # Coverage: synthetic readings from a known model with known 5 % noise, refitted; the 90 % interval of
    # each parameter must cover the true value in about 90 % of the surveys. 24 surveys keep the test
    # fast: each count must reach the 0.1 % point of Binomial(24, 0.9) (16 hits), which an interval of real
    # coverage 50 % (a covariance about four times too small) misses with probability 0.92.
    # benchmarks/bench_fit_coverage.py runs 400 surveys (measured: 89-91 % per parameter).
    draws = 24
    hits = np.zeros(3, dtype=int)
    for seed in range(draws):
        lo, hi = fit_covariance(_noisy_fit(100 + seed)).interval(0.90)
        hits += (lo <= TRUE) & (TRUE <= hi)
    low = scipy.stats.binom.ppf(0.001, draws, 0.9)
    assert np.all(hits >= low), hits
    # an interval far too wide would cover every time; with 72 intervals at 90 % some must miss
    assert hits.sum() < 3 * draws


def test_three_readings_leave_no_noise_estimate():
    a = (1.0, 3.0, 10.0)
    fit = fit_soil(WennerReadings(a, tuple(two_layer_wenner(np.array(a), 100, 300, 2.0))))
    with pytest.raises(ValueError, match="four readings"):
        fit_covariance(fit)
