"""Coverage of the intervals in the robustness check.

- The identity it rests on: the engine's exact interval covers the true effect exactly when
  neither one-sided permutation test of the errors rejects at alpha/2 (checked on seeded
  normal samples through the analysis itself).
- Under normal errors both intervals cover at the nominal level, within Monte Carlo error.
- Under a skewed law the one-sample t interval misses unequally in its two tails (Boos &
  Hughes-Oliver 2000, "How large does n have to be for Z and t intervals?", Am. Stat.
  54:121-128: with right skew, the interval falls below the mean more often than above; from
  memory).
"""
from __future__ import annotations

import numpy as np
import pytest

import permq
from permq.robustness.result import RobustnessResult


def _lst(v):
    return "[" + ", ".join(f"{x:.2f}" for x in v) + "]"


def test_exact_interval_covers_exactly_when_neither_one_sided_test_rejects():
    rng = np.random.default_rng(20)
    seen = set()
    for _ in range(25):
        x, y = rng.normal(size=5), rng.normal(size=5)
        base = f"compare {_lst(x)} vs {_lst(y)}"
        r = permq.run(base + " exact")[0]
        hi = permq.run(base + " alternative higher exact")[0].outcome.p_value
        lo = permq.run(base + " alternative lower exact")[0].outcome.p_value
        a, b = r.estimate.interval
        covers = a <= 0 <= b
        rejects = hi <= 0.025 + 1e-12 or lo <= 0.025 + 1e-12
        assert covers == (not rejects)
        seen.add(covers)
    assert True in seen


def _check(text) -> RobustnessResult:
    out = permq.run(text)[-1]
    assert isinstance(out, RobustnessResult), out
    return out


def test_normal_law_covers_at_the_nominal_level():
    rr = _check("robustness compare [1.1, 2.3, 1.9, 3.0, 2.2, 1.4, 2.8, 2.0] vs "
                "[2.9, 3.1, 2.4, 3.8, 3.3, 2.6, 4.0, 3.5] datasets 3000 seed 7")
    normal = next(r for r in rr.coverage if r.law == "normal")
    for cov, se in ((normal.exact, normal.exact_se), (normal.normal, normal.normal_se)):
        assert abs(cov - 0.95) < 3.5 * max(se, 0.004)
    assert normal.exact_verdict == "keeps its level"
    assert rr.to_dict()["coverage"]["level"] == 0.95
    assert "Intervals at 95%" in " ".join(rr.summary)
    assert "coverage of the 95% intervals" in str(rr)


def test_t_interval_misses_unequally_under_right_skew():
    rr = _check("robustness compare [0.8, 1.9, 1.2, 0.4, 2.6, 1.1, 0.7, 1.5] vs 0 "
                "datasets 4000 seed 3")
    expo = next(r for r in rr.coverage if r.law == "exponential")
    se = np.sqrt(expo.normal_below * (1 - expo.normal_below) / 4000)
    assert expo.normal_below > expo.normal_above + 3 * se
    normal = next(r for r in rr.coverage if r.law == "normal")
    assert abs(normal.normal_below - normal.normal_above) < 0.02


def test_no_coverage_without_an_interval():
    rr = _check("robustness compare [1.1, 2.3, 1.9, 3.0] vs [2.9, 3.1, 2.4, 3.8] vs "
                "[4.1, 3.6, 4.4, 5.0] datasets 200 seed 1")
    assert rr.coverage == [] and rr.to_dict()["coverage"] is None


@pytest.mark.parametrize("level", ["90%"])
def test_coverage_follows_the_statements_confidence(level):
    rr = _check(f"robustness compare [1.1, 2.3, 1.9, 3.0, 2.2] vs [2.9, 3.1, 2.4, 3.8, 3.3] "
                f"confidence {level} datasets 300 seed 2")
    assert rr.coverage_level == pytest.approx(0.90)


def test_the_coverage_record_validates_against_the_schema():
    import jsonschema

    from permq.contract import schema

    rr = _check("robustness compare [1.1, 2.3, 1.9, 3.0, 2.2] vs [2.9, 3.1, 2.4, 3.8, 3.3] "
                "datasets 200 seed 2")
    v = jsonschema.Draft202012Validator(schema())
    record = rr.to_dict()
    assert not list(v.iter_errors([record]))
    record["coverage"]["laws"][0]["exact"]["coverage"] = 2.0
    assert list(v.iter_errors([record]))


# ---------------------------------------------------------------- a correlation's interval

def _pts(x, y):
    import pandas as pd

    return {"pts": pd.DataFrame({"x": x, "y": y})}


@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_vectorised_fisher_z_interval_is_scipys_and_the_analysis(alternative):
    """Each data set's Fisher z interval equals scipy.stats.pearsonr(...).confidence_interval()
    (its default method is Fisher's z) and the interval the analysis reports."""
    from scipy import stats

    from permq.bind.binder import bind
    from permq.pipeline import Session
    from permq.robustness.counterparts import fisher_z_interval
    from permq.robustness.problem import problem_for
    from permq.syntax.parser import parse_script

    rng = np.random.default_rng(31)
    x = np.round(rng.normal(size=9), 3)
    ys = np.round(0.5 * x + rng.normal(size=(6, 9)), 3)
    text = f"relate y to x in pts using pearson alternative {alternative} confidence 90%"
    s = Session(tables=_pts(x, ys[0]))
    pb = problem_for(bind(parse_script(text)[0].node, s.catalog, s.defaults))
    low, high = fisher_z_interval(pb, ys, 0.90)
    scipy_alt = {"two-sided": "two-sided", "higher": "greater", "lower": "less"}[alternative]
    for i, y in enumerate(ys):
        ci = stats.pearsonr(x, y, alternative=scipy_alt).confidence_interval(0.90)
        assert (low[i], high[i]) == pytest.approx((ci.low, ci.high), rel=1e-9, abs=1e-12)
        nt = Session(tables=_pts(x, y)).run(text)[-1].normal.interval
        assert (low[i], high[i]) == pytest.approx(nt, rel=1e-9, abs=1e-12)


def test_fisher_z_interval_covers_at_the_nominal_level_under_normal_errors():
    """At no association, with normal errors, r^2 follows Beta(1/2, (n - 2)/2) whatever the
    fixed x (Fisher 1915, Biometrika 10:507, the null law of r; from memory), so the Fisher z
    interval's coverage at rho = 0 is P(|r| < tanh(z / sqrt(n - 3))) = 0.9490 at n = 8: the
    simulated coverage agrees with it, and with 95%, within Monte Carlo error."""
    from scipy import special, stats

    x = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0]
    y = [2.1, 1.7, 3.4, 3.0, 4.9, 4.2, 6.3, 5.8]
    out = permq.Session(tables=_pts(x, y)).run(
        "robustness relate y to x in pts using pearson datasets 3000 seed 11")[-1]
    assert isinstance(out, RobustnessResult)
    normal = next(r for r in out.coverage if r.law == "normal")
    c = np.tanh(stats.norm.isf(0.025) / np.sqrt(8 - 3))
    closed = float(special.betainc(0.5, 3.0, c * c))
    assert closed == pytest.approx(0.9490, abs=1e-4)
    assert abs(normal.normal - closed) < 3.5 * normal.normal_se
    assert abs(normal.normal - 0.95) < 3.5 * normal.normal_se
    assert normal.normal_verdict == "keeps its level"
    assert normal.exact is None and normal.exact_verdict == "no exact interval"
    record = out.to_dict()
    assert record["coverage"]["laws"][0]["exact"] is None
    assert record["coverage"]["laws"][0]["width_ratio"] is None
    import jsonschema

    from permq.contract import schema

    assert not list(jsonschema.Draft202012Validator(schema()).iter_errors([record]))
    text = " ".join(out.summary)
    assert "at no association" in text and "the analysis gives no exact interval" in text
    assert "coverage of the 95% intervals" in str(out)
