"""The intervals' widths in the robustness check, and the mean width ratio.

- The exact width computed for many data sets at once (robustness/widths: the crossings of the
  shift-linear permutation test) equals the width of the interval the analysis itself reports,
  for two samples, pairs, one sample and a slope; and a brute force written here (every
  arrangement of a 4 + 4 design, the test inverted on a fine grid) gives the same interval.
- Groups adjusted for a covariate: the exact width (the engine's confidence set over the same
  assignments, one data set at a time) equals the analysis's interval width, and the ANCOVA t
  width equals statsmodels' OLS interval for the group coefficient.
- The normal-theory widths equal scipy's Welch and one-sample t intervals
  (scipy.stats.ttest_ind(..., equal_var=False).confidence_interval, ttest_1samp) and
  statsmodels' OLS interval for the slope.
- Intervals at order statistics (the Hodges-Lehmann shift with the rank-sum test, the
  pseudo-median with the signed-rank test, the sign interval; pairs and one sample): both
  widths found for many data sets at once equal the widths of the exact and the
  normal-theory interval the analysis reports on the same data, and the check's table gives
  their ratio.
- Under normal errors, at 15 a group, the exact interval of the difference in means is about as
  wide as the t interval (the permutation and the t test agree in large samples, common
  practice): the mean ratio within 0.03 of 1.
"""
from __future__ import annotations

import itertools

import jsonschema
import numpy as np
import pytest

import permq
from permq.bind.binder import bind
from permq.contract import schema
from permq.pipeline import Session
from permq.robustness import widths
from permq.robustness.arrangements import exact_reference
from permq.robustness.problem import problem_for
from permq.robustness.result import RobustnessResult
from permq.syntax.parser import parse_script


def _lst(v):
    return "[" + ", ".join(f"{x:.3f}" for x in v) + "]"


def _problem(text, tables=None):
    s = Session(tables=tables)
    d = bind(parse_script(text)[0].node, s.catalog, s.defaults)
    return d, problem_for(d)


def _data(d):
    if hasattr(d, "d"):
        return d.d
    if hasattr(d, "x") and hasattr(d, "y") and not hasattr(d, "names"):
        return np.r_[d.x, d.y]
    return d.y


@pytest.mark.parametrize("shape", ["{x} vs {y}", "{x} vs {y} paired", "{x} vs 0"])
def test_exact_width_is_the_analysis_interval_width(shape):
    rng = np.random.default_rng(8)
    for _ in range(4):
        x, y = np.round(rng.normal(size=7), 3), np.round(rng.normal(size=6 if "paired" not in
                                                                  shape else 7) + 0.4, 3)
        text = "compare " + shape.format(x=_lst(x), y=_lst(y)) + " exact"
        lo, hi = permq.run(text)[-1].estimate.interval
        d, pb = _problem(text)
        w = widths.exact(pb, _data(d)[None, :], exact_reference(pb), 0.95)
        assert w[0] == pytest.approx(hi - lo, rel=1e-9, abs=1e-9)


def _slope_table(x, y):
    import pandas as pd

    return {"pts": pd.DataFrame({"x": x, "y": y})}


def test_exact_width_of_a_slope_is_the_analysis_interval_width():
    rng = np.random.default_rng(3)
    x = np.array([1.0, 2.0, 3.5, 4.0, 5.5, 6.0, 7.5])
    y = np.round(0.5 * x + rng.normal(size=7), 3)
    text = "relate y to x using slope exact in pts"
    r = Session(tables=_slope_table(x, y)).run(text)[-1]
    lo, hi = r.estimate.interval
    d, pb = _problem(text, _slope_table(x, y))
    w = widths.exact(pb, np.asarray(d.y, float)[None, :], exact_reference(pb), 0.95)
    assert w[0] == pytest.approx(hi - lo, rel=1e-7)   # the engine reads the ends in floating point


def test_exact_width_matches_a_brute_force_inversion():
    x = np.array([3.1, 4.7, 2.2, 5.9])
    y = np.array([1.0, 2.6, 0.3, 1.9])
    pooled = np.r_[x, y]

    def kept(delta):
        v = np.r_[x - delta, y]
        t = v[:4].sum()
        sums = np.array([v[list(c)].sum() for c in itertools.combinations(range(8), 4)])
        hi = np.mean(sums >= t - 1e-12)
        lo = np.mean(sums <= t + 1e-12)
        return hi > 0.1 and lo > 0.1

    grid = np.linspace(-6, 10, 16001)
    inside = grid[[kept(g) for g in grid]]
    d, pb = _problem(f"compare {_lst(x)} vs {_lst(y)} exact")
    w = widths.exact(pb, pooled[None, :], exact_reference(pb), 0.80)   # alpha/2 = 0.1 of 70
    assert w[0] == pytest.approx(inside.max() - inside.min(), abs=2e-3)


def test_normal_widths_match_scipy_and_statsmodels():
    import statsmodels.api as sm
    from scipy import stats

    rng = np.random.default_rng(5)
    x, y = rng.normal(size=8), rng.normal(size=11) * 2
    d, pb = _problem(f"compare {_lst(x)} vs {_lst(y)}")
    ci = stats.ttest_ind(d.x, d.y, equal_var=False).confidence_interval(0.95)
    assert widths.welch(pb, _data(d)[None, :], 0.95)[0] == pytest.approx(ci.high - ci.low)
    d, pb = _problem(f"compare {_lst(x)} vs 0")
    ci = stats.ttest_1samp(d.d, 0).confidence_interval(0.9)
    assert widths.one_sample_t(pb, d.d[None, :], 0.9)[0] == pytest.approx(ci.high - ci.low)
    xs = np.arange(9.0)
    ys = 0.3 * xs + rng.normal(size=9)
    d, pb = _problem("relate y to x using slope in pts", _slope_table(xs, ys))
    lo, hi = sm.OLS(d.y, sm.add_constant(d.x)).fit().conf_int(0.05)[1]
    assert widths.slope_t(pb, np.asarray(d.y, float)[None, :], 0.95)[0] == pytest.approx(hi - lo)


def test_width_ratio_near_one_under_normal_errors_at_moderate_n():
    rng = np.random.default_rng(12)
    x, y = rng.normal(size=15), rng.normal(size=15)
    rr = permq.run(f"robustness compare {_lst(x)} vs {_lst(y)} datasets 600 seed 4")[-1]
    assert isinstance(rr, RobustnessResult)
    normal = next(r for r in rr.coverage if r.law == "normal")
    assert abs(normal.width_ratio - 1) < 0.03
    assert normal.width_ratio_se < 0.01 and normal.unbounded == 0
    assert "width ratio" in str(rr)
    assert any("times as wide" in line for line in rr.summary)
    d = rr.to_dict()
    jsonschema.validate([d], schema())
    assert d["coverage"]["laws"][0]["width_ratio"]["mean"] == pytest.approx(
        rr.coverage[0].width_ratio)


def test_no_width_ratio_for_a_one_sided_interval():
    rr = permq.run("robustness compare [4.1, 5.3, 4.8, 5.0, 6.2] vs [6.0, 5.9, 7.2, 6.6, 6.9] "
                   "using ranks alternative lower datasets 200 seed 1")[-1]
    assert rr.coverage and all(r.width_ratio is None for r in rr.coverage)
    assert "width ratio" not in str(rr)
    jsonschema.validate([rr.to_dict()], schema())


def test_unbounded_exact_intervals_are_counted_apart():
    rr = permq.run("robustness compare [4.1, 5.3, 4.8] vs [6.0, 5.9, 7.2] datasets 200 seed 1")[-1]
    # 20 arrangements: no one-sided p can be at or below 0.025, every exact interval unbounded
    assert all(r.unbounded == 1 and r.width_ratio is None for r in rr.coverage)


def _adjusted_table(seed, n1):
    import pandas as pd

    rng = np.random.default_rng(seed)
    z = np.round(rng.normal(size=2 * n1), 3)
    g = np.repeat(["a", "b"], n1)
    y = np.round(0.8 * z + rng.normal(size=2 * n1) + (g == "a"), 3)
    return {"t": pd.DataFrame({"y": y, "g": g, "z": z})}


@pytest.mark.parametrize("seed, n1", [(4, 5), (9, 7)])
def test_adjusted_widths_are_the_analysis_intervals_and_statsmodels(seed, n1):
    import statsmodels.api as sm

    tables = _adjusted_table(seed, n1)
    text = "compare y by g adjusting for z exact in t"
    r = Session(tables=tables).run(text)[-1]
    lo, hi = r.estimate.interval
    d, pb = _problem(text, tables)
    A = pb.check.scores(pb, d.values[None, :])
    assert pb.check.exact_width(pb, A, exact_reference(pb), 0.95)[0] == pytest.approx(hi - lo,
                                                                                    rel=1e-9)
    frame = tables["t"]
    X = sm.add_constant(np.column_stack([(frame.g == "a").astype(float), frame.z]))
    a, b = sm.OLS(frame.y.to_numpy(), X).fit().conf_int(0.05)[1]
    assert pb.check.width(pb, d.values[None, :], 0.95)[0] == pytest.approx(b - a)


def test_adjusted_robustness_gives_the_width_ratio_on_its_first_data_sets():
    from permq.robustness.widths import ONE_BY_ONE

    tables = _adjusted_table(2, 8)
    rr = Session(tables=tables).run(
        "robustness compare y by g adjusting for z in t datasets 600 seed 3")[-1]
    assert isinstance(rr, RobustnessResult)
    normal = next(r for r in rr.coverage if r.law == "normal")
    assert normal.width_datasets == ONE_BY_ONE
    assert 0.85 < normal.width_ratio < 1.15 and normal.width_ratio_se < 0.02
    assert f"over {ONE_BY_ONE} data sets a law" in str(rr)
    jsonschema.validate([rr.to_dict()], schema())


@pytest.mark.parametrize("shape,using,piece", [
    ("{x} vs {y}", "ranks", "hodges_lehmann"),
    ("{x} vs {y} paired", "ranks", "pseudo_median"),
    ("{x} vs 0", "ranks", "pseudo_median"),
    ("{x} vs {y} paired", "signs", "sign_interval"),
    ("{x} vs 0", "signs", "sign_interval")])
def test_order_statistic_widths_are_the_analysis_interval_widths(shape, using, piece):
    rng = np.random.default_rng(41)
    for size in (7, 12, 30):
        rows = []
        for _ in range(3):
            x = np.round(rng.normal(size=size), 3)
            y = np.round(rng.normal(size=size - 2 if "paired" not in shape else size) + 0.3, 3)
            text = "compare " + shape.format(x=_lst(x), y=_lst(y)) + f" using {using}"
            r = permq.run(text)[-1]
            d, pb = _problem(text)
            assert pb.check.order_widths is getattr(widths, piece)
            rows.append((_data(d), r.estimate.interval, r.normal.interval))
        ex, nt = pb.check.order_widths(pb, np.array([v for v, _, _ in rows]), 0.95)
        for i, (_, (lo, hi), (nlo, nhi)) in enumerate(rows):
            assert ex[i] == pytest.approx(hi - lo, rel=1e-12, abs=1e-12)
            assert nt[i] == pytest.approx(nhi - nlo, rel=1e-12, abs=1e-12)


def test_rank_intervals_have_their_width_ratio_in_the_check():
    rr = permq.run("robustness compare [1.1, 2.3, 1.9, 3.0, 2.2, 1.4, 0.3] vs "
                   "[2.9, 3.1, 2.4, 3.8, 3.3, 2.2] using ranks datasets 200 seed 2")[-1]
    assert isinstance(rr, RobustnessResult)
    normal = next(r for r in rr.coverage if r.law == "normal")
    # 7 + 6: the exact no-ties law gives P(U <= 6) = 0.0175, P(U <= 7) = 0.0256, so its
    # interval ends at the order statistics c = 6 and 41 (from 0) of the 42 differences;
    # normal ranks at floor(21 - 1.96 * 7) = 7: the exact interval is the wider
    from permq.engine import rankintervals as R

    assert R.two_sample_critical(7, 6, 0.95, "two-sided") == (6, True)
    assert R.two_sample_normal_critical(7, 6, 0.95, "two-sided") == 7
    assert normal.width_ratio > 1 and normal.width_datasets == 200
    record = rr.to_dict()
    assert record["coverage"]["laws"][0]["width_ratio"]["mean"] == pytest.approx(normal.width_ratio)
    assert not list(jsonschema.Draft202012Validator(schema()).iter_errors([record]))
