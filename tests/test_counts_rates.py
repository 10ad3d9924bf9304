"""Rates over exposures: the exact Poisson test and Garwood's interval for one rate; the exact
conditional test of a rate ratio and its interval for two. Checks: exact binomial sums in
Fractions and Poisson sums in 50-digit decimals, every interval end just inside / outside;
statsmodels (test_poisson, test_poisson_2indep, confint_poisson); Garwood's table."""
import math
from fractions import Fraction

import pytest

import brute_counts as B
import permq
from permq.engine.counts import rates as R


CASES2 = [(7, 120.5, 2, 98.0), (0, 10.0, 4, 12.0), (5, 3.0, 5, 3.0), (12, 40.0, 3, 55.5)]


@pytest.mark.parametrize("x1, t1, x2, t2", CASES2)
def test_two_rates_equal_brute_force(x1, t1, x2, t2):
    data = R.Rates((x1, x2), (t1, t2))
    pi0 = Fraction(repr(t1)) / (Fraction(repr(t1)) + Fraction(repr(t2)))
    up, down, two = B.binomial_tails(x1, x1 + x2, pi0)
    assert R.run(data, "higher", "binomial").p_value == pytest.approx(float(up), rel=1e-10)
    assert R.run(data, "lower", "binomial").p_value == pytest.approx(float(down), rel=1e-10)
    assert R.run(data, "two-sided", "binomial").p_value == pytest.approx(float(two), rel=1e-10)


@pytest.mark.parametrize("x1, t1, x2, t2", CASES2)
def test_rate_ratio_interval_ends_just_inside_and_outside(x1, t1, x2, t2):
    lo, hi = R.estimate(R.Rates((x1, x2), (t1, t2)), 0.95, "two-sided").interval
    n = x1 + x2
    f = Fraction(1) + Fraction(1, 10 ** 7)

    def pi_of(r):               # the binomial parameter at rate ratio r
        r = Fraction(r)
        return r * Fraction(repr(t1)) / (r * Fraction(repr(t1)) + Fraction(repr(t2)))

    alpha = Fraction(1, 40)
    if lo > 0:
        assert B.binomial_tails(x1, n, pi_of(Fraction(lo) / f))[0] < alpha
        assert B.binomial_tails(x1, n, pi_of(Fraction(lo) * f))[0] > alpha
    else:
        assert x1 == 0
    if math.isfinite(hi):
        assert B.binomial_tails(x1, n, pi_of(Fraction(hi) * f))[1] < alpha
        assert B.binomial_tails(x1, n, pi_of(Fraction(hi) / f))[1] > alpha
    else:
        assert x2 == 0


@pytest.mark.parametrize("x, t, rate", [(7, 120.5, 0.02), (0, 10.0, 0.1), (3, 2.0, 4.5),
                                        (25, 10.0, 1.7)])
def test_one_rate_equals_brute_force_and_garwood_ends(x, t, rate):
    data = R.Rates((x,), (t,), rate)
    ge, le = B.poisson_tails(x, rate * t)
    assert R.run(data, "higher", "poisson").p_value == pytest.approx(ge, rel=1e-9)
    assert R.run(data, "lower", "poisson").p_value == pytest.approx(le, rel=1e-9)
    lo, hi = R.garwood(x, t, 0.95)
    f = 1 + 1e-7
    if x > 0:
        assert B.poisson_tails(x, lo / f * t)[0] < 0.025 < B.poisson_tails(x, lo * f * t)[0]
    assert B.poisson_tails(x, hi * f * t)[1] < 0.025 < B.poisson_tails(x, hi / f * t)[1]


def test_two_sided_one_rate_by_the_probability_rule():
    """Sum of the Poisson probabilities no larger than the observed one's, by listing counts."""
    from scipy.stats import poisson

    for x, mu in ((7, 2.41), (0, 3.0), (4, 4.0), (9, 4.0), (1, 6.5)):
        pmf = poisson.pmf(range(400), mu)
        want = pmf[pmf <= pmf[x] * (1 + 1e-7)].sum()
        assert R.poisson_p(x, mu, "two-sided") == pytest.approx(want, rel=1e-9, abs=1e-15)


def test_against_statsmodels():
    from statsmodels.stats import rates as sm

    for x1, t1, x2, t2 in CASES2:
        data = R.Rates((x1, x2), (t1, t2))
        want = sm.test_poisson_2indep(x1, t1, x2, t2, method="exact-cond").pvalue
        assert R.run(data, "two-sided", "binomial").p_value == pytest.approx(want, rel=1e-9)
        if x1 and x2:
            from permq.normal import counts as N

            nt = N.two_rates(x1, t1, x2, t2)
            score = sm.test_poisson_2indep(x1, t1, x2, t2, method="score")
            assert nt.p_value == pytest.approx(score.pvalue, rel=1e-9)
            assert nt.interval == pytest.approx(
                sm.confint_poisson_2indep(x1, t1, x2, t2, method="wald-log"), rel=1e-9)
    for x, t, rate in ((7, 120.5, 0.02), (3, 2.0, 4.5)):
        data = R.Rates((x,), (t,), rate)
        for alt, sa in (("higher", "larger"), ("lower", "smaller")):
            want = sm.test_poisson(x, t, rate, method="exact-c", alternative=sa).pvalue
            assert R.run(data, alt, "poisson").p_value == pytest.approx(want, rel=1e-9)
        assert R.garwood(x, t) == pytest.approx(sm.confint_poisson(x, t, method="exact-c"),
                                                rel=1e-9)
        from permq.normal import counts as N

        nt = N.one_rate(x, t, rate)
        assert nt.p_value == pytest.approx(sm.test_poisson(x, t, rate, method="score").pvalue)
        assert nt.interval == pytest.approx(sm.confint_poisson(x, t, method="score"), rel=1e-9)


def test_garwood_table():
    # Garwood (1936), Biometrika 28:437: the exact 95% limits for a Poisson mean, as tabled
    # (from memory): 0 -> (0, 3.689); 1 -> (0.0253, 5.572); 2 -> (0.242, 7.225);
    # 3 -> (0.619, 8.767); 5 -> (1.62, 11.67); 10 -> (4.80, 18.39).
    table = {0: (0.0, 3.689), 1: (0.0253, 5.572), 2: (0.242, 7.225), 3: (0.619, 8.767),
             5: (1.62, 11.67), 10: (4.80, 18.39)}
    for x, (lo, hi) in table.items():
        got = R.garwood(x, 1.0)
        assert got[0] == pytest.approx(lo, abs=0.0051 if lo > 1 else 0.00051)
        assert got[1] == pytest.approx(hi, abs=0.0051 if hi > 10 else 0.00051)


def test_monte_carlo_and_statements():
    data = R.Rates((7, 2), (120.5, 98.0))
    exact = R.run(data, "two-sided", "binomial").p_value
    mc = R.run(data, "two-sided", "monte-carlo", 40_000, 3)
    assert abs(mc.p_value - exact) < 4 * math.sqrt(exact * (1 - exact) / 40_000) + 1e-3
    r = permq.run("count 7 events in 120.5 vs 2 events in 98")[0]
    assert r.family == "rates" and r.outcome.p_value == pytest.approx(exact)
    assert r.estimate.value == pytest.approx((7 / 120.5) / (2 / 98))
    r = permq.run("count 1 event in 50 vs 0.02 sampled 5000 seed 4")[0]
    assert r.outcome.method == "monte-carlo" and r.outcome.draws == 5000
    out = permq.run("count 7 events in 120.5")[0]
    assert "reference rate" in out.message and "vs 0.05" in out.hint
    out = permq.run("count 7 events in 0 vs 2 events in 98")[0]
    assert "exposure must be a positive number" in out.message
    out = permq.run("count 7 events in 120.5 vs 2 events in 98 using fisher")[0]
    assert "not a test family for two rates" in out.message
