"""Groups compared with covariates (`compare Y by G adjusting for Z`): the exact p against a
brute-force listing of every assignment with the residuals recomputed from scratch, the exact
interval against the listing's p-values just inside and outside its ends, the analysis of
covariance against statsmodels, ranks and three groups, text covariates (here and in
`relate ... adjusting for`), the robustness check's vectorised tests, and the messages."""
from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

from permq.bind.binder import bind
from permq.bind.common import Defaults
from permq.pipeline import Session
from permq.robustness.arrangements import exact_reference
from permq.robustness.batch import normal_p, observed_statistic, permutation_p, scores
from permq.robustness.pictures import reported
from permq.robustness.problem import data_row, problem_for
from permq.syntax.parser import parse_script

from brute import midranks, tail_share
from conftest import ALTERNATIVES, failure_of, result_of

# made-up data for the checks: a baseline that predicts the response, ties in y, a text column
TRIAL = pd.DataFrame({
    "y": [12.1, 14.0, 11.2, 15.3, 13.0, 12.6, 16.1, 14.8, 13.9, 15.5, 12.6],
    "dose": ["lo", "lo", "lo", "lo", "lo", "hi", "hi", "hi", "hi", "hi", "hi"],
    "base": [10.2, 12.5, 9.8, 13.9, 11.0, 9.1, 12.8, 11.7, 10.4, 12.2, 8.9],
    "pen": ["a", "b", "a", "b", "a", "b", "a", "b", "a", "b", "b"],
    "arm": ["c", "c", "c", "c", "m", "m", "m", "m", "h", "h", "h"],
})
TABLES = {"t": TRIAL}


def residuals(y, z):
    """y minus its least-squares fit on [1, z] (from scratch, no permq code)."""
    X = np.column_stack([np.ones(len(y))] + list(z))
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    return y - X @ coef


def brute_two_groups(y, first, z, alternative, shift=0.0):
    """Every choice of the first group; the difference in mean residuals of y - shift * z1."""
    n, n1 = len(y), int(first.sum())
    r = residuals(y - shift * first, z)
    values = [r[list(c)].mean() - np.delete(r, list(c)).mean()
              for c in itertools.combinations(range(n), n1)]
    observed = r[first == 1].mean() - r[first == 0].mean()
    return tail_share(values, observed, alternative), observed


def assignments(sizes):
    """Every distinct assignment of len = sum(sizes) units to groups of these sizes."""
    n = int(sum(sizes))

    def fill(free, k):
        if k == len(sizes) - 1:
            yield {i: k for i in free}
            return
        for chosen in itertools.combinations(free, int(sizes[k])):
            rest = [i for i in free if i not in chosen]
            for tail in fill(rest, k + 1):
                yield {**{i: k for i in chosen}, **tail}

    for labels in fill(list(range(n)), 0):
        yield np.array([labels[i] for i in range(n)])


def _data(covariates=("base",)):
    y = TRIAL["y"].to_numpy(float)
    first = (TRIAL["dose"] == "hi").to_numpy(float)
    z = [TRIAL[c].to_numpy(float) for c in covariates]
    return y, first, z


@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_exact_p_equals_the_listing_of_every_assignment(alternative):
    r = result_of(f'compare y by dose levels "hi", "lo" adjusting for base '
                  f"alternative {alternative}", TABLES)
    y, first, z = _data()
    p, observed = brute_two_groups(y, first, z, alternative)
    assert r.outcome.method == "exact" and r.outcome.arrangements == 462
    assert r.outcome.p_value == pytest.approx(float(p), rel=1e-12)
    assert r.outcome.statistic == pytest.approx(observed, rel=1e-12)


@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_interval_ends_are_where_the_listed_test_turns(alternative):
    """Just inside each end the listed test does not reject at its side's level, just outside
    it does (the interval is exact: no search, no tolerance on the level)."""
    r = result_of(f'compare y by dose levels "hi", "lo" adjusting for base '
                  f"alternative {alternative} confidence 90%", TABLES)
    y, first, z = _data()
    lo, hi = r.estimate.interval
    side = 0.05 if alternative == "two-sided" else 0.10
    eps = 1e-7 * max(1.0, abs(lo) if np.isfinite(lo) else 1.0, abs(hi) if np.isfinite(hi) else 1.0)
    if np.isfinite(lo):
        assert float(brute_two_groups(y, first, z, "higher", lo + eps)[0]) > side
        assert float(brute_two_groups(y, first, z, "higher", lo - eps)[0]) <= side
    if np.isfinite(hi):
        assert float(brute_two_groups(y, first, z, "lower", hi - eps)[0]) > side
        assert float(brute_two_groups(y, first, z, "lower", hi + eps)[0]) <= side
    assert (alternative == "lower") == (lo == -np.inf)
    assert (alternative == "higher") == (hi == np.inf)


def test_estimate_and_normal_theory_equal_statsmodels_ancova():
    import statsmodels.formula.api as smf

    frame = TRIAL.assign(hi=(TRIAL["dose"] == "hi").astype(float))
    fit = smf.ols("y ~ hi + base + C(pen)", frame).fit()
    r = result_of('compare y by dose levels "hi", "lo" adjusting for base, pen', TABLES)
    assert r.estimate.value == pytest.approx(fit.params["hi"], rel=1e-10)
    assert r.normal.statistic == pytest.approx(fit.tvalues["hi"], rel=1e-10)
    assert r.normal.p_value == pytest.approx(fit.pvalues["hi"], rel=1e-9)
    assert r.normal.df == fit.df_resid
    assert r.normal.interval == pytest.approx(tuple(fit.conf_int().loc["hi"]), rel=1e-9)
    assert any("'pen' is text" in w for w in r.warnings)


def test_three_groups_f_on_residuals_equals_the_listing_and_ancova_f_statsmodels():
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    r = result_of("compare y by arm adjusting for base", TABLES)
    y = TRIAL["y"].to_numpy(float)
    res = residuals(y, [TRIAL["base"].to_numpy(float)])
    g = pd.factorize(TRIAL["arm"], sort=True)[0]

    def f(labels):
        means = np.array([res[labels == k].mean() for k in range(3)])
        sizes = np.bincount(labels)
        ssb = (sizes * (means - res.mean()) ** 2).sum()
        ssw = ((res - means[labels]) ** 2).sum()
        return (ssb / 2) / (ssw / (len(res) - 3))

    values = [f(labels) for labels in assignments(np.bincount(g))]
    assert r.outcome.arrangements == len(values) == 11550       # 11! / (4! 4! 3!)
    assert r.outcome.p_value == pytest.approx(float(tail_share(values, f(g), "higher")), rel=1e-12)
    table = anova_lm(smf.ols("y ~ C(arm) + base", TRIAL).fit(), typ=2)
    assert r.normal.statistic == pytest.approx(table.loc["C(arm)", "F"], rel=1e-9)
    assert r.normal.p_value == pytest.approx(table.loc["C(arm)", "PR(>F)"], rel=1e-9)


def test_ranks_of_residuals_equal_the_listing():
    r = result_of('compare y by dose levels "hi", "lo" adjusting for base using ranks', TABLES)
    y, first, z = _data()
    ranks = midranks(residuals(y, z).round(12))
    chosen = np.flatnonzero(first == 1)
    values = [sum(ranks[i] for i in c) for c in itertools.combinations(range(len(y)), 6)]
    observed = sum(ranks[i] for i in chosen)
    assert r.outcome.p_value == pytest.approx(float(tail_share(values, observed, "two-sided")),
                                              rel=1e-12)
    assert r.outcome.statistic == pytest.approx(float(observed))
    assert r.estimate is None


def test_monte_carlo_interval_brackets_the_exact_one():
    exact = result_of('compare y by dose levels "hi", "lo" adjusting for base', TABLES)
    mc = result_of('compare y by dose levels "hi", "lo" adjusting for base sampled 20000 seed 3',
                   TABLES)
    lo, hi = mc.outcome.p_interval
    assert lo <= exact.outcome.p_value <= hi and mc.outcome.method == "monte-carlo"
    assert mc.estimate.value == exact.estimate.value
    assert mc.estimate.interval == pytest.approx(exact.estimate.interval, rel=0.05)


def test_relate_takes_a_text_covariate_as_indicators():
    import statsmodels.formula.api as smf

    r = result_of("relate y to base using slope adjusting for pen sampled 2000 seed 1", TABLES)
    fit = smf.ols("y ~ base + C(pen)", TRIAL).fit()
    assert r.estimate.value == pytest.approx(fit.params["base"], rel=1e-10)
    assert r.normal.statistic == pytest.approx(fit.tvalues["base"], rel=1e-10)
    assert any("'pen' is text: adjusted for as 1 indicator column (a, b; 'a' the reference)" == w
               for w in r.warnings)


@pytest.mark.parametrize("text", [
    'compare y by dose levels "hi", "lo" adjusting for base',
    'compare y by dose levels "hi", "lo" adjusting for base alternative higher',
    'compare y by dose levels "hi", "lo" adjusting for base, pen using ranks',
    "compare y by arm adjusting for base",
    "compare y by arm adjusting for base using ranks",
])
def test_vectorised_tests_give_the_engines_p_values(text):
    session = Session(tables=TABLES)
    design = bind(parse_script(text)[0].node, session.catalog, Defaults())
    result = session.run(text)[0]
    pb = problem_for(design)
    y = data_row(design)[None, :]
    a = scores(pb, y)
    ref = exact_reference(pb, limit=10 ** 6)
    assert result.outcome.method == "exact"
    assert permutation_p(pb, a, ref)[0] == pytest.approx(result.outcome.p_value, rel=1e-9)
    assert normal_p(pb, y, a)[0] == pytest.approx(result.normal.p_value, rel=1e-9)
    t = reported(pb, a[0], observed_statistic(pb, a))[0]
    assert t == pytest.approx(result.outcome.statistic, rel=1e-9, abs=1e-12)


def test_robustness_check_runs_on_the_design():
    out = Session(tables=TABLES).run('robustness compare y by dose levels "hi", "lo" adjusting '
                                     "for base datasets 200 seed 2")[0]
    d = out.to_dict()
    assert d["family"] == "robustness" and "adjusted for base" in d["analysis"]["design"]
    assert len(d["laws"]) == 6


@pytest.mark.parametrize("text, message", [
    ("compare y by dose adjusting for y", "'y' is the response"),
    ("compare y by arm adjusting for base alternative higher", "no direction"),
    ("compare y by dose adjusting for base within pen", "'within' does not apply"),
    ("compare y by dose adjusting for nothing", "no column 'nothing'"),
])
def test_binder_messages(text, message):
    assert message in failure_of(text, TABLES).message


def test_a_mostly_numeric_covariate_with_a_stray_word_is_refused():
    frame = TRIAL.assign(base=TRIAL["base"].astype(object))
    frame.loc[3, "base"] = "n/a?"
    f = failure_of("compare y by dose adjusting for base", {"t": frame})
    assert f.message == "column 'base' is not numeric: row 5 of the file holds 'n/a?'"
    assert "mostly numbers" in f.hint
