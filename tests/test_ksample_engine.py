"""Exact engines for three or more groups and for ordered groups.

Tiers of reference: scipy.stats / statsmodels (kruskal, f_oneway, permutation_test, Welch
ANOVA); a brute-force enumerator written here (every distinct assignment, statistics from
their textbook formulas); published worked examples and tables (source beside each check);
identities (the null sums to 1, relabelling, p a multiple of 1/arrangements, counting equals
listing, Monte Carlo near exact).
"""
from __future__ import annotations

import itertools
import math
from functools import lru_cache

import numpy as np
import pytest
from scipy import stats

from permq.engine import ksample as K
from permq.engine.core.counting import multinomial
from permq.engine.ksample import dense as K_dense
from permq.engine.ksample.quadratic import _rank_grid
from permq.engine.core.limits import EXACT_CEILING_SECONDS
from permq.engine import ordered as O
from permq.errors import DataError, PlanError
from permq.normal import ksample as NK

# ----------------------------------------------------------------------------- brute force


@lru_cache(maxsize=None)
def all_assignments(sizes: tuple) -> np.ndarray:
    """Every distinct way to give positions 0..N-1 group labels of these sizes, one a row."""
    rows = []

    def rec(free, g, labels):
        if g == len(sizes) - 1:
            labels[list(free)] = g
            rows.append(labels.copy())
            return
        for pick in itertools.combinations(free, sizes[g]):
            labels[list(pick)] = g
            rec([p for p in free if p not in pick], g + 1, labels)

    rec(list(range(sum(sizes))), 0, np.zeros(sum(sizes), dtype=np.int64))
    return np.array(rows)


# Textbook formulas, vectorised over rows of labels L (M, N); pooled scores do not depend on L.

def _sums(a, L, k):
    return np.stack([(a * (L == i)).sum(axis=1) for i in range(k)], axis=1)


def f_stat(x, L):
    k, N = L.max() + 1, len(x)
    n = np.stack([(L == i).sum(axis=1) for i in range(k)], axis=1)
    means = _sums(x, L, k) / n
    ssb = np.sum(n * (means - x.mean()) ** 2, axis=1)
    ssw = np.sum((x - np.take_along_axis(means, L, axis=1)) ** 2, axis=1)
    with np.errstate(divide="ignore"):
        return (ssb / (k - 1)) / (ssw / (N - k))


def h_stat(x, L):
    N, k = len(x), L.max() + 1
    r = stats.rankdata(x)
    n = np.stack([(L == i).sum(axis=1) for i in range(k)], axis=1)
    h = 12.0 / (N * (N + 1)) * np.sum(_sums(r, L, k) ** 2 / n, axis=1) - 3 * (N + 1)
    t = np.unique(x, return_counts=True)[1]
    return h / (1 - np.sum(t ** 3 - t) / (N ** 3 - N))


def vdw_stat(x, L):
    N, k = len(x), L.max() + 1
    a = stats.norm.ppf(stats.rankdata(x) / (N + 1))
    n = np.stack([(L == i).sum(axis=1) for i in range(k)], axis=1)
    means = _sums(a, L, k) / n
    return (N - 1) * np.sum(n * (means - a.mean()) ** 2, axis=1) / np.sum((a - a.mean()) ** 2)


def median_stat(x, L):
    k = L.max() + 1
    above = (x > np.median(x)).astype(float)
    n = np.stack([(L == i).sum(axis=1) for i in range(k)], axis=1)
    o_hi = _sums(above, L, k)
    out = 0.0
    for o, tot in ((o_hi, above.sum()), (n - o_hi, len(x) - above.sum())):
        e = n * tot / len(x)
        out = out + np.sum((o - e) ** 2 / e, axis=1)
    return out


def jt_stat(x, L):
    d = (x[:, None] < x[None, :]) + 0.5 * (x[:, None] == x[None, :])   # d[i, j]: x_i below x_j
    before = L[:, :, None] < L[:, None, :]                             # group of i before j's
    return np.sum(before * d, axis=(1, 2))


def trend_stat(x, L, d):
    return np.sum(d[L] * x, axis=1)


def brute_p(stat, x, g, alternative="upper", center=None):
    L = all_assignments(tuple(int(n) for n in np.bincount(g)))
    t = float(stat(x, g[None, :])[0])
    vals = stat(x, L)
    tol = 1e-9 * max(1.0, float(np.max(np.abs(vals[np.isfinite(vals)]))))
    if alternative in ("upper", "higher"):
        return float(np.mean(vals >= t - tol)), len(vals)
    if alternative == "lower":
        return float(np.mean(vals <= t + tol)), len(vals)
    return float(np.mean(np.abs(vals - center) >= abs(t - center) - tol)), len(vals)


def one(stat, x, g):
    return float(stat(x, g[None, :])[0])


# Small designs with ties (values chosen here to have ties; not from any publication)
TIED = [
    (np.array([1.0, 2, 2, 3, 5, 5, 5, 7, 8]), np.array([0, 0, 0, 1, 1, 1, 2, 2, 2])),
    (np.array([4.1, 3.3, 4.1, 5.0, 2.2, 3.3, 4.1, 6.0, 6.0]), np.array([0, 1, 1, 2, 0, 2, 2, 1, 2])),
    (np.array([2.0, 2, 1, 3, 3, 3, 0, 4, 2, 1]), np.array([0, 0, 1, 1, 1, 2, 2, 2, 3, 3])),
]


def exact_algorithms(family, x, g):
    return [c.algorithm for c in family.candidates(x, g) if c.exact and c.feasible]


# ----------------------------------------------------------------------------- scipy oracles

@pytest.mark.parametrize("x,g", TIED)
def test_kruskal_statistic_and_chi_square_match_scipy(x, g):
    ref = stats.kruskal(*[x[g == i] for i in range(g.max() + 1)])
    nt = NK.kruskal_chi_square(x, g)
    assert nt.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-10)
    out = K.RANKS.run(x, g, "two-sided", "dp-sums")
    assert out.statistic == pytest.approx(ref.statistic, rel=1e-12)


@pytest.mark.parametrize("x,g", TIED)
def test_anova_f_and_welch_match_scipy_and_statsmodels(x, g):
    from statsmodels.stats.oneway import anova_oneway

    ref = stats.f_oneway(*[x[g == i] for i in range(g.max() + 1)])
    nt = NK.one_way_anova(x, g)
    assert nt.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-10)
    assert K.MEANS.run(x, g, "two-sided", "enumeration").statistic == pytest.approx(ref.statistic)
    rng = np.random.default_rng(5)
    y = rng.normal(size=15) * np.repeat([1.0, 2.0, 4.0], 5)
    gy = np.repeat([0, 1, 2], 5)
    w = anova_oneway(y, gy, use_var="unequal")
    assert NK.welch_anova(y, gy).statistic == pytest.approx(w.statistic, rel=1e-10)
    assert NK.welch_anova(y, gy).p_value == pytest.approx(w.pvalue, rel=1e-10)


@pytest.mark.parametrize("x,g", TIED[:2])
def test_exact_f_and_h_match_scipy_permutation_test(x, g):
    samples = [x[g == i] for i in range(g.max() + 1)]
    for family, stat in ((K.MEANS, lambda *s, axis: stats.f_oneway(*s, axis=axis).statistic),
                         (K.RANKS, lambda *s, axis: stats.kruskal(*s, axis=axis).statistic)):
        ref = stats.permutation_test(samples, stat, permutation_type="independent",
                                     n_resamples=np.inf, alternative="greater", vectorized=True)
        for algorithm in exact_algorithms(family, x, g):
            out = family.run(x, g, "two-sided", algorithm)
            assert out.p_value == pytest.approx(ref.pvalue, abs=1e-12), (family.key, algorithm)


# ----------------------------------------------------------------------------- brute force

@pytest.mark.parametrize("x,g", TIED)
@pytest.mark.parametrize("family,stat", [(K.MEANS, f_stat), (K.RANKS, h_stat),
                                         (K.NORMAL_SCORES, vdw_stat), (K.MEDIANS, median_stat)])
def test_quadratic_families_match_brute_force(x, g, family, stat):
    p, count = brute_p(stat, x, g)
    algorithms = exact_algorithms(family, x, g)
    assert "enumeration" in algorithms and len(algorithms) >= (1 if family is K.NORMAL_SCORES else 2)
    for algorithm in algorithms:
        out = family.run(x, g, "two-sided", algorithm)
        assert out.statistic == pytest.approx(one(stat, x, g), rel=1e-10)
        assert out.p_value == pytest.approx(p, abs=1e-12), algorithm
        assert out.arrangements == count == multinomial(np.bincount(g))
        assert out.method == "exact" and out.algorithm


@pytest.mark.parametrize("x,g", TIED)
def test_jonckheere_matches_brute_force_all_alternatives(x, g):
    N, n = len(x), np.bincount(g)
    center = (N * N - np.sum(n ** 2)) / 4.0
    for alternative in ("higher", "lower", "two-sided"):
        p, _ = brute_p(jt_stat, x, g, alternative, center)
        out = O.JONCKHEERE_TERPSTRA.run(x, g, alternative, "dp-counts")
        assert out.statistic == one(jt_stat, x, g)
        assert out.p_value == pytest.approx(p, abs=1e-12), alternative


@pytest.mark.parametrize("x,g", TIED)
@pytest.mark.parametrize("scores", [None, [0.0, 0.5, 2.0, 3.5]])
def test_trend_matches_brute_force_all_alternatives(x, g, scores):
    k = g.max() + 1
    d = np.arange(1.0, k + 1) if scores is None else np.array(scores[:k])
    center = np.mean(x) * np.sum(np.bincount(g) * d)
    for alternative in ("higher", "lower", "two-sided"):
        p, _ = brute_p(lambda v, a: trend_stat(v, a, d), x, g, alternative, center)
        for algorithm in exact_algorithms(O.LINEAR_TREND, x, g):
            out = O.LINEAR_TREND.run(x, g, alternative, algorithm, scores=d)
            assert out.statistic == pytest.approx(one(lambda v, a: trend_stat(v, a, d), x, g))
            assert out.p_value == pytest.approx(p, abs=1e-12), (alternative, algorithm)


def test_trend_counting_merges_groups_with_equal_scores():
    x, g = TIED[2]
    d = np.array([1.0, 2.0, 2.0, 3.0])
    center = np.mean(x) * np.sum(np.bincount(g) * d)
    p, _ = brute_p(lambda v, a: trend_stat(v, a, d), x, g, "two-sided", center)
    out = O.LINEAR_TREND.run(x, g, "two-sided", "dp-counts", scores=d)
    assert out.p_value == pytest.approx(p, abs=1e-12)
    assert out.null_probs.sum() == pytest.approx(1.0)


def test_slope_interval_ends_are_where_the_inverted_test_turns():
    x = np.array([1.2, 0.8, 2.0, 2.6, 1.9, 3.1, 3.8, 2.7, 4.4])
    g = np.array([0, 0, 0, 1, 1, 1, 2, 2, 2])
    d = np.array([0.0, 1.0, 2.0])
    est = O.slope_estimate(x, g, d, level=0.90)
    lo, hi = est.interval
    assert lo < est.value < hi and "exact" in est.method
    di = d[g]

    def p_tail(b0, alternative):
        r = x - b0 * di
        return brute_p(lambda v, a: trend_stat(v, a, d), r, g, alternative)[0]

    eps = 1e-6 * (hi - lo)
    assert p_tail(lo + eps, "higher") > 0.05 >= p_tail(lo - eps, "higher")
    assert p_tail(hi - eps, "lower") > 0.05 >= p_tail(hi + eps, "lower")
    one = O.slope_estimate(x, g, d, level=0.95, alternative="higher")
    assert one.interval[1] == math.inf and one.interval[0] == pytest.approx(lo, abs=1e-9)


# ----------------------------------------------------------------------------- published examples

# S. Sawyer, "Nonparametric one-way layouts: Kruskal-Wallis, Jonckheere-Terpstra", worked
# example OneWayLayout (Math 408 course notes, Washington University in St. Louis, 2007),
# three treatments of five with a triple tie at 139. Read: H (tie-corrected) 6.76835, chi-square
# p 0.0339; J = 62.5, tie-corrected Var(J) 88.8919, Z = 2.6516, two-sided p 0.00801; simulated
# exact p-values from 100,000 permutations: Kruskal-Wallis 2472/100000, Jonckheere-Terpstra
# (two-sided) 586/100000.
SAWYER_X = np.array([53, 31, 139, 5, 16, 75, 64, 205, 97, 139, 54, 139, 194, 1253, 275], float)
SAWYER_G = np.repeat([0, 1, 2], 5)


def test_sawyer_worked_example_kruskal_wallis():
    nt = NK.kruskal_chi_square(SAWYER_X, SAWYER_G)
    assert nt.statistic == pytest.approx(6.76835, abs=5e-6)
    assert nt.p_value == pytest.approx(0.0339, abs=5e-5)
    out = K.RANKS.run(SAWYER_X, SAWYER_G, "two-sided", "dp-sums")
    se = math.sqrt(0.02472 * (1 - 0.02472) / 1e5)
    assert abs(out.p_value - 0.02472) < 4 * se          # their Monte Carlo estimate


def test_sawyer_worked_example_jonckheere_terpstra():
    out = O.JONCKHEERE_TERPSTRA.run(SAWYER_X, SAWYER_G, "two-sided", "dp-counts")
    assert out.statistic == 62.5
    assert NK.jonckheere_variance(SAWYER_X, SAWYER_G) == pytest.approx(88.8919, abs=5e-5)
    nt = NK.jonckheere_normal(SAWYER_X, SAWYER_G, "two-sided")
    assert nt.statistic == pytest.approx(2.6516, abs=5e-5)
    assert nt.p_value == pytest.approx(0.00801, abs=5e-6)
    se = math.sqrt(0.00586 * (1 - 0.00586) / 1e5)
    assert abs(out.p_value - 0.00586) < 4 * se          # their Monte Carlo estimate


# Kruskal & Wallis (1952), "Use of ranks in one-criterion variance analysis", JASA 47, exact
# table for three samples of up to five (reproduced in Siegel & Castellan, Nonparametric
# Statistics for the Behavioral Sciences, 1988, Table O): P(H >= h), no ties. FROM MEMORY.
KW_TABLE_FROM_MEMORY = [
    ((2, 2, 2), 4.5714, 0.067), ((2, 2, 2), 3.7143, 0.200),
    ((3, 3, 3), 7.2000, 0.004), ((3, 3, 3), 6.4889, 0.011), ((3, 3, 3), 5.6889, 0.029),
    ((3, 3, 3), 5.6000, 0.050), ((3, 3, 3), 5.0667, 0.086), ((3, 3, 3), 4.6222, 0.100),
    ((5, 5, 5), 8.0000, 0.009), ((5, 5, 5), 7.9800, 0.010), ((5, 5, 5), 5.7800, 0.049),
    ((5, 5, 5), 5.6600, 0.051), ((5, 5, 5), 4.5600, 0.100), ((5, 5, 5), 4.5000, 0.102),
]


@pytest.mark.parametrize("sizes,h,p", KW_TABLE_FROM_MEMORY)
def test_kruskal_wallis_exact_table_from_memory(sizes, h, p):
    x = np.arange(sum(sizes), dtype=float)
    for algorithm in ("dp-sums", "dp-dense"):
        out = K.RANKS.run(x, np.repeat(np.arange(3), sizes), "two-sided", algorithm)
        tail = out.null_probs[out.null_support >= h - 1e-4].sum()
        assert tail == pytest.approx(p, abs=6e-4)


@pytest.mark.parametrize("sizes, levels", [((8, 8, 8), 12), ((6, 9, 4), 5), ((7, 7, 7), 0),
                                            ((10, 3, 6), 0)])
def test_dense_tables_of_sums_give_the_same_law_as_the_state_lists(sizes, levels):
    rng = np.random.default_rng(sum(sizes) + levels)
    n = sum(sizes)
    x = rng.integers(0, levels, n).astype(float) if levels else rng.normal(size=n)
    z = _rank_grid(x).integers
    dense_q, dense_w = K_dense.count_three(z, sizes)
    list_q, list_w = K.count_sum_squares(z, sizes)
    assert dense_q.tolist() == list_q.tolist()
    assert dense_w.tolist() == list_w.tolist()          # exact integers at these sizes
    assert dense_w.sum() == multinomial(sizes)
    ops, _ = K_dense.work(z, sizes)
    assert 0 < ops < math.inf


def test_dense_tables_of_means_on_a_grid_match_enumeration():
    x = np.array([1.2, 3.4, 2.2, 1.2, 5.0, 2.2, 3.3, 4.1, 0.5, 2.2, 1.9, 3.0])
    g = np.repeat([0, 1, 2], [4, 5, 3])
    a = K.MEANS.run(x, g, "two-sided", "dp-dense")
    b = K.MEANS.run(x, g, "two-sided", "enumeration")
    assert a.p_value == pytest.approx(b.p_value, abs=1e-12)


@pytest.mark.parametrize("alternative,side", [("higher", "greater"), ("lower", "less"),
                                              ("two-sided", "two-sided")])
def test_two_ordered_groups_give_the_exact_mann_whitney_p(alternative, side):
    # J of two groups is the Mann-Whitney count of pairs (first below second): scipy's exact
    # Mann-Whitney distribution (no ties) is a reference for the counting.
    rng = np.random.default_rng(4)
    x = rng.permutation(17).astype(float)
    g = np.repeat([0, 1], [8, 9])
    ref = stats.mannwhitneyu(x[g == 1], x[g == 0], alternative=side, method="exact")
    out = O.JONCKHEERE_TERPSTRA.run(x, g, alternative, "dp-counts")
    assert out.statistic == ref.statistic
    assert out.p_value == pytest.approx(ref.pvalue, rel=1e-10)


# ----------------------------------------------------------------------------- identities

@pytest.mark.parametrize("family", [K.MEANS, K.RANKS, K.NORMAL_SCORES, K.MEDIANS])
def test_null_sums_to_one_and_p_is_a_multiple_of_one_over_arrangements(family):
    x, g = TIED[2]
    for algorithm in exact_algorithms(family, x, g):
        out = family.run(x, g, "two-sided", algorithm)
        assert out.null_probs.sum() == pytest.approx(1.0, abs=1e-12)
        assert out.p_value == pytest.approx(np.sum(out.null_probs[out.null_support >=
                                                                  out.statistic * (1 - 1e-9)]))
        count = out.p_value * out.arrangements
        assert count == pytest.approx(round(count), abs=1e-6)


def test_ordered_null_sums_to_one_and_has_the_known_mean_and_variance():
    x, g = TIED[2]
    out = O.JONCKHEERE_TERPSTRA.run(x, g, "higher", "dp-counts")
    mean = float(np.sum(out.null_support * out.null_probs))
    var = float(np.sum((out.null_support - mean) ** 2 * out.null_probs))
    assert out.null_probs.sum() == pytest.approx(1.0, abs=1e-12)
    assert mean == pytest.approx((len(x) ** 2 - np.sum(np.bincount(g) ** 2)) / 4.0)
    assert var == pytest.approx(NK.jonckheere_variance(x, g), rel=1e-10)   # tie-corrected formula
    count = out.p_value * out.arrangements
    assert count == pytest.approx(round(count), abs=1e-6)


def test_relabelling_groups_leaves_h_unchanged():
    x, g = TIED[2]
    ref = K.RANKS.run(x, g, "two-sided", "dp-sums")
    for perm in ([3, 2, 1, 0], [1, 0, 3, 2], [2, 3, 0, 1]):
        out = K.RANKS.run(x, np.array(perm)[g], "two-sided", "dp-sums")
        assert out.statistic == pytest.approx(ref.statistic, rel=1e-12)
        assert out.p_value == pytest.approx(ref.p_value, abs=1e-12)


def test_reversing_the_order_swaps_the_tails_of_jonckheere():
    x, g = TIED[1]
    up = O.JONCKHEERE_TERPSTRA.run(x, g, "higher", "dp-counts")
    down = O.JONCKHEERE_TERPSTRA.run(x, 2 - g, "lower", "dp-counts")
    assert up.p_value == pytest.approx(down.p_value, abs=1e-12)


def test_larger_designs_count_every_assignment():
    rng = np.random.default_rng(11)
    x = rng.integers(0, 12, 24).astype(float)              # 3 groups of 8 with ties
    out = K.RANKS.run(x, np.repeat([0, 1, 2], 8), "two-sided", "dp-sums")
    assert out.arrangements == multinomial([8, 8, 8]) == 9465511770
    assert out.null_probs.sum() == pytest.approx(1.0, abs=1e-12)
    x4 = rng.permutation(20).astype(float)                 # 4 groups of 5
    g4 = np.repeat([0, 1, 2, 3], 5)
    out4 = K.RANKS.run(x4, g4, "two-sided", "dp-sums")
    mc = K.RANKS.run(x4, g4, "two-sided", "monte-carlo", draws=20000, seed=3)
    assert mc.p_interval[0] - 1e-3 <= out4.p_value <= mc.p_interval[1] + 1e-3
    jt = O.JONCKHEERE_TERPSTRA.run(rng.integers(0, 8, 24).astype(float), np.repeat(range(4), 6),
                                   "higher", "dp-counts")
    assert jt.arrangements == multinomial([6] * 4) and jt.null_probs.sum() == pytest.approx(1)


# ----------------------------------------------------------------------------- Monte Carlo

@pytest.mark.parametrize("family", [K.MEANS, K.RANKS, K.NORMAL_SCORES, K.MEDIANS])
def test_monte_carlo_near_exact_and_reproducible(family):
    x, g = TIED[0]
    exact = family.run(x, g, "two-sided", "enumeration")
    a = family.run(x, g, "two-sided", "monte-carlo", draws=20000, seed=7)
    b = family.run(x, g, "two-sided", "monte-carlo", draws=20000, seed=7)
    assert a.p_value == b.p_value and a.seed == 7 and a.draws == 20000
    assert a.method == "monte-carlo" and a.arrangements is None
    lo, hi = a.p_interval
    assert lo - 2e-3 <= exact.p_value <= hi + 2e-3


@pytest.mark.parametrize("alternative", ["higher", "lower", "two-sided"])
def test_ordered_monte_carlo_near_exact(alternative):
    x, g = TIED[2]
    for fam, algorithm in ((O.JONCKHEERE_TERPSTRA, "dp-counts"), (O.LINEAR_TREND, "dp-counts")):
        exact = fam.run(x, g, alternative, algorithm)
        # four seeds pooled (80,000 draws): within 3.5 binomial standard errors of the exact p
        hits = 0.0
        for seed in (5, 6, 7, 8):
            mc = fam.run(x, g, alternative, "monte-carlo", draws=20000, seed=seed)
            hits += mc.p_value * 20001 - 1
        p = hits / 80000
        assert abs(p - exact.p_value) <= 3.5 * np.sqrt(p * (1 - p) / 80000)


# ----------------------------------------------------------------------------- edges and words

def test_one_sided_alternative_is_read_as_upper_tail_with_a_warning():
    x, g = TIED[0]
    two = K.RANKS.run(x, g, "two-sided", "dp-sums")
    one = K.RANKS.run(x, g, "higher", "dp-sums")
    assert one.p_value == two.p_value and not two.warnings
    assert any("upper tail" in w for w in one.warnings)


def test_all_values_equal_gives_p_one():
    x, g = np.ones(6), np.array([0, 0, 1, 1, 2, 2])
    for fam in (K.MEANS, K.RANKS, K.MEDIANS):
        out = fam.run(x, g, "two-sided", "enumeration")
        assert out.p_value == 1.0 and out.warnings
    assert O.LINEAR_TREND.run(x, g, "higher", "enumeration").p_value == 1.0


def test_candidates_report_arrangements_and_feasibility():
    x, g = TIED[0]
    by_key = {c.algorithm: c for c in K.NORMAL_SCORES.candidates(x, g)}
    assert not by_key["dp-sums"].feasible and by_key["enumeration"].feasible
    for fam in K.FAMILIES.values():
        for c in fam.candidates(x, g):
            assert c.arrangements == 1680 and c.ops > 0 and c.description
    big = np.random.default_rng(1).normal(size=60)
    cands = {c.algorithm: c for c in K.MEANS.candidates(big, np.repeat(range(4), 15))}
    # listing 1e33 assignments applies but is priced past the hard ceiling: the plan refuses it
    assert cands["enumeration"].seconds > EXACT_CEILING_SECONDS and cands["monte-carlo"].feasible


def test_bad_inputs_are_refused():
    with pytest.raises(DataError):
        K.RANKS.run([1.0, 2.0, 3.0], [0, 2, 2], "two-sided", "dp-sums")     # group 1 empty
    with pytest.raises(DataError):
        K.RANKS.run([1.0, np.nan, 3.0], [0, 1, 1], "two-sided", "dp-sums")
    with pytest.raises(PlanError):
        K.NORMAL_SCORES.run([1.0, 2.0, 3.0, 4.0], [0, 0, 1, 1], "two-sided", "dp-sums")
    with pytest.raises(DataError):
        O.LINEAR_TREND.run([1.0, 2.0, 3.0], [0, 1, 2], "higher", "enumeration", scores=[1, 2])


def test_linear_trend_t_against_statsmodels_contrast():
    import statsmodels.api as sm

    x, g = TIED[2]
    d = np.array([1.0, 2.0, 3.0, 4.0])
    nt = NK.linear_trend_t(x, g, d, "two-sided")
    dummies = (g[:, None] == np.arange(4)).astype(float)
    fit = sm.OLS(x, dummies).fit()
    c = d - np.sum(np.bincount(g) * d) / len(x)                          # weighted contrast
    w = c * np.bincount(g)
    res = fit.t_test(w)
    assert nt.statistic == pytest.approx(float(res.tvalue.item()), rel=1e-10)
    assert nt.p_value == pytest.approx(float(res.pvalue), rel=1e-10)


def test_group_summaries():
    rows = NK.group_summaries([1.0, 3.0, 2.0, 8.0, 9.0], [0, 0, 1, 1, 1], ["a", "b"])
    assert rows[0] == {"name": "a", "n": 2, "mean": 2.0, "median": 2.0, "sd": pytest.approx(math.sqrt(2))}
    assert rows[1]["median"] == 8.0 and rows[1]["n"] == 3
