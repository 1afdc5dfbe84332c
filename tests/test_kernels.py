"""Segment integrals of the thin-wire kernel against numerical quadrature (scipy.integrate)
and known closed forms."""

import numpy as np
import pytest
from scipy.integrate import dblquad, quad

from groundcalc.mom.integrals import (
    line_integral,
    near_pair_integral,
    parallel_pair_integral,
    perpendicular_pair_integral,
)
from groundcalc.mom.operator import FAR_MARGIN, FAR_RATIO, far_pair_integral, pair_integral


def _num_pair(oa, ob, sa, sb, r2):
    """Reference double integral by scipy.integrate.dblquad (general-purpose library)."""
    oa, ob, sa, sb = map(np.asarray, (oa, ob, sa, sb))
    lo, ls = np.linalg.norm(ob - oa), np.linalg.norm(sb - sa)

    def f(t, s):
        d = oa + s * (ob - oa) - sa - t * (sb - sa)
        return 1.0 / np.sqrt(d @ d + r2)

    val, _ = dblquad(f, 0, 1, 0, 1, epsabs=1e-13, epsrel=1e-11)
    return val * lo * ls


@pytest.mark.parametrize(
    "s,l1,l2,d",
    [(0.7, 1.0, 2.0, 0.4), (0.0, 1.0, 1.0, 0.01), (-3.0, 2.0, 0.5, 1.5), (5.0, 1.0, 1.0, 0.2)],
)
def test_parallel_closed_form_matches_quadrature(s, l1, l2, d):
    val = parallel_pair_integral(np.array(s), np.array(l1), np.array(l2), np.array(d * d))
    ref = _num_pair([0, 0, 0], [l1, 0, 0], [s, d, 0], [s + l2, d, 0], 0.0)
    assert val == pytest.approx(ref, rel=1e-8)


def test_self_term_matches_asymptotic_form():
    # Design notes / Dwight (1936): self term about 2L [ln(2L/a) - 1] for L >> a.
    length, a = 3.0, 0.008
    val = parallel_pair_integral(np.array(0.0), np.array(length), np.array(length), np.array(a * a))
    approx = 2 * length * (np.log(2 * length / a) - 1)
    assert val == pytest.approx(approx, rel=1e-3)


@pytest.mark.parametrize("x1,x2,y1,y2,c", [(-0.5, 1.2, 0.2, 2.0, 0.3), (0.0, 1.0, 0.0, 1.0, 0.005), (1, 3, -2, 2, 1.0)])
def test_perpendicular_closed_form_matches_quadrature(x1, x2, y1, y2, c):
    val = perpendicular_pair_integral(*map(np.array, (x1, x2, y1, y2, c * c)))
    ref, _ = dblquad(lambda y, x: 1 / np.sqrt(x * x + y * y + c * c), x1, x2, y1, y2, epsabs=1e-13, epsrel=1e-11)
    assert val == pytest.approx(ref, rel=1e-8)


def test_line_integral_matches_quadrature_near_and_far():
    a, b = np.array([0.0, 0, 0]), np.array([1.0, 0, 0])
    for p, r2 in [((0.3, 0.2, 0.1), 0.0), ((30.3, 20.2, 0.1), 1e-4), ((1.0, 0.0, 0.01), 0.0), ((-2, 0.001, 0), 0)]:
        p = np.array(p, dtype=float)
        ref, _ = quad(
            lambda t, p=p, r2=r2: 1 / np.sqrt((p[0] - t) ** 2 + p[1] ** 2 + p[2] ** 2 + r2),
            0,
            1,
            epsabs=1e-14,
            epsrel=1e-12,
            limit=200,
        )
        assert line_integral(p, a, b, r2) == pytest.approx(ref, rel=1e-9)


def test_line_integral_no_cancellation_close_to_the_axis():
    # A point 1 micrometre from the middle of a 1 m segment: closed form
    # asinh(0.5/d) * 2 (exact), which the naive log ratio loses to round-off.
    d = 1e-6
    val = line_integral(np.array([0.5, d, 0]), np.array([0.0, 0, 0]), np.array([1.0, 0, 0]), 0.0)
    assert val == pytest.approx(2 * np.arcsinh(0.5 / d), rel=1e-12)


@pytest.mark.parametrize("ratio,bound", [(FAR_RATIO, 2e-5), (25.0, 2e-7)])
def test_far_rule_error_is_bounded(ratio, bound):
    # The corrected mid-point rule (far rule) against the closed forms (near rule) for axis-aligned
    # pairs in all orientations, just beyond the switch-over distance and at 25 lengths: relative
    # error below 2e-5 and 2e-7. The closed forms are checked against scipy.integrate.dblquad above;
    # a few of these pairs are checked against dblquad again here.
    rng = np.random.default_rng(7)
    n = 3000
    oa = np.zeros((n, 3))
    ob = np.tile([1.0, 0, 0], (n, 1))
    u = rng.normal(size=(n, 3))
    u /= np.linalg.norm(u, axis=1)[:, None]
    e = np.eye(3)[rng.integers(0, 3, n)]
    ls = rng.choice([0.5, 1.0], n)
    # the longer segment is 1 m long: mid points just beyond the switch-over distance
    centre = np.array([0.5, 0, 0]) + u * ratio * np.sqrt(FAR_MARGIN) * (1 + 1e-9)
    sa, sb = centre - 0.5 * ls[:, None] * e, centre + 0.5 * ls[:, None] * e
    r2 = np.full(n, 1e-4)
    near = near_pair_integral(oa, ob, sa, sb, r2)
    far = far_pair_integral(ob - oa, sb - sa, 0.5 * (oa + ob) - centre, r2)
    chosen = pair_integral(oa, ob, sa, sb, r2)
    assert np.max(np.abs(chosen / far - 1)) < 1e-13  # the far rule is the one in use there
    err = np.abs(far / near - 1)
    assert np.max(err) < bound
    assert np.max(err) > 1e-3 * bound  # the two rules do differ: the comparison can fail
    for k in range(3):
        assert near[k] == pytest.approx(_num_pair(oa[k], ob[k], sa[k], sb[k], 1e-4), rel=1e-9)


def test_oblique_pairs_match_quadrature():
    oa, ob = np.array([[0.0, 0, 0.5]]), np.array([[1.0, 0.3, 0.5]])
    sa, sb = np.array([[0.5, 1.0, 0.5]]), np.array([[1.2, 1.8, 1.1]])
    val = pair_integral(oa, ob, sa, sb, np.array([1e-4]))[0]
    assert val == pytest.approx(_num_pair(oa[0], ob[0], sa[0], sb[0], 1e-4), rel=1e-6)


def test_pair_integral_symmetric_in_observer_and_source():
    rng = np.random.default_rng(3)
    oa = rng.uniform(0, 5, (50, 3))
    ob = oa + np.eye(3)[rng.integers(0, 3, 50)]
    sa = rng.uniform(0, 5, (50, 3))
    sb = sa + np.eye(3)[rng.integers(0, 3, 50)] * 0.7
    r2 = np.full(50, 1e-4)
    assert np.allclose(pair_integral(oa, ob, sa, sb, r2), pair_integral(sa, sb, oa, ob, r2), rtol=1e-10)
