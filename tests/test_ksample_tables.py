"""Kruskal-Wallis and the F test for three or four groups on few categories, through the
groups x categories table (permq/engine/tables/halves.py): checked against brute force over
every assignment and over every table (exact rationals), against the counting engines the
route stands in for, under relabelling, offsets and scale, and through the planner."""
from __future__ import annotations

import itertools
import math
import time
from fractions import Fraction

import numpy as np
import pytest

from conftest import result_of
from permq.engine import ksample
from permq.engine.core.grid import integer_grid
from permq.engine.core.scores import midranks
from permq.engine.tables import halves as H
from test_tables_engine import all_tables


def _rank_z(x):
    return integer_grid(midranks(x)).integers


def _value_z(x):
    return integer_grid(x).integers


def _exact_midranks(x):
    """Mid-ranks as exact rationals."""
    order = sorted(x)
    return [Fraction(2 * order.index(v) + order.count(v) + 1, 2) for v in x]


def _ssb(scores, groups, k):
    """sum_g S_g^2 / n_g of exact scores (increasing in H and in F for fixed margins)."""
    sums = [Fraction(0)] * k
    sizes = [0] * k
    for s, g in zip(scores, groups):
        sums[g] += s
        sizes[g] += 1
    return sum(S * S / n for S, n in zip(sums, sizes))


def _brute_assignments(x, g, exact_scores):
    """Exact p by listing every distinct assignment of the groups' labels to the units."""
    k = max(g) + 1
    scores = exact_scores(list(x))
    observed = _ssb(scores, g, k)
    hits = total = 0
    for labels in set(itertools.permutations(g)):
        total += 1
        hits += _ssb(scores, labels, k) >= observed
    assert total == math.factorial(len(g)) // math.prod(
        math.factorial(g.count(i)) for i in range(k))
    return Fraction(hits, total)


def _brute_tables(t, scores):
    """Exact p by listing every table with the margins of t, each with its rational
    hypergeometric probability; scores: one exact score per column."""
    rows = [sum(r) for r in t]
    cols = [sum(c) for c in zip(*t)]
    N = sum(rows)
    const = Fraction(math.prod(math.factorial(r) for r in rows)
                     * math.prod(math.factorial(c) for c in cols), math.factorial(N))

    def stat(table):
        return sum(Fraction(sum(n * s for n, s in zip(row, scores))) ** 2 / sum(row)
                   for row in table)

    observed = stat(t)
    p = Fraction(0)
    mass = Fraction(0)
    for table in all_tables(rows, cols):
        w = const / math.prod(math.factorial(n) for row in table for n in row)
        mass += w
        if stat(table) >= observed:
            p += w
    assert mass == 1
    return p


def _design(rng, sizes, categories):
    x = rng.integers(1, categories + 1, sum(sizes)).astype(float)
    return x, np.repeat(np.arange(len(sizes)), sizes)


@pytest.mark.parametrize("sizes,categories,seed", [((3, 3, 3), 3, 1), ((2, 3, 4), 2, 2),
                                                   ((2, 2, 3, 2), 3, 3), ((3, 2, 2, 2), 4, 4),
                                                   ((4, 3, 3), 4, 5)])
def test_against_every_assignment_in_exact_rationals(sizes, categories, seed):
    x, g = _design(np.random.default_rng(seed), sizes, categories)
    want = _brute_assignments(x, list(g), _exact_midranks)
    assert H.p_value(x, g, _rank_z(x)) == pytest.approx(float(want), rel=1e-12, abs=1e-14)
    want = _brute_assignments(x, list(g), lambda v: [Fraction(int(a)) for a in v])
    assert H.p_value(x, g, _value_z(x)) == pytest.approx(float(want), rel=1e-12, abs=1e-14)


@pytest.mark.parametrize("sizes,categories,seed", [((8, 7, 9), 3, 11), ((6, 5, 4, 5), 3, 12),
                                                   ((5, 6, 7), 4, 13), ((4, 4, 4, 4), 2, 14)])
def test_against_every_table_in_exact_rationals(sizes, categories, seed):
    x, g = _design(np.random.default_rng(seed), sizes, categories)
    cats = np.unique(x)
    t = [[int(np.sum((g == i) & (x == c))) for c in cats] for i in range(len(sizes))]
    counts = [sum(col) for col in zip(*t)]
    mid = [Fraction(2 * sum(counts[:j]) + counts[j] + 1, 2) for j in range(len(cats))]
    want = _brute_tables(t, mid)
    assert H.p_value(x, g, _rank_z(x)) == pytest.approx(float(want), rel=1e-12, abs=1e-14)


DESIGNS = [((12, 10, 8), 4, "dp-dense", 21), ((9, 9, 9), 5, "dp-sums", 22),
           ((7, 6, 8, 5), 3, "dp-sums", 23), ((6, 6, 6, 6), 4, "dp-sums", 24),
           ((5, 4, 3), 3, "enumeration", 25)]


@pytest.mark.parametrize("family", [ksample.RANKS, ksample.MEANS])
@pytest.mark.parametrize("sizes,categories,algorithm,seed", DESIGNS)
def test_same_p_as_the_engines_it_stands_in_for(family, sizes, categories, algorithm, seed):
    x, g = _design(np.random.default_rng(seed), sizes, categories)
    route = family.run(x, g, "two-sided", H.HALVES)
    other = family.run(x, g, "two-sided", algorithm)
    assert route.method == "exact" and route.algorithm == H.WORDS
    assert route.p_value == pytest.approx(other.p_value, rel=1e-12, abs=1e-13)
    assert route.statistic == pytest.approx(other.statistic, rel=1e-12)
    if other.null_support is not None:                 # the whole law, for the picture
        assert route.null_probs.sum() == pytest.approx(1.0, abs=1e-12)
        np.testing.assert_allclose(route.null_support, other.null_support, rtol=1e-9)
        np.testing.assert_allclose(route.null_probs, other.null_probs, rtol=1e-9, atol=1e-15)


def test_relabelling_offsets_and_scale_leave_p_alone():
    rng = np.random.default_rng(31)
    x, g = _design(rng, (9, 7, 8, 6), 4)
    base = ksample.RANKS.run(x, g, "two-sided", H.HALVES).p_value
    means = ksample.MEANS.run(x, g, "two-sided", H.HALVES).p_value
    relabel = rng.permutation(4)[g]
    order = rng.permutation(x.size)
    for xx, gg in ((x, relabel), (x[order], g[order]), (x * 0.01 + 1e6, g), (x * 1000.0, g)):
        assert ksample.RANKS.run(xx, gg, "two-sided", H.HALVES).p_value == pytest.approx(
            base, rel=1e-12)
        assert ksample.MEANS.run(xx, gg, "two-sided", H.HALVES).p_value == pytest.approx(
            means, rel=1e-12)


def test_offered_only_for_three_or_four_groups_on_few_values(monkeypatch):
    rng = np.random.default_rng(41)
    x, g = _design(rng, (5, 5, 5), 3)
    assert H.candidate(x, g, _rank_z(x)) is not None
    five = np.repeat(np.arange(5), 3)
    assert H.candidate(x, five, _rank_z(x)) is None
    y = rng.normal(size=15)
    assert H.candidate(y, g, _rank_z(y)) is None
    names = [c.algorithm for c in ksample.NORMAL_SCORES.candidates(x, g)]
    assert H.HALVES not in names                       # its scores lie on no grid
    monkeypatch.setattr(H, "compilable", lambda: False)
    c = H.candidate(x, g, _rank_z(x))
    assert not c.feasible and "numba" in c.note


def _ordinal(options):
    rng = np.random.default_rng(5)                     # four groups of 25 graded 1-4
    groups = [rng.integers(1, 5, 25) for _ in range(4)]
    return "compare " + " vs ".join("[" + ", ".join(str(v) for v in grp) + "]"
                                    for grp in groups) + " " + options


@pytest.mark.parametrize("options", ["using ranks exact", "exact"])
def test_ordinal_four_by_four_kruskal_wallis_is_exact_and_planned_through_the_table(options):
    import permq

    plan = permq.run("explain " + _ordinal(options))[0].text
    assert "* exact law over the groups x categories table" in plan
    result_of(_ordinal(options))                       # the first run compiles the loops
    start = time.perf_counter()
    r = result_of(_ordinal(options))
    seconds = time.perf_counter() - start
    assert r.outcome.method == "exact" and "groups x categories" in r.outcome.algorithm
    assert seconds < 3.0                               # about 0.3 s unloaded (bench/run.py)
    mc = result_of(_ordinal(options.replace("exact", "") + " sampled 20000 seed 3"))
    assert mc.outcome.p_interval[0] <= r.outcome.p_value <= mc.outcome.p_interval[1]


def test_the_planner_estimate_is_near_the_measured_time():
    from permq.plan.cost import calibrated

    rng = np.random.default_rng(5)
    x = np.concatenate([rng.integers(1, 5, 25) for _ in range(4)]).astype(float)
    g = np.repeat(np.arange(4), 25)
    c = calibrated("k-sample", H.candidate(x, g, _rank_z(x)))
    H.p_value(x, g, _rank_z(x))
    start = time.perf_counter()
    H.p_value(x, g, _rank_z(x))
    seconds = time.perf_counter() - start
    assert c.seconds / 10 < seconds < c.seconds * 10
