"""The power rows of bench/run.py: statements, closed forms and the words of their figures.

No side effects on import, so that tests/test_bench_power_rows.py can check README's power rows
against a fresh run of the same statements: the statements are seeded, so the n each finds and
the sizes it simulates are the same in every run, and a README row that no longer matches has
drifted (write it again with `python bench/run.py --only power --readme`).
"""
from __future__ import annotations

import math

# (label, statement, closed form: (what, function of nothing giving the n))
CASES = (
    ("power search, two groups, rank-sum, d = 1, for 80% (2,000 data sets an n)",
     "power groups 6, 6 shift 1 sd using ranks for power 80% seed 3", "t1"),
    ("power search, two groups, means, d = 0.5, for 90% (2,000 data sets an n)",
     "power groups 6, 6 shift 0.5 sd for power 90% seed 3", "t05"),
    ("power search, two groups 1 : 2, means, d = 1, for 80% (2,000 data sets an n)",
     "power groups 6, 12 shift 1 sd for power 80% seed 3", "t1r2"),
    ("power scan, two proportions 0.2 vs 0.6, Fisher, for 80% (every outcome summed)",
     "power count proportions 0.2 vs 0.6 for power 80% using fisher", "cps"),
)


def closed_form(key: str) -> tuple:
    """(words, n): the closed form beside a case."""
    if key == "cps":
        return "Casagrande-Pike-Smith n", casagrande_pike_smith(0.2, 0.6)
    from statsmodels.stats.power import TTestIndPower

    d, goal, ratio = {"t1": (1.0, 0.8, 1.0), "t05": (0.5, 0.9, 1.0),
                      "t1r2": (1.0, 0.8, 2.0)}[key]
    return "t-test closed form n", TTestIndPower().solve_power(d, power=goal, alpha=0.05,
                                                               ratio=ratio)


def casagrande_pike_smith(p1: float, p2: float, alpha=0.05, power=0.8) -> float:
    """n a group for Fisher's exact test (Casagrande, Pike & Smith 1978, Biometrics 34:483)."""
    from scipy import stats

    za, zb = stats.norm.isf(alpha / 2), stats.norm.isf(1 - power)
    pbar, d = (p1 + p2) / 2, abs(p1 - p2)
    n = (za * math.sqrt(2 * pbar * (1 - pbar))
         + zb * math.sqrt(p1 * (1 - p1) + p2 * (1 - p2))) ** 2 / d ** 2
    return n / 4 * (1 + math.sqrt(1 + 4 / (n * d))) ** 2


def needed_words(pr) -> str:
    """The n the search found, with every group's size where they differ."""
    k = pr.needed["permutation"]
    row = next((r for r in pr.rows if r.sizes[0] == k), None)
    if row is not None and len(set(row.sizes)) > 1:
        return "n = " + " + ".join(str(s) for s in row.sizes)
    return f"n = {k} a group"


def result_words(pr, key: str) -> str:
    """The seeded part of a row's note (the same in every run)."""
    words, closed = closed_form(key)
    what = "sizes listed" if pr.method == "summation" else "sizes simulated"
    return f"{needed_words(pr)} ({len(pr.rows)} {what}); {words} = {closed:.1f}"


def reference_words(pr) -> str:
    if pr.method == "summation":
        return "every binomial outcome summed, at each size scanned"
    return (f"{pr.datasets * len(pr.rows):,} simulated data sets "
            "(exact reference sets up to 20,000)")
