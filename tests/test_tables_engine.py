"""Table engines (permq/engine/tables*.py) and their normal theory (permq/normal/tables.py),
checked against scipy.stats, statsmodels, a brute-force enumerator of every table with the
given margins written here (exact rational arithmetic), identities, and published values."""
from __future__ import annotations

import time
from fractions import Fraction
from math import factorial, log

import numpy as np
import pytest
from scipy import stats
from scipy.stats.contingency import odds_ratio as scipy_odds_ratio
from statsmodels.stats.contingency_tables import Table, Table2x2, mcnemar as sm_mcnemar
from statsmodels.stats.proportion import proportion_confint, proportions_ztest

from permq.engine.tables import rxc as T
from permq.engine.tables import twobytwo as F
from permq.engine.tables import join as J
from permq.engine.tables import network as TN
from permq.engine.tables import paired as P
from permq.engine.tables import proportion as B
from permq.engine.core.progress import Progress
from permq.errors import Cancelled, PlanError
from permq.normal import tables as N

ALTS = ("higher", "lower", "two-sided")
SCIPY_ALT = {"higher": "greater", "lower": "less", "two-sided": "two-sided"}
RXC_STATS = ("fisher", "chi-square", "likelihood-ratio", "trend")

# Small tables made up for these checks (not published): zeros, unequal margins, ties.
SMALL = [
    [[3, 1, 2], [1, 4, 0], [2, 2, 5]],
    [[0, 3, 1, 2], [4, 0, 2, 1]],
    [[2, 0], [1, 3], [0, 4], [3, 1]],
    [[1, 2, 0, 1], [0, 1, 3, 1], [2, 0, 1, 2]],
    [[3, 1, 1], [1, 3, 1], [1, 1, 3]],          # equal margins: many exact ties
    [[5, 0, 0], [0, 5, 0], [0, 0, 5]],
    [[2, 2, 2], [2, 2, 2]],                     # independence exactly: p = 1
    [[4, 1], [1, 4]],
    [[12, 1, 0, 0], [0, 2, 10, 15]],            # p near 1e-10: relative accuracy of small p
]


# ---------------------------------------------------------------- brute force (independent of the engine)

def all_tables(rows, cols):
    """Every non-negative integer table with these margins."""
    if len(cols) == 1:
        yield [[r] for r in rows]
        return
    for first in _columns(cols[0], list(rows)):
        rest = [r - x for r, x in zip(rows, first)]
        for tail in all_tables(rest, cols[1:]):
            yield [[x] + t for x, t in zip(first, tail)]


def _columns(total, caps):
    if len(caps) == 1:
        if total <= caps[0]:
            yield [total]
        return
    for x in range(min(total, caps[0]) + 1):
        for rest in _columns(total - x, caps[1:]):
            yield [x] + rest


def brute_p(table, statistic, alternative="two-sided", u=None, v=None):
    """Exact p by listing every table, with rational probabilities and statistics."""
    t = [list(map(int, r)) for r in table]
    rows = [sum(r) for r in t]
    cols = [sum(c) for c in zip(*t)]
    n = sum(rows)
    u = list(range(1, len(rows) + 1)) if u is None else [Fraction(x).limit_denominator(10**6) for x in u]
    v = list(range(1, len(cols) + 1)) if v is None else [Fraction(x).limit_denominator(10**6) for x in v]
    const = Fraction(np.prod([factorial(r) for r in rows], dtype=object)
                     * np.prod([factorial(c) for c in cols], dtype=object), factorial(n))

    def prob(x):
        return const / np.prod([factorial(c) for r in x for c in r], dtype=object)

    def chi2(x):
        return sum(Fraction(x[i][j] ** 2, rows[i] * cols[j]) for i in range(len(rows))
                   for j in range(len(cols))) * n - n

    def g2(x):
        return 2 * sum(c * log(c * n / (rows[i] * cols[j])) for i, r in enumerate(x)
                       for j, c in enumerate(r) if c)

    def lin(x):
        return sum(u[i] * v[j] * x[i][j] for i in range(len(rows)) for j in range(len(cols)))

    tabs = list(all_tables(rows, cols))
    probs = [prob(x) for x in tabs]
    assert sum(probs) == 1
    p0 = prob(t)
    if statistic == "fisher":
        hit = [p <= p0 * (1 + Fraction(1, 10**7)) for p in probs]
    elif statistic == "chi-square":
        s0 = chi2(t)
        hit = [chi2(x) >= s0 for x in tabs]
    elif statistic == "likelihood-ratio":
        s0 = g2(t)
        hit = [g2(x) >= s0 - 1e-9 * max(1.0, s0) for x in tabs]
    else:
        e = sum(p * lin(x) for p, x in zip(probs, tabs))
        s0 = lin(t)
        if alternative == "higher":
            hit = [lin(x) >= s0 for x in tabs]
        elif alternative == "lower":
            hit = [lin(x) <= s0 for x in tabs]
        else:
            hit = [abs(lin(x) - e) >= abs(s0 - e) for x in tabs]
    return float(sum(p for p, h in zip(probs, hit) if h)), len(tabs)


# ---------------------------------------------------------------- r x c: exact network

@pytest.mark.parametrize("table", SMALL)
@pytest.mark.parametrize("statistic", RXC_STATS)
def test_network_matches_brute_force(table, statistic):
    alts = ALTS if statistic == "trend" else ("two-sided",)
    for alt in alts:
        want, count = brute_p(table, statistic, alt)
        got = T.run(table, statistic, alt)
        assert got.method == "exact"
        assert got.p_value == pytest.approx(want, rel=1e-10, abs=1e-14)
        if min(np.shape(table)) >= 2:
            assert got.arrangements == count


@pytest.mark.parametrize("table", SMALL[:5])
@pytest.mark.parametrize("statistic", RXC_STATS)
def test_network_without_turning_round(monkeypatch, table, statistic):
    # The pass that never meets in the middle (forward and bounds only) gives the same p.
    monkeypatch.setattr(J, "TURN_FLOOR", 0)
    monkeypatch.setattr(J, "TURN_RATIO", 0.0)
    want, _ = brute_p(table, statistic)
    assert T.run(table, statistic).p_value == pytest.approx(want, rel=1e-10, abs=1e-14)


def test_trend_with_real_scores_matches_brute_force():
    table = [[2, 1, 0, 3], [1, 2, 2, 0], [0, 1, 3, 2]]
    u, v = [0.0, 0.5, 2.25], [1.0, 2.0, 4.5, 4.75]
    for alt in ALTS:
        want, _ = brute_p(table, "trend", alt, u, v)
        got = T.run(table, "trend", alt, row_scores=u, col_scores=v)
        assert got.p_value == pytest.approx(want, rel=1e-10)


def test_empty_rows_and_columns_are_left_out():
    table = [[2, 1, 0, 0], [0, 0, 0, 0], [1, 3, 2, 0]]
    got = T.run(table, "fisher")
    want, _ = brute_p([[2, 1, 0], [1, 3, 2]], "fisher")
    assert got.p_value == pytest.approx(want, rel=1e-10)
    assert any("empty row" in w for w in got.warnings)
    assert any("empty column" in w for w in got.warnings)
    single = T.run([[3, 0], [4, 0]], "chi-square")
    assert single.p_value == 1.0 and single.arrangements == 1


@pytest.mark.parametrize("statistic", RXC_STATS)
def test_transposing_leaves_p_unchanged(statistic):
    table = np.array([[4, 1, 0, 2, 3], [1, 3, 2, 0, 1], [0, 2, 4, 3, 1]])
    for alt in (ALTS if statistic == "trend" else ("two-sided",)):
        a = T.run(table, statistic, alt).p_value
        b = T.run(table.T, statistic, alt).p_value
        assert a == pytest.approx(b, rel=1e-10)


def test_scipy_exact_rxc_by_listing_pairings():
    # scipy 1.17 has no exact r x c method beyond listing all n! pairings of the observations
    # (PermutationMethod with n_resamples=inf); feasible for n <= 7 only.
    for table in ([[2, 1, 0], [0, 2, 2]], [[1, 1], [0, 2], [2, 0]]):
        ref = stats.fisher_exact(table, method=stats.PermutationMethod(n_resamples=np.inf))
        got = T.run(table, "fisher")
        assert got.p_value == pytest.approx(ref.pvalue, rel=1e-10)
        assert got.statistic == pytest.approx(ref.statistic, rel=1e-12)


@pytest.mark.parametrize("table", SMALL[:4])
def test_statistics_match_chi2_contingency(table):
    x2 = stats.chi2_contingency(table, correction=False)
    g2 = stats.chi2_contingency(table, correction=False, lambda_="log-likelihood")
    assert T.run(table, "chi-square").statistic == pytest.approx(x2.statistic, rel=1e-10)
    assert T.run(table, "likelihood-ratio").statistic == pytest.approx(g2.statistic, rel=1e-10)
    nx, ng = N.pearson_chi_square(table), N.likelihood_ratio(table)
    assert (nx.statistic, nx.df, nx.p_value) == pytest.approx((x2.statistic, x2.dof, x2.pvalue))
    assert (ng.statistic, ng.df, ng.p_value) == pytest.approx((g2.statistic, g2.dof, g2.pvalue))


def test_null_distribution_sums_to_one_and_has_the_permutation_moments():
    table = np.array([[3, 2, 1, 4], [2, 3, 2, 1], [1, 2, 5, 4]])
    values, probs = T.null_distribution(table, "trend")
    assert abs(probs.sum() - 1.0) < 1e-12
    rows, cols, n = table.sum(1), table.sum(0), table.sum()
    u, v = np.arange(1.0, 4.0), np.arange(1.0, 5.0)
    mean = (u @ rows) * (v @ cols) / n
    suu = rows @ (u - u @ rows / n) ** 2
    svv = cols @ (v - v @ cols / n) ** 2
    assert probs @ values == pytest.approx(mean, rel=1e-12)
    assert probs @ (values - mean) ** 2 == pytest.approx(suu * svv / (n - 1), rel=1e-10)
    _, fisher_probs = T.null_distribution(table, "fisher")     # table probabilities
    assert abs(fisher_probs.sum() - 1.0) < 1e-12


def test_count_of_tables_matches_listing():
    for rows, cols in (((5, 4, 3), (4, 4, 4)), ((6, 2), (3, 3, 2))):
        layout = TN.make_layout(rows, cols)
        assert TN.count_tables(layout) == len(list(all_tables(rows, cols)))


def test_monte_carlo_agrees_and_repeats_with_its_seed():
    table = [[5, 2, 1, 3], [1, 4, 3, 2], [2, 1, 5, 1]]
    for statistic in RXC_STATS:
        exact = T.run(table, statistic).p_value
        mc = T.run(table, statistic, algorithm="monte-carlo", draws=20000, seed=7)
        assert mc.method == "monte-carlo" and mc.seed == 7 and mc.draws == 20000
        assert mc.p_interval[0] <= exact <= mc.p_interval[1]
        again = T.run(table, statistic, algorithm="monte-carlo", draws=20000, seed=7)
        assert again.p_value == mc.p_value


def test_candidates_and_limits(monkeypatch):
    table = [[3, 1, 2], [1, 4, 0], [2, 2, 5]]
    cands = {c.algorithm: c for c in T.candidates(table)}
    assert cands["network"].exact and cands["network"].feasible
    assert cands["network"].arrangements == 448
    assert not cands["monte-carlo"].exact
    big = np.full((7, 7), 6)
    assert not {c.algorithm: c for c in T.candidates(big)}["network"].feasible
    monkeypatch.setattr(TN, "MAX_ENTRIES", 10)
    with pytest.raises(PlanError, match="no exact p-value"):   # no seed for Monte Carlo
        T.run(table, "fisher")


def test_bad_choices_are_refused():
    with pytest.raises(ValueError, match="no direction"):
        T.run([[1, 2], [3, 4], [1, 1]], "chi-square", "higher")
    with pytest.raises(ValueError, match="unknown table statistic"):
        T.run([[1, 2], [3, 4]], "median")
    with pytest.raises(ValueError, match="non-negative whole"):
        T.run([[1, -2], [3, 4]], "fisher")


def test_progress_can_cancel_the_network():
    stop = Progress(should_stop=lambda: True)
    with pytest.raises(Cancelled):
        T.run([[3, 1, 2], [1, 4, 0], [2, 2, 5]], "fisher", progress=stop)


# Target sizes (made-up tables); ceilings far above the measured times (0.05-0.5 s), so that a
# loaded machine does not fail them, yet an algorithm that lists every table would.
TARGETS = [([[8, 5, 4, 3], [4, 6, 5, 5], [3, 4, 6, 7]], 5.0),
           ([[8, 3, 3, 1, 33, 4], [16, 11, 6, 18, 3, 14]], 5.0),
           ([[4, 4, 1, 7], [1, 0, 5, 2], [6, 1, 6, 0], [0, 2, 6, 5]], 10.0)]


@pytest.mark.parametrize("table,ceiling", TARGETS)
def test_target_sizes_run_fast(table, ceiling):
    for statistic in RXC_STATS:
        start = time.process_time()
        out = T.run(table, statistic)
        assert time.process_time() - start < ceiling
        assert out.arrangements > 2e5 and 0 < out.p_value <= 1


def test_large_table_against_monte_carlo():
    # 2 x 6, n = 120: exact p against 100,000 sampled tables (99% interval).
    table = TARGETS[1][0]
    exact = T.run(table, "chi-square").p_value
    mc = T.run(table, "chi-square", algorithm="monte-carlo", draws=100_000, seed=3)
    assert mc.p_interval[0] <= exact <= mc.p_interval[1]


# ---------------------------------------------------------------- 2 x 2: Fisher and the odds ratio

def test_fisher_2x2_matches_scipy_on_every_small_table():
    for cells in np.ndindex(5, 5, 5, 5):
        table = np.array(cells).reshape(2, 2)
        for alt in ALTS:
            got = F.run(table, alternative=alt).p_value
            assert got == pytest.approx(stats.fisher_exact(table, SCIPY_ALT[alt]).pvalue,
                                        rel=1e-12, abs=1e-15)


def test_fisher_2x2_agrees_with_the_rxc_network():
    for table in ([[3, 1], [1, 3]], [[7, 2], [1, 9]], [[0, 6], [5, 2]]):
        assert F.run(table).p_value == pytest.approx(T.run(table, "fisher").p_value, rel=1e-12)
        assert F.run(table, alternative="higher").p_value == pytest.approx(
            T.run(table, "trend", "higher").p_value, rel=1e-12)


def test_fisher_2x2_null_sums_to_one_large_and_small():
    for table in ([[30, 12], [9, 41]], [[1400, 1100], [900, 1200]]):
        out = F.run(table)
        assert abs(out.null_probs.sum() - 1.0) < 1e-12
    big = [[1400, 1100], [900, 1200]]
    assert F.run(big, alternative="lower").p_value == pytest.approx(
        stats.fisher_exact(big, "less").pvalue, rel=1e-9)


def test_tea_tasting():
    # Fisher, R. A., The Design of Experiments (1935), ch. II: 8 cups, 4 of each kind; all 4
    # picked right happens in 1 of the comb(8, 4) = 70 ways (from memory).
    assert F.run([[4, 0], [0, 4]], alternative="higher").p_value == pytest.approx(1 / 70)
    # Agresti, A., Categorical Data Analysis, 2nd ed. (2002), Sec. 3.5.2, Table 3.8: 3 of 4
    # right, one-sided P = 0.243, two-sided 0.486 (from memory; they are 17/70 and 34/70).
    assert F.run([[3, 1], [1, 3]], alternative="higher").p_value == pytest.approx(17 / 70)
    assert F.run([[3, 1], [1, 3]]).p_value == pytest.approx(34 / 70)
    # Same source, Sec. 3.6: conditional ML odds ratio 6.41, exact 95% interval (0.21, 626.2)
    # (from memory).
    est = F.odds_ratio([[3, 1], [1, 3]])
    assert est.value == pytest.approx(6.41, abs=0.005)
    assert est.interval[0] == pytest.approx(0.21, abs=0.005)
    assert est.interval[1] == pytest.approx(626.2, abs=0.1)


ODDS_TABLES = [[[3, 1], [1, 3]], [[8, 2], [1, 5]], [[10, 3], [2, 15]], [[0, 5], [4, 2]],
               [[6, 0], [2, 7]], [[12, 9], [7, 14]]]


@pytest.mark.parametrize("table", ODDS_TABLES)
def test_conditional_odds_ratio_matches_scipy(table):
    ref = scipy_odds_ratio(table, kind="conditional")
    for alt, salt in SCIPY_ALT.items():
        for level in (0.95, 0.9):
            est = F.odds_ratio(table, level, alt)
            ci = ref.confidence_interval(level, salt)
            assert est.value == pytest.approx(ref.statistic, rel=1e-8)
            assert est.interval == pytest.approx((ci.low, ci.high), rel=1e-7)
            lo, hi = est.interval
            assert lo <= est.value <= hi


@pytest.mark.parametrize("table", ODDS_TABLES)
def test_log_odds_ratio_wald_matches_statsmodels(table):
    t = np.array(table, float)
    ref = Table2x2(t + 0.5 if np.any(t == 0) else t)
    got = N.log_odds_ratio(table)
    assert got.interval == pytest.approx(ref.oddsratio_confint(0.05), rel=1e-10)
    assert got.p_value == pytest.approx(ref.oddsratio_pvalue(), rel=1e-10)
    assert ("Haldane" in got.interval_method) == bool(np.any(t == 0))


# ---------------------------------------------------------------- paired binary: McNemar

def test_mcnemar_exact_matches_statsmodels():
    for b in range(0, 13):
        for c in range(0, 13):
            table = [[5, b], [c, 4]]
            got = P.run(table)
            ref = sm_mcnemar(table, exact=True)
            assert got.p_value == pytest.approx(ref.pvalue, rel=1e-12)
            assert got.p_value <= 1.0
            up = stats.binomtest(b, b + c, 0.5, "greater").pvalue if b + c else 1.0
            assert P.run(table, alternative="higher").p_value == pytest.approx(up, rel=1e-12)


def test_mcnemar_normal_matches_statsmodels():
    for table in ([[5, 9], [3, 4]], [[20, 14], [6, 11]], [[1, 0], [7, 2]]):
        for corr in (False, True):
            ref = sm_mcnemar(table, exact=False, correction=corr)
            got = N.mcnemar(table, correction=corr)
            assert (got.statistic, got.p_value) == pytest.approx((ref.statistic, ref.pvalue))


def test_presidential_approval_mcnemar():
    # Agresti, A., Categorical Data Analysis, 2nd ed. (2002), Table 10.1: approval of the
    # President in two surveys of 1600 people; z = -4.17, z^2 = 17.4 (from memory).
    table = [[794, 150], [86, 570]]
    assert N.mcnemar(table).statistic == pytest.approx(17.36, abs=0.01)
    assert P.run(table).p_value == pytest.approx(sm_mcnemar(table, exact=True).pvalue, rel=1e-10)


def test_discordant_odds_ratio_interval():
    for b, c in ((9, 3), (0, 5), (6, 0), (14, 6)):
        est = P.odds_ratio([[5, b], [c, 4]])
        ci = stats.binomtest(b, b + c).proportion_ci(0.95, method="exact")
        odds = [x / (1 - x) if x < 1 else np.inf for x in (ci.low, ci.high)]
        assert est.interval == pytest.approx(tuple(odds), rel=1e-9)
        assert est.interval[0] <= est.value <= est.interval[1]


# ---------------------------------------------------------------- one proportion

@pytest.mark.parametrize("k,n,p0", [(7, 20, 0.3), (0, 12, 0.2), (15, 15, 0.6), (3, 40, 0.05),
                                    (51, 100, 0.5), (2, 9, 0.75)])
def test_binomial_matches_scipy(k, n, p0):
    for alt, salt in SCIPY_ALT.items():
        ref = stats.binomtest(k, n, p0, salt)
        assert B.run([k, n - k], alternative=alt, p0=p0).p_value == pytest.approx(
            ref.pvalue, rel=1e-11)
        ci = ref.proportion_ci(0.95, method="exact")
        assert B.proportion([k, n - k], 0.95, alt).interval == pytest.approx(
            (ci.low, ci.high), rel=1e-10, abs=1e-15)


def test_clopper_pearson_at_zero_successes():
    # With 0 of n the upper bound solves (1 - p)^n = alpha / 2 (common practice).
    lo, hi = B.clopper_pearson(0, 30)
    assert lo == 0.0 and hi == pytest.approx(1 - 0.025 ** (1 / 30), rel=1e-12)


def test_one_proportion_normal_matches_statsmodels():
    for k, n, p0 in ((7, 20, 0.3), (51, 100, 0.5), (3, 40, 0.05)):
        z, p = proportions_ztest(k, n, p0, prop_var=p0)
        for method, ours in (("wilson", "wilson"), ("normal", "wald")):
            got = N.one_proportion(k, n, p0, interval=ours)
            assert (got.statistic, got.p_value) == pytest.approx((z, p), rel=1e-10)
            lo, hi = proportion_confint(k, n, 0.05, method=method)
            assert got.interval == pytest.approx((max(lo, 0.0), min(hi, 1.0)), rel=1e-10)


# ---------------------------------------------------------------- trend: normal theory

def test_trend_m2_is_n_minus_1_r_squared():
    table = np.array([[3, 2, 1, 4], [2, 3, 2, 1], [1, 2, 5, 4]])
    pairs = [(i + 1, j + 1) for i in range(3) for j in range(4) for _ in range(table[i, j])]
    x, y = np.array(pairs, float).T
    r = np.corrcoef(x, y)[0, 1]
    got = N.trend(table)
    assert got.statistic == pytest.approx((len(x) - 1) * r * r, rel=1e-12) and got.df == 1
    up = N.trend(table, alternative="higher")
    assert up.statistic == pytest.approx(np.sqrt(got.statistic) * np.sign(r))
    assert up.p_value == pytest.approx(stats.norm.sf(up.statistic))


def test_trend_against_statsmodels_ordinal_association():
    # statsmodels' linear-by-linear test uses the permutation mean and variance, so its null
    # mean and sd must match the moments of our exact null distribution. SMALL[1] (2 x 4) is
    # the Cochran-Armitage case, checked against brute force above.
    for table in (np.array([[3, 2, 1, 4], [2, 3, 2, 1], [1, 2, 5, 4]]), np.array(SMALL[1])):
        u, v = np.arange(1.0, table.shape[0] + 1), np.arange(1.0, table.shape[1] + 1)
        ref = Table(table, shift_zeros=False).test_ordinal_association(row_scores=u, col_scores=v)
        z = N.trend(table, alternative="higher")
        assert (z.statistic, N.trend(table).p_value) == pytest.approx((ref.zscore, ref.pvalue))
        values, probs = T.null_distribution(table, "trend")
        assert probs @ values == pytest.approx(ref.null_mean, rel=1e-12)
        assert np.sqrt(probs @ (values - ref.null_mean) ** 2) == pytest.approx(ref.null_sd, rel=1e-10)
        assert T.run(table, "trend").statistic == pytest.approx(ref.statistic)


def test_alcohol_and_malformation():
    # Agresti, A., Categorical Data Analysis, 2nd ed. (2002), Table 3.7: infant malformation
    # by mother's alcohol consumption, scores 0, 0.5, 1.5, 4.0, 7.0: M^2 = 6.57, X^2 = 12.1,
    # G^2 = 6.2 on 4 df (from memory).
    table = [[17066, 14464, 788, 126, 37], [48, 38, 5, 1, 1]]
    m2 = N.trend(table, row_scores=[0, 1], col_scores=[0, 0.5, 1.5, 4.0, 7.0])
    assert m2.statistic == pytest.approx(6.57, abs=0.005)
    assert N.pearson_chi_square(table).statistic == pytest.approx(12.1, abs=0.05)
    assert N.likelihood_ratio(table).statistic == pytest.approx(6.2, abs=0.05)


def test_table_summary():
    s = N.table_summary([[1, 2, 0], [3, 4, 5]], ["a", "b"], ["x", "y", "z"])
    assert s == {"rows": ["a", "b"], "columns": ["x", "y", "z"], "counts": [[1, 2, 0], [3, 4, 5]],
                 "row_totals": [3, 12], "column_totals": [4, 6, 5], "total": 15}
    with pytest.raises(ValueError):
        N.table_summary([[1, 2]], ["a"], ["x"])
