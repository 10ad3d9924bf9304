"""Several responses at once: adjustments, joint permutation, scale-out, bad inputs.

Oracles: statsmodels' multipletests (Holm, Benjamini-Hochberg, Bonferroni) on the same raw
p-values; Westfall-Young max-T and min-P written out in this file over a brute-force listing of
every split (itertools); the one-response engines of permq for the marginal p-values; a seeded
simulation for the family-wise error.
"""
from __future__ import annotations

import csv
import io
import itertools
import json

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.multitest import multipletests

import permq
from permq.engine.many import joint as many, kernels as many_kernels, multiplicity
from permq.engine.many.workers import LocalPool
from permq.render import render

from conftest import failure_of, result_of


def many_of(text, tables, **kw) -> permq.ManyResult:
    out = permq.run(text, tables=tables, **kw)
    assert len(out) == 1
    assert isinstance(out[0], permq.ManyResult), getattr(out[0], "message", out[0])
    return out[0]


def rows_by_name(r):
    return {row.name: row for row in r.rows}


def small_table(seed=4, n=(5, 4), m=6, missing=True, decimals=1):
    """Correlated responses with ties (rounded), a shift in two of them, one missing value."""
    rng = np.random.default_rng(seed)
    N = sum(n)
    g = np.repeat(["A", "B"], n)
    common = rng.normal(size=N)
    data = {"g": g}
    for j in range(m):
        shift = 1.2 if j < 2 else 0.0
        data[f"r{j}"] = np.round(common + rng.normal(size=N) + shift * (g == "A"), decimals)
    frame = pd.DataFrame(data)
    if missing:
        frame.loc[2, "r3"] = np.nan
    return frame


# ---------------------------------------------------------------- brute force (this file)

def brute_statistics(frame, names, family="means", alternative="two-sided"):
    """Every split of the units: difference in mean scores A - B over its fixed standard error
    (absolute value for two-sided, negated for 'lower')."""
    g = frame["g"].to_numpy()
    units = np.arange(len(g))
    nA = int((g == "A").sum())
    observed_A = set(units[g == "A"])
    splits = [set(c) for c in itertools.combinations(units, nA)]
    null = np.zeros((len(splits), len(names)))
    t_obs = np.zeros(len(names))
    for j, name in enumerate(names):
        y = frame[name].to_numpy(float)
        seen = ~np.isnan(y)
        scores = y.copy()
        if family == "ranks":
            scores[seen] = pd.Series(y[seen]).rank().to_numpy()
        s2 = np.var(scores[seen], ddof=1)
        cA = sum(1 for u in units if seen[u] and u in observed_A)
        cB = int(seen.sum()) - cA
        se = np.sqrt(s2 * (1 / cA + 1 / cB))

        def stat(chosen):
            a = [scores[u] for u in units if seen[u] and u in chosen]
            b = [scores[u] for u in units if seen[u] and u not in chosen]
            z = (np.mean(a) - np.mean(b)) / se
            return abs(z) if alternative == "two-sided" else (z if alternative == "higher" else -z)

        t_obs[j] = stat(observed_A)
        null[:, j] = [stat(s) for s in splits]
    return null, t_obs


def ge(a, b):
    return a >= b - 1e-9 * max(1.0, abs(b))


def brute_max_t(null, t_obs, step):
    R, m = null.shape
    if step == "single-step":
        return np.array([sum(ge(null[r].max(), t_obs[j]) for r in range(R)) / R
                         for j in range(m)])
    order = sorted(range(m), key=lambda j: -t_obs[j])
    adj, running = np.zeros(m), 0.0
    for i, j in enumerate(order):
        later = order[i:]
        p = sum(ge(max(null[r, l] for l in later), t_obs[j]) for r in range(R)) / R
        running = max(running, p)
        adj[j] = running
    return adj


def brute_min_p(null, t_obs, step):
    R, m = null.shape
    raw = np.array([sum(ge(null[r, j], t_obs[j]) for r in range(R)) / R for j in range(m)])
    own = np.array([[sum(ge(null[s, j], null[r, j]) for s in range(R)) / R for j in range(m)]
                    for r in range(R)])
    if step == "single-step":
        return np.array([np.mean(own.min(axis=1) <= raw[j] + 1e-12) for j in range(m)])
    order = sorted(range(m), key=lambda j: (raw[j], -t_obs[j]))
    adj, running = np.zeros(m), 0.0
    for i, j in enumerate(order):
        later = order[i:]
        p = np.mean(own[:, later].min(axis=1) <= raw[j] + 1e-12)
        running = max(running, p)
        adj[j] = running
    return adj


# ---------------------------------------------------------------- adjustments from raw p

# Benjamini and Hochberg (1995), "Controlling the false discovery rate", J. R. Statist. Soc. B
# 57, section 4.2: fifteen p-values from a clinical trial; at 0.05 the step-up rule rejects 4,
# Bonferroni 3 (values and counts from memory).
BH_EXAMPLE = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240,
              0.4262, 0.5719, 0.6528, 0.7590, 1.0]


@pytest.mark.parametrize("seed", range(6))
def test_holm_bh_bonferroni_match_statsmodels(seed):
    rng = np.random.default_rng(seed)
    p = np.round(rng.beta(0.4, 1.0, size=40), 3)          # ties on purpose
    for ours, theirs in ((multiplicity.holm, "holm"), (multiplicity.benjamini_hochberg, "fdr_bh"),
                         (multiplicity.bonferroni, "bonferroni")):
        np.testing.assert_allclose(ours(p), multipletests(p, method=theirs)[1], rtol=1e-12)


def test_benjamini_hochberg_worked_example():
    p = np.array(BH_EXAMPLE)
    assert (multiplicity.benjamini_hochberg(p) <= 0.05).sum() == 4
    assert (multiplicity.bonferroni(p) <= 0.05).sum() == 3
    np.testing.assert_allclose(multiplicity.benjamini_hochberg(p),
                               multipletests(p, method="fdr_bh")[1], rtol=1e-12)


@pytest.mark.parametrize("adjust, method", [("holm", "holm"), ("fdr", "fdr_bh"),
                                            ("holm single-step", "bonferroni")])
def test_pipeline_holm_and_fdr_match_statsmodels_on_the_rows(adjust, method):
    frame = small_table(m=8, missing=False)
    r = many_of("compare every numeric by g adjust " + adjust, {"t": frame})
    raw = np.array([row.p_value for row in r.rows])
    adj = np.array([row.p_adjusted for row in r.rows])
    np.testing.assert_allclose(adj, multipletests(raw, method=method)[1], rtol=1e-12)


# ---------------------------------------------------------------- joint permutation, exact

@pytest.mark.parametrize("family", ["means", "ranks"])
def test_max_t_and_min_p_against_brute_force(family):
    frame = small_table()
    names = [c for c in frame.columns if c != "g"]
    null, t_obs = brute_statistics(frame, names, family)
    raw = np.array([np.mean([ge(v, t_obs[j]) for v in null[:, j]]) for j in range(len(names))])
    for adjust, brute in (("max-t", brute_max_t), ("min-p", brute_min_p)):
        for step in ("single-step", "step-down"):
            r = many_of(f"compare every numeric by g using {family} adjust {adjust} {step}",
                        {"t": frame})
            assert r.method == "exact" and r.arrangements == 126
            got = rows_by_name(r)
            expected = brute(null, t_obs, step)
            for j, name in enumerate(names):
                assert got[name].p_value == pytest.approx(raw[j], abs=1e-12), name
                assert got[name].p_adjusted == pytest.approx(expected[j], abs=1e-12), (
                    adjust, step, name)
                assert abs(got[name].statistic) == pytest.approx(t_obs[j], rel=1e-9)


@pytest.mark.parametrize("alternative", ["higher", "lower"])
def test_one_sided_max_t_against_brute_force(alternative):
    frame = small_table(seed=6)
    names = [c for c in frame.columns if c != "g"]
    null, t_obs = brute_statistics(frame, names, "means", alternative)
    r = many_of(f"compare every numeric by g alternative {alternative}", {"t": frame})
    got = rows_by_name(r)
    expected = brute_max_t(null, t_obs, "step-down")
    for j, name in enumerate(names):
        assert got[name].p_value == pytest.approx(np.mean([ge(v, t_obs[j]) for v in null[:, j]]),
                                                  abs=1e-12)
        assert got[name].p_adjusted == pytest.approx(expected[j], abs=1e-12)


def test_three_groups_with_a_missing_value_against_brute_force():
    """k groups: T = sum over groups of n_g (mean score)^2 on the observed values, scores
    centred on their observed mean over their sd; every assignment of 3 + 3 + 3 units."""
    rng = np.random.default_rng(12)
    g = np.repeat([0, 1, 2], 3)
    values = np.round(rng.normal(size=(9, 4)) + np.outer(g == 2, [1.5, 0, 0.8, 0]), 1)
    values[4, 1] = np.nan
    frame = pd.DataFrame(values, columns=["a", "b", "c", "d"]).assign(g=np.array(list("xyz"))[g])
    assignments = []
    for first in itertools.combinations(range(9), 3):
        rest = [u for u in range(9) if u not in first]
        for second in itertools.combinations(rest, 3):
            codes = np.full(9, 2)
            codes[list(first)], codes[list(second)] = 0, 1
            assignments.append(codes)

    def stat(codes, y):
        seen = ~np.isnan(y)
        z = (y[seen] - y[seen].mean()) / y[seen].std(ddof=1)
        c = codes[seen]
        return sum((c == k).sum() * z[c == k].mean() ** 2 for k in range(3) if (c == k).any())

    null = np.array([[stat(a, values[:, j]) for j in range(4)] for a in assignments])
    t_obs = np.array([stat(g, values[:, j]) for j in range(4)])
    r = many_of("compare a, b, c, d by g adjust max-t", {"t": frame})
    got = rows_by_name(r)
    expected = brute_max_t(null, t_obs, "step-down")
    for j, name in enumerate("abcd"):
        assert got[name].p_value == pytest.approx(np.mean([ge(v, t_obs[j]) for v in null[:, j]]),
                                                  abs=1e-12)
        assert got[name].p_adjusted == pytest.approx(expected[j], abs=1e-12)


def test_exact_marginal_p_is_the_one_response_test():
    frame = small_table(missing=False)
    for family in ("means", "ranks"):
        r = many_of(f"compare r0, r1, r2 by g using {family} adjust none", {"t": frame})
        for row in r.rows:
            one = result_of(f"compare {row.name} by g using {family} exact", {"t": frame})
            assert row.p_value == pytest.approx(one.outcome.p_value, abs=1e-12)
            assert row.p_adjusted == row.p_value


def test_k_groups_exact_marginal_p_is_the_k_sample_test():
    rng = np.random.default_rng(8)
    g = np.repeat(["a", "b", "c"], [3, 3, 4])
    frame = pd.DataFrame({"g": g, "y": np.round(rng.normal(size=10) + (g == "c"), 1),
                          "z": np.round(rng.normal(size=10), 1)})
    for family in ("means", "ranks"):
        r = many_of(f"compare y, z by g using {family}", {"t": frame})
        assert r.arrangements == 4200
        for row in r.rows:
            one = result_of(f"compare {row.name} by g using {family} exact", {"t": frame})
            assert row.p_value == pytest.approx(one.outcome.p_value, abs=1e-12)
            assert row.statistic == pytest.approx(one.outcome.statistic, rel=1e-9)


def test_pairwise_against_brute_force():
    rng = np.random.default_rng(2)
    g = np.repeat(["a", "b", "c"], 3)
    y = np.round(rng.normal(size=9) + 1.5 * (g == "c"), 1)
    frame = pd.DataFrame({"g": g, "y": y})
    r = many_of("compare y by g pairwise", {"t": frame})
    assert r.arrangements == 1680 and r.adjustment == "max-t step-down"
    # brute force: every assignment of the 9 units to groups of 3
    scores = (y - y.mean()) / y.std(ddof=1)
    pairs = [(0, 1), (0, 2), (1, 2)]
    assignments = []
    for first in itertools.combinations(range(9), 3):
        rest = [u for u in range(9) if u not in first]
        for second in itertools.combinations(rest, 3):
            third = [u for u in rest if u not in second]
            assignments.append((list(first), list(second), third))
    codes = {"a": 0, "b": 1, "c": 2}
    observed = tuple([u for u in range(9) if codes[g[u]] == k] for k in range(3))

    def stats_of(groups):
        means = [scores[idx].mean() for idx in groups]
        z = [abs(means[a] - means[b]) / np.sqrt(2 / 3) for a, b in pairs]
        between = sum(3 * mu ** 2 for mu in means)
        return z, between

    null = np.array([stats_of(a)[0] for a in assignments])
    between = np.array([stats_of(a)[1] for a in assignments])
    z_obs, b_obs = stats_of(observed)
    expected = brute_max_t(null, np.array(z_obs), "step-down")
    got = rows_by_name(r)
    for i, (a, b) in enumerate(pairs):
        name = f"{'abc'[a]} - {'abc'[b]}"
        assert got[name].p_value == pytest.approx(np.mean([ge(v, z_obs[i]) for v in null[:, i]]))
        assert got[name].p_adjusted == pytest.approx(expected[i], abs=1e-12)
    assert r.overall["p_value"] == pytest.approx(np.mean([ge(v, b_obs) for v in between]))
    one = result_of("compare y by g exact", {"t": frame})
    assert r.overall["p_value"] == pytest.approx(one.outcome.p_value, abs=1e-12)


# ---------------------------------------------------------------- properties

def big_table(m=120, n=(8, 8), seed=1, rho=0.5):
    rng = np.random.default_rng(seed)
    N = sum(n)
    g = np.repeat(["A", "B"], n)
    common = rng.normal(size=(N, 1))
    values = np.sqrt(rho) * common + np.sqrt(1 - rho) * rng.normal(size=(N, m))
    values[:, :10] += 1.0 * (g == "A")[:, None]
    frame = pd.DataFrame(values, columns=[f"v{j}" for j in range(m)])
    frame.insert(0, "g", g)
    return frame


def test_step_down_is_monotone_and_below_single_step():
    frame = big_table()
    runs = {}
    for adjust in ("max-t step-down", "max-t single-step", "min-p step-down"):
        runs[adjust] = r = many_of(f"compare every numeric by g adjust {adjust} sampled 4000 "
                                   "seed 3", {"t": frame})
        by_stat = sorted(r.rows, key=lambda row: -abs(row.statistic))
        adj = [row.p_adjusted for row in by_stat] if adjust.startswith("max-t") else \
            [row.p_adjusted for row in r.rows]          # min-p: in order of raw p
        assert all(a <= b + 1e-15 for a, b in zip(adj, adj[1:]))
        assert all(row.p_adjusted >= row.p_value - 1e-15 for row in r.rows)
    down = rows_by_name(runs["max-t step-down"])
    for row in runs["max-t single-step"].rows:
        assert down[row.name].p_adjusted <= row.p_adjusted + 1e-15
        assert down[row.name].p_value == row.p_value


def test_family_wise_error_of_max_t_under_the_complete_null():
    """1,000 seeded null data sets, 10 responses correlated 0.6, 5 + 5 units, exact max-T.

    Estimated family-wise error at 5% must lie below 0.05 + 2.58 Monte Carlo standard errors
    (sqrt(0.05 * 0.95 / 1000) = 0.0069, so below 0.068); unadjusted tests must go well past 5%
    on the same data, so that the check can fail."""
    rng = np.random.default_rng(20261202)
    codes = np.repeat([0, 1], 5)
    sets, hits_adj, hits_raw = 1000, 0, 0
    pool = LocalPool(1)
    for _ in range(sets):
        y = np.sqrt(0.6) * rng.normal(size=(10, 1)) + np.sqrt(0.4) * rng.normal(size=(10, 10))
        out = many.run_family(y, codes, False, "two-sided", "max-t", "step-down",
                              "enumeration", 0, 0, pool=pool)
        hits_adj += bool((out.p_adjusted <= 0.05).any())
        hits_raw += bool((out.p_raw <= 0.05).any())
    assert hits_adj / sets <= 0.05 + 2.58 * np.sqrt(0.05 * 0.95 / sets)
    assert hits_raw / sets > 0.15


# ---------------------------------------------------------------- Monte Carlo and workers

def test_monte_carlo_marginal_matches_the_one_response_statement():
    frame = small_table(missing=False)
    r = many_of("compare r0, r1, r4 by g sampled 5000 seed 11", {"t": frame})
    assert r.method == "monte-carlo" and r.draws == 5000 and r.seed == 11
    for row in r.rows:
        one = result_of(f"compare {row.name} by g sampled 5000 seed 11", {"t": frame})
        assert row.p_value == one.outcome.p_value
    rng = np.random.default_rng(5)
    g3 = np.repeat(["a", "b", "c"], 5)
    frame3 = pd.DataFrame({"g": g3, "y": rng.normal(size=15), "z": rng.normal(size=15)})
    r = many_of("compare y, z by g using ranks sampled 4000 seed 2", {"t": frame3})
    for row in r.rows:
        one = result_of(f"compare {row.name} by g using ranks sampled 4000 seed 2",
                        {"t": frame3})
        assert row.p_value == one.outcome.p_value


def numbers(r):
    return [(row.name, row.p_value, row.p_adjusted, row.statistic) for row in r.rows]


STATEMENTS = ["compare every numeric by g sampled 3000 seed 9",
              "compare every numeric by g adjust min-p sampled 2000 seed 9",
              "compare every numeric by g using ranks adjust max-t single-step"]


def test_one_and_two_local_workers_give_identical_numbers():
    frame = big_table(m=300)
    frame.loc[3, "v7"] = np.nan
    for st in STATEMENTS:
        one = many_of(st, {"t": frame}, workers=1)
        two = many_of(st, {"t": frame}, workers=2)
        assert numbers(one) == numbers(two)
        assert one.where == "1 local worker" and two.where == "2 local workers"


def test_windows_of_draws_do_not_change_the_numbers(monkeypatch):
    frame = big_table(m=50)
    st = "compare every numeric by g adjust max-t single-step sampled 5000 seed 13"
    whole = many_of(st, {"t": frame})
    monkeypatch.setattr(many, "WINDOW_ROWS", 777)
    assert numbers(many_of(st, {"t": frame})) == numbers(whole)


def test_compiled_and_numpy_paths_agree():
    rng = np.random.default_rng(0)
    for k, sizes in ((2, [7, 9]), (3, [4, 5, 6])):
        codes = np.repeat(np.arange(k), sizes).astype(np.int8)
        values = rng.normal(size=(len(codes), 300))
        values[3, 10] = values[4, 299] = np.nan
        y, obs = many.standardised_scores(values, False)
        fam, lut = many.build_family(y, obs, codes, np.bincount(codes), "two-sided",
                                     thr=np.full(300, 1.5))
        ref = many_kernels.members_of(lut[many.arrangements.sampled_codes(codes, 5, 2000)],
                                      fam.sizes)
        for step_down in (False, True):
            a = many_kernels.row_pass(ref, fam, step_down)
            b = many_kernels.row_pass(ref, fam, step_down, compiled=False)
            assert all(np.array_equal(x, z) for x, z in zip(a, b))
        assert np.array_equal(many_kernels.tile_statistics(ref, fam, 256, 300),
                              many_kernels.tile_statistics(ref, fam, 256, 300, compiled=False))


def test_a_local_dask_cluster_gives_the_local_numbers():
    distributed = pytest.importorskip("distributed")
    frame = big_table(m=300)
    frame.loc[3, "v7"] = np.nan
    local = [many_of(st, {"t": frame}, workers=1) for st in STATEMENTS]
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        with distributed.Client(cluster) as client:
            for st, here in zip(STATEMENTS, local):
                there = many_of(st, {"t": frame}, cluster=client)
                assert numbers(there) == numbers(here)
                assert there.where.startswith("the Dask cluster")
            by_address = many_of(STATEMENTS[0], {"t": frame}, cluster=cluster.scheduler_address)
            assert numbers(by_address) == numbers(local[0])
            s = permq.Session(tables={"t": frame})
            out = s.run(f'set cluster "{cluster.scheduler_address}"\n{STATEMENTS[0]}')
            assert numbers(out[1]) == numbers(local[0])


def test_unreachable_cluster_is_an_error_not_a_crash(monkeypatch):
    pytest.importorskip("distributed")
    from permq.engine.many import workers

    monkeypatch.setattr(workers, "CONNECT_SECONDS", 1)
    frame = small_table()
    out = permq.run("set cluster \"tcp://127.0.0.1:1\"\ncompare r0, r1 by g",
                    tables={"t": frame})
    assert isinstance(out[1], permq.Failure)
    assert "cannot reach the cluster" in out[1].message


# ---------------------------------------------------------------- inputs

def test_bad_responses_are_reported_in_rows_and_warnings():
    frame = small_table(missing=False)
    frame["flat"] = 3.0
    frame["sparse"] = np.nan
    frame.loc[[0, 7], "sparse"] = [1.0, 2.0]
    frame["word"] = ["x"] * len(frame)
    r = many_of("compare every numeric by g", {"t": frame})
    notes = {row.name: row.note for row in r.rows}
    assert notes["flat"].startswith("not tested: constant")
    assert notes["sparse"].startswith("not tested: too few values (1 in A, 1 in B")
    assert "word" not in notes
    assert any("skipped 1 column that is not numeric: 'word'" in w for w in r.warnings)
    assert any("2 responses not tested" in w and "covers the 6 tested" in w
               for w in r.warnings)
    assert r.tested == 6 and r.untested == 2
    named = many_of("compare r0, word, flat by g", {"t": frame})
    notes = {row.name: row.note for row in named.rows}
    assert notes["word"] == "not tested: not numeric: row 2 of the file holds 'x'"
    text = render([named], "text")
    assert "not tested: not numeric" in text


@pytest.mark.parametrize("statement, message", [
    ("compare flat, word by g", "no response can be tested"),
    ("compare r0, r0 by g", "response 'r0' is named twice"),
    ("compare r0, g by g", "'g' is the group column"),
    ("compare r0, rr1 by g", "no column 'rr1'"),
    ("compare every numeric except nope by g", "no column 'nope'"),
    ("compare r0, r1 by g adjust fdr step-down", "'fdr' is the Benjamini-Hochberg step-up rule"),
    ("compare r0 by g pairwise", "'pairwise' needs three or more levels"),
    ("compare r0, r1 by g pairwise", "'pairwise' compares the levels of one response"),
    ("compare r0, r1 by g within g", "'within' does not apply to several responses"),
    ("compare r0, r1 by g below 3", "is not a p-value threshold"),
    ("compare r0 by g for each r1 pairwise", "'pairwise' and 'for each' do not go together"),
])
def test_statements_that_cannot_run_say_why(statement, message):
    frame = small_table()
    frame["flat"] = 3.0
    frame["word"] = ["x"] * len(frame)
    f = failure_of(statement, {"t": frame})
    assert message in f.message, f.message


def test_for_each_long_table_is_the_wide_comparison():
    wide = small_table(missing=True)
    names = [c for c in wide.columns if c != "g"]
    long = wide.melt(id_vars="g", value_vars=names, var_name="feature", value_name="value")
    a = many_of("compare every numeric by g sampled 2000 seed 4", {"t": wide})
    b = many_of("compare value by g for each feature sampled 2000 seed 4", {"t": long})
    assert b.family == "for each"
    assert numbers(a) == numbers(b)
    shuffled = long.sample(frac=1.0, random_state=1)
    f = failure_of("compare value by g for each feature", {"t": shuffled})
    assert "must list the same units in the same order" in f.message


def test_estimates_are_the_one_response_estimates():
    frame = small_table(missing=False)
    means = rows_by_name(many_of("compare r0, r1 by g", {"t": frame}))
    ranks = rows_by_name(many_of("compare r0, r1 by g using ranks", {"t": frame}))
    for name in ("r0", "r1"):
        one = result_of(f"compare {name} by g", {"t": frame})
        assert means[name].estimate == pytest.approx(one.estimate.value)
        np.testing.assert_allclose(means[name].interval, one.normal.interval, rtol=1e-12)
        one = result_of(f"compare {name} by g using ranks", {"t": frame})
        assert ranks[name].estimate == pytest.approx(one.estimate.value)
        np.testing.assert_allclose(ranks[name].interval, one.estimate.interval, rtol=1e-12)


def test_filters_text_csv_json():
    frame = big_table(m=60)
    r = many_of("compare every numeric by g sampled 2000 seed 1", {"t": frame})
    assert len(r.rows) == 60 and [row.p_value for row in r.rows] == sorted(
        row.p_value for row in r.rows)
    text = render([r], "text")
    assert "... 40 more rows" in text and text.count("\n  v") == 20
    rows = list(csv.DictReader(io.StringIO(render([r], "csv"))))
    assert len(rows) == 60 and rows[0]["name"] == r.rows[0].name
    assert float(rows[0]["p_adjusted"]) == r.rows[0].p_adjusted
    d = json.loads(render([r], "json"))[0]
    assert {"rows", "adjustment", "method", "draws", "seed"} <= set(d)
    assert d["seed"] == 1 and d["draws"] == 2000 and len(d["rows"]) == 60
    top = many_of("compare every numeric by g sampled 2000 seed 1 top 5", {"t": frame})
    assert numbers(top) == numbers(r)[:5]
    below = many_of("compare every numeric by g sampled 2000 seed 1 below 0.05", {"t": frame})
    assert all(row.p_adjusted < 0.05 for row in below.rows)
    assert len(below.rows) == sum(row.p_adjusted < 0.05 for row in r.rows) > 0
    assert "| v" in render([r], "markdown")


def test_settings_statements():
    s = permq.Session(tables={"t": small_table()})
    out = s.run("set workers 2\nset cluster none\nshow settings\nset workers 0\nset cluster 7")
    assert out[0].text == "workers set to 2"
    assert "workers 2" in out[2].text and "cluster none" in out[2].text
    assert isinstance(out[3], permq.Failure) and isinstance(out[4], permq.Failure)
    assert s.defaults.workers == 2 and s.defaults.cluster is None
