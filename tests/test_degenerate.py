"""Degenerate textbook cases are reported as undefined (with the reason) or at their exact
limit, never as an infinite t, a p of 0 or nan; where the test is defined, it agrees with
scipy / statsmodels. Monte Carlo p-values print with their interval as two ends."""
import math
import re
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import permq
from permq.engine.core import pvalues
from permq.normal import association as NA, blocks as NB, ksample as NK, tables as NT
from permq.normal import theory as NTh
from permq.normal.degenerate import no_spread
from permq.render import text as render_text

sm = pytest.importorskip("statsmodels.api")


def result(statement, tables=None):
    [r] = permq.Session(tables=tables or {}).run(statement)
    assert isinstance(r, permq.Result), getattr(r, "message", r)
    return r


def shown(r):
    return render_text.render_one(r)


# ---------------------------------------------------------------- one-sample and paired t

def test_paired_differences_equal_as_recorded_have_zero_spread():
    after, before = [4.85, 5.95, 4.40], [4.20, 5.30, 3.75]
    # brute force in exact decimals: every difference is 0.65, the sample variance is 0
    exact = [Fraction(str(a)) - Fraction(str(b)) for a, b in zip(after, before)]
    assert len(set(exact)) == 1
    # scipy works on the floating-point differences, which differ by 1e-16, and prints a
    # spurious t of about 2e15 and p of about 2e-31
    ref = stats.ttest_rel(after, before)
    assert ref.statistic > 1e14 and ref.pvalue < 1e-20
    r = result(f"compare {after} vs {before} paired")
    assert r.normal.undefined == "zero spread"
    assert math.isnan(r.normal.p_value) and r.normal.interval is None
    text = shown(r)
    normal_lines = [ln for ln in text.splitlines() if "p (two-sided)" in ln or "normal theory:" in ln]
    assert all("undefined (zero spread)" in ln for ln in normal_lines)
    assert "e+15" not in text and "e-16" not in text and "e-31" not in text
    assert r.to_dict()["normal_theory"]["p_value"] is None
    assert r.to_dict()["normal_theory"]["undefined"] == "zero spread"


def test_one_sample_t_constant_data_is_undefined_where_scipy_says_inf():
    assert stats.ttest_1samp([2, 2, 2, 2], 1).statistic == math.inf     # scipy: t = inf, p = 0
    r = result("compare [2, 2, 2, 2] vs 1")
    assert r.normal.undefined == "zero spread" and "undefined (zero spread)" in shown(r)


def test_one_sample_t_with_spread_matches_scipy():
    d = [0.4, -0.1, 0.9, 0.3, 0.6, 0.2]
    nt = NTh.one_sample_t(np.array(d), 0.95, "two-sided")
    ref = stats.ttest_1samp(d, 0)
    assert not nt.undefined
    assert nt.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-10)


def test_welch_t_zero_spread_in_both_groups_is_undefined_in_one_matches_scipy():
    assert NTh.welch_t(np.array([1.3] * 3), np.array([2.3] * 3), 0.95,
                          "two-sided").undefined == "zero spread"
    x, y = np.array([1.3, 1.3, 1.3]), np.array([2.1, 2.3, 2.6, 2.2])
    nt = NTh.welch_t(x, y, 0.95, "two-sided")
    ref = stats.ttest_ind(x, y, equal_var=False)
    assert nt.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert nt.p_value == pytest.approx(ref.pvalue, rel=1e-10)


def test_rank_normal_approximations_with_every_value_tied_are_undefined():
    nt = NTh.rank_sum_z(np.array([3.0, 3, 3]), np.array([3.0, 3]), 0.95, "two-sided")
    assert nt.undefined == "all values tied"
    assert NTh.signed_rank_z(np.zeros(4), 0.95, "two-sided").undefined
    assert NTh.sign_z(np.zeros(4), 0.95, "two-sided").undefined


def test_no_spread_on_the_grid_and_off_it():
    assert no_spread(np.array([5.95, 4.85, 4.40]) - np.array([5.30, 4.20, 3.75]))
    # recorded to 2 decimals at 1e6: noise of 1e-10 in each difference
    assert no_spread(np.array([1e6 + 0.01, 2e6 + 0.01]) - np.array([1e6, 2e6]))
    assert not no_spread([0.1, 0.1000001])
    assert not no_spread([math.pi, math.pi * (1 + 1e-9)])
    assert no_spread([math.pi, math.pi * (1 + 1e-15)])


# ---------------------------------------------------------------- F within blocks, ANOVA

def _exact_additive():
    rows = [(10 + b + e, g, str(i)) for i, b in enumerate([0, 1.5, 3])
            for g, e in zip("ABC", [0, 2, 5])]
    return pd.DataFrame(rows, columns=["y", "g", "b"])


def test_f_within_blocks_with_zero_residual_is_undefined():
    frame = _exact_additive()
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    # statsmodels fits the residual as rounding noise (about 1e-28) and prints F near 1e29
    ref = anova_lm(smf.ols("y ~ C(b) + C(g)", frame).fit())
    assert ref.loc["C(g)", "F"] > 1e20
    r = result("compare y by g within b using means", {"t": frame})
    assert r.normal.undefined == "zero residual"
    assert "undefined (zero residual)" in shown(r)
    r2 = result('compare y by g levels "A", "B" within b', {"t": frame})
    assert r2.normal.undefined == "zero residual"


def test_f_within_blocks_with_a_residual_matches_statsmodels():
    frame = _exact_additive()
    frame.loc[4, "y"] += 0.7
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    ref = anova_lm(smf.ols("y ~ C(b) + C(g)", frame).fit(), typ=2)
    codes = frame.g.map({"A": 0, "B": 1, "C": 2}).to_numpy()
    nt = NB.additive_f(frame.y.to_numpy(), codes, frame.b.astype(int).to_numpy())
    assert nt.statistic == pytest.approx(ref.loc["C(g)", "F"], rel=1e-9)
    assert nt.p_value == pytest.approx(ref.loc["C(g)", "PR(>F)"], rel=1e-9)


def test_one_way_anova_zero_within_spread_is_undefined():
    v = np.array([1.0, 1, 1, 2, 2, 2, 3, 3, 3])
    g = np.repeat([0, 1, 2], 3)
    assert NK.one_way_anova(v, g).undefined.startswith("zero spread")
    assert NK.welch_anova(v, g).undefined.startswith("zero spread")
    v2 = v + np.array([0, 0.1, 0.3, 0, 0.2, 0.1, 0.05, 0, 0.4])
    ref = stats.f_oneway(v2[:3], v2[3:6], v2[6:])
    assert NK.one_way_anova(v2, g).p_value == pytest.approx(ref.pvalue, rel=1e-10)


# ---------------------------------------------------------------- slopes: HC3, perfect fits

X_LEVER = np.array([0.0, 0, 0, 0, 1])
Y_LEVER = np.array([1.0, 2, 1.5, 2.5, 4])


def test_hc3_with_a_point_of_leverage_one_is_undefined():
    design = np.column_stack([np.ones(5), X_LEVER])
    hat = design @ np.linalg.inv(design.T @ design) @ design.T
    assert hat[4, 4] == pytest.approx(1.0)
    # without that point x is constant: the slope is not estimable, so the point's deleted
    # residual e / (1 - h) does not exist and neither does HC3
    assert np.linalg.matrix_rank(design[:4]) == 1
    # the fit passes through that point, so its deleted residual e / (1 - h) is 0 / 0: any
    # number a library prints for HC3 here is rounding noise, not a standard error
    resid = sm.OLS(Y_LEVER, design).fit().resid
    assert abs(resid[4]) < 1e-12 and abs(1.0 - hat[4, 4]) < 1e-12
    ols, hc3 = NA.slope(Y_LEVER, X_LEVER, "two-sided")
    assert hc3.undefined == "a point of leverage 1" and math.isnan(hc3.p_value)
    ref = sm.OLS(Y_LEVER, design).fit()
    assert ols.statistic == pytest.approx(ref.tvalues[1], rel=1e-10)
    frame = pd.DataFrame({"y": Y_LEVER, "x": X_LEVER})
    text = shown(result("relate y to x using slope in t", {"t": frame}))
    assert "HC3 robust standard error: undefined (a point of leverage 1)" in text
    assert "inf" not in text.split("95% interval")[0]


def test_hc3_below_leverage_one_matches_statsmodels():
    x = np.array([0.0, 0, 0, 0.1, 1])
    design = np.column_stack([np.ones(5), x])
    ref = sm.OLS(Y_LEVER, design).fit(cov_type="HC3")
    _, hc3 = NA.slope(Y_LEVER, x, "two-sided")
    assert hc3.statistic == pytest.approx(ref.tvalues[1], rel=1e-9)
    # statsmodels' robust p uses the normal; ours the t on the residual df
    assert hc3.p_value == pytest.approx(2 * stats.t.sf(abs(ref.tvalues[1]), 3), rel=1e-9)


def test_a_perfect_line_leaves_the_t_tests_undefined():
    x = np.array([1.0, 2, 3, 4, 5])
    ols, hc3 = NA.slope(2 * x, x, "two-sided")
    assert ols.undefined.startswith("zero residual") and hc3.undefined.startswith("zero residual")
    assert NA.pearson(2 * x, x, "two-sided").undefined.startswith("zero residual")
    assert NA.spearman(2 * x, x, "two-sided").undefined
    y = np.array([1.0, 2.2, 2.9, 4.1, 5.0])
    ref = stats.pearsonr(x, y)
    assert NA.pearson(y, x, "two-sided").p_value == pytest.approx(ref.pvalue, rel=1e-9)


# ---------------------------------------------------------------- counts

@pytest.mark.parametrize("n", [7, 20, 33])
def test_wilson_bound_for_no_successes_is_exactly_zero(n):
    from statsmodels.stats.proportion import proportion_confint

    lo, hi = proportion_confint(0, n, alpha=0.05, method="wilson")
    nt = NT.one_proportion(0, n)
    assert nt.interval[0] == 0.0        # the exact limit (the formula leaves about 1e-17)
    assert nt.interval[1] == pytest.approx(hi, rel=1e-12)
    lo, hi = proportion_confint(n, n, alpha=0.05, method="wilson")
    nt = NT.one_proportion(n, n)
    assert nt.interval == (pytest.approx(lo, rel=1e-12), 1.0)


def test_wilson_formula_leaves_rounding_at_zero_for_seven_trials():
    """The case that printed 2.8e-17: statsmodels gives it too."""
    from statsmodels.stats.proportion import proportion_confint

    assert 0 < proportion_confint(0, 7, method="wilson")[0] < 1e-15
    r = result("count 0 of 7")
    assert r.normal.interval[0] == 0.0 and "e-17" not in shown(r)


def test_mcnemar_without_discordant_pairs_is_undefined():
    assert NT.mcnemar(np.array([[5, 0], [0, 7]])).undefined == "no discordant pairs"


# ---------------------------------------------------------------- Monte Carlo p as two ends

def test_monte_carlo_p_prints_its_interval_as_two_ends():
    frame = pd.DataFrame({"y": [12.4, 13.1, 11.8, 12.9, 11.0, 11.5, 10.9, 11.6],
                          "g": list("AAAABBBB")})
    r = result('compare y by g sampled 2000 seed 3', {"t": frame})
    o = r.outcome
    b = round(o.p_value * 2001) - 1
    ref = stats.binomtest(b, 2000).proportion_ci(0.99, method="exact")   # Clopper-Pearson
    assert o.p_interval == (pytest.approx(ref.low, rel=1e-9), pytest.approx(ref.high, rel=1e-9))
    text = shown(r)
    assert "±" not in text
    lo, hi = o.p_interval
    assert re.search(rf"{o.p_value:.4f} \[{lo:.4f}, {hi:.4f}\]", text)
    assert f"{b:,} as extreme as the observed" in text


def test_no_draw_as_extreme_is_said_and_the_interval_starts_at_zero():
    frame = pd.DataFrame({"y": np.arange(20.0), "x": np.arange(20.0) * 2 + 1})
    r = result("relate y to x using slope in t sampled 1000 seed 1", {"t": frame})
    assert r.outcome.p_value == pytest.approx(1 / 1001)
    _, (lo, hi) = pvalues.monte_carlo_p(0, 1000)
    assert lo == 0 and hi == pytest.approx(1 - 0.005 ** (1 / 1000), rel=1e-9)  # closed form
    text = shown(r)
    assert "no draw as extreme as the observed" in text
    assert "[0, " in text and "±" not in text
