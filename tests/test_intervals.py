"""Exact intervals: each is the set of shifts that the test does not reject.

Checked by brute force: at each endpoint itself, and at points just inside and just outside
it, the data are shifted (in exact rational arithmetic) and the brute-force test is run
again, at alpha/2 per side for a two-sided interval (alpha on the one side for a one-sided
bound), with alpha as the decimal written (1 - 0.9 is 1/10, not 0.0999...98). The rule (README,
p-value rules; `engine/core/confidence.py`): a value is kept when its one-sided p-values are
all above alpha_side; at a jump the tie counts as extreme, so ends are closed. The rank and
sign intervals are also computed independently from the order statistics and the null laws
listed by brute force.
"""
from fractions import Fraction
from functools import lru_cache

import numpy as np
import pytest

import brute
from conftest import ALTERNATIVES, inline, result_of
from permq.engine import onesample, rankintervals, twosample

EPS = Fraction(1, 10 ** 6)   # far below the spacing of the jumps for data on a 0.01 grid
LEVELS = (0.8, 0.9, 0.95)

TWO_SAMPLES = [
    ([1.2, 3.4, 3.4, 0.5, 2.0], [3.4, 2.0, 5.1, 4.4, 2.0, 6.0, 0.5]),
    ([12.3, 10.9, 14.1, 11.6, 13.8, 12.2], [9.7, 11.1, 10.2, 12.9, 8.4]),
    ([2.0, 2.0, 3.0, 5.0, 5.0, 5.0], [1.0, 2.0, 4.0, 0.5]),
]
DIFFERENCES = [
    [0.5, -0.3, 0.0, 1.2, 0.5, -0.5, 0.8, 0.0, 2.1],
    [1.83, -0.64, 0.57, 2.91, 1.12, -0.28, 0.95, 0.57],
    [-2.6, -1.1, 0.7, -3.8, -0.2, -1.9, 2.4, -4.5],
]


def _alpha_side(level, alternative):
    alpha = 1 - Fraction(level).limit_denominator(1000)
    return alpha / 2 if alternative == "two-sided" else alpha


def _keeps(p_higher, p_lower, level, alternative):
    side = _alpha_side(level, alternative)
    ok = True
    if alternative in ("two-sided", "higher"):
        ok &= p_higher > side
    if alternative in ("two-sided", "lower"):
        ok &= p_lower > side
    return ok


def _check_endpoints(interval, accepted, closed=True):
    """lo + eps and hi - eps are kept; lo - eps and hi + eps are rejected; with `closed`, the
    end itself (the rational the float stands for) is kept too."""
    lo, hi = interval
    assert lo <= hi
    for end, inward in ((lo, 1), (hi, -1)):
        if np.isinf(end):
            continue
        e = Fraction(end)
        assert accepted(e + inward * EPS), ("just inside rejected", end)
        assert not accepted(e - inward * EPS), ("just outside kept", end)
        if closed:
            assert accepted(e.limit_denominator(10 ** 6)), ("the end itself rejected", end)


@lru_cache(maxsize=None)
def _two_sample_keeps(family, x, y, delta, level, alternative):
    shifted = [brute.frac(v) - delta for v in x]
    values, t = brute.two_sample_null(family, shifted, [brute.frac(v) for v in y])
    return _keeps(brute.tail_share(values, t, "higher"), brute.tail_share(values, t, "lower"),
                  level, alternative)


@lru_cache(maxsize=None)
def _one_sample_keeps(family, d, delta, level, alternative):
    values, t = brute.one_sample_null(family, [brute.frac(v) - delta for v in d])
    return _keeps(brute.tail_share(values, t, "higher"), brute.tail_share(values, t, "lower"),
                  level, alternative)


# ---------------------------------------------------------------- difference in means

@pytest.mark.parametrize("x, y", TWO_SAMPLES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("level", LEVELS)
@pytest.mark.parametrize("algorithm", ("dp-integer", "enumeration"))
def test_difference_in_means_interval_is_the_set_not_rejected(x, y, alternative, level,
                                                              algorithm):
    _, interval = twosample.run("means", x, y, alternative, algorithm, level)
    _check_endpoints(interval, lambda d: _two_sample_keeps("means", tuple(x), tuple(y), d,
                                                           level, alternative))
    lo, hi = interval
    if alternative == "higher":
        assert hi == np.inf and np.isfinite(lo)
    elif alternative == "lower":
        assert lo == -np.inf and np.isfinite(hi)
    assert lo <= np.mean(x) - np.mean(y) <= hi


def test_counting_and_enumeration_give_the_same_mean_interval():
    for x, y in TWO_SAMPLES:
        a = twosample.run("means", x, y, "two-sided", "dp-integer", 0.95)[1]
        b = twosample.run("means", x, y, "two-sided", "enumeration", 0.95)[1]
        assert a == pytest.approx(b, rel=1e-12)


def test_an_end_at_exactly_alpha_over_two_is_left_out():
    # C(6, 3) = 20 splits: at 90% alpha/2 = 1/20 exactly, the one-sided p of the shifts past
    # the observed separation; those shifts are rejected (p <= alpha/2), so the set is [-5, -1]
    # (brute force over the 20 splits in exact fractions; 1 - 0.9 is 0.0999...98 in floating
    # point, which used to keep them and give the whole line)
    for algorithm in ("dp-integer", "enumeration"):
        _, interval = twosample.run("means", [1, 2, 3], [4, 5, 6], "two-sided", algorithm, 0.9)
        assert interval == (-5.0, -1.0)
        _check_endpoints(interval, lambda d: _two_sample_keeps("means", (1, 2, 3), (4, 5, 6), d,
                                                               0.9, "two-sided"))
    r = result_of("compare [1,2,3] vs [4,5,6] confidence 90%")
    assert r.estimate.interval == (-5.0, -1.0)


def test_too_few_arrangements_give_the_whole_line():
    # C(6, 3) = 20 splits: the smallest one-sided p is 1/20 > 0.025, nothing can be rejected
    _, interval = twosample.run("means", [1, 2, 3], [4, 5, 6], "two-sided", "dp-integer", 0.95)
    assert interval == (-np.inf, np.inf)
    assert _two_sample_keeps("means", (1, 2, 3), (4, 5, 6), Fraction(-100), 0.95, "two-sided")


def test_the_interval_reaches_the_result():
    x, y = TWO_SAMPLES[1]
    r = result_of(f"compare {inline(x)} vs {inline(y)} confidence 90%")
    want = twosample.run("means", x, y, "two-sided", "dp-integer", 0.9)[1]
    assert r.estimate.interval == pytest.approx(want, rel=1e-12)
    assert r.estimate.level == 0.9


# ---------------------------------------------------------------- mean difference (paired)

@pytest.mark.parametrize("d", DIFFERENCES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("level", LEVELS)
@pytest.mark.parametrize("algorithm", ("dp-integer", "enumeration"))
def test_mean_difference_interval_is_the_set_not_rejected(d, alternative, level, algorithm):
    _, interval = onesample.run("means", d, alternative, algorithm, level)
    _check_endpoints(interval, lambda delta: _one_sample_keeps("means", tuple(d), delta, level,
                                                               alternative))
    assert interval[0] <= np.mean(d) <= interval[1]


# ---------------------------------------------------------------- Hodges-Lehmann, two samples

def _tie_free_pair(seed, n1, n2):
    rng = np.random.default_rng(seed)
    while True:
        x = np.round(rng.normal(10, 2, n1), 3)
        y = np.round(rng.normal(9, 2, n2), 3)
        diffs = (x[:, None] - y[None, :]).ravel()
        if len(np.unique(np.round(diffs, 6))) == diffs.size:
            return [float(v) for v in x], [float(v) for v in y]


HL_PAIRS = [_tie_free_pair(1, 5, 6), _tie_free_pair(2, 7, 4), _tie_free_pair(3, 6, 6)]


@pytest.mark.parametrize("n1, n2", [(1, 1), (1, 6), (3, 5), (6, 3), (7, 7), (4, 10)])
def test_mann_whitney_law_by_generating_function_equals_listing(n1, n2):
    got = rankintervals.mann_whitney_counts(n1, n2)
    assert got.tolist() == brute.mann_whitney_u_counts(n1, n2)     # exact integers here


@pytest.mark.parametrize("n1, n2, seed", [(8, 13, 1), (40, 25, 2), (90, 110, 3), (9, 300, 4)])
def test_mann_whitney_law_matches_scipy_exact(n1, n2, seed):
    from scipy import stats

    rng = np.random.default_rng(seed)
    cdf = rankintervals.mann_whitney_cdf(n1, n2)
    for shift in (0.0, 0.4, 1.0):
        x, y = rng.normal(size=n1), rng.normal(shift, 1, size=n2)
        ref = stats.mannwhitneyu(x, y, method="exact", alternative="less")
        assert cdf[int(ref.statistic)] == pytest.approx(ref.pvalue, rel=1e-11, abs=1e-300)


@pytest.mark.parametrize("x, y", HL_PAIRS + TWO_SAMPLES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_hodges_lehmann_interval_from_the_listed_mann_whitney_law(x, y, alternative):
    level = 0.95
    est, (lo, hi), exact = rankintervals.hodges_lehmann_two_sample(x, y, level, alternative)
    assert exact
    diffs = sorted(a - b for a in x for b in y)
    m = len(diffs)
    c = brute.critical_count(brute.mann_whitney_u_counts(len(x), len(y)),
                             float(_alpha_side(level, alternative)))
    assert est == pytest.approx(float(np.median(diffs)))
    want_lo = diffs[c] if alternative != "lower" and c >= 0 else -np.inf
    want_hi = diffs[m - 1 - c] if alternative != "higher" and c >= 0 else np.inf
    assert (lo, hi) == pytest.approx((want_lo, want_hi))
    assert lo <= est <= hi


@pytest.mark.parametrize("x, y", HL_PAIRS)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_hodges_lehmann_interval_inverts_the_rank_sum_test(x, y, alternative):
    """Without ties the interval is exactly the set of shifts the rank-sum test keeps."""
    _, interval, _ = rankintervals.hodges_lehmann_two_sample(x, y, 0.95, alternative)
    _check_endpoints(interval, lambda d: _two_sample_keeps("ranks", tuple(x), tuple(y), d, 0.95,
                                                           alternative),
                     closed=False)   # the end itself: order statistics, see above


# ---------------------------------------------------------------- Hodges-Lehmann, one sample

def _tie_free_differences(seed, n):
    rng = np.random.default_rng(seed)
    while True:
        d = np.round(rng.normal(0.8, 1.5, n), 3)
        i, j = np.triu_indices(n)
        walsh = (d[i] + d[j]) / 2
        if len(np.unique(np.round(walsh, 6))) == walsh.size and np.all(d != 0):
            return [float(v) for v in d]


HL_DIFFS = [_tie_free_differences(4, 8), _tie_free_differences(5, 10), _tie_free_differences(6, 7)]


@pytest.mark.parametrize("d", HL_DIFFS + DIFFERENCES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_walsh_interval_from_the_listed_signed_rank_law(d, alternative):
    level = 0.9
    est, (lo, hi), exact = rankintervals.hodges_lehmann_one_sample(d, level, alternative)
    assert exact
    walsh = sorted((d[i] + d[j]) / 2 for i in range(len(d)) for j in range(i, len(d)))
    m = len(walsh)
    c = brute.critical_count(brute.signed_rank_counts(len(d)),
                             float(_alpha_side(level, alternative)))
    assert est == pytest.approx(float(np.median(walsh)))
    want_lo = walsh[c] if alternative != "lower" and c >= 0 else -np.inf
    want_hi = walsh[m - 1 - c] if alternative != "higher" and c >= 0 else np.inf
    assert (lo, hi) == pytest.approx((want_lo, want_hi))
    assert lo <= est <= hi


@pytest.mark.parametrize("d", HL_DIFFS)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_walsh_interval_inverts_the_signed_rank_test(d, alternative):
    _, interval, _ = rankintervals.hodges_lehmann_one_sample(d, 0.9, alternative)
    _check_endpoints(interval, lambda delta: _one_sample_keeps("ranks", tuple(d), delta, 0.9,
                                                               alternative),
                     closed=False)   # the end itself: order statistics, see above


# ---------------------------------------------------------------- sign-test interval

@pytest.mark.parametrize("d", HL_DIFFS + DIFFERENCES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("level", LEVELS)
def test_median_interval_from_binomial_order_statistics(d, alternative, level):
    est, (lo, hi) = rankintervals.median_interval(d, level, alternative)
    s = sorted(d)
    n = len(s)
    c = brute.critical_count(brute.binomial_half_counts(n), float(_alpha_side(level, alternative)))
    want_lo = s[c] if alternative != "lower" and c >= 0 else -np.inf
    want_hi = s[n - 1 - c] if alternative != "higher" and c >= 0 else np.inf
    assert (lo, hi) == (want_lo, want_hi)
    assert est == float(np.median(d)) and lo <= est <= hi


@pytest.mark.parametrize("d", HL_DIFFS)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_median_interval_inverts_the_sign_test(d, alternative):
    _, interval = rankintervals.median_interval(d, 0.9, alternative)
    _check_endpoints(interval, lambda delta: _one_sample_keeps("signs", tuple(d), delta, 0.9,
                                                               alternative),
                     closed=False)   # the end itself: order statistics, see above


def test_rank_and_sign_intervals_reach_the_result():
    d = HL_DIFFS[1]
    r = result_of(f"compare {inline(d)} vs 0 using ranks confidence 90%")
    assert r.estimate.interval == rankintervals.hodges_lehmann_one_sample(d, 0.9, "two-sided")[1]
    r = result_of(f"compare {inline(d)} vs 0 using signs")
    assert r.estimate.interval == rankintervals.median_interval(d, 0.95, "two-sided")[1]
    x, y = HL_PAIRS[0]
    r = result_of(f"compare {inline(x)} vs {inline(y)} using ranks alternative lower")
    assert r.estimate.interval == \
        rankintervals.hodges_lehmann_two_sample(x, y, 0.95, "lower")[1]


# ---------------------------------------------------------------- slopes: the same end rule

def _slope_keeps(y, x, b0, level, alternative):
    """Brute force over every pairing (exact fractions): is slope b0 kept?"""
    r = [brute.frac(v) - b0 * brute.frac(u) for v, u in zip(y, x)]
    return _keeps(brute.association_p("slope", r, x, "higher"),
                  brute.association_p("slope", r, x, "lower"), level, alternative)


def _trend_keeps(y, g, d, b0, level, alternative):
    r = [brute.frac(v) - b0 * brute.frac(d[h]) for v, h in zip(y, g)]
    dd = [brute.frac(v) for v in d]
    return _keeps(brute.trend_p(r, g, dd, "higher"), brute.trend_p(r, g, dd, "lower"), level,
                  alternative)


@pytest.mark.parametrize("level", (0.8, 0.9))
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_slope_interval_ends_follow_the_rule(level, alternative):
    # 5 pairs, 120 pairings: at 90% alpha/2 = 6/120 exactly, where floating point would keep
    # the shifts whose p is exactly alpha/2
    from permq.engine import association

    x = [1.0, 2.0, 3.0, 4.0, 5.0]
    y = [1.1, 1.9, 3.2, 3.9, 5.3]
    est = association.estimate("slope", y, x, alternative, "enumeration", level=level)
    _check_endpoints(est.interval, lambda b: _slope_keeps(tuple(y), tuple(x), b, level,
                                                          alternative))


@pytest.mark.parametrize("level", (0.8, 0.9))
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_trend_slope_interval_ends_follow_the_rule(level, alternative):
    # two ordered groups of 3 with doses 0 and 1: 20 assignments, 1/20 = alpha/2 at 90%
    from permq.engine import ordered

    y = [1.2, 0.8, 2.1, 2.6, 1.9, 3.1]
    g = [0, 0, 0, 1, 1, 1]
    d = [0.0, 1.0]
    est = ordered.slope_estimate(np.array(y), np.array(g), np.array(d), level, alternative)
    _check_endpoints(est.interval, lambda b: _trend_keeps(tuple(y), tuple(g), tuple(d), b, level,
                                                          alternative))
