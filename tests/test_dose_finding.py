"""The lowest effective dose: the exact trend law, the closed-testing step-down, Williams'
test beside it.

Oracles: a brute-force listing of every assignment of each step's units (itertools, in this
file) with the trend recomputed in exact rational arithmetic (values, or mid-ranks re-ranked
among the step's groups) and the closed-testing rule written out; the ordered-groups engine's
exact trend law (its own dynamic programming over tie blocks) for the counting;
scipy.stats.permutation_test listing every partition of each step's units with the trend
statistic; the pooled t test (scipy) for Williams' statistic with one dose, where it reduces to
the one-sided t.
"""
from __future__ import annotations

import itertools
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import permq
from permq.engine import ordered
from permq.engine.control import stepdown, trend
from permq.engine.core import pvalues
from permq.normal import control as normal_control

import brute
from conftest import failure_of

DOSES = ("0", "5", "10", "20")


def frame_of(groups, doses=DOSES):
    return pd.DataFrame({"dose": [doses[i] for i, g in enumerate(groups) for _ in g],
                         "w": [v for g in groups for v in g]})


def result_of(text, tables):
    out = permq.run(text, tables=tables)
    assert isinstance(out[0], permq.ManyResult), getattr(out[0], "message", out[0])
    return out[0]


# ---------------------------------------------------------------- brute force (this file)

def step_p(groups, scores, family, alternative):
    """Exact p of the trend over these groups, by listing every assignment (Fractions)."""
    values = [brute.frac(v) for g in groups for v in g]
    if family == "ranks":
        values = brute.midranks(values)
    labels = [i for i, g in enumerate(groups) for _ in g]
    d = [brute.frac(s) for s in scores]
    seen, null = set(), []
    for perm in itertools.permutations(labels):
        if perm not in seen:
            seen.add(perm)
            null.append(sum(d[c] * v for c, v in zip(perm, values)))
    observed = sum(d[c] * v for c, v in zip(labels, values))
    return brute.tail_share(null, observed, alternative)


def brute_steps(groups, scores, family, alternative):
    raw = [step_p(groups[:top + 1], scores[:top + 1], family, alternative)
           for top in range(len(groups) - 1, 0, -1)]
    adjusted, running = [], Fraction(0)
    for p in raw:
        running = max(running, p)
        adjusted.append(running)
    return raw, adjusted


DATA = ([10.1, 11.2, 9.8], [10.4, 11.0], [11.9, 12.5], [12.4, 13.6])   # 3 + 2 + 2 + 2
TIED = ([2.0, 3.0, 3.0], [3.0, 4.0], [4.0, 4.0], [5.0, 3.0])


@pytest.mark.parametrize("groups", [DATA, TIED])
@pytest.mark.parametrize("family", ["means", "ranks"])
@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_step_down_matches_brute_force_closed_testing(groups, family, alternative):
    scores = [0.0, 5.0, 10.0, 20.0]
    raw, adjusted = brute_steps(groups, scores, family, alternative)
    values = np.array([v for g in groups for v in g])
    codes = np.repeat(np.arange(4), [len(g) for g in groups])
    steps = stepdown.run(values, codes, np.array(scores), family == "ranks", alternative,
                         "dp-steps", 0, 0)
    assert [st.top for st in steps] == [3, 2, 1]
    for st, p, q in zip(steps, raw, adjusted):
        assert st.p_value == pytest.approx(float(p), rel=1e-12, abs=1e-15)
        assert st.p_adjusted == pytest.approx(float(q), rel=1e-12, abs=1e-15)
    expected, alpha = None, Fraction(1, 20)
    for st, q in zip(steps, adjusted):
        if q > alpha:
            break
        expected = st.top
    assert stepdown.lowest_effective(steps, 0.05) == expected


def test_the_trend_law_matches_the_ordered_engine_and_both_paths_agree():
    rng = np.random.default_rng(8)
    for trial in range(4):
        sizes = rng.integers(1, 5, size=4)
        codes = np.repeat(np.arange(4), sizes)
        x = np.round(rng.normal(5, 2, len(codes)), 1)
        d = np.array([0.0, 1.0, 2.5, 4.0])[: 4]
        tg = trend.grid(x, codes, d)
        support, ways = trend.law(tg)
        assert ways.sum() == trend.count(sizes)
        same = trend.law(tg, compiled=False)
        assert np.array_equal(same[0], support) and np.array_equal(same[1], ways)
        t_obs = float(np.sum(tg.e[tg.cls] * tg.z))
        centre = float(tg.z.mean() * np.sum(tg.sizes * tg.e))
        for alt in ("two-sided", "higher", "lower"):
            ref = ordered.LINEAR_TREND.run(x, codes, alt, "dp-counts", scores=d).p_value
            mine = pvalues.tail_probability(support, ways, t_obs, alt, center=centre)
            assert mine == pytest.approx(ref, rel=1e-12)


def test_monte_carlo_steps_lie_within_their_intervals():
    values = np.array([v for g in DATA for v in g])
    codes = np.repeat(np.arange(4), [3, 2, 2, 2])
    scores = np.array([0.0, 5.0, 10.0, 20.0])
    exact = stepdown.run(values, codes, scores, False, "higher", "dp-steps", 0, 0)
    sampled = stepdown.run(values, codes, scores, False, "higher", "monte-carlo", 20_000, 4)
    for e, s in zip(exact, sampled):
        assert s.method == "monte-carlo" and s.draws == 20_000
        lo, hi = s.p_interval
        assert lo <= e.p_value <= hi


def test_statement_finds_the_lowest_effective_dose():
    groups = ([10.1, 11.2, 9.8, 10.5], [10.4, 11.0, 10.2, 10.9], [11.9, 12.5, 11.1, 12.0],
              [12.4, 12.9, 13.1, 13.6])
    r = result_of('compare w by dose ordered against "0" alternative higher',
                  {"t": frame_of(groups)})
    assert r.family == "lowest effective dose" and r.method == "exact"
    assert [row.name for row in r.rows] == ["0 < 5 < 10 < 20", "0 < 5 < 10", "0 < 5"]
    d = r.to_dict()
    adjusted = [row.p_adjusted for row in r.rows]
    assert adjusted == sorted(adjusted)                     # running maxima
    assert d["lowest_effective_dose"] == "10" and r.rows[2].p_adjusted > 0.05
    assert r.conclusion.startswith("lowest effective dose 10 at the 5% level")
    assert "Williams" in r.normal_test and d["normal_lowest_effective_dose"] is not None


def test_no_dose_when_the_top_step_fails():
    groups = ([10.1, 11.2, 9.8], [10.4, 11.0, 10.0], [9.9, 10.5, 11.1])
    r = result_of('compare w by dose ordered against "0"', {"t": frame_of(groups)})
    assert r.to_dict()["lowest_effective_dose"] is None
    assert r.conclusion.startswith("no dose shows an effect")


def test_the_control_must_come_first():
    f = failure_of('compare w by dose ordered against "10"', {"t": frame_of(DATA)})
    assert f.message.startswith('the control "10" must come first in the order')
    assert f.hint == 'write: ordered "10" < "0" < "5" < "20"'
    f = failure_of('compare w by dose ordered against "0" adjust holm', {"t": frame_of(DATA)})
    assert f.message == "'adjust' does not apply to doses in order against a control"


def test_text_output_names_the_closed_testing_rule_and_the_conclusion():
    from permq.render import render

    r = result_of('compare w by dose ordered against "0" using ranks', {"t": frame_of(DATA)})
    text = render([r], "text")
    assert "closed testing: step m tests" in text and "conclusion" in text
    assert "Tukey, Ciminera and Heyse 1985" in text and "re-ranked at each step" in text


# ---------------------------------------------------------------- Williams

def test_williams_with_one_dose_is_the_one_sided_pooled_t():
    c, x = np.array([4.1, 5.0, 4.4, 4.9]), np.array([5.9, 6.3, 5.2, 7.7, 6.0])
    codes = np.repeat([0, 1], [4, 5])
    w = normal_control.williams(np.r_[c, x], codes, "higher", seed=3)
    ref = stats.ttest_ind(x, c, alternative="greater")
    assert w["t"][0] == pytest.approx(ref.statistic, rel=1e-12)
    se = np.sqrt(ref.pvalue * (1 - ref.pvalue) / normal_control.WILLIAMS_DRAWS)
    assert abs(w["p"][0] - ref.pvalue) < 4 * se + 1e-5


def test_williams_lowest_step_uses_the_pooled_variance_of_every_group():
    groups = [np.array(g) for g in ([4.1, 5.0, 4.4, 4.9], [5.9, 6.3, 5.2], [6.6, 7.1, 8.0])]
    codes = np.repeat([0, 1, 2], [4, 3, 3])
    v = np.concatenate(groups)
    w = normal_control.williams(v, codes, "higher", seed=9)
    df = len(v) - 3
    s2 = sum(((g - g.mean()) ** 2).sum() for g in groups) / df
    t1 = (groups[1].mean() - groups[0].mean()) / np.sqrt(s2 * (1 / 3 + 1 / 4))
    assert w["steps"] == [2, 1] and w["t"][1] == pytest.approx(t1, rel=1e-12)
    p = stats.t.sf(t1, df)
    assert abs(w["p"][1] - p) < 4 * np.sqrt(p * (1 - p) / normal_control.WILLIAMS_DRAWS) + 1e-5


def test_williams_statistic_uses_the_isotonic_mean_of_the_doses():
    means = np.array([1.0, 3.0, 2.0, 2.5])        # control, doses 1..3 (a dip at dose 2)
    n = np.array([4.0, 4.0, 4.0, 4.0])
    # doses 1..3 amalgamated upward: max over u of mean(doses u..3) = mean(3, 2, 2.5) = 2.5
    t = normal_control.williams_statistic(means, n, 1.0, 3, "higher")
    assert t == pytest.approx((2.5 - 1.0) / np.sqrt(0.5))


def test_sentences_name_the_steps_and_the_conclusion():
    from kinds import kinds

    k = kinds()
    text = k["lowest effective dose"].sentence()
    assert text.startswith("step-down linear trend in dose scores") and "closed testing" in text
    assert "lowest effective dose 10 at the 5% level" in text
    many = k["many-to-one means"]
    assert "4 comparisons tested, max-t step-down adjustment" in many.sentence()
    rec = many.to_dict()
    assert rec["family"] == "many-to-one" and rec["normal_theory"]["test"].startswith("Dunnett")


@pytest.mark.parametrize("family", ["means", "ranks"])
@pytest.mark.parametrize("alternative", ["greater", "less", "two-sided"])
def test_each_step_against_scipy_permutation_test(family, alternative):
    """Each step's exact p against scipy.stats.permutation_test listing every partition of the
    step's units (permutation_type 'independent', n_resamples inf) with the trend statistic
    (ranks: scipy's rankdata of the step's units, re-ranked at each step)."""
    scores = np.array([0.0, 5.0, 10.0, 20.0])
    groups = TIED if family == "ranks" else DATA
    values = np.array([v for g in groups for v in g])
    codes = np.repeat(np.arange(4), [len(g) for g in groups])
    ours = {"greater": "higher", "less": "lower", "two-sided": "two-sided"}[alternative]
    steps = stepdown.run(values, codes, scores, family == "ranks", ours, "dp-steps", 0, 0)
    for st in steps:
        kept = values[codes <= st.top]
        if family == "ranks":
            kept = stats.rankdata(kept)
        samples = np.split(kept, np.cumsum([len(g) for g in groups[:st.top]]))
        d = scores[:st.top + 1]

        def trend_sum(*groups, axis):
            return sum(s * np.sum(g, axis=axis) for s, g in zip(d, groups))

        ref = stats.permutation_test(samples, trend_sum, permutation_type="independent",
                                     n_resamples=np.inf, alternative=alternative,
                                     vectorized=True)
        if alternative == "two-sided":      # scipy doubles the smaller tail; we compare |T - E0 T|
            T, centre, _ = stepdown.trend_parts(kept, codes[codes <= st.top], d)
            null = ref.null_distribution
            ref_p = np.mean(np.abs(null - centre) >= abs(T - centre) * (1 - 1e-12))
        else:
            ref_p = ref.pvalue
        assert st.p_value == pytest.approx(ref_p, rel=1e-9), (st.top, alternative)
