"""Speed targets beside scipy on the same data, in one process. Not part of the test run.

    python bench/run.py            # print the table
    python bench/run.py --readme   # also write it into README.md's performance section

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

import permq  # noqa: E402


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


def cases():
    rng = np.random.default_rng(20261202)
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
    rows.extend(group_cases(rng))
    rows.extend(association_cases(rng))
    rows.extend(robustness_cases(rng))
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
    x = rng.normal(size=50)
    y = 0.3 * x + rng.normal(size=50)
    st = f"relate y to x using kendall exact"
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


def robustness_cases(rng):
    """A 2 x 8 design under the six error laws, 2,000 data sets each (null and shift)."""
    x = np.round(rng.normal(10, 1, 8), 2)
    y = np.round(rng.normal(11, 1, 8), 2)
    cpu = time.process_time()
    t, rr = best(lambda: permq.run(f"robustness compare {lst(x)} vs {lst(y)} datasets 2000 "
                                   "seed 3")[0], 1)
    cpu = time.process_time() - cpu
    if not hasattr(rr, "observed"):
        raise SystemExit(f"benchmark statement failed: robustness compare ...: {rr.message}")
    return [("robustness, 2 x 8, 6 laws x 2,000 data sets", t, 30.0, rr.observed,
             f"no counterpart; simulated test {rr.reference}; {cpu:.1f} s of CPU")]


def table(rows) -> str:
    out = ["| design | permq | target | met | reference set | beside scipy |",
           "|---|---|---|---|---|---|"]
    for name, t, target, r, note in rows:
        o = r.outcome
        ref = (f"{o.arrangements:.3g} arrangements, {o.algorithm}" if o.method == "exact"
               else f"{o.draws:,} draws")
        out.append(f"| {name} | {t:.3f} s | < {target:g} s | {'yes' if t < target else 'NO'} "
                   f"| {ref} | {note} |")
    return "\n".join(out)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--readme", action="store_true")
    args = ap.parse_args()
    text = table(cases())
    print(text)
    if args.readme:
        readme = ROOT / "README.md"
        body = readme.read_text()
        new = re.sub(r"(## Performance\n\n.*?\n\n)\|.*?\n(?=\n## )",
                     lambda m: m.group(1) + text + "\n", body, flags=re.S)
        readme.write_text(new)


if __name__ == "__main__":
    main()
