"""Two crossed factors (`compare Y by A and B`): each main effect's exact p against a brute-force
listing of every rearrangement within the other factor's levels (balanced: F in exact
fractions; unbalanced: type II F by least squares from scratch), the interaction's residual
permutation against the listing of its whole reference set, the two-way ANOVA F against
statsmodels (anova_lm, typ=2), the binder's messages, and every renderer."""
from __future__ import annotations

import itertools
from fractions import Fraction
from math import factorial, prod

import numpy as np
import pandas as pd
import pytest

import permq
from permq.engine import factorial as fx
from permq.engine.factorial import residual, restricted

from brute import frac, tail_share
from conftest import failure_of, run_one

# made-up data for the checks: ties inside and across cells (two 5.0, two 6.5, two 7.0)
BALANCED = pd.DataFrame({
    "y": [5.0, 6.5, 4.0, 7.0, 6.5, 8.0, 5.0, 9.5, 7.0, 3.5, 6.0, 8.5],
    "a": ["p", "p", "q", "q", "r", "r", "p", "p", "q", "q", "r", "r"],
    "b": ["u"] * 6 + ["v"] * 6,
})
UNBALANCED = pd.DataFrame({
    "y": [5.1, 6.4, 4.0, 7.2, 7.9, 6.6, 9.3, 5.0, 8.8, 6.1, 7.7],
    "a": ["p", "p", "p", "q", "q", "p", "p", "q", "q", "q", "q"],
    "b": ["u", "u", "u", "u", "u", "v", "v", "v", "v", "v", "v"],
})


def _codes(frame):
    a = pd.factorize(frame["a"], sort=True)[0]
    b = pd.factorize(frame["b"], sort=True)[0]
    return frame["y"].to_numpy(float), a, b


# ---------------------------------------------------------------- brute force, from scratch

def balanced_f(y, a, b, term) -> Fraction:
    """The F of a balanced two-way layout in exact fractions (textbook sums of squares)."""
    y = [frac(v) for v in y]
    N = len(y)
    mean = sum(y) / N
    cells = {}
    for v, i, j in zip(y, a, b):
        cells.setdefault((i, j), []).append(v)
    sse = sum((v - sum(c) / len(c)) ** 2 for c in cells.values() for v in c)
    levels_a, levels_b = sorted(set(a)), sorted(set(b))

    def margin(codes, level):
        vals = [v for v, c in zip(y, codes) if c == level]
        return sum(vals) / len(vals), len(vals)

    ssa = sum(n * (m - mean) ** 2 for m, n in (margin(a, i) for i in levels_a))
    ssb = sum(n * (m - mean) ** 2 for m, n in (margin(b, j) for j in levels_b))
    sscells = sum(len(c) * (sum(c) / len(c) - mean) ** 2 for c in cells.values())
    ss = {"first": ssa, "second": ssb, "interaction": sscells - ssa - ssb}[term]
    df = {"first": len(levels_a) - 1, "second": len(levels_b) - 1,
          "interaction": (len(levels_a) - 1) * (len(levels_b) - 1)}[term]
    return (ss / df) / (sse / (N - len(cells)))


def _rss(y, columns) -> float:
    X = np.column_stack([np.ones(len(y))] + columns)
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    r = y - X @ coef
    return float(r @ r)


def lstsq_f(y, a, b, term) -> float:
    """Type II F by least squares on dummy columns (no shared code with the engine)."""
    A = [(a == i).astype(float) for i in range(1, a.max() + 1)]
    B = [(b == j).astype(float) for j in range(1, b.max() + 1)]
    AB = [x * z for x in A for z in B]
    full = _rss(y, A + B + AB)
    dfe = len(y) - (a.max() + 1) * (b.max() + 1)
    if term == "first":
        ss, df = _rss(y, B) - _rss(y, A + B), len(A)
    elif term == "second":
        ss, df = _rss(y, A) - _rss(y, A + B), len(B)
    else:
        ss, df = _rss(y, A + B) - full, len(AB)
    return (ss / df) / (full / dfe)


def shares(positions, sizes):
    """Every way to split `positions` into consecutive groups of the given sizes."""
    if not sizes:
        yield ()
        return
    for chosen in itertools.combinations(positions, sizes[0]):
        rest = [p for p in positions if p not in chosen]
        for tail in shares(rest, sizes[1:]):
            yield (chosen,) + tail


def within_strata(y, strata, moved):
    """y rearranged in every distinct way within each stratum: each stratum's values shared
    among its cells (each way stands for the same number of permutations)."""
    per_stratum = []
    for s in np.unique(strata):
        rows = np.flatnonzero(strata == s)
        levels = sorted(set(moved[rows]))
        targets = [rows[moved[rows] == m] for m in levels]
        ways = []
        for split in shares(list(range(len(rows))), [len(t) for t in targets]):
            ways.append([(t, y[rows[list(part)]]) for t, part in zip(targets, split)])
        per_stratum.append(ways)
    for combo in itertools.product(*per_stratum):
        out = y.copy()
        for way in combo:
            for target, values in way:
                out[target] = values
        yield out


def brute_main_p(frame, term, exact_fractions) -> Fraction:
    y, a, b = _codes(frame)
    strata, moved = (b, a) if term == "first" else (a, b)
    stat = ((lambda v: balanced_f(v, a, b, term)) if exact_fractions
            else (lambda v: lstsq_f(v, a, b, term)))
    values = [stat(v) for v in within_strata(y, strata, moved)]
    return tail_share(values, stat(y), "higher")


# ---------------------------------------------------------------- exact p

def balanced_f_many(Y, a, b, term) -> np.ndarray:
    """The same textbook F in floats for many rearrangements at once (rows of Y)."""
    la, lb = a.max() + 1, b.max() + 1
    cell = np.stack([Y[:, (a == i) & (b == j)].mean(axis=1) for i in range(la)
                     for j in range(lb)], axis=1).reshape(len(Y), la, lb)
    n = len(a) // (la * lb)
    grand = Y.mean(axis=1)[:, None, None]
    ra, cb = cell.mean(axis=2, keepdims=True), cell.mean(axis=1, keepdims=True)
    ss = {"first": n * lb * ((ra - grand) ** 2).sum(axis=(1, 2)),
          "second": n * la * ((cb - grand) ** 2).sum(axis=(1, 2)),
          "interaction": n * ((cell - ra - cb + grand) ** 2).sum(axis=(1, 2))}[term]
    df = {"first": la - 1, "second": lb - 1, "interaction": (la - 1) * (lb - 1)}[term]
    fitted = cell[:, a, b]
    sse = ((Y - fitted) ** 2).sum(axis=1)
    return (ss / df) / (sse / (len(a) - la * lb))


def test_balanced_main_effect_equals_the_listing_in_exact_fractions():
    """Levels of b within levels of a: 6^3 = 216 ways, each F in exact fractions."""
    r = run_one("compare y by a and b seed 1", {"t": BALANCED})
    row = r.terms[1]
    assert row.outcome.method == "exact" and row.outcome.arrangements == 216
    assert row.outcome.p_value == pytest.approx(float(brute_main_p(BALANCED, "second", True)),
                                                rel=1e-12)
    y, a, b = _codes(BALANCED)
    assert row.outcome.statistic == pytest.approx(float(balanced_f(y, a, b, "second")),
                                                  rel=1e-12)


def test_balanced_main_effect_with_three_levels_equals_the_listing():
    """Levels of a within levels of b: (6! / (2! 2! 2!))^2 = 8,100 ways."""
    r = run_one("compare y by a and b seed 1", {"t": BALANCED})
    row = r.terms[0]
    y, a, b = _codes(BALANCED)
    values = balanced_f_many(np.array(list(within_strata(y, b, a))), a, b, "first")
    assert len(values) == row.outcome.arrangements == 8100
    f_obs = float(balanced_f(y, a, b, "first"))
    assert row.outcome.p_value == pytest.approx(float(tail_share(list(values), f_obs, "higher")),
                                                rel=1e-12)


@pytest.mark.parametrize("term", ["first", "second"])
def test_unbalanced_main_effects_equal_the_listing_of_type_ii_f(term):
    r = run_one("compare y by a and b seed 1", {"t": UNBALANCED})
    row = r.terms[0 if term == "first" else 1]
    assert row.outcome.method == "exact"
    assert row.outcome.p_value == pytest.approx(float(brute_main_p(UNBALANCED, term, False)),
                                                rel=1e-12)
    # the reference set is prod_j n_j! / prod_i n_ij!, each distinct arrangement once
    y, a, b = _codes(UNBALANCED)
    strata, moved = (b, a) if term == "first" else (a, b)
    size = prod(factorial(int((strata == s).sum())) // prod(
        factorial(int(((strata == s) & (moved == m)).sum())) for m in np.unique(moved))
        for s in np.unique(strata))
    assert row.outcome.arrangements == size


def test_monte_carlo_main_effect_agrees_with_the_listing():
    lay = fx.layout(*_codes(BALANCED))
    exact = restricted.run(lay, "first", "listing")
    sampled = restricted.run(lay, "first", "monte-carlo", 20_000, 9)
    lo, hi = sampled.p_interval
    assert lo <= exact.p_value <= hi
    again = restricted.run(lay, "first", "monte-carlo", 20_000, 9)
    assert again.p_value == sampled.p_value           # same seed, same draws


def test_interaction_by_residual_permutation_matches_its_listed_reference_set():
    """The Freedman-Lane reference set of a 2 x 2 layout with two rows a cell, listed whole:
    every way to share the additive model's residuals among the cells."""
    frame = BALANCED[BALANCED["a"] != "r"].reset_index(drop=True)
    y, a, b = _codes(frame)
    lay = fx.layout(y, a, b)
    fitted = _additive_fit(y, a, b)
    e = y - fitted
    f_obs = lstsq_f(y, a, b, "interaction")
    cells = a * 2 + b
    rearranged = np.array(list(within_strata(e, np.zeros(len(e), int), cells)))
    values = balanced_f_many(fitted + rearranged, a, b, "interaction")
    assert len(values) == factorial(8) // 2 ** 4
    listed = tail_share(list(values), f_obs, "higher")
    out = residual.run(lay, 40_000, 4)
    assert out.statistic == pytest.approx(f_obs, rel=1e-10)
    lo, hi = out.p_interval
    assert lo <= float(listed) <= hi
    assert out.method == "monte-carlo" and "approximate" in out.warnings[0]
    assert out.arrangements == factorial(8) // 2 ** 4


def _additive_fit(y, a, b):
    X = np.column_stack([np.ones(len(y))] + [(a == i).astype(float) for i in range(1, a.max() + 1)]
                        + [(b == j).astype(float) for j in range(1, b.max() + 1)])
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    return X @ coef


# ---------------------------------------------------------------- normal theory

@pytest.mark.parametrize("frame", [BALANCED, UNBALANCED], ids=["balanced", "unbalanced"])
def test_two_way_f_equals_statsmodels_type_ii(frame):
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    table = anova_lm(smf.ols("y ~ C(a) * C(b)", frame).fit(), typ=2)
    r = run_one("compare y by a and b seed 2", {"t": frame})
    for row, name in zip(r.terms, ["C(a)", "C(b)", "C(a):C(b)"]):
        assert row.normal.statistic == pytest.approx(table.loc[name, "F"], rel=1e-9)
        assert row.normal.p_value == pytest.approx(table.loc[name, "PR(>F)"], rel=1e-9)
        assert row.outcome.statistic == pytest.approx(table.loc[name, "F"], rel=1e-9)
        assert row.df == (int(table.loc[name, "df"]), int(table.loc["Residual", "df"]))


# ---------------------------------------------------------------- the statement

def test_exact_and_sampled_options_reach_every_term():
    r = run_one("compare y by a and b sampled 2000 seed 5", {"t": BALANCED})
    assert [t.outcome.method for t in r.terms] == ["monte-carlo"] * 3
    assert {t.outcome.draws for t in r.terms} == {2000} and r.seed == 5
    r = run_one("compare y by a and b exact seed 5", {"t": BALANCED})
    assert [t.outcome.method for t in r.terms] == ["exact", "exact", "monte-carlo"]
    assert any("'exact' applies to the main effects" in w for w in r.terms[2].outcome.warnings)


def test_explain_lists_each_terms_candidates():
    note = run_one("explain compare y by a and b", {"t": BALANCED})
    text = str(note)
    assert "a × b:" in text and "complete listing of the arrangements within strata" in text
    assert "residual permutation is approximate" in text


@pytest.mark.parametrize("text, message", [
    ("compare y by a and a", "'a' is named twice"),
    ("compare y by a and b alternative higher", "no direction"),
    ('compare y by a and b picture "x.png"', "three tests"),
    ("compare y, y by a and b", "one response"),
    ("compare y by a and c", "no column 'c'"),
    ("compare y by a and b using ranks", "'ranks' is not a test family for two crossed factors"),
    ('compare y by a and b levels "p", "q"', "'levels' does not apply to two crossed factors"),
])
def test_binder_messages(text, message):
    assert message in failure_of(text, {"t": BALANCED}).message


def test_an_empty_cell_and_one_row_a_cell_are_named():
    gap = BALANCED[~((BALANCED["a"] == "q") & (BALANCED["b"] == "v"))]
    f = failure_of("compare y by a and b", {"t": gap})
    assert f.message == "no row has a 'q' with b 'v'"
    single = BALANCED.drop_duplicates(["a", "b"])
    f = failure_of("compare y by a and b", {"t": single})
    assert "one row" in f.message and "within b" in f.hint


def test_the_plan_is_one_per_term_and_shares_one_seed():
    out = permq.run("compare y by a and b", tables={"t": BALANCED})[0]
    assert isinstance(out, permq.FactorialResult)
    seeds = {t.outcome.seed for t in out.terms if t.outcome.method != "exact"}
    assert seeds == {out.seed}
    again = permq.run(f"compare y by a and b seed {out.seed}", tables={"t": BALANCED})[0]
    assert [t.outcome.p_value for t in again.terms] == [t.outcome.p_value for t in out.terms]


def test_every_renderer_takes_the_result():
    from permq.render import csvout, jsonout, markdown, sentences

    out = permq.run("compare y by a and b seed 3", tables={"t": UNBALANCED})
    r = out[0]
    text = str(r)
    assert "a × b" in text and "p (F test)" in text and "type II" in text
    assert "unbalanced" in text
    d = jsonout.records(out)[0]
    assert d["family"] == "two factors" and [t["term"] for t in d["terms"]] == ["a", "b", "a × b"]
    assert d["cells"]["n"] == [[3, 2], [2, 4]]
    rows = csvout.render(out).splitlines()
    assert len(rows) == 4 and rows[1].startswith("compare y by a and b")
    assert "| a × b |" in markdown.render(out)
    assert "a F(1, 7) =" in sentences.sentence(d)
    assert "<table>" in r._repr_html_()
    frame = permq.run("compare y by a and b seed 3", tables={"t": UNBALANCED}).to_frame()
    assert list(frame["term.term"]) == ["a", "b", "a × b"] and frame["p_value"].notna().all()
