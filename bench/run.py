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
    t, out = best(lambda: permq.run(statement), repeat)
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
    return rows


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
