"""The numerical core every engine shares (permq/engine/core): the integer grid decided on
centred data, differences formed on the grid, degeneracy on centred data, counts of
arrangements, limits from the plan, the interval-end rule; and the statements that showed
what happens without them, each against its brute-force value in exact fractions
(tests/brute.py lists every arrangement).
"""
from fractions import Fraction
from pathlib import Path
import re

import numpy as np
import pytest

import brute
from conftest import inline, result_of
from permq import Session
from permq.engine import twosample
from permq.engine.core import confidence, grid as core_grid, limits
from permq.engine.core.counting import distinct_orderings, multinomial
from permq.engine.core.jumps import interval_from_jumps

PACKAGE = Path(__file__).resolve().parents[1] / "permq"


# ---------------------------------------------------------------- the statements

def test_k_sample_data_with_an_offset_and_three_decimals():
    # brute force: 1458 of the 1,680 assignments have SSB >= the observed (exact fractions);
    # the data rounded to integers would give 0.95714
    text = ("compare [100000.001, 100000.002, 100010] vs [100000.003, 100005, 100007] "
            "vs [100000.004, 100012, 100003]")
    values = [100000.001, 100000.002, 100010, 100000.003, 100005, 100007, 100000.004, 100012,
              100003]
    groups = [0, 0, 0, 1, 1, 1, 2, 2, 2]
    assert brute.k_sample_p("means", values, groups) == Fraction(1458, 1680)
    r = result_of(text)
    assert r.outcome.method == "exact"
    assert r.outcome.p_value == pytest.approx(1458 / 1680, rel=1e-12)


def test_k_sample_spread_far_below_the_offset_is_not_degenerate():
    # brute force: 6 of the 1,680 assignments (exact fractions); an uncentred sum of squares
    # called these data constant and printed p = 1
    text = ("compare [123456.01, 123456.02, 123456.04] vs [123456.05, 123456.06, 123456.07] "
            "vs [123456.08, 123456.09, 123456.11]")
    values = [123456.01, 123456.02, 123456.04, 123456.05, 123456.06, 123456.07, 123456.08,
              123456.09, 123456.11]
    assert brute.k_sample_p("means", values, [0, 0, 0, 1, 1, 1, 2, 2, 2]) == Fraction(6, 1680)
    r = result_of(text)
    assert r.outcome.p_value == pytest.approx(6 / 1680, rel=1e-12)
    assert not any("equal" in w for w in r.outcome.warnings)
    assert r.outcome.statistic == pytest.approx(19.4706, rel=1e-4)      # the ANOVA F


def _sample(seed, n, top):
    """Invented values for a cost check (no p-value is read from them)."""
    rng = np.random.default_rng(seed)
    return [round(float(v), 2) for v in rng.uniform(0, top, n)]


def test_the_memory_set_reaches_the_engine():
    # 25 + 25 values to 2 decimals up to 10,000: counting needs about 8 GB
    x, y = _sample(5, 25, 10_000), _sample(6, 25, 10_000)
    text = f"compare {inline(x)} vs {inline(y)} exact"
    big = Session()
    big.run("set memory 16GB")
    plan = big.run("explain " + text)[-1]
    assert "dynamic programming on integer scores (exact)" in plan.text
    small = Session()
    small.run("set memory 2GB")
    refused = small.run(text)[-1]
    assert "'exact' refused" in refused.message and "2 GB" in refused.message


def test_the_memory_set_chooses_the_algorithm_and_both_are_exact():
    # brute force over the C(16, 8) = 12,870 splits (exact fractions): the same p whichever
    # algorithm the memory allows (counting needs about 6.7 MB here, listing 5.5 MB)
    rng = np.random.default_rng(7)
    x = [round(float(v), 2) for v in rng.uniform(0, 40, 8)]
    y = [round(float(v), 2) for v in rng.uniform(0, 40, 8)]
    want = brute.two_sample_p("means", x, y, "two-sided")
    # the memory that admits listing but not counting, from the plan's own (calibrated) figures
    from permq.bind.binder import bind
    from permq.bind.common import Defaults
    from permq.families.registry import family_for
    from permq.syntax.parser import parse_script

    s = Session()
    text = f"compare {inline(x)} vs {inline(y)} exact"
    design = bind(parse_script(text)[0].node, s.catalog, Defaults())
    need = {c.algorithm: c.memory for c in family_for(design).plan(design).candidates}
    assert need["enumeration"] < need["dp-integer"]
    between = (need["enumeration"] + need["dp-integer"]) / 2 / 1e6
    for memory, algorithm in (("2GB", "dynamic programming"),
                              (f"{between:.3f}MB", "complete enumeration")):
        s = Session()
        s.run(f"set memory {memory}")
        r = s.run(f"compare {inline(x)} vs {inline(y)} exact")[-1]
        assert r.outcome.method == "exact" and r.outcome.algorithm.startswith(algorithm)
        assert r.outcome.p_value == pytest.approx(float(want), rel=1e-12)


def test_signed_rank_against_a_value_ties_the_mirrored_differences():
    # differences -0.1, 0.1, 0.5 tie in |d|: W+ = 4.5, brute force 7/8 over the 8 sign patterns
    assert brute.one_sample_p("ranks", [-0.1, 0.1, 0.5], "lower") == Fraction(7, 8)
    r = result_of("compare [0.3, 0.5, 0.9] vs 0.4 using ranks alternative lower")
    assert r.outcome.statistic == 4.5
    assert r.outcome.p_value == pytest.approx(7 / 8, rel=1e-12)
    same = result_of("compare [-0.1, 0.1, 0.5] vs 0 using ranks alternative lower")
    assert same.outcome.p_value == r.outcome.p_value
    assert r.normal.p_value == same.normal.p_value      # the normal approximation too


def test_paired_signed_rank_forms_differences_on_the_decimal_grid():
    # after - before = -0.1, 0.1, 0.5, 0.7: brute force 15/16 over the 16 sign patterns
    assert brute.one_sample_p("ranks", [-0.1, 0.1, 0.5, 0.7], "lower") == Fraction(15, 16)
    r = result_of("compare [0.3, 0.5, 0.9, 1.7] vs [0.4, 0.4, 0.4, 1.0] paired using ranks "
                  "alternative lower")
    assert r.outcome.p_value == pytest.approx(15 / 16, rel=1e-12)
    same = result_of("compare [-0.1, 0.1, 0.5, 0.7] vs 0 using ranks alternative lower")
    assert r.normal.p_value == same.normal.p_value


BLOCKED = {"y": [1, 5, 2, 6, 3, 7, 4, 8], "trt": ["a", "b"] * 4,
           "dose": [0, 10] * 4, "blk": [1, 1, 2, 2, 3, 3, 4, 4]}


@pytest.mark.parametrize("family", ("ranks", "means"))
@pytest.mark.parametrize("subject", ('y by trt within blk ordered "a" < "b"',
                                     "y by dose within blk ordered"))
def test_two_ordered_levels_within_blocks_test_a_rise_along_the_order(family, subject):
    # b lies above a in all 4 blocks: brute force 1/16 over the 2^4 within-block orders
    import pandas as pd

    frame = pd.DataFrame(BLOCKED)
    tables = {"t": frame}
    groups = [0, 1] * 4
    for alternative, want_first in (("higher", 1), ("lower", 1)):
        want = brute.stratified_p(family, BLOCKED["y"], groups, BLOCKED["blk"], want_first,
                                  alternative)
        out = permq_run(f"use t\ncompare {subject} using {family} alternative {alternative}",
                        tables)
        assert out.outcome.p_value == pytest.approx(float(want), rel=1e-12)
    assert brute.stratified_p(family, BLOCKED["y"], groups, BLOCKED["blk"], 1,
                              "higher") == Fraction(1, 16)
    assert out.effect.startswith("b - a") or out.effect.startswith("10 - 0")
    assert any("a rise along" in w for w in out.warnings)


def permq_run(text, tables):
    import permq

    out = permq.run(text, tables=tables)
    assert isinstance(out[-1], permq.Result), getattr(out[-1], "message", out[-1])
    return out[-1]


def test_interval_ends_at_90_and_80_percent():
    # [1,2,3] vs [4,5,6], 20 splits: at 90% alpha/2 = 1/20, at 80% alpha/2 = 1/10 (the next
    # ends in); brute force in test_intervals checks every end just inside and outside
    for level, want in ((0.9, (-5.0, -1.0)), (0.8, (-4.0, -2.0))):
        _, interval = twosample.run("means", [1, 2, 3], [4, 5, 6], "two-sided", "dp-integer",
                                    level)
        assert interval == want
        for end, inward in ((want[0], 1), (want[1], -1)):
            kept = _shift_kept([1, 2, 3], [4, 5, 6], Fraction(end), level)
            assert kept and not _shift_kept([1, 2, 3], [4, 5, 6],
                                            Fraction(end) - inward * Fraction(1, 1000), level)


def _shift_kept(x, y, delta, level):
    side = (1 - Fraction(repr(level))) / 2
    shifted = [Fraction(v) - delta for v in x]
    return (brute.two_sample_p("means", shifted, y, "higher") > side and
            brute.two_sample_p("means", shifted, y, "lower") > side)


# ---------------------------------------------------------------- the grid

def test_grid_is_decided_on_centred_data():
    g = core_grid.integer_grid([100000.001, 100000.002, 100010])
    assert g is not None and g.decimals == 3 and g.unit == 1
    assert list(g.integers) == [0, 1, 9999]
    g = core_grid.integer_grid([123456.01, 123456.02, 123456.11])
    assert list(g.integers) == [0, 1, 10] and g.step == pytest.approx(0.01)
    assert core_grid.integer_grid([0.5, 1.5]).decimals == 1           # the data's decimals
    assert core_grid.integer_grid([1.2e-8, 3.4e-8, 5.0e-8]) is None    # finer than 6 decimals
    assert core_grid.integer_grid([1e9 + 0.5, 1e9]).decimals == 1
    assert core_grid.integer_grid([1.0, np.nan]) is None


def test_grid_tolerance_refuses_what_floating_point_cannot_tell():
    # 1e6 with 4 decimals is well inside double precision; 1e12 with 4 decimals is not
    assert core_grid.integer_grid([1e6 + 0.0001, 1e6 + 0.0003]).decimals == 4
    assert core_grid.integer_grid([1e12 + 0.0001, 1e12 + 0.0003]) is None
    assert core_grid.GRID_ULPS * np.finfo(float).eps * 1e4 * 1e6 < core_grid.GRID_MAX_TOLERANCE


def test_grid_reproduces_the_data():
    rng = np.random.default_rng(11)
    for decimals in (0, 1, 2, 3, 4):
        for offset in (0.0, 17.5, 123456.0, 999999.0):
            k = rng.integers(-500, 500, 12)
            x = np.array([float(Fraction(int(v), 10 ** decimals) + Fraction(repr(offset)))
                          for v in k])
            g = core_grid.integer_grid(x)
            assert g is not None
            back = g.origin + g.differences(g.integers)
            assert np.all(np.abs(back - x) <= 1e-9 * max(1.0, offset))


def test_differences_on_the_grid_mirror_exactly():
    d = core_grid.exact_difference(np.array([0.3, 0.5, 0.9]), 0.4)
    assert list(d) == [-0.1, 0.1, 0.5]
    d = core_grid.exact_difference(np.array([100000.3, 100000.5]), np.array([100000.4, 100000.4]))
    assert list(d) == [-0.1, 0.1]
    off = core_grid.exact_difference(np.array([np.pi, 1.0]), np.array([1.0, np.e]))
    assert list(off) == [np.pi - 1.0, 1.0 - np.e]                    # no grid: floating point


def test_degeneracy_is_exact_on_centred_data():
    assert core_grid.is_constant([0.1, 0.1, 0.1])
    assert not core_grid.is_constant([123456.01, 123456.02])
    c = core_grid.centred([123456.01, 123456.02, 123456.04])
    assert c[1] == 0.0 and c[0] < 0 < c[2]
    assert core_grid.negligible(1e-20, 1.0) and not core_grid.negligible(1e-6, 1.0)


def test_counts_of_arrangements():
    assert multinomial([3, 3, 3]) == 1680
    assert multinomial([8, 8, 8]) == 9465511770
    assert distinct_orderings([1, 1, 2, 3]) == 12
    assert len(brute.assignments([0, 0, 1, 1, 1])) == multinomial([2, 3])


# ---------------------------------------------------------------- the interval-end rule

def test_alpha_side_is_the_decimal_written():
    assert confidence.alpha_side(0.9, "two-sided") == Fraction(1, 20)
    assert confidence.alpha_side(0.8, "higher") == Fraction(1, 5)
    assert confidence.alpha_side(0.95, "two-sided") == Fraction(1, 40)


def test_an_end_exactly_at_alpha_side_is_rejected_and_a_tie_at_the_jump_kept():
    # 20 arrangements, the observed one alone below the first jump: p = 1/20 there
    jumps = np.arange(1.0, 20.0)
    lo, hi = interval_from_jumps(jumps, np.ones(19), 1.0, 20.0, 0.9, "two-sided")
    assert (lo, hi) == (1.0, 19.0)             # p = 2/20 at the jump itself: kept, closed
    lo, hi = interval_from_jumps(jumps, np.ones(19), 1.0, 20.0, 0.8, "two-sided")
    assert (lo, hi) == (2.0, 18.0)             # alpha/2 = 1/10: p = 2/20 is rejected
    lo, hi = interval_from_jumps(jumps, np.ones(19), 2.0, 20.0, 0.9, "two-sided")
    assert (lo, hi) == (-np.inf, np.inf)       # 2/20 from the ties alone: nothing rejected


def test_the_rule_compares_counts_exactly():
    side = Fraction(1, 40)
    cum = np.array([1.0, 2.0, 3.0, 4.0])
    assert confidence.first_kept(cum, 40.0, side) == 1          # 1/40 rejected, 2/40 kept
    assert confidence.last_rejected(cum, 40.0, side) == 0
    assert confidence.rejected_up_to(side, 10 ** 17) == 25 * 10 ** 14


# ---------------------------------------------------------------- one definition each

def _definitions(pattern):
    found = []
    for path in PACKAGE.rglob("*.py"):
        for line in path.read_text().splitlines():
            if re.match(pattern, line):
                found.append((path.relative_to(PACKAGE).as_posix(), line.strip()))
    return found


@pytest.mark.parametrize("pattern, home", [
    (r"def midranks\b", "engine/core/scores.py"),
    (r"def integer_grid\b", "engine/core/grid.py"),
    (r"def (decimal_grid|_table_grid_of|_anchored_grid_of)\b", None),
    (r"def (multinomial|_multinomial)\b", "engine/core/counting.py"),
    (r"\s*DEFAULT_DRAWS\s*=", "engine/core/limits.py"),
    (r"\s*EXACT_COUNT_LIMIT\s*=", "engine/core/limits.py"),
    (r"\s*EXACT_CEILING_SECONDS\s*=", "engine/core/limits.py"),
    (r"\s*(MAX_)?INTERVAL_DRAWS\s*=", "engine/core/limits.py"),
    (r"\s*NULL_KEEP_MAX\s*=", "engine/core/limits.py"),
    (r"\s*MAX_DECIMALS\s*=", "engine/core/grid.py"),
    (r"\s*PROBABILITY_RTOL\s*=", "engine/core/pvalues.py"),
    (r"\s*RTOL\s*=", "engine/core/pvalues.py"),
    (r"\s*(MAX_DP_BYTES|DP_MAX_STATES|COUNT_MAX_STATES|ENUMERATION_LIMIT|MAX_ENUMERATION)\s*=",
     None),
])
def test_one_definition_of_each_numerical_piece(pattern, home):
    found = _definitions(pattern)
    if home is None:
        assert found == []
    else:
        assert [path for path, _ in found] == [home], found


def test_nothing_ranks_but_the_core():
    users = [(p, line) for p, line in _definitions(r".*rankdata\(") if p != "engine/core/scores.py"]
    assert users == []


def test_limits_come_from_the_settings_through_the_plan():
    s = Session()
    s.run("set memory 3GB")
    s.run("set budget 2s")
    from permq.bind.binder import bind
    from permq.families.registry import family_for
    from permq.syntax.parser import parse_statement

    node = parse_statement("compare [1.5, 2.5, 3.5] vs [4.5, 5.5]")
    design = bind(node, s.catalog, s.defaults)
    plan = family_for(design).plan(design)
    assert plan.limits == limits.Limits(memory_bytes=3e9, budget_seconds=2.0)


def test_the_cores_median_is_numpys_median_to_the_bit():
    from permq.engine.core.scores import median

    rng = np.random.default_rng(4)
    for n in (1, 2, 3, 4, 7, 10, 101, 1000):
        for a in (rng.normal(size=n), np.round(rng.normal(size=n), 1), rng.integers(0, 3, n) * 0.1,
                  rng.normal(size=(n, 3)) * 1e6):
            assert np.float64(median(a)).tobytes() == np.float64(np.median(a)).tobytes()
    assert np.isnan(median([])) and np.isnan(median([1.0, np.nan, 2.0]))
