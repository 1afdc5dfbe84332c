"""Image series summed to a tolerance, and their tables, against long direct sums."""

import numpy as np
import pytest

from groundcalc.soil.tables import RadialSums, TailTable, series_sums


def brute_sum(d, v, k, h, p, terms=20000):
    """Plain sum of many terms (no bound, no table): the reference."""
    m = np.arange(terms)[:, None]
    return np.sum(k**m * (d[None, :] ** 2 + (v[None, :] + 2 * h * m) ** 2) ** (-p / 2), axis=0)


@pytest.mark.parametrize("k", [0.98, -0.98, 0.9, -0.5, 0.2])
def test_series_truncation_meets_tolerance(k):
    # The series must be summed until the omitted terms change the potential by less than
    # 1e-6 relative, for |K| up to 0.98. The bound in series_sums is |K|^N r_N^-p / (1 - |K|).
    rng = np.random.default_rng(0)
    d = rng.uniform(0, 200, 50)
    v = rng.uniform(0.5, 30, 50)
    for p in (1, 3):
        s, terms = series_sums(d, v, k, 1.5, (p,), tol=1e-6)
        ref = brute_sum(d, v, k, 1.5, p)
        assert np.max(np.abs(s[0] / ref - 1)) < 1e-6
        assert terms < 20000


def test_terms_grow_as_k_tends_to_one():
    # the count is set by the bound, not fixed: |K| = 0.98 needs far more terms than 0.5
    d, v = np.array([1.0]), np.array([1.0])
    n98 = series_sums(d, v, 0.98, 1.0, (1,), 1e-6)[1]
    n50 = series_sums(d, v, 0.5, 1.0, (1,), 1e-6)[1]
    assert n98 > 5 * n50


@pytest.mark.parametrize("k,h", [(0.98, 0.5), (-0.98, 2.0), (0.9, 20.0), (-0.5, 1.0)])
def test_tail_table_interpolation_error(k, h):
    # bicubic spline in (log rho, theta) against the direct sum: below 1e-7 relative
    tab = TailTable(k, h, 8.0, 60.0, 300.0)
    rng = np.random.default_rng(1)
    d = 300 * rng.uniform(0, 1, 4000) ** 3
    v = rng.uniform(8.0, 60.0, 4000)
    assert np.max(np.abs(tab(d, v) / tab.direct(d, v) - 1)) < 1e-7


def test_tail_table_outside_domain_is_summed_directly():
    tab = TailTable(0.9, 1.0, 8.0, 20.0, 50.0)
    d, v = np.array([500.0, 1.0]), np.array([10.0, 2.0])  # beyond d_hi, below v_lo
    assert np.allclose(tab(d, v), tab.direct(d, v), rtol=1e-14)


@pytest.mark.parametrize("k", [0.98, -0.98])
def test_radial_sums_interpolation_error(k):
    # Hermite interpolation in asinh(d/scale) with exact derivatives: S1, S3 below 1e-7, S5 below 5e-7
    rs = RadialSums([100.0, 50.0], [0.0, 1.0], [30.0, 20.0], [8.5, 12.0], k, 1.0, 8.0, 400.0, 8.0)
    d = np.geomspace(8.0, 400.0, 3000)
    ref = rs.direct(d)[0]
    got = np.stack(rs(d))
    err = np.max(np.abs(got / ref - 1), axis=1)
    assert err[0] < 1e-7 and err[1] < 1e-7 and err[2] < 5e-7
    # beyond the table the sums are evaluated term by term, not taken from the last node
    far = np.array([450.0, 2000.0])
    assert np.allclose(np.stack(rs(far)), rs.direct(far)[0], rtol=1e-14)
    assert rs(far)[0][1] < 0.5 * rs(far)[0][0]
