"""The normal and Student t tails and t quantiles of permq.normal.tails (computed without scipy,
so that a statement does not wait for it to load) against scipy.stats, the reference library,
and against closed forms where scipy itself loses digits."""
import math

import numpy as np
import pytest
from scipy import stats

from permq.normal import tails

DFS = [0.5, 0.7, 1, 1.5, 2, 3.3, 5.53, 10, 29.9, 99.9, 100, 100.5, 1e3, 9999.0, 1e4, 1e5, 1e6,
       1e8]


@pytest.mark.parametrize("df", DFS)
def test_t_tail_matches_scipy(df):
    # scipy's t tail loses digits below |t| of about 1e-4 at small df (the closed forms below)
    ts = np.r_[-np.logspace(-4, 3, 50), np.logspace(-4, 3, 50)]
    for t in ts:
        ref = stats.t.sf(t, df)
        if ref > 1e-300:
            assert tails.t_sf(t, df) == pytest.approx(ref, rel=1e-12, abs=0)


def test_t_tail_small_t_closed_forms():
    for t in (1e-12, 1e-8, 1e-5, 0.3):
        assert tails.t_sf(t, 1) == pytest.approx(0.5 - math.atan(t) / math.pi, rel=1e-15)
        assert tails.t_sf(t, 2) == pytest.approx(0.5 - t / (2 * math.sqrt(2 + t * t)), rel=1e-15)


@pytest.mark.parametrize("df", DFS)
def test_t_quantile_matches_scipy(df):
    for q in (1e-12, 1e-6, 0.0005, 0.005, 0.025, 0.05, 0.1, 0.3, 0.49, 0.5, 0.6, 0.975):
        assert tails.t_isf(q, df) == pytest.approx(stats.t.isf(q, df), rel=1e-12, abs=1e-300)


def test_normal_tail_matches_scipy():
    for z in np.r_[-np.logspace(-8, 1.5, 60), 0.0, np.logspace(-8, 1.5, 60)]:
        assert tails.normal_sf(z) == pytest.approx(stats.norm.sf(z), rel=1e-12)


def test_p_value_rules_and_edges():
    assert tails.p_from_t(2.0, 5, "two-sided") == pytest.approx(2 * stats.t.sf(2.0, 5), rel=1e-13)
    assert tails.p_from_t(-2.0, 5, "lower") == pytest.approx(stats.t.cdf(-2.0, 5), rel=1e-13)
    assert tails.p_from_z(1.5, "higher") == pytest.approx(stats.norm.sf(1.5), rel=1e-13)
    assert tails.p_from_z(1.5, "lower") == pytest.approx(stats.norm.cdf(1.5), rel=1e-13)
    assert math.isnan(tails.p_from_t(float("nan"), 4, "two-sided"))
    assert tails.t_sf(math.inf, 3) == 0.0 and tails.t_sf(-math.inf, 3) == 1.0
    assert tails.t_sf(1.0, math.inf) == pytest.approx(stats.norm.sf(1.0), rel=1e-14)
    lo, hi = tails.t_interval(1.0, 0.5, 7.5, 0.95, "two-sided")
    h = stats.t.isf(0.025, 7.5) * 0.5
    assert (lo, hi) == (pytest.approx(1.0 - h, rel=1e-13), pytest.approx(1.0 + h, rel=1e-13))
    assert tails.t_interval(1.0, 0.5, 7.5, 0.95, "higher")[1] == math.inf


def test_normal_quantile_matches_scipy():
    for q in (1e-300, 1e-100, 1e-20, 1e-8, 1e-3, 0.025, 0.3, 0.5, 0.7, 0.975, 1 - 1e-10):
        assert tails.normal_isf(q) == pytest.approx(stats.norm.isf(q), rel=1e-14, abs=1e-15)


@pytest.mark.parametrize("m", [1, 2, 10, 99, 1000, 10 ** 5, 10 ** 7])
def test_clopper_pearson_bounds_match_scipy(m):
    # the Monte Carlo p-value's interval: beta quantiles with integer parameters; where the two
    # differ beyond 1e-9, scipy's own betainc says ours is the closer root
    from scipy import special

    for b in sorted({0, 1, 2, 5, 9, 10, 11, 30, m // 1000, m // 20, m // 2, m - 1, m}):
        if not 0 <= b <= m:
            continue
        cases = (([(0.005, b, m - b + 1)] if b > 0 else [])
                 + ([(0.995, b + 1, m - b)] if b < m else []))
        for q, a, c in cases:
            ours, ref = tails.beta_ppf(q, a, c), stats.beta.ppf(q, a, c)
            if ours != pytest.approx(ref, rel=1e-9):
                assert abs(special.betainc(a, c, ours) - q) < abs(special.betainc(a, c, ref) - q)
