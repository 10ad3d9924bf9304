"""Two proportions: Boschloo's and Barnard's exact unconditional tests, Fisher's beside them,
and the exact unconditional intervals for the risk difference and the risk ratio.

Checks: brute force in exact rationals (every outcome, the supremum over the common
proportion from the roots of the region polynomial's derivative); scipy's barnard_exact and
boschloo_exact; statsmodels' score test and Newcombe / Miettinen-Nurminen intervals; every
interval end just inside / just outside by an independent computation of the inverted test;
published examples.
"""
import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import brute_counts as B
import permq
from permq.engine.counts import riskintervals as R
from permq.engine.counts import unconditional as U

SMALL = [(3, 5, 0, 4), (2, 6, 5, 7), (1, 3, 2, 5), (3, 8, 6, 8)]
ALTS = ("higher", "lower", "two-sided")


@pytest.mark.parametrize("case", SMALL)
@pytest.mark.parametrize("test", ["barnard", "boschloo"])
def test_unconditional_p_equals_brute_force_in_rationals(case, test):
    data = U.Binomials(*case)
    for alt in ALTS:
        exact = float(B.unconditional_p(*case, test, alt))
        got = U.run(data, test, alt).p_value
        assert got == pytest.approx(exact, rel=1e-9, abs=1e-15), (case, test, alt)


@pytest.mark.parametrize("case", [(4, 20, 9, 21), (10, 40, 22, 45), (74, 117, 31, 63),
                                  (5, 5, 0, 7), (2, 12, 8, 13), (9, 18, 3, 17)])
def test_against_scipy(case):
    """scipy orders Barnard's outcomes without a tolerance; on these tables no two outcomes tie
    with the observed z, so the regions are the same. Boschloo's two-sided p in scipy is twice
    the smaller one-sided p, ours orders by Fisher's two-sided p: one-sided only."""
    x1, n1, x2, n2 = case
    table = [[x1, x2], [n1 - x1, n2 - x2]]
    data = U.Binomials(*case)
    for alt, sa in (("higher", "greater"), ("lower", "less"), ("two-sided", "two-sided")):
        want = stats.barnard_exact(table, alternative=sa, n=64).pvalue
        assert U.run(data, "barnard", alt).p_value == pytest.approx(want, rel=1e-6)
    for alt, sa in (("higher", "greater"), ("lower", "less")):
        want = stats.boschloo_exact(table, alternative=sa, n=64).pvalue
        assert U.run(data, "boschloo", alt).p_value == pytest.approx(want, rel=1e-6)


def test_exact_ties_are_counted_where_floating_point_splits_them():
    """7 of 15 against 12 of 15, 'lower': the outcome (3, 8) has the observed z exactly
    (z^2 = 750/209 for both, in rationals), which floating-point noise drops in scipy."""
    key = B._pooled_z_key
    assert key(3, 15, 8, 15) == key(7, 15, 12, 15)
    assert key(30, 30, 22, 25) == key(12, 30, 4, 25)      # such ties are common
    exact = float(B.unconditional_p(7, 15, 12, 15, "barnard", "lower"))
    assert U.run(U.Binomials(7, 15, 12, 15), "barnard", "lower").p_value == pytest.approx(
        exact, rel=1e-9)


def test_published_examples():
    # Barnard (1945), Nature 156:177, his example of 3 of 3 against 0 of 3: the most extreme
    # outcome alone, p = max pi^3 (1 - pi)^3 = 1/64 (from memory; it follows by hand).
    assert U.run(U.Binomials(3, 3, 0, 3), "barnard", "higher").p_value == pytest.approx(1 / 64)
    assert U.run(U.Binomials(3, 3, 0, 3), "boschloo", "higher").p_value == pytest.approx(1 / 64)
    # Chan (1998), Statistics in Medicine 17:1403, the influenza vaccine trial: 7 of 15
    # infected with the vaccine, 12 of 15 with placebo; one-sided exact unconditional score
    # test p = 0.0341 against Fisher's 0.0641 (from memory, as quoted in scipy's barnard_exact
    # documentation from Mehta & Senchaudhuri 2003).
    out = permq.run("count 7 of 15 vs 12 of 15 using barnard alternative lower")[0]
    assert round(out.outcome.p_value, 4) == 0.0341
    fisher = [t for t in out.extra["tests_also"] if t["test"].startswith("Fisher")][0]
    assert round(fisher["p_value"], 4) == 0.0641


@pytest.mark.parametrize("case", [(3, 20, 9, 21), (2, 6, 5, 7), (7, 15, 12, 15), (0, 8, 4, 9),
                                  (6, 6, 1, 7)])
def test_boschloo_never_exceeds_fisher(case):
    data = U.Binomials(*case)
    table = data.table
    for alt, sa in (("higher", "greater"), ("lower", "less"), ("two-sided", "two-sided")):
        fisher = stats.fisher_exact(table, alternative=sa).pvalue
        assert U.run(data, "boschloo", alt).p_value <= fisher * (1 + 1e-9)


INTERVAL_CASES = [(2, 5, 4, 5), (0, 4, 3, 5), (4, 4, 1, 5), (3, 6, 2, 4)]


@pytest.mark.parametrize("case", INTERVAL_CASES)
def test_difference_interval_ends_just_inside_and_outside(case):
    alpha = 0.05 / 2
    lo, hi = R.difference_interval(U.Binomials(*case), 0.95)
    eps = 1e-5
    if lo > -1:
        assert B.one_sided_unconditional(*case, "difference", lo - eps, True) <= alpha
        assert B.one_sided_unconditional(*case, "difference", lo + eps, True) > alpha
    else:
        assert B.one_sided_unconditional(*case, "difference", -1 + eps, True) > alpha
    if hi < 1:
        assert B.one_sided_unconditional(*case, "difference", hi + eps, False) <= alpha
        assert B.one_sided_unconditional(*case, "difference", hi - eps, False) > alpha
    else:
        assert B.one_sided_unconditional(*case, "difference", 1 - eps, False) > alpha


@pytest.mark.parametrize("case", INTERVAL_CASES)
def test_ratio_interval_ends_just_inside_and_outside(case):
    alpha = 0.05 / 2
    lo, hi = R.ratio_interval(U.Binomials(*case), 0.95)
    f = 1 + 1e-5
    if lo > 0:
        assert B.one_sided_unconditional(*case, "ratio", lo / f, True) <= alpha
        assert B.one_sided_unconditional(*case, "ratio", lo * f, True) > alpha
    else:
        assert case[0] == 0
    if math.isfinite(hi):
        assert B.one_sided_unconditional(*case, "ratio", hi * f, False) <= alpha
        assert B.one_sided_unconditional(*case, "ratio", hi / f, False) > alpha
    else:
        assert case[2] == 0


def test_one_sided_intervals_have_one_open_end():
    data = U.Binomials(3, 6, 2, 4)
    lo, hi = R.difference_interval(data, 0.95, "higher")
    assert hi == 1.0 and lo > -1
    assert B.one_sided_unconditional(3, 6, 2, 4, "difference", lo - 1e-5, True) <= 0.05
    assert B.one_sided_unconditional(3, 6, 2, 4, "difference", lo + 1e-5, True) > 0.05
    rlo, rhi = R.ratio_interval(data, 0.95, "lower")
    assert rlo == 0.0 and math.isfinite(rhi)


def test_restricted_estimates_maximise_the_constrained_likelihood():
    from scipy.optimize import minimize_scalar
    from scipy.special import xlogy

    n1, n2 = 7, 9
    for d in (-0.5, 0.2, 0.6):
        _, q2 = R.restricted_difference(n1, n2, d)
        for a, b in ((0, 0), (3, 4), (7, 9), (2, 9)):
            f = lambda p: -(xlogy(a, p + d) + xlogy(n1 - a, 1 - p - d) + xlogy(b, p)
                            + xlogy(n2 - b, 1 - p))
            r = minimize_scalar(f, bounds=(max(0, -d), min(1, 1 - d)), method="bounded",
                                options={"xatol": 1e-12})
            assert q2[a, b] == pytest.approx(r.x, abs=1e-6)
    for r_ in (0.3, 2.5):
        _, q2 = R.restricted_ratio(n1, n2, r_)
        for a, b in ((3, 4), (7, 0), (2, 9)):
            f = lambda p: -(xlogy(a, r_ * p) + xlogy(n1 - a, 1 - r_ * p) + xlogy(b, p)
                            + xlogy(n2 - b, 1 - p))
            r = minimize_scalar(f, bounds=(0, min(1, 1 / r_)), method="bounded",
                                options={"xatol": 1e-12})
            assert q2[a, b] == pytest.approx(r.x, abs=1e-6)


@pytest.mark.filterwarnings("ignore::RuntimeWarning")   # statsmodels divides by a zero count
def test_counterparts_against_statsmodels():
    from statsmodels.stats.proportion import (confint_proportions_2indep,
                                              test_proportions_2indep)
    from permq.normal import counts as N

    for case in ((7, 15, 12, 15), (3, 20, 9, 21), (10, 40, 22, 45), (5, 5, 0, 7)):
        nt = N.two_proportions(*case)
        want = test_proportions_2indep(*case, method="score", correction=False)
        assert nt.p_value == pytest.approx(want.pvalue, rel=1e-9)
        assert nt.interval == pytest.approx(confint_proportions_2indep(*case, method="newcomb"),
                                            rel=1e-9)
        ratio = N.ratio_score_interval(*case)
        sm = confint_proportions_2indep(*case, method="score", compare="ratio")
        assert ratio[0] == pytest.approx(sm[0], rel=1e-7)
        assert ratio[1] == pytest.approx(sm[1], rel=1e-7)


def test_monte_carlo_agrees_with_exact():
    data = U.Binomials(10, 40, 22, 45)
    exact = U.run(data, "barnard", "two-sided").p_value
    mc = U.run(data, "barnard", "two-sided", "monte-carlo", draws=40_000, seed=11)
    assert mc.method == "monte-carlo" and mc.draws == 40_000
    assert abs(mc.p_value - exact) < 4 * math.sqrt(exact * (1 - exact) / 40_000) + 1e-3


def test_statement_forms_agree_and_default_is_boschloo():
    inline = permq.run("count 3 of 20 vs 9 of 21")[0]
    boschloo = U.run(U.Binomials(3, 20, 9, 21), "boschloo", "two-sided").p_value
    assert inline.outcome.p_value == boschloo
    assert inline.outcome.statistic_name == U.NAMES["boschloo"]
    table = permq.run("count [[3, 17], [9, 12]] using boschloo")[0]
    frame = pd.DataFrame({"dead": [1] * 3 + [0] * 17 + [1] * 9 + [0] * 12,
                          "dose": ["high"] * 20 + ["low"] * 21})
    columns = permq.run("count dead by dose using boschloo", tables={"d": frame})[0]
    for r in (table, columns):
        assert r.outcome.p_value == pytest.approx(inline.outcome.p_value, rel=1e-12)
        assert r.estimate.interval == pytest.approx(inline.estimate.interval, rel=1e-9)
    assert columns.effect == "proportion of dead = 1: high - low"
    d = inline.to_dict()
    assert d["family"] == "two-proportions"
    assert d["estimate"]["name"] == "risk difference p1 - p2"
    assert d["estimates_also"][0]["name"] == "risk ratio p1 / p2"
    assert d["normal_interval"]["method"].startswith("Newcombe")
    fisher = permq.run("count 3 of 20 vs 9 of 21 using fisher")[0]
    assert fisher.outcome.p_value == pytest.approx(
        stats.fisher_exact([[3, 17], [9, 12]]).pvalue, rel=1e-12)


@pytest.mark.parametrize("text, words", [
    ("count 9 of 5 vs 2 of 3", "more successes than trials"),
    ("count 3 of 0 vs 2 of 3", "has no trials"),
    ("count [[3, 17, 2], [9, 12, 1]] using boschloo", "2 x 2 table"),
    ("count 3 of 20 vs 9 of 21 using chi-square", "not a test family for two proportions"),
    ("count 3 of 20 vs 9 of 21 ordered", "'ordered' does not apply to two proportions"),
])
def test_bad_input_gets_a_clear_message(text, words):
    out = permq.run(text)[0]
    assert words in out.message + (out.hint or "")


def test_columns_need_two_values_and_two_groups():
    frame = pd.DataFrame({"score": [1, 2, 3, 1, 2, 3], "dose": list("aabbcc")})
    out = permq.run("count score by dose using boschloo", tables={"d": frame})[0]
    assert "exactly two values" in out.message
    frame = pd.DataFrame({"dead": [1, 0, 1, 0, 1, 0], "dose": list("aabbcc")})
    out = permq.run("count dead by dose using boschloo", tables={"d": frame})[0]
    assert "two levels" in out.message and 'levels "a", "b"' in out.hint
    ok = permq.run('count dead by dose using boschloo levels "c", "a"', tables={"d": frame})[0]
    assert ok.effect.endswith("c - a") and any("left out 2 rows" in w for w in ok.warnings)
