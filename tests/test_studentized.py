"""Two groups with unequal spread: the Welch t and the Brunner-Munzel statistic by
permutation, and the pointer to them.

Oracles: scipy.stats.permutation_test with every split listed (one-sided: scipy's two-sided
rule doubles the smaller tail, ours compares |T|); scipy.stats.brunnermunzel for the
statistic and its t approximation; scipy.stats.ttest_ind for the Welch counterpart.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from permq.engine import studentized

from conftest import inline, result_of

X = [10.1, 11.2, 9.8, 10.5, 10.3, 10.3]
Y = [11.9, 14.5, 8.1, 16.0, 12.2, 9.5, 10.3]


RULES = {"welch": studentized.WELCH, "brunner-munzel": studentized.BRUNNER_MUNZEL}


def welch(a, b, axis):
    return stats.ttest_ind(a, b, equal_var=False, axis=axis).statistic


def bm(a, b, axis):
    return -stats.brunnermunzel(a, b, axis=axis).statistic


@pytest.mark.filterwarnings("ignore::RuntimeWarning")     # scipy on splits that separate
@pytest.mark.parametrize("family,statistic", [("welch", welch), ("brunner-munzel", bm)])
@pytest.mark.parametrize("alternative,word", [("higher", "greater"), ("lower", "less")])
def test_exact_p_against_scipy_permutation_test(family, statistic, alternative, word):
    x, y = np.array(X), np.array(Y)
    out = studentized.run(RULES[family], x, y, alternative, "enumeration", 0, 0, 0.95)
    ref = stats.permutation_test((x, y), statistic, permutation_type="independent",
                                 n_resamples=np.inf, alternative=word, vectorized=True)
    assert out.outcome.method == "exact"
    assert out.outcome.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert out.outcome.p_value == pytest.approx(ref.pvalue, rel=1e-12)


def test_two_sided_compares_the_absolute_statistic():
    x, y = np.array(X), np.array(Y)
    out = studentized.run(studentized.WELCH, x, y, "two-sided", "enumeration", 0, 0, 0.95)
    null = stats.permutation_test((x, y), welch, permutation_type="independent",
                                  n_resamples=np.inf, vectorized=True).null_distribution
    t = out.outcome.statistic
    assert out.outcome.p_value == pytest.approx(np.mean(np.abs(null) >= abs(t) - 1e-9))


def test_brunner_munzel_counterpart_against_scipy():
    for alternative, word in (("two-sided", "two-sided"), ("higher", "greater"),
                              ("lower", "less")):
        r = result_of(f"compare {inline(X)} vs {inline(Y)} using brunner-munzel "
                      f"alternative {alternative}")
        # scipy's statistic has the other sign (ours is for the first named, X); its
        # alternatives name X's side, as ours do
        ref = stats.brunnermunzel(X, Y, alternative=word)
        assert r.normal.statistic == pytest.approx(-ref.statistic, rel=1e-10)
        assert r.normal.p_value == pytest.approx(ref.pvalue, rel=1e-9)
        placements = [sum(1.0 if a > b else 0.5 if a == b else 0 for b in Y) for a in X]
        assert r.estimate.value == pytest.approx(np.mean(placements) / len(Y))


def test_welch_counterpart_and_estimate():
    r = result_of(f"compare {inline(X)} vs {inline(Y)} using welch")
    ref = stats.ttest_ind(X, Y, equal_var=False)
    assert r.normal.p_value == pytest.approx(ref.pvalue)
    assert r.outcome.statistic == pytest.approx(ref.statistic)
    assert r.estimate.value == pytest.approx(np.mean(X) - np.mean(Y))


@pytest.mark.parametrize("family,null", [("welch", 0.0), ("brunner-munzel", 0.5)])
@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
def test_interval_agrees_with_the_test(family, null, alternative):
    rng = np.random.default_rng(5)
    for trial in range(8):
        x = rng.normal(0, 1, 6) + 0.4 * trial
        y = rng.normal(0, 3, 7)
        r = result_of(f"compare {inline(x)} vs {inline(y)} using {family} "
                      f"alternative {alternative}")
        if r.estimate.interval is None:             # the groups do not overlap
            assert family == "brunner-munzel" and r.estimate.value in (0.0, 1.0)
            continue
        lo, hi = r.estimate.interval
        assert (lo > null or hi < null) == (r.outcome.p_value <= 0.05), r.to_dict()


@pytest.mark.parametrize("family", ["welch", "brunner-munzel"])
def test_monte_carlo_within_its_interval(family):
    exact = result_of(f"compare {inline(X)} vs {inline(Y)} using {family} exact")
    mc = result_of(f"compare {inline(X)} vs {inline(Y)} using {family} sampled 20000 seed 2")
    lo, hi = mc.outcome.p_interval
    assert mc.outcome.method == "monte-carlo" and lo <= exact.outcome.p_value <= hi


def test_complete_separation_gives_the_extreme_split_and_no_interval():
    r = result_of("compare [1.0, 2.0, 3.0] vs [4.0, 5.0, 6.0, 7.0] using brunner-munzel")
    assert r.outcome.p_value == pytest.approx(2 / 35)        # both extreme splits of C(7, 3)
    assert r.estimate.value == 0.0 and r.estimate.interval is None


def test_unequal_spread_points_to_the_studentized_tests():
    wide = result_of(f"compare {inline(X)} vs {inline(Y)}")
    assert any("using welch" in w for w in wide.warnings)
    ranks = result_of(f"compare {inline(X)} vs {inline(Y)} using ranks")
    assert any("using brunner-munzel" in w for w in ranks.warnings)
    done = result_of(f"compare {inline(X)} vs {inline(Y)} using welch")
    assert not any("spreads differ" in w for w in done.warnings)
    even = result_of("compare [1.0, 2.0, 3.0, 4.0] vs [2.0, 3.5, 4.0, 5.5]")
    assert not any("spreads differ" in w for w in even.warnings)


def test_brunner_munzel_parts_from_the_placements_written_out():
    """Satterthwaite df from the placements' variances (Brunner and Munzel's formula)."""
    x, y = np.array(X), np.array(Y)
    parts = studentized.brunner_munzel_parts(x, y)
    px = np.array([np.sum(a > y) + 0.5 * np.sum(a == y) for a in x])
    py = np.array([np.sum(b > x) + 0.5 * np.sum(b == x) for b in y])
    n1, n2 = len(x), len(y)
    sx, sy = px.var(ddof=1), py.var(ddof=1)
    df = (n1 * sx + n2 * sy) ** 2 / ((n1 * sx) ** 2 / (n1 - 1) + (n2 * sy) ** 2 / (n2 - 1))
    assert parts["df"] == pytest.approx(df, rel=1e-12)
    assert parts["se"] == pytest.approx(np.sqrt(sx / (n1 * n2 ** 2) + sy / (n2 * n1 ** 2)))
    t = (parts["estimate"] - 0.5) / parts["se"]
    assert t == pytest.approx(-stats.brunnermunzel(x, y).statistic, rel=1e-12)
