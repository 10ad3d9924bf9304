"""The table network at large counts, its state counts, its compiled path for integer
statistics, Kendall's S on a table, and the rank and trend tests routed through the table
(groups x categories): checked against brute force (every table listed, exact rationals on
small tables, log-probabilities on the large published ones), against the engines the routes
stand in for, against scipy, and against published values (source named beside each)."""
from __future__ import annotations

import itertools
import math
import time
from fractions import Fraction
from functools import lru_cache

import numpy as np
import pytest
from scipy import stats
from scipy.special import gammaln

from conftest import failure_of, result_of
from permq.engine import association, ksample, ordered, twosample
from permq.engine.tables import concordance as C
from permq.engine.tables import integers as I
from permq.engine.tables import network as TN
from permq.engine.tables import ranked as R
from permq.engine.tables import rxc as T
from permq.engine.tables import states as S
from permq.normal import tables as N
from test_tables_engine import all_tables

ALTS = ("two-sided", "higher", "lower")

# ---------------------------------------------------------------- published tables, large counts

# A. Agresti (2007), An Introduction to Categorical Data Analysis, 2nd ed., Table 2.6 (p. 44):
# infant malformation by mother's alcohol consumption (0, <1, 1-2, 3-5, >=6 drinks a day), from
# Graubard and Korn (1987), Biometrics 43: 471-476; n = 32,574. On the same page (read):
# "G2 = 6.2 (P = 0.19) and X2 = 12.1 (P = 0.02)" on 4 df. M^2 = 6.57 with the scores
# 0, 0.5, 1.5, 4.0, 7.0 and 1.83 with 1..5 (from memory, same book, section 2.5).
MALFORMATION = np.array([[17066, 48], [14464, 38], [788, 5], [126, 1], [37, 1]])
DRINKS = [0.0, 0.5, 1.5, 4.0, 7.0]

# A. Agresti (2007), same book, Table 2.5: party identification (Democrat, Independent,
# Republican) by gender (females, males), General Social Survey, n = 2,757; X^2 = 30.1 and
# G^2 = 30.0 on 2 df (counts and statistics from memory; the X^2 and G^2 computed from these
# counts agree with the recalled values, which corroborates the counts).
PARTY = np.array([[762, 327, 468], [484, 239, 477]])


def _log_prob(tables):
    """Log hypergeometric probability of each table of a stack (m, r, c)."""
    rows, cols = tables[0].sum(axis=1), tables[0].sum(axis=0)
    n = rows.sum()
    k = gammaln(rows + 1).sum() + gammaln(cols + 1).sum() - gammaln(n + 1)
    return k - gammaln(tables + 1).sum(axis=(1, 2))


def _two_row_tables(first_row_total, cols):
    """Every 2 x c table with these column totals and this first-row total (listed, one
    column at a time: partial first rows with their sums, extended and filtered)."""
    cols = np.asarray(cols)
    part = np.zeros((1, 0), np.int64)
    for cap in cols[:-1]:
        room = np.minimum(cap, first_row_total - part.sum(axis=1))
        cnt = room + 1
        rep = np.repeat(np.arange(len(part)), cnt)
        x = np.arange(cnt.sum()) - np.repeat(np.cumsum(cnt) - cnt, cnt)
        part = np.column_stack([part[rep], x])
    last = first_row_total - part.sum(axis=1)
    ok = last <= cols[-1]
    top = np.column_stack([part[ok], last[ok]])
    return np.stack([top, cols - top], axis=1)


@lru_cache(maxsize=4)
def _listing(data, shape):
    """(every table with these margins, log probabilities), for a two-row or two-column
    table (kept: several checks list the same large table)."""
    t = np.frombuffer(data, dtype=np.int64).reshape(shape)
    flip = t.shape[0] != 2
    t2 = t.T if flip else t
    swap = t2[0].sum() > t2[1].sum()             # list over the smaller row
    t2 = t2[::-1] if swap else t2
    tabs = _two_row_tables(int(t2[0].sum()), t2.sum(axis=0))
    if swap:
        tabs = tabs[:, ::-1, :]
    if flip:
        tabs = tabs.transpose(0, 2, 1)
    return tabs, _log_prob(tabs)


def _listed_p(table, statistic, alternative="two-sided", u=None, v=None):
    """Exact p by listing every table of a two-row (or two-column) table."""
    t = np.asarray(table, dtype=np.int64)
    tabs, lp = _listing(t.tobytes(), t.shape)
    p = np.exp(lp)
    assert abs(p.sum() - 1.0) < 1e-8
    if statistic == "fisher":
        return float(p[lp <= _log_prob(t[None])[0] + math.log1p(1e-7)].sum()), len(tabs)
    if statistic == "chi-square":
        e = np.outer(t.sum(1), t.sum(0)) / t.sum()
        x2, x0 = ((tabs - e) ** 2 / e).sum(axis=(1, 2)), ((t - e) ** 2 / e).sum()
        return float(p[x2 >= x0 * (1 - 1e-9)].sum()), len(tabs)
    u = np.arange(1.0, t.shape[0] + 1) if u is None else np.asarray(u, float)
    v = np.arange(1.0, t.shape[1] + 1) if v is None else np.asarray(v, float)
    s = np.einsum("i,mij,j->m", u, tabs, v)
    s0, mean = u @ t @ v, float(p @ s)
    tol = 1e-9 * max(abs(s0), 1.0)
    if alternative == "higher":
        hit = s >= s0 - tol
    elif alternative == "lower":
        hit = s <= s0 + tol
    else:
        hit = np.abs(s - mean) >= abs(s0 - mean) - tol
    return float(p[hit].sum()), len(tabs)


def test_published_statistics():
    assert N.pearson_chi_square(MALFORMATION).statistic == pytest.approx(12.1, abs=0.05)
    assert N.pearson_chi_square(MALFORMATION).p_value == pytest.approx(0.02, abs=0.005)
    assert N.likelihood_ratio(MALFORMATION).statistic == pytest.approx(6.2, abs=0.05)
    # the book prints P = 0.19 for G^2 = 6.2 on 4 df; the chi-square tail of 6.202 is 0.1846
    assert N.likelihood_ratio(MALFORMATION).p_value == pytest.approx(0.19, abs=0.006)
    m2 = N.trend(MALFORMATION, row_scores=DRINKS, col_scores=[0, 1]).statistic
    assert m2 == pytest.approx(6.57, abs=0.005)
    assert N.trend(MALFORMATION).statistic == pytest.approx(1.83, abs=0.005)
    assert N.pearson_chi_square(PARTY).statistic == pytest.approx(30.1, abs=0.05)
    assert N.likelihood_ratio(PARTY).statistic == pytest.approx(30.0, abs=0.05)


@pytest.mark.parametrize("table,statistic,alternative,u", [
    (PARTY, "fisher", "two-sided", None),
    (PARTY, "chi-square", "two-sided", None),
    (MALFORMATION, "fisher", "two-sided", None),
    (MALFORMATION, "chi-square", "two-sided", None),
    (MALFORMATION, "trend", "two-sided", DRINKS),
    (MALFORMATION, "trend", "higher", DRINKS),
    (MALFORMATION, "trend", "two-sided", None),
])
def test_published_tables_exact_against_listing(table, statistic, alternative, u):
    want, count = _listed_p(table, statistic, alternative, u)
    start = time.process_time()
    got = T.run(table, statistic, alternative, row_scores=u)
    spent = time.process_time() - start
    assert got.method == "exact" and got.arrangements == count
    assert got.p_value == pytest.approx(want, rel=1e-8)
    # measured 0.02-0.3 s; the ceiling leaves room for a loaded machine (and a first compile)
    assert spent < 10.0


def test_published_tables_are_planned_exact_and_fast():
    r = result_of("count [[17066, 48], [14464, 38], [788, 5], [126, 1], [37, 1]] ordered "
                  "scores 0, 0.5, 1.5, 4.0, 7.0")
    assert r.outcome.method == "exact"
    assert r.outcome.p_value == pytest.approx(_listed_p(MALFORMATION, "trend", "two-sided",
                                                        DRINKS)[0], rel=1e-8)
    assert r.normal.statistic == pytest.approx(6.57, abs=0.005)
    r = result_of("count [[762, 327, 468], [484, 239, 477]] exact")
    assert r.outcome.method == "exact" and r.outcome.arrangements == 487866


# ---------------------------------------------------------------- states, moves, layout

def _random_margins(rng):
    r, c = rng.integers(2, 5, 2)
    rows = rng.integers(1, 9, r)
    n = int(rows.sum())
    cuts = np.sort(rng.choice(np.arange(1, n), min(c, n) - 1, replace=False))
    return rows, np.diff(np.r_[0, cuts, n])


def test_state_counts_match_the_states_the_network_meets():
    rng = np.random.default_rng(11)
    for _ in range(150):
        rows, cols = _random_margins(rng)
        for fold in (True, False):
            layout = TN.make_layout(rows, cols, fold=fold)
            assert S.state_counts(rows, cols, fold).tolist() == [r.size for r in layout.reach]


def test_two_rows_hold_at_most_n1_plus_one_states():
    counts = S.state_counts([1557, 1200], [1246, 945, 566])
    assert counts.max() <= 1201
    assert T.orient(PARTY, np.ones(2), np.ones(3))[3].sum() == counts.sum()


def test_moves_and_tables_estimates_against_the_layout():
    rng = np.random.default_rng(12)
    for _ in range(60):
        rows, cols = _random_margins(rng)
        if len(rows) < 2 or len(cols) < 2:
            continue
        table = np.array(next(all_tables(list(rows), list(cols))))
        t, _, _, counts = T.orient(table, np.ones(len(rows)), np.ones(len(cols)))
        layout = TN.make_layout(t.sum(axis=1), t.sum(axis=0))
        assert layout.tables == len(list(all_tables(list(rows), list(cols))))
        assert [r.size for r in layout.reach] == counts.tolist()
        guess = T.estimated_moves(t.sum(axis=1), t.sum(axis=0), counts)
        assert 0.25 * layout.moves <= guess <= 4.0 * layout.moves + 10


def test_planner_cost_is_within_reach_of_the_measured_time():
    # the estimate is calibrated on this class of machine; a factor of 20 either way would
    # mean the model is wrong, not the machine busy
    for table, statistic in ((PARTY, "fisher"), (MALFORMATION, "trend"),
                             ([[9, 6, 5, 5], [5, 7, 6, 7], [7, 6, 4, 8], [8, 6, 5, 6]], "trend")):
        cand = T.candidates(table, statistic)[0]
        T.run(table, statistic)                       # compiles and caches the layout
        start = time.process_time()
        T.run(table, statistic)
        spent = max(time.process_time() - start, 0.01)
        assert spent / 20 <= cand.seconds <= spent * 20 + 0.05, (table, cand.seconds, spent)


# ---------------------------------------------------------------- Kendall's S on a table

def _brute_concordance(t, alternative):
    t = np.asarray(t)
    rows, cols = [int(v) for v in t.sum(1)], [int(v) for v in t.sum(0)]
    const = Fraction(math.prod(math.factorial(v) for v in rows)
                     * math.prod(math.factorial(v) for v in cols), math.factorial(sum(rows)))
    s0 = int(C.kendall_s(t))
    total = Fraction(0)
    for x in all_tables(rows, cols):
        p = const / math.prod(math.factorial(v) for r in x for v in r)
        s = int(C.kendall_s(np.array(x)))
        if (alternative == "higher" and s >= s0 or alternative == "lower" and s <= s0
                or alternative == "two-sided" and abs(s) >= abs(s0)):
            total += p
    return total


def test_kendall_s_of_a_table_counts_pairs():
    rng = np.random.default_rng(13)
    for _ in range(40):
        t = rng.integers(0, 4, rng.integers(2, 5, 2))
        x = np.repeat(np.repeat(np.arange(t.shape[0]), t.shape[1]), t.ravel())
        y = np.repeat(np.tile(np.arange(t.shape[1]), t.shape[0]), t.ravel())
        want = sum(np.sign(x[a] - x[b]) * np.sign(y[a] - y[b])
                   for a in range(len(x)) for b in range(a))
        assert C.kendall_s(t) == want


def test_concordance_network_matches_brute_force():
    rng = np.random.default_rng(14)
    for _ in range(40):
        t = rng.integers(0, 3, rng.integers(2, 4, 2))
        if (t.sum(0) == 0).any() or (t.sum(1) == 0).any():
            continue
        for alt in ALTS:
            assert T.run(t, "concordance", alt).p_value == pytest.approx(
                float(_brute_concordance(t, alt)), rel=1e-10, abs=1e-15)


def test_compiled_and_sorting_networks_agree(monkeypatch):
    rng = np.random.default_rng(15)
    tables = [rng.integers(0, 6, rng.integers(2, 5, 2)) for _ in range(12)]
    tables = [t for t in tables if (t.sum(0) > 0).all() and (t.sum(1) > 0).all()]
    fast = {(i, s, a): T.run(t, s, a).p_value for i, t in enumerate(tables)
            for s in ("trend", "concordance") for a in ALTS}
    monkeypatch.setattr(T, "compiled_route", lambda integer: False)
    for (i, s, a), p in fast.items():
        assert T.run(tables[i], s, a).p_value == pytest.approx(p, rel=1e-9, abs=1e-15)


def test_compiled_null_distribution_matches_the_sorting_network():
    t = np.array([[3, 1, 2, 0], [1, 2, 0, 3], [2, 2, 1, 1]])
    for statistic in ("trend", "concordance"):
        prep = T.prepare(t, statistic, "two-sided", np.arange(1.0, 4), np.arange(1.0, 5), t.size)
        rows, cols = tuple(t.sum(1)), tuple(t.sum(0))
        fast = I.forward(I.layout(rows, cols), prep.cell, None)
        slow = TN.forward(TN.make_layout(rows, cols), prep.cell, None)
        a, b = np.argsort(fast.support), np.argsort(slow.support)
        assert np.array_equal(fast.support[a], slow.support[b])
        assert np.allclose(fast.probs[a], slow.probs[b], rtol=1e-12)


def test_trend_scores_on_a_decimal_grid_report_the_same_statistic():
    t = np.array([[4, 2, 1], [1, 3, 4]])
    a = T.run(t, "trend", row_scores=[0.0, 2.5], col_scores=[0.0, 0.5, 1.5])
    want, _ = _listed_p(t, "trend", "two-sided", [0.0, 2.5], [0.0, 0.5, 1.5])
    assert a.p_value == pytest.approx(want, rel=1e-10)
    assert a.statistic == pytest.approx(np.array([0.0, 2.5]) @ t @ np.array([0, 0.5, 1.5]))


# ---------------------------------------------------------------- routes: the same exact p

def _designs(rng, count):
    for _ in range(count):
        k = int(rng.integers(2, 5))
        sizes = rng.integers(2, 6, k)
        g = np.repeat(np.arange(k), sizes)
        v = rng.integers(1, int(rng.integers(3, 6)), g.size) * rng.choice([1.0, 0.5, 2.5])
        if np.ptp(v) > 0:
            yield v.astype(float), g


def test_routes_match_the_engines_they_stand_in_for():
    rng = np.random.default_rng(16)
    for v, g in _designs(rng, 40):
        k = g.max() + 1
        for alt in ALTS:
            jt = ordered.JONCKHEERE_TERPSTRA
            assert jt.run(v, g, alt, R.TABLE).p_value == pytest.approx(
                jt.run(v, g, alt, "dp-counts").p_value, rel=1e-10)
            doses = rng.integers(0, 4, k) * 1.5
            if np.ptp(doses) > 0:
                lt = ordered.LINEAR_TREND
                assert lt.run(v, g, alt, R.TABLE, scores=doses).p_value == pytest.approx(
                    lt.run(v, g, alt, "dp-counts", scores=doses).p_value, rel=1e-10)
            if k == 2:
                x, y = v[g == 0], v[g == 1]
                b = twosample.run("ranks", x, y, alt, "dp-integer", 0.95)[0]
                assert R.rank_sum(x, y, alt)[0] == pytest.approx(b.p_value, rel=1e-10)


def test_rank_sum_route_against_scipy_permutations():
    # scipy.stats.permutation_test lists every split when n_resamples is large enough
    rng = np.random.default_rng(17)
    for _ in range(6):
        x = rng.integers(1, 4, 5).astype(float)
        y = rng.integers(1, 5, 5).astype(float)
        ranks = stats.rankdata(np.r_[x, y])
        n1, center = len(x), len(x) * ranks.mean()
        ref = stats.permutation_test(
            (ranks[:n1], ranks[n1:]), lambda a, b, axis: np.abs(a.sum(axis) - center),
            permutation_type="independent", n_resamples=10**6, alternative="greater")
        got = R.rank_sum(x, y, "two-sided")[0]
        assert got == pytest.approx(ref.pvalue, rel=1e-9)


def test_kendall_route_against_brute_force_permutations():
    rng = np.random.default_rng(18)
    for _ in range(4):
        x = rng.integers(1, 4, 6).astype(float)
        y = np.clip(x + rng.integers(-1, 2, 6), 1, 4).astype(float)
        if np.ptp(x) == 0 or np.ptp(y) == 0:
            continue
        s0 = stats.kendalltau(x, y).statistic
        taus = [stats.kendalltau(x, np.array(p)).statistic for p in itertools.permutations(y)]
        want = np.mean(np.abs(taus) >= abs(s0) - 1e-12)
        got = association.run("kendall", y, x, "two-sided", R.TABLE)
        assert got.p_value == pytest.approx(want, rel=1e-9)
        assert got.statistic == pytest.approx(s0, rel=1e-12)


def _samples(x, y):
    return " vs ".join("[" + ", ".join(f"{v:g}" for v in a) + "]" for a in (x, y))


def test_routes_are_candidates_only_for_few_categories():
    x = np.arange(20.0)
    assert "2 groups x categories" not in permq_explain(
        f"compare {_samples(x[:10], x[10:])} using ranks")
    v = np.tile([1.0, 2.0, 3.0], 10)
    assert "2 groups x categories" in permq_explain(
        f"compare {_samples(v[:15], v[15:])} using ranks")
    # the rank-sum family declares the route; means never takes it
    assert "2 groups x categories" not in permq_explain(f"compare {_samples(v[:15], v[15:])}")


def test_rank_sum_route_through_the_family_reports_the_engines_statistic(monkeypatch):
    # the engine's own exact methods withheld, so the family runs the table network
    real = twosample.candidates
    monkeypatch.setattr(twosample, "candidates", lambda *a: [
        c for c in real(*a) if c.algorithm not in ("dp-integer", "enumeration")])
    rng = np.random.default_rng(19)
    x, y = rng.integers(1, 5, 14).astype(float), rng.integers(2, 6, 12).astype(float)
    for alt in ALTS:
        got = result_of(f"compare {_samples(x, y)} using ranks alternative {alt}").outcome
        want = twosample.run("ranks", x, y, alt, "dp-integer", 0.95)[0]
        assert got.method == "exact" and "2 groups x categories" in got.algorithm
        assert got.statistic == want.statistic and got.arrangements == want.arrangements
        assert got.p_value == pytest.approx(want.p_value, rel=1e-10)


# ---------------------------------------------------------------- ordinal data, 4 x 4, n = 100

def _ordinal_statement(options):
    # four groups of 25 graded 1-4 (a benchmark design of our own, seeded)
    rng = np.random.default_rng(5)
    groups = [rng.integers(1, 5, 25) for _ in range(4)]
    return "compare " + " vs ".join("[" + ", ".join(str(v) for v in g) + "]"
                                    for g in groups) + " " + options


@pytest.mark.parametrize("options", ["ordered using ranks", "ordered"])
def test_ordinal_four_by_four_is_exact_through_the_table(options):
    r = result_of(_ordinal_statement(options))
    assert r.outcome.method == "exact"
    assert "groups x" in r.outcome.algorithm
    plan = permq_explain(_ordinal_statement(options))
    assert "groups x" in plan and "* network algorithm over the groups" in plan
    mc = result_of(_ordinal_statement(options + " sampled 20000 seed 3"))
    assert mc.outcome.p_interval[0] <= r.outcome.p_value <= mc.outcome.p_interval[1]


def permq_explain(statement):
    import permq

    return permq.run("explain " + statement)[0].text


def test_exact_is_not_refused_when_the_table_route_fits_the_hour():
    r = result_of(_ordinal_statement("ordered using ranks exact"))
    assert r.outcome.method == "exact"


# ---------------------------------------------------------------- count ... ordered, scores

DOSES = {"dose": ["control"] * 4 + ["low"] * 4 + ["mid"] * 4 + ["high"] * 4,
         "mg": [0] * 4 + [10] * 4 + [20] * 4 + [40] * 4,
         "dead": [0, 0, 1, 0, 0, 1, 0, 1, 1, 1, 0, 1, 1, 1, 1, 0]}


def _doses():
    import pandas as pd

    return {"d": pd.DataFrame(DOSES)}


def test_count_ordered_honours_the_listed_order():
    r = result_of('count dead by dose ordered "control" < "low" < "mid" < "high"', _doses())
    assert r.extra["table"]["columns"] == ["control", "low", "mid", "high"]
    want = T.run([[3, 2, 1, 1], [1, 2, 3, 3]], "trend", row_scores=[0, 1],
                 col_scores=[1, 2, 3, 4]).p_value
    assert r.outcome.p_value == pytest.approx(want, rel=1e-12)
    assert any("1..k in the order listed" in w for w in r.warnings)


def test_count_ordered_scores_numeric_levels_by_their_values():
    r = result_of("count dead by mg ordered", _doses())
    want, _ = _listed_p(np.array([[3, 2, 1, 1], [1, 2, 3, 3]]), "trend", "two-sided",
                        [0, 1], [0, 10, 20, 40])
    assert r.outcome.p_value == pytest.approx(want, rel=1e-10)
    assert any("0, 10, 20, 40 (the values)" in w for w in r.warnings)
    given = result_of("count dead by mg ordered scores 0, 1, 2, 3", _doses())
    listed = result_of('count dead by dose ordered "control" < "low" < "mid" < "high"', _doses())
    assert given.outcome.p_value == pytest.approx(listed.outcome.p_value, rel=1e-12)
    assert any("(as given)" in w for w in given.warnings)


def test_compare_ordered_takes_scores():
    import pandas as pd

    frame = pd.DataFrame({"y": [1.2, 1.4, 1.1, 1.5, 1.6, 1.2, 1.8, 1.6, 1.9, 2.1, 2.2, 1.9],
                          "g": ["a"] * 3 + ["b"] * 3 + ["c"] * 3 + ["d"] * 3})
    r = result_of('compare y by g ordered "a" < "b" < "c" < "d" scores 0, 10, 20, 40',
                  {"t": frame})
    want = ordered.LINEAR_TREND.run(frame.y.to_numpy(), np.repeat(np.arange(4), 3),
                                    "two-sided", "enumeration",
                                    scores=[0, 10, 20, 40]).p_value
    assert r.outcome.p_value == pytest.approx(want, rel=1e-10)
    assert any("dose scores: 0, 10, 20, 40 (as given)" in w for w in r.warnings)


@pytest.mark.parametrize("statement,words", [
    ("count dead by dose ordered", "needs the order of the levels of 'dose'"),
    ("count dead by mg scores 1, 2, 3, 4", "'scores' go with 'ordered'"),
    ("count dead by mg ordered scores 1, 2", "2 scores for the 4 levels of 'mg'"),
    ("count [[1, 2], [3, 4], [5, 6]] ordered scores 1, 2, 3, 4", "4 scores for a 3 x 2 table"),
])
def test_bad_scores_and_orders_are_refused(statement, words):
    assert words in failure_of(statement, _doses()).message


def test_binomial_blocks_speak_of_outcomes():
    import permq
    from permq.render.text import result_block

    for statement, count in (("count 7 of 20 vs 0.3", 21), ("count [[9, 1], [3, 7]]", None)):
        r = result_of(statement)
        block = result_block(r)
        if count:
            assert "exact binomial" in block and f"{count} outcomes" in block
            assert "arrangements" not in block and "permutation (exact)" not in block
        else:
            assert "permutation (exact)" in block and "arrangements" in block
    assert "reference set: 21 outcomes" in permq.run("explain count 7 of 20")[0].text


def test_network_past_its_limits_answers_by_monte_carlo(monkeypatch):
    """A planned exact network that outgrows its limits mid-pass (the plan cannot count the
    pairs it will carry) still answers: by Monte Carlo, labelled so, with the reason."""
    from permq.engine.tables import network, rxc
    from permq.errors import PlanError

    t = [[3, 5, 2], [4, 1, 6], [2, 6, 3]]
    exact = rxc.run(t, "fisher", seed=5)
    monkeypatch.setattr(network, "MAX_ENTRIES", 5)
    out = rxc.run(t, "fisher", seed=5, draws=20000)
    assert out.method == "monte-carlo" and out.draws == 20000
    assert any("outgrew its limits" in w for w in out.warnings)
    lo, hi = out.p_interval
    assert lo <= exact.p_value <= hi
    with pytest.raises(PlanError, match="no exact p-value"):
        rxc.run(t, "fisher")                      # no seed: a clear refusal, not a crash


@pytest.mark.parametrize("statistic", ["concordance", "fisher"])
def test_memory_budget_bounds_the_networks_peak(statistic):
    """`set memory` bounds the real peak of the table networks (compiled and sorting), whose
    pairs the plan can only estimate: past the budget the pass stops and the statement answers
    by Monte Carlo, saying why; the traced peak stays near the budget. The table is one of our
    own (Kendall's S on it runs exact in 2 GB with a 170 MB peak)."""
    import tracemalloc

    from permq.engine.core.limits import using_memory

    t = np.array([[14, 3, 3, 0, 0], [7, 4, 4, 2, 0], [3, 2, 2, 3, 4], [4, 7, 1, 1, 6]])
    T.run(t[:2, :3], statistic, seed=1, draws=200)     # loads the compiled loops first
    for budget in (3e7, 1e7):
        with using_memory(budget):
            tracemalloc.start()
            try:
                out = T.run(t, statistic, seed=1, draws=2000)
                peak = tracemalloc.get_traced_memory()[1]
            finally:
                tracemalloc.stop()
        assert out.method == "monte-carlo"
        assert any("past the memory budget" in w and "set memory" in w for w in out.warnings)
        assert peak < 1.25 * budget, (budget, peak)
    if statistic == "concordance":               # the same table within the default budget
        exact = T.run(t, statistic, seed=1)
        assert exact.method == "exact" and out.p_interval[0] <= exact.p_value <= out.p_interval[1]
