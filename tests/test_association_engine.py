"""Association engines (permq/engine/association.py) and their normal theory
(permq/normal/association.py), checked against scipy.stats, statsmodels, a brute-force
enumerator over all n! permutations written here, and published values."""
from __future__ import annotations

import itertools
from fractions import Fraction
import time
from fractions import Fraction
from math import factorial

import numpy as np
import pytest
import statsmodels.api as sm

import brute
from scipy import stats

from permq.engine import association as A
from permq.engine.association import inversions as A_inversions
from permq.engine.association import pairings as A_pairings, slope as A_slope
from permq.engine.core.limits import EXACT_CEILING_SECONDS
from permq.engine.core.progress import Progress
from permq.errors import Cancelled, DataError
from permq.normal import association as N

ALTS = ("higher", "lower", "two-sided")
SCIPY_ALT = {"higher": "greater", "lower": "less", "two-sided": "two-sided"}

# Small data WITH ties in both variables (made up for these checks, not published).
X_TIES = np.array([1.0, 2.0, 2.0, 3.0, 4.0, 4.0, 5.0])
Y_TIES = np.array([2.0, 1.5, 3.0, 3.0, 2.5, 4.0, 3.0])


# ---------------------------------------------------------------- brute force (independent of the engine)

def all_perms(n):
    return np.array(list(itertools.permutations(range(n))))


def pearson_rows(x, ys):
    xc = x - x.mean()
    yc = ys - ys.mean(axis=1, keepdims=True)
    return (yc @ xc) / np.sqrt((xc @ xc) * (yc ** 2).sum(axis=1))


def spearman_rows(x, ys):
    return pearson_rows(stats.rankdata(x), stats.rankdata(ys, axis=1))


def tau_b_rows(x, ys):
    i, j = np.triu_indices(len(x), 1)
    sx = np.sign(x[i] - x[j])
    sy = np.sign(ys[:, i] - ys[:, j])
    n0, n1, n2 = len(i), np.sum(sx == 0), np.sum(sy[0] == 0)
    return (sy @ sx) / np.sqrt((n0 - n1) * (n0 - n2))


def slope_rows(x, ys):
    xc = x - x.mean()
    return ys @ xc / (xc @ xc)


BRUTE = {"pearson": pearson_rows, "spearman": spearman_rows, "kendall": tau_b_rows,
         "slope": slope_rows}


def brute_p(null, obs, alternative):
    tol = 1e-9 * max(1.0, abs(obs))
    if alternative == "higher":
        return np.mean(null >= obs - tol)
    if alternative == "lower":
        return np.mean(null <= obs + tol)
    return np.mean(np.abs(null) >= abs(obs) - tol)


def brute_force(statistic, y, x, alternative):
    ys = y[all_perms(len(y))]
    null = BRUTE[statistic](x, ys)
    obs = BRUTE[statistic](x, y[None, :])[0]
    return obs, brute_p(null, obs, alternative)


def brute_slope_p(y, x, beta, side):
    """One-sided p of 'slope = beta': permute y - beta x against x over all n! permutations."""
    e = y - beta * x
    xc = x - x.mean()
    null = e[all_perms(len(y))] @ xc
    obs = e @ xc
    tol = 1e-9 * np.sqrt((xc @ xc) * (e - e.mean()) @ (e - e.mean()))
    return np.mean(null >= obs - tol) if side == "higher" else np.mean(null <= obs + tol)


# ---------------------------------------------------------------- exact p-values

@pytest.mark.parametrize("statistic", A_pairings.STATISTICS)
@pytest.mark.parametrize("alternative", ALTS)
def test_exact_enumeration_equals_brute_force_with_ties(statistic, alternative):
    obs, p = brute_force(statistic, Y_TIES, X_TIES, alternative)
    out = A.run(statistic, Y_TIES, X_TIES, alternative, "enumeration")
    assert out.method == "exact"
    assert out.statistic == pytest.approx(obs, rel=1e-12)
    assert out.p_value == pytest.approx(p, rel=1e-12, abs=1e-15)
    assert out.null_probs.sum() == pytest.approx(1.0, rel=1e-12)


def test_ties_reduce_the_reference_set_to_distinct_arrangements():
    # x has tie groups (2, 2), y has (3): enumeration permutes the one with fewer arrangements.
    assert A.reference_size("pearson", Y_TIES, X_TIES) == factorial(7) // 6
    out = A.run("pearson", Y_TIES, X_TIES, "higher", "enumeration")
    assert out.arrangements == factorial(7) // 6
    assert "distinct arrangements" in out.algorithm


def test_arrangement_chunks_list_each_distinct_arrangement_once():
    counts = [2, 1, 3, 1]
    labels = np.repeat(np.arange(4), counts)
    expected = set(itertools.permutations(labels.tolist()))
    got = np.concatenate(list(A_pairings.arrangement_chunks(counts, chunk=7)))
    assert len(got) == len(expected) == factorial(7) // (2 * 6)
    assert {tuple(r) for r in got.tolist()} == expected


def _vector_stat(statistic, x):
    def stat(y, axis=-1):
        y = np.moveaxis(np.asarray(y, float), axis, -1)
        shape = y.shape
        flat = y.reshape(-1, shape[-1])
        return BRUTE[statistic](x, flat).reshape(shape[:-1])
    return stat


@pytest.mark.parametrize("statistic", ["pearson", "spearman"])
@pytest.mark.parametrize("alternative", ["higher", "lower"])
def test_exact_p_matches_scipy_permutation_test(statistic, alternative):
    rng = np.random.default_rng(5)
    x = np.round(rng.normal(size=7), 1)
    y = np.round(0.6 * x + rng.normal(size=7), 1)
    ref = stats.permutation_test((y,), _vector_stat(statistic, x), permutation_type="pairings",
                                 alternative=SCIPY_ALT[alternative], n_resamples=np.inf,
                                 vectorized=True)
    out = A.run(statistic, y, x, alternative, "enumeration")
    assert out.p_value == pytest.approx(ref.pvalue, rel=1e-12)
    assert out.statistic == pytest.approx(ref.statistic, rel=1e-12)


@pytest.mark.parametrize("statistic", ["pearson", "spearman", "kendall"])
def test_statistic_matches_scipy(statistic):
    rng = np.random.default_rng(11)
    x = np.round(rng.normal(size=12), 1)
    y = np.round(x + rng.normal(size=12), 1)
    ref = {"pearson": stats.pearsonr, "spearman": stats.spearmanr,
           "kendall": stats.kendalltau}[statistic](x, y).statistic
    out = A.run(statistic, y, x, "two-sided", "monte-carlo", draws=200, seed=1)
    assert out.statistic == pytest.approx(ref, rel=1e-12)


# ---------------------------------------------------------------- Kendall by counting

def test_mahonian_counts_sum_to_n_factorial_and_are_symmetric():
    for n in range(1, 31):
        c = brute.mahonian(n)
        assert sum(c) == factorial(n)
        assert c == c[::-1]
        assert len(c) == n * (n - 1) // 2 + 1


def test_mahonian_counts_small_n_against_published_rows():
    # Triangle of Mahonian numbers, OEIS A008302 (N. J. A. Sloane), rows n = 3, 4, 5
    # (from memory; also re-derived by listing permutations below).
    assert brute.mahonian(3) == [1, 2, 2, 1]
    assert brute.mahonian(4) == [1, 3, 5, 6, 5, 3, 1]
    assert brute.mahonian(5) == [1, 4, 9, 15, 20, 22, 20, 15, 9, 4, 1]
    for n in (5, 6):
        perms = all_perms(n)
        inv = sum((perms[:, i] > perms[:, j]).astype(int)
                  for i in range(n) for j in range(i + 1, n))
        assert brute.mahonian(n) == np.bincount(inv).tolist()
        counts, e = A_inversions.counts_up_to(n, n * (n - 1) // 2)
        assert e == 0 and counts.tolist() == np.bincount(inv).tolist()


def test_float_counts_are_exact_to_n18_and_near_exact_beyond():
    for n in (12, 18):
        counts, e = A_inversions.counts_up_to(n, n * (n - 1) // 4)
        assert e == 0 and counts.tolist() == brute.mahonian(n, n * (n - 1) // 4)
    for n in (40, 180):                       # past 2^53 (and, at 180, past the rescaling)
        top = n * (n - 1) // 4
        exact = brute.mahonian(n, top)
        counts, e = A_inversions.counts_up_to(n, top)
        assert n < 180 or e > 0
        for k in range(0, top + 1, max(1, top // 50)):
            got = Fraction(float(counts[k])) * 2 ** e           # exact rational, any size
            assert float(abs(got - exact[k]) / exact[k]) < 1e-13
        running = 0
        for k in range(0, top + 1):
            running += exact[k]
            if k % max(1, top // 20) == 0:
                got = A_inversions.share(float(counts[:k + 1].sum()), e, n)
                assert got == pytest.approx(running / factorial(n), rel=1e-13)


def test_truncated_counts_are_exact():
    full = brute.mahonian(12)
    assert brute.mahonian(12, 20) == full[:21]
    assert A_inversions.counts_up_to(12, 20)[0].tolist() == full[:21]


@pytest.mark.parametrize("n", [400])
def test_kendall_counting_large_n_matches_scipy(n):
    rng = np.random.default_rng(n)
    x = rng.normal(size=n)
    for slope in (0.05, 0.3):               # a p near the centre, and a small p far out
        y = slope * x + rng.normal(size=n)
        for alternative in ALTS:
            ref = stats.kendalltau(x, y, method="exact", alternative=SCIPY_ALT[alternative])
            out = A.run("kendall", y, x, alternative, "dp-inversions")
            assert out.p_value == pytest.approx(ref.pvalue, rel=1e-9, abs=1e-300)


def test_kendall_table_n5_upper_tail():
    # Kendall, M. G. and Gibbons, J. D. (1990), Rank Correlation Methods, 5th ed., Appendix
    # Table 1 (probability that S attains or exceeds a value, n = 5): S = 10: .008,
    # S = 8: .042, S = 6: .117, S = 4: .242, S = 2: .408 (from memory).
    x = np.arange(5.0)
    table = {10: 0.008, 8: 0.042, 6: 0.117, 4: 0.242, 2: 0.408}
    for y in all_perms(5).astype(float):
        s = A_pairings.kendall_s(y, x)
        if s in table:
            p = A.run("kendall", y, x, "higher", "dp-inversions").p_value
            assert round(p, 3) == table[s]


@pytest.mark.parametrize("n", [6, 10, 25, 50])
@pytest.mark.parametrize("alternative", ALTS)
def test_kendall_counting_matches_scipy_exact(n, alternative):
    rng = np.random.default_rng(n)
    x = rng.permutation(n).astype(float)
    y = x + rng.normal(size=n) * n / 3
    ref = stats.kendalltau(x, y, method="exact", alternative=SCIPY_ALT[alternative])
    out = A.run("kendall", y, x, alternative, "dp-inversions")
    assert out.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert out.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    assert out.arrangements == factorial(n)


def test_kendall_counting_equals_enumeration_without_ties():
    rng = np.random.default_rng(3)
    x, y = rng.normal(size=8), rng.normal(size=8)
    for alt in ALTS:
        a = A.run("kendall", y, x, alt, "dp-inversions").p_value
        b = A.run("kendall", y, x, alt, "enumeration").p_value
        assert a == pytest.approx(b, rel=1e-12)


def test_kendall_counting_refuses_ties():
    with pytest.raises(ValueError):
        A.run("kendall", Y_TIES, X_TIES, "higher", "dp-inversions")
    cands = {c.algorithm: c for c in A.candidates("kendall", Y_TIES, X_TIES)}
    assert not cands["dp-inversions"].feasible
    assert cands["enumeration"].feasible


def test_kendall_exact_n50_is_fast():
    rng = np.random.default_rng(50)
    x = rng.permutation(50).astype(float)
    y = x + rng.normal(size=50) * 15
    t = time.process_time()
    A.run("kendall", y, x, "two-sided", "dp-inversions")
    assert time.process_time() - t < 0.2          # about 0.005 s on an idle core


# ---------------------------------------------------------------- a published worked example

# Total collagen (x) and free proline (y) in 7 diseased human livers, from Hollander, M.,
# Wolfe, D. A. and Chicken, E. (2014), Nonparametric Statistical Methods, 3rd ed., Wiley
# (chapter 8), as reproduced in the SciPy cookbook, resampling_tutorial_2c.ipynb
# (scipy/scipy-cookbook, ipython/ResamplingAndMonteCarloMethods), which reports Spearman's
# rho = 0.7 and the exact one-sided p-value 0.04563492063492063 from listing all 7!
# orderings; the SciPy tutorial "Kendall's tau test" reports tau-b = 0.55 for the same data.
LIVER_X = np.array([7.1, 7.1, 7.2, 8.3, 9.4, 10.5, 11.4])
LIVER_Y = np.array([2.8, 2.9, 2.8, 2.6, 3.5, 4.6, 5.0])


def test_liver_data_spearman_exact():
    out = A.run("spearman", LIVER_Y, LIVER_X, "higher", "enumeration")
    assert out.statistic == pytest.approx(0.7, rel=1e-12)
    assert out.p_value == pytest.approx(0.04563492063492063, rel=1e-12)
    assert out.p_value == pytest.approx(230 / 5040, rel=1e-12)


def test_liver_data_kendall_tau_b():
    out = A.run("kendall", LIVER_Y, LIVER_X, "higher", "enumeration")
    assert out.statistic == pytest.approx(0.55, rel=1e-12)
    assert out.p_value == pytest.approx(brute_force("kendall", LIVER_Y, LIVER_X, "higher")[1])


# ---------------------------------------------------------------- the slope and its interval

def test_slope_p_equals_pearson_p():
    for alt in ALTS:
        a = A.run("slope", Y_TIES, X_TIES, alt, "enumeration").p_value
        b = A.run("pearson", Y_TIES, X_TIES, alt, "enumeration").p_value
        assert a == pytest.approx(b, rel=1e-12)


def _slope_data():
    # x with a tied pair, so that some arrangements leave x unchanged (identity jumps).
    x = np.array([1.0, 2.0, 2.0, 3.5, 5.0, 6.0, 7.5])
    y = np.array([1.2, 2.9, 1.8, 3.1, 6.0, 4.2, 7.7])
    return y, x


@pytest.mark.parametrize("alternative,level", [("two-sided", 0.95), ("two-sided", 0.80),
                                               ("higher", 0.95), ("lower", 0.90)])
def test_exact_slope_interval_is_the_set_not_rejected(alternative, level):
    y, x = _slope_data()
    est = A.estimate("slope", y, x, alternative, "enumeration", level=level)
    lo, hi = est.interval
    # alpha as the decimal written (1 - 0.8 is 1/5, not 0.1999...96): the interval-end rule
    side = float((1 - Fraction(repr(level))) / (2 if alternative == "two-sided" else 1))
    assert est.value == pytest.approx(stats.linregress(x, y).slope, rel=1e-12)
    assert lo < est.value < hi
    if alternative in ("two-sided", "higher"):
        eps = 1e-7 * (1 + abs(lo))
        assert brute_slope_p(y, x, lo - eps, "higher") <= side      # just outside: rejected
        assert brute_slope_p(y, x, lo + eps, "higher") > side       # just inside: kept
    else:
        assert lo == -np.inf
    if alternative in ("two-sided", "lower"):
        eps = 1e-7 * (1 + abs(hi))
        assert brute_slope_p(y, x, hi + eps, "lower") <= side
        assert brute_slope_p(y, x, hi - eps, "lower") > side
    else:
        assert hi == np.inf
    assert "exact" in est.method


def test_exact_slope_p_at_beta_matches_brute_force_on_a_grid():
    y, x = _slope_data()
    sp = A.slope_pass(y, x, "enumeration")
    for beta in np.linspace(-1.0, 3.0, 17):
        for side in ("higher", "lower"):
            assert A_slope.p_at(sp, beta, side) == pytest.approx(brute_slope_p(y, x, beta, side), abs=1e-12)


def test_monte_carlo_slope_interval_uses_the_same_draws_for_every_beta():
    y, x = _slope_data()
    est = A.estimate("slope", y, x, "two-sided", "monte-carlo", draws=4000, seed=9)
    sp = A.slope_pass(y, x, "monte-carlo", draws=4000, seed=9)
    lo, hi = est.interval
    # p at beta straight from the stored draws: T_beta = T - beta (Sxx - den) vs t - beta Sxx.
    xc = x - x.mean()
    sxx = xc @ xc

    def p_direct(beta, side):
        tb = sp.t - beta * (sxx - sp.den)
        ob = sp.pb.t_obs - beta * sxx
        tol = 1e-9 * sp.pb.scale
        k = np.sum(tb >= ob - tol) if side == "higher" else np.sum(tb <= ob + tol)
        return (k + 1) / (sp.draws + 1)

    eps = 1e-7
    assert p_direct(lo - eps, "higher") <= 0.025 < p_direct(lo + eps, "higher")
    assert p_direct(hi + eps, "lower") <= 0.025 < p_direct(hi - eps, "lower")
    assert "seed 9" in est.method and "same 4,000" in est.method
    exact = A.estimate("slope", y, x, "two-sided", "enumeration").interval
    assert lo == pytest.approx(exact[0], abs=0.5) and hi == pytest.approx(exact[1], abs=0.5)


def test_slope_interval_with_too_few_arrangements_is_unbounded():
    est = A.estimate("slope", np.array([1.0, 3.0, 2.0]), np.array([1.0, 2.0, 3.0]),
                     "two-sided", "enumeration")
    assert est.interval == (-np.inf, np.inf)


# ---------------------------------------------------------------- Monte Carlo

@pytest.mark.parametrize("statistic", A_pairings.STATISTICS)
def test_monte_carlo_p_lands_in_its_interval_around_exact(statistic):
    exact = A.run(statistic, Y_TIES, X_TIES, "two-sided", "enumeration").p_value
    mc = A.run(statistic, Y_TIES, X_TIES, "two-sided", "monte-carlo", draws=20000, seed=2024)
    lo, hi = mc.p_interval
    assert lo <= exact <= hi
    assert mc.method == "monte-carlo" and mc.seed == 2024 and mc.draws == 20000


def test_monte_carlo_is_reproducible_and_seed_dependent():
    rng = np.random.default_rng(0)
    x, y = rng.normal(size=30), rng.normal(size=30)
    a = A.run("pearson", y, x, "two-sided", "monte-carlo", draws=3000, seed=5)
    b = A.run("pearson", y, x, "two-sided", "monte-carlo", draws=3000, seed=5)
    c = A.run("pearson", y, x, "two-sided", "monte-carlo", draws=3000, seed=6)
    assert a.p_value == b.p_value
    assert a.p_value != c.p_value


def test_shuffler_rows_are_uniform_permutations():
    # Re-shuffling the same buffer keeps every row uniform: all 3! orders equally often.
    sh = A_pairings.Shuffler(np.arange(3))
    rng = np.random.default_rng(1)
    seen = np.concatenate([blk.copy() for _ in range(10) for blk in sh.draws(rng, 600)])
    codes = seen @ np.array([9, 3, 1])
    _, counts = np.unique(codes, return_counts=True)
    assert len(counts) == 6
    assert stats.chisquare(counts).pvalue > 1e-3


def test_cancel_between_blocks():
    rng = np.random.default_rng(0)
    x, y = rng.normal(size=20), rng.normal(size=20)
    with pytest.raises(Cancelled):
        A.run("pearson", y, x, "higher", "monte-carlo", draws=50000, seed=1,
              progress=Progress(should_stop=lambda: True))


@pytest.mark.slow
def test_pearson_monte_carlo_100k_draws_n1000_time():
    rng = np.random.default_rng(1)
    x = rng.normal(size=1000)
    y = 0.1 * x + rng.normal(size=1000)
    t = time.process_time()       # CPU time: less sensitive to a busy shared machine
    out = A.run("pearson", y, x, "two-sided", "monte-carlo", draws=100_000, seed=3)
    elapsed = time.process_time() - t
    assert elapsed < 10.0         # about 2.2 s on an idle core of the reference machine
    assert out.p_value == pytest.approx(stats.pearsonr(x, y).pvalue, abs=0.003)


# ---------------------------------------------------------------- Freedman-Lane

def _fl_data(rng, n=12, effect=0.0):
    z = rng.normal(size=(n, 2))
    x = 0.6 * z[:, 0] + rng.normal(size=n)
    y = 1.0 + z @ np.array([1.0, -0.5]) + effect * x + rng.standard_t(5, size=n)
    return y, x, z


def test_freedman_lane_observed_t_matches_statsmodels():
    y, x, z = _fl_data(np.random.default_rng(4), effect=0.5)
    out = A.run("slope", y, x, "two-sided", "residual-permutation", draws=500, seed=1,
                covariates=z)
    fit = sm.OLS(y, np.column_stack([np.ones(len(y)), z, x])).fit()
    assert out.statistic == pytest.approx(fit.tvalues[-1], rel=1e-10)
    est = A.estimate("slope", y, x, "two-sided", "residual-permutation", draws=500, seed=1,
                     covariates=z)
    assert est.value == pytest.approx(fit.params[-1], rel=1e-10)
    assert out.method == "monte-carlo" and out.warnings


def test_freedman_lane_type_one_error_near_level():
    # 800 null data sets (n = 12, two covariates, t(5) errors), 99 draws each: under
    # exchangeability P(p <= 0.05) = 5/100 exactly; Freedman-Lane is approximate, so we
    # allow 3 Monte Carlo standard errors, 3 * sqrt(0.05 * 0.95 / 800) = 0.023.
    rng = np.random.default_rng(2718)
    reps = 800
    rejections = 0
    for i in range(reps):
        y, x, z = _fl_data(rng)
        out = A.run("slope", y, x, "two-sided", "residual-permutation", draws=99, seed=i + 1,
                    covariates=z)
        rejections += out.p_value <= 0.05
    rate = rejections / reps
    assert abs(rate - 0.05) < 3 * np.sqrt(0.05 * 0.95 / reps)


def test_freedman_lane_has_power():
    rng = np.random.default_rng(31)
    hits = sum(A.run("slope", *(_fl_data(rng, n=20, effect=1.5)[:2]), "higher",
                     "residual-permutation", draws=199, seed=i + 1,
                     covariates=_fl_data(np.random.default_rng(i), n=20)[2]).p_value <= 0.05
               for i in range(40))
    assert hits >= 30


def test_adjusted_slope_candidates_are_residual_permutation_only():
    y, x, z = _fl_data(np.random.default_rng(0))
    cands = {c.algorithm: c for c in A.candidates("slope", y, x, 1000, covariates=z)}
    assert cands["residual-permutation"].feasible and not cands["residual-permutation"].exact
    assert not cands["enumeration"].feasible


def test_collinear_predictor_is_an_error():
    y, x, z = _fl_data(np.random.default_rng(0))
    with pytest.raises(DataError):
        A.run("slope", y, z[:, 0] * 2 + 1, "higher", "residual-permutation", draws=10, seed=1,
              covariates=z)
    with pytest.raises(DataError):
        N.adjusted_slope(y, z[:, 0] * 2 + 1, z, "higher")


# ---------------------------------------------------------------- inputs and plans

def test_bad_inputs():
    with pytest.raises(DataError):
        A.run("pearson", [1.0, 2.0, 3.0], [1.0, 1.0, 1.0], "higher", "enumeration")
    with pytest.raises(DataError):
        A.run("pearson", [1.0, 2.0, 3.0], [1.0, 2.0], "higher", "enumeration")
    with pytest.raises(DataError):
        A.run("pearson", [1.0, 2.0], [1.0, 2.0], "higher", "enumeration")
    with pytest.raises(ValueError):
        A.run("pearson", Y_TIES, X_TIES, "greater", "enumeration")


def test_candidates_report_reference_sizes():
    rng = np.random.default_rng(0)
    x, y = rng.normal(size=9), rng.normal(size=9)
    for statistic in A_pairings.STATISTICS:
        cands = {c.algorithm: c for c in A.candidates(statistic, y, x, 10000)}
        assert cands["enumeration"].exact and cands["enumeration"].arrangements == factorial(9)
        assert not cands["monte-carlo"].exact
    big = {c.algorithm: c for c in A.candidates("pearson", rng.normal(size=30), rng.normal(size=30))}
    # listing 30! pairings applies but is priced past the hard ceiling: the plan refuses it
    assert big["enumeration"].seconds > EXACT_CEILING_SECONDS and big["monte-carlo"].feasible


# ---------------------------------------------------------------- normal theory

def _normal_data():
    rng = np.random.default_rng(8)
    x = np.round(rng.normal(size=15), 1)
    y = np.round(x + rng.normal(size=15) * (1 + np.abs(x)), 1)
    return y, x, rng.normal(size=(15, 2))


@pytest.mark.parametrize("alternative", ALTS)
def test_normal_correlations_match_scipy(alternative):
    y, x, _ = _normal_data()
    sa = SCIPY_ALT[alternative]
    ref = stats.pearsonr(x, y, alternative=sa)
    nt = N.pearson(y, x, alternative)
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    assert nt.interval == pytest.approx(tuple(ref.confidence_interval(0.95)), rel=1e-9)
    assert N.spearman(y, x, alternative).p_value == pytest.approx(
        stats.spearmanr(x, y, alternative=sa).pvalue, rel=1e-9)
    assert N.kendall(y, x, alternative).p_value == pytest.approx(
        stats.kendalltau(x, y, alternative=sa, method="asymptotic").pvalue, rel=1e-9)


@pytest.mark.parametrize("alternative", ALTS)
def test_normal_slopes_match_statsmodels(alternative):
    y, x, z = _normal_data()
    for design, ours in ((np.column_stack([np.ones(15), x]), N.slope(y, x, alternative, 0.9)),
                         (np.column_stack([np.ones(15), z, x]),
                          N.adjusted_slope(y, x, z, alternative, 0.9))):
        for res, kind in zip(ours, ("nonrobust", "HC3")):
            fit = sm.OLS(y, design).fit(cov_type=kind, use_t=True)
            t = fit.tvalues[-1]
            assert res.statistic == pytest.approx(t, rel=1e-9)
            assert res.df == fit.df_resid
            if alternative == "two-sided":
                assert res.p_value == pytest.approx(fit.pvalues[-1], rel=1e-9)
                assert res.interval == pytest.approx(tuple(fit.conf_int(0.10)[-1]), rel=1e-9)
            else:
                one = stats.t.sf(t, fit.df_resid) if alternative == "higher" else stats.t.cdf(t, fit.df_resid)
                assert res.p_value == pytest.approx(one, rel=1e-9)
                end = fit.conf_int(0.20)[-1]            # one-sided 90% = an end of the 80% two-sided
                expect = (end[0], np.inf) if alternative == "higher" else (-np.inf, end[1])
                assert res.interval == pytest.approx(expect, rel=1e-9)


def test_normal_theory_dispatch():
    y, x, z = _normal_data()
    assert len(N.normal_theory("pearson", y, x, "higher")) == 1
    assert len(N.normal_theory("slope", y, x, "higher")) == 2
    assert "HC3" in N.normal_theory("slope", y, x, "higher", covariates=z)[1].test
