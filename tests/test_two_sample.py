"""Two independent samples: the engine against scipy.stats and against brute-force enumeration.

scipy is the reference library; tests/brute.py lists every one of the C(N, n1) splits and
recomputes each statistic from the raw values in exact rational arithmetic.
"""
from collections import Counter
from math import comb

import numpy as np
import pytest
from scipy import stats

import brute
from conftest import ALTERNATIVES, assert_exact, inline, result_of
from permq.engine import twosample
from permq.normal import theory
from permq.families.two_sample import NORMAL as TWO_SAMPLE_NORMAL

SCIPY_ALT = {"two-sided": "two-sided", "higher": "greater", "lower": "less"}
FAMILIES = ("means", "ranks", "normal-scores", "medians")
ON_A_GRID = ("means", "ranks", "medians")   # normal scores are irrational: no integer grid

# Data with ties within and across groups, zeros-free and with unequal sizes (made up for the
# checks; the reference values come from the brute-force enumerator, not from a publication).
TIED = [
    ([1.2, 3.4, 3.4, 0.5, 2.0], [3.4, 2.0, 5.1, 4.4, 2.0, 6.0, 0.5]),
    ([2.0, 2.0, 3.0, 5.0, 5.0, 5.0], [1.0, 2.0, 4.0]),
    ([0.5], [0.1, 0.9, 0.5, 0.5]),
    ([10.25, 9.75, 11.0, 10.25], [9.75, 9.75, 12.5, 8.0, 10.25]),
    ([-1.5, 0.0, 2.5, 2.5], [-3.0, -1.5, -1.5, 0.0, 4.0, 1.0, 2.5]),
]
TIED_2_OR_MORE = [pair for pair in TIED if min(map(len, pair)) >= 2]   # scipy needs n >= 2
UNTIED = [
    ([3.1, 4.7, 2.2], [5.9, 1.4, 6.3, 8.8]),
    ([12.3, 10.9, 14.1, 11.6, 13.8], [9.7, 11.1, 10.2, 12.9, 8.4]),
    ([0.31, 0.58, 0.12, 0.95, 0.77, 0.44], [0.29, 0.05, 0.18, 0.63]),
    ([5.5, 7.25, 6.0, 9.0, 4.75, 8.5, 6.5], [3.0, 4.0, 5.0, 7.0, 2.5, 3.5, 6.25, 1.0]),
]


def engine_p(family, x, y, alternative, algorithm, **kw):
    out, _ = twosample.run(family, x, y, alternative, algorithm, 0.95, **kw)
    return out


# ---------------------------------------------------------------- brute force, every algorithm

@pytest.mark.parametrize("x, y", TIED)
@pytest.mark.parametrize("family", FAMILIES)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_enumeration_matches_brute_force(x, y, family, alternative):
    out = engine_p(family, x, y, alternative, "enumeration")
    assert out.method == "exact"
    assert out.arrangements == comb(len(x) + len(y), len(x))
    assert_exact(out.p_value, brute.two_sample_p(family, x, y, alternative))


@pytest.mark.parametrize("x, y", TIED)
@pytest.mark.parametrize("family", ON_A_GRID)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_integer_counting_matches_brute_force(x, y, family, alternative):
    out = engine_p(family, x, y, alternative, "dp-integer")
    assert out.algorithm == "dynamic programming on integer scores"
    assert_exact(out.p_value, brute.two_sample_p(family, x, y, alternative))


@pytest.mark.parametrize("x, y", TIED[:2])
def test_normal_scores_have_no_integer_grid(x, y):
    cands = {c.algorithm: c for c in twosample.candidates("normal-scores", x, y, 1000)}
    assert not cands["dp-integer"].feasible
    assert cands["enumeration"].feasible


EXACT_PAIRS = [(f, "enumeration") for f in FAMILIES] + [(f, "dp-integer") for f in ON_A_GRID]


@pytest.mark.parametrize("x, y", TIED[:4])
@pytest.mark.parametrize("family, algorithm", EXACT_PAIRS)
def test_null_distribution_matches_brute_force(x, y, family, algorithm):
    out = engine_p(family, x, y, "two-sided", algorithm)
    values, _ = brute.two_sample_null(family, x, y)
    tally = Counter(round(float(v), 9) for v in values)
    support = sorted(tally)
    assert len(out.null_support) == len(support)
    np.testing.assert_allclose(np.sort(out.null_support), support, rtol=1e-9, atol=1e-9)
    order = np.argsort(out.null_support)
    expected = [tally[s] / len(values) for s in support]
    np.testing.assert_allclose(np.asarray(out.null_probs)[order], expected, rtol=1e-12)


@pytest.mark.parametrize("x, y", TIED[:3])
@pytest.mark.parametrize("family", FAMILIES)
def test_observed_statistic_matches_brute_force(x, y, family):
    _, t = brute.two_sample_null(family, x, y)
    assert engine_p(family, x, y, "higher", "enumeration").statistic == pytest.approx(float(t))


def test_complete_separation_gives_two_arrangements_in_the_two_sided_tail():
    # 3 + 4 values, fully separated: only the observed split and its mirror are as extreme
    # for the statistics that use every value (the median test sees only above / not above).
    x, y = [1.5, 2.5, 3.5], [4.5, 5.5, 6.5, 7.5]
    for family in ("means", "ranks", "normal-scores"):
        assert_exact(engine_p(family, x, y, "two-sided", "enumeration").p_value, 2 / 35)
        assert_exact(engine_p(family, x, y, "lower", "enumeration").p_value, 1 / 35)
        assert_exact(engine_p(family, x, y, "higher", "enumeration").p_value, 1)


def test_the_language_gives_the_brute_force_p():
    x, y = TIED[0]
    for family in FAMILIES:
        for alternative in ALTERNATIVES:
            r = result_of(f"compare {inline(x)} vs {inline(y)} using {family} "
                          f"alternative {alternative}")
            assert r.outcome.method == "exact"
            assert_exact(r.outcome.p_value, brute.two_sample_p(family, x, y, alternative))


def test_two_sided_rule_is_distance_from_the_null_mean_not_a_doubled_tail():
    """design.md: two-sided p = P(|T - E0 T| >= |t - E0 T|). With unequal sizes and ties the
    null is not symmetric and doubling the smaller one-sided p gives another number."""
    x, y = TIED[0]
    two = engine_p("means", x, y, "two-sided", "dp-integer").p_value
    higher = engine_p("means", x, y, "higher", "dp-integer").p_value
    lower = engine_p("means", x, y, "lower", "dp-integer").p_value
    assert_exact(two, brute.two_sample_p("means", x, y, "two-sided"))
    assert_exact(two, 198 / 792)                    # brute force: 198 of the 792 splits
    assert two != pytest.approx(min(1.0, 2 * min(higher, lower)))


# ---------------------------------------------------------------- Monte Carlo

def test_monte_carlo_lands_in_its_99_percent_interval():
    """Each exact p lies in the Monte Carlo 99% interval; 24 checks, at most 2 misses allowed
    (P(3 or more misses) < 0.002 when every interval covers with probability 0.99)."""
    misses, checks = 0, 0
    for k, (x, y) in enumerate(TIED[:2]):
        for family in FAMILIES:
            for alternative in ALTERNATIVES:
                out = engine_p(family, x, y, alternative, "monte-carlo", draws=3000,
                               seed=100 + k)
                assert out.method == "monte-carlo" and out.draws == 3000
                b_plus_1 = out.p_value * 3001
                assert b_plus_1 == pytest.approx(round(b_plus_1), abs=1e-6)
                lo, hi = out.p_interval
                exact = float(brute.two_sample_p(family, x, y, alternative))
                misses += not (lo <= exact <= hi)
                checks += 1
    assert checks == 24 and misses <= 2


def test_monte_carlo_is_reproducible_with_its_seed():
    x, y = TIED[0]
    a = engine_p("means", x, y, "two-sided", "monte-carlo", draws=5000, seed=7)
    b = engine_p("means", x, y, "two-sided", "monte-carlo", draws=5000, seed=7)
    c = engine_p("means", x, y, "two-sided", "monte-carlo", draws=5000, seed=8)
    assert a.p_value == b.p_value and a.seed == 7
    assert c.p_value != a.p_value


# ---------------------------------------------------------------- scipy: exact Mann-Whitney

@pytest.mark.parametrize("x, y", UNTIED)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("algorithm", ("dp-integer", "enumeration"))
def test_rank_sum_matches_scipy_exact_mann_whitney(x, y, alternative, algorithm):
    out = engine_p("ranks", x, y, alternative, algorithm)
    ref = stats.mannwhitneyu(x, y, alternative=SCIPY_ALT[alternative], method="exact")
    n1 = len(x)
    if alternative != "two-sided":
        assert out.statistic - n1 * (n1 + 1) / 2 == pytest.approx(ref.statistic)
    # Without ties the Mann-Whitney null is symmetric, so scipy's doubled smaller tail equals
    # the rule P(|T - E0 T| >= |t - E0 T|) (common practice).
    assert out.p_value == pytest.approx(ref.pvalue, rel=1e-12)


# ---------------------------------------------------------------- scipy: permutation_test

def _diff_means(a, b, axis=-1):
    return np.mean(a, axis=axis) - np.mean(b, axis=axis)


def _two_sided_from_null(null, observed):
    null = np.asarray(null, float)
    center = null.mean()
    tol = 1e-9 * max(abs(observed - center), np.abs(null - center).max())
    return np.mean(np.abs(null - center) >= abs(observed - center) - tol)


@pytest.mark.parametrize("x, y", TIED_2_OR_MORE + UNTIED[:3])
def test_difference_in_means_matches_scipy_permutation_test(x, y):
    full = stats.permutation_test((x, y), _diff_means, permutation_type="independent",
                                  vectorized=True, n_resamples=np.inf, alternative="greater")
    assert len(full.null_distribution) == comb(len(x) + len(y), len(x))
    for alternative in ("higher", "lower"):
        ref = stats.permutation_test((x, y), _diff_means, permutation_type="independent",
                                     vectorized=True, n_resamples=np.inf,
                                     alternative=SCIPY_ALT[alternative])
        for algorithm in ("dp-integer", "enumeration"):
            assert engine_p("means", x, y, alternative, algorithm).p_value == \
                pytest.approx(ref.pvalue, rel=1e-12)
    two = _two_sided_from_null(full.null_distribution, full.statistic)
    for algorithm in ("dp-integer", "enumeration"):
        assert engine_p("means", x, y, "two-sided", algorithm).p_value == \
            pytest.approx(two, rel=1e-12)


@pytest.mark.parametrize("x, y", TIED_2_OR_MORE[:3])
def test_rank_sum_with_ties_matches_scipy_permutation_test(x, y):
    n1 = len(x)

    def rank_sum(a, b, axis=-1):          # vectorised: scipy passes batches along the last axis
        pooled = np.concatenate([a, b], axis=axis)
        return stats.rankdata(pooled, axis=axis)[..., :n1].sum(axis=axis)

    for alternative in ("higher", "lower"):
        ref = stats.permutation_test((x, y), rank_sum, permutation_type="independent",
                                     n_resamples=np.inf, alternative=SCIPY_ALT[alternative],
                                     vectorized=True)
        assert engine_p("ranks", x, y, alternative, "dp-integer").p_value == \
            pytest.approx(ref.pvalue, rel=1e-12)
    two = _two_sided_from_null(ref.null_distribution, ref.statistic)
    assert engine_p("ranks", x, y, "two-sided", "dp-integer").p_value == \
        pytest.approx(two, rel=1e-12)


# ---------------------------------------------------------------- scipy: normal theory

@pytest.mark.parametrize("x, y", TIED_2_OR_MORE + UNTIED)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_welch_t_and_interval_match_scipy(x, y, alternative):
    nt = theory.welch_t(x, y, 0.9, alternative)
    ref = stats.ttest_ind(x, y, equal_var=False, alternative=SCIPY_ALT[alternative])
    assert nt.statistic == pytest.approx(ref.statistic, rel=1e-10)
    assert nt.df == pytest.approx(ref.df, rel=1e-10)
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-10)
    ci = ref.confidence_interval(0.9)
    assert nt.interval[0] == pytest.approx(ci.low, rel=1e-10)
    assert nt.interval[1] == pytest.approx(ci.high, rel=1e-10)


def test_welch_interval_reaches_the_result():
    x, y = UNTIED[1]
    r = result_of(f"compare {inline(x)} vs {inline(y)} confidence 90%")
    ci = stats.ttest_ind(x, y, equal_var=False).confidence_interval(0.9)
    assert r.normal.interval == pytest.approx((ci.low, ci.high), rel=1e-10)
    assert r.normal.p_value == pytest.approx(stats.ttest_ind(x, y, equal_var=False).pvalue)


@pytest.mark.parametrize("x, y", TIED + UNTIED)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_rank_sum_normal_approximation_matches_scipy(x, y, alternative):
    nt = theory.rank_sum_z(x, y, 0.95, alternative)
    ref = stats.mannwhitneyu(x, y, alternative=SCIPY_ALT[alternative], method="asymptotic",
                             use_continuity=False)
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-9)


@pytest.mark.parametrize("family", ("normal-scores", "medians"))
def test_other_score_approximations_use_the_permutation_moments(family):
    """z = (S - E0 S) / sd0 S with the exact permutation mean and variance of S (common
    practice), the moments taken here from the brute-force null distribution."""
    x, y = TIED[0]
    values, s_obs = brute.two_sample_null(family, x, y)
    v = np.array([float(s) for s in values])
    z = (float(s_obs) - v.mean()) / v.std()
    nt = TWO_SAMPLE_NORMAL[family](x, y, 0.95, "higher")
    assert nt.statistic == pytest.approx(z, rel=1e-9)
    assert nt.p_value == pytest.approx(stats.norm.sf(z), rel=1e-9)
