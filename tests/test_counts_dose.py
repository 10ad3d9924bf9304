"""A binary response against a dose: the exact conditional logistic (score) test, the
conditional MLE of the slope with its exact interval, finite (median unbiased) under complete
separation; beside the asymptotic logistic fit. Checks: brute force over every choice of the
event units (exact rationals); statsmodels Logit and ConditionalLogit; Fisher's tea tasting."""
import math
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

import brute_counts as B
import permq
from permq.engine.counts import conditional as C
from permq.engine.counts import trend as T


def _law_fraction_tilt(law, observed, b):
    """(P_b(T >= t), P_b(T <= t), E_b T) from the brute-force law, b a float."""
    ws = {t: c * math.exp(b * float(t - observed)) for t, c in law.items()}
    total = sum(ws.values())
    up = sum(w for t, w in ws.items() if t >= observed) / total
    down = sum(w for t, w in ws.items() if t <= observed) / total
    mean = sum(float(t) * w for t, w in ws.items()) / total
    return up, down, mean


DATA = [  # (dose, dead): doses with ties and two decimals
    ([0, 0, 0, 0.5, 0.5, 0.5, 1.25, 1.25, 1.25, 2.5, 2.5, 2.5], [0, 0, 1, 0, 1, 0, 0, 1, 1, 1, 1, 1]),
    ([1.1, 2.3, 2.3, 4.0, 5.2, 6.1, 7.7, 8.0], [0, 1, 0, 0, 1, 1, 0, 1]),
    ([0, 1, 2, 3, 4, 5, 6, 7, 8, 9], [0, 0, 1, 0, 0, 1, 1, 1, 0, 1]),
]


@pytest.mark.parametrize("x, y", DATA)
def test_exact_test_slope_and_interval_by_brute_force(x, y):
    frame = pd.DataFrame({"dose": x, "dead": y})
    strata = [list(zip(x, y))]
    law = B.trend_law(strata)
    observed = B.trend_observed(strata)
    for alt in ("two-sided", "higher", "lower"):
        r = permq.run(f"relate dead to dose alternative {alt}", tables={"d": frame})[0]
        assert r.family == "dose-response"
        assert r.outcome.p_value == pytest.approx(float(B.linear_tail(law, observed, alt)),
                                                  rel=1e-10)
    r = permq.run("relate dead to dose", tables={"d": frame})[0]
    b = r.estimate.value
    assert _law_fraction_tilt(law, observed, b)[2] == pytest.approx(float(observed), abs=1e-8)
    lo, hi = r.estimate.interval
    eps = 1e-6
    assert _law_fraction_tilt(law, observed, lo - eps)[0] < 0.025 < \
        _law_fraction_tilt(law, observed, lo + eps)[0]
    assert _law_fraction_tilt(law, observed, hi + eps)[1] < 0.025 < \
        _law_fraction_tilt(law, observed, hi - eps)[1]


@pytest.mark.parametrize("x, y", DATA)
def test_algorithms_agree(x, y):
    st = [T.stratum(x, y)]
    grid, law = T.run(st, "two-sided", "dp-grid")
    values, law2 = T.run(st, "two-sided", "dp-values")
    assert values.p_value == pytest.approx(grid.p_value, rel=1e-10)
    assert T.slope(law2, 0.95, "two-sided")[0] == pytest.approx(T.slope(law, 0.95, "two-sided")[0],
                                                                 rel=1e-8)
    mc, _ = T.run(st, "two-sided", "monte-carlo", 20_000, 9)
    p = grid.p_value
    assert abs(mc.p_value - p) < 4 * math.sqrt(p * (1 - p) / 20_000) + 1e-3


def test_scores_off_any_grid_use_the_distinct_sums():
    # square roots of primes: no subset sums tie, in rationals or in floating point
    x = [math.sqrt(p) for p in (2, 3, 5, 7, 11, 13, 17)]
    y = [0, 0, 1, 0, 1, 1, 1]
    cands = {c.algorithm: c for c in T.candidates([T.stratum(x, y)], 1000)}
    assert not cands["dp-grid"].feasible and cands["dp-values"].feasible
    r = permq.run("relate y to x", tables={"d": pd.DataFrame({"x": x, "y": y})})[0]
    law = B.trend_law([list(zip(x, y))])
    assert r.outcome.p_value == pytest.approx(
        float(B.linear_tail(law, B.trend_observed([list(zip(x, y))]), "two-sided")), rel=1e-9)


def test_against_statsmodels_logit_and_conditional_logit():
    import statsmodels.api as sm
    from statsmodels.discrete.conditional_models import ConditionalLogit

    x, y = DATA[2]
    frame = pd.DataFrame({"dose": x, "dead": y})
    r = permq.run("relate dead to dose", tables={"d": frame})[0]
    fit = sm.Logit(np.array(y, float), sm.add_constant(np.array(x, float))).fit(disp=0)
    assert r.normal.statistic == pytest.approx(fit.tvalues[1], rel=1e-6)
    assert r.normal.p_value == pytest.approx(fit.pvalues[1], rel=1e-6)
    assert r.normal.interval == pytest.approx(tuple(fit.conf_int()[1]), rel=1e-6)
    lr = r.also_normal[0]
    assert lr.statistic == pytest.approx(fit.llr, rel=1e-6)
    cfit = ConditionalLogit(np.array(y), np.array(x, float)[:, None],
                            groups=np.zeros(len(y))).fit(disp=0)
    assert r.estimate.value == pytest.approx(float(cfit.params[0]), rel=1e-6)


def test_complete_separation_gives_a_finite_median_unbiased_slope():
    x = [1, 2, 3, 4, 5, 6]
    y = [0, 0, 0, 1, 1, 1]
    frame = pd.DataFrame({"dose": x, "dead": y})
    r = permq.run("relate dead to dose", tables={"d": frame})[0]
    assert "median unbiased" in r.estimate.name and math.isfinite(r.estimate.value)
    law = B.trend_law([list(zip(x, y))])
    up, _, _ = _law_fraction_tilt(law, B.trend_observed([list(zip(x, y))]), r.estimate.value)
    assert up == pytest.approx(0.5, abs=1e-9)
    lo, hi = r.estimate.interval
    assert hi == math.inf
    obs = B.trend_observed([list(zip(x, y))])
    assert _law_fraction_tilt(law, obs, lo - 1e-6)[0] < 0.025 < \
        _law_fraction_tilt(law, obs, lo + 1e-6)[0]
    assert r.outcome.p_value == pytest.approx(2 / math.comb(6, 3))
    assert math.isnan(r.normal.p_value) and "separated" in r.normal.interval_method


def test_published_tea_tasting():
    # Fisher (1935), The Design of Experiments, ch. II: eight cups, four with the milk first;
    # the lady names three of those four correctly: P = 17/70 one-sided (as printed). With the
    # cup's truth as a binary dose, the exact conditional logistic test is Fisher's test.
    frame = pd.DataFrame({"milk_first": [1, 1, 1, 1, 0, 0, 0, 0],
                          "called_milk": [1, 1, 1, 0, 1, 0, 0, 0]})
    r = permq.run("relate called_milk to milk_first alternative higher", tables={"t": frame})[0]
    assert r.outcome.p_value == pytest.approx(17 / 70, rel=1e-12)
    from scipy.stats.contingency import odds_ratio

    assert math.exp(r.estimate.value) == pytest.approx(
        odds_ratio([[3, 1], [1, 3]], kind="conditional").statistic, rel=1e-8)


def test_binary_response_messages_and_other_families():
    frame = pd.DataFrame({"dose": [0, 1, 2, 3, 4, 5], "dead": ["no", "no", "yes", "no", "yes",
                                                               "yes"]})
    r = permq.run("relate dead to dose", tables={"d": frame})[0]
    assert r.effect.startswith("logistic slope of dead = yes")
    frame2 = pd.DataFrame({"dose": [0, 1, 2, 3, 4, 5], "dead": [0, 0, 1, 0, 1, 1]})
    pearson = permq.run("relate dead to dose using pearson", tables={"d": frame2})[0]
    assert pearson.family == "association"
    logistic = permq.run("relate dead to dose", tables={"d": frame2})[0]
    assert logistic.outcome.p_value == pytest.approx(pearson.outcome.p_value, rel=1e-10)
    const = pd.DataFrame({"dose": [2, 2, 2, 2], "dead": [0, 1, 0, 1]})
    out = permq.run("relate dead to dose", tables={"d": const})[0]
    assert "constant" in out.message


def test_conditional_law_basics():
    law = C.Law(np.array([0.0, 1.0, 2.0]), np.log(np.array([1.0, 2.0, 1.0])), 2.0)
    assert C.tail(law, "higher") == pytest.approx(0.25)
    assert C.tail(law, "two-sided", "linear") == pytest.approx(0.5)
    assert C.tail(law, "two-sided", "probability") == pytest.approx(0.5)
    assert C.cmle(law) == math.inf
    # P_b(T = 2) = e^{2b} / (1 + 2 e^b + e^{2b}) = 1/2  <=>  e^b = 1 + sqrt(2)
    assert C.median_unbiased(law) == pytest.approx(math.log(1 + math.sqrt(2)), rel=1e-9)
