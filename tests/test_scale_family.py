"""The Ansari-Bradley family (families/scale.py), end to end: its exact p against a brute-force
listing in exact fractions, scipy's exact Ansari-Bradley law without ties, the normal
approximation against scipy's large-sample form, the robustness check's vectorised tests
against the engine, help and completion."""
from __future__ import annotations

import itertools
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

import permq
from permq.bind.binder import bind
from permq.bind.common import Defaults
from permq.robustness.arrangements import exact_reference
from permq.robustness.batch import normal_p, observed_statistic, permutation_p, scores
from permq.robustness.pictures import reported
from permq.robustness.problem import data_row, problem_for
from permq.syntax.parser import parse_script

from brute import frac, tail_share
from conftest import inline, result_of

# made-up data: ties (two 10.0, three 9.5), unequal sizes, one group more spread out
WIDE = [10.0, 7.5, 12.5, 9.5, 14.0, 6.0, 9.5]
TIGHT = [10.0, 9.5, 10.5, 9.8, 10.2, 11.0]


def ab_scores_brute(pooled: list) -> list:
    """Mid-scores from scratch: the scores min(i, N + 1 - i) of the sorted positions, averaged
    over each run of tied values, in exact fractions."""
    n = len(pooled)
    out = []
    for v in pooled:
        below = sum(1 for w in pooled if w < v)
        same = sum(1 for w in pooled if w == v)
        positions = range(below + 1, below + same + 1)
        out.append(Fraction(sum(min(i, n + 1 - i) for i in positions), same))
    return out


def brute_p(x, y, alternative) -> Fraction:
    """Every split of the pooled values; 'higher' (x more spread) is the lower tail of AB."""
    pooled = [frac(v) for v in list(x) + list(y)]
    a = ab_scores_brute(pooled)
    n1 = len(x)
    sums = [sum(a[i] for i in chosen) for chosen in itertools.combinations(range(len(a)), n1)]
    t = sum(a[:n1])
    side = {"higher": "lower", "lower": "higher"}.get(alternative, alternative)
    return tail_share(sums, t, side)


@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
@pytest.mark.parametrize("x, y", [(WIDE, TIGHT), (TIGHT, WIDE), (WIDE[:4], TIGHT[:5])])
def test_exact_p_equals_the_brute_force_listing(x, y, alternative):
    r = result_of(f"compare {inline(x)} vs {inline(y)} using ansari-bradley "
                  f"alternative {alternative}")
    assert r.outcome.method == "exact"
    assert r.outcome.p_value == pytest.approx(float(brute_p(x, y, alternative)), rel=1e-12)
    assert r.outcome.statistic == pytest.approx(float(sum(ab_scores_brute(
        [frac(v) for v in x + y])[:len(x)])), rel=1e-12)


def test_every_algorithm_gives_the_same_exact_p():
    text = f"compare {inline(WIDE)} vs {inline(TIGHT)} using ansari-bradley alternative higher"
    dp = result_of(text).outcome
    from permq.engine import twosample
    from permq.families.scale import RULE

    listed, _ = twosample.run(RULE, np.array(WIDE), np.array(TIGHT), "lower", "enumeration", 0.95)
    assert dp.algorithm.startswith("dynamic programming")
    assert listed.p_value == pytest.approx(dp.p_value, rel=1e-12)


def test_one_sided_p_agrees_with_scipys_exact_law_without_ties():
    # scipy.stats.ansari: exact for samples under 55 without ties; 'greater' = the ratio of
    # scales first / second above 1, which is our 'higher'
    rng = np.random.default_rng(11)
    for _ in range(5):
        x = np.round(rng.normal(0, 2.0, 7), 3)
        y = np.round(rng.normal(0, 1.0, 8), 3)
        for ours, theirs in (("higher", "greater"), ("lower", "less")):
            r = result_of(f"compare {inline(x)} vs {inline(y)} using ansari-bradley "
                          f"alternative {ours}")
            ref = stats.ansari(x, y, alternative=theirs)
            assert r.outcome.statistic == pytest.approx(ref.statistic)
            assert r.outcome.p_value == pytest.approx(ref.pvalue, rel=1e-9)


def test_normal_approximation_agrees_with_scipys_large_sample_form():
    rng = np.random.default_rng(3)
    x = np.round(rng.normal(0, 1.5, 60), 4)
    y = np.round(rng.normal(0, 1.0, 58), 4)
    r = result_of(f"compare {inline(x)} vs {inline(y)} using ansari-bradley sampled 2000 seed 1")
    ref = stats.ansari(x, y)                 # samples of 55 or more: the normal approximation
    assert r.normal.p_value == pytest.approx(ref.pvalue, rel=1e-6)


def test_robustness_vectorised_tests_give_the_engines_numbers():
    text = f"compare {inline(WIDE)} vs {inline(TIGHT)} using ansari-bradley alternative higher"
    session = permq.Session()
    design = bind(parse_script(text)[0].node, session.catalog, Defaults())
    result = result_of(text)
    pb = problem_for(design)
    y = data_row(design)[None, :]
    a = scores(pb, y)
    ref = exact_reference(pb, limit=10 ** 6)
    assert permutation_p(pb, a, ref)[0] == pytest.approx(result.outcome.p_value, rel=1e-9)
    assert normal_p(pb, y, a)[0] == pytest.approx(result.normal.p_value, rel=1e-9)
    assert reported(pb, a[0], observed_statistic(pb, a))[0] == pytest.approx(
        result.outcome.statistic, rel=1e-9)


def test_robustness_check_runs_and_leaves_out_unequal_spread():
    out = permq.run(f"robustness compare {inline(WIDE)} vs {inline(TIGHT)} using ansari-bradley "
                    "datasets 200 seed 4")[0]
    keys = [row.key for row in out.rows]
    assert "unequal-spread" not in keys and "normal" in keys
    assert any("unequal spread is left out" in w for w in out.warnings)


def test_a_spread_difference_is_no_cue_for_a_location_test():
    """Unequal spread is what this test looks for: no note points to Welch or Brunner-Munzel."""
    sd = np.std(WIDE, ddof=1) / np.std(TIGHT, ddof=1)
    assert sd > 2           # the two-sample tests would add the note here
    out = result_of(f"compare {inline(WIDE)} vs {inline(TIGHT)} using ansari-bradley")
    assert not any("spreads differ" in w for w in out.warnings)
    plain = result_of(f"compare {inline(WIDE)} vs {inline(TIGHT)}")
    assert any("spreads differ" in w for w in plain.warnings)


def test_help_and_completion_know_the_family():
    from permq.frontends.shell.completion import suggest
    from permq.help import help_text

    assert "Ansari-Bradley" in help_text("ansari-bradley")
    assert "ansari-bradley" in help_text("families")
    s = permq.Session()
    offered = [w for w, _ in suggest("compare [1, 2] vs [3, 4] using ", s.catalog, s.base_dir)]
    assert "ansari-bradley" in offered
