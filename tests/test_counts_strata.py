"""Stratified 2 x 2 tables and the stratified trend: exact conditional test of a common odds
ratio, its conditional MLE and exact interval, Zelen's exact test of homogeneity, the exact
trend test within strata; Mantel-Haenszel and Breslow-Day beside them.

Checks: brute force over every configuration in exact rationals (p-values, the estimate's
defining equation, every interval end just inside / just outside); scipy (one stratum is
Fisher's test and its conditional odds ratio); statsmodels (StratifiedTable, ConditionalLogit);
the penicillin data of Mantel (1963) as analysed by Agresti.
"""
import math
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.stats.contingency import odds_ratio

import brute_counts as B
import permq
from permq.engine.counts import homogeneity as H
from permq.engine.counts import strata as S
from permq.engine.counts import trend as T

# Mantel (1963): rabbits given penicillin at five levels, treated at once or 1.5 h later,
# cured or died; rows (immediate, delayed), columns (cured, died).
PENICILLIN = [[[0, 6], [0, 5]], [[3, 3], [0, 6]], [[6, 0], [2, 4]], [[5, 1], [6, 0]],
              [[2, 0], [5, 0]]]
# statsmodels' own test tables (TestStratified2), five strata
SM = [[[20, 14], [10, 24]], [[15, 12], [3, 15]], [[3, 2], [3, 2]], [[12, 3], [7, 5]],
      [[1, 0], [3, 2]]]
SMALL = [[[2, 1], [0, 3]], [[1, 2], [2, 1]], [[3, 0], [1, 1]]]


@pytest.mark.parametrize("tables", [PENICILLIN, SM, SMALL])
def test_common_odds_ratio_test_equals_brute_force(tables):
    law = B.strata_law(tables)
    observed = sum(t[0][0] for t in tables)
    st = S.as_strata(tables)
    for alt in ("higher", "lower", "two-sided"):
        want = float(B.tail_probability_rule(law, observed, alt))
        assert S.run(st, alt).p_value == pytest.approx(want, rel=1e-10), alt


@pytest.mark.parametrize("tables", [PENICILLIN, SMALL])
def test_estimate_and_interval_ends_by_brute_force(tables):
    law = B.strata_law(tables)
    observed = sum(t[0][0] for t in tables)
    est = S.common_odds_ratio(S.as_strata(tables), 0.95)
    _, _, mean = B.tilted_tails(law, observed, Fraction(est.value))
    assert float(mean) == pytest.approx(observed, abs=1e-9)
    lo, hi = est.interval
    f = Fraction(1) + Fraction(1, 10 ** 6)
    up, _, _ = B.tilted_tails(law, observed, Fraction(lo) / f)
    assert up < Fraction(1, 40)
    up, _, _ = B.tilted_tails(law, observed, Fraction(lo) * f)
    assert up > Fraction(1, 40)
    _, down, _ = B.tilted_tails(law, observed, Fraction(hi) * f)
    assert down < Fraction(1, 40)
    _, down, _ = B.tilted_tails(law, observed, Fraction(hi) / f)
    assert down > Fraction(1, 40)


def test_one_stratum_is_fishers_test():
    for t in ([[3, 1], [1, 3]], [[9, 1], [3, 7]], [[12, 5], [3, 20]]):
        st = S.as_strata([t])
        for alt, sa in (("two-sided", "two-sided"), ("higher", "greater"), ("lower", "less")):
            assert S.run(st, alt).p_value == pytest.approx(
                stats.fisher_exact(t, alternative=sa).pvalue, rel=1e-10)
        est = S.common_odds_ratio(st)
        ref = odds_ratio(t, kind="conditional")
        assert est.value == pytest.approx(ref.statistic, rel=1e-8)
        ci = ref.confidence_interval(0.95)
        assert est.interval == pytest.approx((ci.low, ci.high), rel=1e-7)


def test_extreme_strata_give_the_median_unbiased_estimate():
    tables = [[[3, 0], [0, 2]], [[2, 0], [0, 4]]]        # every stratum at its largest count
    est = S.common_odds_ratio(S.as_strata(tables))
    assert "median unbiased" in est.name and math.isfinite(est.value) and est.value > 1
    law = B.strata_law(tables)
    up, _, _ = B.tilted_tails(law, 5, Fraction(est.value))
    assert float(up) == pytest.approx(0.5, abs=1e-9)
    assert est.interval[1] == math.inf


def test_published_penicillin_example():
    # Agresti (2002), Categorical Data Analysis, 2nd ed., the penicillin data of Mantel (1963):
    # exact conditional test P = 0.020 one-sided, 0.040 two-sided; conditional ML estimate of
    # the common odds ratio 10.36 (from memory).
    st = S.as_strata(PENICILLIN)
    assert round(S.run(st, "higher").p_value, 3) == 0.020
    assert round(S.run(st, "two-sided").p_value, 3) == 0.040
    assert round(S.common_odds_ratio(st).value, 2) == 10.36
    # two groups in order: the stratified trend test is the same test (its law is symmetric)
    df = _frame(PENICILLIN)
    r = permq.run('count cured by timing within level ordered "immediate" < "delayed"',
                  tables={"pen": df})[0]
    assert round(r.outcome.p_value, 3) == 0.040


@pytest.mark.parametrize("tables", [PENICILLIN, SM, SMALL])
def test_zelen_equals_brute_force_and_monte_carlo_agrees(tables):
    st = S.as_strata(tables)
    want = float(B.zelen_p(tables))
    assert H.run(st).p_value == pytest.approx(want, rel=1e-10)
    mc = H.run(st, "monte-carlo", draws=20_000, seed=5)
    assert abs(mc.p_value - want) < 4 * math.sqrt(want * (1 - want) / 20_000) + 1e-3


def test_counterparts_against_statsmodels():
    from statsmodels.stats.contingency_tables import StratifiedTable
    from permq.normal import counts as N

    ref = StratifiedTable([np.array(t) for t in SM])
    mh = N.mantel_haenszel(SM)
    assert mh.statistic == pytest.approx(ref.test_null_odds(correction=False).statistic)
    assert mh.p_value == pytest.approx(ref.test_null_odds(correction=False).pvalue)
    assert mh.interval == pytest.approx(ref.oddsratio_pooled_confint(), rel=1e-9)
    bd = N.breslow_day(SM)
    assert bd.statistic == pytest.approx(ref.test_equal_odds(adjust=True).statistic, rel=1e-9)
    assert bd.p_value == pytest.approx(ref.test_equal_odds(adjust=True).pvalue, rel=1e-9)


def _frame(tables, groups=("immediate", "delayed"), outcomes=(1, 0)):
    rows = []
    for k, t in enumerate(tables):
        for g, row in zip(groups, t):
            for y, count in zip(outcomes, row):
                rows += [{"level": k, "timing": g, "cured": y}] * count
    return pd.DataFrame(rows)


def test_statement_within_strata():
    df = _frame(PENICILLIN)
    r = permq.run('count cured by timing within level levels "immediate", "delayed"',
                  tables={"pen": df})[0]
    assert r.family == "strata"
    assert r.outcome.p_value == pytest.approx(S.run(S.as_strata(PENICILLIN)).p_value)
    assert r.effect.startswith("common odds ratio of cured = 1: immediate against delayed")
    assert any("2 strata" in w for w in r.warnings)
    zelen = r.extra["tests_also"][0]
    assert zelen["p_value"] == pytest.approx(float(B.zelen_p(PENICILLIN)))
    assert [s["stratum"] for s in r.extra["strata"]] == ["0", "1", "2", "3", "4"]
    h = permq.run('count cured by timing within level levels "immediate", "delayed" '
                  "using homogeneity", tables={"pen": df})[0]
    assert h.outcome.p_value == pytest.approx(zelen["p_value"])
    assert "Breslow-Day" in h.normal.test


def test_stratified_trend_equals_brute_force_and_the_logistic_cmle():
    """2 x 3 x 3: doses 0, 1, 2.5 in three litters; the exact trend p by brute force over every
    choice of the events; the common slope's CMLE against statsmodels' ConditionalLogit."""
    counts = {  # litter: [(events, n) at dose 0, 1, 2.5]
        "a": [(0, 3), (1, 3), (2, 3)], "b": [(1, 3), (1, 2), (3, 4)], "c": [(0, 2), (2, 3), (1, 2)]}
    doses = (0.0, 1.0, 2.5)
    rows, strata = [], []
    for litter, cells in counts.items():
        units = []
        for dose, (e, n) in zip(doses, cells):
            units += [(dose, 1)] * e + [(dose, 0)] * (n - e)
            rows += [{"litter": litter, "dose": dose, "dead": 1}] * e
            rows += [{"litter": litter, "dose": dose, "dead": 0}] * (n - e)
        strata.append(units)
    law = B.trend_law(strata)
    observed = B.trend_observed(strata)
    df = pd.DataFrame(rows)
    for alt in ("two-sided", "higher", "lower"):
        r = permq.run(f"count dead by dose within litter ordered alternative {alt}",
                      tables={"d": df})[0]
        assert r.outcome.p_value == pytest.approx(float(B.linear_tail(law, observed, alt)),
                                                  rel=1e-10)
    r = permq.run("count dead by dose within litter ordered", tables={"d": df})[0]
    lo, hi = r.estimate.interval
    for b, tail, inside in ((lo - 1e-6, "up", False), (lo + 1e-6, "up", True),
                            (hi + 1e-6, "down", False), (hi - 1e-6, "down", True)):
        w = {t: c * math.exp(b * float(t - observed)) for t, c in law.items()}
        total = sum(w.values())
        p = sum(v for t, v in w.items() if (t >= observed if tail == "up" else t <= observed))
        assert (p / total > 0.025) == inside, (b, tail)
    from statsmodels.discrete.conditional_models import ConditionalLogit

    fit = ConditionalLogit(df["dead"].to_numpy(), df[["dose"]].to_numpy(),
                           groups=df["litter"].to_numpy()).fit(disp=0)
    r = permq.run("count dead by dose within litter ordered", tables={"d": df})[0]
    assert r.estimate.value == pytest.approx(float(fit.params[0]), rel=1e-6)
    assert "Cochran-Armitage" in r.normal.test
    mc = T.run([T.stratum([u[0] for u in s], [u[1] for u in s]) for s in strata], "two-sided",
               "monte-carlo", 20_000, 3)[0]
    p = float(B.linear_tail(law, observed, "two-sided"))
    assert abs(mc.p_value - p) < 4 * math.sqrt(p * (1 - p) / 20_000) + 1e-3


def test_strata_messages():
    df = _frame(PENICILLIN)
    df["grade"] = np.arange(len(df)) % 3
    out = permq.run("count cured by grade within level", tables={"d": df})[0]
    assert "add 'ordered'" in out.hint
    df["score"] = np.arange(len(df)) % 4
    out = permq.run("count score by timing within level", tables={"d": df})[0]
    assert "exactly two values" in out.message
    out = permq.run("count cured by timing within lvl", tables={"d": df})[0]
    assert "no column 'lvl'" in out.message and "level" in out.hint
