"""Every level against a control: joint permutation of all units, max-T single-step and
step-down, simultaneous intervals, Dunnett beside it.

Oracles: a brute-force listing of every assignment of the units to groups (itertools, in this
file) with the Welch-type t and the pairwise-ranked Mann-Whitney counts recomputed from the raw
values (the counts in exact rational arithmetic) and Westfall-Young max-T written out from its
definition; scipy.stats.dunnett for the normal-theory p-values and intervals; the two-sample
engines for the identities with one dose; a seeded simulation of 1,000 null data sets with
unequal spreads for the family-wise error of the step-down.
"""
from __future__ import annotations

import itertools
import math
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import permq
from permq.engine.control import manytoone, statistics
from permq.engine.core import pvalues
from permq.engine.many import arrangements
from permq.normal import control as normal_control

from conftest import failure_of, result_of

LEVELS = ("ctl", "lo", "mid", "hi")


def frame_of(groups, names=LEVELS):
    return pd.DataFrame({"dose": [names[i] for i, g in enumerate(groups) for _ in g],
                         "w": [v for g in groups for v in g]})


def many_of(text, tables):
    out = permq.run(text, tables=tables)
    assert len(out) == 1
    assert isinstance(out[0], permq.ManyResult), getattr(out[0], "message", out[0])
    return out[0]


# ---------------------------------------------------------------- brute force (this file)

def assignments(sizes):
    """Every assignment of units 0..N-1 to groups of these sizes, as tuples of group codes."""
    labels = [g for g, n in enumerate(sizes) for _ in range(n)]
    seen = set()
    for perm in itertools.permutations(labels):
        if perm not in seen:
            seen.add(perm)
            yield perm


def welch_t(values, codes, j):
    a = [v for v, c in zip(values, codes) if c == j]
    b = [v for v, c in zip(values, codes) if c == 0]
    ma, mb = sum(a) / len(a), sum(b) / len(b)
    va = sum((v - ma) ** 2 for v in a) / (len(a) - 1)
    vb = sum((v - mb) ** 2 for v in b) / (len(b) - 1)
    return (ma - mb) / math.sqrt(va / len(a) + vb / len(b))


def steel_z(values, codes, j):
    a = [Fraction(repr(v)) for v, c in zip(values, codes) if c == j]
    b = [Fraction(repr(v)) for v, c in zip(values, codes) if c == 0]
    u = sum(Fraction(1) if x > y else Fraction(1, 2) if x == y else 0 for x in a for y in b)
    n0, nj = len(b), len(a)
    return (float(u) - n0 * nj / 2) / math.sqrt(n0 * nj * (n0 + nj + 1) / 12)


def brute(values, sizes, family, alternative):
    stat = welch_t if family == "means" else steel_z
    k = len(sizes)

    def oriented(t):
        return abs(t) if alternative == "two-sided" else (t if alternative == "higher" else -t)

    observed = tuple(g for g, n in enumerate(sizes) for _ in range(n))
    rows = [[oriented(stat(values, codes, j)) for j in range(1, k)]
            for codes in assignments(sizes)]
    t = [oriented(stat(values, observed, j)) for j in range(1, k)]
    R, m = len(rows), k - 1
    tol = [1e-9 * max(abs(v), 1.0) for v in t]
    raw = [sum(r[j] >= t[j] - tol[j] for r in rows) / R for j in range(m)]
    single = [sum(max(r) >= t[j] - tol[j] for r in rows) / R for j in range(m)]
    order = sorted(range(m), key=lambda j: -t[j])
    down, running = [0.0] * m, 0.0
    for i, j in enumerate(order):
        rest = order[i:]
        running = max(running, sum(max(r[l] for l in rest) >= t[j] - tol[j] for r in rows) / R)
        down[j] = running
    return raw, single, down, R


DATA = [
    ([4.1, 5.0, 4.4], [5.9, 6.3, 5.2], [4.8, 7.9, 3.9]),              # 3 + 3 + 3, no ties
    ([2.0, 3.0, 3.0, 1.5], [3.0, 4.5], [2.5, 2.0, 6.0]),              # ties across groups
]


@pytest.mark.parametrize("groups", DATA)
@pytest.mark.parametrize("family", ["means", "ranks"])
@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_adjusted_p_values_match_brute_force_joint_enumeration(groups, family, alternative):
    values = [v for g in groups for v in g]
    sizes = [len(g) for g in groups]
    raw, single, down, R = brute(values, sizes, family, alternative)
    codes = np.repeat(np.arange(len(sizes)), sizes)
    for step, expected in (("step-down", down), ("single-step", single)):
        out = manytoone.run(values, codes, family == "ranks", alternative, "max-t", step,
                            "enumeration",
                            0, 0, 0.95)
        assert out.method == "exact" and out.arrangements == R
        np.testing.assert_allclose(out.p_raw, raw, rtol=0, atol=1e-12)
        np.testing.assert_allclose(out.p_adjusted, expected, rtol=0, atol=1e-12)
        np.testing.assert_allclose(out.p_single_step, single, rtol=0, atol=1e-12)


def test_the_statement_gives_the_engine_numbers_and_names_each_comparison():
    groups = DATA[0]
    tables = {"t": frame_of(groups)}
    r = many_of('compare w by dose against "ctl" exact', tables)
    raw, single, down, R = brute([v for g in groups for v in g], [3, 3, 3], "means",
                                 "two-sided")
    assert r.family == "many-to-one" and r.method == "exact" and r.arrangements == R
    got = {row.name: row for row in r.rows}
    assert set(got) == {"lo - ctl", "mid - ctl"}
    assert got["lo - ctl"].p_adjusted == pytest.approx(down[0], abs=1e-12)
    assert got["mid - ctl"].p_value == pytest.approx(raw[1], abs=1e-12)
    assert got["lo - ctl"].n == (3, 3)
    assert got["lo - ctl"].estimate == pytest.approx(np.mean(groups[1]) - np.mean(groups[0]))
    d = r.to_dict()
    assert d["control"] == "ctl" and d["rows"][0]["p_single_step"] == pytest.approx(single[0])
    assert "normal_p" in d["rows"][0]


@pytest.mark.parametrize("family", ["means", "ranks"])
def test_monte_carlo_lies_within_its_interval_of_the_exact_values(family):
    rng = np.random.default_rng(11)
    sizes = [4, 4, 3, 3]
    values = np.round(rng.normal(size=sum(sizes)) * (1 + np.repeat(np.arange(4), sizes)), 1)
    values[np.repeat(np.arange(4), sizes) == 2] += 2.0
    codes = np.repeat(np.arange(4), sizes)
    exact = manytoone.run(values, codes, family == "ranks", "two-sided", "max-t", "step-down",
                          "enumeration", 0, 0, 0.95)
    draws = 20_000
    mc = manytoone.run(values, codes, family == "ranks", "two-sided", "max-t", "step-down",
                       "monte-carlo", draws, 5, 0.95)
    assert mc.method == "monte-carlo" and mc.draws == draws
    # six p-values at once: each within its 99.9% interval (Clopper-Pearson)
    for sampled, true in zip(np.r_[mc.p_raw, mc.p_adjusted], np.r_[exact.p_raw, exact.p_adjusted]):
        b = round(sampled * (draws + 1)) - 1
        _, (lo, hi) = pvalues.monte_carlo_p(b, draws, level=0.999)
        assert lo <= true <= hi, (sampled, true)


def test_monte_carlo_is_repeatable_with_its_seed():
    tables = {"t": frame_of(DATA[1])}
    a = many_of('compare w by dose against "ctl" sampled 5000 seed 3', tables)
    b = many_of('compare w by dose against "ctl" sampled 5000 seed 3', tables)
    assert [r.p_adjusted for r in a.rows] == [r.p_adjusted for r in b.rows]
    assert a.method == "monte-carlo" and a.seed == 3


def test_one_dose_is_the_two_sample_studentized_and_rank_tests():
    x, c = [5.9, 6.3, 5.2, 7.7, 6.0], [4.1, 5.0, 4.4, 4.9]
    codes = np.repeat([0, 1], [4, 5])
    values = np.r_[c, x]
    welch = manytoone.run(values, codes, False, "two-sided", "max-t", "step-down",
                          "enumeration", 0, 0, 0.95)
    two = result_of(f"compare {x} vs {c} using welch exact")
    assert welch.p_adjusted[0] == pytest.approx(two.outcome.p_value, abs=1e-12)
    ranks = manytoone.run(values, codes, True, "two-sided", "max-t", "step-down",
                          "enumeration", 0, 0, 0.95)
    wilcoxon = result_of(f"compare {x} vs {c} using ranks exact")
    assert ranks.p_adjusted[0] == pytest.approx(wilcoxon.outcome.p_value, abs=1e-12)


# ---------------------------------------------------------------- intervals

@pytest.mark.parametrize("family", ["means", "ranks"])
@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_simultaneous_intervals_agree_with_the_single_step_test(family, alternative):
    rng = np.random.default_rng(7)
    for trial in range(6):
        sizes = [4, 3, 3, 3]
        codes = np.repeat(np.arange(4), sizes)
        values = rng.normal(size=13) + np.array([0, 1.5, -1.5, 0.4])[codes] * (trial % 3)
        frame = pd.DataFrame({"dose": [LEVELS[c] for c in codes], "w": values})
        r = many_of(f'compare w by dose against "ctl" using {family} alternative {alternative} '
                    'adjust max-t single-step exact', {"t": frame})
        for row in r.rows:
            lo, hi = row.interval
            assert (lo > 0 or hi < 0) == (row.p_adjusted <= 0.05), (row, r.to_dict())


def test_welch_interval_is_the_estimate_plus_minus_c_standard_errors():
    tables = {"t": frame_of(DATA[0])}
    r = many_of('compare w by dose against "ctl" exact', tables)
    c = r.to_dict()["critical_value"]
    lo_dose, ctl = np.array(DATA[0][1]), np.array(DATA[0][0])
    se = math.sqrt(lo_dose.var(ddof=1) / 3 + ctl.var(ddof=1) / 3)
    row = next(x for x in r.rows if x.name == "lo - ctl")
    assert row.interval == pytest.approx((row.estimate - c * se, row.estimate + c * se))


# ---------------------------------------------------------------- normal theory

@pytest.mark.parametrize("sizes", [(6, 6, 6, 6), (10, 4, 7), (5, 20, 3, 8)])
@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_dunnett_against_scipy(sizes, alternative):
    rng = np.random.default_rng(sum(sizes))
    codes = np.repeat(np.arange(len(sizes)), sizes)
    y = rng.normal(size=len(codes)) + 0.5 * codes
    mine = normal_control.dunnett(y, codes, 0.95, alternative)
    word = {"two-sided": "two-sided", "higher": "greater", "lower": "less"}[alternative]
    ref = stats.dunnett(*[y[codes == j] for j in range(1, len(sizes))], control=y[codes == 0],
                        alternative=word, random_state=1)
    # scipy integrates the multivariate t by randomised quasi-Monte Carlo (about 1e-5)
    np.testing.assert_allclose(mine["t"], ref.statistic, rtol=1e-12)
    np.testing.assert_allclose(mine["p"], ref.pvalue, atol=2e-4)
    ci = ref.confidence_interval(0.95)
    ends = np.array(mine["intervals"])
    if alternative != "lower":
        np.testing.assert_allclose(ends[:, 0], ci.low, atol=5e-3)
    if alternative != "higher":
        np.testing.assert_allclose(ends[:, 1], ci.high, atol=5e-3)


def test_dunnett_with_one_dose_is_the_pooled_t_test():
    x, c = np.array([5.9, 6.3, 5.2, 7.7, 6.0]), np.array([4.1, 5.0, 4.4, 4.9])
    codes = np.repeat([0, 1], [4, 5])
    d = normal_control.dunnett(np.r_[c, x], codes, 0.95, "two-sided")
    ref = stats.ttest_ind(x, c)
    assert d["p"][0] == pytest.approx(ref.pvalue, abs=1e-8)
    iv = ref.confidence_interval(0.95)
    assert d["intervals"][0] == pytest.approx((iv.low, iv.high), abs=1e-6)


def test_rank_sums_normal_approximation_with_one_dose_is_the_rank_sum_test():
    x, c = [5.9, 6.3, 5.2, 7.7, 6.0, 5.2], [4.1, 5.0, 5.2, 4.9]
    codes = np.repeat([0, 1], [4, 6])
    out = normal_control.rank_sums(np.r_[c, x], codes, "two-sided")
    ref = stats.mannwhitneyu(x, c, method="asymptotic", use_continuity=False)
    assert out["p"][0] == pytest.approx(ref.pvalue, abs=1e-8)


# ---------------------------------------------------------------- family-wise error

def _family_wise_error(sizes, sds, rows, D=1000):
    """Share of D seeded null data sets (equal means, these sds) with any rejection at 5%
    by the max-T step-down on the reference set `rows` (the first step decides it)."""
    codes = np.repeat(np.arange(len(sizes)), sizes).astype(np.int8)
    sd = np.array(sds, dtype=float)[codes]
    Y = np.random.default_rng(20261203).normal(size=(D, len(codes))) * sd
    rejected = np.zeros(D, dtype=bool)
    for lo in range(0, D, 50):
        lay = statistics.layout(Y[lo:lo + 50], codes, False)
        null = np.abs(statistics.statistics(rows, lay))                 # (d, R, k-1)
        t = np.abs(statistics.statistics(codes[None, :], lay))[:, 0]    # (d, k-1)
        rejected[lo:lo + 50] = step_down_rejects(null, t, 0.05)
    return rejected.mean()


FWE_BOUND = 0.05 + 3 * math.sqrt(0.05 * 0.95 / 1000)     # 3 Monte Carlo standard errors


def test_step_down_family_wise_error_with_equal_spread_and_every_arrangement_listed():
    """Control + 2 levels of 4, 4, 3 units, equal spread: all 11,550 arrangements listed, the
    permutation test is exact, and the share of 1,000 null data sets with any rejection stays
    within Monte Carlo error of 5%."""
    sizes = [4, 4, 3]
    rows = arrangements.enumerate_codes(sizes)
    assert len(rows) == 11550
    assert _family_wise_error(sizes, [1.0, 1.0, 1.0], rows) <= FWE_BOUND


def test_step_down_family_wise_error_under_unequal_spread():
    """Control + 3 doses of 10 with sds 1, 1.5, 2, 1.5 (equal means), 999 seeded joint draws per
    data set: the Welch-type max-T keeps the family-wise error within 3 Monte Carlo standard
    errors of 5% (measured 0.059).  With very small groups and spreads four times the
    control's it does not: 0.105 for 4, 4, 3 units with sds 1, 3, 2, and 0.074 for 10 a group
    with sds 1, 2, 4, 3 (0.064 at 40 a group); the help and README say so."""
    sizes = [10, 10, 10, 10]
    codes = np.repeat(np.arange(4), sizes).astype(np.int8)
    rows = arrangements.sampled_codes(codes, 7, 999)
    assert _family_wise_error(sizes, [1.0, 1.5, 2.0, 1.5], rows) <= FWE_BOUND


def step_down_rejects(null, t, alpha):
    """Any rejection by max-T step-down, per data set (the first step decides it)."""
    R = null.shape[1]
    top = null.max(axis=2)                                   # (d, R)
    first = t.max(axis=1)                                    # the most extreme observed
    count = (top >= first[:, None] - 1e-9 * np.maximum(first[:, None], 1)).sum(axis=1)
    return count / R <= alpha


# ---------------------------------------------------------------- the language

def test_bad_control_level_is_named_with_the_nearest():
    f = failure_of('compare w by dose against "cntl"', {"t": frame_of(DATA[0])})
    assert f.message == "no level \"cntl\" in column 'dose'"
    assert f.hint == "did you mean 'ctl'?"
    assert f.column == 27


def test_against_refuses_forms_it_does_not_fit():
    tables = {"t": frame_of(DATA[0]).assign(b=[1, 2, 3] * 3, v=range(9))}
    f = failure_of('compare w, v by dose against "ctl"', tables)
    assert f.message == "'against' compares the levels of one response"
    f = failure_of('compare w by dose against "ctl" within b', tables)
    assert f.message == "'within' (blocks) and 'against' do not go together"
    f = failure_of('relate w to v against "ctl"', tables)
    assert f.message == "'against' does not apply to an association"


def test_means_needs_two_values_a_level_and_ranks_does_not():
    tables = {"t": frame_of(([1.0, 2.0, 3.0], [4.0], [2.0, 5.0]))}
    f = failure_of('compare w by dose against "ctl"', tables)
    assert f.message.startswith("level \"lo\" of 'dose' has 1 value; 'means' needs 2")
    assert f.hint == "using ranks takes levels with a single value"
    r = many_of('compare w by dose against "ctl" using ranks', tables)
    assert len(r.rows) == 2


def test_levels_choose_the_doses_and_the_control_joins_them():
    tables = {"t": frame_of(DATA[0] + ([5.5, 6.1, 5.0],))}
    r = many_of('compare w by dose against "ctl" levels "hi", "lo" exact', tables)
    assert [row.name for row in r.rows] == ["hi - ctl", "lo - ctl"]
    assert r.labels == ("ctl", "hi", "lo")


def test_text_output_names_the_rule_the_counterpart_and_the_intervals():
    from permq.render import render

    r = many_of('compare w by dose against "ctl" exact', {"t": frame_of(DATA[1])})
    text = render([r], "text")
    assert "many-to-one" in text and "Westfall-Young max-T, step-down" in text
    assert "Dunnett's many-to-one t" in text and "p (normal)" in text
    assert "subset pivotality" in text and "simultaneous" in text


def test_completion_offers_the_control_levels_after_against():
    from permq.bind.common import Catalog
    from permq.data.tables import Table
    from permq.frontends.shell.completion import suggest

    catalog = Catalog({"t": Table("t", frame_of(DATA[0]), "(given)")}, "t")
    offered = [text for text, _ in suggest('compare w by dose against ', catalog)]
    assert offered == ['"ctl"', '"lo"', '"mid"']
    assert ("against", "every other level against this control") in suggest(
        "compare w by dose ag", catalog)
    assert [t for t, _ in suggest('compare w by dose against "m', catalog)] == ['"mid"']


def test_unequal_spread_is_noted_and_equal_spread_is_not():
    wide = frame_of(([10.0, 10.2, 9.9, 10.1], [8.0, 12.5, 9.0, 13.0], [11.0, 11.3, 10.8, 11.1],
                     [10.4, 10.6, 10.5, 10.7]))
    out = many_of('compare w by dose against "ctl"', {"t": wide})
    assert any("spreads differ" in w and "robustness" in w for w in out.warnings)
    even = frame_of(([10.0, 10.4, 9.6, 10.2], [10.5, 10.9, 10.1, 10.6], [11.0, 11.5, 10.8, 11.1],
                     [10.4, 10.8, 10.0, 10.7]))
    out = many_of('compare w by dose against "ctl"', {"t": even})
    assert not any("spreads differ" in w for w in out.warnings)
