"""Incomplete blocks: the F within blocks, Skillings-Mack and Durbin against brute-force
enumeration of every within-block arrangement (small designs), against statsmodels for the
least-squares F with missing cells, against scipy's Friedman test for complete blocks, and
against a published worked example of Durbin's test; the binder's messages; the vectorised
robustness tests against the engine."""
from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import permq
from permq.bind.common import Defaults
from permq.bind.binder import bind
from permq.engine import incomplete
from permq.result import Failure
from permq.robustness.arrangements import exact_reference
from permq.robustness.batch import normal_p, observed_statistic, permutation_p, scores
from permq.robustness.pictures import reported
from permq.robustness.problem import data_row, problem_for
from permq.syntax.parser import parse_script


def _design(cells):
    """(values, groups, blocks) from {(block, treatment): value}."""
    keys = sorted(cells)
    return (np.array([cells[k] for k in keys], dtype=float),
            np.array([k[1] for k in keys]), np.array([k[0] for k in keys]))


# 4 blocks x 3 treatments, one plot lost (1 decimal); 5 blocks x 4 treatments, two lost, ties
LOST_ONE = {(0, 0): 10.2, (0, 1): 11.5, (0, 2): 12.9, (1, 0): 9.1, (1, 1): 10.8,
            (2, 0): 10.7, (2, 1): 10.1, (2, 2): 12.2, (3, 0): 11.3, (3, 1): 12.0, (3, 2): 12.4}
LOST_TWO = {(0, 0): 3.0, (0, 1): 4.0, (0, 2): 4.0, (0, 3): 6.0,
            (1, 0): 2.0, (1, 1): 5.0, (1, 3): 4.0,
            (2, 0): 5.0, (2, 1): 5.0, (2, 2): 7.0, (2, 3): 6.0,
            (3, 1): 2.0, (3, 2): 3.0, (3, 3): 1.0,
            (4, 0): 4.0, (4, 1): 6.0, (4, 2): 6.0, (4, 3): 8.0}


def _arrangements(v, blocks):
    """Every within-block arrangement of the values (each of the prod k_i! orders once)."""
    rows = [np.flatnonzero(blocks == b) for b in np.unique(blocks)]
    for combo in itertools.product(*[itertools.permutations(r) for r in rows]):
        out = v.copy()
        for r, order in zip(rows, combo):
            out[r] = v[list(order)]
        yield out


def _ols_f(v, g, blocks):
    """F for treatments adjusted for blocks: least squares with dummies, from scratch."""
    xb = (blocks[:, None] == np.unique(blocks)[None, :]).astype(float)
    xt = (g[:, None] == np.unique(g)[None, 1:]).astype(float)
    rss = lambda x: float(((v - x @ np.linalg.lstsq(x, v, rcond=None)[0]) ** 2).sum())
    reduced, full = rss(xb), rss(np.hstack([xb, xt]))
    df1, df2 = xt.shape[1], len(v) - xb.shape[1] - xt.shape[1]
    return ((reduced - full) / df1) / (full / df2)


def _within_ranks(v, blocks):
    r = np.empty(len(v))
    for b in np.unique(blocks):
        inside = blocks == b
        r[inside] = stats.rankdata(v[inside])
    return r


def _sm_scores(v, g, blocks, t):
    """A_j = sum_i sqrt(12 / (k_i + 1)) (r_ij - (k_i + 1) / 2) (Skillings & Mack 1981)."""
    r = _within_ranks(v, blocks)
    k = np.array([np.sum(blocks == b) for b in blocks], dtype=float)
    return np.bincount(g, weights=np.sqrt(12 / (k + 1)) * (r - (k + 1) / 2), minlength=t)


def _sm_weighted(v, blocks):
    r = _within_ranks(v, blocks)
    k = np.array([np.sum(blocks == b) for b in blocks], dtype=float)
    return np.sqrt(12 / (k + 1)) * (r - (k + 1) / 2)


def _every_sum(a, g, blocks, t):
    """The treatment sums of the scores a for every within-block arrangement, one row each
    (every one of the prod k_i! orders listed, none merged)."""
    sums = np.zeros((1, t))
    for blk in np.unique(blocks):
        rows = np.flatnonzero(blocks == blk)
        moves = np.zeros((len(list(itertools.permutations(rows))), t))
        for i, order in enumerate(itertools.permutations(range(len(rows)))):
            moves[i, g[rows]] = a[rows][list(order)]
        sums = (sums[:, None, :] + moves[None, :, :]).reshape(-1, t)
    return sums


def _brute_p(statistic, v, blocks):
    obs = statistic(v)
    values = np.array([statistic(a) for a in _arrangements(v, blocks)])
    return float(np.mean(values >= obs - 1e-9 * max(abs(obs), 1.0))), obs, len(values)


def test_f_within_blocks_matches_brute_force_and_statsmodels():
    import statsmodels.api as sm
    import statsmodels.formula.api as smf

    v, g, b = _design(LOST_ONE)
    p, f_obs, count = _brute_p(lambda a: _ols_f(a, g, b), v, b)
    out = incomplete.run("within-block-f", v, g, b, "dp-split", n_groups=3)
    assert out.arrangements == count == 6 ** 3 * 2
    assert out.statistic == pytest.approx(f_obs, rel=1e-10)
    assert out.p_value == pytest.approx(p, rel=1e-12)
    frame = pd.DataFrame({"y": v, "b": b.astype(str), "g": g.astype(str)})
    table = sm.stats.anova_lm(smf.ols("y ~ C(b) + C(g)", frame).fit(), typ=2)
    r = permq.run("compare y by g within b", tables={"t": frame})[0]
    assert r.family == "blocked" and r.outcome.method == "exact"
    assert r.outcome.p_value == pytest.approx(p, rel=1e-12)
    assert r.normal.statistic == pytest.approx(table.loc["C(g)", "F"], rel=1e-10)
    assert r.normal.p_value == pytest.approx(table.loc["C(g)", "PR(>F)"], rel=1e-10)


def test_skillings_mack_with_ties_matches_brute_force_covariance():
    """Sigma is had here by enumerating the reference set itself (the covariance of A over
    every arrangement), so the tie correction is checked, not assumed."""
    v, g, b = _design(LOST_TWO)
    t = 4
    every = _every_sum(_sm_weighted(v, b), g, b, t)
    sigma = every.T @ every / len(every)
    # the sums add to a constant, so sigma is singular: its null eigenvalue is rounding (about
    # 1e-15 of the largest), kept or dropped by numpy's fixed default cutoff as the order of the
    # sums falls; a cutoff far above rounding drops it on every machine
    inv = np.linalg.pinv(sigma, rcond=1e-10)
    stat = np.einsum("nj,jl,nl->n", every, inv, every)
    a_obs = _sm_scores(v, g, b, t)
    obs = float(a_obs @ inv @ a_obs)
    p = float(np.mean(stat >= obs - 1e-9 * obs))
    out = incomplete.run("skillings-mack", v, g, b, "dp-split", n_groups=t)
    assert out.statistic == pytest.approx(obs, rel=1e-9)
    assert out.p_value == pytest.approx(p, rel=1e-12)
    assert out.arrangements == len(every)
    sampled = incomplete.run("skillings-mack", v, g, b, "monte-carlo", draws=20_000, seed=3,
                             n_groups=t)
    lo, hi = sampled.p_interval
    assert lo <= p <= hi


def test_skillings_mack_untied_uses_the_papers_covariance():
    """No ties: Sigma_jl = -lambda_jl, Sigma_jj = sum_l lambda_jl (Skillings & Mack 1981)."""
    v, g, b = _design({k: val + 0.01 * i for i, (k, val) in enumerate(sorted(LOST_TWO.items()))})
    t = 4
    lam = np.zeros((t, t))
    for blk in np.unique(b):
        present = g[b == blk]
        for j, l in itertools.permutations(present, 2):
            lam[j, l] += 1
    sigma = np.diag(lam.sum(axis=1)) - lam
    a = _sm_scores(v, g, b, t)
    expected = float(a @ np.linalg.pinv(sigma, rcond=1e-10) @ a)
    out = incomplete.run("skillings-mack", v, g, b, "dp-split", n_groups=t)
    assert out.statistic == pytest.approx(expected, rel=1e-10)


def test_skillings_mack_on_complete_blocks_is_friedman():
    rng = np.random.default_rng(4)
    y = rng.normal(size=(6, 4)) + np.arange(4) * 0.4
    v, g, b = y.ravel(), np.tile(np.arange(4), 6), np.repeat(np.arange(6), 4)
    out = incomplete.run("skillings-mack", v, g, b, "monte-carlo", draws=1000, seed=1,
                         n_groups=4)
    assert out.statistic == pytest.approx(stats.friedmanchisquare(*y.T).statistic, rel=1e-10)


# Ice-cream tasting: 7 judges each rank 3 of 7 varieties, a balanced incomplete block design
# (t = 7, b = 7, k = 3, r = 3, lambda = 1): the worked example of Durbin's test in Conover,
# Practical Nonparametric Statistics, 3rd ed. (1999), section 5.9 (data from memory). By hand:
# rank sums A..G = 8, 9, 4, 3, 5, 6, 7; sum (R_j - 6)^2 = 28; A - C = 7 * 3 * 8 / 12 = 14;
# T1 = 6 * 28 / 14 = 12 and T2 = (12 / 6) / ((14 - 12) / 8) = 8 on 6 and 8 df.
ICE_CREAM = {(0, 0): 2, (0, 1): 3, (0, 3): 1, (1, 1): 3, (1, 2): 1, (1, 4): 2,
             (2, 2): 2, (2, 3): 1, (2, 5): 3, (3, 3): 1, (3, 4): 2, (3, 6): 3,
             (4, 0): 3, (4, 4): 1, (4, 5): 2, (5, 1): 3, (5, 5): 1, (5, 6): 2,
             (6, 0): 3, (6, 2): 1, (6, 6): 2}


def test_durbin_on_the_ice_cream_example():
    from permq.normal import incomplete as normal

    v, g, b = _design(ICE_CREAM)
    out = incomplete.run("durbin", v, g, b, "dp-split", n_groups=7)
    assert out.statistic == pytest.approx(12.0, rel=1e-12)
    chi = normal.durbin_chi_square(v, g, b, 7)
    assert chi.df == 6 and chi.p_value == pytest.approx(stats.chi2.sf(12, 6), rel=1e-12)
    f = normal.durbin_f(v, g, b, 7)
    assert f.statistic == pytest.approx(8.0, rel=1e-12)
    assert f.p_value == pytest.approx(stats.f.sf(8.0, 6, 8), rel=1e-12)
    # the exact p by brute force over the 6^7 arrangements: rank sums of every arrangement
    sums = _every_sum(_within_ranks(v, b), g, b, 7)
    t1 = 6 * ((sums - 6) ** 2).sum(axis=1) / 14
    assert out.arrangements == len(t1) == 6 ** 7
    assert out.p_value == pytest.approx(np.mean(t1 >= 12 - 1e-9), rel=1e-12)
    sm = incomplete.run("skillings-mack", v, g, b, "dp-split", n_groups=7)
    assert sm.statistic == pytest.approx(12.0, rel=1e-10)    # Durbin's, on a BIBD without ties
    assert sm.p_value == pytest.approx(out.p_value, rel=1e-12)


def test_durbin_refuses_an_unbalanced_design():
    v, g, b = _design(LOST_TWO)
    with pytest.raises(permq.errors.BindError, match="balanced incomplete blocks"):
        incomplete.candidates("durbin", v, g, b, n_groups=4)


# ---------------------------------------------------------------- the statement

FIELD = pd.DataFrame({"plot_block": ["b1"] * 4 + ["b2"] * 3 + ["b3"] * 4 + ["b4"] * 4,
                      "variety": list("ABCD") + list("ABD") + list("ABCD") + list("ABCD"),
                      "y": [5.1, 5.8, 6.1, 5.4, 5.7, 6.5, 5.9, 6.2, 6.4, 7.0, 6.5, 5.9, 5.8,
                            6.8, 5.6]})


def test_the_statement_runs_exact_with_its_notes():
    r = permq.run("compare y by variety within plot_block using ranks",
                  tables={"f": FIELD})[0]
    assert r.family == "blocked" and r.outcome.method == "exact"
    assert r.outcome.arrangements == 24 ** 3 * 6
    assert any("1 of 16 block-level cells are empty" in w for w in r.warnings)
    assert r.normal.df == 3


def _fails(text, frame):
    out = permq.run(text, tables={"f": frame})[0]
    assert isinstance(out, Failure), text
    return out


def test_designs_without_a_within_block_comparison_get_the_message():
    one_each = pd.DataFrame({"blk": ["1", "2", "3"], "g": ["A", "B", "C"], "y": [1.0, 2, 3]})
    f = _fails("compare y by g within blk", one_each)
    assert "no block of 'blk' holds two or more of the levels" in f.message and f.column
    apart = pd.DataFrame({"blk": ["1", "1", "2", "2"], "g": ["A", "B", "C", "D"],
                          "y": [1.0, 2, 3, 4]})
    f = _fails("compare y by g within blk", apart)
    assert "do not connect the levels: 'A', 'B' | 'C', 'D'" in f.message
    f = _fails('compare y by variety within plot_block ordered "A" < "B" < "C" < "D"', FIELD)
    assert "Page's test" in f.message and "drop 'ordered'" in f.hint


def test_a_block_of_one_plot_is_left_out_with_a_note():
    frame = pd.concat([FIELD, pd.DataFrame({"plot_block": ["b5"], "variety": ["C"],
                                            "y": [6.6]})], ignore_index=True)
    r = permq.run("compare y by variety within plot_block", tables={"f": frame})[0]
    base = permq.run("compare y by variety within plot_block", tables={"f": FIELD})[0]
    assert any("'b5' of 'plot_block' hold one plot" in w for w in r.warnings)
    assert r.outcome.p_value == pytest.approx(base.outcome.p_value, rel=1e-12)
    assert r.normal.p_value == pytest.approx(base.normal.p_value, rel=1e-10)


@pytest.mark.parametrize("family", ["means", "ranks"])
def test_vectorised_tests_give_the_engines_p_values(family):
    text = f"compare y by variety within plot_block using {family}"
    session = permq.Session(tables={"f": FIELD})
    design = bind(parse_script(text)[0].node, session.catalog, Defaults())
    result = session.run(text)[0]
    pb = problem_for(design)
    y = data_row(design)[None, :]
    a = scores(pb, y)
    ref = exact_reference(pb, limit=10 ** 6)
    assert permutation_p(pb, a, ref)[0] == pytest.approx(result.outcome.p_value, rel=1e-9)
    assert normal_p(pb, y, a)[0] == pytest.approx(result.normal.p_value, rel=1e-9)
    t = reported(pb, a[0], observed_statistic(pb, a))[0]
    assert t == pytest.approx(result.outcome.statistic, rel=1e-9)


def test_the_vectorised_durbin_matches_the_engine():
    frame = pd.DataFrame({"judge": [k[0] for k in sorted(ICE_CREAM)],
                          "variety": [f"v{k[1]}" for k in sorted(ICE_CREAM)],
                          "score": [ICE_CREAM[k] for k in sorted(ICE_CREAM)]})
    text = "compare score by variety within judge using durbin sampled 2000 seed 1"
    session = permq.Session(tables={"f": frame})
    design = bind(parse_script(text)[0].node, session.catalog, Defaults())
    result = session.run(text)[0]
    pb = problem_for(design)
    y = data_row(design)[None, :]
    a = scores(pb, y)
    assert normal_p(pb, y, a)[0] == pytest.approx(result.normal.p_value, rel=1e-9)
    assert reported(pb, a[0], observed_statistic(pb, a))[0] == pytest.approx(12.0, rel=1e-9)
