"""Paired outcomes beyond the 2 x 2 table: symmetry (Bowker), marginal homogeneity
(Stuart-Maxwell form) and Cochran's Q, against brute-force listings of the swaps within units
(exact fractions), statsmodels, and a published table."""
from __future__ import annotations

import itertools
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.contingency_tables import SquareTable, cochrans_q

import permq
from permq.engine.tables import symmetry as S

# made-up paired grades of 11 units (low / mid / high), and yes/no on three occasions
BEFORE = ["low", "low", "mid", "mid", "high", "low", "mid", "low", "high", "low", "mid"]
AFTER = ["low", "mid", "high", "mid", "mid", "high", "high", "mid", "high", "mid", "low"]
D = [[1, 1, 0], [1, 0, 0], [0, 0, 0], [1, 1, 1], [1, 1, 0], [0, 1, 0], [1, 1, 0], [1, 0, 0],
     [0, 1, 1], [1, 0, 1]]


def frame():
    d = np.array(D)
    return {"t": pd.DataFrame({"before": BEFORE, "after": AFTER}),
            "u": pd.DataFrame({"d1": np.where(d[:, 0], "yes", "no"),
                               "d2": np.where(d[:, 1], "yes", "no"),
                               "d3": np.where(d[:, 2], "yes", "no")})}


def table_of(first, second, levels):
    t = np.zeros((len(levels), len(levels)), dtype=int)
    for a, b in zip(first, second):
        t[levels.index(a), levels.index(b)] += 1
    return t


def brute_swap_p(first, second, levels, stat) -> Fraction:
    """Every way of swapping each discordant unit's two outcomes, each equally likely."""
    units = [(a, b) for a, b in zip(first, second) if a != b]
    same = [(a, a) for a, b in zip(first, second) if a == b]
    observed = stat(table_of(first, second, levels))
    hits = 0
    for flips in itertools.product((False, True), repeat=len(units)):
        pairs = [(b, a) if f else (a, b) for f, (a, b) in zip(flips, units)] + same
        t = table_of([p[0] for p in pairs], [p[1] for p in pairs], levels)
        hits += stat(t) >= observed - 1e-9 * max(1.0, observed)
    return Fraction(hits, 2 ** len(units))


LEVELS = ["high", "low", "mid"]       # natural order of the words


@pytest.mark.parametrize("family, stat", [("symmetry", S.bowker),
                                          ("marginal-homogeneity",
                                           lambda t: S.stuart_maxwell(t)[0])])
def test_exact_p_equals_every_swap_listed(family, stat):
    r = permq.run(f"count before vs after in t paired using {family}", tables=frame())[0]
    assert r.outcome.method == "exact"
    assert r.outcome.arrangements == 2 ** 8
    assert r.outcome.p_value == pytest.approx(float(brute_swap_p(BEFORE, AFTER, LEVELS, stat)),
                                              rel=1e-12)


def test_statistics_and_counterparts_agree_with_statsmodels():
    t = table_of(BEFORE, AFTER, LEVELS)
    st = SquareTable(t, shift_zeros=False)
    for family, ref in (("symmetry", st.symmetry()), ("marginal-homogeneity",
                                                      st.homogeneity())):
        r = permq.run(f"count before vs after in t paired using {family}", tables=frame())[0]
        assert r.outcome.statistic == pytest.approx(ref.statistic, rel=1e-12)
        assert r.normal.p_value == pytest.approx(ref.pvalue, rel=1e-9)
        assert r.normal.df == ref.df


def test_published_vision_table():
    # Stuart (1955), Biometrika 42:412: unaided distance vision, right against left eye, of
    # 7,477 women; Stuart-Maxwell 11.96 on 3 df and Bowker 19.11 on 6 df as Agresti (2002,
    # Categorical Data Analysis, section 10.3) reports them (from memory)
    t = np.array([[1520, 266, 124, 66], [234, 1512, 432, 78], [117, 362, 1772, 205],
                  [36, 82, 179, 492]])
    assert S.stuart_maxwell(t) == (pytest.approx(11.96, abs=0.005), 3)
    assert S.bowker(t) == pytest.approx(19.11, abs=0.005)


def test_monte_carlo_agrees_with_the_exact_law():
    t = table_of(BEFORE, AFTER, LEVELS)
    exact = S.run("marginal-homogeneity", t, "dp")
    mc = S.run("marginal-homogeneity", t, "monte-carlo", draws=40_000, seed=5)
    lo, hi = mc.p_interval
    assert lo <= exact.p_value <= hi


def brute_cochran_p(rows) -> Fraction:
    """Every permutation of each unit's outcomes among the columns (distinct arrangements of a
    row are weighted by their multiplicity, so each permutation counts once)."""
    def q(y):
        y = np.array(y, float)
        k = y.shape[1]
        c, r, n = y.sum(axis=0), y.sum(axis=1), y.sum()
        den = k * n - (r ** 2).sum()
        return (k - 1) * (k * (c ** 2).sum() - n ** 2) / den
    observed = q(rows)
    # each row's distinct arrangements with the number of permutations giving each
    perms = []
    for row in rows:
        counts = {}
        for p in itertools.permutations(row):
            counts[p] = counts.get(p, 0) + 1
        perms.append(list(counts.items()))
    hits = total = 0
    for choice in itertools.product(*perms):
        weight = 1
        for _, c in choice:
            weight *= c
        total += weight
        hits += weight * (q([a for a, _ in choice]) >= observed - 1e-9)
    return Fraction(hits, total)


def test_cochran_q_exact_p_statsmodels_and_brute_force():
    r = permq.run("count d1 vs d2 vs d3 in u paired", tables=frame())[0]
    ref = cochrans_q(np.array(D))
    assert r.outcome.statistic_name == "Cochran's Q"
    assert r.outcome.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert r.normal.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    assert r.outcome.p_value == pytest.approx(float(brute_cochran_p(D)), rel=1e-12)


def test_several_outcomes_must_be_yes_no_and_paired():
    tables = frame()
    tables["u"]["d3"] = ["a", "b", "c"] * 3 + ["a"]
    f = permq.run("count d1 vs d2 vs d3 in u paired", tables=tables)[0]
    assert isinstance(f, permq.Failure) and "yes/no outcomes" in f.message
    f = permq.run("count before vs after in t paired using fisher", tables=frame())[0]
    assert isinstance(f, permq.Failure)
    assert f.hint == "choose one of marginal-homogeneity, symmetry"


# ---------------------------------------------------------------- the robustness check

def test_the_checks_tests_are_the_engines_on_simulated_tables():
    """Every simulated table's exact p is the engine's p for that table, its chi-square p
    the family's counterpart."""
    from permq.lazy import stats
    from permq.robustness.tables import paired_categories as P

    t = table_of(BEFORE, AFTER, ["low", "mid", "high"])
    for statistic in S.STATISTICS:
        draw = P.panel(t, statistic)[0].null
        tables = draw(np.random.default_rng(3), 40)
        tests = P.PairedCategoryTests(None, statistic)
        got, normal = tests.exact_p(tables), tests.normal_p(tables)
        for i, tab in enumerate(tables):
            assert got[i] == pytest.approx(S.run(statistic, tab, "dp").p_value, rel=1e-12)
            if statistic == "symmetry":
                df, value = len(S.pairs(tab)), S.bowker(tab)
            else:
                value, df = S.stuart_maxwell(tab)
            want = stats.chi2.sf(value, df) if df >= 1 else 1.0
            assert normal[i] == pytest.approx(want, rel=1e-12)


def test_the_cyclic_scheme_keeps_the_margins_and_breaks_symmetry():
    from permq.robustness.tables import paired_categories as P

    t = np.array([[5, 3, 2], [4, 6, 3], [1, 2, 4]])
    p = P._cyclic(P._null_cells(t))
    assert np.allclose(p.sum(axis=0), p.sum(axis=1)) and not np.allclose(p, p.T)
    assert p.min() >= 0 and p.sum() == pytest.approx(1)
    keys = [s.key for s in P.panel(t, "marginal-homogeneity")]
    assert keys[-1] == "cyclic-changes" and "cyclic-changes" not in [
        s.key for s in P.panel(t, "symmetry")]


@pytest.mark.parametrize("using", ["", " using symmetry"])
def test_robustness_of_paired_categories(using):
    statement = f"robustness count before vs after paired in t datasets 200 seed 3{using}"
    out = permq.run(statement, tables=frame())[-1]
    assert not isinstance(out, permq.Failure), out
    assert out.counts and out.rows[0].key == "independent-units"
    assert [r.key for r in out.rows if r.not_exact][0] == "clustered-units"
    again = permq.run(statement, tables=frame())[-1]
    assert [r.permutation_rate for r in again.rows] == [r.permutation_rate for r in out.rows]
    out = permq.run(statement + " shift 2", tables=frame())[-1]
    assert isinstance(out, permq.Failure) and "observed table" in str(out)


def test_cochran_checks_exact_p_is_the_blocked_engines_on_simulated_tables():
    """Cochran's Q is Friedman's tie-corrected statistic on 0/1 data: every simulated table's
    exact p from the law of the column totals is the blocked engine's exact p."""
    from permq.engine import blocks
    from permq.robustness.tables import several_paired as SP

    y = np.array(D)
    v = SP.SeveralView(y, (), ("d1", "d2", "d3"), None)
    tests = SP.tests_for(v)
    for scheme in SP.panel(y)[:2]:
        tables = scheme.null(np.random.default_rng(5), 12)
        got = tests.exact_p(tables)
        for i, t in enumerate(tables):
            rows = t.sum(axis=1)
            keep = (rows > 0) & (rows < 3)
            if not keep.any():
                assert got[i] == 1.0
                continue
            values = t[keep].ravel().astype(float)
            groups = np.tile(np.arange(3), int(keep.sum()))
            units = np.repeat(np.arange(int(keep.sum())), 3)
            want = blocks.run("friedman", values, groups, units, "two-sided", "dp-vector",
                              n_groups=3).p_value
            assert got[i] == pytest.approx(want, rel=1e-9), (scheme.key, t)


def test_robustness_of_several_paired_outcomes():
    statement = "robustness count d1 vs d2 vs d3 paired in u datasets 200 seed 3"
    out = permq.run(statement, tables=frame())[-1]
    assert not isinstance(out, permq.Failure), out
    assert [r.key for r in out.rows] == ["independent-outcomes", "totals-fixed",
                                        "clustered-units"]
    assert out.rows[1].permutation_rate <= 0.05 + 3 * out.rows[1].permutation_se
    assert [r.key for r in out.rows if r.not_exact] == ["clustered-units"]


@pytest.mark.parametrize("statement", ["explain robustness count d1 vs d2 vs d3 paired in u",
                                       "explain robustness count before vs after paired in t"])
def test_explain_names_the_count_check(statement):
    out = permq.run(statement, tables=frame())[-1]
    assert not isinstance(out, permq.Failure), out
    assert "simulated tables a sampling scheme" in str(out)
