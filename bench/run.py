"""Speed targets beside scipy on the same data, in one process. Not part of the test run.

    python bench/run.py            # print the table
    python bench/run.py --process  # also each statement in a fresh process, and the
                                   # start-up, first-call and steady figures (bench/process.py)
    python bench/run.py --readme   # also write it into README.md's performance section
    python bench/run.py --startup  # only the whole-process start-up and Monte Carlo figures

Data are generated with fixed seeds (benchmark inputs, not checks). Each case is timed through
the same pipeline users run (`permq.run` on inline data), best of a few repeats.
"""
from __future__ import annotations

import argparse
import re
import sys
import time
from pathlib import Path

import numpy as np
from scipy import stats

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "bench"))

import permq  # noqa: E402

import process  # noqa: E402  (bench/process.py)

# statement and tables of each result the benchmark got, for its whole-process column
_RAN: dict = {}
_run_in_process = permq.run


def _recorded_run(text, tables=None, **kw):
    out = _run_in_process(text, tables=tables, **kw)
    if out and not kw.get("cluster"):
        _RAN[id(out[0])] = (out[0], text, tables)
    return out


permq.run = _recorded_run


def lst(a) -> str:
    return "[" + ", ".join(f"{v:g}" for v in a) + "]"


def best(fn, repeat=3):
    times = []
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return min(times), out


def permq_case(statement, repeat=3):
    t, out = best(lambda: permq.run(statement), max(2, repeat))   # the first run warms caches
    r = out[0]
    if not hasattr(r, "outcome"):
        raise SystemExit(f"benchmark statement failed: {statement[:80]}...: {r.message}")
    return t, r


def cases(only: str = ""):
    rng = np.random.default_rng(20261202)
    if only:
        groups = {"power": power_cases}
        if only not in groups:
            raise SystemExit(f"--only takes one of: {', '.join(groups)}")
        return groups[only]()
    rows = []

    # difference in means, 15 + 15 recorded to 2 decimals (C(30,15) = 1.55e8 arrangements)
    x = np.round(rng.normal(20, 3, 15), 2)
    y = np.round(rng.normal(21, 3, 15), 2)
    t, r = permq_case(f"compare {lst(x)} vs {lst(y)} exact")
    ts, _ = best(lambda: stats.permutation_test((x, y), lambda a, b, axis: a.mean(axis) - b.mean(axis),
                                                vectorized=True, n_resamples=100_000,
                                                random_state=1), 1)
    rows.append(("difference in means, 15 + 15, 2 decimals, exact", t, 1.0, r,
                 f"scipy permutation_test needs sampling here (100,000 draws: {ts:.2f} s)"))

    # rank-sum with heavy ties, 50 + 50
    x = rng.integers(1, 6, 50).astype(float)
    y = rng.integers(1, 7, 50).astype(float)
    t, r = permq_case(f"compare {lst(x)} vs {lst(y)} using ranks exact")
    ts, _ = best(lambda: stats.mannwhitneyu(x, y, method="asymptotic"), 3)
    rows.append(("rank-sum, heavy ties, 50 + 50, exact", t, 0.5, r,
                 f"scipy has no exact method with ties (asymptotic: {ts * 1e3:.1f} ms)"))

    # signed-rank with ties and zeros, n = 60
    d = rng.integers(-4, 7, 60).astype(float)
    t, r = permq_case(f"compare {lst(d)} vs 0 using ranks exact")
    ts, _ = best(lambda: stats.wilcoxon(d, zero_method="pratt", method="approx"), 3)
    rows.append(("signed-rank, ties and zeros, n = 60, exact", t, 0.5, r,
                 f"scipy has no exact method with ties or zeros (approx: {ts * 1e3:.1f} ms)"))

    # sign-flip of the mean, n = 30, 2 decimals (2^30 = 1.07e9 arrangements)
    d = np.round(rng.normal(0.3, 1.0, 30), 2)
    t, r = permq_case(f"compare {lst(d)} vs 0 exact")
    rows.append(("sign-flip of the mean, n = 30, 2 decimals, exact", t, 1.0, r,
                 "scipy permutation_test would list 2^30 sign patterns"))

    # Monte Carlo, 100,000 draws, 100 + 100
    x = np.round(rng.normal(20, 3, 100), 2)
    y = np.round(rng.normal(21, 3, 100), 2)
    t, r = permq_case(f"compare {lst(x)} vs {lst(y)} sampled 100000 seed 1")
    ts, _ = best(lambda: stats.permutation_test((x, y), lambda a, b, axis: a.mean(axis) - b.mean(axis),
                                                vectorized=True, n_resamples=100_000,
                                                random_state=1), 1)
    rows.append(("Monte Carlo, 100,000 draws, 100 + 100", t, 1.0, r,
                 f"scipy permutation_test: {ts:.2f} s (permq {ts / t:.1f}x faster)"))
    rows.extend(previous_cases())
    rows.extend(group_cases(rng))
    rows.extend(factor_cases(rng))
    rows.extend(unit_cases(rng))
    rows.extend(association_cases(rng))
    rows.extend(counts_cases(rng))
    rows.extend(robustness_cases(rng))
    rows.extend(power_cases())
    rows.extend(many_cases())
    rows.extend(control_cases())
    return rows


def _timed_with(patches, fn, repeat):
    """fn() timed with module attributes replaced (restored afterwards)."""
    saved = [(mod, name, getattr(mod, name)) for mod, name, _ in patches]
    try:
        for mod, name, value in patches:
            setattr(mod, name, value)
        return best(fn, repeat)
    finally:
        for mod, name, value in saved:
            setattr(mod, name, value)


def previous_cases():
    """Three exact counts beside their former versions, timed in this run on the same data:
    the former Hodges-Lehmann law and Kendall count are copies in bench/previous.py; the former
    Kruskal-Wallis count (state lists merged by sorting) is still the product's for four or
    more groups, and is had here by leaving out the three-group tables."""
    import pandas as pd

    import previous
    from permq.engine import rankintervals
    from permq.engine.ksample import dense as ksample_dense
    from permq.engine.association import inversions

    rng = np.random.default_rng(20261204)
    rows = []
    x = np.round(rng.normal(10, 2, 150), 2)
    y = np.round(rng.normal(10.5, 2, 150), 2)
    st = f"compare {lst(x)} vs {lst(y)} using ranks"
    t, r = permq_case(st, 2)
    old, _ = _timed_with([(rankintervals, "mann_whitney_cdf", previous.mann_whitney_cdf)],
                         lambda: permq.run(st), 1)
    rows.append(("rank-sum with its Hodges-Lehmann interval, 150 + 150", t, 1.0, r,
                 f"previous: {old:.2f} s in this run ({old / t:.1f}x), the interval's law from "
                 "the full table of subset counts (bench/previous.py)"))
    x = rng.normal(size=1000)
    df = pd.DataFrame({"x": x, "y": 0.05 * x + rng.normal(size=1000)})
    st = "relate y to x using kendall exact"
    t, out = best(lambda: permq.run(st, tables={"d": df}), 2)
    old, _ = _timed_with([(inversions, "run", previous.inversions_run)],
                         lambda: permq.run(st, tables={"d": df}), 1)
    ts, _ = best(lambda: stats.kendalltau(df.x, df.y, method="exact"), 1)
    rows.append(("Kendall's tau exact, n = 1,000, no ties", t, 5.0, out[0],
                 f"previous: {old:.1f} s in this run ({old / t:.0f}x), Python integers over "
                 f"the whole half law (bench/previous.py); scipy kendalltau exact: {ts:.2f} s"))
    g = [rng.normal(size=15) for _ in range(3)]
    st = groups_statement(g, "using ranks exact")
    t, r = permq_case(st, 2)
    old, out = _timed_with([(ksample_dense, "applies", lambda sizes: False)],
                           lambda: permq.run(st), 1)
    same = abs(out[0].outcome.p_value - r.outcome.p_value) <= 1e-12
    rows.append(("Kruskal-Wallis, 3 groups of 15, exact", t, 1.0, r,
                 f"previous: {old:.2f} s in this run ({old / t:.1f}x), state lists merged by "
                 f"sorting; {'the same' if same else 'a DIFFERENT'} p-value"))
    return rows


def groups_statement(values_by_group, options=""):
    return "compare " + " vs ".join(lst(v) for v in values_by_group) + " " + options


def group_cases(rng):
    rows = []
    # Kruskal-Wallis, 3 groups of 8 with ties
    g = [rng.integers(1, 9, 8).astype(float) for _ in range(3)]
    t, r = permq_case(groups_statement(g, "using ranks exact"), 1)
    ts, _ = best(lambda: stats.kruskal(*g), 3)
    rows.append(("Kruskal-Wallis, 3 groups of 8, ties, exact", t, 3.0, r,
                 f"scipy kruskal is chi-square only ({ts * 1e3:.1f} ms)"))
    # Jonckheere-Terpstra, 4 groups of 6 with ties
    g = [rng.integers(1, 8, 6).astype(float) + i for i in range(4)]
    t, r = permq_case(groups_statement(g, "ordered using ranks exact"), 1)
    rows.append(("Jonckheere-Terpstra, 4 groups of 6, ties, exact", t, 1.0, r,
                 "scipy has no Jonckheere-Terpstra test"))
    # Friedman, 6 blocks of 4 treatments
    y = np.round(rng.normal(10, 2, (6, 4)) + np.arange(4) * 0.5, 1)
    frame = {"y": y.ravel(), "trt": np.tile(["a", "b", "c", "d"], 6), "blk": np.repeat(np.arange(6), 4)}
    import pandas as pd
    df = pd.DataFrame(frame)
    t, out = best(lambda: permq.run("compare y by trt within blk using ranks exact",
                                    tables={"d": df}), 3)
    ts, _ = best(lambda: stats.friedmanchisquare(*y.T), 3)
    rows.append(("Friedman, 6 blocks x 4 treatments, exact", t, 1.0, out[0],
                 f"scipy friedmanchisquare is chi-square only ({ts * 1e3:.1f} ms)"))
    # Monte Carlo permutation F, 100,000 draws, 4 groups of 50
    g = [np.round(rng.normal(10 + 0.2 * i, 2, 50), 2) for i in range(4)]
    t, r = permq_case(groups_statement(g, "sampled 100000 seed 1"), 1)
    f = lambda *a, axis=-1: stats.f_oneway(*a, axis=axis).statistic
    ts, _ = best(lambda: stats.permutation_test(g, f, n_resamples=20_000, vectorized=True,
                                                random_state=1), 1)
    rows.append(("Monte Carlo permutation F, 100,000 draws, 4 groups of 50", t, 2.0, r,
                 f"scipy permutation_test: {ts * 5:.1f} s per 100,000 (timed on 20,000)"))
    return rows


class _Terms:
    """A two-factor result as a row of the table: each term's reference set in words."""

    def __init__(self, result):
        self.extra = {}
        self.reference = "; ".join(
            f"{t.term}: " + (f"{t.outcome.arrangements:.3g} arrangements listed"
                             if t.outcome.method == "exact" else f"{t.outcome.draws:,} draws")
            for t in result.terms)


def factor_cases(rng):
    import pandas as pd

    rows = []
    # two crossed factors, 3 varieties x 2 fertilisers x 4 plots
    a, b = np.repeat(["p", "q", "r"], 8), np.tile(np.repeat(["u", "v"], 4), 3)
    y = np.round(rng.normal(40, 2, 24) + (a == "r") * 1.5 + (b == "v") * 2.0, 1)
    frame = pd.DataFrame({"y": y, "a": a, "b": b})
    statement = "compare y by a and b seed 1"
    t, out = best(lambda: permq.run(statement, tables={"d": frame}), 3)
    row = _Terms(out[0])
    _RAN[id(row)] = (row, statement, {"d": frame})
    rows.append(("two factors, 3 x 2 x 4 plots (main effects, interaction)", t, 2.0, row,
                 "statsmodels anova_lm gives the F tests only"))
    # two groups adjusted for a baseline, 12 + 12: exact, with the inverted interval
    z = np.round(rng.normal(12, 2, 24), 1)
    g = np.repeat(["c", "t"], 12)
    y = np.round(40 + 0.9 * z + (g == "t") * 1.5 + rng.normal(0, 1, 24), 1)
    frame = pd.DataFrame({"y": y, "g": g, "z": z})
    statement = "compare y by g adjusting for z"
    t, out = best(lambda: permq.run(statement, tables={"d": frame}), 3)
    _RAN[id(out[0])] = (out[0], statement, {"d": frame})
    rows.append(("two groups adjusted for a baseline, 12 + 12, exact with its interval", t, 2.0,
                 out[0], "no counterpart (statsmodels: the ANCOVA t only)"))
    return rows


def unit_cases(rng):
    import pandas as pd

    rows = []
    # 3 doses x 5 litters x 4 pups: whole litters moved, exact
    litter = np.repeat([f"L{i:02d}" for i in range(15)], 4)
    dose = np.repeat(np.tile(["0", "10", "20"], 5), 4)
    y = np.round(6 + np.repeat(rng.normal(0, 0.3, 15), 4) + rng.normal(0, 0.3, 60)
                 - (dose == "20") * 0.3, 2)
    frame = pd.DataFrame({"w": y, "dose": dose, "litter": litter})
    statement = "compare w by dose units litter exact"
    t, out = best(lambda: permq.run(statement, tables={"d": frame}), 3)
    _RAN[id(out[0])] = (out[0], statement, {"d": frame})
    rows.append(("3 doses x 5 litters x 4 pups, whole litters moved, exact", t, 2.0, out[0],
                 "no counterpart (statsmodels: the nested ANOVA F only)"))
    # 6 blocks x 4 levels, two plots missing: within-block permutation, exact
    block, level = np.repeat(np.arange(6), 4), np.tile(["a", "b", "c", "d"], 6)
    y = np.round(rng.normal(10, 1, 24) + block * 0.3 + (level == "c") * 0.8, 1)
    keep = np.ones(24, bool)
    keep[[5, 18]] = False
    frame = pd.DataFrame({"y": y[keep], "trt": level[keep], "blk": block[keep]})
    for word, name in (("means", "F within blocks"), ("ranks", "Skillings-Mack")):
        statement = f"compare y by trt within blk using {word} exact"
        t, out = best(lambda: permq.run(statement, tables={"d": frame}), 3)
        _RAN[id(out[0])] = (out[0], statement, {"d": frame})
        rows.append((f"{name}, 6 blocks x 4 levels, 2 plots missing, exact", t, 2.0, out[0],
                     "scipy and statsmodels have no within-block permutation for incomplete "
                     "blocks"))
    return rows


def association_cases(rng):
    rows = []
    tables = {"3 x 4, n = 60": rng.multinomial(60, np.full(12, 1 / 12)).reshape(3, 4),
              "2 x 6, n = 120": rng.multinomial(120, np.full(12, 1 / 12)).reshape(2, 6),
              "4 x 4, n = 50": rng.multinomial(50, np.full(16, 1 / 16)).reshape(4, 4)}
    targets = {"3 x 4, n = 60": 1.0, "2 x 6, n = 120": 1.0, "4 x 4, n = 50": 5.0}
    for name, tab in tables.items():
        text = "count [" + ", ".join(lst(row) for row in tab) + "] exact"
        t, r = permq_case(text, 1)
        note = "scipy has no exact r x c method"
        try:
            ts, _ = best(lambda: stats.fisher_exact(tab, method=stats.PermutationMethod(
                n_resamples=10_000, random_state=1)), 1)
            note = f"scipy fisher_exact by 10,000 permutations: {ts:.2f} s (not exact)"
        except Exception:  # noqa: BLE001 - older scipy: only 2 x 2
            pass
        rows.append((f"Fisher exact r x c, {name}", t, targets[name], r, note))
    rows.extend(large_count_cases())
    x = rng.normal(size=50)
    y = 0.3 * x + rng.normal(size=50)
    st = "relate y to x using kendall exact"
    import pandas as pd
    df = pd.DataFrame({"x": x, "y": y})
    t, out = best(lambda: permq.run(st, tables={"d": df}), 3)
    ts, _ = best(lambda: stats.kendalltau(x, y, method="exact"), 3)
    rows.append(("Kendall's tau exact, n = 50, no ties", t, 0.2, out[0],
                 f"scipy kendalltau exact: {ts * 1e3:.1f} ms"))
    x = rng.normal(size=1000)
    y = 0.05 * x + rng.normal(size=1000)
    df = pd.DataFrame({"x": x, "y": y})
    t, out = best(lambda: permq.run("relate y to x sampled 100000 seed 1", tables={"d": df}), 2)
    ts, _ = best(lambda: stats.permutation_test((y,), lambda a, axis=-1: (
        (a - a.mean(axis=axis, keepdims=True)) * (x - x.mean())).sum(axis=axis),
        permutation_type="pairings", n_resamples=10_000, vectorized=True, random_state=1), 1)
    rows.append(("Pearson Monte Carlo, 100,000 draws, n = 1,000", t, 2.0, out[0],
                 f"scipy permutation_test: {ts * 10:.1f} s per 100,000 (timed on 10,000)"))
    return rows


def large_count_cases():
    """Tables with large counts but few tables, and ordinal data through the table network.
    Before the network counted only the states that occur, the first two were refused exact
    ("state space ... too large"); the ordinal design went by dynamic programming over tie
    blocks (the planner's estimate for it is given beside)."""
    from permq.engine import ordered
    from permq.engine.tables import ranked

    rows = []
    # A. Agresti (2007), An Introduction to Categorical Data Analysis, 2nd ed.: party
    # identification by gender, n = 2,757 (Table 2.5); infant malformation by alcohol, n = 32,574
    # (Table 2.6, from Graubard and Korn 1987)
    party = "count [[762, 327, 468], [484, 239, 477]] exact"
    t, r = permq_case(party, 1)
    rows.append(("Fisher exact 2 x 3, n = 2,757 (published)", t, 1.0, r,
                 "before: exact refused (1.87e+06 row-margin states); scipy has no exact r x c"))
    trend = "count [[17066, 48], [14464, 38], [788, 5], [126, 1], [37, 1]] ordered exact"
    t, r = permq_case(trend, 1)
    rows.append(("trend 5 x 2, n = 32,574 (published)", t, 1.0, r,
                 "before: exact refused (state space too large)"))
    rng = np.random.default_rng(5)          # four groups of 25 graded 1-4 (our own data)
    groups = [rng.integers(1, 5, 25) for _ in range(4)]
    t, r = permq_case(groups_statement(groups, "ordered using ranks exact"), 1)
    v = np.concatenate(groups).astype(float)
    g = np.repeat(np.arange(4), 25)
    dp = next(c for c in ordered.JONCKHEERE_TERPSTRA.candidates(v, g, 1000)
              if c.algorithm != ranked.TABLE and c.exact)
    rows.append(("Jonckheere-Terpstra, ordinal 4 x 4, n = 100, exact", t, 1.0, r,
                 f"before: {dp.description}, planner's estimate {dp.seconds:.0f} s"))
    rows.extend(kruskal_table_cases(groups))
    return rows


def kruskal_table_cases(groups):
    """Kruskal-Wallis on few categories through the groups x categories table (tables/halves)
    beside the route it replaced: four groups were refused exact (no counting route fits),
    three went by dense tables of score sums, timed here in the same run."""
    from permq.engine import ksample
    from permq.engine.tables import halves

    rows = []
    v = np.concatenate(groups).astype(float)
    g = np.repeat(np.arange(len(groups)), [len(a) for a in groups])
    t, r = permq_case(groups_statement(groups, "using ranks exact"), 1)
    before = [c for c in ksample.RANKS.candidates(v, g, 1000)
              if c.exact and c.algorithm != halves.HALVES]
    cheapest = min(before, key=lambda c: c.seconds if c.feasible else float("inf"))
    rows.append(("Kruskal-Wallis, ordinal 4 x 4, n = 100, exact", t, 1.0, r,
                 f"before: exact refused (cheapest: {cheapest.description}, "
                 f"{cheapest.seconds / 86400:.3g} days)"))
    rng = np.random.default_rng(9)          # three groups of 20 graded 1-4 (our own data)
    three = [rng.integers(1, 5, 20) for _ in range(3)]
    t, r = permq_case(groups_statement(three, "using ranks exact"), 1)
    v = np.concatenate(three).astype(float)
    g = np.repeat(np.arange(3), 20)
    tp, old = best(lambda: ksample.RANKS.run(v, g, "two-sided", "dp-dense"), 1)
    same = abs(old.p_value - r.outcome.p_value)
    rows.append(("Kruskal-Wallis, ordinal 3 x 4, n = 60, exact", t, 1.0, r,
                 f"before: dense tables of score sums {tp:.2f} s ({tp / t:.0f}x), "
                 f"same p to {same:.0e}"))
    return rows


def counts_cases(rng):
    """Two proportions (the test and both exact unconditional intervals), stratified tables,
    the stratified trend, two rates and a binary dose response, each exact end to end."""
    import pandas as pd

    rows = []
    for x1, n1, x2, n2, word, target in ((3, 20, 9, 21, "boschloo", 2.0),
                                         (18, 60, 31, 60, "barnard", 5.0)):
        t, r = permq_case(f"count {x1} of {n1} vs {x2} of {n2} using {word}", 1)
        table = [[x1, x2], [n1 - x1, n2 - x2]]
        ref = stats.boschloo_exact if word == "boschloo" else stats.barnard_exact
        ts, _ = best(lambda: ref(table), 1)
        rows.append((f"two proportions {n1} + {n2}, {word}, with both exact intervals", t, target,
                     r, f"scipy {ref.__name__}: {ts:.2f} s for the test alone (no interval)"))
    strata, doses = 12, (0, 1, 2, 4)
    frame = pd.DataFrame({"s": np.repeat(np.arange(strata), 20),
                          "g": np.tile(np.repeat(["a", "b"], 10), strata)})
    frame["y"] = (rng.random(len(frame)) < np.where(frame["g"] == "a", 0.5, 0.3)).astype(int)
    t, out = best(lambda: permq.run("count y by g within s exact", tables={"d": frame}), 2)
    rows.append(("2 x 2 x 12 strata, n = 240, common odds ratio, exact (Zelen beside)", t, 1.0,
                 out[0], "statsmodels StratifiedTable: Mantel-Haenszel and Breslow-Day only"))
    frame = pd.DataFrame({"s": np.repeat(np.arange(6), 40),
                          "d": np.tile(np.repeat(doses, 10), 6)})
    frame["y"] = (rng.random(len(frame)) < 0.2 + 0.08 * frame["d"]).astype(int)
    t, out = best(lambda: permq.run("count y by d within s ordered exact",
                                    tables={"d": frame}), 2)
    rows.append(("2 x 4 x 6 stratified trend, n = 240, exact, common slope", t, 1.0, out[0],
                 "no exact stratified trend test in scipy or statsmodels"))
    t, r = permq_case("count 40 events in 1210.5 vs 25 events in 1398", 3)
    ts, _ = best(lambda: stats.binomtest(40, 65, 1210.5 / (1210.5 + 1398)), 3)
    rows.append(("two rates, 40 and 25 events, exact conditional", t, 0.1, r,
                 f"scipy binomtest on the same law: {ts * 1e3:.1f} ms (no ratio interval)"))
    x = np.repeat(np.arange(8) * 0.5, 25)
    y = (rng.random(x.size) < 1 / (1 + np.exp(-(x - 2.0)))).astype(int)
    frame = pd.DataFrame({"x": x, "y": y})
    t, out = best(lambda: permq.run("relate y to x exact", tables={"d": frame}), 2)
    rows.append(("binary dose response, n = 200, 8 doses, exact logistic slope", t, 2.0, out[0],
                 "statsmodels Logit is asymptotic; no exact conditional fit"))
    rows.append(events_case(rng))
    rows.extend(events_layout_cases(rng))
    return rows


def events_case(rng):
    """Censored times, 30 + 30 (about a quarter censored): Gehan's test exact by counting."""
    import pandas as pd
    from statsmodels.duration.survfunc import survdiff

    days = np.ceil(np.concatenate([rng.exponential(60, 30), rng.exponential(90, 30)]))
    cut = np.ceil(rng.uniform(40, 200, 60))
    frame = pd.DataFrame({"t": np.minimum(days, cut), "e": (days <= cut).astype(int),
                          "g": np.repeat(["a", "b"], 30)})
    t, out = best(lambda: permq.run("compare t by g event e using gehan exact",
                                    tables={"d": frame}), 3)
    ts, _ = best(lambda: survdiff(frame.t.to_numpy(), frame.e.to_numpy(), frame.g.to_numpy(),
                                  weight_type="gb"), 3)
    return ("censored times 30 + 30, Gehan, exact by counting", t, 1.0, out[0],
            f"statsmodels survdiff (asymptotic chi-square only): {ts * 1e3:.1f} ms")


def events_layout_cases(rng):
    """Censored times within 4 strata (4 + 4 each) and in 3 groups (8 each): Gehan's tests
    exact by counting (stratified: per-stratum counts convolved; k-sample: group score sums)."""
    import pandas as pd
    from statsmodels.duration.survfunc import survdiff

    days = np.ceil(rng.exponential(70, 32))
    cut = np.ceil(rng.uniform(40, 200, 32))
    frame = pd.DataFrame({"t": np.minimum(days, cut), "e": (days <= cut).astype(int),
                          "g": np.tile(np.repeat(["a", "b"], 4), 4),
                          "s": np.repeat(["s1", "s2", "s3", "s4"], 8)})
    t, out = best(lambda: permq.run("compare t by g event e within s using gehan exact",
                                    tables={"d": frame}), 3)
    ts, _ = best(lambda: survdiff(frame.t.to_numpy(), frame.e.to_numpy(), frame.g.to_numpy(),
                                  weight_type="gb", strata=frame.s.to_numpy()), 3)
    rows = [("censored times within 4 strata, 4 + 4 each, Gehan, exact", t, 1.0, out[0],
             f"statsmodels survdiff with strata (asymptotic only): {ts * 1e3:.1f} ms")]
    days = np.ceil(rng.exponential(70, 24))
    cut = np.ceil(rng.uniform(40, 200, 24))
    frame = pd.DataFrame({"t": np.minimum(days, cut), "e": (days <= cut).astype(int),
                          "g": np.repeat(["a", "b", "c"], 8)})
    t, out = best(lambda: permq.run("compare t by g event e using gehan exact",
                                    tables={"d": frame}), 3)
    ts, _ = best(lambda: survdiff(frame.t.to_numpy(), frame.e.to_numpy(), frame.g.to_numpy(),
                                  weight_type="gb"), 3)
    rows.append(("censored times in 3 groups of 8, Gehan, exact", t, 2.0, out[0],
                 f"statsmodels survdiff, 3 groups (asymptotic only): {ts * 1e3:.1f} ms"))
    return rows


def _robustness_row(label, text, tables=None):
    cpu = time.process_time()
    t, rr = best(lambda: permq.run(text, tables=tables)[0], 1)
    cpu = time.process_time() - cpu
    if not hasattr(rr, "observed"):
        raise SystemExit(f"benchmark statement failed: {text[:60]} ...: {rr.message}")
    return (label, t, 30.0, rr.observed,
            f"no counterpart; simulated test {rr.reference.split(';')[0].split(' (')[0]}; "
            f"{cpu:.1f} s of CPU")


def robustness_cases(rng):
    """Designs under the whole panel, 2,000 data sets a law (null and shift): the 2 x 8 target
    of the robustness issue, and one design of each other kind."""
    import pandas as pd

    x = np.round(rng.normal(10, 1, 8), 2)
    y = np.round(rng.normal(11, 1, 8), 2)
    blocks = pd.DataFrame({"y": np.round(rng.normal(0, 1, 24), 2),
                           "g": np.tile(["a", "b", "c"], 8), "b": np.repeat(np.arange(8), 3)})
    pairs = pd.DataFrame({"y": np.round(rng.normal(0, 1, 16), 2), "x": np.arange(16.0),
                          "z": np.round(rng.normal(0, 1, 16), 2)})
    tables = {"blocks": blocks, "pairs": pairs}
    cases = [
        ("robustness, 2 x 8, 6 laws x 2,000 data sets",
         f"robustness compare {lst(x)} vs {lst(y)} datasets 2000 seed 3"),
        ("robustness, Friedman 8 blocks x 3, 6 laws x 2,000",
         "robustness compare y by g within b in blocks seed 3"),
        ("robustness, Kendall n = 16, 6 laws x 2,000",
         "robustness relate y to x using kendall in pairs seed 3"),
        ("robustness, adjusted slope n = 16, 6 laws x 2,000",
         "robustness relate y to x using slope adjusting for z in pairs seed 3"),
        ("robustness, 2 x 2 table n = 20, 5 schemes x 2,000",
         "robustness count [[7, 3], [2, 8]] seed 3"),
        ("robustness, 3 x 4 table n = 60, 5 schemes x 2,000",
         "robustness count [[6, 5, 3, 2], [4, 5, 6, 5], [2, 4, 6, 7]] seed 3"),
    ]
    return [_robustness_row(label, text, tables) for label, text in cases]


def power_cases():
    """Sample-size searches (target: under 10 s) beside their closed forms; the statements,
    closed forms and the seeded words of each row are bench/power_cases.py's, which
    tests/test_bench_power_rows.py holds README's rows to."""
    from types import SimpleNamespace

    import power_cases as pc

    out = []
    for label, text, key in pc.CASES:
        explained = permq.run("explain " + text)[0]
        cpu = time.process_time()
        t, pr = best(lambda: permq.run(text)[0], 1)
        cpu = time.process_time() - cpu
        if not hasattr(pr, "needed"):
            raise SystemExit(f"benchmark statement failed: {text}: {pr.message}")
        row = SimpleNamespace(reference=pc.reference_words(pr),
                              extra={"estimated_seconds": explained.data["estimated_seconds"]})
        _RAN[id(row)] = (row, text, None)
        out.append((label, t, 10.0, row, f"{pc.result_words(pr, key)}; {cpu:.1f} s of CPU"))
    return out


def _many_frame(rng, m, n):
    g = np.repeat(["A", "B"], n)
    values = rng.normal(size=(2 * n, m))
    values[:, : m // 20] += 1.0 * (g == "A")[:, None]
    import pandas as pd

    frame = pd.DataFrame(values, columns=[f"v{j}" for j in range(m)])
    frame.insert(0, "g", g)
    return {"t": frame}


def _many_row(r):
    """The table's reference-set column from a several-tests result."""
    from types import SimpleNamespace

    return SimpleNamespace(outcome=SimpleNamespace(method=r.method, arrangements=r.arrangements,
                                                   algorithm=r.algorithm, draws=r.draws))


def many_cases(repeat=3):
    """Several responses at once: exact max-T on 2,000 responses; 20,000 responses x 10,000
    joint draws on 1 and 2 local workers and on a 2-worker local Dask cluster (same numbers)."""
    from permq.engine.many import joint as many
    from permq.engine.many.workers import LocalPool

    rng = np.random.default_rng(20261203)
    rows = []
    tables = _many_frame(rng, 2000, 6)
    st = "compare every numeric by g"
    permq.run(st, tables=tables)                                   # warm the compiled loops
    t, out = best(lambda: permq.run(st, tables=tables), repeat)
    rows.append(("2,000 responses, 6 + 6, exact marginal p and max-T step-down", t, 5.0,
                 _many_row(out[0]), "every response on the same 924 splits"))
    tables = _many_frame(rng, 20000, 20)
    st = "compare every numeric by g sampled 10000 seed 1"
    cells = 20000 * 10001
    timed, engine = {}, {}
    frame = tables["t"]
    values = frame.drop(columns="g").to_numpy(float)
    codes = (frame["g"] == "B").to_numpy().astype(np.int64)
    for workers in (1, 2):
        timed[workers], out = best(lambda: permq.run(st, tables=tables, workers=workers), repeat)
        reference = [(r.p_value, r.p_adjusted) for r in out[0].rows]
        engine[workers], _ = best(lambda: many.run_family(
            values, codes, "means", "two-sided", "max-t", "step-down", "monte-carlo", 10000, 1,
            pool=LocalPool(workers)), repeat)
        rows.append((f"20,000 responses, 20 + 20, 10,000 joint draws, max-T, {workers} "
                     f"worker{'s' if workers > 1 else ''}", timed[workers], 10.0,
                     _many_row(out[0]),
                     f"{cells / engine[workers] / 1e6:.0f} M response-draws/s in the engine "
                     f"({engine[workers]:.2f} s), {cells / timed[workers] / 1e6:.0f} M end to end"
                     + (f"; x{engine[1] / engine[2]:.2f} engine, x{timed[1] / timed[2]:.2f} end "
                        "to end over 1 worker" if workers == 2 else "")))
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        return rows
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                      dashboard_address=None) as cluster, Client(cluster) as client:
        permq.run(st, tables=tables, cluster=client)                # workers load the loops
        t, out = best(lambda: permq.run(st, tables=tables, cluster=client), repeat)
        same = [(r.p_value, r.p_adjusted) for r in out[0].rows] == reference
    rows.append(("the same on a 2-worker local Dask cluster", t, 10.0, _many_row(out[0]),
                 f"{cells / t / 1e6:.0f} M response-draws/s; "
                 f"{'identical' if same else 'DIFFERENT'} numbers"))
    return rows


def _dose_frame(rng, doses, n, decimals=1):
    import pandas as pd

    dose = np.repeat(doses, n)
    shift = np.repeat(np.linspace(0, 1.5, len(doses)), n)
    spread = np.repeat(np.linspace(1, 2.5, len(doses)), n)
    w = np.round(12 + shift + rng.normal(size=len(dose)) * spread, decimals)
    return {"t": pd.DataFrame({"dose": dose, "w": w})}


def control_cases(repeat=3):
    """Doses against a control: the exact step-down for the lowest effective dose, and Monte
    Carlo joint draws for many-to-one max-T."""
    rng = np.random.default_rng(20261204)
    rows = []
    tables = _dose_frame(rng, [0, 5, 10, 20, 40], 6)
    for fam in ("means", "ranks"):
        st = f'compare w by dose ordered against "0" using {fam} exact seed 1'
        permq.run(st, tables=tables)                                 # compile the counting step
        t, out = best(lambda: permq.run(st, tables=tables), repeat)
        rows.append((f"lowest effective dose, control + 4 doses of 6, exact step-down ({fam})",
                     t, 2.0, _many_row(out[0]),
                     f"4 steps, each exact; {out[0].conclusion.split(';')[0]}; scipy has no "
                     "step-down trend test"))
    tables = _dose_frame(rng, [0, 1, 2, 3, 4, 5, 6], 10)
    st = 'compare w by dose against "0" sampled 20000 seed 1'
    permq.run(st, tables=tables)
    t, out = best(lambda: permq.run(st, tables=tables), repeat)
    frame = tables["t"]
    groups = [frame.w[frame.dose == d].to_numpy() for d in range(7)]
    ts, _ = best(lambda: stats.dunnett(*groups[1:], control=groups[0], random_state=1), 3)
    rows.append(("many-to-one, control + 6 doses of 10, 20,000 joint draws, max-T step-down",
                 t, 2.0, _many_row(out[0]),
                 f"scipy dunnett (normal theory only): {ts:.2f} s"))
    st = 'compare w by dose against "0" using ranks sampled 20000 seed 1'
    permq.run(st, tables=tables)
    t, out = best(lambda: permq.run(st, tables=tables), repeat)
    rows.append(("many-to-one rank sums, control + 6 doses of 10, 20,000 joint draws, max-T "
                 "step-down", t, 2.0, _many_row(out[0]),
                 "scipy has no many-to-one rank test"))
    rows.extend(studentized_cases(rng))
    return rows


def studentized_cases(rng):
    """Two groups with unequal spread: the Welch t and the Brunner-Munzel statistic recomputed
    for every split, exact (8 + 9 units, 24,310 splits), beside scipy's permutation_test of the
    same Welch t listing the same splits."""
    x = np.round(rng.normal(10, 1, 8), 1)
    y = np.round(rng.normal(11, 3, 9), 1)

    def welch(a, b, axis):
        return stats.ttest_ind(a, b, axis=axis, equal_var=False).statistic

    ts, _ = best(lambda: stats.permutation_test((x, y), welch, vectorized=True,
                                                n_resamples=np.inf), 1)
    rows = []
    for fam in ("welch", "brunner-munzel"):
        t, r = permq_case(f"compare {lst(x)} vs {lst(y)} using {fam} exact")
        note = (f"scipy permutation_test of the Welch t, every split: {ts:.2f} s "
                f"(permq {ts / t:.1f}x faster)" if fam == "welch" else
                "scipy brunnermunzel has no permutation form")
        rows.append((f"{fam} by permutation, 8 + 9, unequal spread, exact", t, 1.0, r, note))
    return rows


def replace_rows(readme: Path, lines: list) -> None:
    """Write these rows into README's performance table in place of the rows of the same
    design (added at the table's end when new), marked as measured in a later run."""
    body = readme.read_text().splitlines()
    head = next(i for i, line in enumerate(body) if line.startswith("| design | permq |"))
    end = next(i for i in range(head, len(body)) if not body[i].startswith("|"))
    mark = " (measured in a later run than the rows above) |"
    for line in lines:
        line = line if line.endswith(mark) else line[:-2] + mark
        label = line.split(" | ")[0] + " | "
        at = next((i for i in range(head, end) if body[i].startswith(label)), None)
        if at is None:
            body.insert(end, line)
            end += 1
        else:
            body[at] = line
    readme.write_text("\n".join(body) + "\n")


def _count(v) -> str:
    """A reference set's size, 3 significant digits, also past the float range."""
    from permq.plan.sizes import words

    try:
        return f"{float(v):.3g}"
    except OverflowError:
        return words(v)


def table(rows, whole=False, process_times=True) -> str:
    out = ["| design | permq | target | met | explain predicted | reference set | beside scipy |",
           "|---|---|---|---|---|---|---|"]
    if whole:
        out = [out[0].replace("| permq |", "| permq | whole process |"), out[1] + "---|"]
    for name, t, target, r, note in rows:
        o = getattr(r, "outcome", None)
        if o is None and hasattr(r, "rows"):        # several tests on one reference set
            ref = (f"{_count(r.arrangements)} joint arrangements, {r.algorithm}"
                   if r.method == "exact" else f"{r.draws:,} joint draws")
        elif o is None:
            ref = getattr(r, "reference", "")
        else:
            ref = (f"{_count(o.arrangements)} arrangements, {o.algorithm}" if o.method == "exact"
                   else f"{o.draws:,} draws")
        extra = getattr(r, "extra", {}) or {}
        predicted = extra.get("estimated_seconds")
        pred = f"{predicted:.3g} s ({t / predicted:.2g}x)" if predicted else "-"
        cell = ""
        if whole:
            ran = _RAN.get(id(r)) if process_times else None
            cell = (f" {process.whole_process_seconds(ran[1], ran[2]):.3f} s |" if ran
                    else " - |")
        out.append(f"| {name} | {t:.3f} s |{cell} < {target:g} s | {'yes' if t < target else 'NO'} "
                   f"| {pred} | {ref} | {note} |")
    return "\n".join(out)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--readme", action="store_true")
    ap.add_argument("--process", action="store_true",
                    help="also time every statement, and start-up, in fresh processes")
    ap.add_argument("--python", default=sys.executable,
                    help="the interpreter of the whole-process runs (one with permq installed)")
    ap.add_argument("--only", default="",
                    help="run one group of cases (power); with --readme, write only their rows")
    ap.add_argument("--startup", action="store_true",
                    help="only the whole-process start-up, first-call and Monte Carlo figures "
                         "(with --readme: only that table is rewritten)")
    args = ap.parse_args()
    heading = ("Start-up, the first call and the steady state, each process timed from "
               "outside (`bench/run.py --process`; the in-process column above is the best "
               "of a few runs in one warm process, the whole-process one `permq run` on the "
               "statement, its tables loaded from CSV, best of two):\n\n")
    if args.startup:
        text = (heading.replace("):\n\n", "; this table alone measured by `bench/run.py "
                                "--startup`, in a later run than the one above):\n\n")
                + process.table(process.figures(args.python)))
        print(text)
        if args.readme:
            readme = ROOT / "README.md"
            body = readme.read_text()
            readme.write_text(re.sub(r"Start-up, the first call and the steady state, .*?\n(?=\n## )",
                                     lambda m: text + "\n", body, flags=re.S))
        return
    if args.only:
        text = table(cases(args.only), whole=True, process_times=args.process)
        print(text)
        if args.readme:
            replace_rows(ROOT / "README.md", text.splitlines()[2:])
        return
    text = table(cases(), whole=args.process)
    if args.process:
        text += "\n\n" + heading + process.table(process.figures(args.python))
    print(text)
    if args.readme:
        readme = ROOT / "README.md"
        body = readme.read_text()
        new = re.sub(r"(## Performance\n\n.*?\n\n)\|.*?\n(?=\n## )",
                     lambda m: m.group(1) + text + "\n", body, flags=re.S)
        readme.write_text(new)


if __name__ == "__main__":
    main()
